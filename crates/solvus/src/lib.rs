//! Placeholder during development.
pub mod binary;
pub mod error;
pub mod model;
mod numeric;
pub mod units;
pub use error::SolvusError;
