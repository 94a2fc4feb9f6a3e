//! How often the mechanism comparison tells mixed inhibition from
//! noncompetitive, as a function of Kiu/Kic and the noise: the power
//! table in the README's user guide comes from here.
//!
//! Design (invented, the design of `tests/models.rs`): Vmax 10 µM/min,
//! Km 0.5 mM, [S] 0.1, 0.25, 0.5, 1, 2.5, 5 mM (0.2–10×Km), [I] 0, 1, 2.5,
//! 5, 10 µM, duplicates (n = 60); mixed inhibition with Kic 2 µM and Kiu =
//! ratio × Kic (ratio 1 is noncompetitive, so its row is the false-alarm
//! rate); proportional normal noise v = f·(1 + cv·z), analysed with
//! relative weights from the fitted curve (the weighting that matches the
//! noise) and all four mechanisms; at 5 and 10% noise also with equal
//! weights (the error structure ignored). For each cell: the share of data sets
//! whose verdict names mixed, the share where the F test of
//! noncompetitive against mixed rejects at p < 0.05, and the share whose
//! verdict names noncompetitive. Seeds: 9_000_000 + 10_000·cell + set.
//!
//! The short version runs in the normal `cargo test`; the full table:
//!
//! ```text
//! TURNOVER_FULL_POWER=1 cargo test --release -p turnover-tests --test inhibition_power -- --nocapture
//! ```

use turnover_core::inhibition::{analyse_inhibition, InhibitionRequest};
use turnover_core::models::{model_with_options, ModelOptions};
use turnover_core::random::SplitMix64;
use turnover_core::weighting::Weighting;

const S_LEVELS: [f64; 6] = [0.1, 0.25, 0.5, 1.0, 2.5, 5.0];
const I_LEVELS: [f64; 5] = [0.0, 1.0, 2.5, 5.0, 10.0];
const TRUTH: [f64; 3] = [10.0, 0.5, 2.0];

/// Shares of one cell of the table.
struct Cell {
    sets: usize,
    mixed_named: usize,
    f_rejects: usize,
    noncompetitive_named: usize,
}

impl Cell {
    fn share(count: usize, sets: usize) -> f64 {
        count as f64 / sets as f64
    }
    fn line(&self, ratio: f64, cv: f64, weighting: Weighting) -> String {
        let pct = |c: usize| 100.0 * Cell::share(c, self.sets);
        format!(
            "| {ratio} | {:.0}% | {} | {:.0}% | {:.0}% | {:.0}% | {} |",
            100.0 * cv,
            weighting.option_name(),
            pct(self.f_rejects),
            pct(self.mixed_named),
            pct(self.noncompetitive_named),
            self.sets
        )
    }
}

/// Simulates `sets` data sets for one (ratio, cv) cell and analyses each.
fn cell(index: u64, ratio: f64, cv: f64, sets: usize, weighting: Weighting) -> Cell {
    let model = model_with_options("mixed", &ModelOptions::default()).unwrap();
    let truth = [TRUTH[0], TRUTH[1], TRUTH[2], ratio * TRUTH[2]];
    let mut counts = Cell { sets, mixed_named: 0, f_rejects: 0, noncompetitive_named: 0 };
    for set in 0..sets as u64 {
        let mut rng = SplitMix64::new(9_000_000 + 10_000 * index + set);
        let mut text = String::from("[S] (mM)\t[I] (µM)\tv (µM/min)\n");
        for i in I_LEVELS {
            for s in S_LEVELS {
                for _ in 0..2 {
                    let v = model.value(&[s, i], &truth) * (1.0 + cv * rng.normal());
                    text.push_str(&format!("{s}\t{i}\t{v:.17e}\n"));
                }
            }
        }
        let request = InhibitionRequest { text, weighting, ..Default::default() };
        let analysis = analyse_inhibition(&request).unwrap();
        let c = &analysis.comparison;
        counts.mixed_named += usize::from(c.preferred.as_deref() == Some("mixed"));
        counts.noncompetitive_named += usize::from(c.preferred.as_deref() == Some("noncompetitive"));
        let test = c.f_tests.iter().find(|t| t.simpler == "noncompetitive" && t.general == "mixed").expect("the pair is tested");
        counts.f_rejects += usize::from(test.p_value < 0.05);
    }
    counts
}

fn header() -> String {
    "| Kiu/Kic | noise (cv) | weighting | F test rejects noncompetitive | verdict names mixed | verdict names noncompetitive | sets |\n|---|---|---|---|---|---|---|"
        .to_string()
}

/// The full table, on request (400 sets per cell). Checks only what must
/// hold whatever the power: at ratio 1 (noncompetitive truth) the F test
/// rejects in at most 5% plus twice the Monte Carlo error.
#[test]
#[ignore = "the full power table: TURNOVER_FULL_POWER=1 ... -- --include-ignored (or set the variable)"]
fn power_table_full() {
    full_table();
}

/// Runs the full table when `TURNOVER_FULL_POWER` is set, without needing
/// `--include-ignored`.
#[test]
fn power_table_when_asked() {
    if std::env::var_os("TURNOVER_FULL_POWER").is_some() {
        full_table();
    }
}

fn full_table() {
    let sets = 400;
    let mut lines = vec![header()];
    let mut failures = Vec::new();
    let mut index = 0;
    for cv in [0.02, 0.05, 0.10] {
        for ratio in [1.0, 1.5, 2.0, 3.0, 5.0, 10.0] {
            let c = cell(index, ratio, cv, sets, Weighting::Relative);
            index += 1;
            lines.push(c.line(ratio, cv, Weighting::Relative));
            let slack = 2.0 * (0.05f64 * 0.95 / sets as f64).sqrt();
            if ratio == 1.0 && Cell::share(c.f_rejects, sets) > 0.05 + slack {
                failures.push(format!("cv {cv}: the F test rejects true noncompetitive in {} of {sets}", c.f_rejects));
            }
        }
    }
    // The same noise analysed with equal weights (the error structure
    // ignored), where the low rates that carry the difference count for
    // little.
    for cv in [0.05, 0.10] {
        for ratio in [1.0, 1.5, 2.0, 3.0] {
            let c = cell(index, ratio, cv, sets, Weighting::Uniform);
            index += 1;
            lines.push(c.line(ratio, cv, Weighting::Uniform));
        }
    }
    println!("{}", lines.join("\n"));
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// The short version in the suite: 5% noise, ratio 1 (false alarms: the F
/// test may reject in at most 5 of 40, i.e. 5% plus about twice the Monte
/// Carlo error) and ratio 5 (mixed must be named in at least 30 of 40; the
/// full table gave 100% of 400 when this was written, and 5% at ratio 1). Same seeds as the
/// full table's cells.
#[test]
fn power_short() {
    let sets = 40;
    let null = cell(6, 1.0, 0.05, sets, Weighting::Relative);
    let strong = cell(10, 5.0, 0.05, sets, Weighting::Relative);
    println!("{}\n{}\n{}", header(), null.line(1.0, 0.05, Weighting::Relative), strong.line(5.0, 0.05, Weighting::Relative));
    assert!(null.f_rejects <= 5, "ratio 1: F rejects in {} of {sets}", null.f_rejects);
    assert!(strong.mixed_named >= 30, "ratio 5: mixed named in {} of {sets}", strong.mixed_named);
}
