//! Starting values: centre from the detection, circulation from the line integral of the
//! velocity round the window, core radius from the radius of peak azimuthal velocity, then the
//! parameters that enter linearly (convection, circulation, Burgers strain, background gradient)
//! by one exact linear least-squares solve at that centre and core radius.

// Index loops mirror the matrix formulas of the linear solve and its transformation.
#![allow(clippy::needless_range_loop)]

use serde::{Deserialize, Serialize};

use crate::error::FitError;
use crate::linalg::{cholesky_solve, MAXP};
use crate::loss::Loss;
use crate::model::{GaussianKernel, VortexModel};
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
    mean: [f64; 2],
    centre: [f64; 2],
    peak_ratio: f64,
) -> (f64, f64) {
    let [um, vm] = mean;
    // Radius and azimuthal velocity of every sample in one branch-free (vectorised) pass, the
    // largest radius in a second (four lanes), then the binning.
    // max √(r²) = √(max r²) exactly (√ is monotone and correctly rounded).
    let len = window.len();
    let (xs, ys, us, vs) = (
        &window.x()[..len],
        &window.y()[..len],
        &window.u()[..len],
        &window.v()[..len],
    );
    let mut rs = vec![0.0; len];
    let mut uts = vec![0.0; len];
    for i in 0..len {
        let (dx, dy) = (xs[i] - centre[0], ys[i] - centre[1]);
        let r = (dx * dx + dy * dy).sqrt();
        rs[i] = r;
        uts[i] = (-(us[i] - um) * dy + (vs[i] - vm) * dx) / r;
    }
    let mut lanes = [0.0f64; 4];
    for chunk in rs.chunks(4) {
        for (m, &r) in lanes.iter_mut().zip(chunk) {
            *m = if r > *m { r } else { *m };
        }
    }
    let rmax = lanes
        .iter()
        .fold(0.0, |m: f64, &r| m.max(r))
        .max(f64::MIN_POSITIVE);
    // Two sets of bins for even and odd samples: neighbouring samples usually fall in the same
    // bin, and a single set would chain every addition on the previous one through memory.
    let mut sum = [[0.0; BINS]; 2];
    let mut cnt = [[0usize; BINS]; 2];
    let (mut line, mut line_n) = (0.0, 0usize);
    for (i, (&r, &ut)) in rs.iter().zip(&uts).enumerate() {
        if r <= 0.0 {
            continue;
        }
        // Line integral ∮ u·dl ≈ 2π r ⟨u_θ⟩ on the outer annulus (r > 0.75 r_max).
        if r > 0.75 * rmax {
            line += 2.0 * std::f64::consts::PI * r * ut;
            line_n += 1;
        }
        let b = ((r / rmax) * BINS as f64) as usize;
        let b = b.min(BINS - 1);
        sum[i & 1][b] += ut;
        cnt[i & 1][b] += 1;
    }
    let sum: [f64; BINS] = std::array::from_fn(|b| sum[0][b] + sum[1][b]);
    let cnt: [usize; BINS] = std::array::from_fn(|b| cnt[0][b] + cnt[1][b]);
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
///
/// Returns the normal equations at the updated `p` when they follow exactly from those at the
/// old one (see [`normal_after_linear_step`]), so that the solver need not evaluate there again.
pub(crate) fn solve_linear<M: VortexModel>(
    problem: &FitProblem<M>,
    p: &mut Params,
    linear: &[bool; MAXP],
) -> Option<Normal> {
    let n = problem.layout.n();
    let mut ne = Normal::zero();
    problem.evaluate(p, &mut ne);
    let mut idx = [0usize; MAXP];
    let mut nl = 0;
    for k in 0..n {
        if linear[k] {
            idx[nl] = k;
            nl += 1;
        }
    }
    let idx = &idx[..nl];
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
    if !cholesky_solve(&mut m, idx.len(), &mut b) {
        return None;
    }
    let old = *p;
    let mut delta = [0.0; MAXP];
    for (i, &ki) in idx.iter().enumerate() {
        p.0[ki] += b[i];
        delta[ki] = p.0[ki] - old.0[ki];
    }
    normal_after_linear_step(problem, &ne, &old, p, &delta)
}

/// Normal equations at `new = old + delta`, where `delta` changes only linearly entering
/// parameters, computed from those at `old` without a pass over the data.
///
/// For the Gaussian-core models (Lamb–Oseen, Burgers with free γ) with the plain loss the
/// residual is linear in the linear parameters, `r' = r + Jδ`, and every nonlinear column of the
/// Jacobian is the circulation times a column that depends only on the nonlinear parameters,
/// plus multiples of the convection columns (from the inflow and the background gradient at the
/// centre): `J'_x0 = ρ (J_x0 − α_x J_uc − β_x J_vc) + α'_x J_uc + β'_x J_vc` with `ρ = Γ'/Γ`, the
/// same for y0, and `J'_rc = ρ J_rc`. So `J' = J T` for a known `n × n` matrix `T`, and
/// `J'ᵀJ' = Tᵀ(JᵀJ)T`, `J'ᵀr' = Tᵀ(Jᵀr + JᵀJ δ)`, `½|r'|² = ½|r|² + (Jᵀr)ᵀδ + ½ δᵀ(JᵀJ)δ`
/// hold exactly (in rounding, to a few ulps of the terms). `None` where the structure does not
/// hold (other models, an imposed Burgers balance, whose rc column has a part that is not
/// proportional to Γ, robust losses, Γ = 0).
fn normal_after_linear_step<M: VortexModel>(
    problem: &FitProblem<M>,
    ne: &Normal,
    old: &Params,
    new: &Params,
    delta: &[f64; MAXP],
) -> Option<Normal> {
    let burgers = match problem.model.gaussian_kernel()? {
        GaussianKernel::LambOseen => false,
        GaussianKernel::BurgersFree => true,
        _ => return None,
    };
    if !matches!(problem.loss, Loss::Linear) {
        return None;
    }
    let layout = problem.layout;
    let n = layout.n();
    let (g_old, g_new) = (old.0[IM], new.0[IM]);
    let rho = g_new / g_old;
    if g_old == 0.0 || !rho.is_finite() {
        return None;
    }
    // Coefficients of the convection columns in the centre columns: α_x, β_x, α_y, β_y.
    let coeffs = |p: &Params| {
        let m = if burgers { -0.5 * p.0[IM + 2] } else { 0.0 };
        let (e1, e2, om) = if layout.background {
            let b = layout.bg();
            (p.0[b], p.0[b + 1], p.0[b + 2])
        } else {
            (0.0, 0.0, 0.0)
        };
        [-m - e1, -(e2 + 0.5 * om), -(e2 - 0.5 * om), -m + e1]
    };
    let (c0, c1) = (coeffs(old), coeffs(new));
    let mut t = [[0.0; MAXP]; MAXP];
    for k in 0..n {
        t[k][k] = 1.0;
    }
    // Columns: x0 = 0, y0 = 1, rc = IM + 1.
    t[0][0] = rho;
    t[2][0] = c1[0] - rho * c0[0];
    t[3][0] = c1[1] - rho * c0[1];
    t[1][1] = rho;
    t[2][1] = c1[2] - rho * c0[2];
    t[3][1] = c1[3] - rho * c0[3];
    t[IM + 1][IM + 1] = rho;
    // w = g + Aδ (= J'ᵀ... before T), cost' = cost + gᵀδ + ½δᵀAδ.
    let mut w = [0.0; MAXP];
    let mut dquad = 0.0;
    let mut glin = 0.0;
    for i in 0..n {
        let mut ad = 0.0;
        for j in 0..n {
            ad += ne.a[i][j] * delta[j];
        }
        w[i] = ne.g[i] + ad;
        dquad += delta[i] * ad;
        glin += ne.g[i] * delta[i];
    }
    let cost = ne.cost + glin + 0.5 * dquad;
    // AT, then Tᵀ(AT).
    let mut at = [[0.0; MAXP]; MAXP];
    for i in 0..n {
        for j in 0..n {
            let mut s = 0.0;
            for k in 0..n {
                s += ne.a[i][k] * t[k][j];
            }
            at[i][j] = s;
        }
    }
    let mut out = Normal::zero();
    for i in 0..n {
        let mut gi = 0.0;
        for k in 0..n {
            gi += t[k][i] * w[k];
        }
        out.g[i] = gi;
        for j in i..n {
            let mut s = 0.0;
            for k in 0..n {
                s += t[k][i] * at[k][j];
            }
            out.a[i][j] = s;
            out.a[j][i] = s;
        }
    }
    // Rounding can leave a cost a few ulps below zero for an exact fit.
    out.cost = cost.max(0.0);
    out.rss = 2.0 * out.cost;
    out.wrss = out.rss;
    (out.cost.is_finite() && out.g[..n].iter().all(|x| x.is_finite())).then_some(out)
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
