//! Validation: choice between Lamb–Oseen and Burgers by BIC.
//!
//! Source: Schwarz (1978), *Ann. Statist.* 6, 461–464 (BIC); Burgers (1948) and Oseen (1912)
//! for the models. Set-up: 100 Lamb–Oseen and 100 Burgers vortices (random Γ, rc as in the
//! Monte-Carlo test; Burgers γ = 4ν/rc² with Γ/ν uniform in [30, 300]), window 15h.
//! Metric and threshold (issue): the chosen model is the generating one in more than 95 % of
//! clean (noise-free) cases. Also checked, beyond the issue: with 5 % noise (σ = 5 % of peak
//! azimuthal velocity) the choice is right in more than 90 % of cases, and for the Lamb–Oseen
//! cases the inflow p-value is not systematically small, while AIC would add the inflow term
//! to about 16 % of them (the reason BIC is the default).

mod common;

use common::*;
use rand::Rng;
use vortcat_fit::*;

fn run(noise_fraction: f64, seed: u64) -> (f64, f64, f64) {
    let h = 1.0;
    let mut r = rng(seed);
    let models = [Model::LambOseen(LambOseen), Model::Burgers(Burgers::free())];
    let settings = FitSettings::default();
    let (mut right, mut total, mut small_p, mut aic_wrong) = (0usize, 0usize, 0usize, 0usize);
    for i in 0..200 {
        let burgers = i % 2 == 1;
        let mut t = random_truth(&mut r, h, &[]);
        let (g, rc) = (t.params[0], t.params[1]);
        let noise = noise_fraction * gaussian_peak(g, rc);
        let s = if burgers {
            let re = r.gen_range(30.0..300.0);
            t.params.push(4.0 * (g.abs() / re) / (rc * rc));
            grid_samples(&Burgers::free(), &t, h, 15.0, noise, None, &mut r)
        } else {
            grid_samples(&LambOseen, &t, h, 15.0, noise, None, &mut r)
        };
        let w = window_of(&s, [0.0, 0.0], 15.0, h);
        let sel = fit_and_select(&models, &w, &InitialGuess::at([0.0, 0.0]), &settings).unwrap();
        let want = if burgers {
            ModelKind::Burgers
        } else {
            ModelKind::LambOseen
        };
        right += usize::from(sel.best_model == want);
        total += 1;
        if !burgers && sel.inflow.unwrap().p_value < 0.05 {
            small_p += 1;
        }
        if !burgers {
            let aic: Vec<f64> = sel
                .fits
                .iter()
                .map(|f| f.information_criterion(InformationCriterion::Aic))
                .collect();
            aic_wrong += usize::from(aic[1] < aic[0]);
        }
    }
    (
        right as f64 / total as f64,
        small_p as f64 / 100.0,
        aic_wrong as f64 / 100.0,
    )
}

#[test]
fn clean_cases_chosen_right() {
    let (rate, _, _) = run(0.0, 11);
    eprintln!("clean: right in {:.3}", rate);
    assert!(rate > 0.95, "{rate}");
}

#[test]
fn noisy_cases_chosen_right() {
    let (rate, small_p, aic_wrong) = run(0.05, 12);
    eprintln!("5 % noise: BIC right in {rate:.3}; LO cases with inflow p < 0.05: {small_p:.3}; AIC picks Burgers for LO in {aic_wrong:.3}");
    assert!(rate > 0.90, "{rate}");
    // Under the null (no inflow) p-values are uniform: P(p < 0.05) = 5 %; allow sampling
    // scatter of 100 cases (binomial sd 2.2 %) with margin.
    assert!(small_p < 0.12, "{small_p}");
    // The reason for BIC (docs/models.md): for nested models AIC adds γ when LR > 2, which
    // happens with P(χ²₁ > 2) = 15.7 % under "no inflow" (Wilks 1938); 100 cases, binomial sd
    // 3.6 %.
    assert!((0.06..=0.27).contains(&aic_wrong), "{aic_wrong}");
}
