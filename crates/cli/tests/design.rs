//! `turnover design` as the built binary: the JSON fields the issue names,
//! the text for the bench, the bench-only outputs and the refusals. The
//! numbers themselves are checked in `tests/design.rs`.

use std::process::Command;

fn turnover(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_turnover")).args(args).output().unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

const PLAN: &[&str] = &[
    "design", "--model", "mm", "--guess", "Km=5,Vmax=10", "--range", "Km=2:20", "--noise", "5%", "--points", "8", "--replicates", "2",
    "--max-s", "100", "--concentrations", "0.5,1,2,4", "--target", "Km=10%", "--simulations", "40", "--seed", "7",
];

#[test]
fn json_has_the_fields_of_the_plan() {
    let mut args = PLAN.to_vec();
    args.push("--json");
    let (code, out, err) = turnover(&args);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["concentrations"].as_array().unwrap().len(), 8);
    for p in v["predicted"].as_array().unwrap() {
        assert!(p["std_error"].as_f64().unwrap() > 0.0 && p["ci_width"].as_f64().unwrap() > 0.0, "{p}");
    }
    for p in v["simulated"]["parameters"].as_array().unwrap() {
        assert!(p["std_error"].as_f64().unwrap() > 0.0 && p["ci_width"].as_f64().unwrap() > 0.0, "{p}");
    }
    assert_eq!(v["n_simulations"], 40);
    assert_eq!(v["seed"], 7);
    assert_eq!(v["proposed"]["concentrations"].as_array().unwrap().len(), 4);
    assert!(v["over_range"]["target_probability"].is_number());
    assert_eq!(v["plots"][0]["kind"], "design-precision");
    assert!(v["caution"].as_str().unwrap().contains("estimates"));
    // The same seed, the same bytes.
    let (_, again, _) = turnover(&args);
    assert_eq!(out, again);
}

#[test]
fn text_plate_map_and_csv() {
    let (code, out, err) = turnover(PLAN);
    assert_eq!(code, 0, "{err}");
    for expected in ["Recommended: 16 wells", "Your design: 8 wells", "Why these concentrations", "Plate map", "Chance of Km to ±10%"] {
        assert!(out.contains(expected), "{expected} not in\n{out}");
    }
    let mut args = PLAN.to_vec();
    args.push("--plate-map");
    let (code, out, _) = turnover(&args);
    assert_eq!(code, 0);
    assert!(out.starts_with("S\n\t1\t2\t3"), "{out}");
    let mut args = PLAN.to_vec();
    args.extend(["--stock-s", "1000", "--well-volume", "100", "--csv"]);
    let (code, out, err) = turnover(&args);
    assert_eq!(code, 0, "{err}");
    assert!(out.starts_with("well,S,I,S from"), "{out}");
    assert_eq!(out.lines().count(), 17);
}

#[test]
fn refusals_say_what_is_wrong() {
    let cases: &[(&[&str], &str)] = &[
        (&["design", "--guess", "Km=5,Vmax=10", "--target", "Km=0.1"], "as a percentage"),
        (&["design", "--guess", "Km=0,5"], "expected NAME=VALUE"),
        (&["design", "--guess", "Km=5,Vmax=10", "--range", "Ki=1:2"], "Ki has no --guess"),
        (&["design", "--guess", "Km=5,Vmax=10", "--csv"], "needs --well-volume"),
        (&["design", "--guess", "Km=5"], "missing Vmax"),
        (&["design", "--model", "competitive", "--guess", "Km=5,Vmax=10,Kic=1", "--wells", "20"], "needs 64 wells"),
    ];
    for (args, expected) in cases {
        let (code, _, err) = turnover(args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(err.contains(expected), "{args:?}: {err}");
    }
}
