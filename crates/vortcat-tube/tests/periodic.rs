//! A tube crossing a periodic face is one tube; a tube wrapping round a periodic axis is one
//! closed tube.
//!
//! Field: a Lamb–Oseen tube (Oseen 1912; Lamb 1932) along y centred on the x = 0 face of a
//! box periodic in x, made periodic by summing its images at x0 + kL, k = −4..4 (the
//! truncated image sum leaves a small mismatch at the face, of order Γ/(2π·4.5L)).
//! Metrics: region counts (exact), centre on the face within 0.3 spacings, Γ within 3 %
//! (our allowance for the truncated image sum), closed length within one station spacing.

mod common;

use common::{field, grid, TubeSpec};
use vortcat_tube::{survey_tubes, MemoryVolume, TubeSettings};

fn box_field() -> vortcat_field::VolumeField {
    let n = 40;
    let l = n as f64; // period along x (spacing 1)
    let base = TubeSpec {
        point: [-0.5, 0.0, 20.3],
        axis: [0.0, 1.0, 0.0],
        circulation: 30.0,
        core_radius: 4.0,
        strain: 0.0,
    };
    field(grid([n, 24, n], [0.0, 0.0, 0.0], 1.0), move |x| {
        let mut s = [0.0; 3];
        for k in -4..=4 {
            let t = TubeSpec {
                point: [base.point[0] + k as f64 * l, base.point[1], base.point[2]],
                ..base
            };
            let u = t.velocity(x);
            for i in 0..3 {
                s[i] += u[i];
            }
        }
        s
    })
}

#[test]
fn tube_across_a_periodic_face_is_joined() {
    let f = box_field();
    let open = survey_tubes(&mut MemoryVolume(&f), &TubeSettings::default()).unwrap();
    // Without periodicity the core is cut into two halves at x = 0 and x = L.
    assert_eq!(open.tubes.len(), 2, "{:#?}", open.tubes);
    // The images induce a nearly uniform velocity gradient over the window; the fit models
    // it (background gradient on), so Γ is that of the central vortex.
    let fit = vortcat_fit::FitSettings {
        background_gradient: true,
        ..Default::default()
    };
    let periodic = TubeSettings {
        periodic: [true, false, false],
        fit,
        ..TubeSettings::default()
    };
    let joined = survey_tubes(&mut MemoryVolume(&f), &periodic).unwrap();
    assert_eq!(joined.tubes.len(), 1, "{:#?}", joined.tubes);
    let t = &joined.tubes[0];
    assert!(!t.closed);
    // Centre on the face: x ≈ −0.5 ≡ 39.5 wrapped; Γ of the central image within 3 % (the
    // image sum adds a small non-uniform background, our allowance).
    let x = t.centroid[0];
    assert!((x - 39.5).abs() < 0.3 || (x + 0.5).abs() < 0.3, "x {x}");
    let circ = t.circulation.unwrap();
    assert!((circ / 30.0 - 1.0).abs() < 0.03, "Γ {circ}");
    // Periodic along y as well: the tube wraps round and closes on itself.
    let both = TubeSettings {
        periodic: [true, true, false],
        ..TubeSettings::default()
    };
    let closed = survey_tubes(&mut MemoryVolume(&f), &both).unwrap();
    assert_eq!(closed.tubes.len(), 1);
    assert!(closed.tubes[0].closed);
    // Closed loop length = the period along y, 24 spacings (to the station spacing).
    assert!(
        (closed.tubes[0].length - 24.0).abs() <= 2.0,
        "{}",
        closed.tubes[0].length
    );
}
