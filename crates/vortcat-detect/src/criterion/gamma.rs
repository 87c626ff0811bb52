//! The Γ1 and Γ2 functions of Graftieaux, Michard & Grosjean.
//!
//! # Formula
//! For a point P and the set S of grid points M within a disc of radius `r` grid steps around
//! P (`(i_M − i_P)² + (j_M − j_P)² ≤ r²`, P itself excluded):
//!
//! `Γ1(P) = (1/N) Σ_M [(PM × U_M) · e_z] / (|PM| |U_M|)`
//!
//! `Γ2(P) = (1/N) Σ_M [(PM × (U_M − Ũ_P)) · e_z] / (|PM| |U_M − Ũ_P|)`
//!
//! with `Ũ_P` the mean velocity over S ∪ {P}, N the number of terms, PM the *physical*
//! displacement (signed spacings, so the sense is right on a downward y axis). Γ1 is the mean
//! sine of the angle between PM and the velocity: |Γ1| = 1 at the centre of an axisymmetric
//! vortex; its extremum locates the centre (Graftieaux et al. report |Γ1| ≈ 0.9–1 at centres,
//! from memory). Γ2 is Galilean invariant. In the limit of a small neighbourhood Γ2 depends
//! only on Ω/μ (rotation rate over the strain eigenvalue of the local linear flow): for
//! |Ω/μ| < 1 the flow is strain-dominated and |Γ2| < 2/π; |Γ2| = 2/π exactly at |Ω| = |μ|
//! (the mean of |sin| over a period), which is the λci = 0 boundary, and |Γ2| > 2/π inside a
//! core. On a Rankine vortex, whose gradient jumps at the core edge, the 2/π contour lies
//! within a fraction of the neighbourhood radius inside the edge (≈ 0.1 r, by our own numerical
//! evaluation of the formula above) and converges to the edge as r → 0.
//!
//! # Units
//! Dimensionless, in [−1, 1]; positive for counter-clockwise rotation seen from +z.
//!
//! # Assumptions
//! A planar field. Masked points M are skipped (N counts only valid terms) and the disc is
//! truncated at the domain edge; terms with `|U_M| = 0` (Γ1) or `|U_M − Ũ_P| = 0` (Γ2) have no
//! angle and are skipped. A point with no term is not computed (NaN). Both are integral
//! criteria: no derivatives, hence robust to noise, but their spatial resolution is the
//! neighbourhood size, and the cost is O(r²) per point.
//!
//! # Reference
//! L. Graftieaux, M. Michard & N. Grosjean (2001). "Combining PIV, POD and vortex
//! identification algorithms for the study of unsteady turbulent swirling flows".
//! *Meas. Sci. Technol.* 12, 1422–1429.

use ndarray::{Array2, CowArray};
use rayon::prelude::*;
use vortcat_field::PlaneField;

use crate::error::DetectError;

/// Which of the two functions.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Which {
    One,
    Two,
}

/// Γ1 field, `[iy, ix]`, NaN at masked points and where no term exists.
///
/// Errors: [`DetectError::InvalidSetting`] for `radius == 0`.
pub fn gamma1(field: &PlaneField, radius: usize) -> Result<Array2<f64>, DetectError> {
    gamma(field, radius, Which::One)
}

/// Γ2 field, `[iy, ix]`, NaN at masked points and where no term exists.
///
/// Errors: [`DetectError::InvalidSetting`] for `radius == 0`.
pub fn gamma2(field: &PlaneField, radius: usize) -> Result<Array2<f64>, DetectError> {
    gamma(field, radius, Which::Two)
}

fn gamma(field: &PlaneField, radius: usize, which: Which) -> Result<Array2<f64>, DetectError> {
    if radius == 0 {
        return Err(DetectError::InvalidSetting {
            name: "gamma_radius",
            value: radius.to_string(),
            reason: "the neighbourhood radius must be at least 1 grid step",
        });
    }
    let g = field.grid();
    let (nx, ny) = (g.x().len(), g.y().len());
    let (hx, hy) = (g.x().spacing(), g.y().spacing());
    let r = radius as isize;
    // Offsets (di, dj) with physical PM and |PM|.
    let offsets: Vec<(isize, isize, f64, f64, f64)> = (-r..=r)
        .flat_map(|dj| (-r..=r).map(move |di| (di, dj)))
        .filter(|&(di, dj)| (di != 0 || dj != 0) && di * di + dj * dj <= r * r)
        .map(|(di, dj)| {
            let (px, py) = (di as f64 * hx, dj as f64 * hy);
            (di, dj, px, py, px.hypot(py))
        })
        .collect();
    let u: CowArray<f64, _> = field.u().as_standard_layout();
    let v: CowArray<f64, _> = field.v().as_standard_layout();
    let (u, v) = (
        u.as_slice().expect("standard"),
        v.as_slice().expect("standard"),
    );
    let mut out = Array2::from_elem((ny, nx), f64::NAN);
    out.as_slice_mut()
        .expect("fresh array")
        .par_chunks_mut(nx)
        .enumerate()
        .for_each(|(iy, row)| {
            for (ix, o) in row.iter_mut().enumerate() {
                let k = iy * nx + ix;
                if u[k].is_nan() {
                    continue;
                }
                let inside = |&&(di, dj, ..): &&(isize, isize, f64, f64, f64)| {
                    let (x, y) = (ix as isize + di, iy as isize + dj);
                    x >= 0
                        && y >= 0
                        && x < nx as isize
                        && y < ny as isize
                        && !u[y as usize * nx + x as usize].is_nan()
                };
                let at = |di: isize, dj: isize| {
                    let m = (iy as isize + dj) as usize * nx + (ix as isize + di) as usize;
                    (u[m], v[m])
                };
                let (mu, mv) = match which {
                    Which::One => (0.0, 0.0),
                    Which::Two => {
                        let (mut su, mut sv, mut n) = (u[k], v[k], 1.0);
                        for &(di, dj, ..) in offsets.iter().filter(inside) {
                            let (a, b) = at(di, dj);
                            su += a;
                            sv += b;
                            n += 1.0;
                        }
                        (su / n, sv / n)
                    }
                };
                let (mut sum, mut n) = (0.0, 0usize);
                for &(di, dj, px, py, d) in offsets.iter().filter(inside) {
                    let (a, b) = at(di, dj);
                    let (a, b) = (a - mu, b - mv);
                    let speed = a.hypot(b);
                    if speed > 0.0 {
                        sum += (px * b - py * a) / (d * speed);
                        n += 1;
                    }
                }
                if n > 0 {
                    *o = sum / n as f64;
                }
            }
        });
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use vortcat_field::{Axis, Grid, Units};

    fn linear(nx: usize, ny: usize, dy: f64, a: [[f64; 2]; 2]) -> PlaneField {
        let grid = Grid::plane(
            Axis::new("x", nx, -((nx - 1) as f64) / 2.0, 1.0).unwrap(),
            Axis::new("y", ny, (ny - 1) as f64 / 2.0 * -dy.signum(), dy).unwrap(),
            Units::default(),
        );
        let f = |c: usize| {
            Array2::from_shape_fn((ny, nx), |(iy, ix)| {
                let (x, y) = (
                    grid.x().coordinate(ix as f64),
                    grid.y().coordinate(iy as f64),
                );
                a[c][0] * x + a[c][1] * y + 0.3 * c as f64
            })
        };
        PlaneField::new(grid.clone(), f(0), f(1), None, None).unwrap()
    }

    #[test]
    fn gamma1_is_one_at_the_centre_of_solid_body_rotation_and_sign_follows_sense() {
        // Graftieaux et al. (2001): |Γ1| = 1 at the centre of an axisymmetric vortex (every
        // velocity is normal to PM). Solid body, centre on a grid point; rounding only.
        let grid = linear(11, 11, 1.0, [[0.0, 0.0], [0.0, 0.0]]).grid().clone();
        let (u, v): (Array2<f64>, Array2<f64>) = (
            Array2::from_shape_fn((11, 11), |(iy, _)| -grid.y().coordinate(iy as f64)),
            Array2::from_shape_fn((11, 11), |(_, ix)| grid.x().coordinate(ix as f64)),
        );
        let f = PlaneField::new(grid.clone(), u.clone(), v.clone(), None, None).unwrap();
        assert_relative_eq!(gamma1(&f, 3).unwrap()[[5, 5]], 1.0, epsilon = 1e-12);
        let f = PlaneField::new(grid, -u, -v, None, None).unwrap();
        assert_relative_eq!(gamma1(&f, 3).unwrap()[[5, 5]], -1.0, epsilon = 1e-12);
    }

    #[test]
    fn gamma2_is_two_over_pi_for_rotation_equal_to_strain() {
        // Graftieaux et al. (2001): in a linear flow, Γ2 depends only on Ω/μ and equals 2/π when
        // |Ω| = |μ| (pure shear: u = s y has Ω = μ = s/2). The disc sample over-represents
        // some angles; with r = 12 the discrete mean is within 1e-2 of the continuum mean.
        // Shear u = −y: counter-clockwise (ω_z = +1) → +2/π.
        let f = linear(31, 31, 1.0, [[0.0, -1.0], [0.0, 0.0]]);
        let g2 = gamma2(&f, 12).unwrap();
        assert_relative_eq!(g2[[15, 15]], 2.0 / std::f64::consts::PI, epsilon = 1e-2);
        // Galilean invariance: the uniform offsets of `linear` do not matter; solid-body
        // rotation gives 1 (every relative velocity normal to PM).
        let f = linear(31, 31, -1.0, [[0.0, -1.0], [1.0, 0.0]]);
        assert_relative_eq!(gamma2(&f, 4).unwrap()[[15, 15]], 1.0, epsilon = 1e-12);
        // Pure strain: 0 by symmetry.
        let f = linear(31, 31, 1.0, [[1.0, 0.0], [0.0, -1.0]]);
        assert_relative_eq!(gamma2(&f, 4).unwrap()[[15, 15]], 0.0, epsilon = 1e-12);
        assert!(gamma2(&f, 0).is_err());
    }
}
