//! Two-substrate tables on the command line: `fit --model sequential|
//! ordered|ping-pong` fits one law, and `compare` (with those names, or
//! with no `--models` on a table naming [A] and [B]) fits and ranks all
//! three. Every number comes from the core's `analyse_bisubstrate`.

use crate::output::Output;
use crate::{check_problems, exit_for, fit_table, points_or_note, Failure, FitJson, Prepared, WithReplicates};
use serde::Serialize;
use std::process::ExitCode;
use turnover_core::bisubstrate::{analyse_bisubstrate, BisubstrateAnalysis, BisubstrateRequest, BisubstrateUnits};
use turnover_core::table::InputProblem;

/// The names of the two-substrate laws, the order `compare` fits them in.
pub(crate) const LAWS: [&str; 3] = ["sequential", "ordered", "ping-pong"];

/// Whether `text` is a two-substrate table (header naming [A] and [B], or
/// [A] then columns headed with concentrations of B).
pub(crate) fn is_table(text: &str) -> bool {
    turnover_core::bisubstrate::is_bisubstrate_table(text)
}

/// The options that do not apply to two-substrate tables, refused by name.
pub(crate) fn refuse_options(command: &'static str, args: &Prepared) -> Result<(), Failure> {
    if args.request.substrate_unit.as_deref().is_some_and(|u| !u.trim().is_empty()) {
        return Err(crate::usage(
            command,
            "--substrate-unit is the unit of [S]; a two-substrate table gives the units of [A] and [B] in its header, such as '[A] (µM)' and '[B] (mM)'",
        ));
    }
    Ok(())
}

/// The core's request for the table and options of `args`.
pub(crate) fn request(args: &Prepared, models: Vec<String>) -> BisubstrateRequest {
    BisubstrateRequest {
        text: args.request.text.clone(),
        models,
        excluded_lines: args.request.excluded_lines.clone(),
        excluded_cells: args.request.excluded_cells.clone(),
        substrate_a_unit: None,
        substrate_b_unit: None,
        rate_unit: args.request.rate_unit.clone(),
        enzyme: args.request.enzyme,
        enzyme_unit: args.request.enzyme_unit.clone(),
        weighting: args.request.weighting,
        interval_method: args.request.interval_method,
        bootstrap: args.request.bootstrap,
    }
}

/// Runs the analysis for `models`, reporting input problems as the other
/// fits do.
pub(crate) fn analyse(command: &'static str, args: &Prepared, models: Vec<String>) -> Result<BisubstrateAnalysis, Failure> {
    refuse_options(command, args)?;
    let analysis = analyse_bisubstrate(&request(args, models)).map_err(|e| Failure::Input(e.message))?;
    check_problems(args, &analysis.problems)?;
    Ok(analysis)
}

/// What a JSON fit of one law carries beside the fit record.
#[derive(Serialize)]
struct Extra<'a, P: Serialize> {
    problems: &'a [InputProblem],
    notes: &'a [String],
    /// The analysis' design warnings (the fit record's own `warnings`
    /// stand beside them at the top level).
    design_warnings: &'a [String],
    units: &'a BisubstrateUnits,
    #[serde(skip_serializing_if = "Option::is_none")]
    points: Option<&'a [P]>,
    #[serde(skip_serializing_if = "Option::is_none")]
    points_omitted: Option<String>,
    caution: &'a str,
}

/// `fit --model LAW`: the fit record with the envelope (JSON: the analysis'
/// warnings as `design_warnings`), or the
/// table of constants with the design warnings (text).
pub(crate) fn fit_one(args: &Prepared, model: String, out: &mut Output) -> Result<ExitCode, Failure> {
    let analysis = analyse("fit", args, vec![model])?;
    let fit = &analysis.fits[0];
    if args.json {
        let (points, points_omitted) = points_or_note(&analysis.points, args.points);
        let extra = Extra {
            problems: &analysis.problems,
            notes: &analysis.notes,
            design_warnings: &analysis.warnings,
            units: &analysis.units,
            points,
            points_omitted,
            caution: &analysis.caution,
        };
        out.json(&FitJson { fit, extra: WithReplicates { envelope: extra, replicates: &analysis.replicates } })?;
    } else {
        let extra: String = analysis.warnings.iter().map(|w| format!("warning: {w}\n")).collect();
        out.text(&fit_table(fit, &extra, &analysis.notes, &analysis.caution))?;
    }
    Ok(exit_for(fit))
}
