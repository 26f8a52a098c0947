//! Reintegration of exsolved grains: phase compositions and modal fractions to the bulk
//! composition of the primary crystal, with Monte Carlo uncertainty, and its minimum
//! crystallisation temperature.
//!
//! - [`reintegrate`]: the molar and mass routes of design §3.2 with their consistency check.
//! - [`monte_carlo`]: propagation of modal, compositional, volume, classification-level and
//!   pressure uncertainty, seeded and reproducible for any thread count, with progress and
//!   cancellation through [`JobControl`].
//! - [`aggregate_sample`]: a sample's result from its grains.
//!
//! ```
//! use reintegration::*;
//! // Host Or92 Ab7 An1 and lamellae Ab95 Or3 An2 at area fractions 0.60 / 0.40.
//! let grain = GrainInput {
//!     label: "g1".into(),
//!     system: MineralSystem::Feldspar,
//!     phases: vec![
//!         PhaseInput { label: "host".into(), fractions: vec![0.07, 0.92, 0.01], spots: vec![],
//!             sigma: vec![], oxides_wt: None, density_g_cm3: None },
//!         PhaseInput { label: "lamella".into(), fractions: vec![0.95, 0.03, 0.02], spots: vec![],
//!             sigma: vec![], oxides_wt: None, density_g_cm3: None },
//!     ],
//!     micrographs: vec![ModalInput { label: "bse1".into(), measured_area: 1.0,
//!         fractions: vec![0.6, 0.4], ci95: vec![(0.58, 0.62), (0.38, 0.42)], level_sensitivity: None }],
//! };
//! let r = reintegrate(&grain, &VolumeSettings::default(), &IdealVolume).unwrap();
//! assert!((r.molar[1] - 0.55).abs() < 0.01);
//! assert!(r.route_difference < 1e-9);
//! ```

mod error;
mod input;
mod montecarlo;
pub mod rng;
mod route;
mod sample;
mod stats;
mod system;
mod thermometer;

pub use error::ReintegrationError;
pub use input::{GrainInput, ModalInput, PhaseInput, SUM_TOLERANCE};
pub use montecarlo::{
    CompositionSpread, JobControl, MonteCarloResult, MonteCarloSettings, OutcomeCounts, monte_carlo,
};
pub use route::{ExcessVolume, IdealVolume, Reintegration, VolumeSettings, reintegrate};
pub use sample::{GrainSummary, SampleSummary, aggregate_sample};
pub use stats::{Summary, percentile_sorted, summarise};
pub use system::MineralSystem;
pub use thermometer::{BulkThermometer, SolvusThermometer, TemperatureOutcome};
