//! Drawing any plot, figures for journals, and the time-course plots.
//!
//! Every plot the page shows goes through [`crate::draw`]: the benches'
//! plots by kind, any `PlotData` given as JSON, and the time-course plots
//! built by `turnover_core::plots::traces` from the JSON of a trace
//! analysis (which the page may have received from its Web Worker).
//! Figures are SVG documents sized in millimetres ([`FigureOptions`]).

use crate::draw::{self, draw_plot, Drawn, FigureOptions, Style};
use crate::to_js;
use plotters::prelude::*;
use plotters_canvas::CanvasBackend;
use serde::Deserialize;
use turnover_core::plots::traces::{enzyme_check_plot, plate_view, progress_plot, trace_detail_plot, PlateView, TracePlotSource};
use turnover_core::plots::{PlotData, PlotKind};
use turnover_core::progress::ProgressCurve;
use wasm_bindgen::prelude::*;

fn drawing_failed(e: impl std::fmt::Display) -> JsError {
    JsError::new(&format!("drawing failed: {e}"))
}

/// Draws `plot` on the canvas `canvas_id`.
pub(crate) fn draw_on_canvas(canvas_id: &str, plot: &PlotData) -> Result<Drawn, JsError> {
    let backend = CanvasBackend::new(canvas_id).ok_or_else(|| JsError::new(&format!("no canvas '{canvas_id}'")))?;
    let root = backend.into_drawing_area();
    let drawn = draw_plot(&root, plot).map_err(drawing_failed)?;
    root.present().map_err(drawing_failed)?;
    Ok(drawn)
}

/// Reads figure options sent as JSON text; an empty text means the
/// defaults.
pub(crate) fn read_options(options_json: &str) -> Result<FigureOptions, JsError> {
    if options_json.trim().is_empty() {
        return Ok(FigureOptions::default());
    }
    let options: FigureOptions =
        serde_json::from_str(options_json).map_err(|e| JsError::new(&format!("figure options Turnover cannot read: {e}")))?;
    options.check().map_err(|e| JsError::new(&e))?;
    Ok(options)
}

/// One plot as an SVG figure.
pub(crate) fn figure(plot: &PlotData, options_json: &str) -> Result<String, JsError> {
    draw::figure_svg(plot, &read_options(options_json)?).map_err(drawing_failed)
}

/// Several plots as one lettered SVG figure.
pub(crate) fn panels(plots: &[&PlotData], options_json: &str) -> Result<String, JsError> {
    draw::figure_panels_svg(plots, &read_options(options_json)?).map_err(drawing_failed)
}

/// Reads a JSON array of plot names.
pub(crate) fn read_kinds(kinds_json: &str) -> Result<Vec<String>, JsError> {
    serde_json::from_str(kinds_json).map_err(|e| JsError::new(&format!("expected a JSON array of plot names: {e}")))
}

fn read_plot(plot_json: &str) -> Result<PlotData, JsError> {
    serde_json::from_str(plot_json).map_err(|e| JsError::new(&format!("plot data Turnover cannot read: {e}")))
}

/// Draws any plot, given as the JSON text of a `PlotData` (such as one
/// element of an analysis' `plots`, or what `TraceFigures.plotJson`
/// returns), on canvas `canvasId`. Returns `{points: [{row, x, y}], area:
/// {left, top, width, height, x_min, x_max, y_min, y_max, log_x}}` in canvas
/// pixels.
#[wasm_bindgen(js_name = drawPlotJson)]
pub fn draw_plot_json(canvas_id: &str, plot_json: &str) -> Result<JsValue, JsError> {
    to_js(&draw_on_canvas(canvas_id, &read_plot(plot_json)?)?)
}

/// Any plot (JSON text of a `PlotData`) as an SVG figure; `optionsJson` as
/// for the benches' `figureSvg`.
#[wasm_bindgen(js_name = plotFigureSvg)]
pub fn plot_figure_svg(plot_json: &str, options_json: &str) -> Result<String, JsError> {
    figure(&read_plot(plot_json)?, options_json)
}

/// Several plots (JSON text of an array of `PlotData`) as one figure with
/// panels lettered A, B, C…
#[wasm_bindgen(js_name = plotPanelsSvg)]
pub fn plot_panels_svg(plots_json: &str, options_json: &str) -> Result<String, JsError> {
    let plots: Vec<PlotData> =
        serde_json::from_str(plots_json).map_err(|e| JsError::new(&format!("plot data Turnover cannot read: {e}")))?;
    panels(&plots.iter().collect::<Vec<_>>(), options_json)
}

/// The part of a `ProgressFit` the plot needs.
#[derive(Deserialize)]
struct ProgressCurves {
    curves: Vec<ProgressCurve>,
}

/// The time-course plots of one trace analysis, read once from its JSON
/// text and kept on the Rust side.
#[wasm_bindgen]
pub struct TraceFigures {
    source: TracePlotSource,
    progress: Option<Vec<ProgressCurve>>,
    plate: PlateView,
}

impl TraceFigures {
    fn plot(&self, kind: &str, which: &str) -> Result<PlotData, JsError> {
        match PlotKind::from_name(kind) {
            Some(PlotKind::TraceDetail) => {
                let trace = self
                    .source
                    .traces
                    .iter()
                    .find(|t| t.name == which)
                    .ok_or_else(|| JsError::new(&format!("no trace named '{which}'")))?;
                Ok(trace_detail_plot(trace, &self.source.units))
            }
            Some(PlotKind::RateAgainstEnzyme) => {
                let index: usize = if which.is_empty() { 0 } else { which.parse().map_err(|_| JsError::new("expected the check's index"))? };
                let check = self.source.enzyme_checks.get(index).ok_or_else(|| JsError::new("this analysis has no such v against [E] check"))?;
                Ok(enzyme_check_plot(check, &self.source.units))
            }
            Some(PlotKind::ProgressCurves) => {
                let curves = self.progress.as_ref().ok_or_else(|| JsError::new("no whole-curve fit has been given"))?;
                Ok(progress_plot(curves, &self.source.units))
            }
            _ => Err(JsError::new(&format!("'{kind}' is not a time-course plot"))),
        }
    }
}

#[wasm_bindgen]
impl TraceFigures {
    /// Reads the JSON text of a `TraceAnalysis` (as `TraceBench.analyseJson`
    /// returns it, in the page or in its worker).
    #[wasm_bindgen(constructor)]
    pub fn new(analysis_json: &str) -> Result<TraceFigures, JsError> {
        let source: TracePlotSource = serde_json::from_str(analysis_json)
            .map_err(|e| JsError::new(&format!("a trace analysis Turnover cannot read: {e}")))?;
        let plate = plate_view(&source.traces, &source.units);
        Ok(TraceFigures { source, progress: None, plate })
    }

    /// Adds the whole-curve fit: the JSON text of a `ProgressFit` (as
    /// `TraceBench.fitProgressJson` returns it).
    #[wasm_bindgen(js_name = setProgressJson)]
    pub fn set_progress_json(&mut self, progress_json: &str) -> Result<(), JsError> {
        let fit: ProgressCurves =
            serde_json::from_str(progress_json).map_err(|e| JsError::new(&format!("a whole-curve fit Turnover cannot read: {e}")))?;
        self.progress = Some(fit.curves);
        Ok(())
    }

    /// The plot data as JSON text of a `PlotData`. `kind` is
    /// `trace-detail` (`which` = the trace's name), `rate-against-enzyme`
    /// (`which` = the check's index, `""` for the first) or
    /// `progress-curves` (`which` ignored; needs `setProgressJson`).
    #[wasm_bindgen(js_name = plotJson)]
    pub fn plot_json(&self, kind: &str, which: &str) -> Result<String, JsError> {
        serde_json::to_string(&self.plot(kind, which)?).map_err(|e| JsError::new(&format!("internal error: {e}")))
    }

    /// The plate view as JSON text: `{rows, columns, from_well_names,
    /// row_labels, column_labels, time_range, value_range, x_label, y_label,
    /// wells: [{name, row, column, role, readings, over_limit, missing,
    /// window, line, flags, excluded}]}`.
    #[wasm_bindgen(js_name = plateJson)]
    pub fn plate_json(&self) -> Result<String, JsError> {
        serde_json::to_string(&self.plate).map_err(|e| JsError::new(&format!("internal error: {e}")))
    }

    /// Draws plot `kind` (see `plotJson`) on canvas `canvasId`; returns
    /// `{points, area}` as `drawPlotJson` does. For `trace-detail`, a point's
    /// `row` is the reading's index in the trace's `times`.
    pub fn draw(&self, canvas_id: &str, kind: &str, which: &str) -> Result<JsValue, JsError> {
        to_js(&draw_on_canvas(canvas_id, &self.plot(kind, which)?)?)
    }

    /// Draws the plate on canvas `canvasId`, outlining the well named
    /// `selected` (or none); returns every well's box `[{name, x, y, w, h}]`
    /// in canvas pixels, for clicks.
    #[wasm_bindgen(js_name = drawPlate)]
    pub fn draw_plate(&self, canvas_id: &str, selected: Option<String>) -> Result<JsValue, JsError> {
        let backend = CanvasBackend::new(canvas_id).ok_or_else(|| JsError::new(&format!("no canvas '{canvas_id}'")))?;
        let root = backend.into_drawing_area();
        let boxes = draw::draw_plate(&root, &self.plate, selected.as_deref(), &Style::screen()).map_err(drawing_failed)?;
        root.present().map_err(drawing_failed)?;
        to_js(&boxes)
    }

    /// Plot `kind` (see `plotJson`, or `plate`) as an SVG figure.
    #[wasm_bindgen(js_name = figureSvg)]
    pub fn figure_svg(&self, kind: &str, which: &str, options_json: &str) -> Result<String, JsError> {
        if kind == "plate" {
            return draw::plate_svg(&self.plate, &read_options(options_json)?).map_err(drawing_failed);
        }
        figure(&self.plot(kind, which)?, options_json)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The time-course figures are made from the analysis JSON alone, as a
    /// page holding only its worker's answer would.
    #[test]
    fn trace_figures_from_json_text() {
        use turnover_core::traces::{analyse_traces, TraceRequest};
        let text = "time (s)\tA1\tA2\tB1\n0\t0.01\t0.02\t0.00\n30\t0.05\t0.09\t0.00\n60\t0.09\t0.17\t0.01\n90\t0.13\t0.24\t0.01\n120\t0.17\t0.31\t0.02\n150\t0.20\t0.38\t0.02\n";
        let analysis = analyse_traces(&TraceRequest { traces: text.into(), ..TraceRequest::default() }).unwrap();
        let json = serde_json::to_string(&analysis).unwrap();
        let figures = TraceFigures::new(&json).unwrap();
        let plot: PlotData = serde_json::from_str(&figures.plot_json("trace-detail", "A2").unwrap()).unwrap();
        assert_eq!(plot.kind, PlotKind::TraceDetail);
        assert_eq!(plot.points.len(), 6);
        let plate: PlateView = serde_json::from_str(&figures.plate_json().unwrap()).unwrap();
        assert_eq!((plate.rows, plate.columns, plate.wells.len()), (8, 12, 3));
        let svg = figures.figure_svg("plate", "", r#"{"width_mm": 120, "height_mm": 80}"#).unwrap();
        assert!(svg.contains("width=\"120mm\" height=\"80mm\""));
        let svg = figures.figure_svg("trace-detail", "B1", r#"{"title": true, "font_pt": 7}"#).unwrap();
        assert!(svg.contains("Time course B1"));
    }
}
