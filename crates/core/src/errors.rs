//! The error structure of the data: does the spread of the residuals grow
//! with the rate, and which weighting suits it?
//!
//! [`error_structure`] fits the model three times to the same points, each
//! with a different error model: constant SD (uniform weights), variance
//! proportional to the mean (Poisson-like, weights 1/f) and SD proportional
//! to the mean (constant relative error, weights 1/f²), the last two with
//! weights from the fitted curve. For each it evaluates the Gaussian
//! log-likelihood at that fit, with σ² estimated by maximum likelihood,
//!
//! ℓ = −n/2·(ln(2π·σ̂²) + 1) − ½·Σ ln g(f_i),  σ̂² = Σ (y_i − f_i)²/g(f_i) / n,
//!
//! g = 1, f or f². The three error models have the same number of
//! parameters, so their log-likelihoods compare directly (Akaike's
//! criterion reduces to them). A difference of 1 or more in ℓ (2 in AIC,
//! the edge of "substantial support" for the weaker model in the rule of
//! thumb of Burnham & Anderson 2002, sec. 2.6, from memory) is taken as
//! enough to suggest a weighting; a smaller one says the data cannot tell.
//! With 16 points and 10% proportional noise this suggests relative weights
//! in about half of the data sets and a wrong weighting in under 1%
//! (`tests/coverage.rs`). The log-likelihood of the weighted fits is evaluated at the
//! reweighted least-squares estimate, which is not exactly the maximum of ℓ
//! (that would also move the fit to shrink Σ ln g); the difference is of the
//! order of the squared coefficient of variation and does not change the
//! comparison in practice.
//!
//! Beside it, the simplest visible check: the ordinary least-squares slope
//! of |residual| on the fitted value in the uniform fit (Glejser 1969,
//! J. Am. Stat. Assoc. 64, 316; from memory), with its t test. A positive
//! slope says the spread grows with the rate.

use crate::fit::{fit_model, reweighted_solution, FitSettings};
use crate::model::{Model, Observations};
use crate::weighting::Weighting;
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, StudentsT};

/// Difference in log-likelihood taken as decisive.
pub const DECISIVE: f64 = 1.0;

/// One error model's fit.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ErrorModel {
    /// The weighting that matches it: `uniform`, `poisson` or `relative`.
    pub weighting: String,
    /// Its Gaussian log-likelihood at the fit.
    pub log_likelihood: f64,
}

/// The check of the error structure.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ErrorStructure {
    /// Every error model that could be fitted, best first.
    pub models: Vec<ErrorModel>,
    /// The weighting the data favour decisively; `None` when the best two
    /// are within [`DECISIVE`] of each other.
    pub suggested: Option<String>,
    /// Slope of |residual| on the fitted value in the uniform fit.
    pub spread_slope: Option<f64>,
    /// Its standard error.
    pub spread_slope_se: Option<f64>,
    /// Two-sided p value of the slope (t test, n − 2 df).
    pub spread_p_value: Option<f64>,
    /// What it means, in words, with its numbers.
    pub text: String,
}

/// Gaussian log-likelihood of residuals `y − f` with variance σ²·g(f),
/// σ² at its maximum-likelihood value.
pub fn log_likelihood(y: &[f64], fitted: &[f64], g: impl Fn(f64) -> f64) -> Option<f64> {
    let n = y.len() as f64;
    let mut scaled = 0.0;
    let mut log_g = 0.0;
    for (y, f) in y.iter().zip(fitted) {
        let gi = g(*f);
        if !(gi > 0.0 && gi.is_finite()) {
            return None;
        }
        scaled += (y - f).powi(2) / gi;
        log_g += gi.ln();
    }
    let sigma2 = scaled / n;
    (sigma2 > 0.0).then(|| -0.5 * n * ((2.0 * std::f64::consts::PI * sigma2).ln() + 1.0) - 0.5 * log_g)
}

/// Ordinary least-squares slope of `b` on `a`, its standard error and the
/// two-sided p value of t = slope/SE on n − 2 df.
fn slope(a: &[f64], b: &[f64]) -> Option<(f64, f64, f64)> {
    let n = a.len() as f64;
    if a.len() < 3 {
        return None;
    }
    let (ma, mb) = (a.iter().sum::<f64>() / n, b.iter().sum::<f64>() / n);
    let sxx: f64 = a.iter().map(|x| (x - ma).powi(2)).sum();
    let sxy: f64 = a.iter().zip(b).map(|(x, y)| (x - ma) * (y - mb)).sum();
    if !(sxx > 0.0) {
        return None;
    }
    let beta = sxy / sxx;
    let alpha = mb - beta * ma;
    let rss: f64 = a.iter().zip(b).map(|(x, y)| (y - alpha - beta * x).powi(2)).sum();
    let se = (rss / (n - 2.0) / sxx).sqrt();
    let t = StudentsT::new(0.0, 1.0, n - 2.0).ok()?;
    let p = if se > 0.0 { 2.0 * t.sf((beta / se).abs()) } else { 0.0 };
    Some((beta, se, p))
}

/// Checks the error structure of `data` (its weights are ignored) under
/// `model`. `None` when not even the uniform fit converges.
pub fn error_structure(model: &dyn Model, data: &Observations) -> Option<ErrorStructure> {
    error_structure_after(model, data, None)
}

/// [`error_structure`] for a caller that has already fitted `model` to
/// `data` with every weight 1 and no starting values of its own (the
/// analyses do, with uniform weighting): `uniform` is that converged fit's
/// parameter vector, the very result the check's own first fit would
/// compute, so it is used instead of fitting again. `None` fits here.
pub fn error_structure_after(model: &dyn Model, data: &Observations, uniform: Option<&[f64]>) -> Option<ErrorStructure> {
    let n = data.len();
    let settings = FitSettings::default();
    let uniform: Vec<f64> = match uniform {
        Some(values) => values.to_vec(),
        None => {
            let uniform_data = data.with_weights(vec![1.0; n]).ok()?;
            fit_model(model, &uniform_data, None, &settings).ok().filter(|f| f.summary.converged)?.values().to_vec()
        }
    };
    let fitted_of = |p: &[f64]| -> Vec<f64> { (0..n).map(|i| model.value(data.x(i), p)).collect() };
    let y = data.y();
    let mut models = Vec::new();
    let f_uniform = fitted_of(&uniform);
    if let Some(l) = log_likelihood(y, &f_uniform, |_| 1.0) {
        models.push(ErrorModel { weighting: "uniform".to_string(), log_likelihood: l });
    }
    for (scheme, g) in [(Weighting::Poisson, 1.0), (Weighting::Relative, 2.0)] {
        let Ok(Some(start_weights)) = scheme.weights_without_sd(y) else { continue };
        let Ok(start_data) = data.with_weights(start_weights) else { continue };
        // Only the solution is needed, not the fit's statistics.
        let Some(values) = reweighted_solution(model, &start_data, scheme, &uniform, &settings.solver) else { continue };
        let f = fitted_of(&values);
        if let Some(l) = log_likelihood(y, &f, |m: f64| if m > 0.0 { m.powf(g) } else { f64::NAN }) {
            models.push(ErrorModel { weighting: scheme.name().to_string(), log_likelihood: l });
        }
    }
    models.sort_by(|a, b| b.log_likelihood.total_cmp(&a.log_likelihood));
    let suggested = match models.as_slice() {
        [best, second, ..] if best.log_likelihood - second.log_likelihood >= DECISIVE => Some(best.weighting.clone()),
        _ => None,
    };
    let abs_residuals: Vec<f64> = y.iter().zip(&f_uniform).map(|(y, f)| (y - f).abs()).collect();
    let spread = slope(&f_uniform, &abs_residuals);
    let listed =
        models.iter().map(|m| format!("{} {:.2}", m.weighting, m.log_likelihood)).collect::<Vec<_>>().join(", ");
    let spread_text = match spread {
        Some((b, se, p)) => format!(
            "|residual| against the fitted rate in the unweighted fit: slope {b:.3} ± {se:.3} (p = {p:.3}; {})",
            if p < 0.05 && b > 0.0 { "the spread grows with the rate" } else { "no clear growth of the spread with the rate" }
        ),
        None => "the spread of the residuals could not be regressed on the rate".to_string(),
    };
    let verdict = match &suggested {
        Some(w) => format!("the data favour {} weights (log-likelihood ahead by at least {DECISIVE})", w),
        None => format!("the data cannot tell these error models apart (log-likelihoods within {DECISIVE})"),
    };
    let text = format!("Error structure: log-likelihood by error model: {listed}; {verdict}. {spread_text}.");
    Some(ErrorStructure {
        models,
        suggested,
        spread_slope: spread.map(|s| s.0),
        spread_slope_se: spread.map(|s| s.1),
        spread_p_value: spread.map(|s| s.2),
        text,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The closed form against the sum of normal log densities, each
    /// −½·ln(2π·σ²·g) − (y − f)²/(2σ²·g) (the normal density: common
    /// practice, no source), with σ² = Σ (y − f)²/g / n.
    #[test]
    fn log_likelihood_is_the_sum_of_normal_log_densities() {
        let y: [f64; 5] = [1.1, 1.9, 3.2, 3.8, 5.3];
        let f: [f64; 5] = [1.0, 2.0, 3.0, 4.0, 5.0];
        for power in [0.0, 1.0, 2.0] {
            let g = |m: f64| m.powf(power);
            let sigma2 = y.iter().zip(&f).map(|(y, f)| (y - f).powi(2) / g(*f)).sum::<f64>() / 5.0;
            let direct: f64 = y
                .iter()
                .zip(&f)
                .map(|(y, f)| {
                    let v = sigma2 * g(*f);
                    -0.5 * (2.0 * std::f64::consts::PI * v).ln() - (y - f).powi(2) / (2.0 * v)
                })
                .sum();
            let closed = log_likelihood(&y, &f, g).unwrap();
            assert!((closed - direct).abs() < 1e-12, "power {power}: {closed} vs {direct}");
        }
    }
}
