//! NumPy `.npz`: a zip archive of `.npy` members, stored or deflate-compressed
//! (`numpy.savez` / `numpy.savez_compressed`).
//!
//! Member headers are read at open (only the first bytes of each member are decompressed), so
//! `inspect` is cheap. A member's data are decoded when first needed and kept: deflate streams
//! have no random access, so a stacked `.npz` sits in memory once it is read. For stacks larger
//! than memory use `.npy` or HDF5, which are read one snapshot at a time.

use std::collections::HashMap;
use std::fs::File;
use std::io::{BufReader, Read};
use std::path::Path;

use ndarray::{ArrayD, Axis as NdAxis};

use super::npy::NpyHeader;
use super::{ArrayInfo, ArrayStore};
use crate::error::FieldError;

/// The `.npz` store.
pub struct NpzStore {
    archive: zip::ZipArchive<BufReader<File>>,
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
        let mut archive = zip::ZipArchive::new(BufReader::new(file)).map_err(zip_error)?;
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
