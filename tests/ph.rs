//! pH-rate profiles: simulation checks of `turnover_core::ph::analyse_ph`.
//!
//! The data are simulated here with invented true values stated with each
//! test, from the core's seeded SplitMix64 (normal deviates by Box-Muller,
//! Box & Muller 1958, from memory), with proportional noise (the error
//! model the default relative weighting assumes). The bands for rates over
//! 200 trials are binomial, as in tests/sets.rs: at a true 95%, 99% of runs
//! give 178–197 of 200 covered (89%–98.5%; binomial quantiles, computed by
//! hand). Medians are judged against their Monte Carlo error
//! 1.2533·SD/√n (the large-sample standard error of a median of normal
//! values, from memory).

use turnover_core::model::Model;
use turnover_core::ph::{analyse_ph, PhAnalysis, PhModel, PhRequest};
use turnover_core::random::SplitMix64;

const TRIALS: usize = 200;

/// A profile table: pH 4.0 to 10.5 by 0.5 (14 points), kcat in s⁻¹ from
/// `model` at `p`, each multiplied by (1 + `cv`·z).
fn table(model: PhModel, p: &[f64], cv: f64, rng: &mut SplitMix64) -> String {
    let mut text = String::from("pH\tkcat (s-1)\n");
    for i in 0..14 {
        let ph = 4.0 + 0.5 * i as f64;
        let y = model.value(&[ph], p) * (1.0 + cv * rng.normal());
        text.push_str(&format!("{ph}\t{y:.17e}\n"));
    }
    text
}

fn parameter<'a>(a: &'a PhAnalysis, model: &str, name: &str) -> &'a turnover_core::fit::ParameterEstimate {
    let fit = a.fits.iter().find(|f| f.model == model).unwrap();
    fit.parameters.iter().find(|p| p.name == name).unwrap()
}

fn median(values: &mut [f64]) -> f64 {
    values.sort_by(f64::total_cmp);
    let n = values.len();
    if n % 2 == 1 {
        values[n / 2]
    } else {
        (values[n / 2 - 1] + values[n / 2]) / 2.0
    }
}

fn sd(values: &[f64]) -> f64 {
    let mean = values.iter().sum::<f64>() / values.len() as f64;
    (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (values.len() - 1) as f64).sqrt()
}

/// Design: bell with Y = 100 s⁻¹, pKa1 = 6.0, pKa2 = 8.5, 14 pH values
/// (4.0–10.5), 5% proportional noise, 200 trials, seed 20261203; default
/// request (relative weights from the curve, profile intervals). Wanted:
/// the bell named in ≥ 95% of trials (the single limbs are far off); the
/// median of each pKa within 3 Monte Carlo errors of the truth and within
/// 0.02 pH; Y's median within 3 Monte Carlo errors and 2%; each 95%
/// profile interval covering the truth in 89%–98.5% of trials.
#[test]
fn bell_constants_are_recovered_with_honest_intervals() {
    let truth = [100.0, 6.0, 8.5];
    let mut rng = SplitMix64::new(20261203);
    let mut estimates = vec![Vec::new(); 3];
    let mut covered = [0usize; 3];
    let mut bell_named = 0;
    for _ in 0..TRIALS {
        let text = table(PhModel::Bell, &truth, 0.05, &mut rng);
        let a = analyse_ph(&PhRequest { text, ..PhRequest::default() }).unwrap();
        bell_named += (a.comparison.preferred.as_deref() == Some("bell")) as usize;
        for (j, name) in ["Y", "pKa1", "pKa2"].iter().enumerate() {
            let p = parameter(&a, "bell", name);
            estimates[j].push(p.value);
            covered[j] += (p.ci_low.unwrap() <= truth[j] && truth[j] <= p.ci_high.unwrap()) as usize;
        }
    }
    println!("bell named {bell_named}/{TRIALS}; covered {covered:?}");
    assert!(bell_named * 100 >= 95 * TRIALS, "bell named in {bell_named}/{TRIALS}");
    for (j, (name, goal)) in [("Y", 0.02 * truth[0]), ("pKa1", 0.02), ("pKa2", 0.02)].iter().enumerate() {
        let spread = sd(&estimates[j]);
        let m = median(&mut estimates[j]);
        let mc = 1.2533 * spread / (TRIALS as f64).sqrt();
        println!("{name}: median {m:.5}, truth {}, SD {spread:.5}, MC error {mc:.5}", truth[j]);
        assert!((m - truth[j]).abs() <= 3.0 * mc, "{name}: median {m} vs {} (MC error {mc})", truth[j]);
        assert!((m - truth[j]).abs() <= *goal, "{name}: median bias {}", m - truth[j]);
        assert!((178..=197).contains(&covered[j]), "{name}: covered {}/{TRIALS}", covered[j]);
    }
}

/// Design: a rising limb only (Y = 40 s⁻¹, pKa1 = 6.5), same pH values,
/// 5% proportional noise, 200 trials, seed 77. Wanted: the rising limb
/// named in ≥ 85% of trials and the bell in ≤ 10% (the F test of the
/// rising limb against the bell is nominally 5% at the boundary, where it
/// is conservative); pKa1's profile interval covering 6.5 in 89%–98.5%.
#[test]
fn one_ionisation_is_not_called_two() {
    let truth = [40.0, 6.5];
    let mut rng = SplitMix64::new(77);
    let (mut rising, mut bell, mut covered) = (0usize, 0usize, 0usize);
    for _ in 0..TRIALS {
        let text = table(PhModel::Rising, &truth, 0.05, &mut rng);
        let a = analyse_ph(&PhRequest { text, ..PhRequest::default() }).unwrap();
        match a.comparison.preferred.as_deref() {
            Some("rising-limb") => rising += 1,
            Some("bell") => bell += 1,
            _ => {}
        }
        let p = parameter(&a, "rising-limb", "pKa1");
        covered += (p.ci_low.unwrap() <= 6.5 && 6.5 <= p.ci_high.unwrap()) as usize;
    }
    println!("rising named {rising}, bell named {bell}, pKa1 covered {covered} of {TRIALS}");
    assert!(rising * 100 >= 85 * TRIALS, "rising named {rising}/{TRIALS}");
    assert!(bell * 10 <= TRIALS, "bell named {bell}/{TRIALS}");
    assert!((178..=197).contains(&covered), "covered {covered}/{TRIALS}");
}

/// The closeness warning: pKa values 0.8 apart (6.8 and 7.6) give it;
/// 2.5 apart (6.0 and 8.5) do not. 2% noise, seeds 5 and 6 (the gap is
/// estimated to within about 0.1 here, far from the 2-unit line).
#[test]
fn close_pka_values_are_warned_about() {
    let close = |a: &PhAnalysis| a.warnings.iter().any(|w| w.contains("closer than about 2"));
    let mut rng = SplitMix64::new(5);
    let a = analyse_ph(&PhRequest { text: table(PhModel::Bell, &[100.0, 6.8, 7.6], 0.02, &mut rng), ..PhRequest::default() }).unwrap();
    assert_eq!(a.comparison.preferred.as_deref(), Some("bell"), "{}", a.comparison.verdict);
    assert!(close(&a), "{:?}", a.warnings);
    // The top of the bell lies below Y: Y/(1 + 2·10^(−0.4)) = Y/1.796 =
    // 0.557·Y at a gap of 0.8 (10^(−0.4) = 0.398); the warning gives the
    // fraction for the fitted gap.
    assert!(a.warnings.iter().any(|w| w.contains("(at 0.55") || w.contains("(at 0.56")), "{:?}", a.warnings);
    let mut rng = SplitMix64::new(6);
    let a = analyse_ph(&PhRequest { text: table(PhModel::Bell, &[100.0, 6.0, 8.5], 0.02, &mut rng), ..PhRequest::default() }).unwrap();
    assert!(!close(&a), "{:?}", a.warnings);
}

/// The plots are plain PlotData: the log plot's points are log10 of the
/// values, its curve log10 of the fitted curve, with one asymptote per
/// region of the bell (slopes +1, 0, −1 through (pKa, log Y)).
#[test]
fn log_plot_and_asymptotes() {
    let mut rng = SplitMix64::new(9);
    let a = analyse_ph(&PhRequest { text: table(PhModel::Bell, &[100.0, 6.0, 8.5], 0.02, &mut rng), ..PhRequest::default() }).unwrap();
    let log = &a.plots[0];
    assert_eq!(log.kind.name(), "ph-log");
    for (q, p) in log.points.iter().zip(&a.points) {
        assert!((q.y - p.y.log10()).abs() < 1e-12);
    }
    let bell = a.fits.iter().find(|f| f.model == "bell").unwrap();
    let (y, k1, k2) = (bell.parameters[0].value, bell.parameters[1].value, bell.parameters[2].value);
    let slopes: Vec<f64> = log.segments.iter().map(|((x0, y0), (x1, y1))| (y1 - y0) / (x1 - x0)).collect();
    assert_eq!(slopes.len(), 3);
    for (s, want) in slopes.iter().zip([1.0, 0.0, -1.0]) {
        assert!((s - want).abs() < 1e-12, "{slopes:?}");
    }
    assert!((log.segments[0].0 .0 - k1).abs() < 1e-12 && (log.segments[2].0 .0 - k2).abs() < 1e-12);
    assert!((log.segments[1].0 .1 - y.log10()).abs() < 1e-12);
    // What drawPlotJson reads back: the same plot (numbers to the last
    // digits JSON keeps).
    let json = serde_json::to_string(log).unwrap();
    let back: turnover_core::plots::PlotData = serde_json::from_str(&json).unwrap();
    assert_eq!((back.kind, back.segments.len(), back.points.len(), back.marks.len()), (log.kind, 3, log.points.len(), 2));
    assert!(back.points.iter().zip(&log.points).all(|(a, b)| (a.y - b.y).abs() <= 1e-15 * b.y.abs().max(1.0)));
}
