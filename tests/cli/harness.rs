//! A small harness: run the binary, capture what a user sees.

use std::path::{Path, PathBuf};
use std::process::Command;

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
    let out = Command::new(env!("CARGO_BIN_EXE_vortcat"))
        .args(args)
        .env_remove("RUST_BACKTRACE")
        // A test run inside a SLURM job must not pick up its array variables.
        .env_remove("SLURM_ARRAY_TASK_ID")
        .env_remove("SLURM_ARRAY_TASK_MIN")
        .env_remove("SLURM_ARRAY_TASK_MAX")
        .env_remove("SLURM_ARRAY_TASK_COUNT")
        .output()
        .expect("run vortcat");
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
