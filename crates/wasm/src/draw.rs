//! Drawing every [`PlotData`] (and the plate view) with plotters, on any
//! backend: the page's canvas, or an SVG document for figures.
//!
//! One routine lays out and draws every plot, so every plot follows the
//! same rules:
//!
//! - axis ticks at round numbers with steps of 1, 2 or 5 times a power of
//!   ten ([`nice_ticks`]), the axis running from tick to tick, labelled by
//!   [`tick_label`] with as many decimals as the step needs;
//! - an axis starts at zero when the data do not go below it;
//! - every axis label carries its unit (the core writes them);
//! - the legend (and an optional block of constants) goes in the inner
//!   corner that hides nothing, or outside on the right when every corner
//!   holds data;
//! - sizes are given in points and scaled by [`Style::unit`], so a canvas
//!   and a figure in millimetres are drawn by the same code.
//!
//! Layout is computed here, in backend units, rather than left to plotters'
//! chart builder, so that the page can be told exactly where the plotting
//! area is ([`PlotArea`]) and tests can check that no two texts overlap.
//!
//! The look is Turnover's own: measured points as filled dark-teal discs,
//! points left out of the fit as open rings with a cross in brick red, the
//! fitted curve in amber, light grid lines at the ticks.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::FontTransform;
use serde::{Deserialize, Serialize};
use turnover_core::format::superscript;
use turnover_core::plots::traces::PlateView;
use turnover_core::plots::{replicate_bars, PlotData, PlotKind, Spread};

/// Where one data point was drawn, in backend pixels.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct PointPosition {
    /// Index into the analysis' point list.
    pub row: usize,
    /// Horizontal pixel.
    pub x: i32,
    /// Vertical pixel.
    pub y: i32,
}

/// The plotting area and its mapping: a data x between `x_min` and
/// `x_max` lands between `left` and `left + width` (logarithmically when
/// `log_x`), a data y between `y_min` (at `top + height`) and `y_max` (at
/// `top`).
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct PlotArea {
    /// Left edge, in backend pixels.
    pub left: f64,
    /// Top edge, in backend pixels.
    pub top: f64,
    /// Width, in backend pixels.
    pub width: f64,
    /// Height, in backend pixels.
    pub height: f64,
    /// Data x at the left edge (a concentration even on a log axis).
    pub x_min: f64,
    /// Data x at the right edge.
    pub x_max: f64,
    /// Data y at the bottom edge.
    pub y_min: f64,
    /// Data y at the top edge.
    pub y_max: f64,
    /// Whether x is logarithmic between `x_min` and `x_max`.
    pub log_x: bool,
}

/// What a drawing returns: where each point landed, and the mapping.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Drawn {
    /// Every point of `PlotData::points` that could be drawn.
    pub points: Vec<PointPosition>,
    /// The plotting area.
    pub area: PlotArea,
}

/// One well's box in the plate view, in backend pixels.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct WellBox {
    /// The trace's name.
    pub name: String,
    /// Left edge.
    pub x: f64,
    /// Top edge.
    pub y: f64,
    /// Width.
    pub w: f64,
    /// Height.
    pub h: f64,
}

const INK: RGBColor = RGBColor(38, 50, 56);
const POINT: RGBColor = RGBColor(0, 105, 110);
const LEFT_OUT: RGBColor = RGBColor(178, 58, 46);
const CURVE: RGBColor = RGBColor(214, 138, 20);
const GRID: RGBColor = RGBColor(226, 230, 232);
const MUTED: RGBColor = RGBColor(120, 130, 136);

/// Turnover's palette for families of curves (one colour per [I] or [S]):
/// teal, amber, plum, slate blue, olive, rust, steel, moss; chosen to stay
/// apart from one another and from the brick red of left-out points.
const SERIES: [RGBColor; 8] = [
    RGBColor(0, 105, 110),
    RGBColor(214, 138, 20),
    RGBColor(128, 60, 120),
    RGBColor(66, 96, 170),
    RGBColor(120, 128, 30),
    RGBColor(190, 90, 40),
    RGBColor(90, 110, 125),
    RGBColor(40, 140, 80),
];

/// The font list of every text: common sans-serif faces first, then the
/// generic family, so a figure opens the same on any system without
/// embedding a font.
pub const FONT_FAMILY: &str = "Helvetica, Arial, 'Liberation Sans', sans-serif";

/// Legends with more entries than this are left out (a plate's worth of
/// traces); the colours then only tell the traces apart.
const MAX_LEGEND_ENTRIES: usize = 10;

/// The colour of series `k`.
pub fn series_colour(k: usize) -> RGBColor {
    SERIES[k % SERIES.len()]
}

/// Sizes and switches for one drawing.
#[derive(Clone, Debug, PartialEq)]
pub struct Style {
    /// Backend units per typographic point (1/72 inch).
    pub unit: f64,
    /// Size of every text but the title, in points.
    pub font_pt: f64,
    /// What the backend writes for a font size of 1 (plotters' SVG backend
    /// writes `size / 1.24`, its canvas backend `size` pixels).
    pub font_scale: f64,
    /// Whether the plot's title is drawn above it.
    pub title: bool,
    /// Lines of text printed in the key box on the plot, such as fitted
    /// constants.
    pub constants: Option<String>,
    /// Replicate error bars.
    pub error_bars: Spread,
}

impl Style {
    /// The page's canvases: CSS pixels (96 per inch), 8.5 pt text, title on.
    pub fn screen() -> Style {
        Style { unit: 96.0 / 72.0, font_pt: 8.5, font_scale: 1.0, title: true, constants: None, error_bars: Spread::None }
    }

    fn px(&self, pt: f64) -> f64 {
        pt * self.unit
    }

    /// A stroke or radius of `pt` points in whole backend units.
    fn whole(&self, pt: f64) -> u32 {
        self.px(pt).round().max(1.0) as u32
    }

    /// Font height in backend units.
    fn font(&self) -> f64 {
        self.px(self.font_pt)
    }

    fn text_style(&self, height: f64, colour: &'static RGBColor, h: HPos, v: VPos) -> TextStyle<'static> {
        TextStyle::from(FontDesc::new(FontFamily::Name(FONT_FAMILY), height * self.font_scale, FontStyle::Normal))
            .color(colour)
            .pos(Pos::new(h, v))
    }
}

/// The approximate width of `text` at font height `height`: 0.6 em per
/// character, the usual average advance of a sans-serif face with digits
/// (an estimate; no font is measured).
pub fn text_width(text: &str, height: f64) -> f64 {
    0.6 * height * text.chars().count() as f64
}

/// Round tick values covering `low..high` with at most `max_count`
/// intervals: steps of 1, 2 or 5 times a power of ten, the first tick at
/// or below `low` and the last at or above `high`. Returns the ticks and
/// the step.
pub fn nice_ticks(low: f64, high: f64, max_count: usize) -> (Vec<f64>, f64) {
    let (low, high) = if low.is_finite() && high.is_finite() { (low, high) } else { (0.0, 1.0) };
    // A single value gets an axis of half its size either side.
    let half = if low != 0.0 { low.abs() * 0.5 } else { 1.0 };
    let (low, high) = if high > low { (low, high) } else { (low - half, high + half) };
    // Two intervals at least: a range across zero needs them.
    let max_count = max_count.max(2) as f64;
    let raw = (high - low) / max_count;
    let mut power = 10f64.powf(raw.log10().floor());
    let step = loop {
        if let Some(m) = [1.0, 2.0, 5.0].into_iter().find(|m| {
            let step = m * power;
            (high / step).ceil() - (low / step).floor() <= max_count + 1e-9
        }) {
            break m * power;
        }
        power *= 10.0;
    };
    let (first, last) = ((low / step + 1e-9).floor() as i64, (high / step - 1e-9).ceil() as i64);
    ((first..=last).map(|k| k as f64 * step).collect(), step)
}

/// Labels for the ticks of one axis with the given step, in one notation
/// for the whole axis: plain numbers with as many decimals as the step has
/// (so neighbouring ticks differ in their last digit and no label carries
/// digits the axis does not resolve); when the largest tick is 100 000 or
/// more, or the step below 0.001, every tick as a mantissa times the same
/// power of ten (`0.5×10⁵`, `1.0×10⁵`). Zero is `0`.
pub fn tick_labels(ticks: &[f64], step: f64) -> Vec<String> {
    let step_power = (step.log10() + 1e-9).floor() as i32;
    let largest = ticks.iter().map(|t| t.abs()).fold(0.0, f64::max);
    let scientific = largest >= 1e5 || step_power < -3;
    let exponent = if largest > 0.0 { (largest.log10() + 1e-9).floor() as i32 } else { 0 };
    ticks
        .iter()
        .map(|&value| {
            if value.abs() < step * 1e-6 {
                "0".to_string()
            } else if scientific {
                let decimals = (exponent - step_power).clamp(0, 6) as usize;
                format!("{:.decimals$}×10{}", value / 10f64.powi(exponent), superscript(exponent))
            } else {
                format!("{value:.*}", (-step_power).max(0) as usize)
            }
        })
        // The typographic minus sign, as printed figures use.
        .map(|label| label.replace('-', "−"))
        .collect()
}

/// The label of one tick, in the notation of its axis (see
/// [`tick_labels`]).
pub fn tick_label(value: f64, step: f64, ticks: &[f64]) -> String {
    let k = ticks.iter().position(|t| *t == value);
    match k {
        Some(k) => tick_labels(ticks, step).swap_remove(k),
        None => tick_labels(&[value], step).swap_remove(0),
    }
}

/// A decade on a logarithmic axis: plain between 0.001 and 10 000, else a
/// power of ten.
fn decade_label(exponent: i32) -> String {
    if (-3..5).contains(&exponent) {
        let value = 10f64.powi(exponent);
        format!("{value:.*}", (-exponent).max(0) as usize)
    } else {
        format!("10{}", superscript(exponent))
    }
}

/// One axis: its range (in drawing coordinates, log10 on a log axis), its
/// ticks and their labels.
#[derive(Clone, Debug)]
struct Axis {
    low: f64,
    high: f64,
    ticks: Vec<(f64, String)>,
}

/// The axis runs from tick to tick, except that an end tick more than half
/// a step beyond the data is dropped and the axis ends at the data: a
/// line reaching to −1/Km = −1.2 does not need an axis from −5.
fn trimmed(low: f64, high: f64, step: f64, ticks: Vec<(f64, String)>) -> Axis {
    let (first, last) = (ticks[0].0, ticks[ticks.len() - 1].0);
    let axis_low = if low - first > 0.5 * step { low } else { first };
    let axis_high = if last - high > 0.5 * step { high } else { last };
    let ticks = ticks.into_iter().filter(|t| t.0 >= axis_low - 1e-9 * step && t.0 <= axis_high + 1e-9 * step).collect();
    Axis { low: axis_low, high: axis_high, ticks }
}

fn linear_axis(low: f64, high: f64, max_count: usize) -> Axis {
    let (ticks, step) = nice_ticks(low, high, max_count);
    let labels = tick_labels(&ticks, step);
    trimmed(low, high, step, ticks.into_iter().zip(labels).collect())
}

fn log_axis(low: f64, high: f64) -> Axis {
    let (first, mut last) = (low.floor() as i32, high.ceil() as i32);
    if last == first {
        last += 1;
    }
    trimmed(low, high, 1.0, (first..=last).map(|k| (k as f64, decade_label(k))).collect())
}

/// A plot's x value in drawing coordinates (log10 on a logarithmic axis).
fn to_axis(plot: &PlotData, x: f64) -> f64 {
    if plot.log_x {
        x.log10()
    } else {
        x
    }
}

/// Extent of everything on the plot in drawing coordinates, padded by a
/// few per cent except where pinned at zero. Axes include zero when the
/// data do not cross it (rates and concentrations start at zero), except on
/// residual and quantile plots. Auxiliary segments count only by their
/// first end (the direct linear plot's lines start on the axis); spots
/// widen the vertical range to twice their height so the lines around them
/// are in view.
fn extent(plot: &PlotData, bars: &[(f64, f64, f64)]) -> ((f64, f64), (f64, f64)) {
    let series_points = plot.series.iter().flat_map(|s| s.points.iter().map(|p| (p.x, p.y)).chain(s.curve.iter().copied()));
    let all: Vec<(f64, f64)> = plot
        .points
        .iter()
        .map(|p| (p.x, p.y))
        .chain(plot.curve.iter().copied())
        .chain(series_points)
        .chain(plot.segments.iter().flat_map(|s| [s.0, (s.1 .0, s.0 .1)]))
        .chain(plot.spots.iter().flat_map(|m| [(m.x, m.y), (m.x, 2.0 * m.y)]))
        .chain(bars.iter().flat_map(|b| [(b.0, b.1), (b.0, b.2)]))
        .filter(|(x, _)| !plot.log_x || *x > 0.0)
        .map(|(x, y)| (to_axis(plot, x), y))
        .chain(plot.band.iter().flat_map(|b| [(b.from, f64::NAN), (b.to, f64::NAN)]))
        .collect();
    let span = |values: &mut dyn Iterator<Item = f64>, include_zero: bool| {
        let (mut low, mut high) = (f64::INFINITY, f64::NEG_INFINITY);
        for v in values.filter(|v| v.is_finite()) {
            low = low.min(v);
            high = high.max(v);
        }
        if !low.is_finite() {
            return (0.0, 1.0);
        }
        if include_zero {
            low = low.min(0.0);
            high = high.max(0.0);
        }
        let pad = if high > low { (high - low) * 0.04 } else { low.abs().max(1.0) * 0.1 };
        (if include_zero && low == 0.0 { 0.0 } else { low - pad }, if include_zero && high == 0.0 { 0.0 } else { high + pad })
    };
    // pH, 1/T and logarithms have no natural zero: those plots span their data.
    let include_zero = !matches!(
        plot.kind,
        PlotKind::Residuals | PlotKind::NormalQuantile | PlotKind::PhLog | PlotKind::Arrhenius | PlotKind::Eyring
    );
    (
        // The direct pH and temperature plots keep y from zero, not x.
        span(&mut all.iter().map(|p| p.0), include_zero && !plot.log_x && !matches!(plot.kind, PlotKind::PhDirect | PlotKind::TemperatureDirect)),
        span(&mut all.iter().map(|p| p.1), include_zero || plot.zero_line),
    )
}

/// Axis-aligned box in backend units.
#[derive(Clone, Copy, Debug, PartialEq)]
struct Rect {
    x0: f64,
    y0: f64,
    x1: f64,
    y1: f64,
}

impl Rect {
    fn contains(&self, (x, y): (f64, f64), margin: f64) -> bool {
        x >= self.x0 - margin && x <= self.x1 + margin && y >= self.y0 - margin && y <= self.y1 + margin
    }

    fn overlaps(&self, other: &Rect) -> bool {
        self.x0 < other.x1 && other.x0 < self.x1 && self.y0 < other.y1 && other.y0 < self.y1
    }
}

/// Where a key box that fits no inner corner goes.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Outside {
    /// Inside the plotting area.
    No,
    /// Right of the plotting area.
    Right,
    /// Under the horizontal axis label.
    Below,
}

/// The computed layout of one plot.
struct Layout {
    /// Top of the horizontal axis label.
    x_label_y: f64,
    area: Rect,
    x: Axis,
    y: Axis,
    /// Where the key box goes, when there is one.
    key: Option<Rect>,
}

impl Layout {
    fn map(&self, (x, y): (f64, f64)) -> (f64, f64) {
        let a = &self.area;
        (
            a.x0 + (x - self.x.low) / (self.x.high - self.x.low) * (a.x1 - a.x0),
            a.y1 - (y - self.y.low) / (self.y.high - self.y.low) * (a.y1 - a.y0),
        )
    }

    fn pixel(&self, at: (f64, f64)) -> (i32, i32) {
        let (x, y) = self.map(at);
        (x.round() as i32, y.round() as i32)
    }
}

/// One entry of the key box.
enum KeyEntry {
    /// A series: colour, whether it has a line, dashed, whether it has points.
    Series { label: String, colour: RGBColor, line: bool, dashed: bool, points: bool },
    /// A line of plain text.
    Text(String),
}

impl KeyEntry {
    fn text(&self) -> &str {
        match self {
            KeyEntry::Series { label, .. } => label,
            KeyEntry::Text(text) => text,
        }
    }
}

fn key_entries(plot: &PlotData, style: &Style) -> Vec<KeyEntry> {
    let mut entries = Vec::new();
    if !plot.series.is_empty() && plot.series.len() <= MAX_LEGEND_ENTRIES {
        for (k, s) in plot.series.iter().enumerate() {
            entries.push(KeyEntry::Series {
                label: s.label.clone(),
                colour: series_colour(k),
                line: s.curve.len() > 1,
                dashed: s.dashed,
                points: !s.points.is_empty(),
            });
        }
    }
    if let Some(text) = &style.constants {
        entries.extend(text.lines().filter(|l| !l.trim().is_empty()).map(|l| KeyEntry::Text(l.to_string())));
    }
    entries
}

/// Width and height of the key box.
fn key_size(entries: &[KeyEntry], style: &Style) -> (f64, f64) {
    let f = style.font();
    let sample = if entries.iter().any(|e| matches!(e, KeyEntry::Series { .. })) { 2.2 * f } else { 0.0 };
    let text = entries.iter().map(|e| text_width(e.text(), f)).fold(0.0, f64::max);
    (text + sample + 1.2 * f, entries.len() as f64 * 1.35 * f + 0.6 * f)
}

/// Everything drawn inside the plotting area, as pixel positions, for
/// choosing where the key box goes: points, and polylines sampled every
/// few pixels.
fn occupied(plot: &PlotData, layout: &Layout) -> Vec<(f64, f64)> {
    let inside = |p: &(f64, f64)| p.0.is_finite() && p.1.is_finite();
    let mut at: Vec<(f64, f64)> = plot
        .points
        .iter()
        .chain(plot.series.iter().flat_map(|s| s.points.iter()))
        .filter(|p| !plot.log_x || p.x > 0.0)
        .map(|p| layout.map((to_axis(plot, p.x), p.y)))
        .filter(inside)
        .collect();
    let mut lines: Vec<Vec<(f64, f64)>> = vec![plot.curve.clone()];
    lines.extend(plot.series.iter().map(|s| s.curve.clone()));
    lines.extend(plot.segments.iter().map(|s| vec![s.0, s.1]));
    // Marker lines run the full height.
    let (low, high) = (layout.y.low, layout.y.high);
    lines.extend(plot.marks.iter().map(|m| vec![(m.x, low), (m.x, high)]));
    for line in lines {
        let pixels: Vec<(f64, f64)> = line
            .iter()
            .filter(|p| !plot.log_x || p.0 > 0.0)
            .map(|p| layout.map((to_axis(plot, p.0), p.1)))
            .filter(inside)
            .collect();
        for pair in pixels.windows(2) {
            let length = ((pair[1].0 - pair[0].0).powi(2) + (pair[1].1 - pair[0].1).powi(2)).sqrt();
            let steps = (length / 3.0).ceil().clamp(1.0, 2000.0) as usize;
            for k in 0..=steps {
                let t = k as f64 / steps as f64;
                at.push((pair[0].0 + t * (pair[1].0 - pair[0].0), pair[0].1 + t * (pair[1].1 - pair[0].1)));
            }
        }
    }
    at
}

/// Boxes of texts drawn inside the plotting area (marker labels, spot
/// labels), which the key box must not cover.
fn inner_labels(plot: &PlotData, layout: &Layout, style: &Style) -> Vec<(Rect, String, HPos)> {
    let f = style.font();
    let a = layout.area;
    let mut out = Vec::new();
    for mark in &plot.marks {
        if plot.log_x && mark.x <= 0.0 {
            continue;
        }
        let (x, _) = layout.map((to_axis(plot, mark.x), layout.y.low));
        let w = text_width(&mark.label, f);
        // Beside the line, on the side with more room, a little below the
        // top edge: never across the dashed line itself.
        let right = x < a.x0 + 0.6 * (a.x1 - a.x0);
        let gap = 0.5 * f;
        let (x0, h) = if right { (x + gap, HPos::Left) } else { (x - gap - w, HPos::Right) };
        out.push((Rect { x0, y0: a.y0 + 0.4 * f, x1: x0 + w, y1: a.y0 + 1.4 * f }, mark.label.clone(), h));
    }
    for spot in &plot.spots {
        let (x, y) = layout.map((to_axis(plot, spot.x), spot.y));
        let text = format!("{} ({}, {})", spot.label, short(spot.x), short(spot.y));
        let w = text_width(&text, f);
        let left = x > a.x0 + 0.6 * (a.x1 - a.x0);
        let gap = 0.8 * f;
        let (x0, h) = if left { (x - gap - w, HPos::Left) } else { (x + gap, HPos::Left) };
        out.push((Rect { x0, y0: y - 1.2 * f, x1: x0 + w, y1: y - 0.2 * f }, text, h));
    }
    out
}

/// A number for a label on the plot: four significant figures.
fn short(value: f64) -> String {
    turnover_core::plots::family::short_number(value)
}

/// The title broken at spaces into lines that fit the figure's width.
fn title_lines(title: &str, style: &Style, width: f64) -> Vec<String> {
    let size = 1.15 * style.font();
    let room = width - 1.2 * style.font();
    let mut lines: Vec<String> = Vec::new();
    for word in title.split_whitespace() {
        match lines.last_mut() {
            Some(line) if text_width(&format!("{line} {word}"), size) <= room => {
                line.push(' ');
                line.push_str(word);
            }
            _ => lines.push(word.to_string()),
        }
    }
    lines
}

/// Lays the plot out in a `width` × `height` backend area.
fn layout(plot: &PlotData, style: &Style, width: f64, height: f64, bars: &[(f64, f64, f64)], key: (f64, f64), outside: Outside) -> Layout {
    let f = style.font();
    let margin = 0.6 * f;
    let tick_length = 0.35 * f;
    let top = if style.title { margin + title_lines(&plot.title, style, width).len() as f64 * 1.15 * f * 1.25 + 0.4 * f } else { margin + 0.6 * f };
    let below = if outside == Outside::Below { key.1 + 0.5 * f } else { 0.0 };
    let bottom = margin + 1.3 * f + tick_length + 0.3 * f + f + below;
    let plot_height = (height - top - bottom).max(2.0 * f);
    let ((x0, x1), (y0, y1)) = extent(plot, bars);
    let y = linear_axis(y0, y1, ((plot_height / (2.6 * f)).floor() as usize).clamp(2, 8));
    let y_label_width = y.ticks.iter().map(|t| text_width(&t.1, f)).fold(0.0, f64::max);
    let left = margin + 1.3 * f + y_label_width + tick_length + 0.3 * f;
    let key_room = if outside == Outside::Right { key.0 + 0.6 * f } else { 0.0 };
    let mut x = if plot.log_x { log_axis(x0, x1) } else { linear_axis(x0, x1, 8) };
    let mut right = margin;
    for _ in 0..4 {
        let last_half = x.ticks.last().map_or(0.0, |t| text_width(&t.1, f) / 2.0);
        right = margin + last_half.max(0.2 * f) + key_room;
        let plot_width = (width - left - right).max(2.0 * f);
        if plot.log_x {
            break;
        }
        // As many intervals as leave a gap of one em between labels.
        let widest = x.ticks.iter().map(|t| text_width(&t.1, f)).fold(0.0, f64::max);
        let fits = ((plot_width / (widest + f)).floor() as usize).clamp(2, 8);
        let next = linear_axis(x0, x1, fits);
        if next.ticks.len() == x.ticks.len() && next.ticks.iter().zip(&x.ticks).all(|(a, b)| a.1 == b.1) {
            break;
        }
        x = next;
    }
    // Drop decade labels that would collide on a crowded log axis.
    if plot.log_x {
        let plot_width = (width - left - right).max(2.0 * f);
        let per_decade = plot_width / (x.high - x.low);
        let widest = x.ticks.iter().map(|t| text_width(&t.1, f)).fold(0.0, f64::max);
        let every = ((widest + f) / per_decade).ceil().max(1.0) as usize;
        for (k, t) in x.ticks.iter_mut().enumerate() {
            if k % every != 0 {
                t.1.clear();
            }
        }
    }
    let area = Rect { x0: left, y0: top, x1: (width - right).max(left + 2.0 * f), y1: top + plot_height };
    Layout { x_label_y: height - margin - f - below, area, x, y, key: None }
}

/// Chooses the key box's place: the inner corner covering the fewest
/// drawn things (none, ideally) and no label; when every corner covers
/// something, outside to the right of the plotting area.
fn place_key(plot: &PlotData, style: &Style, width: f64, height: f64, bars: &[(f64, f64, f64)], entries: &[KeyEntry]) -> Layout {
    let key = key_size(entries, style);
    let mut inner = layout(plot, style, width, height, bars, key, Outside::No);
    if entries.is_empty() {
        return inner;
    }
    let f = style.font();
    let a = inner.area;
    let inset = 0.4 * f;
    let corners = [
        Rect { x0: a.x1 - inset - key.0, y0: a.y0 + inset, x1: a.x1 - inset, y1: a.y0 + inset + key.1 },
        Rect { x0: a.x0 + inset, y0: a.y0 + inset, x1: a.x0 + inset + key.0, y1: a.y0 + inset + key.1 },
        Rect { x0: a.x1 - inset - key.0, y0: a.y1 - inset - key.1, x1: a.x1 - inset, y1: a.y1 - inset },
        Rect { x0: a.x0 + inset, y0: a.y1 - inset - key.1, x1: a.x0 + inset + key.0, y1: a.y1 - inset },
    ];
    let drawn = occupied(plot, &inner);
    let labels = inner_labels(plot, &inner, style);
    let fits = |r: &Rect| r.x0 >= a.x0 && r.x1 <= a.x1 && r.y1 <= a.y1;
    let free = corners.iter().find(|r| {
        fits(r) && !drawn.iter().any(|p| r.contains(*p, style.px(3.0))) && !labels.iter().any(|(l, _, _)| l.overlaps(r))
    });
    if let Some(r) = free {
        inner.key = Some(*r);
        return inner;
    }
    // Outside: on the right when the key is narrow enough to leave the
    // plot most of the width, else under the axis label.
    if key.0 <= 0.3 * width {
        let mut outside = layout(plot, style, width, height, bars, key, Outside::Right);
        let a = outside.area;
        outside.key = Some(Rect { x0: a.x1 + 0.6 * f, y0: a.y0, x1: a.x1 + 0.6 * f + key.0, y1: a.y0 + key.1 });
        outside
    } else {
        let mut outside = layout(plot, style, width, height, bars, key, Outside::Below);
        let (x0, y0) = (outside.area.x0, outside.x_label_y + 1.3 * f);
        outside.key = Some(Rect { x0, y0, x1: x0 + key.0, y1: y0 + key.1 });
        outside
    }
}

/// Clips the segment a–b to the box (Liang & Barsky 1984), so long
/// auxiliary lines never spill outside the plotting area.
fn clip_segment(a: (f64, f64), b: (f64, f64), xr: (f64, f64), yr: (f64, f64)) -> Option<((f64, f64), (f64, f64))> {
    let (dx, dy) = (b.0 - a.0, b.1 - a.1);
    let mut t0: f64 = 0.0;
    let mut t1: f64 = 1.0;
    for (p, q) in [(-dx, a.0 - xr.0), (dx, xr.1 - a.0), (-dy, a.1 - yr.0), (dy, yr.1 - a.1)] {
        if p == 0.0 {
            if q < 0.0 {
                return None;
            }
        } else {
            let r = q / p;
            if p < 0.0 {
                t0 = t0.max(r);
            } else {
                t1 = t1.min(r);
            }
        }
    }
    (t0 <= t1).then(|| ((a.0 + t0 * dx, a.1 + t0 * dy), (a.0 + t1 * dx, a.1 + t1 * dy)))
}

type DrawResult<DB> = Result<(), DrawingAreaErrorKind<<DB as DrawingBackend>::ErrorType>>;

/// Draws a polyline in drawing coordinates, clipped to the axes, solid or
/// dashed (dash and gap in backend units).
fn polyline<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    layout: &Layout,
    line: &[(f64, f64)],
    style: ShapeStyle,
    dash: Option<(f64, f64)>,
) -> DrawResult<DB> {
    let (xr, yr) = ((layout.x.low, layout.x.high), (layout.y.low, layout.y.high));
    let mut run: Vec<(f64, f64)> = Vec::new();
    let mut runs: Vec<Vec<(f64, f64)>> = Vec::new();
    for pair in line.windows(2) {
        if !(pair[0].0.is_finite() && pair[0].1.is_finite() && pair[1].0.is_finite() && pair[1].1.is_finite()) {
            continue;
        }
        match clip_segment(pair[0], pair[1], xr, yr) {
            Some((a, b)) => {
                let (a, b) = (layout.map(a), layout.map(b));
                if run.last() != Some(&a) {
                    if run.len() > 1 {
                        runs.push(std::mem::take(&mut run));
                    }
                    run = vec![a];
                }
                run.push(b);
            }
            None => {
                if run.len() > 1 {
                    runs.push(std::mem::take(&mut run));
                }
                run.clear();
            }
        }
    }
    if run.len() > 1 {
        runs.push(run);
    }
    for run in runs {
        match dash {
            None => {
                let pixels: Vec<(i32, i32)> = run.iter().map(|p| (p.0.round() as i32, p.1.round() as i32)).collect();
                root.draw(&PathElement::new(pixels, style))?;
            }
            Some((on, off)) => {
                // Walk the polyline, drawing `on` units of every `on + off`.
                let mut phase = 0.0;
                for pair in run.windows(2) {
                    let (a, b) = (pair[0], pair[1]);
                    let length = ((b.0 - a.0).powi(2) + (b.1 - a.1).powi(2)).sqrt();
                    let mut s = 0.0;
                    while s < length {
                        let in_dash = phase < on;
                        // At least a micro-unit per step, so rounding
                        // at a dash's end cannot stall the walk.
                        let left = if in_dash { on - phase } else { on + off - phase }.max(1e-6);
                        let e = (s + left).min(length);
                        if in_dash {
                            let at = |u: f64| ((a.0 + (b.0 - a.0) * u / length).round() as i32, (a.1 + (b.1 - a.1) * u / length).round() as i32);
                            root.draw(&PathElement::new(vec![at(s), at(e)], style))?;
                        }
                        phase = (phase + e - s) % (on + off);
                        s = e;
                    }
                }
            }
        }
    }
    Ok(())
}

/// Draws `plot` on `root` in the screen style; see [`draw_plot_styled`].
pub fn draw_plot<DB: DrawingBackend>(root: &DrawingArea<DB, Shift>, plot: &PlotData) -> Result<Drawn, DrawingAreaErrorKind<DB::ErrorType>> {
    draw_plot_styled(root, plot, &Style::screen())
}

/// Draws `plot` on `root` and returns where each data point landed and the
/// plotting area's mapping.
pub fn draw_plot_styled<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    plot: &PlotData,
    style: &Style,
) -> Result<Drawn, DrawingAreaErrorKind<DB::ErrorType>> {
    root.fill(&WHITE)?;
    let (width, height) = root.dim_in_pixel();
    let (width, height) = (width as f64, height as f64);
    let f = style.font();
    // Replicate bars, per series when the plot has series.
    let groups: Vec<(Vec<turnover_core::plots::PlotPoint>, RGBColor)> = if plot.series.is_empty() {
        vec![(plot.points.clone(), INK)]
    } else {
        plot.series.iter().enumerate().map(|(k, s)| (s.points.clone(), series_colour(k))).collect()
    };
    // Bars in data x; drawn at `to_axis(x)`.
    let bars: Vec<(f64, f64, f64, RGBColor)> = groups
        .iter()
        .flat_map(|(points, colour)| {
            let shown: Vec<_> = points.iter().copied().filter(|p| !plot.log_x || p.x > 0.0).collect();
            replicate_bars(&shown, style.error_bars).into_iter().map(move |b| (b.x, b.low, b.high, *colour))
        })
        .collect();
    let bar_extent: Vec<(f64, f64, f64)> = bars.iter().map(|b| (b.0, b.1, b.2)).collect();
    let entries = key_entries(plot, style);
    let layout = place_key(plot, style, width, height, &bar_extent, &entries);
    let a = layout.area;
    let thin = style.whole(0.5);
    let px = |p: (f64, f64)| layout.pixel(p);
    let (ax0, ay0, ax1, ay1) = (a.x0.round() as i32, a.y0.round() as i32, a.x1.round() as i32, a.y1.round() as i32);

    // Title, centred on the figure, on as many lines as it needs.
    if style.title {
        for (k, line) in title_lines(&plot.title, style, width).into_iter().enumerate() {
            root.draw(&Text::new(
                line,
                ((width / 2.0).round() as i32, (0.6 * f + k as f64 * 1.15 * f * 1.25).round() as i32),
                style.text_style(1.15 * f, &INK, HPos::Center, VPos::Top),
            ))?;
        }
    }
    // Shaded band.
    if let Some(band) = &plot.band {
        let from = to_axis(plot, band.from).clamp(layout.x.low, layout.x.high);
        let to = to_axis(plot, band.to).clamp(layout.x.low, layout.x.high);
        let (l, _) = px((from, layout.y.low));
        let (r, _) = px((to, layout.y.low));
        root.draw(&Rectangle::new([(l, ay0), (r.max(l + 1), ay1)], POINT.mix(0.12).filled()))?;
    }
    // Grid and ticks.
    let tick_length = style.px(0.35 * style.font_pt).round() as i32;
    for (t, text) in &layout.x.ticks {
        let (x, _) = px((*t, layout.y.low));
        root.draw(&PathElement::new(vec![(x, ay0), (x, ay1)], GRID.stroke_width(thin)))?;
        root.draw(&PathElement::new(vec![(x, ay1), (x, ay1 + tick_length)], INK.stroke_width(thin)))?;
        if !text.is_empty() {
            root.draw(&Text::new(text.clone(), (x, ay1 + tick_length + (0.3 * f).round() as i32), style.text_style(f, &INK, HPos::Center, VPos::Top)))?;
        }
    }
    for (t, text) in &layout.y.ticks {
        let (_, y) = px((layout.x.low, *t));
        root.draw(&PathElement::new(vec![(ax0, y), (ax1, y)], GRID.stroke_width(thin)))?;
        root.draw(&PathElement::new(vec![(ax0 - tick_length, y), (ax0, y)], INK.stroke_width(thin)))?;
        root.draw(&Text::new(text.clone(), (ax0 - tick_length - (0.3 * f).round() as i32, y), style.text_style(f, &INK, HPos::Right, VPos::Center)))?;
    }
    // Axis lines (the plotting area's left and bottom edges), and lines
    // through zero where zero is inside the area. On a log axis zero is
    // nowhere, and log10 = 0 is [I] = 1, so no line is drawn there.
    root.draw(&PathElement::new(vec![(ax0, ay0), (ax0, ay1), (ax1, ay1)], INK.stroke_width(style.whole(0.75))))?;
    if (plot.zero_line || layout.x.low < 0.0) && layout.y.low < 0.0 && layout.y.high > 0.0 {
        polyline(root, &layout, &[(layout.x.low, 0.0), (layout.x.high, 0.0)], INK.mix(0.5).stroke_width(thin), None)?;
    }
    if !plot.log_x && layout.x.low < 0.0 && layout.x.high > 0.0 {
        polyline(root, &layout, &[(0.0, layout.y.low), (0.0, layout.y.high)], INK.mix(0.5).stroke_width(thin), None)?;
    }
    // Axis labels.
    // Axis labels centred on the plotting area, moved along their axis as
    // far as needed to stay inside the figure.
    let within = |centre: f64, length: f64, extent: f64| {
        let half = length / 2.0 + 0.3 * f;
        if 2.0 * half >= extent { extent / 2.0 } else { centre.clamp(half, extent - half) }
    };
    let x_centre = within((a.x0 + a.x1) / 2.0, text_width(&plot.x_label, f), width);
    let y_centre = within((a.y0 + a.y1) / 2.0, text_width(&plot.y_label, f), height);
    root.draw(&Text::new(
        plot.x_label.clone(),
        (x_centre.round() as i32, layout.x_label_y.round() as i32),
        style.text_style(f, &INK, HPos::Center, VPos::Top),
    ))?;
    root.draw(&Text::new(
        plot.y_label.clone(),
        ((0.6 * f).round() as i32, y_centre.round() as i32),
        style.text_style(f, &INK, HPos::Center, VPos::Top).transform(FontTransform::Rotate270),
    ))?;

    let axis_points = |points: &[(f64, f64)]| -> Vec<(f64, f64)> {
        points.iter().filter(|(x, y)| y.is_finite() && (!plot.log_x || *x > 0.0)).map(|(x, y)| (to_axis(plot, *x), *y)).collect()
    };
    for &(p, q) in &plot.segments {
        polyline(root, &layout, &axis_points(&[p, q]), INK.mix(0.35).stroke_width(thin), None)?;
    }
    if plot.curve.len() > 1 {
        polyline(root, &layout, &axis_points(&plot.curve), CURVE.stroke_width(style.whole(1.5)), None)?;
    }
    let radius = style.whole(2.6);
    let in_band = |x: f64| plot.band.as_ref().is_none_or(|b| x >= b.from && x <= b.to);
    let inside = |x: f64, y: f64| x >= layout.x.low && x <= layout.x.high && y >= layout.y.low && y <= layout.y.high;
    // Replicate bars under the points.
    let cap = style.px(2.2).round() as i32;
    for &(x, low, high, colour) in &bars {
        let x = to_axis(plot, x);
        let (bx, top) = px((x, high.min(layout.y.high)));
        let (_, bottom) = px((x, low.max(layout.y.low)));
        let stroke = colour.stroke_width(style.whole(0.75));
        root.draw(&PathElement::new(vec![(bx, top), (bx, bottom)], stroke))?;
        root.draw(&PathElement::new(vec![(bx - cap, top), (bx + cap, top)], stroke))?;
        root.draw(&PathElement::new(vec![(bx - cap, bottom), (bx + cap, bottom)], stroke))?;
    }
    let left_out = |root: &DrawingArea<DB, Shift>, at: (i32, i32)| -> DrawResult<DB> {
        root.draw(&Circle::new(at, radius + 1, LEFT_OUT.stroke_width(style.whole(1.2))))?;
        root.draw(&Cross::new(at, radius.saturating_sub(1).max(1), LEFT_OUT.stroke_width(thin)))?;
        Ok(())
    };
    // A mark at a pixel where one of the same look is already drawn is
    // skipped: it would change nothing but the darkness of the first one's
    // antialiased edge. Tens of thousands of points then cost what the
    // pixels they cover cost (a 100,000-row table drew in 2.2 s, one call
    // per point), in the canvas and in an exported SVG alike; every point
    // is still in the positions returned for clicking.
    let mut drawn_at: std::collections::HashSet<(i32, i32, usize, u8)> = std::collections::HashSet::new();
    if plot.series.is_empty() {
        for p in plot.points.iter().filter(|p| (!plot.log_x || p.x > 0.0) && inside(to_axis(plot, p.x), p.y)) {
            let at = px((to_axis(plot, p.x), p.y));
            let look = if p.excluded { 0 } else if in_band(p.x) { 1 } else { 2 };
            if !drawn_at.insert((at.0, at.1, usize::MAX, look)) {
                continue;
            }
            if p.excluded {
                left_out(root, at)?;
            } else {
                let colour = if in_band(p.x) { POINT.mix(1.0) } else { POINT.mix(0.35) };
                root.draw(&Circle::new(at, radius, colour.filled()))?;
            }
        }
    }
    for (k, series) in plot.series.iter().enumerate() {
        let colour = series_colour(k);
        let curve = axis_points(&series.curve);
        if curve.len() > 1 {
            let dash = series.dashed.then(|| (style.px(4.0), style.px(3.0)));
            polyline(root, &layout, &curve, colour.stroke_width(style.whole(1.5)), dash)?;
        }
        for p in series.points.iter().filter(|p| (!plot.log_x || p.x > 0.0) && inside(to_axis(plot, p.x), p.y)) {
            let at = px((to_axis(plot, p.x), p.y));
            if !drawn_at.insert((at.0, at.1, k, u8::from(p.excluded))) {
                continue;
            }
            if p.excluded {
                left_out(root, at)?;
            } else {
                root.draw(&Circle::new(at, radius, colour.filled()))?;
            }
        }
    }
    // Marker lines (dashed) and their labels beside them.
    for mark in &plot.marks {
        if plot.log_x && mark.x <= 0.0 {
            continue;
        }
        let x = to_axis(plot, mark.x);
        polyline(root, &layout, &[(x, layout.y.low), (x, layout.y.high)], INK.mix(0.7).stroke_width(thin), Some((style.px(4.0), style.px(3.0))))?;
    }
    for spot in &plot.spots {
        let (x, y) = px((to_axis(plot, spot.x), spot.y));
        let d = style.px(3.5).round() as i32;
        root.draw(&Polygon::new(vec![(x, y - d), (x + d, y), (x, y + d), (x - d, y)], CURVE.filled()))?;
    }
    for (rect, text, _) in inner_labels(plot, &layout, style) {
        root.draw(&Text::new(text, (rect.x0.round() as i32, rect.y0.round() as i32), style.text_style(f, &INK, HPos::Left, VPos::Top)))?;
    }
    // The key box.
    if let Some(key) = layout.key {
        let (kx0, ky0, kx1, ky1) = (key.x0.round() as i32, key.y0.round() as i32, key.x1.round() as i32, key.y1.round() as i32);
        root.draw(&Rectangle::new([(kx0, ky0), (kx1, ky1)], WHITE.mix(0.9).filled()))?;
        root.draw(&Rectangle::new([(kx0, ky0), (kx1, ky1)], GRID.stroke_width(thin)))?;
        let has_samples = entries.iter().any(|e| matches!(e, KeyEntry::Series { .. }));
        for (k, entry) in entries.iter().enumerate() {
            let y = key.y0 + 0.3 * f + (k as f64 + 0.5) * 1.35 * f;
            let text_x = key.x0 + 0.6 * f + if has_samples { 2.2 * f } else { 0.0 };
            if let KeyEntry::Series { colour, line, dashed, points, .. } = entry {
                let (s0, s1) = ((key.x0 + 0.6 * f).round() as i32, (key.x0 + 2.3 * f).round() as i32);
                let yi = y.round() as i32;
                if *line {
                    let stroke = colour.stroke_width(style.whole(1.5));
                    if *dashed {
                        let third = (s1 - s0) / 3;
                        root.draw(&PathElement::new(vec![(s0, yi), (s0 + third, yi)], stroke))?;
                        root.draw(&PathElement::new(vec![(s1 - third, yi), (s1, yi)], stroke))?;
                    } else {
                        root.draw(&PathElement::new(vec![(s0, yi), (s1, yi)], stroke))?;
                    }
                }
                if *points {
                    root.draw(&Circle::new(((s0 + s1) / 2, yi), radius, colour.filled()))?;
                }
            }
            root.draw(&Text::new(entry.text().to_string(), (text_x.round() as i32, y.round() as i32), style.text_style(f, &INK, HPos::Left, VPos::Center)))?;
        }
    }

    let area = PlotArea {
        left: a.x0,
        top: a.y0,
        width: a.x1 - a.x0,
        height: a.y1 - a.y0,
        x_min: if plot.log_x { 10f64.powf(layout.x.low) } else { layout.x.low },
        x_max: if plot.log_x { 10f64.powf(layout.x.high) } else { layout.x.high },
        y_min: layout.y.low,
        y_max: layout.y.high,
        log_x: plot.log_x,
    };
    let points = plot
        .points
        .iter()
        .filter(|p| !plot.log_x || p.x > 0.0)
        .map(|p| {
            let (x, y) = px((to_axis(plot, p.x), p.y));
            PointPosition { row: p.row, x, y }
        })
        .collect();
    Ok(Drawn { points, area })
}

/// Draws the plate view: one box per well of the grid, row and column
/// labels when the geometry comes from well names, each trace on the
/// plate's shared time and value axes with its window shaded and its
/// fitted line, readings past the detector's limit as brick-red ticks at
/// the top, missing cells as grey ticks at the bottom, a brick-red corner
/// on flagged wells and a grey fill on wells left out. `selected` is
/// outlined in amber. Returns every well's box.
pub fn draw_plate<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    view: &PlateView,
    selected: Option<&str>,
    style: &Style,
) -> Result<Vec<WellBox>, DrawingAreaErrorKind<DB::ErrorType>> {
    root.fill(&WHITE)?;
    let (width, height) = root.dim_in_pixel();
    let (width, height) = (width as f64, height as f64);
    let f = style.font();
    let labelled = view.from_well_names;
    let title = if style.title { 1.6 * f } else { 0.0 };
    // The shared axes, stated once under the grid.
    let (t0, t1) = view.time_range;
    let (v0, v1) = view.value_range;
    let (t_ticks, t_step) = nice_ticks(t0.min(0.0).max(if t0 >= 0.0 { 0.0 } else { t0 }), t1, 4);
    let (v_ticks, v_step) = nice_ticks(if v0 >= 0.0 { 0.0 } else { v0 }, v1, 4);
    let (tl, th) = (t_ticks[0], t_ticks[t_ticks.len() - 1]);
    let (vl, vh) = (v_ticks[0], v_ticks[v_ticks.len() - 1]);
    let key = format!(
        "Each well: {} from {} to {}; {} from {} to {}.",
        view.x_label,
        tick_label(tl, t_step, &t_ticks),
        tick_label(th, t_step, &t_ticks),
        view.y_label,
        tick_label(vl, v_step, &v_ticks),
        tick_label(vh, v_step, &v_ticks)
    );
    let left = if labelled { 1.4 * f } else { 0.2 * f };
    let top = title + if labelled { 1.4 * f } else { 0.2 * f };
    let bottom = 1.6 * f;
    let cell_w = ((width - left - 0.2 * f) / view.columns.max(1) as f64).max(4.0);
    let cell_h = ((height - top - bottom) / view.rows.max(1) as f64).max(4.0);
    if style.title {
        root.draw(&Text::new("Plate".to_string(), ((width / 2.0) as i32, (0.3 * f) as i32), style.text_style(1.15 * f, &INK, HPos::Center, VPos::Top)))?;
    }
    let small = f.min(cell_h * 0.45).min(cell_w * 0.45);
    if labelled {
        for (c, text) in view.column_labels.iter().enumerate() {
            let x = left + (c as f64 + 0.5) * cell_w;
            root.draw(&Text::new(text.clone(), (x.round() as i32, (title + 0.3 * f).round() as i32), style.text_style(small, &INK, HPos::Center, VPos::Top)))?;
        }
        for (r, text) in view.row_labels.iter().enumerate() {
            let y = top + (r as f64 + 0.5) * cell_h;
            root.draw(&Text::new(text.clone(), ((0.3 * f).round() as i32, y.round() as i32), style.text_style(small, &INK, HPos::Left, VPos::Center)))?;
        }
    }
    let mut boxes = Vec::with_capacity(view.wells.len());
    let thin = style.whole(0.5);
    // Every position of the grid, so the plate's shape shows.
    for row in 0..view.rows {
        for column in 0..view.columns {
            let (x0, y0) = (left + column as f64 * cell_w, top + row as f64 * cell_h);
            root.draw(&Rectangle::new([((x0 + 1.0) as i32, (y0 + 1.0) as i32), ((x0 + cell_w - 1.0) as i32, (y0 + cell_h - 1.0) as i32)], GRID.mix(0.6).stroke_width(thin)))?;
        }
    }
    for well in &view.wells {
        let x0 = left + well.column as f64 * cell_w;
        let y0 = top + well.row as f64 * cell_h;
        boxes.push(WellBox { name: well.name.clone(), x: x0, y: y0, w: cell_w, h: cell_h });
        let (bx0, by0, bx1, by1) = ((x0 + 1.0) as i32, (y0 + 1.0) as i32, (x0 + cell_w - 1.0) as i32, (y0 + cell_h - 1.0) as i32);
        let is_selected = selected == Some(well.name.as_str());
        let fill = if well.excluded { RGBColor(241, 239, 234) } else { WHITE };
        root.draw(&Rectangle::new([(bx0, by0), (bx1, by1)], fill.filled()))?;
        let pad = (cell_w.min(cell_h) * 0.08).max(1.5);
        let inner_top = if labelled { y0 + pad } else { y0 + pad + small };
        let (ix0, iy0, ix1, iy1) = (x0 + pad, inner_top, x0 + cell_w - pad, y0 + cell_h - pad);
        let map = |(t, v): (f64, f64)| {
            (
                (ix0 + (t - tl) / (th - tl).max(f64::MIN_POSITIVE) * (ix1 - ix0)).round() as i32,
                (iy1 - (v.clamp(vl, vh) - vl) / (vh - vl).max(f64::MIN_POSITIVE) * (iy1 - iy0)).round() as i32,
            )
        };
        if let Some((a, b)) = well.window {
            let (l, _) = map((a, vl));
            let (r, _) = map((b, vl));
            root.draw(&Rectangle::new([(l, iy0 as i32), (r.max(l + 1), iy1 as i32)], POINT.mix(0.15).filled()))?;
        }
        let colour = if well.role == turnover_core::traces::Role::Sample { POINT } else { MUTED };
        if well.readings.len() > 1 {
            root.draw(&PathElement::new(well.readings.iter().map(|p| map(*p)).collect::<Vec<_>>(), colour.stroke_width(thin)))?;
        }
        if well.line.len() == 2 {
            root.draw(&PathElement::new(well.line.iter().map(|p| map(*p)).collect::<Vec<_>>(), CURVE.stroke_width(thin)))?;
        }
        for t in &well.over_limit {
            let (x, _) = map((*t, vl));
            root.draw(&PathElement::new(vec![(x, iy0 as i32), (x, (iy0 + pad * 1.5) as i32)], LEFT_OUT.stroke_width(thin)))?;
        }
        for t in &well.missing {
            let (x, _) = map((*t, vl));
            root.draw(&PathElement::new(vec![(x, iy1 as i32), (x, (iy1 - pad * 1.5) as i32)], MUTED.stroke_width(thin)))?;
        }
        if !well.flags.is_empty() {
            let d = (cell_w.min(cell_h) * 0.22) as i32;
            root.draw(&Polygon::new(vec![(bx1 - d, by0), (bx1, by0), (bx1, by0 + d)], LEFT_OUT.filled()))?;
        }
        if !labelled {
            root.draw(&Text::new(well.name.clone(), ((x0 + pad) as i32, (y0 + pad * 0.5) as i32), style.text_style(small, &INK, HPos::Left, VPos::Top)))?;
        }
        let outline = if is_selected { CURVE.stroke_width(style.whole(1.5)) } else { GRID.stroke_width(thin) };
        root.draw(&Rectangle::new([(bx0, by0), (bx1, by1)], outline))?;
    }
    root.draw(&Text::new(key, ((left).round() as i32, (height - 1.3 * f).round() as i32), style.text_style(f, &INK, HPos::Left, VPos::Top)))?;
    Ok(boxes)
}

/// Options of an exported figure, as the page sends them (JSON).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct FigureOptions {
    /// Width of the figure in millimetres (20 to 500; rounded to 0.1 mm).
    pub width_mm: f64,
    /// Height of the figure in millimetres (20 to 500; rounded to 0.1 mm).
    pub height_mm: f64,
    /// Size of the text in points (4 to 24); the title is 15 % larger.
    pub font_pt: f64,
    /// Whether the plot's title is printed above it.
    pub title: bool,
    /// Lines of text printed on the plot in the key box, such as constants.
    pub constants: Option<String>,
    /// Replicate error bars: `none`, `sd` or `sem`.
    pub error_bars: Spread,
}

impl Default for FigureOptions {
    /// One journal column (85 mm) by 65 mm, 8 pt text, no title.
    fn default() -> FigureOptions {
        FigureOptions { width_mm: 85.0, height_mm: 65.0, font_pt: 8.0, title: false, constants: None, error_bars: Spread::None }
    }
}

/// Backend units of an exported figure per millimetre: the SVG's user
/// unit is 0.1 mm, so millimetre sizes are whole numbers of units.
const UNITS_PER_MM: f64 = 10.0;

impl FigureOptions {
    /// Checks the options, with a sentence for people when they are out of
    /// range.
    pub fn check(&self) -> Result<(), String> {
        for (name, value, low, high) in
            [("width_mm", self.width_mm, 20.0, 500.0), ("height_mm", self.height_mm, 20.0, 500.0), ("font_pt", self.font_pt, 4.0, 24.0)]
        {
            if !(value.is_finite() && (low..=high).contains(&value)) {
                return Err(format!("{name} must be between {low} and {high}; it is {value}"));
            }
        }
        Ok(())
    }

    fn size(&self) -> (u32, u32) {
        ((self.width_mm * UNITS_PER_MM).round() as u32, (self.height_mm * UNITS_PER_MM).round() as u32)
    }

    fn style(&self) -> Style {
        Style {
            unit: UNITS_PER_MM * 25.4 / 72.0,
            font_pt: self.font_pt,
            font_scale: 1.24,
            title: self.title,
            constants: self.constants.clone(),
            error_bars: self.error_bars,
        }
    }
}

/// Gives an SVG document written by plotters its size in millimetres (the
/// viewBox stays in 0.1 mm units).
fn in_millimetres(svg: String, size: (u32, u32)) -> String {
    let pixels = format!("width=\"{}\" height=\"{}\"", size.0, size.1);
    let mm = format!("width=\"{}mm\" height=\"{}mm\"", size.0 as f64 / UNITS_PER_MM, size.1 as f64 / UNITS_PER_MM);
    svg.replacen(&pixels, &mm, 1)
}

/// One plot as a figure: an SVG document `width_mm` × `height_mm`.
pub fn figure_svg(plot: &PlotData, options: &FigureOptions) -> Result<String, String> {
    figure_panels_svg(&[plot], options)
}

/// Several plots side by side (up to three in a row, then further rows)
/// in one SVG document of the given size, each panel lettered A, B, C in
/// bold at its top left. One plot gives an unlettered figure.
pub fn figure_panels_svg(plots: &[&PlotData], options: &FigureOptions) -> Result<String, String> {
    options.check()?;
    if plots.is_empty() {
        return Err("no plot to draw".to_string());
    }
    let size = options.size();
    let style = options.style();
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
        let columns = plots.len().min(3);
        let rows = plots.len().div_ceil(columns);
        let panels = root.split_evenly((rows, columns));
        for (k, (plot, panel)) in plots.iter().zip(&panels).enumerate() {
            draw_plot_styled(panel, plot, &style).map_err(|e| e.to_string())?;
            if plots.len() > 1 {
                let letter = ((b'A' + (k % 26) as u8) as char).to_string();
                let font = FontDesc::new(FontFamily::Name(FONT_FAMILY), 1.2 * style.font() * style.font_scale, FontStyle::Bold);
                let text_style = TextStyle::from(font).color(&INK).pos(Pos::new(HPos::Left, VPos::Top));
                let at = ((0.3 * style.font()).round() as i32, (0.3 * style.font()).round() as i32);
                panel.draw(&Text::new(letter, at, text_style)).map_err(|e| e.to_string())?;
            }
        }
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(in_millimetres(svg, size))
}

/// The plate view as a figure.
pub fn plate_svg(view: &PlateView, options: &FigureOptions) -> Result<String, String> {
    options.check()?;
    let size = options.size();
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
        draw_plate(&root, view, None, &options.style()).map_err(|e| e.to_string())?;
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(in_millimetres(svg, size))
}

/// The plot as an SVG document `width` × `height` pixels, in the screen
/// style (the page's earlier export).
pub fn plot_svg(plot: &PlotData, width: u32, height: u32) -> Result<String, String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        let style = Style { font_scale: 1.24, ..Style::screen() };
        draw_plot_styled(&root, plot, &style).map_err(|e| e.to_string())?;
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;
    use turnover_core::plots::traces::{enzyme_check_plot, plate_view, progress_plot, trace_detail_plot, TracePlotSource};

    /// The estimated box of one `<text>` of an SVG written by plotters.
    ///
    /// Approximation (no font is measured): every character is 0.6 em wide
    /// and a line is 1 em high, the `font-size`; `text-anchor` places the
    /// box horizontally, and plotters' `dy` (`0.76em` top, `0.5ex` middle,
    /// `-0.5ex` bottom) vertically; `rotate(270, x, y)` turns the box about
    /// its anchor.
    #[derive(Debug, Clone)]
    struct TextBox {
        text: String,
        x0: f64,
        y0: f64,
        x1: f64,
        y1: f64,
    }

    fn attribute(node: &roxmltree::Node, name: &str) -> f64 {
        node.attribute(name).unwrap_or_else(|| panic!("no {name}")).parse().unwrap()
    }

    fn text_boxes(svg: &str) -> Vec<TextBox> {
        let document = roxmltree::Document::parse(svg).expect("the SVG parses as XML");
        document
            .descendants()
            .filter(|n| n.has_tag_name("text"))
            .map(|n| {
                let text = n.text().unwrap_or("").trim().to_string();
                let (x, y) = (attribute(&n, "x"), attribute(&n, "y"));
                let size = attribute(&n, "font-size");
                let width = 0.6 * size * text.chars().count() as f64;
                let (a, b) = match n.attribute("text-anchor") {
                    Some("middle") => (-width / 2.0, width / 2.0),
                    Some("end") => (-width, 0.0),
                    _ => (0.0, width),
                };
                let (c, d) = match n.attribute("dy") {
                    Some("0.76em") => (0.0, size),
                    Some("0.5ex") => (-size / 2.0, size / 2.0),
                    _ => (-size, 0.0),
                };
                if n.attribute("transform").is_some_and(|t| t.starts_with("rotate(270")) {
                    TextBox { text, x0: x + c, x1: x + d, y0: y - b, y1: y - a }
                } else {
                    TextBox { text, x0: x + a, x1: x + b, y0: y + c, y1: y + d }
                }
            })
            .collect()
    }

    fn assert_no_overlap(svg: &str, what: &str) {
        let boxes = text_boxes(svg);
        let (w, h) = svg_size(svg);
        for (k, a) in boxes.iter().enumerate() {
            assert!(a.x0 >= -0.5 && a.y0 >= -0.5 && a.x1 <= w + 0.5 && a.y1 <= h + 0.5, "{what}: '{}' leaves the figure {a:?}", a.text);
            for b in &boxes[k + 1..] {
                let overlap = a.x0 < b.x1 && b.x0 < a.x1 && a.y0 < b.y1 && b.y0 < a.y1;
                assert!(!overlap, "{what}: '{}' {a:?} overlaps '{}' {b:?}", a.text, b.text);
            }
        }
    }

    fn svg_size(svg: &str) -> (f64, f64) {
        let document = roxmltree::Document::parse(svg).unwrap();
        let view_box: Vec<f64> = document.root_element().attribute("viewBox").unwrap().split(' ').map(|v| v.parse().unwrap()).collect();
        (view_box[2], view_box[3])
    }

    fn circles(svg: &str) -> Vec<(f64, f64)> {
        let document = roxmltree::Document::parse(svg).unwrap();
        document.descendants().filter(|n| n.has_tag_name("circle")).map(|n| (attribute(&n, "cx"), attribute(&n, "cy"))).collect()
    }

    /// Markers expected: one per drawable point (filled disc or ring), plus
    /// one per legend entry whose series has points.
    fn expected_markers(plot: &PlotData) -> usize {
        let drawable = |p: &&turnover_core::plots::PlotPoint| !plot.log_x || p.x > 0.0;
        if plot.series.is_empty() {
            plot.points.iter().filter(drawable).count()
        } else {
            let points: usize = plot.series.iter().map(|s| s.points.iter().filter(drawable).count()).sum();
            let legend = if plot.series.len() <= MAX_LEGEND_ENTRIES { plot.series.iter().filter(|s| !s.points.is_empty()).count() } else { 0 };
            points + legend
        }
    }

    /// Labels of dimensionless quantities, which carry no unit.
    const DIMENSIONLESS: [&str; 3] = ["normal score", "studentised residual", "√w·(v − fitted v)"];

    fn check_plot(plot: &PlotData, svg: &str, what: &str) {
        assert_no_overlap(svg, what);
        assert_eq!(circles(svg).len(), expected_markers(plot), "{what}: one marker per point");
        let texts: Vec<String> = text_boxes(svg).into_iter().map(|b| b.text).collect();
        for label in [&plot.x_label, &plot.y_label] {
            assert!(texts.contains(label), "{what}: axis label '{label}' not drawn");
            assert!(label.contains('(') || DIMENSIONLESS.contains(&label.as_str()), "{what}: '{label}' has no unit");
        }
        // Tick labels are short round numbers.
        for t in &texts {
            if t.parse::<f64>().is_ok() {
                let digits = t.trim_start_matches('-').replace('.', "").trim_start_matches('0').len();
                assert!(digits <= 5, "{what}: tick '{t}'");
            }
        }
    }

    fn rate_analysis() -> turnover_core::rates::RateAnalysis {
        use turnover_core::rates::{analyse_rates, RateRequest};
        // Duplicates at every [S], made up for this test.
        let text = "[S] (mM)\tv (µM/min)\n0.1\t1.9\n0.1\t2.2\n0.2\t3.1\n0.2\t3.4\n0.5\t5.2\n0.5\t5.0\n1\t6.4\n1\t6.9\n2\t7.5\n2\t7.2\n5\t8.3\n5\t8.6\n";
        let mut request = RateRequest { text: text.into(), ..RateRequest::default() };
        request.excluded_lines = vec![3];
        analyse_rates(&request).unwrap()
    }

    fn family() -> (turnover_core::inhibition::InhibitionAnalysis, turnover_core::dose::DoseAnalysis, turnover_core::dose::DoseAnalysis) {
        use turnover_core::dose::{analyse_dose, DoseRequest};
        use turnover_core::inhibition::{analyse_inhibition, InhibitionRequest};
        let text = "[S] (mM)\t0\t5 µM\t10 µM\n0.2\t2.9\t1.6\t1.2\n0.5\t5.1\t3.3\t2.4\n1\t6.6\t4.9\t3.9\n3\t8.6\t7.4\t6.5\n";
        let a = analyse_inhibition(&InhibitionRequest { text: text.into(), ..Default::default() }).unwrap();
        let dose = "[I] (nM)\tactivity (%)\n0\t100\n1\t91\n3\t75\n10\t48\n30\t22\n100\t8\n300\t3\n";
        let d = analyse_dose(&DoseRequest { text: dose.into(), model: "ic50".into(), ..Default::default() }).unwrap();
        let m = analyse_dose(&DoseRequest { text: dose.into(), model: "morrison".into(), enzyme: Some(2.0), ..Default::default() }).unwrap();
        (a, d, m)
    }

    fn trace_plots() -> (Vec<PlotData>, PlateView) {
        use turnover_core::traces::{analyse_traces, TraceRequest};
        // Made-up plate: product rising with slight curvature, after a
        // blank subtraction that leaves the first readings just below zero.
        let names = ["A1", "A2", "A3", "B1", "B2", "B3"];
        let mut text = format!("time (min)\t{}\n", names.join("\t"));
        for k in 0..12 {
            let t = k as f64 * 0.5;
            let row: Vec<String> = (0..names.len()).map(|w| format!("{:.4}", -0.002 + 0.01 * (w + 1) as f64 * t * (1.0 - 0.03 * t))).collect();
            text.push_str(&format!("{t}\t{}\n", row.join("\t")));
        }
        let layout = "trace\tS (mM)\tE (nM)\nA1\t1\t1\nA2\t1\t2\nA3\t1\t3\nB1\t1\t4\nB2\t1\t5\nB3\t1\t6\n";
        let request = TraceRequest { traces: text, layout: layout.into(), epsilon: Some(6220.0), path_cm: Some(1.0), ..TraceRequest::default() };
        let analysis = analyse_traces(&request).unwrap();
        let source: TracePlotSource = serde_json::from_str(&serde_json::to_string(&analysis).unwrap()).unwrap();
        let fit = turnover_core::progress::fit_progress(&analysis).unwrap();
        let mut plots = vec![trace_detail_plot(&source.traces[2], &source.units)];
        plots.extend(source.enzyme_checks.iter().map(|c| enzyme_check_plot(c, &source.units)));
        plots.push(progress_plot(&fit.curves, &source.units));
        (plots, plate_view(&source.traces, &source.units))
    }

    fn every_plot() -> Vec<PlotData> {
        let (a, d, m) = family();
        let mut plots = rate_analysis().plots;
        plots.extend(a.plots);
        plots.extend(d.plots);
        plots.extend(m.plots);
        plots.extend(trace_plots().0);
        plots
    }

    #[test]
    fn every_plot_as_a_figure_parses_labels_its_axes_and_has_no_overlapping_text() {
        let plots = every_plot();
        assert!(plots.iter().any(|p| p.kind == PlotKind::RateAgainstEnzyme), "the trace plate has a v against [E] check");
        let sizes = [
            FigureOptions::default(),
            FigureOptions { title: true, ..FigureOptions::default() },
            FigureOptions { width_mm: 180.0, height_mm: 120.0, font_pt: 9.0, title: true, ..FigureOptions::default() },
            FigureOptions { width_mm: 60.0, height_mm: 50.0, font_pt: 6.0, ..FigureOptions::default() },
        ];
        for plot in &plots {
            for options in &sizes {
                let svg = figure_svg(plot, options).unwrap();
                check_plot(plot, &svg, &format!("{} at {} mm", plot.kind.name(), options.width_mm));
                assert!(svg.contains(&format!("width=\"{}mm\"", options.width_mm)), "{}", &svg[..200]);
                assert_eq!(svg_size(&svg), (options.width_mm * 10.0, options.height_mm * 10.0));
                assert!(svg.contains("font-family=\"Helvetica, Arial, &apos;Liberation Sans&apos;, sans-serif\""));
                let first_word = plot.title.split(' ').next().unwrap();
                let title_drawn = text_boxes(&svg).iter().any(|b| plot.title.starts_with(&b.text) && b.text.starts_with(first_word) && b.text.len() > 1);
                assert_eq!(title_drawn, options.title, "{}: title on or off", plot.kind.name());
            }
            // The page's canvas sizes.
            for (width, height) in [(640, 460), (560, 380), (400, 320), (480, 300)] {
                let svg = plot_svg(plot, width, height).unwrap();
                check_plot(plot, &svg, &format!("{} on a {width} × {height} canvas", plot.kind.name()));
            }
        }
    }


    /// 8 pt text in a figure whose user unit is 0.1 mm: 8 × 25.4/72 mm =
    /// 2.822 mm, written by plotters as the size it was given.
    #[test]
    fn figure_fonts_follow_the_point_size() {
        let plot = &rate_analysis().plots[0];
        let svg = figure_svg(plot, &FigureOptions::default()).unwrap();
        let document = roxmltree::Document::parse(&svg).unwrap();
        let label = document.descendants().find(|n| n.has_tag_name("text") && n.text().map(str::trim) == Some(plot.x_label.as_str())).unwrap();
        let size = attribute(&label, "font-size");
        assert!((size - 8.0 * 254.0 / 72.0).abs() < 1e-6, "{size}");
    }

    #[test]
    fn legends_hide_no_data() {
        let (a, _, _) = family();
        for plot in &a.plots {
            for svg in [plot_svg(plot, 640, 460).unwrap(), plot_svg(plot, 480, 360).unwrap(), figure_svg(plot, &FigureOptions::default()).unwrap()] {
                let document = roxmltree::Document::parse(&svg).unwrap();
                let key = document
                    .descendants()
                    .find(|n| n.has_tag_name("rect") && n.attribute("opacity") == Some("0.9"))
                    .unwrap_or_else(|| panic!("{}: no key box", plot.kind.name()));
                let (x, y, w, h) = (attribute(&key, "x"), attribute(&key, "y"), attribute(&key, "width"), attribute(&key, "height"));
                let inside = circles(&svg).into_iter().filter(|(cx, cy)| *cx >= x && *cx <= x + w && *cy >= y && *cy <= y + h).count();
                let samples = plot.series.iter().filter(|s| !s.points.is_empty()).count();
                assert_eq!(inside, samples, "{}: only the key's own samples are inside it", plot.kind.name());
            }
        }
    }

    /// The dose plot draws no solid line at [I] = 1 (log10 [I] = 0), and
    /// the IC50 label stands beside its dashed line.
    #[test]
    fn dose_plot_has_no_stray_line_and_a_clear_ic50_label() {
        let (_, d, _) = family();
        let plot = &d.plots[0];
        let mut svg = String::new();
        let drawn = {
            let root = SVGBackend::with_string(&mut svg, (640, 460)).into_drawing_area();
            let drawn = draw_plot_styled(&root, plot, &Style { font_scale: 1.24, ..Style::screen() }).unwrap();
            root.present().unwrap();
            drawn
        };
        let area = drawn.area;
        let document = roxmltree::Document::parse(&svg).unwrap();
        let ink = "#263238";
        for line in document.descendants().filter(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(ink)) {
            let points: Vec<(f64, f64)> = line
                .attribute("points")
                .unwrap()
                .split_whitespace()
                .map(|p| {
                    let (x, y) = p.split_once(',').unwrap();
                    (x.parse().unwrap(), y.parse().unwrap())
                })
                .collect();
            let vertical_span = points.iter().all(|p| p.0 == points[0].0) && (points[0].1 - points[points.len() - 1].1).abs() > area.height * 0.5;
            if vertical_span {
                assert!((points[0].0 - area.left).abs() <= 1.0, "a solid vertical line at x = {} px", points[0].0);
            }
        }
        let ic50 = plot.marks[0].x;
        let mark_x = area.left + (ic50.log10() - area.x_min.log10()) / (area.x_max.log10() - area.x_min.log10()) * area.width;
        let label = text_boxes(&svg).into_iter().find(|b| b.text.starts_with("IC50")).expect("an IC50 label");
        assert!(label.x0 > mark_x || label.x1 < mark_x, "label {label:?} crosses its line at {mark_x}");
    }

    #[test]
    fn axes_do_not_run_negative_unless_the_data_do() {
        for plot in every_plot() {
            let mut svg = String::new();
            let root = SVGBackend::with_string(&mut svg, (640, 460)).into_drawing_area();
            let drawn = draw_plot(&root, &plot).unwrap();
            let ((x_low, _), (y_low, _)) = extent(&plot, &[]);
            if x_low >= 0.0 && !plot.log_x {
                assert!(drawn.area.x_min >= 0.0, "{}: x from {}", plot.kind.name(), drawn.area.x_min);
            }
            if y_low >= 0.0 {
                assert!(drawn.area.y_min >= 0.0, "{}: y from {}", plot.kind.name(), drawn.area.y_min);
            }
        }
        // The trace detail of readings that start just below zero (blank
        // subtraction) goes below zero by one tick only.
        let (plots, _) = trace_plots();
        let detail = &plots[0];
        let mut svg = String::new();
        let root = SVGBackend::with_string(&mut svg, (640, 460)).into_drawing_area();
        let drawn = draw_plot(&root, detail).unwrap();
        let lowest = detail.points.iter().map(|p| p.y).fold(f64::INFINITY, f64::min);
        let a = drawn.area;
        assert!(lowest < 0.0 && a.y_min < 0.0 && a.y_min > -0.25 * (a.y_max - a.y_min), "{a:?}");
    }

    /// The mapping returned to the page puts each point where it was drawn.
    #[test]
    fn the_returned_mapping_reproduces_the_point_positions() {
        for plot in every_plot() {
            let mut svg = String::new();
            let root = SVGBackend::with_string(&mut svg, (640, 460)).into_drawing_area();
            let drawn = draw_plot(&root, &plot).unwrap();
            let a = drawn.area;
            for (p, at) in plot.points.iter().filter(|p| !plot.log_x || p.x > 0.0).zip(&drawn.points) {
                let fx = if a.log_x { (p.x.log10() - a.x_min.log10()) / (a.x_max.log10() - a.x_min.log10()) } else { (p.x - a.x_min) / (a.x_max - a.x_min) };
                let fy = (p.y - a.y_min) / (a.y_max - a.y_min);
                assert!((a.left + fx * a.width - at.x as f64).abs() <= 0.5, "{}", plot.kind.name());
                assert!((a.top + (1.0 - fy) * a.height - at.y as f64).abs() <= 0.5, "{}", plot.kind.name());
            }
        }
    }

    /// A table of tens of thousands of rows (20,000 points on 50 distinct
    /// [S], rates rounded to two decimals, made up for this test: many fall
    /// on the same pixel): every point is returned for clicking, but a disc
    /// is drawn once per pixel position, so the SVG holds far fewer
    /// circles than points and every circle's position is distinct.
    #[test]
    fn points_on_the_same_pixel_are_drawn_once_and_all_returned() {
        use turnover_core::rates::{analyse_rates, RateRequest};
        let mut text = String::from("[S] (mM)\tv (µM/min)\n");
        for k in 0..20_000 {
            let s = 0.1 * f64::from(1 + k % 50);
            let v = 10.0 * s / (0.5 + s) * (1.0 + 0.002 * f64::from(k % 7) - 0.006);
            text.push_str(&format!("{s:.1}\t{v:.2}\n"));
        }
        let analysis = analyse_rates(&RateRequest { text, ..RateRequest::default() }).unwrap();
        let plot = analysis.plots.into_iter().find(|p| p.kind == PlotKind::Direct).unwrap();
        let mut svg = String::new();
        let drawn = {
            let root = SVGBackend::with_string(&mut svg, (640, 460)).into_drawing_area();
            draw_plot(&root, &plot).unwrap()
        };
        assert_eq!(drawn.points.len(), 20_000);
        let circles = circles(&svg);
        let distinct: std::collections::HashSet<(i64, i64)> = circles.iter().map(|(x, y)| (*x as i64, *y as i64)).collect();
        assert!(circles.len() < 1_000, "{} circles for 20,000 points", circles.len());
        assert_eq!(distinct.len(), circles.len());
    }

    #[test]
    fn replicate_error_bars_are_drawn_with_the_points() {
        let plot = &rate_analysis().plots[0];
        let bare = figure_svg(plot, &FigureOptions::default()).unwrap();
        let with = figure_svg(plot, &FigureOptions { error_bars: Spread::Sd, ..FigureOptions::default() }).unwrap();
        // Strokes in ink 0.75 pt wide (3 units of 0.1 mm): the axis line
        // and the bars.
        let strokes = |svg: &str| svg.matches("stroke=\"#263238\" stroke-width=\"3\"").count();
        assert_eq!(strokes(&bare), 1);
        // Six [S] with two points each; line 3 left out leaves one at 0.1 mM,
        // so five bars of three strokes (the bar and two caps).
        assert_eq!(strokes(&with) - strokes(&bare), 5 * 3);
        assert_eq!(circles(&with).len(), circles(&bare).len());
        check_plot(plot, &with, "direct with SD bars");
    }

    #[test]
    fn constants_are_printed_in_the_key_box() {
        let plot = &rate_analysis().plots[0];
        let options = FigureOptions { constants: Some("Km = 0.41 ± 0.03 mM\nVmax = 9.2 ± 0.2 µM/min".into()), ..FigureOptions::default() };
        let svg = figure_svg(plot, &options).unwrap();
        assert!(svg.contains("Km = 0.41 ± 0.03 mM") && svg.contains("Vmax = 9.2 ± 0.2 µM/min"));
        check_plot(plot, &svg, "direct with constants");
        // The constants of the shown mechanism (what
        // `InhibitionBench.constantsText` prints) on a family plot.
        let (a, _, _) = family();
        let fit = a.fits.iter().find(|f| f.model == a.shown).expect("the shown mechanism's fit");
        let text = turnover_core::format::constants_text(&fit.parameters);
        assert!(text.lines().count() >= 3 && text.contains(" ± "), "{text}");
        for plot in &a.plots {
            let svg = figure_svg(plot, &FigureOptions { constants: Some(text.clone()), ..FigureOptions::default() }).unwrap();
            check_plot(plot, &svg, &format!("{} with constants", plot.kind.name()));
            assert!(text.lines().all(|line| svg.contains(&line.replace('&', "&amp;"))));
        }
    }

    #[test]
    fn panels_are_lettered_and_do_not_overlap() {
        let analysis = rate_analysis();
        let plots: Vec<&PlotData> = analysis.plots.iter().take(5).collect();
        let options = FigureOptions { width_mm: 180.0, height_mm: 110.0, ..FigureOptions::default() };
        let svg = figure_panels_svg(&plots, &options).unwrap();
        assert_no_overlap(&svg, "panels");
        let texts: Vec<String> = text_boxes(&svg).into_iter().map(|b| b.text).collect();
        for letter in ["A", "B", "C", "D", "E"] {
            assert!(texts.iter().any(|t| t == letter), "no panel {letter}");
        }
        let expected: usize = plots.iter().map(|p| expected_markers(p)).sum();
        assert_eq!(circles(&svg).len(), expected);
    }

    #[test]
    fn plate_figure_has_a_box_per_well_and_states_its_axes() {
        let (_, view) = trace_plots();
        let svg = plate_svg(&view, &FigureOptions { width_mm: 170.0, height_mm: 110.0, ..FigureOptions::default() }).unwrap();
        assert_no_overlap(&svg, "plate");
        assert!(svg.contains("Each well: time (min) from 0 to"), "{svg}");
        let mut canvas = String::new();
        let root = SVGBackend::with_string(&mut canvas, (1160, 560)).into_drawing_area();
        let boxes = draw_plate(&root, &view, Some("A2"), &Style::screen()).unwrap();
        assert_eq!(boxes.len(), 6);
        let b3 = boxes.iter().find(|b| b.name == "B3").unwrap();
        let a1 = boxes.iter().find(|b| b.name == "A1").unwrap();
        assert!((b3.x - a1.x - 2.0 * a1.w).abs() < 1e-9 && (b3.y - a1.y - a1.h).abs() < 1e-9);
    }

    /// Ticks: steps of 1, 2 or 5 times a power of ten, covering the data.
    pub(super) fn every_plot_for_look() -> Vec<PlotData> {
        every_plot()
    }

    pub(super) fn trace_plots_for_look() -> (Vec<PlotData>, PlateView) {
        trace_plots()
    }

    #[test]
    fn ticks_are_round() {
        let check = |low: f64, high: f64, count: usize, expected: &[&str]| {
            let (ticks, step) = nice_ticks(low, high, count);
            let labels = tick_labels(&ticks, step);
            assert_eq!(labels, expected, "{low}..{high}");
            assert!(ticks[0] <= low && *ticks.last().unwrap() >= high);
        };
        check(0.0, 0.95, 5, &["0", "0.2", "0.4", "0.6", "0.8", "1.0"]);
        check(-0.272, 67.3, 5, &["−20", "0", "20", "40", "60", "80"]);
        check(0.0, 67.3, 8, &["0", "10", "20", "30", "40", "50", "60", "70"]);
        check(0.0, 3.1e-5, 4, &["0", "1×10⁻⁵", "2×10⁻⁵", "3×10⁻⁵", "4×10⁻⁵"]);
        check(0.0, 240000.0, 5, &["0", "0.5×10⁵", "1.0×10⁵", "1.5×10⁵", "2.0×10⁵", "2.5×10⁵"]);
        check(-1.3, 1.3, 6, &["−1.5", "−1.0", "−0.5", "0", "0.5", "1.0", "1.5"]);
        check(0.3, 0.3, 4, &["0.1", "0.2", "0.3", "0.4", "0.5"]);
        assert_eq!(decade_label(-2), "0.01");
        assert_eq!(decade_label(3), "1000");
        assert_eq!(decade_label(6), "10⁶");
    }
}

#[cfg(test)]
mod look {
    /// Writes sample figures to `target/figures/` for a look by eye:
    /// `cargo test -p turnover-wasm write_sample_figures -- --ignored`.
    #[test]
    #[ignore]
    fn write_sample_figures() {
        use super::*;
        let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../target/figures");
        std::fs::create_dir_all(&dir).unwrap();
        let plots = tests::every_plot_for_look();
        for (k, plot) in plots.iter().enumerate() {
            let options = FigureOptions { title: true, error_bars: Spread::Sd, ..FigureOptions::default() };
            std::fs::write(dir.join(format!("{k:02}-{}.svg", plot.kind.name())), figure_svg(plot, &options).unwrap()).unwrap();
            std::fs::write(dir.join(format!("{k:02}-{}-screen.svg", plot.kind.name())), plot_svg(plot, 640, 460).unwrap()).unwrap();
        }
        let (_, view) = tests::trace_plots_for_look();
        std::fs::write(dir.join("plate.svg"), plate_svg(&view, &FigureOptions { width_mm: 170.0, height_mm: 110.0, ..FigureOptions::default() }).unwrap()).unwrap();
    }
}
