//! Time-dependent (slow-binding or irreversible) inhibition from progress
//! curves.
//!
//! **Per trace.** Each sample trace with [I] > 0 is fitted by
//!
//! ```text
//! P(t) = offset + vs·t + (v0 − vs)·(1 − e^(−kobs·t))/kobs
//! ```
//!
//! the integrated form of a rate that relaxes exponentially from v0 to vs
//! (the usual slow-binding progress curve; common practice, no source).
//! Times count from the moment enzyme, substrate and inhibitor met, as the
//! time-course table gives them; the offset takes the reading at t = 0.
//! For a fixed kobs the model is linear in (v0, vs, offset), so the starting
//! kobs is the best of a logarithmic grid (60 values from 0.05/span to
//! 20/interval, each solved by linear least squares); Levenberg-Marquardt
//! then fits all four. kobs is in reciprocal time units of the table.
//!
//! **kobs against [I].** `kobs = kinact·[I]/(KI_app + [I])`, fitted
//! unweighted, against its limit for KI_app ≫ [I], the line through the
//! origin `kobs = (kinact/KI_app)·[I]`, by the extra-sum-of-squares F test.
//! Saturation counts as seen when the hyperbola is better at p < 0.05 (the
//! conventional level; common practice, no source) and its KI_app has a
//! standard error; then `kinact`, `KI` and `kinact/KI` are reported
//! (kinact/KI with its own standard error from the refit in the
//! (kinact/KI_app, KI_app) form, the same as the delta method). Otherwise
//! only `kinact/KI` is reported, from the line's slope, with the reason in
//! the warnings. With [S] and Km (same unit) given, substrate competition
//! is corrected for: `KI = KI_app/(1 + [S]/Km)`, and kinact/KI scales the
//! other way; [S] and Km are taken as exact.
//!
//! Traces without [I], or with [I] = 0, are left out (their kobs is not
//! defined when nothing inactivates the enzyme), with a note.
//!
//! **Global fit.** Beside the two steps, every trace is also fitted at once
//! with kinact and KI shared ([`crate::inactivation_global`]; traces at
//! [I] = 0 join it with kobs = 0), reported in
//! [`InactivationAnalysis::global`] with a comparison to the two-step
//! constants.

use crate::compare::SIGNIFICANCE;
use crate::error::Error;
use crate::fit::{estimate, fit_model, FitSettings, ParameterEstimate};
use crate::inactivation_global::{fit_global, GlobalInactivation, TraceReadings, TwoStep};
use crate::model::{Dimension, Model, Observations, ParameterSpec};
use crate::models::{MichaelisMenten, MichaelisMentenSpecificity};
use crate::plots::{PlotData, PlotKind, PlotPoint, Series};
use crate::traces::{analyse_traces, CellState, Role, TraceAnalysis, TraceRequest};
use crate::units::ConcentrationUnit;
use nalgebra::{Matrix3, Vector3};
use serde::{Deserialize, Serialize};
use statrs::distribution::{ContinuousCDF, FisherSnedecor};

/// What to analyse: the time courses, and optionally [S] and Km for the
/// substrate-competition correction.
#[derive(Clone, Debug, Default, PartialEq, Deserialize)]
#[serde(default)]
pub struct InactivationRequest {
    /// The time courses and their layout (which must give `I`).
    pub traces: TraceRequest,
    /// [S] of the assay, in the same unit as `km`.
    pub substrate: Option<f64>,
    /// Km of the substrate, in the same unit as `substrate`.
    pub km: Option<f64>,
}

/// The slow-binding progress curve; parameters v0, vs, kobs, offset.
#[derive(Clone, Copy, Debug, Default)]
pub struct InactivationCurve;

const CURVE_PARAMETERS: [ParameterSpec; 4] = [
    ParameterSpec { name: "v0", dimension: Dimension::Unspecified },
    ParameterSpec { name: "vs", dimension: Dimension::Unspecified },
    ParameterSpec { name: "kobs", dimension: Dimension::Unspecified },
    ParameterSpec { name: "offset", dimension: Dimension::Response },
];

/// `(1 − e^(−k·t))/k` and its derivative in k; a series near k·t = 0,
/// where the closed forms cancel.
pub(crate) fn relaxation(k: f64, t: f64) -> (f64, f64) {
    let x = k * t;
    if x.abs() < 1e-4 {
        (t * (1.0 - x / 2.0 + x * x / 6.0), t * t * (-0.5 + x / 3.0))
    } else {
        let g = -(-x).exp_m1() / k;
        (g, (t * (-x).exp() - g) / k)
    }
}

impl Model for InactivationCurve {
    fn name(&self) -> &str {
        "slow-binding progress curve"
    }
    fn equation(&self) -> &str {
        "P = offset + vs·t + (v0 − vs)·(1 − exp(−kobs·t))/kobs"
    }
    fn parameters(&self) -> &[ParameterSpec] {
        &CURVE_PARAMETERS
    }
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let t = x[0];
        let (g, _) = relaxation(p[2], t);
        p[3] + p[1] * t + (p[0] - p[1]) * g
    }
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let t = x[0];
        let (g, dg) = relaxation(p[2], t);
        gradient[0] = g;
        gradient[1] = t - g;
        gradient[2] = (p[0] - p[1]) * dg;
        gradient[3] = 1.0;
    }
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        let t: Vec<f64> = data.predictor_column(0);
        let y = data.y();
        let span =
            t.iter().cloned().fold(f64::NEG_INFINITY, f64::max) - t.iter().cloned().fold(f64::INFINITY, f64::min);
        let step = smallest_step(&t).unwrap_or(span);
        if !(span > 0.0 && step > 0.0) {
            return Err(Error::invalid_data("a progress curve needs readings at two or more times"));
        }
        let (lo, hi) = ((0.05 / span).ln(), (20.0 / step).ln());
        let mut best: Option<(f64, Vec<f64>)> = None;
        for i in 0..60 {
            let k = (lo + (hi - lo) * i as f64 / 59.0).exp();
            if let Some((rss, p)) = linear_at(k, &t, y) {
                if best.as_ref().is_none_or(|b| rss < b.0) {
                    best = Some((rss, p));
                }
            }
        }
        best.map(|b| b.1).ok_or_else(|| Error::numerical("no starting value for kobs could be found"))
    }
}

fn smallest_step(t: &[f64]) -> Option<f64> {
    let mut sorted = t.to_vec();
    sorted.sort_by(f64::total_cmp);
    sorted.windows(2).map(|w| w[1] - w[0]).filter(|d| *d > 0.0).min_by(f64::total_cmp)
}

fn median_step(t: &[f64]) -> Option<f64> {
    let mut steps: Vec<f64> = t.windows(2).map(|w| w[1] - w[0]).filter(|d| *d > 0.0).collect();
    steps.sort_by(f64::total_cmp);
    steps.get(steps.len() / 2).copied()
}

/// Least squares of (v0, vs, offset) at fixed kobs = `k`: (RSS, parameters).
pub(crate) fn linear_at(k: f64, t: &[f64], y: &[f64]) -> Option<(f64, Vec<f64>)> {
    let mut a = Matrix3::zeros();
    let mut b = Vector3::zeros();
    for (&t, &y) in t.iter().zip(y) {
        let (g, _) = relaxation(k, t);
        let row = Vector3::new(g, t - g, 1.0);
        a += row * row.transpose();
        b += row * y;
    }
    let solution = a.try_inverse()? * b;
    let p = vec![solution[0], solution[1], k, solution[2]];
    let rss = t.iter().zip(y).map(|(&t, &y)| (y - InactivationCurve.value(&[t], &p)).powi(2)).sum::<f64>();
    rss.is_finite().then_some((rss, p))
}

/// One trace's fit.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TraceKobs {
    /// The trace's name.
    pub trace: String,
    /// [I] from the layout.
    pub i: f64,
    /// [E] from the layout, when given.
    pub e: Option<f64>,
    /// Observed first-order rate constant (per time unit of the table).
    pub kobs: f64,
    /// Its standard error.
    pub kobs_se: Option<f64>,
    /// Initial rate (value unit per time unit).
    pub v0: f64,
    /// Steady-state rate after the relaxation.
    pub vs: f64,
    /// Readings used.
    pub n: usize,
    /// Residual standard deviation.
    pub sigma: Option<f64>,
    /// Whether the fit converged.
    pub converged: bool,
    /// Whether the trace enters the kobs-[I] fit.
    pub used: bool,
}

/// Everything the analysis found.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct InactivationAnalysis {
    /// Time unit of the table (kobs and kinact are per this unit).
    pub time_unit: String,
    /// Unit of [I] (KI's unit).
    pub inhibitor_unit: Option<String>,
    /// One entry per fitted trace, in table order.
    pub traces: Vec<TraceKobs>,
    /// Whether kobs was seen to saturate with [I].
    pub saturation: bool,
    /// The F test of the hyperbola against the line through the origin:
    /// (F, numerator df, denominator df, p).
    pub saturation_test: Option<(f64, usize, usize, f64)>,
    /// `kinact`, `KI`, `kinact/KI` (only `kinact/KI` without saturation).
    pub parameters: Vec<ParameterEstimate>,
    /// The substrate-competition factor 1 + [S]/Km applied (1 when none).
    pub competition_factor: f64,
    /// Warnings for people.
    pub warnings: Vec<String>,
    /// How the data were read and what was left out.
    pub notes: Vec<String>,
    /// Progress curves with their fits, and kobs against [I].
    pub plots: Vec<PlotData>,
    /// The global fit of every trace with kinact and KI shared; `None`
    /// when it could not be made (the reason is in the notes).
    pub global: Option<GlobalInactivation>,
    /// The caution every result carries.
    pub caution: String,
}

/// Reads the time courses and analyses them; see the module documentation.
pub fn analyse_inactivation(request: &InactivationRequest) -> Result<InactivationAnalysis, Error> {
    let traces = analyse_traces(&request.traces)?;
    inactivation_from_traces(&traces, request.substrate, request.km)
}

/// The analysis from traces already read.
pub fn inactivation_from_traces(
    analysis: &TraceAnalysis,
    substrate: Option<f64>,
    km: Option<f64>,
) -> Result<InactivationAnalysis, Error> {
    let factor = match (substrate, km) {
        (Some(s), Some(k)) if s >= 0.0 && k > 0.0 && s.is_finite() && k.is_finite() => 1.0 + s / k,
        (None, None) => 1.0,
        (Some(_), Some(_)) => {
            return Err(Error::invalid_option("[S] must be zero or more and Km positive"));
        }
        _ => {
            return Err(Error::invalid_option("the substrate-competition correction needs both [S] and Km"));
        }
    };
    let mut notes = Vec::new();
    let mut warnings = Vec::new();
    let settings = FitSettings::default();
    let mut results = Vec::new();
    let mut curves = Vec::new();
    let mut members = Vec::new();
    let (mut no_inhibitor, mut zero) = (0, 0);
    let i_per_e = unit_ratio(analysis.inhibitor_unit.as_deref(), analysis.enzyme_unit.as_deref());
    for trace in &analysis.traces {
        if trace.role != Role::Sample || trace.excluded {
            continue;
        }
        let Some(i) = trace.i else {
            no_inhibitor += 1;
            continue;
        };
        let end = trace
            .cells
            .iter()
            .position(|c| matches!(c, CellState::Overflow | CellState::OverRange))
            .unwrap_or(trace.times.len());
        let (t, y): (Vec<f64>, Vec<f64>) =
            (0..end).filter_map(|j| trace.values[j].map(|v| (trace.times[j], v))).unzip();
        if i <= 0.0 {
            zero += 1;
            if i == 0.0 && t.len() >= 6 {
                members.push(TraceReadings { name: trace.name.clone(), i, t, y, column: trace.column });
            }
            continue;
        }
        if t.len() < 6 {
            notes.push(format!("Trace {} has fewer than 6 usable readings and was not fitted.", trace.name));
            continue;
        }
        let data = Observations::new(1, t.clone(), y.clone(), None)?;
        let fit = match fit_model(&InactivationCurve, &data, None, &settings) {
            Ok(fit) => fit,
            Err(e) => {
                notes.push(format!("Trace {} could not be fitted: {}", trace.name, e.message));
                continue;
            }
        };
        let p = fit.values().to_vec();
        let kobs_se = fit.summary.parameters[2].std_error;
        let used = fit.summary.converged && p[2] > 0.0 && kobs_se.is_some();
        if !used {
            warnings.push(format!(
                "Trace {}: kobs could not be determined (the fit {}); it is left out of the kobs-[I] fit.",
                trace.name,
                if fit.summary.converged { "gave no usable standard error" } else { "did not converge" }
            ));
        }
        let span = t[t.len() - 1] - t[0];
        if let (true, Some(step)) = (used, median_step(&t)) {
            let half_life = std::f64::consts::LN_2 / p[2];
            if half_life < 2.0 * step {
                warnings.push(format!(
                    "Trace {}: kobs = {} per {} is near the limit the reading interval sets: its half-life {} {} is less than two intervals ({} {}); read more often or use less inhibitor.",
                    trace.name, short(p[2]), analysis.time_unit, short(half_life), analysis.time_unit, short(step), analysis.time_unit
                ));
            }
            if p[2] * span < 0.5 {
                warnings.push(format!(
                    "Trace {}: kobs = {} per {}: less than 40% of the relaxation happens within the recording ({} {}); kobs rests on slight curvature.",
                    trace.name, short(p[2]), analysis.time_unit, short(span), analysis.time_unit
                ));
            }
        }
        if let (Some(e), Some(scale)) = (trace.e, i_per_e) {
            if e > 0.0 && i < 10.0 * e * scale {
                warnings.push(format!(
                    "Trace {}: [I] is less than 10× [E]; the pseudo-first-order treatment assumes free [I] ≈ total [I] (common practice, no source).",
                    trace.name
                ));
            }
        }
        let curve: Vec<(f64, f64)> =
            (0..=100).map(|s| t[0] + span * s as f64 / 100.0).map(|x| (x, InactivationCurve.value(&[x], &p))).collect();
        curves.push(Series {
            label: format!("{}, [I] = {}", trace.name, short(i)),
            points: t.iter().zip(&y).map(|(&x, &y)| PlotPoint { row: trace.column, x, y, excluded: false }).collect(),
            curve,
            dashed: false,
        });
        members.push(TraceReadings { name: trace.name.clone(), i, t: t.clone(), y: y.clone(), column: trace.column });
        results.push(TraceKobs {
            trace: trace.name.clone(),
            i,
            e: trace.e,
            kobs: p[2],
            kobs_se,
            v0: p[0],
            vs: p[1],
            n: t.len(),
            sigma: fit.summary.sigma,
            converged: fit.summary.converged,
            used,
        });
    }
    if no_inhibitor + zero > 0 {
        notes.push(format!(
            "{} sample trace(s) without inhibitor were not fitted one by one: kobs is not defined when nothing inactivates the enzyme.{}",
            no_inhibitor + zero,
            if zero > 0 { " Those at [I] = 0 join the global fit with kobs = 0." } else { "" }
        ));
    }
    if results.is_empty() {
        return Err(Error::invalid_data(
            "no sample trace with [I] > 0 in the layout could be fitted; the layout needs an I column",
        ));
    }
    let used: Vec<&TraceKobs> = results.iter().filter(|r| r.used).collect();
    let x: Vec<f64> = used.iter().map(|r| r.i).collect();
    let y: Vec<f64> = used.iter().map(|r| r.kobs).collect();
    let mut distinct = x.clone();
    distinct.sort_by(f64::total_cmp);
    distinct.dedup();
    if used.len() < 2 {
        return Err(Error::invalid_data("kobs against [I] needs at least two traces with a determined kobs"));
    }

    // The line through the origin: slope = Σ I·k / Σ I².
    let sxx: f64 = x.iter().map(|v| v * v).sum();
    let slope = x.iter().zip(&y).map(|(a, b)| a * b).sum::<f64>() / sxx;
    let rss_line: f64 = x.iter().zip(&y).map(|(a, b)| (b - slope * a).powi(2)).sum();
    let dof_line = x.len() - 1;
    let slope_se = (dof_line > 0).then(|| (rss_line / dof_line as f64 / sxx).sqrt());
    let t_line = crate::fit::student_t_quantile(0.975, dof_line as f64);

    let mut parameters = Vec::new();
    let mut saturation = false;
    let mut saturation_test = None;
    let mut reason = String::new();
    let mut hyperbola_curve = None;
    if distinct.len() >= 3 && x.len() >= 3 {
        let obs = Observations::single(&x, &y)?;
        let hyperbola = fit_model(&MichaelisMenten, &obs, None, &settings)?;
        let h = hyperbola.values().to_vec();
        let dof = hyperbola.summary.dof;
        if dof > 0 && hyperbola.summary.converged {
            let f = ((rss_line - hyperbola.summary.rss) / 1.0) / (hyperbola.summary.rss / dof as f64);
            let f = if f.is_finite() { f.max(0.0) } else { 0.0 };
            let p = FisherSnedecor::new(1.0, dof as f64).map(|d| d.sf(f)).unwrap_or(1.0);
            saturation_test = Some((f, 1, dof, p));
            let ki_se = hyperbola.summary.parameters[1].std_error;
            saturation = p < SIGNIFICANCE && h[0] > 0.0 && h[1] > 0.0 && ki_se.is_some();
            if !saturation {
                reason = format!(
                    "kobs rises in proportion to [I] over the range tested (F test of saturation against a straight line through the origin: F(1, {dof}) = {}, p = {}; KI_app would be {} against a highest [I] of {})",
                    short(f),
                    short(p),
                    short(h[1]),
                    short(distinct[distinct.len() - 1])
                );
            } else {
                let specific = fit_model(&MichaelisMentenSpecificity, &obs, Some(&[h[0] / h[1], h[1]]), &settings)?;
                let t = hyperbola.t_quantile;
                let kinact = &hyperbola.summary.parameters[0];
                parameters.push(estimate("kinact", kinact.value, kinact.std_error, t));
                parameters.push(estimate("KI", h[1] / factor, ki_se.map(|s| s / factor), t));
                let ratio = &specific.summary.parameters[0];
                let mut r = estimate("kinact/KI", ratio.value * factor, ratio.std_error.map(|s| s * factor), t);
                r.derived = true;
                parameters.push(r);
                hyperbola_curve = Some(h);
            }
        }
    } else {
        reason =
            format!("only {} distinct [I] with a determined kobs; a hyperbola needs three or more", distinct.len());
    }
    if !saturation {
        let mut r = estimate("kinact/KI", slope * factor, slope_se.map(|s| s * factor), t_line);
        r.derived = true;
        parameters.push(r);
        warnings.push(format!(
            "Saturation of kobs is not seen: {reason}. kinact and KI cannot be told apart; only kinact/KI is reported, from the slope of kobs against [I]."
        ));
    }
    let time = &analysis.time_unit;
    let conc = analysis.inhibitor_unit.clone().unwrap_or_else(|| "[I] unit".into());
    for p in &mut parameters {
        p.unit = Some(match p.name.as_str() {
            "kinact" => format!("1/{time}"),
            "KI" => conc.clone(),
            _ => format!("1/({conc}·{time})"),
        });
    }
    if factor == 1.0 && parameters.iter().any(|p| p.name == "KI") {
        notes.push("No [S] and Km were given: KI is the apparent constant at the assay's [S] (KI_app).".into());
    }

    let two_step = TwoStep {
        hyperbola: hyperbola_curve.as_ref().map(|h| (h[0], h[1])),
        slope,
        parameters: &parameters,
    };
    let global = match fit_global(&members, &two_step, factor, time, &conc, &analysis.value_unit) {
        Ok(global) => Some(global),
        Err(e) => {
            notes.push(format!("The global fit of all traces could not be made: {}", e.message));
            None
        }
    };

    let top = distinct.last().copied().unwrap_or(1.0) * 1.05;
    let replot_curve: Vec<(f64, f64)> = (0..=100)
        .map(|s| top * s as f64 / 100.0)
        .map(|i| match &hyperbola_curve {
            Some(h) => (i, h[0] * i / (h[1] + i)),
            None => (i, slope * i),
        })
        .collect();
    let replot = PlotData {
        band: None,
        kind: PlotKind::KobsReplot,
        title: "kobs against [I]".into(),
        x_label: format!("[I] ({conc})"),
        y_label: format!("kobs (1/{time})"),
        points: used.iter().enumerate().map(|(row, r)| PlotPoint { row, x: r.i, y: r.kobs, excluded: false }).collect(),
        curve: replot_curve,
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note: if saturation {
            "Curve: kobs = kinact·[I]/(KI_app + [I]).".into()
        } else {
            "Line: kobs = (kinact/KI_app)·[I].".into()
        },
        series: Vec::new(),
        log_x: false,
        marks: Vec::new(),
    };
    let progress = PlotData {
        band: None,
        kind: PlotKind::InactivationTraces,
        title: "Progress curves with the slow-binding fit".into(),
        x_label: format!("time ({time})"),
        y_label: analysis.value_unit.clone(),
        points: curves.iter().flat_map(|s| s.points.iter().cloned()).collect(),
        curve: Vec::new(),
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note: "Curves: P = offset + vs·t + (v0 − vs)(1 − e^(−kobs·t))/kobs per trace.".into(),
        series: curves,
        log_x: false,
        marks: Vec::new(),
    };
    Ok(InactivationAnalysis {
        time_unit: time.clone(),
        inhibitor_unit: analysis.inhibitor_unit.clone(),
        traces: results,
        saturation,
        saturation_test,
        parameters,
        competition_factor: factor,
        warnings,
        notes,
        plots: vec![progress, replot],
        global,
        caution: crate::rates::CAUTION.to_string(),
    })
}

/// How many [I] units make one [E] unit, when both units are known.
fn unit_ratio(i_unit: Option<&str>, e_unit: Option<&str>) -> Option<f64> {
    match (i_unit, e_unit) {
        (Some(i), Some(e)) => {
            let (i, e) = (ConcentrationUnit::parse(i).ok()?, ConcentrationUnit::parse(e).ok()?);
            Some(e.in_molar() / i.in_molar())
        }
        (None, None) => Some(1.0),
        _ => None,
    }
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

    #[test]
    fn curve_gradient_matches_finite_differences() {
        let t: Vec<f64> = (0..20).map(|i| i as f64 * 0.7).collect();
        let y = vec![0.0; 20];
        let data = Observations::new(1, t, y, None).unwrap();
        assert!(gradient_disagreement(&InactivationCurve, &data, &[1.0, 0.1, 0.3, 0.02]) < 1e-6);
        // Near kobs·t = 0 the series is used.
        assert!(gradient_disagreement(&InactivationCurve, &data, &[1.0, 0.1, 1e-7, 0.02]) < 1e-5);
    }

    #[test]
    fn relaxation_series_joins_the_closed_form() {
        // At k·t just below the switch, the series against the closed form
        // evaluated directly (truncation error about (k·t)³·t/24).
        let (k, t) = (0.99e-4, 1.0);
        let (a, da) = relaxation(k, t);
        let g = -(-k * t).exp_m1() / k;
        let dg = (t * (-k * t).exp() - g) / k;
        assert!((a - g).abs() < 1e-12, "{a} {g}");
        assert!((da - dg).abs() < 1e-8, "{da} {dg}");
    }
}
