//! NumPy `.npy`: a folder of per-component files (`u.npy`, `v.npy`, optional `w.npy`, `x.npy`,
//! `y.npy`, `mask.npy`, `t.npy`; names from the input description) or one file holding all
//! components along a component axis.
//!
//! The header is parsed by `ndarray-npy`. Data are read lazily with positioned reads: a snapshot
//! of a stack whose time axis is the slowest-varying in storage (C order with time first, or
//! Fortran order with time last — the usual cases) is one contiguous read of that snapshot's
//! bytes. Other layouts are read whole once and cached. Both byte orders, every integer and
//! float width and booleans are decoded to `f64`.

use std::collections::HashMap;
use std::fs::File;
use std::io::{BufReader, Seek};
use std::os::unix::fs::FileExt;
use std::path::{Path, PathBuf};

use ndarray::{ArrayD, Axis as NdAxis, IxDyn, ShapeBuilder};
use ndarray_npy::npy::header::Header;

use super::{check_block, ArrayInfo, ArrayStore};
use crate::error::FieldError;
use crate::spec::InputSpec;

/// A decoded `.npy` element type.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Dtype {
    kind: u8,
    size: usize,
    little_endian: bool,
}

impl Dtype {
    /// Parses a descriptor such as `<f8`, `>i2`, `|u1`, `|b1`.
    pub(crate) fn parse(name: &str, descr: &py_literal::Value) -> Result<Self, FieldError> {
        let text = match descr {
            py_literal::Value::String(s) => s.clone(),
            other => {
                return Err(FieldError::NotNumeric {
                    name: name.to_string(),
                    found: format!("structured dtype {other}"),
                })
            }
        };
        let bytes = text.as_bytes();
        if bytes.len() < 3 {
            return Err(FieldError::Npy(format!(
                "'{name}': unreadable dtype '{text}'"
            )));
        }
        let little_endian = match bytes[0] {
            b'<' | b'|' | b'=' => true,
            b'>' => false,
            _ => {
                return Err(FieldError::Npy(format!(
                    "'{name}': unreadable dtype '{text}'"
                )))
            }
        };
        let kind = bytes[1];
        let size: usize = text[2..]
            .parse()
            .map_err(|_| FieldError::Npy(format!("'{name}': unreadable dtype '{text}'")))?;
        let ok = match kind {
            b'f' => matches!(size, 4 | 8),
            b'i' | b'u' => matches!(size, 1 | 2 | 4 | 8),
            b'b' => size == 1,
            _ => false,
        };
        if !ok {
            let found = match kind {
                b'U' | b'S' | b'a' => format!("strings ({text})"),
                b'O' => "Python objects".to_string(),
                b'c' => format!("complex numbers ({text})"),
                _ => text.clone(),
            };
            return Err(FieldError::NotNumeric {
                name: name.to_string(),
                found,
            });
        }
        Ok(Self {
            kind,
            size,
            little_endian,
        })
    }

    /// Element size in bytes.
    pub(crate) fn size(&self) -> usize {
        self.size
    }

    /// Decodes `bytes` (a whole number of elements) to `f64`.
    pub(crate) fn decode(&self, bytes: &[u8]) -> Vec<f64> {
        macro_rules! conv {
            ($t:ty, $n:expr) => {
                bytes
                    .chunks_exact($n)
                    .map(|c| {
                        let a: [u8; $n] = c.try_into().expect("chunk size");
                        (if self.little_endian {
                            <$t>::from_le_bytes(a)
                        } else {
                            <$t>::from_be_bytes(a)
                        }) as f64
                    })
                    .collect()
            };
        }
        match (self.kind, self.size) {
            (b'f', 4) => conv!(f32, 4),
            (b'f', 8) => conv!(f64, 8),
            (b'i', 1) => conv!(i8, 1),
            (b'i', 2) => conv!(i16, 2),
            (b'i', 4) => conv!(i32, 4),
            (b'i', 8) => conv!(i64, 8),
            (b'u', 1) | (b'b', 1) => conv!(u8, 1),
            (b'u', 2) => conv!(u16, 2),
            (b'u', 4) => conv!(u32, 4),
            (b'u', 8) => conv!(u64, 8),
            _ => unreachable!("checked in parse"),
        }
    }

    /// A short name for display, e.g. `<f4`.
    pub(crate) fn display(&self) -> String {
        format!(
            "{}{}{}",
            if self.size == 1 {
                '|'
            } else if self.little_endian {
                '<'
            } else {
                '>'
            },
            self.kind as char,
            self.size
        )
    }
}

/// Parsed header of one `.npy` stream, with the checks that must pass before any allocation.
#[derive(Debug, Clone)]
pub(crate) struct NpyHeader {
    pub(crate) shape: Vec<usize>,
    pub(crate) fortran: bool,
    pub(crate) dtype: Dtype,
    pub(crate) data_bytes: u64,
}

/// The header dictionary exactly as NumPy writes it (`repr` of a dict with sorted keys, e.g.
/// `{'descr': '<f8', 'fortran_order': False, 'shape': (256, 256), }`): descriptor, Fortran
/// order and shape, or `None` for anything else (then the general parser decides). This fast
/// path exists because the general Python-literal parser took 7 % of a survey of small
/// snapshots, whose headers are read twice each.
fn canonical_header(dict: &str) -> Option<(String, bool, Vec<usize>)> {
    let rest = dict.trim_end().strip_prefix("{'descr': '")?;
    let (descr, rest) = rest.split_once("', 'fortran_order': ")?;
    if descr.is_empty()
        || !descr
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || matches!(c, '<' | '>' | '|' | '='))
    {
        return None;
    }
    let (fortran, rest) = match rest.strip_prefix("False, 'shape': (") {
        Some(r) => (false, r),
        None => (true, rest.strip_prefix("True, 'shape': (")?),
    };
    let (dims, rest) = rest.split_once(')')?;
    if !matches!(rest, ", }" | "}") {
        return None;
    }
    let shape = dims
        .split(',')
        .map(str::trim)
        .filter(|d| !d.is_empty())
        .map(|d| d.parse::<usize>().ok())
        .collect::<Option<Vec<usize>>>()?;
    Some((descr.to_string(), fortran, shape))
}

/// Reads the `.npy` preamble and header text: `(header text, all bytes read)`, or `None` when
/// the stream does not start like a `.npy` file (the general parser then reports why).
fn read_preamble<R: std::io::Read>(reader: &mut R) -> std::io::Result<Option<(String, Vec<u8>)>> {
    let mut bytes = vec![0u8; 8];
    reader.read_exact(&mut bytes)?;
    if &bytes[..6] != b"\x93NUMPY" {
        return Ok(None);
    }
    let len_bytes = if bytes[6] == 1 { 2 } else { 4 };
    let mut len = vec![0u8; len_bytes];
    reader.read_exact(&mut len)?;
    bytes.extend_from_slice(&len);
    let text_len = if len_bytes == 2 {
        usize::from(u16::from_le_bytes([len[0], len[1]]))
    } else {
        u32::from_le_bytes([len[0], len[1], len[2], len[3]]) as usize
    };
    if text_len > 1 << 20 {
        return Ok(None);
    }
    let mut text = vec![0u8; text_len];
    reader.read_exact(&mut text)?;
    bytes.extend_from_slice(&text);
    // Version 3 headers are UTF-8; versions 1 and 2 are Latin-1 (ASCII in practice).
    Ok(std::str::from_utf8(&text)
        .ok()
        .map(|t| (t.to_string(), bytes)))
}

impl NpyHeader {
    pub(crate) fn read<R: std::io::Read>(name: &str, reader: &mut R) -> Result<Self, FieldError> {
        let invalid = |e: &dyn std::fmt::Display| {
            FieldError::Corrupt(format!("'{name}' is not a valid .npy stream: {e}"))
        };
        let preamble = read_preamble(reader).map_err(|e| invalid(&e))?;
        let fast = preamble
            .as_ref()
            .and_then(|(text, _)| canonical_header(text));
        let (descr, fortran, shape) = match fast {
            Some(header) => header,
            None => {
                // Anything else goes to the general parser, fed the bytes already read.
                let consumed = preamble.map(|(_, b)| b).unwrap_or_default();
                let mut replay = std::io::Read::chain(std::io::Cursor::new(consumed), reader);
                let header = Header::from_reader(&mut replay).map_err(|e| invalid(&e))?;
                let descr = match &header.type_descriptor {
                    py_literal::Value::String(s) => s.clone(),
                    other => {
                        return Self::finish(
                            name,
                            Dtype::parse(name, other)?,
                            header.layout.is_fortran(),
                            header.shape,
                        )
                    }
                };
                (descr, header.layout.is_fortran(), header.shape)
            }
        };
        let dtype = Dtype::parse(name, &py_literal::Value::String(descr))?;
        Self::finish(name, dtype, fortran, shape)
    }

    fn finish(
        name: &str,
        dtype: Dtype,
        fortran: bool,
        shape: Vec<usize>,
    ) -> Result<Self, FieldError> {
        let overflow = || FieldError::Corrupt(format!("'{name}': shape {shape:?} overflows"));
        let elements = shape
            .iter()
            .try_fold(1u64, |acc, &n| acc.checked_mul(n as u64))
            .ok_or_else(overflow)?;
        let data_bytes = elements
            .checked_mul(dtype.size() as u64)
            .ok_or_else(overflow)?;
        Ok(Self {
            shape,
            fortran,
            dtype,
            data_bytes,
        })
    }

    /// Builds an array of this header's logical shape from storage-order values.
    pub(crate) fn to_array(
        &self,
        shape: &[usize],
        values: Vec<f64>,
    ) -> Result<ArrayD<f64>, FieldError> {
        let built = if self.fortran {
            ArrayD::from_shape_vec(IxDyn(shape).f(), values)
        } else {
            ArrayD::from_shape_vec(IxDyn(shape), values)
        };
        built.map_err(|e| FieldError::Corrupt(format!("data do not fit shape {shape:?}: {e}")))
    }
}

/// Where an array's bytes come from: the file (positioned reads, so a stack is read one
/// snapshot at a time), or a copy of the whole file already in memory.
#[derive(Debug)]
enum Backing {
    File(File),
    Memory(Vec<u8>),
}

impl Backing {
    /// `len` bytes at `offset` of a copy in memory (`None` for a file); an error past the end.
    fn in_memory(&self, offset: u64, len: usize) -> Option<std::io::Result<&[u8]>> {
        let Backing::Memory(bytes) = self else {
            return None;
        };
        let range = usize::try_from(offset)
            .ok()
            .and_then(|start| Some(start..start.checked_add(len)?));
        Some(
            range
                .and_then(|r| bytes.get(r))
                .ok_or_else(|| std::io::Error::from(std::io::ErrorKind::UnexpectedEof)),
        )
    }

    fn read_exact_at(&self, buf: &mut [u8], offset: u64) -> std::io::Result<()> {
        match self {
            Backing::File(f) => f.read_exact_at(buf, offset),
            Backing::Memory(_) => {
                let bytes = self.in_memory(offset, buf.len()).expect("in memory")?;
                buf.copy_from_slice(bytes);
                Ok(())
            }
        }
    }
}

#[derive(Debug)]
struct NpyArray {
    file: Backing,
    header: NpyHeader,
    data_offset: u64,
}

impl NpyArray {
    fn open(name: &str, path: &Path) -> Result<Self, FieldError> {
        let file = File::open(path).map_err(|e| FieldError::Io(e).in_file(path))?;
        let len = file.metadata()?.len();
        let mut reader = BufReader::new(&file);
        let header = NpyHeader::read(name, &mut reader).map_err(|e| e.in_file(path))?;
        let data_offset = reader.stream_position()?;
        Self::checked(name, path, Backing::File(file), header, data_offset, len)
    }

    fn from_bytes(name: &str, path: &Path, bytes: Vec<u8>) -> Result<Self, FieldError> {
        let mut reader = std::io::Cursor::new(bytes.as_slice());
        let header = NpyHeader::read(name, &mut reader).map_err(|e| e.in_file(path))?;
        let data_offset = reader.position();
        let len = bytes.len() as u64;
        Self::checked(name, path, Backing::Memory(bytes), header, data_offset, len)
    }

    fn checked(
        name: &str,
        path: &Path,
        file: Backing,
        header: NpyHeader,
        data_offset: u64,
        len: u64,
    ) -> Result<Self, FieldError> {
        let available = len.saturating_sub(data_offset);
        if header.data_bytes > available {
            return Err(FieldError::Corrupt(format!(
                "header of '{name}' claims shape {:?} ({} bytes of data) but the file holds only {available} bytes after the header (truncated?)",
                header.shape, header.data_bytes
            ))
            .in_file(path));
        }
        Ok(Self {
            file,
            header,
            data_offset,
        })
    }

    fn read_bytes(&self, offset: u64, len: u64) -> Result<Vec<f64>, FieldError> {
        if let Some(bytes) = self.file.in_memory(self.data_offset + offset, len as usize) {
            // Decode straight from the copy in memory, without a second buffer.
            return Ok(self.header.dtype.decode(bytes?));
        }
        let mut buf = vec![0u8; len as usize];
        self.file
            .read_exact_at(&mut buf, self.data_offset + offset)?;
        Ok(self.header.dtype.decode(&buf))
    }
}

/// The `.npy` store: a folder of arrays or one file.
#[derive(Debug)]
pub struct NpyStore {
    arrays: Vec<ArrayInfo>,
    files: HashMap<String, NpyArray>,
    cache: HashMap<String, ArrayD<f64>>,
    single: bool,
}

impl NpyStore {
    /// Opens a folder of `.npy` files or a single `.npy` file.
    pub fn open(path: &Path, _spec: &InputSpec) -> Result<Self, FieldError> {
        let mut entries: Vec<(String, PathBuf)> = Vec::new();
        let single = !path.is_dir();
        if single {
            let stem = path
                .file_stem()
                .and_then(|s| s.to_str())
                .unwrap_or("array")
                .to_string();
            entries.push((stem, path.to_path_buf()));
        } else {
            for entry in std::fs::read_dir(path)? {
                let p = entry?.path();
                if p.extension().and_then(|e| e.to_str()) == Some("npy") && p.is_file() {
                    if let Some(stem) = p.file_stem().and_then(|s| s.to_str()) {
                        entries.push((stem.to_string(), p.clone()));
                    }
                }
            }
            entries.sort();
            if entries.is_empty() {
                return Err(FieldError::Unusable(
                    "is a directory with no .npy files; give a velocity file, or a folder of \
                     per-component .npy files (u.npy, v.npy, ...)"
                        .into(),
                ));
            }
        }
        let mut arrays = Vec::new();
        let mut files = HashMap::new();
        for (name, p) in entries {
            let array = NpyArray::open(&name, &p)?;
            arrays.push(ArrayInfo {
                name: name.clone(),
                shape: array.header.shape.clone(),
                dtype: array.header.dtype.display(),
            });
            files.insert(name, array);
        }
        Ok(Self {
            arrays,
            files,
            cache: HashMap::new(),
            single,
        })
    }

    /// A single `.npy` file whose bytes are already in memory (the whole file).
    pub fn from_bytes(path: &Path, bytes: Vec<u8>) -> Result<Self, FieldError> {
        let name = path
            .file_stem()
            .and_then(|s| s.to_str())
            .unwrap_or("array")
            .to_string();
        let array = NpyArray::from_bytes(&name, path, bytes)?;
        Ok(Self {
            arrays: vec![ArrayInfo {
                name: name.clone(),
                shape: array.header.shape.clone(),
                dtype: array.header.dtype.display(),
            }],
            files: HashMap::from([(name, array)]),
            cache: HashMap::new(),
            single: true,
        })
    }

    fn array(&self, name: &str) -> Result<&NpyArray, FieldError> {
        self.files.get(name).ok_or_else(|| FieldError::Missing {
            kind: "array",
            name: name.to_string(),
            available: self.arrays.iter().map(|a| a.name.clone()).collect(),
        })
    }
}

impl ArrayStore for NpyStore {
    fn format(&self) -> &'static str {
        "npy"
    }

    fn arrays(&self) -> &[ArrayInfo] {
        &self.arrays
    }

    fn is_single_array(&self) -> bool {
        self.single
    }

    fn read_all(&mut self, name: &str) -> Result<ArrayD<f64>, FieldError> {
        if let Some(a) = self.cache.get(name) {
            return Ok(a.clone());
        }
        let array = self.array(name)?;
        let values = array.read_bytes(0, array.header.data_bytes)?;
        array.header.to_array(&array.header.shape.clone(), values)
    }

    fn read_block_f32(
        &mut self,
        name: &str,
        start: &[usize],
        count: &[usize],
    ) -> Result<ArrayD<f32>, FieldError> {
        let array = self.array(name)?;
        let header = &array.header;
        check_block(name, &header.shape, start, count)?;
        // C order: a block is one contiguous run of bytes when, for some axis p, every axis
        // before p is a single index and every axis after p is whole (e.g. z-planes of
        // [z][y][x], or of [t][z][y][x] at one t).
        let rank = header.shape.len();
        let contiguous = !header.fortran
            && (0..rank).any(|p| {
                (0..p).all(|k| count[k] == 1) && (p + 1..rank).all(|k| count[k] == header.shape[k])
            });
        if contiguous {
            let elem = header.dtype.size() as u64;
            let mut offset = 0u64;
            let mut stride = 1u64;
            for k in (0..rank).rev() {
                offset += start[k] as u64 * stride;
                stride *= header.shape[k] as u64;
            }
            let n: u64 = count.iter().map(|&c| c as u64).product();
            let mut buf = vec![0u8; (n * elem) as usize];
            array
                .file
                .read_exact_at(&mut buf, array.data_offset + offset * elem)?;
            let values: Vec<f32> = header
                .dtype
                .decode(&buf)
                .into_iter()
                .map(|x| x as f32)
                .collect();
            return ArrayD::from_shape_vec(IxDyn(count), values)
                .map_err(|e| FieldError::Corrupt(format!("data do not fit shape {count:?}: {e}")));
        }
        let all = self.read_all(name)?;
        let info: Vec<ndarray::SliceInfoElem> = start
            .iter()
            .zip(count)
            .map(|(&a, &n)| ndarray::SliceInfoElem::Slice {
                start: a as isize,
                end: Some((a + n) as isize),
                step: 1,
            })
            .collect();
        Ok(all.slice(info.as_slice()).mapv(|x| x as f32))
    }

    fn read_along(
        &mut self,
        name: &str,
        axis: usize,
        index: usize,
    ) -> Result<ArrayD<f64>, FieldError> {
        let array = self.array(name)?;
        let header = &array.header;
        let rank = header.shape.len();
        if axis >= rank || index >= header.shape[axis] {
            return Err(FieldError::IndexOutOfRange {
                index,
                len: header.shape.get(axis).copied().unwrap_or(0),
            });
        }
        let contiguous = (!header.fortran && axis == 0) || (header.fortran && axis == rank - 1);
        if contiguous {
            let mut rest = header.shape.clone();
            rest.remove(axis);
            let per = rest.iter().product::<usize>() as u64 * header.dtype.size() as u64;
            let values = array.read_bytes(index as u64 * per, per)?;
            return header.to_array(&rest, values);
        }
        if !self.cache.contains_key(name) {
            log::debug!("'{name}': stack axis {axis} is not contiguous on disk; reading it whole");
            let whole = self.read_all(name)?;
            self.cache.insert(name.to_string(), whole);
        }
        let whole = &self.cache[name];
        Ok(whole.index_axis(NdAxis(axis), index).to_owned())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A `.npy` v1.0 preamble around `dict`, padded as NumPy pads (to a multiple of 64 bytes).
    fn npy_header(dict: &str) -> Vec<u8> {
        let mut text = dict.to_string();
        while (10 + text.len() + 1) % 64 != 0 {
            text.push(' ');
        }
        text.push('\n');
        let mut bytes = b"\x93NUMPY\x01\x00".to_vec();
        bytes.extend_from_slice(&(text.len() as u16).to_le_bytes());
        bytes.extend_from_slice(text.as_bytes());
        bytes
    }

    fn general(bytes: &[u8]) -> (String, bool, Vec<usize>) {
        let h = Header::from_reader(&mut std::io::Cursor::new(bytes)).unwrap();
        let py_literal::Value::String(d) = h.type_descriptor else {
            panic!("descriptor")
        };
        (d, h.layout.is_fortran(), h.shape)
    }

    #[test]
    fn fast_path_agrees_with_the_general_parser_on_files_numpy_wrote() {
        // Headers of the reference files written by numpy (scripts/crosscheck/field_files.py):
        // C and Fortran order, float32/64, int16, big-endian.
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../fixtures/formats");
        let mut seen = 0;
        for entry in std::fs::read_dir(&dir).unwrap() {
            let path = entry.unwrap().path();
            if path.extension().and_then(|e| e.to_str()) != Some("npy") {
                continue;
            }
            let bytes = std::fs::read(&path).unwrap();
            let (text, consumed) = read_preamble(&mut std::io::Cursor::new(&bytes))
                .unwrap()
                .unwrap();
            let fast = canonical_header(&text)
                .unwrap_or_else(|| panic!("{}: not canonical: {text:?}", path.display()));
            assert_eq!(fast, general(&consumed), "{}", path.display());
            seen += 1;
        }
        assert!(seen >= 5, "reference .npy files found: {seen}");
    }

    #[test]
    fn other_header_spellings_fall_back_to_the_general_parser() {
        for (dict, want) in [
            // NumPy's own spellings: 1-D and 0-D shapes.
            (
                "{'descr': '>i2', 'fortran_order': False, 'shape': (7,), }",
                Some(("i2", false, vec![7])),
            ),
            (
                "{'descr': '<f8', 'fortran_order': True, 'shape': (), }",
                Some(("f8", true, vec![])),
            ),
            // Legal but not as NumPy writes them: other key order, no trailing comma.
            (
                "{'shape': (3, 4), 'fortran_order': False, 'descr': '<f4'}",
                None,
            ),
            ("{'descr':'<f4','fortran_order':False,'shape':(3,4)}", None),
        ] {
            let bytes = npy_header(dict);
            let text = std::str::from_utf8(&bytes[10..]).unwrap();
            let fast = canonical_header(text);
            assert_eq!(fast.is_some(), want.is_some(), "{dict}");
            if let Some((kind, fortran, shape)) = want {
                let (d, f, s) = fast.unwrap();
                assert!(d.ends_with(kind) && f == fortran && s == shape, "{dict}");
            }
            // Whichever path parses it, the result is the general parser's.
            let h = NpyHeader::read("a", &mut std::io::Cursor::new(&bytes)).unwrap();
            let (d, f, s) = general(&bytes);
            assert_eq!((h.shape, h.fortran), (s, f), "{dict}");
            assert_eq!(
                h.dtype,
                Dtype::parse("a", &py_literal::Value::String(d)).unwrap()
            );
        }
    }

    #[test]
    fn a_stream_that_is_not_npy_is_a_clear_error() {
        for bytes in [&b"PK\x03\x04 not npy at all"[..], &b"\x93NUM"[..]] {
            let e = NpyHeader::read("u", &mut std::io::Cursor::new(bytes)).unwrap_err();
            assert!(
                e.to_string().contains("'u' is not a valid .npy stream"),
                "{e}"
            );
        }
    }
}
