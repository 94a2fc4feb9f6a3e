//! Turnover's own spreadsheet reader (`turnover_core::read::sheets`)
//! against calamine, a general-purpose reader of .xlsx and .ods files
//! (crates.io, kept here as the reference only): for every sheet of every
//! test workbook the two give the same table text, cell for cell, and the
//! same notes.
//!
//! The workbooks: `tests/data/sheets/varied.xlsx` and `varied.ods`,
//! written by openpyxl and odfpy (`make_workbooks.py` beside them, pinned
//! in its `requirements.txt`; invented values: numbers such as 0.1,
//! 1e-300, 5e-324 and 2^53 + 2, text with tabs, quotes, line breaks,
//! Unicode and XML's special characters, booleans, error values, gaps,
//! merged cells, repeated ODS rows and cells, dates, hidden and empty
//! sheets); workbooks written here by rust_xlsxwriter (formulas with
//! cached numbers, text, booleans and errors; dates and durations); and
//! parts written by hand into a stored zip, for what neither writer
//! produces (inline strings, Office escapes, cells without a reference,
//! phonetic runs, prefixed element names).
//!
//! calamine's cells are turned into text by the rule of the module it was
//! used in before this reader existed (`cells_as_text` below): numbers by
//! Rust's shortest round-trip `{}` format, booleans `TRUE`/`FALSE`, error
//! values as their text, clock times as `h:mm:ss` (rounded to the
//! millisecond first: the earlier rule wrote 30:04:59.9999 as
//! `30:04:591.`, found by this test), other dates as day
//! numbers with a note, text quoted when it holds a tab, a line break or
//! a quote. A disagreement is a finding, not a reason to loosen a check.

use calamine::{open_workbook_auto_from_rs, Data, Reader};
use proptest::prelude::*;
use std::io::Cursor;
// The cell-writing rule (column letters, quoting, clock times) is the
// reader's own; what is compared is which cells and values are read.
use turnover_core::read::sheets::{clock, column_letters, sheet_names, sheet_text, text_cell, SheetText};

// ---------------------------------------------------------------------
// The reference: calamine's cells written as table text.

fn calamine_names(bytes: &[u8]) -> Vec<String> {
    open_workbook_auto_from_rs(Cursor::new(bytes.to_vec())).unwrap().sheet_names()
}

fn cells_as_text(bytes: &[u8], name: &str) -> SheetText {
    let mut workbook = open_workbook_auto_from_rs(Cursor::new(bytes.to_vec())).unwrap();
    let range = workbook.worksheet_range(name).unwrap();
    let mut notes = Vec::new();
    let Some((first_row, first_column)) = range.start() else {
        return SheetText { text: String::new(), notes: vec![format!("Sheet '{name}' is empty.")] };
    };
    if first_column > 0 {
        let letters = column_letters(first_column);
        notes.push(format!("Sheet '{name}' starts at column {letters}: column 1 of the table is column {letters} of the sheet."));
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
    SheetText { text, notes }
}

/// Every sheet of `bytes` read by both; returns how many sheets.
fn same_as_calamine(label: &str, bytes: &[u8]) -> usize {
    let names = sheet_names(bytes).unwrap_or_else(|e| panic!("{label}: {}", e.message));
    assert_eq!(names, calamine_names(bytes), "{label}: sheet names");
    for name in &names {
        let ours = sheet_text(bytes, name).unwrap_or_else(|e| panic!("{label} '{name}': {}", e.message));
        let reference = cells_as_text(bytes, name);
        for (k, (a, b)) in ours.text.split('\n').zip(reference.text.split('\n')).enumerate() {
            assert_eq!(a, b, "{label} '{name}': line {}", k + 1);
        }
        assert_eq!(ours, reference, "{label} '{name}'");
    }
    names.len()
}

fn fixture(name: &str) -> Vec<u8> {
    std::fs::read(format!("{}/data/sheets/{name}", env!("CARGO_MANIFEST_DIR"))).unwrap()
}

// ---------------------------------------------------------------------
// A stored (uncompressed) zip, for parts written by hand.

fn crc32(bytes: &[u8]) -> u32 {
    let mut crc = !0u32;
    for &b in bytes {
        crc ^= u32::from(b);
        for _ in 0..8 {
            crc = if crc & 1 != 0 { 0xEDB8_8320 ^ (crc >> 1) } else { crc >> 1 };
        }
    }
    !crc
}

fn stored_zip(files: &[(&str, &str)]) -> Vec<u8> {
    let mut out = Vec::new();
    let mut directory = Vec::new();
    for (name, contents) in files {
        let offset = out.len() as u32;
        let (crc, size) = (crc32(contents.as_bytes()), contents.len() as u32);
        let header = |signature: u32, central: bool| {
            let mut h = signature.to_le_bytes().to_vec();
            if central {
                h.extend(20u16.to_le_bytes());
            }
            h.extend(20u16.to_le_bytes()); // version needed
            h.extend(0u16.to_le_bytes()); // flags
            h.extend(0u16.to_le_bytes()); // stored
            h.extend(0u32.to_le_bytes()); // time and date
            h.extend(crc.to_le_bytes());
            h.extend(size.to_le_bytes());
            h.extend(size.to_le_bytes());
            h.extend((name.len() as u16).to_le_bytes());
            h.extend(0u16.to_le_bytes()); // extra
            if central {
                h.extend([0u8; 6]); // comment length, disk, internal attributes
                h.extend(0u32.to_le_bytes()); // external attributes
                h.extend(offset.to_le_bytes());
            }
            h.extend(name.as_bytes());
            h
        };
        out.extend(header(0x0403_4b50, false));
        out.extend(contents.as_bytes());
        directory.extend(header(0x0201_4b50, true));
    }
    let start = out.len() as u32;
    out.extend(&directory);
    out.extend(0x0605_4b50u32.to_le_bytes());
    out.extend([0u8; 4]);
    out.extend((files.len() as u16).to_le_bytes());
    out.extend((files.len() as u16).to_le_bytes());
    out.extend((directory.len() as u32).to_le_bytes());
    out.extend(start.to_le_bytes());
    out.extend(0u16.to_le_bytes());
    out
}

const RELS: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">
<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.xml"/>
<Relationship Id="rId2" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="/xl/worksheets/sheet2.xml"/>
</Relationships>"#;

const WORKBOOK: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships">
<sheets><sheet name="Hand &amp; made" sheetId="1" r:id="rId1"/><sheet name="Second" sheetId="2" r:id="rId2"/></sheets></workbook>"#;

const STRINGS: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" count="4" uniqueCount="4">
<si><t>[S] (&#181;M)</t></si>
<si><r><rPr><b/></rPr><t>rich </t></r><r><t xml:space="preserve">text</t></r><rPh sb="0" eb="1"><t>PHONETIC</t></rPh></si>
<si><t>line_x000D_
break</t></si>
<si/>
</sst>"#;

const STYLES: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">
<numFmts count="2"><numFmt numFmtId="164" formatCode="yyyy\-mm\-dd"/><numFmt numFmtId="165" formatCode="0.000&quot; s&quot;"/></numFmts>
<cellStyleXfs count="1"><xf numFmtId="14"/></cellStyleXfs>
<cellXfs count="5"><xf numFmtId="0"/><xf numFmtId="164"/><xf numFmtId="165"/><xf numFmtId="21"/><xf numFmtId="46"/></cellXfs>
</styleSheet>"#;

const SHEET1: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><dimension ref="B2:F9"/>
<sheetData>
<row r="2"><c r="B2" t="s"><v>0</v></c><c r="C2" t="s"><v>1</v></c><c r="D2" t="s"><v>2</v></c><c r="E2" t="s"><v>3</v></c></row>
<row r="3"><c r="B3"><v>0.1</v></c><c><v>1E-300</v></c><c><v>-12345678901234567890</v></c><c t="n"><v>3.5e2</v></c></row>
<row r="4"><c r="B4" t="inlineStr"><is><t>inline &lt;tag&gt; &amp; &quot;q&quot;</t></is></c><c r="C4" t="str"><f>CONCAT("a","b")</f><v>ab</v></c><c r="D4" t="b"><v>1</v></c><c r="E4" t="e"><f>1/0</f><v>#DIV/0!</v></c></row>
<row r="5"><c r="B5" s="1"><v>45352</v></c><c r="C5" s="2"><v>1.5</v></c><c r="D5" s="3"><v>0.5625</v></c><c r="E5" s="4"><v>1.25</v></c><c r="F5" s="9"><v>7</v></c></row>
<row r="6"><c r="B6"><f>SUM(B3:B3)</f></c><c r="C6"><v></v></c><c r="D6" t="str"><v></v></c></row>
<row r="9" spans="1:3"><c r="B9"><v>1</v></c><c r="D9"><v>2</v></c><c r="C9"><v>3</v></c></row>
</sheetData><mergeCells count="1"><mergeCell ref="B9:C9"/></mergeCells></worksheet>"#;

const SHEET2: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<x:worksheet xmlns:x="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><x:sheetData>
<x:row><x:c t="inlineStr"><x:is><x:t>prefixed</x:t></x:is></x:c><x:c><x:v>2.5</x:v></x:c></x:row>
<x:row/>
<x:row><x:c r="C3"><x:v>-0</x:v></x:c></x:row>
</x:sheetData></x:worksheet>"#;

fn hand_made_xlsx() -> Vec<u8> {
    stored_zip(&[
        ("[Content_Types].xml", r#"<?xml version="1.0"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"/>"#),
        ("xl/_rels/workbook.xml.rels", RELS),
        ("xl/workbook.xml", WORKBOOK),
        ("xl/sharedStrings.xml", STRINGS),
        ("xl/styles.xml", STYLES),
        ("xl/worksheets/sheet1.xml", SHEET1),
        ("xl/worksheets/sheet2.xml", SHEET2),
    ])
}

fn ods_with(body: &str) -> Vec<u8> {
    let content = format!(
        r#"<?xml version="1.0" encoding="UTF-8"?><office:document-content xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" xmlns:calcext="urn:org:documentfoundation:names:experimental:calc:xmlns:calcext:1.0" office:version="1.3"><office:body><office:spreadsheet>{body}</office:spreadsheet></office:body></office:document-content>"#
    );
    let manifest = r#"<?xml version="1.0" encoding="UTF-8"?><manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0"><manifest:file-entry manifest:full-path="/" manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/><manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/></manifest:manifest>"#;
    stored_zip(&[("mimetype", "application/vnd.oasis.opendocument.spreadsheet"), ("META-INF/manifest.xml", manifest), ("content.xml", &content)])
}

// ---------------------------------------------------------------------
// The checks.

#[test]
fn fixtures_written_by_openpyxl_and_odfpy_read_as_calamine_reads_them() {
    assert_eq!(same_as_calamine("varied.xlsx", &fixture("varied.xlsx")), 7);
    assert_eq!(same_as_calamine("varied.ods", &fixture("varied.ods")), 5);
}

/// The checks above compare two readers; this pins what both give for
/// a few cells, so that an agreement on something wrong would be seen.
#[test]
fn fixture_cells_read_as_written() {
    let xlsx = fixture("varied.xlsx");
    let numbers = sheet_text(&xlsx, "Numbers").unwrap().text;
    let lines: Vec<&str> = numbers.lines().collect();
    assert_eq!(lines[1], "0.1\t-0.1\t0.05");
    assert_eq!(lines[2].split('\t').next().unwrap().parse::<f64>().unwrap(), 1e-300);
    assert_eq!(lines[7].split('\t').next().unwrap().parse::<f64>().unwrap(), 5e-324);
    assert_eq!(lines[9].split('\t').next().unwrap(), "9007199254740994");
    let text = sheet_text(&xlsx, "Text & 'quotes'").unwrap().text;
    assert!(text.starts_with("plain\t5\n\"tab\there\"\t8\n\"say \"\"hi\"\"\"\t8\nµM · é · 漢字 · 🧪\t"), "{text}");
    let mixed = sheet_text(&xlsx, "Mixed").unwrap().text;
    assert!(mixed.starts_with("bool\tTRUE\tFALSE\nerrors\t#N/A\t#DIV/0!\t#VALUE!"), "{mixed}");
    let dates = sheet_text(&xlsx, "Dates").unwrap();
    // 2024-03-01 is day 45352 of the 1900 date system (common practice,
    // no source); 12:30 is 12.5/24 of a day, to openpyxl's rounding.
    let (day, rest) = dates.text.split_once('\n').unwrap();
    assert!((day.parse::<f64>().unwrap() - (45352.0 + 12.5 / 24.0)).abs() < 1e-9, "{day}");
    assert_eq!(rest, "6:15:30\n30:05:00\n6:00:00\n12.5\n45000\n0.75\n");
    assert_eq!(dates.notes, ["2 date cell(s) of sheet 'Dates' are written as the spreadsheet's day numbers."]);
    let gaps = sheet_text(&xlsx, "Gaps").unwrap();
    assert_eq!(gaps.text, "\n\n[S] (µM)\t\tv (µM/min)\n1\t\t0.99\n\n5\t\t2.86\n\n\n\t\t\t\t\tfar\n");
    assert_eq!(gaps.notes, ["Sheet 'Gaps' starts at column C: column 1 of the table is column C of the sheet."]);

    let ods = fixture("varied.ods");
    let repeats = sheet_text(&ods, "Repeats").unwrap().text;
    assert_eq!(repeats, "\n\n\n[S]\tv\n2.5\t0.75\t0.75\t0.75\n2.5\t0.75\t0.75\t0.75\n2.5\t0.75\t0.75\t0.75\n\n\nmerged\t\t\tafter\tafter\n");
    let text = sheet_text(&ods, "Text & 'quotes'").unwrap().text;
    assert!(text.ends_with("\"first   spanned\nsecond\"\tfrom the attribute\n"), "{text}");
}

/// Formulas with cached results, written by rust_xlsxwriter (invented
/// values), and dates and durations in its formats.
#[test]
fn formulas_keep_their_cached_values() {
    use rust_xlsxwriter::{ExcelDateTime, Format, Formula, Workbook};
    let mut workbook = Workbook::new();
    let sheet = workbook.add_worksheet().set_name("Rates").unwrap();
    sheet.write_string(0, 0, "[S] (µM)").unwrap();
    sheet.write_string(0, 1, "v (µM/min)").unwrap();
    sheet.write_number(1, 0, 2.0).unwrap();
    sheet.write_formula(1, 1, Formula::new("=A2*0.4").set_result("0.8")).unwrap();
    sheet.write_formula(2, 0, Formula::new("=A2*2").set_result("4")).unwrap();
    sheet.write_formula(2, 1, Formula::new("=NA()").set_result("#N/A")).unwrap();
    sheet.write_formula(3, 0, Formula::new("=\"a\"&\"b\"").set_result("ab")).unwrap();
    sheet.write_formula(3, 1, Formula::new("=1>0").set_result("TRUE")).unwrap();
    sheet.write_boolean(4, 0, false).unwrap();
    sheet.write_number(4, 2, -1.5e-7).unwrap();
    let times = workbook.add_worksheet().set_name("Times").unwrap();
    let clock = Format::new().set_num_format("hh:mm:ss");
    let elapsed = Format::new().set_num_format("[h]:mm:ss");
    let day = Format::new().set_num_format("dd/mm/yyyy");
    times.write_number_with_format(0, 0, 0.3, &clock).unwrap();
    times.write_number_with_format(1, 0, 2.75, &elapsed).unwrap();
    times.write_datetime_with_format(2, 0, ExcelDateTime::from_ymd(2023, 11, 5).unwrap(), &day).unwrap();
    times.write_number(3, 0, 44000.5).unwrap();
    let bytes = workbook.save_to_buffer().unwrap();
    assert_eq!(same_as_calamine("formulas", &bytes), 2);
    assert_eq!(sheet_text(&bytes, "Rates").unwrap().text, "[S] (µM)\tv (µM/min)\n2\t0.8\n4\t#N/A\nab\tTRUE\nFALSE\t\t-0.00000015\n");
    assert_eq!(sheet_text(&bytes, "Times").unwrap().text, "7:12:00\n66:00:00\n45235\n44000.5\n");
}

/// Parts written by hand: inline and rich strings, entities and
/// character references, an escaped carriage return, phonetic runs left
/// out, an empty shared string, custom and built-in date formats, a
/// style beyond the list, a formula without its value, cells without a
/// reference (they follow the one before), cells out of order, prefixed
/// element names, a relationship target from the root.
#[test]
fn hand_written_parts_read_as_calamine_reads_them() {
    let bytes = hand_made_xlsx();
    assert_eq!(same_as_calamine("hand-made", &bytes), 2);
    let first = sheet_text(&bytes, "Hand & made").unwrap();
    let tiny = format!("{}", 1e-300);
    let expected = [
        "",
        "[S] (µM)\trich text\t\"line\r\nbreak\"",
        &format!("0.1\t{tiny}\t-12345678901234567000\t350"),
        "\"inline <tag> & \"\"q\"\"\"\tab\tTRUE\t#DIV/0!",
        "45352\t1.5\t13:30:00\t30:00:00\t7",
        "",
        "",
        "",
        "1\t3\t2",
    ];
    assert_eq!(first.text, expected.join("\n") + "\n");
    assert_eq!(
        first.notes,
        [
            "Sheet 'Hand & made' starts at column B: column 1 of the table is column B of the sheet.",
            "1 date cell(s) of sheet 'Hand & made' are written as the spreadsheet's day numbers."
        ]
    );
    assert_eq!(sheet_text(&bytes, "Second").unwrap().text, "prefixed\t2.5\n\n\t\t-0\n");
}

/// One deliberate difference: LibreOffice marks a formula's error result
/// with `calcext:value-type="error"` and keeps the error's text in the
/// cell's paragraph (ODF 1.3 files written by LibreOffice; the attribute
/// is LibreOffice's extension). Turnover keeps that text, so the table
/// reader reports the cell; calamine reads the `office:` attributes only
/// and gives the placeholder value (here 0, a number that would enter a
/// fit unnoticed).
#[test]
fn ods_error_results_are_kept_as_their_text() {
    let bytes = ods_with(
        r#"<table:table table:name="Rates"><table:table-row><table:table-cell office:value-type="float" office:value="2"><text:p>2</text:p></table:table-cell><table:table-cell table:formula="of:=1/0" office:value-type="float" office:value="0" calcext:value-type="error"><text:p>#DIV/0!</text:p></table:table-cell><table:table-cell table:formula="of:=[.Z99]" office:value-type="string" office:string-value="" calcext:value-type="error"><text:p>Err:502</text:p></table:table-cell></table:table-row></table:table>"#,
    );
    assert_eq!(sheet_text(&bytes, "Rates").unwrap().text, "2\t#DIV/0!\tErr:502\n");
    assert_eq!(cells_as_text(&bytes, "Rates").text, "2\t0\n");
}

/// Hand-written ODS parts calamine reads alike: row groups and header
/// rows, a sheet name with an entity, tabs and line breaks as elements.
#[test]
fn hand_written_ods_reads_as_calamine_reads_it() {
    let bytes = ods_with(
        r#"<table:table table:name="A &amp; B"><table:table-column table:number-columns-repeated="3"/><table:table-header-rows><table:table-row><table:table-cell office:value-type="string"><text:p>head</text:p></table:table-cell></table:table-row></table:table-header-rows><table:table-row-group><table:table-row table:number-rows-repeated="2"><table:table-cell table:number-columns-repeated="2"/><table:table-cell office:value-type="float" office:value="1.25E-3"><text:p>0.00125</text:p></table:table-cell></table:table-row></table:table-row-group><table:table-row><table:table-cell office:value-type="string"><text:p>x<text:s text:c="2"/>y</text:p></table:table-cell></table:table-row></table:table><table:table table:name="Second"/>"#,
    );
    assert_eq!(same_as_calamine("hand-made ods", &bytes), 2);
    assert_eq!(sheet_text(&bytes, "A & B").unwrap().text, "head\n\t\t0.00125\n\t\t0.00125\nx  y\n");
}

/// Files that are not workbooks Turnover reads are refused with a
/// sentence, and so are sheets that are not there.
#[test]
fn refusals_are_sentences() {
    let message = |bytes: &[u8]| sheet_names(bytes).unwrap_err().message;
    assert!(message(b"[S]\tv\n1\t2\n").contains("not a zip archive"));
    let mut truncated = fixture("varied.xlsx");
    truncated.truncate(truncated.len() / 2);
    assert!(message(&truncated).contains("damaged"), "{}", message(&truncated));
    let mut flipped = fixture("varied.ods");
    let middle = flipped.len() / 2;
    flipped[middle] ^= 0xFF;
    let flipped_message = sheet_names(&flipped).and_then(|_| sheet_text(&flipped, "Numbers").map(|_| ())).unwrap_err().message;
    assert!(flipped_message.contains("damaged"), "{flipped_message}");
    assert!(message(&stored_zip(&[("word/document.xml", "<w/>")])).contains("not a workbook"));
    assert!(message(&stored_zip(&[("xl/workbook.bin", "")])).contains(".xlsb"));
    let error = sheet_text(&fixture("varied.ods"), "Plate").unwrap_err();
    assert_eq!(error.message, "the workbook has no sheet 'Plate'; its sheets are 'Numbers', 'Text & 'quotes'', 'Repeats', 'Mixed', 'Empty'");
}

/// Zip bombs: a deflated part that would inflate past the limit is
/// refused before it is held in memory. The part is 250 MB of spaces
/// (deflated by miniz_oxide's compressor to a few hundred kilobytes).
#[test]
fn a_part_that_inflates_past_the_limit_is_refused() {
    let spaces = vec![b' '; 250_000_000];
    let deflated = miniz_oxide::deflate::compress_to_vec(&spaces, 1);
    drop(spaces);
    // A one-entry zip whose entry is that deflated stream, declared as
    // 1 kB so the declared size does not give it away.
    let name = b"content.xml";
    let mut out = Vec::new();
    out.extend(0x0403_4b50u32.to_le_bytes());
    out.extend([20, 0, 0, 0, 8, 0, 0, 0, 0, 0]);
    out.extend(0u32.to_le_bytes());
    out.extend((deflated.len() as u32).to_le_bytes());
    out.extend(1000u32.to_le_bytes());
    out.extend((name.len() as u16).to_le_bytes());
    out.extend(0u16.to_le_bytes());
    out.extend(name);
    out.extend(&deflated);
    let directory = out.len() as u32;
    out.extend(0x0201_4b50u32.to_le_bytes());
    out.extend([20, 0, 20, 0, 0, 0, 8, 0, 0, 0, 0, 0]);
    out.extend(0u32.to_le_bytes());
    out.extend((deflated.len() as u32).to_le_bytes());
    out.extend(1000u32.to_le_bytes());
    out.extend((name.len() as u16).to_le_bytes());
    out.extend([0u8; 12]);
    out.extend(0u32.to_le_bytes());
    out.extend(name);
    let size = out.len() as u32 - directory;
    out.extend(0x0605_4b50u32.to_le_bytes());
    out.extend([0, 0, 0, 0, 1, 0, 1, 0]);
    out.extend(size.to_le_bytes());
    out.extend(directory.to_le_bytes());
    out.extend([0, 0]);
    let message = sheet_names(&out).unwrap_err().message;
    assert!(message.contains("more than 200 MB when unpacked"), "{message}");
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    /// Arbitrary bytes, with or without a zip's first bytes, never panic.
    #[test]
    fn arbitrary_bytes_never_panic(mut bytes in proptest::collection::vec(any::<u8>(), 0..2000), zip_start in any::<bool>()) {
        if zip_start {
            bytes.splice(0..0, *b"PK\x03\x04");
        }
        let _ = sheet_names(&bytes);
        let _ = sheet_text(&bytes, "Sheet1");
    }

    /// A real workbook with bytes changed or cut never panics either:
    /// every outcome is a table or a sentence.
    #[test]
    fn damaged_workbooks_never_panic(which in 0..3usize, changes in proptest::collection::vec((any::<prop::sample::Index>(), any::<u8>()), 1..8), cut in any::<prop::sample::Index>(), cut_it in any::<bool>()) {
        let mut bytes = match which {
            0 => fixture("varied.xlsx"),
            1 => fixture("varied.ods"),
            _ => hand_made_xlsx(),
        };
        for (at, value) in changes {
            let at = at.index(bytes.len());
            bytes[at] = value;
        }
        if cut_it {
            bytes.truncate(cut.index(bytes.len()));
        }
        if let Ok(names) = sheet_names(&bytes) {
            for name in names {
                let _ = sheet_text(&bytes, &name);
            }
        }
    }

    /// Arbitrary text as a sheet part (stored, so the XML scanner sees it
    /// as it is) never panics.
    #[test]
    fn arbitrary_sheet_xml_never_panics(body in "(<[a-z:]{0,4}( r=\"[A-Z]{0,2}[0-9]{0,3}\"| t=\"[a-z]{0,3}\"| s=\"[0-9]\")*/?>|</[a-z:]{0,4}>|[0-9a-z&;#.<>\" ]{0,6}){0,40}") {
        let sheet = format!("<worksheet><sheetData>{body}</sheetData></worksheet>");
        let bytes = stored_zip(&[("xl/_rels/workbook.xml.rels", RELS), ("xl/workbook.xml", WORKBOOK), ("xl/worksheets/sheet1.xml", &sheet), ("xl/sharedStrings.xml", STRINGS), ("xl/styles.xml", STYLES)]);
        let _ = sheet_text(&bytes, "Hand & made");
        let ods = ods_with(&format!("<table:table table:name=\"S\">{body}</table:table>"));
        let _ = sheet_text(&ods, "S");
    }
}
