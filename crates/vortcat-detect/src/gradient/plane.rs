//! The in-plane velocity-gradient tensor of a [`PlaneField`]: materialised
//! ([`plane_gradient`]), at one point ([`plane_tensor_at`]), or fused with a point function
//! into one scalar field ([`map_plane`], the fast path used by the criteria).

use ndarray::{Array2, CowArray, Ix2, Zip};
use rayon::prelude::*;
use vortcat_field::PlaneField;

use super::{check_axis, line_get, AxisCoeffs, EdgeOrder, GradientScheme};
use crate::error::DetectError;
use crate::tensor::Tensor2;

/// The four in-plane derivatives, each indexed `[iy, ix]`, in velocity units per length unit.
/// NaN where the tensor could not be computed (masked vector, or no stencil possible).
#[derive(Debug, Clone)]
pub struct PlaneGradient {
    /// ∂u/∂x
    pub dudx: Array2<f64>,
    /// ∂u/∂y
    pub dudy: Array2<f64>,
    /// ∂v/∂x
    pub dvdx: Array2<f64>,
    /// ∂v/∂y
    pub dvdy: Array2<f64>,
}

impl PlaneGradient {
    /// The tensor at `[iy, ix]`, `None` where it was not computed.
    pub fn at(&self, iy: usize, ix: usize) -> Option<Tensor2> {
        let t = Tensor2([
            [self.dudx[[iy, ix]], self.dudy[[iy, ix]]],
            [self.dvdx[[iy, ix]], self.dvdy[[iy, ix]]],
        ]);
        t.is_finite().then_some(t)
    }

    /// `true` where the tensor was computed.
    pub fn computed(&self) -> Array2<bool> {
        let mut out = Array2::from_elem(self.dudx.raw_dim(), false);
        Zip::from(&mut out)
            .and(&self.dudx)
            .and(&self.dudy)
            .and(&self.dvdx)
            .and(&self.dvdy)
            .for_each(|o, a, b, c, d| {
                *o = a.is_finite() && b.is_finite() && c.is_finite() && d.is_finite()
            });
        out
    }
}

/// `n` samples of `d` from flat index `at`.
#[inline(always)]
fn win(d: &[f64], at: isize, n: usize) -> &[f64] {
    &d[at as usize..][..n]
}

/// `val` if `ok`, else NaN, without a branch (an integer mask on the bits), so that the loops
/// around it vectorise.
#[inline(always)]
pub(crate) fn poison_unless(ok: bool, val: f64) -> f64 {
    const NAN_BITS: u64 = 0x7ff8_0000_0000_0000;
    f64::from_bits(val.to_bits() | ((ok as u64).wrapping_sub(1) & NAN_BITS))
}

/// Shared state of one plane computation.
pub(crate) struct PlaneCtx<'a> {
    u: CowArray<'a, f64, Ix2>,
    v: CowArray<'a, f64, Ix2>,
    pub(crate) nx: usize,
    pub(crate) ny: usize,
    cx: AxisCoeffs,
    cy: AxisCoeffs,
    margin: usize,
}

impl<'a> PlaneCtx<'a> {
    pub(crate) fn new(
        field: &'a PlaneField,
        scheme: GradientScheme,
        edge: EdgeOrder,
    ) -> Result<Self, DetectError> {
        let g = field.grid();
        check_axis("x", g.x().len())?;
        check_axis("y", g.y().len())?;
        Ok(Self {
            u: field.u().as_standard_layout(),
            v: field.v().as_standard_layout(),
            nx: g.x().len(),
            ny: g.y().len(),
            cx: AxisCoeffs::new(g.x().spacing(), scheme, edge),
            cy: AxisCoeffs::new(g.y().spacing(), scheme, edge),
            margin: scheme.half_width(),
        })
    }

    #[inline(always)]
    fn slices(&self) -> (&[f64], &[f64]) {
        // Standard layout is guaranteed by `as_standard_layout`.
        (
            self.u.as_slice().expect("standard layout"),
            self.v.as_slice().expect("standard layout"),
        )
    }

    /// Mask- and edge-aware tensor at one point.
    pub(crate) fn tensor_at(&self, iy: usize, ix: usize) -> Option<Tensor2> {
        let (u, v) = self.slices();
        let k = iy * self.nx + ix;
        if u[k].is_nan() {
            return None;
        }
        let (dudx, dvdx) =
            Self::derivative_pair_at(&self.cx, u, v, k, ix, self.nx, 1, self.margin)?;
        let (dudy, dvdy) =
            Self::derivative_pair_at(&self.cy, u, v, k, iy, self.ny, self.nx, self.margin)?;
        Some(Tensor2([[dudx, dudy], [dvdx, dvdy]]))
    }

    /// Out-of-plane vorticity `∂v/∂x − ∂u/∂y` at one point: exactly the value (and the `None`)
    /// that [`Self::tensor_at`] gives, from two derivatives instead of four (the region sums of
    /// a candidate's sense need only these). `None` agrees because the mask is shared: a
    /// masked vector is NaN in every component ([`PlaneField`]), so a derivative of `u` exists
    /// along an axis exactly when that of `v` does.
    pub(crate) fn vorticity_at(&self, iy: usize, ix: usize) -> Option<f64> {
        let (u, v) = self.slices();
        let k = iy * self.nx + ix;
        if u[k].is_nan() {
            return None;
        }
        Some(self.along_x(v, k, ix)? - self.along_y(u, k, iy)?)
    }

    /// ∂/∂x of `data` at flat index `k` (column `ix`), the centre known to be valid.
    #[inline]
    fn along_x(&self, data: &[f64], k: usize, ix: usize) -> Option<f64> {
        Self::derivative_at(&self.cx, data, k, ix, self.nx, 1, self.margin)
    }

    /// ∂/∂y of `data` at flat index `k` (row `iy`), the centre known to be valid.
    #[inline]
    fn along_y(&self, data: &[f64], k: usize, iy: usize) -> Option<f64> {
        Self::derivative_at(&self.cy, data, k, iy, self.ny, self.nx, self.margin)
    }

    /// The derivative along one axis (position `i` of `n`, neighbours `stride` apart): the
    /// interior stencil read without checks where it lies inside the grid and holds no masked
    /// sample (most points, also those that need the checked path on the other axis only),
    /// else the mask- and edge-aware [`AxisCoeffs::derivative`]. Identical bits either way:
    /// with every stencil sample present the checked path evaluates the same interior formula.
    #[inline(always)]
    fn derivative_at(
        c: &AxisCoeffs,
        data: &[f64],
        k: usize,
        i: usize,
        n: usize,
        stride: usize,
        margin: usize,
    ) -> Option<f64> {
        if i >= margin && i + margin < n {
            let d = c.interior(|o| data[(k as isize + o * stride as isize) as usize]);
            // Non-finite: a masked sample in the stencil.
            if d.is_finite() {
                return Some(d);
            }
        }
        c.derivative(line_get(data, k, i, n, stride))
    }

    /// [`Self::derivative_at`] of `u` and of `v` along one axis. The mask is shared (a masked
    /// vector is NaN in every component, [`PlaneField`]), so both take the same stencil: it is
    /// chosen once, from `u`, and applied to both (the same formulas, so the same bits as two
    /// separate calls).
    #[inline(always)]
    #[allow(clippy::too_many_arguments)]
    fn derivative_pair_at(
        c: &AxisCoeffs,
        u: &[f64],
        v: &[f64],
        k: usize,
        i: usize,
        n: usize,
        stride: usize,
        margin: usize,
    ) -> Option<(f64, f64)> {
        let at = |d: &[f64], o: isize| d[(k as isize + o * stride as isize) as usize];
        if i >= margin && i + margin < n {
            let du = c.interior(|o| at(u, o));
            // Non-finite: a masked sample in the stencil.
            if du.is_finite() {
                return Some((du, c.interior(|o| at(v, o))));
            }
        }
        let has = |o: isize| {
            let j = i as isize + o;
            j >= 0 && j < n as isize && !at(u, o).is_nan()
        };
        let stencil = c.stencil(has)?;
        Some((
            c.apply(stencil, |o| at(u, o)),
            c.apply(stencil, |o| at(v, o)),
        ))
    }

    /// Fills `buf` (four rows of length nx: ∂u/∂x, ∂u/∂y, ∂v/∂x, ∂v/∂y) with the tensor of row
    /// `iy`; all four are NaN where it is not computed. Interior runs use the vectorised
    /// stencils; points whose result is not finite (a masked neighbour) and points near the
    /// edges take the checked fallback path.
    pub(crate) fn row_tensors(&self, iy: usize, buf: &mut [Vec<f64>; 4]) {
        let (u, v) = self.slices();
        let (nx, m) = (self.nx, self.margin);
        let interior_row = iy >= m && iy + m < self.ny;
        let (lo, hi) = if interior_row && nx > 2 * m {
            (m, nx - m)
        } else {
            (0, 0)
        };
        let row0 = iy * nx;
        if hi > lo {
            let start = row0 + lo;
            let [b0, b1, b2, b3] = buf;
            super::stencil_run(u, start, 1, &self.cx, &mut b0[lo..hi]);
            super::stencil_run(u, start, nx, &self.cy, &mut b1[lo..hi]);
            super::stencil_run(v, start, 1, &self.cx, &mut b2[lo..hi]);
            super::stencil_run(v, start, nx, &self.cy, &mut b3[lo..hi]);
        }
        let put = |buf: &mut [Vec<f64>; 4], ix: usize, t: Option<Tensor2>| {
            let t = t.map_or([f64::NAN; 4], |Tensor2(t)| {
                [t[0][0], t[0][1], t[1][0], t[1][1]]
            });
            for (b, x) in buf.iter_mut().zip(t) {
                b[ix] = x;
            }
        };
        for ix in (0..lo).chain(hi.max(lo)..nx) {
            put(buf, ix, self.tensor_at(iy, ix));
        }
        for ix in lo..hi {
            if u[row0 + ix].is_nan() {
                put(buf, ix, None);
            } else if !(buf[0][ix].is_finite()
                && buf[1][ix].is_finite()
                && buf[2][ix].is_finite()
                && buf[3][ix].is_finite())
            {
                put(buf, ix, self.tensor_at(iy, ix));
            }
        }
    }

    /// Fused row of [`map_plane`]: vectorised stencils and `f` over the interior run with a
    /// branch-free validity select, then the checked path for edges and for interior points
    /// whose stencil touched a masked vector.
    #[inline]
    pub(crate) fn map_row<F: Fn(&Tensor2) -> f64>(&self, iy: usize, row: &mut [f64], f: &F) {
        let (u, v) = self.slices();
        let (nx, m) = (self.nx, self.margin);
        let interior_row = iy >= m && iy + m < self.ny;
        let (lo, hi) = if interior_row && nx > 2 * m {
            (m, nx - m)
        } else {
            (0, 0)
        };
        let row0 = iy * nx;
        let slow = |ix: usize| self.tensor_at(iy, ix).map_or(f64::NAN, |t| f(&t));
        if hi > lo {
            let start = row0 + lo;
            let n = hi - lo;
            let centre = &u[start..start + n];
            let out = &mut row[lo..hi];
            if self.cx.scheme == GradientScheme::Central2 {
                // Fully fused: stencils read straight from the input rows, no buffers.
                let s = |d, o: isize| win(d, start as isize + o, n);
                let (ux0, ux1, vx0, vx1) = (s(u, -1), s(u, 1), s(v, -1), s(v, 1));
                let sy = nx as isize;
                let (uy0, uy1, vy0, vy1) = (s(u, -sy), s(u, sy), s(v, -sy), s(v, sy));
                let (cx, cy) = (self.cx.c2, self.cy.c2);
                for k in 0..n {
                    let t = Tensor2([
                        [(ux1[k] - ux0[k]) * cx, (uy1[k] - uy0[k]) * cy],
                        [(vx1[k] - vx0[k]) * cx, (vy1[k] - vy0[k]) * cy],
                    ]);
                    let a = &t.0;
                    let ok =
                        !centre[k].is_nan() && (a[0][0] + a[0][1] + a[1][0] + a[1][1]).is_finite();
                    let val = f(&t);
                    out[k] = poison_unless(ok, val);
                }
            } else {
                // Five-point schemes: (α(f₂ − f₋₂) + β(f₁ − f₋₁))·c, bit-identical to
                // `AxisCoeffs::interior` (α = −1, β = 8 for Central4; α = 2, β = 1 for LS).
                let (al, be, cx, cy) = match self.cx.scheme {
                    GradientScheme::Central4 => (-1.0, 8.0, self.cx.c4, self.cy.c4),
                    _ => (2.0, 1.0, self.cx.ls, self.cy.ls),
                };
                let sy = nx as isize;
                let st = |d, o: isize| {
                    [
                        win(d, start as isize - 2 * o, n),
                        win(d, start as isize - o, n),
                        win(d, start as isize + o, n),
                        win(d, start as isize + 2 * o, n),
                    ]
                };
                let (ux, uy, vx, vy) = (st(u, 1), st(u, sy), st(v, 1), st(v, sy));
                for k in 0..n {
                    let d = |s: &[&[f64]; 4], c: f64| {
                        (al * (s[3][k] - s[0][k]) + be * (s[2][k] - s[1][k])) * c
                    };
                    let t = Tensor2([[d(&ux, cx), d(&uy, cy)], [d(&vx, cx), d(&vy, cy)]]);
                    let a = &t.0;
                    let ok =
                        !centre[k].is_nan() & (a[0][0] + a[0][1] + a[1][0] + a[1][1]).is_finite();
                    let val = f(&t);
                    out[k] = poison_unless(ok, val);
                }
            }
            for k in 0..n {
                if out[k].is_nan() && !centre[k].is_nan() {
                    out[k] = slow(lo + k);
                }
            }
        }
        for ix in (0..lo).chain(hi.max(lo)..nx) {
            row[ix] = slow(ix);
        }
    }

    pub(crate) fn row_buffers(&self) -> [Vec<f64>; 4] {
        std::array::from_fn(|_| vec![f64::NAN; self.nx])
    }
}

/// The in-plane gradient tensor of `field`, materialised as four arrays.
///
/// Errors: [`DetectError::AxisTooShort`] when an axis has fewer than 2 points.
pub fn plane_gradient(
    field: &PlaneField,
    scheme: GradientScheme,
    edge: EdgeOrder,
) -> Result<PlaneGradient, DetectError> {
    let ctx = PlaneCtx::new(field, scheme, edge)?;
    let shape = (ctx.ny, ctx.nx);
    let mut g = PlaneGradient {
        dudx: Array2::from_elem(shape, f64::NAN),
        dudy: Array2::from_elem(shape, f64::NAN),
        dvdx: Array2::from_elem(shape, f64::NAN),
        dvdy: Array2::from_elem(shape, f64::NAN),
    };
    Zip::indexed(g.dudx.rows_mut())
        .and(g.dudy.rows_mut())
        .and(g.dvdx.rows_mut())
        .and(g.dvdy.rows_mut())
        .par_for_each(|iy, mut a, mut b, mut c, mut d| {
            let mut buf = ctx.row_buffers();
            ctx.row_tensors(iy, &mut buf);
            for (dst, src) in [&mut a, &mut b, &mut c, &mut d].into_iter().zip(&buf) {
                for (x, &y) in dst.iter_mut().zip(src) {
                    *x = y;
                }
            }
        });
    Ok(g)
}

/// The tensor at one point (`None` where masked or no stencil is possible).
pub fn plane_tensor_at(
    field: &PlaneField,
    scheme: GradientScheme,
    edge: EdgeOrder,
    iy: usize,
    ix: usize,
) -> Result<Option<Tensor2>, DetectError> {
    let ctx = PlaneCtx::new(field, scheme, edge)?;
    Ok(ctx.tensor_at(iy, ix))
}

/// Fused path: `f` applied to the gradient tensor at every point, without storing the tensor
/// field. Output indexed `[iy, ix]`; NaN where the tensor could not be computed. Rows are
/// processed in parallel; every value depends only on its own stencil, so the result does not
/// depend on the number of threads.
pub fn map_plane<F>(
    field: &PlaneField,
    scheme: GradientScheme,
    edge: EdgeOrder,
    f: F,
) -> Result<Array2<f64>, DetectError>
where
    F: Fn(&Tensor2) -> f64 + Sync,
{
    let g = field.grid();
    let (nx, ny) = (g.x().len(), g.y().len());
    // Zeroed allocation (lazily mapped pages, no fill pass); every element is written.
    let mut out = Array2::from_shape_vec((ny, nx), vec![0.0; ny * nx]).expect("shape matches");
    map_plane_into(field, scheme, edge, f, &mut out)?;
    Ok(out)
}

/// [`map_plane`] writing into a caller-provided array of the field's shape `[ny, nx]`, so that
/// a caller processing many snapshots reuses one output buffer (no allocation, no first-touch
/// page faults per snapshot). Every element is overwritten.
///
/// Errors: [`DetectError::AxisTooShort`]; [`DetectError::InvalidSetting`] for a wrong shape.
pub fn map_plane_into<F>(
    field: &PlaneField,
    scheme: GradientScheme,
    edge: EdgeOrder,
    f: F,
    out: &mut Array2<f64>,
) -> Result<(), DetectError>
where
    F: Fn(&Tensor2) -> f64 + Sync,
{
    let ctx = PlaneCtx::new(field, scheme, edge)?;
    let nx = ctx.nx;
    if out.dim() != (ctx.ny, nx) {
        return Err(DetectError::InvalidSetting {
            name: "output shape",
            value: format!("{:?}", out.dim()),
            reason: "must equal the field's [ny, nx]",
        });
    }
    let run = |slice: &mut [f64]| {
        slice
            .par_chunks_mut(nx)
            .enumerate()
            .for_each(|(iy, row)| ctx.map_row(iy, row, &f))
    };
    match out.as_slice_mut() {
        Some(s) => run(s),
        None => {
            let mut tmp = vec![0.0; ctx.ny * nx];
            run(&mut tmp);
            out.assign(
                &ndarray::ArrayView2::from_shape((ctx.ny, nx), &tmp).expect("shape matches"),
            );
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use vortcat_field::{Axis, Grid, Units};

    fn field(
        nx: usize,
        ny: usize,
        dx: f64,
        dy: f64,
        fu: impl Fn(f64, f64) -> f64,
        fv: impl Fn(f64, f64) -> f64,
    ) -> PlaneField {
        let grid = Grid::plane(
            Axis::new("x", nx, 0.3, dx).unwrap(),
            Axis::new("y", ny, -0.2, dy).unwrap(),
            Units::default(),
        );
        let u = Array2::from_shape_fn((ny, nx), |(iy, ix)| {
            fu(
                grid.x().coordinate(ix as f64),
                grid.y().coordinate(iy as f64),
            )
        });
        let v = Array2::from_shape_fn((ny, nx), |(iy, ix)| {
            fv(
                grid.x().coordinate(ix as f64),
                grid.y().coordinate(iy as f64),
            )
        });
        PlaneField::new(grid, u, v, None, None).unwrap()
    }

    #[test]
    fn linear_field_is_differentiated_exactly_everywhere_with_every_scheme() {
        // Every stencil (interior, one-sided) is exact on linear data (Taylor expansion);
        // tolerance covers rounding of O(1) values divided by spacings of 0.1.
        let f = field(
            9,
            7,
            0.1,
            -0.25,
            |x, y| 2.0 * x - 3.0 * y + 1.0,
            |x, y| 0.5 * x + 4.0 * y,
        );
        for s in GradientScheme::ALL {
            for e in [EdgeOrder::First, EdgeOrder::Second] {
                let g = plane_gradient(&f, s, e).unwrap();
                for iy in 0..7 {
                    for ix in 0..9 {
                        let t = g.at(iy, ix).unwrap().0;
                        assert_relative_eq!(t[0][0], 2.0, epsilon = 1e-12);
                        assert_relative_eq!(t[0][1], -3.0, epsilon = 1e-12);
                        assert_relative_eq!(t[1][0], 0.5, epsilon = 1e-12);
                        assert_relative_eq!(t[1][1], 4.0, epsilon = 1e-12);
                    }
                }
            }
        }
    }

    #[test]
    fn fused_and_materialised_paths_agree_and_masks_never_leak_nan() {
        let mut f = field(12, 10, 0.5, 0.5, |x, y| (x * y).sin(), |x, y| (x - y).cos());
        let mut u = f.u().clone();
        u[[4, 5]] = f64::NAN;
        u[[0, 3]] = f64::NAN;
        f = PlaneField::new(f.grid().clone(), u, f.v().clone(), None, None).unwrap();
        for s in GradientScheme::ALL {
            let g = plane_gradient(&f, s, EdgeOrder::Second).unwrap();
            let m = map_plane(&f, s, EdgeOrder::Second, |t| t.0[1][0] - t.0[0][1]).unwrap();
            for ((iy, ix), &val) in m.indexed_iter() {
                match g.at(iy, ix) {
                    // Same arithmetic in both paths: identical bits expected; 1e-15 for safety.
                    Some(t) => assert_relative_eq!(val, t.0[1][0] - t.0[0][1], epsilon = 1e-15),
                    None => assert!(val.is_nan()),
                }
                // Every valid vector here has at least one usable neighbour on each axis.
                assert_eq!(val.is_nan(), !f.valid()[[iy, ix]], "at {iy},{ix}");
            }
        }
    }

    #[test]
    fn point_tensor_and_vorticity_equal_the_checked_path_bit_for_bit() {
        // `tensor_at` (the fallback of the fused kernels) reads complete interior stencils
        // without checks, and the sense of a candidate sums `vorticity_at`: both must equal
        // the checked path exactly, `None` included, next to masks, at edges and for isolated
        // vectors.
        let mut f = field(
            14,
            11,
            0.4,
            -0.3,
            |x, y| (x * y).sin() + x,
            |x, y| (x - y).cos(),
        );
        let mut u = f.u().clone();
        for (iy, ix) in [(4, 5), (0, 3), (6, 1), (6, 2), (9, 10), (2, 12)] {
            u[[iy, ix]] = f64::NAN;
        }
        // An isolated valid vector: no neighbour along x, so no tensor there.
        for ix in [7, 9] {
            u[[8, ix]] = f64::NAN;
        }
        f = PlaneField::new(f.grid().clone(), u, f.v().clone(), None, None).unwrap();
        let mut nones = 0;
        for s in GradientScheme::ALL {
            for e in [EdgeOrder::First, EdgeOrder::Second] {
                let ctx = PlaneCtx::new(&f, s, e).unwrap();
                let (u, v) = ctx.slices();
                for iy in 0..11 {
                    for ix in 0..14 {
                        // Reference: the checked path for every derivative, as `tensor_at`
                        // was written before the unchecked interior reads.
                        let k = iy * 14 + ix;
                        let checked = (!u[k].is_nan())
                            .then(|| {
                                let dx = |d| ctx.cx.derivative(line_get(d, k, ix, 14, 1));
                                let dy = |d| ctx.cy.derivative(line_get(d, k, iy, 11, 14));
                                Some(Tensor2([[dx(u)?, dy(u)?], [dx(v)?, dy(v)?]]))
                            })
                            .flatten();
                        let bits = |t: Option<Tensor2>| t.map(|t| t.0.map(|r| r.map(f64::to_bits)));
                        let tensor = ctx.tensor_at(iy, ix);
                        assert_eq!(bits(tensor), bits(checked), "{s:?} {e:?} at {iy},{ix}");
                        let from_tensor = checked.map(|t| t.0[1][0] - t.0[0][1]);
                        let direct = ctx.vorticity_at(iy, ix);
                        assert_eq!(
                            direct.map(f64::to_bits),
                            from_tensor.map(f64::to_bits),
                            "{s:?} {e:?} at {iy},{ix}"
                        );
                        nones += usize::from(direct.is_none());
                    }
                }
            }
        }
        // Per scheme/edge pair: the 8 masked vectors, the isolated one at (8, 8), and three edge
        // vectors whose only neighbour on one axis is masked: (6, 0), (2, 13), (10, 10).
        assert_eq!(nones, 6 * 12);
    }

    #[test]
    fn one_point_axis_is_an_error() {
        let f = field(5, 1, 1.0, 1.0, |x, _| x, |_, y| y);
        assert_eq!(
            plane_gradient(&f, GradientScheme::Central2, EdgeOrder::Second).unwrap_err(),
            DetectError::AxisTooShort {
                axis: "y",
                len: 1,
                needed: 2
            }
        );
    }
}
