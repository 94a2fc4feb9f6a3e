//! Time-dependent inhibition by one global fit of every progress curve.
//!
//! The two-step route of [`crate::inactivation`] fits each trace for its
//! own kobs and then kobs against [I]. Here every trace is fitted at once,
//! with kobs of each trace replaced by the saturation law:
//!
//! ```text
//! P_k(t) = offset_k + vs_k·t + (v0_k − vs_k)·(1 − e^(−kobs_k·t))/kobs_k
//! kobs_k = kinact·[I]_k/(KI_app + [I]_k),   KI_app = KI·(1 + [S]/Km)
//! ```
//!
//! **Shared and own constants.** kinact and KI are shared by all traces;
//! each trace keeps its own v0, offset and vs, as in the per-trace model,
//! so the global fit differs from the two-step one only by tying the kobs
//! values to the law (a steady rate vs ≠ 0 also takes up a slow background
//! drift; for a strictly irreversible inactivator it comes out near 0).
//! Traces at [I] = 0 enter with kobs = 0, where the curve is the straight
//! line offset + v0·t and vs has no meaning, so they carry v0 and offset
//! only. They add nothing to kinact and KI directly, but their readings
//! join the residual standard deviation that every standard error rests
//! on. One noise level is assumed for all traces (unweighted least
//! squares).
//!
//! **Saturation.** The law is fitted in two forms: the hyperbola
//! (kinact, KI) and its limit for KI_app ≫ [I], `kobs = (kinact/KI)·[I]/(1
//! + [S]/Km)`, a single shared constant. Saturation counts as seen when the
//! hyperbola converges to a finite KI with a standard error and beats the
//! proportional form by the extra-sum-of-squares F test at p < 0.05 (as in
//! the two-step route; common practice, no source). Then kinact, KI and
//! kinact/KI (delta method on the global covariance) are reported;
//! otherwise only kinact/KI from the proportional form, with the reason in
//! the warnings.
//!
//! **Solver and statistics.** For fixed shared constants each trace's
//! curve is linear in its own v0, vs and offset, so those are solved
//! exactly (a 3×3 or 2×2 least-squares problem per trace) and the core's
//! solver ([`minimise`], the fixed-size path for one or two parameters)
//! searches only the shared constants: variable projection (Golub &
//! Pereyra 1973) with Kaufman's (1975) Jacobian, whose gradient of the sum
//! of squares is exact, so the optimum is that of the whole stacked
//! problem. The stacked problem fitted directly, as the shared-slope batch
//! fit does (`fit_model` on the dense Jacobian), gives the same numbers
//! (a unit test checks it) but took 23 s for 100 traces of 61 readings
//! (301 parameters); this way the work grows with the number of readings
//! only. Starting values come from the two-step estimates. The covariance
//! of the shared constants is the shared block of the whole problem's
//! s²(JᵀJ)⁻¹, computed as the inverse of the Schur complement
//! Σₖ Jₖᵀ(I − Pₖ)Jₖ (Jₖ the trace's derivatives in the shared constants,
//! Pₖ the projection on its own constants' columns), with
//! s² = RSS/(N − P) over all N readings and P parameters (shared plus every
//! trace's own). The intervals are the asymptotic ones,
//! value ± t(0.975, N − P)·SE; profile intervals are not offered here (the
//! profile t would need its own refits of this reduced problem). Their
//! coverage is measured in `tests/inactivation.rs`.

use crate::compare::SIGNIFICANCE;
use crate::error::Error;
use crate::fit::{aicc, estimate, student_t_quantile, ParameterEstimate, RUNAWAY_MULTIPLE};
use crate::inactivation::relaxation;
use crate::model::{Dimension, Model, Observations, ParameterSpec};
use crate::plots::{PlotData, PlotKind, PlotPoint, Series};
use crate::solver::{minimise, SolverSettings};
use nalgebra::{DMatrix, Matrix2, Matrix3, Vector2, Vector3};
use std::cell::RefCell;
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, FisherSnedecor};

/// The most traces one global fit takes (a bound on the work; 100 traces
/// of 61 readings take well under a second).
pub const MAX_GLOBAL_TRACES: usize = 1000;

/// One trace's readings as the global fit takes them.
#[derive(Clone, Debug)]
pub(crate) struct TraceReadings {
    /// The trace's name.
    pub name: String,
    /// [I] (zero for a trace without inhibitor).
    pub i: f64,
    /// Reading times.
    pub t: Vec<f64>,
    /// Readings.
    pub y: Vec<f64>,
    /// Column of the time-course table, for the plot's points.
    pub column: usize,
}

/// What the two-step route found, to start from and to compare with.
pub(crate) struct TwoStep<'a> {
    /// kinact and KI_app of the hyperbola, when saturation was seen.
    pub hyperbola: Option<(f64, f64)>,
    /// The slope of kobs against [I] through the origin (kinact/KI_app).
    pub slope: f64,
    /// The reported constants.
    pub parameters: &'a [ParameterEstimate],
}

/// One trace's own constants in the global fit.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct GlobalTrace {
    /// The trace's name.
    pub trace: String,
    /// [I] of the trace.
    pub i: f64,
    /// kobs the shared constants give at this [I] (0 at [I] = 0).
    pub kobs: f64,
    /// Initial rate (value unit per time unit).
    pub v0: f64,
    /// Steady-state rate; `None` for a trace at [I] = 0, which has none.
    pub vs: Option<f64>,
    /// Reading at t = 0.
    pub offset: f64,
    /// Readings of this trace in the fit.
    pub n: usize,
    /// This trace's part of the residual sum of squares.
    pub rss: f64,
}

/// One constant by both routes.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RouteComparison {
    /// `kinact`, `KI` or `kinact/KI`.
    pub name: String,
    /// The global fit's value and standard error.
    pub global: f64,
    /// Standard error of the global value.
    pub global_se: Option<f64>,
    /// The two-step value.
    pub two_step: f64,
    /// Standard error of the two-step value.
    pub two_step_se: Option<f64>,
    /// global / two-step.
    pub ratio: f64,
    /// SE of the global value / SE of the two-step value.
    pub se_ratio: Option<f64>,
}

/// The global fit and what it says about itself.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct GlobalInactivation {
    /// Whether the global fit saw kobs saturate with [I].
    pub saturation: bool,
    /// F test of the hyperbola against the proportional form over all
    /// readings: (F, 1, denominator df, p); `None` when the hyperbola could
    /// not be fitted.
    pub saturation_test: Option<(f64, usize, usize, f64)>,
    /// `kinact`, `KI`, `kinact/KI` (only `kinact/KI` without saturation),
    /// with units, asymptotic intervals and flags.
    pub parameters: Vec<ParameterEstimate>,
    /// Each trace's own constants, in table order.
    pub traces: Vec<GlobalTrace>,
    /// The shared constants against the two-step ones (those both report).
    pub comparison: Vec<RouteComparison>,
    /// Readings in the fit.
    pub n: usize,
    /// Parameters of the reported fit (shared plus every trace's own).
    pub fitted: usize,
    /// Residual degrees of freedom, n − fitted.
    pub dof: usize,
    /// Residual sum of squares.
    pub rss: f64,
    /// Residual standard deviation, sqrt(rss/dof).
    pub sigma: Option<f64>,
    /// AICc of the reported fit.
    pub aicc: Option<f64>,
    /// Whether the reported fit converged.
    pub converged: bool,
    /// Iterations of the minimiser.
    pub iterations: usize,
    /// Why the minimiser stopped, in words.
    pub termination_text: String,
    /// The method in words.
    pub method: String,
    /// Warnings for people.
    pub warnings: Vec<String>,
    /// The progress curves with the global fit.
    pub plot: PlotData,
}

/// The stacked model. Parameters: the shared ones first (kinact, KI_app
/// for the hyperbola; kinact/KI_app for the proportional form), then each
/// trace's (v0, vs, offset), or (v0, offset) at [I] = 0. x = [t, [I], k].
struct Stacked {
    hyperbola: bool,
    /// Index of trace k's first own parameter.
    first: Vec<usize>,
    /// Whether trace k has a vs.
    has_vs: Vec<bool>,
    specs: Vec<ParameterSpec>,
}

const V0: ParameterSpec = ParameterSpec { name: "v0", dimension: Dimension::Unspecified };
const VS: ParameterSpec = ParameterSpec { name: "vs", dimension: Dimension::Unspecified };
const OFFSET: ParameterSpec = ParameterSpec { name: "offset", dimension: Dimension::Response };

impl Stacked {
    fn new(hyperbola: bool, members: &[TraceReadings]) -> Self {
        let mut specs = if hyperbola {
            vec![
                ParameterSpec { name: "kinact", dimension: Dimension::Unspecified },
                ParameterSpec { name: "KI_app", dimension: Dimension::Predictor(1) },
            ]
        } else {
            vec![ParameterSpec { name: "kinact/KI_app", dimension: Dimension::Unspecified }]
        };
        let (mut first, mut has_vs) = (Vec::new(), Vec::new());
        for m in members {
            first.push(specs.len());
            has_vs.push(m.i > 0.0);
            specs.push(V0);
            if m.i > 0.0 {
                specs.push(VS);
            }
            specs.push(OFFSET);
        }
        Stacked { hyperbola, first, has_vs, specs }
    }

    fn shared(&self) -> usize {
        if self.hyperbola {
            2
        } else {
            1
        }
    }

    /// kobs at [I] = `i` and its derivatives in the shared parameters.
    fn kobs(&self, i: f64, p: &[f64]) -> (f64, [f64; 2]) {
        if self.hyperbola {
            let d = p[1] + i;
            (p[0] * i / d, [i / d, -p[0] * i / (d * d)])
        } else {
            (p[0] * i, [i, 0.0])
        }
    }

    /// (v0, vs, offset) of trace `k`; vs = v0 where the trace has none (the
    /// curve is then offset + v0·t whatever kobs is).
    fn own(&self, k: usize, p: &[f64]) -> (f64, f64, f64) {
        let f = self.first[k];
        if self.has_vs[k] {
            (p[f], p[f + 1], p[f + 2])
        } else {
            (p[f], p[f], p[f + 1])
        }
    }
}

impl Model for Stacked {
    fn name(&self) -> &str {
        "inactivation-global"
    }
    fn equation(&self) -> &str {
        if self.hyperbola {
            "P = offset + vs·t + (v0 − vs)·(1 − exp(−kobs·t))/kobs, kobs = kinact·[I]/(KI_app + [I])"
        } else {
            "P = offset + vs·t + (v0 − vs)·(1 − exp(−kobs·t))/kobs, kobs = (kinact/KI_app)·[I]"
        }
    }
    fn parameters(&self) -> &[ParameterSpec] {
        &self.specs
    }
    fn predictors(&self) -> usize {
        3
    }
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let (t, k) = (x[0], x[2] as usize);
        let (v0, vs, offset) = self.own(k, p);
        if !self.has_vs[k] {
            return offset + v0 * t;
        }
        let (kobs, _) = self.kobs(x[1], p);
        let (g, _) = relaxation(kobs, t);
        offset + vs * t + (v0 - vs) * g
    }
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let (t, k) = (x[0], x[2] as usize);
        gradient.iter_mut().for_each(|v| *v = 0.0);
        let f = self.first[k];
        if !self.has_vs[k] {
            gradient[f] = t;
            gradient[f + 1] = 1.0;
            return;
        }
        let (v0, vs, _) = self.own(k, p);
        let (kobs, dk) = self.kobs(x[1], p);
        let (g, dg) = relaxation(kobs, t);
        for j in 0..self.shared() {
            gradient[j] = (v0 - vs) * dg * dk[j];
        }
        gradient[f] = g;
        gradient[f + 1] = t - g;
        gradient[f + 2] = 1.0;
    }
    fn initial_guess(&self, _: &Observations) -> Result<Vec<f64>, Error> {
        Err(Error::numerical("the global inactivation fit is started from the two-step estimates"))
    }
    fn positive(&self, index: usize) -> bool {
        index < self.shared()
    }
}

/// One trace projected at given shared constants: its own constants solved
/// exactly, its fitted values, and Kaufman's derivatives of the fitted
/// values in the shared constants, (I − P)·J.
struct Projected {
    shared: [f64; 2],
    own: Vec<f64>,
    fitted: Vec<f64>,
    slope: Vec<[f64; 2]>,
}

/// The reduced problem in the shared constants alone; x = [k, j] (trace k,
/// its reading j). Each trace's projection is computed once per trial
/// point and kept, since the solver asks for one reading at a time.
struct Separable<'a> {
    shape: &'a Stacked,
    members: &'a [TraceReadings],
    cache: RefCell<Vec<Option<Projected>>>,
}

impl Separable<'_> {
    fn project(&self, k: usize, p: &[f64]) -> Projected {
        let m = &self.members[k];
        let shared = [p[0], p.get(1).copied().unwrap_or(0.0)];
        let n = m.t.len();
        let nan = || Projected { shared, own: Vec::new(), fitted: vec![f64::NAN; n], slope: vec![[f64::NAN; 2]; n] };
        if m.i <= 0.0 {
            return match line_at(&m.t, &m.y) {
                Some((v0, offset)) => Projected {
                    shared,
                    own: vec![v0, offset],
                    fitted: m.t.iter().map(|t| offset + v0 * t).collect(),
                    slope: vec![[0.0; 2]; n],
                },
                None => nan(),
            };
        }
        let (kobs, dk) = self.shape.kobs(m.i, p);
        let rows: Vec<(Vector3<f64>, f64)> = m
            .t
            .iter()
            .map(|&t| {
                let (g, dg) = relaxation(kobs, t);
                (Vector3::new(g, t - g, 1.0), dg)
            })
            .collect();
        let mut a = Matrix3::zeros();
        let mut b = Vector3::zeros();
        for ((row, _), &y) in rows.iter().zip(&m.y) {
            a += row * row.transpose();
            b += row * y;
        }
        let Some(inverse) = a.try_inverse() else { return nan() };
        let own = inverse * b;
        // J: the derivatives of the curve in the shared constants at the
        // solved own constants; then B = (LᵀL)⁻¹LᵀJ and (I − P)J = J − L·B.
        let jac: Vec<[f64; 2]> =
            rows.iter().map(|(_, dg)| [(own[0] - own[1]) * dg * dk[0], (own[0] - own[1]) * dg * dk[1]]).collect();
        let mut ltj = [Vector3::zeros(); 2];
        for ((row, _), j) in rows.iter().zip(&jac) {
            ltj[0] += row * j[0];
            ltj[1] += row * j[1];
        }
        let coef = [inverse * ltj[0], inverse * ltj[1]];
        let fitted = rows.iter().map(|(row, _)| row.dot(&own)).collect();
        let slope = rows.iter().zip(&jac).map(|((row, _), j)| [j[0] - row.dot(&coef[0]), j[1] - row.dot(&coef[1])]).collect();
        Projected { shared, own: vec![own[0], own[1], own[2]], fitted, slope }
    }

    /// Calls `f` with trace `k`'s projection at `p`, computing it when the
    /// one kept is for another point.
    fn with<R>(&self, k: usize, p: &[f64], f: impl FnOnce(&Projected) -> R) -> R {
        let shared = [p[0], p.get(1).copied().unwrap_or(0.0)];
        let mut cache = self.cache.borrow_mut();
        let fresh = cache[k].as_ref().is_none_or(|c| c.shared[0].to_bits() != shared[0].to_bits() || c.shared[1].to_bits() != shared[1].to_bits());
        if fresh {
            cache[k] = Some(self.project(k, p));
        }
        f(cache[k].as_ref().expect("just computed"))
    }
}

impl Model for Separable<'_> {
    fn name(&self) -> &str {
        self.shape.name()
    }
    fn equation(&self) -> &str {
        self.shape.equation()
    }
    fn parameters(&self) -> &[ParameterSpec] {
        &self.shape.specs[..self.shape.shared()]
    }
    fn predictors(&self) -> usize {
        2
    }
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        self.with(x[0] as usize, p, |c| c.fitted[x[1] as usize])
    }
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        self.with(x[0] as usize, p, |c| {
            let row = c.slope[x[1] as usize];
            gradient.copy_from_slice(&row[..gradient.len()]);
        })
    }
    fn initial_guess(&self, _: &Observations) -> Result<Vec<f64>, Error> {
        Err(Error::numerical("the global inactivation fit is started from the two-step estimates"))
    }
}

/// One form of the law fitted to every trace.
struct FormFit {
    /// Shared constants, then every trace's own, as [`Stacked`] orders them.
    values: Vec<f64>,
    /// Covariance of the shared constants.
    covariance: Option<DMatrix<f64>>,
    rss: f64,
    n: usize,
    fitted: usize,
    dof: usize,
    sigma: Option<f64>,
    t_quantile: Option<f64>,
    converged: bool,
    iterations: usize,
    termination_text: String,
}

impl FormFit {
    fn se(&self, j: usize) -> Option<f64> {
        self.covariance.as_ref().map(|c| c[(j, j)].sqrt()).filter(|v| v.is_finite())
    }
}

fn fit_form(shape: &Stacked, members: &[TraceReadings], start: &[f64]) -> Result<FormFit, Error> {
    let reduced = Separable { shape, members, cache: RefCell::new((0..members.len()).map(|_| None).collect()) };
    let (mut x, mut y) = (Vec::new(), Vec::new());
    for (k, m) in members.iter().enumerate() {
        for (j, &v) in m.y.iter().enumerate() {
            x.extend_from_slice(&[k as f64, j as f64]);
            y.push(v);
        }
    }
    let data = Observations::new(2, x, y, None)?;
    let fitted = shape.specs.len();
    let n = data.len();
    if n <= fitted {
        return Err(Error::invalid_data(format!("{n} readings cannot determine {fitted} constants of the global fit")));
    }
    let report = minimise(&reduced, &data, start, &SolverSettings::default());
    let mut values = report.parameters.clone();
    for k in 0..members.len() {
        values.extend(reduced.with(k, &report.parameters, |c| c.own.clone()));
    }
    if values.len() != fitted {
        return Err(Error::numerical("a trace's own constants could not be solved at the global fit's end"));
    }
    let dof = n - fitted;
    let variance = report.rss / dof as f64;
    let covariance = crate::fit::unscaled_covariance(&report.jacobian).map(|c| c * variance);
    Ok(FormFit {
        values,
        covariance,
        rss: report.rss,
        n,
        fitted,
        dof,
        sigma: variance.is_finite().then(|| variance.sqrt()),
        t_quantile: student_t_quantile(0.975, dof as f64),
        converged: report.converged,
        iterations: report.iterations,
        termination_text: report.termination.describe().to_string(),
    })
}

/// Least squares of (v0, offset) for a straight line.
fn line_at(t: &[f64], y: &[f64]) -> Option<(f64, f64)> {
    let mut a = Matrix2::zeros();
    let mut b = Vector2::zeros();
    for (&t, &y) in t.iter().zip(y) {
        let row = Vector2::new(t, 1.0);
        a += row * row.transpose();
        b += row * y;
    }
    let s = a.try_inverse()? * b;
    Some((s[0], s[1]))
}

/// The global fit; see the module documentation. `factor` is 1 + [S]/Km.
pub(crate) fn fit_global(
    members: &[TraceReadings],
    two_step: &TwoStep,
    factor: f64,
    time_unit: &str,
    conc_unit: &str,
    value_unit: &str,
) -> Result<GlobalInactivation, Error> {
    if members.len() > MAX_GLOBAL_TRACES {
        return Err(Error::invalid_data(format!(
            "{} traces are more than the {MAX_GLOBAL_TRACES} one global fit takes",
            members.len()
        )));
    }
    let inhibited: Vec<f64> = members.iter().filter(|m| m.i > 0.0).map(|m| m.i).collect();
    if inhibited.is_empty() {
        return Err(Error::invalid_data("the global fit needs traces with [I] > 0"));
    }
    let mut distinct = inhibited.clone();
    distinct.sort_by(f64::total_cmp);
    distinct.dedup();
    let top = distinct[distinct.len() - 1];

    // The proportional form, from the two-step line through the origin.
    let line_model = Stacked::new(false, members);
    let slope_start = two_step.slope;
    let slope_start = if slope_start > 0.0 && slope_start.is_finite() { slope_start } else { 1.0 / (top * 1e3) };
    let line = fit_form(&line_model, members, &[slope_start])?;

    // The hyperbola, from the two-step hyperbola or, without one, from
    // KI_app at twice the top [I] with the slope kept.
    let hyper_model = Stacked::new(true, members);
    let mut warnings = Vec::new();
    let mut saturation = false;
    let mut saturation_test = None;
    let mut reason = String::new();
    let mut hyperbola = None;
    if distinct.len() >= 3 {
        let shared = match two_step.hyperbola {
            Some(h) => [h.0, h.1],
            None => {
                let r = line.values[0].max(f64::MIN_POSITIVE);
                [r * 2.0 * top, 2.0 * top]
            }
        };
        let fit = fit_form(&hyper_model, members, &shared)?;
        let h = &fit.values;
        // A KI_app beyond RUNAWAY_MULTIPLE times the top [I] is a drift
        // towards infinity, as fit.rs judges a concentration.
        let ran_off = !(h[1].abs() <= RUNAWAY_MULTIPLE * top);
        if fit.converged && !ran_off && fit.dof > 0 {
            let dof = fit.dof;
            let f = (line.rss - fit.rss) / (fit.rss / dof as f64);
            let f = if f.is_finite() { f.max(0.0) } else { 0.0 };
            let p = FisherSnedecor::new(1.0, dof as f64).map(|d| d.sf(f)).unwrap_or(1.0);
            saturation_test = Some((f, 1, dof, p));
            saturation = p < SIGNIFICANCE && h[0] > 0.0 && h[1] > 0.0 && fit.se(1).is_some();
            if !saturation {
                reason = format!(
                    "F test of the hyperbola against the proportional form over all readings: F(1, {dof}) = {}, p = {}; KI_app would be {} against a highest [I] of {}",
                    short(f),
                    short(p),
                    short(h[1]),
                    short(top)
                );
            }
        } else {
            reason = format!(
                "the hyperbola's fit {} (KI_app went to {} against a highest [I] of {})",
                if ran_off { "found no finite optimum" } else { "did not converge" },
                short(h[1]),
                short(top)
            );
        }
        if saturation {
            hyperbola = Some(fit);
        }
    } else {
        reason = format!("only {} distinct [I] above zero; a hyperbola needs three or more", distinct.len());
    }

    let mut parameters = Vec::new();
    let (fit, model) = match hyperbola {
        Some(fit) => {
            let t = fit.t_quantile;
            let h = &fit.values;
            let cov = fit.covariance.as_ref().expect("saturation needs a covariance");
            let kinact = estimate("kinact", h[0], fit.se(0), t);
            let ki = estimate("KI", h[1] / factor, fit.se(1).map(|s| s / factor), t);
            // kinact/KI_app by the delta method: gradient (1/KI, −kinact/KI²).
            let r = h[0] / h[1];
            let g = [1.0 / h[1], -h[0] / (h[1] * h[1])];
            let var = g[0] * g[0] * cov[(0, 0)] + 2.0 * g[0] * g[1] * cov[(0, 1)] + g[1] * g[1] * cov[(1, 1)];
            let se = (var.is_finite() && var >= 0.0).then(|| var.sqrt());
            let mut ratio = estimate("kinact/KI", r * factor, se.map(|s| s * factor), t);
            ratio.derived = true;
            parameters.extend([kinact, ki, ratio]);
            (fit, hyper_model)
        }
        None => {
            let mut ratio =
                estimate("kinact/KI", line.values[0] * factor, line.se(0).map(|s| s * factor), line.t_quantile);
            ratio.derived = true;
            parameters.push(ratio);
            warnings.push(format!(
                "Global fit: saturation of kobs is not seen ({reason}). kinact and KI cannot be told apart; only kinact/KI is reported, from the fit with kobs = (kinact/KI)·[I]/(1 + [S]/Km)."
            ));
            (line, line_model)
        }
    };
    let crossing: Vec<String> = parameters
        .iter_mut()
        .filter(|p| p.value > 0.0 && p.ci_low.is_some_and(|low| low <= 0.0))
        .map(|p| {
            p.flag = Some(crate::fit::flags::ASYMPTOTIC_CROSSES_ZERO.to_string());
            p.name.clone()
        })
        .collect();
    if !crossing.is_empty() {
        warnings.push(format!(
            "Global fit: the asymptotic interval of {} reaches zero or below, impossible for a positive constant; the straight-line approximation behind it fails here.",
            crossing.join(", ")
        ));
    }
    if !fit.converged {
        warnings.push(format!("Global fit: the fit {}; the numbers shown are not a least-squares solution.", fit.termination_text));
    }
    if fit.covariance.is_none() {
        warnings.push("Global fit: the data cannot determine the shared constants (the Jacobian is rank deficient); standard errors are not available.".into());
    }
    for p in &mut parameters {
        p.unit = Some(match p.name.as_str() {
            "kinact" => format!("1/{time_unit}"),
            "KI" => conc_unit.to_string(),
            _ => format!("1/({conc_unit}·{time_unit})"),
        });
    }

    let p = &fit.values;
    let mut traces = Vec::with_capacity(members.len());
    let mut series = Vec::with_capacity(members.len());
    for (k, m) in members.iter().enumerate() {
        let (v0, vs, offset) = model.own(k, p);
        let kobs = if m.i > 0.0 { model.kobs(m.i, p).0 } else { 0.0 };
        let at = |t: f64| model.value(&[t, m.i, k as f64], p);
        let rss = m.t.iter().zip(&m.y).map(|(&t, &y)| (y - at(t)).powi(2)).sum();
        traces.push(GlobalTrace {
            trace: m.name.clone(),
            i: m.i,
            kobs,
            v0,
            vs: (m.i > 0.0).then_some(vs),
            offset,
            n: m.t.len(),
            rss,
        });
        let (first, last) = (m.t[0], m.t[m.t.len() - 1]);
        series.push(Series {
            label: format!("{}, [I] = {}", m.name, short(m.i)),
            points: m.t.iter().zip(&m.y).map(|(&x, &y)| PlotPoint { row: m.column, x, y, excluded: false }).collect(),
            curve: (0..=100).map(|s| first + (last - first) * s as f64 / 100.0).map(|t| (t, at(t))).collect(),
            dashed: false,
        });
    }

    let comparison = parameters
        .iter()
        .filter_map(|g| {
            let two = two_step.parameters.iter().find(|p| p.name == g.name)?;
            Some(RouteComparison {
                name: g.name.clone(),
                global: g.value,
                global_se: g.std_error,
                two_step: two.value,
                two_step_se: two.std_error,
                ratio: g.value / two.value,
                se_ratio: g.std_error.zip(two.std_error).map(|(a, b)| a / b),
            })
        })
        .collect();

    let plot = PlotData {
        band: None,
        kind: PlotKind::InactivationTraces,
        title: "Progress curves with the global fit".into(),
        x_label: format!("time ({time_unit})"),
        y_label: value_unit.to_string(),
        points: series.iter().flat_map(|s| s.points.iter().cloned()).collect(),
        curve: Vec::new(),
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note: format!("Curves: one fit of all traces with {}.", if saturation {
            "kobs = kinact·[I]/(KI_app + [I])"
        } else {
            "kobs = (kinact/KI_app)·[I]"
        }),
        series,
        log_x: false,
        marks: Vec::new(),
    };
    Ok(GlobalInactivation {
        saturation,
        saturation_test,
        parameters,
        traces,
        comparison,
        n: fit.n,
        fitted: fit.fitted,
        dof: fit.dof,
        rss: fit.rss,
        sigma: fit.sigma,
        aicc: aicc(fit.rss, fit.n, fit.fitted),
        converged: fit.converged,
        iterations: fit.iterations,
        termination_text: fit.termination_text.clone(),
        method: "one least-squares fit of every trace, kinact and KI shared, v0, vs and offset per trace (v0 and offset at [I] = 0), each trace's own constants solved exactly at every step (variable projection); asymptotic intervals from the whole problem's covariance, kinact/KI by the delta method".into(),
        warnings,
        plot,
    })
}

fn short(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let digits = (2 - v.abs().log10().floor() as i32).max(0) as usize;
    format!("{v:.digits$}")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::{fit_model, FitSettings};
    use crate::model::gradient_disagreement;
    use crate::random::SplitMix64;

    fn stacked_data(members: &[TraceReadings]) -> Observations {
        let mut x = Vec::new();
        let mut y = Vec::new();
        for (k, m) in members.iter().enumerate() {
            for (&t, &v) in m.t.iter().zip(&m.y) {
                x.extend_from_slice(&[t, m.i, k as f64]);
                y.push(v);
            }
        }
        Observations::new(3, x, y, None).unwrap()
    }

    /// Invented traces: kinact 0.3, KI_app 2, v0 0.02 (0.025 at [I] = 0),
    /// vs 0.001, offset 0.05, noise SD 0.0005 (seed 77).
    fn members() -> Vec<TraceReadings> {
        let t: Vec<f64> = (0..40).map(|s| s as f64 * 0.5).collect();
        let mut rng = SplitMix64::new(77);
        [0.0, 0.5, 1.0, 2.0, 4.0, 8.0]
            .iter()
            .enumerate()
            .map(|(k, &i)| {
                let kobs = 0.3 * i / (2.0 + i);
                let y = t
                    .iter()
                    .map(|&t| {
                        let curve = if i > 0.0 { 0.05 + 0.001 * t + (0.02 - 0.001) * relaxation(kobs, t).0 } else { 0.05 + 0.025 * t };
                        curve + 0.0005 * rng.normal()
                    })
                    .collect();
                TraceReadings { name: format!("T{k}"), i, t: t.clone(), y, column: k + 1 }
            })
            .collect()
    }

    #[test]
    fn stacked_gradients_match_finite_differences() {
        let m = members();
        let data = stacked_data(&m);
        let hyper = Stacked::new(true, &m);
        let mut p = vec![0.2, 3.0, 0.02, 0.05];
        for _ in 1..m.len() {
            p.extend_from_slice(&[0.03, 0.004, 0.1]);
        }
        assert_eq!(hyper.specs.len(), p.len());
        assert!(gradient_disagreement(&hyper, &data, &p) < 1e-6);
        let line = Stacked::new(false, &m);
        assert!(gradient_disagreement(&line, &data, &p[1..]) < 1e-6);
    }

    /// The separable fit against the whole stacked problem fitted directly
    /// by `fit_model` (dense Levenberg-Marquardt, covariance from the full
    /// Jacobian): the same constants, RSS and standard errors of the shared
    /// constants, for both forms.
    #[test]
    fn separable_fit_equals_the_whole_stacked_fit() {
        let m = members();
        let data = stacked_data(&m);
        for (hyperbola, shared) in [(true, vec![0.25, 1.5]), (false, vec![0.1])] {
            let shape = Stacked::new(hyperbola, &m);
            let reduced = fit_form(&shape, &m, &shared).unwrap();
            assert!(reduced.converged);
            let whole = fit_model(&shape, &data, Some(&reduced.values), &FitSettings::default()).unwrap();
            assert!(whole.summary.converged);
            assert!((reduced.rss / whole.summary.rss - 1.0).abs() < 1e-10, "{} {}", reduced.rss, whole.summary.rss);
            assert_eq!(reduced.dof, whole.summary.dof);
            // Shared constants to 1e-7 relative; each trace's own to 1e-5 of
            // its standard error (vs near zero has no relative scale).
            for j in 0..shape.specs.len() {
                let (a, b) = (reduced.values[j], whole.values()[j]);
                let tolerance = if j < shape.shared() { 1e-7 * b.abs() } else { 1e-5 * whole.summary.parameters[j].std_error.unwrap() };
                assert!((a - b).abs() < tolerance, "{j}: {a} {b}");
            }
            for j in 0..shape.shared() {
                let (a, b) = (reduced.se(j).unwrap(), whole.summary.parameters[j].std_error.unwrap());
                assert!((a / b - 1.0).abs() < 1e-6, "SE {j}: {a} {b}");
            }
        }
    }
}
