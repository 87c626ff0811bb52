//! Quality-control report, rankings and population statistics of a `vortcat survey` folder.
//!
//! - [`Survey::open`] reads a survey folder (`catalog.csv`, `config.toml`, `run.json`,
//!   `units.csv`; see `docs/catalog.md`).
//! - [`write_report`] writes `DIR/report/index.html` with its figures in `DIR/report/img/`:
//!   provenance and counts, a table of flags, criterion maps of a bounded number of snapshots
//!   with every vortex marked, a card per selected vortex (flagged fits first) with its
//!   u_θ(r) profile against the fitted model, u_r(r) for Burgers fits and a residual map,
//!   population statistics and distributions, and every fit in a sortable table. The page
//!   needs no network: figures are SVG files beside it (drawn with `plotters`), the table
//!   script is inline. Every string from input files is escaped.
//! - [`stats::population`] and [`stats::rank`] give the numbers of `vortcat stats` and
//!   `vortcat rank`.
//!
//! The crate never prints; errors are [`ReportError`] values naming the file concerned.
#![deny(missing_docs)]

pub mod error;
pub mod field;
pub mod html;
pub mod plot;
pub mod report;
pub mod select;
pub mod stats;
pub mod survey;

pub use error::ReportError;
pub use field::MapField;
pub use report::{write_report, write_report_for, ReportOptions, ReportSummary};
pub use stats::{population, rank, PopulationStats, Quantity, Summary};
pub use survey::{Survey, Vortex};
