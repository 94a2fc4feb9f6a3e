//! Concentration, time and rate units, and the conversions that kcat and
//! kcat/Km need.
//!
//! Only molar concentrations are handled: kcat needs the rate and the enzyme
//! concentration in the same amount-of-substance terms. A rate unit is a
//! concentration per time, written `µM/min`, `uM min-1`, `µM·min⁻¹` or
//! `µM per min`.

use serde::Serialize;
use std::fmt;

/// A molar concentration unit.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum ConcentrationUnit {
    /// mol/L
    Molar,
    /// 10⁻³ mol/L
    Millimolar,
    /// 10⁻⁶ mol/L
    Micromolar,
    /// 10⁻⁹ mol/L
    Nanomolar,
    /// 10⁻¹² mol/L
    Picomolar,
}

impl ConcentrationUnit {
    /// Every unit, largest first, for menus.
    pub const ALL: [ConcentrationUnit; 5] = [
        ConcentrationUnit::Molar,
        ConcentrationUnit::Millimolar,
        ConcentrationUnit::Micromolar,
        ConcentrationUnit::Nanomolar,
        ConcentrationUnit::Picomolar,
    ];

    /// How many mol/L one of this unit is.
    pub fn in_molar(self) -> f64 {
        match self {
            ConcentrationUnit::Molar => 1.0,
            ConcentrationUnit::Millimolar => 1e-3,
            ConcentrationUnit::Micromolar => 1e-6,
            ConcentrationUnit::Nanomolar => 1e-9,
            ConcentrationUnit::Picomolar => 1e-12,
        }
    }

    /// The symbol used in output (`µM` with the micro sign).
    pub fn symbol(self) -> &'static str {
        match self {
            ConcentrationUnit::Molar => "M",
            ConcentrationUnit::Millimolar => "mM",
            ConcentrationUnit::Micromolar => "µM",
            ConcentrationUnit::Nanomolar => "nM",
            ConcentrationUnit::Picomolar => "pM",
        }
    }

    /// Reads a unit such as `mM`, `uM`, `µM`, `μM`, `umol/L`, `nmol/l`.
    pub fn parse(text: &str) -> Result<Self, String> {
        let t = normalise(text);
        let unit = match t.as_str() {
            "m" | "mol/l" => ConcentrationUnit::Molar,
            "mm" | "mmol/l" => ConcentrationUnit::Millimolar,
            "um" | "umol/l" => ConcentrationUnit::Micromolar,
            "nm" | "nmol/l" => ConcentrationUnit::Nanomolar,
            "pm" | "pmol/l" => ConcentrationUnit::Picomolar,
            _ => {
                return Err(format!(
                    "unknown concentration unit '{}'; expected M, mM, µM (or uM), nM or pM",
                    text.trim()
                ))
            }
        };
        // `M` and `mM` differ only in case after normalising `m`; keep the
        // case of the first letter to tell them apart.
        let compact: String = text.trim().chars().filter(|c| !c.is_whitespace()).collect();
        if unit == ConcentrationUnit::Millimolar && compact.starts_with('M') && !compact.starts_with("Mm") {
            return Err(format!("unknown concentration unit '{}'; did you mean mM?", text.trim()));
        }
        if unit == ConcentrationUnit::Molar && compact.starts_with('m') && compact.len() == 1 {
            return Err(format!("unknown concentration unit '{}': 'm' is not a concentration; use M or mM", text.trim()));
        }
        Ok(unit)
    }
}

impl fmt::Display for ConcentrationUnit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.symbol())
    }
}

/// A unit of time.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum TimeUnit {
    /// Seconds.
    Second,
    /// Minutes.
    Minute,
    /// Hours.
    Hour,
}

impl TimeUnit {
    /// How many seconds one of this unit is.
    pub fn in_seconds(self) -> f64 {
        match self {
            TimeUnit::Second => 1.0,
            TimeUnit::Minute => 60.0,
            TimeUnit::Hour => 3600.0,
        }
    }

    /// The symbol used in output.
    pub fn symbol(self) -> &'static str {
        match self {
            TimeUnit::Second => "s",
            TimeUnit::Minute => "min",
            TimeUnit::Hour => "h",
        }
    }

    /// Reads `s`, `sec`, `min`, `h`, `hr` and their long forms.
    pub fn parse(text: &str) -> Result<Self, String> {
        match normalise(text).as_str() {
            "s" | "sec" | "second" | "seconds" => Ok(TimeUnit::Second),
            "min" | "minute" | "minutes" => Ok(TimeUnit::Minute),
            "h" | "hr" | "hour" | "hours" => Ok(TimeUnit::Hour),
            _ => Err(format!("unknown time unit '{}'; expected s, min or h", text.trim())),
        }
    }
}

/// A rate unit: concentration per time.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub struct RateUnit {
    /// The concentration part.
    pub concentration: ConcentrationUnit,
    /// The time part.
    pub time: TimeUnit,
}

impl RateUnit {
    /// How many M/s one of this unit is.
    pub fn in_molar_per_second(self) -> f64 {
        self.concentration.in_molar() / self.time.in_seconds()
    }

    /// Reads `µM/min`, `uM min-1`, `µM·min⁻¹`, `nM/s`, `mM per h`.
    pub fn parse(text: &str) -> Result<Self, String> {
        let t = text.trim().replace('\u{00b7}', " ").replace('⋅', " ").replace("⁻¹", "-1");
        let (conc, time) = if let Some((c, tm)) = t.split_once('/') {
            (c.to_string(), tm.to_string())
        } else if let Some((c, tm)) = t.split_once(" per ") {
            (c.to_string(), tm.to_string())
        } else if let Some(stripped) = t.strip_suffix("-1") {
            match stripped.trim().rsplit_once(' ') {
                Some((c, tm)) => (c.to_string(), tm.to_string()),
                None => return Err(rate_message(text)),
            }
        } else {
            return Err(rate_message(text));
        };
        let concentration = ConcentrationUnit::parse(&conc).map_err(|_| rate_message(text))?;
        let time = TimeUnit::parse(&time).map_err(|_| rate_message(text))?;
        Ok(RateUnit { concentration, time })
    }

    /// The unit written as `µM/min`.
    pub fn symbol(self) -> String {
        format!("{}/{}", self.concentration.symbol(), self.time.symbol())
    }
}

impl fmt::Display for RateUnit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.symbol())
    }
}

fn rate_message(text: &str) -> String {
    format!(
        "unknown rate unit '{}'; expected a concentration per time such as µM/min, nM/s or mM/h",
        text.trim()
    )
}

/// Lower-cases and folds the micro sign and Greek mu to `u`.
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

/// Turnover number kcat in s⁻¹ from Vmax in `rate` units and the total
/// enzyme concentration in `enzyme_unit`.
pub fn kcat_per_second(vmax: f64, rate: RateUnit, enzyme: f64, enzyme_unit: ConcentrationUnit) -> f64 {
    vmax * rate.in_molar_per_second() / (enzyme * enzyme_unit.in_molar())
}

/// A conversion factor between time units (a ratio of 1, 60 and 3600 s)
/// as a person writes it: `× 60` or `÷ 60`.
pub(crate) fn factor_words(factor: f64) -> String {
    if factor >= 1.0 {
        format!("× {}", factor.round())
    } else {
        format!("÷ {}", (1.0 / factor).round())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn concentration_units() {
        let cases = [
            ("M", Ok(ConcentrationUnit::Molar)),
            ("mM", Ok(ConcentrationUnit::Millimolar)),
            ("µM", Ok(ConcentrationUnit::Micromolar)),
            ("μM", Ok(ConcentrationUnit::Micromolar)),
            ("uM", Ok(ConcentrationUnit::Micromolar)),
            ("umol/L", Ok(ConcentrationUnit::Micromolar)),
            ("nM", Ok(ConcentrationUnit::Nanomolar)),
            ("pM", Ok(ConcentrationUnit::Picomolar)),
            ("MM", Err(())),
            ("m", Err(())),
            ("ppm", Err(())),
        ];
        for (text, expected) in cases {
            assert_eq!(ConcentrationUnit::parse(text).map_err(|_| ()), expected, "{text}");
        }
    }

    #[test]
    fn rate_units() {
        let um_min = RateUnit { concentration: ConcentrationUnit::Micromolar, time: TimeUnit::Minute };
        for text in ["µM/min", "uM/min", "µM min-1", "µM·min⁻¹", "uM per minute", " µM / min "] {
            assert_eq!(RateUnit::parse(text), Ok(um_min), "{text}");
        }
        assert!(RateUnit::parse("µM").is_err());
        assert!(RateUnit::parse("µmol/min/mg").is_err());
    }

    #[test]
    fn kcat_conversion() {
        // 6 µM/min with 10 nM enzyme: 1e-7 M/s / 1e-8 M = 10 s⁻¹.
        let rate = RateUnit { concentration: ConcentrationUnit::Micromolar, time: TimeUnit::Minute };
        let kcat = kcat_per_second(6.0, rate, 10.0, ConcentrationUnit::Nanomolar);
        assert!((kcat - 10.0).abs() < 1e-12, "{kcat}");
    }
}
