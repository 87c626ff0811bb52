//! Sharded surveys and `vortcat merge`: the merged catalog equals a single-process survey, and
//! merge refuses missing, duplicated, partial and mismatched shards with a clear message.

use std::path::Path;

use crate::harness::{synth_small, vortcat, Run};

fn shard(data: &Path, out: &Path, k: usize, n: usize, extra: &[&str]) {
    let run = shard_run(data, out, k, n, extra);
    assert_eq!(run.code, 0, "{}", run.stderr);
}

/// One shard of a survey, whatever its exit code.
fn shard_run(data: &Path, out: &Path, k: usize, n: usize, extra: &[&str]) -> Run {
    let spec = format!("{k}/{n}");
    let mut args = vec![
        "survey",
        data.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--shard",
        spec.as_str(),
        "--progress",
        "none",
    ];
    args.extend_from_slice(extra);
    vortcat(args)
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let target = to.join(e.file_name());
        if e.path().is_dir() {
            copy_dir(&e.path(), &target);
        } else {
            std::fs::copy(e.path(), target).unwrap();
        }
    }
}

#[test]
fn merged_shards_equal_a_single_survey() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 7, &["--format", "hdf5"]); // one HDF5 stack: shards split it by time index
    let single = dir.path().join("single");
    let run = vortcat([
        "survey",
        data.to_str().unwrap(),
        "--out",
        single.to_str().unwrap(),
        "--progress",
        "none",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let sharded = dir.path().join("sharded");
    for k in 0..4 {
        shard(&data, &sharded, k, 4, &[]);
    }
    let run = vortcat(["merge", sharded.to_str().unwrap()]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    for f in ["catalog.csv", "catalog.jsonl"] {
        assert_eq!(
            std::fs::read(single.join(f)).unwrap(),
            std::fs::read(sharded.join(f)).unwrap(),
            "{f}"
        );
    }
    let m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(sharded.join("run.json")).unwrap()).unwrap();
    assert_eq!(m["snapshots"].as_array().unwrap().len(), 7);
    assert_eq!(m["inputs"][0]["blake3"].as_str().unwrap().len(), 64);
    let summary = |dir: &Path| -> serde_json::Value {
        serde_json::from_str(&std::fs::read_to_string(dir.join("summary.json")).unwrap()).unwrap()
    };
    for key in ["vortices", "vortices_flagged", "snapshots_done"] {
        assert_eq!(summary(&single)[key], summary(&sharded)[key], "{key}");
    }
}

#[test]
fn a_damaged_shard_catalog_is_named_and_no_half_catalog_is_left() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 4, &["--format", "hdf5"]);
    let sharded = dir.path().join("sharded");
    for k in 0..2 {
        shard(&data, &sharded, k, 2, &[]);
    }
    // A line of the second shard's JSON lines cut short, as a bad copy could leave it.
    let jsonl = sharded.join("shard-0001-of-0002").join("catalog.jsonl");
    let text = std::fs::read_to_string(&jsonl).unwrap();
    assert!(text.lines().count() >= 2, "the shard has rows to damage");
    let mut lines: Vec<String> = text.lines().map(String::from).collect();
    let half = lines[1].len() / 2;
    lines[1].truncate(half);
    std::fs::write(&jsonl, lines.join("\n") + "\n").unwrap();
    let out = dir.path().join("merged");
    let run = vortcat([
        "merge",
        sharded.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    assert!(
        run.stderr
            .contains("shard-0001-of-0002/catalog.jsonl line 2"),
        "{}",
        run.stderr
    );
    assert_eq!(run.stderr.trim().lines().count(), 1, "{}", run.stderr);
    // The first shard's rows had been streamed: nothing of them may stay behind.
    let left: Vec<_> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    assert!(left.is_empty(), "{left:?}");
}

#[test]
fn merge_reports_an_unreadable_input_and_exits_3() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 3, &[]);
    std::fs::write(data.join("snap_0009.npz"), b"PK\x03\x04 not a zip").unwrap();
    let sharded = dir.path().join("sharded");
    for k in 0..2 {
        let run = shard_run(&data, &sharded, k, 2, &[]);
        // Shard 0 reports the unreadable input; shard 1's snapshots are all good.
        assert_eq!(run.code, if k == 0 { 3 } else { 0 }, "{}", run.stderr);
    }
    let run = vortcat(["merge", sharded.to_str().unwrap()]);
    assert_eq!(run.code, 3, "{}", run.stderr);
    // The corrupt file gives no snapshot, so the line must count it apart from the failures.
    assert!(
        run.stdout
            .contains("3 snapshots (0 failed, 1 input file unreadable)"),
        "{}",
        run.stdout
    );
}

#[test]
fn merge_refuses_incomplete_or_inconsistent_shards() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 5, &["--format", "hdf5"]);
    let sharded = dir.path().join("sharded");
    for k in 0..3 {
        shard(&data, &sharded, k, 3, &[]);
    }

    // Missing: shard 2 removed. The message names it and the command that reruns it.
    let moved = dir.path().join("aside");
    std::fs::rename(sharded.join("shard-0002-of-0003"), &moved).unwrap();
    let run = vortcat(["merge", sharded.to_str().unwrap()]);
    assert_eq!(run.code, 1);
    assert!(
        run.stderr.contains("2 (missing)") && run.stderr.contains("--shard 2/3"),
        "{}",
        run.stderr
    );
    std::fs::rename(&moved, sharded.join("shard-0002-of-0003")).unwrap();

    // Partial: a shard without its final manifest (killed before it finished).
    let run_json = sharded.join("shard-0001-of-0003/run.json");
    let saved = std::fs::read(&run_json).unwrap();
    std::fs::remove_file(&run_json).unwrap();
    let run = vortcat(["merge", sharded.to_str().unwrap()]);
    assert_eq!(run.code, 1);
    assert!(run.stderr.contains("1 (partial)"), "{}", run.stderr);
    std::fs::write(&run_json, saved).unwrap();

    // Duplicated: the same shard given twice.
    let other = dir.path().join("copy/shard-0000-of-0003");
    copy_dir(&sharded.join("shard-0000-of-0003"), &other);
    let run = vortcat([
        "merge",
        sharded.to_str().unwrap(),
        other.to_str().unwrap(),
        "--out",
        dir.path().join("m").to_str().unwrap(),
    ]);
    assert_eq!(run.code, 1);
    assert!(
        run.stderr.contains("shard 0 of 3 appears 2 times"),
        "{}",
        run.stderr
    );

    // Mismatched config: shard 1 rerun elsewhere with another criterion, then swapped in.
    let elsewhere = dir.path().join("elsewhere");
    shard(&data, &elsewhere, 1, 3, &["--criterion", "q"]);
    std::fs::remove_dir_all(sharded.join("shard-0001-of-0003")).unwrap();
    copy_dir(
        &elsewhere.join("shard-0001-of-0003"),
        &sharded.join("shard-0001-of-0003"),
    );
    let run = vortcat(["merge", sharded.to_str().unwrap()]);
    assert_eq!(run.code, 1);
    assert!(run.stderr.contains("different config"), "{}", run.stderr);
    assert_eq!(run.stderr.lines().count(), 1, "{}", run.stderr);
}

#[test]
fn shard_auto_needs_slurm_variables() {
    let dir = tempfile::tempdir().unwrap();
    let run = vortcat([
        "survey",
        dir.path().to_str().unwrap(),
        "--out",
        dir.path().join("o").to_str().unwrap(),
        "--shard",
        "auto",
    ]);
    assert_eq!(run.code, 1);
    assert!(run.stderr.contains("SLURM_ARRAY_TASK_ID"), "{}", run.stderr);
}
