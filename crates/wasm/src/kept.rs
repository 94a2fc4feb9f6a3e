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
pub(crate) trait WithPlots: Clone + Serialize {
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
    pub fn of(plots: &[PlotData], constants: String) -> Kept {
        let mut plots = plots.to_vec();
        for plot in &mut plots {
            turnover_core::plots::thin_for_drawing(plot);
        }
        Kept { plots, constants }
    }

    /// Reads the `kept` text a worker returned.
    pub fn read(text: &str) -> Result<Kept, JsError> {
        serde_json::from_str(text).map_err(|e| JsError::new(&format!("internal error: the background analysis could not be read ({e})")))
    }

    /// The analysis as the page is given it, without what it never reads
    /// ([`WithPlots::lighten`]). A plot of up to
    /// [`turnover_core::plots::THIN_ABOVE`] points and segments is given
    /// whole where the section reads plots' points
    /// ([`WithPlots::SMALL_PLOTS_WHOLE`]); otherwise only its kind, titles,
    /// note (with the thinning sentence) and series labels: the page draws it from the kept plot (a
    /// 100,000-row table's eight plots were 800,000 more objects to build).
    pub fn shown<A: WithPlots>(&self, analysis: &A) -> A {
        let mut shown = analysis.clone();
        shown.lighten();
        for (plot, drawn) in shown.plots_mut().iter_mut().zip(&self.plots) {
            let limit = turnover_core::plots::THIN_ABOVE;
            if A::SMALL_PLOTS_WHOLE && plot.points.len() <= limit && plot.segments.len() <= limit {
                continue;
            }
            plot.points = Vec::new();
            plot.curve = Vec::new();
            plot.segments = Vec::new();
            // Each series keeps its label (the legend); its points and
            // curve are in the kept plot.
            for series in &mut plot.series {
                series.points = Vec::new();
                series.curve = Vec::new();
            }
            plot.note = drawn.note.clone();
        }
        shown
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
/// returns the result as the page is given it.
pub(crate) fn analyse_keeping<R: DeserializeOwned, A: WithPlots>(
    last: &mut Option<Kept>,
    request: JsValue,
    analyse: impl FnOnce(&R) -> Result<A, turnover_core::Error>,
    keep: impl FnOnce(&A) -> Kept,
) -> Result<JsValue, JsError> {
    *last = None;
    let (analysis, kept) = analysed(request, analyse, keep)?;
    let value = to_js(&kept.shown(&analysis))?;
    *last = Some(kept);
    Ok(value)
}

/// The request read, analysed, and what the page keeps of it.
fn analysed<R: DeserializeOwned, A: WithPlots>(
    request: JsValue,
    analyse: impl FnOnce(&R) -> Result<A, turnover_core::Error>,
    keep: impl FnOnce(&A) -> Kept,
) -> Result<(A, Kept), JsError> {
    let request: R = read_request(request)?;
    let analysis = analyse(&request).map_err(|e| JsError::new(&e.message))?;
    let kept = keep(&analysis);
    Ok((analysis, kept))
}

/// The same in the page's Web Worker: `{result, kept}` as JSON texts, for
/// the page's `adopt`.
pub(crate) fn analyse_for_worker<R: DeserializeOwned, A: WithPlots>(
    request: JsValue,
    analyse: impl FnOnce(&R) -> Result<A, turnover_core::Error>,
    keep: impl FnOnce(&A) -> Kept,
) -> Result<JsValue, JsError> {
    let (analysis, kept) = analysed(request, analyse, keep)?;
    handover(&kept.shown(&analysis), &kept)
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
