//! Placeholder docs (rewritten below).
pub mod bootstrap;
pub mod calibration;
pub mod colour;
pub mod control;
pub mod correct;
pub mod error;
pub mod histogram;
pub mod load;
pub mod morphometry;
pub mod order;
pub mod roi;
pub mod segment;
pub mod synthetic;
pub mod threshold;
