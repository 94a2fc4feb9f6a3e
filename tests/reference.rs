//! Reference checks of Turnover's fitting against sources outside the
//! project. Each check names its source beside it.

use turnover_core::fit::{fit_model, FitSettings};
use turnover_core::model::gradient_disagreement;
use turnover_core::rates::{analyse_rates, RateRequest};
use turnover_tests::{lre, nist_model, read_nist, NIST_PROBLEMS};

/// Agreement to `figures` significant figures: the two values round to the
/// same number at that precision.
fn same_significant_figures(found: f64, expected: f64, figures: i32) -> bool {
    let magnitude = expected.abs().log10().floor() as i32;
    let unit = 10f64.powi(magnitude - figures + 1);
    (found / unit).round() == (expected / unit).round()
}

/// Puromycin, treated cells: Treloar (1974), as published in Bates & Watts
/// (1988), *Nonlinear Regression Analysis and Its Applications*, and in R's
/// `datasets::Puromycin`. Concentration in ppm, rate in counts/min².
/// Published least-squares results (Bates & Watts; R `nls` gives the same):
/// Vmax = 212.68 (SE 6.947), Km = 0.06412 (SE 0.008281), residual standard
/// error 10.93 on 10 degrees of freedom.
const PUROMYCIN_TREATED: &str = "\
# Puromycin, treated cells (Treloar 1974; Bates & Watts 1988; R datasets::Puromycin)
conc\trate
0.02\t76
0.02\t47
0.06\t97
0.06\t107
0.11\t123
0.11\t139
0.22\t159
0.22\t152
0.56\t191
0.56\t201
1.10\t207
1.10\t200
";

#[test]
fn puromycin_treated_matches_the_published_fit() {
    let analysis = analyse_rates(&RateRequest { text: PUROMYCIN_TREATED.into(), ..RateRequest::default() }).unwrap();
    let fit = &analysis.fit;
    assert!(fit.converged);
    let vmax = &fit.parameters[0];
    let km = &fit.parameters[1];
    let checks = [
        ("Vmax", vmax.value, 212.68),
        ("SE(Vmax)", vmax.std_error.unwrap(), 6.947),
        ("Km", km.value, 0.06412),
        ("SE(Km)", km.std_error.unwrap(), 0.008281),
        ("residual SE", fit.sigma.unwrap(), 10.93),
    ];
    for (what, found, expected) in checks {
        assert!(same_significant_figures(found, expected, 4), "{what}: found {found}, published {expected}");
    }
    assert_eq!(fit.dof, 10);
}

/// Fits one NIST problem from one starting point and returns the smallest
/// LRE of the parameters and of the standard errors, printing each.
fn nist_lre(name: &str, start_index: usize) -> (f64, f64) {
    let problem = read_nist(name);
    let model = nist_model(name);
    let start = if start_index == 1 { &problem.start1 } else { &problem.start2 };
    let fit = fit_model(&model, &problem.observations(), Some(start), &FitSettings::default()).unwrap();
    let mut worst_value: f64 = 11.0;
    let mut worst_se: f64 = 11.0;
    let mut line = format!("{name:<9} start {start_index}  {:<5}", if fit.summary.converged { "conv" } else { "FAIL" });
    for (j, estimate) in fit.summary.parameters.iter().enumerate() {
        let value_lre = lre(estimate.value, problem.certified[j]);
        let se_lre = estimate.std_error.map_or(0.0, |se| lre(se, problem.certified_sd[j]));
        worst_value = worst_value.min(value_lre);
        worst_se = worst_se.min(se_lre);
        line.push_str(&format!(" b{}:{value_lre:4.1}/{se_lre:4.1}", j + 1));
    }
    line.push_str(&format!("  rss:{:4.1}", lre(fit.summary.rss, problem.certified_rss)));
    println!("{line}");
    (worst_value, worst_se)
}

/// The bar: parameters to an LRE of 6 and standard errors to 4.
const VALUE_BAR: f64 = 6.0;
const SE_BAR: f64 = 4.0;

/// NIST StRD nonlinear regression (public domain): certified values and
/// standard deviations, from both of NIST's starting points. The table
/// printed is `parameter LRE / standard-error LRE` for each parameter.
fn check_nist(names: &[&str]) {
    println!("NIST StRD log relative errors (value/SE), bar {VALUE_BAR}/{SE_BAR}");
    let mut failures = Vec::new();
    for name in names {
        for start in [1, 2] {
            let (value, se) = nist_lre(name, start);
            if value < VALUE_BAR || se < SE_BAR {
                failures.push(format!("{name} start {start}: value LRE {value:.1}, SE LRE {se:.1}"));
            }
        }
    }
    assert!(failures.is_empty(), "below the bar:\n{}", failures.join("\n"));
}

#[test]
fn nist_strd_lower_and_average_difficulty_and_mgh09() {
    check_nist(&["Misra1a", "DanWood", "Chwirut2", "BoxBOD", "MGH09"]);
}

#[test]
fn nist_strd_all_sixteen() {
    check_nist(&NIST_PROBLEMS);
}

/// Every analytic NIST gradient agrees with central finite differences, at
/// the certified values and at both starting points.
#[test]
fn nist_gradients_match_finite_differences() {
    for name in NIST_PROBLEMS {
        let problem = read_nist(name);
        let model = nist_model(name);
        for p in [&problem.certified, &problem.start1, &problem.start2] {
            let worst = gradient_disagreement(&model, &problem.observations(), p);
            assert!(worst < 1e-5, "{name} at {p:?}: relative disagreement {worst}");
        }
    }
}

