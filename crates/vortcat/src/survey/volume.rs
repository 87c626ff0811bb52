//! One volume snapshot through the tube survey (`--geometry volume`): `vortcat_tube` streams
//! the snapshot from the file in slabs of z-planes, and its stations and tube summaries become
//! the rows of `stations.csv` and `tubes.csv` (columns in `docs/catalog.md`). Values are in the
//! input's units, as in the plane catalog.

use std::path::Path;
use std::time::Instant;

use anyhow::Context;
use serde::{de::DeserializeOwned, Deserialize, Serialize};
use vortcat_field::SnapshotReader;
use vortcat_tube::{survey_tubes, ReaderVolume, Station, Tube};

use super::catalog::{write_table, write_units};
use super::store::Timing;
use crate::plan::Plan;

/// One row of `stations.csv`: a station of a tube's core line.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StationRow {
    /// Snapshot identifier `file#index`.
    pub snapshot: String,
    /// Source file.
    pub file: String,
    /// Index in the file's stack.
    pub index: usize,
    /// Tube number within the snapshot, from 1.
    pub tube: usize,
    /// Station number along the core line, from 1.
    pub station: usize,
    /// Arc length of the traced line from the first station.
    pub arc_length: f64,
    /// Centre x (fitted; traced when not fitted).
    pub x: f64,
    /// Centre y.
    pub y: f64,
    /// Centre z.
    pub z: f64,
    /// Unit local axis, x component.
    pub axis_x: f64,
    /// Unit local axis, y component.
    pub axis_y: f64,
    /// Unit local axis, z component.
    pub axis_z: f64,
    /// Chosen model.
    pub model: String,
    /// Fit status.
    pub status: String,
    /// Circulation about the local axis.
    pub circulation: Option<f64>,
    /// Core radius rc.
    pub core_radius: Option<f64>,
    /// Peak azimuthal velocity.
    pub peak_velocity: Option<f64>,
    /// Strain rate from the fitted radial inflow (Burgers).
    pub strain_rate_inflow: Option<f64>,
    /// Axial strain rate ê·S·ê.
    pub strain_rate_axial: Option<f64>,
    /// rc / √(4ν/γ_axial).
    pub balance_ratio: Option<f64>,
    /// Convection velocity x.
    pub conv_u: Option<f64>,
    /// Convection velocity y.
    pub conv_v: Option<f64>,
    /// Convection velocity z.
    pub conv_w: Option<f64>,
    /// |ω| at the centre.
    pub vorticity: Option<f64>,
    /// Valid samples in the window.
    pub n_points: usize,
    /// Coefficient of determination.
    pub r2: Option<f64>,
    /// RMS velocity residual.
    pub residual_rms: Option<f64>,
    /// Fitting-window radius.
    pub window_radius: f64,
    /// Equivalent radius of the thresholded section.
    pub section_radius: f64,
    /// rc/η.
    pub core_radius_eta: Option<f64>,
    /// Γ/ν.
    pub reynolds: Option<f64>,
    /// γ_axial·τ_η.
    pub strain_rate_tau: Option<f64>,
    /// Quality flags separated by `;`.
    pub flags: String,
}

/// One row of `tubes.csv`: the summary of a tube (medians over its converged stations).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TubeRow {
    /// Snapshot identifier `file#index`.
    pub snapshot: String,
    /// Source file.
    pub file: String,
    /// Index in the file's stack.
    pub index: usize,
    /// Tube number within the snapshot, from 1.
    pub tube: usize,
    /// Points above the threshold.
    pub voxels: usize,
    /// Length of the traced core line.
    pub length: f64,
    /// The line closes through periodic faces.
    pub closed: bool,
    /// Unit orientation x.
    pub orientation_x: f64,
    /// Unit orientation y.
    pub orientation_y: f64,
    /// Unit orientation z.
    pub orientation_z: f64,
    /// Centroid x.
    pub centroid_x: f64,
    /// Centroid y.
    pub centroid_y: f64,
    /// Centroid z.
    pub centroid_z: f64,
    /// Largest criterion strength in the region.
    pub peak_strength: f64,
    /// Threshold on the criterion strength (the snapshot's).
    pub threshold: f64,
    /// Stations traced.
    pub stations: usize,
    /// Stations with a converged fit.
    pub fitted: usize,
    /// Median rc.
    pub core_radius: Option<f64>,
    /// Median Γ.
    pub circulation: Option<f64>,
    /// Median peak azimuthal velocity.
    pub peak_velocity: Option<f64>,
    /// Median axial strain rate.
    pub strain_rate_axial: Option<f64>,
    /// Median balance ratio.
    pub balance_ratio: Option<f64>,
    /// Median rc/η.
    pub core_radius_eta: Option<f64>,
    /// Median Γ/ν.
    pub reynolds: Option<f64>,
    /// Median γ_axial·τ_η.
    pub strain_rate_tau: Option<f64>,
}

/// `stations.csv` columns: name, unit kind, description (the header is written from these).
pub const STATION_COLUMNS: &[(&str, &str, &str)] = &[
    ("snapshot", "", "snapshot identifier file#index"),
    ("file", "", "source file"),
    ("index", "", "index in the file's stack"),
    ("tube", "", "tube number within the snapshot, from 1"),
    ("station", "", "station number along the core line, from 1"),
    ("arc_length", "length", "arc length from the first station"),
    ("x", "length", "centre x (fitted; traced when not fitted)"),
    ("y", "length", "centre y"),
    ("z", "length", "centre z"),
    ("axis_x", "", "unit local axis (vorticity direction) x"),
    ("axis_y", "", "unit local axis y"),
    ("axis_z", "", "unit local axis z"),
    ("model", "", "chosen model"),
    ("status", "", "fit status"),
    (
        "circulation",
        "length^2/time",
        "circulation about the local axis",
    ),
    ("core_radius", "length", "core radius rc"),
    ("peak_velocity", "velocity", "peak azimuthal velocity"),
    (
        "strain_rate_inflow",
        "1/time",
        "strain rate from the fitted inflow (Burgers)",
    ),
    (
        "strain_rate_axial",
        "1/time",
        "axial strain rate e.S.e (mean over a short cylinder about the centre)",
    ),
    ("balance_ratio", "", "rc / sqrt(4 nu / strain_rate_axial)"),
    ("conv_u", "velocity", "convection velocity x"),
    ("conv_v", "velocity", "convection velocity y"),
    ("conv_w", "velocity", "convection velocity z"),
    ("vorticity", "1/time", "vorticity magnitude at the centre"),
    ("n_points", "", "valid samples in the window"),
    ("r2", "", "coefficient of determination"),
    ("residual_rms", "velocity", "RMS velocity residual"),
    ("window_radius", "length", "fitting-window radius"),
    (
        "section_radius",
        "length",
        "equivalent radius of the thresholded section",
    ),
    ("core_radius_eta", "", "rc / eta"),
    ("reynolds", "", "circulation Reynolds number Gamma/nu"),
    ("strain_rate_tau", "", "strain_rate_axial * tau_eta"),
    ("flags", "", "quality flags separated by ';'"),
];

/// `tubes.csv` columns.
pub const TUBE_COLUMNS: &[(&str, &str, &str)] = &[
    ("snapshot", "", "snapshot identifier file#index"),
    ("file", "", "source file"),
    ("index", "", "index in the file's stack"),
    ("tube", "", "tube number within the snapshot, from 1"),
    ("voxels", "", "points above the threshold"),
    ("length", "length", "length of the traced core line"),
    ("closed", "", "the line closes through periodic faces"),
    ("orientation_x", "", "unit orientation x"),
    ("orientation_y", "", "unit orientation y"),
    ("orientation_z", "", "unit orientation z"),
    ("centroid_x", "length", "mean station position x"),
    ("centroid_y", "length", "mean station position y"),
    ("centroid_z", "length", "mean station position z"),
    (
        "peak_strength",
        "criterion",
        "largest criterion strength in the region",
    ),
    (
        "threshold",
        "criterion",
        "threshold on the criterion strength",
    ),
    ("stations", "", "stations traced"),
    ("fitted", "", "stations with a converged fit"),
    ("core_radius", "length", "median rc"),
    ("circulation", "length^2/time", "median circulation"),
    (
        "peak_velocity",
        "velocity",
        "median peak azimuthal velocity",
    ),
    ("strain_rate_axial", "1/time", "median axial strain rate"),
    ("balance_ratio", "", "median balance ratio"),
    ("core_radius_eta", "", "median rc / eta"),
    ("reynolds", "", "median Gamma/nu"),
    ("strain_rate_tau", "", "median strain_rate_axial * tau_eta"),
];

/// What a volume snapshot produced.
pub struct VolumeOutcome {
    /// Station rows, by tube then station.
    pub stations: Vec<StationRow>,
    /// Tube rows, by tube number.
    pub tubes: Vec<TubeRow>,
    /// Seconds reading, detecting (criterion and tracing), fitting.
    pub timing: Timing,
}

fn station_row(snapshot: &str, file: &str, index: usize, s: &Station) -> StationRow {
    StationRow {
        snapshot: snapshot.to_string(),
        file: file.to_string(),
        index,
        tube: s.tube,
        station: s.station,
        arc_length: s.arc_length,
        x: s.position[0],
        y: s.position[1],
        z: s.position[2],
        axis_x: s.axis[0],
        axis_y: s.axis[1],
        axis_z: s.axis[2],
        model: s.model.clone(),
        status: s.status.clone(),
        circulation: s.circulation,
        core_radius: s.core_radius,
        peak_velocity: s.peak_velocity,
        strain_rate_inflow: s.strain_rate_inflow,
        strain_rate_axial: s.strain_rate_axial,
        balance_ratio: s.balance_ratio,
        conv_u: s.convection[0],
        conv_v: s.convection[1],
        conv_w: s.convection[2],
        vorticity: s.vorticity,
        n_points: s.n_points,
        r2: s.r2,
        residual_rms: s.residual_rms,
        window_radius: s.window_radius,
        section_radius: s.section_radius,
        core_radius_eta: s.core_radius_eta,
        reynolds: s.reynolds,
        strain_rate_tau: s.strain_rate_tau,
        flags: {
            let mut f = s.flags.clone();
            f.sort();
            f.dedup();
            f.join(";")
        },
    }
}

fn tube_row(snapshot: &str, file: &str, index: usize, t: &Tube, threshold: f64) -> TubeRow {
    TubeRow {
        snapshot: snapshot.to_string(),
        file: file.to_string(),
        index,
        tube: t.tube,
        voxels: t.voxels,
        length: t.length,
        closed: t.closed,
        orientation_x: t.orientation[0],
        orientation_y: t.orientation[1],
        orientation_z: t.orientation[2],
        centroid_x: t.centroid[0],
        centroid_y: t.centroid[1],
        centroid_z: t.centroid[2],
        peak_strength: t.peak_strength,
        threshold,
        stations: t.stations,
        fitted: t.fitted,
        core_radius: t.core_radius,
        circulation: t.circulation,
        peak_velocity: t.peak_velocity,
        strain_rate_axial: t.strain_rate_axial,
        balance_ratio: t.balance_ratio,
        core_radius_eta: t.core_radius_eta,
        reynolds: t.reynolds,
        strain_rate_tau: t.strain_rate_tau,
    }
}

/// Surveys the tubes of volume snapshot `index` of `reader`, streamed in slabs of
/// `plan.tubes.slab_planes` z-planes (the snapshot is never read whole). Errors are
/// per-snapshot failures.
pub fn process(
    reader: &mut dyn SnapshotReader,
    index: usize,
    file: &str,
    plan: &Plan,
) -> anyhow::Result<VolumeOutcome> {
    let started = Instant::now();
    let mut source = ReaderVolume::new(reader, index)?;
    let survey = survey_tubes(&mut source, &plan.tubes)?;
    log::debug!(
        "{file}#{index}: {} tubes, {} stations in {:.2} s",
        survey.tubes.len(),
        survey.stations.len(),
        started.elapsed().as_secs_f64()
    );
    let snapshot = format!("{file}#{index}");
    let s = survey.stats;
    Ok(VolumeOutcome {
        stations: survey
            .stations
            .iter()
            .map(|st| station_row(&snapshot, file, index, st))
            .collect(),
        tubes: survey
            .tubes
            .iter()
            .map(|t| tube_row(&snapshot, file, index, t, survey.threshold))
            .collect(),
        timing: Timing {
            read: s.read_seconds,
            detect: s.detect_seconds + s.trace_seconds,
            fit: s.fit_seconds,
        },
    })
}

/// Writes `stations.csv`, `stations.jsonl`, `tubes.csv`, `tubes.jsonl` and their units tables
/// `stations_units.csv`, `tubes_units.csv`. Rows are written in the order given (snapshot
/// order, then tube, then station).
pub fn write_outputs(
    out: &Path,
    stations: &[StationRow],
    tubes: &[TubeRow],
    units: &vortcat_field::Units,
    criterion: &str,
) -> anyhow::Result<()> {
    write_table(out, "stations", STATION_COLUMNS, stations)?;
    write_table(out, "tubes", TUBE_COLUMNS, tubes)?;
    write_units(
        &out.join("stations_units.csv"),
        STATION_COLUMNS,
        units,
        criterion,
    )?;
    write_units(&out.join("tubes_units.csv"), TUBE_COLUMNS, units, criterion)
}

/// Reads a JSON-lines table written by [`write_outputs`]; a missing file is an empty table
/// (a plane survey's shard).
pub fn read_jsonl<T: DeserializeOwned>(path: &Path) -> anyhow::Result<Vec<T>> {
    let text = match std::fs::read_to_string(path) {
        Ok(t) => t,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Vec::new()),
        Err(e) => return Err(e).with_context(|| format!("{}: cannot read", path.display())),
    };
    text.lines()
        .enumerate()
        .map(|(i, line)| {
            serde_json::from_str(line)
                .map_err(|e| anyhow::anyhow!("{} line {}: {e}", path.display(), i + 1))
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn header_of<T: Serialize>(row: &T) -> String {
        let mut w = csv::Writer::from_writer(Vec::new());
        w.serialize(row).unwrap();
        let text = String::from_utf8(w.into_inner().unwrap()).unwrap();
        text.lines().next().unwrap().to_string()
    }

    #[test]
    fn columns_match_the_row_fields() {
        let station = Station {
            tube: 2,
            station: 3,
            arc_length: 1.5,
            position: [1.0, 2.0, 3.0],
            axis: [0.0, 0.6, 0.8],
            model: "burgers".into(),
            status: "converged".into(),
            circulation: Some(1.0),
            core_radius: Some(0.5),
            peak_velocity: Some(0.2),
            strain_rate_inflow: None,
            strain_rate_axial: Some(0.1),
            balance_ratio: None,
            convection: [Some(0.0), None, Some(1.0)],
            vorticity: Some(3.0),
            n_points: 40,
            r2: Some(0.99),
            residual_rms: Some(0.01),
            window_radius: 2.0,
            section_radius: 0.7,
            core_radius_eta: None,
            reynolds: None,
            strain_rate_tau: None,
            flags: vec!["window_capped".into(), "low_r2".into()],
        };
        let row = station_row("a.h5#0", "a.h5", 0, &station);
        assert_eq!(row.flags, "low_r2;window_capped");
        assert_eq!(row.conv_v, None);
        let names: Vec<&str> = STATION_COLUMNS.iter().map(|c| c.0).collect();
        assert_eq!(header_of(&row), names.join(","));
        let tube = Tube {
            tube: 1,
            voxels: 100,
            length: 10.0,
            closed: false,
            orientation: [0.0, 0.0, 1.0],
            centroid: [0.0; 3],
            peak_strength: 5.0,
            stations: 5,
            fitted: 4,
            core_radius: Some(0.5),
            circulation: Some(1.0),
            peak_velocity: None,
            strain_rate_axial: None,
            balance_ratio: None,
            core_radius_eta: None,
            reynolds: None,
            strain_rate_tau: None,
        };
        let row = tube_row("a.h5#0", "a.h5", 0, &tube, 0.25);
        let names: Vec<&str> = TUBE_COLUMNS.iter().map(|c| c.0).collect();
        assert_eq!(header_of(&row), names.join(","));
    }

    #[test]
    fn tables_round_trip_through_json_lines() {
        let dir = tempfile::tempdir().unwrap();
        let rows = vec![TubeRow {
            snapshot: "a.h5#0".into(),
            file: "a.h5".into(),
            index: 0,
            tube: 1,
            voxels: 9,
            length: 4.0,
            closed: true,
            orientation_x: 0.1,
            orientation_y: 0.2,
            orientation_z: 0.3,
            centroid_x: 1.0 / 3.0,
            centroid_y: 0.0,
            centroid_z: -1.0,
            peak_strength: 2.0,
            threshold: 0.5,
            stations: 2,
            fitted: 1,
            core_radius: Some(0.1),
            circulation: None,
            peak_velocity: None,
            strain_rate_axial: None,
            balance_ratio: None,
            core_radius_eta: None,
            reynolds: None,
            strain_rate_tau: None,
        }];
        write_outputs(
            dir.path(),
            &[],
            &rows,
            &vortcat_field::Units::default(),
            "1/s^2",
        )
        .unwrap();
        let back: Vec<TubeRow> = read_jsonl(&dir.path().join("tubes.jsonl")).unwrap();
        assert_eq!(back, rows);
        let stations = std::fs::read_to_string(dir.path().join("stations.csv")).unwrap();
        assert_eq!(stations.lines().count(), 1, "header only");
        let missing: Vec<TubeRow> = read_jsonl(&dir.path().join("none.jsonl")).unwrap();
        assert!(missing.is_empty());
    }
}
