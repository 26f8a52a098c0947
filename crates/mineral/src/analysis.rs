//! A spot analysis (oxide weight percents with identifiers) and the cation arithmetic shared by
//! every mineral's structural formula.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::element::Element;
use crate::oxide::Oxide;

/// Where a spot sits in the study: sample, grain, phase and spot labels (any may be empty).
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct SpotId {
    /// Sample label.
    pub sample: String,
    /// Grain label within the sample.
    pub grain: String,
    /// Phase label within the grain (for example `host` or `lamella`).
    pub phase: String,
    /// Spot label, unique within the file.
    pub spot: String,
}

impl SpotId {
    /// A compact one-line label, `sample/grain/phase/spot`, skipping empty parts.
    pub fn label(&self) -> String {
        [&self.sample, &self.grain, &self.phase, &self.spot]
            .into_iter()
            .filter(|s| !s.is_empty())
            .cloned()
            .collect::<Vec<_>>()
            .join("/")
    }
}

/// How a value that is not a plain number was reported.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Censored {
    /// Reported below the detection limit (`bdl`, `<0.02`, ...); read as zero.
    BelowDetection {
        /// The text as written in the file.
        text: String,
        /// The stated detection limit in wt%, when the cell gave one (`<0.02`).
        limit_wt: Option<f64>,
    },
    /// Not determined (`n.d.`, `n/a`, `-`, an empty cell); read as zero.
    NotDetermined {
        /// The text as written in the file (empty for an empty cell).
        text: String,
    },
}

/// One spot analysis: oxide weight percents and where the spot belongs.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Analysis {
    /// Identifiers of the spot.
    pub id: SpotId,
    /// Oxide weight percents; an oxide absent from the map was not analysed.
    pub oxides_wt: BTreeMap<Oxide, f64>,
    /// Values that were read as zero because the file reported them as not determined or below
    /// detection.
    pub censored: BTreeMap<Oxide, Censored>,
    /// The analytical total as written in the file, if it had a total column.
    pub reported_total_wt: Option<f64>,
}

impl Analysis {
    /// An analysis from `(oxide, wt%)` pairs, with empty identifiers.
    pub fn from_oxides(values: &[(Oxide, f64)]) -> Self {
        Analysis {
            oxides_wt: values.iter().copied().collect(),
            ..Analysis::default()
        }
    }

    /// Weight percent of one oxide (zero when not analysed).
    pub fn wt(&self, oxide: Oxide) -> f64 {
        self.oxides_wt.get(&oxide).copied().unwrap_or(0.0)
    }

    /// Sum of the oxide weight percents.
    pub fn total_wt(&self) -> f64 {
        self.oxides_wt.values().sum()
    }

    /// Mass-fraction-weighted mean atomic number, Z̄ = Σ c_i Z_i over elements (oxygen included).
    ///
    /// This is the usual estimate of backscattered-electron brightness: the brighter phase has the
    /// higher Z̄ (common practice; the mass-fraction rule is the textbook approximation, from
    /// memory). Returns `None` for an analysis with no positive oxide.
    pub fn mean_atomic_number(&self) -> Option<f64> {
        let mut mass_by_element: BTreeMap<Element, f64> = BTreeMap::new();
        for (&oxide, &wt) in &self.oxides_wt {
            if !(wt.is_finite() && wt > 0.0) {
                continue;
            }
            let moles = wt / oxide.molar_mass();
            let cation = oxide.cation();
            *mass_by_element.entry(cation).or_default() +=
                moles * oxide.cations_per_oxide() * cation.atomic_weight();
            *mass_by_element.entry(Element::O).or_default() +=
                moles * oxide.oxygens_per_oxide() * Element::O.atomic_weight();
        }
        let total: f64 = mass_by_element.values().sum();
        (total > 0.0).then(|| {
            mass_by_element
                .iter()
                .map(|(element, mass)| mass / total * f64::from(element.atomic_number()))
                .sum()
        })
    }
}

/// A cation species in a structural formula (iron split by valence).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[non_exhaustive]
pub enum Cation {
    /// Si4+.
    #[serde(rename = "Si")]
    Si,
    /// Ti4+.
    #[serde(rename = "Ti")]
    Ti,
    /// Al3+.
    #[serde(rename = "Al")]
    Al,
    /// Cr3+.
    #[serde(rename = "Cr")]
    Cr,
    /// Fe3+.
    #[serde(rename = "Fe3+")]
    Fe3,
    /// Fe2+.
    #[serde(rename = "Fe2+")]
    Fe2,
    /// Mn2+.
    #[serde(rename = "Mn")]
    Mn,
    /// Mg2+.
    #[serde(rename = "Mg")]
    Mg,
    /// Ni2+.
    #[serde(rename = "Ni")]
    Ni,
    /// Ca2+.
    #[serde(rename = "Ca")]
    Ca,
    /// Sr2+.
    #[serde(rename = "Sr")]
    Sr,
    /// Ba2+.
    #[serde(rename = "Ba")]
    Ba,
    /// Na+.
    #[serde(rename = "Na")]
    Na,
    /// K+.
    #[serde(rename = "K")]
    K,
    /// P5+.
    #[serde(rename = "P")]
    P,
}

impl Cation {
    /// The cation that an oxide contributes (FeO gives Fe2+, Fe2O3 gives Fe3+).
    pub fn of_oxide(oxide: Oxide) -> Cation {
        match oxide {
            Oxide::SiO2 => Cation::Si,
            Oxide::TiO2 => Cation::Ti,
            Oxide::Al2O3 => Cation::Al,
            Oxide::Cr2O3 => Cation::Cr,
            Oxide::Fe2O3 => Cation::Fe3,
            Oxide::FeO => Cation::Fe2,
            Oxide::MnO => Cation::Mn,
            Oxide::MgO => Cation::Mg,
            Oxide::NiO => Cation::Ni,
            Oxide::CaO => Cation::Ca,
            Oxide::SrO => Cation::Sr,
            Oxide::BaO => Cation::Ba,
            Oxide::Na2O => Cation::Na,
            Oxide::K2O => Cation::K,
            Oxide::P2O5 => Cation::P,
        }
    }

    /// Formal charge.
    pub fn charge(self) -> f64 {
        match self {
            Cation::Na | Cation::K => 1.0,
            Cation::Fe2
            | Cation::Mn
            | Cation::Mg
            | Cation::Ni
            | Cation::Ca
            | Cation::Sr
            | Cation::Ba => 2.0,
            Cation::Al | Cation::Cr | Cation::Fe3 => 3.0,
            Cation::Si | Cation::Ti => 4.0,
            Cation::P => 5.0,
        }
    }

    /// Display label (`"Fe3+"`, `"Si"`).
    pub fn label(self) -> &'static str {
        match self {
            Cation::Si => "Si",
            Cation::Ti => "Ti",
            Cation::Al => "Al",
            Cation::Cr => "Cr",
            Cation::Fe3 => "Fe3+",
            Cation::Fe2 => "Fe2+",
            Cation::Mn => "Mn",
            Cation::Mg => "Mg",
            Cation::Ni => "Ni",
            Cation::Ca => "Ca",
            Cation::Sr => "Sr",
            Cation::Ba => "Ba",
            Cation::Na => "Na",
            Cation::K => "K",
            Cation::P => "P",
        }
    }
}

/// Cations per formula unit.
pub type Cations = BTreeMap<Cation, f64>;

/// How ferrous iron reported as FeO is to be read before the formula is computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum FeOReading {
    /// FeO is Fe2+.
    Ferrous,
    /// FeO is total iron to be counted as Fe3+ (recast to Fe2O3 with 1.5 O per Fe).
    Ferric,
}

/// Cations on a basis of `oxygens` oxygens: moles of oxide = wt% / M; factor = oxygens / Σ O;
/// cations = moles x cations-per-oxide x factor (the standard oxygen-basis normalisation,
/// e.g. Deer, Howie & Zussman, appendix; from memory).
///
/// Negative and non-finite weight percents count as zero here; the quality flags report them.
/// Returns `None` when the analysis has no oxygen-bearing oxide.
pub(crate) fn cations_on_oxygen_basis(
    analysis: &Analysis,
    oxygens: f64,
    feo: FeOReading,
) -> Option<Cations> {
    let mut moles_cation: Cations = BTreeMap::new();
    let mut moles_oxygen = 0.0;
    for (&oxide, &wt) in &analysis.oxides_wt {
        if !(wt.is_finite() && wt > 0.0) {
            continue;
        }
        let moles_oxide = wt / oxide.molar_mass();
        let mut cation = Cation::of_oxide(oxide);
        let moles = moles_oxide * oxide.cations_per_oxide();
        let mut oxygen_per_cation = oxide.oxygens_per_oxide() / oxide.cations_per_oxide();
        if oxide == Oxide::FeO && feo == FeOReading::Ferric {
            cation = Cation::Fe3;
            oxygen_per_cation = 1.5;
        }
        *moles_cation.entry(cation).or_default() += moles;
        moles_oxygen += moles * oxygen_per_cation;
    }
    if moles_oxygen <= 0.0 {
        return None;
    }
    let factor = oxygens / moles_oxygen;
    for value in moles_cation.values_mut() {
        *value *= factor;
    }
    Some(moles_cation)
}

/// Amount of one cation (zero when absent).
pub(crate) fn amount(cations: &Cations, cation: Cation) -> f64 {
    cations.get(&cation).copied().unwrap_or(0.0)
}
