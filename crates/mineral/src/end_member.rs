//! Ideal end-members: stoichiometry, molar mass, molar volume and density, and the reverse
//! calculation from an end-member mixture to oxide weight percents.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::oxide::Oxide;

/// An ideal end-member of feldspar or pyroxene.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
#[non_exhaustive]
pub enum EndMember {
    /// Albite NaAlSi3O8 (Ab).
    Albite,
    /// K-feldspar KAlSi3O8 (Or): orthoclase, sanidine, microcline.
    KFeldspar,
    /// Anorthite CaAl2Si2O8 (An).
    Anorthite,
    /// Celsian BaAl2Si2O8 (Cn).
    Celsian,
    /// Sr-feldspar SrAl2Si2O8.
    SrFeldspar,
    /// Diopside CaMgSi2O6.
    Diopside,
    /// Hedenbergite CaFeSi2O6.
    Hedenbergite,
    /// Enstatite Mg2Si2O6 (on the 6-oxygen basis).
    Enstatite,
    /// Ferrosilite Fe2Si2O6 (on the 6-oxygen basis).
    Ferrosilite,
    /// Jadeite NaAlSi2O6.
    Jadeite,
    /// Aegirine NaFe3+Si2O6.
    Aegirine,
}

impl EndMember {
    /// Every end-member.
    pub const ALL: [EndMember; 11] = [
        EndMember::Albite,
        EndMember::KFeldspar,
        EndMember::Anorthite,
        EndMember::Celsian,
        EndMember::SrFeldspar,
        EndMember::Diopside,
        EndMember::Hedenbergite,
        EndMember::Enstatite,
        EndMember::Ferrosilite,
        EndMember::Jadeite,
        EndMember::Aegirine,
    ];

    /// Moles of each oxide in one formula unit (albite: ½ Na2O, ½ Al2O3, 3 SiO2).
    pub fn oxide_moles(self) -> &'static [(Oxide, f64)] {
        match self {
            EndMember::Albite => &[(Oxide::Na2O, 0.5), (Oxide::Al2O3, 0.5), (Oxide::SiO2, 3.0)],
            EndMember::KFeldspar => &[(Oxide::K2O, 0.5), (Oxide::Al2O3, 0.5), (Oxide::SiO2, 3.0)],
            EndMember::Anorthite => &[(Oxide::CaO, 1.0), (Oxide::Al2O3, 1.0), (Oxide::SiO2, 2.0)],
            EndMember::Celsian => &[(Oxide::BaO, 1.0), (Oxide::Al2O3, 1.0), (Oxide::SiO2, 2.0)],
            EndMember::SrFeldspar => &[(Oxide::SrO, 1.0), (Oxide::Al2O3, 1.0), (Oxide::SiO2, 2.0)],
            EndMember::Diopside => &[(Oxide::CaO, 1.0), (Oxide::MgO, 1.0), (Oxide::SiO2, 2.0)],
            EndMember::Hedenbergite => &[(Oxide::CaO, 1.0), (Oxide::FeO, 1.0), (Oxide::SiO2, 2.0)],
            EndMember::Enstatite => &[(Oxide::MgO, 2.0), (Oxide::SiO2, 2.0)],
            EndMember::Ferrosilite => &[(Oxide::FeO, 2.0), (Oxide::SiO2, 2.0)],
            EndMember::Jadeite => &[(Oxide::Na2O, 0.5), (Oxide::Al2O3, 0.5), (Oxide::SiO2, 2.0)],
            EndMember::Aegirine => &[(Oxide::Na2O, 0.5), (Oxide::Fe2O3, 0.5), (Oxide::SiO2, 2.0)],
        }
    }

    /// Short symbol (`Ab`, `Or`, `Di`, ...).
    pub fn symbol(self) -> &'static str {
        match self {
            EndMember::Albite => "Ab",
            EndMember::KFeldspar => "Or",
            EndMember::Anorthite => "An",
            EndMember::Celsian => "Cn",
            EndMember::SrFeldspar => "SrF",
            EndMember::Diopside => "Di",
            EndMember::Hedenbergite => "Hd",
            EndMember::Enstatite => "En",
            EndMember::Ferrosilite => "Fs",
            EndMember::Jadeite => "Jd",
            EndMember::Aegirine => "Ae",
        }
    }

    /// Molar mass of one formula unit, g/mol, from the oxide masses.
    pub fn molar_mass(self) -> f64 {
        self.oxide_moles()
            .iter()
            .map(|&(oxide, n)| n * oxide.molar_mass())
            .sum()
    }
}

/// Structural state of the alkali feldspar end-members, which changes their molar volumes.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FeldsparState {
    /// Ordered: low albite and microcline.
    Low,
    /// Disordered: high albite and sanidine (the default, as for the primary feldspar of a
    /// reintegration).
    #[default]
    High,
}

/// A published table of end-member molar volumes (at 298 K, 1 bar).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum VolumeDataset {
    /// Holland & Powell (2011, J. Metamorph. Geol. 29:333). The default.
    #[default]
    HollandPowell2011,
    /// Berman (1988, J. Petrol. 29:445).
    Berman1988,
}

impl VolumeDataset {
    /// Citation for reports.
    pub fn citation(self) -> &'static str {
        match self {
            VolumeDataset::HollandPowell2011 => {
                "Holland T.J.B. & Powell R. (2011) J. Metamorph. Geol. 29, 333-383"
            }
            VolumeDataset::Berman1988 => "Berman R.G. (1988) J. Petrol. 29, 445-522",
        }
    }
}

/// Errors of the end-member calculations.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum EndMemberError {
    /// The dataset has no volume for this end-member.
    #[error("{dataset:?} has no molar volume for {end_member:?}")]
    NoVolume {
        /// The end-member asked for.
        end_member: EndMember,
        /// The dataset asked.
        dataset: VolumeDataset,
    },
    /// A mixture fraction is negative or not a finite number.
    #[error("the fraction of {end_member:?} is {value}; fractions must be finite and not negative")]
    BadFraction {
        /// The end-member.
        end_member: EndMember,
        /// The offending value.
        value: f64,
    },
    /// The fractions add up to zero.
    #[error("the end-member fractions add up to zero")]
    EmptyMixture,
    /// The excess volume supplied makes the molar volume non-positive or non-finite.
    #[error("excess volume {excess_j_per_bar} J/bar gives an impossible molar volume")]
    BadExcessVolume {
        /// The excess volume supplied, J/bar.
        excess_j_per_bar: f64,
    },
}

/// Molar volume of an end-member in J/bar (multiply by 10 for cm3/mol).
///
/// Sources: Holland & Powell (2011) and Berman (1988), values as in design §3.1. Holland &
/// Powell list no microcline volume: for the ordered state their K-feldspar is sanidine.
pub fn end_member_volume_j_per_bar(
    end_member: EndMember,
    dataset: VolumeDataset,
    state: FeldsparState,
) -> Result<f64, EndMemberError> {
    use EndMember as E;
    use FeldsparState::{High, Low};
    use VolumeDataset::{Berman1988, HollandPowell2011};
    let volume = match (dataset, end_member, state) {
        (HollandPowell2011, E::Albite, Low) => Some(10.067),
        (HollandPowell2011, E::Albite, High) => Some(10.105),
        (HollandPowell2011, E::KFeldspar, _) => Some(10.871),
        (HollandPowell2011, E::Anorthite, _) => Some(10.079),
        (HollandPowell2011, E::Diopside, _) => Some(6.619),
        (HollandPowell2011, E::Hedenbergite, _) => Some(6.795),
        (HollandPowell2011, E::Enstatite, _) => Some(6.262),
        (HollandPowell2011, E::Ferrosilite, _) => Some(6.592),
        (HollandPowell2011, E::Jadeite, _) => Some(6.040),
        (Berman1988, E::Albite, Low) => Some(10.043),
        (Berman1988, E::Albite, High) => Some(10.083),
        (Berman1988, E::KFeldspar, Low) => Some(10.869),
        (Berman1988, E::KFeldspar, High) => Some(10.896),
        (Berman1988, E::Anorthite, _) => Some(10.075),
        _ => None,
    };
    volume.ok_or(EndMemberError::NoVolume {
        end_member,
        dataset,
    })
}

/// Molar mass, molar volume and density of a mixture of end-members.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MixtureProperties {
    /// Molar mass, g/mol of formula units.
    pub molar_mass_g: f64,
    /// Molar volume, J/bar (linear mixing plus the excess supplied).
    pub molar_volume_j_per_bar: f64,
    /// Molar volume, cm3/mol.
    pub molar_volume_cm3: f64,
    /// Density, g/cm3 (molar mass / molar volume).
    pub density_g_cm3: f64,
}

/// Fractions normalised to sum to one, refusing negative, non-finite or all-zero input.
fn normalised(fractions: &[(EndMember, f64)]) -> Result<Vec<(EndMember, f64)>, EndMemberError> {
    let mut sum = 0.0;
    for &(end_member, value) in fractions {
        if !value.is_finite() || value < 0.0 {
            return Err(EndMemberError::BadFraction { end_member, value });
        }
        sum += value;
    }
    if sum <= 0.0 {
        return Err(EndMemberError::EmptyMixture);
    }
    Ok(fractions.iter().map(|&(e, x)| (e, x / sum)).collect())
}

/// Molar mass, molar volume and density of a mixture: V = Σ x_i V_i + V_excess, M = Σ x_i M_i,
/// ρ = M / V. The excess volume (J/bar) comes from the caller's solution model (the W_V terms).
/// Fractions are normalised to sum to one.
///
/// ```
/// use mineral::{EndMember, FeldsparState, VolumeDataset, mixture_properties};
/// let san = mixture_properties(&[(EndMember::KFeldspar, 1.0)], VolumeDataset::HollandPowell2011,
///     FeldsparState::High, 0.0).unwrap();
/// assert!((san.density_g_cm3 - 2.560).abs() < 0.005);
/// ```
pub fn mixture_properties(
    fractions: &[(EndMember, f64)],
    dataset: VolumeDataset,
    state: FeldsparState,
    excess_volume_j_per_bar: f64,
) -> Result<MixtureProperties, EndMemberError> {
    let fractions = normalised(fractions)?;
    let mut mass = 0.0;
    let mut volume = excess_volume_j_per_bar;
    for &(end_member, x) in &fractions {
        if x == 0.0 {
            continue;
        }
        mass += x * end_member.molar_mass();
        volume += x * end_member_volume_j_per_bar(end_member, dataset, state)?;
    }
    if !(volume.is_finite() && volume > 0.0) {
        return Err(EndMemberError::BadExcessVolume {
            excess_j_per_bar: excess_volume_j_per_bar,
        });
    }
    let volume_cm3 = volume * 10.0;
    Ok(MixtureProperties {
        molar_mass_g: mass,
        molar_volume_j_per_bar: volume,
        molar_volume_cm3: volume_cm3,
        density_g_cm3: mass / volume_cm3,
    })
}

/// Ideal oxide weight percents of an end-member mixture (the reverse of a formula
/// calculation). Fractions are mole fractions of formula units, normalised to sum to one.
///
/// ```
/// use mineral::{EndMember, Oxide, ideal_oxide_wt};
/// let wt = ideal_oxide_wt(&[(EndMember::Albite, 0.43), (EndMember::KFeldspar, 0.55),
///     (EndMember::Anorthite, 0.02)]).unwrap();
/// let total: f64 = wt.values().sum();
/// assert!((total - 100.0).abs() < 1e-9);
/// ```
pub fn ideal_oxide_wt(
    fractions: &[(EndMember, f64)],
) -> Result<BTreeMap<Oxide, f64>, EndMemberError> {
    let fractions = normalised(fractions)?;
    let mut mass: BTreeMap<Oxide, f64> = BTreeMap::new();
    for &(end_member, x) in &fractions {
        for &(oxide, n) in end_member.oxide_moles() {
            *mass.entry(oxide).or_default() += x * n * oxide.molar_mass();
        }
    }
    let total: f64 = mass.values().sum();
    for value in mass.values_mut() {
        *value *= 100.0 / total;
    }
    mass.retain(|_, v| *v > 0.0);
    Ok(mass)
}
