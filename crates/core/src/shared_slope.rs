//! Batch dose-response curves with one steepness shared by every curve.
//!
//! Screening often assumes that compounds acting by one mechanism give
//! curves of one steepness (common practice, no source): the slope is then
//! estimated once from all curves, and each curve keeps its own IC50 and
//! plateaus (or fixed plateaus, `fixed_top` / `fixed_bottom`).
//!
//! **Method: one global least-squares fit.** The model stacks every curve's
//! logistic, with parameters `(bottom_k, top_k, IC50_k)` for each curve `k`
//! (those not fixed) and one `steepness` last; all curves' points are
//! fitted at once by [`fit_model`], so the result minimises the total sum of
//! squares over all curves jointly and the covariance is the global one,
//! `s²(JᵀJ)⁻¹` with `s² = RSS/(N − P)` over all N points and P parameters.
//! Each curve's standard errors and intervals come from that covariance
//! (t with N − P degrees of freedom), so they include the uncertainty of the
//! shared slope. Starting values: each curve's own fit, and the median of
//! their converged slopes.
//!
//! The global Jacobian is dense (N × P), so the work grows with the cube of
//! the number of curves; [`MAX_SHARED_CURVES`] bounds it. Only constant
//! weighting and asymptotic intervals are offered: the other choices are
//! refused with a sentence rather than ignored.

use crate::batch::{fit_curve, flags_of, pic50_of, prepare_batch, BatchRequest, CurveResult, CurveSplit};
use crate::dose::{analyse_dose, DoseRequest};
use crate::error::Error;
use crate::fit::{estimate, fit_model, FitSettings, FitSummary, ParameterEstimate};
use crate::intervals::IntervalMethod;
use crate::model::{Model, Observations, ParameterSpec};
use crate::models::{model_with_options, ModelOptions};
use crate::plate::PlateQuality;
use crate::rates::CAUTION;
use crate::table::InputProblem;
use crate::weighting::Weighting;
use serde::Serialize;

/// The most curves one shared-slope fit takes (a dense global fit of
/// 3 × 150 + 1 parameters takes about a second).
pub const MAX_SHARED_CURVES: usize = 150;

/// The shared slope and what the global fit says about itself.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SharedSlope {
    /// The shared steepness with its global standard error and interval.
    pub slope: ParameterEstimate,
    /// Curves in the global fit (those whose own fit could be made).
    pub curves: usize,
    /// Points in the global fit.
    pub n: usize,
    /// Parameters of the global fit.
    pub parameters: usize,
    /// Residual degrees of freedom, n − parameters.
    pub dof: usize,
    /// Total residual sum of squares.
    pub rss: f64,
    /// Residual standard deviation of the global fit.
    pub sigma: Option<f64>,
    /// Whether the global fit converged.
    pub converged: bool,
    /// Why the minimiser stopped, in words.
    pub termination_text: String,
    /// The method in words.
    pub method: String,
    /// Warnings of the global fit.
    pub warnings: Vec<String>,
}

/// The batch with a shared slope: each curve's record (from the global fit)
/// and the shared slope.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SharedSlopeAnalysis {
    /// The grouping column's heading.
    pub group_by: String,
    /// The plates' control summaries, when normalised.
    pub plates: Vec<PlateQuality>,
    /// One record per curve, in first-appearance order.
    pub curves: Vec<CurveResult>,
    /// The shared slope; `None` when no curve could be fitted.
    pub shared: Option<SharedSlope>,
    /// Problems of the batch table.
    pub problems: Vec<InputProblem>,
    /// The caution every result carries.
    pub caution: String,
}

/// The stacked logistic: curve `k`'s own parameters, then the slope last.
/// x = [I, k].
struct Stacked<'a> {
    base: &'a dyn Model,
    /// Own parameters per curve (the base's parameters but the slope).
    own: usize,
    specs: Vec<ParameterSpec>,
}

impl Stacked<'_> {
    fn local(&self, p: &[f64], k: usize, out: &mut [f64]) {
        out[..self.own].copy_from_slice(&p[k * self.own..(k + 1) * self.own]);
        out[self.own] = p[p.len() - 1];
    }
}

impl Model for Stacked<'_> {
    fn name(&self) -> &str {
        "ic50-shared-slope"
    }
    fn equation(&self) -> &str {
        self.base.equation()
    }
    fn parameters(&self) -> &[ParameterSpec] {
        &self.specs
    }
    fn predictors(&self) -> usize {
        2
    }
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let mut local = [0.0; 4];
        self.local(p, x[1] as usize, &mut local);
        self.base.value(&x[..1], &local[..=self.own])
    }
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let k = x[1] as usize;
        let mut local = [0.0; 4];
        let mut g = [0.0; 4];
        self.local(p, k, &mut local);
        self.base.gradient(&x[..1], &local[..=self.own], &mut g[..=self.own]);
        gradient.iter_mut().for_each(|v| *v = 0.0);
        gradient[k * self.own..(k + 1) * self.own].copy_from_slice(&g[..self.own]);
        gradient[p.len() - 1] = g[self.own];
    }
    fn initial_guess(&self, _: &Observations) -> Result<Vec<f64>, Error> {
        Err(Error::numerical("the shared-slope fit is started from each curve's own fit"))
    }
    fn positive(&self, index: usize) -> bool {
        index + 1 < self.specs.len() && self.base.positive(index % self.own)
    }
}

/// Fits every curve of the batch with one shared steepness (model `ic50`
/// only); see the module documentation.
pub fn analyse_shared_slope(request: &BatchRequest) -> Result<SharedSlopeAnalysis, Error> {
    let model_name = request.model.trim();
    if model_name != "ic50" {
        return Err(Error::invalid_option(format!(
            "a shared steepness applies to the ic50 model only, not to '{model_name}'"
        )));
    }
    if request.weighting != Weighting::Uniform {
        return Err(Error::invalid_option(
            "a shared-slope fit is made with constant weighting only; leave the weighting at its default",
        ));
    }
    if request.interval_method != IntervalMethod::Asymptotic {
        return Err(Error::invalid_option(
            "a shared-slope fit gives asymptotic intervals only (from the global covariance); leave the interval method at its default",
        ));
    }
    let (split, plates) = prepare_batch(request)?;
    if split.curves.len() > MAX_SHARED_CURVES {
        return Err(Error::invalid_data(format!(
            "{} curves are more than the {MAX_SHARED_CURVES} one shared-slope fit takes; split the table (by plate or series) and fit each part",
            split.curves.len()
        )));
    }
    let options = ModelOptions { enzyme: None, fixed_top: request.fixed_top, fixed_bottom: request.fixed_bottom };
    let base = model_with_options("ic50", &options)?;
    let base = base.as_ref();
    let q = base.parameters().len();
    let own = q - 1;
    let (curves, shared) = global_fit(request, &split, base, own)?;
    Ok(SharedSlopeAnalysis {
        group_by: split.group_by,
        plates,
        curves,
        shared,
        problems: split.problems,
        caution: CAUTION.to_string(),
    })
}

/// One curve's points and own fit.
struct Member {
    index: usize,
    points: Vec<(f64, f64)>,
    own_fit: Vec<f64>,
    converged: bool,
    unit: Option<String>,
}

fn global_fit(request: &BatchRequest, split: &CurveSplit, base: &dyn Model, own: usize) -> Result<(Vec<CurveResult>, Option<SharedSlope>), Error> {
    // Each curve alone, exactly as the batch fits it: its record (kept for
    // curves that cannot join) and its points.
    let mut records: Vec<CurveResult> = split.curves.iter().map(|c| fit_curve(request, c)).collect();
    let mut members = Vec::new();
    for (index, curve) in split.curves.iter().enumerate() {
        let Some(fit) = &records[index].fit else { continue };
        let excluded: Vec<usize> = curve
            .lines
            .iter()
            .enumerate()
            .filter(|(_, line)| request.excluded_lines.contains(line))
            .map(|(k, _)| k + 1)
            .collect();
        let analysis = analyse_dose(&DoseRequest {
            rate_time: None,
            text: curve.text.clone(),
            model: "ic50".into(),
            enzyme: None,
            fixed_top: request.fixed_top,
            fixed_bottom: request.fixed_bottom,
            excluded_lines: excluded,
            excluded_cells: Vec::new(),
            interval_method: IntervalMethod::Asymptotic,
            weighting: Weighting::Uniform,
            bootstrap: request.bootstrap,
            cheng_prusoff: None,
        })?;
        let points: Vec<(f64, f64)> = analysis.points.iter().filter(|p| !p.excluded).map(|p| (p.i, p.y)).collect();
        let own_fit: Vec<f64> = fit.parameters.iter().filter(|p| !p.derived).map(|p| p.value).collect();
        members.push(Member { index, points, own_fit, converged: fit.converged, unit: analysis.inhibitor_unit });
    }
    if members.is_empty() {
        return Ok((records, None));
    }
    let k_curves = members.len();
    let mut specs = Vec::with_capacity(k_curves * own + 1);
    for _ in 0..k_curves {
        specs.extend_from_slice(&base.parameters()[..own]);
    }
    specs.push(base.parameters()[own]);
    let stacked = Stacked { base, own, specs };
    let mut x = Vec::new();
    let mut y = Vec::new();
    for (k, member) in members.iter().enumerate() {
        for &(i, response) in &member.points {
            x.extend_from_slice(&[i, k as f64]);
            y.push(response);
        }
    }
    let data = Observations::new(2, x, y, None)?;
    let mut slopes: Vec<f64> = members.iter().filter(|m| m.converged).map(|m| m.own_fit[own]).filter(|s| s.is_finite()).collect();
    slopes.sort_by(f64::total_cmp);
    let slope_start = if slopes.is_empty() { 1.0 } else { slopes[slopes.len() / 2] };
    let mut start: Vec<f64> = members.iter().flat_map(|m| m.own_fit[..own].to_vec()).collect();
    start.push(slope_start);
    let fit = fit_model(&stacked, &data, Some(&start), &FitSettings::default())?;
    let summary = &fit.summary;
    let t = fit.t_quantile;
    let se_of = |g: usize| fit.covariance.as_ref().map(|c| c[(g, g)].sqrt()).filter(|v| v.is_finite());
    let slope_index = k_curves * own;
    let slope_name = base.parameters()[own].name;
    let slope = estimate(slope_name, fit.values()[slope_index], se_of(slope_index), t);

    // Each member's record: its own parameters from the global fit, and
    // the shared slope, all with the global covariance.
    for (k, member) in members.iter().enumerate() {
        let mut parameters = Vec::with_capacity(own + 1);
        for j in 0..own {
            let g = k * own + j;
            let mut e = estimate(base.parameters()[j].name, fit.values()[g], se_of(g), t);
            e.flag = summary.parameters[g].flag.clone();
            e.set_bias(summary.parameters[g].bias);
            parameters.push(e);
        }
        let mut shared_estimate = slope.clone();
        shared_estimate.flag = summary.parameters[slope_index].flag.clone();
        shared_estimate.set_bias(summary.parameters[slope_index].bias);
        parameters.push(shared_estimate);
        let local: Vec<f64> = parameters.iter().map(|p| p.value).collect();
        let rss: f64 = member.points.iter().map(|&(i, response)| (response - base.value(&[i], &local)).powi(2)).sum();
        let mut warnings = summary.warnings.clone();
        warnings.push(format!(
            "The steepness is shared by the {k_curves} curves of one global fit; standard errors and intervals come from its covariance (t with {} degrees of freedom) and rss is this curve's part of the total.",
            summary.dof
        ));
        let curve_summary = FitSummary {
            model: "ic50".into(),
            equation: summary.equation.clone(),
            n: member.points.len(),
            dof: summary.dof,
            rss,
            sigma: summary.sigma,
            r_squared: None,
            aicc: None,
            converged: summary.converged,
            iterations: summary.iterations,
            termination: summary.termination.clone(),
            termination_text: summary.termination_text.clone(),
            confidence_level: summary.confidence_level,
            weighting: summary.weighting.clone(),
            reweighting_rounds: None,
            parameters,
            correlation: Vec::new(),
            warnings,
        };
        let used: Vec<(f64, f64, f64)> = member.points.iter().map(|&(i, response)| (i, response, base.value(&[i], &local))).collect();
        let dimensions = base.parameters().iter().map(|p| p.dimension).collect();
        let record = &mut records[member.index];
        record.flags = flags_of(&curve_summary, used, dimensions, "ic50", &request.flags, &split.curves[member.index].text);
        record.pic50 = pic50_of(&curve_summary, member.unit.as_deref());
        record.fit = Some(curve_summary);
        record.notes.push("fitted with the steepness shared by every curve of the batch".into());
    }
    let shared = SharedSlope {
        slope,
        curves: k_curves,
        n: summary.n,
        parameters: stacked.specs.len(),
        dof: summary.dof,
        rss: summary.rss,
        sigma: summary.sigma,
        converged: summary.converged,
        termination_text: summary.termination_text.to_string(),
        method: "one global least-squares fit of every curve's logistic with one steepness; covariance s²(JᵀJ)⁻¹ of the whole fit".into(),
        warnings: summary.warnings.clone(),
    };
    Ok((records, Some(shared)))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn request(text: &str) -> BatchRequest {
        BatchRequest { text: text.into(), group_by: "compound".into(), model: "ic50".into(), ..Default::default() }
    }

    /// Two copies of the same curve: the shared slope is that curve's own
    /// slope, and each copy's constants are its own fit's (a global fit of
    /// identical curves separates into identical single fits).
    #[test]
    fn identical_curves_share_their_own_slope() {
        let doses = [100.0, 33.3, 11.1, 3.7, 1.23, 0.41, 0.137, 0.0457];
        let noise = [1.5, -2.0, 0.7, 2.4, -1.1, 0.3, -0.9, 1.2];
        let mut text = String::from("compound\t[I] (µM)\t% activity\n");
        for name in ["A", "B"] {
            for (d, e) in doses.iter().zip(noise) {
                let y = 100.0 / (1.0 + (d / 2.0f64).powf(1.3)) + e;
                text.push_str(&format!("{name}\t{d}\t{y}\n"));
            }
        }
        let analysis = analyse_shared_slope(&request(&text)).unwrap();
        let shared = analysis.shared.unwrap();
        let alone = fit_curve(&request(&text), &prepare_batch(&request(&text)).unwrap().0.curves[0]);
        let alone = alone.fit.unwrap();
        let own_slope = alone.parameters.iter().find(|p| p.name == "steepness").unwrap().value;
        assert!((shared.slope.value - own_slope).abs() < 1e-6 * own_slope.abs(), "{} vs {own_slope}", shared.slope.value);
        for record in &analysis.curves {
            let fit = record.fit.as_ref().unwrap();
            for (a, b) in fit.parameters.iter().zip(alone.parameters.iter().filter(|p| !p.derived)) {
                assert!((a.value - b.value).abs() < 1e-6 * b.value.abs().max(1.0), "{}: {} vs {}", a.name, a.value, b.value);
            }
        }
        assert_eq!(shared.n, 16);
        assert_eq!(shared.parameters, 7);
        assert_eq!(shared.dof, 9);
    }

    #[test]
    fn other_models_and_weightings_are_refused() {
        let mut r = request("compound\t[S]\tv\nA\t1\t2\n");
        r.model = "mm".into();
        assert!(analyse_shared_slope(&r).unwrap_err().message.contains("ic50 model only"));
        let mut r = request("compound\t[I]\tv\nA\t1\t2\n");
        r.weighting = Weighting::Relative;
        assert!(analyse_shared_slope(&r).unwrap_err().message.contains("constant weighting"));
    }
}
