//! Spreadsheet files (`.xlsx`, `.ods`, also `.xls`/`.xlsb`) from their
//! bytes, by the `calamine` crate: the list of sheets, and one sheet as the
//! core's table text, so every analysis reads a workbook exactly as it
//! reads a pasted table.
//!
//! The text is tab-separated. **Line numbers are the sheet's row numbers**
//! (rows above the first used row become empty lines, which the table
//! reader skips), so "line 5" in a problem is row 5 of the sheet. Columns
//! count from the sheet's first used column; when that is not column A,
//! [`SheetText::notes`] says so. Formulas give their cached values (what
//! the spreadsheet last showed). Error values (`#DIV/0!`, `#N/A`, ...) are
//! written as such, so the table reader reports each as a problem with its
//! line and column. Numbers are written as the shortest decimal that reads
//! back as the same double; clock times (a time of day or a duration
//! under one day) as `h:mm:ss`; other dates keep the spreadsheet's day
//! number, with a note.

use crate::error::Error;
use calamine::{open_workbook_auto_from_rs, Data, Reader};
use serde::Serialize;
use std::io::Cursor;

/// One sheet as table text.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SheetText {
    /// The table text (tab-separated; line N is row N of the sheet).
    pub text: String,
    /// How the sheet was written out (first used column, dates).
    pub notes: Vec<String>,
}

fn open(bytes: &[u8]) -> Result<calamine::Sheets<Cursor<Vec<u8>>>, Error> {
    open_workbook_auto_from_rs(Cursor::new(bytes.to_vec()))
        .map_err(|e| Error::invalid_data(format!("the file is not a spreadsheet Turnover can read (.xlsx, .ods, .xls, .xlsb): {e}")))
}

/// The names of the workbook's sheets, in order.
pub fn sheet_names(bytes: &[u8]) -> Result<Vec<String>, Error> {
    Ok(open(bytes)?.sheet_names())
}

/// `A`, `B`, ..., `Z`, `AA`, ... for a 0-based column.
fn column_letters(mut column: u32) -> String {
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

/// Quotes a text cell when it holds a tab, a line break or a quote.
fn text_cell(text: &str) -> String {
    if text.contains(['\t', '\n', '\r', '"']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// Seconds as `h:mm:ss` (with the fraction of a second when there is one).
fn clock(seconds: f64) -> String {
    let whole = seconds.floor();
    let fraction = seconds - whole;
    let s = whole as u64;
    let base = format!("{}:{:02}:{:02}", s / 3600, s / 60 % 60, s % 60);
    if fraction.abs() < 1e-6 {
        base
    } else {
        format!("{base}{}", format!("{:.3}", fraction).trim_start_matches('0').trim_end_matches('0'))
    }
}

/// The sheet `name` as table text.
pub fn sheet_text(bytes: &[u8], name: &str) -> Result<SheetText, Error> {
    let mut workbook = open(bytes)?;
    let names = workbook.sheet_names();
    if !names.iter().any(|n| n == name) {
        return Err(Error::invalid_option(format!(
            "the workbook has no sheet '{name}'; its sheets are {}",
            names.iter().map(|n| format!("'{n}'")).collect::<Vec<_>>().join(", ")
        )));
    }
    let range = workbook.worksheet_range(name).map_err(|e| Error::invalid_data(format!("sheet '{name}' cannot be read: {e}")))?;
    let mut notes = Vec::new();
    let Some((first_row, first_column)) = range.start() else {
        return Ok(SheetText { text: String::new(), notes: vec![format!("Sheet '{name}' is empty.")] });
    };
    if first_column > 0 {
        notes.push(format!(
            "Sheet '{name}' starts at column {}: column 1 of the table is column {} of the sheet.",
            column_letters(first_column),
            column_letters(first_column)
        ));
    }
    let mut dates = 0;
    let mut text = "\n".repeat(first_row as usize);
    for row in range.rows() {
        let cells: Vec<String> = row
            .iter()
            .map(|cell| match cell {
                Data::Empty => String::new(),
                Data::Int(i) => i.to_string(),
                Data::Float(f) => format!("{f}"),
                Data::String(s) | Data::DateTimeIso(s) | Data::DurationIso(s) => text_cell(s),
                Data::Bool(b) => (if *b { "TRUE" } else { "FALSE" }).to_string(),
                Data::Error(e) => e.to_string(),
                Data::DateTime(d) => {
                    let days = d.as_f64();
                    if d.is_duration() || (0.0..1.0).contains(&days) {
                        clock(days * 86_400.0)
                    } else {
                        dates += 1;
                        format!("{days}")
                    }
                }
            })
            .collect();
        let end = cells.iter().rposition(|c| !c.is_empty()).map_or(0, |i| i + 1);
        text.push_str(&cells[..end].join("\t"));
        text.push('\n');
    }
    if dates > 0 {
        notes.push(format!("{dates} date cell(s) of sheet '{name}' are written as the spreadsheet's day numbers."));
    }
    Ok(SheetText { text, notes })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rates::{analyse_rates, RateRequest};
    use rust_xlsxwriter::{Formula, Workbook};

    /// Invented rates (stated as such) written by a general-purpose xlsx
    /// writer: the sheet's text gives the same fit as the same table typed
    /// in, bit for bit; an error cell is a problem at its row and column;
    /// sheets are listed and a missing one is named.
    #[test]
    fn xlsx_sheet_reads_as_the_typed_table() {
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

    #[test]
    fn cells_are_written_as_the_table_reader_reads_them() {
        assert_eq!((column_letters(0), column_letters(25), column_letters(26), column_letters(27)), ("A".into(), "Z".into(), "AA".into(), "AB".into()));
        assert_eq!((clock(0.0), clock(90.0), clock(3725.5)), ("0:00:00".into(), "0:01:30".into(), "1:02:05.5".into()));
        assert_eq!(text_cell("a\tb"), "\"a\tb\"");
    }

    /// The same invented rates as an `.ods` file written by odfpy
    /// (`tests/data/make_rates_ods.py`, committed with its output): the
    /// same fit as the typed table; the last row's `#DIV/0!` (an error
    /// string in an ODS cell) is a problem at its row and column.
    #[test]
    fn ods_sheet_reads_as_the_typed_table() {
        let bytes = include_bytes!("../../tests/data/rates.ods");
        assert_eq!(sheet_names(bytes).unwrap(), ["Rates"]);
        let read = sheet_text(bytes, "Rates").unwrap();
        let typed = "[S] (µM)\tv (µM/min)\n1\t0.99\n2\t1.66\n5\t2.86\n10\t3.33\n20\t3.64\n50\t3.85\n";
        let request = |text: &str| RateRequest { text: text.to_string(), ..RateRequest::default() };
        let from_sheet = analyse_rates(&request(&read.text)).unwrap();
        assert_eq!(from_sheet.fit.parameters, analyse_rates(&request(typed)).unwrap().fit.parameters);
        assert_eq!(from_sheet.problems.iter().map(|p| (p.line, p.column)).collect::<Vec<_>>(), [(8, Some(2))]);
    }
}
