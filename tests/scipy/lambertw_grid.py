#!/usr/bin/env python3
"""Writes tests/data/lambertw/scipy_grid.csv: the principal branch W0(z) from
SciPy's ``scipy.special.lambertw(z, k=0)`` on a grid from just above -1/e to
1e300, for the Rust check in tests/traces.rs (``lambert_w_matches_scipy``).

The grid: 60 points in (-1/e, 0) packed towards the branch point, 0, and 200
log-spaced points from 1e-12 to 1e300. Values are written with '%.17g' so
they survive the round trip exactly.

Usage:  python3 tests/scipy/lambertw_grid.py   (prints the row count)
Pinned versions: tests/scipy/requirements.txt.
"""
from pathlib import Path
import numpy as np
import scipy
from scipy.special import lambertw

out = Path(__file__).resolve().parents[1] / "data" / "lambertw" / "scipy_grid.csv"
branch = -1.0 / np.e
neg = branch + (-branch) * (np.linspace(0.0, 1.0, 62)[1:-1] ** 3)
pos = np.logspace(-12, 300, 200)
z = np.concatenate([neg, [0.0], pos])
w = lambertw(z, k=0)
assert np.all(np.abs(w.imag) == 0.0)
with out.open("w") as f:
    f.write(f"# scipy.special.lambertw(z, k=0), SciPy {scipy.__version__}, numpy {np.__version__}\n")
    f.write("z,w\n")
    for a, b in zip(z, w.real):
        f.write(f"{a:.17g},{b:.17g}\n")
print(f"{len(z)} rows written to {out}")
