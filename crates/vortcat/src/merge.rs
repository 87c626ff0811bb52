//! `vortcat merge`: combine the shard folders of a sharded survey into one catalog, JSON
//! lines, summary and manifest — after proving that every snapshot of the survey is present
//! exactly once, that all shards ran the same tool version and config on the same inputs, and
//! that none is partial. The merged catalog is byte-identical to a single-process survey.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::SystemTime;

use anyhow::{anyhow, bail, Context};
use clap::Args;
use serde::Deserialize;

use crate::config::Config;
use crate::survey::catalog::{self, CatalogRow};
use crate::survey::shard::Shard;
use crate::survey::{write_outputs, Assembled, InputRecord, RunMeta, SnapshotStatus, EXIT_PARTIAL};

/// Arguments of `vortcat merge`.
#[derive(Debug, Args)]
pub struct MergeArgs {
    /// The survey folder holding shard-KKKK-of-NNNN folders, or the shard folders themselves.
    #[arg(required = true, value_name = "DIR")]
    dirs: Vec<PathBuf>,
    /// Where to write the merged outputs [default: the survey folder].
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
}

#[derive(Debug, Deserialize)]
struct Manifest {
    version: String,
    config: Config,
    config_sha256: String,
    command: Vec<String>,
    inputs: Vec<InputRecord>,
    shard: Option<Shard>,
    survey_snapshots: usize,
    survey_snapshots_sha256: String,
    complete: bool,
    threads: usize,
}

#[derive(Debug, Deserialize)]
struct Summary {
    per_snapshot: Vec<SnapshotStatus>,
}

struct ShardDir {
    path: PathBuf,
    shard: Shard,
    manifest: Option<Manifest>,
}

fn shard_folders(dirs: &[PathBuf]) -> anyhow::Result<(Vec<(PathBuf, Shard)>, PathBuf)> {
    let mut found = Vec::new();
    let mut parent = None;
    for d in dirs {
        if !d.is_dir() {
            bail!("{}: not a folder", d.display());
        }
        let name = d
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        if let Some(s) = Shard::from_folder(&name) {
            found.push((d.clone(), s));
            parent.get_or_insert_with(|| {
                d.parent()
                    .map_or_else(|| PathBuf::from("."), Path::to_path_buf)
            });
            continue;
        }
        let mut any = false;
        let mut entries: Vec<PathBuf> = std::fs::read_dir(d)
            .with_context(|| format!("{}: cannot list", d.display()))?
            .filter_map(|e| e.ok().map(|e| e.path()))
            .collect();
        entries.sort();
        for e in entries {
            let n = e
                .file_name()
                .map(|n| n.to_string_lossy().into_owned())
                .unwrap_or_default();
            if let Some(s) = Shard::from_folder(&n) {
                if e.is_dir() {
                    found.push((e, s));
                    any = true;
                }
            }
        }
        if !any {
            bail!("{}: no shard-KKKK-of-NNNN folders found", d.display());
        }
        parent.get_or_insert_with(|| d.clone());
    }
    Ok((found, parent.expect("at least one folder")))
}

fn rerun_command(template: &[String], shard: Shard) -> String {
    let mut words: Vec<String> = Vec::new();
    let mut skip = false;
    for w in template {
        if skip {
            skip = false;
            continue;
        }
        if w == "--shard" {
            skip = true;
            continue;
        }
        if w.starts_with("--shard=") {
            continue;
        }
        words.push(w.clone());
    }
    words.push("--shard".into());
    words.push(format!("{}/{}", shard.index, shard.count));
    words
        .iter()
        .map(|w| {
            if w.chars()
                .all(|c| c.is_ascii_alphanumeric() || "-_./=,:".contains(c))
            {
                w.clone()
            } else {
                format!("'{}'", w.replace('\'', "'\\''"))
            }
        })
        .collect::<Vec<_>>()
        .join(" ")
}

fn read_json<T: for<'de> Deserialize<'de>>(path: &Path) -> anyhow::Result<T> {
    let text = std::fs::read_to_string(path)
        .with_context(|| format!("{}: cannot read", path.display()))?;
    serde_json::from_str(&text).map_err(|e| anyhow!("{}: not a vortcat file: {e}", path.display()))
}

/// Runs the command.
pub fn run(args: MergeArgs) -> anyhow::Result<ExitCode> {
    let (folders, parent) = shard_folders(&args.dirs)?;
    let out = args.out.clone().unwrap_or(parent);
    let mut shards: Vec<ShardDir> = Vec::new();
    for (path, shard) in folders {
        let run = path.join("run.json");
        let manifest = if run.is_file() {
            Some(read_json::<Manifest>(&run)?)
        } else {
            None
        };
        shards.push(ShardDir {
            path,
            shard,
            manifest,
        });
    }
    // Every shard must agree on N.
    let counts: std::collections::BTreeSet<usize> = shards.iter().map(|s| s.shard.count).collect();
    if counts.len() != 1 {
        bail!("shard folders disagree on the number of shards: {counts:?}");
    }
    let count = *counts.iter().next().expect("non-empty");
    let mut by_index: BTreeMap<usize, Vec<&ShardDir>> = BTreeMap::new();
    for s in &shards {
        by_index.entry(s.shard.index).or_default().push(s);
    }
    if let Some((k, dups)) = by_index.iter().find(|(_, v)| v.len() > 1) {
        bail!(
            "shard {k} of {count} appears {} times: {}",
            dups.len(),
            dups.iter()
                .map(|d| d.path.display().to_string())
                .collect::<Vec<_>>()
                .join(", ")
        );
    }
    let complete: Vec<&ShardDir> = shards
        .iter()
        .filter(|s| s.manifest.as_ref().is_some_and(|m| m.complete))
        .collect();
    let reference = complete
        .first()
        .and_then(|s| s.manifest.as_ref())
        .ok_or_else(|| anyhow!("no shard has finished (no run.json in any shard folder)"))?;
    // Same tool, config and input set everywhere.
    for s in &complete {
        let m = s.manifest.as_ref().expect("complete has a manifest");
        if m.version != reference.version {
            bail!(
                "{}: made by vortcat {}, other shards by {}",
                s.path.display(),
                m.version,
                reference.version
            );
        }
        if m.config_sha256 != reference.config_sha256 {
            bail!(
                "{}: ran with a different config than the other shards (config hash {} vs {})",
                s.path.display(),
                &m.config_sha256[..12],
                &reference.config_sha256[..12]
            );
        }
        if m.survey_snapshots_sha256 != reference.survey_snapshots_sha256
            || m.survey_snapshots != reference.survey_snapshots
        {
            bail!(
                "{}: surveyed a different set of inputs than the other shards",
                s.path.display()
            );
        }
        if m.shard != Some(s.shard) {
            bail!(
                "{}: its manifest says shard {:?}, its folder name says {}/{}",
                s.path.display(),
                m.shard,
                s.shard.index,
                s.shard.count
            );
        }
    }
    // Missing or partial shards: name them and say how to rerun just those.
    let missing: Vec<Shard> = (0..count)
        .filter(|k| {
            !by_index
                .get(k)
                .is_some_and(|v| v[0].manifest.as_ref().is_some_and(|m| m.complete))
        })
        .map(|k| Shard { index: k, count })
        .collect();
    if !missing.is_empty() {
        let listed: Vec<String> = missing
            .iter()
            .map(|s| {
                let state = if by_index.contains_key(&s.index) {
                    "partial"
                } else {
                    "missing"
                };
                format!("{} ({state})", s.index)
            })
            .collect();
        let reruns: Vec<String> = missing
            .iter()
            .map(|s| rerun_command(&reference.command, *s))
            .collect();
        bail!(
            "{} of {count} shards are not complete: {}; rerun them with: {}",
            missing.len(),
            listed.join(", "),
            reruns.join(" ; ")
        );
    }

    // Stitch, in shard order: shards are contiguous blocks of the survey's snapshot order.
    // The catalog is streamed shard by shard, so that memory holds one shard's rows at a time.
    std::fs::create_dir_all(&out).with_context(|| format!("{}: cannot create", out.display()))?;
    let mut stream = catalog::Stream::create(&out, "catalog", catalog::COLUMNS)?;
    let mut vortices = 0;
    let mut stations = Vec::new();
    let mut tubes = Vec::new();
    let mut statuses: Vec<SnapshotStatus> = Vec::new();
    let mut records = reference.inputs.clone();
    for k in 0..count {
        let s = by_index[&k][0];
        let m = s.manifest.as_ref().expect("complete");
        let text = std::fs::read_to_string(s.path.join("catalog.jsonl"))
            .with_context(|| format!("{}: cannot read catalog.jsonl", s.path.display()))?;
        let mut rows: Vec<CatalogRow> = Vec::new();
        for (i, line) in text.lines().enumerate() {
            rows.push(
                serde_json::from_str(line).map_err(|e| {
                    anyhow!("{}/catalog.jsonl line {}: {e}", s.path.display(), i + 1)
                })?,
            );
        }
        stream.push(&catalog::Lines::of(&rows)?)?;
        vortices += rows.len();
        stations.extend(crate::survey::volume::read_jsonl::<
            crate::survey::volume::StationRow,
        >(&s.path.join("stations.jsonl"))?);
        tubes.extend(crate::survey::volume::read_jsonl::<
            crate::survey::volume::TubeRow,
        >(&s.path.join("tubes.jsonl"))?);
        let summary: Summary = read_json(&s.path.join("summary.json"))?;
        statuses.extend(summary.per_snapshot);
        // Each shard hashed the inputs it read: take every hash from the shard that has it.
        for (r, theirs) in records.iter_mut().zip(&m.inputs) {
            if r.blake3.is_empty() && !theirs.blake3.is_empty() {
                r.blake3 = theirs.blake3.clone();
            }
            if r.error.is_none() {
                r.error = theirs.error.clone();
            }
        }
    }
    if statuses.len() != reference.survey_snapshots {
        bail!(
            "the shards hold {} snapshots, the survey has {}: a shard folder was altered",
            statuses.len(),
            reference.survey_snapshots
        );
    }
    let mut seen = std::collections::HashSet::new();
    if let Some(dup) = statuses.iter().find(|s| !seen.insert(s.snapshot.clone())) {
        bail!("snapshot {} appears in two shards", dup.snapshot);
    }
    let units = complete
        .iter()
        .find_map(|s| read_units(&s.path.join("units.csv")))
        .unwrap_or_default();
    let failed = statuses.iter().filter(|s| s.status != "done").count();
    let input_failures = records.iter().filter(|r| r.error.is_some()).count();
    let assembled = Assembled {
        stations,
        tubes,
        statuses,
        records,
        config: reference.config.clone(),
        config_sha: reference.config_sha256.clone(),
        units,
    };
    let meta = RunMeta {
        started_at: SystemTime::now(),
        seconds: 0.0,
        threads: reference.threads,
        resumed: 0,
        shard: None,
        snapshot_set: (
            reference.survey_snapshots,
            reference.survey_snapshots_sha256.clone(),
        ),
        reports_inputs: true,
    };
    write_outputs(&out, &assembled, stream, &meta)?;
    println!(
        "merged {count} shards: {} snapshots ({}), {} vortices -> {}",
        assembled.statuses.len(),
        crate::survey::failure_counts(failed, input_failures),
        vortices,
        out.join("catalog.csv").display()
    );
    Ok(if failed > 0 || input_failures > 0 {
        ExitCode::from(EXIT_PARTIAL)
    } else {
        ExitCode::SUCCESS
    })
}

/// The length and velocity units back from a shard's units.csv.
fn read_units(path: &Path) -> Option<vortcat_field::Units> {
    let mut r = csv::Reader::from_path(path).ok()?;
    let mut length = None;
    let mut velocity = None;
    for rec in r.records().flatten() {
        match &rec[0] {
            "x" => length = Some(rec[1].to_string()),
            "conv_u" => velocity = Some(rec[1].to_string()),
            _ => {}
        }
    }
    Some(vortcat_field::Units {
        length: length?,
        velocity: velocity?,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rerun_command_replaces_the_shard() {
        let cmd: Vec<String> = [
            "vortcat", "survey", "data dir", "--out", "o", "--shard", "auto",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        assert_eq!(
            rerun_command(&cmd, Shard { index: 2, count: 4 }),
            "vortcat survey 'data dir' --out o --shard 2/4"
        );
    }
}
