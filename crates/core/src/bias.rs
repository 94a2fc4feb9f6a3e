//! The small-sample bias of a nonlinear least-squares estimate, and the
//! estimate with it removed.
//!
//! A nonlinear model's least-squares estimate is biased even when the
//! model and the weights are right: the curvature of the model in its
//! parameters turns symmetric noise into an asymmetric spread of the
//! estimates. The bias shrinks like 1/n, while the standard error shrinks
//! like 1/√n, so it matters for small designs with large noise. For
//! Michaelis-Menten with 16 rates and 15% proportional noise (the design of
//! `tests/coverage.rs`) Km comes out about 1% high on average; the
//! standard error is about 16%.
//!
//! [`box_bias`] gives the first-order (O(1/n)) bias
//!
//! ```text
//! b = −½ (JᵀWJ)⁻¹ Σᵢ wᵢ Jᵢ tr(C Hᵢ),    C = s² (JᵀWJ)⁻¹,
//! ```
//!
//! with J the model's Jacobian, Hᵢ the Hessian of the model at observation
//! i in the parameters, W the weights and s² the residual variance, all at
//! the estimate (M. J. Box 1971, "Bias in nonlinear estimation", J. R.
//! Statist. Soc. B 33, 171–201; the formula is written here from memory and
//! checked by simulation in `tests/coverage.rs`). The same formula holds for
//! relative and Poisson weights computed from the fitted curve (the fixed
//! point of [`crate::fit::fit_weighted`]): expanding the estimating
//! equation Σ (y − f) ∂f/∂θ / g(f) = 0 to second order, the terms from the
//! weights' dependence on θ cancel, leaving Box's formula with wᵢ =
//! 1/g(fᵢ) (the generalised-linear-model version of this result is
//! Cordeiro & McCullagh 1991, J. R. Statist. Soc. B 53, 629–643; from
//! memory).
//!
//! [`corrected`] subtracts the estimated bias from each value and shifts
//! its asymptotic interval with it (the standard error is unchanged to
//! the same order). The correction removes the O(1/n) part only; what is
//! left is O(1/n²) plus the noise of estimating b itself, which the
//! simulation in `tests/coverage.rs` measures.
//!
//! **Where the analyses report it.** Every fit summarised by
//! [`crate::fit::fit_model`] or [`crate::fit::fit_weighted`] carries the
//! bias of each fitted parameter in [`ParameterEstimate::bias`] and the
//! corrected value in [`ParameterEstimate::value_bias_corrected`]
//! ([`attach_bias`]), so every analysis built on them reports it: rates
//! (every rate law), the inhibition mechanisms, the logistic and Morrison,
//! two substrates, pH and temperature profiles, set comparisons. It is
//! left out (`None`), with the reason in the field's documentation, for
//! a fit that did not converge or has no covariance; for a parameter that
//! is flagged (not determined, not bounded by the profile or the
//! bootstrap, or an asymptotic interval below zero): the expansion in
//! small deviations does not describe a constant the data do not bound;
//! when |bias| is not below the standard error, for the same reason
//! (Turnover's rule: Box's term is the first of a series in SE-sized
//! steps, and a first term that large says the series does not converge
//! quickly); and for a positive constant whose corrected value would not be
//! positive. Constants held fixed (a logistic's fixed floor or ceiling)
//! are not parameters of the fit and have no entry. Derived constants get
//! it only when they are a fixed multiple of one fitted parameter (kcat,
//! specific activity: the bias scales with it); kcat/Km, ratios and
//! Cheng-Prusoff's Ki have none. Fits made by their own code
//! ([`crate::progress`], the bootstrap's and the profile's refits) have
//! none either.
//!
//! **Limitation.** The formula treats the weights as fixed or as the
//! fit's own weights from its fitted curve. Where an analysis holds
//! weights computed from another model's curve (the inhibition
//! mechanisms other than the one the weights were iterated on, the rate
//! laws of a comparison) or from the measured rates (the fallback when
//! reweighting does not settle), the randomness of those weights adds a
//! bias of the same order that the field does not include (not measured).
//!
//! **Cost.** A fit with n observations and p parameters costs 2·p·n
//! gradient evaluations and one p×p inverse more; measured on the 12-point
//! Michaelis-Menten fit of `tests/bias.rs`, see the README's uncertainty
//! paragraph.
//!
//! The Hessians come from central differences of the model's analytic
//! gradient (the [`Model`] trait has no second derivatives), with a step of
//! 10⁻⁴ of each parameter's magnitude or standard error, whichever is
//! larger; the truncation error, O(step²), is far below the bias itself.

use crate::fit::{Fit, ParameterEstimate};
use crate::model::{Model, Observations};

/// Relative step of the central differences behind the Hessians.
const HESSIAN_STEP: f64 = 1e-4;

/// The first-order bias of each fitted parameter (estimate minus truth, in
/// the parameter's own units), by Box's formula. `data` must carry the
/// weights of the final fit (the observations [`crate::fit::fit_weighted`]
/// returns). `None` when the fit did not converge, has no covariance (rank
/// deficient or no residual degrees of freedom) or a Hessian is not finite.
pub fn box_bias(model: &dyn Model, data: &Observations, fit: &Fit) -> Option<Vec<f64>> {
    if !fit.summary.converged {
        return None;
    }
    let covariance = fit.covariance.as_ref()?;
    let jacobian = &fit.report.jacobian;
    let theta = fit.values();
    let p = theta.len();
    // (JᵀWJ)⁻¹ is the covariance over s², already computed by the fit (a
    // second decomposition cost as much as the rest). With s² = 0 the
    // covariance is zero, every tr(C Hᵢ) vanishes and so does the bias.
    let variance = fit.summary.rss / fit.summary.dof as f64;
    if variance == 0.0 {
        return Some(vec![0.0; p]);
    }
    if !variance.is_finite() {
        return None;
    }
    // Scratch space on the stack for up to four parameters (the fixed-size
    // path's models): each heap allocation cost about 1% of a fit.
    use crate::fastpath::{Scratch, BLOCK, MAX_PARAMETERS};
    const SMALL: usize = MAX_PARAMETERS;
    const COLUMNS: usize = (MAX_PARAMETERS + 1) * BLOCK;
    let mut steps_space = Scratch::<SMALL>::new();
    let steps = steps_space.zeros(p);
    for (k, step) in steps.iter_mut().enumerate() {
        let scale = theta[k].abs().max(covariance[(k, k)].sqrt());
        *step = HESSIAN_STEP * if scale > 0.0 && scale.is_finite() { scale } else { 1.0 };
    }
    // The gradients at the shifted points come a block of rows at a time
    // from `values_and_gradients` (by column: entry j of row r at
    // `j * BLOCK + r`); each row's trace is summed in the same order as
    // one row at a time (k, then j), so the same bits.
    let (mut up_space, mut down_space) = (Scratch::<COLUMNS>::new(), Scratch::<COLUMNS>::new());
    let up = up_space.zeros((p + 1) * BLOCK);
    let down = down_space.zeros((p + 1) * BLOCK);
    let mut traces = [0.0f64; BLOCK];
    let mut shifted_space = Scratch::<SMALL>::new();
    let shifted = shifted_space.zeros(p);
    shifted.copy_from_slice(theta);
    // Σᵢ √wᵢ (√wᵢ Jᵢ) tr(C Hᵢ): the report's Jacobian rows are already √wᵢ Jᵢ.
    let mut sum_space = Scratch::<SMALL>::new();
    let sum = sum_space.zeros(p);
    let mut first = 0;
    while first < data.len() {
        let rows = (data.len() - first).min(BLOCK);
        traces[..rows].fill(0.0);
        for k in 0..p {
            shifted[k] = theta[k] + steps[k];
            model.values_and_gradients(data, first, rows, shifted, up, BLOCK);
            shifted[k] = theta[k] - steps[k];
            model.values_and_gradients(data, first, rows, shifted, down, BLOCK);
            shifted[k] = theta[k];
            // Column k of Hᵢ; tr(C H) = Σ_{j,k} C[k,j] H[j,k].
            for (r, trace) in traces[..rows].iter_mut().enumerate() {
                for j in 0..p {
                    let h = (up[j * BLOCK + r] - down[j * BLOCK + r]) / (2.0 * steps[k]);
                    *trace += covariance[(k, j)] * h;
                }
            }
        }
        for (r, trace) in traces[..rows].iter().enumerate() {
            if !trace.is_finite() {
                return None;
            }
            let i = first + r;
            let root_weight = data.weights()[i].sqrt();
            for (j, total) in sum.iter_mut().enumerate() {
                *total += root_weight * jacobian[(i, j)] * trace;
            }
        }
        first += rows;
    }
    // (C/s²)[a, b], entry by entry as the whole matrix divided would give.
    let bias: Vec<f64> = (0..p).map(|a| -0.5 * (0..p).map(|b| (covariance[(a, b)] / variance) * sum[b]).sum::<f64>()).collect();
    bias.iter().all(|b| b.is_finite()).then_some(bias)
}

/// Fills [`ParameterEstimate::bias`] and
/// [`ParameterEstimate::value_bias_corrected`] of each fitted parameter of
/// `fit` from [`box_bias`], leaving them `None` where the module
/// documentation says. `data` must carry the fit's final weights.
pub fn attach_bias(model: &dyn Model, data: &Observations, fit: &mut Fit) {
    let Some(bias) = box_bias(model, data, fit) else {
        return;
    };
    for (j, (estimate, b)) in fit.summary.parameters.iter_mut().zip(bias).enumerate() {
        let trusted = estimate.flag.is_none()
            && estimate.std_error.is_some_and(|se| b.abs() < se)
            && !(model.positive(j) && estimate.value - b <= 0.0);
        estimate.set_bias(trusted.then_some(b));
    }
}

/// The fit's estimates with `bias` (from [`box_bias`]) subtracted: each
/// value and both ends of its interval move by −bias; standard errors,
/// names, units and flags are kept. Derived constants are not touched
/// (their bias is not the parameters' bias).
pub fn corrected(fit: &Fit, bias: &[f64]) -> Vec<ParameterEstimate> {
    fit.summary
        .parameters
        .iter()
        .zip(bias)
        .map(|(estimate, b)| ParameterEstimate {
            value: estimate.value - b,
            ci_low: estimate.ci_low.map(|v| v - b),
            ci_high: estimate.ci_high.map(|v| v - b),
            bias: None,
            value_bias_corrected: None,
            ..estimate.clone()
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::{fit_model, FitSettings};
    use crate::models::MichaelisMenten;

    /// A model linear in its parameters has no curvature, so no bias.
    #[test]
    fn a_straight_line_has_no_bias() {
        use crate::model::ParameterSpec;
        struct Line;
        impl Model for Line {
            fn name(&self) -> &str {
                "line"
            }
            fn equation(&self) -> &str {
                "a + b·x"
            }
            fn parameters(&self) -> &[ParameterSpec] {
                const P: [ParameterSpec; 2] = [
                    ParameterSpec { name: "a", dimension: crate::model::Dimension::Unspecified },
                    ParameterSpec { name: "b", dimension: crate::model::Dimension::Unspecified },
                ];
                &P
            }
            fn value(&self, x: &[f64], p: &[f64]) -> f64 {
                p[0] + p[1] * x[0]
            }
            fn gradient(&self, x: &[f64], _p: &[f64], g: &mut [f64]) {
                g[0] = 1.0;
                g[1] = x[0];
            }
            fn initial_guess(&self, _data: &Observations) -> Result<Vec<f64>, crate::error::Error> {
                Ok(vec![0.0, 1.0])
            }
        }
        let x = [1.0, 2.0, 3.0, 4.0, 5.0];
        let y = [2.1, 2.9, 4.2, 4.8, 6.1];
        let data = Observations::single(&x, &y).unwrap();
        let fit = fit_model(&Line, &data, None, &FitSettings::default()).unwrap();
        let bias = box_bias(&Line, &data, &fit).unwrap();
        assert!(bias.iter().all(|b| b.abs() < 1e-12), "{bias:?}");
    }

    /// Michaelis-Menten, uniform weights: Box's formula written out by hand
    /// for this model (∂²f/∂V² = 0, ∂²f/∂V∂K = −S/(K+S)², ∂²f/∂K² =
    /// 2VS/(K+S)³) equals the finite-difference version, and the correction
    /// moves the interval with the value.
    #[test]
    fn michaelis_menten_bias_matches_the_formula_by_hand() {
        let s = [0.4, 0.7, 1.2, 2.0, 3.4, 6.0, 10.0, 16.0];
        let v = [1.72, 2.51, 3.69, 5.12, 6.21, 7.49, 8.21, 8.77];
        let data = Observations::single(&s, &v).unwrap();
        let fit = fit_model(&MichaelisMenten, &data, None, &FitSettings::default()).unwrap();
        let bias = box_bias(&MichaelisMenten, &data, &fit).unwrap();
        let (vm, km) = (fit.values()[0], fit.values()[1]);
        let c = fit.covariance.clone().unwrap();
        let a_inv = c.clone() / fit.summary.sigma.unwrap().powi(2);
        let mut sum = [0.0; 2];
        for &x in &s {
            let j = [x / (km + x), -vm * x / (km + x).powi(2)];
            let h01 = -x / (km + x).powi(2);
            let h11 = 2.0 * vm * x / (km + x).powi(3);
            let trace = 2.0 * c[(0, 1)] * h01 + c[(1, 1)] * h11;
            sum[0] += j[0] * trace;
            sum[1] += j[1] * trace;
        }
        for a in 0..2 {
            let by_hand = -0.5 * (a_inv[(a, 0)] * sum[0] + a_inv[(a, 1)] * sum[1]);
            assert!((bias[a] - by_hand).abs() <= 1e-6 * by_hand.abs(), "{a}: {} vs {by_hand}", bias[a]);
        }
        assert!(bias[1] > 0.0, "Km is biased upwards: {bias:?}");
        let fixed = corrected(&fit, &bias);
        for (j, e) in fixed.iter().enumerate() {
            let before = &fit.summary.parameters[j];
            assert_eq!(e.value, before.value - bias[j]);
            assert_eq!(e.std_error, before.std_error);
            assert!((e.ci_high.unwrap() - e.ci_low.unwrap() - (before.ci_high.unwrap() - before.ci_low.unwrap())).abs() < 1e-12);
        }
    }
}
