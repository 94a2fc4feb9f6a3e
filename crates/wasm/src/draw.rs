//! Drawing a [`PlotData`] with plotters, on any backend: the page's canvas
//! or an SVG string for figures.
//!
//! The look is Turnover's own: measured points as filled dark-teal discs,
//! points left out of the fit as open rings with a cross in brick red, the
//! fitted curve in amber, light dotted grid lines.

use plotters::coord::Shift;
use plotters::prelude::*;
use serde::Serialize;
use turnover_core::plots::PlotData;

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

const INK: RGBColor = RGBColor(38, 50, 56);
const POINT: RGBColor = RGBColor(0, 105, 110);
const LEFT_OUT: RGBColor = RGBColor(178, 58, 46);
const CURVE: RGBColor = RGBColor(214, 138, 20);
const GRID: RGBColor = RGBColor(226, 230, 232);

/// Padded bounds of everything on the plot; the direct plot's axes start at
/// zero because rates and concentrations do.
/// Auxiliary segments count only by their first end (the direct linear
/// plot's lines start on the axis); marks widen the vertical range to twice
/// their height so the lines around them are in view.
fn bounds(plot: &PlotData) -> ((f64, f64), (f64, f64)) {
    let xs = plot
        .points
        .iter()
        .map(|p| p.x)
        .chain(plot.curve.iter().map(|c| c.0))
        .chain(plot.segments.iter().flat_map(|s| [s.0 .0, s.1 .0]))
        .chain(plot.marks.iter().map(|m| m.x));
    let ys = plot
        .points
        .iter()
        .map(|p| p.y)
        .chain(plot.curve.iter().map(|c| c.1))
        .chain(plot.segments.iter().map(|s| s.0 .1))
        .chain(plot.marks.iter().flat_map(|m| [m.y, 2.0 * m.y]));
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
        let pad = if high > low { (high - low) * 0.06 } else { low.abs().max(1.0) * 0.1 };
        let low = if include_zero && low == 0.0 { 0.0 } else { low - pad };
        (low, high + pad)
    };
    let include_zero = !matches!(plot.kind, turnover_core::plots::PlotKind::Residuals);
    (span(&mut xs.into_iter(), include_zero), span(&mut ys.into_iter(), include_zero || plot.zero_line))
}

/// Draws `plot` on `root` and returns where each data point landed.
pub fn draw_plot<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    plot: &PlotData,
) -> Result<Vec<PointPosition>, DrawingAreaErrorKind<DB::ErrorType>> {
    root.fill(&WHITE)?;
    let ((x0, x1), (y0, y1)) = bounds(plot);
    let mut chart = ChartBuilder::on(root)
        .caption(&plot.title, ("sans-serif", 15).into_font().color(&INK))
        .margin(10)
        .x_label_area_size(38)
        .y_label_area_size(58)
        .build_cartesian_2d(x0..x1, y0..y1)?;
    chart
        .configure_mesh()
        .light_line_style(WHITE)
        .bold_line_style(GRID)
        .axis_style(INK)
        .x_desc(plot.x_label.as_str())
        .y_desc(plot.y_label.as_str())
        .label_style(("sans-serif", 11).into_font().color(&INK))
        .axis_desc_style(("sans-serif", 12).into_font().color(&INK))
        .x_labels(6)
        .y_labels(6)
        .x_label_formatter(&|v| tick(snap_to_zero(*v, x1 - x0)))
        .y_label_formatter(&|v| tick(snap_to_zero(*v, y1 - y0)))
        .draw()?;
    if plot.zero_line || x0 < 0.0 {
        chart.draw_series(LineSeries::new([(x0, 0.0), (x1, 0.0)], INK.mix(0.5)))?;
    }
    if x0 < 0.0 && x1 > 0.0 {
        chart.draw_series(LineSeries::new([(0.0, y0), (0.0, y1)], INK.mix(0.5)))?;
    }
    for &(a, b) in &plot.segments {
        if let Some((a, b)) = clip_segment(a, b, (x0, x1), (y0, y1)) {
            chart.draw_series(LineSeries::new([a, b], INK.mix(0.35)))?;
        }
    }
    if plot.curve.len() > 1 {
        chart.draw_series(LineSeries::new(plot.curve.iter().copied(), CURVE.stroke_width(2)))?;
    }
    chart.draw_series(
        plot.points.iter().filter(|p| !p.excluded).map(|p| Circle::new((p.x, p.y), 4, POINT.filled())),
    )?;
    for p in plot.points.iter().filter(|p| p.excluded) {
        chart.draw_series(std::iter::once(Circle::new((p.x, p.y), 5, LEFT_OUT.stroke_width(2))))?;
        chart.draw_series(std::iter::once(Cross::new((p.x, p.y), 3, LEFT_OUT.stroke_width(1))))?;
    }
    for mark in &plot.marks {
        let style = CURVE.filled();
        chart.draw_series(std::iter::once(Polygon::new(
            vec![
                (mark.x, mark.y + (y1 - y0) * 0.02),
                (mark.x + (x1 - x0) * 0.015, mark.y),
                (mark.x, mark.y - (y1 - y0) * 0.02),
                (mark.x - (x1 - x0) * 0.015, mark.y),
            ],
            style,
        )))?;
        // Labels go to the right of the mark, or to the left in the
        // right-hand third of the plot so they are not cut off.
        let text = format!("{} ({}, {})", mark.label, tick(mark.x), tick(mark.y));
        let left = mark.x > x0 + (x1 - x0) * 0.6;
        let offset = (x1 - x0) * 0.025;
        let anchor_x = if left { mark.x - offset } else { mark.x + offset };
        let style = ("sans-serif", 12).into_font().color(&INK).pos(plotters::style::text_anchor::Pos::new(
            if left { plotters::style::text_anchor::HPos::Right } else { plotters::style::text_anchor::HPos::Left },
            plotters::style::text_anchor::VPos::Bottom,
        ));
        chart.draw_series(std::iter::once(Text::new(text, (anchor_x, mark.y), style)))?;
    }
    Ok(plot
        .points
        .iter()
        .map(|p| {
            let (x, y) = chart.backend_coord(&(p.x, p.y));
            PointPosition { row: p.row, x, y }
        })
        .collect())
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

/// Tick positions are computed by repeated addition, so zero can arrive as
/// 1e-17; anything that small against the axis span is zero.
fn snap_to_zero(value: f64, span: f64) -> f64 {
    if value.abs() < 1e-9 * span.abs() {
        0.0
    } else {
        value
    }
}

/// Tick labels with few digits and no trailing zeros.
fn tick(value: f64) -> String {
    if value == 0.0 {
        return "0".to_string();
    }
    let magnitude = value.abs().log10();
    if !(-3.0..5.0).contains(&magnitude) {
        return format!("{value:.1e}");
    }
    let text = format!("{:.*}", (3.0 - magnitude.floor()).clamp(0.0, 6.0) as usize, value);
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// The plot as an SVG document.
pub fn plot_svg(plot: &PlotData, width: u32, height: u32) -> Result<String, String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        draw_plot(&root, plot).map_err(|e| e.to_string())?;
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;
    use turnover_core::rates::{analyse_rates, RateRequest};

    #[test]
    fn every_plot_draws_to_svg_with_its_points() {
        let text = "[S] (mM)\tv (µM/min)\n0.1\t1.9\n0.2\t3.1\n0.5\t5.2\n1\t6.4\n2\t7.5\n5\t8.3\n";
        let mut request = RateRequest { text: text.into(), ..RateRequest::default() };
        request.excluded_lines = vec![3];
        let analysis = analyse_rates(&request).unwrap();
        for plot in &analysis.plots {
            let svg = plot_svg(plot, 480, 360).unwrap();
            assert!(svg.starts_with("<svg"), "{:?}", plot.kind);
            if plot.points.is_empty() {
                assert!(svg.contains("<polygon") || svg.contains("<path"), "{:?} has no mark", plot.kind);
            } else {
                assert!(svg.contains("<circle"), "{:?} has no points", plot.kind);
            }
            assert!(svg.contains(&plot.title.replace('&', "&amp;")) || svg.contains("<text"), "{:?}", plot.kind);
        }
    }

    #[test]
    fn ticks_are_short() {
        assert_eq!(tick(0.25), "0.25");
        assert_eq!(tick(200.0), "200");
        assert_eq!(tick(0.0), "0");
        assert_eq!(tick(1.5e-5), "1.5e-5");
    }
}
