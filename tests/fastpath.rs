//! The fixed-size minimisation (`turnover_core::fastpath`) against the
//! general path (`solver::minimise_general`, the `levenberg-marquardt`
//! crate on the full residual vector): the same optimum on every model and
//! on every NIST StRD problem with at most four parameters.
//!
//! Both paths run the same iteration, the fast one on a compressed problem
//! (see the module's documentation), so they differ only by rounding and
//! by where each stops inside the flat bottom of the sum of squares (see
//! the bars below). The NIST problems are
//! also checked against their certified values with the bars of
//! `reference.rs` (parameters LRE ≥ 6, standard errors LRE ≥ 4).

use turnover_core::fastpath::{minimise_small, MAX_PARAMETERS};
use turnover_core::fit::{runaway_limit, unscaled_covariance};
use turnover_core::model::{Model, Observations};
use turnover_core::models::{model_with_options, ModelOptions};
use turnover_core::random::SplitMix64;
use turnover_core::solver::{minimise_general, SolverReport, SolverSettings};
use turnover_tests::{lre, nist_model, read_nist, NIST_PROBLEMS};

/// Largest relative difference between two vectors, judged against the
/// larger magnitude of each pair.
fn relative_difference(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| (x - y).abs() / x.abs().max(y.abs()).max(1e-300)).fold(0.0, f64::max)
}

/// Standard errors from a report, `s²(JᵀJ)⁻¹` as `fit.rs` computes them.
fn standard_errors(report: &SolverReport, n: usize) -> Option<Vec<f64>> {
    let p = report.parameters.len();
    let variance = report.rss / (n - p) as f64;
    let c = unscaled_covariance(&report.jacobian)?;
    Some((0..p).map(|j| (c[(j, j)] * variance).sqrt()).collect())
}

/// How far apart two solutions are: the largest parameter difference in
/// units of its standard error, the largest relative difference of the
/// parameters and of the standard errors, and the relative difference of
/// the sums of squares.
#[derive(Clone, Copy, Default)]
struct Apart {
    in_se: f64,
    values: f64,
    errors: f64,
    rss: f64,
}

impl Apart {
    fn max(self, other: Apart) -> Apart {
        Apart {
            in_se: self.in_se.max(other.in_se),
            values: self.values.max(other.values),
            errors: self.errors.max(other.errors),
            rss: self.rss.max(other.rss),
        }
    }
    fn within_bar(self) -> bool {
        self.in_se <= IN_SE && self.values <= VALUES && self.errors <= ERRORS && self.rss <= RSS
    }
    fn text(self) -> String {
        format!("{:.1e} SE, values {:.1e}, SEs {:.1e}, RSS {:.1e}", self.in_se, self.values, self.errors, self.rss)
    }
}

/// The bars for fast against general. A least-squares minimum is flat to
/// rounding over a range of about sqrt(ε)·SE ≈ 1e-8 SE around it (the sum
/// of squares changes by only ε·RSS there), so two correct minimisers stop
/// anywhere in that range whatever their tolerances, and values agree to
/// about 1e-8 relative, less for a parameter near zero: the general path
/// started from a point moved by 0.1% shows the same spread (printed).
/// Parameters within 1e-6 SE and 1e-6 relative, standard errors within
/// 1e-6 relative (the SciPy cross-checks' bar for values), sums of squares
/// within 1e-11 relative (the ill-conditioned MGH10's own spread is 2e-12).
const IN_SE: f64 = 1e-6;
const VALUES: f64 = 1e-6;
const ERRORS: f64 = 1e-6;
const RSS: f64 = 1e-11;

/// Distance between two converged reports on `data`; `None` when a
/// parameter ran off beyond Turnover's runaway limit (`fit_model` then
/// reports the fit as not determined, and its numbers are where the
/// search stopped, not estimates) or the covariance is singular.
fn apart(model: &dyn Model, data: &Observations, a: &SolverReport, b: &SolverReport) -> Option<Apart> {
    let ran_off = |r: &SolverReport| {
        (0..r.parameters.len()).any(|j| runaway_limit(model, data, j).is_some_and(|limit| r.parameters[j].abs() > limit))
    };
    if ran_off(a) || ran_off(b) {
        return None;
    }
    let (se_a, se_b) = (standard_errors(a, data.len())?, standard_errors(b, data.len())?);
    let in_se = a.parameters.iter().zip(&b.parameters).zip(&se_b).map(|((x, y), s)| (x - y).abs() / s).fold(0.0, f64::max);
    Some(Apart {
        in_se,
        values: relative_difference(&a.parameters, &b.parameters),
        errors: relative_difference(&se_a, &se_b),
        rss: relative_difference(&[a.rss], &[b.rss]),
    })
}

/// Compares the two paths on one problem: how far apart they end, and how
/// far apart the general path ends from a start moved by 0.1%.
fn compare(model: &dyn Model, data: &Observations, start: &[f64]) -> Result<(Apart, Apart), String> {
    let settings = SolverSettings::default();
    let general = minimise_general(model, data, start, &settings);
    let fast = minimise_small(model, data, start, &settings).ok_or("the fast path did not apply")?;
    if general.converged && !fast.converged {
        return Err(format!("general converged ({:?}), fast did not ({:?})", general.termination, fast.termination));
    }
    if !general.converged {
        // Both stopped without converging: the public `minimise` reports
        // the general path's result then, so there is nothing to compare.
        return Ok((Apart::default(), Apart::default()));
    }
    let moved: Vec<f64> = start.iter().map(|v| v * 1.001).collect();
    let again = minimise_general(model, data, &moved, &settings);
    let itself = if again.converged { apart(model, data, &again, &general).unwrap_or_default() } else { Apart::default() };
    Ok((apart(model, data, &fast, &general).unwrap_or_default(), itself))
}

/// One model's simulated designs: the predictors of each observation and
/// the true parameters in model order.
struct Design {
    name: &'static str,
    options: ModelOptions,
    x: Vec<Vec<f64>>,
    truth: Vec<f64>,
}

fn designs() -> Vec<Design> {
    let s12 = vec![0.5, 1.0, 2.0, 3.0, 5.0, 7.5, 10.0, 15.0, 20.0, 30.0, 50.0, 100.0];
    let one = |xs: &[f64]| xs.iter().map(|v| vec![*v]).collect::<Vec<_>>();
    let mut grid = Vec::new();
    for i in [0.0, 5.0, 15.0, 45.0] {
        for s in [2.0, 4.0, 8.0, 16.0, 32.0, 64.0, 128.0] {
            grid.push(vec![s, i]);
        }
    }
    let doses: Vec<f64> = (0..10).map(|k| 100.0 / 3f64.powi(k)).collect();
    let morrison: Vec<f64> = vec![0.0, 1.0, 2.0, 4.0, 6.0, 8.0, 10.0, 15.0, 20.0, 30.0, 50.0, 100.0];
    let none = ModelOptions::default();
    vec![
        Design { name: "mm", options: none, x: one(&s12), truth: vec![10.0, 8.0] },
        Design { name: "hill", options: none, x: one(&s12), truth: vec![10.0, 8.0, 1.6] },
        Design { name: "substrate-inhibition", options: none, x: one(&s12), truth: vec![12.0, 6.0, 60.0] },
        Design { name: "competitive", options: none, x: grid.clone(), truth: vec![10.0, 20.0, 8.0] },
        Design { name: "uncompetitive", options: none, x: grid.clone(), truth: vec![10.0, 20.0, 12.0] },
        Design { name: "noncompetitive", options: none, x: grid.clone(), truth: vec![10.0, 20.0, 15.0] },
        Design { name: "mixed", options: none, x: grid, truth: vec![10.0, 20.0, 10.0, 40.0] },
        Design { name: "ic50", options: none, x: one(&doses), truth: vec![2.0, 100.0, 1.5, 1.0] },
        Design {
            name: "ic50",
            options: ModelOptions { fixed_top: Some(100.0), fixed_bottom: Some(0.0), enzyme: None },
            x: one(&doses),
            truth: vec![1.5, 1.0],
        },
        Design {
            name: "ic50",
            options: ModelOptions { fixed_top: Some(100.0), fixed_bottom: None, enzyme: None },
            x: one(&doses),
            truth: vec![2.0, 1.5, 1.2],
        },
        Design { name: "morrison", options: ModelOptions { enzyme: Some(5.0), ..none }, x: one(&morrison), truth: vec![10.0, 3.0] },
    ]
}

/// One simulated set of a design: the truth moved by exp(0.3·z) per
/// parameter, normal noise of SD 3% of the largest true response, and for
/// odd `trial`s fixed unequal weights 1/(0.5 + u)², u uniform. Returns the
/// truth and the observations.
fn simulate(model: &dyn Model, design: &Design, rng: &mut SplitMix64, trial: usize) -> (Vec<f64>, Observations) {
    let truth: Vec<f64> = design.truth.iter().map(|v| v * (0.3 * rng.normal()).exp()).collect();
    let clean: Vec<f64> = design.x.iter().map(|x| model.value(x, &truth)).collect();
    let top = clean.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let y: Vec<f64> = clean.iter().map(|v| v + 0.03 * top * rng.normal()).collect();
    let weights = (trial % 2 == 1).then(|| (0..y.len()).map(|_| 1.0 / (0.5 + rng.uniform()).powi(2)).collect());
    let x: Vec<f64> = design.x.iter().flatten().copied().collect();
    (truth, Observations::new(model.predictors(), x, y, weights).unwrap())
}

/// Every model: 40 simulated data sets each (seed 20261313 + the design's
/// index; true parameters multiplied by exp(0.3·z) per set; normal noise
/// with SD 3% of the largest true response; every other set with fixed
/// unequal weights 1/(0.5 + u)², u uniform), fitted from the model's own
/// starting values by both paths.
#[test]
fn fast_path_matches_the_general_path_on_every_model() {
    let mut failures = Vec::new();
    for (index, design) in designs().iter().enumerate() {
        let model = model_with_options(design.name, &design.options).unwrap();
        let model = model.as_ref();
        assert!(model.parameters().len() <= MAX_PARAMETERS);
        let mut rng = SplitMix64::new(20261313 + index as u64);
        let mut worst = Apart::default();
        let mut spread = Apart::default();
        for trial in 0..40 {
            let (_, data) = simulate(model, design, &mut rng, trial);
            let start = model.initial_guess(&data).unwrap();
            match compare(model, &data, &start) {
                Ok((difference, itself)) => {
                    worst = worst.max(difference);
                    spread = spread.max(itself);
                }
                Err(why) => failures.push(format!("{} trial {trial}: {why}", design.name)),
            }
        }
        let p = model.parameters().len();
        println!("{:<20} p = {p}  fast vs general: {}", design.name, worst.text());
        println!("{:<20}        general vs itself from a start moved 0.1%: {}", "", spread.text());
        if !worst.within_bar() {
            failures.push(format!("{} (p = {p}): {}", design.name, worst.text()));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// NIST StRD nonlinear problems (public domain; files in `data/nist/`)
/// with at most four parameters, from both of NIST's starting points: the
/// fast path converges, agrees with the general path, and meets the
/// certified values with `reference.rs`'s bars.
#[test]
fn fast_path_matches_the_general_path_on_nist() {
    let mut failures = Vec::new();
    let mut tried = 0;
    for name in NIST_PROBLEMS {
        let problem = read_nist(name);
        let model = nist_model(name);
        if model.parameters().len() > MAX_PARAMETERS {
            continue;
        }
        let data = problem.observations();
        for (which, start) in [(1, &problem.start1), (2, &problem.start2)] {
            tried += 1;
            let fast = minimise_small(&model, &data, start, &SolverSettings::default()).unwrap();
            if !fast.converged {
                failures.push(format!("{name} start {which}: the fast path stopped ({:?})", fast.termination));
                continue;
            }
            match compare(&model, &data, start) {
                Ok((difference, itself)) => {
                    println!("{name:<9} start {which}  fast vs general: {}; general vs itself: {}", difference.text(), itself.text());
                    if !difference.within_bar() {
                        failures.push(format!("{name} start {which}: {}", difference.text()));
                    }
                }
                Err(why) => failures.push(format!("{name} start {which}: {why}")),
            }
            let errors = standard_errors(&fast, data.len()).unwrap();
            for j in 0..fast.parameters.len() {
                let value = lre(fast.parameters[j], problem.certified[j]);
                let se = lre(errors[j], problem.certified_sd[j]);
                if value < 6.0 || se < 4.0 {
                    failures.push(format!("{name} start {which} b{}: LRE {value:.1}/{se:.1}", j + 1));
                }
            }
        }
    }
    assert_eq!(tried, 2 * 13, "the NIST problems with at most four parameters");
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// Every model's `values_and_gradients` (the fast path's block of rows)
/// gives bit for bit what `value_and_gradient` gives one row at a time, and
/// that is bit for bit `value` (the trait's contract): on every design
/// above, at the true parameters and at parameters moved by factors from
/// 0.5 to 2 (seed 20261203), for the rows from 1 to the whole set
/// starting at row 0 and at row 3 (part blocks and offsets).
#[test]
fn block_evaluation_is_the_one_row_evaluation_bit_for_bit() {
    let mut rng = SplitMix64::new(20261203);
    for design in designs() {
        let model = model_with_options(design.name, &design.options).unwrap();
        let model = model.as_ref();
        let k = design.truth.len();
        let x: Vec<f64> = design.x.iter().flatten().copied().collect();
        let y = vec![1.0; design.x.len()];
        let data = Observations::new(model.predictors(), x, y, None).unwrap();
        for trial in 0..5 {
            let p: Vec<f64> = design.truth.iter().map(|v| if trial == 0 { *v } else { v * 2f64.powf(2.0 * rng.uniform() - 1.0) }).collect();
            for first in [0, 3] {
                for rows in 1..=data.len() - first {
                    let stride = rows + 2;
                    let mut out = vec![f64::NAN; (k + 1) * stride];
                    model.values_and_gradients(&data, first, rows, &p, &mut out, stride);
                    for r in 0..rows {
                        let x = data.x(first + r);
                        let mut gradient = vec![0.0; k];
                        let value = model.value_and_gradient(x, &p, &mut gradient);
                        assert_eq!(value.to_bits(), model.value(x, &p).to_bits(), "{} value", design.name);
                        assert_eq!(out[k * stride + r].to_bits(), value.to_bits(), "{} row {}: value", design.name, first + r);
                        for j in 0..k {
                            assert_eq!(out[j * stride + r].to_bits(), gradient[j].to_bits(), "{} row {}: gradient {j}", design.name, first + r);
                        }
                    }
                }
            }
        }
    }
}

/// The models' starting rules end with a few Gauss-Newton steps on the
/// sum of squares (`models::start::polish`, for Michaelis-Menten and the
/// inhibition laws), which move where the minimiser starts, not where it
/// ends. The designs above of those models (Hill and substrate inhibition
/// start from the Michaelis-Menten rule, so they are included; the other
/// models' starts are untouched, and for the dose-response law the
/// relative bar on values does not suit a bottom plateau near zero: two
/// starts end 1.4e-6 apart relative there, 1.5e-7 SE), 40 simulated sets each (seed 20261203 + the
/// design's index, truths moved by exp(0.3·z), normal noise of SD 3% of
/// the largest response, every other set with unequal weights as above):
/// the minimiser from the model's own start and from 1.5 × the truth (the
/// start the benchmark gives SciPy) reach the same optimum, to the bars of
/// the fast-against-general comparison, or both report no convergence or
/// a constant that ran off.
#[test]
fn polished_starting_values_reach_the_same_optimum() {
    let settings = SolverSettings::default();
    let mut failures = Vec::new();
    let polished = ["mm", "hill", "substrate-inhibition", "competitive", "uncompetitive", "noncompetitive", "mixed"];
    for (index, design) in designs().iter().enumerate().filter(|(_, d)| polished.contains(&d.name)) {
        let model = model_with_options(design.name, &design.options).unwrap();
        let model = model.as_ref();
        let mut rng = SplitMix64::new(20261203 + index as u64);
        let mut worst = Apart::default();
        let mut compared = 0;
        for trial in 0..40 {
            let (truth, data) = simulate(model, design, &mut rng, trial);
            let own = turnover_core::solver::minimise(model, &data, &model.initial_guess(&data).unwrap(), &settings);
            let far: Vec<f64> = truth.iter().map(|v| 1.5 * v).collect();
            let other = turnover_core::solver::minimise(model, &data, &far, &settings);
            match (own.converged, other.converged) {
                (true, true) => {
                    if let Some(difference) = apart(model, &data, &own, &other) {
                        worst = worst.max(difference);
                        compared += 1;
                    }
                }
                (false, false) => {}
                (a, b) => failures.push(format!("{} trial {trial}: own start converged {a}, 1.5 × truth {b}", design.name)),
            }
        }
        println!("{:<20} own start vs 1.5 × truth ({compared} of 40 compared): {}", design.name, worst.text());
        if !worst.within_bar() {
            failures.push(format!("{}: {}", design.name, worst.text()));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
