//! The inhibition analysis: rates at several [S] and [I] in, every
//! reversible mechanism fitted globally, ranked and tested, with the
//! family of plots out. [`analyse_inhibition`] is the one code path behind
//! the page's inhibition section and the CLI's `compare` command (and its
//! `fit` for the inhibition models).
//!
//! Two table layouts are read:
//!
//! - **long**: one row per measurement, with columns for [S], [I] and v
//!   (header names such as `[S] (mM)`, `[I] (µM)` or `inhibitor (µM)`,
//!   `v (µM/min)`); replicates are repeated rows;
//! - **matrix**: the first column is [S] and every other column holds the
//!   rates at one inhibitor concentration, written in its header (`0`,
//!   `5 µM`, `10 µM`); empty cells are measurements not made.
//!
//! Both give the same observations, so the same fit.

use crate::compare::{compare_fits, Comparison};
use crate::error::Error;
use crate::fit::{fit_model, Fit, FitSettings, FitSummary};
use crate::model::{Dimension, Model, Observations};
use crate::models::{Inhibition, Mechanism, MichaelisMenten};
use crate::plots::family::{inhibition_plots, short_number, FamilyPoint, FamilyUnits, GlobalFit};
use crate::plots::PlotData;
use crate::read::replicates::{common_unit, problems_without_empty_replicates, replicate_label, summarise, MeasurementColumns, ReplicateSummary};
use crate::rates::CAUTION;
use crate::read::columns::{is_inhibitor_name, is_rate_name, is_substrate_name, normalise_name};
use crate::table::{parse_table, shortage_reasons, ColumnHeading, InputProblem, Table};
use crate::units::{ConcentrationUnit, VUnit};
use serde::{Deserialize, Serialize};

/// What to analyse.
#[derive(Clone, Debug, Default, PartialEq, Deserialize)]
#[serde(default)]
pub struct InhibitionRequest {
    /// The pasted or loaded table (long or matrix layout).
    pub text: String,
    /// Mechanisms to fit (`competitive`, `uncompetitive`, `mixed`,
    /// `noncompetitive`); empty means all four.
    pub models: Vec<String>,
    /// Input line numbers (1-based) to leave out of the fit: every rate on
    /// the line.
    pub excluded_lines: Vec<usize>,
    /// Single rates to leave out, as (input line, input column), both
    /// 1-based: in a matrix table a line holds one rate per [I], so one
    /// point is a cell, not a line.
    pub excluded_cells: Vec<(usize, usize)>,
    /// Unit of [S]; `None` or empty means "as the header says".
    pub substrate_unit: Option<String>,
    /// Unit of [I]; `None` or empty means "as the header says".
    pub inhibitor_unit: Option<String>,
    /// Unit of v; `None` or empty means "as the header says" (a matrix
    /// header has no place for it, so give it here).
    pub rate_unit: Option<String>,
    /// Rates per `s`, `min` or `h` (converted from the unit of v before
    /// the fit); `None` or empty keeps the unit as read.
    pub rate_time: Option<String>,
    /// How the rates are weighted: uniform, relative or poisson (an sd
    /// column is not read from inhibition tables). Default uniform.
    pub weighting: crate::weighting::Weighting,
    /// How intervals are computed for every mechanism. Default asymptotic.
    pub interval_method: crate::intervals::IntervalMethod,
    /// Bootstrap settings, used when `interval_method` is bootstrap.
    pub bootstrap: crate::intervals::BootstrapSettings,
}

/// How the table was laid out.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum TableLayout {
    /// One row per measurement: [S], [I], v.
    Long,
    /// [S] then one column of rates per [I].
    Matrix,
}

/// One measurement as the analysis saw it.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct InhibitionPoint {
    /// Index in [`InhibitionAnalysis::points`].
    pub row: usize,
    /// Input line, counting from 1.
    pub line: usize,
    /// Input column of the rate, counting from 1.
    pub column: usize,
    /// Substrate concentration.
    pub s: f64,
    /// Inhibitor concentration.
    pub i: f64,
    /// Measured rate.
    pub v: f64,
    /// Whether the point was left out.
    pub excluded: bool,
    /// Rate of the preferred model at this ([S], [I]).
    pub fitted: f64,
}

/// The replicates at one inhibitor concentration, by [S].
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct InhibitorReplicates {
    /// The inhibitor concentration.
    pub inhibitor: f64,
    /// One summary per [S] (its `concentration` is [S]).
    pub by_substrate: Vec<ReplicateSummary>,
}

/// Units used, as symbols.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct InhibitionUnits {
    /// Unit of [S].
    pub substrate: Option<String>,
    /// Unit of [I].
    pub inhibitor: Option<String>,
    /// Unit of v.
    pub rate: Option<String>,
}

/// The whole inhibition analysis.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct InhibitionAnalysis {
    /// The layout read.
    pub layout: TableLayout,
    /// One fit per mechanism, in the order asked for.
    pub fits: Vec<FitSummary>,
    /// Ranking, F tests and verdict.
    pub comparison: Comparison,
    /// The model whose curves the plots show (the preferred one, or the
    /// lowest AICc when the comparison cannot decide).
    pub shown: String,
    /// The distinct inhibitor concentrations.
    pub inhibitor_levels: Vec<f64>,
    /// The rates used in the fits, by [I] and then [S]: count, mean, SD
    /// and SEM (for a table and error bars; the fits use every rate).
    pub replicates: Vec<InhibitorReplicates>,
    /// Every measurement.
    pub points: Vec<InhibitionPoint>,
    /// Problems with the input.
    pub problems: Vec<InputProblem>,
    /// How the table was read.
    pub notes: Vec<String>,
    /// Units.
    pub units: InhibitionUnits,
    /// The check of the error structure on the most general mechanism
    /// (constant, Poisson-like or relative error) and the weighting it
    /// suggests.
    pub error_structure: Option<crate::errors::ErrorStructure>,
    /// The family of plots.
    pub plots: Vec<PlotData>,
    /// The standing caution.
    pub caution: String,
}

fn capitalise(text: &str) -> String {
    let mut chars = text.chars();
    chars.next().map(|c| c.to_uppercase().chain(chars).collect()).unwrap_or_default()
}

/// Reads `5 µM`, `5µM`, `5`, `[I] = 5 µM` or `5 (µM)` as a concentration
/// with an optional unit: the reading layer's level heading for [I].
fn heading_concentration(heading: &ColumnHeading) -> Option<(f64, Option<String>)> {
    crate::read::columns::level_heading(heading, &is_inhibitor_name)
}

enum Layout {
    /// `v` holds one column, or several with replicates in columns; `unit`
    /// is the rate unit their headings give.
    Long { s: usize, i: usize, v: Vec<usize>, unit: Option<String> },
    Matrix { levels: Vec<(usize, f64)>, unit: Option<ConcentrationUnit> },
}

fn find_layout(table: &Table, notes: &mut Vec<String>) -> Result<Option<Layout>, Error> {
    let Some(headings) = &table.headings else { return Ok(None) };
    if let Some(i) = headings.iter().position(|h| is_inhibitor_name(&h.name)) {
        let s = headings.iter().position(|h| is_substrate_name(&h.name));
        let v = headings.iter().position(|h| is_rate_name(&h.name));
        // Replicate rates in columns: every other column a replicate
        // heading (`v1`, `rep 2`), or the rate heading repeated.
        let others: Vec<usize> = (0..headings.len()).filter(|k| Some(*k) != s && *k != i).collect();
        let labelled = others.len() >= 2 && others.iter().all(|&k| replicate_label(&headings[k].name, &is_rate_name).is_some());
        let v = match v {
            _ if labelled => Some(others),
            Some(v) => Some(others.into_iter().filter(|&k| normalise_name(&headings[k].name) == normalise_name(&headings[v].name)).collect()),
            None => None,
        };
        let (Some(s), Some(v)) = (s, v) else {
            return Err(Error::invalid_data(
                "the header names an inhibitor column but not both [S] (S, [S], substrate) and v (v, rate, velocity, or replicate columns such as rep 1, rep 2)",
            ));
        };
        for (index, heading) in headings.iter().enumerate() {
            if index != s && index != i && !v.contains(&index) {
                notes.push(format!("Column {} ('{}') is not used.", index + 1, heading.name));
            }
        }
        let unit = common_unit(headings, &v).map_err(Error::invalid_data)?;
        return Ok(Some(Layout::Long { s, i, v, unit }));
    }
    // A first column named [A] is a two-substrate matrix (crate::bisubstrate).
    if headings.len() < 3 || crate::read::columns::is_substrate_a_name(&headings[0].name) {
        return Ok(None);
    }
    let quantities: Option<Vec<(f64, Option<String>)>> = headings[1..].iter().map(heading_concentration).collect();
    let Some(quantities) = quantities else { return Ok(None) };
    // All inhibitor concentrations are expressed in the first unit given.
    let mut unit: Option<ConcentrationUnit> = None;
    let mut levels = Vec::new();
    for (k, (value, text)) in quantities.into_iter().enumerate() {
        let column = k + 1;
        let parsed = match text {
            Some(t) => Some(ConcentrationUnit::parse(&t).map_err(|m| {
                Error::invalid_data(format!("line {}, column {}: the inhibitor concentration's unit: {m}", header_line(table), column + 1))
            })?),
            None => None,
        };
        let value = match (parsed, unit) {
            (Some(p), None) => {
                unit = Some(p);
                value
            }
            // Molar units differ by powers of ten; use the exact power.
            (Some(p), Some(u)) => value * 10f64.powi((p.in_molar() / u.in_molar()).log10().round() as i32),
            (None, _) => value,
        };
        if value < 0.0 {
            return Err(Error::invalid_data(format!(
                "line {}, column {}: an inhibitor concentration cannot be negative",
                header_line(table),
                column + 1
            )));
        }
        levels.push((column, value));
    }
    notes.push(format!(
        "Matrix layout: column 1 is [S]; columns 2 to {} hold v at {} inhibitor concentrations.",
        headings.len(),
        levels.len()
    ));
    Ok(Some(Layout::Matrix { levels, unit }))
}

fn header_line(table: &Table) -> usize {
    table.rows.first().map_or(1, |r| r.line.saturating_sub(1)).max(1)
}

/// Whether `text` is a table of rates at several inhibitor concentrations
/// (long layout with an inhibitor column, or matrix layout).
pub fn is_inhibition_table(text: &str) -> bool {
    let table = parse_table(text);
    matches!(find_layout(&table, &mut Vec::new()), Ok(Some(_)))
}

struct Read {
    layout: TableLayout,
    points: Vec<InhibitionPoint>,
    problems: Vec<InputProblem>,
    notes: Vec<String>,
    units: (Option<ConcentrationUnit>, Option<ConcentrationUnit>, Option<VUnit>),
}

fn unit_from<T>(heading: Option<&ColumnHeading>, parse: fn(&str) -> Result<T, String>, what: &str, notes: &mut Vec<String>) -> Option<T> {
    let text = heading.and_then(|h| h.unit.as_deref())?;
    match parse(text) {
        Ok(u) => Some(u),
        Err(m) => {
            notes.push(format!("The header's unit for {what} was not understood ({m}); it is shown without a unit."));
            None
        }
    }
}

fn read(text: &str, excluded_lines: &[usize], excluded_cells: &[(usize, usize)]) -> Result<Read, Error> {
    let table = parse_table(text);
    let mut notes = Vec::new();
    if table.rows.is_empty() {
        return Err(Error::invalid_data("no data rows found; paste a table with columns [S], [I] and v"));
    }
    let layout = find_layout(&table, &mut notes)?.ok_or_else(|| {
        Error::invalid_data(
            "this is not an inhibitor table: give a header with columns [S], [I] and v, or [S] followed by one column per inhibitor concentration (0, 5 µM, 10 µM)",
        )
    })?;
    let headings = table.headings.as_ref().expect("a layout needs a header");
    let mut problems = Vec::new();
    let mut points = Vec::new();
    let mut push = |line: usize, column: usize, s: f64, i: f64, v: f64| {
        points.push(InhibitionPoint { row: points.len(), line, column, s, i, v, excluded: excluded_lines.contains(&line) || excluded_cells.contains(&(line, column)), fitted: f64::NAN });
    };
    match &layout {
        Layout::Long { s, i, v, unit } => {
            let columns = MeasurementColumns { concentration: *s, measurements: v.clone(), unit: unit.clone() };
            let (kept, empty) = problems_without_empty_replicates(&table, &columns);
            problems = kept;
            if columns.replicated() {
                notes.push(format!(
                    "Replicates in columns: columns {} hold {} replicate rates at each [S] and [I]; every replicate is fitted, not their mean.{}",
                    v.iter().map(|c| (c + 1).to_string()).collect::<Vec<_>>().join(", "),
                    v.len(),
                    if empty > 0 { format!(" {empty} empty replicate cell(s) are read as measurements not made.") } else { String::new() }
                ));
            }
            for row in &table.rows {
                let cell = |c: usize| row.cells.get(c).copied().flatten();
                let rates: Vec<(usize, f64)> = v.iter().filter_map(|&c| cell(c).map(|x| (c, x))).collect();
                let (Some(sv), Some(iv), false) = (cell(*s), cell(*i), rates.is_empty()) else {
                    if !problems.iter().any(|p| p.line == row.line) {
                        problems.push(InputProblem { line: row.line, column: None, message: "the row has no [S], [I] or v value".into() });
                    }
                    continue;
                };
                if sv < 0.0 || iv < 0.0 {
                    let column = if sv < 0.0 { s + 1 } else { i + 1 };
                    problems.push(InputProblem { line: row.line, column: Some(column), message: "a concentration cannot be negative".into() });
                    continue;
                }
                for (column, vv) in rates {
                    push(row.line, column + 1, sv, iv, vv);
                }
            }
        }
        Layout::Matrix { levels, .. } => {
            // Empty cells and short rows are measurements not made; every
            // other problem stands.
            let mut empty = 0;
            for problem in &table.problems {
                let short_row = problem.column.is_none() && problem.message.starts_with("expected");
                let empty_cell = problem.column.is_some_and(|c| c > 1) && problem.message.starts_with("the cell is empty");
                let row_cells = table.rows.iter().find(|r| r.line == problem.line).map_or(0, |r| r.cells.len());
                if empty_cell || (short_row && row_cells < table.width) {
                    empty += usize::from(empty_cell);
                } else {
                    problems.push(problem.clone());
                }
            }
            for row in &table.rows {
                let Some(Some(sv)) = row.cells.first() else { continue };
                if *sv < 0.0 {
                    problems.push(InputProblem { line: row.line, column: Some(1), message: "a concentration cannot be negative".into() });
                    continue;
                }
                for (column, i) in levels {
                    if let Some(Some(v)) = row.cells.get(*column) {
                        push(row.line, column + 1, *sv, *i, *v);
                    }
                }
            }
            if empty > 0 {
                notes.push(format!("{empty} empty cell(s) in the matrix are read as measurements not made."));
            }
        }
    }
    problems.sort_by_key(|p| (p.line, p.column));
    let (units, layout_kind) = match &layout {
        Layout::Long { s, i, unit, .. } => (
            (
                unit_from(headings.get(*s), ConcentrationUnit::parse, "[S]", &mut notes),
                unit_from(headings.get(*i), ConcentrationUnit::parse, "[I]", &mut notes),
                unit_from(unit.as_ref().map(|u| ColumnHeading { name: "v".into(), unit: Some(u.clone()) }).as_ref(), VUnit::parse, "v", &mut notes),
            ),
            TableLayout::Long,
        ),
        Layout::Matrix { unit, .. } => {
            // In a matrix, the first heading's unit is that of [S]; rates
            // have no heading of their own, so their unit is unknown.
            ((unit_from(headings.first(), ConcentrationUnit::parse, "[S]", &mut notes), *unit, None), TableLayout::Matrix)
        }
    };
    Ok(Read { layout: layout_kind, points, problems, notes, units })
}

/// Fits one mechanism from the model's own starting values; mixed
/// inhibition, when single-mechanism solutions are given in `seeds`, from
/// those instead. Each seed becomes a mixed start (the missing constant far
/// above the [I] range), and a coarse grid is added
/// ([`Inhibition::mixed_candidates`]); the minimiser runs from the best
/// two candidates by sum of squares, and from the next ones while none has
/// converged (four at most), and the best converged result is kept: when
/// the data are in truth competitive, the mixed fit's Kiu runs off towards
/// infinity and a single start can stall far from the minimum.
pub fn fit_mechanism(mechanism: Mechanism, data: &Observations, seeds: &[(Mechanism, Vec<f64>)]) -> Result<Fit, Error> {
    let model = Inhibition::new(mechanism);
    let settings = FitSettings::default();
    let far = 1e3 * data.predictor_column(1).into_iter().fold(0.0, f64::max).max(f64::MIN_POSITIVE);
    let starts: Vec<[f64; 4]> = seeds
        .iter()
        .filter_map(|(seed_mechanism, p)| match seed_mechanism {
            Mechanism::Competitive => Some([p[0], p[1], p[2], far]),
            Mechanism::Uncompetitive => Some([p[0], p[1], far, p[2]]),
            Mechanism::Noncompetitive => Some([p[0], p[1], p[2], p[2]]),
            Mechanism::Mixed => None,
        })
        .collect();
    if mechanism != Mechanism::Mixed || starts.is_empty() {
        return fit_model(&model, data, None, &settings);
    }
    let mut best: Option<Fit> = None;
    for (tried, (_, start)) in model.mixed_candidates(data, &starts).into_iter().enumerate() {
        let converged = best.as_ref().is_some_and(|b| b.summary.converged);
        if tried >= 4 || (tried >= 2 && converged) {
            break;
        }
        let candidate = fit_model(&model, data, Some(&start), &settings)?;
        let better = best.as_ref().is_none_or(|b| {
            (candidate.summary.converged && !b.summary.converged)
                || (candidate.summary.converged == b.summary.converged && candidate.summary.rss < b.summary.rss)
        });
        if better {
            best = Some(candidate);
        }
    }
    match best {
        Some(fit) => Ok(fit),
        None => fit_model(&model, data, None, &settings),
    }
}

/// The ratio of fitted parameters `top`/`bottom` (such as Kiu/Kic, which
/// says how far the mixed mechanism leans towards competitive (ratio > 1)
/// or uncompetitive (< 1)), with its standard error by the delta method
/// from the full covariance, var(r) = r²·(var(a)/a² + var(b)/b² −
/// 2·cov(a, b)/(a·b)), and a t interval.
fn ratio_estimate(fit: &Fit, top: usize, bottom: usize, name: &str) -> crate::fit::ParameterEstimate {
    let (a, b) = (fit.values()[top], fit.values()[bottom]);
    let ratio = a / b;
    let se = fit.covariance.as_ref().map(|c| {
        (ratio * ratio * (c[(top, top)] / (a * a) + c[(bottom, bottom)] / (b * b) - 2.0 * c[(top, bottom)] / (a * b))).sqrt()
    });
    let mut estimate = crate::fit::estimate(name, ratio, se.filter(|v| v.is_finite()), fit.t_quantile);
    estimate.unit = Some(String::new());
    estimate.derived = true;
    estimate.ci_method = "delta".into();
    estimate
}

fn mechanism_named(name: &str) -> Result<Mechanism, Error> {
    Mechanism::ALL.into_iter().find(|m| m.name() == name.trim()).ok_or_else(|| {
        Error::invalid_option(format!(
            "'{name}' is not an inhibition mechanism; choose from competitive, uncompetitive, mixed, noncompetitive"
        ))
    })
}

/// Reads the table, fits the mechanisms globally, compares them and builds
/// the plots.
pub fn analyse_inhibition(request: &InhibitionRequest) -> Result<InhibitionAnalysis, Error> {
    let mut mechanisms: Vec<Mechanism> = if request.models.is_empty() {
        Mechanism::ALL.to_vec()
    } else {
        request.models.iter().map(|m| mechanism_named(m)).collect::<Result<_, _>>()?
    };
    mechanisms.dedup();
    let Read { layout, mut points, problems, mut notes, units } = read(&request.text, &request.excluded_lines, &request.excluded_cells)?;
    let (mut substrate_unit, mut inhibitor_unit, rate_unit) = units;
    let given = |u: &Option<String>| u.as_deref().map(str::trim).filter(|t| !t.is_empty()).map(str::to_string);
    if let Some(u) = given(&request.substrate_unit) {
        substrate_unit = Some(ConcentrationUnit::parse(&u).map_err(Error::invalid_option)?);
    }
    if let Some(u) = given(&request.inhibitor_unit) {
        inhibitor_unit = Some(ConcentrationUnit::parse(&u).map_err(Error::invalid_option)?);
    }
    let rate_unit = match given(&request.rate_unit) {
        Some(u) => Some(VUnit::parse(&u).map_err(Error::invalid_option)?),
        None => rate_unit,
    };
    if rate_unit.is_none() && layout == TableLayout::Matrix {
        notes.push("A matrix table's header has no place for the unit of v; choose it to label the rates.".to_string());
    }
    let (rate_unit, time_factor) = crate::rates::per_time(rate_unit, &request.rate_time, &mut notes)?;
    if time_factor != 1.0 {
        for p in &mut points {
            p.v *= time_factor;
        }
    }
    let used: Vec<InhibitionPoint> = points.iter().filter(|p| !p.excluded).cloned().collect();
    let most = mechanisms.iter().map(|m| Inhibition::new(*m).parameters().len()).max().unwrap_or(3);
    if used.len() <= most {
        return Err(Error::invalid_data(format!(
            "only {} usable point(s) remain; at least {} are needed to fit {} parameters with an uncertainty{}",
            used.len(),
            most + 1,
            most,
            shortage_reasons(&problems, points.iter().filter(|p| p.excluded).count(), 10)
        )));
    }
    let rates: Vec<f64> = used.iter().map(|p| p.v).collect();
    let weights = request.weighting.weights_without_sd(&rates).map_err(|(index, message)| match index {
        Some(i) => Error::invalid_data(format!("line {}: {message}", used[i].line)),
        None => Error::invalid_option(message),
    })?;
    let mut data = Observations::new(2, used.iter().flat_map(|p| [p.s, p.i]).collect(), rates, weights)?;
    // Relative and Poisson weights come from a fitted curve. Mechanisms are
    // compared by their sums of squares, which is fair only with the same
    // weights for all; so the weights are iterated to convergence on the
    // most general mechanism asked for (mixed, when present: its curve is
    // consistent under every nested hypothesis) and then held fixed for
    // every mechanism.
    let mut reweighting_rounds = None;
    if request.weighting.from_model() {
        let general = if mechanisms.contains(&Mechanism::Mixed) { Mechanism::Mixed } else { mechanisms[0] };
        let first = fit_mechanism(general, &data, &[])?;
        if first.summary.converged {
            let r = crate::fit::iterate_weights(
                &Inhibition::new(general),
                &data,
                request.weighting,
                first.values(),
                &FitSettings::default().solver,
                crate::fit::REWEIGHT_TOLERANCE,
                crate::fit::REWEIGHT_LIMIT,
            );
            if r.unsettled.is_none() {
                data = r.data;
                reweighting_rounds = Some(r.rounds);
                notes.push(format!(
                    "{}: the weights are computed from the {} fit's curve (settled after {} round(s)) and used unchanged for every mechanism, so that the comparison is between sums of squares with the same weights.",
                    capitalise(request.weighting.describe()),
                    general.name(),
                    r.rounds
                ));
            } else {
                notes.push(format!(
                    "The weights from the fitted curve did not settle on the {} fit; the weights on the measured rates are used for every mechanism.",
                    general.name()
                ));
            }
        }
    }
    let mut inhibitor_levels: Vec<f64> = points.iter().map(|p| p.i).collect();
    inhibitor_levels.sort_by(f64::total_cmp);
    inhibitor_levels.dedup();

    // Singles first, so that mixed can start from their solutions.
    let mut order = mechanisms.clone();
    order.sort_by_key(|m| *m == Mechanism::Mixed);
    let mut fitted: Vec<(Mechanism, Fit)> = Vec::new();
    for mechanism in order {
        let seeds: Vec<(Mechanism, Vec<f64>)> = fitted.iter().map(|(m, f)| (*m, f.values().to_vec())).collect();
        fitted.push((mechanism, fit_mechanism(mechanism, &data, &seeds)?));
    }
    fitted.sort_by_key(|(m, _)| mechanisms.iter().position(|x| x == m));

    let unit_of = |dimension: Dimension| -> Option<String> {
        match dimension {
            Dimension::Response => rate_unit.map(|u| u.symbol()),
            Dimension::Predictor(0) => substrate_unit.map(|u| u.symbol().to_string()),
            Dimension::Predictor(_) => inhibitor_unit.map(|u| u.symbol().to_string()),
            Dimension::Dimensionless => Some(String::new()),
            Dimension::Unspecified => None,
        }
    };
    let i_max = inhibitor_levels.last().copied().unwrap_or(0.0);
    let mut fits: Vec<FitSummary> = Vec::new();
    for (mechanism, fit) in &fitted {
        let model = Inhibition::new(*mechanism);
        let mut summary = fit.summary.clone();
        summary.weighting = request.weighting.name().into();
        summary.reweighting_rounds = reweighting_rounds;
        if fit.summary.termination == crate::solver::Termination::NoFiniteOptimum {
            // Only the profile says which side the data bound when the fit
            // ran off (a Ki far above every [I], or Kiu of a competitive
            // inhibitor fitted as mixed).
            crate::intervals::apply_profile_intervals(&mut summary, &model, &data, fit, true);
        } else {
            crate::intervals::apply_interval_method(&mut summary, &model, &data, fit, request.interval_method, &request.bootstrap)?;
            if request.interval_method == crate::intervals::IntervalMethod::Asymptotic && fit.summary.converged {
                // Flag constants whose profile never closes (as the rate and
                // dose analyses do); the asymptotic intervals stay.
                crate::intervals::apply_profile_intervals(&mut summary, &model, &data, fit, false);
            }
        }
        for (estimate, spec) in summary.parameters.iter_mut().zip(model.parameters()) {
            estimate.unit = unit_of(spec.dimension);
        }
        if summary.converged {
            for (estimate, spec) in summary.parameters.iter().zip(model.parameters()) {
                if estimate.value <= 0.0 {
                    summary.warnings.push(format!("{} is not positive ({}); it has no physical meaning.", spec.name, short_number(estimate.value)));
                } else if spec.dimension == Dimension::Predictor(1) && i_max < estimate.value {
                    summary.warnings.push(format!(
                        "The highest [I] is only {:.2}×{}; the constant is poorly defined. Common practice (no formal source) is to reach several times Ki.",
                        i_max / estimate.value,
                        spec.name
                    ));
                }
            }
        }
        if *mechanism == Mechanism::Mixed {
            summary.parameters.push(ratio_estimate(fit, 3, 2, "Kiu/Kic"));
        }
        fits.push(summary);
    }
    let comparison = compare_fits(&fits);
    let general = if mechanisms.contains(&Mechanism::Mixed) { Mechanism::Mixed } else { mechanisms[0] };
    // With uniform weights the general mechanism's own fit is the check's
    // first fit (for mixed, the best of its starts), so it is not repeated.
    let uniform = fitted
        .iter()
        .find(|(m, f)| *m == general && f.summary.converged && request.weighting == crate::weighting::Weighting::Uniform)
        .map(|(_, f)| f.values());
    let error_structure = crate::errors::error_structure_after(&Inhibition::new(general), &data, uniform);
    if let Some(check) = &error_structure {
        match check.suggested.as_deref() {
            Some(suggested) if suggested != request.weighting.name() => notes.push(format!(
                "{} (on the {} fit.) Every mechanism was fitted with {}; weighting {suggested} suits these data better, and the F test and AICc are only as good as the weights.",
                check.text,
                general.name(),
                request.weighting.describe()
            )),
            _ => notes.push(format!("{} (on the {} fit.)", check.text, general.name())),
        }
    }
    if inhibitor_levels.iter().filter(|i| **i > 0.0).count() < 2 {
        notes.push("Fewer than two inhibitor concentrations above zero: the mechanisms can hardly be told apart.".to_string());
    }

    let shown = comparison.preferred.clone().unwrap_or_else(|| comparison.models[0].model.clone());
    let (shown_mechanism, shown_fit) = fitted
        .iter()
        .find(|(m, _)| m.name() == shown)
        .map(|(m, f)| (*m, f))
        .unwrap_or_else(|| (fitted[0].0, &fitted[0].1));
    let model = Inhibition::new(shown_mechanism);
    let values = shown_fit.values().to_vec();
    for point in &mut points {
        point.fitted = model.value(&[point.s, point.i], &values);
    }

    // Separate Michaelis-Menten fits at each [I], for the replots' points.
    let separate: Vec<(f64, Option<(f64, f64)>)> = inhibitor_levels
        .iter()
        .map(|&i| {
            let level: Vec<&InhibitionPoint> = used.iter().filter(|p| p.i == i).collect();
            let s: Vec<f64> = level.iter().map(|p| p.s).collect();
            let v: Vec<f64> = level.iter().map(|p| p.v).collect();
            let fit = Observations::single(&s, &v)
                .ok()
                .and_then(|o| fit_model(&MichaelisMenten, &o, None, &FitSettings::default()).ok())
                .filter(|f| f.summary.converged && f.values().iter().all(|v| *v > 0.0))
                .map(|f| (f.values()[0], f.values()[1]));
            (i, fit)
        })
        .collect();
    let family_points: Vec<FamilyPoint> =
        points.iter().map(|p| FamilyPoint { row: p.row, s: p.s, i: p.i, v: p.v, excluded: p.excluded }).collect();
    let rate = |s: f64, i: f64| model.value(&[s, i], &values);
    let apparent = |i: f64| model.apparent(i, &values);
    let global = GlobalFit { rate: &rate, apparent: &apparent, constants: model.constants(&values), mechanism: shown_mechanism.name() };
    let symbol = |u: Option<ConcentrationUnit>| u.map(|u| u.symbol().to_string());
    let family_units = FamilyUnits {
        substrate: symbol(substrate_unit).unwrap_or_default(),
        inhibitor: symbol(inhibitor_unit).unwrap_or_default(),
        rate: rate_unit.map(|u| u.symbol()).unwrap_or_default(),
    };
    let plots = inhibition_plots(&family_points, &global, &separate, &family_units);

    Ok(InhibitionAnalysis {
        layout,
        fits,
        comparison,
        shown,
        replicates: inhibitor_levels
            .iter()
            .map(|&level| InhibitorReplicates {
                inhibitor: level,
                by_substrate: summarise(&used.iter().filter(|p| p.i == level).map(|p| (p.s, p.v)).collect::<Vec<_>>()),
            })
            .filter(|r| !r.by_substrate.is_empty())
            .collect(),
        inhibitor_levels,
        points,
        problems,
        notes,
        units: InhibitionUnits { substrate: symbol(substrate_unit), inhibitor: symbol(inhibitor_unit), rate: rate_unit.map(|u| u.symbol()) },
        error_structure,
        plots,
        caution: CAUTION.to_string(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Simulated competitive inhibition (invented design): Vmax 10, Km 1,
    /// [S] 0.2, 0.5, 1, 2, 5 in triplicate at [I] 0, 0.5, 1 (no units), normal
    /// noise SD 0.2, seeds 700..740. With Kic = 1,000 (every [I] ≤ 0.001×Kic)
    /// the data cannot bound Kic from above: the profile stays open above
    /// unless noise mimics inhibition at the 5% level, so at least 34 of 40
    /// sets must carry the flag and the warning (a 95% profile interval is
    /// open in about 95% of sets when the truth is no measurable inhibition;
    /// 34 is three binomial SDs below the expected 38). With Kic = 0.5 (the
    /// same design, [I] up to 2×Kic) at most 2 of 40 may be flagged.
    #[test]
    fn a_ki_far_above_every_inhibitor_level_is_named_not_determined() {
        use crate::random::SplitMix64;
        let count = |kic: f64| -> usize {
            let mut flagged = 0;
            for seed in 700..740u64 {
                let mut rng = SplitMix64::new(seed);
                let mut text = String::from("[S]\t[I]\tv\n");
                for i in [0.0, 0.5, 1.0] {
                    for s in [0.2, 0.5, 1.0, 2.0, 5.0] {
                        for _ in 0..3 {
                            let v = 10.0 * s / (1.0 * (1.0 + i / kic) + s) + 0.2 * rng.normal();
                            text.push_str(&format!("{s}\t{i}\t{v}\n"));
                        }
                    }
                }
                let request = InhibitionRequest { text, models: vec!["competitive".into()], ..Default::default() };
                let analysis = analyse_inhibition(&request).unwrap();
                let fit = &analysis.fits[0];
                let kic_flag = fit.parameters[2].flag.as_deref();
                let named = matches!(kic_flag, Some(crate::fit::flags::NOT_DETERMINED) | Some(crate::fit::flags::NOT_BOUNDED_ABOVE));
                // "above"; "on either side" only for a fitted Kic ≤ 0 (mild
                // activation fits as well as mild inhibition here), whose
                // profile is not kept on the positive side.
                let warned = fit.warnings.iter().any(|w| w.contains("profile interval is open for Kic above") || w.contains("profile interval is open for Kic on either side"));
                assert_eq!(named, warned, "seed {seed}: flag {kic_flag:?} but warnings {:?}", fit.warnings);
                if named {
                    flagged += 1;
                }
            }
            flagged
        };
        let far = count(1000.0);
        assert!(far >= 34, "Kic = 1000: only {far} of 40 flagged");
        let near = count(0.5);
        println!("Kic = 1000: {far} of 40 sets flagged; Kic = 0.5: {near} of 40");
        assert!(near <= 2, "Kic = 0.5: {near} of 40 flagged");
    }

    const LONG: &str = "[S] (mM)\t[I] (µM)\tv (µM/min)\n0.2\t0\t2.9\n0.5\t0\t5.1\n1\t0\t6.6\n3\t0\t8.6\n\
        0.2\t5\t1.6\n0.5\t5\t3.3\n1\t5\t4.9\n3\t5\t7.4\n0.2\t10\t1.2\n0.5\t10\t2.4\n1\t10\t3.9\n3\t10\t6.5\n";
    const MATRIX: &str = "[S] (mM)\t0\t5 µM\t10 µM\n0.2\t2.9\t1.6\t1.2\n0.5\t5.1\t3.3\t2.4\n1\t6.6\t4.9\t3.9\n3\t8.6\t7.4\t6.5\n";

    #[test]
    fn long_and_matrix_layouts_read_the_same_points() {
        let long = read(LONG, &[], &[]).unwrap();
        let matrix = read(MATRIX, &[], &[]).unwrap();
        assert_eq!(long.layout, TableLayout::Long);
        assert_eq!(matrix.layout, TableLayout::Matrix);
        let key = |r: &Read| {
            let mut v: Vec<(u64, u64, u64)> = r.points.iter().map(|p| (p.s.to_bits(), p.i.to_bits(), p.v.to_bits())).collect();
            v.sort();
            v
        };
        assert_eq!(key(&long), key(&matrix));
        assert_eq!(matrix.units.1, Some(ConcentrationUnit::parse("µM").unwrap()));
        assert!(is_inhibition_table(LONG) && is_inhibition_table(MATRIX));
        assert!(!is_inhibition_table("[S] (mM)\tv (µM/min)\n1\t2\n"));
    }

    /// Rates given per mass of protein are read with their unit, as in the
    /// rate analysis, and converted per second like any other rate: the
    /// same fit with Vmax ÷ 60.
    #[test]
    fn rates_per_mass_of_protein_keep_their_unit() {
        let specific = LONG.replace("v (µM/min)", "v (U/mg)");
        let per_minute = analyse_inhibition(&InhibitionRequest { text: specific.clone(), ..Default::default() }).unwrap();
        assert_eq!(per_minute.units.rate.as_deref(), Some("µmol/min/mg"));
        let per_second =
            analyse_inhibition(&InhibitionRequest { text: specific, rate_time: Some("s".into()), ..Default::default() }).unwrap();
        assert_eq!(per_second.units.rate.as_deref(), Some("µmol/s/mg"));
        let vmax = |a: &InhibitionAnalysis| a.fits[0].parameters.iter().find(|p| p.name == "Vmax").unwrap().value;
        assert!((vmax(&per_second) - vmax(&per_minute) / 60.0).abs() <= 1e-9 * vmax(&per_second));
    }

    #[test]
    fn mixed_units_in_matrix_headers_are_converted() {
        let text = "[S] (mM)\t0\t500 nM\t1 µM\n0.2\t2.9\t1.6\t1.2\n";
        let r = read(text, &[], &[]).unwrap();
        let levels: Vec<f64> = r.points.iter().map(|p| p.i).collect();
        assert_eq!(levels, [0.0, 500.0, 1000.0]);
    }

    /// Bad inputs and the message each must give.
    #[test]
    fn bad_inputs_name_line_and_column() {
        let r = read("[S]\t[I]\tv\n1\t0\t2\n1\tx\t2\n2\t-1\t3\n", &[], &[]).unwrap();
        let found: Vec<String> = r.problems.iter().map(|p| p.to_string()).collect();
        assert_eq!(found, ["line 3, column 2: expected a number, found 'x'", "line 4, column 2: a concentration cannot be negative"]);
        let e = read("[S] (mM)\t0\t5 ppm\n1\t2\t3\n", &[], &[]).err().unwrap();
        assert!(e.message.starts_with("line 1, column 3"), "{}", e.message);
        let e = analyse_inhibition(&InhibitionRequest { text: "S\tv\n1\t2\n".into(), ..Default::default() }).unwrap_err();
        assert!(e.message.contains("not an inhibitor table"), "{}", e.message);
        let e = analyse_inhibition(&InhibitionRequest { text: LONG.into(), models: vec!["allosteric".into()], ..Default::default() }).unwrap_err();
        assert!(e.message.contains("not an inhibition mechanism"), "{}", e.message);
        // Empty matrix cells are measurements not made, not problems.
        let r = read("[S]\t0\t5\n1\t2\t\n2\t3\t1\n", &[], &[]).unwrap();
        assert!(r.problems.is_empty(), "{:?}", r.problems);
        assert_eq!(r.points.len(), 3);
    }

    /// In a matrix, a cell leaves out one rate; a line leaves out the row.
    #[test]
    fn cells_and_lines_are_left_out() {
        let cell = read(MATRIX, &[], &[(3, 3)]).unwrap();
        let out: Vec<(usize, usize)> = cell.points.iter().filter(|p| p.excluded).map(|p| (p.line, p.column)).collect();
        assert_eq!(out, [(3, 3)]);
        let line = read(MATRIX, &[3], &[]).unwrap();
        assert_eq!(line.points.iter().filter(|p| p.excluded).count(), 3, "three [I] columns");
    }

    /// Replicate rates in columns, in the long layout (`rep 1`, `rep 2`)
    /// and in the matrix (each [I] heading repeated), against the same
    /// rates one per line in the same order (invented data, stated as
    /// such): every mechanism's constants and SEs agree to 1e-12.
    #[test]
    fn replicate_columns_read_as_the_long_layout() {
        let levels = ["0", "5", "10"];
        let rows: [(&str, [[&str; 2]; 3]); 4] = [
            ("0.2", [["2.9", "3.0"], ["1.6", "1.7"], ["1.2", "1.1"]]),
            ("0.5", [["5.1", "4.9"], ["3.3", "3.2"], ["2.4", "2.5"]]),
            ("1", [["6.6", "6.8"], ["4.9", "4.7"], ["3.9", "3.8"]]),
            ("3", [["8.6", "8.4"], ["7.4", "7.6"], ["6.5", "6.3"]]),
        ];
        let mut long_by_level = String::from("[S] (mM)\t[I] (µM)\tv (µM/min)\n");
        let mut wide = String::from("[S] (mM)\t[I] (µM)\tv rep 1 (µM/min)\tv rep 2\n");
        let mut long_by_row = long_by_level.clone();
        let mut matrix = String::from("[S] (mM)\t0\t0\t5 µM\t5 µM\t10 µM\t10 µM\n");
        for (k, level) in levels.iter().enumerate() {
            for (s, rates) in &rows {
                for v in rates[k] {
                    long_by_level.push_str(&format!("{s}\t{level}\t{v}\n"));
                }
                wide.push_str(&format!("{s}\t{level}\t{}\t{}\n", rates[k][0], rates[k][1]));
            }
        }
        for (s, rates) in &rows {
            matrix.push_str(s);
            for (k, level) in levels.iter().enumerate() {
                for v in rates[k] {
                    long_by_row.push_str(&format!("{s}\t{level}\t{v}\n"));
                    matrix.push_str(&format!("\t{v}"));
                }
            }
            matrix.push('\n');
        }
        for (replicated, long) in [(&wide, &long_by_level), (&matrix, &long_by_row)] {
            let request = |text: &str| InhibitionRequest { text: text.into(), rate_unit: Some("µM/min".into()), ..Default::default() };
            let reference = analyse_inhibition(&request(long)).unwrap();
            let result = analyse_inhibition(&request(replicated)).unwrap();
            assert!(result.problems.is_empty(), "{:?}", result.problems);
            assert_eq!(result.points.len(), 24);
            for (a, b) in result.fits.iter().zip(&reference.fits) {
                for (pa, pb) in a.parameters.iter().zip(&b.parameters) {
                    assert!((pa.value - pb.value).abs() <= 1e-12 * pb.value.abs(), "{} {}: {} {}", a.model, pa.name, pa.value, pb.value);
                    if let (Some(sa), Some(sb)) = (pa.std_error, pb.std_error) {
                        assert!((sa - sb).abs() <= 1e-12 * sb, "{} {} SE: {sa} {sb}", a.model, pa.name);
                    }
                }
            }
            assert_eq!(result.replicates, reference.replicates);
            assert_eq!(result.replicates.len(), 3);
            assert!(result.replicates.iter().all(|r| r.by_substrate.len() == 4 && r.by_substrate.iter().all(|g| g.count == 2)));
        }
    }
}
