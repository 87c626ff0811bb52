//! Validation: the exact Burgers vortex in 3D with its axis tilted arbitrarily in the grid.
//!
//! Source: J. M. Burgers (1948), "A mathematical model illustrating the theory of
//! turbulence", *Adv. Appl. Mech.* 1, 171–199: u_θ = Γ/(2πr)(1 − exp(−r²/rc²)),
//! u_r = −γr/2, u_z = γz, steady when rc² = 4ν/γ. The field is evaluated analytically in the
//! rotated frame on a 64³ grid (unbounded field on a finite box; the strain is centred on the
//! axis).
//!
//! Metrics and thresholds (from the issue): tube orientation within 1° of the axis; median Γ
//! and rc over the converged stations within 1 %; median γ_axial within 2 % of γ; median
//! balance ratio rc/√(4ν/γ_axial) within 2 % of 1.

mod common;

use common::{angle_deg, field, grid, tilted_burgers};
use vortcat_tube::{survey_tubes, MemoryVolume, TubeSettings};

#[test]
fn tilted_burgers_vortex_is_recovered() {
    // rc = 5 spacings, γ = 0.04, ν = γ rc²/4 = 0.25 (balance), Γ/ν = 200.
    let (spec, nu) = tilted_burgers();
    let (rc, gamma) = (spec.core_radius, spec.strain);
    let f = field(grid([64; 3], [-31.5; 3], 1.0), |x| spec.velocity(x));
    let settings = TubeSettings {
        viscosity: Some(nu),
        ..TubeSettings::default()
    };
    let out = survey_tubes(&mut MemoryVolume(&f), &settings).unwrap();
    assert_eq!(out.tubes.len(), 1, "{:#?}", out.tubes);
    let t = &out.tubes[0];
    let angle = angle_deg(t.orientation, spec.axis);
    let circ = t.circulation.unwrap();
    let core = t.core_radius.unwrap();
    let strain = t.strain_rate_axial.unwrap();
    let balance = t.balance_ratio.unwrap();
    eprintln!(
        "tilted Burgers: angle {angle:.4}°, Γ {circ:.5} (rel {:.2e}), rc {core:.5} (rel {:.2e}), \
         γ_axial {strain:.6} (rel {:.2e}), balance {balance:.5}, stations {} ({} fitted), \
         length {:.1}",
        circ / spec.circulation - 1.0,
        core / rc - 1.0,
        strain / gamma - 1.0,
        t.stations,
        t.fitted,
        t.length
    );
    for s in &out.stations {
        eprintln!(
            "  st {:2} arc {:5.1} axis-err {:.3}° Γ {:?} rc {:?} γ {:?} {} {:?}",
            s.station,
            s.arc_length,
            angle_deg(s.axis, spec.axis),
            s.circulation,
            s.core_radius,
            s.strain_rate_axial,
            s.status,
            s.flags
        );
    }
    assert!(angle < 1.0, "orientation off by {angle}°");
    assert!((circ / spec.circulation - 1.0).abs() < 0.01, "Γ {circ}");
    assert!((core / rc - 1.0).abs() < 0.01, "rc {core}");
    assert!((strain / gamma - 1.0).abs() < 0.02, "γ_axial {strain}");
    assert!((balance - 1.0).abs() < 0.02, "balance {balance}");
    assert!(t.fitted >= 5, "too few fitted stations: {}", t.fitted);
}
