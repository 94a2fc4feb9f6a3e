//! The numbers behind every plot, computed once here so that the page's
//! figures and the CLI's output come from the same code.
//!
//! Each plot is a [`PlotData`]: transformed data points and the curve of the
//! **direct nonlinear fit** drawn in the same coordinates. The linearised
//! plots (double-reciprocal, Eadie-Hofstee, Hanes-Woolf) are diagnostics
//! only: no line is ever fitted to transformed data, because the transforms
//! distort the error structure.

use serde::{Deserialize, Serialize};

pub mod bisubstrate;
pub mod family;
pub mod traces;

/// Which plot.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum PlotKind {
    /// v against [S] with the fitted curve.
    Direct,
    /// Residual v − v̂ against [S].
    Residuals,
    /// 1/v against 1/[S] (Lineweaver-Burk).
    LineweaverBurk,
    /// v against v/[S] (Eadie-Hofstee).
    EadieHofstee,
    /// [S]/v against [S] (Hanes-Woolf).
    HanesWoolf,
    /// Sorted studentised residuals against normal scores.
    NormalQuantile,
    /// The direct linear plot in (Km, Vmax) space.
    DirectLinear,
    /// v against [S], one fitted curve per [I] from the global fit.
    InhibitionDirect,
    /// 1/v against 1/[S], one line per [I].
    InhibitionLineweaverBurk,
    /// v against v/[S], one line per [I].
    InhibitionEadieHofstee,
    /// [S]/v against [S], one line per [I].
    InhibitionHanesWoolf,
    /// 1/v against [I], one line per [S] (Dixon).
    Dixon,
    /// [S]/v against [I], one line per [S] (Cornish-Bowden).
    CornishBowden,
    /// Slope of the double-reciprocal line against [I].
    SlopeReplot,
    /// Intercept of the double-reciprocal line against [I].
    InterceptReplot,
    /// Response against log [I] with the IC50 marked.
    DoseResponse,
    /// Rate against [I] for a tight-binding inhibitor, with the classical
    /// hyperbola for contrast.
    Morrison,
    /// One time course: readings, the rate window shaded, the fitted line.
    TraceDetail,
    /// Initial rate against [E] at one condition, with its straight line.
    RateAgainstEnzyme,
    /// The integrated Michaelis-Menten fit: readings and fitted curve per
    /// trace.
    ProgressCurves,
    /// Several data sets, each in its own colour, with the curves of the
    /// global fit that compares them.
    Sets,
    /// Progress curves with [I], each with its slow-binding fit.
    InactivationTraces,
    /// kobs against [I] with the hyperbola (or the line through the origin).
    KobsReplot,
    /// Product against [E]·t, one series per [E] (Selwyn's test).
    Selwyn,
    /// log10 of a rate or rate constant against pH, with the fitted
    /// ionisation curve and its asymptotes of slope +1, 0 and −1.
    PhLog,
    /// A rate or rate constant against pH with the fitted curve.
    PhDirect,
    /// A rate constant against temperature with the Arrhenius fit.
    TemperatureDirect,
    /// ln k against 1/T with the direct Arrhenius fit (Arrhenius plot).
    Arrhenius,
    /// ln(k/T) against 1/T with the direct Eyring fit (Eyring plot).
    Eyring,
    /// v against [A], one fitted curve per [B] from the global
    /// two-substrate fit.
    TwoSubstrateDirect,
    /// 1/v against 1/[A], one line per [B] (intersecting for a ternary
    /// complex, parallel for ping-pong).
    TwoSubstrateDoubleReciprocal,
    /// Slope of the double-reciprocal lines against 1/[B].
    TwoSubstrateSlopeReplot,
    /// Intercept of the double-reciprocal lines against 1/[B].
    TwoSubstrateInterceptReplot,
    /// A planned design's predicted precision (relative error, %) against
    /// its highest concentration, one series per constant.
    DesignPrecision,
}

impl PlotKind {
    /// All plots of a rate analysis, in page order.
    pub const ALL: [PlotKind; 7] = [
        PlotKind::Direct,
        PlotKind::Residuals,
        PlotKind::LineweaverBurk,
        PlotKind::EadieHofstee,
        PlotKind::HanesWoolf,
        PlotKind::NormalQuantile,
        PlotKind::DirectLinear,
    ];

    /// The kebab-case name used by the page and the CLI.
    pub fn name(self) -> &'static str {
        match self {
            PlotKind::Direct => "direct",
            PlotKind::Residuals => "residuals",
            PlotKind::LineweaverBurk => "lineweaver-burk",
            PlotKind::EadieHofstee => "eadie-hofstee",
            PlotKind::HanesWoolf => "hanes-woolf",
            PlotKind::NormalQuantile => "normal-quantile",
            PlotKind::DirectLinear => "direct-linear",
            PlotKind::InhibitionDirect => "inhibition-direct",
            PlotKind::InhibitionLineweaverBurk => "inhibition-lineweaver-burk",
            PlotKind::InhibitionEadieHofstee => "inhibition-eadie-hofstee",
            PlotKind::InhibitionHanesWoolf => "inhibition-hanes-woolf",
            PlotKind::Dixon => "dixon",
            PlotKind::CornishBowden => "cornish-bowden",
            PlotKind::SlopeReplot => "slope-replot",
            PlotKind::InterceptReplot => "intercept-replot",
            PlotKind::DoseResponse => "dose-response",
            PlotKind::Morrison => "morrison",
            PlotKind::TraceDetail => "trace-detail",
            PlotKind::RateAgainstEnzyme => "rate-against-enzyme",
            PlotKind::ProgressCurves => "progress-curves",
            PlotKind::Sets => "sets",
            PlotKind::InactivationTraces => "inactivation-traces",
            PlotKind::KobsReplot => "kobs-replot",
            PlotKind::Selwyn => "selwyn",
            PlotKind::PhLog => "ph-log",
            PlotKind::PhDirect => "ph-direct",
            PlotKind::TemperatureDirect => "temperature-direct",
            PlotKind::Arrhenius => "arrhenius",
            PlotKind::Eyring => "eyring",
            PlotKind::TwoSubstrateDirect => "two-substrate-direct",
            PlotKind::TwoSubstrateDoubleReciprocal => "two-substrate-double-reciprocal",
            PlotKind::TwoSubstrateSlopeReplot => "two-substrate-slope-replot",
            PlotKind::TwoSubstrateInterceptReplot => "two-substrate-intercept-replot",
            PlotKind::DesignPrecision => "design-precision",
        }
    }

    /// The plots of an inhibition analysis, in page order.
    pub const INHIBITION: [PlotKind; 8] = [
        PlotKind::InhibitionDirect,
        PlotKind::InhibitionLineweaverBurk,
        PlotKind::InhibitionEadieHofstee,
        PlotKind::InhibitionHanesWoolf,
        PlotKind::Dixon,
        PlotKind::CornishBowden,
        PlotKind::SlopeReplot,
        PlotKind::InterceptReplot,
    ];

    /// The plots of a two-substrate analysis, in page order.
    pub const TWO_SUBSTRATES: [PlotKind; 4] = [
        PlotKind::TwoSubstrateDirect,
        PlotKind::TwoSubstrateDoubleReciprocal,
        PlotKind::TwoSubstrateSlopeReplot,
        PlotKind::TwoSubstrateInterceptReplot,
    ];

    /// Looks a plot up by [`PlotKind::name`].
    pub fn from_name(name: &str) -> Option<PlotKind> {
        PlotKind::ALL
            .into_iter()
            .chain(PlotKind::INHIBITION)
            .chain([
                PlotKind::DoseResponse,
                PlotKind::Morrison,
                PlotKind::Sets,
                PlotKind::InactivationTraces,
                PlotKind::KobsReplot,
                PlotKind::Selwyn,
                PlotKind::DesignPrecision,
            ])
            .chain([PlotKind::TraceDetail, PlotKind::RateAgainstEnzyme, PlotKind::ProgressCurves])
            .chain([PlotKind::PhLog, PlotKind::PhDirect, PlotKind::TemperatureDirect, PlotKind::Arrhenius, PlotKind::Eyring])
            .chain(PlotKind::TWO_SUBSTRATES)
            .find(|k| k.name() == name)
    }
}

/// One data point of a plot.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct PlotPoint {
    /// Index into the analysis' point list.
    pub row: usize,
    /// Horizontal coordinate.
    pub x: f64,
    /// Vertical coordinate.
    pub y: f64,
    /// Whether the point is excluded from the fit (drawn hollow).
    pub excluded: bool,
}

/// Everything needed to draw one plot.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PlotData {
    /// Which plot.
    pub kind: PlotKind,
    /// Title for people.
    pub title: String,
    /// Horizontal axis label with unit.
    pub x_label: String,
    /// Vertical axis label with unit.
    pub y_label: String,
    /// Transformed data points that can be shown.
    pub points: Vec<PlotPoint>,
    /// The fitted curve in these coordinates, as a polyline.
    pub curve: Vec<(f64, f64)>,
    /// Whether a horizontal line at y = 0 belongs on the plot.
    pub zero_line: bool,
    /// Thin auxiliary straight segments `((x0, y0), (x1, y1))`, such as the
    /// lines of the direct linear plot.
    pub segments: Vec<((f64, f64), (f64, f64))>,
    /// Labelled points drawn over everything, such as a median estimate.
    pub spots: Vec<Spot>,
    /// A sentence under the plot.
    pub note: String,
    /// Labelled groups of points with their own curve, drawn in distinct
    /// colours with a legend (one per [I] or per [S]). Empty for the
    /// single-curve plots, which use `points` and `curve` only. When not
    /// empty, `points` still lists every point (for hit-testing) and
    /// `curve` is empty.
    pub series: Vec<Series>,
    /// Whether the horizontal axis is logarithmic (every x then is > 0).
    pub log_x: bool,
    /// Vertical marker lines with a label, such as the IC50.
    pub marks: Vec<Mark>,
    /// A shaded band across the plot between two x values, such as a
    /// time course's rate window. Points outside it are drawn lighter:
    /// the band says which points the line was fitted to.
    #[serde(default)]
    pub band: Option<Band>,
}

/// A shaded vertical band.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Band {
    /// Left edge, in plot coordinates.
    pub from: f64,
    /// Right edge, in plot coordinates.
    pub to: f64,
    /// What the band is, for the legend.
    pub label: String,
}

/// A labelled group of points and its curve.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Series {
    /// Legend text, such as `[I] = 5 µM`.
    pub label: String,
    /// The group's points.
    pub points: Vec<PlotPoint>,
    /// The group's curve, as a polyline; may be empty.
    pub curve: Vec<(f64, f64)>,
    /// Whether the curve is drawn dashed (a contrast or reference curve).
    pub dashed: bool,
}

/// A vertical marker line.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Mark {
    /// Where, in plot coordinates.
    pub x: f64,
    /// Its label, such as `IC50 = 3.2 µM`.
    pub label: String,
}

/// The extra fields of a plot with only the single curve.
fn single_curve() -> (Vec<Series>, bool, Vec<Mark>) {
    (Vec::new(), false, Vec::new())
}

/// A labelled point on a plot.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Spot {
    /// Horizontal coordinate.
    pub x: f64,
    /// Vertical coordinate.
    pub y: f64,
    /// Text beside the mark.
    pub label: String,
}

/// One measured point in the untransformed coordinates.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RatePoint {
    /// Substrate concentration.
    pub s: f64,
    /// Measured rate.
    pub v: f64,
    /// Fitted rate at this [S].
    pub fitted: f64,
    /// Whether the point is excluded from the fit.
    pub excluded: bool,
    /// The point's weight in the fit (what it would be, when excluded).
    pub weight: f64,
}

/// Units for the axis labels; empty strings when unknown.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct AxisUnits {
    /// Unit of [S], such as `mM`.
    pub substrate: String,
    /// Unit of v, such as `µM/min`.
    pub rate: String,
}

fn label(quantity: &str, unit: &str) -> String {
    if unit.is_empty() {
        quantity.to_string()
    } else {
        format!("{quantity} ({unit})")
    }
}

fn inverse_unit(unit: &str) -> String {
    if unit.is_empty() {
        String::new()
    } else if unit.contains('/') {
        format!("({unit})⁻¹")
    } else {
        format!("{unit}⁻¹")
    }
}

fn ratio_unit(numerator: &str, denominator: &str) -> String {
    if numerator.is_empty() || denominator.is_empty() {
        return String::new();
    }
    let wrap = |u: &str| if u.contains('/') { format!("({u})") } else { u.to_string() };
    format!("{}/{}", wrap(numerator), wrap(denominator))
}

/// Builds the five plots of a rate analysis.
///
/// `curve` evaluates the fitted model at a given [S]. `hyperbola` gives the
/// fitted (Vmax, Km) when the fitted model is a rectangular hyperbola in
/// [S]; the linearised curves are then straight and are extended to the
/// axis intercepts as is customary for these plots.
pub fn rate_plots(
    points: &[RatePoint],
    curve: &dyn Fn(f64) -> f64,
    hyperbola: Option<(f64, f64)>,
    units: &AxisUnits,
) -> Vec<PlotData> {
    let s_max = points.iter().map(|p| p.s).fold(0.0, f64::max);
    let s_min_positive = points.iter().map(|p| p.s).filter(|s| *s > 0.0).fold(f64::INFINITY, f64::min);
    let note_linearised = "Points are the data transformed; the line is the direct nonlinear fit drawn in these \
        coordinates, not a regression on the transformed values.";
    let mut plots = Vec::with_capacity(5);

    // Direct plot: a dense curve from 0 to a little past the largest [S].
    let direct_curve: Vec<(f64, f64)> = if s_max > 0.0 {
        (0..=200).map(|i| s_max * 1.1 * i as f64 / 200.0).map(|s| (s, curve(s))).filter(|(_, v)| v.is_finite()).collect()
    } else {
        Vec::new()
    };
    plots.push(PlotData {
        kind: PlotKind::Direct,
        title: "Rate against substrate".to_string(),
        x_label: label("[S]", &units.substrate),
        y_label: label("v", &units.rate),
        points: points.iter().enumerate().map(|(row, p)| PlotPoint { row, x: p.s, y: p.v, excluded: p.excluded }).collect(),
        curve: direct_curve,
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note: "Click a point to leave it out of the fit; click again to bring it back.".to_string(),
        series: single_curve().0,
        log_x: single_curve().1,
        marks: single_curve().2,
        band: None,
    });

    let weighted = points.iter().any(|p| p.weight != 1.0);
    plots.push(PlotData {
        kind: PlotKind::Residuals,
        title: if weighted { "Weighted residuals" } else { "Residuals" }.to_string(),
        x_label: label("[S]", &units.substrate),
        y_label: if weighted { "√w·(v − fitted v)".to_string() } else { label("v − fitted v", &units.rate) },
        points: points
            .iter()
            .enumerate()
            .map(|(row, p)| PlotPoint { row, x: p.s, y: p.weight.sqrt() * (p.v - p.fitted), excluded: p.excluded })
            .collect(),
        curve: Vec::new(),
        zero_line: true,
        segments: Vec::new(),
        spots: Vec::new(),
        note: "A pattern (runs of the same sign, a trend, a funnel) says the model or the weighting is wrong."
            .to_string(),
        series: single_curve().0,
        log_x: single_curve().1,
        marks: single_curve().2,
        band: None,
    });

    let transformable: Vec<(usize, &RatePoint)> =
        points.iter().enumerate().filter(|(_, p)| p.s > 0.0 && p.v > 0.0).collect();
    let hidden = points.len() - transformable.len();
    let hidden_note = if hidden > 0 {
        format!(" {hidden} point(s) with [S] ≤ 0 or v ≤ 0 cannot be transformed and are not shown.")
    } else {
        String::new()
    };

    // Parametric samples of the fitted curve over [S], log-spaced from well
    // below the smallest to well above the largest measured [S].
    let samples: Vec<f64> = if s_min_positive.is_finite() && s_max > 0.0 {
        let low = (s_min_positive / 4.0).ln();
        let high = (s_max * 4.0).ln();
        (0..=200).map(|i| (low + (high - low) * i as f64 / 200.0).exp()).collect()
    } else {
        Vec::new()
    };
    let sampled = |transform: &dyn Fn(f64, f64) -> (f64, f64)| -> Vec<(f64, f64)> {
        samples
            .iter()
            .map(|s| transform(*s, curve(*s)))
            .filter(|(x, y)| x.is_finite() && y.is_finite())
            .collect()
    };

    let x_max_lb = transformable.iter().map(|(_, p)| 1.0 / p.s).fold(0.0, f64::max) * 1.1;
    let lb_curve = match hyperbola {
        Some((vmax, km)) if vmax != 0.0 && km != 0.0 => {
            let slope = km / vmax;
            let start = (-1.0 / km).min(0.0);
            vec![(start, slope * start + 1.0 / vmax), (x_max_lb, slope * x_max_lb + 1.0 / vmax)]
        }
        _ => sampled(&|s, v| (1.0 / s, 1.0 / v)),
    };
    plots.push(PlotData {
        kind: PlotKind::LineweaverBurk,
        title: "Double reciprocal (Lineweaver-Burk)".to_string(),
        x_label: label("1/[S]", &inverse_unit(&units.substrate)),
        y_label: label("1/v", &inverse_unit(&units.rate)),
        points: transformable.iter().map(|(row, p)| PlotPoint { row: *row, x: 1.0 / p.s, y: 1.0 / p.v, excluded: p.excluded }).collect(),
        curve: lb_curve,
        zero_line: true,
        segments: Vec::new(),
        spots: Vec::new(),
        note: format!("{note_linearised} For Michaelis-Menten the line meets the axes at −1/Km and 1/Vmax.{hidden_note}"),
        series: single_curve().0,
        log_x: single_curve().1,
        marks: single_curve().2,
        band: None,
    });

    let eh_curve = match hyperbola {
        Some((vmax, km)) if km != 0.0 => vec![(0.0, vmax), (vmax / km, 0.0)],
        _ => sampled(&|s, v| (v / s, v)),
    };
    plots.push(PlotData {
        kind: PlotKind::EadieHofstee,
        title: "Eadie-Hofstee".to_string(),
        x_label: label("v/[S]", &ratio_unit(&units.rate, &units.substrate)),
        y_label: label("v", &units.rate),
        points: transformable.iter().map(|(row, p)| PlotPoint { row: *row, x: p.v / p.s, y: p.v, excluded: p.excluded }).collect(),
        curve: eh_curve,
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note: format!("{note_linearised} For Michaelis-Menten the slope is −Km and the v-intercept is Vmax.{hidden_note}"),
        series: single_curve().0,
        log_x: single_curve().1,
        marks: single_curve().2,
        band: None,
    });

    let hw_curve = match hyperbola {
        Some((vmax, km)) if vmax != 0.0 => {
            let start = (-km).min(0.0);
            let end = s_max * 1.1;
            vec![(start, (start + km) / vmax), (end, (end + km) / vmax)]
        }
        _ => sampled(&|s, v| (s, s / v)),
    };
    plots.push(PlotData {
        kind: PlotKind::HanesWoolf,
        title: "Hanes-Woolf".to_string(),
        x_label: label("[S]", &units.substrate),
        y_label: label("[S]/v", &ratio_unit(&units.substrate, &units.rate)),
        points: transformable.iter().map(|(row, p)| PlotPoint { row: *row, x: p.s, y: p.s / p.v, excluded: p.excluded }).collect(),
        curve: hw_curve,
        zero_line: true,
        segments: Vec::new(),
        spots: Vec::new(),
        note: format!("{note_linearised} For Michaelis-Menten the line meets the [S] axis at −Km; its slope is 1/Vmax.{hidden_note}"),
        series: single_curve().0,
        log_x: single_curve().1,
        marks: single_curve().2,
        band: None,
    });

    plots
}

/// The normal quantile plot of studentised residuals and the direct linear
/// plot. `studentised` holds `(row, residual, excluded)` for fitted points.
pub fn diagnostic_plots(
    studentised: &[(usize, f64, bool)],
    points: &[RatePoint],
    robust: &crate::robust::DirectLinearEstimate,
    units: &AxisUnits,
) -> Vec<PlotData> {
    let mut sorted: Vec<(usize, f64)> = studentised.iter().filter(|s| !s.2).map(|s| (s.0, s.1)).collect();
    sorted.sort_by(|a, b| a.1.total_cmp(&b.1));
    let scores = crate::diagnostics::normal_scores(sorted.len());
    let extent = scores.iter().map(|s| s.abs()).fold(1.0, f64::max) * 1.1;
    let quantile = PlotData {
        kind: PlotKind::NormalQuantile,
        title: "Normal quantile plot of residuals".to_string(),
        x_label: "normal score".to_string(),
        y_label: "studentised residual".to_string(),
        points: sorted.iter().zip(&scores).map(|((row, r), z)| PlotPoint { row: *row, x: *z, y: *r, excluded: false }).collect(),
        curve: vec![(-extent, -extent), (extent, extent)],
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        series: Vec::new(),
        log_x: false,
        marks: Vec::new(),
        band: None,
        note: "Points near the line mean roughly normal residuals; a bend means skewed errors, and lone points far off are worth a look at the bench.".to_string(),
    };

    // Direct linear plot: each used observation is the line through
    // (−[S], 0) and (0, v) in (Km, Vmax) space, drawn to a little past the
    // median Km so the crowd of intersections is in view.
    let used: Vec<&RatePoint> = points.iter().filter(|p| !p.excluded && p.s > 0.0).collect();
    let s_max = used.iter().map(|p| p.s).fold(0.0, f64::max);
    let k_end = robust.km.map_or(s_max, |k| (2.5 * k).max(0.5 * s_max)).max(f64::MIN_POSITIVE);
    let segments = used.iter().map(|p| ((-p.s, 0.0), (k_end, p.v + p.v / p.s * k_end))).collect();
    let spots = match (robust.km, robust.vmax) {
        (Some(k), Some(v)) => vec![Spot { x: k, y: v, label: "median".to_string() }],
        _ => Vec::new(),
    };
    let direct_linear = PlotData {
        kind: PlotKind::DirectLinear,
        title: "Direct linear plot".to_string(),
        x_label: label("Km", &units.substrate),
        y_label: label("Vmax", &units.rate),
        points: Vec::new(),
        curve: Vec::new(),
        zero_line: true,
        segments,
        spots,
        series: Vec::new(),
        log_x: false,
        marks: Vec::new(),
        band: None,
        note: format!(
            "Each line is one measurement: every (Km, Vmax) that fits it exactly. The medians of the {} intersections{} are a distribution-free check on the least-squares values.",
            robust.intersections,
            if robust.at_infinity > 0 { format!(" ({} counted at infinity)", robust.at_infinity) } else { String::new() }
        ),
    };
    vec![quantile, direct_linear]
}

/// Which spread a replicate error bar shows.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Spread {
    /// No error bars.
    #[default]
    None,
    /// Mean ± sample standard deviation (n − 1 in the denominator).
    Sd,
    /// Mean ± standard error of the mean, SD/√n.
    Sem,
}

/// The mean and spread of replicate points (points sharing an x).
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct ReplicateBar {
    /// The shared x.
    pub x: f64,
    /// Mean of the replicates' y.
    pub mean: f64,
    /// Mean minus the spread.
    pub low: f64,
    /// Mean plus the spread.
    pub high: f64,
    /// Number of replicates.
    pub n: usize,
}

/// Mean ± SD or SEM of the points that share an x exactly (replicates),
/// for every x with two or more points. Points left out of the fit are not
/// counted; the points themselves stay on the plot.
pub fn replicate_bars(points: &[PlotPoint], spread: Spread) -> Vec<ReplicateBar> {
    if spread == Spread::None {
        return Vec::new();
    }
    let mut used: Vec<(f64, f64)> =
        points.iter().filter(|p| !p.excluded && p.x.is_finite() && p.y.is_finite()).map(|p| (p.x, p.y)).collect();
    used.sort_by(|a, b| a.0.total_cmp(&b.0));
    used.chunk_by(|a, b| a.0 == b.0)
        .filter(|group| group.len() >= 2)
        .map(|group| {
            let n = group.len() as f64;
            let mean = group.iter().map(|p| p.1).sum::<f64>() / n;
            let sd = (group.iter().map(|p| (p.1 - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
            let half = if spread == Spread::Sem { sd / n.sqrt() } else { sd };
            ReplicateBar { x: group[0].0, mean, low: mean - half, high: mean + half, n: group.len() }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Sample SD with n − 1 and SEM = SD/√n, the textbook definitions:
    /// for 1, 2, 3 the SD is 1 and the SEM 1/√3; single points get no bar
    /// and left-out points do not count.
    #[test]
    fn replicate_bars_use_the_sample_sd() {
        let p = |x: f64, y: f64, excluded: bool| PlotPoint { row: 0, x, y, excluded };
        let points = [p(2.0, 1.0, false), p(1.0, 5.0, false), p(2.0, 3.0, false), p(2.0, 2.0, false), p(2.0, 40.0, true)];
        let sd = replicate_bars(&points, Spread::Sd);
        assert_eq!(sd, vec![ReplicateBar { x: 2.0, mean: 2.0, low: 1.0, high: 3.0, n: 3 }]);
        let sem = replicate_bars(&points, Spread::Sem);
        assert!((sem[0].high - 2.0 - 1.0 / 3f64.sqrt()).abs() < 1e-15);
        assert!(replicate_bars(&points, Spread::None).is_empty());
    }

    /// On exact Michaelis-Menten data every transformed point lies on the
    /// drawn line of its linearised plot.
    #[test]
    fn exact_points_lie_on_the_linearised_lines() {
        let (vmax, km) = (4.0, 0.3);
        let mm = |s: f64| vmax * s / (km + s);
        let points: Vec<RatePoint> =
            [0.05, 0.1, 0.3, 1.0, 3.0].iter().map(|&s| RatePoint { s, v: mm(s), fitted: mm(s), excluded: false, weight: 1.0 }).collect();
        let plots = rate_plots(&points, &mm, Some((vmax, km)), &AxisUnits::default());
        for plot in &plots[2..] {
            let (a, b) = (plot.curve[0], plot.curve[plot.curve.len() - 1]);
            for p in &plot.points {
                let on_line = a.1 + (b.1 - a.1) * (p.x - a.0) / (b.0 - a.0);
                assert!((p.y - on_line).abs() < 1e-9 * on_line.abs().max(1.0), "{:?} {:?}", plot.kind, p);
            }
        }
        let residuals = &plots[1];
        assert!(residuals.points.iter().all(|p| p.y.abs() < 1e-15));
    }
}

/// Plots with more data points than this are thinned for drawing by
/// [`thin_for_drawing`].
pub const THIN_ABOVE: usize = 5_000;

/// Cells per axis of the grid [`thin_for_drawing`] keeps one point per cell
/// of: a cell is narrower than a drawn point marker on the page's plots
/// (about 600 pixels wide, markers 5–7 pixels across) and its figures.
pub const THIN_GRID: usize = 200;

/// Thins a plot of more than [`THIN_ABOVE`] points for drawing: of the
/// points falling in one cell of a [`THIN_GRID`] × [`THIN_GRID`] grid over
/// the points' range (logarithmic along a logarithmic axis), only the first
/// is kept, separately for points in and out of the fit, so every spot
/// that holds a point still shows one. The kept points keep their `row`, so
/// a click still finds its point. A sentence saying how many of how many
/// are drawn is added to the note. Curves, segments and marks are kept
/// whole. Returns whether anything was left out. Fits never use this: it is
/// for what is drawn.
pub fn thin_for_drawing(plot: &mut PlotData) -> bool {
    let lines = thin_segments(plot);
    let total = plot.points.len();
    if total <= THIN_ABOVE {
        return lines;
    }
    let log_x = plot.log_x;
    let ax = |x: f64| if log_x { x.log10() } else { x };
    let usable = |p: &PlotPoint| ax(p.x).is_finite() && p.y.is_finite();
    let (mut x0, mut x1, mut y0, mut y1) = (f64::INFINITY, f64::NEG_INFINITY, f64::INFINITY, f64::NEG_INFINITY);
    for p in plot.points.iter().filter(|p| usable(p)) {
        x0 = x0.min(ax(p.x));
        x1 = x1.max(ax(p.x));
        y0 = y0.min(p.y);
        y1 = y1.max(p.y);
    }
    if !(x0.is_finite() && y0.is_finite()) {
        return lines;
    }
    let cells = THIN_GRID as f64;
    let cell = |lo: f64, hi: f64, v: f64| -> usize {
        if hi > lo {
            (((v - lo) / (hi - lo)) * cells).floor().clamp(0.0, cells - 1.0) as usize
        } else {
            0
        }
    };
    let mut taken = std::collections::HashSet::new();
    let mut keep = |p: &PlotPoint| -> bool {
        // A point the plot cannot place is kept: the drawing decides.
        if !usable(p) {
            return true;
        }
        taken.insert((cell(x0, x1, ax(p.x)), cell(y0, y1, p.y), p.excluded))
    };
    plot.points.retain(|p| keep(p));
    let kept_rows: std::collections::HashSet<usize> = plot.points.iter().map(|p| p.row).collect();
    for series in &mut plot.series {
        series.points.retain(|p| kept_rows.contains(&p.row));
    }
    let drawn = plot.points.len();
    if drawn == total {
        return lines;
    }
    let sentence = format!(
        "Drawn thinned: {} of {} points, one per cell of a {} × {} grid, finer than the point markers (the others would be drawn on top of them); the fit uses all {}.",
        group_thousands(drawn),
        group_thousands(total),
        THIN_GRID,
        THIN_GRID,
        group_thousands(total)
    );
    plot.note = if plot.note.is_empty() { sentence } else { format!("{} {}", plot.note, sentence) };
    true
}

/// Segments drawn at most: a plot with more than [`THIN_ABOVE`] of them
/// (the direct linear plot of a long table, one line per point) is drawn
/// with this many, evenly spaced through the list.
pub const SEGMENTS_DRAWN: usize = 1_000;

/// The segment part of [`thin_for_drawing`].
fn thin_segments(plot: &mut PlotData) -> bool {
    let total = plot.segments.len();
    if total <= THIN_ABOVE {
        return false;
    }
    let step = total.div_ceil(SEGMENTS_DRAWN);
    plot.segments = plot.segments.iter().step_by(step).copied().collect();
    let sentence = format!(
        "Drawn thinned: {} of {} lines (one in {}); the estimates use all of them.",
        group_thousands(plot.segments.len()),
        group_thousands(total),
        step
    );
    plot.note = if plot.note.is_empty() { sentence } else { format!("{} {}", plot.note, sentence) };
    true
}

/// `100000` as `100,000`.
fn group_thousands(n: usize) -> String {
    let digits = n.to_string();
    let mut out = String::new();
    for (k, c) in digits.chars().enumerate() {
        if k > 0 && (digits.len() - k) % 3 == 0 {
            out.push(',');
        }
        out.push(c);
    }
    out
}

#[cfg(test)]
mod thinning_tests {
    use super::*;

    fn cloud(n: usize) -> PlotData {
        // A fixed pseudo-random cloud (a linear congruential sequence, seed 7).
        let mut seed: u64 = 7;
        let mut next = || {
            seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (seed >> 11) as f64 / (1u64 << 53) as f64
        };
        let points = (0..n).map(|row| PlotPoint { row, x: 1.0 + 199.0 * next(), y: next(), excluded: row % 97 == 0 }).collect();
        PlotData {
            kind: PlotKind::Direct,
            title: String::new(),
            x_label: String::new(),
            y_label: String::new(),
            points,
            curve: vec![(0.0, 0.0), (1.0, 1.0)],
            zero_line: false,
            segments: Vec::new(),
            spots: Vec::new(),
            note: String::new(),
            series: Vec::new(),
            log_x: false,
            marks: Vec::new(),
            band: None,
        }
    }

    #[test]
    fn small_plots_are_untouched() {
        let mut plot = cloud(THIN_ABOVE);
        let before = plot.clone();
        assert!(!thin_for_drawing(&mut plot));
        assert_eq!(plot, before);
    }

    #[test]
    fn a_dense_cloud_keeps_one_point_per_occupied_cell_and_says_so() {
        let mut plot = cloud(100_000);
        let all = plot.points.clone();
        assert!(thin_for_drawing(&mut plot));
        // Every occupied (cell, in/out of fit) of the grid still has a point,
        // counted independently here.
        let (x0, x1) = all.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| (a.min(p.x), b.max(p.x)));
        let (y0, y1) = all.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| (a.min(p.y), b.max(p.y)));
        let g = THIN_GRID as f64;
        let key = |p: &PlotPoint| {
            (((p.x - x0) / (x1 - x0) * g).floor().min(g - 1.0) as i64, ((p.y - y0) / (y1 - y0) * g).floor().min(g - 1.0) as i64, p.excluded)
        };
        let occupied: std::collections::HashSet<_> = all.iter().map(key).collect();
        let kept: std::collections::HashSet<_> = plot.points.iter().map(key).collect();
        assert_eq!(occupied.len(), plot.points.len(), "one point per occupied cell");
        assert_eq!(occupied, kept);
        // Kept points are the original points (row, x, y unchanged), in order.
        let mut previous = None;
        for p in &plot.points {
            assert_eq!(all[p.row], *p);
            assert!(previous.is_none_or(|r| r < p.row));
            previous = Some(p.row);
        }
        assert!(plot.note.contains("of 100,000 points"), "{}", plot.note);
        assert_eq!(plot.curve.len(), 2);
    }

    #[test]
    fn many_lines_are_drawn_evenly_spaced() {
        let mut plot = cloud(10);
        plot.segments = (0..100_000).map(|k| ((k as f64, 0.0), (0.0, k as f64))).collect();
        assert!(thin_for_drawing(&mut plot));
        assert_eq!(plot.segments.len(), 1_000);
        assert!(plot.segments.iter().enumerate().all(|(i, s)| s.0 .0 == (i * 100) as f64));
        assert!(plot.note.contains("1,000 of 100,000 lines (one in 100)"), "{}", plot.note);
        assert_eq!(plot.points.len(), 10);
    }

    #[test]
    fn thousands_are_grouped() {
        assert_eq!(group_thousands(0), "0");
        assert_eq!(group_thousands(999), "999");
        assert_eq!(group_thousands(1000), "1,000");
        assert_eq!(group_thousands(100000), "100,000");
        assert_eq!(group_thousands(1234567), "1,234,567");
    }
}
