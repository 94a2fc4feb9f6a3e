//! Inhibitor series at one substrate concentration: a response against
//! [I], fitted by the four-parameter logistic (`ic50`) or by the Morrison
//! tight-binding equation (`morrison`). [`analyse_dose`] is the code path
//! behind `turnover fit --model ic50|morrison`.

use crate::error::Error;
use crate::fit::{fit_model, FitSettings, FitSummary};
use crate::inhibition::is_inhibitor_name;
use crate::model::{Dimension, Observations};
use crate::models::{model_with_options, DoseResponse, ModelOptions};
use crate::plots::family::{dose_response_plot, morrison_plot, short_number, DosePoint};
use crate::plots::PlotData;
use crate::rates::{is_rate_name, normalise_name, CAUTION};
use crate::table::{parse_table, InputProblem};
use crate::units::ConcentrationUnit;
use serde::{Deserialize, Serialize};

/// What to fit.
#[derive(Clone, Debug, Default, PartialEq, Deserialize)]
#[serde(default)]
pub struct DoseRequest {
    /// The table: [I] then the response.
    pub text: String,
    /// `ic50` or `morrison`.
    pub model: String,
    /// Total enzyme concentration [E]t in the units of [I] (Morrison).
    pub enzyme: Option<f64>,
    /// A fixed top plateau (`ic50`).
    pub fixed_top: Option<f64>,
    /// A fixed bottom plateau (`ic50`).
    pub fixed_bottom: Option<f64>,
    /// Input line numbers to leave out.
    pub excluded_lines: Vec<usize>,
    /// How intervals are computed. Default asymptotic.
    pub interval_method: crate::intervals::IntervalMethod,
    /// Bootstrap settings, used when `interval_method` is bootstrap.
    pub bootstrap: crate::intervals::BootstrapSettings,
}

/// One point of the series.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DoseRecord {
    /// Index in the point list.
    pub row: usize,
    /// Input line.
    pub line: usize,
    /// Inhibitor concentration.
    pub i: f64,
    /// Response.
    pub y: f64,
    /// Whether it was left out.
    pub excluded: bool,
    /// Fitted response.
    pub fitted: f64,
}

/// The result.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DoseAnalysis {
    /// The fit record.
    pub fit: FitSummary,
    /// Every point.
    pub points: Vec<DoseRecord>,
    /// Problems with the input.
    pub problems: Vec<InputProblem>,
    /// How the table was read.
    pub notes: Vec<String>,
    /// Unit of [I], when known.
    pub inhibitor_unit: Option<String>,
    /// The plot (dose-response or Morrison).
    pub plots: Vec<PlotData>,
    /// The standing caution.
    pub caution: String,
}

fn is_response_name(name: &str) -> bool {
    is_rate_name(name) || matches!(normalise_name(name).as_str(), "response" | "activity" | "signal" | "y" | "%activity" | "percentactivity")
}

/// Reads the series and fits it.
pub fn analyse_dose(request: &DoseRequest) -> Result<DoseAnalysis, Error> {
    let name = request.model.trim();
    if name != "ic50" && name != "morrison" {
        return Err(Error::invalid_option(format!("'{name}' is not an inhibitor-series model; choose ic50 or morrison")));
    }
    let options = ModelOptions { enzyme: request.enzyme, fixed_top: request.fixed_top, fixed_bottom: request.fixed_bottom };
    let model = model_with_options(name, &options)?;
    let table = parse_table(&request.text);
    let mut notes = Vec::new();
    if table.rows.is_empty() {
        return Err(Error::invalid_data("no data rows found; paste a table with [I] in the first column and the response in the second"));
    }
    let (ci, cy) = match &table.headings {
        Some(h) => match (h.iter().position(|c| is_inhibitor_name(&c.name)), h.iter().position(|c| is_response_name(&c.name))) {
            (Some(i), Some(y)) => (i, y),
            _ if h.len() >= 2 => {
                notes.push(format!("Column 1 ('{}') is read as [I] and column 2 ('{}') as the response.", h[0].name, h[1].name));
                (0, 1)
            }
            _ => return Err(Error::invalid_data("the table needs two columns: [I] then the response")),
        },
        None if table.width >= 2 => {
            notes.push("No header row: column 1 is read as [I] and column 2 as the response.".to_string());
            (0, 1)
        }
        None => return Err(Error::invalid_data("the table needs two columns: [I] then the response")),
    };
    let heading = |c: usize| table.headings.as_ref().and_then(|h| h.get(c));
    let inhibitor_unit = heading(ci).and_then(|h| h.unit.as_deref()).and_then(|u| ConcentrationUnit::parse(u).ok());
    let response_unit = heading(cy).and_then(|h| h.unit.clone());
    let response_label = match (heading(cy), &response_unit) {
        (Some(h), Some(u)) => format!("{} ({u})", h.name),
        (Some(h), None) => h.name.clone(),
        _ => "response".to_string(),
    };
    let mut problems = table.problems.clone();
    let mut points = Vec::new();
    for row in &table.rows {
        let (Some(Some(i)), Some(Some(y))) = (row.cells.get(ci), row.cells.get(cy)) else {
            if !problems.iter().any(|p| p.line == row.line) {
                problems.push(InputProblem { line: row.line, column: None, message: "the row has no [I] or no response".into() });
            }
            continue;
        };
        if *i < 0.0 {
            problems.push(InputProblem { line: row.line, column: Some(ci + 1), message: "a concentration cannot be negative".into() });
            continue;
        }
        points.push(DoseRecord { row: points.len(), line: row.line, i: *i, y: *y, excluded: request.excluded_lines.contains(&row.line), fitted: f64::NAN });
    }
    problems.sort_by_key(|p| (p.line, p.column));
    let used: Vec<DoseRecord> = points.iter().filter(|p| !p.excluded).cloned().collect();
    let n_params = model.parameters().len();
    if used.len() <= n_params {
        return Err(Error::invalid_data(format!(
            "only {} usable point(s) remain; at least {} are needed to fit {} parameters with an uncertainty",
            used.len(),
            n_params + 1,
            n_params
        )));
    }
    let data = Observations::single(&used.iter().map(|p| p.i).collect::<Vec<_>>(), &used.iter().map(|p| p.y).collect::<Vec<_>>())?;
    let fit = fit_model(model.as_ref(), &data, None, &FitSettings::default())?;
    let values = fit.values().to_vec();
    for p in &mut points {
        p.fitted = model.value(&[p.i], &values);
    }
    let mut summary = fit.summary.clone();
    crate::intervals::apply_interval_method(&mut summary, model.as_ref(), &data, &fit, request.interval_method, &request.bootstrap)?;
    let i_symbol = inhibitor_unit.map(|u| u.symbol().to_string());
    for (estimate, spec) in summary.parameters.iter_mut().zip(model.parameters()) {
        estimate.unit = match spec.dimension {
            Dimension::Response => response_unit.clone(),
            Dimension::Predictor(_) => i_symbol.clone(),
            Dimension::Dimensionless => Some(String::new()),
            Dimension::Unspecified => None,
        };
    }
    let unit_text = i_symbol.clone().unwrap_or_default();
    let dose_points: Vec<DosePoint> = points.iter().map(|p| DosePoint { row: p.row, i: p.i, y: p.y, excluded: p.excluded }).collect();
    let curve = |i: f64| model.value(&[i], &values);
    let plot = if name == "morrison" {
        let enzyme = request.enzyme.expect("checked by model_with_options");
        let (v0, ki) = (values[0], values[1]);
        // Rule of thumb (common practice, no source): below about 10×[E]t
        // the inhibitor is tight-binding, free [I] differs from total [I],
        // and Ki_app rests on [E]t being right.
        if summary.converged && ki < 10.0 * enzyme {
            summary.warnings.push(format!(
                "Ki_app ({}) is below 10×[E]t ({}): the inhibitor binds tightly, so the result rests on [E]t being the true active-enzyme concentration; when Ki_app ≪ [E]t the data measure [E]t more than Ki_app (rule of thumb: common practice, no source).",
                short_number(ki),
                short_number(enzyme)
            ));
        }
        morrison_plot(&dose_points, &curve, v0, ki, &unit_text, response_unit.as_deref().unwrap_or(""))
    } else {
        let full = DoseResponse::new(request.fixed_top, request.fixed_bottom).full(&values);
        if summary.converged && (full[2] <= 0.0 || !full[2].is_finite()) {
            summary.warnings.push("The fitted IC50 is not positive; the curve does not describe the data.".to_string());
        }
        let i_max = used.iter().map(|p| p.i).fold(0.0, f64::max);
        let i_min = used.iter().map(|p| p.i).filter(|i| *i > 0.0).fold(f64::INFINITY, f64::min);
        if summary.converged && (full[2] > i_max || full[2] < i_min) {
            summary.warnings.push("The IC50 lies outside the tested concentrations; it is an extrapolation.".to_string());
        }
        dose_response_plot(&dose_points, &curve, full[2], &unit_text, &response_label)
    };
    Ok(DoseAnalysis { fit: summary, points, problems, notes, inhibitor_unit: i_symbol, plots: vec![plot], caution: CAUTION.to_string() })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn morrison_needs_the_enzyme_and_warns_when_tight() {
        let text = "[I] (nM)\tv\n0\t10\n1\t8.2\n2\t6.6\n5\t3.3\n10\t1.0\n20\t0.4\n";
        let e = analyse_dose(&DoseRequest { text: text.into(), model: "morrison".into(), ..Default::default() }).unwrap_err();
        assert!(e.message.contains("[E]t"), "{}", e.message);
        let a = analyse_dose(&DoseRequest { text: text.into(), model: "morrison".into(), enzyme: Some(5.0), ..Default::default() }).unwrap();
        assert!(a.fit.converged);
        assert!(a.fit.warnings.iter().any(|w| w.contains("below 10×[E]t")), "{:?}", a.fit.warnings);
        assert_eq!(a.fit.parameters[1].unit.as_deref(), Some("nM"));
    }
}
