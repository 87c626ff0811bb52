//! Starting values: centre from the detection, circulation from the line integral of the
//! velocity round the window, core radius from the radius of peak azimuthal velocity, then the
//! parameters that enter linearly (convection, circulation, Burgers strain, background gradient)
//! by one exact linear least-squares solve at that centre and core radius.

use serde::{Deserialize, Serialize};

use crate::error::FitError;
use crate::linalg::{cholesky_solve, MAXP};
use crate::model::VortexModel;
use crate::solver::{FitProblem, Normal, Params, IM};
use crate::window::Window;

/// What is known about the circulation before the fit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case", tag = "kind", content = "value")]
pub enum CirculationGuess {
    /// Estimate magnitude and sign from the line integral round the window.
    #[default]
    FromData,
    /// Sign known from the detection (+1 counter-clockwise, −1 clockwise); magnitude from the
    /// line integral.
    Sense(f64),
    /// A value (length²/time).
    Value(f64),
}

/// Initial guess from the detection stage.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct InitialGuess {
    /// Detected centre `[x, y]` (length units); also the reference for the centre-shift flag.
    pub centre: [f64; 2],
    /// Circulation information.
    pub circulation: CirculationGuess,
    /// Core radius (length units, > 0) if known; otherwise from the peak azimuthal velocity.
    pub core_radius: Option<f64>,
}

impl InitialGuess {
    /// Guess with only the centre known.
    pub fn at(centre: [f64; 2]) -> Self {
        InitialGuess {
            centre,
            circulation: CirculationGuess::FromData,
            core_radius: None,
        }
    }

    pub(crate) fn validate(&self) -> Result<(), FitError> {
        for (name, value) in [("centre x", self.centre[0]), ("centre y", self.centre[1])] {
            if !value.is_finite() {
                return Err(FitError::InvalidGuess {
                    name,
                    value,
                    reason: "must be finite",
                });
            }
        }
        match self.circulation {
            CirculationGuess::Value(g) if !g.is_finite() => {
                return Err(FitError::InvalidGuess {
                    name: "circulation",
                    value: g,
                    reason: "must be finite",
                })
            }
            CirculationGuess::Sense(s) if !(s.is_finite() && s != 0.0) => {
                return Err(FitError::InvalidGuess {
                    name: "sense",
                    value: s,
                    reason: "must be +1 or −1",
                })
            }
            _ => {}
        }
        if let Some(rc) = self.core_radius {
            if !(rc.is_finite() && rc > 0.0) {
                return Err(FitError::InvalidGuess {
                    name: "core_radius",
                    value: rc,
                    reason: "must be finite and > 0",
                });
            }
        }
        Ok(())
    }
}

const BINS: usize = 24;

/// Circulation and core radius estimated from the data round `centre` (physical units), given
/// the model's ratio of peak radius to rc.
pub(crate) fn estimate_circulation_and_radius(
    window: &Window,
    centre: [f64; 2],
    peak_ratio: f64,
) -> (f64, f64) {
    let n = window.len().max(1) as f64;
    let (um, vm) = (
        window.u().iter().sum::<f64>() / n,
        window.v().iter().sum::<f64>() / n,
    );
    let rmax = window
        .x()
        .iter()
        .zip(window.y())
        .map(|(x, y)| ((x - centre[0]).powi(2) + (y - centre[1]).powi(2)).sqrt())
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE);
    let mut sum = [0.0; BINS];
    let mut cnt = [0usize; BINS];
    let (mut line, mut line_n) = (0.0, 0usize);
    for i in 0..window.len() {
        let (dx, dy) = (window.x()[i] - centre[0], window.y()[i] - centre[1]);
        let r = (dx * dx + dy * dy).sqrt();
        if r <= 0.0 {
            continue;
        }
        let ut = (-(window.u()[i] - um) * dy + (window.v()[i] - vm) * dx) / r;
        // Line integral ∮ u·dl ≈ 2π r ⟨u_θ⟩ on the outer annulus (r > 0.75 r_max).
        if r > 0.75 * rmax {
            line += 2.0 * std::f64::consts::PI * r * ut;
            line_n += 1;
        }
        let b = ((r / rmax) * BINS as f64) as usize;
        let b = b.min(BINS - 1);
        sum[b] += ut;
        cnt[b] += 1;
    }
    let gamma = if line_n > 0 {
        line / line_n as f64
    } else {
        0.0
    };
    let sign = if gamma < 0.0 { -1.0 } else { 1.0 };
    let (mut best, mut best_r) = (f64::MIN, 0.5 * rmax);
    for b in 0..BINS {
        if cnt[b] == 0 {
            continue;
        }
        let m = sign * sum[b] / cnt[b] as f64;
        if m > best {
            best = m;
            best_r = (b as f64 + 0.5) / BINS as f64 * rmax;
        }
    }
    (gamma, best_r / peak_ratio)
}

/// Solve exactly for the parameters flagged in `linear` (which enter the model linearly) with
/// the others held at `p`, by one Gauss–Newton step on that subset.
pub(crate) fn solve_linear<M: VortexModel>(
    problem: &FitProblem<M>,
    p: &mut Params,
    linear: &[bool; MAXP],
) {
    let n = problem.layout.n();
    let mut ne = Normal::zero();
    problem.evaluate(p, &mut ne);
    let idx: Vec<usize> = (0..n).filter(|&k| linear[k]).collect();
    let mut m = [[0.0; MAXP]; MAXP];
    let mut b = [0.0; MAXP];
    for (i, &ki) in idx.iter().enumerate() {
        b[i] = -ne.g[ki];
        for (j, &kj) in idx.iter().enumerate() {
            m[i][j] = ne.a[ki][kj];
        }
        // Tiny ridge so that a column that vanishes (e.g. no data) does not stop the solve.
        m[i][i] += 1e-12 * ne.a[ki][ki].max(1e-300);
    }
    if cholesky_solve(&mut m, idx.len(), &mut b) {
        for (i, &ki) in idx.iter().enumerate() {
            p.0[ki] += b[i];
        }
    }
}

/// Which entries of the full parameter vector enter the model linearly.
pub(crate) fn linear_mask<M: VortexModel>(model: &M, background: bool) -> [bool; MAXP] {
    let mut lin = [false; MAXP];
    lin[2] = true;
    lin[3] = true;
    for k in 0..model.n_params() {
        lin[IM + k] = model.is_linear(k);
    }
    if background {
        let b = IM + model.n_params();
        lin[b] = true;
        lin[b + 1] = true;
        lin[b + 2] = true;
    }
    lin
}
