//! From results to decisions: what a settling test says about a slurry, how
//! large a thickener must be, and which hindered-settling law fits a test.
//!
//! * [`curve`] — a settling curve (time, interface height) from a run record
//!   or a lab CSV; its monotone smoothing; the Kynch construction that turns it
//!   into a batch flux curve over the concentrations the test covers; and the
//!   compression point.
//! * [`sizing`] — thickener area from a batch flux curve or a law (Yoshioka
//!   tangent, Coe–Clevenger) or from a settling curve (Talmage–Fitch,
//!   Oltmann), and the state-point check of a given tank.
//! * [`fit`] — least-squares fit of Richardson–Zaki, Vesilind or Takács
//!   parameters to measured settling curves, with the continuum solver as the
//!   model, confidence intervals and the law as a scenario snippet.
//! * [`lm`] and [`stats`] — the Levenberg–Marquardt solver and the Student t
//!   quantile behind the fit.
//!
//! Conventions: SI throughout (s, m, kg/m³ for mass concentrations C, m/s for
//! settling velocities, kg/(m²·s) for solids fluxes G = C·v, m²·s/kg for unit
//! areas). Conversions to the units of the trade (m²·d/t, t/h, m/h) are
//! methods on the result types, for the edges. Results derive
//! `serde::Serialize`; failures are [`AnalysisError`] values whose messages
//! say what was wrong and what to do.

pub mod curve;
pub mod fit;
pub mod lm;
pub mod sizing;
pub mod stats;

use serde::Serialize;

/// The caution every design output carries (the text of the README's
/// "Cautions" section).
pub const CAUTION: &str = "Results are estimates for screening and research. Confirm designs \
with pilot tests and the judgement of a licensed engineer under local codes and regulations, \
especially where tailings storage or public safety is involved.";

/// Seconds per day and kilograms per tonne, for the unit area m²·d/t.
const SECONDS_PER_DAY: f64 = 86_400.0;
const KG_PER_TONNE: f64 = 1000.0;

/// A unit area in m²·s/kg expressed in m²·d/t (the unit of the trade).
pub fn unit_area_m2_day_per_tonne(unit_area_si: f64) -> f64 {
    unit_area_si * KG_PER_TONNE / SECONDS_PER_DAY
}

/// Why an analysis could not be done.
#[derive(Debug, Clone, PartialEq, Serialize, thiserror::Error)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum AnalysisError {
    /// A row or cell of a settling-curve CSV that cannot be used.
    #[error("{file}:{line}:{column}: {message}\n  hint: {hint}")]
    Csv {
        file: String,
        /// 1-based line in the file.
        line: u64,
        /// 1-based column (field number) in the line.
        column: u64,
        message: String,
        hint: String,
    },
    /// A file that cannot be read at all.
    #[error("{file}: {message}\n  hint: {hint}")]
    Io {
        file: String,
        message: String,
        hint: String,
    },
    /// An input value that is out of its physical range or inconsistent.
    #[error("{what}: {message}\n  hint: {hint}")]
    Invalid {
        /// Which input (e.g. "underflow concentration").
        what: String,
        message: String,
        hint: String,
    },
    /// The data do not reach what the method needs (e.g. the target
    /// underflow concentration lies beyond the tested range).
    #[error("{what}: {message}\n  hint: {hint}")]
    NotCovered {
        what: String,
        message: String,
        hint: String,
    },
    /// Too few measured points for the parameters to be estimated.
    #[error(
        "{points} measured points (after t = 0) for {parameters} parameters: at least \
         {required} are needed\n  hint: {hint}"
    )]
    TooFewPoints {
        points: usize,
        parameters: usize,
        required: usize,
        hint: String,
    },
    /// The model (continuum solver) refused the inputs of a fit.
    #[error("the settling model cannot run: {0}")]
    Model(String),
    /// The fit failed numerically (singular Jacobian, no finite residuals).
    #[error("fit failed: {message}\n  hint: {hint}")]
    Fit { message: String, hint: String },
}

impl AnalysisError {
    pub(crate) fn invalid(what: &str, message: impl Into<String>, hint: impl Into<String>) -> Self {
        AnalysisError::Invalid {
            what: what.to_string(),
            message: message.into(),
            hint: hint.into(),
        }
    }
}
