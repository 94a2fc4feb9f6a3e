//! `turnover-core`: the numbers behind Turnover.
//!
//! This crate turns a table of substrate concentrations and rates into
//! kinetic constants with honest uncertainties. It does no IO, reads no
//! clock and uses no randomness it is not handed, so it builds unchanged for
//! the browser (`wasm32-unknown-unknown`) and for the command line.
//!
//! The main pieces:
//!
//! - [`decode`]: a file's bytes to text (UTF-8, UTF-16 with a byte-order
//!   mark, Windows-1252; any line ending).
//! - [`table`]: reading pasted tables (any common separator and decimal
//!   mark, headers with units), reporting problems by line and column.
//! - [`units`]: molar concentration, time and rate units; kcat conversion.
//! - [`model`]: the [`model::Model`] trait and validated
//!   [`model::Observations`].
//! - [`models`]: the kinetic models.
//! - [`solver`]: weighted Levenberg-Marquardt, reporting why it stopped.
//! - [`fit`]: a fit with standard errors, t intervals, R², AICc, as one
//!   serialisable [`fit::FitSummary`].
//! - [`plots`]: the data behind the direct, residual and linearised plots.
//! - [`weighting`]: uniform, relative, Poisson-like and sd weights.
//! - [`bias`]: the small-sample bias of a nonlinear estimate (Box 1971)
//!   and the estimate with it removed.
//! - [`intervals`]: profile-likelihood and seeded bootstrap intervals.
//! - [`diagnostics`]: runs test, lack of fit, leverage, studentised residuals.
//! - [`robust`]: the direct linear plot's median estimates.
//! - [`random`]: the seeded generator behind resampling.
//! - [`rates`]: the whole rate analysis used by page and CLI alike.
//! - [`traces`]: time courses to initial rates (windows, flags, blanks,
//!   Beer-Lambert or a standard curve), and the rate table they make.
//! - [`early`]: a trace's initial rate from its early part with curvature
//!   (integrated rate equation with apparent constants).
//! - [`lambert`]: the Lambert W function.
//! - [`progress`]: the integrated Michaelis-Menten fit to whole time courses.
//! - [`inhibition`]: rates at several [S] and [I], every reversible
//!   mechanism fitted globally, compared and plotted.
//! - [`bisubstrate`]: rates over a grid of two substrates' concentrations,
//!   the sequential, ordered and ping-pong laws fitted, compared, plotted.
//! - [`dose`]: inhibitor series (IC50 logistic, Morrison tight binding).
//! - [`batch`]: many curves in one table, grouped by a column, each fitted
//!   alone and flagged.
//! - [`plate`]: % activity from each plate's control wells, Z′ and the
//!   signal window.
//! - [`compare`]: AICc ranking, Akaike weights, F tests, verdict.
//! - [`errors`]: the error structure (constant, Poisson-like or relative)
//!   and the weighting it suggests.
//! - [`inactivation`]: time-dependent inhibition: kobs per progress curve,
//!   kinact and KI from kobs against [I].
//! - [`inactivation_global`]: the same constants from one fit of every
//!   progress curve with kinact and KI shared.
//! - [`selwyn`]: Selwyn's test of enzyme stability from progress curves at
//!   several [E].
//! - [`sets`]: do constants differ between data sets? Global fits with
//!   shared or separate constants, F tests, ratios with intervals.
//! - [`ph`]: pH-rate profiles: one or two ionisations, pKa values,
//!   comparison, log plot with asymptotes.
//! - [`temperature`]: rate constants against temperature: Arrhenius and
//!   Eyring fitted directly, ΔH‡, ΔS‡, ΔG‡, a test of curvature.
//! - [`design`]: planning an experiment: recommended concentrations,
//!   predicted and simulated precision, plate map and pipetting table.
//!
//! ```
//! use turnover_core::rates::{analyse_rates, RateRequest};
//!
//! let request = RateRequest {
//!     text: "[S] (mM)\tv (µM/min)\n0.1\t1.9\n0.2\t3.1\n0.5\t5.2\n1\t6.4\n2\t7.5\n5\t8.3\n".into(),
//!     ..RateRequest::default()
//! };
//! let analysis = analyse_rates(&request).unwrap();
//! let km = &analysis.fit.parameters[1];
//! assert_eq!(km.name, "Km");
//! assert_eq!(km.unit.as_deref(), Some("mM"));
//! assert!(analysis.fit.converged);
//! ```

#![deny(missing_docs)]

pub mod batch;
pub mod bias;
pub mod bisubstrate;
pub mod compare;
pub mod decode;
pub mod design;
pub mod early;
pub mod errors;
pub mod diagnostics;
pub mod dose;
pub mod error;
pub mod fastpath;
pub mod fit;
pub mod format;
pub mod inactivation;
pub mod inactivation_global;
pub mod inhibition;
pub mod intervals;
pub mod lambert;
pub mod model;
pub mod models;
pub mod ph;
pub mod plate;
pub mod plots;
pub mod progress;
pub mod protein;
pub mod random;
pub mod rates;
pub mod read;
pub mod robust;
pub mod selwyn;
pub mod sets;
pub mod shared_slope;
pub mod solver;
pub mod table;
pub mod temperature;
pub mod traces;
pub mod units;
pub mod weighting;

pub use error::{Error, ErrorKind};
