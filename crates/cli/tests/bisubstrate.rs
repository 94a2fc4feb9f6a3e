//! `turnover fit --model sequential|ordered|ping-pong` and `turnover
//! compare` on two-substrate tables, run as the built binary on invented,
//! noise-free rates (the numbers are checked against SciPy in
//! `tests/scipy/bisubstrate_crosscheck.py` and by simulation in
//! `tests/bisubstrate.rs`): the JSON shapes, the choice of laws without
//! `--models`, and the refusals.

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

/// Exact ping-pong rates (invented): Vmax 10 µM/min, KmA 10 µM, KmB
/// 0.5 mM, on a 5 × 5 grid; a matrix table.
fn ping_pong_matrix() -> String {
    let b_levels = [0.1, 0.25, 0.5, 1.0, 2.5];
    let mut text = String::from("[A] (µM)");
    for b in b_levels {
        text.push_str(&format!("\t{b} mM"));
    }
    text.push('\n');
    for a in [2.0, 5.0, 10.0, 20.0, 50.0] {
        text.push_str(&format!("{a}"));
        for b in b_levels {
            text.push_str(&format!("\t{:.12}", 10.0 * a * b / (0.5 * a + 10.0 * b + a * b)));
        }
        text.push('\n');
    }
    text
}

#[test]
fn fit_and_compare_read_two_substrate_tables() {
    let path = file("ping_pong_matrix.tsv", &ping_pong_matrix());
    let path = path.to_str().unwrap();
    let (code, out, err) = turnover(&["fit", path, "--model", "ping-pong", "--json", "--rate-unit", "µM/min", "--enzyme", "20 nM"]);
    assert_eq!(code, 0, "{err}");
    let json: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(json["model"], "ping-pong");
    let names: Vec<&str> = json["parameters"].as_array().unwrap().iter().map(|p| p["name"].as_str().unwrap()).collect();
    assert_eq!(names, ["Vmax", "KmA", "KmB", "kcat"]);
    let km_b = &json["parameters"][2];
    assert!((km_b["value"].as_f64().unwrap() - 0.5).abs() < 1e-9, "{km_b}");
    assert_eq!(km_b["unit"], "mM");
    assert!(json["design_warnings"].as_array().unwrap().is_empty());
    assert_eq!(json["points"].as_array().unwrap().len(), 25);
    // Without --models, compare fits the three laws of a table naming [A].
    let (code, out, err) = turnover(&["compare", path, "--json"]);
    assert_eq!(code, 0, "{err}");
    let json: serde_json::Value = serde_json::from_str(&out).unwrap();
    let mut models: Vec<&str> = json["models"].as_array().unwrap().iter().map(|m| m["model"].as_str().unwrap()).collect();
    models.sort();
    assert_eq!(models, ["ordered", "ping-pong", "sequential"]);
    assert_eq!(json["f_tests"].as_array().unwrap().len(), 2);
    let (code, out, _) = turnover(&["compare", path]);
    assert_eq!(code, 0);
    assert!(out.contains("F test ping-pong inside sequential"), "{out}");
}

#[test]
fn refusals_and_bad_cells() {
    let path = file("ping_pong_refusals.tsv", &ping_pong_matrix());
    let path = path.to_str().unwrap();
    let (code, _, err) = turnover(&["fit", path, "--model", "sequential", "--substrate-unit", "mM"]);
    assert_eq!(code, 2);
    assert!(err.contains("--substrate-unit is the unit of [S]"), "{err}");
    let (code, _, err) = turnover(&["compare", path, "--models", "sequential,mixed"]);
    assert_eq!(code, 2);
    assert!(err.contains("compare needs models of the same data"), "{err}");
    // Line 3 (the second [A]), column 2 (the first [B]) unreadable.
    let bad: Vec<String> = ping_pong_matrix()
        .lines()
        .enumerate()
        .map(|(k, line)| {
            let mut cells: Vec<&str> = line.split('\t').collect();
            if k == 2 {
                cells[1] = "n/a";
            }
            cells.join("\t")
        })
        .collect();
    let bad_path = file("ping_pong_bad.tsv", &(bad.join("\n") + "\n"));
    let (code, _, err) = turnover(&["fit", bad_path.to_str().unwrap(), "--model", "ordered"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("line 3, column 2: expected a number, found 'n/a'"), "{err}");
    let (code, out, err) = turnover(&["fit", bad_path.to_str().unwrap(), "--model", "ordered", "--lenient", "--json"]);
    assert_eq!(code, 0, "{err}");
    let json: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(json["problems"][0]["line"], 3);
    assert_eq!(json["problems"][0]["column"], 2);
    assert_eq!(json["n"], 24);
}
