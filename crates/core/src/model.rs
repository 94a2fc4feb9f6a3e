//! The model trait and the observations a model is fitted to.
//!
//! A model is data plus behaviour: it names its parameters and their
//! dimensions, evaluates the response and its analytic gradient with respect
//! to the parameters, and proposes starting values from the data. The solver
//! in [`crate::solver`] knows nothing about enzymes; it sees only this trait.

use crate::error::Error;

/// What physical quantity a parameter is, so that the analysis can attach
/// the right unit once it knows the units of the data.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Dimension {
    /// Same unit as the response (for example a rate, like Vmax).
    Response,
    /// Same unit as the predictor column with this index (for example Km
    /// has the unit of [S], column 0).
    Predictor(usize),
    /// A pure number (for example a Hill coefficient).
    Dimensionless,
    /// No unit is known (reference problems with abstract variables).
    Unspecified,
}

/// One parameter of a model.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct ParameterSpec {
    /// The name shown to people and used in JSON (`Vmax`, `Km`).
    pub name: &'static str,
    /// What the parameter measures.
    pub dimension: Dimension,
}

/// Observations for a fit: `predictors` values per observation (row-major
/// in `x`), a response `y` and a weight for each observation.
///
/// **Invariant:** `x.len() == predictors * y.len()`, `weights.len() ==
/// y.len()`, every value finite and every weight positive. The only
/// constructor, [`Observations::new`], checks this.
#[derive(Clone, Debug, PartialEq)]
pub struct Observations {
    predictors: usize,
    x: Vec<f64>,
    y: Vec<f64>,
    weights: Vec<f64>,
}

impl Observations {
    /// Checks and wraps observations. `weights` of `None` means every
    /// observation has weight one.
    pub fn new(predictors: usize, x: Vec<f64>, y: Vec<f64>, weights: Option<Vec<f64>>) -> Result<Self, Error> {
        if predictors == 0 {
            return Err(Error::invalid_data("a model needs at least one predictor column"));
        }
        if x.len() != predictors * y.len() {
            return Err(Error::invalid_data(format!(
                "{} predictor values do not make {} rows of {} predictors",
                x.len(),
                y.len(),
                predictors
            )));
        }
        let weights = weights.unwrap_or_else(|| vec![1.0; y.len()]);
        if weights.len() != y.len() {
            return Err(Error::invalid_data("there must be one weight per observation"));
        }
        if x.iter().chain(&y).any(|v| !v.is_finite()) {
            return Err(Error::invalid_data("every value must be a finite number"));
        }
        if weights.iter().any(|w| !(w.is_finite() && *w > 0.0)) {
            return Err(Error::invalid_data("every weight must be a positive finite number"));
        }
        Ok(Observations { predictors, x, y, weights })
    }

    /// Replaces the responses by `y`, keeping the predictors and weights,
    /// with the check [`Observations::new`] makes (one finite value per
    /// observation); on an error nothing is changed. Lets a resampling loop
    /// reuse one set of observations instead of building a new one.
    pub fn set_responses(&mut self, y: &[f64]) -> Result<(), Error> {
        if y.len() != self.y.len() {
            return Err(Error::invalid_data("there must be one response per observation"));
        }
        if y.iter().any(|v| !v.is_finite()) {
            return Err(Error::invalid_data("every value must be a finite number"));
        }
        self.y.copy_from_slice(y);
        Ok(())
    }

    /// Convenience for the common one-predictor case.
    pub fn single(x: &[f64], y: &[f64]) -> Result<Self, Error> {
        Observations::new(1, x.to_vec(), y.to_vec(), None)
    }

    /// Number of observations.
    pub fn len(&self) -> usize {
        self.y.len()
    }

    /// Whether there are no observations.
    pub fn is_empty(&self) -> bool {
        self.y.is_empty()
    }

    /// Number of predictor values per observation.
    pub fn predictors(&self) -> usize {
        self.predictors
    }

    /// The predictor values of observation `i`.
    pub fn x(&self, i: usize) -> &[f64] {
        &self.x[i * self.predictors..(i + 1) * self.predictors]
    }

    /// Every observation's predictor values, row after row (observation
    /// `i`'s are `[i * predictors, (i + 1) * predictors)`).
    pub fn x_values(&self) -> &[f64] {
        &self.x
    }

    /// All responses.
    pub fn y(&self) -> &[f64] {
        &self.y
    }

    /// All weights.
    pub fn weights(&self) -> &[f64] {
        &self.weights
    }

    /// The same observations with new weights; `Err` when a weight is not
    /// a positive finite number or the count differs.
    pub fn with_weights(&self, weights: Vec<f64>) -> Result<Observations, Error> {
        Observations::new(self.predictors, self.x.clone(), self.y.clone(), Some(weights))
    }

    /// The weighted sum of squares Σ wᵢ·(yᵢ − f(xᵢ; p))² of `model` at `p`,
    /// summed in row order.
    pub fn weighted_rss(&self, model: &(impl Model + ?Sized), p: &[f64]) -> f64 {
        (0..self.len()).map(|i| self.weights[i] * (self.y[i] - model.value(self.x(i), p)).powi(2)).sum()
    }

    /// Column `j` of the predictors, one value per observation.
    pub fn predictor_column(&self, j: usize) -> Vec<f64> {
        (0..self.len()).map(|i| self.x(i)[j]).collect()
    }
}

/// A regression model `y = f(x; p)`.
pub trait Model {
    /// Short machine name, as the CLI takes it (`mm`).
    fn name(&self) -> &str;

    /// A one-line equation for people, such as `v = Vmax·[S]/(Km + [S])`.
    fn equation(&self) -> &str;

    /// The parameters, in the order the other methods use.
    fn parameters(&self) -> &[ParameterSpec];

    /// Number of predictor values each observation has.
    fn predictors(&self) -> usize {
        1
    }

    /// The model's value at one observation's predictors `x`.
    fn value(&self, x: &[f64], p: &[f64]) -> f64;

    /// The gradient of [`Model::value`] with respect to the parameters,
    /// written into `gradient` (length = number of parameters).
    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]);

    /// The value and the gradient at once: returns [`Model::value`] and
    /// writes [`Model::gradient`]. By default the two methods in turn; a
    /// model whose value and gradient share a costly term (a power, a
    /// logarithm) computes it once here, and must return bit for bit what
    /// the two methods give. The fixed-size minimiser calls this once per
    /// observation and trial point.
    fn value_and_gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) -> f64 {
        self.gradient(x, p, gradient);
        self.value(x, p)
    }

    /// [`Model::value_and_gradient`] at the observations `first..first +
    /// rows` of `data`, written by column: the gradient's entry `j` at row
    /// `r` into `out[j * stride + r]` and the value into `out[k * stride +
    /// r]`, `k` the number of parameters (`out` holds at least `(k + 1) *
    /// stride` numbers, `rows ≤ stride`). By default one call per row; a
    /// model may write the loop out (the minimiser's hot loop, with no call
    /// per row, so the compiler can keep the parameters' terms in registers
    /// and work on two rows at once) and must give bit for bit what the
    /// one-row method gives.
    fn values_and_gradients(&self, data: &Observations, first: usize, rows: usize, p: &[f64], out: &mut [f64], stride: usize) {
        let k = p.len();
        let mut small = [0.0f64; 8];
        let mut large = Vec::new();
        let gradient: &mut [f64] = if k <= small.len() {
            &mut small[..k]
        } else {
            large.resize(k, 0.0);
            &mut large
        };
        for r in 0..rows {
            out[k * stride + r] = self.value_and_gradient(data.x(first + r), p, gradient);
            for (j, g) in gradient.iter().enumerate() {
                out[j * stride + r] = *g;
            }
        }
    }

    /// Starting values computed from the data.
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error>;

    /// Whether parameter `index` is a constant that is positive by its
    /// nature, so that an interval reaching below zero says the
    /// approximation behind it has failed. By default: concentrations (a
    /// predictor's dimension, such as Km, Ki, IC50) and a maximal rate
    /// named `Vmax`.
    fn positive(&self, index: usize) -> bool {
        let spec = self.parameters()[index];
        matches!(spec.dimension, Dimension::Predictor(_)) || spec.name == "Vmax"
    }
}

/// Checks an analytic gradient against central finite differences at `p`
/// for every observation, returning the largest relative disagreement.
///
/// The step for parameter `j` is `h = cbrt(eps)·max(|p_j|, 1e-8)`, the
/// usual choice that balances truncation and rounding error for central
/// differences (common practice, no source). The rounding error of the
/// difference quotient, about `eps·|f|/h`, is subtracted from the
/// disagreement so that a derivative much smaller than the function itself
/// is not judged by digits the finite difference cannot have; a wrong
/// derivative still shows as a disagreement near 1 or more.
pub fn gradient_disagreement(model: &dyn Model, data: &Observations, p: &[f64]) -> f64 {
    let n_params = p.len();
    let mut analytic = vec![0.0; n_params];
    // Where a derivative crosses zero between observations, its value at
    // the crossing is pure cancellation; judge it against a millionth of the
    // largest magnitude that derivative takes over the data.
    let mut column_scale = vec![0.0f64; n_params];
    for i in 0..data.len() {
        model.gradient(data.x(i), p, &mut analytic);
        for j in 0..n_params {
            column_scale[j] = column_scale[j].max(analytic[j].abs());
        }
    }
    let mut worst: f64 = 0.0;
    let step_scale = f64::EPSILON.cbrt();
    for i in 0..data.len() {
        let x = data.x(i);
        model.gradient(x, p, &mut analytic);
        for j in 0..n_params {
            let h = step_scale * p[j].abs().max(1e-8);
            let mut up = p.to_vec();
            let mut down = p.to_vec();
            up[j] += h;
            down[j] -= h;
            let numeric = (model.value(x, &up) - model.value(x, &down)) / (up[j] - down[j]);
            let rounding = 16.0 * f64::EPSILON * model.value(x, p).abs() / h;
            let scale = analytic[j].abs().max(numeric.abs()).max(1e-6 * column_scale[j]).max(f64::MIN_POSITIVE);
            worst = worst.max(((analytic[j] - numeric).abs() - rounding).max(0.0) / scale);
        }
    }
    worst
}
