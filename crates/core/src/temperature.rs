//! Rates and rate constants against temperature: the Arrhenius and Eyring
//! equations fitted directly to k on its own scale.
//!
//! ```text
//! Arrhenius  k = A·exp(−Ea/(R·T))
//! Eyring     k = (kB·T/h)·exp(ΔS‡/R)·exp(−ΔH‡/(R·T))     (transmission coefficient 1)
//! ```
//!
//! **Parameterised for conditioning.** Fitted as written, A and Ea (or ΔS‡
//! and ΔH‡) are correlated almost perfectly, because the data sit far from
//! 1/T = 0, where A is defined. The fits therefore use values at a
//! reference temperature Tref inside the data, the harmonic mean of the
//! temperatures used (the centre of the 1/T axis):
//!
//! ```text
//! Arrhenius  ln k = ln k(Tref) − (Ea/R)·(1/T − 1/Tref)
//! Eyring     ln k = ln(kB·T/h) − ΔG‡(Tref)/(R·Tref) − (ΔH‡/R)·(1/T − 1/Tref)
//! ```
//!
//! (fitted as k = exp(...), so the residuals are on the rate scale). The
//! constants asked for are exact functions of these: ln A = ln k(Tref) +
//! Ea/(R·Tref); ΔS‡ = (ΔH‡ − ΔG‡(Tref))/Tref; ΔG‡(T) = ΔH‡ − T·ΔS‡ at the
//! chosen temperature (default 298.15 K); k at that temperature from the
//! Arrhenius fit. Their standard errors come from the full covariance by
//! the delta method (exact for the linear ones: ln A, ΔS‡, ΔG‡), intervals
//! ± t·SE (for A and k, exp of the interval of their logarithm). Ea and
//! ΔH‡ are in kJ/mol, ΔS‡ in J/(mol·K), ΔG‡ in kJ/mol.
//!
//! **Weighting.** Relative (1/k² from the fitted curve) by default: rate
//! constants across a temperature series span a decade or more and their
//! errors are roughly proportional, the assumption an Arrhenius plot
//! makes when it draws ln k with equal error bars (common practice, no
//! source). Uniform, Poisson and sd weights are available.
//!
//! **Units.** The temperature heading must carry its unit (°C or K): a
//! temperature without one is refused, never guessed. Eyring's equation
//! gives a first-order rate constant in s⁻¹, so k in min⁻¹ or h⁻¹ is
//! converted to s⁻¹ (with a note); with any other unit (a rate in µM/min,
//! a second-order constant in M⁻¹ s⁻¹) or none, the Eyring fit is not made
//! and a warning says why; the Arrhenius fit is made in the table's unit.
//!
//! **Curvature.** The Arrhenius fit is tested against one with a quadratic
//! term in 1/T (`ln k = ... + c·u²`, u = Tref/T − 1), with both fits on the
//! same weights, by the extra-sum-of-squares F test at p < 0.05. A curved
//! Arrhenius plot means one Ea does not describe the data: a change of the
//! rate-limiting step with temperature, a heat capacity of activation, or
//! loss of active enzyme (denaturation) at the high temperatures.
//!
//! **Constants** (CODATA 2018, E. Tiesinga et al., Rev. Mod. Phys. 93,
//! 025010 (2021); exact in the SI since 20 May 2019; values from memory,
//! checked in the tests against the defining numbers): the Boltzmann
//! constant kB = 1.380649×10⁻²³ J/K, the Planck constant h =
//! 6.62607015×10⁻³⁴ J·s, the Avogadro constant NA = 6.02214076×10²³ /mol,
//! and R = NA·kB = 8.314462618... J/(mol·K).

use crate::compare::{f_test, FTest, SIGNIFICANCE};
use crate::error::Error;
use crate::fit::{estimate, fit_model, fit_weighted, Fit, FitSettings, FitSummary, ParameterEstimate};
use crate::intervals::{apply_interval_method, apply_profile_intervals, BootstrapSettings, IntervalMethod};
use crate::model::{Dimension, Model, Observations, ParameterSpec};
use crate::plots::{PlotData, PlotKind, PlotPoint, Series};
use crate::rates::CAUTION;
use crate::read::columns::{is_rate_constant_name, is_temperature_name};
use crate::read::profile::{read_profile, ProfileRoles};
use crate::sets::{p_text, short};
use crate::solver::Termination;
use crate::table::{read_quantity, shortage_reasons, InputProblem};
use crate::weighting::Weighting;
use serde::{Deserialize, Serialize};

/// The Boltzmann constant, J/K (CODATA 2018, exact).
pub const BOLTZMANN: f64 = 1.380649e-23;
/// The Planck constant, J·s (CODATA 2018, exact).
pub const PLANCK: f64 = 6.62607015e-34;
/// The Avogadro constant, 1/mol (CODATA 2018, exact).
pub const AVOGADRO: f64 = 6.02214076e23;
/// The molar gas constant R = NA·kB, J/(mol·K) (exact by definition; the
/// product rounded once to a double).
pub const GAS_CONSTANT: f64 = AVOGADRO * BOLTZMANN;
/// 0 °C in kelvin (exact by the definition of the Celsius scale).
pub const ZERO_CELSIUS: f64 = 273.15;
/// The default temperature for ΔG‡ and k: 25 °C.
pub const DEFAULT_AT: f64 = 298.15;

/// What to analyse.
#[derive(Clone, Debug, PartialEq, Deserialize)]
#[serde(default)]
pub struct TemperatureRequest {
    /// The table: a temperature column with its unit in the heading
    /// (`T (°C)`, `temperature (K)`) and a value column (`k`, `kcat`,
    /// `kobs`, `v`, ...; unit in the heading), optionally an `sd` column.
    pub text: String,
    /// The heading of the value column, when the table has several.
    pub column: Option<String>,
    /// The temperature for ΔG‡ and k, with its unit (`25 °C`, `298.15 K`,
    /// `37C`); default 298.15 K.
    pub at: Option<String>,
    /// How the values are weighted. Default `relative`.
    pub weighting: Weighting,
    /// How the fitted parameters' intervals are computed. Default
    /// `profile`; derived constants use the delta method.
    pub interval_method: IntervalMethod,
    /// Bootstrap settings, used when `interval_method` is bootstrap.
    pub bootstrap: BootstrapSettings,
    /// Input lines to leave out of the fits.
    pub excluded_lines: Vec<usize>,
}

impl Default for TemperatureRequest {
    fn default() -> Self {
        TemperatureRequest {
            text: String::new(),
            column: None,
            at: None,
            weighting: Weighting::Relative,
            interval_method: IntervalMethod::Profile,
            bootstrap: BootstrapSettings::default(),
            excluded_lines: Vec::new(),
        }
    }
}

/// A temperature scale.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum TemperatureUnit {
    /// Degrees Celsius.
    Celsius,
    /// Kelvin.
    Kelvin,
}

impl TemperatureUnit {
    /// Reads `°C`, `C`, `degC`, `℃`, `celsius`, `K`, `kelvin`.
    pub fn parse(text: &str) -> Result<Self, String> {
        let t: String = text.trim().chars().filter(|c| !c.is_whitespace()).collect::<String>().to_lowercase();
        match t.as_str() {
            "°c" | "c" | "degc" | "deg.c" | "℃" | "celsius" | "degreescelsius" | "ºc" => Ok(TemperatureUnit::Celsius),
            "k" | "kelvin" => Ok(TemperatureUnit::Kelvin),
            "°f" | "f" | "fahrenheit" => Err("temperatures in °F are not read; give them in °C or K".into()),
            _ => Err(format!("'{}' is not a temperature unit; expected °C or K", text.trim())),
        }
    }

    /// In kelvin.
    pub fn to_kelvin(self, value: f64) -> f64 {
        match self {
            TemperatureUnit::Celsius => value + ZERO_CELSIUS,
            TemperatureUnit::Kelvin => value,
        }
    }

    /// The symbol used in output.
    pub fn symbol(self) -> &'static str {
        match self {
            TemperatureUnit::Celsius => "°C",
            TemperatureUnit::Kelvin => "K",
        }
    }
}

/// Seconds in the time unit of a first-order rate constant's unit (`s-1`,
/// `1/s`, `/min`, `h⁻¹`, `per s`, ...), or `None` when the unit is not a
/// reciprocal time.
pub fn first_order_seconds(unit: &str) -> Option<f64> {
    let t: String = unit.replace("⁻¹", "-1").replace("^-1", "-1").chars().filter(|c| !c.is_whitespace()).collect::<String>().to_lowercase();
    let time = t
        .strip_suffix("-1")
        .or_else(|| t.strip_prefix("1/"))
        .or_else(|| t.strip_prefix('/'))
        .or_else(|| t.strip_prefix("per"))?;
    match time {
        "s" | "sec" | "second" => Some(1.0),
        "min" | "minute" => Some(60.0),
        "h" | "hr" | "hour" => Some(3600.0),
        _ => None,
    }
}

/// Which temperature law, and the reference temperature of its
/// parameterisation (K).
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum TemperatureModel {
    /// Parameters `ln k(Tref)`, `Ea` (kJ/mol).
    Arrhenius {
        /// Tref, K.
        reference: f64,
    },
    /// Arrhenius with a quadratic term in 1/T: parameters `ln k(Tref)`,
    /// `Ea` (kJ/mol, the slope at Tref), `c` (the coefficient of u², u =
    /// Tref/T − 1).
    CurvedArrhenius {
        /// Tref, K.
        reference: f64,
    },
    /// Parameters `ΔH‡`, `ΔG‡(Tref)` (both kJ/mol); k in s⁻¹.
    Eyring {
        /// Tref, K.
        reference: f64,
    },
}

const ARRHENIUS: [ParameterSpec; 2] = [
    ParameterSpec { name: "ln k(Tref)", dimension: Dimension::Unspecified },
    ParameterSpec { name: "Ea", dimension: Dimension::Unspecified },
];
const CURVED: [ParameterSpec; 3] = [
    ParameterSpec { name: "ln k(Tref)", dimension: Dimension::Unspecified },
    ParameterSpec { name: "Ea", dimension: Dimension::Unspecified },
    ParameterSpec { name: "c", dimension: Dimension::Dimensionless },
];
const EYRING: [ParameterSpec; 2] = [
    ParameterSpec { name: "ΔH‡", dimension: Dimension::Unspecified },
    ParameterSpec { name: "ΔG‡(Tref)", dimension: Dimension::Unspecified },
];

/// J per kJ: the energies are fitted in kJ/mol for scaling.
const KILO: f64 = 1000.0;

impl TemperatureModel {
    fn reference(self) -> f64 {
        match self {
            TemperatureModel::Arrhenius { reference }
            | TemperatureModel::CurvedArrhenius { reference }
            | TemperatureModel::Eyring { reference } => reference,
        }
    }

    /// ln k at temperature `t` (K).
    pub fn ln_k(self, t: f64, p: &[f64]) -> f64 {
        let r = self.reference();
        let x = 1.0 / t - 1.0 / r;
        match self {
            TemperatureModel::Arrhenius { .. } => p[0] - KILO * p[1] / GAS_CONSTANT * x,
            TemperatureModel::CurvedArrhenius { .. } => {
                let u = r * x;
                p[0] - KILO * p[1] / GAS_CONSTANT * x + p[2] * u * u
            }
            TemperatureModel::Eyring { .. } => {
                (BOLTZMANN * t / PLANCK).ln() - KILO * p[1] / (GAS_CONSTANT * r) - KILO * p[0] / GAS_CONSTANT * x
            }
        }
    }

    /// Starting values from a weighted straight line of ln k (or ln(k/T))
    /// on 1/T − 1/Tref through the positive values.
    fn line_start(self, data: &Observations) -> Result<Vec<f64>, Error> {
        let r = self.reference();
        let (mut sw, mut sx, mut sy, mut sxx, mut sxy) = (0.0, 0.0, 0.0, 0.0, 0.0);
        let mut count = 0;
        for i in 0..data.len() {
            let (t, k) = (data.x(i)[0], data.y()[i]);
            if k <= 0.0 {
                continue;
            }
            let y = match self {
                TemperatureModel::Eyring { .. } => (k * PLANCK / (BOLTZMANN * t)).ln(),
                _ => k.ln(),
            };
            // Weights for ln k: a relative weight 1/k² on k is a weight of
            // about 1 on ln k; use k²·w (the delta method) to stay close.
            let w = data.weights()[i] * k * k;
            let x = 1.0 / t - 1.0 / r;
            sw += w;
            sx += w * x;
            sy += w * y;
            sxx += w * x * x;
            sxy += w * x * y;
            count += 1;
        }
        let det = sw * sxx - sx * sx;
        if count < 2 || det.is_nan() || det <= 0.0 {
            return Err(Error::invalid_data("the starting line needs positive values at two or more temperatures"));
        }
        let slope = (sw * sxy - sx * sy) / det;
        let intercept = (sy - slope * sx) / sw;
        let energy = -slope * GAS_CONSTANT / KILO;
        Ok(match self {
            TemperatureModel::Arrhenius { .. } => vec![intercept, energy],
            TemperatureModel::CurvedArrhenius { .. } => vec![intercept, energy, 0.0],
            // intercept = ln(h/kB) + ln k(r) − ln r = −ΔG‡(r)/(R·r).
            TemperatureModel::Eyring { .. } => vec![energy, -intercept * GAS_CONSTANT * r / KILO],
        })
    }
}

impl Model for TemperatureModel {
    fn name(&self) -> &str {
        match self {
            TemperatureModel::Arrhenius { .. } => "arrhenius",
            TemperatureModel::CurvedArrhenius { .. } => "arrhenius-quadratic",
            TemperatureModel::Eyring { .. } => "eyring",
        }
    }
    fn equation(&self) -> &str {
        match self {
            TemperatureModel::Arrhenius { .. } => "k = exp(ln k(Tref) − (Ea/R)·(1/T − 1/Tref))",
            TemperatureModel::CurvedArrhenius { .. } => "k = exp(ln k(Tref) − (Ea/R)·(1/T − 1/Tref) + c·(Tref/T − 1)²)",
            TemperatureModel::Eyring { .. } => "k = (kB·T/h)·exp(−ΔG‡(Tref)/(R·Tref) − (ΔH‡/R)·(1/T − 1/Tref))",
        }
    }
    fn parameters(&self) -> &[ParameterSpec] {
        match self {
            TemperatureModel::Arrhenius { .. } => &ARRHENIUS,
            TemperatureModel::CurvedArrhenius { .. } => &CURVED,
            TemperatureModel::Eyring { .. } => &EYRING,
        }
    }
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        self.ln_k(x[0], p).exp()
    }
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let t = x[0];
        let r = self.reference();
        let k = self.value(x, p);
        let d = 1.0 / t - 1.0 / r;
        match self {
            TemperatureModel::Arrhenius { .. } => {
                gradient[0] = k;
                gradient[1] = -k * KILO / GAS_CONSTANT * d;
            }
            TemperatureModel::CurvedArrhenius { .. } => {
                gradient[0] = k;
                gradient[1] = -k * KILO / GAS_CONSTANT * d;
                gradient[2] = k * (r * d) * (r * d);
            }
            TemperatureModel::Eyring { .. } => {
                gradient[0] = -k * KILO / GAS_CONSTANT * d;
                gradient[1] = -k * KILO / (GAS_CONSTANT * r);
            }
        }
    }
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        self.line_start(data)
    }
    fn positive(&self, _: usize) -> bool {
        false
    }
}

/// One point of the series.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TemperaturePoint {
    /// Index in the point list (the `row` of the plots' points).
    pub row: usize,
    /// Input line.
    pub line: usize,
    /// The temperature as written, in the table's unit.
    pub temperature: f64,
    /// The same in kelvin.
    pub kelvin: f64,
    /// The value as written.
    pub value: f64,
    /// The value in the unit fitted (`fitted_unit`: s⁻¹ when converted).
    pub k: f64,
    /// Whether it was left out.
    pub excluded: bool,
    /// The Arrhenius fit at this temperature, in the unit fitted.
    pub fitted: f64,
}

/// The test of a quadratic term in 1/T.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct CurvatureTest {
    /// The F test of the straight Arrhenius fit against the curved one,
    /// both on the curved fit's weights.
    pub f_test: FTest,
    /// The coefficient c of (Tref/T − 1)² in ln k.
    pub quadratic: f64,
    /// Its standard error.
    pub quadratic_se: Option<f64>,
    /// Whether the plot curves (p < 0.05).
    pub curved: bool,
    /// The finding in words.
    pub text: String,
}

/// Everything the analysis found.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TemperatureAnalysis {
    /// The value column's name.
    pub value_name: String,
    /// Its unit as written, when the heading gives one.
    pub value_unit: Option<String>,
    /// The unit of k in the fits (`s-1` when a first-order unit was
    /// converted, else the table's unit).
    pub fitted_unit: Option<String>,
    /// The temperature unit of the table (`°C` or `K`).
    pub temperature_unit: String,
    /// Tref of the parameterisation, K: the harmonic mean of the
    /// temperatures used.
    pub reference_temperature: f64,
    /// The temperature of ΔG‡ and k, K.
    pub at: f64,
    /// Every point read.
    pub points: Vec<TemperaturePoint>,
    /// The Arrhenius fit: `ln k(Tref)`, `Ea` (kJ/mol), then derived `ln A`,
    /// `A`, `k at ...`.
    pub arrhenius: FitSummary,
    /// The Eyring fit (k in s⁻¹ only): `ΔH‡`, `ΔG‡(Tref)` (kJ/mol), then
    /// derived `ΔS‡` (J/(mol·K)) and `ΔG‡` at `at` (kJ/mol).
    pub eyring: Option<FitSummary>,
    /// The curvature test, when there are enough temperatures.
    pub curvature: Option<CurvatureTest>,
    /// Problems in the input.
    pub problems: Vec<InputProblem>,
    /// How the table was read and converted.
    pub notes: Vec<String>,
    /// Warnings for people.
    pub warnings: Vec<String>,
    /// `temperature-direct`, `arrhenius` and (with the Eyring fit) `eyring`.
    pub plots: Vec<PlotData>,
    /// The caution every result carries.
    pub caution: String,
}

/// Reads a temperature with its unit, such as `25 °C` or `298.15 K`, to
/// kelvin.
pub fn read_temperature(text: &str) -> Result<f64, String> {
    let (value, unit) = read_quantity(text).map_err(|m| format!("'{}': {m}", text.trim()))?;
    let unit = unit.ok_or_else(|| format!("'{}' has no unit; write it as 25 °C or 298.15 K", text.trim()))?;
    let kelvin = TemperatureUnit::parse(&unit)?.to_kelvin(value);
    if !(kelvin > 0.0 && kelvin.is_finite()) {
        return Err(format!("'{}' is at or below absolute zero", text.trim()));
    }
    Ok(kelvin)
}

/// Reads the series and fits it; see the module documentation.
pub fn analyse_temperature(request: &TemperatureRequest) -> Result<TemperatureAnalysis, Error> {
    let at = match &request.at {
        Some(text) => read_temperature(text).map_err(|m| Error::invalid_option(format!("the temperature for ΔG‡: {m}")))?,
        None => DEFAULT_AT,
    };
    let roles = ProfileRoles {
        is_condition: &is_temperature_name,
        is_value: &is_rate_constant_name,
        condition: "temperature",
        value: "rate or rate constant",
    };
    let read = read_profile(&request.text, &roles, request.column.as_deref())?;
    let mut problems = read.problems;
    let mut notes = read.notes;
    let mut warnings = Vec::new();
    let heading = read.columns.condition_heading.as_ref().ok_or_else(|| {
        Error::invalid_data("the table needs a header naming the temperature with its unit, such as 'T (°C)' or 'temperature (K)'; a temperature without a unit is never guessed")
    })?;
    let place = format!("line {}, column {}", read.columns.header_line.unwrap_or(1), read.columns.condition + 1);
    let unit_text = heading.unit.as_deref().ok_or_else(|| {
        Error::invalid_data(format!(
            "{place}: the temperature heading '{}' has no unit; write '{} (°C)' or '{} (K)' (a temperature without a unit is never guessed)",
            heading.name, heading.name, heading.name
        ))
    })?;
    let unit = TemperatureUnit::parse(unit_text).map_err(|m| Error::invalid_data(format!("{place}: {m}")))?;
    if request.weighting == Weighting::Sd && read.columns.sd.is_none() {
        return Err(Error::invalid_option("weighting by sd needs an sd column; the table has none"));
    }
    let value_name = read.columns.value_heading.as_ref().map_or("k".to_string(), |h| h.name.clone());
    let value_unit = read.columns.value_heading.as_ref().and_then(|h| h.unit.clone());
    let seconds = value_unit.as_deref().and_then(first_order_seconds);
    let (scale, fitted_unit) = match (seconds, &value_unit) {
        (Some(s), Some(u)) => {
            if s != 1.0 {
                notes.push(format!("{value_name} is converted from {u} to s-1 (divided by {s}) for the fits: Eyring's equation gives k in s-1."));
            }
            (1.0 / s, Some("s-1".to_string()))
        }
        _ => (1.0, value_unit.clone()),
    };
    let eyring_refusal = match (seconds, &value_unit) {
        (Some(_), _) => None,
        (None, Some(u)) => Some(format!(
            "{value_name} is in {u}, not a first-order rate constant (s-1, min-1 or h-1): Eyring's equation gives a first-order constant in s-1, so no Eyring fit is made (ΔH‡, ΔS‡, ΔG‡ would need a standard state this table does not state). The Arrhenius fit is in {u}."
        )),
        (None, None) => Some(format!(
            "{value_name} has no unit in its heading: Eyring's equation needs a first-order rate constant in s-1 (or min-1, h-1, converted), so no Eyring fit is made. Write the unit, such as '{value_name} (s-1)'."
        )),
    };
    let mut points = Vec::new();
    let mut weights = Vec::new();
    for row in &read.rows {
        let kelvin = unit.to_kelvin(row.condition);
        if kelvin.is_nan() || kelvin <= 0.0 {
            problems.push(InputProblem {
                line: row.line,
                column: Some(read.columns.condition + 1),
                message: format!("{} {} is at or below absolute zero; the row was left out", row.condition, unit.symbol()),
            });
            continue;
        }
        let excluded = request.excluded_lines.contains(&row.line);
        let k = row.value * scale;
        if !excluded {
            match request.weighting.weight(k, row.sd.map(|s| s * scale)) {
                Ok(w) => weights.push(w),
                Err(message) => {
                    let column = if request.weighting == Weighting::Sd { read.columns.sd } else { Some(read.columns.value) };
                    problems.push(InputProblem { line: row.line, column: column.map(|c| c + 1), message: format!("{message}; the row was left out") });
                    continue;
                }
            }
        }
        points.push(TemperaturePoint {
            row: points.len(),
            line: row.line,
            temperature: row.condition,
            kelvin,
            value: row.value,
            k,
            excluded,
            fitted: f64::NAN,
        });
    }
    problems.sort_by_key(|p| (p.line, p.column));
    let used: Vec<TemperaturePoint> = points.iter().filter(|p| !p.excluded).cloned().collect();
    if used.len() < 3 {
        return Err(Error::invalid_data(format!(
            "only {} usable point(s); two constants need at least 3 to have an uncertainty{}",
            used.len(),
            shortage_reasons(&problems, points.iter().filter(|p| p.excluded).count(), 10)
        )));
    }
    let kelvins: Vec<f64> = used.iter().map(|p| p.kelvin).collect();
    let mut distinct = kelvins.clone();
    distinct.sort_by(f64::total_cmp);
    distinct.dedup();
    if distinct.len() < 2 {
        return Err(Error::invalid_data("every value was measured at one temperature; a temperature dependence needs two or more"));
    }
    let reference = kelvins.len() as f64 / kelvins.iter().map(|t| 1.0 / t).sum::<f64>();
    let (low, high) = (distinct[0], distinct[distinct.len() - 1]);
    if at < low - 5.0 || at > high + 5.0 {
        warnings.push(format!(
            "ΔG‡ and k are reported at {} K, more than 5 K outside the measured range ({} to {} K): an extrapolation.",
            short(at),
            short(low),
            short(high)
        ));
    }
    let data = Observations::new(1, kelvins.clone(), used.iter().map(|p| p.k).collect(), Some(weights))?;
    let settings = FitSettings::default();
    let fitted_label = fitted_unit.clone();

    // Arrhenius.
    let arrhenius_model = TemperatureModel::Arrhenius { reference };
    let (arrhenius_fit, arrhenius_data) = fit_weighted(&arrhenius_model, &data, request.weighting, None, &settings)?;
    let mut arrhenius = finish(&arrhenius_model, &arrhenius_fit, &arrhenius_data, request, &mut warnings)?;
    arrhenius.parameters[0].unit = fitted_label.as_ref().map(|u| format!("ln({u})"));
    arrhenius.parameters[1].unit = Some("kJ/mol".into());
    let a = arrhenius_fit.values().to_vec();
    let t_q = arrhenius_fit.t_quantile;
    let cov = arrhenius_fit.covariance.as_ref();
    let linear = |g: [f64; 2], c: Option<&nalgebra::DMatrix<f64>>| -> Option<f64> {
        let c = c?;
        let v = g[0] * g[0] * c[(0, 0)] + 2.0 * g[0] * g[1] * c[(0, 1)] + g[1] * g[1] * c[(1, 1)];
        (v >= 0.0 && v.is_finite()).then(|| v.sqrt())
    };
    let at_label = temperature_text(at, unit);
    {
        let g = [1.0, KILO / (GAS_CONSTANT * reference)];
        let ln_a = a[0] + a[1] * g[1];
        let se = linear(g, cov);
        arrhenius.parameters.push(derived(estimate("ln A", ln_a, se, t_q), fitted_label.as_ref().map(|u| format!("ln({u})"))));
        arrhenius.parameters.push(exp_of("A", ln_a, se, t_q, fitted_label.clone()));
        let x = 1.0 / at - 1.0 / reference;
        let g = [1.0, -KILO / GAS_CONSTANT * x];
        let ln_k = arrhenius_model.ln_k(at, &a);
        arrhenius.parameters.push(exp_of(&format!("k at {at_label}"), ln_k, linear(g, cov), t_q, fitted_label.clone()));
    }
    for p in &mut points {
        p.fitted = arrhenius_model.value(&[p.kelvin], &a);
    }

    // Eyring.
    let mut eyring_parts = None;
    let eyring = match &eyring_refusal {
        Some(why) => {
            warnings.push(why.clone());
            None
        }
        None => {
            let model = TemperatureModel::Eyring { reference };
            let (fit, fit_data) = fit_weighted(&model, &data, request.weighting, None, &settings)?;
            let mut summary = finish(&model, &fit, &fit_data, request, &mut warnings)?;
            summary.parameters[0].unit = Some("kJ/mol".into());
            summary.parameters[1].unit = Some("kJ/mol".into());
            let e = fit.values().to_vec();
            let c = fit.covariance.as_ref();
            let g = [KILO / reference, -KILO / reference];
            summary.parameters.push(derived(
                estimate("ΔS‡", g[0] * e[0] + g[1] * e[1], linear(g, c), fit.t_quantile),
                Some("J/(mol·K)".into()),
            ));
            let g = [1.0 - at / reference, at / reference];
            summary.parameters.push(derived(
                estimate(&format!("ΔG‡ at {at_label}"), g[0] * e[0] + g[1] * e[1], linear(g, c), fit.t_quantile),
                Some("kJ/mol".into()),
            ));
            eyring_parts = Some((model, e));
            Some(summary)
        }
    };

    // Curvature.
    let mut curved_parts = None;
    let curvature = if used.len() >= 4 && distinct.len() >= 3 {
        let model = TemperatureModel::CurvedArrhenius { reference };
        let mut start = a.clone();
        start.push(0.0);
        match fit_weighted(&model, &data, request.weighting, Some(&start), &settings) {
            Ok((curved, curved_data)) => {
                let straight = fit_model(&arrhenius_model, &curved_data, Some(&a), &settings)?;
                match f_test(&straight.summary, &curved.summary) {
                    Some(test) if curved.summary.converged && straight.summary.converged => {
                        let is_curved = test.p_value < SIGNIFICANCE;
                        let c = curved.values()[2];
                        let text = if is_curved {
                            format!(
                                "The Arrhenius plot curves: a quadratic term in 1/T improves the fit (F({}, {}) = {}, {}). One Ea does not describe these data; curvature suggests a change of the rate-limiting step with temperature, or loss of active enzyme (denaturation) at the higher temperatures. Report Ea over a narrower range, or model the process.",
                                test.df_extra,
                                test.df_general,
                                short(test.f),
                                p_text(test.p_value)
                            )
                        } else {
                            format!(
                                "No curvature detected in the Arrhenius plot (quadratic term in 1/T: F({}, {}) = {}, {}).",
                                test.df_extra,
                                test.df_general,
                                short(test.f),
                                p_text(test.p_value)
                            )
                        };
                        if is_curved {
                            warnings.push(text.clone());
                        } else {
                            notes.push(text.clone());
                        }
                        curved_parts = Some(curved.values().to_vec());
                        Some(CurvatureTest { f_test: test, quadratic: c, quadratic_se: curved.summary.parameters[2].std_error, curved: is_curved, text })
                    }
                    _ => {
                        notes.push("The curvature test could not be made: a fit with a quadratic term in 1/T did not converge.".into());
                        None
                    }
                }
            }
            Err(e) => {
                notes.push(format!("The curvature test could not be made: {}", e.message));
                None
            }
        }
    } else {
        notes.push(format!(
            "Curvature of the Arrhenius plot is not tested: that needs at least 4 points at 3 or more temperatures ({} points, {} temperatures).",
            used.len(),
            distinct.len()
        ));
        None
    };

    let plots = temperature_plots(
        &points,
        unit,
        reference,
        &value_name,
        fitted_unit.as_deref(),
        &a,
        curved_parts.as_deref(),
        eyring_parts.as_ref().map(|(m, e)| (*m, e.as_slice())),
        &mut notes,
    );
    Ok(TemperatureAnalysis {
        value_name,
        value_unit,
        fitted_unit,
        temperature_unit: unit.symbol().to_string(),
        reference_temperature: reference,
        at,
        points,
        arrhenius,
        eyring,
        curvature,
        problems,
        notes,
        warnings,
        plots,
        caution: CAUTION.to_string(),
    })
}

/// `25 °C` or `298.15 K`, in the table's scale.
fn temperature_text(kelvin: f64, unit: TemperatureUnit) -> String {
    match unit {
        TemperatureUnit::Celsius => format!("{} °C", short_fixed(kelvin - ZERO_CELSIUS)),
        TemperatureUnit::Kelvin => format!("{} K", short_fixed(kelvin)),
    }
}

/// Up to two decimals, without trailing zeros.
fn short_fixed(v: f64) -> String {
    let text = format!("{v:.2}");
    text.trim_end_matches('0').trim_end_matches('.').to_string()
}

fn derived(mut e: ParameterEstimate, unit: Option<String>) -> ParameterEstimate {
    e.derived = true;
    e.unit = unit;
    e.ci_method = "delta".into();
    e
}

/// exp of a quantity known on the log scale: SE by the delta method
/// (value·SE of the log), interval exp of the log's interval.
fn exp_of(name: &str, log_value: f64, log_se: Option<f64>, t: Option<f64>, unit: Option<String>) -> ParameterEstimate {
    let value = log_value.exp();
    let log = estimate(name, log_value, log_se, t);
    let mut e = estimate(name, value, log_se.map(|s| s * value), t);
    e.ci_low = log.ci_low.map(f64::exp);
    e.ci_high = log.ci_high.map(f64::exp);
    let mut e = derived(e, unit);
    e.ci_method = "delta (log scale)".into();
    e
}

/// The fitted parameters' intervals by the request's method, as the other
/// analyses do.
fn finish(
    model: &TemperatureModel,
    fit: &Fit,
    data: &Observations,
    request: &TemperatureRequest,
    warnings: &mut Vec<String>,
) -> Result<FitSummary, Error> {
    let mut summary = fit.summary.clone();
    summary.weighting = request.weighting.name().into();
    if fit.summary.termination == Termination::NoFiniteOptimum {
        apply_profile_intervals(&mut summary, model, data, fit, true);
    } else {
        apply_interval_method(&mut summary, model, data, fit, request.interval_method, &request.bootstrap)?;
        if request.interval_method == IntervalMethod::Asymptotic && fit.summary.converged {
            apply_profile_intervals(&mut summary, model, data, fit, false);
        }
    }
    if !fit.summary.converged {
        warnings.push(format!("The {} fit did not converge; its numbers are not a least-squares solution.", model.name()));
    }
    Ok(summary)
}

/// The direct plot, the Arrhenius plot and (with the Eyring fit) the
/// Eyring plot.
#[allow(clippy::too_many_arguments)]
fn temperature_plots(
    points: &[TemperaturePoint],
    unit: TemperatureUnit,
    reference: f64,
    name: &str,
    fitted_unit: Option<&str>,
    arrhenius: &[f64],
    curved: Option<&[f64]>,
    eyring: Option<(TemperatureModel, &[f64])>,
    notes: &mut Vec<String>,
) -> Vec<PlotData> {
    let low = points.iter().map(|p| p.kelvin).fold(f64::INFINITY, f64::min);
    let high = points.iter().map(|p| p.kelvin).fold(f64::NEG_INFINITY, f64::max);
    let grid: Vec<f64> = (0..=100).map(|i| low + (high - low) * i as f64 / 100.0).collect();
    let straight = TemperatureModel::Arrhenius { reference };
    let k_label = match fitted_unit {
        Some(u) => format!("{name} ({u})"),
        None => name.to_string(),
    };
    let ln_label = |what: &str| match fitted_unit {
        Some(u) => format!("ln {what} ({name} in {u})"),
        None => format!("ln {what}"),
    };
    let plain = |kind, title: String, x_label: String, y_label: String, points: Vec<PlotPoint>, curve: Vec<(f64, f64)>, note: String| PlotData {
        kind,
        title,
        x_label,
        y_label,
        points,
        curve,
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note,
        series: Vec::new(),
        log_x: false,
        marks: Vec::new(),
        band: None,
    };
    let from_kelvin = |t: f64| match unit {
        TemperatureUnit::Celsius => t - ZERO_CELSIUS,
        TemperatureUnit::Kelvin => t,
    };
    let direct = plain(
        PlotKind::TemperatureDirect,
        format!("{name} against temperature"),
        format!("temperature ({})", unit.symbol()),
        k_label,
        points.iter().map(|p| PlotPoint { row: p.row, x: p.temperature, y: p.k, excluded: p.excluded }).collect(),
        grid.iter().map(|&t| (from_kelvin(t), straight.value(&[t], arrhenius))).collect(),
        "Curve: the Arrhenius equation fitted directly to k.".into(),
    );
    let positive: Vec<&TemperaturePoint> = points.iter().filter(|p| p.k > 0.0).collect();
    if positive.len() < points.len() {
        notes.push(format!(
            "{} value(s) at or below zero have no logarithm and are not on the Arrhenius or Eyring plot (they are in the fits).",
            points.len() - positive.len()
        ));
    }
    let arrhenius_points: Vec<PlotPoint> =
        positive.iter().map(|p| PlotPoint { row: p.row, x: 1.0 / p.kelvin, y: p.k.ln(), excluded: p.excluded }).collect();
    let line: Vec<(f64, f64)> = grid.iter().map(|&t| (1.0 / t, straight.ln_k(t, arrhenius))).collect();
    let mut arrhenius_plot = plain(
        PlotKind::Arrhenius,
        "Arrhenius plot".into(),
        "1/T (1/K)".into(),
        ln_label(name),
        arrhenius_points.clone(),
        line.clone(),
        "Line: the Arrhenius equation fitted directly to k (not a line fitted to ln k).".into(),
    );
    if let Some(c) = curved {
        let curved_model = TemperatureModel::CurvedArrhenius { reference };
        arrhenius_plot.curve = Vec::new();
        arrhenius_plot.series = vec![
            Series { label: "Arrhenius fit".into(), points: arrhenius_points, curve: line, dashed: false },
            Series {
                label: "with a quadratic term in 1/T".into(),
                points: Vec::new(),
                curve: grid.iter().map(|&t| (1.0 / t, curved_model.ln_k(t, c))).collect(),
                dashed: true,
            },
        ];
        arrhenius_plot.note.push_str(" Dashed: the fit with a quadratic term in 1/T used to test for curvature.");
    }
    let mut plots = vec![direct, arrhenius_plot];
    if let Some((model, e)) = eyring {
        plots.push(plain(
            PlotKind::Eyring,
            "Eyring plot".into(),
            "1/T (1/K)".into(),
            format!("ln({name}/T) ({name} in s-1, T in K)"),
            positive.iter().map(|p| PlotPoint { row: p.row, x: 1.0 / p.kelvin, y: (p.k / p.kelvin).ln(), excluded: p.excluded }).collect(),
            grid.iter().map(|&t| (1.0 / t, model.ln_k(t, e) - t.ln())).collect(),
            "Line: the Eyring equation fitted directly to k (not a line fitted to ln(k/T)).".into(),
        ));
    }
    plots
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::gradient_disagreement;

    #[test]
    fn gradients_match_finite_differences() {
        let t: Vec<f64> = (0..8).map(|i| 283.15 + 5.0 * i as f64).collect();
        let data = Observations::new(1, t.clone(), vec![1.0; t.len()], None).unwrap();
        let reference = 300.0;
        assert!(gradient_disagreement(&TemperatureModel::Arrhenius { reference }, &data, &[0.5, 55.0]) < 1e-6);
        assert!(gradient_disagreement(&TemperatureModel::CurvedArrhenius { reference }, &data, &[0.5, 55.0, -3.0]) < 1e-6);
        assert!(gradient_disagreement(&TemperatureModel::Eyring { reference }, &data, &[52.0, 70.0]) < 1e-6);
    }

    #[test]
    fn units_read_or_refused() {
        assert_eq!(read_temperature("25 °C").unwrap(), 298.15);
        assert_eq!(read_temperature("25C").unwrap(), 298.15);
        assert_eq!(read_temperature("310 K").unwrap(), 310.0);
        assert!(read_temperature("25").unwrap_err().contains("no unit"));
        assert!(read_temperature("77 °F").unwrap_err().contains("°F"));
        assert!(read_temperature("-300 °C").unwrap_err().contains("absolute zero"));
        for (unit, seconds) in [("s-1", Some(1.0)), ("1/s", Some(1.0)), ("min⁻¹", Some(60.0)), ("/h", Some(3600.0)), ("per min", Some(60.0))] {
            assert_eq!(first_order_seconds(unit), seconds, "{unit}");
        }
        for unit in ["µM/min", "M-1 s-1", "mM", "s"] {
            assert_eq!(first_order_seconds(unit), None, "{unit}");
        }
    }

    /// A temperature without a unit is refused with its place.
    #[test]
    fn temperature_without_unit_is_refused() {
        let e = analyse_temperature(&TemperatureRequest { text: "T\tk (s-1)\n20\t1\n30\t2\n40\t4\n".into(), ..Default::default() })
            .unwrap_err();
        assert!(e.message.contains("line 1, column 1") && e.message.contains("no unit"), "{}", e.message);
        let e = analyse_temperature(&TemperatureRequest { text: "20\t1\n30\t2\n40\t4\n".into(), ..Default::default() }).unwrap_err();
        assert!(e.message.contains("never guessed"), "{}", e.message);
    }

    /// k in min⁻¹ is converted to s⁻¹; a rate in µM/min gets no Eyring fit.
    #[test]
    fn units_of_k() {
        let text = "T (°C)\tk (min-1)\n15\t0.6\n20\t0.96\n25\t1.5\n30\t2.3\n35\t3.5\n";
        let a = analyse_temperature(&TemperatureRequest { text: text.into(), ..Default::default() }).unwrap();
        assert_eq!(a.fitted_unit.as_deref(), Some("s-1"));
        assert!((a.points[0].k - 0.01).abs() < 1e-15);
        assert!(a.eyring.is_some());
        assert_eq!(a.plots.len(), 3);
        let text = "T (K)\tv (µM/min)\n288\t0.6\n293\t0.96\n298\t1.5\n303\t2.3\n308\t3.5\n";
        let a = analyse_temperature(&TemperatureRequest { text: text.into(), ..Default::default() }).unwrap();
        assert!(a.eyring.is_none());
        assert!(a.warnings.iter().any(|w| w.contains("not a first-order rate constant")), "{:?}", a.warnings);
        assert_eq!(a.arrhenius.parameters[1].name, "Ea");
        assert_eq!(a.plots.len(), 2);
    }
}
