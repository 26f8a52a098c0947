//! Placeholder docs (rewritten below).
pub mod calibration;
pub mod error;
pub mod histogram;
pub mod load;
pub mod roi;
pub mod threshold;
