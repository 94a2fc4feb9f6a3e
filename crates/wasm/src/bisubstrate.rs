//! The page's window onto the two-substrate analysis: one export taking the
//! request as JSON text and returning the analysis as JSON text. The plots
//! in the result are plain `PlotData`, drawn by `drawPlotJson` like any
//! other.

use crate::sets::json_call;
use turnover_core::bisubstrate::{analyse_bisubstrate, BisubstrateRequest};
use wasm_bindgen::prelude::*;

/// Two-substrate steady-state kinetics. `requestJson` is a JSON object with
/// the fields of `BisubstrateRequest`, every one optional except `text`:
/// `text` (the table: long, with columns [A], [B] and v or replicate rate
/// columns, or matrix, [A] then one column per [B] with the concentration
/// in the heading), `models` (names among `"sequential"`, `"ordered"`,
/// `"ping-pong"`; empty or absent: all three), `weighting` (`"uniform"`,
/// `"relative"`, `"poisson"`), `interval_method` (`"asymptotic"`,
/// `"profile"`, `"bootstrap"`), `bootstrap` (as for the rate analysis),
/// `enzyme` (number, [E]t for kcat) with `enzyme_unit` (such as `"nM"`),
/// `substrate_a_unit`, `substrate_b_unit`, `rate_unit` (override the
/// header), `excluded_lines` (`[line]`), `excluded_cells` (`[[line,
/// column]]`). Unknown fields are ignored.
///
/// Returns the `BisubstrateAnalysis` as JSON: `layout` (`"long"` or
/// `"matrix"`); `fits` (one fit record per law, as every analysis has:
/// `model`, `equation`, `parameters` [`{name, value, std_error, ci_low,
/// ci_high, unit, derived, ci_method, flag, bias, value_bias_corrected}`
/// (the last two `null` where not computed): `Vmax`, `KmA`, `KmB`, `KiA`
/// as the law has them, then a derived `kcat` in s⁻¹ when `enzyme` and the
/// rate unit are known], `rss`, `aicc`, `converged`, `warnings`, ...);
/// `comparison` (`models` ranked by AICc with Akaike weights, `f_tests`
/// of ordered and ping-pong each inside sequential, `preferred` (a name or
/// `null`), `candidates`, `verdict`, which begins "undecided between" when
/// the data do not decide); `shown` (the law the plots draw); `a_levels`,
/// `b_levels`; `replicates` (per [B]: `b`, `by_a` with count, mean, sd,
/// sem); `points` (`row`, `line`, `column`, `a`, `b`, `v`, `excluded`,
/// `fitted`); `problems` (`line`, `column`, `message`); `notes`;
/// `warnings` (design: too few levels, ranges that miss a constant);
/// `units` (`substrate_a`, `substrate_b`, `rate`, `enzyme`);
/// `error_structure`; `plots` (four `PlotData`: `two-substrate-direct`,
/// `two-substrate-double-reciprocal`, `two-substrate-slope-replot`,
/// `two-substrate-intercept-replot`); `caution`.
#[wasm_bindgen(js_name = bisubstrate)]
pub fn bisubstrate_json(request_json: &str) -> Result<String, JsError> {
    Ok(json_call(request_json, |r: &BisubstrateRequest| analyse_bisubstrate(r))?.0)
}
