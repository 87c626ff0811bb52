//! Case: a survey of synthetic snapshots recovers the known population.
//!
//! Source: the analytic Lamb–Oseen (Oseen 1912; Lamb 1932) and Burgers (Burgers 1948) velocity
//! fields written by `vortcat synth` (its own closed-form code, independent of the fitting
//! crate). Metric: recall of vortices at least 3 core radii from the edge (a fitted centre
//! within one core radius of the true one), and the median relative error of |Γ| and rc over
//! the matched ones. Thresholds (from the survey issue): recall ≥ 95 %, both medians ≤ 3 %, at
//! 5 % noise (Gaussian, σ = 5 % of the median peak azimuthal velocity), 1 % missing vectors and
//! 0.2 % outliers.

use std::collections::HashMap;

use crate::harness::vortcat;

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

#[test]
fn survey_recovers_a_synthetic_population() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    let out = dir.path().join("out");
    let run = vortcat([
        "synth",
        "--out",
        data.to_str().unwrap(),
        "--scenario",
        "population",
        "--snapshots",
        "4",
        "--noise",
        "0.05",
        "--seed",
        "11",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let run = vortcat([
        "survey",
        data.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--progress",
        "none",
        "--viscosity",
        "1e-6",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);

    let mut catalog: HashMap<(String, usize), Vec<csv::StringRecord>> = HashMap::new();
    let mut reader = csv::Reader::from_path(out.join("catalog.csv")).unwrap();
    let headers = reader.headers().unwrap().clone();
    let col = |name: &str| headers.iter().position(|h| h == name).unwrap();
    for r in reader.records() {
        let r = r.unwrap();
        let file = std::path::Path::new(&r[col("file")])
            .file_name()
            .unwrap()
            .to_string_lossy()
            .into_owned();
        catalog
            .entry((file, r[col("index")].parse().unwrap()))
            .or_default()
            .push(r);
    }
    let mut truth = csv::Reader::from_path(data.join("truth.csv")).unwrap();
    let th = truth.headers().unwrap().clone();
    let tcol = |name: &str| th.iter().position(|h| h == name).unwrap();
    let (mut eligible, mut found) = (0, 0);
    let (mut err_gamma, mut err_rc) = (Vec::new(), Vec::new());
    for t in truth.records() {
        let t = t.unwrap();
        let num = |name: &str| t[tcol(name)].parse::<f64>().unwrap();
        if num("edge_distance") < 3.0 {
            continue;
        }
        eligible += 1;
        let rc = num("core_radius");
        let rows = catalog.get(&(
            t[tcol("source")].to_string(),
            t[tcol("index")].parse().unwrap(),
        ));
        let best = rows
            .into_iter()
            .flatten()
            .filter_map(|r| {
                let x: f64 = r[col("x")].parse().ok()?;
                let y: f64 = r[col("y")].parse().ok()?;
                let d = (x - num("x")).hypot(y - num("y"));
                (d < rc).then_some((d, r))
            })
            .min_by(|a, b| a.0.total_cmp(&b.0));
        if let Some((_, r)) = best {
            found += 1;
            let gamma: f64 = r[col("circulation")].parse().unwrap();
            let core: f64 = r[col("core_radius")].parse().unwrap();
            err_gamma.push((gamma.abs() / num("circulation").abs() - 1.0).abs());
            err_rc.push((core / rc - 1.0).abs());
            assert_eq!(
                r[col("sense")].parse::<i8>().unwrap(),
                t[tcol("sense")].parse::<i8>().unwrap()
            );
        }
    }
    let recall = found as f64 / eligible as f64;
    assert!(eligible >= 100, "population too small: {eligible}");
    assert!(recall >= 0.95, "recall {recall:.3} ({found}/{eligible})");
    let (mg, mr) = (median(err_gamma), median(err_rc));
    assert!(mg <= 0.03, "median |Γ| error {mg:.4}");
    assert!(mr <= 0.03, "median rc error {mr:.4}");
}
