//! Block kernel for the Gaussian-core models (Lamb–Oseen, Burgers): residuals, Jacobian and
//! normal equations in one pass over the samples, vectorisable on the baseline target.
//!
//! The formulas are those of [`crate::model::LambOseen::velocity_jacobian`] and
//! [`crate::model::Burgers::velocity_jacobian`] plus the solver's convection and background
//! terms, but arranged for the compiler's auto-vectoriser: the samples are processed in blocks
//! of [`BLOCK`] vectors; a first loop over a block evaluates `exp(−r²/rc²)` (branch-free,
//! [`crate::fastmath`]), the velocity and every Jacobian entry into small stack arrays
//! (structure of arrays, both branches of the near-axis series computed and selected, so the
//! loop has no branch); a second loop accumulates `JᵀWJ` and `JᵀWr` from them with two-lane
//! accumulators (even and odd samples), so that each accumulator is one SIMD register. The
//! Jacobian is never stored beyond one block and nothing is allocated. The convection columns
//! `(1, 0)` and `(0, 1)` are not stored: their products are plain (weighted) sums.
//!
//! Summation order is fixed by the source (blocks in sample order, lanes combined at the end),
//! so results are bit-reproducible on any machine of an architecture; they differ from a
//! sequential sum only by rounding. Normal equations as in Nocedal & Wright 2006, *Numerical
//! Optimization*, 2nd ed., §10.3.

// Index loops mirror the matrix formulas and keep the block arrays in step.
#![allow(clippy::needless_range_loop)]

use crate::fastmath::exp_expm1_nonpositive;
use crate::linalg::MAXP;
use crate::loss::Loss;
use crate::model::GaussianKernel;
use crate::solver::{Normal, IM};

/// Samples per block: the block arrays (at most 2 × 8 columns + residuals and weights, 20 ×
/// 64 × 8 bytes = 10 KiB) stay in the L1 cache.
const BLOCK: usize = 64;

const INV_TWO_PI: f64 = 1.0 / (2.0 * std::f64::consts::PI);

/// Model variant as a compile-time constant of [`run`].
const LO: u8 = 0;
const BF: u8 = 1;
const BI: u8 = 2;

/// The samples in solver units.
pub(crate) struct Samples<'a> {
    pub x: &'a [f64],
    pub y: &'a [f64],
    pub u: &'a [f64],
    pub v: &'a [f64],
}

/// Normal equations of a Gaussian-core model at `p` (full solver parameter vector, layout as in
/// [`crate::solver`]).
pub(crate) fn evaluate(
    kind: GaussianKernel,
    background: bool,
    loss: Loss,
    s: &Samples<'_>,
    p: &[f64; MAXP],
    out: &mut Normal,
) {
    let robust = !matches!(loss, Loss::Linear);
    match (kind, background, robust) {
        (GaussianKernel::LambOseen, false, false) => {
            run::<4, LO, false, false>(s, 0.0, loss, p, out)
        }
        (GaussianKernel::LambOseen, true, false) => run::<7, LO, true, false>(s, 0.0, loss, p, out),
        (GaussianKernel::LambOseen, false, true) => run::<4, LO, false, true>(s, 0.0, loss, p, out),
        (GaussianKernel::LambOseen, true, true) => run::<7, LO, true, true>(s, 0.0, loss, p, out),
        (GaussianKernel::BurgersFree, false, false) => {
            run::<5, BF, false, false>(s, 0.0, loss, p, out)
        }
        (GaussianKernel::BurgersFree, true, false) => {
            run::<8, BF, true, false>(s, 0.0, loss, p, out)
        }
        (GaussianKernel::BurgersFree, false, true) => {
            run::<5, BF, false, true>(s, 0.0, loss, p, out)
        }
        (GaussianKernel::BurgersFree, true, true) => run::<8, BF, true, true>(s, 0.0, loss, p, out),
        (GaussianKernel::BurgersImposed { viscosity: nu }, false, false) => {
            run::<4, BI, false, false>(s, nu, loss, p, out)
        }
        (GaussianKernel::BurgersImposed { viscosity: nu }, true, false) => {
            run::<7, BI, true, false>(s, nu, loss, p, out)
        }
        (GaussianKernel::BurgersImposed { viscosity: nu }, false, true) => {
            run::<4, BI, false, true>(s, nu, loss, p, out)
        }
        (GaussianKernel::BurgersImposed { viscosity: nu }, true, true) => {
            run::<7, BI, true, true>(s, nu, loss, p, out)
        }
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

/// `K` stored columns: x0, y0, Γ, rc, [γ], [e1, e2, ω]; `V` the variant; `BG` background
/// gradient; `R` robust loss.
#[inline(never)]
/// Compiled twice, for the baseline x86-64 and for AVX2, chosen at run time (`multiversion`):
/// the per-sample loop runs four lanes wide instead of two. FMA is not enabled and the
/// accumulation order is fixed by the source, so every lane computes exactly what the
/// baseline code does: results are bit-identical on machines with and without AVX2 (checked:
/// the same catalog bytes for the 30,000 vortices of the survey benchmark with both builds).
#[multiversion::multiversion(targets("x86_64+avx2+avx"))]
fn run<const K: usize, const V: u8, const BG: bool, const R: bool>(
    s: &Samples<'_>,
    viscosity: f64,
    loss: Loss,
    p: &[f64; MAXP],
    out: &mut Normal,
) {
    let n = s.x.len();
    let (xs, ys, us, vs) = (&s.x[..n], &s.y[..n], &s.u[..n], &s.v[..n]);
    let (x0, y0, uc, vc) = (p[0], p[1], p[2], p[3]);
    let gamma = p[IM];
    let rc = p[IM + 1];
    let nm = if V == BF { 3 } else { 2 };
    let b = IM + nm;
    let (e1, e2, om) = if BG {
        (p[b], p[b + 1], p[b + 2])
    } else {
        (0.0, 0.0, 0.0)
    };
    let a = rc * rc;
    let inv_a = 1.0 / a;
    let inv_a2 = inv_a * inv_a;
    let c = gamma * INV_TWO_PI;
    // Radial inflow M = u_r / r and, for the imposed balance, ∂M/∂rc.
    let m = match V {
        BF => -0.5 * p[IM + 2],
        BI => -0.5 * (4.0 * viscosity / (rc * rc)),
        _ => 0.0,
    };
    let dm_drc = if V == BI {
        4.0 * viscosity / (rc * rc * rc)
    } else {
        0.0
    };
    let (bu_x, bv_x, bu_y, bv_y) = (e1, e2 + 0.5 * om, e2 - 0.5 * om, -e1);

    // Two-lane accumulators (lane = sample index parity within the block).
    let mut acc = [[[0.0f64; 2]; K]; K];
    let mut g = [[0.0f64; 2]; K];
    let mut cu = [[0.0f64; 2]; K];
    let mut cv = [[0.0f64; 2]; K];
    let (mut g2, mut g3, mut a22, mut a33, mut rss2) = (
        [0.0f64; 2],
        [0.0f64; 2],
        [0.0f64; 2],
        [0.0f64; 2],
        [0.0f64; 2],
    );
    let (mut cost2, mut wrss, mut rss_r) = (0.0f64, 0.0f64, 0.0f64);

    let mut ja = [[0.0f64; BLOCK]; K];
    let mut jb = [[0.0f64; BLOCK]; K];
    let mut ru = [0.0f64; BLOCK];
    let mut rv = [0.0f64; BLOCK];
    let mut su = [0.0f64; BLOCK];
    let mut sv = [0.0f64; BLOCK];

    let mut start = 0;
    while start < n {
        let len = BLOCK.min(n - start);
        let (bx, by, bu, bv) = (
            &xs[start..start + len],
            &ys[start..start + len],
            &us[start..start + len],
            &vs[start..start + len],
        );
        // Stage A: model, residual and Jacobian of each sample of the block (no branches).
        for i in 0..len {
            let dx = bx[i] - x0;
            let dy = by[i] - y0;
            let s2 = dx * dx + dy * dy;
            let t = s2 * inv_a;
            let (e, em1) = exp_expm1_nonpositive(-t);
            // Gaussian core g(s) = (1 − e^{−s/a})/s and ∂g/∂s. With 1 − e^{−t} from the
            // expm1 form (full relative precision for small t) the direct formulas hold down
            // to t = 1e-8; the numerator of ∂g/∂s, t e − (1 − e) ≈ −t²/2, then loses digits
            // as 2ε/t, but ∂g/∂s only enters the Jacobian multiplied by 2dx², 2dy² or 2dx·dy
            // (≤ 2s), where its absolute error is ≈ 2ε·g: as accurate as g itself. Below
            // t = 1e-8 (and at s = 0) two-term series, truncation < 2e-17 relative.
            let one_minus = -em1;
            let inv_s = 1.0 / s2;
            let g_dir = one_minus * inv_s;
            let d_dir = (t * e - one_minus) * inv_s * inv_s;
            let g_ser = (1.0 - 0.5 * t) * inv_a;
            let d_ser = (-0.5 + t * (1.0 / 3.0)) * inv_a2;
            let near = t < 1e-8;
            let gg = if near { g_ser } else { g_dir };
            let dg_ds = if near { d_ser } else { d_dir };
            let dg_da = -e * inv_a2;
            let k = c * gg;
            let dk_ds = c * dg_ds;
            let (xx, yy, xy) = (2.0 * dx * dx, 2.0 * dy * dy, 2.0 * dx * dy);
            let mut uu = -k * dy + m * dx + uc;
            let mut vv = k * dx + m * dy + vc;
            // Columns x0, y0: −∂/∂dx, −∂/∂dy.
            let mut jxu = -(-dk_ds * xy + m);
            let mut jxv = -(k + dk_ds * xx);
            let mut jyu = -(-k - dk_ds * yy);
            let mut jyv = -(dk_ds * xy + m);
            if BG {
                uu += e1 * dx + (e2 - 0.5 * om) * dy;
                vv += (e2 + 0.5 * om) * dx - e1 * dy;
                jxu -= bu_x;
                jxv -= bv_x;
                jyu -= bu_y;
                jyv -= bv_y;
            }
            ja[0][i] = jxu;
            jb[0][i] = jxv;
            ja[1][i] = jyu;
            jb[1][i] = jyv;
            // Γ: ∂K/∂Γ = g/(2π); rc: ∂K/∂rc = c·∂g/∂a·2rc (+ ∂M/∂rc for the imposed balance).
            let dk_dgamma = INV_TWO_PI * gg;
            let dk_drc = c * dg_da * 2.0 * rc;
            ja[2][i] = -dk_dgamma * dy;
            jb[2][i] = dk_dgamma * dx;
            if V == BI {
                ja[3][i] = -dk_drc * dy + dm_drc * dx;
                jb[3][i] = dk_drc * dx + dm_drc * dy;
            } else {
                ja[3][i] = -dk_drc * dy;
                jb[3][i] = dk_drc * dx;
            }
            if V == BF {
                ja[4][i] = -0.5 * dx;
                jb[4][i] = -0.5 * dy;
            }
            if BG {
                let q = K - 3;
                ja[q][i] = dx;
                jb[q][i] = -dy;
                ja[q + 1][i] = dy;
                jb[q + 1][i] = dx;
                ja[q + 2][i] = -0.5 * dy;
                jb[q + 2][i] = 0.5 * dx;
            }
            ru[i] = uu - bu[i];
            rv[i] = vv - bv[i];
        }
        if R {
            // IRLS weights (scalar: the loss has branches); scale rows by √w.
            for i in 0..len {
                let (rho_u, wu) = loss.rho_weight(ru[i]);
                let (rho_v, wv) = loss.rho_weight(rv[i]);
                cost2 += rho_u + rho_v;
                wrss += wu * ru[i] * ru[i] + wv * rv[i] * rv[i];
                rss_r += ru[i] * ru[i] + rv[i] * rv[i];
                su[i] = wu.sqrt();
                sv[i] = wv.sqrt();
            }
            for i in 0..len {
                ru[i] *= su[i];
                rv[i] *= sv[i];
                for k in 0..K {
                    ja[k][i] *= su[i];
                    jb[k][i] *= sv[i];
                }
            }
        }
        // Pad an odd block with a zero sample (contributes nothing to any sum).
        let len2 = len + (len & 1);
        if len2 > len {
            ru[len] = 0.0;
            rv[len] = 0.0;
            su[len] = 0.0;
            sv[len] = 0.0;
            for k in 0..K {
                ja[k][len] = 0.0;
                jb[k][len] = 0.0;
            }
        }
        // Stage B: accumulate, two samples per step.
        let mut i = 0;
        while i < len2 {
            // Lane loops innermost, so that each accumulator is one two-lane register.
            for l in 0..2 {
                let j = i + l;
                if R {
                    g2[l] += su[j] * ru[j];
                    g3[l] += sv[j] * rv[j];
                    a22[l] += su[j] * su[j];
                    a33[l] += sv[j] * sv[j];
                } else {
                    g2[l] += ru[j];
                    g3[l] += rv[j];
                    rss2[l] += ru[j] * ru[j] + rv[j] * rv[j];
                }
            }
            for r in 0..K {
                for l in 0..2 {
                    let j = i + l;
                    g[r][l] += ja[r][j] * ru[j] + jb[r][j] * rv[j];
                    if R {
                        cu[r][l] += su[j] * ja[r][j];
                        cv[r][l] += sv[j] * jb[r][j];
                    } else {
                        cu[r][l] += ja[r][j];
                        cv[r][l] += jb[r][j];
                    }
                }
                for cc in r..K {
                    for l in 0..2 {
                        let j = i + l;
                        acc[r][cc][l] += ja[r][j] * ja[cc][j] + jb[r][j] * jb[cc][j];
                    }
                }
            }
            i += 2;
        }
        start += len;
    }

    let sum = |x: [f64; 2]| x[0] + x[1];
    let (cost2, wrss, rss) = if R {
        (cost2, wrss, rss_r)
    } else {
        let r = sum(rss2);
        (r, r, r)
    };
    *out = Normal::zero();
    for r in 0..K {
        let fr = full_index(r);
        out.g[fr] = sum(g[r]);
        for cc in r..K {
            let fc = full_index(cc);
            let v = sum(acc[r][cc]);
            out.a[fr][fc] = v;
            out.a[fc][fr] = v;
        }
        let (u_, v_) = (sum(cu[r]), sum(cv[r]));
        out.a[2][fr] = u_;
        out.a[fr][2] = u_;
        out.a[3][fr] = v_;
        out.a[fr][3] = v_;
    }
    out.g[2] = sum(g2);
    out.g[3] = sum(g3);
    if R {
        out.a[2][2] = sum(a22);
        out.a[3][3] = sum(a33);
    } else {
        out.a[2][2] = n as f64;
        out.a[3][3] = n as f64;
    }
    out.cost = 0.5 * cost2;
    out.wrss = wrss;
    out.rss = rss;
}
