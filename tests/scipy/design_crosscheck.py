#!/usr/bin/env python3
"""Cross-check of the predicted precision of ``turnover design`` against SciPy.

Reference library: SciPy ``scipy.optimize.curve_fit`` with
``absolute_sigma=True``, whose covariance is (J^T W J)^-1 with W = 1/sigma^2
computed by SciPy itself (an SVD of the weighted Jacobian), and
``scipy.stats.t.ppf`` for the 95% interval width 2 t(0.975, n - p) SE.

For each plan, Turnover's recommended concentrations and replicates are
read from ``turnover design --json --simulations 0``; the wells are written
out here, the rates are the model's exact values at the guessed constants
(the rate laws are written here independently), sigma is the noise model's
(a constant, or the fraction times the exact rate), and curve_fit is
started at the guesses, where the exact data put the optimum. Its
covariance at that point is the Fisher-information prediction, so
Turnover's ``predicted`` standard errors and interval widths must agree to
1e-6 relative (the finite-difference Jacobian here limits the agreement).

The constants are invented; nothing is measured.

Usage:  python3 tests/scipy/design_crosscheck.py
Environment: TURNOVER_BIN (default <repo>/target/release/turnover)
Last line: "N passed, N failed"; exit status 1 on any failure.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
from scipy import optimize, stats

REPO_ROOT = Path(__file__).resolve().parents[2]
BIN = Path(os.environ.get("TURNOVER_BIN", REPO_ROOT / "target" / "release" / "turnover"))
TOL = 1e-6


def mm(x, vmax, km):
    return vmax * x[0] / (km + x[0])


def hill(x, vmax, k, n):
    u = (x[0] / k) ** n
    return vmax * u / (1 + u)


def substrate_inhibition(x, vmax, km, ksi):
    s = x[0]
    return vmax * s / (km + s + s * s / ksi)


def logistic(x, bottom, top, ic50, slope):
    return bottom + (top - bottom) / (1 + (x[0] / ic50) ** slope)


def mixed_law(s, i, vmax, km, kic, kiu):
    return vmax * s / (km * (1 + i / kic) + s * (1 + i / kiu))


def competitive(x, vmax, km, kic):
    return mixed_law(x[0], x[1], vmax, km, kic, np.inf)


def uncompetitive(x, vmax, km, kiu):
    return mixed_law(x[0], x[1], vmax, km, np.inf, kiu)


def noncompetitive(x, vmax, km, ki):
    return mixed_law(x[0], x[1], vmax, km, ki, ki)


def mixed(x, vmax, km, kic, kiu):
    return mixed_law(x[0], x[1], vmax, km, kic, kiu)


# (name, CLI arguments, rate law, constants in the model's order, noise)
PLANS = [
    ("mm constant", ["--model", "mm", "--guess", "Vmax=10,Km=5", "--noise", "0.2"], mm, [10, 5], ("constant", 0.2)),
    ("mm proportional", ["--model", "mm", "--guess", "Vmax=10,Km=5", "--noise", "5%", "--points", "6", "--replicates", "3"], mm, [10, 5], ("proportional", 0.05)),
    ("mm capped", ["--model", "mm", "--guess", "Vmax=10,Km=50", "--noise", "4%", "--max-s", "40"], mm, [10, 50], ("proportional", 0.04)),
    ("hill", ["--model", "hill", "--guess", "Vmax=10,K0.5=5,nH=2", "--noise", "3%"], hill, [10, 5, 2], ("proportional", 0.03)),
    ("substrate-inhibition", ["--model", "substrate-inhibition", "--guess", "Vmax=10,Km=5,Ksi=50", "--noise", "0.3"], substrate_inhibition, [10, 5, 50], ("constant", 0.3)),
    ("ic50", ["--model", "ic50", "--guess", "floor=2,ceiling=100,IC50=0.3,steepness=1.2", "--noise", "2", "--points", "10"], logistic, [2, 100, 0.3, 1.2], ("constant", 2.0)),
    ("competitive", ["--model", "competitive", "--guess", "Vmax=10,Km=5,Kic=2", "--noise", "5%"], competitive, [10, 5, 2], ("proportional", 0.05)),
    ("uncompetitive", ["--model", "uncompetitive", "--guess", "Vmax=10,Km=5,Kiu=2", "--noise", "0.2"], uncompetitive, [10, 5, 2], ("constant", 0.2)),
    ("noncompetitive", ["--model", "noncompetitive", "--guess", "Vmax=10,Km=5,Ki=2", "--noise", "5%", "--inhibitor-points", "5"], noncompetitive, [10, 5, 2], ("proportional", 0.05)),
    ("mixed", ["--model", "mixed", "--guess", "Vmax=10,Km=5,Kic=2,Kiu=6", "--noise", "5%"], mixed, [10, 5, 2, 6], ("proportional", 0.05)),
]


def numeric_jacobian(f):
    def jac(x, *p):
        p = np.asarray(p, float)
        cols = []
        for j in range(len(p)):
            h = 1e-6 * max(abs(p[j]), 1e-3)
            up, down = p.copy(), p.copy()
            up[j] += h
            down[j] -= h
            cols.append((f(x, *up) - f(x, *down)) / (2 * h))
        return np.column_stack(cols)

    return jac


def main() -> int:
    passed = failed = 0
    for name, args, law, truth, (kind, level) in PLANS:
        out = subprocess.run([str(BIN), "design", *args, "--simulations", "0", "--json"], capture_output=True, text=True)
        if out.returncode != 0:
            print(f"FAIL {name}: turnover exited {out.returncode}: {out.stderr.strip()}")
            failed += 1
            continue
        plan = json.loads(out.stdout)
        reps = plan["replicates"]
        first = plan["concentrations"]
        second = plan["inhibitor_concentrations"]
        if second:
            wells = [(s, i) for i in second for s in first for _ in range(reps)]
        else:
            wells = [(c, 0.0) for c in first for _ in range(reps)]
        x = np.array(wells, float).T
        y = law(x, *truth)
        sigma = np.full_like(y, level) if kind == "constant" else level * np.abs(y)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            popt, pcov = optimize.curve_fit(
                law, x, y, p0=truth, sigma=sigma, absolute_sigma=True, jac=numeric_jacobian(law), method="lm", xtol=1e-15, ftol=1e-15
            )
        se = np.sqrt(np.diag(pcov))
        n, p = y.size, len(truth)
        width = 2 * stats.t.ppf(0.975, n - p) * se
        for k, pred in enumerate(plan["predicted"]):
            for what, theirs, ours in [("std_error", se[k], pred["std_error"]), ("ci_width", width[k], pred["ci_width"])]:
                rel = abs(ours - theirs) / abs(theirs)
                if rel <= TOL:
                    passed += 1
                else:
                    failed += 1
                    print(f"FAIL {name} {pred['name']} {what}: turnover {ours!r}, scipy {theirs!r} (relative {rel:.2e})")
        print(f"{name}: {n} wells, SE " + ", ".join(f"{q['name']} {q['std_error']:.5g}" for q in plan["predicted"]))
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
