//! `turnover fit --protein CONC [--molar-mass MASS]`, run as the built
//! binary: specific activity and [E]t from protein in the JSON and the
//! text, the same whatever units the numbers are written in, and the
//! refusals. The rates are invented for the test (not measured data).

use std::path::PathBuf;
use std::process::Command;

const RATES: &str = "[S] (µM)\tv (µM/min)\n1\t0.99\n2\t1.66\n5\t2.86\n10\t3.33\n20\t3.64\n50\t3.85\n";

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

fn json(args: &[&str]) -> serde_json::Value {
    let (code, out, err) = turnover(args);
    assert_eq!(code, 0, "{args:?}: {err}");
    serde_json::from_str(&out).unwrap()
}

fn parameter<'a>(record: &'a serde_json::Value, name: &str) -> &'a serde_json::Value {
    record["parameters"].as_array().unwrap().iter().find(|p| p["name"] == name).unwrap_or_else(|| panic!("no {name}"))
}

fn number(p: &serde_json::Value, field: &str) -> f64 {
    p[field].as_f64().unwrap_or_else(|| panic!("{field} of {p}"))
}

/// By hand: 0.05 mg/mL = 50 mg/L and rates in µM/min = µmol L⁻¹ min⁻¹, so
/// specific activity = Vmax ÷ 50 µmol min⁻¹ mg⁻¹, its SE SE(Vmax) ÷ 50;
/// [E]t = 0.05 g/L ÷ 42 000 g/mol = 1.190476 µM, so kcat = Vmax ÷ 60 ÷
/// 1.190476 s⁻¹. The same with the protein as 50 µg/mL and the molar mass
/// as 42000 g/mol, with a decimal comma, and with rates per second.
#[test]
fn specific_activity_and_enzyme_from_protein() {
    let rates = file("protein-rates.tsv", RATES);
    let record = json(&["fit", &rates, "--json", "--protein", "0.05mg/mL", "--molar-mass", "42kDa"]);
    let vmax = parameter(&record, "Vmax");
    let activity = parameter(&record, "specific activity");
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * b.abs();
    assert!(close(number(activity, "value"), number(vmax, "value") / 50.0));
    assert!(close(number(activity, "std_error"), number(vmax, "std_error") / 50.0));
    assert!(close(number(activity, "ci_low"), number(vmax, "ci_low") / 50.0));
    assert_eq!(activity["unit"], "µmol min⁻¹ mg⁻¹");
    let kcat = parameter(&record, "kcat");
    assert!(close(number(kcat, "value"), number(vmax, "value") / 60.0 / (0.05 / 42_000.0 * 1e6)));
    let from = &record["enzyme_from_protein"];
    assert!(close(from["enzyme_molar"].as_f64().unwrap(), 0.05 / 42_000.0 * 1e6));
    assert_eq!(from["enzyme_unit"], "µM");
    assert_eq!(record["units"]["enzyme"], "µM");
    // Without --protein the record has no such field (JSON as before).
    assert!(json(&["fit", &rates, "--json"]).get("enzyme_from_protein").is_none());

    for args in [
        vec!["--protein", "50 µg/mL", "--molar-mass", "42000 g/mol"],
        vec!["--protein", "0,05 mg/mL", "--molar-mass", "42 kDa"],
        vec!["--protein", "0.05mg/mL", "--molar-mass", "42kDa", "--rates-per", "s"],
    ] {
        let other = json(&[&["fit", rates.as_str(), "--json"], args.as_slice()].concat());
        for name in ["specific activity", "kcat"] {
            let (a, b) = (number(parameter(&other, name), "value"), number(parameter(&record, name), "value"));
            assert!((a - b).abs() <= 1e-9 * b, "{args:?} {name}: {a} vs {b}");
        }
    }
    // The text prints it by the formatting rule, with the notes.
    let (code, text, _) = turnover(&["fit", &rates, "--protein", "0.05mg/mL", "--molar-mass", "42kDa"]);
    assert_eq!(code, 0);
    assert!(text.lines().any(|l| l.starts_with("specific activity = ") && l.contains(" µmol min⁻¹ mg⁻¹ ")), "{text}");
    assert!(text.contains("note: [E]t from the protein: 0.05000 g/L ÷ 42000 g/mol = 1.190 µM"), "{text}");
    assert!(text.contains("the protein concentration is taken as exact"), "{text}");
}

/// Wrong or missing units and options that cannot go together are
/// refused with a sentence and exit code 2.
#[test]
fn protein_refusals() {
    let rates = file("protein-refusals.tsv", RATES);
    let series = file("protein-series.tsv", "[I] (µM)\t% activity\n0\t99\n0.1\t97\n1\t68\n3\t41\n10\t16\n30\t6\n100\t3\n");
    let batch = file("protein-batch.tsv", "curve\tS (µM)\tv (µM/min)\na\t1\t0.99\na\t2\t1.66\na\t5\t2.86\na\t10\t3.33\n");
    let cases: &[(&[&str], &str)] = &[
        (&["fit", &rates, "--protein", "0.05 mM"], "'mM' is not a protein concentration unit"),
        (&["fit", &rates, "--protein", "0.05"], "has no unit"),
        (&["fit", &rates, "--protein", "mg/mL"], "does not start with a number"),
        (&["fit", &rates, "--protein", "1,000 mg/mL"], "could be 1000"),
        (&["fit", &rates, "--protein", "0 mg/mL"], "must be a positive number"),
        (&["fit", &rates, "--protein", "0.05 mg/mL", "--molar-mass", "42 kD"], "'kD' is not a molar mass unit"),
        (&["fit", &rates, "--protein", "0.05 mg/mL", "--molar-mass", "42 kDa", "--enzyme", "10 nM"], "[E]t is given twice"),
        (&["fit", &series, "--model", "ic50", "--protein", "0.05 mg/mL"], "apply to the [S]–v models"),
        (&["fit", &batch, "--group-by", "curve", "--protein", "0.05 mg/mL"], "not available with --group-by"),
    ];
    for (args, message) in cases {
        let (code, out, err) = turnover(args);
        assert_eq!(code, 2, "{args:?}: {out}");
        assert!(err.contains(message), "{args:?}: {err}");
    }
}

/// Rates per mass of protein (U/mg) with `--molar-mass` alone: kcat =
/// Vmax × 50,000/60,000 s⁻¹ for 50 kDa (by hand: 1 U/mg is 1/60,000
/// mol s⁻¹ g⁻¹), the unit of v reported as read, and the text's note.
#[test]
fn rates_per_mass_of_protein_with_the_molar_mass() {
    let rates = file("protein-specific.tsv", &RATES.replace("v (µM/min)", "v (U/mg)"));
    let record = json(&["fit", &rates, "--json", "--molar-mass", "50 kDa"]);
    assert_eq!(record["units"]["rate"], "µmol/min/mg");
    assert_eq!(record["kcat_from_molar_mass"].as_f64(), Some(50_000.0));
    let (vmax, kcat) = (number(parameter(&record, "Vmax"), "value"), number(parameter(&record, "kcat"), "value"));
    assert!((kcat - vmax * 50_000.0 / 60_000.0).abs() <= 1e-12 * kcat, "{kcat} vs {vmax}");
    let (code, text, _) = turnover(&["fit", &rates, "--molar-mass", "50 kDa"]);
    assert_eq!(code, 0);
    assert!(text.contains("note: kcat = Vmax × molar mass: one µmol/min/mg is"), "{text}");
    // With rates per volume the molar mass alone gives nothing, and says so.
    let per_volume = file("protein-per-volume.tsv", RATES);
    let record = json(&["fit", &per_volume, "--json", "--molar-mass", "50 kDa"]);
    assert!(record["parameters"].as_array().unwrap().iter().all(|p| p["name"] != "kcat"));
    assert!(record["warnings"].as_array().unwrap().iter().any(|w| w.as_str().unwrap().starts_with("The molar mass is not used")), "{record}");
}
