//! The kinetic models Turnover fits.

mod michaelis_menten;

pub use michaelis_menten::{MichaelisMenten, MichaelisMentenSpecificity};

use crate::error::Error;
use crate::model::Model;

/// The models that can be chosen by name, as the CLI and page name them.
pub const MODEL_NAMES: &[&str] = &["mm"];

/// Looks up a model by its machine name.
pub fn model_by_name(name: &str) -> Result<Box<dyn Model>, Error> {
    match name {
        "mm" | "michaelis-menten" => Ok(Box::new(MichaelisMenten)),
        other => Err(Error::invalid_option(format!(
            "unknown model '{other}'; available: {}",
            MODEL_NAMES.join(", ")
        ))),
    }
}
