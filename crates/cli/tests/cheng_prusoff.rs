//! The `turnover fit --model ic50 --cheng-prusoff ...` path, run as the
//! built binary: Ki is added to the same JSON record as a derived
//! parameter, and options that do not apply are refused.

use std::path::PathBuf;
use std::process::Command;

/// An invented inhibitor series (not measured data): percent activity of a
/// fictional enzyme against a fictional compound, two replicates at some
/// concentrations.
const SERIES: &str = "# invented series for the CLI tests\n[I] (µM)\t% activity\n0\t99.1\n0.1\t96.8\n0.3\t88.9\n1\t68.2\n3\t40.5\n10\t16.1\n30\t6.2\n100\t2.9\n0\t100.6\n1\t70.3\n10\t14.8\n";

fn series_file(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"));
    let path = dir.join(name);
    std::fs::write(&path, SERIES).unwrap();
    path
}

/// Runs the binary; returns (exit code, stdout, stderr).
fn turnover(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_turnover")).args(args).output().unwrap();
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into_owned(), String::from_utf8_lossy(&out.stderr).into_owned())
}

fn json(args: &[&str]) -> serde_json::Value {
    let (code, out, err) = turnover(args);
    assert_eq!(code, 0, "{err}");
    serde_json::from_str(&out).unwrap()
}

fn parameter<'a>(record: &'a serde_json::Value, name: &str) -> &'a serde_json::Value {
    record["parameters"].as_array().unwrap().iter().find(|p| p["name"] == name).unwrap_or_else(|| panic!("no {name}"))
}

/// Cheng & Prusoff (1973), competitive: Ki = IC50/(1 + [S]/Km); here
/// [S] = 50 µM and Km = 0.02 mM (20 µM, converted by the CLI), so the
/// divisor is 3.5, applied to the IC50 of the plain ic50 fit of the same
/// file (the relation from memory).
#[test]
fn competitive_ki_is_the_ic50_over_one_plus_s_over_km() {
    let file = series_file("cp-competitive.tsv");
    let file = file.to_str().unwrap();
    let plain = json(&["fit", file, "--model", "ic50", "--json"]);
    let ic50 = parameter(&plain, "IC50");
    let (ic50_value, ic50_se) = (ic50["value"].as_f64().unwrap(), ic50["std_error"].as_f64().unwrap());
    let record = json(&["fit", file, "--model", "ic50", "--json", "--cheng-prusoff", "competitive", "--substrate", "50 µM", "--km", "0.02mM"]);
    let ki = parameter(&record, "Ki");
    let value = ki["value"].as_f64().unwrap();
    assert!((value - ic50_value / 3.5).abs() < 1e-12 * value, "{value} vs {}", ic50_value / 3.5);
    assert!((ki["std_error"].as_f64().unwrap() - ic50_se / 3.5).abs() < 1e-12);
    assert_eq!(ki["derived"], true);
    assert_eq!(ki["unit"], "µM");
    assert_eq!(ki["ci_method"], "delta");
    assert_eq!(parameter(&record, "IC50")["derived"], false);
    // The rest of the record is the plain fit's.
    assert_eq!(record["rss"], plain["rss"]);
    assert!(record["notes"].as_array().unwrap().iter().any(|n| n.as_str().unwrap().contains("not tight-binding")));
}

/// Uncompetitive: Ki = IC50/(1 + Km/[S]); noncompetitive: Ki = IC50. With
/// a Km error (bare number, in Km's unit) the standard error grows.
#[test]
fn other_mechanisms_and_a_km_error() {
    let file = series_file("cp-others.tsv");
    let file = file.to_str().unwrap();
    let base = ["fit", file, "--model", "ic50", "--json", "--substrate", "50", "--km", "20"];
    let with = |mechanism: &str, extra: &[&str]| {
        let mut args: Vec<&str> = base.to_vec();
        args.extend(["--cheng-prusoff", mechanism]);
        args.extend(extra);
        json(&args)
    };
    let un = with("uncompetitive", &[]);
    let ic50 = parameter(&un, "IC50")["value"].as_f64().unwrap();
    assert!((parameter(&un, "Ki")["value"].as_f64().unwrap() - ic50 / 1.4).abs() < 1e-12 * ic50);
    let non = with("noncompetitive", &[]);
    assert_eq!(parameter(&non, "Ki")["value"].as_f64().unwrap(), ic50);
    let exact = parameter(&with("competitive", &[]), "Ki")["std_error"].as_f64().unwrap();
    let uncertain = with("competitive", &["--km-se", "3"]);
    let se = parameter(&uncertain, "Ki")["std_error"].as_f64().unwrap();
    // var(Ki) = var(IC50)/c² + (IC50·[S]/Km²/c²)²·var(Km), c = 1 + [S]/Km.
    let c: f64 = 3.5;
    let expected = (exact.powi(2) + (ic50 * 50.0 / 400.0 / (c * c) * 3.0).powi(2)).sqrt();
    assert!((se - expected).abs() < 1e-9 * expected, "{se} vs {expected}");
    // Profile intervals: Ki's is IC50's divided by the factor.
    let profiled = with("competitive", &["--ci", "profile"]);
    let (i, k) = (parameter(&profiled, "IC50"), parameter(&profiled, "Ki"));
    assert_eq!(k["ci_method"], "profile");
    assert!((k["ci_low"].as_f64().unwrap() - i["ci_low"].as_f64().unwrap() / c).abs() < 1e-12);
}

/// Options that do not apply are refused (exit 2) with a message, never
/// ignored.
#[test]
fn options_that_do_not_apply_are_refused() {
    let file = series_file("cp-refused.tsv");
    let file = file.to_str().unwrap();
    for (args, expected) in [
        (vec!["--model", "morrison", "--enzyme", "1", "--cheng-prusoff", "competitive", "--substrate", "1", "--km", "1"], "does not apply to morrison"),
        (vec!["--model", "ic50", "--substrate", "1", "--km", "1"], "--substrate is used only with --cheng-prusoff"),
        (vec!["--model", "ic50", "--km-se", "1"], "--km-se is used only with --cheng-prusoff"),
        (vec!["--model", "ic50", "--cheng-prusoff", "competitive", "--km", "1"], "needs both --substrate"),
        (vec!["--model", "ic50", "--cheng-prusoff", "mixed", "--substrate", "1", "--km", "1"], "two constants"),
        (vec!["--model", "ic50", "--cheng-prusoff", "competitive", "--substrate", "1 µM", "--km", "1"], "both carry a unit"),
        (vec!["--model", "ic50", "--cheng-prusoff", "competitive", "--substrate", "1 ppm", "--km", "1 µM"], "--substrate"),
        (vec!["--model", "ic50", "--cheng-prusoff", "competitive", "--substrate", "1", "--km", "0"], "Km must be a positive number"),
        (vec!["--model", "ic50", "--enzyme", "5"], "morrison model only"),
        (vec!["--model", "mm", "--ceiling", "100"], "--ceiling and --floor"),
    ] {
        let mut all = vec!["fit", file];
        all.extend(&args);
        let (code, _, err) = turnover(&all);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(err.contains(expected), "{args:?}: {err}");
    }
}
