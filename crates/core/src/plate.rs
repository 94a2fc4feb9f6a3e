//! Plate normalisation and assay quality for screening tables.
//!
//! A `role` column marks control wells: `high` (no inhibitor: full
//! activity) and `low` (full inhibition, or no enzyme: background); other
//! rows (`sample` or empty) are the wells to normalise. An optional `plate`
//! column groups wells into plates; without it the table is one plate.
//! Each plate's signals become % activity,
//! `100 · (x − mean(low)) / (mean(high) − mean(low))`, from that plate's
//! own controls (common practice, no source).
//!
//! Quality per plate, from the controls' means μ and sample standard
//! deviations σ (n − 1 in the denominator):
//!
//! - Z′ = 1 − 3(σ_high + σ_low) / |μ_high − μ_low| (Zhang, Chung &
//!   Oldenburg 1999, J. Biomol. Screen. 4, 67); a plate below 0.5 is
//!   flagged (common practice, no source).
//! - the signal window (|μ_high − μ_low| − 3(σ_high + σ_low)) / σ_high and
//!   the signal-to-background ratio μ_high / μ_low (common practice, no
//!   source).
//!
//! [`normalise_plates`] returns the table with the control rows blanked and
//! the signal column replaced by `% activity`, keeping every line where it
//! was, so the batch fit reports problems at the original lines.

use crate::error::Error;
use crate::read::columns::is_inhibitor_name;
use crate::read::columns::normalise_name;
use crate::table::{detect_separator, is_comment_line, parse_heading, parse_table, split_line, Separator};
use serde::Serialize;

/// Z′ below this flags a plate (common practice, no source).
pub const Z_PRIME_LIMIT: f64 = 0.5;

/// The mean and spread of one kind of control well on one plate.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ControlSummary {
    /// Number of wells.
    pub n: usize,
    /// Mean signal.
    pub mean: f64,
    /// Sample standard deviation (n − 1); `None` with one well.
    pub sd: Option<f64>,
}

/// One plate's controls and quality.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PlateQuality {
    /// The plate's name (empty when the table has no `plate` column).
    pub plate: String,
    /// The high controls (no inhibition).
    pub high: ControlSummary,
    /// The low controls (full inhibition or background).
    pub low: ControlSummary,
    /// Z′ (Zhang, Chung & Oldenburg 1999); `None` without two wells of each.
    pub z_prime: Option<f64>,
    /// (|μ_high − μ_low| − 3(σ_high + σ_low)) / σ_high.
    pub signal_window: Option<f64>,
    /// μ_high / μ_low.
    pub signal_to_background: Option<f64>,
    /// Why the plate is flagged, when it is.
    pub flag: Option<String>,
}

/// The table with % activity and the plates' quality.
#[derive(Clone, Debug, PartialEq)]
pub struct Normalised {
    /// The table: control rows blank, the role and plate columns dropped
    /// and the signal column replaced by `% activity`, every line where it
    /// was (a name on two plates is then one curve).
    pub text: String,
    /// One record per plate, in the order plates first appear.
    pub plates: Vec<PlateQuality>,
}

fn is_signal_name(name: &str) -> bool {
    matches!(
        normalise_name(name).as_str(),
        "signal" | "response" | "activity" | "y" | "rfu" | "counts" | "od" | "absorbance" | "fluorescence" | "luminescence" | "v" | "rate"
    )
}

/// Normalises every plate's signals to % activity by its controls.
pub fn normalise_plates(text: &str) -> Result<Normalised, Error> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let raw: Vec<&str> = text.split('\n').map(|l| l.strip_suffix('\r').unwrap_or(l)).collect();
    let data: Vec<usize> = (0..raw.len()).filter(|&k| !raw[k].trim().is_empty() && !is_comment_line(raw[k])).collect();
    let Some(&header_index) = data.first() else {
        return Err(Error::invalid_data("no data rows found; normalisation needs a header with a role column"));
    };
    let separator = detect_separator(data.iter().map(|&k| raw[k]));
    let headings: Vec<String> = split_line(raw[header_index], separator).0.iter().map(|c| parse_heading(c).name).collect();
    let find = |test: &dyn Fn(&str) -> bool| headings.iter().position(|h| test(h));
    let role = find(&|h| normalise_name(h) == "role")
        .ok_or_else(|| Error::invalid_data("normalisation needs a 'role' column marking the high and low control wells"))?;
    let plate = find(&|h| normalise_name(h) == "plate");
    let signal = find(&|h| is_signal_name(h)).ok_or_else(|| {
        Error::invalid_data(format!(
            "no signal column found among {}; name it signal, response, activity, rfu, counts, od or absorbance",
            headings.join(", ")
        ))
    })?;
    if find(&|h| is_inhibitor_name(h)).is_none() && !headings.iter().any(|h| matches!(normalise_name(h).as_str(), "conc" | "concentration")) {
        return Err(Error::invalid_data("no [I] column found; name the inhibitor concentration [I], inhibitor or conc"));
    }
    let numbers = parse_table(text);
    let signals: std::collections::HashMap<usize, f64> =
        numbers.rows.iter().filter_map(|r| r.cells.get(signal).copied().flatten().map(|v| (r.line, v))).collect();
    let value_at = |line: usize| -> Option<f64> { signals.get(&line).copied() };
    // First pass: the controls of each plate.
    let mut plates: Vec<(String, Vec<f64>, Vec<f64>)> = Vec::new();
    let mut roles = Vec::with_capacity(data.len());
    for &k in &data[1..] {
        let (cells, _) = split_line(raw[k], separator);
        let role_text = cells.get(role).map(|c| normalise_name(c)).unwrap_or_default();
        let plate_name = plate.and_then(|p| cells.get(p)).map(|c| c.trim().to_string()).unwrap_or_default();
        let kind = match role_text.as_str() {
            "high" | "highcontrol" | "max" | "positive" => Role::High,
            "low" | "lowcontrol" | "min" | "negative" | "background" | "blank" => Role::Low,
            "" | "sample" | "test" | "compound" => Role::Sample,
            other => {
                return Err(Error::invalid_data(format!(
                    "line {}: role '{other}' is not high, low or sample",
                    k + 1
                )))
            }
        };
        let index = match plates.iter().position(|p| p.0 == plate_name) {
            Some(i) => i,
            None => {
                plates.push((plate_name.clone(), Vec::new(), Vec::new()));
                plates.len() - 1
            }
        };
        if kind != Role::Sample {
            let value = value_at(k + 1).ok_or_else(|| Error::invalid_data(format!("line {}: a control well without a readable signal", k + 1)))?;
            if kind == Role::High {
                plates[index].1.push(value);
            } else {
                plates[index].2.push(value);
            }
        }
        roles.push((k, kind, index));
    }
    let mut quality = Vec::new();
    for (name, high, low) in &plates {
        if high.is_empty() || low.is_empty() {
            return Err(Error::invalid_data(format!(
                "plate '{name}' needs at least one high and one low control well to be normalised"
            )));
        }
        quality.push(plate_quality(name, high, low));
    }
    // Second pass: the table with % activity.
    let join = |cells: Vec<String>| cells.join(&sep_char(separator).to_string());
    let mut out: Vec<String> = raw.iter().map(|_| String::new()).collect();
    let header_cells: Vec<String> = split_line(raw[header_index], separator)
        .0
        .iter()
        .enumerate()
        .filter(|(c, _)| *c != role && Some(*c) != plate)
        .map(|(c, cell)| if c == signal { "% activity".to_string() } else { quote(cell, separator) })
        .collect();
    out[header_index] = join(header_cells);
    for (k, kind, index) in roles {
        if kind != Role::Sample {
            continue;
        }
        let (cells, _) = split_line(raw[k], separator);
        let (high, low) = (quality[index].high.mean, quality[index].low.mean);
        let percent = value_at(k + 1).map(|x| 100.0 * (x - low) / (high - low));
        out[k] = join(
            cells
                .iter()
                .enumerate()
                .filter(|(c, _)| *c != role && Some(*c) != plate)
                .map(|(c, cell)| if c == signal { percent.map_or_else(|| quote(cell, separator), |p| format!("{p}")) } else { quote(cell, separator) })
                .collect(),
        );
    }
    Ok(Normalised { text: out.join("\n"), plates: quality })
}

#[derive(Clone, Copy, PartialEq, Eq)]
enum Role {
    High,
    Low,
    Sample,
}

fn sep_char(separator: Separator) -> char {
    match separator {
        Separator::Comma => ',',
        Separator::Semicolon => ';',
        Separator::Tab | Separator::Whitespace => '\t',
    }
}

fn quote(cell: &str, separator: Separator) -> String {
    if cell.contains(sep_char(separator)) || cell.starts_with('"') {
        format!("\"{}\"", cell.replace('"', "\"\""))
    } else {
        cell.to_string()
    }
}

fn summary(values: &[f64]) -> ControlSummary {
    let n = values.len();
    let mean = values.iter().sum::<f64>() / n as f64;
    let sd = (n > 1).then(|| (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt());
    ControlSummary { n, mean, sd }
}

/// Z′, the signal window and the flag of one plate (see the module
/// documentation for the formulas and their sources).
pub fn plate_quality(name: &str, high: &[f64], low: &[f64]) -> PlateQuality {
    let (h, l) = (summary(high), summary(low));
    let gap = (h.mean - l.mean).abs();
    let (z_prime, signal_window) = match (h.sd, l.sd) {
        (Some(sh), Some(sl)) if gap > 0.0 => (Some(1.0 - 3.0 * (sh + sl) / gap), (sh > 0.0).then(|| (gap - 3.0 * (sh + sl)) / sh)),
        _ => (None, None),
    };
    let signal_to_background = (l.mean != 0.0).then(|| h.mean / l.mean);
    let flag = match z_prime {
        Some(z) if z < Z_PRIME_LIMIT => Some(format!(
            "Z′ = {z:.3} is below {Z_PRIME_LIMIT} (common practice, no source): the controls overlap too much for single-well decisions"
        )),
        None => Some("Z′ needs at least two high and two low control wells and different means".to_string()),
        _ => None,
    };
    PlateQuality { plate: name.to_string(), high: h, low: l, z_prime, signal_window, signal_to_background, flag }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Two invented plates. Hand computation, plate P1: high 990, 1010,
    /// 1000, 1000: mean 1000, squares of deviations 100 + 100 + 0 + 0 =
    /// 200, SD = sqrt(200/3) = 8.164966; low 95, 105, 100, 100: mean 100,
    /// SD = sqrt(50/3) = 4.082483. Z′ (Zhang, Chung & Oldenburg 1999) =
    /// 1 − 3(8.164966 + 4.082483)/900 = 1 − 36.742346/900 = 0.959175.
    /// A well at 550 is 100·(550 − 100)/900 = 50 % activity; 325 is 25 %.
    /// Plate P2: high 500, 600, 400, 500 (mean 500, SD sqrt(20000/3) =
    /// 81.649658), low 100, 150, 50, 100 (mean 100, SD 40.824829):
    /// Z′ = 1 − 3·122.474487/400 = 0.081441, below 0.5, flagged; a well at
    /// 300 is 50 %.
    const PLATES: &str = "plate,role,compound,[I] (µM),signal\n\
        P1,high,,0,990\nP1,high,,0,1010\nP1,low,,0,95\nP1,low,,0,105\nP1,high,,0,1000\nP1,low,,0,100\nP1,high,,0,1000\nP1,low,,0,100\n\
        P1,sample,c1,1,550\nP1,,c1,10,325\n\
        P2,high,,0,500\nP2,high,,0,600\nP2,high,,0,400\nP2,high,,0,500\nP2,low,,0,100\nP2,low,,0,150\nP2,low,,0,50\nP2,low,,0,100\n\
        P2,sample,c2,1,300\n";

    #[test]
    fn percent_activity_and_z_prime_match_a_hand_computation() {
        let n = normalise_plates(PLATES).unwrap();
        let (p1, p2) = (&n.plates[0], &n.plates[1]);
        assert_eq!((p1.plate.as_str(), p1.high.n, p1.low.n), ("P1", 4, 4));
        assert!((p1.high.mean - 1000.0).abs() < 1e-12 && (p1.low.mean - 100.0).abs() < 1e-12);
        assert!((p1.high.sd.unwrap() - 8.164966).abs() < 1e-6);
        assert!((p1.low.sd.unwrap() - 4.082483).abs() < 1e-6);
        assert!((p1.z_prime.unwrap() - 0.959175).abs() < 1e-6);
        assert!(p1.flag.is_none());
        // Signal window (900 − 36.742346)/8.164966 = 105.7270; S/B = 10.
        assert!((p1.signal_window.unwrap() - 105.7270).abs() < 1e-4);
        assert!((p1.signal_to_background.unwrap() - 10.0).abs() < 1e-12);
        assert!((p2.z_prime.unwrap() - 0.081441).abs() < 1e-6);
        assert!(p2.flag.as_deref().unwrap().contains("below 0.5"));
        let lines: Vec<&str> = n.text.split('\n').collect();
        assert_eq!(lines[0], "compound,[I] (µM),% activity");
        assert_eq!(lines[9], "c1,1,50");
        assert_eq!(lines[10], "c1,10,25");
        assert_eq!(lines[19], "c2,1,50");
        assert!(lines[1].is_empty(), "control rows are blank, lines keep their numbers");
    }

    #[test]
    fn missing_controls_and_roles_are_refused() {
        let e = normalise_plates("plate,compound,[I],signal\nP1,c,1,2\n").unwrap_err();
        assert!(e.message.contains("'role' column"), "{}", e.message);
        let e = normalise_plates("role,compound,[I],signal\nhigh,,0,2\nsample,c,1,1\n").unwrap_err();
        assert!(e.message.contains("high and one low"), "{}", e.message);
        let e = normalise_plates("role,compound,[I],signal\nhi,,0,2\n").unwrap_err();
        assert!(e.message.contains("not high, low or sample"), "{}", e.message);
    }
}
