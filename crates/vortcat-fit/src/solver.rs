//! The least-squares problem and a projected Levenberg–Marquardt solver on the argmin framework.
//!
//! The problem is posed in dimensionless units: lengths divided by the window radius `L` and
//! measured from the window centre, velocities divided by a velocity scale `U` (RMS of the
//! velocity fluctuation in the window). Parameters are then of order one, so the tolerances and
//! bounds are meaningful, and the normal equations are well scaled.
//!
//! The solver is Levenberg–Marquardt with Marquardt's diagonal scaling and Nielsen's damping
//! update (Marquardt 1963, *SIAM J. Appl. Math.* 11, 431–441; Nocedal & Wright 2006,
//! *Numerical Optimization*, 2nd ed., §10.3; Press et al. 2007, *Numerical Recipes*, §15.5.2).
//! Bounds are kept by projecting every trial point into the box and freezing parameters that sit
//! at a bound with the gradient pushing outward (an active-set projection). The normal matrix
//! `JᵀWJ` and gradient `JᵀWr` are accumulated sample by sample in one pass without storing the
//! Jacobian, on fixed-size arrays: no heap allocation in the evaluation. The Gaussian-core
//! models (Lamb–Oseen, Burgers) without PIV averaging go through a vectorisable block kernel
//! ([`crate::kernel`]) with the same formulas; the others through the model's point-by-point
//! Jacobian (`evaluate_generic`), which is also the kernel's reference in the tests.

// Index loops mirror the matrix formulas of the normal equations.
#![allow(clippy::needless_range_loop)]

use std::sync::Arc;

use argmin::core::{
    Error as ArgminError, IterState, Problem, Solver, State, TerminationReason, TerminationStatus,
    KV,
};

use crate::kernel;
use crate::linalg::{cholesky_solve, Mat, MAXP};
use crate::loss::Loss;
use crate::model::{VortexModel, MAX_MODEL_PARAMS};

/// Index of the first own model parameter in the full parameter vector.
pub(crate) const IM: usize = 4;

/// Full parameter vector `[x0, y0, uc, vc, model…, background…]` in solver units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Params(pub [f64; MAXP]);

/// Normal equations at one point.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Normal {
    /// `JᵀWJ`.
    pub a: Mat,
    /// `JᵀWr`, the gradient of the cost.
    pub g: [f64; MAXP],
    /// Cost `½ Σ c² ρ(r²/c²)`.
    pub cost: f64,
    /// `Σ w r²`.
    pub wrss: f64,
    /// `Σ r²`.
    pub rss: f64,
}

impl Normal {
    pub(crate) fn zero() -> Self {
        Normal {
            a: [[0.0; MAXP]; MAXP],
            g: [0.0; MAXP],
            cost: 0.0,
            wrss: 0.0,
            rss: 0.0,
        }
    }
}

/// Scales between physical and solver units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Scales {
    pub origin: [f64; 2],
    pub length: f64,
    pub velocity: f64,
}

/// Which parameters are fitted.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Layout {
    pub n_model: usize,
    pub background: bool,
}

impl Layout {
    pub fn n(&self) -> usize {
        IM + self.n_model + if self.background { 3 } else { 0 }
    }
    pub fn bg(&self) -> usize {
        IM + self.n_model
    }
}

/// The least-squares problem in solver units.
#[derive(Debug, Clone)]
pub(crate) struct FitProblem<M> {
    pub model: M,
    pub x: Arc<[f64]>,
    pub y: Arc<[f64]>,
    pub u: Arc<[f64]>,
    pub v: Arc<[f64]>,
    /// Quadrature offsets and weights for PIV averaging; empty for point evaluation.
    pub quad: Vec<(f64, f64, f64)>,
    pub loss: Loss,
    pub layout: Layout,
}

impl<M: VortexModel> FitProblem<M> {
    /// Model velocity (vortex part only) and its derivatives, point or window-averaged.
    #[inline(always)]
    fn vortex(&self, dx: f64, dy: f64, pm: &[f64], du: &mut [f64], dv: &mut [f64]) -> [f64; 2] {
        if self.quad.is_empty() {
            return self.model.velocity_jacobian(dx, dy, pm, du, dv);
        }
        let m = 2 + self.layout.n_model;
        let mut tu = [0.0; 2 + MAX_MODEL_PARAMS];
        let mut tv = [0.0; 2 + MAX_MODEL_PARAMS];
        du[..m].fill(0.0);
        dv[..m].fill(0.0);
        let mut vel = [0.0, 0.0];
        for &(ox, oy, w) in &self.quad {
            let q = self
                .model
                .velocity_jacobian(dx + ox, dy + oy, pm, &mut tu, &mut tv);
            vel[0] += w * q[0];
            vel[1] += w * q[1];
            for k in 0..m {
                du[k] += w * tu[k];
                dv[k] += w * tv[k];
            }
        }
        vel
    }

    /// Full model velocity at sample position `(x, y)` and, if `ju`/`jv` are given, the rows of
    /// the Jacobian with respect to the full parameter vector.
    #[inline(always)]
    fn predict(
        &self,
        x: f64,
        y: f64,
        p: &[f64; MAXP],
        ju: &mut [f64; MAXP],
        jv: &mut [f64; MAXP],
    ) -> [f64; 2] {
        let nm = self.layout.n_model;
        let pm = &p[IM..IM + nm];
        let (dx, dy) = (x - p[0], y - p[1]);
        let mut du = [0.0; 2 + MAX_MODEL_PARAMS];
        let mut dv = [0.0; 2 + MAX_MODEL_PARAMS];
        let w = self.vortex(dx, dy, pm, &mut du, &mut dv);
        let mut uu = w[0] + p[2];
        let mut vv = w[1] + p[3];
        ju[0] = -du[0];
        ju[1] = -du[1];
        ju[2] = 1.0;
        ju[3] = 0.0;
        jv[0] = -dv[0];
        jv[1] = -dv[1];
        jv[2] = 0.0;
        jv[3] = 1.0;
        ju[IM..IM + nm].copy_from_slice(&du[2..2 + nm]);
        jv[IM..IM + nm].copy_from_slice(&dv[2..2 + nm]);
        if self.layout.background {
            // u_bg = e1·dx + (e2 − ω/2)·dy, v_bg = (e2 + ω/2)·dx − e1·dy (trace-free gradient).
            let b = self.layout.bg();
            let (e1, e2, om) = (p[b], p[b + 1], p[b + 2]);
            uu += e1 * dx + (e2 - 0.5 * om) * dy;
            vv += (e2 + 0.5 * om) * dx - e1 * dy;
            ju[0] -= e1;
            ju[1] -= e2 - 0.5 * om;
            jv[0] -= e2 + 0.5 * om;
            jv[1] += e1;
            ju[b] = dx;
            ju[b + 1] = dy;
            ju[b + 2] = -0.5 * dy;
            jv[b] = -dy;
            jv[b + 1] = dx;
            jv[b + 2] = 0.5 * dx;
        }
        [uu, vv]
    }

    /// Accumulate the normal equations at `p` into `out` in one pass over the samples, without
    /// storing the Jacobian. The convection columns are constant ((1, 0) and (0, 1), times √w
    /// for a robust loss), so their products reduce to (weighted) sums; the remaining `K = p − 2`
    /// columns are accumulated into a `K × K` block whose size is a compile-time constant, so
    /// the accumulators stay in registers.
    pub fn evaluate(&self, p: &Params, out: &mut Normal) {
        if self.use_kernel() {
            if let Some(kind) = self.model.gaussian_kernel() {
                let samples = kernel::Samples {
                    x: &self.x,
                    y: &self.y,
                    u: &self.u,
                    v: &self.v,
                };
                kernel::evaluate(kind, self.layout.background, self.loss, &samples, &p.0, out);
                return;
            }
        }
        self.evaluate_generic(p, out);
    }

    /// Whether [`Self::evaluate`] uses the Gaussian-core block kernel ([`crate::kernel`]).
    fn use_kernel(&self) -> bool {
        self.quad.is_empty() && self.model.gaussian_kernel().is_some()
    }

    /// Normal equations through the model's point-by-point [`VortexModel::velocity_jacobian`]
    /// (all models, PIV averaging); the reference for the block kernel.
    pub fn evaluate_generic(&self, p: &Params, out: &mut Normal) {
        match self.layout.n() - 2 {
            4 => self.accumulate::<4>(p, out),
            5 => self.accumulate::<5>(p, out),
            6 => self.accumulate::<6>(p, out),
            7 => self.accumulate::<7>(p, out),
            _ => self.accumulate::<8>(p, out),
        }
    }

    /// Index in the full parameter vector of stored column `k` (skipping uc, vc at 2 and 3).
    #[inline(always)]
    const fn full_index(k: usize) -> usize {
        if k < 2 {
            k
        } else {
            k + 2
        }
    }

    #[inline(always)]
    fn accumulate<const K: usize>(&self, p: &Params, out: &mut Normal) {
        let robust = !matches!(self.loss, Loss::Linear);
        let mut acc = [[0.0; K]; K];
        let mut g = [0.0; K];
        // Σ √w_u·(√w_u j_u,k) and Σ √w_v·(√w_v j_v,k): products with the convection columns.
        let mut cu = [0.0; K];
        let mut cv = [0.0; K];
        let (mut g2, mut g3, mut a22, mut a33) = (0.0, 0.0, 0.0, 0.0);
        let (mut cost2, mut wrss, mut rss) = (0.0, 0.0, 0.0);
        let mut ju = [0.0; MAXP];
        let mut jv = [0.0; MAXP];
        for i in 0..self.x.len() {
            let m = self.predict(self.x[i], self.y[i], &p.0, &mut ju, &mut jv);
            let ru = m[0] - self.u[i];
            let rv = m[1] - self.v[i];
            rss += ru * ru + rv * rv;
            let (su, sv) = if robust {
                let (rho_u, wu) = self.loss.rho_weight(ru);
                let (rho_v, wv) = self.loss.rho_weight(rv);
                cost2 += rho_u + rho_v;
                wrss += wu * ru * ru + wv * rv * rv;
                (wu.sqrt(), wv.sqrt())
            } else {
                (1.0, 1.0)
            };
            let (ru, rv) = (su * ru, sv * rv);
            let mut a = [0.0; K];
            let mut b = [0.0; K];
            for k in 0..K {
                a[k] = su * ju[Self::full_index(k)];
                b[k] = sv * jv[Self::full_index(k)];
            }
            for r in 0..K {
                g[r] += a[r] * ru + b[r] * rv;
                cu[r] += su * a[r];
                cv[r] += sv * b[r];
                for c in r..K {
                    acc[r][c] += a[r] * a[c] + b[r] * b[c];
                }
            }
            g2 += su * ru;
            g3 += sv * rv;
            a22 += su * su;
            a33 += sv * sv;
        }
        if !robust {
            cost2 = rss;
            wrss = rss;
        }
        *out = Normal::zero();
        for r in 0..K {
            let fr = Self::full_index(r);
            out.g[fr] = g[r];
            for c in r..K {
                let fc = Self::full_index(c);
                out.a[fr][fc] = acc[r][c];
                out.a[fc][fr] = acc[r][c];
            }
            out.a[2][fr] = cu[r];
            out.a[fr][2] = cu[r];
            out.a[3][fr] = cv[r];
            out.a[fr][3] = cv[r];
        }
        out.g[2] = g2;
        out.g[3] = g3;
        out.a[2][2] = a22;
        out.a[3][3] = a33;
        out.cost = 0.5 * cost2;
        out.wrss = wrss;
        out.rss = rss;
    }
}

/// How the solver ended, beyond argmin's iteration cap.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Outcome {
    Converged,
    Stalled,
}

/// Projected Levenberg–Marquardt as an argmin [`Solver`].
#[derive(Debug, Clone)]
pub(crate) struct LevenbergMarquardt {
    pub lo: [f64; MAXP],
    pub hi: [f64; MAXP],
    pub n: usize,
    pub ftol: f64,
    pub xtol: f64,
    pub gtol: f64,
    pub lambda: f64,
    pub nu: f64,
    pub cur: Normal,
    pub trial: Normal,
    pub outcome: Option<Outcome>,
    pub evaluations: u64,
    /// Normal equations at the start vector if already known (from the exact linear start,
    /// [`crate::initial::solve_linear`]); saves the first evaluation.
    pub start_normal: Option<Normal>,
}

/// The argmin state used by the solver.
pub(crate) type LmState = IterState<Params, (), (), (), (), f64>;

impl LevenbergMarquardt {
    pub fn new(lo: [f64; MAXP], hi: [f64; MAXP], n: usize, tolerances: [f64; 3]) -> Self {
        let [ftol, xtol, gtol] = tolerances;
        LevenbergMarquardt {
            lo,
            hi,
            n,
            ftol,
            xtol,
            gtol,
            lambda: 0.0,
            nu: 2.0,
            cur: Normal::zero(),
            trial: Normal::zero(),
            outcome: None,
            evaluations: 0,
            start_normal: None,
        }
    }

    fn frozen(&self, p: &[f64; MAXP], k: usize) -> bool {
        (p[k] <= self.lo[k] && self.cur.g[k] > 0.0) || (p[k] >= self.hi[k] && self.cur.g[k] < 0.0)
    }

    /// MINPACK-style gradient test: largest |cosine| between the weighted residual vector and a
    /// free Jacobian column.
    fn gradient_converged(&self, p: &[f64; MAXP]) -> bool {
        let rn = self.cur.wrss.sqrt();
        if rn == 0.0 {
            return true;
        }
        let mut worst: f64 = 0.0;
        for k in 0..self.n {
            if self.frozen(p, k) {
                continue;
            }
            let cn = self.cur.a[k][k].sqrt();
            if cn > 0.0 {
                worst = worst.max(self.cur.g[k].abs() / (cn * rn));
            }
        }
        worst <= self.gtol
    }
}

impl<M: VortexModel> Solver<FitProblem<M>, LmState> for LevenbergMarquardt {
    const NAME: &'static str = "vortcat projected Levenberg-Marquardt";

    fn init(
        &mut self,
        problem: &mut Problem<FitProblem<M>>,
        state: LmState,
    ) -> Result<(LmState, Option<KV>), ArgminError> {
        let p = *state
            .get_param()
            .ok_or_else(|| ArgminError::msg("no start vector"))?;
        if let Some(ne) = self.start_normal.take() {
            self.cur = ne;
        } else {
            let cur = &mut self.cur;
            problem.problem("normal_equations", |op| {
                op.evaluate(&p, cur);
                Ok(())
            })?;
            self.evaluations += 1;
        }
        // Marquardt scaling: λ multiplies diag(JᵀWJ), so it is dimensionless.
        self.lambda = 1e-3;
        if self.cur.rss == 0.0 {
            self.outcome = Some(Outcome::Converged);
        }
        let cost = self.cur.cost;
        Ok((state.cost(cost), None))
    }

    fn next_iter(
        &mut self,
        problem: &mut Problem<FitProblem<M>>,
        state: LmState,
    ) -> Result<(LmState, Option<KV>), ArgminError> {
        let p = *state
            .get_param()
            .ok_or_else(|| ArgminError::msg("no parameter vector"))?;
        let n = self.n;
        if self.gradient_converged(&p.0) {
            self.outcome = Some(Outcome::Converged);
            return Ok((state, None));
        }
        let mut m = self.cur.a;
        let mut rhs = [0.0; MAXP];
        let trace: f64 = (0..n).map(|k| self.cur.a[k][k]).sum();
        let dfloor = 1e-12 * trace / n as f64;
        for k in 0..n {
            if self.frozen(&p.0, k) {
                for j in 0..n {
                    m[k][j] = 0.0;
                    m[j][k] = 0.0;
                }
                m[k][k] = 1.0;
                rhs[k] = 0.0;
            } else {
                m[k][k] += self.lambda * self.cur.a[k][k].max(dfloor).max(f64::MIN_POSITIVE);
                rhs[k] = -self.cur.g[k];
            }
        }
        let ok = cholesky_solve(&mut m, n, &mut rhs);
        if !ok {
            self.lambda *= self.nu;
            self.nu *= 2.0;
            if self.lambda > 1e30 {
                self.outcome = Some(Outcome::Stalled);
            }
            return Ok((state, None));
        }
        let mut pn = p;
        let mut step = [0.0; MAXP];
        let (mut step2, mut p2) = (0.0f64, 0.0f64);
        for k in 0..n {
            pn.0[k] = (p.0[k] + rhs[k]).clamp(self.lo[k], self.hi[k]);
            step[k] = pn.0[k] - p.0[k];
            step2 += step[k] * step[k];
            p2 += p.0[k] * p.0[k];
        }
        let small_step = step2.sqrt() <= self.xtol * (self.xtol + p2.sqrt());
        // Predicted decrease of the quadratic model: −(gᵀs + ½ sᵀAs).
        let mut pred = 0.0;
        for a in 0..n {
            let mut as_ = 0.0;
            for b in 0..n {
                as_ += self.cur.a[a][b] * step[b];
            }
            pred -= self.cur.g[a] * step[a] + 0.5 * step[a] * as_;
        }
        let old = self.cur.cost;
        // Lightly damped step predicted to gain less than ftol: already at the minimum (saves
        // the evaluation that would only confirm it).
        if self.lambda <= 1e-2 && pred.abs() <= 0.5 * self.ftol * old {
            self.outcome = Some(Outcome::Converged);
            return Ok((state, None));
        }
        let trial = &mut self.trial;
        problem.problem("normal_equations", |op| {
            op.evaluate(&pn, trial);
            Ok(())
        })?;
        self.evaluations += 1;
        let actual = old - self.trial.cost;
        if actual > 0.0 && self.trial.cost.is_finite() {
            let rho = if pred > 0.0 { actual / pred } else { 0.0 };
            std::mem::swap(&mut self.cur, &mut self.trial);
            self.lambda *= (1.0 - (2.0 * rho - 1.0).powi(3)).max(1.0 / 3.0);
            self.nu = 2.0;
            let small_reduction = actual <= self.ftol * old && pred.abs() <= self.ftol * old;
            if small_reduction || small_step || self.cur.rss == 0.0 {
                self.outcome = Some(Outcome::Converged);
            }
            let cost = self.cur.cost;
            Ok((state.param(pn).cost(cost), None))
        } else {
            self.lambda *= self.nu;
            self.nu *= 2.0;
            if small_step {
                // No representable improvement left along the damped direction.
                self.outcome = Some(Outcome::Converged);
            } else if self.lambda > 1e30 {
                self.outcome = Some(Outcome::Stalled);
            }
            Ok((state, None))
        }
    }

    fn terminate(&mut self, _state: &LmState) -> TerminationStatus {
        match self.outcome {
            Some(Outcome::Converged) => {
                TerminationStatus::Terminated(TerminationReason::SolverConverged)
            }
            Some(Outcome::Stalled) => {
                TerminationStatus::Terminated(TerminationReason::SolverExit("stalled".to_string()))
            }
            None => TerminationStatus::NotTerminated,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::averaging::PivAveraging;
    use crate::model::{Burgers, LambOseen, Vatistas};
    use proptest::prelude::*;

    /// One-sample problem: `g` of ½ r² is J r, so with unit data the assembled gradient
    /// against a finite difference of the cost checks the full Jacobian row (centre, convection,
    /// model, background gradient, PIV averaging together). Central differences, relative step
    /// 1e-6: agreement to 1e-6 of the gradient scale (see tests/jacobian_models.rs).
    fn check_problem<M: VortexModel>(
        model: M,
        p: &[f64],
        x: f64,
        y: f64,
        bg: bool,
        avg: bool,
    ) -> Result<(), TestCaseError> {
        let layout = Layout {
            n_model: model.n_params(),
            background: bg,
        };
        let prob = FitProblem {
            model,
            x: vec![x].into(),
            y: vec![y].into(),
            u: vec![0.3].into(),
            v: vec![-0.2].into(),
            quad: if avg {
                PivAveraging::new(0.4).offsets(1.0)
            } else {
                vec![]
            },
            loss: Loss::Linear,
            layout,
        };
        let mut q = [0.0; MAXP];
        q[..p.len()].copy_from_slice(p);
        let mut ne = Normal::zero();
        prob.evaluate(&Params(q), &mut ne);
        let gscale = ne.g[..layout.n()]
            .iter()
            .fold(ne.cost.sqrt(), |m, g| m.max(g.abs()));
        for k in 0..layout.n() {
            let h = 1e-6 * (1.0 + q[k].abs());
            let (mut a, mut b) = (q, q);
            a[k] += h;
            b[k] -= h;
            let (mut na, mut nb) = (Normal::zero(), Normal::zero());
            prob.evaluate(&Params(a), &mut na);
            prob.evaluate(&Params(b), &mut nb);
            let fd = (na.cost - nb.cost) / (2.0 * h);
            prop_assert!(
                (fd - ne.g[k]).abs() <= 1e-6 * gscale.max(1.0),
                "k {k}: {} vs {fd}",
                ne.g[k]
            );
            // Gauss–Newton normal matrix is JᵀJ: diagonal = |∂r/∂p_k|² ≥ 0.
            prop_assert!(ne.a[k][k] >= 0.0);
        }
        Ok(())
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(64))]
        #[test]
        fn full_problem_jacobian(
            x in -1.0..1.0f64, y in -1.0..1.0f64,
            x0 in -0.3..0.3f64, y0 in -0.3..0.3f64, uc in -1.0..1.0f64, vc in -1.0..1.0f64,
            g in -3.0..3.0f64, rc in 0.2..1.0f64, s in -1.0..1.0f64, n in 1.0..4.0f64,
            e1 in -1.0..1.0f64, e2 in -1.0..1.0f64, om in -1.0..1.0f64, avg in any::<bool>(),
        ) {
            check_problem(LambOseen, &[x0, y0, uc, vc, g, rc, e1, e2, om], x, y, true, avg)?;
            check_problem(Burgers::free(), &[x0, y0, uc, vc, g, rc, s, e1, e2, om], x, y, true, avg)?;
            check_problem(Vatistas::fitted(), &[x0, y0, uc, vc, g, rc, n], x, y, false, avg)?;
        }
    }

    /// The Gaussian-core block kernel against the point-by-point evaluation through the model
    /// trait, for every variant (Lamb–Oseen, Burgers free and imposed; with and without the
    /// background gradient; plain and robust loss), with sample counts that are not multiples
    /// of the block size and samples on and next to the centre (the near-axis series). The two
    /// differ only by rounding and the summation order: 1e-12 of each entry's scale.
    #[test]
    fn block_kernel_matches_point_evaluation() {
        fn check<M: VortexModel>(model: M, p: &[f64], bg: bool, loss: Loss, n: usize) {
            let layout = Layout {
                n_model: model.n_params(),
                background: bg,
            };
            let mut x = vec![p[0], p[0] + 1e-5, p[0]];
            let mut y = vec![p[1], p[1], p[1] - 3e-3];
            let mut state = 12345u64;
            let mut next = || {
                state = state
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                (state >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
            };
            while x.len() < n {
                x.push(next());
                y.push(next());
            }
            let u: Vec<f64> = (0..n).map(|_| 0.3 * next()).collect();
            let v: Vec<f64> = (0..n).map(|_| 0.3 * next()).collect();
            let prob = FitProblem {
                model,
                x: x.into(),
                y: y.into(),
                u: u.into(),
                v: v.into(),
                quad: vec![],
                loss,
                layout,
            };
            assert!(prob.use_kernel());
            let mut q = [0.0; MAXP];
            q[..p.len()].copy_from_slice(p);
            let (mut a, mut b) = (Normal::zero(), Normal::zero());
            prob.evaluate(&Params(q), &mut a);
            prob.evaluate_generic(&Params(q), &mut b);
            let n = layout.n();
            let close = |x: f64, y: f64, scale: f64| (x - y).abs() <= 1e-12 * scale;
            for i in 0..n {
                for j in 0..n {
                    let scale = (b.a[i][i] * b.a[j][j]).sqrt().max(1e-300);
                    assert!(
                        close(a.a[i][j], b.a[i][j], scale),
                        "A[{i}][{j}] {} vs {}",
                        a.a[i][j],
                        b.a[i][j]
                    );
                }
                let scale = (b.a[i][i] * b.wrss).sqrt();
                assert!(
                    close(a.g[i], b.g[i], scale),
                    "g[{i}] {} vs {}",
                    a.g[i],
                    b.g[i]
                );
            }
            assert!(close(a.cost, b.cost, b.cost));
            assert!(close(a.rss, b.rss, b.rss));
            assert!(close(a.wrss, b.wrss, b.wrss));
        }
        let losses = [
            Loss::Linear,
            Loss::Huber { scale: 0.2 },
            Loss::SoftL1 { scale: 0.2 },
        ];
        for (&loss, n) in losses.iter().zip([709, 64, 129]) {
            for bg in [false, true] {
                let b = [0.2, -0.1, -0.4];
                let lo = [0.05, -0.03, 0.1, -0.2, 1.3, 0.3];
                let bf = [0.05, -0.03, 0.1, -0.2, -1.3, 0.3, 0.4];
                let mut plo = lo.to_vec();
                let mut pbf = bf.to_vec();
                if bg {
                    plo.extend(b);
                    pbf.extend(b);
                }
                check(LambOseen, &plo, bg, loss, n);
                check(Burgers::free(), &pbf, bg, loss, n);
                check(Burgers::imposed(0.01), &plo, bg, loss, n + 1);
            }
        }
    }

    /// The normal equations after the exact linear start, derived from those before it without
    /// a pass over the data, equal a direct evaluation at the new point.
    #[test]
    fn normal_equations_after_linear_start_equal_evaluation() {
        use crate::initial::{linear_mask, solve_linear};
        fn check<M: VortexModel>(model: M, p: &[f64], bg: bool) {
            let layout = Layout {
                n_model: model.n_params(),
                background: bg,
            };
            let (mut x, mut y, mut u, mut v) = (vec![], vec![], vec![], vec![]);
            for j in -12..=12 {
                for i in -12..=12 {
                    let (xi, yj) = (i as f64 / 12.0, j as f64 / 12.0);
                    let w =
                        model.velocity(xi - 0.04, yj + 0.02, &[1.1, 0.3, 0.2][..model.n_params()]);
                    x.push(xi);
                    y.push(yj);
                    u.push(w[0] + 0.1 + 0.01 * ((i * 7 + j * 3) % 5) as f64);
                    v.push(w[1] - 0.05 + 0.01 * ((i * 3 - j * 5) % 7) as f64);
                }
            }
            let prob = FitProblem {
                model: model.clone(),
                x: x.into(),
                y: y.into(),
                u: u.into(),
                v: v.into(),
                quad: vec![],
                loss: Loss::Linear,
                layout,
            };
            let mut q = [0.0; MAXP];
            q[..p.len()].copy_from_slice(p);
            let mut pp = Params(q);
            let derived = solve_linear(&prob, &mut pp, &linear_mask(&model, bg)).expect("derived");
            let mut direct = Normal::zero();
            prob.evaluate(&pp, &mut direct);
            let n = layout.n();
            for i in 0..n {
                for j in 0..n {
                    let scale = (direct.a[i][i] * direct.a[j][j]).sqrt();
                    assert!(
                        (derived.a[i][j] - direct.a[i][j]).abs() <= 1e-12 * scale,
                        "A[{i}][{j}]"
                    );
                }
                let scale = (direct.a[i][i] * 2.0 * direct.cost).sqrt();
                assert!(
                    (derived.g[i] - direct.g[i]).abs() <= 1e-10 * scale,
                    "g[{i}] {} vs {}",
                    derived.g[i],
                    direct.g[i]
                );
            }
            assert!((derived.cost - direct.cost).abs() <= 1e-10 * direct.cost);
        }
        check(LambOseen, &[0.0, 0.0, 0.0, 0.0, 0.7, 0.25], false);
        check(
            LambOseen,
            &[0.0, 0.0, 0.0, 0.0, 0.7, 0.25, 0.0, 0.0, 0.0],
            true,
        );
        check(
            Burgers::free(),
            &[0.0, 0.0, 0.0, 0.0, 0.7, 0.25, 0.0],
            false,
        );
        check(
            Burgers::free(),
            &[0.0, 0.0, 0.0, 0.0, 0.7, 0.25, 0.0, 0.0, 0.0, 0.0],
            true,
        );
        // Nonzero linear parameters at the old point too (α, β ≠ 0 in the transformation).
        check(
            Burgers::free(),
            &[0.01, -0.02, 0.3, 0.1, 0.7, 0.25, 0.5, 0.2, -0.1, 0.3],
            true,
        );
    }
}
