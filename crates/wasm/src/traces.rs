//! The page's window onto the time-course analysis: [`TraceBench`] keeps
//! the last `TraceAnalysis` on the Rust side and returns plain objects.
//! Only conversion happens here; the numbers come from
//! `turnover_core::traces` and `turnover_core::progress`.

use crate::to_js;
use turnover_core::progress::fit_progress;
use turnover_core::traces::{analyse_traces, path_from_well, TraceAnalysis, TraceRequest, PRESETS};
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

    /// Analyses time courses. `request` has the fields of `TraceRequest`
    /// (`traces`, `layout`, `epsilon`, `path_cm`, `standard`, `direction`,
    /// `linear_limit`, `max_conversion`, `windows`, `excluded`). Throws an
    /// `Error` with a message for the scientist when nothing can be read.
    pub fn analyse(&mut self, request: JsValue) -> Result<JsValue, JsError> {
        let request: TraceRequest = serde_wasm_bindgen::from_value(request)
            .map_err(|e| JsError::new(&format!("the page sent a request Turnover cannot read: {e}")))?;
        match analyse_traces(&request) {
            Ok(analysis) => {
                let value = to_js(&analysis)?;
                self.last = Some(analysis);
                Ok(value)
            }
            Err(error) => {
                self.last = None;
                Err(JsError::new(&error.message))
            }
        }
    }

    /// The integrated Michaelis-Menten fit to the last analysis's samples.
    #[wasm_bindgen(js_name = fitProgress)]
    pub fn fit_progress(&self) -> Result<JsValue, JsError> {
        let analysis = self.last.as_ref().ok_or_else(|| JsError::new("analyse the traces first"))?;
        let fit = fit_progress(analysis).map_err(|e| JsError::new(&e.message))?;
        to_js(&fit)
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
