//! Velocity-gradient tensors on uniform grids: finite-difference schemes, their mask-aware
//! fallbacks, and the plane ([`plane`]) and volume ([`volume`]) drivers.
//!
//! # Schemes
//! For a sample spacing `h` (the *signed* [`vortcat_field::Axis::spacing`], so that an axis whose
//! coordinate decreases with index still yields derivatives with respect to the physical
//! coordinate) and samples `f_k = f(x_0 + k h)`:
//!
//! | [`GradientScheme`] | interior stencil | truncation error | noise gain σ(f′)/σ(f)·h |
//! |---|---|---|---|
//! | `Central2` | `(f₁ − f₋₁) / 2h` | `h² f‴/6` | 0.71 |
//! | `Central4` | `(f₋₂ − 8f₋₁ + 8f₁ − f₂) / 12h` | `h⁴ f⁽⁵⁾/30` | 0.95 |
//! | `LeastSquares` | `(2f₂ + f₁ − f₋₁ − 2f₋₂) / 10h` | `17 h² f‴/30` | 0.32 |
//!
//! `Central4` is the Richardson-extrapolated central difference; `LeastSquares` is the
//! derivative of the least-squares straight line through five samples. Both appear, with the
//! noise and truncation trade-off above, in the chapter on differential estimates of
//! Raffel et al.; the least-squares operator is recommended there for noisy PIV data because it
//! divides the random error of the 2nd-order central difference by about 2.2 at the price of a
//! 3.4 times larger truncation error. (Noise gains are √Σw² of the stencil weights for
//! uncorrelated errors; truncation errors follow from Taylor expansion.)
//!
//! # Edges and masked vectors
//! A stencil needs its samples to exist (inside the grid) and to be valid (not masked; masked
//! vectors are NaN in every component, a guarantee of `vortcat-field` that this module relies
//! on). When a wide stencil cannot be used the point falls back, in order, to: the 2nd-order
//! central difference; a 2nd-order one-sided difference `(−3f₀ + 4f₁ − f₂)/2h` (or its mirror)
//! if [`EdgeOrder::Second`]; a 1st-order one-sided difference `(f₁ − f₀)/h` (or mirror). If
//! none is possible, or the point itself is masked, the derivative is *not computed*: the
//! tensor at that point is absent (`None`, or NaN in materialised arrays), never a guess. With
//! [`GradientScheme::Central2`] and no masked vectors this is exactly `numpy.gradient` with the
//! same `edge_order` (checked by `tests/python_crosscheck.rs`).
//!
//! # Reference
//! M. Raffel, C. E. Willert, S. T. Wereley & J. Kompenhans (2007). *Particle Image Velocimetry:
//! A Practical Guide*, 2nd ed., Springer, Berlin. Chapter on post-processing of PIV data,
//! section on differential estimates (finite-difference operators and their uncertainty).
//! See also J. M. Foucaut & M. Stanislas (2002), "Some considerations on the accuracy and
//! frequency response of some derivative filters applied to particle image velocimetry vector
//! fields", *Meas. Sci. Technol.* 13, 1058–1071.

use std::fmt;
use std::str::FromStr;

use crate::error::DetectError;

pub mod plane;
pub mod volume;

pub use plane::{map_plane, map_plane_into, plane_gradient, plane_tensor_at, PlaneGradient};
pub use volume::{
    map_volume, map_volume_kernel, map_volume_kernel_into, volume_tensor_at, VolumeKernel,
};

/// Finite-difference scheme for first derivatives on a uniform grid (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub enum GradientScheme {
    /// 2nd-order central difference, 3-point stencil. Name `central2`.
    Central2,
    /// 4th-order central difference (Richardson extrapolation), 5-point stencil. Name `central4`.
    Central4,
    /// Noise-robust least-squares 5-point operator (2nd order). Name `least-squares`. Default,
    /// because detection on PIV data is limited by measurement noise, not truncation error.
    #[default]
    LeastSquares,
}

impl GradientScheme {
    /// All schemes, in documentation order.
    pub const ALL: [GradientScheme; 3] = [
        GradientScheme::Central2,
        GradientScheme::Central4,
        GradientScheme::LeastSquares,
    ];

    /// The scheme's name as used in configuration files.
    pub fn name(self) -> &'static str {
        match self {
            GradientScheme::Central2 => "central2",
            GradientScheme::Central4 => "central4",
            GradientScheme::LeastSquares => "least-squares",
        }
    }

    /// How many samples the interior stencil reaches on each side (1 or 2).
    pub fn half_width(self) -> usize {
        match self {
            GradientScheme::Central2 => 1,
            GradientScheme::Central4 | GradientScheme::LeastSquares => 2,
        }
    }
}

impl fmt::Display for GradientScheme {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for GradientScheme {
    type Err = DetectError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        GradientScheme::ALL
            .into_iter()
            .find(|g| g.name() == s)
            .ok_or_else(|| DetectError::UnknownScheme {
                name: s.to_string(),
            })
    }
}

/// Order of the one-sided differences used at edges and next to masked vectors.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub enum EdgeOrder {
    /// `(f₁ − f₀)/h`: `numpy.gradient(..., edge_order=1)`.
    First,
    /// `(−3f₀ + 4f₁ − f₂)/2h`, falling back to first order when only two samples exist:
    /// `numpy.gradient(..., edge_order=2)`. Default (same order as the interior schemes).
    #[default]
    Second,
}

/// A velocity sample type: `f64` for planes, `f32` for volumes (promoted to `f64` per point).
pub trait Sample: Copy + Send + Sync {
    /// The value in double precision.
    fn to_f64(self) -> f64;
}

impl Sample for f64 {
    #[inline(always)]
    fn to_f64(self) -> f64 {
        self
    }
}

impl Sample for f32 {
    #[inline(always)]
    fn to_f64(self) -> f64 {
        self as f64
    }
}

/// Precomputed coefficients of one axis (one signed spacing).
#[derive(Debug, Clone, Copy)]
pub(crate) struct AxisCoeffs {
    /// 1/h
    inv: f64,
    /// 1/2h
    c2: f64,
    /// 1/12h
    c4: f64,
    /// 1/10h
    ls: f64,
    /// Scheme of this computation.
    scheme: GradientScheme,
    /// Edge order.
    edge: EdgeOrder,
}

impl AxisCoeffs {
    pub(crate) fn new(spacing: f64, scheme: GradientScheme, edge: EdgeOrder) -> Self {
        Self {
            inv: 1.0 / spacing,
            c2: 0.5 / spacing,
            c4: 1.0 / (12.0 * spacing),
            ls: 1.0 / (10.0 * spacing),
            scheme,
            edge,
        }
    }

    /// The interior stencil from raw samples (no checks); `f(k)` returns the sample at offset k.
    #[inline(always)]
    pub(crate) fn interior(&self, f: impl Fn(isize) -> f64) -> f64 {
        match self.scheme {
            GradientScheme::Central2 => (f(1) - f(-1)) * self.c2,
            GradientScheme::Central4 => ((f(-2) - f(2)) + 8.0 * (f(1) - f(-1))) * self.c4,
            GradientScheme::LeastSquares => (2.0 * (f(2) - f(-2)) + (f(1) - f(-1))) * self.ls,
        }
    }

    /// The mask- and edge-aware derivative: `get(k)` returns the sample at offset `k` if it
    /// exists and is valid. `None` when no stencil is possible.
    #[inline]
    pub(crate) fn derivative(&self, get: impl Fn(isize) -> Option<f64>) -> Option<f64> {
        let f0 = get(0)?;
        let samples = [get(-2), get(-1), Some(f0), get(1), get(2)];
        let sample = |k: isize| samples[(k + 2) as usize];
        let stencil = self.stencil(|k| sample(k).is_some())?;
        Some(self.apply(stencil, |k| sample(k).unwrap_or(f64::NAN)))
    }

    /// The stencil [`Self::derivative`] takes at a valid point, from which neighbours exist
    /// (`has(k)` for k = ±1, ±2: inside the grid and valid): the interior scheme where it
    /// fits, else central second order, else one-sided (second order if `edge` asks for it and
    /// two samples exist on that side, else first). `None`: no neighbour at all.
    #[inline(always)]
    pub(crate) fn stencil(&self, has: impl Fn(isize) -> bool) -> Option<Stencil> {
        let (p1, m1) = (has(1), has(-1));
        if p1 && m1 {
            if self.scheme != GradientScheme::Central2 && has(2) && has(-2) {
                return Some(Stencil::Interior);
            }
            return Some(Stencil::Central2);
        }
        if self.edge == EdgeOrder::Second {
            if p1 && has(2) {
                return Some(Stencil::ForwardSecond);
            }
            if m1 && has(-2) {
                return Some(Stencil::BackwardSecond);
            }
        }
        if p1 {
            return Some(Stencil::Forward);
        }
        m1.then_some(Stencil::Backward)
    }

    /// The derivative by `stencil` from the samples `at(k)` it reads (all valid).
    #[inline(always)]
    pub(crate) fn apply(&self, stencil: Stencil, at: impl Fn(isize) -> f64) -> f64 {
        match stencil {
            Stencil::Interior => self.interior(at),
            Stencil::Central2 => (at(1) - at(-1)) * self.c2,
            Stencil::ForwardSecond => {
                -1.5 * self.inv * at(0) + 2.0 * self.inv * at(1) - 0.5 * self.inv * at(2)
            }
            Stencil::BackwardSecond => {
                0.5 * self.inv * at(-2) - 2.0 * self.inv * at(-1) + 1.5 * self.inv * at(0)
            }
            Stencil::Forward => (at(1) - at(0)) * self.inv,
            Stencil::Backward => (at(0) - at(-1)) * self.inv,
        }
    }
}

/// The finite-difference stencil of one derivative at one point (see [`AxisCoeffs::stencil`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Stencil {
    /// The scheme's interior stencil.
    Interior,
    /// `(f₁ − f₋₁)/2h`.
    Central2,
    /// `(−3f₀ + 4f₁ − f₂)/2h`.
    ForwardSecond,
    /// `(f₋₂ − 4f₋₁ + 3f₀)/2h`.
    BackwardSecond,
    /// `(f₁ − f₀)/h`.
    Forward,
    /// `(f₀ − f₋₁)/h`.
    Backward,
}

/// Interior stencil over a contiguous run of `out.len()` points starting at flat index
/// `start`, with neighbours `stride` apart: `out[k]` is the derivative at `start + k`. The
/// caller guarantees the stencil stays inside the grid for every point of the run; masked
/// neighbours (NaN) make the result non-finite, which the caller detects. Written as plain
/// loops over equal-length slices so that the compiler vectorises them.
#[inline]
pub(crate) fn stencil_run<T: Sample>(
    data: &[T],
    start: usize,
    stride: usize,
    c: &AxisCoeffs,
    out: &mut [f64],
) {
    let n = out.len();
    let at = |o: isize| {
        let s = (start as isize + o * stride as isize) as usize;
        &data[s..s + n]
    };
    match c.scheme {
        GradientScheme::Central2 => {
            let (m1, p1) = (at(-1), at(1));
            for ((o, &a), &b) in out.iter_mut().zip(p1).zip(m1) {
                *o = (a.to_f64() - b.to_f64()) * c.c2;
            }
        }
        GradientScheme::Central4 => {
            let (m2, m1, p1, p2) = (at(-2), at(-1), at(1), at(2));
            for k in 0..n {
                let v = [
                    m2[k].to_f64(),
                    m1[k].to_f64(),
                    p1[k].to_f64(),
                    p2[k].to_f64(),
                ];
                out[k] = ((v[0] - v[3]) + 8.0 * (v[2] - v[1])) * c.c4;
            }
        }
        GradientScheme::LeastSquares => {
            let (m2, m1, p1, p2) = (at(-2), at(-1), at(1), at(2));
            for k in 0..n {
                let v = [
                    m2[k].to_f64(),
                    m1[k].to_f64(),
                    p1[k].to_f64(),
                    p2[k].to_f64(),
                ];
                out[k] = (2.0 * (v[3] - v[0]) + (v[2] - v[1])) * c.ls;
            }
        }
    }
}

impl AxisCoeffs {
    /// The stencil [`AxisCoeffs::derivative`] picks at index `i` of an axis of `n` points when
    /// every neighbour is valid, evaluated over a run of points (same arithmetic as
    /// `derivative`). `None` when no stencil exists (n < 2).
    pub(crate) fn run_at_index<T: Sample>(
        &self,
        i: usize,
        n: usize,
        data: &[T],
        start: usize,
        stride: usize,
        out: &mut [f64],
    ) -> Option<()> {
        let (p1, m1, p2, m2) = (i + 1 < n, i >= 1, i + 2 < n, i >= 2);
        let len = out.len();
        let at = |o: isize| {
            let s = (start as isize + o * stride as isize) as usize;
            &data[s..s + len]
        };
        if p1 && m1 {
            let c = if self.scheme != GradientScheme::Central2 && p2 && m2 {
                *self
            } else {
                AxisCoeffs {
                    scheme: GradientScheme::Central2,
                    ..*self
                }
            };
            stencil_run(data, start, stride, &c, out);
            return Some(());
        }
        let inv = self.inv;
        if self.edge == EdgeOrder::Second && ((p1 && p2) || (m1 && m2)) {
            if p1 && p2 {
                let (f0, f1, f2) = (at(0), at(1), at(2));
                for k in 0..len {
                    let (a, b, c) = (f0[k].to_f64(), f1[k].to_f64(), f2[k].to_f64());
                    out[k] = -1.5 * inv * a + 2.0 * inv * b - 0.5 * inv * c;
                }
            } else {
                let (f0, f1, f2) = (at(0), at(-1), at(-2));
                for k in 0..len {
                    let (a, b, c) = (f0[k].to_f64(), f1[k].to_f64(), f2[k].to_f64());
                    out[k] = 0.5 * inv * c - 2.0 * inv * b + 1.5 * inv * a;
                }
            }
            return Some(());
        }
        if p1 {
            let (f0, f1) = (at(0), at(1));
            for k in 0..len {
                out[k] = (f1[k].to_f64() - f0[k].to_f64()) * inv;
            }
            return Some(());
        }
        if m1 {
            let (f0, f1) = (at(0), at(-1));
            for k in 0..len {
                out[k] = (f0[k].to_f64() - f1[k].to_f64()) * inv;
            }
            return Some(());
        }
        None
    }
}

/// Accessor for the samples along one grid line of a flat array.
#[inline(always)]
pub(crate) fn line_get<T: Sample>(
    data: &[T],
    flat: usize,
    i: usize,
    n: usize,
    stride: usize,
) -> impl Fn(isize) -> Option<f64> + '_ {
    move |k: isize| {
        let j = i as isize + k;
        if j < 0 || j >= n as isize {
            return None;
        }
        let v = data[(flat as isize + k * stride as isize) as usize].to_f64();
        if v.is_nan() {
            None
        } else {
            Some(v)
        }
    }
}

/// Checks that an axis can be differentiated along (two points at least).
pub(crate) fn check_axis(axis: &'static str, len: usize) -> Result<(), DetectError> {
    if len < 2 {
        Err(DetectError::AxisTooShort {
            axis,
            len,
            needed: 2,
        })
    } else {
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn deriv(samples: &[f64], i: usize, scheme: GradientScheme, edge: EdgeOrder) -> Option<f64> {
        let c = AxisCoeffs::new(1.0, scheme, edge);
        c.derivative(line_get(samples, i, i, samples.len(), 1))
    }

    #[test]
    fn schemes_are_exact_on_polynomials_of_their_order() {
        // Fact of the trade (Taylor expansion): a stencil of order p differentiates polynomials
        // of degree ≤ p exactly. Cubic → Central2 and LS exact only for degree ≤ 2, Central4
        // exact for degree ≤ 4. Values are small integers, so the tolerance is rounding only.
        let quad: Vec<f64> = (0..7)
            .map(|k| (k as f64).powi(2) * 3.0 - k as f64)
            .collect();
        let quartic: Vec<f64> = (0..7).map(|k| (k as f64 - 2.0).powi(4)).collect();
        for s in GradientScheme::ALL {
            // d/dk (3k² − k) at k = 3 is 17.
            assert_relative_eq!(
                deriv(&quad, 3, s, EdgeOrder::Second).unwrap(),
                17.0,
                epsilon = 1e-12
            );
        }
        // d/dk (k−2)⁴ at k = 3 is 4.
        assert_relative_eq!(
            deriv(&quartic, 3, GradientScheme::Central4, EdgeOrder::Second).unwrap(),
            4.0,
            epsilon = 1e-12
        );
        // Central2 on a quartic is not exact: (f(4)−f(2))/2 = (16−0)/2 = 8, not 4.
        assert_relative_eq!(
            deriv(&quartic, 3, GradientScheme::Central2, EdgeOrder::Second).unwrap(),
            8.0,
            epsilon = 1e-12
        );
    }

    #[test]
    fn edges_use_one_sided_differences_like_numpy() {
        // numpy.gradient formulas (numpy docs, "edge_order"): order 1 (f1−f0)/h, order 2
        // (−3f0 + 4f1 − f2)/2h. For f = k² at k = 0: order 1 gives 1, order 2 gives 0 (exact).
        let f: Vec<f64> = (0..5).map(|k| (k as f64).powi(2)).collect();
        assert_relative_eq!(
            deriv(&f, 0, GradientScheme::Central2, EdgeOrder::First).unwrap(),
            1.0,
            epsilon = 1e-12
        );
        assert_relative_eq!(
            deriv(&f, 0, GradientScheme::Central2, EdgeOrder::Second).unwrap(),
            0.0,
            epsilon = 1e-12
        );
        // Last point k = 4: exact slope 8; order 1 backward gives 16 − 9 = 7.
        assert_relative_eq!(
            deriv(&f, 4, GradientScheme::LeastSquares, EdgeOrder::First).unwrap(),
            7.0,
            epsilon = 1e-12
        );
        assert_relative_eq!(
            deriv(&f, 4, GradientScheme::LeastSquares, EdgeOrder::Second).unwrap(),
            8.0,
            epsilon = 1e-12
        );
    }

    #[test]
    fn masked_neighbours_narrow_the_stencil_and_masked_points_give_none() {
        let nan = f64::NAN;
        // Linear data f = 2k, one masked sample at k = 4: the LS stencil at k = 3 cannot be used,
        // the point falls back to central 2nd order (exact on a line).
        let f = [0.0, 2.0, 4.0, 6.0, nan, 10.0, 12.0];
        assert_relative_eq!(
            deriv(&f, 3, GradientScheme::LeastSquares, EdgeOrder::Second).unwrap(),
            2.0,
            epsilon = 1e-12
        );
        // k = 5 has a masked left neighbour: one-sided forward 2nd order.
        assert_relative_eq!(
            deriv(&f, 5, GradientScheme::LeastSquares, EdgeOrder::Second).unwrap(),
            2.0,
            epsilon = 1e-12
        );
        assert!(deriv(&f, 4, GradientScheme::Central2, EdgeOrder::Second).is_none());
        // An isolated valid sample has no derivative.
        let g = [nan, 1.0, nan];
        assert!(deriv(&g, 1, GradientScheme::Central2, EdgeOrder::First).is_none());
    }

    #[test]
    fn scheme_names_round_trip() {
        for s in GradientScheme::ALL {
            assert_eq!(s.name().parse::<GradientScheme>().unwrap(), s);
        }
        assert!(matches!(
            "sobel".parse::<GradientScheme>(),
            Err(DetectError::UnknownScheme { name }) if name == "sobel"
        ));
    }
}
