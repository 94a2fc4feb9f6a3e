//! Plots of rates measured over a grid of two substrates' concentrations:
//! the direct plot, the primary double-reciprocal plot (one line per [B])
//! and the secondary replots of those lines' slopes and intercepts against
//! 1/[B]. Every curve and line is drawn from the **global fit** (one set of
//! constants for the whole grid); no line is fitted to transformed points.

use super::family::{short_number, UNSTATED_RATE_UNIT};
use super::{inverse_unit, label, ratio_unit, PlotData, PlotKind, PlotPoint, Series};

/// One measured rate at concentrations [A] and [B].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TwoSubstratePoint {
    /// Index into the analysis' point list.
    pub row: usize,
    /// Concentration of substrate A.
    pub a: f64,
    /// Concentration of substrate B.
    pub b: f64,
    /// Measured rate.
    pub v: f64,
    /// Whether the point is left out of the fit.
    pub excluded: bool,
}

/// Unit symbols for the axis labels; empty when unknown.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct TwoSubstrateUnits {
    /// Unit of [A].
    pub a: String,
    /// Unit of [B].
    pub b: String,
    /// Unit of v.
    pub rate: String,
}

/// The fitted global law, as the plots need it.
pub struct TwoSubstrateFit<'a> {
    /// v at ([A], [B]).
    pub rate: &'a dyn Fn(f64, f64) -> f64,
    /// Apparent (Vmax, Km for A) at a fixed [B].
    pub apparent: &'a dyn Fn(f64) -> (f64, f64),
    /// The general constants (Vmax, KmA, KmB, KiA), zero where the
    /// mechanism lacks one.
    pub constants: [f64; 4],
    /// The mechanism's name for the notes.
    pub mechanism: &'a str,
}

fn with_unit(value: f64, unit: &str) -> String {
    if unit.is_empty() {
        short_number(value)
    } else {
        format!("{} {unit}", short_number(value))
    }
}

fn levels(values: impl Iterator<Item = f64>) -> Vec<f64> {
    let mut v: Vec<f64> = values.collect();
    v.sort_by(f64::total_cmp);
    v.dedup();
    v
}

fn plot(kind: PlotKind, title: &str, x_label: String, y_label: String, series: Vec<Series>, note: String) -> PlotData {
    let points = series.iter().flat_map(|s| s.points.clone()).collect();
    PlotData {
        kind,
        title: title.to_string(),
        x_label,
        y_label,
        points,
        curve: Vec::new(),
        zero_line: true,
        segments: Vec::new(),
        spots: Vec::new(),
        note,
        series,
        log_x: false,
        marks: Vec::new(),
        band: None,
    }
}

/// The straight line `y = intercept + slope·x` from `from` to `to`; empty
/// when an end is not finite.
fn straight(intercept: f64, slope: f64, from: f64, to: f64) -> Vec<(f64, f64)> {
    let ends = [(from, intercept + slope * from), (to, intercept + slope * to)];
    if ends.iter().all(|(x, y)| x.is_finite() && y.is_finite()) {
        ends.to_vec()
    } else {
        Vec::new()
    }
}

/// Where a line's left end goes: at 1.2 times the crossing `crossing` (a
/// negative x where the lines meet or cross the axis) when that is within
/// `limit` of the origin, else at `-limit`; at zero when there is no
/// crossing to the left.
fn left_end(crossing: f64, limit: f64) -> f64 {
    if crossing.is_finite() && crossing < 0.0 {
        (1.2 * crossing).max(-limit)
    } else {
        0.0
    }
}

/// The four plots of a global two-substrate fit. `separate` holds, for
/// each [B] level, apparent (Vmax, Km for A) from a Michaelis-Menten fit to
/// the rates at that [B] alone (`None` when it could not be made); the
/// replots show them as points beside the global fit's straight lines.
pub fn two_substrate_plots(
    points: &[TwoSubstratePoint],
    fit: &TwoSubstrateFit<'_>,
    separate: &[(f64, Option<(f64, f64)>)],
    units: &TwoSubstrateUnits,
) -> Vec<PlotData> {
    let rate_unit = if units.rate.is_empty() { UNSTATED_RATE_UNIT.to_string() } else { units.rate.clone() };
    let b_levels = levels(points.iter().map(|p| p.b));
    let a_positive = levels(points.iter().map(|p| p.a).filter(|a| *a > 0.0));
    let a_max = a_positive.last().copied().unwrap_or(1.0);
    let b_label = |b: f64| format!("[B] = {}", with_unit(b, &units.b));
    let point = |p: &TwoSubstratePoint, x: f64, y: f64| PlotPoint { row: p.row, x, y, excluded: p.excluded };
    let [vmax, kma, kmb, kia] = fit.constants;
    let mut plots = Vec::with_capacity(4);

    let series: Vec<Series> = b_levels
        .iter()
        .map(|&b| {
            let pts = points.iter().filter(|p| p.b == b).map(|p| point(p, p.a, p.v)).collect();
            let curve = (0..=160)
                .map(|k| a_max * 1.1 * k as f64 / 160.0)
                .map(|a| (a, (fit.rate)(a, b)))
                .filter(|c| c.1.is_finite())
                .collect();
            Series { label: b_label(b), points: pts, curve, dashed: false }
        })
        .collect();
    let mut direct = plot(
        PlotKind::TwoSubstrateDirect,
        "Rate against [A], one curve per [B]",
        label("[A]", &units.a),
        label("v", &rate_unit),
        series,
        format!("Curves are the global {} fit: one set of constants for the whole grid.", fit.mechanism),
    );
    direct.zero_line = false;
    plots.push(direct);

    // Primary double-reciprocal plot: at each [B] the law is a hyperbola in
    // [A], so 1/v = (Km(app)/Vmax(app))·(1/[A]) + 1/Vmax(app) is a line.
    // For the ternary-complex law the lines meet at 1/[A] = −1/KiA;
    // ping-pong lines (KiA = 0) are parallel.
    let inv_a_max = a_positive.first().map_or(1.0, |a| 1.1 / a);
    let meet = if kia > 0.0 { -1.0 / kia } else { f64::NAN };
    let start = left_end(meet, inv_a_max);
    let positive_b: Vec<f64> = b_levels.iter().copied().filter(|b| *b > 0.0).collect();
    let reciprocal: Vec<Series> = positive_b
        .iter()
        .map(|&b| {
            let (v_app, k_app) = (fit.apparent)(b);
            let pts = points.iter().filter(|p| p.b == b && p.a > 0.0 && p.v > 0.0).map(|p| point(p, 1.0 / p.a, 1.0 / p.v)).collect();
            Series { label: b_label(b), points: pts, curve: straight(1.0 / v_app, k_app / v_app, start, inv_a_max), dashed: false }
        })
        .collect();
    let hidden = points.iter().filter(|p| !(p.a > 0.0 && p.b > 0.0 && p.v > 0.0)).count();
    let hidden_note = if hidden > 0 {
        format!(" {hidden} point(s) with a concentration or rate at or below zero cannot be transformed and are not shown.")
    } else {
        String::new()
    };
    let shape = if kia > 0.0 {
        format!(
            "The lines meet at 1/[A] = −1/KiA = {}: a ternary complex (sequential mechanism).",
            with_unit(-1.0 / kia, &inverse_unit(&units.a))
        )
    } else {
        "The lines are parallel (KiA = 0): a substituted-enzyme (ping-pong) mechanism.".to_string()
    };
    plots.push(plot(
        PlotKind::TwoSubstrateDoubleReciprocal,
        "Double reciprocal against 1/[A], one line per [B]",
        label("1/[A]", &inverse_unit(&units.a)),
        label("1/v", &inverse_unit(&rate_unit)),
        reciprocal,
        format!(
            "Lines are the global {} fit drawn in these coordinates, one per [B]; no line is fitted to transformed points. {shape}{hidden_note}",
            fit.mechanism
        ),
    ));

    // Secondary replots against 1/[B]: slope = KmA/Vmax + (KiA·KmB/Vmax)/[B],
    // intercept = 1/Vmax + (KmB/Vmax)/[B].
    let inv_b_max = positive_b.first().map_or(1.0, |b| 1.1 / b);
    let replot = |kind: PlotKind, title: &str, y: String, f: &dyn Fn(f64, f64) -> f64, intercept: f64, slope: f64, what: &str| {
        let crossing = if slope != 0.0 { -intercept / slope } else { f64::NAN };
        let from = left_end(crossing, inv_b_max);
        let separate_points: Vec<PlotPoint> = separate
            .iter()
            .enumerate()
            .filter(|(_, (b, _))| *b > 0.0)
            .filter_map(|(row, (b, fit))| fit.map(|(v, k)| PlotPoint { row, x: 1.0 / b, y: f(v, k), excluded: false }))
            .collect();
        let series = vec![
            Series { label: "separate fit at each [B]".to_string(), points: separate_points, curve: Vec::new(), dashed: false },
            Series {
                label: format!("global {} fit", fit.mechanism),
                points: Vec::new(),
                curve: straight(intercept, slope, from, inv_b_max),
                dashed: false,
            },
        ];
        let mut p = plot(
            kind,
            title,
            label("1/[B]", &inverse_unit(&units.b)),
            y,
            series,
            format!("Points: Km(app) and Vmax(app) from a Michaelis-Menten fit in [A] at each [B] alone; line: the global fit. {what}"),
        );
        p.points = Vec::new();
        p
    };
    plots.push(replot(
        PlotKind::TwoSubstrateSlopeReplot,
        "Replot of double-reciprocal slopes against 1/[B]",
        label("slope Km/Vmax (app)", &ratio_unit(&units.a, &rate_unit)),
        &|v, k| k / v,
        kma / vmax,
        kia * kmb / vmax,
        "The line meets the 1/v-slope axis at KmA/Vmax and has slope KiA·KmB/Vmax; it is flat for ping-pong (KiA = 0) and passes through the origin for the ordered case (KmA = 0).",
    ));
    plots.push(replot(
        PlotKind::TwoSubstrateInterceptReplot,
        "Replot of double-reciprocal intercepts against 1/[B]",
        label("intercept 1/Vmax (app)", &inverse_unit(&rate_unit)),
        &|v, _| 1.0 / v,
        1.0 / vmax,
        kmb / vmax,
        "The line meets the vertical axis at 1/Vmax and the 1/[B] axis at −1/KmB.",
    ));
    plots
}

#[cfg(test)]
mod tests {
    use super::*;

    /// On exact ternary-complex data every transformed point lies on its
    /// [B]'s line, the lines meet at 1/[A] = −1/KiA, and the replots' lines
    /// pass through the separate fits' (here exact) slopes and intercepts.
    #[test]
    fn exact_points_lie_on_their_lines() {
        let (vmax, kma, kmb, kia) = (10.0, 0.5, 2.0, 1.5);
        let rate = |a: f64, b: f64| vmax * a * b / (kia * kmb + kmb * a + kma * b + a * b);
        let apparent = |b: f64| (vmax * b / (kmb + b), (kia * kmb + kma * b) / (kmb + b));
        let mut points = Vec::new();
        for b in [0.5, 1.0, 4.0] {
            for a in [0.2, 0.5, 1.0, 3.0] {
                points.push(TwoSubstratePoint { row: points.len(), a, b, v: rate(a, b), excluded: false });
            }
        }
        let separate: Vec<(f64, Option<(f64, f64)>)> = [0.5, 1.0, 4.0].iter().map(|&b| (b, Some(apparent(b)))).collect();
        let fit = TwoSubstrateFit { rate: &rate, apparent: &apparent, constants: [vmax, kma, kmb, kia], mechanism: "sequential" };
        let plots = two_substrate_plots(&points, &fit, &separate, &TwoSubstrateUnits::default());
        let kinds: Vec<&str> = plots.iter().map(|p| p.kind.name()).collect();
        assert_eq!(kinds, ["two-substrate-direct", "two-substrate-double-reciprocal", "two-substrate-slope-replot", "two-substrate-intercept-replot"]);
        let at = |s: &Series, x: f64| {
            let (a, b) = (s.curve[0], s.curve[1]);
            a.1 + (b.1 - a.1) * (x - a.0) / (b.0 - a.0)
        };
        for series in &plots[1].series {
            for p in &series.points {
                assert!((p.y - at(series, p.x)).abs() < 1e-9 * p.y.abs(), "{} {:?}", series.label, p);
            }
        }
        let (first, last) = (&plots[1].series[0], &plots[1].series[2]);
        assert!((at(first, -1.0 / kia) - at(last, -1.0 / kia)).abs() < 1e-9);
        for replot in &plots[2..] {
            let line = &replot.series[1];
            for p in &replot.series[0].points {
                assert!((p.y - at(line, p.x)).abs() < 1e-9 * p.y.abs(), "{:?} {:?}", replot.kind, p);
            }
        }
    }
}
