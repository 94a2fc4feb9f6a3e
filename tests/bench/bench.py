#!/usr/bin/env python3
"""Benchmark, not a test: Turnover (the release `turnover` binary, whole
processes) against SciPy's curve_fit on the same invented data sets,
written here from a seeded generator and read by both. Prints each case's
time per curve for both and the ratio Turnover/SciPy (below 1: Turnover is
faster).

What is timed:
- Turnover: `turnover fit FILE --group-by curve --threads 1 --format tsv`
  on a file of R copies of the case (each with its own noise), divided by
  R: reading, fitting, standard errors, t intervals, R², AICc, flags and
  writing, plus one process start shared by the R curves.
- SciPy: a Python loop of curve_fit (Levenberg-Marquardt, with the
  covariance) over the same R curves, from a starting guess at 1.5 times
  the true values (curve_fit needs one; Turnover finds its own), plus the
  t intervals; the data are already in memory.
- bootstrap: one process fitting a 12-point Michaelis-Menten curve with
  2,000 residual resamples, against a SciPy loop of 2,000 curve_fit calls
  on the same kind of resamples.
- batch: 10,000 ten-point dose-response curves, the whole `turnover`
  process (default threads, and --threads 1) against the SciPy loop.

A second table compares the two in-process, per call, on the same files:
- Turnover: the `fit_timing` example of turnover-core (FIT_TIMING_BIN),
  which reads the file once and times `fit_model` (starting values, fit,
  SEs, t intervals, R², AICc, bias) on every curve, the fastest of several
  passes; for the bootstrap, a fit plus bootstrap intervals from the
  resamples (`apply_interval_method`).
- SciPy: the same loop of curve_fit plus t intervals as above (already in
  process), the fastest of several passes; for the bootstrap, the loop of
  curve_fit calls on resamples.

Usage: TURNOVER_BIN=target/release/turnover \
       FIT_TIMING_BIN=target/release/examples/fit_timing python3 tests/bench/bench.py
"""
import os
import subprocess
import sys
import tempfile
import time

import numpy as np
from scipy.optimize import curve_fit
from scipy.stats import t as student_t

BIN = os.environ.get("TURNOVER_BIN", "target/release/turnover")
TIMING_BIN = os.environ.get("FIT_TIMING_BIN", "target/release/examples/fit_timing")
OUT = tempfile.mkdtemp(prefix="turnover-bench-")
# BENCH_QUICK=1 shrinks every case (a check that the script runs, not a benchmark).
QUICK = bool(os.environ.get("BENCH_QUICK"))
BATCH = 200 if QUICK else 10_000
RESAMPLES = 100 if QUICK else 2000
# Passes of each in-process loop; the fastest counts.
PASSES = 2 if QUICK else 7
rng = np.random.default_rng(20261202)


def mm(s, vmax, km):
    return vmax * s / (km + s)


def mixed(x, vmax, km, kic, kiu):
    s, i = x
    return vmax * s / (km * (1 + i / kic) + s * (1 + i / kiu))


def logistic(i, bottom, top, ic50, h):
    return bottom + (top - bottom) / (1 + (i / ic50) ** h)


E_T = 5.0


def morrison(i, v0, ki):
    b = E_T + i + ki
    return v0 * (1 - (b - np.sqrt(b * b - 4 * E_T * i)) / (2 * E_T))


def cases():
    """(name, model, header, x columns, f, truth, copies, extra args)."""
    s12 = np.array([0.5, 1, 2, 3, 5, 7.5, 10, 15, 20, 30, 50, 100.0])
    s7 = np.array([2, 4, 8, 16, 32, 64, 128.0])
    i4 = np.array([0, 5, 15, 45.0])
    ss, ii = np.meshgrid(s7, i4)
    i30 = 100.0 / 1.6 ** np.arange(30)
    i12 = np.array([0, 1, 2, 4, 6, 8, 10, 15, 20, 30, 50, 100.0])
    return [
        ("MM, 12 points", "mm", "[S] (µM)\tv (µM/min)", [s12], lambda x, *p: mm(x[0], *p), (10.0, 8.0), 500, []),
        ("mixed, 28 points", "mixed", "[S] (µM)\t[I] (µM)\tv (µM/min)", [ss.ravel(), ii.ravel()],
         lambda x, *p: mixed(x, *p), (10.0, 20.0, 10.0, 40.0), 100, []),
        ("logistic, 30 points", "ic50", "[I] (µM)\t% activity", [i30], lambda x, *p: logistic(x[0], *p), (2.0, 100.0, 1.5, 1.0), 500, []),
        ("Morrison, 12 points", "morrison", "[I] (nM)\tv", [i12], lambda x, *p: morrison(x[0], *p), (10.0, 3.0), 500, ["--enzyme", str(E_T)]),
    ]


def noisy(f, xs, truth, sd):
    y = f(xs, *truth)
    return y + sd * np.abs(y).max() * rng.standard_normal(y.shape)


def write_batch(path, header, xs, ys):
    with open(path, "w") as out:
        out.write("curve\t" + header + "\n")
        for k, y in enumerate(ys):
            for j in range(len(y)):
                cells = [repr(float(c[j])) for c in xs] + [repr(float(y[j]))]
                out.write(f"c{k}\t" + "\t".join(cells) + "\n")


def time_process(args, repeats=3):
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        done = subprocess.run(args, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        best = min(best, time.perf_counter() - t0)
        if done.returncode not in (0, 3):
            sys.exit(f"turnover failed: {done.stderr.decode()}")
    return best


def scipy_fit(f, x, y, p0):
    p, cov = curve_fit(f, x, y, p0=p0, maxfev=10000)
    dof = len(y) - len(p)
    se = np.sqrt(np.diag(cov))
    q = student_t.ppf(0.975, dof)
    return p, se, p - q * se, p + q * se


def time_scipy(f, xs, ys, p0, repeats=3):
    x = np.vstack(xs)
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        for y in ys:
            try:
                scipy_fit(f, x, y, p0)
            except RuntimeError:
                pass
        best = min(best, time.perf_counter() - t0)
    return best


def main():
    rows = []
    inprocess = []
    for name, model, header, xs, f, truth, copies, extra in cases():
        copies = max(2, copies // 50) if QUICK else copies
        ys = [noisy(f, np.vstack(xs), truth, 0.02) for _ in range(copies)]
        path = os.path.join(OUT, model + ".tsv")
        write_batch(path, header, xs, ys)
        ours = time_process([BIN, "fit", path, "--group-by", "curve", "--model", model, "--threads", "1", "--format", "tsv", "--lenient", *extra]) / copies
        theirs = time_scipy(f, xs, ys, tuple(1.5 * v for v in truth), repeats=PASSES) / copies
        rows.append((name, ours, theirs))
        inprocess.append((name, in_process(model, path, extra, "seconds_per_fit"), theirs))

    # Bootstrap: 2,000 residual resamples of one 12-point MM curve.
    name, model, header, xs, f, truth, _, _ = cases()[0]
    x = xs[0]
    y = noisy(f, np.vstack(xs), truth, 0.02)
    path = os.path.join(OUT, "bootstrap.tsv")
    with open(path, "w") as out:
        out.write(header + "\n" + "".join(f"{float(a)!r}\t{float(b)!r}\n" for a, b in zip(x, y)))
    ours = time_process([BIN, "fit", path, "--ci", "bootstrap", "--resamples", str(RESAMPLES), "--json"])
    theirs = float("inf")
    # A pass is 2,000 curve_fit calls (a few tenths of a second): three do.
    for _ in range(1 if QUICK else 3):
        t0 = time.perf_counter()
        p, _ = curve_fit(mm, x, y, p0=(15.0, 12.0))
        fitted = mm(x, *p)
        residuals = y - fitted
        for _ in range(RESAMPLES):
            resample = fitted + rng.choice(residuals, size=len(residuals), replace=True)
            try:
                curve_fit(mm, x, resample, p0=p)
            except RuntimeError:
                pass
        theirs = min(theirs, time.perf_counter() - t0)
    rows.append((f"bootstrap, {RESAMPLES:,} resamples", ours, theirs))
    inprocess.append((f"bootstrap, {RESAMPLES:,} resamples", in_process(model, path, ["--bootstrap", str(RESAMPLES)], "seconds_per_bootstrap"), theirs))

    # Batch: 10,000 ten-point dose-response curves.
    doses = 100.0 / 3.0 ** np.arange(10)
    truths = [(0.0, 100.0, 10 ** rng.uniform(-1.5, 1.0), 1.0) for _ in range(BATCH)]
    ys = [logistic(doses, *t) + 3.0 * rng.standard_normal(10) for t in truths]
    path = os.path.join(OUT, "batch.tsv")
    write_batch(path, "[I] (µM)\t% activity", [doses], ys)
    batch_args = [BIN, "fit", path, "--group-by", "curve", "--model", "ic50", "--format", "tsv", "--lenient"]
    ours_all = time_process(batch_args, repeats=1)
    ours_one = time_process(batch_args + ["--threads", "1"], repeats=1)
    t0 = time.perf_counter()
    for y in ys:
        try:
            scipy_fit(logistic, doses, y, (0.0, 100.0, 1.0, 1.0))
        except RuntimeError:
            pass
    theirs = time.perf_counter() - t0
    rows.append((f"batch of {BATCH:,} curves, 1 thread", ours_one, theirs))
    rows.append((f"batch of {BATCH:,} curves, {os.cpu_count()} threads", ours_all, theirs))

    print(f"machine: {os.cpu_count()} logical CPUs; {platform_line()}")
    print(f"{'case':<34} {'Turnover':>12} {'SciPy':>12} {'Turnover/SciPy':>15}")
    for name, ours, theirs in rows:
        print(f"{name:<34} {fmt(ours):>12} {fmt(theirs):>12} {ours / theirs:>15.3f}")
    print()
    print("in process, per call (Turnover: fit_model in Rust; SciPy: curve_fit in Python; fastest of "
          f"{PASSES} passes)")
    print(f"{'case':<34} {'Turnover':>12} {'SciPy':>12} {'Turnover/SciPy':>15} {'SciPy/Turnover':>15}")
    for name, ours, theirs in inprocess:
        print(f"{name:<34} {fmt_small(ours):>12} {fmt_small(theirs):>12} {ours / theirs:>15.4f} {theirs / ours:>15.1f}")
    rate = BATCH / ours_all
    print(f"batch rate: {rate:,.0f} dose-response curves/s; 10^6 curves would take about "
          f"{1e6 / rate / 60:.1f} min (extrapolated from the {BATCH:,}-curve run, not measured)")


def in_process(model, path, extra, key):
    """Seconds per call from the fit_timing example (see the docstring)."""
    args = [TIMING_BIN, "--model", model, "--file", path, "--repeats", str(PASSES)]
    args += [a for a in extra if a != "--lenient"]
    done = subprocess.run(args, capture_output=True, text=True)
    if done.returncode != 0:
        sys.exit(f"fit_timing failed: {done.stderr}")
    for line in done.stdout.splitlines():
        if line.startswith(key + " "):
            return float(line.split()[1])
    sys.exit(f"fit_timing printed no {key}: {done.stdout}")


def fmt_small(seconds):
    return f"{seconds * 1e6:.2f} µs" if seconds < 1e-3 else fmt(seconds)


def fmt(seconds):
    return f"{seconds * 1e3:.3f} ms" if seconds < 1 else f"{seconds:.2f} s"


def platform_line():
    try:
        with open("/proc/cpuinfo") as info:
            for line in info:
                if line.startswith("model name"):
                    return line.split(":", 1)[1].strip()
    except OSError:
        pass
    import platform
    return platform.processor() or platform.machine()


if __name__ == "__main__":
    main()
