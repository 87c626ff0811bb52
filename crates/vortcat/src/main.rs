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

fn main() -> ExitCode {
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
