//! The enzyme given as protein (crates/core/src/protein.rs): [E]t from a
//! mass concentration and a molar mass, and specific activity with its
//! error, checked by hand-worked conversions and by the scaling argument;
//! rates given as specific activities (µmol/min/mg, U/mg), with kcat from
//! the molar mass alone.
//! The rates are invented for the test (not measured data).

use turnover_core::intervals::{BootstrapSettings, IntervalMethod};
use turnover_core::protein::ProteinRequest;
use turnover_core::rates::{analyse_rates, RateAnalysis, RateRequest};

const RATES: &str = "[S] (µM)\tv (µM/min)\n1\t0.99\n2\t1.66\n5\t2.86\n10\t3.33\n20\t3.64\n50\t3.85\n";

fn protein(concentration: f64, unit: &str, molar_mass: Option<(f64, &str)>) -> Option<ProteinRequest> {
    Some(ProteinRequest {
        concentration: Some(concentration),
        unit: unit.into(),
        molar_mass: molar_mass.map(|m| m.0),
        molar_mass_unit: molar_mass.map(|m| m.1.to_string()),
    })
}

fn analyse(text: &str, protein: Option<ProteinRequest>) -> RateAnalysis {
    analyse_rates(&RateRequest { text: text.into(), protein, ..RateRequest::default() }).unwrap()
}

fn parameter<'a>(analysis: &'a RateAnalysis, name: &str) -> &'a turnover_core::fit::ParameterEstimate {
    analysis.fit.parameters.iter().find(|p| p.name == name).unwrap_or_else(|| panic!("no {name}"))
}

fn close(a: f64, b: f64, tolerance: f64) -> bool {
    (a - b).abs() <= tolerance * b.abs()
}

/// 0.05 mg/mL of a 42 kDa enzyme, worked by hand: 0.05 mg/mL = 0.05 g/L;
/// 0.05 g/L ÷ 42 000 g/mol = 1.190476…×10⁻⁶ mol/L = 1.190476 µM (the
/// unit of [S]). kcat = Vmax (µM/min) ÷ 60 s/min ÷ 1.190476 µM. Specific
/// activity: 1 µM/min = 1 µmol L⁻¹ min⁻¹ and 0.05 g/L = 50 mg/L, so
/// Vmax ÷ 50 µmol min⁻¹ mg⁻¹; its SE SE(Vmax) ÷ 50 and its interval
/// Vmax's ÷ 50.
#[test]
fn enzyme_and_specific_activity_by_hand() {
    let a = analyse(RATES, protein(0.05, "mg/mL", Some((42.0, "kDa"))));
    let from = a.enzyme_from_protein.as_ref().expect("the protein is reported");
    assert_eq!(from.protein_g_per_l, 0.05);
    assert_eq!(from.molar_mass_g_per_mol, Some(42_000.0));
    assert!(close(from.enzyme_molar.unwrap(), 1.190476190476190e0, 1e-12), "{:?}", from.enzyme_molar);
    assert_eq!(from.enzyme_unit.as_deref(), Some("µM"));
    assert_eq!(a.units.enzyme.as_deref(), Some("µM"));
    let vmax = parameter(&a, "Vmax");
    let kcat = parameter(&a, "kcat");
    assert!(close(kcat.value, vmax.value / 60.0 / (0.05 / 42_000.0 * 1e6), 1e-12), "kcat {}", kcat.value);
    let activity = parameter(&a, "specific activity");
    assert_eq!(activity.unit.as_deref(), Some("µmol min⁻¹ mg⁻¹"));
    assert!(activity.derived);
    assert_eq!(activity.ci_method, "delta");
    assert!(close(activity.value, vmax.value / 50.0, 1e-12));
    assert!(close(activity.std_error.unwrap(), vmax.std_error.unwrap() / 50.0, 1e-12));
    assert!(close(activity.ci_low.unwrap(), vmax.ci_low.unwrap() / 50.0, 1e-12));
    assert!(close(activity.ci_high.unwrap(), vmax.ci_high.unwrap() / 50.0, 1e-12));
    // The same [E]t given directly gives the same kcat and kcat/Km.
    let direct = analyse_rates(&RateRequest {
        text: RATES.into(),
        enzyme: Some(0.05 / 42_000.0 * 1e6),
        enzyme_unit: Some("µM".into()),
        ..RateRequest::default()
    })
    .unwrap();
    for name in ["kcat", "kcat/Km"] {
        let (p, q) = (parameter(&a, name), parameter(&direct, name));
        assert!(close(p.value, q.value, 1e-12) && close(p.std_error.unwrap(), q.std_error.unwrap(), 1e-12), "{name}");
    }
    assert!(a.notes.iter().any(|n| n.starts_with("[E]t from the protein: 0.05000 g/L ÷ 42000 g/mol = 1.190 µM")), "{:?}", a.notes);
    assert!(a.notes.iter().any(|n| n.contains("the protein concentration is taken as exact")), "{:?}", a.notes);
}

/// Specific activity does not depend on the units the data are written
/// in. The same rates in nM/s (× 1000 ÷ 60) with 50 µg/mL of protein
/// (0.05 g/L): the same µmol min⁻¹ mg⁻¹. The same table reported per
/// second (`rate_time`): the same. Agreement to 1e-9 relative (the solver
/// works on numbers of another size).
#[test]
fn specific_activity_is_the_same_in_any_units() {
    let reference = analyse(RATES, protein(0.05, "mg/mL", None));
    let expected = parameter(&reference, "specific activity");
    let mut nano = String::from("[S] (µM)\tv (nM/s)\n");
    for line in RATES.lines().skip(1) {
        let (s, v) = line.split_once('\t').unwrap();
        nano.push_str(&format!("{s}\t{}\n", v.parse::<f64>().unwrap() * 1000.0 / 60.0));
    }
    let per_second = analyse_rates(&RateRequest {
        text: RATES.into(),
        protein: protein(0.05, "mg/mL", None),
        rate_time: Some("s".into()),
        ..RateRequest::default()
    })
    .unwrap();
    for other in [analyse(&nano, protein(50.0, "µg/mL", None)), analyse(RATES, protein(50.0, "mg/L", None)), per_second] {
        let found = parameter(&other, "specific activity");
        assert!(close(found.value, expected.value, 1e-9), "{} vs {}", found.value, expected.value);
        assert!(close(found.std_error.unwrap(), expected.std_error.unwrap(), 1e-9));
    }
    // Without a molar mass there is no [E]t and so no kcat.
    assert!(reference.fit.parameters.iter().all(|p| p.name != "kcat"));
    assert_eq!(reference.enzyme_from_protein.as_ref().unwrap().enzyme_molar, None);
}

/// The scaling argument: specific activity is c·Vmax with c a constant
/// (the protein taken as exact), so Var(c·Vmax) = c²·Var(Vmax) and the
/// delta method's SE, c·SE(Vmax), is exact, not an approximation; every
/// interval end is c times Vmax's, whatever the interval method (profile
/// and a seeded bootstrap checked here). c = 1/50 for 0.05 mg/mL with
/// rates in µM/min (see the first test).
#[test]
fn error_and_interval_scale_with_vmax_for_every_method() {
    let c = 1.0 / 50.0;
    for method in [IntervalMethod::Asymptotic, IntervalMethod::Profile, IntervalMethod::Bootstrap] {
        let a = analyse_rates(&RateRequest {
            text: RATES.into(),
            protein: protein(0.05, "mg/mL", Some((42.0, "kDa"))),
            interval_method: method,
            bootstrap: BootstrapSettings { resamples: 400, seed: 17, ..BootstrapSettings::default() },
            ..RateRequest::default()
        })
        .unwrap();
        let (vmax, activity) = (parameter(&a, "Vmax"), parameter(&a, "specific activity"));
        assert!(close(activity.std_error.unwrap(), c * vmax.std_error.unwrap(), 1e-12), "{method:?}");
        assert!(close(activity.ci_low.unwrap(), c * vmax.ci_low.unwrap(), 1e-9), "{method:?} low");
        assert!(close(activity.ci_high.unwrap(), c * vmax.ci_high.unwrap(), 1e-9), "{method:?} high");
        assert!(activity.ci_low.unwrap() < activity.value && activity.value < activity.ci_high.unwrap());
        if method != IntervalMethod::Asymptotic {
            assert_eq!(activity.ci_method, vmax.ci_method, "{method:?}");
        }
    }
}

/// Bad input is refused with a sentence, never guessed.
#[test]
fn bad_protein_input_is_refused() {
    let refused = |p: Option<ProteinRequest>, enzyme: Option<(f64, &str)>, expected: &str| {
        let error = analyse_rates(&RateRequest {
            text: RATES.into(),
            protein: p,
            enzyme: enzyme.map(|e| e.0),
            enzyme_unit: enzyme.map(|e| e.1.to_string()),
            ..RateRequest::default()
        })
        .unwrap_err();
        assert!(error.message.contains(expected), "{expected}: {}", error.message);
    };
    refused(protein(0.05, "mM", None), None, "'mM' is not a protein concentration unit");
    refused(protein(0.05, "", None), None, "is not a protein concentration unit");
    refused(protein(0.05, "mg/mL", Some((42.0, "kD"))), None, "'kD' is not a molar mass unit");
    refused(protein(0.0, "mg/mL", None), None, "the protein concentration must be a positive number");
    refused(protein(f64::NAN, "mg/mL", None), None, "the protein concentration must be a positive number");
    refused(protein(0.05, "mg/mL", Some((-42.0, "kDa"))), None, "the molar mass must be a positive number");
    refused(protein(0.05, "mg/mL", Some((42.0, ""))), None, "give the unit of the molar mass");
    refused(protein(0.05, "mg/mL", Some((42.0, "kDa"))), Some((10.0, "nM")), "[E]t is given twice");
    // [E]t given directly with the protein alone: kcat from [E]t, specific
    // activity from the protein.
    let both = analyse_rates(&RateRequest {
        text: RATES.into(),
        protein: protein(0.05, "mg/mL", None),
        enzyme: Some(10.0),
        enzyme_unit: Some("nM".into()),
        ..RateRequest::default()
    })
    .unwrap();
    let names: Vec<&str> = both.fit.parameters.iter().map(|p| p.name.as_str()).collect();
    assert_eq!(names, ["Vmax", "Km", "kcat", "kcat/Km", "specific activity"]);
    // Without the unit of v there is no specific activity, and a warning says why.
    let bare = analyse("S\tv\n1\t0.99\n2\t1.66\n5\t2.86\n10\t3.33\n20\t3.64\n50\t3.85\n", protein(0.05, "mg/mL", None));
    assert!(bare.fit.parameters.iter().all(|p| p.name != "specific activity"));
    assert!(bare.fit.warnings.iter().any(|w| w.starts_with("Specific activity needs the unit of v")), "{:?}", bare.fit.warnings);
}

/// The molar mass alone, as with rates per mass of protein.
fn molar_mass_only(mass: f64, unit: &str) -> Option<ProteinRequest> {
    Some(ProteinRequest { concentration: None, unit: String::new(), molar_mass: Some(mass), molar_mass_unit: Some(unit.into()) })
}

/// The same rates as `RATES`, read as specific activities in U/mg
/// (µmol min⁻¹ mg⁻¹).
const SPECIFIC: &str = "[S] (µM)\tv (U/mg)\n1\t0.99\n2\t1.66\n5\t2.86\n10\t3.33\n20\t3.64\n50\t3.85\n";

/// Rates given per mass of protein, worked by hand: Vmax in U/mg is
/// µmol min⁻¹ mg⁻¹ = 10⁻⁶ mol / 60 s / 10⁻³ g = 1/60,000 mol s⁻¹ g⁻¹, so
/// with a molar mass of 50 kDa (50,000 g/mol) kcat = Vmax · 50,000/60,000
/// s⁻¹ (the rule kcat = specific activity × M / 60,000 for U/mg and Da,
/// common practice, no source); kcat/Km = kcat / (Km · 10⁻⁶ M). Vmax, Km
/// and their errors are those of the same numbers in µM/min (the fit does
/// not see the unit). The unit is reported as read; no "specific activity"
/// is added (Vmax is one); the note gives the factor.
#[test]
fn rates_per_mass_of_protein_give_kcat_from_the_molar_mass() {
    let plain = analyse(RATES, None);
    let a = analyse(SPECIFIC, molar_mass_only(50.0, "kDa"));
    assert_eq!(a.units.rate.as_deref(), Some("µmol/min/mg"));
    assert_eq!(a.kcat_from_molar_mass, Some(50_000.0));
    assert!(a.enzyme_from_protein.is_none());
    for name in ["Vmax", "Km"] {
        let (p, q) = (parameter(&a, name), parameter(&plain, name));
        assert_eq!((p.value, p.std_error), (q.value, q.std_error), "{name}");
    }
    let (vmax, km) = (parameter(&a, "Vmax"), parameter(&a, "Km"));
    let kcat = parameter(&a, "kcat");
    let factor = 50_000.0 / 60_000.0;
    assert!(close(kcat.value, vmax.value * factor, 1e-12), "kcat {} vs {}", kcat.value, vmax.value * factor);
    assert!(close(kcat.std_error.unwrap(), vmax.std_error.unwrap() * factor, 1e-12));
    let specificity = parameter(&a, "kcat/Km");
    assert!(close(specificity.value, vmax.value * factor / (km.value * 1e-6), 1e-12));
    assert!(a.fit.parameters.iter().all(|p| p.name != "specific activity"));
    assert!(a.notes.iter().any(|n| n.starts_with("kcat = Vmax × molar mass: one µmol/min/mg is 1.667×10⁻⁵ mol s⁻¹ g⁻¹, times 50000 g/mol")), "{:?}", a.notes);
    assert!(a.fit.warnings.iter().all(|w| !w.contains("not used")), "{:?}", a.fit.warnings);

    // The same activities written in nmol/min/mg (× 1000), in mU/mg, and
    // reported per second: the same kcat and kcat/Km.
    let scaled = |unit: &str, by: f64| {
        let mut text = format!("[S] (µM)\tv ({unit})\n");
        for line in RATES.lines().skip(1) {
            let (s, v) = line.split_once('\t').unwrap();
            text.push_str(&format!("{s}\t{}\n", v.parse::<f64>().unwrap() * by));
        }
        text
    };
    let per_second = analyse_rates(&RateRequest {
        text: SPECIFIC.into(),
        protein: molar_mass_only(50_000.0, "g/mol"),
        rate_time: Some("s".into()),
        ..RateRequest::default()
    })
    .unwrap();
    assert_eq!(per_second.units.rate.as_deref(), Some("µmol/s/mg"));
    for other in [analyse(&scaled("nmol/min/mg", 1000.0), molar_mass_only(50.0, "kDa")), analyse(&scaled("mU/mg", 1000.0), molar_mass_only(50.0, "kDa")), per_second] {
        for name in ["kcat", "kcat/Km"] {
            let (p, q) = (parameter(&other, name), parameter(&a, name));
            assert!(close(p.value, q.value, 1e-9) && close(p.std_error.unwrap(), q.std_error.unwrap(), 1e-9), "{name}: {} vs {}", p.value, q.value);
        }
    }

    // No molar mass: Vmax and Km in U/mg and µM, no kcat, no warning.
    let bare = analyse(SPECIFIC, None);
    assert_eq!(bare.units.rate.as_deref(), Some("µmol/min/mg"));
    assert!(bare.fit.parameters.iter().all(|p| p.name != "kcat"));
    assert!(bare.fit.warnings.is_empty(), "{:?}", bare.fit.warnings);
}

/// With rates per mass of protein, a protein concentration or an [E]t has
/// no part: each is named in a warning, never used quietly; kcat still
/// comes from the molar mass. With rates per volume, a molar mass alone
/// is not used either, and a warning says so.
#[test]
fn what_rates_per_mass_of_protein_do_not_use_is_said() {
    let with_protein = analyse(SPECIFIC, protein(0.05, "mg/mL", Some((50.0, "kDa"))));
    let reference = analyse(SPECIFIC, molar_mass_only(50.0, "kDa"));
    assert!(
        with_protein.fit.warnings.iter().any(|w| w.starts_with("The protein concentration (50.00 mg/L) is not used: the rates are already per mass of protein (µmol/min/mg)")),
        "{:?}",
        with_protein.fit.warnings
    );
    assert_eq!(parameter(&with_protein, "kcat").value, parameter(&reference, "kcat").value);
    assert!(with_protein.fit.parameters.iter().all(|p| p.name != "specific activity"));
    let with_enzyme = analyse_rates(&RateRequest {
        text: SPECIFIC.into(),
        protein: molar_mass_only(50.0, "kDa"),
        enzyme: Some(10.0),
        enzyme_unit: Some("nM".into()),
        ..RateRequest::default()
    })
    .unwrap();
    assert!(with_enzyme.fit.warnings.iter().any(|w| w.starts_with("[E]t is not used: the rates are per mass of protein")), "{:?}", with_enzyme.fit.warnings);
    assert_eq!(parameter(&with_enzyme, "kcat").value, parameter(&reference, "kcat").value);
    let alone = analyse(RATES, molar_mass_only(50.0, "kDa"));
    assert!(alone.fit.warnings.iter().any(|w| w.starts_with("The molar mass is not used: it needs the protein concentration beside it")), "{:?}", alone.fit.warnings);
    assert!(alone.fit.parameters.iter().all(|p| p.name != "kcat") && alone.kcat_from_molar_mass.is_none());
}
