//! The five stages of a grain's route, one module each.

pub mod analyses;
pub mod bulk;
pub mod image;
pub mod phases;
pub mod temperature;
