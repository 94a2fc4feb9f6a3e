//! Rate constants against temperature: checks of
//! `turnover_core::temperature::analyse_temperature`.
//!
//! - The physical constants against their defining values (CODATA 2018,
//!   exact in the SI since 2019; the digits from memory, and the derived R
//!   and kB/h recomputed in 40-digit decimal arithmetic, quoted below).
//! - A worked Eyring example computed by hand in the comments.
//! - Seeded simulations with known truth (SplitMix64, normal deviates by
//!   Box-Muller, Box & Muller 1958, from memory; proportional noise, the
//!   error model of the default relative weighting): bias and coverage of
//!   ΔH‡, ΔS‡, ΔG‡, and the rate at which the curvature test flags
//!   straight and curved Arrhenius data. Bands over 200 trials are
//!   binomial as in tests/sets.rs: a true 95% gives 178–197 of 200 in 99%
//!   of runs, a true 5% gives 2–19.

use turnover_core::model::Model;
use turnover_core::random::SplitMix64;
use turnover_core::temperature::{
    analyse_temperature, TemperatureAnalysis, TemperatureModel, TemperatureRequest, AVOGADRO, BOLTZMANN, GAS_CONSTANT, PLANCK,
};
use turnover_core::weighting::Weighting;

const TRIALS: usize = 200;

/// The defining constants are the exact CODATA 2018 / SI 2019 numbers
/// (kB = 1.380649e-23 J/K, h = 6.62607015e-34 J s, NA = 6.02214076e23
/// /mol). R = NA·kB = 8.31446261815324 J/(mol K) exactly (the product,
/// computed in 40-digit decimal arithmetic; CODATA prints
/// 8.314 462 618... J mol⁻¹ K⁻¹), kB/h = 2.083661912332757...e10 Hz/K
/// (the same way; CODATA prints 2.083 661 912...e10). Both within a
/// double's rounding.
#[test]
fn codata_constants_are_exact() {
    assert_eq!(BOLTZMANN, 1.380649e-23);
    assert_eq!(PLANCK, 6.62607015e-34);
    assert_eq!(AVOGADRO, 6.02214076e23);
    assert!((GAS_CONSTANT - 8.31446261815324).abs() <= 2.0 * f64::EPSILON * 8.32, "{GAS_CONSTANT:.17}");
    let ratio = BOLTZMANN / PLANCK;
    assert!((ratio - 2.083661912332757e10).abs() <= 4.0 * f64::EPSILON * 2.09e10, "{ratio:.17e}");
}

fn parameter<'a>(fit: &'a turnover_core::fit::FitSummary, prefix: &str) -> &'a turnover_core::fit::ParameterEstimate {
    fit.parameters.iter().find(|p| p.name.starts_with(prefix)).unwrap_or_else(|| panic!("no {prefix}"))
}

/// A worked Eyring example, by hand.
///
/// Two exact rate constants: k1 = 1 s⁻¹ at T1 = 300 K, k2 = 4 s⁻¹ at
/// T2 = 320 K. From ln(k/T) = ln(kB/h) + ΔS‡/R − ΔH‡/(R·T):
///
/// ```text
/// ΔH‡ = R·ln(k2·T1/(k1·T2)) / (1/T1 − 1/T2)
///     = 8.31446261815324 × ln(4 × 300/320) / (1/300 − 1/320)
///     = 8.31446261815324 × ln 3.75 / (20/96000)
///     = 8.31446261815324 × 1.3217558399823194 / 2.0833333e-4
///     = 52750.5097049 J/mol  = 52.7505097 kJ/mol
/// ΔS‡ = R·(ln(k1/T1) − ln(kB/h)) + ΔH‡/T1
///     = 8.31446261815324 × (ln(1/300) − ln 2.0836619123e10) + 52750.5097049/300
///     = 8.31446261815324 × (−5.7037824747 − 23.7599778105) + 175.8350323
///     = −244.9753335 + 175.8350323 = −69.1403011 J/(mol·K)
/// ΔG‡(298.15 K) = ΔH‡ − 298.15·ΔS‡ = 52750.5097 + 20614.1808
///     = 73364.6905 J/mol = 73.3646905 kJ/mol
/// ```
///
/// (check: ΔG‡(300 K) = ΔH‡ − 300·ΔS‡ = 73492.600 J/mol, equal to
/// R·T1·ln(kB·T1/(h·k1)) = 8.31446 × 300 × ln(6.2509857e12) = 73492.600.)
/// A third point on the same line, k3 at 310 K = 2.044158851652783 s⁻¹
/// (from the numbers above), gives the fit its one residual degree of
/// freedom; the fit must return the hand values (1e-7 relative: k3 is
/// given to 16 digits).
#[test]
fn worked_eyring_example() {
    let text = "T (K)\tk (s-1)\n300\t1\n310\t2.044158851652783\n320\t4\n";
    for weighting in [Weighting::Uniform, Weighting::Relative] {
        let a = analyse_temperature(&TemperatureRequest { text: text.into(), weighting, ..TemperatureRequest::default() }).unwrap();
        let e = a.eyring.as_ref().unwrap();
        let close = |got: f64, want: f64| (got - want).abs() <= 1e-7 * want.abs();
        let dh = parameter(e, "ΔH‡").value;
        let ds = parameter(e, "ΔS‡").value;
        let dg = parameter(e, "ΔG‡ at").value;
        assert!(close(dh, 52.7505097049), "ΔH‡ {dh}");
        assert!(close(ds, -69.1403011315), "ΔS‡ {ds}");
        assert!(close(dg, 73.3646904873), "ΔG‡ {dg}");
        assert_eq!(parameter(e, "ΔG‡ at").name, "ΔG‡ at 298.15 K");
        assert_eq!(parameter(e, "ΔS‡").unit.as_deref(), Some("J/(mol·K)"));
    }
}

/// The same example in °C and min⁻¹ (27, 37, 47 °C; k × 60 per min) gives
/// the same constants: the units are converted, not guessed.
#[test]
fn celsius_and_per_minute_give_the_same_constants() {
    let kelvin = "T (K)\tk (s-1)\n300\t1\n310\t2.044158851652783\n320\t4\n";
    let celsius = "temperature (°C)\tk (1/min)\n26.85\t60\n36.85\t122.64953109916698\n46.85\t240\n";
    let a = analyse_temperature(&TemperatureRequest { text: kelvin.into(), ..TemperatureRequest::default() }).unwrap();
    let b = analyse_temperature(&TemperatureRequest { text: celsius.into(), ..TemperatureRequest::default() }).unwrap();
    let (ea, eb) = (a.eyring.unwrap(), b.eyring.unwrap());
    for (p, q) in ea.parameters.iter().zip(&eb.parameters) {
        assert!((p.value - q.value).abs() <= 1e-7 * p.value.abs(), "{}: {} {}", p.name, p.value, q.value);
    }
    assert_eq!(parameter(&eb, "ΔG‡ at").name, "ΔG‡ at 25 °C");
    assert!(b.notes.iter().any(|n| n.contains("converted from 1/min to s-1")), "{:?}", b.notes);
}

/// Seven temperatures 10–40 °C by 5, in duplicate (14 points), k from the
/// Eyring equation at `dh` kJ/mol and `ds` J/(mol·K) times (1 + cv·z);
/// `denaturation`: times the native fraction 1/(1 + K), K = exp(−(ΔHd/R)·
/// (1/T − 1/Tm)) with ΔHd = 300 kJ/mol and Tm = 45 °C, and the range
/// extended to 45 °C (16 points).
fn series(dh: f64, ds: f64, cv: f64, denaturation: bool, rng: &mut SplitMix64) -> String {
    let model = TemperatureModel::Eyring { reference: 298.15 };
    let mut text = String::from("T (°C)\tk (s-1)\n");
    let top = if denaturation { 45 } else { 40 };
    for celsius in (10..=top).step_by(5) {
        let t = celsius as f64 + 273.15;
        // ΔG‡(298.15) = ΔH‡ − 298.15·ΔS‡/1000 in kJ/mol.
        let mut k = model.value(&[t], &[dh, dh - 298.15 * ds / 1000.0]);
        if denaturation {
            let unfolding = (-300_000.0 / GAS_CONSTANT * (1.0 / t - 1.0 / 318.15)).exp();
            k /= 1.0 + unfolding;
        }
        for _ in 0..2 {
            text.push_str(&format!("{celsius}\t{:.17e}\n", k * (1.0 + cv * rng.normal())));
        }
    }
    text
}

fn median(values: &mut [f64]) -> f64 {
    values.sort_by(f64::total_cmp);
    (values[(values.len() - 1) / 2] + values[values.len() / 2]) / 2.0
}

fn sd(values: &[f64]) -> f64 {
    let mean = values.iter().sum::<f64>() / values.len() as f64;
    (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (values.len() - 1) as f64).sqrt()
}

/// Design: ΔH‡ = 60 kJ/mol, ΔS‡ = −40 J/(mol·K) (so ΔG‡(25 °C) =
/// 71.926 kJ/mol), 14 points 10–40 °C, 4% proportional noise, 200 trials,
/// seed 20261204; default request (relative weights, profile intervals for
/// the fitted constants, delta method for ΔS‡ and ΔG‡). Wanted: the median
/// of each within 3 Monte Carlo errors (1.2533·SD/√n) of the truth; each
/// 95% interval covering the truth in 89%–98.5% of trials; and Ea from the
/// Arrhenius fit within 0.3 kJ/mol of ΔH‡ + R·Tref (Ea = ΔH‡ + RT for a
/// first-order Eyring process, from the two equations' slopes; common
/// practice, no source).
#[test]
fn eyring_constants_are_recovered_with_honest_intervals() {
    let (dh, ds) = (60.0, -40.0);
    let truth = [("ΔH‡", dh), ("ΔS‡", ds), ("ΔG‡ at", dh - 298.15 * ds / 1000.0)];
    let mut rng = SplitMix64::new(20261204);
    let mut values = vec![Vec::new(); 3];
    let mut covered = [0usize; 3];
    let mut ea_gap = Vec::new();
    for _ in 0..TRIALS {
        let a = analyse_temperature(&TemperatureRequest { text: series(dh, ds, 0.04, false, &mut rng), ..TemperatureRequest::default() })
            .unwrap();
        let e = a.eyring.as_ref().unwrap();
        for (j, (name, want)) in truth.iter().enumerate() {
            let p = parameter(e, name);
            values[j].push(p.value);
            covered[j] += (p.ci_low.unwrap() <= *want && *want <= p.ci_high.unwrap()) as usize;
        }
        ea_gap.push(parameter(&a.arrhenius, "Ea").value - (dh + GAS_CONSTANT * a.reference_temperature / 1000.0));
    }
    println!("covered {covered:?} of {TRIALS}");
    for (j, (name, want)) in truth.iter().enumerate() {
        let spread = sd(&values[j]);
        let m = median(&mut values[j]);
        let mc = 1.2533 * spread / (TRIALS as f64).sqrt();
        println!("{name}: median {m:.4}, truth {want:.4}, SD {spread:.4}, MC error {mc:.4}");
        assert!((m - want).abs() <= 3.0 * mc, "{name}: median {m} vs {want}");
        assert!((178..=197).contains(&covered[j]), "{name}: covered {}/{TRIALS}", covered[j]);
    }
    let gap = median(&mut ea_gap);
    println!("Ea − (ΔH‡ + R·Tref): median {gap:.4} kJ/mol");
    assert!(gap.abs() < 0.3, "{gap}");
}

/// Design: as above (straight: Eyring data, whose Arrhenius plot bends by
/// the ln T term only, far below the noise) against the same with loss of
/// active enzyme above about 35 °C (ΔHd = 300 kJ/mol, Tm = 45 °C; points
/// to 45 °C). 4% proportional noise, 200 trials each, seeds 41 and 42.
/// Wanted: straight data flagged in 1%–10% (nominal 5%); curved data
/// flagged in ≥ 90% (a least-squares power simulation of this design in
/// NumPy, quadratic in 1/T on ln k, gave 100%).
#[test]
fn curvature_is_flagged_when_and_only_when_the_plot_curves() {
    let flag = |a: &TemperatureAnalysis| a.curvature.as_ref().is_some_and(|c| c.curved);
    let mut rng = SplitMix64::new(41);
    let mut straight = 0;
    for _ in 0..TRIALS {
        let a = analyse_temperature(&TemperatureRequest { text: series(60.0, -40.0, 0.04, false, &mut rng), ..TemperatureRequest::default() })
            .unwrap();
        assert!(a.curvature.is_some());
        straight += flag(&a) as usize;
    }
    let mut rng = SplitMix64::new(42);
    let mut curved = 0;
    let mut worded = true;
    for _ in 0..TRIALS {
        let a = analyse_temperature(&TemperatureRequest { text: series(60.0, -40.0, 0.04, true, &mut rng), ..TemperatureRequest::default() })
            .unwrap();
        if flag(&a) {
            curved += 1;
            worded &= a.warnings.iter().any(|w| w.contains("rate-limiting step") && w.contains("denaturation"));
        }
    }
    println!("flagged: straight {straight}/{TRIALS}, curved {curved}/{TRIALS}");
    assert!((2..=19).contains(&straight), "straight flagged {straight}/{TRIALS}");
    assert!(curved * 10 >= 9 * TRIALS, "curved flagged {curved}/{TRIALS}");
    assert!(worded, "the warning names a change of rate-limiting step and denaturation");
}
