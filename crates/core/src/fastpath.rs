//! The allocation-free minimisation for small models (one to four
//! parameters).
//!
//! It runs the very same Levenberg-Marquardt iteration as the general path
//! in [`crate::solver`] (the `levenberg-marquardt` crate's port of MINPACK's
//! `lmder`), on a *compressed* problem of fixed size: instead of the n
//! weighted residuals and the n×p Jacobian, the iteration is handed the
//! (p + 1)×(p + 1) upper triangle `T` of a QR factorisation of the
//! augmented matrix `[J | r]`, accumulated a block of up to 32
//! observations at a time by Householder reflections of the triangle so
//! far stacked over the block (plain Givens rotations as in MINPACK's
//! `lmstr`, Moré, Garbow & Hillstrom 1980, routine `rwupdt`, when a sum of
//! squares would leave the range of a double), the block's values and
//! gradients from the model's `values_and_gradients`. Its first p columns `R` and
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

/// A scratch slice of doubles that lives on the stack when it holds at
/// most `N` and on the heap otherwise: for the per-fit buffers whose size
/// is known only at run time but is small for every model the fixed-size
/// path serves (an allocation and its release cost about 1% of a
/// Michaelis-Menten fit each).
pub(crate) struct Scratch<const N: usize> {
    stack: [f64; N],
    heap: Vec<f64>,
}

impl<const N: usize> Scratch<N> {
    pub(crate) fn new() -> Self {
        Scratch { stack: [0.0; N], heap: Vec::new() }
    }

    /// `len` zeros.
    pub(crate) fn zeros(&mut self, len: usize) -> &mut [f64] {
        if len <= N {
            let slice = &mut self.stack[..len];
            slice.fill(0.0);
            slice
        } else {
            self.heap = vec![0.0; len];
            &mut self.heap
        }
    }
}

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
    Some(report_at(model, data, o.parameters, o.termination, o.jacobian_calls, o.evaluations))
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
    /// The rows go in by Householder reflections, a block of up to
    /// [`BLOCK`] rows at a time stacked under the triangle so far
    /// ([`reflect_block`]): orthogonal like the rotations, but with one
    /// square root and one division per column and block instead of one
    /// per column and row, and inner loops with no chain of divisions
    /// (a 28-point mixed-inhibition pass went from about 200 to about 40
    /// cycles a row). When a column's sum of squares leaves the range of a
    /// double (a trial point with enormous or tiny derivatives), the pass
    /// is made again with plain rotations ([`rotate_in`]), which cannot
    /// overflow.
    fn accumulate(&self) -> bool {
        match self.accumulate_by_blocks() {
            Some(finite) => finite,
            None => self.accumulate_by_rotations(),
        }
    }

    /// [`Compressed::accumulate`] by [`reflect_block`]: `None` when a sum
    /// left the range of a double (nothing is stored then).
    fn accumulate_by_blocks(&self) -> Option<bool> {
        let mut triangle = SMatrix::<f64, M, M>::zeros();
        let mut block = [[0.0f64; BLOCK]; M];
        let mut gradient_finite = true;
        let (y, weights) = (self.data.y(), self.data.weights());
        let p = self.p.as_slice();
        let n = self.data.len();
        let mut first = 0;
        while first < n {
            let rows = (n - first).min(BLOCK);
            // The model's values and gradients for the block, by column,
            // then made into rows of [J | r] as `observation_row` makes them
            // (the same operations, so the same bits).
            self.model.values_and_gradients(self.data, first, rows, p, block.as_flattened_mut(), BLOCK);
            let (gradients, values) = block.split_at_mut(P);
            let mut roots = [0.0f64; BLOCK];
            for (root, w) in roots[..rows].iter_mut().zip(&weights[first..first + rows]) {
                *root = w.sqrt();
            }
            let mut residuals_finite = true;
            for r in 0..rows {
                let residual = roots[r] * (y[first + r] - values[0][r]);
                residuals_finite &= residual.is_finite();
                values[0][r] = residual;
            }
            if !residuals_finite {
                self.jacobian_usable.set(false);
                return Some(false);
            }
            for column in gradients.iter_mut() {
                for r in 0..rows {
                    let entry = -roots[r] * column[r];
                    gradient_finite &= entry.is_finite();
                    column[r] = entry;
                }
            }
            if gradient_finite && !reflect_block(&mut triangle, &mut block, rows) {
                return None;
            }
            first += rows;
        }
        if !gradient_finite {
            // Only the sum of squares will be used (by a plain sum).
            self.jacobian_usable.set(false);
            return Some(true);
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
        self.data.weighted_rss(self.model, self.p.as_slice()).sqrt()
    }
}

/// Rows brought into the triangle per Householder block (also the block
/// of the other block evaluations: `bias.rs`, `models::start`).
pub(crate) const BLOCK: usize = 32;

/// Brings the first `rows` rows of `block` (stored by column:
/// `block[j][r]` is entry `j` of row `r`) into the upper triangle `t`:
/// the QR factorisation of `t` stacked over those rows by one Householder
/// reflection per column (Golub & Van Loan, Matrix Computations, §5.1 and
/// the structured update of a triangle by appended rows in §6.5, from
/// memory), which leaves `tᵀt` increased by the rows' `Σ rowᵀrow` and
/// `block` destroyed. The reflection of column `j` has non-zeros only at
/// the triangle's row `j` and at the appended rows, so the triangle's
/// other rows are untouched. Returns `false` when a column's sum of
/// squares over the appended rows is not finite, or has underflowed while
/// an entry is not zero (the caller then makes the pass by rotations).
fn reflect_block<const M: usize>(t: &mut SMatrix<f64, M, M>, block: &mut [[f64; BLOCK]; M], rows: usize) -> bool {
    for j in 0..M {
        let (done, rest) = block.split_at_mut(j + 1);
        let x = &done[j][..rows];
        let sigma = dot(x, x);
        if !sigma.is_finite() {
            return false;
        }
        if sigma < 1e-290 {
            if x.iter().any(|&v| v != 0.0) {
                return false;
            }
            continue;
        }
        let d = t[(j, j)];
        let norm = (d * d + sigma).sqrt();
        if !norm.is_finite() {
            return false;
        }
        // The new diagonal takes the sign opposite to d's, so that
        // v0 = d − alpha is a sum without cancellation.
        let alpha = if d >= 0.0 { -norm } else { norm };
        let v0 = d - alpha;
        // H = I − β·v·vᵀ with v = (v0 at row j, x at the appended rows) and
        // β = 2 / vᵀv, vᵀv = v0² + sigma.
        let beta = 2.0 / (v0 * v0 + sigma);
        for (k, column) in rest.iter_mut().enumerate() {
            let k = j + 1 + k;
            let y = &mut column[..rows];
            let f = beta * (v0 * t[(j, k)] + dot(x, y));
            t[(j, k)] -= f * v0;
            for r in 0..rows {
                y[r] -= f * x[r];
            }
        }
        t[(j, j)] = alpha;
    }
    true
}

/// The upper triangle `T` with `TᵀT = Σ rowᵀrow` over the `n` rows that
/// `row_of(i, row)` writes: by [`reflect_block`] a block at a time, or,
/// when a column's sum of squares leaves the range of a double, by plain
/// rotations ([`rotate_in`]) from the start.
pub(crate) fn triangle_of_rows<const M: usize>(n: usize, mut row_of: impl FnMut(usize, &mut [f64; M])) -> SMatrix<f64, M, M> {
    let mut triangle = SMatrix::<f64, M, M>::zeros();
    let mut block = [[0.0f64; BLOCK]; M];
    let mut row = [0.0f64; M];
    let mut first = 0;
    let mut reflected = true;
    while first < n && reflected {
        let rows = (n - first).min(BLOCK);
        for r in 0..rows {
            row_of(first + r, &mut row);
            for j in 0..M {
                block[j][r] = row[j];
            }
        }
        reflected = reflect_block(&mut triangle, &mut block, rows);
        first += rows;
    }
    if reflected && triangle.iter().all(|v| v.is_finite()) {
        return triangle;
    }
    let mut triangle = SMatrix::<f64, M, M>::zeros();
    for i in 0..n {
        row_of(i, &mut row);
        rotate_in(&mut triangle, &mut row);
    }
    triangle
}

/// `Σ a[r]·b[r]` over the shorter length, in four running sums (rows
/// `r ≡ 0, 1, 2, 3 mod 4`, added as `(s0 + s1) + (s2 + s3)`, then the
/// rows past the last multiple of four), so that four additions are in
/// flight at once instead of one chain; a fixed order, so the same bits on
/// every run.
#[inline(always)]
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    let (a, b) = (&a[..n], &b[..n]);
    let mut sums = [0.0f64; 4];
    let whole = n - n % 4;
    let mut r = 0;
    while r < whole {
        sums[0] += a[r] * b[r];
        sums[1] += a[r + 1] * b[r + 1];
        sums[2] += a[r + 2] * b[r + 2];
        sums[3] += a[r + 3] * b[r + 3];
        r += 4;
    }
    let mut total = (sums[0] + sums[1]) + (sums[2] + sums[3]);
    for k in whole..n {
        total += a[k] * b[k];
    }
    total
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

    /// Rows for the block tests: a fixed pseudo-random sequence (a linear
    /// congruential generator, seed 20261203) with exact zeros, a zero row
    /// and a column that is empty until row 40.
    fn test_rows(n: usize) -> Vec<[f64; 4]> {
        let mut state: u64 = 20261203;
        let mut next = || {
            state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            ((state >> 11) as f64 / (1u64 << 53) as f64) * 4.0 - 2.0
        };
        (0..n)
            .map(|i| {
                let mut row = [next(), next(), next(), next()];
                if i % 7 == 3 {
                    row[1] = 0.0;
                }
                if i < 40 {
                    row[2] = 0.0;
                }
                if i == 11 {
                    row = [0.0; 4];
                }
                row
            })
            .collect()
    }

    #[test]
    fn householder_blocks_keep_the_normal_equations() {
        // 75 rows: two whole blocks of 32 and a part block, against the
        // direct sums Σ rowᵀrow and against plain rotations of the same
        // rows (the same triangle up to the signs of its rows).
        let rows = test_rows(75);
        let t = triangle_of_rows::<4>(rows.len(), |i, row| *row = rows[i]);
        let mut rotated = SMatrix::<f64, 4, 4>::zeros();
        for row in &rows {
            let mut copy = *row;
            rotate_in(&mut rotated, &mut copy);
        }
        for a in 0..4 {
            for b in 0..4 {
                let direct: f64 = rows.iter().map(|r| r[a] * r[b]).sum();
                let from_triangle: f64 = (0..4).map(|k| t[(k, a)] * t[(k, b)]).sum();
                assert!((direct - from_triangle).abs() < 1e-12 * direct.abs().max(1.0), "{a},{b}: {direct} vs {from_triangle}");
                if a > b {
                    assert_eq!(t[(a, b)], 0.0);
                }
                assert!((t[(a, b)].abs() - rotated[(a, b)].abs()).abs() < 1e-12 * rotated[(a, a)].abs().max(1.0), "{a},{b}");
            }
        }
    }

    #[test]
    fn out_of_range_sums_fall_back_to_rotations() {
        // Entries near 1e200 overflow a sum of squares (and 1e-200
        // underflow one): the blocks decline and the rotations, which never
        // square an entry, give the triangle.
        for size in [1e200, 1e-200] {
            let rows: Vec<[f64; 4]> = test_rows(20).iter().map(|r| r.map(|v| v * size)).collect();
            let mut block = [[0.0; BLOCK]; 4];
            for (r, row) in rows.iter().enumerate() {
                for j in 0..4 {
                    block[j][r] = row[j];
                }
            }
            assert!(!reflect_block(&mut SMatrix::<f64, 4, 4>::zeros(), &mut block, rows.len()), "{size}");
            let t = triangle_of_rows::<4>(rows.len(), |i, row| *row = rows[i]);
            let mut rotated = SMatrix::<f64, 4, 4>::zeros();
            for row in &rows {
                let mut copy = *row;
                rotate_in(&mut rotated, &mut copy);
            }
            assert_eq!(t, rotated);
        }
    }
}
