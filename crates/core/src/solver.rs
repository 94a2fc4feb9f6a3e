//! Weighted nonlinear least squares.
//!
//! The minimisation is done by the `levenberg-marquardt` crate, a port of
//! MINPACK's `lmder` (Moré 1978: trust region, pivoted QR, scaled
//! variables). This module adapts a [`Model`] to it, with observation
//! weights applied as `sqrt(w)` on residual and Jacobian rows, and turns its
//! outcome into a [`SolverReport`] that records why it stopped. It never
//! panics and never returns an error for a failed minimisation: failure to
//! converge is data in the report.

use crate::model::{Model, Observations};
use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt, TerminationReason};
use nalgebra::{DMatrix, DVector, Dyn, Owned};
use serde::Serialize;
use std::cell::Cell;

/// Settings of the minimiser.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SolverSettings {
    /// Relative reduction in the sum of squares below which the fit counts
    /// as converged (MINPACK `ftol`). Default 1e-14; must be ≥ 0.
    pub ftol: f64,
    /// Relative change in the parameters below which the fit counts as
    /// converged (MINPACK `xtol`). Default 1e-14; must be ≥ 0.
    pub xtol: f64,
    /// Largest cosine between the residual vector and a Jacobian column at
    /// which the fit counts as converged (MINPACK `gtol`). Default 1e-14;
    /// must be ≥ 0.
    pub gtol: f64,
    /// Evaluations allowed, as a multiple of (parameters + 1), MINPACK's
    /// convention. Default 400; must be > 0.
    pub patience: usize,
}

impl Default for SolverSettings {
    fn default() -> Self {
        SolverSettings { ftol: 1e-14, xtol: 1e-14, gtol: 1e-14, patience: 400 }
    }
}

/// Why the minimiser stopped.
#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Termination {
    /// The sum of squares or the parameters stopped changing within the
    /// tolerances.
    Converged,
    /// The residuals are orthogonal to the Jacobian columns (a stationary
    /// point).
    Stationary,
    /// The model fits the data exactly.
    ExactFit,
    /// No further improvement is possible in double precision; the result
    /// is at a stationary point when [`SolverReport::gradient_cosine`] is
    /// small.
    PrecisionLimit,
    /// The evaluation budget ran out before convergence.
    TooManyEvaluations,
    /// The model produced a non-finite value at some trial parameters.
    NonFinite,
    /// The problem was not usable (no parameters or no observations).
    Unusable,
    /// The minimiser stopped, but with a parameter run off far beyond the
    /// data's own scale: the sum of squares keeps falling towards a limit
    /// that no finite value reaches, so the data do not determine it (set by
    /// [`crate::fit::fit_model`], never by the minimiser itself).
    NoFiniteOptimum,
}

impl Termination {
    /// A sentence for people.
    pub fn describe(&self) -> &'static str {
        match self {
            Termination::Converged => "converged: the sum of squares and the parameters stopped changing",
            Termination::Stationary => "converged: the gradient of the sum of squares is zero",
            Termination::ExactFit => "converged: the curve passes exactly through every point",
            Termination::PrecisionLimit => "stopped at the limit of double precision",
            Termination::TooManyEvaluations => "did not converge: the evaluation budget ran out",
            Termination::NonFinite => "did not converge: the model gave a non-finite value",
            Termination::Unusable => "not fitted: there were no parameters or no observations",
            Termination::NoFiniteOptimum => {
                "did not converge to a finite optimum: a parameter ran off without bound, so these data do not determine it"
            }
        }
    }
}

/// The outcome of one minimisation.
#[derive(Clone, Debug)]
pub struct SolverReport {
    /// Fitted parameters (the last accepted point when not converged).
    pub parameters: Vec<f64>,
    /// Why the minimiser stopped.
    pub termination: Termination,
    /// Whether the result is a converged least-squares solution.
    pub converged: bool,
    /// Outer iterations (one Jacobian evaluation each).
    pub iterations: usize,
    /// Evaluations of the residuals.
    pub evaluations: usize,
    /// Weighted residual sum of squares, Σ w·(y − f)².
    pub rss: f64,
    /// Weighted Jacobian of the model at the solution, `sqrt(w_i)·∂f_i/∂p_j`.
    pub jacobian: DMatrix<f64>,
    /// Largest cosine between the weighted residual vector and a Jacobian
    /// column at the solution: zero at an exact stationary point.
    pub gradient_cosine: f64,
}

/// Fits `model` to `data` from the starting values `start`.
///
/// Models with at most [`crate::fastpath::MAX_PARAMETERS`] parameters are
/// minimised by the fixed-size, allocation-free path of
/// [`crate::fastpath`] (the same iteration on a compressed problem); when
/// it does not converge, or for larger models, by [`minimise_general`].
/// The choice depends only on the number of parameters and observations
/// and on the fast path's outcome, so it is deterministic.
pub fn minimise(model: &dyn Model, data: &Observations, start: &[f64], settings: &SolverSettings) -> SolverReport {
    match crate::fastpath::minimise_small(model, data, start, settings) {
        Some(report) if report.converged => report,
        _ => minimise_general(model, data, start, settings),
    }
}

/// [`minimise`] for a caller that needs only the solution, its weighted
/// sum of squares and whether it converged (the refits of a profile):
/// `(parameters, rss, converged)`, the same numbers as the report's. The
/// weighted Jacobian at the solution is formed only where the verdict
/// needs it (a stop at the precision limit, judged by the gradient
/// cosine) or when the general path runs. A fast-path run that reaches the
/// evaluation limit is reported as not converged without running the
/// general path as well (see the comment there).
pub(crate) fn minimise_solution(model: &dyn Model, data: &Observations, start: &[f64], settings: &SolverSettings) -> (Vec<f64>, f64, bool) {
    let general = |o: Option<crate::fastpath::Outcome>| {
        let report = match o {
            Some(o) => report_at(model, data, o.parameters, o.termination, o.jacobian_calls, o.evaluations),
            None => minimise_general(model, data, start, settings),
        };
        (report.parameters, report.rss, report.converged)
    };
    match crate::fastpath::iterate_small(model, data, start, settings) {
        Some(o) if o.termination == Termination::PrecisionLimit => {
            let (parameters, rss, converged) = general(Some(o));
            if converged {
                (parameters, rss, converged)
            } else {
                general(None)
            }
        }
        Some(o) => {
            let problem = Problem {
                model,
                data,
                sqrt_weights: data.weights().iter().map(|w| w.sqrt()).collect(),
                p: DVector::from_column_slice(&o.parameters),
                jacobian_calls: Cell::new(o.jacobian_calls),
            };
            // The sum of squares exactly as `finish` forms it.
            let rss = problem.weighted_residuals().norm_squared();
            let finite = rss.is_finite() && o.parameters.iter().all(|p| p.is_finite());
            let converged = finite && matches!(o.termination, Termination::Converged | Termination::Stationary | Termination::ExactFit);
            if converged {
                (o.parameters, rss, true)
            } else if o.termination == Termination::TooManyEvaluations {
                // The general path runs the same iteration and would spend
                // the same budget again: in a screen of 10,000 generated
                // dose-response curves, all 242 refits stopped here also
                // ran out on the general path. Not converged either way.
                (o.parameters, rss, false)
            } else {
                general(None)
            }
        }
        None => general(None),
    }
}

/// Fits `model` to `data` from `start` with the general path: the
/// `levenberg-marquardt` crate on the n weighted residuals and the n×p
/// Jacobian, for any number of parameters.
pub fn minimise_general(model: &dyn Model, data: &Observations, start: &[f64], settings: &SolverSettings) -> SolverReport {
    let problem = Problem {
        model,
        data,
        sqrt_weights: data.weights().iter().map(|w| w.sqrt()).collect(),
        p: DVector::from_column_slice(start),
        jacobian_calls: Cell::new(0),
    };
    if start.is_empty() || data.is_empty() || !start.iter().all(|v| v.is_finite()) {
        return finish(problem, Termination::Unusable, 0);
    }
    let (problem, report) = LevenbergMarquardt::new()
        .with_ftol(settings.ftol)
        .with_xtol(settings.xtol)
        .with_gtol(settings.gtol)
        .with_patience(settings.patience)
        .minimize(problem);
    let termination = termination_of(&report.termination);
    finish(problem, termination, report.number_of_evaluations)
}

/// Turnover's reading of MINPACK's stopping reasons, shared by every fit
/// that drives the `levenberg-marquardt` crate.
pub(crate) fn termination_of(reason: &TerminationReason) -> Termination {
    match reason {
        TerminationReason::Converged { .. } => Termination::Converged,
        TerminationReason::Orthogonal => Termination::Stationary,
        TerminationReason::ResidualsZero => Termination::ExactFit,
        TerminationReason::NoImprovementPossible(_) => Termination::PrecisionLimit,
        TerminationReason::LostPatience => Termination::TooManyEvaluations,
        TerminationReason::Numerical(_) | TerminationReason::User(_) => Termination::NonFinite,
        TerminationReason::NoParameters | TerminationReason::NoResiduals | TerminationReason::WrongDimensions(_) => {
            Termination::Unusable
        }
    }
}

/// A stationary point is accepted at the precision limit when every
/// Jacobian column is orthogonal to the residuals to within this cosine.
/// MINPACK stops there because its own tolerances cannot be met in double
/// precision; the point is still a minimum for practical purposes.
const PRECISION_LIMIT_COSINE: f64 = 1e-6;

/// The residual reported for every observation at a trial point where the
/// model is not finite (see `Problem::residuals`).
const REJECTED_RESIDUAL: f64 = 1e100;

/// The report at `parameters` (for a minimisation run elsewhere, such as
/// the fixed-size path): residuals, weighted Jacobian, sum of squares and
/// gradient cosine computed here, as for the general path. Nothing but the
/// report's own residual vector and Jacobian is allocated (a gradient of
/// up to eight parameters lives on the stack): every allocation cost about
/// 1% of a Michaelis-Menten fit.
pub(crate) fn report_at(
    model: &dyn Model,
    data: &Observations,
    parameters: Vec<f64>,
    termination: Termination,
    jacobian_calls: usize,
    evaluations: usize,
) -> SolverReport {
    let n = data.len();
    let p = parameters.len();
    let mut residuals = DVector::zeros(n);
    let mut jacobian = DMatrix::zeros(n, p);
    let mut scratch = crate::fastpath::Scratch::<8>::new();
    let gradient = scratch.zeros(p);
    for i in 0..n {
        // `sqrt(w)·(y − f)` and `sqrt(w)·∇f`, as `Problem` forms them.
        let root_weight = data.weights()[i].sqrt();
        // One call for both (the same bits as `value` and `gradient`, by
        // the trait's contract).
        residuals[i] = root_weight * (data.y()[i] - model.value_and_gradient(data.x(i), &parameters, gradient));
        for j in 0..p {
            jacobian[(i, j)] = root_weight * gradient[j];
        }
    }
    let rss = residuals.norm_squared();
    let residual_norm = residuals.norm();
    let mut gradient_cosine: f64 = 0.0;
    for column in jacobian.column_iter() {
        let norm = column.norm();
        if norm > 0.0 && residual_norm > 0.0 {
            gradient_cosine = gradient_cosine.max((column.dot(&residuals) / (norm * residual_norm)).abs());
        }
    }
    let finite = rss.is_finite() && parameters.iter().all(|p| p.is_finite());
    let converged = finite
        && match termination {
            Termination::Converged | Termination::Stationary | Termination::ExactFit => true,
            Termination::PrecisionLimit => gradient_cosine < PRECISION_LIMIT_COSINE,
            _ => false,
        };
    SolverReport { parameters, termination, converged, iterations: jacobian_calls, evaluations, rss, jacobian, gradient_cosine }
}

fn finish(problem: Problem<'_>, termination: Termination, evaluations: usize) -> SolverReport {
    let parameters = problem.p.iter().copied().collect();
    report_at(problem.model, problem.data, parameters, termination, problem.jacobian_calls.get(), evaluations)
}

struct Problem<'a> {
    model: &'a dyn Model,
    data: &'a Observations,
    sqrt_weights: Vec<f64>,
    p: DVector<f64>,
    jacobian_calls: Cell<usize>,
}

impl Problem<'_> {
    /// `sqrt(w)·(y − f)`: the sign makes the residual Jacobian the negated
    /// model Jacobian.
    fn weighted_residuals(&self) -> DVector<f64> {
        let p = self.p.as_slice();
        DVector::from_iterator(
            self.data.len(),
            (0..self.data.len())
                .map(|i| self.sqrt_weights[i] * (self.data.y()[i] - self.model.value(self.data.x(i), p))),
        )
    }

    fn weighted_model_jacobian(&self) -> DMatrix<f64> {
        let p = self.p.as_slice();
        let n_params = p.len();
        let mut jacobian = DMatrix::zeros(self.data.len(), n_params);
        let mut gradient = vec![0.0; n_params];
        for i in 0..self.data.len() {
            self.model.gradient(self.data.x(i), p, &mut gradient);
            for j in 0..n_params {
                jacobian[(i, j)] = self.sqrt_weights[i] * gradient[j];
            }
        }
        jacobian
    }
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for Problem<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, x: &DVector<f64>) {
        self.p.copy_from(x);
    }

    fn params(&self) -> DVector<f64> {
        self.p.clone()
    }

    /// A trial point where the model is not finite (an exponential that
    /// overflows after a long first step, say) is not a reason to stop: it is
    /// reported as a very large residual, so the minimiser rejects the step
    /// and shrinks its trust region, exactly as for any step that makes the
    /// fit worse. The size keeps the sum of squares finite for any n below
    /// about 1e8.
    fn residuals(&self) -> Option<DVector<f64>> {
        let mut r = self.weighted_residuals();
        if r.iter().any(|v| !v.is_finite()) {
            r.fill(REJECTED_RESIDUAL);
        }
        Some(r)
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        self.jacobian_calls.set(self.jacobian_calls.get() + 1);
        let j = -self.weighted_model_jacobian();
        j.iter().all(|v| v.is_finite()).then_some(j)
    }
}
