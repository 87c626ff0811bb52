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
        // A node is inside when dx² + dy² ≤ r², in exactly this arithmetic (centre and radius
        // are finite, checked above, so no comparison meets a NaN). Along a row dx is
        // monotone in the index (so is its rounding), so the nodes inside form one run: it is
        // found from the circle's chord and corrected at both ends by the exact test, and the
        // run is then copied without a test per node.
        let inside = |i: i64, dy2: f64| {
            let dx = ax.coordinate(i as f64) - centre[0];
            dx * dx + dy2 <= r2
        };
        for j in j0..=j1 {
            let yc = ay.coordinate(j as f64);
            let dy = yc - centre[1];
            let dy2 = dy * dy;
            // dx² + dy² ≥ dy² in floating point too: no node of this row is inside.
            if dy2 > r2 {
                continue;
            }
            let half = (r2 - dy2).sqrt() / w.spacing[0];
            let mut lo = ((ix_c - half).floor() as i64).clamp(i0, i1);
            let mut hi = ((ix_c + half).ceil() as i64).clamp(i0, i1);
            while lo > i0 && inside(lo - 1, dy2) {
                lo -= 1;
            }
            while lo <= hi && !inside(lo, dy2) {
                lo += 1;
            }
            while hi < i1 && inside(hi + 1, dy2) {
                hi += 1;
            }
            while hi >= lo && !inside(hi, dy2) {
                hi -= 1;
            }
            if lo > hi {
                continue;
            }
            let run = (hi - lo + 1) as usize;
            if j < 0 || j >= ny {
                w.outside += run;
                continue;
            }
            let (a, b) = (lo.max(0), hi.min(nx - 1));
            let in_domain = if a <= b { (b - a + 1) as usize } else { 0 };
            w.outside += run - in_domain;
            if in_domain == 0 {
                continue;
            }
            // Branch-free compaction: every node of the run is written at the next free
            // place, which advances only for a valid vector.
            let start = w.x.len();
            for column in [&mut w.x, &mut w.y, &mut w.u, &mut w.v] {
                column.resize(start + in_domain, 0.0);
            }
            let row = j as usize * nx as usize;
            let (xs, ys, us, vs) = (
                &mut w.x[start..],
                &mut w.y[start..],
                &mut w.u[start..],
                &mut w.v[start..],
            );
            let (u_row, v_row, valid_row) = (
                &u[row + a as usize..=row + b as usize],
                &v[row + a as usize..=row + b as usize],
                &valid[row + a as usize..=row + b as usize],
            );
            let mut kept = 0;
            for (n, ((&uu, &vv), &ok)) in u_row.iter().zip(v_row).zip(valid_row).enumerate() {
                let ok = ok & uu.is_finite() & vv.is_finite();
                xs[kept] = ax.coordinate((a + n as i64) as f64);
                ys[kept] = yc;
                us[kept] = uu;
                vs[kept] = vv;
                kept += usize::from(ok);
            }
            w.invalid += in_domain - kept;
            for column in [&mut w.x, &mut w.y, &mut w.u, &mut w.v] {
                column.truncate(start + kept);
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

    /// The node-by-node selection `from_plane` replaced: every node of the bounding square
    /// tested against the circle. Kept as the reference for the run-by-run version.
    fn node_by_node(
        field: &PlaneField,
        centre: [f64; 2],
        radius: f64,
    ) -> (Vec<[f64; 4]>, usize, usize) {
        let (ax, ay) = (field.grid().x(), field.grid().y());
        let (ix_c, iy_c) = (ax.index_of(centre[0]), ay.index_of(centre[1]));
        let (rx, ry) = (radius / ax.spacing().abs(), radius / ay.spacing().abs());
        let (nx, ny) = (ax.len() as i64, ay.len() as i64);
        let (mut kept, mut invalid, mut outside) = (Vec::new(), 0, 0);
        let r2 = radius * radius;
        for j in (iy_c - ry).floor() as i64 - 1..=(iy_c + ry).ceil() as i64 + 1 {
            let yc = ay.coordinate(j as f64);
            let dy = yc - centre[1];
            for i in (ix_c - rx).floor() as i64 - 1..=(ix_c + rx).ceil() as i64 + 1 {
                let xc = ax.coordinate(i as f64);
                let dx = xc - centre[0];
                if dx * dx + dy * dy > r2 {
                    continue;
                }
                if i < 0 || j < 0 || i >= nx || j >= ny {
                    outside += 1;
                    continue;
                }
                let (uu, vv) = (
                    field.u()[[j as usize, i as usize]],
                    field.v()[[j as usize, i as usize]],
                );
                if !field.valid()[[j as usize, i as usize]] || !uu.is_finite() || !vv.is_finite() {
                    invalid += 1;
                    continue;
                }
                kept.push([xc, yc, uu, vv]);
            }
        }
        (kept, invalid, outside)
    }

    proptest::proptest! {
        /// The run-by-run selection keeps exactly the nodes, in the same order and with the
        /// same bits, and counts exactly the invalid and outside nodes of the node-by-node
        /// test, for any centre (inside, near or beyond the edges), radius, spacing sign and
        /// mask. Radii that are whole multiples of the spacing put nodes exactly on the circle.
        #[test]
        fn runs_select_the_nodes_of_the_node_by_node_test(
            cx in -3.0f64..40.0,
            cy in -3.0f64..30.0,
            radius_spacings in 0.3f64..12.0,
            on_the_circle in proptest::bool::ANY,
            flip_x in proptest::bool::ANY,
            seed in 0u64..1000,
        ) {
            let (nx, ny, h) = (37usize, 29usize, 0.1);
            let (x0, hx) = if flip_x { (3.6, -h) } else { (0.0, h) };
            let grid = Grid::plane(
                Axis::new("x", nx, x0, hx).unwrap(),
                Axis::new("y", ny, 0.0, h).unwrap(),
                Units::default(),
            );
            let mut u = Array2::from_shape_fn((ny, nx), |(j, i)| (i * 31 + j * 7) as f64 * 0.01);
            let v = Array2::from_shape_fn((ny, nx), |(j, i)| (i as f64 - j as f64) * 0.02);
            // About 5 % masked vectors, placed by the seed.
            for k in 0..(nx * ny / 20) {
                let flat = (seed as usize * 7919 + k * 104_729) % (nx * ny);
                u[[flat / nx, flat % nx]] = f64::NAN;
            }
            let field = PlaneField::new(grid, u, v, None, None).unwrap();
            let radius = if on_the_circle { radius_spacings.round().max(1.0) * h } else { radius_spacings * h };
            let centre = if on_the_circle {
                // A node as centre: nodes at whole-spacing offsets lie exactly on the circle.
                [field.grid().x().coordinate((cx * 10.0 / 4.0).round().clamp(0.0, 36.0)),
                 field.grid().y().coordinate((cy * 10.0 / 3.0).round().clamp(0.0, 28.0))]
            } else {
                [x0 + hx * cx, h * cy]
            };
            let w = Window::from_plane(&field, centre, radius).unwrap();
            let (kept, invalid, outside) = node_by_node(&field, centre, radius);
            let got: Vec<[f64; 4]> = (0..w.len()).map(|k| [w.x()[k], w.y()[k], w.u()[k], w.v()[k]]).collect();
            let bits = |rows: &[[f64; 4]]| rows.iter().map(|r| r.map(f64::to_bits)).collect::<Vec<_>>();
            proptest::prop_assert_eq!(bits(&got), bits(&kept));
            proptest::prop_assert_eq!(w.invalid_count(), invalid);
            proptest::prop_assert_eq!(w.outside_count(), outside);
        }
    }
}
