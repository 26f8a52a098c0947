//! Errors of the reintegration engine.

/// Why a reintegration could not be done.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum ReintegrationError {
    /// The input does not describe a grain that can be reintegrated.
    #[error("grain '{grain}', {place}: {message}")]
    Invalid {
        /// Grain label.
        grain: String,
        /// Where in the grain's input (`phase 'host', fractions`).
        place: String,
        /// What is wrong.
        message: String,
    },
    /// A molar volume could not be had for an end-member.
    #[error("grain '{grain}': {message}")]
    Volume {
        /// Grain label.
        grain: String,
        /// What the volume table said.
        message: String,
    },
    /// The Monte Carlo settings cannot be used.
    #[error("Monte Carlo settings: {0}")]
    Settings(String),
    /// The run was cancelled by the user.
    #[error("cancelled")]
    Cancelled,
}
