//! Plot data for time courses: one trace in detail, rates against [E], the
//! integrated fit, and the plate as small multiples.
//!
//! Everything here is computed from the *serialised* results of
//! [`crate::traces::analyse_traces`] and [`crate::progress::fit_progress`]:
//! the page may have run the analysis in a Web Worker and hold only its
//! JSON, which reads as a [`TracePlotSource`] (fields it does not need are
//! ignored).

use super::{label, Band, PlotData, PlotKind, PlotPoint, Series};
use crate::progress::ProgressCurve;
use crate::traces::{CellState, EnzymeCheck, Role, TraceResult};
use serde::{Deserialize, Serialize};

/// The units of a trace analysis, as its JSON names them.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct TraceUnits {
    /// Time unit of the table, such as `min`.
    pub time_unit: String,
    /// Unit of the readings after conversion (a concentration, or `signal`).
    pub value_unit: String,
    /// Unit of the rates.
    pub rate_unit: String,
    /// Unit of [S].
    #[serde(default)]
    pub substrate_unit: Option<String>,
    /// Unit of [E].
    #[serde(default)]
    pub enzyme_unit: Option<String>,
}

/// What the time-course plots need from a `TraceAnalysis`. The JSON text
/// of a whole `TraceAnalysis` reads as one.
#[derive(Clone, Debug, PartialEq, Deserialize)]
pub struct TracePlotSource {
    /// Units for the axis labels.
    #[serde(flatten)]
    pub units: TraceUnits,
    /// Every trace.
    pub traces: Vec<TraceResult>,
    /// The v against [E] checks.
    #[serde(default)]
    pub enzyme_checks: Vec<EnzymeCheck>,
}

impl TraceUnits {
    fn time_label(&self) -> String {
        label("time", &self.time_unit)
    }

    /// Readings are a product concentration once converted; otherwise the
    /// detector's signal, whose unit the table does not say.
    fn value_label(&self) -> String {
        if self.value_unit == "signal" || self.value_unit.is_empty() {
            "signal (as read, a.u.)".to_string()
        } else {
            label("product", &self.value_unit)
        }
    }
}

/// Index of the first reading at or after the detector's limit (an
/// overflow marker or a value above the linear limit); the analysis uses
/// only earlier readings.
fn limit_index(trace: &TraceResult) -> Option<usize> {
    trace.cells.iter().position(|c| matches!(c, CellState::Overflow | CellState::OverRange))
}

/// One trace in detail: every reading (point `row` is the reading's index
/// in `times`), readings the analysis does not use because they are at or
/// past the detector's limit marked `excluded`, the rate window as a
/// shaded band and the fitted straight line over it.
pub fn trace_detail_plot(trace: &TraceResult, units: &TraceUnits) -> PlotData {
    let limit = limit_index(trace).unwrap_or(usize::MAX);
    let points: Vec<PlotPoint> = trace
        .times
        .iter()
        .zip(&trace.values)
        .enumerate()
        .filter_map(|(j, (t, v))| v.filter(|v| v.is_finite() && t.is_finite()).map(|v| PlotPoint { row: j, x: *t, y: v, excluded: j >= limit }))
        .collect();
    let band = match (trace.window_start, trace.window_end) {
        (Some(from), Some(to)) => Some(Band { from, to, label: "rate window".to_string() }),
        _ => None,
    };
    let curve = match (trace.window_start, trace.window_end, trace.rate, trace.intercept) {
        (Some(a), Some(b), Some(rate), Some(c)) => vec![(a, c), (b, c + rate * (b - a))],
        _ => Vec::new(),
    };
    let not_drawn = trace.values.iter().filter(|v| v.is_none()).count();
    let mut note = String::from("Shaded: the window the rate is fitted to; the line is that fit. Lighter points lie outside the window.");
    if limit != usize::MAX {
        note.push_str(" Rings: readings at or past the detector's limit, not used.");
    }
    if not_drawn > 0 {
        note.push_str(&format!(" {not_drawn} cell(s) held no usable number and are not drawn."));
    }
    let role = match trace.role {
        Role::Sample => "",
        Role::Blank => " (blank)",
        Role::NoEnzyme => " (no enzyme)",
    };
    PlotData {
        kind: PlotKind::TraceDetail,
        title: format!("Time course {}{role}", trace.name),
        x_label: units.time_label(),
        y_label: units.value_label(),
        points,
        curve,
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note,
        series: Vec::new(),
        log_x: false,
        marks: Vec::new(),
        band,
    }
}

/// Initial rate against [E] at one condition: the points (`row` indexes
/// `check.points`) and the fitted straight line from [E] = 0.
pub fn enzyme_check_plot(check: &EnzymeCheck, units: &TraceUnits) -> PlotData {
    let points: Vec<PlotPoint> =
        check.points.iter().enumerate().map(|(row, (e, v, _))| PlotPoint { row, x: *e, y: *v, excluded: false }).collect();
    let e_max = points.iter().map(|p| p.x).fold(0.0, f64::max) * 1.05;
    let curve = if e_max > 0.0 { vec![(0.0, check.intercept), (e_max, check.intercept + check.slope * e_max)] } else { Vec::new() };
    let condition = match check.s {
        Some(s) => format!(" at [S] = {}", super::family::short_number(s)),
        None => String::new(),
    };
    PlotData {
        kind: PlotKind::RateAgainstEnzyme,
        title: format!("Initial rate against [E]{condition}"),
        x_label: label("[E]", units.enzyme_unit.as_deref().unwrap_or("")),
        y_label: label("v", &units.rate_unit),
        points,
        curve,
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note: "The line is the straight-line fit of rate on [E]; a rate proportional to [E] passes through the origin.".to_string(),
        series: Vec::new(),
        log_x: false,
        marks: Vec::new(),
        band: None,
    }
}

/// The integrated Michaelis-Menten fit: one series per trace with its
/// readings and its fitted curve. Point `row` is the trace's index in
/// `curves`, so a click names the trace.
pub fn progress_plot(curves: &[ProgressCurve], units: &TraceUnits) -> PlotData {
    let series: Vec<Series> = curves
        .iter()
        .enumerate()
        .map(|(row, c)| Series {
            label: c.trace.clone(),
            points: c.times.iter().zip(&c.observed).map(|(t, y)| PlotPoint { row, x: *t, y: *y, excluded: false }).collect(),
            curve: c.times.iter().copied().zip(c.fitted.iter().copied()).filter(|(t, y)| t.is_finite() && y.is_finite()).collect(),
            dashed: false,
        })
        .collect();
    PlotData {
        kind: PlotKind::ProgressCurves,
        title: "Whole time courses with the integrated Michaelis-Menten fit".to_string(),
        x_label: units.time_label(),
        y_label: units.value_label(),
        points: series.iter().flat_map(|s| s.points.clone()).collect(),
        curve: Vec::new(),
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note: "Points: readings used in the fit; curves: one shared Km and Vmax, with each trace's own offset.".to_string(),
        series,
        log_x: false,
        marks: Vec::new(),
        band: None,
    }
}

/// The plate as small multiples.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PlateView {
    /// Rows of the grid.
    pub rows: usize,
    /// Columns of the grid.
    pub columns: usize,
    /// Whether the geometry comes from well names (`A1` … `P24`); when
    /// false, traces are placed in table order, row by row.
    pub from_well_names: bool,
    /// Labels of the rows (`A`, `B`, …), empty when placed in order.
    pub row_labels: Vec<String>,
    /// Labels of the columns (`1`, `2`, …), empty when placed in order.
    pub column_labels: Vec<String>,
    /// Time axis shared by every well.
    pub time_range: (f64, f64),
    /// Value axis shared by every well.
    pub value_range: (f64, f64),
    /// Axis labels with units, for the figure's key.
    pub x_label: String,
    /// Axis labels with units, for the figure's key.
    pub y_label: String,
    /// The wells that have a trace.
    pub wells: Vec<PlateWell>,
}

/// One well of the plate view.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PlateWell {
    /// The trace's name.
    pub name: String,
    /// Row in the grid, from 0.
    pub row: usize,
    /// Column in the grid, from 0.
    pub column: usize,
    /// The trace's role.
    pub role: Role,
    /// Usable readings `(time, value)`, in time order.
    pub readings: Vec<(f64, f64)>,
    /// Times of readings at or past the detector's limit.
    pub over_limit: Vec<f64>,
    /// Times of cells with no usable number (missing or unreadable).
    pub missing: Vec<f64>,
    /// The rate window.
    pub window: Option<(f64, f64)>,
    /// The fitted line over the window, as its two ends.
    pub line: Vec<(f64, f64)>,
    /// The analysis' flags for this trace (`depletion`, `nonlinear`, …).
    pub flags: Vec<String>,
    /// Whether the trace is left out.
    pub excluded: bool,
}

/// Row and column (from 0) of a well name such as `B7` or `p24`.
fn well_position(name: &str) -> Option<(usize, usize)> {
    let name = name.trim();
    let mut chars = name.chars();
    let letter = chars.next()?.to_ascii_uppercase();
    if !letter.is_ascii_uppercase() {
        return None;
    }
    let digits = chars.as_str();
    if digits.is_empty() || !digits.chars().all(|c| c.is_ascii_digit()) {
        return None;
    }
    let column: usize = digits.parse().ok()?;
    (column >= 1).then(|| ((letter as u8 - b'A') as usize, column - 1))
}

/// The plate view of a trace analysis. When every trace is named as a
/// distinct well, the grid is the smallest standard plate that holds them
/// (8 × 12, 16 × 24 or 32 × 48), with empty wells left empty; otherwise
/// the traces are placed in table order, row by row, 8, 12 or 24 to a row.
pub fn plate_view(traces: &[TraceResult], units: &TraceUnits) -> PlateView {
    let positions: Option<Vec<(usize, usize)>> = traces.iter().map(|t| well_position(&t.name)).collect();
    let distinct = positions.as_ref().is_some_and(|p| {
        let mut sorted = p.clone();
        sorted.sort();
        sorted.dedup();
        sorted.len() == p.len()
    });
    let (rows, columns, places, from_names) = match positions {
        Some(places) if distinct && !places.is_empty() => {
            let max_row = places.iter().map(|p| p.0).max().unwrap_or(0) + 1;
            let max_column = places.iter().map(|p| p.1).max().unwrap_or(0) + 1;
            let (rows, columns) = [(8, 12), (16, 24), (32, 48)]
                .into_iter()
                .find(|(r, c)| max_row <= *r && max_column <= *c)
                .unwrap_or((max_row, max_column));
            (rows, columns, places, true)
        }
        _ => {
            let n = traces.len();
            let columns = if n > 96 { 24 } else if n > 24 { 12 } else { 8 };
            let rows = n.div_ceil(columns).max(1);
            (rows, columns, (0..n).map(|k| (k / columns, k % columns)).collect(), false)
        }
    };
    let finite_readings = |t: &TraceResult| -> Vec<(f64, f64)> {
        t.times.iter().zip(&t.values).filter_map(|(t, v)| v.map(|v| (*t, v))).filter(|(t, v)| t.is_finite() && v.is_finite()).collect()
    };
    let span = |values: &mut dyn Iterator<Item = f64>| {
        let (low, high) = values.fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), v| (l.min(v), h.max(v)));
        if low.is_finite() { (low, high) } else { (0.0, 1.0) }
    };
    let time_range = span(&mut traces.iter().flat_map(|t| t.times.iter().copied()).filter(|t| t.is_finite()));
    let value_range = span(&mut traces.iter().flat_map(|t| finite_readings(t).into_iter().map(|p| p.1)));
    let wells = traces
        .iter()
        .zip(places)
        .map(|(t, (row, column))| {
            let limit = limit_index(t).unwrap_or(usize::MAX);
            let times_where = |keep: &dyn Fn(usize) -> bool| -> Vec<f64> { (0..t.times.len()).filter(|j| keep(*j)).map(|j| t.times[j]).collect() };
            PlateWell {
                name: t.name.clone(),
                row,
                column,
                role: t.role,
                readings: finite_readings(t),
                over_limit: times_where(&|j| j >= limit),
                missing: times_where(&|j| matches!(t.cells.get(j), Some(CellState::Missing | CellState::Unreadable))),
                window: t.window_start.zip(t.window_end),
                line: match (t.window_start, t.window_end, t.rate, t.intercept) {
                    (Some(a), Some(b), Some(r), Some(c)) => vec![(a, c), (b, c + r * (b - a))],
                    _ => Vec::new(),
                },
                flags: t.flags.clone(),
                excluded: t.excluded,
            }
        })
        .collect();
    let letters = |n: usize| (0..n).map(|k| ((b'A' + (k % 26) as u8) as char).to_string()).collect();
    PlateView {
        rows,
        columns,
        from_well_names: from_names,
        row_labels: if from_names { letters(rows) } else { Vec::new() },
        column_labels: if from_names { (1..=columns).map(|c| c.to_string()).collect() } else { Vec::new() },
        time_range,
        value_range,
        x_label: units.time_label(),
        y_label: units.value_label(),
        wells,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::traces::{analyse_traces, TraceRequest};

    /// A small plate: three wells of straight product formation and one
    /// that overflows; made up for this test.
    fn plate(names: &[&str]) -> String {
        let mut text = format!("time (min)\t{}\n", names.join("\t"));
        for k in 0..10 {
            let t = k as f64;
            let cells: Vec<String> = names
                .iter()
                .enumerate()
                .map(|(w, _)| if w == 3 && k >= 7 { "OVRFLW".to_string() } else { format!("{}", 0.05 + 0.01 * (w as f64 + 1.0) * t) })
                .collect();
            text.push_str(&format!("{t}\t{}\n", cells.join("\t")));
        }
        text
    }

    fn analysed(names: &[&str]) -> (TracePlotSource, crate::traces::TraceAnalysis) {
        let request = TraceRequest { traces: plate(names), ..TraceRequest::default() };
        let analysis = analyse_traces(&request).unwrap();
        // Through JSON, as the page holds it.
        let json = serde_json::to_string(&analysis).unwrap();
        (serde_json::from_str(&json).unwrap(), analysis)
    }

    #[test]
    fn detail_from_json_has_window_line_and_left_out_readings() {
        let (source, analysis) = analysed(&["A1", "A2", "B1", "B2"]);
        assert_eq!(source.traces, analysis.traces);
        let overflowing = &source.traces[3];
        let plot = trace_detail_plot(overflowing, &source.units);
        // Seven readings before the overflow markers; the markers hold no number.
        assert_eq!(plot.points.len(), 7);
        assert!(plot.points.iter().all(|p| !p.excluded));
        let band = plot.band.as_ref().expect("a window");
        assert_eq!((Some(band.from), Some(band.to)), (overflowing.window_start, overflowing.window_end));
        // The line spans the window and has the trace's slope.
        let (a, b) = (plot.curve[0], plot.curve[1]);
        assert_eq!((a.0, b.0), (band.from, band.to));
        assert!(((b.1 - a.1) / (b.0 - a.0) - overflowing.rate.unwrap()).abs() < 1e-12);
        assert!(plot.note.contains("3 cell(s)"), "{}", plot.note);
        assert_eq!(plot.x_label, "time (min)");
        // The plot data itself survives JSON both ways.
        let back: PlotData = serde_json::from_str(&serde_json::to_string(&plot).unwrap()).unwrap();
        assert_eq!(back, plot);
    }

    #[test]
    fn over_range_readings_are_marked_left_out() {
        let request = TraceRequest { traces: plate(&["A1", "A2", "B1"]), linear_limit: Some(0.12), ..TraceRequest::default() };
        let analysis = analyse_traces(&request).unwrap();
        let trace = &analysis.traces[2]; // 0.05 + 0.03 t passes 0.12 after t = 2.33.
        let plot = trace_detail_plot(trace, &TraceUnits::default());
        let left_out: Vec<f64> = plot.points.iter().filter(|p| p.excluded).map(|p| p.x).collect();
        assert_eq!(left_out, (3..10).map(f64::from).collect::<Vec<_>>());
    }

    #[test]
    fn plate_geometry_from_well_names() {
        let check = |names: &[&str], rows: usize, columns: usize, from_names: bool| {
            let (source, _) = analysed(names);
            let view = plate_view(&source.traces, &source.units);
            assert_eq!((view.rows, view.columns, view.from_well_names), (rows, columns, from_names), "{names:?}");
            view
        };
        let view = check(&["A1", "A2", "B1", "H12"], 8, 12, true);
        assert_eq!((view.wells[3].row, view.wells[3].column), (7, 11));
        assert_eq!(view.row_labels.len(), 8);
        check(&["A1", "A2", "B1", "P24"], 16, 24, true);
        check(&["A1", "A2", "I1", "B13"], 16, 24, true);
        let view = check(&["tube 1", "tube 2", "tube 3", "tube 4"], 1, 8, false);
        assert_eq!(view.wells.iter().map(|w| w.column).collect::<Vec<_>>(), vec![0, 1, 2, 3]);
        // The overflowing well carries its flag and the times past the limit.
        let view = check(&["A1", "A2", "B1", "B2"], 8, 12, true);
        assert!(view.wells[3].flags.iter().any(|f| f == "over-range"));
        assert_eq!(view.wells[3].over_limit, vec![7.0, 8.0, 9.0]);
        assert_eq!(view.time_range, (0.0, 9.0));
    }

    #[test]
    fn well_names() {
        assert_eq!(well_position("A1"), Some((0, 0)));
        assert_eq!(well_position("p24"), Some((15, 23)));
        assert_eq!(well_position("A0"), None);
        assert_eq!(well_position("blank"), None);
        assert_eq!(well_position("7"), None);
    }
}
