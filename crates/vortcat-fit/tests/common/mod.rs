//! Shared synthetic-data helpers for the integration tests.
#![allow(dead_code)]

use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Normal};
use vortcat_fit::{PivAveraging, VortexModel, Window};

/// A vortex and its surroundings.
#[derive(Debug, Clone)]
pub struct Truth {
    pub centre: [f64; 2],
    pub convection: [f64; 2],
    pub params: Vec<f64>,
}

/// Samples of `model` with `truth` on a square grid of spacing `h` covering `[-half, half]²`
/// round the origin; `noise` is the standard deviation of independent Gaussian noise added to
/// each component; `averaging` (W, points) makes each vector the mean over a W × W square.
pub fn grid_samples<M: VortexModel>(
    model: &M,
    truth: &Truth,
    h: f64,
    half: f64,
    noise: f64,
    averaging: Option<(f64, usize)>,
    rng: &mut StdRng,
) -> (Vec<f64>, Vec<f64>, Vec<f64>, Vec<f64>) {
    let n = (half / h).round() as i64;
    let normal = Normal::new(0.0, noise.max(1e-300)).unwrap();
    let quad = averaging.map(|(w, m)| {
        PivAveraging {
            window_size: w,
            points_per_axis: m,
        }
        .offsets(1.0)
    });
    let (mut xs, mut ys, mut us, mut vs) = (vec![], vec![], vec![], vec![]);
    for j in -n..=n {
        for i in -n..=n {
            let (x, y) = (i as f64 * h, j as f64 * h);
            let (dx, dy) = (x - truth.centre[0], y - truth.centre[1]);
            let vel = match &quad {
                None => model.velocity(dx, dy, &truth.params),
                Some(q) => q.iter().fold([0.0, 0.0], |a, &(ox, oy, w)| {
                    let v = model.velocity(dx + ox, dy + oy, &truth.params);
                    [a[0] + w * v[0], a[1] + w * v[1]]
                }),
            };
            let (eu, ev) = if noise > 0.0 {
                (normal.sample(rng), normal.sample(rng))
            } else {
                (0.0, 0.0)
            };
            xs.push(x);
            ys.push(y);
            us.push(vel[0] + truth.convection[0] + eu);
            vs.push(vel[1] + truth.convection[1] + ev);
        }
    }
    (xs, ys, us, vs)
}

/// Window of radius `radius` round `centre` from grid samples.
pub fn window_of(
    samples: &(Vec<f64>, Vec<f64>, Vec<f64>, Vec<f64>),
    centre: [f64; 2],
    radius: f64,
    h: f64,
) -> Window {
    Window::from_samples(
        centre,
        radius,
        [h, h],
        &samples.0,
        &samples.1,
        &samples.2,
        &samples.3,
    )
    .unwrap()
}

/// Peak azimuthal velocity of a Gaussian-core vortex: 0.63817 Γ/(2π rc) (Lamb 1932 §334a).
pub fn gaussian_peak(gamma: f64, rc: f64) -> f64 {
    vortcat_fit::GAUSSIAN_PEAK_VELOCITY_FACTOR * gamma.abs() / (2.0 * std::f64::consts::PI * rc)
}

pub fn rng(seed: u64) -> StdRng {
    StdRng::seed_from_u64(seed)
}

/// Random vortex for Monte-Carlo tests: |Γ| ∈ [0.5, 2] with random sign, rc ∈ [4h, 6h],
/// centre within ±h of the origin (a detection error of up to one spacing), convection up to
/// half the peak velocity.
pub fn random_truth(rng: &mut StdRng, h: f64, extra: &[f64]) -> Truth {
    let gamma = rng.gen_range(0.5..2.0) * if rng.gen_bool(0.5) { 1.0 } else { -1.0 };
    let rc = rng.gen_range(4.0..6.0) * h;
    let vp = gaussian_peak(gamma, rc);
    let mut params = vec![gamma, rc];
    params.extend_from_slice(extra);
    Truth {
        centre: [rng.gen_range(-h..h), rng.gen_range(-h..h)],
        convection: [rng.gen_range(-0.5..0.5) * vp, rng.gen_range(-0.5..0.5) * vp],
        params,
    }
}

pub fn median(v: &mut [f64]) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}
