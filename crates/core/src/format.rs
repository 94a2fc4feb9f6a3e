//! How Turnover prints an estimate, its standard error and its interval.
//!
//! **The rule.** The standard error is given to two significant figures;
//! the estimate and the ends of its interval are rounded to the same
//! decimal place as the standard error, so no digit is printed that the
//! data do not support (common practice, no source). When the largest of
//! |estimate|, standard error and |interval ends| is below 0.001 or at
//! least 100 000, all of them are written as mantissas times one shared
//! power of ten, `(1.235 ± 0.023)×10⁵`. A number that is missing or not
//! finite is never printed: the text says what is missing. Negative
//! numbers use the ASCII hyphen-minus so that copied results paste into
//! spreadsheets as numbers.
//!
//! Without a standard error, the estimate gets four significant figures;
//! an interval without one is rounded by its half-width as if that were
//! the standard error. A standard error of exactly zero leaves the
//! estimate at four significant figures too.

use serde::Serialize;

/// An estimate formatted by the rule.
#[derive(Clone, Debug, PartialEq, Eq, Serialize)]
pub struct FormattedEstimate {
    /// The estimate, or what is missing (`no estimate`).
    pub value: String,
    /// The standard error, or `None` when there is none.
    pub se: Option<String>,
    /// The lower end of the interval, or what is missing.
    pub low: Option<String>,
    /// The upper end of the interval, or what is missing.
    pub high: Option<String>,
    /// The shared power of ten, when scientific notation is used (the
    /// strings above then carry it too, as `×10ⁿ`).
    pub power: Option<i32>,
    /// Everything in one line: `212.7 ± 6.9`, `(1.235 ± 0.023)×10⁵`,
    /// `212.7 ± 6.9 (198.1 to 227.4)`.
    pub text: String,
}

/// Below this (and at or above [`LARGE`]) numbers are written with a power
/// of ten.
const SMALL: f64 = 1e-3;
const LARGE: f64 = 1e5;

/// Superscript digits for a power of ten (`-3` → `⁻³`), shared with the
/// plots' tick labels.
pub fn superscript(exponent: i32) -> String {
    exponent
        .to_string()
        .chars()
        .map(|c| match c {
            '-' => '⁻',
            '0' => '⁰',
            '1' => '¹',
            '2' => '²',
            '3' => '³',
            '4' => '⁴',
            '5' => '⁵',
            '6' => '⁶',
            '7' => '⁷',
            '8' => '⁸',
            _ => '⁹',
        })
        .collect()
}

fn finite(value: Option<f64>) -> Option<f64> {
    value.filter(|v| v.is_finite())
}

/// The decimal place (number of decimals; negative for tens, hundreds…)
/// that gives `spread` two significant figures after rounding.
fn decimals_for(spread: f64) -> i32 {
    let first = spread.abs().log10().floor() as i32;
    let decimals = 1 - first;
    // Rounding can carry into a new digit (0.0996 → 0.100); one place
    // fewer then gives the two figures (0.10).
    let rounded = round_to(spread, decimals);
    if rounded.abs() >= 10f64.powi(first + 1) {
        decimals - 1
    } else {
        decimals
    }
}

/// Four significant figures.
fn decimals_for_value(value: f64) -> i32 {
    if value == 0.0 {
        0
    } else {
        3 - value.abs().log10().floor() as i32
    }
}

fn round_to(value: f64, decimals: i32) -> f64 {
    if decimals >= 0 {
        format!("{value:.*}", decimals as usize).parse().unwrap_or(value)
    } else {
        let unit = 10f64.powi(-decimals);
        (value / unit).round() * unit
    }
}

/// `value` with `decimals` decimals (rounded to tens, hundreds… when
/// negative), never `-0`.
fn fixed(value: f64, decimals: i32) -> String {
    let text = if decimals >= 0 { format!("{value:.*}", decimals as usize) } else { format!("{:.0}", round_to(value, decimals)) };
    if text.trim_start_matches('-').chars().all(|c| c == '0' || c == '.') {
        text.trim_start_matches('-').to_string()
    } else {
        text
    }
}

/// The shared power of ten for these numbers, when one is needed.
fn shared_power(numbers: &[f64]) -> Option<i32> {
    let largest = numbers.iter().map(|v| v.abs()).fold(0.0, f64::max);
    (largest > 0.0 && !(SMALL..LARGE).contains(&largest)).then(|| largest.log10().floor() as i32)
}

/// Formats an estimate with its standard error and, when given, its
/// interval, by the rule in the module documentation.
pub fn format_estimate(value: Option<f64>, se: Option<f64>, interval: Option<(Option<f64>, Option<f64>)>) -> FormattedEstimate {
    let (value, se) = (finite(value), finite(se).map(f64::abs));
    let (low, high) = match interval {
        Some((low, high)) => (Some(finite(low)), Some(finite(high))),
        None => (None, None),
    };
    let present: Vec<f64> = [value, se, low.flatten(), high.flatten()].into_iter().flatten().collect();
    let power = shared_power(&present);
    let scale = power.map_or(1.0, |p| 10f64.powi(p));
    let suffix = power.map_or(String::new(), |p| format!("×10{}", superscript(p)));
    // The decimal place, in the scaled numbers.
    let spread = se.filter(|s| *s > 0.0).or_else(|| match (low.flatten(), high.flatten()) {
        (Some(l), Some(h)) if h > l => Some((h - l) / 2.0),
        _ => None,
    });
    let decimals = match (spread, value) {
        (Some(s), _) => decimals_for(s / scale),
        (None, Some(v)) => decimals_for_value(v / scale),
        (None, None) => present.first().map_or(0, |v| decimals_for_value(v / scale)),
    };
    let number = |v: f64| fixed(v / scale, decimals);
    let value_text = value.map(number);
    let se_text = se.map(|s| if s == 0.0 { "0".to_string() } else { fixed(s / scale, decimals_for(s / scale)) });
    let end = |end: Option<Option<f64>>, missing: &str| end.map(|e| e.map(number).unwrap_or_else(|| missing.to_string()));
    let (low_text, high_text) = (end(low, "no lower limit"), end(high, "no upper limit"));

    let with_suffix = |s: &String| if s.chars().next().is_some_and(|c| c.is_ascii_digit() || c == '-') { format!("{s}{suffix}") } else { s.clone() };
    let mut text = match (&value_text, &se_text) {
        (Some(v), Some(s)) if power.is_some() => format!("({v} ± {s}){suffix}"),
        (Some(v), Some(s)) => format!("{v} ± {s}"),
        (Some(v), None) => format!("{} (no standard error)", with_suffix(v)),
        (None, _) => "no estimate".to_string(),
    };
    if let (Some(l), Some(h)) = (&low_text, &high_text) {
        text.push_str(&format!(" ({} to {})", with_suffix(l), with_suffix(h)));
    }
    FormattedEstimate {
        value: value_text.as_ref().map(with_suffix).unwrap_or_else(|| "no estimate".to_string()),
        se: se_text.as_ref().map(with_suffix),
        low: low_text.as_ref().map(with_suffix),
        high: high_text.as_ref().map(with_suffix),
        power,
        text,
    }
}

/// Formats an interval alone, rounded to the decimal place of `se` (or of
/// its half-width when `se` is missing).
pub fn format_interval(low: Option<f64>, high: Option<f64>, se: Option<f64>) -> FormattedEstimate {
    let mut formatted = format_estimate(None, se, Some((low, high)));
    formatted.value = String::new();
    formatted.text = match (&formatted.low, &formatted.high) {
        (Some(l), Some(h)) => format!("{l} to {h}"),
        _ => String::new(),
    };
    formatted
}

/// One line per parameter, `name = value ± se unit`, by the rule: the
/// text block a figure prints beside its plot. Derived parameters are
/// included; the interval is not (a figure legend says which it is).
pub fn constants_text(parameters: &[crate::fit::ParameterEstimate]) -> String {
    parameters
        .iter()
        .map(|p| {
            let formatted = format_estimate(Some(p.value), p.std_error, None);
            let unit = p.unit.as_deref().filter(|u| !u.is_empty()).map(|u| format!(" {u}")).unwrap_or_default();
            if formatted.se.is_some() {
                format!("{} = {}{unit}", p.name, formatted.text)
            } else {
                format!("{} = {}{unit} (no standard error)", p.name, formatted.value)
            }
        })
        .collect::<Vec<_>>()
        .join("\n")
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `value ± se (low to high)` as printed, one case a line.
    #[test]
    fn the_rule_in_a_table() {
        let table: &[(Option<f64>, Option<f64>, Option<(Option<f64>, Option<f64>)>, &str)] = &[
            (Some(212.68), Some(6.947), None, "212.7 ± 6.9"),
            (Some(0.064121), Some(0.0082809), None, "0.0641 ± 0.0083"),
            // The interval to the estimate's decimal place.
            (Some(212.68), Some(6.947), Some((Some(198.123), Some(227.4))), "212.7 ± 6.9 (198.1 to 227.4)"),
            // Rounding the SE carries into a new digit: still two figures.
            (Some(1.0), Some(0.0996), None, "1.00 ± 0.10"),
            (Some(5.0), Some(9.96), None, "5 ± 10"),
            // SE in the tens and hundreds: the estimate rounded there too.
            (Some(56789.0), Some(1234.0), None, "56800 ± 1200"),
            // Large and tiny: one shared power of ten.
            (Some(123456.0), Some(2345.0), None, "(1.235 ± 0.023)×10⁵"),
            (Some(3.21e-6), Some(4.5e-8), None, "(3.210 ± 0.045)×10⁻⁶"),
            (Some(3.21e-6), Some(4.5e-8), Some((Some(3.1e-6), Some(3.3e-6))), "(3.210 ± 0.045)×10⁻⁶ (3.100×10⁻⁶ to 3.300×10⁻⁶)"),
            // The largest number decides the notation, an interval's end
            // included, so the estimate and its interval never differ.
            (Some(0.0008), Some(0.0002), None, "(8.0 ± 2.0)×10⁻⁴"),
            (Some(0.0008), Some(0.0002), Some((Some(0.0004), Some(0.0012))), "0.00080 ± 0.00020 (0.00040 to 0.00120)"),
            // Negative estimates and interval ends.
            (Some(-0.5432), Some(0.0123), Some((Some(-0.57), Some(-0.516))), "-0.543 ± 0.012 (-0.570 to -0.516)"),
            (Some(-0.0004), Some(0.3), None, "0.00 ± 0.30"),
            // Zero and missing SE: four significant figures.
            (Some(5.5), Some(0.0), None, "5.500 ± 0"),
            (Some(212.68), None, None, "212.7 (no standard error)"),
            (Some(212.68), Some(f64::NAN), None, "212.7 (no standard error)"),
            (Some(212.68), None, Some((Some(190.0), Some(230.0))), "213 (no standard error) (190 to 230)"),
            // Nothing non-finite is printed.
            (None, Some(1.0), None, "no estimate"),
            (Some(f64::INFINITY), Some(1.0), None, "no estimate"),
            (Some(2.5), Some(0.31), Some((Some(1.9), Some(f64::INFINITY))), "2.50 ± 0.31 (1.90 to no upper limit)"),
            (Some(2.5), Some(0.31), Some((None, Some(3.1))), "2.50 ± 0.31 (no lower limit to 3.10)"),
        ];
        for (value, se, interval, expected) in table {
            assert_eq!(format_estimate(*value, *se, *interval).text, *expected, "{value:?} ± {se:?} {interval:?}");
        }
    }

    #[test]
    fn parts_carry_the_shared_power() {
        let f = format_estimate(Some(123456.0), Some(2345.0), None);
        assert_eq!((f.value.as_str(), f.se.as_deref(), f.power), ("1.235×10⁵", Some("0.023×10⁵"), Some(5)));
        let f = format_estimate(Some(212.68), Some(6.947), None);
        assert_eq!((f.value.as_str(), f.se.as_deref(), f.power), ("212.7", Some("6.9"), None));
    }

    #[test]
    fn constants_for_a_figure() {
        let p = |name: &str, value: f64, se: Option<f64>, unit: Option<&str>| crate::fit::ParameterEstimate {
            name: name.into(),
            value,
            std_error: se,
            ci_low: None,
            ci_high: None,
            unit: unit.map(String::from),
            derived: false,
            ci_method: "asymptotic".into(),
            flag: None,
            bias: None,
            value_bias_corrected: None,
        };
        let text = constants_text(&[
            p("Vmax", 212.68, Some(6.947), Some("µM/min")),
            p("Km", 0.064121, Some(0.0082809), Some("mM")),
            p("kcat/Km", 123456.0, Some(2345.0), Some("M⁻¹ s⁻¹")),
            p("n", 1.0, None, None),
            p("h", 2.5, None, Some("s")),
        ]);
        assert_eq!(text, "Vmax = 212.7 ± 6.9 µM/min\nKm = 0.0641 ± 0.0083 mM\nkcat/Km = (1.235 ± 0.023)×10⁵ M⁻¹ s⁻¹\nn = 1.000 (no standard error)\nh = 2.500 s (no standard error)");
    }

    #[test]
    fn intervals_alone() {
        assert_eq!(format_interval(Some(198.123), Some(227.4), Some(6.947)).text, "198.1 to 227.4");
        assert_eq!(format_interval(Some(0.51234), Some(0.6789), None).text, "0.512 to 0.679");
        assert_eq!(format_interval(Some(f64::NAN), Some(3.0), Some(0.2)).text, "no lower limit to 3.00");
    }
}
