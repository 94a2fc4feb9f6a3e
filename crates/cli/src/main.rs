//! The `turnover` command: glue between files and `turnover-core`.
//!
//! Every number printed here comes from `turnover_core::rates::analyse_rates`,
//! the same function the page calls. Exit codes are decided in one place,
//! [`main`]: 0 success, 2 bad input or usage, 3 the fit did not converge
//! (its numbers are still printed, marked as such).

mod traces;

use std::io::Read;
use std::process::ExitCode;
use turnover_core::dose::{analyse_dose, ChengPrusoffRequest, DoseRequest};
use turnover_core::fit::FitSummary;
use turnover_core::intervals::{BootstrapScheme, IntervalMethod};
use turnover_core::weighting::Weighting;
use turnover_core::inhibition::{analyse_inhibition, InhibitionRequest};
use turnover_core::models::{model_input, Mechanism, ModelInput, MODEL_NAMES};
use turnover_core::rates::{analyse_rates, compare_rate_models, RateAnalysis, RateRequest};
use turnover_core::table::InputProblem;
use turnover_core::units::ConcentrationUnit;

const USAGE: &str = "\
turnover: enzyme kinetics from the command line

USAGE:
    turnover fit FILE [OPTIONS]        fit a table of [S] and v (FILE '-' reads standard input)
    turnover compare FILE --models LIST [--json]
                                       fit several models to the same data, rank them (AICc,
                                       Akaike weights), F-test nested pairs and give a verdict
    turnover help                      show this text
{TRACE_USAGE}
OPTIONS for fit:
    --model NAME           model to fit (default mm). On [S], v: mm, substrate-inhibition, hill.
                           On [S], [I], v (long or matrix table), fitted globally: competitive,
                           uncompetitive, mixed, noncompetitive. On [I], response: ic50, morrison.
    --json                 print one JSON object instead of a table
    --substrate-unit U     unit of [S] (M, mM, µM or uM, nM, pM); default: from the header
    --rate-unit U          unit of v, a concentration per time (µM/min, nM/s, ...); default: from the header
    --enzyme CONC          total enzyme concentration for kcat, such as '10 nM' or '10nM';
                           for morrison, [E]t in the units of [I] (a bare number)
    --top Y, --bottom Y    fix the top or bottom plateau of the ic50 model
    --cheng-prusoff MECH   with ic50: add Ki converted from the IC50 for a competitive,
                           uncompetitive or noncompetitive inhibitor (Cheng & Prusoff 1973:
                           Ki = IC50/(1 + [S]/Km), IC50/(1 + Km/[S]), IC50); needs --substrate
                           and --km. Assumes classical (not tight-binding) conditions.
    --substrate CONC       [S] of the IC50 assay, such as '50 µM' or a bare number
    --km KM                Km of the substrate, in the same form as --substrate (both bare
                           numbers in one unit, or both with units)
    --km-se SE             standard error of Km (bare: in the unit of --km); default: Km exact
    --enzyme-unit U        unit of --enzyme when CONC is a bare number
    --exclude-lines LIST   input line numbers to leave out of the fit, such as 4,9
    --weighting W          uniform (default), relative (1/v²), poisson (1/v) or sd (1/sd² from an sd column)
    --ci METHOD            asymptotic (default, t-based), profile (profile likelihood) or bootstrap
    --resamples N          bootstrap resamples (default 2000)
    --seed N               bootstrap seed (default 1); the same seed gives the same intervals
    --resample-by WHAT     bootstrap scheme: residuals (default) or cases
    --lenient              fit the usable rows even when some lines have problems
                           (the problems are still reported on standard error)

OPTIONS for compare:
    --models LIST          comma-separated model names, all on the same data: inhibition
                           mechanisms (default: competitive,uncompetitive,mixed,noncompetitive)
                           or mm with substrate-inhibition and/or hill
    --json                 print one JSON object: models, f_tests, preferred, verdict

EXIT CODES:
    0 success; 2 bad input or usage; 3 the fit did not converge.

The constants are statistical estimates; they mean what they claim only for
valid initial-rate data. Follow your laboratory's validated procedures.
";

fn usage() -> String {
    USAGE.replace("{TRACE_USAGE}", traces::USAGE)
}

/// A failure with the exit code it maps to.
enum Failure {
    Usage(String),
    Input(String),
}

struct FitArgs {
    file: String,
    json: bool,
    lenient: bool,
    request: RateRequest,
    models: Vec<String>,
    top: Option<f64>,
    bottom: Option<f64>,
    cheng_prusoff: Option<ChengPrusoffRequest>,
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match run(&args) {
        Ok(code) => code,
        Err(Failure::Usage(message)) => {
            eprintln!("turnover: {message}\n\n{}", usage());
            ExitCode::from(2)
        }
        Err(Failure::Input(message)) => {
            eprintln!("turnover: {message}");
            ExitCode::from(2)
        }
    }
}

fn run(args: &[String]) -> Result<ExitCode, Failure> {
    match args.first().map(String::as_str) {
        Some("fit") => fit(parse_fit_args(&args[1..])?),
        Some("rates") => traces::rates(&args[1..]),
        Some("fit-progress") => traces::fit_progress_command(&args[1..]),
        Some("compare") => compare(parse_fit_args(&args[1..])?),
        Some("help") | Some("--help") | Some("-h") => {
            print!("{}", usage());
            Ok(ExitCode::SUCCESS)
        }
        Some(other) => Err(Failure::Usage(format!("unknown command '{other}'"))),
        None => Err(Failure::Usage("no command given".to_string())),
    }
}

fn parse_fit_args(args: &[String]) -> Result<FitArgs, Failure> {
    let mut file = None;
    let mut json = false;
    let mut lenient = false;
    let mut request = RateRequest::default();
    let mut enzyme_text: Option<String> = None;
    let mut models = Vec::new();
    let (mut top, mut bottom) = (None, None);
    let mut mechanism: Option<String> = None;
    let (mut substrate_text, mut km_text, mut km_se_text): (Option<String>, Option<String>, Option<String>) = (None, None, None);
    let number = |text: String, name: &str| -> Result<f64, Failure> {
        text.trim().parse::<f64>().ok().filter(|v| v.is_finite()).ok_or_else(|| Failure::Usage(format!("{name}: '{text}' is not a number")))
    };
    let mut i = 0;
    let value = |i: &mut usize, name: &str| -> Result<String, Failure> {
        *i += 1;
        args.get(*i).cloned().ok_or_else(|| Failure::Usage(format!("{name} needs a value")))
    };
    while i < args.len() {
        match args[i].as_str() {
            "--json" => json = true,
            "--lenient" => lenient = true,
            "--model" => request.model = value(&mut i, "--model")?,
            "--models" => {
                models = value(&mut i, "--models")?.split(',').map(|m| m.trim().to_string()).filter(|m| !m.is_empty()).collect()
            }
            "--top" => top = Some(number(value(&mut i, "--top")?, "--top")?),
            "--bottom" => bottom = Some(number(value(&mut i, "--bottom")?, "--bottom")?),
            "--cheng-prusoff" => mechanism = Some(value(&mut i, "--cheng-prusoff")?),
            "--substrate" => substrate_text = Some(value(&mut i, "--substrate")?),
            "--km" => km_text = Some(value(&mut i, "--km")?),
            "--km-se" => km_se_text = Some(value(&mut i, "--km-se")?),
            "--substrate-unit" => request.substrate_unit = Some(value(&mut i, "--substrate-unit")?),
            "--rate-unit" => request.rate_unit = Some(value(&mut i, "--rate-unit")?),
            "--enzyme" => enzyme_text = Some(value(&mut i, "--enzyme")?),
            "--enzyme-unit" => request.enzyme_unit = Some(value(&mut i, "--enzyme-unit")?),
            "--weighting" => {
                request.weighting = Weighting::from_name(&value(&mut i, "--weighting")?).map_err(Failure::Usage)?
            }
            "--ci" => {
                request.interval_method = IntervalMethod::from_name(&value(&mut i, "--ci")?).map_err(Failure::Usage)?
            }
            "--resamples" => {
                let text = value(&mut i, "--resamples")?;
                request.bootstrap.resamples =
                    text.parse().map_err(|_| Failure::Usage(format!("--resamples: '{text}' is not a whole number")))?;
            }
            "--seed" => {
                let text = value(&mut i, "--seed")?;
                request.bootstrap.seed =
                    text.parse().map_err(|_| Failure::Usage(format!("--seed: '{text}' is not a whole number")))?;
            }
            "--resample-by" => {
                request.bootstrap.scheme = match value(&mut i, "--resample-by")?.as_str() {
                    "residuals" => BootstrapScheme::Residual,
                    "cases" => BootstrapScheme::Case,
                    other => return Err(Failure::Usage(format!("--resample-by: expected residuals or cases, found '{other}'"))),
                }
            }
            "--exclude-lines" => {
                let list = value(&mut i, "--exclude-lines")?;
                for part in list.split(',').map(str::trim).filter(|p| !p.is_empty()) {
                    let line = part
                        .parse::<usize>()
                        .map_err(|_| Failure::Usage(format!("--exclude-lines: '{part}' is not a line number")))?;
                    request.excluded_lines.push(line);
                }
            }
            flag if flag.starts_with("--") => return Err(Failure::Usage(format!("unknown option '{flag}'"))),
            path => {
                if file.replace(path.to_string()).is_some() {
                    return Err(Failure::Usage("give one input file".to_string()));
                }
            }
        }
        i += 1;
    }
    if let Some(text) = enzyme_text {
        let (number, unit) = split_quantity(&text)
            .ok_or_else(|| Failure::Usage(format!("--enzyme: '{text}' is not a concentration such as '10 nM'")))?;
        request.enzyme = Some(number);
        if let Some(unit) = unit {
            request.enzyme_unit = Some(unit);
        }
    }
    let cheng_prusoff = conversion_request(mechanism, substrate_text, km_text, km_se_text)?;
    let name = request.model.trim();
    if cheng_prusoff.is_some() && name != "ic50" {
        return Err(Failure::Usage(format!(
            "--cheng-prusoff converts the IC50 of the ic50 model; it does not apply to {}",
            if name.is_empty() { "mm" } else { name }
        )));
    }
    if (top.is_some() || bottom.is_some()) && name != "ic50" {
        return Err(Failure::Usage("--top and --bottom fix the plateaus of the ic50 model; they apply to no other model".to_string()));
    }
    let file = file.ok_or_else(|| Failure::Usage("fit needs an input file ('-' for standard input)".to_string()))?;
    Ok(FitArgs { file, json, lenient, request, models, top, bottom, cheng_prusoff })
}

/// Reads `--cheng-prusoff`, `--substrate`, `--km` and `--km-se` into one
/// request, [S] and Km's error expressed in the unit of Km. Refuses any of
/// the numbers without the mechanism, and the mechanism without [S] and Km.
fn conversion_request(
    mechanism: Option<String>,
    substrate: Option<String>,
    km: Option<String>,
    km_se: Option<String>,
) -> Result<Option<ChengPrusoffRequest>, Failure> {
    let Some(mechanism) = mechanism else {
        for (given, name) in [(&substrate, "--substrate"), (&km, "--km"), (&km_se, "--km-se")] {
            if given.is_some() {
                return Err(Failure::Usage(format!("{name} is used only with --cheng-prusoff MECHANISM")));
            }
        }
        return Ok(None);
    };
    let (Some(substrate), Some(km)) = (substrate, km) else {
        return Err(Failure::Usage("--cheng-prusoff needs both --substrate (the assay's [S]) and --km".to_string()));
    };
    let quantity = |text: &str, name: &str| -> Result<(f64, Option<ConcentrationUnit>), Failure> {
        let (value, unit) = split_quantity(text)
            .filter(|(v, _)| v.is_finite())
            .ok_or_else(|| Failure::Usage(format!("{name}: '{text}' is not a concentration such as '50 µM' or '50'")))?;
        let unit = unit.map(|u| ConcentrationUnit::parse(&u).map_err(|m| Failure::Usage(format!("{name}: {m}")))).transpose()?;
        Ok((value, unit))
    };
    let (km_value, km_unit) = quantity(&km, "--km")?;
    let (s_value, s_unit) = quantity(&substrate, "--substrate")?;
    let in_km_unit = |value: f64, unit: Option<ConcentrationUnit>, name: &str| -> Result<f64, Failure> {
        match (unit, km_unit) {
            (Some(u), Some(k)) => Ok(value * u.in_molar() / k.in_molar()),
            (None, None) => Ok(value),
            (None, Some(_)) if name == "--km-se" => Ok(value),
            _ => Err(Failure::Usage(format!(
                "{name} and --km must both carry a unit (such as '50 µM') or both be bare numbers in one unit"
            ))),
        }
    };
    let substrate = in_km_unit(s_value, s_unit, "--substrate")?;
    let km_se = match km_se {
        Some(text) => {
            let (value, unit) = quantity(&text, "--km-se")?;
            Some(in_km_unit(value, unit, "--km-se")?)
        }
        None => None,
    };
    Ok(Some(ChengPrusoffRequest { mechanism, substrate, km: km_value, km_se }))
}

/// Splits `10 nM`, `10nM` or `10` into the number and an optional unit.
fn split_quantity(text: &str) -> Option<(f64, Option<String>)> {
    let text = text.trim();
    let end = text
        .char_indices()
        .find(|(_, c)| !(c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E')))
        .map_or(text.len(), |(i, _)| i);
    // An exponent marker directly followed by a unit letter ("1e" in "1em")
    // is not a number; let the parse below refuse it.
    let number = text[..end].parse::<f64>().ok()?;
    let unit = text[end..].trim();
    Some((number, (!unit.is_empty()).then(|| unit.to_string())))
}

pub(crate) fn read_input(path: &str) -> Result<String, Failure> {
    if path == "-" {
        let mut text = String::new();
        std::io::stdin()
            .read_to_string(&mut text)
            .map_err(|e| Failure::Input(format!("cannot read standard input: {e}")))?;
        Ok(text)
    } else {
        std::fs::read_to_string(path).map_err(|e| Failure::Input(format!("cannot read '{path}': {e}")))
    }
}

fn fit(mut args: FitArgs) -> Result<ExitCode, Failure> {
    args.request.text = read_input(&args.file)?;
    let name = if args.request.model.trim().is_empty() { "mm".to_string() } else { args.request.model.trim().to_string() };
    match model_input(&name) {
        Some(ModelInput::SubstrateAndInhibitor) => {
            let request = inhibition_request(&args, vec![name]);
            let analysis = analyse_inhibition(&request).map_err(|e| Failure::Input(e.message))?;
            check_problems(&args, &analysis.problems)?;
            let fit = &analysis.fits[0];
            let extra = serde_json::json!({
                "problems": analysis.problems, "notes": analysis.notes, "units": analysis.units,
                "points": analysis.points, "caution": analysis.caution,
            });
            return Ok(print_fit(&args, fit, extra, &analysis.notes, &analysis.caution));
        }
        Some(ModelInput::Inhibitor) => {
            let request = DoseRequest {
                text: args.request.text.clone(),
                model: name,
                enzyme: args.request.enzyme,
                fixed_top: args.top,
                fixed_bottom: args.bottom,
                excluded_lines: args.request.excluded_lines.clone(),
                interval_method: args.request.interval_method,
                bootstrap: args.request.bootstrap,
                weighting: args.request.weighting,
                cheng_prusoff: args.cheng_prusoff.clone(),
            };
            let analysis = analyse_dose(&request).map_err(|e| Failure::Input(e.message))?;
            check_problems(&args, &analysis.problems)?;
            let extra = serde_json::json!({
                "problems": analysis.problems, "notes": analysis.notes, "units": {"inhibitor": analysis.inhibitor_unit},
                "points": analysis.points, "caution": analysis.caution,
            });
            return Ok(print_fit(&args, &analysis.fit, extra, &analysis.notes, &analysis.caution));
        }
        _ => {}
    }
    let analysis = analyse_rates(&args.request).map_err(|e| Failure::Input(e.message))?;
    report_problems(&args.file, &analysis.problems);
    if !analysis.problems.is_empty() && !args.lenient {
        return Err(Failure::Input(format!(
            "{} problem(s) in the input; fix them, or pass --lenient to fit the remaining rows",
            analysis.problems.len()
        )));
    }
    if args.json {
        println!("{}", to_json(&analysis));
    } else {
        print!("{}", to_table(&analysis));
    }
    Ok(if analysis.fit.converged { ExitCode::SUCCESS } else { ExitCode::from(3) })
}

/// The inhibition request for the table and options of `args`.
fn inhibition_request(args: &FitArgs, models: Vec<String>) -> InhibitionRequest {
    InhibitionRequest {
        text: args.request.text.clone(),
        models,
        excluded_lines: args.request.excluded_lines.clone(),
        excluded_cells: Vec::new(),
        substrate_unit: args.request.substrate_unit.clone(),
        inhibitor_unit: None,
        rate_unit: args.request.rate_unit.clone(),
        interval_method: args.request.interval_method,
        bootstrap: args.request.bootstrap,
        weighting: args.request.weighting,
    }
}

fn check_problems(args: &FitArgs, problems: &[InputProblem]) -> Result<(), Failure> {
    report_problems(&args.file, problems);
    if !problems.is_empty() && !args.lenient {
        return Err(Failure::Input(format!(
            "{} problem(s) in the input; fix them, or pass --lenient to fit the remaining rows",
            problems.len()
        )));
    }
    Ok(())
}

fn print_fit(args: &FitArgs, fit: &FitSummary, extra: serde_json::Value, notes: &[String], caution: &str) -> ExitCode {
    if args.json {
        println!("{}", fit_json(fit, extra));
    } else {
        print!("{}", fit_table(fit, "", notes, caution));
    }
    if fit.converged {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(3)
    }
}

fn compare(mut args: FitArgs) -> Result<ExitCode, Failure> {
    args.request.text = read_input(&args.file)?;
    let models = if args.models.is_empty() {
        Mechanism::ALL.iter().map(|m| m.name().to_string()).collect()
    } else {
        args.models.clone()
    };
    let inputs: Vec<Option<ModelInput>> = models.iter().map(|m| model_input(m)).collect();
    if let Some(k) = inputs.iter().position(Option::is_none) {
        return Err(Failure::Usage(format!("unknown model '{}'; available: {}", models[k], MODEL_NAMES.join(", "))));
    }
    let (comparison, fits, problems, notes, caution) = if inputs.iter().all(|i| *i == Some(ModelInput::SubstrateAndInhibitor)) {
        let request = inhibition_request(&args, models);
        let a = analyse_inhibition(&request).map_err(|e| Failure::Input(e.message))?;
        (a.comparison, a.fits, a.problems, a.notes, a.caution)
    } else if inputs.iter().all(|i| *i == Some(ModelInput::Substrate)) {
        let c = compare_rate_models(&args.request, &models).map_err(|e| Failure::Input(e.message))?;
        (c.comparison, c.fits, c.first.problems, c.first.notes, c.first.caution)
    } else {
        return Err(Failure::Usage(
            "compare needs models of the same data: all inhibition mechanisms, or mm with substrate-inhibition and hill".to_string(),
        ));
    };
    check_problems(&args, &problems)?;
    if args.json {
        let value = serde_json::json!({
            "models": comparison.models,
            "f_tests": comparison.f_tests,
            "preferred": comparison.preferred,
            "candidates": comparison.candidates,
            "verdict": comparison.verdict,
            "problems": problems,
            "notes": notes,
            "caution": caution,
        });
        println!("{}", serde_json::to_string_pretty(&value).expect("JSON values always serialise"));
    } else {
        let mut out = String::new();
        out.push_str(&format!("{:<22} {:>12} {:>5} {:>12} {:>8}  parameters\n", "model", "RSS", "dof", "AICc", "weight"));
        for m in &comparison.models {
            let params: Vec<String> = m.parameters.iter().map(|p| format!("{} = {}", p.name, number(Some(p.value)))).collect();
            out.push_str(&format!(
                "{:<22} {:>12} {:>5} {:>12} {:>8}  {}\n",
                m.model,
                number(Some(m.rss)),
                m.dof,
                number(m.aicc),
                m.akaike_weight.map_or("—".to_string(), |w| format!("{w:.3}")),
                params.join(", ")
            ));
        }
        out.push('\n');
        for t in &comparison.f_tests {
            out.push_str(&format!("F test {} inside {}: F = {:.3} on ({}, {}) df, p = {}\n", t.simpler, t.general, t.f, t.df_extra, t.df_general, number(Some(t.p_value))));
        }
        out.push_str(&format!("\nVerdict: {}\n", comparison.verdict));
        for note in &notes {
            out.push_str(&format!("note: {note}\n"));
        }
        for fit in &fits {
            for w in &fit.warnings {
                out.push_str(&format!("warning ({}): {w}\n", fit.model));
            }
        }
        out.push_str(&format!("\n{caution}\n"));
        print!("{out}");
    }
    Ok(ExitCode::SUCCESS)
}

fn report_problems(file: &str, problems: &[InputProblem]) {
    for problem in problems {
        eprintln!("{file}: {problem}");
    }
}

/// The JSON form: the fit record's fields at the top level, then the input
/// problems, notes, units, points and the caution.
fn to_json(analysis: &RateAnalysis) -> String {
    let extra = serde_json::json!({
        "problems": analysis.problems,
        "notes": analysis.notes,
        "units": analysis.units,
        "points": analysis.points,
        "diagnostics": analysis.diagnostics,
        "direct_linear": analysis.direct_linear,
        "bootstrap": analysis.bootstrap,
        "error_structure": analysis.error_structure,
        "caution": analysis.caution,
    });
    fit_json(&analysis.fit, extra)
}

/// The fit record's fields at the top level, then `extra`'s.
fn fit_json(fit: &FitSummary, extra: serde_json::Value) -> String {
    let mut value = serde_json::to_value(fit).expect("a fit record always serialises");
    let object = value.as_object_mut().expect("a fit record is an object");
    for (key, item) in extra.as_object().expect("built as an object") {
        object.insert(key.clone(), item.clone());
    }
    serde_json::to_string_pretty(&value).expect("JSON values always serialise")
}

fn number(value: Option<f64>) -> String {
    match value {
        Some(v) => format_significant(v, 5),
        None => "—".to_string(),
    }
}

/// Formats with `digits` significant figures, switching to exponent form
/// for very large or small magnitudes.
pub(crate) fn format_significant(value: f64, digits: usize) -> String {
    if value == 0.0 || !value.is_finite() {
        return format!("{value}");
    }
    let magnitude = value.abs().log10().floor() as i32;
    if !(-4..6).contains(&magnitude) {
        return format!("{:.*e}", digits - 1, value);
    }
    let decimals = (digits as i32 - 1 - magnitude).max(0) as usize;
    format!("{value:.decimals$}")
}

fn to_table(analysis: &RateAnalysis) -> String {
    let mut extra = String::new();
    let diagnostics = &analysis.diagnostics;
    if let Some(runs) = &diagnostics.runs {
        extra.push_str(&format!(
            "Runs test: {} runs ({:.1} expected), P(as few or fewer) = {:.3}\n",
            runs.runs, runs.expected, runs.p_too_few
        ));
    }
    if let Some(l) = &diagnostics.lack_of_fit {
        extra.push_str(&format!(
            "Lack of fit: F = {:.3} on {} and {} df, P = {:.3}\n",
            l.f, l.lack_of_fit_dof, l.pure_error_dof, l.p_value
        ));
    }
    if let (Some(km), Some(vmax)) = (analysis.direct_linear.km, analysis.direct_linear.vmax) {
        extra.push_str(&format!(
            "Direct linear plot (medians of {} intersections): Km = {}, Vmax = {}\n",
            analysis.direct_linear.intersections,
            number(Some(km)),
            number(Some(vmax))
        ));
    }
    if let Some(b) = &analysis.bootstrap {
        extra.push_str(&format!("Bootstrap: {} resamples, seed {}, {} refits left out\n", b.resamples, b.seed, b.failures));
    }
    fit_table(&analysis.fit, &extra, &analysis.notes, &analysis.caution)
}

/// The readable table of one fit; `extra` holds further lines (checks)
/// printed before the notes.
fn fit_table(fit: &FitSummary, extra: &str, notes: &[String], caution: &str) -> String {
    let mut out = String::new();
    out.push_str(&format!("Model: {} ({})\n", fit.model, fit.equation));
    out.push_str(&format!("Fit {} after {} iteration(s).\n\n", fit.termination_text, fit.iterations));
    let level = (fit.confidence_level * 100.0).round();
    let method = fit.parameters.first().map_or("asymptotic", |p| p.ci_method.as_str());
    out.push_str(&format!("Weighting: {}; intervals: {}\n\n", fit.weighting, method));
    out.push_str(&format!(
        "{:<10} {:>14} {:>14} {:>30}  {}\n",
        "parameter",
        "value",
        "std. error",
        format!("{level}% interval"),
        "unit"
    ));
    for p in &fit.parameters {
        let interval = match (p.ci_low, p.ci_high) {
            (None, None) => "—".to_string(),
            (low, high) => format!(
                "{} to {}",
                low.map_or("open".to_string(), |v| number(Some(v))),
                high.map_or("open".to_string(), |v| number(Some(v)))
            ),
        };
        out.push_str(&format!(
            "{:<10} {:>14} {:>14} {:>30}  {}\n",
            p.name,
            number(Some(p.value)),
            number(p.std_error),
            interval,
            p.unit.clone().unwrap_or_default()
        ));
    }
    out.push_str(&format!(
        "\nn = {}, degrees of freedom = {}, residual SD = {}, RSS = {}, R² = {}, AICc = {}\n",
        fit.n,
        fit.dof,
        number(fit.sigma),
        number(Some(fit.rss)),
        number(fit.r_squared),
        number(fit.aicc)
    ));
    out.push_str(extra);
    for note in notes {
        out.push_str(&format!("note: {note}\n"));
    }
    for warning in &fit.warnings {
        out.push_str(&format!("warning: {warning}\n"));
    }
    out.push_str(&format!("\n{caution}\n"));
    out
}
