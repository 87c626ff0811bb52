//! Files written by numpy, h5py and netCDF4 read back value for value.
//!
//! `committed_fixtures` uses the tiny files in `fixtures/formats/` so that `cargo test` alone
//! covers every reader; `python_written_files` uses the full-size files that `scripts/test`
//! writes with a fresh venv into `$VORTCAT_PYREF_DIR/field` (50 snapshots of 128 × 96).

mod common;

use std::path::PathBuf;

use vortcat_field::{open, InputSpec};

fn fixtures() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../fixtures/formats")
}

#[test]
fn committed_fixtures() {
    let dir = fixtures();
    common::check_all(&dir);
    common::check_csv(&dir);
    common::check_integers(&dir);
}

#[test]
#[ignore = "needs Python references; run scripts/test"]
fn python_written_files() {
    let dir = PathBuf::from(
        std::env::var("VORTCAT_PYREF_DIR").expect("VORTCAT_PYREF_DIR must point at the references"),
    )
    .join("field");
    common::check_all(&dir);
    common::check_csv(&dir);
    common::check_integers(&dir);
    // The acceptance case: h5py (50, 128, 96) with x, y → 50 snapshots on 96 × 128 (nx × ny),
    // and the npz and CSV copies give the same grid.
    let h5 = open(&dir.join("stack_gzip.h5"), &InputSpec::default()).unwrap();
    assert_eq!(h5.info().snapshots, 50);
    assert_eq!(
        (h5.info().grid.x().len(), h5.info().grid.y().len()),
        (96, 128)
    );
    let npz = open(&dir.join("arrays.npz"), &InputSpec::default()).unwrap();
    let csv = open(&dir.join("snapshot0.csv"), &InputSpec::default()).unwrap();
    assert_eq!(h5.info().grid, npz.info().grid);
    let (a, b) = (&h5.info().grid, &csv.info().grid);
    assert_eq!(a.shape(), b.shape());
    assert!((a.x().spacing() - b.x().spacing()).abs() < 1e-15);
    assert!((a.y().origin() - b.y().origin()).abs() < 1e-15);
}
