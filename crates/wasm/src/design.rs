//! The page's window onto experiment planning: one JSON-string export, so
//! the page can keep the request in its document as it is and the result
//! as text.

use crate::sets::json_call;
use turnover_core::design::{design, DesignRequest};
use wasm_bindgen::prelude::*;

/// Plans an experiment. `requestJson` is a JSON object with the fields of
/// `DesignRequest`, every one optional except `guesses`:
///
/// - `model`: `"mm"` (default), `"substrate-inhibition"`, `"hill"`,
///   `"competitive"`, `"uncompetitive"`, `"mixed"`, `"noncompetitive"`,
///   `"ic50"`;
/// - `guesses`: `[{name, value, low, high}]`, one per constant of the model
///   (`low`/`high` optional, both or neither);
/// - `noise`: `{kind: "constant" | "proportional", level}` (default
///   proportional 0.05; constant in rate units);
/// - `points` (8), `inhibitor_points` (4, zero included), `replicates` (2);
/// - `max_concentration`, `max_inhibitor`, `wells`, `min_rate`: limits or
///   null;
/// - `target`: `{parameter, relative, measure: "se" | "ci"}` or null
///   (`relative` a fraction, 0.1 for 10%);
/// - `proposed`: `{concentrations: [...], inhibitor_concentrations: [...]}`
///   or null: the person's design, evaluated beside the recommended one;
/// - `seed` (1), `simulations` (200; at most 20,000; 0 skips them);
/// - `substrate_unit`, `inhibitor_unit`, `rate_unit`: labels;
/// - `bench`: `{substrate_stock, inhibitor_stock, well_volume (200 µL),
///   min_volume (0.5 µL), other_volume (0 µL), extra (0.2)}` or null.
///
/// Returns the `DesignResult` as JSON: `model`, `equation`, `varied`
/// (`"substrate"` or `"inhibitor"`), `units`, `replicates`,
/// `concentrations`, `inhibitor_concentrations`, `wells`, `predicted` (per
/// constant `name`, `value`, `std_error`, `relative_se`, `ci_width`),
/// `simulated` (`n_simulations`, `failed`, `failed_fraction`, per constant
/// `std_error`, `median_reported_se`, `ci_width`, `relative_bias`,
/// `coverage`; `target_probability`), `over_range`, `mechanism` (inhibition:
/// `correct`, `wrong`, `undecided`, `failed`, `named`), `rules` (`rule`,
/// `source`), `proposed` (the same evaluation for the person's design),
/// `target`, `n_simulations`, `seed`, `plots` (one `design-precision` plot),
/// `plate_map` (`rows`, `columns`, `wells`, `text`), `pipetting` (`rows`,
/// `intermediates`, `rules`, `csv`, `intermediates_csv`), `warnings`,
/// `notes`, `caution`.
///
/// Cost: the simulations dominate; each design is simulated at the
/// guesses and, with ranges, again over them. Measured with 200
/// simulations in Node 20 on this module (release build, feature
/// `design`, a shared 2-core machine): an mm plan with a Km range and a
/// proposed design (four runs of 200) 59 ms; a competitive plan (64
/// wells, every mechanism fitted and compared in each experiment) 0.95 s
/// at the guesses alone and 3.2 s with a Kic range and a proposed design
/// (the native CLI takes 0.41 s and 1.7 s for the same). So 200 is a fair
/// default for the [S]–v models, while an inhibition plan belongs in a
/// Web Worker or behind a button with 100 simulations. The numbers agree
/// with the CLI's to about 1e-8 relative, not bit for bit: the WebAssembly
/// build's `ln`, `cos` and `powf` differ from the host's in the last bits.
#[wasm_bindgen(js_name = designExperiment)]
pub fn design_experiment(request_json: &str) -> Result<String, JsError> {
    Ok(json_call(request_json, |r: &DesignRequest| design(r))?.0)
}

#[cfg(test)]
mod tests {
    use crate::draw::{figure_svg, FigureOptions};
    use turnover_core::design::{design, DesignRequest, Guess};

    /// The precision sweep draws through the one drawing path: the figure
    /// parses as XML and carries its axis labels and one legend entry per
    /// constant.
    #[test]
    fn the_precision_sweep_draws() {
        let guess = |name: &str, value: f64| Guess { name: name.into(), value, low: None, high: None };
        let request = DesignRequest {
            guesses: vec![guess("Vmax", 10.0), guess("Km", 5.0)],
            simulations: 0,
            substrate_unit: Some("µM".into()),
            ..DesignRequest::default()
        };
        let result = design(&request).unwrap();
        let svg = figure_svg(&result.plots[0], &FigureOptions::default()).unwrap();
        let document = roxmltree::Document::parse(&svg).unwrap();
        let texts: Vec<String> = document.descendants().filter(|n| n.has_tag_name("text")).filter_map(|n| n.text().map(str::to_string)).collect();
        for expected in ["highest [S] (µM)", "predicted relative standard error (%)", "Vmax", "Km"] {
            assert!(texts.iter().any(|t| t.contains(expected)), "{expected} not in {texts:?}");
        }
    }
}
