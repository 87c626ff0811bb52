//! Slabs: a block of z-planes of the volume with halos, as a [`VolumeField`] of its own.
//!
//! A slab holds the *core* planes it is responsible for plus `halo` planes on each side (read
//! across the periodic face when z is periodic, cut at the domain edge otherwise) and, along a
//! periodic x or y axis, `pad` wrapped copies on each side. Every derivative stencil of a core
//! point then sees exactly the values it would see in the whole volume, and every sample of a
//! cross-section window lies in the slab, so results do not depend on the slab size.

use std::ops::Range;

use ndarray::Array3;
use vortcat_field::{Axis, FieldError, Grid, VolumeField};

use crate::error::TubeError;
use crate::source::VolumeSource;

/// A slab of the volume with its halo.
pub(crate) struct Slab {
    /// Global (unwrapped) z index of local plane 0.
    pub z_lo: isize,
    /// Pads along x and y (0 on non-periodic axes).
    pub pad: [usize; 2],
    /// Local sizes `[nx, ny, nz]`.
    pub n: [usize; 3],
    /// Global sizes `[nx, ny, nz]`.
    pub global: [usize; 3],
    /// Periodic axes `[x, y, z]`.
    pub periodic: [bool; 3],
    /// The slab's field; `None` when no vector of the slab is valid.
    pub field: Option<VolumeField>,
}

impl Slab {
    /// Reads core planes `core` with `halo` planes each side and `pad` columns each side of a
    /// periodic x or y axis.
    pub fn load(
        source: &mut dyn VolumeSource,
        core: Range<usize>,
        halo: usize,
        pad: usize,
        periodic: [bool; 3],
    ) -> Result<Self, TubeError> {
        let grid = source.grid().clone();
        let z = *grid.z().ok_or(TubeError::NotAVolume { found: 2 })?;
        let (gx, gy) = (*grid.x(), *grid.y());
        let (nx, ny, nz) = (gx.len(), gy.len(), z.len());
        let (lo, hi) = if periodic[2] {
            (
                core.start as isize - halo as isize,
                (core.end + halo) as isize,
            )
        } else {
            (
                core.start.saturating_sub(halo) as isize,
                (core.end + halo).min(nz) as isize,
            )
        };
        let px = if periodic[0] { pad } else { 0 };
        let py = if periodic[1] { pad } else { 0 };
        let (nxl, nyl, nzl) = (nx + 2 * px, ny + 2 * py, (hi - lo) as usize);
        // Runs of consecutive wrapped planes, read one block each.
        let wrapped: Vec<usize> = (lo..hi)
            .map(|g| g.rem_euclid(nz as isize) as usize)
            .collect();
        let contiguous = wrapped.windows(2).all(|p| p[1] == p[0] + 1);
        let (mut u, mut v, mut w, mut flagged, mut start) = if contiguous && px == 0 && py == 0 {
            // No wrap and no pad: the block read is the slab (no copy, no second allocation,
            // which for a large slab also saves its page faults).
            let planes = source.read_planes(wrapped[0]..wrapped[wrapped.len() - 1] + 1)?;
            (planes.u, planes.v, planes.w, planes.flagged, wrapped.len())
        } else {
            (
                Array3::<f32>::zeros((nzl, nyl, nxl)),
                Array3::<f32>::zeros((nzl, nyl, nxl)),
                Array3::<f32>::zeros((nzl, nyl, nxl)),
                None,
                0,
            )
        };
        while start < wrapped.len() {
            let mut end = start + 1;
            while end < wrapped.len() && wrapped[end] == wrapped[end - 1] + 1 {
                end += 1;
            }
            let planes = source.read_planes(wrapped[start]..wrapped[end - 1] + 1)?;
            // Row by row: each destination row is the source row at offset `px`, with the
            // `px` wrapped columns on each side copied from the row's other end.
            let source_rows = |ly: usize| (ly as isize - py as isize).rem_euclid(ny as isize);
            for (k, lz) in (start..end).enumerate() {
                for ly in 0..nyl {
                    let sy = source_rows(ly) as usize;
                    for (dst, src) in [
                        (&mut u, &planes.u),
                        (&mut v, &planes.v),
                        (&mut w, &planes.w),
                    ] {
                        let from = src.slice(ndarray::s![k, sy, ..]);
                        let mut to = dst.slice_mut(ndarray::s![lz, ly, ..]);
                        if px <= nx {
                            to.slice_mut(ndarray::s![px..px + nx]).assign(&from);
                            to.slice_mut(ndarray::s![..px])
                                .assign(&from.slice(ndarray::s![nx - px..]));
                            to.slice_mut(ndarray::s![px + nx..])
                                .assign(&from.slice(ndarray::s![..px]));
                        } else {
                            // A pad wider than the axis wraps more than once.
                            for (lx, t) in to.iter_mut().enumerate() {
                                *t = from
                                    [(lx as isize - px as isize).rem_euclid(nx as isize) as usize];
                            }
                        }
                    }
                    if let Some(f) = &planes.flagged {
                        for lx in 0..nxl {
                            let sx = (lx as isize - px as isize).rem_euclid(nx as isize) as usize;
                            if f[[k, sy, sx]] {
                                flagged.get_or_insert_with(|| {
                                    Array3::from_elem((nzl, nyl, nxl), false)
                                })[[lz, ly, lx]] = true;
                            }
                        }
                    }
                }
            }
            start = end;
        }
        let local = Grid::volume(
            Axis::new("x", nxl, gx.coordinate(-(px as f64)), gx.spacing())?,
            Axis::new("y", nyl, gy.coordinate(-(py as f64)), gy.spacing())?,
            Axis::new("z", nzl, z.coordinate(lo as f64), z.spacing())?,
            grid.units().clone(),
        );
        let field = match VolumeField::new(local, u, v, w, flagged.as_ref()) {
            Ok(f) => Some(f),
            Err(FieldError::NoValidVectors) => None,
            Err(e) => return Err(e.into()),
        };
        Ok(Self {
            z_lo: lo,
            pad: [px, py],
            n: [nxl, nyl, nzl],
            global: [nx, ny, nz],
            periodic,
            field,
        })
    }

    /// Local `[iz, iy, ix]` of a global grid point of the core.
    pub fn local(&self, gz: usize, gy: usize, gx: usize) -> [usize; 3] {
        [
            (gz as isize - self.z_lo) as usize,
            gy + self.pad[1],
            gx + self.pad[0],
        ]
    }

    /// The local cell `[x, y, z]` (lower corner) and the fractions within it of a global
    /// (unwrapped) fractional index, or `None` when the point lies outside the data the slab
    /// holds (outside a non-periodic domain). The fraction is kept apart from the index so
    /// that interpolation weights do not depend on where the slab starts.
    pub fn locate(&self, f: [f64; 3]) -> Option<([usize; 3], [f64; 3])> {
        // Integer and fractional parts are split first and the integer part is wrapped in
        // integer arithmetic, so the interpolation weights are bit-identical whichever slab
        // (and halo origin) holds the point.
        let mut cell = [0usize; 3];
        let mut frac = [0.0; 3];
        for k in 0..3 {
            if !f[k].is_finite() {
                return None;
            }
            let fi = f[k].floor();
            let t = f[k] - fi;
            let i = fi as i64;
            let n = self.global[k] as i64;
            let li = match k {
                2 => {
                    let d = i - self.z_lo as i64;
                    if self.periodic[2] {
                        // The image nearest the middle of the slab: the core sits there, and a
                        // slab taller than the box holds some planes twice.
                        let mid = (self.n[2] as i64 - 1) / 2;
                        let mut off = (d - mid).rem_euclid(n);
                        if off >= (n + 1) / 2 {
                            off -= n;
                        }
                        mid + off
                    } else {
                        d
                    }
                }
                _ => {
                    if self.periodic[k] {
                        i.rem_euclid(n) + self.pad[k] as i64
                    } else {
                        i
                    }
                }
            };
            let hi = if k < 2 && !self.periodic[k] {
                self.global[k] as i64 - 1
            } else {
                self.n[k] as i64 - 1
            };
            if li < 0 || li > hi || (li == hi && t > 0.0) || hi < 1 {
                return None;
            }
            (cell[k], frac[k]) = if li == hi {
                (li as usize - 1, 1.0)
            } else {
                (li as usize, t)
            };
        }
        Some((cell, frac))
    }
}

/// The core ranges of a volume of `nz` planes cut into slabs of `planes` planes.
pub(crate) fn cores(nz: usize, planes: usize) -> Vec<Range<usize>> {
    (0..nz)
        .step_by(planes.max(1))
        .map(|a| a..(a + planes).min(nz))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::source::MemoryVolume;
    use vortcat_field::Units;

    fn field(n: [usize; 3]) -> VolumeField {
        let grid = Grid::volume(
            Axis::new("x", n[0], 0.0, 1.0).unwrap(),
            Axis::new("y", n[1], 0.0, 1.0).unwrap(),
            Axis::new("z", n[2], 0.0, 1.0).unwrap(),
            Units::default(),
        );
        let a = Array3::from_shape_fn((n[2], n[1], n[0]), |(z, y, x)| {
            (z * 100 + y * 10 + x) as f32
        });
        VolumeField::new(grid, a.clone(), a.clone(), a, None).unwrap()
    }

    #[test]
    fn cores_cover_the_volume_once() {
        assert_eq!(cores(10, 4), vec![0..4, 4..8, 8..10]);
        assert_eq!(cores(3, 8), vec![0..3]);
    }

    #[test]
    fn halos_wrap_on_periodic_axes_and_stop_at_edges() {
        let f = field([4, 3, 6]);
        let mut src = MemoryVolume(&f);
        let s = Slab::load(&mut src, 0..2, 2, 1, [true, false, true]).unwrap();
        // z planes −2..4 → wrapped 4, 5, 0, 1, 2, 3; x padded by one column each side.
        assert_eq!(s.n, [6, 3, 6]);
        let u = s.field.as_ref().unwrap().u();
        // Exactly representable small integers: exact comparison via bits.
        assert_eq!(u[[0, 1, 0]].to_bits(), (410.0_f32 + 3.0).to_bits());
        assert_eq!(u[[2, 2, 1]].to_bits(), 20.0_f32.to_bits());
        assert_eq!(s.local(0, 2, 0), [2, 2, 1]);
        // Non-periodic z: no halo below plane 0.
        let s = Slab::load(&mut src, 0..2, 2, 1, [false; 3]).unwrap();
        assert_eq!((s.z_lo, s.n), (0, [4, 3, 4]));
        assert!(s.locate([3.5, 1.0, 1.0]).is_none());
        let (c, t) = s.locate([2.5, 1.0, 3.0]).unwrap();
        assert_eq!(c, [2, 1, 2]);
        // Exact halves and the upper edge (cell 2, fraction 1): exact in binary.
        assert!((t[0] - 0.5).abs() < 1e-15 && (t[2] - 1.0).abs() < 1e-15);
    }
}
