#!/usr/bin/env python3
"""Reference fits for vortcat-fit with scipy.optimize.least_squares.

Usage: fit_scipy.py OUTDIR

Generates a few windows of synthetic PIV-like data (Lamb-Oseen and Burgers vortices on a
square grid, Gaussian noise with sigma = 5 % of the peak azimuthal velocity on each
component), fits them with scipy.optimize.least_squares from given start values with tight
tolerances, and writes for each case CASE_{x,y,u,v}.npy (the valid vectors inside the window)
and CASE.json (model, window, start vector, fitted vector, loss). It also times the fit of a
700-vector window (the Rust benchmark case) with scipy's default tolerances and writes
timing.json.

Parameter vector (same order as vortcat-fit): x0, y0, uc, vc, circulation, core_radius
[, strain_rate].  Model (Oseen 1912; Lamb 1932; Burgers 1948):
  u_theta = G/(2 pi r) (1 - exp(-r^2/rc^2)),  u_r = -gamma r / 2 (Burgers only).
Needs numpy and scipy only.
"""
import json
import os
import sys
import time

import numpy as np
from scipy.optimize import least_squares

TWO_PI = 2.0 * np.pi
PEAK_FACTOR = 0.6381726863389515  # (1 - e^-t)/sqrt(t) at the root of 1 + 2t = e^t


def model(p, x, y, burgers):
    """Velocity (u, v) and Jacobian (2N x P) of the model at the samples."""
    x0, y0, uc, vc, gam, rc = p[:6]
    strain = p[6] if burgers else 0.0
    dx, dy = x - x0, y - y0
    s = dx * dx + dy * dy
    a = rc * rc
    t = s / a
    e = np.exp(-t)
    om = -np.expm1(-t)
    small = t < 1e-3
    s_safe = np.where(small, 1.0, s)
    g = np.where(small, (1 - t / 2 + t * t / 6) / a, om / s_safe)
    dg_ds = np.where(small, (-0.5 + t / 3) / (a * a), (t * e - om) / (s_safe * s_safe))
    dg_da = -e / (a * a)
    c = gam / TWO_PI
    k, dk = c * g, c * dg_ds
    m = -0.5 * strain
    u = -k * dy + m * dx + uc
    v = k * dx + m * dy + vc
    # derivatives with respect to dx, dy
    du_dx = -dk * 2 * dx * dy + m
    du_dy = -k - dk * 2 * dy * dy
    dv_dx = k + dk * 2 * dx * dx
    dv_dy = dk * 2 * dx * dy + m
    dk_dg = g / TWO_PI
    dk_drc = c * dg_da * 2 * rc
    cols_u = [-du_dx, -du_dy, np.ones_like(x), np.zeros_like(x), -dk_dg * dy, -dk_drc * dy]
    cols_v = [-dv_dx, -dv_dy, np.zeros_like(x), np.ones_like(x), dk_dg * dx, dk_drc * dx]
    if burgers:
        cols_u.append(-0.5 * dx)
        cols_v.append(-0.5 * dy)
    jac = np.vstack([np.column_stack(cols_u), np.column_stack(cols_v)])
    return u, v, jac


def make_case(rng, burgers, gam, rc, strain, centre, conv, h=0.1, radius=1.5):
    n = int(round(1.6 / h))
    gx, gy = np.meshgrid(np.arange(-n, n + 1) * h, np.arange(-n, n + 1) * h)
    gx, gy = gx.ravel(), gy.ravel()
    inside = gx * gx + gy * gy <= radius * radius
    x, y = gx[inside], gy[inside]
    p = [centre[0], centre[1], conv[0], conv[1], gam, rc] + ([strain] if burgers else [])
    u, v, _ = model(np.array(p), x, y, burgers)
    sigma = 0.05 * PEAK_FACTOR * abs(gam) / (TWO_PI * rc)
    u = u + rng.normal(0.0, sigma, x.size)
    v = v + rng.normal(0.0, sigma, x.size)
    return x, y, u, v, np.array(p), sigma


def fit(x, y, u, v, start, burgers, loss="linear", f_scale=1.0, tol=1e-14, method=None):
    def fun(p):
        mu, mv, _ = model(p, x, y, burgers)
        return np.concatenate([mu - u, mv - v])

    def jac(p):
        return model(p, x, y, burgers)[2]

    if method is None:
        method = "lm" if loss == "linear" else "trf"
    return least_squares(fun, start, jac=jac, method=method, loss=loss, f_scale=f_scale,
                         xtol=tol, ftol=tol, gtol=tol, max_nfev=10000)


def main():
    if len(sys.argv) != 2:
        sys.exit(__doc__)
    out = sys.argv[1]
    os.makedirs(out, exist_ok=True)
    rng = np.random.default_rng(20261201)
    cases = [
        ("lo_a", False, 1.3, 0.45, 0.0, (0.04, -0.03), (0.10, -0.05), "linear"),
        ("lo_b", False, -0.8, 0.30, 0.0, (-0.06, 0.02), (0.00, 0.03), "linear"),
        ("bu_a", True, 1.0, 0.40, 0.6, (0.02, 0.05), (-0.04, 0.02), "linear"),
        ("bu_b", True, -1.5, 0.50, 1.5, (-0.03, -0.04), (0.05, 0.05), "linear"),
        ("lo_softl1", False, 1.1, 0.40, 0.0, (0.01, 0.02), (0.02, 0.00), "soft_l1"),
    ]
    names = []
    for name, burgers, gam, rc, strain, centre, conv, loss in cases:
        x, y, u, v, truth, sigma = make_case(rng, burgers, gam, rc, strain, centre, conv)
        f_scale = 1.0
        if loss != "linear":
            k = rng.choice(x.size, size=x.size // 20, replace=False)  # 5 % spurious vectors
            peak = PEAK_FACTOR * abs(gam) / (TWO_PI * rc)
            u[k] = rng.uniform(-2, 2, k.size) * peak
            v[k] = rng.uniform(-2, 2, k.size) * peak
            f_scale = 3.0 * sigma
        start = truth.copy()
        start[0] += 0.05
        start[1] -= 0.04
        start[2] = 0.0
        start[3] = 0.0
        start[4] *= 0.8
        start[5] *= 1.25
        if burgers:
            start[6] = 0.0
        res = fit(x, y, u, v, start, burgers, loss, f_scale)
        for comp, arr in zip("xyuv", (x, y, u, v)):
            np.save(os.path.join(out, f"{name}_{comp}.npy"), arr)
        with open(os.path.join(out, f"{name}.json"), "w") as fh:
            json.dump({
                "model": "burgers" if burgers else "lamb-oseen",
                "window_centre": [0.0, 0.0], "window_radius": 1.5, "spacing": 0.1,
                "loss": loss, "f_scale": f_scale, "noise_sigma": sigma,
                "truth": truth.tolist(), "start": start.tolist(), "fitted": res.x.tolist(),
                "status": int(res.status), "nfev": int(res.nfev), "cost": float(res.cost),
                "n_vectors": int(x.size),
            }, fh, indent=1)
        names.append(name)
    with open(os.path.join(out, "cases.json"), "w") as fh:
        json.dump(names, fh)

    # Timing of the benchmark case: ~700 vectors, analytic Jacobian, default tolerances (1e-8),
    # method 'lm' (MINPACK); start values as the Rust benchmark (truth perturbed as above).
    timing = {}
    for name, burgers in (("lamb_oseen", False), ("burgers", True)):
        x, y, u, v, truth, _ = make_case(rng, burgers, 1.0, 0.5, 0.8 if burgers else 0.0,
                                         (0.03, -0.02), (0.05, 0.0))
        start = truth.copy()
        start[0] += 0.05
        start[4] *= 0.8
        start[5] *= 1.25
        if burgers:
            start[6] = 0.0
        reps = 200
        t0 = time.perf_counter()
        for _ in range(reps):
            res = fit(x, y, u, v, start, burgers, tol=1e-8)
        dt = (time.perf_counter() - t0) / reps
        timing[name] = {"seconds_per_fit": dt, "n_vectors": int(x.size), "nfev": int(res.nfev)}
        print(f"scipy least_squares {name}: {dt * 1e6:.0f} us per fit, {x.size} vectors, "
              f"{res.nfev} evaluations")
    with open(os.path.join(out, "timing.json"), "w") as fh:
        json.dump(timing, fh, indent=1)


if __name__ == "__main__":
    main()
