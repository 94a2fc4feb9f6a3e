//! Substrate inhibition, v = Vmax·[S]/(Km + [S] + [S]²/Ksi): a second,
//! unproductive substrate molecule binds the enzyme-substrate complex with
//! dissociation constant Ksi (handbook form, e.g. Cornish-Bowden 2012,
//! ch. 6, from memory).

use super::michaelis_menten::MichaelisMenten;
use super::start::{log_grid, positive_range, scaled_rss};
use crate::error::Error;
use crate::model::{Dimension, Model, Observations, ParameterSpec};

/// Substrate inhibition with parameters `Vmax`, `Km`, `Ksi`; x = [S].
#[derive(Clone, Copy, Debug, Default)]
pub struct SubstrateInhibition;

const PARAMETERS: [ParameterSpec; 3] = [
    ParameterSpec { name: "Vmax", dimension: Dimension::Response },
    ParameterSpec { name: "Km", dimension: Dimension::Predictor(0) },
    ParameterSpec { name: "Ksi", dimension: Dimension::Predictor(0) },
];

impl Model for SubstrateInhibition {
    fn name(&self) -> &str {
        "substrate-inhibition"
    }

    fn equation(&self) -> &str {
        "v = Vmax·[S] / (Km + [S] + [S]²/Ksi)"
    }

    fn parameters(&self) -> &[ParameterSpec] {
        &PARAMETERS
    }

    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let s = x[0];
        p[0] * s / (p[1] + s + s * s / p[2])
    }

    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let s = x[0];
        let d = p[1] + s + s * s / p[2];
        gradient[0] = s / d;
        gradient[1] = -p[0] * s / (d * d);
        gradient[2] = p[0] * s * s * s / (p[2] * p[2] * d * d);
    }

    /// Starting values: Km (within a factor of four of the Michaelis-Menten
    /// rule's value on the rows up to the fastest rate) and Ksi (from the
    /// smallest [S] to 1000 times the largest) on a logarithmic grid, Vmax
    /// by linear least squares at each grid point.
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        let s = data.predictor_column(0);
        let (s_low, s_high) = positive_range(data, 0)
            .ok_or_else(|| Error::numerical("starting values need points with positive [S]"))?;
        let peak = s
            .iter()
            .zip(data.y())
            .max_by(|a, b| a.1.total_cmp(b.1))
            .map(|(s, _)| *s)
            .unwrap_or(s_high);
        let rising: Vec<(f64, f64)> = s.iter().zip(data.y()).filter(|(s, _)| **s <= peak).map(|(s, v)| (*s, *v)).collect();
        let (xs, ys): (Vec<f64>, Vec<f64>) = rising.into_iter().unzip();
        let km0 = Observations::single(&xs, &ys)
            .and_then(|o| MichaelisMenten.initial_guess(&o))
            .map(|p| p[1])
            .unwrap_or(peak);
        let mut best: Option<(f64, Vec<f64>)> = None;
        for km in log_grid(km0 / 4.0, km0 * 4.0, 15) {
            for ksi in log_grid(s_low, s_high * 1000.0, 30) {
                let shape = |x: &[f64]| self.value(x, &[1.0, km, ksi]);
                if let Some((scale, rss)) = scaled_rss(data, &shape) {
                    if scale > 0.0 && best.as_ref().is_none_or(|(b, _)| rss < *b) {
                        best = Some((rss, vec![scale, km, ksi]));
                    }
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
        let s = [0.01, 0.1, 0.5, 1.0, 5.0, 100.0];
        let data = Observations::single(&s, &[1.0; 6]).unwrap();
        for p in [[1.0, 0.5, 3.0], [212.7, 0.064, 40.0], [1e-3, 1e3, 1e2]] {
            let worst = gradient_disagreement(&SubstrateInhibition, &data, &p);
            assert!(worst < 1e-7, "p = {p:?}: {worst}");
        }
    }
}
