//! Feldspar structural formulae on 8 oxygens.

use serde::{Deserialize, Serialize};

use crate::analysis::{Analysis, Cation, Cations, FeOReading, amount, cations_on_oxygen_basis};
use crate::quality::{Flag, QualityLimits, analysis_flags, site_flag};

/// How iron reported as FeO in a feldspar is read.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FeldsparIron {
    /// Iron is Fe3+ on the tetrahedral site, substituting for Al (common practice; the default).
    #[default]
    Ferric,
    /// Iron is Fe2+ and counted with the large cations.
    Ferrous,
}

impl FeldsparIron {
    /// A short statement of the choice, shown beside results.
    pub fn describe(self) -> &'static str {
        match self {
            FeldsparIron::Ferric => "FeO recast as Fe2O3, Fe3+ counted on the tetrahedral site",
            FeldsparIron::Ferrous => "FeO read as Fe2+, counted with the large cations",
        }
    }
}

/// End-member mole fractions of a feldspar, over the large cations Na + K + Ca + Ba + Sr.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct FeldsparEndMembers {
    /// Albite, Na/(Na+K+Ca+Ba+Sr).
    pub x_ab: f64,
    /// Orthoclase (K-feldspar), K/(...).
    pub x_or: f64,
    /// Anorthite, Ca/(...).
    pub x_an: f64,
    /// Celsian, Ba/(...).
    pub x_cn: f64,
    /// Sr-feldspar, Sr/(...).
    pub x_sr: f64,
}

/// A feldspar structural formula on 8 oxygens.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FeldsparFormula {
    /// Cations per 8 oxygens.
    pub cations: Cations,
    /// How FeO was read.
    pub iron: FeldsparIron,
    /// Tetrahedral site: Si + Al + Fe3+ (+ Ti + P), ideally 4.
    pub tetrahedral_sum: f64,
    /// Large-cation site: Na + K + Ca + Ba + Sr (+ Mg + Fe2+ + Mn + Ni), ideally 1.
    pub large_cation_sum: f64,
    /// End-member fractions.
    pub end_members: FeldsparEndMembers,
    /// Oxide total, wt%.
    pub total_wt: f64,
    /// Quality flags.
    pub flags: Vec<Flag>,
}

/// Structural formula of a feldspar analysis on 8 oxygens.
///
/// Moles of oxide = wt% / M, oxygens per oxide as in design §3.1, factor = 8 / Σ O. X_Ab, X_Or,
/// X_An, X_Cn and X_Sr are fractions of Na, K, Ca, Ba, Sr over their sum. Flags follow
/// [`QualityLimits`].
///
/// ```
/// use mineral::{Analysis, Oxide, FeldsparIron, QualityLimits, feldspar_formula};
/// // Ideal albite NaAlSi3O8.
/// let albite = Analysis::from_oxides(&[(Oxide::SiO2, 68.74), (Oxide::Al2O3, 19.44), (Oxide::Na2O, 11.82)]);
/// let f = feldspar_formula(&albite, FeldsparIron::Ferric, &QualityLimits::default());
/// assert!((f.end_members.x_ab - 1.0).abs() < 1e-12);
/// assert!((f.tetrahedral_sum - 4.0).abs() < 0.01);
/// ```
pub fn feldspar_formula(
    analysis: &Analysis,
    iron: FeldsparIron,
    limits: &QualityLimits,
) -> FeldsparFormula {
    let mut flags = analysis_flags(analysis, limits);
    let reading = match iron {
        FeldsparIron::Ferric => FeOReading::Ferric,
        FeldsparIron::Ferrous => FeOReading::Ferrous,
    };
    let Some(cations) = cations_on_oxygen_basis(analysis, 8.0, reading) else {
        flags.push(Flag::Empty);
        return FeldsparFormula {
            cations: Cations::new(),
            iron,
            tetrahedral_sum: 0.0,
            large_cation_sum: 0.0,
            end_members: FeldsparEndMembers::default(),
            total_wt: analysis.total_wt(),
            flags,
        };
    };
    let sum_of = |list: &[Cation]| list.iter().map(|&c| amount(&cations, c)).sum::<f64>();
    let tetrahedral_sum = sum_of(&[Cation::Si, Cation::Al, Cation::Fe3, Cation::Ti, Cation::P]);
    let large_cation_sum = sum_of(&[
        Cation::Na,
        Cation::K,
        Cation::Ca,
        Cation::Ba,
        Cation::Sr,
        Cation::Mg,
        Cation::Fe2,
        Cation::Mn,
        Cation::Ni,
    ]);
    let alkali_site = sum_of(&[Cation::Na, Cation::K, Cation::Ca, Cation::Ba, Cation::Sr]);
    let fraction = |c: Cation| {
        if alkali_site > 0.0 {
            amount(&cations, c) / alkali_site
        } else {
            0.0
        }
    };
    let end_members = FeldsparEndMembers {
        x_ab: fraction(Cation::Na),
        x_or: fraction(Cation::K),
        x_an: fraction(Cation::Ca),
        x_cn: fraction(Cation::Ba),
        x_sr: fraction(Cation::Sr),
    };
    flags.extend(site_flag("tetrahedral", tetrahedral_sum, 4.0, limits));
    flags.extend(site_flag("large_cation", large_cation_sum, 1.0, limits));
    FeldsparFormula {
        cations,
        iron,
        tetrahedral_sum,
        large_cation_sum,
        end_members,
        total_wt: analysis.total_wt(),
        flags,
    }
}
