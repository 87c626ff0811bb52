//! `vortcat survey`: many snapshots in, one per-vortex catalog out. Parallel over snapshots
//! and vortices, resumable after any interruption, and reproducible: the catalog bytes do not
//! depend on the thread count, the completion order or on interruptions.

use std::collections::HashMap;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant, SystemTime};

use anyhow::{bail, Context};
use clap::Args;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::config::Config;
use crate::input::InputArgs;
use crate::plan::Plan;

pub mod catalog;
pub mod inputs;
pub mod pipeline;
pub mod shard;
pub mod store;
pub mod volume;

use catalog::{CatalogRow, Lines};
use shard::Shard;
use store::{Part, Store, Timing};

/// Exit code: finished, but some snapshots failed.
pub const EXIT_PARTIAL: u8 = 3;
/// Exit code: interrupted (Ctrl-C); the state on disk is resumable.
pub const EXIT_INTERRUPTED: u8 = 130;

/// Arguments of `vortcat survey`.
#[derive(Debug, Args)]
pub struct SurveyArgs {
    /// Velocity files, folders and glob patterns; a stacked file gives one snapshot per index.
    #[arg(value_name = "INPUT", required_unless_present = "print_config")]
    inputs: Vec<String>,
    /// Output folder for the catalog, the manifest and the resumable per-snapshot state.
    #[arg(
        long,
        value_name = "DIR",
        required_unless_present = "print_config",
        help_heading = "Output"
    )]
    out: Option<PathBuf>,
    #[command(flatten)]
    input: InputArgs,
    /// Kinematic viscosity of the fluid in (length unit)²/s (overrides fluid.viscosity).
    #[arg(long, value_name = "NU", help_heading = "Fluid")]
    viscosity: Option<f64>,
    /// Detection criterion (overrides detection.criterion): vorticity, q, lambda2,
    /// swirling-strength, delta, gamma1, gamma2.
    #[arg(long, value_name = "NAME", help_heading = "Detection")]
    criterion: Option<String>,
    /// Models to fit, comma-separated (overrides fit.models).
    #[arg(
        long,
        value_name = "LIST",
        value_delimiter = ',',
        help_heading = "Fitting"
    )]
    models: Option<Vec<String>>,
    /// PIV interrogation-window size in length units (overrides fit.piv_window).
    #[arg(long, value_name = "W", help_heading = "Fitting")]
    piv_window: Option<f64>,
    /// Worker threads [default: all cores].
    #[arg(long, value_name = "N", help_heading = "Run")]
    threads: Option<usize>,
    /// Process only shard K of N (K from 0) of the snapshots, into DIR/shard-KKKK-of-NNNN;
    /// `auto` takes K and N from SLURM's job-array variables. Combine with `vortcat merge DIR`.
    #[arg(long, value_name = "K/N|auto", help_heading = "Run")]
    shard: Option<String>,
    /// Continue an interrupted survey in DIR (the default when DIR holds the same survey).
    #[arg(long, help_heading = "Run")]
    resume: bool,
    /// Start afresh in DIR even if it holds a survey with another config.
    #[arg(long, help_heading = "Run")]
    force: bool,
    /// Print the fully resolved config, every default included, and exit.
    #[arg(long, help_heading = "Run")]
    print_config: bool,
    /// Progress display.
    #[arg(
        long,
        value_name = "MODE",
        value_enum,
        default_value_t = ProgressMode::Auto,
        help_heading = "Run"
    )]
    progress: ProgressMode,
    /// Also write the quality-control report DIR/report/index.html (defaults of `vortcat report`).
    #[arg(long, help_heading = "Output")]
    report: bool,
}

/// One snapshot to process.
#[derive(Debug, Clone)]
struct Job {
    source: usize,
    index: usize,
}

/// What the manifest says of a snapshot.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub(crate) struct SnapshotStatus {
    pub snapshot: String,
    pub status: String,
    pub error: Option<String>,
    pub candidates: usize,
    pub vortices: usize,
    pub flagged: usize,
    pub timing: Timing,
}

/// One input as the manifest records it.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub(crate) struct InputRecord {
    pub path: String,
    pub bytes: u64,
    /// BLAKE3 hash of the content (of a folder input: of its files' names and contents in name
    /// order); empty for an input this shard did not read.
    pub blake3: String,
    pub snapshots: usize,
    pub error: Option<String>,
}

fn resolve_config(args: &SurveyArgs) -> anyhow::Result<Config> {
    let (mut config, _) = args.input.resolve()?;
    // `resolve` applies the input flags to the loaded config's [input] section.
    config.input = args.input.resolve()?.1;
    if let Some(nu) = args.viscosity {
        config.fluid.viscosity = Some(nu);
    }
    if let Some(c) = &args.criterion {
        config.detection.criterion = c.clone();
    }
    if let Some(m) = &args.models {
        config.fit.models = m.clone();
    }
    if let Some(w) = args.piv_window {
        config.fit.piv_window = Some(w);
    }
    Ok(config)
}

fn config_hash(config_toml: &str) -> String {
    let mut h = Sha256::new();
    h.update(env!("CARGO_PKG_VERSION").as_bytes());
    h.update([0]);
    h.update(config_toml.as_bytes());
    inputs::hex(&h.finalize())
}

fn display_path(p: &Path) -> String {
    p.to_string_lossy().into_owned()
}

/// Reports progress on a terminal (a bar) or in a log (a line every 30 s).
struct Progress {
    bar: Option<indicatif::ProgressBar>,
    log: bool,
    total: usize,
    done: AtomicUsize,
    started: Instant,
    last_line: Mutex<Instant>,
}

/// How progress is shown on stderr.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ProgressMode {
    /// A bar on a terminal, plain log lines otherwise.
    Auto,
    /// A bar with rate and ETA.
    Bar,
    /// A plain line every 30 s and at the end (for log files).
    Log,
    /// Nothing.
    None,
}

impl Progress {
    fn new(mode: ProgressMode, total: usize, already: usize) -> anyhow::Result<Self> {
        let terminal = std::io::stderr().is_terminal();
        let (bar, log) = match (mode, terminal) {
            (ProgressMode::Auto, true) | (ProgressMode::Bar, _) => (true, false),
            (ProgressMode::Auto, false) | (ProgressMode::Log, _) => (false, true),
            (ProgressMode::None, _) => (false, false),
        };
        let bar = bar.then(|| {
            let b = indicatif::ProgressBar::new(total as u64);
            b.set_style(
                indicatif::ProgressStyle::with_template(
                    "{bar:40} {pos}/{len} snapshots  {per_sec}  ETA {eta}  {msg}",
                )
                .expect("static template"),
            );
            b.set_position(already as u64);
            b
        });
        Ok(Self {
            bar,
            log,
            total,
            done: AtomicUsize::new(already),
            started: Instant::now(),
            last_line: Mutex::new(Instant::now()),
        })
    }

    fn tick(&self, failed: usize) {
        let done = self.done.fetch_add(1, Ordering::Relaxed) + 1;
        if let Some(b) = &self.bar {
            b.set_position(done as u64);
            if failed > 0 {
                b.set_message(format!("{failed} failed"));
            }
        }
        if self.log {
            let mut last = self.last_line.lock().expect("progress lock");
            if last.elapsed() >= Duration::from_secs(30) || done == self.total {
                *last = Instant::now();
                let rate = done as f64 / self.started.elapsed().as_secs_f64().max(1e-9);
                let eta = (self.total - done) as f64 / rate.max(1e-9);
                eprintln!(
                    "vortcat: {done}/{} snapshots, {rate:.2}/s, {failed} failed, ETA {}",
                    self.total,
                    humantime::format_duration(Duration::from_secs(eta as u64))
                );
            }
        }
    }

    fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish_and_clear();
        }
    }
}

/// Runs the command.
pub fn run(args: SurveyArgs) -> anyhow::Result<ExitCode> {
    let config = resolve_config(&args)?;
    let plan = Plan::resolve(&config)?;
    let config_toml = config.to_toml()?;
    if args.print_config {
        print!("{config_toml}");
        return Ok(ExitCode::SUCCESS);
    }
    let out = args.out.clone().expect("clap requires --out");
    let started_at = SystemTime::now();
    let started = Instant::now();
    let threads = args
        .threads
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()));
    if threads == 0 {
        bail!("--threads must be at least 1");
    }
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .context("cannot start the worker threads")?;

    let shard = args
        .shard
        .as_deref()
        .map(|text| Shard::parse(text, |k| std::env::var(k).ok()))
        .transpose()?;
    let out = match shard {
        Some(s) => out.join(s.folder()),
        None => out,
    };

    // Inputs: expand and count snapshots (headers only), then hash the files this run reads.
    let paths = inputs::expand(&args.inputs)?;
    let config_sha = config_hash(&config_toml);
    std::fs::create_dir_all(&out)
        .with_context(|| format!("{}: cannot create the output folder", out.display()))?;
    check_previous(&out, &config_sha, args.force)?;
    let store = Store::open(&out)?;
    // A run killed part-way leaves its catalog and part temporaries behind.
    store::remove_stale_temporaries(&out);
    store::remove_stale_temporaries(&out.join("parts"));
    store::write_atomic(&out.join("config.toml"), config_toml.as_bytes())?;
    // run.json marks a finished run; until this run finishes, the folder is partial.
    let _ = std::fs::remove_file(out.join("run.json"));

    let mut records: Vec<InputRecord> = pool.install(|| {
        paths
            .par_iter()
            .map(|p| {
                let path = display_path(p);
                let bytes = inputs::size(p);
                match vortcat_field::open(p, &plan.input) {
                    Ok(r) => InputRecord {
                        path,
                        bytes,
                        blake3: String::new(),
                        snapshots: r.len(),
                        error: None,
                    },
                    Err(e) => InputRecord {
                        path,
                        bytes,
                        blake3: String::new(),
                        snapshots: 0,
                        error: Some(e.to_string()),
                    },
                }
            })
            .collect()
    });
    let all_jobs: Vec<Job> = records
        .iter()
        .enumerate()
        .flat_map(|(s, r)| (0..r.snapshots).map(move |index| Job { source: s, index }))
        .collect();
    let snapshot_set = snapshot_set_hash(&records);
    let jobs: Vec<Job> = match shard {
        Some(s) => all_jobs[s.range(all_jobs.len())].to_vec(),
        None => all_jobs.clone(),
    };
    let mine: std::collections::BTreeSet<usize> = jobs.iter().map(|j| j.source).collect();
    // In a fresh output folder nothing can be skipped, so a single-snapshot file need not be
    // hashed before it is processed: its worker reads it once, hashes those bytes and parses
    // them. Stacks (several workers may share one), HDF5 (read through the library), folders,
    // volumes and very large files are hashed here, streaming.
    let fresh = store.is_empty();
    let deferred: Vec<bool> = records
        .iter()
        .enumerate()
        .map(|(i, r)| {
            fresh
                && mine.contains(&i)
                && r.error.is_none()
                && r.snapshots == 1
                && r.bytes <= READ_WHOLE_LIMIT
                && plan.input.geometry == vortcat_field::Geometry::Plane
                && reads_from_bytes(Path::new(&r.path), &plan.input)
        })
        .collect();
    pool.install(|| {
        records.par_iter_mut().enumerate().for_each(|(i, r)| {
            // Unreadable inputs are hashed too (the manifest identifies them), by shard 0 only.
            let hash_it = (mine.contains(&i) && !deferred[i])
                || (r.error.is_some() && shard.is_none_or(|s| s.index == 0));
            if hash_it {
                match inputs::describe(Path::new(&r.path)) {
                    Ok(d) => r.blake3 = d.blake3,
                    Err(e) => r.error = Some(crate::one_line(&e)),
                }
            }
        })
    });
    // Snapshots finished by an earlier run with the same input and config are not computed
    // again; their results (and catalog lines) are read here, in parallel.
    let earlier: Vec<Option<(Part, Lines)>> = pool.install(|| {
        jobs.par_iter()
            .map(|j| {
                let r = &records[j.source];
                let part = store.done(&r.path, &r.blake3, j.index, &config_sha)?;
                Some(Lines::of(&part.rows).map(|lines| (part, lines)))
            })
            .map(Option::transpose)
            .collect::<anyhow::Result<_>>()
    })?;
    let pending: Vec<&Job> = jobs
        .iter()
        .zip(&earlier)
        .filter(|(_, e)| e.is_none())
        .map(|(j, _)| j)
        .collect();
    let skipped = jobs.len() - pending.len();
    if skipped > 0 {
        eprintln!(
            "vortcat: resuming: {skipped} of {} snapshots already done",
            jobs.len()
        );
    } else if args.resume {
        eprintln!(
            "vortcat: --resume: nothing done yet in {}, starting",
            out.display()
        );
    }

    // Ctrl-C: finish the snapshots in hand, start no new one; a second Ctrl-C stops at once.
    let cancel = Arc::new(AtomicBool::new(false));
    {
        let cancel = cancel.clone();
        let _ = ctrlc::set_handler(move || {
            if cancel.swap(true, Ordering::SeqCst) {
                std::process::exit(i32::from(EXIT_INTERRUPTED));
            }
            eprintln!("\nvortcat: interrupted: finishing the snapshots in progress; run the same command again to resume");
        });
    }

    let progress = Progress::new(args.progress, jobs.len(), skipped)?;
    let failures = AtomicUsize::new(0);
    // Consecutive snapshots of one file go to one worker, so a stack is opened once per run of
    // snapshots rather than once per snapshot (an .npz member is decompressed once per run).
    let runs = group_runs(&pending, threads);
    let save_errors: Mutex<Vec<String>> = Mutex::new(Vec::new());
    // Hashes (or read errors) of the deferred inputs, filled in by their workers.
    let late_hashes: Mutex<Vec<(usize, Result<String, String>)>> = Mutex::new(Vec::new());
    // Results are saved by one writer thread, so that a slow file system (a network share)
    // never idles a worker. A result still queued when the process dies is recomputed on
    // resume, like one in progress. The writer also appends each snapshot's rows to the
    // catalog as soon as the snapshots before it are in (results arrive in any order), and
    // keeps the results for the manifest without reading them back.
    let position: HashMap<(&str, usize), usize> = jobs
        .iter()
        .enumerate()
        .map(|(at, j)| ((records[j.source].path.as_str(), j.index), at))
        .collect();
    let stream = catalog::Stream::create(&out, "catalog", catalog::COLUMNS)?;
    let (to_writer, from_workers) = std::sync::mpsc::channel::<Part>();
    let ordered = std::thread::scope(|scope| {
        let (store, save_errors, position, config_sha) =
            (&store, &save_errors, &position, &config_sha);
        let (records, jobs, cancel) = (&records, &jobs, &*cancel);
        let writer = scope.spawn(move || {
            let mut ordered = Ordered::new(earlier, stream);
            for part in from_workers {
                // Each row is serialised to JSON once, for the part and for the JSON lines.
                let saved_lines = catalog::json_rows(&part.rows).and_then(|json| {
                    store.save_with_rows(&part, &json)?;
                    Lines::with_json(&part.rows, &json)
                });
                match saved_lines {
                    Ok(lines) => {
                        let at = position[&(part.file.as_str(), part.index)];
                        ordered.arrive(at, part, lines);
                    }
                    Err(e) => save_errors.lock().expect("lock").push(crate::one_line(&e)),
                }
            }
            if let Some(e) = &ordered.error {
                save_errors.lock().expect("lock").push(e.clone());
            }
            // Every snapshot has a result unless the run was interrupted.
            if !cancel.load(Ordering::SeqCst) {
                for (at, job) in jobs.iter().enumerate().skip(ordered.statuses.len()) {
                    if ordered.waiting[at].is_none() {
                        let r = &records[job.source];
                        let part =
                            failed_part(r, job.index, config_sha, "no result was written".into());
                        match Lines::of(&part.rows) {
                            Ok(lines) => ordered.arrive(at, part, lines),
                            Err(e) => save_errors.lock().expect("lock").push(crate::one_line(&e)),
                        }
                    }
                }
            }
            ordered
        });
        let late_hashes = &late_hashes;
        // Workers take the runs in order from one counter, so that results arrive nearly in
        // catalog order and the writer appends them as they come. (A parallel iterator over
        // the runs would split the list in halves, and the second half's results would wait
        // in memory until the first half was done.)
        let next_run = AtomicUsize::new(0);
        let process_run = |run: &[&Job], to_writer: &std::sync::mpsc::Sender<Part>| {
            let source = run[0].source;
            let mut record = std::borrow::Cow::Borrowed(&records[source]);
            let opened = open_source(&records[source].path, deferred[source], &plan.input);
            if let Some(hashed) = opened.hashed {
                if let Ok(hash) = &hashed {
                    record.to_mut().blake3.clone_from(hash);
                }
                late_hashes.lock().expect("lock").push((source, hashed));
            }
            let record = record.as_ref();
            let mut reader = match opened.reader {
                Ok(r) => r,
                Err(e) => {
                    for job in run {
                        let part = failed_part(record, job.index, config_sha, e.clone());
                        failures.fetch_add(1, Ordering::Relaxed);
                        // The writer only stops after every sender is gone.
                        let _ = to_writer.send(part);
                        progress.tick(failures.load(Ordering::Relaxed));
                    }
                    return;
                }
            };
            for job in run {
                if cancel.load(Ordering::SeqCst) {
                    return;
                }
                let part = process_one(reader.as_mut(), record, job.index, config_sha, &plan);
                if part.status != "done" {
                    failures.fetch_add(1, Ordering::Relaxed);
                }
                let _ = to_writer.send(part);
                progress.tick(failures.load(Ordering::Relaxed));
            }
        };
        pool.scope(|scope| {
            for _ in 0..threads {
                let to_writer = to_writer.clone();
                let (next_run, runs, process_run) = (&next_run, &runs, &process_run);
                scope.spawn(move |_| {
                    while let Some(run) = runs.get(next_run.fetch_add(1, Ordering::Relaxed)) {
                        if cancel.load(Ordering::SeqCst) {
                            break;
                        }
                        process_run(run, &to_writer);
                    }
                });
            }
        });
        drop(to_writer);
        writer.join().expect("the writer thread does not panic")
    });
    progress.finish();
    for (source, hash) in late_hashes.into_inner().expect("lock") {
        match hash {
            Ok(hash) => records[source].blake3 = hash,
            Err(e) => records[source].error = Some(e),
        }
    }
    if let Some(e) = save_errors.lock().expect("lock").first() {
        bail!("cannot write results: {e}");
    }
    if cancel.load(Ordering::SeqCst) {
        eprintln!("vortcat: stopped; {} holds the finished snapshots. Run the same command again to resume.", out.display());
        return Ok(ExitCode::from(EXIT_INTERRUPTED));
    }
    let Ordered {
        statuses,
        stations,
        tubes,
        tally,
        stream,
        ..
    } = ordered;
    // The stream is gone only after a write error, reported above.
    let Some(stream) = stream else {
        bail!("internal: the catalog stream was closed early");
    };
    anyhow::ensure!(
        statuses.len() == jobs.len(),
        "internal: {} of {} snapshots reached the catalog",
        statuses.len(),
        jobs.len()
    );
    let units = records
        .iter()
        .find(|r| r.error.is_none())
        .and_then(|r| vortcat_field::open(Path::new(&r.path), &plan.input).ok())
        .map(|r| r.info().grid.units().clone())
        .unwrap_or_default();
    // Input failures are reported by the unsharded run and by shard 0 only, so that merged
    // shards count each once.
    let reports_inputs = shard.is_none_or(|s| s.index == 0);
    let assembled = Assembled {
        stations,
        tubes,
        statuses,
        records,
        config: config.clone(),
        config_sha: config_sha.clone(),
        units,
    };
    let meta = RunMeta {
        started_at,
        seconds: started.elapsed().as_secs_f64(),
        threads,
        resumed: skipped,
        shard,
        snapshot_set,
        reports_inputs,
    };
    write_outputs(&out, &assembled, stream, &meta)?;
    let Assembled {
        tubes,
        statuses,
        records,
        units,
        ..
    } = assembled;
    let input_failures: Vec<&InputRecord> = if reports_inputs {
        records.iter().filter(|r| r.error.is_some()).collect()
    } else {
        Vec::new()
    };
    let failed_snapshots = statuses.iter().filter(|s| s.status != "done").count();

    for r in &input_failures {
        eprintln!("vortcat: error: {}", r.error.as_deref().unwrap_or(""));
    }
    for s in statuses.iter().filter(|s| s.status != "done") {
        eprintln!(
            "vortcat: failed: {}: {}",
            s.snapshot,
            s.error.as_deref().unwrap_or("")
        );
    }
    print!("{}", summary_table(&tally, &units));
    println!(
        "{} snapshots ({}), {} vortices ({} flagged) -> {}",
        jobs.len(),
        failure_counts(failed_snapshots, input_failures.len()),
        tally.vortices,
        tally.flagged,
        out.join("catalog.csv").display()
    );
    if plan.input.geometry == vortcat_field::Geometry::Volume {
        println!(
            "{} tubes ({} with a fitted station) -> {}",
            tubes.len(),
            tubes.iter().filter(|t| t.fitted > 0).count(),
            out.join("tubes.csv").display()
        );
    }
    if args.report {
        crate::report::write(&out, &crate::report::ReportFlags::defaults())?;
    }
    Ok(if failed_snapshots > 0 || !input_failures.is_empty() {
        ExitCode::from(EXIT_PARTIAL)
    } else {
        ExitCode::SUCCESS
    })
}

/// Everything a survey (or a merge of shards) writes besides the catalog.
pub(crate) struct Assembled {
    /// Tube stations and summaries (volume surveys), in snapshot, tube, station order.
    pub stations: Vec<volume::StationRow>,
    pub tubes: Vec<volume::TubeRow>,
    pub statuses: Vec<SnapshotStatus>,
    pub records: Vec<InputRecord>,
    pub config: Config,
    pub config_sha: String,
    pub units: vortcat_field::Units,
}

/// Facts about the run itself, for the manifest.
pub(crate) struct RunMeta {
    pub started_at: SystemTime,
    pub seconds: f64,
    pub threads: usize,
    pub resumed: usize,
    pub shard: Option<Shard>,
    /// Number of snapshots of the whole survey and the hash of their list.
    pub snapshot_set: (usize, String),
    /// Whether this run's manifest counts unreadable inputs as failures.
    pub reports_inputs: bool,
}

/// The failure part of a run's summary line, e.g. `2 failed` or `0 failed, 1 input file
/// unreadable`. An input that could not even be opened contributes no snapshot, so it is not
/// among the failed snapshots; without its own count, "0 failed" would read as a clean run
/// beside exit code 3.
pub(crate) fn failure_counts(failed_snapshots: usize, unreadable_inputs: usize) -> String {
    match unreadable_inputs {
        0 => format!("{failed_snapshots} failed"),
        1 => format!("{failed_snapshots} failed, 1 input file unreadable"),
        n => format!("{failed_snapshots} failed, {n} input files unreadable"),
    }
}

/// This process's peak resident memory (Linux `VmHWM`), in MiB; `None` elsewhere.
fn peak_rss_mib() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kib: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib / 1024.0)
}

/// The identity of the whole survey's snapshot list: every input with size and snapshot count.
fn snapshot_set_hash(records: &[InputRecord]) -> (usize, String) {
    let mut h = Sha256::new();
    let mut total = 0;
    for r in records {
        h.update(format!("{}\0{}\0{}\n", r.path, r.bytes, r.snapshots).as_bytes());
        total += r.snapshots;
    }
    (total, inputs::hex(&h.finalize()))
}

/// Writes catalog.csv, catalog.jsonl, units.csv, summary.json and run.json; for volume
/// surveys also stations.csv, tubes.csv, their JSON lines and units tables. The catalog,
/// streamed while its rows were computed (or stitched), is finished here, first: run.json,
/// which marks a finished run, comes last.
pub(crate) fn write_outputs(
    out: &Path,
    a: &Assembled,
    catalog: catalog::Stream,
    meta: &RunMeta,
) -> anyhow::Result<()> {
    catalog.finish()?;
    if a.config.input.geometry == vortcat_field::Geometry::Volume {
        volume::write_outputs(
            out,
            &a.stations,
            &a.tubes,
            &a.units,
            &a.config.volume.criterion,
        )?;
    }
    catalog::write_units(
        &out.join("units.csv"),
        catalog::COLUMNS,
        &a.units,
        &a.config.detection.criterion,
    )?;
    let failed = a.statuses.iter().filter(|s| s.status != "done").count();
    let input_failures = if meta.reports_inputs {
        a.records.iter().filter(|r| r.error.is_some()).count()
    } else {
        0
    };
    let summary = serde_json::json!({
        "snapshots": a.statuses.len(),
        "snapshots_done": a.statuses.len() - failed,
        "snapshots_failed": failed,
        "inputs_failed": input_failures,
        "vortices": a.statuses.iter().map(|s| s.vortices).sum::<usize>(),
        "vortices_flagged": a.statuses.iter().map(|s| s.flagged).sum::<usize>(),
        "seconds": meta.seconds,
        "peak_rss_mib": peak_rss_mib(),
        "per_snapshot": a.statuses,
    });
    store::write_atomic(
        &out.join("summary.json"),
        (serde_json::to_string_pretty(&summary)? + "\n").as_bytes(),
    )?;
    let manifest = serde_json::json!({
        "tool": "vortcat",
        "version": env!("CARGO_PKG_VERSION"),
        "git_commit": option_env!("VORTCAT_GIT_COMMIT").unwrap_or("unknown"),
        "command": std::env::args().collect::<Vec<_>>(),
        "config": a.config,
        "config_sha256": a.config_sha,
        "inputs": a.records,
        "snapshots": a.statuses.iter().map(|s| serde_json::json!({
            "snapshot": s.snapshot, "status": s.status, "error": s.error,
        })).collect::<Vec<_>>(),
        "started": humantime::format_rfc3339_seconds(meta.started_at).to_string(),
        "ended": humantime::format_rfc3339_seconds(SystemTime::now()).to_string(),
        "threads": meta.threads,
        "resumed_snapshots": meta.resumed,
        "shard": meta.shard,
        "survey_snapshots": meta.snapshot_set.0,
        "survey_snapshots_sha256": meta.snapshot_set.1,
        "complete": true,
    });
    store::write_atomic(
        &out.join("run.json"),
        (serde_json::to_string_pretty(&manifest)? + "\n").as_bytes(),
    )?;
    Ok(())
}

fn median(mut values: Vec<f64>) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    values.sort_by(f64::total_cmp);
    let n = values.len();
    Some(if n % 2 == 1 {
        values[n / 2]
    } else {
        0.5 * (values[n / 2 - 1] + values[n / 2])
    })
}

/// A short table per chosen model: count, flagged, medians of |Γ|, rc and γ.
fn summary_table(tally: &Tally, units: &vortcat_field::Units) -> String {
    if tally.models.is_empty() {
        return String::new();
    }
    let fmt = |x: Option<f64>| x.map_or_else(|| "-".to_string(), |v| format!("{v:.4e}"));
    let mut out = format!(
        "{:<12} {:>7} {:>8} {:>14} {:>14} {:>14}\n",
        "model", "count", "flagged", "median |Γ|", "median rc", "median γ"
    );
    for (model, m) in &tally.models {
        out.push_str(&format!(
            "{:<12} {:>7} {:>8} {:>14} {:>14} {:>14}\n",
            model,
            m.count,
            m.flagged,
            fmt(median(m.abs_circulation.clone())),
            fmt(median(m.core_radius.clone())),
            fmt(median(m.strain_rate.clone())),
        ));
    }
    out.push_str(&format!(
        "units: Γ ({l})*({v}), rc {l}, γ ({v})/({l})\n",
        l = units.length,
        v = units.velocity
    ));
    out
}

/// Refuses to mix results of different configs in one folder unless `--force`.
fn check_previous(out: &Path, config_sha: &str, force: bool) -> anyhow::Result<()> {
    let previous = out.join("config.toml");
    if let Ok(old) = std::fs::read_to_string(&previous) {
        if config_hash(&old) != config_sha {
            if !force {
                bail!(
                    "{}: holds a survey with a different config; use another --out, or --force to start afresh there",
                    out.display()
                );
            }
            let parts = out.join("parts");
            if parts.exists() {
                std::fs::remove_dir_all(&parts)
                    .with_context(|| format!("{}: cannot clear", parts.display()))?;
            }
        }
    }
    Ok(())
}

/// A run's source, opened.
struct OpenedSource {
    /// The reader, or the error (naming the file).
    reader: Result<Box<dyn vortcat_field::SnapshotReader>, String>,
    /// For an input read once: its BLAKE3 (for the manifest and the parts' keys) or the read
    /// error. `None` when the input was hashed before processing.
    hashed: Option<Result<String, String>>,
}

/// Opens the source of a run of snapshots. An input whose hashing was deferred (`read_once`)
/// is read whole here, once, and the reader parses the same bytes that were hashed.
fn open_source(path: &str, read_once: bool, spec: &vortcat_field::InputSpec) -> OpenedSource {
    let file = Path::new(path);
    if !read_once {
        return OpenedSource {
            reader: vortcat_field::open(file, spec).map_err(|e| e.to_string()),
            hashed: None,
        };
    }
    match std::fs::read(file) {
        Ok(bytes) => {
            let hash = blake3::hash(&bytes).to_hex().to_string();
            OpenedSource {
                reader: vortcat_field::open_bytes(file, bytes, spec).map_err(|e| e.to_string()),
                hashed: Some(Ok(hash)),
            }
        }
        Err(e) => {
            let message = format!("{path}: read error: {e}");
            OpenedSource {
                reader: Err(message.clone()),
                hashed: Some(Err(message)),
            }
        }
    }
}

/// Largest single-snapshot file read whole into memory to be hashed and parsed at once
/// (larger ones are hashed streaming, then read by the format's reader).
const READ_WHOLE_LIMIT: u64 = 256 << 20;

/// Whether `path` is a file that [`vortcat_field::open_bytes`] parses from memory.
fn reads_from_bytes(path: &Path, spec: &vortcat_field::InputSpec) -> bool {
    path.is_file()
        && matches!(
            vortcat_field::format::detect_format(path, spec),
            Ok(vortcat_field::FormatHint::Npy
                | vortcat_field::FormatHint::Npz
                | vortcat_field::FormatHint::Csv)
        )
}

/// The results of a survey in catalog order. Each result is appended to the catalog stream
/// once all results before it are in; results that arrive ahead of their turn wait here.
/// Of a result appended, only what the manifest and the closing summary need is kept.
struct Ordered {
    /// Results not yet appended, by position in the job list.
    waiting: Vec<Option<(Part, Lines)>>,
    /// The statuses of the results appended, in order.
    statuses: Vec<SnapshotStatus>,
    /// Their tube stations and summaries (volume surveys).
    stations: Vec<volume::StationRow>,
    tubes: Vec<volume::TubeRow>,
    /// Their rows' figures for the summary table.
    tally: Tally,
    stream: Option<catalog::Stream>,
    /// The first error writing the stream; from then on nothing more is appended, and the
    /// unfinished stream has removed its temporary files.
    error: Option<String>,
}

impl Ordered {
    /// Starts with the results of earlier runs (`None` where a snapshot is still to compute).
    fn new(earlier: Vec<Option<(Part, Lines)>>, stream: catalog::Stream) -> Self {
        let mut ordered = Self {
            statuses: Vec::with_capacity(earlier.len()),
            stations: Vec::new(),
            tubes: Vec::new(),
            tally: Tally::default(),
            waiting: earlier,
            stream: Some(stream),
            error: None,
        };
        ordered.advance();
        ordered
    }

    /// Takes the result at position `at` and appends whatever is now in turn.
    fn arrive(&mut self, at: usize, part: Part, lines: Lines) {
        self.waiting[at] = Some((part, lines));
        self.advance();
    }

    fn advance(&mut self) {
        while let Some(slot) = self.waiting.get_mut(self.statuses.len()) {
            let Some((part, lines)) = slot.take() else {
                break;
            };
            if let Some(stream) = &mut self.stream {
                if let Err(e) = stream.push(&lines) {
                    self.error = Some(crate::one_line(&e));
                    self.stream = None;
                }
            }
            self.tally.add(&part.rows);
            self.statuses.push(SnapshotStatus {
                snapshot: part.snapshot,
                status: part.status,
                error: part.error,
                candidates: part.candidates,
                vortices: part.rows.len(),
                flagged: part.rows.iter().filter(|r| !r.flags.is_empty()).count(),
                timing: part.timing,
            });
            self.stations.extend(part.stations);
            self.tubes.extend(part.tubes);
        }
    }
}

/// Per-model figures of a catalog for the closing summary table, gathered snapshot by
/// snapshot so that the rows themselves need not be kept (a survey's memory then does not
/// grow with its catalog, bar three numbers a vortex).
#[derive(Debug, Default)]
struct Tally {
    /// Rows, and rows with a flag.
    vortices: usize,
    flagged: usize,
    /// By chosen model (rows without a model are counted above only).
    models: std::collections::BTreeMap<String, ModelTally>,
}

#[derive(Debug, Default)]
struct ModelTally {
    count: usize,
    flagged: usize,
    abs_circulation: Vec<f64>,
    core_radius: Vec<f64>,
    strain_rate: Vec<f64>,
}

impl Tally {
    fn add(&mut self, rows: &[CatalogRow]) {
        for r in rows {
            let flagged = !r.flags.is_empty();
            self.vortices += 1;
            self.flagged += usize::from(flagged);
            if r.model.is_empty() {
                continue;
            }
            let m = match self.models.get_mut(&r.model) {
                Some(m) => m,
                None => self.models.entry(r.model.clone()).or_default(),
            };
            m.count += 1;
            m.flagged += usize::from(flagged);
            m.abs_circulation.extend(r.circulation.map(f64::abs));
            m.core_radius.extend(r.core_radius);
            m.strain_rate.extend(r.strain_rate);
        }
    }
}

fn failed_part(record: &InputRecord, index: usize, config_sha: &str, error: String) -> Part {
    Part {
        snapshot: format!("{}#{index}", record.path),
        file: record.path.clone(),
        index,
        source_blake3: record.blake3.clone(),
        config_sha256: config_sha.to_string(),
        status: "failed".into(),
        error: Some(error),
        candidates: 0,
        rows: vec![],
        stations: vec![],
        tubes: vec![],
        timing: Timing::default(),
    }
}

fn process_one(
    reader: &mut dyn vortcat_field::SnapshotReader,
    record: &InputRecord,
    index: usize,
    config_sha: &str,
    plan: &Plan,
) -> Part {
    if plan.input.geometry == vortcat_field::Geometry::Volume {
        return match volume::process(reader, index, &record.path, plan) {
            Ok(outcome) => Part {
                snapshot: format!("{}#{index}", record.path),
                file: record.path.clone(),
                index,
                source_blake3: record.blake3.clone(),
                config_sha256: config_sha.to_string(),
                status: "done".into(),
                error: None,
                candidates: outcome.tubes.len(),
                rows: vec![],
                stations: outcome.stations,
                tubes: outcome.tubes,
                timing: outcome.timing,
            },
            Err(e) => failed_part(
                record,
                index,
                config_sha,
                format!("{}: {}", record.path, crate::one_line(&e)),
            ),
        };
    }
    let t0 = Instant::now();
    let snapshot = match reader.read(index) {
        Ok(s) => s,
        Err(e) => return failed_part(record, index, config_sha, e.to_string()),
    };
    let read = t0.elapsed().as_secs_f64();
    match pipeline::process(&snapshot, &record.path, plan) {
        Ok(outcome) => Part {
            snapshot: format!("{}#{index}", record.path),
            file: record.path.clone(),
            index,
            source_blake3: record.blake3.clone(),
            config_sha256: config_sha.to_string(),
            status: "done".into(),
            error: None,
            candidates: outcome.candidates,
            rows: outcome.rows,
            stations: vec![],
            tubes: vec![],
            timing: Timing {
                read,
                detect: outcome.detect_seconds,
                fit: outcome.fit_seconds,
            },
        },
        Err(e) => failed_part(
            record,
            index,
            config_sha,
            format!("{}: {}", record.path, crate::one_line(&e)),
        ),
    }
}

/// Splits the pending jobs into runs of consecutive snapshots of one file, small enough that
/// every worker gets several runs.
fn group_runs<'a>(pending: &[&'a Job], threads: usize) -> Vec<Vec<&'a Job>> {
    let target = (pending.len() / (4 * threads.max(1))).clamp(1, 64);
    let mut runs: Vec<Vec<&Job>> = Vec::new();
    for &job in pending {
        match runs.last_mut() {
            Some(run)
                if run.len() < target
                    && run[0].source == job.source
                    && run.last().map(|j| j.index + 1) == Some(job.index) =>
            {
                run.push(job)
            }
            _ => runs.push(vec![job]),
        }
    }
    runs
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A part of `rows` rows for snapshot `n`, with values that need CSV quoting.
    fn part_with_rows(n: usize, rows: usize) -> Part {
        let file = format!("dir/a, \"{n}\" é.npz");
        Part {
            snapshot: format!("{file}#0"),
            file: file.clone(),
            index: 0,
            source_blake3: "abc".into(),
            config_sha256: "cfg".into(),
            status: "done".into(),
            error: None,
            candidates: rows,
            rows: (1..=rows)
                .map(|vortex| CatalogRow {
                    snapshot: format!("{file}#0"),
                    vortex,
                    file: file.clone(),
                    circulation: Some(n as f64 / 3.0 + vortex as f64),
                    flags: if vortex % 2 == 0 {
                        "edge;noisy".into()
                    } else {
                        String::new()
                    },
                    ..CatalogRow::default()
                })
                .collect(),
            stations: vec![],
            tubes: vec![],
            timing: Timing::default(),
        }
    }

    #[test]
    fn results_arriving_in_any_order_stream_the_catalog_of_all_rows() {
        // Earlier results at 0 and 3; the rest arrive out of order, one of them empty. The
        // streamed files must be byte for byte the table of all rows written at once.
        let parts: Vec<Part> = [2, 0, 3, 1, 4, 2]
            .iter()
            .enumerate()
            .map(|(n, &rows)| part_with_rows(n, rows))
            .collect();
        let lines = |p: &Part| Lines::of(&p.rows).unwrap();
        let earlier = parts
            .iter()
            .enumerate()
            .map(|(at, p)| [0, 3].contains(&at).then(|| (p.clone(), lines(p))))
            .collect();
        let streamed = tempfile::tempdir().unwrap();
        let stream = catalog::Stream::create(streamed.path(), "catalog", catalog::COLUMNS).unwrap();
        let mut ordered = Ordered::new(earlier, stream);
        assert_eq!(
            ordered.statuses.len(),
            1,
            "only the first result is in turn"
        );
        for at in [4, 2, 5, 1] {
            ordered.arrive(at, parts[at].clone(), lines(&parts[at]));
            let expected = if at == 1 { 6 } else { 1 };
            assert_eq!(ordered.statuses.len(), expected, "after {at}");
        }
        assert!(ordered.error.is_none());
        let order: Vec<&str> = ordered
            .statuses
            .iter()
            .map(|s| s.snapshot.as_str())
            .collect();
        assert_eq!(
            order,
            parts
                .iter()
                .map(|p| p.snapshot.as_str())
                .collect::<Vec<_>>()
        );
        let counts: Vec<(usize, usize)> = ordered
            .statuses
            .iter()
            .map(|s| (s.vortices, s.flagged))
            .collect();
        assert_eq!(counts, [(2, 1), (0, 0), (3, 1), (1, 0), (4, 2), (2, 1)]);
        assert_eq!((ordered.tally.vortices, ordered.tally.flagged), (12, 5));
        ordered.stream.take().unwrap().finish().unwrap();

        let whole = tempfile::tempdir().unwrap();
        let rows: Vec<CatalogRow> = parts.iter().flat_map(|p| p.rows.clone()).collect();
        catalog::write_table(whole.path(), "catalog", catalog::COLUMNS, &rows).unwrap();
        for name in ["catalog.csv", "catalog.jsonl"] {
            let a = std::fs::read(streamed.path().join(name)).unwrap();
            assert_eq!(a, std::fs::read(whole.path().join(name)).unwrap(), "{name}");
        }
        assert_eq!(
            std::fs::read_dir(streamed.path()).unwrap().count(),
            2,
            "no temporaries"
        );
    }

    #[test]
    fn the_summary_table_is_tallied_per_model() {
        let row =
            |model: &str, circulation: f64, core_radius: Option<f64>, flags: &str| CatalogRow {
                model: model.into(),
                circulation: Some(circulation),
                core_radius,
                strain_rate: (model == "burgers").then_some(circulation.abs() / 10.0),
                flags: flags.into(),
                ..CatalogRow::default()
            };
        let mut tally = Tally::default();
        // In two snapshots, as a survey adds them; one row without a model (a failed fit).
        tally.add(&[
            row("lamb-oseen", -2.0, Some(1.0), ""),
            row("burgers", 5.0, Some(2.0), "edge"),
        ]);
        tally.add(&[
            row("lamb-oseen", 6.0, Some(3.0), "noisy"),
            row("lamb-oseen", 4.0, None, ""),
            row("", 1.0, None, "fit-failed"),
        ]);
        assert_eq!((tally.vortices, tally.flagged), (5, 3));
        let units = vortcat_field::Units {
            length: "mm".into(),
            velocity: "m/s".into(),
        };
        let table = summary_table(&tally, &units);
        let lines: Vec<Vec<&str>> = table
            .lines()
            .map(|l| l.split_whitespace().collect())
            .collect();
        // Models in name order; medians of |Γ| (2, 4, 6 -> 4) and of the rc present (1, 3 -> 2).
        assert_eq!(
            lines[1],
            ["burgers", "1", "1", "5.0000e0", "2.0000e0", "5.0000e-1"]
        );
        assert_eq!(
            lines[2],
            ["lamb-oseen", "3", "1", "4.0000e0", "2.0000e0", "-"]
        );
        assert_eq!(lines.len(), 4, "{table}");
        assert!(lines[3].contains(&"(mm)*(m/s),"), "{table}");
        assert_eq!(summary_table(&Tally::default(), &units), "");
    }

    #[test]
    fn an_unfinished_stream_leaves_nothing_behind() {
        let dir = tempfile::tempdir().unwrap();
        let mut stream = catalog::Stream::create(dir.path(), "catalog", catalog::COLUMNS).unwrap();
        stream
            .push(&Lines::of(&part_with_rows(0, 3).rows).unwrap())
            .unwrap();
        assert_eq!(
            std::fs::read_dir(dir.path()).unwrap().count(),
            2,
            "two temporaries"
        );
        drop(stream);
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    }

    #[test]
    fn unreadable_inputs_are_counted_apart_from_failed_snapshots() {
        assert_eq!(failure_counts(0, 0), "0 failed");
        assert_eq!(failure_counts(2, 0), "2 failed");
        assert_eq!(failure_counts(0, 1), "0 failed, 1 input file unreadable");
        assert_eq!(failure_counts(1, 3), "1 failed, 3 input files unreadable");
    }
}
