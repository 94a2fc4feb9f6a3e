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
//! **Solver and statistics.** The stacked model goes through
//! [`fit_model`] (Levenberg-Marquardt on the dense Jacobian, as the
//! shared-slope batch fit does), started from the two-step estimates with
//! each trace's v0, vs and offset solved exactly by linear least squares at
//! the kobs those estimates imply. Standard errors come from the global
//! covariance s²(JᵀJ)⁻¹ with s² = RSS/(N − P); the intervals are the
//! asymptotic ones, value ± t(0.975, N − P)·SE. Profile intervals would
//! refit the whole stacked problem some tens of times per constant, too
//! slow for a hundred traces; the coverage of the asymptotic intervals is
//! measured in `tests/inactivation.rs`.

use crate::compare::SIGNIFICANCE;
use crate::error::Error;
use crate::fit::{aicc, estimate, fit_model, Fit, FitSettings, ParameterEstimate};
use crate::inactivation::{linear_at, relaxation};
use crate::model::{Dimension, Model, Observations, ParameterSpec};
use crate::plots::{PlotData, PlotKind, PlotPoint, Series};
use nalgebra::{Matrix2, Vector2};
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, FisherSnedecor};

/// The most traces one global fit takes: the dense Jacobian's work grows
/// with the cube of the number of parameters (three per trace).
pub const MAX_GLOBAL_TRACES: usize = 150;

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

/// Starting values: the shared ones given, each trace's own solved exactly
/// at the kobs they imply.
fn start(model: &Stacked, shared: &[f64], members: &[TraceReadings]) -> Result<Vec<f64>, Error> {
    let mut p = shared.to_vec();
    for m in members {
        if m.i > 0.0 {
            let (kobs, _) = model.kobs(m.i, shared);
            let (_, q) = linear_at(kobs, &m.t, &m.y)
                .ok_or_else(|| Error::numerical(format!("no starting values for trace {}", m.name)))?;
            p.extend_from_slice(&[q[0], q[1], q[3]]);
        } else {
            let (v0, offset) =
                line_at(&m.t, &m.y).ok_or_else(|| Error::numerical(format!("no starting values for trace {}", m.name)))?;
            p.extend_from_slice(&[v0, offset]);
        }
    }
    Ok(p)
}

fn stacked_data(members: &[TraceReadings]) -> Result<Observations, Error> {
    let mut x = Vec::new();
    let mut y = Vec::new();
    for (k, m) in members.iter().enumerate() {
        for (&t, &v) in m.t.iter().zip(&m.y) {
            x.extend_from_slice(&[t, m.i, k as f64]);
            y.push(v);
        }
    }
    Observations::new(3, x, y, None)
}

fn se_of(fit: &Fit, j: usize) -> Option<f64> {
    fit.covariance.as_ref().map(|c| c[(j, j)].sqrt()).filter(|v| v.is_finite())
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
    let data = stacked_data(members)?;
    let settings = FitSettings::default();

    // The proportional form, from the two-step line through the origin.
    let line_model = Stacked::new(false, members);
    let slope_start = two_step.slope;
    let slope_start = if slope_start > 0.0 && slope_start.is_finite() { slope_start } else { 1.0 / (top * 1e3) };
    let line = fit_model(&line_model, &data, Some(&start(&line_model, &[slope_start], members)?), &settings)?;

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
                let r = line.values()[0].max(f64::MIN_POSITIVE);
                [r * 2.0 * top, 2.0 * top]
            }
        };
        let fit = fit_model(&hyper_model, &data, Some(&start(&hyper_model, &shared, members)?), &settings)?;
        let h = fit.values();
        let dof = fit.summary.dof;
        if fit.summary.converged && dof > 0 {
            let f = (line.summary.rss - fit.summary.rss) / (fit.summary.rss / dof as f64);
            let f = if f.is_finite() { f.max(0.0) } else { 0.0 };
            let p = FisherSnedecor::new(1.0, dof as f64).map(|d| d.sf(f)).unwrap_or(1.0);
            saturation_test = Some((f, 1, dof, p));
            saturation = p < SIGNIFICANCE && h[0] > 0.0 && h[1] > 0.0 && se_of(&fit, 1).is_some();
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
                if fit.summary.converged { "left no residual degrees of freedom" } else { "found no finite optimum" },
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
            let h = fit.values();
            let cov = fit.covariance.as_ref().expect("saturation needs a covariance");
            let mut kinact = estimate("kinact", h[0], se_of(&fit, 0), t);
            kinact.flag = fit.summary.parameters[0].flag.clone();
            let mut ki = estimate("KI", h[1] / factor, se_of(&fit, 1).map(|s| s / factor), t);
            ki.flag = fit.summary.parameters[1].flag.clone();
            // kinact/KI_app by the delta method: gradient (1/KI, −kinact/KI²).
            let r = h[0] / h[1];
            let g = [1.0 / h[1], -h[0] / (h[1] * h[1])];
            let var = g[0] * g[0] * cov[(0, 0)] + 2.0 * g[0] * g[1] * cov[(0, 1)] + g[1] * g[1] * cov[(1, 1)];
            let se = (var.is_finite() && var >= 0.0).then(|| var.sqrt());
            let mut ratio = estimate("kinact/KI", r * factor, se.map(|s| s * factor), t);
            ratio.derived = true;
            ratio.ci_method = "delta".into();
            parameters.extend([kinact, ki, ratio]);
            (fit, hyper_model)
        }
        None => {
            let mut ratio =
                estimate("kinact/KI", line.values()[0] * factor, se_of(&line, 0).map(|s| s * factor), line.t_quantile);
            ratio.flag = line.summary.parameters[0].flag.clone();
            warnings.push(format!(
                "Global fit: saturation of kobs is not seen ({reason}). kinact and KI cannot be told apart; only kinact/KI is reported, from the fit with kobs = (kinact/KI)·[I]/(1 + [S]/Km)."
            ));
            (line, line_model)
        }
    };
    for p in &mut parameters {
        p.unit = Some(match p.name.as_str() {
            "kinact" => format!("1/{time_unit}"),
            "KI" => conc_unit.to_string(),
            _ => format!("1/({conc_unit}·{time_unit})"),
        });
    }
    warnings.extend(fit.summary.warnings.iter().map(|w| format!("Global fit: {w}")));

    let p = fit.values();
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

    let summary = &fit.summary;
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
        n: summary.n,
        fitted: model.specs.len(),
        dof: summary.dof,
        rss: summary.rss,
        sigma: summary.sigma,
        aicc: aicc(summary.rss, summary.n, model.specs.len()),
        converged: summary.converged,
        iterations: summary.iterations,
        termination_text: summary.termination_text.clone(),
        method: "one least-squares fit of every trace, kinact and KI shared, v0, vs and offset per trace (v0 and offset at [I] = 0); asymptotic intervals from the global covariance, kinact/KI by the delta method".into(),
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
    use crate::model::gradient_disagreement;

    fn members() -> Vec<TraceReadings> {
        let t: Vec<f64> = (0..30).map(|s| s as f64).collect();
        [0.0, 1.0, 4.0]
            .iter()
            .enumerate()
            .map(|(k, &i)| TraceReadings { name: format!("T{k}"), i, t: t.clone(), y: vec![0.0; 30], column: k + 1 })
            .collect()
    }

    #[test]
    fn stacked_gradients_match_finite_differences() {
        let m = members();
        let data = stacked_data(&m).unwrap();
        let hyper = Stacked::new(true, &m);
        let p = [0.2, 3.0, 0.02, 0.05, 0.03, 0.004, 0.1, 0.025, 0.001, 0.08];
        assert_eq!(hyper.specs.len(), p.len());
        assert!(gradient_disagreement(&hyper, &data, &p) < 1e-6);
        let line = Stacked::new(false, &m);
        assert!(gradient_disagreement(&line, &data, &p[1..]) < 1e-6);
    }
}
