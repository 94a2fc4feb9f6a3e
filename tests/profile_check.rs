//! The check that the data bound each constant (run after every converged
//! fit with asymptotic intervals) asks [`profile_closes`] instead of
//! computing whole profile intervals. Here it must give, side by side, the
//! answer of the full search ([`profile_interval`]: an end that is `None`
//! is a side that does not close) on seeded random curves, many of them
//! ill-determined on purpose.
//!
//! Design (invented data, seed 20261202, SplitMix64): ten-point
//! dose-response curves (doses 100/3^k µM, k = 0..9) with IC50 from
//! 10⁻⁵ to 10⁴ µM (log-uniform, so most lie outside the tested range),
//! Hill slope 0.3 to 5, noise SD 1 to 30 % activity, plateaus −10 to 30
//! and 70 to 110; eight-point rate curves ([S] 0.5 to 64) by
//! Michaelis-Menten (Km 0.64 to 6,400), Hill (K 2 to 2,000, n 0.5 to 3.2)
//! and substrate inhibition (Km 2 to 640, Ki 2 to 6,400), noise SD 1 to
//! 25 % of the largest rate. The quick version runs 100 curves; the
//! ignored one the 2,000 of the report (1,000 dose-response, 600
//! Michaelis-Menten, 200 Hill, 200 substrate inhibition).

use turnover_core::fit::{fit_model, FitSettings};
use turnover_core::intervals::{profile_closes, profile_interval};
use turnover_core::model::{Model, Observations};
use turnover_core::models::{DoseResponse, Hill, MichaelisMenten, SubstrateInhibition};
use turnover_core::random::SplitMix64;

/// A log-uniform number between 10^low and 10^high.
fn log_uniform(rng: &mut SplitMix64, low: f64, high: f64) -> f64 {
    10f64.powf(low + (high - low) * rng.uniform())
}

/// A curve of the model with the truth drawn for it.
fn draw(kind: usize, rng: &mut SplitMix64) -> (Box<dyn Model>, Observations) {
    if kind == 0 {
        let doses: Vec<f64> = (0..10).map(|k| 100.0 / 3f64.powi(k)).collect();
        let (ic50, h, sd) = (log_uniform(rng, -5.0, 4.0), log_uniform(rng, -0.5, 0.7), log_uniform(rng, 0.0, 1.5));
        let bottom = -10.0 + 40.0 * rng.uniform();
        let top = 70.0 + 40.0 * rng.uniform();
        let y: Vec<f64> = doses.iter().map(|d| bottom + (top - bottom) / (1.0 + (d / ic50).powf(h)) + sd * rng.normal()).collect();
        return (Box::new(DoseResponse::new(None, None)), Observations::single(&doses, &y).unwrap());
    }
    let s = [0.5, 1.0, 2.0, 4.0, 8.0, 16.0, 32.0, 64.0];
    let (model, clean): (Box<dyn Model>, Vec<f64>) = match kind {
        1 => {
            let km = 64.0 * log_uniform(rng, -2.0, 2.0);
            (Box::new(MichaelisMenten), s.iter().map(|s| 10.0 * s / (km + s)).collect())
        }
        2 => {
            let (k, n) = (64.0 * log_uniform(rng, -1.5, 1.5), log_uniform(rng, -0.3, 0.5));
            (Box::new(Hill), s.iter().map(|s| 10.0 * s.powf(n) / (k.powf(n) + s.powf(n))).collect())
        }
        _ => {
            let (km, ki) = (64.0 * log_uniform(rng, -1.5, 1.0), 64.0 * log_uniform(rng, -1.5, 2.0));
            (Box::new(SubstrateInhibition), s.iter().map(|s| 10.0 * s / (km + s * (1.0 + s / ki))).collect())
        }
    };
    let sd = log_uniform(rng, -2.0, -0.6) * clean.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let y: Vec<f64> = clean.iter().map(|v| v + sd * rng.normal()).collect();
    (model, Observations::single(&s, &y).unwrap())
}

/// What [`compare`] counted.
#[derive(Debug, Default)]
struct Tally {
    /// Sides of profiles compared.
    sides: usize,
    /// Sides whose full search found no end.
    open: usize,
    /// Sides the check calls closed whose full search found no end (a refit
    /// failing inside the bracket; see [`profile_closes`]).
    closed_by_check_only: usize,
    /// Converged fits, and those whose every side closes.
    fits: usize,
    all_closed: usize,
}

/// Fits `counts[kind]` curves of each kind and compares every side of
/// every converged fit. The flags depend on one answer per fit (does every
/// side close?), which must agree; a side the check calls open must be one
/// the full search leaves open.
fn compare(counts: [usize; 4]) -> Tally {
    let mut rng = SplitMix64::new(20261202);
    let mut tally = Tally::default();
    for (kind, &count) in counts.iter().enumerate() {
        for curve in 0..count {
            let (model, data) = draw(kind, &mut rng);
            let Ok(fit) = fit_model(model.as_ref(), &data, None, &FitSettings::default()) else { continue };
            if !fit.summary.converged {
                continue;
            }
            let (mut all_by_search, mut all_by_check) = (true, true);
            for j in 0..fit.values().len() {
                let (low, high) = profile_interval(model.as_ref(), &data, &fit, j);
                for (direction, end) in [(-1.0, low), (1.0, high)] {
                    let closes = profile_closes(model.as_ref(), &data, &fit, j, direction);
                    assert!(closes || end.is_none(), "{} curve {curve}, parameter {j}, side {direction}: open by the check, closed at {end:?}", model.name());
                    all_by_search &= end.is_some();
                    all_by_check &= closes;
                    tally.sides += 1;
                    tally.open += usize::from(end.is_none());
                    tally.closed_by_check_only += usize::from(closes && end.is_none());
                }
            }
            assert_eq!(all_by_check, all_by_search, "{} curve {curve}: does every side close?", model.name());
            tally.fits += 1;
            tally.all_closed += usize::from(all_by_search);
        }
    }
    tally
}

#[test]
fn the_closure_check_agrees_with_the_full_profile_search() {
    let tally = compare([40, 30, 15, 15]);
    // Not vacuous: both answers occur often.
    assert!(tally.all_closed * 5 > tally.fits && (tally.fits - tally.all_closed) * 5 > tally.fits, "{tally:?}");
}

/// Finding of the last run (3 December 2026, profile refits stopping at
/// 1e-6 SE): 2,000 curves, 1,622 converged fits, of which 618 close on
/// every side; 10,268 sides, 4,279 open; 221 sides called closed by the
/// check and left open by the full search (a refit failing inside the
/// bracket), every one on a fit with another side open, so no flag
/// changed. (With refits stopping at 1e-9 SE, the same fits: 4,282 and
/// 216. Before the dose-response starting values were polished: 1,615
/// fits, 604, 10,214 sides, 4,500 and 177; before positive constants were
/// kept above zero in the walk: 597, 4,587 and 161.)
#[test]
#[ignore = "2,000 curves, about a minute in release; run with --ignored"]
fn the_closure_check_agrees_on_two_thousand_curves() {
    let tally = compare([1000, 600, 200, 200]);
    println!("{tally:?}");
    assert!(tally.all_closed * 5 > tally.fits && (tally.fits - tally.all_closed) * 5 > tally.fits, "{tally:?}");
}
