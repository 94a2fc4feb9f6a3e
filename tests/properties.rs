//! Property tests: random models, parameters, noise and designs.
//!
//! - no input makes the table reader or the rate analysis panic, and every
//!   unreadable cell is named by a problem with its line and column;
//! - no result of a rate or dose-response fit holds a non-finite number (a
//!   value that cannot be computed is `None`);
//! - a converged fit is a stationary point: the residual vector is
//!   orthogonal to every column of the Jacobian (the cosine MINPACK's gtol
//!   test measures; Moré, Garbow & Hillstrom 1980, from memory);
//! - the same data written in nM, µM or M give the same constants,
//!   converted (unit invariance: a fact of the arithmetic, no source);
//! - the reader of v's unit never panics, reads every spelling of every
//!   specific-activity unit it documents as the same unit, and reads its
//!   own written form back.
//!
//! Designs and noise come from proptest's strategies; the noise itself is
//! drawn from the core's SplitMix64 seeded by a proptest value, so every
//! failing case is reproducible from what proptest prints. Case counts keep
//! the whole file under a second in a release build (measured 2026-12).

use proptest::prelude::*;
use turnover_core::fit::{fit_model, FitSettings, FitSummary};
use turnover_core::model::Observations;
use turnover_core::models::{model_with_options, ModelOptions};
use turnover_core::random::SplitMix64;
use turnover_core::rates::{analyse_rates, RateRequest};
use turnover_core::table::parse_table;

/// Every number of a fit record is finite (or absent).
fn assert_finite(summary: &FitSummary, context: &str) {
    let finite = |v: Option<f64>, what: &str| {
        if let Some(v) = v {
            assert!(v.is_finite(), "{context}: {what} = {v}");
        }
    };
    finite(Some(summary.rss), "rss");
    finite(summary.sigma, "sigma");
    finite(summary.r_squared, "R²");
    finite(summary.aicc, "AICc");
    for p in &summary.parameters {
        finite(Some(p.value), &p.name);
        finite(p.std_error, &format!("SE of {}", p.name));
        finite(p.ci_low, &format!("lower bound of {}", p.name));
        finite(p.ci_high, &format!("upper bound of {}", p.name));
    }
    for row in &summary.correlation {
        for c in row {
            finite(*c, "a correlation");
        }
    }
}

/// A rate table from `s` and `v` with the given header units and scale.
fn table(s: &[f64], v: &[f64], s_unit: &str, v_unit: &str, scale: f64) -> String {
    let mut text = format!("[S] ({s_unit})\tv ({v_unit})\n");
    for (a, b) in s.iter().zip(v) {
        text.push_str(&format!("{:e}\t{:e}\n", a * scale, b * scale));
    }
    text
}

/// A design: `n` concentrations log-spaced over `span` decades centred
/// (in log) at `centre`·Km, each measured `replicates` times.
fn design(km: f64, centre: f64, span: f64, n: usize, replicates: usize) -> Vec<f64> {
    let low = (km * centre).log10() - span / 2.0;
    let mut s = Vec::new();
    for k in 0..n {
        let value = 10f64.powf(low + span * k as f64 / (n - 1).max(1) as f64);
        s.extend(std::iter::repeat_n(value, replicates));
    }
    s
}

/// Rates from `model` at `s` with proportional normal noise of size `cv`.
fn rates(model: &str, p: &[f64], s: &[f64], cv: f64, seed: u64) -> Vec<f64> {
    let model = model_with_options(model, &ModelOptions::default()).unwrap();
    let mut noise = SplitMix64::new(seed);
    s.iter().map(|&x| model.value(&[x], p) * (1.0 + cv * noise.normal())).collect()
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 1000, ..ProptestConfig::default() })]

    /// Arbitrary text from the characters tables are made of: the reader
    /// never panics, and each unread cell has a problem at its place.
    #[test]
    fn table_reader_names_every_unread_cell(text in "[0-9a-z.,;\t \"#/!?\\-+eE\r\nµ−]{0,200}") {
        let table = parse_table(&text);
        for row in &table.rows {
            for (index, cell) in row.cells.iter().enumerate() {
                if cell.is_none() {
                    prop_assert!(
                        table.problems.iter().any(|p| p.line == row.line && p.column == Some(index + 1)),
                        "line {} column {} unread without a problem in {:?}", row.line, index + 1, text
                    );
                }
            }
        }
        // The whole rate analysis on the same text returns a value or an
        // error, never a panic.
        let _ = analyse_rates(&RateRequest { text: text.clone(), ..RateRequest::default() });
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    /// Random Michaelis-Menten data sets, including awkward designs (all
    /// [S] far above or below Km, very small or large magnitudes, heavy
    /// noise): the analysis never panics and never reports a non-finite
    /// number.
    #[test]
    fn rate_analysis_reports_only_finite_numbers(
        vmax_log in -12.0f64..12.0,
        km_log in -12.0f64..12.0,
        centre_log in -3.0f64..3.0,
        span in 0.0f64..4.0,
        n in 1usize..12,
        replicates in 1usize..3,
        cv in 0.0f64..0.5,
        seed in any::<u64>(),
        weighting in 0usize..3,
    ) {
        let (vmax, km) = (10f64.powf(vmax_log), 10f64.powf(km_log));
        let s = design(km, 10f64.powf(centre_log), span, n, replicates);
        let v = rates("mm", &[vmax, km], &s, cv, seed);
        let mut request = RateRequest { text: table(&s, &v, "µM", "µM/min", 1.0), ..RateRequest::default() };
        request.weighting = turnover_core::weighting::Weighting::ALL[weighting];
        if let Ok(analysis) = analyse_rates(&request) {
            assert_finite(&analysis.fit, &request.text);
            for point in analysis.points.iter().filter(|p| !p.excluded) {
                prop_assert!(point.fitted.is_finite() && point.residual.is_finite(), "{:?}", point);
            }
        }
    }

    /// Random inhibitor series (ic50 model: bottom, top, IC50, slope) with
    /// awkward designs and heavy noise: never a panic, never a non-finite
    /// number.
    #[test]
    fn dose_analysis_reports_only_finite_numbers(
        ic50_log in -9.0f64..3.0,
        slope in 0.3f64..4.0,
        top in 1.0f64..200.0,
        bottom_fraction in -0.2f64..0.5,
        centre_log in -2.0f64..2.0,
        span in 0.0f64..5.0,
        n in 1usize..14,
        cv in 0.0f64..0.4,
        seed in any::<u64>(),
    ) {
        let ic50 = 10f64.powf(ic50_log);
        let p = [bottom_fraction * top, top, ic50, slope];
        let i = design(ic50, 10f64.powf(centre_log), span, n, 1);
        let y = rates("ic50", &p, &i, cv, seed);
        let mut text = String::from("[I] (µM)\tresponse\n");
        for (a, b) in i.iter().zip(&y) {
            text.push_str(&format!("{a:e}\t{b:e}\n"));
        }
        let request = turnover_core::dose::DoseRequest { text, model: "ic50".into(), ..Default::default() };
        if let Ok(analysis) = turnover_core::dose::analyse_dose(&request) {
            assert_finite(&analysis.fit, &request.text);
        }
    }

    /// A converged fit of mm, hill or substrate-inhibition is a stationary
    /// point of the sum of squares: for every parameter, the cosine between
    /// the residuals and that parameter's Jacobian column is below 1e-6.
    #[test]
    fn converged_fits_are_stationary(
        which in 0usize..3,
        vmax_log in -3.0f64..3.0,
        km_log in -3.0f64..3.0,
        extra in 0.5f64..2.5,
        n in 8usize..20,
        cv in 0.01f64..0.2,
        seed in any::<u64>(),
    ) {
        let (vmax, km) = (10f64.powf(vmax_log), 10f64.powf(km_log));
        let (name, p) = match which {
            0 => ("mm", vec![vmax, km]),
            1 => ("hill", vec![vmax, km, extra]),
            _ => ("substrate-inhibition", vec![vmax, km, km * 10.0 * extra]),
        };
        let s = design(km, 1.0, 3.0, n, 1);
        let v = rates(name, &p, &s, cv, seed);
        let model = model_with_options(name, &ModelOptions::default()).unwrap();
        let data = Observations::single(&s, &v).unwrap();
        let Ok(fit) = fit_model(model.as_ref(), &data, None, &FitSettings::default()) else { return Ok(()) };
        assert_finite(&fit.summary, name);
        if !fit.summary.converged {
            return Ok(());
        }
        let estimate = fit.values();
        let residuals: Vec<f64> = s.iter().zip(&v).map(|(x, y)| y - model.value(&[*x], estimate)).collect();
        let r_norm = residuals.iter().map(|r| r * r).sum::<f64>().sqrt();
        let mut columns = vec![vec![0.0; s.len()]; estimate.len()];
        let mut gradient = vec![0.0; estimate.len()];
        for (i, x) in s.iter().enumerate() {
            model.gradient(&[*x], estimate, &mut gradient);
            for j in 0..estimate.len() {
                columns[j][i] = gradient[j];
            }
        }
        for (j, column) in columns.iter().enumerate() {
            let c_norm = column.iter().map(|c| c * c).sum::<f64>().sqrt();
            let dot: f64 = column.iter().zip(&residuals).map(|(c, r)| c * r).sum();
            let cosine = dot.abs() / (c_norm * r_norm).max(f64::MIN_POSITIVE);
            prop_assert!(cosine < 1e-6, "{name} parameter {j}: cosine {cosine:e} at {estimate:?} ({})", fit.summary.termination_text);
        }
    }

    /// The same data written in µM, nM and M (rates in the same unit per
    /// minute) give Km and Vmax that agree after conversion to 1e-6
    /// relative, with the same relative standard errors.
    #[test]
    fn constants_do_not_depend_on_the_unit(
        vmax_log in -1.0f64..3.0,
        km_log in -1.0f64..3.0,
        n in 6usize..14,
        cv in 0.01f64..0.15,
        seed in any::<u64>(),
    ) {
        let (vmax, km) = (10f64.powf(vmax_log), 10f64.powf(km_log));
        let s = design(km, 1.0, 2.0, n, 1);
        let v = rates("mm", &[vmax, km], &s, cv, seed);
        let fit = |s_unit: &str, v_unit: &str, scale: f64| {
            analyse_rates(&RateRequest { text: table(&s, &v, s_unit, v_unit, scale), ..RateRequest::default() }).unwrap().fit
        };
        let micro = fit("µM", "µM/min", 1.0);
        for (s_unit, v_unit, scale) in [("nM", "nM/min", 1e3), ("M", "M/min", 1e-6), ("mM", "mM/min", 1e-3)] {
            let other = fit(s_unit, v_unit, scale);
            for (a, b) in micro.parameters.iter().zip(&other.parameters) {
                let expected = a.value * scale;
                prop_assert!((b.value - expected).abs() <= 1e-6 * expected.abs(), "{} in {s_unit}: {} vs {}", a.name, b.value, expected);
                if let (Some(sa), Some(sb)) = (a.std_error, b.std_error) {
                    let (ra, rb) = (sa / a.value.abs(), sb / b.value.abs());
                    prop_assert!((ra - rb).abs() <= 1e-5 * ra.abs().max(1e-12), "SE of {} in {s_unit}: {rb} vs {ra}", a.name);
                }
            }
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 1000, ..ProptestConfig::default() })]

    /// Any text: the unit readers answer (a unit or a sentence), never panic.
    #[test]
    fn unit_readers_never_panic(text in "[0-9a-zA-Z/ ()·⋅*⁻¹µμ%.\\-]{0,40}") {
        let _ = turnover_core::units::VUnit::parse(&text);
        let _ = turnover_core::units::SpecificRateUnit::parse(&text);
    }

    /// Every amount, time and mass, in each documented spelling (slashes in
    /// either order, a bracketed divisor, exponents -1 or ⁻¹ with spaces or
    /// middle dots, a last word protein), reads as that unit; the written
    /// form reads back as the same unit; the factor is the product of its
    /// parts (by the definition of the units).
    #[test]
    fn specific_activity_spellings_read_alike(
        amount in 0usize..5,
        time in 0usize..3,
        mass in 0usize..3,
        form in 0usize..6,
        protein in any::<bool>(),
        micro in prop_oneof![Just("µ"), Just("μ"), Just("u")],
    ) {
        use turnover_core::units::{AmountUnit, MassUnit, SpecificRateUnit, TimeUnit, VUnit};
        let amounts = [("mol", AmountUnit::Mole), ("mmol", AmountUnit::Millimole), ("MICROmol", AmountUnit::Micromole), ("nmol", AmountUnit::Nanomole), ("pmol", AmountUnit::Picomole)];
        let times = [("s", TimeUnit::Second), ("min", TimeUnit::Minute), ("h", TimeUnit::Hour)];
        let masses = [("g", MassUnit::Gram), ("mg", MassUnit::Milligram), ("MICROg", MassUnit::Microgram)];
        let (a, t, m) = (amounts[amount].0.replace("MICRO", micro), times[time].0, masses[mass].0.replace("MICRO", micro));
        let text = match form {
            0 => format!("{a}/{t}/{m}"),
            1 => format!("{a}/{m}/{t}"),
            2 => format!("{a}/({t}·{m})"),
            3 => format!("{a} {t}-1 {m}-1"),
            4 => format!("{a}·{t}⁻¹·{m}⁻¹"),
            _ => format!("{a} / {t} / {m}"),
        };
        let text = if protein { format!("{text} protein") } else { text };
        let expected = SpecificRateUnit { amount: amounts[amount].1, time: times[time].1, mass: masses[mass].1 };
        prop_assert_eq!(SpecificRateUnit::parse(&text), Ok(expected), "{}", text);
        prop_assert_eq!(VUnit::parse(&text), Ok(VUnit::Specific(expected)), "{}", text);
        prop_assert_eq!(SpecificRateUnit::parse(&expected.symbol()), Ok(expected));
        let factor = expected.amount.in_moles() / expected.time.in_seconds() / expected.mass.in_grams();
        prop_assert_eq!(expected.in_mol_per_second_per_gram(), factor);
    }
}
