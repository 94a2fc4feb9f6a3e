//! Time-dependent inhibition (`turnover_core::inactivation`) on simulated
//! progress curves with known constants.
//!
//! Simulation model: P(t) = offset + vs·t + (v0 − vs)(1 − e^(−kobs·t))/kobs
//! with kobs = kinact·[I]/(KI + [I]) (the slow-binding progress curve and
//! its saturation; common practice, no source), plus normal noise from the
//! core's seeded SplitMix64 (Box-Muller). The data are invented, not
//! measurements. Binomial bands: for 600 intervals at a true 95%, 99% of
//! runs cover between 93% and 97%; the bands below are wider (90%–99%)
//! because kobs's interval is asymptotic.

use turnover_core::inactivation::{analyse_inactivation, InactivationAnalysis, InactivationRequest};
use turnover_core::random::SplitMix64;
use turnover_core::traces::TraceRequest;

struct Design {
    kinact: f64,
    ki: f64,
    inhibitor: Vec<f64>,
    noise: f64,
}

const V0: f64 = 0.02;
const OFFSET: f64 = 0.05;

fn kobs(d: &Design, i: f64) -> f64 {
    d.kinact * i / (d.ki + i)
}

/// Readings every 0.5 min for 30 min (absorbance; no conversion), one trace
/// per [I] and one without inhibitor; [E] = 10 nM, [S] = 100 µM.
fn request(d: &Design, rng: &mut SplitMix64) -> InactivationRequest {
    let mut names = vec!["C0".to_string()];
    names.extend((1..=d.inhibitor.len()).map(|k| format!("T{k}")));
    let mut traces = format!("time (min)\t{}\n", names.join("\t"));
    for step in 0..=60 {
        let t = step as f64 * 0.5;
        traces.push_str(&format!("{t}\t{:.8}", OFFSET + V0 * t + d.noise * rng.normal()));
        for &i in &d.inhibitor {
            let k = kobs(d, i);
            let p = OFFSET + V0 * (1.0 - (-k * t).exp()) / k;
            traces.push_str(&format!("\t{:.8}", p + d.noise * rng.normal()));
        }
        traces.push('\n');
    }
    let mut layout = String::from("trace\tS (µM)\tI (µM)\tE (nM)\nC0\t100\t0\t10\n");
    for (k, i) in d.inhibitor.iter().enumerate() {
        layout.push_str(&format!("T{}\t100\t{i}\t10\n", k + 1));
    }
    InactivationRequest {
        traces: TraceRequest { traces, layout, ..TraceRequest::default() },
        ..InactivationRequest::default()
    }
}

fn parameter(a: &InactivationAnalysis, name: &str) -> Option<(f64, f64, f64)> {
    a.parameters.iter().find(|p| p.name == name).map(|p| (p.value, p.ci_low.unwrap(), p.ci_high.unwrap()))
}

fn saturating() -> Design {
    Design { kinact: 0.2, ki: 5.0, inhibitor: vec![1.0, 2.5, 5.0, 10.0, 20.0, 40.0], noise: 0.001 }
}

/// Without noise (printed to 8 decimals, so 1e-8 absolute rounding), the
/// constants come back to 1e-4 relative; the trace without inhibitor is
/// left out with a note; [S] = Km halves KI and doubles kinact/KI.
#[test]
fn exact_data_give_back_the_constants() {
    let d = Design { noise: 0.0, ..saturating() };
    let mut rng = SplitMix64::new(1);
    let a = analyse_inactivation(&request(&d, &mut rng)).unwrap();
    assert!(a.saturation);
    assert_eq!(a.traces.len(), 6);
    for t in &a.traces {
        assert!((t.kobs / kobs(&d, t.i) - 1.0).abs() < 1e-4, "{} {}", t.trace, t.kobs);
    }
    let (kinact, _, _) = parameter(&a, "kinact").unwrap();
    let (ki, _, _) = parameter(&a, "KI").unwrap();
    let (ratio, _, _) = parameter(&a, "kinact/KI").unwrap();
    assert!((kinact / 0.2 - 1.0).abs() < 1e-4 && (ki / 5.0 - 1.0).abs() < 1e-4 && (ratio / 0.04 - 1.0).abs() < 1e-4);
    assert!(a.notes.iter().any(|n| n.contains("without inhibitor")));
    // The global fit takes all seven traces (C0 at [I] = 0 with kobs = 0)
    // and gives the constants back too.
    let g = a.global.as_ref().unwrap();
    assert!(g.converged && g.saturation);
    assert_eq!((g.traces.len(), g.n, g.fitted), (7, 7 * 61, 2 + 6 * 3 + 2));
    assert_eq!(g.traces[0].vs, None);
    let global = |name: &str| g.parameters.iter().find(|p| p.name == name).unwrap().value;
    assert!((global("kinact") / 0.2 - 1.0).abs() < 1e-4 && (global("KI") / 5.0 - 1.0).abs() < 1e-4);
    assert!((global("kinact/KI") / 0.04 - 1.0).abs() < 1e-4);
    assert_eq!(g.comparison.len(), 3);
    assert_eq!(a.parameters.iter().find(|p| p.name == "KI").unwrap().unit.as_deref(), Some("µM"));
    let mut corrected = request(&d, &mut rng);
    corrected.substrate = Some(10.0);
    corrected.km = Some(10.0);
    let c = analyse_inactivation(&corrected).unwrap();
    assert!((parameter(&c, "KI").unwrap().0 / ki - 0.5).abs() < 1e-12);
    assert!((parameter(&c, "kinact/KI").unwrap().0 / ratio - 2.0).abs() < 1e-12);
}

/// Design: kinact 0.2 /min, KI 5 µM, [I] = 1, 2.5, 5, 10, 20, 40 µM, noise
/// SD 0.001 (5% of the product formed in one minute), 100 trials, seed
/// 31337. Wanted: saturation seen in at least 90 trials; kobs's 95%
/// interval covers the true kobs for 90%–99% of the 600 traces; median
/// kinact within 5% and median KI within 10% of the truth; kinact's 95%
/// interval covers 0.2 in 85–100 trials.
#[test]
fn kinact_and_ki_are_recovered_from_noisy_curves() {
    let d = saturating();
    let mut rng = SplitMix64::new(31337);
    let trials = 100;
    let (mut seen, mut kobs_in, mut kobs_all, mut kinact_in) = (0, 0, 0, 0);
    let (mut kinacts, mut kis) = (Vec::new(), Vec::new());
    for _ in 0..trials {
        let a = analyse_inactivation(&request(&d, &mut rng)).unwrap();
        for t in &a.traces {
            let se = t.kobs_se.unwrap();
            // t(0.975, 57): 61 readings, 4 parameters.
            let q = turnover_core::fit::student_t_quantile(0.975, 57.0).unwrap();
            kobs_all += 1;
            kobs_in += ((t.kobs - kobs(&d, t.i)).abs() <= q * se) as usize;
        }
        if let (Some(k), Some(ki)) = (parameter(&a, "kinact"), parameter(&a, "KI")) {
            seen += 1;
            kinacts.push(k.0);
            kis.push(ki.0);
            kinact_in += (k.1 <= 0.2 && 0.2 <= k.2) as usize;
        }
    }
    let median = |v: &mut Vec<f64>| {
        v.sort_by(f64::total_cmp);
        v[v.len() / 2]
    };
    let (mk, mki) = (median(&mut kinacts), median(&mut kis));
    println!(
        "inactivation, {trials} trials: saturation seen {seen}, kobs covered {kobs_in}/{kobs_all}, kinact covered {kinact_in}/{seen}, median kinact {mk:.4} (0.2), median KI {mki:.3} (5)"
    );
    assert!(seen >= 90, "saturation seen in {seen}");
    let rate = kobs_in as f64 / kobs_all as f64;
    assert!((0.90..=0.99).contains(&rate), "kobs coverage {rate}");
    assert!((mk / 0.2 - 1.0).abs() < 0.05, "median kinact {mk}");
    assert!((mki / 5.0 - 1.0).abs() < 0.10, "median KI {mki}");
    assert!(kinact_in * 100 >= 85 * seen, "kinact covered {kinact_in} of {seen}");
}

/// Design: kinact 2 /min, KI 500 µM, [I] = 5 to 30 µM (at most 6% of KI),
/// noise SD 0.001, seed 4242, one data set. Wanted: no saturation claimed,
/// only kinact/KI reported, within 10% of 0.004 /(µM·min), and a warning
/// saying why.
#[test]
fn without_saturation_only_the_ratio_is_reported() {
    let d = Design { kinact: 2.0, ki: 500.0, inhibitor: vec![5.0, 10.0, 15.0, 20.0, 30.0], noise: 0.001 };
    let mut rng = SplitMix64::new(4242);
    let a = analyse_inactivation(&request(&d, &mut rng)).unwrap();
    assert!(!a.saturation);
    assert_eq!(a.parameters.len(), 1);
    let (ratio, lo, hi) = parameter(&a, "kinact/KI").unwrap();
    assert!((ratio / 0.004 - 1.0).abs() < 0.10, "{ratio}");
    assert!(lo < ratio && ratio < hi);
    assert!(a.warnings.iter().any(|w| w.contains("Saturation of kobs is not seen")), "{:?}", a.warnings);
    // The global fit does not see saturation either and reports the ratio
    // alone, within 10% of the truth, with its reason.
    let g = a.global.as_ref().unwrap();
    assert!(!g.saturation && g.parameters.len() == 1);
    assert!((g.parameters[0].value / 0.004 - 1.0).abs() < 0.10, "{}", g.parameters[0].value);
    assert!(g.warnings.iter().any(|w| w.contains("saturation of kobs is not seen")), "{:?}", g.warnings);
}

/// Warnings: a kobs whose half-life is under two reading intervals, and
/// [I] below 10× [E]. Design: kinact 3 /min, KI 1 µM, [I] = 0.05 and 20 µM
/// with [E] = 10 nM in the layout (0.05 µM = 5× [E]), no noise.
#[test]
fn fast_kobs_and_low_inhibitor_are_warned() {
    let d = Design { kinact: 3.0, ki: 1.0, inhibitor: vec![0.05, 20.0], noise: 0.0 };
    let mut rng = SplitMix64::new(5);
    let a = analyse_inactivation(&request(&d, &mut rng)).unwrap();
    assert!(a.warnings.iter().any(|w| w.starts_with("Trace T2") && w.contains("reading interval")), "{:?}", a.warnings);
    assert!(a.warnings.iter().any(|w| w.starts_with("Trace T1") && w.contains("10× [E]")), "{:?}", a.warnings);
    assert!(!a.warnings.iter().any(|w| w.starts_with("Trace T2") && w.contains("10× [E]")));
}

/// The global fit's design (issue 14): kinact 0.2 /min, KI 5 µM, [I] = 1,
/// 2, 4, 8, 15, 25 µM (0.2–5 × KI) and one trace at [I] = 0, readings every
/// 0.5 min (30 s) for 30 min (61 per trace), v0 0.02 per min, offset 0.05,
/// vs 0 (irreversible), noise SD 0.001.
fn global_design() -> Design {
    Design { kinact: 0.2, ki: 5.0, inhibitor: vec![1.0, 2.0, 4.0, 8.0, 15.0, 25.0], noise: 0.001 }
}

/// Bias and coverage of the global fit's kinact, KI and kinact/KI over
/// `sets` seeded data sets (seed 1414), beside the two-step estimates.
/// Returns, per constant, (mean relative bias, Monte Carlo SE of that mean,
/// coverage, SD of the global estimates / SD of the two-step ones).
fn global_study(sets: usize) -> Vec<(&'static str, f64, f64, f64, f64)> {
    let d = global_design();
    let truth = [("kinact", d.kinact), ("KI", d.ki), ("kinact/KI", d.kinact / d.ki)];
    let mut rng = SplitMix64::new(1414);
    let mut global: Vec<Vec<f64>> = vec![Vec::new(); 3];
    let mut two_step: Vec<Vec<f64>> = vec![Vec::new(); 3];
    let mut covered = [0usize; 3];
    for _ in 0..sets {
        let a = analyse_inactivation(&request(&d, &mut rng)).unwrap();
        let g = a.global.as_ref().expect("global fit");
        assert!(g.converged && g.saturation, "global fit: converged {}, saturation {}", g.converged, g.saturation);
        assert_eq!(g.traces.len(), 7);
        for (j, (name, value)) in truth.iter().enumerate() {
            let p = g.parameters.iter().find(|p| p.name == *name).unwrap();
            global[j].push(p.value);
            covered[j] += (p.ci_low.unwrap() <= *value && *value <= p.ci_high.unwrap()) as usize;
            if let Some(q) = a.parameters.iter().find(|p| p.name == *name) {
                two_step[j].push(q.value);
            }
        }
    }
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
    let sd = |v: &[f64]| {
        let m = mean(v);
        (v.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (v.len() - 1) as f64).sqrt()
    };
    truth
        .iter()
        .enumerate()
        .map(|(j, (name, value))| {
            let bias = mean(&global[j]) / value - 1.0;
            let mc_se = sd(&global[j]) / value / (sets as f64).sqrt();
            let coverage = covered[j] as f64 / sets as f64;
            let efficiency = sd(&global[j]) / sd(&two_step[j]);
            println!(
                "global fit, {sets} sets: {name} bias {:+.2}% (Monte Carlo SE {:.2}%), 95% coverage {:.1}%, SD global/two-step {efficiency:.3}",
                100.0 * bias,
                100.0 * mc_se,
                100.0 * coverage
            );
            (*name, bias, mc_se, coverage, efficiency)
        })
        .collect()
}

/// Wanted over the sets: every global fit converges and sees saturation
/// (checked inside the study); the mean relative bias of each constant
/// within 2% (a nonlinear estimate has an O(1/n) bias; at 300 sets KI's
/// was +1.2% ± 0.5%); 95% interval coverage between 88% and 99% (the
/// intervals are asymptotic; binomial SD 1.8% at 150 sets); and the global
/// estimates no more scattered than the two-step ones (SD ratio ≤ 1.05).
fn check_global_study(sets: usize, low_coverage: f64) {
    for (name, bias, _, coverage, efficiency) in global_study(sets) {
        assert!(bias.abs() < 0.02, "{name}: bias {bias}");
        assert!((low_coverage..=0.99).contains(&coverage), "{name}: coverage {coverage}");
        assert!(efficiency <= 1.05, "{name}: SD ratio {efficiency}");
    }
}

/// 150 sets (seed 1414); the design is [`global_design`].
#[test]
fn global_fit_bias_and_coverage() {
    check_global_study(150, 0.88);
}

/// The same study with 2,000 sets (binomial SD of coverage 0.5%):
/// `cargo test --release -p turnover-tests --test inactivation -- --ignored`.
#[test]
#[ignore]
fn global_fit_bias_and_coverage_long() {
    check_global_study(2000, 0.90);
}
