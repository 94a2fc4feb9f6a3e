#!/usr/bin/env python3
"""Cross-check of ``turnover fit FILE --group-by compound --model ic50
--shared-slope`` against SciPy.

Reference library: SciPy ``scipy.optimize.curve_fit`` (method='lm', tight
tolerances) on the stacked problem written here independently of the Rust
code: every curve's rows in one least-squares fit of

    y = bottom_k + (top_k - bottom_k) / (1 + (I / IC50_k)^h)

with bottom_k, top_k, IC50_k per curve (or bottom and top fixed at 0 and
100 with --floor 0 --ceiling 100) and one slope h for all curves; one residual
variance, covariance from curve_fit (absolute_sigma=False), t intervals
from ``scipy.stats.t.ppf(0.975, N - P)``.

All data sets are GENERATED synthetic data from fixed numpy seeds (not
measurements): K curves of 10 doses (100 µM down by threefold steps), true
IC50s log-uniform over 0.1-10 µM, slope 1.2, normal noise SD 3 (% activity).
curve_fit starts from Turnover's solution and from the truth, keeping the
lower RSS. Compared: every curve's values (1e-6 relative), standard errors
and interval ends (1e-4 relative), the shared slope, its SE and the total
RSS.

Usage:  python3 tests/scipy/shared_slope_crosscheck.py
Environment: TURNOVER_BIN (default <repo>/target/release/turnover)
Last line: "N passed, N failed"; exit status 1 on any failure.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
from scipy import optimize, stats

REPO_ROOT = Path(__file__).resolve().parents[2]
BIN = Path(os.environ.get("TURNOVER_BIN", REPO_ROOT / "target" / "release" / "turnover"))
VALUE_TOL = 1e-6
SE_TOL = 1e-4


def stacked(k_curves, fixed):
    own = 1 if fixed else 3

    def f(x, *p):
        dose, curve = x
        curve = curve.astype(int)
        h = p[-1]
        params = np.array(p[:-1]).reshape(k_curves, own)
        if fixed:
            bottom, top, ic50 = 0.0, 100.0, params[curve, 0]
        else:
            bottom, top, ic50 = params[curve, 0], params[curve, 1], params[curve, 2]
        return bottom + (top - bottom) / (1 + (dose / ic50) ** h)

    return f, own


def check(label, a, b, tol, results):
    ok = a is not None and b is not None and abs(a - b) <= tol * max(abs(a), abs(b), 1e-300)
    results[0 if ok else 1] += 1
    if not ok:
        print(f"FAIL {label}: turnover {a} scipy {b}")


def run_case(name, seed, k_curves, fixed, results):
    rng = np.random.default_rng(seed)
    doses = 100.0 / 3.0 ** np.arange(10)
    truths = 10 ** rng.uniform(-1.0, 1.0, k_curves)
    rows = []
    for k, ic50 in enumerate(truths):
        y = 100.0 / (1 + (doses / ic50) ** 1.2) + 3.0 * rng.standard_normal(10)
        for d, v in zip(doses, y):
            rows.append((f"cpd{k}", float(d), float(v)))
    with tempfile.NamedTemporaryFile("w", suffix=".tsv", delete=False) as out:
        out.write("compound\t[I] (µM)\t% activity\n")
        for c, d, v in rows:
            out.write(f"{c}\t{d!r}\t{v!r}\n")
        path = out.name
    args = [str(BIN), "fit", path, "--group-by", "compound", "--model", "ic50", "--shared-slope", "--json"]
    if fixed:
        args += ["--floor", "0", "--ceiling", "100"]
    done = subprocess.run(args, capture_output=True, text=True)
    os.unlink(path)
    if done.returncode != 0:
        print(f"FAIL {name}: turnover exited {done.returncode}: {done.stderr}")
        results[1] += 1
        return
    result = json.loads(done.stdout)
    f, own = stacked(k_curves, fixed)
    x = np.vstack([[r[1] for r in rows], [int(r[0][3:]) for r in rows]])
    y = np.array([r[2] for r in rows])
    names = ["IC50"] if fixed else ["floor", "ceiling", "IC50"]
    ours = []
    for record in result["curves"]:
        values = {p["name"]: p["value"] for p in record["parameters"]}
        ours += [values[n] for n in names]
    ours.append(result["shared"]["slope"]["value"])
    truth_start = []
    for ic50 in truths:
        truth_start += [ic50] if fixed else [0.0, 100.0, ic50]
    truth_start.append(1.2)
    best = None
    for start in (ours, truth_start):
        p, cov = optimize.curve_fit(f, x, y, p0=start, method="lm", ftol=1e-15, xtol=1e-15, gtol=1e-15, maxfev=100000)
        rss = float(np.sum((y - f(x, *p)) ** 2))
        if best is None or rss < best[2]:
            best = (p, cov, rss)
    p, cov, rss = best
    se = np.sqrt(np.diag(cov))
    dof = len(y) - len(p)
    t = stats.t.ppf(0.975, dof)
    check(f"{name} total RSS", result["shared"]["rss"], rss, VALUE_TOL, results)
    check(f"{name} dof", result["shared"]["dof"], dof, 0, results)
    for k, record in enumerate(result["curves"]):
        by_name = {q["name"]: q for q in record["parameters"]}
        for j, n in enumerate(names):
            g = k * own + j
            q = by_name[n]
            check(f"{name} {record['curve']} {n}", q["value"], p[g], VALUE_TOL, results)
            check(f"{name} {record['curve']} {n} SE", q["std_error"], se[g], SE_TOL, results)
            check(f"{name} {record['curve']} {n} low", q["ci_low"], p[g] - t * se[g], SE_TOL, results)
            check(f"{name} {record['curve']} {n} high", q["ci_high"], p[g] + t * se[g], SE_TOL, results)
        check(f"{name} {record['curve']} slope in record", by_name["steepness"]["value"], p[-1], VALUE_TOL, results)
    slope = result["shared"]["slope"]
    check(f"{name} shared slope", slope["value"], p[-1], VALUE_TOL, results)
    check(f"{name} shared slope SE", slope["std_error"], se[-1], SE_TOL, results)
    check(f"{name} shared slope low", slope["ci_low"], p[-1] - t * se[-1], SE_TOL, results)


def main():
    results = [0, 0]
    run_case("5 curves, free plateaus (seed 1301)", 1301, 5, False, results)
    run_case("12 curves, free plateaus (seed 1302)", 1302, 12, False, results)
    run_case("8 curves, plateaus fixed at 0 and 100 (seed 1303)", 1303, 8, True, results)
    print(f"{results[0]} passed, {results[1]} failed")
    sys.exit(1 if results[1] else 0)


if __name__ == "__main__":
    main()
