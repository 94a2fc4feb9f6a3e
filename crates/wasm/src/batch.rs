//! The page's window onto batch fitting: many curves in one table. The
//! table is read and cut into curves once (`BatchBench::new`); the page
//! then asks for the fits a few curves at a time (`fitJson(start, end)`),
//! so that no single call holds the page for long and the page can show
//! progress and stop. A curve's small plot is made on request
//! (`plotJson`), only for the curves shown. Every number comes from the
//! core's `batch` module, the same code the command line's `fit
//! --group-by` runs.

use serde::Serialize;
use turnover_core::batch::{curve_plot, fit_curve, prepare_batch, BatchRequest, CurveSplit};
use turnover_core::plate::PlateQuality;
use turnover_core::table::InputProblem;
use wasm_bindgen::prelude::*;

/// A batch table read and cut into curves, waiting to be fitted.
#[wasm_bindgen]
pub struct BatchBench {
    request: BatchRequest,
    split: CurveSplit,
    plates: Vec<PlateQuality>,
}

#[derive(Serialize)]
struct Outline<'a> {
    group_by: &'a str,
    curves: Vec<&'a str>,
    plates: &'a [PlateQuality],
    problems: &'a [InputProblem],
    caution: &'static str,
}

fn json<T: Serialize>(value: &T) -> Result<String, JsError> {
    serde_json::to_string(value).map_err(|e| JsError::new(&format!("internal error while returning a result: {e}")))
}

#[wasm_bindgen]
impl BatchBench {
    /// Reads the request (JSON with the fields of the core's
    /// `BatchRequest`: `text`, `group_by`, `model`, `fixed_top`,
    /// `fixed_bottom`, `enzyme`, `weighting`, `normalise`, ...), normalises
    /// plates when asked and cuts the table into curves. An unusable table
    /// is an exception with the sentence for the scientist.
    #[wasm_bindgen(constructor)]
    pub fn new(request_json: &str) -> Result<BatchBench, JsError> {
        let request: BatchRequest = serde_json::from_str(request_json)
            .map_err(|e| JsError::new(&format!("the page sent a request Turnover cannot read: {e}")))?;
        let (split, plates) = prepare_batch(&request).map_err(|e| JsError::new(&e.message))?;
        Ok(BatchBench { request, split, plates })
    }

    /// The number of curves.
    pub fn count(&self) -> usize {
        self.split.curves.len()
    }

    /// `{group_by, curves: [names], plates, problems, caution}` as JSON:
    /// what is known before any fit (plates' controls and Z′, rows that
    /// belong to no curve).
    #[wasm_bindgen(js_name = outlineJson)]
    pub fn outline_json(&self) -> Result<String, JsError> {
        json(&Outline {
            group_by: &self.split.group_by,
            curves: self.split.curves.iter().map(|c| c.name.as_str()).collect(),
            plates: &self.plates,
            problems: &self.split.problems,
            caution: turnover_core::rates::CAUTION,
        })
    }

    /// The fits of curves `start` to `end - 1` (clamped to the curves
    /// there are), as a JSON array of the core's `CurveResult`.
    #[wasm_bindgen(js_name = fitJson)]
    pub fn fit_json(&self, start: usize, end: usize) -> Result<String, JsError> {
        let end = end.min(self.split.curves.len());
        let start = start.min(end);
        let results: Vec<_> = self.split.curves[start..end].iter().map(|c| fit_curve(&self.request, c)).collect();
        json(&results)
    }

    /// The direct plot (JSON of a `PlotData`) of curve `index`, or `null`
    /// when it has no fit; draw it with `drawPlotJson`.
    #[wasm_bindgen(js_name = plotJson)]
    pub fn plot_json(&self, index: usize) -> Result<String, JsError> {
        let plot = self.split.curves.get(index).and_then(|c| curve_plot(&self.request, c));
        json(&plot)
    }
}
