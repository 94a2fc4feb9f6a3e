//! Confidence intervals beyond the asymptotic ones: profile likelihood and
//! bootstrap.
//!
//! **Profile intervals** (Bates & Watts 1988, ch. 6). For parameter j the
//! profile sum of squares S(c) is the least RSS with θj held at c and the
//! other parameters refitted. The profile t statistic is
//! τ(c) = sign(c − θ̂j)·sqrt(S(c) − S(θ̂))/s, and the interval is the set of c
//! with |τ(c)| ≤ t(1 − α/2, n − p), which is the F-based cut-off
//! S(c) ≤ S(θ̂)·(1 + F(1, n − p; α)/(n − p)) since F(1, ν) = t(ν)². Unlike the
//! asymptotic interval it follows the curvature of the model, so it can be
//! asymmetric, and it can be open on one side when the data do not bound a
//! parameter at all (then that end is `None`).
//!
//! **Bootstrap intervals** (Efron & Tibshirani 1993; Davison & Hinkley
//! 1997): refit to resampled data sets. Residual resampling keeps the
//! design and adds resampled weighted residuals, each divided by
//! sqrt(1 − leverage) and centred to undo the shrinkage of fitted
//! residuals; case resampling draws whole rows. Refits reweight from the
//! fitted curve when the original fit did. The interval is by default the
//! studentised (bootstrap-t) one, which covers at n = 12–20 where the
//! percentile interval undercovers; percentiles remain available. The
//! generator is seeded by the caller, so results are reproducible.

use crate::fit::{flags, iterate_weights, runaway_limit, unscaled_covariance, Fit, FitSummary};
use crate::model::{Model, Observations, ParameterSpec};
use crate::random::SplitMix64;
use crate::solver::{minimise, minimise_solution, SolverReport, SolverSettings, Termination};
use nalgebra::DMatrix;
use serde::{Deserialize, Serialize};

/// How intervals are computed.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum IntervalMethod {
    /// value ± t·SE from the asymptotic covariance.
    #[default]
    Asymptotic,
    /// Profile likelihood (profile t, F-based cut-off).
    Profile,
    /// Bootstrap percentiles.
    Bootstrap,
}

impl IntervalMethod {
    /// The name used by the CLI, the page and JSON (`ci_method`).
    pub fn name(self) -> &'static str {
        match self {
            IntervalMethod::Asymptotic => "asymptotic",
            IntervalMethod::Profile => "profile",
            IntervalMethod::Bootstrap => "bootstrap",
        }
    }

    /// Reads an [`IntervalMethod::name`].
    pub fn from_name(name: &str) -> Result<Self, String> {
        match name.trim() {
            "asymptotic" => Ok(IntervalMethod::Asymptotic),
            "profile" => Ok(IntervalMethod::Profile),
            "bootstrap" => Ok(IntervalMethod::Bootstrap),
            other => Err(format!("unknown interval method '{other}'; expected asymptotic, profile or bootstrap")),
        }
    }
}

/// A model with one parameter held fixed; the remaining parameters are the
/// free ones, in their original order.
struct HeldFixed<'a> {
    inner: &'a dyn Model,
    index: usize,
    value: f64,
    free_specs: Vec<ParameterSpec>,
}

/// Models with at most this many parameters are evaluated by a held-fixed
/// profile through stack buffers; larger ones through a `Vec` per call.
const STACK_PARAMETERS: usize = 8;

impl HeldFixed<'_> {
    fn full(&self, free: &[f64]) -> Vec<f64> {
        let mut p = Vec::with_capacity(free.len() + 1);
        p.extend_from_slice(&free[..self.index]);
        p.push(self.value);
        p.extend_from_slice(&free[self.index..]);
        p
    }

    /// Calls `f` with the full parameter vector, on the stack for small
    /// models: the profile evaluates the model once per observation and
    /// step, so an allocation per call would dominate.
    fn with_full<R>(&self, free: &[f64], f: impl FnOnce(&[f64]) -> R) -> R {
        let m = free.len() + 1;
        if m > STACK_PARAMETERS {
            return f(&self.full(free));
        }
        let mut p = [0.0; STACK_PARAMETERS];
        p[..self.index].copy_from_slice(&free[..self.index]);
        p[self.index] = self.value;
        p[self.index + 1..m].copy_from_slice(&free[self.index..]);
        f(&p[..m])
    }
}

impl Model for HeldFixed<'_> {
    fn name(&self) -> &str {
        self.inner.name()
    }
    fn equation(&self) -> &str {
        self.inner.equation()
    }
    fn parameters(&self) -> &[ParameterSpec] {
        &self.free_specs
    }
    fn predictors(&self) -> usize {
        self.inner.predictors()
    }
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        self.with_full(p, |full| self.inner.value(x, full))
    }
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let m = p.len() + 1;
        if m > STACK_PARAMETERS {
            let mut full_gradient = vec![0.0; m];
            self.inner.gradient(x, &self.full(p), &mut full_gradient);
            full_gradient.remove(self.index);
            gradient.copy_from_slice(&full_gradient);
            return;
        }
        let mut full_gradient = [0.0; STACK_PARAMETERS];
        self.with_full(p, |full| self.inner.gradient(x, full, &mut full_gradient[..m]));
        gradient[..self.index].copy_from_slice(&full_gradient[..self.index]);
        gradient[self.index..].copy_from_slice(&full_gradient[self.index + 1..m]);
    }
    fn value_and_gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) -> f64 {
        let m = p.len() + 1;
        if m > STACK_PARAMETERS {
            self.gradient(x, p, gradient);
            return self.value(x, p);
        }
        let mut full_gradient = [0.0; STACK_PARAMETERS];
        let value = self.with_full(p, |full| self.inner.value_and_gradient(x, full, &mut full_gradient[..m]));
        gradient[..self.index].copy_from_slice(&full_gradient[..self.index]);
        gradient[self.index..].copy_from_slice(&full_gradient[self.index + 1..m]);
        value
    }
    fn initial_guess(&self, _: &Observations) -> Result<Vec<f64>, crate::Error> {
        Err(crate::Error::numerical("a held-fixed model is started from the full fit"))
    }
}

/// The least RSS with parameter `index` held at `value`, refitting the
/// others from `start` (the full parameter vector). Returns the RSS and the
/// refitted full vector, or `None` when the refit fails.
pub fn profile_rss(model: &dyn Model, data: &Observations, index: usize, value: f64, start: &[f64]) -> Option<(f64, Vec<f64>)> {
    let mut free_specs = model.parameters().to_vec();
    free_specs.remove(index);
    let held = HeldFixed { inner: model, index, value, free_specs };
    let mut free_start = start.to_vec();
    free_start.remove(index);
    if free_start.is_empty() {
        let rss: f64 = (0..data.len())
            .map(|i| data.weights()[i] * (data.y()[i] - model.value(data.x(i), &[value])).powi(2))
            .sum();
        return rss.is_finite().then(|| (rss, vec![value]));
    }
    let (parameters, rss, converged) = minimise_solution(&held, data, &free_start, &SolverSettings::default());
    converged.then(|| (rss, held.full(&parameters)))
}

/// Where [`profile_walk`] stopped: the last value inside the
/// cut-off (value, |τ|, refitted parameters), the first value past it
/// (value, |τ|), the scale of the steps, and whether the last step halved
/// the value (a geometric walk, whose scale is the value itself).
struct Bracket {
    inner: (f64, f64, Vec<f64>),
    outer: (f64, f64),
    se: f64,
    theta: f64,
    geometric: bool,
}

/// τ at `c` from the profile sum of squares `rss` (see the module doc).
fn profile_tau(fit: &Fit, theta: f64, rss: f64, c: f64) -> f64 {
    let s = (fit.summary.rss / fit.summary.dof as f64).sqrt();
    (c - theta).signum() * (rss - fit.summary.rss).max(0.0).sqrt() / s
}

/// Failed refits [`profile_walk`] answers by shortening its step before it
/// gives up on a side (Turnover's choice).
const WALK_RETRIES: usize = 4;

/// The first part of [`profile_end`]: the walk outwards from the optimum
/// until |τ| passes `t`. `None` exactly when `profile_end` gives `None`
/// before its refinement starts: the fit ran off this way, the residual
/// scale is zero, a refit of the walk still fails after [`WALK_RETRIES`]
/// shortened steps, the walk leaves every finite
/// scale or does not reach the cut-off in its steps.
fn profile_walk(model: &dyn Model, data: &Observations, fit: &Fit, index: usize, direction: f64, t: f64) -> Option<Bracket> {
    let best = fit.values();
    let theta = best[index];
    let ran_off = fit.summary.parameters[index].flag.as_deref() == Some(flags::NOT_DETERMINED);
    if ran_off && direction * theta > 0.0 {
        // The fit ran off this way: the profile keeps falling, never closes.
        return None;
    }
    let s = (fit.summary.rss / fit.summary.dof as f64).sqrt();
    if !(s > 0.0) {
        return None;
    }
    let tau = |rss: f64, c: f64| profile_tau(fit, theta, rss, c);
    let se = fit.summary.parameters[index].std_error.unwrap_or(theta.abs() * 0.1).max(f64::MIN_POSITIVE);
    // A constant positive by its nature (`Model::positive`), fitted
    // positive, is walked towards zero and never through it: past zero lies
    // not a weaker binding but a different law (for an inhibition constant,
    // 1/Ki < 0 is activation), and for a Ki far above every [I] the walk
    // would pass 1/Ki = 0 into negative values where the sum of squares
    // never rises, leaving the lower side open although the data do bound
    // how strong the inhibition can be.
    let positive = model.positive(index) && theta > 0.0;
    // Walk outwards from the optimum in steps of about half a standard
    // error, each refit started from the previous one (continuation), and
    // double the step when τ grows slowly, until |τ| passes t.
    let mut step = 0.5 * se;
    let mut retries = 0;
    let mut inner = (theta, 0.0, best.to_vec());
    let mut outer = None;
    for _ in 0..80 {
        // From a run-off value back towards the data, halve (a geometric
        // walk): additive steps of its huge standard error would overshoot
        // past zero at once.
        let additive = inner.0 + direction * step;
        // An additive step that would reach zero halves instead (a
        // geometric walk towards zero, which the profile crosses the
        // cut-off on or, after 80 halvings, leaves open).
        let geometric = ran_off || (positive && additive <= 0.0);
        let c = if geometric { inner.0 / 2.0 } else { additive };
        let Some((rss, params)) = profile_rss(model, data, index, c, &inner.2) else {
            // A refit that fails after a doubled step may have jumped past
            // where the profile crosses into a region the model cannot fit
            // (a steepness near zero, say): go back to a quarter of the
            // step from the last good point, a few times, before calling
            // the side open.
            if retries < WALK_RETRIES && !geometric {
                retries += 1;
                step /= 4.0;
                continue;
            }
            return None;
        };
        let tau_c = tau(rss, c).abs();
        if tau_c >= t {
            outer = Some((c, tau_c, geometric));
            break;
        }
        if tau_c - inner.1 < 0.25 * t {
            step *= 2.0;
        }
        inner = (c, tau_c, params);
        if !c.is_finite() || c.abs() > 1e12 * (theta.abs() + se) {
            return None;
        }
    }
    let (c_out, tau_out, geometric) = outer?;
    Some(Bracket { inner, outer: (c_out, tau_out), se, theta, geometric })
}

/// One end of a profile interval: `None` when the profile never reaches
/// the cut-off within the search (the data do not bound the parameter on
/// that side) or when refits fail.
fn profile_end(model: &dyn Model, data: &Observations, fit: &Fit, index: usize, direction: f64, t: f64) -> Option<f64> {
    let Bracket { inner, outer, se, theta, geometric } = profile_walk(model, data, fit, index, direction, t)?;
    let tau = |rss: f64, c: f64| profile_tau(fit, theta, rss, c);
    let (mut c_out, mut tau_out) = outer;
    let (mut c_in, mut tau_in, mut start) = inner;
    // Illinois-modified regula falsi on |τ(c)| − t between the bracket ends.
    let mut side = 0;
    for _ in 0..60 {
        let c = c_in + (t - tau_in) * (c_out - c_in) / (tau_out - tau_in);
        let Some((rss, params)) = profile_rss(model, data, index, c, &start) else {
            return None;
        };
        let tau_c = tau(rss, c).abs();
        // The bracket is narrow enough at 1e-13 of the step scale: the
        // standard error for an additive walk, the value itself for a
        // geometric one (a run-off fit's standard error can be 1e15 times
        // the end sought, which stopped the search at its first step).
        let scale = if geometric { c.abs() } else { c.abs().max(se) };
        if (tau_c - t).abs() < 1e-10 * t || (c_out - c_in).abs() < 1e-13 * scale {
            return Some(c);
        }
        if tau_c < t {
            c_in = c;
            tau_in = tau_c;
            start = params;
            if side == -1 {
                tau_out = t + (tau_out - t) / 2.0;
            }
            side = -1;
        } else {
            c_out = c;
            tau_out = tau_c;
            if side == 1 {
                tau_in = t - (t - tau_in) / 2.0;
            }
            side = 1;
        }
    }
    Some(0.5 * (c_in + c_out))
}

/// Profile-likelihood interval for parameter `index` at the fit's
/// confidence level: `(low, high)`, either end `None` when unbounded.
pub fn profile_interval(model: &dyn Model, data: &Observations, fit: &Fit, index: usize) -> (Option<f64>, Option<f64>) {
    let Some(t) = fit.t_quantile else {
        return (None, None);
    };
    // A fit with no finite optimum still has a best-known sum of squares
    // (the limit it runs towards), so the side that does close is found.
    if !fit.summary.converged && fit.summary.termination != Termination::NoFiniteOptimum {
        return (None, None);
    }
    (profile_end(model, data, fit, index, -1.0, t), profile_end(model, data, fit, index, 1.0, t))
}

/// Whether the profile of parameter `index` passes the cut-off on the side
/// `direction` (−1 below, +1 above the estimate): the question behind the
/// check that the data bound each constant at all.
///
/// **Criterion.** The walk of [`profile_interval`] (the same refits from
/// the same starts, so the same decisions) without the refinement of the
/// crossing, which takes about half of the refits: `false` exactly when
/// that side's interval end is `None` for a reason found before the
/// refinement (see [`profile_walk`]). The one way the two can differ: a
/// refit failing inside a bracket whose ends were both refitted, which
/// leaves the full search's end `None` although the profile was seen past
/// the cut-off; the check then says the side closes. On 2,000 seeded
/// random curves, many of them ill-determined (`tests/profile_check.rs`),
/// that happened on 177 of 10,214 sides, each time on a fit with another
/// side open, where [`apply_profile_intervals`] runs the full search anyway;
/// so the flags were those of the full search on every curve.
pub fn profile_closes(model: &dyn Model, data: &Observations, fit: &Fit, index: usize, direction: f64) -> bool {
    let Some(t) = fit.t_quantile else {
        return false;
    };
    if !fit.summary.converged && fit.summary.termination != Termination::NoFiniteOptimum {
        return false;
    }
    profile_walk(model, data, fit, index, direction, t).is_some()
}

/// Whether both sides of every fitted parameter's profile close
/// ([`profile_closes`]); stops at the first side that does not.
fn profiles_all_close(model: &dyn Model, data: &Observations, fit: &Fit) -> bool {
    (0..fit.values().len()).all(|j| profile_closes(model, data, fit, j, -1.0) && profile_closes(model, data, fit, j, 1.0))
}

/// How bootstrap data sets are drawn.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BootstrapScheme {
    /// Keep the design; add resampled (leverage-adjusted, weighted)
    /// residuals.
    #[default]
    Residual,
    /// Resample whole observations with replacement.
    Case,
}

/// How an interval is read from the bootstrap replicates.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BootstrapInterval {
    /// Bootstrap-t: the quantiles of (θ* − θ̂)/SE* around θ̂ scaled by the
    /// fit's own SE (Efron & Tibshirani 1993, ch. 12; Davison & Hinkley
    /// 1997, sec. 5.2; from memory), each side at least as wide as the t
    /// interval (see [`studentised_interval`]). It carries the small-sample
    /// t-like widening that percentile intervals lack, which is why
    /// percentile intervals undercover at n = 12–20.
    #[default]
    Studentised,
    /// The α/2 and 1 − α/2 quantiles of the replicates themselves (kept
    /// for comparison; they undercover in small samples).
    Percentile,
}

impl BootstrapInterval {
    /// The name used in JSON.
    pub fn name(self) -> &'static str {
        match self {
            BootstrapInterval::Studentised => "studentised",
            BootstrapInterval::Percentile => "percentile",
        }
    }
}

/// Settings of a bootstrap.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct BootstrapSettings {
    /// Number of resampled data sets. Default 2,000; must be ≥ 100 for
    /// intervals at 95% to mean anything.
    pub resamples: usize,
    /// Seed of the generator. Default 1.
    pub seed: u64,
    /// Resampling scheme. Default residual.
    pub scheme: BootstrapScheme,
    /// How the interval is read from the replicates. Default studentised.
    pub interval: BootstrapInterval,
}

impl Default for BootstrapSettings {
    fn default() -> Self {
        BootstrapSettings { resamples: 2000, seed: 1, scheme: BootstrapScheme::Residual, interval: BootstrapInterval::Studentised }
    }
}

/// Refitted parameter vectors from a bootstrap.
#[derive(Clone, Debug, PartialEq)]
pub struct BootstrapSample {
    /// One refitted parameter vector per successful resample.
    pub estimates: Vec<Vec<f64>>,
    /// The asymptotic covariance of each refit (same order as
    /// `estimates`); `None` where it is singular.
    pub covariances: Vec<Option<DMatrix<f64>>>,
    /// Resamples whose refit did not converge (or, for case resampling,
    /// that had too few distinct points); they are left out.
    pub failures: usize,
}

/// Leverages h_i = diag(J (JᵀJ)⁻¹ Jᵀ) of a weighted Jacobian; `None` when
/// JᵀJ is singular.
fn leverages(jacobian: &DMatrix<f64>) -> Option<Vec<f64>> {
    let c = unscaled_covariance(jacobian)?;
    Some(
        (0..jacobian.nrows())
            .map(|i| {
                let row = jacobian.row(i);
                (row * &c * row.transpose())[(0, 0)]
            })
            .collect(),
    )
}

/// Refits resampled data the way the original was fitted: with weights
/// recomputed from the fitted curve when the fit was made so.
fn refit(model: &dyn Model, data: &Observations, fit: &Fit, start: &[f64]) -> SolverReport {
    match fit.reweighting {
        Some(scheme) => iterate_weights(model, data, scheme, start, &SolverSettings::default(), 1e-8, 30).report,
        None => minimise(model, data, start, &SolverSettings::default()),
    }
}

/// Runs the bootstrap. Each refit starts at the original estimate.
///
/// Residual resampling uses the modified residuals of Davison & Hinkley
/// (1997, sec. 6.2.3, from memory): each weighted residual divided by
/// sqrt(1 − h_i), its leverage, then centred, so that the resampled errors
/// have the variance of the true errors rather than the smaller one of
/// fitted residuals.
pub fn bootstrap(model: &dyn Model, data: &Observations, fit: &Fit, settings: &BootstrapSettings) -> BootstrapSample {
    let n = data.len();
    let p = fit.values().len();
    let best = fit.values();
    let mut rng = SplitMix64::new(settings.seed);
    let fitted: Vec<f64> = (0..n).map(|i| model.value(data.x(i), best)).collect();
    let sqrt_w: Vec<f64> = data.weights().iter().map(|w| w.sqrt()).collect();
    let inflate = (n as f64 / (n - p) as f64).sqrt();
    let scale: Vec<f64> = match leverages(&fit.report.jacobian) {
        Some(h) if h.iter().all(|h| *h < 1.0 - 1e-9) => h.iter().map(|h| 1.0 / (1.0 - h).sqrt()).collect(),
        _ => vec![inflate; n],
    };
    let raw: Vec<f64> = (0..n).map(|i| sqrt_w[i] * (data.y()[i] - fitted[i]) * scale[i]).collect();
    let centre = raw.iter().sum::<f64>() / n as f64;
    let residuals: Vec<f64> = raw.iter().map(|r| r - centre).collect();
    let predictors = data.predictors();
    let mut estimates = Vec::with_capacity(settings.resamples);
    let mut covariances = Vec::with_capacity(settings.resamples);
    let mut failures = 0;
    // The residual scheme changes only the responses: one set of
    // observations and one response buffer serve every resample (the same
    // draws in the same order as building each set anew).
    let mut reused = data.clone();
    let mut y = vec![0.0; n];
    for _ in 0..settings.resamples {
        let resampled = match settings.scheme {
            BootstrapScheme::Residual => {
                for (i, value) in y.iter_mut().enumerate() {
                    *value = fitted[i] + residuals[rng.below(n)] / sqrt_w[i];
                }
                if reused.set_responses(&y).is_err() {
                    failures += 1;
                    continue;
                }
                // The same refit (weights from the curve when the fit had
                // them) and the same record as the case scheme below: the
                // studentised interval needs each refit's covariance.
                let report = refit(model, &reused, fit, best);
                if report.converged {
                    let variance = report.rss / (n - p) as f64;
                    covariances.push(unscaled_covariance(&report.jacobian).map(|c| c * variance));
                    estimates.push(report.parameters);
                } else {
                    failures += 1;
                }
                continue;
            }
            BootstrapScheme::Case => {
                let rows: Vec<usize> = (0..n).map(|_| rng.below(n)).collect();
                let mut distinct: Vec<&[f64]> = rows.iter().map(|&i| data.x(i)).collect();
                distinct.sort_by(|a, b| a.partial_cmp(b).unwrap_or(std::cmp::Ordering::Equal));
                distinct.dedup();
                if distinct.len() <= p {
                    failures += 1;
                    continue;
                }
                Observations::new(
                    predictors,
                    rows.iter().flat_map(|&i| data.x(i).to_vec()).collect(),
                    rows.iter().map(|&i| data.y()[i]).collect(),
                    Some(rows.iter().map(|&i| data.weights()[i]).collect()),
                )
            }
        };
        let Ok(resampled) = resampled else {
            failures += 1;
            continue;
        };
        let report = refit(model, &resampled, fit, best);
        if report.converged {
            let variance = report.rss / (n - p) as f64;
            covariances.push(unscaled_covariance(&report.jacobian).map(|c| c * variance));
            estimates.push(report.parameters);
        } else {
            failures += 1;
        }
    }
    BootstrapSample { estimates, covariances, failures }
}

/// Bootstrap-t interval at `level` for an estimate `value` with standard
/// error `se`, from replicates `values` with their own standard errors
/// `ses` (pairs with a non-finite or non-positive SE are left out).
///
/// `t_floor`, when given, is the Student t quantile t(1 − α/2, n − p): each
/// side's multiplier is at least that. With 12–20 points the empirical
/// distribution of the residuals is lighter-tailed than the errors it
/// stands for (the sample kurtosis is biased low), so the resampled
/// standard errors vary too little and the bootstrap-t quantiles come out
/// narrower than the exact t quantiles of the linear normal model; the
/// floor keeps that exact small-sample width and lets the bootstrap add
/// only what the model's curvature adds (asymmetry, extra width).
/// Turnover's rule, checked by simulation in `tests/coverage.rs`: the
/// four-parameter logistic at n = 16 covered 92.5% without it.
pub fn studentised_interval(
    value: f64,
    se: f64,
    values: &[f64],
    ses: &[Option<f64>],
    level: f64,
    t_floor: Option<f64>,
) -> (Option<f64>, Option<f64>) {
    if !(se.is_finite() && se > 0.0) {
        return (None, None);
    }
    let mut t: Vec<f64> = values
        .iter()
        .zip(ses)
        .filter_map(|(v, s)| s.filter(|s| s.is_finite() && *s > 0.0).map(|s| (v - value) / s))
        .filter(|t| t.is_finite())
        .collect();
    let alpha = 1.0 - level;
    let (Some(low_t), Some(high_t)) = (quantile(&mut t, alpha / 2.0), quantile(&mut t, 1.0 - alpha / 2.0)) else {
        return (None, None);
    };
    let floor = t_floor.unwrap_or(0.0);
    (Some(value - high_t.max(floor) * se), Some(value - low_t.min(-floor) * se))
}

/// The interval of one quantity from a bootstrap, by the method in
/// `settings`: `value` and `se` are the original fit's, `values` and `ses`
/// the replicates', `t_floor` the fit's t quantile (see
/// [`studentised_interval`]).
pub fn bootstrap_interval(
    settings: &BootstrapSettings,
    value: f64,
    se: Option<f64>,
    values: &[f64],
    ses: &[Option<f64>],
    level: f64,
    t_floor: Option<f64>,
) -> (Option<f64>, Option<f64>) {
    match (settings.interval, se) {
        (BootstrapInterval::Studentised, Some(se)) => studentised_interval(value, se, values, ses, level, t_floor),
        (BootstrapInterval::Studentised, None) => (None, None),
        (BootstrapInterval::Percentile, _) => percentile_interval(values, level),
    }
}

/// Replaces the intervals of the fitted parameters in `summary` (the first
/// `p` entries) by profile or bootstrap intervals; asymptotic leaves them.
/// Returns the bootstrap sample when the method is bootstrap (empty when
/// the fit itself did not converge), so that callers can derive further
/// constants from the same resamples. Warnings about
/// open profile ends or failed refits go into `summary.warnings`. The
/// interval step every analysis shares, so that a `--ci` choice is never
/// silently ignored.
pub fn apply_interval_method(
    summary: &mut FitSummary,
    model: &dyn Model,
    data: &Observations,
    fit: &Fit,
    method: IntervalMethod,
    settings: &BootstrapSettings,
) -> Result<Option<BootstrapSample>, crate::Error> {
    let p = fit.values().len();
    match method {
        IntervalMethod::Asymptotic => Ok(None),
        IntervalMethod::Profile => {
            apply_profile_intervals(summary, model, data, fit, true);
            Ok(None)
        }
        IntervalMethod::Bootstrap => {
            if settings.resamples < 100 || settings.resamples > 100_000 {
                return Err(crate::Error::invalid_option("the number of bootstrap resamples must be between 100 and 100,000"));
            }
            if !fit.summary.converged {
                summary.warnings.push("No bootstrap was run because the fit itself did not converge.".to_string());
                return Ok(Some(BootstrapSample { estimates: Vec::new(), covariances: Vec::new(), failures: 0 }));
            }
            let sample = bootstrap(model, data, fit, settings);
            for j in 0..p {
                let values: Vec<f64> = sample.estimates.iter().map(|e| e[j]).collect();
                let ses: Vec<Option<f64>> = sample.covariances.iter().map(|c| c.as_ref().map(|c| c[(j, j)].sqrt())).collect();
                let (low, high) = bootstrap_interval(
                    settings,
                    fit.values()[j],
                    summary.parameters[j].std_error,
                    &values,
                    &ses,
                    summary.confidence_level,
                    fit.t_quantile,
                );
                let estimate = &mut summary.parameters[j];
                estimate.ci_low = low;
                estimate.ci_high = high;
                estimate.ci_method = IntervalMethod::Bootstrap.name().to_string();
                if estimate.flag.as_deref() == Some(flags::ASYMPTOTIC_CROSSES_ZERO) {
                    estimate.flag = None;
                }
            }
            summary.warnings.retain(|w| !w.starts_with(ASYMPTOTIC_ZERO_WARNING));
            open_runaway_bootstrap_sides(summary, model, data, &sample);
            if sample.failures * 20 > settings.resamples {
                summary.warnings.push(format!(
                    "{} of {} bootstrap refits did not converge and were left out; the intervals may be too narrow.",
                    sample.failures, settings.resamples
                ));
            }
            Ok(Some(sample))
        }
    }
}

/// Replaces the intervals of the fitted parameters by profile intervals,
/// flags every side the profile does not close (`not_bounded_above` /
/// `not_bounded_below`; a run-off parameter keeps `not_determined`) and
/// says so in the warnings. Also used when the fit ran off, whatever
/// interval method was asked for, since then only the profile can say
/// which side the data bound.
///
/// With `replace` false the intervals are left as they are (asymptotic)
/// and only the flags and the warning are added: the check that the data
/// bound every parameter at all.
///
/// The check (`replace` false) first walks each side of each profile only
/// until it passes the cut-off ([`profile_closes`]), without refining where
/// it crosses. When every side closes there is nothing to flag or say and
/// the check ends there; otherwise the whole search runs as with `replace`
/// true, so the flags and the warning (which quotes the closed end) are
/// those of the full profile.
pub fn apply_profile_intervals(summary: &mut FitSummary, model: &dyn Model, data: &Observations, fit: &Fit, replace: bool) {
    if !replace && profiles_all_close(model, data, fit) {
        return;
    }
    let mut open = Vec::new();
    for j in 0..fit.values().len() {
        let (low, high) = profile_interval(model, data, fit, j);
        let estimate = &mut summary.parameters[j];
        if replace {
            estimate.ci_low = low;
            estimate.ci_high = high;
            estimate.ci_method = IntervalMethod::Profile.name().to_string();
            if estimate.flag.as_deref() == Some(flags::ASYMPTOTIC_CROSSES_ZERO) {
                estimate.flag = None;
            }
        }
        if low.is_none() || high.is_none() {
            // A constant the data do not bound has no small-sample bias to
            // speak of (see `crate::bias`).
            estimate.set_bias(None);
            let side = match (low, high) {
                (None, Some(_)) => "below",
                (Some(_), None) => "above",
                _ => "on either side",
            };
            if estimate.flag.as_deref() != Some(flags::NOT_DETERMINED) {
                estimate.flag = Some(
                    if low.is_none() && high.is_some() { flags::NOT_BOUNDED_BELOW } else { flags::NOT_BOUNDED_ABOVE }.to_string(),
                );
            }
            let bound = match (low, high) {
                (Some(l), None) => format!(" (the data say only that it exceeds {l:.4})"),
                (None, Some(h)) => format!(" (the data say only that it is below {h:.4})"),
                _ => String::new(),
            };
            open.push(format!("{} {side}{bound}", estimate.name));
        }
    }
    if !open.is_empty() {
        summary.warnings.push(format!(
            "Not determined by these data at this confidence level: the profile interval is open for {}. Within the search the sum of squares never rises enough on that side{}.",
            open.join("; "),
            if replace { "" } else { "; the asymptotic interval shown pretends otherwise" }
        ));
    }
    if replace {
        summary.warnings.retain(|w| !w.starts_with(ASYMPTOTIC_ZERO_WARNING));
    }
}

/// How the warning about an asymptotic interval below zero begins (see
/// [`crate::fit`]); removed when another method replaces the intervals.
const ASYMPTOTIC_ZERO_WARNING: &str = "The asymptotic interval of";

/// Opens the bootstrap interval of every parameter whose replicates run
/// off (beyond [`runaway_limit`]) in more than the interval's tail
/// fraction: then the upper (or lower) quantile is a run-off value, not a
/// bound. Flags the parameter and says so.
fn open_runaway_bootstrap_sides(summary: &mut FitSummary, model: &dyn Model, data: &Observations, sample: &BootstrapSample) {
    let tail = (1.0 - summary.confidence_level) / 2.0;
    let total = sample.estimates.len() as f64;
    if total == 0.0 {
        return;
    }
    for j in 0..model.parameters().len() {
        let Some(limit) = runaway_limit(model, data, j) else { continue };
        let above = sample.estimates.iter().filter(|e| e[j] > limit).count() as f64 / total;
        let below = sample.estimates.iter().filter(|e| e[j] < -limit).count() as f64 / total;
        let estimate = &mut summary.parameters[j];
        for (fraction, upper) in [(above, true), (below, false)] {
            if fraction > tail {
                estimate.set_bias(None);
                if upper {
                    estimate.ci_high = None;
                    estimate.flag = Some(flags::NOT_BOUNDED_ABOVE.to_string());
                } else {
                    estimate.ci_low = None;
                    estimate.flag = Some(flags::NOT_BOUNDED_BELOW.to_string());
                }
                summary.warnings.push(format!(
                    "Not determined by these data: in {:.1}% of the bootstrap refits {} ran off beyond {:.3e} ({}× the data's scale), so its interval is open {}.",
                    100.0 * fraction,
                    estimate.name,
                    if upper { limit } else { -limit },
                    crate::fit::RUNAWAY_MULTIPLE,
                    if upper { "above" } else { "below" }
                ));
            }
        }
    }
}

/// The `q` quantile (0 ≤ q ≤ 1) of `values` by linear interpolation between
/// order statistics (Hyndman & Fan 1996, definition 7; R's default).
pub fn quantile(values: &mut [f64], q: f64) -> Option<f64> {
    if values.is_empty() || values.iter().any(|v| v.is_nan()) {
        return None;
    }
    values.sort_by(f64::total_cmp);
    let h = (values.len() - 1) as f64 * q;
    let low = h.floor() as usize;
    let high = h.ceil() as usize;
    Some(values[low] + (h - low as f64) * (values[high] - values[low]))
}

/// Percentile interval at `level` from bootstrap values of one quantity.
pub fn percentile_interval(values: &[f64], level: f64) -> (Option<f64>, Option<f64>) {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    let alpha = 1.0 - level;
    (quantile(&mut v, alpha / 2.0), quantile(&mut v, 1.0 - alpha / 2.0))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quantiles_match_r_type_7() {
        // R: quantile(c(1, 2, 3, 4, 10), c(0.025, 0.5, 0.975)) gives
        // 1.1, 3.0, 9.4 (computed by hand from definition 7).
        let mut v = vec![10.0, 2.0, 4.0, 1.0, 3.0];
        assert!((quantile(&mut v, 0.025).unwrap() - 1.1).abs() < 1e-12);
        assert_eq!(quantile(&mut v, 0.5), Some(3.0));
        assert!((quantile(&mut v, 0.975).unwrap() - 9.4).abs() < 1e-12);
    }

    /// A side whose profile does cross the cut-off is closed even when a
    /// doubled step of the walk lands where the refit fails. The curve is
    /// one of a simulation with known truth (four-parameter logistic,
    /// floor 0, ceiling 100, steepness 1, IC50 5.602 µM, 10 doses 100/3^k
    /// µM, normal errors of SD 8, SplitMix64 seed 20261202): going down in
    /// steepness, the floor runs off and τ rises slowly, passing t near
    /// 0.38, while refits below about 0.2 fail. Before the walk shortened
    /// its step after a failed refit, it jumped from 0.56 to 0.11 and
    /// called the side open. An independent scan in steps of 0.01, each
    /// refit started from the last, finds the crossing; the walk must
    /// close the side and the profile interval's end must lie within that
    /// scan step of it.
    #[test]
    fn a_failed_refit_after_a_long_step_does_not_open_a_side() {
        use crate::fit::{fit_model, FitSettings};
        use crate::models::model_with_options;
        let model = model_with_options("ic50", &Default::default()).unwrap();
        let doses: Vec<f64> = (0..10).map(|k| 100.0 / 3f64.powi(k)).collect();
        let y = vec![
            9.665667773792737,
            18.50802961590487,
            35.01144065063789,
            58.637794601986016,
            83.64883153414122,
            106.83956656731704,
            97.45322115089424,
            84.46305414350194,
            100.88575610700738,
            108.57909844033146,
        ];
        let data = Observations::new(1, doses, y, None).unwrap();
        let fit = fit_model(model.as_ref(), &data, None, &FitSettings::default()).unwrap();
        let t = fit.t_quantile.unwrap();
        let s = (fit.summary.rss / fit.summary.dof as f64).sqrt();
        let best = fit.values().to_vec();
        let mut start = best.clone();
        let mut previous = best[3];
        let mut crossing = None;
        for k in 1..100 {
            let c = best[3] - 0.01 * k as f64;
            let (rss, refitted) = profile_rss(model.as_ref(), &data, 3, c, &start).expect("the scan's refits succeed down to the crossing");
            if (rss - fit.summary.rss).max(0.0).sqrt() / s >= t {
                crossing = Some((c, previous));
                break;
            }
            previous = c;
            start = refitted;
        }
        let (outside, inside) = crossing.expect("the scan passes the cut-off");
        assert!(profile_closes(model.as_ref(), &data, &fit, 3, -1.0));
        let (low, _) = profile_interval(model.as_ref(), &data, &fit, 3);
        let low = low.expect("a lower end");
        assert!(low >= outside - 1e-9 && low <= inside + 1e-9, "lower end {low} not in [{outside}, {inside}]");
    }
}
