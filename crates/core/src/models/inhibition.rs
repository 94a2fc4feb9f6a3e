//! Reversible inhibition of a Michaelis-Menten enzyme, fitted globally to
//! rates measured at several substrate and inhibitor concentrations.
//!
//! Every mechanism is a case of the mixed rate law
//!
//! ```text
//! v = Vmax·[S] / (Km·(1 + [I]/Kic) + [S]·(1 + [I]/Kiu))
//! ```
//!
//! with Kic the dissociation constant of the inhibitor from the free enzyme
//! and Kiu from the enzyme-substrate complex (handbook form, as in
//! Cornish-Bowden, "Fundamentals of Enzyme Kinetics", 4th ed. 2012, ch. 6,
//! from memory). Competitive inhibition is the limit Kiu → ∞,
//! uncompetitive the limit Kic → ∞, and noncompetitive (in the strict
//! sense) the case Kic = Kiu = Ki. The predictors are `x = [S, I]`.

use super::michaelis_menten::MichaelisMenten;
use super::start::{log_grid, polish, positive_range, scaled_rss_in, Finish};
use crate::error::Error;
use crate::model::{Dimension, Model, Observations, ParameterSpec};

/// Which reversible mechanism.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Mechanism {
    /// The inhibitor binds the free enzyme only (`Kic`).
    Competitive,
    /// The inhibitor binds the enzyme-substrate complex only (`Kiu`).
    Uncompetitive,
    /// The inhibitor binds both, with different constants (`Kic`, `Kiu`).
    Mixed,
    /// The inhibitor binds both with one constant (`Ki`).
    Noncompetitive,
}

impl Mechanism {
    /// The four mechanisms, simplest first, mixed last.
    pub const ALL: [Mechanism; 4] =
        [Mechanism::Competitive, Mechanism::Uncompetitive, Mechanism::Noncompetitive, Mechanism::Mixed];

    /// The machine name (`competitive`, ...).
    pub fn name(self) -> &'static str {
        match self {
            Mechanism::Competitive => "competitive",
            Mechanism::Uncompetitive => "uncompetitive",
            Mechanism::Mixed => "mixed",
            Mechanism::Noncompetitive => "noncompetitive",
        }
    }
}

const VMAX: ParameterSpec = ParameterSpec { name: "Vmax", dimension: Dimension::Response };
const KM: ParameterSpec = ParameterSpec { name: "Km", dimension: Dimension::Predictor(0) };
const COMPETITIVE: [ParameterSpec; 3] = [VMAX, KM, ParameterSpec { name: "Kic", dimension: Dimension::Predictor(1) }];
const UNCOMPETITIVE: [ParameterSpec; 3] = [VMAX, KM, ParameterSpec { name: "Kiu", dimension: Dimension::Predictor(1) }];
const MIXED: [ParameterSpec; 4] = [
    VMAX,
    KM,
    ParameterSpec { name: "Kic", dimension: Dimension::Predictor(1) },
    ParameterSpec { name: "Kiu", dimension: Dimension::Predictor(1) },
];
const NONCOMPETITIVE: [ParameterSpec; 3] = [VMAX, KM, ParameterSpec { name: "Ki", dimension: Dimension::Predictor(1) }];

/// A global reversible-inhibition model; `x = [S, I]`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Inhibition {
    /// The mechanism this model describes.
    pub mechanism: Mechanism,
}

impl Inhibition {
    /// The model of `mechanism`.
    pub fn new(mechanism: Mechanism) -> Self {
        Inhibition { mechanism }
    }

    /// The constants (Kic, Kiu) this mechanism implies, with infinity for
    /// an absent binding step.
    pub fn constants(&self, p: &[f64]) -> (f64, f64) {
        match self.mechanism {
            Mechanism::Competitive => (p[2], f64::INFINITY),
            Mechanism::Uncompetitive => (f64::INFINITY, p[2]),
            Mechanism::Mixed => (p[2], p[3]),
            Mechanism::Noncompetitive => (p[2], p[2]),
        }
    }

    /// Apparent (Vmax, Km) at inhibitor concentration `i`: the hyperbola in
    /// [S] that this model gives at that [I].
    pub fn apparent(&self, i: f64, p: &[f64]) -> (f64, f64) {
        let (kic, kiu) = self.constants(p);
        let a = 1.0 + i / kic;
        let b = 1.0 + i / kiu;
        (p[0] / b, p[1] * a / b)
    }
}

impl Model for Inhibition {
    fn name(&self) -> &str {
        self.mechanism.name()
    }

    fn equation(&self) -> &str {
        match self.mechanism {
            Mechanism::Competitive => "v = Vmax·[S] / (Km·(1 + [I]/Kic) + [S])",
            Mechanism::Uncompetitive => "v = Vmax·[S] / (Km + [S]·(1 + [I]/Kiu))",
            Mechanism::Mixed => "v = Vmax·[S] / (Km·(1 + [I]/Kic) + [S]·(1 + [I]/Kiu))",
            Mechanism::Noncompetitive => "v = Vmax·[S] / ((Km + [S])·(1 + [I]/Ki))",
        }
    }

    fn parameters(&self) -> &[ParameterSpec] {
        match self.mechanism {
            Mechanism::Competitive => &COMPETITIVE,
            Mechanism::Uncompetitive => &UNCOMPETITIVE,
            Mechanism::Mixed => &MIXED,
            Mechanism::Noncompetitive => &NONCOMPETITIVE,
        }
    }

    fn predictors(&self) -> usize {
        2
    }

    /// `Vmax·([S]·(1/D))` with `D = Km·(1 + [I]·(1/Kic)) + [S]·(1 + [I]·(1/Kiu))`:
    /// the constants enter by their reciprocals (one division per
    /// evaluation for the denominator; 1/∞ = 0 for an absent binding step)
    /// so that [`Inhibition::values_and_gradients`] needs one division a
    /// row.
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let (s, i) = (x[0], x[1]);
        let (kic, kiu) = self.constants(p);
        let d = p[1] * (1.0 + i * (1.0 / kic)) + s * (1.0 + i * (1.0 / kiu));
        p[0] * (s * (1.0 / d))
    }

    /// The gradient half of [`Inhibition::value_and_gradient`]: the
    /// expressions are written once, there.
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        self.value_and_gradient(x, p, gradient);
    }

    /// The value and gradient sharing the denominator: the value is the
    /// same expression as [`Inhibition::value`], so the same bits. With
    /// `t = Vmax·[S]/D²`: ∂v/∂Km = −t·(1 + [I]/Kic), ∂v/∂Kic =
    /// t·Km·[I]/Kic², ∂v/∂Kiu = t·[S]·[I]/Kiu².
    fn value_and_gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) -> f64 {
        let (kic, kiu) = self.constants(p);
        let terms = Terms::new(p, kic, kiu);
        let mut row = [0.0; 4];
        let value = terms.row(self.mechanism, x[0], x[1], &mut row);
        gradient.copy_from_slice(&row[..gradient.len()]);
        value
    }

    /// The loop of [`Inhibition::value_and_gradient`] written out, the same
    /// expressions (so the same bits), with the parameters' terms worked
    /// out once.
    fn values_and_gradients(&self, data: &Observations, first: usize, rows: usize, p: &[f64], out: &mut [f64], stride: usize) {
        let (kic, kiu) = self.constants(p);
        let terms = Terms::new(p, kic, kiu);
        let x = &data.x_values()[2 * first..2 * (first + rows)];
        let k = p.len();
        let mut row = [0.0; 4];
        for r in 0..rows {
            let value = terms.row(self.mechanism, x[2 * r], x[2 * r + 1], &mut row);
            for j in 0..k {
                out[j * stride + r] = row[j];
            }
            out[k * stride + r] = value;
        }
    }

    /// Starting values: Vmax and Km from the Michaelis-Menten rule applied
    /// to the rows at the lowest [I] (normally [I] = 0); then the inhibition
    /// constants, and Km within a factor of two, from a logarithmic grid
    /// (from 1/30 of the smallest to 30 times the largest [I] > 0; for the
    /// two constants of mixed inhibition a coarse grid refined around its
    /// best point), with Vmax by linear least squares at each grid point.
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        let (i_low, i_high) = positive_range(data, 1).ok_or_else(|| {
            Error::invalid_data("an inhibition model needs rows with an inhibitor concentration [I] above zero")
        })?;
        let i_min = data.predictor_column(1).into_iter().fold(f64::INFINITY, f64::min);
        let (mut s_low, mut v_low) = (Vec::new(), Vec::new());
        for row in 0..data.len() {
            if data.x(row)[1] == i_min {
                s_low.push(data.x(row)[0]);
                v_low.push(data.y()[row]);
            }
        }
        let base = Observations::single(&s_low, &v_low)
            .and_then(|o| MichaelisMenten.initial_guess(&o))
            .or_else(|_| MichaelisMenten.initial_guess(&Observations::single(&data.predictor_column(0), data.y())?))?;
        // Each candidate's shape at every point is the model's value with
        // Vmax = 1, computed by the model's own expression from the factors
        // 1 + [I]/Kic and 1 + [I]/Kiu, which are worked out once per grid
        // value rather than once per candidate (the same numbers, bit for
        // bit; a third of the divisions).
        let mut grid = GridScorer::new(data);
        let mut best: Option<(f64, [f64; 4])> = None;
        let consider = |candidate: Option<(f64, [f64; 4])>, best: &mut Option<(f64, [f64; 4])>| {
            if let Some((rss, p)) = candidate {
                if best.as_ref().is_none_or(|(b, _)| rss < *b) {
                    *best = Some((rss, p));
                }
            }
        };
        match self.mechanism {
            Mechanism::Mixed => {
                // Two constants: a coarse grid (9 × 9 at the Km of the
                // rows without inhibitor, which those rows define well),
                // then a finer one (3 × 3 at half the coarse step, so
                // reaching halfway to the neighbouring coarse points, Km ×
                // 0.7, 1, 1.4) around the best coarse point: 108
                // candidates where the full 25 × 25 × 5 grid had 3,125
                // (and earlier rules 318, then 156 with a 5 × 5 finer grid
                // that reached the coarse neighbours themselves).
                let coarse = log_grid(i_low / 30.0, i_high * 30.0, 9);
                let factors = grid.factors(&coarse);
                for (a, &k1) in coarse.iter().enumerate() {
                    for (b, &k2) in coarse.iter().enumerate() {
                        consider(grid.score([1.0, base[1], k1, k2], &factors[a], &factors[b]), &mut best);
                    }
                }
                if let Some((_, centre)) = best {
                    let half_step = (coarse[1] / coarse[0]).sqrt();
                    let kic: Vec<f64> = (-1..=1).map(|a| centre[2] * half_step.powi(a)).collect();
                    let kiu: Vec<f64> = (-1..=1).map(|b| centre[3] * half_step.powi(b)).collect();
                    let (kic_factors, kiu_factors) = (grid.factors(&kic), grid.factors(&kiu));
                    for factor in [0.7, 1.0, 1.4] {
                        let km = centre[1] * factor;
                        for (a, &k1) in kic.iter().enumerate() {
                            for (b, &k2) in kiu.iter().enumerate() {
                                consider(grid.score([1.0, km, k1, k2], &kic_factors[a], &kiu_factors[b]), &mut best);
                            }
                        }
                    }
                }
            }
            mechanism => {
                let values = log_grid(i_low / 30.0, i_high * 30.0, 25);
                let factors = grid.factors(&values);
                // An absent binding step: 1 + [I]/∞ = 1 exactly.
                let absent = vec![1.0; data.len()];
                for factor in [0.5, 0.7, 1.0, 1.4, 2.0] {
                    let km = base[1] * factor;
                    for (a, &k1) in values.iter().enumerate() {
                        let (competitive, uncompetitive) = match mechanism {
                            Mechanism::Competitive => (&factors[a], &absent),
                            Mechanism::Uncompetitive => (&absent, &factors[a]),
                            _ => (&factors[a], &factors[a]),
                        };
                        consider(grid.score([1.0, km, k1, 0.0], competitive, uncompetitive), &mut best);
                    }
                }
            }
        }
        let len = self.parameters().len();
        // The grid's best point is only as near the optimum as the grid's
        // spacing: a few Gauss-Newton steps on the fit's own sum of squares
        // bring it nearer (on the benchmark's 28-point mixed-inhibition
        // sets the minimiser then needs 4.5 evaluations on average, not 8.6).
        let best = best.map(|(_, p)| p[..len].to_vec()).ok_or_else(|| Error::numerical("no starting values could be formed for the inhibition model"))?;
        Ok(polish(self, data, best, Finish::Near))
    }
}

/// What [`Inhibition::value_and_gradient`] needs of the parameters, worked
/// out once per evaluation: Vmax, Km and the reciprocals of Kic and Kiu.
struct Terms {
    vmax: f64,
    km: f64,
    inverse_kic: f64,
    inverse_kiu: f64,
}

impl Terms {
    fn new(p: &[f64], kic: f64, kiu: f64) -> Self {
        Terms { vmax: p[0], km: p[1], inverse_kic: 1.0 / kic, inverse_kiu: 1.0 / kiu }
    }

    /// The value at ([S], [I]) = (`s`, `i`), with the gradient in `row`
    /// (the model's parameters in order).
    #[inline(always)]
    fn row(&self, mechanism: Mechanism, s: f64, i: f64, row: &mut [f64; 4]) -> f64 {
        let (ic, iu) = (i * self.inverse_kic, i * self.inverse_kiu);
        let a = 1.0 + ic;
        let d = self.km * a + s * (1.0 + iu);
        let inverse_d = 1.0 / d;
        let shape = s * inverse_d;
        let value = self.vmax * shape;
        let t = value * inverse_d;
        row[0] = shape;
        row[1] = -t * a;
        let d_kic = || t * self.km * ic * self.inverse_kic;
        let d_kiu = || t * s * iu * self.inverse_kiu;
        match mechanism {
            Mechanism::Competitive => row[2] = d_kic(),
            Mechanism::Uncompetitive => row[2] = d_kiu(),
            Mechanism::Mixed => {
                row[2] = d_kic();
                row[3] = d_kiu();
            }
            Mechanism::Noncompetitive => row[2] = d_kic() + d_kiu(),
        }
        value
    }
}

/// Scores candidate starting points: the least-squares Vmax for the shape
/// the other constants give and the residual sum of squares it leaves,
/// with the shape values in one reused buffer (nothing is allocated per
/// candidate).
struct Scorer<'a> {
    model: &'a Inhibition,
    data: &'a Observations,
    shapes: Vec<f64>,
}

impl<'a> Scorer<'a> {
    fn new(model: &'a Inhibition, data: &'a Observations) -> Self {
        Scorer { model, data, shapes: Vec::with_capacity(data.len()) }
    }

    /// `(rss, p)` with `p[0]` the least-squares Vmax for the constants
    /// `p[1..]` (the model's first parameters; the rest of the array is
    /// ignored); `None` when the shape is not usable or the scale is not
    /// positive.
    fn score(&mut self, p: [f64; 4]) -> Option<(f64, [f64; 4])> {
        let len = self.model.parameters().len();
        let mut unit = p;
        unit[0] = 1.0;
        let model = self.model;
        let shape = |x: &[f64]| model.value(x, &unit[..len]);
        let (scale, rss) = scaled_rss_in(self.data, &shape, &mut self.shapes)?;
        if !(scale > 0.0) {
            return None;
        }
        let mut p = p;
        p[0] = scale;
        Some((rss, p))
    }
}

/// Scores grid candidates like [`Scorer`], the shape written out for
/// precomputed inhibition factors: for Vmax = 1 the model's value is
/// `[S]·(1/(Km·(1 + [I]·(1/Kic)) + [S]·(1 + [I]·(1/Kiu))))`, the very
/// expression of [`Inhibition::value`] (so the same bits), and the factors
/// `1 + [I]·(1/K)` for each grid value K are computed once per grid rather
/// than once per candidate. The scale is formed as in [`scaled_rss_in`]
/// (with its sums split, see [`GridScorer::score`]); the sum of squares
/// from the sums already made.
struct GridScorer<'a> {
    data: &'a Observations,
    substrate: Vec<f64>,
    /// Σ w·y².
    sum_wyy: f64,
}

impl<'a> GridScorer<'a> {
    fn new(data: &'a Observations) -> Self {
        let sum_wyy = data.y().iter().zip(data.weights()).map(|(y, w)| w * y * y).sum();
        GridScorer { data, substrate: data.predictor_column(0), sum_wyy }
    }

    /// `1 + [I]·(1/K)` at every point, for every K in `values` (as the
    /// model's value forms it).
    fn factors(&self, values: &[f64]) -> Vec<Vec<f64>> {
        values.iter().map(|k| (0..self.data.len()).map(|r| 1.0 + self.data.x(r)[1] * (1.0 / k)).collect()).collect()
    }

    /// `(rss, p)` with `p[0]` the least-squares Vmax for Km = `p[1]` and
    /// the factors `competitive` (1 + [I]/Kic) and `uncompetitive`
    /// (1 + [I]/Kiu); `None` when the shape is not usable or the scale is
    /// not positive.
    fn score(&mut self, p: [f64; 4], competitive: &[f64], uncompetitive: &[f64]) -> Option<(f64, [f64; 4])> {
        let km = p[1];
        let n = self.substrate.len();
        let (s, a, b) = (&self.substrate[..n], &competitive[..n], &uncompetitive[..n]);
        let (y, w) = (&self.data.y()[..n], &self.data.weights()[..n]);
        // One pass, with the sums over even and odd points kept apart so
        // that two additions can be in flight at once (the sums are then
        // rounded in a different order than a plain loop's, by a few ulps).
        // A shape value that is not finite leaves Σw·g² not finite (every
        // weight is positive, so w·g² is +∞ or NaN), which is checked once
        // at the end instead of at every point: the same candidates are
        // turned down.
        let (mut sgy, mut sgg, mut sgy_odd, mut sgg_odd) = (0.0, 0.0, 0.0, 0.0);
        let mut k = 0;
        while k + 1 < n {
            let g = s[k] * (1.0 / (km * a[k] + s[k] * b[k]));
            let h = s[k + 1] * (1.0 / (km * a[k + 1] + s[k + 1] * b[k + 1]));
            sgy += w[k] * g * y[k];
            sgg += w[k] * g * g;
            sgy_odd += w[k + 1] * h * y[k + 1];
            sgg_odd += w[k + 1] * h * h;
            k += 2;
        }
        if k < n {
            let g = s[k] * (1.0 / (km * a[k] + s[k] * b[k]));
            sgy += w[k] * g * y[k];
            sgg += w[k] * g * g;
        }
        if !(sgy.is_finite() && sgg.is_finite() && sgy_odd.is_finite() && sgg_odd.is_finite()) {
            return None;
        }
        let (sgy, sgg) = (sgy + sgy_odd, sgg + sgg_odd);
        if sgg <= 0.0 {
            return None;
        }
        let scale = sgy / sgg;
        if !(scale > 0.0) {
            return None;
        }
        // Σw(y − scale·g)² = Σwy² − scale·Σwgy at the least-squares scale,
        // without a third pass. It loses about ε·Σwy² to cancellation, far
        // below the differences between grid candidates that matter (a
        // near-tie may rank the other way, and either start serves).
        let rss = (self.sum_wyy - scale * sgy).max(0.0);
        let mut p = p;
        p[0] = scale;
        Some((rss, p))
    }
}

impl Inhibition {
    /// Starting points for mixed inhibition when the single mechanisms have
    /// been fitted already: their solutions `seeds` (written as mixed
    /// parameter vectors), and a coarse 9 × 9 logarithmic grid of Kic and
    /// Kiu (from 1/30 of the smallest to 30 times the largest [I] > 0, at
    /// the Km of the best-scoring seed), each with Vmax by linear least
    /// squares; ordered by residual sum of squares, best first. 84
    /// candidates, where the model's own starting rule scores 156 and then
    /// needs a minimisation of its own.
    pub fn mixed_candidates(&self, data: &Observations, seeds: &[[f64; 4]]) -> Vec<(f64, [f64; 4])> {
        let mut scorer = Scorer::new(self, data);
        let mut ranked: Vec<(f64, [f64; 4])> = seeds.iter().filter_map(|p| scorer.score(*p)).collect();
        ranked.sort_by(|a, b| a.0.total_cmp(&b.0));
        if let (Some((i_low, i_high)), Some(&(_, centre))) = (positive_range(data, 1), ranked.first()) {
            let coarse = log_grid(i_low / 30.0, i_high * 30.0, 9);
            for &k1 in &coarse {
                for &k2 in &coarse {
                    ranked.extend(scorer.score([1.0, centre[1], k1, k2]));
                }
            }
            ranked.sort_by(|a, b| a.0.total_cmp(&b.0));
        }
        ranked
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::gradient_disagreement;

    fn grid_data() -> Observations {
        let mut x = Vec::new();
        for i in [0.0, 1.0, 3.0, 10.0] {
            for s in [0.05, 0.2, 1.0, 5.0, 50.0] {
                x.extend([s, i]);
            }
        }
        let n = x.len() / 2;
        Observations::new(2, x, vec![1.0; n], None).unwrap()
    }

    #[test]
    fn gradients_match_finite_differences() {
        let data = grid_data();
        for mechanism in Mechanism::ALL {
            let model = Inhibition::new(mechanism);
            for scale in [1e-3, 1.0, 1e3] {
                let mut p = vec![12.0 * scale, 0.8, 2.5 * scale, 7.0];
                p.truncate(model.parameters().len());
                let worst = gradient_disagreement(&model, &data, &p);
                assert!(worst < 1e-7, "{}: p = {p:?}: {worst}", mechanism.name());
            }
        }
    }

    #[test]
    fn value_and_gradient_together_are_the_same_bits() {
        let data = grid_data();
        for mechanism in Mechanism::ALL {
            let model = Inhibition::new(mechanism);
            let p = &[12.0, 0.8, 2.5, 7.0][..model.parameters().len()];
            for r in 0..data.len() {
                let (mut apart, mut together) = ([0.0; 4], [0.0; 4]);
                model.gradient(data.x(r), p, &mut apart[..p.len()]);
                let value = model.value_and_gradient(data.x(r), p, &mut together[..p.len()]);
                assert_eq!(value.to_bits(), model.value(data.x(r), p).to_bits());
                assert_eq!(apart.map(f64::to_bits), together.map(f64::to_bits));
            }
        }
    }

    #[test]
    fn starting_values_on_exact_data_are_near() {
        let base = grid_data();
        for mechanism in Mechanism::ALL {
            let model = Inhibition::new(mechanism);
            let truth: Vec<f64> = [10.0, 0.7, 2.0, 6.0][..model.parameters().len()].to_vec();
            let y: Vec<f64> = (0..base.len()).map(|r| model.value(base.x(r), &truth)).collect();
            let x: Vec<f64> = (0..base.len()).flat_map(|r| base.x(r).to_vec()).collect();
            let data = Observations::new(2, x, y, None).unwrap();
            let start = model.initial_guess(&data).unwrap();
            for (s, t) in start.iter().zip(&truth) {
                assert!((s / t).ln().abs() < 0.7, "{}: start {start:?} truth {truth:?}", mechanism.name());
            }
        }
    }
}
