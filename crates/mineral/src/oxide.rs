//! Oxide components of a microprobe analysis and their molar masses.

use serde::{Deserialize, Serialize};

use crate::element::Element;

/// An oxide component as reported by a microprobe.
///
/// Iron may be reported as FeO (all iron ferrous, or total iron), Fe2O3, or both.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[non_exhaustive]
pub enum Oxide {
    /// SiO2.
    SiO2,
    /// TiO2.
    TiO2,
    /// Al2O3.
    Al2O3,
    /// Cr2O3.
    Cr2O3,
    /// Fe2O3 (ferric iron).
    Fe2O3,
    /// FeO (ferrous iron, or total iron reported as FeO).
    FeO,
    /// MnO.
    MnO,
    /// MgO.
    MgO,
    /// NiO.
    NiO,
    /// CaO.
    CaO,
    /// SrO.
    SrO,
    /// BaO.
    BaO,
    /// Na2O.
    Na2O,
    /// K2O.
    K2O,
    /// P2O5.
    P2O5,
}

impl Oxide {
    /// Every oxide, in the conventional order of an analysis table.
    pub const ALL: [Oxide; 15] = [
        Oxide::SiO2,
        Oxide::TiO2,
        Oxide::Al2O3,
        Oxide::Cr2O3,
        Oxide::Fe2O3,
        Oxide::FeO,
        Oxide::MnO,
        Oxide::MgO,
        Oxide::NiO,
        Oxide::CaO,
        Oxide::SrO,
        Oxide::BaO,
        Oxide::Na2O,
        Oxide::K2O,
        Oxide::P2O5,
    ];

    /// The cation element of this oxide.
    pub fn cation(self) -> Element {
        match self {
            Oxide::SiO2 => Element::Si,
            Oxide::TiO2 => Element::Ti,
            Oxide::Al2O3 => Element::Al,
            Oxide::Cr2O3 => Element::Cr,
            Oxide::Fe2O3 | Oxide::FeO => Element::Fe,
            Oxide::MnO => Element::Mn,
            Oxide::MgO => Element::Mg,
            Oxide::NiO => Element::Ni,
            Oxide::CaO => Element::Ca,
            Oxide::SrO => Element::Sr,
            Oxide::BaO => Element::Ba,
            Oxide::Na2O => Element::Na,
            Oxide::K2O => Element::K,
            Oxide::P2O5 => Element::P,
        }
    }

    /// Cations per formula unit of the oxide (2 for Al2O3).
    pub fn cations_per_oxide(self) -> f64 {
        match self {
            Oxide::Al2O3 | Oxide::Cr2O3 | Oxide::Fe2O3 | Oxide::Na2O | Oxide::K2O | Oxide::P2O5 => {
                2.0
            }
            _ => 1.0,
        }
    }

    /// Oxygens per formula unit of the oxide (3 for Al2O3).
    pub fn oxygens_per_oxide(self) -> f64 {
        match self {
            Oxide::SiO2 | Oxide::TiO2 => 2.0,
            Oxide::Al2O3 | Oxide::Cr2O3 | Oxide::Fe2O3 => 3.0,
            Oxide::P2O5 => 5.0,
            _ => 1.0,
        }
    }

    /// Formal charge of the cation (oxygens x 2 / cations).
    pub fn cation_charge(self) -> f64 {
        2.0 * self.oxygens_per_oxide() / self.cations_per_oxide()
    }

    /// Molar mass in g/mol, computed from the standard atomic weights of [`Element`]
    /// (never typed in as an oxide mass).
    pub fn molar_mass(self) -> f64 {
        self.cations_per_oxide() * self.cation().atomic_weight()
            + self.oxygens_per_oxide() * Element::O.atomic_weight()
    }

    /// Conventional formula, e.g. `"Al2O3"`.
    pub fn formula(self) -> &'static str {
        match self {
            Oxide::SiO2 => "SiO2",
            Oxide::TiO2 => "TiO2",
            Oxide::Al2O3 => "Al2O3",
            Oxide::Cr2O3 => "Cr2O3",
            Oxide::Fe2O3 => "Fe2O3",
            Oxide::FeO => "FeO",
            Oxide::MnO => "MnO",
            Oxide::MgO => "MgO",
            Oxide::NiO => "NiO",
            Oxide::CaO => "CaO",
            Oxide::SrO => "SrO",
            Oxide::BaO => "BaO",
            Oxide::Na2O => "Na2O",
            Oxide::K2O => "K2O",
            Oxide::P2O5 => "P2O5",
        }
    }

    /// Recognise an oxide from a column header, tolerant of case, units and the usual marks for
    /// total iron: `"SiO2"`, `"SIO2"`, `"SiO2 (wt%)"`, `"FeOt"`, `"FeO*"`, `"FeO total"`.
    pub fn from_header(header: &str) -> Option<Oxide> {
        let key = normalise_header(header);
        let key = key
            .strip_suffix("total")
            .or_else(|| key.strip_suffix("tot"))
            .or_else(|| key.strip_suffix('t'))
            .filter(|k| *k == "feo" || *k == "fe2o3")
            .unwrap_or(&key);
        Oxide::ALL
            .into_iter()
            .find(|oxide| oxide.formula().eq_ignore_ascii_case(key))
    }
}

/// Lower-case a header and strip units, brackets, spaces and marks such as `*`.
pub(crate) fn normalise_header(header: &str) -> String {
    let mut text = header.trim().to_ascii_lowercase();
    for unit in ["wt.%", "wt %", "wt%", "(wt)", "wt.", "mass%", "%"] {
        text = text.replace(unit, "");
    }
    text.chars()
        .filter(|c| c.is_ascii_alphanumeric())
        .collect::<String>()
}

impl std::fmt::Display for Oxide {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.formula())
    }
}
