//! A volume that fails to read part-way (a truncated or damaged file) ends the survey with that
//! read error: no hang of the slab reader thread, no panic, whichever pass the failure hits.

mod common;

use std::ops::Range;

use common::{field, grid, tilted_burgers};
use vortcat_field::{FieldError, Grid, VolumePlanes};
use vortcat_tube::{survey_tubes, MemoryVolume, TubeError, TubeSettings, VolumeSource};

/// A volume in memory whose planes from `fail_from` on cannot be read, after `reads_before`
/// successful block reads (so the failure can be put in the station pass too).
struct Failing<'a> {
    inner: MemoryVolume<'a>,
    fail_from: usize,
    reads_before: usize,
    reads: usize,
}

impl VolumeSource for Failing<'_> {
    fn grid(&self) -> &Grid {
        self.inner.grid()
    }

    fn read_planes(&mut self, z: Range<usize>) -> Result<VolumePlanes, TubeError> {
        self.reads += 1;
        if z.end > self.fail_from && self.reads > self.reads_before {
            return Err(FieldError::Corrupt(format!("planes {z:?}: damaged block")).into());
        }
        self.inner.read_planes(z)
    }
}

#[test]
fn a_read_error_in_either_pass_is_returned() {
    let (spec, nu) = tilted_burgers();
    let f = field(grid([40; 3], [-19.5; 3], 1.0), |x| spec.velocity(x));
    let settings = TubeSettings {
        viscosity: Some(nu),
        slab_planes: 8,
        ..TubeSettings::default()
    };
    // Sanity: the whole volume reads and gives the tube.
    let whole = survey_tubes(&mut MemoryVolume(&f), &settings).unwrap();
    assert_eq!(whole.tubes.len(), 1);
    // 5 slabs of 8 planes: the detection pass reads 5 blocks, the station pass up to 5 more.
    for reads_before in [0, 2, 5, 7] {
        let mut source = Failing {
            inner: MemoryVolume(&f),
            fail_from: 24,
            reads_before,
            reads: 0,
        };
        let err = survey_tubes(&mut source, &settings).unwrap_err();
        assert!(
            err.to_string().contains("damaged block"),
            "after {reads_before} reads: {err}"
        );
        if reads_before >= 5 {
            assert!(source.reads > 5, "the failure is in the station pass");
        }
    }
}
