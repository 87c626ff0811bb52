//! NumPy `.npz`: a zip archive of `.npy` members, stored or deflate-compressed
//! (`numpy.savez` / `numpy.savez_compressed`).
//!
//! Member headers are read at open (only the first bytes of each member are decompressed), so
//! `inspect` is cheap. A member's data are decoded when first needed and kept: deflate streams
//! have no random access, so a stacked `.npz` sits in memory once it is read. For stacks larger
//! than memory use `.npy` or HDF5, which are read one snapshot at a time.

use std::collections::HashMap;
use std::fs::File;
use std::io::{BufReader, Cursor, Read, Seek, SeekFrom};
use std::path::Path;
use std::sync::Arc;

use ndarray::{ArrayD, Axis as NdAxis};

use super::npy::NpyHeader;
use super::{ArrayInfo, ArrayStore};
use crate::error::FieldError;

/// Where the archive's bytes come from: the file, or a copy already in memory (read once to
/// hash and parse, see [`super::open_bytes`]).
enum Backing {
    File(BufReader<File>),
    Memory(Cursor<Shared>),
}

/// The archive's bytes, shared between the zip reader and the store's zero-copy decoding of
/// stored (uncompressed) members.
#[derive(Clone)]
struct Shared(Arc<Vec<u8>>);

impl AsRef<[u8]> for Shared {
    fn as_ref(&self) -> &[u8] {
        self.0.as_slice()
    }
}

impl Read for Backing {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        match self {
            Backing::File(f) => f.read(buf),
            Backing::Memory(m) => m.read(buf),
        }
    }
}

impl Seek for Backing {
    fn seek(&mut self, pos: SeekFrom) -> std::io::Result<u64> {
        match self {
            Backing::File(f) => f.seek(pos),
            Backing::Memory(m) => m.seek(pos),
        }
    }
}

/// The `.npz` store.
pub struct NpzStore {
    archive: zip::ZipArchive<Backing>,
    /// The whole archive, when it was given as bytes.
    memory: Option<Shared>,
    arrays: Vec<ArrayInfo>,
    members: HashMap<String, (String, NpyHeader)>,
    cache: HashMap<String, ArrayD<f64>>,
}

fn zip_error(e: zip::result::ZipError) -> FieldError {
    FieldError::Corrupt(format!("not a readable .npz (zip) archive: {e}"))
}

impl NpzStore {
    /// Opens the archive and reads every member's header.
    pub fn open(path: &Path) -> Result<Self, FieldError> {
        let file = File::open(path)?;
        Self::with_backing(Backing::File(BufReader::new(file)), None)
    }

    /// Reads an archive whose bytes are already in memory (the whole file).
    pub fn from_bytes(bytes: Vec<u8>) -> Result<Self, FieldError> {
        let shared = Shared(Arc::new(bytes));
        Self::with_backing(Backing::Memory(Cursor::new(shared.clone())), Some(shared))
    }

    fn with_backing(backing: Backing, memory: Option<Shared>) -> Result<Self, FieldError> {
        let mut archive = zip::ZipArchive::new(backing).map_err(zip_error)?;
        let mut arrays = Vec::new();
        let mut members = HashMap::new();
        let mut names: Vec<String> = archive.file_names().map(str::to_string).collect();
        names.sort();
        for member in names {
            let name = member.strip_suffix(".npy").unwrap_or(&member).to_string();
            let mut entry = archive.by_name(&member).map_err(zip_error)?;
            let header = NpyHeader::read(&name, &mut entry)?;
            if header.data_bytes > entry.size() {
                return Err(FieldError::Corrupt(format!(
                    "member '{name}' claims shape {:?} ({} bytes) but holds {} bytes",
                    header.shape,
                    header.data_bytes,
                    entry.size()
                )));
            }
            arrays.push(ArrayInfo {
                name: name.clone(),
                shape: header.shape.clone(),
                dtype: header.dtype.display(),
            });
            members.insert(name, (member, header));
        }
        Ok(Self {
            archive,
            memory,
            arrays,
            members,
            cache: HashMap::new(),
        })
    }

    fn decode(&mut self, name: &str) -> Result<ArrayD<f64>, FieldError> {
        let (member, header) =
            self.members
                .get(name)
                .cloned()
                .ok_or_else(|| FieldError::Missing {
                    kind: "array",
                    name: name.to_string(),
                    available: self.arrays.iter().map(|a| a.name.clone()).collect(),
                })?;
        let mut entry = self.archive.by_name(&member).map_err(zip_error)?;
        if let Some(memory) = &self.memory {
            if entry.compression() == zip::CompressionMethod::Stored && !entry.encrypted() {
                // A stored member of an archive in memory: decode its data in place.
                let start = usize::try_from(entry.data_start()).unwrap_or(usize::MAX);
                let size = usize::try_from(entry.size()).unwrap_or(usize::MAX);
                let all = memory.as_ref();
                let Some(mut member_bytes) =
                    start.checked_add(size).and_then(|end| all.get(start..end))
                else {
                    return Err(FieldError::Corrupt(format!(
                        "member '{name}' runs past the end of the archive"
                    )));
                };
                NpyHeader::read(name, &mut member_bytes)?;
                let data = member_bytes
                    .get(..header.data_bytes as usize)
                    .ok_or_else(|| {
                        FieldError::Corrupt(format!(
                            "member '{name}' is truncated: {} of {} bytes",
                            member_bytes.len(),
                            header.data_bytes
                        ))
                    })?;
                return header.to_array(&header.shape, header.dtype.decode(data));
            }
        }
        // Skip the header again, then read exactly the data bytes the header announced.
        NpyHeader::read(name, &mut entry)?;
        let mut bytes = Vec::with_capacity(header.data_bytes as usize);
        entry
            .by_ref()
            .take(header.data_bytes)
            .read_to_end(&mut bytes)
            .map_err(|e| FieldError::Corrupt(format!("member '{name}': {e}")))?;
        if (bytes.len() as u64) < header.data_bytes {
            return Err(FieldError::Corrupt(format!(
                "member '{name}' is truncated: {} of {} bytes",
                bytes.len(),
                header.data_bytes
            )));
        }
        header.to_array(&header.shape, header.dtype.decode(&bytes))
    }
}

impl ArrayStore for NpzStore {
    fn format(&self) -> &'static str {
        "npz"
    }

    fn arrays(&self) -> &[ArrayInfo] {
        &self.arrays
    }

    fn read_all(&mut self, name: &str) -> Result<ArrayD<f64>, FieldError> {
        if let Some(a) = self.cache.get(name) {
            return Ok(a.clone());
        }
        self.decode(name)
    }

    fn read_along(
        &mut self,
        name: &str,
        axis: usize,
        index: usize,
    ) -> Result<ArrayD<f64>, FieldError> {
        if !self.cache.contains_key(name) {
            let a = self.decode(name)?;
            self.cache.insert(name.to_string(), a);
        }
        let a = &self.cache[name];
        if axis >= a.ndim() || index >= a.shape()[axis] {
            return Err(FieldError::IndexOutOfRange {
                index,
                len: a.shape().get(axis).copied().unwrap_or(0),
            });
        }
        Ok(a.index_axis(NdAxis(axis), index).to_owned())
    }
}
