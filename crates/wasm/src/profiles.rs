//! The page's window onto the pH-rate profile and the temperature
//! analysis. Each export takes the request as a JSON string and returns the
//! result as a JSON string (through [`json_call`]); every plot in a result's
//! `plots` is a plain `PlotData`, drawn by `drawPlotJson` or exported by
//! `plotFigureSvg` like any other.

use crate::sets::json_call;
use turnover_core::ph::{analyse_ph, PhRequest};
use turnover_core::temperature::{analyse_temperature, TemperatureRequest};
use wasm_bindgen::prelude::*;

/// A rate or rate constant against pH. `requestJson` is a JSON object with
/// the fields of `PhRequest`, every one optional but `text`:
///
/// - `text`: the table, a `pH` column and a value column (`kcat`,
///   `kcat/Km`, `k`, `v`, ...; the unit in its heading), optionally `sd`;
/// - `column`: the value column's heading when there are several, or null;
/// - `weighting`: `"relative"` (default), `"uniform"`, `"poisson"`, `"sd"`;
/// - `interval_method`: `"profile"` (default), `"asymptotic"`,
///   `"bootstrap"`;
/// - `bootstrap`: `{resamples, seed, scheme, interval}` (with bootstrap);
/// - `excluded_lines`: input lines to leave out, such as `[4, 9]`.
///
/// Returns the `PhAnalysis` as JSON: `value_name`, `value_unit`, `points`
/// (`row`, `line`, `ph`, `y`, `excluded`, `fitted`), `fits` (the
/// `rising-limb`, `falling-limb` and `bell` fit records, parameters `Y`,
/// `pKa1` and/or `pKa2`), `comparison` (`models`, `f_tests`, `preferred`,
/// `candidates`, `verdict`), `drawn` (the model in the plots), `problems`,
/// `notes`, `warnings`, `plots` (`ph-log`, `ph-direct`), `caution`.
#[wasm_bindgen(js_name = phProfile)]
pub fn ph_profile_json(request_json: &str) -> Result<String, JsError> {
    Ok(json_call(request_json, |r: &PhRequest| analyse_ph(r))?.0)
}

/// A rate or rate constant against temperature. `requestJson` is a JSON
/// object with the fields of `TemperatureRequest`, every one optional but
/// `text`:
///
/// - `text`: the table, a temperature column with its unit (`T (°C)`,
///   `temperature (K)`; without a unit the table is refused) and a value
///   column (`k (s-1)`, `kcat (min-1)`, ...), optionally `sd`;
/// - `column`: the value column's heading when there are several, or null;
/// - `at`: the temperature for ΔG‡ and k with its unit, such as `"25 °C"`
///   or `"310 K"` (default 298.15 K);
/// - `weighting`, `interval_method`, `bootstrap`, `excluded_lines`: as for
///   `phProfile`.
///
/// Returns the `TemperatureAnalysis` as JSON: `value_name`, `value_unit`,
/// `fitted_unit` (`"s-1"` when converted), `temperature_unit`,
/// `reference_temperature` and `at` (K), `points` (`row`, `line`,
/// `temperature`, `kelvin`, `value`, `k`, `excluded`, `fitted`),
/// `arrhenius` (fit record: `ln k(Tref)`, `Ea`, derived `ln A`, `A`,
/// `k at ...`), `eyring` (fit record or null: `ΔH‡`, `ΔG‡(Tref)`, derived
/// `ΔS‡`, `ΔG‡ at ...`), `curvature` (`f_test`, `quadratic`,
/// `quadratic_se`, `curved`, `text`, or null), `problems`, `notes`,
/// `warnings`, `plots` (`temperature-direct`, `arrhenius`, and `eyring`
/// with the Eyring fit), `caution`.
#[wasm_bindgen(js_name = temperatureProfile)]
pub fn temperature_profile_json(request_json: &str) -> Result<String, JsError> {
    Ok(json_call(request_json, |r: &TemperatureRequest| analyse_temperature(r))?.0)
}
