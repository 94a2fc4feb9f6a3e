//! In-process timing of single fits, for `tests/bench/bench.py` (a
//! benchmark, not a test; it prints numbers and checks nothing).
//!
//! ```text
//! fit_timing --model NAME --file TABLE [--enzyme E] [--repeats R] [--bootstrap N]
//! ```
//!
//! `TABLE` is a tab-separated file as `bench.py` writes it: one heading
//! line, then rows of `curve`, the predictor columns and the response
//! (with `--bootstrap`, no `curve` column: one curve). Every curve is read
//! once into [`Observations`]; then `fit_model` (starting values, the fit,
//! standard errors, t intervals, R², AICc, bias) is called on each curve in
//! turn, the whole pass `R` times, and the fastest pass divided by the
//! number of curves is printed as `seconds_per_fit`. With `--bootstrap N`
//! the one curve is fitted and given bootstrap intervals from `N` residual
//! resamples ([`apply_interval_method`]), the fastest of `R` runs printed
//! as `seconds_per_bootstrap`.
//!
//! The parser is this program's own (a file `bench.py` wrote, with no
//! units or problems to report); the command line reads files through
//! the shared table reader instead.

use std::collections::BTreeMap;
use std::time::Instant;
use turnover_core::fit::{fit_model, FitSettings};
use turnover_core::intervals::{apply_interval_method, BootstrapSettings, IntervalMethod};
use turnover_core::model::Observations;
use turnover_core::models::{model_input, model_with_options, ModelInput, ModelOptions};

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let option = |name: &str| args.iter().position(|a| a == name).map(|k| args[k + 1].clone());
    let model_name = option("--model").expect("--model NAME");
    let file = option("--file").expect("--file TABLE");
    let repeats: usize = option("--repeats").map_or(5, |r| r.parse().expect("--repeats R"));
    let bootstrap: Option<usize> = option("--bootstrap").map(|n| n.parse().expect("--bootstrap N"));
    let options = ModelOptions { enzyme: option("--enzyme").map(|e| e.parse().expect("--enzyme E")), ..ModelOptions::default() };
    let model = model_with_options(&model_name, &options).expect("a known model");
    let predictors = match model_input(&model_name).expect("a known model") {
        ModelInput::Substrate | ModelInput::Inhibitor => 1,
        ModelInput::SubstrateAndInhibitor | ModelInput::TwoSubstrates => 2,
    };
    let text = std::fs::read_to_string(&file).expect("a readable table");
    let grouped = bootstrap.is_none();
    let mut curves: BTreeMap<String, (Vec<f64>, Vec<f64>)> = BTreeMap::new();
    for line in text.lines().skip(1).filter(|l| !l.trim().is_empty()) {
        let cells: Vec<&str> = line.split('\t').collect();
        let (key, numbers) = if grouped { (cells[0].to_string(), &cells[1..]) } else { (String::new(), &cells[..]) };
        let numbers: Vec<f64> = numbers.iter().map(|c| c.parse().expect("a number")).collect();
        assert_eq!(numbers.len(), predictors + 1, "{line}");
        let entry = curves.entry(key).or_default();
        entry.0.extend_from_slice(&numbers[..predictors]);
        entry.1.push(numbers[predictors]);
    }
    let data: Vec<Observations> =
        curves.into_values().map(|(x, y)| Observations::new(predictors, x, y, None).expect("usable observations")).collect();
    let settings = FitSettings::default();
    let mut best = f64::INFINITY;
    let mut checksum = 0.0;
    match bootstrap {
        None => {
            for _ in 0..repeats {
                let started = Instant::now();
                for curve in &data {
                    if let Ok(fit) = fit_model(model.as_ref(), curve, None, &settings) {
                        checksum += fit.values()[0];
                    }
                }
                best = best.min(started.elapsed().as_secs_f64());
            }
            println!("curves {}", data.len());
            println!("seconds_per_fit {:e}", best / data.len() as f64);
        }
        Some(resamples) => {
            let curve = &data[0];
            let boot = BootstrapSettings { resamples, ..BootstrapSettings::default() };
            for _ in 0..repeats {
                let started = Instant::now();
                let fit = fit_model(model.as_ref(), curve, None, &settings).expect("a fit");
                let mut summary = fit.summary.clone();
                let sample = apply_interval_method(&mut summary, model.as_ref(), curve, &fit, IntervalMethod::Bootstrap, &boot)
                    .expect("bootstrap intervals");
                best = best.min(started.elapsed().as_secs_f64());
                checksum += summary.parameters[0].ci_low.unwrap_or(0.0) + sample.map_or(0, |s| s.failures) as f64;
            }
            println!("seconds_per_bootstrap {best:e}");
        }
    }
    // Printed so the work cannot be optimised away.
    println!("checksum {checksum}");
}
