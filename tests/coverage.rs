//! The coverage study: seeded simulations with known truth that measure the
//! bias of the estimates and the coverage of every interval method, and
//! fail outside the goals.
//!
//! Every test states its design, noise and seed. The quick version runs in
//! the normal `cargo test`; the full version runs many more simulated sets:
//!
//! ```text
//! TURNOVER_FULL_COVERAGE=1 cargo test --release -p turnover-tests --test coverage -- --nocapture
//! ```
//!
//! **Acceptance.** The goals are for the method, not for one finite
//! simulation: a coverage goal of 94–96% is checked as the goal widened by
//! twice the Monte Carlo standard error of the estimated coverage,
//! sqrt(0.95·0.05/N) (so about ±1.0% at N = 1,000 and ±0.3% at N = 10,000,
//! where the full run is close to the goal itself), and a bias goal of
//! |bias| < 0.5% likewise by twice the Monte Carlo standard error of the
//! mean. This is the usual reading of a simulation result (common
//! practice, no source).

use turnover_core::bias::{box_bias, corrected as corrected_estimates};
use turnover_core::fit::{fit_weighted, FitSettings};
use turnover_core::model::{Model, Observations};
use turnover_core::models::MichaelisMenten;
use turnover_core::random::SplitMix64;
use turnover_core::weighting::Weighting;

/// Whether the full study was asked for.
fn full() -> bool {
    std::env::var_os("TURNOVER_FULL_COVERAGE").is_some()
}

/// Simulated sets: `quick` in the normal run, `full` on request.
fn sets(quick: usize, full_count: usize) -> usize {
    if full() {
        full_count
    } else {
        quick
    }
}

/// Running totals for one parameter.
#[derive(Default)]
struct Tally {
    sum: f64,
    sum_sq: f64,
    count: usize,
    covered: usize,
    intervals: usize,
}

impl Tally {
    fn add(&mut self, estimate: f64, interval: Option<(f64, f64)>, truth: f64) {
        let relative = estimate / truth - 1.0;
        self.sum += relative;
        self.sum_sq += relative * relative;
        self.count += 1;
        if let Some((low, high)) = interval {
            self.intervals += 1;
            if low <= truth && truth <= high {
                self.covered += 1;
            }
        }
    }
    fn bias(&self) -> f64 {
        self.sum / self.count as f64
    }
    /// Monte Carlo standard error of the relative bias.
    fn bias_se(&self) -> f64 {
        let n = self.count as f64;
        ((self.sum_sq / n - self.bias().powi(2)) / n).sqrt()
    }
    fn coverage(&self) -> f64 {
        self.covered as f64 / self.intervals as f64
    }
    fn coverage_se(&self) -> f64 {
        (0.95 * 0.05 / self.intervals as f64).sqrt()
    }
    /// Checks the goals and returns a line for the report.
    fn check(&self, label: &str, bias_goal: Option<f64>, coverage_goal: Option<(f64, f64)>) -> Result<String, String> {
        let line = format!(
            "{label}: bias {:+.3}% (MC SE {:.3}%), coverage {:.1}% of {} (MC SE {:.2}%)",
            100.0 * self.bias(),
            100.0 * self.bias_se(),
            100.0 * self.coverage(),
            self.intervals,
            100.0 * self.coverage_se()
        );
        if let Some(goal) = bias_goal {
            if self.bias().abs() > goal + 2.0 * self.bias_se() {
                return Err(format!("{line}: bias outside ±{}%", 100.0 * goal));
            }
        }
        if let Some((low, high)) = coverage_goal {
            let slack = 2.0 * self.coverage_se();
            if self.coverage() < low - slack || self.coverage() > high + slack {
                return Err(format!("{line}: coverage outside {}–{}%", 100.0 * low, 100.0 * high));
            }
        }
        Ok(line)
    }
}

/// Collects report lines and failures, and fails at the end with all of
/// them, so that one run shows every number.
#[derive(Default)]
struct Report {
    lines: Vec<String>,
    failures: Vec<String>,
}

impl Report {
    fn push(&mut self, outcome: Result<String, String>) {
        match outcome {
            Ok(line) => self.lines.push(line),
            Err(line) => {
                self.lines.push(format!("{line}  <-- FAIL"));
                self.failures.push(line);
            }
        }
    }
    fn finish(self) {
        println!("{}", self.lines.join("\n"));
        assert!(self.failures.is_empty(), "outside the goals:\n{}", self.failures.join("\n"));
    }
}

/// Goal (a): weights from the fitted curve. Design (invented): Michaelis-
/// Menten, Vmax 10, Km 2, [S] at 0.2, 0.35, 0.6, 1, 1.7, 3, 5, 8×Km in
/// duplicate (n = 16), proportional normal noise v = f·(1 + cv·z) with cv
/// 5, 10 and 15%, seed 20261202 + level; weighting relative, iterated to
/// convergence. Goals: |bias| of Vmax and Km < 0.5%, asymptotic 95%
/// intervals cover 94–96%. The old weights on the measured rates are run
/// beside it on the same data and reported (their bias is the finding
/// that motivated the change), not checked.
///
/// **The full run fails one goal** (10,000 sets per level, when this was
/// written): Km at cv 15% is biased +0.94% (Monte Carlo SE 0.16%). It is
/// the nonlinear estimator's own small-sample bias, not the weights' (the
/// weights on measured values give +1.18% there). Vmax: +0.06, +0.07,
/// +0.23%; coverage 94.5–95.4% for both at every level.
///
/// **Where the bias comes from, and its correction.** Box's O(1/n) bias
/// formula ([`turnover_core::bias`]) predicts Km +1.07% and Vmax +0.34% at
/// cv 15% at the truth; the mean of the formula evaluated at each set's own
/// estimate is checked here against the simulated bias (within three Monte
/// Carlo SEs), and the estimates with that bias subtracted (intervals
/// shifted with them) are checked against the goals: |bias| < 0.5% and
/// coverage 94–96% at every level. The same sets fitted by statsmodels'
/// Gamma GLM (the same estimating equations), by weights at the true
/// curve and by maximum likelihood give the same bias
/// (`tests/scipy/bias_study.py`).
#[test]
fn relative_weights_from_the_curve_are_unbiased_and_cover() {
    let (vmax, km) = (10.0, 2.0);
    let design: Vec<f64> = [0.2, 0.35, 0.6, 1.0, 1.7, 3.0, 5.0, 8.0].iter().flat_map(|f| [f * km, f * km]).collect();
    let trials = sets(1000, 10_000);
    let mut report = Report::default();
    for (level, cv) in [0.05, 0.10, 0.15].into_iter().enumerate() {
        let mut rng = SplitMix64::new(20261202 + level as u64);
        let mut from_curve = [Tally::default(), Tally::default()];
        let mut from_measured = [Tally::default(), Tally::default()];
        let mut corrected = [Tally::default(), Tally::default()];
        let mut predicted = [0.0; 2];
        let mut failed = 0;
        for _ in 0..trials {
            let v: Vec<f64> = design.iter().map(|s| vmax * s / (km + s) * (1.0 + cv * rng.normal())).collect();
            let weights: Vec<f64> = v.iter().map(|v| 1.0 / (v * v)).collect();
            let data = Observations::new(1, design.clone(), v, Some(weights)).unwrap();
            let settings = FitSettings::default();
            let Ok((fit, reweighted)) = fit_weighted(&MichaelisMenten, &data, Weighting::Relative, None, &settings) else {
                failed += 1;
                continue;
            };
            let Ok((old, _)) = fit_weighted(&MichaelisMenten, &data, Weighting::Sd, None, &settings) else {
                failed += 1;
                continue;
            };
            if !fit.summary.converged || !old.summary.converged {
                failed += 1;
                continue;
            }
            let Some(bias) = box_bias(&MichaelisMenten, &reweighted, &fit) else {
                failed += 1;
                continue;
            };
            let fixed = corrected_estimates(&fit, &bias);
            for (j, truth) in [vmax, km].into_iter().enumerate() {
                let p = &fit.summary.parameters[j];
                from_curve[j].add(p.value, p.ci_low.zip(p.ci_high), truth);
                corrected[j].add(fixed[j].value, fixed[j].ci_low.zip(fixed[j].ci_high), truth);
                predicted[j] += bias[j] / truth;
                let o = &old.summary.parameters[j];
                from_measured[j].add(o.value, o.ci_low.zip(o.ci_high), truth);
            }
        }
        assert!(failed * 100 <= trials, "cv {cv}: {failed} of {trials} fits failed");
        for (j, name) in ["Vmax", "Km"].iter().enumerate() {
            let label = format!("relative weights from the curve, cv {:.0}%, {name}", 100.0 * cv);
            report.push(from_curve[j].check(&label, Some(0.005), Some((0.94, 0.96))));
            let label = format!("(reported) weights on measured v, cv {:.0}%, {name}", 100.0 * cv);
            report.push(from_measured[j].check(&label, None, None));
            let label = format!("bias-corrected (Box 1971), cv {:.0}%, {name}", 100.0 * cv);
            report.push(corrected[j].check(&label, Some(0.005), Some((0.94, 0.96))));
            // The formula explains the bias when its mean prediction lies
            // within three Monte Carlo SEs of the simulated bias.
            let expected = predicted[j] / from_curve[j].count as f64;
            let line = format!(
                "Box bias formula, cv {:.0}%, {name}: predicted {:+.3}%, simulated {:+.3}% (MC SE {:.3}%)",
                100.0 * cv,
                100.0 * expected,
                100.0 * from_curve[j].bias(),
                100.0 * from_curve[j].bias_se()
            );
            report.push(if (expected - from_curve[j].bias()).abs() <= 3.0 * from_curve[j].bias_se() { Ok(line) } else { Err(line) });
        }
    }
    report.finish();
}

/// One bootstrap case: a model, its truth, a design, a noise rule and a
/// weighting.
struct BootstrapCase {
    label: &'static str,
    model: Box<dyn Model>,
    truth: Vec<f64>,
    design: Vec<f64>,
    /// Noise SD at a true value.
    sd: fn(f64) -> f64,
    weighting: Weighting,
    seed: u64,
}

/// Goal (e): bootstrap intervals that cover at n = 12–20. For each case,
/// `trials` simulated sets, each bootstrapped with `resamples` residual
/// resamples (seed of the resampling = the set's index); the studentised
/// (bootstrap-t) interval is checked against 94–96%, the percentile
/// interval from the same replicates is reported beside it.
fn bootstrap_coverage(cases: &[BootstrapCase], trials: usize, resamples: usize, report: &mut Report) {
    use turnover_core::intervals::{bootstrap, bootstrap_interval, BootstrapInterval, BootstrapSettings};
    for case in cases {
        let p = case.truth.len();
        let mut rng = SplitMix64::new(case.seed);
        let mut studentised: Vec<Tally> = (0..p).map(|_| Tally::default()).collect();
        let mut percentile: Vec<Tally> = (0..p).map(|_| Tally::default()).collect();
        let mut asymptotic: Vec<Tally> = (0..p).map(|_| Tally::default()).collect();
        let mut failed = 0;
        for trial in 0..trials {
            let y: Vec<f64> = case
                .design
                .iter()
                .map(|x| {
                    let mean = case.model.value(&[*x], &case.truth);
                    mean + (case.sd)(mean) * rng.normal()
                })
                .collect();
            let weights: Option<Vec<f64>> = match case.weighting {
                Weighting::Relative => Some(y.iter().map(|v| 1.0 / (v * v)).collect()),
                _ => None,
            };
            let data = Observations::new(1, case.design.clone(), y, weights).unwrap();
            let Ok((fit, data)) = fit_weighted(case.model.as_ref(), &data, case.weighting, None, &FitSettings::default()) else {
                failed += 1;
                continue;
            };
            if !fit.summary.converged {
                failed += 1;
                continue;
            }
            let mut settings = BootstrapSettings { resamples, seed: trial as u64 + 1, ..BootstrapSettings::default() };
            let sample = bootstrap(case.model.as_ref(), &data, &fit, &settings);
            for j in 0..p {
                let values: Vec<f64> = sample.estimates.iter().map(|e| e[j]).collect();
                let ses: Vec<Option<f64>> = sample.covariances.iter().map(|c| c.as_ref().map(|c| c[(j, j)].sqrt())).collect();
                let estimate = &fit.summary.parameters[j];
                settings.interval = BootstrapInterval::Studentised;
                let (low, high) = bootstrap_interval(&settings, estimate.value, estimate.std_error, &values, &ses, 0.95, fit.t_quantile);
                studentised[j].add(estimate.value, low.zip(high), case.truth[j]);
                settings.interval = BootstrapInterval::Percentile;
                let (low, high) = bootstrap_interval(&settings, estimate.value, estimate.std_error, &values, &ses, 0.95, fit.t_quantile);
                percentile[j].add(estimate.value, low.zip(high), case.truth[j]);
                asymptotic[j].add(estimate.value, estimate.ci_low.zip(estimate.ci_high), case.truth[j]);
            }
        }
        assert!(failed * 50 <= trials, "{}: {failed} of {trials} fits failed", case.label);
        for j in 0..p {
            let name = case.model.parameters()[j].name;
            report.push(studentised[j].check(&format!("{}, {name}, studentised bootstrap", case.label), None, Some((0.94, 0.96))));
            report.push(percentile[j].check(&format!("(reported) {}, {name}, percentile bootstrap", case.label), None, None));
            report.push(asymptotic[j].check(&format!("(reported) {}, {name}, asymptotic", case.label), None, None));
        }
    }
}

/// Goal (e) for Michaelis-Menten, n = 16. Design (invented): Vmax 10, Km 2,
/// [S] at 0.2, 0.35, 0.6, 1, 1.7, 3, 5, 8×Km in duplicate; (1) uniform
/// weights, normal noise SD 0.4 (4% of Vmax), seed 31; (2) relative weights
/// from the curve, 10% proportional noise, seed 32. Quick: 300 sets × 400
/// resamples; full: 2,000 sets × 999 resamples.
#[test]
fn bootstrap_covers_for_michaelis_menten() {
    let design: Vec<f64> = [0.2, 0.35, 0.6, 1.0, 1.7, 3.0, 5.0, 8.0].iter().flat_map(|f| [2.0 * f, 2.0 * f]).collect();
    let cases = [
        BootstrapCase {
            label: "mm n=16 uniform, sd 0.4",
            model: Box::new(MichaelisMenten),
            truth: vec![10.0, 2.0],
            design: design.clone(),
            sd: |_| 0.4,
            weighting: Weighting::Uniform,
            seed: 31,
        },
        BootstrapCase {
            label: "mm n=16 relative, cv 10%",
            model: Box::new(MichaelisMenten),
            truth: vec![10.0, 2.0],
            design,
            sd: |mean| 0.1 * mean,
            weighting: Weighting::Relative,
            seed: 32,
        },
    ];
    let mut report = Report::default();
    bootstrap_coverage(&cases, sets(300, 2000), if full() { 999 } else { 400 }, &mut report);
    report.finish();
}

/// Goal (e) for the four-parameter logistic, n = 16. Design (invented):
/// bottom 5, top 100, IC50 1, slope 1; [I] at 0.03, 0.1, 0.2, 0.5, 1, 2, 5,
/// 30 in duplicate; normal noise SD 4 (% activity), uniform weights, seed
/// 33. Quick: 200 sets × 400 resamples; full: 2,000 sets × 999 resamples.
#[test]
fn bootstrap_covers_for_the_logistic() {
    use turnover_core::models::{model_with_options, ModelOptions};
    let design: Vec<f64> = [0.03, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 30.0].iter().flat_map(|x| [*x, *x]).collect();
    let cases = [BootstrapCase {
        label: "logistic n=16 uniform, sd 4",
        model: model_with_options("ic50", &ModelOptions::default()).unwrap(),
        truth: vec![5.0, 100.0, 1.0, 1.0],
        design,
        sd: |_| 4.0,
        weighting: Weighting::Uniform,
        seed: 33,
    }];
    let mut report = Report::default();
    bootstrap_coverage(&cases, sets(200, 2000), if full() { 999 } else { 400 }, &mut report);
    report.finish();
}

/// Goal (d): the check of the error structure suggests the weighting that
/// generated the noise. Design (invented): Michaelis-Menten, Vmax 10, Km 2,
/// [S] at 0.2, 0.35, 0.6, 1, 1.7, 3, 5, 8×Km in duplicate (n = 16); (1)
/// 10% proportional noise, seed 41; (2) constant noise SD 0.3, seed 42.
/// Goals: a wrong decisive suggestion (uniform for proportional noise,
/// relative for constant noise) in at most 5% of sets, plus twice the
/// Monte Carlo error; the right one for proportional noise in at least
/// 40% (the check has modest power with 16 points: about half when this
/// was written; the shares are printed).
#[test]
fn the_error_structure_check_suggests_the_generating_weighting() {
    use turnover_core::errors::error_structure;
    let (vmax, km) = (10.0, 2.0);
    let design: Vec<f64> = [0.2, 0.35, 0.6, 1.0, 1.7, 3.0, 5.0, 8.0].iter().flat_map(|f| [f * km, f * km]).collect();
    let trials = sets(400, 4000);
    let slack = 2.0 * (0.05f64 * 0.95 / trials as f64).sqrt();
    let mut failures = Vec::new();
    for (label, seed, proportional) in [("10% proportional", 41u64, true), ("constant SD 0.3", 42, false)] {
        let mut rng = SplitMix64::new(seed);
        let mut counts = std::collections::BTreeMap::<String, usize>::new();
        for _ in 0..trials {
            let v: Vec<f64> = design
                .iter()
                .map(|s| {
                    let mean = vmax * s / (km + s);
                    if proportional { mean * (1.0 + 0.1 * rng.normal()) } else { mean + 0.3 * rng.normal() }
                })
                .collect();
            let data = Observations::single(&design, &v).unwrap();
            let check = error_structure(&MichaelisMenten, &data).expect("the uniform fit converges");
            *counts.entry(check.suggested.unwrap_or_else(|| "none".into())).or_default() += 1;
        }
        let share = |k: &str| *counts.get(k).unwrap_or(&0) as f64 / trials as f64;
        println!("error structure, {label}, {trials} sets: suggestions {counts:?}");
        let (wrong, right) = if proportional { ("uniform", "relative") } else { ("relative", "uniform") };
        if share(wrong) > 0.05 + slack {
            failures.push(format!("{label}: {wrong} suggested in {:.1}%", 100.0 * share(wrong)));
        }
        if proportional && share(right) < 0.4 {
            failures.push(format!("{label}: {right} suggested in only {:.1}%", 100.0 * share(right)));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// Goal (g): asymptotic and profile intervals of every rate law in the
/// study, the bias of the estimates beside them. For each case, `trials`
/// simulated sets; the profile interval (an open side counts as reaching
/// infinity) is checked against 94–96%, the asymptotic one against
/// 93–97% (it is the approximation the others improve on; outside that
/// range it is a finding), bias reported only (small-sample bias of a
/// nonlinear estimate is the model's, not the interval's).
fn likelihood_coverage(cases: &[BootstrapCase], trials: usize, report: &mut Report) {
    use turnover_core::intervals::profile_interval;
    for case in cases {
        let p = case.truth.len();
        let mut rng = SplitMix64::new(case.seed);
        let mut profile: Vec<Tally> = (0..p).map(|_| Tally::default()).collect();
        let mut asymptotic: Vec<Tally> = (0..p).map(|_| Tally::default()).collect();
        let mut failed = 0;
        for _ in 0..trials {
            let y: Vec<f64> = case
                .design
                .iter()
                .map(|x| {
                    let mean = case.model.value(&[*x], &case.truth);
                    mean + (case.sd)(mean) * rng.normal()
                })
                .collect();
            let weights: Option<Vec<f64>> = match case.weighting {
                Weighting::Relative => Some(y.iter().map(|v| 1.0 / (v * v)).collect()),
                _ => None,
            };
            let data = Observations::new(1, case.design.clone(), y, weights).unwrap();
            let Ok((fit, data)) = fit_weighted(case.model.as_ref(), &data, case.weighting, None, &FitSettings::default()) else {
                failed += 1;
                continue;
            };
            if !fit.summary.converged {
                failed += 1;
                continue;
            }
            for j in 0..p {
                let estimate = &fit.summary.parameters[j];
                let (low, high) = profile_interval(case.model.as_ref(), &data, &fit, j);
                profile[j].add(estimate.value, Some((low.unwrap_or(f64::NEG_INFINITY), high.unwrap_or(f64::INFINITY))), case.truth[j]);
                asymptotic[j].add(estimate.value, estimate.ci_low.zip(estimate.ci_high), case.truth[j]);
            }
        }
        assert!(failed * 50 <= trials, "{}: {failed} of {trials} fits failed", case.label);
        for j in 0..p {
            let name = case.model.parameters()[j].name;
            report.push(profile[j].check(&format!("{}, {name}, profile", case.label), None, Some((0.94, 0.96))));
            report.push(asymptotic[j].check(&format!("{}, {name}, asymptotic", case.label), None, Some((0.93, 0.97))));
        }
    }
}

/// Goal (g): the designs of the bootstrap study, with asymptotic and
/// profile intervals. Michaelis-Menten n = 16 uniform (seed 51) and
/// relative (seed 52), the logistic n = 16 (seed 53); designs as in
/// `bootstrap_covers_for_michaelis_menten` and
/// `bootstrap_covers_for_the_logistic`. Quick: 400 sets each; full: 4,000.
#[test]
fn asymptotic_and_profile_intervals_cover() {
    use turnover_core::models::{model_with_options, ModelOptions};
    let design: Vec<f64> = [0.2, 0.35, 0.6, 1.0, 1.7, 3.0, 5.0, 8.0].iter().flat_map(|f| [2.0 * f, 2.0 * f]).collect();
    let doses: Vec<f64> = [0.03, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 30.0].iter().flat_map(|x| [*x, *x]).collect();
    let cases = [
        BootstrapCase {
            label: "mm n=16 uniform, sd 0.4",
            model: Box::new(MichaelisMenten),
            truth: vec![10.0, 2.0],
            design: design.clone(),
            sd: |_| 0.4,
            weighting: Weighting::Uniform,
            seed: 51,
        },
        BootstrapCase {
            label: "mm n=16 relative, cv 10%",
            model: Box::new(MichaelisMenten),
            truth: vec![10.0, 2.0],
            design,
            sd: |mean| 0.1 * mean,
            weighting: Weighting::Relative,
            seed: 52,
        },
        BootstrapCase {
            label: "logistic n=16 uniform, sd 4",
            model: model_with_options("ic50", &ModelOptions::default()).unwrap(),
            truth: vec![5.0, 100.0, 1.0, 1.0],
            design: doses,
            sd: |_| 4.0,
            weighting: Weighting::Uniform,
            seed: 53,
        },
    ];
    let mut report = Report::default();
    likelihood_coverage(&cases, sets(400, 4000), &mut report);
    report.finish();
}
