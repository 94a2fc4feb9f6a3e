//! A planned design taken to the bench: the plate map and the pipetting
//! table.
//!
//! The **plate map** is written in the form the time-course section reads
//! as a layout ([`crate::read::layout`]): one grid per property (`S` with
//! its unit, `I` with its unit, `role`), each a title line, a row of column
//! numbers, then rows lettered A, B, C. A plate of 96 wells (8 × 12) is used
//! up to 96 wells, 384 (16 × 24) up to 384. When the concentrations fit
//! across a row and the series (each [I] times each replicate) fit down
//! the plate, each row holds one series with the concentrations rising
//! across it; otherwise the wells are filled row by row in the order
//! condition by condition, replicates side by side.
//!
//! The **pipetting table** gives, for every well, the volume of stock (or
//! of a dilution of it) that brings the well to its concentration, and the
//! buffer that makes up the well volume after the other additions (enzyme,
//! cofactors: `other_volume`). Volumes are in µL. **The rule for small
//! volumes:** when a volume of stock would be below the smallest volume
//! that can be pipetted (0.5 µL by default, common practice, no source), a
//! ten-fold serial dilution of the stock is used instead: 1:10 made from
//! the stock, 1:100 from the 1:10, and so on, the least dilution that
//! brings the volume to at least the minimum. Each dilution is made in the
//! amount the wells (and the next dilution) need plus 20% (common
//! practice, no source), and at least so much that its own transfer is not
//! below the minimum.

use crate::error::Error;
use serde::{Deserialize, Serialize};

/// Stocks and volumes for the pipetting table.
#[derive(Clone, Debug, PartialEq, Deserialize, Serialize)]
#[serde(default, deny_unknown_fields)]
pub struct BenchRequest {
    /// Concentration of the substrate stock, in the unit of the design's
    /// [S]; needed when the design has [S].
    pub substrate_stock: Option<f64>,
    /// Concentration of the inhibitor stock, in the unit of the design's
    /// [I]; needed when the design has [I] above zero.
    pub inhibitor_stock: Option<f64>,
    /// Final volume of every well, µL. Default 200.
    pub well_volume: f64,
    /// Smallest volume that can be pipetted, µL. Default 0.5.
    pub min_volume: f64,
    /// Volume added to every well besides substrate, inhibitor and buffer
    /// (the enzyme, cofactors), µL. Default 0.
    pub other_volume: f64,
    /// Extra made of each dilution, as a fraction. Default 0.2.
    pub extra: f64,
}

impl Default for BenchRequest {
    fn default() -> Self {
        BenchRequest { substrate_stock: None, inhibitor_stock: None, well_volume: 200.0, min_volume: 0.5, other_volume: 0.0, extra: 0.2 }
    }
}

/// One well of the plate map.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PlateWell {
    /// Well name, such as `B7`.
    pub name: String,
    /// [S] of the well, when the design has [S].
    pub s: Option<f64>,
    /// [I] of the well, when the design has [I].
    pub i: Option<f64>,
    /// Which replicate of its condition (from 1).
    pub replicate: usize,
}

/// The plate map of a design.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PlateMap {
    /// Rows of the plate (8 or 16).
    pub rows: usize,
    /// Columns of the plate (12 or 24).
    pub columns: usize,
    /// The wells used, in plate order (A1, A2, ..., B1, ...).
    pub wells: Vec<PlateWell>,
    /// The grids as tab-separated text, as the time-course layout reads it.
    pub text: String,
}

/// A dilution of a stock made for the small volumes.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Intermediate {
    /// Its name in the table, such as `S 1:100`.
    pub name: String,
    /// Its concentration.
    pub concentration: f64,
    /// What it is made from (`S stock` or the previous dilution).
    pub made_from: String,
    /// Volume of that source, µL.
    pub source_volume: f64,
    /// Volume of buffer, µL.
    pub buffer_volume: f64,
}

/// One well's additions.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PipettingRow {
    /// Well name.
    pub well: String,
    /// [S] of the well.
    pub s: Option<f64>,
    /// [I] of the well.
    pub i: Option<f64>,
    /// Where the substrate comes from (`S stock`, `S 1:10`, ...); empty
    /// when none is added.
    pub s_from: String,
    /// Volume of it, µL.
    pub s_volume: f64,
    /// Where the inhibitor comes from.
    pub i_from: String,
    /// Volume of it, µL.
    pub i_volume: f64,
    /// Buffer, µL.
    pub buffer_volume: f64,
    /// The other additions (enzyme, ...), µL.
    pub other_volume: f64,
}

/// The pipetting table.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PipettingTable {
    /// Final volume of every well, µL.
    pub well_volume: f64,
    /// The dilutions to make first, in the order to make them.
    pub intermediates: Vec<Intermediate>,
    /// One row per well, in plate order.
    pub rows: Vec<PipettingRow>,
    /// The rules applied, in words.
    pub rules: Vec<String>,
    /// The wells as CSV text (comma-separated, decimal point, volumes in
    /// µL to 0.001).
    pub csv: String,
    /// The dilutions as CSV text.
    pub intermediates_csv: String,
}

fn title(name: &str, unit: &Option<String>) -> String {
    match unit.as_deref().map(str::trim).filter(|u| !u.is_empty()) {
        Some(u) => format!("{name} ({u})"),
        None => name.to_string(),
    }
}

/// What a well of the plate map holds: [S], [I], replicate number.
type WellContent = (Option<f64>, Option<f64>, usize);

/// The plate map of a design: `first` the varied concentrations, `second`
/// the inhibitor concentrations of a two-compound design; `first_is_inhibitor`
/// for a dose-response series. `Err` says why no plate map is made (more
/// than 384 wells).
pub fn plate_map(
    first: &[f64],
    second: &[f64],
    two: bool,
    first_is_inhibitor: bool,
    replicates: usize,
    substrate_unit: &Option<String>,
    inhibitor_unit: &Option<String>,
) -> Result<PlateMap, String> {
    let series = if two { second.len() } else { 1 };
    let total = first.len() * series * replicates;
    let (rows, columns) = if total <= 96 {
        (8, 12)
    } else if total <= 384 {
        (16, 24)
    } else {
        return Err(format!("No plate map: the design has {total} wells, more than a 384-well plate holds."));
    };
    // (s, i, replicate) per well, in plate order.
    let mut placed: Vec<Option<WellContent>> = vec![None; rows * columns];
    let value = |c: f64, k: usize| -> (Option<f64>, Option<f64>) {
        if two {
            (Some(c), Some(second[k]))
        } else if first_is_inhibitor {
            (None, Some(c))
        } else {
            (Some(c), None)
        }
    };
    if first.len() <= columns && series * replicates <= rows {
        for k in 0..series {
            for r in 0..replicates {
                let row = k * replicates + r;
                for (c, &x) in first.iter().enumerate() {
                    let (s, i) = value(x, k);
                    placed[row * columns + c] = Some((s, i, r + 1));
                }
            }
        }
    } else {
        let mut at = 0;
        for k in 0..series {
            for &x in first {
                for r in 0..replicates {
                    let (s, i) = value(x, k);
                    placed[at] = Some((s, i, r + 1));
                    at += 1;
                }
            }
        }
    }
    let wells: Vec<PlateWell> = placed
        .iter()
        .enumerate()
        .filter_map(|(k, w)| {
            w.map(|(s, i, replicate)| PlateWell { name: format!("{}{}", (b'A' + (k / columns) as u8) as char, k % columns + 1), s, i, replicate })
        })
        .collect();
    let used_rows = placed.chunks(columns).rposition(|r| r.iter().any(Option::is_some)).map_or(0, |r| r + 1);
    let mut text = String::new();
    let mut grid = |name: String, cell: &dyn Fn(&WellContent) -> String| {
        if !text.is_empty() {
            text.push('\n');
        }
        text.push_str(&name);
        text.push('\n');
        for c in 1..=columns {
            text.push('\t');
            text.push_str(&c.to_string());
        }
        text.push('\n');
        for r in 0..used_rows {
            text.push((b'A' + r as u8) as char);
            for c in 0..columns {
                text.push('\t');
                if let Some(w) = &placed[r * columns + c] {
                    text.push_str(&cell(w));
                }
            }
            text.push('\n');
        }
    };
    if two || !first_is_inhibitor {
        grid(title("S", substrate_unit), &|w| w.0.map(|v| format!("{v}")).unwrap_or_default());
    }
    if two || first_is_inhibitor {
        grid(title("I", inhibitor_unit), &|w| w.1.map(|v| format!("{v}")).unwrap_or_default());
    }
    grid("role".to_string(), &|_| "sample".to_string());
    Ok(PlateMap { rows, columns, wells, text })
}

/// How one compound reaches a well: the source's name and the volume.
struct Source {
    name: String,
    volume: f64,
}

/// The sources of one compound: the stock and the ten-fold serial
/// dilutions the wells need.
struct Compound {
    label: &'static str,
    stock: f64,
    /// Wells' needs per dilution exponent k (1:10^k), µL.
    needed: Vec<f64>,
}

impl Compound {
    fn source(&mut self, concentration: f64, bench: &BenchRequest, well: &str) -> Result<Option<Source>, Error> {
        if concentration == 0.0 {
            return Ok(None);
        }
        if concentration > self.stock {
            return Err(Error::invalid_option(format!(
                "well {well}: {} = {concentration} is above the {} stock's {}; a stronger stock is needed",
                self.label, self.label, self.stock
            )));
        }
        for k in 0..=6 {
            let volume = concentration * bench.well_volume / (self.stock / 10f64.powi(k));
            if volume >= bench.min_volume * (1.0 - 1e-12) {
                if self.needed.len() <= k as usize {
                    self.needed.resize(k as usize + 1, 0.0);
                }
                self.needed[k as usize] += volume;
                return Ok(Some(Source { name: self.name(k as usize), volume }));
            }
        }
        Err(Error::invalid_option(format!(
            "well {well}: {} = {concentration} is over a million times below the stock's {}; make a weaker stock",
            self.label, self.stock
        )))
    }

    fn name(&self, k: usize) -> String {
        if k == 0 {
            format!("{} stock", self.label)
        } else {
            format!("{} 1:{}", self.label, 10usize.pow(k as u32))
        }
    }

    /// The dilutions, made from the strongest to the weakest.
    fn intermediates(&self, bench: &BenchRequest) -> Vec<Intermediate> {
        let deepest = self.needed.len().saturating_sub(1);
        let mut made = vec![0.0; deepest + 1];
        // From the weakest up: each dilution's amount includes what the
        // next weaker one takes from it.
        let mut taken_by_next = 0.0;
        for k in (1..=deepest).rev() {
            let need = (self.needed[k] * (1.0 + bench.extra) + taken_by_next).max(10.0 * bench.min_volume);
            made[k] = need;
            taken_by_next = need / 10.0;
        }
        (1..=deepest)
            .map(|k| Intermediate {
                name: self.name(k),
                concentration: self.stock / 10f64.powi(k as i32),
                made_from: self.name(k - 1),
                source_volume: made[k] / 10.0,
                buffer_volume: made[k] * 0.9,
            })
            .collect()
    }
}

fn volume_text(v: f64) -> String {
    format!("{v:.3}")
}

fn csv_cell(text: &str) -> String {
    if text.contains([',', '"', '\n']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// The pipetting table of a plate map.
pub fn pipetting_table(bench: &BenchRequest, map: &PlateMap) -> Result<PipettingTable, Error> {
    for (name, v) in [("the well volume", bench.well_volume), ("the smallest pipetting volume", bench.min_volume)] {
        if !(v.is_finite() && v > 0.0) {
            return Err(Error::invalid_option(format!("{name} must be a positive number of µL, found {v}")));
        }
    }
    if !(bench.other_volume.is_finite() && bench.other_volume >= 0.0 && bench.other_volume < bench.well_volume) {
        return Err(Error::invalid_option(format!(
            "the other additions ({} µL) must be at least 0 and less than the well volume ({} µL)",
            bench.other_volume, bench.well_volume
        )));
    }
    if bench.min_volume >= bench.well_volume - bench.other_volume {
        return Err(Error::invalid_option(format!(
            "the smallest pipetting volume ({} µL) leaves no room in a well of {} µL with {} µL of other additions",
            bench.min_volume, bench.well_volume, bench.other_volume
        )));
    }
    if !(bench.extra.is_finite() && (0.0..=2.0).contains(&bench.extra)) {
        return Err(Error::invalid_option("the extra made of each dilution must be a fraction from 0 to 2"));
    }
    let stock = |given: Option<f64>, label: &'static str, used: bool| -> Result<Option<Compound>, Error> {
        match given {
            Some(s) if s.is_finite() && s > 0.0 => Ok(Some(Compound { label, stock: s, needed: Vec::new() })),
            Some(s) => Err(Error::invalid_option(format!("the {label} stock must be a positive concentration, found {s}"))),
            None if used => Err(Error::invalid_option(format!("the pipetting table needs the {label} stock concentration"))),
            None => Ok(None),
        }
    };
    let mut substrate = stock(bench.substrate_stock, "S", map.wells.iter().any(|w| w.s.is_some_and(|s| s > 0.0)))?;
    let mut inhibitor = stock(bench.inhibitor_stock, "I", map.wells.iter().any(|w| w.i.is_some_and(|i| i > 0.0)))?;
    let mut rows = Vec::new();
    for w in &map.wells {
        let take = |compound: &mut Option<Compound>, c: Option<f64>| -> Result<(String, f64), Error> {
            match (compound.as_mut(), c) {
                (Some(compound), Some(c)) => Ok(compound.source(c, bench, &w.name)?.map_or((String::new(), 0.0), |s| (s.name, s.volume))),
                _ => Ok((String::new(), 0.0)),
            }
        };
        let (s_from, s_volume) = take(&mut substrate, w.s)?;
        let (i_from, i_volume) = take(&mut inhibitor, w.i)?;
        let buffer = bench.well_volume - bench.other_volume - s_volume - i_volume;
        if buffer < 0.0 {
            return Err(Error::invalid_option(format!(
                "well {}: the additions ({} µL) exceed the well volume ({} µL); use stronger stocks or a larger well volume",
                w.name,
                volume_text(bench.other_volume + s_volume + i_volume),
                bench.well_volume
            )));
        }
        rows.push(PipettingRow {
            well: w.name.clone(),
            s: w.s,
            i: w.i,
            s_from,
            s_volume,
            i_from,
            i_volume,
            buffer_volume: buffer,
            other_volume: bench.other_volume,
        });
    }
    let intermediates: Vec<Intermediate> =
        substrate.iter().chain(inhibitor.iter()).flat_map(|c| c.intermediates(bench)).collect();
    let mut rules = vec![format!(
        "Each well: its volume of substrate and inhibitor (stock or dilution), {} µL of other additions (enzyme, ...), and buffer to {} µL.",
        bench.other_volume, bench.well_volume
    )];
    if !intermediates.is_empty() {
        rules.push(format!(
            "Volumes of stock below {} µL (the smallest pipetted volume) come from ten-fold serial dilutions (1:10 from the stock, 1:100 from the 1:10, ...), the least dilution that reaches {} µL; each made in the amount needed plus {:.0}% (common practice, no source).",
            bench.min_volume,
            bench.min_volume,
            100.0 * bench.extra
        ));
    }
    let mut csv = String::from("well,S,I,S from,S volume (µL),I from,I volume (µL),other additions (µL),buffer (µL),total (µL)\n");
    for r in &rows {
        let conc = |v: Option<f64>| v.map(|v| format!("{v}")).unwrap_or_default();
        csv.push_str(&format!(
            "{},{},{},{},{},{},{},{},{},{}\n",
            csv_cell(&r.well),
            conc(r.s),
            conc(r.i),
            csv_cell(&r.s_from),
            volume_text(r.s_volume),
            csv_cell(&r.i_from),
            volume_text(r.i_volume),
            volume_text(r.other_volume),
            volume_text(r.buffer_volume),
            volume_text(bench.well_volume)
        ));
    }
    let mut intermediates_csv = String::from("dilution,concentration,made from,source volume (µL),buffer (µL)\n");
    for d in &intermediates {
        intermediates_csv.push_str(&format!(
            "{},{},{},{},{}\n",
            csv_cell(&d.name),
            d.concentration,
            csv_cell(&d.made_from),
            volume_text(d.source_volume),
            volume_text(d.buffer_volume)
        ));
    }
    Ok(PipettingTable { well_volume: bench.well_volume, intermediates, rows, rules, csv, intermediates_csv })
}
