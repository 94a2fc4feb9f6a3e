//! Comparing models fitted to the same data.
//!
//! [`compare_fits`] ranks any set of fits by AICc with Akaike weights
//! (Burnham & Anderson 2002, sec. 2.9, from memory), runs the
//! extra-sum-of-squares F test for every nested pair in the set, and states
//! a verdict in words with the numbers behind it.
//!
//! The F test compares a simpler model inside a more general one:
//! `F = ((RSS_s − RSS_g)/(dof_s − dof_g)) / (RSS_g/dof_g)` on
//! (dof_s − dof_g, dof_g) degrees of freedom (the extra-sum-of-squares
//! principle; Bates & Watts 1988, sec. 3.5, from memory). It is exact only
//! for models linear in the parameters and approximate otherwise.
//!
//! **The choice rule** (one for every analysis that compares nested
//! models: inhibition mechanisms, rate laws, pH limbs, two-substrate laws)
//! says when it cannot decide. The F test decides what the data reject
//! (p < 0.05, the conventional level; common practice, no source). A
//! special case nested in a general law lies either *inside* it (an
//! equality between constants: noncompetitive is mixed with Kic = Kiu,
//! Michaelis-Menten is Hill with nH = 1) or at a *boundary* of its physical
//! range ([`BOUNDARIES`]: ping-pong is sequential with KiA → 0, ordered with
//! KmA → 0, competitive is mixed with 1/Kiu → 0, uncompetitive with
//! 1/Kic → 0, Michaelis-Menten is substrate inhibition with 1/Ksi → 0, a
//! single pH limb is the bell with the other pKa → ±∞).
//!
//! - The general law is named when every special case is rejected against
//!   it.
//! - A special case that alone is not rejected is named when it lies at a
//!   boundary. Inside, AICc must also agree (its AICc below the general
//!   law's): failing to reject is not evidence for it, and where the two
//!   disagree (F between about 2 and the 5% point for one extra constant)
//!   the verdict is undecided.
//! - Otherwise (several special cases standing, or AICc disagreeing inside)
//!   the verdict is *undecided* and names the candidates with their Akaike
//!   weights. For rate laws, Michaelis-Menten is nested in two laws that are
//!   not nested in each other: a law that rejects it is named (the lower
//!   AICc when both do); otherwise Michaelis-Menten is named unless Hill
//!   (inside) has a lower AICc, which leaves it undecided.
//!
//! **At a boundary** the test is that of the *physically constrained*
//! general law: when the general fit puts the constant beyond its range
//! (KiA ≤ 0), the constrained fit is the special case itself, so the test
//! does not reject (`FTest::outside`). Under the special case the
//! constrained statistic is zero in about half of the data sets, and its
//! null distribution is a 50:50 mixture of zero and the usual distribution
//! (Self & Liang 1987, JASA 82:605, cited from memory). The usual p value is
//! kept, which makes the test conservative (about 2.5% false rejections at
//! the nominal 5%); the exact, halved p value was measured and rejected
//! (below). AICc is not asked at a boundary: its penalty of two per
//! constant is derived for a true value inside the parameter range (from
//! memory), the regularity that fails there, so it is no valid second
//! opinion; asking it there left 5–7% of true special cases "undecided".
//!
//! **Measured** (`tests/verdict.rs`, `-- --ignored`; 200 seeded data sets per truth, 5%
//! proportional noise, relative weights; right / undecided / wrong):
//!
//! | truth (design)                         | before: F and AICc | F alone, unconstrained | constrained, p halved | **this rule** |
//! |----------------------------------------|--------------------|------------------------|-----------------------|---------------|
//! | sequential (5 × 5 grid)                | 200 / 0 / 0        | 200 / 0 / 0            | 200 / 0 / 0           | 200 / 0 / 0   |
//! | ping-pong                              | 177 / 13 / 10      | 190 / 0 / 10           | 188 / 0 / 12          | 193 / 0 / 7   |
//! | ordered                                | 176 / 13 / 11      | 189 / 0 / 11           | 190 / 0 / 10          | 194 / 0 / 6   |
//! | sequential, KmA = 0.075×KiA            | 193 / 4 / 3        | 193 / 0 / 7            | 197 / 0 / 3           | 193 / 0 / 7   |
//! | competitive (tests/models.rs)          | 179 / 13 / 8       | 192 / 0 / 8            | 185 / 0 / 15          | 192 / 0 / 8   |
//! | uncompetitive                          | 189 / 10 / 1       | 199 / 0 / 1            | 196 / 0 / 4           | 199 / 0 / 1   |
//! | mixed, Kiu = 3×Kic                     | 200 / 0 / 0        | 200 / 0 / 0            | 200 / 0 / 0           | 200 / 0 / 0   |
//! | mixed, Kiu = 1.5×Kic (little power)    | 154 / 20 / 26      | 154 / 0 / 46           | 154 / 0 / 46          | 154 / 20 / 26 |
//! | mixed, Kiu = 20×Kic (little power)     | 194 / 5 / 1        | 194 / 0 / 6            | 197 / 0 / 3           | 194 / 0 / 6   |
//! | Michaelis-Menten (9 [S], duplicates)   | 176 / 10 / 14      | 186 / 0 / 14           | 184 / 0 / 16          | 178 / 8 / 14  |
//! | substrate inhibition, Ksi = 200×Km     | 180 / 9 / 11       | 180 / 0 / 20           | 188 / 0 / 12          | 180 / 2 / 18  |
//! | pH, rising limb (14 pH values)         | 193 / 2 / 5        | 195 / 0 / 5            | 190 / 0 / 10          | 195 / 0 / 5   |
//! | pH, bell                               | 200 / 0 / 0        | 200 / 0 / 0            | 200 / 0 / 0           | 200 / 0 / 0   |
//!
//! Dropping AICc everywhere ("F alone") names noncompetitive for mixed data
//! with Kiu = 1.5×Kic in 46 of 200 sets, over the limit of 30 that
//! tests/models.rs sets; halving the p value at a boundary names mixed for
//! competitive data in 15 of 200, over the limit of 14, and ping-pong in
//! only 188. The cost of this rule is where a general law lies close to a
//! boundary and the data have little power: there the special case is
//! named wrongly more often than before (7 against 3, 6 against 1, 18
//! against 11 in the rows above) instead of "undecided". (A nested simpler
//! model's Akaike weight against its general model cannot exceed about
//! 0.75–0.8, so weights alone can never "support" it strongly; a rule of
//! AICc differences of 2 left 64–66 of 200 true special cases undecided.)

use crate::fit::{FitSummary, ParameterEstimate};
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, FisherSnedecor};

/// The significance level of the F test used by the verdict.
pub const SIGNIFICANCE: f64 = 0.05;

/// Akaike weights closer than this difference in AICc (2 units) count as
/// indistinguishable (common practice, no source).
pub const AICC_TIE: f64 = 2.0;

/// The nested pairs Turnover knows, as (simpler, general) machine names.
pub const NESTED_PAIRS: &[(&str, &str)] = &[
    ("competitive", "mixed"),
    ("uncompetitive", "mixed"),
    ("noncompetitive", "mixed"),
    ("mm", "substrate-inhibition"),
    ("mm", "hill"),
    // pH profiles: each single ionisation is the bell's limit as the other
    // pKa leaves the range (a boundary, so the test is approximate).
    ("rising-limb", "bell"),
    ("falling-limb", "bell"),
    // Two substrates: ordered (KmA → 0) and ping-pong (KiA → 0) inside the
    // general ternary-complex law.
    ("ordered", "sequential"),
    ("ping-pong", "sequential"),
];

/// A special case that is its general law with one constant at the edge of
/// the constant's physical range.
pub struct Boundary {
    /// The special case.
    pub simpler: &'static str,
    /// The general law.
    pub general: &'static str,
    /// The limit, in words.
    pub limit: &'static str,
    /// The general law's constant that must be positive, when a fit can
    /// put it on the impossible side; `None` when no finite value of the
    /// fit's parameters lies there (1/Kiu < 0 would need Kiu to pass
    /// through infinity, a pKa beyond ±∞ does not exist).
    pub positive: Option<&'static str>,
}

/// The nested pairs of [`NESTED_PAIRS`] whose special case lies at a
/// boundary; the others (noncompetitive in mixed: Kic = Kiu; mm in hill:
/// nH = 1) lie inside the general law's range.
pub const BOUNDARIES: &[Boundary] = &[
    Boundary { simpler: "competitive", general: "mixed", limit: "Kiu → ∞", positive: Some("Kiu") },
    Boundary { simpler: "uncompetitive", general: "mixed", limit: "Kic → ∞", positive: Some("Kic") },
    Boundary { simpler: "mm", general: "substrate-inhibition", limit: "Ksi → ∞", positive: Some("Ksi") },
    Boundary { simpler: "rising-limb", general: "bell", limit: "pKa2 → ∞", positive: None },
    Boundary { simpler: "falling-limb", general: "bell", limit: "pKa1 → −∞", positive: None },
    Boundary { simpler: "ordered", general: "sequential", limit: "KmA → 0", positive: Some("KmA") },
    Boundary { simpler: "ping-pong", general: "sequential", limit: "KiA → 0", positive: Some("KiA") },
];

fn boundary_of(simpler: &str, general: &str) -> Option<&'static Boundary> {
    BOUNDARIES.iter().find(|b| b.simpler == simpler && b.general == general)
}

/// Marks a test of a special case at a boundary: the limit, and whether the
/// general fit lies outside the physical range (then the test does not
/// reject).
fn at_boundary(mut test: FTest, general: &FitSummary) -> FTest {
    if let Some(b) = boundary_of(&test.simpler, &test.general) {
        test.boundary = Some(b.limit.to_string());
        test.outside = b.positive.is_some_and(|name| value_of(general, name).is_some_and(|v| v.is_nan() || v <= 0.0));
        test.rejects = test.p_value < SIGNIFICANCE && !test.outside;
    }
    test
}

/// Special cases nested in one general model, decided by the same rule:
/// the inhibition mechanisms in mixed, and the two-substrate special cases
/// in the ternary-complex law (ordered at KmA → 0, ping-pong at KiA → 0).
struct Family {
    /// The special cases.
    singles: &'static [&'static str],
    /// The general model that contains each of them.
    general: &'static str,
    /// What the general model's constants say, for the verdict.
    describe: fn(&FitSummary) -> String,
    /// What to measure when the data do not decide.
    advice: &'static str,
    /// What one special case is called in the verdict.
    kind: &'static str,
}

const FAMILIES: [Family; 3] = [
    Family {
        singles: &["competitive", "uncompetitive", "noncompetitive"],
        general: "mixed",
        describe: ratio_text,
        advice: "collect data at higher [I] and over a wider [S] range",
        kind: "single mechanism",
    },
    Family {
        singles: &["ordered", "ping-pong"],
        general: "sequential",
        describe: sequential_text,
        advice: "measure over wider ranges of [A] and [B], reaching below KmA and KmB",
        kind: "special case",
    },
    Family {
        singles: &["rising-limb", "falling-limb"],
        general: "bell",
        describe: pka_text,
        advice: "measure further into the limbs",
        kind: "single limb",
    },
];

fn pka_text(bell: &FitSummary) -> String {
    match (value_of(bell, "pKa1"), value_of(bell, "pKa2")) {
        (Some(a), Some(b)) if a.is_finite() && b.is_finite() => format!("pKa1 ≈ {a:.2}, pKa2 ≈ {b:.2}"),
        _ => "constants without physical meaning (check the data)".to_string(),
    }
}

fn sequential_text(sequential: &FitSummary) -> String {
    match (value_of(sequential, "KiA"), value_of(sequential, "KmA")) {
        (Some(kia), Some(kma)) if kia > 0.0 && kma > 0.0 => format!("KiA ≈ {}×KmA", short(kia / kma)),
        _ => "constants without physical meaning (check the data)".to_string(),
    }
}

/// One model's place in the ranking.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ModelScore {
    /// Machine name.
    pub model: String,
    /// Residual sum of squares.
    pub rss: f64,
    /// Residual degrees of freedom.
    pub dof: usize,
    /// AICc; `None` when too few points.
    pub aicc: Option<f64>,
    /// AICc minus the smallest AICc in the set.
    pub delta_aicc: Option<f64>,
    /// Akaike weight: the relative likelihood of the model within the set.
    pub akaike_weight: Option<f64>,
    /// Whether its fit converged.
    pub converged: bool,
    /// The fitted parameters.
    pub parameters: Vec<ParameterEstimate>,
}

/// A model the evidence leaves standing.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Candidate {
    /// Machine name.
    pub model: String,
    /// Its Akaike weight within the whole set.
    pub akaike_weight: Option<f64>,
}

/// One extra-sum-of-squares F test.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct FTest {
    /// The simpler model.
    pub simpler: String,
    /// The more general model that contains it.
    pub general: String,
    /// The F statistic (0 when the general fit is no better).
    pub f: f64,
    /// Numerator degrees of freedom (extra parameters).
    pub df_extra: usize,
    /// Denominator degrees of freedom (of the general model).
    pub df_general: usize,
    /// Probability of an F this large if the simpler model is true (the
    /// usual F distribution, also at a boundary; see the module
    /// documentation).
    pub p_value: f64,
    /// When the simpler model is the general one with a constant at the
    /// edge of its physical range, that limit in words (`KiA → 0`);
    /// `None` when it lies inside (an equality such as Kic = Kiu).
    pub boundary: Option<String>,
    /// The general fit puts that constant outside its physical range (zero
    /// or below): the physically possible general law nearest the data is
    /// then the simpler model itself, and the test does not reject it.
    pub outside: bool,
    /// Whether the verdict counts the simpler model as rejected:
    /// `p_value` < [`SIGNIFICANCE`] and not `outside`.
    pub rejects: bool,
}

/// The outcome of a comparison.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Comparison {
    /// Models by increasing AICc.
    pub models: Vec<ModelScore>,
    /// F tests for the nested pairs present.
    pub f_tests: Vec<FTest>,
    /// The model the choice rule names; `None` when the data do not decide
    /// (then `candidates` lists the models still standing).
    pub preferred: Option<String>,
    /// The models the evidence leaves standing, by decreasing Akaike
    /// weight: the preferred one alone when there is one, else the
    /// candidates the verdict names.
    pub candidates: Vec<Candidate>,
    /// The verdict in words, with its numbers.
    pub verdict: String,
}

/// The extra-sum-of-squares F test of `simpler` inside `general`; `None`
/// when the general model has no extra parameters or no residual freedom.
pub fn f_test(simpler: &FitSummary, general: &FitSummary) -> Option<FTest> {
    if simpler.dof <= general.dof || general.dof == 0 || simpler.n != general.n {
        return None;
    }
    let df_extra = simpler.dof - general.dof;
    let f = ((simpler.rss - general.rss) / df_extra as f64) / (general.rss / general.dof as f64);
    let f = if f.is_finite() { f.max(0.0) } else { return None };
    let p_value = FisherSnedecor::new(df_extra as f64, general.dof as f64).ok()?.sf(f);
    Some(FTest {
        simpler: simpler.model.clone(),
        general: general.model.clone(),
        f,
        df_extra,
        df_general: general.dof,
        p_value,
        boundary: None,
        outside: false,
        rejects: p_value < SIGNIFICANCE,
    })
}

fn value_of(summary: &FitSummary, name: &str) -> Option<f64> {
    summary.parameters.iter().find(|p| p.name == name).map(|p| p.value)
}

fn ratio_text(mixed: &FitSummary) -> String {
    match (value_of(mixed, "Kic"), value_of(mixed, "Kiu")) {
        (Some(kic), Some(kiu)) if kic > 0.0 && kiu > 0.0 => {
            if kiu >= kic {
                format!("Kiu ≈ {}×Kic", short(kiu / kic))
            } else {
                format!("Kic ≈ {}×Kiu", short(kic / kiu))
            }
        }
        _ => "constants without physical meaning (check the data)".to_string(),
    }
}

fn short(value: f64) -> String {
    if value >= 100.0 {
        format!("{value:.0}")
    } else if value >= 10.0 {
        format!("{value:.1}")
    } else {
        format!("{value:.2}").trim_end_matches('0').trim_end_matches('.').to_string()
    }
}

fn p_text(p: f64) -> String {
    if p < 1e-4 {
        "p < 0.0001".to_string()
    } else {
        format!("p = {:.*}", if p < 0.01 { 4 } else { 3 }, p)
    }
}

/// One test in words: F and p, and when the general fit lies outside the
/// physical range, what that means.
fn test_text(t: &FTest) -> String {
    let base = format!("F = {:.2}, {}", t.f, p_text(t.p_value));
    match boundary_of(&t.simpler, &t.general).and_then(|b| b.positive) {
        Some(constant) if t.outside && t.p_value < SIGNIFICANCE => format!(
            "{base}, but {} fits better only with {constant} ≤ 0, outside its physical range, so the nearest physically possible {} law is {} itself",
            t.general, t.general, t.simpler
        ),
        Some(constant) if t.outside => format!("{base}; {}'s {constant} ≤ 0, outside its physical range", t.general),
        _ => base,
    }
}

/// Ranks `fits` (all fitted to the same observations) and decides.
pub fn compare_fits(fits: &[FitSummary]) -> Comparison {
    let best_aicc = fits.iter().filter_map(|f| f.aicc).fold(f64::INFINITY, f64::min);
    let total: f64 = fits.iter().filter_map(|f| f.aicc).map(|a| (-(a - best_aicc) / 2.0).exp()).sum();
    let mut models: Vec<ModelScore> = fits
        .iter()
        .map(|f| ModelScore {
            model: f.model.clone(),
            rss: f.rss,
            dof: f.dof,
            aicc: f.aicc,
            delta_aicc: f.aicc.map(|a| a - best_aicc),
            akaike_weight: f.aicc.map(|a| (-(a - best_aicc) / 2.0).exp() / total),
            converged: f.converged,
            parameters: f.parameters.iter().filter(|p| !p.derived).cloned().collect(),
        })
        .collect();
    models.sort_by(|a, b| a.aicc.unwrap_or(f64::INFINITY).total_cmp(&b.aicc.unwrap_or(f64::INFINITY)));

    let find = |name: &str| fits.iter().find(|f| f.model == name);
    let f_tests: Vec<FTest> = NESTED_PAIRS
        .iter()
        .filter_map(|(s, g)| Some((find(s)?, find(g)?)))
        .filter_map(|(s, g)| Some(at_boundary(f_test(s, g)?, g)))
        .collect();
    let test_of = |s: &str, g: &str| f_tests.iter().find(|t| t.simpler == s && t.general == g);

    let (preferred, mut verdict, candidates) = decide(fits, &f_tests, &test_of, &find, &models);
    if let Some(weighting) = fits.first().map(|f| f.weighting.as_ref()).filter(|w| *w != "uniform") {
        // Weights recomputed from each model's own curve differ between
        // models; the analyses hold one set fixed, which shows as the same
        // number of reweighting rounds on every fit.
        if fits.iter().all(|f| f.reweighting_rounds == fits[0].reweighting_rounds) {
            verdict.push_str(&format!(" [every model fitted with the same {weighting} weights, so the sums of squares compare]"));
        } else {
            verdict.push_str(&format!(
                " [the {weighting} weights come from each model's own curve and differ between models, so the sums of squares compare only approximately]"
            ));
        }
    }
    Comparison { models, f_tests: f_tests.clone(), preferred, candidates, verdict }
}

type TestLookup<'a> = dyn Fn(&str, &str) -> Option<&'a FTest> + 'a;
type FitLookup<'a> = dyn Fn(&str) -> Option<&'a FitSummary> + 'a;

fn decide<'a>(
    fits: &'a [FitSummary],
    f_tests: &'a [FTest],
    test_of: &TestLookup<'a>,
    find: &FitLookup<'a>,
    models: &[ModelScore],
) -> (Option<String>, String, Vec<Candidate>) {
    if fits.is_empty() {
        return (None, "no models were fitted".to_string(), Vec::new());
    }
    let weight_of = |name: &str| models.iter().find(|m| m.model == name).and_then(|m| m.akaike_weight);
    let aicc_of = |name: &str| models.iter().find(|m| m.model == name).and_then(|m| m.aicc).unwrap_or(f64::INFINITY);
    let candidates_of = |names: &[String]| -> Vec<Candidate> {
        let mut c: Vec<Candidate> = names.iter().map(|n| Candidate { model: n.clone(), akaike_weight: weight_of(n) }).collect();
        c.sort_by(|a, b| b.akaike_weight.unwrap_or(0.0).total_cmp(&a.akaike_weight.unwrap_or(0.0)));
        c
    };
    let listed = |c: &[Candidate]| -> String {
        c.iter()
            .map(|c| format!("{} (Akaike weight {})", c.model, c.akaike_weight.map_or("—".to_string(), |w| format!("{w:.2}"))))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let one = |name: &str| vec![Candidate { model: name.to_string(), akaike_weight: weight_of(name) }];

    for family in &FAMILIES {
        let general_name = family.general;
        let singles: Vec<&FitSummary> = family.singles.iter().filter_map(|n| find(n)).collect();
        if !singles.is_empty() {
            let mut ranked = singles.clone();
            ranked.sort_by(|a, b| a.rss.total_cmp(&b.rss));
            let best = ranked[0];
            let Some(mixed) = find(general_name) else {
                // No general model to test against: AICc alone, and only a clear
                // lead names a mechanism.
                if let Some(second) = ranked.get(1) {
                    let gap = aicc_of(&second.model) - aicc_of(&best.model);
                    if !(gap >= AICC_TIE) {
                        let names: Vec<String> = ranked.iter().map(|f| f.model.clone()).collect();
                        let c = candidates_of(&names);
                        return (
                            None,
                            format!("undecided: {} fit about equally well (AICc differ by {gap:.1}); {}", listed(&c), family.advice),
                            c,
                        );
                    }
                    return (
                        Some(best.model.clone()),
                        format!("{} (AICc lower than {} by {gap:.1}; no {general_name} fit to test it against)", best.model, second.model),
                        one(&best.model),
                    );
                }
                return (Some(best.model.clone()), format!("{} (the only mechanism fitted)", best.model), one(&best.model));
            };
            let describe = family.describe;
            let kind = family.kind;
            // Every special case is nested in the general law: the F test
            // says which the data reject.
            let standing: Vec<&FitSummary> =
                ranked.iter().copied().filter(|f| test_of(&f.model, general_name).is_none_or(|t| !t.rejects)).collect();
            if standing.is_empty() {
                let test = test_of(&best.model, general_name).expect("a rejected single has its test");
                return (
                    Some(general_name.to_string()),
                    format!(
                        "{general_name}, with {} (the best {kind}, {}, is rejected: F = {:.2}, {})",
                        describe(mixed),
                        best.model,
                        test.f,
                        p_text(test.p_value)
                    ),
                    one(general_name),
                );
            }
            let not_rejected = |f: &FitSummary| test_of(&f.model, general_name).map_or_else(|| "no test".to_string(), test_text);
            let rejected: Vec<String> = ranked
                .iter()
                .filter(|f| !standing.iter().any(|s| s.model == f.model))
                .filter_map(|f| test_of(&f.model, general_name).map(|t| format!("{} {}", f.model, p_text(t.p_value))))
                .collect();
            let rejected_text =
                if rejected.is_empty() { String::new() } else { format!("; rejected against {general_name}: {}", rejected.join(", ")) };
            let survivor = standing[0];
            let limit = test_of(&survivor.model, general_name).and_then(|t| t.boundary.clone());
            // The choice rule (module documentation): a special case that
            // alone survives the F test is named when it lies at a boundary
            // of the general law, and otherwise only when AICc agrees (its
            // AICc below the general law's). When the F test merely fails to
            // reject a special case inside the general law while AICc
            // prefers the general law, or several special cases survive, the
            // data do not decide.
            if standing.len() == 1 && (limit.is_some() || aicc_of(&survivor.model) < aicc_of(general_name)) {
                let boundary_text = limit.map_or(String::new(), |limit| {
                    format!("; {} is {general_name} at the boundary {limit}, where the F test decides alone", survivor.model)
                });
                return (
                    Some(survivor.model.clone()),
                    format!(
                        "{} ({general_name} {}: {}{boundary_text}; Akaike weights {} {:.2}, {general_name} {:.2}{rejected_text})",
                        survivor.model,
                        if test_of(&survivor.model, general_name).is_some_and(|t| t.outside && t.p_value < SIGNIFICANCE) {
                            "is no better within its physical range"
                        } else {
                            "adds nothing significant"
                        },
                        not_rejected(survivor),
                        survivor.model,
                        weight_of(&survivor.model).unwrap_or(f64::NAN),
                        weight_of(general_name).unwrap_or(f64::NAN)
                    ),
                    one(&survivor.model),
                );
            }
            let mut names: Vec<String> = standing.iter().map(|f| f.model.clone()).collect();
            names.push(general_name.to_string());
            let c = candidates_of(&names);
            let why = if standing.len() > 1 {
                format!(
                    "the F test rejects none of {} against {general_name}",
                    standing.iter().map(|f| format!("{} ({})", f.model, not_rejected(f))).collect::<Vec<_>>().join(", ")
                )
            } else {
                format!(
                    "the F test does not reject {} against {general_name} ({}), but AICc prefers {general_name}, with {}",
                    survivor.model,
                    not_rejected(survivor),
                    describe(mixed)
                )
            };
            return (None, format!("undecided between {}: {why}{rejected_text}; {}", listed(&c), family.advice), c);
        }
    }
    if let Some(mm) = find("mm") {
        let mut significant: Vec<(&FitSummary, &FTest)> = f_tests
            .iter()
            .filter(|t| t.simpler == "mm" && t.rejects)
            .filter_map(|t| Some((find(&t.general)?, t)))
            .collect();
        significant.sort_by(|a, b| a.0.aicc.unwrap_or(f64::INFINITY).total_cmp(&b.0.aicc.unwrap_or(f64::INFINITY)));
        if let Some((general, test)) = significant.first() {
            return (
                Some(general.model.clone()),
                format!("{} (Michaelis-Menten is rejected: F = {:.2}, {})", general.model, test.f, p_text(test.p_value)),
                one(&general.model),
            );
        }
        let tested: Vec<String> =
            f_tests.iter().filter(|t| t.simpler == "mm").map(|t| format!("{}: {}", t.general, test_text(t))).collect();
        // Not rejected, but named only when AICc agrees, except against a
        // law in which Michaelis-Menten lies at a boundary (substrate
        // inhibition, Ksi → ∞), where the F test decides alone.
        let richer_ahead: Vec<String> = models
            .iter()
            .filter(|m| m.model != "mm" && boundary_of("mm", &m.model).is_none() && m.aicc.unwrap_or(f64::INFINITY) < aicc_of("mm"))
            .map(|m| m.model.clone())
            .collect();
        if !richer_ahead.is_empty() && !tested.is_empty() {
            let mut names = richer_ahead;
            names.push("mm".to_string());
            let c = candidates_of(&names);
            return (
                None,
                format!(
                    "undecided between {}: no richer rate law is significant ({}), but AICc does not prefer Michaelis-Menten; measure more [S] values where the curves differ",
                    listed(&c),
                    tested.join("; ")
                ),
                c,
            );
        }
        let detail = if tested.is_empty() { String::new() } else { format!(" (no richer model is significant; {})", tested.join("; ")) };
        return (Some(mm.model.clone()), format!("{}{detail}", mm.model), one(&mm.model));
    }
    let best = fits
        .iter()
        .min_by(|a, b| a.aicc.unwrap_or(f64::INFINITY).total_cmp(&b.aicc.unwrap_or(f64::INFINITY)))
        .expect("fits is not empty");
    (Some(best.model.clone()), format!("{} (lowest AICc; no nested pair to test)", best.model), one(&best.model))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::solver::Termination;

    fn summary(model: &str, n: usize, p: usize, rss: f64) -> FitSummary {
        FitSummary {
            model: model.into(),
            equation: String::new(),
            n,
            dof: n - p,
            rss,
            sigma: None,
            r_squared: None,
            aicc: crate::fit::aicc(rss, n, p),
            converged: true,
            iterations: 1,
            termination: Termination::Converged,
            termination_text: "".into(),
            confidence_level: 0.95,
            weighting: "uniform".into(),
            reweighting_rounds: None,
            parameters: Vec::new(),
            correlation: Vec::new(),
            warnings: Vec::new(),
        }
    }

    /// F = ((10 − 8)/1)/(8/16) = 4 on (1, 16) degrees of freedom; the upper
    /// tail is 0.06281 (scipy.stats.f.sf(4, 1, 16) = 0.06281..., SciPy 1.17;
    /// the tabulated 5% point of F(1, 16) is 4.49, Abramowitz & Stegun
    /// Table 26.9, from memory).
    #[test]
    fn f_test_matches_the_f_distribution() {
        let simple = summary("mm", 20, 3, 10.0);
        let general = summary("hill", 20, 4, 8.0);
        let t = f_test(&simple, &general).unwrap();
        assert!((t.f - 4.0).abs() < 1e-12);
        assert!((t.p_value - 0.0628).abs() < 5e-4, "{}", t.p_value);
        let at_critical = f_test(&simple, &summary("hill", 20, 4, 10.0 / (1.0 + 4.494 / 16.0))).unwrap();
        assert!((at_critical.p_value - 0.05).abs() < 1e-3, "{}", at_critical.p_value);
    }

    #[test]
    fn akaike_weights_sum_to_one_and_follow_aicc() {
        let fits = [summary("competitive", 30, 3, 5.0), summary("uncompetitive", 30, 3, 9.0), summary("mixed", 30, 4, 4.9)];
        let c = compare_fits(&fits);
        let total: f64 = c.models.iter().filter_map(|m| m.akaike_weight).sum();
        assert!((total - 1.0).abs() < 1e-12);
        assert_eq!(c.models[0].model, "competitive");
        // exp(−Δ/2) ratio between the first two (definition of the weight).
        let (a, b) = (&c.models[0], &c.models[1]);
        let ratio = a.akaike_weight.unwrap() / b.akaike_weight.unwrap();
        assert!((ratio - (b.delta_aicc.unwrap() / 2.0).exp()).abs() < 1e-9);
        assert_eq!(c.preferred.as_deref(), Some("competitive"), "{}", c.verdict);
    }

    /// The F test does not reject noncompetitive against mixed (F = 2.89
    /// on (1, 26) df, p ≈ 0.10; the 5% point of F(1, 26) is 4.23,
    /// Abramowitz & Stegun Table 26.9, from memory) but AICc prefers mixed:
    /// noncompetitive lies inside mixed (Kic = Kiu), so the verdict must not
    /// name it, and must list both with their weights.
    #[test]
    fn a_mere_failure_to_reject_with_split_weights_is_undecided() {
        let fits = [summary("noncompetitive", 30, 3, 5.0), summary("uncompetitive", 30, 3, 9.0), summary("mixed", 30, 4, 4.5)];
        let c = compare_fits(&fits);
        assert_eq!(c.preferred, None, "{}", c.verdict);
        assert!(c.verdict.starts_with("undecided between mixed (Akaike weight "), "{}", c.verdict);
        let names: Vec<&str> = c.candidates.iter().map(|m| m.model.as_str()).collect();
        assert_eq!(names, ["mixed", "noncompetitive"]);
        let t = c.f_tests.iter().find(|t| t.simpler == "noncompetitive").unwrap();
        assert!(t.p_value > 0.05 && t.p_value < 0.2, "{}", t.p_value);
        assert!(t.boundary.is_none() && !t.rejects);
        // Two single mechanisms both standing: undecided as well.
        let fits = [summary("competitive", 30, 3, 5.0), summary("noncompetitive", 30, 3, 5.05), summary("mixed", 30, 4, 4.95)];
        let c = compare_fits(&fits);
        assert_eq!(c.preferred, None, "{}", c.verdict);
        assert_eq!(c.candidates.len(), 3);
    }

    /// The same numbers for competitive, which is mixed at the boundary
    /// Kiu → ∞: the F test decides alone, so competitive is named although
    /// AICc prefers mixed, and the verdict says why.
    #[test]
    fn at_a_boundary_the_f_test_decides_alone() {
        let fits = [summary("competitive", 30, 3, 5.0), summary("uncompetitive", 30, 3, 9.0), summary("mixed", 30, 4, 4.5)];
        let c = compare_fits(&fits);
        assert_eq!(c.preferred.as_deref(), Some("competitive"), "{}", c.verdict);
        assert!(c.verdict.contains("at the boundary Kiu → ∞, where the F test decides alone"), "{}", c.verdict);
        let t = c.f_tests.iter().find(|t| t.simpler == "competitive").unwrap();
        assert_eq!(t.boundary.as_deref(), Some("Kiu → ∞"));
        assert!(!t.outside && !t.rejects);
        // Just past the 5% point (F = 4.5 > 4.23) the same mechanism is
        // rejected and mixed is named.
        let fits = [summary("competitive", 30, 3, 5.0), summary("uncompetitive", 30, 3, 9.0), summary("mixed", 30, 4, 5.0 / (1.0 + 4.5 / 26.0))];
        assert_eq!(compare_fits(&fits).preferred.as_deref(), Some("mixed"));
    }

    /// A sequential fit that beats ping-pong clearly (F = 12 on (1, 21) df,
    /// p ≈ 0.002) but only with KiA below zero does not reject ping-pong:
    /// the physically possible sequential law nearest the data is ping-pong
    /// itself. With KiA above zero the same F rejects it.
    #[test]
    fn a_general_fit_outside_the_physical_range_rejects_nothing() {
        let with_kia = |kia: f64| {
            let mut sequential = summary("sequential", 25, 4, 1.0);
            sequential.parameters = ["Vmax", "KmA", "KmB", "KiA"]
                .iter()
                .zip([10.0, 10.0, 0.5, kia])
                .map(|(name, value)| ParameterEstimate {
                    name: name.to_string(),
                    value,
                    std_error: None,
                    ci_low: None,
                    ci_high: None,
                    unit: None,
                    derived: false,
                    ci_method: "".into(),
                    flag: None,
                    bias: None,
                    value_bias_corrected: None,
                })
                .collect();
            let mut ordered = summary("ordered", 25, 3, 40.0);
            ordered.parameters = Vec::new();
            [summary("ping-pong", 25, 3, 1.0 + 12.0 / 21.0), ordered, sequential]
        };
        let c = compare_fits(&with_kia(-3.0));
        let t = c.f_tests.iter().find(|t| t.simpler == "ping-pong").unwrap();
        assert!((t.f - 12.0).abs() < 1e-9 && t.p_value < 0.01, "{t:?}");
        assert!(t.outside && !t.rejects);
        assert_eq!(c.preferred.as_deref(), Some("ping-pong"), "{}", c.verdict);
        assert!(c.verdict.contains("only with KiA ≤ 0, outside its physical range"), "{}", c.verdict);
        let c = compare_fits(&with_kia(3.0));
        assert_eq!(c.preferred.as_deref(), Some("sequential"), "{}", c.verdict);
    }
}
