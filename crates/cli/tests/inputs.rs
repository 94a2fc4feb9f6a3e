//! The built `turnover` binary on awkward inputs and command lines: help and
//! version, mistyped commands and options, thousands separators, spreadsheet
//! error cells, quoted CSV, other encodings, contradictory options, closed
//! pipes and full disks, terminal escapes. Every table here is invented.
//!
//! Conventions checked (common practice for command-line tools, no source):
//! help and version exit 0, usage errors exit 2 with the command's usage,
//! a closed pipe ends the run quietly.

use std::io::Write;
use std::path::PathBuf;
use std::process::{Command, Stdio};

/// An invented Michaelis-Menten rate table (Km near 0.5 mM, Vmax near 10).
const RATES: &str = "[S] (mM)\tv (µM/min)\n0.1\t1.9\n0.2\t3.1\n0.5\t5.2\n1\t6.4\n2\t7.5\n5\t8.3\n";

fn file(name: &str, bytes: &[u8]) -> String {
    let path = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join(name);
    std::fs::write(&path, bytes).unwrap();
    path.to_str().unwrap().to_string()
}

/// Runs the binary; returns (exit code, stdout, stderr).
fn turnover(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_turnover")).args(args).output().unwrap();
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into_owned(), String::from_utf8_lossy(&out.stderr).into_owned())
}

fn json(args: &[&str]) -> serde_json::Value {
    let (code, out, err) = turnover(args);
    assert_eq!(code, 0, "{args:?}: {err}");
    serde_json::from_str(&out).unwrap()
}

fn value(record: &serde_json::Value, name: &str) -> f64 {
    record["parameters"].as_array().unwrap().iter().find(|p| p["name"] == name).unwrap()["value"].as_f64().unwrap()
}

/// Runs each command line and checks the exit code and that standard
/// error contains every expected piece.
fn check(cases: &[(Vec<&str>, i32, &[&str])]) {
    for (args, code, pieces) in cases {
        let (found, _, err) = turnover(args);
        assert_eq!(found, *code, "{args:?}: {err}");
        for piece in *pieces {
            assert!(err.contains(piece), "{args:?}: expected {piece:?} in\n{err}");
        }
    }
}

#[test]
fn help_version_and_usage_errors() {
    let rates = file("help-rates.tsv", RATES.as_bytes());
    for args in [vec!["--help"], vec!["fit", "--help"], vec!["rates", "--help"], vec!["help", "compare"], vec!["--version"]] {
        let (code, out, err) = turnover(&args);
        assert_eq!(code, 0, "{args:?}: {err}");
        assert!(out.contains("turnover"), "{args:?}: {out}");
    }
    check(&[
        (vec!["fitt", &rates], 2, &["unrecognized subcommand 'fitt'", "similar subcommand exists: 'fit'", "Usage: turnover <COMMAND>"]),
        (vec!["fit", &rates, "--jsn"], 2, &["'--jsn'", "similar argument exists: '--json'", "Usage: turnover fit"]),
        (vec!["fit", &rates, "--model", "mn"], 2, &["invalid value 'mn'", "[possible values: mm, "]),
        (vec!["fit", &rates, "--weighting", "propotional"], 2, &["'proportional'"]),
        (vec!["fit"], 2, &["<FILE>", "Usage: turnover fit"]),
        (vec![], 2, &["Usage: turnover <COMMAND>"]),
    ]);
}

/// Contradictions and options that do not apply are refused with the
/// reason and the command's usage, never resolved silently.
#[test]
fn contradictory_options_are_refused() {
    let rates = file("contra-rates.tsv", RATES.as_bytes());
    check(&[
        (vec!["fit", &rates, "--enzyme", "25 nM", "--enzyme-unit", "pM"], 2, &["--enzyme '25 nM' is in nM but --enzyme-unit says pM", "Usage: turnover fit"]),
        (vec!["fit", &rates, "--enzyme-unit", "nM"], 2, &["--enzyme-unit is the unit of --enzyme; give --enzyme too"]),
        (vec!["fit", &rates, "--enzyme", "1,000", "--enzyme-unit", "nM"], 2, &["'1,000' could be 1000 (a comma grouping thousands) or 1.000 (a decimal comma)"]),
        (vec!["fit", &rates, "--model", "competitive", "--enzyme", "5 nM"], 2, &["--enzyme is not used by the competitive mechanism fit"]),
        (vec!["fit", &rates, "--model", "morrison", "--enzyme", "5 nM"], 2, &["give a bare number"]),
        (vec!["fit", &rates, "--seed", "7"], 2, &["--seed applies to bootstrap intervals only"]),
        (vec!["fit", &rates, "--ci", "profile", "--resamples", "100"], 2, &["--resamples applies to bootstrap intervals only"]),
        (vec!["fit", &rates, "--points"], 2, &["--points chooses what the JSON holds"]),
    ]);
    // The same unit twice is not a contradiction, and a decimal comma in an
    // option is read as one: 25,0 nM is 25 nM.
    let once = json(&["fit", &rates, "--json", "--enzyme", "25 nM", "--enzyme-unit", "nM"]);
    let comma = json(&["fit", &rates, "--json", "--enzyme", "25,0 nM"]);
    assert_eq!(value(&once, "kcat"), value(&comma, "kcat"));
    // Bootstrap options with bootstrap intervals are read: the same seed
    // gives the same intervals.
    let boot = |seed: &str| json(&["fit", &rates, "--json", "--ci", "bootstrap", "--resamples", "200", "--seed", seed]);
    let (a, b) = (boot("5"), boot("5"));
    assert_eq!(a["parameters"], b["parameters"]);
    assert_eq!(a["bootstrap"]["resamples"], 200);
    // The core's long model name is still read.
    let long = json(&["fit", &rates, "--json", "--model", "michaelis-menten"]);
    assert_eq!(value(&long, "Km"), value(&once, "Km"));
}

/// Thousands separators in a tab-separated table: one thousand when the
/// table shows decimal points elsewhere, a problem when nothing says which.
#[test]
fn thousands_separators_in_tables() {
    let decided = file("thousands-decided.tsv", b"[S] (nM)\tv (nM/s)\n250\t0.81\n500\t1.22\n1,000\t1.64\n2,000\t1.98\n5,000\t2.27\n10,000\t2.39\n");
    let plain = file("thousands-plain.tsv", b"[S] (nM)\tv (nM/s)\n250\t0.81\n500\t1.22\n1000\t1.64\n2000\t1.98\n5000\t2.27\n10000\t2.39\n");
    let a = json(&["fit", &decided, "--json"]);
    let b = json(&["fit", &plain, "--json"]);
    assert_eq!(value(&a, "Km"), value(&b, "Km"));
    let s: Vec<f64> = a["points"].as_array().unwrap().iter().map(|p| p["s"].as_f64().unwrap()).collect();
    assert_eq!(s, [250.0, 500.0, 1000.0, 2000.0, 5000.0, 10000.0]);

    let undecided = file("thousands-undecided.tsv", b"[S] (nM)\tv (nM/s)\n250\t8\n500\t12\n1,000\t16\n2,000\t20\n5,000\t23\n");
    check(&[(
        vec!["fit", &undecided],
        2,
        &["line 4, column 1: '1,000' could be 1000 (a comma grouping thousands) or 1.000 (a decimal comma)", "line 6, column 1: '5,000'"],
    )]);
}

/// Spreadsheet error values are problems with line and column, also at the
/// start of a line; with --lenient the other rows are fitted.
#[test]
fn spreadsheet_error_cells() {
    let text = format!("{RATES}#DIV/0!\t9.1\n10\t#N/A\n");
    let path = file("errors.tsv", text.as_bytes());
    check(&[(
        vec!["fit", &path],
        2,
        &["line 8, column 1: '#DIV/0!' is a spreadsheet error", "line 9, column 2: '#N/A' is a spreadsheet error", "2 problem(s) in the input"],
    )]);
    let lenient = json(&["fit", &path, "--json", "--lenient"]);
    assert_eq!(lenient["n"], 6);
    assert_eq!(lenient["problems"].as_array().unwrap().len(), 2);
}

/// Quoted CSV, UTF-16 with a byte-order mark, Windows-1252 and CR-only
/// line endings give the same fit as the plain tab-separated UTF-8 table.
#[test]
fn encodings_and_quoting_give_the_same_fit() {
    let reference = json(&["fit", &file("enc-plain.tsv", RATES.as_bytes()), "--json"]);
    let km = value(&reference, "Km");
    let quoted: String = RATES.lines().map(|l| l.split('\t').map(|c| format!("\"{c}\"")).collect::<Vec<_>>().join(",") + "\r\n").collect();
    let mut utf16 = vec![0xFF, 0xFE];
    utf16.extend(RATES.encode_utf16().flat_map(u16::to_le_bytes));
    let mut utf16be = vec![0xFE, 0xFF];
    utf16be.extend(RATES.encode_utf16().flat_map(u16::to_be_bytes));
    // In Windows-1252, µ is the single byte 0xB5.
    let cp1252: Vec<u8> = RATES.replace('µ', "\u{1}").bytes().map(|b| if b == 1 { 0xB5 } else { b }).collect();
    let cr_only = RATES.replace('\n', "\r");
    for (name, bytes, note) in [
        ("enc-quoted.csv", quoted.into_bytes(), None),
        ("enc-utf16le.tsv", utf16, None),
        ("enc-utf16be.tsv", utf16be, None),
        ("enc-1252.tsv", cp1252, Some("it was read as Windows-1252")),
        ("enc-cr.tsv", cr_only.into_bytes(), None),
    ] {
        let path = file(name, &bytes);
        let (code, out, err) = turnover(&["fit", &path, "--json"]);
        assert_eq!(code, 0, "{name}: {err}");
        let record: serde_json::Value = serde_json::from_str(&out).unwrap();
        assert_eq!(value(&record, "Km"), km, "{name}");
        assert_eq!(record["units"], reference["units"], "{name}");
        match note {
            Some(n) => assert!(err.contains(n), "{name}: {err}"),
            None => assert!(err.is_empty(), "{name}: {err}"),
        }
    }
}

/// Old weighting names still work, with a note naming the new one.
#[test]
fn weighting_names() {
    let rates = file("weighting.tsv", RATES.as_bytes());
    let (code, new_out, new_err) = turnover(&["fit", &rates, "--json", "--weighting", "proportional"]);
    assert_eq!(code, 0, "{new_err}");
    assert!(new_err.is_empty(), "{new_err}");
    let (code, old_out, old_err) = turnover(&["fit", &rates, "--json", "--weighting", "relative"]);
    assert_eq!(code, 0, "{old_err}");
    assert!(old_err.contains("the weighting name 'relative' is replaced by 'proportional'"), "{old_err}");
    assert_eq!(new_out, old_out);
}

/// A closed pipe ends the run quietly with 0; a full disk exits 1 with a
/// message.
#[test]
fn write_errors() {
    let rates = file("pipe.tsv", RATES.as_bytes());
    let mut child = Command::new(env!("CARGO_BIN_EXE_turnover"))
        .args(["fit", &rates, "--json"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    let out = child.wait_with_output().unwrap();
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
    assert!(out.stderr.is_empty(), "{}", String::from_utf8_lossy(&out.stderr));

    if let Ok(full) = std::fs::OpenOptions::new().write(true).open("/dev/full") {
        let out = Command::new(env!("CARGO_BIN_EXE_turnover")).args(["fit", &rates]).stdout(full).output().unwrap();
        assert_eq!(out.status.code(), Some(1));
        assert!(String::from_utf8_lossy(&out.stderr).contains("cannot write the output"));
    }
}

/// An invented time course: A1 rises by 0.1 per minute; the layout names it.
const TRACES: &str = "time (min)\tA1\n0\t0.10\n1\t0.20\n2\t0.30\n3\t0.40\n4\t0.50\n5\t0.60\n";

#[test]
fn time_course_overrides_and_direction() {
    let traces = file("tc.tsv", TRACES.as_bytes());
    let layout = file("tc-layout.tsv", b"trace\tS (mM)\nA1\t1\n");
    check(&[
        (vec!["rates", &traces, "--layout", &layout, "--window", "ZZ=1:2"], 2, &["a trace named 'ZZ', but the table has no such trace (its traces are A1)", "Usage: turnover rates"]),
        (vec!["rates", &traces, "--layout", &layout, "--exclude", "B2"], 2, &["The trace 'B2' is to be left out, but the table has no such trace"]),
        (vec!["rates", &traces, "--layout", &layout, "--falls"], 2, &["every sample's signal rises, but --falls says the signal falls"]),
        (vec!["rates", &traces, "--layout", &layout, "--window", "A1=3:1"], 2, &["the end must come after the start", "Usage: turnover rates"]),
        (vec!["rates", &traces, "--layout", &layout, "--epsilon", "6220", "--preset", "nadh"], 2, &["give one of them"]),
        (vec!["rates", &traces, "--layout", &layout, "--standard", &layout, "--preset", "nadh", "--path", "1"], 2, &["--standard converts the signal by its own curve"]),
        (vec!["rates", &traces, "--layout", &layout, "--epsilon", "6220"], 2, &["Beer-Lambert needs both"]),
    ]);
    let record = json(&["rates", &traces, "--layout", &layout, "--json", "--window", "A1=0:5"]);
    assert!((record["traces"][0]["rate"].as_f64().unwrap() - 0.1).abs() < 1e-12);
}

/// Terminal control characters in names reach the terminal escaped.
#[test]
fn escapes_are_not_passed_to_the_terminal() {
    let traces = file("esc.tsv", TRACES.replace("A1", "A1\u{1b}[2J").as_bytes());
    let layout = file("esc-layout.tsv", "trace\nA1\u{1b}[2J\n".as_bytes());
    let (code, out, err) = turnover(&["rates", &traces, "--layout", &layout]);
    assert_eq!(code, 0, "{err}");
    assert!(!out.contains('\u{1b}') && !err.contains('\u{1b}'), "{out:?}");
    assert!(out.contains("A1\\u{1b}[2J"), "{out}");
    let (_, out, _) = turnover(&["rates", &traces, "--layout", &layout, "--json"]);
    let record: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(record["traces"][0]["name"], "A1\u{1b}[2J");
}

/// Reading standard input works through the same decoding.
#[test]
fn standard_input() {
    let mut child = Command::new(env!("CARGO_BIN_EXE_turnover"))
        .args(["fit", "-", "--json"])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .spawn()
        .unwrap();
    let mut bytes = vec![0xFF, 0xFE];
    bytes.extend(RATES.encode_utf16().flat_map(u16::to_le_bytes));
    child.stdin.take().unwrap().write_all(&bytes).unwrap();
    let out = child.wait_with_output().unwrap();
    assert_eq!(out.status.code(), Some(0));
    let record: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(record["n"], 6);
}

/// Above 10,000 points the per-point arrays leave the default JSON (with a
/// sentence saying so); `--points` brings them back. The table is invented:
/// 40 concentrations repeated, v = 10·[S]/(0.5 + [S]) exactly.
#[test]
fn large_json_leaves_points_out_unless_asked() {
    let mut text = String::from("[S] (mM)\tv (µM/min)\n");
    for k in 0..10_001 {
        let s = 0.05 + (k % 40) as f64 * 0.25;
        text.push_str(&format!("{s}\t{}\n", 10.0 * s / (0.5 + s)));
    }
    let path = file("large.tsv", text.as_bytes());
    let default = json(&["fit", &path, "--json"]);
    assert!(default.get("points").is_none());
    assert!(default["diagnostics"].get("points").is_none());
    assert!(default["points_omitted"].as_str().unwrap().starts_with("the 10001 points"));
    let all = json(&["fit", &path, "--json", "--points"]);
    assert_eq!(all["points"].as_array().unwrap().len(), 10_001);
    assert_eq!(all["diagnostics"]["points"].as_array().unwrap().len(), 10_001);
    assert!(all.get("points_omitted").is_none());
    assert_eq!(default["parameters"], all["parameters"]);
}

/// The awkward inputs of the issue's list, each with its exit code and a
/// piece of its message; whatever happens, nothing non-finite is printed
/// and nothing panics (a panic would exit 101 or abort).
#[test]
fn awkward_inputs() {
    let cases: &[(&str, &[u8], &[&str], i32, &str)] = &[
        ("empty", b"", &[], 2, "no data rows found"),
        ("one point", b"S\tv\n1\t2\n", &[], 2, "only 1 usable point(s) remain; at least 3 are needed"),
        ("fewer points than parameters", b"S\tv\n1\t2\n2\t3\n4\t3.5\n", &["--model", "hill"], 2, "only 3 usable point(s) remain; at least 4 are needed"),
        ("all x equal", b"S\tv\n1\t1\n1\t2\n1\t3\n", &[], 2, "only 1 distinct [S] value(s)"),
        ("zeros", b"S\tv\n0\t0\n0\t0\n0\t0\n0\t0\n", &[], 2, ""),
        ("negative [S]", b"S\tv\n-1\t1\n2\t2\n3\t2.5\n4\t2.8\n", &[], 2, "line 2, column 1: a concentration cannot be negative (-1)"),
        ("NaN, Inf, n/a and a dash", b"S\tv\nNaN\t1\n2\tinf\nn/a\t3\n4\t\xe2\x80\x94\n", &[], 2, "line 5, column 2: expected a number, found '\u{2014}'"),
        ("mixed separators", b"S\tv\n1;2\n3,4\t5\n", &[], 2, "line 2: expected 2 columns, found 1"),
        ("ragged rows", b"S\tv\n1\t2\t3\n2\n", &[], 2, "line 2: expected 2 columns, found 3"),
        ("unknown unit", b"S\tv (\xc2\xb5M/min)\n1\t1\n2\t1.5\n4\t2\n", &["--substrate-unit", "ppm"], 2, "unknown concentration unit 'ppm'"),
        ("binary garbage", &[0x00, 0xff, 0x13, 0x37, 0x80, 0x0a, 0xde, 0xad, 0xbe, 0xef, 0x09, 0x01], &[], 2, ""),
    ];
    for (name, bytes, extra, code, piece) in cases {
        let slug: String = name.chars().map(|c| if c.is_ascii_alphanumeric() { c } else { '-' }).collect();
        let path = file(&format!("awkward-{slug}.tsv"), bytes);
        let mut args = vec!["fit", path.as_str()];
        args.extend(extra.iter());
        let (found, out, err) = turnover(&args);
        assert_eq!(found, *code, "{name}: {err}");
        assert!(err.contains(piece), "{name}: expected {piece:?} in {err}");
        for text in [&out, &err] {
            assert!(!text.contains("NaN") || name.starts_with("NaN"), "{name}: {text}");
            assert!(!text.contains("inf ") && !text.contains("= inf"), "{name}: {text}");
        }
    }
    // An unknown unit in a header is a note, the column shown without a unit.
    let header = file("awkward-header-unit.tsv", "S (ppm)\tv (µM/min)\n1\t1\n2\t1.5\n4\t2\n".as_bytes());
    let (code, out, _) = turnover(&["fit", &header]);
    assert_eq!(code, 0);
    assert!(out.contains("note: The header's unit for [S] was not understood (unknown concentration unit 'ppm'"), "{out}");
    // Values over 30 decades in one table: read, fitted or refused, but
    // every printed number is finite.
    let wide = file("awkward-wide.tsv", b"S\tv\n1e-15\t1e-15\n1e-10\t1e-9\n1e-5\t1e-4\n1\t1\n1e5\t2\n1e15\t2\n");
    let (code, out, err) = turnover(&["fit", &wide]);
    assert!(code == 0 || code == 3, "{err}");
    assert!(!out.contains("NaN") && !out.contains("inf"), "{out}");
}
