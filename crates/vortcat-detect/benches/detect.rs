//! Throughput of the fused gradient + criterion paths:
//! gradient + λci on a 2048 × 2048 plane, gradient + λ2 on a 256³ volume, on one rayon thread
//! (figures per core) and on the default pool. Run with `cargo bench -p vortcat-detect`.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use ndarray::{Array2, Array3};
use std::hint::black_box;
use vortcat_detect::criterion::lambda2::Lambda2Kernel;
use vortcat_detect::criterion::{lambda2, swirling_strength};
use vortcat_detect::gradient::{map_plane, map_plane_into, map_volume_kernel_into};
use vortcat_detect::{EdgeOrder, GradientScheme};
use vortcat_field::{Axis, Grid, PlaneField, Units, VolumeField};

fn plane(n: usize) -> PlaneField {
    let h = 1.0 / n as f64;
    let grid = Grid::plane(
        Axis::new("x", n, 0.0, h).unwrap(),
        Axis::new("y", n, 0.0, h).unwrap(),
        Units::default(),
    );
    let u = Array2::from_shape_fn((n, n), |(iy, ix)| {
        ((ix as f64 * h) * 7.0).sin() * ((iy as f64 * h) * 5.0).cos()
    });
    let v = Array2::from_shape_fn((n, n), |(iy, ix)| {
        -((ix as f64 * h) * 3.0).cos() * ((iy as f64 * h) * 9.0).sin()
    });
    PlaneField::new(grid, u, v, None, None).unwrap()
}

fn volume(n: usize) -> VolumeField {
    let h = 1.0 / n as f64;
    let grid = Grid::volume(
        Axis::new("x", n, 0.0, h).unwrap(),
        Axis::new("y", n, 0.0, h).unwrap(),
        Axis::new("z", n, 0.0, h).unwrap(),
        Units::default(),
    );
    // Taylor–Green-like cellular flow.
    let f = |a: f64, b: f64, c: f64| (a.sin() * b.cos() * c.cos()) as f32;
    let s = 2.0 * std::f64::consts::PI * h;
    let u = Array3::from_shape_fn((n, n, n), |(k, j, i)| {
        f(i as f64 * s, j as f64 * s, k as f64 * s)
    });
    let v = Array3::from_shape_fn((n, n, n), |(k, j, i)| {
        -f(j as f64 * s, i as f64 * s, k as f64 * s)
    });
    let w = Array3::from_shape_fn((n, n, n), |(k, j, i)| {
        0.1 * f(k as f64 * s, i as f64 * s, j as f64 * s)
    });
    VolumeField::new(grid, u, v, w, None).unwrap()
}

fn bench(c: &mut Criterion) {
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap();
    let all = rayon::ThreadPoolBuilder::new().build().unwrap();
    let pools = [("1-thread", &one), ("all-threads", &all)];

    let p = plane(2048);
    let mut g = c.benchmark_group("plane-2048-gradient+lambda_ci");
    g.throughput(Throughput::Elements(2048 * 2048));
    g.sample_size(10);
    for scheme in [GradientScheme::Central2, GradientScheme::LeastSquares] {
        for (name, pool) in pools {
            g.bench_function(BenchmarkId::new(scheme.name(), name), |b| {
                b.iter(|| {
                    pool.install(|| {
                        black_box(
                            map_plane(
                                &p,
                                scheme,
                                EdgeOrder::Second,
                                swirling_strength::plane_value,
                            )
                            .unwrap(),
                        )
                    })
                })
            });
        }
    }
    // Into a reused output (the binary's per-snapshot loop): no allocation, no page faults.
    let mut out2 = Array2::zeros((2048, 2048));
    for scheme in [GradientScheme::Central2, GradientScheme::LeastSquares] {
        g.bench_function(BenchmarkId::new(scheme.name(), "1-thread-into"), |b| {
            b.iter(|| {
                one.install(|| {
                    map_plane_into(
                        &p,
                        scheme,
                        EdgeOrder::Second,
                        swirling_strength::plane_value,
                        &mut out2,
                    )
                    .unwrap()
                });
                black_box(out2[[1, 1]])
            })
        });
    }
    g.finish();
    drop(p);

    let vol = volume(256);
    let mut g = c.benchmark_group("volume-256-gradient+lambda2");
    g.throughput(Throughput::Elements(256 * 256 * 256));
    g.sample_size(10);
    for scheme in [GradientScheme::Central2, GradientScheme::LeastSquares] {
        for (name, pool) in pools {
            g.bench_function(BenchmarkId::new(scheme.name(), name), |b| {
                b.iter(|| {
                    pool.install(|| {
                        black_box(lambda2::volume(&vol, scheme, EdgeOrder::Second).unwrap())
                    })
                })
            });
        }
    }
    let mut out3 = Array3::zeros((256, 256, 256));
    for scheme in [GradientScheme::Central2, GradientScheme::LeastSquares] {
        g.bench_function(BenchmarkId::new(scheme.name(), "1-thread-into"), |b| {
            b.iter(|| {
                one.install(|| {
                    map_volume_kernel_into(
                        &vol,
                        scheme,
                        EdgeOrder::Second,
                        &Lambda2Kernel,
                        &mut out3,
                    )
                    .unwrap()
                });
                black_box(out3[[1, 1, 1]])
            })
        });
    }
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
