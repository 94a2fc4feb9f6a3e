//! The two-substrate analysis: rates over a grid of [A] and [B] in, the
//! ternary-complex (`sequential`), rapid-equilibrium ordered (`ordered`)
//! and substituted-enzyme (`ping-pong`) rate laws fitted globally, compared
//! and plotted. [`analyse_bisubstrate`] is the one code path behind the
//! CLI's `fit --model sequential|ordered|ping-pong` and `compare` on such a
//! table, and the page's `bisubstrate` export.
//!
//! Two table layouts are read, through the column vocabulary of
//! [`crate::read::columns`]:
//!
//! - **long**: one row per measurement, with columns for [A], [B] and v
//!   (`[A] (µM)`, `[B] (mM)`, `v (µM/min)`), or [A], [B] then replicate
//!   rate columns (`v rep 1`, `v rep 2`);
//! - **matrix**: the first column is [A] (its heading names A) and every
//!   other column holds the rates at one [B], written in its heading
//!   (`0.5 mM`, `[B] = 2 mM`); a repeated heading is a replicate, and an
//!   empty cell a measurement not made.
//!
//! **Nesting.** Ordered is the ternary-complex law at KmA → 0 and ping-pong
//! the same law at KiA → 0, so each is tested against `sequential` by the
//! extra-sum-of-squares F test and the verdict follows the rule of
//! [`crate::compare`]. Ordered and ping-pong are not nested in each other;
//! when both stand, the verdict is undecided between them.

use crate::compare::{compare_fits, Comparison};
use crate::error::Error;
use crate::fit::{estimate, fit_model, Fit, FitSettings, FitSummary};
use crate::model::{Dimension, Model, Observations};
use crate::models::{MichaelisMenten, TwoSubstrateMechanism, TwoSubstrates};
use crate::plots::bisubstrate::{two_substrate_plots, TwoSubstrateFit, TwoSubstratePoint, TwoSubstrateUnits};
use crate::plots::family::short_number;
use crate::plots::PlotData;
use crate::rates::CAUTION;
use crate::read::columns::{is_rate_name, is_substrate_a_name, is_substrate_b_name, level_heading, normalise_name};
use crate::read::replicates::{common_unit, problems_without_empty_replicates, replicate_label, summarise, MeasurementColumns, ReplicateSummary};
use crate::table::{parse_table, shortage_reasons, ColumnHeading, InputProblem, Table};
use crate::units::{kcat_per_second, ConcentrationUnit, RateUnit};
use serde::{Deserialize, Serialize};

/// Fewer distinct levels above zero than this, of either substrate, and
/// the mechanisms can hardly be told apart (common practice, no source:
/// the replots need at least three points to show a line, and five of each
/// are usual).
pub const FEWEST_LEVELS: usize = 3;

/// What to analyse.
#[derive(Clone, Debug, Default, PartialEq, Deserialize)]
#[serde(default)]
pub struct BisubstrateRequest {
    /// The pasted or loaded table (long or matrix layout).
    pub text: String,
    /// Rate laws to fit (`sequential`, `ordered`, `ping-pong`); empty means
    /// all three.
    pub models: Vec<String>,
    /// Input line numbers (1-based) to leave out: every rate on the line.
    pub excluded_lines: Vec<usize>,
    /// Single rates to leave out, as (input line, input column), both
    /// 1-based (one cell of a matrix, or one replicate).
    pub excluded_cells: Vec<(usize, usize)>,
    /// Unit of [A]; `None` or empty means "as the header says".
    pub substrate_a_unit: Option<String>,
    /// Unit of [B]; `None` or empty means "as the header says".
    pub substrate_b_unit: Option<String>,
    /// Unit of v; `None` or empty means "as the header says" (a matrix
    /// header has no place for it).
    pub rate_unit: Option<String>,
    /// Total enzyme concentration [E]t, for kcat = Vmax/[E]t.
    pub enzyme: Option<f64>,
    /// Unit of [E]t; required with `enzyme`.
    pub enzyme_unit: Option<String>,
    /// How the rates are weighted: uniform, relative or poisson (an sd
    /// column is not read from these tables). Default uniform.
    pub weighting: crate::weighting::Weighting,
    /// How intervals are computed for every law. Default asymptotic.
    pub interval_method: crate::intervals::IntervalMethod,
    /// Bootstrap settings, used when `interval_method` is bootstrap.
    pub bootstrap: crate::intervals::BootstrapSettings,
}

/// How the table was laid out.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum TwoSubstrateLayout {
    /// One row per measurement: [A], [B], v (or replicate rate columns).
    Long,
    /// [A] then one column of rates per [B].
    Matrix,
}

/// One measurement as the analysis saw it.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct BisubstratePoint {
    /// Index in [`BisubstrateAnalysis::points`].
    pub row: usize,
    /// Input line, counting from 1.
    pub line: usize,
    /// Input column of the rate, counting from 1.
    pub column: usize,
    /// Concentration of substrate A.
    pub a: f64,
    /// Concentration of substrate B.
    pub b: f64,
    /// Measured rate.
    pub v: f64,
    /// Whether the point was left out.
    pub excluded: bool,
    /// Rate of the law the plots show at this ([A], [B]).
    pub fitted: f64,
}

/// The replicates at one [B], by [A].
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SubstrateBReplicates {
    /// The concentration of B.
    pub b: f64,
    /// One summary per [A] (its `concentration` is [A]).
    pub by_a: Vec<ReplicateSummary>,
}

/// Units used, as symbols.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct BisubstrateUnits {
    /// Unit of [A].
    pub substrate_a: Option<String>,
    /// Unit of [B].
    pub substrate_b: Option<String>,
    /// Unit of v.
    pub rate: Option<String>,
    /// Unit of [E]t, when kcat was asked for.
    pub enzyme: Option<String>,
}

/// The whole two-substrate analysis.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct BisubstrateAnalysis {
    /// The layout read.
    pub layout: TwoSubstrateLayout,
    /// One fit per law, in the order asked for (parameters with units;
    /// `kcat` appended, derived, when [E]t and the rate unit allow).
    pub fits: Vec<FitSummary>,
    /// Ranking, F tests (ordered and ping-pong each inside sequential) and
    /// the verdict.
    pub comparison: Comparison,
    /// The law whose curves the plots show (the preferred one, or the
    /// lowest AICc when the comparison cannot decide).
    pub shown: String,
    /// The distinct concentrations of A.
    pub a_levels: Vec<f64>,
    /// The distinct concentrations of B.
    pub b_levels: Vec<f64>,
    /// The rates used in the fits, by [B] and then [A]: count, mean, SD
    /// and SEM.
    pub replicates: Vec<SubstrateBReplicates>,
    /// Every measurement.
    pub points: Vec<BisubstratePoint>,
    /// Problems with the input, each at its line and column.
    pub problems: Vec<InputProblem>,
    /// How the table was read and fitted.
    pub notes: Vec<String>,
    /// What limits the design: too few levels, a range that does not reach
    /// the shown law's constants.
    pub warnings: Vec<String>,
    /// Units.
    pub units: BisubstrateUnits,
    /// The check of the error structure on the most general law fitted.
    pub error_structure: Option<crate::errors::ErrorStructure>,
    /// The direct plot, the double-reciprocal plot and the two replots.
    pub plots: Vec<PlotData>,
    /// The standing caution.
    pub caution: String,
}

enum Layout {
    Long { a: usize, b: usize, v: Vec<usize>, unit: Option<String> },
    Matrix { levels: Vec<(usize, f64)>, unit: Option<ConcentrationUnit> },
}

fn header_line(table: &Table) -> usize {
    table.rows.first().map_or(1, |r| r.line.saturating_sub(1)).max(1)
}

fn find_layout(table: &Table, notes: &mut Vec<String>) -> Result<Option<Layout>, Error> {
    let Some(headings) = &table.headings else { return Ok(None) };
    let a = headings.iter().position(|h| is_substrate_a_name(&h.name));
    let b = headings.iter().position(|h| is_substrate_b_name(&h.name));
    if let (Some(a), Some(b)) = (a, b) {
        let v = headings.iter().position(|h| is_rate_name(&h.name));
        let others: Vec<usize> = (0..headings.len()).filter(|k| *k != a && *k != b).collect();
        let labelled = others.len() >= 2 && others.iter().all(|&k| replicate_label(&headings[k].name, &is_rate_name).is_some());
        let v = match v {
            _ if labelled => Some(others),
            Some(v) => Some(others.into_iter().filter(|&k| normalise_name(&headings[k].name) == normalise_name(&headings[v].name)).collect()),
            None => None,
        };
        let Some(v) = v else {
            return Err(Error::invalid_data(
                "the header names [A] and [B] but no rate column (v, rate, velocity, or replicate columns such as v rep 1, v rep 2)",
            ));
        };
        for (index, heading) in headings.iter().enumerate() {
            if index != a && index != b && !v.contains(&index) {
                notes.push(format!("Column {} ('{}') is not used.", index + 1, heading.name));
            }
        }
        let unit = common_unit(headings, &v).map_err(Error::invalid_data)?;
        return Ok(Some(Layout::Long { a, b, v, unit }));
    }
    if a != Some(0) || headings.len() < 2 {
        return Ok(None);
    }
    let mut quantities = Vec::new();
    for (k, heading) in headings.iter().enumerate().skip(1) {
        match level_heading(heading, &is_substrate_b_name) {
            Some(q) => quantities.push((k, q)),
            None => {
                return Err(Error::invalid_data(format!(
                    "line {}, column {}: '{}' is not a concentration of B; a matrix table has [A] in column 1 and one column per [B], its concentration in the heading (such as 0.5 mM or [B] = 0.5 mM)",
                    header_line(table),
                    k + 1,
                    heading.name
                )))
            }
        }
    }
    // Every [B] is expressed in the first unit given.
    let mut unit: Option<ConcentrationUnit> = None;
    let mut levels = Vec::new();
    for (column, (value, text)) in quantities {
        let parsed = match text {
            Some(t) => Some(ConcentrationUnit::parse(&t).map_err(|m| {
                Error::invalid_data(format!("line {}, column {}: the unit of [B]: {m}", header_line(table), column + 1))
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
                "line {}, column {}: a concentration of B cannot be negative",
                header_line(table),
                column + 1
            )));
        }
        levels.push((column, value));
    }
    notes.push(format!(
        "Matrix layout: column 1 is [A]; columns 2 to {} hold v at {} concentrations of B.",
        headings.len(),
        levels.len()
    ));
    Ok(Some(Layout::Matrix { levels, unit }))
}

/// Whether `text` is a table of rates over two substrates: a header naming
/// [A] and [B] (long layout), or [A] followed by columns headed with
/// concentrations of B (matrix layout).
pub fn is_bisubstrate_table(text: &str) -> bool {
    let table = parse_table(text);
    matches!(find_layout(&table, &mut Vec::new()), Ok(Some(_)))
}

struct Read {
    layout: TwoSubstrateLayout,
    points: Vec<BisubstratePoint>,
    problems: Vec<InputProblem>,
    notes: Vec<String>,
    units: (Option<ConcentrationUnit>, Option<ConcentrationUnit>, Option<RateUnit>),
}

fn unit_from<T>(text: Option<&str>, parse: fn(&str) -> Result<T, String>, what: &str, notes: &mut Vec<String>) -> Option<T> {
    match parse(text?) {
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
        return Err(Error::invalid_data("no data rows found; paste a table with columns [A], [B] and v"));
    }
    let layout = find_layout(&table, &mut notes)?.ok_or_else(|| {
        Error::invalid_data(
            "this is not a two-substrate table: give a header with columns [A], [B] and v, or [A] followed by one column of rates per concentration of B (0.5 mM, 1 mM, 2 mM)",
        )
    })?;
    let headings = table.headings.as_ref().expect("a layout needs a header");
    let mut problems = Vec::new();
    let mut points = Vec::new();
    let mut push = |line: usize, column: usize, a: f64, b: f64, v: f64| {
        points.push(BisubstratePoint {
            row: points.len(),
            line,
            column,
            a,
            b,
            v,
            excluded: excluded_lines.contains(&line) || excluded_cells.contains(&(line, column)),
            fitted: f64::NAN,
        });
    };
    match &layout {
        Layout::Long { a, b, v, unit } => {
            let columns = MeasurementColumns { concentration: *a, measurements: v.clone(), unit: unit.clone() };
            let (kept, empty) = problems_without_empty_replicates(&table, &columns);
            problems = kept;
            if columns.replicated() {
                notes.push(format!(
                    "Replicates in columns: columns {} hold {} replicate rates at each [A] and [B]; every replicate is fitted, not their mean.{}",
                    v.iter().map(|c| (c + 1).to_string()).collect::<Vec<_>>().join(", "),
                    v.len(),
                    if empty > 0 { format!(" {empty} empty replicate cell(s) are read as measurements not made.") } else { String::new() }
                ));
            }
            for row in &table.rows {
                let cell = |c: usize| row.cells.get(c).copied().flatten();
                let rates: Vec<(usize, f64)> = v.iter().filter_map(|&c| cell(c).map(|x| (c, x))).collect();
                let (Some(av), Some(bv), false) = (cell(*a), cell(*b), rates.is_empty()) else {
                    if !problems.iter().any(|p| p.line == row.line) {
                        problems.push(InputProblem { line: row.line, column: None, message: "the row has no [A], [B] or v value".into() });
                    }
                    continue;
                };
                if av < 0.0 || bv < 0.0 {
                    let column = if av < 0.0 { a + 1 } else { b + 1 };
                    problems.push(InputProblem { line: row.line, column: Some(column), message: "a concentration cannot be negative".into() });
                    continue;
                }
                for (column, rate) in rates {
                    push(row.line, column + 1, av, bv, rate);
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
                if empty_cell || (short_row && row_cells < table.width && row_cells > 1) {
                    empty += usize::from(empty_cell);
                } else {
                    problems.push(problem.clone());
                }
            }
            for row in &table.rows {
                let Some(Some(av)) = row.cells.first() else { continue };
                if *av < 0.0 {
                    problems.push(InputProblem { line: row.line, column: Some(1), message: "a concentration cannot be negative".into() });
                    continue;
                }
                for (column, b) in levels {
                    if let Some(Some(v)) = row.cells.get(*column) {
                        push(row.line, column + 1, *av, *b, *v);
                    }
                }
            }
            if empty > 0 {
                notes.push(format!("{empty} empty cell(s) in the matrix are read as measurements not made."));
            }
        }
    }
    problems.sort_by_key(|p| (p.line, p.column));
    problems.dedup();
    let heading_unit = |k: usize| headings.get(k).and_then(|h: &ColumnHeading| h.unit.clone());
    let (units, kind) = match &layout {
        Layout::Long { a, b, unit, .. } => (
            (
                unit_from(heading_unit(*a).as_deref(), ConcentrationUnit::parse, "[A]", &mut notes),
                unit_from(heading_unit(*b).as_deref(), ConcentrationUnit::parse, "[B]", &mut notes),
                unit_from(unit.as_deref(), RateUnit::parse, "v", &mut notes),
            ),
            TwoSubstrateLayout::Long,
        ),
        Layout::Matrix { unit, .. } => (
            (unit_from(heading_unit(0).as_deref(), ConcentrationUnit::parse, "[A]", &mut notes), *unit, None),
            TwoSubstrateLayout::Matrix,
        ),
    };
    Ok(Read { layout: kind, points, problems, notes, units })
}

/// Fits one law. The ternary-complex law is also started from the
/// solutions of the special cases given in `seeds` (the missing constant
/// set to 1% of the smallest [A] above zero), and the best converged result
/// is kept: when the data are in truth ordered or ping-pong, the general
/// fit's KmA or KiA heads for zero and one start can stall on the way.
pub fn fit_two_substrates(mechanism: TwoSubstrateMechanism, data: &Observations, seeds: &[(TwoSubstrateMechanism, Vec<f64>)]) -> Result<Fit, Error> {
    let model = TwoSubstrates::new(mechanism);
    let settings = FitSettings::default();
    let mut best = fit_model(&model, data, None, &settings)?;
    if mechanism == TwoSubstrateMechanism::Sequential {
        let small = 0.01 * data.predictor_column(0).into_iter().filter(|a| *a > 0.0).fold(f64::INFINITY, f64::min);
        for (seed_mechanism, p) in seeds {
            let mut g = TwoSubstrates::new(*seed_mechanism).general(p);
            match seed_mechanism {
                TwoSubstrateMechanism::Ordered => g[1] = small,
                TwoSubstrateMechanism::PingPong => g[3] = small,
                TwoSubstrateMechanism::Sequential => continue,
            }
            if !g.iter().all(|v| v.is_finite()) {
                continue;
            }
            let candidate = fit_model(&model, data, Some(&g), &settings)?;
            let better = (candidate.summary.converged && !best.summary.converged)
                || (candidate.summary.converged == best.summary.converged && candidate.summary.rss < best.summary.rss);
            if better {
                best = candidate;
            }
        }
    }
    Ok(best)
}

fn mechanism_named(name: &str) -> Result<TwoSubstrateMechanism, Error> {
    TwoSubstrateMechanism::from_name(name).ok_or_else(|| {
        Error::invalid_option(format!("'{name}' is not a two-substrate rate law; choose from sequential, ordered, ping-pong"))
    })
}

fn capitalise(text: &str) -> String {
    let mut chars = text.chars();
    chars.next().map(|c| c.to_uppercase().chain(chars).collect()).unwrap_or_default()
}

/// Whether the positive levels `levels` of a substrate reach a constant
/// `k` of that substrate from both sides; the warning when they do not.
fn range_warning(name: &str, substrate: &str, k: f64, levels: &[f64]) -> Option<String> {
    let positive: Vec<f64> = levels.iter().copied().filter(|l| *l > 0.0).collect();
    let (low, high) = (positive.first().copied()?, positive.last().copied()?);
    if !(k.is_finite() && k > 0.0) {
        return None;
    }
    if high < k {
        Some(format!(
            "The highest {substrate} is only {}×{name}: {name} is poorly defined. Common practice (no formal source) is to reach several times each constant (about 0.2 to 5 times).",
            short_number(high / k)
        ))
    } else if low > k {
        Some(format!(
            "The lowest {substrate} is already {}×{name}: {name} is poorly defined. Common practice (no formal source) is to start below each constant (about 0.2 to 5 times).",
            short_number(low / k)
        ))
    } else {
        None
    }
}

/// Reads the table, fits the two-substrate laws globally, compares them
/// and builds the plots.
pub fn analyse_bisubstrate(request: &BisubstrateRequest) -> Result<BisubstrateAnalysis, Error> {
    let mut mechanisms: Vec<TwoSubstrateMechanism> = if request.models.is_empty() {
        TwoSubstrateMechanism::ALL.to_vec()
    } else {
        request.models.iter().map(|m| mechanism_named(m)).collect::<Result<_, _>>()?
    };
    let mut seen = Vec::new();
    mechanisms.retain(|m| if seen.contains(m) { false } else { seen.push(*m); true });
    let Read { layout, mut points, problems, mut notes, units } = read(&request.text, &request.excluded_lines, &request.excluded_cells)?;
    let (mut a_unit, mut b_unit, mut rate_unit) = units;
    let given = |u: &Option<String>| u.as_deref().map(str::trim).filter(|t| !t.is_empty()).map(str::to_string);
    if let Some(u) = given(&request.substrate_a_unit) {
        a_unit = Some(ConcentrationUnit::parse(&u).map_err(Error::invalid_option)?);
    }
    if let Some(u) = given(&request.substrate_b_unit) {
        b_unit = Some(ConcentrationUnit::parse(&u).map_err(Error::invalid_option)?);
    }
    if let Some(u) = given(&request.rate_unit) {
        rate_unit = Some(RateUnit::parse(&u).map_err(Error::invalid_option)?);
    }
    if rate_unit.is_none() && layout == TwoSubstrateLayout::Matrix {
        notes.push("A matrix table's header has no place for the unit of v; choose it to label the rates.".to_string());
    }
    // kcat = Vmax/[E]t, when [E]t and the units allow.
    let mut enzyme_symbol = None;
    let mut kcat_factor = None;
    if let Some(enzyme) = request.enzyme {
        if !(enzyme.is_finite() && enzyme > 0.0) {
            return Err(Error::invalid_option("the enzyme concentration [E]t must be a positive number"));
        }
        let text = given(&request.enzyme_unit)
            .ok_or_else(|| Error::invalid_option("give the unit of the enzyme concentration [E]t (for example nM)"))?;
        let enzyme_unit = ConcentrationUnit::parse(&text).map_err(Error::invalid_option)?;
        enzyme_symbol = Some(enzyme_unit.symbol().to_string());
        match rate_unit {
            Some(rate) => kcat_factor = Some(kcat_per_second(1.0, rate, enzyme, enzyme_unit)),
            None => notes.push("kcat needs the unit of v (a concentration per time); choose it or write it in the header.".to_string()),
        }
    }

    let used: Vec<BisubstratePoint> = points.iter().filter(|p| !p.excluded).cloned().collect();
    let most = mechanisms.iter().map(|m| TwoSubstrates::new(*m).parameters().len()).max().unwrap_or(3);
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
    let mut data = Observations::new(2, used.iter().flat_map(|p| [p.a, p.b]).collect(), rates, weights)?;
    let general = if mechanisms.contains(&TwoSubstrateMechanism::Sequential) { TwoSubstrateMechanism::Sequential } else { mechanisms[0] };
    // Weights from a fitted curve are iterated on the most general law
    // asked for and then held fixed for every law, so that the comparison
    // is between sums of squares with the same weights.
    let mut reweighting_rounds = None;
    if request.weighting.from_model() {
        let first = fit_two_substrates(general, &data, &[])?;
        if first.summary.converged {
            let r = crate::fit::iterate_weights(
                &TwoSubstrates::new(general),
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
                    "{}: the weights are computed from the {} fit's curve (settled after {} round(s)) and used unchanged for every rate law, so that the comparison is between sums of squares with the same weights.",
                    capitalise(request.weighting.describe()),
                    general.name(),
                    r.rounds
                ));
            } else {
                notes.push(format!(
                    "The weights from the fitted curve did not settle on the {} fit; the weights on the measured rates are used for every rate law.",
                    general.name()
                ));
            }
        }
    }

    // The special cases first, so that the general law can start from them.
    let mut order = mechanisms.clone();
    order.sort_by_key(|m| *m == TwoSubstrateMechanism::Sequential);
    let mut fitted: Vec<(TwoSubstrateMechanism, Fit)> = Vec::new();
    for mechanism in order {
        let seeds: Vec<(TwoSubstrateMechanism, Vec<f64>)> = fitted.iter().map(|(m, f)| (*m, f.values().to_vec())).collect();
        fitted.push((mechanism, fit_two_substrates(mechanism, &data, &seeds)?));
    }
    fitted.sort_by_key(|(m, _)| mechanisms.iter().position(|x| x == m));

    let unit_of = |dimension: Dimension| -> Option<String> {
        match dimension {
            Dimension::Response => rate_unit.map(|u| u.symbol()),
            Dimension::Predictor(0) => a_unit.map(|u| u.symbol().to_string()),
            Dimension::Predictor(_) => b_unit.map(|u| u.symbol().to_string()),
            Dimension::Dimensionless => Some(String::new()),
            Dimension::Unspecified => None,
        }
    };
    let mut fits = Vec::new();
    for (mechanism, fit) in &fitted {
        let model = TwoSubstrates::new(*mechanism);
        let mut summary = fit.summary.clone();
        summary.weighting = request.weighting.name().into();
        summary.reweighting_rounds = reweighting_rounds;
        crate::intervals::apply_interval_method(&mut summary, &model, &data, fit, request.interval_method, &request.bootstrap)?;
        for (estimate, spec) in summary.parameters.iter_mut().zip(model.parameters()) {
            estimate.unit = unit_of(spec.dimension);
        }
        if summary.converged {
            for (estimate, spec) in summary.parameters.iter().zip(model.parameters()) {
                if estimate.value <= 0.0 {
                    summary.warnings.push(format!("{} is not positive ({}); it has no physical meaning.", spec.name, short_number(estimate.value)));
                }
            }
        }
        if let Some(factor) = kcat_factor {
            let vmax = summary.parameters[0].clone();
            let mut kcat = estimate("kcat", vmax.value * factor, vmax.std_error.map(|s| s * factor), fit.t_quantile);
            kcat.ci_low = vmax.ci_low.map(|v| v * factor);
            kcat.ci_high = vmax.ci_high.map(|v| v * factor);
            kcat.ci_method = vmax.ci_method.clone();
            kcat.flag = vmax.flag.clone();
            kcat.set_bias(vmax.bias.map(|b| b * factor));
            kcat.unit = Some("s⁻¹".to_string());
            kcat.derived = true;
            summary.parameters.push(kcat);
        }
        fits.push(summary);
    }
    let comparison = compare_fits(&fits);
    let error_structure = crate::errors::error_structure(&TwoSubstrates::new(general), &data);
    if let Some(check) = &error_structure {
        match check.suggested.as_deref() {
            Some(suggested) if suggested != request.weighting.name() => notes.push(format!(
                "{} (on the {} fit.) Every rate law was fitted with {}; weighting {suggested} suits these data better, and the F test and AICc are only as good as the weights.",
                check.text,
                general.name(),
                request.weighting.describe()
            )),
            _ => notes.push(format!("{} (on the {} fit.)", check.text, general.name())),
        }
    }
    if mechanisms.len() > 1 {
        notes.push(
            "Ordered is the sequential law with KmA → 0 and ping-pong the sequential law with KiA → 0: each is tested against sequential by the F test; ordered and ping-pong are not nested in each other."
                .to_string(),
        );
    }

    let level_list = |values: Vec<f64>| {
        let mut v = values;
        v.sort_by(f64::total_cmp);
        v.dedup();
        v
    };
    let a_levels = level_list(used.iter().map(|p| p.a).collect());
    let b_levels = level_list(used.iter().map(|p| p.b).collect());
    let mut warnings = Vec::new();
    for (levels, what) in [(&a_levels, "A"), (&b_levels, "B")] {
        let count = levels.iter().filter(|l| **l > 0.0).count();
        if count < FEWEST_LEVELS {
            warnings.push(format!(
                "Only {count} concentration(s) of {what} above zero: the rate laws can hardly be told apart. Common practice (no formal source) is five or more of each substrate."
            ));
        }
    }

    let shown = comparison.preferred.clone().unwrap_or_else(|| comparison.models[0].model.clone());
    let (shown_mechanism, shown_fit) =
        fitted.iter().find(|(m, _)| m.name() == shown).map(|(m, f)| (*m, f)).unwrap_or_else(|| (fitted[0].0, &fitted[0].1));
    let model = TwoSubstrates::new(shown_mechanism);
    let values = shown_fit.values().to_vec();
    if shown_fit.summary.converged {
        for (spec, value) in model.parameters().iter().zip(&values).skip(1) {
            let (substrate, levels) = if spec.dimension == Dimension::Predictor(0) { ("[A]", &a_levels) } else { ("[B]", &b_levels) };
            if let Some(w) = range_warning(spec.name, substrate, *value, levels) {
                warnings.push(format!("{} ({} fit)", w, shown_mechanism.name()));
            }
        }
    }
    for point in &mut points {
        point.fitted = model.value(&[point.a, point.b], &values);
    }

    // Separate Michaelis-Menten fits in [A] at each [B], for the replots.
    let separate: Vec<(f64, Option<(f64, f64)>)> = b_levels
        .iter()
        .map(|&b| {
            let level: Vec<&BisubstratePoint> = used.iter().filter(|p| p.b == b).collect();
            let a: Vec<f64> = level.iter().map(|p| p.a).collect();
            let v: Vec<f64> = level.iter().map(|p| p.v).collect();
            let fit = Observations::single(&a, &v)
                .ok()
                .filter(|o| o.len() >= 3)
                .and_then(|o| fit_model(&MichaelisMenten, &o, None, &FitSettings::default()).ok())
                .filter(|f| f.summary.converged && f.values().iter().all(|v| *v > 0.0))
                .map(|f| (f.values()[0], f.values()[1]));
            (b, fit)
        })
        .collect();
    let plot_points: Vec<TwoSubstratePoint> =
        points.iter().map(|p| TwoSubstratePoint { row: p.row, a: p.a, b: p.b, v: p.v, excluded: p.excluded }).collect();
    let rate = |a: f64, b: f64| model.value(&[a, b], &values);
    let apparent = |b: f64| model.apparent(b, &values);
    let global = TwoSubstrateFit { rate: &rate, apparent: &apparent, constants: model.general(&values), mechanism: shown_mechanism.name() };
    let symbol = |u: Option<ConcentrationUnit>| u.map(|u| u.symbol().to_string());
    let plot_units = TwoSubstrateUnits {
        a: symbol(a_unit).unwrap_or_default(),
        b: symbol(b_unit).unwrap_or_default(),
        rate: rate_unit.map(|u| u.symbol()).unwrap_or_default(),
    };
    let plots = two_substrate_plots(&plot_points, &global, &separate, &plot_units);

    Ok(BisubstrateAnalysis {
        layout,
        fits,
        comparison,
        shown,
        replicates: b_levels
            .iter()
            .map(|&b| SubstrateBReplicates { b, by_a: summarise(&used.iter().filter(|p| p.b == b).map(|p| (p.a, p.v)).collect::<Vec<_>>()) })
            .filter(|r| !r.by_a.is_empty())
            .collect(),
        a_levels,
        b_levels,
        points,
        problems,
        notes,
        warnings,
        units: BisubstrateUnits { substrate_a: symbol(a_unit), substrate_b: symbol(b_unit), rate: rate_unit.map(|u| u.symbol()), enzyme: enzyme_symbol },
        error_structure,
        plots,
        caution: CAUTION.to_string(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Invented rates of an imagined dehydrogenase (not measurements):
    /// 4 × 3 grid, the same numbers in both layouts.
    const LONG: &str = "[A] (µM)\t[B] (mM)\tv (µM/min)\n\
        5\t0.1\t1.10\n10\t0.1\t1.72\n25\t0.1\t2.52\n100\t0.1\t3.21\n\
        5\t0.4\t2.21\n10\t0.4\t3.48\n25\t0.4\t5.26\n100\t0.4\t7.03\n\
        5\t2\t2.96\n10\t2\t4.83\n25\t2\t7.54\n100\t2\t10.6\n";
    const MATRIX: &str = "[A] (µM)\t0.1 mM\t[B] = 0.4 mM\t2 mM\n\
        5\t1.10\t2.21\t2.96\n10\t1.72\t3.48\t4.83\n25\t2.52\t5.26\t7.54\n100\t3.21\t7.03\t10.6\n";

    fn key(r: &Read) -> Vec<(u64, u64, u64)> {
        let mut v: Vec<(u64, u64, u64)> = r.points.iter().map(|p| (p.a.to_bits(), p.b.to_bits(), p.v.to_bits())).collect();
        v.sort();
        v
    }

    #[test]
    fn long_and_matrix_layouts_read_the_same_points() {
        let long = read(LONG, &[], &[]).unwrap();
        let matrix = read(MATRIX, &[], &[]).unwrap();
        assert_eq!((long.layout, matrix.layout), (TwoSubstrateLayout::Long, TwoSubstrateLayout::Matrix));
        assert_eq!(key(&long), key(&matrix));
        assert_eq!(long.units.1, Some(ConcentrationUnit::parse("mM").unwrap()));
        assert_eq!(matrix.units.1, Some(ConcentrationUnit::parse("mM").unwrap()));
        assert_eq!(matrix.units.0, Some(ConcentrationUnit::parse("µM").unwrap()));
        assert!(is_bisubstrate_table(LONG) && is_bisubstrate_table(MATRIX));
        assert!(!is_bisubstrate_table("[S] (mM)\tv (µM/min)\n1\t2\n"));
        assert!(!is_bisubstrate_table("[S] (mM)\t0\t5 µM\n1\t2\t3\n"), "an inhibition matrix names [S], not [A]");
        assert!(!crate::inhibition::is_inhibition_table(MATRIX), "a two-substrate matrix is not an inhibitor table");
    }

    /// Replicate rate columns in the long layout read as repeated rows.
    #[test]
    fn replicate_columns_read_as_repeated_rows() {
        let wide = "[A] (µM)\t[B] (mM)\tv rep 1 (µM/min)\tv rep 2\n5\t0.1\t1.10\t1.14\n10\t0.1\t1.72\t\n";
        let rows = "[A] (µM)\t[B] (mM)\tv (µM/min)\n5\t0.1\t1.10\n5\t0.1\t1.14\n10\t0.1\t1.72\n";
        let (w, r) = (read(wide, &[], &[]).unwrap(), read(rows, &[], &[]).unwrap());
        assert!(w.problems.is_empty(), "{:?}", w.problems);
        assert_eq!(key(&w), key(&r));
        assert!(w.notes.iter().any(|n| n.contains("1 empty replicate cell")), "{:?}", w.notes);
    }

    /// Bad cells and headings, and the message each must give.
    #[test]
    fn bad_inputs_name_line_and_column() {
        let r = read("[A]\t[B]\tv\n1\t2\t3\n1\tx\t2\n-2\t1\t3\n4\t1\t#N/A\n", &[], &[]).unwrap();
        let found: Vec<String> = r.problems.iter().map(|p| p.to_string()).collect();
        assert_eq!(found.len(), 3, "{found:?}");
        assert!(found[0].starts_with("line 3, column 2: expected a number, found 'x'"), "{found:?}");
        assert_eq!(found[1], "line 4, column 1: a concentration cannot be negative");
        assert!(found[2].starts_with("line 5, column 3"), "{found:?}");
        assert_eq!(r.points.len(), 1);
        let r = read("[A] (µM)\t1 mM\t2 mM\n5\t1.2\tabc\n10\t\t2.0\n", &[], &[]).unwrap();
        let found: Vec<String> = r.problems.iter().map(|p| p.to_string()).collect();
        assert_eq!(found, ["line 2, column 3: expected a number, found 'abc'"]);
        assert_eq!(r.points.len(), 2, "the empty cell is a measurement not made");
        let e = read("[A] (µM)\t1 mM\tnotes\n5\t1\t2\n", &[], &[]).err().unwrap();
        assert!(e.message.starts_with("line 1, column 3: 'notes' is not a concentration of B"), "{}", e.message);
        let e = read("[A] (µM)\t1 ppm\n5\t1\n", &[], &[]).err().unwrap();
        assert!(e.message.starts_with("line 1, column 2: the unit of [B]"), "{}", e.message);
        let e = read("[A]\t[B]\tnotes\n1\t2\t3\n", &[], &[]).err().unwrap();
        assert!(e.message.contains("no rate column"), "{}", e.message);
        let e = analyse_bisubstrate(&BisubstrateRequest { text: "S\tv\n1\t2\n".into(), ..Default::default() }).unwrap_err();
        assert!(e.message.contains("not a two-substrate table"), "{}", e.message);
        let e = analyse_bisubstrate(&BisubstrateRequest { text: LONG.into(), models: vec!["random".into()], ..Default::default() }).unwrap_err();
        assert!(e.message.contains("not a two-substrate rate law"), "{}", e.message);
    }

    /// The analysis on the small invented grid: three fits with units,
    /// a comparison with the two nested F tests, four plots, kcat from
    /// [E]t, and the warning about only three levels of B.
    #[test]
    fn the_analysis_has_its_envelope() {
        let request = BisubstrateRequest { text: MATRIX.into(), rate_unit: Some("µM/min".into()), enzyme: Some(20.0), enzyme_unit: Some("nM".into()), ..Default::default() };
        let a = analyse_bisubstrate(&request).unwrap();
        let names: Vec<&str> = a.fits.iter().map(|f| f.model.as_str()).collect();
        assert_eq!(names, ["sequential", "ordered", "ping-pong"]);
        let tests: Vec<(&str, &str)> = a.comparison.f_tests.iter().map(|t| (t.simpler.as_str(), t.general.as_str())).collect();
        assert_eq!(tests, [("ordered", "sequential"), ("ping-pong", "sequential")]);
        assert_eq!(a.plots.len(), 4);
        let sequential = &a.fits[0];
        let units: Vec<(&str, Option<&str>)> = sequential.parameters.iter().map(|p| (p.name.as_str(), p.unit.as_deref())).collect();
        assert_eq!(units, [("Vmax", Some("µM/min")), ("KmA", Some("µM")), ("KmB", Some("mM")), ("KiA", Some("µM")), ("kcat", Some("s⁻¹"))]);
        // kcat = Vmax/[E]t: µM/min over 20 nM, per second.
        let vmax = sequential.parameters[0].value;
        assert!((sequential.parameters[4].value - vmax * 1e-6 / 60.0 / 20e-9).abs() < 1e-9 * vmax);
        assert!(!a.warnings.iter().any(|w| w.starts_with("Only")), "{:?}", a.warnings);
        let two_levels: String = MATRIX.lines().map(|l| l.rsplit_once('\t').unwrap().0.to_string() + "\n").collect();
        let b = analyse_bisubstrate(&BisubstrateRequest { text: two_levels, ..Default::default() }).unwrap();
        assert!(b.warnings.iter().any(|w| w.starts_with("Only 2 concentration(s) of B")), "{:?}", b.warnings);
        assert!(!a.caution.is_empty());
        assert!(a.points.iter().all(|p| p.fitted.is_finite()));
    }
}
