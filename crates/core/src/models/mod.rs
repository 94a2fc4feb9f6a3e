//! The kinetic models Turnover fits.
//!
//! Each model states its parameters with their dimensions, evaluates its
//! value and analytic gradient, and forms starting values from the data.
//! [`model_with_options`] builds one from its machine name, the name the CLI
//! and the page use.

mod bisubstrate;
mod dose_response;
mod hill;
mod inhibition;
mod michaelis_menten;
mod morrison;
pub(crate) mod start;
mod substrate_inhibition;

pub use bisubstrate::{TwoSubstrateMechanism, TwoSubstrates};
pub use dose_response::{cheng_prusoff, ChengPrusoff, DoseResponse};
pub use hill::Hill;
pub use inhibition::{Inhibition, Mechanism};
pub use michaelis_menten::{MichaelisMenten, MichaelisMentenSpecificity};
pub use morrison::Morrison;
pub use substrate_inhibition::SubstrateInhibition;

use crate::error::Error;
use crate::model::Model;

/// `ratio^exponent` for a ratio of concentrations, with `ln ratio` (the
/// derivative of the power in the exponent is the power times it), as
/// `exp(exponent·ln ratio)`: one logarithm and one exponential in place of
/// a power and a logarithm (the power alone took a quarter of a batch of
/// dose-response fits; glibc's and the WebAssembly build's `pow` both form
/// a logarithm and an exponential of their own, in extra precision). The
/// relative error is about |exponent·ln ratio|·ε, below 1e-14 for any
/// power between 1e-6 and 1e6 (standard numerical analysis, no source).
/// The cases a power settles on its own are kept: a zero exponent gives 1
/// for every ratio (where `0·ln 0` would give NaN), a zero ratio 0 or ∞
/// by the exponent's sign, a negative ratio NaN.
#[inline]
pub(crate) fn power_and_log(ratio: f64, exponent: f64) -> (f64, f64) {
    let log = ratio.ln();
    let power = if exponent == 0.0 { 1.0 } else { (exponent * log).exp() };
    (power, log)
}

/// The models that can be chosen by name, as the CLI and page name them.
pub const MODEL_NAMES: &[&str] = &[
    "mm",
    "competitive",
    "uncompetitive",
    "mixed",
    "noncompetitive",
    "substrate-inhibition",
    "hill",
    "morrison",
    "ic50",
    "sequential",
    "ordered",
    "ping-pong",
];

/// What the data are, for a model: which predictors it reads.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ModelInput {
    /// x = [S], y = v.
    Substrate,
    /// x = [S, I], y = v (global inhibition fits).
    SubstrateAndInhibitor,
    /// x = [I], y = a response (dose-response and tight binding).
    Inhibitor,
    /// x = [A, B], y = v (two-substrate rate laws, fitted globally).
    TwoSubstrates,
}

/// The input a named model reads; `None` for an unknown name.
pub fn model_input(name: &str) -> Option<ModelInput> {
    match name {
        "mm" | "michaelis-menten" | "substrate-inhibition" | "hill" => Some(ModelInput::Substrate),
        "competitive" | "uncompetitive" | "mixed" | "noncompetitive" => Some(ModelInput::SubstrateAndInhibitor),
        "morrison" | "ic50" => Some(ModelInput::Inhibitor),
        "sequential" | "ordered" | "ping-pong" => Some(ModelInput::TwoSubstrates),
        _ => None,
    }
}

/// Settings some models need.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct ModelOptions {
    /// Total enzyme concentration [E]t in the units of [I] (Morrison; required there).
    pub enzyme: Option<f64>,
    /// A fixed top plateau for `ic50`.
    pub fixed_top: Option<f64>,
    /// A fixed bottom plateau for `ic50`.
    pub fixed_bottom: Option<f64>,
}

/// Looks up a model by its machine name, with default options.
pub fn model_by_name(name: &str) -> Result<Box<dyn Model>, Error> {
    model_with_options(name, &ModelOptions::default())
}

/// Looks up a model by its machine name.
pub fn model_with_options(name: &str, options: &ModelOptions) -> Result<Box<dyn Model>, Error> {
    Ok(match name {
        "mm" | "michaelis-menten" => Box::new(MichaelisMenten),
        "competitive" => Box::new(Inhibition::new(Mechanism::Competitive)),
        "uncompetitive" => Box::new(Inhibition::new(Mechanism::Uncompetitive)),
        "mixed" => Box::new(Inhibition::new(Mechanism::Mixed)),
        "noncompetitive" => Box::new(Inhibition::new(Mechanism::Noncompetitive)),
        "substrate-inhibition" => Box::new(SubstrateInhibition),
        "hill" => Box::new(Hill),
        "sequential" => Box::new(TwoSubstrates::new(TwoSubstrateMechanism::Sequential)),
        "ordered" => Box::new(TwoSubstrates::new(TwoSubstrateMechanism::Ordered)),
        "ping-pong" => Box::new(TwoSubstrates::new(TwoSubstrateMechanism::PingPong)),
        "ic50" => {
            for (value, what) in [(options.fixed_top, "ceiling"), (options.fixed_bottom, "floor")] {
                if value.is_some_and(|v| !v.is_finite()) {
                    return Err(Error::invalid_option(format!("the fixed {what} must be a finite number")));
                }
            }
            Box::new(DoseResponse::new(options.fixed_top, options.fixed_bottom))
        }
        "morrison" => match options.enzyme {
            Some(enzyme) if enzyme.is_finite() && enzyme > 0.0 => Box::new(Morrison { enzyme }),
            Some(_) => return Err(Error::invalid_option("the enzyme concentration [E]t must be a positive number")),
            None => {
                return Err(Error::invalid_option(
                    "the Morrison model needs the total enzyme concentration [E]t, in the units of [I] (--enzyme)",
                ))
            }
        },
        other => {
            return Err(Error::invalid_option(format!("unknown model '{other}'; available: {}", MODEL_NAMES.join(", "))))
        }
    })
}

#[cfg(test)]
mod tests {
    use super::power_and_log;

    /// Against the library's `powf` over ratios from 1e-9 to 1e9 and
    /// exponents from −4 to 6: the relative difference stays within
    /// (|exponent·ln ratio| + 2)·ε (the bound of the doc comment, standard
    /// numerical analysis, no source), and the edge cases a power settles
    /// on its own come out as `powf` gives them.
    #[test]
    fn power_and_log_agrees_with_the_library_power() {
        let mut checked = 0;
        for k in -90..=90 {
            let ratio = 10f64.powf(k as f64 / 10.0) * 1.0137;
            for j in -40..=60 {
                let exponent = j as f64 / 10.0 + 0.013;
                let (power, log) = power_and_log(ratio, exponent);
                let want = ratio.powf(exponent);
                let bound = ((exponent * ratio.ln()).abs() + 2.0) * f64::EPSILON;
                assert!(((power - want) / want).abs() <= bound, "{ratio}^{exponent}: {power} against {want}");
                assert_eq!(log.to_bits(), ratio.ln().to_bits());
                checked += 1;
            }
        }
        assert_eq!(checked, 181 * 101);
        for (ratio, exponent) in [(0.0, 1.3), (0.0, -1.3), (0.0, 0.0), (f64::INFINITY, 2.0), (f64::INFINITY, -2.0), (f64::INFINITY, 0.0), (3.0, 0.0), (1.0, 7.5)] {
            assert_eq!(power_and_log(ratio, exponent).0, ratio.powf(exponent), "{ratio}^{exponent}");
        }
        assert!(power_and_log(-2.0, 1.5).0.is_nan() && (-2.0f64).powf(1.5).is_nan());
    }
}
