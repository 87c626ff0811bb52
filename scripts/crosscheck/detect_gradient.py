#!/usr/bin/env python3
"""Reference derivatives for vortcat-detect: numpy.gradient on analytic fields plus noise.

Usage: detect_gradient.py OUTDIR

Writes, for each case NAME:
  NAME_f.npy        input samples (float64; 2D cases [ny, nx], 3D cases [nz, ny, nx])
  NAME_spacing.npy  signed spacings in array-axis order ([dy, dx] or [dz, dy, dx])
  NAME_d{A}_e{E}.npy  numpy.gradient(f, *spacing, axis=A, edge_order=E)
numpy.gradient needs at least edge_order + 1 samples along an axis, so 2-point axes only get
edge_order=1. The 3D input is rounded to float32 first (vortcat volumes are float32) and the
derivative is taken of the float64 promotion, as vortcat does.
"""
import os
import sys

import numpy as np


def cases(rng):
    # (name, shape, spacings in array-axis order, origin)
    specs = [
        ("plane_odd", (7, 11), (-0.52, 0.37)),   # y axis pointing down, non-unit spacing
        ("plane_small", (3, 5), (2.0, -1.5)),    # x decreasing with index
        ("plane_thin", (2, 9), (0.25, 0.1)),     # two rows: edge_order=1 only along y
        ("plane_square", (16, 16), (1e-3, 1e-3)),
        ("volume_odd", (5, 6, 7), (0.3, -0.45, 0.2)),
    ]
    for name, shape, spacing in specs:
        coords = np.meshgrid(*[0.1 + np.arange(n) * h for n, h in zip(shape, spacing)], indexing="ij")
        if len(shape) == 2:
            y, x = coords
            f = np.sin(3.0 * x / (shape[1] * abs(spacing[1]))) * np.cos(2.0 * y / (shape[0] * abs(spacing[0]))) + x * y
        else:
            z, y, x = coords
            f = np.sin(x + 0.5 * y) * np.cos(z) + 0.3 * x * z
        f = f + 0.05 * rng.standard_normal(shape)
        if len(shape) == 3:
            f = f.astype(np.float32).astype(np.float64)
        yield name, f, spacing


def main():
    if len(sys.argv) != 2:
        sys.exit("usage: detect_gradient.py OUTDIR")
    out = sys.argv[1]
    os.makedirs(out, exist_ok=True)
    rng = np.random.default_rng(20011422)
    for name, f, spacing in cases(rng):
        np.save(os.path.join(out, f"{name}_f.npy"), f)
        np.save(os.path.join(out, f"{name}_spacing.npy"), np.asarray(spacing, dtype=np.float64))
        for axis in range(f.ndim):
            for edge in (1, 2):
                if f.shape[axis] < edge + 1:
                    continue
                d = np.gradient(f, spacing[axis], axis=axis, edge_order=edge)
                np.save(os.path.join(out, f"{name}_d{axis}_e{edge}.npy"), d)


if __name__ == "__main__":
    main()
