//! `turnover compare-sets`: do the constants differ between data sets?
//! Reads the table, calls `turnover_core::sets::compare_sets` and prints
//! its result as a table or as JSON.

use crate::output::{fixed, significant, warn, Output};
use crate::{option_number, read_input, usage, Failure};
use clap::Args;
use serde::Serialize;
use std::process::ExitCode;
use turnover_core::sets::{compare_sets, ConstantVerdict, PatternFit, SetFit, SetsRequest};
use turnover_core::table::InputProblem;
use turnover_core::weighting::Weighting;

#[derive(Args)]
pub(crate) struct SetsOptions {
    /// The table to read ('-' reads standard input): a column naming each
    /// row's set, then the model's columns in order ([S], v for mm; [S],
    /// [I], v for the inhibition mechanisms; [I], response for ic50)
    #[arg(value_name = "FILE")]
    file: String,
    /// Heading of the column naming the sets
    #[arg(long, value_name = "COLUMN", default_value = "set")]
    by: String,
    /// Model fitted to every set: mm, substrate-inhibition, hill, ic50,
    /// morrison, competitive, uncompetitive, mixed, noncompetitive
    #[arg(long, value_name = "NAME", value_parser = crate::model_names(), default_value = "mm")]
    model: String,
    /// The set the others are compared with [default: the first in the table]
    #[arg(long, value_name = "NAME")]
    reference: Option<String>,
    /// What the weighting assumes about the error of a response (sd is
    /// refused: the table has no sd column)
    #[arg(long, value_name = "ERROR", value_parser = crate::weighting_names(), default_value = "constant")]
    weighting: String,
    /// Print one JSON object instead of a table
    #[arg(long)]
    json: bool,
    /// Compare the usable rows even when some lines have problems
    #[arg(long)]
    lenient: bool,
    /// For morrison: [E]t in the units of [I] (a bare number)
    #[arg(long, value_name = "CONC", value_parser = option_number)]
    enzyme: Option<f64>,
    /// Fix the upper plateau (ceiling) of the ic50 model in every set
    #[arg(long = "ceiling", value_name = "Y", value_parser = option_number, allow_hyphen_values = true)]
    top: Option<f64>,
    /// Fix the lower plateau (floor) of the ic50 model in every set
    #[arg(long = "floor", value_name = "Y", value_parser = option_number, allow_hyphen_values = true)]
    bottom: Option<f64>,
}

pub(crate) fn compare_sets_command(options: SetsOptions) -> Result<ExitCode, Failure> {
    const COMMAND: &str = "compare-sets";
    if (options.top.is_some() || options.bottom.is_some()) && options.model != "ic50" {
        return Err(usage(
            COMMAND,
            "--ceiling and --floor fix the plateaus of the ic50 model; they apply to no other model",
        ));
    }
    if options.enzyme.is_some() && options.model != "morrison" {
        return Err(usage(COMMAND, "--enzyme is [E]t of the morrison model; it applies to no other model here"));
    }
    let (weighting, note) = Weighting::from_option_name(&options.weighting).map_err(|m| usage(COMMAND, m))?;
    if let Some(note) = note {
        warn(&format!("turnover: note: {note}"));
    }
    if weighting == Weighting::Sd {
        return Err(usage(
            COMMAND,
            "--weighting sd needs an sd column, which compare-sets does not read; use constant, proportional or sqrt",
        ));
    }
    let model = if options.model == "michaelis-menten" { "mm".to_string() } else { options.model.clone() };
    let request = SetsRequest {
        text: read_input(&options.file)?,
        by: options.by.clone(),
        model,
        reference: options.reference.clone(),
        enzyme: options.enzyme,
        fixed_top: options.top,
        fixed_bottom: options.bottom,
        weighting,
    };
    let analysis = compare_sets(&request).map_err(|e| Failure::Input(e.message))?;
    for problem in &analysis.problems {
        warn(&format!("{}: {problem}", options.file));
    }
    if !analysis.problems.is_empty() && !options.lenient {
        return Err(Failure::Input(format!(
            "{} problem(s) in the input; fix them, or pass --lenient to compare the remaining rows",
            analysis.problems.len()
        )));
    }
    let converged = analysis.models.iter().all(|m| m.fit.converged) && analysis.sets.iter().all(|s| s.fit.converged);
    let mut out = Output::new();
    if options.json {
        #[derive(Serialize)]
        struct SetsJson<'a> {
            model: &'a str,
            reference: &'a str,
            sets: &'a [SetFit],
            models: &'a [PatternFit],
            constants: &'a [ConstantVerdict],
            chosen: &'a str,
            verdict: &'a str,
            problems: &'a [InputProblem],
            warnings: &'a [String],
            caution: &'a str,
        }
        out.json(&SetsJson {
            model: &analysis.model,
            reference: &analysis.reference,
            sets: &analysis.sets,
            models: &analysis.models,
            constants: &analysis.constants,
            chosen: &analysis.chosen,
            verdict: &analysis.verdict,
            problems: &analysis.problems,
            warnings: &analysis.warnings,
            caution: &analysis.caution,
        })?;
    } else {
        let n = |v: Option<f64>| v.map_or("—".to_string(), |v| significant(v, 5));
        let mut text = format!("Sets compared with {} (reference: {})\n\n", analysis.model, analysis.reference);
        for set in &analysis.sets {
            let params: Vec<String> = set
                .fit
                .parameters
                .iter()
                .map(crate::constants::constant)
                .collect();
            text.push_str(&format!("{:<16} n = {:<4} {}\n", set.name, set.n, params.join(", ")));
        }
        text.push_str(&format!(
            "\n{:<28} {:>12} {:>5} {:>12} {:>8}  F test against all separate\n",
            "constants shared", "RSS", "dof", "AICc", "ΔAICc"
        ));
        for m in &analysis.models {
            let test = m.f_test.as_ref().map_or(String::new(), |t| {
                format!("F({}, {}) = {}, p = {}", t.df_extra, t.df_general, fixed(t.f, 3), n(Some(t.p_value)))
            });
            text.push_str(&format!(
                "{:<28} {:>12} {:>5} {:>12} {:>8}  {}\n",
                m.name,
                n(Some(m.rss)),
                m.dof,
                n(m.aicc),
                m.delta_aicc.map_or("—".to_string(), |d| fixed(d, 2)),
                test
            ));
        }
        text.push_str(&format!("\n{}\n", analysis.verdict));
        for w in &analysis.warnings {
            text.push_str(&format!("warning: {w}\n"));
        }
        text.push_str(&format!("\n{}\n", analysis.caution));
        out.text(&text)?;
    }
    out.finish()?;
    Ok(if converged { ExitCode::SUCCESS } else { ExitCode::from(3) })
}
