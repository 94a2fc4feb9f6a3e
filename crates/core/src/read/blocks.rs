//! Where the kinetic tables are in an instrument export: run information
//! (dates, clock times, temperatures, wavelengths, `key: value` lines)
//! above and between tables is skipped, and every table found is listed so
//! the person can choose one.
//!
//! The rules are data: [`HEADER_RULES`] lists what a header line must be,
//! each with the sentence given when a line is rejected. A **data line**
//! has at least two cells and a first cell that is a number or a clock
//! time. A **header** is a line that passes every rule and stands right
//! above a data line (or, when no line does, the first line whose first
//! cell names the time and that passes the other rules: a header with no
//! rows yet). A table runs from its header to the last line before a line
//! that is neither data nor a bad row (a line shaped like the table's rows,
//! followed by data, whose cells after the first are numbers). These rules
//! are common practice, no source.

use serde::Serialize;

/// What the block finder needs to know about cells.
pub struct CellKinds<'a> {
    /// Whether a heading names the time (`time`, `t`, `elapsed`, ...).
    pub is_time_name: &'a dyn Fn(&str) -> bool,
    /// Whether a cell is a number.
    pub is_number: &'a dyn Fn(&str) -> bool,
    /// Whether a cell is a clock time (`0:01:30`, `14:22:05`).
    pub is_clock: &'a dyn Fn(&str) -> bool,
}

/// One rule a header line must pass, with the reason given when it fails.
pub struct HeaderRule {
    /// Why a line failing the rule is not the header.
    pub reason: &'static str,
    /// The test, given the line's cells.
    pub passes: fn(&[&str], &CellKinds) -> bool,
}

/// The header rules, in the order they are tried.
pub const HEADER_RULES: &[HeaderRule] = &[
    HeaderRule { reason: "it has only one cell (a header has the time, then one column per trace)", passes: |cells, _| cells.len() >= 2 },
    HeaderRule {
        reason: "its first cell is a number or a clock time, so it is a row of data",
        passes: |cells, k| !((k.is_number)(cells[0]) || (k.is_clock)(cells[0])),
    },
    HeaderRule {
        reason: "a cell after the first is a clock time or a date, as in a run-information line ('Time 14:22:05'), not a trace name",
        passes: |cells, k| !cells[1..].iter().any(|c| (k.is_clock)(c) || is_date(c)),
    },
    HeaderRule {
        reason: "the cells after the first are all numbers, as in a run-information line ('Temperature 25.0'), not trace names",
        passes: |cells, k| !cells[1..].iter().filter(|c| !c.trim().is_empty()).all(|c| (k.is_number)(c)),
    },
];

/// Whether a cell is a date such as `2026-03-14`, `14/03/2026` or
/// `14.03.2026`.
fn is_date(cell: &str) -> bool {
    let parts: Vec<&str> = cell.trim().split(['-', '/', '.']).collect();
    parts.len() == 3 && parts.iter().all(|p| !p.is_empty() && p.len() <= 4 && p.chars().all(|c| c.is_ascii_digit())) && parts.iter().any(|p| p.len() == 4)
}

/// The first rule `cells` fails, if any.
pub fn header_rejection(cells: &[&str], kinds: &CellKinds) -> Option<&'static str> {
    HEADER_RULES.iter().find(|rule| !(rule.passes)(cells, kinds)).map(|rule| rule.reason)
}

/// A data line: two or more cells, the first a number or a clock time.
pub fn is_data(cells: &[&str], kinds: &CellKinds) -> bool {
    cells.len() >= 2 && ((kinds.is_number)(cells[0]) || (kinds.is_clock)(cells[0]))
}

/// A table found in the text: indices into the lines given (the header,
/// and one past the last row).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct BlockSpan {
    /// Index of the header line.
    pub header: usize,
    /// One past the index of the last row.
    pub end: usize,
}

/// A kinetic table as listed to the person.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct KineticBlock {
    /// Its number, counting from 1 (what `block` chooses).
    pub number: usize,
    /// The line of its header.
    pub header_line: usize,
    /// The line of its last row.
    pub last_line: usize,
    /// The nearest run-information line above it (`Read 2: 405 nm`), if
    /// any, to tell the tables apart.
    pub title: Option<String>,
    /// Its trace headings after the time column.
    pub columns: usize,
    /// Its rows.
    pub rows: usize,
}

/// Every table of `lines` (line number, cells), and the lines that were
/// tried as a header and rejected, with the reason.
pub fn find_blocks(lines: &[(usize, Vec<&str>)], kinds: &CellKinds) -> (Vec<BlockSpan>, Vec<(usize, &'static str)>) {
    let mut blocks = Vec::new();
    let mut rejected = Vec::new();
    let mut index = 0;
    while index < lines.len() {
        let cells = &lines[index].1;
        let followed_by_data = lines.get(index + 1).is_some_and(|(_, next)| is_data(next, kinds));
        if is_data(cells, kinds) || !followed_by_data {
            if !is_data(cells, kinds) && cells.len() >= 2 && (kinds.is_time_name)(cells[0]) {
                if let Some(reason) = header_rejection(cells, kinds) {
                    rejected.push((lines[index].0, reason));
                }
            }
            index += 1;
            continue;
        }
        if let Some(reason) = header_rejection(cells, kinds) {
            rejected.push((lines[index].0, reason));
            index += 1;
            continue;
        }
        let width = cells.len();
        let mut end = index + 1;
        while end < lines.len() {
            let row = &lines[end].1;
            let next_is_data = lines.get(end + 1).is_some_and(|(_, next)| is_data(next, kinds));
            // A bad row inside the table: shaped like a row (same width or
            // numbers after its first cell) and followed by data.
            let bad_row = next_is_data && row.len() >= 2 && header_rejection(row, kinds).is_some() && (row.len() == width || row[1..].iter().all(|c| (kinds.is_number)(c)));
            let trailing_bad_row = end + 1 == lines.len() && row.len() == width && row[1..].iter().any(|c| (kinds.is_number)(c));
            if is_data(row, kinds) || bad_row || trailing_bad_row {
                end += 1;
            } else {
                break;
            }
        }
        blocks.push(BlockSpan { header: index, end });
        index = end;
    }
    if blocks.is_empty() {
        // A header with no rows yet: the first line naming the time that
        // passes the rules.
        if let Some(index) = lines.iter().position(|(_, c)| c.len() >= 2 && (kinds.is_time_name)(c[0]) && header_rejection(c, kinds).is_none()) {
            blocks.push(BlockSpan { header: index, end: lines.len() });
        }
    }
    (blocks, rejected)
}

/// The listing of `blocks` for the person.
pub fn describe(lines: &[(usize, Vec<&str>)], blocks: &[BlockSpan]) -> Vec<KineticBlock> {
    blocks
        .iter()
        .enumerate()
        .map(|(k, span)| {
            let floor = if k == 0 { 0 } else { blocks[k - 1].end };
            let title = (floor..span.header).next_back().map(|i| lines[i].1.iter().filter(|c| !c.trim().is_empty()).copied().collect::<Vec<_>>().join(" "));
            KineticBlock {
                number: k + 1,
                header_line: lines[span.header].0,
                last_line: lines[span.end.max(span.header + 1) - 1].0,
                title,
                columns: lines[span.header].1.len() - 1,
                rows: span.end - span.header - 1,
            }
        })
        .collect()
}

/// A transposed export (rows are traces, columns are times) rewritten as
/// a table with the time down the first column, and the way back from its
/// cells to the export's.
#[derive(Clone, Debug, PartialEq)]
pub struct Transposed {
    /// The table with time in rows: tab-separated, one line per time.
    pub text: String,
    /// The export's line of the time row (row 1 of `text`), then of each
    /// trace row (column 2, 3, ... of `text`).
    pub source_lines: Vec<usize>,
}

impl Transposed {
    /// Where the cell at `line`, `column` (1-based) of [`Transposed::text`]
    /// stands in the export; a whole line of the text (`column` `None`)
    /// is one time, a column of the export's time row.
    pub fn place(&self, line: usize, column: Option<usize>) -> (usize, Option<usize>) {
        match column {
            Some(c) => (self.source_lines.get(c - 1).copied().unwrap_or(self.source_lines[0]), Some(line)),
            None => (self.source_lines[0], Some(line)),
        }
    }
}

/// Names of the first cell of a transposed export's time row when it does
/// not name the time itself.
const TRACE_WORDS: &[&str] = &["well", "wells", "trace", "traces", "sample", "name", "well/time", "trace/time"];

/// A transposed export in `lines`: a time row (a first cell naming the
/// time with its unit, or the wells, then two or more numbers or clock
/// times) followed by rows whose first cell is a trace name. `None` when
/// the lines are not in that shape.
pub fn transposed(lines: &[(usize, Vec<&str>)], kinds: &CellKinds) -> Option<Transposed> {
    let start = lines.iter().position(|(_, cells)| {
        let word = cells.first().map(|c| c.trim().to_lowercase()).unwrap_or_default();
        cells.len() >= 3
            && ((kinds.is_time_name)(cells[0]) || TRACE_WORDS.contains(&word.as_str()))
            && cells[1..].iter().all(|c| (kinds.is_number)(c) || (kinds.is_clock)(c))
    })?;
    let width = lines[start].1.len();
    let rows: Vec<&(usize, Vec<&str>)> = lines[start + 1..]
        .iter()
        .take_while(|(_, cells)| cells.len() >= 2 && !(kinds.is_number)(cells[0]) && !(kinds.is_clock)(cells[0]) && cells.len() <= width)
        .collect();
    if rows.is_empty() {
        return None;
    }
    let first = lines[start].1[0].trim();
    let time_heading = if (kinds.is_time_name)(first) { first.to_string() } else { "time".to_string() };
    let mut text = time_heading;
    for (_, cells) in &rows {
        text.push('\t');
        text.push_str(cells[0].trim());
    }
    text.push('\n');
    for column in 1..width {
        text.push_str(lines[start].1[column].trim());
        for (_, cells) in &rows {
            text.push('\t');
            text.push_str(cells.get(column).map_or("", |c| c.trim()));
        }
        text.push('\n');
    }
    let mut source_lines = vec![lines[start].0];
    source_lines.extend(rows.iter().map(|(line, _)| *line));
    Some(Transposed { text, source_lines })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn kinds() -> CellKinds<'static> {
        CellKinds {
            is_time_name: &|c| matches!(c.trim().to_lowercase().split(' ').next(), Some("time" | "t")),
            is_number: &|c| c.trim().parse::<f64>().is_ok(),
            is_clock: &|c| c.contains(':') && c.split(':').all(|p| p.trim().parse::<f64>().is_ok()),
        }
    }

    fn lines(text: &str) -> Vec<(usize, Vec<&str>)> {
        text.lines().enumerate().filter(|(_, l)| !l.trim().is_empty()).map(|(i, l)| (i + 1, l.split('\t').collect())).collect()
    }

    /// Each rule with a line it rejects.
    #[test]
    fn header_rules_reject_run_information() {
        let cases: [(&[&str], Option<&str>); 5] = [
            (&["Time", "14:22:05"], Some("clock time or a date")),
            (&["Date", "2026-03-14"], Some("clock time or a date")),
            (&["Temperature", "25.0"], Some("all numbers")),
            (&["Plate 1"], Some("only one cell")),
            (&["Time (s)", "A1", "A2"], None),
        ];
        for (cells, expected) in cases {
            let found = header_rejection(cells, &kinds());
            assert_eq!(found.is_some(), expected.is_some(), "{cells:?}");
            if let (Some(found), Some(expected)) = (found, expected) {
                assert!(found.contains(expected), "{cells:?}: {found}");
            }
        }
    }

    #[test]
    fn blocks_are_found_between_run_information() {
        let text = "Run\tdemo\nTime\t14:22:05\nRead 1: 340 nm\nTime (s)\tA1\tA2\n0\t1\t2\n30\t1.1\t2.2\nx\t1\t2\n60\t1.2\t2.4\nEnd time\t14:30:00\nRead 2: 405 nm\nTime (s)\tA1\tA2\n0\t3\t4\n30\t3.1\t4.2\n";
        let lines = lines(text);
        let (blocks, rejected) = find_blocks(&lines, &kinds());
        assert_eq!(blocks.len(), 2);
        let listed = describe(&lines, &blocks);
        assert_eq!(listed.iter().map(|b| (b.header_line, b.last_line, b.rows, b.title.as_deref())).collect::<Vec<_>>(), [
            (4, 8, 4, Some("Read 1: 340 nm")),
            (11, 13, 2, Some("Read 2: 405 nm")),
        ]);
        assert_eq!(rejected.iter().map(|r| r.0).collect::<Vec<_>>(), [2]);
    }
}
