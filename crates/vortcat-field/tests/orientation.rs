//! Orientation comes from the coordinates: a counter-clockwise vortex stored image-style (row 0
//! at the top, y decreasing with row index) must still rotate counter-clockwise once derivatives
//! use the grid's signed spacing.

use ndarray::{Array1, Array2};
use ndarray_npy::NpzWriter;
use vortcat_field::{open, Field, InputSpec};

/// ω_z = ∂v/∂x − ∂u/∂y at an interior point by central differences with the signed spacing.
fn vorticity_at(p: &vortcat_field::PlaneField, iy: usize, ix: usize) -> f64 {
    let dx = p.grid().x().spacing();
    let dy = p.grid().y().spacing();
    let dvdx = (p.v()[[iy, ix + 1]] - p.v()[[iy, ix - 1]]) / (2.0 * dx);
    let dudy = (p.u()[[iy + 1, ix]] - p.u()[[iy - 1, ix]]) / (2.0 * dy);
    dvdx - dudy
}

/// Solid-body rotation u = −Ω y, v = Ω x (ω_z = 2Ω > 0: counter-clockwise) sampled at `ys`.
fn write_rotation(path: &std::path::Path, ys: &Array1<f64>) {
    let xs = Array1::linspace(-2.0, 2.0, 9);
    let omega = 0.5;
    let u = Array2::from_shape_fn((ys.len(), xs.len()), |(i, _)| -omega * ys[i]);
    let v = Array2::from_shape_fn((ys.len(), xs.len()), |(_, j)| omega * xs[j]);
    let mut w = NpzWriter::new(std::fs::File::create(path).unwrap());
    w.add_array("u", &u).unwrap();
    w.add_array("v", &v).unwrap();
    w.add_array("x", &xs).unwrap();
    w.add_array("y", ys).unwrap();
    w.finish().unwrap();
}

#[test]
fn y_axis_pointing_down_keeps_the_rotation_sense() {
    let dir = tempfile::tempdir().unwrap();
    for (name, ys) in [
        ("up.npz", Array1::linspace(-2.0, 2.0, 9)),
        ("down.npz", Array1::linspace(2.0, -2.0, 9)),
    ] {
        let path = dir.path().join(name);
        write_rotation(&path, &ys);
        let mut reader = open(&path, &InputSpec::default()).unwrap();
        let Field::Plane(p) = reader.read(0).unwrap().field else {
            panic!("plane")
        };
        let w = vorticity_at(&p, 4, 4);
        // Solid-body rotation has ω_z = 2Ω = 1 exactly; central differences are exact on a
        // linear field, so only rounding remains.
        assert!((w - 1.0).abs() < 1e-12, "{name}: ω_z = {w}");
        if name == "down.npz" {
            assert!(p.grid().y().spacing() < 0.0);
        }
    }
}

#[test]
fn flip_y_gives_the_image_convention_without_coordinates() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("image.npz");
    // Rows written top to bottom, as a camera does: row 0 is the largest y.
    write_rotation(&path, &Array1::linspace(2.0, -2.0, 9));
    let spec = InputSpec {
        spacing: Some(vec![0.5]),
        origin: Some(vec![-2.0, 2.0]),
        flip_y: true,
        x: "no-x".into(),
        y: "no-y".into(),
        ..Default::default()
    };
    let mut reader = open(&path, &spec).unwrap();
    let Field::Plane(p) = reader.read(0).unwrap().field else {
        panic!("plane")
    };
    assert!((vorticity_at(&p, 4, 4) - 1.0).abs() < 1e-12);
}
