//! Reading pasted or loaded tables of numbers.
//!
//! A scientist's table arrives from a spreadsheet (tab-separated), a CSV file
//! written with English or continental settings (`,` or `;`), or a text file
//! aligned with spaces. [`parse_table`] accepts all of these, finds an
//! optional header row, and turns every cell into a number or a
//! [`InputProblem`] that names the line and column. Rows with a problem are
//! kept in the [`Table`] with the problem recorded, so nothing is dropped
//! without a message.
//!
//! **Number styles.** Whether `,` or `.` is the decimal mark is decided for
//! each column from all of its cells ([`StyleVotes`]): `0,25` or `1.234,5`
//! can only be continental, `0.25` or `1,234.5` only English. A cell such as
//! `1,000` reads as one thousand in an English column and as 1.000 in a
//! continental one; when neither its column nor the rest of the table says
//! which, it is a problem, never a guess. Spreadsheet error cells (`#DIV/0!`,
//! `#N/A`, ...) are problems in their cells, never comments. Quoted CSV
//! fields (`"0.05"`, `"1,000"`, `""` for a quote) are read as their content.

use std::borrow::Cow;

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
    /// The decimal mark that was detected: [`DecimalMark::Comma`] when any
    /// column is written with decimal commas.
    pub decimal_mark: DecimalMark,
    /// How the numbers of each column are written, decided from all of its
    /// cells (index = column − 1).
    pub styles: Vec<NumberStyle>,
}

/// Reads a table of numbers from text.
///
/// Lines that are blank or start with `#` are skipped, unless the `#` begins
/// a spreadsheet error value such as `#N/A` (then the line is data and the
/// cell a problem). The separator is the first of tab, semicolon, comma
/// found outside quotes, else whitespace. Each column's decimal mark is
/// decided from all of its cells (see the module documentation). The first
/// remaining line is a header when any of its cells is neither a number nor
/// a spreadsheet error value.
///
/// An input with no lines of data at all is still a `Table` (with no rows);
/// the caller decides whether that is an error.
pub fn parse_table(text: &str) -> Table {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let lines: Vec<(usize, &str)> = text
        .split('\n')
        .enumerate()
        .map(|(index, line)| (index + 1, line.strip_suffix('\r').unwrap_or(line)))
        .filter(|(_, line)| !line.trim().is_empty() && !is_comment_line(line))
        .collect();

    let separator = detect_separator(lines.iter().map(|(_, line)| *line));
    let mut problems = Vec::new();
    let split: Vec<(usize, Vec<Cow<str>>)> = lines
        .iter()
        .map(|(number, line)| {
            let (cells, open_quote) = split_line(line, separator);
            if let Some(column) = open_quote {
                problems.push(InputProblem {
                    line: *number,
                    column: Some(column),
                    message: "a quote opened in this cell is not closed on the line; the rest of the line was read as the cell (a quoted cell cannot span lines)".to_string(),
                });
            }
            (*number, cells)
        })
        .collect();

    let mut headings = None;
    let mut data_start = 0;
    if let Some((_, first)) = split.first() {
        // A spreadsheet error is a failed number, never a heading.
        if first.iter().any(|cell| !looks_like_number(cell) && spreadsheet_error(cell).is_none()) {
            headings = Some(first.iter().map(|cell| parse_heading(cell)).collect::<Vec<_>>());
            data_start = 1;
        }
    }

    let width = match &headings {
        Some(h) => h.len(),
        None => most_common_width(split.iter().map(|(_, cells)| cells.len())),
    };

    let mut votes = StyleVotes::default();
    for (_, cells) in &split[data_start..] {
        for (column, cell) in cells.iter().enumerate() {
            votes.add(column, cell);
        }
    }
    let styles = votes.styles();

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
            let style = styles.get(index).copied().unwrap_or(NumberStyle::Undecided);
            match read_number(cell, style) {
                Ok(value) => parsed.push(Some(value)),
                Err(message) => {
                    problems.push(InputProblem { line: *line, column: Some(index + 1), message });
                    parsed.push(None);
                }
            }
        }
        rows.push(TableRow { line: *line, cells: parsed });
    }
    problems.sort_by_key(|p| (p.line, p.column.is_some(), p.column));

    let decimal_mark =
        if styles.contains(&NumberStyle::DecimalComma) { DecimalMark::Comma } else { DecimalMark::Point };
    Table { headings, width, rows, problems, separator, decimal_mark, styles }
}

/// Whether a line is a comment: it starts with `#`, and the `#` does not
/// begin a spreadsheet error value (`#N/A`, `#DIV/0!`, ...), which is data.
pub fn is_comment_line(line: &str) -> bool {
    let trimmed = line.trim_start();
    trimmed.starts_with('#') && !starts_with_spreadsheet_error(trimmed)
}

/// The error values spreadsheets write into cells whose formula failed.
const SPREADSHEET_ERRORS: &[&str] = &[
    "#DIV/0!", "#N/A", "#VALUE!", "#REF!", "#NUM!", "#NAME?", "#NULL!", "#SPILL!", "#CALC!", "#FIELD!", "#BLOCKED!",
    "#CONNECT!", "#BUSY!", "#UNKNOWN!", "#GETTING_DATA",
];

fn starts_with_spreadsheet_error(text: &str) -> bool {
    SPREADSHEET_ERRORS.iter().any(|error| {
        text.get(..error.len()).is_some_and(|start| start.eq_ignore_ascii_case(error))
            && !text[error.len()..].chars().next().is_some_and(|c| c.is_alphanumeric() || c == '_')
    })
}

/// The spreadsheet error value a cell holds, if it is one.
pub fn spreadsheet_error(cell: &str) -> Option<&'static str> {
    let cell = cell.trim();
    SPREADSHEET_ERRORS.iter().copied().find(|error| cell.eq_ignore_ascii_case(error))
}

/// Removes quoted stretches, so separator detection sees only the
/// characters that separate.
pub(crate) fn outside_quotes(line: &str) -> Cow<'_, str> {
    if !line.contains('"') {
        return Cow::Borrowed(line);
    }
    let mut out = String::with_capacity(line.len());
    let mut quoted = false;
    for c in line.chars() {
        if c == '"' {
            quoted = !quoted;
        } else if !quoted {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// The separator of a table's lines: tab, then semicolon, then comma (or
/// whitespace when that reads more cells as numbers), found outside quotes.
pub fn detect_separator<'a>(lines: impl Iterator<Item = &'a str> + Clone) -> Separator {
    if lines.clone().any(|line| outside_quotes(line).contains('\t')) {
        Separator::Tab
    } else if lines.clone().any(|line| outside_quotes(line).contains(';')) {
        Separator::Semicolon
    } else if lines.clone().any(|line| outside_quotes(line).contains(',')) {
        // A comma is either the separator or a decimal comma in a table
        // aligned with spaces. Whitespace wins only when it reads a strictly
        // larger share of the cells as numbers.
        let share = |separator: Separator| {
            let (mut numeric, mut total) = (0usize, 0usize);
            for line in lines.clone() {
                for cell in split_line(line, separator).0 {
                    total += 1;
                    numeric += usize::from(looks_like_number(&cell));
                }
            }
            numeric as f64 / total.max(1) as f64
        };
        if share(Separator::Whitespace) > share(Separator::Comma) {
            Separator::Whitespace
        } else {
            Separator::Comma
        }
    } else {
        Separator::Whitespace
    }
}

/// Splits a line into trimmed cells. With a tab, comma or semicolon, a cell
/// that starts with `"` is quoted CSV: it runs to the closing quote, `""`
/// stands for one quote, and separators inside are part of the cell. Returns
/// the cells and, when a quote is never closed, the column where it opened.
pub fn split_line(line: &str, separator: Separator) -> (Vec<Cow<'_, str>>, Option<usize>) {
    let sep = match separator {
        Separator::Tab => '\t',
        Separator::Comma => ',',
        Separator::Semicolon => ';',
        Separator::Whitespace => {
            let cells = line
                .split_whitespace()
                .map(|cell| {
                    let inner = cell.strip_prefix('"').and_then(|c| c.strip_suffix('"'));
                    Cow::Borrowed(inner.map_or(cell, str::trim))
                })
                .collect();
            return (cells, None);
        }
    };
    if !line.contains('"') {
        return (trim_trailing_empty(line.split(sep).map(|c| Cow::Borrowed(c.trim())).collect()), None);
    }
    let mut cells = Vec::new();
    let mut open_quote = None;
    let mut rest = line;
    loop {
        let start = rest.trim_start();
        if let Some(quoted) = start.strip_prefix('"') {
            // A quoted cell: read to the closing quote, unescaping "".
            let mut content = String::new();
            let mut chars = quoted.char_indices().peekable();
            let mut after = None;
            while let Some((i, c)) = chars.next() {
                if c == '"' {
                    if chars.peek().is_some_and(|(_, n)| *n == '"') {
                        chars.next();
                        content.push('"');
                    } else {
                        after = Some(i + 1);
                        break;
                    }
                } else {
                    content.push(c);
                }
            }
            let Some(end) = after else {
                open_quote = Some(cells.len() + 1);
                cells.push(Cow::Owned(content.trim().to_string()));
                break;
            };
            // Anything between the closing quote and the separator belongs
            // to the cell, as written.
            let tail = &quoted[end..];
            let (extra, next) = match tail.find(sep) {
                Some(k) => (&tail[..k], Some(&tail[k + sep.len_utf8()..])),
                None => (tail, None),
            };
            content.push_str(extra.trim_end());
            cells.push(Cow::Owned(content.trim().to_string()));
            match next {
                Some(next) => rest = next,
                None => break,
            }
        } else {
            match rest.find(sep) {
                Some(k) => {
                    cells.push(Cow::Borrowed(rest[..k].trim()));
                    rest = &rest[k + sep.len_utf8()..];
                }
                None => {
                    cells.push(Cow::Borrowed(rest.trim()));
                    break;
                }
            }
        }
    }
    (trim_trailing_empty(cells), open_quote)
}

/// Spreadsheets often leave empty cells at the end of a row (a trailing
/// separator). Those are not data, so they are removed; empty cells in the
/// middle of a row stay and are reported.
fn trim_trailing_empty(mut cells: Vec<Cow<'_, str>>) -> Vec<Cow<'_, str>> {
    while cells.len() > 1 && cells.last().is_some_and(|cell| cell.is_empty()) {
        cells.pop();
    }
    cells
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

/// How the numbers of one column are written.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum NumberStyle {
    /// `1234.5` or `1,234.5`: a decimal point; commas only group thousands.
    DecimalPoint,
    /// `1234,5` or `1.234,5`: a decimal comma; points only group thousands.
    DecimalComma,
    /// Nothing in the column or the table says which. A point reads as a
    /// decimal point; a cell that could be a comma grouping thousands or a
    /// decimal comma (`1,000`) is a problem.
    Undecided,
}

/// What one cell's characters allow, before its column is known.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Shape {
    /// Not a number in any style.
    NotNumeric,
    /// Digits (with sign or exponent) only: the same in every style.
    Plain,
    /// Only this style can read it: a mark that cannot be grouping (`0,25`,
    /// `1.5`, `12,3456`), two marks (`1,234.5`), or one mark repeated
    /// (`1.234.567`).
    Only(NumberStyle),
    /// One mark between 1–3 digits (not starting with 0) and exactly three
    /// digits, no exponent: `1,000`, `12.500`. A thousands group in one style,
    /// a decimal in the other.
    Groupable(char),
}

fn style_with_decimal(mark: char) -> NumberStyle {
    if mark == ',' {
        NumberStyle::DecimalComma
    } else {
        NumberStyle::DecimalPoint
    }
}

/// Splits off the sign and the exponent: (mantissa, exponent with its `e`).
fn mantissa_and_exponent(text: &str) -> (&str, &str) {
    let unsigned = text.strip_prefix(['-', '+']).unwrap_or(text);
    match unsigned.find(['e', 'E']) {
        Some(k) => (&unsigned[..k], &unsigned[k..]),
        None => (unsigned, ""),
    }
}

fn shape(cell: &str) -> Shape {
    let text = cell.trim().replace('\u{2212}', "-");
    let (mantissa, exponent) = mantissa_and_exponent(&text);
    let exponent_ok = exponent.is_empty() || {
        let digits = exponent[1..].strip_prefix(['-', '+']).unwrap_or(&exponent[1..]);
        !digits.is_empty() && digits.chars().all(|c| c.is_ascii_digit())
    };
    if !exponent_ok
        || !mantissa.chars().all(|c| c.is_ascii_digit() || c == ',' || c == '.')
        || !mantissa.chars().any(|c| c.is_ascii_digit())
    {
        return Shape::NotNumeric;
    }
    let commas = mantissa.matches(',').count();
    let points = mantissa.matches('.').count();
    match (commas, points) {
        (0, 0) => Shape::Plain,
        (_, 0) | (0, _) => {
            let mark = if commas > 0 { ',' } else { '.' };
            if commas + points > 1 {
                // Repeated: only grouping; the other mark is the decimal.
                return Shape::Only(style_with_decimal(if mark == ',' { '.' } else { ',' }));
            }
            let (whole, fraction) = mantissa.split_once(mark).unwrap_or((mantissa, ""));
            let groupable =
                exponent.is_empty() && (1..=3).contains(&whole.len()) && !whole.starts_with('0') && fraction.len() == 3;
            if groupable {
                Shape::Groupable(mark)
            } else {
                Shape::Only(style_with_decimal(mark))
            }
        }
        _ => {
            // Both marks: the last one is the decimal, and it may appear once.
            let last = if mantissa.rfind(',') > mantissa.rfind('.') { ',' } else { '.' };
            if mantissa.matches(last).count() > 1 {
                return Shape::NotNumeric;
            }
            Shape::Only(style_with_decimal(last))
        }
    }
}

/// Whether a cell reads as a number in some style.
pub fn looks_like_number(cell: &str) -> bool {
    shape(cell) != Shape::NotNumeric
}

/// Counts, for every column, the cells that only one number style can read,
/// and decides each column's style from them ([`StyleVotes::styles`]).
#[derive(Clone, Debug, Default)]
pub struct StyleVotes {
    /// Per column: cells only a decimal point reads, cells only a decimal
    /// comma reads.
    columns: Vec<(usize, usize)>,
}

impl StyleVotes {
    /// Counts one cell of column `column` (0-based).
    pub fn add(&mut self, column: usize, cell: &str) {
        if self.columns.len() <= column {
            self.columns.resize(column + 1, (0, 0));
        }
        match shape(cell) {
            Shape::Only(NumberStyle::DecimalPoint) => self.columns[column].0 += 1,
            Shape::Only(NumberStyle::DecimalComma) => self.columns[column].1 += 1,
            _ => {}
        }
    }

    /// Each column's style: the style its decisive cells share (the
    /// majority when they disagree; the cells of the minority then become
    /// problems, and a tie goes to the decimal point). A column with no
    /// decisive cell takes the style of the whole table, decided the same
    /// way, else [`NumberStyle::Undecided`].
    pub fn styles(&self) -> Vec<NumberStyle> {
        let decide = |(point, comma): (usize, usize)| match (point, comma) {
            (0, 0) => NumberStyle::Undecided,
            (p, c) if c > p => NumberStyle::DecimalComma,
            _ => NumberStyle::DecimalPoint,
        };
        let total = self.columns.iter().fold((0, 0), |(p, c), &(p1, c1)| (p + p1, c + c1));
        let table = decide(total);
        self.columns
            .iter()
            .map(|&votes| match decide(votes) {
                NumberStyle::Undecided => table,
                style => style,
            })
            .collect()
    }

    /// The style of column `column` (0-based), as [`StyleVotes::styles`]
    /// decides it.
    pub fn style(&self, column: usize) -> NumberStyle {
        self.styles().get(column).copied().unwrap_or(NumberStyle::Undecided)
    }
}

/// Whether `digits` is 1–3 digits followed by groups of exactly three,
/// separated by `mark`.
fn grouped_correctly(digits: &str, mark: char) -> bool {
    let mut groups = digits.split(mark);
    let first = groups.next().unwrap_or("");
    (1..=3).contains(&first.len()) && groups.all(|g| g.len() == 3)
}

/// Reads one numeric cell written in `style`. Accepts an optional sign
/// (including the Unicode minus sign), digits with the style's decimal mark
/// and, when correctly placed, the other mark grouping thousands, and an
/// exponent. Infinite and not-a-number spellings, spreadsheet error values
/// and cells only another style can read are refused with a sentence saying
/// why.
pub fn read_number(cell: &str, style: NumberStyle) -> Result<f64, String> {
    let trimmed = cell.trim();
    if trimmed.is_empty() {
        return Err("the cell is empty; expected a number".to_string());
    }
    if let Some(error) = spreadsheet_error(trimmed) {
        return Err(format!(
            "'{error}' is a spreadsheet error, not a number; fix the formula in the spreadsheet or leave the row out"
        ));
    }
    let (decimal, group) = match (shape(trimmed), style) {
        (Shape::NotNumeric, _) => {
            let marks_only = trimmed.chars().all(|c| c.is_ascii_digit() || ",.-+\u{2212}".contains(c));
            if marks_only && trimmed.contains('.') && trimmed.contains(',') {
                return Err(format!(
                    "cannot read '{trimmed}': its points and commas fit neither 1,234.5 nor 1.234,5"
                ));
            }
            return Err(format!("expected a number, found '{trimmed}'"));
        }
        (Shape::Plain, _) => ('.', None),
        (Shape::Only(only), NumberStyle::Undecided) => decimal_and_group(only),
        (Shape::Only(only), style) if only == style => decimal_and_group(only),
        (Shape::Only(only), style) => {
            return Err(format!(
                "'{trimmed}' is written with a decimal {}, but the other numbers of this column use a decimal {}; write every number of a column the same way",
                mark_name(only),
                mark_name(style)
            ))
        }
        (Shape::Groupable(_), NumberStyle::DecimalPoint) | (Shape::Groupable('.'), NumberStyle::Undecided) => {
            ('.', Some(','))
        }
        (Shape::Groupable(_), NumberStyle::DecimalComma) => (',', Some('.')),
        (Shape::Groupable(mark), NumberStyle::Undecided) => {
            let (whole, fraction) = trimmed.split_once(mark).unwrap_or((trimmed, ""));
            return Err(format!(
                "'{trimmed}' could be {whole}{fraction} (a comma grouping thousands) or {whole}.{fraction} (a decimal comma), and no other cell says which; write it without the comma, or with a decimal point"
            ));
        }
    };
    let text = trimmed.replace('\u{2212}', "-");
    let (mantissa, exponent) = mantissa_and_exponent(&text);
    let sign = if text.starts_with('-') { "-" } else { "" };
    let (whole, fraction) = match mantissa.split_once(decimal) {
        Some((w, f)) => (w, Some(f)),
        None => (mantissa, None),
    };
    let whole = match group {
        Some(g) if whole.contains(g) => {
            if !grouped_correctly(whole, g) {
                return Err(format!(
                    "cannot read '{trimmed}': the {} should group the digits in threes",
                    if g == ',' { "commas" } else { "points" }
                ));
            }
            whole.replace(g, "")
        }
        _ => whole.to_string(),
    };
    let normalised = match fraction {
        Some(f) => format!("{sign}{whole}.{f}{exponent}"),
        None => format!("{sign}{whole}{exponent}"),
    };
    match normalised.parse::<f64>() {
        Ok(value) if value.is_finite() => Ok(value),
        Ok(_) => Err(format!("'{trimmed}' is too large to be a measurement")),
        Err(_) => Err(format!("expected a number, found '{trimmed}'")),
    }
}

fn decimal_and_group(style: NumberStyle) -> (char, Option<char>) {
    match style {
        NumberStyle::DecimalComma => (',', Some('.')),
        _ => ('.', Some(',')),
    }
}

fn mark_name(style: NumberStyle) -> &'static str {
    match style {
        NumberStyle::DecimalComma => "comma",
        _ => "point",
    }
}

/// Reads a number that stands alone (a command-line option, a form field):
/// the rule of [`read_number`] with no column to decide, so a value such as
/// `1,000` is refused as ambiguous and `1,5` read as 1.5.
pub fn read_lone_number(text: &str) -> Result<f64, String> {
    let trimmed = text.trim();
    if let Shape::Groupable(mark @ ',') = shape(trimmed) {
        let (whole, fraction) = trimmed.split_once(mark).unwrap_or((trimmed, ""));
        return Err(format!(
            "'{trimmed}' could be {whole}{fraction} (a comma grouping thousands) or {whole}.{fraction} (a decimal comma); write {whole}{fraction} or {whole}.{fraction}"
        ));
    }
    read_number(trimmed, NumberStyle::Undecided)
}

/// Reads a quantity typed alone, such as `25 nM`, `25nM` or `25`: the
/// number by [`read_lone_number`], then the unit as written (`None` when
/// there is none). The unit is not checked here; the caller knows which
/// units fit. One rule for the command line's options and the page's fields.
pub fn read_quantity(text: &str) -> Result<(f64, Option<String>), String> {
    let text = text.trim();
    let end = text
        .char_indices()
        .find(|(_, c)| !(c.is_ascii_digit() || matches!(c, '.' | ',' | '-' | '+' | 'e' | 'E' | '\u{2212}')))
        .map_or(text.len(), |(i, _)| i);
    if end == 0 {
        return Err("it does not start with a number".to_string());
    }
    let number = read_lone_number(&text[..end])?;
    let unit = text[end..].trim();
    Ok((number, (!unit.is_empty()).then(|| unit.to_string())))
}

/// Reads one numeric cell with a known decimal mark (see [`read_number`]).
pub fn parse_number(cell: &str, decimal_mark: DecimalMark) -> Result<f64, String> {
    let style = match decimal_mark {
        DecimalMark::Point => NumberStyle::DecimalPoint,
        DecimalMark::Comma => NumberStyle::DecimalComma,
    };
    read_number(cell, style)
}

/// Why rows are missing from a fit, for the message that says too few
/// points remain: every input problem in the `line N, column M: ...` form
/// (the first `limit`, then how many more) and the number of lines left out
/// on request. Empty when there is nothing to say.
pub fn shortage_reasons(problems: &[InputProblem], left_out: usize, limit: usize) -> String {
    let mut parts: Vec<String> = problems.iter().take(limit).map(ToString::to_string).collect();
    if problems.len() > limit {
        parts.push(format!("and {} more problem(s)", problems.len() - limit));
    }
    if left_out > 0 {
        parts.push(format!("{left_out} line(s) left out on request"));
    }
    if parts.is_empty() {
        String::new()
    } else {
        format!(". Why rows are missing: {}", parts.join("; "))
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
            ("1;2\n3;1.000,5.5\n", &["line 2, column 2: cannot read '1.000,5.5': its points and commas fit neither 1,234.5 nor 1.234,5"]),
            ("# c\nS v\n1 2\n3 4 5\n", &["line 4: expected 2 columns, found 3"]),
            ("S\tv\n0.1\t1.0 mM\n", &["line 2, column 2: expected a number, found '1.0 mM'"]),
        ];
        for (text, expected) in cases {
            let table = parse_table(text);
            let found: Vec<String> = table.problems.iter().map(|p| p.to_string()).collect();
            assert_eq!(&found, expected, "for input {text:?}");
        }
    }

    /// Reads `text` and compares every row's cells (`None` for a cell that
    /// could not be read) and every problem, in the `Display` form.
    fn check_cells(text: &str, rows: &[&[Option<f64>]], problems: &[&str]) {
        let table = parse_table(text);
        let found_rows: Vec<Vec<Option<f64>>> = table.rows.iter().map(|r| r.cells.clone()).collect();
        let expected_rows: Vec<Vec<Option<f64>>> = rows.iter().map(|r| r.to_vec()).collect();
        assert_eq!(found_rows, expected_rows, "rows of {text:?}");
        let found: Vec<String> = table.problems.iter().map(ToString::to_string).collect();
        assert_eq!(found, problems, "problems of {text:?}");
    }

    /// Thousands separators: each column's style comes from its own cells,
    /// then from the rest of the table; a cell that both styles read
    /// differently is never guessed. (Grouping digits in threes with the
    /// other mark than the decimal one is common practice, no source.)
    #[test]
    fn thousands_separators_are_never_read_as_decimals_silently() {
        let ambiguous = |line: usize, column: usize, cell: &str, whole: &str, fraction: &str| {
            format!("line {line}, column {column}: '{cell}' could be {whole}{fraction} (a comma grouping thousands) or {whole}.{fraction} (a decimal comma), and no other cell says which; write it without the comma, or with a decimal point")
        };
        // The other column's 0.8 shows decimal points: 1,000 is one thousand.
        check_cells("S\tv\n500\t0.8\n1,000\t1.2\n", &[&[Some(500.0), Some(0.8)], &[Some(1000.0), Some(1.2)]], &[]);
        // Nothing says which: a problem in the cell, not 1.0.
        check_cells(
            "S (nM)\tv\n500\t8\n1,000\t12\n5,000\t19\n",
            &[&[Some(500.0), Some(8.0)], &[None, Some(12.0)], &[None, Some(19.0)]],
            &[&ambiguous(3, 1, "1,000", "1", "000"), &ambiguous(4, 1, "5,000", "5", "000")],
        );
        // A column's own cells decide before the table's.
        check_cells("1,5\t2,000\n2,5\t3,25\n", &[&[Some(1.5), Some(2.0)], &[Some(2.5), Some(3.25)]], &[]);
        check_cells("S;v\n1.000;0,5\n2.500;0,7\n", &[&[Some(1000.0), Some(0.5)], &[Some(2500.0), Some(0.7)]], &[]);
        check_cells("1,234,567\t1\n-1,000.5\t2\n", &[&[Some(1234567.0), Some(1.0)], &[Some(-1000.5), Some(2.0)]], &[]);
        check_cells("1.234,5\t1\n0,125\t2\n", &[&[Some(1234.5), Some(1.0)], &[Some(0.125), Some(2.0)]], &[]);
        // A point alone with no comma anywhere is a decimal point.
        check_cells("1.000\t2.500\n", &[&[Some(1.0), Some(2.5)]], &[]);
        // Mixed styles in one column: the minority cell is a problem.
        check_cells(
            "0.5\t1\n1.5\t2\n1,5\t3\n",
            &[&[Some(0.5), Some(1.0)], &[Some(1.5), Some(2.0)], &[None, Some(3.0)]],
            &["line 3, column 1: '1,5' is written with a decimal comma, but the other numbers of this column use a decimal point; write every number of a column the same way"],
        );
        check_cells(
            "12,34,567\t1.5\n",
            &[&[None, Some(1.5)]],
            &["line 1, column 1: cannot read '12,34,567': the commas should group the digits in threes"],
        );
        check_cells("1e-15\t1e15\n\u{2212}1,5e3\t0,5\n", &[&[Some(1e-15), Some(1e15)], &[Some(-1500.0), Some(0.5)]], &[]);
    }

    /// Spreadsheet error values are problems in their cells, even at the
    /// start of a line, where a `#` otherwise begins a comment.
    #[test]
    fn spreadsheet_errors_are_cell_problems() {
        let error = |line: usize, column: usize, value: &str| {
            format!("line {line}, column {column}: '{value}' is a spreadsheet error, not a number; fix the formula in the spreadsheet or leave the row out")
        };
        check_cells(
            "S\tv\n#DIV/0!\t5\n1\t#N/A\n2\t#value!\n# a comment\n#NAME?\t#REF!\n3\t#NUM!\n#NULL!\t4\n",
            &[&[None, Some(5.0)], &[Some(1.0), None], &[Some(2.0), None], &[None, None], &[Some(3.0), None], &[None, Some(4.0)]],
            &[
                &error(2, 1, "#DIV/0!"),
                &error(3, 2, "#N/A"),
                &error(4, 2, "#VALUE!"),
                &error(6, 1, "#NAME?"),
                &error(6, 2, "#REF!"),
                &error(7, 2, "#NUM!"),
                &error(8, 1, "#NULL!"),
            ],
        );
        // Without a header, an error value in the first row leaves it data.
        check_cells(
            "1\t#N/A\n2\t3\n",
            &[&[Some(1.0), None], &[Some(2.0), Some(3.0)]],
            &[&error(1, 2, "#N/A")],
        );
        assert!(is_comment_line("#NAMES of the wells"));
        assert!(!is_comment_line("  #N/A\t3"));
    }

    /// Quoted CSV fields are read as their content; a quote that is not
    /// closed is a problem. (RFC 4180 for the quoting rules.)
    #[test]
    fn quoted_csv_fields() {
        check(
            "\"S (mM)\",\"v, per \"\"min\"\"\"\n\"0.05\",\"0.70\"\n\"1,000\", \"1.5\"\n",
            Separator::Comma,
            DecimalMark::Point,
            &[("S", Some("mM")), ("v, per \"min\"", None)],
            &[&[0.05, 0.70], &[1000.0, 1.5]],
        );
        check("\"0,5\";\"1,5\"\n", Separator::Semicolon, DecimalMark::Comma, &[], &[&[0.5, 1.5]]);
        check_cells(
            "S,v\n1,\"2\n",
            &[&[Some(1.0), Some(2.0)]],
            &["line 2, column 2: a quote opened in this cell is not closed on the line; the rest of the line was read as the cell (a quoted cell cannot span lines)"],
        );
    }

    /// Odd inputs from the list: none panics, and each gives rows
    /// or problems as stated.
    #[test]
    fn awkward_inputs() {
        check_cells("", &[], &[]);
        check_cells("\u{0}\u{1}\u{fffd}\u{7f}", &[], &[]);
        check_cells(
            "S\tv\nn/a\t\u{2014}\n",
            &[&[None, None]],
            &["line 2, column 1: expected a number, found 'n/a'", "line 2, column 2: expected a number, found '\u{2014}'"],
        );
        check_cells("S\tS\n1\t2\n", &[&[Some(1.0), Some(2.0)]], &[]);
        check_cells("1\t2\n3\n4\t5\t6\n7\t8\n", &[&[Some(1.0), Some(2.0)], &[Some(3.0)], &[Some(4.0), Some(5.0), Some(6.0)], &[Some(7.0), Some(8.0)]], &["line 2: expected 2 columns, found 1", "line 3: expected 2 columns, found 3"]);
        check_cells("0\t0\n-1\t-2\n", &[&[Some(0.0), Some(0.0)], &[Some(-1.0), Some(-2.0)]], &[]);
    }

    /// Numbers standing alone (options): the same rule, no column to ask.
    #[test]
    fn lone_numbers() {
        let cases: &[(&str, Result<f64, &str>)] = &[
            ("25", Ok(25.0)),
            ("1,5", Ok(1.5)),
            ("0,250", Ok(0.25)),
            ("1.000", Ok(1.0)),
            ("1,000.5", Ok(1000.5)),
            ("1,000,000", Ok(1e6)),
            ("-2e-3", Ok(-0.002)),
            ("1,000", Err("'1,000' could be 1000 (a comma grouping thousands) or 1.000 (a decimal comma); write 1000 or 1.000")),
            ("NaN", Err("expected a number, found 'NaN'")),
            ("", Err("the cell is empty; expected a number")),
        ];
        for (text, expected) in cases {
            let found = read_lone_number(text);
            assert_eq!(found.as_ref().map_err(String::as_str), expected.as_ref().map_err(|e| *e), "{text:?}");
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
