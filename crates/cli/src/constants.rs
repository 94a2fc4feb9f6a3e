//! Constants as the command line prints them.
//!
//! Text for a person goes through the core's number formatting rule
//! ([`turnover_core::format::format_estimate`]): the standard error to two
//! significant figures, the estimate and the interval ends to the standard
//! error's decimal place, one shared power of ten outside 0.001–100 000.
//! The page prints the same strings, so a constant reads the same in both.
//! CSV and TSV carry every number at full precision instead (the shortest
//! decimal that reads back as the same double), one row per constant, for
//! a spreadsheet or a script.

use crate::batch::{cell, separator, Format};
use turnover_core::fit::ParameterEstimate;
use turnover_core::format::format_estimate;

/// The value and the standard error as two strings by the rule, for a
/// table with a column each (`—` where there is no standard error).
pub(crate) fn value_and_error_columns(value: Option<f64>, se: Option<f64>) -> (String, String) {
    let f = format_estimate(value, se, None);
    (f.value, f.se.unwrap_or_else(|| "—".to_string()))
}

/// A value with no standard error at all (a median, a plateau), by the
/// rule's four significant figures.
pub(crate) fn plain(value: Option<f64>) -> String {
    format_estimate(value, None, None).value
}

/// `name = value ± se unit`, the form of the page's constants block.
pub(crate) fn constant(p: &ParameterEstimate) -> String {
    let unit = p.unit.as_deref().filter(|u| !u.is_empty()).map(|u| format!(" {u}")).unwrap_or_default();
    let f = format_estimate(Some(p.value), p.std_error, None);
    match f.se {
        Some(_) => format!("{} = {}{unit}", p.name, f.text),
        None => format!("{} = {}{unit} (no standard error)", p.name, f.value),
    }
}

/// The interval of `p` by the rule, rounded to its standard error's
/// decimal place, or `None` when it has no interval at all.
pub(crate) fn interval(p: &ParameterEstimate) -> Option<String> {
    if p.ci_low.is_none() && p.ci_high.is_none() {
        return None;
    }
    let f = format_estimate(Some(p.value), p.std_error, Some((p.ci_low, p.ci_high)));
    Some(format!(
        "{} to {}",
        f.low.unwrap_or_else(|| "no lower limit".to_string()),
        f.high.unwrap_or_else(|| "no upper limit".to_string())
    ))
}

/// The estimated small-sample bias counts as worth a line of its own when
/// it exceeds this fraction of the standard error (Turnover's choice:
/// below it the correction changes at most the last printed digit or so).
pub(crate) const BIAS_SHOWN_ABOVE_SE: f64 = 0.1;

/// `bias-corrected value 1.97 mM (estimated bias +0.04)` by the rule (both
/// rounded to the standard error's decimal place), when the constant has
/// a bias larger than [`BIAS_SHOWN_ABOVE_SE`] of its standard error.
pub(crate) fn bias_line(p: &ParameterEstimate) -> Option<String> {
    let (bias, corrected, se) = (p.bias?, p.value_bias_corrected?, p.std_error?);
    if bias.abs() <= BIAS_SHOWN_ABOVE_SE * se {
        return None;
    }
    let unit = p.unit.as_deref().filter(|u| !u.is_empty()).map(|u| format!(" {u}")).unwrap_or_default();
    let value = format_estimate(Some(corrected), Some(se), None).value;
    let shift = format_estimate(Some(bias), Some(se), None).value;
    let sign = if shift.starts_with('-') { "" } else { "+" };
    Some(format!("bias-corrected value {value}{unit} (estimated bias {sign}{shift})"))
}

/// One line per constant: `Km = 0.0641 ± 0.0083 mM`, padded so that the
/// intervals line up, then `95% interval 0.0470 to 0.0812` (with the
/// method when it differs from `method`, the one the heading names), then
/// the flag, if any; under it, indented, the bias-corrected value when
/// [`bias_line`] gives one.
pub(crate) fn constants_block(parameters: &[ParameterEstimate], level: f64, method: &str) -> String {
    let left: Vec<String> = parameters.iter().map(constant).collect();
    let width = left.iter().map(|l| l.chars().count()).max().unwrap_or(0);
    let mut out = String::new();
    for (p, left) in parameters.iter().zip(&left) {
        let mut line = left.clone();
        if let Some(interval) = interval(p) {
            let pad = width - left.chars().count();
            line.push_str(&" ".repeat(pad + 3));
            line.push_str(&format!("{level}% interval {interval}"));
            if p.ci_method != method {
                line.push_str(&format!(" ({})", p.ci_method));
            }
        }
        if let Some(flag) = &p.flag {
            line.push_str(&format!("  [{}]", flag.replace('_', " ")));
        }
        out.push_str(line.trim_end());
        out.push('\n');
        if let Some(bias) = bias_line(p) {
            out.push_str(&format!("    {bias}\n"));
        }
    }
    out
}

/// A number at full precision (the shortest decimal that reads back as the
/// same double), empty when absent.
fn full(value: Option<f64>) -> String {
    value.filter(|v| v.is_finite()).map_or(String::new(), |v| format!("{v}"))
}

/// The constants as CSV or TSV: a header, then one row per constant with
/// its value, standard error, interval ends and unit at full precision,
/// whether it is derived, how its interval was computed, its flag, and its
/// estimated small-sample bias and bias-corrected value (empty when not
/// computed).
pub(crate) fn constants_rows(parameters: &[ParameterEstimate], format: Format) -> String {
    let sep = separator(format).to_string();
    let mut out =
        ["parameter", "value", "se", "low", "high", "unit", "derived", "interval", "flag", "bias", "bias_corrected"].join(&sep);
    out.push('\n');
    for p in parameters {
        let cells = [
            cell(&p.name, format),
            full(Some(p.value)),
            full(p.std_error),
            full(p.ci_low),
            full(p.ci_high),
            cell(p.unit.as_deref().unwrap_or(""), format),
            p.derived.to_string(),
            cell(&p.ci_method, format),
            cell(p.flag.as_deref().unwrap_or(""), format),
            full(p.bias),
            full(p.value_bias_corrected),
        ];
        out.push_str(&cells.join(&sep));
        out.push('\n');
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn p(name: &str, value: f64, se: Option<f64>, ci: (Option<f64>, Option<f64>), unit: &str) -> ParameterEstimate {
        ParameterEstimate {
            name: name.into(),
            value,
            std_error: se,
            ci_low: ci.0,
            ci_high: ci.1,
            unit: Some(unit.into()),
            derived: false,
            ci_method: "asymptotic".into(),
            flag: None,
            bias: None,
            value_bias_corrected: None,
        }
    }

    /// The lines by the rule (SE 0.0082809 → 0.0083, to 4 decimals; the
    /// estimate and the interval ends to 4 decimals too).
    #[test]
    fn lines_follow_the_rule() {
        let block = constants_block(
            &[
                p("Vmax", 212.68, Some(6.947), (Some(198.123), Some(227.4)), "µM/min"),
                p("Km", 0.064121, Some(0.0082809), (Some(0.04702), None), "mM"),
            ],
            95.0,
            "asymptotic",
        );
        assert_eq!(
            block,
            "Vmax = 212.7 ± 6.9 µM/min   95% interval 198.1 to 227.4\nKm = 0.0641 ± 0.0083 mM     95% interval 0.0470 to no upper limit\n"
        );
    }

    #[test]
    fn rows_keep_full_precision_and_quote() {
        let rows = constants_rows(&[p("K, apparent", 0.1 + 0.2, Some(1.0 / 3.0), (None, Some(2.5)), "µM")], Format::Csv);
        assert_eq!(rows, "parameter,value,se,low,high,unit,derived,interval,flag,bias,bias_corrected\n\"K, apparent\",0.30000000000000004,0.3333333333333333,,2.5,µM,false,asymptotic,,,\n");
        let mut km = p("Km", 2.0, None, (None, None), "µM");
        km.set_bias(Some(0.25));
        let rows = constants_rows(&[km], Format::Tsv);
        assert_eq!(rows.lines().nth(1), Some("Km\t2\t\t\t\tµM\tfalse\tasymptotic\t\t0.25\t1.75"));
    }

    /// The bias-corrected line, by hand: SE 0.33 puts everything at two
    /// decimals, so 2.05 − 0.042 = 2.008 prints as 2.01 and the bias as
    /// +0.04; a bias of 0.033 (exactly a tenth of the SE) is not shown,
    /// nor one that was not computed.
    #[test]
    fn bias_line_above_a_tenth_of_the_standard_error() {
        let mut km = p("Km", 2.05, Some(0.33), (Some(1.3), Some(2.8)), "mM");
        km.set_bias(Some(0.042));
        assert_eq!(bias_line(&km).as_deref(), Some("bias-corrected value 2.01 mM (estimated bias +0.04)"));
        let block = constants_block(&[km.clone()], 95.0, "asymptotic");
        assert_eq!(block, "Km = 2.05 ± 0.33 mM   95% interval 1.30 to 2.80\n    bias-corrected value 2.01 mM (estimated bias +0.04)\n");
        km.set_bias(Some(-0.05));
        assert_eq!(bias_line(&km).as_deref(), Some("bias-corrected value 2.10 mM (estimated bias -0.05)"));
        km.set_bias(Some(0.033));
        assert_eq!(bias_line(&km), None);
        km.set_bias(None);
        assert_eq!(bias_line(&km), None);
    }
}
