//! Reading pasted or loaded tables of numbers.
//!
//! A scientist's table arrives from a spreadsheet (tab-separated), a CSV file
//! written with English or continental settings (`,` or `;`), or a text file
//! aligned with spaces. [`parse_table`] accepts all of these, finds an
//! optional header row, and turns every cell into a number or a
//! [`InputProblem`] that names the line and column. Rows with a problem are
//! kept in the [`Table`] with the problem recorded, so nothing is dropped
//! without a message.

use serde::Serialize;

/// The character that separates the columns of a table.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Separator {
    /// A tab, as a spreadsheet copies cells to the clipboard.
    Tab,
    /// A comma (English-style CSV; decimal commas are then impossible).
    Comma,
    /// A semicolon (CSV written with continental settings).
    Semicolon,
    /// One or more spaces.
    Whitespace,
}

/// How decimals are written in the numeric cells.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum DecimalMark {
    /// `1.5`
    Point,
    /// `1,5`
    Comma,
}

/// A problem with one place in the input: which line (1-based, as a text
/// editor counts), which column (1-based, or `None` for the whole line) and
/// what was expected.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct InputProblem {
    /// Line number in the pasted text, counting from 1.
    pub line: usize,
    /// Column number counting from 1, when the problem is in one cell.
    pub column: Option<usize>,
    /// A sentence saying what was found and what was expected.
    pub message: String,
}

impl std::fmt::Display for InputProblem {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self.column {
            Some(column) => write!(f, "line {}, column {}: {}", self.line, column, self.message),
            None => write!(f, "line {}: {}", self.line, self.message),
        }
    }
}

/// One header cell: the quantity's name and, when given, its unit.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ColumnHeading {
    /// The name as written, trimmed, without the unit (for example `[S]`).
    pub name: String,
    /// The unit written after the name in parentheses or brackets, or after
    /// ` / ` (for example `mM`).
    pub unit: Option<String>,
}

/// One data line of the table.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TableRow {
    /// Line number in the input, counting from 1.
    pub line: usize,
    /// The cells as numbers; a cell that could not be read is `None` and has
    /// a matching entry in [`Table::problems`].
    pub cells: Vec<Option<f64>>,
}

impl TableRow {
    /// The row's numbers when every one of the first `width` cells was read.
    pub fn complete(&self, width: usize) -> Option<Vec<f64>> {
        if self.cells.len() < width {
            return None;
        }
        self.cells[..width].iter().copied().collect()
    }
}

/// A parsed table: optional headings, the data rows and every problem found.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Table {
    /// The header row, when the first non-comment line was not numeric.
    pub headings: Option<Vec<ColumnHeading>>,
    /// Number of columns (from the header, or the most common row width).
    pub width: usize,
    /// Data rows in input order, including rows with problems.
    pub rows: Vec<TableRow>,
    /// Problems found, in input order.
    pub problems: Vec<InputProblem>,
    /// The separator that was detected.
    pub separator: Separator,
    /// The decimal mark that was detected.
    pub decimal_mark: DecimalMark,
}

/// Reads a table of numbers from text.
///
/// Lines that are blank or start with `#` are skipped. The separator is the
/// first of tab, semicolon, comma found in the lines, else whitespace. With a
/// tab, semicolon or whitespace separator, a comma inside a number is a
/// decimal comma. The first remaining line is a header when any of its cells
/// is not a number.
///
/// An input with no lines of data at all is still a `Table` (with no rows);
/// the caller decides whether that is an error.
pub fn parse_table(text: &str) -> Table {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let lines: Vec<(usize, &str)> = text
        .split('\n')
        .enumerate()
        .map(|(index, line)| (index + 1, line.strip_suffix('\r').unwrap_or(line)))
        .filter(|(_, line)| {
            let trimmed = line.trim();
            !trimmed.is_empty() && !trimmed.starts_with('#')
        })
        .collect();

    let separator = detect_separator(lines.iter().map(|(_, line)| *line));
    let split: Vec<(usize, Vec<&str>)> =
        lines.iter().map(|(number, line)| (*number, split_line(line, separator))).collect();
    let decimal_mark = detect_decimal_mark(separator, split.iter().flat_map(|(_, cells)| cells.iter().copied()));

    let mut problems = Vec::new();
    let mut headings = None;
    let mut data_start = 0;
    if let Some((_, first)) = split.first() {
        if first.iter().any(|cell| parse_number(cell, decimal_mark).is_err()) {
            headings = Some(first.iter().map(|cell| parse_heading(cell)).collect::<Vec<_>>());
            data_start = 1;
        }
    }

    let width = match &headings {
        Some(h) => h.len(),
        None => most_common_width(split.iter().map(|(_, cells)| cells.len())),
    };

    let mut rows = Vec::with_capacity(split.len().saturating_sub(data_start));
    for (line, cells) in &split[data_start..] {
        if cells.len() != width {
            problems.push(InputProblem {
                line: *line,
                column: None,
                message: format!(
                    "expected {} {}, found {}",
                    width,
                    if width == 1 { "column" } else { "columns" },
                    cells.len()
                ),
            });
        }
        let mut parsed = Vec::with_capacity(cells.len());
        for (index, cell) in cells.iter().enumerate() {
            match parse_number(cell, decimal_mark) {
                Ok(value) => parsed.push(Some(value)),
                Err(message) => {
                    problems.push(InputProblem { line: *line, column: Some(index + 1), message });
                    parsed.push(None);
                }
            }
        }
        rows.push(TableRow { line: *line, cells: parsed });
    }

    Table { headings, width, rows, problems, separator, decimal_mark }
}

fn detect_separator<'a>(lines: impl Iterator<Item = &'a str> + Clone) -> Separator {
    if lines.clone().any(|line| line.contains('\t')) {
        Separator::Tab
    } else if lines.clone().any(|line| line.contains(';')) {
        Separator::Semicolon
    } else if lines.clone().any(|line| line.contains(',')) {
        // A comma is either the separator or a decimal comma in a table
        // aligned with spaces. Whitespace wins only when it reads a strictly
        // larger share of the cells as numbers.
        let share = |separator: Separator, mark: DecimalMark| {
            let (mut numeric, mut total) = (0usize, 0usize);
            for line in lines.clone() {
                for cell in split_line(line, separator) {
                    total += 1;
                    numeric += usize::from(parse_number(cell, mark).is_ok());
                }
            }
            numeric as f64 / total.max(1) as f64
        };
        if share(Separator::Whitespace, DecimalMark::Comma) > share(Separator::Comma, DecimalMark::Point) {
            Separator::Whitespace
        } else {
            Separator::Comma
        }
    } else {
        Separator::Whitespace
    }
}

fn split_line(line: &str, separator: Separator) -> Vec<&str> {
    match separator {
        Separator::Tab => trim_trailing_empty(line.split('\t').map(str::trim).collect()),
        Separator::Comma => trim_trailing_empty(line.split(',').map(str::trim).collect()),
        Separator::Semicolon => trim_trailing_empty(line.split(';').map(str::trim).collect()),
        Separator::Whitespace => line.split_whitespace().collect(),
    }
}

/// Spreadsheets often leave empty cells at the end of a row (a trailing
/// separator). Those are not data, so they are removed; empty cells in the
/// middle of a row stay and are reported.
fn trim_trailing_empty(mut cells: Vec<&str>) -> Vec<&str> {
    while cells.len() > 1 && cells.last().is_some_and(|cell| cell.is_empty()) {
        cells.pop();
    }
    cells
}

fn detect_decimal_mark<'a>(separator: Separator, cells: impl Iterator<Item = &'a str>) -> DecimalMark {
    if separator == Separator::Comma {
        return DecimalMark::Point;
    }
    let mut comma = false;
    for cell in cells {
        if cell.contains(',') && parse_number(cell, DecimalMark::Comma).is_ok() {
            comma = true;
        }
    }
    if comma {
        DecimalMark::Comma
    } else {
        DecimalMark::Point
    }
}

fn most_common_width(widths: impl Iterator<Item = usize>) -> usize {
    let mut counts: Vec<(usize, usize)> = Vec::new();
    for width in widths {
        match counts.iter_mut().find(|(w, _)| *w == width) {
            Some(entry) => entry.1 += 1,
            None => counts.push((width, 1)),
        }
    }
    // Ties go to the wider table, so a short stray line does not decide.
    counts.into_iter().max_by_key(|&(width, count)| (count, width)).map_or(0, |(width, _)| width)
}

/// Reads one numeric cell. Accepts an optional sign (including the Unicode
/// minus sign), digits with the given decimal mark, and an exponent.
/// Infinite and not-a-number spellings are refused: they are never data.
pub fn parse_number(cell: &str, decimal_mark: DecimalMark) -> Result<f64, String> {
    let trimmed = cell.trim();
    if trimmed.is_empty() {
        return Err("the cell is empty; expected a number".to_string());
    }
    let mut normalised = trimmed.replace('\u{2212}', "-");
    if normalised.contains('.') && normalised.contains(',') {
        return Err(format!("cannot read '{trimmed}': it has both a decimal point and a comma"));
    }
    if decimal_mark == DecimalMark::Comma {
        normalised = normalised.replace(',', ".");
    }
    let looks_numeric = normalised
        .chars()
        .all(|c| c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E'))
        && normalised.chars().any(|c| c.is_ascii_digit());
    if !looks_numeric {
        return Err(format!("expected a number, found '{trimmed}'"));
    }
    match normalised.parse::<f64>() {
        Ok(value) if value.is_finite() => Ok(value),
        Ok(_) => Err(format!("'{trimmed}' is too large to be a measurement")),
        Err(_) => Err(format!("expected a number, found '{trimmed}'")),
    }
}

/// Splits a header cell into name and unit: `[S] (mM)`, `S [mM]`,
/// `[S] / mM` and `v (µM/min)` all carry a unit; `[S]` alone does not.
pub fn parse_heading(cell: &str) -> ColumnHeading {
    let cell = cell.trim();
    let plain = |name: &str| ColumnHeading { name: name.trim().to_string(), unit: None };
    for (open, close) in [('(', ')'), ('[', ']')] {
        if let Some(inner_end) = cell.strip_suffix(close) {
            if let Some(start) = inner_end.rfind(open) {
                let name = inner_end[..start].trim();
                let unit = inner_end[start + open.len_utf8()..].trim();
                if !name.is_empty() && !unit.is_empty() {
                    return ColumnHeading { name: name.to_string(), unit: Some(unit.to_string()) };
                }
            }
        }
    }
    if let Some((name, unit)) = cell.split_once(" / ") {
        if !name.trim().is_empty() && !unit.trim().is_empty() {
            return ColumnHeading { name: name.trim().to_string(), unit: Some(unit.trim().to_string()) };
        }
    }
    plain(cell)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Parses `text` and checks separator, decimal mark, headings and the
    /// numbers of every row.
    fn check(text: &str, separator: Separator, mark: DecimalMark, headings: &[(&str, Option<&str>)], rows: &[&[f64]]) {
        let table = parse_table(text);
        assert_eq!(table.separator, separator, "separator for {text:?}");
        assert_eq!(table.decimal_mark, mark, "decimal mark for {text:?}");
        assert!(table.problems.is_empty(), "unexpected problems {:?}", table.problems);
        let found: Vec<(String, Option<String>)> = table
            .headings
            .clone()
            .unwrap_or_default()
            .into_iter()
            .map(|h| (h.name, h.unit))
            .collect();
        let expected: Vec<(String, Option<String>)> =
            headings.iter().map(|(n, u)| (n.to_string(), u.map(str::to_string))).collect();
        assert_eq!(found, expected);
        let numbers: Vec<Vec<f64>> = table.rows.iter().map(|r| r.complete(table.width).unwrap()).collect();
        let expected_rows: Vec<Vec<f64>> = rows.iter().map(|r| r.to_vec()).collect();
        assert_eq!(numbers, expected_rows);
    }

    #[test]
    fn separators_and_decimal_marks() {
        check("0.1\t2.5\n0.2\t3.5\n", Separator::Tab, DecimalMark::Point, &[], &[&[0.1, 2.5], &[0.2, 3.5]]);
        check("0,1\t2,5\n0,2\t3,5\n", Separator::Tab, DecimalMark::Comma, &[], &[&[0.1, 2.5], &[0.2, 3.5]]);
        check("0.1,2.5\r\n0.2,3.5\r\n", Separator::Comma, DecimalMark::Point, &[], &[&[0.1, 2.5], &[0.2, 3.5]]);
        check("0,1;2,5\n0,2;3,5", Separator::Semicolon, DecimalMark::Comma, &[], &[&[0.1, 2.5], &[0.2, 3.5]]);
        check("0.1;2.5\n0.2;3.5", Separator::Semicolon, DecimalMark::Point, &[], &[&[0.1, 2.5], &[0.2, 3.5]]);
        check("  0.1   2.5\n 0.2 3.5e0 \n", Separator::Whitespace, DecimalMark::Point, &[], &[&[0.1, 2.5], &[0.2, 3.5]]);
        check("0,1  2,5\n0,2  3,5", Separator::Whitespace, DecimalMark::Comma, &[], &[&[0.1, 2.5], &[0.2, 3.5]]);
        check("1e-3\t\u{2212}2\n", Separator::Tab, DecimalMark::Point, &[], &[&[0.001, -2.0]]);
        check("\u{feff}1\t2\t\t\n", Separator::Tab, DecimalMark::Point, &[], &[&[1.0, 2.0]]);
    }

    #[test]
    fn headers_comments_and_units() {
        check(
            "# assay 2026-11-30, 25 °C\n[S] (mM)\tv (µM/min)\n\n0.5\t1.25\n# replicate 2\n1\t2\n",
            Separator::Tab,
            DecimalMark::Point,
            &[("[S]", Some("mM")), ("v", Some("µM/min"))],
            &[&[0.5, 1.25], &[1.0, 2.0]],
        );
        check(
            "S [uM];rate [nM/s]\n1,5;2\n",
            Separator::Semicolon,
            DecimalMark::Comma,
            &[("S", Some("uM")), ("rate", Some("nM/s"))],
            &[&[1.5, 2.0]],
        );
        check(
            "substrate / mM, velocity / mM min-1\n1,2\n",
            Separator::Comma,
            DecimalMark::Point,
            &[("substrate", Some("mM")), ("velocity", Some("mM min-1"))],
            &[&[1.0, 2.0]],
        );
        check("[S] v\n1 2\n", Separator::Whitespace, DecimalMark::Point, &[("[S]", None), ("v", None)], &[&[1.0, 2.0]]);
    }

    /// Each bad input with the problems it must produce, as `line, column,
    /// message` in the `Display` form a scientist sees.
    #[test]
    fn bad_inputs_name_line_and_column() {
        let cases: &[(&str, &[&str])] = &[
            ("S\tv\n0.1\t1.0\n0.2\tabc\n", &["line 3, column 2: expected a number, found 'abc'"]),
            ("S\tv\n0.1\t\t\n0.2\t1\n", &["line 2: expected 2 columns, found 1"]),
            ("S\tv\n0.1\t\t5\n", &["line 2: expected 2 columns, found 3", "line 2, column 2: the cell is empty; expected a number"]),
            ("S,v\n1,2,3\n", &["line 2: expected 2 columns, found 3"]),
            ("1\t2\n3\tNaN\n", &["line 2, column 2: expected a number, found 'NaN'"]),
            ("1\t2\n3\tinf\n", &["line 2, column 2: expected a number, found 'inf'"]),
            ("1\t2\n3\t1e999\n", &["line 2, column 2: '1e999' is too large to be a measurement"]),
            ("1;2\n3;1,000.5\n", &["line 2, column 2: cannot read '1,000.5': it has both a decimal point and a comma"]),
            ("# c\nS v\n1 2\n3 4 5\n", &["line 4: expected 2 columns, found 3"]),
            ("S\tv\n0.1\t1.0 mM\n", &["line 2, column 2: expected a number, found '1.0 mM'"]),
        ];
        for (text, expected) in cases {
            let table = parse_table(text);
            let found: Vec<String> = table.problems.iter().map(|p| p.to_string()).collect();
            assert_eq!(&found, expected, "for input {text:?}");
        }
    }

    #[test]
    fn rows_with_problems_are_kept() {
        let table = parse_table("S\tv\n1\t2\n2\tx\n3\t4\n");
        assert_eq!(table.rows.len(), 3);
        assert_eq!(table.rows[1].cells, vec![Some(2.0), None]);
        assert_eq!(table.rows[1].line, 3);
    }
}
