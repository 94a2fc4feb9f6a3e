//! Layouts of a plate: what each trace (well) is. Two forms are read to the
//! same [`LayoutCells`]:
//!
//! - the **list**: a header (`trace`, `S (µM)`, `I (nM)`, `E (nM)`, `role`,
//!   `blank`) and one line per trace;
//! - the **plate map**: one grid per property, each a title line naming the
//!   property with its unit (`S (µM)`, `I (nM)`, `E (nM)`, `role`,
//!   `blank`), a row of column numbers counting from 1 (up to 12 for 96
//!   wells, 24 for 384), then rows lettered A–H (A–P). The title may also
//!   stand in the first cell of the column-number row. A well is named by
//!   its letter and number (`A1`, `H12`); a well that is empty in every
//!   grid is not part of the layout.
//!
//! Every cell keeps its own line and column, so a problem in a plate map
//! names the grid's cell, not a row of some translated list. The plate-map
//! shape is common practice, no source.

use crate::error::Error;
use crate::table::{outside_quotes, parse_heading, split_line, ColumnHeading, InputProblem, NumberStyle, Separator, StyleVotes};

/// One cell of a layout with where it stands in the text (1-based).
#[derive(Clone, Debug, PartialEq)]
pub struct PlacedCell {
    /// The cell's text, trimmed.
    pub text: String,
    /// Input line.
    pub line: usize,
    /// Input column.
    pub column: usize,
}

/// One trace of a layout: its name cell and one cell per heading.
#[derive(Clone, Debug, PartialEq)]
pub struct LayoutEntry {
    /// The line the entry is reported at (the list line, or the line of
    /// the well's first non-empty grid cell).
    pub line: usize,
    /// The trace name (a well such as `A1` in a plate map).
    pub name: PlacedCell,
    /// One cell per heading of [`LayoutCells::headings`], `None` where the
    /// layout gives nothing.
    pub cells: Vec<Option<PlacedCell>>,
}

/// A layout as headings and placed cells, whichever form it was written in.
#[derive(Clone, Debug, PartialEq)]
pub struct LayoutCells {
    /// The line of the list's header or of the first grid's title.
    pub header_line: usize,
    /// The properties (`S (µM)`, `role`, ...), without the trace column.
    pub headings: Vec<ColumnHeading>,
    /// Each heading's line (the list's header, or the grid's title).
    pub heading_lines: Vec<usize>,
    /// Each heading's number style (per list column, per grid).
    pub styles: Vec<NumberStyle>,
    /// The traces, in the order written (plate maps: row by row, A1, A2,
    /// ..., B1, ...).
    pub entries: Vec<LayoutEntry>,
    /// Whether the layout was a plate map.
    pub plate_map: bool,
}

/// Names of the trace column of a list layout.
const TRACE_NAMES: &[&str] = &["trace", "well", "name", "label", "column"];

fn normalise(name: &str) -> String {
    name.chars().filter(|c| !matches!(c, '[' | ']' | ' ' | '_' | '-' | '.' | ':')).flat_map(char::to_lowercase).collect()
}

fn separator_of(lines: &[(usize, &str)]) -> Separator {
    for (sep, which) in [('\t', Separator::Tab), (';', Separator::Semicolon), (',', Separator::Comma)] {
        if lines.iter().any(|(_, l)| outside_quotes(l).contains(sep)) {
            return which;
        }
    }
    Separator::Whitespace
}

fn split(lines: &[(usize, &str)], problems: &mut Vec<InputProblem>) -> Vec<(usize, Vec<String>)> {
    let separator = separator_of(lines);
    lines
        .iter()
        .map(|(n, l)| {
            let (cells, open_quote) = split_line(l, separator);
            if let Some(column) = open_quote {
                problems.push(InputProblem {
                    line: *n,
                    column: Some(column),
                    message: "a quote opened in this cell is not closed on the line; the rest of the line was read as the cell".to_string(),
                });
            }
            (*n, cells.iter().map(|c| c.trim().to_string()).collect())
        })
        .collect()
}

/// The column numbers of a plate map's number row, when `cells` (after the
/// first, which is empty or the grid's title) count 1, 2, 3, ... with at
/// least two columns and at most 24.
fn column_numbers(cells: &[String]) -> Option<usize> {
    let numbers = &cells[1.min(cells.len())..];
    let count = numbers.len();
    ((2..=24).contains(&count) && numbers.iter().enumerate().all(|(k, c)| c.parse::<usize>().ok() == Some(k + 1))).then_some(count)
}

/// The row index (A = 0) of a plate row label.
fn row_letter(cell: &str) -> Option<usize> {
    let mut chars = cell.chars();
    match (chars.next(), chars.next()) {
        (Some(c), None) if c.is_ascii_alphabetic() => Some((c.to_ascii_uppercase() as u8 - b'A') as usize),
        _ => None,
    }
}

/// Reads a layout in either form. `text` has `\n` line ends (the decoder's
/// output); comment lines (`#`) and blank lines separate nothing but grids.
pub fn read_layout_cells(text: &str, problems: &mut Vec<InputProblem>) -> Result<LayoutCells, Error> {
    let lines: Vec<(usize, &str)> = text
        .split('\n')
        .enumerate()
        .map(|(i, l)| (i + 1, l.strip_suffix('\r').unwrap_or(l)))
        .filter(|(_, l)| !l.trim().is_empty() && !crate::table::is_comment_line(l))
        .collect();
    let Some(&(header_line, _)) = lines.first() else {
        return Err(Error::invalid_data("the layout table is empty; it needs a header such as 'trace\\tS (µM)\\trole', or a plate map"));
    };
    let rows = split(&lines, problems);
    let first_is_list = rows[0].1.iter().any(|c| TRACE_NAMES.contains(&normalise(&parse_heading(c).name).as_str()));
    if !first_is_list && rows.iter().any(|(_, cells)| column_numbers(cells).is_some()) {
        return read_plate(&rows, problems);
    }
    read_list(&rows, header_line)
}

fn read_list(rows: &[(usize, Vec<String>)], header_line: usize) -> Result<LayoutCells, Error> {
    let all: Vec<ColumnHeading> = rows[0].1.iter().map(|c| parse_heading(c)).collect();
    let trace = all.iter().position(|h| TRACE_NAMES.contains(&normalise(&h.name).as_str())).ok_or_else(|| {
        Error::invalid_data(format!(
            "line {header_line}: the layout needs a 'trace' (or 'well') column naming each trace, or the form of a plate map (a title such as 'S (µM)', a row of column numbers 1, 2, 3, ..., then rows lettered A, B, C, ...)"
        ))
    })?;
    let columns: Vec<usize> = (0..all.len()).filter(|c| *c != trace).collect();
    let mut votes = StyleVotes::default();
    for (_, cells) in &rows[1..] {
        for (k, &c) in columns.iter().enumerate() {
            if let Some(cell) = cells.get(c) {
                votes.add(k, cell);
            }
        }
    }
    let styles = (0..columns.len()).map(|k| votes.style(k)).collect();
    let place = |line: usize, cells: &[String], c: usize| {
        cells.get(c).filter(|t| !t.is_empty()).map(|t| PlacedCell { text: t.clone(), line, column: c + 1 })
    };
    let entries = rows[1..]
        .iter()
        .map(|(line, cells)| LayoutEntry {
            line: *line,
            name: place(*line, cells, trace).unwrap_or(PlacedCell { text: String::new(), line: *line, column: trace + 1 }),
            cells: columns.iter().map(|&c| place(*line, cells, c)).collect(),
        })
        .collect();
    Ok(LayoutCells {
        header_line,
        headings: columns.iter().map(|&c| all[c].clone()).collect(),
        heading_lines: vec![header_line; columns.len()],
        styles,
        entries,
        plate_map: false,
    })
}

fn read_plate(rows: &[(usize, Vec<String>)], problems: &mut Vec<InputProblem>) -> Result<LayoutCells, Error> {
    // Grids: (title heading, title line, column count, rows of (line, letter, cells)).
    struct Grid {
        title: ColumnHeading,
        line: usize,
        columns: usize,
        rows: Vec<(usize, usize, Vec<String>)>,
    }
    let mut grids: Vec<Grid> = Vec::new();
    let mut pending_title: Option<(usize, String)> = None;
    let mut in_grid = false;
    for (line, cells) in rows {
        if cells.is_empty() {
            continue;
        }
        let letter = cells.first().and_then(|c| row_letter(c));
        // Inside a grid, a lettered row is data even when its cells count
        // 1, 2, 3 (a dilution series).
        let data_row = in_grid && letter.is_some() && cells.len() > 1;
        if let (false, Some(count)) = (data_row, column_numbers(cells)) {
            let title = if cells[0].is_empty() { pending_title.take() } else { Some((*line, cells[0].clone())) };
            let Some((title_line, title)) = title else {
                return Err(Error::invalid_data(format!(
                    "line {line}: a row of plate column numbers with no title above it; put the property with its unit (such as 'S (µM)' or 'role') on the line above"
                )));
            };
            pending_title = None;
            grids.push(Grid { title: parse_heading(&title), line: title_line, columns: count, rows: Vec::new() });
            in_grid = true;
            continue;
        }
        match (data_row, letter) {
            (true, Some(letter)) => {
                let grid = grids.last_mut().expect("in a grid");
                let limit = if grid.columns > 12 { 16 } else { 8 };
                if letter >= limit {
                    problems.push(InputProblem {
                        line: *line,
                        column: Some(1),
                        message: format!("row '{}' is beyond the plate's last row {} ({} columns); the line was not used", cells[0], (b'A' + limit as u8 - 1) as char, grid.columns),
                    });
                } else if grid.rows.iter().any(|(_, l, _)| *l == letter) {
                    problems.push(InputProblem { line: *line, column: Some(1), message: format!("row '{}' appears twice in this grid; the second was not used", cells[0]) });
                } else {
                    if cells.len() - 1 > grid.columns {
                        problems.push(InputProblem {
                            line: *line,
                            column: Some(grid.columns + 2),
                            message: format!("the grid has {} columns; the cells after column {} were not used", grid.columns, grid.columns),
                        });
                    }
                    grid.rows.push((*line, letter, cells.clone()));
                }
            }
            _ if cells.len() == 1 || cells[1..].iter().all(String::is_empty) => {
                if let Some((title_line, title)) = pending_title.replace((*line, cells[0].clone())) {
                    problems.push(InputProblem { line: title_line, column: Some(1), message: format!("'{title}' is followed by no grid; it was not used") });
                }
                in_grid = false;
            }
            _ => {
                problems.push(InputProblem {
                    line: *line,
                    column: Some(1),
                    message: format!("expected a plate row letter (A–P), a grid title or a row of column numbers, found '{}'; the line was not used", cells[0]),
                });
            }
        }
    }
    if let Some((line, title)) = pending_title {
        problems.push(InputProblem { line, column: Some(1), message: format!("'{title}' is followed by no grid; it was not used") });
    }
    let mut headings: Vec<ColumnHeading> = Vec::new();
    let mut kept: Vec<&Grid> = Vec::new();
    for grid in &grids {
        if headings.iter().any(|h| normalise(&h.name) == normalise(&grid.title.name)) {
            problems.push(InputProblem { line: grid.line, column: Some(1), message: format!("a second grid for '{}'; it was not used", grid.title.name) });
            continue;
        }
        headings.push(grid.title.clone());
        kept.push(grid);
    }
    let styles = kept
        .iter()
        .map(|g| {
            let mut votes = StyleVotes::default();
            g.rows.iter().flat_map(|(_, _, cells)| cells[1..].iter()).for_each(|c| votes.add(0, c));
            votes.style(0)
        })
        .collect();
    // Wells row by row, column by column; a well is in the layout when any
    // grid gives it a cell.
    let mut entries = Vec::new();
    for letter in 0..16 {
        for number in 1..=24 {
            let cells: Vec<Option<PlacedCell>> = kept
                .iter()
                .map(|g| {
                    let (line, _, cells) = g.rows.iter().find(|(_, l, _)| *l == letter)?;
                    let text = cells.get(number).filter(|t| !t.is_empty() && number <= g.columns)?;
                    Some(PlacedCell { text: text.clone(), line: *line, column: number + 1 })
                })
                .collect();
            let Some(first) = cells.iter().flatten().next() else { continue };
            let name = format!("{}{number}", (b'A' + letter as u8) as char);
            let (line, column) = (first.line, 1);
            entries.push(LayoutEntry { line, name: PlacedCell { text: name, line, column }, cells });
        }
    }
    Ok(LayoutCells {
        header_line: kept.first().map_or(rows[0].0, |g| g.line),
        headings,
        heading_lines: kept.iter().map(|g| g.line).collect(),
        styles,
        entries,
        plate_map: true,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An invented plate map (not from any instrument) with two grids, one
    /// with its title in the number row, and the list it stands for.
    #[test]
    fn plate_map_reads_as_its_list() {
        let plate = "S (µM)\n\t1\t2\t3\nA\t100\t100\t\nB\t50\t50\t\n\nrole\t1\t2\t3\nA\tsample\tsample\tblank\nB\tsample\tno-enzyme\n";
        let mut problems = Vec::new();
        let cells = read_layout_cells(plate, &mut problems).unwrap();
        assert!(problems.is_empty(), "{problems:?}");
        assert!(cells.plate_map);
        assert_eq!(cells.headings.iter().map(|h| (h.name.as_str(), h.unit.as_deref())).collect::<Vec<_>>(), [("S", Some("µM")), ("role", None)]);
        let names: Vec<&str> = cells.entries.iter().map(|e| e.name.text.as_str()).collect();
        assert_eq!(names, ["A1", "A2", "A3", "B1", "B2"]);
        let a3 = &cells.entries[2];
        assert_eq!(a3.cells[0], None);
        assert_eq!(a3.cells[1], Some(PlacedCell { text: "blank".into(), line: 7, column: 4 }));
        assert_eq!(cells.entries[3].cells[0], Some(PlacedCell { text: "50".into(), line: 4, column: 2 }));
    }

    #[test]
    fn plate_map_problems_name_line_and_column() {
        let check = |text: &str, expected: &[&str]| {
            let mut problems = Vec::new();
            let _ = read_layout_cells(text, &mut problems);
            assert_eq!(problems.iter().map(ToString::to_string).collect::<Vec<_>>(), expected, "{text:?}");
        };
        check("S (µM)\n\t1\t2\nA\t1\t2\t3\nI\t5\t5\n", &[
            "line 3, column 4: the grid has 2 columns; the cells after column 2 were not used",
            "line 4, column 1: row 'I' is beyond the plate's last row H (2 columns); the line was not used",
        ]);
        check("S (µM)\n\t1\t2\nA\t1\t2\nA\t3\t4\nrole\n", &[
            "line 4, column 1: row 'A' appears twice in this grid; the second was not used",
            "line 5, column 1: 'role' is followed by no grid; it was not used",
        ]);
        let mut problems = Vec::new();
        let error = read_layout_cells("\t1\t2\nA\t1\t2\n", &mut problems).unwrap_err();
        assert!(error.message.starts_with("line 1: a row of plate column numbers with no title"), "{}", error.message);
        let error = read_layout_cells("S\tv\n1\t2\n", &mut problems).unwrap_err();
        assert!(error.message.contains("needs a 'trace'"), "{}", error.message);
    }
}
