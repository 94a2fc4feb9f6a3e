//! Observation weights for the least-squares fit.
//!
//! Rates measured over a wide range rarely have constant error. The choices
//! here are the usual ones: constant absolute error (uniform), constant
//! relative error (1/v²), error growing like a count (1/v), or the
//! standard deviation of each rate given in an `sd` column (1/sd²).
//!
//! **Relative and Poisson weights come from the fitted curve**, not from the
//! measured rates. A weight 1/v_obs² is correlated with the error in v_obs
//! (a rate measured too low gets too much weight), which biases the fit
//! downwards by roughly the squared coefficient of variation per point; the
//! estimating equation Σ (y − f)·∂f/∂θ / g(f) = 0 with the variance function
//! g evaluated at the *fitted* value has expectation zero at the truth and
//! so no such bias. [`crate::fit::fit_weighted`] finds that fixed point by
//! iteratively reweighted least squares: fit, recompute the weights from the
//! fitted values, refit from the last solution, until the parameters stop
//! changing (Carroll & Ruppert 1988, *Transformation and Weighting in
//! Regression*, ch. 2, generalised least squares; from memory). The first
//! round starts from weights on the measured rates. Weights by sd are fixed:
//! they are data.
//!
//! With any weighting the covariance is still scaled by the residual
//! variance (`absolute_sigma = False` in SciPy's terms): standard
//! deviations are taken as relative, and the fit's residual SD says how far
//! they were off in scale (near 1 when they were right).

use serde::{Deserialize, Serialize};

/// How observations are weighted.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Weighting {
    /// Every observation weight 1: constant absolute error.
    #[default]
    Uniform,
    /// Weight 1/v²: constant relative (percentage) error.
    Relative,
    /// Weight 1/v: variance proportional to the rate, as for counts.
    Poisson,
    /// Weight 1/sd² from a standard-deviation column.
    Sd,
    /// Weight 1/v² on the measured rates, fixed: the convention of weights
    /// given as data (R `nls(weights=)`, SciPy `curve_fit(sigma=)` with
    /// sigma from the measured values) and what Turnover 0.1 computed for
    /// `relative`. Kept so that analyses saved then reopen with the same
    /// numbers; it is biased when the rates are noisy (see above).
    RelativeMeasured,
    /// Weight 1/v on the measured rates, fixed (Turnover 0.1's `poisson`).
    PoissonMeasured,
}

impl Weighting {
    /// Every choice, for menus and help.
    pub const ALL: [Weighting; 6] =
        [Weighting::Uniform, Weighting::Relative, Weighting::Poisson, Weighting::Sd, Weighting::RelativeMeasured, Weighting::PoissonMeasured];

    /// The name the CLI and page use.
    pub fn name(self) -> &'static str {
        match self {
            Weighting::Uniform => "uniform",
            Weighting::Relative => "relative",
            Weighting::Poisson => "poisson",
            Weighting::Sd => "sd",
            Weighting::RelativeMeasured => "relative_measured",
            Weighting::PoissonMeasured => "poisson_measured",
        }
    }

    /// Reads a weighting by [`Weighting::name`].
    pub fn from_name(name: &str) -> Result<Weighting, String> {
        Weighting::ALL.into_iter().find(|w| w.name() == name.trim()).ok_or_else(|| {
            format!("unknown weighting '{}'; expected uniform, relative, poisson, sd, relative_measured or poisson_measured", name.trim())
        })
    }

    /// The name the command line uses: what the weighting assumes about
    /// the error of a rate. `constant` (the same absolute error everywhere),
    /// `proportional` (error proportional to v), `sqrt` (error growing like
    /// the square root of v, as for counts), `sd` (the error is given).
    pub fn option_name(self) -> &'static str {
        match self {
            Weighting::Uniform => "constant",
            Weighting::Relative => "proportional",
            Weighting::Poisson => "sqrt",
            Weighting::Sd => "sd",
            Weighting::RelativeMeasured => "proportional-measured",
            Weighting::PoissonMeasured => "sqrt-measured",
        }
    }

    /// Reads a weighting by [`Weighting::option_name`]. The earlier names
    /// (`uniform`, `relative`, `poisson`) are still read for one release; the
    /// second value is then a note saying which name replaces them.
    pub fn from_option_name(name: &str) -> Result<(Weighting, Option<String>), String> {
        let name = name.trim();
        if let Some(w) = Weighting::ALL.into_iter().find(|w| w.option_name() == name) {
            return Ok((w, None));
        }
        if let Some(w) = Weighting::ALL.into_iter().find(|w| w.name() == name) {
            let note = format!(
                "the weighting name '{name}' is replaced by '{}' ({}); the old name will be refused in a later release",
                w.option_name(),
                w.describe()
            );
            return Ok((w, Some(note)));
        }
        Err(format!(
            "unknown weighting '{name}'; expected constant (same error everywhere), proportional (error ∝ v), sqrt (error ∝ √v, as for counts) or sd (from an sd column)"
        ))
    }

    /// A phrase for people, such as `weights 1/v² (constant relative error)`.
    pub fn describe(self) -> &'static str {
        match self {
            Weighting::Uniform => "uniform weights (constant absolute error)",
            Weighting::Relative => "weights 1/v² from the fitted curve (constant relative error)",
            Weighting::Poisson => "weights 1/v from the fitted curve (variance proportional to v)",
            Weighting::Sd => "weights 1/sd² from the sd column",
            Weighting::RelativeMeasured => "weights 1/v² on the measured rates (constant relative error; biased when rates are noisy)",
            Weighting::PoissonMeasured => "weights 1/v on the measured rates (variance proportional to v; biased when rates are noisy)",
        }
    }

    /// Weights for measured responses `y` when no sd column is read (the
    /// inhibition and dose-response tables): uniform, relative or Poisson.
    /// `Err` names the first response that cannot be weighted, by its index,
    /// or says that sd weighting needs an sd column.
    pub fn weights_without_sd(self, y: &[f64]) -> Result<Option<Vec<f64>>, (Option<usize>, String)> {
        match self {
            Weighting::Uniform => Ok(None),
            Weighting::Sd => Err((None, "weighting by sd needs an sd column, which only the [S]–v table reads so far".to_string())),
            _ => y
                .iter()
                .enumerate()
                .map(|(i, v)| self.weight(*v, None).map_err(|m| (Some(i), m)))
                .collect::<Result<Vec<f64>, _>>()
                .map(Some),
        }
    }

    /// Whether the weights of this scheme are recomputed from the fitted
    /// curve (relative and Poisson) rather than fixed (uniform and sd).
    pub fn from_model(self) -> bool {
        matches!(self, Weighting::Relative | Weighting::Poisson)
    }

    /// The weight of an observation whose fitted value is `fitted`, for the
    /// schemes whose variance follows the mean: 1/f² (relative) or 1/f
    /// (Poisson). `None` when the fitted value cannot carry that weight (zero
    /// or negative) or the scheme has fixed weights.
    pub fn weight_at_fitted(self, fitted: f64) -> Option<f64> {
        let w = match self {
            // A constant relative error needs a positive mean: a fitted
            // value at or below zero cannot carry it.
            Weighting::Relative if fitted > 0.0 => 1.0 / (fitted * fitted),
            Weighting::Poisson if fitted > 0.0 => 1.0 / fitted,
            _ => return None,
        };
        (w.is_finite() && w > 0.0).then_some(w)
    }

    /// The weight of one observation with measured rate `v` and, when
    /// given, standard deviation `sd`; `Err` says why it cannot be weighted.
    pub fn weight(self, v: f64, sd: Option<f64>) -> Result<f64, String> {
        match self {
            Weighting::Uniform => Ok(1.0),
            Weighting::Relative | Weighting::RelativeMeasured => {
                if v == 0.0 {
                    Err("a rate of 0 cannot have weight 1/v²".to_string())
                } else {
                    Ok(1.0 / (v * v))
                }
            }
            Weighting::Poisson | Weighting::PoissonMeasured => {
                if v > 0.0 {
                    Ok(1.0 / v)
                } else {
                    Err(format!("weight 1/v needs a positive rate, found {v}"))
                }
            }
            Weighting::Sd => match sd {
                Some(sd) if sd > 0.0 && sd.is_finite() => Ok(1.0 / (sd * sd)),
                Some(sd) => Err(format!("a standard deviation must be positive, found {sd}")),
                None => Err("weighting by sd needs a standard deviation on every row".to_string()),
            },
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every name the command line reads, with the weighting and whether a
    /// note about a replaced name comes with it.
    #[test]
    fn option_names_and_old_names() {
        let cases: &[(&str, Weighting, bool)] = &[
            ("constant", Weighting::Uniform, false),
            ("proportional", Weighting::Relative, false),
            ("sqrt", Weighting::Poisson, false),
            ("sd", Weighting::Sd, false),
            ("uniform", Weighting::Uniform, true),
            ("relative", Weighting::Relative, true),
            ("poisson", Weighting::Poisson, true),
        ];
        for &(name, weighting, noted) in cases {
            let (found, note) = Weighting::from_option_name(name).unwrap();
            assert_eq!(found, weighting, "{name}");
            assert_eq!(note.is_some(), noted, "{name}: {note:?}");
        }
        let note = Weighting::from_option_name("relative").unwrap().1.unwrap();
        assert!(note.starts_with("the weighting name 'relative' is replaced by 'proportional'"), "{note}");
        assert!(Weighting::from_option_name("1/y").unwrap_err().starts_with("unknown weighting '1/y'; expected constant"));
    }
}
