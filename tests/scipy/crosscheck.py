#!/usr/bin/env python3
"""Cross-check of Turnover's Michaelis-Menten fit against SciPy.

Reference library: SciPy, ``scipy.optimize.curve_fit`` (method='lm', i.e. the
MINPACK Levenberg-Marquardt driver) for parameter values and standard errors
(sqrt(diag(pcov)) with absolute_sigma=False), and ``scipy.stats.t.ppf`` for the
95% confidence-interval multiplier. curve_fit is given the analytic Jacobian of
the model; its own results then sit within a few 1e-8 (relative) of the exact
least-squares solution, well inside the 1e-6 tolerance used here.

All datasets below are GENERATED synthetic data: they are produced by this
script from fixed numpy.random.default_rng seeds, so every run writes exactly
the same numbers. They are not measurements.

For each dataset the script
  1. writes a tab-separated file (header ``S\tv`` or ``S\tv\tsd``, values
     formatted with '%.17g') into a temporary directory,
  2. re-reads that file and fits the numbers actually written with curve_fit,
  3. runs ``TURNOVER_BIN fit FILE --model mm --json`` (plus ``--weighting sd``
     for the weighted section) and parses the JSON object on stdout,
  4. compares n and dof (exact), converged (must be true), rss, each
     parameter's value and std_error, and ci_low/ci_high against
     value -/+ t(0.975, dof) * se computed from the SciPy fit
     (all relative tolerance 1e-6).

Relative difference is |turnover - reference| / |reference| (absolute
difference if the reference is exactly 0).

Two further sections weight by the fitted curve: ``--weighting relative``
(weights 1/f^2, sigma = f) and ``--weighting poisson`` (weights 1/f, sigma =
sqrt(f)), on the same generated weighted datasets. Turnover iterates the
weights to convergence (generalised least squares by iterative reweighting);
the reference here is an independent iteratively reweighted loop written in
this script around curve_fit: start from sigma on the measured v, refit with
sigma computed from the previous fitted curve, until no parameter changes by
more than 1e-13 relative. Values, errors and intervals are those of the last
curve_fit call; rss is sum(((v - f) / sigma(f))**2) at the final estimate.

The weighted section is skipped (and counted as skipped) if the binary rejects
the ``--weighting`` option as unknown.  In the weighted section rss is taken to
be the weighted residual sum of squares, sum(((v - f) / sd)**2), which is the
quantity curve_fit minimises when given sigma=sd.

Usage:
    python3 tests/scipy/crosscheck.py [--keep-dir DIR]
Environment:
    TURNOVER_BIN  path to the turnover binary
                  (default: <repo>/target/release/turnover)
Exit status: 0 if every comparison passed, 1 otherwise (including a missing or
crashing binary).
"""

from __future__ import annotations

import argparse
import json
import math
import os
import re
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
from scipy import optimize, stats

REPO_ROOT = Path(__file__).resolve().parents[2]
DEFAULT_BIN = REPO_ROOT / "target" / "release" / "turnover"

REL_TOL = 1e-6
PARAM_NAMES = ("Vmax", "Km")
TIMEOUT_S = 120


def mm(s, vmax, km):
    return vmax * s / (km + s)


def mm_jac(s, vmax, km):
    """Analytic Jacobian d(mm)/d(Vmax, Km), passed to curve_fit so that the
    reference covariance is not limited by forward-difference error (~1e-8)."""
    d = km + s
    return np.column_stack((s / d, -vmax * s / d ** 2))


# --------------------------------------------------------------------------
# Generated datasets (synthetic; fixed seeds)
# --------------------------------------------------------------------------

def _rep(values, k):
    """Each concentration repeated k times (replicate measurements)."""
    return np.repeat(np.asarray(values, dtype=float), k)


def unweighted_datasets():
    """List of (name, description, S, v). All data generated here."""
    out = []

    def add(name, desc, seed, s, vmax, km, rel=None, abs_sd=None):
        rng = np.random.default_rng(seed)
        s = np.asarray(s, dtype=float)
        vt = mm(s, vmax, km)
        if rel is not None:
            v = vt * (1.0 + rel * rng.standard_normal(s.size))
        else:
            v = vt + abs_sd * rng.standard_normal(s.size)
        out.append((name, desc, s, v))

    add("basic", "Km=2 Vmax=100, 8 pts, 5% rel noise", 101,
        [0.25, 0.5, 1, 2, 4, 8, 12, 16], vmax=100.0, km=2.0, rel=0.05)
    add("tiny_scale", "Km=0.05 Vmax=0.01, 6 pts, 3% rel noise", 202,
        [0.01, 0.025, 0.05, 0.1, 0.2, 0.4], vmax=0.01, km=0.05, rel=0.03)
    add("large_scale", "Km=500 Vmax=5000, 10 pts, abs noise 2% of Vmax", 303,
        [25, 50, 100, 200, 350, 500, 800, 1200, 2000, 4000],
        vmax=5000.0, km=500.0, abs_sd=0.02 * 5000.0)
    add("duplicates", "Km=10 Vmax=1.5, 6 conc x2 reps, 4% rel noise", 404,
        _rep([1, 2.5, 5, 10, 25, 60], 2), vmax=1.5, km=10.0, rel=0.04)
    add("triplicates", "Km=0.8 Vmax=42, 5 conc x3 reps, 6% rel noise", 505,
        _rep([0.2, 0.5, 1, 2.5, 6], 3), vmax=42.0, km=0.8, rel=0.06)
    add("S_up_to_Km", "Km=50 Vmax=200, S<=Km only, 8 pts, 3% rel noise", 606,
        np.linspace(5, 50, 8), vmax=200.0, km=50.0, rel=0.03)
    add("many_points", "Km=3 Vmax=12, 24 pts log-spaced, 10% rel noise", 707,
        np.geomspace(0.1, 100, 24), vmax=12.0, km=3.0, rel=0.10)
    add("abs_noise", "Km=0.2 Vmax=7.5, 9 pts, abs noise 3% of Vmax", 808,
        [0.02, 0.05, 0.1, 0.15, 0.2, 0.3, 0.5, 1, 2],
        vmax=7.5, km=0.2, abs_sd=0.03 * 7.5)
    return out


def weighted_datasets():
    """List of (name, description, S, v, sd). All data generated here."""
    out = []

    def add(name, desc, seed, s, vmax, km, sd_fn):
        rng = np.random.default_rng(seed)
        s = np.asarray(s, dtype=float)
        vt = mm(s, vmax, km)
        sd = sd_fn(vt, vmax)
        v = vt + sd * rng.standard_normal(s.size)
        out.append((name, desc, s, v, sd))

    add("w_mixed_sd", "Km=1.5 Vmax=30, 10 pts, sd=2%Vmax+5%v", 1101,
        [0.1, 0.2, 0.4, 0.75, 1.5, 3, 5, 8, 12, 20], 30.0, 1.5,
        lambda vt, vmax: 0.02 * vmax + 0.05 * vt)
    add("w_rel_sd_dups", "Km=200 Vmax=900, 6 conc x2, sd=6% of v", 1202,
        _rep([20, 50, 100, 200, 500, 1500], 2), 900.0, 200.0,
        lambda vt, vmax: 0.06 * vt)
    add("w_tiny_scale", "Km=0.05 Vmax=0.02, 8 pts, sd=10% of v", 1303,
        [0.005, 0.01, 0.02, 0.04, 0.08, 0.16, 0.32, 0.64], 0.02, 0.05,
        lambda vt, vmax: 0.10 * vt)
    return out


# --------------------------------------------------------------------------
# File I/O
# --------------------------------------------------------------------------

def write_tsv(path: Path, columns, header):
    with open(path, "w", encoding="ascii", newline="\n") as fh:
        fh.write("\t".join(header) + "\n")
        for row in zip(*columns):
            fh.write("\t".join("%.17g" % x for x in row) + "\n")


def read_tsv(path: Path, ncol):
    data = np.loadtxt(path, delimiter="\t", skiprows=1, dtype=float, ndmin=2)
    if data.shape[1] != ncol:
        raise ValueError(f"{path}: expected {ncol} columns, got {data.shape[1]}")
    return [data[:, i].copy() for i in range(ncol)]


# --------------------------------------------------------------------------
# SciPy reference fit
# --------------------------------------------------------------------------

def start_values(s, v):
    vmax0 = 1.2 * float(np.max(v))
    half = 0.5 * float(np.max(v))
    km0 = float(s[np.argmin(np.abs(v - half))])
    if km0 <= 0:
        km0 = float(np.median(s))
    return [vmax0, km0]


def scipy_irls(s, v, power):
    """Weights from the fitted curve, sigma = f**power (1 for relative, 0.5
    for Poisson), iterated to a fixed point with curve_fit; independent of
    Turnover's loop (its own start, stopping rule and iteration cap)."""
    ref = scipy_fit(s, v, sd=np.abs(v) ** power)
    p = [ref["params"][n]["value"] for n in PARAM_NAMES]
    for _ in range(500):
        sigma = mm(s, *p) ** power
        ref = scipy_fit(s, v, sd=sigma, p0=p)
        new = [ref["params"][n]["value"] for n in PARAM_NAMES]
        change = max(abs(a - b) / abs(b) for a, b in zip(p, new))
        p = new
        if change <= 1e-13:
            break
    else:
        raise RuntimeError("the reference reweighting did not settle in 500 rounds")
    resid = (v - mm(s, *p)) / mm(s, *p) ** power
    ref["rss"] = float(np.sum(resid ** 2))
    return ref


def scipy_fit(s, v, sd=None, p0=None):
    if p0 is None:
        p0 = start_values(s, v)
    popt, pcov, info, mesg, ier = optimize.curve_fit(
        mm, s, v, p0=p0, sigma=sd, jac=mm_jac, absolute_sigma=False, method="lm",
        ftol=1e-14, xtol=1e-14, gtol=1e-14, maxfev=100000, full_output=True)
    if ier not in (1, 2, 3, 4):
        raise RuntimeError(f"curve_fit did not converge: ier={ier} {mesg}")
    if not np.all(np.isfinite(pcov)):
        raise RuntimeError("curve_fit returned a non-finite covariance")
    resid = v - mm(s, *popt)
    if sd is not None:
        resid = resid / sd
    rss = float(np.sum(resid ** 2))
    n = s.size
    dof = n - 2
    se = np.sqrt(np.diag(pcov))
    tq = float(stats.t.ppf(0.975, dof))
    ref = {"n": n, "dof": dof, "rss": rss, "params": {}}
    for name, val, err in zip(PARAM_NAMES, popt, se):
        ref["params"][name] = {
            "value": float(val),
            "std_error": float(err),
            "ci_low": float(val - tq * err),
            "ci_high": float(val + tq * err),
        }
    return ref


# --------------------------------------------------------------------------
# Running Turnover
# --------------------------------------------------------------------------

class CliCrash(Exception):
    pass


class OptionRejected(Exception):
    pass


_UNKNOWN_OPT = re.compile(
    r"(unknown|unexpected|unrecognized|unrecognised|invalid|unsupported)"
    r"[^\n]*(option|argument|flag)|(option|argument|flag)[^\n]*"
    r"(unknown|unexpected|unrecognized|unrecognised|not (recognized|supported))",
    re.IGNORECASE)


def run_turnover(binary: Path, path: Path, extra=()):
    cmd = [str(binary), "fit", str(path), "--model", "mm", "--json", *extra]
    try:
        proc = subprocess.run(cmd, capture_output=True, text=True,
                              timeout=TIMEOUT_S)
    except subprocess.TimeoutExpired:
        raise CliCrash(f"timed out after {TIMEOUT_S}s: {' '.join(cmd)}")
    except OSError as exc:
        raise CliCrash(f"could not execute {binary}: {exc}")
    if proc.returncode != 0:
        msg = (proc.stderr + "\n" + proc.stdout).strip()
        if extra and "--weighting" in extra and "weighting" in msg \
                and _UNKNOWN_OPT.search(msg):
            raise OptionRejected(msg)
        raise CliCrash(f"exit status {proc.returncode} from "
                       f"{' '.join(cmd)}\n    {msg}")
    try:
        out = json.loads(proc.stdout)
    except json.JSONDecodeError as exc:
        raise CliCrash(f"stdout is not a single JSON object ({exc}) from "
                       f"{' '.join(cmd)}\n    stdout: {proc.stdout[:500]!r}")
    if not isinstance(out, dict):
        raise CliCrash(f"JSON on stdout is not an object: {proc.stdout[:200]!r}")
    return out


# --------------------------------------------------------------------------
# Comparison
# --------------------------------------------------------------------------

class Tally:
    def __init__(self):
        self.passed = 0
        self.failed = 0
        self.skipped = 0
        self.failures = []

    def row(self, ds, qty, got, ref, kind):
        """kind: 'rel' (REL_TOL relative), 'exact', or 'true'."""
        status, diff_s = "FAIL", "-"
        try:
            if kind == "true":
                ok = got is True
                diff_s = "-"
            elif kind == "exact":
                ok = (isinstance(got, (int, float)) and not isinstance(got, bool)
                      and got == ref)
                diff_s = "-" if not ok else "0"
            else:
                g = float(got)
                if not math.isfinite(g):
                    raise ValueError("non-finite")
                diff = abs(g - ref) / abs(ref) if ref != 0 else abs(g - ref)
                diff_s = f"{diff:.3e}"
                ok = diff <= REL_TOL
        except (TypeError, ValueError):
            ok = False
            diff_s = "n/a"
        if ok:
            status = "ok"
            self.passed += 1
        else:
            self.failed += 1
            self.failures.append((ds, qty, got, ref, diff_s))
        print(f"{ds:<16} {qty:<16} {fmt(got):>24} {fmt(ref):>24} "
              f"{diff_s:>10}  {status}")

    def fail_all(self, ds, nchecks, reason):
        self.failed += nchecks
        self.failures.append((ds, "ALL", None, None, reason))
        print(f"{ds:<16} {'(all checks)':<16} FAILED x{nchecks}: {reason}")

    def skip_all(self, ds, nchecks, reason):
        self.skipped += nchecks
        print(f"{ds:<16} {'(all checks)':<16} SKIPPED x{nchecks}: {reason}")


def fmt(x):
    if isinstance(x, bool) or x is None:
        return str(x)
    if isinstance(x, int):
        return str(x)
    if isinstance(x, float):
        return f"{x:.12g}"
    s = repr(x)
    return s if len(s) <= 24 else s[:21] + "..."


N_CHECKS = 4 + 4 * len(PARAM_NAMES)  # n, dof, converged, rss + 4 per param


def compare(tally: Tally, ds: str, out: dict, ref: dict):
    tally.row(ds, "n", out.get("n"), ref["n"], "exact")
    tally.row(ds, "dof", out.get("dof"), ref["dof"], "exact")
    tally.row(ds, "converged", out.get("converged"), True, "true")
    tally.row(ds, "rss", out.get("rss"), ref["rss"], "rel")
    params = out.get("parameters")
    by_name = {}
    if isinstance(params, list):
        for p in params:
            if isinstance(p, dict) and "name" in p:
                by_name[p["name"]] = p
    for name in PARAM_NAMES:
        p = by_name.get(name, {})
        r = ref["params"][name]
        for key in ("value", "std_error", "ci_low", "ci_high"):
            tally.row(ds, f"{name}.{key}", p.get(key), r[key], "rel")


def header():
    print(f"{'dataset':<16} {'quantity':<16} {'turnover':>24} "
          f"{'scipy':>24} {'rel_diff':>10}  status")
    print("-" * 100)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--keep-dir", type=Path, default=None,
                    help="write the generated data files here instead of a "
                         "temporary directory (kept after the run)")
    args = ap.parse_args(argv)

    binary = Path(os.environ.get("TURNOVER_BIN", str(DEFAULT_BIN)))
    print(f"Turnover binary : {binary}")
    print(f"Reference       : scipy {__import__('scipy').__version__} "
          f"scipy.optimize.curve_fit(method='lm'), numpy {np.__version__}")
    print(f"Tolerance       : {REL_TOL:g} relative; n, dof exact")
    print("Data            : generated synthetic datasets (seeded "
          "numpy.random.default_rng), not measurements")
    if not binary.is_file() or not os.access(binary, os.X_OK):
        print(f"ERROR: Turnover binary not found or not executable: {binary}\n"
              f"       build it with `cargo build --release -p turnover-cli` "
              f"or set TURNOVER_BIN", file=sys.stderr)
        print("0 passed, 1 failed, 0 skipped")
        return 1

    tally = Tally()
    crashed = False

    if args.keep_dir is not None:
        args.keep_dir.mkdir(parents=True, exist_ok=True)
        ctx = None
        workdir = args.keep_dir
    else:
        ctx = tempfile.TemporaryDirectory(prefix="turnover-scipy-")
        workdir = Path(ctx.name)

    try:
        print()
        print("== Unweighted Michaelis-Menten fits ==")
        header()
        for name, desc, s, v in unweighted_datasets():
            path = workdir / f"{name}.tsv"
            write_tsv(path, (s, v), ("S", "v"))
            s_r, v_r = read_tsv(path, 2)  # fit exactly what was written
            ref = scipy_fit(s_r, v_r)
            print(f"# {name}: {desc} (n={s_r.size})")
            try:
                out = run_turnover(binary, path)
            except CliCrash as exc:
                crashed = True
                print(f"ERROR: Turnover crashed on {name}: {exc}",
                      file=sys.stderr)
                tally.fail_all(name, N_CHECKS, "binary crashed / bad output")
                continue
            compare(tally, name, out, ref)

        print()
        print("== Weighted Michaelis-Menten fits (--weighting sd, "
              "curve_fit sigma=sd, absolute_sigma=False) ==")
        header()
        wsets = weighted_datasets()
        skip_reason = None
        for name, desc, s, v, sd in wsets:
            path = workdir / f"{name}.tsv"
            write_tsv(path, (s, v, sd), ("S", "v", "sd"))
            if skip_reason is not None:
                tally.skip_all(name, N_CHECKS, skip_reason)
                continue
            s_r, v_r, sd_r = read_tsv(path, 3)
            ref = scipy_fit(s_r, v_r, sd=sd_r)
            print(f"# {name}: {desc} (n={s_r.size})")
            try:
                out = run_turnover(binary, path, ("--weighting", "sd"))
            except OptionRejected as exc:
                first = str(exc).strip().splitlines()[0] if str(exc).strip() \
                    else "option rejected"
                skip_reason = f"CLI rejects --weighting ({first})"
                print(f"NOTE: weighted section skipped: {skip_reason}")
                tally.skip_all(name, N_CHECKS, skip_reason)
                continue
            except CliCrash as exc:
                crashed = True
                print(f"ERROR: Turnover crashed on {name}: {exc}",
                      file=sys.stderr)
                tally.fail_all(name, N_CHECKS, "binary crashed / bad output")
                continue
            compare(tally, name, out, ref)
        # Weights from the fitted curve, iterated to convergence: relative
        # (1/f^2) is sigma = f, Poisson-like (1/f) is sigma = sqrt(f).
        for scheme, power in (("relative", 1.0), ("poisson", 0.5)):
            print()
            print(f"== Weighted Michaelis-Menten fits (--weighting {scheme}, "
                  f"independent reweighting loop around curve_fit) ==")
            header()
            for name, desc, s, v, _sd in wsets:
                name = f"{name}_{scheme}"
                path = workdir / f"{name}.tsv"
                write_tsv(path, (s, v), ("S", "v"))
                s_r, v_r = read_tsv(path, 2)
                ref = scipy_irls(s_r, v_r, power)
                print(f"# {name}: {desc} (n={s_r.size})")
                try:
                    out = run_turnover(binary, path, ("--weighting", scheme))
                except (OptionRejected, CliCrash) as exc:
                    crashed = True
                    print(f"ERROR: Turnover failed on {name}: {exc}",
                          file=sys.stderr)
                    tally.fail_all(name, N_CHECKS, "binary failed")
                    continue
                compare(tally, name, out, ref)
    finally:
        if ctx is not None:
            ctx.cleanup()

    print()
    if tally.failures:
        print("Failures:")
        for ds, qty, got, ref, diff in tally.failures:
            print(f"  {ds} {qty}: turnover={fmt(got)} scipy={fmt(ref)} "
                  f"rel_diff={diff}")
    if crashed:
        print("ERROR: the Turnover binary crashed or printed unusable output "
              "for at least one dataset (see above).", file=sys.stderr)
    print(f"{tally.passed} passed, {tally.failed} failed, "
          f"{tally.skipped} skipped")
    return 1 if (tally.failed or crashed) else 0


if __name__ == "__main__":
    sys.exit(main())
