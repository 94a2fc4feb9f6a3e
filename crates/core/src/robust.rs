//! The direct linear plot (Eisenthal & Cornish-Bowden 1974): a
//! distribution-free estimate of Km and Vmax, shown beside the
//! least-squares fit as an independent check.
//!
//! Each observation (s_i, v_i) is a line in parameter space,
//! V = v_i + (v_i/s_i)·K: all (K, V) pairs that fit it exactly. Each pair
//! of lines meets at one (K_ij, V_ij); the estimates are the medians of
//! the intersections. Following the later refinement of the method
//! (Cornish-Bowden & Eisenthal 1978), an intersection with negative K, which
//! arises from noise when two lines are nearly parallel, is counted as
//! K = V = +∞ rather than dropped, so that the medians are not biased low.
//! (Rule as remembered from that paper, not re-read.) Pairs at the same
//! [S] carry no information and are skipped.

use serde::Serialize;

/// Medians of the pairwise intersections.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DirectLinearEstimate {
    /// Median K over the intersections.
    pub km: Option<f64>,
    /// Median V over the intersections.
    pub vmax: Option<f64>,
    /// Number of intersections used (pairs with different [S]).
    pub intersections: usize,
    /// How many were counted at +∞.
    pub at_infinity: usize,
    /// The finite intersections, for plotting.
    pub points: Vec<(f64, f64)>,
}

fn median(values: &mut [f64]) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    values.sort_by(f64::total_cmp);
    let m = values.len() / 2;
    let value = if values.len() % 2 == 1 { values[m] } else { 0.5 * (values[m - 1] + values[m]) };
    value.is_finite().then_some(value)
}

/// Above this many observations the pairwise intersections (n²/2 of them)
/// are not formed: the plot is for designs of tens of points, and the
/// memory and time would grow past what a page should take.
pub const MAX_POINTS: usize = 1000;

/// Estimates from observations `(s, v)` with s > 0. With more than
/// [`MAX_POINTS`] observations nothing is computed (`intersections` = 0).
pub fn direct_linear(points: &[(f64, f64)]) -> DirectLinearEstimate {
    if points.len() > MAX_POINTS {
        return DirectLinearEstimate { km: None, vmax: None, intersections: 0, at_infinity: 0, points: Vec::new() };
    }
    let mut ks = Vec::new();
    let mut vs = Vec::new();
    let mut finite = Vec::new();
    let mut at_infinity = 0;
    for i in 0..points.len() {
        for j in i + 1..points.len() {
            let (si, vi) = points[i];
            let (sj, vj) = points[j];
            if si == sj || si <= 0.0 || sj <= 0.0 {
                continue;
            }
            let denominator = vi / si - vj / sj;
            let k = (vj - vi) / denominator;
            if !k.is_finite() || k < 0.0 {
                ks.push(f64::INFINITY);
                vs.push(f64::INFINITY);
                at_infinity += 1;
                continue;
            }
            let v = vi + vi / si * k;
            ks.push(k);
            vs.push(v);
            finite.push((k, v));
        }
    }
    let intersections = ks.len();
    DirectLinearEstimate { km: median(&mut ks), vmax: median(&mut vs), intersections, at_infinity, points: finite }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exact_data_give_the_true_constants() {
        let (vmax, km) = (7.0, 0.4);
        let points: Vec<(f64, f64)> = [0.1, 0.2, 0.4, 0.8, 1.6].iter().map(|&s| (s, vmax * s / (km + s))).collect();
        let e = direct_linear(&points);
        assert!((e.km.unwrap() - km).abs() < 1e-12 && (e.vmax.unwrap() - vmax).abs() < 1e-12, "{e:?}");
        assert_eq!(e.intersections, 10);
    }

    /// One wild point moves the medians far less than it moves least
    /// squares: with one rate doubled, the medians stay within 15%.
    #[test]
    fn medians_resist_one_wild_point() {
        let (vmax, km) = (7.0, 0.4);
        let mut points: Vec<(f64, f64)> =
            [0.1, 0.2, 0.4, 0.8, 1.6, 3.2].iter().map(|&s| (s, vmax * s / (km + s))).collect();
        points[2].1 *= 2.0;
        let e = direct_linear(&points);
        assert!((e.km.unwrap() / km - 1.0).abs() < 0.15, "{e:?}");
        assert!((e.vmax.unwrap() / vmax - 1.0).abs() < 0.15, "{e:?}");
    }

    /// A negative intersection is counted at infinity, not dropped
    /// (Cornish-Bowden & Eisenthal 1978).
    #[test]
    fn negative_intersections_count_at_infinity() {
        // Two points whose lines meet at negative K: the rate falls with [S].
        let e = direct_linear(&[(1.0, 2.0), (2.0, 1.9)]);
        assert_eq!(e.at_infinity, 1);
        assert_eq!(e.km, None);
    }
}
