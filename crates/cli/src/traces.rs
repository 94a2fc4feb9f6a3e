//! The `rates` and `fit-progress` commands: time courses in, initial rates
//! or an integrated Michaelis-Menten fit out. Glue only: every number comes
//! from `turnover_core::traces::analyse_traces` and
//! `turnover_core::progress::fit_progress`, as in the page.

use crate::output::{fixed, significant, warn, Output};
use crate::{option_number, read_input, usage, Failure};
use clap::Args;
use serde::Serialize;
use std::process::ExitCode;
use turnover_core::progress::fit_progress;
use turnover_core::traces::{
    analyse_traces, path_from_well, unmatched_overrides, Direction, Role, TraceAnalysis, TraceRequest, WindowOverride, PRESETS,
};

/// The options of `rates` and `fit-progress`.
#[derive(Args)]
pub struct TraceOptions {
    /// The time-course table: time, then one column per trace ('-' reads
    /// standard input)
    #[arg(value_name = "TRACES")]
    file: String,
    /// A table saying what each trace is (trace, S, I, E, role, blank), or a
    /// plate map: one grid per property (a title such as S (µM), a row of
    /// column numbers 1, 2, ..., rows lettered A, B, ...)
    #[arg(long, value_name = "FILE")]
    layout: String,
    /// Print one JSON object
    #[arg(long)]
    json: bool,
    /// The sheet of TRACES to read when it is a workbook (.xlsx, .ods)
    /// with several
    #[arg(long, value_name = "NAME")]
    sheet: Option<String>,
    /// Which kinetic table of the file to read, counting from 1, when it
    /// holds several (two wavelengths, two reads) [default: the first]
    #[arg(long, value_name = "N")]
    block: Option<usize>,
    /// Molar absorption coefficient ε, M⁻¹ cm⁻¹
    #[arg(long, value_name = "E", value_parser = option_number)]
    epsilon: Option<f64>,
    /// ε from a preset: nadh, nadph (6220 at 340 nm), pnp (~18000 at 405 nm)
    #[arg(long, value_name = "NAME", ignore_case = true, value_parser = preset_names())]
    preset: Option<String>,
    /// Optical path length in cm
    #[arg(long, value_name = "CM", value_parser = option_number)]
    path: Option<f64>,
    /// Path from well volume (µL) and diameter (mm), meniscus ignored, such as 200,6.4
    #[arg(long, value_name = "UL,MM")]
    well: Option<String>,
    /// A linear standard curve: concentration (with unit) and signal
    #[arg(long, value_name = "FILE")]
    standard: Option<String>,
    /// The signal falls as product forms (NADH consumed)
    #[arg(long)]
    falls: bool,
    /// Top of the detector's linear range, in signal units
    #[arg(long, value_name = "A", value_parser = option_number)]
    linear_limit: Option<f64>,
    /// Largest fraction of [S]0 used in a window
    #[arg(long, value_name = "F", value_parser = option_number, default_value = "0.1")]
    max_conversion: f64,
    /// Set the window of trace NAME (or * for all) to times A..B (repeatable)
    #[arg(long, value_name = "NAME=A:B", allow_hyphen_values = true)]
    window: Vec<String>,
    /// Leave a trace out (repeatable)
    #[arg(long, value_name = "NAME")]
    exclude: Vec<String>,
    /// Also fit each trace's curvature-aware initial rate (v0, its SE and 95% profile interval)
    #[arg(long)]
    v0: bool,
    /// Work in this time unit: times converted from the table's, windows
    /// (--window too) in it, rates per it
    #[arg(long, value_name = "TIME", value_parser = ["s", "min", "h"])]
    rates_per: Option<String>,
}

fn preset_names() -> clap::builder::PossibleValuesParser {
    clap::builder::PossibleValuesParser::new(PRESETS.iter().map(|p| clap::builder::PossibleValue::new(p.key)))
}

pub(crate) struct Prepared {
    pub(crate) command: &'static str,
    pub(crate) file: String,
    pub(crate) json: bool,
    pub(crate) request: TraceRequest,
}

pub(crate) fn prepare(command: &'static str, options: TraceOptions) -> Result<Prepared, Failure> {
    let mut request = TraceRequest::default();
    if options.falls {
        request.direction = Direction::Falls;
    }
    if options.epsilon.is_some() && options.preset.is_some() {
        return Err(usage(command, "--epsilon and --preset both set ε; give one of them"));
    }
    if options.path.is_some() && options.well.is_some() {
        return Err(usage(command, "--path and --well both set the path length; give one of them"));
    }
    if options.standard.is_some() && (options.epsilon.is_some() || options.preset.is_some() || options.path.is_some() || options.well.is_some()) {
        return Err(usage(command, "--standard converts the signal by its own curve; leave out --epsilon, --preset, --path and --well, or the standard"));
    }
    request.epsilon = options.epsilon;
    if let Some(key) = &options.preset {
        let preset = PRESETS.iter().find(|p| p.key.eq_ignore_ascii_case(key)).expect("clap checked the preset name");
        request.epsilon = Some(preset.epsilon);
    }
    request.path_cm = options.path;
    if let Some(text) = &options.well {
        let (v, d) = text
            .split_once(['/', ';', ' '])
            .or_else(|| text.split_once(','))
            .ok_or_else(|| usage(command, "--well needs VOLUME_UL,DIAMETER_MM such as 200,6.4"))?;
        let volume = option_number(v).map_err(|m| usage(command, format!("--well: {m}")))?;
        let diameter = option_number(d).map_err(|m| usage(command, format!("--well: {m}")))?;
        request.path_cm = Some(path_from_well(volume, diameter).map_err(|e| usage(command, e.message))?);
    }
    request.linear_limit = options.linear_limit;
    request.max_conversion = options.max_conversion;
    request.excluded = options.exclude;
    request.fit_v0 = options.v0;
    request.block = options.block;
    request.report_time = options.rates_per;
    for text in &options.window {
        let bad = || usage(command, format!("--window: '{text}' is not NAME=START:END, such as A1=0:5"));
        let (name, range) = text.split_once('=').ok_or_else(bad)?;
        let (a, b) = range.split_once(':').ok_or_else(bad)?;
        let start = option_number(a).map_err(|m| usage(command, format!("--window {text}: {m}")))?;
        let end = option_number(b).map_err(|m| usage(command, format!("--window {text}: {m}")))?;
        if !(end > start) {
            return Err(usage(command, format!("--window {text}: the end must come after the start")));
        }
        request.windows.push(WindowOverride { trace: name.trim().to_string(), start, end });
    }
    request.layout = read_input(&options.layout)?;
    if let Some(path) = &options.standard {
        request.standard = Some(read_input(path)?);
    }
    request.traces = crate::read_table(&options.file, options.sheet.as_deref())?;
    Ok(Prepared { command, file: options.file, json: options.json, request })
}

pub(crate) fn analyse(command: &'static str, args: &Prepared) -> Result<TraceAnalysis, Failure> {
    let analysis = analyse_traces(&args.request).map_err(|e| Failure::Input(e.message))?;
    // A --window or --exclude naming no trace would do nothing; on the
    // command line that is a mistake to refuse, not a note to skim past.
    let names: Vec<(String, usize)> = analysis.traces.iter().map(|t| (t.name.clone(), 0)).collect();
    if let Some(sentence) = unmatched_overrides(&args.request, &names).first() {
        let hint = if sentence.starts_with("The window") { "use --window '*=A:B' for every trace" } else { "check --exclude" };
        return Err(usage(command, format!("{sentence} ({hint})")));
    }
    for problem in &analysis.problems {
        warn(&format!("{}: {problem}", args.file));
    }
    // Every rated sample against the declared direction: the rates would
    // all be negative. Refuse rather than print them.
    let rated: Vec<_> = analysis.traces.iter().filter(|t| t.role == Role::Sample && !t.excluded && t.rate.is_some()).collect();
    if !rated.is_empty() && rated.iter().all(|t| t.flags.iter().any(|f| f == "wrong-direction")) {
        let message = match args.request.direction {
            Direction::Falls => "every sample's signal rises, but --falls says the signal falls as product forms; the rates would all be negative. Leave out --falls, or check the file",
            Direction::Rises => "every sample's signal falls, but the signal was taken to rise as product forms; the rates would all be negative. If product formation lowers the signal (NADH consumed), add --falls",
        };
        return Err(Failure::Input(message.to_string()));
    }
    Ok(analysis)
}

/// `turnover rates`.
pub fn rates(options: TraceOptions) -> Result<ExitCode, Failure> {
    let args = prepare("rates", options)?;
    let analysis = analyse(args.command, &args)?;
    let mut out = Output::new();
    if args.json {
        #[derive(Serialize)]
        struct TraceJson<'a> {
            name: &'a str,
            role: &'a Role,
            s: Option<f64>,
            i: Option<f64>,
            e: Option<f64>,
            rate: Option<f64>,
            rate_se: Option<f64>,
            rate_ci_low: Option<f64>,
            rate_ci_high: Option<f64>,
            v0: Option<f64>,
            v0_se: Option<f64>,
            v0_ci_low: Option<f64>,
            v0_ci_high: Option<f64>,
            v0_points: usize,
            v0_k: Option<f64>,
            rate_unit: &'a str,
            window_start: Option<f64>,
            window_end: Option<f64>,
            window_points: usize,
            manual_window: bool,
            fraction_converted: Option<f64>,
            blanks_subtracted: &'a [String],
            flags: &'a [String],
            messages: &'a [String],
        }
        #[derive(Serialize)]
        struct RatesJson<'a> {
            blocks: &'a [turnover_core::read::blocks::KineticBlock],
            time_unit: &'a str,
            value_unit: &'a str,
            rate_unit: &'a str,
            traces: Vec<TraceJson<'a>>,
            enzyme_checks: &'a [turnover_core::traces::EnzymeCheck],
            standard: &'a Option<turnover_core::traces::StandardCurve>,
            rate_table: &'a str,
            rate_links: &'a [turnover_core::traces::RateLink],
            selwyn: Vec<SelwynJson<'a>>,
            problems: &'a [turnover_core::table::InputProblem],
            notes: &'a [String],
            caution: &'a str,
        }
        /// Selwyn's test without its plot data (the page draws that).
        #[derive(Serialize)]
        struct SelwynJson<'a> {
            s: Option<f64>,
            i: Option<f64>,
            traces: &'a [(String, f64)],
            common_et: f64,
            n: usize,
            f: f64,
            df: (usize, usize),
            p_value: f64,
            departure: f64,
            flagged: bool,
            message: &'a str,
        }
        let selwyn = analysis
            .selwyn
            .iter()
            .map(|c| SelwynJson {
                s: c.s,
                i: c.i,
                traces: &c.traces,
                common_et: c.common_et,
                n: c.n,
                f: c.f,
                df: c.df,
                p_value: c.p_value,
                departure: c.departure,
                flagged: c.flagged,
                message: &c.message,
            })
            .collect();
        let traces = analysis
            .traces
            .iter()
            .map(|t| TraceJson {
                name: &t.name,
                role: &t.role,
                s: t.s,
                i: t.i,
                e: t.e,
                rate: t.rate,
                rate_se: t.rate_se,
                rate_ci_low: t.rate_ci_low,
                rate_ci_high: t.rate_ci_high,
                v0: t.v0,
                v0_se: t.v0_se,
                v0_ci_low: t.v0_ci_low,
                v0_ci_high: t.v0_ci_high,
                v0_points: t.v0_points,
                v0_k: t.v0_k,
                rate_unit: &analysis.rate_unit,
                window_start: t.window_start,
                window_end: t.window_end,
                window_points: t.window_points,
                manual_window: t.manual_window,
                fraction_converted: t.fraction_converted,
                blanks_subtracted: &t.blanks_subtracted,
                flags: &t.flags,
                messages: &t.messages,
            })
            .collect();
        out.json(&RatesJson {
            blocks: &analysis.blocks,
            time_unit: &analysis.time_unit,
            value_unit: &analysis.value_unit,
            rate_unit: &analysis.rate_unit,
            traces,
            enzyme_checks: &analysis.enzyme_checks,
            standard: &analysis.standard,
            rate_table: &analysis.rate_table,
            rate_links: &analysis.rate_links,
            selwyn,
            problems: &analysis.problems,
            notes: &analysis.notes,
            caution: &analysis.caution,
        })?;
    } else {
        let mut text = format!(
            "{:<8} {:>12} {:>12} {:>16} {:>9}  flags\n",
            "trace",
            "rate",
            "std. error",
            format!("window ({})", analysis.time_unit),
            "used"
        );
        for t in &analysis.traces {
            let (rate, rate_se) = crate::constants::value_and_error_columns(t.rate, t.rate_se);
            let window = match (t.window_start, t.window_end) {
                (Some(a), Some(b)) => format!("{}–{}", significant(a, 3), significant(b, 3)),
                _ => "—".to_string(),
            };
            let used = t.fraction_converted.map_or("—".to_string(), |f| format!("{} %", fixed(f * 100.0, 1)));
            text.push_str(&format!(
                "{:<8} {:>12} {:>12} {:>16} {:>9}  {}\n",
                t.name,
                rate,
                rate_se,
                window,
                used,
                t.flags.join(" ")
            ));
        }
        text.push_str(&format!("\nrates in {}\n", analysis.rate_unit));
        for t in analysis.traces.iter().filter(|t| t.flags.iter().any(|f| f == "wrong-direction")) {
            text.push_str(&format!("warning ({}): {}\n", t.name, t.messages.iter().find(|m| m.contains("declared")).map_or("", String::as_str)));
        }
        for check in &analysis.selwyn {
            text.push_str(&format!("{}: {}\n", if check.flagged { "warning" } else { "check" }, check.message));
        }
        for note in &analysis.notes {
            text.push_str(&format!("note: {note}\n"));
        }
        text.push_str(&format!("\n{}\n", analysis.caution));
        out.text(&text)?;
    }
    out.finish()?;
    Ok(ExitCode::SUCCESS)
}

/// `turnover fit-progress`.
pub fn fit_progress_command(options: TraceOptions) -> Result<ExitCode, Failure> {
    let args = prepare("fit-progress", options)?;
    let analysis = analyse(args.command, &args)?;
    let fit = fit_progress(&analysis).map_err(|e| Failure::Input(e.message))?;
    let mut out = Output::new();
    if args.json {
        #[derive(Serialize)]
        struct ProgressJson<'a> {
            #[serde(flatten)]
            summary: &'a turnover_core::fit::FitSummary,
            notes: &'a [String],
            reference_enzyme: &'a Option<f64>,
            caution: &'a str,
        }
        out.json(&ProgressJson {
            summary: &fit.summary,
            notes: &fit.notes,
            reference_enzyme: &fit.reference_enzyme,
            caution: &fit.caution,
        })?;
    } else {
        let s = &fit.summary;
        let n = |v: Option<f64>| v.map_or("—".to_string(), |v| significant(v, 5));
        let mut text =
            format!("Model: {} ({})\nFit {} after {} evaluation(s).\n\n", s.model, s.equation, s.termination_text, s.iterations);
        let level = (s.confidence_level * 100.0).round();
        let method = s.parameters.first().map_or("asymptotic", |p| p.ci_method.as_ref());
        text.push_str(&crate::constants::constants_block(&s.parameters, level, method));
        text.push_str(&format!("\nn = {}, dof = {}, residual SD = {}, R² = {}\n", s.n, s.dof, n(s.sigma), n(s.r_squared)));
        for w in s.warnings.iter().chain(&fit.notes) {
            text.push_str(&format!("note: {w}\n"));
        }
        text.push_str(&format!("\n{}\n", fit.caution));
        out.text(&text)?;
    }
    out.finish()?;
    Ok(if fit.summary.converged { ExitCode::SUCCESS } else { ExitCode::from(3) })
}
