//! Input expansion: files, folders and glob patterns become a sorted, de-duplicated list of
//! velocity sources, each hashed for the manifest and for resuming.

use std::collections::BTreeSet;
use std::fs::File;
use std::io::Read;
use std::path::{Path, PathBuf};

use anyhow::{bail, Context};
use serde::Serialize;

/// File extensions a folder is scanned for.
const EXTENSIONS: &[&str] = &[
    "npy", "npz", "h5", "hdf5", "hdf", "he5", "mat", "nc", "nc4", "cdf", "csv", "txt", "dat", "tsv",
];

/// One velocity source (a file, or a folder of per-component `.npy` files).
#[derive(Debug, Clone, Serialize)]
pub struct Source {
    /// The path as given or found.
    pub path: PathBuf,
    /// Size in bytes (sum over the files of a folder source).
    pub bytes: u64,
    /// BLAKE3 hash of the content (for a folder: of each file's name and content, in name
    /// order). BLAKE3 rather than SHA-256 because hashing every input is on the survey's
    /// critical path and BLAKE3 is several times faster per core (`b3sum` checks it).
    pub blake3: String,
}

fn is_component_folder(dir: &Path) -> bool {
    dir.join("u.npy").is_file() && dir.join("v.npy").is_file()
}

fn supported(path: &Path) -> bool {
    path.extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| EXTENSIONS.contains(&e.to_ascii_lowercase().as_str()))
}

/// Files in a folder worth reading: velocity files, and subfolders of per-component `.npy`
/// files. Truth tables and our own outputs (`*.csv` named `truth`, `catalog`, `units`) are
/// skipped so that a synth folder can be surveyed as it is.
fn scan_folder(dir: &Path, out: &mut BTreeSet<PathBuf>) -> anyhow::Result<()> {
    if is_component_folder(dir) {
        out.insert(dir.to_path_buf());
        return Ok(());
    }
    let entries =
        std::fs::read_dir(dir).with_context(|| format!("{}: cannot list folder", dir.display()))?;
    for entry in entries {
        let path = entry?.path();
        if path.is_dir() {
            if is_component_folder(&path) {
                out.insert(path);
            }
        } else if supported(&path) {
            let stem = path.file_stem().and_then(|s| s.to_str()).unwrap_or("");
            if matches!(stem, "truth" | "catalog" | "units") {
                continue;
            }
            out.insert(path);
        }
    }
    Ok(())
}

/// Expands the command-line inputs. Errors when nothing is found.
pub fn expand(inputs: &[String]) -> anyhow::Result<Vec<PathBuf>> {
    let mut found = BTreeSet::new();
    for input in inputs {
        let path = PathBuf::from(input);
        if path.is_dir() {
            scan_folder(&path, &mut found)?;
        } else if path.exists() {
            found.insert(path);
        } else if input.contains(['*', '?', '[']) {
            let matches =
                glob::glob(input).with_context(|| format!("{input}: bad glob pattern"))?;
            let mut any = false;
            for m in matches {
                let p = m?;
                any = true;
                if p.is_dir() {
                    scan_folder(&p, &mut found)?;
                } else {
                    found.insert(p);
                }
            }
            if !any {
                bail!("{input}: the pattern matches no file");
            }
        } else {
            bail!("{input}: no such file or directory");
        }
    }
    if found.is_empty() {
        bail!("no velocity files found in {}", inputs.join(", "));
    }
    Ok(found.into_iter().collect())
}

fn hash_file(path: &Path, hasher: &mut blake3::Hasher) -> anyhow::Result<u64> {
    /// Counts the bytes read through it.
    struct Counting<R> {
        inner: R,
        bytes: u64,
    }
    impl<R: Read> Read for Counting<R> {
        fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
            let n = self.inner.read(buf)?;
            self.bytes += n as u64;
            Ok(n)
        }
    }
    let f = File::open(path).with_context(|| format!("{}: cannot open", path.display()))?;
    // blake3's own read loop: a 64 KiB buffer that stays in cache (a fresh 1 MiB buffer per
    // file cost a memset of every byte hashed).
    let mut counting = Counting { inner: f, bytes: 0 };
    hasher
        .update_reader(&mut counting)
        .with_context(|| format!("{}: read error", path.display()))?;
    Ok(counting.bytes)
}

/// Size in bytes of a source (sum over a folder's files); 0 when it cannot be read.
pub fn size(path: &Path) -> u64 {
    if path.is_dir() {
        std::fs::read_dir(path)
            .map(|d| {
                d.filter_map(|e| e.ok()?.metadata().ok())
                    .filter(|m| m.is_file())
                    .map(|m| m.len())
                    .sum()
            })
            .unwrap_or(0)
    } else {
        std::fs::metadata(path).map_or(0, |m| m.len())
    }
}

/// Size and content hash of a source.
pub fn describe(path: &Path) -> anyhow::Result<Source> {
    let mut hasher = blake3::Hasher::new();
    let bytes = if path.is_dir() {
        let mut files: Vec<PathBuf> = std::fs::read_dir(path)?
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| p.is_file())
            .collect();
        files.sort();
        let mut total = 0;
        for f in files {
            hasher.update(
                f.file_name()
                    .map(|n| n.to_string_lossy().into_owned())
                    .unwrap_or_default()
                    .as_bytes(),
            );
            total += hash_file(&f, &mut hasher)?;
        }
        total
    } else {
        hash_file(path, &mut hasher)?
    };
    Ok(Source {
        path: path.to_path_buf(),
        bytes,
        blake3: hasher.finalize().to_hex().to_string(),
    })
}

/// Lower-case hexadecimal.
pub fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn folders_globs_and_duplicates() {
        let dir = tempfile::tempdir().unwrap();
        let d = dir.path();
        for name in ["b.npz", "a.h5", "notes.md", "truth.csv"] {
            std::fs::write(d.join(name), b"x").unwrap();
        }
        std::fs::create_dir(d.join("frame")).unwrap();
        std::fs::write(d.join("frame/u.npy"), b"x").unwrap();
        std::fs::write(d.join("frame/v.npy"), b"x").unwrap();
        let a = d.join("a.h5").to_string_lossy().into_owned();
        let pattern = d.join("*.npz").to_string_lossy().into_owned();
        let found = expand(&[d.to_string_lossy().into_owned(), a, pattern]).unwrap();
        let names: Vec<String> = found
            .iter()
            .map(|p| p.file_name().unwrap().to_string_lossy().into_owned())
            .collect();
        assert_eq!(names, ["a.h5", "b.npz", "frame"]);
        assert!(expand(&[d.join("*.nothing").to_string_lossy().into_owned()]).is_err());
    }

    #[test]
    fn blake3_of_the_published_vectors() {
        // The published BLAKE3 test vectors (BLAKE3 team's reference repository,
        // test_vectors.json and README) for "" and "abc".
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("abc.txt");
        std::fs::write(&p, b"abc").unwrap();
        assert_eq!(
            describe(&p).unwrap().blake3,
            "6437b3ac38465133ffb63b75273a8db548c558465d79db03fd359c6cd5bd9d85"
        );
        std::fs::write(&p, b"").unwrap();
        assert_eq!(
            describe(&p).unwrap().blake3,
            "af1349b9f5f9a1a6a0404dea36dcc9499bcb25c9adc112b7cc9a93cae41f3262"
        );
        // A file longer than the 1 MiB read buffer hashes as one message.
        let long: Vec<u8> = (0..(3 << 20) + 17).map(|i| (i % 251) as u8).collect();
        std::fs::write(&p, &long).unwrap();
        assert_eq!(
            describe(&p).unwrap().blake3,
            blake3::hash(&long).to_hex().to_string()
        );
    }
}
