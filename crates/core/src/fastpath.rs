//! The allocation-free minimisation for small models (one to four
//! parameters).
//!
//! It runs the very same Levenberg-Marquardt iteration as the general path
//! in [`crate::solver`] (the `levenberg-marquardt` crate's port of MINPACK's
//! `lmder`), on a *compressed* problem of fixed size: instead of the n
//! weighted residuals and the n×p Jacobian, the iteration is handed the
//! (p + 1)×(p + 1) upper triangle `T` of a QR factorisation of the
//! augmented matrix `[J | r]`, accumulated one observation at a time by
//! Givens rotations (the row-wise factorisation of MINPACK's `lmstr`, Moré,
//! Garbow & Hillstrom 1980, routine `rwupdt`). Its first p columns `R` and
//! last column `q` satisfy `RᵀR = JᵀJ`, `Rᵀq = Jᵀr` and `‖q‖ = ‖r‖`, and
//! these are the only things the iteration uses: the pivoted QR of `R` has
//! the same column norms, pivots and triangular factor (up to the signs of
//! its rows) as the pivoted QR of `J`, the trust-region subproblem is solved
//! on that factor, and the sum of squares is `‖q‖²`. So the steps are the
//! general path's steps, up to rounding. Every vector and matrix has a size
//! known at compile time (nalgebra `SMatrix`/`SVector`), so the iteration
//! allocates nothing, whatever the number of observations.
//!
//! The cost: the model's gradient is evaluated at every trial point, not
//! only at accepted ones, because the trial's `q` must come with its `R`.
//! For the rate laws a gradient costs about as much as a value.
//!
//! **Choice (deterministic):** [`crate::solver::minimise`] takes this path
//! when the model has at most [`MAX_PARAMETERS`] parameters and there are
//! more observations than parameters; when the fast path does not converge,
//! the general path is run from the same start and its result is the one
//! reported, so a failure looks exactly as it did before the fast path
//! existed.

use crate::model::{Model, Observations};
use crate::solver::{report_at, termination_of, SolverReport, SolverSettings, Termination};
use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra::{Const, Owned, SMatrix, SVector};
use std::cell::Cell;

/// The most parameters a model may have for the fixed-size path.
pub const MAX_PARAMETERS: usize = 4;

/// The residual reported at a trial point where the model is not finite,
/// as in the general path (one per observation, so the norm is this times
/// sqrt(n)).
const REJECTED_RESIDUAL: f64 = 1e100;

/// Runs the iteration with `P` parameters on `M = P + 1` compressed rows
/// (a macro, because nalgebra's dimension traits are implemented for each
/// size, not for a generic one).
macro_rules! run {
    ($p:literal, $m:literal, $model:expr, $data:expr, $start:expr, $settings:expr) => {{
        let mut p = SVector::<f64, $p>::zeros();
        p.as_mut_slice().copy_from_slice($start);
        let problem = Compressed::<$p, $m> {
            model: $model,
            data: $data,
            p,
            triangle: Cell::new(SMatrix::zeros()),
            jacobian_usable: Cell::new(false),
            jacobian_calls: Cell::new(0),
        };
        let (problem, report) = LevenbergMarquardt::new()
            .with_ftol($settings.ftol)
            .with_xtol($settings.xtol)
            .with_gtol($settings.gtol)
            .with_patience($settings.patience)
            .minimize(problem);
        let termination: Termination = termination_of(&report.termination);
        Outcome {
            parameters: problem.p.as_slice().to_vec(),
            termination,
            jacobian_calls: problem.jacobian_calls.get(),
            evaluations: report.number_of_evaluations,
        }
    }};
}

/// Where the fixed-size iteration stopped, before the report is formed.
pub(crate) struct Outcome {
    pub parameters: Vec<f64>,
    pub termination: Termination,
    pub jacobian_calls: usize,
    pub evaluations: usize,
}

/// Minimises with the fixed-size path when the model has 1 to
/// [`MAX_PARAMETERS`] parameters and the data more observations than
/// parameters; `None` otherwise (the caller then uses the general path).
/// The report is the general path's report in form: the weighted Jacobian
/// at the solution is built once, at the end.
pub fn minimise_small(model: &dyn Model, data: &Observations, start: &[f64], settings: &SolverSettings) -> Option<SolverReport> {
    let o = iterate_small(model, data, start, settings)?;
    Some(report_at(model, data, &o.parameters, o.termination, o.jacobian_calls, o.evaluations))
}

/// The iteration of [`minimise_small`] without the report (whose weighted
/// Jacobian at the solution a caller may not need).
pub(crate) fn iterate_small(model: &dyn Model, data: &Observations, start: &[f64], settings: &SolverSettings) -> Option<Outcome> {
    if start.is_empty() || data.len() <= start.len() || !start.iter().all(|v| v.is_finite()) {
        return None;
    }
    match start.len() {
        1 => Some(run!(1, 2, model, data, start, settings)),
        2 => Some(run!(2, 3, model, data, start, settings)),
        3 => Some(run!(3, 4, model, data, start, settings)),
        4 => Some(run!(4, 5, model, data, start, settings)),
        _ => None,
    }
}

struct Compressed<'a, const P: usize, const M: usize> {
    model: &'a dyn Model,
    data: &'a Observations,
    p: SVector<f64, P>,
    /// The triangle of `[J | r]` (residual Jacobian, weighted residuals) at
    /// the point of the last residual evaluation.
    triangle: Cell<SMatrix<f64, M, M>>,
    /// Whether every gradient was finite at that point.
    jacobian_usable: Cell<bool>,
    jacobian_calls: Cell<usize>,
}

impl<const P: usize, const M: usize> Compressed<'_, P, M> {
    /// One pass over the observations at the current parameters: the
    /// weighted residual `sqrt(w)·(y − f)` and the residual Jacobian row
    /// `−sqrt(w)·∇f` of each, brought into the triangle. Returns `false`
    /// when a residual is not finite.
    ///
    /// The rows go in by square-root-free rotations
    /// ([`include_row`]), which is about twice as fast as plain Givens
    /// rotations; when their scaled sums leave the range of a double (a
    /// trial point with enormous or tiny derivatives), the pass is made
    /// again with plain rotations ([`rotate_in`]), which cannot overflow.
    fn accumulate(&self) -> bool {
        match self.accumulate_square_root_free() {
            Some(finite) => finite,
            None => self.accumulate_by_rotations(),
        }
    }

    /// [`Compressed::accumulate`] by [`include_row`]: `None` when a sum left
    /// the range of a double (nothing is stored then).
    fn accumulate_square_root_free(&self) -> Option<bool> {
        let mut scales = [0.0f64; M];
        let mut unit = SMatrix::<f64, M, M>::zeros();
        let mut gradient = [0.0f64; P];
        let mut row = [0.0f64; M];
        let mut gradient_finite = true;
        let weights = self.data.weights();
        for i in 0..self.data.len() {
            // Unscaled rows: the weight goes into the rotation itself.
            let Some(finite) = self.observation_row(i, 1.0, &mut gradient, &mut row) else {
                self.jacobian_usable.set(false);
                return Some(false);
            };
            gradient_finite &= finite;
            include_row(&mut scales, &mut unit, &mut row, weights[i]);
        }
        if !gradient_finite {
            // Only the sum of squares will be used (by a plain sum).
            self.jacobian_usable.set(false);
            return Some(true);
        }
        let mut triangle = SMatrix::<f64, M, M>::zeros();
        for j in 0..M {
            let root = scales[j].sqrt();
            triangle[(j, j)] = root;
            for k in j + 1..M {
                triangle[(j, k)] = root * unit[(j, k)];
            }
        }
        if !triangle.iter().all(|v| v.is_finite()) {
            return None;
        }
        self.triangle.set(triangle);
        self.jacobian_usable.set(true);
        Some(true)
    }

    /// [`Compressed::accumulate`] by plain Givens rotations.
    fn accumulate_by_rotations(&self) -> bool {
        let mut triangle = SMatrix::<f64, M, M>::zeros();
        let mut gradient = [0.0f64; P];
        let mut row = [0.0f64; M];
        let mut gradient_finite = true;
        let weights = self.data.weights();
        for i in 0..self.data.len() {
            let Some(finite) = self.observation_row(i, weights[i].sqrt(), &mut gradient, &mut row) else {
                self.jacobian_usable.set(false);
                return false;
            };
            gradient_finite &= finite;
            rotate_in(&mut triangle, &mut row);
        }
        self.triangle.set(triangle);
        self.jacobian_usable.set(gradient_finite);
        true
    }

    /// Row `i` of `[J | r]` at the current parameters, times `scale`:
    /// `−scale·∇f` then `scale·(y − f)`, written into `row` (`gradient` is
    /// scratch). `None` when the residual is not finite; otherwise whether
    /// every entry of the gradient part is. (A scale of 1 leaves the
    /// numbers as they are, bit for bit.)
    #[inline(always)]
    fn observation_row(&self, i: usize, scale: f64, gradient: &mut [f64; P], row: &mut [f64; M]) -> Option<bool> {
        let r = scale * (self.data.y()[i] - self.model.value_and_gradient(self.data.x(i), self.p.as_slice(), gradient));
        if !r.is_finite() {
            return None;
        }
        let mut finite = true;
        for j in 0..P {
            row[j] = -scale * gradient[j];
            finite &= row[j].is_finite();
        }
        row[P] = r;
        Some(finite)
    }

    /// ‖r‖ by a plain sum, for the points where the triangle is not usable.
    fn residual_norm(&self) -> f64 {
        let p = self.p.as_slice();
        let y = self.data.y();
        let weights = self.data.weights();
        (0..self.data.len())
            .map(|i| weights[i] * (y[i] - self.model.value(self.data.x(i), p)).powi(2))
            .sum::<f64>()
            .sqrt()
    }
}

/// Brings `row`, with weight `weight`, into the triangle kept as
/// `diag(scales)^½ · unit`, `unit` unit upper triangular (only its part
/// above the diagonal is stored): Gentleman's square-root-free Givens
/// rotations (W. M. Gentleman 1973, "Least squares computations by Givens
/// transformations without square roots", J. Inst. Maths Applics 12,
/// 329–336; the update as in Miller's Applied Statistics algorithm AS 274,
/// from memory). A weighted row needs no square root of its weight and
/// each column one division, where a plain rotation takes a square root
/// and a division per column. The triangle it stands for, `Tⱼⱼ = √scalesⱼ`,
/// `Tⱼₖ = √scalesⱼ·unitⱼₖ`, has `TᵀT = Σ weight·rowᵀrow` like the plain
/// rotations' (their rows may differ in sign, which the iteration does not
/// see: it is an orthogonal change of the compressed rows). `row` is
/// destroyed.
fn include_row<const M: usize>(scales: &mut [f64; M], unit: &mut SMatrix<f64, M, M>, row: &mut [f64; M], weight: f64) {
    let mut w = weight;
    for j in 0..M {
        if w == 0.0 {
            return;
        }
        let a = row[j];
        if a == 0.0 {
            continue;
        }
        let d = scales[j];
        let wa = w * a;
        let updated = d + wa * a;
        let inverse = 1.0 / updated;
        let cos = d * inverse;
        let sin = wa * inverse;
        w *= cos;
        scales[j] = updated;
        for k in j + 1..M {
            let ak = row[k];
            let ujk = unit[(j, k)];
            row[k] = ak - a * ujk;
            unit[(j, k)] = cos * ujk + sin * ak;
        }
    }
}

/// Rotates `row` into the upper triangle `t` (Givens rotations computed as
/// in MINPACK's `rwupdt`, which avoid overflow in the hypotenuse). `row` is
/// destroyed.
pub(crate) fn rotate_in<const M: usize>(t: &mut SMatrix<f64, M, M>, row: &mut [f64; M]) {
    for j in 0..M {
        let a = row[j];
        if a == 0.0 {
            continue;
        }
        let d = t[(j, j)];
        let (sin, cos) = if d.abs() < a.abs() {
            let cot = d / a;
            let sin = 0.5 / (0.25 + 0.25 * cot * cot).sqrt();
            (sin, sin * cot)
        } else {
            let tan = a / d;
            let cos = 0.5 / (0.25 + 0.25 * tan * tan).sqrt();
            (cos * tan, cos)
        };
        t[(j, j)] = cos * d + sin * a;
        for k in j + 1..M {
            let tk = t[(j, k)];
            let ak = row[k];
            t[(j, k)] = cos * tk + sin * ak;
            row[k] = -sin * tk + cos * ak;
        }
    }
}

impl<const P: usize, const M: usize> LeastSquaresProblem<f64, Const<M>, Const<P>> for Compressed<'_, P, M> {
    type ResidualStorage = Owned<f64, Const<M>>;
    type JacobianStorage = Owned<f64, Const<M>, Const<P>>;
    type ParameterStorage = Owned<f64, Const<P>>;

    fn set_params(&mut self, x: &SVector<f64, P>) {
        self.p.copy_from(x);
    }

    fn params(&self) -> SVector<f64, P> {
        self.p
    }

    /// The last column of the triangle: a vector of p + 1 numbers whose
    /// norm is that of the n weighted residuals. A trial point where the
    /// model is not finite gets the general path's rejected residual (the
    /// same norm as n copies of it), so the step is rejected the same way.
    fn residuals(&self) -> Option<SVector<f64, M>> {
        let mut q = SVector::<f64, M>::zeros();
        if !self.accumulate() {
            q[0] = REJECTED_RESIDUAL * (self.data.len() as f64).sqrt();
            return Some(q);
        }
        if !self.jacobian_usable.get() {
            // The gradient is not finite here: the triangle's last column is
            // spoiled, but the sum of squares is still known.
            q[0] = self.residual_norm();
            return Some(q);
        }
        Some(self.triangle.get().column(P).into_owned())
    }

    /// The first p columns of the triangle at the last point whose
    /// residuals were computed, which the iteration only asks for after
    /// accepting that point.
    fn jacobian(&self) -> Option<SMatrix<f64, M, P>> {
        self.jacobian_calls.set(self.jacobian_calls.get() + 1);
        if !self.jacobian_usable.get() {
            return None;
        }
        Some(self.triangle.get().fixed_columns::<P>(0).into_owned())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_triangle_keeps_the_normal_equations() {
        // [J | r] for four observations: RᵀR must equal JᵀJ, Rᵀq = Jᵀr and
        // ‖q‖ = ‖r‖ (orthogonal invariance; checked by direct sums).
        let rows = [[1.0, 2.0, 0.5], [3.0, -1.0, 2.0], [0.0, 4.0, -1.0], [2.5, 0.5, 0.25]];
        let mut t = SMatrix::<f64, 3, 3>::zeros();
        for row in rows {
            let mut copy = row;
            rotate_in(&mut t, &mut copy);
        }
        for a in 0..3 {
            for b in 0..3 {
                let direct: f64 = rows.iter().map(|r| r[a] * r[b]).sum();
                let from_triangle: f64 = (0..3).map(|k| t[(k, a)] * t[(k, b)]).sum();
                assert!((direct - from_triangle).abs() < 1e-12 * direct.abs().max(1.0), "{a},{b}: {direct} vs {from_triangle}");
            }
        }
        for k in 1..3 {
            for j in 0..k {
                assert_eq!(t[(k, j)], 0.0);
            }
        }
    }

    #[test]
    fn square_root_free_rotations_keep_the_weighted_normal_equations() {
        // The same with weights, a zero entry and a row that fills an empty
        // column late: TᵀT must equal Σ w·rowᵀrow.
        let rows = [[0.0, 2.0, 0.5], [3.0, -1.0, 2.0], [0.0, 4.0, -1.0], [2.5, 0.0, 0.25], [1e-3, 7.0, 3.0]];
        let weights = [1.0, 0.25, 4.0, 1e-4, 30.0];
        let mut scales = [0.0; 3];
        let mut unit = SMatrix::<f64, 3, 3>::zeros();
        for (row, w) in rows.iter().zip(weights) {
            let mut copy = *row;
            include_row(&mut scales, &mut unit, &mut copy, w);
        }
        let t = |j: usize, k: usize| match j.cmp(&k) {
            std::cmp::Ordering::Equal => scales[j].sqrt(),
            std::cmp::Ordering::Less => scales[j].sqrt() * unit[(j, k)],
            std::cmp::Ordering::Greater => 0.0,
        };
        for a in 0..3 {
            for b in 0..3 {
                let direct: f64 = rows.iter().zip(weights).map(|(r, w)| w * r[a] * r[b]).sum();
                let from_triangle: f64 = (0..3).map(|k| t(k, a) * t(k, b)).sum();
                assert!((direct - from_triangle).abs() < 1e-12 * direct.abs().max(1.0), "{a},{b}: {direct} vs {from_triangle}");
            }
        }
    }
}
