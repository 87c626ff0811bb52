//! The full 3×3 velocity-gradient tensor of a [`VolumeField`], computed on the fly per point:
//! no 9-component tensor field of the volume is ever stored. [`map_volume`] applies a point
//! function slab by slab (one z-slab per rayon task) and stores only its scalar result.

use ndarray::{Array3, CowArray, Ix3};
use rayon::prelude::*;
use vortcat_field::VolumeField;

use super::{check_axis, line_get, AxisCoeffs, EdgeOrder, GradientScheme};
use crate::error::DetectError;
use crate::tensor::Tensor3;

/// Shared state of one volume computation.
pub(crate) struct VolumeCtx<'a> {
    c: [CowArray<'a, f32, Ix3>; 3],
    pub(crate) n: [usize; 3],
    coeffs: [AxisCoeffs; 3],
    margin: usize,
}

impl<'a> VolumeCtx<'a> {
    pub(crate) fn new(
        field: &'a VolumeField,
        scheme: GradientScheme,
        edge: EdgeOrder,
    ) -> Result<Self, DetectError> {
        let g = field.grid();
        let z = g.z().expect("a VolumeField has a z axis");
        check_axis("x", g.x().len())?;
        check_axis("y", g.y().len())?;
        check_axis("z", z.len())?;
        Ok(Self {
            c: [
                field.u().as_standard_layout(),
                field.v().as_standard_layout(),
                field.w().as_standard_layout(),
            ],
            // Order (x, y, z).
            n: [g.x().len(), g.y().len(), z.len()],
            coeffs: [
                AxisCoeffs::new(g.x().spacing(), scheme, edge),
                AxisCoeffs::new(g.y().spacing(), scheme, edge),
                AxisCoeffs::new(z.spacing(), scheme, edge),
            ],
            margin: scheme.half_width(),
        })
    }

    #[inline(always)]
    fn comp(&self, i: usize) -> &[f32] {
        self.c[i].as_slice().expect("standard layout")
    }

    /// Mask- and edge-aware tensor at `[iz, iy, ix]`.
    pub(crate) fn tensor_at(&self, iz: usize, iy: usize, ix: usize) -> Option<Tensor3> {
        let [nx, ny, nz] = self.n;
        let k = (iz * ny + iy) * nx + ix;
        if self.comp(0)[k].is_nan() {
            return None;
        }
        let idx = [ix, iy, iz];
        let strides = [1, nx, nx * ny];
        let mut a = [[0.0; 3]; 3];
        for (i, row) in a.iter_mut().enumerate() {
            let data = self.comp(i);
            for (j, out) in row.iter_mut().enumerate() {
                let n = [nx, ny, nz][j];
                *out = self.coeffs[j].derivative(line_get(data, k, idx[j], n, strides[j]))?;
            }
        }
        Some(Tensor3(a))
    }

    /// Fused row of [`map_volume_kernel`]: vectorised stencils over the interior run, the
    /// kernel over the run, a validity select, then the checked path for edges and for points
    /// whose stencil touched a masked vector.
    #[inline]
    pub(crate) fn map_row<K: VolumeKernel>(
        &self,
        iz: usize,
        iy: usize,
        buf: &mut RowBuffers,
        row: &mut [f32],
        kernel: &K,
    ) {
        let [nx, ny, _] = self.n;
        let m = self.margin;
        // x-interior run of every row; along y and z each row has one stencil (the edge
        // formula near the y/z boundaries), so the whole run is vectorised too.
        let (lo, hi) = if nx > 2 * m { (m, nx - m) } else { (0, 0) };
        let row0 = (iz * ny + iy) * nx;
        let slow = |ix: usize| {
            self.tensor_at(iz, iy, ix)
                .map_or(f32::NAN, |t| kernel.point(&t) as f32)
        };
        if hi > lo {
            let n = hi - lo;
            let idx = [0, iy, iz];
            let strides = [1, nx, nx * ny];
            for i in 0..3 {
                let data = self.comp(i);
                super::stencil_run(data, row0 + lo, 1, &self.coeffs[0], &mut buf.d[3 * i][..n]);
                for j in 1..3 {
                    self.coeffs[j]
                        .run_at_index(
                            idx[j],
                            self.n[j],
                            data,
                            row0 + lo,
                            strides[j],
                            &mut buf.d[3 * i + j][..n],
                        )
                        .expect("axes have at least 2 points");
                }
            }
            let d: [&[f64]; 9] = std::array::from_fn(|c| &buf.d[c][..n]);
            let vals = &mut buf.out[..n];
            kernel.run(&d, &mut buf.scratch, vals);
            let centre = &self.comp(0)[row0 + lo..row0 + hi];
            let out = &mut row[lo..hi];
            for k in 0..n {
                let sum = d[0][k]
                    + d[1][k]
                    + d[2][k]
                    + d[3][k]
                    + d[4][k]
                    + d[5][k]
                    + d[6][k]
                    + d[7][k]
                    + d[8][k];
                out[k] = if !centre[k].is_nan() && sum.is_finite() {
                    vals[k] as f32
                } else {
                    f32::NAN
                };
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

    pub(crate) fn row_buffers(&self) -> RowBuffers {
        let nx = self.n[0];
        RowBuffers {
            d: std::array::from_fn(|_| vec![f64::NAN; nx]),
            scratch: std::array::from_fn(|_| vec![0.0; nx]),
            out: vec![0.0; nx],
        }
    }
}

/// Per-thread row buffers (a few rows, never a field).
pub(crate) struct RowBuffers {
    d: [Vec<f64>; 9],
    scratch: [Vec<f64>; 2],
    out: Vec<f64>,
}

/// The tensor at one point `[iz, iy, ix]` (`None` where masked or no stencil is possible).
///
/// Errors: [`DetectError::AxisTooShort`] when an axis has fewer than 2 points.
pub fn volume_tensor_at(
    field: &VolumeField,
    scheme: GradientScheme,
    edge: EdgeOrder,
    index: [usize; 3],
) -> Result<Option<Tensor3>, DetectError> {
    let ctx = VolumeCtx::new(field, scheme, edge)?;
    Ok(ctx.tensor_at(index[0], index[1], index[2]))
}

/// A point function of the gradient tensor that can also be evaluated over a run of points
/// from the nine derivative rows, so that its arithmetic vectorises (used by the λ2 fast path).
pub trait VolumeKernel: Sync {
    /// The value at one point.
    fn point(&self, t: &Tensor3) -> f64;

    /// Values over a run: `d[3i + j][k]` is ∂uᵢ/∂xⱼ at point `k`; `scratch` holds two work rows
    /// of the same length. The default evaluates [`VolumeKernel::point`] per point.
    fn run(&self, d: &[&[f64]; 9], scratch: &mut [Vec<f64>; 2], out: &mut [f64]) {
        let _ = scratch;
        for (k, o) in out.iter_mut().enumerate() {
            let t = Tensor3(std::array::from_fn(|i| {
                std::array::from_fn(|j| d[3 * i + j][k])
            }));
            *o = self.point(&t);
        }
    }
}

/// A closure as a [`VolumeKernel`] evaluated point by point.
struct PointKernel<F>(F);

impl<F: Fn(&Tensor3) -> f64 + Sync> VolumeKernel for PointKernel<F> {
    #[inline]
    fn point(&self, t: &Tensor3) -> f64 {
        (self.0)(t)
    }
}

/// Fused path: `f` applied to the gradient tensor at every point, stored as `f32` (the precision
/// of the input volume; arithmetic is `f64`). Indexed `[iz, iy, ix]`; NaN where the tensor could
/// not be computed. Memory: the output field plus a few rows per thread. z-slabs run in
/// parallel; results do not depend on the number of threads.
pub fn map_volume<F>(
    field: &VolumeField,
    scheme: GradientScheme,
    edge: EdgeOrder,
    f: F,
) -> Result<Array3<f32>, DetectError>
where
    F: Fn(&Tensor3) -> f64 + Sync,
{
    map_volume_kernel(field, scheme, edge, &PointKernel(f))
}

/// [`map_volume`] for a [`VolumeKernel`] (row-wise evaluation on interior runs).
pub fn map_volume_kernel<K: VolumeKernel>(
    field: &VolumeField,
    scheme: GradientScheme,
    edge: EdgeOrder,
    kernel: &K,
) -> Result<Array3<f32>, DetectError> {
    let g = field.grid();
    let (nx, ny, nz) = (g.x().len(), g.y().len(), g.z().map_or(1, |z| z.len()));
    // Zeroed allocation (lazily mapped pages, no fill pass); every element is written.
    let mut out =
        Array3::from_shape_vec((nz, ny, nx), vec![0.0_f32; nz * ny * nx]).expect("shape matches");
    map_volume_kernel_into(field, scheme, edge, kernel, &mut out)?;
    Ok(out)
}

/// [`map_volume_kernel`] writing into a caller-provided array of shape `[nz, ny, nx]` (reused
/// across snapshots: no allocation, no first-touch page faults). Every element is overwritten.
///
/// Errors: [`DetectError::AxisTooShort`]; [`DetectError::InvalidSetting`] for a wrong shape or
/// a non-contiguous output.
pub fn map_volume_kernel_into<K: VolumeKernel>(
    field: &VolumeField,
    scheme: GradientScheme,
    edge: EdgeOrder,
    kernel: &K,
    out: &mut Array3<f32>,
) -> Result<(), DetectError> {
    let ctx = VolumeCtx::new(field, scheme, edge)?;
    let [nx, ny, nz] = ctx.n;
    if out.dim() != (nz, ny, nx) {
        return Err(DetectError::InvalidSetting {
            name: "output shape",
            value: format!("{:?}", out.dim()),
            reason: "must equal the field's [nz, ny, nx]",
        });
    }
    let slice = out.as_slice_mut().ok_or(DetectError::InvalidSetting {
        name: "output layout",
        value: "non-contiguous".into(),
        reason: "the output must be a standard-layout (C-order) array",
    })?;
    slice.par_chunks_mut(nx * ny).enumerate().for_each_init(
        || ctx.row_buffers(),
        |buf, (iz, slab)| {
            for iy in 0..ny {
                ctx.map_row(iz, iy, buf, &mut slab[iy * nx..(iy + 1) * nx], kernel);
            }
        },
    );
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use vortcat_field::{Axis, Grid, Units};

    #[test]
    #[allow(clippy::needless_range_loop)]
    fn linear_volume_field_is_exact_and_fused_path_matches_point_path() {
        // u = A x with a fixed A: every stencil is exact on linear data (Taylor expansion).
        // Inputs are f32: tolerance 1e-4 relative to |A| ≈ 1 covers f32 rounding of values
        // of O(10) divided by spacings of O(0.5).
        let a = [[0.3, -1.2, 0.5], [0.7, -0.1, 0.2], [-0.4, 0.9, -0.2]];
        let (nx, ny, nz) = (7, 6, 5);
        let grid = Grid::volume(
            Axis::new("x", nx, 1.0, 0.5).unwrap(),
            Axis::new("y", ny, 2.0, -0.4).unwrap(),
            Axis::new("z", nz, -1.0, 0.6).unwrap(),
            Units::default(),
        );
        let comp = |i: usize| {
            Array3::from_shape_fn((nz, ny, nx), |(iz, iy, ix)| {
                let p = [
                    grid.x().coordinate(ix as f64),
                    grid.y().coordinate(iy as f64),
                    grid.z().unwrap().coordinate(iz as f64),
                ];
                (a[i][0] * p[0] + a[i][1] * p[1] + a[i][2] * p[2]) as f32
            })
        };
        let mut u = comp(0);
        u[[2, 3, 3]] = f32::NAN;
        let f = VolumeField::new(grid.clone(), u, comp(1), comp(2), None).unwrap();
        for s in GradientScheme::ALL {
            let m = map_volume(&f, s, EdgeOrder::Second, |t| t.0[2][1]).unwrap();
            for iz in 0..nz {
                for iy in 0..ny {
                    for ix in 0..nx {
                        let t = volume_tensor_at(&f, s, EdgeOrder::Second, [iz, iy, ix]).unwrap();
                        if (iz, iy, ix) == (2, 3, 3) {
                            assert!(t.is_none() && m[[iz, iy, ix]].is_nan());
                            continue;
                        }
                        let t = t.unwrap();
                        for i in 0..3 {
                            for j in 0..3 {
                                assert_relative_eq!(t.0[i][j], a[i][j], epsilon = 1e-4);
                            }
                        }
                        assert_relative_eq!(m[[iz, iy, ix]] as f64, a[2][1], epsilon = 1e-4);
                        // The vectorised row path and the checked point path use the same
                        // formulas (edge rows included): identical bits.
                        assert_eq!(
                            m[[iz, iy, ix]].to_bits(),
                            (t.0[2][1] as f32).to_bits(),
                            "at {iz},{iy},{ix}"
                        );
                    }
                }
            }
        }
    }
}
