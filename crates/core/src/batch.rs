//! Many curves in one table: a column (`curve`, `compound`, `sample` or
//! `well`, or one the caller names) groups the rows, and each group is
//! fitted alone with the chosen model by the same analysis a one-curve
//! table goes through ([`analyse_rates`], [`analyse_inhibition`] or
//! [`analyse_dose`]).
//!
//! **Invariant:** a curve's fit is the fit of the table made of its rows
//! with the grouping column removed, bit for bit: [`split_curves`] writes
//! that table ([`CurveInput::text`]) and [`fit_curve`] hands it to the
//! one-curve analysis. Line and column numbers of problems are mapped back
//! to the batch table. Each column's number style is therefore decided from
//! the curve's own cells, as it would be for the curve alone.
//!
//! [`analyse_batch`] is single-threaded and deterministic; a front end may
//! call [`split_curves`] once and [`fit_curve`] on the curves in any order
//! or in parallel, since each curve depends on nothing but its own rows.
//!
//! Each record carries flags with their reasons ([`CurveFlag`]); the
//! thresholds are in [`FlagSettings`].

use crate::dose::{analyse_dose, DoseRequest};
use crate::error::Error;
use crate::fit::FitSummary;
use crate::inhibition::{analyse_inhibition, InhibitionRequest};
use crate::intervals::{BootstrapSettings, IntervalMethod};
use crate::model::Dimension;
use crate::plots::PlotData;
use crate::models::{model_input, model_with_options, ModelInput, ModelOptions};
use crate::plate::{normalise_plates, PlateQuality};
use crate::rates::{analyse_rates, RateRequest, CAUTION};
use crate::read::columns::normalise_name;
use crate::table::{detect_separator, is_comment_line, parse_heading, split_line, InputProblem, Separator};
use crate::units::ConcentrationUnit;
use crate::weighting::Weighting;
use serde::{Deserialize, Serialize};

/// The column names that group rows when the request names none, in the
/// order they are looked for.
pub const GROUP_NAMES: [&str; 4] = ["curve", "compound", "sample", "well"];

/// What to fit: the table, the grouping column, the model and the settings
/// every curve shares.
#[derive(Clone, Debug, Default, PartialEq, Deserialize)]
#[serde(default)]
pub struct BatchRequest {
    /// The table, with a header row naming the grouping column.
    pub text: String,
    /// The grouping column's name as in the header (compared without case,
    /// brackets, spaces, `_`, `-` or `.`); empty: the first of
    /// [`GROUP_NAMES`] found.
    pub group_by: String,
    /// Any model name the one-curve fits know (`mm`, `hill`,
    /// `substrate-inhibition`, `competitive`, ..., `ic50`, `morrison`);
    /// empty means `mm`.
    pub model: String,
    /// Unit of [S] (rate and mechanism models); `None`: from the header.
    pub substrate_unit: Option<String>,
    /// Unit of v (rate and mechanism models); `None`: from the header.
    pub rate_unit: Option<String>,
    /// [E]t: for kcat with its `enzyme_unit` (rate models), or in the unit
    /// of [I] (morrison).
    pub enzyme: Option<f64>,
    /// Unit of `enzyme` for kcat.
    pub enzyme_unit: Option<String>,
    /// A fixed top plateau (`ic50`).
    pub fixed_top: Option<f64>,
    /// A fixed bottom plateau (`ic50`).
    pub fixed_bottom: Option<f64>,
    /// Lines of the batch table to leave out.
    pub excluded_lines: Vec<usize>,
    /// Weighting of every curve. Default uniform.
    pub weighting: Weighting,
    /// Interval method of every curve. Default asymptotic.
    pub interval_method: IntervalMethod,
    /// Bootstrap settings (each curve is resampled from the same seed).
    pub bootstrap: BootstrapSettings,
    /// The thresholds of the flags.
    pub flags: FlagSettings,
    /// Turn each plate's signals into % activity by its control wells
    /// (a `role` column; see [`crate::plate`]) before fitting.
    pub normalise: bool,
}

/// Thresholds of the per-curve flags. None of them has a published source:
/// each is common practice in screening work (no source), and each is a
/// setting so a laboratory can use its own.
#[derive(Clone, Copy, Debug, PartialEq, Deserialize, Serialize)]
#[serde(default)]
pub struct FlagSettings {
    /// A fitted constant whose standard error exceeds this multiple of its
    /// absolute value (or has none) is not determined by the data; for a
    /// response level (a plateau, Vmax) the larger of its value and the
    /// fitted response span is the scale. Default 1 (100 %).
    pub max_relative_se: f64,
    /// The plausible range of the logistic's Hill slope (`ic50`).
    /// Default 0.5 to 3.
    pub hill_slope_range: (f64, f64),
    /// The responses of the high and low controls (no inhibition, full
    /// inhibition). `None`: 100 and 0 when the response column is a
    /// percentage (`% activity`, `% control`, `%`), else no plateau check.
    pub control_levels: Option<(f64, f64)>,
    /// A fitted plateau further from its control than this share of the
    /// control window |high − low| is flagged. Default 0.2.
    pub plateau_tolerance: f64,
    /// A used point whose residual exceeds this share of the control
    /// window (when control levels are known) or else of the fitted
    /// response span (largest minus smallest fitted value over the used
    /// points) is flagged. Default 0.15 (five times a noise SD of 3 % of
    /// the window).
    pub max_residual_share: f64,
}

impl Default for FlagSettings {
    fn default() -> Self {
        FlagSettings {
            max_relative_se: 1.0,
            hill_slope_range: (0.5, 3.0),
            control_levels: None,
            plateau_tolerance: 0.2,
            max_residual_share: 0.15,
        }
    }
}

/// One curve's rows, as the table it would be alone.
#[derive(Clone, Debug, PartialEq)]
pub struct CurveInput {
    /// The group's name, as written in the grouping column.
    pub name: String,
    /// The curve's table: the header and its rows, without the grouping
    /// column, one line each.
    pub text: String,
    /// `lines[k]` is the batch table's line of the curve table's line
    /// `k + 1` (`lines[0]` is the header's).
    pub lines: Vec<usize>,
    /// The grouping column's index (0-based) in the batch table.
    pub group_column: usize,
}

/// The batch table cut into curves.
#[derive(Clone, Debug, PartialEq)]
pub struct CurveSplit {
    /// The grouping column's name as the header writes it.
    pub group_by: String,
    /// The curves in the order their names first appear.
    pub curves: Vec<CurveInput>,
    /// Rows that belong to no curve (no name in the grouping column).
    pub problems: Vec<InputProblem>,
}

/// A flag on one curve: a machine code and the reason in words.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct CurveFlag {
    /// `no-fit`, `not-converged`, `undetermined`, `ic50-outside-range`,
    /// `steepness-implausible`, `plateau-far-from-controls` or
    /// `large-residuals`.
    pub code: String,
    /// Why, with the numbers.
    pub reason: String,
}

/// pIC50 = −log10(IC50 / M), from a fitted IC50 whose [I] unit is known.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PIc50 {
    /// The value.
    pub value: f64,
    /// By the delta method: SE(IC50) / (IC50 · ln 10).
    pub std_error: Option<f64>,
    /// −log10 of the IC50 interval's upper end (in M).
    pub ci_low: Option<f64>,
    /// −log10 of the IC50 interval's lower end (in M); `None` when that end
    /// is not positive.
    pub ci_high: Option<f64>,
}

/// One curve's result.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct CurveResult {
    /// The group's name.
    pub curve: String,
    /// The fit, or `None` when the curve could not be fitted.
    pub fit: Option<FitSummary>,
    /// Why there is no fit.
    pub error: Option<String>,
    /// pIC50 with its interval (`ic50` with a known [I] unit).
    pub pic50: Option<PIc50>,
    /// Flags with their reasons, in the order of [`CurveFlag::code`]'s list.
    pub flags: Vec<CurveFlag>,
    /// The curve's input problems, at the batch table's lines and columns.
    pub problems: Vec<InputProblem>,
    /// How the curve's table was read (column numbers count without the
    /// grouping column).
    pub notes: Vec<String>,
}

/// Every curve's result.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct BatchAnalysis {
    /// The grouping column's name as the header writes it.
    pub group_by: String,
    /// One record per curve, in the order the names first appear.
    pub curves: Vec<CurveResult>,
    /// Each plate's controls, Z′ and signal window, when normalised.
    pub plates: Vec<PlateQuality>,
    /// Rows that belong to no curve.
    pub problems: Vec<InputProblem>,
    /// The standing caution.
    pub caution: String,
}

/// Fits every curve of the table, one after the other.
pub fn analyse_batch(request: &BatchRequest) -> Result<BatchAnalysis, Error> {
    let (split, plates) = prepare_batch(request)?;
    let curves = split.curves.iter().map(|c| fit_curve(request, c)).collect();
    Ok(BatchAnalysis { group_by: split.group_by, curves, plates, problems: split.problems, caution: CAUTION.to_string() })
}

/// Checks the request, normalises the plates when asked and cuts the table
/// into curves: everything before the per-curve fits.
pub fn prepare_batch(request: &BatchRequest) -> Result<(CurveSplit, Vec<PlateQuality>), Error> {
    check_request(request)?;
    if request.normalise {
        let normalised = normalise_plates(&request.text)?;
        Ok((split_curves(&normalised.text, &request.group_by)?, normalised.plates))
    } else {
        Ok((split_curves(&request.text, &request.group_by)?, Vec::new()))
    }
}

/// Refuses a model name no one-curve fit knows.
pub fn check_request(request: &BatchRequest) -> Result<(), Error> {
    let model = request.model.trim();
    if !model.is_empty() && model_input(model).is_none() {
        return Err(Error::invalid_option(format!("'{model}' is not a model name")));
    }
    Ok(())
}

/// Cuts the table into curves by the grouping column (see [`BatchRequest::group_by`]).
pub fn split_curves(text: &str, group_by: &str) -> Result<CurveSplit, Error> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let lines: Vec<(usize, &str)> = text
        .split('\n')
        .enumerate()
        .map(|(index, line)| (index + 1, line.strip_suffix('\r').unwrap_or(line)))
        .filter(|(_, line)| !line.trim().is_empty() && !is_comment_line(line))
        .collect();
    let Some(&(header_line, header)) = lines.first() else {
        return Err(Error::invalid_data("no data rows found; a batch table needs a header row and rows of data"));
    };
    let separator = detect_separator(lines.iter().map(|(_, line)| *line));
    let headings: Vec<String> = split_line(header, separator).0.iter().map(|c| parse_heading(c).name).collect();
    let wanted: Vec<String> = if group_by.trim().is_empty() {
        GROUP_NAMES.iter().map(|n| n.to_string()).collect()
    } else {
        vec![normalise_name(group_by)]
    };
    let group_column = wanted
        .iter()
        .find_map(|w| headings.iter().position(|h| normalise_name(h) == *w))
        .ok_or_else(|| {
            if group_by.trim().is_empty() {
                Error::invalid_data(format!(
                    "no column groups the rows into curves: the header ({}) names none of curve, compound, sample or well; name the grouping column",
                    headings.join(", ")
                ))
            } else {
                Error::invalid_data(format!("the header ({}) has no column '{}' to group the rows by", headings.join(", "), group_by.trim()))
            }
        })?;
    let join = |cells: &[std::borrow::Cow<str>]| -> String {
        let kept: Vec<String> =
            cells.iter().enumerate().filter(|(k, _)| *k != group_column).map(|(_, c)| quoted(c, separator)).collect();
        kept.join(&separator_char(separator).to_string())
    };
    let header_text = join(&split_line(header, separator).0);
    let mut curves: Vec<CurveInput> = Vec::new();
    let mut index: std::collections::HashMap<String, usize> = std::collections::HashMap::new();
    let mut problems = Vec::new();
    for &(line, raw) in &lines[1..] {
        let (cells, _) = split_line(raw, separator);
        let name = cells.get(group_column).map(|c| c.trim().to_string()).unwrap_or_default();
        if name.is_empty() {
            problems.push(InputProblem {
                line,
                column: Some(group_column + 1),
                message: format!("no name in the '{}' column, so the row belongs to no curve", headings[group_column]),
            });
            continue;
        }
        let k = *index.entry(name.clone()).or_insert_with(|| {
            curves.push(CurveInput {
                name: name.clone(),
                text: header_text.clone() + "\n",
                lines: vec![header_line],
                group_column,
            });
            curves.len() - 1
        });
        let curve = &mut curves[k];
        curve.text.push_str(&join(&cells));
        curve.text.push('\n');
        curve.lines.push(line);
    }
    Ok(CurveSplit { group_by: headings[group_column].clone(), curves, problems })
}

fn separator_char(separator: Separator) -> char {
    match separator {
        Separator::Comma => ',',
        Separator::Semicolon => ';',
        // A whitespace-separated cell holds no whitespace, so a tab keeps
        // every cell as it was.
        Separator::Tab | Separator::Whitespace => '\t',
    }
}

/// A cell written back so [`split_line`] reads it as it was.
fn quoted(cell: &str, separator: Separator) -> String {
    if cell.contains(separator_char(separator)) || cell.starts_with('"') {
        format!("\"{}\"", cell.replace('"', "\"\""))
    } else {
        cell.to_string()
    }
}

/// The one-curve analysis of a curve, as its input says (the logistic or
/// Morrison for [I] tables, a mechanism for [S] and [I], a rate law
/// otherwise), with that analysis' first plot (its direct plot).
fn curve_analysis(request: &BatchRequest, curve: &CurveInput, model: &str) -> Result<(Fitted, Option<PlotData>), Error> {
    // The batch table's excluded lines, as the curve table's lines.
    let excluded: Vec<usize> = curve
        .lines
        .iter()
        .enumerate()
        .filter(|(_, line)| request.excluded_lines.contains(line))
        .map(|(k, _)| k + 1)
        .collect();
    match model_input(model) {
        Some(ModelInput::Inhibitor) => analyse_dose(&DoseRequest {
            rate_time: None,
            text: curve.text.clone(),
            model: model.to_string(),
            enzyme: request.enzyme,
            fixed_top: request.fixed_top,
            fixed_bottom: request.fixed_bottom,
            excluded_lines: excluded,
            excluded_cells: Vec::new(),
            interval_method: request.interval_method,
            weighting: request.weighting,
            bootstrap: request.bootstrap,
            cheng_prusoff: None,
        })
        .map(|a| {
            let used: Vec<(f64, f64, f64)> = a.points.iter().filter(|p| !p.excluded).map(|p| (p.i, p.y, p.fitted)).collect();
            let pic50 = if model == "ic50" { pic50(&a.fit, a.inhibitor_unit.as_deref()) } else { None };
            let plot = a.plots.into_iter().next();
            (Fitted { fit: a.fit, used, problems: a.problems, notes: a.notes, pic50, dimensions: Vec::new() }, plot)
        }),
        Some(ModelInput::SubstrateAndInhibitor) => analyse_inhibition(&InhibitionRequest {
            rate_time: None,
            text: curve.text.clone(),
            models: vec![model.to_string()],
            excluded_lines: excluded,
            excluded_cells: Vec::new(),
            substrate_unit: request.substrate_unit.clone(),
            inhibitor_unit: None,
            rate_unit: request.rate_unit.clone(),
            weighting: request.weighting,
            interval_method: request.interval_method,
            bootstrap: request.bootstrap,
        })
        .map(|mut a| {
            let used = a.points.iter().filter(|p| !p.excluded).map(|p| (p.s, p.v, p.fitted)).collect();
            let plot = a.plots.into_iter().next();
            (Fitted { fit: a.fits.swap_remove(0), used, problems: a.problems, notes: a.notes, pic50: None, dimensions: Vec::new() }, plot)
        }),
        Some(ModelInput::TwoSubstrates) => crate::bisubstrate::analyse_bisubstrate(&crate::bisubstrate::BisubstrateRequest {
            text: curve.text.clone(),
            models: vec![model.to_string()],
            excluded_lines: excluded,
            rate_unit: request.rate_unit.clone(),
            enzyme: request.enzyme,
            enzyme_unit: request.enzyme_unit.clone(),
            weighting: request.weighting,
            interval_method: request.interval_method,
            bootstrap: request.bootstrap,
            ..Default::default()
        })
        .map(|mut a| {
            let used = a.points.iter().filter(|p| !p.excluded).map(|p| (p.a, p.v, p.fitted)).collect();
            let plot = a.plots.into_iter().next();
            (Fitted { fit: a.fits.swap_remove(0), used, problems: a.problems, notes: a.notes, pic50: None, dimensions: Vec::new() }, plot)
        }),
        _ => analyse_rates(&RateRequest {
            text: curve.text.clone(),
            model: model.to_string(),
            substrate_unit: request.substrate_unit.clone(),
            rate_unit: request.rate_unit.clone(),
            enzyme: request.enzyme,
            enzyme_unit: request.enzyme_unit.clone(),
            excluded_lines: excluded,
            excluded_cells: Vec::new(),
            rate_time: None,
            protein: None,
            weighting: request.weighting,
            interval_method: request.interval_method,
            bootstrap: request.bootstrap,
        })
        .map(|a| {
            let used = a.points.iter().filter(|p| !p.excluded).map(|p| (p.s, p.v, p.fitted)).collect();
            let plot = a.plots.into_iter().next();
            (Fitted { fit: a.fit, used, problems: a.problems, notes: a.notes, pic50: None, dimensions: Vec::new() }, plot)
        }),
    }
}

/// The direct plot of one curve's fit (points and fitted curve), for a
/// small picture of each curve in a results table; `None` when the curve
/// has no fit.
pub fn curve_plot(request: &BatchRequest, curve: &CurveInput) -> Option<PlotData> {
    let model = if request.model.trim().is_empty() { "mm" } else { request.model.trim() };
    curve_analysis(request, curve, model).ok().and_then(|(_, plot)| plot)
}

/// Fits one curve exactly as its table alone would be fitted, and flags it.
pub fn fit_curve(request: &BatchRequest, curve: &CurveInput) -> CurveResult {
    let model = if request.model.trim().is_empty() { "mm".to_string() } else { request.model.trim().to_string() };
    let outcome = curve_analysis(request, curve, &model).map(|(fitted, _)| fitted);
    match outcome {
        Ok(mut fitted) => {
            let options = ModelOptions { enzyme: request.enzyme, fixed_top: request.fixed_top, fixed_bottom: request.fixed_bottom };
            if let Ok(m) = model_with_options(&model, &options) {
                fitted.dimensions = m.parameters().iter().map(|p| p.dimension).collect();
            }
            let percent = response_is_percent(&curve.text);
            let flags = flags(&fitted, &model, &request.flags, percent);
            let problems = fitted.problems.iter().map(|p| to_batch(p, curve)).collect();
            CurveResult {
                curve: curve.name.clone(),
                fit: Some(fitted.fit),
                error: None,
                pic50: fitted.pic50,
                flags,
                problems,
                notes: fitted.notes,
            }
        }
        Err(e) => {
            // The one-curve analysis counts the lines of the curve's own
            // table; say so rather than let them pass for the batch's.
            let message = if e.message.contains("line ") {
                format!("{} (line numbers here count the lines of this curve's own table, its header being line 1)", e.message)
            } else {
                e.message
            };
            CurveResult {
                curve: curve.name.clone(),
                fit: None,
                error: Some(message.clone()),
                pic50: None,
                flags: vec![CurveFlag { code: "no-fit".into(), reason: message }],
                problems: Vec::new(),
                notes: Vec::new(),
            }
        }
    }
}

/// What the one-curve analyses give the flags.
struct Fitted {
    fit: FitSummary,
    /// (x, y, fitted) of the used points.
    used: Vec<(f64, f64, f64)>,
    problems: Vec<InputProblem>,
    notes: Vec<String>,
    pic50: Option<PIc50>,
    /// The dimensions of the fitted (not derived) parameters.
    dimensions: Vec<Dimension>,
}

/// A problem of the curve table at the batch table's line and column.
fn to_batch(problem: &InputProblem, curve: &CurveInput) -> InputProblem {
    let line = curve.lines.get(problem.line.wrapping_sub(1)).copied().unwrap_or(problem.line);
    let column = problem.column.map(|c| if c > curve.group_column { c + 1 } else { c });
    InputProblem { line, column, message: problem.message.clone() }
}

/// Whether the curve table's last column heading is a percentage response.
fn response_is_percent(text: &str) -> bool {
    let header = text.lines().next().unwrap_or("");
    let separator = detect_separator(std::iter::once(header));
    split_line(header, separator).0.iter().any(|cell| {
        let h = parse_heading(cell);
        matches!(normalise_name(&h.name).as_str(), "%activity" | "percentactivity" | "%" | "%control" | "%inhibition")
            || h.unit.as_deref().map(str::trim) == Some("%")
    })
}

/// pIC50 from the fitted IC50 and the unit of [I].
fn pic50(fit: &FitSummary, unit: Option<&str>) -> Option<PIc50> {
    let unit = ConcentrationUnit::parse(unit?).ok()?;
    let ic50 = fit.parameters.iter().find(|p| p.name == "IC50")?;
    if !(ic50.value > 0.0 && ic50.value.is_finite()) {
        return None;
    }
    let molar = |v: f64| v * unit.in_molar();
    let minus_log = |v: f64| if v > 0.0 && v.is_finite() { Some(-molar(v).log10()) } else { None };
    Some(PIc50 {
        value: -molar(ic50.value).log10(),
        std_error: ic50.std_error.map(|se| se / (ic50.value * std::f64::consts::LN_10)),
        ci_low: ic50.ci_high.and_then(minus_log),
        ci_high: ic50.ci_low.and_then(minus_log),
    })
}

/// pIC50 of a fit record (for [`crate::shared_slope`]).
pub(crate) fn pic50_of(fit: &FitSummary, unit: Option<&str>) -> Option<PIc50> {
    pic50(fit, unit)
}

/// The flags of a fit record made elsewhere (the shared-slope fit), by the
/// same rules as a curve fitted alone: `used` holds (x, y, fitted) of the
/// used points, `dimensions` those of the fitted parameters.
pub(crate) fn flags_of(
    fit: &FitSummary,
    used: Vec<(f64, f64, f64)>,
    dimensions: Vec<Dimension>,
    model: &str,
    settings: &FlagSettings,
    text: &str,
) -> Vec<CurveFlag> {
    let fitted = Fitted { fit: fit.clone(), used, problems: Vec::new(), notes: Vec::new(), pic50: None, dimensions };
    flags(&fitted, model, settings, response_is_percent(text))
}

fn flag(code: &str, reason: String) -> CurveFlag {
    CurveFlag { code: code.to_string(), reason }
}

/// The flags of a fitted curve, in a fixed order.
fn flags(fitted: &Fitted, model: &str, settings: &FlagSettings, percent: bool) -> Vec<CurveFlag> {
    let fit = &fitted.fit;
    let mut out = Vec::new();
    if !fit.converged {
        out.push(flag("not-converged", format!("the minimiser did not converge: {}", fit.termination_text)));
    }
    // A plateau's standard error is judged against the fitted response
    // span, not its own value, which may be near zero.
    let fitted_values = fitted.used.iter().map(|u| u.2).filter(|f| f.is_finite());
    let span = fitted_values.clone().fold(f64::NEG_INFINITY, f64::max) - fitted_values.fold(f64::INFINITY, f64::min);
    let mut undetermined = Vec::new();
    for (p, dimension) in fit.parameters.iter().filter(|p| !p.derived).zip(&fitted.dimensions) {
        let scale = match dimension {
            Dimension::Response if span.is_finite() => p.value.abs().max(span),
            _ => p.value.abs(),
        };
        match p.std_error {
            Some(se) if se.is_finite() && se <= settings.max_relative_se * scale => {}
            Some(se) if se.is_finite() => undetermined.push(format!(
                "{} (standard error {} is {:.0} % of {})",
                p.name,
                short(se),
                100.0 * se / scale,
                if scale == p.value.abs() { "the value" } else { "the fitted span" }
            )),
            _ => undetermined.push(format!("{} (no standard error: the data cannot fix it)", p.name)),
        }
    }
    if !undetermined.is_empty() {
        out.push(flag(
            "undetermined",
            format!(
                "not determined by the data: {}; limit: a relative standard error of {:.0} % (common practice, no source)",
                undetermined.join(", "),
                100.0 * settings.max_relative_se
            ),
        ));
    }
    let controls = settings.control_levels.or(if percent { Some((100.0, 0.0)) } else { None });
    let value = |name: &str| fit.parameters.iter().find(|p| p.name == name).map(|p| p.value);
    if model == "ic50" {
        if let Some(ic50) = value("IC50") {
            let tested: Vec<f64> = fitted.used.iter().map(|u| u.0).filter(|i| *i > 0.0).collect();
            let low = tested.iter().copied().fold(f64::INFINITY, f64::min);
            let high = tested.iter().copied().fold(0.0, f64::max);
            if !(tested.is_empty() || (low..=high).contains(&ic50)) {
                out.push(flag(
                    "ic50-outside-range",
                    format!("IC50 = {} lies outside the tested concentrations ({} to {}); it is an extrapolation", short(ic50), short(low), short(high)),
                ));
            }
        }
        if let Some(slope) = value("steepness") {
            let (low, high) = settings.hill_slope_range;
            if !(slope >= low && slope <= high) {
                out.push(flag(
                    "steepness-implausible",
                    format!(
                        "steepness {} is outside {} to {}, the range usual for one inhibitor binding one site (common practice, no source)",
                        short(slope),
                        short(low),
                        short(high)
                    ),
                ));
            }
        }
        if let Some((high, low)) = controls {
            let window = (high - low).abs();
            let mut far = Vec::new();
            let top = value("ceiling");
            let bottom = value("floor");
            if let Some(top) = top {
                if (top - high).abs() > settings.plateau_tolerance * window {
                    far.push(format!("top {} against the high control {}", short(top), short(high)));
                }
            }
            if let Some(bottom) = bottom {
                if (bottom - low).abs() > settings.plateau_tolerance * window {
                    far.push(format!("bottom {} against the low control {}", short(bottom), short(low)));
                }
            }
            if !far.is_empty() {
                out.push(flag(
                    "plateau-far-from-controls",
                    format!(
                        "{}: more than {:.0} % of the control window {} apart (common practice, no source)",
                        far.join("; "),
                        100.0 * settings.plateau_tolerance,
                        short(window)
                    ),
                ));
            }
        }
    }
    // Residuals are judged against the control window when it is known (a
    // flat curve has a small fitted span and ordinary noise), else against
    // the fitted span.
    let (scale, scale_name) = match controls {
        Some((high, low)) => ((high - low).abs(), "the control window"),
        None => (span, "the fitted span"),
    };
    if scale.is_finite() && scale > 0.0 {
        let worst = fitted.used.iter().map(|u| (u.0, u.1 - u.2)).filter(|(_, r)| r.is_finite()).fold(None, |best: Option<(f64, f64)>, (x, r)| {
            match best {
                Some((_, b)) if b.abs() >= r.abs() => best,
                _ => Some((x, r)),
            }
        });
        if let Some((x, r)) = worst {
            if r.abs() > settings.max_residual_share * scale {
                out.push(flag(
                    "large-residuals",
                    format!(
                        "the residual {} at x = {} is more than {:.0} % of {scale_name} {} (common practice, no source)",
                        short(r),
                        short(x),
                        100.0 * settings.max_residual_share,
                        short(scale)
                    ),
                ));
            }
        }
    }
    out
}

/// Four significant figures for the reasons.
fn short(v: f64) -> String {
    crate::plots::family::short_number(v)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn split_keeps_names_in_first_appearance_order_and_maps_lines() {
        let text = "# invented\nconc (µM),well,signal\n1,B,5\n1,A,9\n2,B,4\n3,,3\n2,\"A\",8\n";
        let split = split_curves(text, "Well").unwrap();
        assert_eq!(split.group_by, "well");
        let names: Vec<&str> = split.curves.iter().map(|c| c.name.as_str()).collect();
        assert_eq!(names, ["B", "A"]);
        assert_eq!(split.curves[0].text, "conc (µM),signal\n1,5\n2,4\n");
        assert_eq!(split.curves[0].lines, [2, 3, 5]);
        assert_eq!(split.curves[1].lines, [2, 4, 7]);
        assert_eq!(split.problems.len(), 1);
        assert_eq!((split.problems[0].line, split.problems[0].column), (6, Some(2)));
        let e = split_curves("x,y\n1,2\n", "").unwrap_err();
        assert!(e.message.contains("curve, compound, sample or well"), "{}", e.message);
    }

    #[test]
    fn separators_inside_cells_survive_the_split() {
        let text = "curve;[S] (mM);v\nk1;0,5;1,25\nk1;1;2\n";
        let split = split_curves(text, "").unwrap();
        assert_eq!(split.curves[0].text, "[S] (mM);v\n0,5;1,25\n1;2\n");
        let text = "curve,[S],note\nk1,1,\"a,b\"\n";
        assert_eq!(split_curves(text, "").unwrap().curves[0].text, "[S],note\n1,\"a,b\"\n");
    }

    /// `analyse_batch` gives each curve the fit of its own table (compared
    /// through `Debug`, which writes every f64 exactly), and a curve too
    /// short to fit becomes a `no-fit` record, not an error of the batch.
    /// The series are invented.
    #[test]
    fn batch_equals_each_curve_alone_and_keeps_failures_as_records() {
        let a = [(0.1, 97.0), (0.3, 90.0), (1.0, 70.0), (3.0, 41.0), (10.0, 17.0), (30.0, 6.0), (100.0, 2.0)];
        let b = [(0.1, 99.0), (0.3, 95.0), (1.0, 88.0), (3.0, 72.0), (10.0, 45.0), (30.0, 22.0), (100.0, 9.0)];
        let mut text = String::from("[I] (µM)\tsample\t% activity\n");
        let mut alone = [String::from("[I] (µM)\t% activity\n"), String::from("[I] (µM)\t% activity\n")];
        for k in 0..a.len() {
            for (c, series) in [a, b].iter().enumerate() {
                text.push_str(&format!("{}\t{}\t{}\n", series[k].0, ["s-a", "s-b"][c], series[k].1));
                alone[c].push_str(&format!("{}\t{}\n", series[k].0, series[k].1));
            }
        }
        text.push_str("1\ts-c\t50\n");
        let request = BatchRequest { text, model: "ic50".into(), ..Default::default() };
        let batch = analyse_batch(&request).unwrap();
        assert_eq!(batch.group_by, "sample");
        assert_eq!(batch.curves.len(), 3);
        for (c, table) in alone.iter().enumerate() {
            let one = analyse_dose(&DoseRequest { text: table.clone(), model: "ic50".into(), ..Default::default() }).unwrap();
            assert_eq!(format!("{:?}", batch.curves[c].fit.as_ref().unwrap()), format!("{:?}", one.fit));
            assert!(batch.curves[c].pic50.is_some());
        }
        let failed = &batch.curves[2];
        assert!(failed.fit.is_none() && failed.error.is_some());
        assert_eq!(failed.flags[0].code, "no-fit");
    }
}
