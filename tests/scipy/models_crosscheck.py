#!/usr/bin/env python3
"""Cross-check of Turnover's model family against SciPy.

Reference library: SciPy ``scipy.optimize.curve_fit`` (method='lm', the
MINPACK Levenberg-Marquardt driver, tight tolerances, and a
central-difference Jacobian written here, independent of Turnover's
analytic ones) for parameter values and standard errors
(sqrt(diag(pcov)), absolute_sigma=False). The model equations are written
here independently of the Rust code, from their handbook forms:

  competitive     v = V S / (Km (1 + I/Kic) + S)
  uncompetitive   v = V S / (Km + S (1 + I/Kiu))
  mixed           v = V S / (Km (1 + I/Kic) + S (1 + I/Kiu))
  noncompetitive  v = V S / ((Km + S)(1 + I/Ki))
  substrate-inhibition  v = V S / (Km + S + S^2/Ksi)
  hill            v = V S^n / (K^n + S^n)
  morrison        v = v0 (1 - (E + I + K - sqrt((E + I + K)^2 - 4 E I)) / (2 E))
  ic50            y = bottom + (top - bottom) / (1 + (I/IC50)^h)

All datasets are GENERATED synthetic data from fixed numpy seeds; they are
not measurements. For each, the script writes a tab-separated file, fits
the numbers actually written with curve_fit, runs
``TURNOVER_BIN fit FILE --model NAME --json`` and compares every
parameter's value (1e-6 relative) and standard error (1e-4 relative), and
the RSS (1e-6 relative).

Usage:  python3 tests/scipy/models_crosscheck.py
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
from scipy import optimize

REPO_ROOT = Path(__file__).resolve().parents[2]
BIN = Path(os.environ.get("TURNOVER_BIN", REPO_ROOT / "target" / "release" / "turnover"))
VALUE_TOL = 1e-6
SE_TOL = 1e-4


def inhibition(kind):
    def f(x, *p):
        s, i = x
        v, km = p[0], p[1]
        kic, kiu = {
            "competitive": (p[2], np.inf),
            "uncompetitive": (np.inf, p[2]),
            "mixed": (p[2], p[3]) if len(p) > 3 else (np.inf, np.inf),
            "noncompetitive": (p[2], p[2]),
        }[kind]
        return v * s / (km * (1 + i / kic) + s * (1 + i / kiu))
    return f


def substrate_inhibition(s, v, km, ksi):
    return v * s / (km + s + s * s / ksi)


def hill(s, v, k, n):
    return v * s ** n / (k ** n + s ** n)


def morrison(enzyme):
    def f(i, v0, k):
        q = enzyme + i + k
        return v0 * (1 - (q - np.sqrt(q * q - 4 * enzyme * i)) / (2 * enzyme))
    return f


def logistic(i, bottom, top, ic50, h):
    u = np.where(i > 0, (np.maximum(i, 1e-300) / ic50) ** h, 0.0)
    return bottom + (top - bottom) / (1 + u)


def numeric_jacobian(f):
    """Central-difference Jacobian with a step of 1e-7 relative; curve_fit's
    solution is then refined to full precision by its own tolerances, and the
    covariance is recomputed from this Jacobian at the solution."""
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
    s_levels = np.array([0.1, 0.25, 0.5, 1.0, 2.5, 5.0])
    i_levels = np.array([0.0, 1.0, 2.5, 5.0, 10.0])
    for seed, kind, truth in [
        (11, "competitive", [10.0, 0.5, 2.0]),
        (12, "uncompetitive", [10.0, 0.5, 2.0]),
        (13, "mixed", [10.0, 0.5, 2.0, 6.0]),
        (14, "noncompetitive", [10.0, 0.5, 3.0]),
    ]:
        rng = np.random.default_rng(seed)
        s, i = np.meshgrid(s_levels, i_levels)
        s, i = np.repeat(s.ravel(), 2), np.repeat(i.ravel(), 2)
        v = inhibition(kind)((s, i), *truth) * (1 + 0.04 * rng.standard_normal(s.size))
        out.append(dict(name=f"{kind} (seed {seed})", model=kind, header="[S] (mM)\t[I] (µM)\tv (µM/min)",
                        columns=[s, i, v], f=inhibition(kind), truth=truth, two=True, extra=[]))
    rng = np.random.default_rng(21)
    s = np.repeat([0.05, 0.1, 0.2, 0.5, 1, 2, 5, 10, 20, 50], 2).astype(float)
    v = substrate_inhibition(s, 12, 0.4, 8) + 0.15 * rng.standard_normal(s.size)
    out.append(dict(name="substrate-inhibition (seed 21)", model="substrate-inhibition", header="[S] (mM)\tv (µM/min)",
                    columns=[s, v], f=substrate_inhibition, truth=[12, 0.4, 8], two=False, extra=[]))
    rng = np.random.default_rng(22)
    s = np.repeat([0.1, 0.3, 0.6, 1, 1.5, 2, 3, 5, 10], 2).astype(float)
    v = hill(s, 9, 1.2, 2.4) + 0.12 * rng.standard_normal(s.size)
    out.append(dict(name="hill (seed 22)", model="hill", header="[S] (mM)\tv (µM/min)",
                    columns=[s, v], f=hill, truth=[9, 1.2, 2.4], two=False, extra=[]))
    rng = np.random.default_rng(23)
    i = np.repeat([0, 1, 2, 4, 6, 8, 12, 20, 40], 2).astype(float)
    v = morrison(5.0)(i, 20, 3) + 0.3 * rng.standard_normal(i.size)
    out.append(dict(name="morrison, [E]t = 5 nM (seed 23)", model="morrison", header="[I] (nM)\tv (µM/min)",
                    columns=[i, v], f=morrison(5.0), truth=[20, 3], two=False, extra=["--enzyme", "5"]))
    rng = np.random.default_rng(24)
    i = np.repeat([0, 0.03, 0.1, 0.3, 1, 3, 10, 30, 100], 2).astype(float)
    y = logistic(i, 4, 98, 0.8, 1.3) + 2.0 * rng.standard_normal(i.size)
    out.append(dict(name="ic50 (seed 24)", model="ic50", header="[I] (µM)\tactivity (%)",
                    columns=[i, y], f=logistic, truth=[4, 98, 0.8, 1.3], two=False, extra=[]))
    return out


def irls(f, x, y, popt, pcov, sigma):
    """Weights 1/f^2 from the fitted curve, iterated with curve_fit from the
    fit on the measured values (popt, pcov, sigma) until no parameter changes
    by more than 1e-13 relative. Returns (settled, popt, pcov, sigma): the
    fixed point when settled, else the fit on the measured values."""
    p, cov, s = popt, pcov, sigma
    for _ in range(500):
        fitted = f(x, *p)
        if np.any(fitted <= 0):
            return False, popt, pcov, sigma
        s = fitted
        new, cov = optimize.curve_fit(f, x, y, p0=p, sigma=s, jac=numeric_jacobian(f), method="lm",
                                      ftol=1e-15, xtol=1e-15, gtol=1e-15, maxfev=100000)
        change = np.max(np.abs(new - p) / np.abs(new))
        p = new
        if change <= 1e-13:
            return True, p, cov, f(x, *p)
    return False, popt, pcov, sigma


def main():
    passed = failed = 0
    print(f"Reference: scipy.optimize.curve_fit(method='lm'), numpy {np.__version__}")
    with tempfile.TemporaryDirectory() as tmp:
        # Each data set unweighted; the mixed, hill and ic50 sets also with
        # relative weights (Turnover --weighting relative: weights 1/f² from
        # the fitted curve, iterated to a fixed point). The reference is an
        # independent reweighting loop around curve_fit (see irls below);
        # when that loop cannot settle (a fitted value at or below zero, or
        # no fixed point within 500 rounds), Turnover must say so and fall
        # back to weights on the measured values, curve_fit sigma = |y|.
        runs = [(ds, None) for ds in datasets()]
        runs += [(ds, "relative") for ds in datasets() if ds["model"] in ("mixed", "hill", "ic50")]
        for ds, weighting in runs:
            path = Path(tmp) / (ds["model"] + ".tsv")
            lines = [ds["header"]] + ["\t".join("%.17g" % c for c in row) for row in zip(*ds["columns"])]
            path.write_text("\n".join(lines) + "\n", encoding="utf-8")
            cols = np.loadtxt(path, skiprows=1, delimiter="\t", unpack=True)
            x = (cols[0], cols[1]) if ds["two"] else cols[0]
            y = cols[-1]
            f = ds["f"]
            sigma = np.abs(y) if weighting == "relative" else None
            popt, pcov = optimize.curve_fit(f, x, y, p0=ds["truth"], jac=numeric_jacobian(f), method="lm", sigma=sigma,
                                            ftol=1e-15, xtol=1e-15, gtol=1e-15, maxfev=100000)
            settled = None
            if weighting == "relative":
                settled, popt, pcov, sigma = irls(f, x, y, popt, pcov, sigma)
            se = np.sqrt(np.diag(pcov))
            scale = sigma if sigma is not None else 1.0
            rss = float(np.sum(((y - f(x, *popt)) / scale) ** 2))
            weighting_args = ["--weighting", weighting] if weighting else []
            name = ds["name"] + (f", {weighting}" if weighting else "")
            proc = subprocess.run([str(BIN), "fit", str(path), "--model", ds["model"], "--json", *ds["extra"], *weighting_args],
                                  capture_output=True, text=True, timeout=120)
            if proc.returncode != 0:
                print(f"FAIL {name}: turnover exited {proc.returncode}: {proc.stderr.strip()}")
                failed += len(popt) * 2 + 1
                continue
            out = json.loads(proc.stdout)
            got = [p for p in out["parameters"] if not p["derived"]]
            if settled is False:
                said = any("did not settle" in w for w in out["warnings"])
                passed += said
                failed += not said
                print(f"{'ok  ' if said else 'FAIL'} {name:<34} the reference reweighting does not settle; Turnover warns: {said}")
            checks = [("rss", out["rss"], rss, VALUE_TOL)]
            for k, p in enumerate(got):
                checks.append((p["name"], p["value"], popt[k], VALUE_TOL))
                checks.append((p["name"] + " se", p["std_error"], se[k], SE_TOL))
            if ds["model"] == "mixed":
                # The derived Kiu/Kic: delta method on SciPy's covariance,
                # var(r) = r^2 (var(Kiu)/Kiu^2 + var(Kic)/Kic^2 - 2 cov/(Kic Kiu)).
                kic, kiu = popt[2], popt[3]
                r = kiu / kic
                var = r * r * (pcov[3, 3] / kiu ** 2 + pcov[2, 2] / kic ** 2 - 2 * pcov[2, 3] / (kic * kiu))
                ratio = next(p for p in out["parameters"] if p["name"] == "Kiu/Kic")
                checks.append(("Kiu/Kic", ratio["value"], r, VALUE_TOL))
                checks.append(("Kiu/Kic se", ratio["std_error"], float(np.sqrt(var)), SE_TOL))
            for label, a, b, tol in checks:
                rel = abs(a - b) / abs(b) if b != 0 else abs(a - b)
                ok = rel <= tol
                passed += ok
                failed += not ok
                print(f"{'ok  ' if ok else 'FAIL'} {name:<34} {label:<12} turnover {a:.10g}  scipy {b:.10g}  rel {rel:.1e}")
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
