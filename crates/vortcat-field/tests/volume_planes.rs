//! `SnapshotReader::read_volume_planes` reads the same values as a whole-snapshot read, for
//! `.npy` folders (positioned reads) and HDF5 stacks (hyperslabs), row- and column-major.

use ndarray::{s, Array3, Array4};
use vortcat_field::{open, open_bytes, Field, Geometry, InputSpec, Layout, SnapshotReader};

fn value(c: usize, t: usize, z: usize, y: usize, x: usize) -> f32 {
    // Distinct, exactly representable values: every element tells where it came from.
    (c * 100_000 + t * 10_000 + z * 100 + y * 10 + x) as f32
}

fn spec() -> InputSpec {
    InputSpec {
        geometry: Geometry::Volume,
        ..InputSpec::default()
    }
}

/// Whole-snapshot read against plane reads over several z-ranges: bit-identical values.
fn compare(path: &std::path::Path, spec: &InputSpec, index: usize) {
    compare_reader(open(path, spec).unwrap(), index);
}

fn compare_reader(mut reader: Box<dyn SnapshotReader>, index: usize) {
    let Field::Volume(whole) = reader.read(index).unwrap().field else {
        panic!("not a volume")
    };
    let nz = whole.u().dim().0;
    for (a, b) in [(0, nz), (0, 1), (1, 3), (nz - 2, nz)] {
        let p = reader.read_volume_planes(index, a..b).unwrap();
        assert_eq!(p.z, a..b);
        for (got, want) in [(&p.u, whole.u()), (&p.v, whole.v()), (&p.w, whole.w())] {
            let want = want.slice(s![a..b, .., ..]);
            assert_eq!(got.dim(), want.dim());
            assert!(got
                .iter()
                .zip(want.iter())
                .all(|(g, w)| g.to_bits() == w.to_bits()));
        }
    }
    assert!(reader.read_volume_planes(index, 0..nz + 1).is_err());
    assert!(reader.read_volume_planes(index, 2..2).is_err());
}

#[test]
fn single_npy_planes_match_the_whole_volume_from_the_file_and_from_bytes() {
    // One array (component, z, y, x): positioned reads from the file, and slices of the copy
    // in memory when the bytes were read whole (open_bytes).
    let dir = tempfile::tempdir().unwrap();
    let (nz, ny, nx) = (5, 4, 3);
    let a = Array4::from_shape_fn((3, nz, ny, nx), |(c, z, y, x)| value(c, 0, z, y, x));
    let path = dir.path().join("velocity.npy");
    ndarray_npy::write_npy(&path, &a).unwrap();
    compare(&path, &spec(), 0);
    compare_reader(
        open_bytes(&path, std::fs::read(&path).unwrap(), &spec()).unwrap(),
        0,
    );
}

#[test]
fn npy_folder_planes_match_the_whole_volume() {
    let dir = tempfile::tempdir().unwrap();
    let (nz, ny, nx) = (5, 4, 3);
    for (c, name) in ["u", "v", "w"].iter().enumerate() {
        let a = Array3::from_shape_fn((nz, ny, nx), |(z, y, x)| value(c, 0, z, y, x));
        ndarray_npy::write_npy(dir.path().join(format!("{name}.npy")), &a).unwrap();
    }
    compare(dir.path(), &spec(), 0);
}

#[test]
fn hdf5_stack_planes_match_the_whole_volume_in_both_layouts() {
    let dir = tempfile::tempdir().unwrap();
    let (nt, nz, ny, nx) = (2, 6, 4, 3);
    let path = dir.path().join("stack.h5");
    {
        let f = hdf5::File::create(&path).unwrap();
        for (c, name) in ["u", "v", "w"].iter().enumerate() {
            let a = Array4::from_shape_fn((nt, nz, ny, nx), |(t, z, y, x)| value(c, t, z, y, x));
            f.new_dataset_builder().with_data(&a).create(*name).unwrap();
        }
    }
    compare(&path, &spec(), 1);
    // The same file read as column-major: axes reversed, time last.
    let reversed = InputSpec {
        layout: Layout::ColumnMajor,
        ..spec()
    };
    compare(&path, &reversed, 0);
}
