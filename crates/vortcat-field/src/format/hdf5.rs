//! HDF5 files, which also covers MATLAB v7.3 `.mat` and NetCDF-4 `.nc` files (both are HDF5
//! underneath), through the maintained `hdf5-metno` bindings to the system libhdf5.
//!
//! Datasets are addressed by path (`u`, `/u`, `/piv/frame/u`). A stacked dataset is read one
//! snapshot at a time by hyperslab, so memory holds one snapshot, not the stack; chunked and
//! deflate-compressed datasets are decoded by the library. Integer and `float32` datasets are
//! converted to `f64` by the library.
//!
//! Coordinates come from coordinate datasets (`x`, `y`, `z`: 1D, or 2D meshgrid-style), or from
//! spacing attributes `dx`, `dy`, `dz` (origin `x0`, `y0`, `z0`) on the velocity dataset or the
//! root group. Units come from the `units` attribute of the velocity and coordinate datasets
//! (the NetCDF/CF convention), overridable in the input description.
//!
//! MATLAB and other column-major writers store the axes reversed; `layout = "column-major"`
//! reverses them back, so `u(y, x, t)` in MATLAB reads as a stack over the last axis.
//! NetCDF-4 dimension scales without data ("not a netCDF variable") are left out.

use std::path::Path;

use hdf5::types::{FloatSize, IntSize, TypeDescriptor, VarLenAscii, VarLenUnicode};
use hdf5::{Conversion, Dataset, File, Group};
use ndarray::{ArrayD, IxDyn};

use super::{check_block, find, ArrayInfo, ArrayStore};
use crate::error::FieldError;
use crate::spec::{InputSpec, Layout};

/// The largest single read, in bytes of `f64`: a corrupt or hostile header that claims more is
/// refused before anything is allocated. 16 GiB holds a 1024³ volume component; real snapshots
/// are far smaller.
const MAX_READ_BYTES: u64 = 16 << 30;

fn check_size(name: &str, shape: &[usize]) -> Result<(), FieldError> {
    let bytes = shape
        .iter()
        .try_fold(8u64, |acc, &n| acc.checked_mul(n as u64))
        .unwrap_or(u64::MAX);
    if bytes > MAX_READ_BYTES {
        return Err(FieldError::Corrupt(format!(
            "dataset '{name}' with shape {shape:?} would need {:.1} GiB for one read; refusing",
            bytes as f64 / (1u64 << 30) as f64
        )));
    }
    Ok(())
}

/// The HDF5 store.
pub struct Hdf5Store {
    file: File,
    arrays: Vec<ArrayInfo>,
    reversed: bool,
}

fn describe_type(t: &TypeDescriptor) -> (String, bool) {
    let int = |s: &IntSize| match s {
        IntSize::U1 => 8,
        IntSize::U2 => 16,
        IntSize::U4 => 32,
        IntSize::U8 => 64,
    };
    match t {
        TypeDescriptor::Float(FloatSize::U4) => ("float32".into(), true),
        TypeDescriptor::Float(FloatSize::U8) => ("float64".into(), true),
        #[allow(unreachable_patterns)]
        TypeDescriptor::Float(_) => ("float".into(), true),
        TypeDescriptor::Integer(s) => (format!("int{}", int(s)), true),
        TypeDescriptor::Unsigned(s) => (format!("uint{}", int(s)), true),
        TypeDescriptor::Boolean => ("bool".into(), true),
        TypeDescriptor::Enum(_) => ("enum".into(), true),
        TypeDescriptor::FixedAscii(_)
        | TypeDescriptor::FixedUnicode(_)
        | TypeDescriptor::VarLenAscii
        | TypeDescriptor::VarLenUnicode => ("string".into(), false),
        TypeDescriptor::Compound(_) => ("compound".into(), false),
        TypeDescriptor::Reference(_) => ("reference".into(), false),
        other => (format!("{other:?}").to_lowercase(), false),
    }
}

fn is_phony_dimension(ds: &Dataset) -> bool {
    // NetCDF-4 marks a dimension that has no coordinate variable with this NAME attribute.
    ds.attr("NAME")
        .ok()
        .and_then(|a| read_string_attr(&a))
        .is_some_and(|s| s.contains("not a netCDF variable"))
}

fn collect(
    group: &Group,
    out: &mut Vec<(Dataset, ArrayInfo)>,
    reversed: bool,
) -> Result<(), FieldError> {
    for ds in group.datasets()? {
        if is_phony_dimension(&ds) {
            continue;
        }
        let dtype = ds
            .dtype()
            .and_then(|t| t.to_descriptor())
            .map(|t| describe_type(&t).0)
            .unwrap_or_else(|_| "unknown".into());
        let mut shape = ds.shape();
        if reversed {
            shape.reverse();
        }
        let name = ds.name();
        out.push((ds, ArrayInfo { name, shape, dtype }));
    }
    for g in group.groups()? {
        // MATLAB keeps cell and struct payloads under "#refs#"; they are never velocity arrays.
        if g.name().ends_with("#refs#") {
            continue;
        }
        collect(&g, out, reversed)?;
    }
    Ok(())
}

fn read_string_attr(a: &hdf5::Attribute) -> Option<String> {
    let t = a.dtype().ok()?.to_descriptor().ok()?;
    match t {
        TypeDescriptor::VarLenUnicode => {
            a.read_scalar::<VarLenUnicode>().ok().map(|s| s.to_string())
        }
        TypeDescriptor::VarLenAscii => a.read_scalar::<VarLenAscii>().ok().map(|s| s.to_string()),
        TypeDescriptor::FixedAscii(n) | TypeDescriptor::FixedUnicode(n) => {
            // Read the raw bytes: a fixed-length string of n bytes, possibly NUL-padded.
            let bytes: Vec<u8> = read_fixed_bytes(a, n)?;
            let end = bytes.iter().position(|&b| b == 0).unwrap_or(bytes.len());
            String::from_utf8(bytes[..end].to_vec())
                .ok()
                .map(|s| s.trim().to_string())
        }
        _ => None,
    }
}

fn read_fixed_bytes(a: &hdf5::Attribute, n: usize) -> Option<Vec<u8>> {
    macro_rules! try_sizes {
        ($($size:literal),*) => {
            $(
                if n <= $size {
                    return a
                        .as_reader()
                        .conversion(Conversion::Soft)
                        .read_scalar::<hdf5::types::FixedAscii<$size>>()
                        .ok()
                        .map(|s| s.as_bytes().to_vec());
                }
            )*
        };
    }
    try_sizes!(16, 64, 256, 1024);
    None
}

impl Hdf5Store {
    /// Opens the file and lists its datasets.
    pub fn open(path: &Path, spec: &InputSpec) -> Result<Self, FieldError> {
        let file = File::open(path).map_err(|e| {
            FieldError::Corrupt(format!(
                "not a readable HDF5 file (also MATLAB v7.3, NetCDF-4): {e}"
            ))
        })?;
        let reversed = spec.layout == Layout::ColumnMajor;
        let mut found = Vec::new();
        collect(&file, &mut found, reversed)?;
        found.sort_by(|a, b| a.1.name.cmp(&b.1.name));
        let arrays = found.into_iter().map(|(_, info)| info).collect();
        Ok(Self {
            file,
            arrays,
            reversed,
        })
    }

    fn dataset(&self, name: &str) -> Result<Dataset, FieldError> {
        let info = find(&self.arrays, name)?;
        let ds = self.file.dataset(&info.name)?;
        let t = ds.dtype()?.to_descriptor()?;
        let (type_name, numeric) = describe_type(&t);
        if !numeric {
            return Err(FieldError::NotNumeric {
                name: info.name.clone(),
                found: type_name,
            });
        }
        Ok(ds)
    }

    /// Applies the NetCDF/CF missing-data attributes (`_FillValue`, `missing_value`): those
    /// values become NaN, i.e. invalid vectors. Then restores the logical axis order.
    fn finish(&self, name: &str, mut a: ArrayD<f64>) -> ArrayD<f64> {
        let mut markers: Vec<f64> = ["_FillValue", "missing_value"]
            .iter()
            .filter_map(|k| self.attr_f64(Some(name), k))
            .collect();
        // NetCDF-4 records its default fill value (9.97e36) as the HDF5 dataset's user-defined
        // fill value, without a `_FillValue` attribute. A zero fill value is HDF5's default
        // for unwritten data in general and is never taken as a marker.
        if let Some(fill) = self
            .dataset(name)
            .ok()
            .and_then(|ds| ds.dcpl().ok())
            .and_then(|p| {
                (p.fill_value_defined() == hdf5::plist::dataset_create::FillValue::UserDefined)
                    .then(|| p.fill_value_as::<f64>())
                    .flatten()
            })
        {
            if fill != 0.0 && fill.is_finite() {
                markers.push(fill);
            }
        }
        if !markers.is_empty() {
            // Exact comparison is intended: a fill value is a bit pattern, not a measurement.
            a.mapv_inplace(|x| {
                if markers.iter().any(|m| m.to_bits() == x.to_bits()) {
                    f64::NAN
                } else {
                    x
                }
            });
        }
        if self.reversed {
            a.reversed_axes().as_standard_layout().into_owned()
        } else {
            a
        }
    }

    fn attr_owner(&self, array: Option<&str>) -> Option<hdf5::Location> {
        match array {
            Some(name) => {
                let info = find(&self.arrays, name).ok()?;
                self.file.dataset(&info.name).ok().map(|d| (**d).clone())
            }
            None => Some((**self.file).clone()),
        }
    }
}

impl ArrayStore for Hdf5Store {
    fn format(&self) -> &'static str {
        "hdf5"
    }

    fn arrays(&self) -> &[ArrayInfo] {
        &self.arrays
    }

    fn read_all(&mut self, name: &str) -> Result<ArrayD<f64>, FieldError> {
        let ds = self.dataset(name)?;
        check_size(name, &ds.shape())?;
        let a: ArrayD<f64> = ds.as_reader().conversion(Conversion::Soft).read_dyn()?;
        Ok(self.finish(name, a))
    }

    fn read_along(
        &mut self,
        name: &str,
        axis: usize,
        index: usize,
    ) -> Result<ArrayD<f64>, FieldError> {
        let ds = self.dataset(name)?;
        let shape = ds.shape();
        let rank = shape.len();
        let stored_axis = if self.reversed { rank - 1 - axis } else { axis };
        if stored_axis >= rank || index >= shape[stored_axis] {
            return Err(FieldError::IndexOutOfRange {
                index,
                len: shape.get(stored_axis).copied().unwrap_or(0),
            });
        }
        let slices: Vec<hdf5::SliceOrIndex> = (0..rank)
            .map(|k| {
                if k == stored_axis {
                    hdf5::SliceOrIndex::Index(index)
                } else {
                    hdf5::SliceOrIndex::SliceCount {
                        start: 0,
                        step: 1,
                        count: shape[k],
                        block: 1,
                    }
                }
            })
            .collect();
        let mut per_snapshot = shape.clone();
        per_snapshot.remove(stored_axis);
        check_size(name, &per_snapshot)?;
        let selection = hdf5::Selection::from(hdf5::Hyperslab::from(slices));
        let a: ArrayD<f64> = ds
            .as_reader()
            .conversion(Conversion::Soft)
            .read_slice::<f64, _, IxDyn>(selection)?;
        Ok(self.finish(name, a))
    }

    fn read_block_f32(
        &mut self,
        name: &str,
        start: &[usize],
        count: &[usize],
    ) -> Result<ArrayD<f32>, FieldError> {
        let ds = self.dataset(name)?;
        let stored = ds.shape();
        let rank = stored.len();
        let mut logical = stored.clone();
        if self.reversed {
            logical.reverse();
        }
        check_block(name, &logical, start, count)?;
        let slices: Vec<hdf5::SliceOrIndex> = (0..rank)
            .map(|k| {
                let l = if self.reversed { rank - 1 - k } else { k };
                hdf5::SliceOrIndex::SliceCount {
                    start: start[l],
                    step: 1,
                    count: count[l],
                    block: 1,
                }
            })
            .collect();
        check_size(name, count)?;
        let selection = hdf5::Selection::from(hdf5::Hyperslab::from(slices));
        let mut a: ArrayD<f32> = ds
            .as_reader()
            .conversion(Conversion::Soft)
            .read_slice::<f32, _, IxDyn>(selection)?;
        // The same missing-data markers as `finish`, compared in the precision they are read.
        let mut markers: Vec<f32> = ["_FillValue", "missing_value"]
            .iter()
            .filter_map(|k| self.attr_f64(Some(name), k))
            .map(|m| m as f32)
            .collect();
        if let Some(fill) = ds.dcpl().ok().and_then(|p| {
            (p.fill_value_defined() == hdf5::plist::dataset_create::FillValue::UserDefined)
                .then(|| p.fill_value_as::<f32>())
                .flatten()
        }) {
            if fill != 0.0 && fill.is_finite() {
                markers.push(fill);
            }
        }
        if !markers.is_empty() {
            // Exact comparison is intended: a fill value is a bit pattern, not a measurement.
            a.mapv_inplace(|x| {
                if markers.iter().any(|m| m.to_bits() == x.to_bits()) {
                    f32::NAN
                } else {
                    x
                }
            });
        }
        Ok(if self.reversed {
            a.reversed_axes().as_standard_layout().into_owned()
        } else {
            a
        })
    }

    fn attr_f64(&self, array: Option<&str>, key: &str) -> Option<f64> {
        let owner = self.attr_owner(array)?;
        let attr = owner.attr(key).ok()?;
        let values: Vec<f64> = attr
            .as_reader()
            .conversion(Conversion::Soft)
            .read_raw()
            .ok()?;
        (values.len() == 1).then(|| values[0])
    }

    fn attr_string(&self, array: Option<&str>, key: &str) -> Option<String> {
        let owner = self.attr_owner(array)?;
        let attr = owner.attr(key).ok()?;
        read_string_attr(&attr)
    }
}
