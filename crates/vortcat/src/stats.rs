//! `vortcat stats DIR`: population statistics of a survey, split by sense and by model.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::Args;
use vortcat_report::Survey;

/// Arguments of `vortcat stats`.
#[derive(Debug, Args)]
pub struct StatsArgs {
    /// Survey folder (the --out of `vortcat survey`).
    #[arg(value_name = "DIR")]
    dir: PathBuf,
    /// Leave out fits that carry any quality flag.
    #[arg(long)]
    only_clean: bool,
    /// Print JSON instead of tables.
    #[arg(long)]
    json: bool,
}

fn f(x: f64) -> String {
    if x.is_finite() {
        format!("{x:.4e}")
    } else {
        "-".into()
    }
}

/// Runs the command.
pub fn run(args: StatsArgs) -> anyhow::Result<ExitCode> {
    let survey = Survey::open(&args.dir)?;
    let stats = vortcat_report::population(&survey.vortices, &survey.units, args.only_clean);
    if args.json {
        println!("{}", serde_json::to_string_pretty(&stats)?);
        return Ok(ExitCode::SUCCESS);
    }
    for g in &stats.groups {
        println!(
            "{}: {} vortices, {} flagged",
            g.group, g.vortices, g.flagged
        );
        println!(
            "  {:<14} {:>7} {:>11} {:>11} {:>11} {:>11} {:>11} {:>11} {:>11}  unit",
            "quantity", "count", "mean", "std", "p05", "p25", "median", "p75", "p95"
        );
        for q in &g.quantities {
            let s = &q.summary;
            println!(
                "  {:<14} {:>7} {:>11} {:>11} {:>11} {:>11} {:>11} {:>11} {:>11}  {}",
                q.quantity.name(),
                s.count,
                f(s.mean),
                f(s.std),
                f(s.p05),
                f(s.p25),
                f(s.median),
                f(s.p75),
                f(s.p95),
                q.unit
            );
        }
    }
    println!(
        "circulation is |circulation|; percentiles interpolate linearly between order statistics"
    );
    Ok(ExitCode::SUCCESS)
}
