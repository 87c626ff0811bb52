//! Vortex-core candidates: thresholding, connected-component labelling (8-connectivity in a
//! plane, 26 in a volume, masked points never belong to a region), minimum region size,
//! splitting of regions with separated peaks, and per-candidate geometry.
//!
//! # Pipeline
//! 1. The criterion field is computed (fused gradient path; NaN where not computable).
//! 2. Its strength ([`Criterion::strength`]) is compared with the threshold
//!    ([`crate::Threshold`]); only points with a computed value strictly above it are kept.
//! 3. Kept points are labelled; each region is split at significant saddles
//!    ([`crate::SplitSettings`]), regions smaller than the minimum size are dropped.
//! 4. Output order is the raster order (x fastest, then y, then z) of each region's first
//!    cell, which does not depend on the number of threads.
//!
//! # Per-candidate quantities
//! - **peak cell**: the maximum-strength cell among cells with a complete stencil (all cells
//!   if none has one); `peak_value` is the raw criterion value there.
//! - **centroid**: strength-weighted mean of the cell coordinates (weights `s − min(t, 0)` for
//!   strength `s` and threshold `t`, i.e. the strength itself for the usual non-negative
//!   thresholds). Biased towards the inside of the domain when the region touches an edge.
//! - **sub-grid peak**: planes: the stationary point of the 6-parameter least-squares quadratic
//!   on the computed strengths in a square window around the maximum cell (half-width half
//!   the equivalent radius in cells, 1 to 4: 3×3 for small cores, up to 9×9 to average noise
//!   on the flat top of large ones), re-centred on the rounded vertex until it stays, since
//!   on a noisy flat top the maximum cell can lie cells away from the centre; masked cells
//!   are left out of the fit. Where that is not possible (fewer than 6 samples, not a maximum),
//!   the fit is retried from the cell nearest the centroid, then a least-squares parabola
//!   along each axis, else the cell itself, with
//!   [`CandidateFlag::PeakFitFallback`]. Volumes: the per-axis parabolas through the maximum
//!   voxel. The centroid is the more robust centre on noisy data (it averages the whole
//!   region); the peak is less biased by asymmetric regions (edges, neighbours).
//! - **sense** (planes): sign of the summed ω_z over the region (of the summed raw value for
//!   the signed criteria ω, Γ1, Γ2); 0 with [`CandidateFlag::SenseUndetermined`] when zero or
//!   not computable.
//! - **equivalent radius** √(area/π); **edge distance** from the centroid to the outermost grid
//!   lines; **nearest invalid** distance from the centroid to the nearest masked vector
//!   (`None` when the field has none).
//! - Volumes also: the **principal axis** of the region (largest-variance direction of its voxel
//!   centres) and the **swirl axis** at the peak voxel (real eigenvector of the gradient tensor,
//!   oriented along ω).

use ndarray::{Array2, Array3};
use vortcat_field::{PlaneField, VolumeField};

use crate::criterion::{swirling_strength, Criterion};
use crate::error::DetectError;
use crate::gradient::plane::PlaneCtx;
use crate::gradient::volume::VolumeCtx;
use crate::settings::{DetectionSettings, SplitSettings};

mod geometry;
mod label;

use geometry::{
    edge_distance, nearest_invalid, parabola_peak, principal_axis, quadratic_peak, Coords,
};
use label::Space;

/// Something about a candidate that could not be computed, or a condition that biases it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum CandidateFlag {
    /// The full sub-grid peak fit was not possible; a per-axis fit or the grid maximum is used.
    PeakFitFallback,
    /// The rotation sense could not be determined (summed vorticity zero or not computable).
    SenseUndetermined,
    /// The inverse spiralling ratio is not available (no complex eigenvalues at the peak, or no
    /// tensor there).
    SpirallingRatioUnavailable,
    /// Volume only: the swirl axis at the peak is not available.
    SwirlAxisUnavailable,
    /// Volume only: the region has no unique direction of largest extent.
    PrincipalAxisUndefined,
    /// The region touches the domain edge: centroid, size and radius are biased.
    TouchesEdge,
    /// The region borders a masked vector.
    TouchesInvalid,
    /// Some cell of the region used a narrowed or one-sided stencil (or a truncated Γ
    /// neighbourhood) because of the edge or a masked vector.
    ReducedStencil,
    /// The region was split from a larger connected region with several peaks.
    Split,
}

/// A vortex-core candidate in a plane. Positions are physical coordinates `(x, y)` in the grid's
/// length unit; indices are `[iy, ix]`.
#[derive(Debug, Clone, PartialEq)]
pub struct PlaneCandidate {
    /// Position in the output (0-based; raster order of the first cell).
    pub id: usize,
    /// Strength-weighted centroid `(x, y)`.
    pub centroid: [f64; 2],
    /// Sub-grid peak `(x, y)`.
    pub peak: [f64; 2],
    /// Grid index of the maximum-strength cell, `[iy, ix]`.
    pub peak_index: [usize; 2],
    /// +1 counter-clockwise (seen from +z), −1 clockwise, 0 undetermined.
    pub sense: i8,
    /// √(area/π), length unit.
    pub equivalent_radius: f64,
    /// Raw criterion value at the peak cell (signed, in the criterion's unit).
    pub peak_value: f64,
    /// Number of cells.
    pub cells: usize,
    /// Area, length unit squared.
    pub area: f64,
    /// Distance from the centroid to the nearest edge of the domain, length unit.
    pub edge_distance: f64,
    /// Distance from the centroid to the nearest masked vector (`None`: no masked vector).
    pub invalid_distance: Option<f64>,
    /// λcr/λci at the peak cell (Chakraborty et al. 2005).
    pub inverse_spiralling_ratio: Option<f64>,
    /// The cells, `[iy, ix]`, in raster order.
    pub region: Vec<[usize; 2]>,
    /// What could not be computed or biases the result (sorted, unique).
    pub flags: Vec<CandidateFlag>,
}

/// A vortex-core candidate in a volume. Positions are `(x, y, z)`; indices `[iz, iy, ix]`.
#[derive(Debug, Clone, PartialEq)]
pub struct VolumeCandidate {
    /// Position in the output (0-based; raster order of the first voxel).
    pub id: usize,
    /// Strength-weighted centroid `(x, y, z)`.
    pub centroid: [f64; 3],
    /// Sub-grid peak `(x, y, z)` (per-axis three-point parabola).
    pub peak: [f64; 3],
    /// Grid index of the maximum-strength voxel, `[iz, iy, ix]`.
    pub peak_index: [usize; 3],
    /// Raw criterion value at the peak voxel.
    pub peak_value: f64,
    /// Number of voxels.
    pub voxels: usize,
    /// Volume, length unit cubed.
    pub volume: f64,
    /// Unit direction of largest extent of the region `(x, y, z)`, sign: largest component > 0.
    pub principal_axis: Option<[f64; 3]>,
    /// Unit swirl axis at the peak `(x, y, z)`, oriented along the vorticity.
    pub swirl_axis: Option<[f64; 3]>,
    /// λcr/λci at the peak voxel.
    pub inverse_spiralling_ratio: Option<f64>,
    /// Distance from the centroid to the nearest edge of the domain, length unit.
    pub edge_distance: f64,
    /// Distance from the centroid to the nearest masked vector (`None`: no masked vector).
    pub invalid_distance: Option<f64>,
    /// The voxels, `[iz, iy, ix]`, in raster order.
    pub region: Vec<[usize; 3]>,
    /// What could not be computed or biases the result (sorted, unique).
    pub flags: Vec<CandidateFlag>,
}

/// Candidates with the threshold that produced them.
#[derive(Debug, Clone, PartialEq)]
pub struct Detection<C> {
    /// The criterion used.
    pub criterion: Criterion,
    /// The resolved threshold on the strength, in the strength's unit.
    pub threshold: f64,
    /// Number of points where the criterion was computed.
    pub computed_points: usize,
    /// The candidates, in raster order of their first cell.
    pub candidates: Vec<C>,
}

/// Regions of one strength field.
struct Regions {
    cells: Vec<usize>,
    strength: Vec<f64>,
    regions: Vec<(Vec<usize>, bool)>,
    threshold: f64,
    computed: usize,
}

fn find_regions(
    len: usize,
    value: impl Fn(usize) -> f64 + Copy,
    criterion: Criterion,
    settings: &DetectionSettings,
    space: &Space,
) -> Result<Regions, DetectError> {
    let strength_of = |f: usize| criterion.strength(value(f));
    let threshold = settings
        .threshold()
        .resolve_at(criterion, len, strength_of)
        .map_err(|e| match e {
            DetectError::NothingComputable { criterion, .. } => DetectError::NothingComputable {
                criterion,
                points: len,
            },
            e => e,
        })?;
    let (mut cells, mut strength) = (Vec::new(), Vec::new());
    // The strength rule is chosen once, outside the loop, so that the scan vectorises.
    let computed = match criterion {
        Criterion::Vorticity | Criterion::Gamma1 | Criterion::Gamma2 => select_above(
            len,
            |f| value(f).abs(),
            threshold,
            &mut cells,
            &mut strength,
        ),
        Criterion::Lambda2 => {
            select_above(len, |f| -value(f), threshold, &mut cells, &mut strength)
        }
        Criterion::Q | Criterion::SwirlingStrength | Criterion::Delta => {
            select_above(len, value, threshold, &mut cells, &mut strength)
        }
    };
    debug_assert!(cells
        .iter()
        .zip(&strength)
        .all(|(&f, &s)| s.to_bits() == strength_of(f).to_bits()));
    let mut regions = Vec::new();
    let index = label::CellIndex::new(&cells, space);
    let mut local_of = vec![
        u32::MAX;
        if settings.split().is_some() {
            cells.len()
        } else {
            0
        }
    ];
    for comp in label::components(&index, space) {
        match settings.split() {
            Some(sp) => {
                // A part below the minimum size would be dropped: never split one off.
                let sp = SplitSettings {
                    min_basin_cells: sp.min_basin_cells.max(settings.min_cells()),
                    ..sp
                };
                let parts = label::split(&comp, &index, &strength, space, &sp, &mut local_of);
                let was_split = parts.len() > 1;
                regions.extend(parts.into_iter().map(|p| (p, was_split)));
            }
            None => regions.push((comp, false)),
        }
    }
    regions.retain(|(r, _)| r.len() >= settings.min_cells());
    regions.sort_by_key(|(r, _)| cells[r[0]]);
    log::debug!(
        "{}: threshold {threshold:e}, {} cells above, {} regions",
        criterion.name(),
        cells.len(),
        regions.len()
    );
    Ok(Regions {
        cells,
        strength,
        regions,
        threshold,
        computed,
    })
}

/// Appends the points with `strength_of(point) > threshold` and their strengths (in point
/// order) and returns the number of computable points (strength not NaN; NaN exactly where
/// the criterion value is). Blocks of 64 points: a branch-free pass marks the points above the
/// threshold in a bit mask, then only those are pushed (a branch per point on "above?"
/// mispredicts at every region boundary).
#[inline(always)]
fn select_above(
    len: usize,
    strength_of: impl Fn(usize) -> f64,
    threshold: f64,
    cells: &mut Vec<usize>,
    strength: &mut Vec<f64>,
) -> usize {
    let mut computed = 0;
    let mut block = 0;
    while block < len {
        let width = 64.min(len - block);
        let mut above = 0u64;
        if width == 64 {
            // A constant trip count: compiled to vector compares and a mask extraction.
            for l in 0..64 {
                let s = strength_of(block + l);
                computed += usize::from(!s.is_nan());
                above |= u64::from(s > threshold) << l;
            }
        } else {
            for l in 0..width {
                let s = strength_of(block + l);
                computed += usize::from(!s.is_nan());
                above |= u64::from(s > threshold) << l;
            }
        }
        while above != 0 {
            let flat = block + above.trailing_zeros() as usize;
            above &= above - 1;
            cells.push(flat);
            strength.push(strength_of(flat));
        }
        block += width;
    }
    computed
}

/// Weighted centroid (fractional index) and peak position of a region.
/// The peak is the maximum over cells with a complete stencil (`accurate`) when the region has
/// any, so that the overshoot of a one-sided difference next to a masked vector is not taken
/// for the peak.
fn centroid_and_peak(
    region: &[usize],
    r: &Regions,
    space: &Space,
    accurate: &impl Fn(usize) -> bool,
) -> ([f64; 3], usize) {
    let shift = r.threshold.min(0.0);
    let (mut acc, mut wsum) = ([0.0; 3], 0.0);
    let mut best = region[0];
    let mut best_acc: Option<usize> = None;
    for &p in region {
        if accurate(r.cells[p]) && best_acc.is_none_or(|b| r.strength[p] > r.strength[b]) {
            best_acc = Some(p);
        }
        let w = r.strength[p] - shift;
        let c = space.coords(r.cells[p]);
        for a in 0..3 {
            acc[a] += w * c[a] as f64;
        }
        wsum += w;
        if r.strength[p] > r.strength[best] {
            best = p;
        }
    }
    let centroid = if wsum > 0.0 && wsum.is_finite() {
        acc.map(|x| x / wsum)
    } else {
        let n = region.len() as f64;
        let mut m = [0.0; 3];
        for &p in region {
            let c = space.coords(r.cells[p]);
            for a in 0..3 {
                m[a] += c[a] as f64 / n;
            }
        }
        m
    };
    (centroid, r.cells[best_acc.unwrap_or(best)])
}

/// Half-width of the peak-fit window: half the equivalent radius in cells, 1 to 4.
fn fit_half_width(cells: usize) -> usize {
    let r_eq = (cells as f64 / std::f64::consts::PI).sqrt();
    ((r_eq / 2.0).round() as usize).clamp(1, 4)
}

/// Windowed quadratic peak fit in a plane, re-centred on the rounded vertex until it stays
/// (at most 4 fits). Samples are the computed strengths of cells with a complete stencil
/// (`accurate`), the window widened by up to 2 cells until it holds 9 of them, or else all
/// computed cells of the nominal window.
/// Returns the fractional index, or `None` when a fit is not a maximum inside its window.
fn plane_peak_fit(
    peak: usize,
    space: &Space,
    w: usize,
    strength_at: &impl Fn(usize) -> f64,
    accurate: &impl Fn(usize) -> bool,
) -> Option<[f64; 3]> {
    let (nx, ny) = (space.n[0] as isize, space.n[1] as isize);
    let w = w as isize;
    let mut c = space.coords(peak).map(|x| x as isize);
    let mut samples = Vec::with_capacity(((2 * w + 1) * (2 * w + 1)) as usize);
    for _ in 0..4 {
        // Accurate cells in the window, widened by up to 2 cells until there are 9; else all
        // computed cells of the nominal window.
        let mut fit = None;
        for (extra, only_accurate) in [(0, true), (1, true), (2, true), (0, false)] {
            let ww = w + extra;
            samples.clear();
            for dy in -ww..=ww {
                for dx in -ww..=ww {
                    let (x, y) = (c[0] + dx, c[1] + dy);
                    if x >= 0 && y >= 0 && x < nx && y < ny {
                        let f = space.flat([x as usize, y as usize, 0]);
                        let v = strength_at(f);
                        if v.is_finite() && (!only_accurate || accurate(f)) {
                            samples.push((dx as f64, dy as f64, v));
                        }
                    }
                }
            }
            if samples.len() >= 9 || !only_accurate {
                fit = quadratic_peak(&samples, ww as f64);
                break;
            }
        }
        let (dx, dy) = fit?;
        let (sx, sy) = (dx.round() as isize, dy.round() as isize);
        let next = [c[0] + sx, c[1] + sy, 0];
        if (sx == 0 && sy == 0) || next[0] < 0 || next[1] < 0 || next[0] >= nx || next[1] >= ny {
            return Some([c[0] as f64 + dx, c[1] as f64 + dy, 0.0]);
        }
        c = next;
    }
    None
}

/// Per-axis least-squares parabola (half-width `w`) through `peak` on the strength; returns the
/// fractional index and whether every axis could be fitted.
fn axis_peak(
    peak: usize,
    space: &Space,
    dims: usize,
    w: usize,
    strength_at: &impl Fn(usize) -> f64,
) -> ([f64; 3], bool) {
    let c = space.coords(peak);
    let mut pos = c.map(|x| x as f64);
    let mut ok = true;
    for a in 0..dims {
        let mut samples = Vec::with_capacity(2 * w + 1);
        for k in -(w as isize)..=(w as isize) {
            let x = c[a] as isize + k;
            if x < 0 || x >= space.n[a] as isize {
                continue;
            }
            let mut q = c;
            q[a] = x as usize;
            let v = strength_at(space.flat(q));
            if v.is_finite() {
                samples.push((k as f64, v));
            }
        }
        match parabola_peak(&samples) {
            Some(d) => pos[a] += d,
            None => ok = false,
        }
    }
    (pos, ok)
}

/// Whether a cell's stencil (half-width `hw` along each axis) is complete.
fn full_stencil(
    flat: usize,
    space: &Space,
    dims: usize,
    hw: usize,
    is_invalid: &impl Fn(usize) -> bool,
) -> bool {
    let c = space.coords(flat);
    for a in 0..dims {
        for k in 1..=hw {
            for sgn in [-1isize, 1] {
                let x = c[a] as isize + sgn * k as isize;
                if x < 0 || x >= space.n[a] as isize {
                    return false;
                }
                let mut q = c;
                q[a] = x as usize;
                if is_invalid(space.flat(q)) {
                    return false;
                }
            }
        }
    }
    true
}

/// Flags shared by planes and volumes.
fn region_flags(
    region: &[usize],
    r: &Regions,
    space: &Space,
    dims: usize,
    hw: usize,
    is_invalid: &impl Fn(usize) -> bool,
) -> Vec<CandidateFlag> {
    let mut flags = Vec::new();
    let mut nb = Vec::with_capacity(26);
    let (mut edge, mut inval, mut reduced) = (false, false, false);
    for &p in region {
        let f = r.cells[p];
        let c = space.coords(f);
        if (0..dims).any(|a| c[a] == 0 || c[a] + 1 == space.n[a]) {
            edge = true;
        }
        if !inval {
            space.neighbours(f, &mut nb);
            inval = nb.iter().any(|&q| is_invalid(q));
        }
        if !reduced && !full_stencil(f, space, dims, hw, is_invalid) {
            reduced = true;
        }
    }
    if edge {
        flags.push(CandidateFlag::TouchesEdge);
    }
    if inval {
        flags.push(CandidateFlag::TouchesInvalid);
    }
    if reduced {
        flags.push(CandidateFlag::ReducedStencil);
    }
    flags
}

/// Candidates of a plane from a precomputed raw criterion field (as returned by
/// [`Criterion::plane_field`] with the same settings). Useful when the field is also written
/// out; [`detect_plane`] computes it itself.
///
/// Errors: [`DetectError::InvalidSetting`] when `raw` does not have the field's shape;
/// [`DetectError::NothingComputable`] for a relative threshold on a field with no computed
/// value.
pub fn plane_candidates(
    field: &PlaneField,
    raw: &Array2<f64>,
    settings: &DetectionSettings,
) -> Result<Detection<PlaneCandidate>, DetectError> {
    let g = field.grid();
    let (nx, ny) = (g.x().len(), g.y().len());
    if raw.dim() != (ny, nx) {
        return Err(DetectError::InvalidSetting {
            name: "criterion field shape",
            value: format!("{:?}", raw.dim()),
            reason: "must equal the field's [ny, nx]",
        });
    }
    let criterion = settings.criterion();
    let raw_std = raw.as_standard_layout();
    let raw_s = raw_std.as_slice().expect("standard layout");
    let space = Space { n: [nx, ny, 1] };
    let coords = Coords {
        origin: [g.x().origin(), g.y().origin(), 0.0],
        spacing: [g.x().spacing(), g.y().spacing(), 1.0],
    };
    let r = find_regions(raw_s.len(), |f| raw_s[f], criterion, settings, &space)?;
    let valid = field.valid().as_standard_layout();
    let valid_s = valid.as_slice().expect("standard layout");
    let is_invalid = |f: usize| !valid_s[f];
    let invalid: Vec<usize> = (0..valid_s.len()).filter(|&f| !valid_s[f]).collect();
    let ctx = PlaneCtx::new(field, settings.scheme(), settings.edge_order()).ok();
    let strength_at = |f: usize| criterion.strength(raw_s[f]);
    let hw = match criterion {
        Criterion::Gamma1 | Criterion::Gamma2 => settings.gamma_radius(),
        _ => settings.scheme().half_width(),
    };
    let cell_area = g.cell_area();
    let mut out = Vec::with_capacity(r.regions.len());
    for (id, (region, was_split)) in r.regions.iter().enumerate() {
        let accurate = |f: usize| full_stencil(f, &space, 2, hw, &is_invalid);
        let (cen, peak) = centroid_and_peak(region, &r, &space, &accurate);
        let mut flags = region_flags(region, &r, &space, 2, hw, &is_invalid);
        if *was_split {
            flags.push(CandidateFlag::Split);
        }
        // Sub-grid peak: windowed 2D quadratic, else per-axis parabolas.
        let pc = space.coords(peak);
        let w = fit_half_width(region.len());
        // From the maximum cell; failing that, from the cell nearest the centroid.
        let cen_cell = space.flat([cen[0].round() as usize, cen[1].round() as usize, 0]);
        let fit = plane_peak_fit(peak, &space, w, &strength_at, &accurate)
            .or_else(|| plane_peak_fit(cen_cell, &space, w, &strength_at, &accurate));
        let pos = match fit {
            Some(p) => p,
            None => {
                flags.push(CandidateFlag::PeakFitFallback);
                axis_peak(peak, &space, 2, w, &strength_at).0
            }
        };
        // Sense.
        let sum: f64 = if criterion.is_signed() {
            region.iter().map(|&p| raw_s[r.cells[p]]).sum()
        } else {
            ctx.as_ref().map_or(0.0, |ctx| {
                region
                    .iter()
                    .filter_map(|&p| {
                        let c = space.coords(r.cells[p]);
                        ctx.vorticity_at(c[1], c[0])
                    })
                    .sum()
            })
        };
        let sense = if sum > 0.0 {
            1
        } else if sum < 0.0 {
            -1
        } else {
            flags.push(CandidateFlag::SenseUndetermined);
            0
        };
        let ratio = ctx
            .as_ref()
            .and_then(|ctx| ctx.tensor_at(pc[1], pc[0]))
            .and_then(|t| swirling_strength::plane_swirl(&t))
            .map(|s| s.inverse_spiralling_ratio());
        if ratio.is_none() {
            flags.push(CandidateFlag::SpirallingRatioUnavailable);
        }
        let area = region.len() as f64 * cell_area;
        let phys = |p: [f64; 3]| {
            let x = coords.at(p);
            [x[0], x[1]]
        };
        flags.sort();
        flags.dedup();
        out.push(PlaneCandidate {
            id,
            centroid: phys(cen),
            peak: phys(pos),
            peak_index: [pc[1], pc[0]],
            sense,
            equivalent_radius: (area / std::f64::consts::PI).sqrt(),
            peak_value: raw_s[peak],
            cells: region.len(),
            area,
            edge_distance: edge_distance(cen, &space, &coords, 2),
            invalid_distance: nearest_invalid(cen, &space, &coords, &invalid, is_invalid),
            inverse_spiralling_ratio: ratio,
            region: region
                .iter()
                .map(|&p| {
                    let c = space.coords(r.cells[p]);
                    [c[1], c[0]]
                })
                .collect(),
            flags,
        });
    }
    Ok(Detection {
        criterion,
        threshold: r.threshold,
        computed_points: r.computed,
        candidates: out,
    })
}

/// Vortex-core candidates of a plane, with the resolved threshold.
///
/// Errors: [`DetectError::AxisTooShort`] for an axis of one point (derivative criteria),
/// [`DetectError::NothingComputable`] for a relative threshold with no computed value.
pub fn detect_plane_report(
    field: &PlaneField,
    settings: &DetectionSettings,
) -> Result<Detection<PlaneCandidate>, DetectError> {
    let raw = settings.criterion().plane_field(
        field,
        settings.scheme(),
        settings.edge_order(),
        settings.gamma_radius(),
    )?;
    plane_candidates(field, &raw, settings)
}

/// Vortex-core candidates of a plane (see [`detect_plane_report`] for the errors).
pub fn detect_plane(
    field: &PlaneField,
    settings: &DetectionSettings,
) -> Result<Vec<PlaneCandidate>, DetectError> {
    detect_plane_report(field, settings).map(|d| d.candidates)
}

/// Region candidates of a volume from a precomputed raw criterion field (as returned by
/// [`Criterion::volume_field`] with the same settings).
pub fn volume_candidates(
    field: &VolumeField,
    raw: &Array3<f32>,
    settings: &DetectionSettings,
) -> Result<Detection<VolumeCandidate>, DetectError> {
    let g = field.grid();
    let z = g.z().expect("a VolumeField has a z axis");
    let (nx, ny, nz) = (g.x().len(), g.y().len(), z.len());
    if raw.dim() != (nz, ny, nx) {
        return Err(DetectError::InvalidSetting {
            name: "criterion field shape",
            value: format!("{:?}", raw.dim()),
            reason: "must equal the field's [nz, ny, nx]",
        });
    }
    let criterion = settings.criterion();
    let raw_std = raw.as_standard_layout();
    let raw32 = raw_std.as_slice().expect("standard layout");
    let space = Space { n: [nx, ny, nz] };
    let coords = Coords {
        origin: [g.x().origin(), g.y().origin(), z.origin()],
        spacing: [g.x().spacing(), g.y().spacing(), z.spacing()],
    };
    // Thresholding reads the f32 field in place; the sparse lists hold only above-threshold cells.
    let r = find_regions(
        raw32.len(),
        |f| raw32[f] as f64,
        criterion,
        settings,
        &space,
    )?;
    let valid = field.valid().as_standard_layout();
    let valid_s = valid.as_slice().expect("standard layout");
    let is_invalid = |f: usize| !valid_s[f];
    let invalid: Vec<usize> = (0..valid_s.len()).filter(|&f| !valid_s[f]).collect();
    let ctx = VolumeCtx::new(field, settings.scheme(), settings.edge_order())?;
    let strength_at = |f: usize| criterion.strength(raw32[f] as f64);
    let voxel = (g.x().spacing() * g.y().spacing() * z.spacing()).abs();
    let mut out = Vec::with_capacity(r.regions.len());
    for (id, (region, was_split)) in r.regions.iter().enumerate() {
        let hw = settings.scheme().half_width();
        let accurate = |f: usize| full_stencil(f, &space, 3, hw, &is_invalid);
        let (cen, peak) = centroid_and_peak(region, &r, &space, &accurate);
        let mut flags = region_flags(region, &r, &space, 3, hw, &is_invalid);
        if *was_split {
            flags.push(CandidateFlag::Split);
        }
        let (pos, ok) = axis_peak(peak, &space, 3, fit_half_width(region.len()), &strength_at);
        if !ok {
            flags.push(CandidateFlag::PeakFitFallback);
        }
        let pc = space.coords(peak);
        let swirl = ctx
            .tensor_at(pc[2], pc[1], pc[0])
            .and_then(|t| swirling_strength::volume_swirl(&t));
        let swirl_axis = swirl.and_then(|s| s.axis);
        if swirl_axis.is_none() {
            flags.push(CandidateFlag::SwirlAxisUnavailable);
        }
        let ratio = swirl.map(|s| s.inverse_spiralling_ratio());
        if ratio.is_none() {
            flags.push(CandidateFlag::SpirallingRatioUnavailable);
        }
        let pts: Vec<[f64; 3]> = region
            .iter()
            .map(|&p| coords.at(space.coords(r.cells[p]).map(|x| x as f64)))
            .collect();
        let principal = principal_axis(&pts);
        if principal.is_none() {
            flags.push(CandidateFlag::PrincipalAxisUndefined);
        }
        flags.sort();
        flags.dedup();
        out.push(VolumeCandidate {
            id,
            centroid: coords.at(cen),
            peak: coords.at(pos),
            peak_index: [pc[2], pc[1], pc[0]],
            peak_value: raw32[peak] as f64,
            voxels: region.len(),
            volume: region.len() as f64 * voxel,
            principal_axis: principal,
            swirl_axis,
            inverse_spiralling_ratio: ratio,
            edge_distance: edge_distance(cen, &space, &coords, 3),
            invalid_distance: nearest_invalid(cen, &space, &coords, &invalid, is_invalid),
            region: region
                .iter()
                .map(|&p| {
                    let c = space.coords(r.cells[p]);
                    [c[2], c[1], c[0]]
                })
                .collect(),
            flags,
        });
    }
    Ok(Detection {
        criterion,
        threshold: r.threshold,
        computed_points: r.computed,
        candidates: out,
    })
}

/// Region candidates of a volume, with the resolved threshold.
///
/// Errors: [`DetectError::Unsupported`] for Γ1/Γ2, [`DetectError::AxisTooShort`] for an axis of
/// one point, [`DetectError::NothingComputable`] for a relative threshold with no computed
/// value.
pub fn detect_volume_report(
    field: &VolumeField,
    settings: &DetectionSettings,
) -> Result<Detection<VolumeCandidate>, DetectError> {
    let raw = settings
        .criterion()
        .volume_field(field, settings.scheme(), settings.edge_order())?;
    volume_candidates(field, &raw, settings)
}

/// Region candidates of a volume (see [`detect_volume_report`] for the errors).
pub fn detect_volume(
    field: &VolumeField,
    settings: &DetectionSettings,
) -> Result<Vec<VolumeCandidate>, DetectError> {
    detect_volume_report(field, settings).map(|d| d.candidates)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn regions(cells: Vec<usize>, strength: Vec<f64>, threshold: f64) -> Regions {
        Regions {
            cells,
            strength,
            regions: Vec::new(),
            threshold,
            computed: 0,
        }
    }

    #[test]
    fn fit_window_grows_with_the_region_and_is_bounded() {
        // Half the equivalent radius √(cells/π), clamped to 1..=4 (documented rule).
        assert_eq!(fit_half_width(9), 1);
        assert_eq!(fit_half_width(50), 2); // r_eq = 3.99
        assert_eq!(fit_half_width(120), 3); // r_eq = 6.18
        assert_eq!(fit_half_width(10_000), 4);
    }

    #[test]
    fn centroid_is_strength_weighted_and_peak_prefers_full_stencil_cells() {
        // Three cells in a row (x = 0, 1, 2) with strengths 1, 2, 5: centroid x = (0 + 2 + 10)/8.
        let space = Space { n: [3, 1, 1] };
        let r = regions(vec![0, 1, 2], vec![1.0, 2.0, 5.0], 0.5);
        let (c, peak) = centroid_and_peak(&[0, 1, 2], &r, &space, &|_| true);
        // Exact binary fractions.
        approx::assert_relative_eq!(c[0], 1.5, max_relative = 1e-15);
        assert_eq!(peak, 2);
        // If cell 2 has a reduced stencil, the peak is the best full-stencil cell.
        let (_, peak) = centroid_and_peak(&[0, 1, 2], &r, &space, &|f| f != 2);
        assert_eq!(peak, 1);
    }
}
