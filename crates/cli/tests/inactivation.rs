//! `turnover inactivation` and the Selwyn checks of `turnover rates`, run
//! as the built binary on invented, noise-free progress curves (the
//! numbers are checked against SciPy in
//! `tests/scipy/inactivation_crosscheck.py` and by simulation in
//! `tests/inactivation.rs` and `tests/selwyn.rs`).

use std::path::PathBuf;
use std::process::Command;

fn file(name: &str, text: &str) -> PathBuf {
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

/// Slow-binding curves, kinact 0.2 /min, KI 5 µM, v0 0.02 per min, vs 0,
/// offset 0.05; readings every 0.5 min for 30 min (invented). Written under
/// names starting with `prefix`: the tests run at once, and two of them
/// rewriting one file while the other's command reads it made a test fail
/// now and then (a layout read half-written).
fn inhibited_plate(prefix: &str) -> (PathBuf, PathBuf) {
    let inhibitor = [1.0, 2.5, 5.0, 10.0, 20.0, 40.0];
    let mut traces = String::from("time (min)\tA1\tA2\tA3\tA4\tA5\tA6\n");
    for step in 0..=60 {
        let t = step as f64 * 0.5;
        traces.push_str(&format!("{t}"));
        for i in inhibitor {
            let k = 0.2 * i / (5.0 + i);
            traces.push_str(&format!("\t{:.9}", 0.05 + 0.02 * (1.0 - (-k * t).exp()) / k));
        }
        traces.push('\n');
    }
    let mut layout = String::from("trace\tS (µM)\tI (µM)\n");
    for (n, i) in inhibitor.iter().enumerate() {
        layout.push_str(&format!("A{}\t100\t{i}\n", n + 1));
    }
    (file(&format!("{prefix}_traces.tsv"), &traces), file(&format!("{prefix}_layout.tsv"), &layout))
}

#[test]
fn inactivation_json_reports_kobs_and_constants() {
    let (traces, layout) = inhibited_plate("inact_json");
    let (code, out, err) = turnover(&[
        "inactivation",
        traces.to_str().unwrap(),
        "--layout",
        layout.to_str().unwrap(),
        "--substrate",
        "50 µM",
        "--km",
        "0.05 mM",
        "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["traces"].as_array().unwrap().len(), 6);
    assert!(v["traces"][0]["kobs"].is_number() && v["traces"][0]["kobs_se"].is_number());
    assert_eq!(v["competition_factor"], 2.0);
    let names: Vec<&str> = v["parameters"].as_array().unwrap().iter().map(|p| p["name"].as_str().unwrap()).collect();
    assert_eq!(names, ["kinact", "KI", "kinact/KI"]);
    // [S] = Km: KI = KI_app/2 = 2.5 µM.
    assert!((v["parameters"][1]["value"].as_f64().unwrap() - 2.5).abs() < 1e-3);
    assert!((v["parameters"][0]["value"].as_f64().unwrap() - 0.2).abs() < 1e-4);
}

#[test]
fn inactivation_refuses_half_a_correction_and_windows() {
    let (traces, layout) = inhibited_plate("inact_refusals");
    let (t, l) = (traces.to_str().unwrap(), layout.to_str().unwrap());
    let (code, _, err) = turnover(&["inactivation", t, "--layout", l, "--km", "50"]);
    assert_eq!(code, 2);
    assert!(err.contains("both --substrate and --km"), "{err}");
    let (code, _, err) = turnover(&["inactivation", t, "--layout", l, "--window", "*=0:5"]);
    assert_eq!(code, 2);
    assert!(err.contains("whole curve"), "{err}");
}

/// Curves at [E] = 5, 10, 20 nM from P = 100(1 − e^(−0.0015·[E]·t)) (a
/// function of [E]·t only): Selwyn's check passes; with the 5 nM trace
/// slowed to 80% (no longer a function of [E]·t) it is flagged.
#[test]
fn rates_json_carries_selwyn_checks() {
    for (slow, flagged) in [(1.0, false), (0.8, true)] {
        let mut traces = String::from("time (min)\tE5\tE10\tE20\n");
        for step in 0..=60 {
            let t = step as f64 * 0.5;
            traces.push_str(&format!("{t}"));
            for (e, f) in [(5.0, slow), (10.0, 1.0), (20.0, 1.0)] {
                traces.push_str(&format!("\t{:.6}", 100.0 * (1.0 - (-0.0015 * e * f * t).exp())));
            }
            traces.push('\n');
        }
        let t = file(&format!("selwyn_{slow}.tsv"), &traces);
        let l = file("selwyn_layout.tsv", "trace\tS (µM)\tE (nM)\nE5\t100\t5\nE10\t100\t10\nE20\t100\t20\n");
        let (code, out, err) = turnover(&["rates", t.to_str().unwrap(), "--layout", l.to_str().unwrap(), "--json"]);
        assert_eq!(code, 0, "{err}");
        let v: serde_json::Value = serde_json::from_str(&out).unwrap();
        assert_eq!(v["selwyn"].as_array().unwrap().len(), 1);
        assert_eq!(v["selwyn"][0]["flagged"], flagged, "{}", v["selwyn"][0]["message"]);
    }
}
