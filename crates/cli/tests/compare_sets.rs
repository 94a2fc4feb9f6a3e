//! `turnover compare-sets`, run as the built binary: the JSON carries
//! `sets`, `models` and `constants` in the documented shape, the set
//! column and reference are chosen by option, and options that do not
//! apply are refused. The numbers themselves are checked against SciPy in
//! `tests/scipy/sets_crosscheck.py` and by simulation in `tests/sets.rs`.

use std::path::PathBuf;
use std::process::Command;

/// Invented example data (not measurements): two fictional enzyme
/// variants, the second with about a tenth of the first's Vmax.
const TABLE: &str = "# invented data for the CLI tests\nvariant\t[S] (µM)\tv (µM/min)\nwild type\t2\t1.62\nwild type\t5\t3.41\nwild type\t10\t4.95\nwild type\t20\t6.71\nwild type\t50\t8.27\nwild type\t100\t9.15\nmutant\t2\t0.21\nmutant\t5\t0.41\nmutant\t10\t0.62\nmutant\t20\t0.79\nmutant\t50\t1.01\nmutant\t100\t1.08\n";

fn table_file(name: &str, text: &str) -> PathBuf {
    let path = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join(name);
    std::fs::write(&path, text).unwrap();
    path
}

fn turnover(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_turnover")).args(args).output().unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn json_has_sets_models_and_constants() {
    let path = table_file("sets.tsv", TABLE);
    let (code, out, err) = turnover(&[
        "compare-sets",
        path.to_str().unwrap(),
        "--by",
        "variant",
        "--model",
        "mm",
        "--reference",
        "mutant",
        "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["reference"], "mutant");
    assert_eq!(v["sets"].as_array().unwrap().len(), 2);
    let names: Vec<&str> = v["models"].as_array().unwrap().iter().map(|m| m["name"].as_str().unwrap()).collect();
    assert_eq!(names, ["all separate", "Vmax shared", "Km shared", "all shared"]);
    assert!(v["models"][1]["aicc"].is_number() && v["models"][1]["f_test"]["p_value"].is_number());
    let vmax = &v["constants"][0];
    assert_eq!(vmax["name"], "Vmax");
    assert_eq!(vmax["differs"], true);
    // Reference mutant: wild type / mutant is near 10 (Vmax about 10 and 1.2).
    let ratio = &vmax["ratio"][0];
    assert_eq!(ratio["set"], "wild type");
    let (lo, r, hi) =
        (ratio["ci_low"].as_f64().unwrap(), ratio["value"].as_f64().unwrap(), ratio["ci_high"].as_f64().unwrap());
    assert!(lo < r && r < hi && r > 5.0 && r < 15.0, "{lo} {r} {hi}");
    assert_eq!(v["constants"][1]["name"], "Km");
    assert_eq!(v["constants"][1]["differs"], false);
}

#[test]
fn table_output_states_the_verdict() {
    let path = table_file("sets_text.tsv", TABLE);
    let (code, out, err) = turnover(&["compare-sets", path.to_str().unwrap(), "--by", "variant"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("Vmax differs: mutant/wild type = 0.118"), "{out}");
    assert!(out.contains("Km does not differ detectably"), "{out}");
}

#[test]
fn refusals_have_reasons() {
    let path = table_file("sets_refused.tsv", TABLE);
    let p = path.to_str().unwrap();
    let (code, _, err) = turnover(&["compare-sets", p]);
    assert_eq!(code, 2);
    assert!(err.contains("no column is headed 'set'"), "{err}");
    let (code, _, err) = turnover(&["compare-sets", p, "--by", "variant", "--reference", "other"]);
    assert_eq!(code, 2);
    assert!(err.contains("no set 'other'"), "{err}");
    let (code, _, err) = turnover(&["compare-sets", p, "--by", "variant", "--ceiling", "100"]);
    assert_eq!(code, 2);
    assert!(err.contains("ic50"), "{err}");
}
