//! Solution models of alkali and ternary feldspar and the temperatures they give.
//!
//! `solvus` holds the published Margules models of the Ab-Or and Ab-Or-An feldspar solutions
//! (Thompson & Waldbaum 1969; Haselton et al. 1983; Thompson & Hovis 1979; Fuhrman & Lindsley
//! 1988; Elkins & Grove 1990) and everything the temperature side of Consolute computes from them:
//!
//! * [`model`]: Gibbs energy of mixing, chemical potentials, activities and analytic activity
//!   coefficients at (X, T, P); excess volume from the `WV` terms; user models from JSON.
//! * [`binary`]: the Ab-Or solvus: critical (consolute) point, spinodal, binodal, a traced curve.
//! * [`ternary`]: the Ab-Or-An binodal at one temperature (tie-lines, the isotherm's critical
//!   point, a three-phase triangle where there is one).
//! * [`stability`]: tangent-plane stability (Michelsen 1982) and the minimum crystallisation
//!   temperature of a bulk composition.
//! * [`thermometry`]: two-feldspar temperatures `T_Ab`, `T_Or`, `T_An` of a coexisting pair and
//!   their adjustment within analytical uncertainty (Fuhrman & Lindsley 1988 approach).
//!
//! Units: the engine works in kelvin and bar (`W = WH - T WS + P WV`); [`units`] is the one
//! place that converts from Celsius and kbar. Solvers return typed outcomes (a value, no gap,
//! stable in range, no root in range) and errors, never a NaN.
//!
//! ```
//! use solvus::units::{bar_from_kbar, celsius_from_kelvin};
//! use solvus::{Composition, MinTemperature, SolutionModel};
//!
//! let model = SolutionModel::builtin("haselton1983")?;
//! let p = bar_from_kbar(1.0);
//!
//! // the consolute point of the Ab-Or solvus
//! let top = solvus::critical_point(&model, p)?;
//! assert!((celsius_from_kelvin(top.temperature_k) - 682.4).abs() < 0.1);
//!
//! // a reintegrated bulk: one phase above its minimum crystallisation temperature
//! let bulk = Composition::new(0.55, 0.44, 0.01)?;
//! let result = solvus::min_crystallisation_temperature(&model, &bulk, p)?;
//! assert!(result.projected); // a binary model projects the An away, and says so
//! match result.outcome {
//!     MinTemperature::Found { temperature_k, .. } => {
//!         assert!(temperature_k < top.temperature_k);
//!     }
//!     other => panic!("unexpected {other:?}"),
//! }
//! # Ok::<(), solvus::SolvusError>(())
//! ```

// Index loops mirror the matrix formulas they implement.
#![allow(clippy::needless_range_loop)]

pub mod binary;
pub mod error;
pub mod model;
mod numeric;
pub mod pyroxene;
pub mod stability;
pub mod ternary;
pub mod thermometry;
pub mod units;
mod user;

pub use binary::{
    BinodalOutcome, BinodalPair, CriticalPoint, Solvus, SolvusPoint, binodal, critical_point,
    solvus_curve, spinodal,
};
pub use error::SolvusError;
pub use model::{
    BUILTIN_IDS, CoherentStrain, Component, Composition, IdealMixing, Margules, MargulesSet,
    ModelAt, ModelKind, ModelRange, SolutionModel,
};
pub use stability::{
    MinTemperature, MinTemperatureResult, StabilityTest, min_crystallisation_temperature,
    tangent_plane_stability,
};
pub use ternary::{TernaryIsotherm, TieLine, ternary_isotherm};
pub use thermometry::{
    AdjustmentOutcome, ComponentTemperature, DEFAULT_UNCERTAINTY, PairAdjustment, PairTemperatures,
    adjust_pair, pair_temperatures,
};
