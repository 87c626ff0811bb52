//! `vortcat inspect` on the committed fixtures (written by numpy, h5py and netCDF4).

use crate::harness::{fixtures, vortcat};

#[test]
fn describes_every_fixture_format() {
    let dir = fixtures().join("formats");
    for (file, format) in [
        ("stack_gzip.h5", "hdf5"),
        ("flow.nc", "hdf5"),
        ("arrays.npz", "npz"),
        ("arrays_compressed.npz", "npz"),
        ("stack_c.npy", "npy"),
        ("components", "npy"),
        ("snapshot0.csv", "csv"),
    ] {
        let run = vortcat(["inspect".as_ref(), dir.join(file).as_os_str()]);
        assert_eq!(run.code, 0, "{file}: {}", run.stderr);
        assert!(
            run.stdout.contains(&format!("format:     {format}")),
            "{file}: {}",
            run.stdout
        );
        // 5 × 6 grid (nx × ny), as field_files.py --small writes it.
        assert!(
            run.stdout.contains("grid:       5 x 6 (nx x ny)"),
            "{file}: {}",
            run.stdout
        );
    }
}

#[test]
fn json_report_has_grid_and_counts() {
    let dir = fixtures().join("formats");
    let run = vortcat([
        "inspect".as_ref(),
        dir.join("stack_gzip.h5").as_os_str(),
        dir.join("matlab_like.mat").as_os_str(),
        "--json".as_ref(),
        "--all-snapshots".as_ref(),
    ]);
    // A .mat file forced to row-major reads MATLAB's reversed axes as stored, so its coordinate
    // vectors no longer fit: it fails, the other file is still described, the exit code says so.
    assert_eq!(run.code, 0, "{}", run.stderr);
    let v: serde_json::Value = serde_json::from_str(&run.stdout).expect("JSON");
    let first = &v[0];
    assert_eq!(
        v[1]["grid"]["x"]["len"], 5,
        "the .mat file gets column-major by default"
    );
    assert_eq!(first["snapshots"], 3);
    assert_eq!(first["scan"]["snapshots_read"], 3);
    assert_eq!(first["grid"]["x"]["len"], 5);
    assert_eq!(first["grid"]["y"]["len"], 6);
    assert_eq!(first["grid_origin"], "coordinates");
    // Snapshot 1 has one NaN vector in 30 × 3 vectors read.
    let invalid = first["scan"]["invalid_fraction"].as_f64().unwrap();
    assert!((invalid - 1.0 / 90.0).abs() < 1e-12, "{invalid}");
}

#[test]
fn forcing_row_major_on_a_mat_file_fails_clearly() {
    let dir = fixtures().join("formats");
    let run = vortcat([
        "inspect".as_ref(),
        dir.join("stack_gzip.h5").as_os_str(),
        dir.join("matlab_like.mat").as_os_str(),
        "--layout".as_ref(),
        "row-major".as_ref(),
    ]);
    assert_eq!(run.code, 1);
    assert!(run.stdout.contains("stack_gzip.h5"), "{}", run.stdout);
    assert_eq!(run.stderr.lines().count(), 1, "{}", run.stderr);
    assert!(
        run.stderr.contains("matlab_like.mat: shape mismatch"),
        "{}",
        run.stderr
    );
}

#[test]
fn matlab_layout_flag() {
    let dir = fixtures().join("formats");
    let run = vortcat([
        "inspect".as_ref(),
        dir.join("matlab_like.mat").as_os_str(),
        "--layout".as_ref(),
        "column-major".as_ref(),
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stdout.contains("grid:       5 x 6 (nx x ny)"),
        "{}",
        run.stdout
    );
    assert!(run.stdout.contains("snapshots:  3"), "{}", run.stdout);
}

#[test]
fn help_lists_input_flags() {
    let run = vortcat(["inspect", "--help"]);
    assert_eq!(run.code, 0);
    for flag in [
        "--spacing",
        "--layout",
        "--u",
        "--v",
        "--w",
        "--config",
        "--json",
    ] {
        assert!(run.stdout.contains(flag), "{flag} missing from help");
    }
}

#[test]
fn usage_errors_exit_2() {
    let run = vortcat(["inspect"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    let run = vortcat(["inspect", "a.h5", "--layout", "diagonal"]);
    assert_eq!(run.code, 2);
}
