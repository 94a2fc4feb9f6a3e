//! Do the constants differ between data sets? Simulation checks of
//! `turnover_core::sets::compare_sets`: how often a real difference is found
//! (power), how often one that does not exist is reported (false-positive
//! rate, nominal 5% per constant for the F test at p < 0.05), the bias of
//! the ratio and the coverage of its 95% interval.
//!
//! The data are simulated here (invented true values, stated with each
//! test) from the core's seeded SplitMix64 with the Box-Muller transform
//! (Box & Muller 1958, from memory). The rates checked are binomial: with
//! 200 trials at a true 5%, 99% of runs give between 2 and 19 hits
//! (binomial quantiles, computed by hand), so the bands below are
//! 1%–10%; for 95% coverage, between 178 and 197 of 200 (89%–98.5%).

use turnover_core::models::{model_by_name, model_with_options, ModelOptions};
use turnover_core::random::SplitMix64;
use turnover_core::sets::{compare_sets, SetsAnalysis, SetsRequest};

const TRIALS: usize = 200;

/// Invented Michaelis-Menten design: [S] = 2, 5, 10, 20, 50, 100 µM in
/// duplicate for each set, Km = 10 µM in both sets, constant normal noise
/// of SD `sd` (µM/min).
fn mm_table(vmax: [f64; 2], km: [f64; 2], sd: f64, rng: &mut SplitMix64) -> String {
    let model = model_by_name("mm").unwrap();
    let mut text = String::from("set\t[S] (µM)\tv (µM/min)\n");
    for (k, name) in ["wild type", "mutant"].iter().enumerate() {
        for s in [2.0, 5.0, 10.0, 20.0, 50.0, 100.0] {
            for _ in 0..2 {
                let v = model.value(&[s], &[vmax[k], km[k]]) + sd * rng.normal();
                text.push_str(&format!("{name}\t{s}\t{v:.17e}\n"));
            }
        }
    }
    text
}

fn constant<'a>(a: &'a SetsAnalysis, name: &str) -> &'a turnover_core::sets::ConstantVerdict {
    a.constants.iter().find(|c| c.name == name).unwrap()
}

/// Design: Vmax 10 (wild type) and 6 (mutant) µM/min, Km 10 µM in both,
/// noise SD 0.25 µM/min, 200 trials, seed 20261202. Wanted: Vmax found
/// different and Km not in at least 90% of trials; Km reported different
/// (a difference that does not exist) in 1%–10% (nominal 5%); the median
/// Vmax ratio within 2% of 0.6; the ratio's 95% interval covering 0.6 in
/// 89%–98.5% of trials.
#[test]
fn a_kcat_difference_is_found_and_km_is_not() {
    let mut rng = SplitMix64::new(20261202);
    let (mut right, mut km_false, mut covered) = (0usize, 0usize, 0usize);
    let mut ratios = Vec::new();
    for _ in 0..TRIALS {
        let text = mm_table([10.0, 6.0], [10.0, 10.0], 0.25, &mut rng);
        let a = compare_sets(&SetsRequest { text, ..SetsRequest::default() }).unwrap();
        let (vmax, km) = (constant(&a, "Vmax"), constant(&a, "Km"));
        right += (vmax.differs && !km.differs) as usize;
        km_false += km.differs as usize;
        let r = &vmax.ratio[0];
        ratios.push(r.value.unwrap());
        covered += (r.ci_low.unwrap() <= 0.6 && 0.6 <= r.ci_high.unwrap()) as usize;
    }
    ratios.sort_by(|a, b| a.partial_cmp(b).unwrap());
    let median = (ratios[TRIALS / 2 - 1] + ratios[TRIALS / 2]) / 2.0;
    println!(
        "kcat-only difference, {TRIALS} trials: right {right}, Km false positives {km_false}, ratio covered {covered}, median ratio {median:.4}"
    );
    assert!(right >= 180, "right in only {right} of {TRIALS}");
    assert!((2..=20).contains(&km_false), "Km reported different in {km_false} of {TRIALS}");
    assert!((median / 0.6 - 1.0).abs() < 0.02, "median ratio {median}");
    assert!((178..=197).contains(&covered), "interval covered 0.6 in {covered} of {TRIALS}");
}

/// Design: the same as above with Vmax 10 in both sets (no difference at
/// all), 200 trials, seed 7. Wanted: each constant reported different in
/// 1%–10% of trials (nominal 5%); either one in at most 15% (two tests at
/// 5%: at most about 10%).
#[test]
fn no_difference_is_reported_at_about_the_nominal_rate() {
    let mut rng = SplitMix64::new(7);
    let (mut vmax_false, mut km_false, mut any) = (0usize, 0usize, 0usize);
    for _ in 0..TRIALS {
        let text = mm_table([10.0, 10.0], [10.0, 10.0], 0.25, &mut rng);
        let a = compare_sets(&SetsRequest { text, ..SetsRequest::default() }).unwrap();
        let (v, k) = (constant(&a, "Vmax").differs, constant(&a, "Km").differs);
        vmax_false += v as usize;
        km_false += k as usize;
        any += (v || k) as usize;
    }
    println!("no difference, {TRIALS} trials: Vmax {vmax_false}, Km {km_false}, either {any}");
    assert!((2..=20).contains(&vmax_false), "Vmax reported different in {vmax_false} of {TRIALS}");
    assert!((2..=20).contains(&km_false), "Km reported different in {km_false} of {TRIALS}");
    assert!(any <= 30, "a difference reported in {any} of {TRIALS}");
}

/// Design (invented): two compounds, logistic with top 100, bottom 0, Hill
/// slope 1 in both, IC50 1 µM and 4 µM; [I] = 0.01 to 100 µM in 9
/// half-decade steps, duplicates; noise SD 3; 200 trials, seed 99.
/// Wanted: IC50 found different in at least 90%, the slope reported
/// different in 1%–10% (nominal 5%), median IC50 ratio within 3% of 4.
#[test]
fn two_compounds_differ_in_ic50_with_a_shared_slope() {
    let model = model_with_options("ic50", &ModelOptions::default()).unwrap();
    let names: Vec<&str> = model.parameters().iter().map(|p| p.name).collect();
    let truth = |ic50: f64| -> Vec<f64> {
        names
            .iter()
            .map(|n| match *n {
                "floor" => 0.0,
                "ceiling" => 100.0,
                "IC50" => ic50,
                _ => 1.0,
            })
            .collect()
    };
    let mut rng = SplitMix64::new(99);
    let (mut found, mut slope_false) = (0usize, 0usize);
    let mut ratios = Vec::new();
    for _ in 0..TRIALS {
        let mut text = String::from("compound\t[I] (µM)\tactivity (%)\n");
        for (name, ic50) in [("A", 1.0), ("B", 4.0)] {
            let p = truth(ic50);
            for step in 0..9 {
                let i = 10f64.powf(-2.0 + 0.5 * step as f64);
                for _ in 0..2 {
                    text.push_str(&format!("{name}\t{i}\t{:.17e}\n", model.value(&[i], &p) + 3.0 * rng.normal()));
                }
            }
        }
        let a =
            compare_sets(&SetsRequest { text, by: "compound".into(), model: "ic50".into(), ..SetsRequest::default() })
                .unwrap();
        let ic50 = constant(&a, "IC50");
        found += ic50.differs as usize;
        slope_false += constant(&a, "steepness").differs as usize;
        ratios.push(ic50.ratio[0].value.unwrap());
    }
    ratios.sort_by(|a, b| a.partial_cmp(b).unwrap());
    let median = (ratios[TRIALS / 2 - 1] + ratios[TRIALS / 2]) / 2.0;
    println!(
        "IC50 difference, {TRIALS} trials: found {found}, slope false positives {slope_false}, median ratio {median:.4}"
    );
    assert!(found >= 180, "IC50 found different in only {found} of {TRIALS}");
    assert!((2..=20).contains(&slope_false), "slope reported different in {slope_false} of {TRIALS}");
    assert!((median / 4.0 - 1.0).abs() < 0.03, "median ratio {median}");
}
