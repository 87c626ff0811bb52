//! Cross-check of the 2nd-order central scheme against `numpy.gradient` (reference library),
//! on arrays written by `scripts/crosscheck/detect_gradient.py` (analytic fields plus noise,
//! non-unit and negative spacings, small and odd shapes).
//!
//! Run by `scripts/test`:
//! `python scripts/crosscheck/detect_gradient.py $DIR && VORTCAT_PYREF_DIR=$DIR cargo test -p vortcat-detect -- --ignored`

use std::path::{Path, PathBuf};

use ndarray::{Array1, Array2, Array3, ArrayD};
use ndarray_npy::read_npy;
use vortcat_detect::gradient::{plane_gradient, volume_tensor_at};
use vortcat_detect::{EdgeOrder, GradientScheme};
use vortcat_field::{Axis, Grid, PlaneField, Units, VolumeField};

fn dir() -> PathBuf {
    match std::env::var_os("VORTCAT_PYREF_DIR") {
        Some(d) => PathBuf::from(d),
        None => panic!(
            "VORTCAT_PYREF_DIR is not set: run `python scripts/crosscheck/detect_gradient.py DIR` and \
             `VORTCAT_PYREF_DIR=DIR cargo test -p vortcat-detect -- --ignored` (scripts/test does both)"
        ),
    }
}

fn load<D: ndarray::Dimension>(dir: &Path, name: &str) -> ndarray::Array<f64, D> {
    let p = dir.join(format!("{name}.npy"));
    let a: ArrayD<f64> =
        read_npy(&p).unwrap_or_else(|e| panic!("cannot read {}: {e}", p.display()));
    a.into_dimensionality::<D>()
        .unwrap_or_else(|e| panic!("{}: wrong dimensionality: {e}", p.display()))
}

/// Agreement "to rounding": numpy divides by 2h where we multiply by 1/(2h), and the
/// one-sided coefficients are rounded separately, so results differ by a few ulps of the
/// terms, i.e. of max|f|/|h| (not of the derivative, which can be small by cancellation).
fn assert_close(ours: f64, numpy: f64, scale: f64, what: &str) {
    let tol = 16.0 * f64::EPSILON * scale;
    assert!(
        (ours - numpy).abs() <= tol,
        "{what}: ours {ours:e}, numpy {numpy:e}, |diff| {:e} > {tol:e}",
        (ours - numpy).abs()
    );
}

fn numpy_edge(e: EdgeOrder, len: usize) -> u8 {
    // numpy needs edge_order + 1 samples; our Second falls back to First on 2-sample axes.
    match e {
        EdgeOrder::Second if len >= 3 => 2,
        _ => 1,
    }
}

#[test]
#[ignore = "needs Python references; run scripts/test"]
fn central2_plane_gradient_equals_numpy_gradient() {
    let d = dir();
    for case in ["plane_odd", "plane_small", "plane_thin", "plane_square"] {
        let f: Array2<f64> = load(&d, &format!("{case}_f"));
        let sp: Array1<f64> = load(&d, &format!("{case}_spacing"));
        let (ny, nx) = f.dim();
        let grid = Grid::plane(
            Axis::new("x", nx, 0.1, sp[1]).unwrap(),
            Axis::new("y", ny, 0.1, sp[0]).unwrap(),
            Units::default(),
        );
        // v = −f so that both components are exercised.
        let field = PlaneField::new(grid, f.clone(), -&f, None, None).unwrap();
        let fmax = f.iter().fold(0.0_f64, |m, x| m.max(x.abs()));
        for edge in [EdgeOrder::First, EdgeOrder::Second] {
            let g = plane_gradient(&field, GradientScheme::Central2, edge).unwrap();
            let dy: Array2<f64> = load(&d, &format!("{case}_d0_e{}", numpy_edge(edge, ny)));
            let dx: Array2<f64> = load(&d, &format!("{case}_d1_e{}", numpy_edge(edge, nx)));
            for ((iy, ix), &ref_x) in dx.indexed_iter() {
                let what = format!("{case} {edge:?} [{iy},{ix}]");
                assert_close(
                    g.dudx[[iy, ix]],
                    ref_x,
                    fmax / sp[1].abs(),
                    &format!("{what} du/dx"),
                );
                assert_close(
                    g.dvdx[[iy, ix]],
                    -ref_x,
                    fmax / sp[1].abs(),
                    &format!("{what} dv/dx"),
                );
                assert_close(
                    g.dudy[[iy, ix]],
                    dy[[iy, ix]],
                    fmax / sp[0].abs(),
                    &format!("{what} du/dy"),
                );
                assert_close(
                    g.dvdy[[iy, ix]],
                    -dy[[iy, ix]],
                    fmax / sp[0].abs(),
                    &format!("{what} dv/dy"),
                );
            }
        }
    }
}

#[test]
#[ignore = "needs Python references; run scripts/test"]
fn central2_volume_tensor_equals_numpy_gradient() {
    let d = dir();
    let case = "volume_odd";
    let f: Array3<f64> = load(&d, &format!("{case}_f"));
    let sp: Array1<f64> = load(&d, &format!("{case}_spacing"));
    let (nz, ny, nx) = f.dim();
    let grid = Grid::volume(
        Axis::new("x", nx, 0.1, sp[2]).unwrap(),
        Axis::new("y", ny, 0.1, sp[1]).unwrap(),
        Axis::new("z", nz, 0.1, sp[0]).unwrap(),
        Units::default(),
    );
    // The script rounded f to float32, so this conversion is exact.
    let f32s = f.mapv(|x| x as f32);
    let field = VolumeField::new(grid, f32s.clone(), f32s.mapv(|x| 2.0 * x), -&f32s, None).unwrap();
    let fmax = f.iter().fold(0.0_f64, |m, x| m.max(x.abs()));
    for edge in [EdgeOrder::First, EdgeOrder::Second] {
        let e = numpy_edge(edge, 3);
        // numpy axis 0 = z (tensor column 2), 1 = y (column 1), 2 = x (column 0).
        let refs: Vec<Array3<f64>> = (0..3)
            .map(|a| load(&d, &format!("{case}_d{a}_e{e}")))
            .collect();
        for ((iz, iy, ix), _) in f.indexed_iter() {
            let t = volume_tensor_at(&field, GradientScheme::Central2, edge, [iz, iy, ix])
                .unwrap()
                .expect("no masked vectors");
            for (col, axis) in [(0usize, 2usize), (1, 1), (2, 0)] {
                let r = refs[axis][[iz, iy, ix]];
                let scale = 2.0 * fmax / sp[axis].abs();
                let what = format!("{edge:?} [{iz},{iy},{ix}] axis {axis}");
                assert_close(t.0[0][col], r, scale, &format!("{what} u"));
                assert_close(t.0[1][col], 2.0 * r, scale, &format!("{what} v"));
                assert_close(t.0[2][col], -r, scale, &format!("{what} w"));
            }
        }
    }
}
