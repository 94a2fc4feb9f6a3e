//! `turnover ph` and `turnover temperature`: a rate or rate constant
//! against pH or against temperature. Glue only: reads the table, calls
//! `turnover_core::ph::analyse_ph` or
//! `turnover_core::temperature::analyse_temperature`, and prints the result
//! as a table or as JSON.

use crate::output::{significant, warn, Output};
use crate::{read_input, usage, Failure};
use clap::Args;
use serde::Serialize;
use std::process::ExitCode;
use turnover_core::compare::Comparison;
use turnover_core::fit::{FitSummary, ParameterEstimate};
use turnover_core::intervals::IntervalMethod;
use turnover_core::ph::{analyse_ph, PhPoint, PhRequest};
use turnover_core::table::InputProblem;
use turnover_core::temperature::{analyse_temperature, CurvatureTest, TemperaturePoint, TemperatureRequest};
use turnover_core::weighting::Weighting;

/// Options both commands share.
#[derive(Args)]
pub(crate) struct ProfileOptions {
    /// The table to read ('-' reads standard input)
    #[arg(value_name = "FILE")]
    file: String,
    /// The heading of the value column, when the table has several (such
    /// as kcat or kcat/Km)
    #[arg(long, value_name = "HEADING")]
    column: Option<String>,
    /// What the weighting assumes about the error of a value
    #[arg(long, value_name = "ERROR", value_parser = crate::weighting_names(), default_value = "proportional")]
    weighting: String,
    /// Confidence intervals of the fitted constants: profile likelihood,
    /// t-based (asymptotic) or bootstrap
    #[arg(long, value_name = "METHOD", value_parser = ["asymptotic", "profile", "bootstrap"], default_value = "profile")]
    ci: String,
    /// Input line numbers to leave out of the fits, such as 4,9
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    exclude_lines: Vec<String>,
    /// Print one JSON object instead of a table
    #[arg(long)]
    json: bool,
    /// Fit the usable rows even when some lines have problems
    #[arg(long)]
    lenient: bool,
}

#[derive(Args)]
pub(crate) struct PhOptions {
    #[command(flatten)]
    common: ProfileOptions,
}

#[derive(Args)]
pub(crate) struct TemperatureOptions {
    #[command(flatten)]
    common: ProfileOptions,
    /// The temperature for ΔG‡ and k, with its unit, such as 25C, '37 °C'
    /// or 310K
    #[arg(long, value_name = "TEMP", default_value = "25 °C")]
    at: String,
}

struct Common {
    text: String,
    weighting: Weighting,
    interval_method: IntervalMethod,
    excluded_lines: Vec<usize>,
}

fn common(command: &'static str, options: &ProfileOptions) -> Result<Common, Failure> {
    let (weighting, note) = Weighting::from_option_name(&options.weighting).map_err(|m| usage(command, m))?;
    if let Some(note) = note {
        warn(&format!("turnover: note: {note}"));
    }
    let interval_method = IntervalMethod::from_name(&options.ci).map_err(|m| usage(command, m))?;
    let mut excluded_lines = Vec::new();
    for part in options.exclude_lines.iter().map(|p| p.trim()).filter(|p| !p.is_empty()) {
        excluded_lines.push(
            part.parse::<usize>().map_err(|_| usage(command, format!("--exclude-lines: '{part}' is not a line number")))?,
        );
    }
    Ok(Common { text: read_input(&options.file)?, weighting, interval_method, excluded_lines })
}

/// Problems on standard error; refused unless `--lenient`.
fn report_problems(file: &str, problems: &[InputProblem], lenient: bool) -> Result<(), Failure> {
    for problem in problems {
        warn(&format!("{file}: {problem}"));
    }
    if !problems.is_empty() && !lenient {
        return Err(Failure::Input(format!(
            "{} problem(s) in the input; fix them, or pass --lenient to fit the remaining rows",
            problems.len()
        )));
    }
    Ok(())
}

fn n(v: Option<f64>) -> String {
    v.map_or("—".to_string(), |v| significant(v, 5))
}

fn parameter_lines(parameters: &[ParameterEstimate], text: &mut String) {
    for p in parameters {
        text.push_str(&format!(
            "  {:<22} = {} ± {} ({} to {}, {}) {}{}\n",
            p.name,
            n(Some(p.value)),
            n(p.std_error),
            n(p.ci_low),
            n(p.ci_high),
            p.ci_method,
            p.unit.as_deref().unwrap_or(""),
            p.flag.as_deref().map_or(String::new(), |f| format!("  [{f}]"))
        ));
    }
}

fn fit_block(fit: &FitSummary, text: &mut String) {
    text.push_str(&format!(
        "{} ({}): n = {}, RSS = {}, AICc = {}{}\n",
        fit.model,
        fit.equation,
        fit.n,
        n(Some(fit.rss)),
        n(fit.aicc),
        if fit.converged { "" } else { ", did not converge" }
    ));
    parameter_lines(&fit.parameters, text);
    for w in &fit.warnings {
        text.push_str(&format!("  warning: {w}\n"));
    }
}

pub(crate) fn ph_command(options: PhOptions) -> Result<ExitCode, Failure> {
    const COMMAND: &str = "ph";
    let c = common(COMMAND, &options.common)?;
    let request = PhRequest {
        text: c.text,
        column: options.common.column.clone(),
        weighting: c.weighting,
        interval_method: c.interval_method,
        excluded_lines: c.excluded_lines,
        ..PhRequest::default()
    };
    let analysis = analyse_ph(&request).map_err(|e| Failure::Input(e.message))?;
    report_problems(&options.common.file, &analysis.problems, options.common.lenient)?;
    let converged = analysis.fits.iter().find(|f| f.model == analysis.drawn).is_some_and(|f| f.converged);
    let mut out = Output::new();
    if options.common.json {
        #[derive(Serialize)]
        struct PhJson<'a> {
            value_name: &'a str,
            value_unit: &'a Option<String>,
            points: &'a [PhPoint],
            fits: &'a [FitSummary],
            comparison: &'a Comparison,
            drawn: &'a str,
            problems: &'a [InputProblem],
            notes: &'a [String],
            warnings: &'a [String],
            caution: &'a str,
        }
        out.json(&PhJson {
            value_name: &analysis.value_name,
            value_unit: &analysis.value_unit,
            points: &analysis.points,
            fits: &analysis.fits,
            comparison: &analysis.comparison,
            drawn: &analysis.drawn,
            problems: &analysis.problems,
            notes: &analysis.notes,
            warnings: &analysis.warnings,
            caution: &analysis.caution,
        })?;
    } else {
        let mut text = format!("pH profile of {} ({} points)\n\n", analysis.value_name, analysis.points.len());
        for fit in &analysis.fits {
            fit_block(fit, &mut text);
            text.push('\n');
        }
        text.push_str(&format!("Verdict: {}\n", analysis.comparison.verdict));
        if analysis.comparison.preferred.is_none() {
            text.push_str(&format!("Plotted: {} (lowest AICc among the candidates)\n", analysis.drawn));
        }
        for w in &analysis.warnings {
            text.push_str(&format!("warning: {w}\n"));
        }
        for note in &analysis.notes {
            text.push_str(&format!("note: {note}\n"));
        }
        text.push_str(&format!("\n{}\n", analysis.caution));
        out.text(&text)?;
    }
    out.finish()?;
    Ok(if converged { ExitCode::SUCCESS } else { ExitCode::from(3) })
}

pub(crate) fn temperature_command(options: TemperatureOptions) -> Result<ExitCode, Failure> {
    const COMMAND: &str = "temperature";
    let c = common(COMMAND, &options.common)?;
    turnover_core::temperature::read_temperature(&options.at).map_err(|m| usage(COMMAND, format!("--at {m}")))?;
    let request = TemperatureRequest {
        text: c.text,
        column: options.common.column.clone(),
        at: Some(options.at.clone()),
        weighting: c.weighting,
        interval_method: c.interval_method,
        excluded_lines: c.excluded_lines,
        ..TemperatureRequest::default()
    };
    let analysis = analyse_temperature(&request).map_err(|e| Failure::Input(e.message))?;
    report_problems(&options.common.file, &analysis.problems, options.common.lenient)?;
    let converged = analysis.arrhenius.converged && analysis.eyring.as_ref().is_none_or(|e| e.converged);
    let mut out = Output::new();
    if options.common.json {
        #[derive(Serialize)]
        struct TemperatureJson<'a> {
            value_name: &'a str,
            value_unit: &'a Option<String>,
            fitted_unit: &'a Option<String>,
            temperature_unit: &'a str,
            reference_temperature: f64,
            at: f64,
            points: &'a [TemperaturePoint],
            arrhenius: &'a FitSummary,
            eyring: &'a Option<FitSummary>,
            curvature: &'a Option<CurvatureTest>,
            problems: &'a [InputProblem],
            notes: &'a [String],
            warnings: &'a [String],
            caution: &'a str,
        }
        out.json(&TemperatureJson {
            value_name: &analysis.value_name,
            value_unit: &analysis.value_unit,
            fitted_unit: &analysis.fitted_unit,
            temperature_unit: &analysis.temperature_unit,
            reference_temperature: analysis.reference_temperature,
            at: analysis.at,
            points: &analysis.points,
            arrhenius: &analysis.arrhenius,
            eyring: &analysis.eyring,
            curvature: &analysis.curvature,
            problems: &analysis.problems,
            notes: &analysis.notes,
            warnings: &analysis.warnings,
            caution: &analysis.caution,
        })?;
    } else {
        let mut text = format!(
            "{} against temperature ({} points; reference temperature Tref = {} K)\n\n",
            analysis.value_name,
            analysis.points.len(),
            significant(analysis.reference_temperature, 6)
        );
        fit_block(&analysis.arrhenius, &mut text);
        if let Some(eyring) = &analysis.eyring {
            text.push('\n');
            fit_block(eyring, &mut text);
        }
        if let Some(curvature) = &analysis.curvature {
            text.push_str(&format!("\n{}{}\n", if curvature.curved { "warning: " } else { "" }, curvature.text));
        }
        for w in analysis.warnings.iter().filter(|w| analysis.curvature.as_ref().is_none_or(|c| c.text != **w)) {
            text.push_str(&format!("warning: {w}\n"));
        }
        for note in analysis.notes.iter().filter(|w| analysis.curvature.as_ref().is_none_or(|c| c.text != **w)) {
            text.push_str(&format!("note: {note}\n"));
        }
        text.push_str(&format!("\n{}\n", analysis.caution));
        out.text(&text)?;
    }
    out.finish()?;
    Ok(if converged { ExitCode::SUCCESS } else { ExitCode::from(3) })
}
