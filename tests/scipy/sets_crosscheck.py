#!/usr/bin/env python3
"""Cross-check of ``turnover compare-sets`` against SciPy.

Reference library: SciPy ``scipy.optimize.curve_fit`` (method='lm', tight
tolerances, a central-difference Jacobian written here) on the stacked
problem: every set's rows in one least-squares fit, each constant either
one value for all sets (shared) or one per set (separate), one residual
variance. Also ``scipy.stats.f.sf`` for the extra-sum-of-squares F test
against the all-separate fit, and the ratio of each set's constant to the
reference set's from the all-separate covariance, with the interval
exp(ln r ± t·SE(ln r)), SE(ln r)² = (SE_a/a)² + (SE_b/b)² (delta method;
common practice, no source), t from ``scipy.stats.t.ppf``.

The model equations are written here independently of the Rust code:
  mm     v = V S / (Km + S)
  ic50   y = bottom + (top - bottom) / (1 + (I/IC50)^h)
  competitive  v = V S / (Km (1 + I/Kic) + S)

All data sets are GENERATED synthetic data from fixed numpy seeds; they are
not measurements. For each, the script writes a tab-separated file with a
set column, runs ``TURNOVER_BIN compare-sets FILE --json`` and, for every
sharing pattern Turnover reports, refits the numbers actually written with
curve_fit (from a start built from the true values and from Turnover's
solution, keeping the lower RSS) and compares every parameter's value (1e-6 relative), standard
error (1e-4 relative) and the RSS (1e-6 relative); then each constant's
F-test p value (1e-4 relative, or 1e-12 absolute when tiny) and its ratio
and interval ends (1e-4 relative).

Usage:  python3 tests/scipy/sets_crosscheck.py
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


def mm(x, v, km):
    s = x[0]
    return v * s / (km + s)


def logistic(x, bottom, top, ic50, h):
    i = x[0]
    u = np.where(i > 0, (np.maximum(i, 1e-300) / ic50) ** h, 0.0)
    return bottom + (top - bottom) / (1 + u)


def competitive(x, v, km, kic):
    s, i = x[0], x[1]
    return v * s / (km * (1 + i / kic) + s)


def numeric_jacobian(f):
    def jac(x, *p):
        p = np.asarray(p, float)
        cols = []
        for j in range(len(p)):
            h = 1e-7 * max(abs(p[j]), 1e-12)
            up, dn = p.copy(), p.copy()
            up[j] += h
            dn[j] -= h
            cols.append((f(x, *up) - f(x, *dn)) / (2 * h))
        return np.column_stack(cols)
    return jac


def datasets():
    out = []
    s_levels = np.repeat([2.0, 5.0, 10.0, 20.0, 50.0, 100.0], 2)
    rng = np.random.default_rng(31)
    rows = []
    for name, truth in [("wild type", [10.0, 10.0]), ("mutant", [1.2, 14.0])]:
        for s in s_levels:
            rows.append((name, [s], mm([s], *truth) + 0.02 * truth[0] * rng.standard_normal()))
    out.append(dict(name="mm, two sets (seed 31)", model="mm", f=mm, names=["Vmax", "Km"],
                    header="set\t[S] (µM)\tv (µM/min)", rows=rows,
                    truth={"wild type": [10.0, 10.0], "mutant": [1.2, 14.0]}, extra=[]))
    # The same numbers with relative weights (Turnover --weighting
    # proportional, weights 1/y²; curve_fit sigma = |y|, the same fixed
    # weights).
    out.append(dict(out[-1], name="mm, two sets, proportional (seed 31)", extra=["--weighting", "proportional"],
                    relative=True))
    rng = np.random.default_rng(32)
    rows = []
    truths = {"A": [8.0, 5.0], "B": [8.5, 9.0], "C": [4.0, 5.5]}
    for name, truth in truths.items():
        for s in s_levels:
            rows.append((name, [s], mm([s], *truth) + 0.2 * rng.standard_normal()))
    out.append(dict(name="mm, three sets, reference B (seed 32)", model="mm", f=mm, names=["Vmax", "Km"],
                    header="enzyme\t[S] (µM)\tv (µM/min)", rows=rows, truth=truths,
                    extra=["--by", "enzyme", "--reference", "B"]))
    rng = np.random.default_rng(33)
    rows = []
    truths = {"X": [2.0, 99.0, 0.8, 1.1], "Y": [4.0, 97.0, 3.0, 1.0]}
    for name, truth in truths.items():
        for i in np.repeat([0.0, 0.03, 0.1, 0.3, 1, 3, 10, 30, 100], 2):
            rows.append((name, [i], float(logistic([np.array(i)], *truth)) + 2.5 * rng.standard_normal()))
    out.append(dict(name="ic50, two compounds (seed 33)", model="ic50", f=logistic,
                    names=["floor", "ceiling", "IC50", "steepness"],
                    header="compound\t[I] (µM)\tactivity (%)", rows=rows, truth=truths,
                    extra=["--by", "compound"]))
    rng = np.random.default_rng(34)
    rows = []
    truths = {"pH 7": [10.0, 0.5, 2.0], "pH 8": [10.0, 0.9, 2.0]}
    for name, truth in truths.items():
        for s in [0.1, 0.25, 0.5, 1.0, 2.5, 5.0]:
            for i in [0.0, 1.0, 2.5, 5.0]:
                rows.append((name, [s, i], competitive([s, i], *truth) * (1 + 0.03 * rng.standard_normal())))
    out.append(dict(name="competitive, two pH (seed 34)", model="competitive", f=competitive,
                    names=["Vmax", "Km", "Kic"], header="set\t[S] (mM)\t[I] (µM)\tv (µM/min)", rows=rows,
                    truth=truths, extra=[]))
    return out


def stacked(f, names, sets, shared):
    """The stacked model for one sharing pattern and its parameter labels."""
    labels, index = [], []
    for j, name in enumerate(names):
        if name in shared:
            index.append([len(labels)] * len(sets))
            labels.append(name)
        else:
            index.append([len(labels) + k for k in range(len(sets))])
            labels.extend(f"{name}[{s}]" for s in sets)

    def g(xk, *p):
        x, k = xk[:-1], xk[-1].astype(int)
        out = np.empty(k.size)
        for kk in range(len(sets)):
            m = k == kk
            local = [p[index[j][kk]] for j in range(len(names))]
            out[m] = f([c[m] for c in x], *local)
        return out
    return g, labels, index


def check(label, a, b, tol, results, name):
    rel = abs(a - b) / abs(b) if b != 0 else abs(a - b)
    ok = rel <= tol or abs(a - b) <= 1e-12
    results[0 if ok else 1] += 1
    print(f"{'ok  ' if ok else 'FAIL'} {name:<38} {label:<26} turnover {a:.10g}  scipy {b:.10g}  rel {rel:.1e}")


def main():
    results = [0, 0]
    print(f"Reference: scipy.optimize.curve_fit(method='lm'), scipy.stats, numpy {np.__version__}")
    with tempfile.TemporaryDirectory() as tmp:
        for ds in datasets():
            path = Path(tmp) / "sets.tsv"
            lines = [ds["header"]] + ["\t".join([name] + ["%.17g" % c for c in x] + ["%.17g" % y]) for name, x, y in ds["rows"]]
            path.write_text("\n".join(lines) + "\n", encoding="utf-8")
            proc = subprocess.run([str(BIN), "compare-sets", str(path), "--model", ds["model"], "--json", *ds["extra"]],
                                  capture_output=True, text=True, timeout=300)
            if proc.returncode != 0:
                print(f"FAIL {ds['name']}: turnover exited {proc.returncode}: {proc.stderr.strip()}")
                results[1] += 1
                continue
            out = json.loads(proc.stdout)
            # Read the numbers back as written.
            sets = []
            for name, _, _ in ds["rows"]:
                if name not in sets:
                    sets.append(name)
            cols = [line.split("\t") for line in lines[1:]]
            k = np.array([sets.index(c[0]) for c in cols])
            x = [np.array([float(c[1 + j]) for c in cols]) for j in range(len(cols[0]) - 2)]
            y = np.array([float(c[-1]) for c in cols])
            n = y.size
            xk = np.vstack(x + [k.astype(float)])
            fits = {}
            for pattern in out["models"]:
                g, labels, index = stacked(ds["f"], ds["names"], sets, set(pattern["shared"]))
                p0 = []
                for j, name in enumerate(ds["names"]):
                    if name in pattern["shared"]:
                        p0.append(np.mean([ds["truth"][s][j] for s in sets]))
                    else:
                        p0.extend(ds["truth"][s][j] for s in sets)
                sigma = np.abs(y) if ds.get("relative") else None
                scale = sigma if sigma is not None else 1.0
                # Two starts: the truth-based guess and Turnover's own
                # solution; the lower RSS is kept. A badly fitting pattern
                # (a constant shared that clearly differs) can have several
                # local minima, and the check is that Turnover's answer is
                # the least-squares minimum, not that both started alike.
                best = None
                got = {p["name"]: p["value"] for p in pattern["fit"]["parameters"]}
                for start in (p0, [got[label] for label in labels]):
                    try:
                        popt, pcov = optimize.curve_fit(g, xk, y, p0=start, jac=numeric_jacobian(g), method="lm", sigma=sigma,
                                                        ftol=1e-15, xtol=1e-15, gtol=1e-15, maxfev=200000)
                    except RuntimeError:
                        continue
                    rss = float(np.sum(((y - g(xk, *popt)) / scale) ** 2))
                    if best is None or rss < best[2] * (1 - 1e-12):
                        best = (popt, pcov, rss)
                popt, pcov, rss = best
                fits[pattern["name"]] = (popt, pcov, rss, labels, n - len(popt))
                tag = f"{ds['name']}"
                check(f"{pattern['name']}: rss", pattern["rss"], rss, VALUE_TOL, results, tag)
                got = {p["name"]: p for p in pattern["fit"]["parameters"]}
                for j, label in enumerate(labels):
                    check(f"{label}", got[label]["value"], popt[j], VALUE_TOL, results, tag)
                    check(f"{label} se", got[label]["std_error"], float(np.sqrt(pcov[j, j])), SE_TOL, results, tag)
            sep_popt, sep_pcov, sep_rss, sep_labels, sep_dof = fits["all separate"]
            ref = out["reference"]
            tq = stats.t.ppf(0.975, sep_dof)
            for const in out["constants"]:
                _, _, rss_s, _, dof_s = fits[f"{const['name']} shared"]
                fstat = ((rss_s - sep_rss) / (dof_s - sep_dof)) / (sep_rss / sep_dof)
                p = stats.f.sf(max(fstat, 0.0), dof_s - sep_dof, sep_dof)
                check(f"{const['name']} p value", const["p_value"], p, SE_TOL, results, ds["name"])
                b_j = sep_labels.index(f"{const['name']}[{ref}]")
                for r in const["ratio"]:
                    a_j = sep_labels.index(f"{const['name']}[{r['set']}]")
                    a, b = sep_popt[a_j], sep_popt[b_j]
                    if a * b <= 0:
                        ok = r["value"] is None
                        results[0 if ok else 1] += 1
                        print(f"{'ok  ' if ok else 'FAIL'} {ds['name']:<38} {const['name']} ratio: none (signs differ)")
                        continue
                    ratio = a / b
                    se_log = np.sqrt(sep_pcov[a_j, a_j] / a ** 2 + sep_pcov[b_j, b_j] / b ** 2)
                    check(f"{const['name']} {r['set']}/{ref}", r["value"], ratio, VALUE_TOL, results, ds["name"])
                    check(f"  ci_low", r["ci_low"], ratio * np.exp(-tq * se_log), SE_TOL, results, ds["name"])
                    check(f"  ci_high", r["ci_high"], ratio * np.exp(tq * se_log), SE_TOL, results, ds["name"])
    print(f"{results[0]} passed, {results[1]} failed")
    return 1 if results[1] else 0


if __name__ == "__main__":
    sys.exit(main())
