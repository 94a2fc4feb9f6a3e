//! Support for Turnover's reference checks: a reader for the NIST StRD
//! nonlinear-regression files in `tests/data/nist` and the sixteen NIST
//! models written against `turnover_core::model::Model`, each with its
//! analytic gradient.
//!
//! Source of the data and certified values: NIST Statistical Reference
//! Datasets, Nonlinear Regression (public domain); see
//! `tests/data/nist/README.md`.
//!
//! Also the checks the fuzz targets run ([`fuzz_checks`]), shared with the
//! corpus replay test so both use one code path.

pub mod fuzz_checks;

use turnover_core::model::{Dimension, Model, Observations, ParameterSpec};
use turnover_core::Error;

/// One NIST StRD problem as read from its `.dat` file.
#[derive(Clone, Debug)]
pub struct NistProblem {
    /// File stem, such as `Misra1a`.
    pub name: String,
    /// NIST's first starting point.
    pub start1: Vec<f64>,
    /// NIST's second starting point.
    pub start2: Vec<f64>,
    /// Certified parameter values.
    pub certified: Vec<f64>,
    /// Certified standard deviations of the parameters.
    pub certified_sd: Vec<f64>,
    /// Certified residual sum of squares.
    pub certified_rss: f64,
    /// Predictor values.
    pub x: Vec<f64>,
    /// Responses.
    pub y: Vec<f64>,
}

/// Reads `tests/data/nist/<name>.dat`.
pub fn read_nist(name: &str) -> NistProblem {
    let path = format!("{}/data/nist/{name}.dat", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("cannot read {path}: {e}"));
    let mut problem = NistProblem {
        name: name.to_string(),
        start1: vec![],
        start2: vec![],
        certified: vec![],
        certified_sd: vec![],
        certified_rss: f64::NAN,
        x: vec![],
        y: vec![],
    };
    for (index, line) in text.lines().enumerate() {
        let number = index + 1;
        let trimmed = line.trim();
        if number >= 61 {
            let fields: Vec<f64> = trimmed.split_whitespace().map(|f| f.parse().unwrap()).collect();
            if fields.len() == 2 {
                problem.y.push(fields[0]);
                problem.x.push(fields[1]);
            }
            continue;
        }
        if let Some(rest) = trimmed.strip_prefix("Residual Sum of Squares:") {
            problem.certified_rss = rest.trim().parse().unwrap();
        }
        let mut parts = trimmed.split_whitespace();
        if let (Some(b), Some("=")) = (parts.next(), parts.next()) {
            if b.starts_with('b') && b[1..].parse::<usize>().is_ok() {
                let numbers: Vec<f64> = parts.map(|f| f.parse().unwrap()).collect();
                if numbers.len() == 4 {
                    problem.start1.push(numbers[0]);
                    problem.start2.push(numbers[1]);
                    problem.certified.push(numbers[2]);
                    problem.certified_sd.push(numbers[3]);
                }
            }
        }
    }
    assert!(!problem.x.is_empty() && !problem.certified.is_empty(), "{name}: nothing read");
    problem
}

impl NistProblem {
    /// The data as observations.
    pub fn observations(&self) -> Observations {
        Observations::single(&self.x, &self.y).unwrap()
    }
}

type Value = fn(f64, &[f64]) -> f64;
type Gradient = fn(f64, &[f64], &mut [f64]);

/// A NIST model: its value and analytic gradient as plain functions.
pub struct NistModel {
    name: &'static str,
    parameters: Vec<ParameterSpec>,
    value: Value,
    gradient: Gradient,
}

impl Model for NistModel {
    fn name(&self) -> &str {
        self.name
    }
    fn equation(&self) -> &str {
        self.name
    }
    fn parameters(&self) -> &[ParameterSpec] {
        &self.parameters
    }
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        (self.value)(x[0], p)
    }
    fn gradient(&self, x: &[f64], p: &[f64], g: &mut [f64]) {
        (self.gradient)(x[0], p, g)
    }
    fn initial_guess(&self, _: &Observations) -> Result<Vec<f64>, Error> {
        Err(Error::numerical("NIST problems are started from NIST's starting points"))
    }
}

const NAMES: [&str; 7] = ["b1", "b2", "b3", "b4", "b5", "b6", "b7"];

fn model(name: &'static str, p: usize, value: Value, gradient: Gradient) -> NistModel {
    let parameters = NAMES[..p].iter().map(|n| ParameterSpec { name: n, dimension: Dimension::Unspecified }).collect();
    NistModel { name, parameters, value, gradient }
}

fn rational_value(x: f64, b: &[f64]) -> f64 {
    (b[0] + b[1] * x + b[2] * x * x + b[3] * x.powi(3)) / (1.0 + b[4] * x + b[5] * x * x + b[6] * x.powi(3))
}

fn rational_gradient(x: f64, b: &[f64], g: &mut [f64]) {
    let n = b[0] + b[1] * x + b[2] * x * x + b[3] * x.powi(3);
    let d = 1.0 + b[4] * x + b[5] * x * x + b[6] * x.powi(3);
    for k in 0..4 {
        g[k] = x.powi(k as i32) / d;
    }
    for k in 1..4 {
        g[3 + k] = -n * x.powi(k as i32) / (d * d);
    }
}

fn exponential_rise_value(x: f64, b: &[f64]) -> f64 {
    b[0] * (1.0 - (-b[1] * x).exp())
}

fn exponential_rise_gradient(x: f64, b: &[f64], g: &mut [f64]) {
    let e = (-b[1] * x).exp();
    g[0] = 1.0 - e;
    g[1] = b[0] * x * e;
}

/// The model of the named NIST problem, as printed in its file.
pub fn nist_model(name: &str) -> NistModel {
    match name {
        "Misra1a" => model("Misra1a", 2, exponential_rise_value, exponential_rise_gradient),
        "BoxBOD" => model("BoxBOD", 2, exponential_rise_value, exponential_rise_gradient),
        "Misra1b" => model(
            "Misra1b",
            2,
            |x, b| b[0] * (1.0 - (1.0 + b[1] * x / 2.0).powi(-2)),
            |x, b, g| {
                let u = 1.0 + b[1] * x / 2.0;
                g[0] = 1.0 - u.powi(-2);
                g[1] = b[0] * x * u.powi(-3);
            },
        ),
        "Misra1c" => model(
            "Misra1c",
            2,
            |x, b| b[0] * (1.0 - (1.0 + 2.0 * b[1] * x).powf(-0.5)),
            |x, b, g| {
                let u = 1.0 + 2.0 * b[1] * x;
                g[0] = 1.0 - u.powf(-0.5);
                g[1] = b[0] * x * u.powf(-1.5);
            },
        ),
        "Misra1d" => model(
            "Misra1d",
            2,
            |x, b| b[0] * b[1] * x / (1.0 + b[1] * x),
            |x, b, g| {
                let u = 1.0 + b[1] * x;
                g[0] = b[1] * x / u;
                g[1] = b[0] * x / (u * u);
            },
        ),
        "MGH09" => model(
            "MGH09",
            4,
            |x, b| b[0] * (x * x + x * b[1]) / (x * x + x * b[2] + b[3]),
            |x, b, g| {
                let n = x * x + x * b[1];
                let d = x * x + x * b[2] + b[3];
                g[0] = n / d;
                g[1] = b[0] * x / d;
                g[2] = -b[0] * n * x / (d * d);
                g[3] = -b[0] * n / (d * d);
            },
        ),
        "MGH10" => model(
            "MGH10",
            3,
            |x, b| b[0] * (b[1] / (x + b[2])).exp(),
            |x, b, g| {
                let e = (b[1] / (x + b[2])).exp();
                g[0] = e;
                g[1] = b[0] * e / (x + b[2]);
                g[2] = -b[0] * e * b[1] / (x + b[2]).powi(2);
            },
        ),
        "Thurber" => model("Thurber", 7, rational_value, rational_gradient),
        "Hahn1" => model("Hahn1", 7, rational_value, rational_gradient),
        "Rat42" => model(
            "Rat42",
            3,
            |x, b| b[0] / (1.0 + (b[1] - b[2] * x).exp()),
            |x, b, g| {
                let e = (b[1] - b[2] * x).exp();
                let u = 1.0 + e;
                g[0] = 1.0 / u;
                g[1] = -b[0] * e / (u * u);
                g[2] = b[0] * e * x / (u * u);
            },
        ),
        "Rat43" => model(
            "Rat43",
            4,
            |x, b| b[0] / (1.0 + (b[1] - b[2] * x).exp()).powf(1.0 / b[3]),
            |x, b, g| {
                let e = (b[1] - b[2] * x).exp();
                let u = 1.0 + e;
                let f = u.powf(-1.0 / b[3]);
                g[0] = f;
                g[1] = -b[0] / b[3] * f / u * e;
                g[2] = b[0] / b[3] * f / u * e * x;
                g[3] = b[0] * f * u.ln() / (b[3] * b[3]);
            },
        ),
        "Eckerle4" => model(
            "Eckerle4",
            3,
            |x, b| (b[0] / b[1]) * (-0.5 * ((x - b[2]) / b[1]).powi(2)).exp(),
            |x, b, g| {
                let z = (x - b[2]) / b[1];
                let e = (-0.5 * z * z).exp();
                g[0] = e / b[1];
                g[1] = b[0] / (b[1] * b[1]) * e * (z * z - 1.0);
                g[2] = b[0] / (b[1] * b[1]) * e * z;
            },
        ),
        "DanWood" => model(
            "DanWood",
            2,
            |x, b| b[0] * x.powf(b[1]),
            |x, b, g| {
                g[0] = x.powf(b[1]);
                g[1] = b[0] * x.powf(b[1]) * x.ln();
            },
        ),
        "Chwirut2" => model(
            "Chwirut2",
            3,
            |x, b| (-b[0] * x).exp() / (b[1] + b[2] * x),
            |x, b, g| {
                let e = (-b[0] * x).exp();
                let d = b[1] + b[2] * x;
                g[0] = -x * e / d;
                g[1] = -e / (d * d);
                g[2] = -x * e / (d * d);
            },
        ),
        "Lanczos3" => model(
            "Lanczos3",
            6,
            |x, b| (0..3).map(|k| b[2 * k] * (-b[2 * k + 1] * x).exp()).sum(),
            |x, b, g| {
                for k in 0..3 {
                    let e = (-b[2 * k + 1] * x).exp();
                    g[2 * k] = e;
                    g[2 * k + 1] = -b[2 * k] * x * e;
                }
            },
        ),
        "Bennett5" => model(
            "Bennett5",
            3,
            |x, b| b[0] * (b[1] + x).powf(-1.0 / b[2]),
            |x, b, g| {
                let u = b[1] + x;
                let f = u.powf(-1.0 / b[2]);
                g[0] = f;
                g[1] = -b[0] / b[2] * f / u;
                g[2] = b[0] * f * u.ln() / (b[2] * b[2]);
            },
        ),
        other => panic!("no NIST model named {other}"),
    }
}

/// All sixteen NIST StRD nonlinear problems.
pub const NIST_PROBLEMS: [&str; 16] = [
    "Misra1a", "Chwirut2", "Lanczos3", "DanWood", "Misra1b", "Misra1c", "Misra1d", "Hahn1", "Rat42", "MGH09",
    "Thurber", "BoxBOD", "Rat43", "MGH10", "Eckerle4", "Bennett5",
];

/// Log relative error, −log10(|estimate − certified| / |certified|),
/// capped at 11 because the certified values carry 11 significant digits.
pub fn lre(estimate: f64, certified: f64) -> f64 {
    if !estimate.is_finite() {
        return 0.0;
    }
    let relative = ((estimate - certified) / certified).abs();
    if relative == 0.0 {
        11.0
    } else {
        (-relative.log10()).clamp(0.0, 11.0)
    }
}
