//! The Kolmogorov scales computed from the field's own dissipation rate.
//!
//! Definitions: for incompressible flow the mean dissipation rate is ε = 2ν⟨SᵢⱼSᵢⱼ⟩ with
//! S = (∇u + ∇uᵀ)/2 (e.g. S. B. Pope (2000), *Turbulent Flows*, Cambridge University Press,
//! §5.3 / eq. 6.2), and η = (ν³/ε)^¼, τ_η = (ν/ε)^½ (Kolmogorov 1941).
//!
//! The reference ⟨S:S⟩ is computed here independently of vortcat's derivative stencils: the
//! exact velocity gradient of the analytic field is taken at every grid point by a central
//! difference of the analytic velocity with a step of 1e-4 spacings (truncation error
//! ~1e-8 relative), then averaged over the grid points, which is the mean vortcat forms.

mod common;

use approx::assert_relative_eq;
use common::{field, grid, tilted_burgers};
use vortcat_tube::{survey_tubes, Kolmogorov, MemoryVolume, TubeSettings};

fn mean_strain_squared(n: usize, origin: f64, velocity: impl Fn([f64; 3]) -> [f64; 3]) -> f64 {
    let step = 1e-4;
    let mut sum = 0.0;
    for iz in 0..n {
        for iy in 0..n {
            for ix in 0..n {
                let x = [origin + ix as f64, origin + iy as f64, origin + iz as f64];
                // columns[j][i] = ∂u_i/∂x_j
                let columns: [[f64; 3]; 3] = std::array::from_fn(|j| {
                    let (mut xp, mut xm) = (x, x);
                    xp[j] += step;
                    xm[j] -= step;
                    let (up, um) = (velocity(xp), velocity(xm));
                    std::array::from_fn(|i| (up[i] - um[i]) / (2.0 * step))
                });
                let a: [[f64; 3]; 3] =
                    std::array::from_fn(|i| std::array::from_fn(|j| columns[j][i]));
                sum += (0..9)
                    .map(|k| {
                        let (i, j) = (k / 3, k % 3);
                        let s = 0.5 * (a[i][j] + a[j][i]);
                        s * s
                    })
                    .sum::<f64>();
            }
        }
    }
    sum / (n * n * n) as f64
}

#[test]
fn dissipation_of_a_pure_axisymmetric_strain_is_three_nu_gamma_squared() {
    // u = (−γx/2, −γy/2, γz): S = diag(−γ/2, −γ/2, γ), S:S = 3γ²/2, so ε = 3νγ² exactly; the
    // field is linear, so every difference stencil is exact and only float32 storage rounds.
    let (gamma, nu) = (0.04, 0.25);
    let f = field(grid([24; 3], [-11.5; 3], 1.0), |x| {
        [-0.5 * gamma * x[0], -0.5 * gamma * x[1], gamma * x[2]]
    });
    let settings = TubeSettings {
        viscosity: Some(nu),
        kolmogorov: Kolmogorov::FromField,
        ..TubeSettings::default()
    };
    let out = survey_tubes(&mut MemoryVolume(&f), &settings).unwrap();
    assert!(out.tubes.is_empty(), "pure strain has no vortex tube");
    let k = out.kolmogorov.expect("scales computed from the field");
    let eps = 3.0 * nu * gamma * gamma;
    // Tolerance: float32 velocities (relative rounding 6e-8 per value) differenced over one
    // spacing amplify the relative error of the gradient to about 1e-6.
    assert_relative_eq!(k.dissipation.unwrap(), eps, max_relative = 1e-5);
    assert_relative_eq!(k.eta, (nu.powi(3) / eps).powf(0.25), max_relative = 1e-5);
    assert_relative_eq!(k.tau, (nu / eps).sqrt(), max_relative = 1e-5);
}

#[test]
fn dissipation_of_a_tilted_burgers_vortex_matches_the_exact_gradient() {
    // The validation vortex (rc = 5 spacings, γ = 0.04, ν = γ rc²/4): S:S = 3γ²/2 from the
    // strain plus 2 S_rθ² from the swirl, varying across the core.
    let (spec, nu) = tilted_burgers();
    let (n, origin) = (48, -23.5);
    let f = field(grid([n; 3], [origin; 3], 1.0), |x| spec.velocity(x));
    let settings = TubeSettings {
        viscosity: Some(nu),
        kolmogorov: Kolmogorov::FromField,
        ..TubeSettings::default()
    };
    let out = survey_tubes(&mut MemoryVolume(&f), &settings).unwrap();
    let k = out.kolmogorov.expect("scales computed from the field");
    let eps = 2.0 * nu * mean_strain_squared(n, origin, |x| spec.velocity(x));
    eprintln!(
        "ε from the field {:e}, exact-gradient reference {eps:e}",
        k.dissipation.unwrap()
    );
    // Tolerance 0.1 % (seen: 1.8e-4): the fourth-order stencil's truncation error on a
    // 5-spacing Gaussian core is of order (h/rc)⁴ ≈ 1.6e-3 locally near the axis, less in the
    // box mean, and the one-sided stencils at the box faces act only where the swirl is weak.
    assert_relative_eq!(k.dissipation.unwrap(), eps, max_relative = 1e-3);
    // The normalised columns use these scales.
    let s = out
        .stations
        .iter()
        .find(|s| s.core_radius.is_some())
        .expect("a fitted station");
    assert_relative_eq!(
        s.core_radius_eta.unwrap(),
        s.core_radius.unwrap() / k.eta,
        max_relative = 1e-12
    );
    assert_relative_eq!(
        s.strain_rate_tau.unwrap(),
        s.strain_rate_axial.unwrap() * k.tau,
        max_relative = 1e-12
    );
}
