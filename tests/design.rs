//! Planning an experiment: checks of `turnover_core::design`.
//!
//! The predictions of precision come from the Fisher information at the
//! guessed constants; the checks compare them with the core's own Monte
//! Carlo (which fits each simulated experiment with `fit_model` as the rate
//! analysis does) for designs where the linear approximation should hold,
//! and with the long-known rule that a design spanning about 0.2–5×Km
//! determines Km far better than one below Km (common practice, no source).
//! The true constants are invented and stated with each test, as are the
//! seeds. The bench outputs (plate map, pipetting table) are checked by
//! reading the plate map back through the time-course layout reader and by
//! adding up the volumes.

use turnover_core::design::{design, BenchRequest, DesignRequest, DesignResult, Guess, Noise, NoiseKind, ProposedDesign, Target, TargetMeasure};
use turnover_core::inhibition::{analyse_inhibition, InhibitionRequest};
use turnover_core::model::Observations;
use turnover_core::models::{model_by_name, Mechanism};
use turnover_core::random::SplitMix64;
use turnover_core::read::layout::read_layout_cells;
use turnover_core::weighting::Weighting;

fn guess(name: &str, value: f64) -> Guess {
    Guess { name: name.into(), value, low: None, high: None }
}

fn mm_request(noise: Noise, simulations: usize, seed: u64) -> DesignRequest {
    DesignRequest {
        model: "mm".into(),
        guesses: vec![guess("Vmax", 10.0), guess("Km", 5.0)],
        noise,
        points: 8,
        replicates: 2,
        simulations,
        seed,
        substrate_unit: Some("µM".into()),
        rate_unit: Some("µM/min".into()),
        ..DesignRequest::default()
    }
}

fn predicted(result: &DesignResult, name: &str) -> f64 {
    result.recommended.predicted.iter().find(|p| p.name == name).unwrap().std_error.unwrap()
}

/// Design: Michaelis-Menten, Vmax = 10 µM/min, Km = 5 µM, the recommended
/// 8 [S] from 1 to 25 µM in duplicate (16 wells); 1,000 simulated
/// experiments per noise model, seed 20261202. Noise: constant SD 0.2
/// µM/min (2% of Vmax), then proportional 3%. Wanted: the standard
/// deviation of the estimates within 10% of the Fisher-information standard
/// error for both constants (its own Monte Carlo error is about 2.2% at
/// 1,000 experiments), no failed fit, mean bias within 1%, and the 95%
/// intervals covering the truth in 92.5%–97.5% of experiments (binomial
/// band of about ±3.5 SD around 95% at n = 1,000).
#[test]
fn fisher_prediction_agrees_with_simulation() {
    for noise in [Noise { kind: NoiseKind::Constant, level: 0.2 }, Noise { kind: NoiseKind::Proportional, level: 0.03 }] {
        let result = design(&mm_request(noise, 1000, 20261202)).unwrap();
        assert_eq!(result.recommended.concentrations, [1.0, 1.58, 2.51, 3.97, 6.29, 9.97, 15.8, 25.0]);
        let sim = result.recommended.simulated.as_ref().unwrap();
        assert_eq!(sim.failed, 0, "{noise:?}");
        for s in &sim.parameters {
            let fisher = predicted(&result, &s.name);
            let ratio = s.std_error.unwrap() / fisher;
            println!(
                "{noise:?} {}: Fisher SE {fisher:.5}, simulated SD {:.5} (ratio {ratio:.3}), median reported SE {:.5}, bias {:+.4}, coverage {:.3}",
                s.name,
                s.std_error.unwrap(),
                s.median_reported_se.unwrap(),
                s.relative_bias.unwrap(),
                s.coverage.unwrap()
            );
            assert!((ratio - 1.0).abs() < 0.10, "{noise:?} {}: ratio {ratio}", s.name);
            assert!(s.relative_bias.unwrap().abs() < 0.01, "{noise:?} {}: bias {:?}", s.name, s.relative_bias);
            let coverage = s.coverage.unwrap();
            assert!((0.925..=0.975).contains(&coverage), "{noise:?} {}: coverage {coverage}", s.name);
        }
    }
}

/// Designs (invented constants), each the recommended 8 concentrations
/// (10 for ic50) in duplicate, 1,000 simulated experiments, seed 20261202:
/// Hill (Vmax 10, K0.5 5, nH 2; proportional 3%), substrate inhibition
/// (Vmax 10, Km 5, Ksi 50; proportional 3%), logistic dose-response
/// (bottom 0, top 100, IC50 0.3, slope 1; constant SD 2). Wanted as above:
/// the spread of the estimates within 10% of the Fisher prediction, no
/// failed fit, coverage 92.5%–97.5%.
#[test]
fn fisher_prediction_agrees_for_the_other_single_series_models() {
    let cases = [
        ("hill", vec![guess("Vmax", 10.0), guess("K0.5", 5.0), guess("nH", 2.0)], Noise { kind: NoiseKind::Proportional, level: 0.03 }, 8),
        (
            "substrate-inhibition",
            vec![guess("Vmax", 10.0), guess("Km", 5.0), guess("Ksi", 50.0)],
            Noise { kind: NoiseKind::Proportional, level: 0.03 },
            8,
        ),
        (
            "ic50",
            vec![guess("floor", 0.0), guess("ceiling", 100.0), guess("IC50", 0.3), guess("steepness", 1.0)],
            Noise { kind: NoiseKind::Constant, level: 2.0 },
            10,
        ),
    ];
    for (model, guesses, noise, points) in cases {
        let request = DesignRequest { model: model.into(), guesses, noise, points, simulations: 1000, seed: 20261202, ..DesignRequest::default() };
        let result = design(&request).unwrap();
        let sim = result.recommended.simulated.as_ref().unwrap();
        assert_eq!(sim.failed, 0, "{model}");
        for s in &sim.parameters {
            let ratio = s.std_error.unwrap() / predicted(&result, &s.name);
            let coverage = s.coverage.unwrap();
            println!("{model} {}: simulated/predicted SE {ratio:.3}, coverage {coverage:.3}", s.name);
            assert!((ratio - 1.0).abs() < 0.10, "{model} {}: ratio {ratio}", s.name);
            assert!((0.925..=0.975).contains(&coverage), "{model} {}: coverage {coverage}", s.name);
        }
    }
}

/// Design: as above with proportional noise 5%, 400 simulated experiments,
/// seed 7. The person's design is 8 [S] from 0.02 to 0.5×Km (0.1 to 2.5 µM,
/// equal ratios): all below Km, where the curve is nearly a straight line
/// through the origin whose slope Vmax/Km is known but not Km. Wanted: its
/// Km error (predicted and simulated) at least twice the recommended
/// design's, and its chance of reaching Km to ±10% lower.
#[test]
fn spanning_the_curve_beats_staying_below_km() {
    let mut request = mm_request(Noise { kind: NoiseKind::Proportional, level: 0.05 }, 400, 7);
    let low: Vec<f64> = (0..8).map(|k| 0.1 * 25f64.powf(k as f64 / 7.0)).collect();
    request.proposed = Some(ProposedDesign { concentrations: low, inhibitor_concentrations: Vec::new() });
    request.target = Some(Target { parameter: "Km".into(), relative: 0.10, measure: TargetMeasure::Se });
    let result = design(&request).unwrap();
    let own = result.proposed.as_ref().unwrap();
    let km = |e: &turnover_core::design::DesignEvaluation| {
        let p = e.predicted.iter().find(|p| p.name == "Km").unwrap().std_error.unwrap();
        let s = e.simulated.as_ref().unwrap().parameters.iter().find(|p| p.name == "Km").unwrap().std_error.unwrap();
        (p, s)
    };
    let (rec_p, rec_s) = km(&result.recommended);
    let (own_p, own_s) = km(own);
    let probability = |e: &turnover_core::design::DesignEvaluation| e.simulated.as_ref().unwrap().target_probability.unwrap();
    println!(
        "Km SE predicted {rec_p:.3} vs {own_p:.3}, simulated {rec_s:.3} vs {own_s:.3}; P(±10%) {:.3} vs {:.3}; failed {} vs {}",
        probability(&result.recommended),
        probability(own),
        result.recommended.simulated.as_ref().unwrap().failed,
        own.simulated.as_ref().unwrap().failed
    );
    assert!(own_p > 2.0 * rec_p, "predicted {own_p} vs {rec_p}");
    assert!(own_s > 2.0 * rec_s, "simulated {own_s} vs {rec_s}");
    assert!(probability(&result.recommended) > probability(own));
    assert!(probability(&result.recommended) > 0.9, "{}", probability(&result.recommended));
}

/// The same request gives the same result bit for bit (the JSON text, which
/// prints every float to the last bit), and another seed a different one.
#[test]
fn the_same_seed_gives_the_same_simulation() {
    let mut request = mm_request(Noise { kind: NoiseKind::Proportional, level: 0.08 }, 50, 99);
    request.guesses[1].low = Some(2.0);
    request.guesses[1].high = Some(20.0);
    let a = serde_json::to_string(&design(&request).unwrap()).unwrap();
    let b = serde_json::to_string(&design(&request).unwrap()).unwrap();
    assert_eq!(a, b);
    request.seed = 100;
    let c = serde_json::to_string(&design(&request).unwrap()).unwrap();
    assert_ne!(a, c);
}

/// Reads a plate map back through the time-course layout reader and
/// returns (well, S, I) per well.
fn read_back(text: &str) -> Vec<(String, Option<f64>, Option<f64>)> {
    let mut problems = Vec::new();
    let cells = read_layout_cells(text, &mut problems).unwrap();
    assert!(problems.is_empty(), "{problems:?}");
    assert!(cells.plate_map);
    let column = |name: &str| cells.headings.iter().position(|h| h.name == name);
    let (s, i) = (column("S"), column("I"));
    cells
        .entries
        .iter()
        .map(|e| {
            let value = |c: Option<usize>| c.and_then(|c| e.cells[c].as_ref()).map(|p| p.text.parse::<f64>().unwrap());
            (e.name.text.clone(), value(s), value(i))
        })
        .collect()
}

/// Plate maps of an mm design (16 wells), a competitive design (8 [S] × 4
/// [I] × 2 = 64 wells, one series a row), an ic50 series, and a design too
/// wide for a row of 12 (20 [S] × 3 = 60 wells, filled row by row) and one
/// needing a 384-well plate (24 [S] × 2 × 4 [I] = 192): every well reads
/// back through the layout reader with its concentrations.
#[test]
fn plate_maps_read_back_through_the_layout_reader() {
    let competitive = DesignRequest {
        model: "competitive".into(),
        guesses: vec![guess("Vmax", 10.0), guess("Km", 5.0), guess("Kic", 2.0)],
        simulations: 0,
        substrate_unit: Some("µM".into()),
        inhibitor_unit: Some("nM".into()),
        ..DesignRequest::default()
    };
    let ic50 = DesignRequest {
        model: "ic50".into(),
        guesses: vec![guess("floor", 0.0), guess("ceiling", 100.0), guess("IC50", 0.3), guess("steepness", 1.0)],
        noise: Noise { kind: NoiseKind::Constant, level: 3.0 },
        points: 10,
        simulations: 0,
        inhibitor_unit: Some("µM".into()),
        ..DesignRequest::default()
    };
    let wide = DesignRequest { points: 20, replicates: 3, ..mm_request(Noise { kind: NoiseKind::Constant, level: 0.2 }, 0, 1) };
    let big = DesignRequest { points: 24, replicates: 2, ..competitive.clone() };
    for (request, wells, plate) in [
        (mm_request(Noise { kind: NoiseKind::Constant, level: 0.2 }, 0, 1), 16, 96),
        (competitive, 64, 96),
        (ic50, 20, 96),
        (wide, 60, 96),
        (big, 192, 384),
    ] {
        let result = design(&request).unwrap();
        let map = result.plate_map.as_ref().unwrap();
        assert_eq!(map.rows * map.columns, plate, "{}", request.model);
        assert_eq!(map.wells.len(), wells);
        let back = read_back(&map.text);
        assert_eq!(back.len(), wells, "{}", map.text);
        for (w, (name, s, i)) in map.wells.iter().zip(&back) {
            assert_eq!((&w.name, w.s, w.i), (name, *s, *i));
        }
        // Every condition appears `replicates` times.
        let r = &result.recommended;
        let conditions = r.concentrations.len() * r.inhibitor_concentrations.len().max(1);
        assert_eq!(conditions * request.replicates, wells);
    }
}

/// Pipetting: a competitive design (Km 5 µM, Kic 2 nM guessed: [S] 1–25
/// µM, [I] 0, 1–8 nM) in 200 µL wells with 20 µL of enzyme, from a 10 mM
/// (10,000 µM) substrate stock and a 10 µM (10,000 nM) inhibitor stock:
/// 1 µM needs 0.02 µL of stock, so dilutions are needed. Wanted: every
/// well's volumes add up to 200 µL; every well's concentration, volume ×
/// source concentration / 200 µL, is the target (1e-12 relative); every
/// volume pipetted is at least 0.5 µL; every dilution is made in at least
/// the amount the wells and the next dilution take, plus 20%; and the CSV
/// rows say the same to 0.001 µL.
#[test]
fn pipetting_volumes_add_up_and_give_the_concentrations() {
    let request = DesignRequest {
        model: "competitive".into(),
        guesses: vec![guess("Vmax", 10.0), guess("Km", 5.0), guess("Kic", 2.0)],
        simulations: 0,
        substrate_unit: Some("µM".into()),
        inhibitor_unit: Some("nM".into()),
        bench: Some(BenchRequest {
            substrate_stock: Some(10_000.0),
            inhibitor_stock: Some(10_000.0),
            well_volume: 200.0,
            min_volume: 0.5,
            other_volume: 20.0,
            extra: 0.2,
        }),
        ..DesignRequest::default()
    };
    let result = design(&request).unwrap();
    let table = result.pipetting.as_ref().unwrap();
    assert!(!table.intermediates.is_empty());
    let concentration_of = |source: &str| -> f64 {
        if source.ends_with("stock") {
            10_000.0
        } else {
            table.intermediates.iter().find(|d| d.name == source).unwrap().concentration
        }
    };
    let mut drawn: std::collections::BTreeMap<String, f64> = Default::default();
    for row in &table.rows {
        let total = row.s_volume + row.i_volume + row.buffer_volume + row.other_volume;
        assert!((total - 200.0).abs() < 1e-9, "{row:?}");
        for (target, from, volume) in [(row.s, &row.s_from, row.s_volume), (row.i, &row.i_from, row.i_volume)] {
            let target = target.unwrap();
            if target == 0.0 {
                assert_eq!(volume, 0.0);
                continue;
            }
            assert!(volume >= 0.5, "{row:?}");
            let made = volume * concentration_of(from) / 200.0;
            assert!((made / target - 1.0).abs() < 1e-12, "{row:?}: {made} for {target}");
            *drawn.entry(from.clone()).or_default() += volume;
        }
    }
    for d in &table.intermediates {
        assert!(d.source_volume >= 0.5);
        assert!((d.source_volume * concentration_of(&d.made_from) / (d.source_volume + d.buffer_volume) / d.concentration - 1.0).abs() < 1e-12);
        let taken_by_next: f64 = table.intermediates.iter().filter(|e| e.made_from == d.name).map(|e| e.source_volume).sum();
        let need = drawn.get(&d.name).copied().unwrap_or(0.0) * 1.2 + taken_by_next;
        assert!(d.source_volume + d.buffer_volume >= need - 1e-9, "{d:?} needs {need}");
    }
    println!("{}{}", table.intermediates_csv, table.csv);
    for (line, row) in table.csv.lines().skip(1).zip(&table.rows) {
        let cells: Vec<&str> = line.split(',').collect();
        assert_eq!(cells[0], row.well);
        let sum: f64 = [4, 6, 7, 8].iter().map(|&c| cells[c].parse::<f64>().unwrap()).sum();
        assert!((sum - 200.0).abs() <= 0.002, "{line}");
    }
}

/// Design: competitive inhibition, Vmax = 10, Km = 5 µM, Kic = 2 µM; the
/// recommended 8 [S] × ([I] = 0 and 3 levels from 1 to 8 µM) in duplicate
/// (64 wells); proportional noise 5%; 200 simulated experiments, seed 11.
/// Wanted: the comparison names competitive in at least 80% and another
/// mechanism in at most 5% (the F test's false rejections are about 5% of
/// experiments, and those become "undecided" or mixed); the figure is
/// printed. The same experiments check the Fisher prediction for a global
/// fit: the spread of each constant within 15% of it (at 200 experiments
/// the spread's own Monte Carlo error is about 5%).
#[test]
fn a_good_inhibition_design_identifies_the_mechanism() {
    let request = DesignRequest {
        model: "competitive".into(),
        guesses: vec![guess("Vmax", 10.0), guess("Km", 5.0), guess("Kic", 2.0)],
        noise: Noise { kind: NoiseKind::Proportional, level: 0.05 },
        simulations: 200,
        seed: 11,
        ..DesignRequest::default()
    };
    let result = design(&request).unwrap();
    let check = result.recommended.mechanism.as_ref().unwrap();
    println!("competitive, recommended design: {check:?}");
    assert_eq!(check.n_simulations, 200);
    assert!(check.correct >= 0.80, "{check:?}");
    assert!(check.wrong <= 0.05, "{check:?}");
    assert_eq!(check.failed, 0.0);
    for s in &result.recommended.simulated.as_ref().unwrap().parameters {
        let ratio = s.std_error.unwrap() / predicted(&result, &s.name);
        println!("competitive {}: simulated/predicted SE {ratio:.3}", s.name);
        assert!((ratio - 1.0).abs() < 0.15, "{}: {ratio}", s.name);
    }
}

/// The core's comparison of mechanisms on simulated data names the same
/// mechanism with the same sums of squares as the inhibition analysis of
/// the same rates written as a table (invented truth: mixed, Vmax 10, Km
/// 5, Kic 2, Kiu 6; proportional noise 5%; 20 data sets, seed 5; rates
/// written with 17 significant digits, which read back exactly).
#[test]
fn mechanism_comparison_matches_the_inhibition_analysis() {
    let model = model_by_name("mixed").unwrap();
    let truth = [10.0, 5.0, 2.0, 6.0];
    let mut rng = SplitMix64::new(5);
    let s_levels = [1.0, 2.0, 4.0, 8.0, 16.0, 25.0];
    let i_levels = [0.0, 1.0, 3.0, 8.0];
    for weighting in [Weighting::Uniform, Weighting::Relative] {
        for _ in 0..10 {
            let mut text = String::from("[S] (µM)\t[I] (µM)\tv (µM/min)\n");
            let (mut x, mut y) = (Vec::new(), Vec::new());
            for &i in &i_levels {
                for &s in &s_levels {
                    let f = model.value(&[s, i], &truth);
                    let v: f64 = format!("{:.16e}", f * (1.0 + 0.05 * rng.normal())).parse().unwrap();
                    text.push_str(&format!("{s}\t{i}\t{v:.16e}\n"));
                    x.extend([s, i]);
                    y.push(v);
                }
            }
            let analysis = analyse_inhibition(&InhibitionRequest { text, weighting, ..InhibitionRequest::default() }).unwrap();
            let weights = weighting.weights_without_sd(&y).unwrap();
            let data = Observations::new(2, x, y, weights).unwrap();
            let (fits, comparison) = turnover_core::design::compare_mechanisms(&data, weighting).unwrap();
            assert_eq!(comparison.preferred, analysis.comparison.preferred);
            for (m, fit) in &fits {
                let theirs = analysis.fits.iter().find(|f| f.model == m.name()).unwrap();
                assert_eq!(fit.summary.rss, theirs.rss, "{}", m.name());
            }
            assert_eq!(fits.len(), Mechanism::ALL.len());
        }
    }
}

/// Bad requests are refused with a sentence, never a panic.
#[test]
fn bad_requests_are_refused_with_a_sentence() {
    let base = mm_request(Noise { kind: NoiseKind::Constant, level: 0.2 }, 0, 1);
    let check = |request: DesignRequest, expected: &str| {
        let error = design(&request).unwrap_err();
        assert!(error.message.contains(expected), "{}", error.message);
    };
    check(DesignRequest { guesses: vec![guess("Km", 5.0)], ..base.clone() }, "missing Vmax");
    check(DesignRequest { guesses: vec![guess("Vmax", 10.0), guess("Kx", 5.0)], ..base.clone() }, "'Kx' is not a constant of mm");
    check(DesignRequest { model: "morrison".into(), ..base.clone() }, "Morrison");
    check(DesignRequest { wells: Some(10), ..base.clone() }, "needs 16 wells");
    check(DesignRequest { points: 48, replicates: 48, ..base.clone() }, "more than the 1536");
    check(
        DesignRequest { bench: Some(BenchRequest { substrate_stock: Some(100.0), min_volume: 200.0, well_volume: 100.0, ..BenchRequest::default() }), ..base.clone() },
        "leaves no room",
    );
    check(DesignRequest { noise: Noise { kind: NoiseKind::Constant, level: -1.0 }, ..base.clone() }, "noise level");
    let mut out_of_range = base.clone();
    out_of_range.guesses[1] = Guess { name: "Km".into(), value: 5.0, low: Some(10.0), high: Some(20.0) };
    check(out_of_range, "outside its range");
    check(
        DesignRequest { proposed: Some(ProposedDesign { concentrations: vec![1.0, 1.0], inhibitor_concentrations: vec![] }), ..base.clone() },
        "1 distinct concentration",
    );
    check(DesignRequest { target: Some(Target { parameter: "Ki".into(), relative: 0.1, measure: TargetMeasure::Se }), ..base }, "target 'Ki'");
    // A misspelt field of the page's JSON is refused, not left at its default.
    let error = serde_json::from_str::<DesignRequest>(r#"{"guesses": [], "simulation": 50}"#).unwrap_err();
    assert!(error.to_string().contains("unknown field `simulation`"), "{error}");
    let request: DesignRequest = serde_json::from_str(
        r#"{"model": "mm", "guesses": [{"name": "Vmax", "value": 10}, {"name": "Km", "value": 5, "low": 2, "high": 20}], "noise": {"kind": "constant", "level": 0.2}, "simulations": 0}"#,
    )
    .unwrap();
    assert_eq!(design(&request).unwrap().recommended.concentrations.len(), 8);
}

/// The longer study behind the figures in the report (not in the normal
/// run: about 10 s in release, minutes unoptimised): every inhibition
/// mechanism, Vmax 10, Km 5, inhibition constants 2 (mixed: Kic 2, Kiu 6),
/// proportional noise 5%, the recommended 8 [S] × 4 [I] in duplicate,
/// 1,000 experiments, seed 20261202. Measured when written: the mechanism
/// named correctly in 93.5% (competitive), 92.7% (uncompetitive), 87.4%
/// (noncompetitive) and 100% (mixed) of experiments; every spread within
/// 5% of the Fisher prediction. Wanted: at least 80% correct and every
/// spread within 10%. Run with
/// `cargo test --release -p turnover-tests --test design -- --ignored --nocapture`.
#[test]
#[ignore]
fn every_mechanism_long_study() {
    let cases: [(&str, &[(&str, f64)]); 4] = [
        ("competitive", &[("Vmax", 10.0), ("Km", 5.0), ("Kic", 2.0)]),
        ("uncompetitive", &[("Vmax", 10.0), ("Km", 5.0), ("Kiu", 2.0)]),
        ("noncompetitive", &[("Vmax", 10.0), ("Km", 5.0), ("Ki", 2.0)]),
        ("mixed", &[("Vmax", 10.0), ("Km", 5.0), ("Kic", 2.0), ("Kiu", 6.0)]),
    ];
    for (model, constants) in cases {
        let request = DesignRequest {
            model: model.into(),
            guesses: constants.iter().map(|(n, v)| guess(n, *v)).collect(),
            noise: Noise { kind: NoiseKind::Proportional, level: 0.05 },
            simulations: 1000,
            seed: 20261202,
            ..DesignRequest::default()
        };
        let result = design(&request).unwrap();
        let check = result.recommended.mechanism.as_ref().unwrap();
        println!("{model}: {check:?}");
        assert!(check.correct >= 0.80, "{check:?}");
        for s in &result.recommended.simulated.as_ref().unwrap().parameters {
            let ratio = s.std_error.unwrap() / predicted(&result, &s.name);
            println!("  {}: simulated/predicted SE {ratio:.3}", s.name);
            assert!((ratio - 1.0).abs() < 0.10, "{model} {}: {ratio}", s.name);
        }
    }
}
