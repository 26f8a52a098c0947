//! What a grain's reintegration needs: its phases (compositions) and its micrographs (modal
//! fractions), validated once.

use std::collections::BTreeMap;

use mineral::Oxide;
use serde::{Deserialize, Serialize};

use crate::error::ReintegrationError;
use crate::system::MineralSystem;

/// One phase of an exsolved grain (the host, or the lamellae).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PhaseInput {
    /// Label shown in results (`host`, `lamella`).
    pub label: String,
    /// Mean end-member fractions over the system's basis.
    pub fractions: Vec<f64>,
    /// Fractions of each spot analysis over the basis (may be empty). With two or more spots
    /// their scatter sets the composition uncertainty.
    #[serde(default)]
    pub spots: Vec<Vec<f64>>,
    /// One-sigma uncertainty of each fraction, used when there are fewer than two spots.
    #[serde(default)]
    pub sigma: Vec<f64>,
    /// Mean oxide analysis, wt%, for the mass route; when absent the ideal oxides of
    /// `fractions` are used.
    #[serde(default)]
    pub oxides_wt: Option<BTreeMap<Oxide, f64>>,
    /// A density entered by the user, g/cm3; when absent the density is molar mass / molar
    /// volume.
    #[serde(default)]
    pub density_g_cm3: Option<f64>,
}

/// Modal fractions of the phases measured on one micrograph.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModalInput {
    /// Label of the micrograph.
    pub label: String,
    /// Measured area (region minus exclusions), µm² or pixels: the weight when micrographs of a
    /// grain are combined.
    pub measured_area: f64,
    /// Area fraction of each phase, in the order of the grain's phases.
    pub fractions: Vec<f64>,
    /// 95 % interval of each fraction (for example from a block bootstrap).
    pub ci95: Vec<(f64, f64)>,
    /// Fractions at the classification level minus and plus its stated step, per phase, when
    /// known: the sensitivity to where the level is put.
    #[serde(default)]
    pub level_sensitivity: Option<Vec<(f64, f64)>>,
}

/// Everything needed to reintegrate one grain.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GrainInput {
    /// Grain label.
    pub label: String,
    /// Mineral system.
    pub system: MineralSystem,
    /// The phases.
    pub phases: Vec<PhaseInput>,
    /// Modal measurements, one per micrograph.
    pub micrographs: Vec<ModalInput>,
}

/// Largest distance of a set of fractions from summing to one before it is refused rather than
/// normalised (allows compositions rounded to two decimals).
pub const SUM_TOLERANCE: f64 = 0.02;

impl GrainInput {
    /// Check the input and normalise fractions that sum to one within [`SUM_TOLERANCE`].
    ///
    /// # Errors
    /// [`ReintegrationError::Invalid`] naming the grain, the phase or micrograph, and the field.
    pub fn validated(&self) -> Result<GrainInput, ReintegrationError> {
        let invalid = |place: String, message: String| ReintegrationError::Invalid {
            grain: self.label.clone(),
            place,
            message,
        };
        let basis = self.system.basis().len();
        if self.phases.is_empty() {
            return Err(invalid("phases".into(), "the grain has no phase".into()));
        }
        if self.micrographs.is_empty() {
            return Err(invalid(
                "micrographs".into(),
                "the grain has no modal measurement".into(),
            ));
        }
        let mut out = self.clone();
        for phase in &mut out.phases {
            let place = format!("phase '{}'", phase.label);
            phase.fractions = normalised(&phase.fractions, basis)
                .map_err(|m| invalid(format!("{place}, fractions"), m))?;
            for (k, spot) in phase.spots.iter_mut().enumerate() {
                *spot = normalised(spot, basis)
                    .map_err(|m| invalid(format!("{place}, spot {}", k + 1), m))?;
            }
            if !phase.sigma.is_empty()
                && (phase.sigma.len() != basis
                    || phase.sigma.iter().any(|s| !s.is_finite() || *s < 0.0))
            {
                return Err(invalid(
                    format!("{place}, sigma"),
                    format!("expected {basis} non-negative uncertainties"),
                ));
            }
            if let Some(rho) = phase.density_g_cm3
                && !(rho.is_finite() && rho > 0.0)
            {
                return Err(invalid(
                    format!("{place}, density"),
                    format!("density {rho} g/cm3 is not a positive number"),
                ));
            }
            if let Some(oxides) = &phase.oxides_wt
                && (oxides.values().any(|v| !v.is_finite())
                    || oxides.values().filter(|v| **v > 0.0).sum::<f64>() <= 0.0)
            {
                return Err(invalid(
                    format!("{place}, oxides"),
                    "the oxide analysis has no positive finite value".into(),
                ));
            }
        }
        let n = self.phases.len();
        for m in &mut out.micrographs {
            let place = format!("micrograph '{}'", m.label);
            if !(m.measured_area.is_finite() && m.measured_area > 0.0) {
                return Err(invalid(
                    format!("{place}, measured area"),
                    format!("{} is not a positive area", m.measured_area),
                ));
            }
            m.fractions = normalised(&m.fractions, n)
                .map_err(|msg| invalid(format!("{place}, fractions"), msg))?;
            if m.ci95.len() != n
                || m.ci95
                    .iter()
                    .any(|(lo, hi)| !(lo.is_finite() && hi.is_finite() && lo <= hi))
            {
                return Err(invalid(
                    format!("{place}, ci95"),
                    format!("expected {n} intervals (low <= high)"),
                ));
            }
            if let Some(s) = &m.level_sensitivity
                && (s.len() != n || s.iter().any(|(a, b)| !(a.is_finite() && b.is_finite())))
            {
                return Err(invalid(
                    format!("{place}, level sensitivity"),
                    format!("expected {n} pairs of finite fractions"),
                ));
            }
        }
        Ok(out)
    }
}

/// Fractions normalised to one; refused if the length is wrong, a value is negative or not
/// finite, or the sum is further than [`SUM_TOLERANCE`] from one.
pub(crate) fn normalised(values: &[f64], expected_len: usize) -> Result<Vec<f64>, String> {
    if values.len() != expected_len {
        return Err(format!(
            "expected {expected_len} fractions, found {}",
            values.len()
        ));
    }
    if let Some(v) = values.iter().find(|v| !v.is_finite() || **v < 0.0) {
        return Err(format!("fraction {v} is negative or not a number"));
    }
    let sum: f64 = values.iter().sum();
    if (sum - 1.0).abs() > SUM_TOLERANCE {
        return Err(format!(
            "fractions sum to {sum:.4}, not 1 (tolerance {SUM_TOLERANCE})"
        ));
    }
    Ok(values.iter().map(|v| v / sum).collect())
}
