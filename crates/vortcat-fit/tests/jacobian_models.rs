//! Analytic Jacobians of every model checked against central finite differences (proptest).
//!
//! Central differences have truncation error O(h²) and rounding error O(ε/h); with a relative
//! step h = 1e-6 both are about 1e-10 relative to the scale of the function, so derivatives are
//! compared with a tolerance of 1e-6 of the derivative's scale (loose enough for the rounding of
//! the difference quotient, tight enough to catch any wrong term).

use proptest::prelude::*;
use vortcat_fit::{Burgers, LambOseen, Rankine, Vatistas, VortexModel};

fn check<M: VortexModel>(m: &M, dx: f64, dy: f64, p: &[f64]) -> Result<(), TestCaseError> {
    let np = m.n_params();
    let mut du = vec![0.0; 2 + np];
    let mut dv = vec![0.0; 2 + np];
    let vel = m.velocity_jacobian(dx, dy, p, &mut du, &mut dv);
    let plain = m.velocity(dx, dy, p);
    prop_assert!((vel[0] - plain[0]).abs() <= 1e-14 * (1.0 + plain[0].abs()));
    prop_assert!((vel[1] - plain[1]).abs() <= 1e-14 * (1.0 + plain[1].abs()));
    // Derivative scale: velocity scale over the variable's scale.
    let vscale = (plain[0].abs() + plain[1].abs()).max(p[0].abs() / p[1]);
    for k in 0..2 + np {
        let (mut a, mut b) = (p.to_vec(), p.to_vec());
        let (mut xa, mut ya, mut xb, mut yb) = (dx, dy, dx, dy);
        let scale = match k {
            0 | 1 => p[1],
            _ => p[k - 2].abs().max(1e-3),
        };
        let h = 1e-6 * scale;
        match k {
            0 => {
                xa += h;
                xb -= h
            }
            1 => {
                ya += h;
                yb -= h
            }
            _ => {
                a[k - 2] += h;
                b[k - 2] -= h
            }
        }
        let fa = m.velocity(xa, ya, &a);
        let fb = m.velocity(xb, yb, &b);
        for c in 0..2 {
            let fd = (fa[c] - fb[c]) / (2.0 * h);
            let an = if c == 0 { du[k] } else { dv[k] };
            // Relative to the derivative itself as well, for Γ = 0 where the velocity vanishes
            // but its derivative with respect to Γ does not.
            let tol = 1e-6 * (vscale / scale + an.abs());
            prop_assert!(
                (fd - an).abs() <= tol,
                "param {k} comp {c}: analytic {an}, fd {fd}, tol {tol}"
            );
        }
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    #[test]
    fn lamb_oseen(dx in -3.0..3.0f64, dy in -3.0..3.0f64, g in -3.0..3.0f64, rc in 0.2..2.0f64) {
        check(&LambOseen, dx, dy, &[g, rc])?;
    }

    #[test]
    fn burgers_free(dx in -3.0..3.0f64, dy in -3.0..3.0f64, g in -3.0..3.0f64, rc in 0.2..2.0f64, s in -2.0..2.0f64) {
        check(&Burgers::free(), dx, dy, &[g, rc, s])?;
    }

    #[test]
    fn burgers_imposed(dx in -3.0..3.0f64, dy in -3.0..3.0f64, g in -3.0..3.0f64, rc in 0.2..2.0f64, nu in 0.001..0.5f64) {
        check(&Burgers::imposed(nu), dx, dy, &[g, rc])?;
    }

    /// Rankine has a kink at r = rc where no derivative exists; sample away from it.
    #[test]
    fn rankine(r in 0.01..3.0f64, th in 0.0..std::f64::consts::TAU, g in -3.0..3.0f64, rc in 0.2..2.0f64) {
        prop_assume!((r / rc - 1.0).abs() > 1e-3);
        check(&Rankine, r * th.cos(), r * th.sin(), &[g, rc])?;
    }

    #[test]
    fn vatistas_fitted(dx in -3.0..3.0f64, dy in -3.0..3.0f64, g in -3.0..3.0f64, rc in 0.2..2.0f64, n in 1.0..10.0f64) {
        check(&Vatistas::fitted(), dx, dy, &[g, rc, n])?;
    }

    #[test]
    fn vatistas_fixed(dx in -3.0..3.0f64, dy in -3.0..3.0f64, g in -3.0..3.0f64, rc in 0.2..2.0f64, n in 1.0..10.0f64) {
        check(&Vatistas::fixed(n), dx, dy, &[g, rc])?;
    }
}

/// Near and at the centre (series branch of the Gaussian core, t < 1e-3).
#[test]
fn gaussian_core_near_axis() {
    for &r in &[0.0, 1e-8, 1e-4, 0.02, 0.0316] {
        check(&LambOseen, r, 0.5 * r, &[1.0, 1.0]).unwrap();
        check(&Burgers::free(), r, -r, &[1.0, 1.0, 0.3]).unwrap();
    }
}
