//! Placeholder during development.
pub mod binary;
pub mod error;
pub mod model;
mod numeric;
pub mod stability;
pub mod ternary;
pub mod thermometry;
pub mod units;
mod user;
pub use error::SolvusError;
