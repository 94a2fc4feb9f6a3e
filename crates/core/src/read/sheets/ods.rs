//! OpenDocument spreadsheets (`.ods`, ODF 1.2 and later): `content.xml`
//! holds each sheet as a `<table:table table:name>` of
//! `<table:table-row>`s of `<table:table-cell>`s (and
//! `<table:covered-table-cell>`s, the hidden parts of merged cells). A
//! cell's value is in its attributes (`office:value-type` with
//! `office:value`, `office:string-value`, `office:date-value`,
//! `office:time-value`, `office:boolean-value`) or, for text, in its
//! `<text:p>` paragraphs. `table:number-columns-repeated` and
//! `table:number-rows-repeated` stand for runs of equal cells and rows.
//!
//! A formula's error result is marked `calcext:value-type="error"` by
//! LibreOffice, with the error's text (`#DIV/0!`, `Err:502`) as the cell's
//! paragraph; it is kept as that text, so the table reader reports it.

use super::xml::{decode, decode_into, damaged, local, Attributes, Event, Scanner};
use super::zip::Archive;
use super::{Placed, Value, FILLED_LIMIT, MAX_COLUMNS, MAX_ROWS, TEXT_LIMIT};
use crate::error::Error;

const CONTENT: &str = "content.xml";

/// The document's `content.xml`.
pub fn content(archive: &mut Archive) -> Result<Vec<u8>, Error> {
    archive.read(CONTENT)?.ok_or_else(|| damaged(CONTENT, "the part is missing"))
}

/// The sheet names in order.
pub fn names(content: &[u8]) -> Result<Vec<String>, Error> {
    let mut scanner = Scanner::new(content, CONTENT)?;
    let mut names = Vec::new();
    while let Some(event) = scanner.next()? {
        if let Event::Start { name, attributes, empty } = event {
            if local(name) == "table" {
                if let Some(sheet) = Attributes::of(attributes).get("table:name") {
                    names.push(decode(sheet, CONTENT)?);
                }
                if !empty {
                    scanner.skip_element()?;
                }
            }
        }
    }
    Ok(names)
}

/// The cells of sheet `name` (the first sheet of that name).
pub fn sheet(content: &[u8], name: &str) -> Result<Vec<Placed>, Error> {
    let mut scanner = Scanner::new(content, CONTENT)?;
    while let Some(event) = scanner.next()? {
        if let Event::Start { name: element, attributes, empty } = event {
            if local(element) != "table" {
                continue;
            }
            let this = Attributes::of(attributes).get("table:name").map(|n| decode(n, CONTENT)).transpose()?;
            if this.as_deref() == Some(name) {
                return if empty { Ok(Vec::new()) } else { read_table(&mut scanner) };
            }
            if !empty {
                scanner.skip_element()?;
            }
        }
    }
    Ok(Vec::new())
}

fn repeat(attributes: Attributes, name: &str) -> Result<u64, Error> {
    match attributes.get(name) {
        None => Ok(1),
        Some(n) => n.trim().parse::<u64>().map_err(|_| damaged(CONTENT, &format!("{name}=\"{n}\""))),
    }
}

fn too_much() -> Error {
    Error::invalid_data(format!(
        "the sheet has more than {FILLED_LIMIT} filled cells or {} MB of text once its repeated cells are spelled out, more than Turnover reads from one sheet; copy the table you need into a new sheet",
        TEXT_LIMIT / 1_000_000
    ))
}

/// About the bytes a value takes as table text (for the limits).
fn weight(value: &Value) -> usize {
    match value {
        Value::Text(s) | Value::Error(s) => s.len() + 1,
        _ => 8,
    }
}

fn beyond_sheet() -> Error {
    damaged(CONTENT, "a filled cell beyond the largest sheet of 1,048,576 rows and 16,384 columns")
}

/// The rows of a table, read to its end tag; rows may stand in groups
/// (`<table:table-header-rows>`, `<table:table-row-group>`, ...).
fn read_table(scanner: &mut Scanner) -> Result<Vec<Placed>, Error> {
    let mut cells = Vec::new();
    let mut row: u64 = 0;
    let mut depth = 0usize;
    // About the bytes the cells will take as text, against TEXT_LIMIT.
    let mut weight_so_far = 0usize;
    loop {
        match scanner.next()?.ok_or_else(|| scanner.ended_inside("table:table"))? {
            Event::Start { name, attributes, empty } => match local(name) {
                "table-row" => {
                    let attributes = Attributes::of(attributes);
                    let repeats = repeat(attributes, "table:number-rows-repeated")?;
                    let row_cells = if empty { Vec::new() } else { read_row(scanner)? };
                    if !row_cells.is_empty() {
                        if row.saturating_add(repeats) > MAX_ROWS {
                            return Err(beyond_sheet());
                        }
                        let row_weight: usize = row_cells.iter().map(|(_, v)| weight(v)).sum();
                        for k in 0..repeats {
                            weight_so_far = weight_so_far.saturating_add(row_weight);
                            if cells.len() + row_cells.len() > FILLED_LIMIT || weight_so_far > TEXT_LIMIT {
                                return Err(too_much());
                            }
                            for (column, value) in &row_cells {
                                cells.push(Placed { row: (row + k) as u32, column: *column as u32, value: value.clone() });
                            }
                        }
                    }
                    row = row.saturating_add(repeats);
                }
                "table-header-rows" | "table-row-group" | "table-rows" => {
                    if !empty {
                        depth += 1;
                    }
                }
                _ => {
                    if !empty {
                        scanner.skip_element()?;
                    }
                }
            },
            Event::End { .. } => {
                if depth == 0 {
                    return Ok(cells);
                }
                depth -= 1;
            }
            _ => {}
        }
    }
}

/// The filled cells of a row, `(column, value)`, repeats spelled out.
fn read_row(scanner: &mut Scanner) -> Result<Vec<(u64, Value)>, Error> {
    let mut cells = Vec::new();
    let mut column: u64 = 0;
    loop {
        match scanner.next()?.ok_or_else(|| scanner.ended_inside("table:table-row"))? {
            Event::Start { name, attributes, empty } => match local(name) {
                "table-cell" | "covered-table-cell" => {
                    let attributes = Attributes::of(attributes);
                    let repeats = repeat(attributes, "table:number-columns-repeated")?;
                    let value = read_cell(scanner, attributes, empty)?;
                    if value != Value::Empty {
                        if column.saturating_add(repeats) > MAX_COLUMNS {
                            return Err(beyond_sheet());
                        }
                        if cells.len() as u64 + repeats > FILLED_LIMIT as u64 || (weight(&value) as u64).saturating_mul(repeats) > TEXT_LIMIT as u64 {
                            return Err(too_much());
                        }
                        for k in 0..repeats {
                            cells.push((column + k, value.clone()));
                        }
                    }
                    column = column.saturating_add(repeats);
                }
                _ => {
                    if !empty {
                        scanner.skip_element()?;
                    }
                }
            },
            Event::End { .. } => return Ok(cells),
            _ => {}
        }
    }
}

/// A cell's value, its element read to the end. The first of the value
/// attributes found counts.
fn read_cell(scanner: &mut Scanner, attributes: Attributes, empty: bool) -> Result<Value, Error> {
    let mut value = None;
    let mut is_string = false;
    let mut is_error = false;
    for (name, raw) in attributes {
        match name {
            "office:value" if value.is_none() => {
                let number = raw.parse::<f64>().map_err(|_| damaged(CONTENT, &format!("office:value=\"{raw}\" is not a number")))?;
                value = Some(Value::Number(number));
            }
            "office:string-value" | "office:date-value" | "office:time-value" if value.is_none() => {
                value = Some(Value::Text(decode(raw, CONTENT)?));
            }
            "office:boolean-value" if value.is_none() => value = Some(Value::Bool(raw == "true" || raw == "TRUE")),
            "office:value-type" if value.is_none() => is_string = raw == "string",
            "calcext:value-type" => is_error = raw == "error",
            _ => {}
        }
    }
    let wants_text = is_error || (value.is_none() && is_string);
    let text = match (wants_text, empty) {
        (true, false) => Some(paragraphs(scanner)?),
        (true, true) => Some(String::new()),
        (false, false) => {
            scanner.skip_element()?;
            None
        }
        (false, true) => None,
    };
    Ok(match (is_error, value, text) {
        (true, _, Some(text)) if !text.is_empty() => Value::Error(text),
        (true, Some(Value::Text(text)), _) if !text.is_empty() => Value::Error(text),
        (_, Some(value), _) => value,
        (_, None, Some(text)) if is_string => Value::Text(text),
        _ => Value::Empty,
    })
}

/// A cell's text: its paragraphs joined by line breaks, `<text:s>` as
/// spaces, `<text:tab>` as a tab, `<text:line-break>` as a line break;
/// comments (`<office:annotation>`) left out.
fn paragraphs(scanner: &mut Scanner) -> Result<String, Error> {
    let mut text = String::new();
    let mut depth = 1usize;
    let mut paragraphs = 0usize;
    let mut in_paragraph = 0usize;
    let mut in_annotation = 0usize;
    loop {
        match scanner.next()?.ok_or_else(|| scanner.ended_inside("table:table-cell"))? {
            Event::Start { name, attributes, empty } => {
                let local = local(name);
                if in_annotation == 0 {
                    match local {
                        "p" | "h" => {
                            if paragraphs > 0 {
                                text.push('\n');
                            }
                            paragraphs += 1;
                        }
                        "s" if in_paragraph > 0 => {
                            let count = match Attributes::of(attributes).get("text:c") {
                                None => 1,
                                Some(c) => c.trim().parse::<usize>().ok().filter(|&c| c <= 65_535).ok_or_else(|| damaged(CONTENT, &format!("text:c=\"{c}\"")))?,
                            };
                            if text.len() + count > TEXT_LIMIT {
                                return Err(damaged(CONTENT, "a cell's text is too long"));
                            }
                            text.extend(std::iter::repeat_n(' ', count));
                        }
                        "tab" if in_paragraph > 0 => text.push('\t'),
                        "line-break" if in_paragraph > 0 => text.push('\n'),
                        _ => {}
                    }
                }
                if !empty {
                    depth += 1;
                    match local {
                        "annotation" => in_annotation += 1,
                        "p" | "h" => in_paragraph += 1,
                        _ => {}
                    }
                }
            }
            Event::End { name } => {
                depth -= 1;
                if depth == 0 {
                    return Ok(text);
                }
                match local(name) {
                    "annotation" => in_annotation = in_annotation.saturating_sub(1),
                    "p" | "h" => in_paragraph = in_paragraph.saturating_sub(1),
                    _ => {}
                }
            }
            Event::Text(t) if in_paragraph > 0 && in_annotation == 0 => decode_into(t, &mut text, false, CONTENT)?,
            Event::CData(t) if in_paragraph > 0 && in_annotation == 0 => text.push_str(t),
            _ => {}
        }
    }
}
