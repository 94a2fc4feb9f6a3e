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
use crate::solver::{minimise, minimise_solution, SolverSettings, Termination};
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
        // Element by element: these slices are a few entries long, and
        // `copy_from_slice` calls `memcpy` for them (on a batch of 2,000
        // dose-response curves, 13% of the time went to those calls).
        let mut p = [0.0; STACK_PARAMETERS];
        for (k, slot) in p[..m].iter_mut().enumerate() {
            *slot = match k.cmp(&self.index) {
                std::cmp::Ordering::Less => free[k],
                std::cmp::Ordering::Equal => self.value,
                std::cmp::Ordering::Greater => free[k - 1],
            };
        }
        f(&p[..m])
    }

    /// The free parameters' entries of a full gradient (element by
    /// element, as in [`HeldFixed::with_full`]).
    fn free_part(&self, full_gradient: &[f64], gradient: &mut [f64]) {
        for (k, g) in gradient.iter_mut().enumerate() {
            *g = full_gradient[if k < self.index { k } else { k + 1 }];
        }
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
        self.free_part(&full_gradient[..m], gradient);
    }
    fn value_and_gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) -> f64 {
        let m = p.len() + 1;
        if m > STACK_PARAMETERS {
            self.gradient(x, p, gradient);
            return self.value(x, p);
        }
        let mut full_gradient = [0.0; STACK_PARAMETERS];
        let value = self.with_full(p, |full| self.inner.value_and_gradient(x, full, &mut full_gradient[..m]));
        self.free_part(&full_gradient[..m], gradient);
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
        let rss = data.weighted_rss(model, &[value]);
        return rss.is_finite().then(|| (rss, vec![value]));
    }
    // A routine refit by Gauss-Newton steps; the solver for the rest.
    let (parameters, rss, converged) = match gauss_newton_refit(&held, data, &free_start, None, PROFILE_TOLERANCE) {
        // The sum of squares at the solution itself (the refit reports the
        // one before its last step, up to about 2e-5 SE away here).
        Some(r) => {
            let rss = data.weighted_rss(&held, &r.parameters);
            (r.parameters, rss, rss.is_finite())
        }
        None => minimise_solution(&held, data, &free_start, &SolverSettings::default()),
    };
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

/// One bootstrap refit: the solution, its weighted sum of squares and
/// `(JᵀWJ)⁻¹` there (`None` when singular); `None` as a whole when the
/// refit did not converge.
struct Refit {
    parameters: Vec<f64>,
    rss: f64,
    covariance: Option<DMatrix<f64>>,
}

/// Refits resampled data the way the original was fitted: with weights
/// recomputed from the fitted curve when the fit was made so. A fit with
/// fixed weights is first tried by [`gauss_newton_refit`] (when `quick`);
/// whatever that route declines goes to the solver as before.
fn refit(model: &dyn Model, data: &Observations, fit: &Fit, start: &[f64], quick: bool, first: Option<&StartTerms>) -> Option<Refit> {
    let report = match fit.reweighting {
        Some(scheme) => iterate_weights(model, data, scheme, start, &SolverSettings::default(), 1e-8, 30).report,
        None => {
            if quick {
                if let Some(done) = gauss_newton_refit(model, data, start, first, BOOTSTRAP_TOLERANCE) {
                    return Some(done);
                }
            }
            minimise(model, data, start, &SolverSettings::default())
        }
    };
    report.converged.then(|| Refit { covariance: unscaled_covariance(&report.jacobian), rss: report.rss, parameters: report.parameters })
}

/// `(L Lᵀ)⁻¹` from the lower Cholesky factor `L` of a `p`×`p` matrix.
fn scaled_inverse(l: &[[f64; 4]; 4], p: usize) -> [[f64; 4]; 4] {
    let mut inverse = [[0.0f64; 4]; 4];
    for c in 0..p {
        let mut z = [0.0f64; 4];
        for j in 0..p {
            let mut sum = if j == c { 1.0 } else { 0.0 };
            for m in 0..j {
                sum -= l[j][m] * z[m];
            }
            z[j] = sum / l[j][j];
        }
        for j in (0..p).rev() {
            let mut sum = z[j];
            for m in j + 1..p {
                sum -= l[m][j] * inverse[m][c];
            }
            inverse[j][c] = sum / l[j][j];
        }
    }
    inverse
}

/// The model's values and gradients at the original estimate, one per
/// observation, for the first step of every residual-resample refit
/// (whose predictors and weights are the original ones).
struct StartTerms {
    values: Vec<f64>,
    gradients: Vec<[f64; crate::fastpath::MAX_PARAMETERS]>,
}

impl StartTerms {
    /// `None` for more parameters than [`gauss_newton_refit`] takes.
    fn at(model: &dyn Model, data: &Observations, parameters: &[f64]) -> Option<StartTerms> {
        if parameters.len() > crate::fastpath::MAX_PARAMETERS {
            return None;
        }
        let mut gradients = Vec::with_capacity(data.len());
        let values = (0..data.len())
            .map(|i| {
                let mut g = [0.0; crate::fastpath::MAX_PARAMETERS];
                let v = model.value_and_gradient(data.x(i), parameters, &mut g[..parameters.len()]);
                gradients.push(g);
                v
            })
            .collect();
        Some(StartTerms { values, gradients })
    }
}

/// Where [`gauss_newton_refit`] stops for a bootstrap refit: when the step
/// left is below this fraction of each standard error, where the sum of
/// squares is flat to rounding.
const BOOTSTRAP_TOLERANCE: f64 = 1e-9;

/// Where it stops for a profile refit, whose sum of squares (computed
/// afresh at the solution) is all the profile uses. At δ standard errors
/// from the refit's optimum that sum is too high by about δ²·σ² times a
/// factor of the order of the parameters' correlation (standard numerical
/// analysis, no source), so the profile t by about δ²/(2τ)·(that factor):
/// about 1e-12 here, far below the 1e-10·t the crossing is sought to.
/// Against [`BOOTSTRAP_TOLERANCE`] it saves about two of a refit's six or
/// seven steps, and most refits that would need more than
/// [`GAUSS_NEWTON_STEPS`] steps to reach 1e-9 (slow linear convergence),
/// which went to the solver, now finish here.
const PROFILE_TOLERANCE: f64 = 1e-6;

/// The most Gauss-Newton steps [`gauss_newton_refit`] takes before it
/// leaves the refit to the solver.
const GAUSS_NEWTON_STEPS: usize = 12;

/// A refit by plain Gauss-Newton steps from a nearby solution, for models
/// of at most four parameters with fixed weights: a bootstrap resample's
/// (from the original estimate) and a profile's (the others refitted from
/// the last point of the walk).
///
/// Such a minimum lies about one standard error from the start, where the
/// model is close to linear, so Gauss-Newton converges in a few steps
/// (linearly, at a rate that is small when the residuals are) and the
/// Levenberg-Marquardt machinery, the n×p Jacobian and its decomposition
/// are not needed. On 10,000 dose-response curves the profile check's
/// flags and output were byte-identical with and without it, and profile
/// interval ends of 728 curves agreed to 6e-12 relative. Each step forms
/// `JᵀWJ` and `JᵀWr` by sums over the observations (nothing allocated),
/// scales them to a unit diagonal and solves by Cholesky. It stops when
/// what is left of the steps is below `tolerance` of each parameter's
/// standard error ([`BOOTSTRAP_TOLERANCE`], [`PROFILE_TOLERANCE`]); the point after that step is the
/// solution, and `(JᵀWJ)⁻¹` and the sum of squares of the point before it
/// are reported (they differ from those at the solution by a relative
/// amount of the order of that step, far below any digit shown).
///
/// It declines (`None`), leaving the refit to the solver as before, when
/// the model has more than four parameters, a value is not finite, a step
/// raises the sum of squares, the scaled `JᵀWJ` is ill-conditioned (a
/// Cholesky pivot below 1e-4, i.e. a scaled Jacobian condition number over
/// about 10⁴, where squaring it in the normal equations would cost
/// digits), the fit is exact, or it will not stop within
/// [`GAUSS_NEWTON_STEPS`] steps (judged from the rate at which the steps
/// shrink). So the solver still decides every refit
/// that is not routine. Checked against the solver's refits in
/// `tests::gauss_newton_refits_agree_with_the_solver`.
fn gauss_newton_refit(model: &dyn Model, data: &Observations, start: &[f64], first: Option<&StartTerms>, tolerance: f64) -> Option<Refit> {
    if data.len() <= start.len() {
        return None;
    }
    // One copy per size, so that the sums' loops have fixed bounds.
    match start.len() {
        1 => gauss_newton_steps::<1>(model, data, start, first, tolerance),
        2 => gauss_newton_steps::<2>(model, data, start, first, tolerance),
        3 => gauss_newton_steps::<3>(model, data, start, first, tolerance),
        4 => gauss_newton_steps::<4>(model, data, start, first, tolerance),
        _ => None,
    }
}

/// [`gauss_newton_refit`] for `P` parameters.
fn gauss_newton_steps<const P: usize>(model: &dyn Model, data: &Observations, start: &[f64], first: Option<&StartTerms>, tolerance: f64) -> Option<Refit> {
    const P_MAX: usize = crate::fastpath::MAX_PARAMETERS;
    let p = P;
    let n = data.len();
    let (y, weights) = (data.y(), data.weights());
    let mut theta = [0.0f64; P_MAX];
    theta[..p].copy_from_slice(start);
    let mut gradient = [0.0f64; P_MAX];
    let mut previous_rss = f64::INFINITY;
    let mut previous_size = f64::INFINITY;
    let mut se = [0.0f64; P_MAX];
    for iteration in 0..GAUSS_NEWTON_STEPS {
        let mut a = [[0.0f64; P_MAX]; P_MAX];
        let mut b = [0.0f64; P_MAX];
        let mut rss = 0.0;
        let mut add = |w: f64, r: f64, gradient: &[f64; P_MAX]| {
            rss += w * r * r;
            for j in 0..P {
                let wg = w * gradient[j];
                b[j] += wg * r;
                for k in j..P {
                    a[j][k] += wg * gradient[k];
                }
            }
        };
        match first {
            // At the start, the model's values and gradients are the
            // original fit's, the same for every resample.
            Some(terms) if iteration == 0 => {
                for i in 0..n {
                    add(weights[i], y[i] - terms.values[i], &terms.gradients[i]);
                }
            }
            _ => {
                for i in 0..n {
                    let r = y[i] - model.value_and_gradient(data.x(i), &theta[..p], &mut gradient[..p]);
                    add(weights[i], r, &gradient);
                }
            }
        }
        // A rise beyond rounding means the step overshot: not routine.
        if !(rss.is_finite() && rss > 0.0) || rss > previous_rss * (1.0 + 1e-12) {
            return None;
        }
        previous_rss = rss;
        // Unit-diagonal scaling, then the Cholesky factor L of the scaled
        // matrix (lower triangle, row by row).
        let mut scale = [0.0f64; P_MAX];
        for j in 0..p {
            if !(a[j][j].is_finite() && a[j][j] > 0.0) {
                return None;
            }
            scale[j] = a[j][j].sqrt();
        }
        let mut l = [[0.0f64; P_MAX]; P_MAX];
        for j in 0..p {
            for k in 0..=j {
                let mut sum = a[k][j] / (scale[k] * scale[j]);
                for m in 0..k {
                    sum -= l[j][m] * l[k][m];
                }
                if k == j {
                    if !(sum > 1e-8) {
                        return None;
                    }
                    l[j][j] = sum.sqrt();
                } else {
                    l[j][k] = sum / l[k][k];
                }
            }
        }
        if !l.iter().flatten().all(|v| v.is_finite()) {
            return None;
        }
        // The step: L Lᵀ z = b / scale, step = z / scale.
        let mut z = [0.0f64; P_MAX];
        for j in 0..p {
            let mut sum = b[j] / scale[j];
            for m in 0..j {
                sum -= l[j][m] * z[m];
            }
            z[j] = sum / l[j][j];
        }
        for j in (0..p).rev() {
            let mut sum = z[j];
            for m in j + 1..p {
                sum -= l[m][j] * z[m];
            }
            z[j] = sum / l[j][j];
        }
        // Standard errors at the first point measure every step.
        if iteration == 0 {
            let inverse = scaled_inverse(&l, p);
            let variance = rss / (n - p) as f64;
            for j in 0..p {
                se[j] = (variance * inverse[j][j]).sqrt() / scale[j];
            }
        }
        let mut size = 0.0f64;
        for j in 0..p {
            let step = z[j] / scale[j];
            size = size.max(step.abs() / se[j]);
            theta[j] += step;
        }
        if !(theta[..p].iter().all(|v| v.is_finite()) && size.is_finite()) {
            return None;
        }
        // Gauss-Newton converges linearly where the residuals are not
        // zero: each step shrinks by about the ratio `rate` of the last
        // two, and what is left after this one is about
        // size·rate/(1 − rate). Stop when that is below `tolerance` SE (or the
        // step itself is).
        let rate = size / previous_size;
        let left = if iteration > 0 && rate < 0.5 { size * rate / (1.0 - rate) } else { f64::INFINITY };
        previous_size = size;
        if size <= tolerance || left <= tolerance {
            let inverse = scaled_inverse(&l, p);
            let covariance = DMatrix::from_fn(p, p, |j, k| inverse[j][k] / (scale[j] * scale[k]));
            return Some(Refit { parameters: theta[..p].to_vec(), rss, covariance: Some(covariance) });
        }
        // Slow convergence (large residuals or strong curvature, as far
        // out on a profile): when the steps this rate still needs would
        // pass the limit, the solver takes over now rather than then.
        // (At that rate the last step allowed would be size·rate^k, k the
        // steps left, and what is left after it that times rate/(1 − rate).)
        if iteration > 0 {
            let steps_left = (GAUSS_NEWTON_STEPS - iteration - 1) as i32;
            if !(rate < 1.0 && size * rate.powi(steps_left + 1) <= tolerance * (1.0 - rate)) {
                return None;
            }
        }
    }
    None
}

/// Runs the bootstrap. Each refit starts at the original estimate.
///
/// Residual resampling uses the modified residuals of Davison & Hinkley
/// (1997, sec. 6.2.3, from memory): each weighted residual divided by
/// sqrt(1 − h_i), its leverage, then centred, so that the resampled errors
/// have the variance of the true errors rather than the smaller one of
/// fitted residuals.
pub fn bootstrap(model: &dyn Model, data: &Observations, fit: &Fit, settings: &BootstrapSettings) -> BootstrapSample {
    bootstrap_by(model, data, fit, settings, true)
}

/// [`bootstrap`]; `quick`: whether refits may take [`gauss_newton_refit`]
/// (false only in the test that checks it against the solver).
fn bootstrap_by(model: &dyn Model, data: &Observations, fit: &Fit, settings: &BootstrapSettings, quick: bool) -> BootstrapSample {
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
    let start_terms = StartTerms::at(model, data, best);
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
                record(refit(model, &reused, fit, best, quick, start_terms.as_ref()), (n - p) as f64, &mut estimates, &mut covariances, &mut failures);
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
        record(refit(model, &resampled, fit, best, quick, None), (n - p) as f64, &mut estimates, &mut covariances, &mut failures);
    }
    BootstrapSample { estimates, covariances, failures }
}

/// Adds one refit to a bootstrap sample: its estimate and its covariance
/// (scaled by its own residual variance), or one more failure.
fn record(refit: Option<Refit>, dof: f64, estimates: &mut Vec<Vec<f64>>, covariances: &mut Vec<Option<DMatrix<f64>>>, failures: &mut usize) {
    match refit {
        Some(r) => {
            let variance = r.rss / dof;
            covariances.push(r.covariance.map(|c| c * variance));
            estimates.push(r.parameters);
        }
        None => *failures += 1,
    }
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
                estimate.ci_method = IntervalMethod::Bootstrap.name().into();
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
            estimate.ci_method = IntervalMethod::Profile.name().into();
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

    /// The Gauss-Newton route for bootstrap refits against the solver
    /// (Levenberg-Marquardt) on the same resamples. Simulations with known
    /// truth, SplitMix64 seeds stated: Michaelis-Menten (Vmax 12, Km 8,
    /// 12 substrate levels 0.5..80, 3% proportional errors, equal weights,
    /// seed 11; and the same curve with weights 1/v² fixed from the data,
    /// seed 12), Hill (Vmax 10, K 5, n 1.8, 12 levels, 0.2 absolute SD,
    /// seed 13), substrate inhibition (Vmax 20, Km 4, Ki 60, 14 levels,
    /// 0.3 SD, seed 14) and the four-parameter logistic (floor 0, ceiling
    /// 100, steepness 1, IC50 3, 10 doses 100/3^k, SD 4, seed 15); 400
    /// residual resamples each (bootstrap seed 7). Every replicate must be
    /// the solver's to 1e-6 of the original standard error: the solver
    /// stops when the sum of squares changes by less than 1e-14 relative
    /// (`ftol`), which leaves it up to about √(1e-14·(n − p)) ≈ 3e-7 SE
    /// from the minimum (measured: at most 1.5e-7 to 2.4e-7 SE per case,
    /// while the quick route stops within about 1e-9 SE of it). Each
    /// covariance entry to 1e-6 of √(c_jj·c_kk) (the quick route's is taken
    /// one last, tiny step before its solution), and the failures must be
    /// the same; and
    /// the quick route must take at least 90% of the refits.
    #[test]
    fn gauss_newton_refits_agree_with_the_solver() {
        use crate::fit::{fit_model, FitSettings};
        use crate::models::model_with_options;
        let substrate = [0.5, 1.0, 2.0, 3.0, 5.0, 7.5, 10.0, 15.0, 20.0, 30.0, 50.0, 80.0];
        let cases: Vec<(&str, Vec<f64>, Box<dyn Fn(f64) -> f64>, f64, bool, u64)> = vec![
            ("mm", substrate.to_vec(), Box::new(|x: f64| 12.0 * x / (8.0 + x)), 0.03, true, 11),
            ("mm", substrate.to_vec(), Box::new(|x: f64| 12.0 * x / (8.0 + x)), 0.03, true, 12),
            ("hill", substrate.to_vec(), Box::new(|x: f64| 10.0 * x.powf(1.8) / (5f64.powf(1.8) + x.powf(1.8))), 0.2, false, 13),
            (
                "substrate-inhibition",
                (0..14).map(|k| 0.5 * 1.6f64.powi(k)).collect(),
                Box::new(|x: f64| 20.0 * x / (4.0 + x * (1.0 + x / 60.0))),
                0.3,
                false,
                14,
            ),
            ("ic50", (0..10).map(|k| 100.0 / 3f64.powi(k)).collect(), Box::new(|x: f64| 100.0 / (1.0 + x / 3.0)), 4.0, false, 15),
        ];
        for (name, x, truth, sd, proportional, seed) in cases {
            let mut rng = SplitMix64::new(seed);
            let y: Vec<f64> = x.iter().map(|&v| truth(v) * if proportional { 1.0 + sd * rng.normal() } else { 1.0 } + if proportional { 0.0 } else { sd * rng.normal() }).collect();
            let weights = (seed == 12).then(|| y.iter().map(|v| 1.0 / (v * v)).collect());
            let data = Observations::new(1, x.clone(), y, weights).unwrap();
            let model = model_with_options(name, &Default::default()).unwrap();
            let fit = fit_model(model.as_ref(), &data, None, &FitSettings::default()).unwrap();
            let settings = BootstrapSettings { resamples: 400, seed: 7, ..Default::default() };
            let quick = bootstrap_by(model.as_ref(), &data, &fit, &settings, true);
            let solver = bootstrap_by(model.as_ref(), &data, &fit, &settings, false);
            assert_eq!(quick.failures, solver.failures, "{name} (seed {seed}): failures");
            assert_eq!(quick.estimates.len(), solver.estimates.len());
            let ses: Vec<f64> = fit.summary.parameters.iter().map(|e| e.std_error.unwrap()).collect();
            for (a, b) in quick.estimates.iter().zip(&solver.estimates) {
                for j in 0..a.len() {
                    assert!((a[j] - b[j]).abs() <= 1e-6 * ses[j], "{name} (seed {seed}): parameter {j}: {} against the solver's {}", a[j], b[j]);
                }
            }
            for (a, b) in quick.covariances.iter().zip(&solver.covariances) {
                let (a, b) = (a.as_ref().unwrap(), b.as_ref().unwrap());
                for j in 0..a.nrows() {
                    for k in 0..a.ncols() {
                        let scale = (b[(j, j)] * b[(k, k)]).sqrt();
                        assert!((a[(j, k)] - b[(j, k)]).abs() <= 1e-6 * scale, "{name} (seed {seed}): covariance ({j}, {k}) {} against {}", a[(j, k)], b[(j, k)]);
                    }
                }
            }
            // How often the quick route takes a refit: 100 resamples of
            // the plain residuals (seed 8), tried by it alone.
            let terms = StartTerms::at(model.as_ref(), &data, fit.values());
            let fitted: Vec<f64> = x.iter().map(|&v| model.value(&[v], fit.values())).collect();
            let residuals: Vec<f64> = data.y().iter().zip(&fitted).map(|(o, f)| o - f).collect();
            let mut draw = SplitMix64::new(8);
            let mut resampled = data.clone();
            let mut taken = 0;
            for _ in 0..100 {
                let y: Vec<f64> = fitted.iter().map(|f| f + residuals[draw.below(residuals.len())]).collect();
                resampled.set_responses(&y).unwrap();
                taken += usize::from(gauss_newton_refit(model.as_ref(), &resampled, fit.values(), terms.as_ref(), BOOTSTRAP_TOLERANCE).is_some());
            }
            assert!(taken >= 90, "{name} (seed {seed}): the quick route took {taken} of 100 refits");
        }
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
