//! The enzyme given as protein: a mass concentration (mg/mL, µg/mL, …)
//! and, optionally, the enzyme's molar mass (kDa or g/mol).
//!
//! Many laboratories know their enzyme as milligrams of protein per
//! millilitre rather than as a molar concentration. From that the rate
//! analysis computes two things:
//!
//! - **[E]t**, when the molar mass is given: [E]t (mol/L) = protein (g/L) /
//!   molar mass (g/mol), then kcat and kcat/Km as for an [E]t given
//!   directly. This assumes the protein is the enzyme alone, every
//!   molecule active, one active site per molar mass (a note says so).
//! - **Specific activity** in µmol min⁻¹ mg⁻¹ (U/mg, one unit being the
//!   enzyme that converts 1 µmol of substrate per minute; common
//!   practice, no source): Vmax in µmol L⁻¹ min⁻¹ divided by the protein in
//!   mg/L. The protein concentration is taken as exact, so specific
//!   activity is Vmax times a constant: its standard error is that
//!   constant times Vmax's (the delta method, exact for a linear map) and
//!   its interval is Vmax's interval scaled.
//!
//! Both need the protein concentration in the assay mixture, the volume
//! in which the rate is measured.
//!
//! Rates may also be given as specific activities already (v in
//! µmol min⁻¹ mg⁻¹, U/mg and the like; see [`crate::units::SpecificRateUnit`]).
//! Then Vmax is the maximal specific activity, the protein concentration
//! has no part (a warning says so when it is given), and the molar mass M
//! gives kcat = Vmax·M directly: Vmax in mol s⁻¹ g⁻¹ times g/mol is s⁻¹
//! (for Vmax in U/mg and M in Da, kcat = Vmax·M/60,000 s⁻¹; common
//! practice, no source), with the same assumptions as [E]t from protein.

use serde::{Deserialize, Serialize};

/// The enzyme as protein, part of a [`crate::rates::RateRequest`].
#[derive(Clone, Debug, Default, PartialEq, Deserialize, Serialize)]
#[serde(default)]
pub struct ProteinRequest {
    /// Protein concentration in the assay, in `unit`; must be positive.
    /// `None` only with rates given per mass of protein (a specific
    /// activity such as µmol/min/mg), where the molar mass alone gives
    /// kcat.
    pub concentration: Option<f64>,
    /// Unit of `concentration`: `mg/mL`, `µg/mL` (or `ug/mL`), `ng/mL`,
    /// `g/L`, `mg/L`, `µg/L`.
    pub unit: String,
    /// Molar mass of the enzyme (one active site), in `molar_mass_unit`;
    /// `None` gives specific activity without [E]t.
    pub molar_mass: Option<f64>,
    /// Unit of `molar_mass`: `kDa`, `Da`, `g/mol` or `kg/mol`.
    pub molar_mass_unit: Option<String>,
}

/// What the analysis made of the protein, for the result.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct EnzymeFromProtein {
    /// The protein concentration in g/L (= mg/mL).
    pub protein_g_per_l: f64,
    /// The molar mass in g/mol, when given.
    pub molar_mass_g_per_mol: Option<f64>,
    /// [E]t from the protein and the molar mass, in `enzyme_unit`; `None`
    /// without a molar mass.
    pub enzyme_molar: Option<f64>,
    /// Unit of `enzyme_molar` (the unit of [S] when known, else M).
    pub enzyme_unit: Option<String>,
}

/// The unit of specific activity.
pub const SPECIFIC_ACTIVITY_UNIT: &str = "µmol min⁻¹ mg⁻¹";

/// Lower-cases, folds the micro sign and Greek mu to `u`, drops spaces.
fn normalise(text: &str) -> String {
    text.trim()
        .chars()
        .filter(|c| !c.is_whitespace())
        .map(|c| match c {
            '\u{00b5}' | '\u{03bc}' => 'u',
            other => other.to_ascii_lowercase(),
        })
        .collect()
}

/// Grams per litre in one of `unit`, a mass concentration.
pub fn grams_per_litre(unit: &str) -> Result<f64, String> {
    match normalise(unit).as_str() {
        "mg/ml" | "g/l" => Ok(1.0),
        "ug/ml" | "mg/l" => Ok(1e-3),
        "ng/ml" | "ug/l" => Ok(1e-6),
        _ => Err(format!(
            "'{}' is not a protein concentration unit; give a mass per volume: mg/mL, µg/mL, ng/mL, g/L, mg/L or µg/L",
            unit.trim()
        )),
    }
}

/// Grams per mole in one of `unit`, a molar mass.
pub fn grams_per_mole(unit: &str) -> Result<f64, String> {
    // `kDa` and `Da` are read case-sensitively enough to refuse `mDa`
    // (millidalton), which no protein has.
    match normalise(unit).as_str() {
        "da" | "g/mol" => Ok(1.0),
        "kda" | "kg/mol" => Ok(1e3),
        "mda" if unit.trim().starts_with('M') => Ok(1e6),
        _ => Err(format!("'{}' is not a molar mass unit; give kDa, Da or g/mol", unit.trim())),
    }
}

/// The factor that turns Vmax, in a rate unit of `molar_per_second` M/s,
/// into specific activity in µmol min⁻¹ mg⁻¹ for `protein_g_per_l`:
/// Vmax·(M/s)·10⁶ µmol/mol·60 s/min = µmol L⁻¹ min⁻¹, divided by the
/// protein in mg/L (g/L · 1000).
pub fn specific_activity_factor(molar_per_second: f64, protein_g_per_l: f64) -> f64 {
    molar_per_second * 1e6 * 60.0 / (protein_g_per_l * 1e3)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn units_are_read_or_refused_with_a_sentence() {
        for (text, factor) in [("mg/mL", 1.0), ("mg/ml", 1.0), ("g/L", 1.0), ("µg/mL", 1e-3), ("ug/mL", 1e-3), ("μg/mL", 1e-3), ("mg/L", 1e-3), ("ng/mL", 1e-6)] {
            assert_eq!(grams_per_litre(text), Ok(factor), "{text}");
        }
        for text in ["mM", "mg", "U/mL", "%", ""] {
            let message = grams_per_litre(text).unwrap_err();
            assert!(message.contains("is not a protein concentration unit"), "{text}: {message}");
        }
        for (text, factor) in [("kDa", 1e3), ("kda", 1e3), ("Da", 1.0), ("g/mol", 1.0), ("kg/mol", 1e3), ("MDa", 1e6)] {
            assert_eq!(grams_per_mole(text), Ok(factor), "{text}");
        }
        for text in ["mDa", "kD", "g", "mg/mL"] {
            assert!(grams_per_mole(text).unwrap_err().contains("is not a molar mass unit"), "{text}");
        }
    }

    /// The request as the page sends it (a JSON-compatible object, read
    /// by the WebAssembly binding with serde): the protein reaches the
    /// analysis, and the result carries `enzyme_from_protein` and the
    /// derived `specific activity`.
    #[test]
    fn the_page_request_carries_the_protein() {
        let request: crate::rates::RateRequest = serde_json::from_str(
            r#"{"text": "[S] (µM)\tv (µM/min)\n1\t0.99\n2\t1.66\n5\t2.86\n10\t3.33\n20\t3.64\n50\t3.85\n",
                "protein": {"concentration": 0.05, "unit": "mg/mL", "molar_mass": 42, "molar_mass_unit": "kDa"}}"#,
        )
        .unwrap();
        let analysis = crate::rates::analyse_rates(&request).unwrap();
        let json = serde_json::to_value(&analysis).unwrap();
        assert_eq!(json["enzyme_from_protein"]["enzyme_unit"], "µM");
        let activity = json["fit"]["parameters"].as_array().unwrap().iter().find(|p| p["name"] == "specific activity").unwrap();
        assert_eq!(activity["unit"], SPECIFIC_ACTIVITY_UNIT);
        // A request without the field is read as before.
        let plain: crate::rates::RateRequest = serde_json::from_str(r#"{"text": "S\tv\n1\t1\n", "protein": null}"#).unwrap();
        assert_eq!(plain.protein, None);
    }

    /// 1 µM/min is 1 µmol L⁻¹ min⁻¹; with 0.05 mg/mL = 50 mg/L of protein,
    /// 1/50 = 0.02 µmol min⁻¹ mg⁻¹ (worked by hand). 1 nM/s is
    /// 0.06 µmol L⁻¹ min⁻¹; with 2 µg/mL = 2 mg/L, 0.03.
    #[test]
    fn the_factor_by_hand() {
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-15 * b;
        assert!(close(specific_activity_factor(1e-6 / 60.0, 0.05), 0.02));
        assert!(close(specific_activity_factor(1e-9, 2e-3), 0.03));
    }
}
