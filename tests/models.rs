//! Checks of the model family (issue 4): every model recovers the
//! parameters it generated, the mechanism choice finds the generating
//! mechanism on noisy simulated data, and the long and matrix table
//! layouts give the same fit.
//!
//! The simulated data are generated here from a small seeded generator
//! (splitmix64, Steele, Lea & Flood 2014, with the Box-Muller transform,
//! Box & Muller 1958; both from memory). They are not measurements.

use turnover_core::random::SplitMix64;
use turnover_core::compare::compare_fits;
use turnover_core::dose::{analyse_dose, DoseRequest};
use turnover_core::fit::{fit_model, FitSettings};
use turnover_core::inhibition::{analyse_inhibition, InhibitionRequest};
use turnover_core::model::{Model, Observations};
use turnover_core::models::{model_with_options, ModelOptions};
use turnover_core::rates::{analyse_rates, RateRequest};

/// splitmix64 with Box-Muller normal deviates.
/// Open-interval uniforms (never 0, so ln is finite) and Box-Muller
/// normals on top of the core's seeded SplitMix64 bits.
struct Noise(SplitMix64);

impl Noise {
    fn uniform(&mut self) -> f64 {
        ((self.0.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let (u1, u2) = (self.uniform(), self.uniform());
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    }
}

const S_LEVELS: [f64; 6] = [0.1, 0.25, 0.5, 1.0, 2.5, 5.0];
const I_LEVELS: [f64; 5] = [0.0, 1.0, 2.5, 5.0, 10.0];

/// A long-layout table of duplicate rates from `model` at every ([S], [I]),
/// with proportional noise of relative size `cv`.
fn inhibition_table(model: &dyn Model, p: &[f64], cv: f64, noise: &mut Noise) -> String {
    let mut text = String::from("[S] (mM)\t[I] (µM)\tv (µM/min)\n");
    for i in I_LEVELS {
        for s in S_LEVELS {
            for _ in 0..2 {
                let v = model.value(&[s, i], p) * (1.0 + cv * noise.normal());
                text.push_str(&format!("{s}\t{i}\t{v:.17e}\n"));
            }
        }
    }
    text
}

/// Simulated data with known parameters are recovered by every model:
/// exactly (to 1e-6 relative) without noise, and within four standard
/// errors with noise of 1% of the largest response (proportional 1% for the
/// inhibition models). The true values are invented.
#[test]
fn every_model_recovers_its_parameters() {
    let one: &[(&str, &[f64], &[f64])] = &[
        ("mm", &[10.0, 0.5], &[0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0]),
        ("substrate-inhibition", &[12.0, 0.4, 8.0], &[0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0, 50.0]),
        ("hill", &[9.0, 1.2, 2.4], &[0.1, 0.3, 0.6, 1.0, 1.5, 2.0, 3.0, 5.0, 10.0]),
        ("ic50", &[4.0, 98.0, 0.8, 1.3], &[0.0, 0.03, 0.1, 0.3, 1.0, 3.0, 10.0, 30.0, 100.0]),
        ("morrison", &[20.0, 3.0], &[0.0, 1.0, 2.0, 4.0, 6.0, 8.0, 12.0, 20.0, 40.0]),
    ];
    let options = ModelOptions { enzyme: Some(5.0), ..ModelOptions::default() };
    let mut noise = Noise(SplitMix64::new(7));
    for (name, truth, xs) in one {
        let model = model_with_options(name, &options).unwrap();
        for cv in [0.0, 0.01] {
            let x: Vec<f64> = xs.iter().flat_map(|x| [*x, *x]).collect();
            // Constant noise of `cv` times the largest response, so that the
            // unweighted fit's standard errors are the right ones.
            let top = x.iter().map(|x| model.value(&[*x], truth).abs()).fold(0.0, f64::max);
            let y: Vec<f64> = x.iter().map(|x| model.value(&[*x], truth) + cv * top * noise.normal()).collect();
            let data = Observations::single(&x, &y).unwrap();
            let fit = fit_model(model.as_ref(), &data, None, &FitSettings::default()).unwrap();
            assert!(fit.summary.converged, "{name} cv {cv}: {:?}", fit.summary.termination);
            check_recovery(name, cv, &fit.summary.parameters, truth);
        }
    }
    for name in ["competitive", "uncompetitive", "mixed", "noncompetitive"] {
        let model = model_with_options(name, &options).unwrap();
        let truth = &[10.0, 0.5, 2.0, 6.0][..model.parameters().len()];
        for cv in [0.0, 0.01] {
            let text = inhibition_table(model.as_ref(), truth, cv, &mut noise);
            let a = analyse_inhibition(&InhibitionRequest { text, models: vec![name.into()], ..Default::default() }).unwrap();
            assert!(a.fits[0].converged, "{name}");
            check_recovery(name, cv, &a.fits[0].parameters, truth);
        }
    }
}

fn check_recovery(name: &str, cv: f64, estimates: &[turnover_core::fit::ParameterEstimate], truth: &[f64]) {
    for (e, t) in estimates.iter().zip(truth) {
        if cv == 0.0 {
            assert!((e.value - t).abs() <= 1e-6 * t.abs(), "{name} {}: {} vs {t}", e.name, e.value);
        } else {
            let se = e.std_error.unwrap_or_else(|| panic!("{name} {} has no standard error", e.name));
            assert!((e.value - t).abs() < 4.0 * se, "{name} {}: {} ± {se} vs {t}", e.name, e.value);
        }
    }
}

/// The mechanism choice (see `compare.rs`: the F test rejects; a single
/// mechanism at a boundary of mixed, competitive or uncompetitive, is named
/// when it alone is not rejected; noncompetitive, inside mixed, only when
/// AICc agrees too; otherwise "undecided" with candidates) on 200 seeded
/// trials each. Design (invented): Vmax 10
/// µM/min, Km 0.5 mM, [S] 0.1–5 mM (0.2–10×Km), [I] 0–10 µM, duplicates,
/// 5% proportional noise; Ki = 2 µM, and Kic = 2, Kiu = 6 µM for mixed.
/// Checks: the generating mechanism is named, or is among the candidates
/// of an undecided verdict, in at least 90% (180) of trials, as before the
/// rule admitted doubt; a wrong mechanism is named in at most 5% plus
/// twice the Monte Carlo error (14 of 200); the truth is named outright in
/// at least 85% (170; before issue 16 the rule said "undecided" where the
/// F test and AICc disagreed, 13 competitive trials; since then 192
/// competitive and 199 uncompetitive trials are named).
/// A fourth case, mixed with Kiu only 1.5×Kic (Kic 2, Kiu 3 µM), is where
/// the old rule named "noncompetitive" when the F test merely failed to
/// reject it: naming noncompetitive there is wrong. On these 200 seeds the
/// old rule named it 46 times (every undecided verdict below plus every
/// wrong one); the new rule may name it at most 30 times (15%; 26 when this
/// was written: where the F test has no power and AICc agrees with it,
/// doubt cannot be detected from these two numbers), and every other trial
/// must be mixed or undecided with mixed among the candidates.
#[test]
fn mechanism_choice_finds_the_generating_mechanism() {
    let cases: [(&str, [f64; 4], bool); 4] = [
        ("competitive", [10.0, 0.5, 2.0, 0.0], true),
        ("uncompetitive", [10.0, 0.5, 2.0, 0.0], true),
        ("mixed", [10.0, 0.5, 2.0, 6.0], true),
        ("mixed", [10.0, 0.5, 2.0, 3.0], false),
    ];
    let mut report = Vec::new();
    let mut failures = Vec::new();
    for (k, (name, truth, powered)) in cases.iter().enumerate() {
        let model = model_with_options(name, &ModelOptions::default()).unwrap();
        let p = &truth[..model.parameters().len()];
        let (mut right, mut standing, mut wrong) = (0, 0, 0);
        let mut chosen = std::collections::BTreeMap::<String, usize>::new();
        for trial in 0..200u64 {
            let mut noise = Noise(SplitMix64::new(1000 * k as u64 + trial));
            let text = inhibition_table(model.as_ref(), p, 0.05, &mut noise);
            let a = analyse_inhibition(&InhibitionRequest { text, ..Default::default() }).unwrap();
            let c = &a.comparison;
            assert!(!c.candidates.is_empty(), "a verdict always leaves a candidate");
            match &c.preferred {
                Some(pick) if pick == name => right += 1,
                Some(_) => wrong += 1,
                None => {
                    assert!(c.verdict.starts_with("undecided between "), "{}", c.verdict);
                    assert!(c.candidates.len() >= 2, "{:?}", c.candidates);
                    if c.candidates.iter().any(|m| m.model == *name) {
                        standing += 1;
                    }
                }
            }
            *chosen.entry(c.preferred.clone().unwrap_or_else(|| "undecided".into())).or_default() += 1;
        }
        let line = format!("{name} {truth:?}: {right}/200 named, {standing} undecided with it standing, {wrong} wrong; {chosen:?}");
        report.push(line.clone());
        if *powered {
            if right + standing < 180 || wrong > 14 || right < 170 {
                failures.push(line);
            }
        } else if wrong > 30 || right + standing + wrong < 200 {
            failures.push(line);
        }
    }
    println!("{}", report.join("\n"));
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// The same measurements in the long and the matrix layout give the same
/// fit: bit for bit when the rows come in the same order, and to 1e-6
/// relative when the long table's rows are in another order (the
/// minimiser then takes another path and stops within its tolerances,
/// which fix the sum of squares to about 1e-14 and so the parameters in
/// their flattest direction only to about its square root).
#[test]
fn long_and_matrix_layouts_give_the_same_fit() {
    let model = model_with_options("mixed", &ModelOptions::default()).unwrap();
    let truth = [10.0, 0.5, 2.0, 6.0];
    let mut noise = Noise(SplitMix64::new(99));
    let mut matrix = String::from("[S] (mM)\t0\t1 µM\t2.5 µM\t5 µM\t10 µM\n");
    let mut long_same = String::from("[S] (mM)\t[I] (µM)\tv (µM/min)\n");
    let mut rows = Vec::new();
    for s in S_LEVELS {
        for _ in 0..2 {
            matrix.push_str(&s.to_string());
            for i in I_LEVELS {
                let v = format!("{:.6}", model.value(&[s, i], &truth) * (1.0 + 0.04 * noise.normal()));
                matrix.push_str(&format!("\t{v}"));
                long_same.push_str(&format!("{s}\t{i}\t{v}\n"));
                rows.push(format!("{s}\t{i}\t{v}\n"));
            }
            matrix.push('\n');
        }
    }
    rows.reverse();
    let long_other = format!("[S] (mM)\t[I] (µM)\tv (µM/min)\n{}", rows.concat());
    let fit = |text: &str| {
        let request = InhibitionRequest { text: text.into(), rate_unit: Some("µM/min".into()), ..Default::default() };
        analyse_inhibition(&request).unwrap()
    };
    let (m, l, o) = (fit(&matrix), fit(&long_same), fit(&long_other));
    assert_eq!(m.fits, l.fits, "matrix and long layouts differ");
    assert_eq!(m.comparison, l.comparison);
    assert_eq!(m.units, l.units);
    for (a, b) in m.fits.iter().zip(&o.fits) {
        for (x, y) in a.parameters.iter().zip(&b.parameters) {
            assert!((x.value - y.value).abs() <= 1e-6 * x.value.abs(), "{} {}: {} vs {}", a.model, x.name, x.value, y.value);
            let (sx, sy) = (x.std_error.unwrap(), y.std_error.unwrap());
            assert!((sx - sy).abs() <= 1e-4 * sx, "{} {} se: {sx} vs {sy}", a.model, x.name);
        }
    }
}

/// Michaelis-Menten data do not make the comparison choose Hill or
/// substrate inhibition, and strongly cooperative data do choose Hill.
#[test]
fn hill_and_substrate_inhibition_are_chosen_only_when_needed() {
    let s = [0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0];
    let table = |f: &dyn Fn(f64) -> f64, noise: &mut Noise| {
        let mut t = String::from("[S] (mM)\tv (µM/min)\n");
        for x in s {
            for _ in 0..2 {
                t.push_str(&format!("{x}\t{}\n", f(x) * (1.0 + 0.03 * noise.normal())));
            }
        }
        t
    };
    let choose = |text: &str| {
        let fits: Vec<_> = ["mm", "hill", "substrate-inhibition"]
            .iter()
            .map(|m| analyse_rates(&RateRequest { text: text.into(), model: m.to_string(), ..Default::default() }).unwrap().fit)
            .collect();
        compare_fits(&fits).preferred
    };
    let mut noise = Noise(SplitMix64::new(5));
    assert_eq!(choose(&table(&|x| 10.0 * x / (0.8 + x), &mut noise)).as_deref(), Some("mm"));
    assert_eq!(choose(&table(&|x: f64| 10.0 * x.powf(2.5) / (1.5f64.powf(2.5) + x.powf(2.5)), &mut noise)).as_deref(), Some("hill"));
    assert_eq!(choose(&table(&|x| 10.0 * x / (0.5 + x + x * x / 4.0), &mut noise)).as_deref(), Some("substrate-inhibition"));
}

/// The IC50 and Morrison paths read a table with units and attach them.
#[test]
fn inhibitor_series_tables_are_read_with_units() {
    let text = "[I] (nM)\tactivity (%)\n0\t100\n1\t91\n3\t75\n10\t48\n30\t22\n100\t8\n300\t3\n";
    let a = analyse_dose(&DoseRequest { text: text.into(), model: "ic50".into(), fixed_top: Some(100.0), ..Default::default() }).unwrap();
    assert!(a.fit.converged);
    let names: Vec<&str> = a.fit.parameters.iter().map(|p| p.name.as_str()).collect();
    assert_eq!(names, ["floor", "IC50", "steepness"]);
    assert_eq!(a.fit.parameters[1].unit.as_deref(), Some("nM"));
    assert!(a.plots[0].log_x && a.plots[0].marks.len() == 1);
}


/// Goal (d) in the mechanism comparison: noncompetitive data (Vmax 10,
/// Km 0.5, Ki 2; the design of the test above) with 10% proportional noise,
/// 200 seeded trials (seed 5000 + trial), compared with uniform weights and
/// with relative weights from the curve. With relative weights the F test
/// keeps its level: mixed is named in at most 5% plus twice the Monte Carlo
/// error (14 of 200). With uniform weights the notes must point to the
/// error structure: the check suggests relative weights in at least half of
/// the trials. The false "mixed" counts of both are printed.
#[test]
fn mechanism_comparison_with_proportional_noise_uses_and_names_the_weighting() {
    let model = model_with_options("noncompetitive", &ModelOptions::default()).unwrap();
    let (mut mixed_uniform, mut mixed_relative, mut pointed) = (0, 0, 0);
    for trial in 0..200u64 {
        let mut noise = Noise(SplitMix64::new(5000 + trial));
        let text = inhibition_table(model.as_ref(), &[10.0, 0.5, 2.0], 0.10, &mut noise);
        let uniform = analyse_inhibition(&InhibitionRequest { text: text.clone(), ..Default::default() }).unwrap();
        mixed_uniform += usize::from(uniform.comparison.preferred.as_deref() == Some("mixed"));
        pointed += usize::from(uniform.notes.iter().any(|n| n.contains("weighting relative suits these data better")));
        let relative = analyse_inhibition(&InhibitionRequest {
            text,
            weighting: turnover_core::weighting::Weighting::Relative,
            ..Default::default()
        })
        .unwrap();
        mixed_relative += usize::from(relative.comparison.preferred.as_deref() == Some("mixed"));
        assert!(relative.comparison.verdict.contains("every model fitted with the same relative weights"), "{}", relative.comparison.verdict);
    }
    println!("noncompetitive, 10% proportional noise, 200 trials: mixed named {mixed_uniform} (uniform weights), {mixed_relative} (relative weights); uniform-weight notes suggest relative in {pointed}");
    assert!(mixed_relative <= 14, "{mixed_relative}");
    assert!(pointed >= 100, "{pointed}");
}
