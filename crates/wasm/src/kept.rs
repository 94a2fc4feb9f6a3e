//! What a section's bench keeps of its last analysis to draw and export
//! it, the same whether the analysis ran on the page or in a Web Worker:
//! the plots, thinned for drawing ([`turnover_core::plots::thin_for_drawing`]),
//! and the shown fit's constants as text.

use crate::{read_request, to_js};
use serde::de::DeserializeOwned;
use serde::{Deserialize, Serialize};
use turnover_core::dose::DoseAnalysis;
use turnover_core::inhibition::InhibitionAnalysis;
use turnover_core::plots::PlotData;
use turnover_core::rates::RateAnalysis;
use wasm_bindgen::prelude::*;

/// The plots and constants of one analysis.
#[derive(Serialize, Deserialize)]
pub(crate) struct Kept {
    pub plots: Vec<PlotData>,
    pub constants: String,
}

/// An analysis whose plots the page draws from a [`Kept`].
pub(crate) trait WithPlots: Serialize {
    fn plots_mut(&mut self) -> &mut Vec<PlotData>;
    /// Leaves out what the page never reads (default: nothing).
    fn lighten(&mut self) {}
    /// Whether a plot of up to [`turnover_core::plots::THIN_ABOVE`] points
    /// is given to the page whole (its section reads the points of a plot,
    /// such as a left-out point's ring); otherwise only its titles, note
    /// and series labels are.
    const SMALL_PLOTS_WHOLE: bool = true;
}

impl WithPlots for RateAnalysis {
    fn plots_mut(&mut self) -> &mut Vec<PlotData> {
        &mut self.plots
    }
    /// The per-point diagnostics repeat the points' own leverage and
    /// studentised residual (a quarter of a 100,000-row result's text).
    fn lighten(&mut self) {
        self.diagnostics.points = Vec::new();
    }
    /// The rate section draws and hit-tests from the kept plots and the
    /// positions `draw` returns; it never reads a plot's points.
    const SMALL_PLOTS_WHOLE: bool = false;
}

impl WithPlots for DoseAnalysis {
    fn plots_mut(&mut self) -> &mut Vec<PlotData> {
        &mut self.plots
    }
}

impl WithPlots for InhibitionAnalysis {
    fn plots_mut(&mut self) -> &mut Vec<PlotData> {
        &mut self.plots
    }
}

impl Kept {
    /// Reads the `kept` text a worker returned.
    pub fn read(text: &str) -> Result<Kept, JsError> {
        serde_json::from_str(text).map_err(|e| JsError::new(&format!("internal error: the background analysis could not be read ({e})")))
    }

    /// Splits an analysis into what the page is given and what the bench
    /// keeps, moving the plots' data rather than copying it. The page is
    /// given the analysis without what it never reads
    /// ([`WithPlots::lighten`]); a plot of up to
    /// [`turnover_core::plots::THIN_ABOVE`] points and segments whole where
    /// the section reads plots' points ([`WithPlots::SMALL_PLOTS_WHOLE`]),
    /// otherwise only its kind, titles, note (with the thinning sentence)
    /// and series labels: the page draws it from the kept plot (a
    /// 100,000-row table's eight plots were 800,000 more objects to build).
    /// The kept plots are thinned for drawing.
    pub fn split<A: WithPlots>(mut analysis: A, constants: String) -> (A, Kept) {
        analysis.lighten();
        let limit = turnover_core::plots::THIN_ABOVE;
        let mut plots = Vec::with_capacity(analysis.plots_mut().len());
        for plot in analysis.plots_mut().iter_mut() {
            if A::SMALL_PLOTS_WHOLE && plot.points.len() <= limit && plot.segments.len() <= limit {
                plots.push(plot.clone());
                continue;
            }
            // Each series keeps its label (the legend); its points and
            // curve go to the kept plot.
            let series: Vec<(Vec<_>, Vec<_>)> =
                plot.series.iter_mut().map(|s| (std::mem::take(&mut s.points), std::mem::take(&mut s.curve))).collect();
            let (points, curve, segments) =
                (std::mem::take(&mut plot.points), std::mem::take(&mut plot.curve), std::mem::take(&mut plot.segments));
            // The rest of the plot is titles, labels and marks: copied.
            let mut drawn = plot.clone();
            drawn.points = points;
            drawn.curve = curve;
            drawn.segments = segments;
            for (kept, (points, curve)) in drawn.series.iter_mut().zip(series) {
                kept.points = points;
                kept.curve = curve;
            }
            turnover_core::plots::thin_for_drawing(&mut drawn);
            plot.note = drawn.note.clone();
            plots.push(drawn);
        }
        (analysis, Kept { plots, constants })
    }
}

/// `{result, kept}`, the two JSON texts a worker posts back.
pub(crate) fn handover<A: Serialize>(shown: &A, kept: &Kept) -> Result<JsValue, JsError> {
    let text = |json: Result<String, serde_json::Error>| -> Result<JsValue, JsError> {
        json.map(|t| JsValue::from_str(&t)).map_err(|e| JsError::new(&format!("internal error while returning a result: {e}")))
    };
    let out = js_sys::Object::new();
    let set = |name: &str, value: JsValue| js_sys::Reflect::set(&out, &name.into(), &value).map_err(|_| JsError::new("internal error: no result object"));
    set("result", text(serde_json::to_string(shown))?)?;
    set("kept", text(serde_json::to_string(kept))?)?;
    Ok(out.into())
}

/// Analyses `request` with `analyse`, keeps what the page draws in `last`
/// (forgotten first, so a failure leaves nothing stale to draw) and
/// returns the result as the page is given it. `constants` gives the
/// shown fit's constants as text.
pub(crate) fn analyse_keeping<R: DeserializeOwned, A: WithPlots>(
    last: &mut Option<Kept>,
    request: JsValue,
    analyse: impl FnOnce(&R) -> Result<A, turnover_core::Error>,
    constants: impl FnOnce(&A) -> String,
) -> Result<JsValue, JsError> {
    *last = None;
    let (shown, kept) = analysed(request, analyse, constants)?;
    let value = to_js(&shown)?;
    *last = Some(kept);
    Ok(value)
}

/// The request read, analysed, and split by [`Kept::split`].
fn analysed<R: DeserializeOwned, A: WithPlots>(
    request: JsValue,
    analyse: impl FnOnce(&R) -> Result<A, turnover_core::Error>,
    constants: impl FnOnce(&A) -> String,
) -> Result<(A, Kept), JsError> {
    let request: R = read_request(request)?;
    let analysis = analyse(&request).map_err(|e| JsError::new(&e.message))?;
    let constants = constants(&analysis);
    Ok(Kept::split(analysis, constants))
}

/// The same in the page's Web Worker: `{result, kept}` as JSON texts, for
/// the page's `adopt`.
pub(crate) fn analyse_for_worker<R: DeserializeOwned, A: WithPlots>(
    request: JsValue,
    analyse: impl FnOnce(&R) -> Result<A, turnover_core::Error>,
    constants: impl FnOnce(&A) -> String,
) -> Result<JsValue, JsError> {
    let (shown, kept) = analysed(request, analyse, constants)?;
    handover(&shown, &kept)
}

/// `adopt` and `forget` for a bench that keeps a [`Kept`] in `last`.
macro_rules! adopts_worker_analyses {
    ($bench:ty) => {
        #[wasm_bindgen::prelude::wasm_bindgen]
        impl $bench {
            /// Keeps, for drawing, an analysis made in the page's Web Worker
            /// (the `kept` text its worker function returned), in place of
            /// the one kept before.
            pub fn adopt(&mut self, kept: &str) -> Result<(), wasm_bindgen::JsError> {
                self.last = None;
                self.last = Some($crate::kept::Kept::read(kept)?);
                Ok(())
            }

            /// Forgets the analysis kept for drawing (while a new one runs
            /// in the Web Worker, so nothing stale is drawn).
            pub fn forget(&mut self) {
                self.last = None;
            }
        }
    };
}
pub(crate) use adopts_worker_analyses;
