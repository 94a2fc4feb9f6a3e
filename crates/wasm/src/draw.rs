//! Drawing a [`PlotData`] with plotters, on any backend: the page's canvas
//! or an SVG string for figures.
//!
//! The look is Turnover's own: measured points as filled dark-teal discs,
//! points left out of the fit as open rings with a cross in brick red, the
//! fitted curve in amber, light dotted grid lines.

use plotters::coord::Shift;
use plotters::prelude::*;
use serde::Serialize;
use turnover_core::plots::{PlotData, PlotKind};

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

/// The colour of series `k`.
pub fn series_colour(k: usize) -> RGBColor {
    SERIES[k % SERIES.len()]
}

/// A plot's x value in drawing coordinates (log10 on a logarithmic axis).
fn to_axis(plot: &PlotData, x: f64) -> f64 {
    if plot.log_x {
        x.log10()
    } else {
        x
    }
}

/// Padded bounds of everything on the plot; the direct plot's axes start at
/// zero because rates and concentrations do.
/// Auxiliary segments count only by their first end (the direct linear
/// plot's lines start on the axis); marks widen the vertical range to twice
/// their height so the lines around them are in view.
fn bounds(plot: &PlotData) -> ((f64, f64), (f64, f64)) {
    let series_points = plot.series.iter().flat_map(|s| s.points.iter().map(|p| (p.x, p.y)).chain(s.curve.iter().copied()));
    let all: Vec<(f64, f64)> = plot
        .points
        .iter()
        .map(|p| (p.x, p.y))
        .chain(plot.curve.iter().copied())
        .chain(series_points)
        .chain(plot.segments.iter().flat_map(|s| [s.0, (s.1 .0, s.0 .1)]))
        .chain(plot.spots.iter().flat_map(|m| [(m.x, m.y), (m.x, 2.0 * m.y)]))
        .filter(|(x, _)| !plot.log_x || *x > 0.0)
        .map(|(x, y)| (to_axis(plot, x), y))
        .collect();
    let xs = all.iter().map(|p| p.0);
    let ys = all.iter().map(|p| p.1);
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
    (span(&mut xs.into_iter(), include_zero && !plot.log_x), span(&mut ys.into_iter(), include_zero || plot.zero_line))
}

/// Draws `plot` on `root` and returns where each data point landed.
pub fn draw_plot<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    plot: &PlotData,
) -> Result<Vec<PointPosition>, DrawingAreaErrorKind<DB::ErrorType>> {
    root.fill(&WHITE)?;
    let ((x0, x1), (y0, y1)) = bounds(plot);
    let log_x = plot.log_x;
    // On a logarithmic axis the coordinate is log10 [I]; ticks are labelled
    // only at whole decades, with the concentration itself.
    let x_formatter = move |v: &f64| {
        if !log_x {
            tick(*v)
        } else if (v - v.round()).abs() < 1e-6 {
            tick(10f64.powf(v.round()))
        } else {
            String::new()
        }
    };
    let x_ticks = if log_x { (((x1 - x0) * 2.0).ceil() as usize + 1).max(3) } else { 6 };
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
        .x_labels(x_ticks)
        .y_labels(6)
        .x_label_formatter(&|v| x_formatter(&snap_to_zero(*v, x1 - x0)))
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
    let single = plot.series.is_empty();
    chart.draw_series(
        plot.points.iter().filter(|p| single && !p.excluded).map(|p| Circle::new((p.x, p.y), 4, POINT.filled())),
    )?;
    for p in plot.points.iter().filter(|p| single && p.excluded) {
        chart.draw_series(std::iter::once(Circle::new((p.x, p.y), 5, LEFT_OUT.stroke_width(2))))?;
        chart.draw_series(std::iter::once(Cross::new((p.x, p.y), 3, LEFT_OUT.stroke_width(1))))?;
    }
    for mark in &plot.marks {
        if plot.log_x && mark.x <= 0.0 {
            continue;
        }
        let x = to_axis(plot, mark.x);
        chart.draw_series(DashedLineSeries::new([(x, y0), (x, y1)], 6, 4, INK.mix(0.7).stroke_width(1)))?;
        chart.draw_series(std::iter::once(Text::new(
            format!(" {}", mark.label),
            (x, y1 - (y1 - y0) * 0.04),
            ("sans-serif", 11).into_font().color(&INK),
        )))?;
    }
    for spot in &plot.spots {
        let style = CURVE.filled();
        chart.draw_series(std::iter::once(Polygon::new(
            vec![
                (spot.x, spot.y + (y1 - y0) * 0.02),
                (spot.x + (x1 - x0) * 0.015, spot.y),
                (spot.x, spot.y - (y1 - y0) * 0.02),
                (spot.x - (x1 - x0) * 0.015, spot.y),
            ],
            style,
        )))?;
        // Labels go to the right of the mark, or to the left in the
        // right-hand third of the plot so they are not cut off.
        let text = format!("{} ({}, {})", spot.label, tick(spot.x), tick(spot.y));
        let left = spot.x > x0 + (x1 - x0) * 0.6;
        let offset = (x1 - x0) * 0.025;
        let anchor_x = if left { spot.x - offset } else { spot.x + offset };
        let style = ("sans-serif", 12).into_font().color(&INK).pos(plotters::style::text_anchor::Pos::new(
            if left { plotters::style::text_anchor::HPos::Right } else { plotters::style::text_anchor::HPos::Left },
            plotters::style::text_anchor::VPos::Bottom,
        ));
        chart.draw_series(std::iter::once(Text::new(text, (anchor_x, spot.y), style)))?;
    }
    for (k, series) in plot.series.iter().enumerate() {
        let colour = series_colour(k);
        let curve: Vec<(f64, f64)> = series
            .curve
            .iter()
            .filter(|(x, y)| y.is_finite() && (!plot.log_x || *x > 0.0))
            .map(|(x, y)| (to_axis(plot, *x), *y))
            .collect();
        let shown: Vec<(f64, f64)> =
            series.points.iter().filter(|p| !p.excluded && (!plot.log_x || p.x > 0.0)).map(|p| (to_axis(plot, p.x), p.y)).collect();
        let dashed = series.dashed;
        let legend_marker = move |(x, y): (i32, i32)| {
            let style = colour.stroke_width(if dashed { 1 } else { 3 });
            PathElement::new(vec![(x - 9, y), (x + 9, y)], style)
        };
        let label = series.label.clone();
        if curve.len() > 1 {
            let drawn = if series.dashed {
                chart.draw_series(DashedLineSeries::new(curve, 7, 5, colour.stroke_width(2)))?
            } else {
                chart.draw_series(LineSeries::new(curve, colour.stroke_width(2)))?
            };
            drawn.label(label).legend(legend_marker);
        } else {
            chart.draw_series(shown.iter().map(|p| Circle::new(*p, 4, colour.filled())))?.label(label).legend(legend_marker);
        }
        chart.draw_series(shown.iter().map(|p| Circle::new(*p, 4, colour.filled())))?;
        for p in series.points.iter().filter(|p| p.excluded && (!plot.log_x || p.x > 0.0)) {
            let at = (to_axis(plot, p.x), p.y);
            chart.draw_series(std::iter::once(Circle::new(at, 5, LEFT_OUT.stroke_width(2))))?;
        }
    }
    if !plot.series.is_empty() {
        chart
            .configure_series_labels()
            // Inhibitor series fall from the upper left, where the legend
            // would hide the points without inhibitor.
            .position(if matches!(plot.kind, PlotKind::DoseResponse | PlotKind::Morrison) {
                SeriesLabelPosition::UpperRight
            } else {
                SeriesLabelPosition::UpperLeft
            })
            .background_style(WHITE.mix(0.85))
            .border_style(GRID)
            .label_font(("sans-serif", 11).into_font().color(&INK))
            .draw()?;
    }
    Ok(plot
        .points
        .iter()
        .filter(|p| !plot.log_x || p.x > 0.0)
        .map(|p| {
            let (x, y) = chart.backend_coord(&(to_axis(plot, p.x), p.y));
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

    /// Every plot of the inhibition family, the dose-response and the
    /// Morrison plot draw, with one legend entry per series.
    #[test]
    fn family_plots_draw_with_legends() {
        use turnover_core::dose::{analyse_dose, DoseRequest};
        use turnover_core::inhibition::{analyse_inhibition, InhibitionRequest};
        let text = "[S] (mM)\t0\t5 µM\t10 µM\n0.2\t2.9\t1.6\t1.2\n0.5\t5.1\t3.3\t2.4\n1\t6.6\t4.9\t3.9\n3\t8.6\t7.4\t6.5\n";
        let a = analyse_inhibition(&InhibitionRequest { text: text.into(), ..Default::default() }).unwrap();
        assert_eq!(a.plots.len(), 8);
        for plot in &a.plots {
            let svg = plot_svg(plot, 480, 360).unwrap();
            assert!(svg.contains("<circle"), "{:?} has no points", plot.kind);
            for series in &plot.series {
                assert!(svg.contains(&series.label), "{:?}: no legend entry '{}'", plot.kind, series.label);
            }
        }
        let dose = "[I] (nM)\tactivity (%)\n0\t100\n1\t91\n3\t75\n10\t48\n30\t22\n100\t8\n300\t3\n";
        let d = analyse_dose(&DoseRequest { text: dose.into(), model: "ic50".into(), ..Default::default() }).unwrap();
        let svg = plot_svg(&d.plots[0], 480, 360).unwrap();
        assert!(svg.contains("IC50 ="), "no IC50 mark");
        let m = analyse_dose(&DoseRequest { text: dose.into(), model: "morrison".into(), enzyme: Some(2.0), ..Default::default() }).unwrap();
        assert!(plot_svg(&m.plots[0], 480, 360).unwrap().contains("classical hyperbola"));
    }

    #[test]
    fn ticks_are_short() {
        assert_eq!(tick(0.25), "0.25");
        assert_eq!(tick(200.0), "200");
        assert_eq!(tick(0.0), "0");
        assert_eq!(tick(1.5e-5), "1.5e-5");
    }
}
