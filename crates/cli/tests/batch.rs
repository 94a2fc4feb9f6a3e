//! `turnover fit FILE --group-by COLUMN`, run as the built binary: each
//! curve's record equals the one-curve fit of its rows alone, bit for bit,
//! whatever the number of threads; and a simulated 384-curve screen gives
//! 384 records flagged where the simulated truth says.

use serde_json::Value;
use std::path::PathBuf;
use std::process::Command;
use turnover_core::random::SplitMix64;

/// Runs the binary with extra environment; returns (exit code, stdout, stderr).
fn turnover(args: &[&str], env: &[(&str, &str)]) -> (i32, String, String) {
    let mut command = Command::new(env!("CARGO_BIN_EXE_turnover"));
    command.args(args).env_remove("RAYON_NUM_THREADS");
    for (k, v) in env {
        command.env(k, v);
    }
    let out = command.output().unwrap();
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into_owned(), String::from_utf8_lossy(&out.stderr).into_owned())
}

fn write(name: &str, text: &str) -> PathBuf {
    let path = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join(name);
    std::fs::write(&path, text).unwrap();
    path
}

/// The 10 concentrations of the simulated screen: a 3-fold dilution from
/// 100 µM (100, 33.3, ..., 0.00508 µM); common practice, no source.
fn doses() -> Vec<f64> {
    (0..10).map(|k| 100.0 / 3f64.powi(k)).collect()
}

/// The logistic the core fits, y = bottom + (top − bottom)/(1 + ([I]/IC50)^h).
fn logistic(i: f64, bottom: f64, top: f64, ic50: f64, h: f64) -> f64 {
    bottom + (top - bottom) / (1.0 + (i / ic50).powf(h))
}

/// One simulated curve: its rows as (dose, % activity) and what the truth
/// says should be flagged.
struct Simulated {
    name: String,
    rows: Vec<(f64, f64)>,
    ic50: f64,
    /// The class's label and the flags any one of which says what the
    /// truth says.
    expected: Option<(&'static str, &'static [&'static str])>,
}

/// The simulated screen (invented data, seed 20261202): 384 curves of 10
/// points in % activity, noise N(0, 3²) on every point. Six classes by
/// curve index mod 6:
/// 0, 1: ordinary (top 100, bottom 0, slope 1, log10 IC50/µM uniform in
///       [−1.5, 1]), nothing to flag;
/// 2: IC50 of 1,000 to 3,000 µM, beyond the top dose of 100 µM (flagged
///    as beyond the doses, undetermined, or plateau far from the controls);
/// 3: a Hill slope of 4;
/// 4: a partial inhibitor levelling off at 45 %;
/// 5: ordinary, with 40 added to the response at the 6th dose (flagged as
///    large residuals, or as an implausible slope when the fit bends to
///    it; large residuals alone on at least 75 %).
fn screen() -> Vec<Simulated> {
    let mut rng = SplitMix64::new(20261202);
    (0..384)
        .map(|k| {
            let class = k % 6;
            let (mut bottom, mut ic50, mut h) = (0.0, 10f64.powf(-1.5 + 2.5 * rng.uniform()), 1.0);
            let expected = match class {
                2 => {
                    ic50 = 1000.0 + 2000.0 * rng.uniform();
                    // The data cannot place this IC50: its estimate lies
                    // beyond the doses, or is not determined, or the
                    // curve stops far above the low control.
                    Some(("IC50 beyond the doses", &["ic50-outside-range", "undetermined", "plateau-far-from-controls"][..]))
                }
                3 => {
                    h = 4.0;
                    Some(("slope 4", &["steepness-implausible"][..]))
                }
                4 => {
                    bottom = 45.0;
                    Some(("partial inhibitor", &["plateau-far-from-controls"][..]))
                }
                // A 4-parameter logistic on 10 points can absorb part of an
                // outlier by bending its slope; then the slope is flagged.
                5 => Some(("outlier", &["large-residuals", "steepness-implausible"][..])),
                _ => None,
            };
            let rows = doses()
                .iter()
                .enumerate()
                .map(|(j, &i)| {
                    let outlier = if class == 5 && j == 5 { 40.0 } else { 0.0 };
                    (i, logistic(i, bottom, 100.0, ic50, h) + 3.0 * rng.normal() + outlier)
                })
                .collect();
            Simulated { name: format!("cmpd-{k:03}"), rows, ic50, expected }
        })
        .collect()
}

fn batch_table(curves: &[Simulated]) -> String {
    let mut text = String::from("compound,[I] (µM),% activity\n");
    for c in curves {
        for (i, y) in &c.rows {
            text.push_str(&format!("{},{i},{y}\n", c.name));
        }
    }
    text
}

fn one_table(curve: &Simulated) -> String {
    let mut text = String::from("[I] (µM),% activity\n");
    for (i, y) in &curve.rows {
        text.push_str(&format!("{i},{y}\n"));
    }
    text
}

/// A record without what the batch or the one-curve envelope adds: the fit
/// record's fields only.
fn fit_fields(record: &Value) -> Value {
    let mut map = record.as_object().unwrap().clone();
    // The per-concentration summary of the data (`replicates`) is not part
    // of the fit; the one-curve JSON carries it, the batch record does not.
    for key in ["curve", "pic50", "flags", "problems", "notes", "error", "units", "points", "points_omitted", "caution", "replicates"] {
        map.remove(key);
    }
    Value::Object(map)
}

/// Every curve's record equals `turnover fit` on a file holding only that
/// curve's rows (written here from the simulated rows, not by the
/// splitter), compared as parsed JSON: Rust writes each f64 as the shortest
/// text that reads back to it, so equal values mean equal bits. The whole
/// output is the same bytes with 1 and 4 threads, by option or by
/// RAYON_NUM_THREADS.
#[test]
fn batch_records_equal_one_curve_fits_whatever_the_threads() {
    let curves: Vec<Simulated> = screen().into_iter().take(24).collect();
    let batch = write("batch-24.csv", &batch_table(&curves));
    let batch = batch.to_str().unwrap();
    let base = ["fit", batch, "--group-by", "compound", "--model", "ic50", "--json", "--lenient"];
    let one = turnover(&[&base[..], &["--threads", "1"]].concat(), &[]);
    let four = turnover(&[&base[..], &["--threads", "4"]].concat(), &[]);
    let env1 = turnover(&base, &[("RAYON_NUM_THREADS", "1")]);
    let env4 = turnover(&base, &[("RAYON_NUM_THREADS", "4")]);
    assert_eq!(one.1, four.1);
    assert_eq!(one.1, env1.1);
    assert_eq!(one.1, env4.1);
    let parsed: Value = serde_json::from_str(&one.1).unwrap();
    let records = parsed["curves"].as_array().unwrap();
    assert_eq!(records.len(), curves.len());
    for (curve, record) in curves.iter().zip(records) {
        assert_eq!(record["curve"], curve.name.as_str());
        let alone = write(&format!("{}.csv", curve.name), &one_table(curve));
        let (_, out, err) = turnover(&["fit", alone.to_str().unwrap(), "--model", "ic50", "--json"], &[]);
        let single: Value = serde_json::from_str(&out).unwrap_or_else(|_| panic!("{err}"));
        assert_eq!(fit_fields(record), fit_fields(&single), "{}", curve.name);
    }
    // The CSV and TSV rows carry the same numbers: IC50 of the first curve.
    let (_, csv, _) = turnover(&["fit", batch, "--group-by", "compound", "--model", "ic50", "--format", "csv"], &[]);
    let header: Vec<&str> = csv.lines().next().unwrap().split(',').collect();
    let first: Vec<&str> = csv.lines().nth(1).unwrap().split(',').collect();
    let column = header.iter().position(|h| *h == "IC50").unwrap();
    let ic50 = records[0]["parameters"].as_array().unwrap().iter().find(|p| p["name"] == "IC50").unwrap()["value"].as_f64().unwrap();
    assert_eq!(first[column].parse::<f64>().unwrap().to_bits(), ic50.to_bits());
    assert_eq!(csv.lines().count(), 1 + curves.len());
}

/// The simulated screen of [`screen`] through the binary: 384 records in
/// input order; each planted defect flagged with its code (or one of its
/// codes) in at least 85 %
/// of its curves; ordinary curves (classes 0 and 1, 128 curves) carry any
/// flag in at most 5 %; and on them the mean error of log10 IC50 (bias) is
/// within ±0.02 (each curve's log10 IC50 has a standard error near 0.04
/// here, so the mean of 128 has one near 0.004; 0.02 is five of those).
/// pIC50 = 6 − log10(IC50/µM) by definition (IC50 in M).
#[test]
fn simulated_screen_is_flagged_where_the_truth_says() {
    let curves = screen();
    let path = write("screen-384.csv", &batch_table(&curves));
    let (code, out, err) = turnover(&["fit", path.to_str().unwrap(), "--group-by", "compound", "--model", "ic50", "--json"], &[]);
    assert!(code == 0 || code == 3, "{err}");
    let parsed: Value = serde_json::from_str(&out).unwrap();
    let records = parsed["curves"].as_array().unwrap();
    assert_eq!(records.len(), 384);
    let codes = |r: &Value| -> Vec<String> { r["flags"].as_array().unwrap().iter().map(|f| f["code"].as_str().unwrap().to_string()).collect() };
    let mut hits = std::collections::BTreeMap::<&str, (usize, usize)>::new();
    let mut seen = std::collections::BTreeMap::<(&str, String), usize>::new();
    let (mut clean, mut clean_flagged, mut bias) = (0usize, 0usize, 0.0);
    for (curve, record) in curves.iter().zip(records) {
        assert_eq!(record["curve"], curve.name.as_str());
        let flags = codes(record);
        for f in record["flags"].as_array().unwrap() {
            assert!(!f["reason"].as_str().unwrap().is_empty());
        }
        match curve.expected {
            Some((label, accepted)) => {
                let entry = hits.entry(label).or_default();
                entry.1 += 1;
                entry.0 += usize::from(flags.iter().any(|f| accepted.contains(&f.as_str())));
                for f in &flags {
                    *seen.entry((label, f.clone())).or_default() += 1;
                }
            }
            None => {
                clean += 1;
                clean_flagged += usize::from(!flags.is_empty());
                for f in &flags {
                    *seen.entry(("ordinary", f.clone())).or_default() += 1;
                }
                let ic50 = record["parameters"].as_array().unwrap().iter().find(|p| p["name"] == "IC50").unwrap()["value"].as_f64().unwrap();
                bias += ic50.log10() - curve.ic50.log10();
                let pic50 = record["pic50"]["value"].as_f64().unwrap();
                assert!((pic50 - (6.0 - ic50.log10())).abs() < 1e-12);
            }
        }
    }
    bias /= clean as f64;
    println!("ordinary curves: {clean}, flagged {clean_flagged}; mean error of log10 IC50 {bias:.4}");
    for ((label, code), count) in &seen {
        println!("{label}: {code} on {count} curves");
    }
    for (code, (hit, total)) in &hits {
        println!("{code}: flagged {hit} of {total}");
        assert!(*hit as f64 >= 0.85 * *total as f64, "{code}: {hit} of {total}");
    }
    assert_eq!(hits.len(), 4);
    // The outlier's own flag alone, on at least 75 % of its curves.
    let residual_flags = seen.get(&("outlier", "large-residuals".to_string())).copied().unwrap_or(0);
    assert!(residual_flags as f64 >= 0.75 * 64.0, "{residual_flags}");
    assert!(clean_flagged as f64 <= 0.05 * clean as f64, "{clean_flagged} of {clean}");
    assert!(bias.abs() < 0.02, "{bias}");
}

/// `--normalise`: one invented plate, raw signals with four high (no
/// inhibitor) and four low (no enzyme) control wells. Hand computation:
/// high 990, 1010, 1000, 1000 have mean 1000 and SD sqrt(200/3) =
/// 8.164966; low 95, 105, 100, 100 have mean 100 and SD sqrt(50/3) =
/// 4.082483; Z′ = 1 − 3(σ_high + σ_low)/|μ_high − μ_low| (Zhang, Chung &
/// Oldenburg 1999) = 1 − 36.742346/900 = 0.959175. Each sample's %
/// activity is 100·(x − 100)/900, and the curve's record equals the
/// one-curve fit of a table of those % values written here, bit for bit;
/// the same with the plateaus fixed at 100 and 0.
#[test]
fn normalised_plate_gives_hand_computed_z_prime_and_percent_activity() {
    let mut text = String::from("# invented plate\nplate\trole\tcompound\t[I] (µM)\tsignal\n");
    for (role, x) in [("high", 990.0), ("high", 1010.0), ("low", 95.0), ("low", 105.0), ("high", 1000.0), ("low", 100.0), ("high", 1000.0), ("low", 100.0)] {
        text.push_str(&format!("A\t{role}\t\t0\t{x}\n"));
    }
    let mut alone = String::from("[I] (µM)\t% activity\n");
    for (k, i) in doses().iter().enumerate() {
        let x = 100.0 + 900.0 / (1.0 + i / 2.0) + [4.0, -3.0, 2.0, -5.0, 1.0, 3.0, -2.0, 0.5, -1.0, 2.5][k];
        text.push_str(&format!("A\tsample\tc1\t{i}\t{x}\n"));
        alone.push_str(&format!("{i}\t{}\n", 100.0 * (x - 100.0) / (1000.0 - 100.0)));
    }
    let batch = write("plate-a.tsv", &text);
    let single = write("plate-a-c1.tsv", &alone);
    for fixed in [&[][..], &["--ceiling", "100", "--floor", "0"][..]] {
        let args = [&["fit", batch.to_str().unwrap(), "--group-by", "compound", "--model", "ic50", "--normalise", "--json"][..], fixed].concat();
        let (code, out, err) = turnover(&args, &[]);
        assert_eq!(code, 0, "{err}");
        let parsed: Value = serde_json::from_str(&out).unwrap();
        let plate = &parsed["plates"][0];
        assert_eq!(plate["plate"], "A");
        assert!((plate["high"]["mean"].as_f64().unwrap() - 1000.0).abs() < 1e-12);
        assert!((plate["high"]["sd"].as_f64().unwrap() - 8.164966).abs() < 1e-6);
        assert!((plate["low"]["sd"].as_f64().unwrap() - 4.082483).abs() < 1e-6);
        assert!((plate["z_prime"].as_f64().unwrap() - 0.959175).abs() < 1e-6);
        assert!(plate["flag"].is_null());
        let records = parsed["curves"].as_array().unwrap();
        assert_eq!(records.len(), 1);
        let args = [&["fit", single.to_str().unwrap(), "--model", "ic50", "--json"][..], fixed].concat();
        let (_, out, err) = turnover(&args, &[]);
        let one: Value = serde_json::from_str(&out).unwrap_or_else(|_| panic!("{err}"));
        assert_eq!(fit_fields(&records[0]), fit_fields(&one));
        assert_eq!(records[0]["parameters"].as_array().unwrap().len(), 4 - fixed.len() / 2);
    }
}

/// Batch options without --group-by, and one-curve options with it, are
/// refused with the reason; a named column that is not there is an error.
#[test]
fn options_that_do_not_apply_are_refused() {
    let curves: Vec<Simulated> = screen().into_iter().take(2).collect();
    let path = write("batch-2.csv", &batch_table(&curves));
    let file = path.to_str().unwrap();
    let cases: [(&[&str], &str); 6] = [
        (&["fit", file, "--group-by", "compound", "--model", "ic50", "--format", "text"], "with --group-by the output is json, csv or tsv"),
        (&["fit", file, "--model", "ic50", "--threads", "2"], "--threads applies to batch fits only"),
        (&["fit", file, "--model", "ic50", "--normalise"], "--normalise applies to batch fits only"),
        (&["fit", file, "--group-by", "compound", "--model", "ic50", "--json", "--format", "csv"], "disagree"),
        (&["fit", file, "--group-by", "compound", "--model", "ic50", "--json", "--points"], "--points applies to one-curve fits"),
        (&["fit", file, "--group-by", "plate", "--model", "ic50"], "no column 'plate'"),
    ];
    for (args, expected) in cases {
        let (code, _, err) = turnover(args, &[]);
        assert_eq!(code, 2, "{args:?}");
        assert!(err.contains(expected), "{args:?}: {err}");
    }
}
