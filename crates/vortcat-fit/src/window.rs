//! Sample selection: the valid velocity vectors inside a circular window round a candidate.

use serde::{Deserialize, Serialize};
use vortcat_field::PlaneField;

use crate::error::FitError;

/// The valid vectors inside a circular window, with what is needed to judge the window.
///
/// Built from plain slices ([`Window::from_samples`]) or from a [`PlaneField`]
/// ([`Window::from_plane`]). Coordinates are in the field's length unit, velocities in its
/// velocity unit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Window {
    centre: [f64; 2],
    radius: f64,
    spacing: [f64; 2],
    x: Vec<f64>,
    y: Vec<f64>,
    u: Vec<f64>,
    v: Vec<f64>,
    invalid: usize,
    outside: usize,
    neighbours: Vec<[f64; 2]>,
}

fn check_positive(name: &'static str, value: f64) -> Result<(), FitError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(FitError::InvalidWindow {
            name,
            value,
            reason: "must be finite and > 0",
        })
    }
}

impl Window {
    /// Window of radius `radius` round `centre` from scattered samples. Samples outside the
    /// circle are ignored; samples inside with a NaN component are counted as invalid vectors
    /// (the `vortcat-field` convention); an infinite value is an error. `spacing` is the grid
    /// spacing `[|dx|, |dy|]` of the data (used for the resolution flag and to count the
    /// vectors a full window would hold).
    pub fn from_samples(
        centre: [f64; 2],
        radius: f64,
        spacing: [f64; 2],
        x: &[f64],
        y: &[f64],
        u: &[f64],
        v: &[f64],
    ) -> Result<Self, FitError> {
        if !(centre[0].is_finite() && centre[1].is_finite()) {
            let bad = if centre[0].is_finite() {
                centre[1]
            } else {
                centre[0]
            };
            return Err(FitError::InvalidWindow {
                name: "centre",
                value: bad,
                reason: "must be finite",
            });
        }
        check_positive("radius", radius)?;
        check_positive("spacing x", spacing[0].abs())?;
        check_positive("spacing y", spacing[1].abs())?;
        if x.len() != y.len() || x.len() != u.len() || x.len() != v.len() {
            return Err(FitError::LengthMismatch {
                x: x.len(),
                y: y.len(),
                u: u.len(),
                v: v.len(),
            });
        }
        let mut w = Window {
            centre,
            radius,
            spacing: [spacing[0].abs(), spacing[1].abs()],
            x: Vec::new(),
            y: Vec::new(),
            u: Vec::new(),
            v: Vec::new(),
            invalid: 0,
            outside: 0,
            neighbours: Vec::new(),
        };
        let r2 = radius * radius;
        for i in 0..x.len() {
            let (xi, yi, ui, vi) = (x[i], y[i], u[i], v[i]);
            if xi.is_infinite() || yi.is_infinite() || ui.is_infinite() || vi.is_infinite() {
                return Err(FitError::NonFiniteSample {
                    index: i,
                    x: xi,
                    y: yi,
                    u: ui,
                    v: vi,
                });
            }
            if xi.is_nan() || yi.is_nan() {
                continue; // no position: cannot be in the window
            }
            let (dx, dy) = (xi - centre[0], yi - centre[1]);
            if dx * dx + dy * dy > r2 {
                continue;
            }
            if ui.is_nan() || vi.is_nan() {
                w.invalid += 1;
                continue;
            }
            w.x.push(xi);
            w.y.push(yi);
            w.u.push(ui);
            w.v.push(vi);
        }
        Ok(w)
    }

    /// Window round `centre` from a plane field: every grid node inside the circle is either a
    /// valid sample, an invalid vector (`valid()` false) or, if the circle reaches past the
    /// grid, a node outside the domain (counted for the clipping flag).
    pub fn from_plane(field: &PlaneField, centre: [f64; 2], radius: f64) -> Result<Self, FitError> {
        let mut w = Window::from_samples(centre, radius, [1.0, 1.0], &[], &[], &[], &[])?;
        let (ax, ay) = (field.grid().x(), field.grid().y());
        w.spacing = [ax.spacing().abs(), ay.spacing().abs()];
        let ix_c = ax.index_of(centre[0]);
        let iy_c = ay.index_of(centre[1]);
        let rx = radius / w.spacing[0];
        let ry = radius / w.spacing[1];
        let (i0, i1) = (
            (ix_c - rx).floor() as i64 - 1,
            (ix_c + rx).ceil() as i64 + 1,
        );
        let (j0, j1) = (
            (iy_c - ry).floor() as i64 - 1,
            (iy_c + ry).ceil() as i64 + 1,
        );
        let (nx, ny) = (ax.len() as i64, ay.len() as i64);
        // Flat slices: no per-node index checks in the loop below (the field's arrays are in
        // standard layout; `as_standard_layout` only borrows them).
        let (u, v, valid) = (
            field.u().as_standard_layout(),
            field.v().as_standard_layout(),
            field.valid().as_standard_layout(),
        );
        let (u, v, valid) = (
            u.as_slice().expect("standard layout"),
            v.as_slice().expect("standard layout"),
            valid.as_slice().expect("standard layout"),
        );
        let r2 = radius * radius;
        // Nodes of the circle, plus a margin for its rim.
        let expected = (std::f64::consts::PI * (rx + 1.0) * (ry + 1.0)).ceil() as usize;
        for column in [&mut w.x, &mut w.y, &mut w.u, &mut w.v] {
            column.reserve(expected);
        }
        for j in j0..=j1 {
            let yc = ay.coordinate(j as f64);
            let dy = yc - centre[1];
            let dy2 = dy * dy;
            for i in i0..=i1 {
                let xc = ax.coordinate(i as f64);
                let dx = xc - centre[0];
                if dx * dx + dy2 > r2 {
                    continue;
                }
                if i < 0 || j < 0 || i >= nx || j >= ny {
                    w.outside += 1;
                    continue;
                }
                let idx = j as usize * nx as usize + i as usize;
                let (uu, vv) = (u[idx], v[idx]);
                if !valid[idx] || !uu.is_finite() || !vv.is_finite() {
                    w.invalid += 1;
                    continue;
                }
                w.x.push(xc);
                w.y.push(yc);
                w.u.push(uu);
                w.v.push(vv);
            }
        }
        Ok(w)
    }

    /// Record `count` grid nodes of the circle that lie outside the measurement domain (for
    /// windows built from samples, where the domain is not known).
    pub fn with_outside_domain(mut self, count: usize) -> Self {
        self.outside = count;
        self
    }

    /// Record positions of other vortex candidates (for the neighbour flag).
    pub fn with_neighbours(mut self, neighbours: &[[f64; 2]]) -> Self {
        self.neighbours = neighbours.to_vec();
        self
    }

    /// Window centre.
    pub fn centre(&self) -> [f64; 2] {
        self.centre
    }
    /// Window radius.
    pub fn radius(&self) -> f64 {
        self.radius
    }
    /// Grid spacing `[|dx|, |dy|]`.
    pub fn spacing(&self) -> [f64; 2] {
        self.spacing
    }
    /// x of the valid samples.
    pub fn x(&self) -> &[f64] {
        &self.x
    }
    /// y of the valid samples.
    pub fn y(&self) -> &[f64] {
        &self.y
    }
    /// u of the valid samples.
    pub fn u(&self) -> &[f64] {
        &self.u
    }
    /// v of the valid samples.
    pub fn v(&self) -> &[f64] {
        &self.v
    }
    /// Number of valid samples.
    pub fn len(&self) -> usize {
        self.x.len()
    }
    /// No valid sample.
    pub fn is_empty(&self) -> bool {
        self.x.is_empty()
    }
    /// Invalid vectors inside the circle.
    pub fn invalid_count(&self) -> usize {
        self.invalid
    }
    /// Grid nodes of the circle outside the domain.
    pub fn outside_count(&self) -> usize {
        self.outside
    }
    /// Other candidates' positions.
    pub fn neighbours(&self) -> &[[f64; 2]] {
        &self.neighbours
    }
    /// Fraction of the circle's grid nodes that are invalid vectors.
    pub fn invalid_fraction(&self) -> f64 {
        self.invalid as f64 / self.total_nodes().max(1) as f64
    }
    /// Fraction of the circle's grid nodes that are outside the domain.
    pub fn outside_fraction(&self) -> f64 {
        self.outside as f64 / self.total_nodes().max(1) as f64
    }
    fn total_nodes(&self) -> usize {
        self.x.len() + self.invalid + self.outside
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;
    use vortcat_field::{Axis, Grid, Units};

    #[test]
    fn selects_circle_counts_nan_rejects_infinity() {
        let x = [0.0, 1.0, 3.0, 0.5, 0.2];
        let y = [0.0, 0.0, 0.0, 0.5, 0.1];
        let u = [1.0, 2.0, 3.0, f64::NAN, 1.0];
        let v = [0.0, 0.0, 0.0, 0.0, 0.0];
        let w = Window::from_samples([0.0, 0.0], 1.5, [0.1, 0.1], &x, &y, &u, &v).unwrap();
        assert_eq!(w.len(), 3);
        assert_eq!(w.invalid_count(), 1);
        let mut u2 = u;
        u2[4] = f64::INFINITY;
        let e = Window::from_samples([0.0, 0.0], 1.5, [0.1, 0.1], &x, &y, &u2, &v).unwrap_err();
        assert!(matches!(e, FitError::NonFiniteSample { index: 4, .. }));
        let e = Window::from_samples([0.0, 0.0], -1.0, [0.1, 0.1], &x, &y, &u, &v).unwrap_err();
        assert!(matches!(e, FitError::InvalidWindow { name: "radius", .. }));
        let e = Window::from_samples([0.0, 0.0], 1.0, [0.1, 0.1], &x[..2], &y, &u, &v).unwrap_err();
        assert!(matches!(e, FitError::LengthMismatch { x: 2, .. }));
    }

    /// A circle reaching past a grid corner: a quarter of the nodes lie outside when centred on
    /// the corner node (geometric fact: the corner quadrant is 1/4 of the disc).
    #[test]
    fn from_plane_counts_nodes_outside_domain() {
        let (n, h) = (41usize, 0.1);
        let grid = Grid::plane(
            Axis::new("x", n, 0.0, h).unwrap(),
            Axis::new("y", n, 0.0, h).unwrap(),
            Units::default(),
        );
        let u = Array2::from_elem((n, n), 1.0);
        let v = Array2::zeros((n, n));
        let field = PlaneField::new(grid, u, v, None, None).unwrap();
        // Radius a hair above 10 spacings so that nodes exactly on the circle (e.g. (6, 8)) are
        // not lost to rounding of 0.1-multiples.
        let r = 1.0 + 1e-9;
        let inner = Window::from_plane(&field, [2.0, 2.0], r).unwrap();
        assert_eq!(inner.outside_count(), 0);
        assert_eq!(inner.invalid_count(), 0);
        // Nodes within a radius of 10 spacings: Gauss circle count N(10) = 317.
        assert_eq!(inner.len(), 317);
        let corner = Window::from_plane(&field, [0.0, 0.0], r).unwrap();
        assert_eq!(corner.len() + corner.outside_count(), 317);
        // 317 = 1 (origin) + 4·10 (axes) + 4·69 (open quadrants); inside the domain are the
        // quadrant x ≥ 0, y ≥ 0 with its two half-axes: 69 + 10 + 10 + 1 = 90.
        assert_eq!(corner.len(), 90);
    }
}
