//! One fit, start to finish, and the record that describes it.
//!
//! [`fit_model`] forms starting values, runs the minimiser and computes the
//! statistics of the estimate. The result is a [`FitSummary`]: one plain,
//! serialisable record shared by the page, the CLI and saved files.
//!
//! The statistics are the asymptotic (linearisation) ones: the covariance is
//! `s²·(JᵀJ)⁻¹` with `s² = RSS/(n − p)` and `J` the weighted Jacobian at the
//! solution, and intervals are `value ± t(1 − α/2, n − p)·SE` (Bates & Watts
//! 1988, ch. 2). They are exact only for a model linear in its parameters;
//! for enzyme kinetics they are usually fair when the data define every
//! parameter well.

use crate::error::Error;
use crate::model::{Dimension, Model, Observations};
use crate::solver::{minimise, SolverReport, SolverSettings, Termination};
use crate::weighting::Weighting;
use std::borrow::Cow;
use nalgebra::DMatrix;
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, StudentsT};

/// One estimated (or derived) parameter with its uncertainty.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ParameterEstimate {
    /// Parameter name (`Vmax`, `Km`, `kcat`, `kcat/Km`).
    pub name: String,
    /// The estimate.
    pub value: f64,
    /// Asymptotic standard error; `None` when the data cannot determine it.
    pub std_error: Option<f64>,
    /// Lower end of the confidence interval.
    pub ci_low: Option<f64>,
    /// Upper end of the confidence interval.
    pub ci_high: Option<f64>,
    /// Unit of the value, when the data's units are known.
    pub unit: Option<String>,
    /// Whether the value is computed from fitted parameters rather than
    /// fitted itself.
    pub derived: bool,
    /// How the interval was computed: `asymptotic`, `profile` or
    /// `bootstrap` (for derived constants with the asymptotic method, by
    /// the delta method).
    pub ci_method: Cow<'static, str>,
    /// What the data say about this parameter beyond its numbers, when it
    /// is not simply well determined: `not_determined` (the fit ran off
    /// without bound), `not_bounded_above` / `not_bounded_below` (the
    /// profile never closes on that side, or the bootstrap replicates run
    /// off), `asymptotic_crosses_zero` (a positive constant whose
    /// asymptotic interval reaches below zero: use the profile interval).
    /// `None` otherwise. A warning in words goes with every flag.
    pub flag: Option<String>,
    /// The estimated small-sample bias of `value` (expected estimate minus
    /// truth, to first order in 1/n, in the value's unit) by Box's (1971)
    /// formula, see [`crate::bias`]. `None` when it is not computed: the
    /// fit did not converge or has no covariance, the parameter is flagged
    /// (the data do not bound it, or its asymptotic interval reaches below
    /// zero), the bias is not smaller than the standard error (the
    /// first-order expansion behind it no longer holds), or the constant is
    /// derived by anything but a fixed scaling of one fitted parameter.
    pub bias: Option<f64>,
    /// `value − bias`, the estimate with its first-order bias removed;
    /// `None` exactly when `bias` is.
    pub value_bias_corrected: Option<f64>,
}

impl ParameterEstimate {
    /// Sets `bias` and `value_bias_corrected` together (`None` clears both).
    pub fn set_bias(&mut self, bias: Option<f64>) {
        self.bias = bias;
        self.value_bias_corrected = bias.map(|b| self.value - b);
    }
}

/// [`ParameterEstimate::flag`] values.
pub mod flags {
    /// The fit ran off without bound in this parameter.
    pub const NOT_DETERMINED: &str = "not_determined";
    /// The profile (or bootstrap) does not bound it from above.
    pub const NOT_BOUNDED_ABOVE: &str = "not_bounded_above";
    /// The profile (or bootstrap) does not bound it from below.
    pub const NOT_BOUNDED_BELOW: &str = "not_bounded_below";
    /// A positive constant whose asymptotic interval reaches below zero.
    pub const ASYMPTOTIC_CROSSES_ZERO: &str = "asymptotic_crosses_zero";
}

/// A parameter counts as run off when its magnitude exceeds this multiple
/// of the data's own scale for its dimension (the largest |v| for a rate,
/// the largest |x| for a concentration): 1,000 times beyond anything
/// measured, the value is an extrapolation the data cannot support, and in
/// practice such fits are drifting along a valley towards infinity (a
/// stated rule: common practice, no source, for the idea; the multiple is
/// Turnover's choice).
pub const RUNAWAY_MULTIPLE: f64 = 1e3;

/// The magnitude beyond which parameter `index` counts as run off
/// (see [`RUNAWAY_MULTIPLE`]); `None` for dimensionless parameters or when
/// the data's scale is zero.
pub fn runaway_limit(model: &dyn Model, data: &Observations, index: usize) -> Option<f64> {
    let scale = match model.parameters()[index].dimension {
        Dimension::Response => data.y().iter().fold(0.0f64, |m, v| m.max(v.abs())),
        Dimension::Predictor(j) => (0..data.len()).fold(0.0f64, |m, i| m.max(data.x(i)[j].abs())),
        Dimension::Dimensionless | Dimension::Unspecified => return None,
    };
    (scale > 0.0 && scale.is_finite()).then_some(RUNAWAY_MULTIPLE * scale)
}

/// Everything known about one fit.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct FitSummary {
    /// Machine name of the model.
    pub model: String,
    /// The model's equation for people.
    pub equation: String,
    /// Number of observations used.
    pub n: usize,
    /// Residual degrees of freedom, n − p.
    pub dof: usize,
    /// Weighted residual sum of squares.
    pub rss: f64,
    /// Residual standard deviation, sqrt(RSS/dof); `None` when dof = 0.
    pub sigma: Option<f64>,
    /// Coefficient of determination 1 − RSS/TSS (weighted sums).
    pub r_squared: Option<f64>,
    /// Akaike's criterion with the small-sample correction, counting the
    /// residual variance as a parameter; `None` when n ≤ p + 2.
    pub aicc: Option<f64>,
    /// Whether the minimiser converged.
    pub converged: bool,
    /// Outer iterations of the minimiser.
    pub iterations: usize,
    /// Why the minimiser stopped.
    pub termination: Termination,
    /// The same in words.
    pub termination_text: Cow<'static, str>,
    /// Confidence level of the intervals, such as 0.95.
    pub confidence_level: f64,
    /// The weighting used, by name (`uniform`, `relative`, `poisson`, `sd`).
    pub weighting: Cow<'static, str>,
    /// For weights recomputed from the fitted curve (relative, Poisson):
    /// the number of reweighting rounds until the parameters stopped
    /// changing; `None` for fixed weights.
    pub reweighting_rounds: Option<usize>,
    /// Fitted parameters, then derived ones.
    pub parameters: Vec<ParameterEstimate>,
    /// Correlation matrix of the fitted parameters (rows and columns in
    /// parameter order); entries are `None` when the covariance is singular.
    pub correlation: Vec<Vec<Option<f64>>>,
    /// Warnings in words, for people.
    pub warnings: Vec<String>,
}

/// A fit with the numbers behind its summary.
#[derive(Clone, Debug)]
pub struct Fit {
    /// The shared record.
    pub summary: FitSummary,
    /// Covariance matrix of the fitted parameters, when not singular.
    pub covariance: Option<DMatrix<f64>>,
    /// The minimiser's own report.
    pub report: SolverReport,
    /// Two-sided t quantile used for the intervals (`None` when dof = 0).
    pub t_quantile: Option<f64>,
    /// The scheme whose weights were recomputed from the fitted curve, when
    /// the fit was made by [`fit_weighted`]; refits of resampled data
    /// (bootstrap) iterate the same way.
    pub reweighting: Option<Weighting>,
}

impl Fit {
    /// Fitted parameter values in model order.
    pub fn values(&self) -> &[f64] {
        &self.report.parameters
    }
}

/// Settings for [`fit_model`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FitSettings {
    /// Confidence level of the intervals, strictly between 0 and 1.
    /// Default 0.95.
    pub confidence_level: f64,
    /// Minimiser settings.
    pub solver: SolverSettings,
}

impl Default for FitSettings {
    fn default() -> Self {
        FitSettings { confidence_level: 0.95, solver: SolverSettings::default() }
    }
}

/// Fits `model` to `data`, from `start` or, when `None`, from the model's
/// own starting values. The record carries each parameter's small-sample
/// bias ([`crate::bias::attach_bias`]).
pub fn fit_model(model: &dyn Model, data: &Observations, start: Option<&[f64]>, settings: &FitSettings) -> Result<Fit, Error> {
    let mut fit = fit_without_bias(model, data, start, settings)?;
    crate::bias::attach_bias(model, data, &mut fit);
    Ok(fit)
}

/// [`fit_model`] without the bias, for a first round whose record is
/// replaced.
fn fit_without_bias(model: &dyn Model, data: &Observations, start: Option<&[f64]>, settings: &FitSettings) -> Result<Fit, Error> {
    let n_params = model.parameters().len();
    if !(settings.confidence_level > 0.0 && settings.confidence_level < 1.0) {
        return Err(Error::invalid_option("the confidence level must be strictly between 0 and 1"));
    }
    if data.predictors() != model.predictors() {
        return Err(Error::invalid_data(format!(
            "the model needs {} predictor column(s), the data have {}",
            model.predictors(),
            data.predictors()
        )));
    }
    if data.len() <= n_params {
        return Err(Error::invalid_data(format!(
            "{} points cannot determine {} parameters with any uncertainty; at least {} are needed",
            data.len(),
            n_params,
            n_params + 1
        )));
    }
    // Responses that are all the same carry no information about a
    // curve's shape: a least-squares "fit" then reports constants at the
    // edge of their range with a zero standard error, a false certainty.
    let y = data.y();
    if y.iter().all(|v| *v == y[0]) {
        return Err(Error::invalid_data(format!(
            "every response is {} (all {} of them): a flat line says nothing about the curve's constants; check that the right column was read as the rate or response",
            y[0],
            y.len()
        )));
    }
    let start = match start {
        Some(values) => values.to_vec(),
        None => model.initial_guess(data)?,
    };
    if start.len() != n_params {
        return Err(Error::invalid_option(format!("{} starting values given for {} parameters", start.len(), n_params)));
    }
    let report = minimise(model, data, &start, &settings.solver);
    Ok(summarise(model, data, report, settings.confidence_level))
}

/// Relative change of every parameter between two reweighting rounds below
/// which the weights count as settled. Each round converges linearly with
/// a rate of about the squared coefficient of variation of the data, so a
/// handful of rounds reach it; 1e-11 leaves the fixed point well inside the
/// 1e-6 the SciPy cross-check asks for.
pub const REWEIGHT_TOLERANCE: f64 = 1e-11;

/// Most reweighting rounds before the iteration is declared unsettled.
pub const REWEIGHT_LIMIT: usize = 100;

/// The outcome of iterated reweighting (see [`fit_weighted`]).
pub(crate) struct Reweighted {
    /// The last minimisation.
    pub report: SolverReport,
    /// The observations with the weights of the last round.
    pub data: Observations,
    /// Rounds after the first fit.
    pub rounds: usize,
    /// Why the iteration did not settle, when it did not.
    pub unsettled: Option<String>,
}

/// Minimises, recomputes the weights of `weighting` from the fitted values,
/// and refits from the last solution until no parameter changes by more
/// than `tolerance` (relative) or `limit` rounds have passed. `data`'s own
/// weights serve the first round.
pub(crate) fn iterate_weights(
    model: &dyn Model,
    data: &Observations,
    weighting: Weighting,
    start: &[f64],
    solver: &SolverSettings,
    tolerance: f64,
    limit: usize,
) -> Reweighted {
    let mut report = minimise(model, data, start, solver);
    let mut current = data.clone();
    for round in 1..=limit {
        if !report.converged {
            return Reweighted { report, data: current, rounds: round - 1, unsettled: Some("a refit did not converge".to_string()) };
        }
        let weights: Option<Vec<f64>> =
            (0..data.len()).map(|i| weighting.weight_at_fitted(model.value(data.x(i), &report.parameters))).collect();
        let Some(weights) = weights else {
            return Reweighted {
                report,
                data: current,
                rounds: round - 1,
                unsettled: Some(format!("a fitted value cannot carry {}", weighting.describe())),
            };
        };
        let Ok(next) = data.with_weights(weights) else {
            return Reweighted { report, data: current, rounds: round - 1, unsettled: Some("the weights were not finite".to_string()) };
        };
        let previous = report.parameters.clone();
        // The last solution is already near the new weights' optimum, so
        // near that the minimiser's convergence test (a relative fall of
        // the sum of squares below 1e-14) can stop it before its first
        // step, about 1e-8 SE short, and the rounds would settle on that
        // stopping point instead of the weights' fixed point: Gauss-Newton
        // steps first (`polish`), which move by the gradient, not by the
        // sum's fall.
        let start = crate::models::start::polish(model, &next, previous.clone(), crate::models::start::Finish::Exact);
        report = minimise(model, &next, &start, solver);
        current = next;
        let change = previous
            .iter()
            .zip(&report.parameters)
            .map(|(a, b)| (a - b).abs() / a.abs().max(b.abs()).max(f64::MIN_POSITIVE))
            .fold(0.0, f64::max);
        if report.converged && change <= tolerance {
            return Reweighted { report, data: current, rounds: round, unsettled: None };
        }
    }
    Reweighted { report, data: current, rounds: limit, unsettled: Some(format!("the weights had not settled after {limit} rounds")) }
}

/// Fits `model` to `data` with the weights of `weighting`. For relative and
/// Poisson weighting the weights are recomputed from the fitted curve until
/// they settle (see [`crate::weighting`]); the first round uses `data`'s own
/// weights, which should be the same scheme on the measured values. For
/// uniform and sd weighting this is [`fit_model`]. Returns the fit and the
/// observations with the final weights, on which profiles and residual
/// diagnostics must be computed.
pub fn fit_weighted(
    model: &dyn Model,
    data: &Observations,
    weighting: Weighting,
    start: Option<&[f64]>,
    settings: &FitSettings,
) -> Result<(Fit, Observations), Error> {
    let mut first = fit_without_bias(model, data, start, settings)?;
    if !weighting.from_model() || !first.summary.converged {
        crate::bias::attach_bias(model, data, &mut first);
        return Ok((first, data.clone()));
    }
    let r = iterate_weights(model, data, weighting, first.values(), &settings.solver, REWEIGHT_TOLERANCE, REWEIGHT_LIMIT);
    if let Some(why) = r.unsettled {
        // Reweighting can wander off when the curve nears zero where the
        // data do not (errors that are not proportional, for example); the
        // fit on the measured rates is then the better-defined answer.
        first.summary.warnings.push(format!(
            "The weights from the fitted curve did not settle ({why}); the fit shown uses {} on the measured values instead, which biases the estimates slightly (check the error structure).",
            weighting.describe().replace(" from the fitted curve", "")
        ));
        crate::bias::attach_bias(model, data, &mut first);
        return Ok((first, data.clone()));
    }
    let mut fit = summarise(model, &r.data, r.report, settings.confidence_level);
    crate::bias::attach_bias(model, &r.data, &mut fit);
    fit.summary.reweighting_rounds = Some(r.rounds);
    fit.reweighting = Some(weighting);
    Ok((fit, r.data))
}

/// The solution [`fit_weighted`] reaches for a scheme whose weights come
/// from the fitted curve, without the fit's statistics (covariance, t
/// quantile, warnings), for checks that need only the parameter values
/// (the error structure). `None` exactly when `fit_weighted` would give a
/// fit without reweighting or one not converged: the scheme has fixed
/// weights, the data are unusable, the first fit or the last does not
/// converge (a run-off counts as not converged, as in [`fit_model`]) or the
/// weights do not settle. The same minimisations from the same starts, so
/// the same values.
pub(crate) fn reweighted_solution(
    model: &dyn Model,
    data: &Observations,
    weighting: Weighting,
    start: &[f64],
    solver: &SolverSettings,
) -> Option<Vec<f64>> {
    let y = data.y();
    let usable = data.predictors() == model.predictors()
        && start.len() == model.parameters().len()
        && data.len() > start.len()
        && !y.iter().all(|v| *v == y[0]);
    if !weighting.from_model() || !usable {
        return None;
    }
    let first = minimise(model, data, start, solver);
    if !first.converged || !runaway_indices(model, data, &first.parameters).is_empty() {
        return None;
    }
    let r = iterate_weights(model, data, weighting, &first.parameters, solver, REWEIGHT_TOLERANCE, REWEIGHT_LIMIT);
    let settled = r.unsettled.is_none() && r.report.converged && runaway_indices(model, &r.data, &r.report.parameters).is_empty();
    settled.then_some(r.report.parameters)
}

/// The parameters beyond their [`runaway_limit`].
fn runaway_indices(model: &dyn Model, data: &Observations, parameters: &[f64]) -> Vec<usize> {
    (0..parameters.len())
        .filter(|&j| runaway_limit(model, data, j).is_some_and(|limit| parameters[j].abs() > limit))
        .collect()
}

/// Condition below which the scaled Jacobian counts as rank deficient:
/// singular values smaller than this times the largest (after scaling each
/// column to unit length) carry no information in double precision.
const RANK_TOLERANCE: f64 = 1e-12;

fn summarise(model: &dyn Model, data: &Observations, mut report: SolverReport, level: f64) -> Fit {
    // A stopped minimiser with a parameter far beyond the data's scale has
    // not found an optimum: it drifted along a valley towards infinity.
    let runaway = runaway_indices(model, data, &report.parameters);
    if report.converged && !runaway.is_empty() {
        report.converged = false;
        report.termination = Termination::NoFiniteOptimum;
    }
    let n = data.len();
    let p = report.parameters.len();
    let dof = n - p;
    let variance = report.rss / dof as f64;
    let sigma = variance.is_finite().then(|| variance.sqrt());
    let unscaled = unscaled_covariance(&report.jacobian);
    let covariance = unscaled.map(|mut c| {
        c *= variance;
        c
    });
    let t_quantile = student_t_quantile(0.5 + level / 2.0, dof as f64);

    let mut parameters = Vec::with_capacity(p);
    for (j, spec) in model.parameters().iter().enumerate() {
        let value = report.parameters[j];
        let std_error = covariance.as_ref().map(|c| c[(j, j)].sqrt()).filter(|v| v.is_finite());
        parameters.push(estimate(spec.name, value, std_error, t_quantile));
    }

    let correlation = (0..p)
        .map(|a| {
            (0..p)
                .map(|b| {
                    covariance.as_ref().and_then(|c| {
                        let r = c[(a, b)] / (c[(a, a)] * c[(b, b)]).sqrt();
                        r.is_finite().then_some(r)
                    })
                })
                .collect()
        })
        .collect();

    let weights = data.weights();
    let y = data.y();
    let total_weight: f64 = weights.iter().sum();
    let mean = y.iter().zip(weights).map(|(y, w)| y * w).sum::<f64>() / total_weight;
    let tss: f64 = y.iter().zip(weights).map(|(y, w)| w * (y - mean).powi(2)).sum();
    let r_squared = (tss > 0.0).then(|| 1.0 - report.rss / tss);
    let aicc = aicc(report.rss, n, p);

    let mut warnings = Vec::new();
    if report.termination == Termination::NoFiniteOptimum {
        for &j in &runaway {
            parameters[j].flag = Some(flags::NOT_DETERMINED.to_string());
        }
        let names: Vec<String> = runaway
            .iter()
            .map(|&j| format!("{} (ran off to {:.3e})", model.parameters()[j].name, report.parameters[j]))
            .collect();
        warnings.push(format!(
            "Not determined by these data: {}. The sum of squares keeps falling as {} grow{} without bound (beyond {}× the largest measured value of the same kind), so no finite value is a best fit; the numbers shown are where the search stopped, not estimates. Extend the design (for a hyperbola: concentrations well above Km).",
            names.join(", "),
            if runaway.len() == 1 { "it" } else { "they" },
            if runaway.len() == 1 { "s" } else { "" },
            RUNAWAY_MULTIPLE
        ));
    } else if !report.converged {
        warnings.push(format!("The fit {}; the numbers shown are not a least-squares solution.", report.termination.describe()));
    }
    if report.converged {
        let crossing: Vec<usize> = (0..p)
            .filter(|&j| model.positive(j) && parameters[j].value > 0.0 && parameters[j].ci_low.is_some_and(|low| low <= 0.0))
            .collect();
        for &j in &crossing {
            parameters[j].flag = Some(flags::ASYMPTOTIC_CROSSES_ZERO.to_string());
        }
        if !crossing.is_empty() {
            let names: Vec<&str> = crossing.iter().map(|&j| model.parameters()[j].name).collect();
            warnings.push(format!(
                "The asymptotic interval of {} reaches zero or below, impossible for a positive constant: the straight-line approximation behind it fails here. Use the profile interval, which follows the curvature and says when the data do not bound a constant.",
                names.join(", ")
            ));
        }
    }
    if covariance.is_none() && report.converged {
        warnings.push(
            "The data cannot determine every parameter (the Jacobian is rank deficient); standard errors are not available."
                .to_string(),
        );
    }

    let summary = FitSummary {
        model: model.name().to_string(),
        equation: model.equation().to_string(),
        n,
        dof,
        rss: report.rss,
        sigma,
        r_squared,
        aicc,
        converged: report.converged,
        iterations: report.iterations,
        termination: report.termination.clone(),
        termination_text: Cow::Borrowed(report.termination.describe()),
        confidence_level: level,
        weighting: Cow::Borrowed(if data.weights().iter().all(|w| *w == 1.0) { "uniform" } else { "weighted" }),
        reweighting_rounds: None,
        parameters,
        correlation,
        warnings,
    };
    Fit { summary, covariance, report, t_quantile, reweighting: None }
}

/// Builds an estimate with a symmetric t-based interval.
pub fn estimate(name: &str, value: f64, std_error: Option<f64>, t_quantile: Option<f64>) -> ParameterEstimate {
    let half = match (std_error, t_quantile) {
        (Some(se), Some(t)) => Some(se * t),
        _ => None,
    };
    ParameterEstimate {
        name: name.to_string(),
        value,
        std_error,
        ci_low: half.map(|h| value - h),
        ci_high: half.map(|h| value + h),
        unit: None,
        derived: false,
        ci_method: Cow::Borrowed("asymptotic"),
        flag: None,
        bias: None,
        value_bias_corrected: None,
    }
}

/// `(JᵀJ)⁻¹` by a singular value decomposition of `J` with unit-length
/// columns, which keeps parameters of very different magnitude (common in
/// kinetics: Vmax in thousands, Km in micro-units) from spoiling the
/// inverse. `None` when the scaled Jacobian is rank deficient.
pub fn unscaled_covariance(jacobian: &DMatrix<f64>) -> Option<DMatrix<f64>> {
    let p = jacobian.ncols();
    if p == 0 || jacobian.nrows() < p || jacobian.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let mut scale_space = crate::fastpath::Scratch::<{ crate::fastpath::MAX_PARAMETERS }>::new();
    let scales = scale_space.zeros(p);
    for (scale, column) in scales.iter_mut().zip(jacobian.column_iter()) {
        *scale = column.norm();
    }
    if scales.iter().any(|s| *s == 0.0) {
        return None;
    }
    // Up to four parameters, the scaled Jacobian's rows are first brought
    // into a p×p triangle R by orthogonal transformations (Householder
    // blocks, `fastpath::triangle_of_rows`; RᵀR = JᵀJ, so the same
    // singular values and right singular vectors) and the decomposition is
    // the fixed-size one of R: nothing of size n is copied or allocated.
    // The numbers agree with the decomposition of J itself to rounding.
    macro_rules! small {
        ($p:literal) => {{
            let triangle = crate::fastpath::triangle_of_rows::<$p>(jacobian.nrows(), |i, row| {
                for j in 0..$p {
                    row[j] = jacobian[(i, j)] / scales[j];
                }
            });
            let svd = triangle.svd(false, true);
            inverse_from(&svd.singular_values.as_slice(), &svd.v_t?, scales)
        }};
    }
    match p {
        1 => return small!(1),
        2 => return two_parameters(jacobian, scales),
        3 => return small!(3),
        4 => return small!(4),
        _ => {}
    }
    let mut scaled = jacobian.clone();
    for (j, s) in scales.iter().enumerate() {
        scaled.column_mut(j).scale_mut(1.0 / s);
    }
    let svd = scaled.svd(false, true);
    inverse_from(svd.singular_values.as_slice(), &svd.v_t?, scales)
}

/// [`unscaled_covariance`] for two parameters (Michaelis-Menten and every
/// other two-constant law, so most fits): the scaled Jacobian's 2×2
/// triangle `R = [[f, g], [0, h]]` as for three or four, then its singular
/// values and `R⁻¹R⁻ᵀ` in closed form instead of an iterative
/// decomposition (which cost about a tenth of a whole Michaelis-Menten fit).
/// `σ_max² = (t + d)/2` with `t = f² + g² + h²` and
/// `d = √(((|f| − |h|)² + g²)((|f| + |h|)² + g²))`, a sum of non-negative
/// terms, and `σ_min = |f·h|/σ_max` (the determinant over the larger value),
/// so both keep full relative precision (no difference of nearly equal
/// numbers; the two expressions follow from the trace and determinant of
/// RᵀR, standard linear algebra). The same rank test as
/// [`inverse_from`]: `None` when `σ_min ≤ RANK_TOLERANCE·σ_max`.
fn two_parameters(jacobian: &DMatrix<f64>, scales: &[f64]) -> Option<DMatrix<f64>> {
    let r = crate::fastpath::triangle_of_rows::<2>(jacobian.nrows(), |i, row| {
        row[0] = jacobian[(i, 0)] / scales[0];
        row[1] = jacobian[(i, 1)] / scales[1];
    });
    let (f, g, h) = (r[(0, 0)], r[(0, 1)], r[(1, 1)]);
    let t = f * f + g * g + h * h;
    let d = (((f.abs() - h.abs()).powi(2) + g * g) * ((f.abs() + h.abs()).powi(2) + g * g)).sqrt();
    let largest = ((t + d) / 2.0).sqrt();
    let smallest = (f * h).abs() / largest;
    if !(smallest > RANK_TOLERANCE * largest) {
        return None;
    }
    // R⁻¹ = [[1/f, −g/(f·h)], [0, 1/h]]; (RᵀR)⁻¹ = R⁻¹R⁻ᵀ.
    let (a, b, c) = (1.0 / f, -g / (f * h), 1.0 / h);
    let scaled = [[a * a + b * b, b * c], [b * c, c * c]];
    Some(DMatrix::from_fn(2, 2, |i, j| scaled[i][j] / (scales[i] * scales[j])))
}

/// `(JᵀJ)⁻¹` from the singular values and right singular vectors (`v_t`,
/// rows) of `J` with columns divided by `scales`; `None` when a singular
/// value is below [`RANK_TOLERANCE`] times the largest.
fn inverse_from<S: nalgebra::Storage<f64, C, C>, C: nalgebra::Dim>(
    singular_values: &[f64],
    v_t: &nalgebra::Matrix<f64, C, C, S>,
    scales: &[f64],
) -> Option<DMatrix<f64>> {
    let p = scales.len();
    let largest = singular_values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if singular_values.iter().any(|s| *s <= RANK_TOLERANCE * largest) {
        return None;
    }
    let mut inverse = DMatrix::zeros(p, p);
    for a in 0..p {
        for b in 0..p {
            let mut sum = 0.0;
            for (k, s) in singular_values.iter().enumerate() {
                sum += v_t[(k, a)] * v_t[(k, b)] / (s * s);
            }
            inverse[(a, b)] = sum / (scales[a] * scales[b]);
        }
    }
    Some(inverse)
}

/// The `probability` quantile of Student's t with `dof` degrees of freedom.
///
/// statrs inverts the regularised incomplete beta function for it, which
/// cost about as much as a whole small fit; every fit asks for it, almost
/// always with the same probability and one of a few degrees of freedom.
/// So the last [`QUANTILE_MEMO`] answers are kept per thread, keyed by the
/// exact bits of both arguments: a remembered answer is the very number
/// statrs gave for those arguments, so results are bit for bit those
/// without the memo (and the memo holds no state a caller can see).
pub fn student_t_quantile(probability: f64, dof: f64) -> Option<f64> {
    if dof <= 0.0 {
        return None;
    }
    let key = (probability.to_bits(), dof.to_bits());
    if let Some(known) = QUANTILES.with(|memo| memo.borrow().iter().find(|(k, _)| *k == key).map(|(_, q)| *q)) {
        return known;
    }
    let q = student_t_quantile_uncached(probability, dof);
    QUANTILES.with(|memo| {
        let mut memo = memo.borrow_mut();
        if memo.len() == QUANTILE_MEMO {
            memo.remove(0);
        }
        memo.push((key, q));
    });
    q
}

/// How many t quantiles [`student_t_quantile`] remembers per thread (the
/// oldest is forgotten first). A linear search over so few is cheaper than
/// hashing.
const QUANTILE_MEMO: usize = 16;

thread_local! {
    /// `((probability bits, dof bits), quantile)`, oldest first.
    static QUANTILES: std::cell::RefCell<Vec<((u64, u64), Option<f64>)>> =
        const { std::cell::RefCell::new(Vec::new()) };
}

/// [`student_t_quantile`] computed afresh by statrs, without the memo.
fn student_t_quantile_uncached(probability: f64, dof: f64) -> Option<f64> {
    let t = StudentsT::new(0.0, 1.0, dof).ok()?;
    let q = t.inverse_cdf(probability);
    q.is_finite().then_some(q)
}

/// AICc = n·ln(RSS/n) + 2K + 2K(K+1)/(n − K − 1) with K = p + 1 (the
/// parameters plus the residual variance), the least-squares form of
/// Akaike's criterion with the small-sample correction (Burnham & Anderson
/// 2002, sec. 2.4). Only differences between models fitted to the same data
/// mean anything.
pub fn aicc(rss: f64, n: usize, p: usize) -> Option<f64> {
    let k = (p + 1) as f64;
    let n_f = n as f64;
    if n_f - k - 1.0 <= 0.0 || rss <= 0.0 || !rss.is_finite() {
        return None;
    }
    Some(n_f * (rss / n_f).ln() + 2.0 * k + 2.0 * k * (k + 1.0) / (n_f - k - 1.0))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Student's t quantiles from a handbook table (two-sided 95%, values
    /// as tabulated in Abramowitz & Stegun, Table 26.10, to the digits
    /// printed there, from memory; they match SciPy's `t.ppf(0.975, df)`).
    #[test]
    fn t_quantiles() {
        let cases = [(1.0, 12.706), (2.0, 4.303), (5.0, 2.571), (10.0, 2.228), (30.0, 2.042), (120.0, 1.980)];
        for (dof, expected) in cases {
            let q = student_t_quantile(0.975, dof).unwrap();
            assert!((q - expected).abs() < 6e-4, "dof {dof}: {q}");
        }
        // To more digits: scipy.stats.t.ppf(0.975, 10) = 2.2281388519649385
        // (SciPy 1.17). statrs agrees to about 1e-11 relative, far inside
        // the 1e-6 the interval cross-checks ask for.
        let q = student_t_quantile(0.975, 10.0).unwrap();
        assert!((q - 2.2281388519649385).abs() < 1e-10 * 2.23, "{q}");
        assert_eq!(student_t_quantile(0.975, 0.0), None);
    }

    /// The memo gives the very bits statrs gives, asked in any order and
    /// more often than it has room for (so entries are forgotten and
    /// computed again).
    #[test]
    fn remembered_quantiles_are_the_computed_ones() {
        for round in 0..3 {
            for dof in (1..=40).chain([57, 120, 1000]) {
                for probability in [0.975, 0.95, 0.995, 0.841344746, 0.5 + 0.9 / 2.0] {
                    let dof = dof as f64;
                    let first = student_t_quantile(probability, dof);
                    let remembered = student_t_quantile(probability, dof);
                    let fresh = student_t_quantile_uncached(probability, dof);
                    assert_eq!(first.map(f64::to_bits), fresh.map(f64::to_bits), "round {round}, {probability}, {dof}");
                    assert_eq!(remembered.map(f64::to_bits), fresh.map(f64::to_bits), "round {round}, {probability}, {dof}");
                }
            }
        }
    }

    #[test]
    fn covariance_of_a_straight_line_is_the_textbook_one() {
        // For y = a + b·x, (XᵀX)⁻¹ has the closed form below.
        let x = [1.0, 2.0, 4.0, 7.0];
        let mut j = DMatrix::zeros(4, 2);
        for (i, xi) in x.iter().enumerate() {
            j[(i, 0)] = 1.0;
            j[(i, 1)] = *xi;
        }
        let c = unscaled_covariance(&j).unwrap();
        let n = 4.0;
        let sx: f64 = x.iter().sum();
        let sxx: f64 = x.iter().map(|v| v * v).sum();
        let det = n * sxx - sx * sx;
        assert!((c[(0, 0)] - sxx / det).abs() < 1e-14);
        assert!((c[(1, 1)] - n / det).abs() < 1e-14);
        assert!((c[(0, 1)] + sx / det).abs() < 1e-14);
    }

    /// `(JᵀJ)⁻¹` by the decomposition of the whole column-scaled `J` (the
    /// route for more than four parameters), with the ratio of its smallest
    /// to its largest singular value.
    fn whole_decomposition(j: &DMatrix<f64>) -> (Option<DMatrix<f64>>, f64) {
        let scales: Vec<f64> = j.column_iter().map(|c| c.norm()).collect();
        let mut scaled = j.clone();
        for (k, s) in scales.iter().enumerate() {
            scaled.column_mut(k).scale_mut(1.0 / s);
        }
        let svd = scaled.svd(false, true);
        let ratio = svd.singular_values.min() / svd.singular_values.max();
        (inverse_from(svd.singular_values.as_slice(), &svd.v_t.unwrap(), &scales), ratio)
    }

    /// The fixed-size route (p ≤ 4) against the decomposition of the
    /// whole Jacobian, on Jacobians with columns of very different size.
    #[test]
    fn small_covariance_matches_the_whole_decomposition() {
        for p in 1..=4usize {
            let n = 9;
            let j = DMatrix::from_fn(n, p, |i, k| ((i + 1) as f64 * (k + 1) as f64 * 0.37 + k as f64).sin() * 10f64.powi(k as i32 * 2 - 3));
            let fast = unscaled_covariance(&j).unwrap();
            let whole = whole_decomposition(&j).0.unwrap();
            for a in 0..p {
                for b in 0..p {
                    let scale = (whole[(a, a)] * whole[(b, b)]).sqrt();
                    assert!((fast[(a, b)] - whole[(a, b)]).abs() <= 1e-12 * scale, "p {p} ({a},{b}): {} vs {}", fast[(a, b)], whole[(a, b)]);
                }
            }
        }
    }

    /// Two parameters (closed form): the same verdict on rank deficiency
    /// as the decomposition of the whole Jacobian, for nearly parallel
    /// columns whose condition passes the threshold (ratios of singular
    /// values from about 1e-9 to 1e-16), except within 1% of the threshold
    /// itself, where rounding may tip either way. Where both give a
    /// covariance they agree to 50·ε·κ relative, κ the condition number of
    /// the scaled Jacobian (the ratio's inverse): both are backward-stable
    /// routes, and κ·ε is what double precision leaves of an inverse
    /// (standard numerical analysis, no source). The well-conditioned case
    /// is held to 1e-12 by `small_covariance_matches_the_whole_decomposition`.
    #[test]
    fn two_parameters_judge_rank_as_the_decomposition_does() {
        let (mut accepted, mut refused) = (0, 0);
        for k in 0..=140 {
            let angle = 10f64.powf(-9.0 - k as f64 * 0.05);
            let j = DMatrix::from_row_slice(4, 2, &[1.0, 1.0, 0.5, 0.5 + angle, -0.25, -0.25 + 2.0 * angle, 2.0, 2.0 - angle]);
            let (whole, ratio) = whole_decomposition(&j);
            if (ratio / RANK_TOLERANCE - 1.0).abs() < 0.01 {
                continue;
            }
            let closed = unscaled_covariance(&j);
            assert_eq!(closed.is_some(), whole.is_some(), "angle {angle:e}, ratio {ratio:e}");
            if closed.is_some() {
                accepted += 1;
            } else {
                refused += 1;
            }
            if let (Some(closed), Some(whole)) = (closed, whole) {
                for a in 0..2 {
                    for b in 0..2 {
                        let scale = (whole[(a, a)] * whole[(b, b)]).sqrt();
                        let bar = 50.0 * f64::EPSILON / ratio;
                        assert!((closed[(a, b)] - whole[(a, b)]).abs() <= bar * scale, "angle {angle:e} ({a},{b}): {} vs {}", closed[(a, b)], whole[(a, b)]);
                    }
                }
            }
        }
        assert!(accepted > 40 && refused > 40, "{accepted} accepted, {refused} refused");
    }

    #[test]
    fn rank_deficient_jacobian_has_no_covariance() {
        let j = DMatrix::from_row_slice(3, 2, &[1.0, 2.0, 2.0, 4.0, 3.0, 6.0]);
        assert!(unscaled_covariance(&j).is_none());
    }
}
