//! The page's window onto the inhibition analysis: fit every mechanism to
//! a table of rates at several [S] and [I], and draw the family of plots.
//! Like [`crate::Workbench`], it keeps the last analysis on the Rust side.

use crate::draw::{draw_plot, plot_svg};
use crate::kept::{adopts_worker_analyses, analyse_for_worker, analyse_keeping, Kept};
use crate::to_js;
use plotters::prelude::*;
use plotters_canvas::CanvasBackend;
use turnover_core::inhibition::{analyse_inhibition, InhibitionAnalysis};
use turnover_core::plots::{PlotData, PlotKind};
use wasm_bindgen::prelude::*;

/// Holds the most recent inhibition analysis for drawing.
#[wasm_bindgen]
#[derive(Default)]
pub struct InhibitionBench {
    last: Option<Kept>,
}

/// The shown mechanism's constants as text.
fn constants_of(analysis: &InhibitionAnalysis) -> String {
    analysis
        .fits
        .iter()
        .find(|f| f.model == analysis.shown)
        .map(|fit| turnover_core::format::constants_text(&fit.parameters))
        .unwrap_or_default()
}

/// For the page's Web Worker: analyses an inhibitor table like
/// [`InhibitionBench::analyse`] and returns `{result, kept}` as JSON texts
/// (see `analyseRatesInWorker`).
#[wasm_bindgen(js_name = analyseInhibitionInWorker)]
pub fn analyse_inhibition_in_worker(request: JsValue) -> Result<JsValue, JsError> {
    analyse_for_worker(request, analyse_inhibition, constants_of)
}

/// Whether `text` is a table of rates at several inhibitor concentrations
/// (a long table with an [I] column, or a matrix with concentrations in
/// its header).
#[wasm_bindgen(js_name = isInhibitionTable)]
pub fn is_inhibition_table(text: &str) -> bool {
    turnover_core::inhibition::is_inhibition_table(text)
}

impl InhibitionBench {
    fn plot(&self, kind: &str) -> Result<&PlotData, JsError> {
        let kept = self.last.as_ref().ok_or_else(|| JsError::new("there is no inhibition analysis to draw"))?;
        let kind = PlotKind::from_name(kind).ok_or_else(|| JsError::new(&format!("unknown plot '{kind}'")))?;
        kept.plots.iter().find(|p| p.kind == kind).ok_or_else(|| JsError::new("that plot is not part of this analysis"))
    }
}

#[wasm_bindgen]
impl InhibitionBench {
    /// An empty bench.
    #[wasm_bindgen(constructor)]
    pub fn new() -> InhibitionBench {
        InhibitionBench::default()
    }

    /// Analyses an inhibitor table. `request` has the fields of
    /// `InhibitionRequest` (`text`, `models`, `excluded_lines`,
    /// `substrate_unit`, `inhibitor_unit`, `rate_unit`). Throws an `Error`
    /// with a message for the scientist when no analysis can be made.
    pub fn analyse(&mut self, request: JsValue) -> Result<JsValue, JsError> {
        analyse_keeping(&mut self.last, request, analyse_inhibition, constants_of)
    }

    /// Draws plot `kind` of the last analysis on canvas `canvas_id`;
    /// returns where each point landed, as `{row, x, y}` in pixels.
    pub fn draw(&self, canvas_id: &str, kind: &str) -> Result<JsValue, JsError> {
        let plot = self.plot(kind)?;
        let backend = CanvasBackend::new(canvas_id).ok_or_else(|| JsError::new(&format!("no canvas '{canvas_id}'")))?;
        let root = backend.into_drawing_area();
        let positions = draw_plot(&root, plot).map_err(|e| JsError::new(&format!("drawing failed: {e}")))?;
        root.present().map_err(|e| JsError::new(&format!("drawing failed: {e}")))?;
        to_js(&positions.points)
    }

    /// The constants of the mechanism the plots show, one line each, by
    /// the core's formatting rule: text for the `constants` figure option.
    #[wasm_bindgen(js_name = constantsText)]
    pub fn constants_text(&self) -> Result<String, JsError> {
        let kept = self.last.as_ref().ok_or_else(|| JsError::new("there is no inhibition analysis"))?;
        Ok(kept.constants.clone())
    }

    /// Draws plot `kind` and returns `{points, area}` as
    /// `Workbench.drawMapped` does.
    #[wasm_bindgen(js_name = drawMapped)]
    pub fn draw_mapped(&self, canvas_id: &str, kind: &str) -> Result<JsValue, JsError> {
        to_js(&crate::figures::draw_on_canvas(canvas_id, self.plot(kind)?)?)
    }

    /// Plot `kind` as an SVG figure; `options_json` as for
    /// `Workbench.figureSvg`.
    #[wasm_bindgen(js_name = figureSvg)]
    pub fn figure_svg(&self, kind: &str, options_json: &str) -> Result<String, JsError> {
        crate::figures::figure(self.plot(kind)?, options_json)
    }

    /// Several plots (a JSON array of names) as one lettered figure.
    #[wasm_bindgen(js_name = figurePanelsSvg)]
    pub fn figure_panels_svg(&self, kinds_json: &str, options_json: &str) -> Result<String, JsError> {
        let kinds = crate::figures::read_kinds(kinds_json)?;
        let plots = kinds.iter().map(|k| self.plot(k)).collect::<Result<Vec<_>, _>>()?;
        crate::figures::panels(&plots, options_json)
    }

    /// Plot `kind` of the last analysis as an SVG document.
    pub fn svg(&self, kind: &str, width: u32, height: u32) -> Result<String, JsError> {
        plot_svg(self.plot(kind)?, width, height).map_err(|e| JsError::new(&format!("drawing failed: {e}")))
    }
}

adopts_worker_analyses!(InhibitionBench);
