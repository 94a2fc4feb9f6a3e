//! Do the constants differ between data sets?
//!
//! [`compare_sets`] reads one table holding several data sets (a text
//! column, `set` by default, names the set of each row), fits the chosen
//! rate law to all of them at once with each constant either **shared**
//! (one value for every set) or **separate** (one value per set), and asks
//! of every constant whether sharing it makes the fit worse than chance
//! allows.
//!
//! The sharing patterns fitted: all separate; each constant shared in turn
//! (the others separate); all shared; and, when it is none of these, the
//! pattern the verdict chooses (differing constants separate, the others
//! shared), whose curves are drawn. Every pattern is one (weighted)
//! least-squares problem on the stacked data with one residual variance, so the
//! extra-sum-of-squares F test applies
//! ([`crate::compare::f_test`]; approximate for a nonlinear model).
//!
//! **The decision for a constant:** the pattern with that constant shared
//! is tested against the all-separate pattern; the constant *differs* when
//! the F test rejects sharing at p < 0.05 (the conventional level; common
//! practice, no source). Each constant is tested on its own, so with two
//! constants and no real difference at least one is reported different in
//! up to about 10% of experiments (two tests at 5%).
//!
//! **The ratio** of each set's constant to the reference set's comes from
//! the all-separate global fit (one residual variance for all sets, so the
//! sets' constants are uncorrelated). Its interval is formed on the log
//! scale, `exp(ln r ± t·SE(ln r))` with `SE(ln r)² = (SE_a/a)² + (SE_b/b)²`
//! (the delta method; common practice, no source), which keeps it positive
//! and asymmetric as a ratio's interval should be. When the two values
//! have different signs, or one is zero, no ratio is given.

use crate::compare::{f_test, FTest, SIGNIFICANCE};
use crate::error::Error;
use crate::fit::{fit_model, Fit, FitSettings, FitSummary};
use crate::model::{Dimension, Model, Observations, ParameterSpec};
use crate::models::{model_with_options, ModelOptions};
use crate::plots::{PlotData, PlotKind, PlotPoint, Series};
use crate::table::{parse_table, split_line, InputProblem};
use serde::{Deserialize, Serialize};

/// What to compare.
#[derive(Clone, Debug, PartialEq, Deserialize)]
#[serde(default)]
pub struct SetsRequest {
    /// The table: a set column (any position) and the model's columns in
    /// order (predictors, then the response): [S], v for `mm`; [S], [I], v
    /// for the inhibition mechanisms; [I], response for `ic50`.
    pub text: String,
    /// Heading of the column naming each row's set (case-insensitive).
    /// Default `set`.
    pub by: String,
    /// Machine name of the model (`mm`, `ic50`, `competitive`, ...).
    /// Default `mm`.
    pub model: String,
    /// The set the others are compared with; default the first set in the
    /// table.
    pub reference: Option<String>,
    /// Total enzyme concentration for `morrison` (units of [I]).
    pub enzyme: Option<f64>,
    /// A fixed top plateau for `ic50`.
    pub fixed_top: Option<f64>,
    /// A fixed bottom plateau for `ic50`.
    pub fixed_bottom: Option<f64>,
    /// How the responses are weighted: uniform, relative (1/y²) or poisson
    /// (1/y); `sd` is refused (the table has no sd column). Default uniform.
    pub weighting: crate::weighting::Weighting,
}

impl Default for SetsRequest {
    fn default() -> Self {
        SetsRequest {
            text: String::new(),
            by: "set".into(),
            model: "mm".into(),
            reference: None,
            enzyme: None,
            fixed_top: None,
            fixed_bottom: None,
            weighting: crate::weighting::Weighting::Uniform,
        }
    }
}

/// One set's own fit.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SetFit {
    /// The set's name as written in the table.
    pub name: String,
    /// Number of rows used.
    pub n: usize,
    /// The set fitted alone (its own residual variance).
    pub fit: FitSummary,
}

/// One sharing pattern, fitted globally.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PatternFit {
    /// Name of the pattern, such as `all separate`, `Km shared`,
    /// `all shared`.
    pub name: String,
    /// The constants shared by every set in this pattern.
    pub shared: Vec<String>,
    /// Residual sum of squares of the stacked fit.
    pub rss: f64,
    /// Residual degrees of freedom.
    pub dof: usize,
    /// AICc of the stacked fit.
    pub aicc: Option<f64>,
    /// AICc minus the smallest AICc among the patterns.
    pub delta_aicc: Option<f64>,
    /// The F test of this pattern against all separate (`None` for the
    /// all-separate pattern itself).
    pub f_test: Option<FTest>,
    /// The whole fit; parameter names carry the set in brackets
    /// (`Km[mutant]`) when separate.
    pub fit: FitSummary,
}

/// The ratio of one set's constant to the reference set's.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SetRatio {
    /// The set in the numerator.
    pub set: String,
    /// The reference set, in the denominator.
    pub reference: String,
    /// The ratio; `None` when the two values differ in sign or one is zero.
    pub value: Option<f64>,
    /// Lower end of its 95% interval.
    pub ci_low: Option<f64>,
    /// Upper end of its 95% interval.
    pub ci_high: Option<f64>,
}

/// The decision for one constant.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ConstantVerdict {
    /// Constant name (`Km`, `Vmax`, `IC50`, ...).
    pub name: String,
    /// Whether sharing it is rejected at p < 0.05.
    pub differs: bool,
    /// The p value of that F test; `None` when it could not be computed.
    pub p_value: Option<f64>,
    /// The F test itself.
    pub f_test: Option<FTest>,
    /// Each other set against the reference.
    pub ratio: Vec<SetRatio>,
    /// The finding in words, with its numbers.
    pub text: String,
}

/// Everything the comparison found.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SetsAnalysis {
    /// The model fitted.
    pub model: String,
    /// The reference set.
    pub reference: String,
    /// Each set's own fit, in table order.
    pub sets: Vec<SetFit>,
    /// The sharing patterns, in the order fitted.
    pub models: Vec<PatternFit>,
    /// One entry per constant of the model.
    pub constants: Vec<ConstantVerdict>,
    /// The pattern the decisions choose (differing constants separate).
    pub chosen: String,
    /// The findings in words.
    pub verdict: String,
    /// Problems in the input (rows left out are listed here).
    pub problems: Vec<InputProblem>,
    /// Warnings for people.
    pub warnings: Vec<String>,
    /// Every set in its own colour with the chosen pattern's curves.
    pub plots: Vec<PlotData>,
    /// The caution every result carries.
    pub caution: String,
}

/// A model fitted to several sets at once, each base parameter shared or
/// one per set. The set's index is the last predictor.
struct SetModel<'a> {
    base: &'a dyn Model,
    sets: usize,
    specs: Vec<ParameterSpec>,
    /// `index[j][k]`: the global parameter for base parameter `j` in set `k`.
    index: Vec<Vec<usize>>,
    name: String,
}

impl<'a> SetModel<'a> {
    fn new(base: &'a dyn Model, sets: usize, shared: &[bool], name: String) -> Self {
        let mut specs = Vec::new();
        let mut index = Vec::new();
        for (j, spec) in base.parameters().iter().enumerate() {
            if shared[j] {
                index.push(vec![specs.len(); sets]);
                specs.push(*spec);
            } else {
                index.push((0..sets).map(|k| specs.len() + k).collect());
                specs.extend(std::iter::repeat_n(*spec, sets));
            }
        }
        SetModel { base, sets, specs, index, name }
    }

    fn local(&self, p: &[f64], set: usize) -> Vec<f64> {
        self.index.iter().map(|row| p[row[set]]).collect()
    }

    /// Global parameter values from one value per set for each base parameter
    /// (`per_set[k][j]`); shared parameters take the mean.
    fn pack(&self, per_set: &[Vec<f64>]) -> Vec<f64> {
        let mut p = vec![0.0; self.specs.len()];
        let mut counts = vec![0usize; self.specs.len()];
        for (j, row) in self.index.iter().enumerate() {
            for (k, &g) in row.iter().enumerate() {
                p[g] += per_set[k][j];
                counts[g] += 1;
            }
        }
        p.iter().zip(&counts).map(|(v, c)| v / *c as f64).collect()
    }

    /// Label of global parameter `g` (`Km` when shared, `Km[name]` otherwise).
    fn labels(&self, set_names: &[String]) -> Vec<String> {
        let mut labels = vec![String::new(); self.specs.len()];
        for (j, row) in self.index.iter().enumerate() {
            let name = self.base.parameters()[j].name;
            let shared = row.iter().all(|&g| g == row[0]);
            for (k, &g) in row.iter().enumerate() {
                labels[g] = if shared { name.to_string() } else { format!("{name}[{}]", set_names[k]) };
            }
        }
        labels
    }
}

impl Model for SetModel<'_> {
    fn name(&self) -> &str {
        &self.name
    }
    fn equation(&self) -> &str {
        self.base.equation()
    }
    fn parameters(&self) -> &[ParameterSpec] {
        &self.specs
    }
    fn predictors(&self) -> usize {
        self.base.predictors() + 1
    }
    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let m = self.base.predictors();
        let set = x[m] as usize;
        self.base.value(&x[..m], &self.local(p, set))
    }
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let m = self.base.predictors();
        let set = x[m] as usize;
        let mut local = vec![0.0; self.index.len()];
        self.base.gradient(&x[..m], &self.local(p, set), &mut local);
        gradient.iter_mut().for_each(|g| *g = 0.0);
        for (j, row) in self.index.iter().enumerate() {
            gradient[row[set]] += local[j];
        }
    }
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        let m = self.base.predictors();
        let mut per_set = Vec::with_capacity(self.sets);
        for k in 0..self.sets {
            let rows: Vec<usize> = (0..data.len()).filter(|&i| data.x(i)[m] as usize == k).collect();
            let x: Vec<f64> = rows.iter().flat_map(|&i| data.x(i)[..m].to_vec()).collect();
            let y: Vec<f64> = rows.iter().map(|&i| data.y()[i]).collect();
            per_set.push(self.base.initial_guess(&Observations::new(m, x, y, None)?)?);
        }
        Ok(self.pack(&per_set))
    }
}

/// The rows of the table, by set.
struct SetData {
    names: Vec<String>,
    /// Base predictors per row (row-major), the set index, the response.
    x: Vec<Vec<f64>>,
    set: Vec<usize>,
    y: Vec<f64>,
    w: Vec<f64>,
    line: Vec<usize>,
    x_label: String,
    y_label: String,
    /// The unit written in each number column's heading: the predictors'
    /// in order, then the response's.
    units: Vec<Option<String>>,
}

/// Puts the unit of each constant on the fit record, from its dimension and
/// the units in the table's headings (none when the heading gives none).
fn put_units(summary: &mut crate::fit::FitSummary, specs: &[ParameterSpec], units: &[Option<String>]) {
    let response = units.last().cloned().flatten();
    for (estimate, spec) in summary.parameters.iter_mut().zip(specs) {
        estimate.unit = match spec.dimension {
            Dimension::Response => response.clone(),
            Dimension::Predictor(k) => units.get(k).cloned().flatten(),
            Dimension::Dimensionless => Some(String::new()),
            Dimension::Unspecified => None,
        };
    }
}

fn read_sets(request: &SetsRequest, predictors: usize, problems: &mut Vec<InputProblem>) -> Result<SetData, Error> {
    let table = parse_table(&request.text);
    let headings = table.headings.as_ref().ok_or_else(|| {
        Error::invalid_data(format!("the table needs a header row naming the set column '{}'", request.by))
    })?;
    let by = request.by.trim().to_lowercase();
    let set_column = headings.iter().position(|h| h.name.trim().to_lowercase() == by).ok_or_else(|| {
        Error::invalid_data(format!(
            "no column is headed '{}'; the headings are: {}",
            request.by,
            headings.iter().map(|h| h.name.as_str()).collect::<Vec<_>>().join(", ")
        ))
    })?;
    let data_columns: Vec<usize> = (0..headings.len()).filter(|&c| c != set_column).collect();
    if data_columns.len() != predictors + 1 {
        return Err(Error::invalid_data(format!(
            "the model needs {} number column(s) beside the set column ({} then the response); the table has {}",
            predictors + 1,
            predictors,
            data_columns.len()
        )));
    }
    let label = |c: usize| {
        let h = &headings[c];
        match &h.unit {
            Some(unit) => format!("{} ({unit})", h.name),
            None => h.name.clone(),
        }
    };
    // The set column holds text: the reader's complaints about it are not problems.
    problems.extend(table.problems.iter().filter(|p| p.column != Some(set_column + 1)).cloned());
    let lines: Vec<&str> = request.text.strip_prefix('\u{feff}').unwrap_or(&request.text).split('\n').collect();
    let mut data = SetData {
        names: Vec::new(),
        x: Vec::new(),
        set: Vec::new(),
        y: Vec::new(),
        w: Vec::new(),
        line: Vec::new(),
        x_label: label(data_columns[0]),
        y_label: label(data_columns[predictors]),
        units: data_columns.iter().map(|&c| headings[c].unit.clone()).collect(),
    };
    for row in &table.rows {
        let raw = lines.get(row.line - 1).map(|l| l.strip_suffix('\r').unwrap_or(l)).unwrap_or("");
        let (cells, _) = split_line(raw, table.separator);
        let name = cells.get(set_column).map(|c| c.trim().to_string()).unwrap_or_default();
        if name.is_empty() {
            problems.push(InputProblem {
                line: row.line,
                column: Some(set_column + 1),
                message: "the set name is empty; the row was left out".into(),
            });
            continue;
        }
        let values: Option<Vec<f64>> = data_columns.iter().map(|&c| row.cells.get(c).copied().flatten()).collect();
        let Some(values) = values else {
            if !problems.iter().any(|p| p.line == row.line) {
                problems.push(InputProblem {
                    line: row.line,
                    column: None,
                    message: "a number is missing; the row was left out".into(),
                });
            }
            continue;
        };
        let weight = match request.weighting.weight(values[predictors], None) {
            Ok(w) => w,
            Err(message) => {
                problems.push(InputProblem {
                    line: row.line,
                    column: Some(data_columns[predictors] + 1),
                    message: format!("{message}; the row was left out"),
                });
                continue;
            }
        };
        let k = match data.names.iter().position(|n| *n == name) {
            Some(k) => k,
            None => {
                data.names.push(name);
                data.names.len() - 1
            }
        };
        data.x.push(values[..predictors].to_vec());
        data.set.push(k);
        data.y.push(values[predictors]);
        data.w.push(weight);
        data.line.push(row.line);
    }
    problems.sort_by_key(|p| (p.line, p.column));
    if data.names.len() < 2 {
        return Err(Error::invalid_data(format!(
            "the column '{}' names {} set(s); a comparison needs at least two",
            request.by,
            data.names.len()
        )));
    }
    Ok(data)
}

fn observations(data: &SetData, predictors: usize, only: Option<usize>) -> Result<Observations, Error> {
    let rows: Vec<usize> = (0..data.y.len()).filter(|&i| only.is_none_or(|k| data.set[i] == k)).collect();
    let mut x = Vec::with_capacity(rows.len() * (predictors + 1));
    for &i in &rows {
        x.extend_from_slice(&data.x[i]);
        if only.is_none() {
            x.push(data.set[i] as f64);
        }
    }
    let width = if only.is_none() { predictors + 1 } else { predictors };
    Observations::new(
        width,
        x,
        rows.iter().map(|&i| data.y[i]).collect(),
        Some(rows.iter().map(|&i| data.w[i]).collect()),
    )
}

/// Compares the sets of one table; see the module documentation.
pub fn compare_sets(request: &SetsRequest) -> Result<SetsAnalysis, Error> {
    let options =
        ModelOptions { enzyme: request.enzyme, fixed_top: request.fixed_top, fixed_bottom: request.fixed_bottom };
    let base = model_with_options(&request.model, &options)?;
    let base = base.as_ref();
    let m = base.predictors();
    let q = base.parameters().len();
    if request.weighting == crate::weighting::Weighting::Sd {
        return Err(Error::invalid_option(
            "weighting by sd needs an sd column, which the set comparison does not read; use constant, proportional or sqrt",
        ));
    }
    let mut problems = Vec::new();
    let data = read_sets(request, m, &mut problems)?;
    let k_sets = data.names.len();
    let reference = match &request.reference {
        Some(name) => data.names.iter().position(|n| n == name.trim()).ok_or_else(|| {
            Error::invalid_option(format!("there is no set '{}'; the sets are: {}", name, data.names.join(", ")))
        })?,
        None => 0,
    };
    let settings = FitSettings::default();
    let mut warnings = Vec::new();
    if base.parameters().iter().any(|p| p.name == "Vmax") {
        warnings.push(
            "A Vmax ratio is the ratio of kcat only when every set was measured at the same enzyme concentration [E]t."
                .to_string(),
        );
    }

    // Each set alone: its own constants, and the starting values of the global fits.
    let mut sets = Vec::with_capacity(k_sets);
    let mut per_set = Vec::with_capacity(k_sets);
    for (k, name) in data.names.iter().enumerate() {
        let obs = observations(&data, m, Some(k))?;
        let fit = fit_model(base, &obs, None, &settings)
            .map_err(|e| Error::invalid_data(format!("set '{name}': {}", e.message)))?;
        if !fit.summary.converged {
            warnings.push(format!("The fit of set '{name}' alone did not converge."));
        }
        per_set.push(fit.values().to_vec());
        let mut summary = fit.summary;
        summary.weighting = request.weighting.name().into();
        put_units(&mut summary, base.parameters(), &data.units);
        sets.push(SetFit { name: name.clone(), n: obs.len(), fit: summary });
    }
    let all = observations(&data, m, None)?;
    let names: Vec<&str> = base.parameters().iter().map(|s| s.name).collect();

    let fit_pattern = |shared: &[bool], name: String| -> Result<(Fit, PatternFit), Error> {
        let model = SetModel::new(base, k_sets, shared, name.clone());
        if all.len() <= model.specs.len() {
            return Err(Error::invalid_data(format!(
                "{} points cannot determine the {} constants of the pattern '{name}'",
                all.len(),
                model.specs.len()
            )));
        }
        // Two starts: the mean of the sets' own values, and the reference set's.
        let starts = [model.pack(&per_set), model.pack(&vec![per_set[reference].clone(); k_sets])];
        let mut best: Option<Fit> = None;
        for start in &starts {
            let fit = fit_model(&model, &all, Some(start), &settings)?;
            let better = match &best {
                None => true,
                Some(b) => {
                    (fit.summary.converged && !b.summary.converged)
                        || (fit.summary.converged == b.summary.converged && fit.summary.rss < b.summary.rss)
                }
            };
            if better {
                best = Some(fit);
            }
        }
        let mut fit = best.expect("two starts were tried");
        for (estimate, label) in fit.summary.parameters.iter_mut().zip(model.labels(&data.names)) {
            estimate.name = label;
        }
        fit.summary.model = name.clone();
        fit.summary.weighting = request.weighting.name().into();
        put_units(&mut fit.summary, &model.specs, &data.units);
        let pattern = PatternFit {
            name,
            shared: names.iter().zip(shared).filter(|(_, s)| **s).map(|(n, _)| n.to_string()).collect(),
            rss: fit.summary.rss,
            dof: fit.summary.dof,
            aicc: fit.summary.aicc,
            delta_aicc: None,
            f_test: None,
            fit: fit.summary.clone(),
        };
        Ok((fit, pattern))
    };

    let (separate_fit, separate) = fit_pattern(&vec![false; q], "all separate".into())?;
    let mut models = vec![separate.clone()];
    let mut constants = Vec::with_capacity(q);
    let t = separate_fit.t_quantile;
    for j in 0..q {
        let mut shared = vec![false; q];
        shared[j] = true;
        let (_, mut pattern) = fit_pattern(&shared, format!("{} shared", names[j]))?;
        pattern.f_test = f_test(&pattern.fit, &separate.fit);
        let test = pattern.f_test.clone();
        let p_value = test.as_ref().map(|t| t.p_value);
        let differs = p_value.is_some_and(|p| p < SIGNIFICANCE);
        let ratio = (0..k_sets)
            .filter(|&k| k != reference)
            .map(|k| set_ratio(&separate_fit, &data.names, q, j, k, reference, t))
            .collect::<Vec<_>>();
        constants.push(ConstantVerdict {
            name: names[j].to_string(),
            differs,
            p_value,
            text: constant_text(names[j], differs, test.as_ref(), &ratio),
            f_test: test,
            ratio,
        });
        models.push(pattern);
    }
    if q > 1 {
        let (_, mut pattern) = fit_pattern(&vec![true; q], "all shared".into())?;
        pattern.f_test = f_test(&pattern.fit, &separate.fit);
        models.push(pattern);
    }
    let chosen_shared: Vec<bool> = constants.iter().map(|c| !c.differs).collect();
    let chosen = pattern_name(&names, &chosen_shared);
    let chosen_fit = match models.iter().position(|p| p.name == chosen) {
        Some(_) => {
            let (fit, _) = fit_pattern(&chosen_shared, chosen.clone())?;
            fit
        }
        None => {
            let (fit, mut pattern) = fit_pattern(&chosen_shared, chosen.clone())?;
            pattern.f_test = f_test(&pattern.fit, &separate.fit);
            models.push(pattern);
            fit
        }
    };
    let best_aicc = models.iter().filter_map(|p| p.aicc).fold(f64::INFINITY, f64::min);
    for pattern in &mut models {
        pattern.delta_aicc = pattern.aicc.map(|a| a - best_aicc);
        if !pattern.fit.converged {
            warnings.push(format!("The global fit '{}' did not converge; its test is not reliable.", pattern.name));
        }
    }
    let by_aicc = models
        .iter()
        .filter(|p| p.aicc.is_some())
        .min_by(|a, b| a.aicc.partial_cmp(&b.aicc).unwrap_or(std::cmp::Ordering::Equal))
        .map(|p| p.name.clone());
    let mut verdict = constants.iter().map(|c| c.text.clone()).collect::<Vec<_>>().join(" ");
    if let Some(best) = by_aicc {
        if best != chosen {
            verdict.push_str(&format!(
                " AICc ranks '{best}' first, the F tests choose '{chosen}'; the F test decides here."
            ));
        }
    }
    let model = SetModel::new(base, k_sets, &chosen_shared, chosen.clone());
    let plots = vec![set_plot(&data, &model, chosen_fit.values(), base.name() == "ic50")];
    Ok(SetsAnalysis {
        model: base.name().to_string(),
        reference: data.names[reference].clone(),
        sets,
        models,
        constants,
        chosen,
        verdict,
        problems,
        warnings,
        plots,
        caution: crate::rates::CAUTION.to_string(),
    })
}

fn pattern_name(names: &[&str], shared: &[bool]) -> String {
    if shared.iter().all(|s| *s) {
        "all shared".into()
    } else if shared.iter().all(|s| !*s) {
        "all separate".into()
    } else {
        let list: Vec<&str> = names.iter().zip(shared).filter(|(_, s)| **s).map(|(n, _)| *n).collect();
        format!("{} shared", list.join(", "))
    }
}

fn set_ratio(fit: &Fit, names: &[String], q: usize, j: usize, k: usize, reference: usize, t: Option<f64>) -> SetRatio {
    // In the all-separate pattern, base parameter j of set k is global j·K + k.
    let sets = names.len();
    let _ = q;
    let a = fit.values()[j * sets + k];
    let b = fit.values()[j * sets + reference];
    let se = |g: usize| fit.covariance.as_ref().map(|c| c[(g, g)].sqrt()).filter(|v| v.is_finite());
    let mut out = SetRatio {
        set: names[k].clone(),
        reference: names[reference].clone(),
        value: None,
        ci_low: None,
        ci_high: None,
    };
    if a == 0.0 || b == 0.0 || a.signum() != b.signum() {
        return out;
    }
    let r = a / b;
    out.value = Some(r);
    if let (Some(sa), Some(sb), Some(t)) = (se(j * sets + k), se(j * sets + reference), t) {
        let se_log = ((sa / a).powi(2) + (sb / b).powi(2)).sqrt();
        out.ci_low = Some(r * (-t * se_log).exp());
        out.ci_high = Some(r * (t * se_log).exp());
    }
    out
}

/// Three significant figures for sentences.
pub(crate) fn short(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let digits = (2 - v.abs().log10().floor() as i32).max(0) as usize;
    format!("{v:.digits$}")
}

/// A p value for sentences (`p < 0.0001` below that).
pub(crate) fn p_text(p: f64) -> String {
    if p < 0.0001 {
        "p < 0.0001".into()
    } else {
        format!("p = {}", short(p))
    }
}

fn constant_text(name: &str, differs: bool, test: Option<&FTest>, ratio: &[SetRatio]) -> String {
    let Some(test) = test else {
        return format!("{name}: the data cannot test whether it differs.");
    };
    let f = format!("F({}, {}) = {}, {}", test.df_extra, test.df_general, short(test.f), p_text(test.p_value));
    let ratios = ratio
        .iter()
        .map(|r| match (r.value, r.ci_low, r.ci_high) {
            (Some(v), Some(lo), Some(hi)) => {
                format!("{}/{} = {} ({}–{})", r.set, r.reference, short(v), short(lo), short(hi))
            }
            (Some(v), _, _) => format!("{}/{} = {}", r.set, r.reference, short(v)),
            _ => format!("{}/{}: no ratio (values of different sign or zero)", r.set, r.reference),
        })
        .collect::<Vec<_>>()
        .join("; ");
    if differs {
        format!("{name} differs: {ratios} ({f}).")
    } else {
        format!("{name} does not differ detectably: {ratios} ({f}).")
    }
}

/// One plot: every set in its own series, with its curve from the chosen
/// pattern (for a two-predictor model, one curve per set and [I]).
fn set_plot(data: &SetData, model: &SetModel, p: &[f64], log_x: bool) -> PlotData {
    let m = model.base.predictors();
    let log_x = log_x && data.x.iter().all(|x| x[0] > 0.0);
    let mut series = Vec::new();
    let mut all_points = Vec::new();
    for (k, name) in data.names.iter().enumerate() {
        let rows: Vec<usize> = (0..data.y.len()).filter(|&i| data.set[i] == k).collect();
        // Groups: one per distinct value of the second predictor (if any).
        let mut groups: Vec<Option<f64>> = Vec::new();
        for &i in &rows {
            let g = (m > 1).then(|| data.x[i][1]);
            if !groups.contains(&g) {
                groups.push(g);
            }
        }
        for g in groups {
            let points: Vec<PlotPoint> = rows
                .iter()
                .filter(|&&i| (m > 1).then(|| data.x[i][1]) == g)
                .map(|&i| PlotPoint { row: data.line[i], x: data.x[i][0], y: data.y[i], excluded: false })
                .collect();
            let xs: Vec<f64> = points.iter().map(|pt| pt.x).collect();
            let hi = xs.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
            let lo = xs.iter().cloned().fold(f64::INFINITY, f64::min);
            let curve = (0..=100)
                .map(|s| {
                    let f = s as f64 / 100.0;
                    let x0 = if log_x { (lo.ln() + f * (hi.ln() - lo.ln())).exp() } else { f * hi * 1.05 };
                    let mut x = vec![x0];
                    if let Some(i) = g {
                        x.push(i);
                    }
                    x.push(k as f64);
                    (x0, model.value(&x, p))
                })
                .filter(|(_, y)| y.is_finite())
                .collect();
            let label = match g {
                Some(i) => format!("{name}, [I] = {}", short(i)),
                None => name.clone(),
            };
            all_points.extend(points.iter().cloned());
            series.push(Series { label, points, curve, dashed: false });
        }
    }
    PlotData {
        band: None,
        kind: PlotKind::Sets,
        title: format!("Sets compared ({})", model.name),
        x_label: data.x_label.clone(),
        y_label: data.y_label.clone(),
        points: all_points,
        curve: Vec::new(),
        zero_line: false,
        segments: Vec::new(),
        spots: Vec::new(),
        note: format!("Curves: the global fit with {}.", model.name),
        series,
        log_x,
        marks: Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::gradient_disagreement;

    /// Invented example data: two sets, the second with half the Vmax.
    fn two_sets() -> String {
        let mut text = String::from("set\t[S] (µM)\tv (µM/min)\n");
        for (name, vmax) in [("wild type", 10.0), ("mutant", 5.0)] {
            for (i, s) in [1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0].iter().enumerate() {
                let wobble = [0.02, -0.03, 0.01, -0.01, 0.03, -0.02, 0.01][i];
                text.push_str(&format!("{name}\t{s}\t{}\n", vmax * s / (8.0 + s) * (1.0 + wobble)));
            }
        }
        text
    }

    #[test]
    fn set_model_gradient_matches_finite_differences() {
        let base = crate::models::model_by_name("mm").unwrap();
        let model = SetModel::new(base.as_ref(), 2, &[false, true], "test".into());
        let data = Observations::new(2, vec![1.0, 0.0, 5.0, 1.0, 20.0, 0.0, 50.0, 1.0], vec![1.0, 2.0, 3.0, 4.0], None)
            .unwrap();
        assert!(gradient_disagreement(&model, &data, &[10.0, 5.0, 8.0]) < 1e-6);
    }

    #[test]
    fn constants_carry_the_units_of_the_headings() {
        let analysis = compare_sets(&SetsRequest { text: two_sets(), ..SetsRequest::default() }).unwrap();
        let unit = |fit: &FitSummary, name: &str| {
            fit.parameters.iter().find(|p| p.name == name).and_then(|p| p.unit.clone()).unwrap_or_default()
        };
        assert_eq!(unit(&analysis.sets[0].fit, "Vmax"), "µM/min");
        assert_eq!(unit(&analysis.sets[0].fit, "Km"), "µM");
        let separate = &analysis.models[0].fit;
        assert_eq!(unit(separate, "Km[mutant]"), "µM");
        assert_eq!(unit(separate, "Vmax[wild type]"), "µM/min");
    }

    #[test]
    fn finds_the_vmax_difference_and_reads_names() {
        let analysis = compare_sets(&SetsRequest { text: two_sets(), ..SetsRequest::default() }).unwrap();
        assert_eq!(analysis.reference, "wild type");
        assert_eq!(analysis.sets.len(), 2);
        assert!(analysis.problems.is_empty(), "{:?}", analysis.problems);
        let vmax = &analysis.constants[0];
        assert_eq!(vmax.name, "Vmax");
        assert!(vmax.differs);
        let r = &vmax.ratio[0];
        assert!((r.value.unwrap() - 0.5).abs() < 0.05);
        assert!(r.ci_low.unwrap() < r.value.unwrap() && r.value.unwrap() < r.ci_high.unwrap());
        assert!(!analysis.constants[1].differs);
        assert_eq!(analysis.chosen, "Km shared");
        assert_eq!(analysis.models.len(), 4);
        assert_eq!(analysis.plots[0].series.len(), 2);
        // All-separate global fit: the RSS is the sum of the sets' own RSS
        // (uniform weights, one model per set; an identity of least squares).
        let sum: f64 = analysis.sets.iter().map(|s| s.fit.rss).sum();
        assert!((analysis.models[0].rss - sum).abs() <= 1e-8 * sum.max(1e-12));
    }

    #[test]
    fn relative_weights_reach_every_fit() {
        let request = SetsRequest {
            text: two_sets(),
            weighting: crate::weighting::Weighting::Relative,
            ..SetsRequest::default()
        };
        let analysis = compare_sets(&request).unwrap();
        assert_eq!(analysis.sets[0].fit.weighting, "relative");
        assert_eq!(analysis.models[1].fit.weighting, "relative");
        // The weighted all-separate RSS is the sum of the sets' own weighted RSS.
        let sum: f64 = analysis.sets.iter().map(|s| s.fit.rss).sum();
        assert!((analysis.models[0].rss - sum).abs() <= 1e-8 * sum);
        // Relative residuals here are at most 3%, so the weighted RSS is small.
        assert!(analysis.models[0].rss < 0.01, "{}", analysis.models[0].rss);
        assert!(compare_sets(&SetsRequest { weighting: crate::weighting::Weighting::Sd, ..request }).is_err());
    }

    #[test]
    fn refuses_one_set_and_unknown_reference() {
        let one = "set,S,v\na,1,1\na,2,1.5\na,4,2\na,8,2.4\n";
        assert!(compare_sets(&SetsRequest { text: one.into(), ..SetsRequest::default() }).is_err());
        let e =
            compare_sets(&SetsRequest { text: two_sets(), reference: Some("nope".into()), ..SetsRequest::default() });
        assert!(e.unwrap_err().message.contains("no set 'nope'"));
    }
}
