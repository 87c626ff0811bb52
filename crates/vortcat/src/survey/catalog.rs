//! The per-vortex catalog: one row per fitted vortex, written as CSV and as JSON lines, with
//! a units table beside them. Columns are described in `docs/catalog.md`.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use anyhow::Context;

use serde::Serialize;
use serde_json::value::RawValue;

/// One catalog row. `None` is an empty CSV field and a JSON `null`: the value does not apply
/// (e.g. strain rate for a Lamb–Oseen fit) or could not be computed. The type is the report
/// crate's, which reads catalogs back: one definition of the columns for writer and reader.
pub use vortcat_report::Vortex as CatalogRow;

/// Column, unit kind and description, in column order.
pub const COLUMNS: &[(&str, &str, &str)] = &[
    ("snapshot", "", "snapshot identifier file#index"),
    ("vortex", "", "vortex number within the snapshot, from 1"),
    ("file", "", "source file"),
    ("index", "", "index in the file's stack"),
    ("time", "time", "snapshot time from the file"),
    ("x", "length", "fitted centre x"),
    ("y", "length", "fitted centre y"),
    (
        "sense",
        "",
        "+1 counter-clockwise in the x-y plane, -1 clockwise",
    ),
    ("model", "", "chosen model"),
    ("status", "", "fit status"),
    ("circulation", "length^2/time", "circulation"),
    (
        "circulation_err",
        "length^2/time",
        "standard error of the circulation",
    ),
    ("core_radius", "length", "core radius rc"),
    ("core_radius_err", "length", "standard error of rc"),
    (
        "strain_rate",
        "1/time",
        "strain rate from the fitted inflow (Burgers)",
    ),
    (
        "strain_rate_err",
        "1/time",
        "standard error of the strain rate",
    ),
    ("strain_rate_viscous", "1/time", "4 nu / rc^2"),
    (
        "viscosity_ratio",
        "",
        "effective viscosity gamma rc^2/4 over nu",
    ),
    ("peak_velocity", "velocity", "peak azimuthal velocity"),
    ("conv_u", "velocity", "convection velocity x"),
    ("conv_v", "velocity", "convection velocity y"),
    ("reynolds", "", "circulation Reynolds number Gamma/nu"),
    ("n_points", "", "vectors in the fitting window"),
    ("residual_rms", "velocity", "RMS velocity residual"),
    ("r2", "", "coefficient of determination"),
    (
        "inflow_p_value",
        "",
        "p-value of the inflow term (Burgers against Lamb-Oseen)",
    ),
    ("window_radius", "length", "fitting-window radius"),
    ("detect_x", "length", "detection centroid x"),
    ("detect_y", "length", "detection centroid y"),
    (
        "criterion_peak",
        "criterion",
        "peak criterion value of the region",
    ),
    (
        "equivalent_radius",
        "length",
        "sqrt(area/pi) of the detected region",
    ),
    ("flags", "", "quality flags separated by ';'"),
];

/// Rows serialised ahead of the final write: their CSV records (no header) and their JSON
/// lines. Records are independent, so the lines of consecutive groups of rows, concatenated,
/// are byte for byte those of all the rows serialised at once; the survey serialises each
/// snapshot's rows as it finishes (on the writer thread, or in parallel when loading earlier
/// results) instead of all of them on one thread at the end.
#[derive(Debug, Clone, Default)]
pub struct Lines {
    /// CSV records.
    pub csv: Vec<u8>,
    /// JSON lines.
    pub jsonl: Vec<u8>,
}

impl Lines {
    /// The lines of `rows`.
    pub fn of<T: Serialize>(rows: &[T]) -> anyhow::Result<Self> {
        Self::with_json(rows, &json_rows(rows)?)
    }

    /// The lines of `rows` whose JSON texts are at hand (`json[i]` is that of `rows[i]`, as
    /// `serde_json` writes it); the CSV records are serialised here.
    pub fn with_json<T: Serialize>(rows: &[T], json: &[Box<RawValue>]) -> anyhow::Result<Self> {
        let mut w = csv::WriterBuilder::new()
            .has_headers(false)
            .from_writer(Vec::new());
        for r in rows {
            w.serialize(r)?;
        }
        let csv = w.into_inner().map_err(|e| anyhow::anyhow!("{e}"))?;
        let mut jsonl = Vec::with_capacity(json.iter().map(|j| j.get().len() + 1).sum());
        for j in json {
            jsonl.extend_from_slice(j.get().as_bytes());
            jsonl.push(b'\n');
        }
        Ok(Self { csv, jsonl })
    }
}

/// The JSON text of each row (as a JSON line of the catalog and in a snapshot's result file),
/// serialised once.
pub fn json_rows<T: Serialize>(rows: &[T]) -> anyhow::Result<Vec<Box<RawValue>>> {
    Ok(rows
        .iter()
        .map(serde_json::value::to_raw_value)
        .collect::<Result<_, _>>()?)
}

/// Writes `DIR/STEM.csv` (header from `columns`, written even when there are no rows) and the
/// same rows as JSON lines in `DIR/STEM.jsonl`. Used for the plane catalog and the 3D tables.
pub fn write_table<T: Serialize>(
    dir: &Path,
    stem: &str,
    columns: &[(&str, &str, &str)],
    rows: &[T],
) -> anyhow::Result<()> {
    write_lines(dir, stem, columns, &[Lines::of(rows)?])
}

/// [`write_table`] from rows already serialised, in order.
pub fn write_lines(
    dir: &Path,
    stem: &str,
    columns: &[(&str, &str, &str)],
    groups: &[Lines],
) -> anyhow::Result<()> {
    let mut stream = Stream::create(dir, stem, columns)?;
    for group in groups {
        stream.push(group)?;
    }
    stream.finish()
}

/// A catalog table written as it is assembled: the header at once, then each snapshot's
/// [`Lines`] in catalog order, into temporary files beside `DIR/STEM.csv` and
/// `DIR/STEM.jsonl`; [`Stream::finish`] syncs and renames them. The bytes are those of
/// [`write_lines`] with the same groups. A survey streams its catalog while it computes, so
/// that no serialised row is held to the end and the end of the run has no copy of the whole
/// table to make. A stream dropped unfinished (an interrupted or failed run) removes its
/// temporary files; the finished table of an earlier run, if any, is left as it was.
pub struct Stream {
    csv: Unfinished,
    jsonl: Unfinished,
}

/// A file being written through its temporary file.
struct Unfinished {
    path: PathBuf,
    tmp: PathBuf,
    /// `None` once closed (renamed into place, or failed and removed).
    writer: Option<BufWriter<File>>,
}

impl Unfinished {
    fn create(path: PathBuf) -> anyhow::Result<Self> {
        let tmp = crate::survey::store::temporary_beside(&path);
        let file =
            File::create(&tmp).with_context(|| format!("{}: cannot write", tmp.display()))?;
        Ok(Self {
            path,
            tmp,
            writer: Some(BufWriter::with_capacity(1 << 20, file)),
        })
    }

    fn write(&mut self, bytes: &[u8]) -> anyhow::Result<()> {
        let w = self
            .writer
            .as_mut()
            .expect("written only before it is closed");
        w.write_all(bytes)
            .with_context(|| format!("{}: cannot write", self.tmp.display()))
    }

    /// Flushes to disk and renames into place; on failure the temporary file is removed.
    fn close(&mut self) -> anyhow::Result<()> {
        let w = self.writer.take().expect("closed once");
        let tmp = &self.tmp;
        let closed = w
            .into_inner()
            .map_err(|e| anyhow::anyhow!("{}: cannot write: {}", tmp.display(), e.error()))
            .and_then(|file| {
                file.sync_all()
                    .with_context(|| format!("{}: cannot flush to disk", tmp.display()))
            })
            .and_then(|()| {
                std::fs::rename(tmp, &self.path)
                    .with_context(|| format!("{}: cannot write", self.path.display()))
            });
        if closed.is_err() {
            let _ = std::fs::remove_file(tmp);
        }
        closed
    }
}

impl Drop for Unfinished {
    fn drop(&mut self) {
        if self.writer.take().is_some() {
            let _ = std::fs::remove_file(&self.tmp);
        }
    }
}

impl Stream {
    /// Starts `DIR/STEM.csv` (header from `columns`) and `DIR/STEM.jsonl`.
    pub fn create(dir: &Path, stem: &str, columns: &[(&str, &str, &str)]) -> anyhow::Result<Self> {
        let mut stream = Self {
            csv: Unfinished::create(dir.join(format!("{stem}.csv")))?,
            jsonl: Unfinished::create(dir.join(format!("{stem}.jsonl")))?,
        };
        let mut w = csv::WriterBuilder::new()
            .has_headers(false)
            .from_writer(Vec::new());
        w.write_record(columns.iter().map(|c| c.0))?;
        let header = w.into_inner().map_err(|e| anyhow::anyhow!("{e}"))?;
        stream.csv.write(&header)?;
        Ok(stream)
    }

    /// Appends the next group of rows.
    pub fn push(&mut self, lines: &Lines) -> anyhow::Result<()> {
        self.csv.write(&lines.csv)?;
        self.jsonl.write(&lines.jsonl)
    }

    /// Flushes both files to disk and renames them into place.
    pub fn finish(mut self) -> anyhow::Result<()> {
        // The two fsyncs wait on the disk, not on this process: they run at the same time.
        let (csv, jsonl) = (&mut self.csv, &mut self.jsonl);
        let (csv_closed, jsonl_closed) = std::thread::scope(|scope| {
            let jsonl_closed = scope.spawn(|| jsonl.close());
            (csv.close(), jsonl_closed.join())
        });
        csv_closed?;
        jsonl_closed.map_err(|_| anyhow::anyhow!("the thread closing a catalog file panicked"))?
    }
}

/// Writes a units table (`column, unit, description`) for `columns`, resolving each unit kind
/// (`length`, `velocity`, `time`, `length^2/time`, `1/time`, `criterion`) with the input's units.
pub fn write_units(
    path: &Path,
    columns: &[(&str, &str, &str)],
    units: &vortcat_field::Units,
    criterion_unit: &str,
) -> anyhow::Result<()> {
    let (length, velocity) = (&units.length, &units.velocity);
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(["column", "unit", "description"])?;
    for (name, kind, description) in columns {
        let unit = match *kind {
            "length" => length.to_string(),
            "velocity" => velocity.to_string(),
            "time" => "s".to_string(),
            "length^2/time" => format!("({length})*({velocity})"),
            "1/time" => format!("({velocity})/({length})"),
            "criterion" => criterion_unit.to_string(),
            _ => String::new(),
        };
        w.write_record([*name, unit.as_str(), *description])?;
    }
    let bytes = w.into_inner().map_err(|e| anyhow::anyhow!("{e}"))?;
    crate::survey::store::write_atomic(path, &bytes)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn units_are_resolved_from_the_input_units() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("u.csv");
        let units = vortcat_field::Units {
            length: "mm".into(),
            velocity: "m/s".into(),
        };
        write_units(&p, COLUMNS, &units, "1/s").unwrap();
        let text = std::fs::read_to_string(&p).unwrap();
        for line in [
            "circulation,(mm)*(m/s),circulation",
            "strain_rate,(m/s)/(mm),",
            "time,s,",
            "x,mm,",
            "criterion_peak,1/s,",
            "vortex,,",
        ] {
            assert!(
                text.lines().any(|l| l.starts_with(line)),
                "{line} missing:\n{text}"
            );
        }
    }

    #[test]
    fn columns_match_the_row_fields() {
        // The header is written from COLUMNS; serde writes the row fields in declaration order.
        let row = CatalogRow {
            snapshot: "a.h5#0".into(),
            vortex: 1,
            file: "a.h5".into(),
            index: 0,
            time: None,
            x: Some(1.0),
            y: Some(2.0),
            sense: 1,
            model: "lamb-oseen".into(),
            status: "converged".into(),
            circulation: Some(1.0),
            circulation_err: Some(0.1),
            core_radius: Some(0.5),
            core_radius_err: Some(0.01),
            strain_rate: None,
            strain_rate_err: None,
            strain_rate_viscous: None,
            viscosity_ratio: None,
            peak_velocity: Some(0.2),
            conv_u: Some(0.0),
            conv_v: Some(0.0),
            reynolds: None,
            n_points: 100,
            residual_rms: Some(0.01),
            r2: Some(0.99),
            inflow_p_value: None,
            window_radius: Some(1.5),
            detect_x: Some(1.0),
            detect_y: Some(2.0),
            criterion_peak: Some(3.0),
            equivalent_radius: Some(0.4),
            flags: String::new(),
        };
        // serde's own header (declaration order) must equal the one written from COLUMNS.
        let mut w = csv::Writer::from_writer(Vec::new());
        w.serialize(&row).unwrap();
        let text = String::from_utf8(w.into_inner().unwrap()).unwrap();
        let columns: Vec<&str> = COLUMNS.iter().map(|c| c.0).collect();
        assert_eq!(text.lines().next().unwrap(), columns.join(","));
        let dir = tempfile::tempdir().unwrap();
        write_table(dir.path(), "c", COLUMNS, std::slice::from_ref(&row)).unwrap();
        let jsonl = std::fs::read_to_string(dir.path().join("c.jsonl")).unwrap();
        let back: CatalogRow = serde_json::from_str(jsonl.trim_end()).unwrap();
        assert_eq!(back, row);
        let text = std::fs::read_to_string(dir.path().join("c.csv")).unwrap();
        let header = text.lines().next().unwrap();
        assert_eq!(header, columns.join(","));
        let second: Vec<&str> = text.lines().nth(1).unwrap().split(',').collect();
        assert_eq!(second.len(), columns.len());
        assert_eq!(
            second[columns.iter().position(|c| *c == "strain_rate").unwrap()],
            ""
        );
    }

    #[test]
    fn lines_serialised_in_groups_concatenate_to_the_whole_table() {
        // The survey writes the catalog from per-snapshot groups: the bytes must be those of
        // all rows at once, also for fields CSV must quote and for empty groups.
        #[derive(Serialize)]
        struct Row {
            name: String,
            value: Option<f64>,
        }
        let rows: Vec<Row> = [
            ("plain", Some(1.5)),
            ("comma, inside", None),
            ("quote \"q\"", Some(-2.0e-300)),
            ("non-ASCII é", Some(0.1)),
            ("line\nbreak", Some(3.0)),
        ]
        .into_iter()
        .map(|(n, v)| Row {
            name: n.into(),
            value: v,
        })
        .collect();
        let columns = [("name", "", ""), ("value", "", "")];
        let (a, b) = (tempfile::tempdir().unwrap(), tempfile::tempdir().unwrap());
        write_table(a.path(), "t", &columns, &rows).unwrap();
        let groups = [
            Lines::of(&rows[..2]).unwrap(),
            Lines::of(&rows[2..2]).unwrap(),
            Lines::of(&rows[2..]).unwrap(),
        ];
        write_lines(b.path(), "t", &columns, &groups).unwrap();
        for ext in ["csv", "jsonl"] {
            let whole = std::fs::read(a.path().join(format!("t.{ext}"))).unwrap();
            let joined = std::fs::read(b.path().join(format!("t.{ext}"))).unwrap();
            assert_eq!(whole, joined, "{ext}");
        }
        let text = std::fs::read_to_string(a.path().join("t.csv")).unwrap();
        assert!(
            text.starts_with("name,value\nplain,1.5\n\"comma, inside\",\n"),
            "{text}"
        );
    }
}
