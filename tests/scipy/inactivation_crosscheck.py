#!/usr/bin/env python3
"""Cross-check of ``turnover inactivation`` against SciPy.

Reference library: SciPy ``scipy.optimize.curve_fit`` (method='lm', tight
tolerances, a central-difference Jacobian written here) for

  each trace   P(t) = offset + vs t + (v0 - vs)(1 - exp(-kobs t))/kobs
  kobs - [I]   kobs = kinact I/(KI + I)
  no saturation: the line through the origin kobs = r I, by numpy
               (r = sum(I k)/sum(I^2), SE^2 = RSS/(n - 1)/sum(I^2))

with kinact/KI's standard error by the delta method on curve_fit's
covariance, var(r) = r^2 (var(kinact)/kinact^2 + var(KI)/KI^2 -
2 cov/(kinact KI)), and the saturation F test by ``scipy.stats.f.sf``.
Both steps are refitted here independently of Turnover's numbers (the
hyperbola is fitted to SciPy's own kobs values).

All data are GENERATED synthetic progress curves from fixed numpy seeds;
they are not measurements. Tolerances: kobs and the constants 1e-6
relative, standard errors 1e-4 relative, p values 1e-4 relative.

Usage:  python3 tests/scipy/inactivation_crosscheck.py
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


def curve(t, v0, vs, k, offset):
    return offset + vs * t + (v0 - vs) * (-np.expm1(-k * t)) / k


def hyperbola(i, kinact, ki):
    return kinact * i / (ki + i)


def numeric_jacobian(f):
    def jac(x, *p):
        p = np.asarray(p, float)
        cols = []
        for j in range(len(p)):
            # The floor keeps the step usable for a parameter near zero
            # (vs of an irreversible inactivator).
            h = 1e-7 * max(abs(p[j]), 1e-3)
            up, dn = p.copy(), p.copy()
            up[j] += h
            dn[j] -= h
            cols.append((f(x, *up) - f(x, *dn)) / (2 * h))
        return np.column_stack(cols)
    return jac


def fit(f, x, y, p0):
    return optimize.curve_fit(f, x, y, p0=p0, jac=numeric_jacobian(f), method="lm",
                              ftol=1e-15, xtol=1e-15, gtol=1e-15, maxfev=100000)


def datasets():
    return [
        dict(name="saturating (seed 41)", seed=41, kinact=0.2, ki=5.0, inhibitor=[1, 2.5, 5, 10, 20, 40], vs=0.0, extra=[]),
        dict(name="saturating, vs > 0, [S]/Km = 2 (seed 42)", seed=42, kinact=0.3, ki=3.0, inhibitor=[0.5, 1, 2, 4, 8, 16, 32],
             vs=0.002, extra=["--substrate", "100 µM", "--km", "0.05 mM"]),
        dict(name="not saturating (seed 43)", seed=43, kinact=2.0, ki=500.0, inhibitor=[5, 10, 15, 20, 30], vs=0.0, extra=[]),
    ]


def check(label, a, b, tol, results, name):
    rel = abs(a - b) / abs(b) if b != 0 else abs(a - b)
    ok = rel <= tol
    results[0 if ok else 1] += 1
    print(f"{'ok  ' if ok else 'FAIL'} {name:<44} {label:<18} turnover {a:.10g}  scipy {b:.10g}  rel {rel:.1e}")


def main():
    results = [0, 0]
    print(f"Reference: scipy.optimize.curve_fit(method='lm'), scipy.stats, numpy {np.__version__}")
    t = np.arange(0, 30.0001, 0.5)
    with tempfile.TemporaryDirectory() as tmp:
        for ds in datasets():
            rng = np.random.default_rng(ds["seed"])
            cols = []
            for i in ds["inhibitor"]:
                k = hyperbola(i, ds["kinact"], ds["ki"])
                cols.append(curve(t, 0.02, ds["vs"], k, 0.05) + 0.001 * rng.standard_normal(t.size))
            names = [f"W{j + 1}" for j in range(len(cols))]
            traces = Path(tmp) / "traces.tsv"
            layout = Path(tmp) / "layout.tsv"
            rows = ["time (min)\t" + "\t".join(names)]
            rows += ["\t".join(["%.10g" % t[r]] + ["%.10g" % c[r] for c in cols]) for r in range(t.size)]
            traces.write_text("\n".join(rows) + "\n", encoding="utf-8")
            layout.write_text("trace\tS (µM)\tI (µM)\n" + "".join(f"{n}\t100\t{i}\n" for n, i in zip(names, ds["inhibitor"])),
                              encoding="utf-8")
            proc = subprocess.run([str(BIN), "inactivation", str(traces), "--layout", str(layout), "--json", *ds["extra"]],
                                  capture_output=True, text=True, timeout=300)
            if proc.returncode != 0:
                print(f"FAIL {ds['name']}: turnover exited {proc.returncode}: {proc.stderr.strip()}")
                results[1] += 1
                continue
            out = json.loads(proc.stdout)
            data = np.loadtxt(traces, skiprows=1, delimiter="\t")
            kobs, kse = [], []
            for j, name in enumerate(names):
                truth_k = hyperbola(ds["inhibitor"][j], ds["kinact"], ds["ki"])
                popt, pcov = fit(curve, data[:, 0], data[:, j + 1], [0.02, ds["vs"], truth_k, 0.05])
                got = next(x for x in out["traces"] if x["trace"] == name)
                check(f"{name} kobs", got["kobs"], popt[2], VALUE_TOL, results, ds["name"])
                check(f"{name} kobs se", got["kobs_se"], float(np.sqrt(pcov[2, 2])), SE_TOL, results, ds["name"])
                kobs.append(popt[2])
            i = np.array(ds["inhibitor"], float)
            kobs = np.array(kobs)
            factor = out["competition_factor"]
            params = {p["name"]: p for p in out["parameters"]}
            slope = float(np.sum(i * kobs) / np.sum(i * i))
            rss_line = float(np.sum((kobs - slope * i) ** 2))
            popt, pcov = fit(hyperbola, i, kobs, [ds["kinact"], ds["ki"]])
            rss_h = float(np.sum((kobs - hyperbola(i, *popt)) ** 2))
            dof = i.size - 2
            fstat = max((rss_line - rss_h) / (rss_h / dof), 0.0)
            p = stats.f.sf(fstat, 1, dof)
            check("saturation p", out["saturation_test"][3], p, SE_TOL, results, ds["name"])
            if out["saturation"]:
                kinact, ki = popt
                r = kinact / ki
                var = r * r * (pcov[0, 0] / kinact ** 2 + pcov[1, 1] / ki ** 2 - 2 * pcov[0, 1] / (kinact * ki))
                check("kinact", params["kinact"]["value"], kinact, VALUE_TOL, results, ds["name"])
                check("kinact se", params["kinact"]["std_error"], float(np.sqrt(pcov[0, 0])), SE_TOL, results, ds["name"])
                check("KI", params["KI"]["value"], ki / factor, VALUE_TOL, results, ds["name"])
                check("KI se", params["KI"]["std_error"], float(np.sqrt(pcov[1, 1])) / factor, SE_TOL, results, ds["name"])
                check("kinact/KI", params["kinact/KI"]["value"], r * factor, VALUE_TOL, results, ds["name"])
                check("kinact/KI se", params["kinact/KI"]["std_error"], float(np.sqrt(var)) * factor, SE_TOL, results, ds["name"])
            else:
                ok = set(params) == {"kinact/KI"}
                results[0 if ok else 1] += 1
                print(f"{'ok  ' if ok else 'FAIL'} {ds['name']:<44} only kinact/KI reported")
                se = float(np.sqrt(rss_line / (i.size - 1) / np.sum(i * i)))
                check("kinact/KI", params["kinact/KI"]["value"], slope * factor, VALUE_TOL, results, ds["name"])
                check("kinact/KI se", params["kinact/KI"]["std_error"], se * factor, SE_TOL, results, ds["name"])
    print(f"{results[0]} passed, {results[1]} failed")
    return 1 if results[1] else 0


if __name__ == "__main__":
    sys.exit(main())
