//! `turnover design`: plan an experiment before the bench. Glue only: the
//! options become a `DesignRequest`, every number comes from
//! `turnover_core::design`, and the result is printed for a person or as
//! JSON.

use crate::output::{significant, Output};
use crate::{option_number, usage, Failure};
use clap::Args;
use std::process::ExitCode;
use turnover_core::design::{
    design, BenchRequest, DesignEvaluation, DesignRequest, DesignResult, Guess, Noise, NoiseKind, ProposedDesign, Target, TargetMeasure,
};

const COMMAND: &str = "design";

#[derive(Args)]
pub(crate) struct DesignOptions {
    /// The model to plan for: mm, substrate-inhibition, hill, competitive,
    /// uncompetitive, mixed, noncompetitive, ic50
    #[arg(long, value_name = "NAME", default_value = "mm")]
    model: String,
    /// Guesses of every constant, NAME=VALUE, comma-separated or repeated,
    /// such as Km=5,Vmax=10 (numbers with a decimal point)
    #[arg(long, value_name = "LIST", required = true)]
    guess: Vec<String>,
    /// Ranges the constants may lie in, NAME=LOW:HIGH, such as Km=2:20;
    /// the simulations also draw the constants within them
    #[arg(long, value_name = "LIST")]
    range: Vec<String>,
    /// Measurement error: a percentage for error proportional to the rate
    /// (5%), or a bare number for a constant standard deviation in rate
    /// units (0.2)
    #[arg(long, value_name = "LEVEL", default_value = "5%")]
    noise: String,
    /// Distinct concentrations of the varied compound ([S]; [I] for ic50)
    #[arg(long, value_name = "N", default_value_t = 8)]
    points: usize,
    /// Distinct [I], zero included (inhibition mechanisms)
    #[arg(long, value_name = "N", default_value_t = 4)]
    inhibitor_points: usize,
    /// Wells per condition
    #[arg(long, value_name = "N", default_value_t = 2)]
    replicates: usize,
    /// Highest usable concentration of the varied compound (solubility)
    #[arg(long = "max-s", value_name = "CONC", value_parser = option_number)]
    max_s: Option<f64>,
    /// Highest usable [I] (inhibition mechanisms)
    #[arg(long = "max-i", value_name = "CONC", value_parser = option_number)]
    max_i: Option<f64>,
    /// Most wells the experiment may use
    #[arg(long, value_name = "N")]
    wells: Option<usize>,
    /// Lowest rate the assay can measure, in rate units
    #[arg(long, value_name = "RATE", value_parser = option_number)]
    min_rate: Option<f64>,
    /// Your own concentrations to compare, such as 1,2,5,10,20,50
    #[arg(long, value_name = "LIST")]
    concentrations: Option<String>,
    /// Your own inhibitor concentrations (inhibition mechanisms), such as
    /// 0,1,3,10
    #[arg(long, value_name = "LIST")]
    inhibitor_concentrations: Option<String>,
    /// The precision wanted, NAME=PERCENT, such as Km=10%
    #[arg(long, value_name = "NAME=PERCENT")]
    target: Option<String>,
    /// What the target measures: se (standard error over the value) or ci
    /// (half the 95% interval over the value)
    #[arg(long, value_name = "MEASURE", value_parser = ["se", "ci"], default_value = "se")]
    target_measure: String,
    /// Simulated experiments per check (0 skips the simulations)
    #[arg(long, value_name = "N", default_value_t = 1000)]
    simulations: usize,
    /// Seed of the simulations; the same seed gives the same numbers
    #[arg(long, value_name = "N", default_value_t = 1)]
    seed: u64,
    /// Unit of [S], for labels and the plate map
    #[arg(long, value_name = "UNIT")]
    substrate_unit: Option<String>,
    /// Unit of [I], for labels and the plate map
    #[arg(long, value_name = "UNIT")]
    inhibitor_unit: Option<String>,
    /// Unit of the rate, for labels
    #[arg(long, value_name = "UNIT")]
    rate_unit: Option<String>,
    /// Substrate stock concentration (unit of [S]); with --well-volume gives
    /// the pipetting table
    #[arg(long, value_name = "CONC", value_parser = option_number)]
    stock_s: Option<f64>,
    /// Inhibitor stock concentration (unit of [I])
    #[arg(long, value_name = "CONC", value_parser = option_number)]
    stock_i: Option<f64>,
    /// Final volume of a well, µL
    #[arg(long, value_name = "UL", value_parser = option_number)]
    well_volume: Option<f64>,
    /// Smallest volume that can be pipetted, µL [default: 0.5]
    #[arg(long, value_name = "UL", value_parser = option_number)]
    min_volume: Option<f64>,
    /// Volume of enzyme and other additions per well, µL [default: 0]
    #[arg(long, value_name = "UL", value_parser = option_number)]
    other_volume: Option<f64>,
    /// Print one JSON object instead of text
    #[arg(long)]
    json: bool,
    /// Print only the plate map (the grids the time-course layout reads)
    #[arg(long, conflicts_with_all = ["json", "csv"])]
    plate_map: bool,
    /// Print only the pipetting table as CSV (needs the stocks and --well-volume)
    #[arg(long, conflicts_with = "json")]
    csv: bool,
}

/// Splits a list option on commas, semicolons or spaces.
fn pieces(text: &str) -> impl Iterator<Item = &str> {
    text.split([',', ';', ' ']).map(str::trim).filter(|p| !p.is_empty())
}

fn named<'a>(text: &'a str, option: &str) -> Result<(&'a str, &'a str), Failure> {
    text.split_once('=').map(|(n, v)| (n.trim(), v.trim())).filter(|(n, v)| !n.is_empty() && !v.is_empty()).ok_or_else(|| {
        usage(COMMAND, format!("{option} '{text}': expected NAME=VALUE (numbers with a decimal point; a decimal comma would split the list)"))
    })
}

fn number(text: &str, option: &str) -> Result<f64, Failure> {
    option_number(text).map_err(|m| usage(COMMAND, format!("{option} '{text}': {m}")))
}

fn percent(text: &str, option: &str) -> Result<Option<f64>, Failure> {
    match text.trim().strip_suffix('%') {
        Some(p) => Ok(Some(number(p, option)? / 100.0)),
        None => Ok(None),
    }
}

fn list(text: &str, option: &str) -> Result<Vec<f64>, Failure> {
    pieces(text).map(|p| number(p, option)).collect()
}

fn request(options: &DesignOptions) -> Result<DesignRequest, Failure> {
    let mut guesses: Vec<Guess> = Vec::new();
    for item in options.guess.iter().flat_map(|g| pieces(g)) {
        let (name, value) = named(item, "--guess")?;
        guesses.push(Guess { name: name.to_string(), value: number(value, "--guess")?, low: None, high: None });
    }
    for item in options.range.iter().flat_map(|g| pieces(g)) {
        let (name, value) = named(item, "--range")?;
        let (low, high) = value
            .split_once(':')
            .ok_or_else(|| usage(COMMAND, format!("--range '{item}': expected NAME=LOW:HIGH, such as Km=2:20")))?;
        let guess = guesses
            .iter_mut()
            .find(|g| g.name.eq_ignore_ascii_case(name))
            .ok_or_else(|| usage(COMMAND, format!("--range '{item}': {name} has no --guess")))?;
        guess.low = Some(number(low, "--range")?);
        guess.high = Some(number(high, "--range")?);
    }
    let noise = match percent(&options.noise, "--noise")? {
        Some(fraction) => Noise { kind: NoiseKind::Proportional, level: fraction },
        None => Noise { kind: NoiseKind::Constant, level: number(&options.noise, "--noise")? },
    };
    let target = match &options.target {
        Some(t) => {
            let (name, value) = named(t, "--target")?;
            let relative = percent(value, "--target")?
                .ok_or_else(|| usage(COMMAND, format!("--target '{t}': give the precision as a percentage, such as Km=10%")))?;
            let measure = if options.target_measure == "ci" { TargetMeasure::Ci } else { TargetMeasure::Se };
            Some(Target { parameter: name.to_string(), relative, measure })
        }
        None => None,
    };
    let proposed = match (&options.concentrations, &options.inhibitor_concentrations) {
        (None, None) => None,
        (None, Some(_)) => return Err(usage(COMMAND, "--inhibitor-concentrations goes with --concentrations (your [S])")),
        (Some(c), i) => Some(ProposedDesign {
            concentrations: list(c, "--concentrations")?,
            inhibitor_concentrations: i.as_deref().map(|i| list(i, "--inhibitor-concentrations")).transpose()?.unwrap_or_default(),
        }),
    };
    let any_bench = options.stock_s.is_some() || options.stock_i.is_some() || options.well_volume.is_some();
    let bench = if any_bench {
        let defaults = BenchRequest::default();
        Some(BenchRequest {
            substrate_stock: options.stock_s,
            inhibitor_stock: options.stock_i,
            well_volume: options.well_volume.ok_or_else(|| usage(COMMAND, "the pipetting table needs --well-volume (µL)"))?,
            min_volume: options.min_volume.unwrap_or(defaults.min_volume),
            other_volume: options.other_volume.unwrap_or(defaults.other_volume),
            extra: defaults.extra,
        })
    } else {
        if options.min_volume.is_some() || options.other_volume.is_some() {
            return Err(usage(COMMAND, "--min-volume and --other-volume belong to the pipetting table, which needs --well-volume and the stocks"));
        }
        None
    };
    Ok(DesignRequest {
        model: options.model.trim().to_string(),
        guesses,
        noise,
        points: options.points,
        inhibitor_points: options.inhibitor_points,
        replicates: options.replicates,
        max_concentration: options.max_s,
        max_inhibitor: options.max_i,
        wells: options.wells,
        min_rate: options.min_rate,
        target,
        proposed,
        seed: options.seed,
        simulations: options.simulations,
        substrate_unit: options.substrate_unit.clone(),
        inhibitor_unit: options.inhibitor_unit.clone(),
        rate_unit: options.rate_unit.clone(),
        bench,
    })
}

fn n(v: Option<f64>) -> String {
    v.map_or("—".to_string(), |v| significant(v, 3))
}

fn pct(v: Option<f64>) -> String {
    v.map_or("—".to_string(), |v| format!("{:.1}%", 100.0 * v))
}

fn unit_text(unit: &Option<String>) -> String {
    unit.as_deref().map(str::trim).filter(|u| !u.is_empty()).map(|u| format!(" ({u})")).unwrap_or_default()
}

fn evaluation_text(result: &DesignResult, e: &DesignEvaluation, label: &str) -> String {
    let mut t = String::new();
    let (axis, unit) = if result.varied == "inhibitor" { ("[I]", &result.units.inhibitor) } else { ("[S]", &result.units.substrate) };
    let values = |v: &[f64]| v.iter().map(|c| significant(*c, 3)).collect::<Vec<_>>().join(", ");
    t.push_str(&format!("{label}: {} wells ({} replicate(s) of each condition)\n", e.wells, result.replicates));
    t.push_str(&format!("  {axis}{}: {}\n", unit_text(unit), values(&e.concentrations)));
    if !e.inhibitor_concentrations.is_empty() {
        t.push_str(&format!("  [I]{}: {}  (every [S] at every [I])\n", unit_text(&result.units.inhibitor), values(&e.inhibitor_concentrations)));
    }
    t.push_str(&format!(
        "  {:<10} {:>9} {:>12} {:>8} {:>12} {:>13} {:>14} {:>9}\n",
        "constant", "guess", "predicted SE", "(rel.)", "95% width", "simulated SE", "median width", "coverage"
    ));
    for (k, p) in e.predicted.iter().enumerate() {
        let s = e.simulated.as_ref().map(|s| &s.parameters[k]);
        t.push_str(&format!(
            "  {:<10} {:>9} {:>12} {:>8} {:>12} {:>13} {:>14} {:>9}\n",
            p.name,
            significant(p.value, 3),
            n(p.std_error),
            pct(p.relative_se),
            n(p.ci_width),
            n(s.and_then(|s| s.std_error)),
            n(s.and_then(|s| s.ci_width)),
            pct(s.and_then(|s| s.coverage))
        ));
    }
    if let Some(s) = &e.simulated {
        t.push_str(&format!("  Failed fits: {} of {} simulated experiments.\n", s.failed, s.n_simulations));
        if let (Some(p), Some(target)) = (s.target_probability, &result.target) {
            t.push_str(&format!(
                "  Chance of {} to ±{:.0}% ({}): {} at the guesses",
                target.parameter,
                100.0 * target.relative,
                if target.measure == TargetMeasure::Ci { "95% interval half-width" } else { "standard error" },
                pct(Some(p))
            ));
            match e.over_range.as_ref().and_then(|r| r.target_probability) {
                Some(q) => t.push_str(&format!(", {} over the guessed ranges.\n", pct(Some(q)))),
                None => t.push_str(".\n"),
            }
        }
    }
    if let Some(r) = &e.over_range {
        t.push_str(&format!("  Over the guessed ranges ({} experiments, {} failed):\n", r.n_simulations, r.failed));
        for p in &r.parameters {
            let range = if p.low < p.high { format!("{}–{}", significant(p.low, 3), significant(p.high, 3)) } else { "fixed".to_string() };
            t.push_str(&format!(
                "    {:<10} {:>16}  median relative SE {}, 9 in 10 experiments within {}\n",
                p.name,
                range,
                pct(p.median_relative_se),
                pct(p.p90_relative_se)
            ));
        }
    }
    for (m, when) in [(&e.mechanism, "at the guesses"), (&e.over_range.as_ref().and_then(|r| r.mechanism.clone()), "over the ranges")] {
        if let Some(m) = m {
            let others: Vec<String> = m.named.iter().filter(|(n, _)| *n != m.simulated).map(|(n, s)| format!("{n} {}", pct(Some(*s)))).collect();
            t.push_str(&format!(
                "  Mechanism comparison {when}: {} named in {}, undecided in {}{}{}.\n",
                m.simulated,
                pct(Some(m.correct)),
                pct(Some(m.undecided)),
                if others.is_empty() { String::new() } else { format!(", other mechanisms: {}", others.join(", ")) },
                if m.failed > 0.0 { format!(", failed {}", pct(Some(m.failed))) } else { String::new() }
            ));
        }
    }
    t
}

fn result_text(r: &DesignResult) -> String {
    let mut t = format!("Plan for {} ({})\n\n", r.model, r.equation);
    t.push_str(&evaluation_text(r, &r.recommended, "Recommended"));
    t.push_str("  Why these concentrations:\n");
    for rule in &r.rules {
        t.push_str(&format!("    - {} [{}]\n", rule.rule, rule.source));
    }
    if let Some(own) = &r.proposed {
        t.push('\n');
        t.push_str(&evaluation_text(r, own, "Your design"));
    }
    if r.n_simulations > 0 {
        t.push_str(&format!(
            "\nSimulated SE is the spread of the estimates over {} simulated experiments (seed {}); predicted SE is from the Fisher information at the guesses.\n",
            r.n_simulations, r.seed
        ));
    }
    if let Some(map) = &r.plate_map {
        t.push_str(&format!("\nPlate map ({} × {} plate; paste into the time-course layout):\n{}", map.rows, map.columns, map.text));
    }
    if let Some(p) = &r.pipetting {
        t.push_str("\nPipetting (µL):\n");
        for rule in &p.rules {
            t.push_str(&format!("  {rule}\n"));
        }
        if !p.intermediates.is_empty() {
            t.push_str("  Dilutions to make first:\n");
            for d in &p.intermediates {
                t.push_str(&format!(
                    "    {:<10} ({}): {:.2} µL of {} + {:.2} µL buffer\n",
                    d.name,
                    significant(d.concentration, 4),
                    d.source_volume,
                    d.made_from,
                    d.buffer_volume
                ));
            }
        }
        let has_s = p.rows.iter().any(|row| row.s.is_some());
        let has_i = p.rows.iter().any(|row| row.i.is_some());
        let mut head = format!("  {:<5}", "well");
        if has_s {
            head.push_str(&format!(" {:>8} {:>10} {:>8}", "[S]", "S from", "S µL"));
        }
        if has_i {
            head.push_str(&format!(" {:>8} {:>10} {:>8}", "[I]", "I from", "I µL"));
        }
        head.push_str(&format!(" {:>8} {:>8}\n", "other", "buffer"));
        t.push_str(&head);
        for row in &p.rows {
            let mut line = format!("  {:<5}", row.well);
            if has_s {
                line.push_str(&format!(" {:>8} {:>10} {:>8.2}", row.s.map_or(String::new(), |v| significant(v, 3)), row.s_from, row.s_volume));
            }
            if has_i {
                line.push_str(&format!(" {:>8} {:>10} {:>8.2}", row.i.map_or(String::new(), |v| significant(v, 3)), row.i_from, row.i_volume));
            }
            line.push_str(&format!(" {:>8.2} {:>8.2}\n", row.other_volume, row.buffer_volume));
            t.push_str(&line);
        }
        t.push_str("  (The same table as CSV is in the --json output, fields pipetting.csv and pipetting.intermediates_csv.)\n");
    }
    for w in &r.warnings {
        t.push_str(&format!("\nwarning: {w}"));
    }
    if !r.warnings.is_empty() {
        t.push('\n');
    }
    for note in &r.notes {
        t.push_str(&format!("note: {note}\n"));
    }
    t.push_str(&format!("\n{}\n", r.caution));
    t
}

pub(crate) fn design_command(options: DesignOptions) -> Result<ExitCode, Failure> {
    let request = request(&options)?;
    let result = design(&request).map_err(|e| Failure::Input(e.message))?;
    let mut out = Output::new();
    if options.json {
        out.json(&result)?;
    } else if options.plate_map {
        let map = result.plate_map.as_ref().ok_or_else(|| Failure::Input(result.notes.iter().find(|n| n.starts_with("No plate map")).cloned().unwrap_or_default()))?;
        out.text(&map.text)?;
    } else if options.csv {
        let table = result.pipetting.as_ref().ok_or_else(|| usage(COMMAND, "--csv prints the pipetting table, which needs --well-volume and the stock concentrations (--stock-s, --stock-i)"))?;
        out.text(&table.csv)?;
    } else {
        out.text(&result_text(&result))?;
    }
    out.finish()?;
    Ok(ExitCode::SUCCESS)
}
