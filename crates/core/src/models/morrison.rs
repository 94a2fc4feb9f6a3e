//! Tight-binding inhibition (the Morrison equation): when the inhibitor is
//! not in large excess over the enzyme, free [I] is not total [I], and the
//! fractional rate follows the quadratic solution of the binding
//! equilibrium (Morrison 1969, Biochim. Biophys. Acta 185, 269, from
//! memory):
//!
//! ```text
//! v = v0·(1 − ([E]t + [I] + Ki_app − √(([E]t + [I] + Ki_app)² − 4[E]t[I])) / (2[E]t))
//! ```
//!
//! It is evaluated here in the algebraically equal form
//! `v0·(1 − 2[I]/(q + √(q² − 4[E]t[I])))`, `q = [E]t + [I] + Ki_app`, which
//! avoids the cancellation of `q − √…` when [E]t is small.

use super::start::{log_grid, positive_range, scaled_rss};
use crate::error::Error;
use crate::model::{Dimension, Model, Observations, ParameterSpec};

/// The Morrison equation with parameters `v0`, `Ki_app` and a known total
/// enzyme concentration (in the units of [I]); x = [I].
#[derive(Clone, Copy, Debug)]
pub struct Morrison {
    /// Total enzyme concentration [E]t, in the units of [I]; positive.
    pub enzyme: f64,
}

const PARAMETERS: [ParameterSpec; 2] = [
    ParameterSpec { name: "v0", dimension: Dimension::Response },
    ParameterSpec { name: "Ki_app", dimension: Dimension::Predictor(0) },
];

impl Morrison {
    fn denominator(&self, i: f64, k: f64) -> (f64, f64, f64) {
        let q = self.enzyme + i + k;
        let r = (q * q - 4.0 * self.enzyme * i).max(0.0).sqrt();
        (q, r, q + r)
    }
}

impl Model for Morrison {
    fn name(&self) -> &str {
        "morrison"
    }

    fn equation(&self) -> &str {
        "v = v0·(1 − ([E]t + [I] + Ki_app − √(([E]t + [I] + Ki_app)² − 4·[E]t·[I])) / (2·[E]t))"
    }

    fn parameters(&self) -> &[ParameterSpec] {
        &PARAMETERS
    }

    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let i = x[0];
        let (_, _, sum) = self.denominator(i, p[1]);
        p[0] * (1.0 - 2.0 * i / sum)
    }

    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let i = x[0];
        let (q, r, sum) = self.denominator(i, p[1]);
        gradient[0] = 1.0 - 2.0 * i / sum;
        gradient[1] = p[0] * 2.0 * i * (1.0 + q / r) / (sum * sum);
    }

    /// Starting values: Ki_app on a logarithmic grid from 1/100 of the
    /// smallest [I] > 0 to 100 times the largest, v0 by linear least
    /// squares at each grid point.
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        let (low, high) = positive_range(data, 0)
            .ok_or_else(|| Error::invalid_data("the Morrison fit needs rows with an inhibitor concentration above zero"))?;
        let mut best: Option<(f64, Vec<f64>)> = None;
        for k in log_grid(low / 100.0, high * 100.0, 80) {
            let shape = |x: &[f64]| self.value(x, &[1.0, k]);
            if let Some((scale, rss)) = scaled_rss(data, &shape) {
                if scale > 0.0 && best.as_ref().is_none_or(|(b, _)| rss < *b) {
                    best = Some((rss, vec![scale, k]));
                }
            }
        }
        best.map(|(_, p)| p).ok_or_else(|| Error::numerical("no starting values could be formed"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::gradient_disagreement;

    #[test]
    fn gradient_matches_finite_differences() {
        let i = [0.0, 0.5, 1.0, 2.0, 5.0, 20.0, 100.0];
        let data = Observations::single(&i, &[1.0; 7]).unwrap();
        for (enzyme, p) in [(1.0, [10.0, 0.3]), (5.0, [1.0, 5.0]), (1e-3, [3.0, 2.0]), (2.0, [0.1, 200.0])] {
            let worst = gradient_disagreement(&Morrison { enzyme }, &data, &p);
            assert!(worst < 1e-7, "E = {enzyme}, p = {p:?}: {worst}");
        }
    }

    /// With [E]t ≪ Ki_app the Morrison equation becomes the classical
    /// hyperbola v0/(1 + [I]/Ki) (the limit is a handbook fact; common
    /// practice, no source for the numbers).
    #[test]
    fn reduces_to_the_hyperbola_for_little_enzyme() {
        let model = Morrison { enzyme: 1e-9 };
        for i in [0.1, 1.0, 10.0] {
            let v = model.value(&[i], &[5.0, 2.0]);
            assert!((v - 5.0 / (1.0 + i / 2.0)).abs() < 1e-8, "{v}");
        }
    }
}
