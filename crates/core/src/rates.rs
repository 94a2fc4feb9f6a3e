//! The rate analysis: a table of [S] and v in, a Michaelis-Menten fit with
//! units, derived constants, warnings and plot data out.
//!
//! [`analyse_rates`] is the one code path behind the page's results and the
//! CLI's `fit` command.

use crate::diagnostics::{residual_diagnostics, ResidualDiagnostics};
use crate::error::Error;
use crate::fit::{estimate, fit_model, fit_weighted, Fit, FitSettings, FitSummary, ParameterEstimate};
use crate::intervals::{apply_interval_method, apply_profile_intervals, bootstrap_interval, profile_interval, BootstrapScheme, BootstrapSettings, IntervalMethod};
use crate::model::{Dimension, Model, Observations};
use crate::models::{model_by_name, MichaelisMentenSpecificity};
use crate::plots::{diagnostic_plots, rate_plots, AxisUnits, PlotData, RatePoint};
use crate::read::replicates::{layout_note, problems_without_empty_replicates, replicate_columns, summarise, ReplicateSummary};
use crate::read::columns::{is_rate_name, is_sd_name, is_substrate_name};
use crate::robust::{direct_linear, DirectLinearEstimate};
use crate::solver::Termination;
use crate::table::{parse_table, shortage_reasons, ColumnHeading, InputProblem, Table};
use crate::protein::{grams_per_litre, grams_per_mole, specific_activity_factor, EnzymeFromProtein, ProteinRequest, SPECIFIC_ACTIVITY_UNIT};
use crate::units::{kcat_per_second, ConcentrationUnit, PerTime, TimeUnit, VUnit};
use crate::weighting::Weighting;
use nalgebra::DMatrix;
use serde::{Deserialize, Serialize};

/// What to analyse and how.
#[derive(Clone, Debug, Default, PartialEq, Deserialize)]
#[serde(default)]
pub struct RateRequest {
    /// The pasted or loaded table.
    pub text: String,
    /// Model name; empty means `mm`.
    pub model: String,
    /// Unit of [S]; empty or `None` means "as the header says".
    pub substrate_unit: Option<String>,
    /// Unit of v; empty or `None` means "as the header says".
    pub rate_unit: Option<String>,
    /// Total enzyme concentration [E]t, for kcat.
    pub enzyme: Option<f64>,
    /// Unit of [E]t; required with `enzyme`.
    pub enzyme_unit: Option<String>,
    /// Input line numbers (1-based) to leave out of the fit.
    pub excluded_lines: Vec<usize>,
    /// How observations are weighted. Default uniform.
    pub weighting: Weighting,
    /// How confidence intervals are computed. Default asymptotic.
    pub interval_method: IntervalMethod,
    /// Bootstrap settings, used when `interval_method` is bootstrap.
    pub bootstrap: BootstrapSettings,
    /// Single rates to leave out, as (input line, input column), both
    /// 1-based: with replicates in columns a line holds several rates, so
    /// one point is a cell. `excluded_lines` leaves out every rate on a
    /// line.
    pub excluded_cells: Vec<(usize, usize)>,
    /// The time unit to report rates in: `s`, `min` or `h` (per second,
    /// minute or hour). `None` or empty keeps the unit of v. The rates (and
    /// an sd column) are converted before the fit, so Vmax, the points and
    /// the plots are all in the chosen unit; a note states the factor.
    /// Needs the unit of v.
    pub rate_time: Option<String>,
    /// The enzyme as protein in the assay (mass concentration, optionally
    /// the molar mass): specific activity, and [E]t for kcat when the
    /// molar mass is given (then `enzyme` must be `None`). See
    /// [`crate::protein`].
    pub protein: Option<ProteinRequest>,
}

/// One data point as the analysis saw it.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PointRecord {
    /// Index of this point in [`RateAnalysis::points`].
    pub row: usize,
    /// Input line number, counting from 1.
    pub line: usize,
    /// Input column of the rate, counting from 1 (with replicates in
    /// columns, which replicate this is).
    pub column: usize,
    /// Substrate concentration.
    pub s: f64,
    /// Measured rate.
    pub v: f64,
    /// Whether the point was left out of the fit.
    pub excluded: bool,
    /// Fitted rate at this [S].
    pub fitted: f64,
    /// v − fitted.
    pub residual: f64,
    /// The standard deviation given in an `sd` column, if any.
    pub sd: Option<f64>,
    /// Weight in the fit. For relative and Poisson weighting it comes from
    /// the fitted value (the final reweighting round), also for an
    /// excluded point, whose weight does not enter the fit.
    pub weight: f64,
    /// Leverage in the fit (`None` for an excluded point).
    pub leverage: Option<f64>,
    /// Internally studentised residual (`None` for an excluded point).
    pub studentised: Option<f64>,
    /// Whether the studentised residual is large enough to deserve a look.
    pub flagged: bool,
}

/// How a bootstrap went.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct BootstrapReport {
    /// Resampled data sets drawn.
    pub resamples: usize,
    /// Of those, refits that did not converge and were left out.
    pub failures: usize,
    /// The seed used.
    pub seed: u64,
    /// The resampling scheme.
    pub scheme: BootstrapScheme,
    /// How intervals were read from the replicates: `studentised`
    /// (bootstrap-t, the default) or `percentile`.
    pub interval: String,
}

/// The units the analysis used, as symbols; `None` when not known.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct UnitsUsed {
    /// Unit of [S].
    pub substrate: Option<String>,
    /// Unit of v.
    pub rate: Option<String>,
    /// Unit of [E]t.
    pub enzyme: Option<String>,
}

/// The whole result of a rate analysis.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RateAnalysis {
    /// The fit record (values, errors, intervals, diagnostics, warnings).
    pub fit: FitSummary,
    /// Every data point, used or excluded.
    pub points: Vec<PointRecord>,
    /// Problems with the input; the lines they name were not used.
    pub problems: Vec<InputProblem>,
    /// Notes on how the table was read (columns, units).
    pub notes: Vec<String>,
    /// Units used.
    pub units: UnitsUsed,
    /// Residual diagnostics (runs test, lack of fit, leverage).
    pub diagnostics: ResidualDiagnostics,
    /// The rates used in the fit, by [S]: count, mean, SD and SEM (for a
    /// table and error bars; the fit itself uses every rate).
    pub replicates: Vec<ReplicateSummary>,
    /// The direct linear plot's median estimates, an independent check.
    pub direct_linear: DirectLinearEstimate,
    /// The check of the error structure (constant, Poisson-like or
    /// relative) and the weighting it suggests; `None` with weighting by sd
    /// or when it cannot be computed.
    pub error_structure: Option<crate::errors::ErrorStructure>,
    /// Details of the bootstrap, when intervals came from one.
    pub bootstrap: Option<BootstrapReport>,
    /// The enzyme as protein, when the request gave it: the protein in
    /// g/L, the molar mass and [E]t computed from them (`enzyme_molar`).
    /// Specific activity is the derived parameter `specific activity`.
    pub enzyme_from_protein: Option<EnzymeFromProtein>,
    /// With rates per mass of protein (a specific activity such as
    /// µmol/min/mg): the molar mass in g/mol that turned Vmax into kcat.
    pub kcat_from_molar_mass: Option<f64>,
    /// Plot data, direct plot first.
    pub plots: Vec<PlotData>,
    /// The standing caution about what fitted constants mean.
    pub caution: String,
}

/// The caution every result carries.
pub const CAUTION: &str = "These constants are statistical estimates from one data set. They mean what they \
    claim only if the rates are true initial rates (linear progress, little substrate used, stable enzyme, no \
    detector saturation) and the model suits the mechanism. Follow your laboratory's validated procedures \
    for decisions that matter.";

/// Column roles found from the header.
struct Roles {
    substrate: usize,
    /// One column in the long layout; two or more with replicates in
    /// columns.
    rates: Vec<usize>,
    /// The heading the rate unit is read from.
    rate_heading: Option<ColumnHeading>,
    sd: Option<usize>,
}

fn find_roles(table: &Table, notes: &mut Vec<String>) -> Result<(Roles, Vec<InputProblem>), Error> {
    if let Some(columns) = replicate_columns(table, &is_substrate_name, &is_rate_name).map_err(Error::invalid_data)? {
        let (problems, empty) = problems_without_empty_replicates(table, &columns);
        notes.push(layout_note(&columns, table.headings.as_deref(), "v", empty));
        let rate_heading = columns.unit.clone().map(|unit| ColumnHeading { name: "v".to_string(), unit: Some(unit) });
        return Ok((Roles { substrate: columns.concentration, rates: columns.measurements, rate_heading, sd: None }, problems));
    }
    let Some(headings) = &table.headings else {
        if table.width < 2 {
            return Err(Error::invalid_data("the table needs two columns: [S] then v"));
        }
        notes.push("No header row: column 1 is read as [S] and column 2 as v.".to_string());
        return Ok((Roles { substrate: 0, rates: vec![1], rate_heading: None, sd: None }, table.problems.clone()));
    };
    let sd = headings.iter().position(|h| is_sd_name(&h.name));
    let substrate = headings.iter().position(|h| is_substrate_name(&h.name));
    let rate = headings.iter().position(|h| is_rate_name(&h.name));
    let roles = match (substrate, rate) {
        (Some(s), Some(v)) => Roles { substrate: s, rates: vec![v], rate_heading: Some(headings[v].clone()), sd },
        _ if headings.len() == 2 => {
            // Name only the headings whose role was not recognised.
            let unknown: Vec<String> = [(0, substrate), (1, rate)]
                .iter()
                .filter(|(column, found)| *found != Some(*column))
                .map(|(column, _)| format!("'{}'", headings[*column].name))
                .collect();
            notes.push(format!(
                "The header {} {} {} Turnover knows; column 1 is read as [S] and column 2 as v.",
                if unknown.len() == 1 { "name" } else { "names" },
                unknown.join(" and "),
                if unknown.len() == 1 { "is not one" } else { "are not ones" }
            ));
            Roles { substrate: 0, rates: vec![1], rate_heading: Some(headings[1].clone()), sd: None }
        }
        _ => {
            return Err(Error::invalid_data(format!(
                "cannot tell which columns hold [S] and v from the header ({}); name them S, [S] or substrate, and v, rate or velocity; replicate rates may follow [S] in columns headed rep 1, rep 2 (or v1, v2, or the same rate heading repeated)",
                headings.iter().map(|h| format!("'{}'", h.name)).collect::<Vec<_>>().join(", ")
            )))
        }
    };
    for (index, heading) in headings.iter().enumerate() {
        if index != roles.substrate && !roles.rates.contains(&index) && Some(index) != roles.sd {
            notes.push(format!("Column {} ('{}') is not used.", index + 1, heading.name));
        }
    }
    Ok((roles, table.problems.clone()))
}

fn choose_unit<T>(
    requested: &Option<String>,
    heading: Option<&ColumnHeading>,
    parse: fn(&str) -> Result<T, String>,
    what: &str,
    notes: &mut Vec<String>,
) -> Result<Option<T>, Error> {
    if let Some(text) = requested.as_deref().map(str::trim).filter(|t| !t.is_empty()) {
        return parse(text).map(Some).map_err(Error::invalid_option);
    }
    match heading.and_then(|h| h.unit.as_deref()) {
        Some(text) => match parse(text) {
            Ok(unit) => Ok(Some(unit)),
            Err(message) => {
                notes.push(format!("The header's unit for {what} was not understood ({message}); {what} is shown without a unit."));
                Ok(None)
            }
        },
        None => Ok(None),
    }
}

/// Reads the table, fits the model and gathers everything the page and the
/// CLI show.
pub fn analyse_rates(request: &RateRequest) -> Result<RateAnalysis, Error> {
    analyse_rates_with(request, None)
}

/// [`analyse_rates`] with the weights of the points used (in table order,
/// left-out lines skipped) given and held fixed: the comparison of rate
/// laws fits every law with the same weights.
fn analyse_rates_with(request: &RateRequest, fixed_weights: Option<&[f64]>) -> Result<RateAnalysis, Error> {
    let model_name = if request.model.trim().is_empty() { "mm" } else { request.model.trim() };
    if crate::models::model_input(model_name) == Some(crate::models::ModelInput::TwoSubstrates) {
        return Err(Error::invalid_option(format!(
            "the {model_name} model needs columns [A] and [B]; it is fitted by the two-substrate analysis"
        )));
    }
    if crate::models::model_input(model_name).is_some_and(|input| input != crate::models::ModelInput::Substrate) {
        return Err(Error::invalid_option(format!(
            "the {model_name} model needs an inhibitor column; it is fitted by the inhibition or inhibitor-series analysis"
        )));
    }
    let model = model_by_name(model_name)?;
    // The hyperbola-specific parts (design rules, kcat/Km, straight
    // linearised lines) apply to Michaelis-Menten only.
    let hyperbolic = model.name() == "mm";
    let table = parse_table(&request.text);
    let mut notes = Vec::new();
    if table.rows.is_empty() {
        return Err(Error::invalid_data(
            "no data rows found; paste a table with [S] in the first column and v in the second",
        ));
    }
    let (roles, mut problems) = find_roles(&table, &mut notes)?;
    if request.weighting == Weighting::Sd && roles.sd.is_none() {
        return Err(Error::invalid_option(
            "weighting by sd needs a column of standard deviations headed sd (or sigma, stdev)",
        ));
    }
    if request.weighting != Weighting::Sd && roles.sd.is_some() {
        notes.push("The sd column is read but not used for weighting; choose weighting by sd to use it.".to_string());
    }
    let heading = |i: usize| table.headings.as_ref().and_then(|h| h.get(i));
    let substrate_unit =
        choose_unit(&request.substrate_unit, heading(roles.substrate), ConcentrationUnit::parse, "[S]", &mut notes)?;
    let rate_unit = choose_unit(&request.rate_unit, roles.rate_heading.as_ref(), VUnit::parse, "v", &mut notes)?;
    let (rate_unit, time_factor) = per_time(rate_unit, &request.rate_time, &mut notes)?;

    let mut points = Vec::new();
    for row in &table.rows {
        let s = row.cells.get(roles.substrate).copied().flatten();
        let rates: Vec<(usize, f64)> =
            roles.rates.iter().filter_map(|&c| row.cells.get(c).copied().flatten().map(|v| (c, v))).collect();
        let (Some(s), false) = (s, rates.is_empty()) else {
            if !problems.iter().any(|p| p.line == row.line) {
                problems.push(InputProblem {
                    line: row.line,
                    column: None,
                    message: "the row has no [S] or no v value".to_string(),
                });
            }
            continue;
        };
        if s < 0.0 {
            problems.push(InputProblem {
                line: row.line,
                column: Some(roles.substrate + 1),
                message: format!("a concentration cannot be negative ({s})"),
            });
            continue;
        }
        let sd = roles.sd.and_then(|c| row.cells.get(c).copied().flatten()).map(|sd| sd * time_factor);
        for (column, v) in rates {
            let v = v * time_factor;
            let weight = match request.weighting.weight(v, sd) {
                Ok(w) => w,
                Err(message) => {
                    let column = if request.weighting == Weighting::Sd { roles.sd } else { Some(column) };
                    problems.push(InputProblem { line: row.line, column: column.map(|c| c + 1), message });
                    continue;
                }
            };
            let excluded = request.excluded_lines.contains(&row.line) || request.excluded_cells.contains(&(row.line, column + 1));
            // An excluded point keeps the weight it would have, for the
            // residual plot.
            points.push(PointRecord {
                row: points.len(),
                line: row.line,
                column: column + 1,
                s,
                v,
                excluded,
                fitted: f64::NAN,
                residual: f64::NAN,
                sd,
                weight,
                leverage: None,
                studentised: None,
                flagged: false,
            });
        }
    }
    problems.sort_by_key(|p| (p.line, p.column));
    if !problems.is_empty() {
        let lines: std::collections::BTreeSet<usize> = problems.iter().map(|p| p.line).collect();
        let set_aside = lines.iter().filter(|l| !points.iter().any(|p| p.line == **l)).count();
        if set_aside > 0 {
            notes.push(format!("{set_aside} line(s) with problems were set aside; see the list of input problems."));
        }
    }

    let used: Vec<PointRecord> = points.iter().filter(|p| !p.excluded).cloned().collect();
    let n_params = model.parameters().len();
    if used.len() <= n_params {
        return Err(Error::invalid_data(format!(
            "only {} usable point(s) remain; at least {} are needed to fit {} parameters with an uncertainty{}",
            used.len(),
            n_params + 1,
            n_params,
            shortage_reasons(&problems, points.iter().filter(|p| p.excluded).count(), 10)
        )));
    }
    let mut distinct: Vec<f64> = used.iter().map(|p| p.s).collect();
    distinct.sort_by(f64::total_cmp);
    distinct.dedup();
    if distinct.len() < n_params {
        return Err(Error::invalid_data(format!(
            "the points cover only {} distinct [S] value(s); {} parameters need at least {} (for a useful fit, 5 or more spread around Km)",
            distinct.len(),
            n_params,
            n_params
        )));
    }
    let observations = Observations::new(
        1,
        used.iter().map(|p| p.s).collect(),
        used.iter().map(|p| p.v).collect(),
        Some(used.iter().map(|p| p.weight).collect()),
    )?;
    let settings = FitSettings::default();
    let observations = match fixed_weights {
        Some(w) if w.len() == observations.len() => observations.with_weights(w.to_vec())?,
        Some(_) => return Err(Error::invalid_data("the fixed weights do not match the points used")),
        None => observations,
    };
    let scheme = if fixed_weights.is_some() { Weighting::Sd } else { request.weighting };
    let (fit, observations) = fit_weighted(model.as_ref(), &observations, scheme, None, &settings)?;
    if let Some(w) = fixed_weights {
        for (point, weight) in points.iter_mut().filter(|p| !p.excluded).zip(w) {
            point.weight = *weight;
        }
    }
    let values = fit.values().to_vec();
    for point in &mut points {
        point.fitted = model.value(&[point.s], &values);
        point.residual = point.v - point.fitted;
        // Weights from the fitted curve: the final round's weight, also for
        // a left-out point (for the residual plot).
        if let Some(w) = fit.reweighting.and_then(|scheme| scheme.weight_at_fitted(point.fitted)) {
            point.weight = w;
        }
    }
    let diagnostics = residual_diagnostics(model.as_ref(), &observations, &fit);
    for (used_index, point) in points.iter_mut().filter(|p| !p.excluded).enumerate() {
        let d = &diagnostics.points[used_index];
        point.leverage = d.leverage.is_finite().then_some(d.leverage);
        point.studentised = d.studentised;
        point.flagged = d.flagged;
    }

    let mut summary = fit.summary.clone();
    summary.weighting = request.weighting.name().into();
    let unit_of = |dimension: Dimension| -> Option<String> {
        match dimension {
            Dimension::Response => rate_unit.map(|u| u.symbol()),
            Dimension::Predictor(_) => substrate_unit.map(|u| u.symbol().to_string()),
            Dimension::Dimensionless => Some(String::new()),
            Dimension::Unspecified => None,
        }
    };
    for (estimate, spec) in summary.parameters.iter_mut().zip(model.parameters()) {
        estimate.unit = unit_of(spec.dimension);
    }
    if hyperbolic {
        summary.warnings.extend(design_warnings(&fit, &used));
    }

    // kcat and kcat/Km from [E]t: the factors that turn Vmax into kcat and
    // Vmax/Km into kcat/Km, when the units allow.
    let mut enzyme_symbol = None;
    let mut kcat_factor = None;
    let mut specificity_factor = None;
    let ProteinPart { report: enzyme_from_protein, factor: protein_factor, enzyme: enzyme_given, molar_mass } =
        enzyme_as_protein(request, substrate_unit, rate_unit, &mut notes, &mut summary.warnings)?;
    let mut kcat_from_molar_mass = None;
    if let Some(VUnit::Specific(unit)) = rate_unit {
        // Rates per mass of protein: kcat from the molar mass alone.
        if request.enzyme.is_some() {
            summary.warnings.push(format!(
                "[E]t is not used: the rates are per mass of protein ({}), so kcat comes from the enzyme's molar mass; give the molar mass instead.",
                unit.symbol()
            ));
        }
        if let Some(mass) = molar_mass {
            let to_kcat = unit.in_mol_per_second_per_gram() * mass;
            kcat_factor = Some(to_kcat);
            kcat_from_molar_mass = Some(mass);
            let four = |v: f64| crate::format::format_estimate(Some(v), None, None).value;
            notes.push(format!(
                "kcat = Vmax × molar mass: one {} is {} mol s⁻¹ g⁻¹, times {} g/mol (this takes the protein to be the enzyme alone, every molecule active, one active site per molar mass).",
                unit.symbol(),
                four(unit.in_mol_per_second_per_gram()),
                four(mass)
            ));
        }
    } else if let Some((enzyme, enzyme_unit)) = enzyme_given {
        if !(enzyme.is_finite() && enzyme > 0.0) {
            return Err(Error::invalid_option("the enzyme concentration [E]t must be a positive number"));
        }
        let enzyme_unit_text = enzyme_unit.as_deref().map(str::trim).filter(|t| !t.is_empty()).ok_or_else(|| {
            Error::invalid_option("give the unit of the enzyme concentration [E]t (for example nM)")
        })?;
        let enzyme_unit = ConcentrationUnit::parse(enzyme_unit_text).map_err(Error::invalid_option)?;
        enzyme_symbol = Some(enzyme_unit.symbol().to_string());
        match rate_unit {
            Some(VUnit::Concentration(rate)) => kcat_factor = Some(kcat_per_second(1.0, rate, enzyme, enzyme_unit)),
            Some(VUnit::Specific(_)) => unreachable!("rates per mass of protein take kcat from the molar mass above"),
            None => summary
                .warnings
                .push("kcat needs the unit of v (a concentration per time); choose it or write it in the header.".to_string()),
        }
    }
    // kcat/Km from kcat, however kcat was had.
    if let Some(to_kcat) = kcat_factor {
        match substrate_unit.filter(|_| hyperbolic) {
            Some(substrate) => specificity_factor = Some(to_kcat / substrate.in_molar()),
            None if hyperbolic => {
                summary.warnings.push("kcat/Km needs the unit of [S]; choose it or write it in the header.".to_string())
            }
            None => {}
        }
    }
    add_derived(&mut summary, &fit, kcat_factor, specificity_factor);
    add_specific_activity(&mut summary, &fit, protein_factor);
    let derived_factors = DerivedFactors { kcat: kcat_factor, specificity: specificity_factor, activity: protein_factor };

    let ran_off = fit.summary.termination == Termination::NoFiniteOptimum;
    let bootstrap_report = match request.interval_method {
        // A fit that ran off has no asymptotic or bootstrap interval worth
        // the name; the profile says which side the data do bound.
        _ if ran_off => {
            profile_intervals(&mut summary, model.as_ref(), &observations, &fit, derived_factors);
            summary.warnings.push(
                "The intervals shown are profile intervals whatever method was chosen: with no finite optimum only the profile says which side the data bound."
                    .to_string(),
            );
            None
        }
        IntervalMethod::Asymptotic => {
            // The check that the data bound every constant at all: a
            // profile that never closes is flagged, the intervals stay.
            if fit.summary.converged {
                apply_profile_intervals(&mut summary, model.as_ref(), &observations, &fit, false);
            }
            None
        }
        IntervalMethod::Profile => {
            profile_intervals(&mut summary, model.as_ref(), &observations, &fit, derived_factors);
            None
        }
        IntervalMethod::Bootstrap => Some(bootstrap_intervals(
            &mut summary,
            model.as_ref(),
            &observations,
            &fit,
            &request.bootstrap,
            derived_factors,
        )?),
    };
    scale_bias_to_derived(&mut summary, derived_factors);
    summary.warnings.extend(diagnostics.findings.iter().cloned());
    // With uniform weights (all 1) the fit above is the check's own first
    // fit, computed the same way from the same start; it is not repeated.
    let uniform = (scheme == Weighting::Uniform && fit.summary.converged && observations.weights().iter().all(|w| *w == 1.0))
        .then(|| fit.values());
    let error_structure = if request.weighting == Weighting::Sd {
        None
    } else {
        crate::errors::error_structure_after(model.as_ref(), &observations, uniform)
    };
    if let Some(check) = &error_structure {
        if let Some(suggested) = check.suggested.as_deref().filter(|w| *w != request.weighting.name()) {
            summary.warnings.push(format!(
                "{} The fit shown uses {}; weighting {suggested} suits these data better.",
                check.text,
                request.weighting.describe()
            ));
        }
    }

    let robust_points: Vec<(f64, f64)> = used.iter().filter(|p| p.s > 0.0).map(|p| (p.s, p.v)).collect();
    let robust = direct_linear(&robust_points);
    if let (Some(km_robust), Some(vmax_robust), true) = (robust.km, robust.vmax, hyperbolic) {
        let (vmax, km) = (values[0], values[1]);
        if fit.summary.converged && ((km_robust / km - 1.0).abs() > 0.5 || (vmax_robust / vmax - 1.0).abs() > 0.25) {
            summary.warnings.push(format!(
                "The direct linear plot's medians (Km {km_robust:.4}, Vmax {vmax_robust:.4}) differ markedly from the least-squares values: one or a few points may be pulling the fit. (Thresholds 50% for Km and 25% for Vmax: common practice, no source.)"
            ));
        }
    }

    let rate_points: Vec<RatePoint> = points
        .iter()
        .map(|p| RatePoint { s: p.s, v: p.v, fitted: p.fitted, excluded: p.excluded, weight: p.weight })
        .collect();
    let axis_units = AxisUnits {
        substrate: substrate_unit.map(|u| u.symbol().to_string()).unwrap_or_default(),
        rate: rate_unit.map(|u| u.symbol()).unwrap_or_default(),
    };
    let curve = |s: f64| model.value(&[s], &values);
    let mut plots = rate_plots(&rate_points, &curve, hyperbolic.then_some((values[0], values[1])), &axis_units);
    let studentised: Vec<(usize, f64, bool)> =
        points.iter().filter_map(|p| p.studentised.map(|r| (p.row, r, p.excluded))).collect();
    plots.extend(diagnostic_plots(&studentised, &rate_points, &robust, &axis_units));

    Ok(RateAnalysis {
        fit: summary,
        points,
        problems,
        notes,
        units: UnitsUsed {
            substrate: substrate_unit.map(|u| u.symbol().to_string()),
            rate: rate_unit.map(|u| u.symbol()),
            enzyme: enzyme_symbol,
        },
        diagnostics,
        replicates: summarise(&used.iter().map(|p| (p.s, p.v)).collect::<Vec<_>>()),
        direct_linear: robust,
        error_structure,
        bootstrap: bootstrap_report,
        enzyme_from_protein,
        kcat_from_molar_mass,
        plots,
        caution: CAUTION.to_string(),
    })
}

/// Several rate laws fitted to the same [S]–v table and compared.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RateComparison {
    /// Ranking, F tests of nested pairs and the verdict.
    pub comparison: crate::compare::Comparison,
    /// One fit per model, in the order asked for.
    pub fits: Vec<FitSummary>,
    /// The first model's full analysis (problems, notes, units).
    pub first: RateAnalysis,
}

/// Fits every model in `models` (rate laws on [S] and v: `mm`,
/// `substrate-inhibition`, `hill`) to the table of `request` and compares
/// them. The one code path behind the CLI's `compare` on rate tables and the
/// page's comparison of rate laws.
pub fn compare_rate_models(request: &RateRequest, models: &[String]) -> Result<RateComparison, Error> {
    if models.is_empty() {
        return Err(Error::invalid_option("name at least one model to compare"));
    }
    let one = |model: &String, fixed: Option<&[f64]>| {
        let mut one = request.clone();
        one.model = model.clone();
        analyse_rates_with(&one, fixed)
    };
    let mut analyses = models.iter().map(|m| one(m, None)).collect::<Result<Vec<_>, Error>>()?;
    // Weights from a fitted curve differ between laws; sums of squares
    // compare only with the same weights. So the weights of the law with
    // the most parameters (the first such in the list), iterated on its own
    // curve, are held fixed for every law.
    if request.weighting.from_model() {
        let general = (0..models.len())
            .max_by_key(|&k| (model_by_name(&models[k]).map(|m| m.parameters().len()).unwrap_or(0), std::cmp::Reverse(k)))
            .expect("at least one model");
        if analyses[general].fit.reweighting_rounds.is_some() {
            let weights: Vec<f64> = analyses[general].points.iter().filter(|p| !p.excluded).map(|p| p.weight).collect();
            let rounds = analyses[general].fit.reweighting_rounds;
            analyses = models.iter().map(|m| one(m, Some(&weights))).collect::<Result<Vec<_>, Error>>()?;
            for analysis in &mut analyses {
                analysis.fit.reweighting_rounds = rounds;
            }
            analyses[0].notes.push(format!(
                "For the comparison, {} are computed from the {} fit's curve and used unchanged for every rate law, so that the sums of squares compare.",
                request.weighting.describe(),
                models[general]
            ));
        } else {
            analyses[0].notes.push(format!(
                "The weights from the {} fit's curve did not settle; every rate law keeps its own weights, so the comparison of sums of squares is approximate.",
                models[general]
            ));
        }
    }
    let fits: Vec<FitSummary> = analyses.iter().map(|a| a.fit.clone()).collect();
    let comparison = crate::compare::compare_fits(&fits);
    Ok(RateComparison { comparison, fits, first: analyses.swap_remove(0) })
}

/// Warnings about what the design lets the data determine, for the
/// hyperbola (common practice, no source: the usual advice is to span
/// roughly 0.2–5×Km, and at least past 2×Km).
fn design_warnings(fit: &Fit, used: &[PointRecord]) -> Vec<String> {
    let mut warnings = Vec::new();
    if !fit.summary.converged {
        return warnings;
    }
    let (vmax, km) = (fit.values()[0], fit.values()[1]);
    let s_max = used.iter().map(|p| p.s).fold(f64::MIN, f64::max);
    let s_min = used.iter().map(|p| p.s).fold(f64::MAX, f64::min);
    if km <= 0.0 || vmax <= 0.0 {
        warnings.push(format!(
            "The fit gives a non-positive {}; this has no physical meaning. Check the data and the model.",
            if km <= 0.0 { "Km" } else { "Vmax" }
        ));
    } else {
        if s_max < 2.0 * km {
            warnings.push(format!(
                "The highest [S] is only {:.2}×Km, so Vmax is an extrapolation. Common practice (no formal source) is to reach at least 2×Km, better 5–10×Km.",
                s_max / km
            ));
        }
        if s_min > km {
            warnings.push(format!(
                "The lowest [S] is {:.2}×Km; with no points below Km, Km is poorly defined. Add concentrations below Km (common practice, no source).",
                s_min / km
            ));
        }
    }
    if let Some(r) = fit.summary.correlation.first().and_then(|row| row.get(1)).copied().flatten() {
        if r.abs() > 0.99 {
            warnings.push(format!(
                "Vmax and Km are correlated at r = {r:.3}; the data determine them poorly one at a time (threshold 0.99: common practice, no source)."
            ));
        }
    }
    warnings
}

/// Appends kcat and kcat/Km with delta-method uncertainty from the full
/// covariance of (Vmax, Km); [E]t is taken as exact.
fn add_derived(summary: &mut FitSummary, fit: &Fit, kcat_factor: Option<f64>, specificity_factor: Option<f64>) {
    let (vmax, km) = (fit.values()[0], fit.values()[1]);
    if let Some(factor) = kcat_factor {
        let se = summary.parameters[0].std_error.map(|se| se * factor);
        let mut kcat = estimate("kcat", vmax * factor, se, fit.t_quantile);
        kcat.unit = Some("s⁻¹".to_string());
        kcat.derived = true;
        kcat.ci_method = "delta".into();
        summary.parameters.push(kcat);
    }
    if let Some(scale) = specificity_factor {
        let se = fit.covariance.as_ref().map(|c| {
            let (dv, dk) = (scale / km, -scale * vmax / (km * km));
            (dv * dv * c[(0, 0)] + dk * dk * c[(1, 1)] + 2.0 * dv * dk * c[(0, 1)]).sqrt()
        });
        let mut specificity: ParameterEstimate = estimate("kcat/Km", scale * vmax / km, se.filter(|v| v.is_finite()), fit.t_quantile);
        specificity.unit = Some("M⁻¹ s⁻¹".to_string());
        specificity.derived = true;
        specificity.ci_method = "delta".into();
        summary.parameters.push(specificity);
    }
}

/// What [`enzyme_as_protein`] makes of the request.
struct ProteinPart {
    /// What the result reports about the protein.
    report: Option<EnzymeFromProtein>,
    /// Vmax to specific activity.
    factor: Option<f64>,
    /// [E]t and its unit for kcat, given directly or from the protein.
    enzyme: Option<(f64, Option<String>)>,
    /// The molar mass in g/mol, when given.
    molar_mass: Option<f64>,
}

/// Reads the enzyme given as protein: returns what the result reports,
/// the factor from Vmax to specific activity (when the unit of v is known)
/// and [E]t with its unit for kcat (given directly, or from the protein
/// and the molar mass). Refuses [E]t given both ways, and units that are
/// not a mass concentration or a molar mass, with a sentence.
fn enzyme_as_protein(
    request: &RateRequest,
    substrate_unit: Option<ConcentrationUnit>,
    rate_unit: Option<VUnit>,
    notes: &mut Vec<String>,
    warnings: &mut Vec<String>,
) -> Result<ProteinPart, Error> {
    let given = request.enzyme.map(|e| (e, request.enzyme_unit.clone()));
    let Some(protein) = &request.protein else {
        return Ok(ProteinPart { report: None, factor: None, enzyme: given, molar_mass: None });
    };
    let g_per_l = match protein.concentration {
        Some(c) if c.is_finite() && c > 0.0 => Some(c * grams_per_litre(&protein.unit).map_err(Error::invalid_option)?),
        Some(_) => return Err(Error::invalid_option("the protein concentration must be a positive number")),
        None => None,
    };
    let mass_unit = protein.molar_mass_unit.as_deref().map(str::trim).filter(|t| !t.is_empty());
    let molar_mass = match (protein.molar_mass, mass_unit) {
        (None, None) => None,
        (Some(m), Some(unit)) if m.is_finite() && m > 0.0 => Some(m * grams_per_mole(unit).map_err(Error::invalid_option)?),
        (Some(_), Some(_)) => return Err(Error::invalid_option("the molar mass must be a positive number")),
        (Some(_), None) => return Err(Error::invalid_option("give the unit of the molar mass (kDa, Da or g/mol)")),
        (None, Some(_)) => return Err(Error::invalid_option("a molar mass unit was given without a molar mass")),
    };
    let four = |v: f64| crate::format::format_estimate(Some(v), None, None).value;
    if let Some(VUnit::Specific(unit)) = rate_unit {
        // Vmax is a specific activity already: the molar mass gives kcat
        // (in the caller), the protein concentration has no part.
        if let Some(g) = g_per_l {
            warnings.push(format!(
                "The protein concentration ({} mg/L) is not used: the rates are already per mass of protein ({}), so Vmax is the maximal specific activity.",
                four(g * 1e3),
                unit.symbol()
            ));
        }
        return Ok(ProteinPart { report: None, factor: None, enzyme: given, molar_mass });
    }
    let Some(g_per_l) = g_per_l else {
        warnings.push(
            "The molar mass is not used: it needs the protein concentration beside it (for [E]t), unless the rates are per mass of protein (such as µmol/min/mg)."
                .to_string(),
        );
        return Ok(ProteinPart { report: None, factor: None, enzyme: given, molar_mass: None });
    };
    let mut from = EnzymeFromProtein { protein_g_per_l: g_per_l, molar_mass_g_per_mol: molar_mass, enzyme_molar: None, enzyme_unit: None };
    let mut enzyme = given;
    if let Some(mass) = molar_mass {
        if request.enzyme.is_some() {
            return Err(Error::invalid_option(
                "[E]t is given twice, as a molar concentration and as protein with a molar mass; give one of them",
            ));
        }
        let unit = substrate_unit.unwrap_or(ConcentrationUnit::Molar);
        let value = g_per_l / mass / unit.in_molar();
        notes.push(format!(
            "[E]t from the protein: {} g/L ÷ {} g/mol = {} {} (this takes the protein to be the enzyme alone, every molecule active, one active site per molar mass).",
            four(g_per_l),
            four(mass),
            four(value),
            unit.symbol()
        ));
        from.enzyme_molar = Some(value);
        from.enzyme_unit = Some(unit.symbol().to_string());
        enzyme = Some((value, Some(unit.symbol().to_string())));
    }
    let factor = match rate_unit {
        Some(VUnit::Concentration(rate)) => {
            notes.push(format!(
                "Specific activity = Vmax ÷ protein ({} mg/L) in {SPECIFIC_ACTIVITY_UNIT} (U/mg); the protein concentration is taken as exact, so its standard error and interval are Vmax's scaled.",
                four(g_per_l * 1e3)
            ));
            Some(specific_activity_factor(rate.in_molar_per_second(), g_per_l))
        }
        _ => {
            warnings.push(
                "Specific activity needs the unit of v (a concentration per time); choose it or write it in the header.".to_string(),
            );
            None
        }
    };
    Ok(ProteinPart { report: Some(from), factor, enzyme, molar_mass })
}

/// Appends specific activity: Vmax times `factor`, so its standard error
/// is SE(Vmax) times `factor` (the delta method, exact for a linear map;
/// the protein concentration taken as exact) and its interval Vmax's
/// scaled.
fn add_specific_activity(summary: &mut FitSummary, fit: &Fit, factor: Option<f64>) {
    let Some(factor) = factor else { return };
    let se = summary.parameters[0].std_error.map(|se| se * factor);
    let mut activity = estimate("specific activity", fit.values()[0] * factor, se, fit.t_quantile);
    activity.unit = Some(SPECIFIC_ACTIVITY_UNIT.to_string());
    activity.derived = true;
    activity.ci_method = "delta".into();
    summary.parameters.push(activity);
}

/// kcat and specific activity are Vmax times an exact factor, so their
/// small-sample bias is Vmax's times that factor (see [`crate::bias`]);
/// set after the interval step, which may withdraw Vmax's. kcat/Km has
/// none.
fn scale_bias_to_derived(summary: &mut FitSummary, factors: DerivedFactors) {
    let vmax_bias = summary.parameters[0].bias;
    for (name, factor) in [("kcat", factors.kcat), ("specific activity", factors.activity)] {
        if let (Some(factor), Some(e)) = (factor, summary.parameters.iter_mut().find(|p| p.derived && p.name == name)) {
            e.set_bias(vmax_bias.map(|b| b * factor));
        }
    }
}

/// The factors that turn the fitted constants into the derived ones, in
/// the order they are appended: kcat = Vmax·`kcat`, kcat/Km =
/// `specificity`·Vmax/Km, specific activity = Vmax·`activity`.
#[derive(Clone, Copy)]
struct DerivedFactors {
    kcat: Option<f64>,
    specificity: Option<f64>,
    activity: Option<f64>,
}

/// Replaces every interval by its profile-likelihood interval. kcat's is
/// Vmax's scaled; kcat/Km's comes from refitting the curve with Vmax/Km as
/// a parameter and profiling that.
fn profile_intervals(
    summary: &mut FitSummary,
    model: &dyn Model,
    data: &Observations,
    fit: &Fit,
    factors: DerivedFactors,
) {
    let DerivedFactors { kcat: kcat_factor, specificity: specificity_factor, activity: protein_factor } = factors;
    let n_fitted = fit.values().len();
    let mut unbounded = Vec::new();
    // The fitted constants go through the step every analysis shares; it
    // cannot fail for the profile method.
    let _ = apply_interval_method(summary, model, data, fit, IntervalMethod::Profile, &BootstrapSettings::default());
    let mut next = n_fitted;
    if let Some(factor) = kcat_factor {
        let (low, high) = (summary.parameters[0].ci_low, summary.parameters[0].ci_high);
        let kcat = &mut summary.parameters[next];
        kcat.ci_low = low.map(|v| v * factor);
        kcat.ci_high = high.map(|v| v * factor);
        kcat.ci_method = "profile".into();
        next += 1;
    }
    if let Some(scale) = specificity_factor {
        let reparameterised = MichaelisMentenSpecificity;
        let (vmax, km) = (fit.values()[0], fit.values()[1]);
        let start = [vmax / km, km];
        let interval = fit_model(&reparameterised, data, Some(&start), &FitSettings::default())
            .ok()
            .filter(|f| f.summary.converged)
            .map(|f| profile_interval(&reparameterised, data, &f, 0));
        let specificity = &mut summary.parameters[next];
        match interval {
            Some((low, high)) => {
                specificity.ci_low = low.map(|v| v * scale);
                specificity.ci_high = high.map(|v| v * scale);
            }
            None => {
                specificity.ci_low = None;
                specificity.ci_high = None;
            }
        }
        if specificity.ci_low.is_none() || specificity.ci_high.is_none() {
            unbounded.push("kcat/Km".to_string());
        }
        specificity.ci_method = "profile".into();
        next += 1;
    }
    if let Some(factor) = protein_factor {
        let (low, high) = (summary.parameters[0].ci_low, summary.parameters[0].ci_high);
        let activity = &mut summary.parameters[next];
        activity.ci_low = low.map(|v| v * factor);
        activity.ci_high = high.map(|v| v * factor);
        activity.ci_method = "profile".into();
    }
    if !unbounded.is_empty() {
        summary.warnings.push(format!(
            "The profile interval of {} is open on at least one side: within the search the data do not bound it at this confidence level.",
            unbounded.join(", ")
        ));
    }
}

/// Replaces every interval by a bootstrap percentile interval; derived
/// constants are computed from each resample's parameters.
fn bootstrap_intervals(
    summary: &mut FitSummary,
    model: &dyn Model,
    data: &Observations,
    fit: &Fit,
    settings: &BootstrapSettings,
    factors: DerivedFactors,
) -> Result<BootstrapReport, Error> {
    let DerivedFactors { kcat: kcat_factor, specificity: specificity_factor, activity: protein_factor } = factors;
    // The fitted constants go through the step every analysis shares; the
    // derived ones are computed from the same resamples.
    let sample = apply_interval_method(summary, model, data, fit, IntervalMethod::Bootstrap, settings)?
        .expect("the bootstrap method returns its sample");
    let column = |f: &dyn Fn(&[f64]) -> f64| -> Vec<f64> { sample.estimates.iter().map(|p| f(p)).collect() };
    // Each replicate's standard error of a derived constant, by the delta
    // method from that replicate's covariance, for the studentised interval.
    let se_column = |f: &dyn Fn(&[f64], &DMatrix<f64>) -> f64| -> Vec<Option<f64>> {
        sample.estimates.iter().zip(&sample.covariances).map(|(p, c)| c.as_ref().map(|c| f(p, c))).collect()
    };
    let mut derived: Vec<(Vec<f64>, Vec<Option<f64>>)> = Vec::new();
    if let Some(factor) = kcat_factor {
        derived.push((column(&|p| p[0] * factor), se_column(&|_, c| c[(0, 0)].sqrt() * factor)));
    }
    if let Some(scale) = specificity_factor {
        derived.push((
            column(&|p| scale * p[0] / p[1]),
            se_column(&|p, c| {
                let (dv, dk) = (scale / p[1], -scale * p[0] / (p[1] * p[1]));
                (dv * dv * c[(0, 0)] + dk * dk * c[(1, 1)] + 2.0 * dv * dk * c[(0, 1)]).sqrt()
            }),
        ));
    }
    if let Some(factor) = protein_factor {
        derived.push((column(&|p| p[0] * factor), se_column(&|_, c| c[(0, 0)].sqrt() * factor)));
    }
    let n_fitted = fit.values().len();
    for (estimate, (values, ses)) in summary.parameters[n_fitted..].iter_mut().zip(&derived) {
        let (low, high) =
            bootstrap_interval(settings, estimate.value, estimate.std_error, values, ses, summary.confidence_level, fit.t_quantile);
        estimate.ci_low = low;
        estimate.ci_high = high;
        estimate.ci_method = IntervalMethod::Bootstrap.name().into();
    }
    let resamples = if fit.summary.converged { settings.resamples } else { 0 };
    Ok(BootstrapReport {
        resamples,
        failures: sample.failures,
        seed: settings.seed,
        scheme: settings.scheme,
        interval: settings.interval.name().to_string(),
    })
}

/// Rates per the chosen time unit (`rate_time`: `s`, `min`, `h`; `None` or
/// empty keeps the unit as read): v in c/T_old is v·(T_new/T_old) in
/// c/T_new. Returns the unit the rates are reported in and the factor
/// every rate (and sd) is multiplied by, with a note when it is not 1.
/// Shared by every analysis that fits rates (rates, inhibition).
pub(crate) fn per_time<U: PerTime>(
    rate_unit: Option<U>,
    rate_time: &Option<String>,
    notes: &mut Vec<String>,
) -> Result<(Option<U>, f64), Error> {
    Ok(match rate_time.as_deref().map(str::trim).filter(|t| !t.is_empty()) {
        None => (rate_unit, 1.0),
        Some(text) => {
            let time = TimeUnit::parse(text).map_err(Error::invalid_option)?;
            let Some(unit) = rate_unit else {
                return Err(Error::invalid_option(format!(
                    "rates per {} need the unit of v (a concentration per time); choose it or write it in the header",
                    time.symbol()
                )));
            };
            let factor = time.in_seconds() / unit.time().in_seconds();
            let converted = unit.with_time(time);
            if factor != 1.0 {
                let by = crate::units::factor_words(factor);
                notes.push(format!(
                    "Rates are reported per {}: v in {} {by} = v in {} (the rates and any sd column were converted before the fit).",
                    time.symbol(),
                    unit,
                    converted
                ));
            }
            (Some(converted), factor)
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn request(text: &str) -> RateRequest {
        RateRequest { text: text.to_string(), ..RateRequest::default() }
    }

    /// A two-column table whose header names are not all known: the note
    /// names only the unknown ones; `specific activity` is a rate name.
    #[test]
    fn the_note_on_unknown_header_names_names_only_those() {
        let notes = |header: &str| {
            let text = format!("{header}\n0.1\t2.1\n0.2\t3.6\n0.5\t6.1\n1\t7.9\n2\t9.2\n5\t10.3\n");
            analyse_rates(&RateRequest { text, ..RateRequest::default() }).unwrap().notes
        };
        assert!(notes("conc\tsignal").contains(
            &"The header name 'signal' is not one Turnover knows; column 1 is read as [S] and column 2 as v.".to_string()
        ));
        assert!(notes("dose\tsignal").contains(
            &"The header names 'dose' and 'signal' are not ones Turnover knows; column 1 is read as [S] and column 2 as v.".to_string()
        ));
        assert!(notes("[S] (mM)\tSpecific activity (U/mg)").iter().all(|n| !n.contains("Turnover knows")));
    }

    #[test]
    fn header_units_are_used_and_kcat_is_converted() {
        let text = "[S] (µM)\tv (µM/min)\n1\t0.99\n2\t1.66\n5\t2.86\n10\t3.33\n20\t3.64\n50\t3.85\n";
        let mut req = request(text);
        req.enzyme = Some(10.0);
        req.enzyme_unit = Some("nM".into());
        let result = analyse_rates(&req).unwrap();
        assert_eq!(result.units.substrate.as_deref(), Some("µM"));
        assert_eq!(result.units.rate.as_deref(), Some("µM/min"));
        let p = &result.fit.parameters;
        assert_eq!(p.iter().map(|p| p.name.as_str()).collect::<Vec<_>>(), ["Vmax", "Km", "kcat", "kcat/Km"]);
        // kcat = Vmax[µM/min] · 1e-6/60 M/s per 1e-8 M.
        let expected_kcat = p[0].value * 1e-6 / 60.0 / 1e-8;
        assert!((p[2].value - expected_kcat).abs() < 1e-12 * expected_kcat);
        let expected_specificity = expected_kcat / (p[1].value * 1e-6);
        assert!((p[3].value - expected_specificity).abs() < 1e-9 * expected_specificity);
        assert!(p[3].std_error.unwrap() > 0.0);
    }

    #[test]
    fn excluded_lines_are_left_out() {
        let text = "S\tv\n1\t0.99\n2\t1.66\n5\t2.86\n10\t9.0\n20\t3.64\n50\t3.85\n";
        let all = analyse_rates(&request(text)).unwrap();
        let mut req = request(text);
        req.excluded_lines = vec![5];
        let fewer = analyse_rates(&req).unwrap();
        assert_eq!(all.fit.n, 6);
        assert_eq!(fewer.fit.n, 5);
        assert!(fewer.points[3].excluded);
        assert_ne!(all.fit.parameters[1].value, fewer.fit.parameters[1].value);
    }

    #[test]
    fn problems_are_reported_and_the_rest_is_fitted() {
        let text = "S\tv\n0.1\t1.0\n0.2\tabc\n0.5\t2.0\n1.0\t2.5\n2.0\t2.8\n";
        let result = analyse_rates(&request(text)).unwrap();
        assert_eq!(result.problems.len(), 1);
        assert_eq!(result.problems[0].to_string(), "line 3, column 2: expected a number, found 'abc'");
        assert_eq!(result.fit.n, 4);
    }

    /// When too few points remain, the message lists why each row is
    /// missing, line by line.
    #[test]
    fn shortage_lists_the_reasons() {
        let error = analyse_rates(&request("S\tv\nn/a\t1\n2\t#DIV/0!\n3\n")).unwrap_err();
        assert_eq!(
            error.message,
            "only 0 usable point(s) remain; at least 3 are needed to fit 2 parameters with an uncertainty. Why rows are missing: \
             line 2, column 1: expected a number, found 'n/a'; \
             line 3, column 2: '#DIV/0!' is a spreadsheet error, not a number; fix the formula in the spreadsheet or leave the row out; \
             line 4: expected 2 columns, found 1"
        );
    }

    /// Replicates that agree exactly with a perfect fit leave no pure error:
    /// the lack-of-fit F would be 0/0, which made statrs panic (found by the
    /// `table` fuzz target). Now no lack-of-fit test is reported.
    #[test]
    fn exact_replicates_give_no_lack_of_fit_test() {
        // Replicates that agree exactly but a curve that does not pass
        // through every mean: pure error 0, lack of fit above 0.
        let analysis = analyse_rates(&request("S\tv\n1\t5\n1\t5\n2\t7\n2\t7\n4\t8.5\n4\t8.5\n8\t8.6\n8\t8.6\n")).unwrap();
        assert!(analysis.diagnostics.lack_of_fit.is_none());
        // All rates equal (the input the fuzz target found): no curve to fit,
        // said in words instead of constants with a false zero error.
        let flat = analyse_rates(&request("S\tv\n1\t5\n1\t5\n2\t5\n2\t5\n3\t5\n3\t5\n")).unwrap_err();
        assert!(flat.message.contains("every response is 5"), "{}", flat.message);
    }

    /// Fatal inputs and the message each must give.
    #[test]
    fn fatal_inputs() {
        let cases = [
            ("", "no data rows found"),
            ("# only a comment\n", "no data rows found"),
            ("S\tv\n1\t2\n2\t3\n", "only 2 usable point(s) remain"),
            ("time\ttemp\tabs\n1\t2\t3\n", "cannot tell which columns hold [S] and v"),
            ("1\n2\n3\n", "the table needs two columns"),
            ("S\tv\n1\t2\n1\t2.1\n1\t1.9\n", "only 1 distinct [S] value(s)"),
            ("S\tv\n1\t-1\n2\t-2\n3\t-2.5\n", "enter the rates as positive numbers"),
        ];
        for (text, expected) in cases {
            let error = analyse_rates(&request(text)).unwrap_err();
            assert!(error.message.contains(expected), "{text:?}: {}", error.message);
        }
        let mut req = request("S\tv\n1\t1\n2\t1.5\n4\t2\n");
        req.substrate_unit = Some("ppm".into());
        assert!(analyse_rates(&req).unwrap_err().message.contains("unknown concentration unit 'ppm'"));
        req.substrate_unit = None;
        req.enzyme = Some(-1.0);
        req.enzyme_unit = Some("nM".into());
        assert!(analyse_rates(&req).unwrap_err().message.contains("must be a positive number"));
    }

    /// With weights from the fitted curve, the comparison of rate laws holds
    /// one set of weights (from the law with most parameters) for every law:
    /// then a nested law can never fit better than the law that contains it
    /// (least squares with the same weights; common practice, no source),
    /// and the verdict says so.
    #[test]
    fn rate_laws_are_compared_with_the_same_weights() {
        let text = "S\tv\n0.1\t1.9\n0.2\t3.1\n0.5\t5.3\n1\t6.4\n2\t7.4\n5\t8.4\n10\t8.9\n20\t9.0\n";
        let mut req = request(text);
        req.weighting = Weighting::Relative;
        let models: Vec<String> = ["mm", "hill", "substrate-inhibition"].iter().map(|m| m.to_string()).collect();
        let c = compare_rate_models(&req, &models).unwrap();
        assert!(c.comparison.verdict.contains("the same relative weights"), "{}", c.comparison.verdict);
        assert!(c.fits.iter().all(|f| f.reweighting_rounds == c.fits[0].reweighting_rounds));
        for general in &c.fits[1..] {
            assert!(general.rss <= c.fits[0].rss * (1.0 + 1e-9), "{}: {} vs mm {}", general.model, general.rss, c.fits[0].rss);
        }
        assert!(c.first.notes.iter().any(|n| n.contains("used unchanged for every rate law")), "{:?}", c.first.notes);
    }

    /// Weights 1/v² on the measured rates (Turnover 0.1's `relative`, kept
    /// for analyses saved then) are fixed weights: the same fit, to the last
    /// bit of every constant, as weighting by an sd column equal to v
    /// (1/sd² = 1/v²), and different from weights taken from the curve.
    #[test]
    fn weights_on_measured_rates_are_fixed_weights() {
        let rows = [(0.1, 1.9), (0.2, 3.1), (0.5, 5.3), (1.0, 6.4), (2.0, 7.4), (5.0, 8.4), (10.0, 8.9)];
        let plain: String = std::iter::once("S\tv\n".to_string()).chain(rows.iter().map(|(s, v)| format!("{s}\t{v}\n"))).collect();
        let with_sd: String = std::iter::once("S\tv\tsd\n".to_string()).chain(rows.iter().map(|(s, v)| format!("{s}\t{v}\t{v}\n"))).collect();
        let mut measured = request(&plain);
        measured.weighting = Weighting::RelativeMeasured;
        let mut sd = request(&with_sd);
        sd.weighting = Weighting::Sd;
        let mut fitted = request(&plain);
        fitted.weighting = Weighting::Relative;
        let (a, b, c) = (analyse_rates(&measured).unwrap(), analyse_rates(&sd).unwrap(), analyse_rates(&fitted).unwrap());
        for (p, q) in a.fit.parameters.iter().zip(&b.fit.parameters) {
            assert_eq!(p.value, q.value, "{}", p.name);
            assert_eq!(p.std_error, q.std_error, "{}", p.name);
        }
        assert_ne!(a.fit.parameters[0].value, c.fit.parameters[0].value);
        assert_eq!(a.fit.weighting, "relative_measured");
    }

    /// Replicates in columns (invented data, stated as such) and the same
    /// rates written one per line in the same order: the fit, the
    /// lack-of-fit test and the per-[S] summary must agree to 1e-12.
    #[test]
    fn replicate_columns_read_as_the_long_layout() {
        let wide = [
            "Substrate (µM)\trate rep 1 (µM/min)\trep 2\trep 3\n1\t0.98\t1.04\t0.95\n2\t1.70\t1.62\t1.66\n5\t2.80\t2.93\t2.86\n10\t3.31\t3.40\t3.22\n20\t3.70\t3.58\t3.66\n50\t3.83\t3.90\t3.81\n",
            "[S] (µM)\tv1 (µM/min)\tv2 (µM/min)\tv3\n1\t0.98\t1.04\t0.95\n2\t1.70\t1.62\t1.66\n5\t2.80\t2.93\t2.86\n10\t3.31\t3.40\t3.22\n20\t3.70\t3.58\t3.66\n50\t3.83\t3.90\t3.81\n",
            "S (µM),replicate A (µM/min),replicate B,replicate C\n1,0.98,1.04,0.95\n2,1.70,1.62,1.66\n5,2.80,2.93,2.86\n10,3.31,3.40,3.22\n20,3.70,3.58,3.66\n50,3.83,3.90,3.81\n",
        ];
        let mut long = String::from("S (µM)\tv (µM/min)\n");
        for row in ["1\t0.98\t1.04\t0.95", "2\t1.70\t1.62\t1.66", "5\t2.80\t2.93\t2.86", "10\t3.31\t3.40\t3.22", "20\t3.70\t3.58\t3.66", "50\t3.83\t3.90\t3.81"] {
            let cells: Vec<&str> = row.split('\t').collect();
            for v in &cells[1..] {
                long.push_str(&format!("{}\t{v}\n", cells[0]));
            }
        }
        let mut req = request(&long);
        req.enzyme = Some(10.0);
        req.enzyme_unit = Some("nM".into());
        let reference = analyse_rates(&req).unwrap();
        assert_eq!(reference.fit.n, 18);
        let lof = reference.diagnostics.lack_of_fit.as_ref().expect("replicates give a lack-of-fit test");
        for text in wide {
            req.text = text.to_string();
            let result = analyse_rates(&req).unwrap();
            assert!(result.problems.is_empty(), "{text}: {:?}", result.problems);
            assert_eq!(result.units.rate.as_deref(), Some("µM/min"), "{text}");
            assert_eq!(result.fit.n, 18, "{text}");
            for (a, b) in result.fit.parameters.iter().zip(&reference.fit.parameters) {
                assert_eq!(a.name, b.name);
                assert!((a.value - b.value).abs() <= 1e-12 * b.value.abs(), "{text}: {} {} {}", a.name, a.value, b.value);
                let (sa, sb) = (a.std_error.unwrap(), b.std_error.unwrap());
                assert!((sa - sb).abs() <= 1e-12 * sb, "{text}: {} SE {sa} {sb}", a.name);
            }
            let other = result.diagnostics.lack_of_fit.as_ref().expect("lack of fit from replicate columns");
            assert_eq!((other.lack_of_fit_dof, lof.lack_of_fit_dof), (4, 4));
            assert!((other.lack_of_fit_ss - lof.lack_of_fit_ss).abs() <= 1e-12 * lof.lack_of_fit_ss.max(1e-300));
            assert_eq!(result.replicates, reference.replicates);
            assert!(result.notes.iter().any(|n| n.starts_with("Replicates in columns: column 1 is the concentration; columns 2 to 4 are 3 replicate(s)")), "{:?}", result.notes);
        }
        // Mean, SD and SEM of the first [S], worked by hand.
        let first = &reference.replicates[0];
        let mean = (0.98 + 1.04 + 0.95) / 3.0;
        let sd = (((0.98f64 - mean).powi(2) + (1.04f64 - mean).powi(2) + (0.95f64 - mean).powi(2)) / 2.0).sqrt();
        assert_eq!((first.concentration, first.count), (1.0, 3));
        assert!((first.mean - mean).abs() < 1e-15 && (first.sd.unwrap() - sd).abs() < 1e-15);
        assert!((first.sem.unwrap() - sd / 3f64.sqrt()).abs() < 1e-15);
    }

    /// An empty replicate cell is a measurement not made (counted in a
    /// note); one cell can be left out on its own; unlabelled numbers are
    /// replicates; a bad cell is still a problem at its line and column.
    #[test]
    fn replicate_cells() {
        let text = "S\tv\tv\tv\n1\t0.98\t\t0.95\n2\t1.70\t1.62\t1.66\n5\t2.80\tabc\t2.86\n10\t3.31\t3.40\n20\t3.70\t3.58\t3.66\n";
        let result = analyse_rates(&request(text)).unwrap();
        assert_eq!(result.fit.n, 12);
        assert_eq!(result.problems.iter().map(ToString::to_string).collect::<Vec<_>>(), ["line 4, column 3: expected a number, found 'abc'"]);
        assert!(result.notes.iter().any(|n| n.contains("2 empty replicate cell(s) are read as measurements not made")), "{:?}", result.notes);
        let mut req = request(text);
        req.excluded_cells = vec![(3, 3)];
        let fewer = analyse_rates(&req).unwrap();
        assert_eq!(fewer.fit.n, 11);
        assert!(fewer.points.iter().filter(|p| p.excluded).map(|p| (p.line, p.column)).eq([(3, 3)]));
        req.excluded_cells.clear();
        req.excluded_lines = vec![3];
        assert_eq!(analyse_rates(&req).unwrap().fit.n, 9);
        let bare = analyse_rates(&request("1\t0.98\t0.95\n2\t1.70\t1.62\n5\t2.80\t2.86\n10\t3.31\t3.40\n")).unwrap();
        assert_eq!(bare.fit.n, 8);
        let error = analyse_rates(&request("S\tv1 (µM/s)\tv2 (µM/min)\n1\t2\t3\n")).unwrap_err();
        assert!(error.message.contains("different units"), "{}", error.message);
    }

    /// Rates per second, minute or hour: Vmax and its SE scale by the
    /// ratio of the time units (60 for min to s), Km and kcat do not
    /// change; the note states the factor. Agreement to 1e-9 relative (the
    /// solver works on numbers 60 times apart).
    #[test]
    fn rates_are_reported_per_the_chosen_time_unit() {
        let text = "[S] (µM)\tv (µM/min)\n1\t0.99\n2\t1.66\n5\t2.86\n10\t3.33\n20\t3.64\n50\t3.85\n";
        let mut req = request(text);
        req.enzyme = Some(10.0);
        req.enzyme_unit = Some("nM".into());
        let per_min = analyse_rates(&req).unwrap();
        for (time, factor) in [("s", 1.0 / 60.0), ("h", 60.0), ("min", 1.0)] {
            req.rate_time = Some(time.into());
            let other = analyse_rates(&req).unwrap();
            assert_eq!(other.units.rate.as_deref(), Some(format!("µM/{time}").as_str()));
            let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs();
            let (a, b) = (&other.fit.parameters, &per_min.fit.parameters);
            assert!(close(a[0].value, b[0].value * factor) && close(a[0].std_error.unwrap(), b[0].std_error.unwrap() * factor), "{time} Vmax");
            for k in 1..4 {
                assert!(close(a[k].value, b[k].value) && close(a[k].std_error.unwrap(), b[k].std_error.unwrap()), "{time} {}", a[k].name);
            }
            let by = if factor > 1.0 { "× 60" } else { "÷ 60" };
            assert_eq!(other.notes.iter().any(|n| n.starts_with(&format!("Rates are reported per {time}: v in µM/min {by} = v in µM/{time}"))), time != "min", "{:?}", other.notes);
        }
        let mut bare = request("S\tv\n1\t1\n2\t1.5\n4\t2\n8\t2.2\n");
        bare.rate_time = Some("s".into());
        assert!(analyse_rates(&bare).unwrap_err().message.contains("need the unit of v"));
        bare.rate_time = Some("week".into());
        assert!(analyse_rates(&bare).is_err());
    }
}
