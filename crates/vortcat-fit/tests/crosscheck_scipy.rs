//! Cross-check against scipy.optimize.least_squares (reference library).
//!
//! `scripts/crosscheck/fit_scipy.py OUTDIR` writes windows of synthetic Lamb–Oseen and Burgers
//! data with 5 % noise, the start vectors and scipy's fitted parameters (method 'lm', or 'trf'
//! for the soft-L1 case, tolerances 1e-14). This test fits the same vectors with the same model,
//! loss and start and requires the same optimum within 1e-6 relative: |a − b| ≤ 1e-6 · max(|b|,
//! s) with the floor s = window radius for the centre and the noise σ for convection velocities
//! (so that parameters near zero are compared on their natural scale, not on a vanishing one).
//! Run by scripts/test: `python scripts/crosscheck/fit_scipy.py $DIR &&
//! VORTCAT_PYREF_DIR=$DIR cargo test -p vortcat-fit -- --ignored`.

use std::path::{Path, PathBuf};

use ndarray::Array1;
use ndarray_npy::read_npy;
use serde_json::Value;
use vortcat_fit::*;

fn load(dir: &Path, case: &str, comp: &str) -> Vec<f64> {
    let a: Array1<f64> = read_npy(dir.join(format!("{case}_{comp}.npy")))
        .unwrap_or_else(|e| panic!("{case}_{comp}.npy: {e}"));
    a.to_vec()
}

fn vec_of(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

#[test]
#[ignore = "needs Python references; run scripts/test"]
fn same_optimum_as_scipy_least_squares() {
    let dir = PathBuf::from(std::env::var("VORTCAT_PYREF_DIR").expect(
        "VORTCAT_PYREF_DIR is not set: run `python scripts/crosscheck/fit_scipy.py DIR` and set VORTCAT_PYREF_DIR=DIR",
    ));
    let cases: Vec<String> =
        serde_json::from_str(&std::fs::read_to_string(dir.join("cases.json")).expect("cases.json"))
            .unwrap();
    assert!(
        cases.len() >= 4,
        "expected at least 4 reference cases, got {}",
        cases.len()
    );
    for case in &cases {
        let meta: Value = serde_json::from_str(
            &std::fs::read_to_string(dir.join(format!("{case}.json"))).unwrap(),
        )
        .unwrap();
        let (x, y, u, v) = (
            load(&dir, case, "x"),
            load(&dir, case, "y"),
            load(&dir, case, "u"),
            load(&dir, case, "v"),
        );
        let h = meta["spacing"].as_f64().unwrap();
        let radius = meta["window_radius"].as_f64().unwrap();
        let centre = vec_of(&meta["window_centre"]);
        // Radius a hair larger so that no vector scipy used is lost to rounding at the circle.
        let w = Window::from_samples(
            [centre[0], centre[1]],
            radius * (1.0 + 1e-9),
            [h, h],
            &x,
            &y,
            &u,
            &v,
        )
        .unwrap();
        assert_eq!(
            w.len(),
            meta["n_vectors"].as_u64().unwrap() as usize,
            "{case}"
        );
        let start = vec_of(&meta["start"]);
        let want = vec_of(&meta["fitted"]);
        let sigma = meta["noise_sigma"].as_f64().unwrap();
        let loss = match meta["loss"].as_str().unwrap() {
            "linear" => Loss::Linear,
            "soft_l1" => Loss::SoftL1 {
                scale: meta["f_scale"].as_f64().unwrap(),
            },
            other => panic!("loss {other}"),
        };
        let settings = FitSettings::builder()
            .loss(loss)
            .tolerances(1e-15, 1e-15, 1e-15)
            .max_iterations(500)
            .build()
            .unwrap();
        let p = Parameters {
            centre: [start[0], start[1]],
            convection: [start[2], start[3]],
            model: start[4..].to_vec(),
            background: None,
        };
        let r = match meta["model"].as_str().unwrap() {
            "lamb-oseen" => fit_from_start(&LambOseen, &w, &p, [start[0], start[1]], &settings),
            "burgers" => fit_from_start(&Burgers::free(), &w, &p, [start[0], start[1]], &settings),
            m => panic!("model {m}"),
        }
        .unwrap();
        assert_eq!(r.status, FitStatus::Converged, "{case}");
        let got = r.parameters.to_vec();
        let worst = got
            .iter()
            .zip(&want)
            .map(|(g, e)| (g - e).abs() / e.abs())
            .fold(0.0, f64::max);
        eprintln!(
            "{case}: {} iterations, largest relative difference to scipy {worst:.2e}",
            r.iterations
        );
        assert_eq!(got.len(), want.len(), "{case}");
        for (k, (g, e)) in got.iter().zip(&want).enumerate() {
            let floor = match k {
                0 | 1 => radius,
                2 | 3 => sigma,
                _ => 0.0,
            };
            let tol = 1e-6 * e.abs().max(floor);
            assert!(
                (g - e).abs() <= tol,
                "{case} {}: vortcat {g}, scipy {e}, |Δ| {} > {tol}",
                r.parameter_names[k],
                (g - e).abs()
            );
        }
    }
}
