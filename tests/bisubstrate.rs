//! Two-substrate kinetics: simulation checks of
//! `turnover_core::bisubstrate::analyse_bisubstrate` with known truth
//! (recovery of the constants: bias and interval coverage; how often the
//! verdict names the generating mechanism) and the reading of both table
//! layouts.
//!
//! **Design (invented, stated here):** a 5 × 5 grid, [A] = 2, 5, 10, 20,
//! 50 µM and [B] = 0.1, 0.25, 0.5, 1, 2.5 mM, i.e. 0.2–5 × KmA and KmB;
//! one rate per cell (25 points); Vmax = 10 µM/min, KmA = 10 µM,
//! KmB = 0.5 mM, and for the ternary-complex law KiA = 20 µM; proportional
//! (5%) normal noise, v·(1 + 0.05·z), fitted with proportional weights
//! (`relative`, the error model that generated it). Noise comes from the
//! core's seeded SplitMix64 with the Box-Muller transform (Box & Muller
//! 1958, from memory); each test states its seed. 200 trials per truth.
//!
//! Binomial bands for 200 trials (computed by hand from the binomial
//! distribution, as in tests/sets.rs): a true 95% coverage gives 178–197
//! hits in 99% of runs, so coverage is checked against 89%–98.5%.

use turnover_core::bisubstrate::{analyse_bisubstrate, BisubstrateAnalysis, BisubstrateRequest};
use turnover_core::model::Model;
use turnover_core::models::{TwoSubstrateMechanism, TwoSubstrates};
use turnover_core::random::SplitMix64;
use turnover_core::weighting::Weighting;

const TRIALS: usize = 200;
const A_LEVELS: [f64; 5] = [2.0, 5.0, 10.0, 20.0, 50.0];
const B_LEVELS: [f64; 5] = [0.1, 0.25, 0.5, 1.0, 2.5];
/// Vmax, KmA, KmB, KiA of the general law.
const TRUTH: [f64; 4] = [10.0, 10.0, 0.5, 20.0];
const NOISE: f64 = 0.05;

fn simulated_table(mechanism: TwoSubstrateMechanism, rng: &mut SplitMix64) -> String {
    let model = TwoSubstrates::new(mechanism);
    let p = model.from_general(TRUTH);
    let mut text = String::from("[A] (µM)\t[B] (mM)\tv (µM/min)\n");
    for a in A_LEVELS {
        for b in B_LEVELS {
            let v = model.value(&[a, b], &p) * (1.0 + NOISE * rng.normal());
            text.push_str(&format!("{a}\t{b}\t{v:.17e}\n"));
        }
    }
    text
}

fn analyse(text: String) -> BisubstrateAnalysis {
    analyse_bisubstrate(&BisubstrateRequest { text, weighting: Weighting::Relative, ..BisubstrateRequest::default() }).unwrap()
}

struct Study {
    named_right: usize,
    named_wrong: usize,
    undecided: usize,
    /// Per parameter of the true law: relative errors and interval hits.
    errors: Vec<Vec<f64>>,
    covered: Vec<usize>,
}

fn study(mechanism: TwoSubstrateMechanism, seed: u64) -> Study {
    let model = TwoSubstrates::new(mechanism);
    let truth = model.from_general(TRUTH);
    let mut rng = SplitMix64::new(seed);
    let mut s = Study { named_right: 0, named_wrong: 0, undecided: 0, errors: vec![Vec::new(); truth.len()], covered: vec![0; truth.len()] };
    for _ in 0..TRIALS {
        let a = analyse(simulated_table(mechanism, &mut rng));
        match a.comparison.preferred.as_deref() {
            Some(name) if name == mechanism.name() => s.named_right += 1,
            Some(_) => s.named_wrong += 1,
            None => s.undecided += 1,
        }
        let fit = a.fits.iter().find(|f| f.model == mechanism.name()).unwrap();
        assert!(fit.converged, "{}: {}", mechanism.name(), fit.termination_text);
        for (k, t) in truth.iter().enumerate() {
            let p = &fit.parameters[k];
            s.errors[k].push(p.value / t - 1.0);
            s.covered[k] += (p.ci_low.unwrap() <= *t && *t <= p.ci_high.unwrap()) as usize;
        }
    }
    s
}

/// Naming `sequential` for data made by a special case needs the F test to
/// reject the true law, which at p < 0.05 it does in at most 5% of trials
/// (about 2.5% at this boundary, where the test is conservative): 1%–10%
/// of 200, the binomial band for 5% (unchanged since before issue 16; a
/// true 2.5% falls below 2 of 200 in about 4% of seeds, binomial
/// probabilities computed by hand).
fn check_false_rejections(named_wrong: usize) {
    assert!((2..=20).contains(&named_wrong), "another law named in {named_wrong} of {TRIALS}");
}

fn median(values: &[f64]) -> f64 {
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    (v[v.len() / 2 - 1] + v[v.len() / 2]) / 2.0
}

/// Prints and checks the recovery: median relative bias within 3% (the
/// estimators' own nonlinearity bias at 5% noise is of the order of 1%;
/// common practice, no source) and 95% asymptotic coverage within the
/// binomial band 89%–98.5%.
fn check_recovery(mechanism: TwoSubstrateMechanism, s: &Study) {
    let model = TwoSubstrates::new(mechanism);
    let mut failures = Vec::new();
    for (k, spec) in model.parameters().iter().enumerate() {
        let bias = median(&s.errors[k]);
        let coverage = s.covered[k] as f64 / TRIALS as f64;
        println!("{:<11} {:<5} median bias {:+.2}%  coverage {:.1}%", mechanism.name(), spec.name, 100.0 * bias, 100.0 * coverage);
        if bias.abs() > 0.03 {
            failures.push(format!("{} bias {:+.2}%", spec.name, 100.0 * bias));
        }
        if !(0.89..=0.985).contains(&coverage) {
            failures.push(format!("{} coverage {:.1}%", spec.name, 100.0 * coverage));
        }
    }
    assert!(failures.is_empty(), "{}: {failures:?}", mechanism.name());
}

/// Ternary-complex truth (seed 20261216): the constants recovered, and the
/// verdict names `sequential` in at least 95% of trials.
#[test]
fn sequential_truth_is_recovered_and_named() {
    let s = study(TwoSubstrateMechanism::Sequential, 20261216);
    println!(
        "sequential truth: named sequential {} / {TRIALS}, named another law {}, undecided {}",
        s.named_right, s.named_wrong, s.undecided
    );
    check_recovery(TwoSubstrateMechanism::Sequential, &s);
    assert!(s.named_right * 100 >= 95 * TRIALS, "sequential named in {} of {TRIALS}", s.named_right);
}

/// Ping-pong truth (seed 20261217): the constants recovered, and
/// sequential named wrongly no more often than the F test's level allows.
#[test]
fn ping_pong_truth_is_recovered() {
    let s = study(TwoSubstrateMechanism::PingPong, 20261217);
    println!(
        "ping-pong truth: named ping-pong {} / {TRIALS}, named another law {}, undecided {}",
        s.named_right, s.named_wrong, s.undecided
    );
    check_recovery(TwoSubstrateMechanism::PingPong, &s);
    check_false_rejections(s.named_wrong);
}

/// The goal (issue 16): the verdict names `ping-pong` in at least 95% of
/// trials (same design and seed as above).
///
/// Before issue 16 it was named in 177 of 200 (sequential in 10,
/// undecided in 13): a special case was named only when the F test did not
/// reject it *and* AICc agreed. Ping-pong is sequential at the boundary
/// KiA → 0; there the F test of the physically constrained law (KiA ≥ 0:
/// a sequential fit with KiA ≤ 0 does not reject) decides alone, at the
/// usual p value, which at a boundary is conservative (about 2.5% false
/// rejections; Self & Liang 1987, cited from memory). Named in 193 of 200
/// when this was written (sequential in 7). `tests/verdict.rs` has the
/// study behind the rule.
#[test]
fn ping_pong_is_named_in_95_percent() {
    let s = study(TwoSubstrateMechanism::PingPong, 20261217);
    println!(
        "ping-pong truth: named ping-pong {} / {TRIALS}, named another law {}, undecided {}",
        s.named_right, s.named_wrong, s.undecided
    );
    assert!(s.named_right * 100 >= 95 * TRIALS, "ping-pong named in {} of {TRIALS}", s.named_right);
}

/// Rapid-equilibrium ordered truth (seed 20261218): the constants
/// recovered; how often it is named is printed (no goal was set; 194 of
/// 200 when issue 16 was closed), and sequential is named wrongly no more
/// often than the F test's level allows.
#[test]
fn ordered_truth_is_recovered() {
    let s = study(TwoSubstrateMechanism::Ordered, 20261218);
    println!("ordered truth: named ordered {} / {TRIALS}, named another law {}, undecided {}", s.named_right, s.named_wrong, s.undecided);
    check_recovery(TwoSubstrateMechanism::Ordered, &s);
    check_false_rejections(s.named_wrong);
}

/// The same invented rates as a long table, with replicate columns, and as
/// a matrix (a repeated [B] heading is a replicate) give the same fits to
/// 1e-12; a bad cell in each is a problem at its line and column.
#[test]
fn long_replicate_and_matrix_layouts_give_the_same_fit() {
    let mut rng = SplitMix64::new(7);
    let model = TwoSubstrates::new(TwoSubstrateMechanism::Sequential);
    let mut long = String::from("[A] (µM)\t[B] (mM)\tv (µM/min)\n");
    let mut wide = String::from("[A] (µM)\t[B] (mM)\tv rep 1 (µM/min)\tv rep 2\n");
    let mut matrix = String::from("[A] (µM)");
    for b in B_LEVELS {
        matrix.push_str(&format!("\t{b} mM\t[B] = {b} mM"));
    }
    matrix.push('\n');
    let mut cells = vec![vec![[0.0; 2]; B_LEVELS.len()]; A_LEVELS.len()];
    for (i, a) in A_LEVELS.iter().enumerate() {
        for (j, b) in B_LEVELS.iter().enumerate() {
            for cell in cells[i][j].iter_mut() {
                *cell = model.value(&[*a, *b], &TRUTH) * (1.0 + NOISE * rng.normal());
            }
        }
    }
    // Every layout in the same order (by [A], then [B], then replicate),
    // so that the sums run in the same order too.
    for (i, a) in A_LEVELS.iter().enumerate() {
        for (j, b) in B_LEVELS.iter().enumerate() {
            long.push_str(&format!("{a}\t{b}\t{:.17e}\n{a}\t{b}\t{:.17e}\n", cells[i][j][0], cells[i][j][1]));
            wide.push_str(&format!("{a}\t{b}\t{:.17e}\t{:.17e}\n", cells[i][j][0], cells[i][j][1]));
        }
    }
    for (a, row) in A_LEVELS.iter().zip(&cells) {
        matrix.push_str(&a.to_string());
        for cell in row {
            matrix.push_str(&format!("\t{:.17e}\t{:.17e}", cell[0], cell[1]));
        }
        matrix.push('\n');
    }
    let reference = analyse(long);
    for text in [wide.clone(), matrix.clone()] {
        let other = analyse(text);
        assert!(other.problems.is_empty(), "{:?}", other.problems);
        assert_eq!(other.points.len(), 50);
        for (x, y) in other.fits.iter().zip(&reference.fits) {
            // A law that cannot describe these (ternary-complex) data runs
            // off; it must do so in every layout.
            assert_eq!(x.converged, y.converged, "{}", x.model);
            if !y.converged {
                continue;
            }
            for (p, q) in x.parameters.iter().zip(&y.parameters) {
                assert!((p.value - q.value).abs() <= 1e-12 * q.value.abs(), "{} {}: {} {}", x.model, p.name, p.value, q.value);
                let (sp, sq) = (p.std_error.unwrap(), q.std_error.unwrap());
                assert!((sp - sq).abs() <= 1e-12 * sq, "{} {} SE: {sp} {sq}", x.model, p.name);
            }
        }
        assert_eq!(other.comparison.verdict, reference.comparison.verdict);
    }
    // One bad cell each: line 4 (the third data row), column 3.
    let spoil = |text: &str| -> String {
        text.lines()
            .enumerate()
            .map(|(k, line)| {
                if k == 3 {
                    let mut parts: Vec<&str> = line.split('\t').collect();
                    parts[2] = "n/a";
                    parts.join("\t")
                } else {
                    line.to_string()
                }
            })
            .collect::<Vec<_>>()
            .join("\n")
    };
    for text in [spoil(&wide), spoil(&matrix)] {
        let a = analyse(text);
        let found: Vec<String> = a.problems.iter().map(|p| p.to_string()).collect();
        assert_eq!(found.len(), 1, "{found:?}");
        assert!(found[0].starts_with("line 4, column 3: "), "{found:?}");
        assert_eq!(a.points.len(), 49);
    }
}
