//! Results do not depend on the slab size: the same catalogs (bit for bit) for one slab, for
//! slabs smaller than the stencil halo and fitting window, and with periodic z, where the
//! halos wrap round the box.

mod common;

use common::{axis_deg, field, grid, TubeSpec};
use vortcat_tube::{survey_tubes, MemoryVolume, TubeSettings};

#[test]
fn slab_size_does_not_change_results() {
    let spec = TubeSpec {
        point: [0.4, -0.2, 0.0],
        axis: axis_deg(50.0, 10.0),
        circulation: 20.0,
        core_radius: 3.5,
        strain: 0.02,
    };
    let f = field(grid([40, 36, 44], [-19.5, -17.5, -21.5], 1.0), |x| {
        spec.velocity(x)
    });
    for periodic in [[false; 3], [false, false, true]] {
        let run = |slab_planes: usize| {
            let s = TubeSettings {
                slab_planes,
                periodic,
                viscosity: Some(0.06),
                ..TubeSettings::default()
            };
            survey_tubes(&mut MemoryVolume(&f), &s).unwrap()
        };
        let whole = run(44);
        assert!(!whole.tubes.is_empty() && !whole.stations.is_empty());
        for planes in [1, 5, 16] {
            let part = run(planes);
            assert_eq!(
                part.threshold.to_bits(),
                whole.threshold.to_bits(),
                "threshold {} vs {} (slab {planes}, periodic {periodic:?})",
                part.threshold,
                whole.threshold
            );
            assert_eq!(
                part.tubes, whole.tubes,
                "slab {planes}, periodic {periodic:?}"
            );
            assert_eq!(part.stations, whole.stations, "slab {planes}");
        }
    }
}
