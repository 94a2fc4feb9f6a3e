//! Concentration, time and rate units, and the conversions that kcat and
//! kcat/Km need.
//!
//! Only molar concentrations are handled: kcat needs the rate and the enzyme
//! concentration in the same amount-of-substance terms. A rate unit is a
//! concentration per time, written `µM/min`, `uM min-1`, `µM·min⁻¹` or
//! `µM per min`. The rate analysis also reads rates given per mass of
//! protein, specific activities such as `µmol/min/mg` or `U/mg`
//! ([`SpecificRateUnit`]), with [`VUnit`] the unit of v either way.

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

/// An amount of substance, the numerator of a specific activity.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum AmountUnit {
    /// mol
    Mole,
    /// 10⁻³ mol
    Millimole,
    /// 10⁻⁶ mol
    Micromole,
    /// 10⁻⁹ mol
    Nanomole,
    /// 10⁻¹² mol
    Picomole,
}

/// A unit given by one table: each unit with its size in the base unit
/// (mol, g), its written symbol and the form `read` compares (lower case,
/// micro as `u`).
trait UnitTable: Copy + PartialEq + 'static {
    const TABLE: &'static [(Self, f64, &'static str, &'static str)];

    fn entry(self) -> &'static (Self, f64, &'static str, &'static str) {
        Self::TABLE.iter().find(|e| e.0 == self).expect("every unit is in its table")
    }

    fn read(normalised: &str) -> Option<Self> {
        Self::TABLE.iter().find(|e| e.3 == normalised).map(|e| e.0)
    }
}

impl UnitTable for AmountUnit {
    const TABLE: &'static [(Self, f64, &'static str, &'static str)] = &[
        (AmountUnit::Mole, 1.0, "mol", "mol"),
        (AmountUnit::Millimole, 1e-3, "mmol", "mmol"),
        (AmountUnit::Micromole, 1e-6, "µmol", "umol"),
        (AmountUnit::Nanomole, 1e-9, "nmol", "nmol"),
        (AmountUnit::Picomole, 1e-12, "pmol", "pmol"),
    ];
}

impl AmountUnit {
    /// How many mol one of this unit is.
    pub fn in_moles(self) -> f64 {
        self.entry().1
    }

    /// The symbol used in output (`µmol` with the micro sign).
    pub fn symbol(self) -> &'static str {
        self.entry().2
    }
}

/// A mass of protein, the last part of a specific activity.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum MassUnit {
    /// g
    Gram,
    /// 10⁻³ g
    Milligram,
    /// 10⁻⁶ g
    Microgram,
}

impl UnitTable for MassUnit {
    const TABLE: &'static [(Self, f64, &'static str, &'static str)] =
        &[(MassUnit::Gram, 1.0, "g", "g"), (MassUnit::Milligram, 1e-3, "mg", "mg"), (MassUnit::Microgram, 1e-6, "µg", "ug")];
}

impl MassUnit {
    /// How many grams one of this unit is.
    pub fn in_grams(self) -> f64 {
        self.entry().1
    }

    /// The symbol used in output.
    pub fn symbol(self) -> &'static str {
        self.entry().2
    }
}

/// A specific activity: an amount of product (or substrate) per time per
/// mass of protein, such as µmol min⁻¹ mg⁻¹. One enzyme unit (U) is
/// 1 µmol/min, so `U/mg` is µmol/min/mg and `mU/mg` nmol/min/mg (common
/// practice, no source).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub struct SpecificRateUnit {
    /// The amount part.
    pub amount: AmountUnit,
    /// The time part.
    pub time: TimeUnit,
    /// The protein's mass part.
    pub mass: MassUnit,
}

impl SpecificRateUnit {
    /// How many mol s⁻¹ g⁻¹ one of this unit is.
    pub fn in_mol_per_second_per_gram(self) -> f64 {
        self.amount.in_moles() / self.time.in_seconds() / self.mass.in_grams()
    }

    /// Reads `µmol/min/mg`, `umol/mg/min`, `nmol/(min·mg)`,
    /// `µmol min-1 mg-1`, `µmol·min⁻¹·mg⁻¹`, `U/mg`, `mU/mg` and `U mg-1`,
    /// each also with a last word `protein` (`nmol/min/mg protein`).
    pub fn parse(text: &str) -> Result<Self, String> {
        let refused = || {
            format!(
                "unknown specific activity unit '{}'; expected an amount per time per mass of protein such as µmol/min/mg, nmol/min/mg or U/mg",
                text.trim()
            )
        };
        let t = text
            .trim()
            .replace("⁻¹", "-1")
            .replace(['\u{00b7}', '⋅', '*', '(', ')'], " ");
        // The numerator and the parts it is divided by, each folded.
        // A last word `protein` (`nmol/min/mg protein`) says what the mass
        // is of, as lab sheets often write it.
        let t = match t.trim_end().rsplit_once(char::is_whitespace) {
            Some((rest, last)) if last.eq_ignore_ascii_case("protein") => rest.to_string(),
            _ => t,
        };
        let (numerator, divisors): (String, Vec<String>) = if t.contains('/') {
            let mut parts = t.split('/');
            let numerator = normalise(parts.next().unwrap_or(""));
            (numerator, parts.flat_map(|p| p.split_whitespace().map(normalise).collect::<Vec<_>>()).collect())
        } else {
            let mut words = t.split_whitespace();
            let numerator = normalise(words.next().unwrap_or(""));
            let mut divisors = Vec::new();
            for word in words {
                divisors.push(normalise(word.strip_suffix("-1").ok_or_else(refused)?));
            }
            (numerator, divisors)
        };
        // U, the enzyme unit, is µmol/min; mU is nmol/min.
        let (amount, unit_time) = match numerator.as_str() {
            "u" => (AmountUnit::Micromole, Some(TimeUnit::Minute)),
            "mu" => (AmountUnit::Nanomole, Some(TimeUnit::Minute)),
            other => (AmountUnit::read(other).ok_or_else(refused)?, None),
        };
        let mut time = unit_time;
        let mut mass = None;
        for divisor in &divisors {
            if let Some(m) = MassUnit::read(divisor) {
                if mass.replace(m).is_some() {
                    return Err(refused());
                }
            } else if let Ok(t) = TimeUnit::parse(divisor) {
                if time.replace(t).is_some() {
                    return Err(refused());
                }
            } else {
                return Err(refused());
            }
        }
        match (time, mass) {
            (Some(time), Some(mass)) => Ok(SpecificRateUnit { amount, time, mass }),
            _ => Err(refused()),
        }
    }

    /// The unit written as `µmol/min/mg`.
    pub fn symbol(self) -> String {
        format!("{}/{}/{}", self.amount.symbol(), self.time.symbol(), self.mass.symbol())
    }
}

/// The unit of v in the rate analysis: a concentration per time, or a
/// specific activity (per mass of protein).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum VUnit {
    /// A concentration per time, such as µM/min.
    Concentration(RateUnit),
    /// An amount per time per mass of protein, such as µmol/min/mg.
    Specific(SpecificRateUnit),
}

impl VUnit {
    /// Reads a concentration per time, else a specific activity; the
    /// refusal names both.
    pub fn parse(text: &str) -> Result<Self, String> {
        RateUnit::parse(text).map(VUnit::Concentration).or_else(|_| {
            SpecificRateUnit::parse(text).map(VUnit::Specific).map_err(|_| {
                format!(
                    "unknown rate unit '{}'; expected a concentration per time such as µM/min, nM/s or mM/h, or a specific activity such as µmol/min/mg or U/mg",
                    text.trim()
                )
            })
        })
    }

    /// The unit as written in output.
    pub fn symbol(self) -> String {
        match self {
            VUnit::Concentration(unit) => unit.symbol(),
            VUnit::Specific(unit) => unit.symbol(),
        }
    }
}

impl fmt::Display for VUnit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.symbol())
    }
}

/// A rate unit whose time part can be changed: what `rates per` converts
/// (written in output by its `Display`).
pub trait PerTime: Copy + fmt::Display {
    /// The time part.
    fn time(self) -> TimeUnit;
    /// The same unit per `time`.
    fn with_time(self, time: TimeUnit) -> Self;
}

impl PerTime for RateUnit {
    fn time(self) -> TimeUnit {
        self.time
    }
    fn with_time(self, time: TimeUnit) -> Self {
        RateUnit { time, ..self }
    }
}

impl PerTime for VUnit {
    fn time(self) -> TimeUnit {
        match self {
            VUnit::Concentration(unit) => unit.time,
            VUnit::Specific(unit) => unit.time,
        }
    }
    fn with_time(self, time: TimeUnit) -> Self {
        match self {
            VUnit::Concentration(unit) => VUnit::Concentration(unit.with_time(time)),
            VUnit::Specific(unit) => VUnit::Specific(SpecificRateUnit { time, ..unit }),
        }
    }
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
    fn specific_activity_units() {
        use AmountUnit::*;
        use MassUnit::*;
        let unit = |amount, time, mass| Ok(SpecificRateUnit { amount, time, mass });
        let cases = [
            ("µmol/min/mg", unit(Micromole, TimeUnit::Minute, Milligram)),
            ("umol/min/mg", unit(Micromole, TimeUnit::Minute, Milligram)),
            ("μmol/mg/min", unit(Micromole, TimeUnit::Minute, Milligram)),
            ("µmol min-1 mg-1", unit(Micromole, TimeUnit::Minute, Milligram)),
            ("µmol·min⁻¹·mg⁻¹", unit(Micromole, TimeUnit::Minute, Milligram)),
            ("nmol/(min·mg)", unit(Nanomole, TimeUnit::Minute, Milligram)),
            ("nmol/(mg min)", unit(Nanomole, TimeUnit::Minute, Milligram)),
            ("nmol/s/mg", unit(Nanomole, TimeUnit::Second, Milligram)),
            ("mmol/h/g", unit(Millimole, TimeUnit::Hour, Gram)),
            ("pmol/min/µg", unit(Picomole, TimeUnit::Minute, Microgram)),
            ("U/mg", unit(Micromole, TimeUnit::Minute, Milligram)),
            ("U mg-1", unit(Micromole, TimeUnit::Minute, Milligram)),
            ("mU/mg", unit(Nanomole, TimeUnit::Minute, Milligram)),
            ("nmol/min/mg protein", unit(Nanomole, TimeUnit::Minute, Milligram)),
            ("µmol min-1 mg-1 protein", unit(Micromole, TimeUnit::Minute, Milligram)),
            ("U/mg Protein", unit(Micromole, TimeUnit::Minute, Milligram)),
        ];
        for (text, expected) in cases {
            assert_eq!(SpecificRateUnit::parse(text), expected, "{text}");
        }
        // Not specific activities: a part missing, twice, or unknown.
        for text in ["µmol/min", "µmol/mg", "U/min/mg", "µmol/min/mg/mg", "µmol/min/mL", "µM/min", "µmol min mg", "U", "", "kat/kg", "U protein", "µmol/min protein", "protein"] {
            assert!(SpecificRateUnit::parse(text).is_err(), "{text}");
        }
        // 1 µmol/min/mg = 1e-6 mol / 60 s / 1e-3 g (by hand).
        let ua = SpecificRateUnit::parse("U/mg").unwrap();
        assert!((ua.in_mol_per_second_per_gram() - 1e-6 / 60.0 / 1e-3).abs() <= 1e-22);
        assert_eq!(ua.symbol(), "µmol/min/mg");
        assert_eq!(VUnit::parse("µM/min"), Ok(VUnit::Concentration(RateUnit { concentration: ConcentrationUnit::Micromolar, time: TimeUnit::Minute })));
        assert_eq!(VUnit::parse("nmol/min/mg").map(VUnit::symbol), Ok("nmol/min/mg".to_string()));
        assert!(VUnit::parse("ppm/min").unwrap_err().contains("or a specific activity such as µmol/min/mg or U/mg"));
    }

    #[test]
    fn kcat_conversion() {
        // 6 µM/min with 10 nM enzyme: 1e-7 M/s / 1e-8 M = 10 s⁻¹.
        let rate = RateUnit { concentration: ConcentrationUnit::Micromolar, time: TimeUnit::Minute };
        let kcat = kcat_per_second(6.0, rate, 10.0, ConcentrationUnit::Nanomolar);
        assert!((kcat - 10.0).abs() < 1e-12, "{kcat}");
    }
}
