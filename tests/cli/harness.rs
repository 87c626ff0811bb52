//! A small harness: run the binary, capture what a user sees.

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::{Mutex, MutexGuard};

/// Held while a test writes an HDF5 file in this process and while a child is spawned.
/// libhdf5 locks files with flock on descriptors that are not close-on-exec: a child forked
/// by another test while a file is open for writing inherits that lock, and the vortcat run
/// that then opens the file fails with "unable to lock file". Keeping the two apart removes it.
static FORK_GUARD: Mutex<()> = Mutex::new(());

/// The guard for writing an HDF5 file inside a test (drop the file before the guard).
pub fn hdf5_writing() -> MutexGuard<'static, ()> {
    FORK_GUARD.lock().unwrap_or_else(|e| e.into_inner())
}

pub struct Run {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
}

pub fn vortcat<I, S>(args: I) -> Run
where
    I: IntoIterator<Item = S>,
    S: AsRef<std::ffi::OsStr>,
{
    let guard = hdf5_writing();
    let child = Command::new(env!("CARGO_BIN_EXE_vortcat"))
        .args(args)
        .env_remove("RUST_BACKTRACE")
        // A test run inside a SLURM job must not pick up its array variables.
        .env_remove("SLURM_ARRAY_TASK_ID")
        .env_remove("SLURM_ARRAY_TASK_MIN")
        .env_remove("SLURM_ARRAY_TASK_MAX")
        .env_remove("SLURM_ARRAY_TASK_COUNT")
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("run vortcat");
    drop(guard);
    let out = child.wait_with_output().expect("run vortcat");
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

pub fn fixtures() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../fixtures")
}

/// The contract for bad input: exit code 1, one line on stderr that starts with
/// `vortcat: error:` and contains every `expected` fragment, no panic, nothing on stdout.
pub fn assert_one_line_error(run: &Run, expected: &[&str]) {
    assert_eq!(run.code, 1, "exit code; stderr: {}", run.stderr);
    assert!(!run.stderr.contains("panicked"), "panic: {}", run.stderr);
    assert!(
        !run.stderr.contains("RUST_BACKTRACE"),
        "backtrace hint: {}",
        run.stderr
    );
    let lines: Vec<&str> = run.stderr.lines().collect();
    assert_eq!(lines.len(), 1, "expected one line, got: {:?}", lines);
    assert!(lines[0].starts_with("vortcat: error: "), "{}", lines[0]);
    for e in expected {
        assert!(lines[0].contains(e), "'{e}' missing from: {}", lines[0]);
    }
    assert!(run.stdout.is_empty(), "stdout: {}", run.stdout);
}

/// `vortcat synth --out DIR --snapshots N --nx 96 --ny 64 EXTRA...`: small synthetic snapshots
/// of the default scenario for the CLI tests (asserts that synth succeeded).
pub fn synth_small(dir: &std::path::Path, snapshots: usize, extra: &[&str]) {
    let n = snapshots.to_string();
    let mut args = vec![
        "synth",
        "--out",
        dir.to_str().unwrap(),
        "--snapshots",
        n.as_str(),
        "--nx",
        "96",
        "--ny",
        "64",
    ];
    args.extend_from_slice(extra);
    let run = vortcat(args);
    assert_eq!(run.code, 0, "{}", run.stderr);
}
