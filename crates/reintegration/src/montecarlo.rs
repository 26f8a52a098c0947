//! Monte Carlo propagation of every input's uncertainty to the bulk composition and the minimum
//! crystallisation temperature.
//!
//! Each draw perturbs, independently:
//! - each micrograph's area fractions: normal with σ = half-width of the 95 % interval / 1.96;
//! - the classification level: one normal deviate per micrograph scales the fractions' response
//!   to a level step (from the sensitivity pair), moving all phases together;
//! - each phase's composition: the standard error of its spots' mean (σ/√n), or its stated σ;
//! - each end-member volume (relative σ, shared by all phases of the draw);
//! - the pressure (normal, kept positive).
//!
//! Fractions are clipped at zero and renormalised. Draw `i` of seed `s` uses its own random
//! stream ([`crate::rng::DrawRng::for_draw`]), so results do not depend on the number of threads.

use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::error::ReintegrationError;
use crate::input::GrainInput;
use crate::rng::DrawRng;
use crate::route::{ExcessVolume, VolumeSettings, combine_by_area, molar_route, phase_volume};
use crate::stats::{Summary, summarise};
use crate::thermometer::{BulkThermometer, TemperatureOutcome};

/// z of the two-sided 95 % normal interval.
const Z95: f64 = 1.959_963_984_540_054;

/// How spot scatter sets a phase's composition uncertainty.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CompositionSpread {
    /// Standard error of the mean of the spots, σ/√n: the phase is homogeneous and the spots
    /// sample it (the default).
    #[default]
    StandardError,
    /// The spots' standard deviation: each draw could be any spot (conservative, for zoned or
    /// heterogeneous phases).
    Scatter,
}

/// Settings of a Monte Carlo run.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MonteCarloSettings {
    /// Number of draws.
    pub draws: usize,
    /// Seed; the same seed gives the same result on any machine and thread count.
    pub seed: u64,
    /// Pressure, kbar.
    pub pressure_kbar: f64,
    /// One-sigma uncertainty of the pressure, kbar.
    pub pressure_sigma_kbar: f64,
    /// One-sigma relative uncertainty of each end-member volume (0.002 = 0.2 %).
    pub volume_rel_sigma: f64,
    /// How spot scatter is used.
    pub composition_spread: CompositionSpread,
    /// Whether to compute the minimum temperature for every draw.
    pub temperatures: bool,
}

impl Default for MonteCarloSettings {
    fn default() -> Self {
        MonteCarloSettings {
            draws: 2000,
            seed: 1,
            pressure_kbar: 1.0,
            pressure_sigma_kbar: 0.0,
            volume_rel_sigma: 0.002,
            composition_spread: CompositionSpread::StandardError,
            temperatures: true,
        }
    }
}

impl MonteCarloSettings {
    fn check(&self) -> Result<(), ReintegrationError> {
        let bad = |m: String| Err(ReintegrationError::Settings(m));
        if self.draws == 0 || self.draws > 10_000_000 {
            return bad(format!(
                "{} draws: use between 1 and 10 000 000",
                self.draws
            ));
        }
        if !(self.pressure_kbar.is_finite() && self.pressure_kbar > 0.0) {
            return bad(format!(
                "pressure {} kbar must be positive",
                self.pressure_kbar
            ));
        }
        for (name, v) in [
            ("pressure sigma", self.pressure_sigma_kbar),
            ("volume relative sigma", self.volume_rel_sigma),
        ] {
            if !(v.is_finite() && v >= 0.0) {
                return bad(format!("{name} {v} must be zero or positive"));
            }
        }
        Ok(())
    }
}

/// Progress and cancellation shared between a running job and whoever watches it.
#[derive(Debug, Default)]
pub struct JobControl {
    /// Draws finished so far.
    pub done: AtomicUsize,
    /// Set to ask the job to stop; it returns [`ReintegrationError::Cancelled`].
    pub cancel: AtomicBool,
}

impl JobControl {
    /// Fraction done, 0-1, for a job of `total` draws.
    pub fn fraction(&self, total: usize) -> f32 {
        if total == 0 {
            return 1.0;
        }
        (self.done.load(Ordering::Relaxed) as f64 / total as f64) as f32
    }
}

/// How the minimum-temperature calculations of a run ended.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize)]
pub struct OutcomeCounts {
    /// Draws with a temperature.
    pub found: usize,
    /// Draws stable as one phase at every temperature of the model.
    pub stable_at_every_temperature: usize,
    /// Draws unstable even at the top of the model's range.
    pub above_range: usize,
    /// Draws the model refused.
    pub refused: usize,
}

/// The result of a Monte Carlo run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MonteCarloResult {
    /// Settings used.
    pub settings: MonteCarloSettings,
    /// Summary of each bulk fraction (molar route), in basis order.
    pub bulk: Vec<Summary>,
    /// Summary of the minimum crystallisation temperature over the draws that gave one, °C.
    pub min_temperature_c: Option<Summary>,
    /// How the temperature calculations ended.
    pub outcomes: OutcomeCounts,
    /// One reason the model gave for refusing a draw, if any did.
    pub first_refusal: Option<String>,
    /// Every draw's bulk composition (for clouds on figures).
    pub bulk_draws: Vec<Vec<f64>>,
    /// Every draw's minimum temperature, °C (`None` where there was none).
    pub temperature_draws: Vec<Option<f64>>,
}

/// Normal perturbation of fractions by per-component σ, clipped at zero and renormalised.
fn perturbed(mean: &[f64], sigma: &[f64], rng: &mut DrawRng) -> Vec<f64> {
    let mut x: Vec<f64> = mean
        .iter()
        .zip(sigma)
        .map(|(m, s)| (m + s * rng.normal()).max(0.0))
        .collect();
    let sum: f64 = x.iter().sum();
    if sum > 0.0 {
        x.iter_mut().for_each(|v| *v /= sum);
        x
    } else {
        mean.to_vec()
    }
}

/// Per-component σ of a phase's composition for the Monte Carlo draws.
fn composition_sigma(phase: &crate::input::PhaseInput, spread: CompositionSpread) -> Vec<f64> {
    let k = phase.fractions.len();
    if phase.spots.len() >= 2 {
        let n = phase.spots.len() as f64;
        (0..k)
            .map(|j| {
                let mean = phase.spots.iter().map(|s| s[j]).sum::<f64>() / n;
                let sd = (phase
                    .spots
                    .iter()
                    .map(|s| (s[j] - mean).powi(2))
                    .sum::<f64>()
                    / (n - 1.0))
                    .sqrt();
                match spread {
                    CompositionSpread::StandardError => sd / n.sqrt(),
                    CompositionSpread::Scatter => sd,
                }
            })
            .collect()
    } else if phase.sigma.len() == k {
        phase.sigma.clone()
    } else {
        vec![0.0; k]
    }
}

/// Draws per unit of work handed to a thread (and between progress updates).
const CHUNK: usize = 32;

/// Run the Monte Carlo propagation for one grain.
///
/// # Errors
/// Invalid input or settings; [`ReintegrationError::Cancelled`] if `control.cancel` was set.
pub fn monte_carlo(
    grain: &GrainInput,
    volumes: &VolumeSettings,
    excess: &dyn ExcessVolume,
    thermometer: Option<&dyn BulkThermometer>,
    settings: &MonteCarloSettings,
    control: &JobControl,
) -> Result<MonteCarloResult, ReintegrationError> {
    settings.check()?;
    let grain = grain.validated()?;
    let end_member_v = volumes.basis_volumes(grain.system, &grain.label)?;
    let sigmas: Vec<Vec<f64>> = grain
        .phases
        .iter()
        .map(|p| composition_sigma(p, settings.composition_spread))
        .collect();
    let modal_sigma: Vec<Vec<f64>> = grain
        .micrographs
        .iter()
        .map(|m| {
            m.ci95
                .iter()
                .map(|(lo, hi)| (hi - lo) / (2.0 * Z95))
                .collect()
        })
        .collect();

    let one_draw = |index: usize| -> (Vec<f64>, TemperatureOutcome) {
        let mut rng = DrawRng::for_draw(settings.seed, index as u64);
        let measured: Vec<(f64, Vec<f64>)> = grain
            .micrographs
            .iter()
            .zip(&modal_sigma)
            .map(|(m, sigma)| {
                let mut f = perturbed(&m.fractions, sigma, &mut rng);
                if let Some(sens) = &m.level_sensitivity {
                    let z = rng.normal();
                    for (fi, (minus, plus)) in f.iter_mut().zip(sens) {
                        *fi = (*fi + z * (plus - minus) / 2.0).max(0.0);
                    }
                    let s: f64 = f.iter().sum();
                    if s > 0.0 {
                        f.iter_mut().for_each(|v| *v /= s);
                    }
                }
                (m.measured_area, f)
            })
            .collect();
        let fractions = combine_by_area(&measured);
        let v_end: Vec<f64> = end_member_v
            .iter()
            .map(|v| v * (1.0 + settings.volume_rel_sigma * rng.normal()))
            .collect();
        let phase_x: Vec<Vec<f64>> = grain
            .phases
            .iter()
            .zip(&sigmas)
            .map(|(p, s)| perturbed(&p.fractions, s, &mut rng))
            .collect();
        let phase_v: Vec<f64> = phase_x
            .iter()
            .map(|x| phase_volume(x, &v_end, excess))
            .collect();
        let bulk = molar_route(&fractions, &phase_x, &phase_v);
        let pressure = {
            let p = settings.pressure_kbar + settings.pressure_sigma_kbar * rng.normal();
            p.max(settings.pressure_kbar * 1e-3)
        };
        let t = match (thermometer, settings.temperatures) {
            (Some(th), true) => th.min_temperature(&bulk, pressure),
            _ => TemperatureOutcome::Refused {
                reason: "no thermometer".into(),
            },
        };
        (bulk, t)
    };

    let chunks: Vec<Vec<(Vec<f64>, TemperatureOutcome)>> = (0..settings.draws)
        .collect::<Vec<_>>()
        .par_chunks(CHUNK)
        .map(|idx| {
            if control.cancel.load(Ordering::Relaxed) {
                return Err(ReintegrationError::Cancelled);
            }
            let out: Vec<_> = idx.iter().map(|&i| one_draw(i)).collect();
            control.done.fetch_add(idx.len(), Ordering::Relaxed);
            Ok(out)
        })
        .collect::<Result<_, _>>()?;
    let draws: Vec<(Vec<f64>, TemperatureOutcome)> = chunks.into_iter().flatten().collect();

    let k = grain.system.basis().len();
    let bulk = (0..k)
        .filter_map(|j| summarise(&draws.iter().map(|(b, _)| b[j]).collect::<Vec<_>>()))
        .collect();
    let mut outcomes = OutcomeCounts::default();
    let mut first_refusal = None;
    let temperature_draws: Vec<Option<f64>> = draws
        .iter()
        .map(|(_, t)| match t {
            TemperatureOutcome::Value { temperature_c } => {
                outcomes.found += 1;
                Some(*temperature_c)
            }
            TemperatureOutcome::StableAtEveryTemperature => {
                outcomes.stable_at_every_temperature += 1;
                None
            }
            TemperatureOutcome::AboveRange => {
                outcomes.above_range += 1;
                None
            }
            TemperatureOutcome::Refused { reason } => {
                outcomes.refused += 1;
                first_refusal.get_or_insert_with(|| reason.clone());
                None
            }
        })
        .collect();
    let found: Vec<f64> = temperature_draws.iter().flatten().copied().collect();
    Ok(MonteCarloResult {
        settings: *settings,
        bulk,
        min_temperature_c: summarise(&found),
        outcomes,
        first_refusal: if thermometer.is_some() && settings.temperatures {
            first_refusal
        } else {
            None
        },
        bulk_draws: draws.into_iter().map(|(b, _)| b).collect(),
        temperature_draws,
    })
}
