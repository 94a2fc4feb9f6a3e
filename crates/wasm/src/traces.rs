//! The page's window onto the time-course analysis: [`TraceBench`] keeps
//! the last `TraceAnalysis` on the Rust side and returns JSON text.
//! Only conversion happens here; the numbers come from
//! `turnover_core::traces` and `turnover_core::progress`.

use crate::to_js;
use turnover_core::progress::fit_progress_with;
use turnover_core::traces::{analyse_traces_with, path_from_well, TraceAnalysis, TraceRequest, PRESETS};
use wasm_bindgen::prelude::*;

/// Holds the most recent trace analysis.
#[wasm_bindgen]
#[derive(Default)]
pub struct TraceBench {
    last: Option<TraceAnalysis>,
}

#[wasm_bindgen]
impl TraceBench {
    /// An empty bench.
    #[wasm_bindgen(constructor)]
    pub fn new() -> TraceBench {
        TraceBench::default()
    }

    /// Analyses time courses. `request` is the JSON text of a
    /// `TraceRequest` (`traces`, `layout`, `epsilon`, `path_cm`, `standard`,
    /// `direction`, `linear_limit`, `max_conversion`, `windows`,
    /// `excluded`); the result is the JSON text of the `TraceAnalysis`.
    /// JSON text both ways because a plate's result has some hundred
    /// thousand numbers: one string and `JSON.parse` are far quicker than
    /// building the objects across the boundary, and a string is what a Web
    /// Worker posts back cheaply. `progress`, when given, is called with
    /// (traces done, traces in all). Throws an `Error` with a message for
    /// the scientist when nothing can be read.
    #[wasm_bindgen(js_name = analyseJson)]
    pub fn analyse_json(&mut self, request: &str, progress: Option<js_sys::Function>) -> Result<String, JsError> {
        let request: TraceRequest = serde_json::from_str(request)
            .map_err(|e| JsError::new(&format!("the page sent a request Turnover cannot read: {e}")))?;
        let mut report = |done: usize, total: usize| {
            if let Some(f) = &progress {
                // A failing progress display must not stop the analysis.
                let _ = f.call2(&JsValue::NULL, &JsValue::from(done as f64), &JsValue::from(total as f64));
            }
        };
        match analyse_traces_with(&request, &mut report) {
            Ok(analysis) => {
                let text = serde_json::to_string(&analysis)
                    .map_err(|e| JsError::new(&format!("internal error while returning a result: {e}")))?;
                self.last = Some(analysis);
                Ok(text)
            }
            Err(error) => {
                self.last = None;
                Err(JsError::new(&error.message))
            }
        }
    }

    /// The integrated Michaelis-Menten fit to the last analysis's samples,
    /// as the JSON text of a `ProgressFit`. `progress`, when given, is
    /// called with the iteration count at each outer iteration.
    #[wasm_bindgen(js_name = fitProgressJson)]
    pub fn fit_progress_json(&self, progress: Option<js_sys::Function>) -> Result<String, JsError> {
        let analysis = self.last.as_ref().ok_or_else(|| JsError::new("analyse the traces first"))?;
        let mut report = |iteration: usize| {
            if let Some(f) = &progress {
                let _ = f.call1(&JsValue::NULL, &JsValue::from(iteration as f64));
            }
        };
        let fit = fit_progress_with(analysis, &mut report).map_err(|e| JsError::new(&e.message))?;
        serde_json::to_string(&fit).map_err(|e| JsError::new(&format!("internal error while returning a result: {e}")))
    }

    /// Time-dependent inhibition from the last analysis's traces with [I]
    /// > 0, as the JSON text of an `InactivationAnalysis`. `substrate` and
    /// `km` (same unit, both or neither; `undefined` for neither) apply the
    /// substrate-competition correction KI = KI_app/(1 + [S]/Km). The
    /// result carries the global fit as `global`, as `inactivation` does.
    #[wasm_bindgen(js_name = inactivationJson)]
    pub fn inactivation_json(&self, substrate: Option<f64>, km: Option<f64>) -> Result<String, JsError> {
        let analysis = self.last.as_ref().ok_or_else(|| JsError::new("analyse the traces first"))?;
        let result = turnover_core::inactivation::inactivation_from_traces(analysis, substrate, km)
            .map_err(|e| JsError::new(&e.message))?;
        serde_json::to_string(&result).map_err(|e| JsError::new(&format!("internal error while returning a result: {e}")))
    }
}

/// The chromophore presets with their sources.
#[wasm_bindgen(js_name = tracePresets)]
pub fn trace_presets() -> Result<JsValue, JsError> {
    to_js(&PRESETS)
}

/// Path length in cm from a well's liquid volume (µL) and diameter (mm).
#[wasm_bindgen(js_name = pathFromWell)]
pub fn path_from_well_js(volume_ul: f64, diameter_mm: f64) -> Result<f64, JsError> {
    path_from_well(volume_ul, diameter_mm).map_err(|e| JsError::new(&e.message))
}
