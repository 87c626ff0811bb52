//! Readers, one module per file format, behind one API: [`open`] returns a [`SnapshotReader`]
//! that describes the source ([`SourceInfo`]) and reads snapshots one at a time, so a stack of
//! thousands of snapshots never sits in memory at once.
//!
//! The array formats (NumPy, HDF5) implement the small [`ArrayStore`] trait — named arrays in
//! vortcat's logical axis order, read whole or one index along an axis — and share one
//! [`assemble::ArrayReader`] that picks components, builds the grid and yields snapshots. CSV
//! reconstructs its grid from scattered columns and implements [`SnapshotReader`] directly.

use std::path::{Path, PathBuf};

use std::ops::Range;

use ndarray::{s, Array3, ArrayD, IxDyn, SliceInfoElem};
use serde::Serialize;

use crate::error::FieldError;
use crate::grid::Grid;
use crate::snapshot::Snapshot;
use crate::spec::{FormatHint, InputSpec};

pub mod assemble;
pub mod csv;
pub mod hdf5;
pub mod npy;
pub mod npz;

/// One array, dataset or column as found in a file.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct ArrayInfo {
    /// Name (NumPy array name, HDF5 dataset path, CSV column).
    pub name: String,
    /// Shape in vortcat's logical order (after any layout reversal).
    pub shape: Vec<usize>,
    /// Element type as the file states it (e.g. `<f4`, `float64`, `int16`).
    pub dtype: String,
}

/// Which stored array plays which role.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct RoleAssignment {
    /// `u`, `v`, `w`, `mask`, `x`, `y`, `z` or `t`.
    pub role: String,
    /// The array, dataset or column (for a stacked `.npy`: `name[axis k = i]`).
    pub source: String,
}

/// Where the grid's coordinates came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum GridOrigin {
    /// Coordinate arrays in the file.
    Coordinates,
    /// Spacing attributes in the file.
    Attributes,
    /// The spacing given in the input description (config or `--spacing`).
    Description,
    /// Nothing said: unit spacing in grid units. Lengths are then in grid spacings.
    UnitSpacing,
}

/// What a reader sees in a source.
#[derive(Debug, Clone, Serialize)]
pub struct SourceInfo {
    /// The file (or folder of per-component `.npy` files).
    pub path: PathBuf,
    /// Format name: `npy`, `npz`, `hdf5` or `csv`.
    pub format: String,
    /// Every array, dataset or column found.
    pub arrays: Vec<ArrayInfo>,
    /// The arrays chosen for each role.
    pub roles: Vec<RoleAssignment>,
    /// The grid of every snapshot.
    pub grid: Grid,
    /// Where the grid came from.
    pub grid_origin: GridOrigin,
    /// Number of snapshots.
    pub snapshots: usize,
}

/// A block of consecutive z-planes of one volume snapshot, read without the rest of the
/// volume (see [`SnapshotReader::read_volume_planes`]). Arrays are `[iz - z.start, iy, ix]`,
/// `f32` as [`crate::VolumeField`] stores them. Invalid vectors are *not* blanked yet: NaN marks
/// them in the input, `flagged` (`true` = rejected) when the file has a mask.
#[derive(Debug, Clone)]
pub struct VolumePlanes {
    /// The z-planes read (global indices).
    pub z: Range<usize>,
    /// x-component.
    pub u: Array3<f32>,
    /// y-component.
    pub v: Array3<f32>,
    /// z-component.
    pub w: Array3<f32>,
    /// The mask, if the file has one.
    pub flagged: Option<Array3<bool>>,
}

/// A source of snapshots.
pub trait SnapshotReader: Send {
    /// What the reader found.
    fn info(&self) -> &SourceInfo;

    /// Reads snapshot `index` (0-based along the stack). Errors carry the file name.
    fn read(&mut self, index: usize) -> Result<Snapshot, FieldError>;

    /// Number of snapshots.
    fn len(&self) -> usize {
        self.info().snapshots
    }

    /// Whether the source holds no snapshot (never true for an opened source).
    fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Reads z-planes `z` of volume snapshot `index`, so that a volume larger than memory can
    /// be processed in slabs. Readers of array formats read only those planes (HDF5
    /// hyperslabs, positioned `.npy` reads); the default reads the whole snapshot and copies
    /// the planes out. Errors: not a volume, planes out of range; every error names the file.
    fn read_volume_planes(
        &mut self,
        index: usize,
        z: Range<usize>,
    ) -> Result<VolumePlanes, FieldError> {
        let path = self.info().path.clone();
        let snapshot = self.read(index)?;
        match snapshot.field {
            crate::Field::Volume(f) => {
                let nz = f.u().dim().0;
                if z.start >= z.end || z.end > nz {
                    return Err(FieldError::IndexOutOfRange {
                        index: z.end.saturating_sub(1),
                        len: nz,
                    }
                    .in_file(path));
                }
                let cut = |a: &Array3<f32>| a.slice(s![z.clone(), .., ..]).to_owned();
                Ok(VolumePlanes {
                    z: z.clone(),
                    u: cut(f.u()),
                    v: cut(f.v()),
                    w: cut(f.w()),
                    flagged: Some(f.valid().slice(s![z.clone(), .., ..]).mapv(|ok| !ok)),
                })
            }
            crate::Field::Plane(_) => Err(FieldError::WrongDimension {
                expected: 3,
                found: 2,
            }
            .in_file(path)),
        }
    }
}

/// Named numeric arrays in vortcat's logical axis order: the abstraction the array formats share.
pub trait ArrayStore: Send {
    /// Format name.
    fn format(&self) -> &'static str;
    /// Every array the store holds.
    fn arrays(&self) -> &[ArrayInfo];
    /// Reads a whole array as `f64` (coordinates, time vectors, small stacks).
    fn read_all(&mut self, name: &str) -> Result<ArrayD<f64>, FieldError>;
    /// Reads index `index` along logical axis `axis`, returning the array with that axis removed.
    fn read_along(
        &mut self,
        name: &str,
        axis: usize,
        index: usize,
    ) -> Result<ArrayD<f64>, FieldError>;
    /// A numeric attribute of an array (`Some(name)`) or of the file (`None`).
    fn attr_f64(&self, _array: Option<&str>, _key: &str) -> Option<f64> {
        None
    }
    /// A string attribute of an array or of the file.
    fn attr_string(&self, _array: Option<&str>, _key: &str) -> Option<String> {
        None
    }
    /// Whether the store is a single file holding one array with all components.
    fn is_single_array(&self) -> bool {
        false
    }
    /// Reads the block `start[k]..start[k] + count[k]` of every logical axis as `f32` (the
    /// precision of volume fields; half the memory of `f64`). The default reads the whole
    /// array and copies the block out; stores override it to read only the block.
    fn read_block_f32(
        &mut self,
        name: &str,
        start: &[usize],
        count: &[usize],
    ) -> Result<ArrayD<f32>, FieldError> {
        let all = self.read_all(name)?;
        check_block(name, all.shape(), start, count)?;
        let info: Vec<SliceInfoElem> = start
            .iter()
            .zip(count)
            .map(|(&a, &n)| SliceInfoElem::Slice {
                start: a as isize,
                end: Some((a + n) as isize),
                step: 1,
            })
            .collect();
        Ok(all
            .slice(info.as_slice())
            .mapv(|x| x as f32)
            .into_dimensionality::<IxDyn>()
            .expect("dynamic rank"))
    }
}

/// Checks that a block lies inside an array of `shape`.
pub(crate) fn check_block(
    name: &str,
    shape: &[usize],
    start: &[usize],
    count: &[usize],
) -> Result<(), FieldError> {
    if start.len() != shape.len() || count.len() != shape.len() {
        return Err(FieldError::BadLayout {
            name: name.to_string(),
            shape: shape.to_vec(),
            reason: format!("a block of rank {} was asked for", start.len()),
        });
    }
    for k in 0..shape.len() {
        if count[k] == 0 || start[k] + count[k] > shape[k] {
            return Err(FieldError::IndexOutOfRange {
                index: start[k] + count[k].max(1) - 1,
                len: shape[k],
            });
        }
    }
    Ok(())
}

/// Looks up an array by name; `Missing` lists what exists.
pub(crate) fn find<'a>(arrays: &'a [ArrayInfo], name: &str) -> Result<&'a ArrayInfo, FieldError> {
    arrays
        .iter()
        .find(|a| a.name == name || a.name.trim_start_matches('/') == name.trim_start_matches('/'))
        .ok_or_else(|| FieldError::Missing {
            kind: "array",
            name: name.to_string(),
            available: arrays.iter().map(|a| a.name.clone()).collect(),
        })
}

/// The format of `path`: the description's hint, else the extension (`.npy`, `.npz`, `.h5`,
/// `.hdf5`, `.he5`, `.mat`, `.nc`, `.nc4`, `.csv`, `.txt`, `.dat`, `.tsv`), else a folder of
/// `.npy` files.
pub fn detect_format(path: &Path, spec: &InputSpec) -> Result<FormatHint, FieldError> {
    if let Some(f) = spec.format {
        return Ok(f);
    }
    if path.is_dir() {
        return Ok(FormatHint::Npy);
    }
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase())
        .unwrap_or_default();
    match ext.as_str() {
        "npy" => Ok(FormatHint::Npy),
        "npz" => Ok(FormatHint::Npz),
        "h5" | "hdf5" | "hdf" | "he5" | "mat" | "nc" | "nc4" | "cdf" => Ok(FormatHint::Hdf5),
        "csv" | "txt" | "dat" | "tsv" => Ok(FormatHint::Csv),
        _ => Err(FieldError::UnknownFormat(format!(
            "cannot tell the format from the extension '{ext}'; set input.format (npy, npz, hdf5, csv)"
        ))),
    }
}

/// Opens a source. Every error names the file.
pub fn open(path: &Path, spec: &InputSpec) -> Result<Box<dyn SnapshotReader>, FieldError> {
    open_inner(path, None, spec).map_err(|e| e.in_file(path))
}

/// Opens a single-file source whose bytes the caller has already read whole, so that a file
/// hashed for the run's manifest is not read a second time to be parsed. `bytes` must be the
/// whole content of `path`; `path` names the source in the info and in every error.
///
/// `.npy`, `.npz` and CSV files are parsed from `bytes`. HDF5 is read through the library from
/// `path` (its file images are not used), and a folder cannot be given as bytes: for those,
/// `bytes` is dropped and this is [`open`].
pub fn open_bytes(
    path: &Path,
    bytes: Vec<u8>,
    spec: &InputSpec,
) -> Result<Box<dyn SnapshotReader>, FieldError> {
    open_inner(path, Some(bytes), spec).map_err(|e| e.in_file(path))
}

/// [`open`] (`bytes` = `None`) and [`open_bytes`].
fn open_inner(
    path: &Path,
    bytes: Option<Vec<u8>>,
    spec: &InputSpec,
) -> Result<Box<dyn SnapshotReader>, FieldError> {
    spec.validate()?;
    let spec = &spec.for_file(path);
    let format = detect_format(path, spec)?;
    if path.is_dir() && format != FormatHint::Npy {
        return Err(FieldError::Unusable(
            "is a directory, expected a file".to_string(),
        ));
    }
    let bytes = bytes.filter(|_| !path.is_dir());
    if bytes.is_none() && !path.exists() {
        return Err(FieldError::Io(std::io::Error::new(
            std::io::ErrorKind::NotFound,
            "no such file or directory",
        )));
    }
    Ok(match format {
        FormatHint::Npy => {
            let store = match bytes {
                Some(bytes) => npy::NpyStore::from_bytes(path, bytes)?,
                None => npy::NpyStore::open(path, spec)?,
            };
            Box::new(assemble::ArrayReader::new(path, store, spec)?)
        }
        FormatHint::Npz => {
            let store = match bytes {
                Some(bytes) => npz::NpzStore::from_bytes(bytes)?,
                None => npz::NpzStore::open(path)?,
            };
            Box::new(assemble::ArrayReader::new(path, store, spec)?)
        }
        FormatHint::Hdf5 => Box::new(assemble::ArrayReader::new(
            path,
            hdf5::Hdf5Store::open(path, spec)?,
            spec,
        )?),
        FormatHint::Csv => Box::new(match bytes {
            Some(bytes) => csv::CsvReader::from_bytes(path, bytes, spec)?,
            None => csv::CsvReader::open(path, spec)?,
        }),
    })
}

/// Iterates over the snapshots of a reader in order.
pub struct Snapshots<'a> {
    reader: &'a mut dyn SnapshotReader,
    next: usize,
}

impl<'a> Snapshots<'a> {
    /// An iterator from snapshot 0.
    pub fn new(reader: &'a mut dyn SnapshotReader) -> Self {
        Self { reader, next: 0 }
    }
}

impl Iterator for Snapshots<'_> {
    type Item = Result<Snapshot, FieldError>;
    fn next(&mut self) -> Option<Self::Item> {
        if self.next >= self.reader.len() {
            return None;
        }
        let i = self.next;
        self.next += 1;
        Some(self.reader.read(i))
    }
}
