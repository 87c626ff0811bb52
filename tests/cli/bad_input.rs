//! Every kind of bad input gets one clear line naming the file and the problem, exit code 1,
//! never a panic and never a huge allocation.

use std::fs;
use std::io::Write;

use ndarray::{array, Array2};
use ndarray_npy::{write_npy, NpzWriter};

use crate::harness::{assert_one_line_error, vortcat};

fn npz(path: &std::path::Path, arrays: &[(&str, Array2<f64>)]) {
    let mut w = NpzWriter::new(fs::File::create(path).unwrap());
    for (name, a) in arrays {
        w.add_array(*name, a).unwrap();
    }
    w.finish().unwrap();
}

/// A hand-made .npy header (format 1.0) followed by `data`.
fn raw_npy(path: &std::path::Path, dict: &str, data: &[u8]) {
    let mut header = dict.to_string();
    let unpadded = 10 + header.len() + 1;
    header.push_str(&" ".repeat((64 - unpadded % 64) % 64));
    header.push('\n');
    let mut f = fs::File::create(path).unwrap();
    f.write_all(b"\x93NUMPY\x01\x00").unwrap();
    f.write_all(&(header.len() as u16).to_le_bytes()).unwrap();
    f.write_all(header.as_bytes()).unwrap();
    f.write_all(data).unwrap();
}

fn field(ny: usize, nx: usize) -> Array2<f64> {
    Array2::from_shape_fn((ny, nx), |(i, j)| (i * nx + j) as f64 * 0.01)
}

#[test]
fn truncated_npy() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("stack.npy");
    let a = ndarray::Array3::<f64>::zeros((2, 8, 8));
    write_npy(&p, &a).unwrap();
    let bytes = fs::read(&p).unwrap();
    fs::write(&p, &bytes[..bytes.len() / 2]).unwrap();
    let run = vortcat([std::ffi::OsStr::new("inspect"), p.as_os_str()]);
    assert_one_line_error(&run, &["stack.npy", "truncated"]);
}

#[test]
fn npy_header_claiming_more_than_the_file_holds_allocates_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("huge.npy");
    // 10^15 elements claimed, 16 bytes present: must fail before allocating anything.
    raw_npy(
        &p,
        "{'descr': '<f8', 'fortran_order': False, 'shape': (100000, 2, 100000, 50000), }",
        &[0u8; 16],
    );
    let run = vortcat([std::ffi::OsStr::new("inspect"), p.as_os_str()]);
    assert_one_line_error(&run, &["huge.npy", "claims shape", "only 16 bytes"]);
}

#[test]
fn corrupt_hdf5_and_npz() {
    let dir = tempfile::tempdir().unwrap();
    let h5 = dir.path().join("run.h5");
    fs::write(&h5, b"this is not an HDF5 file at all, just text").unwrap();
    let run = vortcat([std::ffi::OsStr::new("inspect"), h5.as_os_str()]);
    assert_one_line_error(&run, &["run.h5", "not a readable HDF5 file"]);

    let z = dir.path().join("frames.npz");
    fs::write(&z, [0x50u8, 0x4b, 0x03, 0x04, 1, 2, 3]).unwrap();
    let run = vortcat([std::ffi::OsStr::new("inspect"), z.as_os_str()]);
    assert_one_line_error(&run, &["frames.npz", "npz"]);
}

#[test]
fn truncated_hdf5() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("cut.h5");
    {
        let _guard = crate::harness::hdf5_writing();
        let f = hdf5::File::create(&p).unwrap();
        f.new_dataset_builder()
            .with_data(&ndarray::Array3::<f64>::zeros((4, 64, 64)))
            .create("u")
            .unwrap();
        f.new_dataset_builder()
            .with_data(&ndarray::Array3::<f64>::zeros((4, 64, 64)))
            .create("v")
            .unwrap();
    }
    let bytes = fs::read(&p).unwrap();
    fs::write(&p, &bytes[..bytes.len() / 3]).unwrap();
    let run = vortcat([std::ffi::OsStr::new("inspect"), p.as_os_str()]);
    assert_one_line_error(&run, &["cut.h5"]);
}

#[test]
fn mismatched_component_shapes() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("pair.npz");
    npz(&p, &[("u", field(4, 5)), ("v", field(5, 4))]);
    let run = vortcat([std::ffi::OsStr::new("inspect"), p.as_os_str()]);
    assert_one_line_error(&run, &["pair.npz", "shape mismatch", "[5, 4]", "[4, 5]"]);
}

#[test]
fn missing_dataset_lists_what_exists() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("other.h5");
    {
        let _guard = crate::harness::hdf5_writing();
        let f = hdf5::File::create(&p).unwrap();
        let g = f.create_group("piv").unwrap();
        g.new_dataset_builder()
            .with_data(&field(4, 4))
            .create("Ux")
            .unwrap();
        g.new_dataset_builder()
            .with_data(&field(4, 4))
            .create("Uy")
            .unwrap();
    }
    let run = vortcat([std::ffi::OsStr::new("inspect"), p.as_os_str()]);
    assert_one_line_error(
        &run,
        &["other.h5", "no array named 'u'", "/piv/Ux", "/piv/Uy"],
    );
    // Naming them works.
    let ok = vortcat([
        std::ffi::OsStr::new("inspect"),
        p.as_os_str(),
        "--u".as_ref(),
        "/piv/Ux".as_ref(),
        "--v".as_ref(),
        "piv/Uy".as_ref(),
    ]);
    assert_eq!(ok.code, 0, "{}", ok.stderr);
}

#[test]
fn strings_where_numbers_are_expected() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("labels.npy");
    raw_npy(
        &p,
        "{'descr': '<U3', 'fortran_order': False, 'shape': (2, 3, 3), }",
        &[0u8; 2 * 3 * 3 * 12],
    );
    let run = vortcat([std::ffi::OsStr::new("inspect"), p.as_os_str()]);
    assert_one_line_error(&run, &["labels.npy", "strings", "not numbers"]);

    let c = dir.path().join("vectors.csv");
    fs::write(&c, "x,y,u,v\n0,0,1,2\n1,0,abc,2\n0,1,1,2\n1,1,1,2\n").unwrap();
    let run = vortcat([std::ffi::OsStr::new("inspect"), c.as_os_str()]);
    assert_one_line_error(&run, &["vectors.csv", "row 3, column u", "'abc'"]);

    let h = dir.path().join("text.h5");
    {
        let _guard = crate::harness::hdf5_writing();
        let f = hdf5::File::create(&h).unwrap();
        let s: hdf5::types::VarLenUnicode = "north".parse().unwrap();
        f.new_dataset_builder()
            .with_data(&ndarray::arr1(&[s.clone(), s]))
            .create("u")
            .unwrap();
        f.new_dataset_builder()
            .with_data(&ndarray::arr1(&[1.0, 2.0]))
            .create("v")
            .unwrap();
    }
    let run = vortcat([
        std::ffi::OsStr::new("inspect"),
        h.as_os_str(),
        "--geometry".as_ref(),
        "plane".as_ref(),
    ]);
    assert_one_line_error(&run, &["text.h5"]);
}

#[test]
fn all_nan_and_infinite_fields() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("blank.npz");
    npz(
        &p,
        &[
            ("u", Array2::from_elem((4, 4), f64::NAN)),
            ("v", field(4, 4)),
        ],
    );
    let run = vortcat([std::ffi::OsStr::new("inspect"), p.as_os_str()]);
    assert_one_line_error(&run, &["blank.npz", "no valid vector"]);

    let q = dir.path().join("inf.npz");
    let mut u = field(4, 4);
    u[[1, 1]] = f64::INFINITY;
    npz(&q, &[("u", u), ("v", field(4, 4))]);
    let run = vortcat([std::ffi::OsStr::new("inspect"), q.as_os_str()]);
    assert_one_line_error(&run, &["inf.npz", "infinite"]);
}

#[test]
fn zero_and_negative_spacing() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("plain.npz");
    npz(&p, &[("u", field(4, 4)), ("v", field(4, 4))]);
    for bad in ["0", "1,-1", "nan"] {
        let run = vortcat([
            std::ffi::OsStr::new("inspect"),
            p.as_os_str(),
            "--spacing".as_ref(),
            bad.as_ref(),
        ]);
        assert_one_line_error(&run, &["spacing"]);
    }
    // A negative spacing in coordinates is legal (image convention) — see the inspect tests.
}

#[test]
fn non_uniform_coordinates() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("stretched.npz");
    let mut w = NpzWriter::new(fs::File::create(&p).unwrap());
    w.add_array("u", &field(3, 5)).unwrap();
    w.add_array("v", &field(3, 5)).unwrap();
    w.add_array("x", &array![0.0, 1.0, 2.0, 4.0, 5.0]).unwrap();
    w.add_array("y", &array![0.0, 1.0, 2.0]).unwrap();
    w.finish().unwrap();
    let run = vortcat([std::ffi::OsStr::new("inspect"), p.as_os_str()]);
    assert_one_line_error(&run, &["stretched.npz", "non-uniform", "axis x"]);

    let c = dir.path().join("scattered.csv");
    fs::write(
        &c,
        "x,y,u,v\n0,0,1,1\n0.37,0.1,1,1\n1.9,0.77,1,1\n0.5,2.2,1,1\n",
    )
    .unwrap();
    let run = vortcat([std::ffi::OsStr::new("inspect"), c.as_os_str()]);
    assert_one_line_error(&run, &["scattered.csv", "scattered"]);
}

#[test]
fn empty_csv() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("empty.csv");
    fs::write(&p, "").unwrap();
    let run = vortcat([std::ffi::OsStr::new("inspect"), p.as_os_str()]);
    assert_one_line_error(&run, &["empty.csv", "empty"]);
    let q = dir.path().join("header.csv");
    fs::write(&q, "x,y,u,v\n").unwrap();
    let run = vortcat([std::ffi::OsStr::new("inspect"), q.as_os_str()]);
    assert_one_line_error(&run, &["header.csv", "no data rows"]);
}

#[test]
fn directory_where_a_file_is_expected() {
    let dir = tempfile::tempdir().unwrap();
    let sub = dir.path().join("session1");
    fs::create_dir(&sub).unwrap();
    let run = vortcat([std::ffi::OsStr::new("inspect"), sub.as_os_str()]);
    assert_one_line_error(&run, &["session1", "directory"]);
    let run = vortcat([
        std::ffi::OsStr::new("inspect"),
        sub.as_os_str(),
        "--format".as_ref(),
        "hdf5".as_ref(),
    ]);
    assert_one_line_error(&run, &["session1", "is a directory"]);
    let run = vortcat([
        std::ffi::OsStr::new("inspect"),
        "x.h5".as_ref(),
        "--config".as_ref(),
        sub.as_os_str(),
    ]);
    assert_one_line_error(&run, &["session1", "config"]);
}

#[test]
fn missing_file_and_bad_config() {
    let dir = tempfile::tempdir().unwrap();
    let run = vortcat([
        std::ffi::OsStr::new("inspect"),
        dir.path().join("nope.h5").as_os_str(),
    ]);
    assert_one_line_error(&run, &["nope.h5", "no such file"]);
    let cfg = dir.path().join("run.toml");
    fs::write(&cfg, "[input]\nspacing = \"wide\"\n").unwrap();
    let run = vortcat([
        std::ffi::OsStr::new("inspect"),
        "x.h5".as_ref(),
        "--config".as_ref(),
        cfg.as_os_str(),
    ]);
    assert_one_line_error(&run, &["run.toml", "invalid config"]);
}

#[test]
fn hdf5_dataset_too_large_to_read_is_refused_before_allocating() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("sparse.h5");
    {
        // A chunked dataset of 2 × 10^6 × 10^6 float64 that HDF5 stores sparsely (no chunk
        // written): a snapshot would need 7450 GiB.
        let _guard = crate::harness::hdf5_writing();
        let f = hdf5::File::create(&p).unwrap();
        for name in ["u", "v"] {
            f.new_dataset::<f64>()
                .shape((2, 1_000_000, 1_000_000))
                .chunk((1, 1000, 1000))
                .create(name)
                .unwrap();
        }
    }
    let run = vortcat([std::ffi::OsStr::new("inspect"), p.as_os_str()]);
    assert_one_line_error(&run, &["sparse.h5", "refusing"]);
}
