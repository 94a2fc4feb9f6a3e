//! `turnover-wasm`: the page's window onto `turnover-core`.
//!
//! This crate is thin on purpose. [`Workbench::analyse`] reads a request
//! object from JavaScript, calls `turnover_core::rates::analyse_rates` and
//! returns the result as a plain object; [`Workbench::draw`] draws one of
//! the result's plots onto a canvas with plotters and returns where each
//! point landed, so the page can turn a click into a point. Only this crate
//! knows about `JsValue`; the numbers all come from the core.
//!
//! The last analysis stays on the Rust side behind the `Workbench` handle,
//! so drawing does not send the data back and forth.

#![deny(missing_docs)]

mod batch;
mod bisubstrate;
#[cfg(feature = "design")]
mod design;
mod dose;
mod draw;
mod figures;
mod format;
mod inhibition;
mod kept;
mod profiles;
mod sets;
mod sheets;
mod traces;

use plotters::prelude::*;
use plotters_canvas::CanvasBackend;
use serde::Serialize;
use turnover_core::plots::PlotKind;
use turnover_core::rates::{analyse_rates, compare_rate_models, RateComparison, RateRequest};
use wasm_bindgen::prelude::*;

pub use batch::BatchBench;
pub use bisubstrate::bisubstrate_json;
pub use dose::{analyse_dose_in_worker, is_dose_table, DoseBench};
pub use draw::{draw_plot, Drawn, FigureOptions, PlotArea, PointPosition};
pub use figures::TraceFigures;
pub use inhibition::{analyse_inhibition_in_worker, is_inhibition_table, InhibitionBench};
use kept::Kept;
pub use profiles::{ph_profile_json, temperature_profile_json};
pub use sets::{compare_sets_json, inactivation_json, SetsBench};
pub use sheets::{sheet_names_js, sheet_read_js, sheet_text_js};
pub use traces::TraceBench;

/// Holds the most recent analysis for drawing.
#[wasm_bindgen]
#[derive(Default)]
pub struct Workbench {
    last: Option<Kept>,
}

/// For the page's Web Worker: analyses a rate table like
/// [`Workbench::analyse`] and returns `{result, kept}`, two JSON texts: the
/// result as `analyse` returns it, and what [`Workbench::adopt`] takes on the
/// page to draw it. Throws the core's message when no fit can be made.
#[wasm_bindgen(js_name = analyseRatesInWorker)]
pub fn analyse_rates_in_worker(request: JsValue) -> Result<JsValue, JsError> {
    kept::analyse_for_worker(request, analyse_rates, rate_constants)
}

fn rate_constants(analysis: &turnover_core::rates::RateAnalysis) -> String {
    turnover_core::format::constants_text(&analysis.fit.parameters)
}

/// Reads a request object sent by the page.
pub(crate) fn read_request<R: serde::de::DeserializeOwned>(request: JsValue) -> Result<R, JsError> {
    serde_wasm_bindgen::from_value(request)
        .map_err(|e| JsError::new(&format!("the page sent a request Turnover cannot read: {e}")))
}

pub(crate) fn to_js<T: Serialize>(value: &T) -> Result<JsValue, JsError> {
    value
        .serialize(&serde_wasm_bindgen::Serializer::json_compatible())
        .map_err(|e| JsError::new(&format!("internal error while returning a result: {e}")))
}

#[wasm_bindgen]
impl Workbench {
    /// A workbench with no analysis yet.
    #[wasm_bindgen(constructor)]
    pub fn new() -> Workbench {
        Workbench::default()
    }

    /// Analyses a rate table. `request` is an object with the fields of
    /// `RateRequest` (`text`, `model`, `substrate_unit`, `rate_unit`,
    /// `enzyme`, `enzyme_unit`, `excluded_lines`, `protein`: `{concentration,
    /// unit, molar_mass, molar_mass_unit}` or null, the concentration null
    /// for a molar mass alone). Throws an `Error` whose
    /// message is written for the scientist when no fit can be made; the
    /// previous analysis is then forgotten so no stale plot is drawn. The
    /// returned plots carry their kind, titles and notes only: `draw` draws
    /// them from the analysis kept here. Each entry of `fit.parameters` has
    /// `bias` and `value_bias_corrected` (the small-sample bias and the
    /// value with it removed, the core's `bias` module; `null` where not
    /// computed).
    pub fn analyse(&mut self, request: JsValue) -> Result<JsValue, JsError> {
        kept::analyse_keeping(&mut self.last, request, analyse_rates, rate_constants)
    }

    /// The plot named `kind` of the last analysis.
    fn plot(&self, kind: &str) -> Result<&turnover_core::plots::PlotData, JsError> {
        let kept = self.last.as_ref().ok_or_else(|| JsError::new("there is no analysis to draw"))?;
        let kind = PlotKind::from_name(kind).ok_or_else(|| JsError::new(&format!("unknown plot '{kind}'")))?;
        kept
            .plots
            .iter()
            .find(|p| p.kind == kind)
            .ok_or_else(|| JsError::new("that plot is not part of this analysis"))
    }

    /// Draws plot `kind` (`direct`, `residuals`, `lineweaver-burk`,
    /// `eadie-hofstee`, `hanes-woolf`) of the last analysis on the canvas
    /// with id `canvas_id`, and returns an `Int32Array` of `row, x, y` per
    /// data point: where each was drawn, in canvas pixels.
    pub fn draw(&self, canvas_id: &str, kind: &str) -> Result<JsValue, JsError> {
        let plot = self.plot(kind)?;
        let backend = CanvasBackend::new(canvas_id).ok_or_else(|| JsError::new(&format!("no canvas '{canvas_id}'")))?;
        let root = backend.into_drawing_area();
        let positions = draw_plot(&root, plot).map_err(|e| JsError::new(&format!("drawing failed: {e}")))?;
        root.present().map_err(|e| JsError::new(&format!("drawing failed: {e}")))?;
        // Packed as row, x, y per point: one typed array instead of an
        // object per point (a 100,000-row table made 800,000 of them).
        let packed: Vec<i32> = positions.points.iter().flat_map(|p| [i32::try_from(p.row).unwrap_or(i32::MAX), p.x, p.y]).collect();
        Ok(js_sys::Int32Array::from(packed.as_slice()).into())
    }

    /// Fits the rate laws `mm`, `substrate-inhibition` and `hill` to the
    /// request's table and returns `{comparison, fits}`: the ranking, F
    /// tests against Michaelis-Menten and the verdict. Does not change the
    /// analysis kept for drawing.
    pub fn compare_rate_laws(&self, request: JsValue) -> Result<JsValue, JsError> {
        let request: RateRequest = read_request(request)?;
        let models: Vec<String> = ["mm", "substrate-inhibition", "hill"].iter().map(|m| m.to_string()).collect();
        let result = compare_rate_models(&request, &models).map_err(|e| JsError::new(&e.message))?;
        to_js(&serde_json_like(&result))
    }

    /// The fitted constants of the last analysis, one line each
    /// (`Km = 0.0641 ± 0.0083 mM`) by the core's formatting rule: text for
    /// the `constants` figure option.
    #[wasm_bindgen(js_name = constantsText)]
    pub fn constants_text(&self) -> Result<String, JsError> {
        let kept = self.last.as_ref().ok_or_else(|| JsError::new("there is no analysis"))?;
        Ok(kept.constants.clone())
    }

    /// Draws plot `kind` like `draw`, and returns `{points: [{row, x, y}],
    /// area: {left, top, width, height, x_min, x_max, y_min, y_max, log_x}}`:
    /// the points and the plotting area's mapping, in canvas pixels.
    #[wasm_bindgen(js_name = drawMapped)]
    pub fn draw_mapped(&self, canvas_id: &str, kind: &str) -> Result<JsValue, JsError> {
        to_js(&figures::draw_on_canvas(canvas_id, self.plot(kind)?)?)
    }

    /// Plot `kind` of the last analysis as an SVG figure. `options_json`
    /// is the JSON text of `{width_mm, height_mm, font_pt, title, constants,
    /// error_bars}` (every field optional: 85 × 65 mm, 8 pt, no title, no
    /// constants, `"none"`; `error_bars` is `"none"`, `"sd"` or `"sem"`).
    #[wasm_bindgen(js_name = figureSvg)]
    pub fn figure_svg(&self, kind: &str, options_json: &str) -> Result<String, JsError> {
        figures::figure(self.plot(kind)?, options_json)
    }

    /// Several plots of the last analysis (`kinds_json`, a JSON array of
    /// names such as `["direct", "residuals"]`) as one SVG figure, side by
    /// side (three to a row), lettered A, B, C.
    #[wasm_bindgen(js_name = figurePanelsSvg)]
    pub fn figure_panels_svg(&self, kinds_json: &str, options_json: &str) -> Result<String, JsError> {
        let kinds = figures::read_kinds(kinds_json)?;
        let plots = kinds.iter().map(|k| self.plot(k)).collect::<Result<Vec<_>, _>>()?;
        figures::panels(&plots, options_json)
    }

    /// The plot `kind` of the last analysis as a standalone SVG document,
    /// `width` × `height` pixels, for figures.
    pub fn svg(&self, kind: &str, width: u32, height: u32) -> Result<String, JsError> {
        let plot = self.plot(kind)?;
        draw::plot_svg(plot, width, height).map_err(|e| JsError::new(&format!("drawing failed: {e}")))
    }
}

/// The part of a rate comparison the page shows.
#[derive(Serialize)]
struct ComparisonView<'a> {
    comparison: &'a turnover_core::compare::Comparison,
    fits: &'a [turnover_core::fit::FitSummary],
}

fn serde_json_like(result: &RateComparison) -> ComparisonView<'_> {
    ComparisonView { comparison: &result.comparison, fits: &result.fits }
}

/// Installed when the module starts (on the page and in its worker): a
/// panic is reported to the global function `turnoverCorePanicked(message)`
/// when the page has defined one, before the module aborts. The page then
/// keeps the person's document and starts a fresh module.
#[wasm_bindgen(start)]
fn start() {
    std::panic::set_hook(Box::new(|info| {
        let message = info.to_string();
        let global = js_sys::global();
        if let Ok(report) = js_sys::Reflect::get(&global, &JsValue::from_str("turnoverCorePanicked")) {
            if let Some(report) = report.dyn_ref::<js_sys::Function>() {
                let _ = report.call1(&JsValue::NULL, &JsValue::from_str(&message));
            }
        }
    }));
}

/// Panics on purpose: for the browser test of the page's recovery only,
/// compiled with the `test-hooks` feature.
#[cfg(feature = "test-hooks")]
#[wasm_bindgen(js_name = panicForTest)]
pub fn panic_for_test() {
    panic!("a deliberate panic for the page's recovery test");
}

/// The version of Turnover, for the page footer and saved files.
#[wasm_bindgen]
pub fn version() -> String {
    env!("CARGO_PKG_VERSION").to_string()
}

/// Decodes a file's bytes to text with the core's one decoding rule
/// (named `decodeFileText` in JavaScript: wasm-bindgen's glue has a
/// function of its own called `decodeText`, which an export of that name
/// would be shadowed by)
/// (`turnover_core::decode::decode_text`): UTF-8 with or without a
/// byte-order mark, UTF-16 with a mark, else Windows-1252; line endings
/// become `\n`.
#[wasm_bindgen(js_name = decodeFileText)]
pub fn decode_text(bytes: &[u8]) -> String {
    turnover_core::decode::decode_text(bytes).text
}

/// What [`decode_text`] would say about the same bytes: the encoding used
/// when it was not plain UTF-8, characters that could not be decoded; `None`
/// (JavaScript `undefined`) for plain UTF-8. The page shows it so that no
/// file is read differently from how it was written without a word.
#[wasm_bindgen(js_name = decodeFileNote)]
pub fn decode_text_note(bytes: &[u8]) -> Option<String> {
    turnover_core::decode::decode_text(bytes).note
}

/// Reads a number typed into one of the page's fields with the core's rule
/// for a lone number (`turnover_core::table::read_lone_number`): `1,5` is
/// 1.5, `1,000` is refused as ambiguous. Throws an `Error` whose message
/// says what is wrong and what to type instead.
#[wasm_bindgen(js_name = readNumber)]
pub fn read_number(text: &str) -> Result<f64, JsError> {
    turnover_core::table::read_lone_number(text).map_err(|m| JsError::new(&m))
}

/// A quantity typed into a field, such as `25 nM`: `{value, unit}` with
/// `unit` null when none was typed, by the same rule as the command line's
/// options (`turnover_core::table::read_quantity`). Throws an `Error` with
/// the reason when it cannot be read.
#[wasm_bindgen(js_name = readQuantity)]
pub fn read_quantity(text: &str) -> Result<JsValue, JsError> {
    #[derive(Serialize)]
    struct Quantity {
        value: f64,
        unit: Option<String>,
    }
    let (value, unit) = turnover_core::table::read_quantity(text).map_err(|m| JsError::new(&m))?;
    to_js(&Quantity { value, unit })
}

kept::adopts_worker_analyses!(Workbench);
