//! pH-rate profiles: a rate or rate constant (kcat, kcat/Km, v) measured
//! at several pH values, fitted by the ionisation models
//!
//! ```text
//! rising limb    y = Y/(1 + 10^(pKa1 − pH))                 one group must be deprotonated
//! falling limb   y = Y/(1 + 10^(pH − pKa2))                 one group must be protonated
//! bell           y = Y/(1 + 10^(pKa1 − pH) + 10^(pH − pKa2)) both
//! ```
//!
//! (the usual forms for an active species that exists in one protonation
//! state; common practice, no source). `Y` is the pH-independent value:
//! the rate or constant of the active form, in the value column's unit.
//! pKa1 is the ionisation on the acid side, pKa2 the one on the alkaline
//! side (both are acid dissociation constants; pKa2 is not a base constant).
//!
//! **Fitting.** Every model is fitted directly to the values on their own
//! scale (never to log y), with analytic gradients. **Relative weighting
//! (1/y², from the fitted curve) is the default:** a limb falls tenfold per
//! pH unit, so one profile spans one to three decades, and rate assays
//! have errors roughly proportional to the rate; with uniform weights the
//! few points near the top would decide everything and the limbs, which
//! carry the pKa values, would count for almost nothing. Uniform, Poisson
//! and sd weights are available. As in the other comparisons, weights from
//! the curve are iterated on the most general model (bell) and then held
//! fixed for every model, so the sums of squares compare.
//!
//! **Intervals** are profile-likelihood intervals by default (a pKa near
//! the end of the measured range has a markedly asymmetric interval, which
//! the profile follows); asymptotic and bootstrap are available, and an
//! asymptotic request still runs the profile to flag a side it never
//! closes.
//!
//! **Comparison** ([`crate::compare`], its one choice rule): AICc with
//! Akaike weights, and the extra-sum-of-squares F test of each single limb
//! against the bell (the single limb is the bell's limit as the other pKa
//! leaves the pH range, a boundary, where the usual p value is
//! conservative). The bell is named when both limbs are rejected
//! (p < 0.05); a single limb when it alone is not rejected (at a boundary
//! the F test decides alone); otherwise the verdict is undecided and names
//! the models still standing, and the plots show the one with the lowest
//! AICc among them.
//!
//! **Close pKa values.** When pKa2 − pKa1 < 2 the fitted values are
//! apparent (macroscopic) constants: they differ from the ionisation
//! constants of the groups themselves, and the top of the bell lies below
//! Y (at Y/(1 + 2·10^(−Δ/2)) for a gap Δ, so Y/1.2 at Δ = 2). A warning
//! says so (the 2-unit rule is common practice, no source).

use crate::compare::{compare_fits, Comparison};
use crate::error::Error;
use crate::fit::{fit_model, fit_weighted, Fit, FitSettings, FitSummary};
use crate::intervals::{apply_interval_method, apply_profile_intervals, BootstrapSettings, IntervalMethod};
use crate::model::{Dimension, Model, Observations, ParameterSpec};
use crate::plots::{Mark, PlotData, PlotKind, PlotPoint};
use crate::rates::CAUTION;
use crate::read::columns::{is_ph_name, is_rate_constant_name};
use crate::read::profile::{read_profile, ProfileRoles};
use crate::sets::short;
use crate::solver::Termination;
use crate::table::{shortage_reasons, InputProblem};
use crate::weighting::Weighting;
use serde::{Deserialize, Serialize};
use std::f64::consts::LN_10;

/// What to analyse.
#[derive(Clone, Debug, PartialEq, Deserialize)]
#[serde(default)]
pub struct PhRequest {
    /// The table: a `pH` column and a value column (`kcat`, `kcat/Km`, `k`,
    /// `v`, ...; its unit in the heading), optionally an `sd` column.
    pub text: String,
    /// The heading of the value column, when the table has several.
    pub column: Option<String>,
    /// How the values are weighted. Default `relative` (see the module
    /// documentation for why).
    pub weighting: Weighting,
    /// How intervals are computed. Default `profile`.
    pub interval_method: IntervalMethod,
    /// Bootstrap settings, used when `interval_method` is bootstrap.
    pub bootstrap: BootstrapSettings,
    /// Input lines to leave out of the fits.
    pub excluded_lines: Vec<usize>,
}

impl Default for PhRequest {
    fn default() -> Self {
        PhRequest {
            text: String::new(),
            column: None,
            weighting: Weighting::Relative,
            interval_method: IntervalMethod::Profile,
            bootstrap: BootstrapSettings::default(),
            excluded_lines: Vec::new(),
        }
    }
}

/// Which ionisation model.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PhModel {
    /// y = Y/(1 + 10^(pKa1 − pH)).
    Rising,
    /// y = Y/(1 + 10^(pH − pKa2)).
    Falling,
    /// y = Y/(1 + 10^(pKa1 − pH) + 10^(pH − pKa2)).
    Bell,
}

const RISING: [ParameterSpec; 2] =
    [ParameterSpec { name: "Y", dimension: Dimension::Response }, ParameterSpec { name: "pKa1", dimension: Dimension::Dimensionless }];
const FALLING: [ParameterSpec; 2] =
    [ParameterSpec { name: "Y", dimension: Dimension::Response }, ParameterSpec { name: "pKa2", dimension: Dimension::Dimensionless }];
const BELL: [ParameterSpec; 3] = [
    ParameterSpec { name: "Y", dimension: Dimension::Response },
    ParameterSpec { name: "pKa1", dimension: Dimension::Dimensionless },
    ParameterSpec { name: "pKa2", dimension: Dimension::Dimensionless },
];

/// 10^d with the exponent held below 300, so that the terms stay finite far
/// outside the data (there the model is flat and the clamp changes nothing
/// the data can see).
fn power(d: f64) -> f64 {
    10f64.powf(d.min(300.0))
}

impl PhModel {
    /// Every model, in the order they are reported.
    pub const ALL: [PhModel; 3] = [PhModel::Rising, PhModel::Falling, PhModel::Bell];

    /// The two ionisation terms (acid side, alkaline side) at `ph`.
    fn terms(self, ph: f64, p: &[f64]) -> (f64, f64) {
        match self {
            PhModel::Rising => (power(p[1] - ph), 0.0),
            PhModel::Falling => (0.0, power(ph - p[1])),
            PhModel::Bell => (power(p[1] - ph), power(ph - p[2])),
        }
    }

    /// The pKa values of a parameter vector as (pKa1, pKa2).
    pub fn pkas(self, p: &[f64]) -> (Option<f64>, Option<f64>) {
        match self {
            PhModel::Rising => (Some(p[1]), None),
            PhModel::Falling => (None, Some(p[1])),
            PhModel::Bell => (Some(p[1]), Some(p[2])),
        }
    }

    /// Least squares of Y at fixed pKa values: (weighted RSS, Y).
    fn y_at(self, pkas: &[f64], data: &Observations) -> Option<(f64, f64)> {
        let mut p = vec![1.0];
        p.extend_from_slice(pkas);
        let (mut num, mut den) = (0.0, 0.0);
        for i in 0..data.len() {
            let g = self.value(data.x(i), &p);
            num += data.weights()[i] * data.y()[i] * g;
            den += data.weights()[i] * g * g;
        }
        let y = num / den;
        if !(y.is_finite() && den > 0.0) {
            return None;
        }
        p[0] = y;
        let rss = data.weighted_rss(&self, &p);
        rss.is_finite().then_some((rss, y))
    }
}

impl Model for PhModel {
    fn name(&self) -> &str {
        match self {
            PhModel::Rising => "rising-limb",
            PhModel::Falling => "falling-limb",
            PhModel::Bell => "bell",
        }
    }
    fn equation(&self) -> &str {
        match self {
            PhModel::Rising => "y = Y/(1 + 10^(pKa1 − pH))",
            PhModel::Falling => "y = Y/(1 + 10^(pH − pKa2))",
            PhModel::Bell => "y = Y/(1 + 10^(pKa1 − pH) + 10^(pH − pKa2))",
        }
    }
    fn parameters(&self) -> &[ParameterSpec] {
        match self {
            PhModel::Rising => &RISING,
            PhModel::Falling => &FALLING,
            PhModel::Bell => &BELL,
        }
    }
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let (a, b) = self.terms(x[0], p);
        p[0] / (1.0 + a + b)
    }
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let (a, b) = self.terms(x[0], p);
        let d = 1.0 + a + b;
        gradient[0] = 1.0 / d;
        // d/dpKa1 of 10^(pKa1 − pH) is ln10·10^(pKa1 − pH); d/dpKa2 of
        // 10^(pH − pKa2) is −ln10·10^(pH − pKa2). Written as (a/d)/d so
        // that nothing overflows where the terms are huge.
        let acid = -p[0] * LN_10 * (a / d) / d;
        let alkaline = p[0] * LN_10 * (b / d) / d;
        match self {
            PhModel::Rising => gradient[1] = acid,
            PhModel::Falling => gradient[1] = alkaline,
            PhModel::Bell => {
                gradient[1] = acid;
                gradient[2] = alkaline;
            }
        }
    }
    /// The best point of a grid of pKa values (0.1 pH apart, from 1 unit
    /// below the lowest pH to 1 above the highest; pKa1 ≤ pKa2 for the
    /// bell), with Y solved exactly by weighted least squares at each.
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        let ph = data.predictor_column(0);
        let low = ph.iter().cloned().fold(f64::INFINITY, f64::min) - 1.0;
        let high = ph.iter().cloned().fold(f64::NEG_INFINITY, f64::max) + 1.0;
        let steps = ((high - low) / 0.1).ceil() as usize;
        let grid: Vec<f64> = (0..=steps).map(|i| low + 0.1 * i as f64).collect();
        let mut best: Option<(f64, Vec<f64>)> = None;
        let mut consider = |pkas: &[f64]| {
            if let Some((rss, y)) = self.y_at(pkas, data) {
                if best.as_ref().is_none_or(|b| rss < b.0) {
                    let mut p = vec![y];
                    p.extend_from_slice(pkas);
                    best = Some((rss, p));
                }
            }
        };
        match self {
            PhModel::Bell => {
                for (i, &a) in grid.iter().enumerate() {
                    for &b in &grid[i..] {
                        consider(&[a, b]);
                    }
                }
            }
            _ => grid.iter().for_each(|&a| consider(&[a])),
        }
        best.map(|b| b.1).ok_or_else(|| Error::numerical("no starting values for the pKa could be found"))
    }
    fn positive(&self, index: usize) -> bool {
        index == 0
    }
}

/// One point of the profile.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PhPoint {
    /// Index in the point list (the `row` of the plots' points).
    pub row: usize,
    /// Input line.
    pub line: usize,
    /// The pH.
    pub ph: f64,
    /// The value (rate or rate constant).
    pub y: f64,
    /// Whether it was left out.
    pub excluded: bool,
    /// The value of the plotted model at this pH.
    pub fitted: f64,
}

/// Everything the analysis found.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PhAnalysis {
    /// The value column's name (`kcat`, `kcat/Km`, ...).
    pub value_name: String,
    /// Its unit as the heading gives it (Y's unit), when it does.
    pub value_unit: Option<String>,
    /// Every point read.
    pub points: Vec<PhPoint>,
    /// The fit of each model (`rising-limb`, `falling-limb`, `bell`), in
    /// that order; each with `Y` and its pKa value(s).
    pub fits: Vec<FitSummary>,
    /// AICc ranking, F tests of each limb against the bell, and the
    /// verdict.
    pub comparison: Comparison,
    /// The model drawn in the plots and whose values fill `fitted`: the
    /// preferred one, or when undecided the candidate with the lowest AICc.
    pub drawn: String,
    /// Problems in the input.
    pub problems: Vec<InputProblem>,
    /// How the table was read.
    pub notes: Vec<String>,
    /// Warnings for people (close pKa values, extrapolated pKa, fits that
    /// did not converge).
    pub warnings: Vec<String>,
    /// `ph-log` (log10 of the value against pH, with the asymptotes of
    /// slope +1, 0 and −1) and `ph-direct` (the value against pH).
    pub plots: Vec<PlotData>,
    /// The caution every result carries.
    pub caution: String,
}

/// Below this gap between pKa1 and pKa2 (pH units) the fitted values are
/// apparent ones (common practice, no source).
pub const CLOSE_PKA_GAP: f64 = 2.0;

/// Reads the profile, fits the three models, compares them and draws the
/// preferred one; see the module documentation.
pub fn analyse_ph(request: &PhRequest) -> Result<PhAnalysis, Error> {
    let roles = ProfileRoles { is_condition: &is_ph_name, is_value: &is_rate_constant_name, condition: "pH", value: "rate or rate constant" };
    let read = read_profile(&request.text, &roles, request.column.as_deref())?;
    let mut problems = read.problems;
    let mut notes = read.notes;
    let mut warnings = Vec::new();
    if request.weighting == Weighting::Sd && read.columns.sd.is_none() {
        return Err(Error::invalid_option("weighting by sd needs an sd column; the table has none"));
    }
    let value_name = read.columns.value_heading.as_ref().map_or("value".to_string(), |h| h.name.clone());
    let value_unit = read.columns.value_heading.as_ref().and_then(|h| h.unit.clone());
    if let Some(unit) = read.columns.condition_heading.as_ref().and_then(|h| h.unit.clone()) {
        notes.push(format!("The pH heading carries a unit ('{unit}'); pH has none, and the numbers are read as pH values."));
    }
    let mut points = Vec::new();
    let mut weights = Vec::new();
    for row in &read.rows {
        if !(0.0..=14.0).contains(&row.condition) {
            problems.push(InputProblem {
                line: row.line,
                column: Some(read.columns.condition + 1),
                message: format!("a pH of {} is outside 0 to 14; the row was left out", row.condition),
            });
            continue;
        }
        let excluded = request.excluded_lines.contains(&row.line);
        if !excluded {
            match request.weighting.weight(row.value, row.sd) {
                Ok(w) => weights.push(w),
                Err(message) => {
                    let column = if request.weighting == Weighting::Sd { read.columns.sd } else { Some(read.columns.value) };
                    problems.push(InputProblem { line: row.line, column: column.map(|c| c + 1), message: format!("{message}; the row was left out") });
                    continue;
                }
            }
        }
        points.push(PhPoint { row: points.len(), line: row.line, ph: row.condition, y: row.value, excluded, fitted: f64::NAN });
    }
    problems.sort_by_key(|p| (p.line, p.column));
    let used: Vec<&PhPoint> = points.iter().filter(|p| !p.excluded).collect();
    if used.len() < 4 {
        return Err(Error::invalid_data(format!(
            "only {} usable point(s); the bell-shaped model needs at least 4 to have an uncertainty{}",
            used.len(),
            shortage_reasons(&problems, points.iter().filter(|p| p.excluded).count(), 10)
        )));
    }
    let ph: Vec<f64> = used.iter().map(|p| p.ph).collect();
    let mut distinct = ph.clone();
    distinct.sort_by(f64::total_cmp);
    distinct.dedup();
    if distinct.len() < 4 {
        warnings.push(format!(
            "Only {} distinct pH values: the bell-shaped model has three constants, so its fit cannot be checked against the data's shape.",
            distinct.len()
        ));
    }
    let data = Observations::new(1, ph.clone(), used.iter().map(|p| p.y).collect(), Some(weights))?;
    let settings = FitSettings::default();

    // The bell first, with its weights iterated when they come from the
    // curve; then every model on those weights.
    let (bell_fit, data) = fit_weighted(&PhModel::Bell, &data, request.weighting, None, &settings)?;
    let rounds = bell_fit.summary.reweighting_rounds;
    let mut fitted: Vec<(PhModel, Fit)> = Vec::new();
    for model in [PhModel::Rising, PhModel::Falling] {
        match fit_model(&model, &data, None, &settings) {
            Ok(fit) => fitted.push((model, fit)),
            Err(e) => warnings.push(format!("The {} model could not be fitted: {}", model.name(), e.message)),
        }
    }
    fitted.push((PhModel::Bell, bell_fit));
    let (low, high) = (distinct[0], distinct[distinct.len() - 1]);
    let mut fits = Vec::new();
    for (model, fit) in &fitted {
        let mut summary = fit.summary.clone();
        summary.weighting = request.weighting.name().into();
        summary.reweighting_rounds = rounds;
        if fit.summary.termination == Termination::NoFiniteOptimum {
            apply_profile_intervals(&mut summary, model, &data, fit, true);
        } else {
            apply_interval_method(&mut summary, model, &data, fit, request.interval_method, &request.bootstrap)?;
            if request.interval_method == IntervalMethod::Asymptotic && fit.summary.converged {
                apply_profile_intervals(&mut summary, model, &data, fit, false);
            }
        }
        for estimate in &mut summary.parameters {
            estimate.unit = if estimate.name == "Y" { value_unit.clone() } else { Some(String::new()) };
        }
        if !fit.summary.converged {
            warnings.push(format!("The {} fit did not converge; its numbers are not a least-squares solution.", model.name()));
        }
        fits.push(summary);
    }

    let comparison = compare_fits(&fits);
    let drawn_name = comparison.preferred.clone().unwrap_or_else(|| {
        comparison
            .models
            .iter()
            .find(|m| comparison.candidates.iter().any(|c| c.model == m.model))
            .map_or_else(|| comparison.models[0].model.clone(), |m| m.model.clone())
    });
    let (drawn_model, drawn_fit) = fitted.iter().find(|(m, _)| m.name() == drawn_name).expect("the drawn model was fitted");
    let p = drawn_fit.values().to_vec();
    for point in &mut points {
        point.fitted = drawn_model.value(&[point.ph], &p);
    }

    // Close pKa values, wherever the bell is still standing.
    if let Some((_, bell)) = fitted.iter().find(|(m, _)| *m == PhModel::Bell) {
        let standing = comparison.candidates.iter().any(|c| c.model == "bell");
        let b = bell.values();
        let gap = b[2] - b[1];
        if standing && bell.summary.converged && gap < CLOSE_PKA_GAP {
            warnings.push(format!(
                "The two pKa values of the bell-shaped fit are {} pH units apart (pKa1 = {}, pKa2 = {}), closer than about {CLOSE_PKA_GAP}: they are apparent values that differ from the ionisation constants of the groups themselves, and the top of the curve lies below Y (at {} of Y); Y is then an extrapolation (rule of thumb: common practice, no source).",
                short(gap),
                short(b[1]),
                short(b[2]),
                short(1.0 / (1.0 + 2.0 * 10f64.powf(-gap / 2.0)))
            ));
        }
    }
    let (pka1, pka2) = drawn_model.pkas(&p);
    for (name, value) in [("pKa1", pka1), ("pKa2", pka2)] {
        if let Some(v) = value {
            if v < low || v > high {
                warnings.push(format!(
                    "{name} of the {} fit ({}) lies outside the measured pH range ({} to {}): it is an extrapolation; measure beyond it.",
                    drawn_model.name(),
                    short(v),
                    short(low),
                    short(high)
                ));
            }
        }
    }
    let plots = ph_plots(&points, *drawn_model, &p, &value_name, value_unit.as_deref(), &mut notes);
    Ok(PhAnalysis {
        value_name,
        value_unit,
        points,
        fits,
        comparison,
        drawn: drawn_name,
        problems,
        notes,
        warnings,
        plots,
        caution: CAUTION.to_string(),
    })
}

/// The two plots of the drawn model.
fn ph_plots(points: &[PhPoint], model: PhModel, p: &[f64], name: &str, unit: Option<&str>, notes: &mut Vec<String>) -> Vec<PlotData> {
    let low = points.iter().map(|q| q.ph).fold(f64::INFINITY, f64::min);
    let high = points.iter().map(|q| q.ph).fold(f64::NEG_INFINITY, f64::max);
    let curve: Vec<(f64, f64)> = (0..=200).map(|i| low + (high - low) * i as f64 / 200.0).map(|x| (x, model.value(&[x], p))).collect();
    let (pka1, pka2) = model.pkas(p);
    let marks: Vec<Mark> = [("pKa1", pka1), ("pKa2", pka2)]
        .into_iter()
        .filter_map(|(n, v)| v.filter(|v| *v >= low - 1.0 && *v <= high + 1.0).map(|v| Mark { x: v, label: format!("{n} = {}", short(v)) }))
        .collect();
    let value_label = match unit {
        Some(u) => format!("{name} ({u})"),
        None => name.to_string(),
    };
    let log_label = match unit {
        Some(u) => format!("log10 {name} ({name} in {u})"),
        None => format!("log10 {name}"),
    };
    let positive: Vec<PlotPoint> = points
        .iter()
        .filter(|q| q.y > 0.0)
        .map(|q| PlotPoint { row: q.row, x: q.ph, y: q.y.log10(), excluded: q.excluded })
        .collect();
    let skipped = points.len() - positive.len();
    if skipped > 0 {
        notes.push(format!("{skipped} value(s) at or below zero have no logarithm and are not on the log plot (they are in the fit)."));
    }
    // Asymptotes of log10 y: slope +1 (log Y + pH − pKa1) below pKa1, 0
    // (log Y) between, −1 (log Y − pH + pKa2) above pKa2; each starts at
    // its break point and runs to the end of the measured range.
    let log_y = p[0].log10();
    let mut segments = Vec::new();
    if p[0] > 0.0 {
        let near = |v: f64| v >= low - 1.0 && v <= high + 1.0;
        let left = pka1.filter(|v| near(*v));
        let right = pka2.filter(|v| near(*v));
        if let Some(a) = left {
            segments.push(((a, log_y), (low.min(a), log_y + low.min(a) - a)));
        }
        let from = left.unwrap_or(low);
        let to = right.unwrap_or(high);
        segments.push(((from, log_y), (to.max(from), log_y)));
        if let Some(b) = right {
            segments.push(((b, log_y), (high.max(b), log_y - (high.max(b) - b))));
        }
    }
    let equation = model.equation();
    let direct_points: Vec<PlotPoint> =
        points.iter().map(|q| PlotPoint { row: q.row, x: q.ph, y: q.y, excluded: q.excluded }).collect();
    let base = |kind, title: String, y_label: String, points: Vec<PlotPoint>, curve: Vec<(f64, f64)>, segments, note: String| PlotData {
        kind,
        title,
        x_label: "pH".into(),
        y_label,
        points,
        curve,
        zero_line: false,
        segments,
        spots: Vec::new(),
        note,
        series: Vec::new(),
        log_x: false,
        marks: marks.clone(),
        band: None,
    };
    vec![
        base(
            PlotKind::PhLog,
            format!("log10 {name} against pH"),
            log_label,
            positive,
            curve.iter().filter(|(_, y)| *y > 0.0).map(|&(x, y)| (x, y.log10())).collect(),
            segments,
            format!("Curve: {equation} ({} fit), fitted on the value's own scale; thin lines: its asymptotes of slope +1, 0 and −1.", model.name()),
        ),
        base(
            PlotKind::PhDirect,
            format!("{name} against pH"),
            value_label,
            direct_points,
            curve,
            Vec::new(),
            format!("Curve: {equation} ({} fit).", model.name()),
        ),
    ]
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::gradient_disagreement;

    #[test]
    fn gradients_match_finite_differences() {
        let ph: Vec<f64> = (0..17).map(|i| 4.0 + 0.375 * i as f64).collect();
        let data = Observations::new(1, ph.clone(), vec![1.0; ph.len()], None).unwrap();
        assert!(gradient_disagreement(&PhModel::Rising, &data, &[12.0, 6.3]) < 1e-6);
        assert!(gradient_disagreement(&PhModel::Falling, &data, &[12.0, 8.1]) < 1e-6);
        assert!(gradient_disagreement(&PhModel::Bell, &data, &[12.0, 6.3, 8.1]) < 1e-6);
        assert!(gradient_disagreement(&PhModel::Bell, &data, &[3.0, 7.0, 7.4]) < 1e-6);
    }

    /// Far outside the data the terms are held finite: no NaN in the value
    /// or the gradient.
    #[test]
    fn extreme_pka_stays_finite() {
        let mut g = [0.0; 3];
        for p in [[1.0, 400.0, 7.0], [1.0, 5.0, -400.0]] {
            assert!(PhModel::Bell.value(&[7.0], &p).is_finite());
            PhModel::Bell.gradient(&[7.0], &p, &mut g);
            assert!(g.iter().all(|v| v.is_finite()), "{g:?}");
        }
    }

    /// Exact bell data (invented: Y = 100 s⁻¹, pKa1 = 5.8, pKa2 = 8.9):
    /// the bell is chosen and the constants come back.
    #[test]
    fn exact_bell_is_recovered() {
        let mut text = String::from("pH\tkcat (s-1)\n");
        for i in 0..15 {
            let ph = 4.0 + 0.5 * i as f64;
            let y = PhModel::Bell.value(&[ph], &[100.0, 5.8, 8.9]) * (1.0 + 0.01 * ((i * 7) % 5) as f64 - 0.02);
            text.push_str(&format!("{ph}\t{y}\n"));
        }
        let a = analyse_ph(&PhRequest { text, ..PhRequest::default() }).unwrap();
        assert_eq!(a.comparison.preferred.as_deref(), Some("bell"), "{}", a.comparison.verdict);
        let bell = &a.fits[2];
        assert!((bell.parameters[1].value - 5.8).abs() < 0.05 && (bell.parameters[2].value - 8.9).abs() < 0.05);
        assert_eq!(bell.parameters[1].ci_method, "profile");
        assert_eq!(bell.parameters[0].unit.as_deref(), Some("s-1"));
        assert!(a.warnings.is_empty(), "{:?}", a.warnings);
        assert_eq!(a.plots[0].kind, PlotKind::PhLog);
        assert_eq!(a.plots[0].segments.len(), 3);
        assert_eq!(a.plots[0].marks.len(), 2);
    }

    #[test]
    fn refusals_and_problems() {
        let e = analyse_ph(&PhRequest { text: "pH\tkcat\n6\t1\n7\t2\n".into(), ..PhRequest::default() }).unwrap_err();
        assert!(e.message.contains("at least 4"), "{}", e.message);
        let text = "pH\tkcat\n5\t1\n6\t3\n15\t4\n7\t5\n8\t5.5\n9\t0\n";
        let a = analyse_ph(&PhRequest { text: text.into(), ..PhRequest::default() }).unwrap();
        let at: Vec<(usize, Option<usize>)> = a.problems.iter().map(|p| (p.line, p.column)).collect();
        assert_eq!(at, [(4, Some(1)), (7, Some(2))], "{:?}", a.problems);
        let e = analyse_ph(&PhRequest { text: text.into(), weighting: Weighting::Sd, ..PhRequest::default() }).unwrap_err();
        assert!(e.message.contains("sd column"));
    }
}
