//! `vortcat synth --scenario tubes` → `vortcat survey --geometry volume`: the tubes are found
//! with their circulation and core radius, and the station and tube tables do not depend on
//! the slab size or the thread count.

use std::path::Path;

use crate::harness::{assert_one_line_error, vortcat};

fn survey(data: &Path, out: &Path, extra: &[&str]) {
    let mut args: Vec<String> = vec![
        "survey".into(),
        data.to_string_lossy().into_owned(),
        "--out".into(),
        out.to_string_lossy().into_owned(),
        "--geometry".into(),
        "volume".into(),
        "--viscosity".into(),
        "1e-6".into(),
        "--progress".into(),
        "none".into(),
    ];
    args.extend(extra.iter().map(|s| s.to_string()));
    let run = vortcat(args);
    assert_eq!(run.code, 0, "{}", run.stderr);
}

fn table(path: &Path) -> Vec<csv::StringRecord> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let header = r.headers().unwrap().clone();
    let mut rows = vec![header];
    rows.extend(r.records().map(Result::unwrap));
    rows
}

fn column(rows: &[csv::StringRecord], name: &str) -> usize {
    rows[0]
        .iter()
        .position(|c| c == name)
        .unwrap_or_else(|| panic!("no column {name}"))
}

fn value(rows: &[csv::StringRecord], row: usize, name: &str) -> f64 {
    rows[row][column(rows, name)]
        .parse()
        .unwrap_or_else(|e| panic!("{name} in row {row}: {e}"))
}

/// `vortcat synth --scenario tubes --out DATA EXTRA...`.
fn synth_tubes(data: &Path, extra: &[&str]) {
    let mut args = vec![
        "synth".to_string(),
        "--scenario".into(),
        "tubes".into(),
        "--out".into(),
        data.to_string_lossy().into_owned(),
    ];
    args.extend(extra.iter().map(|s| s.to_string()));
    let run = vortcat(args);
    assert_eq!(run.code, 0, "{}", run.stderr);
}

/// The row of `tubes` whose centroid (near z = 0) is closest to truth row `t`'s axis point at
/// z = 0.
fn nearest_tube(truth: &[csv::StringRecord], t: usize, tubes: &[csv::StringRecord]) -> usize {
    let (tx, ty) = (value(truth, t, "x"), value(truth, t, "y"));
    let distance =
        |r: usize| (value(tubes, r, "centroid_x") - tx).hypot(value(tubes, r, "centroid_y") - ty);
    (1..tubes.len())
        .min_by(|&a, &b| distance(a).total_cmp(&distance(b)))
        .expect("at least one tube")
}

#[test]
fn tubes_are_found_with_their_parameters_whatever_the_slab_and_threads() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    // Default synth data: 3 % velocity noise, 1 % missing vectors, 0.2 % outliers.
    synth_tubes(&data, &[]);
    let base = dir.path().join("base");
    survey(&data, &base, &["--threads", "2"]);

    let truth = table(&data.join("truth.csv"));
    let tubes = table(&base.join("tubes.csv"));
    let stations = table(&base.join("stations.csv"));
    assert_eq!(tubes.len() - 1, 2, "two tubes: {tubes:?}");
    assert!(stations.len() > 10, "stations: {}", stations.len() - 1);
    for t in 1..truth.len() {
        let found = nearest_tube(&truth, t, &tubes);
        let circ = value(&tubes, found, "circulation");
        let rc = value(&tubes, found, "core_radius");
        let want_circ = value(&truth, t, "circulation");
        let want_rc = value(&truth, t, "core_radius");
        let cos = ["x", "y", "z"]
            .iter()
            .map(|k| {
                value(&tubes, found, &format!("orientation_{k}"))
                    * value(&truth, t, &format!("axis_{k}"))
            })
            .sum::<f64>();
        eprintln!(
            "tube {t}: Γ {circ:.6e} (truth {want_circ:.6e}, {:+.2} %), rc {rc:.6e} (truth {want_rc:.6e}, {:+.2} %), axis {:.2}°",
            100.0 * (circ / want_circ - 1.0),
            100.0 * (rc / want_rc - 1.0),
            cos.clamp(-1.0, 1.0).acos().to_degrees()
        );
        // Tolerance 5 %: the tube library's own two-tube allowance on clean data (3 %: each
        // core sees its neighbour's induced strain) plus 2 % for the default noise, missing
        // vectors and outliers, which the median over ~20 stations of ~200 samples each
        // mostly averages out. Measured: under 2 %.
        assert!(
            (circ / want_circ - 1.0).abs() < 0.05,
            "Γ {circ} vs {want_circ}"
        );
        assert!((rc / want_rc - 1.0).abs() < 0.05, "rc {rc} vs {want_rc}");
        // Orientation along the vorticity, within 3° (the library's 2° on clean data, plus
        // noise).
        assert!(cos > 3.0_f64.to_radians().cos(), "axis cosine {cos}");
        // γ_axial against the strain the tube feels in the superposed field (truth column
        // axial_strain_rate, from the analytic gradient). The tubes are weakly strained
        // (γ·rc/u_peak ≈ 0.01), so 3 % velocity noise moves the per-tube median by about
        // 0.05 1/s (seen over four seeds: up to 0.1); tolerance 0.15 1/s. The clean-data
        // test below checks the estimator itself to 1 %.
        let gamma = value(&tubes, found, "strain_rate_axial");
        let want_gamma = value(&truth, t, "axial_strain_rate");
        eprintln!("tube {t}: γ_axial {gamma:.4} 1/s (truth {want_gamma:.4} 1/s)");
        assert!(
            (gamma - want_gamma).abs() < 0.15,
            "γ_axial {gamma} vs {want_gamma}"
        );
    }

    // The same bytes for another slab size (smaller than the fitting window) and one thread.
    let slab = dir.path().join("slab");
    let config = dir.path().join("slab.toml");
    std::fs::write(&config, "[volume]\nslab_planes = 7\n").unwrap();
    survey(
        &data,
        &slab,
        &["--threads", "2", "--config", config.to_str().unwrap()],
    );
    let one = dir.path().join("one");
    survey(&data, &one, &["--threads", "1"]);
    for other in [&slab, &one] {
        for f in [
            "stations.csv",
            "tubes.csv",
            "stations.jsonl",
            "tubes.jsonl",
            "catalog.csv",
        ] {
            assert_eq!(
                std::fs::read(base.join(f)).unwrap(),
                std::fs::read(other.join(f)).unwrap(),
                "{f} differs in {}",
                other.display()
            );
        }
    }
}

#[test]
fn axial_strain_matches_the_superposed_field_on_clean_data() {
    // Without noise, missing vectors or outliers, each tube's median γ_axial equals the exact
    // ê·S·ê of the superposed analytic field along its axis (the synth's truth column): the
    // Burgers tube's own strain plus what its neighbour's strain and swirl add, and for the
    // Lamb–Oseen tube only the neighbour's. Tolerance 1 % (seen: 0.13 % and 0.24 %): the
    // cylinder slope is exact for a linear axial velocity; what remains is the 4th-order
    // stencil and trilinear interpolation of the neighbour's curved induced field, and the
    // stations covering slightly less of the axis than the truth's median.
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_tubes(
        &data,
        &["--noise", "0", "--missing", "0", "--outliers", "0"],
    );
    let out = dir.path().join("out");
    survey(&data, &out, &[]);
    let truth = table(&data.join("truth.csv"));
    let tubes = table(&out.join("tubes.csv"));
    assert_eq!(tubes.len() - 1, 2, "two tubes: {tubes:?}");
    let mut seen = Vec::new();
    for t in 1..truth.len() {
        let want = value(&truth, t, "axial_strain_rate");
        let own = value(&truth, t, "strain_rate");
        // Matched by position (matching by γ_axial would make the test circular).
        let found = nearest_tube(&truth, t, &tubes);
        let gamma = value(&tubes, found, "strain_rate_axial");
        eprintln!("tube {t}: γ_axial {gamma:.5} (truth {want:.5}; own γ {own:.5})");
        assert!(
            (gamma / want - 1.0).abs() < 0.01,
            "γ_axial {gamma} vs {want}"
        );
        seen.push(found);
    }
    seen.sort();
    seen.dedup();
    assert_eq!(seen.len(), 2, "each truth tube matched a different tube");
}

#[test]
fn bad_volume_settings_are_one_line_errors_naming_the_key() {
    let dir = tempfile::tempdir().unwrap();
    let config = dir.path().join("bad.toml");
    std::fs::write(&config, "[volume]\nperiodic = [\"q\"]\n").unwrap();
    let run = vortcat([
        "survey",
        dir.path().to_str().unwrap(),
        "--out",
        dir.path().join("out").to_str().unwrap(),
        "--geometry",
        "volume",
        "--config",
        config.to_str().unwrap(),
    ]);
    assert_one_line_error(&run, &["volume.periodic", "'q'"]);
    std::fs::write(&config, "[volume]\nslab_size = 4\n").unwrap();
    let run = vortcat([
        "survey",
        dir.path().to_str().unwrap(),
        "--out",
        dir.path().join("out").to_str().unwrap(),
        "--config",
        config.to_str().unwrap(),
    ]);
    assert_one_line_error(&run, &["bad.toml", "slab_size"]);
}
