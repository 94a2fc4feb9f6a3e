//! The integrated Michaelis-Menten fit: whole time courses, not just
//! their first minutes.
//!
//! For an irreversible Michaelis-Menten reaction with no product
//! inhibition, the substrate left at time t has the closed form
//!
//! ```text
//! S(t) = Km·W((S0/Km)·exp((S0 − Vmax·t)/Km)),      P(t) = S0 − S(t)
//! ```
//!
//! with W the principal branch of the Lambert W function
//! ([`crate::lambert`]). [`fit_progress`] fits it globally to several
//! traces at once, with Km and Vmax shared and one signal offset per trace
//! (the product reading is `offset_k + P_k(t)`). When the layout gives [E],
//! each trace's limiting rate is `Vmax·[E]_k/[E]_ref`, and Vmax is reported
//! at `[E]_ref`, the first fitted trace's [E]. Times count from the start of
//! the reaction (t = 0 when enzyme and substrate met).
//!
//! ## Why the offsets are projected out
//!
//! The offsets enter linearly and their basis (one indicator per trace)
//! does not depend on Km or Vmax, so for given (Km, Vmax) the best offset
//! of a trace is the mean of `y − P` over that trace. The minimiser
//! therefore works on the two nonlinear parameters with residuals and
//! Jacobian centred per trace (variable projection, Golub & Pereyra 1973;
//! with a constant linear basis the projected Jacobian is exact). This is
//! the same least-squares problem as fitting all 2 + K parameters, but a
//! plate of 384 traces costs a 2-parameter fit instead of a 386-parameter
//! one. The full covariance follows from the block inverse of JᵀJ: with
//! `A = J_cᵀJ_c` (centred Jacobian) and `g_k` the trace means of ∂P/∂θ,
//! `Cov(θ) = s²A⁻¹`, `Cov(offset_k, θ) = −s²g_kᵀA⁻¹`, `Var(offset_k) =
//! s²(1/n_k + g_kᵀA⁻¹g_k)`.
//!
//! ## Derivatives
//!
//! With w = W(z), dW/dz = W/(z(1 + W)) gives `∂S/∂Vmax = −t·w/(1 + w)` and
//! `∂S/∂Km = w − w/(1 + w)·(1 + (S0 − Vmax·t)/Km)`, which by `w + ln w =
//! ln z` equals `w/(1 + w)·ln(S0/S)`; the second form is used because it
//! has no cancellation. Neither needs z itself, which may overflow.

use crate::error::Error;
use crate::fit::{aicc, estimate, fit_model, student_t_quantile, FitSettings, FitSummary};
use crate::lambert::lambert_w0_exp_with_log;
use crate::model::Observations;
use crate::models::MichaelisMenten;
use crate::solver::Termination;
use crate::traces::{CellState, Role, TraceAnalysis};
use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra::{DMatrix, DVector, Dyn, Matrix2, Owned, Vector2};
use serde::{Deserialize, Serialize};

/// Product formed at time `t` by the integrated Michaelis-Menten equation,
/// with its derivatives with respect to Km and Vmax. `None` when Km or
/// Vmax is not positive.
pub fn product_and_gradient(t: f64, s0: f64, km: f64, vmax: f64) -> Option<(f64, f64, f64)> {
    if !(km > 0.0 && vmax > 0.0 && s0 > 0.0) {
        return None;
    }
    product_and_gradient_at(t, s0, km, vmax, (s0 / km).ln())
}

/// [`product_and_gradient`] with `ln(S0/Km)` given, which is the same for
/// every point of a trace (the fit computes it once per trace). The caller
/// has checked that Km, Vmax and S0 are positive.
fn product_and_gradient_at(t: f64, s0: f64, km: f64, vmax: f64, log_ratio: f64) -> Option<(f64, f64, f64)> {
    product_near(t, s0, km, vmax, log_ratio, None).map(|(p, dk, dv, _)| (p, dk, dv))
}

/// The work of [`product_and_gradient`], started from the Lambert W of a
/// nearby point `near = (log_z, W)`; also returns this point's `(log_z, W)`
/// for the next. `ln(S0/S) = ln(S0/Km) − ln W` uses the logarithm the W
/// iteration already has.
fn product_near(t: f64, s0: f64, km: f64, vmax: f64, log_ratio: f64, near: Option<(f64, f64)>) -> Option<(f64, f64, f64, (f64, f64))> {
    let log_z = log_ratio + (s0 - vmax * t) / km;
    let (w, log_w) = lambert_w0_exp_with_log(log_z, near);
    let s = km * w;
    let ratio = w / (1.0 + w);
    let d_s_d_v = -t * ratio;
    let d_s_d_km = ratio * (log_ratio - log_w);
    let p = s0 - s;
    (p.is_finite() && d_s_d_km.is_finite()).then_some((p, -d_s_d_km, -d_s_d_v, (log_z, w)))
}

/// One trace as fitted.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ProgressCurve {
    /// The trace's name.
    pub trace: String,
    /// [S]0.
    pub s0: f64,
    /// Times used.
    pub times: Vec<f64>,
    /// Product readings used.
    pub observed: Vec<f64>,
    /// Fitted `offset + P(t)` at those times.
    pub fitted: Vec<f64>,
}

/// The result of [`fit_progress`].
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ProgressFit {
    /// The shared fit record: Km, Vmax, then one `offset NAME` per trace.
    /// The correlation matrix covers Km and Vmax only (a plate's full
    /// matrix would be hundreds of rows of little use).
    pub summary: FitSummary,
    /// The fitted traces.
    pub curves: Vec<ProgressCurve>,
    /// [E] at which Vmax is reported, when the layout gives [E].
    pub reference_enzyme: Option<f64>,
    /// How the traces were chosen.
    pub notes: Vec<String>,
    /// The standing caution.
    pub caution: String,
}

/// The caution of the integrated fit.
pub const CAUTION: &str = "The integrated Michaelis-Menten equation assumes an irreversible reaction, a stable \
    enzyme, no product inhibition and time measured from the start of the reaction. Km and Vmax from it are \
    statistical estimates that mean what they claim only if those hold; compare them with the initial-rate fit.";

struct Data {
    t: Vec<f64>,
    y: Vec<f64>,
    s0: Vec<f64>,
    scale: Vec<f64>,
    /// Start of each trace's observations, and the end as the last entry.
    bounds: Vec<usize>,
}

struct Problem<'a> {
    data: &'a Data,
    theta: Vector2<f64>,
    /// Jacobian evaluations: one per outer iteration of the minimiser.
    jacobian_calls: std::cell::Cell<usize>,
    /// The Jacobian computed with the last residuals, and where. Nearly all
    /// the cost of a point is its Lambert W, which residuals and Jacobian
    /// share, so `residuals` computes both and `jacobian` (which the
    /// minimiser asks for at the point it just accepted) reuses it.
    cached: std::cell::RefCell<Option<(Vector2<f64>, DMatrix<f64>)>>,
    /// Called with the number of Jacobians so far, for a progress display.
    progress: std::cell::RefCell<&'a mut dyn FnMut(usize)>,
}

impl Problem<'_> {
    /// Centred residuals y − P − mean_k(y − P) and the centred model
    /// Jacobian ∂P/∂θ − mean_k(∂P/∂θ); `None` when the model is not
    /// finite at θ.
    fn evaluate(&self, with_jacobian: bool) -> Option<(DVector<f64>, DMatrix<f64>, Vec<[f64; 3]>)> {
        let d = self.data;
        let n = d.t.len();
        let mut r = DVector::zeros(n);
        let mut j = if with_jacobian { DMatrix::zeros(n, 2) } else { DMatrix::zeros(0, 2) };
        let mut means = Vec::with_capacity(d.bounds.len() - 1);
        let (km, vmax) = (self.theta[0], self.theta[1]);
        if !(km > 0.0 && vmax > 0.0) {
            return None;
        }
        for k in 0..d.bounds.len() - 1 {
            let (a, b) = (d.bounds[k], d.bounds[k + 1]);
            let mut sums = [0.0; 3];
            let log_ratio = (d.s0[a] / km).ln();
            let mut near = None;
            for i in a..b {
                let (p, dk, dv, here) = product_near(d.t[i], d.s0[i], km, vmax * d.scale[i], log_ratio, near)?;
                near = Some(here);
                r[i] = d.y[i] - p;
                sums[0] += r[i];
                if with_jacobian {
                    j[(i, 0)] = dk;
                    j[(i, 1)] = dv * d.scale[i];
                    sums[1] += j[(i, 0)];
                    sums[2] += j[(i, 1)];
                }
            }
            let m = (b - a) as f64;
            let mean = [sums[0] / m, sums[1] / m, sums[2] / m];
            for i in a..b {
                r[i] -= mean[0];
                if with_jacobian {
                    j[(i, 0)] -= mean[1];
                    j[(i, 1)] -= mean[2];
                }
            }
            means.push(mean);
        }
        Some((r, j, means))
    }
}

impl LeastSquaresProblem<f64, Dyn, nalgebra::U2> for Problem<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, nalgebra::U2>;
    type ParameterStorage = Owned<f64, nalgebra::U2>;

    fn set_params(&mut self, x: &Vector2<f64>) {
        self.theta = *x;
    }

    fn params(&self) -> Vector2<f64> {
        self.theta
    }

    /// A trial point outside Km, Vmax > 0 is a rejected step (a very large
    /// residual), as in [`crate::solver`].
    fn residuals(&self) -> Option<DVector<f64>> {
        match self.evaluate(true) {
            Some((r, j, _)) => {
                *self.cached.borrow_mut() = Some((self.theta, j));
                Some(r)
            }
            None => Some(DVector::from_element(self.data.t.len(), 1e100)),
        }
    }

    fn jacobian(&self) -> Option<nalgebra::OMatrix<f64, Dyn, nalgebra::U2>> {
        self.jacobian_calls.set(self.jacobian_calls.get() + 1);
        (self.progress.borrow_mut())(self.jacobian_calls.get());
        let cached = self.cached.borrow_mut().take().filter(|(at, _)| *at == self.theta).map(|(_, j)| j);
        let j = match cached {
            Some(j) => j,
            None => self.evaluate(true)?.1,
        };
        // The residual is y − P, so its Jacobian is the negated model's.
        let mut out = nalgebra::OMatrix::<f64, Dyn, nalgebra::U2>::zeros(j.nrows());
        for i in 0..j.nrows() {
            out[(i, 0)] = -j[(i, 0)];
            out[(i, 1)] = -j[(i, 1)];
        }
        Some(out)
    }
}

/// Fits the integrated Michaelis-Menten equation to the sample traces of
/// `analysis` that have [S]0, no inhibitor, are not excluded and were
/// converted to concentrations. Points from the first overflow or
/// over-range reading on are left out.
pub fn fit_progress(analysis: &TraceAnalysis) -> Result<ProgressFit, Error> {
    fit_progress_with(analysis, &mut |_| {})
}

/// [`fit_progress`], calling `progress` with the iteration count at each
/// outer iteration of the minimiser (how many there will be is not known in
/// advance), so that a page can show that work goes on.
pub fn fit_progress_with(analysis: &TraceAnalysis, progress: &mut dyn FnMut(usize)) -> Result<ProgressFit, Error> {
    if analysis.value_unit == "signal" {
        return Err(Error::invalid_option(
            "the integrated fit needs concentrations: give ε and the path length, or a standard curve",
        ));
    }
    let mut notes = Vec::new();
    let mut data = Data { t: Vec::new(), y: Vec::new(), s0: Vec::new(), scale: Vec::new(), bounds: vec![0] };
    let mut names = Vec::new();
    let mut reference_enzyme: Option<f64> = None;
    let mut left_out_inhibited = 0;
    let mut rates = Vec::new();
    for trace in &analysis.traces {
        if trace.role != Role::Sample || trace.excluded {
            continue;
        }
        let Some(s0) = trace.s.filter(|s| *s > 0.0) else { continue };
        if trace.i.is_some_and(|i| i > 0.0) {
            left_out_inhibited += 1;
            continue;
        }
        let scale = match (trace.e, reference_enzyme) {
            (Some(e), Some(r)) if e > 0.0 => e / r,
            (Some(e), None) if e > 0.0 => {
                reference_enzyme = Some(e);
                1.0
            }
            _ => 1.0,
        };
        let end = trace.cells.iter().position(|c| matches!(c, CellState::Overflow | CellState::OverRange)).unwrap_or(trace.times.len());
        let before = data.t.len();
        for j in 0..end {
            if let Some(v) = trace.values[j] {
                data.t.push(trace.times[j]);
                data.y.push(v);
                data.s0.push(s0);
                data.scale.push(scale);
            }
        }
        if data.t.len() - before < 3 {
            data.t.truncate(before);
            data.y.truncate(before);
            data.s0.truncate(before);
            data.scale.truncate(before);
            notes.push(format!("Trace {} has fewer than 3 usable points and was not fitted.", trace.name));
            continue;
        }
        data.bounds.push(data.t.len());
        names.push((trace.name.clone(), s0));
        if let Some(rate) = trace.rate.filter(|r| *r > 0.0) {
            rates.push((s0, rate / scale));
        }
    }
    if left_out_inhibited > 0 {
        notes.push(format!("{left_out_inhibited} trace(s) with inhibitor were left out: the fit has no inhibition term."));
    }
    let k = names.len();
    if k == 0 {
        return Err(Error::invalid_data("no sample trace with [S]0 and enough points to fit"));
    }
    let n = data.t.len();
    let p = 2 + k;
    if n <= p {
        return Err(Error::invalid_data(format!("{n} points cannot determine {p} parameters with an uncertainty")));
    }

    // Starting values: a Michaelis-Menten fit to the initial rates when
    // there are three or more [S]0; otherwise Km = median [S]0 and Vmax
    // twice the fastest rate.
    let mut s0_sorted: Vec<f64> = names.iter().map(|(_, s)| *s).collect();
    s0_sorted.sort_by(f64::total_cmp);
    let median_s0 = s0_sorted[s0_sorted.len() / 2];
    let fastest = rates.iter().map(|r| r.1).fold(0.0, f64::max);
    let mut start = Vector2::new(median_s0, if fastest > 0.0 { 2.0 * fastest } else { median_s0 / data.t[n - 1].max(1e-12) });
    let distinct = {
        let mut d = s0_sorted.clone();
        d.dedup();
        d.len()
    };
    if distinct >= 3 && rates.len() >= 3 {
        let x: Vec<f64> = rates.iter().map(|r| r.0).collect();
        let y: Vec<f64> = rates.iter().map(|r| r.1).collect();
        if let Ok(obs) = Observations::single(&x, &y) {
            if let Ok(fit) = fit_model(&MichaelisMenten, &obs, None, &FitSettings::default()) {
                let v = fit.values();
                if fit.summary.converged && v[0] > 0.0 && v[1] > 0.0 {
                    start = Vector2::new(v[1], v[0]);
                }
            }
        }
    }

    let problem = Problem {
        data: &data,
        theta: start,
        jacobian_calls: std::cell::Cell::new(0),
        cached: std::cell::RefCell::new(None),
        progress: std::cell::RefCell::new(progress),
    };
    let (problem, report) =
        LevenbergMarquardt::new().with_ftol(1e-14).with_xtol(1e-14).with_gtol(1e-14).with_patience(400).minimize(problem);
    let termination = crate::solver::termination_of(&report.termination);
    let theta = problem.theta;
    let (residuals, jacobian, means) = problem
        .evaluate(true)
        .ok_or_else(|| Error::numerical("the integrated fit ended at Km or Vmax ≤ 0; the traces do not define them"))?;
    let rss = residuals.norm_squared();
    let residual_norm = residuals.norm();
    let mut gradient_cosine: f64 = 0.0;
    for column in jacobian.column_iter() {
        let norm = column.norm();
        if norm > 0.0 && residual_norm > 0.0 {
            gradient_cosine = gradient_cosine.max((column.dot(&residuals) / (norm * residual_norm)).abs());
        }
    }
    let converged = rss.is_finite()
        && match termination {
            Termination::Converged | Termination::Stationary | Termination::ExactFit => true,
            Termination::PrecisionLimit => gradient_cosine < 1e-6,
            _ => false,
        };

    let dof = n - p;
    let s2 = rss / dof as f64;
    let full = jacobian.transpose() * &jacobian;
    let a = Matrix2::new(full[(0, 0)], full[(0, 1)], full[(1, 0)], full[(1, 1)]);
    // Scale before inverting: Km and Vmax can differ by orders of magnitude.
    let d = Vector2::new(a[(0, 0)].sqrt(), a[(1, 1)].sqrt());
    let a_inverse = if d[0] > 0.0 && d[1] > 0.0 {
        let scaled = Matrix2::new(1.0, a[(0, 1)] / (d[0] * d[1]), a[(1, 0)] / (d[0] * d[1]), 1.0);
        scaled.try_inverse().filter(|m| m.iter().all(|v| v.is_finite()) && (1.0 - scaled[(0, 1)].abs()) > 1e-12).map(|m| {
            Matrix2::new(m[(0, 0)] / (d[0] * d[0]), m[(0, 1)] / (d[0] * d[1]), m[(1, 0)] / (d[0] * d[1]), m[(1, 1)] / (d[1] * d[1]))
        })
    } else {
        None
    };
    let t_quantile = student_t_quantile(0.975, dof as f64);
    let theta_cov = a_inverse.map(|m| m * s2);
    let mut parameters = Vec::with_capacity(p);
    let se = |v: f64| (v.is_finite() && v >= 0.0).then(|| v.sqrt());
    let mut km = estimate("Km", theta[0], theta_cov.and_then(|c| se(c[(0, 0)])), t_quantile);
    km.unit = analysis.substrate_unit.clone();
    let mut vmax = estimate("Vmax", theta[1], theta_cov.and_then(|c| se(c[(1, 1)])), t_quantile);
    vmax.unit = Some(analysis.rate_unit.clone());
    parameters.push(km);
    parameters.push(vmax);
    let mut curves = Vec::with_capacity(k);
    for (index, (name, s0)) in names.iter().enumerate() {
        let (lo, hi) = (data.bounds[index], data.bounds[index + 1]);
        let m = (hi - lo) as f64;
        // Best offset: mean of y − P (the centring mean of the residuals
        // before centring).
        let offset = means[index][0];
        let g = Vector2::new(means[index][1], means[index][2]);
        let variance = a_inverse.map(|ai| s2 * (1.0 / m + (g.transpose() * ai * g)[(0, 0)]));
        let mut e = estimate(&format!("offset {name}"), offset, variance.and_then(se), t_quantile);
        e.unit = Some(analysis.value_unit.clone());
        parameters.push(e);
        let fitted: Vec<f64> = (lo..hi).map(|i| data.y[i] - residuals[i]).collect();
        curves.push(ProgressCurve {
            trace: name.clone(),
            s0: *s0,
            times: data.t[lo..hi].to_vec(),
            observed: data.y[lo..hi].to_vec(),
            fitted,
        });
    }
    let correlation = match theta_cov {
        Some(c) => {
            let r = c[(0, 1)] / (c[(0, 0)] * c[(1, 1)]).sqrt();
            vec![vec![Some(1.0), r.is_finite().then_some(r)], vec![r.is_finite().then_some(r), Some(1.0)]]
        }
        None => vec![vec![None, None], vec![None, None]],
    };
    let mean_y = data.y.iter().sum::<f64>() / n as f64;
    let tss: f64 = data.y.iter().map(|y| (y - mean_y).powi(2)).sum();
    let mut warnings = Vec::new();
    if !converged {
        warnings.push(format!("The fit {}; the numbers shown are not a least-squares solution.", termination.describe()));
    }
    if theta_cov.is_none() && converged {
        warnings.push("The traces cannot determine Km and Vmax separately; standard errors are not available.".to_string());
    }
    let max_s0 = s0_sorted[s0_sorted.len() - 1];
    if converged && theta[0] > 0.0 && max_s0 < 0.5 * theta[0] {
        warnings.push(format!(
            "The highest [S]0 is {:.2}×Km; curves far below Km define only Vmax/Km well (common practice, no source).",
            max_s0 / theta[0]
        ));
    }
    if let Some(e) = reference_enzyme {
        notes.push(format!("Vmax is given at [E] = {e}; each trace's limiting rate is scaled by its [E]."));
    }
    notes.push("Times are taken to count from the start of the reaction.".to_string());
    let summary = FitSummary {
        model: "integrated-mm".to_string(),
        equation: "[P](t) = offset + S0 − Km·W((S0/Km)·exp((S0 − Vmax·t)/Km))".to_string(),
        n,
        dof,
        rss,
        sigma: s2.is_finite().then(|| s2.sqrt()),
        r_squared: (tss > 0.0).then(|| 1.0 - rss / tss),
        aicc: aicc(rss, n, p),
        converged,
        iterations: problem.jacobian_calls.get(),
        termination: termination.clone(),
        termination_text: termination.describe().into(),
        confidence_level: 0.95,
        weighting: "uniform".into(),
        reweighting_rounds: None,
        parameters,
        correlation,
        warnings,
    };
    Ok(ProgressFit { summary, curves, reference_enzyme, notes, caution: CAUTION.to_string() })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The closed form satisfies the implicit integrated rate law
    /// S0 − S + Km·ln(S0/S) = Vmax·t (its definition; any enzymology
    /// text), including where exp of the argument would overflow.
    #[test]
    fn closed_form_satisfies_the_implicit_law() {
        for (s0, km, v) in [(10.0, 50.0, 1.0), (1000.0, 1.0, 5.0), (2.0, 2.0, 0.1), (5e4, 3.0, 100.0)] {
            for t in [0.0, 0.5, 3.0, 20.0, 100.0] {
                let (p, _, _) = product_and_gradient(t, s0, km, v).unwrap();
                let s = s0 - p;
                let lhs = s0 - s + km * (s0 / s).ln();
                assert!((lhs - v * t).abs() <= 1e-9 * (v * t).max(s0), "s0 {s0} km {km} v {v} t {t}: {lhs} vs {}", v * t);
            }
        }
    }

    #[test]
    fn gradient_matches_finite_differences() {
        for (t, s0, km, v) in [(2.0, 10.0, 50.0, 1.0), (5.0, 100.0, 10.0, 8.0), (30.0, 5.0, 5.0, 0.3)] {
            let (_, dk, dv) = product_and_gradient(t, s0, km, v).unwrap();
            let h = 1e-6;
            let nk = (product_and_gradient(t, s0, km * (1.0 + h), v).unwrap().0
                - product_and_gradient(t, s0, km * (1.0 - h), v).unwrap().0)
                / (2.0 * h * km);
            let nv = (product_and_gradient(t, s0, km, v * (1.0 + h)).unwrap().0
                - product_and_gradient(t, s0, km, v * (1.0 - h)).unwrap().0)
                / (2.0 * h * v);
            assert!((nk - dk).abs() <= 1e-6 * dk.abs().max(1e-9), "dKm {dk} vs {nk}");
            assert!((nv - dv).abs() <= 1e-6 * dv.abs(), "dVmax {dv} vs {nv}");
        }
    }
}
