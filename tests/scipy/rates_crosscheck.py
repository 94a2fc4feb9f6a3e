#!/usr/bin/env python3
"""Cross-check of ``turnover rates --json`` window slopes against NumPy/SciPy.

Reference: for every trace, the straight line over the window Turnover
reports (all readings with window_start <= t <= window_end) is refitted
independently by
  * ``numpy.polyfit(t, c, 1, cov='unscaled')``, whose unscaled covariance is
    multiplied by the residual variance RSS/(n - 2), and
  * ``scipy.stats.linregress`` (slope and its ``stderr``),
where c is the concentration Turnover converts to (Beer-Lambert,
c in uM = A / (eps*l) * 1e6). Slopes and standard errors must agree with both
to 1e-9 relative, and the number of points in the window must match. The
v-against-[E] checks (``enzyme_checks``) are refitted the same way from the
reported points: slope, intercept and both standard errors against
``numpy.polyfit(cov='unscaled')`` scaled by RSS/(n - 2), and the
intercept-zero verdict against |intercept| <= t(0.975, n - 2)*SE with
``scipy.stats.t.ppf``.

The plates are GENERATED synthetic data from numpy.random.default_rng seeds
(not measurements): integrated Michaelis-Menten product curves solved with
``scipy.optimize.brentq`` on S0 - S + Km ln(S0/S) = Vmax t, NADH's
6220 M^-1 cm^-1 (from memory), path 0.6 cm, Gaussian noise, written with
'%.9g'; the numbers actually written are what is refitted.

With ``--v0``, every trace's curvature-aware initial rate ``v0`` (the integrated
Michaelis-Menten equation with apparent constants of that trace, fitted to
the ``v0_points`` first readings) is refitted by ``scipy.optimize.curve_fit``
with ``scipy.special.lambertw`` (Newton's iteration in log form where
its argument would overflow), P = P0 + S0 - K W((S0/K) exp((S0 - V tau)/K)),
V = v0 (K + S0)/S0, tau = t - t_first, started from the first reading, the
window's slope and K = 0.001, 0.01, 0.1, 1, 10 times S0 (not from Turnover's
answer; the least RSS wins): v0 to 1e-6 (K, a nuisance parameter that is
often flat, is not compared), v0's standard error to 1e-4 relative (curve_fit's finite-difference
Jacobian); its 95% profile interval against an independent profile (P0 and
K refitted by curve_fit with v0 held, from seven starting K (0.03 to
30 times the optimum's), ends found by ``scipy.optimize.brentq``
on RSS(v0) = RSS_min (1 + t(0.975, n - 3)^2/(n - 3))) to 1e-3 relative:
both sides minimise over K, which is often nearly flat, from different
starting points, and their ends differed by up to 2e-4 relative when this
was written (a few per cent of the interval's half-width at most). The window
rate's 95% interval is checked against rate -/+ ``stats.t.ppf(0.975, n - 2)``
times its SE. Where the best curve is the K -> 0 limit (v0_k = 0) and the
line does not reach exhaustion, v0 is checked against
``scipy.stats.linregress`` over the same points (its SE and interval are
those of the curve with K free, by design); the first-order limit (v0_k
null) is only reported.

Prints one line per comparison and `N passed, N failed` last; exits 1 on any
failure (or a missing binary).

Environment: TURNOVER_BIN (default <repo>/target/release/turnover).
"""
from __future__ import annotations
import json, os, subprocess, sys, tempfile
from pathlib import Path
import numpy as np
from scipy import optimize, special, stats

REPO = Path(__file__).resolve().parents[2]
BIN = os.environ.get("TURNOVER_BIN", str(REPO / "target" / "release" / "turnover"))
EPS, PATH = 6220.0, 0.6

def product(t, s0, km, vmax):
    if t == 0:
        return 0.0
    g = lambda s: s0 - s + km * np.log(s0 / s) - vmax * t
    return s0 - optimize.brentq(g, 1e-300, s0, xtol=1e-15, rtol=1e-15)

PLATES = [
    # seed, Km (uM), Vmax (uM/min per nM), S0 list, [E] list (nM) or None, points, step (min), noise (A)
    (11, 50.0, 2.0, [5, 10, 20, 40, 80, 160, 320, 640], None, 60, 0.5, 0.001),
    (22, 200.0, 5.0, [25, 50, 100, 200, 400, 800], None, 100, 0.25, 0.002),
    (33, 30.0, 0.8, [300] * 5, [0.5, 1, 2, 4, 8], 40, 1.0, 0.0005),
]

passed = failed = 0
def w_exp(log_z):
    """W(exp(log_z)): scipy.special.lambertw where exp does not overflow,
    else Newton's iteration on w + ln w = log_z from w = log_z (a small K
    puts (S0/K) exp(S0/K) beyond double range)."""
    log_z = np.asarray(log_z, dtype=float)
    small = log_z < 600
    out = np.empty_like(log_z)
    out[small] = special.lambertw(np.exp(log_z[small])).real
    w = log_z[~small].copy()
    for _ in range(50):
        w = w - (w + np.log(w) - log_z[~small]) / (1 + 1 / w)
    out[~small] = w
    return out

def integrated(tau, p0, v0, k, s0):
    v = v0 * (k + s0) / s0
    return p0 + s0 - k * w_exp(np.log(s0 / k) + (s0 - v * tau) / k)

def check_v0(label, trace, x, y):
    s0, n = trace["s"], trace["v0_points"]
    x, y = x[:n], y[:n]
    tau = x - x[0]
    f = lambda tau, p0, v0, k: integrated(tau, p0, v0, k, s0)
    start = [y[0], max(trace["rate"], 1e-3 * s0), s0]
    best = None
    for kk in (0.001, 0.01, 0.1, 1.0, 10.0):
        start[2] = kk * s0
        try:
            popt, pcov = optimize.curve_fit(f, tau, y, p0=start, method="lm", ftol=1e-15, xtol=1e-15, gtol=1e-15, maxfev=100000)
        except RuntimeError:
            continue
        if popt[2] <= 0 or popt[1] <= 0:
            continue
        rss = float(np.sum((y - f(tau, *popt)) ** 2))
        if best is None or rss < best[0]:
            best = (rss, popt, pcov)
    _, popt, pcov = best
    # K itself is a nuisance parameter, often flat; v0 is what is compared.
    check(f"{label} v0 vs curve_fit", trace["v0"], float(popt[1]), 1e-6)
    check(f"{label} v0 se vs curve_fit", trace["v0_se"], float(np.sqrt(pcov[1, 1])), 1e-4)
    rss_min = float(np.sum((y - f(tau, *popt)) ** 2))
    cutoff = rss_min * (1 + stats.t.ppf(0.975, n - 3) ** 2 / (n - 3))
    def excess(c):
        g = lambda tau, p0, k: integrated(tau, p0, c, k, s0)
        least = np.inf
        for kk in (1.0, 0.03, 0.1, 0.3, 3.0, 10.0, 30.0):
            try:
                q, _ = optimize.curve_fit(g, tau, y, p0=[popt[0], kk * popt[2]], method="lm", ftol=1e-15, xtol=1e-15, gtol=1e-15, maxfev=100000)
            except RuntimeError:
                continue
            if q[1] > 0:
                least = min(least, float(np.sum((y - g(tau, *q)) ** 2)))
        return least - cutoff
    se = float(np.sqrt(pcov[1, 1]))
    for end, ours in ((-1, trace["v0_ci_low"]), (1, trace["v0_ci_high"])):
        far = popt[1] + end * 3 * se
        while excess(far) < 0:
            far += end * 3 * se
        ref = optimize.brentq(excess, popt[1], far, xtol=1e-14, rtol=1e-12)
        check(f"{label} v0 profile {'low' if end < 0 else 'high'} vs brentq profile", ours, ref, 1e-3)

def check(label, ours, ref, tol=1e-9):
    global passed, failed
    rel = abs(ours - ref) / abs(ref) if ref != 0 else abs(ours)
    ok = rel <= tol
    passed += ok; failed += (not ok)
    print(f"{'ok  ' if ok else 'FAIL'} {label}: turnover {ours:.12g}, reference {ref:.12g}, rel {rel:.2e}")

def truth(label, ok):
    global passed, failed
    passed += ok; failed += (not ok)
    print(f"{'ok  ' if ok else 'FAIL'} {label}")

with tempfile.TemporaryDirectory() as tmp:
    for seed, km, vmax, s0s, enzymes, points, step, noise in PLATES:
        rng = np.random.default_rng(seed)
        t = np.arange(points) * step
        names = [f"W{i+1}" for i in range(len(s0s))]
        es = enzymes or [1.0] * len(s0s)
        offsets = rng.uniform(0.03, 0.08, len(s0s))
        absorb = [off + np.array([product(tt, s0, km, vmax * e) for tt in t]) * 1e-6 * EPS * PATH
                  + noise * rng.standard_normal(points) for off, s0, e in zip(offsets, s0s, es)]
        traces, layout = Path(tmp) / f"plate{seed}.tsv", Path(tmp) / f"layout{seed}.tsv"
        with traces.open("w") as f:
            f.write("time (min)\t" + "\t".join(names) + "\n")
            for j in range(points):
                f.write(f"{t[j]:.9g}\t" + "\t".join(f"{a[j]:.9g}" for a in absorb) + "\n")
        with layout.open("w") as f:
            if enzymes:
                f.write("trace\tS (uM)\tE (nM)\n" + "".join(f"{n}\t{s}\t{e}\n" for n, s, e in zip(names, s0s, es)))
            else:
                f.write("trace\tS (uM)\n" + "".join(f"{n}\t{s}\n" for n, s in zip(names, s0s)))
        rows = np.loadtxt(traces, skiprows=1, delimiter="\t")
        tt, conc = rows[:, 0], rows[:, 1:] / (EPS * PATH) * 1e6
        try:
            out = subprocess.run([BIN, "rates", str(traces), "--layout", str(layout),
                                  "--epsilon", str(EPS), "--path", str(PATH), "--json", "--v0"],
                                 capture_output=True, text=True, check=True)
        except (OSError, subprocess.CalledProcessError) as e:
            print(f"FAIL plate {seed}: turnover did not run: {e}")
            failed += 1
            continue
        res = json.loads(out.stdout)
        for k, trace in enumerate(res["traces"]):
            label = f"plate {seed} {trace['name']}"
            if trace["rate"] is None:
                truth(f"{label}: a rate was fitted", False)
                continue
            inside = (tt >= trace["window_start"]) & (tt <= trace["window_end"])
            x, y = tt[inside], conc[inside, k]
            n = len(x)
            truth(f"{label}: {n} points in the window, turnover says {trace['window_points']}", n == trace["window_points"])
            coef, cov = np.polyfit(x, y, 1, cov="unscaled")
            rss = float(np.sum((y - np.polyval(coef, x)) ** 2))
            se_polyfit = float(np.sqrt(cov[0, 0] * rss / (n - 2)))
            lr = stats.linregress(x, y)
            check(f"{label} slope vs polyfit", trace["rate"], float(coef[0]))
            check(f"{label} slope vs linregress", trace["rate"], float(lr.slope))
            check(f"{label} slope se vs polyfit", trace["rate_se"], se_polyfit)
            check(f"{label} slope se vs linregress", trace["rate_se"], float(lr.stderr))
            q = stats.t.ppf(0.975, n - 2)
            check(f"{label} rate ci low", trace["rate_ci_low"], trace["rate"] - q * lr.stderr)
            check(f"{label} rate ci high", trace["rate_ci_high"], trace["rate"] + q * lr.stderr)
            if trace["v0"] is None:
                truth(f"{label}: a v0 was fitted", False)
            elif trace["v0_k"] == 0 and trace["v0"] * (tt[trace["v0_points"] - 1] - tt[0]) < trace["s"]:
                # The K -> 0 limit before exhaustion is a straight line.
                x0, y0 = tt[:trace["v0_points"]], conc[:trace["v0_points"], k]
                lr0 = stats.linregress(x0, y0)
                check(f"{label} v0 (straight-line limit) vs linregress", trace["v0"], float(lr0.slope))
                # Its SE and interval are those of the curve with K free, by
                # design; they are not the line's and not compared here.
                truth(f"{label} v0 interval brackets v0", trace["v0_ci_low"] <= trace["v0"] <= trace["v0_ci_high"])
            elif trace["v0_k"] is None or trace["v0_k"] == 0:
                print(f"note {label}: v0 {trace['v0']:.6g} from a limit of K ({trace['v0_k']}); not refitted")
            else:
                check_v0(label, trace, tt, conc[:, k])
        for c in res["enzyme_checks"]:
            x = np.array([p[0] for p in c["points"]]); y = np.array([p[1] for p in c["points"]])
            n = len(x)
            coef, cov = np.polyfit(x, y, 1, cov="unscaled")
            s2 = float(np.sum((y - np.polyval(coef, x)) ** 2)) / (n - 2)
            se = np.sqrt(np.diag(cov) * s2)
            label = f"plate {seed} v against [E] at [S] {c['s']}"
            check(f"{label} slope", c["slope"], float(coef[0]))
            check(f"{label} intercept", c["intercept"], float(coef[1]))
            check(f"{label} slope se", c["slope_se"], float(se[0]))
            check(f"{label} intercept se", c["intercept_se"], float(se[1]))
            zero = abs(coef[1]) <= stats.t.ppf(0.975, n - 2) * se[1]
            truth(f"{label} intercept zero: turnover {c['intercept_zero']}, reference {bool(zero)}", c["intercept_zero"] == bool(zero))
        if enzymes:
            truth(f"plate {seed}: one v against [E] check", len(res["enzyme_checks"]) == 1)

print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
