#!/usr/bin/env python3
"""Write velocity files with the reference libraries (numpy, h5py, netCDF4) for vortcat's readers.

Usage: field_files.py OUTDIR [--small]

Every file holds the same deterministic field (a Lamb-Oseen vortex convected through a uniform
flow, plus a smooth perturbation so that no two values coincide), written the way each library
writes it by default or with the option named in the file name. Reference arrays go to
OUTDIR/ref_*.npy as float64 C-order arrays, written by numpy.save; the Rust test reads those
with ndarray-npy (not with vortcat's reader) and compares value for value.

--small writes the tiny versions committed under fixtures/ (see fixtures/README.md).
"""
import csv
import os
import sys

import numpy as np


def field(nt, ny, nx, dx, dy, x0, y0):
    x = x0 + dx * np.arange(nx)
    y = y0 + dy * np.arange(ny)
    X, Y = np.meshgrid(x, y)  # shape (ny, nx): u[y, x]
    gamma, rc = 2.0e-3, 4.0 * abs(dx)
    u = np.empty((nt, ny, nx))
    v = np.empty((nt, ny, nx))
    for t in range(nt):
        xc = x[nx // 2] + 0.3 * dx * t
        yc = y[ny // 2]
        rx, ry = X - xc, Y - yc
        r2 = rx**2 + ry**2
        r2 = np.where(r2 == 0.0, 1e-30, r2)
        k = gamma / (2 * np.pi * r2) * (1 - np.exp(-r2 / rc**2))
        u[t] = 0.05 - k * ry + 1e-3 * np.sin(0.37 * X / dx + t)
        v[t] = k * rx + 1e-3 * np.cos(0.23 * Y / dy - t)
    return x, y, u, v


def main():
    out = sys.argv[1]
    small = "--small" in sys.argv
    os.makedirs(out, exist_ok=True)
    if small:
        nt, ny, nx = 3, 6, 5
    else:
        nt, ny, nx = 50, 128, 96  # the acceptance case of the foundation issue
    dx, dy, x0, y0 = 1.0e-3, 1.0e-3, -0.02, 0.01
    x, y, u, v = field(nt, ny, nx, dx, dy, x0, y0)
    # One invalid vector in snapshot 1, as PIV software writes it (NaN).
    u[1, 2, 3] = np.nan
    v[1, 2, 3] = np.nan

    for name, a in [("u", u), ("v", v), ("x", x), ("y", y)]:
        np.save(os.path.join(out, f"ref_{name}.npy"), np.ascontiguousarray(a, dtype="<f8"))

    # NumPy: one stacked array with a component axis, C order, Fortran order, big-endian.
    stacked = np.stack([u, v], axis=1)  # (nt, 2, ny, nx)
    np.save(os.path.join(out, "stack_c.npy"), stacked)
    np.save(os.path.join(out, "stack_fortran.npy"), np.asfortranarray(stacked))
    np.save(os.path.join(out, "stack_bigendian.npy"), stacked.astype(">f8"))
    np.save(os.path.join(out, "stack_float32.npy"), stacked.astype("<f4"))
    # NumPy: a folder of per-component files with coordinates.
    comp = os.path.join(out, "components")
    os.makedirs(comp, exist_ok=True)
    for name, a in [("u", u), ("v", v), ("x", x), ("y", y)]:
        np.save(os.path.join(comp, f"{name}.npy"), a)
    np.savez(os.path.join(out, "arrays.npz"), u=u, v=v, x=x, y=y)
    np.savez_compressed(os.path.join(out, "arrays_compressed.npz"), u=u, v=v, x=x, y=y)

    import h5py

    # h5py: chunked, gzip-compressed stack with coordinate datasets and unit attributes.
    with h5py.File(os.path.join(out, "stack_gzip.h5"), "w") as f:
        for name, a in [("u", u), ("v", v)]:
            d = f.create_dataset(name, data=a, chunks=(1, ny, nx), compression="gzip", compression_opts=4)
            d.attrs["units"] = "m/s"
        f.create_dataset("x", data=x).attrs["units"] = "m"
        f.create_dataset("y", data=y).attrs["units"] = "m"
        f.create_dataset("t", data=0.01 * np.arange(nt))
    # h5py: nested group paths, float32 and int16 data, spacing attributes instead of coordinates.
    with h5py.File(os.path.join(out, "nested_attrs.h5"), "w") as f:
        g = f.create_group("piv/frame")
        g.create_dataset("U", data=u.astype("f4"))
        g.create_dataset("V", data=v.astype("f4"))
        f.attrs["dx"] = dx
        f.attrs["dy"] = dy
        f.attrs["x0"] = x0
        f.attrs["y0"] = y0
    with h5py.File(os.path.join(out, "integers.h5"), "w") as f:
        f.create_dataset("u", data=np.round(np.nan_to_num(u[0]) * 1e4).astype("i2"))
        f.create_dataset("v", data=np.round(np.nan_to_num(v[0]) * 1e4).astype("i2"))
    np.save(os.path.join(out, "ref_u_int16.npy"), np.round(np.nan_to_num(u[0]) * 1e4).astype("<f8"))
    # Column-major layout as MATLAB v7.3 writes it: MATLAB's u(y, x, t) stored reversed,
    # (t, x, y), in an HDF5 file with a 512-byte user block.
    with h5py.File(os.path.join(out, "matlab_like.mat"), "w", userblock_size=512) as f:
        f.create_dataset("u", data=np.ascontiguousarray(u.transpose(0, 2, 1)))
        f.create_dataset("v", data=np.ascontiguousarray(v.transpose(0, 2, 1)))
        # MATLAB stores vectors as 2D (1 x n) matrices, reversed to (n, 1) on disk.
        f.create_dataset("x", data=x.reshape(nx, 1).T.copy().T)
        f.create_dataset("y", data=y.reshape(ny, 1).T.copy().T)

    import netCDF4

    with netCDF4.Dataset(os.path.join(out, "flow.nc"), "w", format="NETCDF4") as nc:
        nc.createDimension("time", nt)
        nc.createDimension("y", ny)
        nc.createDimension("x", nx)
        vx = nc.createVariable("x", "f8", ("x",))
        vx[:] = x
        vx.units = "m"
        vy = nc.createVariable("y", "f8", ("y",))
        vy[:] = y
        vy.units = "m"
        for name, a in [("u", u), ("v", v)]:
            var = nc.createVariable(name, "f8", ("time", "y", "x"), zlib=True)
            var.units = "m/s"
            var[:] = np.ma.masked_invalid(a)

    # CSV of snapshot 0 with rows shuffled and one empty (missing) value.
    rng = np.random.default_rng(7)
    X, Y = np.meshgrid(x, y)
    rows = np.column_stack([X.ravel(), Y.ravel(), u[0].ravel(), v[0].ravel()])
    order = rng.permutation(len(rows))
    with open(os.path.join(out, "snapshot0.csv"), "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["x", "y", "u", "v"])
        for i in order:
            xr, yr, ur, vr = rows[i]
            w.writerow([repr(float(c)) for c in (xr, yr, ur, vr)])
    # The same snapshot as whitespace-separated text with custom column names.
    with open(os.path.join(out, "snapshot0.dat"), "w") as fh:
        fh.write("X_m Y_m Vx Vy\n")
        for i in order[::-1]:
            fh.write(" ".join(repr(float(c)) for c in rows[i]) + "\n")


if __name__ == "__main__":
    main()
