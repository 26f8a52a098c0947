//! The two reintegration routes of design §3.2.
//!
//! Area fraction on a random section estimates volume fraction (Delesse principle; Delesse 1847,
//! as in any stereology text). Then:
//! - molar route: moles of phase i per unit volume n_i = f_i / V_i(X_i), with V_i the end-member
//!   volumes mixed linearly plus the solution model's excess volume; bulk X = Σ n_i X_i / Σ n_i;
//! - mass route: mass of phase i per unit volume m_i = f_i ρ_i; bulk oxide wt% = Σ m_i w_i / Σ m_i,
//!   then the structural formula of the bulk.
//!
//! With ρ_i = M_i / V_i and stoichiometric analyses the routes agree exactly, which is checked.

use std::collections::BTreeMap;

use mineral::{Analysis, EndMember, FeldsparState, Oxide, VolumeDataset, ideal_oxide_wt};
use serde::{Deserialize, Serialize};

use crate::error::ReintegrationError;
use crate::input::GrainInput;
use crate::system::MineralSystem;

/// Excess molar volume of a phase from a solution model, J/bar.
pub trait ExcessVolume: Sync {
    /// Excess volume of a composition written over the system's basis, J/bar.
    fn excess_j_per_bar(&self, fractions: &[f64]) -> f64;
    /// A short description for reports.
    fn describe(&self) -> String;
}

/// No excess volume: ideal (linear) mixing of volumes.
#[derive(Debug, Clone, Copy, Default)]
pub struct IdealVolume;

impl ExcessVolume for IdealVolume {
    fn excess_j_per_bar(&self, _fractions: &[f64]) -> f64 {
        0.0
    }
    fn describe(&self) -> String {
        "ideal mixing of volumes".into()
    }
}

impl ExcessVolume for solvus::model::SolutionModel {
    fn excess_j_per_bar(&self, fractions: &[f64]) -> f64 {
        match fractions {
            [ab, or, an] => solvus::model::Composition::new(*ab, *or, *an)
                .map(|x| self.excess_volume_j_per_bar(&x))
                .unwrap_or(0.0),
            _ => 0.0,
        }
    }
    fn describe(&self) -> String {
        format!("excess volume from the W_V terms of `{}`", self.id)
    }
}

/// Which end-member volumes to use.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct VolumeSettings {
    /// The published table.
    pub dataset: VolumeDataset,
    /// Structural state of alkali feldspar (high: high albite + sanidine, as befits the primary
    /// crystal).
    pub state: FeldsparState,
}

impl VolumeSettings {
    /// End-member volumes of a system's basis, J/bar.
    pub(crate) fn basis_volumes(
        &self,
        system: MineralSystem,
        grain: &str,
    ) -> Result<Vec<f64>, ReintegrationError> {
        system
            .basis()
            .iter()
            .map(|&e| {
                mineral::end_member_volume_j_per_bar(e, self.dataset, self.state).map_err(|err| {
                    ReintegrationError::Volume {
                        grain: grain.to_string(),
                        message: err.to_string(),
                    }
                })
            })
            .collect()
    }
}

/// A deterministic reintegration of one grain.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Reintegration {
    /// End-members of the bulk composition, in order.
    pub basis: Vec<EndMember>,
    /// Volume fraction of each phase: the micrographs' area fractions combined by measured area.
    pub volume_fractions: Vec<f64>,
    /// Molar volume of each phase, J/bar.
    pub molar_volumes_j_per_bar: Vec<f64>,
    /// Molar mass of each phase, g/mol.
    pub molar_masses_g: Vec<f64>,
    /// Density of each phase used by the mass route, g/cm3.
    pub densities_g_cm3: Vec<f64>,
    /// Bulk composition by the molar route.
    pub molar: Vec<f64>,
    /// Bulk composition by the mass route.
    pub mass: Vec<f64>,
    /// Bulk oxide wt% by the mass route.
    pub bulk_oxides_wt: BTreeMap<Oxide, f64>,
    /// Largest difference between the two routes, mole fraction (for pyroxene in Wo, En, Fs; see
    /// [`MineralSystem::comparison_coordinates`]).
    pub route_difference: f64,
    /// Notes for the user (inconsistent densities, routes that disagree).
    pub notes: Vec<String>,
}

/// Area fractions of several micrographs combined, weighted by measured area.
pub(crate) fn combine_by_area(micrographs: &[(f64, Vec<f64>)]) -> Vec<f64> {
    let total_area: f64 = micrographs.iter().map(|(a, _)| a).sum();
    let n = micrographs.first().map_or(0, |(_, f)| f.len());
    (0..n)
        .map(|i| micrographs.iter().map(|(a, f)| a * f[i]).sum::<f64>() / total_area)
        .collect()
}

/// Molar volume of a phase, J/bar: Σ x_j V_j + V_ex(x).
pub(crate) fn phase_volume(x: &[f64], volumes: &[f64], excess: &dyn ExcessVolume) -> f64 {
    x.iter().zip(volumes).map(|(a, v)| a * v).sum::<f64>() + excess.excess_j_per_bar(x)
}

/// Molar mass of a phase, g/mol: Σ x_j M_j.
pub(crate) fn phase_mass(x: &[f64], basis: &[EndMember]) -> f64 {
    x.iter().zip(basis).map(|(a, e)| a * e.molar_mass()).sum()
}

/// The molar route: bulk X = Σ (f_i / V_i) X_i / Σ (f_i / V_i).
pub(crate) fn molar_route(
    volume_fractions: &[f64],
    phase_x: &[Vec<f64>],
    phase_v: &[f64],
) -> Vec<f64> {
    let n: Vec<f64> = volume_fractions
        .iter()
        .zip(phase_v)
        .map(|(f, v)| f / v)
        .collect();
    let total: f64 = n.iter().sum();
    let k = phase_x.first().map_or(0, Vec::len);
    (0..k)
        .map(|j| n.iter().zip(phase_x).map(|(ni, x)| ni * x[j]).sum::<f64>() / total)
        .collect()
}

/// The mass route's bulk analysis: oxide wt% = Σ (f_i ρ_i) w_i / Σ (f_i ρ_i), each phase's
/// analysis first normalised to 100 wt%.
pub(crate) fn mass_route_oxides(
    volume_fractions: &[f64],
    densities: &[f64],
    phase_oxides: &[BTreeMap<Oxide, f64>],
) -> BTreeMap<Oxide, f64> {
    let masses: Vec<f64> = volume_fractions
        .iter()
        .zip(densities)
        .map(|(f, r)| f * r)
        .collect();
    let total_mass: f64 = masses.iter().sum();
    let mut bulk: BTreeMap<Oxide, f64> = BTreeMap::new();
    for (m, oxides) in masses.iter().zip(phase_oxides) {
        let sum: f64 = oxides.values().filter(|v| **v > 0.0).sum();
        for (&oxide, &wt) in oxides {
            if wt > 0.0 {
                *bulk.entry(oxide).or_default() += m / total_mass * wt * 100.0 / sum;
            }
        }
    }
    bulk
}

/// Reintegrate one grain with its nominal values.
///
/// # Errors
/// Invalid input, or an end-member the volume table lacks.
pub fn reintegrate(
    grain: &GrainInput,
    volumes: &VolumeSettings,
    excess: &dyn ExcessVolume,
) -> Result<Reintegration, ReintegrationError> {
    let grain = grain.validated()?;
    let basis = grain.system.basis();
    let end_member_v = volumes.basis_volumes(grain.system, &grain.label)?;
    let volume_fractions = combine_by_area(
        &grain
            .micrographs
            .iter()
            .map(|m| (m.measured_area, m.fractions.clone()))
            .collect::<Vec<_>>(),
    );
    let phase_x: Vec<Vec<f64>> = grain.phases.iter().map(|p| p.fractions.clone()).collect();
    let phase_v: Vec<f64> = phase_x
        .iter()
        .map(|x| phase_volume(x, &end_member_v, excess))
        .collect();
    let phase_m: Vec<f64> = phase_x.iter().map(|x| phase_mass(x, basis)).collect();
    let mut notes = Vec::new();
    let densities: Vec<f64> = grain
        .phases
        .iter()
        .zip(phase_m.iter().zip(&phase_v))
        .map(|(p, (m, v))| {
            let from_volume = m / (10.0 * v);
            match p.density_g_cm3 {
                Some(rho) => {
                    let off = (rho - from_volume) / from_volume;
                    if off.abs() > 0.005 {
                        notes.push(format!(
                            "the density entered for '{}' ({rho:.3} g/cm3) differs from molar mass / molar volume ({from_volume:.3}) by {:+.1} %: the mass and molar routes will disagree",
                            p.label,
                            100.0 * off
                        ));
                    }
                    rho
                }
                None => from_volume,
            }
        })
        .collect();
    let molar = molar_route(&volume_fractions, &phase_x, &phase_v);
    let phase_oxides: Vec<BTreeMap<Oxide, f64>> = grain
        .phases
        .iter()
        .map(|p| match &p.oxides_wt {
            Some(o) => Ok(o.clone()),
            None => ideal_oxide_wt(
                &basis
                    .iter()
                    .copied()
                    .zip(p.fractions.iter().copied())
                    .collect::<Vec<_>>(),
            )
            .map_err(|e| ReintegrationError::Invalid {
                grain: grain.label.clone(),
                place: format!("phase '{}'", p.label),
                message: e.to_string(),
            }),
        })
        .collect::<Result<_, _>>()?;
    let bulk_oxides_wt = mass_route_oxides(&volume_fractions, &densities, &phase_oxides);
    let bulk_analysis = Analysis {
        oxides_wt: bulk_oxides_wt.clone(),
        ..Analysis::default()
    };
    let mass =
        grain
            .system
            .fractions_of(&bulk_analysis)
            .ok_or_else(|| ReintegrationError::Invalid {
                grain: grain.label.clone(),
                place: "bulk".into(),
                message: "the mass-route bulk analysis has none of the system's cations".into(),
            })?;
    let route_difference = grain
        .system
        .comparison_coordinates(&molar)
        .iter()
        .zip(&grain.system.comparison_coordinates(&mass))
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    if route_difference > 0.005 {
        notes.push(format!(
            "the molar and mass routes differ by up to {route_difference:.3} in mole fraction: check non-stoichiometric analyses and entered densities"
        ));
    }
    Ok(Reintegration {
        basis: basis.to_vec(),
        volume_fractions,
        molar_volumes_j_per_bar: phase_v,
        molar_masses_g: phase_m,
        densities_g_cm3: densities,
        molar,
        mass,
        bulk_oxides_wt,
        route_difference,
        notes,
    })
}
