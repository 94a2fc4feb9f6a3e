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

/// How far [`polish`] goes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Finish {
    /// Until the next step would lower the sum of squares by at most
    /// 1e-12 of it (about 1e-6 SE from the optimum), from where the
    /// minimiser needs about two iterations: for starting values, where
    /// the steps only save the minimiser's dearer iterations.
    Near,
    /// Until every change is below 1e-12 of its value: for a start
    /// already next to the optimum (a reweighting round), where the
    /// minimiser's own test (a relative fall of the sum of squares below
    /// 1e-14) could stop it before its first step, about 1e-8 SE short.
    Exact,
}

/// Up to [`POLISH_STEPS`] Gauss-Newton steps on the weighted least-squares
/// problem itself from starting values `start` (p ≤ 4), each one pass
/// over the data and a p × p solve, as far as `finish` says. A step is
/// kept only when it does not raise the sum of squares (by more than 1e-12
/// of it, its rounding near the optimum) and moves no constant that is
/// positive by nature ([`Model::positive`]) by more than a factor of two;
/// the steps stop at the first one declined or at a system too
/// ill-conditioned to solve (a pivot below 1e-10 of its diagonal entry). The
/// minimiser then decides convergence with its own tests, so this changes
/// where it starts, not what counts as the answer. Gauss-Newton converges
/// only linearly when the residuals are not small (on the benchmark's
/// noisy 12-point curves it took 6 to 8 steps to settle to 1e-12).
pub(crate) fn polish(model: &dyn Model, data: &Observations, mut start: Vec<f64>, finish: Finish) -> Vec<f64> {
    let p = start.len();
    if p == 0 || p > 4 || data.len() <= p {
        return start;
    }
    let mut buffer = [0.0f64; 5 * POLISH_BLOCK];
    let mut current = [0.0f64; 4];
    current[..p].copy_from_slice(&start);
    let Some(mut sums) = NormalSums::at(model, data, &current[..p], &mut buffer) else {
        return start;
    };
    let positive: [bool; 4] = std::array::from_fn(|j| j < p && model.positive(j));
    for _ in 0..POLISH_STEPS {
        let Some(step) = sums.step(p) else {
            break;
        };
        // The fall of the sum of squares the linearisation predicts,
        // stepᵀ·Jᵀr (= stepᵀ·JᵀJ·step).
        let predicted: f64 = (0..p).map(|j| step[j] * sums.b[j]).sum();
        if finish == Finish::Near && predicted <= 1e-12 * sums.rss {
            break;
        }
        let mut trial = current;
        for j in 0..p {
            trial[j] += step[j];
        }
        let within = (0..p).all(|j| trial[j].is_finite() && (!positive[j] || (trial[j] > current[j] / 2.0 && trial[j] < current[j] * 2.0)));
        if !within {
            break;
        }
        let Some(next) = NormalSums::at(model, data, &trial[..p], &mut buffer) else {
            break;
        };
        // Near the optimum the sum of squares changes by less than its own
        // rounding, so a rise of up to 1e-12 of it does not count against
        // a step.
        if !(next.rss <= sums.rss * (1.0 + 1e-12)) {
            break;
        }
        let settled = (0..p).all(|j| step[j].abs() <= 1e-12 * trial[j].abs());
        (current, sums) = (trial, next);
        if settled {
            break;
        }
    }
    start.copy_from_slice(&current[..p]);
    start
}

use crate::fastpath::BLOCK as POLISH_BLOCK;

/// `JᵀWJ`, `JᵀW r` and `rᵀW r` at one point (p ≤ 4).
struct NormalSums {
    a: [[f64; 4]; 4],
    b: [f64; 4],
    rss: f64,
}

impl NormalSums {
    /// The sums at `p`, from the model's block evaluation; `None` when a
    /// value or gradient is not finite.
    /// `out` is scratch for the block evaluation.
    fn at(model: &dyn Model, data: &Observations, p: &[f64], out: &mut [f64; 5 * POLISH_BLOCK]) -> Option<NormalSums> {
        let k = p.len();
        // The stride is the block's length, so a short data set uses the
        // front of the buffer only.
        let stride = data.len().min(POLISH_BLOCK);
        let mut sums = NormalSums { a: [[0.0; 4]; 4], b: [0.0; 4], rss: 0.0 };
        let (y, w) = (data.y(), data.weights());
        let mut first = 0;
        while first < data.len() {
            let rows = (data.len() - first).min(stride);
            model.values_and_gradients(data, first, rows, p, &mut out[..], stride);
            for r in 0..rows {
                let weight = w[first + r];
                let residual = y[first + r] - out[k * stride + r];
                for j in 0..k {
                    let gj = weight * out[j * stride + r];
                    for l in j..k {
                        sums.a[j][l] += gj * out[l * stride + r];
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

    /// The Gauss-Newton step `(JᵀWJ)⁻¹ JᵀW r` by an LDLᵀ factorisation
    /// (no square roots); `None` when a pivot falls below 1e-10 of its
    /// diagonal entry (the Cholesky pivot of the matrix scaled to a unit
    /// diagonal, so independent of the parameters' units) or the diagonal
    /// has a zero.
    fn step(&self, k: usize) -> Option<[f64; 4]> {
        let mut l = [[0.0f64; 4]; 4];
        let mut d = [0.0f64; 4];
        for i in 0..k {
            if !(self.a[i][i] > 0.0) {
                return None;
            }
            for j in 0..i {
                let mut sum = self.a[j][i];
                for m in 0..j {
                    sum -= l[i][m] * l[j][m] * d[m];
                }
                l[i][j] = sum / d[j];
            }
            let mut pivot = self.a[i][i];
            for m in 0..i {
                pivot -= l[i][m] * l[i][m] * d[m];
            }
            if !(pivot > 1e-10 * self.a[i][i]) {
                return None;
            }
            d[i] = pivot;
        }
        let mut step = [0.0f64; 4];
        for i in 0..k {
            let mut sum = self.b[i];
            for m in 0..i {
                sum -= l[i][m] * step[m];
            }
            step[i] = sum;
        }
        for i in 0..k {
            step[i] /= d[i];
        }
        for i in (0..k).rev() {
            for m in i + 1..k {
                step[i] -= l[m][i] * step[m];
            }
        }
        step[..k].iter().all(|s| s.is_finite()).then_some(step)
    }
}
