//! Peak memory and single-pass timing of the fused paths, for docs/performance.md.
//!
//! `cargo run --release -p vortcat-detect --example peak_memory -- plane|volume [threads]`
//!
//! Reads VmHWM/VmRSS from /proc/self/status (Linux) after building the input and after the
//! computation, so the difference is what the computation added on top of the input.

use std::time::Instant;

use ndarray::{Array2, Array3};
use vortcat_detect::criterion::lambda2::Lambda2Kernel;
use vortcat_detect::criterion::{lambda2, swirling_strength};
use vortcat_detect::gradient::{map_plane, map_plane_into, map_volume_kernel_into};
use vortcat_detect::{EdgeOrder, GradientScheme};
use vortcat_field::{Axis, Grid, PlaneField, Units, VolumeField};

fn status_kib(key: &str) -> u64 {
    let s = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    s.lines()
        .find(|l| l.starts_with(key))
        .and_then(|l| l.split_whitespace().nth(1))
        .and_then(|v| v.parse().ok())
        .unwrap_or(0)
}

/// CPU time (user + system) of the whole process in seconds, from /proc/self/stat (10 ms
/// resolution): unlike wall time it does not count time spent waiting for a shared core.
fn cpu_seconds() -> f64 {
    let s = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
    let after = s.rsplit(')').next().unwrap_or("");
    let f: Vec<&str> = after.split_whitespace().collect();
    let ticks: f64 = [11, 12]
        .iter()
        .filter_map(|&i| f.get(i)?.parse::<f64>().ok())
        .sum();
    ticks / 100.0
}

const REPS: usize = 10;

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let what = args.get(1).map(String::as_str).unwrap_or("plane");
    let threads: usize = args.get(2).and_then(|t| t.parse().ok()).unwrap_or(1);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap();
    let base = status_kib("VmHWM:");
    match what {
        "plane" => {
            let n = 2048;
            let h = 1.0 / n as f64;
            let grid = Grid::plane(
                Axis::new("x", n, 0.0, h).unwrap(),
                Axis::new("y", n, 0.0, h).unwrap(),
                Units::default(),
            );
            let u = Array2::from_shape_fn((n, n), |(j, i)| {
                ((i as f64 * h) * 7.0).sin() * ((j as f64 * h) * 5.0).cos()
            });
            let v = Array2::from_shape_fn((n, n), |(j, i)| {
                -((i as f64 * h) * 3.0).cos() * ((j as f64 * h) * 9.0).sin()
            });
            let field = PlaneField::new(grid, u, v, None, None).unwrap();
            let input = status_kib("VmHWM:");
            for scheme in [GradientScheme::Central2, GradientScheme::LeastSquares] {
                let (t, c) = (Instant::now(), cpu_seconds());
                let mut sum = 0.0;
                for _ in 0..REPS {
                    let out = pool.install(|| {
                        map_plane(
                            &field,
                            scheme,
                            EdgeOrder::Second,
                            swirling_strength::plane_value,
                        )
                        .unwrap()
                    });
                    sum += out[[n / 2, n / 2]];
                }
                let (dt, dc) = (t.elapsed().as_secs_f64(), cpu_seconds() - c);
                let pts = (REPS * n * n) as f64;
                println!(
                    "plane 2048^2 gradient+lambda_ci {scheme} threads {threads}: {:.1} Mpoints/s wall, \
                     {:.1} Mpoints/s per CPU-second (checksum {sum:.3e})",
                    pts / dt / 1e6,
                    pts / dc / 1e6
                );
            }
            let mut reuse = Array2::zeros((n, n));
            for scheme in [GradientScheme::Central2, GradientScheme::LeastSquares] {
                let (t, c) = (Instant::now(), cpu_seconds());
                for _ in 0..REPS {
                    pool.install(|| {
                        map_plane_into(
                            &field,
                            scheme,
                            EdgeOrder::Second,
                            swirling_strength::plane_value,
                            &mut reuse,
                        )
                        .unwrap()
                    });
                }
                let (dt, dc) = (t.elapsed().as_secs_f64(), cpu_seconds() - c);
                let pts = (REPS * n * n) as f64;
                println!(
                    "plane 2048^2 gradient+lambda_ci {scheme} into reused output, threads {threads}: \
                     {:.1} Mpoints/s wall, {:.1} Mpoints/s per CPU-second",
                    pts / dt / 1e6,
                    pts / dc / 1e6
                );
            }
            let peak = status_kib("VmHWM:");
            println!(
                "plane: baseline {base} KiB, after input {input} KiB, peak {peak} KiB; added by computation {} KiB (one f64 field = {} KiB)",
                peak.saturating_sub(input),
                n * n * 8 / 1024
            );
        }
        _ => {
            let n = 256;
            let h = 1.0 / n as f64;
            let grid = Grid::volume(
                Axis::new("x", n, 0.0, h).unwrap(),
                Axis::new("y", n, 0.0, h).unwrap(),
                Axis::new("z", n, 0.0, h).unwrap(),
                Units::default(),
            );
            let s = 2.0 * std::f64::consts::PI * h;
            let f = |a: f64, b: f64, c: f64| (a.sin() * b.cos() * c.cos()) as f32;
            let u = Array3::from_shape_fn((n, n, n), |(k, j, i)| {
                f(i as f64 * s, j as f64 * s, k as f64 * s)
            });
            let v = Array3::from_shape_fn((n, n, n), |(k, j, i)| {
                -f(j as f64 * s, i as f64 * s, k as f64 * s)
            });
            let w = Array3::from_shape_fn((n, n, n), |(k, j, i)| {
                0.1 * f(k as f64 * s, i as f64 * s, j as f64 * s)
            });
            let field = VolumeField::new(grid, u, v, w, None).unwrap();
            let input = status_kib("VmHWM:");
            for scheme in [GradientScheme::Central2, GradientScheme::LeastSquares] {
                let (t, c) = (Instant::now(), cpu_seconds());
                let mut sum = 0.0;
                for _ in 0..REPS / 2 {
                    let out = pool
                        .install(|| lambda2::volume(&field, scheme, EdgeOrder::Second).unwrap());
                    sum += out[[n / 2, n / 2, n / 2]] as f64;
                }
                let (dt, dc) = (t.elapsed().as_secs_f64(), cpu_seconds() - c);
                let pts = (REPS / 2 * n * n * n) as f64;
                println!(
                    "volume 256^3 gradient+lambda2 {scheme} threads {threads}: {:.1} Mpoints/s wall, \
                     {:.1} Mpoints/s per CPU-second (checksum {sum:.3e})",
                    pts / dt / 1e6,
                    pts / dc / 1e6
                );
            }
            let mut reuse = Array3::zeros((n, n, n));
            for scheme in [GradientScheme::Central2, GradientScheme::LeastSquares] {
                let (t, c) = (Instant::now(), cpu_seconds());
                for _ in 0..REPS / 2 {
                    pool.install(|| {
                        map_volume_kernel_into(
                            &field,
                            scheme,
                            EdgeOrder::Second,
                            &Lambda2Kernel,
                            &mut reuse,
                        )
                        .unwrap()
                    });
                }
                let (dt, dc) = (t.elapsed().as_secs_f64(), cpu_seconds() - c);
                let pts = (REPS / 2 * n * n * n) as f64;
                println!(
                    "volume 256^3 gradient+lambda2 {scheme} into reused output, threads {threads}: \
                     {:.1} Mpoints/s wall, {:.1} Mpoints/s per CPU-second",
                    pts / dt / 1e6,
                    pts / dc / 1e6
                );
            }
            let peak = status_kib("VmHWM:");
            println!(
                "volume: baseline {base} KiB, after input {input} KiB, peak {peak} KiB; added by computation {} KiB (one f32 field = {} KiB)",
                peak.saturating_sub(input),
                n * n * n * 4 / 1024
            );
        }
    }
}
