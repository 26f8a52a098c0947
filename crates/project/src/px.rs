//! Pyroxene thermometry on spot analyses: the bridge from `mineral`'s formulae to `solvus`'s
//! pyroxene thermometers.

use mineral::{Analysis, Cation, pyroxene_cations_total_iron};
use solvus::pyroxene::PyroxeneCations;

/// Cations per 6 oxygens (all iron as Fe2+) of an analysis, as the thermometers take them.
/// `None` when the analysis has no usable oxide.
pub fn thermometry_cations(analysis: &Analysis) -> Option<PyroxeneCations> {
    let c = pyroxene_cations_total_iron(analysis)?;
    let get = |x: Cation| c.get(&x).copied().unwrap_or(0.0);
    Some(PyroxeneCations {
        si: get(Cation::Si),
        ti: get(Cation::Ti),
        al: get(Cation::Al),
        cr: get(Cation::Cr),
        fe_total: get(Cation::Fe2) + get(Cation::Fe3),
        mn: get(Cation::Mn),
        mg: get(Cation::Mg),
        ca: get(Cation::Ca),
        na: get(Cation::Na),
        k: get(Cation::K),
    })
}
