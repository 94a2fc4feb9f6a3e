//! The `turnover` command: glue between files and `turnover-core`.
//!
//! Every number printed here comes from the core (`analyse_rates`,
//! `analyse_inhibition`, `analyse_dose`, `analyse_traces`, `fit_progress`,
//! `compare_sets`, `inactivation_from_traces`, `analyse_ph`,
//! `analyse_temperature`, `analyse_bisubstrate`, `design`),
//! the same functions the page calls. Arguments are read by clap (derive).
//! Exit codes are decided in one place, [`main`]: 0 success, 1 the output
//! could not be written, 2 bad input or usage, 3 the fit did not converge
//! (its numbers are still printed, marked as such). A closed pipe ends the
//! run quietly with 0.

mod batch;
mod constants;
mod bisubstrate;
mod design;
mod inactivation;
mod output;
mod profiles;
mod sets;
mod traces;

use clap::builder::{PossibleValue, PossibleValuesParser};
use clap::{Args, CommandFactory, Parser, Subcommand};
use output::{escape_controls, fixed, significant, warn, Output};
use serde::Serialize;
use std::io::Read;
use std::process::ExitCode;
use turnover_core::decode::decode_text;
use turnover_core::dose::{analyse_dose, ChengPrusoffRequest, DoseRequest};
use turnover_core::fit::FitSummary;
use turnover_core::inhibition::{analyse_inhibition, InhibitionRequest};
use turnover_core::intervals::{BootstrapScheme, IntervalMethod};
use turnover_core::models::{model_input, Mechanism, ModelInput, MODEL_NAMES};
use turnover_core::rates::{analyse_rates, compare_rate_models, RateAnalysis, RateRequest};
use turnover_core::table::{read_lone_number, InputProblem};
use turnover_core::units::ConcentrationUnit;
use turnover_core::weighting::Weighting;

const AFTER_HELP: &str = "\
Numbers in options and tables may use a decimal point or a decimal comma; a
value such as 1,000 that could be either is refused, never guessed.

Exit codes: 0 success; 1 the output could not be written; 2 bad input or
usage; 3 the fit did not converge (its numbers are still printed).

The constants are statistical estimates; they mean what they claim only for
valid initial-rate data. Follow your laboratory's validated procedures.";

/// Enzyme kinetics from the command line: rate laws fitted to [S] and v,
/// inhibitor series and time courses, with honest uncertainties.
#[derive(Parser)]
#[command(name = "turnover", version, after_help = AFTER_HELP, propagate_version = true)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Fit one model to a table of [S] and v ([S], [I] and v for inhibition
    /// mechanisms; [I] and a response for ic50 and morrison; [A], [B] and v
    /// for the two-substrate laws)
    Fit(FitOptions),
    /// Fit several models to the same data and rank them (AICc, Akaike
    /// weights, F tests of nested pairs, a verdict)
    Compare(CompareOptions),
    /// Initial rates from a time-course table
    Rates(traces::TraceOptions),
    /// Integrated Michaelis-Menten fit to whole time courses
    FitProgress(traces::TraceOptions),
    /// Do the constants differ between data sets? Global fits with each
    /// constant shared or separate, F tests, ratios to a reference set
    CompareSets(sets::SetsOptions),
    /// Time-dependent inhibition from progress curves: kobs per trace,
    /// then kinact, KI and kinact/KI from kobs against [I]
    Inactivation(inactivation::InactivationOptions),
    /// A rate or rate constant against pH: one ionisation (rising or
    /// falling limb) or two (bell), pKa values, comparison
    Ph(profiles::PhOptions),
    /// A rate constant against temperature: Arrhenius and Eyring fitted
    /// directly, Ea, ΔH‡, ΔS‡, ΔG‡, a test of curvature
    Temperature(profiles::TemperatureOptions),
    /// Plan an experiment: concentrations and replicates for the precision
    /// wanted, predicted and simulated, with a plate map and pipetting table
    Design(design::DesignOptions),
}

/// Options every fit of a table shares.
#[derive(Args)]
struct DataOptions {
    /// The table to read ('-' reads standard input)
    #[arg(value_name = "FILE")]
    file: String,
    /// Print one JSON object instead of a table
    #[arg(long)]
    json: bool,
    /// The sheet to read when FILE is a workbook (.xlsx, .ods) with several
    #[arg(long, value_name = "NAME")]
    sheet: Option<String>,
    /// In JSON, include the per-point array even when there are more than
    /// 10,000 points (fewer are always included)
    #[arg(long)]
    points: bool,
    /// Fit the usable rows even when some lines have problems (the problems
    /// are still reported on standard error)
    #[arg(long)]
    lenient: bool,
    /// Unit of [S] (M, mM, µM or uM, nM, pM); default: from the header
    #[arg(long, value_name = "UNIT")]
    substrate_unit: Option<String>,
    /// Unit of v, a concentration per time (µM/min, nM/s, ...) or, for the
    /// [S]–v models, a specific activity (µmol/min/mg, U/mg, ...); default:
    /// from the header
    #[arg(long, value_name = "UNIT")]
    rate_unit: Option<String>,
    /// Report rates (v, Vmax) per second, minute or hour, converted from
    /// the unit of v (dose-response: responses that are rates only)
    #[arg(long, value_name = "TIME", value_parser = ["s", "min", "h"])]
    rates_per: Option<String>,
    /// What the weighting assumes about the error of a rate
    #[arg(long, value_name = "ERROR", value_parser = weighting_names(), default_value = "constant")]
    weighting: String,
    /// Confidence intervals: t-based (asymptotic), profile likelihood or bootstrap
    #[arg(long, value_name = "METHOD", value_parser = ["asymptotic", "profile", "bootstrap"], default_value = "asymptotic")]
    ci: String,
    /// Bootstrap resamples (with --ci bootstrap) [default: 2000]
    #[arg(long, value_name = "N")]
    resamples: Option<usize>,
    /// Bootstrap seed (with --ci bootstrap); the same seed gives the same intervals [default: 1]
    #[arg(long, value_name = "N")]
    seed: Option<u64>,
    /// Bootstrap scheme (with --ci bootstrap) [default: residuals]
    #[arg(long, value_name = "WHAT", value_parser = ["residuals", "cases"])]
    resample_by: Option<String>,
    /// Input line numbers to leave out of the fit, such as 4,9
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    exclude_lines: Vec<String>,
    /// Single values to leave out, as LINE:COLUMN (both from 1), such as
    /// 4:3,9:2: one replicate of a table with replicates in columns, or one
    /// cell of an inhibition matrix
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    exclude_cells: Vec<String>,
}

#[derive(Args)]
struct FitOptions {
    #[command(flatten)]
    data: DataOptions,
    /// Model to fit. On [S], v: mm, substrate-inhibition, hill. On [S], [I],
    /// v (long or matrix table), fitted globally: competitive, uncompetitive,
    /// mixed, noncompetitive. On [I], response: ic50, morrison. On [A], [B],
    /// v (long or matrix table), fitted globally: sequential, ordered,
    /// ping-pong
    #[arg(long, value_name = "NAME", value_parser = model_names())]
    model: Option<String>,
    #[command(flatten)]
    extra: ModelExtras,
    /// Fit one curve per name in this column (such as curve, compound,
    /// sample or well), each as if its rows were a table alone
    #[arg(long, value_name = "COLUMN")]
    group_by: Option<String>,
    /// What to print. One fit: text (a table for a person, numbers by the
    /// formatting rule), json (every number at full precision; the same as
    /// --json), or csv / tsv (one row per constant at full precision; notes,
    /// warnings and the caution on standard error). With --group-by: json,
    /// or one csv or tsv row per curve [default: text for one fit; with
    /// --group-by json with --json, else tsv]
    #[arg(long, value_name = "FORMAT", value_parser = ["text", "json", "csv", "tsv"])]
    format: Option<String>,
    /// With --group-by: worker threads [default: one per core, or
    /// RAYON_NUM_THREADS]
    #[arg(long, value_name = "N")]
    threads: Option<usize>,
    /// With --group-by: turn each plate's signals into % activity by its
    /// control wells (a role column: high, low, sample; an optional plate
    /// column), and report each plate's Z′ and signal window
    #[arg(long)]
    normalise: bool,
    /// With --group-by and --model ic50: one global fit of every curve with
    /// a single steepness (each curve keeps its IC50, floor and ceiling)
    #[arg(long)]
    shared_slope: bool,
}

/// Options that only some models use; each is refused where it does not apply.
#[derive(Args)]
struct ModelExtras {
    /// Total enzyme concentration for kcat, such as '10 nM' or '10nM'; for
    /// morrison, [E]t in the units of [I] (a bare number)
    #[arg(long, value_name = "CONC")]
    enzyme: Option<String>,
    /// Unit of --enzyme when CONC is a bare number
    #[arg(long, value_name = "UNIT")]
    enzyme_unit: Option<String>,
    /// The enzyme's protein concentration in the assay, such as
    /// '0.05 mg/mL' or '50µg/mL': adds the specific activity (µmol min⁻¹
    /// mg⁻¹, from Vmax; the [S]–v models)
    #[arg(long, value_name = "CONC")]
    protein: Option<String>,
    /// The enzyme's molar mass (per active site), such as '42 kDa' or
    /// '42000 g/mol': with --protein, [E]t = protein / molar mass, for kcat
    /// (instead of --enzyme); alone, with rates per mass of protein
    /// (µmol/min/mg, U/mg), kcat = Vmax × molar mass
    #[arg(long, value_name = "MASS")]
    molar_mass: Option<String>,
    /// Fix the upper plateau (ceiling) of the ic50 model
    #[arg(long = "ceiling", value_name = "Y", value_parser = option_number, allow_hyphen_values = true)]
    top: Option<f64>,
    /// Fix the lower plateau (floor) of the ic50 model
    #[arg(long = "floor", value_name = "Y", value_parser = option_number, allow_hyphen_values = true)]
    bottom: Option<f64>,
    /// With ic50: add Ki converted from the IC50 for a competitive,
    /// uncompetitive or noncompetitive inhibitor (Cheng & Prusoff 1973);
    /// needs --substrate and --km; assumes classical (not tight-binding)
    /// conditions
    #[arg(long, value_name = "MECHANISM")]
    cheng_prusoff: Option<String>,
    /// [S] of the IC50 assay, such as '50 µM' or a bare number
    #[arg(long, value_name = "CONC")]
    substrate: Option<String>,
    /// Km of the substrate, in the same form as --substrate (both bare
    /// numbers in one unit, or both with units)
    #[arg(long, value_name = "KM")]
    km: Option<String>,
    /// Standard error of Km (bare: in the unit of --km); default: Km exact
    #[arg(long, value_name = "SE")]
    km_se: Option<String>,
}

#[derive(Args)]
struct CompareOptions {
    #[command(flatten)]
    data: DataOptions,
    /// Comma-separated model names, all on the same data: inhibition
    /// mechanisms (default: competitive,uncompetitive,mixed,noncompetitive),
    /// mm with substrate-inhibition and/or hill, or two-substrate laws
    /// (default on a table naming [A] and [B]: sequential,ordered,ping-pong)
    #[arg(long, value_name = "LIST", value_delimiter = ',', value_parser = model_names())]
    models: Vec<String>,
    #[command(flatten)]
    extra: ModelExtras,
}

/// The model names, with the core's long alias `michaelis-menten` for `mm`
/// accepted but not listed.
pub(crate) fn model_names() -> PossibleValuesParser {
    let mut values: Vec<PossibleValue> = MODEL_NAMES.iter().map(|m| PossibleValue::new(*m)).collect();
    values.push(PossibleValue::new("michaelis-menten").hide(true));
    PossibleValuesParser::new(values)
}

/// The weighting names, the earlier ones hidden but accepted.
pub(crate) fn weighting_names() -> PossibleValuesParser {
    let mut values: Vec<PossibleValue> =
        Weighting::ALL.iter().map(|w| PossibleValue::new(w.option_name()).help(w.describe())).collect();
    values.extend(
        Weighting::ALL.iter().filter(|w| w.name() != w.option_name()).map(|w| PossibleValue::new(w.name()).hide(true)),
    );
    PossibleValuesParser::new(values)
}

/// Reads a number option with the tables' rule: a decimal point or comma,
/// and a value such as `1,000` refused as ambiguous.
pub(crate) fn option_number(text: &str) -> Result<f64, String> {
    read_lone_number(text)
}

/// A failure with the exit code it maps to.
pub(crate) enum Failure {
    /// Options that cannot be used together or do not apply (exit 2, with
    /// the command's usage).
    Usage { command: &'static str, message: String },
    /// Input that cannot be analysed (exit 2).
    Input(String),
    /// The output could not be written (exit 1, or 0 for a closed pipe).
    Output(std::io::Error),
}

impl From<std::io::Error> for Failure {
    fn from(error: std::io::Error) -> Self {
        Failure::Output(error)
    }
}

pub(crate) fn usage(command: &'static str, message: impl Into<String>) -> Failure {
    Failure::Usage { command, message: message.into() }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Fit(options) => fit(options),
        Command::Compare(options) => compare(options),
        Command::Rates(options) => traces::rates(options),
        Command::FitProgress(options) => traces::fit_progress_command(options),
        Command::CompareSets(options) => sets::compare_sets_command(options),
        Command::Inactivation(options) => inactivation::inactivation_command(options),
        Command::Ph(options) => profiles::ph_command(options),
        Command::Temperature(options) => profiles::temperature_command(options),
        Command::Design(options) => design::design_command(options),
    };
    match result {
        Ok(code) => code,
        Err(Failure::Usage { command, message }) => {
            let mut cli = Cli::command();
            let sub = cli.find_subcommand_mut(command).expect("every command is declared");
            sub.set_bin_name(format!("turnover {command}"));
            sub.error(clap::error::ErrorKind::ArgumentConflict, escape_controls(&message)).exit()
        }
        Err(Failure::Input(message)) => {
            warn(&format!("turnover: {message}"));
            ExitCode::from(2)
        }
        Err(Failure::Output(error)) if error.kind() == std::io::ErrorKind::BrokenPipe => ExitCode::SUCCESS,
        Err(Failure::Output(error)) => {
            warn(&format!("turnover: cannot write the output: {error}"));
            ExitCode::from(1)
        }
    }
}

/// The rate request, models and options of a fit or comparison.
pub(crate) struct Prepared {
    file: String,
    sheet: Option<String>,
    json: bool,
    points: bool,
    lenient: bool,
    request: RateRequest,
    top: Option<f64>,
    bottom: Option<f64>,
    cheng_prusoff: Option<ChengPrusoffRequest>,
}

fn prepare(command: &'static str, data: DataOptions, extra: ModelExtras, model: &str) -> Result<Prepared, Failure> {
    let mut request = RateRequest { model: model.to_string(), ..RateRequest::default() };
    request.substrate_unit = data.substrate_unit;
    request.rate_unit = data.rate_unit;
    request.rate_time = data.rates_per;
    let (weighting, note) = Weighting::from_option_name(&data.weighting).map_err(|m| usage(command, m))?;
    if let Some(note) = note {
        warn(&format!("turnover: note: {note}"));
    }
    request.weighting = weighting;
    request.interval_method = IntervalMethod::from_name(&data.ci).map_err(|m| usage(command, m))?;
    if request.interval_method != IntervalMethod::Bootstrap {
        for (given, name) in [(data.resamples.is_some(), "--resamples"), (data.seed.is_some(), "--seed"), (data.resample_by.is_some(), "--resample-by")] {
            if given {
                return Err(usage(command, format!("{name} applies to bootstrap intervals only; add --ci bootstrap or leave it out")));
            }
        }
    }
    if data.points && !data.json {
        return Err(usage(command, "--points chooses what the JSON holds; add --json or leave it out"));
    }
    if let Some(resamples) = data.resamples {
        request.bootstrap.resamples = resamples;
    }
    if let Some(seed) = data.seed {
        request.bootstrap.seed = seed;
    }
    if data.resample_by.as_deref() == Some("cases") {
        request.bootstrap.scheme = BootstrapScheme::Case;
    }
    for part in data.exclude_lines.iter().map(|p| p.trim()).filter(|p| !p.is_empty()) {
        let line = part
            .parse::<usize>()
            .map_err(|_| usage(command, format!("--exclude-lines: '{part}' is not a line number")))?;
        request.excluded_lines.push(line);
    }
    for part in data.exclude_cells.iter().map(|p| p.trim()).filter(|p| !p.is_empty()) {
        let cell = part.split_once(':').and_then(|(l, c)| Some((l.trim().parse::<usize>().ok()?, c.trim().parse::<usize>().ok()?)));
        match cell {
            Some((line, column)) if line > 0 && column > 0 => request.excluded_cells.push((line, column)),
            _ => return Err(usage(command, format!("--exclude-cells: '{part}' is not LINE:COLUMN (two numbers from 1, such as 4:3)"))),
        }
    }
    let input = model_input(model);
    if let Some(text) = &extra.enzyme {
        let (number, unit) = turnover_core::table::read_quantity(text)
            .map_err(|m| usage(command, format!("--enzyme '{text}': {m}; give a concentration such as '10 nM'")))?;
        match input {
            Some(ModelInput::SubstrateAndInhibitor) => {
                return Err(usage(command, format!("--enzyme is not used by the {model} mechanism fit; kcat comes from the [S]–v models (mm, substrate-inhibition, hill)")));
            }
            Some(ModelInput::Inhibitor) if unit.is_some() || extra.enzyme_unit.is_some() => {
                return Err(usage(command, "for the dose-response models, --enzyme is [E]t in the unit of the [I] column; give a bare number and no --enzyme-unit"));
            }
            _ => {}
        }
        if let (Some(given), Some(option)) = (&unit, &extra.enzyme_unit) {
            let same = match (ConcentrationUnit::parse(given), ConcentrationUnit::parse(option)) {
                (Ok(a), Ok(b)) => a == b,
                _ => given.trim() == option.trim(),
            };
            if !same {
                return Err(usage(
                    command,
                    format!("--enzyme '{text}' is in {given} but --enzyme-unit says {option}; give the unit once, in either place"),
                ));
            }
        }
        request.enzyme = Some(number);
        request.enzyme_unit = unit.or(extra.enzyme_unit);
    } else if extra.enzyme_unit.is_some() {
        return Err(usage(command, "--enzyme-unit is the unit of --enzyme; give --enzyme too"));
    }
    request.protein = protein_request(command, model, extra.protein, extra.molar_mass, request.enzyme.is_some())?;
    let cheng_prusoff = conversion_request(command, extra.cheng_prusoff, extra.substrate, extra.km, extra.km_se)?;
    if cheng_prusoff.is_some() && model != "ic50" {
        return Err(usage(command, format!("--cheng-prusoff converts the IC50 of the ic50 model; it does not apply to {model}")));
    }
    if (extra.top.is_some() || extra.bottom.is_some()) && model != "ic50" {
        return Err(usage(command, "--ceiling and --floor fix the plateaus of the ic50 model; they apply to no other model"));
    }
    Ok(Prepared {
        file: data.file,
        sheet: data.sheet,
        json: data.json,
        points: data.points,
        lenient: data.lenient,
        request,
        top: extra.top,
        bottom: extra.bottom,
        cheng_prusoff,
    })
}

/// Reads `--protein` and `--molar-mass` (numbers by the tables' rule, each
/// with its unit) into the core's request; refuses them for models
/// without Vmax, a molar mass beside
/// `--enzyme`, and units that are not a mass concentration or a molar
/// mass, with a sentence.
fn protein_request(
    command: &'static str,
    model: &str,
    protein: Option<String>,
    molar_mass: Option<String>,
    enzyme_given: bool,
) -> Result<Option<turnover_core::protein::ProteinRequest>, Failure> {
    use turnover_core::protein::{grams_per_litre, grams_per_mole, ProteinRequest};
    if protein.is_none() && molar_mass.is_none() {
        return Ok(None);
    }
    if model_input(model).is_some_and(|input| input != ModelInput::Substrate) {
        return Err(usage(command, format!("--protein and --molar-mass apply to the [S]–v models (mm, substrate-inhibition, hill), not to {model}")));
    }
    let quantity = |text: &str, name: &str, example: &str, check: fn(&str) -> Result<f64, String>| -> Result<(f64, String), Failure> {
        let (value, unit) = turnover_core::table::read_quantity(text)
            .map_err(|m| usage(command, format!("{name} '{text}': {m}; give it with its unit, such as '{example}'")))?;
        let unit = unit.ok_or_else(|| usage(command, format!("{name} '{text}' has no unit; give it with its unit, such as '{example}'")))?;
        check(&unit).map_err(|m| usage(command, format!("{name}: {m}")))?;
        if !(value.is_finite() && value > 0.0) {
            return Err(usage(command, format!("{name} '{text}': it must be a positive number")));
        }
        Ok((value, unit))
    };
    // A molar mass alone serves rates per mass of protein (µmol/min/mg),
    // known only once the table's header is read: the core refuses it
    // otherwise, with a sentence.
    let (concentration, unit) = match protein {
        Some(protein) => {
            let (value, unit) = quantity(&protein, "--protein", "0.05 mg/mL", grams_per_litre)?;
            (Some(value), unit)
        }
        None => (None, String::new()),
    };
    let mass = molar_mass.map(|m| quantity(&m, "--molar-mass", "42 kDa", grams_per_mole)).transpose()?;
    if mass.is_some() && enzyme_given {
        return Err(usage(command, "[E]t is given twice: by --enzyme and by --protein with --molar-mass; give one of them"));
    }
    Ok(Some(ProteinRequest {
        concentration,
        unit,
        molar_mass: mass.as_ref().map(|m| m.0),
        molar_mass_unit: mass.map(|m| m.1),
    }))
}

/// Reads `--cheng-prusoff`, `--substrate`, `--km` and `--km-se` into one
/// request, [S] and Km's error expressed in the unit of Km. Refuses any of
/// the numbers without the mechanism, and the mechanism without [S] and Km.
fn conversion_request(
    command: &'static str,
    mechanism: Option<String>,
    substrate: Option<String>,
    km: Option<String>,
    km_se: Option<String>,
) -> Result<Option<ChengPrusoffRequest>, Failure> {
    let Some(mechanism) = mechanism else {
        for (given, name) in [(&substrate, "--substrate"), (&km, "--km"), (&km_se, "--km-se")] {
            if given.is_some() {
                return Err(usage(command, format!("{name} is used only with --cheng-prusoff MECHANISM")));
            }
        }
        return Ok(None);
    };
    let (Some(substrate), Some(km)) = (substrate, km) else {
        return Err(usage(command, "--cheng-prusoff needs both --substrate (the assay's [S]) and --km"));
    };
    let quantity = |text: &str, name: &str| -> Result<(f64, Option<ConcentrationUnit>), Failure> {
        let (value, unit) = turnover_core::table::read_quantity(text)
            .map_err(|m| usage(command, format!("{name} '{text}': {m}; give a concentration such as '50 µM' or '50'")))?;
        let unit = unit.map(|u| ConcentrationUnit::parse(&u).map_err(|m| usage(command, format!("{name}: {m}")))).transpose()?;
        Ok((value, unit))
    };
    let (km_value, km_unit) = quantity(&km, "--km")?;
    let (s_value, s_unit) = quantity(&substrate, "--substrate")?;
    let in_km_unit = |value: f64, unit: Option<ConcentrationUnit>, name: &str| -> Result<f64, Failure> {
        match (unit, km_unit) {
            (Some(u), Some(k)) => Ok(value * u.in_molar() / k.in_molar()),
            (None, None) => Ok(value),
            (None, Some(_)) if name == "--km-se" => Ok(value),
            _ => Err(usage(
                command,
                format!("{name} and --km must both carry a unit (such as '50 µM') or both be bare numbers in one unit"),
            )),
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

/// Reads a file (or standard input for `-`) through the core's one
/// decoding rule; a note about the encoding goes to standard error.
/// Whether `path` names a spreadsheet workbook by its extension. `.xls`
/// and `.xlsb` are listed so that the core's reader refuses them with a
/// sentence (save as .xlsx, .ods or .csv) instead of their bytes being
/// read as text.
fn is_workbook(path: &str) -> bool {
    let lower = path.to_ascii_lowercase();
    [".xlsx", ".xlsm", ".ods", ".xls", ".xlsb"].iter().any(|e| lower.ends_with(e))
}

/// Reads a file (or standard input) as table text: a workbook's sheet
/// (`sheet`, or its only sheet) through the core's spreadsheet reader,
/// anything else through `decode_text`.
pub(crate) fn read_table(path: &str, sheet: Option<&str>) -> Result<String, Failure> {
    if !is_workbook(path) {
        if sheet.is_some() {
            return Err(Failure::Input(format!("--sheet applies to a workbook (.xlsx, .ods); '{path}' is read as text")));
        }
        return read_input(path);
    }
    let bytes = std::fs::read(path).map_err(|e| Failure::Input(format!("cannot read '{path}': {e}")))?;
    let names = turnover_core::read::sheets::sheet_names(&bytes).map_err(|e| Failure::Input(format!("{path}: {}", e.message)))?;
    let name = match sheet {
        Some(name) => name.to_string(),
        None if names.len() == 1 => names[0].clone(),
        None => {
            return Err(Failure::Input(format!(
                "{path} has {} sheets ({}); choose one with --sheet NAME",
                names.len(),
                names.iter().map(|n| format!("'{n}'")).collect::<Vec<_>>().join(", ")
            )))
        }
    };
    let read = turnover_core::read::sheets::sheet_text(&bytes, &name).map_err(|e| Failure::Input(format!("{path}: {}", e.message)))?;
    for note in &read.notes {
        warn(&format!("turnover: {path}: note: {note}"));
    }
    Ok(read.text)
}

pub(crate) fn read_input(path: &str) -> Result<String, Failure> {
    if is_workbook(path) {
        return read_table(path, None);
    }
    let mut bytes = Vec::new();
    if path == "-" {
        std::io::stdin()
            .read_to_end(&mut bytes)
            .map_err(|e| Failure::Input(format!("cannot read standard input: {e}")))?;
    } else {
        bytes = std::fs::read(path).map_err(|e| Failure::Input(format!("cannot read '{path}': {e}")))?;
    }
    let decoded = decode_text(&bytes);
    if let Some(note) = decoded.note {
        warn(&format!("turnover: {path}: note: {note}"));
    }
    Ok(decoded.text)
}

/// More points than this are left out of JSON unless `--points` is given.
const POINTS_BY_DEFAULT: usize = 10_000;

/// The per-point array for JSON, or why it was left out.
fn points_or_note<T>(points: &[T], wanted: bool) -> (Option<&[T]>, Option<String>) {
    if wanted || points.len() <= POINTS_BY_DEFAULT {
        (Some(points), None)
    } else {
        (
            None,
            Some(format!(
                "the {} points (and their per-point diagnostics) are left out of the JSON above {POINTS_BY_DEFAULT}; pass --points to include them",
                points.len()
            )),
        )
    }
}

/// The fit record's fields at the top level, then `extra`'s, streamed.
#[derive(Serialize)]
struct FitJson<'a, E: Serialize> {
    #[serde(flatten)]
    fit: &'a FitSummary,
    #[serde(flatten)]
    extra: E,
}

/// An envelope with the per-concentration replicate summaries beside it.
#[derive(Serialize)]
struct WithReplicates<E: Serialize, R: Serialize> {
    #[serde(flatten)]
    envelope: E,
    replicates: R,
}

/// What a JSON fit carries beside the fit record.
#[derive(Serialize)]
struct Envelope<'a, P: Serialize, U: Serialize> {
    problems: &'a [InputProblem],
    notes: &'a [String],
    units: U,
    #[serde(skip_serializing_if = "Option::is_none")]
    points: Option<&'a [P]>,
    #[serde(skip_serializing_if = "Option::is_none")]
    points_omitted: Option<String>,
    caution: &'a str,
}

fn fit(options: FitOptions) -> Result<ExitCode, Failure> {
    let model = options.model.clone().unwrap_or_else(|| "mm".to_string());
    let Some(group_by) = options.group_by else {
        for (given, name) in [
            (options.threads.is_some(), "--threads"),
            (options.normalise, "--normalise"),
            (options.shared_slope, "--shared-slope"),
        ] {
            if given {
                return Err(usage("fit", format!("{name} applies to batch fits only; add --group-by COLUMN or leave it out")));
            }
        }
        let mut data = options.data;
        let rows = match (options.format.as_deref(), data.json) {
            (Some(f), true) if f != "json" => return Err(usage("fit", format!("--json and --format {f} disagree; give one of them"))),
            (Some("json"), _) => {
                data.json = true;
                None
            }
            (Some(f @ ("csv" | "tsv")), _) => Some(batch::Format::from_name(f)),
            _ => None,
        };
        if rows.is_some() && data.points {
            return Err(usage("fit", "--points chooses what the JSON holds; csv and tsv hold one row per constant"));
        }
        return fit_one(data, options.extra, model, rows);
    };
    if options.format.as_deref() == Some("text") {
        return Err(usage("fit", "with --group-by the output is json, csv or tsv (one record or row per curve), not text"));
    }
    let format = match (options.format.as_deref(), options.data.json) {
        (Some(f), true) if f != "json" => return Err(usage("fit", format!("--json and --format {f} disagree; give one of them"))),
        (Some(f), _) => batch::Format::from_name(f),
        (None, true) => batch::Format::Json,
        (None, false) => batch::Format::Tsv,
    };
    let args = prepare("fit", options.data, options.extra, &model)?;
    if options.shared_slope {
        return batch::run_shared_slope(args, model, group_by, format, options.normalise);
    }
    batch::run(args, model, group_by, format, options.threads, options.normalise)
}

/// One fit of the whole table; `rows` asks for CSV or TSV constants
/// instead of text (JSON is `data.json`).
fn fit_one(data: DataOptions, extra: ModelExtras, model: String, rows: Option<batch::Format>) -> Result<ExitCode, Failure> {
    let mut args = prepare("fit", data, extra, &model)?;
    args.request.text = read_table(&args.file, args.sheet.as_deref())?;
    let mut out = Output::new();
    let code = match model_input(&model) {
        Some(ModelInput::TwoSubstrates) => bisubstrate::fit_one(&args, model, &mut out)?,
        Some(ModelInput::SubstrateAndInhibitor) => {
            let request = inhibition_request(&args, vec![model]);
            let analysis = analyse_inhibition(&request).map_err(|e| Failure::Input(e.message))?;
            check_problems(&args, &analysis.problems)?;
            let fit = &analysis.fits[0];
            if args.json {
                let (points, points_omitted) = points_or_note(&analysis.points, args.points);
                let extra = Envelope {
                    problems: &analysis.problems,
                    notes: &analysis.notes,
                    units: &analysis.units,
                    points,
                    points_omitted,
                    caution: &analysis.caution,
                };
                let extra = WithReplicates { envelope: extra, replicates: &analysis.replicates };
                out.json(&FitJson { fit, extra })?;
            } else if let Some(format) = rows {
                write_rows(&mut out, fit, &analysis.notes, &analysis.caution, format)?;
            } else {
                out.text(&fit_table(fit, "", &analysis.notes, &analysis.caution))?;
            }
            exit_for(fit)
        }
        Some(ModelInput::Inhibitor) => {
            let request = DoseRequest {
                text: std::mem::take(&mut args.request.text),
                model,
                enzyme: args.request.enzyme,
                fixed_top: args.top,
                fixed_bottom: args.bottom,
                excluded_lines: args.request.excluded_lines.clone(),
                excluded_cells: args.request.excluded_cells.clone(),
                interval_method: args.request.interval_method,
                bootstrap: args.request.bootstrap,
                weighting: args.request.weighting,
                cheng_prusoff: args.cheng_prusoff.clone(),
                rate_time: args.request.rate_time.clone(),
            };
            let analysis = analyse_dose(&request).map_err(|e| Failure::Input(e.message))?;
            check_problems(&args, &analysis.problems)?;
            if args.json {
                #[derive(Serialize)]
                struct DoseUnits<'a> {
                    inhibitor: &'a Option<String>,
                }
                let (points, points_omitted) = points_or_note(&analysis.points, args.points);
                let extra = Envelope {
                    problems: &analysis.problems,
                    notes: &analysis.notes,
                    units: DoseUnits { inhibitor: &analysis.inhibitor_unit },
                    points,
                    points_omitted,
                    caution: &analysis.caution,
                };
                let extra = WithReplicates { envelope: extra, replicates: &analysis.replicates };
                out.json(&FitJson { fit: &analysis.fit, extra })?;
            } else if let Some(format) = rows {
                write_rows(&mut out, &analysis.fit, &analysis.notes, &analysis.caution, format)?;
            } else {
                out.text(&fit_table(&analysis.fit, "", &analysis.notes, &analysis.caution))?;
            }
            exit_for(&analysis.fit)
        }
        _ => {
            let analysis = analyse_rates(&args.request).map_err(|e| Failure::Input(e.message))?;
            check_problems(&args, &analysis.problems)?;
            if args.json {
                write_rate_json(&mut out, &analysis, args.points)?;
            } else if let Some(format) = rows {
                write_rows(&mut out, &analysis.fit, &analysis.notes, &analysis.caution, format)?;
            } else {
                out.text(&to_table(&analysis))?;
            }
            exit_for(&analysis.fit)
        }
    };
    out.finish()?;
    Ok(code)
}

/// The constants of `fit` as CSV or TSV rows on standard output; the
/// notes, warnings and caution go to standard error, so that nothing is
/// said in the text output alone.
fn write_rows(out: &mut Output, fit: &FitSummary, notes: &[String], caution: &str, format: batch::Format) -> std::io::Result<()> {
    out.text(&constants::constants_rows(&fit.parameters, format))?;
    for note in notes {
        warn(&format!("turnover: note: {note}"));
    }
    for warning in &fit.warnings {
        warn(&format!("turnover: warning: {warning}"));
    }
    if !fit.converged {
        warn(&format!("turnover: the fit did not converge: {}", fit.termination_text));
    }
    warn(&format!("turnover: {caution}"));
    Ok(())
}

fn exit_for(fit: &FitSummary) -> ExitCode {
    if fit.converged {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(3)
    }
}

/// The inhibition request for the table and options of `args`.
fn inhibition_request(args: &Prepared, models: Vec<String>) -> InhibitionRequest {
    InhibitionRequest {
        text: args.request.text.clone(),
        models,
        excluded_lines: args.request.excluded_lines.clone(),
        excluded_cells: args.request.excluded_cells.clone(),
        substrate_unit: args.request.substrate_unit.clone(),
        inhibitor_unit: None,
        rate_unit: args.request.rate_unit.clone(),
        rate_time: args.request.rate_time.clone(),
        interval_method: args.request.interval_method,
        bootstrap: args.request.bootstrap,
        weighting: args.request.weighting,
    }
}

fn check_problems(args: &Prepared, problems: &[InputProblem]) -> Result<(), Failure> {
    for problem in problems {
        warn(&format!("{}: {problem}", args.file));
    }
    if !problems.is_empty() && !args.lenient {
        return Err(Failure::Input(format!(
            "{} problem(s) in the input; fix them, or pass --lenient to fit the remaining rows",
            problems.len()
        )));
    }
    Ok(())
}

fn compare(options: CompareOptions) -> Result<ExitCode, Failure> {
    // Without --models the table decides: the two-substrate laws for a
    // table naming [A] and [B], else the inhibition mechanisms.
    let mut text = None;
    let models = if options.models.is_empty() {
        let table = read_table(&options.data.file, options.data.sheet.as_deref())?;
        let two = bisubstrate::is_table(&table);
        text = Some(table);
        if two {
            bisubstrate::LAWS.iter().map(|m| m.to_string()).collect()
        } else {
            Mechanism::ALL.iter().map(|m| m.name().to_string()).collect()
        }
    } else {
        options.models.clone()
    };
    let first = models.first().cloned().unwrap_or_else(|| "mm".to_string());
    if options.data.points {
        return Err(usage("compare", "--points applies to fit: the comparison's JSON holds no per-point arrays"));
    }
    let mut args = prepare("compare", options.data, options.extra, &first)?;
    args.request.text = match text {
        Some(text) => text,
        None => read_table(&args.file, args.sheet.as_deref())?,
    };
    let inputs: Vec<Option<ModelInput>> = models.iter().map(|m| model_input(m)).collect();
    let mut warnings = Vec::new();
    let (comparison, fits, problems, notes, caution) = if inputs.iter().all(|i| *i == Some(ModelInput::SubstrateAndInhibitor)) {
        let request = inhibition_request(&args, models);
        let a = analyse_inhibition(&request).map_err(|e| Failure::Input(e.message))?;
        (a.comparison, a.fits, a.problems, a.notes, a.caution)
    } else if inputs.iter().all(|i| *i == Some(ModelInput::Substrate)) {
        let c = compare_rate_models(&args.request, &models).map_err(|e| Failure::Input(e.message))?;
        (c.comparison, c.fits, c.first.problems, c.first.notes, c.first.caution)
    } else if inputs.iter().all(|i| *i == Some(ModelInput::TwoSubstrates)) {
        let a = bisubstrate::analyse("compare", &args, models)?;
        warnings = a.warnings;
        (a.comparison, a.fits, a.problems, a.notes, a.caution)
    } else {
        return Err(usage(
            "compare",
            "compare needs models of the same data: all inhibition mechanisms, mm with substrate-inhibition and hill, or the two-substrate laws sequential, ordered and ping-pong",
        ));
    };
    check_problems(&args, &problems)?;
    let mut out = Output::new();
    if args.json {
        #[derive(Serialize)]
        struct CompareJson<'a> {
            models: &'a [turnover_core::compare::ModelScore],
            f_tests: &'a [turnover_core::compare::FTest],
            preferred: &'a Option<String>,
            candidates: &'a [turnover_core::compare::Candidate],
            verdict: &'a str,
            problems: &'a [InputProblem],
            notes: &'a [String],
            #[serde(skip_serializing_if = "<[String]>::is_empty")]
            warnings: &'a [String],
            caution: &'a str,
        }
        out.json(&CompareJson {
            models: &comparison.models,
            f_tests: &comparison.f_tests,
            preferred: &comparison.preferred,
            candidates: &comparison.candidates,
            verdict: &comparison.verdict,
            problems: &problems,
            notes: &notes,
            warnings: &warnings,
            caution: &caution,
        })?;
    } else {
        let mut text = String::new();
        text.push_str(&format!("{:<22} {:>12} {:>5} {:>12} {:>8}  parameters\n", "model", "RSS", "dof", "AICc", "weight"));
        for m in &comparison.models {
            let params: Vec<String> = m.parameters.iter().map(constants::constant).collect();
            text.push_str(&format!(
                "{:<22} {:>12} {:>5} {:>12} {:>8}  {}\n",
                m.model,
                number(Some(m.rss)),
                m.dof,
                number(m.aicc),
                m.akaike_weight.map_or("—".to_string(), |w| fixed(w, 3)),
                params.join(", ")
            ));
        }
        text.push('\n');
        for t in &comparison.f_tests {
            text.push_str(&format!(
                "F test {} inside {}: F = {} on ({}, {}) df, p = {}\n",
                t.simpler,
                t.general,
                fixed(t.f, 3),
                t.df_extra,
                t.df_general,
                number(Some(t.p_value))
            ));
            if let Some(limit) = &t.boundary {
                text.push_str(&format!(
                    "  {} is {} at the boundary {limit}{}\n",
                    t.simpler,
                    t.general,
                    if t.outside { "; the fit lies beyond it, outside the physical range, so this is no rejection" } else { "" }
                ));
            }
        }
        text.push_str(&format!("\nVerdict: {}\n", comparison.verdict));
        for note in &notes {
            text.push_str(&format!("note: {note}\n"));
        }
        for w in &warnings {
            text.push_str(&format!("warning: {w}\n"));
        }
        for fit in &fits {
            for w in &fit.warnings {
                text.push_str(&format!("warning ({}): {w}\n", fit.model));
            }
        }
        text.push_str(&format!("\n{caution}\n"));
        out.text(&text)?;
    }
    out.finish()?;
    Ok(ExitCode::SUCCESS)
}

/// The JSON form of a rate analysis: the fit record's fields at the top
/// level, then the input problems, notes, units, points and the caution.
fn write_rate_json(out: &mut Output, analysis: &RateAnalysis, all_points: bool) -> std::io::Result<()> {
    #[derive(Serialize)]
    struct RateExtra<'a> {
        #[serde(flatten)]
        envelope: Envelope<'a, turnover_core::rates::PointRecord, &'a turnover_core::rates::UnitsUsed>,
        diagnostics: Diagnostics<'a>,
        direct_linear: &'a turnover_core::robust::DirectLinearEstimate,
        bootstrap: &'a Option<turnover_core::rates::BootstrapReport>,
        #[serde(skip_serializing_if = "Option::is_none")]
        enzyme_from_protein: &'a Option<turnover_core::protein::EnzymeFromProtein>,
        #[serde(skip_serializing_if = "Option::is_none")]
        kcat_from_molar_mass: Option<f64>,
        error_structure: &'a Option<turnover_core::errors::ErrorStructure>,
        replicates: &'a [turnover_core::read::replicates::ReplicateSummary],
    }
    /// The residual diagnostics, their per-point array under the same rule
    /// as the points.
    #[derive(Serialize)]
    struct Diagnostics<'a> {
        runs: &'a Option<turnover_core::diagnostics::RunsTest>,
        lack_of_fit: &'a Option<turnover_core::diagnostics::LackOfFit>,
        #[serde(skip_serializing_if = "Option::is_none")]
        points: Option<&'a [turnover_core::diagnostics::PointDiagnostics]>,
        findings: &'a [String],
    }
    let (points, points_omitted) = points_or_note(&analysis.points, all_points);
    let d = &analysis.diagnostics;
    let diagnostics = Diagnostics {
        runs: &d.runs,
        lack_of_fit: &d.lack_of_fit,
        points: points_or_note(&d.points, all_points).0,
        findings: &d.findings,
    };
    let extra = RateExtra {
        envelope: Envelope {
            problems: &analysis.problems,
            notes: &analysis.notes,
            units: &analysis.units,
            points,
            points_omitted,
            caution: &analysis.caution,
        },
        diagnostics,
        direct_linear: &analysis.direct_linear,
        bootstrap: &analysis.bootstrap,
        enzyme_from_protein: &analysis.enzyme_from_protein,
        kcat_from_molar_mass: analysis.kcat_from_molar_mass,
        error_structure: &analysis.error_structure,
        replicates: &analysis.replicates,
    };
    out.json(&FitJson { fit: &analysis.fit, extra })
}

fn number(value: Option<f64>) -> String {
    match value {
        Some(v) => significant(v, 5),
        None => "—".to_string(),
    }
}

fn to_table(analysis: &RateAnalysis) -> String {
    let mut extra = String::new();
    let diagnostics = &analysis.diagnostics;
    if let Some(runs) = &diagnostics.runs {
        extra.push_str(&format!(
            "Runs test: {} runs ({} expected), P(as few or fewer) = {}\n",
            runs.runs,
            fixed(runs.expected, 1),
            fixed(runs.p_too_few, 3)
        ));
    }
    if let Some(l) = &diagnostics.lack_of_fit {
        extra.push_str(&format!(
            "Lack of fit: F = {} on {} and {} df, P = {}\n",
            fixed(l.f, 3),
            l.lack_of_fit_dof,
            l.pure_error_dof,
            fixed(l.p_value, 3)
        ));
    }
    if let (Some(km), Some(vmax)) = (analysis.direct_linear.km, analysis.direct_linear.vmax) {
        extra.push_str(&format!(
            "Direct linear plot (medians of {} intersections): Km = {}, Vmax = {}\n",
            analysis.direct_linear.intersections,
            constants::plain(Some(km)),
            constants::plain(Some(vmax))
        ));
    }
    if let Some(b) = &analysis.bootstrap {
        extra.push_str(&format!("Bootstrap: {} resamples, seed {}, {} refits left out\n", b.resamples, b.seed, b.failures));
    }
    fit_table(&analysis.fit, &extra, &analysis.notes, &analysis.caution)
}

/// The weighting as the command line names it, from the fit record.
fn weighting_label(fit: &FitSummary) -> String {
    match Weighting::ALL.iter().find(|w| w.name() == fit.weighting) {
        Some(w) => format!("{}: {}", w.option_name(), w.describe()),
        None => fit.weighting.to_string(),
    }
}

/// The readable table of one fit; `extra` holds further lines (checks)
/// printed before the notes.
fn fit_table(fit: &FitSummary, extra: &str, notes: &[String], caution: &str) -> String {
    let mut out = String::new();
    out.push_str(&format!("Model: {} ({})\n", fit.model, fit.equation));
    out.push_str(&format!("Fit {} after {} iteration(s).\n\n", fit.termination_text, fit.iterations));
    let level = (fit.confidence_level * 100.0).round();
    let method = fit.parameters.first().map_or("asymptotic", |p| p.ci_method.as_ref());
    out.push_str(&format!("Weighting: {}; intervals: {}\n\n", weighting_label(fit), method));
    out.push_str(&constants::constants_block(&fit.parameters, level, method));
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn command_definition_is_consistent() {
        Cli::command().debug_assert();
    }

    /// Quantities with the tables' number rule.
    #[test]
    fn quantities() {
        let cases: &[(&str, Result<(f64, Option<&str>), &str>)] = &[
            ("10 nM", Ok((10.0, Some("nM")))),
            ("10nM", Ok((10.0, Some("nM")))),
            ("1,5 µM", Ok((1.5, Some("µM")))),
            ("2.5e-3 M", Ok((2.5e-3, Some("M")))),
            ("25", Ok((25.0, None))),
            ("1,000", Err("'1,000' could be 1000 (a comma grouping thousands) or 1.000 (a decimal comma); write 1000 or 1.000")),
            ("nM", Err("it does not start with a number")),
        ];
        for (text, expected) in cases {
            match (turnover_core::table::read_quantity(text), expected) {
                (Ok((v, u)), Ok((ev, eu))) => {
                    assert_eq!(v, *ev, "{text}");
                    assert_eq!(u.as_deref(), *eu, "{text}");
                }
                (Err(m), Err(e)) => assert!(m.starts_with(e), "{text}: {m}"),
                (found, _) => panic!("{text}: {found:?}"),
            }
        }
    }
}
