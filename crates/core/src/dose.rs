//! Inhibitor series at one substrate concentration: a response against
//! [I], fitted by the four-parameter logistic (`ic50`) or by the Morrison
//! tight-binding equation (`morrison`). [`analyse_dose`] is the code path
//! behind `turnover fit --model ic50|morrison` and the page's dose-response
//! section; with a [`ChengPrusoffRequest`] it also converts the fitted IC50
//! into Ki (see [`ChengPrusoffRequest`] for the conversions and their
//! source).

use crate::error::Error;
use crate::fit::{FitSettings, FitSummary};
use crate::model::{Dimension, Observations};
use crate::fit::{Fit, ParameterEstimate};
use crate::intervals::IntervalMethod;
use crate::models::{cheng_prusoff, model_with_options, DoseResponse, Mechanism, ModelOptions};
use crate::plots::family::{dose_response_plot, morrison_plot, short_number, DosePoint};
use crate::plots::PlotData;
use crate::rates::CAUTION;
use crate::read::columns::{is_bare_concentration_name, is_inhibitor_name, is_response_name, is_signal_name, is_substrate_only_name};
use crate::read::replicates::{layout_note, problems_without_empty_replicates, replicate_columns, summarise, MeasurementColumns, ReplicateSummary};
use crate::table::{parse_table, shortage_reasons, InputProblem};
use crate::units::ConcentrationUnit;
use serde::{Deserialize, Serialize};

/// What to fit.
#[derive(Clone, Debug, Default, PartialEq, Deserialize)]
#[serde(default)]
pub struct DoseRequest {
    /// The table: [I] then the response.
    pub text: String,
    /// `ic50` or `morrison`.
    pub model: String,
    /// Total enzyme concentration [E]t in the units of [I] (Morrison).
    pub enzyme: Option<f64>,
    /// A fixed top plateau (`ic50`).
    pub fixed_top: Option<f64>,
    /// A fixed bottom plateau (`ic50`).
    pub fixed_bottom: Option<f64>,
    /// Input line numbers to leave out (every response on the line).
    pub excluded_lines: Vec<usize>,
    /// Single responses to leave out, as (input line, input column), both
    /// 1-based: with replicates in columns a line holds several responses.
    pub excluded_cells: Vec<(usize, usize)>,
    /// How intervals are computed. Default asymptotic.
    pub interval_method: crate::intervals::IntervalMethod,
    /// How the responses are weighted: uniform, relative or poisson.
    /// Default uniform.
    pub weighting: crate::weighting::Weighting,
    /// Bootstrap settings, used when `interval_method` is bootstrap.
    pub bootstrap: crate::intervals::BootstrapSettings,
    /// Convert the fitted IC50 into Ki (`ic50` only); `None` for no
    /// conversion.
    pub cheng_prusoff: Option<ChengPrusoffRequest>,
    /// Responses that are rates (a heading such as `v (µM/min)`) reported
    /// per `s`, `min` or `h`, converted before the fit (fixed plateaus are
    /// then in the converted unit); `None` or empty keeps them as read.
    /// Refused for responses that are not rates (% activity, signal).
    pub rate_time: Option<String>,
}

/// Converts the fitted IC50 into an inhibition constant Ki for a stated
/// mechanism, by the relations of Cheng & Prusoff (1973, Biochem.
/// Pharmacol. 22, 3099; the relations quoted from memory):
///
/// - competitive: Ki = IC50 / (1 + [S]/Km)
/// - uncompetitive: Ki = IC50 / (1 + Km/[S])
/// - noncompetitive: Ki = IC50
///
/// A mixed inhibitor has two constants that one IC50 cannot give, so
/// `mixed` is refused. The relations assume classical conditions: the
/// inhibitor is not tight-binding (free [I] ≈ total [I], so [E]t ≪ Ki),
/// the mechanism is the one stated, and [S] and Km hold for the assay in
/// which the IC50 was measured. Ki is a statistical estimate resting on
/// all three.
///
/// The result is a derived parameter `Ki` in the unit of [I]. Its standard
/// error is by the delta method ([`cheng_prusoff`]), with IC50's standard
/// error and, when `km_se` is given, Km's, taken as independent; [S] is
/// taken as exact. Its interval: with asymptotic intervals, Ki ± t·SE
/// (`ci_method` `delta`); with profile or bootstrap intervals and no Km
/// error, IC50's interval divided by the same factor (exact for a fixed
/// factor; `ci_method` `profile` or `bootstrap`); with a Km error, the
/// delta-method interval, since Km's uncertainty cannot enter a profile or
/// a bootstrap of these data (`ci_method` `delta`, and a note says so).
#[derive(Clone, Debug, Default, PartialEq, Deserialize)]
#[serde(default)]
pub struct ChengPrusoffRequest {
    /// `competitive`, `uncompetitive` or `noncompetitive` (`mixed` is
    /// refused with a reason).
    pub mechanism: String,
    /// The substrate concentration of the assay, in the unit of `km`;
    /// zero or positive (positive for uncompetitive).
    pub substrate: f64,
    /// The Michaelis constant of the substrate, positive.
    pub km: f64,
    /// The standard error of `km`, in its unit; `None` to take Km as exact.
    pub km_se: Option<f64>,
}

/// One point of the series.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DoseRecord {
    /// Index in the point list.
    pub row: usize,
    /// Input line.
    pub line: usize,
    /// Input column of the response, counting from 1 (with replicates in
    /// columns, which replicate this is).
    pub column: usize,
    /// Inhibitor concentration.
    pub i: f64,
    /// Response.
    pub y: f64,
    /// Whether it was left out.
    pub excluded: bool,
    /// Fitted response.
    pub fitted: f64,
}

/// The result.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DoseAnalysis {
    /// The fit record.
    pub fit: FitSummary,
    /// Every point.
    pub points: Vec<DoseRecord>,
    /// Problems with the input.
    pub problems: Vec<InputProblem>,
    /// How the table was read.
    pub notes: Vec<String>,
    /// Unit of [I], when known.
    pub inhibitor_unit: Option<String>,
    /// The responses used in the fit, by [I]: count, mean, SD and SEM (for
    /// a table and error bars; the fit itself uses every response).
    pub replicates: Vec<ReplicateSummary>,
    /// The plot (dose-response or Morrison).
    pub plots: Vec<PlotData>,
    /// The standing caution.
    pub caution: String,
}

/// The ([I], response) columns named by a header, if it names them: an
/// inhibitor column (`I`, `[I]`, `inhibitor`, ...) with any response
/// column (`response`, `activity`, `signal`, `% activity`, `v`), or a
/// `conc`/`concentration` column with a response that is not a rate (a
/// `conc`, `v` table is a Michaelis-Menten table, whose concentration is
/// [S]). A header that also names [S] is not an inhibitor series.
fn named_columns(headings: &[crate::table::ColumnHeading]) -> Option<(usize, usize)> {
    if headings.iter().any(|h| is_substrate_only_name(&h.name)) {
        return None;
    }
    let y_any = headings.iter().position(|h| is_response_name(&h.name));
    let y_signal = headings.iter().position(|h| is_signal_name(&h.name));
    if let (Some(i), Some(y)) = (headings.iter().position(|h| is_inhibitor_name(&h.name)), y_any) {
        return Some((i, y));
    }
    let conc = headings.iter().position(|h| is_bare_concentration_name(&h.name));
    match (conc, y_signal) {
        (Some(i), Some(y)) => Some((i, y)),
        _ => None,
    }
}

/// Whether `text` is an inhibitor series for [`analyse_dose`]: its header
/// names an [I] column and a response column and no [S] column (see
/// [`named_columns`]). The page uses this to decide when to show the
/// dose-response section.
pub fn is_dose_table(text: &str) -> bool {
    let table = parse_table(text);
    table.headings.as_deref().and_then(named_columns).is_some() || dose_replicates(&table).ok().flatten().is_some()
}

/// The replicate layout of an inhibitor series: `[I]` then replicate
/// responses (`rep 1`, `response 2`, `% activity A`, a repeated response
/// heading; see [`crate::read::replicates`]). A bare `conc` first column
/// is not enough here: `conc`, `rep 1`, `rep 2` is a rate table, whose
/// concentration is [S].
fn dose_replicates(table: &crate::table::Table) -> Result<Option<MeasurementColumns>, String> {
    if table.headings.is_none() {
        return Ok(None);
    }
    replicate_columns(table, &is_inhibitor_name, &is_response_name)
}

/// Reads the series and fits it.
pub fn analyse_dose(request: &DoseRequest) -> Result<DoseAnalysis, Error> {
    let name = request.model.trim();
    if name != "ic50" && name != "morrison" {
        return Err(Error::invalid_option(format!("'{name}' is not an inhibitor-series model; choose ic50 or morrison")));
    }
    // Options that do not apply to the chosen model are refused, never
    // ignored.
    if name == "morrison" {
        if request.fixed_top.is_some() || request.fixed_bottom.is_some() {
            return Err(Error::invalid_option("a fixed ceiling or floor applies to the ic50 model only; the Morrison fit has v0 and Ki_app"));
        }
        if request.cheng_prusoff.is_some() {
            return Err(Error::invalid_option(
                "the Cheng-Prusoff conversion applies to the ic50 model only; it assumes classical (not tight-binding) conditions, which the Morrison fit is for when they do not hold",
            ));
        }
    } else if request.enzyme.is_some() {
        return Err(Error::invalid_option("[E]t applies to the morrison model only; the ic50 model does not use it"));
    }
    let conversion = match &request.cheng_prusoff {
        Some(c) => Some(check_conversion(c)?),
        None => None,
    };
    let options = ModelOptions { enzyme: request.enzyme, fixed_top: request.fixed_top, fixed_bottom: request.fixed_bottom };
    let model = model_with_options(name, &options)?;
    let table = parse_table(&request.text);
    let mut notes = Vec::new();
    if table.rows.is_empty() {
        return Err(Error::invalid_data("no data rows found; paste a table with [I] in the first column and the response in the second"));
    }
    let replicated = dose_replicates(&table).map_err(Error::invalid_data)?;
    let mut problems;
    let (ci, responses_at) = if let Some(columns) = replicated {
        let (kept, empty) = problems_without_empty_replicates(&table, &columns);
        problems = kept;
        notes.push(layout_note(&columns, table.headings.as_deref(), "the response", empty));
        (columns.concentration, columns)
    } else {
        problems = table.problems.clone();
        let (ci, cy) = match &table.headings {
            Some(h) => match named_columns(h) {
                Some((i, y)) => (i, y),
                None if h.iter().any(|c| is_substrate_only_name(&c.name)) => {
                    return Err(Error::invalid_data(
                        "the header names an [S] column; an inhibitor series has [I] and a response only (fit rates at several [S] and [I] with an inhibition mechanism instead)",
                    ))
                }
                _ if h.len() >= 2 => {
                    notes.push(format!("Column 1 ('{}') is read as [I] and column 2 ('{}') as the response.", h[0].name, h[1].name));
                    (0, 1)
                }
                _ => return Err(Error::invalid_data("the table needs two columns: [I] then the response")),
            },
            None if table.width >= 2 => {
                notes.push("No header row: column 1 is read as [I] and column 2 as the response.".to_string());
                (0, 1)
            }
            None => return Err(Error::invalid_data("the table needs two columns: [I] then the response")),
        };
        let unit = table.headings.as_ref().and_then(|h| h.get(cy)).and_then(|h| h.unit.clone());
        (ci, MeasurementColumns { concentration: ci, measurements: vec![cy], unit })
    };
    let cy = responses_at.measurements[0];
    let heading = |c: usize| table.headings.as_ref().and_then(|h| h.get(c));
    let inhibitor_unit = heading(ci).and_then(|h| h.unit.as_deref()).and_then(|u| ConcentrationUnit::parse(u).ok());
    let mut response_unit = responses_at.unit.clone();
    let mut time_factor = 1.0;
    if let Some(time) = request.rate_time.as_deref().map(str::trim).filter(|t| !t.is_empty()) {
        let rate = response_unit.as_deref().and_then(|u| crate::units::RateUnit::parse(u).ok()).ok_or_else(|| {
            Error::invalid_option(format!(
                "responses per {time} need responses that are rates, with a heading such as 'v (µM/min)'; {}",
                match &response_unit {
                    Some(u) => format!("this table's responses are in '{u}'"),
                    None => "this table's response heading names no unit".to_string(),
                }
            ))
        })?;
        let (converted, factor) = crate::rates::per_time(Some(rate), &request.rate_time, &mut notes)?;
        response_unit = converted.map(|u| u.symbol());
        time_factor = factor;
    }
    let response_name = match heading(cy) {
        Some(_) if responses_at.replicated() => "response".to_string(),
        Some(h) => h.name.clone(),
        None => "response".to_string(),
    };
    let response_label = match &response_unit {
        Some(u) => format!("{response_name} ({u})"),
        None => response_name,
    };
    let mut points = Vec::new();
    for row in &table.rows {
        let i = row.cells.get(ci).copied().flatten();
        let ys: Vec<(usize, f64)> =
            responses_at.measurements.iter().filter_map(|&c| row.cells.get(c).copied().flatten().map(|y| (c, y))).collect();
        let (Some(i), false) = (i, ys.is_empty()) else {
            if !problems.iter().any(|p| p.line == row.line) {
                problems.push(InputProblem { line: row.line, column: None, message: "the row has no [I] or no response".into() });
            }
            continue;
        };
        if i < 0.0 {
            problems.push(InputProblem { line: row.line, column: Some(ci + 1), message: "a concentration cannot be negative".into() });
            continue;
        }
        for (column, y) in ys {
            let excluded = request.excluded_lines.contains(&row.line) || request.excluded_cells.contains(&(row.line, column + 1));
            points.push(DoseRecord { row: points.len(), line: row.line, column: column + 1, i, y: y * time_factor, excluded, fitted: f64::NAN });
        }
    }
    problems.sort_by_key(|p| (p.line, p.column));
    let used: Vec<DoseRecord> = points.iter().filter(|p| !p.excluded).cloned().collect();
    let n_params = model.parameters().len();
    if used.len() <= n_params {
        return Err(Error::invalid_data(format!(
            "only {} usable point(s) remain; at least {} are needed to fit {} parameters with an uncertainty{}",
            used.len(),
            n_params + 1,
            n_params,
            shortage_reasons(&problems, points.iter().filter(|p| p.excluded).count(), 10)
        )));
    }
    let responses: Vec<f64> = used.iter().map(|p| p.y).collect();
    let weights = request.weighting.weights_without_sd(&responses).map_err(|(index, message)| match index {
        Some(i) => Error::invalid_data(format!("line {}: {message}", used[i].line)),
        None => Error::invalid_option(message),
    })?;
    let data = Observations::new(1, used.iter().map(|p| p.i).collect(), responses, weights)?;
    let (fit, data) = crate::fit::fit_weighted(model.as_ref(), &data, request.weighting, None, &FitSettings::default())?;
    let values = fit.values().to_vec();
    for p in &mut points {
        p.fitted = model.value(&[p.i], &values);
    }
    let mut summary = fit.summary.clone();
    summary.weighting = request.weighting.name().into();
    if fit.summary.termination == crate::solver::Termination::NoFiniteOptimum {
        // Only the profile says which side the data bound when the fit ran off.
        crate::intervals::apply_profile_intervals(&mut summary, model.as_ref(), &data, &fit, true);
    } else {
        crate::intervals::apply_interval_method(&mut summary, model.as_ref(), &data, &fit, request.interval_method, &request.bootstrap)?;
        if request.interval_method == IntervalMethod::Asymptotic && fit.summary.converged {
            // Flag constants whose profile never closes; the intervals stay.
            crate::intervals::apply_profile_intervals(&mut summary, model.as_ref(), &data, &fit, false);
        }
    }
    let i_symbol = inhibitor_unit.map(|u| u.symbol().to_string());
    for (estimate, spec) in summary.parameters.iter_mut().zip(model.parameters()) {
        estimate.unit = match spec.dimension {
            Dimension::Response => response_unit.clone(),
            Dimension::Predictor(_) => i_symbol.clone(),
            Dimension::Dimensionless => Some(String::new()),
            Dimension::Unspecified => None,
        };
    }
    let unit_text = i_symbol.clone().unwrap_or_default();
    let dose_points: Vec<DosePoint> = points.iter().map(|p| DosePoint { row: p.row, i: p.i, y: p.y, excluded: p.excluded }).collect();
    let curve = |i: f64| model.value(&[i], &values);
    let plot = if name == "morrison" {
        let enzyme = request.enzyme.expect("checked by model_with_options");
        let (v0, ki) = (values[0], values[1]);
        // Rule of thumb (common practice, no source): below about 10×[E]t
        // the inhibitor is tight-binding, free [I] differs from total [I],
        // and Ki_app rests on [E]t being right.
        if summary.converged && ki < 10.0 * enzyme {
            summary.warnings.push(format!(
                "Ki_app ({}) is below 10×[E]t ([E]t = {}): the inhibitor binds tightly, so the result rests on [E]t being the true active-enzyme concentration; when Ki_app ≪ [E]t the data measure [E]t more than Ki_app (rule of thumb: common practice, no source).",
                short_number(ki),
                short_number(enzyme)
            ));
        }
        let mut plot = morrison_plot(&dose_points, &curve, v0, ki, &unit_text, response_unit.as_deref().unwrap_or(""));
        // The response is labelled as the table names it (v, % activity, ...).
        plot.y_label = response_label.clone();
        plot
    } else {
        let full = DoseResponse::new(request.fixed_top, request.fixed_bottom).full(&values);
        if summary.converged && (full[2] <= 0.0 || !full[2].is_finite()) {
            summary.warnings.push("The fitted IC50 is not positive; the curve does not describe the data.".to_string());
        }
        let i_max = used.iter().map(|p| p.i).fold(0.0, f64::max);
        let i_min = used.iter().map(|p| p.i).filter(|i| *i > 0.0).fold(f64::INFINITY, f64::min);
        if summary.converged && (full[2] > i_max || full[2] < i_min) {
            summary.warnings.push("The IC50 lies outside the tested concentrations; it is an extrapolation.".to_string());
        }
        if let Some((conversion, mechanism)) = &conversion {
            add_ki(&mut summary, &fit, &request.fixed_top, &request.fixed_bottom, conversion, *mechanism, request.interval_method, &mut notes)?;
        }
        dose_response_plot(&dose_points, &curve, full[2], summary.parameters.iter().find(|p| p.name == "IC50").and_then(|p| p.std_error), &unit_text, &response_label)
    };
    let replicates = summarise(&used.iter().map(|p| (p.i, p.y)).collect::<Vec<_>>());
    Ok(DoseAnalysis { fit: summary, points, problems, notes, inhibitor_unit: i_symbol, replicates, plots: vec![plot], caution: CAUTION.to_string() })
}

/// Checks the numbers of a conversion request and reads its mechanism.
fn check_conversion(request: &ChengPrusoffRequest) -> Result<(ChengPrusoffRequest, Mechanism), Error> {
    let mechanism = Mechanism::ALL.into_iter().find(|m| m.name() == request.mechanism.trim()).ok_or_else(|| {
        Error::invalid_option(format!(
            "Cheng-Prusoff: '{}' is not a mechanism; choose competitive, uncompetitive or noncompetitive",
            request.mechanism
        ))
    })?;
    if !(request.km.is_finite() && request.km > 0.0) {
        return Err(Error::invalid_option(format!("Cheng-Prusoff: Km must be a positive number, not {}", request.km)));
    }
    if !(request.substrate.is_finite() && request.substrate >= 0.0) {
        return Err(Error::invalid_option(format!("Cheng-Prusoff: [S] must be zero or a positive number, not {}", request.substrate)));
    }
    if let Some(se) = request.km_se {
        if !(se.is_finite() && se >= 0.0) {
            return Err(Error::invalid_option(format!("Cheng-Prusoff: the standard error of Km must be zero or positive, not {se}")));
        }
    }
    Ok((request.clone(), mechanism))
}

/// Appends the derived `Ki` (see [`ChengPrusoffRequest`]).
#[allow(clippy::too_many_arguments)]
fn add_ki(
    summary: &mut FitSummary,
    fit: &Fit,
    fixed_top: &Option<f64>,
    fixed_bottom: &Option<f64>,
    request: &ChengPrusoffRequest,
    mechanism: Mechanism,
    method: IntervalMethod,
    notes: &mut Vec<String>,
) -> Result<(), Error> {
    // IC50 sits after the plateaus that are fitted.
    let k = usize::from(fixed_top.is_none()) + usize::from(fixed_bottom.is_none());
    let ic50 = summary.parameters[k].clone();
    let ratio = request.substrate / request.km;
    // [S]/Km with [S] exact: se(ratio) = [S]·se(Km)/Km² (delta method).
    let ratio_se = request.km_se.map(|se| request.substrate * se / (request.km * request.km));
    let converted = cheng_prusoff(ic50.value, ic50.std_error, mechanism, ratio, ratio_se)?;
    let with_km_error = request.km_se.is_some_and(|se| se > 0.0);
    let delta = |se: Option<f64>| match (se, fit.t_quantile) {
        (Some(se), Some(t)) => (Some(converted.ki - t * se), Some(converted.ki + t * se)),
        _ => (None, None),
    };
    let (ci_low, ci_high, ci_method) = match method {
        IntervalMethod::Asymptotic => {
            let (low, high) = delta(converted.std_error);
            (low, high, "delta".into())
        }
        _ if with_km_error => {
            notes.push(format!(
                "Ki's interval is by the delta method (Ki ± t·SE), not by the {} method: the standard error of Km is not part of these data, so it cannot enter a {} of them.",
                method.name(),
                method.name()
            ));
            let (low, high) = delta(converted.std_error);
            (low, high, "delta".into())
        }
        _ => (ic50.ci_low.map(|v| v / converted.divisor), ic50.ci_high.map(|v| v / converted.divisor), ic50.ci_method.clone()),
    };
    let relation = match mechanism {
        Mechanism::Competitive => "Ki = IC50/(1 + [S]/Km)",
        Mechanism::Uncompetitive => "Ki = IC50/(1 + Km/[S])",
        _ => "Ki = IC50",
    };
    notes.push(format!(
        "Ki by Cheng-Prusoff for a {} inhibitor: {relation} with [S] = {}, Km = {}{} (divisor {}). This assumes classical conditions: the inhibitor is not tight-binding (free [I] ≈ total [I]), the mechanism is the one stated, and [S] and Km hold for this assay.",
        mechanism.name(),
        short_number(request.substrate),
        short_number(request.km),
        request.km_se.map_or(String::new(), |se| format!(" ± {}", short_number(se))),
        short_number(converted.divisor)
    ));
    summary.parameters.push(ParameterEstimate {
        name: "Ki".to_string(),
        value: converted.ki,
        std_error: converted.std_error,
        ci_low,
        ci_high,
        unit: ic50.unit.clone(),
        derived: true,
        ci_method,
        flag: None,
        bias: None,
        value_bias_corrected: None,
    });
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn morrison_needs_the_enzyme_and_warns_when_tight() {
        let text = "[I] (nM)\tv\n0\t10\n1\t8.2\n2\t6.6\n5\t3.3\n10\t1.0\n20\t0.4\n";
        let e = analyse_dose(&DoseRequest { text: text.into(), model: "morrison".into(), ..Default::default() }).unwrap_err();
        assert!(e.message.contains("[E]t"), "{}", e.message);
        let a = analyse_dose(&DoseRequest { text: text.into(), model: "morrison".into(), enzyme: Some(5.0), ..Default::default() }).unwrap();
        assert!(a.fit.converged);
        assert!(a.fit.warnings.iter().any(|w| w.contains("below 10×[E]t")), "{:?}", a.fit.warnings);
        assert_eq!(a.fit.parameters[1].unit.as_deref(), Some("nM"));
    }

    /// Invented, noise-free-ish series for the conversion tests.
    const SERIES: &str = "[I] (µM)\t% activity\n0\t99.1\n0.1\t96.8\n0.3\t88.9\n1\t68.2\n3\t40.5\n10\t16.1\n30\t6.2\n100\t2.9\n0\t100.6\n1\t70.3\n10\t14.8\n";

    fn converted(mechanism: &str, substrate: f64, km: f64, km_se: Option<f64>, method: IntervalMethod) -> DoseAnalysis {
        let conversion = ChengPrusoffRequest { mechanism: mechanism.into(), substrate, km, km_se };
        let request = DoseRequest {
            text: SERIES.into(),
            model: "ic50".into(),
            cheng_prusoff: Some(conversion),
            interval_method: method,
            ..Default::default()
        };
        analyse_dose(&request).unwrap()
    }

    fn parameter<'a>(a: &'a DoseAnalysis, name: &str) -> &'a ParameterEstimate {
        a.fit.parameters.iter().find(|p| p.name == name).unwrap()
    }

    /// Cheng & Prusoff (1973): competitive Ki = IC50/(1 + [S]/Km),
    /// uncompetitive Ki = IC50/(1 + Km/[S]), noncompetitive Ki = IC50, on
    /// the IC50 this very fit gives (the relations from memory).
    #[test]
    fn ki_follows_the_stated_relation_for_each_mechanism() {
        for (mechanism, divisor) in [("competitive", 1.0 + 50.0 / 20.0), ("uncompetitive", 1.0 + 20.0 / 50.0), ("noncompetitive", 1.0)] {
            let a = converted(mechanism, 50.0, 20.0, None, IntervalMethod::Asymptotic);
            let (ic50, ki) = (parameter(&a, "IC50"), parameter(&a, "Ki"));
            assert!((ki.value - ic50.value / divisor).abs() < 1e-12 * ki.value, "{mechanism}");
            assert!((ki.std_error.unwrap() - ic50.std_error.unwrap() / divisor).abs() < 1e-12, "{mechanism}");
            assert!(ki.derived && !ic50.derived);
            assert_eq!(ki.unit.as_deref(), Some("µM"));
            assert_eq!(ki.ci_method, "delta");
            // The interval is Ki ± t(0.975, n − p)·SE, n − p = 11 − 4 = 7;
            // t(0.975, 7) = 2.364624 (statistical tables).
            let half = (ki.ci_high.unwrap() - ki.ci_low.unwrap()) / 2.0;
            assert!((half / ki.std_error.unwrap() - 2.364624).abs() < 1e-5, "{half}");
            assert!(a.notes.iter().any(|n| n.contains("not tight-binding")), "{:?}", a.notes);
        }
    }

    /// With a Km error the delta method adds (IC50·[S]/Km²)²·var(Km)/(1 +
    /// [S]/Km)⁴ for competitive; checked against a central difference of
    /// Ki in Km.
    #[test]
    fn km_error_enters_by_the_delta_method() {
        let (s, km, km_se) = (50.0, 20.0, 3.0);
        let a = converted("competitive", s, km, Some(km_se), IntervalMethod::Asymptotic);
        let ic50 = parameter(&a, "IC50");
        let ki = parameter(&a, "Ki");
        let h = 1e-5;
        let slope = (ic50.value / (1.0 + s / (km + h)) - ic50.value / (1.0 + s / (km - h))) / (2.0 * h);
        let expected = ((ic50.std_error.unwrap() / (1.0 + s / km)).powi(2) + (slope * km_se).powi(2)).sqrt();
        assert!((ki.std_error.unwrap() - expected).abs() < 1e-7 * expected, "{} vs {expected}", ki.std_error.unwrap());
    }

    /// With profile intervals and Km exact, Ki's interval is IC50's divided
    /// by the factor; with a Km error it falls back to the delta method and
    /// says so.
    #[test]
    fn profile_interval_is_scaled_and_km_error_falls_back_to_delta() {
        let a = converted("competitive", 10.0, 10.0, None, IntervalMethod::Profile);
        let (ic50, ki) = (parameter(&a, "IC50"), parameter(&a, "Ki"));
        assert_eq!(ki.ci_method, "profile");
        assert!((ki.ci_low.unwrap() - ic50.ci_low.unwrap() / 2.0).abs() < 1e-12);
        assert!((ki.ci_high.unwrap() - ic50.ci_high.unwrap() / 2.0).abs() < 1e-12);
        let b = converted("competitive", 10.0, 10.0, Some(1.0), IntervalMethod::Profile);
        assert_eq!(parameter(&b, "Ki").ci_method, "delta");
        assert!(b.notes.iter().any(|n| n.contains("delta method")), "{:?}", b.notes);
    }

    /// Options that do not apply are refused with a reason, never ignored.
    #[test]
    fn options_that_do_not_apply_are_refused() {
        let conversion = Some(ChengPrusoffRequest { mechanism: "competitive".into(), substrate: 1.0, km: 1.0, km_se: None });
        let check = |request: DoseRequest, expected: &str| {
            let e = analyse_dose(&request).unwrap_err();
            assert!(e.message.contains(expected), "{}", e.message);
        };
        let base = DoseRequest { text: SERIES.into(), model: "ic50".into(), ..Default::default() };
        check(DoseRequest { model: "morrison".into(), enzyme: Some(1.0), cheng_prusoff: conversion.clone(), ..base.clone() }, "ic50 model only");
        check(DoseRequest { model: "morrison".into(), enzyme: Some(1.0), fixed_top: Some(100.0), ..base.clone() }, "ic50 model only");
        check(DoseRequest { enzyme: Some(1.0), ..base.clone() }, "morrison model only");
        let with = |mechanism: &str, substrate: f64, km: f64, km_se: Option<f64>| DoseRequest {
            cheng_prusoff: Some(ChengPrusoffRequest { mechanism: mechanism.into(), substrate, km, km_se }),
            ..base.clone()
        };
        check(with("mixed", 1.0, 1.0, None), "two constants");
        check(with("allosteric", 1.0, 1.0, None), "not a mechanism");
        check(with("competitive", 1.0, 0.0, None), "Km must be a positive number");
        check(with("competitive", -1.0, 1.0, None), "[S] must be zero or a positive");
        check(with("competitive", 1.0, 1.0, Some(-2.0)), "standard error of Km");
        check(with("uncompetitive", 0.0, 1.0, None), "no IC50 at [S] = 0");
    }

    #[test]
    fn dose_tables_are_told_from_rate_and_inhibition_tables() {
        assert!(is_dose_table(SERIES));
        assert!(is_dose_table("[I] (nM)\tv\n1\t2\n"));
        assert!(is_dose_table("conc (µM)\tsignal\n1\t2\n"));
        assert!(is_dose_table("inhibitor (µM)\tresponse\n1\t2\n"));
        assert!(!is_dose_table("conc (mM)\tv\n1\t2\n"), "conc with v is a Michaelis-Menten table");
        assert!(!is_dose_table("[S] (mM)\t[I] (µM)\tv\n1\t0\t2\n"));
        assert!(!is_dose_table("[S] (mM)\tv\n1\t2\n"));
        let e = analyse_dose(&DoseRequest { text: "[S]\tv\n1\t2\n2\t3\n".into(), model: "ic50".into(), ..Default::default() }).unwrap_err();
        assert!(e.message.contains("names an [S] column"), "{}", e.message);
    }

    /// An inhibitor series with replicate responses in columns (invented
    /// data, stated as such) against the same responses one per line in
    /// the same order: identical constants to 1e-12 for both models, and
    /// the per-[I] summary.
    #[test]
    fn replicate_columns_read_as_the_long_layout() {
        let rows = [
            ("0", ["98.1", "101.5", "99.2"]),
            ("1", ["93.0", "95.8", "91.7"]),
            ("3", ["80.2", "77.9", "82.4"]),
            ("10", ["52.3", "49.0", "54.1"]),
            ("30", ["24.8", "27.1", "22.9"]),
            ("100", ["9.6", "8.1", "10.4"]),
            ("300", ["3.9", "2.7", "4.2"]),
        ];
        let mut long = String::from("[I] (nM)\t% activity\n");
        let mut wide = String::from("[I] (nM)\trep 1\trep 2\trep 3\n");
        let mut repeated = String::from("Inhibitor (nM),response,response,response\n");
        for (i, ys) in rows {
            for y in ys {
                long.push_str(&format!("{i}\t{y}\n"));
            }
            wide.push_str(&format!("{i}\t{}\n", ys.join("\t")));
            repeated.push_str(&format!("{i},{}\n", ys.join(",")));
        }
        assert!(is_dose_table(&wide) && is_dose_table(&repeated));
        assert!(!is_dose_table("conc (µM)\trep 1\trep 2\n1\t2\t3\n") && !is_dose_table("1\t2\t3\n2\t3\t4\n"));
        for (model, enzyme) in [("ic50", None), ("morrison", Some(2.0))] {
            let reference = analyse_dose(&DoseRequest { text: long.clone(), model: model.into(), enzyme, ..Default::default() }).unwrap();
            assert_eq!(reference.fit.n, 21);
            for text in [&wide, &repeated] {
                let result = analyse_dose(&DoseRequest { text: text.clone(), model: model.into(), enzyme, ..Default::default() }).unwrap();
                assert!(result.problems.is_empty(), "{:?}", result.problems);
                assert_eq!(result.fit.n, 21);
                for (a, b) in result.fit.parameters.iter().zip(&reference.fit.parameters) {
                    assert!((a.value - b.value).abs() <= 1e-12 * b.value.abs(), "{model} {}: {} {}", a.name, a.value, b.value);
                    let (sa, sb) = (a.std_error.unwrap(), b.std_error.unwrap());
                    assert!((sa - sb).abs() <= 1e-12 * sb, "{model} {} SE: {sa} {sb}", a.name);
                }
                assert_eq!(result.replicates, reference.replicates);
                assert_eq!(result.inhibitor_unit.as_deref(), Some("nM"));
            }
        }
        let reference = analyse_dose(&DoseRequest { text: long, model: "ic50".into(), ..Default::default() }).unwrap();
        let at_ten = &reference.replicates[3];
        assert_eq!((at_ten.concentration, at_ten.count), (10.0, 3));
        assert!((at_ten.mean - (52.3 + 49.0 + 54.1) / 3.0).abs() < 1e-12);
        let mut request = DoseRequest { text: wide, model: "ic50".into(), excluded_cells: vec![(5, 3)], ..Default::default() };
        let fewer = analyse_dose(&request).unwrap();
        assert_eq!(fewer.fit.n, 20);
        assert!(fewer.points.iter().filter(|p| p.excluded).map(|p| (p.line, p.column, p.y)).eq([(5, 3, 49.0)]));
        request.excluded_cells.clear();
        request.excluded_lines = vec![5];
        assert_eq!(analyse_dose(&request).unwrap().fit.n, 18);
    }
}
