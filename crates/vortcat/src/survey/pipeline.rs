//! One snapshot through the pipeline: detect → window → fit and choose → catalog rows. Also the
//! small function that turns a detected candidate into a fit's first guess, which is the only
//! place where the detection and fitting crates meet.

use rayon::prelude::*;
use vortcat_detect::{detect_plane, CandidateFlag, PlaneCandidate};
use vortcat_field::{Field, PlaneField, Snapshot};
use vortcat_fit::{fit_and_select, CirculationGuess, InitialGuess, Selection, Window};

use super::catalog::CatalogRow;
use crate::plan::Plan;

/// Smallest fitting-window radius, in grid spacings: a 3-spacing circle holds about 29 nodes,
/// enough for the 5–6 parameters of a Burgers fit with some redundancy.
const MIN_WINDOW_SPACINGS: f64 = 3.0;

/// What a snapshot produced.
pub struct Outcome {
    /// Catalog rows, numbered from 1 in detection order.
    pub rows: Vec<CatalogRow>,
    /// Candidates detected.
    pub candidates: usize,
    /// Seconds spent in detection.
    pub detect_seconds: f64,
    /// Seconds spent fitting.
    pub fit_seconds: f64,
}

/// The first guess for a fit from a detected candidate: the sub-grid peak of the criterion as
/// centre (it is less biased by an asymmetric region than the centroid), the detected rotation
/// sense for the sign of Γ, and the core radius left to the fit's own estimate from the peak
/// azimuthal velocity (a thresholded region's size depends on the threshold, not only on rc).
pub fn initial_guess(candidate: &PlaneCandidate) -> InitialGuess {
    let centre = if candidate.peak.iter().all(|c| c.is_finite()) {
        candidate.peak
    } else {
        candidate.centroid
    };
    InitialGuess {
        centre,
        circulation: if candidate.sense == 0 {
            CirculationGuess::FromData
        } else {
            CirculationGuess::Sense(f64::from(candidate.sense))
        },
        core_radius: None,
    }
}

/// The fitting-window radius for a candidate: the configured multiple of its equivalent radius,
/// at least [`MIN_WINDOW_SPACINGS`] grid spacings.
pub fn window_radius(candidate: &PlaneCandidate, plan: &Plan, spacing: f64) -> f64 {
    plan.fit
        .window_radius(candidate.equivalent_radius)
        .max(MIN_WINDOW_SPACINGS * spacing)
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

fn candidate_flags(c: &PlaneCandidate) -> Vec<&'static str> {
    c.flags
        .iter()
        .filter_map(|f| match f {
            CandidateFlag::Split => Some("split_region"),
            CandidateFlag::SenseUndetermined => Some("sense_undetermined"),
            // Other detection notes (a narrowed derivative stencil next to a missing vector, a
            // fallback peak fit) say how the candidate was found, not whether its fit can be
            // trusted; the fit's own flags cover the consequences.
            _ => None,
        })
        .collect()
}

fn row(
    snapshot: &Snapshot,
    file: &str,
    number: usize,
    c: &PlaneCandidate,
    radius: f64,
    fitted: Result<Selection, String>,
) -> CatalogRow {
    let mut row = CatalogRow {
        snapshot: format!("{file}#{}", snapshot.id.index),
        vortex: number,
        file: file.to_string(),
        index: snapshot.id.index,
        time: snapshot.time.and_then(finite),
        x: None,
        y: None,
        sense: c.sense,
        model: String::new(),
        status: String::new(),
        circulation: None,
        circulation_err: None,
        core_radius: None,
        core_radius_err: None,
        strain_rate: None,
        strain_rate_err: None,
        strain_rate_viscous: None,
        viscosity_ratio: None,
        peak_velocity: None,
        conv_u: None,
        conv_v: None,
        reynolds: None,
        n_points: 0,
        residual_rms: None,
        r2: None,
        inflow_p_value: None,
        window_radius: finite(radius),
        detect_x: finite(c.centroid[0]),
        detect_y: finite(c.centroid[1]),
        criterion_peak: finite(c.peak_value),
        equivalent_radius: finite(c.equivalent_radius),
        flags: String::new(),
    };
    let mut flags: Vec<String> = candidate_flags(c).into_iter().map(str::to_string).collect();
    match fitted {
        Err(message) => {
            row.status = "not_fitted".into();
            log::debug!("{}: vortex {number} not fitted: {message}", row.snapshot);
            flags.push("not_fitted".into());
        }
        Ok(selection) => {
            let fit = selection.best_fit();
            let p = &fit.parameters;
            let e = &fit.standard_errors;
            let d = &fit.derived;
            row.x = finite(p.centre[0]);
            row.y = finite(p.centre[1]);
            row.model = fit.model.name().to_string();
            row.status = serde_json::to_value(fit.status)
                .ok()
                .and_then(|v| v.as_str().map(str::to_string))
                .unwrap_or_default();
            let circulation = fit.circulation();
            row.circulation = finite(circulation);
            row.circulation_err = e.model.first().copied().and_then(finite);
            row.core_radius = finite(fit.core_radius());
            row.core_radius_err = e.model.get(1).copied().and_then(finite);
            row.strain_rate = d.strain_rate_inflow.and_then(finite);
            row.strain_rate_err = d.strain_rate_inflow_error.and_then(finite);
            row.strain_rate_viscous = d.strain_rate_from_radius.and_then(finite);
            row.viscosity_ratio = d.viscosity_ratio.and_then(finite);
            row.peak_velocity = finite(d.peak_azimuthal_velocity);
            row.conv_u = finite(p.convection[0]);
            row.conv_v = finite(p.convection[1]);
            row.reynolds = d.circulation_reynolds.and_then(finite);
            row.n_points = fit.n_vectors;
            row.residual_rms = finite(fit.rms_residual);
            row.r2 = finite(fit.r_squared);
            row.inflow_p_value = selection
                .inflow
                .as_ref()
                .map(|i| i.p_value)
                .and_then(finite);
            if circulation.is_finite() && circulation != 0.0 {
                row.sense = if circulation > 0.0 { 1 } else { -1 };
            }
            flags.extend(fit.flags.iter().map(|f| f.name().to_string()));
        }
    }
    flags.sort();
    flags.dedup();
    row.flags = flags.join(";");
    row
}

fn process_plane(
    snapshot: &Snapshot,
    field: &PlaneField,
    file: &str,
    plan: &Plan,
) -> anyhow::Result<Outcome> {
    let started = std::time::Instant::now();
    let candidates =
        detect_plane(field, &plan.detection).map_err(|e| anyhow::anyhow!("detection: {e}"))?;
    let detect_seconds = started.elapsed().as_secs_f64();
    let spacing = field
        .grid()
        .x()
        .spacing()
        .abs()
        .min(field.grid().y().spacing().abs());
    let centres: Vec<[f64; 2]> = candidates.iter().map(|c| initial_guess(c).centre).collect();
    let fit_started = std::time::Instant::now();
    // Vortices are fitted in parallel; collect keeps detection order, so the rows and their
    // numbers do not depend on the thread count.
    let rows: Vec<CatalogRow> = candidates
        .par_iter()
        .enumerate()
        .map(|(i, c)| {
            let guess = initial_guess(c);
            let radius = window_radius(c, plan, spacing);
            let neighbours: Vec<[f64; 2]> = centres
                .iter()
                .enumerate()
                .filter(|&(j, _)| j != i)
                .map(|(_, &p)| p)
                .collect();
            let fitted = Window::from_plane(field, guess.centre, radius)
                .map(|w| w.with_neighbours(&neighbours))
                .and_then(|w| fit_and_select(&plan.models, &w, &guess, &plan.fit))
                .map_err(|e| e.to_string());
            row(snapshot, file, i + 1, c, radius, fitted)
        })
        .collect();
    Ok(Outcome {
        candidates: candidates.len(),
        rows,
        detect_seconds,
        fit_seconds: fit_started.elapsed().as_secs_f64(),
    })
}

/// Runs one snapshot. Errors are per-snapshot failures (recorded, the batch goes on).
pub fn process(snapshot: &Snapshot, file: &str, plan: &Plan) -> anyhow::Result<Outcome> {
    match &snapshot.field {
        Field::Plane(p) => process_plane(snapshot, p, file, plan),
        Field::Volume(_) => anyhow::bail!(
            "volume snapshots are not surveyed by this version (planes only); read planes with --geometry plane"
        ),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn candidate() -> PlaneCandidate {
        PlaneCandidate {
            id: 0,
            centroid: [1.0, 2.0],
            peak: [1.1, 2.1],
            peak_index: [2, 1],
            sense: -1,
            equivalent_radius: 0.5,
            peak_value: 3.0,
            cells: 20,
            area: 0.8,
            edge_distance: 1.0,
            invalid_distance: None,
            inverse_spiralling_ratio: None,
            region: vec![],
            flags: vec![],
        }
    }

    #[test]
    fn guess_uses_the_peak_and_the_sense() {
        let g = initial_guess(&candidate());
        assert_eq!(
            g.centre.map(f64::to_bits),
            [1.1_f64.to_bits(), 2.1_f64.to_bits()]
        );
        assert!(matches!(g.circulation, CirculationGuess::Sense(s) if s < 0.0));
        let mut c = candidate();
        c.peak = [f64::NAN, 2.0];
        c.sense = 0;
        let g = initial_guess(&c);
        assert_eq!(
            g.centre.map(f64::to_bits),
            [1.0_f64.to_bits(), 2.0_f64.to_bits()]
        );
        assert!(matches!(g.circulation, CirculationGuess::FromData));
    }

    #[test]
    fn window_is_a_multiple_of_the_region_but_never_tiny() {
        let plan = Plan::resolve(&crate::config::Config::default()).unwrap();
        let c = candidate();
        let r = window_radius(&c, &plan, 0.01);
        assert!((r - plan.fit.window_multiple * 0.5).abs() < 1e-12);
        let r = window_radius(&c, &plan, 1.0);
        assert!((r - 3.0).abs() < 1e-12, "floor of 3 spacings");
    }
}
