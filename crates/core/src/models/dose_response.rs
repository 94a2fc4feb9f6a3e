//! The four-parameter logistic dose-response curve,
//! `y = floor + (ceiling − floor)/(1 + ([I]/IC50)^steepness)` (the plateaus named floor and ceiling, the exponent steepness: Turnover's own plain words), with the option
//! of fixing the top or the bottom plateau (common practice, no source).

use super::power_and_log;
use super::start::{polish, positive_range, Finish};
use crate::error::Error;
use crate::model::{Dimension, Model, Observations, ParameterSpec};

/// A logistic dose-response model; x = [I].
#[derive(Clone, Debug)]
pub struct DoseResponse {
    /// A known top plateau (the response without inhibitor), or `None` to fit it.
    pub fixed_top: Option<f64>,
    /// A known bottom plateau (the fully inhibited response), or `None` to fit it.
    pub fixed_bottom: Option<f64>,
    specs: Vec<ParameterSpec>,
}

impl DoseResponse {
    /// A logistic with the given plateaus fixed (or fitted when `None`).
    pub fn new(fixed_top: Option<f64>, fixed_bottom: Option<f64>) -> Self {
        let mut specs = Vec::new();
        if fixed_bottom.is_none() {
            specs.push(ParameterSpec { name: "floor", dimension: Dimension::Response });
        }
        if fixed_top.is_none() {
            specs.push(ParameterSpec { name: "ceiling", dimension: Dimension::Response });
        }
        specs.push(ParameterSpec { name: "IC50", dimension: Dimension::Predictor(0) });
        specs.push(ParameterSpec { name: "steepness", dimension: Dimension::Dimensionless });
        DoseResponse { fixed_top, fixed_bottom, specs }
    }

    /// (floor, ceiling, IC50, steepness) from the fitted parameter vector.
    pub fn full(&self, p: &[f64]) -> [f64; 4] {
        let mut k = 0;
        let mut next = || {
            k += 1;
            p[k - 1]
        };
        let bottom = self.fixed_bottom.unwrap_or_else(&mut next);
        let top = self.fixed_top.unwrap_or_else(&mut next);
        [bottom, top, next(), next()]
    }
}

impl Model for DoseResponse {
    fn name(&self) -> &str {
        "ic50"
    }

    fn equation(&self) -> &str {
        "y = floor + (ceiling − floor) / (1 + ([I]/IC50)^steepness)"
    }

    fn parameters(&self) -> &[ParameterSpec] {
        &self.specs
    }

    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let [bottom, top, ic50, h] = self.full(p);
        let u = if x[0] == 0.0 { 0.0 } else { power_and_log(x[0] / ic50, h).0 };
        bottom + (top - bottom) / (1.0 + u)
    }

    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        self.value_and_gradient(x, p, gradient);
    }

    /// One logarithm and one exponential for both; the value is computed as in
    /// [`Model::value`], from the same `u`.
    fn value_and_gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) -> f64 {
        let [bottom, top, ic50, h] = self.full(p);
        let i = x[0];
        let (u, log_ratio) = if i == 0.0 { (0.0, 0.0) } else { power_and_log(i / ic50, h) };
        let f = 1.0 / (1.0 + u);
        // ∂y/∂u = −(top − bottom)/(1 + u)²; ∂u/∂IC50 = −h·u/IC50; ∂u/∂h = u·ln([I]/IC50).
        let dy_du = -(top - bottom) * f * f;
        let mut k = 0;
        if self.fixed_bottom.is_none() {
            gradient[k] = 1.0 - f;
            k += 1;
        }
        if self.fixed_top.is_none() {
            gradient[k] = f;
            k += 1;
        }
        gradient[k] = dy_du * (-h * u / ic50);
        gradient[k + 1] = dy_du * u * log_ratio;
        bottom + (top - bottom) / (1.0 + u)
    }

    /// Starting values: the plateaus are the smallest and largest
    /// responses, IC50 the [I] where the responses cross their midpoint
    /// (interpolated in log [I]), and steepness 1.
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        let (low, high) = positive_range(data, 0)
            .ok_or_else(|| Error::invalid_data("a dose-response fit needs rows with an inhibitor concentration above zero"))?;
        let y = data.y();
        let i = data.predictor_column(0);
        let mut points: Vec<(f64, f64)> = i.iter().zip(y).map(|(i, y)| (*i, *y)).collect();
        points.sort_by(|a, b| a.0.total_cmp(&b.0));
        let y_at_low = points.iter().take(3).map(|p| p.1).sum::<f64>() / points.len().min(3) as f64;
        let y_at_high = points.iter().rev().take(3).map(|p| p.1).sum::<f64>() / points.len().min(3) as f64;
        let top = self.fixed_top.unwrap_or(y_at_low.max(y_at_high));
        let bottom = self.fixed_bottom.unwrap_or(y_at_low.min(y_at_high));
        let middle = (top + bottom) / 2.0;
        let mut ic50 = (low * high).sqrt();
        let positive: Vec<(f64, f64)> = points.iter().copied().filter(|p| p.0 > 0.0).collect();
        for pair in positive.windows(2) {
            let (a, b) = (pair[0], pair[1]);
            if (a.1 - middle) * (b.1 - middle) <= 0.0 && a.1 != b.1 && a.0 != b.0 {
                let t = (middle - a.1) / (b.1 - a.1);
                ic50 = (a.0.ln() + t * (b.0.ln() - a.0.ln())).exp();
                break;
            }
        }
        // The slope is positive when the response falls with [I].
        let slope = if y_at_high <= y_at_low { 1.0 } else { -1.0 };
        let mut start = Vec::new();
        if self.fixed_bottom.is_none() {
            start.push(bottom);
        }
        if self.fixed_top.is_none() {
            start.push(top);
        }
        start.extend([ic50, slope]);
        // Gauss-Newton steps from there, kept only while they lower the sum
        // of squares (see `polish`): the minimiser then starts near the
        // optimum instead of from the crude shape above.
        Ok(polish(self, data, start, Finish::Near))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::gradient_disagreement;

    #[test]
    fn value_and_gradient_equal_the_two_methods_bit_for_bit() {
        let full = [3.0, 97.0, 0.7, 1.3];
        for (top, bottom) in [(None, None), (Some(100.0), None), (None, Some(0.0)), (Some(100.0), Some(2.0))] {
            let model = DoseResponse::new(top, bottom);
            let p: Vec<f64> = match (top, bottom) {
                (None, None) => full.to_vec(),
                (Some(_), None) => vec![full[0], full[2], full[3]],
                (None, Some(_)) => vec![full[1], full[2], full[3]],
                (Some(_), Some(_)) => vec![full[2], full[3]],
            };
            for i in [0.0, 1e-9, 0.01, 0.7, 3.0, 1e6] {
                let (mut together, mut alone) = (vec![0.0; p.len()], vec![0.0; p.len()]);
                let value = model.value_and_gradient(&[i], &p, &mut together);
                model.gradient(&[i], &p, &mut alone);
                assert_eq!(value.to_bits(), model.value(&[i], &p).to_bits(), "{i}");
                assert_eq!(together.iter().map(|g| g.to_bits()).collect::<Vec<_>>(), alone.iter().map(|g| g.to_bits()).collect::<Vec<_>>());
            }
        }
    }

    #[test]
    fn gradient_matches_finite_differences() {
        let i = [0.0, 0.01, 0.1, 0.5, 1.0, 5.0, 100.0];
        let data = Observations::single(&i, &[1.0; 7]).unwrap();
        for (top, bottom) in [(None, None), (Some(100.0), None), (None, Some(0.0)), (Some(100.0), Some(2.0))] {
            let model = DoseResponse::new(top, bottom);
            let full = [3.0, 97.0, 0.7, 1.3];
            let p: Vec<f64> = match (top, bottom) {
                (None, None) => full.to_vec(),
                (Some(_), None) => vec![full[0], full[2], full[3]],
                (None, Some(_)) => vec![full[1], full[2], full[3]],
                (Some(_), Some(_)) => vec![full[2], full[3]],
            };
            let worst = gradient_disagreement(&model, &data, &p);
            assert!(worst < 1e-7, "{top:?} {bottom:?}: {worst}");
        }
    }
}

/// A Ki converted from an IC50.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct ChengPrusoff {
    /// The inhibition constant.
    pub ki: f64,
    /// Its standard error by the delta method; `None` without one for IC50.
    pub std_error: Option<f64>,
    /// The divisor: Ki = IC50 / divisor.
    pub divisor: f64,
}

/// Converts an IC50 measured at substrate concentration `s_over_km`·Km into
/// Ki for a stated mechanism (Cheng & Prusoff 1973, Biochem. Pharmacol.
/// 22, 3099, from memory): competitive Ki = IC50/(1 + [S]/Km);
/// uncompetitive Ki = IC50/(1 + Km/[S]); noncompetitive Ki = IC50. A mixed
/// inhibitor has two constants that one IC50 cannot give; that is an error.
///
/// The standard error comes from the delta method with IC50 and [S]/Km
/// independent: var(Ki) = var(IC50)/c² + (IC50·c′/c²)²·var([S]/Km).
/// The relation holds only when the inhibitor is not tight-binding
/// ([I] free ≈ [I] total).
pub fn cheng_prusoff(
    ic50: f64,
    ic50_se: Option<f64>,
    mechanism: super::Mechanism,
    s_over_km: f64,
    s_over_km_se: Option<f64>,
) -> Result<ChengPrusoff, Error> {
    use super::Mechanism;
    if !(ic50.is_finite() && ic50 > 0.0) {
        return Err(Error::invalid_option("IC50 must be a positive number"));
    }
    if !(s_over_km.is_finite() && s_over_km >= 0.0) {
        return Err(Error::invalid_option("[S]/Km must be zero or a positive number"));
    }
    let (divisor, derivative) = match mechanism {
        Mechanism::Competitive => (1.0 + s_over_km, 1.0),
        Mechanism::Uncompetitive => {
            if s_over_km == 0.0 {
                return Err(Error::invalid_option("an uncompetitive inhibitor has no IC50 at [S] = 0"));
            }
            (1.0 + 1.0 / s_over_km, -1.0 / (s_over_km * s_over_km))
        }
        Mechanism::Noncompetitive => (1.0, 0.0),
        Mechanism::Mixed => {
            return Err(Error::invalid_option(
                "a mixed inhibitor has two constants (Kic, Kiu); one IC50 cannot give them. Fit rates at several [S] and [I] instead",
            ))
        }
    };
    let ki = ic50 / divisor;
    let std_error = ic50_se.map(|se| {
        let ratio_var = s_over_km_se.map_or(0.0, |r| r * r);
        ((se / divisor).powi(2) + (ic50 * derivative / (divisor * divisor)).powi(2) * ratio_var).sqrt()
    });
    Ok(ChengPrusoff { ki, std_error, divisor })
}

#[cfg(test)]
mod conversion_tests {
    use super::*;
    use crate::models::Mechanism;

    /// Cheng & Prusoff (1973): a competitive inhibitor measured at
    /// [S] = Km has IC50 = 2·Ki; at [S] = 3·Km, IC50 = 4·Ki (the relation
    /// itself, from memory).
    #[test]
    fn competitive_and_uncompetitive_conversions() {
        let c = cheng_prusoff(10.0, Some(1.0), Mechanism::Competitive, 1.0, None).unwrap();
        assert!((c.ki - 5.0).abs() < 1e-12 && (c.std_error.unwrap() - 0.5).abs() < 1e-12);
        let c = cheng_prusoff(8.0, None, Mechanism::Competitive, 3.0, None).unwrap();
        assert!((c.ki - 2.0).abs() < 1e-12);
        let c = cheng_prusoff(8.0, None, Mechanism::Uncompetitive, 1.0 / 3.0, None).unwrap();
        assert!((c.ki - 2.0).abs() < 1e-12);
        assert_eq!(cheng_prusoff(8.0, None, Mechanism::Noncompetitive, 5.0, None).unwrap().ki, 8.0);
        assert!(cheng_prusoff(8.0, None, Mechanism::Mixed, 5.0, None).is_err());
        // Delta method against a central difference of Ki in [S]/Km.
        let (r, sr) = (2.0, 0.2);
        let c = cheng_prusoff(9.0, Some(0.0), Mechanism::Competitive, r, Some(sr)).unwrap();
        let h = 1e-6;
        let slope = (9.0 / (1.0 + r + h) - 9.0 / (1.0 + r - h)) / (2.0 * h);
        assert!((c.std_error.unwrap() - slope.abs() * sr).abs() < 1e-8);
    }
}
