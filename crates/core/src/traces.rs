//! From raw time courses to initial rates.
//!
//! A plate reader (or a cuvette photometer) writes a signal against time,
//! one column per well. [`analyse_traces`] reads such a table and a layout
//! table that says what each trace is, subtracts blanks, turns signal into
//! concentration (Beer-Lambert or a standard curve), chooses an initial
//! window for every trace, fits a straight line there and flags what a
//! scientist should look at. It also writes the rates as a rate table that
//! [`crate::rates::analyse_rates`] reads, keeping the link from each row
//! back to its trace and window.
//!
//! ## The automatic window
//!
//! The window always starts at the first usable point and grows one point
//! at a time (at least [`MIN_WINDOW_POINTS`]). A window of k points is
//! accepted when all of these hold:
//!
//! 1. **No detectable curvature:** the F test for adding a quadratic term
//!    to the straight line is not significant at 5 %, F = ΔRSS/(RSS₂/(k−3))
//!    against F(1, k−3) (computed as t² with k − 3 degrees of freedom).
//! 2. **Curvature too small to bias the slope:** an F test cannot see
//!    curvature that still biases a straight-line slope by several of its
//!    standard errors (for evenly spaced points, a quadratic term at the
//!    edge of significance biases the slope by about 3.9·√F standard
//!    errors). So the curvature is also estimated once, by a quadratic over
//!    a longer reference span (up to three times the conversion limit), and
//!    the bias it implies for the line over the window, `c₂·Σ(t−t̄)t²/Σ(t−t̄)²`,
//!    must stay below half the line's standard error (or below 0.01 % of
//!    the slope, negligible whatever the noise).
//! 3. **Initial-rate conditions:** the product formed by the end of the
//!    window is at most [`TraceRequest::max_conversion`] of [S]0 (10 % by
//!    default: common practice for initial-rate conditions, no source).
//!
//! The longest accepted window is used. Overflow markers and values above
//! the detector's stated linear limit end the usable part of a trace.

use crate::error::Error;
use crate::fit::student_t_quantile;
use crate::table::{
    is_comment_line, looks_like_number, outside_quotes, parse_heading, read_number, split_line, ColumnHeading, InputProblem,
    NumberStyle, Separator, StyleVotes,
};
use crate::read::blocks::{describe, find_blocks, transposed, CellKinds, KineticBlock, Transposed};
use std::borrow::Cow;
use crate::units::{ConcentrationUnit, TimeUnit};
use serde::{Deserialize, Serialize};

/// The fewest points a window may have: a quadratic check needs three
/// parameters and some residual degrees of freedom.
pub const MIN_WINDOW_POINTS: usize = 5;

/// Relative standard error of a rate above which it is flagged `noisy`
/// (10 %: common practice, no source).
pub const NOISY_RELATIVE_SE: f64 = 0.10;

/// A chromophore with its molar absorption coefficient, for the page's and
/// the CLI's presets. Every value says where it comes from.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct ChromophorePreset {
    /// Short machine name (`nadh`).
    pub key: &'static str,
    /// Name for people.
    pub name: &'static str,
    /// Wavelength in nm.
    pub wavelength_nm: f64,
    /// Molar absorption coefficient in M⁻¹ cm⁻¹.
    pub epsilon: f64,
    /// Where the value comes from.
    pub source: &'static str,
}

/// The presets. Quoted from memory, not re-checked against the papers.
pub const PRESETS: &[ChromophorePreset] = &[
    ChromophorePreset {
        key: "nadh",
        name: "NADH",
        wavelength_nm: 340.0,
        epsilon: 6220.0,
        source: "6.22 mM⁻¹ cm⁻¹, the value usually traced to Horecker & Kornberg (1948) J. Biol. Chem. 175, 385 (from memory)",
    },
    ChromophorePreset {
        key: "nadph",
        name: "NADPH",
        wavelength_nm: 340.0,
        epsilon: 6220.0,
        source: "taken equal to NADH at 340 nm, as is usual (from memory)",
    },
    ChromophorePreset {
        key: "pnp",
        name: "p-nitrophenolate (alkaline pH)",
        wavelength_nm: 405.0,
        epsilon: 18000.0,
        source: "about 18,000 M⁻¹ cm⁻¹ at pH above 9, a commonly quoted figure (from memory; it depends on pH and wavelength, so measure it for your buffer)",
    },
];

/// Optical path length in cm of a liquid column in a flat-bottomed well:
/// volume over the well's cross-section, `h = V/(π·(d/2)²)`, with the
/// volume in µL (= mm³) and the diameter in mm. The meniscus is ignored;
/// a measured path (for example from the water peak near 977 nm) is better.
pub fn path_from_well(volume_ul: f64, diameter_mm: f64) -> Result<f64, Error> {
    if !(volume_ul.is_finite() && volume_ul > 0.0 && diameter_mm.is_finite() && diameter_mm > 0.0) {
        return Err(Error::invalid_option("the well volume and diameter must be positive numbers"));
    }
    let area = std::f64::consts::PI * (diameter_mm / 2.0).powi(2);
    Ok(volume_ul / area / 10.0)
}

/// Whether the signal rises or falls as the reaction goes.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Direction {
    /// The product absorbs (p-nitrophenolate, NADH formed).
    #[default]
    Rises,
    /// A substrate or cofactor absorbs (NADH consumed): product formed is
    /// minus the change.
    Falls,
}

/// A window set by hand for one trace (or every trace).
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct WindowOverride {
    /// The trace's name, or `*` for every trace without its own override.
    pub trace: String,
    /// Window start, in the time unit of the table.
    pub start: f64,
    /// Window end, in the time unit of the table.
    pub end: f64,
}

/// What to analyse and how.
#[derive(Clone, Debug, PartialEq, Deserialize)]
#[serde(default)]
pub struct TraceRequest {
    /// The time-course table: an optional block of metadata lines, then a
    /// header (time with unit, then one column per trace), then rows.
    pub traces: String,
    /// The layout table: `trace`, `S` (with unit), optionally `I`, `E`,
    /// `role`, `blank`.
    pub layout: String,
    /// Unit of time when the header gives none (`s`, `min`, `h`).
    pub time_unit: Option<String>,
    /// Molar absorption coefficient ε in M⁻¹ cm⁻¹ (Beer-Lambert).
    pub epsilon: Option<f64>,
    /// Path length in cm (Beer-Lambert).
    pub path_cm: Option<f64>,
    /// A standard curve instead of Beer-Lambert: a table of concentration
    /// (with unit) and signal.
    pub standard: Option<String>,
    /// Whether the signal rises or falls as product forms.
    pub direction: Direction,
    /// Upper end of the detector's linear range, in signal units; values
    /// above it end the usable part of a trace. `None`: no limit known.
    pub linear_limit: Option<f64>,
    /// Largest fraction of [S]0 converted within a window. Default 0.10.
    pub max_conversion: f64,
    /// Windows set by hand.
    pub windows: Vec<WindowOverride>,
    /// Traces to leave out of the rate table and the fits.
    pub excluded: Vec<String>,
    /// Whether to fit each trace's curvature-aware initial rate `v0`
    /// beside the window's rate ([`crate::early`]). Default false: it costs
    /// tens of refits per trace (its profile interval), of the order of
    /// 0.1 s per 100-point trace natively, so a plate reader's 384 wells
    /// take most of a minute; ask for it where it is shown or used.
    pub fit_v0: bool,
    /// Whether the rate table takes each trace's curvature-aware `v0`
    /// (needs `fit_v0`) instead of the window's straight-line rate. A
    /// trace without a `v0` is then left out of the table with a note,
    /// never filled in with its window rate. Default false.
    pub rates_from_v0: bool,
    /// The time unit the analysis is shown in (`s`, `min`, `h`): the
    /// table's times are converted to it before anything else, so windows
    /// (set by hand too), rates (per this unit), kobs and every plot use
    /// it. `None` or empty keeps the table's own unit.
    pub report_time: Option<String>,
    /// Which kinetic table of the text to read, counting from 1, when it
    /// holds several (two wavelengths, two reads); `None` reads the first
    /// and lists them all in [`TraceAnalysis::blocks`].
    pub block: Option<usize>,
}

impl Default for TraceRequest {
    fn default() -> Self {
        TraceRequest {
            traces: String::new(),
            layout: String::new(),
            time_unit: None,
            epsilon: None,
            path_cm: None,
            standard: None,
            direction: Direction::Rises,
            linear_limit: None,
            max_conversion: 0.10,
            windows: Vec::new(),
            excluded: Vec::new(),
            fit_v0: false,
            rates_from_v0: false,
            report_time: None,
            block: None,
        }
    }
}

/// What a trace is, from the layout.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Role {
    /// An assay well.
    Sample,
    /// A blank (buffer, or everything but enzyme and substrate).
    Blank,
    /// Substrate without enzyme: the non-enzymatic background.
    NoEnzyme,
}

/// What one cell of a trace held.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum CellState {
    /// A number.
    Value,
    /// Empty.
    Missing,
    /// An overflow or saturation marker (`OVRFLW`, `OVER`, `*`, `>3.5`).
    Overflow,
    /// A number above the detector's linear limit.
    OverRange,
    /// Text that is not a number.
    Unreadable,
}

/// A linear standard curve `signal = intercept + slope·c`.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct StandardCurve {
    /// Concentration unit of the standards.
    pub unit: String,
    /// Intercept (signal units).
    pub intercept: f64,
    /// Standard error of the intercept.
    pub intercept_se: Option<f64>,
    /// Slope (signal per concentration unit).
    pub slope: f64,
    /// Standard error of the slope.
    pub slope_se: Option<f64>,
    /// R².
    pub r_squared: Option<f64>,
    /// The standards: concentration, signal, residual.
    pub points: Vec<[f64; 3]>,
}

/// The result for one trace.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TraceResult {
    /// Name from the header (a well such as `B3`, or any label).
    pub name: String,
    /// Column in the time-course table, counting from 1 (in a transposed
    /// export, where the trace would stand with the times down the first
    /// column: its row among the trace rows, plus one).
    pub column: usize,
    /// Role from the layout.
    pub role: Role,
    /// [S]0 in the layout's unit.
    pub s: Option<f64>,
    /// [I] in the layout's unit.
    pub i: Option<f64>,
    /// [E] in the layout's unit.
    pub e: Option<f64>,
    /// Times in the table's unit (shared by every trace).
    pub times: Vec<f64>,
    /// Product concentration (or signal when no conversion is given) after
    /// blank subtraction; `None` where a cell was not a usable number.
    pub values: Vec<Option<f64>>,
    /// What each cell held.
    pub cells: Vec<CellState>,
    /// The blank traces subtracted, by name.
    pub blanks_subtracted: Vec<String>,
    /// Initial rate (concentration per time unit), when one could be fitted.
    pub rate: Option<f64>,
    /// Its standard error.
    pub rate_se: Option<f64>,
    /// 95% interval of the window's rate, rate ± t(0.975, k − 2)·SE with k
    /// the window's points. It is the straight line's interval: it does not
    /// include the line's bias on a curving trace (compare `v0`).
    pub rate_ci_low: Option<f64>,
    /// Upper end of that interval.
    pub rate_ci_high: Option<f64>,
    /// The initial rate from the early-trace model that accounts for
    /// curvature (the integrated rate equation with apparent constants of
    /// this trace; see [`crate::early`]), when asked for
    /// ([`TraceRequest::fit_v0`]), [S]0 is known in concentration units and
    /// the fit converges. The window's `rate` stays
    /// the rate the rate table uses; this is the estimate beside it.
    pub v0: Option<f64>,
    /// Its standard error (from every point the fit used, with K free, also
    /// when a limit of K fits best).
    pub v0_se: Option<f64>,
    /// Lower end of its 95% (profile-likelihood) interval.
    pub v0_ci_low: Option<f64>,
    /// Upper end of that interval.
    pub v0_ci_high: Option<f64>,
    /// Points the early-trace fit used (the whole usable trace).
    pub v0_points: usize,
    /// The trace's apparent constant K of that fit ([S]0's unit): 0 when
    /// the best curve is the straight line until exhaustion, `None` when it
    /// is first-order decay (K → ∞) or there is no fit.
    pub v0_k: Option<f64>,
    /// Intercept of the line at the window's first time.
    pub intercept: Option<f64>,
    /// First time of the window.
    pub window_start: Option<f64>,
    /// Last time of the window.
    pub window_end: Option<f64>,
    /// Number of points in the window.
    pub window_points: usize,
    /// Whether the window was set by hand.
    pub manual_window: bool,
    /// Fraction of [S]0 converted by the end of the window,
    /// `rate·(window end − first time)/[S]0`.
    pub fraction_converted: Option<f64>,
    /// Words for what to look at: `depletion`, `nonlinear`, `over-range`,
    /// `few-points`, `noisy`, `lag`, `burst`, `excluded`, `no-blank`,
    /// `wrong-direction` (the rate is clearly negative: the signal moves the
    /// other way than declared).
    pub flags: Vec<String>,
    /// Sentences explaining the flags.
    pub messages: Vec<String>,
    /// Whether the trace is left out of the rate table and the fits.
    pub excluded: bool,
}

/// A straight line through rates against [E] at one condition.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct EnzymeCheck {
    /// [S] of the group.
    pub s: Option<f64>,
    /// [I] of the group.
    pub i: Option<f64>,
    /// The points: [E], rate, trace name.
    pub points: Vec<(f64, f64, String)>,
    /// Slope (rate per [E]).
    pub slope: f64,
    /// Its standard error.
    pub slope_se: Option<f64>,
    /// Intercept (rate at [E] = 0).
    pub intercept: f64,
    /// Its standard error.
    pub intercept_se: Option<f64>,
    /// R² of the line.
    pub r_squared: Option<f64>,
    /// Whether the intercept is zero within its 95 % interval.
    pub intercept_zero: Option<bool>,
    /// p value of the F test for a quadratic term (needs four or more [E]).
    pub curvature_p: Option<f64>,
    /// Sentences for people.
    pub messages: Vec<String>,
}

/// A row of the generated rate table and where it came from.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RateLink {
    /// Line number in [`TraceAnalysis::rate_table`], counting from 1.
    pub line: usize,
    /// The trace.
    pub trace: String,
    /// Its window.
    pub window_start: f64,
    /// Its window.
    pub window_end: f64,
}

/// Everything [`analyse_traces`] found.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TraceAnalysis {
    /// The kinetic tables found in the text (one for a plain table), to
    /// choose from with [`TraceRequest::block`].
    pub blocks: Vec<KineticBlock>,
    /// Time unit of the table.
    pub time_unit: String,
    /// Unit of the trace values after conversion (a concentration, or
    /// `signal`).
    pub value_unit: String,
    /// Unit of the rates.
    pub rate_unit: String,
    /// Concentration unit of [S] (and of product when converted).
    pub substrate_unit: Option<String>,
    /// Unit of [I].
    pub inhibitor_unit: Option<String>,
    /// Unit of [E].
    pub enzyme_unit: Option<String>,
    /// Every trace, in table order.
    pub traces: Vec<TraceResult>,
    /// Cells and lines that could not be used, by line and column.
    pub problems: Vec<InputProblem>,
    /// How the tables were read.
    pub notes: Vec<String>,
    /// The standard curve, when one was used.
    pub standard: Option<StandardCurve>,
    /// v against [E] checks, one per condition with three or more [E].
    pub enzyme_checks: Vec<EnzymeCheck>,
    /// The sample rates as a table `[S] (unit)\tv (unit)` (and `[I]`) for
    /// [`crate::rates::analyse_rates`].
    pub rate_table: String,
    /// Where each row of the rate table came from.
    pub rate_links: Vec<RateLink>,
    /// Selwyn's test for every [S] (and [I]) with two or more [E]
    /// ([`crate::selwyn`]).
    pub selwyn: Vec<crate::selwyn::SelwynCheck>,
    /// The standing caution.
    pub caution: String,
}

/// The caution every trace analysis carries.
pub const CAUTION: &str = "Initial rates are estimates from straight lines over chosen windows; they are true \
    initial rates only if the enzyme is stable, little substrate is used, the detector is in its linear range and \
    the conversion to concentration is right. Look at every flagged trace before trusting its rate.";

// ------------------------------------------------------------------ reading

fn detect_separator(lines: &[&str]) -> char {
    for sep in ['\t', ';', ','] {
        if lines.iter().any(|l| outside_quotes(l).contains(sep)) {
            return sep;
        }
    }
    ' '
}

/// Splits every line into cells (quoted CSV cells read as their content),
/// reporting a quote that is never closed.
fn split_all<'a>(lines: &[(usize, &'a str)], sep: char, problems: &mut Vec<InputProblem>) -> Vec<(usize, Vec<Cow<'a, str>>)> {
    let separator = match sep {
        '\t' => Separator::Tab,
        ';' => Separator::Semicolon,
        ',' => Separator::Comma,
        _ => Separator::Whitespace,
    };
    lines
        .iter()
        .map(|(n, l)| {
            let (cells, open_quote) = split_line(l, separator);
            if let Some(column) = open_quote {
                problems.push(InputProblem {
                    line: *n,
                    column: Some(column),
                    message: "a quote opened in this cell is not closed on the line; the rest of the line was read as the cell".to_string(),
                });
            }
            (*n, cells)
        })
        .collect()
}

/// Borrows split lines as string slices.
fn as_slices<'a>(owned: &'a [(usize, Vec<Cow<'_, str>>)]) -> Vec<(usize, Vec<&'a str>)> {
    owned.iter().map(|(n, cells)| (*n, cells.iter().map(|c| c.as_ref()).collect())).collect()
}

/// Each column's number style, decided from the cells of `rows`.
fn column_styles(rows: &[(usize, Vec<&str>)]) -> Vec<NumberStyle> {
    let mut votes = StyleVotes::default();
    for (_, cells) in rows {
        for (column, cell) in cells.iter().enumerate() {
            if parse_clock(cell).is_none() {
                votes.add(column, cell);
            }
        }
    }
    votes.styles()
}

fn style_of(styles: &[NumberStyle], column: usize) -> NumberStyle {
    styles.get(column).copied().unwrap_or(NumberStyle::Undecided)
}

fn normalise_name(name: &str) -> String {
    name.chars()
        .filter(|c| !matches!(c, '[' | ']' | ' ' | '_' | '-' | '.' | ':'))
        .flat_map(char::to_lowercase)
        .collect()
}

fn is_time_name(name: &str) -> bool {
    matches!(normalise_name(name).as_str(), "t" | "time" | "times" | "elapsed" | "elapsedtime" | "readtime")
}

fn is_temperature(heading: &ColumnHeading) -> bool {
    let name = normalise_name(&heading.name);
    name.starts_with("temp")
        || name.contains('°')
        || heading.unit.as_deref().is_some_and(|u| u.contains('°') || u == "C" || u == "K")
}

/// Reads `h:mm:ss`, `mm:ss` (and with a decimal seconds part) as seconds.
fn parse_clock(cell: &str) -> Option<f64> {
    if !cell.contains(':') {
        return None;
    }
    let parts: Vec<&str> = cell.trim().split(':').collect();
    if parts.len() > 3 || parts.iter().any(|p| p.is_empty()) {
        return None;
    }
    let mut seconds = 0.0;
    for part in &parts {
        let value: f64 = part.replace(',', ".").parse().ok()?;
        if !(value >= 0.0) {
            return None;
        }
        seconds = seconds * 60.0 + value;
    }
    Some(seconds)
}

/// Whether a cell is an overflow or saturation marker.
fn is_overflow_marker(cell: &str) -> bool {
    let t = cell.trim();
    let upper = t.to_ascii_uppercase();
    t.starts_with('>')
        || t.chars().all(|c| c == '*' || c == '+') && !t.is_empty()
        || matches!(upper.as_str(), "OVRFLW" | "OVER" | "OVERFLOW" | "OVFL" | "SAT" | "SATURATED" | "HIGH" | "HI" | "RANGE?")
}

/// A time-course table as read.
struct RawTraces {
    time_unit: TimeUnit,
    names: Vec<(String, usize)>,
    times: Vec<f64>,
    lines: Vec<usize>,
    values: Vec<Vec<Option<f64>>>,
    cells: Vec<Vec<CellState>>,
    blocks: Vec<KineticBlock>,
    /// How a transposed export's cells map back to it.
    transposed: Option<Transposed>,
}

impl RawTraces {
    /// Where a cell of the table read stands in the text given.
    fn place(&self, line: usize, column: usize) -> (usize, Option<usize>) {
        match &self.transposed {
            Some(t) => t.place(line, Some(column)),
            None => (line, Some(column)),
        }
    }
}

/// `1–3, 9, 12–14` for the sorted `lines`.
fn line_ranges(lines: &[usize]) -> String {
    let mut parts: Vec<String> = Vec::new();
    let mut start = 0;
    for k in 1..=lines.len() {
        if k == lines.len() || lines[k] != lines[k - 1] + 1 {
            parts.push(if k - 1 == start { lines[start].to_string() } else { format!("{}–{}", lines[start], lines[k - 1]) });
            start = k;
        }
    }
    parts.join(", ")
}

fn read_traces(
    text: &str,
    time_unit_option: Option<&str>,
    block: Option<usize>,
    problems: &mut Vec<InputProblem>,
    notes: &mut Vec<String>,
) -> Result<RawTraces, Error> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let lines: Vec<(usize, &str)> = text
        .split('\n')
        .enumerate()
        .map(|(i, l)| (i + 1, l.strip_suffix('\r').unwrap_or(l)))
        .filter(|(_, l)| !l.trim().is_empty() && !is_comment_line(l))
        .collect();
    if lines.is_empty() {
        return Err(Error::invalid_data("the time-course table is empty; paste a header (time, then one column per trace) and rows"));
    }
    let sep = detect_separator(&lines.iter().map(|(_, l)| *l).collect::<Vec<_>>());
    let owned = split_all(&lines, sep, problems);
    let split_lines = as_slices(&owned);

    // The tables of the text (crate::read::blocks): run information above
    // and between them is skipped; the chosen one is read.
    let kinds = CellKinds { is_time_name: &|c: &str| is_time_name(&parse_heading(c).name), is_number: &looks_like_number, is_clock: &|c: &str| parse_clock(c).is_some() };
    let (spans, rejected) = find_blocks(&split_lines, &kinds);
    let blocks = describe(&split_lines, &spans);
    if spans.is_empty() {
        if let Some(turned) = transposed(&split_lines, &kinds) {
            let mut inner = Vec::new();
            let mut raw = read_traces(&turned.text, time_unit_option, block, &mut inner, notes)?;
            problems.extend(inner.into_iter().map(|p| {
                let (line, column) = turned.place(p.line, p.column);
                InputProblem { line, column, message: p.message }
            }));
            notes.push(format!(
                "The table is transposed: line {} holds the times and lines {}–{} one trace each; it was read with the times down the first column.",
                turned.source_lines[0],
                turned.source_lines[1],
                turned.source_lines[turned.source_lines.len() - 1]
            ));
            raw.transposed = Some(turned);
            return Ok(raw);
        }
        let tried = if rejected.is_empty() {
            String::new()
        } else {
            format!(
                " Lines tried as the header: {}.",
                rejected.iter().map(|(line, reason)| format!("line {line} was not, because {reason}")).collect::<Vec<_>>().join("; ")
            )
        };
        return Err(Error::invalid_data(format!(
            "no header found in the time-course table; the table needs a header line such as 'time (min)\\tA1\\tA2' above the numbers.{tried}"
        )));
    }
    let chosen = match block {
        Some(n) if n >= 1 && n <= spans.len() => n - 1,
        Some(n) => {
            return Err(Error::invalid_option(format!(
                "block {n} was chosen, but the text holds {} kinetic table(s) (numbered from 1)",
                spans.len()
            )))
        }
        None => 0,
    };
    if spans.len() > 1 {
        notes.push(format!(
            "The text holds {} kinetic tables: {}. Table {} is read; choose another by its number.",
            spans.len(),
            blocks
                .iter()
                .map(|b| format!("{} (lines {}–{}{})", b.number, b.header_line, b.last_line, b.title.as_ref().map_or(String::new(), |t| format!(", after '{t}'"))))
                .collect::<Vec<_>>()
                .join(", "),
            chosen + 1
        ));
    }
    let span = spans[chosen];
    let header_index = span.header;
    let skipped: Vec<usize> = split_lines.iter().enumerate().filter(|(i, _)| *i < span.header || *i >= span.end).map(|(_, (line, _))| *line).collect();
    if !skipped.is_empty() {
        notes.push(format!(
            "Lines {} outside the table were read as metadata (run information) and not used.",
            line_ranges(&skipped)
        ));
    }
    let split_lines = &split_lines[..span.end];
    let (header_line, header_cells) = &split_lines[header_index];
    let merged;
    let header_cells = if sep == ' ' {
        // Aligned with spaces, `time (s)` splits in two: a cell that is a
        // unit in brackets belongs to the cell before it.
        let mut cells: Vec<String> = Vec::new();
        for cell in header_cells {
            let is_unit = (cell.starts_with('(') && cell.ends_with(')')) || (cell.starts_with('[') && cell.ends_with(']') && cell.len() > 2 && !cells.is_empty() && cell.chars().nth(1).is_some_and(|c| !c.is_ascii_uppercase() || cell.len() > 3));
            match cells.last_mut() {
                Some(last) if is_unit && cell.starts_with('(') => { last.push(' '); last.push_str(cell); }
                _ => cells.push(cell.to_string()),
            }
        }
        merged = cells;
        merged.iter().map(String::as_str).collect::<Vec<&str>>()
    } else {
        header_cells.clone()
    };
    let header_cells = &header_cells;
    let headings: Vec<ColumnHeading> = header_cells.iter().map(|c| parse_heading(c)).collect();
    let time_heading = &headings[0];
    let clock = split_lines.get(header_index + 1).is_some_and(|(_, c)| c.first().is_some_and(|c| parse_clock(c).is_some()));
    let time_unit = if clock {
        notes.push("Times written as h:mm:ss were read as seconds.".to_string());
        TimeUnit::Second
    } else if let Some(unit) = time_unit_option.map(str::trim).filter(|u| !u.is_empty()) {
        TimeUnit::parse(unit).map_err(Error::invalid_option)?
    } else {
        match &time_heading.unit {
            Some(u) => TimeUnit::parse(u).map_err(|m| Error::invalid_data(format!("line {header_line}, column 1: {m}")))?,
            None => {
                return Err(Error::invalid_data(format!(
                    "line {header_line}, column 1: the time heading '{}' has no unit; write it as 'time (s)', 'time (min)' or 'time (h)'",
                    time_heading.name
                )))
            }
        }
    };

    let mut names = Vec::new();
    for (index, heading) in headings.iter().enumerate().skip(1) {
        if is_temperature(heading) {
            notes.push(format!("Column {} ('{}') looks like a temperature and was skipped.", index + 1, header_cells[index]));
            continue;
        }
        let name = header_cells[index].trim().to_string();
        if name.is_empty() {
            problems.push(InputProblem {
                line: *header_line,
                column: Some(index + 1),
                message: "the trace heading is empty; expected a well name or label".to_string(),
            });
            continue;
        }
        if names.iter().any(|(n, _): &(String, usize)| n == &name) {
            problems.push(InputProblem {
                line: *header_line,
                column: Some(index + 1),
                message: format!("the trace name '{name}' is used twice; the second column was not used"),
            });
            continue;
        }
        names.push((name, index));
    }
    if names.is_empty() {
        return Err(Error::invalid_data(format!("line {header_line}: the header names no trace columns after the time column")));
    }

    let mut times = Vec::new();
    let mut row_lines = Vec::new();
    let mut values = vec![Vec::new(); names.len()];
    let mut cells = vec![Vec::new(); names.len()];
    let styles = column_styles(&split_lines[header_index + 1..]);
    for (line, row) in &split_lines[header_index + 1..] {
        let time = parse_clock(row[0]).map(Ok).unwrap_or_else(|| read_number(row[0], style_of(&styles, 0)));
        let time = match time {
            Ok(t) => t,
            Err(message) => {
                problems.push(InputProblem { line: *line, column: Some(1), message: format!("{message} (the time); the line was not used") });
                continue;
            }
        };
        if let Some(&last) = times.last() {
            if time <= last {
                problems.push(InputProblem {
                    line: *line,
                    column: Some(1),
                    message: format!("the time {time} does not increase from the line before ({last}); the line was not used"),
                });
                continue;
            }
        }
        // A short row is read as empty cells at its end (a spreadsheet drops
        // trailing blanks), each flagged below; a long one is a problem.
        if row.len() > headings.len() {
            problems.push(InputProblem {
                line: *line,
                column: None,
                message: format!("expected {} columns, found {}; the extra cells were not used", headings.len(), row.len()),
            });
        }
        times.push(time);
        row_lines.push(*line);
        for (k, (_, column)) in names.iter().enumerate() {
            let cell = row.get(*column).copied().unwrap_or("");
            let (value, state) = if cell.trim().is_empty() {
                problems.push(InputProblem {
                    line: *line,
                    column: Some(column + 1),
                    message: "the cell is empty; it is left out, not guessed".to_string(),
                });
                (None, CellState::Missing)
            } else if is_overflow_marker(cell) {
                problems.push(InputProblem {
                    line: *line,
                    column: Some(column + 1),
                    message: format!("'{}' marks a reading over the detector's range; it and later points are not used for the rate", cell.trim()),
                });
                (None, CellState::Overflow)
            } else {
                match read_number(cell, style_of(&styles, *column)) {
                    Ok(v) => (Some(v), CellState::Value),
                    Err(message) => {
                        problems.push(InputProblem { line: *line, column: Some(column + 1), message });
                        (None, CellState::Unreadable)
                    }
                }
            };
            values[k].push(value);
            cells[k].push(state);
        }
    }
    if times.is_empty() {
        return Err(Error::invalid_data("the time-course table has a header but no rows of numbers"));
    }
    Ok(RawTraces { time_unit, names: names.into_iter().map(|(n, c)| (n, c + 1)).collect(), times, lines: row_lines, values, cells, blocks, transposed: None })
}

/// One layout row.
#[derive(Clone, Debug)]
struct LayoutRow {
    role: Role,
    s: Option<f64>,
    i: Option<f64>,
    e: Option<f64>,
    blank: Option<String>,
}

struct Layout {
    rows: Vec<(String, LayoutRow)>,
    s_unit: Option<ConcentrationUnit>,
    i_unit: Option<String>,
    e_unit: Option<String>,
}

fn read_layout(text: &str, problems: &mut Vec<InputProblem>, notes: &mut Vec<String>) -> Result<Layout, Error> {
    // The list and the plate map are read to the same placed cells
    // (crate::read::layout); every problem names the cell's own line and
    // column.
    let layout = crate::read::layout::read_layout_cells(text, problems)?;
    if layout.plate_map {
        notes.push(format!(
            "The layout is a plate map: {} well(s) from the grids {}.",
            layout.entries.len(),
            layout.headings.iter().map(|h| format!("'{}'", h.name)).collect::<Vec<_>>().join(", ")
        ));
    }
    let headings = &layout.headings;
    let find = |names: &[&str]| headings.iter().position(|h| names.contains(&normalise_name(&h.name).as_str()));
    let s_col = find(&["s", "s0", "substrate"]);
    let i_col = find(&["i", "inhibitor"]);
    let e_col = find(&["e", "e0", "et", "enzyme"]);
    let role_col = find(&["role", "type", "kind"]);
    let blank_col = find(&["blank", "reference"]);
    if layout.plate_map {
        for (k, heading) in headings.iter().enumerate() {
            if ![s_col, i_col, e_col, role_col, blank_col].contains(&Some(k)) {
                notes.push(format!(
                    "The plate map's grid '{}' (line {}) is not used by the time-course analysis; it reads S, I, E, role and blank.",
                    heading.name, layout.heading_lines[k]
                ));
            }
        }
    }
    let s_unit = match s_col.and_then(|c| headings[c].unit.as_deref()) {
        Some(u) => Some(
            ConcentrationUnit::parse(u).map_err(|m| Error::invalid_data(format!("line {}: {m}", layout.heading_lines[s_col.unwrap_or(0)])))?,
        ),
        None => {
            if s_col.is_some() {
                notes.push("The layout's [S] column has no unit; rates and conversions are shown without units.".to_string());
            }
            None
        }
    };
    if s_col.is_none() {
        notes.push("The layout has no S column: fractions converted cannot be computed.".to_string());
    }
    let mut rows: Vec<(String, LayoutRow)> = Vec::new();
    for entry in &layout.entries {
        let name = entry.name.text.as_str();
        if name.is_empty() {
            problems.push(InputProblem { line: entry.line, column: Some(entry.name.column), message: "expected a trace name".to_string() });
            continue;
        }
        let cell = |col: Option<usize>| col.and_then(|c| entry.cells[c].as_ref());
        let number = |col: Option<usize>, problems: &mut Vec<InputProblem>| -> Option<f64> {
            let c = col?;
            let placed = entry.cells[c].as_ref()?;
            if placed.text == "-" {
                return None;
            }
            match read_number(&placed.text, layout.styles[c]) {
                Ok(v) if v >= 0.0 => Some(v),
                Ok(v) => {
                    problems.push(InputProblem {
                        line: placed.line,
                        column: Some(placed.column),
                        message: format!("a concentration cannot be negative ({v})"),
                    });
                    None
                }
                Err(message) => {
                    problems.push(InputProblem { line: placed.line, column: Some(placed.column), message });
                    None
                }
            }
        };
        let s = number(s_col, problems);
        let i = number(i_col, problems);
        let e = number(e_col, problems);
        let role_cell = cell(role_col);
        let role_text = role_cell.map(|c| c.text.to_ascii_lowercase()).unwrap_or_default();
        let role = match normalise_name(&role_text).as_str() {
            "" | "sample" | "assay" => Role::Sample,
            "blank" | "buffer" | "background" => Role::Blank,
            "noenzyme" | "noenz" | "control" => Role::NoEnzyme,
            _ => {
                let placed = role_cell.expect("a role was written");
                problems.push(InputProblem {
                    line: placed.line,
                    column: Some(placed.column),
                    message: format!("unknown role '{role_text}'; expected sample, blank or no-enzyme (read as sample)"),
                });
                Role::Sample
            }
        };
        let blank = cell(blank_col).map(|c| c.text.clone()).filter(|c| c != "-");
        if rows.iter().any(|(n, _)| n == name) {
            problems.push(InputProblem {
                line: entry.line,
                column: Some(entry.name.column),
                message: format!("the trace '{name}' is listed twice; the first entry is used"),
            });
            continue;
        }
        rows.push((name.to_string(), LayoutRow { role, s, i, e, blank }));
    }
    let unit_of = |col: Option<usize>| col.and_then(|c| headings[c].unit.clone());
    Ok(Layout { rows, s_unit, i_unit: unit_of(i_col), e_unit: unit_of(e_col) })
}

fn read_standard(text: &str, problems: &mut Vec<InputProblem>) -> Result<StandardCurve, Error> {
    let table = crate::table::parse_table(text);
    for p in &table.problems {
        problems.push(InputProblem { line: p.line, column: p.column, message: format!("standard curve: {}", p.message) });
    }
    let unit = table
        .headings
        .as_ref()
        .and_then(|h| h.first())
        .and_then(|h| h.unit.clone())
        .ok_or_else(|| Error::invalid_data("the standard curve needs a header with the concentration unit, such as 'c (µM)\\tA405'"))?;
    ConcentrationUnit::parse(&unit).map_err(|m| Error::invalid_data(format!("standard curve, line 1: {m}")))?;
    let pairs: Vec<(f64, f64)> = table.rows.iter().filter_map(|r| r.complete(2)).map(|r| (r[0], r[1])).collect();
    if pairs.len() < 3 {
        return Err(Error::invalid_data("the standard curve needs at least three standards with a concentration and a signal"));
    }
    let x: Vec<f64> = pairs.iter().map(|p| p.0).collect();
    let y: Vec<f64> = pairs.iter().map(|p| p.1).collect();
    let line = straight_line(&x, &y).ok_or_else(|| Error::invalid_data("the standards all have the same concentration"))?;
    if line.slope == 0.0 {
        return Err(Error::invalid_data("the standard curve is flat; the signal does not change with concentration"));
    }
    Ok(StandardCurve {
        unit,
        intercept: line.intercept,
        intercept_se: line.intercept_se,
        slope: line.slope,
        slope_se: line.slope_se,
        r_squared: line.r_squared,
        points: pairs.iter().map(|(c, s)| [*c, *s, s - line.intercept - line.slope * c]).collect(),
    })
}

// ------------------------------------------------------------ line fitting

/// An ordinary least-squares line.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Line {
    /// Intercept at x = 0.
    pub intercept: f64,
    /// Slope.
    pub slope: f64,
    /// Standard error of the intercept.
    pub intercept_se: Option<f64>,
    /// Standard error of the slope.
    pub slope_se: Option<f64>,
    /// R².
    pub r_squared: Option<f64>,
    /// Residual sum of squares.
    pub rss: f64,
}

/// Least-squares straight line through `(x, y)`, computed about the means
/// (no cancellation from large x). `None` for fewer than two points or no
/// spread in x.
pub fn straight_line(x: &[f64], y: &[f64]) -> Option<Line> {
    let n = x.len();
    if n < 2 || y.len() != n {
        return None;
    }
    let nf = n as f64;
    let mx = x.iter().sum::<f64>() / nf;
    let my = y.iter().sum::<f64>() / nf;
    let sxx: f64 = x.iter().map(|v| (v - mx).powi(2)).sum();
    if sxx <= 0.0 {
        return None;
    }
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let syy: f64 = y.iter().map(|v| (v - my).powi(2)).sum();
    let slope = sxy / sxx;
    let intercept = my - slope * mx;
    let rss: f64 = x.iter().zip(y).map(|(a, b)| (b - intercept - slope * a).powi(2)).sum();
    let (slope_se, intercept_se) = if n > 2 {
        let s2 = rss / (nf - 2.0);
        (Some((s2 / sxx).sqrt()), Some((s2 * (1.0 / nf + mx * mx / sxx)).sqrt()))
    } else {
        (None, None)
    };
    Some(Line { intercept, slope, intercept_se, slope_se, r_squared: (syy > 0.0).then(|| 1.0 - rss / syy), rss })
}

/// Running sums for straight-line and quadratic fits of growing windows,
/// in time measured from the first point and scaled by `scale`.
#[derive(Clone, Copy, Default)]
struct Sums {
    n: f64,
    t: [f64; 5],
    ty: [f64; 3],
    yy: f64,
}

impl Sums {
    fn add(&mut self, t: f64, y: f64) {
        self.n += 1.0;
        let mut p = 1.0;
        for k in 0..5 {
            self.t[k] += p;
            if k < 3 {
                self.ty[k] += p * y;
            }
            p *= t;
        }
        self.yy += y * y;
    }

    /// (slope, intercept, RSS) of the line.
    fn line(&self) -> Option<(f64, f64, f64, f64)> {
        let n = self.n;
        let sxx = self.t[2] - self.t[1] * self.t[1] / n;
        if sxx <= 0.0 {
            return None;
        }
        let sxy = self.ty[1] - self.t[1] * self.ty[0] / n;
        let syy = self.yy - self.ty[0] * self.ty[0] / n;
        let slope = sxy / sxx;
        let intercept = (self.ty[0] - slope * self.t[1]) / n;
        Some((slope, intercept, (syy - slope * sxy).max(0.0), sxx))
    }

    /// RSS of the quadratic, by the normal equations (times are scaled to
    /// [0, 1], so the 3×3 system is well conditioned).
    fn quadratic_rss(&self) -> Option<f64> {
        let a = nalgebra::Matrix3::new(
            self.t[0], self.t[1], self.t[2], self.t[1], self.t[2], self.t[3], self.t[2], self.t[3], self.t[4],
        );
        let b = nalgebra::Vector3::new(self.ty[0], self.ty[1], self.ty[2]);
        let beta = a.lu().solve(&b)?;
        Some((self.yy - beta.dot(&b)).max(0.0))
    }
}

/// Curvature c₂ of a quadratic through the points (in the scaled time),
/// with its standard error.
fn quadratic_curvature(t: &[f64], y: &[f64]) -> Option<(f64, f64)> {
    let mut s = Sums::default();
    for (a, b) in t.iter().zip(y) {
        s.add(*a, *b);
    }
    if s.n < 4.0 {
        return None;
    }
    let a = nalgebra::Matrix3::new(s.t[0], s.t[1], s.t[2], s.t[1], s.t[2], s.t[3], s.t[2], s.t[3], s.t[4]);
    let inverse = a.try_inverse()?;
    let b = nalgebra::Vector3::new(s.ty[0], s.ty[1], s.ty[2]);
    let beta = inverse * b;
    let rss = (s.yy - beta.dot(&b)).max(0.0);
    let s2 = rss / (s.n - 3.0);
    Some((beta[2], (s2 * inverse[(2, 2)]).sqrt()))
}

/// What the window search found for one trace.
struct WindowFit {
    start: usize,
    end: usize, // exclusive, in the usable points
    slope: f64,
    slope_se: Option<f64>,
    intercept: f64,
}

/// Fits a line to points `[start, end)` of `(t, y)`, in original units.
fn fit_window(t: &[f64], y: &[f64], start: usize, end: usize) -> Option<WindowFit> {
    let line = straight_line(&t[start..end], &y[start..end])?;
    Some(WindowFit {
        start,
        end,
        slope: line.slope,
        slope_se: line.slope_se,
        intercept: line.intercept + line.slope * t[start],
    })
}

/// The settings of the window search.
struct WindowRules {
    /// Largest product allowed at the window's end (concentration units),
    /// when [S]0 is known.
    max_product: Option<f64>,
}

/// Chooses the automatic window; see the module documentation. Returns
/// the window and whether even the shortest window failed the linearity
/// criteria.
fn automatic_window(t: &[f64], y: &[f64], rules: &WindowRules) -> Option<(WindowFit, bool)> {
    let n = t.len();
    if n < 3 {
        return None;
    }
    if n < MIN_WINDOW_POINTS {
        return fit_window(t, y, 0, n).map(|w| (w, false));
    }
    let t0 = t[0];
    let span = t[n - 1] - t0;
    let y0 = y[0];
    let scaled: Vec<f64> = t.iter().map(|v| (v - t0) / span).collect();
    let shifted: Vec<f64> = y.iter().map(|v| v - y0).collect();
    let y_scale = shifted.iter().fold(0.0f64, |m, v| m.max(v.abs())).max(f64::MIN_POSITIVE);

    // Reference span for the curvature: up to three times the conversion
    // limit (or every point when [S]0 is unknown).
    let mut reference_end = n;
    if let Some(limit) = rules.max_product {
        if let Some(k) = shifted.iter().position(|v| v.abs() > 3.0 * limit) {
            reference_end = k.max(MIN_WINDOW_POINTS + 3).min(n);
        }
    }
    let curvature = quadratic_curvature(&scaled[..reference_end], &shifted[..reference_end]);

    let mut sums = Sums::default();
    let mut best: Option<usize> = None;
    let mut shortest_failed = false;
    for k in 0..n {
        sums.add(scaled[k], shifted[k]);
        let points = k + 1;
        if points < MIN_WINDOW_POINTS {
            continue;
        }
        let Some((slope, intercept, rss_line, sxx)) = sums.line() else { continue };
        // Conversion limit: product at the window's end from the line.
        if let Some(limit) = rules.max_product {
            let product_at_end = (intercept + slope * scaled[k]).abs();
            if product_at_end > limit && points > MIN_WINDOW_POINTS {
                break;
            }
        }
        let dof_quad = points as f64 - 3.0;
        // Residuals at the level of rounding (exact or synthetic data) say
        // nothing about curvature.
        let rounding = (rss_line / points as f64).sqrt() <= 1e-9 * y_scale;
        let linear_ok = rounding || match sums.quadratic_rss() {
            Some(rss_quad) if rss_quad > 0.0 => {
                let f = (rss_line - rss_quad) / (rss_quad / dof_quad);
                let critical = student_t_quantile(0.975, dof_quad).map(|q| q * q).unwrap_or(f64::INFINITY);
                f <= critical
            }
            _ => true,
        };
        // Bias of the line's slope from the reference curvature:
        // c₂·Σ(t − t̄)·t²/Σ(t − t̄)² = c₂·(Σt³ − t̄·Σt²)/Sxx.
        let bias_ok = match curvature {
            Some((c2, _)) => {
                let mean_t = sums.t[1] / sums.n;
                let bias = c2 * (sums.t[3] - mean_t * sums.t[2]) / sxx;
                let se = (rss_line / (points as f64 - 2.0) / sxx).sqrt();
                // A bias below 0.01 % of the slope is negligible for any
                // use of a rate, even when the noise is smaller still.
                rounding || bias.abs() <= (0.5 * se).max(1e-4 * slope.abs())
            }
            None => true,
        };
        if linear_ok && bias_ok {
            best = Some(points);
        } else if points == MIN_WINDOW_POINTS {
            shortest_failed = true;
        }
    }
    let end = best.unwrap_or(MIN_WINDOW_POINTS);
    fit_window(t, y, 0, end).map(|w| (w, shortest_failed && best.is_none()))
}

fn flag(result: &mut TraceResult, word: &str, message: String) {
    if !result.flags.iter().any(|f| f == word) {
        result.flags.push(word.to_string());
    }
    result.messages.push(message);
}

fn same(a: Option<f64>, b: Option<f64>) -> bool {
    match (a, b) {
        (None, None) => true,
        (Some(x), Some(y)) => (x - y).abs() <= 1e-9 * x.abs().max(y.abs()),
        _ => false,
    }
}

/// Reads the tables, subtracts blanks, converts, chooses windows, fits and
/// flags. The one code path behind the page's trace panel and the CLI's
/// `rates` command.
pub fn analyse_traces(request: &TraceRequest) -> Result<TraceAnalysis, Error> {
    analyse_traces_with(request, &mut |_, _| {})
}

/// [`analyse_traces`], calling `progress(done, total)` after each trace's
/// window and rate, so that a page can show how far a plate has got.
pub fn analyse_traces_with(request: &TraceRequest, progress: &mut dyn FnMut(usize, usize)) -> Result<TraceAnalysis, Error> {
    let mut problems = Vec::new();
    let mut notes = Vec::new();
    if !(request.max_conversion > 0.0 && request.max_conversion < 1.0) {
        return Err(Error::invalid_option("the conversion limit must be a fraction between 0 and 1, such as 0.1"));
    }
    let mut raw = read_traces(&request.traces, request.time_unit.as_deref(), request.block, &mut problems, &mut notes)?;
    if let Some(text) = request.report_time.as_deref().map(str::trim).filter(|t| !t.is_empty()) {
        let unit = TimeUnit::parse(text).map_err(Error::invalid_option)?;
        if unit != raw.time_unit {
            // t in the new unit = t in the old × (seconds per old unit /
            // seconds per new unit); a ratio of 1, 60 and 3600.
            let factor = raw.time_unit.in_seconds() / unit.in_seconds();
            for t in &mut raw.times {
                *t *= factor;
            }
            let by = crate::units::factor_words(factor);
            notes.push(format!(
                "Times converted from {} to {} (t {by}): windows are in {}, rates per {}.",
                raw.time_unit.symbol(),
                unit.symbol(),
                unit.symbol(),
                unit.symbol()
            ));
            raw.time_unit = unit;
        }
    }
    notes.extend(unmatched_overrides(request, &raw.names));
    let mut layout_problems = Vec::new();
    let layout = if request.layout.trim().is_empty() {
        notes.push("No layout given: every trace is read as a sample with unknown [S].".to_string());
        Layout { rows: Vec::new(), s_unit: None, i_unit: None, e_unit: None }
    } else {
        read_layout(&request.layout, &mut layout_problems, &mut notes)?
    };
    for p in layout_problems {
        problems.push(InputProblem { line: p.line, column: p.column, message: format!("layout: {}", p.message) });
    }

    // Signal to concentration.
    let direction = match request.direction {
        Direction::Rises => 1.0,
        Direction::Falls => -1.0,
    };
    let mut standard = None;
    let (factor, value_unit): (f64, String) = match (&request.standard, request.epsilon, request.path_cm) {
        (Some(text), _, _) if !text.trim().is_empty() => {
            let curve = read_standard(text, &mut problems)?;
            let unit = ConcentrationUnit::parse(&curve.unit).map_err(Error::invalid_data)?;
            // Concentrations in the standard's unit, then in the layout's.
            let to_layout = layout.s_unit.map_or(1.0, |s| unit.in_molar() / s.in_molar());
            let factor = to_layout / curve.slope;
            let unit_text = layout.s_unit.map_or(curve.unit.clone(), |s| s.symbol().to_string());
            notes.push(format!(
                "Signal converted with the standard curve: signal = {:.5} + {:.5}·c ({}).",
                curve.intercept, curve.slope, curve.unit
            ));
            standard = Some(curve);
            (factor, unit_text)
        }
        (_, Some(epsilon), Some(path)) => {
            if !(epsilon.is_finite() && epsilon > 0.0 && path.is_finite() && path > 0.0) {
                return Err(Error::invalid_option("ε and the path length must be positive numbers"));
            }
            let unit = layout.s_unit.unwrap_or(ConcentrationUnit::Micromolar);
            if layout.s_unit.is_none() {
                notes.push("Concentrations from Beer-Lambert are given in µM (the layout names no unit for S).".to_string());
            }
            notes.push(format!("Signal converted by Beer-Lambert: c = A/(ε·l) with ε = {epsilon} M⁻¹ cm⁻¹ and l = {path} cm."));
            (1.0 / (epsilon * path) / unit.in_molar(), unit.symbol().to_string())
        }
        (_, Some(_), None) | (_, None, Some(_)) => {
            return Err(Error::invalid_option("Beer-Lambert needs both ε (M⁻¹ cm⁻¹) and the path length (cm)"));
        }
        _ => {
            notes.push("No ε, path length or standard curve: rates are in signal units per time and fractions converted are unknown.".to_string());
            (1.0, "signal".to_string())
        }
    };
    let converted = value_unit != "signal";
    let time_symbol = raw.time_unit.symbol();
    let rate_unit = format!("{value_unit}/{time_symbol}");

    // Layout lookup; traces missing from the layout are samples.
    let layout_for = |name: &str| -> LayoutRow {
        layout
            .rows
            .iter()
            .find(|(n, _)| n == name)
            .map(|(_, r)| r.clone())
            .unwrap_or(LayoutRow { role: Role::Sample, s: None, i: None, e: None, blank: None })
    };
    if !layout.rows.is_empty() {
        let missing: Vec<&str> =
            raw.names.iter().filter(|(n, _)| !layout.rows.iter().any(|(l, _)| l == n)).map(|(n, _)| n.as_str()).collect();
        if !missing.is_empty() {
            notes.push(format!("Not in the layout, read as samples with unknown [S]: {}.", missing.join(", ")));
        }
        for (name, _) in &layout.rows {
            if !raw.names.iter().any(|(n, _)| n == name) {
                notes.push(format!("The layout names '{name}', which is not a column of the time-course table."));
            }
        }
    }

    // Over-range cells, from the detector's linear limit.
    let mut cells = raw.cells.clone();
    if let Some(limit) = request.linear_limit {
        for (k, trace) in raw.values.iter().enumerate() {
            for (j, v) in trace.iter().enumerate() {
                if v.is_some_and(|v| v > limit) {
                    cells[k][j] = CellState::OverRange;
                    let (line, column) = raw.place(raw.lines[j], raw.names[k].1);
                    problems.push(InputProblem {
                        line,
                        column,
                        message: format!("{} is above the detector's linear limit {limit}; it and later points are not used for the rate", v.unwrap()),
                    });
                }
            }
        }
    }

    let roles: Vec<LayoutRow> = raw.names.iter().map(|(n, _)| layout_for(n)).collect();
    let mut results = Vec::with_capacity(raw.names.len());
    for (k, (name, column)) in raw.names.iter().enumerate() {
        let row = &roles[k];
        // Which blanks to subtract.
        let is_reference = |j: usize| matches!(roles[j].role, Role::Blank | Role::NoEnzyme) && j != k;
        let mut blanks: Vec<usize> = Vec::new();
        let mut messages = Vec::new();
        if row.role == Role::Sample {
            if let Some(chosen) = &row.blank {
                match raw.names.iter().position(|(n, _)| n == chosen) {
                    Some(j) => blanks.push(j),
                    None => messages.push(format!("The chosen blank '{chosen}' is not a trace; nothing was subtracted.")),
                }
            } else {
                blanks = (0..raw.names.len()).filter(|&j| is_reference(j) && same(roles[j].s, row.s) && same(roles[j].i, row.i)).collect();
                if blanks.is_empty() {
                    blanks = (0..raw.names.len()).filter(|&j| is_reference(j) && roles[j].role == Role::Blank && roles[j].s.is_none()).collect();
                }
            }
        }
        let values: Vec<Option<f64>> = (0..raw.times.len())
            .map(|j| {
                let own = raw.values[k][j]?;
                let mut sum = 0.0;
                for &b in &blanks {
                    sum += raw.values[b][j]?;
                }
                let blank = if blanks.is_empty() { 0.0 } else { sum / blanks.len() as f64 };
                Some(direction * (own - blank) * factor)
            })
            .collect();
        let mut result = TraceResult {
            name: name.clone(),
            column: *column,
            role: row.role,
            s: row.s,
            i: row.i,
            e: row.e,
            times: raw.times.clone(),
            values,
            cells: cells[k].clone(),
            blanks_subtracted: blanks.iter().map(|&b| raw.names[b].0.clone()).collect(),
            rate: None,
            rate_se: None,
            rate_ci_low: None,
            rate_ci_high: None,
            v0: None,
            v0_se: None,
            v0_ci_low: None,
            v0_ci_high: None,
            v0_points: 0,
            v0_k: None,
            intercept: None,
            window_start: None,
            window_end: None,
            window_points: 0,
            manual_window: false,
            fraction_converted: None,
            flags: Vec::new(),
            messages,
            excluded: request.excluded.iter().any(|e| e == name),
        };
        if result.excluded {
            flag(&mut result, "excluded", "Left out by the user.".to_string());
        }
        if row.role == Role::Sample && blanks.is_empty() && row.blank.is_none() && roles.iter().any(|r| r.role != Role::Sample) {
            flag(&mut result, "no-blank", "No blank matches this trace's condition; nothing was subtracted.".to_string());
        }
        rate_for_trace(&mut result, &cells[k], request, converted, time_symbol);
        results.push(result);
        progress(results.len(), raw.names.len());
    }

    // v against [E]: groups of samples with the same [S] and [I].
    let mut enzyme_checks = Vec::new();
    let mut grouped = vec![false; results.len()];
    for a in 0..results.len() {
        if grouped[a] || results[a].role != Role::Sample || results[a].e.is_none() {
            continue;
        }
        let members: Vec<usize> = (a..results.len())
            .filter(|&b| {
                results[b].role == Role::Sample
                    && !results[b].excluded
                    && results[b].e.is_some()
                    && results[b].rate.is_some()
                    && same(results[b].s, results[a].s)
                    && same(results[b].i, results[a].i)
            })
            .collect();
        for &m in &members {
            grouped[m] = true;
        }
        let mut distinct: Vec<f64> = members.iter().map(|&m| results[m].e.unwrap()).collect();
        distinct.sort_by(f64::total_cmp);
        distinct.dedup();
        if distinct.len() < 3 {
            continue;
        }
        let points: Vec<(f64, f64, String)> =
            members.iter().map(|&m| (results[m].e.unwrap(), results[m].rate.unwrap(), results[m].name.clone())).collect();
        if let Some(check) = enzyme_check(results[a].s, results[a].i, points) {
            enzyme_checks.push(check);
        }
    }

    // The rate table for the Michaelis-Menten fit.
    let s_symbol = layout.s_unit.map(|u| u.symbol().to_string());
    let with_inhibitor = results.iter().any(|r| r.role == Role::Sample && r.i.is_some());
    let mut rate_table = String::new();
    let unit_suffix = |u: &Option<String>| u.as_ref().map(|u| format!(" ({u})")).unwrap_or_default();
    rate_table.push_str(&format!("[S]{}\tv ({rate_unit})", unit_suffix(&s_symbol)));
    if with_inhibitor {
        rate_table.push_str(&format!("\t[I]{}", unit_suffix(&layout.i_unit)));
    }
    rate_table.push('\n');
    // Rates at different [E] do not belong in one Michaelis-Menten fit: when
    // [E] varies, only the samples at the most common [E] go in.
    let mut enzyme_levels: Vec<(f64, usize)> = Vec::new();
    for r in results.iter().filter(|r| r.role == Role::Sample && !r.excluded && r.rate.is_some()) {
        if let Some(e) = r.e {
            match enzyme_levels.iter_mut().find(|(v, _)| same(Some(*v), Some(e))) {
                Some(level) => level.1 += 1,
                None => enzyme_levels.push((e, 1)),
            }
        }
    }
    let chosen_enzyme = (enzyme_levels.len() > 1).then(|| enzyme_levels.iter().max_by_key(|l| l.1).map(|l| l.0)).flatten();
    if let Some(e) = chosen_enzyme {
        notes.push(format!("[E] differs between samples; the rate table holds the samples at [E] = {e}, the most common."));
    }
    let mut rate_links = Vec::new();
    let from_v0 = request.rates_from_v0 && request.fit_v0;
    if request.rates_from_v0 && !request.fit_v0 {
        notes.push("The rate table takes the curvature-aware v0 only when it is fitted (fit_v0); it holds the windows' rates.".to_string());
    }
    let mut without_v0 = Vec::new();
    for r in &results {
        if r.role != Role::Sample || r.excluded {
            continue;
        }
        if chosen_enzyme.is_some() && !same(r.e, chosen_enzyme) {
            continue;
        }
        let rate = if from_v0 {
            if r.v0.is_none() && r.rate.is_some() {
                without_v0.push(r.name.clone());
            }
            r.v0
        } else {
            r.rate
        };
        let (Some(s), Some(rate), Some(start), Some(end)) = (r.s, rate, r.window_start, r.window_end) else { continue };
        rate_table.push_str(&format!("{s}\t{rate}"));
        if with_inhibitor {
            rate_table.push_str(&format!("\t{}", r.i.unwrap_or(0.0)));
        }
        rate_table.push('\n');
        rate_links.push(RateLink { line: rate_links.len() + 2, trace: r.name.clone(), window_start: start, window_end: end });
    }
    if from_v0 {
        notes.push("The rate table holds each trace's curvature-aware v0 (the integrated rate equation fitted to its early curve), not the window's straight-line rate.".to_string());
        if !without_v0.is_empty() {
            notes.push(format!("No v0 could be fitted for {}; left out of the rate table (their window rates are in the trace table).", without_v0.join(", ")));
        }
    }
    problems.sort_by_key(|p| (p.line, p.column));

    let mut analysis = TraceAnalysis {
        blocks: raw.blocks.clone(),
        time_unit: time_symbol.to_string(),
        value_unit: value_unit.clone(),
        rate_unit,
        substrate_unit: s_symbol,
        inhibitor_unit: layout.i_unit.clone(),
        enzyme_unit: layout.e_unit.clone(),
        traces: results,
        problems,
        notes,
        standard,
        enzyme_checks,
        rate_table,
        rate_links,
        selwyn: Vec::new(),
        caution: CAUTION.to_string(),
    };
    analysis.selwyn = crate::selwyn::selwyn_checks(&analysis);
    Ok(analysis)
}

/// Sentences for each window or left-out trace that names no trace of the
/// table: such an override does nothing, and must not look applied. (The
/// page keeps them while a new plate is pasted; the CLI refuses them.)
pub fn unmatched_overrides(request: &TraceRequest, names: &[(String, usize)]) -> Vec<String> {
    let known = |name: &str| names.iter().any(|(n, _)| n == name);
    let list = names.iter().map(|(n, _)| n.as_str()).collect::<Vec<_>>().join(", ");
    let mut sentences = Vec::new();
    for w in request.windows.iter().filter(|w| w.trace != "*" && !known(&w.trace)) {
        sentences.push(format!(
            "The window {}–{} is set for a trace named '{}', but the table has no such trace (its traces are {list}); it was not used.",
            w.start, w.end, w.trace
        ));
    }
    for name in request.excluded.iter().filter(|name| !known(name)) {
        sentences.push(format!(
            "The trace '{name}' is to be left out, but the table has no such trace (its traces are {list}); nothing was left out for it."
        ));
    }
    sentences
}

/// Window, line, fraction converted and flags for one trace.
fn rate_for_trace(result: &mut TraceResult, cells: &[CellState], request: &TraceRequest, converted: bool, time_symbol: &str) {
    // Usable points: before the first overflow or over-range reading.
    let limit_index = cells.iter().position(|c| matches!(c, CellState::Overflow | CellState::OverRange));
    let usable_end = limit_index.unwrap_or(result.times.len());
    if let Some(j) = limit_index {
        flag(
            result,
            "over-range",
            format!("From {} {time_symbol} the readings are over the detector's range; only earlier points are used.", result.times[j]),
        );
    }
    let (t, y): (Vec<f64>, Vec<f64>) =
        (0..usable_end).filter_map(|j| result.values[j].map(|v| (result.times[j], v))).unzip();
    if t.len() < MIN_WINDOW_POINTS {
        flag(result, "few-points", format!("Only {} usable point(s); at least {MIN_WINDOW_POINTS} are needed for a checked window.", t.len()));
    }
    if t.len() < 3 {
        return;
    }
    let s0 = if converted { result.s.filter(|s| *s > 0.0) } else { None };
    let manual = request
        .windows
        .iter()
        .find(|w| w.trace == result.name)
        .or_else(|| request.windows.iter().find(|w| w.trace == "*"));
    let fit = if let Some(w) = manual {
        result.manual_window = true;
        let start = t.iter().position(|v| *v >= w.start - 1e-12 * w.start.abs().max(1.0)).unwrap_or(t.len());
        let end = t.iter().rposition(|v| *v <= w.end + 1e-12 * w.end.abs().max(1.0)).map_or(0, |e| e + 1);
        if end < start + 3 {
            flag(result, "few-points", format!("The window {}–{} {time_symbol} holds fewer than 3 usable points.", w.start, w.end));
            return;
        }
        fit_window(&t, &y, start, end)
    } else {
        let rules = WindowRules { max_product: s0.map(|s| s * request.max_conversion) };
        match automatic_window(&t, &y, &rules) {
            Some((w, curved)) => {
                if curved {
                    flag(result, "nonlinear", "Even the shortest window is curved; the rate is from the first points only. Set the window by hand or check the assay.".to_string());
                }
                Some(w)
            }
            None => None,
        }
    };
    let Some(fit) = fit else { return };
    // A clearly negative rate means the signal moves the other way than
    // declared: the rate and the fraction used would be reported with the
    // wrong sign.
    if result.role == Role::Sample && fit.slope < 0.0 && fit.slope_se.is_none_or(|se| fit.slope < -2.0 * se) {
        let message = match request.direction {
            Direction::Falls => "The signal rises, but it was declared to fall as product forms; the rate is negative. Check the direction setting (--falls).",
            Direction::Rises => "The signal falls, but it was declared to rise as product forms; the rate is negative. If product formation lowers the signal (NADH consumed), declare that it falls (--falls).",
        };
        flag(result, "wrong-direction", message.to_string());
    }
    result.rate = Some(fit.slope);
    result.rate_se = fit.slope_se;
    result.intercept = Some(fit.intercept);
    result.window_start = Some(t[fit.start]);
    result.window_end = Some(t[fit.end - 1]);
    result.window_points = fit.end - fit.start;
    if let (Some(se), Some(q)) = (fit.slope_se, student_t_quantile(0.975, (fit.end - fit.start) as f64 - 2.0)) {
        result.rate_ci_low = Some(fit.slope - q * se);
        result.rate_ci_high = Some(fit.slope + q * se);
    }
    if let Some(s0) = s0.filter(|_| request.fit_v0) {
        if let Some(early) = crate::early::integrated_initial_rate(&t, &y, s0, fit.slope, fit.intercept - fit.slope * (t[fit.start] - t[0])) {
            result.v0 = Some(early.rate);
            result.v0_se = Some(early.std_error);
            result.v0_ci_low = Some(early.ci.0);
            result.v0_ci_high = Some(early.ci.1);
            result.v0_points = early.points;
            result.v0_k = early.k_apparent.is_finite().then_some(early.k_apparent);
        }
    }

    if let Some(s0) = s0 {
        let fraction = fit.slope * (t[fit.end - 1] - t[0]) / s0;
        result.fraction_converted = Some(fraction);
        if fraction > request.max_conversion {
            flag(
                result,
                "depletion",
                format!(
                    "{:.0} % of [S]0 is used by the end of the window, more than the {:.0} % of initial-rate conditions; the rate underestimates v0.",
                    fraction * 100.0,
                    request.max_conversion * 100.0
                ),
            );
        }
    }
    if let Some(se) = fit.slope_se {
        if result.role == Role::Sample && se > NOISY_RELATIVE_SE * fit.slope.abs() {
            flag(result, "noisy", format!("The rate's standard error is more than {:.0} % of the rate.", NOISY_RELATIVE_SE * 100.0));
        }
    }
    // Lag and burst: compare the slopes of the first and the second half
    // of the early part (the window or, if longer, the first third of the
    // usable points). Depletion can slow the second half by at most the
    // fraction converted (v falls no faster than [S]); a lag makes it
    // faster, a burst slower than that.
    let span_end = fit.end.max(t.len() / 3).min(t.len());
    if span_end >= 2 * MIN_WINDOW_POINTS {
        let half = span_end / 2;
        if let (Some(a), Some(b)) = (straight_line(&t[..half], &y[..half]), straight_line(&t[half..span_end], &y[half..span_end])) {
            if let (Some(sa), Some(sb)) = (a.slope_se, b.slope_se) {
                let difference = b.slope - a.slope;
                let se = (sa * sa + sb * sb).sqrt();
                let allowed_drop = s0.map_or(0.0, |s| ((y[span_end - 1] - y[0]) / s).abs()) * a.slope.abs();
                if a.slope.abs() > 0.0 && difference > 4.0 * se && difference > 0.1 * a.slope.abs() {
                    flag(result, "lag", "The trace speeds up after the start (a lag phase); consider a window after the lag.".to_string());
                } else if -difference > allowed_drop + 4.0 * se && -difference > 0.2 * a.slope.abs() {
                    flag(result, "burst", "The trace slows down faster than substrate use explains (a burst or inactivation).".to_string());
                }
            }
        }
    }
}

fn enzyme_check(s: Option<f64>, i: Option<f64>, points: Vec<(f64, f64, String)>) -> Option<EnzymeCheck> {
    let x: Vec<f64> = points.iter().map(|p| p.0).collect();
    let y: Vec<f64> = points.iter().map(|p| p.1).collect();
    let line = straight_line(&x, &y)?;
    let n = x.len();
    let t = student_t_quantile(0.975, n as f64 - 2.0);
    let intercept_zero = match (line.intercept_se, t) {
        (Some(se), Some(t)) => Some(line.intercept.abs() <= t * se),
        _ => None,
    };
    let curvature_p = if n >= 4 {
        let xs: Vec<f64> = x.iter().map(|v| v / x.iter().cloned().fold(0.0, f64::max)).collect();
        quadratic_curvature(&xs, &y).and_then(|(c2, se)| {
            let dist = statrs::distribution::StudentsT::new(0.0, 1.0, n as f64 - 3.0).ok()?;
            use statrs::distribution::ContinuousCDF;
            // statrs panics on a NaN argument; an overflowed ratio gives no test.
            let t = (c2 / se).abs();
            (se > 0.0 && t.is_finite()).then(|| 2.0 * (1.0 - dist.cdf(t)))
        })
    } else {
        None
    };
    let mut messages = Vec::new();
    if intercept_zero == Some(false) {
        messages.push("The line does not pass through zero within its 95 % interval: check blanks and background rates.".to_string());
    }
    if curvature_p.is_some_and(|p| p < 0.05) {
        messages.push("v is not proportional to [E] (significant curvature, p < 0.05): check for depletion at high [E] or an assay artefact.".to_string());
    }
    Some(EnzymeCheck {
        s,
        i,
        points,
        slope: line.slope,
        slope_se: line.slope_se,
        intercept: line.intercept,
        intercept_se: line.intercept_se,
        r_squared: line.r_squared,
        intercept_zero,
        curvature_p,
        messages,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn request(traces: &str, layout: &str) -> TraceRequest {
        TraceRequest { traces: traces.into(), layout: layout.into(), epsilon: Some(6220.0), path_cm: Some(1.0), ..TraceRequest::default() }
    }

    /// A plate-reader style export: metadata block, clock times, a
    /// temperature column, overflow markers and a blank cell.
    const EXPORT: &str = "Plate run 7\nWavelength: 340 nm\n\nTime\tTemp (°C)\tA1\tA2\tA3\n0:00:00\t25.0\t0.100\t0.200\t0.050\n0:00:30\t25.1\t0.110\t0.220\t0.050\n0:01:00\t25.0\t0.120\tOVRFLW\t\n0:01:30\t25.0\t0.130\t>3.5\t0.050\n0:02:00\t25.1\t0.140\t*\t0.050\n0:02:30\t25.0\t0.150\tOVER\t0.050\n";

    #[test]
    fn plate_export_is_read_with_markers_flagged() {
        let layout = "trace\tS (µM)\trole\nA1\t100\tsample\nA2\t100\tsample\nA3\t\tblank\n";
        let result = analyse_traces(&request(EXPORT, layout)).unwrap();
        assert_eq!(result.time_unit, "s");
        assert_eq!(result.traces.iter().map(|t| t.name.as_str()).collect::<Vec<_>>(), ["A1", "A2", "A3"]);
        assert!(result.notes.iter().any(|n| n.contains("Lines 1–2") && n.contains("metadata")), "{:?}", result.notes);
        assert!(result.notes.iter().any(|n| n.contains("temperature")), "{:?}", result.notes);
        let found: Vec<String> = result.problems.iter().map(|p| p.to_string()).collect();
        let expected = [
            "line 7, column 4: 'OVRFLW' marks a reading over the detector's range; it and later points are not used for the rate",
            "line 7, column 5: the cell is empty; it is left out, not guessed",
            "line 8, column 4: '>3.5' marks a reading over the detector's range; it and later points are not used for the rate",
            "line 9, column 4: '*' marks a reading over the detector's range; it and later points are not used for the rate",
            "line 10, column 4: 'OVER' marks a reading over the detector's range; it and later points are not used for the rate",
        ];
        assert_eq!(found, expected);
        let a1 = &result.traces[0];
        assert_eq!(a1.blanks_subtracted, ["A3"]);
        // 0.010 absorbance per 30 s over ε = 6220 M⁻¹cm⁻¹, 1 cm: 1.6077 µM/30 s,
        // 3.2154 µM/min in µM/s: 0.053591 µM/s. The blank's missing cell at
        // 60 s makes that point missing, not guessed.
        assert!((a1.rate.unwrap() - 0.01 / 30.0 / 6220.0 * 1e6).abs() < 1e-12, "{:?}", a1.rate);
        assert_eq!(a1.values[2], None);
        let a2 = &result.traces[1];
        assert!(a2.flags.contains(&"over-range".to_string()));
        assert!(a2.flags.contains(&"few-points".to_string()));
        assert_eq!(a2.rate, None);
    }

    /// Each bad input and the error it must give.
    #[test]
    fn fatal_inputs_name_what_was_expected() {
        let cases = [
            ("", "the time-course table is empty"),
            ("time\tA1\n0\t1\n", "line 1, column 1: the time heading 'time' has no unit"),
            ("time (fortnight)\tA1\n0\t1\n", "line 1, column 1: unknown time unit 'fortnight'"),
            ("time (s)\tTemp (°C)\n0\t25\n", "the header names no trace columns"),
            ("time (s)\tA1\n", "no rows of numbers"),
        ];
        for (text, expected) in cases {
            let error = analyse_traces(&request(text, "")).unwrap_err();
            assert!(error.message.contains(expected), "{text:?}: {}", error.message);
        }
        let error = analyse_traces(&request("time (s)\tA1\n0\t1\n1\t2\n", "S (µM)\n1\n")).unwrap_err();
        assert!(error.message.contains("needs a 'trace'"), "{}", error.message);
    }

    #[test]
    fn bad_cells_and_times_are_problems_not_panics() {
        let text = "time (min)\tA1\tA1\tB1\n0\t0.1\t0.1\t0.2\n1\tx\t0.2\t0.3\n1\t0.3\t0.3\t0.4\nzz\t0.4\t0.4\t0.5\n2\t0.5\t0.5\t0.6\n";
        let result = analyse_traces(&request(text, "trace\tS (mM)\tE (nM)\nA1\t1\t5\nB1\t2\tabc\n")).unwrap();
        let found: Vec<String> = result.problems.iter().map(|p| p.to_string()).collect();
        assert_eq!(
            found,
            [
                "line 1, column 3: the trace name 'A1' is used twice; the second column was not used",
                "line 3, column 2: expected a number, found 'x'",
                "line 3, column 3: layout: expected a number, found 'abc'",
                "line 4, column 1: the time 1 does not increase from the line before (1); the line was not used",
                "line 5, column 1: expected a number, found 'zz' (the time); the line was not used",
            ]
        );
    }

    /// Plate counts with thousands separators: the time column's decimal
    /// points show the table's style, so `5,010` is 5010 and the rate is
    /// +20 counts/min; without any such cell each count is a problem, never
    /// 5.01. Spreadsheet error cells are problems, also in the time column.
    /// (Grouping digits in threes is common practice, no source.)
    #[test]
    fn counts_with_thousands_separators_and_error_cells() {
        let plain = |traces: &str| TraceRequest { traces: traces.into(), layout: "trace\nA1\n".into(), ..TraceRequest::default() };
        let grouped = "time (min)\tA1\n0.0\t5,000\n0.5\t5,010\n1.0\t5,020\n1.5\t5,030\n2.0\t5,040\n";
        let result = analyse_traces(&plain(grouped)).unwrap();
        assert!(result.problems.is_empty(), "{:?}", result.problems);
        assert!((result.traces[0].rate.unwrap() - 20.0).abs() < 1e-9, "{:?}", result.traces[0].rate);

        let undecided = "time (min)\tA1\n0\t5,000\n1\t5,010\n2\t5,020\n";
        let result = analyse_traces(&plain(undecided)).unwrap();
        let found: Vec<String> = result.problems.iter().map(|p| p.to_string()).collect();
        assert_eq!(found.len(), 3, "{found:?}");
        assert!(found[0].starts_with("line 2, column 2: '5,000' could be 5000 (a comma grouping thousands) or 5.000"), "{found:?}");
        assert_eq!(result.traces[0].rate, None);

        let errors = "# run 3\ntime (s)\tA1\n#N/A\t0.1\n0\t0.1\n1\t#DIV/0!\n2\t0.3\n";
        let result = analyse_traces(&plain(errors)).unwrap();
        let found: Vec<String> = result.problems.iter().map(|p| p.to_string()).collect();
        assert_eq!(
            found,
            [
                "line 3, column 1: '#N/A' is a spreadsheet error, not a number; fix the formula in the spreadsheet or leave the row out (the time); the line was not used",
                "line 5, column 2: '#DIV/0!' is a spreadsheet error, not a number; fix the formula in the spreadsheet or leave the row out",
            ]
        );
    }

    /// Overrides that name no trace are reported in the notes, and a signal moving
    /// against the declared direction is flagged on its trace.
    #[test]
    fn overrides_and_direction_are_checked() {
        let rising = "time (min)\tA1\n0\t0.10\n1\t0.20\n2\t0.30\n3\t0.40\n4\t0.50\n5\t0.60\n";
        let plain = || TraceRequest { traces: rising.into(), layout: "trace\nA1\n".into(), ..TraceRequest::default() };
        let mut request = plain();
        request.windows.push(WindowOverride { trace: "ZZ".into(), start: 1.0, end: 2.0 });
        let notes = analyse_traces(&request).unwrap().notes;
        assert!(
            notes.contains(&"The window 1–2 is set for a trace named 'ZZ', but the table has no such trace (its traces are A1); it was not used.".to_string()),
            "{notes:?}"
        );
        let mut request = plain();
        request.excluded.push("B7".into());
        let notes = analyse_traces(&request).unwrap().notes;
        assert!(notes.iter().any(|n| n.starts_with("The trace 'B7' is to be left out, but the table has no such trace")), "{notes:?}");
        let mut request = plain();
        request.windows.push(WindowOverride { trace: "*".into(), start: 0.0, end: 5.0 });
        assert!(analyse_traces(&request).unwrap().traces[0].flags.is_empty());
        let mut request = plain();
        request.direction = Direction::Falls;
        let result = analyse_traces(&request).unwrap();
        assert!((result.traces[0].rate.unwrap() + 0.1).abs() < 1e-12);
        assert!(result.traces[0].flags.contains(&"wrong-direction".to_string()), "{:?}", result.traces[0].flags);
    }

    /// Microplate path length: 200 µL in a 6.4 mm well, h = 200/(π·3.2²)
    /// mm = 6.217 mm (arithmetic; the well size is typical of a 96-well
    /// plate, common practice, no source).
    #[test]
    fn path_length_from_well_geometry() {
        let path = path_from_well(200.0, 6.4).unwrap();
        assert!((path - 200.0 / (std::f64::consts::PI * 3.2 * 3.2) / 10.0).abs() < 1e-15);
        assert!((path - 0.6217).abs() < 1e-4, "{path}");
        assert!(path_from_well(0.0, 6.4).is_err());
    }

    /// A standard curve with exact points returns its line and converts.
    #[test]
    fn standard_curve_converts_signal() {
        let standard = "c (µM)\tA405\n0\t0.05\n10\t0.23\n20\t0.41\n40\t0.77\n";
        let traces = "time (min)\tW1\n0\t0.05\n1\t0.068\n2\t0.086\n3\t0.104\n4\t0.122\n5\t0.140\n";
        let mut req = request(traces, "trace\tS (mM)\nW1\t1\n");
        req.epsilon = None;
        req.path_cm = None;
        req.standard = Some(standard.into());
        let result = analyse_traces(&req).unwrap();
        let curve = result.standard.as_ref().unwrap();
        assert!((curve.slope - 0.018).abs() < 1e-12 && (curve.intercept - 0.05).abs() < 1e-12);
        // 0.018 per minute is 1 µM/min = 0.001 mM/min.
        assert_eq!(result.rate_unit, "mM/min");
        assert!((result.traces[0].rate.unwrap() - 0.001).abs() < 1e-12);
        assert!(result.rate_table.starts_with("[S] (mM)\tv (mM/min)\n1\t"));
    }

    /// A plate-map layout (invented, not from any instrument) and the list
    /// layout it stands for give identical traces, rates and rate table;
    /// a bad grid cell is a problem at its own line and column.
    #[test]
    fn plate_map_layout_reads_as_the_list() {
        let mut traces = String::from("Time (s)\tA1\tA2\tA3\tB1\tB2\tB3\n");
        for k in 0..8 {
            let t = 30.0 * k as f64;
            let cells: Vec<String> = [0.004, 0.0025, 0.0, 0.0032, 0.0018, 0.0001]
                .iter()
                .enumerate()
                .map(|(w, slope)| format!("{:.4}", 0.1 + w as f64 * 0.01 + slope * t / 30.0 + if k % 2 == 0 { 0.0002 } else { -0.0002 }))
                .collect();
            traces.push_str(&format!("{t}\t{}\n", cells.join("\t")));
        }
        let list = "trace\tS (µM)\tI (nM)\tE (nM)\trole\tblank\nA1\t200\t0\t5\tsample\tA3\nA2\t50\t0\t5\tsample\tA3\nA3\t\t\t\tblank\t\nB1\t200\t10\t5\tsample\tA3\nB2\t50\t10\t5\tsample\tA3\nB3\t200\t\t\tno-enzyme\t\n";
        let plate = "# invented plate map\nS (µM)\n\t1\t2\t3\nA\t200\t50\t\nB\t200\t50\t200\n\nI (nM)\t1\t2\t3\nA\t0\t0\nB\t10\t10\n\nE (nM)\n\t1\t2\t3\nA\t5\t5\nB\t5\t5\n\nrole\n\t1\t2\t3\nA\tsample\tsample\tblank\nB\tsample\tsample\tno-enzyme\n\nblank\n\t1\t2\t3\nA\tA3\tA3\nB\tA3\tA3\n";
        let from_list = analyse_traces(&request(&traces, list)).unwrap();
        let from_plate = analyse_traces(&request(&traces, plate)).unwrap();
        assert!(from_list.problems.is_empty() && from_plate.problems.is_empty(), "{:?} {:?}", from_list.problems, from_plate.problems);
        assert_eq!(from_plate.traces, from_list.traces);
        assert_eq!(from_plate.rate_table, from_list.rate_table);
        assert_eq!((&from_plate.substrate_unit, &from_plate.inhibitor_unit, &from_plate.enzyme_unit), (&from_list.substrate_unit, &from_list.inhibitor_unit, &from_list.enzyme_unit));
        assert!(from_plate.notes.iter().any(|n| n.starts_with("The layout is a plate map: 6 well(s)")), "{:?}", from_plate.notes);
        assert!(from_list.traces.iter().any(|t| t.rate.is_some()));
        let bad = plate.replace("B\t10\t10\n", "B\t10\tten\n");
        let result = analyse_traces(&request(&traces, &bad)).unwrap();
        assert_eq!(result.problems.iter().map(ToString::to_string).collect::<Vec<_>>(), ["line 9, column 3: layout: expected a number, found 'ten'"]);
    }

    /// Invented exports (written for these tests, not copied from any
    /// instrument), each with the clean table it must read as: run
    /// information above, between and below the table, clock times, two
    /// reads in one file. Each case is (what it shows, export, block,
    /// clean table).
    #[test]
    fn exports_read_as_their_clean_tables() {
        let clean_340 = "time (s)\tA1\tA2\tA3\n0\t0.100\t0.200\t0.050\n30\t0.112\t0.209\t0.050\n60\t0.121\t0.221\t0.051\n90\t0.133\t0.230\t0.050\n120\t0.142\t0.241\t0.050\n";
        let clean_405 = "time (s)\tA1\tA2\tA3\n0\t0.300\t0.400\t0.060\n30\t0.322\t0.413\t0.060\n60\t0.341\t0.431\t0.061\n90\t0.363\t0.440\t0.060\n120\t0.382\t0.461\t0.060\n";
        let clock = |clean: &str, format: fn(u32) -> String| -> String {
            clean.lines().map(|l| match l.split_once('\t') {
                Some((t, rest)) => match t.parse::<u32>() {
                    Ok(seconds) => format!("{}\t{rest}\n", format(seconds)),
                    Err(_) => format!("Time\t{rest}\n"),
                },
                None => format!("{l}\n"),
            }).collect()
        };
        let hms = clock(clean_340, |s| format!("{}:{:02}:{:02}", s / 3600, s / 60 % 60, s % 60));
        let ms = clock(clean_340, |s| format!("{:02}:{:02}", s / 60, s % 60));
        // Rows become columns: the corner cell, then the times across.
        let transpose = |table: &str, corner: &str| -> String {
            let rows: Vec<Vec<&str>> = table.lines().map(|l| l.split('\t').collect()).collect();
            let mut out = format!("Invented export, traces in rows\n{corner}");
            for row in &rows[1..] {
                out.push_str(&format!("\t{}", row[0]));
            }
            for column in 1..rows[0].len() {
                out.push_str(&format!("\n{}", rows[0][column]));
                for row in &rows[1..] {
                    out.push_str(&format!("\t{}", row[column]));
                }
            }
            out.push('\n');
            out
        };
        let cases: Vec<(&str, String, Option<usize>, &str)> = vec![
            ("run information above", format!("Invented plate reader export\nDate\t2026-03-14\nTime\t14:22:05\nTemperature\t25.0\nOperator: nobody\nWavelength\t340 nm\n\n{clean_340}"), None, clean_340),
            ("run information below", format!("{clean_340}\nEnd time\t14:31:00\nNote: invented\n"), None, clean_340),
            ("h:mm:ss times", format!("Kinetic read\nStart\t14:22:05\n{hms}"), None, clean_340),
            ("mm:ss times", ms, None, clean_340),
            ("transposed, time heading in the corner", transpose(clean_340, "time (s)"), None, clean_340),
            ("transposed, wells in the corner, clock times", transpose(&hms, "Well"), None, clean_340),
            ("two reads, first", format!("Read 1\tWavelength 340 nm\n{clean_340}\nRead 2\tWavelength 405 nm\n{clean_405}"), None, clean_340),
            ("two reads, second", format!("Read 1\tWavelength 340 nm\n{clean_340}\nRead 2\tWavelength 405 nm\n{clean_405}"), Some(2), clean_405),
        ];
        let plain = |traces: &str, block: Option<usize>| TraceRequest { traces: traces.into(), layout: "trace\tS (µM)\nA1\t100\nA2\t50\nA3\t10\n".into(), block, ..TraceRequest::default() };
        for (what, export, block, clean) in &cases {
            let expected = analyse_traces(&plain(clean, None)).unwrap();
            let found = analyse_traces(&plain(export, *block)).unwrap_or_else(|e| panic!("{what}: {}", e.message));
            assert!(found.problems.is_empty(), "{what}: {:?}", found.problems);
            assert_eq!(found.traces, expected.traces, "{what}");
            assert_eq!(found.rate_table, expected.rate_table, "{what}");
            assert!(found.traces.iter().all(|t| t.rate.is_some()), "{what}");
        }
        // A bad cell of a transposed export is named where it stands.
        let bad = cases[4].1.replace("0.221", "n/a");
        let found = analyse_traces(&plain(&bad, None)).unwrap();
        assert_eq!(found.problems.iter().map(ToString::to_string).collect::<Vec<_>>(), ["line 4, column 4: expected a number, found 'n/a'"]);
        assert!(found.notes.iter().any(|n| n.starts_with("The table is transposed: line 2 holds the times and lines 3–5 one trace each")), "{:?}", found.notes);
        let two = analyse_traces(&plain(&cases[6].1, None)).unwrap();
        assert_eq!(two.blocks.iter().map(|b| (b.number, b.header_line, b.last_line, b.title.as_deref(), b.rows)).collect::<Vec<_>>(), [
            (1, 2, 7, Some("Read 1 Wavelength 340 nm")),
            (2, 10, 15, Some("Read 2 Wavelength 405 nm")),
        ].map(|(n, h, l, t)| (n, h, l, t, 5)));
        assert!(two.notes.iter().any(|n| n.starts_with("The text holds 2 kinetic tables: 1 (lines 2–7, after 'Read 1 Wavelength 340 nm'), 2 (lines 10–15")), "{:?}", two.notes);
        let error = analyse_traces(&plain(&cases[6].1, Some(3))).unwrap_err();
        assert_eq!(error.message, "block 3 was chosen, but the text holds 2 kinetic table(s) (numbered from 1)");
        // No header: the message names the line tried and why it failed.
        let error = analyse_traces(&plain("Time\t14:22:05\n0\t0.1\t0.2\n30\t0.2\t0.3\n", None)).unwrap_err();
        assert!(error.message.contains("line 1 was not, because a cell after the first is a clock time or a date"), "{}", error.message);
    }
}
