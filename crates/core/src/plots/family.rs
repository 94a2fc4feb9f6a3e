//! Plots of rates measured at several inhibitor concentrations, and of
//! inhibitor series: a family of curves, each drawn from the **global fit**
//! (one set of constants for every [I]), never from separate fits to the
//! transformed data.

use super::{label, inverse_unit, ratio_unit, Mark, PlotData, PlotKind, PlotPoint, Series};

/// One measured rate at a substrate and an inhibitor concentration.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FamilyPoint {
    /// Index into the analysis' point list.
    pub row: usize,
    /// Substrate concentration.
    pub s: f64,
    /// Inhibitor concentration.
    pub i: f64,
    /// Measured rate.
    pub v: f64,
    /// Whether the point is left out of the fit.
    pub excluded: bool,
}

/// Unit symbols for the axis labels; empty when unknown.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct FamilyUnits {
    /// Unit of [S].
    pub substrate: String,
    /// Unit of [I].
    pub inhibitor: String,
    /// Unit of v.
    pub rate: String,
}

/// The unit shown for a rate the table gives without one: arbitrary units.
pub const UNSTATED_RATE_UNIT: &str = "a.u.";

/// The fitted global model, as the plots need it.
pub struct GlobalFit<'a> {
    /// v at ([S], [I]).
    pub rate: &'a dyn Fn(f64, f64) -> f64,
    /// Apparent (Vmax, Km) at [I].
    pub apparent: &'a dyn Fn(f64) -> (f64, f64),
    /// (Kic, Kiu), infinite for an absent binding step.
    pub constants: (f64, f64),
    /// The mechanism's name for the notes.
    pub mechanism: &'a str,
}

/// Up to four significant digits, no trailing zeros.
pub fn short_number(value: f64) -> String {
    if value == 0.0 || !value.is_finite() {
        return format!("{value}");
    }
    let magnitude = value.abs().log10().floor() as i32;
    if !(-3..6).contains(&magnitude) {
        return format!("{value:.2e}");
    }
    let decimals = (3 - magnitude).max(0) as usize;
    let text = format!("{value:.decimals$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

fn with_unit(value: f64, unit: &str) -> String {
    if unit.is_empty() {
        short_number(value)
    } else {
        format!("{} {unit}", short_number(value))
    }
}

/// Distinct values in increasing order.
fn levels(values: impl Iterator<Item = f64>) -> Vec<f64> {
    let mut v: Vec<f64> = values.collect();
    v.sort_by(f64::total_cmp);
    v.dedup();
    v
}

fn plot(kind: PlotKind, title: &str, x_label: String, y_label: String, series: Vec<Series>, note: String) -> PlotData {
    let points = series.iter().filter(|s| !s.dashed || !s.points.is_empty()).flat_map(|s| s.points.clone()).collect();
    PlotData { kind, title: title.to_string(), x_label, y_label, points, curve: Vec::new(), zero_line: true, segments: Vec::new(), spots: Vec::new(), note, series, log_x: false, marks: Vec::new(), band: None }
}

/// A straight line through (a, f(a)) and (b, f(b)), drawn from `from` to `to`.
fn line(f: &dyn Fn(f64) -> f64, a: f64, b: f64, from: f64, to: f64) -> Vec<(f64, f64)> {
    let (fa, fb) = (f(a), f(b));
    let at = |x: f64| fa + (fb - fa) * (x - a) / (b - a);
    let ends = [(from, at(from)), (to, at(to))];
    if ends.iter().all(|(x, y)| x.is_finite() && y.is_finite()) {
        ends.to_vec()
    } else {
        Vec::new()
    }
}

/// The eight plots of a global inhibition fit. `separate` holds, for each
/// [I] level, apparent (Vmax, Km) from a Michaelis-Menten fit to that level
/// alone (`None` when it could not be made); the replots show them as
/// points against the global fit's straight lines.
pub fn inhibition_plots(
    points: &[FamilyPoint],
    fit: &GlobalFit<'_>,
    separate: &[(f64, Option<(f64, f64)>)],
    units: &FamilyUnits,
) -> Vec<PlotData> {
    // Every axis carries a unit: a rate entered without one is in the
    // table's own arbitrary units, and the labels say so.
    let units = &FamilyUnits {
        substrate: units.substrate.clone(),
        inhibitor: units.inhibitor.clone(),
        rate: if units.rate.is_empty() { UNSTATED_RATE_UNIT.to_string() } else { units.rate.clone() },
    };
    let i_levels = levels(points.iter().map(|p| p.i));
    let s_levels = levels(points.iter().map(|p| p.s).filter(|s| *s > 0.0));
    let s_max = s_levels.last().copied().unwrap_or(1.0);
    let i_max = i_levels.last().copied().unwrap_or(1.0).max(f64::MIN_POSITIVE);
    let (km0, vmax0) = { let (v, k) = (fit.apparent)(0.0); (k, v) };
    let i_label = |i: f64| format!("[I] = {}", with_unit(i, &units.inhibitor));
    let s_label = |s: f64| format!("[S] = {}", with_unit(s, &units.substrate));
    let point = |p: &FamilyPoint, x: f64, y: f64| PlotPoint { row: p.row, x, y, excluded: p.excluded };
    let transformable = |p: &&FamilyPoint| p.s > 0.0 && p.v > 0.0;
    let by_i = |i: f64| points.iter().filter(move |p| p.i == i);
    let linear_note = format!(
        "Lines are the global {} fit drawn in these coordinates, one per [I]; no line is fitted to transformed points.",
        fit.mechanism
    );
    let mut plots = Vec::new();

    let series_i = |make: &dyn Fn(f64) -> (Vec<PlotPoint>, Vec<(f64, f64)>)| -> Vec<Series> {
        i_levels
            .iter()
            .map(|&i| {
                let (points, curve) = make(i);
                Series { label: i_label(i), points, curve, dashed: false }
            })
            .collect()
    };

    plots.push(plot(
        PlotKind::InhibitionDirect,
        "Rate against substrate, one curve per [I]",
        label("[S]", &units.substrate),
        label("v", &units.rate),
        series_i(&|i| {
            let pts = by_i(i).map(|p| point(p, p.s, p.v)).collect();
            let curve = (0..=160).map(|k| s_max * 1.1 * k as f64 / 160.0).map(|s| (s, (fit.rate)(s, i))).filter(|c| c.1.is_finite()).collect();
            (pts, curve)
        }),
        format!("Curves are the global {} fit: one set of constants for every [I].", fit.mechanism),
    ));
    plots.last_mut().unwrap().zero_line = false;

    let inv_s_max = s_levels.first().map_or(1.0, |s| 1.1 / s);
    let lb_start = if km0 > 0.0 { (-1.1 / km0).max(-inv_s_max) } else { 0.0 };
    plots.push(plot(
        PlotKind::InhibitionLineweaverBurk,
        "Double reciprocal (Lineweaver-Burk), one line per [I]",
        label("1/[S]", &inverse_unit(&units.substrate)),
        label("1/v", &inverse_unit(&units.rate)),
        series_i(&|i| {
            let (v, k) = (fit.apparent)(i);
            let pts = by_i(i).filter(transformable).map(|p| point(p, 1.0 / p.s, 1.0 / p.v)).collect();
            (pts, vec![(lb_start, k / v * lb_start + 1.0 / v), (inv_s_max, k / v * inv_s_max + 1.0 / v)])
        }),
        format!("{linear_note} Competitive lines meet on the 1/v axis, uncompetitive ones are parallel, mixed ones meet left of it."),
    ));

    plots.push(plot(
        PlotKind::InhibitionEadieHofstee,
        "Eadie-Hofstee, one line per [I]",
        label("v/[S]", &ratio_unit(&units.rate, &units.substrate)),
        label("v", &units.rate),
        series_i(&|i| {
            let (v, k) = (fit.apparent)(i);
            let pts = by_i(i).filter(transformable).map(|p| point(p, p.v / p.s, p.v)).collect();
            (pts, vec![(0.0, v), (v / k, 0.0)])
        }),
        format!("{linear_note} Each line has slope −Km(app) and meets the v axis at Vmax(app)."),
    ));

    let hw_start = (-1.1 * km0).min(0.0).max(-s_max);
    plots.push(plot(
        PlotKind::InhibitionHanesWoolf,
        "Hanes-Woolf, one line per [I]",
        label("[S]", &units.substrate),
        label("[S]/v", &ratio_unit(&units.substrate, &units.rate)),
        series_i(&|i| {
            let (v, k) = (fit.apparent)(i);
            let pts = by_i(i).filter(transformable).map(|p| point(p, p.s, p.s / p.v)).collect();
            (pts, vec![(hw_start, (hw_start + k) / v), (s_max * 1.1, (s_max * 1.1 + k) / v)])
        }),
        format!("{linear_note} Each line has slope 1/Vmax(app) and meets the [S] axis at −Km(app)."),
    ));

    // Dixon and Cornish-Bowden: one line per [S], against [I].
    let (kic, kiu) = fit.constants;
    let nearest = kic.min(kiu);
    let i_start = if nearest.is_finite() && nearest > 0.0 { (-1.15 * nearest).max(-1.5 * i_max) } else { 0.0 };
    let series_s = |transform: &dyn Fn(f64, f64) -> f64| -> Vec<Series> {
        s_levels
            .iter()
            .map(|&s| {
                let pts = points.iter().filter(|p| p.s == s && p.v > 0.0).map(|p| point(p, p.i, transform(p.s, p.v))).collect();
                let curve = line(&|i| transform(s, (fit.rate)(s, i)), 0.0, i_max, i_start, i_max * 1.1);
                Series { label: s_label(s), points: pts, curve, dashed: false }
            })
            .collect()
    };
    plots.push(plot(
        PlotKind::Dixon,
        "Dixon plot (1/v against [I]), one line per [S]",
        label("[I]", &units.inhibitor),
        label("1/v", &inverse_unit(&units.rate)),
        series_s(&|_, v| 1.0 / v),
        format!(
            "Lines are the global {} fit. Competitive and mixed lines meet at [I] = −Kic; uncompetitive lines are parallel.",
            fit.mechanism
        ),
    ));
    plots.push(plot(
        PlotKind::CornishBowden,
        "Cornish-Bowden plot ([S]/v against [I]), one line per [S]",
        label("[I]", &units.inhibitor),
        label("[S]/v", &ratio_unit(&units.substrate, &units.rate)),
        series_s(&|s, v| s / v),
        format!(
            "Lines are the global {} fit. Uncompetitive and mixed lines meet at [I] = −Kiu; competitive lines are parallel.",
            fit.mechanism
        ),
    ));

    // Secondary replots: the double-reciprocal slope Km(app)/Vmax(app) and
    // intercept 1/Vmax(app) are straight lines in [I] for these mechanisms.
    let replot = |kind: PlotKind, title: &str, y: String, f: &dyn Fn(f64, f64) -> f64, constant: f64, what: &str| {
        let start = if constant.is_finite() && constant > 0.0 { (-1.15 * constant).max(-1.5 * i_max) } else { 0.0 };
        let global = |i: f64| {
            let (v, k) = (fit.apparent)(i);
            f(v, k)
        };
        let separate_points: Vec<PlotPoint> = separate
            .iter()
            .enumerate()
            .filter_map(|(row, (i, fit))| fit.map(|(v, k)| PlotPoint { row, x: *i, y: f(v, k), excluded: false }))
            .collect();
        let series = vec![
            Series { label: "separate fit at each [I]".to_string(), points: separate_points, curve: Vec::new(), dashed: false },
            Series { label: format!("global {} fit", fit.mechanism), points: Vec::new(), curve: line(&global, 0.0, i_max, start, i_max * 1.1), dashed: false },
        ];
        let mut p = plot(kind, title, label("[I]", &units.inhibitor), y, series, format!(
            "Points: Km(app) and Vmax(app) from a Michaelis-Menten fit to each [I] alone; line: the global fit. {what}"
        ));
        p.points = Vec::new();
        p
    };
    plots.push(replot(
        PlotKind::SlopeReplot,
        "Replot of double-reciprocal slopes",
        label("slope Km/Vmax (app)", &ratio_unit(&units.substrate, &units.rate)),
        &|v, k| k / v,
        kic,
        "The line meets the [I] axis at −Kic; it is flat for an uncompetitive inhibitor.",
    ));
    plots.push(replot(
        PlotKind::InterceptReplot,
        "Replot of double-reciprocal intercepts",
        label("intercept 1/Vmax (app)", &inverse_unit(&units.rate)),
        &|v, _| 1.0 / v,
        kiu,
        "The line meets the [I] axis at −Kiu; it is flat for a competitive inhibitor.",
    ));
    let _ = vmax0;
    plots
}

/// One measured response at an inhibitor concentration.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DosePoint {
    /// Index into the analysis' point list.
    pub row: usize,
    /// Inhibitor concentration.
    pub i: f64,
    /// Response.
    pub y: f64,
    /// Whether the point is left out of the fit.
    pub excluded: bool,
}

fn dose_points(points: &[DosePoint], keep: &dyn Fn(&DosePoint) -> bool) -> Vec<PlotPoint> {
    points.iter().filter(|p| keep(p)).map(|p| PlotPoint { row: p.row, x: p.i, y: p.y, excluded: p.excluded }).collect()
}

/// The dose-response plot: responses against [I] on a logarithmic axis,
/// the fitted logistic and a marker at the IC50. Points at [I] = 0 cannot
/// sit on a log axis; the note says how many there are.
pub fn dose_response_plot(points: &[DosePoint], curve: &dyn Fn(f64) -> f64, ic50: f64, ic50_se: Option<f64>, inhibitor_unit: &str, response_label: &str) -> PlotData {
    let positive: Vec<f64> = points.iter().map(|p| p.i).filter(|i| *i > 0.0).collect();
    let low = positive.iter().copied().fold(f64::INFINITY, f64::min).min(ic50) / 3.0;
    let high = positive.iter().copied().fold(0.0, f64::max).max(ic50) * 3.0;
    let samples: Vec<(f64, f64)> = if low.is_finite() && high > low && low > 0.0 {
        (0..=200).map(|k| (low.ln() + (high.ln() - low.ln()) * k as f64 / 200.0).exp()).map(|i| (i, curve(i))).filter(|c| c.1.is_finite()).collect()
    } else {
        Vec::new()
    };
    let zeros = points.len() - positive.len();
    let shown = dose_points(points, &|p| p.i > 0.0);
    let note = if zeros > 0 {
        format!("{zeros} point(s) at [I] = 0 are used in the fit but cannot be drawn on a logarithmic axis.")
    } else {
        String::new()
    };
    PlotData {
        kind: PlotKind::DoseResponse,
        title: "Dose-response".to_string(),
        x_label: label("[I] (log scale)", inhibitor_unit),
        y_label: response_label.to_string(),
        points: shown.clone(),
        curve: Vec::new(),
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note: format!("The curve is the fitted four-parameter logistic; the dashed line marks the IC50. {note}"),
        series: vec![Series { label: "logistic fit".to_string(), points: shown, curve: samples, dashed: false }],
        log_x: true,
        band: None,
        // The label follows the one number rule (crate::format): the
        // standard error to two significant figures, IC50 to its place.
        marks: vec![Mark {
            x: ic50,
            label: {
                let text = crate::format::format_estimate(Some(ic50), ic50_se, None).text;
                if inhibitor_unit.is_empty() { format!("IC50 = {text}") } else { format!("IC50 = {text} {inhibitor_unit}") }
            },
        }],
    }
}

/// The Morrison plot: rates against [I], the tight-binding fit, and for
/// contrast the classical hyperbola v0/(1 + [I]/Ki_app) with the same
/// constants, which ignores the inhibitor bound to the enzyme.
pub fn morrison_plot(points: &[DosePoint], curve: &dyn Fn(f64) -> f64, v0: f64, ki_app: f64, inhibitor_unit: &str, rate_unit: &str) -> PlotData {
    let i_max = points.iter().map(|p| p.i).fold(0.0, f64::max).max(f64::MIN_POSITIVE) * 1.1;
    let grid: Vec<f64> = (0..=200).map(|k| i_max * k as f64 / 200.0).collect();
    let all = dose_points(points, &|_| true);
    PlotData {
        kind: PlotKind::Morrison,
        title: "Tight binding (Morrison)".to_string(),
        x_label: label("[I]", inhibitor_unit),
        y_label: label("v", rate_unit),
        points: all.clone(),
        curve: Vec::new(),
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note: "Solid: the Morrison fit, which accounts for inhibitor bound to the enzyme. Dashed: the classical hyperbola with the same v0 and Ki_app, which assumes free [I] = total [I].".to_string(),
        series: vec![
            Series { label: "Morrison fit".to_string(), points: all, curve: grid.iter().map(|&i| (i, curve(i))).collect(), dashed: false },
            Series {
                label: "classical hyperbola".to_string(),
                points: Vec::new(),
                curve: grid.iter().map(|&i| (i, v0 / (1.0 + i / ki_app))).collect(),
                dashed: true,
            },
        ],
        log_x: false,
        marks: Vec::new(),
        band: None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// On exact competitive data, every transformed point lies on its own
    /// [I]'s line, in every linearised plot of the family.
    #[test]
    fn exact_points_lie_on_their_lines() {
        let (vmax, km, kic, kiu) = (10.0, 0.5, 2.0, 6.0);
        let rate = |s: f64, i: f64| vmax * s / (km * (1.0 + i / kic) + s * (1.0 + i / kiu));
        let apparent = |i: f64| (vmax / (1.0 + i / kiu), km * (1.0 + i / kic) / (1.0 + i / kiu));
        let mut points = Vec::new();
        for i in [0.0, 2.0, 5.0] {
            for s in [0.2, 0.5, 1.0, 3.0] {
                points.push(FamilyPoint { row: points.len(), s, i, v: rate(s, i), excluded: false });
            }
        }
        let fit = GlobalFit { rate: &rate, apparent: &apparent, constants: (kic, kiu), mechanism: "mixed" };
        let plots = inhibition_plots(&points, &fit, &[], &FamilyUnits::default());
        // Without a rate unit in the table, the rate axes still say what
        // they measure in.
        let units = FamilyUnits { substrate: "mM".into(), inhibitor: "µM".into(), rate: String::new() };
        let labelled = inhibition_plots(&points, &fit, &[], &units);
        let y_labels: Vec<&str> = labelled.iter().map(|p| p.y_label.as_str()).collect();
        assert_eq!(
            y_labels,
            [
                "v (a.u.)",
                "1/v (a.u.⁻¹)",
                "v (a.u.)",
                "[S]/v (mM/a.u.)",
                "1/v (a.u.⁻¹)",
                "[S]/v (mM/a.u.)",
                "slope Km/Vmax (app) (mM/a.u.)",
                "intercept 1/Vmax (app) (a.u.⁻¹)"
            ]
        );
        for plot in &plots[1..6] {
            for series in &plot.series {
                let (a, b) = (series.curve[0], series.curve[1]);
                for p in &series.points {
                    let on_line = a.1 + (b.1 - a.1) * (p.x - a.0) / (b.0 - a.0);
                    assert!((p.y - on_line).abs() < 1e-9 * on_line.abs().max(1.0), "{:?} {} {:?}", plot.kind, series.label, p);
                }
            }
        }
        // The Dixon lines of a mixed inhibitor meet at [I] = −Kic.
        let dixon = &plots[4];
        let at = |s: &Series, x: f64| { let (a, b) = (s.curve[0], s.curve[1]); a.1 + (b.1 - a.1) * (x - a.0) / (b.0 - a.0) };
        let (first, last) = (&dixon.series[0], &dixon.series[3]);
        assert!((at(first, -kic) - at(last, -kic)).abs() < 1e-9);
    }
}
