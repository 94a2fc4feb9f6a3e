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

/// Medians of the pairwise intersections. Only the summary is kept: the
/// n(n − 1)/2 intersections themselves are not part of the result (at
/// 1,000 points they were half a million pairs in every result sent to
/// the page or written as JSON).
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
}

/// The median by selection in linear time, not a sort: the elements at
/// the middle positions of the total order are the same values a sort
/// puts there.
fn median(values: &mut [f64]) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    let even = values.len() % 2 == 0;
    let m = values.len() / 2;
    let (lower, &mut middle, _) = values.select_nth_unstable_by(m, f64::total_cmp);
    let value = if even {
        // The element just below the middle is the largest of the lower part.
        let below = lower.iter().copied().max_by(f64::total_cmp).unwrap_or(middle);
        0.5 * (below + middle)
    } else {
        middle
    };
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
        return DirectLinearEstimate { km: None, vmax: None, intersections: 0, at_infinity: 0 };
    }
    let mut ks = Vec::new();
    let mut vs = Vec::new();
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
        }
    }
    let intersections = ks.len();
    DirectLinearEstimate { km: median(&mut ks), vmax: median(&mut vs), intersections, at_infinity }
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

    /// The median by selection equals the median of the sorted values, bit
    /// for bit, on lists with ties, signed zeros and infinities (lengths 1
    /// to 40, seeded).
    #[test]
    fn selection_median_equals_the_sorted_median() {
        let sorted_median = |values: &[f64]| {
            let mut v = values.to_vec();
            v.sort_by(f64::total_cmp);
            let m = v.len() / 2;
            let value = if v.len() % 2 == 1 { v[m] } else { 0.5 * (v[m - 1] + v[m]) };
            value.is_finite().then_some(value)
        };
        let mut rng = crate::random::SplitMix64::new(20261202);
        let pool = [0.0, -0.0, 1.0, 2.5, 2.5, f64::INFINITY, 1e-300, 7.0];
        for n in 1..=40 {
            for _ in 0..25 {
                let values: Vec<f64> =
                    (0..n).map(|_| if rng.uniform() < 0.5 { pool[rng.below(pool.len())] } else { rng.normal() }).collect();
                let expected = sorted_median(&values);
                let found = median(&mut values.clone());
                assert_eq!(found.map(f64::to_bits), expected.map(f64::to_bits), "{values:?}");
            }
        }
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
