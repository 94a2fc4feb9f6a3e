//! The command line's text output follows the core's number formatting
//! rule for every constant, and `fit --format csv|tsv` gives the JSON's
//! numbers at full precision, run as the built binary.
//!
//! The rule (crates/core/src/format.rs; common practice, no source): the
//! standard error to two significant figures, the estimate and the
//! interval ends to the standard error's decimal place, one shared power
//! of ten when the largest number is below 0.001 or at least 100 000.

use std::path::PathBuf;
use std::process::Command;
use turnover_core::format::format_estimate;

/// Puromycin, treated cells: Treloar (1974), as published in Bates & Watts
/// (1988), *Nonlinear Regression Analysis and Its Applications*, and in R's
/// `datasets::Puromycin` (concentration in ppm, rate in counts/min², so no
/// molar unit is given). Published least-squares fit: Vmax = 212.68
/// (SE 6.947), Km = 0.06412 (SE 0.008281), 10 degrees of freedom.
const PUROMYCIN_TREATED: &str = "conc\trate\n0.02\t76\n0.02\t47\n0.06\t97\n0.06\t107\n0.11\t123\n0.11\t139\n0.22\t159\n0.22\t152\n0.56\t191\n0.56\t201\n1.10\t207\n1.10\t200\n";

/// Invented rates (not measured data) with units in the header, so that
/// kcat and kcat/Km are derived and kcat/Km needs a power of ten.
const INVENTED: &str = "[S] (µM)\tv (µM/min)\n1\t0.99\n2\t1.66\n5\t2.86\n10\t3.33\n20\t3.64\n50\t3.85\n";

/// An invented inhibitor series (not measured data).
const SERIES: &str = "[I] (µM)\t% activity\n0\t99.1\n0.1\t96.8\n0.3\t88.9\n1\t68.2\n3\t40.5\n10\t16.1\n30\t6.2\n100\t2.9\n0\t100.6\n1\t70.3\n10\t14.8\n";

fn file(name: &str, text: &str) -> String {
    let path = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join(name);
    std::fs::write(&path, text).unwrap();
    path.to_str().unwrap().to_string()
}

/// Runs the binary; returns (exit code, stdout, stderr).
fn turnover(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_turnover")).args(args).output().unwrap();
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into_owned(), String::from_utf8_lossy(&out.stderr).into_owned())
}

fn ok(args: &[&str]) -> (String, String) {
    let (code, out, err) = turnover(args);
    assert_eq!(code, 0, "{args:?}: {err}");
    (out, err)
}

fn json(args: &[&str]) -> serde_json::Value {
    serde_json::from_str(&ok(args).0).unwrap()
}

/// The published Puromycin fit, printed by the rule (worked by hand):
/// SE(Vmax) 6.947 has two significant figures at 6.9, one decimal, so
/// Vmax 212.68 → 212.7; SE(Km) 0.008281 → 0.0083, four decimals, so
/// Km 0.06412 → 0.0641. The 95% interval is ± t(0.975, 10)·SE with
/// t = 2.2281 (SciPy `t.ppf(0.975, 10)`): Vmax 212.68 ∓ 15.479 =
/// 197.20 to 228.16 → 197.2 to 228.2; Km 0.06412 ∓ 0.018451 = 0.04567 to
/// 0.08257 → 0.0457 to 0.0826. No number reaches 100 000 or falls below
/// 0.001, so no power of ten.
#[test]
fn the_published_fit_prints_by_the_rule() {
    let path = file("out-puromycin.tsv", PUROMYCIN_TREATED);
    let (text, _) = ok(&["fit", &path]);
    let lines: Vec<&str> = text.lines().collect();
    assert!(lines.contains(&"Vmax = 212.7 ± 6.9     95% interval 197.2 to 228.2"), "{text}");
    assert!(lines.contains(&"Km = 0.0641 ± 0.0083   95% interval 0.0457 to 0.0826"), "{text}");
    // The same strings in the comparison's parameter column.
    let (text, _) = ok(&["compare", &path, "--models", "mm,hill"]);
    assert!(text.contains("Vmax = 212.7 ± 6.9, Km = 0.0641 ± 0.0083\n"), "{text}");
}

/// Every constant the text prints is the rule applied to the JSON's
/// numbers, units included: fit (with kcat and kcat/Km, the latter with a
/// power of ten), the inhibitor series, compare-sets' per-set fits.
#[test]
fn every_constant_in_text_is_the_json_number_by_the_rule() {
    let expected_line = |p: &serde_json::Value| {
        let unit = p["unit"].as_str().filter(|u| !u.is_empty()).map(|u| format!(" {u}")).unwrap_or_default();
        let f = format_estimate(p["value"].as_f64(), p["std_error"].as_f64(), None);
        format!("{} = {}{unit}", p["name"].as_str().unwrap(), f.text)
    };
    let rates = file("out-invented.tsv", INVENTED);
    let series = file("out-series.tsv", SERIES);
    for args in [vec!["fit", rates.as_str(), "--enzyme", "10 nM"], vec!["fit", series.as_str(), "--model", "ic50"]] {
        let record = json(&[args.as_slice(), &["--json"]].concat());
        let (text, _) = ok(&args);
        for p in record["parameters"].as_array().unwrap() {
            let line = expected_line(p);
            assert!(text.lines().any(|l| l.starts_with(&line)), "{args:?}: no line starting '{line}' in\n{text}");
            let f = format_estimate(p["value"].as_f64(), p["std_error"].as_f64(), Some((p["ci_low"].as_f64(), p["ci_high"].as_f64())));
            let interval = format!("95% interval {} to {}", f.low.unwrap(), f.high.unwrap());
            assert!(text.lines().any(|l| l.starts_with(&line) && l.contains(&interval)), "{args:?}: '{interval}' in\n{text}");
        }
    }
    // kcat/Km of the invented data is in the millions: a shared power of ten.
    let (text, _) = ok(&["fit", &rates, "--enzyme", "10 nM"]);
    assert!(text.lines().any(|l| l.starts_with("kcat/Km = (") && l.contains(")×10⁶ M⁻¹ s⁻¹")), "{text}");

    let sets_text = "set\tS (µM)\tv (µM/min)\nA\t1\t0.99\nA\t2\t1.66\nA\t5\t2.86\nA\t10\t3.33\nA\t20\t3.64\nA\t50\t3.85\nB\t1\t0.61\nB\t2\t1.02\nB\t5\t1.70\nB\t10\t2.02\nB\t20\t2.21\nB\t50\t2.30\n";
    let sets = file("out-sets.tsv", sets_text);
    let record = json(&["compare-sets", &sets, "--json"]);
    let (text, _) = ok(&["compare-sets", &sets]);
    for set in record["sets"].as_array().unwrap() {
        for p in set["fit"]["parameters"].as_array().unwrap() {
            assert!(text.contains(&expected_line(p)), "{}", expected_line(p));
        }
    }
}

/// Invented rates (not measured data) on [S] reaching only twice Km with
/// about 10% noise: Km is poorly determined (SE near 30%), so its
/// estimated small-sample bias exceeds a tenth of its standard error.
const SPARSE: &str = "[S] (µM)\tv (µM/min)\n0.5\t0.27\n1\t0.41\n2\t0.93\n4\t1.28\n8\t2.45\n16\t2.81\n";

/// The small-sample bias (issue 11): the JSON always carries `bias` and
/// `value_bias_corrected` for every constant (null where not computed:
/// kcat/Km), with corrected = value − bias exactly and kcat's bias
/// Vmax's times kcat's factor; the text prints `bias-corrected value`
/// under a constant exactly when |bias| > SE/10, its numbers by the rule
/// applied to the JSON's.
#[test]
fn the_bias_corrected_value_is_in_the_json_and_where_it_matters_in_the_text() {
    let sparse = file("out-sparse.tsv", SPARSE);
    let invented = file("out-bias-invented.tsv", INVENTED);
    let mut shown = 0;
    for args in [vec!["fit", sparse.as_str()], vec!["fit", invented.as_str(), "--enzyme", "10 nM"]] {
        let record = json(&[args.as_slice(), &["--json"]].concat());
        let (text, _) = ok(&args);
        let parameters = record["parameters"].as_array().unwrap();
        for p in parameters {
            let object = p.as_object().unwrap();
            assert!(object.contains_key("bias") && object.contains_key("value_bias_corrected"), "{p}");
            let (value, se) = (p["value"].as_f64().unwrap(), p["std_error"].as_f64());
            match (p["bias"].as_f64(), p["value_bias_corrected"].as_f64()) {
                (Some(bias), Some(corrected)) => {
                    assert_eq!(corrected.to_bits(), (value - bias).to_bits(), "{p}");
                    let unit = p["unit"].as_str().filter(|u| !u.is_empty()).map(|u| format!(" {u}")).unwrap_or_default();
                    let shift = format_estimate(Some(bias), se, None).value;
                    let line = format!(
                        "    bias-corrected value {}{unit} (estimated bias {}{shift})",
                        format_estimate(Some(corrected), se, None).value,
                        if shift.starts_with('-') { "" } else { "+" }
                    );
                    let expected = bias.abs() > 0.1 * se.unwrap();
                    assert_eq!(text.lines().any(|l| l == line), expected, "{args:?}: '{line}' in\n{text}");
                    shown += usize::from(expected);
                }
                (None, None) => assert_eq!(p["name"], "kcat/Km", "{p}"),
                _ => panic!("one of the two fields without the other: {p}"),
            }
        }
        if let (Some(vmax), Some(kcat)) = (parameters.iter().find(|p| p["name"] == "Vmax"), parameters.iter().find(|p| p["name"] == "kcat")) {
            let factor = kcat["value"].as_f64().unwrap() / vmax["value"].as_f64().unwrap();
            let scaled = vmax["bias"].as_f64().unwrap() * factor;
            assert!((kcat["bias"].as_f64().unwrap() - scaled).abs() <= 1e-12 * scaled.abs(), "{kcat} {vmax}");
        }
    }
    // Vmax and Km of the sparse set (bias 0.15 and 0.17 SE when written);
    // none of the invented set's (below 0.05 SE).
    assert_eq!(shown, 2);
}

/// Reads CSV (RFC 4180 quotes) or TSV rows into cells.
fn rows(text: &str, separator: char) -> Vec<Vec<String>> {
    text.lines()
        .map(|line| {
            let (mut cells, mut cell, mut quoted) = (Vec::new(), String::new(), false);
            let mut chars = line.chars().peekable();
            while let Some(c) = chars.next() {
                match c {
                    '"' if quoted && chars.peek() == Some(&'"') => {
                        cell.push('"');
                        chars.next();
                    }
                    '"' => quoted = !quoted,
                    c if c == separator && !quoted => cells.push(std::mem::take(&mut cell)),
                    c => cell.push(c),
                }
            }
            cells.push(cell);
            cells
        })
        .collect()
}

/// `--format csv` and `tsv`: one row per constant whose numbers read back
/// to the JSON's exactly (the same doubles, compared bit for bit), with
/// every interval method; `--format json` is `--json` byte for byte; the
/// notes and the caution go to standard error.
#[test]
fn csv_and_tsv_read_back_to_the_json_numbers() {
    let rates = file("out-rows.tsv", INVENTED);
    let series = file("out-rows-series.tsv", SERIES);
    let cases: Vec<Vec<&str>> = vec![
        vec!["fit", &rates, "--enzyme", "10 nM"],
        vec!["fit", &rates, "--enzyme", "10 nM", "--ci", "profile"],
        vec!["fit", &rates, "--ci", "bootstrap", "--resamples", "200", "--seed", "5"],
        vec!["fit", &rates, "--model", "hill", "--weighting", "proportional"],
        vec!["fit", &series, "--model", "ic50"],
    ];
    for args in cases {
        let (json_text, _) = ok(&[args.as_slice(), &["--json"]].concat());
        let (format_json, _) = ok(&[args.as_slice(), &["--format", "json"]].concat());
        assert_eq!(json_text, format_json, "{args:?}");
        let record: serde_json::Value = serde_json::from_str(&json_text).unwrap();
        let parameters = record["parameters"].as_array().unwrap();
        for (format, separator) in [("csv", ','), ("tsv", '\t')] {
            let (text, err) = ok(&[args.as_slice(), &["--format", format]].concat());
            assert!(err.contains("These constants are statistical estimates"), "{args:?}: {err}");
            let table = rows(&text, separator);
            assert_eq!(
                table[0],
                ["parameter", "value", "se", "low", "high", "unit", "derived", "interval", "flag", "bias", "bias_corrected"]
            );
            assert_eq!(table.len(), parameters.len() + 1, "{args:?} {format}");
            for (row, p) in table[1..].iter().zip(parameters) {
                assert_eq!(row[0], p["name"].as_str().unwrap());
                for (cell, field) in row[1..5].iter().zip(["value", "std_error", "ci_low", "ci_high"]) {
                    let read: Option<f64> = (!cell.is_empty()).then(|| cell.parse().unwrap());
                    assert_eq!(read.map(f64::to_bits), p[field].as_f64().map(f64::to_bits), "{args:?} {format} {} {field}", row[0]);
                }
                assert_eq!(row[5], p["unit"].as_str().unwrap_or(""));
                assert_eq!(row[6], p["derived"].to_string());
                assert_eq!(row[7], p["ci_method"].as_str().unwrap());
                for (cell, field) in row[9..11].iter().zip(["bias", "value_bias_corrected"]) {
                    let read: Option<f64> = (!cell.is_empty()).then(|| cell.parse().unwrap());
                    assert_eq!(read.map(f64::to_bits), p[field].as_f64().map(f64::to_bits), "{args:?} {format} {} {field}", row[0]);
                }
            }
        }
    }
}

/// Options that disagree are refused with a sentence and the usage.
#[test]
fn format_refusals() {
    let rates = file("out-refusals.tsv", INVENTED);
    let cases: &[(&[&str], &str)] = &[
        (&["fit", &rates, "--format", "csv", "--json"], "--json and --format csv disagree"),
        (&["fit", &rates, "--format", "csv", "--points"], "--points chooses what the JSON holds"),
        (&["fit", &rates, "--format", "text", "--group-by", "curve"], "with --group-by the output is json, csv or tsv"),
        (&["fit", &rates, "--format", "xml"], "invalid value 'xml'"),
    ];
    for (args, message) in cases {
        let (code, out, err) = turnover(args);
        assert_eq!(code, 2, "{args:?}: {out}");
        assert!(err.contains(message), "{args:?}: {err}");
    }
}
