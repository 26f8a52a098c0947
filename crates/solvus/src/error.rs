//! Errors of the solvus engine.

use std::path::PathBuf;

/// What went wrong when building a model or asking it for a result.
///
/// Solvers that can legitimately find nothing (no gap at this temperature, no root in range)
/// return typed outcomes instead; this enum is for input that cannot be used and for solvers
/// that gave up.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SolvusError {
    /// A model id that is not one of the built-in models.
    #[error("unknown solution model `{id}`; known models: {known}")]
    UnknownModel {
        /// The id that was asked for.
        id: String,
        /// The ids that exist, comma separated.
        known: String,
    },
    /// A composition that is not a set of mole fractions.
    #[error("invalid composition (Ab {x_ab}, Or {x_or}, An {x_an}): {reason}")]
    InvalidComposition {
        /// Mole fraction of albite as given.
        x_ab: f64,
        /// Mole fraction of orthoclase as given.
        x_or: f64,
        /// Mole fraction of anorthite as given.
        x_an: f64,
        /// Why it was refused.
        reason: String,
    },
    /// A temperature or pressure that cannot be used.
    #[error("invalid {quantity}: {value} ({reason})")]
    InvalidCondition {
        /// `temperature_k`, `pressure_bar`, ...
        quantity: &'static str,
        /// The value given.
        value: f64,
        /// Why it was refused.
        reason: String,
    },
    /// A user model file that could not be read or parsed.
    #[error("{}:{line}:{column}: {message}", path.display())]
    ModelFile {
        /// The file (or `<string>` for in-memory text).
        path: PathBuf,
        /// 1-based line of the problem (0 when not known).
        line: usize,
        /// 1-based column of the problem (0 when not known).
        column: usize,
        /// What was wrong.
        message: String,
    },
    /// A ternary computation was asked of a binary (Ab-Or) model.
    #[error("model `{id}` is a binary Ab-Or model; {what} needs a ternary Ab-Or-An model")]
    NeedsTernaryModel {
        /// The model id.
        id: String,
        /// The computation that was asked for.
        what: &'static str,
    },
    /// The model has no miscibility gap on the Ab-Or join at this pressure.
    #[error("model `{id}` has no Ab-Or miscibility gap at {pressure_bar} bar")]
    NoMiscibilityGap {
        /// The model id.
        id: String,
        /// Pressure asked for, bar.
        pressure_bar: f64,
    },
    /// An iterative solver stopped before converging.
    #[error("{solver} did not converge after {iterations} iterations ({detail})")]
    NotConverged {
        /// Which solver.
        solver: &'static str,
        /// Iterations used.
        iterations: usize,
        /// Where it stopped.
        detail: String,
    },
}
