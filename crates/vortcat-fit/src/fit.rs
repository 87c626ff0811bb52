//! Fit entry points: set up the problem, choose the start, run the solver, assemble the result.

// Index loops over the parameter vector mirror the covariance formulas.
#![allow(clippy::needless_range_loop)]

use std::sync::Arc;

use argmin::core::{Executor, State, TerminationReason};

use crate::error::FitError;
use crate::flags::{self, FlagInputs};
use crate::initial::{
    estimate_circulation_and_radius, linear_mask, solve_linear, CirculationGuess, InitialGuess,
};
use crate::linalg::MAXP;
use crate::model::{Dimension, Model, ViscousBalance, VortexModel};
use crate::result::{Derived, FitResult, FitStatus, Parameters};
use crate::settings::FitSettings;
use crate::solver::{FitProblem, Layout, LevenbergMarquardt, Params, Scales, IM};
use crate::uncertainty::{condition_number, covariance, propagate};
use crate::window::Window;

/// Bounds of the core radius in window radii: below 1e-3 the core is far below any PIV
/// resolution; above 3 the window only sees the solid-body part and rc is undetermined.
const RC_BOUNDS: (f64, f64) = (1e-3, 3.0);

struct Setup<M> {
    problem: FitProblem<M>,
    /// Mean velocity of the window and the total sum of squares about it.
    mean: [f64; 2],
    tss: f64,
    scales: Scales,
    lo: [f64; MAXP],
    hi: [f64; MAXP],
    scale: [f64; MAXP],
    names: Vec<String>,
}

/// A window's samples in solver units (positions relative to the window centre over its
/// radius, velocities over the rms velocity fluctuation) with the statistics behind the
/// velocity scale. A function of the window alone: computed once for every model fitted to
/// the same window ([`crate::fit_and_select`]), shared by reference counting.
pub(crate) struct ScaledWindow {
    x: Arc<[f64]>,
    y: Arc<[f64]>,
    u: Arc<[f64]>,
    v: Arc<[f64]>,
    /// Mean velocity of the window and the total sum of squares about it.
    mean: [f64; 2],
    tss: f64,
    /// The velocity scale.
    velocity: f64,
}

impl ScaledWindow {
    pub(crate) fn of(window: &Window) -> Self {
        let len = window.radius();
        let nf = window.len() as f64;
        let (mean, fluct) = window_statistics(window);
        let mut vel = (fluct / nf).sqrt();
        if !(vel > 0.0 && vel.is_finite()) {
            vel = window
                .u()
                .iter()
                .chain(window.v())
                .fold(0.0, |m: f64, x| m.max(x.abs()));
        }
        if !(vel > 0.0 && vel.is_finite()) {
            vel = 1.0;
        }
        let origin = window.centre();
        // Multiplications by the reciprocal scales (vectorised; a division per value would cost
        // more than a solver evaluation of the data).
        let (inv_len, inv_vel) = (1.0 / len, 1.0 / vel);
        Self {
            x: window
                .x()
                .iter()
                .map(|x| (x - origin[0]) * inv_len)
                .collect(),
            y: window
                .y()
                .iter()
                .map(|y| (y - origin[1]) * inv_len)
                .collect(),
            u: window.u().iter().map(|u| u * inv_vel).collect(),
            v: window.v().iter().map(|v| v * inv_vel).collect(),
            mean,
            tss: fluct,
            velocity: vel,
        }
    }
}

fn setup<M: VortexModel>(
    model: &M,
    window: &Window,
    scaled: &ScaledWindow,
    settings: &FitSettings,
) -> Result<Setup<M>, FitError> {
    settings.validate()?;
    let layout = Layout {
        n_model: model.n_params(),
        background: settings.background_gradient,
    };
    let n = layout.n();
    let need = settings.min_vectors.max(n + 1);
    if window.len() < need {
        return Err(FitError::TooFewSamples {
            have: window.len(),
            need,
            parameters: n,
        });
    }
    debug_assert_eq!(
        scaled.x.len(),
        window.len(),
        "the scaled samples of another window"
    );
    let len = window.radius();
    let vel = scaled.velocity;
    let scales = Scales {
        origin: window.centre(),
        length: len,
        velocity: vel,
    };
    let problem = FitProblem {
        model: model.rescaled(len, vel),
        x: scaled.x.clone(),
        y: scaled.y.clone(),
        u: scaled.u.clone(),
        v: scaled.v.clone(),
        quad: settings
            .piv_averaging
            .map(|a| a.offsets(len))
            .unwrap_or_default(),
        loss: settings.loss.rescaled(vel),
        layout,
    };
    let mut lo = [f64::NEG_INFINITY; MAXP];
    let mut hi = [f64::INFINITY; MAXP];
    let mut scale = [1.0; MAXP];
    (lo[0], hi[0], lo[1], hi[1]) = (-1.0, 1.0, -1.0, 1.0);
    (scale[0], scale[1], scale[2], scale[3]) = (len, len, vel, vel);
    (lo[IM + 1], hi[IM + 1]) = RC_BOUNDS;
    for (k, (l, h)) in model.extra_bounds().iter().enumerate() {
        lo[IM + 2 + k] = *l;
        hi[IM + 2 + k] = *h;
    }
    for (k, d) in model.parameter_dimensions().iter().enumerate() {
        scale[IM + k] = d.scale(len, vel);
    }
    let mut names: Vec<String> = ["x0", "y0", "uc", "vc"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    names.extend(model.parameter_names().iter().map(|s| s.to_string()));
    if layout.background {
        let b = layout.bg();
        for k in 0..3 {
            scale[b + k] = Dimension::Rate.scale(len, vel);
        }
        names.extend(
            ["bg_e1", "bg_e2", "bg_vorticity"]
                .iter()
                .map(|s| s.to_string()),
        );
    }
    Ok(Setup {
        problem,
        mean: scaled.mean,
        tss: scaled.tss,
        scales,
        lo,
        hi,
        scale,
        names,
    })
}

/// Sum with four interleaved partial sums (vectorisable; fixed order, so reproducible).
fn sum4(n: usize, f: impl Fn(usize) -> f64) -> f64 {
    let mut acc = [0.0f64; 4];
    let full = n - n % 4;
    let mut i = 0;
    while i < full {
        for (l, a) in acc.iter_mut().enumerate() {
            *a += f(i + l);
        }
        i += 4;
    }
    for j in full..n {
        acc[j - full] += f(j);
    }
    (acc[0] + acc[1]) + (acc[2] + acc[3])
}

/// Mean velocity `[ū, v̄]` of the window and `Σ (u − ū)² + (v − v̄)²`.
fn window_statistics(window: &Window) -> ([f64; 2], f64) {
    let n = window.len();
    let (u, v) = (&window.u()[..n], &window.v()[..n]);
    let nf = n as f64;
    let (um, vm) = (sum4(n, |i| u[i]) / nf, sum4(n, |i| v[i]) / nf);
    let tss = sum4(n, |i| {
        let (a, b) = (u[i] - um, v[i] - vm);
        a * a + b * b
    });
    ([um, vm], tss)
}

fn to_physical(
    p: &Params,
    s: &Scales,
    scale: &[f64; MAXP],
    layout: Layout,
    offset: bool,
) -> Parameters {
    let o = if offset { s.origin } else { [0.0, 0.0] };
    let nm = layout.n_model;
    Parameters {
        centre: [o[0] + scale[0] * p.0[0], o[1] + scale[1] * p.0[1]],
        convection: [scale[2] * p.0[2], scale[3] * p.0[3]],
        model: (0..nm).map(|k| scale[IM + k] * p.0[IM + k]).collect(),
        background: layout.background.then(|| {
            let b = layout.bg();
            [
                scale[b] * p.0[b],
                scale[b + 1] * p.0[b + 1],
                scale[b + 2] * p.0[b + 2],
            ]
        }),
    }
}

fn to_solver(p: &Parameters, s: &Scales, scale: &[f64; MAXP], layout: Layout) -> Params {
    let mut q = [0.0; MAXP];
    q[0] = (p.centre[0] - s.origin[0]) / scale[0];
    q[1] = (p.centre[1] - s.origin[1]) / scale[1];
    q[2] = p.convection[0] / scale[2];
    q[3] = p.convection[1] / scale[3];
    for k in 0..layout.n_model {
        q[IM + k] = p.model[k] / scale[IM + k];
    }
    if let Some(b) = p.background {
        let i = layout.bg();
        for k in 0..3 {
            q[i + k] = b[k] / scale[i + k];
        }
    }
    Params(q)
}

/// Fit `model` to the vectors of `window`, starting from `guess` (see [`crate::initial`]).
pub fn fit<M: VortexModel>(
    model: &M,
    window: &Window,
    guess: &InitialGuess,
    settings: &FitSettings,
) -> Result<FitResult, FitError> {
    fit_at(
        model,
        window,
        &ScaledWindow::of(window),
        guess,
        guess.centre,
        settings,
    )
}

/// [`fit`] with the solver started at `start_centre` instead of the guess's centre, which
/// stays the reference of the centre-shift flag.
pub(crate) fn fit_at<M: VortexModel>(
    model: &M,
    window: &Window,
    scaled: &ScaledWindow,
    guess: &InitialGuess,
    start_centre: [f64; 2],
    settings: &FitSettings,
) -> Result<FitResult, FitError> {
    guess.validate()?;
    for value in start_centre {
        if !value.is_finite() {
            return Err(FitError::InvalidGuess {
                name: "start centre",
                value,
                reason: "must be finite",
            });
        }
    }
    let s = setup(model, window, scaled, settings)?;
    let nm = model.n_params();
    let mut own = [0.0; MAXP];
    own[0] = 1.0;
    own[1] = 1.0;
    own[2..2 + model.extra_start().len()].copy_from_slice(model.extra_start());
    let ratio = model.peak_radius_ratio(&own[..nm]);
    // The data-driven estimate, only when the guess leaves something to estimate.
    let known =
        matches!(guess.circulation, CirculationGuess::Value(_)) && guess.core_radius.is_some();
    let (g_est, rc_est) = if known {
        (f64::NAN, f64::NAN)
    } else {
        estimate_circulation_and_radius(window, s.mean, start_centre, ratio)
    };
    let gamma0 = match guess.circulation {
        CirculationGuess::FromData => g_est,
        CirculationGuess::Sense(sign) => sign.signum() * g_est.abs(),
        CirculationGuess::Value(g) => g,
    };
    let rc0 = guess.core_radius.unwrap_or(rc_est);
    let mut start_model = vec![gamma0, rc0];
    start_model.extend_from_slice(model.extra_start());
    // Extra parameters are given in solver units by the model; convert back for `Parameters`.
    for k in 2..nm {
        start_model[k] *= s.scale[IM + k];
    }
    let start = Parameters {
        centre: start_centre,
        convection: s.mean,
        model: start_model,
        background: settings.background_gradient.then_some([0.0; 3]),
    };
    let layout = s.problem.layout;
    let mut p = to_solver(&start, &s.scales, &s.scale, layout);
    for k in 0..layout.n() {
        p.0[k] = p.0[k].clamp(s.lo[k], s.hi[k]);
    }
    let start_normal = solve_linear(
        &s.problem,
        &mut p,
        &linear_mask(model, settings.background_gradient),
    );
    run(model, window, guess.centre, s, p, start_normal, settings)
}

/// Fit from a given full start vector (physical units) instead of the data-driven start; used
/// to compare with other least-squares codes from identical starting values.
/// `detection_centre` is the reference of the centre-shift flag.
pub fn fit_from_start<M: VortexModel>(
    model: &M,
    window: &Window,
    start: &Parameters,
    detection_centre: [f64; 2],
    settings: &FitSettings,
) -> Result<FitResult, FitError> {
    let s = setup(model, window, &ScaledWindow::of(window), settings)?;
    if start.model.len() != model.n_params() {
        return Err(FitError::StartLength {
            model: model.kind().name(),
            have: start.model.len(),
            need: model.n_params(),
        });
    }
    for (name, v) in s.names.iter().zip(start.to_vec()) {
        if !v.is_finite() {
            let name: &'static str = if name == "core_radius" {
                "core_radius"
            } else {
                "start value"
            };
            return Err(FitError::InvalidGuess {
                name,
                value: v,
                reason: "must be finite",
            });
        }
    }
    let mut p = to_solver(start, &s.scales, &s.scale, s.problem.layout);
    for k in 0..s.problem.layout.n() {
        p.0[k] = p.0[k].clamp(s.lo[k], s.hi[k]);
    }
    run(model, window, detection_centre, s, p, None, settings)
}

/// [`fit_model`] started from the centre, circulation and core radius of `previous`, a
/// converged fit of another Gaussian-core model to the same window (Lamb–Oseen is Burgers
/// without inflow, and both define rc alike): the exact linear start then leaves the solver
/// next to its optimum, and it converges in about two passes over the data instead of four.
/// The detection centre of `guess` stays the reference of the centre-shift flag.
pub(crate) fn fit_model_warm(
    model: &Model,
    window: &Window,
    scaled: &ScaledWindow,
    guess: &InitialGuess,
    previous: &FitResult,
    settings: &FitSettings,
) -> Result<FitResult, FitError> {
    let warm = InitialGuess {
        centre: guess.centre,
        circulation: CirculationGuess::Value(previous.circulation()),
        core_radius: Some(previous.core_radius()),
    };
    fit_model_at(
        model,
        window,
        scaled,
        &warm,
        previous.parameters.centre,
        settings,
    )
}

/// Fit a run-time chosen [`Model`].
pub fn fit_model(
    model: &Model,
    window: &Window,
    guess: &InitialGuess,
    settings: &FitSettings,
) -> Result<FitResult, FitError> {
    fit_model_scaled(model, window, &ScaledWindow::of(window), guess, settings)
}

/// [`fit_model`] with the window's scaled samples at hand.
pub(crate) fn fit_model_scaled(
    model: &Model,
    window: &Window,
    scaled: &ScaledWindow,
    guess: &InitialGuess,
    settings: &FitSettings,
) -> Result<FitResult, FitError> {
    fit_model_at(model, window, scaled, guess, guess.centre, settings)
}

/// [`fit_at`] for a run-time chosen [`Model`].
fn fit_model_at(
    model: &Model,
    window: &Window,
    scaled: &ScaledWindow,
    guess: &InitialGuess,
    start_centre: [f64; 2],
    settings: &FitSettings,
) -> Result<FitResult, FitError> {
    match model {
        Model::LambOseen(m) => fit_at(m, window, scaled, guess, start_centre, settings),
        Model::Burgers(m) => fit_at(m, window, scaled, guess, start_centre, settings),
        Model::Rankine(m) => fit_at(m, window, scaled, guess, start_centre, settings),
        Model::Vatistas(m) => fit_at(m, window, scaled, guess, start_centre, settings),
    }
}

fn run<M: VortexModel>(
    model: &M,
    window: &Window,
    detection_centre: [f64; 2],
    s: Setup<M>,
    p0: Params,
    start_normal: Option<crate::solver::Normal>,
    settings: &FitSettings,
) -> Result<FitResult, FitError> {
    let layout = s.problem.layout;
    let n = layout.n();
    let m = 2 * window.len();
    let tolerances = [settings.ftol, settings.xtol, settings.gtol];
    let mut solver = LevenbergMarquardt::new(s.lo, s.hi, n, tolerances);
    solver.start_normal = start_normal;
    let res = Executor::new(s.problem, solver)
        .configure(|st| st.param(p0).max_iters(settings.max_iterations))
        .timer(false)
        .run()
        .map_err(|e| FitError::Solver(e.to_string()))?;
    let state = &res.state;
    let p = *state
        .get_param()
        .ok_or_else(|| FitError::Solver("no final parameters".into()))?;
    let ne = res.solver.cur;
    let mut status = match state.get_termination_reason() {
        Some(TerminationReason::SolverConverged) => FitStatus::Converged,
        Some(TerminationReason::MaxItersReached) => FitStatus::MaxIterations,
        _ => FitStatus::Stalled,
    };
    let vel = s.scales.velocity;
    let tss = s.tss;
    let rss = ne.rss * vel * vel;
    let dof = (m - n) as f64;
    let sigma2 = ne.wrss / dof;
    let cov_s = covariance(&ne.a, n, sigma2);
    let covariance_ok = cov_s.is_some();
    if tss == 0.0 || !covariance_ok {
        status = FitStatus::Degenerate;
    }
    let mut cov = vec![vec![f64::NAN; n]; n];
    if let Some(c) = cov_s {
        for i in 0..n {
            for j in 0..n {
                cov[i][j] = c[i][j] * s.scale[i] * s.scale[j];
            }
        }
    }
    let mut se = Params([0.0; MAXP]);
    for k in 0..n {
        se.0[k] = cov[k][k].sqrt() / s.scale[k];
    }
    let parameters = to_physical(&p, &s.scales, &s.scale, layout, true);
    let standard_errors = to_physical(&se, &s.scales, &s.scale, layout, false);
    let start = to_physical(&p0, &s.scales, &s.scale, layout, true);
    let derived = derive(model, &parameters, &cov, settings.viscosity);

    let at_bound = (0..n).any(|k| {
        let tol = 1e-9 * (1.0 + p.0[k].abs());
        (s.lo[k].is_finite() && p.0[k] <= s.lo[k] + tol)
            || (s.hi[k].is_finite() && p.0[k] >= s.hi[k] - tol)
    });
    let (g, rc) = (parameters.model[0], parameters.model[1]);
    let shift = ((parameters.centre[0] - detection_centre[0]).powi(2)
        + (parameters.centre[1] - detection_centre[1]).powi(2))
    .sqrt();
    let r2w = window.radius().powi(2);
    let neighbours_inside = window
        .neighbours()
        .iter()
        .filter(|q| {
            let d2 = (q[0] - window.centre()[0]).powi(2) + (q[1] - window.centre()[1]).powi(2);
            let own = (q[0] - detection_centre[0]).powi(2) + (q[1] - detection_centre[1]).powi(2);
            d2 <= r2w && own > 1e-18 * r2w
        })
        .count();
    let r_squared = if tss > 0.0 { 1.0 - rss / tss } else { f64::NAN };
    let inputs = FlagInputs {
        core_radius: rc,
        spacing: window.spacing()[0].max(window.spacing()[1]),
        invalid_fraction: window.invalid_fraction(),
        outside_fraction: window.outside_fraction(),
        status,
        at_bound,
        centre_shift: shift,
        r_squared,
        neighbours_inside,
        relative_error_circulation: standard_errors.model[0] / g.abs(),
        relative_error_core_radius: standard_errors.model[1] / rc.abs(),
        covariance_ok,
    };
    let flags = flags::evaluate(&inputs, &settings.thresholds);
    log::debug!(
        "{} fit of {} vectors: {:?} after {} iterations, flags {:?}",
        model.kind(),
        window.len(),
        status,
        state.get_iter(),
        flags
    );
    Ok(FitResult {
        model: model.kind(),
        model_config: model.to_model(),
        parameter_names: s.names,
        parameters,
        standard_errors,
        covariance: cov,
        start,
        status,
        flags,
        iterations: state.get_iter(),
        evaluations: res.solver.evaluations,
        n_vectors: window.len(),
        n_residuals: m,
        n_parameters: n,
        rss,
        tss,
        rms_residual: (rss / m as f64).sqrt(),
        noise_sigma: sigma2.sqrt() * vel,
        r_squared,
        condition_number: if settings.compute_condition_number {
            condition_number(&ne.a, n)
        } else {
            f64::NAN
        },
        derived,
    })
}

/// Derived quantities and their delta-method errors.
fn derive<M: VortexModel>(
    model: &M,
    p: &Parameters,
    cov: &[Vec<f64>],
    viscosity: Option<f64>,
) -> Derived {
    let nm = model.n_params();
    let own = &p.model;
    let (r_peak, v_peak) = model.peak_azimuthal_velocity(own);
    // Gradient of the peak velocity w.r.t. the own parameters by central differences
    // (a derived quantity, not the fit's Jacobian).
    let mut grad = vec![0.0; IM + nm];
    for k in 0..nm {
        let h = 1e-6 * own[k].abs().max(1e-12);
        let mut a = own.clone();
        let mut b = own.clone();
        a[k] += h;
        b[k] -= h;
        grad[IM + k] =
            (model.peak_azimuthal_velocity(&a).1 - model.peak_azimuthal_velocity(&b).1) / (2.0 * h);
    }
    let sub: Vec<Vec<f64>> = cov
        .iter()
        .take(IM + nm)
        .map(|r| r[..IM + nm].to_vec())
        .collect();
    let mut d = Derived {
        peak_radius: r_peak,
        peak_azimuthal_velocity: v_peak,
        peak_azimuthal_velocity_error: propagate(&grad, &sub).sqrt(),
        circulation_reynolds: viscosity.map(|nu| own[0] / nu),
        ..Derived::default()
    };
    if let Model::Burgers(b) = model.to_model() {
        let rc = own[1];
        let (gamma, gamma_se, g_grad) = match b.balance {
            ViscousBalance::Free => (own[2], cov[IM + 2][IM + 2].sqrt(), [0.0, 1.0]),
            ViscousBalance::Imposed { viscosity } => {
                let g = b.strain_rate(own);
                (
                    g,
                    (8.0 * viscosity / rc.powi(3)) * cov[IM + 1][IM + 1].sqrt(),
                    [-8.0 * viscosity / rc.powi(3), 0.0],
                )
            }
        };
        d.strain_rate_inflow = Some(gamma);
        d.strain_rate_inflow_error = Some(gamma_se);
        // ν_eff = γ rc²/4; gradient w.r.t. (rc, γ) with γ possibly a function of rc.
        let nu_eff = gamma * rc * rc / 4.0;
        let d_rc = gamma * rc / 2.0 + rc * rc / 4.0 * g_grad[0];
        let d_g = rc * rc / 4.0 * g_grad[1];
        let var = d_rc * d_rc * cov[IM + 1][IM + 1]
            + if nm > 2 {
                d_g * d_g * cov[IM + 2][IM + 2] + 2.0 * d_rc * d_g * cov[IM + 1][IM + 2]
            } else {
                0.0
            };
        d.effective_viscosity = Some(nu_eff);
        d.effective_viscosity_error = Some(var.sqrt());
        if let Some(nu) = viscosity {
            let implied = 4.0 * nu / (rc * rc);
            d.strain_rate_from_radius = Some(implied);
            d.strain_rate_from_radius_error =
                Some(8.0 * nu / rc.powi(3) * cov[IM + 1][IM + 1].sqrt());
            d.viscosity_ratio = Some(nu_eff / nu);
        }
    }
    d
}
