//! Temperatures for a reintegrated bulk and for a lamella pair: the interface the Monte Carlo
//! loop calls, and its feldspar implementation on the solvus engine.

use serde::Serialize;
use solvus::model::{Composition, SolutionModel};
use solvus::stability::{MinTemperature, min_crystallisation_temperature};
use solvus::units::{bar_from_kbar, celsius_from_kelvin};

/// What one temperature calculation gave.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "outcome", rename_all = "snake_case")]
#[non_exhaustive]
pub enum TemperatureOutcome {
    /// A temperature, °C.
    Value {
        /// Temperature, °C.
        temperature_c: f64,
    },
    /// The bulk is stable as one phase at every temperature the model covers.
    StableAtEveryTemperature,
    /// The bulk is not stable as one phase even at the top of the model's range.
    AboveRange,
    /// The model refused the input (composition or pressure outside its range), with why.
    Refused {
        /// Why.
        reason: String,
    },
}

/// A minimum crystallisation temperature for a bulk composition written over the system's
/// basis.
pub trait BulkThermometer: Sync {
    /// Minimum crystallisation temperature of `bulk` at `pressure_kbar`.
    fn min_temperature(&self, bulk: &[f64], pressure_kbar: f64) -> TemperatureOutcome;
    /// What this thermometer is, for reports (model and citation).
    fn describe(&self) -> String;
}

/// Feldspar: the solvus of a solution model (design §3.4), through the solvus engine.
#[derive(Debug, Clone)]
pub struct SolvusThermometer {
    /// The solution model.
    pub model: SolutionModel,
}

impl BulkThermometer for SolvusThermometer {
    fn min_temperature(&self, bulk: &[f64], pressure_kbar: f64) -> TemperatureOutcome {
        let [ab, or, an] = bulk else {
            return TemperatureOutcome::Refused {
                reason: format!("expected Ab, Or, An fractions, got {}", bulk.len()),
            };
        };
        let composition = match Composition::new(*ab, *or, *an) {
            Ok(c) => c,
            Err(e) => {
                return TemperatureOutcome::Refused {
                    reason: e.to_string(),
                };
            }
        };
        match min_crystallisation_temperature(
            &self.model,
            &composition,
            bar_from_kbar(pressure_kbar),
        ) {
            Ok(result) => match result.outcome {
                MinTemperature::Found { temperature_k, .. } => TemperatureOutcome::Value {
                    temperature_c: celsius_from_kelvin(temperature_k),
                },
                MinTemperature::StableInRange { .. } => {
                    TemperatureOutcome::StableAtEveryTemperature
                }
                MinTemperature::UnstableAtRangeTop { .. } => TemperatureOutcome::AboveRange,
                MinTemperature::OutsideCompositionRange { reason } => {
                    TemperatureOutcome::Refused { reason }
                }
                other => TemperatureOutcome::Refused {
                    reason: format!("{other:?}"),
                },
            },
            Err(e) => TemperatureOutcome::Refused {
                reason: e.to_string(),
            },
        }
    }

    fn describe(&self) -> String {
        format!("solvus of `{}`", self.model.id)
    }
}
