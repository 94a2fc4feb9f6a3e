//! The `rates` and `fit-progress` commands: time courses in, initial rates
//! or an integrated Michaelis-Menten fit out. Glue only: every number comes
//! from `turnover_core::traces::analyse_traces` and
//! `turnover_core::progress::fit_progress`, as in the page.

use crate::{format_significant, read_input, Failure};
use std::process::ExitCode;
use turnover_core::progress::fit_progress;
use turnover_core::traces::{analyse_traces, path_from_well, Direction, TraceAnalysis, TraceRequest, PRESETS};

pub const USAGE: &str = "    turnover rates TRACES --layout LAYOUT [CONVERSION] [OPTIONS]
                                       initial rates from a time-course table
    turnover fit-progress TRACES --layout LAYOUT CONVERSION [--json]
                                       integrated Michaelis-Menten fit to whole traces

CONVERSION (signal to concentration; without one, rates are in signal units):
    --epsilon E            molar absorption coefficient, M⁻¹ cm⁻¹
    --preset NAME          ε from a preset: nadh, nadph (6220 at 340 nm), pnp (~18000 at 405 nm)
    --path CM              optical path length in cm
    --well UL,MM           path from well volume (µL) and diameter (mm), meniscus ignored
    --standard FILE        a linear standard curve: concentration (unit) and signal
OPTIONS for rates:
    --falls                the signal falls as product forms (NADH consumed)
    --linear-limit A       top of the detector's linear range, in signal units
    --max-conversion F     largest fraction of [S]0 used in a window (default 0.1)
    --window NAME=A:B      set the window of trace NAME (or * for all) to times A..B
    --exclude NAME         leave a trace out (repeatable)
    --json                 one JSON object
    --v0                   also fit each trace's curvature-aware initial rate (v0, its SE and 95% profile interval)
";

struct TraceArgs {
    file: String,
    json: bool,
    request: TraceRequest,
}

fn parse(args: &[String]) -> Result<TraceArgs, Failure> {
    let mut file = None;
    let mut json = false;
    let mut layout = None;
    let mut standard = None;
    let mut request = TraceRequest::default();
    let mut i = 0;
    let value = |i: &mut usize, name: &str| -> Result<String, Failure> {
        *i += 1;
        args.get(*i).cloned().ok_or_else(|| Failure::Usage(format!("{name} needs a value")))
    };
    let number = |text: &str, name: &str| -> Result<f64, Failure> {
        text.trim().parse::<f64>().ok().filter(|v| v.is_finite()).ok_or_else(|| Failure::Usage(format!("{name}: '{text}' is not a number")))
    };
    while i < args.len() {
        match args[i].as_str() {
            "--json" => json = true,
            "--v0" => request.fit_v0 = true,
            "--falls" => request.direction = Direction::Falls,
            "--layout" => layout = Some(value(&mut i, "--layout")?),
            "--standard" => standard = Some(value(&mut i, "--standard")?),
            "--epsilon" => request.epsilon = Some(number(&value(&mut i, "--epsilon")?, "--epsilon")?),
            "--path" => request.path_cm = Some(number(&value(&mut i, "--path")?, "--path")?),
            "--preset" => {
                let key = value(&mut i, "--preset")?;
                let preset = PRESETS.iter().find(|p| p.key == key.to_ascii_lowercase()).ok_or_else(|| {
                    Failure::Usage(format!("--preset: unknown '{key}'; known: {}", PRESETS.iter().map(|p| p.key).collect::<Vec<_>>().join(", ")))
                })?;
                request.epsilon = Some(preset.epsilon);
            }
            "--well" => {
                let text = value(&mut i, "--well")?;
                let (v, d) = text.split_once(',').ok_or_else(|| Failure::Usage("--well needs VOLUME_UL,DIAMETER_MM such as 200,6.4".into()))?;
                let path = path_from_well(number(v, "--well")?, number(d, "--well")?).map_err(|e| Failure::Usage(e.message))?;
                request.path_cm = Some(path);
            }
            "--linear-limit" => request.linear_limit = Some(number(&value(&mut i, "--linear-limit")?, "--linear-limit")?),
            "--max-conversion" => request.max_conversion = number(&value(&mut i, "--max-conversion")?, "--max-conversion")?,
            "--exclude" => request.excluded.push(value(&mut i, "--exclude")?),
            "--window" => {
                let text = value(&mut i, "--window")?;
                let bad = || Failure::Usage(format!("--window: '{text}' is not NAME=START:END"));
                let (name, range) = text.split_once('=').ok_or_else(bad)?;
                let (a, b) = range.split_once(':').ok_or_else(bad)?;
                request.windows.push(turnover_core::traces::WindowOverride {
                    trace: name.trim().to_string(),
                    start: number(a, "--window")?,
                    end: number(b, "--window")?,
                });
            }
            flag if flag.starts_with("--") => return Err(Failure::Usage(format!("unknown option '{flag}'"))),
            path => {
                if file.replace(path.to_string()).is_some() {
                    return Err(Failure::Usage("give one time-course file".to_string()));
                }
            }
        }
        i += 1;
    }
    let file = file.ok_or_else(|| Failure::Usage("give the time-course file ('-' for standard input)".to_string()))?;
    let layout = layout.ok_or_else(|| Failure::Usage("--layout FILE is required: it says what each trace is".to_string()))?;
    request.layout = read_input(&layout)?;
    if let Some(path) = standard {
        request.standard = Some(read_input(&path)?);
    }
    request.traces = read_input(&file)?;
    Ok(TraceArgs { file, json, request })
}

fn analyse(args: &TraceArgs) -> Result<TraceAnalysis, Failure> {
    let analysis = analyse_traces(&args.request).map_err(|e| Failure::Input(e.message))?;
    for problem in &analysis.problems {
        eprintln!("{}: {problem}", args.file);
    }
    Ok(analysis)
}

/// `turnover rates`.
pub fn rates(args: &[String]) -> Result<ExitCode, Failure> {
    let args = parse(args)?;
    let analysis = analyse(&args)?;
    if args.json {
        let traces: Vec<serde_json::Value> = analysis
            .traces
            .iter()
            .map(|t| {
                serde_json::json!({
                    "name": t.name,
                    "role": t.role,
                    "s": t.s, "i": t.i, "e": t.e,
                    "rate": t.rate,
                    "rate_se": t.rate_se,
                    "rate_ci_low": t.rate_ci_low, "rate_ci_high": t.rate_ci_high,
                    "v0": t.v0, "v0_se": t.v0_se, "v0_ci_low": t.v0_ci_low, "v0_ci_high": t.v0_ci_high,
                    "v0_points": t.v0_points, "v0_k": t.v0_k,
                    "rate_unit": analysis.rate_unit,
                    "window_start": t.window_start,
                    "window_end": t.window_end,
                    "window_points": t.window_points,
                    "manual_window": t.manual_window,
                    "fraction_converted": t.fraction_converted,
                    "blanks_subtracted": t.blanks_subtracted,
                    "flags": t.flags,
                    "messages": t.messages,
                })
            })
            .collect();
        let value = serde_json::json!({
            "time_unit": analysis.time_unit,
            "value_unit": analysis.value_unit,
            "rate_unit": analysis.rate_unit,
            "traces": traces,
            "enzyme_checks": analysis.enzyme_checks,
            "standard": analysis.standard,
            "rate_table": analysis.rate_table,
            "rate_links": analysis.rate_links,
            "problems": analysis.problems,
            "notes": analysis.notes,
            "caution": analysis.caution,
        });
        println!("{}", serde_json::to_string_pretty(&value).expect("JSON values always serialise"));
    } else {
        let n = |v: Option<f64>| v.map_or("—".to_string(), |v| format_significant(v, 4));
        println!("{:<8} {:>12} {:>12} {:>16} {:>9}  flags", "trace", "rate", "std. error", format!("window ({})", analysis.time_unit), "used");
        for t in &analysis.traces {
            let window = match (t.window_start, t.window_end) {
                (Some(a), Some(b)) => format!("{}–{}", format_significant(a, 3), format_significant(b, 3)),
                _ => "—".to_string(),
            };
            let used = t.fraction_converted.map_or("—".to_string(), |f| format!("{:.1} %", f * 100.0));
            println!("{:<8} {:>12} {:>12} {:>16} {:>9}  {}", t.name, n(t.rate), n(t.rate_se), window, used, t.flags.join(" "));
        }
        println!("\nrates in {}", analysis.rate_unit);
        for note in &analysis.notes {
            println!("note: {note}");
        }
        println!("\n{}", analysis.caution);
    }
    Ok(ExitCode::SUCCESS)
}

/// `turnover fit-progress`.
pub fn fit_progress_command(args: &[String]) -> Result<ExitCode, Failure> {
    let args = parse(args)?;
    let analysis = analyse(&args)?;
    let fit = fit_progress(&analysis).map_err(|e| Failure::Input(e.message))?;
    if args.json {
        let mut value = serde_json::to_value(&fit.summary).expect("a fit record always serialises");
        let object = value.as_object_mut().expect("a fit record is an object");
        object.insert("notes".into(), serde_json::json!(fit.notes));
        object.insert("reference_enzyme".into(), serde_json::json!(fit.reference_enzyme));
        object.insert("caution".into(), serde_json::json!(fit.caution));
        println!("{}", serde_json::to_string_pretty(&value).expect("JSON values always serialise"));
    } else {
        let s = &fit.summary;
        println!("Model: {} ({})\nFit {} after {} evaluation(s).\n", s.model, s.equation, s.termination_text, s.iterations);
        let n = |v: Option<f64>| v.map_or("—".to_string(), |v| format_significant(v, 5));
        for p in &s.parameters {
            println!("{:<14} {:>14} {:>14}  {}", p.name, n(Some(p.value)), n(p.std_error), p.unit.clone().unwrap_or_default());
        }
        println!("\nn = {}, dof = {}, residual SD = {}, R² = {}", s.n, s.dof, n(s.sigma), n(s.r_squared));
        for w in s.warnings.iter().chain(&fit.notes) {
            println!("note: {w}");
        }
        println!("\n{}", fit.caution);
    }
    Ok(if fit.summary.converged { ExitCode::SUCCESS } else { ExitCode::from(3) })
}
