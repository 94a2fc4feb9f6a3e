//! Planning an experiment before the bench: which concentrations and how
//! many replicates determine the constants to the precision wanted.
//!
//! [`design`] takes a model, rough guesses of its constants (each with an
//! optional range), a noise model and the limits of the assay, and returns:
//!
//! - a **recommended set of concentrations**, each rule said with where it
//!   comes from ([`DesignRule`]);
//! - the **predicted** standard error and 95% interval width of every
//!   constant from the Fisher information `JᵀWJ` at the guesses, with
//!   `W = 1/σ²` from the noise model (the covariance of the least-squares
//!   estimate to first order; Bates & Watts 1988, ch. 2, from memory);
//! - a **Monte Carlo check**: rates simulated at the guesses with the noise
//!   model, fitted by the same fit Turnover uses on real data (the same
//!   weighting, iterated from the fitted curve for proportional error), and
//!   summarised as the spread of the estimates, the median interval width,
//!   interval coverage, the share of failed fits and the probability of
//!   reaching the target precision; then the same with the constants drawn
//!   log-uniformly within their guessed ranges ([`RangeCheck`]);
//! - for the inhibition mechanisms, the probability that the mechanism
//!   comparison of the inhibition analysis names the simulated mechanism
//!   ([`MechanismCheck`]);
//! - the same evaluation of the person's own concentrations, side by side;
//! - a sweep of the predicted precision against the highest concentration
//!   (a [`PlotKind::DesignPrecision`] plot);
//! - for the bench ([`bench`]): a plate map in the form the time-course
//!   section reads, and a pipetting table with its CSV text.
//!
//! The noise streams are seeded ([`crate::random::SplitMix64`]): the same
//! request gives the same numbers bit for bit. The recommended design and
//! the person's design are simulated with the same random numbers (common
//! random numbers), so their difference is not blurred by chance.

pub mod bench;

use crate::compare::{compare_fits, Comparison};
use crate::error::Error;
use crate::fit::{fit_weighted, iterate_weights, student_t_quantile, unscaled_covariance, Fit, FitSettings, FitSummary};
use crate::inhibition::fit_mechanism;
use crate::model::{Dimension, Model, Observations};
use crate::models::{model_by_name, model_input, Inhibition, Mechanism, ModelInput};
use crate::plots::{Mark, PlotData, PlotKind, Series};
use crate::random::SplitMix64;
use crate::weighting::Weighting;
use nalgebra::DMatrix;
use serde::{Deserialize, Serialize};

pub use bench::{plate_map, pipetting_table, BenchRequest, Intermediate, PipettingRow, PipettingTable, PlateMap};

/// One guessed constant: its name as the model names it (`Km`, `Vmax`,
/// `Kic`, `IC50`, ...), a rough value and, optionally, the range it may lie
/// in.
#[derive(Clone, Debug, PartialEq, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct Guess {
    /// The model's name of the constant.
    pub name: String,
    /// The best guess.
    pub value: f64,
    /// Lowest plausible value (with `high`); `None` for no range.
    #[serde(default)]
    pub low: Option<f64>,
    /// Highest plausible value (with `low`).
    #[serde(default)]
    pub high: Option<f64>,
}

/// How the measurement error behaves.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum NoiseKind {
    /// The same standard deviation at every rate (`level` in rate units);
    /// fitted with uniform weights.
    Constant,
    /// A standard deviation proportional to the rate (`level` a fraction,
    /// 0.05 for 5%); fitted with weights 1/v² from the fitted curve.
    Proportional,
}

/// The noise model of the simulated rates.
#[derive(Clone, Copy, Debug, PartialEq, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct Noise {
    /// Constant or proportional.
    pub kind: NoiseKind,
    /// The standard deviation (constant, in rate units) or the fraction of
    /// the rate (proportional). Must be positive.
    pub level: f64,
}

impl Noise {
    /// The standard deviation of a rate whose true value is `value`.
    pub fn sd(&self, value: f64) -> f64 {
        match self.kind {
            NoiseKind::Constant => self.level,
            NoiseKind::Proportional => self.level * value.abs(),
        }
    }

    /// The weighting Turnover fits such data with.
    pub fn weighting(&self) -> Weighting {
        match self.kind {
            NoiseKind::Constant => Weighting::Uniform,
            NoiseKind::Proportional => Weighting::Relative,
        }
    }
}

/// How the target precision is measured.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum TargetMeasure {
    /// Standard error relative to the value (`Km = 5.0 ± 0.5` is 10%), as
    /// Turnover prints estimates.
    #[default]
    Se,
    /// Half the 95% interval's width relative to the value.
    Ci,
}

/// The precision wanted for one constant.
#[derive(Clone, Debug, PartialEq, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct Target {
    /// The constant (`Km`).
    pub parameter: String,
    /// The largest acceptable relative error, as a fraction (0.1 for 10%).
    pub relative: f64,
    /// Relative standard error or relative interval half-width. Default se.
    #[serde(default)]
    pub measure: TargetMeasure,
}

/// A design given by the person, to compare with the recommended one.
#[derive(Clone, Debug, Default, PartialEq, Deserialize, Serialize)]
#[serde(default, deny_unknown_fields)]
pub struct ProposedDesign {
    /// The concentrations of the varied compound: [S] for the [S]–v and
    /// inhibition models, [I] for `ic50`.
    pub concentrations: Vec<f64>,
    /// For the inhibition mechanisms, the inhibitor concentrations (every
    /// [S] is measured at every [I]); empty means the recommended ones.
    pub inhibitor_concentrations: Vec<f64>,
}

/// What to plan. Unknown fields are refused, so that a misspelt setting
/// is never silently left at its default.
#[derive(Clone, Debug, PartialEq, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct DesignRequest {
    /// Machine name of the model: `mm`, `substrate-inhibition`, `hill`,
    /// `competitive`, `uncompetitive`, `mixed`, `noncompetitive`, `ic50`.
    /// Default `mm`.
    pub model: String,
    /// A guess for every constant of the model.
    pub guesses: Vec<Guess>,
    /// The noise model. Default proportional, 5%.
    pub noise: Noise,
    /// Distinct concentrations of the varied compound ([S]; [I] for
    /// `ic50`). Default 8.
    pub points: usize,
    /// For the inhibition mechanisms: distinct [I], zero included. Default 4.
    pub inhibitor_points: usize,
    /// Wells per condition. Default 2.
    pub replicates: usize,
    /// Highest concentration of the varied compound that can be used (the
    /// solubility of the substrate, or of the inhibitor for `ic50`).
    pub max_concentration: Option<f64>,
    /// Highest [I] that can be used (inhibition mechanisms).
    pub max_inhibitor: Option<f64>,
    /// Most wells the experiment may use; a design needing more is refused.
    pub wells: Option<usize>,
    /// The lowest rate the assay can measure (rate units); the lowest [S]
    /// is raised so that its predicted rate reaches it.
    pub min_rate: Option<f64>,
    /// The precision wanted, for the probability of reaching it.
    pub target: Option<Target>,
    /// The person's own design, evaluated beside the recommended one.
    pub proposed: Option<ProposedDesign>,
    /// Seed of the simulations. Default 1.
    pub seed: u64,
    /// Simulated experiments per check (0 skips the simulations). Default
    /// 200; at most 20,000.
    pub simulations: usize,
    /// Unit of [S] (labels and the plate map only).
    pub substrate_unit: Option<String>,
    /// Unit of [I] (labels and the plate map only).
    pub inhibitor_unit: Option<String>,
    /// Unit of the rate (labels only).
    pub rate_unit: Option<String>,
    /// Stocks and volumes for the pipetting table; `None` for no table.
    pub bench: Option<BenchRequest>,
}

impl Default for DesignRequest {
    fn default() -> Self {
        DesignRequest {
            model: "mm".into(),
            guesses: Vec::new(),
            noise: Noise { kind: NoiseKind::Proportional, level: 0.05 },
            points: 8,
            inhibitor_points: 4,
            replicates: 2,
            max_concentration: None,
            max_inhibitor: None,
            wells: None,
            min_rate: None,
            target: None,
            proposed: None,
            seed: 1,
            simulations: 200,
            substrate_unit: None,
            inhibitor_unit: None,
            rate_unit: None,
            bench: None,
        }
    }
}

/// Most simulated experiments per check.
pub const MAX_SIMULATIONS: usize = 20_000;

/// Most wells in one design, so that a plan's simulations stay bounded.
pub const MAX_WELLS: usize = 1536;

/// A rule behind the recommendation, and where it comes from.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DesignRule {
    /// The rule as applied, with its numbers.
    pub rule: String,
    /// Its source, or `common practice, no source`, or `Turnover's choice`.
    pub source: String,
}

/// The predicted precision of one constant (Fisher information at the
/// guesses).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PredictedPrecision {
    /// The constant.
    pub name: String,
    /// The guessed value the prediction is made at.
    pub value: f64,
    /// Predicted standard error.
    pub std_error: Option<f64>,
    /// Standard error over the value.
    pub relative_se: Option<f64>,
    /// Predicted width of the 95% t interval (2·t·SE).
    pub ci_width: Option<f64>,
}

/// The precision of one constant in simulated experiments at the guesses.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SimulatedPrecision {
    /// The constant.
    pub name: String,
    /// The true value simulated (the guess).
    pub value: f64,
    /// Standard deviation of the estimates over the successful fits: the
    /// standard error the design really has.
    pub std_error: Option<f64>,
    /// Median of the standard errors the fits reported.
    pub median_reported_se: Option<f64>,
    /// Median width of the fits' 95% intervals.
    pub ci_width: Option<f64>,
    /// Mean estimate over the true value, minus 1.
    pub relative_bias: Option<f64>,
    /// Share of the 95% intervals that hold the true value.
    pub coverage: Option<f64>,
}

/// The simulated experiments at the guessed constants.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SimulationCheck {
    /// Simulated experiments.
    pub n_simulations: usize,
    /// Fits that failed: no convergence, a constant not determined, or no
    /// standard error.
    pub failed: usize,
    /// `failed` over `n_simulations`.
    pub failed_fraction: f64,
    /// Per constant.
    pub parameters: Vec<SimulatedPrecision>,
    /// Share of all simulated experiments (failed ones count as misses)
    /// whose fit reached the target precision; `None` without a target.
    pub target_probability: Option<f64>,
}

/// One constant drawn over its range.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RangePrecision {
    /// The constant.
    pub name: String,
    /// The range drawn from (the guess twice when no range was given).
    pub low: f64,
    /// Upper end of the range.
    pub high: f64,
    /// Median relative standard error reported by the successful fits.
    pub median_relative_se: Option<f64>,
    /// Its 90th percentile: the precision nine experiments in ten reach.
    pub p90_relative_se: Option<f64>,
}

/// The simulated experiments with the constants drawn within their ranges
/// (log-uniformly for positive ranges, uniformly otherwise), so the design
/// is judged over what the constants may be, not only at the guesses.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RangeCheck {
    /// Simulated experiments.
    pub n_simulations: usize,
    /// Failed fits (see [`SimulationCheck::failed`]).
    pub failed: usize,
    /// `failed` over `n_simulations`.
    pub failed_fraction: f64,
    /// Per constant.
    pub parameters: Vec<RangePrecision>,
    /// Share of the simulated experiments reaching the target precision.
    pub target_probability: Option<f64>,
    /// For the inhibition mechanisms: the mechanism comparison over the
    /// ranges.
    pub mechanism: Option<MechanismCheck>,
}

/// How often the inhibition analysis's comparison names the mechanism the
/// rates were simulated with.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct MechanismCheck {
    /// The mechanism simulated.
    pub simulated: String,
    /// Simulated experiments.
    pub n_simulations: usize,
    /// Share where the comparison names the simulated mechanism.
    pub correct: f64,
    /// Share where it names another mechanism.
    pub wrong: f64,
    /// Share where it names none (undecided).
    pub undecided: f64,
    /// Share where a fit could not be made at all.
    pub failed: f64,
    /// How often each mechanism was named, as (mechanism, share).
    pub named: Vec<(String, f64)>,
}

/// A design and what it is expected to give.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DesignEvaluation {
    /// The concentrations of the varied compound, increasing: [S] (or [I]
    /// for `ic50`).
    pub concentrations: Vec<f64>,
    /// The inhibitor concentrations of an inhibition design (every [S] at
    /// every [I]); empty otherwise.
    pub inhibitor_concentrations: Vec<f64>,
    /// Wells: conditions times replicates.
    pub wells: usize,
    /// Fisher-information prediction at the guesses.
    pub predicted: Vec<PredictedPrecision>,
    /// Monte Carlo at the guesses; `None` when no simulations were asked.
    pub simulated: Option<SimulationCheck>,
    /// Monte Carlo over the guessed ranges; `None` without ranges or
    /// simulations.
    pub over_range: Option<RangeCheck>,
    /// For the inhibition mechanisms at the guesses.
    pub mechanism: Option<MechanismCheck>,
}

/// Units of the labels, as given.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct DesignUnits {
    /// Unit of [S].
    pub substrate: Option<String>,
    /// Unit of [I].
    pub inhibitor: Option<String>,
    /// Unit of the rate.
    pub rate: Option<String>,
}

/// The plan.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DesignResult {
    /// Machine name of the model.
    pub model: String,
    /// Its equation.
    pub equation: String,
    /// What `concentrations` are: `substrate` or `inhibitor` (for `ic50`).
    pub varied: String,
    /// Units as given.
    pub units: DesignUnits,
    /// Wells per condition.
    pub replicates: usize,
    /// The recommended design and its evaluation.
    #[serde(flatten)]
    pub recommended: DesignEvaluation,
    /// The rules behind the recommendation.
    pub rules: Vec<DesignRule>,
    /// The person's own design, evaluated the same way.
    pub proposed: Option<DesignEvaluation>,
    /// The target, as read.
    pub target: Option<Target>,
    /// Simulated experiments per check.
    pub n_simulations: usize,
    /// The seed of the simulations.
    pub seed: u64,
    /// The precision sweep (a [`PlotKind::DesignPrecision`] plot).
    pub plots: Vec<PlotData>,
    /// The plate map of the recommended design (grids `S`, `I`, `role` in
    /// the form the time-course layout reads); `None` beyond 384 wells.
    pub plate_map: Option<PlateMap>,
    /// The pipetting table, when stocks and volumes were given.
    pub pipetting: Option<PipettingTable>,
    /// Warnings in words.
    pub warnings: Vec<String>,
    /// Notes in words.
    pub notes: Vec<String>,
    /// The caution that comes with every result.
    pub caution: String,
}

/// The caution of a plan: the analyses' caution and what a plan assumes.
pub const DESIGN_CAUTION: &str = "These are predictions from guessed constants and an assumed noise model, not \
    measurements: the design is only as good as the guesses. The constants later fitted are statistical \
    estimates that mean what they claim only if the rates are true initial rates and the model suits the \
    mechanism. Follow your laboratory's validated procedures for decisions that matter.";

/// The model, the truth and what the request says about both.
struct Setup {
    model: Box<dyn Model>,
    input: ModelInput,
    mechanism: Option<Mechanism>,
    names: Vec<String>,
    truth: Vec<f64>,
    ranges: Vec<Option<(f64, f64)>>,
    noise: Noise,
    replicates: usize,
}

impl Setup {
    fn predictors(&self) -> usize {
        self.model.predictors()
    }

    fn index(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|n| n.eq_ignore_ascii_case(name.trim()))
    }
}

/// A grid of conditions: the varied compound's concentrations and, for
/// inhibition, the inhibitor's.
#[derive(Clone, Debug, PartialEq)]
struct Grid {
    first: Vec<f64>,
    second: Vec<f64>,
}

impl Grid {
    /// Predictor values of every well, row-major, replicates adjacent.
    fn x(&self, predictors: usize, replicates: usize) -> Vec<f64> {
        let mut x = Vec::new();
        if predictors == 2 {
            for &i in &self.second {
                for &s in &self.first {
                    for _ in 0..replicates {
                        x.extend([s, i]);
                    }
                }
            }
        } else {
            for &c in &self.first {
                for _ in 0..replicates {
                    x.push(c);
                }
            }
        }
        x
    }

    fn conditions(&self, predictors: usize) -> usize {
        self.first.len() * if predictors == 2 { self.second.len() } else { 1 }
    }
}

fn positive_finite(value: f64) -> bool {
    value.is_finite() && value > 0.0
}

fn check_positive(name: &str, value: Option<f64>) -> Result<(), Error> {
    match value {
        Some(v) if !positive_finite(v) => Err(Error::invalid_option(format!("{name} must be a positive number, found {v}"))),
        _ => Ok(()),
    }
}

fn setup(request: &DesignRequest) -> Result<Setup, Error> {
    let name = request.model.trim();
    let input = model_input(name).ok_or_else(|| {
        Error::invalid_option(format!(
            "the design covers the models mm, substrate-inhibition, hill, competitive, uncompetitive, mixed, noncompetitive and ic50; '{name}' is not one of them"
        ))
    })?;
    if name == "morrison" {
        return Err(Error::invalid_option("the design does not cover the Morrison model yet; plan with ic50 or an inhibition mechanism"));
    }
    let model = model_by_name(name)?;
    let mechanism = Mechanism::ALL.into_iter().find(|m| m.name() == name);
    let names: Vec<String> = model.parameters().iter().map(|p| p.name.to_string()).collect();
    for guess in &request.guesses {
        if !names.iter().any(|n| n.eq_ignore_ascii_case(guess.name.trim())) {
            return Err(Error::invalid_option(format!(
                "'{}' is not a constant of {name}; its constants are {}",
                guess.name,
                names.join(", ")
            )));
        }
    }
    let mut truth = Vec::new();
    let mut ranges = Vec::new();
    let mut missing = Vec::new();
    for (j, n) in names.iter().enumerate() {
        let found: Vec<&Guess> = request.guesses.iter().filter(|g| g.name.trim().eq_ignore_ascii_case(n)).collect();
        if found.len() > 1 {
            return Err(Error::invalid_option(format!("{n} is guessed twice")));
        }
        let Some(guess) = found.first() else {
            missing.push(n.clone());
            continue;
        };
        let value = guess.value;
        let must_be_positive = model.positive(j) || n == "nH" || n == "steepness";
        if !value.is_finite() || (must_be_positive && value <= 0.0) {
            return Err(Error::invalid_option(format!(
                "the guess of {n} must be a {}number, found {value}",
                if must_be_positive { "positive " } else { "" }
            )));
        }
        let range = match (guess.low, guess.high) {
            (None, None) => None,
            (Some(low), Some(high)) => {
                if !(low.is_finite() && high.is_finite() && low < high) {
                    return Err(Error::invalid_option(format!("the range of {n} must be two finite numbers, low below high; found {low} to {high}")));
                }
                if must_be_positive && low <= 0.0 {
                    return Err(Error::invalid_option(format!("the range of {n} must be positive, found {low} to {high}")));
                }
                if !(low..=high).contains(&value) {
                    return Err(Error::invalid_option(format!("the guess of {n}, {value}, lies outside its range {low} to {high}")));
                }
                Some((low, high))
            }
            _ => return Err(Error::invalid_option(format!("the range of {n} needs both a low and a high end"))),
        };
        truth.push(value);
        ranges.push(range);
    }
    if !missing.is_empty() {
        return Err(Error::invalid_option(format!(
            "a guess is needed for every constant of {name}: missing {} (its constants are {})",
            missing.join(", "),
            names.join(", ")
        )));
    }
    if !positive_finite(request.noise.level) {
        return Err(Error::invalid_option(format!("the noise level must be a positive number, found {}", request.noise.level)));
    }
    if request.noise.kind == NoiseKind::Proportional && request.noise.level >= 1.0 {
        return Err(Error::invalid_option(format!(
            "a proportional noise of {}% is not a usable assay; give the fraction (0.05 for 5%)",
            request.noise.level * 100.0
        )));
    }
    if request.replicates == 0 || request.replicates > 48 {
        return Err(Error::invalid_option("the number of replicates must be between 1 and 48"));
    }
    if request.simulations > MAX_SIMULATIONS {
        return Err(Error::invalid_option(format!("at most {MAX_SIMULATIONS} simulations per check, found {}", request.simulations)));
    }
    check_positive("the highest concentration", request.max_concentration)?;
    check_positive("the highest [I]", request.max_inhibitor)?;
    check_positive("the lowest measurable rate", request.min_rate)?;
    Ok(Setup { model, input, mechanism, names, truth, ranges, noise: request.noise, replicates: request.replicates })
}

/// Rounds to three significant figures, for concentrations a person makes
/// up at the bench.
fn round3(value: f64) -> f64 {
    if value == 0.0 || !value.is_finite() {
        return value;
    }
    let magnitude = value.abs().log10().floor() as i32;
    let scale = 10f64.powi(2 - magnitude);
    (value * scale).round() / scale
}

/// `n` values from `low` to `high` with equal ratios, rounded to three
/// significant figures.
fn geometric(low: f64, high: f64, n: usize) -> Vec<f64> {
    if n == 1 {
        return vec![round3(high)];
    }
    let mut values: Vec<f64> = (0..n).map(|k| round3(low * (high / low).powf(k as f64 / (n - 1) as f64))).collect();
    values.dedup();
    values
}

fn number(value: f64) -> String {
    crate::plots::family::short_number(value)
}

fn with_unit(value: f64, unit: &Option<String>) -> String {
    match unit.as_deref().map(str::trim).filter(|u| !u.is_empty()) {
        Some(u) => format!("{} {u}", number(value)),
        None => number(value),
    }
}

/// The recommended grid with the rules behind it.
fn recommend(setup: &Setup, request: &DesignRequest, warnings: &mut Vec<String>) -> Result<(Grid, Vec<DesignRule>), Error> {
    let p = &setup.truth;
    let get = |name: &str| setup.index(name).map(|j| p[j]);
    let common = "common practice, no source".to_string();
    let choice = "Turnover's choice".to_string();
    let mut rules = Vec::new();
    let (unit, what, key) = match setup.input {
        ModelInput::Inhibitor => (&request.inhibitor_unit, "[I]", "IC50"),
        _ => (&request.substrate_unit, "[S]", if setup.model.name() == "hill" { "K0.5" } else { "Km" }),
    };
    let k = get(key).expect("every model here has its half-saturation constant");
    let (mut low, mut high) = match setup.model.name() {
        "hill" => {
            let n = get("nH").unwrap_or(1.0);
            let f = 5f64.powf(1.0 / n);
            rules.push(DesignRule {
                rule: format!(
                    "[S] from K0.5/{} to {}×K0.5 ({} to {}): the [S] where the rate is 1/6 and 5/6 of Vmax, the same part of the curve as 0.2–5×Km covers for Michaelis-Menten (5^(1/nH) with nH = {})",
                    number(f), number(f), number(k / f), number(k * f), number(n)
                ),
                source: "0.2–5×Km: common practice, no source; its extension to nH: Turnover's choice".into(),
            });
            (k / f, k * f)
        }
        "substrate-inhibition" => {
            let ksi = get("Ksi").expect("Ksi");
            let (a, b) = (k.min(ksi), k.max(ksi));
            rules.push(DesignRule {
                rule: format!(
                    "[S] from 0.2×{} to 5×{} ({} to {}), so that the rise and the fall past the optimum [S] = √(Km·Ksi) ≈ {} are both measured",
                    if k <= ksi { "Km" } else { "Ksi" },
                    if k <= ksi { "Ksi" } else { "Km" },
                    number(0.2 * a),
                    number(5.0 * b),
                    number((k * ksi).sqrt())
                ),
                source: choice.clone(),
            });
            (0.2 * a, 5.0 * b)
        }
        "ic50" => {
            let h = get("steepness").unwrap_or(1.0).abs();
            let f = 3.0 * 19f64.powf(1.0 / h);
            rules.push(DesignRule {
                rule: format!(
                    "[I] from IC50/{} to {}×IC50 ({} to {}): three times beyond the [I] where the response is 5% and 95% of the way between the plateaus (19^(1/slope) with slope {}), so both plateaus are measured",
                    number(f), number(f), number(k / f), number(k * f), number(h)
                ),
                source: "both plateaus measured: common practice, no source; the factor 3: Turnover's choice".into(),
            });
            (k / f, k * f)
        }
        _ => {
            rules.push(DesignRule {
                rule: format!("[S] from 0.2×Km to 5×Km ({} to {}): the rate goes from 1/6 to 5/6 of Vmax", number(0.2 * k), number(5.0 * k)),
                source: common.clone(),
            });
            (0.2 * k, 5.0 * k)
        }
    };
    rules.push(DesignRule {
        rule: format!("{} points with equal ratios between neighbours (geometric spacing), rounded to 3 significant figures", request.points),
        source: common.clone(),
    });
    let span = high / low;
    if let Some(max) = request.max_concentration {
        if high > max {
            rules.push(DesignRule {
                rule: format!(
                    "the highest {what} is capped at the highest usable concentration, {}; the {}-fold span is kept by moving the lowest down",
                    with_unit(max, unit),
                    number(span)
                ),
                source: choice.clone(),
            });
            high = max;
            low = max / span;
            if setup.input != ModelInput::Inhibitor && max < 2.0 * k {
                warnings.push(format!(
                    "The highest usable [S] ({}) is below 2×{key} (guess {}): Vmax and {key} will be poorly determined and strongly correlated; consider a more soluble substrate or a guess of {key} checked by a pilot.",
                    with_unit(max, unit),
                    with_unit(k, unit)
                ));
            }
        }
    }
    if let (Some(min_rate), ModelInput::Substrate | ModelInput::SubstrateAndInhibitor) = (request.min_rate, setup.input) {
        let rate = |s: f64| {
            let x = if setup.predictors() == 2 { vec![s, 0.0] } else { vec![s] };
            setup.model.value(&x, p)
        };
        if rate(high) < min_rate {
            warnings.push(format!(
                "Even the highest [S] gives a predicted rate ({}) below the lowest measurable rate ({}); more enzyme or a more sensitive readout is needed.",
                number(rate(high)),
                number(min_rate)
            ));
        } else if rate(low) < min_rate {
            // The predicted rate rises with [S] up to the optimum (for
            // substrate inhibition) or the top; bisection on log [S].
            let (mut a, mut b) = (low.ln(), high.ln());
            for _ in 0..100 {
                let m = 0.5 * (a + b);
                if rate(m.exp()) < min_rate {
                    a = m;
                } else {
                    b = m;
                }
            }
            rules.push(DesignRule {
                rule: format!(
                    "the lowest [S] is raised from {} to {}, where the predicted rate reaches the lowest measurable rate ({})",
                    number(low),
                    number(b.exp()),
                    number(min_rate)
                ),
                source: choice.clone(),
            });
            low = b.exp();
        }
    }
    if request.min_rate.is_some() && setup.input == ModelInput::Inhibitor {
        warnings.push("The lowest measurable rate is not applied to a dose-response design: its response is not a rate.".to_string());
    }
    let first = geometric(low, high, request.points);
    let mut second = Vec::new();
    if setup.input == ModelInput::SubstrateAndInhibitor {
        let ki = ["Kic", "Kiu", "Ki"].iter().filter_map(|n| get(n)).fold(f64::INFINITY, f64::min);
        let (mut i_low, mut i_high) = (0.5 * ki, 4.0 * ki);
        rules.push(DesignRule {
            rule: format!(
                "[I] = 0 and {} concentrations from 0.5×Ki to 4×Ki ({} to {}, Ki the smallest inhibition constant guessed), equal ratios; every [S] at every [I]",
                request.inhibitor_points - 1,
                with_unit(i_low, &request.inhibitor_unit),
                with_unit(i_high, &request.inhibitor_unit)
            ),
            source: common.clone(),
        });
        if let Some(max) = request.max_inhibitor.filter(|m| *m < i_high) {
            rules.push(DesignRule {
                rule: format!("the highest [I] is capped at {}, the span kept", with_unit(max, &request.inhibitor_unit)),
                source: choice.clone(),
            });
            i_low = max / 8.0;
            i_high = max;
            if max < ki {
                warnings.push(format!(
                    "The highest usable [I] ({}) is below the guessed Ki ({}): the inhibition will be weak and the mechanisms hard to tell apart.",
                    with_unit(max, &request.inhibitor_unit),
                    with_unit(ki, &request.inhibitor_unit)
                ));
            }
        }
        second.push(0.0);
        second.extend(geometric(i_low, i_high, request.inhibitor_points - 1));
    }
    Ok((Grid { first, second }, rules))
}

fn check_grid(setup: &Setup, grid: &Grid, what: &str) -> Result<(), Error> {
    let p = setup.model.parameters().len();
    for (values, name) in [(&grid.first, "concentration"), (&grid.second, "inhibitor concentration")] {
        if let Some(v) = values.iter().find(|v| !(v.is_finite() && **v >= 0.0)) {
            return Err(Error::invalid_option(format!("{what}: every {name} must be a number ≥ 0, found {v}")));
        }
    }
    let distinct = |v: &[f64]| {
        let mut v = v.to_vec();
        v.sort_by(f64::total_cmp);
        v.dedup();
        v.len()
    };
    if distinct(&grid.first) < p.clamp(2, 3) {
        return Err(Error::invalid_option(format!(
            "{what}: {} distinct concentration(s) cannot determine {p} constants; give at least {}",
            distinct(&grid.first),
            p.clamp(2, 3)
        )));
    }
    if setup.predictors() == 2 && distinct(&grid.second) < 2 {
        return Err(Error::invalid_option(format!("{what}: an inhibition design needs at least two [I], zero included")));
    }
    let n = grid.conditions(setup.predictors()) * setup.replicates;
    if n > MAX_WELLS {
        return Err(Error::invalid_option(format!(
            "{what}: {n} wells is more than the {MAX_WELLS} Turnover plans for (the wells of a 1536-well plate); use fewer points, inhibitor levels or replicates"
        )));
    }
    if n <= p {
        return Err(Error::invalid_option(format!("{what}: {n} wells cannot determine {p} constants with an uncertainty; at least {} are needed", p + 1)));
    }
    if setup.noise.kind == NoiseKind::Proportional {
        let x = grid.x(setup.predictors(), 1);
        for row in x.chunks(setup.predictors()) {
            let v = setup.model.value(row, &setup.truth);
            if v.is_nan() || v <= 0.0 {
                return Err(Error::invalid_option(format!(
                    "{what}: at {} the predicted rate is {}, which cannot carry a proportional error; leave that concentration out or use constant noise",
                    row.iter().map(|c| number(*c)).collect::<Vec<_>>().join(", "),
                    number(v)
                )));
            }
        }
    }
    Ok(())
}

/// The Fisher-information covariance `(JᵀWJ)⁻¹` at `truth`, `W = 1/σ²`.
fn fisher_covariance(model: &dyn Model, noise: &Noise, truth: &[f64], x: &[f64], predictors: usize) -> Option<DMatrix<f64>> {
    let p = truth.len();
    let n = x.len() / predictors;
    let mut j = DMatrix::zeros(n, p);
    let mut g = vec![0.0; p];
    for (i, row) in x.chunks(predictors).enumerate() {
        let sd = noise.sd(model.value(row, truth));
        if !positive_finite(sd) {
            return None;
        }
        model.gradient(row, truth, &mut g);
        for (k, gk) in g.iter().enumerate() {
            j[(i, k)] = gk / sd;
        }
    }
    unscaled_covariance(&j)
}

fn predict(setup: &Setup, grid: &Grid) -> Vec<PredictedPrecision> {
    let x = grid.x(setup.predictors(), setup.replicates);
    let n = x.len() / setup.predictors();
    let t = student_t_quantile(0.975, (n - setup.truth.len()) as f64);
    let covariance = fisher_covariance(setup.model.as_ref(), &setup.noise, &setup.truth, &x, setup.predictors());
    setup
        .names
        .iter()
        .enumerate()
        .map(|(j, name)| {
            let se = covariance.as_ref().map(|c| c[(j, j)].sqrt()).filter(|v| v.is_finite());
            let value = setup.truth[j];
            PredictedPrecision {
                name: name.clone(),
                value,
                std_error: se,
                relative_se: se.map(|s| s / value.abs()).filter(|v| v.is_finite()),
                ci_width: se.zip(t).map(|(s, t)| 2.0 * t * s),
            }
        })
        .collect()
}

/// The fitted values, standard errors and interval ends of the constants
/// of a fit that succeeded.
type Estimates = (Vec<f64>, Vec<f64>, Vec<(f64, f64)>);

/// What one simulated experiment gave.
struct Outcome {
    /// The estimates, when the fit succeeded.
    fit: Option<Estimates>,
    /// The mechanism the comparison named (inhibition only): `Some(None)`
    /// for undecided.
    named: Option<Option<String>>,
}

/// The values, standard errors and intervals of a fit that succeeded: it
/// converged and every constant has a standard error.
fn usable(summary: &FitSummary) -> Option<Estimates> {
    if !summary.converged {
        return None;
    }
    let fitted: Vec<_> = summary.parameters.iter().filter(|p| !p.derived).collect();
    let values = fitted.iter().map(|p| p.value).collect();
    let ses = fitted.iter().map(|p| p.std_error).collect::<Option<Vec<f64>>>()?;
    let cis = fitted.iter().map(|p| p.ci_low.zip(p.ci_high)).collect::<Option<Vec<(f64, f64)>>>()?;
    Some((values, ses, cis))
}

/// The fits of the inhibition analysis ([`crate::inhibition::analyse_inhibition`])
/// on one set of observations: weights from the fitted curve iterated on
/// the mixed mechanism and held for all, single mechanisms first, mixed
/// also started from their solutions, then the comparison. The same calls
/// in the same order (the interval step, which does not change the
/// comparison, is left out); `tests/design.rs` checks that both name the
/// same mechanism with the same sums of squares.
pub fn compare_mechanisms(data: &Observations, weighting: Weighting) -> Result<(Vec<(Mechanism, Fit)>, Comparison), Error> {
    let mut data = data.clone();
    let mut rounds = None;
    if weighting.from_model() {
        let first = fit_mechanism(Mechanism::Mixed, &data, &[])?;
        if first.summary.converged {
            let r = iterate_weights(
                &Inhibition::new(Mechanism::Mixed),
                &data,
                weighting,
                first.values(),
                &FitSettings::default().solver,
                crate::fit::REWEIGHT_TOLERANCE,
                crate::fit::REWEIGHT_LIMIT,
            );
            if r.unsettled.is_none() {
                data = r.data;
                rounds = Some(r.rounds);
            }
        }
    }
    let mut order = Mechanism::ALL.to_vec();
    order.sort_by_key(|m| *m == Mechanism::Mixed);
    let mut fitted: Vec<(Mechanism, Fit)> = Vec::new();
    for mechanism in order {
        let seeds: Vec<(Mechanism, Vec<f64>)> = fitted.iter().map(|(m, f)| (*m, f.values().to_vec())).collect();
        fitted.push((mechanism, fit_mechanism(mechanism, &data, &seeds)?));
    }
    fitted.sort_by_key(|(m, _)| Mechanism::ALL.iter().position(|x| x == m));
    let summaries: Vec<FitSummary> = fitted
        .iter()
        .map(|(_, f)| {
            let mut s = f.summary.clone();
            s.weighting = weighting.name().into();
            s.reweighting_rounds = rounds;
            s
        })
        .collect();
    let comparison = compare_fits(&summaries);
    Ok((fitted, comparison))
}

/// Simulates and fits one experiment with the constants `truth`.
fn simulate_once(setup: &Setup, x: &[f64], truth: &[f64], rng: &mut SplitMix64, y: &mut Vec<f64>) -> Outcome {
    let predictors = setup.predictors();
    y.clear();
    for row in x.chunks(predictors) {
        let f = setup.model.value(row, truth);
        y.push(f + setup.noise.sd(f) * rng.normal());
    }
    let weighting = setup.noise.weighting();
    let weights = match weighting.weights_without_sd(y) {
        Ok(w) => w,
        Err(_) => return Outcome { fit: None, named: setup.mechanism.map(|_| None) },
    };
    let Ok(data) = Observations::new(predictors, x.to_vec(), y.clone(), weights) else {
        return Outcome { fit: None, named: setup.mechanism.map(|_| None) };
    };
    if let Some(mechanism) = setup.mechanism {
        return match compare_mechanisms(&data, weighting) {
            Ok((fits, comparison)) => {
                let own = fits.iter().find(|(m, _)| *m == mechanism).map(|(_, f)| &f.summary);
                Outcome { fit: own.and_then(usable), named: Some(comparison.preferred) }
            }
            Err(_) => Outcome { fit: None, named: Some(Some("failed".to_string())) },
        };
    }
    let fit = fit_weighted(setup.model.as_ref(), &data, weighting, None, &FitSettings::default()).ok();
    Outcome { fit: fit.and_then(|(f, _)| usable(&f.summary)), named: None }
}

/// The relative error of a fit by the target's measure, or `None` when the
/// fit failed.
fn relative_error(target: &Target, index: usize, fit: &Estimates) -> f64 {
    let value = fit.0[index].abs();
    match target.measure {
        TargetMeasure::Se => fit.1[index] / value,
        TargetMeasure::Ci => 0.5 * (fit.2[index].1 - fit.2[index].0) / value,
    }
}

fn median(values: &mut [f64]) -> Option<f64> {
    quantile(values, 0.5)
}

/// The R type-7 quantile of `values` (sorted in place).
fn quantile(values: &mut [f64], q: f64) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    values.sort_by(f64::total_cmp);
    let h = (values.len() - 1) as f64 * q;
    let (lo, hi) = (h.floor() as usize, h.ceil() as usize);
    Some(values[lo] + (h - lo as f64) * (values[hi] - values[lo]))
}

fn mechanism_summary(simulated: Mechanism, named: &[Option<String>]) -> MechanismCheck {
    let n = named.len().max(1) as f64;
    let share = |f: &dyn Fn(&Option<String>) -> bool| named.iter().filter(|x| f(x)).count() as f64 / n;
    let failed = share(&|x| x.as_deref() == Some("failed"));
    let undecided = share(&|x| x.is_none());
    let correct = share(&|x| x.as_deref() == Some(simulated.name()));
    let wrong = share(&|x| x.as_deref().is_some_and(|m| m != simulated.name() && m != "failed"));
    let mut names: Vec<(String, f64)> = Mechanism::ALL
        .iter()
        .map(|m| (m.name().to_string(), share(&|x| x.as_deref() == Some(m.name()))))
        .filter(|(_, s)| *s > 0.0)
        .collect();
    names.sort_by(|a, b| b.1.total_cmp(&a.1));
    MechanismCheck {
        simulated: simulated.name().to_string(),
        n_simulations: named.len(),
        correct,
        wrong,
        undecided,
        failed,
        named: names,
    }
}

/// A generator for stream `k` of `seed`: the checks draw from separate
/// streams, and the recommended and the person's designs share them.
fn stream(seed: u64, k: u64) -> SplitMix64 {
    let mut mix = SplitMix64::new(seed ^ k.wrapping_mul(0xD1B5_4A32_D192_ED03));
    SplitMix64::new(mix.next_u64())
}

fn simulate_at_guesses(setup: &Setup, grid: &Grid, n: usize, seed: u64, target: Option<(&Target, usize)>) -> (SimulationCheck, Option<MechanismCheck>) {
    let x = grid.x(setup.predictors(), setup.replicates);
    let mut rng = stream(seed, 1);
    let mut y = Vec::with_capacity(x.len() / setup.predictors());
    let mut fits = Vec::new();
    let mut named = Vec::new();
    let mut failed = 0;
    let mut reached = 0;
    for _ in 0..n {
        let outcome = simulate_once(setup, &x, &setup.truth, &mut rng, &mut y);
        if let Some(name) = outcome.named {
            named.push(name);
        }
        match outcome.fit {
            Some(fit) => {
                if target.is_some_and(|(t, j)| relative_error(t, j, &fit) <= t.relative) {
                    reached += 1;
                }
                fits.push(fit);
            }
            None => failed += 1,
        }
    }
    let parameters = setup
        .names
        .iter()
        .enumerate()
        .map(|(j, name)| {
            let truth = setup.truth[j];
            let values: Vec<f64> = fits.iter().map(|f| f.0[j]).collect();
            let m = values.len() as f64;
            let mean = values.iter().sum::<f64>() / m;
            let sd = (values.len() > 1).then(|| (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (m - 1.0)).sqrt());
            let mut ses: Vec<f64> = fits.iter().map(|f| f.1[j]).collect();
            let mut widths: Vec<f64> = fits.iter().map(|f| f.2[j].1 - f.2[j].0).collect();
            let covered = fits.iter().filter(|f| f.2[j].0 <= truth && truth <= f.2[j].1).count();
            SimulatedPrecision {
                name: name.clone(),
                value: truth,
                std_error: sd,
                median_reported_se: median(&mut ses),
                ci_width: median(&mut widths),
                relative_bias: (!values.is_empty() && truth != 0.0).then(|| mean / truth - 1.0),
                coverage: (!fits.is_empty()).then(|| covered as f64 / m),
            }
        })
        .collect();
    let check = SimulationCheck {
        n_simulations: n,
        failed,
        failed_fraction: failed as f64 / n as f64,
        parameters,
        target_probability: target.map(|_| reached as f64 / n as f64),
    };
    (check, setup.mechanism.map(|m| mechanism_summary(m, &named)))
}

fn simulate_over_range(setup: &Setup, grid: &Grid, n: usize, seed: u64, target: Option<(&Target, usize)>) -> RangeCheck {
    let x = grid.x(setup.predictors(), setup.replicates);
    let mut rng = stream(seed, 2);
    let mut y = Vec::with_capacity(x.len() / setup.predictors());
    let p = setup.truth.len();
    let mut relative: Vec<Vec<f64>> = vec![Vec::new(); p];
    let mut named = Vec::new();
    let (mut failed, mut reached) = (0, 0);
    let mut truth = setup.truth.clone();
    for _ in 0..n {
        for (j, range) in setup.ranges.iter().enumerate() {
            if let Some((low, high)) = range {
                let u = rng.uniform();
                truth[j] = if *low > 0.0 { (low.ln() + u * (high.ln() - low.ln())).exp() } else { low + u * (high - low) };
            }
        }
        let outcome = simulate_once(setup, &x, &truth, &mut rng, &mut y);
        if let Some(name) = outcome.named {
            named.push(name);
        }
        match outcome.fit {
            Some(fit) => {
                if target.is_some_and(|(t, j)| relative_error(t, j, &fit) <= t.relative) {
                    reached += 1;
                }
                for (j, r) in relative.iter_mut().enumerate() {
                    r.push(fit.1[j] / fit.0[j].abs());
                }
            }
            None => failed += 1,
        }
    }
    let parameters = setup
        .names
        .iter()
        .enumerate()
        .map(|(j, name)| {
            let (low, high) = setup.ranges[j].unwrap_or((setup.truth[j], setup.truth[j]));
            RangePrecision {
                name: name.clone(),
                low,
                high,
                median_relative_se: median(&mut relative[j]),
                p90_relative_se: quantile(&mut relative[j], 0.9),
            }
        })
        .collect();
    RangeCheck {
        n_simulations: n,
        failed,
        failed_fraction: failed as f64 / n as f64,
        parameters,
        target_probability: target.map(|_| reached as f64 / n as f64),
        mechanism: setup.mechanism.map(|m| mechanism_summary(m, &named)),
    }
}

fn evaluate(setup: &Setup, grid: &Grid, request: &DesignRequest, target: Option<(&Target, usize)>) -> DesignEvaluation {
    let n = request.simulations;
    let (simulated, mechanism) = if n > 0 {
        let (s, m) = simulate_at_guesses(setup, grid, n, request.seed, target);
        (Some(s), m)
    } else {
        (None, None)
    };
    let over_range = (n > 0 && setup.ranges.iter().any(Option::is_some)).then(|| simulate_over_range(setup, grid, n, request.seed, target));
    DesignEvaluation {
        concentrations: grid.first.clone(),
        inhibitor_concentrations: grid.second.clone(),
        wells: grid.conditions(setup.predictors()) * setup.replicates,
        predicted: predict(setup, grid),
        simulated,
        over_range,
        mechanism,
    }
}

/// The relative error the Fisher information predicts for parameter `j`,
/// by the target's measure.
fn predicted_relative(setup: &Setup, grid: &Grid, j: usize, measure: TargetMeasure) -> Option<f64> {
    let p = predict(setup, grid);
    let rel = p[j].relative_se?;
    Some(match measure {
        TargetMeasure::Se => rel,
        TargetMeasure::Ci => 0.5 * p[j].ci_width? / setup.truth[j].abs(),
    })
}

/// The sweep: the predicted relative error of every constant against the
/// highest concentration of the axis the target constant lives on, the
/// other settings as recommended.
fn sweep(setup: &Setup, grid: &Grid, request: &DesignRequest, target: Option<(&Target, usize)>) -> PlotData {
    let on_inhibitor = target.is_some_and(|(_, j)| setup.model.parameters()[j].dimension == Dimension::Predictor(1) && setup.predictors() == 2);
    let values = if on_inhibitor { &grid.second } else { &grid.first };
    let positive: Vec<f64> = values.iter().copied().filter(|v| *v > 0.0).collect();
    let top = positive.iter().copied().fold(0.0, f64::max);
    let bottom = positive.iter().copied().fold(f64::INFINITY, f64::min);
    let span = if bottom > 0.0 && bottom < top { top / bottom } else { 25.0 };
    let limit = if on_inhibitor { request.max_inhibitor } else { request.max_concentration };
    let high = limit.unwrap_or(top * 10.0).max(top);
    let low = top / 10.0;
    let measure = target.map_or(TargetMeasure::Se, |(t, _)| t.measure);
    let steps = 40;
    let mut series = Vec::new();
    for (j, name) in setup.names.iter().enumerate() {
        let mut curve = Vec::new();
        for k in 0..=steps {
            let t = low * (high / low).powf(k as f64 / steps as f64);
            let scaled: Vec<f64> = {
                let n = positive.len();
                let mut v: Vec<f64> = (0..n).map(|i| t / span * span.powf(if n > 1 { i as f64 / (n - 1) as f64 } else { 1.0 })).collect();
                if values.contains(&0.0) {
                    v.insert(0, 0.0);
                }
                v
            };
            let trial = if on_inhibitor { Grid { first: grid.first.clone(), second: scaled } } else { Grid { first: scaled, second: grid.second.clone() } };
            if let Some(r) = predicted_relative(setup, &trial, j, measure) {
                curve.push((t, 100.0 * r));
            }
        }
        series.push(Series { label: name.clone(), points: Vec::new(), curve, dashed: false });
    }
    let unit = if on_inhibitor || setup.input == ModelInput::Inhibitor { &request.inhibitor_unit } else { &request.substrate_unit };
    let axis = if on_inhibitor || setup.input == ModelInput::Inhibitor { "[I]" } else { "[S]" };
    let unit_text = unit.as_deref().map(str::trim).filter(|u| !u.is_empty()).map(|u| format!(" ({u})")).unwrap_or_default();
    let mut segments = Vec::new();
    let mut note = format!(
        "Predicted from the Fisher information at the guessed constants: the {} concentrations keep their ratios ({}-fold from lowest to highest non-zero) as the highest moves; {} replicate(s).",
        positive.len(),
        number(span),
        setup.replicates
    );
    if let Some((t, _)) = target {
        segments.push(((low, 100.0 * t.relative), (high, 100.0 * t.relative)));
        note.push_str(&format!(" The horizontal line is the target for {} ({}%).", t.parameter, number(100.0 * t.relative)));
    }
    let mut marks = vec![Mark { x: top, label: format!("recommended {}", number(top)) }];
    if let Some(l) = limit {
        if l > top * 1.01 || l < top * 0.99 {
            marks.push(Mark { x: l, label: "highest usable".to_string() });
        }
    }
    PlotData {
        kind: PlotKind::DesignPrecision,
        title: format!("Predicted precision against the highest {axis}"),
        x_label: format!("highest {axis}{unit_text}"),
        y_label: format!("predicted relative {} (%)", if measure == TargetMeasure::Ci { "95% interval half-width" } else { "standard error" }),
        points: Vec::new(),
        curve: Vec::new(),
        zero_line: false,
        segments,
        spots: Vec::new(),
        note,
        series,
        log_x: true,
        marks,
        band: None,
    }
}

/// Plans an experiment: see the module documentation.
pub fn design(request: &DesignRequest) -> Result<DesignResult, Error> {
    let setup = setup(request)?;
    if request.points < 2 || request.points > 48 {
        return Err(Error::invalid_option("the number of concentrations (points) must be between 2 and 48"));
    }
    if setup.predictors() == 2 && !(2..=16).contains(&request.inhibitor_points) {
        return Err(Error::invalid_option("the number of inhibitor concentrations (zero included) must be between 2 and 16"));
    }
    let target = match &request.target {
        Some(t) => {
            let j = setup.index(&t.parameter).ok_or_else(|| {
                Error::invalid_option(format!("the target '{}' is not a constant of {}; its constants are {}", t.parameter, request.model.trim(), setup.names.join(", ")))
            })?;
            if !(t.relative > 0.0 && t.relative < 10.0) {
                return Err(Error::invalid_option(format!("the target precision must be a fraction between 0 and 10 (0.1 for 10%), found {}", t.relative)));
            }
            Some((Target { parameter: setup.names[j].clone(), relative: t.relative, measure: t.measure }, j))
        }
        None => None,
    };
    let target_ref = target.as_ref().map(|(t, j)| (t, *j));
    let mut warnings = Vec::new();
    let mut notes = Vec::new();
    let (grid, rules) = recommend(&setup, request, &mut warnings)?;
    check_grid(&setup, &grid, "the recommended design")?;
    let wells = grid.conditions(setup.predictors()) * setup.replicates;
    if let Some(limit) = request.wells {
        if wells > limit {
            return Err(Error::invalid_option(format!(
                "the design needs {wells} wells ({} condition(s) × {} replicate(s)) and the limit is {limit}; use fewer points or replicates",
                grid.conditions(setup.predictors()),
                setup.replicates
            )));
        }
    }
    let proposed_grid = match &request.proposed {
        Some(own) if !own.concentrations.is_empty() => {
            let mut first = own.concentrations.clone();
            first.sort_by(f64::total_cmp);
            let mut second = if own.inhibitor_concentrations.is_empty() { grid.second.clone() } else { own.inhibitor_concentrations.clone() };
            second.sort_by(f64::total_cmp);
            if setup.predictors() == 1 && !own.inhibitor_concentrations.is_empty() {
                return Err(Error::invalid_option(format!("{} reads one concentration per well; the inhibitor concentrations of the proposed design do not apply", request.model.trim())));
            }
            let g = Grid { first, second: if setup.predictors() == 2 { second } else { Vec::new() } };
            check_grid(&setup, &g, "the proposed design")?;
            let own_wells = g.conditions(setup.predictors()) * setup.replicates;
            if let Some(limit) = request.wells.filter(|limit| own_wells > *limit) {
                warnings.push(format!("The proposed design needs {own_wells} wells, more than the limit of {limit}."));
            }
            if let Some(max) = request.max_concentration.filter(|m| g.first.iter().any(|c| c > m)) {
                warnings.push(format!("The proposed design goes above the highest usable concentration ({}).", number(max)));
            }
            Some(g)
        }
        _ => None,
    };
    let recommended = evaluate(&setup, &grid, request, target_ref);
    let proposed = proposed_grid.as_ref().map(|g| evaluate(&setup, g, request, target_ref));
    for evaluation in std::iter::once(&recommended).chain(proposed.as_ref()) {
        let which = if std::ptr::eq(evaluation, &recommended) { "recommended" } else { "proposed" };
        if let Some(s) = &evaluation.simulated {
            if s.failed_fraction > 0.05 {
                warnings.push(format!(
                    "In {:.0}% of the simulated experiments with the {which} design the fit failed (no convergence, a constant not determined, or no standard error): the design does not pin the constants down.",
                    100.0 * s.failed_fraction
                ));
            }
            for (pred, sim) in evaluation.predicted.iter().zip(&s.parameters) {
                if let (Some(a), Some(b)) = (pred.std_error, sim.std_error) {
                    if (b / a - 1.0).abs() > 0.25 && s.n_simulations >= 100 {
                        notes.push(format!(
                            "{which} design: the simulated spread of {} ({}) differs from the prediction ({}) by more than 25%; the linear approximation behind the prediction is poor here, so trust the simulation.",
                            pred.name,
                            number(b),
                            number(a)
                        ));
                    }
                }
            }
        }
    }
    if let Some((t, j)) = &target {
        if let Some(r) = predicted_relative(&setup, &grid, *j, t.measure) {
            if r > t.relative {
                // The covariance scales as 1/replicates for a fixed grid.
                let needed = (setup.replicates as f64 * (r / t.relative).powi(2)).ceil();
                warnings.push(format!(
                    "The recommended design is predicted to give {} to ±{:.1}%, short of the target ±{:.1}%: about {needed} replicates of each condition would reach it (the error falls as 1/√replicates), or improve the assay's precision.",
                    t.parameter,
                    100.0 * r,
                    100.0 * t.relative
                ));
            }
        }
    }
    notes.push(format!(
        "Simulated rates: the model at the guessed constants plus normal noise ({}); fitted with {} and asymptotic 95% intervals, as the rate and inhibition analyses do by default.",
        match setup.noise.kind {
            NoiseKind::Constant => format!("standard deviation {} in rate units", number(setup.noise.level)),
            NoiseKind::Proportional => format!("standard deviation {}% of the rate", number(100.0 * setup.noise.level)),
        },
        setup.noise.weighting().describe()
    ));
    if setup.ranges.iter().any(Option::is_some) {
        notes.push("Over the ranges, each constant with a range is drawn log-uniformly between its ends (uniformly when the range reaches zero or below); the others stay at their guesses.".to_string());
    }
    let plots = vec![sweep(&setup, &grid, request, target_ref)];
    let plate = bench::plate_map(
        &grid.first,
        &grid.second,
        setup.predictors() == 2,
        setup.input == ModelInput::Inhibitor,
        setup.replicates,
        &request.substrate_unit,
        &request.inhibitor_unit,
    );
    let plate_map = match plate {
        Ok(p) => Some(p),
        Err(message) => {
            notes.push(message);
            None
        }
    };
    let pipetting = match (&request.bench, &plate_map) {
        (Some(b), Some(map)) => Some(bench::pipetting_table(b, map)?),
        (Some(_), None) => None,
        _ => None,
    };
    Ok(DesignResult {
        model: setup.model.name().to_string(),
        equation: setup.model.equation().to_string(),
        varied: if setup.input == ModelInput::Inhibitor { "inhibitor" } else { "substrate" }.to_string(),
        units: DesignUnits { substrate: request.substrate_unit.clone(), inhibitor: request.inhibitor_unit.clone(), rate: request.rate_unit.clone() },
        replicates: setup.replicates,
        recommended,
        rules,
        proposed,
        target: target.map(|(t, _)| t),
        n_simulations: request.simulations,
        seed: request.seed,
        plots,
        plate_map,
        pipetting,
        warnings,
        notes,
        caution: DESIGN_CAUTION.to_string(),
    })
}
