#!/usr/bin/env python3
"""Baseline for the survey benchmark: the vortcat survey job written the way a researcher would
write it with numpy and scipy, one process.

    survey_numpy.py DIR OUT.csv [--processes N] [--limit N]

For every DIR/*.npz (arrays u, v as [y, x], coordinates x, y):

1. velocity gradient with numpy.gradient (2nd-order central differences inside, 1st-order at the
   edges; a NaN vector makes its neighbours' derivatives NaN);
2. swirling strength λci = sqrt(max(0, -((tr/2)² - det))) of the 2×2 gradient tensor, the
   imaginary part of its complex eigenvalues (Zhou et al. 1999, J. Fluid Mech. 387, 353-396);
3. threshold 1.5 × rms of λci over the computable points (NaN left out), the rule vortcat uses
   by default; a point belongs to a core where λci is strictly above it;
4. scipy.ndimage.label with 8-connectivity, regions of at least 9 cells kept;
5. per region: λci-weighted centroid, equivalent radius sqrt(area/π), a circular window of
   radius 3 × that (at least 3 grid spacings), the valid vectors inside it;
6. scipy.optimize.least_squares (Levenberg-Marquardt, analytic Jacobian) of a Lamb-Oseen vortex
   (x0, y0, uc, vc, Γ, rc) and of a Burgers vortex (the same plus γ, radial inflow -γ r/2),
   started from the centroid, the mean velocity in the window, Γ from the circulation in the
   window (Stokes: Σ ω dA), rc = equivalent radius and γ = -mean divergence over the region;
7. the model with the lower BIC = m ln(RSS/m) + k ln m (m residuals = 2 × vectors, k = fitted
   parameters + 1 for the noise variance) is reported, one CSV row per region.

Numpy does the per-point work; Python loops over files, regions and fits. With --processes N
> 1 the files are spread over a multiprocessing.Pool(N) (extra information only; the benchmark
runs one process).
"""

import argparse
import csv
import glob
import math
import os
import sys
import time

import numpy as np
from scipy import ndimage, optimize

RMS_MULTIPLE = 1.5
MIN_CELLS = 9
WINDOW_MULTIPLE = 3.0
MIN_WINDOW_SPACINGS = 3.0
MIN_VECTORS = 10
EIGHT = np.ones((3, 3), dtype=bool)
TWO_PI = 2.0 * math.pi

COLUMNS = [
    "file", "vortex", "model", "status", "x", "y", "circulation", "circulation_err",
    "core_radius", "core_radius_err", "strain_rate", "strain_rate_err", "conv_u", "conv_v", "n_points", "residual_rms", "r2",
    "bic_lamb_oseen", "bic_burgers", "detect_x", "detect_y", "equivalent_radius",
    "criterion_peak", "nfev",
]


# ---------------------------------------------------------------------------------------------
# Models. Coordinates are relative to the window centre, so that the centre parameters are
# small numbers of the size of the core. f(s) = (1 - exp(-s/rc²)) / (2π s) with s = r², so that
# u = uc - Γ f dy, v = vc + Γ f dx (counter-clockwise positive for Γ > 0).

def _core(s, rc):
    a = rc * rc
    q = s / a
    e = np.exp(-q)
    small = q < 1e-6
    with np.errstate(divide="ignore", invalid="ignore"):
        f = np.where(small, (1.0 - 0.5 * q) / a, -np.expm1(-q) / s) / TWO_PI
        # df/ds
        fp = np.where(small, (-0.5 + q / 3.0) / (a * a),
                      (e * q - (-np.expm1(-q))) / (s * s)) / TWO_PI
    return f, fp, e


def _unpack(p, burgers):
    x0, y0, uc, vc, gam, rc = p[:6]
    g = p[6] if burgers else 0.0
    return x0, y0, uc, vc, gam, rc, g


def residuals(p, x, y, u, v, burgers):
    x0, y0, uc, vc, gam, rc, g = _unpack(p, burgers)
    dx = x - x0
    dy = y - y0
    f, _, _ = _core(dx * dx + dy * dy, rc)
    ru = uc - gam * f * dy - 0.5 * g * dx - u
    rv = vc + gam * f * dx - 0.5 * g * dy - v
    return np.concatenate((ru, rv))


def jacobian(p, x, y, u, v, burgers):
    x0, y0, uc, vc, gam, rc, g = _unpack(p, burgers)
    dx = x - x0
    dy = y - y0
    s = dx * dx + dy * dy
    f, fp, e = _core(s, rc)
    n = x.size
    J = np.zeros((2 * n, 7 if burgers else 6))
    Ju = J[:n]
    Jv = J[n:]
    dfdrc = -e / (math.pi * rc ** 3)
    Ju[:, 0] = 2.0 * gam * fp * dx * dy + 0.5 * g
    Ju[:, 1] = gam * (2.0 * fp * dy * dy + f)
    Ju[:, 2] = 1.0
    Ju[:, 4] = -f * dy
    Ju[:, 5] = -gam * dy * dfdrc
    Jv[:, 0] = -gam * (2.0 * fp * dx * dx + f)
    Jv[:, 1] = -2.0 * gam * fp * dx * dy + 0.5 * g
    Jv[:, 3] = 1.0
    Jv[:, 4] = f * dx
    Jv[:, 5] = gam * dx * dfdrc
    if burgers:
        Ju[:, 6] = -0.5 * dx
        Jv[:, 6] = -0.5 * dy
    return J


def fit(p0, x, y, u, v, burgers):
    res = optimize.least_squares(
        residuals, p0, jac=jacobian, method="lm", x_scale="jac",
        ftol=1e-8, xtol=1e-8, gtol=1e-8, max_nfev=100 * (p0.size + 1),
        args=(x, y, u, v, burgers),
    )
    m = res.fun.size
    rss = float(res.fun @ res.fun)
    k = p0.size + 1
    bic = m * math.log(max(rss, 1e-300) / m) + k * math.log(m)
    return res, rss, bic


# ---------------------------------------------------------------------------------------------

def detect(u, v, x, y):
    """λci field, region labels and per-region geometry of one snapshot."""
    dudy, dudx = np.gradient(u, y, x)
    dvdy, dvdx = np.gradient(v, y, x)
    half_tr = 0.5 * (dudx + dvdy)
    det = dudx * dvdy - dudy * dvdx
    disc = half_tr * half_tr - det
    lci = np.sqrt(np.maximum(-disc, 0.0))        # NaN stays NaN
    lci[np.isnan(disc)] = np.nan
    thr = RMS_MULTIPLE * math.sqrt(np.nanmean(lci * lci))
    with np.errstate(invalid="ignore"):
        core = lci > thr
    labels, n = ndimage.label(core, structure=EIGHT)
    vort = dvdx - dudy
    div = dudx + dvdy
    return lci, vort, div, labels, n


def survey_file(path):
    with np.load(path) as d:
        u = np.asarray(d["u"], dtype=float)
        v = np.asarray(d["v"], dtype=float)
        x = np.asarray(d["x"], dtype=float)
        y = np.asarray(d["y"], dtype=float)
    dxg = abs(x[1] - x[0])
    dyg = abs(y[1] - y[0])
    spacing = min(dxg, dyg)
    cell_area = dxg * dyg
    lci, vort, div, labels, n = detect(u, v, x, y)
    rows = []
    if n == 0:
        return rows, 0
    index = np.arange(1, n + 1)
    cells = np.bincount(labels.ravel(), minlength=n + 1)[1:]
    keep = index[cells >= MIN_CELLS]
    if keep.size == 0:
        return rows, 0
    w = np.where(labels > 0, lci, 0.0)
    com = np.array(ndimage.center_of_mass(w, labels, keep))          # (row, col) fractional
    peaks = ndimage.maximum(lci, labels, keep)
    mean_div = ndimage.mean(div, labels, keep)
    cx = np.interp(com[:, 1], np.arange(x.size), x)
    cy = np.interp(com[:, 0], np.arange(y.size), y)
    req = np.sqrt(cells[keep - 1] * cell_area / math.pi)
    valid = np.isfinite(u) & np.isfinite(v)
    vort_dA = np.where(np.isfinite(vort), vort, 0.0) * cell_area
    ny, nx = u.shape
    fits = 0
    for i in range(keep.size):
        x_c, y_c, r_eq = cx[i], cy[i], req[i]
        R = max(WINDOW_MULTIPLE * r_eq, MIN_WINDOW_SPACINGS * spacing)
        ci, ri = com[i, 1], com[i, 0]
        c0 = max(int(math.floor(ci - R / dxg)) - 1, 0)
        c1 = min(int(math.ceil(ci + R / dxg)) + 2, nx)
        r0 = max(int(math.floor(ri - R / dyg)) - 1, 0)
        r1 = min(int(math.ceil(ri + R / dyg)) + 2, ny)
        X = x[c0:c1][None, :] - x_c
        Y = y[r0:r1][:, None] - y_c
        inside = X * X + Y * Y <= R * R
        sel = inside & valid[r0:r1, c0:c1]
        row = {
            "file": os.path.basename(path), "vortex": i + 1, "detect_x": x_c, "detect_y": y_c,
            "equivalent_radius": r_eq, "criterion_peak": peaks[i],
        }
        npts = int(sel.sum())
        row["n_points"] = npts
        if npts < MIN_VECTORS:
            row["status"] = "not_fitted"
            rows.append(row)
            continue
        Xs = np.broadcast_to(X, sel.shape)[sel]
        Ys = np.broadcast_to(Y, sel.shape)[sel]
        us = u[r0:r1, c0:c1][sel]
        vs = v[r0:r1, c0:c1][sel]
        gamma0 = float(vort_dA[r0:r1, c0:c1][inside].sum())        # Stokes over the window
        p0 = np.array([0.0, 0.0, us.mean(), vs.mean(), gamma0, r_eq])
        best = None
        bics = {}
        for name, burgers in (("lamb-oseen", False), ("burgers", True)):
            start = np.append(p0, -mean_div[i]) if burgers else p0
            try:
                res, rss, bic = fit(start, Xs, Ys, us, vs, burgers)
            except (ValueError, np.linalg.LinAlgError):
                continue
            fits += 1
            bics[name] = bic
            if best is None or bic < best[3]:
                best = (name, res, rss, bic)
        row["bic_lamb_oseen"] = bics.get("lamb-oseen")
        row["bic_burgers"] = bics.get("burgers")
        if best is None:
            row["status"] = "failed"
            rows.append(row)
            continue
        name, res, rss, _ = best
        p = res.x
        # standard errors from the Jacobian at the solution: cov = s² (JᵀJ)⁻¹
        m, k = res.fun.size, p.size
        try:
            cov = np.linalg.inv(res.jac.T @ res.jac) * (rss / max(m - k, 1))
            err = np.sqrt(np.abs(np.diag(cov)))
        except np.linalg.LinAlgError:
            err = np.full(k, np.nan)
        tss = float(((us - us.mean()) ** 2).sum() + ((vs - vs.mean()) ** 2).sum())
        row.update({
            "model": name,
            "status": "converged" if res.status > 0 else "not_converged",
            "x": x_c + p[0], "y": y_c + p[1], "conv_u": p[2], "conv_v": p[3],
            "circulation": p[4], "circulation_err": err[4],
            "core_radius": abs(p[5]), "core_radius_err": err[5],
            "strain_rate": p[6] if name == "burgers" else None,
            "strain_rate_err": err[6] if name == "burgers" else None,
            "residual_rms": math.sqrt(rss / npts), "r2": 1.0 - rss / tss if tss > 0 else None,
            "nfev": res.nfev,
        })
        rows.append(row)
    return rows, fits


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("dir")
    ap.add_argument("out")
    ap.add_argument("--processes", type=int, default=1,
                    help="multiprocessing.Pool size (default 1: one process)")
    ap.add_argument("--limit", type=int, default=0, help="only the first N files (sorted)")
    a = ap.parse_args()
    files = sorted(glob.glob(os.path.join(a.dir, "*.npz")))
    if a.limit > 0:
        files = files[: a.limit]
    if not files:
        sys.exit(f"survey_numpy.py: no .npz files in {a.dir}")
    t0 = time.perf_counter()
    if a.processes > 1:
        import multiprocessing
        with multiprocessing.Pool(a.processes) as pool:
            results = pool.map(survey_file, files, chunksize=4)
    else:
        results = [survey_file(f) for f in files]
    wall = time.perf_counter() - t0
    n_rows = 0
    n_fits = 0
    with open(a.out, "w", newline="") as fh:
        wr = csv.DictWriter(fh, fieldnames=COLUMNS, restval="")
        wr.writeheader()
        for rows, fits in results:
            n_fits += fits
            for r in rows:
                wr.writerow({k: ("" if val is None else val) for k, val in r.items()})
                n_rows += 1
    print(f"survey_numpy: {len(files)} snapshots, {n_rows} vortices, {n_fits} fits, "
          f"{wall:.2f} s ({a.processes} process{'es' if a.processes > 1 else ''})")


if __name__ == "__main__":
    main()
