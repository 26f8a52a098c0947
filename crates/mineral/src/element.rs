//! Chemical elements met in rock-forming silicates, with their standard atomic weights.

use serde::{Deserialize, Serialize};

/// An element that can appear in a Consolute analysis.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[non_exhaustive]
pub enum Element {
    /// Oxygen.
    O,
    /// Sodium.
    Na,
    /// Magnesium.
    Mg,
    /// Aluminium.
    Al,
    /// Silicon.
    Si,
    /// Phosphorus.
    P,
    /// Potassium.
    K,
    /// Calcium.
    Ca,
    /// Titanium.
    Ti,
    /// Chromium.
    Cr,
    /// Manganese.
    Mn,
    /// Iron.
    Fe,
    /// Nickel.
    Ni,
    /// Strontium.
    Sr,
    /// Barium.
    Ba,
}

impl Element {
    /// Every element, in order of atomic number.
    pub const ALL: [Element; 15] = [
        Element::O,
        Element::Na,
        Element::Mg,
        Element::Al,
        Element::Si,
        Element::P,
        Element::K,
        Element::Ca,
        Element::Ti,
        Element::Cr,
        Element::Mn,
        Element::Fe,
        Element::Ni,
        Element::Sr,
        Element::Ba,
    ];

    /// Standard atomic weight in g/mol.
    ///
    /// Source: CIAAW 2021 standard atomic weights (abridged / conventional values for O, Mg and Si,
    /// whose standard weights are intervals); Ba from the IUPAC 1997 table. P and Ni are the CIAAW
    /// values as recalled (from memory).
    pub fn atomic_weight(self) -> f64 {
        match self {
            Element::O => 15.999,
            Element::Na => 22.989_769_28,
            Element::Mg => 24.305,
            Element::Al => 26.981_538_4,
            Element::Si => 28.085,
            Element::P => 30.973_761_998,
            Element::K => 39.0983,
            Element::Ca => 40.078,
            Element::Ti => 47.867,
            Element::Cr => 51.9961,
            Element::Mn => 54.938_043,
            Element::Fe => 55.845,
            Element::Ni => 58.6934,
            Element::Sr => 87.62,
            Element::Ba => 137.327,
        }
    }

    /// Atomic number Z.
    pub fn atomic_number(self) -> u32 {
        match self {
            Element::O => 8,
            Element::Na => 11,
            Element::Mg => 12,
            Element::Al => 13,
            Element::Si => 14,
            Element::P => 15,
            Element::K => 19,
            Element::Ca => 20,
            Element::Ti => 22,
            Element::Cr => 24,
            Element::Mn => 25,
            Element::Fe => 26,
            Element::Ni => 28,
            Element::Sr => 38,
            Element::Ba => 56,
        }
    }

    /// Chemical symbol.
    pub fn symbol(self) -> &'static str {
        match self {
            Element::O => "O",
            Element::Na => "Na",
            Element::Mg => "Mg",
            Element::Al => "Al",
            Element::Si => "Si",
            Element::P => "P",
            Element::K => "K",
            Element::Ca => "Ca",
            Element::Ti => "Ti",
            Element::Cr => "Cr",
            Element::Mn => "Mn",
            Element::Fe => "Fe",
            Element::Ni => "Ni",
            Element::Sr => "Sr",
            Element::Ba => "Ba",
        }
    }
}

impl std::fmt::Display for Element {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.symbol())
    }
}
