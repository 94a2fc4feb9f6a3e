//! Helpers shared by the models' starting-value rules.
//!
//! Most rules here fix the nonlinear constants on a coarse logarithmic
//! grid and take the one linear scale (Vmax, v0) by least squares for each
//! grid point, keeping the point with the smallest residual sum of squares.
//! A grid is slower than a linearisation but never fails on noisy data, and
//! the minimiser only needs to start in the right basin.

use crate::model::Observations;

/// `n` values spaced evenly in logarithm from `low` to `high` (both > 0).
pub(crate) fn log_grid(low: f64, high: f64, n: usize) -> Vec<f64> {
    let (a, b) = (low.ln(), high.ln());
    (0..n).map(|i| (a + (b - a) * i as f64 / (n - 1).max(1) as f64).exp()).collect()
}

/// For a response `y = scale·shape(x)`, the least-squares scale and the
/// residual sum of squares it leaves. `None` when the shape is zero or not
/// finite everywhere.
pub(crate) fn scaled_rss(data: &Observations, shape: &dyn Fn(&[f64]) -> f64) -> Option<(f64, f64)> {
    scaled_rss_in(data, shape, &mut Vec::with_capacity(data.len()))
}

/// [`scaled_rss`] with the shape values kept in `shapes`, a buffer the
/// caller reuses across many candidates (a grid search then allocates
/// nothing per candidate). The arithmetic is the same, so is the result.
pub(crate) fn scaled_rss_in(data: &Observations, shape: &dyn Fn(&[f64]) -> f64, shapes: &mut Vec<f64>) -> Option<(f64, f64)> {
    let mut sgy = 0.0;
    let mut sgg = 0.0;
    shapes.clear();
    shapes.extend((0..data.len()).map(|i| shape(data.x(i))));
    if shapes.iter().any(|g| !g.is_finite()) {
        return None;
    }
    for ((g, y), w) in shapes.iter().zip(data.y()).zip(data.weights()) {
        sgy += w * g * y;
        sgg += w * g * g;
    }
    if sgg <= 0.0 {
        return None;
    }
    let scale = sgy / sgg;
    let rss = shapes.iter().zip(data.y()).zip(data.weights()).map(|((g, y), w)| w * (y - scale * g).powi(2)).sum();
    Some((scale, rss))
}

/// The smallest and largest positive value of predictor column `j`.
pub(crate) fn positive_range(data: &Observations, j: usize) -> Option<(f64, f64)> {
    let values: Vec<f64> = data.predictor_column(j).into_iter().filter(|v| *v > 0.0).collect();
    if values.is_empty() {
        return None;
    }
    Some((values.iter().copied().fold(f64::INFINITY, f64::min), values.iter().copied().fold(0.0, f64::max)))
}
