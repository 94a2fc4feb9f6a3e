//! The initial rate of one time course from a model of its early part
//! that accounts for curvature, beside the straight-line window.
//!
//! A straight line through a curving trace underestimates the initial
//! slope, and a window short enough to make that bias negligible is short
//! enough to make the slope noisy. [`integrated_initial_rate`] fits the
//! integrated Michaelis-Menten equation to the trace *with apparent
//! constants of its own* (no sharing between traces, so it assumes nothing
//! about the mechanism beyond a hyperbolic slowing as substrate is used):
//!
//! ```text
//! P(t) = P₀ + S₀ − K·W((S₀/K)·exp((S₀ − V·τ)/K)),   τ = t − t_first,
//! V = v₀·(K + S₀)/S₀
//! ```
//!
//! parameterised by the offset P₀, the initial rate v₀ itself and the
//! apparent constant K, so that v₀'s standard error comes straight from the
//! covariance (s²(JᵀJ)⁻¹, with s² from every point used, not only a short
//! window). Its 95% interval is the profile-likelihood interval (see
//! [`crate::intervals`]), which follows the skew that a poorly determined
//! K gives v₀. The reaction is
//! taken to start at the first reading with [S] = [S]₀ there; v₀ is the
//! rate at that reading.
//!
//! **Points used:** every usable reading of the trace ([`MAX_CONVERSION`]
//! is infinite; the `_with` form takes a limit). Stopping at half the
//! substrate, to keep product inhibition and enzyme inactivation (which
//! the apparent constants absorb only approximately) small, made v₀'s mean
//! squared error 5–13 times that of the whole-trace fit at [S]₀ ≤ 2×Km in
//! the simulation of `tests/traces.rs`, and a cut at 90% decided on noisy
//! data stopped too early at low [S]₀; the goal was at most 1.5 times.
//! Traces whose later part departs from the hyperbolic slowing (strong
//! product inhibition, inactivation) bias v₀: compare it with the window's
//! rate, which is the check.
//!
//! **Limits of K:** K → ∞ with v₀ fixed is first-order decay, K → 0 a
//! straight line until the substrate is gone; both are legitimate limits
//! of the same curve and v₀ stays defined in both, so a run-off K is not an
//! error here: the fit is retried from several starting values of K and
//! the best converged one is kept.

use crate::fit::{fit_model, FitSettings};
use crate::intervals::{profile_interval, profile_rss};
use crate::model::{Dimension, Model, Observations, ParameterSpec};
use crate::progress::product_and_gradient;

/// Largest fraction of [S]₀ converted in the points used: no limit (see
/// the module documentation).
pub const MAX_CONVERSION: f64 = f64::INFINITY;

/// The fewest points the fit is made with.
pub const MIN_POINTS: usize = 6;

/// The initial rate from the early-trace model.
#[derive(Clone, Debug, PartialEq)]
pub struct EarlyRate {
    /// v₀ in concentration per time unit.
    pub rate: f64,
    /// Its standard error.
    pub std_error: f64,
    /// 95% profile-likelihood interval.
    pub ci: (f64, f64),
    /// The apparent constant K (same unit as [S]₀); infinite or zero when
    /// the best curve is a limit (first-order, or straight until the
    /// substrate is gone).
    pub k_apparent: f64,
    /// Points used.
    pub points: usize,
}

/// The integrated equation with apparent constants, in (P₀, v₀, K).
struct Trace {
    s0: f64,
}

const SPECS: [ParameterSpec; 3] = [
    ParameterSpec { name: "P0", dimension: Dimension::Unspecified },
    ParameterSpec { name: "v0", dimension: Dimension::Unspecified },
    ParameterSpec { name: "K", dimension: Dimension::Unspecified },
];

impl Model for Trace {
    fn name(&self) -> &str {
        "integrated-apparent"
    }
    fn equation(&self) -> &str {
        "P = P0 + S0 − K·W((S0/K)·exp((S0 − V·τ)/K)), V = v0·(K + S0)/S0"
    }
    fn parameters(&self) -> &[ParameterSpec] {
        &SPECS
    }
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let (k, v0) = (p[2], p[1]);
        let vmax = v0 * (k + self.s0) / self.s0;
        product_and_gradient(x[0], self.s0, k, vmax).map_or(f64::NAN, |(product, _, _)| p[0] + product)
    }
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let (k, v0) = (p[2], p[1]);
        let vmax = v0 * (k + self.s0) / self.s0;
        let Some((_, d_k, d_vmax)) = product_and_gradient(x[0], self.s0, k, vmax) else {
            gradient.iter_mut().for_each(|g| *g = f64::NAN);
            return;
        };
        gradient[0] = 1.0;
        gradient[1] = d_vmax * (k + self.s0) / self.s0;
        gradient[2] = d_k + d_vmax * v0 / self.s0;
    }
    fn initial_guess(&self, _: &Observations) -> Result<Vec<f64>, crate::Error> {
        Err(crate::Error::numerical("the early-trace fit is started from the window's line"))
    }
}

/// v₀ of one trace from times `t`, product concentrations `y` (same
/// length, in order) and [S]₀, started from the window's `slope` (when
/// positive) and `intercept` (at the first time). `None` when too few
/// points or no fit converges.
pub fn integrated_initial_rate(t: &[f64], y: &[f64], s0: f64, slope: f64, intercept: f64) -> Option<EarlyRate> {
    integrated_initial_rate_with(t, y, s0, slope, intercept, MAX_CONVERSION)
}

/// [`integrated_initial_rate`] with another conversion limit (1 or more
/// uses the whole trace: the per-trace integrated fit the tests compare
/// against).
pub fn integrated_initial_rate_with(t: &[f64], y: &[f64], s0: f64, slope: f64, intercept: f64, max_conversion: f64) -> Option<EarlyRate> {
    if !(s0 > 0.0) || t.len() < MIN_POINTS || t.len() != y.len() {
        return None;
    }
    // A short window on a noisy trace can even slope downwards; start then
    // from the change between the first and the last quarter of the trace.
    let slope = if slope > 0.0 {
        slope
    } else {
        let q = (t.len() / 4).max(1);
        let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
        let rise = (mean(&y[t.len() - q..]) - mean(&y[..q])) / (mean(&t[t.len() - q..]) - mean(&t[..q]));
        if rise > 0.0 {
            rise
        } else {
            s0 / (t[t.len() - 1] - t[0])
        }
    };
    let y_first = intercept;
    let end = y.iter().position(|v| v - y_first > max_conversion * s0).unwrap_or(y.len()).max(MIN_POINTS).min(y.len());
    let tau: Vec<f64> = t[..end].iter().map(|v| v - t[0]).collect();
    let data = Observations::single(&tau, &y[..end]).ok()?;
    let model = Trace { s0 };
    let settings = FitSettings::default();
    let mut best: Option<crate::fit::Fit> = None;
    for factor in [0.01, 0.1, 1.0, 10.0] {
        let Ok(fit) = fit_model(&model, &data, Some(&[intercept, slope, factor * s0]), &settings) else { continue };
        let usable = fit.summary.converged && fit.values()[1] > 0.0 && fit.values()[2] > 0.0;
        if usable && best.as_ref().is_none_or(|b| fit.summary.rss < b.summary.rss) {
            best = Some(fit);
        }
    }
    // The limits of K are fitted too: the optimum over K in [0, ∞] can be
    // on the boundary, where the three-parameter fit only creeps towards
    // it (a K of 1e-9 with a v0 0.7% off in one simulated trace).
    let mut limit: Option<(crate::fit::Fit, f64)> = None;
    for (model, k) in [(Limit { s0, first_order: true }, f64::INFINITY), (Limit { s0, first_order: false }, 0.0)] {
        let Ok(fit) = fit_model(&model, &data, Some(&[intercept, slope]), &settings) else { continue };
        if fit.summary.converged && fit.values()[1] > 0.0 && limit.as_ref().is_none_or(|(b, _)| fit.summary.rss < b.summary.rss) {
            limit = Some((fit, k));
        }
    }
    let limit_rss = limit.as_ref().map_or(f64::INFINITY, |(l, _)| l.summary.rss);
    if let Some(fit) = best {
        let estimate = &fit.summary.parameters[1];
        if let Some(se) = estimate.std_error {
            // The interval is always the profile over K free, also when a
            // limit of K fits best: the limit's own standard error is
            // conditional on K being exactly 0 or ∞ and covered only 82% at
            // [S]0 = 8×Km in the simulation. The asymptotic interval of the
            // interior fit covered only 85% at [S]0 = 0.25×Km with noise
            // 0.004 absorbance (a poorly determined K skews v0).
            let rss_min = fit.summary.rss.min(limit_rss);
            if let (Some(low), Some(high)) = v0_profile_interval(&model, &data, &fit, rss_min) {
                let (rate, k) = match &limit {
                    Some((l, k)) if l.summary.rss < fit.summary.rss => (l.values()[1], *k),
                    _ => (estimate.value, fit.values()[2]),
                };
                return Some(EarlyRate { rate, std_error: se, ci: (low.min(rate), high.max(rate)), k_apparent: k, points: end });
            }
        }
    }
    // No usable interior fit: the best curve is one of the two limits of
    // K, first-order decay (K → ∞) or a straight line until the substrate
    // is gone (K → 0), whichever has the smaller sum of squares. The
    // standard error and interval are then conditional on that limit.
    let (fit, k) = limit?;
    let estimate = &fit.summary.parameters[1];
    let model = Limit { s0, first_order: k.is_infinite() };
    let (low, high) = profile_interval(&model, &data, &fit, 1);
    Some(EarlyRate { rate: estimate.value, std_error: estimate.std_error?, ci: (low?, high?), k_apparent: k, points: end })
}

/// The profile-likelihood interval of v₀ (index 1) for the three-parameter
/// curve. K is often flat and the best K can jump as v₀ is held away from
/// its optimum, so each profile point is refitted from three starting K
/// (the previous point's, and the optimum's ×0.1 and ×10) and the least
/// sum of squares kept; continuation alone ended on worse minima and gave
/// intervals up to 0.5% too narrow against an independent SciPy profile.
/// Ends: outward steps of one standard error (doubling), then
/// Illinois-modified regula falsi on S(c) − cutoff, cutoff = S_min·(1 +
/// t²/(n − 3)) as in [`crate::intervals`]. An end is `None` when the
/// profile never rises to the cutoff (or v₀ would reach zero). `rss_min`
/// is the least sum of squares over K in [0, ∞], which a limit of K can
/// hold rather than the interior fit.
fn v0_profile_interval(model: &Trace, data: &Observations, fit: &crate::fit::Fit, rss_min: f64) -> (Option<f64>, Option<f64>) {
    let Some(t) = fit.t_quantile else { return (None, None) };
    let best = fit.values().to_vec();
    let cutoff = rss_min * (1.0 + t * t / fit.summary.dof as f64);
    let Some(se) = fit.summary.parameters[1].std_error else { return (None, None) };
    let at = |c: f64, previous: &[f64]| -> Option<(f64, Vec<f64>)> {
        let mut starts = vec![previous.to_vec()];
        for factor in [0.1, 10.0] {
            let mut start = best.clone();
            start[2] *= factor;
            starts.push(start);
        }
        starts
            .iter()
            .filter_map(|start| profile_rss(model, data, 1, c, start))
            .filter(|(_, p)| p[2] > 0.0)
            .min_by(|a, b| a.0.total_cmp(&b.0))
    };
    let end = |direction: f64| -> Option<f64> {
        let mut inner = (best[1], rss_min, best.clone());
        let mut step = se;
        let mut outer = None;
        for _ in 0..60 {
            let c = inner.0 + direction * step;
            if c <= 0.0 {
                return None;
            }
            let (rss, params) = at(c, &inner.2)?;
            if rss >= cutoff {
                outer = Some((c, rss));
                break;
            }
            inner = (c, rss, params);
            step *= 2.0;
        }
        let (mut c_out, mut r_out) = outer?;
        let (mut c_in, mut r_in, mut start) = inner;
        let mut side = 0;
        for _ in 0..60 {
            let c = c_in + (cutoff - r_in) * (c_out - c_in) / (r_out - r_in);
            let (rss, params) = at(c, &start)?;
            if (rss - cutoff).abs() <= 1e-12 * cutoff || (c_out - c_in).abs() <= 1e-12 * c.abs() {
                return Some(c);
            }
            if rss < cutoff {
                c_in = c;
                r_in = rss;
                start = params;
                if side == -1 {
                    r_out = cutoff + (r_out - cutoff) / 2.0;
                }
                side = -1;
            } else {
                c_out = c;
                r_out = rss;
                if side == 1 {
                    r_in = cutoff - (cutoff - r_in) / 2.0;
                }
                side = 1;
            }
        }
        Some(0.5 * (c_in + c_out))
    };
    (end(-1.0), end(1.0))
}

/// The limits of the integrated equation in (P₀, v₀): first-order decay,
/// P = P₀ + S₀·(1 − exp(−v₀·τ/S₀)), or a line until the substrate is gone,
/// P = P₀ + min(v₀·τ, S₀).
struct Limit {
    s0: f64,
    first_order: bool,
}

const LIMIT_SPECS: [ParameterSpec; 2] = [
    ParameterSpec { name: "P0", dimension: Dimension::Unspecified },
    ParameterSpec { name: "v0", dimension: Dimension::Unspecified },
];

impl Model for Limit {
    fn name(&self) -> &str {
        if self.first_order {
            "first-order"
        } else {
            "zero-order"
        }
    }
    fn equation(&self) -> &str {
        if self.first_order {
            "P = P0 + S0·(1 − exp(−v0·τ/S0))"
        } else {
            "P = P0 + min(v0·τ, S0)"
        }
    }
    fn parameters(&self) -> &[ParameterSpec] {
        &LIMIT_SPECS
    }
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        if self.first_order {
            p[0] + self.s0 * (1.0 - (-p[1] * x[0] / self.s0).exp())
        } else {
            p[0] + (p[1] * x[0]).min(self.s0)
        }
    }
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        gradient[0] = 1.0;
        gradient[1] = if self.first_order {
            x[0] * (-p[1] * x[0] / self.s0).exp()
        } else if p[1] * x[0] < self.s0 {
            x[0]
        } else {
            0.0
        };
    }
    fn initial_guess(&self, _: &Observations) -> Result<Vec<f64>, crate::Error> {
        Err(crate::Error::numerical("the early-trace fit is started from the window's line"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gradient_matches_finite_differences() {
        let model = Trace { s0: 10.0 };
        let tau: Vec<f64> = (0..12).map(|j| j as f64 * 0.5).collect();
        let y = vec![0.0; tau.len()];
        let data = Observations::single(&tau, &y).unwrap();
        let worst = crate::model::gradient_disagreement(&model, &data, &[0.05, 0.8, 15.0]);
        assert!(worst < 1e-6, "{worst}");
    }
}
