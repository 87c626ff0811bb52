//! Benchmark driver (never a test): `bench_tubes write FILE N` writes an N³ float32 HDF5
//! volume (u, v, w as (nz, ny, nx)) with six straight Gaussian-core tubes of different
//! orientations; `bench_tubes run FILE SLAB` surveys it streamed from the file in slabs of
//! SLAB planes and prints the timings. Peak RSS: run under `/usr/bin/time -v`.

use std::path::Path;

use ndarray::Array3;
use vortcat_field::{open, Geometry, InputSpec};
use vortcat_tube::{survey_tubes, ReaderVolume, TubeSettings};

fn velocity(x: [f64; 3], n: f64) -> [f64; 3] {
    // (point as fractions of the box, axis, Γ, rc in spacings)
    let tubes: [([f64; 3], [f64; 3], f64, f64); 6] = [
        ([0.3, 0.3, 0.5], [0.0, 0.3, 1.0], 60.0, 5.0),
        ([0.7, 0.2, 0.5], [1.0, 0.2, 0.1], -45.0, 4.0),
        ([0.5, 0.7, 0.3], [0.3, 1.0, -0.2], 50.0, 6.0),
        ([0.2, 0.8, 0.8], [0.5, -0.5, 0.7], 35.0, 3.5),
        ([0.8, 0.7, 0.8], [-0.2, 0.1, 1.0], -40.0, 4.5),
        ([0.5, 0.4, 0.9], [1.0, -0.4, 0.0], 30.0, 3.0),
    ];
    let mut u = [0.0_f64; 3];
    for (p, a, g, rc) in tubes {
        let (g, rc): (f64, f64) = (g, rc);
        let an = (a[0] * a[0] + a[1] * a[1] + a[2] * a[2]).sqrt();
        let e = [a[0] / an, a[1] / an, a[2] / an];
        let d = [x[0] - p[0] * n, x[1] - p[1] * n, x[2] - p[2] * n];
        let z = d[0] * e[0] + d[1] * e[1] + d[2] * e[2];
        let r = [d[0] - z * e[0], d[1] - z * e[1], d[2] - z * e[2]];
        let r2: f64 = r[0] * r[0] + r[1] * r[1] + r[2] * r[2] + 1e-12;
        let k = g / (2.0 * std::f64::consts::PI * r2) * (1.0 - (-r2 / (rc * rc)).exp());
        let t = [
            e[1] * r[2] - e[2] * r[1],
            e[2] * r[0] - e[0] * r[2],
            e[0] * r[1] - e[1] * r[0],
        ];
        for i in 0..3 {
            u[i] += k * t[i];
        }
    }
    u
}

fn write(path: &Path, n: usize) {
    let f = hdf5::File::create(path).expect("create");
    let mut comps: Vec<Array3<f32>> = (0..3).map(|_| Array3::zeros((n, n, n))).collect();
    for iz in 0..n {
        for iy in 0..n {
            for ix in 0..n {
                let q = velocity([ix as f64, iy as f64, iz as f64], n as f64);
                for c in 0..3 {
                    comps[c][[iz, iy, ix]] = q[c] as f32;
                }
            }
        }
    }
    for (c, name) in ["u", "v", "w"].iter().enumerate() {
        f.new_dataset_builder()
            .with_data(&comps[c])
            .create(*name)
            .expect("dataset");
    }
}

fn run(path: &Path, slab: usize) {
    let spec = InputSpec {
        geometry: Geometry::Volume,
        ..InputSpec::default()
    };
    let mut reader = open(path, &spec).expect("open");
    let mut source = ReaderVolume::new(reader.as_mut(), 0).expect("volume");
    let settings = TubeSettings {
        slab_planes: slab,
        viscosity: Some(0.1),
        ..TubeSettings::default()
    };
    let t0 = std::time::Instant::now();
    let out = survey_tubes(&mut source, &settings).expect("survey");
    let total = t0.elapsed().as_secs_f64();
    let s = out.stats;
    println!(
        "points {} tubes {} stations {} total {:.2} s | detection {:.2} s for {} criterion evaluations = {:.2e} points/s on {} threads = {:.2e} points/s per thread | read {:.2} s trace {:.2} s fit {:.2} s | halo {} slabs {}",
        s.points,
        out.tubes.len(),
        out.stations.len(),
        total,
        s.detect_seconds,
        s.criterion_points,
        s.points as f64 / s.detect_seconds,
        rayon::current_num_threads(),
        s.points as f64 / s.detect_seconds / rayon::current_num_threads() as f64,
        s.read_seconds,
        s.trace_seconds,
        s.fit_seconds,
        s.station_halo,
        s.slabs
    );
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    match args.get(1).map(String::as_str) {
        Some("write") => write(Path::new(&args[2]), args[3].parse().expect("N")),
        Some("run") => run(Path::new(&args[2]), args[3].parse().expect("SLAB")),
        _ => eprintln!("usage: bench_tubes write FILE N | bench_tubes run FILE SLAB"),
    }
}
