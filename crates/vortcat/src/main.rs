//! The `vortcat` command: flags → resolved plan → library calls → output.
//!
//! Errors from the libraries are typed; here they gain context and are printed as one line,
//! `vortcat: error: <file>: <problem>`, with a non-zero exit code.

use std::process::ExitCode;

use clap::{Parser, Subcommand};

mod config;
mod input;
mod inspect;
mod merge;
mod plan;
mod rank;
mod report;
mod stats;
mod survey;
mod synth;

/// Find vortex cores in gridded velocity fields, fit vortex models, write a per-vortex catalog.
#[derive(Debug, Parser)]
#[command(name = "vortcat", version, about, long_about = None, propagate_version = true)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Show what vortcat reads in velocity files: arrays, chosen components, grid, snapshots.
    Inspect(inspect::InspectArgs),
    /// Find and fit every vortex in many snapshots; write a per-vortex catalog.
    Survey(survey::SurveyArgs),
    /// Combine the shard folders of a sharded survey into one catalog, after checking completeness.
    Merge(merge::MergeArgs),
    /// Write synthetic snapshots with a known vortex population and its truth table.
    Synth(synth::SynthArgs),
    /// Write a static quality-control report of a survey folder: DIR/report/index.html.
    Report(report::ReportArgs),
    /// Print a survey's vortices ranked by one quantity (circulation ranks by |circulation|).
    Rank(rank::RankArgs),
    /// Print population statistics of a survey, split by sense and by model.
    Stats(stats::StatsArgs),
}

/// Exit code for "could not run" (bad input, bad config, unreadable file).
pub(crate) const EXIT_FAILURE: u8 = 1;

/// Keeps freed memory in glibc's heaps between snapshots instead of returning it to the system
/// after each one.
///
/// A survey allocates and frees the same few megabytes per snapshot (fields, gradients,
/// criterion, labels). With glibc's default, self-tuning thresholds each worker's heap is
/// trimmed after nearly every snapshot, so the next snapshot faults every page in again: in
/// the 1,000-snapshot benchmark that was 230,000 to 500,000 page faults, varying from run to run,
/// against about 24,000 with these fixed thresholds, and peak RSS grew only from about 90 to
/// 105 MiB (docs/performance.md). Blocks of 16 MiB or more (large volume slabs) are still
/// mapped and unmapped directly, and a heap with more than 32 MiB free at its top is still
/// trimmed.
#[cfg(all(target_os = "linux", target_env = "gnu"))]
#[allow(unsafe_code)]
fn tune_allocator() {
    // SAFETY: mallopt only sets two allocator parameters; it is called first thing in main,
    // before any other thread exists, and a refused setting (return value 0) leaves glibc's
    // defaults, which are correct, only slower.
    unsafe {
        libc::mallopt(libc::M_MMAP_THRESHOLD, 16 << 20);
        libc::mallopt(libc::M_TRIM_THRESHOLD, 32 << 20);
    }
}

#[cfg(not(all(target_os = "linux", target_env = "gnu")))]
fn tune_allocator() {}

fn main() -> ExitCode {
    tune_allocator();
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Inspect(args) => inspect::run(args),
        Command::Survey(args) => survey::run(args),
        Command::Merge(args) => merge::run(args),
        Command::Synth(args) => synth::run(args),
        Command::Report(args) => report::run(args),
        Command::Rank(args) => rank::run(args),
        Command::Stats(args) => stats::run(args),
    };
    match result {
        Ok(code) => code,
        Err(e) => {
            eprintln!("vortcat: error: {}", one_line(&e));
            ExitCode::from(EXIT_FAILURE)
        }
    }
}

/// The error and its causes on one line, without repeating a cause already in the message.
pub(crate) fn one_line(e: &anyhow::Error) -> String {
    let mut out = String::new();
    for cause in e.chain() {
        let text = cause.to_string();
        if out.contains(&text) {
            continue;
        }
        if !out.is_empty() {
            out.push_str(": ");
        }
        out.push_str(&text);
    }
    out.replace('\n', " ")
}
