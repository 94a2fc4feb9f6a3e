//! Office Open XML workbooks (`.xlsx`, ECMA-376): `xl/workbook.xml` names
//! the sheets, `xl/_rels/workbook.xml.rels` says which part holds each,
//! `xl/sharedStrings.xml` holds the text most cells point to, and
//! `xl/styles.xml` the number formats that tell dates from numbers. A
//! sheet's cells are `<c r="B3" s="style" t="type"><v>value</v></c>` in
//! `<sheetData>`; a formula's `<v>` is its cached result.

use super::xml::{decode, decode_into, damaged, local, Attributes, Event, Scanner};
use super::zip::Archive;
use super::{shown_by_builtin, shown_by_format, Placed, Shown, Value, MAX_COLUMNS, MAX_ROWS};
use crate::error::Error;

/// What is read once for the whole workbook.
pub struct Workbook {
    /// Sheet names and their parts, in the workbook's order.
    sheets: Vec<(String, String)>,
    /// The shared strings, by index.
    strings: Vec<String>,
    /// What each cell style (`s`) shows, by index.
    styles: Vec<Shown>,
}

const WORKBOOK: &str = "xl/workbook.xml";
const RELATIONSHIPS: &str = "xl/_rels/workbook.xml.rels";

fn required(archive: &mut Archive, part: &'static str) -> Result<Vec<u8>, Error> {
    archive.read(part)?.ok_or_else(|| damaged(part, "the part is missing"))
}

impl Workbook {
    /// Reads the sheet list, the shared strings and the styles.
    pub fn open(archive: &mut Archive) -> Result<Self, Error> {
        let relationships = read_relationships(&required(archive, RELATIONSHIPS)?)?;
        let workbook = required(archive, WORKBOOK)?;
        let mut scanner = Scanner::new(&workbook, WORKBOOK)?;
        let mut sheets = Vec::new();
        while let Some(event) = scanner.next()? {
            if let Event::Start { name, attributes, .. } = event {
                if local(name) != "sheet" {
                    continue;
                }
                let attributes = Attributes::of(attributes);
                let sheet_name = decode(attributes.get("name").ok_or_else(|| damaged(WORKBOOK, "a sheet without a name"))?, WORKBOOK)?;
                let id = attributes.get_local("id").ok_or_else(|| damaged(WORKBOOK, "a sheet without its part"))?;
                let id = decode(id, WORKBOOK)?;
                let target = relationships.iter().rev().find(|(i, _)| *i == id).map(|(_, t)| t).ok_or_else(|| damaged(WORKBOOK, &format!("sheet '{sheet_name}' has no part")))?;
                let path = match target.strip_prefix('/') {
                    Some(absolute) => absolute.to_string(),
                    None if target.starts_with("xl/") => target.clone(),
                    None => format!("xl/{target}"),
                };
                sheets.push((sheet_name, path));
            }
        }
        let strings = match archive.read("xl/sharedStrings.xml")? {
            Some(bytes) => read_shared_strings(&bytes)?,
            None => Vec::new(),
        };
        let styles = match archive.read("xl/styles.xml")? {
            Some(bytes) => read_styles(&bytes)?,
            None => Vec::new(),
        };
        Ok(Workbook { sheets, strings, styles })
    }

    /// The sheet names in order.
    pub fn names(&self) -> Vec<String> {
        self.sheets.iter().map(|(n, _)| n.clone()).collect()
    }

    /// The cells of sheet `name` (which must be one of [`Self::names`]).
    pub fn sheet(&self, archive: &mut Archive, name: &str) -> Result<Vec<Placed>, Error> {
        let Some((_, path)) = self.sheets.iter().find(|(n, _)| n == name) else {
            return Ok(Vec::new());
        };
        let bytes = archive.read(path)?.ok_or_else(|| damaged(path, "the sheet's part is missing"))?;
        self.read_cells(&bytes, path)
    }

    fn read_cells(&self, bytes: &[u8], part: &str) -> Result<Vec<Placed>, Error> {
        let mut scanner = Scanner::new(bytes, part)?;
        // A chart sheet or a dialog sheet has no <sheetData>: no cells.
        loop {
            match scanner.next()? {
                None => return Ok(Vec::new()),
                Some(Event::Start { name, empty, .. }) if local(name) == "sheetData" => {
                    if empty {
                        return Ok(Vec::new());
                    }
                    break;
                }
                _ => {}
            }
        }
        let mut cells = Vec::new();
        // Rows and cells without an `r` follow the one before.
        let mut row: u64 = 0;
        let mut column: u64 = 0;
        loop {
            let event = scanner.next()?.ok_or_else(|| scanner.ended_inside("sheetData"))?;
            match event {
                Event::Start { name, attributes, empty } if local(name) == "row" => {
                    if let Some(r) = Attributes::of(attributes).get("r") {
                        row = r.trim().parse::<u64>().ok().filter(|&r| (1..=MAX_ROWS).contains(&r)).ok_or_else(|| damaged(part, &format!("row number '{r}'")))? - 1;
                    }
                    if empty {
                        row += 1;
                        column = 0;
                    }
                }
                Event::End { name } if local(name) == "row" => {
                    row += 1;
                    column = 0;
                }
                Event::Start { name, attributes, empty } if local(name) == "c" => {
                    let attributes = Attributes::of(attributes);
                    // A cell's own reference places it; the cells after
                    // it without one follow it in the row of <row>.
                    let mut cell_row = row;
                    if let Some(reference) = attributes.get("r") {
                        (cell_row, column) = cell_reference(reference).ok_or_else(|| damaged(part, &format!("cell reference '{reference}'")))?;
                    }
                    if cell_row >= MAX_ROWS || column >= MAX_COLUMNS {
                        return Err(damaged(part, "a cell beyond the largest sheet"));
                    }
                    let value = if empty { Value::Empty } else { self.read_cell(&mut scanner, attributes, part)? };
                    cells.push(Placed { row: cell_row as u32, column: column as u32, value });
                    if cells.len() > super::FILLED_LIMIT {
                        return Err(damaged(part, "too many cells"));
                    }
                    column += 1;
                }
                Event::End { name } if local(name) == "sheetData" => return Ok(cells),
                _ => {}
            }
        }
    }

    /// The value of a `<c>` element, read to its end.
    fn read_cell(&self, scanner: &mut Scanner, attributes: Attributes, part: &str) -> Result<Value, Error> {
        let kind = attributes.get("t");
        let style = attributes.get("s");
        let mut value = Value::Empty;
        loop {
            let event = scanner.next()?.ok_or_else(|| scanner.ended_inside("c"))?;
            match event {
                Event::End { name } if local(name) == "c" => return Ok(value),
                Event::Start { name, empty, .. } => match local(name) {
                    "v" => {
                        let raw = if empty { String::new() } else { element_text(scanner, "v")? };
                        value = if matches!(kind, Some("inlineStr")) { Value::Empty } else { self.cell_value(&raw, kind, style, part)? };
                    }
                    "is" => value = Value::Text(if empty { String::new() } else { rich_text(scanner, "is", part)? }),
                    // A formula without its cached value is empty; one
                    // with it has <v> after <f>.
                    "f" => {
                        value = Value::Empty;
                        if !empty {
                            scanner.skip_element()?;
                        }
                    }
                    _ => {
                        if !empty {
                            scanner.skip_element()?;
                        }
                    }
                },
                _ => {}
            }
        }
    }

    /// A `<v>` as written (`raw`) by the cell's type and style.
    fn cell_value(&self, raw: &str, kind: Option<&str>, style: Option<&str>, part: &str) -> Result<Value, Error> {
        Ok(match kind {
            Some("str") => Value::Text(decode(raw, part)?),
            Some("d") => Value::Text(decode(raw, part)?),
            _ if raw.is_empty() => Value::Empty,
            Some("s") => {
                let index = raw.trim().parse::<usize>().map_err(|_| damaged(part, &format!("shared string number '{raw}'")))?;
                Value::Text(self.strings.get(index).cloned().ok_or_else(|| damaged(part, &format!("shared string {index} does not exist")))?)
            }
            Some("b") => Value::Bool(raw != "0"),
            Some("e") => Value::Error(decode(raw, part)?),
            Some("n") | None => match raw.parse::<f64>() {
                Ok(number) => {
                    // No style is the default format; a style outside the
                    // list shows a plain number.
                    let shown = match style {
                        None => Shown::Number,
                        Some(s) => self.styles.get(s.trim().parse::<usize>().unwrap_or(0)).copied().unwrap_or(Shown::Number),
                    };
                    match shown {
                        Shown::Number => Value::Number(number),
                        Shown::Date => Value::Date { days: number, duration: false },
                        Shown::Duration => Value::Date { days: number, duration: true },
                    }
                }
                Err(_) if kind.is_none() => Value::Text(decode(raw, part)?),
                Err(_) => return Err(damaged(part, &format!("'{raw}' in a number cell"))),
            },
            Some(other) => return Err(damaged(part, &format!("the unknown cell type '{other}'"))),
        })
    }
}

/// The raw text of a simple element (up to its end tag).
fn element_text(scanner: &mut Scanner, element: &str) -> Result<String, Error> {
    let mut raw = String::new();
    loop {
        match scanner.next()?.ok_or_else(|| scanner.ended_inside(element))? {
            Event::Text(t) => raw.push_str(t),
            // CDATA is literal: give it back in escaped form, so that one
            // decoding serves both.
            Event::CData(t) => raw.push_str(&t.replace('&', "&amp;")),
            Event::End { .. } => return Ok(raw),
            Event::Start { empty, .. } => {
                if !empty {
                    scanner.skip_element()?;
                }
            }
        }
    }
}

/// The text of a shared string `<si>` or an inline string `<is>`: its
/// `<t>` runs, phonetic guides (`<rPh>`) left out, Office escapes decoded.
fn rich_text(scanner: &mut Scanner, element: &str, part: &str) -> Result<String, Error> {
    let mut text = String::new();
    let mut depth = 1usize;
    let mut in_text = false;
    let mut phonetic = 0usize;
    loop {
        match scanner.next()?.ok_or_else(|| scanner.ended_inside(element))? {
            Event::Start { name, empty, .. } => {
                if local(name) == "rPh" && !empty {
                    phonetic += 1;
                }
                if local(name) == "t" && !empty && phonetic == 0 {
                    in_text = true;
                }
                if !empty {
                    depth += 1;
                }
            }
            Event::End { name } => {
                depth -= 1;
                match local(name) {
                    "t" => in_text = false,
                    "rPh" => phonetic = phonetic.saturating_sub(1),
                    _ => {}
                }
                if depth == 0 {
                    return Ok(text);
                }
            }
            Event::Text(t) if in_text => decode_into(t, &mut text, true, part)?,
            Event::CData(t) if in_text => text.push_str(t),
            _ => {}
        }
    }
}

fn read_shared_strings(bytes: &[u8]) -> Result<Vec<String>, Error> {
    const PART: &str = "xl/sharedStrings.xml";
    let mut scanner = Scanner::new(bytes, PART)?;
    let mut strings = Vec::new();
    while let Some(event) = scanner.next()? {
        if let Event::Start { name, empty, .. } = event {
            if local(name) == "si" {
                strings.push(if empty { String::new() } else { rich_text(&mut scanner, "si", PART)? });
            }
        }
    }
    Ok(strings)
}

/// What each cell style shows: `<cellXfs>`'s `<xf numFmtId>`, looked up
/// in `<numFmts>` (custom formats) or among the built-in formats.
fn read_styles(bytes: &[u8]) -> Result<Vec<Shown>, Error> {
    const PART: &str = "xl/styles.xml";
    let mut scanner = Scanner::new(bytes, PART)?;
    // Custom formats by id (a list: a workbook has a handful).
    let mut custom: Vec<(String, Shown)> = Vec::new();
    let mut styles = Vec::new();
    let mut in_cell_formats = false;
    while let Some(event) = scanner.next()? {
        match event {
            Event::Start { name, attributes, empty } => match local(name) {
                "numFmt" => {
                    let attributes = Attributes::of(attributes);
                    if let (Some(id), Some(code)) = (attributes.get("numFmtId"), attributes.get("formatCode")) {
                        custom.push((id.trim().to_string(), shown_by_format(&decode(code, PART)?)));
                    }
                }
                "cellXfs" if !empty => in_cell_formats = true,
                "xf" if in_cell_formats => {
                    let id = Attributes::of(attributes).get("numFmtId").map(str::trim);
                    styles.push(match id {
                        None => Shown::Number,
                        Some(id) => custom.iter().rev().find(|(c, _)| c == id).map(|(_, shown)| *shown).unwrap_or_else(|| id.parse().map_or(Shown::Number, shown_by_builtin)),
                    });
                }
                _ => {}
            },
            Event::End { name } if local(name) == "cellXfs" => in_cell_formats = false,
            _ => {}
        }
    }
    Ok(styles)
}

/// The workbook's relationships, `(Id, Target)`.
fn read_relationships(bytes: &[u8]) -> Result<Vec<(String, String)>, Error> {
    let mut scanner = Scanner::new(bytes, RELATIONSHIPS)?;
    let mut relationships = Vec::new();
    while let Some(event) = scanner.next()? {
        if let Event::Start { name, attributes, .. } = event {
            if local(name) == "Relationship" {
                let attributes = Attributes::of(attributes);
                if let (Some(id), Some(target)) = (attributes.get("Id"), attributes.get("Target")) {
                    relationships.push((decode(id, RELATIONSHIPS)?, decode(target, RELATIONSHIPS)?));
                }
            }
        }
    }
    Ok(relationships)
}

/// `B3` as 0-based (row 2, column 1); `None` when it is not a reference.
pub fn cell_reference(reference: &str) -> Option<(u64, u64)> {
    let reference = reference.trim();
    let split = reference.find(|c: char| c.is_ascii_digit())?;
    let (letters, digits) = reference.split_at(split);
    if letters.is_empty() || letters.len() > 3 || !letters.bytes().all(|b| b.is_ascii_alphabetic()) {
        return None;
    }
    let column = letters.bytes().fold(0u64, |n, b| n * 26 + u64::from(b.to_ascii_uppercase() - b'A' + 1)) - 1;
    let row = digits.parse::<u64>().ok().filter(|&r| r >= 1)? - 1;
    Some((row, column))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cell_references() {
        assert_eq!(cell_reference("A1"), Some((0, 0)));
        assert_eq!(cell_reference("B3"), Some((2, 1)));
        assert_eq!(cell_reference("AA10"), Some((9, 26)));
        assert_eq!(cell_reference("XFD1048576"), Some((1_048_575, 16_383)));
        for bad in ["", "A", "3", "A0", "A1B", "ABCD1", "É1"] {
            assert_eq!(cell_reference(bad), None, "{bad}");
        }
    }
}
