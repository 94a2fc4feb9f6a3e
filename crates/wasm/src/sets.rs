//! The page's window onto the set comparison (do constants differ between
//! data sets?) and the later analyses of this branch. Each export takes the
//! request as a JSON string and returns the result as a JSON string, so the
//! page can keep both in its document as text; `SetsBench` also keeps the
//! last comparison on the Rust side for drawing, like the other benches.

use crate::draw::{draw_plot, plot_svg};
use crate::to_js;
use plotters::prelude::*;
use plotters_canvas::CanvasBackend;
use turnover_core::plots::PlotData;
use turnover_core::sets::{compare_sets, SetsAnalysis, SetsRequest};
use wasm_bindgen::prelude::*;

/// Reads a JSON request, runs `analysis` and returns its result as JSON;
/// an unreadable request or a failed analysis is an exception with the
/// message for the scientist.
pub(crate) fn json_call<R: serde::de::DeserializeOwned, A: serde::Serialize>(
    request_json: &str,
    analysis: impl FnOnce(&R) -> Result<A, turnover_core::Error>,
) -> Result<(String, A), JsError> {
    let request: R = serde_json::from_str(request_json)
        .map_err(|e| JsError::new(&format!("the page sent a request Turnover cannot read: {e}")))?;
    let result = analysis(&request).map_err(|e| JsError::new(&e.message))?;
    let text = serde_json::to_string(&result)
        .map_err(|e| JsError::new(&format!("internal error while returning a result: {e}")))?;
    Ok((text, result))
}

/// Compares data sets. `requestJson` is a JSON object with the fields of
/// `SetsRequest`: `text` (the table), `by` (set column heading, default
/// `"set"`), `model` (default `"mm"`), `reference` (set name or null),
/// `enzyme`, `fixed_top`, `fixed_bottom` (numbers or null). Returns the
/// `SetsAnalysis` as JSON: `model`, `reference`, `sets`, `models`,
/// `constants`, `chosen`, `verdict`, `problems`, `warnings`, `plots`,
/// `caution`.
#[wasm_bindgen(js_name = compareSets)]
pub fn compare_sets_json(request_json: &str) -> Result<String, JsError> {
    Ok(json_call(request_json, |r: &SetsRequest| compare_sets(r))?.0)
}

/// Time-dependent inhibition from progress curves. `requestJson` is a JSON
/// object `{traces: <TraceRequest>, substrate: number|null, km:
/// number|null}` (the `TraceRequest` fields as for `TraceBench.analyseJson`;
/// `substrate` and `km` in one unit, both or neither). Returns the
/// `InactivationAnalysis` as JSON: `time_unit`, `inhibitor_unit`, `traces`
/// (per trace `trace`, `i`, `e`, `kobs`, `kobs_se`, `v0`, `vs`, `n`,
/// `sigma`, `converged`, `used`), `saturation`, `saturation_test`
/// (`[F, df1, df2, p]` or null), `parameters` (`kinact`, `KI`, `kinact/KI`,
/// or only `kinact/KI`), `competition_factor`, `warnings`, `notes`,
/// `plots` (`inactivation-traces`, `kobs-replot`), `global` (the fit of all
/// traces at once with kinact and KI shared, or null: `saturation`,
/// `saturation_test`, `parameters`, `traces` per trace `trace`, `i`, `kobs`,
/// `v0`, `vs` (null at [I] = 0), `offset`, `n`, `rss`; `comparison` per
/// constant `name`, `global`, `global_se`, `two_step`, `two_step_se`,
/// `ratio`, `se_ratio`; `n`, `fitted`, `dof`, `rss`, `sigma`, `aicc`,
/// `converged`, `iterations`, `termination_text`, `method`, `warnings`,
/// `plot`), `caution`.
#[wasm_bindgen(js_name = inactivation)]
pub fn inactivation_json(request_json: &str) -> Result<String, JsError> {
    Ok(json_call(request_json, |r: &turnover_core::inactivation::InactivationRequest| {
        turnover_core::inactivation::analyse_inactivation(r)
    })?
    .0)
}

/// Holds the most recent set comparison for drawing.
#[wasm_bindgen]
#[derive(Default)]
pub struct SetsBench {
    last: Option<SetsAnalysis>,
}

impl SetsBench {
    fn plot(&self) -> Result<&PlotData, JsError> {
        let analysis = self.last.as_ref().ok_or_else(|| JsError::new("there is no set comparison to draw"))?;
        analysis.plots.first().ok_or_else(|| JsError::new("this comparison has no plot"))
    }
}

#[wasm_bindgen]
impl SetsBench {
    /// An empty bench.
    #[wasm_bindgen(constructor)]
    pub fn new() -> SetsBench {
        SetsBench::default()
    }

    /// As `compareSets`, keeping the result for `draw` and `svg`; on failure
    /// the previous result is forgotten.
    pub fn analyse(&mut self, request_json: &str) -> Result<String, JsError> {
        self.last = None;
        let (text, result) = json_call(request_json, |r: &SetsRequest| compare_sets(r))?;
        self.last = Some(result);
        Ok(text)
    }

    /// Draws the sets plot on canvas `canvas_id`; returns where each point
    /// landed, as `{row, x, y}` in canvas pixels.
    pub fn draw(&self, canvas_id: &str) -> Result<JsValue, JsError> {
        let plot = self.plot()?;
        let backend = CanvasBackend::new(canvas_id).ok_or_else(|| JsError::new(&format!("no canvas '{canvas_id}'")))?;
        let root = backend.into_drawing_area();
        let positions = draw_plot(&root, plot).map_err(|e| JsError::new(&format!("drawing failed: {e}")))?;
        root.present().map_err(|e| JsError::new(&format!("drawing failed: {e}")))?;
        to_js(&positions)
    }

    /// The plot as a standalone SVG document, `width` × `height` pixels.
    pub fn svg(&self, width: u32, height: u32) -> Result<String, JsError> {
        plot_svg(self.plot()?, width, height).map_err(|e| JsError::new(&format!("drawing failed: {e}")))
    }
}
