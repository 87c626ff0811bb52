#!/usr/bin/env python3
"""Summary of one survey benchmark run (called by scripts/bench survey).

    bench_report.py --snapshots N --truth truth.csv \
        --vortcat-time TIME.txt --vortcat-catalog catalog.csv \
        --python-time TIME.txt --python-catalog OUT.csv --python-snapshots M \
        [--pool-time TIME.txt --pool-processes 2]

TIME.txt files are the stderr of `/usr/bin/time -v`. Rates are per wall-clock second, end to
end (process start to exit). "fits" are model fits: every fitted vortex gets a Lamb-Oseen and
a Burgers fit, so fits = 2 × vortices with a fitted model. When the Python baseline ran on the
first M < N snapshots only, its rates are per snapshot of that subset and the ratio compares
rates, not totals. Sanity: each catalog's vortices are matched to the truth table (nearest true
centre of the same snapshot within one true core radius).
"""

import argparse
import csv
import math
import os
import re
from collections import defaultdict


def gnu_time(path):
    text = open(path).read()
    wall = re.search(r"Elapsed \(wall clock\) time \(h:mm:ss or m:ss\): (\S+)", text).group(1)
    secs = 0.0
    for part in wall.split(":"):
        secs = secs * 60.0 + float(part)
    rss = int(re.search(r"Maximum resident set size \(kbytes\): (\d+)", text).group(1))
    user = float(re.search(r"User time \(seconds\): (\S+)", text).group(1))
    sys_ = float(re.search(r"System time \(seconds\): (\S+)", text).group(1))
    cpu = re.search(r"Percent of CPU this job got: (\S+)", text).group(1)
    return {"wall": secs, "rss_mib": rss / 1024.0, "user": user, "sys": sys_, "cpu": cpu}


def truth_table(path, limit):
    by_file = defaultdict(list)
    with open(path, newline="") as fh:
        for r in csv.DictReader(fh):
            by_file[os.path.basename(r["source"])].append(
                (float(r["x"]), float(r["y"]), float(r["core_radius"]), float(r["circulation"])))
    files = sorted(by_file)[:limit]
    return {f: by_file[f] for f in files}


def catalog(path, file_col, x_col, y_col, model_col, gamma_col, rc_col, files):
    rows = []
    with open(path, newline="") as fh:
        for r in csv.DictReader(fh):
            f = os.path.basename(r[file_col].split("#")[0])
            if f in files:
                rows.append(r | {"_file": f})
    out = []
    for r in rows:
        def num(c):
            try:
                return float(r[c])
            except (TypeError, ValueError):
                return math.nan
        out.append((r["_file"], num(x_col), num(y_col), r[model_col], num(gamma_col),
                    num(rc_col)))
    return out


def match(rows, truth):
    """Vortices within one true core radius of a true centre, distinct true vortices found,
    median relative errors of Γ and rc over the matched ones."""
    found = set()
    matched = 0
    eg, er = [], []
    for f, x, y, model, g, rc in rows:
        if not (math.isfinite(x) and math.isfinite(y)):
            continue
        best = None
        for k, (tx, ty, trc, tg) in enumerate(truth.get(f, [])):
            d = math.hypot(x - tx, y - ty)
            if d <= trc and (best is None or d < best[0]):
                best = (d, k, trc, tg)
        if best is None:
            continue
        matched += 1
        found.add((f, best[1]))
        if math.isfinite(g):
            eg.append(abs(g - best[3]) / abs(best[3]))
        if math.isfinite(rc):
            er.append(abs(rc - best[2]) / best[2])
    med = lambda a: sorted(a)[len(a) // 2] if a else math.nan
    return matched, len(found), med(eg), med(er)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--snapshots", type=int, required=True)
    ap.add_argument("--truth", required=True)
    ap.add_argument("--vortcat-time", required=True, nargs="+",
                    help="one TIME.txt per vortcat run; the run of median wall time is used")
    ap.add_argument("--vortcat-catalog", required=True)
    ap.add_argument("--python-time", required=True)
    ap.add_argument("--python-catalog", required=True)
    ap.add_argument("--python-snapshots", type=int, required=True)
    ap.add_argument("--pool-time")
    ap.add_argument("--pool-processes", type=int, default=2)
    ap.add_argument("--target", type=float, default=50.0)
    a = ap.parse_args()

    n, m = a.snapshots, a.python_snapshots
    truth_all = truth_table(a.truth, n)
    truth_py = {f: truth_all[f] for f in sorted(truth_all)[:m]}
    n_true = sum(len(v) for v in truth_all.values())
    n_true_py = sum(len(v) for v in truth_py.values())

    runs = sorted((gnu_time(f) for f in a.vortcat_time), key=lambda t: t["wall"])
    vt = runs[(len(runs) - 1) // 2]
    pt = gnu_time(a.python_time)
    vrows = catalog(a.vortcat_catalog, "file", "x", "y", "model", "circulation", "core_radius",
                    set(truth_all))
    prows = catalog(a.python_catalog, "file", "x", "y", "model", "circulation", "core_radius",
                    set(truth_py))
    v_fitted = sum(1 for r in vrows if r[3])
    p_fitted = sum(1 for r in prows if r[3])
    # the same comparison on the Python subset, for vortcat too
    vrows_sub = [r for r in vrows if r[0] in truth_py]

    def line(name, t, snaps, fitted, rows):
        sps = snaps / t["wall"]
        fps = 2 * fitted / t["wall"]
        print(f"  {name:<28} {snaps:>5} snapshots  {len(rows):>6} vortices ({fitted} fitted)  "
              f"wall {t['wall']:8.2f} s  cpu {t['user'] + t['sys']:8.2f} s ({t['cpu']})  "
              f"{sps:8.2f} snapshots/s  {fps:9.1f} fits/s  peak RSS {t['rss_mib']:7.1f} MiB")
        return sps, fps

    print("survey benchmark (end to end, /usr/bin/time -v; fits = model fits, 2 per fitted vortex)")
    v_sps, v_fps = line("vortcat survey --threads 2", vt, n, v_fitted, vrows)
    if len(runs) > 1:
        walls = ", ".join(f"{t['wall']:.2f}" for t in runs)
        print(f"  (vortcat: the run of median wall time of {len(runs)}; walls {walls} s)")
    p_sps, p_fps = line("numpy/scipy, 1 process", pt, m, p_fitted, prows)
    if a.pool_time:
        line(f"numpy/scipy, Pool({a.pool_processes})", gnu_time(a.pool_time), m, p_fitted, prows)
    if m < n:
        print(f"  NOTE: the Python baseline ran on the first {m} of {n} snapshots; its rates are "
              f"per snapshot of that subset (extrapolated to {n}: {n / p_sps:.0f} s)")
    ratio = v_sps / p_sps
    verdict = "met" if ratio >= a.target else "MISSED"
    print(f"  ratio (snapshots/s): {ratio:.1f}x   (fits/s: {v_fps / p_fps:.1f}x)   "
          f"target >= {a.target:g}x: {verdict}")
    print("sanity against the truth table (match = within one true core radius of a true centre):")
    for name, rows, truth, nt in (("vortcat", vrows, truth_all, n_true),
                                  ("vortcat, Python's subset", vrows_sub, truth_py, n_true_py),
                                  ("numpy/scipy", prows, truth_py, n_true_py)):
        if name.endswith("subset") and m == n:
            continue
        matched, distinct, eg, er = match(rows, truth)
        print(f"  {name:<26} {len(rows):>6} vortices of {nt} true; {matched} matched, "
              f"{distinct} true vortices found; median |dGamma|/Gamma {eg:.3f}, "
              f"|drc|/rc {er:.3f}")


if __name__ == "__main__":
    main()
