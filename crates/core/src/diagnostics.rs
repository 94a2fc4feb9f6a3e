//! Residual diagnostics: is the model adequate for these data?
//!
//! - The **runs test** (Wald & Wolfowitz 1940) on the signs of the residuals
//!   in order of the predictor: too few runs means the curve misses the data
//!   systematically. The p-value is exact, from the distribution of the
//!   number of runs given the counts of each sign.
//! - The **lack-of-fit F test** when some predictor values are replicated:
//!   the scatter between replicates (pure error) against the misfit of the
//!   group means (Draper & Smith 1998, sec. 2.1).
//! - **Leverage** h_i (the diagonal of J(JᵀJ)⁻¹Jᵀ with the weighted Jacobian)
//!   and **studentised residuals** r_i = e_i/(s·sqrt(1 − h_i)), with a flag
//!   where |r_i| > 2.5. The flag asks the scientist to look; Turnover never
//!   removes a point by itself.
//! - Normal quantiles for a normal probability plot of the studentised
//!   residuals (Blom's plotting positions (i − 3/8)/(n + 1/4)).

use crate::fit::{unscaled_covariance, Fit};
use crate::model::{Model, Observations};
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, FisherSnedecor, Normal};

/// |studentised residual| above which a point is flagged for a look
/// (common practice, no source: 2 to 3 are the customary choices).
pub const OUTLIER_THRESHOLD: f64 = 2.5;

/// The runs test on residual signs.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RunsTest {
    /// Number of runs of equal sign.
    pub runs: usize,
    /// Positive residuals.
    pub positive: usize,
    /// Negative residuals.
    pub negative: usize,
    /// Expected number of runs for random signs.
    pub expected: f64,
    /// Exact P(runs ≤ observed): small values mean systematic misfit.
    pub p_too_few: f64,
}

/// The lack-of-fit F test.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct LackOfFit {
    /// Number of distinct predictor settings.
    pub groups: usize,
    /// Pure-error sum of squares (within replicate groups).
    pub pure_error_ss: f64,
    /// Its degrees of freedom, n − groups.
    pub pure_error_dof: usize,
    /// Lack-of-fit sum of squares, RSS − pure error.
    pub lack_of_fit_ss: f64,
    /// Its degrees of freedom, groups − p.
    pub lack_of_fit_dof: usize,
    /// The F ratio.
    pub f: f64,
    /// P(F ≥ observed) under an adequate model.
    pub p_value: f64,
}

/// Per-point diagnostics, in the order of the fitted observations.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PointDiagnostics {
    /// Leverage h_i.
    pub leverage: f64,
    /// Internally studentised residual.
    pub studentised: Option<f64>,
    /// Whether |studentised| exceeds [`OUTLIER_THRESHOLD`].
    pub flagged: bool,
}

/// All residual diagnostics of one fit.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ResidualDiagnostics {
    /// The runs test, when there are residuals of both signs.
    pub runs: Option<RunsTest>,
    /// The lack-of-fit test, when there are replicates and enough groups.
    pub lack_of_fit: Option<LackOfFit>,
    /// One entry per fitted observation.
    pub points: Vec<PointDiagnostics>,
    /// Sentences for people.
    pub findings: Vec<String>,
}

fn ln_choose(n: usize, k: usize) -> f64 {
    if k > n {
        return f64::NEG_INFINITY;
    }
    ln_factorial(n) - ln_factorial(k) - ln_factorial(n - k)
}

fn ln_factorial(n: usize) -> f64 {
    statrs::function::gamma::ln_gamma(n as f64 + 1.0)
}

/// Exact P(R = r) for the number of runs R in a random arrangement of `a`
/// items of one kind and `b` of the other (both ≥ 1).
pub fn runs_probability(r: usize, a: usize, b: usize) -> f64 {
    let total = ln_choose(a + b, a);
    let term = |x: usize, y: usize, i: usize, j: usize| {
        if x == 0 || y == 0 || i == 0 || j == 0 {
            return 0.0;
        }
        (ln_choose(x - 1, i - 1) + ln_choose(y - 1, j - 1) - total).exp()
    };
    if r < 2 {
        return 0.0;
    }
    if r % 2 == 0 {
        let k = r / 2;
        2.0 * term(a, b, k, k)
    } else {
        let k = (r - 1) / 2;
        term(a, b, k + 1, k) + term(a, b, k, k + 1)
    }
}

/// The runs test on the signs of `residuals` taken in the given order.
/// Zero residuals are left out.
pub fn runs_test(residuals: &[f64]) -> Option<RunsTest> {
    let signs: Vec<bool> = residuals.iter().filter(|r| **r != 0.0).map(|r| *r > 0.0).collect();
    let positive = signs.iter().filter(|s| **s).count();
    let negative = signs.len() - positive;
    if positive == 0 || negative == 0 {
        return None;
    }
    let runs = 1 + signs.windows(2).filter(|w| w[0] != w[1]).count();
    let n = (positive + negative) as f64;
    let expected = 2.0 * positive as f64 * negative as f64 / n + 1.0;
    let p_too_few: f64 = (2..=runs).map(|r| runs_probability(r, positive, negative)).sum();
    Some(RunsTest { runs, positive, negative, expected, p_too_few: p_too_few.min(1.0) })
}

/// Computes every diagnostic for `fit` of `model` to `data`.
pub fn residual_diagnostics(model: &dyn Model, data: &Observations, fit: &Fit) -> ResidualDiagnostics {
    let n = data.len();
    let p = fit.values().len();
    let values = fit.values();
    let weights = data.weights();
    let weighted: Vec<f64> =
        (0..n).map(|i| weights[i].sqrt() * (data.y()[i] - model.value(data.x(i), values))).collect();

    // Order by the first predictor (then the others) for the runs test.
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&a, &b| data.x(a).partial_cmp(data.x(b)).unwrap_or(std::cmp::Ordering::Equal));
    let ordered: Vec<f64> = order.iter().map(|&i| weighted[i]).collect();
    let runs = runs_test(&ordered);

    // Replicate groups: identical predictor values.
    let mut groups: Vec<Vec<usize>> = Vec::new();
    for &i in &order {
        match groups.last_mut() {
            Some(group) if data.x(group[0]) == data.x(i) => group.push(i),
            _ => groups.push(vec![i]),
        }
    }
    let lack_of_fit = if groups.len() < n && groups.len() > p {
        let mut pure_error_ss = 0.0;
        for group in &groups {
            let total_weight: f64 = group.iter().map(|&i| weights[i]).sum();
            let mean = group.iter().map(|&i| weights[i] * data.y()[i]).sum::<f64>() / total_weight;
            pure_error_ss += group.iter().map(|&i| weights[i] * (data.y()[i] - mean).powi(2)).sum::<f64>();
        }
        let pure_error_dof = n - groups.len();
        let lack_of_fit_dof = groups.len() - p;
        let lack_of_fit_ss = (fit.summary.rss - pure_error_ss).max(0.0);
        let f = (lack_of_fit_ss / lack_of_fit_dof as f64) / (pure_error_ss / pure_error_dof as f64);
        // Replicates that agree exactly leave no pure error: F is 0/0 or
        // x/0, and statrs's F distribution panics on a NaN argument. No test
        // is possible then, so none is reported.
        let testable = f.is_finite() && pure_error_ss > 0.0;
        let p_value = if testable {
            FisherSnedecor::new(lack_of_fit_dof as f64, pure_error_dof as f64).map(|d| 1.0 - d.cdf(f)).ok()
        } else {
            None
        };
        p_value.map(|p_value| LackOfFit {
            groups: groups.len(),
            pure_error_ss,
            pure_error_dof,
            lack_of_fit_ss,
            lack_of_fit_dof,
            f,
            p_value,
        })
    } else {
        None
    };

    let s = fit.summary.sigma;
    let unscaled = unscaled_covariance(&fit.report.jacobian);
    let points: Vec<PointDiagnostics> = (0..n)
        .map(|i| {
            let leverage = unscaled.as_ref().map_or(f64::NAN, |c| {
                let row = fit.report.jacobian.row(i);
                (row * c * row.transpose())[(0, 0)]
            });
            let studentised = s.filter(|s| *s > 0.0 && leverage < 1.0).map(|s| weighted[i] / (s * (1.0 - leverage).sqrt()));
            let flagged = studentised.is_some_and(|r| r.abs() > OUTLIER_THRESHOLD);
            PointDiagnostics { leverage, studentised, flagged }
        })
        .collect();

    let mut findings = Vec::new();
    if let Some(r) = &runs {
        if r.p_too_few < 0.05 {
            findings.push(format!(
                "The residuals change sign only {} times in order of [S] (about {:.1} expected; P = {:.3}): the curve misses the data systematically. Consider another model or weighting.",
                r.runs - 1,
                r.expected - 1.0,
                r.p_too_few
            ));
        }
    }
    if let Some(l) = &lack_of_fit {
        if l.p_value < 0.05 {
            findings.push(format!(
                "Lack-of-fit F test: the group means deviate from the curve more than replicates scatter (F = {:.2} on {} and {} df, P = {:.3}).",
                l.f, l.lack_of_fit_dof, l.pure_error_dof, l.p_value
            ));
        }
    }
    let flagged = points.iter().filter(|p| p.flagged).count();
    if flagged > 0 {
        findings.push(format!(
            "{flagged} point(s) have a studentised residual beyond ±{OUTLIER_THRESHOLD} (marked in the table of points). Look at them; leave one out only for a reason found at the bench."
        ));
    }
    ResidualDiagnostics { runs, lack_of_fit, points, findings }
}

/// Normal quantiles for a probability plot of `n` sorted values, from
/// Blom's plotting positions (i − 3/8)/(n + 1/4), i = 1..n.
pub fn normal_scores(n: usize) -> Vec<f64> {
    let normal = Normal::new(0.0, 1.0).expect("the standard normal exists");
    (1..=n).map(|i| normal.inverse_cdf((i as f64 - 0.375) / (n as f64 + 0.25))).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The exact runs distribution against brute-force enumeration of every
    /// arrangement of `a` plus signs and `b` minus signs.
    #[test]
    fn runs_distribution_matches_enumeration() {
        for (a, b) in [(1, 1), (2, 3), (4, 4), (5, 7), (3, 9)] {
            let n = a + b;
            let mut counts = vec![0usize; n + 2];
            let mut total = 0usize;
            for mask in 0u32..(1 << n) {
                if mask.count_ones() as usize != a {
                    continue;
                }
                let bits: Vec<bool> = (0..n).map(|i| mask >> i & 1 == 1).collect();
                let runs = 1 + bits.windows(2).filter(|w| w[0] != w[1]).count();
                counts[runs] += 1;
                total += 1;
            }
            for (r, count) in counts.iter().enumerate() {
                let exact = *count as f64 / total as f64;
                assert!((runs_probability(r, a, b) - exact).abs() < 1e-12, "a={a} b={b} r={r}");
            }
        }
    }

    #[test]
    fn runs_test_detects_systematic_signs() {
        let systematic = [1.0, 1.0, 1.0, 1.0, -1.0, -1.0, -1.0, -1.0, 1.0, 1.0, 1.0, 1.0];
        let test = runs_test(&systematic).unwrap();
        assert_eq!(test.runs, 3);
        // By hand: 8 plus and 4 minus signs, P(R = 2) = 2/495 and
        // P(R = 3) = (7 + 3)/495, so P(R ≤ 3) = 12/495.
        assert!((test.p_too_few - 12.0 / 495.0).abs() < 1e-14, "{}", test.p_too_few);
        let alternating = [1.0, -1.0, 1.0, -1.0, 1.0, -1.0, 1.0, -1.0];
        assert!(runs_test(&alternating).unwrap().p_too_few > 0.99);
    }

    /// Blom scores: Φ⁻¹(0.5) = 0 for the middle of an odd sample, and the
    /// scores are antisymmetric.
    #[test]
    fn normal_scores_are_symmetric() {
        let scores = normal_scores(7);
        assert!(scores[3].abs() < 1e-12);
        for i in 0..7 {
            assert!((scores[i] + scores[6 - i]).abs() < 1e-12);
        }
    }
}
