//! The Michaelis-Menten rate law, v = Vmax·[S]/(Km + [S]).

use crate::error::Error;
use crate::model::{Dimension, Model, Observations, ParameterSpec};
use super::start::{polish, Finish};

/// The Michaelis-Menten rate law with parameters `Vmax` and `Km`; the one
/// predictor is [S].
#[derive(Clone, Copy, Debug, Default)]
pub struct MichaelisMenten;

const PARAMETERS: [ParameterSpec; 2] = [
    ParameterSpec { name: "Vmax", dimension: Dimension::Response },
    ParameterSpec { name: "Km", dimension: Dimension::Predictor(0) },
];

impl Model for MichaelisMenten {
    fn name(&self) -> &str {
        "mm"
    }

    fn equation(&self) -> &str {
        "v = Vmax·[S] / (Km + [S])"
    }

    fn parameters(&self) -> &[ParameterSpec] {
        &PARAMETERS
    }

    /// `Vmax·([S]·(1/(Km + [S])))`: the reciprocal of the denominator is
    /// the one division, shared by the value and the gradient.
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let s = x[0];
        p[0] * (s * (1.0 / (p[1] + s)))
    }

    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        self.value_and_gradient(x, p, gradient);
    }

    /// The value and gradient sharing `1/(Km + [S])`; the value is the same
    /// expression as [`MichaelisMenten::value`], so the same bits.
    fn value_and_gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) -> f64 {
        let s = x[0];
        let inverse = 1.0 / (p[1] + s);
        let shape = s * inverse;
        let value = p[0] * shape;
        gradient[0] = shape;
        gradient[1] = -value * inverse;
        value
    }

    /// The loop of [`MichaelisMenten::value_and_gradient`] written out, the
    /// same expressions (so the same bits).
    fn values_and_gradients(&self, data: &Observations, first: usize, rows: usize, p: &[f64], out: &mut [f64], stride: usize) {
        let (vmax, km) = (p[0], p[1]);
        let s = &data.x_values()[first..first + rows];
        let (d_vmax, rest) = out.split_at_mut(stride);
        let (d_km, value) = rest.split_at_mut(stride);
        for r in 0..rows {
            let inverse = 1.0 / (km + s[r]);
            let shape = s[r] * inverse;
            let v = vmax * shape;
            d_vmax[r] = shape;
            d_km[r] = -v * inverse;
            value[r] = v;
        }
    }

    /// Starting values from the Hanes-Woolf linearisation ([S]/v against
    /// [S] has slope 1/Vmax and intercept Km/Vmax), fitted by unweighted
    /// least squares. It is the least distorting of the classic
    /// linearisations for error in v (common practice, no source). When the
    /// line gives a non-positive Vmax or Km (very noisy or badly designed
    /// data), the fallback is Vmax = 1.2·max(v) and Km = the [S] whose rate
    /// is nearest half that.
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        // The points with a positive [S] and a positive rate, read where
        // they lie each time (no copies: an allocation cost about 1% of a
        // whole fit).
        let usable = || {
            (0..data.len()).map(|i| (data.x(i)[0], data.y()[i])).filter(|(s, v)| *s > 0.0 && *v > 0.0)
        };
        if usable().nth(1).is_none() {
            return Err(Error::numerical(
                "a Michaelis-Menten fit needs at least two points with positive [S] and a positive rate; \
                 if your signal falls as the reaction runs, enter the rates as positive numbers",
            ));
        }
        // ([S], [S]/v) for the line, on the stack for up to 64 points.
        let mut on_stack = [(0.0, 0.0); 64];
        let on_heap: Vec<(f64, f64)>;
        let mut count = 0;
        let points: &[(f64, f64)] = if data.len() <= on_stack.len() {
            for (slot, (s, v)) in on_stack.iter_mut().zip(usable()) {
                *slot = (s, s / v);
                count += 1;
            }
            &on_stack[..count]
        } else {
            on_heap = usable().map(|(s, v)| (s, s / v)).collect();
            &on_heap
        };
        if let Some((slope, intercept)) = straight_line(points) {
            let vmax = 1.0 / slope;
            let km = intercept * vmax;
            if vmax.is_finite() && km.is_finite() && vmax > 0.0 && km > 0.0 {
                // The line weights the points as [S]/v distorts them
                // (common practice, no source): a few Gauss-Newton steps on
                // the fit's own sum of squares bring its values to the
                // optimum's neighbourhood (on the benchmark's 12-point
                // curves the minimiser then needs 3.1 evaluations on
                // average, not 6.6).
                return Ok(polish(self, data, vec![vmax, km], Finish::Near));
            }
        }
        let vmax = 1.2 * usable().map(|(_, v)| v).fold(f64::MIN, f64::max);
        let km = usable()
            .min_by(|a, b| (a.1 - vmax / 2.0).abs().total_cmp(&(b.1 - vmax / 2.0).abs()))
            .map(|(s, _)| s)
            .unwrap_or(1.0);
        Ok(vec![vmax, km])
    }
}

/// Michaelis-Menten written with the specificity constant as a parameter:
/// v = (Vmax/Km)·Km·[S]/(Km + [S]). Same curve, same fit; fitting Vmax/Km
/// directly lets its profile-likelihood interval be computed (it becomes
/// kcat/Km once divided by [E]t).
#[derive(Clone, Copy, Debug, Default)]
pub struct MichaelisMentenSpecificity;

const SPECIFICITY_PARAMETERS: [ParameterSpec; 2] = [
    ParameterSpec { name: "Vmax/Km", dimension: Dimension::Unspecified },
    ParameterSpec { name: "Km", dimension: Dimension::Predictor(0) },
];

impl Model for MichaelisMentenSpecificity {
    fn name(&self) -> &str {
        "mm-specificity"
    }

    fn equation(&self) -> &str {
        "v = (Vmax/Km)·Km·[S] / (Km + [S])"
    }

    fn parameters(&self) -> &[ParameterSpec] {
        &SPECIFICITY_PARAMETERS
    }

    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let s = x[0];
        p[0] * p[1] * s / (p[1] + s)
    }

    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let s = x[0];
        let denominator = p[1] + s;
        gradient[0] = p[1] * s / denominator;
        gradient[1] = p[0] * s * s / (denominator * denominator);
    }

    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        let start = MichaelisMenten.initial_guess(data)?;
        Ok(vec![start[0] / start[1], start[1]])
    }
}

/// Ordinary least-squares line through `points`; `None` when all x are equal.
pub(crate) fn straight_line(points: &[(f64, f64)]) -> Option<(f64, f64)> {
    let n = points.len() as f64;
    let mean_x = points.iter().map(|p| p.0).sum::<f64>() / n;
    let mean_y = points.iter().map(|p| p.1).sum::<f64>() / n;
    let sxx: f64 = points.iter().map(|p| (p.0 - mean_x).powi(2)).sum();
    let sxy: f64 = points.iter().map(|p| (p.0 - mean_x) * (p.1 - mean_y)).sum();
    if sxx <= 0.0 {
        return None;
    }
    let slope = sxy / sxx;
    Some((slope, mean_y - slope * mean_x))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::gradient_disagreement;

    #[test]
    fn gradient_matches_finite_differences() {
        let s = [0.01, 0.1, 0.5, 1.0, 5.0, 100.0];
        let v = [1.0; 6];
        let data = Observations::single(&s, &v).unwrap();
        for p in [[1.0, 0.5], [212.7, 0.064], [1e-3, 1e3], [5e3, 2e-6]] {
            let worst = gradient_disagreement(&MichaelisMenten, &data, &p);
            assert!(worst < 1e-7, "p = {p:?}: relative disagreement {worst}");
        }
    }

    #[test]
    fn specificity_form_gradient_matches_finite_differences() {
        let s = [0.01, 0.1, 0.5, 1.0, 5.0, 100.0];
        let data = Observations::single(&s, &[1.0; 6]).unwrap();
        for p in [[2.0, 0.5], [3317.0, 0.064], [1e-6, 1e3]] {
            let worst = gradient_disagreement(&MichaelisMentenSpecificity, &data, &p);
            assert!(worst < 1e-7, "p = {p:?}: relative disagreement {worst}");
        }
    }

    #[test]
    fn value_and_gradient_together_are_the_same_bits() {
        for s in [0.01, 0.1, 0.5, 1.0, 5.0, 100.0] {
            for p in [[1.0, 0.5], [212.7, 0.064], [1e-3, 1e3]] {
                let (mut apart, mut together) = ([0.0; 2], [0.0; 2]);
                MichaelisMenten.gradient(&[s], &p, &mut apart);
                let value = MichaelisMenten.value_and_gradient(&[s], &p, &mut together);
                assert_eq!(value.to_bits(), MichaelisMenten.value(&[s], &p).to_bits());
                assert_eq!(apart.map(f64::to_bits), together.map(f64::to_bits));
            }
        }
    }

    #[test]
    fn starting_values_from_exact_data_are_exact() {
        let s = [0.1, 0.2, 0.5, 1.0, 2.0];
        let v: Vec<f64> = s.iter().map(|s| 3.0 * s / (0.4 + s)).collect();
        let data = Observations::single(&s, &v).unwrap();
        let start = MichaelisMenten.initial_guess(&data).unwrap();
        assert!((start[0] - 3.0).abs() < 1e-12 && (start[1] - 0.4).abs() < 1e-12, "{start:?}");
    }
}
