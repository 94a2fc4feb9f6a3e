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

The global fit (``global`` in the JSON): the stacked problem of every
trace at once, kobs_k = kinact I_k/(KI_app + I_k) (or r I_k without
saturation), each trace with its own v0, vs, offset (v0, offset at I = 0),
fitted here by ``curve_fit`` with an analytic Jacobian of the whole
stacked model (all parameters at once, no projection), started from the
true constants; kinact, KI and kinact/KI and their standard errors
(pcov, s^2 = RSS/(N - P); kinact/KI by the delta method) must agree to
1e-6 relative, RSS to 1e-8.

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
        dict(name="saturating (seed 41)", seed=41, kinact=0.2, ki=5.0, inhibitor=[1, 2.5, 5, 10, 20, 40], vs=0.0, extra=[],
             zero=True),
        dict(name="saturating, vs > 0, [S]/Km = 2 (seed 42)", seed=42, kinact=0.3, ki=3.0, inhibitor=[0.5, 1, 2, 4, 8, 16, 32],
             vs=0.002, extra=["--substrate", "100 µM", "--km", "0.05 mM"]),
        dict(name="not saturating (seed 43)", seed=43, kinact=2.0, ki=500.0, inhibitor=[5, 10, 15, 20, 30], vs=0.0, extra=[]),
    ]


GLOBAL_TOL = 1e-6


def stacked(i_levels, t, hyperbola):
    """The stacked global model and its analytic Jacobian over all traces."""
    counts = [2 if i == 0 else 3 for i in i_levels]
    shared = 2 if hyperbola else 1

    def unpack(p):
        own, at = [], shared
        for c in counts:
            own.append(p[at:at + c])
            at += c
        return own

    def kobs(p, i):
        if hyperbola:
            d = p[1] + i
            return p[0] * i / d, np.array([i / d, -p[0] * i / d ** 2])
        return p[0] * i, np.array([i])

    def model(_, *p):
        out = []
        for i, q in zip(i_levels, unpack(p)):
            if i == 0:
                out.append(q[1] + q[0] * t)
            else:
                k, _ = kobs(p, i)
                out.append(curve(t, q[0], q[1], k, q[2]))
        return np.concatenate(out)

    def jac(_, *p):
        rows = []
        at = shared
        total = shared + sum(counts)
        for i, q, c in zip(i_levels, unpack(p), counts):
            block = np.zeros((t.size, total))
            if i == 0:
                block[:, at] = t
                block[:, at + 1] = 1.0
            else:
                k, dk = kobs(p, i)
                g = -np.expm1(-k * t) / k
                dg = (t * np.exp(-k * t) - g) / k
                for j in range(shared):
                    block[:, j] = (q[0] - q[1]) * dg * dk[j]
                block[:, at] = g
                block[:, at + 1] = t - g
                block[:, at + 2] = 1.0
            at += c
            rows.append(block)
        return np.vstack(rows)

    return model, jac


def check_global(out, ds, data, names, i_levels, results):
    g = out.get("global")
    if g is None:
        print(f"FAIL {ds['name']}: no global fit in the JSON")
        results[1] += 1
        return
    t = data[:, 0]
    y = np.concatenate([data[:, j + 1] for j in range(len(names))])
    hyperbola = g["saturation"]
    model, jac = stacked(i_levels, t, hyperbola)
    p0 = [ds["kinact"], ds["ki"] * out["competition_factor"]] if hyperbola else [ds["kinact"] / ds["ki"]]
    for i in i_levels:
        p0 += [0.02, 0.05] if i == 0 else [0.02, ds["vs"], 0.05]
    popt, pcov = optimize.curve_fit(model, None, y, p0=p0, jac=jac, method="lm", ftol=1e-15, xtol=1e-15, gtol=1e-15,
                                    maxfev=100000)
    rss = float(np.sum((y - model(None, *popt)) ** 2))
    factor = out["competition_factor"]
    params = {p["name"]: p for p in g["parameters"]}
    label = ds["name"]
    check("global rss", g["rss"], rss, 1e-8, results, label)
    check("global dof", g["dof"], y.size - len(popt), 0, results, label)
    if hyperbola:
        kinact, ki = popt[0], popt[1]
        r = kinact / ki
        var = r * r * (pcov[0, 0] / kinact ** 2 + pcov[1, 1] / ki ** 2 - 2 * pcov[0, 1] / (kinact * ki))
        check("global kinact", params["kinact"]["value"], kinact, GLOBAL_TOL, results, label)
        check("global kinact se", params["kinact"]["std_error"], float(np.sqrt(pcov[0, 0])), GLOBAL_TOL, results, label)
        check("global KI", params["KI"]["value"], ki / factor, GLOBAL_TOL, results, label)
        check("global KI se", params["KI"]["std_error"], float(np.sqrt(pcov[1, 1])) / factor, GLOBAL_TOL, results, label)
        check("global kinact/KI", params["kinact/KI"]["value"], r * factor, GLOBAL_TOL, results, label)
        check("global k/KI se", params["kinact/KI"]["std_error"], float(np.sqrt(var)) * factor, GLOBAL_TOL, results, label)
    else:
        ok = set(params) == {"kinact/KI"}
        results[0 if ok else 1] += 1
        print(f"{'ok  ' if ok else 'FAIL'} {label:<44} global: only kinact/KI reported")
        check("global kinact/KI", params["kinact/KI"]["value"], popt[0] * factor, GLOBAL_TOL, results, label)
        check("global k/KI se", params["kinact/KI"]["std_error"], float(np.sqrt(pcov[0, 0])) * factor, GLOBAL_TOL,
              results, label)


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
            i_levels = list(ds["inhibitor"])
            if ds.get("zero"):
                cols.append(0.05 + 0.02 * t + 0.001 * rng.standard_normal(t.size))
                names.append("C0")
                i_levels.append(0)
            traces = Path(tmp) / "traces.tsv"
            layout = Path(tmp) / "layout.tsv"
            rows = ["time (min)\t" + "\t".join(names)]
            rows += ["\t".join(["%.10g" % t[r]] + ["%.10g" % c[r] for c in cols]) for r in range(t.size)]
            traces.write_text("\n".join(rows) + "\n", encoding="utf-8")
            layout.write_text("trace\tS (µM)\tI (µM)\n" + "".join(f"{n}\t100\t{i}\n" for n, i in zip(names, i_levels)),
                              encoding="utf-8")
            proc = subprocess.run([str(BIN), "inactivation", str(traces), "--layout", str(layout), "--json", *ds["extra"]],
                                  capture_output=True, text=True, timeout=300)
            if proc.returncode != 0:
                print(f"FAIL {ds['name']}: turnover exited {proc.returncode}: {proc.stderr.strip()}")
                results[1] += 1
                continue
            out = json.loads(proc.stdout)
            data = np.loadtxt(traces, skiprows=1, delimiter="\t")
            check_global(out, ds, data, names, i_levels, results)
            kobs, kse = [], []
            for j, name in enumerate(names[:len(ds["inhibitor"])]):
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
