//! Shared checks of files written by numpy, h5py and netCDF4 (see
//! `scripts/crosscheck/field_files.py`): each file must read back value for value as the
//! reference arrays numpy saved beside it.

use std::path::Path;

use ndarray::{Array1, Array3};
use ndarray_npy::read_npy;
use vortcat_field::{open, Field, InputSpec, Layout};

pub struct Reference {
    pub u: Array3<f64>,
    pub v: Array3<f64>,
    pub x: Array1<f64>,
    pub y: Array1<f64>,
}

pub fn reference(dir: &Path) -> Reference {
    // The reference arrays are read with ndarray-npy, independently of vortcat's own reader.
    Reference {
        u: read_npy(dir.join("ref_u.npy")).expect("ref_u.npy"),
        v: read_npy(dir.join("ref_v.npy")).expect("ref_v.npy"),
        x: read_npy(dir.join("ref_x.npy")).expect("ref_x.npy"),
        y: read_npy(dir.join("ref_y.npy")).expect("ref_y.npy"),
    }
}

/// Equal to the last bit, or both NaN (an invalid vector).
fn same(a: f64, b: f64) -> bool {
    (a.is_nan() && b.is_nan()) || a.to_bits() == b.to_bits()
}

/// Reads every snapshot of `file` and compares with the reference; `round` maps a reference
/// value to what the file stores (identity for float64, f32 rounding for float32 files).
pub fn check_file(
    dir: &Path,
    file: &str,
    spec: &InputSpec,
    round: fn(f64) -> f64,
    check_coords: bool,
) {
    let r = reference(dir);
    let path = dir.join(file);
    let mut reader = open(&path, spec).unwrap_or_else(|e| panic!("{file}: {e}"));
    let (nt, ny, nx) = r.u.dim();
    let info = reader.info().clone();
    assert_eq!(info.snapshots, nt, "{file}: snapshot count");
    assert_eq!(info.grid.shape(), vec![ny, nx], "{file}: grid shape");
    if check_coords {
        let tol = 1e-12; // coordinates are float64 multiples of 1e-3: only rounding differs
        let gx = info.grid.x();
        let gy = info.grid.y();
        assert!(
            (gx.origin() - r.x[0]).abs() < tol,
            "{file}: x origin {}",
            gx.origin()
        );
        assert!(
            (gy.origin() - r.y[0]).abs() < tol,
            "{file}: y origin {}",
            gy.origin()
        );
        assert!(
            ((gx.spacing() - (r.x[1] - r.x[0])) / gx.spacing()).abs() < 1e-9,
            "{file}: dx"
        );
        assert!(
            ((gy.spacing() - (r.y[1] - r.y[0])) / gy.spacing()).abs() < 1e-9,
            "{file}: dy"
        );
    }
    for t in 0..nt {
        let snap = reader
            .read(t)
            .unwrap_or_else(|e| panic!("{file} #{t}: {e}"));
        assert_eq!(snap.id.index, t);
        let Field::Plane(p) = snap.field else {
            panic!("{file}: expected a plane")
        };
        for iy in 0..ny {
            for ix in 0..nx {
                let (eu, ev) = (round(r.u[[t, iy, ix]]), round(r.v[[t, iy, ix]]));
                let (gu, gv) = (p.u()[[iy, ix]], p.v()[[iy, ix]]);
                assert!(
                    same(gu, eu) && same(gv, ev),
                    "{file} snapshot {t} [{iy},{ix}]: read ({gu}, {gv}), numpy wrote ({eu}, {ev})"
                );
                assert_eq!(
                    p.valid()[[iy, ix]],
                    !eu.is_nan(),
                    "{file}: mask at [{t},{iy},{ix}]"
                );
            }
        }
    }
}

fn identity(x: f64) -> f64 {
    x
}

fn to_f32(x: f64) -> f64 {
    x as f32 as f64
}

/// Every file written by `field_files.py` in `dir`.
pub fn check_all(dir: &Path) {
    let d = InputSpec::default();
    check_file(dir, "stack_gzip.h5", &d, identity, true);
    check_file(dir, "arrays.npz", &d, identity, true);
    check_file(dir, "arrays_compressed.npz", &d, identity, true);
    check_file(dir, "components", &d, identity, true);
    check_file(dir, "flow.nc", &d, identity, true);
    // Single stacked .npy files: component axis 1 of (t, c, y, x) is axis 0 once time is removed.
    for f in ["stack_c.npy", "stack_fortran.npy", "stack_bigendian.npy"] {
        check_file(dir, f, &d, identity, false);
    }
    check_file(dir, "stack_float32.npy", &d, to_f32, false);
    let nested = InputSpec {
        u: "/piv/frame/U".into(),
        v: "/piv/frame/V".into(),
        ..Default::default()
    };
    check_file(dir, "nested_attrs.h5", &nested, to_f32, true);
    let matlab = InputSpec {
        layout: Layout::ColumnMajor,
        ..Default::default()
    };
    check_file(dir, "matlab_like.mat", &matlab, identity, true);
}

/// The CSV files hold snapshot 0 only.
pub fn check_csv(dir: &Path) {
    let r = reference(dir);
    let (_, ny, nx) = r.u.dim();
    for (file, spec) in [
        ("snapshot0.csv", InputSpec::default()),
        (
            "snapshot0.dat",
            InputSpec {
                x: "X_m".into(),
                y: "Y_m".into(),
                u: "Vx".into(),
                v: "Vy".into(),
                ..Default::default()
            },
        ),
    ] {
        let mut reader = open(&dir.join(file), &spec).unwrap_or_else(|e| panic!("{file}: {e}"));
        let g = reader.info().grid.clone();
        assert_eq!(g.shape(), vec![ny, nx], "{file}");
        assert!((g.x().origin() - r.x[0]).abs() < 1e-12);
        assert!(((g.y().spacing() - (r.y[1] - r.y[0])) / g.y().spacing()).abs() < 1e-9);
        let Field::Plane(p) = reader.read(0).unwrap().field else {
            panic!("plane expected")
        };
        for iy in 0..ny {
            for ix in 0..nx {
                // repr() in Python writes the shortest round-tripping decimal: exact.
                assert!(
                    same(p.u()[[iy, ix]], r.u[[0, iy, ix]]),
                    "{file} u[{iy},{ix}]"
                );
                assert!(
                    same(p.v()[[iy, ix]], r.v[[0, iy, ix]]),
                    "{file} v[{iy},{ix}]"
                );
            }
        }
    }
}

/// Integer datasets are converted to float exactly.
pub fn check_integers(dir: &Path) {
    let expected: ndarray::Array2<f64> = read_npy(dir.join("ref_u_int16.npy")).unwrap();
    let mut reader = open(&dir.join("integers.h5"), &InputSpec::default()).unwrap();
    let Field::Plane(p) = reader.read(0).unwrap().field else {
        panic!("plane expected")
    };
    for (a, b) in p.u().iter().zip(expected.iter()) {
        assert!(same(*a, *b));
    }
}
