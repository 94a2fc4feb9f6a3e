#!/usr/bin/env python3
"""Cross-check of Turnover's two-substrate rate laws against SciPy.

Reference library: SciPy ``scipy.optimize.curve_fit`` (method='lm', the
MINPACK Levenberg-Marquardt driver, tight tolerances) for parameter values
and standard errors (sqrt(diag(pcov)), absolute_sigma=False), with the
analytic Jacobians written here, independently of the Rust code, from the
handbook forms of the laws:

  sequential  v = V A B / (KiA KmB + KmB A + KmA B + A B)
  ordered     v = V A B / (KiA KmB + KmB A + A B)          (KmA = 0)
  ping-pong   v = V A B / (KmB A + KmA B + A B)            (KiA = 0)

and ``scipy.stats.f.sf`` for the extra-sum-of-squares F test of ordered and
ping-pong inside sequential, F = ((RSS_s - RSS_g)/(dof_s - dof_g)) /
(RSS_g/dof_g).

All data sets are GENERATED synthetic data from fixed numpy seeds; they are
not measurements. Design: the 5 x 5 grid [A] = 2, 5, 10, 20, 50 uM,
[B] = 0.1, 0.25, 0.5, 1, 2.5 mM; true Vmax 10, KmA 10, KmB 0.5, KiA 20
(the constant the law lacks dropped); noise 5% proportional. For each set
the script writes a tab-separated file (long layout, or the matrix layout
for one set), fits the numbers actually written with curve_fit, runs
``TURNOVER_BIN fit FILE --model LAW --json`` for the generating law and
for sequential, and compares every parameter's value, standard error and
the RSS (1e-6 relative); then ``TURNOVER_BIN compare FILE --json`` (no
--models: the table names [A] and [B]) and each F test's p value against
f.sf on SciPy's sums of squares (1e-6 relative). One set is also fitted
with proportional weights (Turnover --weighting proportional: weights 1/f^2
from the fitted curve, iterated to a fixed point) against an independent
reweighting loop around curve_fit.

Usage:  python3 tests/scipy/bisubstrate_crosscheck.py
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
TOL = 1e-6
A_LEVELS = [2.0, 5.0, 10.0, 20.0, 50.0]
B_LEVELS = [0.1, 0.25, 0.5, 1.0, 2.5]
TRUTH = dict(Vmax=10.0, KmA=10.0, KmB=0.5, KiA=20.0)


def sequential(x, v, kma, kmb, kia):
    a, b = x
    return v * a * b / (kia * kmb + kmb * a + kma * b + a * b)


def sequential_jac(x, v, kma, kmb, kia):
    a, b = x
    d = kia * kmb + kmb * a + kma * b + a * b
    n = a * b
    c = -v * n / d ** 2
    return np.column_stack([n / d, c * b, c * (kia + a), c * kmb])


def ordered(x, v, kmb, kia):
    a, b = x
    return v * a * b / (kia * kmb + kmb * a + a * b)


def ordered_jac(x, v, kmb, kia):
    a, b = x
    d = kia * kmb + kmb * a + a * b
    n = a * b
    c = -v * n / d ** 2
    return np.column_stack([n / d, c * (kia + a), c * kmb])


def ping_pong(x, v, kma, kmb):
    a, b = x
    return v * a * b / (kmb * a + kma * b + a * b)


def ping_pong_jac(x, v, kma, kmb):
    a, b = x
    d = kmb * a + kma * b + a * b
    n = a * b
    c = -v * n / d ** 2
    return np.column_stack([n / d, c * b, c * a])


LAWS = {
    "sequential": (sequential, sequential_jac, ["Vmax", "KmA", "KmB", "KiA"]),
    "ordered": (ordered, ordered_jac, ["Vmax", "KmB", "KiA"]),
    "ping-pong": (ping_pong, ping_pong_jac, ["Vmax", "KmA", "KmB"]),
}


def truth_of(law):
    return [TRUTH[n] for n in LAWS[law][2]]


def datasets():
    out = []
    for seed, law, matrix in [(41, "sequential", False), (42, "ordered", False), (43, "ping-pong", False), (44, "sequential", True)]:
        rng = np.random.default_rng(seed)
        f = LAWS[law][0]
        a, b = np.meshgrid(A_LEVELS, B_LEVELS, indexing="ij")
        a, b = a.ravel(), b.ravel()
        v = f((a, b), *truth_of(law)) * (1 + 0.05 * rng.standard_normal(a.size))
        out.append(dict(name=f"{law} truth, {'matrix' if matrix else 'long'} (seed {seed})", law=law, a=a, b=b,
                        v=np.array([float("%.10g" % x) for x in v]), matrix=matrix))
    return out


def write(ds, path):
    if ds["matrix"]:
        lines = ["[A] (µM)\t" + "\t".join(f"{b:g} mM" for b in B_LEVELS)]
        for i, a in enumerate(A_LEVELS):
            row = ds["v"][i * len(B_LEVELS):(i + 1) * len(B_LEVELS)]
            lines.append(f"{a:g}\t" + "\t".join("%.10g" % v for v in row))
    else:
        lines = ["[A] (µM)\t[B] (mM)\tv (µM/min)"]
        lines += [f"{a:g}\t{b:g}\t%.10g" % v for a, b, v in zip(ds["a"], ds["b"], ds["v"])]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def scipy_fit(law, x, y, sigma=None, p0=None):
    f, jac, _ = LAWS[law]
    popt, pcov = optimize.curve_fit(f, x, y, p0=p0 if p0 is not None else truth_of(law), jac=jac, method="lm", sigma=sigma,
                                    ftol=1e-15, xtol=1e-15, gtol=1e-15, maxfev=100000)
    scale = sigma if sigma is not None else 1.0
    rss = float(np.sum(((y - f(x, *popt)) / scale) ** 2))
    return popt, np.sqrt(np.diag(pcov)), rss


def irls(law, x, y):
    """Weights 1/f^2 from the fitted curve, iterated with curve_fit until no
    parameter changes by more than 1e-13 relative."""
    f = LAWS[law][0]
    p, _, _ = scipy_fit(law, x, y)
    for _ in range(500):
        sigma = f(x, *p)
        new, se, rss = scipy_fit(law, x, y, sigma=sigma, p0=p)
        change = np.max(np.abs(new - p) / np.abs(new))
        p = new
        if change <= 1e-13:
            return p, se, rss
    raise RuntimeError("the reference reweighting did not settle")


def run(args):
    proc = subprocess.run([str(BIN), *args], capture_output=True, text=True, timeout=120)
    return proc.returncode, proc.stdout, proc.stderr


def main():
    passed = failed = 0

    def check(name, label, got, want):
        nonlocal passed, failed
        rel = abs(got - want) / abs(want) if want != 0 else abs(got - want)
        ok = rel <= TOL
        passed += ok
        failed += not ok
        print(f"{'ok  ' if ok else 'FAIL'} {name:<40} {label:<18} turnover {got:.10g}  scipy {want:.10g}  rel {rel:.1e}")

    print(f"Reference: scipy.optimize.curve_fit(method='lm'), scipy.stats.f.sf; numpy {np.__version__}")
    with tempfile.TemporaryDirectory() as tmp:
        for k, ds in enumerate(datasets()):
            path = Path(tmp) / f"set{k}.tsv"
            write(ds, path)
            x, y = (ds["a"], ds["b"]), ds["v"]
            runs = [(ds["law"], None), ("sequential", None)] if ds["law"] != "sequential" else [("sequential", None)]
            if k == 0:
                runs.append(("sequential", "proportional"))
            reference = {}
            for law, weighting in runs:
                if weighting:
                    popt, se, rss = irls(law, x, y)
                else:
                    popt, se, rss = scipy_fit(law, x, y)
                    reference[law] = rss
                extra = ["--weighting", weighting] if weighting else []
                name = f"{ds['name']}: {law}" + (f", {weighting}" if weighting else "")
                code, out, err = run(["fit", str(path), "--model", law, "--json", *extra])
                if code != 0:
                    print(f"FAIL {name}: turnover exited {code}: {err.strip()}")
                    failed += 2 * len(popt) + 1
                    continue
                got = json.loads(out)
                params = [p for p in got["parameters"] if not p["derived"]]
                check(name, "rss", got["rss"], rss)
                for j, p in enumerate(params):
                    check(name, p["name"], p["value"], popt[j])
                    check(name, p["name"] + " se", p["std_error"], se[j])
            # The comparison's F tests against SciPy's sums of squares.
            for law in ("ordered", "ping-pong"):
                if law not in reference:
                    reference[law] = scipy_fit(law, x, y)[2] if law == ds["law"] else None
            code, out, err = run(["compare", str(path), "--json"])
            if code != 0:
                print(f"FAIL {ds['name']}: turnover compare exited {code}: {err.strip()}")
                failed += 1
                continue
            comparison = json.loads(out)
            n = len(y)
            for test in comparison["f_tests"]:
                simpler = test["simpler"]
                if reference.get(simpler) is None:
                    # Only the generating law's own fit is checked here; a
                    # law that cannot describe the data may run off, and
                    # its sum of squares is then where the search stopped.
                    continue
                rss_s, rss_g = reference[simpler], reference["sequential"]
                f = ((rss_s - rss_g) / 1) / (rss_g / (n - 4))
                check(ds["name"], f"F {simpler}", test["f"], max(f, 0.0))
                check(ds["name"], f"p {simpler}", test["p_value"], float(stats.f.sf(max(f, 0.0), 1, n - 4)))
            print(f"     {ds['name']}: verdict: {comparison['verdict']}")
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
