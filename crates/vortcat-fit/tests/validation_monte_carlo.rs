//! Validation: Monte-Carlo recovery of Lamb–Oseen vortices with 5 % noise.
//!
//! Source: least-squares theory (Press et al. 2007, *Numerical Recipes* §15.6 — Monte-Carlo
//! check of confidence limits; the estimator is consistent and σ²(JᵀJ)⁻¹ is its asymptotic
//! covariance for independent Gaussian noise).
//! Set-up: 500 random vortices (|Γ| ∈ [0.5, 2], rc ∈ [4h, 6h], centre within ±h of the
//! detection, convection up to half the peak velocity), window radius 15h (≈ 700 vectors).
//! "5 % noise": independent Gaussian noise on each component with σ = 0.05 × peak azimuthal
//! velocity 0.63817 |Γ|/(2π rc).
//! Metrics and thresholds (from the issue): median relative error of Γ and of rc below 2 %;
//! the true value inside ±2σ (reported standard error) in 90–98 % of cases (nominal 95.4 %).

mod common;

use common::*;
use vortcat_fit::*;

#[test]
fn lamb_oseen_500_vortices_5_percent_noise() {
    let h = 1.0;
    let mut r = rng(20_261_201);
    let settings = FitSettings::default();
    let (mut eg, mut erc) = (Vec::new(), Vec::new());
    let (mut cover_g, mut cover_rc, mut n_vec) = (0usize, 0usize, 0usize);
    let trials = 500;
    for _ in 0..trials {
        let t = random_truth(&mut r, h, &[]);
        let noise = 0.05 * gaussian_peak(t.params[0], t.params[1]);
        let s = grid_samples(&LambOseen, &t, h, 15.0, noise, None, &mut r);
        let w = window_of(&s, [0.0, 0.0], 15.0, h);
        n_vec = w.len();
        let f = fit(&LambOseen, &w, &InitialGuess::at([0.0, 0.0]), &settings).unwrap();
        assert_eq!(f.status, FitStatus::Converged, "{f:?}");
        let (g, rc) = (f.circulation(), f.core_radius());
        let (sg, src) = (f.standard_errors.model[0], f.standard_errors.model[1]);
        eg.push((g / t.params[0] - 1.0).abs());
        erc.push((rc / t.params[1] - 1.0).abs());
        cover_g += usize::from((g - t.params[0]).abs() <= 2.0 * sg);
        cover_rc += usize::from((rc - t.params[1]).abs() <= 2.0 * src);
    }
    let (mg, mrc) = (median(&mut eg), median(&mut erc));
    let (cg, crc) = (
        cover_g as f64 / trials as f64,
        cover_rc as f64 / trials as f64,
    );
    eprintln!("window {n_vec} vectors; median |rel err| Γ {mg:.5}, rc {mrc:.5}; ±2σ coverage Γ {cg:.3}, rc {crc:.3}");
    assert!((690..=720).contains(&n_vec), "{n_vec}");
    assert!(mg < 0.02, "median Γ error {mg}");
    assert!(mrc < 0.02, "median rc error {mrc}");
    assert!((0.90..=0.98).contains(&cg), "Γ coverage {cg}");
    assert!((0.90..=0.98).contains(&crc), "rc coverage {crc}");
}
