//! Replicates in columns: a table whose first column is a concentration and
//! whose other columns are repeated measurements at that concentration.
//!
//! A heading is a replicate heading when it is a measurement name followed
//! by a label (`v1`, `rate 2`, `response B`), a replicate word with a label
//! (`rep 1`, `replicate A`, `r3`), or both (`rate rep 1`). A table is in the
//! replicate layout when every column after the first is a replicate
//! heading, or every column after the first carries the same measurement
//! name (`v | v | v`), or when it has no header and more than two columns
//! (unlabelled numbers). Each cell then becomes one observation at its
//! row's concentration: fits use every replicate, never the means.
//!
//! Empty cells in replicate columns are measurements not made (the same
//! rule as the inhibition matrix); they are counted in a note, never
//! dropped silently. The naming rules are common practice, no source.

use crate::table::{ColumnHeading, InputProblem, Table};
use serde::Serialize;

/// Words that mark a replicate column.
const REPLICATE_WORDS: &[&str] = &["rep", "replicate", "repl", "r"];

/// The columns a concentration–measurement table is read from.
#[derive(Clone, Debug, PartialEq)]
pub struct MeasurementColumns {
    /// 0-based column of the concentration.
    pub concentration: usize,
    /// 0-based columns of the measurements: one in the long layout, two or
    /// more in the replicate layout.
    pub measurements: Vec<usize>,
    /// The measurements' unit as the header writes it, when it does.
    pub unit: Option<String>,
}

impl MeasurementColumns {
    /// Whether the measurements stand in several columns.
    pub fn replicated(&self) -> bool {
        self.measurements.len() > 1
    }
}

/// Splits `name` into its words (lowercase; spaces, `_`, `-`, `.`, `#`, `:`
/// and brackets separate words).
fn words(name: &str) -> Vec<String> {
    name.to_lowercase()
        .split(|c: char| c.is_whitespace() || matches!(c, '_' | '-' | '.' | '#' | ':' | '[' | ']'))
        .filter(|w| !w.is_empty())
        .map(str::to_string)
        .collect()
}

/// The label of a replicate heading (`1` of `rep 1`, `A` of `replicate
/// A`), or `None` when `name` is not one. `is_measure` says whether some
/// words name the measurement (`v`, `rate`, `response`, ...).
pub fn replicate_label(name: &str, is_measure: &dyn Fn(&str) -> bool) -> Option<String> {
    if is_measure(name) {
        // `v0` is a rate name, not `v` with label `0`.
        return None;
    }
    let mut words = words(name);
    let last = words.pop()?;
    let label = if last.chars().all(|c| c.is_ascii_digit()) || (last.chars().count() == 1 && last.chars().all(char::is_alphabetic)) {
        if words.is_empty() {
            return None;
        }
        last
    } else {
        // A label glued to its word: `v1`, `rep2`.
        let split = last.trim_end_matches(|c: char| c.is_ascii_digit()).len();
        if split == 0 || split == last.len() {
            return None;
        }
        words.push(last[..split].to_string());
        last[split..].to_string()
    };
    if words.last().is_some_and(|w| REPLICATE_WORDS.contains(&w.as_str())) {
        words.pop();
        if words.is_empty() {
            return Some(label);
        }
    }
    is_measure(&words.join(" ")).then_some(label)
}

/// The replicate layout of `table`, if it is in one: the first column is
/// the concentration when `is_concentration` accepts its heading (or the
/// table has no header and more than two columns), and every other column
/// is a replicate of the measurement. The measurement unit must be the same
/// wherever a replicate heading gives one.
pub fn replicate_columns(
    table: &Table,
    is_concentration: &dyn Fn(&str) -> bool,
    is_measure: &dyn Fn(&str) -> bool,
) -> Result<Option<MeasurementColumns>, String> {
    let Some(headings) = &table.headings else {
        if table.width > 2 {
            return Ok(Some(MeasurementColumns { concentration: 0, measurements: (1..table.width).collect(), unit: None }));
        }
        return Ok(None);
    };
    if headings.len() < 3 || !is_concentration(&headings[0].name) {
        return Ok(None);
    }
    let rest = &headings[1..];
    let labelled = rest.iter().all(|h| replicate_label(&h.name, is_measure).is_some());
    let first = crate::read::columns::normalise_name(&rest[0].name);
    let repeated = is_measure(&rest[0].name) && rest.iter().all(|h| crate::read::columns::normalise_name(&h.name) == first);
    if !(labelled || repeated) {
        return Ok(None);
    }
    let measurements: Vec<usize> = (1..headings.len()).collect();
    let unit = common_unit(headings, &measurements)?;
    Ok(Some(MeasurementColumns { concentration: 0, measurements, unit }))
}

/// The one unit written in the headings of `columns` (0-based), or a
/// sentence naming the columns that disagree.
pub fn common_unit(headings: &[ColumnHeading], columns: &[usize]) -> Result<Option<String>, String> {
    let mut unit: Option<(usize, &str)> = None;
    for &k in columns {
        let Some(this) = headings.get(k).and_then(|h| h.unit.as_deref()).map(str::trim) else { continue };
        match unit {
            None => unit = Some((k, this)),
            Some((column, first)) if first != this => {
                return Err(format!(
                    "the replicate columns give different units: '{first}' in column {} and '{this}' in column {}; give every replicate the same unit",
                    column + 1,
                    k + 1
                ))
            }
            Some(_) => {}
        }
    }
    Ok(unit.map(|(_, u)| u.to_string()))
}

/// The table's problems with those of a replicate layout's empty cells
/// (and rows cut short in the replicate columns) taken out: those are
/// measurements not made. Returns the problems that stand and how many
/// cells were empty.
pub fn problems_without_empty_replicates(table: &Table, columns: &MeasurementColumns) -> (Vec<InputProblem>, usize) {
    if !columns.replicated() {
        return (table.problems.clone(), 0);
    }
    let mut empty = 0;
    let mut problems = Vec::new();
    for problem in &table.problems {
        let in_replicates = problem.column.and_then(|c| c.checked_sub(1)).is_some_and(|c| columns.measurements.contains(&c));
        let empty_cell = in_replicates && problem.message.starts_with("the cell is empty");
        let row = table.rows.iter().find(|r| r.line == problem.line);
        let short_row = problem.column.is_none()
            && problem.message.starts_with("expected")
            && row.is_some_and(|r| r.cells.len() < table.width && r.cells.len() > columns.measurements[0]);
        if empty_cell {
            empty += 1;
        } else if short_row {
            let missing = table.width - row.map_or(0, |r| r.cells.len());
            empty += missing;
        } else {
            problems.push(problem.clone());
        }
    }
    (problems, empty)
}

/// The note that reports a replicate layout and its empty cells.
pub fn layout_note(columns: &MeasurementColumns, headings: Option<&[ColumnHeading]>, what: &str, empty: usize) -> String {
    let first = columns.measurements[0] + 1;
    let last = columns.measurements[columns.measurements.len() - 1] + 1;
    let how = match headings {
        Some(_) => "the header names them as replicates",
        None => "no header row, so every number after the first column is read as a replicate",
    };
    let mut note = format!(
        "Replicates in columns: column {} is the concentration; columns {first} to {last} are {} replicate(s) of {what} ({how}). Every replicate is fitted, not their mean.",
        columns.concentration + 1,
        columns.measurements.len()
    );
    if empty > 0 {
        note.push_str(&format!(" {empty} empty replicate cell(s) are read as measurements not made."));
    }
    note
}

/// The replicates at one concentration: count, mean, standard deviation
/// and standard error of the mean, for a table and error bars.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ReplicateSummary {
    /// The concentration ([S] or [I]).
    pub concentration: f64,
    /// How many measurements (used in the fit) stand at it.
    pub count: usize,
    /// Their mean.
    pub mean: f64,
    /// Their sample standard deviation (n − 1 in the denominator); `None`
    /// for a single measurement.
    pub sd: Option<f64>,
    /// The standard error of the mean, sd/√n; `None` for a single
    /// measurement.
    pub sem: Option<f64>,
}

/// One [`ReplicateSummary`] per distinct concentration of `points`
/// (concentration, measurement), in increasing concentration.
pub fn summarise(points: &[(f64, f64)]) -> Vec<ReplicateSummary> {
    let mut sorted = points.to_vec();
    sorted.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut out = Vec::new();
    for group in sorted.chunk_by(|a, b| a.0 == b.0) {
        let n = group.len();
        let mean = group.iter().map(|p| p.1).sum::<f64>() / n as f64;
        let sd = (n > 1).then(|| (group.iter().map(|p| (p.1 - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt());
        out.push(ReplicateSummary { concentration: group[0].0, count: n, mean, sd, sem: sd.map(|s| s / (n as f64).sqrt()) });
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::read::columns::is_rate_name;
    use crate::table::parse_table;

    #[test]
    fn replicate_headings() {
        let cases = [
            ("rep 1", Some("1")),
            ("Rep2", Some("2")),
            ("replicate A", Some("a")),
            ("v1", Some("1")),
            ("v 2", Some("2")),
            ("rate rep 1", Some("1")),
            ("rate_3", Some("3")),
            ("initial rate B", Some("b")),
            ("v0", None),
            ("v", None),
            ("rate", None),
            ("1", None),
            ("temperature 2", None),
            ("sd", None),
            ("rep", None),
        ];
        for (name, expected) in cases {
            assert_eq!(replicate_label(name, &is_rate_name).as_deref(), expected, "{name}");
        }
    }

    #[test]
    fn layouts() {
        let is_s = |n: &str| crate::read::columns::is_substrate_name(n);
        let check = |text: &str, expected: Option<(Vec<usize>, Option<&str>)>| {
            let table = parse_table(text);
            let found = replicate_columns(&table, &is_s, &is_rate_name).unwrap();
            assert_eq!(found.map(|c| (c.measurements, c.unit)), expected.map(|(m, u)| (m, u.map(str::to_string))), "{text:?}");
        };
        check("Substrate (µM)\trate rep 1 (µM/min)\trep 2\trep 3\n1\t2\t3\t4\n", Some((vec![1, 2, 3], Some("µM/min"))));
        check("S\tv1\tv2\n1\t2\t3\n", Some((vec![1, 2], None)));
        check("S\tv\tv\tv\n1\t2\t3\t4\n", Some((vec![1, 2, 3], None)));
        check("1\t2\t3\n2\t3\t4\n", Some((vec![1, 2], None)));
        check("S\tv\n1\t2\n", None);
        check("1\t2\n2\t3\n", None);
        check("S\tv\tsd\n1\t2\t0.1\n", None);
        check("S\tv\tv2\n1\t2\t3\n", None);
        let table = parse_table("S\tv1 (µM/s)\tv2 (µM/min)\n1\t2\t3\n");
        let error = replicate_columns(&table, &is_s, &is_rate_name).unwrap_err();
        assert!(error.contains("'µM/s' in column 2 and 'µM/min' in column 3"), "{error}");
    }

    /// Mean, SD (n − 1) and SEM worked by hand: 1, 2, 3 has mean 2, SD 1,
    /// SEM 1/√3.
    #[test]
    fn summaries() {
        let s = summarise(&[(2.0, 5.0), (1.0, 1.0), (1.0, 3.0), (1.0, 2.0)]);
        assert_eq!(s.len(), 2);
        assert_eq!((s[0].concentration, s[0].count, s[0].mean, s[0].sd), (1.0, 3, 2.0, Some(1.0)));
        assert!((s[0].sem.unwrap() - 1.0 / 3f64.sqrt()).abs() < 1e-15);
        assert_eq!((s[1].count, s[1].mean, s[1].sd, s[1].sem), (1, 5.0, None, None));
    }
}
