//! `vortcat rank DIR --by Q`: the vortices of a survey ranked by one quantity.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::Args;
use vortcat_report::{Quantity, Survey};

/// Arguments of `vortcat rank`.
#[derive(Debug, Args)]
pub struct RankArgs {
    /// Survey folder (the --out of `vortcat survey`).
    #[arg(value_name = "DIR")]
    dir: PathBuf,
    /// Quantity to rank by, largest first: circulation (ranked by |circulation|, the sign is
    /// the sense), core_radius, strain_rate (Burgers fits only), peak_velocity, r2.
    #[arg(long, value_name = "QUANTITY")]
    by: String,
    /// Print only the first N.
    #[arg(long, value_name = "N")]
    top: Option<usize>,
    /// Leave out fits that carry any quality flag.
    #[arg(long)]
    only_clean: bool,
    /// Smallest first (e.g. `--by r2 --ascending` puts the worst fits first).
    #[arg(long)]
    ascending: bool,
    /// CSV instead of an aligned table.
    #[arg(long)]
    csv: bool,
}

fn cell(x: Option<f64>) -> String {
    x.filter(|v| v.is_finite())
        .map_or_else(String::new, |v| format!("{v:.6e}"))
}

/// Runs the command.
pub fn run(args: RankArgs) -> anyhow::Result<ExitCode> {
    let by: Quantity = args.by.parse()?;
    let survey = Survey::open(&args.dir)?;
    let ranked = vortcat_report::rank(
        &survey.vortices,
        by,
        args.top,
        args.only_clean,
        args.ascending,
    );
    let header = [
        "rank",
        "snapshot",
        "vortex",
        "sense",
        "model",
        "circulation",
        "core_radius",
        "strain_rate",
        "peak_velocity",
        "r2",
        "flags",
    ];
    let rows: Vec<Vec<String>> = ranked
        .iter()
        .enumerate()
        .map(|(k, (v, _))| {
            vec![
                (k + 1).to_string(),
                v.snapshot.clone(),
                v.vortex.to_string(),
                v.sense.to_string(),
                v.model.clone(),
                cell(v.circulation),
                cell(v.core_radius),
                cell(v.strain_rate),
                cell(v.peak_velocity),
                cell(v.r2),
                v.flags.clone(),
            ]
        })
        .collect();
    if args.csv {
        let mut w = csv::Writer::from_writer(std::io::stdout().lock());
        w.write_record(header)?;
        for r in &rows {
            w.write_record(r)?;
        }
        w.flush()?;
    } else {
        let mut width: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
        for r in &rows {
            for (k, c) in r.iter().enumerate() {
                width[k] = width[k].max(c.chars().count());
            }
        }
        let line = |cells: Vec<&str>| {
            let mut s = String::new();
            for (k, c) in cells.iter().enumerate() {
                let pad = width[k] - c.chars().count();
                if k == 1 || k == 4 || k == 10 {
                    s.push_str(c);
                    s.push_str(&" ".repeat(pad));
                } else {
                    s.push_str(&" ".repeat(pad));
                    s.push_str(c);
                }
                s.push_str("  ");
            }
            s.trim_end().to_string()
        };
        println!("{}", line(header.to_vec()));
        for r in &rows {
            println!("{}", line(r.iter().map(String::as_str).collect()));
        }
        let u = &survey.units;
        println!(
            "ranked by {}{}; {} of {} vortices; units: circulation {}, core_radius {}, strain_rate {}, peak_velocity {}",
            if by == Quantity::Circulation { "|circulation|" } else { by.name() },
            if args.ascending { ", smallest first" } else { ", largest first" },
            rows.len(),
            survey.vortices.len(),
            u.of("circulation"),
            u.of("core_radius"),
            u.of("strain_rate"),
            u.of("peak_velocity"),
        );
    }
    Ok(ExitCode::SUCCESS)
}
