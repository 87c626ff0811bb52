//! One station of a core line: the velocity on the plane normal to the local axis, the 2D
//! model fits, and the axial strain rate.
//!
//! # Method
//! - Velocity gradient A (∂uᵢ/∂xⱼ) at the station centre: trilinear interpolation of the
//!   finite-difference tensors of the 8 surrounding grid points. The axis ê is the direction
//!   of the vorticity ω = ∇ × u there (oriented like the traced line), falling back to the
//!   traced axis when ω vanishes.
//! - Axial strain rate γ_axial = ê·S·ê with S = (A + Aᵀ)/2. Since ê·S·ê = ê·∇(u·ê), it only
//!   involves the axial velocity; for a Burgers vortex the swirl drops out exactly and
//!   γ_axial = γ (Burgers 1948). It is estimated as the least-squares slope of the axial
//!   velocity u·ê against the axial coordinate ζ over the samples of a short cylinder about
//!   the fitted centre: radius rc (the fitted core radius, else the thresholded section's
//!   radius), ζ = −3h…3h, samples on the same in-plane grid in every layer. This is the mean
//!   of ê·∇(u·ê) over the cylinder: exact for a Burgers vortex and for any linear background
//!   (the in-plane terms are orthogonal to ζ on the symmetric grid), and with velocity noise σ
//!   its standard error is about σ/(2h√N) for N samples, against ≈ σ/h for the gradient at
//!   one point — a single-point γ_axial is dominated by noise at the few-percent noise of
//!   PIV or of coarse DNS output (common practice: average a derivative over a region to
//!   suppress noise). Outlying samples are rejected by their residual (see
//!   `cylinder_axial_strain`). When the cylinder has fewer than 12 samples (domain faces, masked
//!   data), the point value ê·S·ê at the centre is reported and the station is flagged
//!   `axial_strain_at_point`.
//! - Cross-section: samples at spacing h (the smallest grid spacing) on the plane through the
//!   centre spanned by the right-handed basis (ê₁, ê₂, ê), within the window radius, each by
//!   trilinear interpolation of u, v, w (NaN if any of the 8 grid points is invalid or
//!   outside a non-periodic domain). The velocity at the centre (the station's convection
//!   velocity) is subtracted and the remainder projected onto the plane, removing the axial
//!   component. Positive circulation is counter-clockwise about ê.
//! - The 2D models are fitted by `vortcat_fit::fit_and_select`. The Burgers balance ratio is
//!   `rc / √(4ν/γ_axial)`, 1 for a Burgers vortex in equilibrium (rc² = 4ν/γ).
//!
//! # Reference
//! J. M. Burgers (1948), *Adv. Appl. Mech.* 1, 171–199. Trilinear interpolation: common
//! practice.

use serde::Serialize;
use vortcat_detect::gradient::volume_tensor_at;

use crate::survey::median;
use vortcat_detect::{EdgeOrder, GradientScheme, Tensor3};
use vortcat_field::VolumeField;
use vortcat_fit::{fit_and_select, CirculationGuess, FitSettings, InitialGuess, Model, Window};

use crate::slab::Slab;
use crate::trace::{add, dot, unit, Geom};

/// A station to compute.
#[derive(Debug, Clone, Copy)]
pub(crate) struct StationJob {
    /// Tube number (from 1).
    pub tube: usize,
    /// Station number within the tube (from 1).
    pub station: usize,
    /// Traced centre (unwrapped, physical).
    pub centre: [f64; 3],
    /// Traced axis.
    pub axis: [f64; 3],
    /// Arc length from the first station.
    pub arc: f64,
    /// Window radius.
    pub window: f64,
    /// The window radius was capped.
    pub capped: bool,
    /// Equivalent radius of the thresholded section.
    pub section_radius: f64,
}

/// The result at one station. Lengths, velocities and rates in the input's units; `None`
/// where a value could not be computed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Station {
    /// Tube number, from 1.
    pub tube: usize,
    /// Station number along the tube, from 1.
    pub station: usize,
    /// Arc length of the traced line from the first station.
    pub arc_length: f64,
    /// Fitted centre (traced centre when not fitted); wrapped into the box on periodic axes.
    pub position: [f64; 3],
    /// Unit axis ê (vorticity direction at the centre).
    pub axis: [f64; 3],
    /// Chosen model name (empty when not fitted).
    pub model: String,
    /// Fit status (`converged`, …, `not_fitted`).
    pub status: String,
    /// Circulation Γ about ê.
    pub circulation: Option<f64>,
    /// Core radius rc.
    pub core_radius: Option<f64>,
    /// Peak azimuthal velocity.
    pub peak_velocity: Option<f64>,
    /// Strain rate from the fitted radial inflow (Burgers only).
    pub strain_rate_inflow: Option<f64>,
    /// Axial strain rate γ_axial = ê·S·ê.
    pub strain_rate_axial: Option<f64>,
    /// rc / √(4ν/γ_axial) (needs ν and γ_axial > 0).
    pub balance_ratio: Option<f64>,
    /// Convection velocity of the station (3D): the velocity at the centre plus the fitted
    /// in-plane background.
    pub convection: [Option<f64>; 3],
    /// |ω| at the centre.
    pub vorticity: Option<f64>,
    /// Valid samples in the window.
    pub n_points: usize,
    /// R² of the fit.
    pub r2: Option<f64>,
    /// RMS velocity residual.
    pub residual_rms: Option<f64>,
    /// Window radius.
    pub window_radius: f64,
    /// Equivalent radius of the thresholded section.
    pub section_radius: f64,
    /// rc/η.
    pub core_radius_eta: Option<f64>,
    /// Γ/ν.
    pub reynolds: Option<f64>,
    /// γ_axial·τ_η.
    pub strain_rate_tau: Option<f64>,
    /// Quality flags (fit flags plus `window_capped`, `not_fitted`, `no_gradient`).
    pub flags: Vec<String>,
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

/// Trilinear weight of corner `(dx, dy, dz)` for fractions `t`.
fn weight(t: [f64; 3], dx: usize, dy: usize, dz: usize) -> f64 {
    (if dx == 1 { t[0] } else { 1.0 - t[0] })
        * (if dy == 1 { t[1] } else { 1.0 - t[1] })
        * (if dz == 1 { t[2] } else { 1.0 - t[2] })
}

/// Trilinear interpolation of the three velocity components in local cell `c` (lower corner
/// `[x, y, z]`) at fractions `t`; `None` when a node is invalid.
fn velocity(field: &VolumeField, (c, t): ([usize; 3], [f64; 3])) -> Option<[f64; 3]> {
    let comps = [field.u(), field.v(), field.w()];
    let mut out = [0.0; 3];
    for dz in 0..2 {
        for dy in 0..2 {
            for dx in 0..2 {
                let wgt = weight(t, dx, dy, dz);
                let idx = [c[2] + dz, c[1] + dy, c[0] + dx];
                for (k, a) in comps.iter().enumerate() {
                    let v = f64::from(a[idx]);
                    if v.is_nan() {
                        return None;
                    }
                    out[k] += wgt * v;
                }
            }
        }
    }
    Some(out)
}

/// Trilinear interpolation of the gradient tensor in a local cell.
fn tensor(
    field: &VolumeField,
    scheme: GradientScheme,
    edge: EdgeOrder,
    (c, t): ([usize; 3], [f64; 3]),
) -> Option<Tensor3> {
    let mut a = [[0.0; 3]; 3];
    for dz in 0..2 {
        for dy in 0..2 {
            for dx in 0..2 {
                let wgt = weight(t, dx, dy, dz);
                let node = [c[2] + dz, c[1] + dy, c[0] + dx];
                let tn = volume_tensor_at(field, scheme, edge, node).ok().flatten()?;
                for i in 0..3 {
                    for j in 0..3 {
                        a[i][j] += wgt * tn.0[i][j];
                    }
                }
            }
        }
    }
    Some(Tensor3(a))
}

/// A right-handed orthonormal basis (ê₁, ê₂) of the plane normal to `e`: ê₁ from the grid
/// axis least aligned with `e`, ê₂ = ê × ê₁.
pub(crate) fn plane_basis(e: [f64; 3]) -> ([f64; 3], [f64; 3]) {
    let mut k = 0;
    for j in 1..3 {
        if e[j].abs() < e[k].abs() {
            k = j;
        }
    }
    let mut a = [0.0; 3];
    a[k] = 1.0;
    let cross = |p: [f64; 3], q: [f64; 3]| {
        [
            p[1] * q[2] - p[2] * q[1],
            p[2] * q[0] - p[0] * q[2],
            p[0] * q[1] - p[1] * q[0],
        ]
    };
    let e1 = unit(cross(a, e)).expect("a is not parallel to e");
    let e2 = cross(e, e1);
    (e1, e2)
}

/// Layers of the γ_axial cylinder on each side of the station plane (spacing h).
pub(crate) const AXIAL_LAYERS: usize = 3;
/// Fewest cylinder samples for the slope estimate of γ_axial.
const MIN_AXIAL_SAMPLES: usize = 12;

/// The least-squares slope of u·ê against ζ over a cylinder of `radius` about `centre` (see
/// the module docs), or `None` with fewer than [`MIN_AXIAL_SAMPLES`] samples.
#[allow(clippy::too_many_arguments)]
fn cylinder_axial_strain(
    field: &VolumeField,
    locate: &impl Fn([f64; 3]) -> Option<([usize; 3], [f64; 3])>,
    centre: [f64; 3],
    e: [f64; 3],
    (e1, e2): ([f64; 3], [f64; 3]),
    radius: f64,
    h: f64,
) -> Option<f64> {
    let m = (radius / h).floor() as i64;
    let mut samples: Vec<(f64, f64)> = Vec::new();
    let layers = AXIAL_LAYERS as i64;
    for k in -layers..=layers {
        let zeta = k as f64 * h;
        for j in -m..=m {
            for i in -m..=m {
                let (x, y) = (i as f64 * h, j as f64 * h);
                if x * x + y * y > radius * radius {
                    continue;
                }
                let p = add(add(add(centre, e1, x), e2, y), e, zeta);
                if let Some(u) = locate(p).and_then(|l| velocity(field, l)) {
                    samples.push((zeta, dot(u, e)));
                }
            }
        }
    }
    robust_slope(samples)
}

/// The slope of `(ζ, u)` samples by least squares with outlier rejection (below), or `None`
/// with fewer than [`MIN_AXIAL_SAMPLES`] samples.
fn robust_slope(samples: Vec<(f64, f64)>) -> Option<f64> {
    if samples.len() < MIN_AXIAL_SAMPLES {
        return None;
    }
    // Least squares, then samples whose residual is an outlier by the modified z-score
    // (|r − median r| > 3.5 × 1.4826 × MAD; Iglewicz & Hoaglin 1993, quoted from memory) are
    // dropped and the slope refitted, until none is dropped (at most 5 rounds): one spurious
    // PIV-like vector in a cylinder of ~200 samples would otherwise move γ_axial by more than
    // its value.
    let mut kept = samples;
    for _ in 0..5 {
        let (intercept, slope) = line_fit(&kept)?;
        let residuals: Vec<f64> = kept
            .iter()
            .map(|&(z, u)| u - (intercept + slope * z))
            .collect();
        let centre = median(residuals.clone())?;
        let mad = median(residuals.iter().map(|r| (r - centre).abs()).collect())?;
        let limit = 3.5 * 1.4826 * mad;
        if limit.is_nan() || limit <= 0.0 {
            return Some(slope);
        }
        let before = kept.len();
        kept = kept
            .into_iter()
            .zip(&residuals)
            .filter(|(_, r)| (*r - centre).abs() <= limit)
            .map(|(s, _)| s)
            .collect();
        if kept.len() == before {
            return Some(slope);
        }
        if kept.len() < MIN_AXIAL_SAMPLES {
            return None;
        }
    }
    line_fit(&kept).map(|(_, slope)| slope)
}

/// Least-squares line u = a + b ζ through `(ζ, u)` samples: `(a, b)`, or `None` when the ζ
/// are all equal.
fn line_fit(samples: &[(f64, f64)]) -> Option<(f64, f64)> {
    let n = samples.len() as f64;
    let mean_z = samples.iter().map(|s| s.0).sum::<f64>() / n;
    let mean_u = samples.iter().map(|s| s.1).sum::<f64>() / n;
    let (mut szz, mut szu) = (0.0, 0.0);
    for &(z, u) in samples {
        szz += (z - mean_z) * (z - mean_z);
        szu += (z - mean_z) * (u - mean_u);
    }
    let slope = szu / szz;
    (szz > 0.0 && slope.is_finite()).then_some((mean_u - slope * mean_z, slope))
}

/// Physical-constant context of a station computation.
pub(crate) struct StationCtx<'a> {
    pub geom: Geom,
    pub scheme: GradientScheme,
    pub edge: EdgeOrder,
    pub models: &'a [Model],
    pub fit: &'a FitSettings,
    pub viscosity: Option<f64>,
    pub kolmogorov: Option<(f64, f64)>,
}

/// Wraps a position into the box on periodic axes.
fn wrap_position(g: &Geom, p: [f64; 3]) -> [f64; 3] {
    std::array::from_fn(|k| {
        if g.periodic[k] {
            let n = g.n[k] as f64;
            let f = ((p[k] - g.origin[k]) / g.spacing[k]).rem_euclid(n);
            g.origin[k] + f * g.spacing[k]
        } else {
            p[k]
        }
    })
}

/// Computes one station from the slab that holds it.
pub(crate) fn compute(ctx: &StationCtx<'_>, slab: &Slab, job: &StationJob) -> Station {
    let g = &ctx.geom;
    let mut st = Station {
        tube: job.tube,
        station: job.station,
        arc_length: job.arc,
        position: wrap_position(g, job.centre),
        axis: job.axis,
        model: String::new(),
        status: "not_fitted".into(),
        circulation: None,
        core_radius: None,
        peak_velocity: None,
        strain_rate_inflow: None,
        strain_rate_axial: None,
        balance_ratio: None,
        convection: [None; 3],
        vorticity: None,
        n_points: 0,
        r2: None,
        residual_rms: None,
        window_radius: job.window,
        section_radius: job.section_radius,
        core_radius_eta: None,
        reynolds: None,
        strain_rate_tau: None,
        flags: Vec::new(),
    };
    if job.capped {
        st.flags.push("window_capped".into());
    }
    let Some(field) = slab.field.as_ref() else {
        st.flags.push("not_fitted".into());
        return st;
    };
    let locate = |p: [f64; 3]| slab.locate(g.frac(p));
    let c = job.centre;
    let a = locate(c).and_then(|l| tensor(field, ctx.scheme, ctx.edge, l));
    let mut e = job.axis;
    if let Some(a) = &a {
        let w = a.vorticity();
        st.vorticity = finite(crate::trace::norm(w));
        if let Some(mut we) = unit(w) {
            if dot(we, job.axis) < 0.0 {
                we = we.map(|x| -x);
            }
            e = we;
        }
    } else {
        st.flags.push("no_gradient".into());
    }
    st.axis = e;
    let gamma_axial = a.map(|a| {
        let s = |i: usize, j: usize| 0.5 * (a.0[i][j] + a.0[j][i]);
        (0..3)
            .map(|i| (0..3).map(|j| e[i] * s(i, j) * e[j]).sum::<f64>())
            .sum::<f64>()
    });
    st.strain_rate_axial = gamma_axial.and_then(finite);
    let (e1, e2) = plane_basis(e);
    let uc = locate(c).and_then(|l| velocity(field, l));
    let h = g.h();
    let m = (job.window / h).ceil() as i64;
    let (mut xs, mut ys, mut us, mut vs) = (vec![], vec![], vec![], vec![]);
    if let Some(uc) = uc {
        for j in -m..=m {
            for i in -m..=m {
                let (x, y) = (i as f64 * h, j as f64 * h);
                if x * x + y * y > job.window * job.window {
                    continue;
                }
                let p = add(add(c, e1, x), e2, y);
                let (su, sv) = match locate(p).and_then(|l| velocity(field, l)) {
                    Some(u) => {
                        let d = [u[0] - uc[0], u[1] - uc[1], u[2] - uc[2]];
                        (dot(d, e1), dot(d, e2))
                    }
                    None => (f64::NAN, f64::NAN),
                };
                xs.push(x);
                ys.push(y);
                us.push(su);
                vs.push(sv);
            }
        }
    }
    let guess = InitialGuess {
        centre: [0.0, 0.0],
        circulation: CirculationGuess::Sense(1.0),
        core_radius: None,
    };
    let mut fitted_centre = c;
    let fitted = match uc {
        None => Err("no velocity at the centre".to_string()),
        Some(_) => Window::from_samples([0.0, 0.0], job.window, [h, h], &xs, &ys, &us, &vs)
            .and_then(|w| fit_and_select(ctx.models, &w, &guess, ctx.fit))
            .map_err(|e| e.to_string()),
    };
    match fitted {
        Err(msg) => {
            log::debug!(
                "tube {} station {}: not fitted: {msg}",
                job.tube,
                job.station
            );
            st.flags.push("not_fitted".into());
        }
        Ok(sel) => {
            let f = sel.best_fit();
            let p = &f.parameters;
            st.model = f.model.name().to_string();
            st.status = match f.status {
                vortcat_fit::FitStatus::Converged => "converged",
                vortcat_fit::FitStatus::MaxIterations => "max_iterations",
                vortcat_fit::FitStatus::Stalled => "stalled",
                vortcat_fit::FitStatus::Degenerate => "degenerate",
            }
            .into();
            st.circulation = finite(f.circulation());
            st.core_radius = finite(f.core_radius());
            st.peak_velocity = finite(f.derived.peak_azimuthal_velocity);
            st.strain_rate_inflow = f.derived.strain_rate_inflow.and_then(finite);
            st.n_points = f.n_vectors;
            st.r2 = finite(f.r_squared);
            st.residual_rms = finite(f.rms_residual);
            if p.centre.iter().all(|x| x.is_finite()) {
                fitted_centre = add(add(c, e1, p.centre[0]), e2, p.centre[1]);
                st.position = wrap_position(g, fitted_centre);
            }
            if let Some(uc) = uc {
                let conv = add(add(uc, e1, p.convection[0]), e2, p.convection[1]);
                st.convection = conv.map(finite);
            }
            st.flags
                .extend(f.flags.iter().map(|x| x.name().to_string()));
        }
    }
    let cylinder_radius = st
        .core_radius
        .filter(|r| *r > 0.0)
        .unwrap_or(job.section_radius)
        .clamp(h, job.window);
    match cylinder_axial_strain(
        field,
        &locate,
        fitted_centre,
        e,
        (e1, e2),
        cylinder_radius,
        h,
    ) {
        Some(gamma) => st.strain_rate_axial = Some(gamma),
        None if st.strain_rate_axial.is_some() => st.flags.push("axial_strain_at_point".into()),
        None => {}
    }
    if let (Some(nu), Some(rc), Some(g)) = (ctx.viscosity, st.core_radius, st.strain_rate_axial) {
        if g > 0.0 {
            st.balance_ratio = finite(rc / (4.0 * nu / g).sqrt());
        }
    }
    if let (Some(nu), Some(gam)) = (ctx.viscosity, st.circulation) {
        st.reynolds = finite(gam / nu);
    }
    if let Some((eta, tau)) = ctx.kolmogorov {
        st.core_radius_eta = st.core_radius.map(|r| r / eta);
        st.strain_rate_tau = st.strain_rate_axial.map(|g| g * tau);
    }
    st.flags.sort();
    st.flags.dedup();
    st
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn robust_slope_ignores_outliers_and_needs_enough_samples() {
        // u = 0.3 ζ + 0.01 x-dependence on 5 layers × 7 positions, three wild values.
        let mut samples = Vec::new();
        for k in -2..=2 {
            for i in -3..=3 {
                let z = f64::from(k);
                samples.push((z, 0.3 * z + 0.01 * f64::from(i)));
            }
        }
        let clean = robust_slope(samples.clone()).unwrap();
        assert!((clean - 0.3).abs() < 1e-12, "{clean}");
        samples[3].1 += 10.0;
        samples[17].1 -= 7.0;
        samples[30].1 += 4.0;
        let plain = line_fit(&samples).unwrap().1;
        assert!(
            (plain - 0.3).abs() > 0.1,
            "the outliers do move least squares: {plain}"
        );
        // Rejection drops exactly the three wild samples: the result is least squares on the
        // others (not exactly 0.3: without them the grid is no longer symmetric in x, so the
        // x-dependence leaks into the slope slightly).
        let others: Vec<(f64, f64)> = samples
            .iter()
            .enumerate()
            .filter(|(i, _)| ![3, 17, 30].contains(i))
            .map(|(_, s)| *s)
            .collect();
        let robust = robust_slope(samples.clone()).unwrap();
        assert!(
            (robust - line_fit(&others).unwrap().1).abs() < 1e-12,
            "{robust}"
        );
        assert!((robust - 0.3).abs() < 1e-3, "{robust}");
        samples.truncate(MIN_AXIAL_SAMPLES - 1);
        assert_eq!(robust_slope(samples), None);
    }

    #[test]
    fn plane_basis_is_right_handed_and_orthonormal() {
        for e in [[0.0, 0.0, 1.0], [0.3, -0.5, 0.81], [1.0, 0.0, 0.0]] {
            let e = unit(e).unwrap();
            let (e1, e2) = plane_basis(e);
            // Orthonormality to rounding.
            assert!(dot(e1, e).abs() < 1e-14 && dot(e2, e).abs() < 1e-14);
            assert!((dot(e1, e1) - 1.0).abs() < 1e-14 && (dot(e2, e2) - 1.0).abs() < 1e-14);
            // e1 × e2 = e.
            let c = [
                e1[1] * e2[2] - e1[2] * e2[1],
                e1[2] * e2[0] - e1[0] * e2[2],
                e1[0] * e2[1] - e1[1] * e2[0],
            ];
            assert!((dot(c, e) - 1.0).abs() < 1e-14);
        }
    }
}
