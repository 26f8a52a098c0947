//! Mineral systems: which end-members a composition is written in, and how an oxide analysis
//! maps onto them.

use mineral::{
    Analysis, Cation, EndMember, FeldsparIron, PyroxeneIron, QualityLimits, feldspar_formula,
    pyroxene_formula,
};
use serde::{Deserialize, Serialize};

/// The mineral system of a grain.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum MineralSystem {
    /// Alkali feldspar and plagioclase: Ab, Or, An.
    Feldspar,
    /// Quadrilateral pyroxenes: Di, Hd, En, Fs (En and Fs as M2Si2O6, 6 oxygens).
    Pyroxene,
}

impl MineralSystem {
    /// The end-members compositions are written in, in order.
    pub fn basis(self) -> &'static [EndMember] {
        match self {
            MineralSystem::Feldspar => &[
                EndMember::Albite,
                EndMember::KFeldspar,
                EndMember::Anorthite,
            ],
            MineralSystem::Pyroxene => &[
                EndMember::Diopside,
                EndMember::Hedenbergite,
                EndMember::Enstatite,
                EndMember::Ferrosilite,
            ],
        }
    }

    /// Coordinates in which two compositions of this system are compared: the basis fractions
    /// for feldspar; Wo, En, Fs (Ca, Mg, Fe over their sum) for pyroxene, because an analysis
    /// fixes those cation ratios but not how Ca-bearing and Ca-free parts share Mg and Fe.
    pub fn comparison_coordinates(self, fractions: &[f64]) -> Vec<f64> {
        match (self, fractions) {
            (MineralSystem::Pyroxene, [di, hd, en, fs]) => {
                let (ca, mg, fe) = (di + hd, di + 2.0 * en, hd + 2.0 * fs);
                let sum = ca + mg + fe;
                vec![ca / sum, mg / sum, fe / sum]
            }
            _ => fractions.to_vec(),
        }
    }

    /// End-member fractions of an oxide analysis over [`Self::basis`], normalised to one.
    ///
    /// Feldspar: X_Ab, X_Or, X_An of the 8-oxygen formula, renormalised over the three (Ba and Sr
    /// feldspar are left out). Pyroxene: from Wo, En, Fs of the 6-oxygen formula (Droop 1987
    /// Fe3+, ΣFe = Fe2+ + Fe3+ + Mn), with Di + Hd = 2 Wo and the same Mg/(Mg+Fe) in the Ca and
    /// Ca-free parts; a Wo above 0.5 cannot be written this way and is capped (a quadrilateral
    /// convention, common practice). `None` when the analysis has none of the cations needed.
    pub fn fractions_of(self, analysis: &Analysis) -> Option<Vec<f64>> {
        let limits = QualityLimits::default();
        match self {
            MineralSystem::Feldspar => {
                let f = feldspar_formula(analysis, FeldsparIron::Ferric, &limits);
                let e = f.end_members;
                let sum = e.x_ab + e.x_or + e.x_an;
                (sum > 0.0).then(|| vec![e.x_ab / sum, e.x_or / sum, e.x_an / sum])
            }
            MineralSystem::Pyroxene => {
                let f = pyroxene_formula(analysis, PyroxeneIron::ChargeBalance, &limits);
                let get = |c: Cation| f.cations.get(&c).copied().unwrap_or(0.0);
                let ca = get(Cation::Ca);
                let mg = get(Cation::Mg);
                let fe = get(Cation::Fe2) + get(Cation::Fe3) + get(Cation::Mn);
                let sum = ca + mg + fe;
                if sum <= 0.0 {
                    return None;
                }
                let wo = (ca / sum).min(0.5);
                let r = if mg + fe > 0.0 { mg / (mg + fe) } else { 0.5 };
                Some(vec![
                    2.0 * wo * r,
                    2.0 * wo * (1.0 - r),
                    (1.0 - 2.0 * wo) * r,
                    (1.0 - 2.0 * wo) * (1.0 - r),
                ])
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use mineral::ideal_oxide_wt;

    #[test]
    fn pyroxene_mapping_recovers_a_quadrilateral_mixture() {
        // Source: stoichiometry. Di 0.4 + Hd 0.1 + En 0.4 + Fs 0.1 has the same Mg/(Mg+Fe) = 0.8
        // in its Ca and Ca-free parts, so the mapping must give it back (1e-9, rounding only).
        let wt = ideal_oxide_wt(&[
            (EndMember::Diopside, 0.4),
            (EndMember::Hedenbergite, 0.1),
            (EndMember::Enstatite, 0.4),
            (EndMember::Ferrosilite, 0.1),
        ])
        .expect("valid");
        let analysis = Analysis {
            oxides_wt: wt,
            ..Analysis::default()
        };
        let x = MineralSystem::Pyroxene
            .fractions_of(&analysis)
            .expect("has cations");
        for (got, want) in x.iter().zip([0.4, 0.1, 0.4, 0.1]) {
            assert!((got - want).abs() < 1e-9, "{x:?}");
        }
    }
}
