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
