//! Replicates in columns through the built binary: `turnover fit` on a
//! table with one column per replicate gives the same constants (1e-12)
//! as the same rates written one per line, for the rate, inhibitor-series
//! and inhibition fits; `--exclude-cells` leaves out one replicate.
//! Every data set here is invented for the test (not measured data).

use std::path::PathBuf;
use std::process::Command;

fn file(name: &str, text: &str) -> String {
    let path = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join(name);
    std::fs::write(&path, text).unwrap();
    path.to_str().unwrap().to_string()
}

fn json(args: &[&str]) -> serde_json::Value {
    let out = Command::new(env!("CARGO_BIN_EXE_turnover")).args(args).output().unwrap();
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
    serde_json::from_slice(&out.stdout).unwrap()
}

/// Both records' parameters agree to 1e-12 relative, value and SE.
fn same_constants(a: &serde_json::Value, b: &serde_json::Value) {
    let (pa, pb) = (a["parameters"].as_array().unwrap(), b["parameters"].as_array().unwrap());
    assert_eq!(pa.len(), pb.len());
    for (x, y) in pa.iter().zip(pb) {
        assert_eq!(x["name"], y["name"]);
        for field in ["value", "std_error"] {
            let (u, v) = (x[field].as_f64().unwrap(), y[field].as_f64().unwrap());
            assert!((u - v).abs() <= 1e-12 * v.abs(), "{} {field}: {u} vs {v}", x["name"]);
        }
    }
    assert_eq!(a["n"], b["n"]);
}

/// Rows of (concentration, replicates) written wide and long (same order).
fn layouts(header_wide: &str, header_long: &str, rows: &[(&str, &[&str])]) -> (String, String) {
    let mut wide = format!("{header_wide}\n");
    let mut long = format!("{header_long}\n");
    for (x, ys) in rows {
        wide.push_str(&format!("{x}\t{}\n", ys.join("\t")));
        for y in *ys {
            long.push_str(&format!("{x}\t{y}\n"));
        }
    }
    (wide, long)
}

#[test]
fn rate_fit_reads_replicate_columns_as_the_long_layout() {
    let rows: &[(&str, &[&str])] = &[
        ("1", &["0.98", "1.04", "0.95"]),
        ("2", &["1.70", "1.62", "1.66"]),
        ("5", &["2.80", "2.93", "2.86"]),
        ("10", &["3.31", "3.40", "3.22"]),
        ("20", &["3.70", "3.58", "3.66"]),
        ("50", &["3.83", "3.90", "3.81"]),
    ];
    let (wide, long) = layouts("Substrate (µM)\trate rep 1 (µM/min)\trep 2\trep 3", "S (µM)\tv (µM/min)", rows);
    let (wide, long) = (file("rep-wide.tsv", &wide), file("rep-long.tsv", &long));
    let a = json(&["fit", &wide, "--json", "--enzyme", "10 nM"]);
    let b = json(&["fit", &long, "--json", "--enzyme", "10 nM"]);
    same_constants(&a, &b);
    assert_eq!(a["n"], 18);
    assert_eq!(a["replicates"], b["replicates"]);
    assert_eq!(a["replicates"][0]["count"], 3);
    assert_eq!(a["diagnostics"]["lack_of_fit"]["lack_of_fit_dof"], 4);
    // Line 3 column 3 is the second replicate at [S] = 2 (1.62).
    let fewer = json(&["fit", &wide, "--json", "--exclude-cells", "3:3", "--points"]);
    assert_eq!(fewer["n"], 17);
    let left_out: Vec<_> = fewer["points"].as_array().unwrap().iter().filter(|p| p["excluded"] == true).collect();
    assert_eq!(left_out.len(), 1);
    assert_eq!((left_out[0]["line"].as_u64(), left_out[0]["column"].as_u64(), left_out[0]["v"].as_f64()), (Some(3), Some(3), Some(1.62)));
}

#[test]
fn dose_and_inhibition_fits_read_replicate_columns() {
    let rows: &[(&str, &[&str])] = &[
        ("0", &["98.1", "101.5"]),
        ("1", &["93.0", "95.8"]),
        ("3", &["80.2", "77.9"]),
        ("10", &["52.3", "49.0"]),
        ("30", &["24.8", "27.1"]),
        ("100", &["9.6", "8.1"]),
        ("300", &["3.9", "2.7"]),
    ];
    let (wide, long) = layouts("[I] (nM)\tresponse 1\tresponse 2", "[I] (nM)\tresponse", rows);
    let (wide, long) = (file("dose-wide.tsv", &wide), file("dose-long.tsv", &long));
    let a = json(&["fit", &wide, "--model", "ic50", "--json"]);
    same_constants(&a, &json(&["fit", &long, "--model", "ic50", "--json"]));
    assert_eq!(a["replicates"].as_array().unwrap().len(), 7);

    let matrix = "[S] (mM)\t0\t0\t5 µM\t5 µM\n0.2\t2.9\t3.0\t1.6\t1.7\n0.5\t5.1\t4.9\t3.3\t3.2\n1\t6.6\t6.8\t4.9\t4.7\n3\t8.6\t8.4\t7.4\t7.6\n";
    let mut long = String::from("[S] (mM)\t[I] (µM)\tv\n");
    for line in matrix.lines().skip(1) {
        let cells: Vec<&str> = line.split('\t').collect();
        for (k, v) in cells[1..].iter().enumerate() {
            long.push_str(&format!("{}\t{}\t{v}\n", cells[0], if k < 2 { 0 } else { 5 }));
        }
    }
    let (matrix, long) = (file("inh-matrix.tsv", matrix), file("inh-long.tsv", &long));
    let a = json(&["fit", &matrix, "--model", "competitive", "--json"]);
    same_constants(&a, &json(&["fit", &long, "--model", "competitive", "--json"]));
    assert_eq!(a["replicates"][1]["by_substrate"][0]["count"], 2);
}

/// `turnover rates --layout` with a plate map gives the same JSON rates as
/// with the list it stands for (an invented plate: two substrate
/// concentrations and a blank).
#[test]
fn rates_read_a_plate_map_layout() {
    let traces = file("pm-traces.tsv", "time (min)\tA1\tA2\tA3\n0\t0.10\t0.20\t0.05\n1\t0.21\t0.26\t0.05\n2\t0.30\t0.33\t0.05\n3\t0.41\t0.39\t0.05\n4\t0.50\t0.46\t0.05\n");
    let list = file("pm-list.tsv", "trace\tS (mM)\trole\nA1\t2\tsample\nA2\t0.5\tsample\nA3\t\tblank\n");
    let plate = file("pm-plate.tsv", "S (mM)\n\t1\t2\t3\nA\t2\t0.5\n\nrole\n\t1\t2\t3\nA\tsample\tsample\tblank\n");
    let a = json(&["rates", &traces, "--layout", &list, "--json"]);
    let b = json(&["rates", &traces, "--layout", &plate, "--json"]);
    assert_eq!(a["traces"], b["traces"]);
    assert_eq!(a["rate_table"], b["rate_table"]);
    assert!(a["traces"][0]["rate"].as_f64().is_some());
}

/// An invented export with two reads: `--block 2` reads the second, with
/// the same rates as the second table alone; the JSON lists both tables.
#[test]
fn rates_choose_a_kinetic_table() {
    let second = "time (min)\tA1\n0\t0.30\n1\t0.41\n2\t0.50\n3\t0.61\n4\t0.70\n";
    let export = format!("Read 1\t340 nm\ntime (min)\tA1\n0\t0.10\n1\t0.21\n2\t0.30\n3\t0.41\n4\t0.50\n\nRead 2\t405 nm\n{second}");
    let (export, second) = (file("blocks-export.tsv", &export), file("blocks-second.tsv", second));
    let layout = file("blocks-layout.tsv", "trace\tS (mM)\nA1\t1\n");
    let a = json(&["rates", &export, "--layout", &layout, "--json", "--block", "2"]);
    let b = json(&["rates", &second, "--layout", &layout, "--json"]);
    assert_eq!(a["traces"], b["traces"]);
    assert_eq!(a["blocks"].as_array().unwrap().len(), 2);
    assert_eq!(a["blocks"][1]["title"], "Read 2 405 nm");
    assert_eq!(b["blocks"].as_array().unwrap().len(), 1);
}

/// `turnover rates --rates-per min` on traces timed in h:mm:ss (read as
/// seconds; invented readings every 30 s): every rate is the per-second
/// rate × 60 and its window the per-second window ÷ 60 (1e-9: the line is
/// fitted to times 60 times apart), the rate unit says per minute, a note
/// says what was converted; a window set by hand is read in minutes.
#[test]
fn trace_rates_per_minute_from_clock_times() {
    let traces = file(
        "clock-traces.tsv",
        "time\tA1\tA2\n0:00:00\t0.100\t0.050\n0:00:30\t0.151\t0.062\n0:01:00\t0.199\t0.075\n0:01:30\t0.252\t0.087\n0:02:00\t0.300\t0.100\n0:02:30\t0.349\t0.112\n0:03:00\t0.401\t0.125\n",
    );
    let layout = file("clock-layout.tsv", "trace\tS (mM)\nA1\t2\nA2\t0.5\n");
    let per_s = json(&["rates", &traces, "--layout", &layout, "--json"]);
    let per_min = json(&["rates", &traces, "--layout", &layout, "--json", "--rates-per", "min"]);
    assert_eq!(per_s["time_unit"], "s");
    assert_eq!(per_min["time_unit"], "min");
    assert!(per_min["rate_unit"].as_str().unwrap().ends_with("/min"), "{}", per_min["rate_unit"]);
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs().max(1e-12);
    for (a, b) in per_s["traces"].as_array().unwrap().iter().zip(per_min["traces"].as_array().unwrap()) {
        assert!(close(b["rate"].as_f64().unwrap(), 60.0 * a["rate"].as_f64().unwrap()), "{} rate", a["name"]);
        assert!(close(b["window_end"].as_f64().unwrap(), a["window_end"].as_f64().unwrap() / 60.0), "{} window", a["name"]);
    }
    assert!(per_min["notes"].as_array().unwrap().iter().any(|n| n.as_str().unwrap().starts_with("Times converted from s to min (t ÷ 60)")));
    let by_hand = json(&["rates", &traces, "--layout", &layout, "--json", "--rates-per", "min", "--window", "A1=0:2"]);
    assert_eq!(by_hand["traces"][0]["window_end"].as_f64(), Some(2.0));
}

/// `--rates-per s` reports Vmax per second: the per-minute Vmax over 60
/// (1e-9: the solver works on numbers 60 times apart), Km unchanged; and
/// the option is refused for a model it does not apply to.
#[test]
fn rates_per_second() {
    let rates = file("per-min.tsv", "[S] (µM)\tv (µM/min)\n1\t0.99\n2\t1.66\n5\t2.86\n10\t3.33\n20\t3.64\n50\t3.85\n");
    let per_min = json(&["fit", &rates, "--json"]);
    let per_s = json(&["fit", &rates, "--json", "--rates-per", "s"]);
    let value = |r: &serde_json::Value, k: usize| r["parameters"][k]["value"].as_f64().unwrap();
    assert!((value(&per_s, 0) - value(&per_min, 0) / 60.0).abs() <= 1e-9 * value(&per_s, 0));
    assert!((value(&per_s, 1) - value(&per_min, 1)).abs() <= 1e-9 * value(&per_s, 1));
    assert_eq!(per_s["units"]["rate"], "µM/s");
    // A dose-response table of % activity has no rates to convert: refused
    // with the reason; one of rates (invented tight-binding rates, nM
    // inhibitor) is converted like any other.
    let percent = file("per-cent.tsv", "[I] (µM)\t% activity\n0.01\t98\n0.1\t91\n1\t52\n10\t11\n100\t2\n0.03\t96\n0.3\t77\n3\t27\n");
    let out = Command::new(env!("CARGO_BIN_EXE_turnover")).args(["fit", &percent, "--model", "ic50", "--rates-per", "s"]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("responses per s need responses that are rates"), "{}", String::from_utf8_lossy(&out.stderr));
    let tight = file("tight.tsv", "[I] (nM)\tv (µM/min)\n0\t5.00\n1\t4.58\n2\t4.19\n5\t3.09\n10\t1.91\n15\t1.18\n20\t0.82\n30\t0.49\n50\t0.27\n");
    let v_min = json(&["fit", &tight, "--model", "morrison", "--enzyme", "10", "--json"]);
    let v_s = json(&["fit", &tight, "--model", "morrison", "--enzyme", "10", "--json", "--rates-per", "s"]);
    let named = |r: &serde_json::Value, name: &str| r["parameters"].as_array().unwrap().iter().find(|p| p["name"] == name).unwrap()["value"].as_f64().unwrap();
    assert!((named(&v_s, "v0") - named(&v_min, "v0") / 60.0).abs() <= 1e-9 * named(&v_s, "v0"));
    assert!((named(&v_s, "Ki_app") - named(&v_min, "Ki_app")).abs() <= 1e-9 * named(&v_s, "Ki_app"));
}

/// `--rates-per s` in an inhibition fit (invented competitive rates, µM/min):
/// Vmax per second is the per-minute Vmax over 60, Km and Kic unchanged (the
/// rates are scaled before the fit; 1e-9 as above), the unit says µM/s and a
/// note says what was converted.
#[test]
fn rates_per_second_in_inhibition() {
    let table = "[S] (µM)\t[I] (µM)\tv (µM/min)\n\
        2\t0\t1.64\n5\t0\t2.86\n10\t0\t3.64\n20\t0\t4.35\n50\t0\t4.72\n\
        2\t5\t0.97\n5\t5\t2.02\n10\t5\t2.86\n20\t5\t3.62\n50\t5\t4.33\n\
        2\t15\t0.52\n5\t15\t1.18\n10\t15\t1.98\n20\t15\t2.84\n50\t15\t3.80\n";
    let rates = file("inhibition-per-min.tsv", table);
    let per_min = json(&["fit", &rates, "--model", "competitive", "--json"]);
    let per_s = json(&["fit", &rates, "--model", "competitive", "--json", "--rates-per", "s"]);
    let constant = |r: &serde_json::Value, name: &str| {
        r["parameters"].as_array().unwrap().iter().find(|p| p["name"] == name).unwrap()["value"].as_f64().unwrap()
    };
    assert!((constant(&per_s, "Vmax") - constant(&per_min, "Vmax") / 60.0).abs() <= 1e-9 * constant(&per_s, "Vmax"));
    for name in ["Km", "Kic"] {
        assert!((constant(&per_s, name) - constant(&per_min, name)).abs() <= 1e-9 * constant(&per_s, name), "{name}");
    }
    assert_eq!(per_s["units"]["rate"], "µM/s");
    assert!(per_s["notes"].as_array().unwrap().iter().any(|n| n.as_str().unwrap().contains("Rates are reported per s")));
}

/// A workbook (written by the general-purpose rust_xlsxwriter crate, with
/// invented rates) read directly: `--sheet Rates` gives the same constants
/// as the same table as text; without `--sheet` the sheets are listed.
#[test]
fn workbooks_are_read_by_sheet() {
    let rows = [(1.0, 0.99), (2.0, 1.66), (5.0, 2.86), (10.0, 3.33), (20.0, 3.64), (50.0, 3.85)];
    let mut workbook = rust_xlsxwriter::Workbook::new();
    workbook.add_worksheet().set_name("Notes").unwrap().write_string(0, 0, "invented data").unwrap();
    let sheet = workbook.add_worksheet().set_name("Rates").unwrap();
    sheet.write_string(0, 0, "[S] (µM)").unwrap();
    sheet.write_string(0, 1, "v (µM/min)").unwrap();
    let mut text = String::from("[S] (µM)\tv (µM/min)\n");
    for (k, (s, v)) in rows.iter().enumerate() {
        sheet.write_number(k as u32 + 1, 0, *s).unwrap();
        sheet.write_number(k as u32 + 1, 1, *v).unwrap();
        text.push_str(&format!("{s}\t{v}\n"));
    }
    let path = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("rates-book.xlsx");
    workbook.save(&path).unwrap();
    let path = path.to_str().unwrap();
    let from_sheet = json(&["fit", path, "--sheet", "Rates", "--json"]);
    same_constants(&from_sheet, &json(&["fit", &file("rates-book.tsv", &text), "--json"]));
    let out = Command::new(env!("CARGO_BIN_EXE_turnover")).args(["fit", path]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("has 2 sheets ('Notes', 'Rates'); choose one with --sheet NAME"), "{}", String::from_utf8_lossy(&out.stderr));
}

/// An Excel 97-2003 workbook (.xls) is refused with the sentence saying
/// how to save it, not read as text (issue 10). The file is the compound
/// file's signature followed by zeros: enough to be recognised.
#[test]
fn old_excel_workbooks_are_refused_with_a_sentence() {
    let mut bytes = vec![0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1];
    bytes.extend([0u8; 504]);
    let path = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("old.xls");
    std::fs::write(&path, bytes).unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_turnover")).args(["fit", path.to_str().unwrap()]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("an Excel 97-2003 workbook (.xls), which Turnover does not read; open it in the spreadsheet program and save it as .xlsx or .ods"), "{stderr}");
}
