//! Criterion benchmarks: one Lamb–Oseen and one Burgers fit on a 700-vector window.
//!
//! Window: radius 15 spacings (709 vectors), Γ = 1, rc = 5 spacings, centre 0.3 spacings off
//! the detection, 5 % noise (Gaussian, σ = 5 % of the peak azimuthal velocity). Data-driven
//! start ([`vortcat_fit::fit`]) with default settings. Targets (issue): 50 µs and 80 µs per fit
//! on one core. Figures and the machine they were measured on: `docs/performance.md`, "Fitting".

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use rand::rngs::StdRng;
use rand::SeedableRng;
use rand_distr::{Distribution, Normal};
use vortcat_fit::*;

fn window<M: VortexModel>(model: &M, p: &[f64]) -> Window {
    let mut rng = StdRng::seed_from_u64(42);
    let peak = GAUSSIAN_PEAK_VELOCITY_FACTOR * p[0] / (2.0 * std::f64::consts::PI * p[1]);
    let noise = Normal::new(0.0, 0.05 * peak).unwrap();
    let (mut x, mut y, mut u, mut v) = (vec![], vec![], vec![], vec![]);
    for j in -15..=15 {
        for i in -15..=15 {
            let (xi, yj) = (i as f64, j as f64);
            let q = model.velocity(xi - 0.3, yj + 0.2, p);
            x.push(xi);
            y.push(yj);
            u.push(q[0] + 0.05 + noise.sample(&mut rng));
            v.push(q[1] + noise.sample(&mut rng));
        }
    }
    Window::from_samples([0.0, 0.0], 15.0, [1.0, 1.0], &x, &y, &u, &v).unwrap()
}

fn bench(c: &mut Criterion) {
    let settings = FitSettings::default();
    let guess = InitialGuess::at([0.0, 0.0]);
    let wl = window(&LambOseen, &[1.0, 5.0]);
    assert_eq!(wl.len(), 709);
    let wb = window(&Burgers::free(), &[1.0, 5.0, 4.0 * 0.01 / 25.0]);
    c.bench_function("fit_lamb_oseen_709_vectors", |b| {
        b.iter(|| fit(&LambOseen, black_box(&wl), &guess, &settings).unwrap())
    });
    c.bench_function("fit_burgers_709_vectors", |b| {
        b.iter(|| fit(&Burgers::free(), black_box(&wb), &guess, &settings).unwrap())
    });
    let r = fit(&LambOseen, &wl, &guess, &settings).unwrap();
    let rb = fit(&Burgers::free(), &wb, &guess, &settings).unwrap();
    eprintln!(
        "iterations/evaluations: Lamb–Oseen {}/{}, Burgers {}/{}",
        r.iterations, r.evaluations, rb.iterations, rb.evaluations
    );
    // The model alone: one analytic velocity + Jacobian evaluation at each of the 709 points.
    c.bench_function("lamb_oseen_velocity_jacobian_709_points", |b| {
        let (mut du, mut dv) = ([0.0; 4], [0.0; 4]);
        b.iter(|| {
            let mut s = 0.0;
            for (x, y) in wl.x().iter().zip(wl.y()) {
                let q = LambOseen.velocity_jacobian(
                    *x - 0.3,
                    *y,
                    black_box(&[1.0, 5.0]),
                    &mut du,
                    &mut dv,
                );
                s += q[0] + du[3];
            }
            s
        })
    });
    let piv = FitSettings::builder()
        .piv_averaging(Some(PivAveraging::new(2.0)))
        .build()
        .unwrap();
    c.bench_function("fit_lamb_oseen_709_vectors_piv_averaged_4x4", |b| {
        b.iter(|| fit(&LambOseen, black_box(&wl), &guess, &piv).unwrap())
    });
}

criterion_group!(benches, bench);
criterion_main!(benches);
