//! `turnover fit FILE --group-by COLUMN`: every curve of a table fitted by
//! the core's [`fit_curve`], in parallel with rayon, written in input order.
//!
//! The curves are fitted in blocks of [`BLOCK`] per thread: each block is
//! fitted in parallel, collected in order and written before the next one
//! starts, so the results held at any moment stay bounded whatever the
//! number of curves. Each curve depends on its own rows only and the core
//! is deterministic, so the bytes written do not depend on the number of
//! threads.

use crate::output::{escape_controls, warn};
use crate::{usage, Failure, Prepared};
use rayon::prelude::*;
use serde::Serialize;
use std::io::{BufWriter, Write};
use std::process::ExitCode;
use turnover_core::batch::{fit_curve, prepare_batch, BatchRequest, CurveFlag, CurveResult, PIc50};
use turnover_core::fit::FitSummary;
use turnover_core::models::{model_with_options, ModelOptions};
use turnover_core::rates::CAUTION;
use turnover_core::shared_slope::analyse_shared_slope;
use turnover_core::table::InputProblem;

/// Curves per thread in one block.
const BLOCK: usize = 64;

/// How the records are written.
#[derive(Clone, Copy, PartialEq, Eq)]
pub(crate) enum Format {
    Json,
    Csv,
    Tsv,
}

impl Format {
    pub(crate) fn from_name(name: &str) -> Format {
        match name {
            "json" => Format::Json,
            "csv" => Format::Csv,
            _ => Format::Tsv,
        }
    }
}

/// One record of the JSON output: the curve's name, then the fit record's
/// fields, then what the batch adds.
#[derive(Serialize)]
struct CurveJson<'a> {
    curve: &'a str,
    #[serde(flatten)]
    fit: Option<&'a FitSummary>,
    #[serde(skip_serializing_if = "Option::is_none")]
    error: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pic50: Option<&'a PIc50>,
    flags: &'a [CurveFlag],
    problems: &'a [InputProblem],
    notes: &'a [String],
}

pub(crate) fn run(args: Prepared, model: String, group_by: String, format: Format, threads: Option<usize>, normalise: bool) -> Result<ExitCode, Failure> {
    if args.points {
        return Err(usage("fit", "--points applies to one-curve fits; a batch writes no per-point arrays"));
    }
    if args.request.protein.is_some() {
        return Err(usage("fit", "--protein and --molar-mass are not available with --group-by; fit the curve alone for its specific activity"));
    }
    if args.cheng_prusoff.is_some() {
        return Err(usage("fit", "--cheng-prusoff is not available with --group-by; fit the curve alone to convert its IC50"));
    }
    let request = BatchRequest {
        text: crate::read_input(&args.file)?,
        group_by,
        model: model.clone(),
        substrate_unit: args.request.substrate_unit.clone(),
        rate_unit: args.request.rate_unit.clone(),
        enzyme: args.request.enzyme,
        enzyme_unit: args.request.enzyme_unit.clone(),
        fixed_top: args.top,
        fixed_bottom: args.bottom,
        excluded_lines: args.request.excluded_lines.clone(),
        weighting: args.request.weighting,
        interval_method: args.request.interval_method,
        bootstrap: args.request.bootstrap,
        flags: Default::default(),
        normalise,
    };
    let (split, plates) = prepare_batch(&request).map_err(|e| Failure::Input(e.message))?;
    for plate in &plates {
        if let Some(flag) = &plate.flag {
            warn(&format!("{}: plate '{}': {flag}", args.file, plate.plate));
        }
    }
    for problem in &split.problems {
        warn(&format!("{}: {problem}", args.file));
    }
    let pool = {
        let mut builder = rayon::ThreadPoolBuilder::new();
        if let Some(n) = threads {
            if n == 0 {
                return Err(usage("fit", "--threads must be at least 1"));
            }
            builder = builder.num_threads(n);
        }
        builder.build().map_err(|e| Failure::Input(format!("cannot start the worker threads: {e}")))?
    };
    let names = parameter_names(&model, &request);
    let stdout = std::io::stdout();
    let mut out = BufWriter::with_capacity(64 * 1024, stdout.lock());
    match format {
        Format::Json => {
            write!(out, "{{\"group_by\":{},\"plates\":", serde_json::to_string(&split.group_by).expect("a string"))?;
            serde_json::to_writer(&mut out, &plates).map_err(std::io::Error::from)?;
            out.write_all(b",\"curves\":[")?;
        }
        Format::Csv | Format::Tsv => writeln!(out, "{}", header(&names, &split.group_by, format))?,
    }
    let (mut all_converged, mut problems) = (true, split.problems.len());
    let block = BLOCK * pool.current_num_threads();
    let mut first = true;
    for chunk in split.curves.chunks(block) {
        let results: Vec<CurveResult> = pool.install(|| chunk.par_iter().map(|curve| fit_curve(&request, curve)).collect());
        for result in &results {
            all_converged &= result.fit.as_ref().is_some_and(|f| f.converged);
            problems += result.problems.len();
            for problem in &result.problems {
                warn(&format!("{}: curve '{}': {problem}", args.file, result.curve));
            }
            match format {
                Format::Json => {
                    if !first {
                        out.write_all(b",")?;
                    }
                    out.write_all(b"\n")?;
                    let record = CurveJson {
                        curve: &result.curve,
                        fit: result.fit.as_ref(),
                        error: result.error.as_deref(),
                        pic50: result.pic50.as_ref(),
                        flags: &result.flags,
                        problems: &result.problems,
                        notes: &result.notes,
                    };
                    serde_json::to_writer(&mut out, &record).map_err(std::io::Error::from)?;
                }
                Format::Csv | Format::Tsv => writeln!(out, "{}", row(result, &names, format))?,
            }
            first = false;
        }
    }
    if format == Format::Json {
        out.write_all(b"\n],\"problems\":")?;
        serde_json::to_writer(&mut out, &split.problems).map_err(std::io::Error::from)?;
        writeln!(out, ",\"caution\":{}}}", serde_json::to_string(CAUTION).expect("a string"))?;
    }
    out.flush()?;
    if problems > 0 && !args.lenient {
        return Err(Failure::Input(format!(
            "{problems} problem(s) in the input (each listed above and in its curve's record); the usable rows were fitted; fix them, or pass --lenient to accept the fits"
        )));
    }
    Ok(if all_converged { ExitCode::SUCCESS } else { ExitCode::from(3) })
}

/// `fit --group-by COLUMN --model ic50 --shared-slope`: the core's
/// [`analyse_shared_slope`] (one global fit, so no threads), written as the
/// batch is, with the shared slope after the curves (JSON `shared`; in CSV
/// and TSV every row carries the shared slope and its global SE).
pub(crate) fn run_shared_slope(args: Prepared, model: String, group_by: String, format: Format, normalise: bool) -> Result<ExitCode, Failure> {
    if args.points {
        return Err(usage("fit", "--points applies to one-curve fits; a batch writes no per-point arrays"));
    }
    if args.cheng_prusoff.is_some() {
        return Err(usage("fit", "--cheng-prusoff is not available with --group-by; fit the curve alone to convert its IC50"));
    }
    if model != "ic50" {
        return Err(usage("fit", format!("--shared-slope applies to --model ic50 only, not to {model}")));
    }
    let request = BatchRequest {
        text: crate::read_input(&args.file)?,
        group_by,
        model: model.clone(),
        substrate_unit: args.request.substrate_unit.clone(),
        rate_unit: args.request.rate_unit.clone(),
        enzyme: args.request.enzyme,
        enzyme_unit: args.request.enzyme_unit.clone(),
        fixed_top: args.top,
        fixed_bottom: args.bottom,
        excluded_lines: args.request.excluded_lines.clone(),
        weighting: args.request.weighting,
        interval_method: args.request.interval_method,
        bootstrap: args.request.bootstrap,
        flags: Default::default(),
        normalise,
    };
    let analysis = analyse_shared_slope(&request).map_err(|e| Failure::Input(e.message))?;
    for plate in &analysis.plates {
        if let Some(flag) = &plate.flag {
            warn(&format!("{}: plate '{}': {flag}", args.file, plate.plate));
        }
    }
    for problem in &analysis.problems {
        warn(&format!("{}: {problem}", args.file));
    }
    let names = parameter_names(&model, &request);
    let stdout = std::io::stdout();
    let mut out = BufWriter::with_capacity(64 * 1024, stdout.lock());
    let mut problems = analysis.problems.len();
    let mut all_converged = analysis.shared.as_ref().is_some_and(|s| s.converged);
    match format {
        Format::Json => {
            write!(out, "{{\"group_by\":{},\"plates\":", serde_json::to_string(&analysis.group_by).expect("a string"))?;
            serde_json::to_writer(&mut out, &analysis.plates).map_err(std::io::Error::from)?;
            out.write_all(b",\"curves\":[")?;
        }
        Format::Csv | Format::Tsv => writeln!(out, "{}", header(&names, &analysis.group_by, format))?,
    }
    for (k, result) in analysis.curves.iter().enumerate() {
        all_converged &= result.fit.as_ref().is_some_and(|f| f.converged);
        problems += result.problems.len();
        for problem in &result.problems {
            warn(&format!("{}: curve '{}': {problem}", args.file, result.curve));
        }
        match format {
            Format::Json => {
                out.write_all(if k == 0 { b"\n" } else { b",\n" })?;
                let record = CurveJson {
                    curve: &result.curve,
                    fit: result.fit.as_ref(),
                    error: result.error.as_deref(),
                    pic50: result.pic50.as_ref(),
                    flags: &result.flags,
                    problems: &result.problems,
                    notes: &result.notes,
                };
                serde_json::to_writer(&mut out, &record).map_err(std::io::Error::from)?;
            }
            Format::Csv | Format::Tsv => writeln!(out, "{}", row(result, &names, format))?,
        }
    }
    if format == Format::Json {
        out.write_all(b"\n],\"shared\":")?;
        serde_json::to_writer(&mut out, &analysis.shared).map_err(std::io::Error::from)?;
        out.write_all(b",\"problems\":")?;
        serde_json::to_writer(&mut out, &analysis.problems).map_err(std::io::Error::from)?;
        writeln!(out, ",\"caution\":{}}}", serde_json::to_string(CAUTION).expect("a string"))?;
    }
    out.flush()?;
    if let Some(shared) = &analysis.shared {
        if format != Format::Json {
            let se = shared.slope.std_error.map_or("not computed".to_string(), |v| format!("{v}"));
            warn(&format!("{}: shared steepness {} (SE {se}) from {} curves, {} points", args.file, shared.slope.value, shared.curves, shared.n));
        }
    }
    if problems > 0 && !args.lenient {
        return Err(Failure::Input(format!(
            "{problems} problem(s) in the input (each listed above and in its curve's record); the usable rows were fitted; fix them, or pass --lenient to accept the fits"
        )));
    }
    Ok(if all_converged { ExitCode::SUCCESS } else { ExitCode::from(3) })
}

/// The fitted parameters' names, from the model with the batch's options.
fn parameter_names(model: &str, request: &BatchRequest) -> Vec<String> {
    let options = ModelOptions { enzyme: request.enzyme, fixed_top: request.fixed_top, fixed_bottom: request.fixed_bottom };
    match model_with_options(model, &options) {
        Ok(m) => m.parameters().iter().map(|p| p.name.to_string()).collect(),
        Err(_) => Vec::new(),
    }
}

pub(crate) fn separator(format: Format) -> char {
    if format == Format::Csv {
        ','
    } else {
        '\t'
    }
}

/// A cell for CSV (quoted when it holds a comma, quote or line break) or
/// TSV (tabs and line breaks become spaces).
pub(crate) fn cell(text: &str, format: Format) -> String {
    let text = escape_controls(text);
    match format {
        Format::Csv if text.contains([',', '"', '\n']) => format!("\"{}\"", text.replace('"', "\"\"")),
        Format::Tsv => text.replace(['\t', '\n'], " "),
        _ => text.into_owned(),
    }
}

fn header(names: &[String], group_by: &str, format: Format) -> String {
    let mut cells = vec![cell(group_by, format), "converged".into(), "n".into(), "rss".into()];
    for name in names {
        for suffix in ["", "_se", "_low", "_high"] {
            cells.push(cell(&format!("{name}{suffix}"), format));
        }
    }
    cells.extend(["pIC50", "pIC50_se", "pIC50_low", "pIC50_high", "flags", "error"].map(String::from));
    cells.join(&separator(format).to_string())
}

/// A number at full precision (the shortest text that reads back to the
/// same f64), empty when absent.
fn number(value: Option<f64>) -> String {
    value.map_or(String::new(), |v| format!("{v}"))
}

fn row(result: &CurveResult, names: &[String], format: Format) -> String {
    let mut cells = vec![cell(&result.curve, format)];
    match &result.fit {
        Some(fit) => {
            cells.extend([fit.converged.to_string(), fit.n.to_string(), number(Some(fit.rss))]);
            for name in names {
                match fit.parameters.iter().find(|p| &p.name == name && !p.derived) {
                    Some(p) => cells.extend([number(Some(p.value)), number(p.std_error), number(p.ci_low), number(p.ci_high)]),
                    None => cells.extend(std::iter::repeat_n(String::new(), 4)),
                }
            }
        }
        None => {
            cells.extend(["false".to_string(), String::new(), String::new()]);
            cells.extend(std::iter::repeat_n(String::new(), 4 * names.len()));
        }
    }
    match &result.pic50 {
        Some(p) => cells.extend([number(Some(p.value)), number(p.std_error), number(p.ci_low), number(p.ci_high)]),
        None => cells.extend(std::iter::repeat_n(String::new(), 4)),
    }
    let codes: Vec<&str> = result.flags.iter().map(|f| f.code.as_str()).collect();
    cells.push(cell(&codes.join(" "), format));
    cells.push(cell(result.error.as_deref().unwrap_or(""), format));
    cells.join(&separator(format).to_string())
}
