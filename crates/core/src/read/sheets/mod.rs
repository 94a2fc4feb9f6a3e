//! Spreadsheet files (`.xlsx`, `.ods`) from their bytes: the list of
//! sheets, and one sheet as the core's table text, so every analysis reads
//! a workbook exactly as it reads a pasted table. Written for the page as
//! much as for the command line: a zip reader ([`zip`], inflating with
//! `miniz_oxide`), a small XML scanner ([`xml`]) and the few elements of
//! each format ([`xlsx`], [`ods`]), a few tens of kilobytes of
//! WebAssembly.
//!
//! The text is tab-separated. **Line numbers are the sheet's row numbers**
//! (rows above the first used row become empty lines, which the table
//! reader skips), so "line 5" in a problem is row 5 of the sheet. Columns
//! count from the sheet's first used column; when that is not column A,
//! [`SheetText::notes`] says so. Formulas give their cached values (what
//! the spreadsheet last showed). Error values (`#DIV/0!`, `#N/A`, ...) are
//! written as such, so the table reader reports each as a problem with its
//! line and column. Numbers are written as the shortest decimal that reads
//! back as the same double (never with an exponent: `1e-300` is written
//! out in full); booleans as `TRUE` and `FALSE`; a text cell holding a
//! tab, a line break or a quote is quoted as in CSV. Dates: in `.xlsx` a
//! number whose cell format shows a time of day or a duration under one
//! day is written as `h:mm:ss`, a longer duration too, and other dates
//! keep the spreadsheet's day number, with a note; `.ods` dates and times
//! are written as the file stores them (`2024-03-01`, `PT01H30M00S`).
//! Merged cells: the value stands in the merged area's first cell, the
//! others are empty.
//!
//! Not read: `.xls` (Excel 97–2003) and `.xlsb` (binary) workbooks, and
//! password-protected files; each is refused with a sentence saying how
//! to save the sheet instead. Limits: at most [`INFLATED_LIMIT`]
//! bytes unpacked from one file, [`FILLED_LIMIT`] filled cells and
//! [`TEXT_LIMIT`] bytes of table text per sheet.

mod ods;
mod xlsx;
mod xml;
mod zip;

pub use zip::INFLATED_LIMIT;

use crate::error::Error;
use serde::Serialize;

/// The most filled cells one sheet may have (after `.ods` repeats are
/// spelled out): five million.
pub const FILLED_LIMIT: usize = 5_000_000;

/// The most bytes of table text one sheet may give (200 MB).
pub const TEXT_LIMIT: usize = 200_000_000;

/// The largest sheet of current spreadsheet programs: 1,048,576 rows.
pub const MAX_ROWS: u64 = 1_048_576;

/// ... and 16,384 columns (A to XFD).
pub const MAX_COLUMNS: u64 = 16_384;

/// One sheet as table text.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SheetText {
    /// The table text (tab-separated; line N is row N of the sheet).
    pub text: String,
    /// How the sheet was written out (first used column, dates).
    pub notes: Vec<String>,
}

/// A cell's value as the file stores it.
#[derive(Clone, Debug, PartialEq)]
pub enum Value {
    /// No value (an empty cell, or a formula without a cached result).
    Empty,
    /// A number.
    Number(f64),
    /// Text, also an empty text (which counts as filled, as a
    /// spreadsheet program counts it).
    Text(String),
    /// `TRUE` or `FALSE`.
    Bool(bool),
    /// An error value such as `#DIV/0!`.
    Error(String),
    /// A date or time as a day number (`.xlsx`), and whether its format
    /// shows an elapsed duration (`[h]:mm:ss`).
    Date {
        /// Days since the workbook's epoch; the fraction is the time.
        days: f64,
        /// Whether the format is an elapsed duration.
        duration: bool,
    },
}

/// A value at a 0-based row and column of its sheet.
#[derive(Clone, Debug, PartialEq)]
pub struct Placed {
    /// 0-based row.
    pub row: u32,
    /// 0-based column.
    pub column: u32,
    /// The value.
    pub value: Value,
}

/// Which format a file's bytes hold.
enum Kind {
    Xlsx,
    Ods,
}

/// What a number format shows, for telling dates from numbers.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Shown {
    /// A plain number (also percentages, currencies, text).
    Number,
    /// A date or time of day.
    Date,
    /// An elapsed duration (`[h]:mm:ss`).
    Duration,
}

/// What the number format `code` shows: its first section decides; the
/// first elapsed-time bracket (`[h]`, `[mm]`, `[s]`) makes a duration,
/// the first date or time letter (d, m, y, h, s, or `AM/PM`, `A/P`) a
/// date; quoted text, `\`-escaped characters, `_` spacing, `*` fill and
/// other brackets (colours, conditions, locales) count for nothing.
pub fn shown_by_format(code: &str) -> Shown {
    let mut chars = code.chars().peekable();
    while let Some(c) = chars.next() {
        match c {
            ';' => break,
            '"' => {
                for inner in chars.by_ref() {
                    if inner == '"' {
                        break;
                    }
                }
            }
            '\\' | '_' | '*' => {
                chars.next();
            }
            '[' => {
                let mut inside = String::new();
                for inner in chars.by_ref() {
                    if inner == ']' {
                        break;
                    }
                    inside.push(inner.to_ascii_lowercase());
                }
                let elapsed = !inside.is_empty() && inside.chars().all(|x| x == inside.chars().next().unwrap_or(' ')) && matches!(inside.chars().next(), Some('h' | 'm' | 's'));
                if elapsed {
                    return Shown::Duration;
                }
            }
            'd' | 'D' | 'm' | 'M' | 'y' | 'Y' | 'h' | 'H' | 's' | 'S' => return Shown::Date,
            'a' | 'A' => {
                if matches!(chars.peek(), Some('m' | 'M' | '/')) {
                    return Shown::Date;
                }
            }
            _ => {}
        }
    }
    Shown::Number
}

/// What a built-in number format (by its id, below 164) shows: 14–22,
/// 45 and 47 are dates and times, 46 is `[h]:mm:ss` (ECMA-376 Part 1,
/// 18.8.30, the list of built-in formats).
pub fn shown_by_builtin(id: u32) -> Shown {
    match id {
        14..=22 | 45 | 47 => Shown::Date,
        46 => Shown::Duration,
        _ => Shown::Number,
    }
}

/// The refusal of a workbook format Turnover does not read.
fn refuse(what: &str) -> Error {
    Error::invalid_data(format!(
        "the file is {what}, which Turnover does not read; open it in the spreadsheet program and save it as .xlsx or .ods (Excel Workbook, OpenDocument Spreadsheet) or the sheet as .csv"
    ))
}

fn kind(bytes: &[u8]) -> Result<(Kind, zip::Archive<'_>), Error> {
    const COMPOUND_FILE: &[u8] = &[0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1];
    if bytes.starts_with(COMPOUND_FILE) {
        // Both an Excel 97-2003 workbook and a password-protected .xlsx
        // are compound files; the latter holds a stream named
        // "EncryptedPackage" (ECMA-376 Part 2 and MS-OFFCRYPTO).
        let marker: Vec<u8> = "EncryptedPackage".encode_utf16().flat_map(u16::to_le_bytes).collect();
        if bytes.windows(marker.len()).any(|w| w == marker.as_slice()) {
            return Err(Error::invalid_data(
                "the spreadsheet is password-protected (encrypted); Turnover cannot read it: remove the password in the spreadsheet program, or save the sheet as .csv",
            ));
        }
        return Err(refuse("an Excel 97-2003 workbook (.xls)"));
    }
    if !zip::looks_like_zip(bytes) {
        return Err(Error::invalid_data(
            "the file is not a spreadsheet Turnover can read (.xlsx or .ods): it is not a zip archive as those files are; save the sheet as .xlsx, .ods or .csv",
        ));
    }
    let mut archive = zip::Archive::open(bytes)?;
    if archive.has("xl/workbook.xml") {
        return Ok((Kind::Xlsx, archive));
    }
    if archive.has("xl/workbook.bin") {
        return Err(refuse("a binary Excel workbook (.xlsb)"));
    }
    if archive.has("content.xml") {
        let mimetype = archive.read("mimetype")?.unwrap_or_default();
        let mimetype = String::from_utf8_lossy(&mimetype);
        if mimetype.is_empty() || mimetype.trim().starts_with("application/vnd.oasis.opendocument.spreadsheet") {
            if let Some(manifest) = archive.read("META-INF/manifest.xml")? {
                if String::from_utf8_lossy(&manifest).contains("encryption-data") {
                    return Err(Error::invalid_data(
                        "the spreadsheet is password-protected (encrypted); Turnover cannot read it: remove the password in the spreadsheet program, or save the sheet as .csv",
                    ));
                }
            }
            return Ok((Kind::Ods, archive));
        }
        return Err(refuse(&format!("an OpenDocument file of type '{}', not a spreadsheet", mimetype.trim())));
    }
    Err(refuse("a zip archive but not a workbook"))
}

/// The names of the workbook's sheets, in order.
pub fn sheet_names(bytes: &[u8]) -> Result<Vec<String>, Error> {
    let (kind, mut archive) = kind(bytes)?;
    match kind {
        Kind::Xlsx => Ok(xlsx::Workbook::open(&mut archive)?.names()),
        Kind::Ods => ods::names(&ods::content(&mut archive)?),
    }
}

/// The sheet `name` as table text.
pub fn sheet_text(bytes: &[u8], name: &str) -> Result<SheetText, Error> {
    let (kind, mut archive) = kind(bytes)?;
    let cells = match kind {
        Kind::Xlsx => {
            let workbook = xlsx::Workbook::open(&mut archive)?;
            has_sheet(name, &workbook.names())?;
            workbook.sheet(&mut archive, name)?
        }
        Kind::Ods => {
            let content = ods::content(&mut archive)?;
            has_sheet(name, &ods::names(&content)?)?;
            ods::sheet(&content, name)?
        }
    };
    write_sheet(name, cells)
}

fn has_sheet(name: &str, names: &[String]) -> Result<(), Error> {
    if names.iter().any(|n| n == name) {
        return Ok(());
    }
    Err(Error::invalid_option(format!(
        "the workbook has no sheet '{name}'; its sheets are {}",
        names.iter().map(|n| format!("'{n}'")).collect::<Vec<_>>().join(", ")
    )))
}

/// `A`, `B`, ..., `Z`, `AA`, ... for a 0-based column.
pub fn column_letters(mut column: u32) -> String {
    let mut letters = Vec::new();
    loop {
        letters.push((b'A' + (column % 26) as u8) as char);
        if column < 26 {
            break;
        }
        column = column / 26 - 1;
    }
    letters.iter().rev().collect()
}

/// Quotes a text cell when it holds a tab, a line break or a quote (the
/// cell-writing rule; `tests/sheets.rs` writes its reference cells by it).
pub fn text_cell(text: &str) -> String {
    if text.contains(['\t', '\n', '\r', '"']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// Seconds as `h:mm:ss` (with the fraction of a second when there is one).
pub fn clock(seconds: f64) -> String {
    // Rounded to the millisecond first, so that 30:04:59.9999999 is
    // 30:05:00 (the earlier rule wrote "30:04:591." for it).
    let sign = if seconds < 0.0 { "-" } else { "" };
    let millis = (seconds.abs() * 1000.0).round() as u64;
    let (s, ms) = (millis / 1000, millis % 1000);
    let base = format!("{sign}{}:{:02}:{:02}", s / 3600, s / 60 % 60, s % 60);
    if ms == 0 {
        base
    } else {
        format!("{base}.{}", format!("{ms:03}").trim_end_matches('0'))
    }
}

/// A value as table text, and whether it is a date written as its day
/// number.
fn render(value: &Value) -> (String, bool) {
    match value {
        Value::Empty => (String::new(), false),
        Value::Number(f) => (format!("{f}"), false),
        Value::Text(s) => (text_cell(s), false),
        Value::Bool(b) => ((if *b { "TRUE" } else { "FALSE" }).to_string(), false),
        Value::Error(e) => (e.clone(), false),
        Value::Date { days, duration } => {
            if *duration || (0.0..1.0).contains(days) {
                (clock(days * 86_400.0), false)
            } else {
                (format!("{days}"), true)
            }
        }
    }
}

/// The sheet's filled cells as table text: line N is row N, columns from
/// the first filled column; a later value at the same place replaces an
/// earlier one.
pub fn write_sheet(name: &str, mut cells: Vec<Placed>) -> Result<SheetText, Error> {
    cells.retain(|c| c.value != Value::Empty);
    if cells.len() > FILLED_LIMIT {
        return Err(too_many_cells(name));
    }
    // Place, then order in the file: of cells at one place the last one
    // written is last, and kept.
    let mut keys: Vec<u64> = cells.iter().enumerate().map(|(k, c)| place_key(c.row, c.column, k)).collect();
    if keys.windows(2).any(|w| w[0] > w[1]) {
        heap_sort(&mut keys);
    }
    let mut slots: Vec<Option<Placed>> = cells.into_iter().map(Some).collect();
    let mut kept: Vec<Placed> = Vec::with_capacity(slots.len());
    for key in keys {
        let Some(cell) = slots[(key & INDEX_MASK) as usize].take() else { continue };
        match kept.last_mut() {
            Some(last) if (last.row, last.column) == (cell.row, cell.column) => *last = cell,
            _ => kept.push(cell),
        }
    }
    let (Some(first_row), Some(first_column)) = (kept.first().map(|c| c.row), kept.iter().map(|c| c.column).min()) else {
        return Ok(SheetText { text: String::new(), notes: vec![format!("Sheet '{name}' is empty.")] });
    };
    let mut notes = Vec::new();
    if first_column > 0 {
        notes.push(format!(
            "Sheet '{name}' starts at column {}: column 1 of the table is column {} of the sheet.",
            column_letters(first_column),
            column_letters(first_column)
        ));
    }
    let mut text = "\n".repeat(first_row as usize);
    let mut dates = 0;
    let mut row = first_row;
    let mut column = first_column;
    for cell in &kept {
        if cell.row != row {
            for _ in row..cell.row {
                text.push('\n');
            }
            row = cell.row;
            column = first_column;
            if text.len() > TEXT_LIMIT {
                return Err(too_much_text(name));
            }
        }
        let (written, is_date) = render(&cell.value);
        if written.is_empty() {
            continue;
        }
        dates += usize::from(is_date);
        for _ in column..cell.column {
            text.push('\t');
        }
        column = cell.column;
        text.push_str(&written);
    }
    text.push('\n');
    if text.len() > TEXT_LIMIT {
        return Err(too_much_text(name));
    }
    if dates > 0 {
        notes.push(format!("{dates} date cell(s) of sheet '{name}' are written as the spreadsheet's day numbers."));
    }
    Ok(SheetText { text, notes })
}

/// The low bits of a sort key: the cell's index in the file (below
/// 2^23 = 8,388,608, more than [`FILLED_LIMIT`]).
const INDEX_MASK: u64 = (1 << 23) - 1;

/// One number that orders cells by row, then column, then their order in
/// the file: row (20 bits, below [`MAX_ROWS`]), column (14 bits, below
/// [`MAX_COLUMNS`]), index (23 bits).
fn place_key(row: u32, column: u32, index: usize) -> u64 {
    (u64::from(row) << 37) | (u64::from(column) << 23) | (index as u64 & INDEX_MASK)
}

/// Heapsort, written out: a few hundred bytes of WebAssembly where the
/// standard library's sorts would each add several kilobytes to the page.
/// Used only when a file lists its cells out of order, which is rare.
fn heap_sort(keys: &mut [u64]) {
    fn sift_down(keys: &mut [u64], mut root: usize, end: usize) {
        loop {
            let mut child = 2 * root + 1;
            if child >= end {
                return;
            }
            if child + 1 < end && keys[child] < keys[child + 1] {
                child += 1;
            }
            if keys[root] >= keys[child] {
                return;
            }
            keys.swap(root, child);
            root = child;
        }
    }
    for start in (0..keys.len() / 2).rev() {
        sift_down(keys, start, keys.len());
    }
    for end in (1..keys.len()).rev() {
        keys.swap(0, end);
        sift_down(keys, 0, end);
    }
}

fn too_many_cells(name: &str) -> Error {
    Error::invalid_data(format!(
        "sheet '{name}' has more than {FILLED_LIMIT} filled cells, more than Turnover reads from one sheet; copy the table you need into a new sheet"
    ))
}

fn too_much_text(name: &str) -> Error {
    Error::invalid_data(format!(
        "sheet '{name}' would make more than {} MB of table text, more than Turnover reads from one sheet; copy the table you need into a new sheet",
        TEXT_LIMIT / 1_000_000
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn at(row: u32, column: u32, value: Value) -> Placed {
        Placed { row, column, value }
    }

    #[test]
    fn cells_are_written_as_the_table_reader_reads_them() {
        assert_eq!((column_letters(0), column_letters(25), column_letters(26), column_letters(27)), ("A".into(), "Z".into(), "AA".into(), "AB".into()));
        assert_eq!(column_letters(16_383), "XFD");
        assert_eq!((clock(0.0), clock(90.0), clock(3725.5)), ("0:00:00".into(), "0:01:30".into(), "1:02:05.5".into()));
        assert_eq!((clock(108_299.999_999_9), clock(0.25), clock(-90.0)), ("30:05:00".into(), "0:00:00.25".into(), "-0:01:30".into()));
        assert_eq!(text_cell("a\tb"), "\"a\tb\"");
        let sheet = write_sheet(
            "S",
            vec![
                at(1, 1, Value::Text("x".into())),
                at(1, 3, Value::Number(0.1)),
                at(3, 2, Value::Error("#N/A".into())),
                at(3, 4, Value::Text(String::new())),
                at(1, 3, Value::Number(1e-3)),
                at(2, 5, Value::Empty),
                at(4, 1, Value::Bool(true)),
                at(4, 2, Value::Date { days: 0.5, duration: false }),
                at(4, 3, Value::Date { days: 45000.25, duration: false }),
            ],
        )
        .unwrap();
        assert_eq!(sheet.text, "\nx\t\t0.001\n\n\t#N/A\nTRUE\t12:00:00\t45000.25\n");
        assert_eq!(
            sheet.notes,
            [
                "Sheet 'S' starts at column B: column 1 of the table is column B of the sheet.",
                "1 date cell(s) of sheet 'S' are written as the spreadsheet's day numbers."
            ]
        );
        assert_eq!(write_sheet("E", vec![at(0, 0, Value::Empty)]).unwrap().notes, ["Sheet 'E' is empty."]);
    }

    /// Cells listed out of order, and twice at one place (the later one
    /// counts), come out in row and column order; the sort agrees with
    /// the standard library's on shuffled keys.
    #[test]
    fn cells_out_of_order_are_placed() {
        let sheet = write_sheet(
            "S",
            vec![at(2, 0, Value::Number(3.0)), at(0, 1, Value::Number(2.0)), at(0, 0, Value::Number(1.0)), at(0, 1, Value::Number(5.0)), at(1, 2, Value::Bool(false))],
        )
        .unwrap();
        assert_eq!(sheet.text, "1\t5\n\t\tFALSE\n3\n");
        let mut state = 0x2545_f491_4f6c_dd1d_u64;
        let mut keys: Vec<u64> = (0..1000)
            .map(|_| {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                state % 5000
            })
            .collect();
        let mut expected = keys.clone();
        expected.sort_unstable();
        heap_sort(&mut keys);
        assert_eq!(keys, expected);
        assert!(place_key(1, 0, 0) > place_key(0, 16_383, 5_000_000));
        assert!(place_key(0, 1, 0) > place_key(0, 0, 5_000_000));
    }

    /// Number formats: the usual date, time and duration formats against
    /// plain number formats, and built-in ids.
    #[test]
    fn dates_are_told_from_numbers_by_their_format() {
        for code in ["yyyy-mm-dd", "d/m/yy h:mm", "h:mm:ss AM/PM", "mm:ss", "[$-409]d-mmm-yy", "[Red]dd.mm.yyyy", "hh\"h\"", "h A/P"] {
            assert_eq!(shown_by_format(code), Shown::Date, "{code}");
        }
        for code in ["[h]:mm:ss", "[mm]:ss", "[ss].00", "[Blue][h]:mm"] {
            assert_eq!(shown_by_format(code), Shown::Duration, "{code}");
        }
        for code in ["General", "0.00", "0.0 \"min\"", "#,##0;[Red]-#,##0", "0.00E+00", "\\d0", "0%", "@", "[>=100][Magenta]0.0", "0_m", "0;yyyy"] {
            assert_eq!(shown_by_format(code), Shown::Number, "{code}");
        }
        assert_eq!((shown_by_builtin(14), shown_by_builtin(46), shown_by_builtin(2)), (Shown::Date, Shown::Duration, Shown::Number));
    }

    /// Invented rates (stated as such) written by a general-purpose xlsx
    /// writer: the sheet's text gives the same fit as the same table typed
    /// in, bit for bit; an error cell is a problem at its row and column;
    /// sheets are listed and a missing one is named.
    #[test]
    fn xlsx_sheet_reads_as_the_typed_table() {
        use crate::rates::{analyse_rates, RateRequest};
        use rust_xlsxwriter::{Formula, Workbook};
        let rows = [(1.0, 0.99), (2.0, 1.66), (5.0, 2.86), (10.0, 3.33), (20.0, 3.64), (50.0, 3.85)];
        let mut workbook = Workbook::new();
        let notes = workbook.add_worksheet();
        notes.set_name("Notes").unwrap();
        notes.write_string(0, 0, "invented data for a test").unwrap();
        let sheet = workbook.add_worksheet();
        sheet.set_name("Rates").unwrap();
        sheet.write_string(0, 0, "[S] (µM)").unwrap();
        sheet.write_string(0, 1, "v (µM/min)").unwrap();
        for (k, (s, v)) in rows.iter().enumerate() {
            sheet.write_number(k as u32 + 1, 0, *s).unwrap();
            sheet.write_number(k as u32 + 1, 1, *v).unwrap();
        }
        sheet.write_number(7, 0, 100.0).unwrap();
        sheet.write_formula(7, 1, Formula::new("=1/0").set_result("#DIV/0!")).unwrap();
        let bytes = workbook.save_to_buffer().unwrap();

        assert_eq!(sheet_names(&bytes).unwrap(), ["Notes", "Rates"]);
        let read = sheet_text(&bytes, "Rates").unwrap();
        assert!(read.notes.is_empty(), "{:?}", read.notes);
        let mut typed = String::from("[S] (µM)\tv (µM/min)\n");
        for (s, v) in rows {
            typed.push_str(&format!("{s}\t{v}\n"));
        }
        let request = |text: &str| RateRequest { text: text.to_string(), ..RateRequest::default() };
        let from_sheet = analyse_rates(&request(&read.text)).unwrap();
        let from_typed = analyse_rates(&request(&typed)).unwrap();
        assert_eq!(from_sheet.fit.parameters, from_typed.fit.parameters);
        assert_eq!(
            from_sheet.problems.iter().map(ToString::to_string).collect::<Vec<_>>(),
            ["line 8, column 2: '#DIV/0!' is a spreadsheet error, not a number; fix the formula in the spreadsheet or leave the row out"]
        );
        let error = sheet_text(&bytes, "Plate").unwrap_err();
        assert_eq!(error.message, "the workbook has no sheet 'Plate'; its sheets are 'Notes', 'Rates'");
        assert!(sheet_names(b"not a workbook").is_err());
    }

    /// The same invented rates as an `.ods` file written by odfpy
    /// (`tests/data/make_rates_ods.py`, committed with its output): the
    /// same fit as the typed table; the last row's `#DIV/0!` (an error
    /// string in an ODS cell) is a problem at its row and column.
    #[test]
    fn ods_sheet_reads_as_the_typed_table() {
        use crate::rates::{analyse_rates, RateRequest};
        let bytes = include_bytes!("../../../tests/data/rates.ods");
        assert_eq!(sheet_names(bytes).unwrap(), ["Rates"]);
        let read = sheet_text(bytes, "Rates").unwrap();
        let typed = "[S] (µM)\tv (µM/min)\n1\t0.99\n2\t1.66\n5\t2.86\n10\t3.33\n20\t3.64\n50\t3.85\n";
        let request = |text: &str| RateRequest { text: text.to_string(), ..RateRequest::default() };
        let from_sheet = analyse_rates(&request(&read.text)).unwrap();
        assert_eq!(from_sheet.fit.parameters, analyse_rates(&request(typed)).unwrap().fit.parameters);
        assert_eq!(from_sheet.problems.iter().map(|p| (p.line, p.column)).collect::<Vec<_>>(), [(8, Some(2))]);
    }

    #[test]
    fn other_files_are_refused_with_a_sentence() {
        let mut xls = vec![0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1];
        xls.extend([0; 504]);
        assert!(sheet_names(&xls).unwrap_err().message.contains("Excel 97-2003 workbook (.xls)"));
        xls.extend("EncryptedPackage".encode_utf16().flat_map(u16::to_le_bytes));
        assert!(sheet_names(&xls).unwrap_err().message.contains("password-protected"));
        assert!(sheet_names(b"[S]\tv\n1\t2\n").unwrap_err().message.contains("not a zip archive"));
        assert!(sheet_names(b"PK\x03\x04 broken").unwrap_err().message.contains("zip container is damaged"));
    }
}
