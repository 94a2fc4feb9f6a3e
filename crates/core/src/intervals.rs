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
//! 1997): refit to resampled data sets and take percentiles of the refitted
//! values. Residual resampling keeps the design and adds resampled
//! weighted residuals, inflated by sqrt(n/(n − p)) to undo the shrinkage of
//! fitted residuals; case resampling draws whole rows. The generator is
//! seeded by the caller, so results are reproducible.

use crate::fit::{Fit, FitSummary};
use crate::model::{Model, Observations, ParameterSpec};
use crate::random::SplitMix64;
use crate::solver::{minimise, SolverSettings};
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

impl HeldFixed<'_> {
    fn full(&self, free: &[f64]) -> Vec<f64> {
        let mut p = Vec::with_capacity(free.len() + 1);
        p.extend_from_slice(&free[..self.index]);
        p.push(self.value);
        p.extend_from_slice(&free[self.index..]);
        p
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
        self.inner.value(x, &self.full(p))
    }
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let mut full_gradient = vec![0.0; p.len() + 1];
        self.inner.gradient(x, &self.full(p), &mut full_gradient);
        full_gradient.remove(self.index);
        gradient.copy_from_slice(&full_gradient);
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
    let report = minimise(&held, data, &free_start, &SolverSettings::default());
    report.converged.then(|| (report.rss, held.full(&report.parameters)))
}

/// One end of a profile interval: `None` when the profile never reaches
/// the cut-off within the search (the data do not bound the parameter on
/// that side) or when refits fail.
fn profile_end(model: &dyn Model, data: &Observations, fit: &Fit, index: usize, direction: f64, t: f64) -> Option<f64> {
    let best = fit.values();
    let theta = best[index];
    let s = (fit.summary.rss / fit.summary.dof as f64).sqrt();
    if !(s > 0.0) {
        return None;
    }
    let tau = |rss: f64, c: f64| (c - theta).signum() * (rss - fit.summary.rss).max(0.0).sqrt() / s;
    let se = fit.summary.parameters[index].std_error.unwrap_or(theta.abs() * 0.1).max(f64::MIN_POSITIVE);
    // Walk outwards from the optimum in steps of about half a standard
    // error, each refit started from the previous one (continuation), and
    // double the step when τ grows slowly, until |τ| passes t.
    let mut step = 0.5 * se;
    let mut inner = (theta, 0.0, best.to_vec());
    let mut outer = None;
    for _ in 0..80 {
        let c = inner.0 + direction * step;
        let Some((rss, params)) = profile_rss(model, data, index, c, &inner.2) else {
            return None;
        };
        let tau_c = tau(rss, c).abs();
        if tau_c >= t {
            outer = Some((c, tau_c));
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
    let (mut c_out, mut tau_out) = outer?;
    let (mut c_in, mut tau_in, mut start) = inner;
    // Illinois-modified regula falsi on |τ(c)| − t between the bracket ends.
    let mut side = 0;
    for _ in 0..60 {
        let c = c_in + (t - tau_in) * (c_out - c_in) / (tau_out - tau_in);
        let Some((rss, params)) = profile_rss(model, data, index, c, &start) else {
            return None;
        };
        let tau_c = tau(rss, c).abs();
        if (tau_c - t).abs() < 1e-10 * t || (c_out - c_in).abs() < 1e-13 * c.abs().max(se) {
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
    if !fit.summary.converged {
        return (None, None);
    }
    (profile_end(model, data, fit, index, -1.0, t), profile_end(model, data, fit, index, 1.0, t))
}

/// How bootstrap data sets are drawn.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BootstrapScheme {
    /// Keep the design; add resampled (inflated, weighted) residuals.
    #[default]
    Residual,
    /// Resample whole observations with replacement.
    Case,
}

/// Settings of a bootstrap.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct BootstrapSettings {
    /// Number of resampled data sets. Default 2,000; must be ≥ 100 for
    /// percentile intervals at 95% to mean anything.
    pub resamples: usize,
    /// Seed of the generator. Default 1.
    pub seed: u64,
    /// Resampling scheme. Default residual.
    pub scheme: BootstrapScheme,
}

impl Default for BootstrapSettings {
    fn default() -> Self {
        BootstrapSettings { resamples: 2000, seed: 1, scheme: BootstrapScheme::Residual }
    }
}

/// Refitted parameter vectors from a bootstrap.
#[derive(Clone, Debug, PartialEq)]
pub struct BootstrapSample {
    /// One refitted parameter vector per successful resample.
    pub estimates: Vec<Vec<f64>>,
    /// Resamples whose refit did not converge (or, for case resampling,
    /// that had too few distinct points); they are left out.
    pub failures: usize,
}

/// Runs the bootstrap. Each refit starts at the original estimate.
pub fn bootstrap(model: &dyn Model, data: &Observations, fit: &Fit, settings: &BootstrapSettings) -> BootstrapSample {
    let n = data.len();
    let p = fit.values().len();
    let best = fit.values();
    let mut rng = SplitMix64::new(settings.seed);
    let fitted: Vec<f64> = (0..n).map(|i| model.value(data.x(i), best)).collect();
    let sqrt_w: Vec<f64> = data.weights().iter().map(|w| w.sqrt()).collect();
    let inflate = (n as f64 / (n - p) as f64).sqrt();
    let residuals: Vec<f64> = (0..n).map(|i| sqrt_w[i] * (data.y()[i] - fitted[i]) * inflate).collect();
    let predictors = data.predictors();
    let mut estimates = Vec::with_capacity(settings.resamples);
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
                let report = minimise(model, &reused, best, &SolverSettings::default());
                if report.converged {
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
        let report = minimise(model, &resampled, best, &SolverSettings::default());
        if report.converged {
            estimates.push(report.parameters);
        } else {
            failures += 1;
        }
    }
    BootstrapSample { estimates, failures }
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
            let mut open = Vec::new();
            for j in 0..p {
                let (low, high) = profile_interval(model, data, fit, j);
                let estimate = &mut summary.parameters[j];
                if low.is_none() || high.is_none() {
                    open.push(estimate.name.clone());
                }
                estimate.ci_low = low;
                estimate.ci_high = high;
                estimate.ci_method = IntervalMethod::Profile.name().to_string();
            }
            if !open.is_empty() {
                summary.warnings.push(format!(
                    "The profile interval of {} is open on at least one side: within the search the data do not bound it at this confidence level.",
                    open.join(", ")
                ));
            }
            Ok(None)
        }
        IntervalMethod::Bootstrap => {
            if settings.resamples < 100 || settings.resamples > 100_000 {
                return Err(crate::Error::invalid_option("the number of bootstrap resamples must be between 100 and 100,000"));
            }
            if !fit.summary.converged {
                summary.warnings.push("No bootstrap was run because the fit itself did not converge.".to_string());
                return Ok(Some(BootstrapSample { estimates: Vec::new(), failures: 0 }));
            }
            let sample = bootstrap(model, data, fit, settings);
            for j in 0..p {
                let values: Vec<f64> = sample.estimates.iter().map(|e| e[j]).collect();
                let (low, high) = percentile_interval(&values, summary.confidence_level);
                let estimate = &mut summary.parameters[j];
                estimate.ci_low = low;
                estimate.ci_high = high;
                estimate.ci_method = IntervalMethod::Bootstrap.name().to_string();
            }
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
}
