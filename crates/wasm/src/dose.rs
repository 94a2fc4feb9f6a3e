//! The page's window onto the inhibitor-series (dose-response) analysis:
//! fit the logistic or the Morrison equation to a table of [I] and a
//! response, optionally convert the IC50 into Ki, and draw the plot. Like
//! [`crate::Workbench`], it keeps the last analysis on the Rust side.

use crate::draw::{draw_plot, plot_svg};
use crate::kept::{adopts_worker_analyses, analyse_for_worker, analyse_keeping, Kept};
use crate::to_js;
use plotters::prelude::*;
use plotters_canvas::CanvasBackend;
use turnover_core::dose::{analyse_dose, DoseAnalysis};
use turnover_core::plots::PlotData;
use wasm_bindgen::prelude::*;

/// Holds the most recent dose-response analysis for drawing.
#[wasm_bindgen]
#[derive(Default)]
pub struct DoseBench {
    last: Option<Kept>,
}

/// The fitted constants as text.
fn constants_of(analysis: &DoseAnalysis) -> String {
    turnover_core::format::constants_text(&analysis.fit.parameters)
}

/// For the page's Web Worker: analyses an inhibitor series like
/// [`DoseBench::analyse`] and returns `{result, kept}` as JSON texts (see
/// `analyseRatesInWorker`).
#[wasm_bindgen(js_name = analyseDoseInWorker)]
pub fn analyse_dose_in_worker(request: JsValue) -> Result<JsValue, JsError> {
    analyse_for_worker(request, analyse_dose, constants_of)
}

/// Whether `text` is an inhibitor series: a header naming an [I] column
/// and a response column, and no [S] column.
#[wasm_bindgen(js_name = isDoseTable)]
pub fn is_dose_table(text: &str) -> bool {
    turnover_core::dose::is_dose_table(text)
}

impl DoseBench {
    fn plot(&self) -> Result<&PlotData, JsError> {
        let kept = self.last.as_ref().ok_or_else(|| JsError::new("there is no dose-response analysis to draw"))?;
        kept.plots.first().ok_or_else(|| JsError::new("this analysis has no plot"))
    }
}

#[wasm_bindgen]
impl DoseBench {
    /// An empty bench.
    #[wasm_bindgen(constructor)]
    pub fn new() -> DoseBench {
        DoseBench::default()
    }

    /// Analyses an inhibitor series. `request` has the fields of
    /// `DoseRequest` (`text`, `model`, `enzyme`, `fixed_top`,
    /// `fixed_bottom`, `excluded_lines`, `interval_method`, `bootstrap`,
    /// `cheng_prusoff`). Throws an `Error` with a message for the scientist
    /// when no fit can be made; the previous analysis is then forgotten.
    pub fn analyse(&mut self, request: JsValue) -> Result<JsValue, JsError> {
        analyse_keeping(&mut self.last, request, analyse_dose, constants_of)
    }

    /// Draws the analysis' plot (dose-response or Morrison) on canvas
    /// `canvas_id`; returns where each point landed, as `{row, x, y}` in
    /// canvas pixels.
    pub fn draw(&self, canvas_id: &str) -> Result<JsValue, JsError> {
        let plot = self.plot()?;
        let backend = CanvasBackend::new(canvas_id).ok_or_else(|| JsError::new(&format!("no canvas '{canvas_id}'")))?;
        let root = backend.into_drawing_area();
        let positions = draw_plot(&root, plot).map_err(|e| JsError::new(&format!("drawing failed: {e}")))?;
        root.present().map_err(|e| JsError::new(&format!("drawing failed: {e}")))?;
        to_js(&positions.points)
    }

    /// The fitted constants, one line each, by the core's formatting
    /// rule: text for the `constants` figure option.
    #[wasm_bindgen(js_name = constantsText)]
    pub fn constants_text(&self) -> Result<String, JsError> {
        let kept = self.last.as_ref().ok_or_else(|| JsError::new("there is no dose-response analysis"))?;
        Ok(kept.constants.clone())
    }

    /// Draws the plot and returns `{points, area}` as
    /// `Workbench.drawMapped` does.
    #[wasm_bindgen(js_name = drawMapped)]
    pub fn draw_mapped(&self, canvas_id: &str) -> Result<JsValue, JsError> {
        to_js(&crate::figures::draw_on_canvas(canvas_id, self.plot()?)?)
    }

    /// The plot as an SVG figure; `options_json` as for
    /// `Workbench.figureSvg`.
    #[wasm_bindgen(js_name = figureSvg)]
    pub fn figure_svg(&self, options_json: &str) -> Result<String, JsError> {
        crate::figures::figure(self.plot()?, options_json)
    }

    /// The plot as a standalone SVG document, `width` × `height` pixels.
    pub fn svg(&self, width: u32, height: u32) -> Result<String, JsError> {
        plot_svg(self.plot()?, width, height).map_err(|e| JsError::new(&format!("drawing failed: {e}")))
    }
}

adopts_worker_analyses!(DoseBench);
