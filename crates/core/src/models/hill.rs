//! The Hill equation, v = Vmax·[S]^nH/(K0.5^nH + [S]^nH), an empirical
//! description of cooperative binding (handbook form; K0.5 is the [S] of
//! half-maximal rate and nH the Hill coefficient).

use super::michaelis_menten::MichaelisMenten;
use super::power_and_log;
use super::start::{log_grid, scaled_rss};
use crate::error::Error;
use crate::model::{Dimension, Model, Observations, ParameterSpec};

/// The Hill equation with parameters `Vmax`, `K0.5`, `nH`; x = [S].
#[derive(Clone, Copy, Debug, Default)]
pub struct Hill;

const PARAMETERS: [ParameterSpec; 3] = [
    ParameterSpec { name: "Vmax", dimension: Dimension::Response },
    ParameterSpec { name: "K0.5", dimension: Dimension::Predictor(0) },
    ParameterSpec { name: "nH", dimension: Dimension::Dimensionless },
];

impl Model for Hill {
    fn name(&self) -> &str {
        "hill"
    }

    fn equation(&self) -> &str {
        "v = Vmax·[S]^nH / (K0.5^nH + [S]^nH)"
    }

    fn parameters(&self) -> &[ParameterSpec] {
        &PARAMETERS
    }

    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let u = power_and_log(x[0] / p[1], p[2]).0;
        p[0] * u / (1.0 + u)
    }

    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let s = x[0];
        if s == 0.0 {
            // v = 0 for every parameter value (nH > 0).
            gradient.iter_mut().for_each(|g| *g = 0.0);
            return;
        }
        let (u, log_ratio) = power_and_log(s / p[1], p[2]);
        let dv_du = p[0] / ((1.0 + u) * (1.0 + u));
        gradient[0] = u / (1.0 + u);
        gradient[1] = -dv_du * p[2] * u / p[1];
        gradient[2] = dv_du * u * log_ratio;
    }

    /// Starting values: Vmax and K0.5 from the Michaelis-Menten rule, then
    /// K0.5 within a factor of four and nH from 0.3 to 5 on a grid, Vmax by
    /// linear least squares at each grid point.
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        let base = MichaelisMenten.initial_guess(data)?;
        let mut best: Option<(f64, Vec<f64>)> = None;
        for k in log_grid(base[1] / 4.0, base[1] * 4.0, 15) {
            for n in log_grid(0.3, 5.0, 25) {
                let shape = |x: &[f64]| self.value(x, &[1.0, k, n]);
                if let Some((scale, rss)) = scaled_rss(data, &shape) {
                    if scale > 0.0 && best.as_ref().is_none_or(|(b, _)| rss < *b) {
                        best = Some((rss, vec![scale, k, n]));
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
        let s = [0.0, 0.01, 0.1, 0.5, 1.0, 5.0, 100.0];
        let data = Observations::single(&s, &[1.0; 7]).unwrap();
        for p in [[1.0, 0.5, 1.0], [212.7, 0.064, 2.7], [1e-3, 10.0, 0.6]] {
            let worst = gradient_disagreement(&Hill, &data, &p);
            assert!(worst < 1e-7, "p = {p:?}: {worst}");
        }
    }
}
