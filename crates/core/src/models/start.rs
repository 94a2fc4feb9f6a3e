//! Helpers shared by the models' starting-value rules.
//!
//! Most rules here fix the nonlinear constants on a coarse logarithmic
//! grid and take the one linear scale (Vmax, v0) by least squares for each
//! grid point, keeping the point with the smallest residual sum of squares.
//! A grid is slower than a linearisation but never fails on noisy data, and
//! the minimiser only needs to start in the right basin.

use crate::model::{Model, Observations};

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

/// Most Gauss-Newton steps of [`polish`].
pub(crate) const POLISH_STEPS: usize = 8;

/// Up to [`POLISH_STEPS`] Gauss-Newton steps on the weighted least-squares
/// problem itself from a rule's starting values `start` (p ≤ 4), so that
/// the minimiser starts at or next to its optimum and needs fewer of its
/// own, dearer iterations (each step here is one pass over the data and a
/// p × p solve). A step is kept only when it does not raise the sum of
/// squares (by more than 1e-12 of it, its rounding near the optimum) and
/// moves no constant that is positive by nature ([`Model::positive`]) by
/// more than a factor of two; the steps stop at the first one declined,
/// at a system too ill-conditioned to solve (a scaled Cholesky pivot below
/// 1e-10), or once every change is below 1e-12 of its value. The minimiser
/// then decides convergence with its own tests, so this changes where it
/// starts, not what counts as the answer.
pub(crate) fn polish(model: &dyn Model, data: &Observations, start: Vec<f64>) -> Vec<f64> {
    let p = start.len();
    if p == 0 || p > 4 || data.len() <= p {
        return start;
    }
    let Some(mut sums) = NormalSums::at(model, data, &start) else {
        return start;
    };
    let mut current = start;
    for _ in 0..POLISH_STEPS {
        let Some(step) = sums.step(p) else {
            break;
        };
        let trial: Vec<f64> = current.iter().zip(&step).map(|(v, d)| v + d).collect();
        let within = (0..p).all(|j| trial[j].is_finite() && (!model.positive(j) || (trial[j] > current[j] / 2.0 && trial[j] < current[j] * 2.0)));
        if !within {
            break;
        }
        let Some(next) = NormalSums::at(model, data, &trial) else {
            break;
        };
        // Near the optimum the sum of squares changes by less than its own
        // rounding, so a rise of up to 1e-12 of it does not count against
        // a step (declining it there would leave the start about 1e-8 SE
        // from the optimum, where the minimiser's own convergence test
        // already stops it).
        if !(next.rss <= sums.rss * (1.0 + 1e-12)) {
            break;
        }
        let settled = (0..p).all(|j| step[j].abs() <= 1e-12 * trial[j].abs());
        (current, sums) = (trial, next);
        if settled {
            break;
        }
    }
    current
}

/// `JᵀWJ`, `JᵀW r` and `rᵀW r` at one point (p ≤ 4).
struct NormalSums {
    a: [[f64; 4]; 4],
    b: [f64; 4],
    rss: f64,
}

impl NormalSums {
    /// The sums at `p`, from the model's block evaluation; `None` when a
    /// value or gradient is not finite.
    fn at(model: &dyn Model, data: &Observations, p: &[f64]) -> Option<NormalSums> {
        const BLOCK: usize = 32;
        let k = p.len();
        let mut out = [0.0f64; 5 * BLOCK];
        let mut sums = NormalSums { a: [[0.0; 4]; 4], b: [0.0; 4], rss: 0.0 };
        let (y, w) = (data.y(), data.weights());
        let mut first = 0;
        while first < data.len() {
            let rows = (data.len() - first).min(BLOCK);
            model.values_and_gradients(data, first, rows, p, &mut out, BLOCK);
            for r in 0..rows {
                let weight = w[first + r];
                let residual = y[first + r] - out[k * BLOCK + r];
                for j in 0..k {
                    let gj = weight * out[j * BLOCK + r];
                    for l in j..k {
                        sums.a[j][l] += gj * out[l * BLOCK + r];
                    }
                    sums.b[j] += gj * residual;
                }
                sums.rss += weight * residual * residual;
            }
            first += rows;
        }
        let finite = sums.rss.is_finite() && (0..k).all(|j| sums.b[j].is_finite() && (j..k).all(|l| sums.a[j][l].is_finite()));
        finite.then_some(sums)
    }

    /// The Gauss-Newton step `(JᵀWJ)⁻¹ JᵀW r` by a Cholesky factorisation
    /// of the matrix scaled to a unit diagonal; `None` when a pivot falls
    /// below 1e-10 (or the diagonal has a zero).
    fn step(&self, k: usize) -> Option<Vec<f64>> {
        let mut scale = [0.0f64; 4];
        for j in 0..k {
            if !(self.a[j][j] > 0.0) {
                return None;
            }
            scale[j] = 1.0 / self.a[j][j].sqrt();
        }
        // Lower factor L of the scaled matrix, row by row.
        let mut l = [[0.0f64; 4]; 4];
        for i in 0..k {
            for j in 0..=i {
                let mut sum = self.a[j][i] * scale[i] * scale[j];
                for m in 0..j {
                    sum -= l[i][m] * l[j][m];
                }
                if i == j {
                    if !(sum > 1e-10) {
                        return None;
                    }
                    l[i][i] = sum.sqrt();
                } else {
                    l[i][j] = sum / l[j][j];
                }
            }
        }
        let mut z = [0.0f64; 4];
        for i in 0..k {
            let mut sum = self.b[i] * scale[i];
            for m in 0..i {
                sum -= l[i][m] * z[m];
            }
            z[i] = sum / l[i][i];
        }
        let mut step = vec![0.0; k];
        for i in (0..k).rev() {
            let mut sum = z[i];
            for m in i + 1..k {
                sum -= l[m][i] * step[m];
            }
            step[i] = sum / l[i][i];
        }
        for (j, s) in step.iter_mut().enumerate() {
            *s *= scale[j];
        }
        step.iter().all(|s| s.is_finite()).then_some(step)
    }
}
