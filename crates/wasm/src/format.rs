//! The core's number formatting rule for the page
//! (`turnover_core::format`): every estimate, standard error and interval
//! the page prints goes through these.

use crate::to_js;
use turnover_core::format::{format_estimate, format_interval};
use wasm_bindgen::prelude::*;

/// An estimate and its standard error (`null`, `undefined` or `NaN` when
/// there is none), and optionally its interval (`low`, `high`; pass both
/// or neither). Returns `{value, se, low, high, power, text}`: strings by
/// the rule (SE to two significant figures, the rest to its decimal place,
/// one shared power of ten outside 0.001 to 100 000), `null` for parts not
/// given, `power` the shared power of ten or `null`, and `text` the whole
/// line such as `212.7 ± 6.9 (198.1 to 227.4)`.
#[wasm_bindgen(js_name = formatEstimate)]
pub fn format_estimate_js(value: Option<f64>, se: Option<f64>, low: Option<f64>, high: Option<f64>) -> Result<JsValue, JsError> {
    let interval = (low.is_some() || high.is_some()).then_some((low, high));
    to_js(&format_estimate(value, se, interval))
}

/// An interval alone, rounded to the decimal place of `se` (or of its
/// half-width when `se` is missing). Returns the same shape as
/// `formatEstimate`, with `value` empty and `text` such as `198.1 to 227.4`.
#[wasm_bindgen(js_name = formatInterval)]
pub fn format_interval_js(low: Option<f64>, high: Option<f64>, se: Option<f64>) -> Result<JsValue, JsError> {
    to_js(&format_interval(low, high, se))
}
