#!/usr/bin/env python3
"""Write a 1 GiB HDF5 stack with h5py, one chunk per snapshot, without holding it in memory.

Usage: big_stack.py OUT.h5 — prints {"nt", "ny", "nx", "bytes"} as JSON.
"""
import json
import os
import sys

import h5py
import numpy as np

nt, ny, nx = 64, 1024, 1024  # u and v as float64: 64 x 2 x 8 MiB = 1 GiB
path = sys.argv[1]
with h5py.File(path, "w") as f:
    du = f.create_dataset("u", (nt, ny, nx), dtype="f8", chunks=(1, ny, nx))
    dv = f.create_dataset("v", (nt, ny, nx), dtype="f8", chunks=(1, ny, nx))
    f.create_dataset("x", data=1e-3 * np.arange(nx))
    f.create_dataset("y", data=1e-3 * np.arange(ny))
    base = np.sin(np.linspace(0, 20, nx))[None, :] * np.cos(np.linspace(0, 20, ny))[:, None]
    for t in range(nt):
        du[t] = base + 1e-3 * t
        dv[t] = -base
print(json.dumps({"nt": nt, "ny": ny, "nx": nx, "bytes": os.path.getsize(path)}))
