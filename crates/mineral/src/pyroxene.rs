//! Pyroxene structural formulae on 6 oxygens and 4 cations, with Fe3+ by charge balance.

use serde::{Deserialize, Serialize};

use crate::analysis::{Analysis, Cation, Cations, FeOReading, amount, cations_on_oxygen_basis};
use crate::oxide::Oxide;
use crate::quality::{Flag, QualityLimits, analysis_flags, site_flag};

/// How ferric iron is obtained for a pyroxene.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PyroxeneIron {
    /// All iron is taken as total FeO and Fe3+ is estimated by charge balance on 6 oxygens and
    /// 4 cations (Droop 1987). The default.
    #[default]
    ChargeBalance,
    /// FeO is Fe2+ and Fe2O3 is Fe3+ as reported; the formula is normalised to 6 oxygens only.
    AsReported,
}

impl PyroxeneIron {
    /// A short statement of the choice, shown beside results.
    pub fn describe(self) -> &'static str {
        match self {
            PyroxeneIron::ChargeBalance => {
                "Fe3+ by charge balance on 6 O and 4 cations (Droop 1987)"
            }
            PyroxeneIron::AsReported => "FeO and Fe2O3 as reported, normalised to 6 O",
        }
    }
}

/// Cation occupancy of the pyroxene sites.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct PyroxeneSites {
    /// Tetrahedral site (ideally 2): Si, then Al, then Fe3+.
    pub t: Cations,
    /// M1 (ideally 1): remaining Al and Fe3+, Ti, Cr, Ni, then Mg, Fe2+, Mn.
    pub m1: Cations,
    /// M2 (ideally 1): what M1 could not take, then Ca, Na, K.
    pub m2: Cations,
}

/// Pyroxene components.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct PyroxeneEndMembers {
    /// Wollastonite component, Ca / (Ca + Mg + ΣFe), ΣFe = Fe2+ + Fe3+ + Mn (Morimoto 1988).
    pub wo: f64,
    /// Enstatite component, Mg / (Ca + Mg + ΣFe).
    pub en: f64,
    /// Ferrosilite component, ΣFe / (Ca + Mg + ΣFe).
    pub fs: f64,
    /// Jadeite, per formula unit: Na matched with M1 Al.
    pub jd: f64,
    /// Aegirine, per formula unit: Na left after jadeite, matched with Fe3+.
    pub ae: f64,
}

/// A pyroxene structural formula.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PyroxeneFormula {
    /// Cations per formula unit (6 oxygens; 4 cations when Fe3+ is by charge balance).
    pub cations: Cations,
    /// How Fe3+ was obtained.
    pub iron: PyroxeneIron,
    /// Cation sum on 6 oxygens with all iron ferrous (S of Droop 1987).
    pub cation_sum_all_ferrous: f64,
    /// Fe3+ / (Fe2+ + Fe3+), zero when there is no iron.
    pub fe3_over_fe_total: f64,
    /// Site occupancy.
    pub sites: PyroxeneSites,
    /// Components.
    pub end_members: PyroxeneEndMembers,
    /// 100 Mg / (Mg + Fe_total).
    pub mg_number: f64,
    /// Fe_total / (Fe_total + Mg).
    pub x_fe: f64,
    /// Oxide total, wt%.
    pub total_wt: f64,
    /// Quality flags.
    pub flags: Vec<Flag>,
}

/// Ideal oxygens per pyroxene formula unit.
const OXYGENS: f64 = 6.0;
/// Ideal cations per pyroxene formula unit.
const CATIONS: f64 = 4.0;
/// Below this, per formula unit, a difference is floating-point rounding, not chemistry.
const ROUNDING: f64 = 1e-9;

/// Structural formula of a pyroxene analysis.
///
/// With [`PyroxeneIron::ChargeBalance`], all iron is first read as Fe2+ and cations are computed
/// on 6 oxygens, summing to S; then Fe3+ = 2 X (1 - T/S) with X = 6, T = 4 (Droop 1987,
/// Mineral. Mag. 51:431, eq. 7), after the cations are scaled by T/S. A sum S < 4 gives no Fe3+
/// (flagged with [`Flag::CationDeficit`] when S is short by more than the site tolerance); a demand beyond the iron present is capped and flagged.
///
/// ```
/// use mineral::{Analysis, Oxide, PyroxeneIron, QualityLimits, pyroxene_formula};
/// // Ideal diopside CaMgSi2O6.
/// let di = Analysis::from_oxides(&[(Oxide::SiO2, 55.49), (Oxide::MgO, 18.61), (Oxide::CaO, 25.90)]);
/// let f = pyroxene_formula(&di, PyroxeneIron::ChargeBalance, &QualityLimits::default());
/// assert!((f.end_members.wo - 0.5).abs() < 1e-3);
/// ```
pub fn pyroxene_formula(
    analysis: &Analysis,
    iron: PyroxeneIron,
    limits: &QualityLimits,
) -> PyroxeneFormula {
    let mut flags = analysis_flags(analysis, limits);
    let total_wt = analysis.total_wt();
    let empty = |flags: Vec<Flag>| PyroxeneFormula {
        cations: Cations::new(),
        iron,
        cation_sum_all_ferrous: 0.0,
        fe3_over_fe_total: 0.0,
        sites: PyroxeneSites::default(),
        end_members: PyroxeneEndMembers::default(),
        mg_number: 0.0,
        x_fe: 0.0,
        total_wt,
        flags,
    };

    let (mut cations, cation_sum_all_ferrous) = match iron {
        PyroxeneIron::ChargeBalance => {
            let all_ferrous = with_total_iron_as_feo(analysis);
            let Some(mut cations) =
                cations_on_oxygen_basis(&all_ferrous, OXYGENS, FeOReading::Ferrous)
            else {
                flags.push(Flag::Empty);
                return empty(flags);
            };
            let sum: f64 = cations.values().sum();
            let scale = CATIONS / sum;
            for value in cations.values_mut() {
                *value *= scale;
            }
            let fe_total = amount(&cations, Cation::Fe2);
            let mut fe3 = 2.0 * OXYGENS * (1.0 - CATIONS / sum);
            // A sum a little under 4 is analytical scatter: Fe3+ is zero, nothing to flag.
            if sum < CATIONS - limits.site_tolerance {
                flags.push(Flag::CationDeficit {
                    sum,
                    ideal: CATIONS,
                });
            }
            fe3 = fe3.max(0.0);
            if fe3 > fe_total + ROUNDING {
                flags.push(Flag::Fe3ExceedsIron {
                    fe3_required: fe3,
                    fe_total,
                });
            }
            fe3 = fe3.min(fe_total);
            if fe_total > 0.0 {
                cations.insert(Cation::Fe2, fe_total - fe3);
                cations.insert(Cation::Fe3, fe3);
            }
            (cations, sum)
        }
        PyroxeneIron::AsReported => {
            let Some(cations) = cations_on_oxygen_basis(analysis, OXYGENS, FeOReading::Ferrous)
            else {
                flags.push(Flag::Empty);
                return empty(flags);
            };
            let sum: f64 = cations.values().sum();
            flags.extend(site_flag("cations", sum, CATIONS, limits));
            let ferrous_view = with_total_iron_as_feo(analysis);
            let sum_all_ferrous =
                cations_on_oxygen_basis(&ferrous_view, OXYGENS, FeOReading::Ferrous)
                    .map_or(sum, |c| c.values().sum());
            (cations, sum_all_ferrous)
        }
    };
    cations.retain(|_, v| *v > 0.0);

    let sites = assign_sites(&cations);
    let t_sum: f64 = sites.t.values().sum();
    flags.extend(site_flag("tetrahedral", t_sum, 2.0, limits));

    let get = |c: Cation| amount(&cations, c);
    let fe_total = get(Cation::Fe2) + get(Cation::Fe3);
    let sum_fe = fe_total + get(Cation::Mn);
    let quad = get(Cation::Ca) + get(Cation::Mg) + sum_fe;
    let share = |x: f64| if quad > 0.0 { x / quad } else { 0.0 };
    let na = get(Cation::Na);
    let jd = na.min(amount(&sites.m1, Cation::Al));
    let ae = (na - jd).min(amount(&sites.m1, Cation::Fe3)).max(0.0);
    let mg = get(Cation::Mg);
    PyroxeneFormula {
        end_members: PyroxeneEndMembers {
            wo: share(get(Cation::Ca)),
            en: share(mg),
            fs: share(sum_fe),
            jd,
            ae,
        },
        fe3_over_fe_total: if fe_total > 0.0 {
            get(Cation::Fe3) / fe_total
        } else {
            0.0
        },
        mg_number: if mg + fe_total > 0.0 {
            100.0 * mg / (mg + fe_total)
        } else {
            0.0
        },
        x_fe: if mg + fe_total > 0.0 {
            fe_total / (mg + fe_total)
        } else {
            0.0
        },
        cations,
        iron,
        cation_sum_all_ferrous,
        sites,
        total_wt,
        flags,
    }
}

/// The analysis with any Fe2O3 recast to FeO, so that all iron is total iron as FeO.
fn with_total_iron_as_feo(analysis: &Analysis) -> Analysis {
    let mut out = analysis.clone();
    if let Some(fe2o3) = out.oxides_wt.remove(&Oxide::Fe2O3) {
        let as_feo = fe2o3 * 2.0 * Oxide::FeO.molar_mass() / Oxide::Fe2O3.molar_mass();
        *out.oxides_wt.entry(Oxide::FeO).or_default() += as_feo;
    }
    out
}

/// Fill T, then M1, then M2 in the conventional order (common practice, after Morimoto 1988).
fn assign_sites(cations: &Cations) -> PyroxeneSites {
    let mut left = cations.clone();
    let mut sites = PyroxeneSites::default();
    let mut fill = |site: &mut Cations, capacity: f64, order: &[Cation]| {
        let mut room = capacity;
        for &c in order {
            let available = amount(&left, c);
            let take = available.min(room).max(0.0);
            if take > 0.0 {
                *site.entry(c).or_default() += take;
                left.insert(c, available - take);
                room -= take;
            }
        }
    };
    fill(&mut sites.t, 2.0, &[Cation::Si, Cation::Al, Cation::Fe3]);
    fill(
        &mut sites.m1,
        1.0,
        &[
            Cation::Al,
            Cation::Fe3,
            Cation::Ti,
            Cation::Cr,
            Cation::Ni,
            Cation::Mg,
            Cation::Fe2,
            Cation::Mn,
        ],
    );
    fill(
        &mut sites.m2,
        f64::INFINITY,
        &[
            Cation::Mg,
            Cation::Fe2,
            Cation::Mn,
            Cation::Ca,
            Cation::Na,
            Cation::K,
            Cation::Sr,
            Cation::Ba,
            Cation::P,
            Cation::Si,
            Cation::Al,
            Cation::Fe3,
            Cation::Ti,
            Cation::Cr,
            Cation::Ni,
        ],
    );
    sites
}

/// Cations per 6 oxygens with all iron as Fe2+ and no normalisation to 4 cations: the basis on
/// which the empirical pyroxene thermometers were calibrated (Putirka 2008; Brey & Köhler 1990).
/// `None` when the analysis has no usable oxide.
pub fn pyroxene_cations_total_iron(analysis: &Analysis) -> Option<Cations> {
    cations_on_oxygen_basis(
        &with_total_iron_as_feo(analysis),
        OXYGENS,
        FeOReading::Ferrous,
    )
}
