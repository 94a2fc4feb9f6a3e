//! A profile table: one condition column (pH, temperature) and one value
//! column (a rate or a rate constant), with an optional `sd` column, read
//! by name through [`crate::read::columns`].
//!
//! With a header, the condition column is the one its test accepts; the
//! value column is the one named in the request, else the only heading the
//! value test accepts, else (in a two-column table) the other column, said
//! in a note. Several candidate value columns with none chosen is an error
//! that lists them: a table of kcat and kcat/Km is two profiles, and which
//! one to fit is the scientist's choice. Without a header, column 1 is the
//! condition and column 2 the value, said in a note. Every row that cannot
//! be read whole becomes a problem at its line (and column, when one cell is
//! to blame); nothing is dropped silently.

use crate::error::Error;
use crate::read::columns::{is_sd_name, normalise_name};
use crate::table::{parse_table, ColumnHeading, InputProblem};

/// Where the columns are and how they are headed.
#[derive(Clone, Debug, PartialEq)]
pub struct ProfileColumns {
    /// 0-based column of the condition (pH, temperature).
    pub condition: usize,
    /// 0-based column of the value.
    pub value: usize,
    /// 0-based column of the standard deviations, when there is one.
    pub sd: Option<usize>,
    /// The condition's heading (name and unit), when the table has a header.
    pub condition_heading: Option<ColumnHeading>,
    /// The value's heading, when the table has a header.
    pub value_heading: Option<ColumnHeading>,
    /// The line of the header (1-based), when there is one.
    pub header_line: Option<usize>,
}

/// One row read whole.
#[derive(Clone, Debug, PartialEq)]
pub struct ProfileRow {
    /// Input line, from 1.
    pub line: usize,
    /// The condition (as written, in the heading's unit).
    pub condition: f64,
    /// The value.
    pub value: f64,
    /// The standard deviation, when the table has an sd column.
    pub sd: Option<f64>,
}

/// The table read: columns, rows, problems and notes on how it was read.
#[derive(Clone, Debug, PartialEq)]
pub struct ProfileTable {
    /// The columns used.
    pub columns: ProfileColumns,
    /// Rows with every needed cell read, in input order.
    pub rows: Vec<ProfileRow>,
    /// Cells that could not be read and rows left out, by line and column.
    pub problems: Vec<InputProblem>,
    /// How the table was read.
    pub notes: Vec<String>,
}

/// What the caller's table holds: the two roles' tests and their names in
/// messages.
pub struct ProfileRoles<'a> {
    /// Whether a heading names the condition (`pH`).
    pub is_condition: &'a dyn Fn(&str) -> bool,
    /// Whether a heading names a value (`kcat`, `v`).
    pub is_value: &'a dyn Fn(&str) -> bool,
    /// The condition in words (`pH`, `temperature`).
    pub condition: &'a str,
    /// The value in words (`rate or rate constant`).
    pub value: &'a str,
}

/// Reads `text` as a profile table; `column` names the value column's
/// heading (case and spacing ignored) when the table has several.
pub fn read_profile(text: &str, roles: &ProfileRoles, column: Option<&str>) -> Result<ProfileTable, Error> {
    let table = parse_table(text);
    if table.rows.is_empty() {
        return Err(Error::invalid_data(format!(
            "no data rows found; paste a table with the {} in one column and the {} in another",
            roles.condition, roles.value
        )));
    }
    let mut notes = Vec::new();
    let header_line = table.headings.as_ref().and_then(|_| {
        let first_data = table.rows.first().map(|r| r.line).unwrap_or(1);
        let before: Vec<&str> = text.split('\n').take(first_data.saturating_sub(1)).collect();
        before.iter().enumerate().rev().find_map(|(i, l)| {
            let l = l.trim();
            (!l.is_empty() && !crate::table::is_comment_line(l)).then_some(i + 1)
        })
    });
    let columns = match &table.headings {
        Some(headings) => {
            let listed = || headings.iter().map(|h| format!("'{}'", h.name)).collect::<Vec<_>>().join(", ");
            let condition = headings.iter().position(|h| (roles.is_condition)(&h.name)).ok_or_else(|| {
                Error::invalid_data(format!("no column is headed as the {}; the headings are: {}", roles.condition, listed()))
            })?;
            let sd = headings.iter().position(|h| is_sd_name(&h.name));
            let value = match column {
                Some(wanted) => {
                    let wanted_name = normalise_name(&crate::table::parse_heading(wanted).name);
                    headings
                        .iter()
                        .enumerate()
                        .position(|(i, h)| i != condition && normalise_name(&h.name) == wanted_name)
                        .ok_or_else(|| Error::invalid_option(format!("no column is headed '{wanted}'; the headings are: {}", listed())))?
                }
                None => {
                    let candidates: Vec<usize> = (0..headings.len())
                        .filter(|&i| i != condition && Some(i) != sd && (roles.is_value)(&headings[i].name))
                        .collect();
                    match candidates.as_slice() {
                        [one] => *one,
                        [] => {
                            let others: Vec<usize> = (0..headings.len()).filter(|&i| i != condition && Some(i) != sd).collect();
                            if others.len() != 1 {
                                return Err(Error::invalid_data(format!(
                                    "no column is headed as a {} (such as kcat, kcat/Km, k or v); the headings are: {}",
                                    roles.value,
                                    listed()
                                )));
                            }
                            notes.push(format!(
                                "Column {} ('{}') is read as the {}.",
                                others[0] + 1,
                                headings[others[0]].name,
                                roles.value
                            ));
                            others[0]
                        }
                        several => {
                            return Err(Error::invalid_option(format!(
                                "several columns could be the {}: {}; choose one by its heading",
                                roles.value,
                                several.iter().map(|&i| format!("'{}'", headings[i].name)).collect::<Vec<_>>().join(", ")
                            )))
                        }
                    }
                }
            };
            ProfileColumns {
                condition,
                value,
                sd,
                condition_heading: Some(headings[condition].clone()),
                value_heading: Some(headings[value].clone()),
                header_line,
            }
        }
        None => {
            if column.is_some() {
                return Err(Error::invalid_option("a value column was chosen by its heading, but the table has no header row"));
            }
            if table.width < 2 {
                return Err(Error::invalid_data(format!("the table needs two columns: the {} then the {}", roles.condition, roles.value)));
            }
            notes.push(format!("No header row: column 1 is read as the {} and column 2 as the {}.", roles.condition, roles.value));
            ProfileColumns { condition: 0, value: 1, sd: None, condition_heading: None, value_heading: None, header_line: None }
        }
    };
    let needed: Vec<usize> = [Some(columns.condition), Some(columns.value), columns.sd].into_iter().flatten().collect();
    // Problems in columns the analysis does not read are not problems of it.
    let mut problems: Vec<InputProblem> =
        table.problems.iter().filter(|p| p.column.is_none_or(|c| needed.contains(&(c - 1)))).cloned().collect();
    let mut rows = Vec::new();
    for row in &table.rows {
        let cell = |c: usize| row.cells.get(c).copied().flatten();
        match (cell(columns.condition), cell(columns.value)) {
            (Some(condition), Some(value)) => {
                let sd = columns.sd.and_then(cell);
                if columns.sd.is_some() && sd.is_none() && !problems.iter().any(|p| p.line == row.line) {
                    problems.push(InputProblem {
                        line: row.line,
                        column: columns.sd.map(|c| c + 1),
                        message: "the standard deviation is missing".into(),
                    });
                }
                rows.push(ProfileRow { line: row.line, condition, value, sd });
            }
            (condition, _) => {
                if !problems.iter().any(|p| p.line == row.line) {
                    let (column, what) = if condition.is_none() {
                        (columns.condition, roles.condition)
                    } else {
                        (columns.value, roles.value)
                    };
                    problems.push(InputProblem {
                        line: row.line,
                        column: Some(column + 1),
                        message: format!("the {what} is missing; the row was left out"),
                    });
                }
            }
        }
    }
    problems.sort_by_key(|p| (p.line, p.column));
    Ok(ProfileTable { columns, rows, problems, notes })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::read::columns::{is_ph_name, is_rate_constant_name};

    fn roles() -> ProfileRoles<'static> {
        ProfileRoles { is_condition: &is_ph_name, is_value: &is_rate_constant_name, condition: "pH", value: "rate or rate constant" }
    }

    /// Tables as data: the value column found, or the error's key words.
    #[test]
    fn columns_by_name() {
        let ok: &[(&str, Option<&str>, usize, Option<usize>)] = &[
            ("pH\tkcat (s-1)\n6\t1\n7\t2\n", None, 1, None),
            ("kcat (s-1)\tpH\n1\t6\n2\t7\n", None, 0, None),
            ("pH\tactivity\n6\t1\n7\t2\n", None, 1, None),
            ("pH\tkcat (s-1)\tkcat/Km (M-1 s-1)\n6\t1\t5\n", Some("kcat/Km"), 2, None),
            ("pH\tkcat (s-1)\tsd\n6\t1\t0.1\n", None, 1, Some(2)),
        ];
        for &(text, column, value, sd) in ok {
            let t = read_profile(text, &roles(), column).unwrap();
            assert_eq!((t.columns.value, t.columns.sd), (value, sd), "{text}");
            assert_eq!(t.columns.header_line, Some(1));
        }
        let bad: &[(&str, Option<&str>, &str)] = &[
            ("pH\tkcat (s-1)\tkcat/Km (M-1 s-1)\n6\t1\t5\n", None, "several columns"),
            ("x\ty\n6\t1\n", None, "no column is headed as the pH"),
            ("pH\tkcat\n6\t1\n", Some("kobs"), "no column is headed 'kobs'"),
            ("pH\ta\tb\n6\t1\t2\n", None, "no column is headed as a rate"),
        ];
        for &(text, column, words) in bad {
            let e = read_profile(text, &roles(), column).unwrap_err();
            assert!(e.message.contains(words), "{text}: {}", e.message);
        }
    }

    /// A row with a missing or unreadable cell is a problem at its line and
    /// column; an unreadable cell in a column not read is none.
    #[test]
    fn problems_by_line_and_column() {
        let t = read_profile("# note\npH\tkcat\tremark\n6\t1\tx\n7\t\n8\tabc\n9\t4\n", &roles(), None).unwrap();
        assert_eq!(t.columns.header_line, Some(2));
        assert_eq!(t.rows.iter().map(|r| r.line).collect::<Vec<_>>(), [3, 6]);
        let at: Vec<(usize, Option<usize>)> = t.problems.iter().map(|p| (p.line, p.column)).collect();
        assert!(at.contains(&(4, Some(2))) || at.contains(&(4, None)), "{:?}", t.problems);
        assert!(at.contains(&(5, Some(2))), "{:?}", t.problems);
        assert!(!at.iter().any(|&(l, _)| l == 3), "{:?}", t.problems);
    }
}
