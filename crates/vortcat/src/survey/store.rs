//! The survey's on-disk state: per-snapshot result files written atomically as they finish, so
//! that a run killed at any moment can be resumed and gives the same catalog bytes.

use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};

use anyhow::Context;
use serde::{Deserialize, Serialize};
use serde_json::value::RawValue;
use sha2::{Digest, Sha256};

use super::catalog::CatalogRow;
use super::inputs::hex;
use super::volume::{StationRow, TubeRow};

/// Writes `bytes` to `path` through a temporary file in the same folder and a rename, with an
/// fsync before the rename: readers see the old file or the new one, never a torn one, even
/// after a power cut. For the run's outputs (catalog, manifest, config).
pub fn write_atomic(path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    write_via_rename(path, bytes, true)
}

/// Like [`write_atomic`] but without the fsync, for the per-snapshot parts. A process that is
/// killed loses nothing (the data are in the page cache); after a power cut or an operating
/// system crash, parts written in the last seconds before it (the kernel's writeback delay,
/// typically up to about 30 s) may come back empty or cut short. Such a part does not parse,
/// so [`Store::done`] does not count it and its snapshot is computed again: the catalog is the
/// same, only that work is repeated. An fsync per part cost about 10 % of the benchmark's wall
/// time (docs/performance.md).
fn write_unsynced(path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    write_via_rename(path, bytes, false)
}

/// The temporary file a result is written to before the rename: hidden, in the same folder
/// (a rename is atomic only within one file system) and named after the process, so that two
/// runs on one folder cannot write into each other's temporary files.
pub(crate) fn temporary_beside(path: &Path) -> PathBuf {
    let dir = path.parent().unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    dir.join(format!(".{name}.tmp-{}", std::process::id()))
}

/// Removes the temporary files in `dir` left by runs that were killed before they could
/// rename them (a survey streams its catalog into temporary files for the whole run). Only
/// files of processes that no longer exist are removed, so that two runs on one folder keep
/// each other's; where liveness cannot be checked (no `/proc`), nothing is removed. Returns
/// how many files were removed.
pub fn remove_stale_temporaries(dir: &Path) -> usize {
    let proc = Path::new("/proc");
    if !proc.join("self").exists() {
        return 0;
    }
    let Ok(entries) = fs::read_dir(dir) else {
        return 0;
    };
    let own = std::process::id();
    let mut removed = 0;
    for entry in entries.filter_map(Result::ok) {
        let name = entry.file_name();
        let Some(pid) = name.to_str().and_then(temporary_owner) else {
            continue;
        };
        if pid != own
            && !proc.join(pid.to_string()).exists()
            && fs::remove_file(entry.path()).is_ok()
        {
            removed += 1;
        }
    }
    removed
}

/// The process id in a name made by [`temporary_beside`] (`.NAME.tmp-PID`).
fn temporary_owner(name: &str) -> Option<u32> {
    let (stem, pid) = name.strip_prefix('.')?.rsplit_once(".tmp-")?;
    if stem.is_empty() || pid.is_empty() || !pid.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    pid.parse().ok()
}

fn write_via_rename(path: &Path, bytes: &[u8], sync: bool) -> anyhow::Result<()> {
    let tmp = temporary_beside(path);
    {
        let mut f =
            fs::File::create(&tmp).with_context(|| format!("{}: cannot write", tmp.display()))?;
        f.write_all(bytes)
            .with_context(|| format!("{}: cannot write", tmp.display()))?;
        if sync {
            f.sync_all()
                .with_context(|| format!("{}: cannot flush to disk", tmp.display()))?;
        }
    }
    fs::rename(&tmp, path).with_context(|| format!("{}: cannot write", path.display()))?;
    Ok(())
}

/// Timings of one snapshot, in seconds.
#[derive(Debug, Clone, Default, Serialize, Deserialize)]
pub struct Timing {
    /// Reading.
    pub read: f64,
    /// Detection.
    pub detect: f64,
    /// Fitting.
    pub fit: f64,
}

/// The result of one snapshot as stored in `DIR/parts/`.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Part {
    /// Snapshot identifier `file#index`.
    pub snapshot: String,
    /// Source file.
    pub file: String,
    /// Index in the stack.
    pub index: usize,
    /// Content hash of the source.
    pub source_blake3: String,
    /// Hash of the resolved config this result was computed with.
    pub config_sha256: String,
    /// `done` or `failed`.
    pub status: String,
    /// The error, for a failed snapshot.
    pub error: Option<String>,
    /// Number of detected candidates.
    pub candidates: usize,
    /// Catalog rows.
    pub rows: Vec<CatalogRow>,
    /// Tube stations (volume surveys; absent from plane parts).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub stations: Vec<StationRow>,
    /// Tube summaries (volume surveys; absent from plane parts).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub tubes: Vec<TubeRow>,
    /// Timings.
    pub timing: Timing,
}

/// Where the parts of a survey live.
pub struct Store {
    dir: PathBuf,
}

impl Store {
    /// Opens (creating) `out/parts`.
    pub fn open(out: &Path) -> anyhow::Result<Self> {
        let dir = out.join("parts");
        fs::create_dir_all(&dir)
            .with_context(|| format!("{}: cannot create the output folder", dir.display()))?;
        Ok(Self { dir })
    }

    /// The file name of a snapshot's part: a hash of path, content and index.
    pub fn key(file: &str, source_blake3: &str, index: usize) -> String {
        let mut h = Sha256::new();
        h.update(file.as_bytes());
        h.update([0]);
        h.update(source_blake3.as_bytes());
        h.update(index.to_le_bytes());
        format!("{}.json", &hex(&h.finalize())[..24])
    }

    /// Whether no part has been stored yet (a fresh output folder): then no snapshot can be
    /// skipped, and inputs need not be hashed before they are processed.
    pub fn is_empty(&self) -> bool {
        fs::read_dir(&self.dir).map_or(true, |entries| {
            !entries
                .filter_map(Result::ok)
                .any(|e| e.path().extension().is_some_and(|x| x == "json"))
        })
    }

    /// A finished part with the same input and config, if there is one.
    pub fn done(
        &self,
        file: &str,
        source_blake3: &str,
        index: usize,
        config_sha256: &str,
    ) -> Option<Part> {
        let path = self.dir.join(Self::key(file, source_blake3, index));
        let text = fs::read_to_string(path).ok()?;
        let part: Part = serde_json::from_str(&text).ok()?;
        (part.status == "done"
            && part.config_sha256 == config_sha256
            && part.source_blake3 == source_blake3)
            .then_some(part)
    }

    /// The stored part of a snapshot, whatever its status (the tests read parts back).
    #[cfg(test)]
    pub fn load(&self, file: &str, source_blake3: &str, index: usize) -> Option<Part> {
        let path = self.dir.join(Self::key(file, source_blake3, index));
        serde_json::from_str(&fs::read_to_string(path).ok()?).ok()
    }

    /// Stores a part atomically.
    #[cfg(test)]
    pub fn save(&self, part: &Part) -> anyhow::Result<()> {
        self.save_with_rows(part, &super::catalog::json_rows(&part.rows)?)
    }

    /// Stores a part atomically whose rows are already serialised (`rows_json[i]` is the JSON
    /// of `part.rows[i]`), so that the survey serialises each row once for the part and for
    /// the catalog's JSON lines. The bytes are those of [`Store::save`].
    pub fn save_with_rows(&self, part: &Part, rows_json: &[Box<RawValue>]) -> anyhow::Result<()> {
        anyhow::ensure!(
            rows_json.len() == part.rows.len(),
            "internal: {} serialised rows for {} rows",
            rows_json.len(),
            part.rows.len()
        );
        let view = PartView {
            snapshot: &part.snapshot,
            file: &part.file,
            index: part.index,
            source_blake3: &part.source_blake3,
            config_sha256: &part.config_sha256,
            status: &part.status,
            error: &part.error,
            candidates: part.candidates,
            rows: rows_json,
            stations: &part.stations,
            tubes: &part.tubes,
            timing: &part.timing,
        };
        let path = self
            .dir
            .join(Self::key(&part.file, &part.source_blake3, part.index));
        write_unsynced(&path, &serde_json::to_vec(&view)?)
    }
}

/// [`Part`] with its rows already serialised: the same fields in the same order (a unit test
/// checks the bytes against serialising the `Part` itself).
#[derive(Serialize)]
struct PartView<'a> {
    snapshot: &'a str,
    file: &'a str,
    index: usize,
    source_blake3: &'a str,
    config_sha256: &'a str,
    status: &'a str,
    error: &'a Option<String>,
    candidates: usize,
    rows: &'a [Box<RawValue>],
    #[serde(skip_serializing_if = "<[_]>::is_empty")]
    stations: &'a [StationRow],
    #[serde(skip_serializing_if = "<[_]>::is_empty")]
    tubes: &'a [TubeRow],
    timing: &'a Timing,
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A finished part without rows.
    fn done_part(file: &str, source_blake3: &str, index: usize, config_sha256: &str) -> Part {
        Part {
            snapshot: format!("{file}#{index}"),
            file: file.into(),
            index,
            source_blake3: source_blake3.into(),
            config_sha256: config_sha256.into(),
            status: "done".into(),
            error: None,
            candidates: 0,
            rows: vec![],
            stations: vec![],
            tubes: vec![],
            timing: Timing::default(),
        }
    }

    #[test]
    fn rows_serialised_ahead_give_the_bytes_of_the_part() {
        let dir = tempfile::tempdir().unwrap();
        let store = Store::open(dir.path()).unwrap();
        let mut part = done_part("dir/a \"b\" é.npz", "abc", 3, "cfg");
        part.error = Some("a note".into());
        part.candidates = 2;
        part.timing.detect = 0.125;
        for vortex in 1..=2 {
            part.rows.push(CatalogRow {
                snapshot: "dir/a \"b\" é.npz#3".into(),
                vortex,
                circulation: Some(1.0 / 3.0 * vortex as f64),
                core_radius: None,
                flags: "edge;noisy".into(),
                ..CatalogRow::default()
            });
        }
        store
            .save_with_rows(
                &part,
                &crate::survey::catalog::json_rows(&part.rows).unwrap(),
            )
            .unwrap();
        let path = dir
            .path()
            .join("parts")
            .join(Store::key(&part.file, "abc", 3));
        assert_eq!(fs::read(&path).unwrap(), serde_json::to_vec(&part).unwrap());
        assert_eq!(store.load(&part.file, "abc", 3).unwrap().rows, part.rows);
        // A mismatched list is refused rather than written.
        assert!(store.save_with_rows(&part, &[]).is_err());
    }

    #[test]
    fn only_temporaries_of_dead_processes_are_removed() {
        let dir = tempfile::tempdir().unwrap();
        // Linux's largest process id is 2^22 (kernel.pid_max), so this one cannot be running.
        let dead = dir.path().join(".catalog.csv.tmp-99999999");
        let live = temporary_beside(&dir.path().join("catalog.jsonl"));
        let unrelated = [".tmp-12", "catalog.tmp-12", ".a.tmp-12x", ".notes"];
        fs::write(&dead, b"x").unwrap();
        fs::write(&live, b"x").unwrap();
        for name in unrelated {
            fs::write(dir.path().join(name), b"x").unwrap();
        }
        let removed = remove_stale_temporaries(dir.path());
        if Path::new("/proc/self").exists() {
            assert_eq!(removed, 1);
            assert!(!dead.exists());
        } else {
            assert_eq!(removed, 0);
        }
        assert!(live.exists(), "this process's own temporary is kept");
        for name in unrelated {
            assert!(dir.path().join(name).exists(), "{name}");
        }
        assert_eq!(temporary_owner(".p.json.tmp-42"), Some(42));
    }

    #[test]
    fn atomic_write_replaces_and_leaves_no_temporary() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.json");
        write_atomic(&p, b"one").unwrap();
        write_atomic(&p, b"two").unwrap();
        assert_eq!(fs::read(&p).unwrap(), b"two");
        assert_eq!(fs::read_dir(dir.path()).unwrap().count(), 1);
    }

    #[test]
    fn a_part_cut_short_or_empty_is_not_done() {
        // What a power cut can leave of a part written without fsync: nothing, a prefix, or
        // zeros where the data should be. None may count as done.
        let dir = tempfile::tempdir().unwrap();
        let store = Store::open(dir.path()).unwrap();
        store.save(&done_part("a.npz", "abc", 0, "cfg")).unwrap();
        assert!(store.done("a.npz", "abc", 0, "cfg").is_some());
        let path = dir.path().join("parts").join(Store::key("a.npz", "abc", 0));
        let whole = fs::read(&path).unwrap();
        for damaged in [
            Vec::new(),
            whole[..whole.len() - 1].to_vec(),
            whole[..whole.len() / 2].to_vec(),
            vec![0u8; whole.len()],
        ] {
            fs::write(&path, &damaged).unwrap();
            assert!(store.done("a.npz", "abc", 0, "cfg").is_none());
            assert!(store.load("a.npz", "abc", 0).is_none());
        }
    }

    #[test]
    fn floats_survive_the_json_round_trip_exactly() {
        // Resumed and merged catalogs are rebuilt from JSON: every f64 must parse back to the
        // same bits (serde_json's float_roundtrip feature; without it this value came back one
        // ulp off).
        for x in [
            4.705_580_398_364_027e-227,
            0.1,
            1.0 / 3.0,
            f64::MIN_POSITIVE,
            2.5e300,
        ] {
            let text = serde_json::to_string(&x).unwrap();
            let back: f64 = serde_json::from_str(&text).unwrap();
            assert_eq!(back.to_bits(), x.to_bits(), "{text}");
        }
    }

    #[test]
    fn parts_round_trip_and_config_changes_invalidate() {
        let dir = tempfile::tempdir().unwrap();
        let store = Store::open(dir.path()).unwrap();
        let part = done_part("a.h5", "abc", 2, "cfg1");
        assert!(store.is_empty());
        store.save(&part).unwrap();
        assert!(!store.is_empty());
        assert!(store.done("a.h5", "abc", 2, "cfg1").is_some());
        assert!(store.done("a.h5", "abc", 2, "cfg2").is_none());
        assert!(store.done("a.h5", "abd", 2, "cfg1").is_none());
        assert!(store.done("a.h5", "abc", 3, "cfg1").is_none());
    }
}
