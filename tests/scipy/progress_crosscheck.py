#!/usr/bin/env python3
"""Cross-check of ``turnover fit-progress`` against SciPy.

Reference: ``scipy.optimize.curve_fit`` (method='lm', MINPACK) fitting the
integrated Michaelis-Menten equation
    A(t) = eps*l*(offset_k + S0_k - Km*W((S0_k/Km)*exp((S0_k - Vmax*t)/Km)))
written with ``scipy.special.lambertw`` (principal branch), globally to all
traces of a plate with Km, Vmax shared and one offset per trace, as all
2 + K parameters at once (no projection). Turnover instead projects the
offsets out; the least-squares problem is the same, so values, standard
errors (sqrt(diag(pcov)), absolute_sigma=False), RSS and dof must agree.

The plates are GENERATED synthetic data from numpy.random.default_rng seeds
(not measurements): absorbance with NADH's 6220 M^-1 cm^-1 (from memory),
path 0.6 cm, Gaussian noise. The files are written with '%.9g' and the numbers
actually written are what curve_fit fits, after the same Beer-Lambert
conversion Turnover does (c in uM = A / (eps*l) * 1e6).

Tolerance: 1e-6 relative for values and standard errors, 1e-8 for RSS.
Prints one line per comparison and `N passed, N failed` last; exits 1 on any
failure (or a missing binary).

Environment: TURNOVER_BIN (default <repo>/target/release/turnover).
"""
from __future__ import annotations
import json, os, subprocess, sys, tempfile
from pathlib import Path
import numpy as np
from scipy import optimize, special

REPO = Path(__file__).resolve().parents[2]
BIN = os.environ.get("TURNOVER_BIN", str(REPO / "target" / "release" / "turnover"))
EPS, PATH = 6220.0, 0.6

def product(t, s0, km, vmax):
    z = (s0 / km) * np.exp((s0 - vmax * t) / km)
    return s0 - km * special.lambertw(z, 0).real

PLATES = [
    # seed, Km (uM), Vmax (uM/min), S0 list, points, step (min), noise (A)
    (101, 40.0, 3.0, [10, 20, 40, 80, 160], 40, 0.5, 0.0008),
    (202, 15.0, 0.8, [5, 10, 15, 30, 60, 120, 240], 60, 1.0, 0.0005),
    (303, 120.0, 10.0, [25, 50, 100, 200, 400, 800], 30, 0.25, 0.002),
]

passed = failed = 0
def check(label, ours, ref, tol):
    global passed, failed
    rel = abs(ours - ref) / abs(ref) if ref != 0 else abs(ours)
    ok = rel <= tol
    passed += ok; failed += (not ok)
    print(f"{'ok  ' if ok else 'FAIL'} {label}: turnover {ours:.12g}, scipy {ref:.12g}, rel {rel:.2e}")

with tempfile.TemporaryDirectory() as tmp:
    for seed, km, vmax, s0s, points, step, noise in PLATES:
        rng = np.random.default_rng(seed)
        t = np.arange(points) * step
        names = [f"P{i+1}" for i in range(len(s0s))]
        offsets = rng.uniform(0.03, 0.08, len(s0s))
        absorb = [off + product(t, s0, km, vmax) * 1e-6 * EPS * PATH + noise * rng.standard_normal(points)
                  for off, s0 in zip(offsets, s0s)]
        traces = Path(tmp) / f"plate{seed}.tsv"
        layout = Path(tmp) / f"layout{seed}.tsv"
        with traces.open("w") as f:
            f.write("time (min)\t" + "\t".join(names) + "\n")
            for j in range(points):
                f.write(f"{t[j]:.9g}\t" + "\t".join(f"{a[j]:.9g}" for a in absorb) + "\n")
        with layout.open("w") as f:
            f.write("trace\tS (uM)\n" + "".join(f"{n}\t{s}\n" for n, s in zip(names, s0s)))
        # Re-read what was written.
        rows = np.loadtxt(traces, skiprows=1, delimiter="\t")
        tt, conc = rows[:, 0], rows[:, 1:] / (EPS * PATH) * 1e6
        k = len(s0s)
        x = np.concatenate([tt] * k)
        idx = np.repeat(np.arange(k), points)
        s0v = np.array(s0s, float)[idx]
        y = conc.T.reshape(-1)
        def model(_x, km_, v_, *off):
            return np.array(off)[idx] + product(x, s0v, km_, v_)
        def jac(_x, km_, v_, *off):
            w = special.lambertw((s0v / km_) * np.exp((s0v - v_ * x) / km_), 0).real
            r = w / (1 + w)
            s = km_ * w
            J = np.zeros((len(x), 2 + k))
            J[:, 0] = -r * np.log(s0v / s)
            J[:, 1] = x * r
            J[np.arange(len(x)), 2 + idx] = 1.0
            return J
        p0 = [np.median(s0s), vmax * 1.3] + [0.0] * k
        popt, pcov = optimize.curve_fit(model, x, y, p0=p0, jac=jac, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15, maxfev=20000)
        se = np.sqrt(np.diag(pcov))
        rss = float(np.sum((y - model(x, *popt)) ** 2))
        try:
            out = subprocess.run([BIN, "fit-progress", str(traces), "--layout", str(layout),
                                  "--epsilon", str(EPS), "--path", str(PATH), "--json"],
                                 capture_output=True, text=True, check=True)
        except (OSError, subprocess.CalledProcessError) as e:
            print(f"FAIL plate {seed}: turnover did not run: {e}")
            failed += 1
            continue
        res = json.loads(out.stdout)
        by = {p["name"]: p for p in res["parameters"]}
        passed += res["converged"] is True; failed += res["converged"] is not True
        ok = res["n"] == len(y) and res["dof"] == len(y) - 2 - k
        passed += ok; failed += (not ok)
        print(f"{'ok  ' if ok else 'FAIL'} plate {seed}: n {res['n']} dof {res['dof']}")
        check(f"plate {seed} rss", res["rss"], rss, 1e-8)
        for j, name in enumerate(["Km", "Vmax"] + [f"offset {n}" for n in names]):
            check(f"plate {seed} {name}", by[name]["value"], popt[j], 1e-6)
            check(f"plate {seed} {name} se", by[name]["std_error"], se[j], 1e-6)

print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
