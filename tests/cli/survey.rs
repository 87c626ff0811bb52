//! `vortcat survey` end to end: outputs, determinism across thread counts, resuming after
//! `kill -9`, failures that do not stop the batch, awkward file names, config changes.

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use crate::harness::{synth_small, vortcat};

fn survey(inputs: &[&Path], out: &Path, extra: &[&str]) -> crate::harness::Run {
    let mut args: Vec<String> = vec!["survey".into()];
    args.extend(inputs.iter().map(|p| p.to_string_lossy().into_owned()));
    args.extend([
        "--out".into(),
        out.to_string_lossy().into_owned(),
        "--progress".into(),
        "none".into(),
    ]);
    args.extend(extra.iter().map(|s| s.to_string()));
    vortcat(args)
}

#[test]
fn outputs_and_manifest() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 3, &[]);
    let out = dir.path().join("out");
    let run = survey(&[&data], &out, &["--viscosity", "1e-6"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    for f in [
        "catalog.csv",
        "catalog.jsonl",
        "units.csv",
        "summary.json",
        "run.json",
        "config.toml",
    ] {
        assert!(out.join(f).is_file(), "{f} missing");
    }
    let csv_text = std::fs::read_to_string(out.join("catalog.csv")).unwrap();
    let header = csv_text.lines().next().unwrap();
    for col in [
        "snapshot",
        "vortex",
        "x",
        "y",
        "sense",
        "model",
        "circulation",
        "circulation_err",
        "core_radius",
        "core_radius_err",
        "strain_rate",
        "strain_rate_err",
        "peak_velocity",
        "conv_u",
        "conv_v",
        "n_points",
        "residual_rms",
        "r2",
        "flags",
    ] {
        assert!(header.split(',').any(|h| h == col), "column {col} missing");
    }
    let rows = csv_text.lines().count() - 1;
    assert!(rows > 0);
    let jsonl = std::fs::read_to_string(out.join("catalog.jsonl")).unwrap();
    assert_eq!(jsonl.lines().count(), rows);
    let manifest: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("run.json")).unwrap()).unwrap();
    assert_eq!(manifest["inputs"].as_array().unwrap().len(), 3);
    assert_eq!(manifest["inputs"][0]["blake3"].as_str().unwrap().len(), 64);
    assert_eq!(manifest["snapshots"].as_array().unwrap().len(), 3);
    assert!(manifest["started"].as_str().unwrap().ends_with('Z'));
    let commit = manifest["git_commit"].as_str().unwrap();
    assert!(
        commit == "unknown"
            || (commit.len() == 40 && commit.chars().all(|c| c.is_ascii_hexdigit())),
        "{commit}"
    );
    assert_eq!(manifest["config"]["fluid"]["viscosity"], 1e-6);
    let units = std::fs::read_to_string(out.join("units.csv")).unwrap();
    assert!(units.contains("circulation,(m)*(m/s),"), "{units}");
}

#[test]
fn thread_count_does_not_change_the_catalog() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 6, &["--scenario", "population", "--vortices", "8"]);
    let (a, b) = (dir.path().join("a"), dir.path().join("b"));
    assert_eq!(survey(&[&data], &a, &["--threads", "1"]).code, 0);
    assert_eq!(survey(&[&data], &b, &["--threads", "2"]).code, 0);
    for f in ["catalog.csv", "catalog.jsonl"] {
        assert_eq!(
            std::fs::read(a.join(f)).unwrap(),
            std::fs::read(b.join(f)).unwrap(),
            "{f} differs"
        );
    }
}

/// Starts a one-thread survey of `data` into `out` in the background and returns once it has
/// finished `parts` snapshots (or has exited, or after 60 s). Standard error is piped.
fn start_and_wait_for_parts(data: &Path, out: &Path, parts: usize) -> std::process::Child {
    let guard = crate::harness::hdf5_writing();
    let mut child = Command::new(env!("CARGO_BIN_EXE_vortcat"))
        .args([
            "survey",
            data.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ])
        .args(["--threads", "1", "--progress", "none"])
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    drop(guard);
    let deadline = Instant::now() + Duration::from_secs(60);
    let done = || std::fs::read_dir(out.join("parts")).map_or(0, |d| d.count());
    while done() < parts && Instant::now() < deadline {
        if child.try_wait().unwrap().is_some() {
            break;
        }
        std::thread::sleep(Duration::from_millis(2));
    }
    child
}

/// HDF5 files are hashed before processing; single-snapshot `.npz` files in a fresh folder are
/// read once by their worker, which hashes them then: both paths must resume to the same bytes.
#[test]
fn kill_9_then_resume_gives_the_same_catalog() {
    kill_9_then_resume("hdf5");
}

#[test]
fn kill_9_then_resume_gives_the_same_catalog_for_files_read_once() {
    kill_9_then_resume("npz");
}

fn kill_9_then_resume(format: &str) {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 40, &["--format", format]);
    let reference = dir.path().join("reference");
    assert_eq!(survey(&[&data], &reference, &["--threads", "1"]).code, 0);

    let out = dir.path().join("killed");
    // Wait until some but not all snapshots are done, then SIGKILL.
    let mut child = start_and_wait_for_parts(&data, &out, 3);
    child.kill().unwrap(); // SIGKILL on Unix
    child.wait().unwrap();
    let partial = std::fs::read_dir(out.join("parts")).unwrap().count();
    let run = survey(&[&data], &out, &["--resume", "--threads", "2"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    if partial < 40 {
        assert!(
            run.stderr.contains("resuming") || partial == 0,
            "{}",
            run.stderr
        );
    }
    assert_eq!(
        std::fs::read(out.join("catalog.csv")).unwrap(),
        std::fs::read(reference.join("catalog.csv")).unwrap()
    );
    // The killed run's catalog was being streamed into temporary files: the resumed run
    // removes them (and any part it was writing).
    assert_eq!(temporaries(&out), Vec::<String>::new());
    assert_eq!(temporaries(&out.join("parts")), Vec::<String>::new());
}

/// Names of the hidden temporary files (`.NAME.tmp-PID`) in `dir`.
fn temporaries(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with('.') && n.contains(".tmp-"))
        .collect()
}

#[test]
fn a_corrupt_file_is_recorded_and_the_batch_goes_on() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 3, &[]);
    std::fs::write(
        data.join("snap_0009.npz"),
        b"PK\x03\x04 definitely not a zip",
    )
    .unwrap();
    let out = dir.path().join("out");
    let run = survey(&[&data], &out, &[]);
    assert_eq!(run.code, 3, "{}", run.stderr);
    assert!(run.stderr.contains("snap_0009.npz"), "{}", run.stderr);
    // The unreadable file gives no snapshot, so the summary line must name it separately.
    assert!(
        run.stdout
            .contains("3 snapshots (0 failed, 1 input file unreadable)"),
        "{}",
        run.stdout
    );
    let manifest: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("run.json")).unwrap()).unwrap();
    let bad: Vec<&serde_json::Value> = manifest["inputs"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|i| !i["error"].is_null())
        .collect();
    assert_eq!(bad.len(), 1);
    assert!(bad[0]["path"].as_str().unwrap().ends_with("snap_0009.npz"));
    let catalog = std::fs::read_to_string(out.join("catalog.csv")).unwrap();
    for good in ["snap_0000.npz", "snap_0001.npz", "snap_0002.npz"] {
        assert!(catalog.contains(good), "{good} not catalogued");
    }
}

#[test]
fn awkward_file_names() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 1, &[]);
    let odd = dir.path().join("run \"7\" – Δt, café.npz");
    std::fs::rename(data.join("snap_0000.npz"), &odd).unwrap();
    let out = dir.path().join("out put");
    let run = survey(&[&odd], &out, &[]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let mut reader = csv::Reader::from_path(out.join("catalog.csv")).unwrap();
    let first = reader.records().next().unwrap().unwrap();
    assert!(
        first[2].ends_with("run \"7\" – Δt, café.npz"),
        "{:?}",
        &first[2]
    );
}

#[test]
fn changed_config_is_refused_without_force() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 1, &[]);
    let out = dir.path().join("out");
    assert_eq!(survey(&[&data], &out, &[]).code, 0);
    let run = survey(&[&data], &out, &["--criterion", "q"]);
    assert_eq!(run.code, 1);
    assert!(run.stderr.contains("different config"), "{}", run.stderr);
    assert_eq!(
        survey(&[&data], &out, &["--criterion", "q", "--force"]).code,
        0
    );
}

#[test]
fn print_config_shows_every_default_and_reads_back() {
    let run = vortcat(["survey", "--print-config", "--viscosity", "1e-6"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    for key in [
        "[input]",
        "[fluid]",
        "[detection]",
        "criterion =",
        "[fit]",
        "models =",
        "[flags]",
    ] {
        assert!(run.stdout.contains(key), "{key} missing:\n{}", run.stdout);
    }
    let parsed: toml::Value = toml::from_str(&run.stdout).unwrap();
    assert_eq!(parsed["fluid"]["viscosity"].as_float(), Some(1e-6));
    let dir = tempfile::tempdir().unwrap();
    let cfg = dir.path().join("run.toml");
    std::fs::write(&cfg, &run.stdout).unwrap();
    let again = vortcat([
        "survey",
        "--print-config",
        "--config",
        cfg.to_str().unwrap(),
    ]);
    assert_eq!(again.stdout, run.stdout);
}

#[test]
fn no_inputs_and_bad_usage() {
    let dir = tempfile::tempdir().unwrap();
    let run = survey(
        &[&dir.path().join("nothing-*.h5")],
        &dir.path().join("o"),
        &[],
    );
    assert_eq!(run.code, 1);
    assert!(run.stderr.contains("matches no file"), "{}", run.stderr);
    let run = vortcat(["survey", "x.h5"]);
    assert_eq!(run.code, 2, "missing --out is a usage error");
    let run = survey(
        &[dir.path()],
        &dir.path().join("o"),
        &["--criterion", "helicity"],
    );
    assert_eq!(run.code, 1);
    assert!(run.stderr.contains("detection.criterion"), "{}", run.stderr);
}

#[test]
fn ctrl_c_stops_cleanly_and_leaves_a_resumable_state() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 40, &["--format", "hdf5"]);
    let reference = dir.path().join("reference");
    assert_eq!(survey(&[&data], &reference, &["--threads", "2"]).code, 0);
    let out = dir.path().join("interrupted");
    let mut child = start_and_wait_for_parts(&data, &out, 2);
    let interrupted = child.try_wait().unwrap().is_none();
    if interrupted {
        // SIGINT, as Ctrl-C sends it.
        let status = Command::new("kill")
            .args(["-INT", &child.id().to_string()])
            .status()
            .unwrap();
        assert!(status.success());
    }
    let output = child.wait_with_output().unwrap();
    let stderr = String::from_utf8_lossy(&output.stderr);
    if interrupted && output.status.code() == Some(130) {
        assert!(stderr.contains("run the same command again"), "{stderr}");
        assert!(
            !out.join("run.json").exists(),
            "an interrupted survey has no final manifest"
        );
        assert!(
            !out.join("catalog.csv").exists(),
            "an interrupted survey has no catalog"
        );
        assert_eq!(
            temporaries(&out),
            Vec::<String>::new(),
            "an interrupted survey removes the catalog it was streaming"
        );
    } else {
        // The survey finished before the signal arrived: nothing to interrupt on this machine.
        assert_eq!(output.status.code(), Some(0), "{stderr}");
    }
    let run = survey(&[&data], &out, &["--threads", "2"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(
        std::fs::read(out.join("catalog.csv")).unwrap(),
        std::fs::read(reference.join("catalog.csv")).unwrap()
    );
}

#[test]
fn single_snapshot_files_read_once_are_hashed_and_resumed_like_the_rest() {
    // In a fresh output folder each single-snapshot .npz, .npy or CSV file is read once by its
    // worker, which hashes and parses the same bytes; a rerun into the same folder hashes the
    // files before it starts. Both must give the manifest the BLAKE3 of the file (checked here
    // with the blake3 crate, the reference implementation of the published function) and the
    // rerun must find every snapshot done.
    let dir = tempfile::tempdir().unwrap();
    let mut inputs = Vec::new();
    for format in ["npz", "npy", "csv"] {
        let data = dir.path().join(format);
        synth_small(&data, 2, &["--format", format]);
        inputs.push(data);
    }
    // A single .npy file holding both components of one snapshot, (2, ny, nx).
    let component = |name: &str| -> ndarray::Array2<f64> {
        ndarray_npy::read_npy(dir.path().join("npy/snap_0000").join(name)).unwrap()
    };
    let stacked = ndarray::stack(
        ndarray::Axis(0),
        &[component("u.npy").view(), component("v.npy").view()],
    )
    .unwrap();
    let single = dir.path().join("single.npy");
    ndarray_npy::write_npy(&single, &stacked).unwrap();
    inputs.push(single);
    let inputs: Vec<&Path> = inputs.iter().map(|p| p.as_path()).collect();
    let out = dir.path().join("out");
    let first = survey(&inputs, &out, &["--threads", "2"]);
    assert_eq!(first.code, 0, "{}", first.stderr);
    let manifest = |out: &Path| -> serde_json::Value {
        serde_json::from_str(&std::fs::read_to_string(out.join("run.json")).unwrap()).unwrap()
    };
    let fresh = manifest(&out);
    let records = fresh["inputs"].as_array().unwrap();
    assert_eq!(records.len(), 7, "{records:?}");
    for r in records {
        let path = Path::new(r["path"].as_str().unwrap());
        let hash = r["blake3"].as_str().unwrap();
        if path.is_dir() {
            // A folder of component files is hashed over its files' names and contents.
            assert_eq!(hash.len(), 64, "{r}");
        } else {
            let expected = blake3::hash(&std::fs::read(path).unwrap());
            assert_eq!(hash, expected.to_hex().as_str(), "{r}");
        }
        assert!(r["error"].is_null(), "{r}");
        assert_eq!(r["snapshots"], 1, "{r}");
    }
    let catalog = std::fs::read(out.join("catalog.csv")).unwrap();

    let again = survey(&inputs, &out, &["--threads", "2"]);
    assert_eq!(again.code, 0, "{}", again.stderr);
    let n = fresh["snapshots"].as_array().unwrap().len();
    assert!(
        again
            .stderr
            .contains(&format!("resuming: {n} of {n} snapshots already done")),
        "{}",
        again.stderr
    );
    assert_eq!(manifest(&out)["inputs"], fresh["inputs"]);
    assert_eq!(std::fs::read(out.join("catalog.csv")).unwrap(), catalog);
}
