//! `turnover inactivation`: time-dependent inhibition from progress
//! curves. Glue only: the time courses are read as for `rates`, and every
//! number comes from `turnover_core::inactivation`.

use crate::output::{significant, warn, Output};
use crate::traces::{analyse, prepare, TraceOptions};
use crate::{usage, Failure};
use clap::Args;
use serde::Serialize;
use std::process::ExitCode;
use turnover_core::fit::ParameterEstimate;
use turnover_core::inactivation::{inactivation_from_traces, TraceKobs};
use turnover_core::inactivation_global::GlobalInactivation;
use turnover_core::units::ConcentrationUnit;

#[derive(Args)]
pub(crate) struct InactivationOptions {
    #[command(flatten)]
    traces: TraceOptions,
    /// [S] of the assay for the substrate-competition correction
    /// KI = KI_app/(1 + [S]/Km), such as '50 µM' or a bare number; needs --km
    #[arg(long, value_name = "CONC")]
    substrate: Option<String>,
    /// Km of the substrate, in the same form as --substrate (both bare
    /// numbers in one unit, or both with units)
    #[arg(long, value_name = "KM")]
    km: Option<String>,
}

const COMMAND: &str = "inactivation";

/// [S] and Km in one unit (Km's).
fn substrate_and_km(substrate: &str, km: &str) -> Result<(f64, f64), Failure> {
    let quantity = |text: &str, name: &str| -> Result<(f64, Option<ConcentrationUnit>), Failure> {
        let (value, unit) = turnover_core::table::read_quantity(text).map_err(|m| {
            usage(COMMAND, format!("{name} '{text}': {m}; give a concentration such as '50 µM' or '50'"))
        })?;
        let unit = unit
            .map(|u| ConcentrationUnit::parse(&u).map_err(|m| usage(COMMAND, format!("{name}: {m}"))))
            .transpose()?;
        Ok((value, unit))
    };
    let (k, k_unit) = quantity(km, "--km")?;
    let (s, s_unit) = quantity(substrate, "--substrate")?;
    match (s_unit, k_unit) {
        (Some(a), Some(b)) => Ok((s * a.in_molar() / b.in_molar(), k)),
        (None, None) => Ok((s, k)),
        _ => Err(usage(
            COMMAND,
            "--substrate and --km must both carry a unit (such as '50 µM') or both be bare numbers in one unit",
        )),
    }
}

pub(crate) fn inactivation_command(options: InactivationOptions) -> Result<ExitCode, Failure> {
    let (substrate, km) = match (&options.substrate, &options.km) {
        (Some(s), Some(k)) => {
            let (s, k) = substrate_and_km(s, k)?;
            (Some(s), Some(k))
        }
        (None, None) => (None, None),
        _ => {
            return Err(usage(COMMAND, "the substrate-competition correction needs both --substrate and --km"));
        }
    };
    let args = prepare(COMMAND, options.traces)?;
    if !args.request.windows.is_empty() {
        return Err(usage(
            COMMAND,
            "--window sets initial-rate windows; the inactivation fit uses each whole curve, so leave it out",
        ));
    }
    let traces = analyse(COMMAND, &args)?;
    let analysis = inactivation_from_traces(&traces, substrate, km).map_err(|e| Failure::Input(e.message))?;
    let converged =
        analysis.traces.iter().all(|t| t.converged) && analysis.global.as_ref().is_none_or(|g| g.converged);
    let mut out = Output::new();
    if args.json {
        #[derive(Serialize)]
        struct InactivationJson<'a> {
            time_unit: &'a str,
            inhibitor_unit: &'a Option<String>,
            traces: &'a [TraceKobs],
            saturation: bool,
            saturation_test: &'a Option<(f64, usize, usize, f64)>,
            parameters: &'a [ParameterEstimate],
            competition_factor: f64,
            warnings: &'a [String],
            notes: &'a [String],
            global: &'a Option<GlobalInactivation>,
            caution: &'a str,
        }
        out.json(&InactivationJson {
            time_unit: &analysis.time_unit,
            inhibitor_unit: &analysis.inhibitor_unit,
            traces: &analysis.traces,
            saturation: analysis.saturation,
            saturation_test: &analysis.saturation_test,
            parameters: &analysis.parameters,
            competition_factor: analysis.competition_factor,
            warnings: &analysis.warnings,
            notes: &analysis.notes,
            global: &analysis.global,
            caution: &analysis.caution,
        })?;
    } else {
        let n = |v: Option<f64>| v.map_or("—".to_string(), |v| significant(v, 5));
        let unit = analysis.inhibitor_unit.clone().unwrap_or_default();
        let mut text = format!(
            "{:<10} {:>12} {:>14} {:>12}  (kobs per {})\n",
            "trace",
            format!("[I] {unit}"),
            "kobs",
            "SE",
            analysis.time_unit
        );
        for t in &analysis.traces {
            let (kobs, se) = crate::constants::value_and_error_columns(Some(t.kobs), t.kobs_se);
            text.push_str(&format!(
                "{:<10} {:>12} {:>14} {:>12}{}\n",
                t.trace,
                n(Some(t.i)),
                kobs,
                se,
                if t.used { "" } else { "  (not used)" }
            ));
        }
        text.push_str("\ntwo steps (kobs per trace, then kobs against [I]):\n");
        text.push_str(&crate::constants::constants_block(&analysis.parameters, 95.0, "asymptotic"));
        if let Some(g) = &analysis.global {
            text.push_str(&global_text(g));
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
    if !converged {
        warn("turnover: some progress-curve fits (or the global fit) did not converge");
    }
    Ok(if converged { ExitCode::SUCCESS } else { ExitCode::from(3) })
}

/// The global fit beside the two-step constants: its constants by the
/// formatting rule, its statistics, and each constant's ratio to the
/// two-step value.
fn global_text(g: &GlobalInactivation) -> String {
    let mut text = format!(
        "\nglobal fit (all {} traces at once, kinact and KI shared; {} readings, {} parameters):\n",
        g.traces.len(),
        g.n,
        g.fitted
    );
    text.push_str(&crate::constants::constants_block(&g.parameters, 95.0, "asymptotic"));
    let optional = |v: Option<f64>| if v.is_some() { crate::constants::plain(v) } else { "not computed".to_string() };
    text.push_str(&format!(
        "residual SD {}, AICc {}, {}\n",
        optional(g.sigma),
        optional(g.aicc),
        if g.converged { "converged".to_string() } else { format!("NOT converged ({})", g.termination_text) }
    ));
    for c in &g.comparison {
        text.push_str(&format!(
            "{}: global/two-step {}{}\n",
            c.name,
            crate::constants::plain(Some(c.ratio)),
            c.se_ratio.map_or(String::new(), |r| format!(", standard errors {}", crate::constants::plain(Some(r))))
        ));
    }
    for w in &g.warnings {
        text.push_str(&format!("warning: {w}\n"));
    }
    text
}
