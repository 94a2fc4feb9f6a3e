//! Selwyn's test of enzyme stability (Selwyn 1965, Biochim. Biophys. Acta
//! 105, 193; the principle from memory): if the enzyme neither loses nor
//! gains activity during the assay, product formed depends on [E] and t
//! only through [E]·t, so progress curves at several [E] (same [S], same
//! [I]) superimpose when plotted against [E]·t.
//!
//! **The measure (Turnover's choice).** Within the range of [E]·t that every
//! trace of the group covers (up to `u*`, the smallest of the traces' last
//! [E]·t), each trace is described by its own offset plus a cubic without
//! constant in u = [E]·t, either **shared** by the group (the curves
//! superimpose) or **separate** per trace. Both are linear least squares,
//! so the extra-sum-of-squares F test of shared against separate is exact
//! for normal, independent noise. The **departure** is the difference in
//! product at `u*` between the separate curves of the highest and the
//! lowest [E], as a fraction of the shared curve's product at `u*`:
//! positive when the lowest [E] falls behind (activity lost with time, as
//! in inactivation during the assay), negative when it runs ahead
//! (activation, or a lag at high [E]).
//!
//! **The flag:** p < 0.05 for the F test *and* a departure of more than 5%
//! in size; the second condition keeps very precise data from flagging a
//! difference too small to matter (the 5% is Turnover's choice, no
//! source). Every check carries its numbers either way.

use crate::compare::SIGNIFICANCE;
use crate::plots::{PlotData, PlotKind, PlotPoint, Series};
use crate::sets::{p_text, short};
use crate::traces::{CellState, Role, TraceAnalysis};
use nalgebra::{DMatrix, DVector};
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, FisherSnedecor};

/// Departures smaller than this fraction are not flagged (Turnover's
/// choice, no source).
pub const SELWYN_DEPARTURE: f64 = 0.05;

/// Selwyn's test for one group of traces (same [S] and [I], two or more [E]).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SelwynCheck {
    /// [S] of the group.
    pub s: Option<f64>,
    /// [I] of the group.
    pub i: Option<f64>,
    /// The traces and their [E], by increasing [E].
    pub traces: Vec<(String, f64)>,
    /// The end of the [E]·t range every trace covers.
    pub common_et: f64,
    /// Readings used (within the common range).
    pub n: usize,
    /// The F statistic of shared against separate curves.
    pub f: f64,
    /// Its degrees of freedom (numerator, denominator).
    pub df: (usize, usize),
    /// The probability of an F this large if the curves superimpose.
    pub p_value: f64,
    /// (P at u* for the highest [E] − P at u* for the lowest [E]) / shared P
    /// at u*; see the module documentation.
    pub departure: f64,
    /// Whether the curves fail to superimpose (p < 0.05 and |departure| >
    /// 5%).
    pub flagged: bool,
    /// The finding in words, with its numbers.
    pub message: String,
    /// Product (offset removed) against [E]·t, one series per trace with its
    /// own curve, and the shared curve dashed.
    pub plot: PlotData,
}

/// [S] and [I] of a group.
type Condition = (Option<f64>, Option<f64>);

struct Trace {
    name: String,
    e: f64,
    u: Vec<f64>,
    y: Vec<f64>,
}

/// Least squares by SVD: (coefficients, RSS); `None` when rank deficient.
fn least_squares(x: &DMatrix<f64>, y: &DVector<f64>) -> Option<(DVector<f64>, f64)> {
    let svd = x.clone().svd(true, true);
    let largest = svd.singular_values.max();
    if svd.singular_values.iter().any(|s| *s <= 1e-12 * largest) {
        return None;
    }
    let beta = svd.solve(y, 0.0).ok()?;
    let rss = (y - x * &beta).norm_squared();
    Some((beta, rss))
}

/// Selwyn's test for every group of sample traces at one [S] and [I] with
/// two or more distinct [E]; traces with fewer than 6 readings in the
/// common range are left out of their group.
pub fn selwyn_checks(analysis: &TraceAnalysis) -> Vec<SelwynCheck> {
    let mut groups: Vec<(Condition, Vec<Trace>)> = Vec::new();
    for trace in &analysis.traces {
        if trace.role != Role::Sample || trace.excluded {
            continue;
        }
        let Some(e) = trace.e.filter(|e| *e > 0.0) else {
            continue;
        };
        let end = trace
            .cells
            .iter()
            .position(|c| matches!(c, CellState::Overflow | CellState::OverRange))
            .unwrap_or(trace.times.len());
        let (u, y): (Vec<f64>, Vec<f64>) =
            (0..end).filter_map(|j| trace.values[j].map(|v| (e * trace.times[j], v))).unzip();
        let key = (trace.s, trace.i);
        let item = Trace { name: trace.name.clone(), e, u, y };
        match groups.iter_mut().find(|(k, _)| *k == key) {
            Some((_, list)) => list.push(item),
            None => groups.push((key, vec![item])),
        }
    }
    let mut checks = Vec::new();
    for ((s, i), mut traces) in groups {
        traces.sort_by(|a, b| a.e.total_cmp(&b.e));
        let mut distinct: Vec<f64> = traces.iter().map(|t| t.e).collect();
        distinct.dedup();
        if distinct.len() < 2 {
            continue;
        }
        if let Some(check) = one_group(s, i, traces, analysis) {
            checks.push(check);
        }
    }
    checks
}

fn one_group(s: Option<f64>, i: Option<f64>, traces: Vec<Trace>, analysis: &TraceAnalysis) -> Option<SelwynCheck> {
    let common =
        traces.iter().map(|t| t.u.iter().cloned().fold(f64::NEG_INFINITY, f64::max)).fold(f64::INFINITY, f64::min);
    if !(common > 0.0 && common.is_finite()) {
        return None;
    }
    let traces: Vec<Trace> = traces
        .into_iter()
        .map(|t| {
            let (u, y) =
                t.u.iter().zip(&t.y).filter(|(u, _)| **u <= common * (1.0 + 1e-12)).map(|(u, y)| (*u, *y)).unzip();
            Trace { u, y, ..t }
        })
        .filter(|t| t.u.len() >= 6)
        .collect();
    let k = traces.len();
    if k < 2 || traces.first()?.e == traces.last()?.e {
        return None;
    }
    let n: usize = traces.iter().map(|t| t.u.len()).sum();
    let (p_shared, p_separate) = (k + 3, 4 * k);
    if n <= p_separate {
        return None;
    }
    let y = DVector::from_iterator(n, traces.iter().flat_map(|t| t.y.iter().cloned()));
    // u scaled by the common end, so the cubic's columns are of one size.
    let mut shared = DMatrix::zeros(n, p_shared);
    let mut row = 0;
    for (kk, t) in traces.iter().enumerate() {
        for &u in &t.u {
            let x = u / common;
            shared[(row, kk)] = 1.0;
            for d in 0..3 {
                shared[(row, k + d)] = x.powi(d as i32 + 1);
            }
            row += 1;
        }
    }
    let (b_shared, rss_shared) = least_squares(&shared, &y)?;
    // The separate model is block diagonal: one small fit per trace, and
    // its RSS is the sum of theirs (so a plate of many traces stays cheap).
    let mut b_separate = Vec::with_capacity(p_separate);
    let mut rss_separate = 0.0;
    for t in &traces {
        let x = DMatrix::from_fn(t.u.len(), 4, |r, c| (t.u[r] / common).powi(c as i32));
        let (b, rss) = least_squares(&x, &DVector::from_column_slice(&t.y))?;
        b_separate.extend(b.iter().cloned());
        rss_separate += rss;
    }
    let df = (p_separate - p_shared, n - p_separate);
    let f = ((rss_shared - rss_separate) / df.0 as f64) / (rss_separate / df.1 as f64);
    let f = if f.is_finite() { f.max(0.0) } else { 0.0 };
    let p_value = FisherSnedecor::new(df.0 as f64, df.1 as f64).map(|d| d.sf(f)).unwrap_or(1.0);
    let cubic = |c: &[f64], x: f64| c[0] * x + c[1] * x * x + c[2] * x * x * x;
    let shared_coef = [b_shared[k], b_shared[k + 1], b_shared[k + 2]];
    let own = |kk: usize| [b_separate[4 * kk + 1], b_separate[4 * kk + 2], b_separate[4 * kk + 3]];
    let reference = cubic(&shared_coef, 1.0);
    let departure = (cubic(&own(k - 1), 1.0) - cubic(&own(0), 1.0)) / reference;
    let departure = if departure.is_finite() { departure } else { 0.0 };
    let flagged = p_value < SIGNIFICANCE && departure.abs() > SELWYN_DEPARTURE;
    let e_unit = analysis.enzyme_unit.clone().unwrap_or_else(|| "[E] unit".into());
    let time = &analysis.time_unit;
    let condition = match (s, i) {
        (Some(s), Some(i)) if i > 0.0 => format!("[S] = {s}, [I] = {i}"),
        (Some(s), _) => format!("[S] = {s}"),
        _ => "one condition".to_string(),
    };
    let numbers = format!(
        "F({}, {}) = {}, {}; the lowest [E] ends {:.1}% {} the highest at [E]·t = {} {e_unit}·{time}",
        df.0,
        df.1,
        short(f),
        p_text(p_value),
        departure.abs() * 100.0,
        if departure >= 0.0 { "below" } else { "above" },
        short(common)
    );
    let message = if flagged {
        format!(
            "Selwyn's test at {condition}: the progress curves do not superimpose against [E]·t ({numbers}). The enzyme's activity changes during the assay (loss when the lowest [E] falls behind), or the rate is not proportional to [E]; initial rates from later windows will be biased."
        )
    } else {
        format!(
            "Selwyn's test at {condition}: the progress curves superimpose against [E]·t within the noise or within 5% ({numbers})."
        )
    };
    let series: Vec<Series> = traces
        .iter()
        .enumerate()
        .map(|(kk, t)| {
            let offset = b_shared[kk];
            let c = own(kk);
            let own_offset = b_separate[4 * kk];
            Series {
                label: format!("{}, [E] = {}", t.name, t.e),
                points: t
                    .u
                    .iter()
                    .zip(&t.y)
                    .map(|(&u, &y)| PlotPoint { row: kk, x: u, y: y - offset, excluded: false })
                    .collect(),
                curve: (0..=60)
                    .map(|j| common * j as f64 / 60.0)
                    .map(|u| (u, own_offset - offset + cubic(&c, u / common)))
                    .collect(),
                dashed: false,
            }
        })
        .chain(std::iter::once(Series {
            label: "superimposed (shared curve)".into(),
            points: Vec::new(),
            curve: (0..=60).map(|j| common * j as f64 / 60.0).map(|u| (u, cubic(&shared_coef, u / common))).collect(),
            dashed: true,
        }))
        .collect();
    let plot = PlotData {
        band: None,
        kind: PlotKind::Selwyn,
        title: format!("Selwyn's test, {condition}"),
        x_label: format!("[E]·t ({e_unit}·{time})"),
        y_label: format!("product formed ({})", analysis.value_unit),
        points: series.iter().flat_map(|s| s.points.iter().cloned()).collect(),
        curve: Vec::new(),
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note: "Each trace's offset removed (shared fit); solid: each trace's own cubic, dashed: the shared cubic."
            .into(),
        series,
        log_x: false,
        marks: Vec::new(),
    };
    Some(SelwynCheck {
        s,
        i,
        traces: traces.iter().map(|t| (t.name.clone(), t.e)).collect(),
        common_et: common,
        n,
        f,
        df,
        p_value,
        departure,
        flagged,
        message,
        plot,
    })
}
