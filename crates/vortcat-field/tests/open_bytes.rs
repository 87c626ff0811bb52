//! `open_bytes` (parse a file already read whole) must see exactly what `open` sees: the same
//! source description and the same snapshots to the last bit, and the same errors, naming the
//! file. The survey relies on this to read each single-snapshot input once, hashing and
//! parsing the same bytes.

use std::path::{Path, PathBuf};

use vortcat_field::{open, open_bytes, Field, InputSpec, SnapshotReader};

fn fixtures() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../fixtures/formats")
}

/// Bitwise equality, NaN (an invalid vector) equal to NaN.
fn same_bits(a: impl Iterator<Item = f64>, b: impl Iterator<Item = f64>) -> bool {
    a.zip(b)
        .all(|(x, y)| (x.is_nan() && y.is_nan()) || x.to_bits() == y.to_bits())
}

fn assert_same_reader(path: &Path, a: &mut dyn SnapshotReader, b: &mut dyn SnapshotReader) {
    let (ia, ib) = (a.info(), b.info());
    assert_eq!(ia.format, ib.format, "{}", path.display());
    assert_eq!(ia.arrays, ib.arrays, "{}", path.display());
    assert_eq!(ia.roles, ib.roles, "{}", path.display());
    assert_eq!(ia.grid, ib.grid, "{}", path.display());
    assert_eq!(ia.grid_origin, ib.grid_origin, "{}", path.display());
    assert_eq!(ia.snapshots, ib.snapshots, "{}", path.display());
    assert!(ia.snapshots > 0);
    for index in 0..ia.snapshots {
        let (sa, sb) = (a.read(index).unwrap(), b.read(index).unwrap());
        assert_eq!(sa.id, sb.id);
        assert_eq!(sa.time.map(f64::to_bits), sb.time.map(f64::to_bits));
        match (&sa.field, &sb.field) {
            (Field::Plane(fa), Field::Plane(fb)) => {
                assert_eq!(fa.u().dim(), fb.u().dim());
                assert!(same_bits(fa.u().iter().copied(), fb.u().iter().copied()));
                assert!(same_bits(fa.v().iter().copied(), fb.v().iter().copied()));
                assert_eq!(fa.valid(), fb.valid());
            }
            _ => panic!("{}: expected plane snapshots", path.display()),
        }
    }
}

#[test]
fn the_same_source_and_snapshots_as_opening_the_file() {
    // Every single-file format of the committed fixtures (written by numpy, h5py and by hand;
    // see fixtures/README.md), including Fortran order and big-endian stacks, deflated npz
    // members, and HDF5, which open_bytes hands to the library by path.
    let dir = fixtures();
    let spec = InputSpec::default();
    for name in [
        "arrays.npz",
        "arrays_compressed.npz",
        "stack_c.npy",
        "stack_fortran.npy",
        "stack_bigendian.npy",
        "stack_float32.npy",
        "snapshot0.csv",
        "stack_gzip.h5",
    ] {
        let path = dir.join(name);
        let mut a = open(&path, &spec).unwrap();
        let mut b = open_bytes(&path, std::fs::read(&path).unwrap(), &spec).unwrap();
        assert_same_reader(&path, a.as_mut(), b.as_mut());
    }
}

#[test]
fn a_folder_is_opened_from_the_path() {
    // A folder of per-component files cannot be given as bytes: open_bytes opens the path.
    let path = fixtures().join("components");
    let spec = InputSpec::default();
    let mut a = open(&path, &spec).unwrap();
    let mut b = open_bytes(&path, Vec::new(), &spec).unwrap();
    assert_same_reader(&path, a.as_mut(), b.as_mut());
}

#[test]
fn damaged_bytes_give_the_same_error_as_the_damaged_file() {
    let dir = tempfile::tempdir().unwrap();
    let spec = InputSpec::default();
    for name in ["arrays.npz", "stack_c.npy", "snapshot0.csv"] {
        let good = std::fs::read(fixtures().join(name)).unwrap();
        // Truncated in the middle of the data, and garbage that is no such file at all.
        let damaged: [Vec<u8>; 2] = [good[..good.len() / 2].to_vec(), vec![0xff; 300]];
        for bytes in damaged {
            let path = dir.path().join(format!("bad {name}"));
            std::fs::write(&path, &bytes).unwrap();
            let from_file = open(&path, &spec).err().map(|e| e.to_string());
            let from_bytes = open_bytes(&path, bytes, &spec).err().map(|e| e.to_string());
            let message = from_bytes.unwrap_or_else(|| panic!("{name}: damaged bytes opened"));
            assert_eq!(Some(message.clone()), from_file, "{name}");
            assert!(message.contains("bad "), "names the file: {message}");
        }
    }
}
