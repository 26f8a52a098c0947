//! Property tests of the reintegration engine: conservation of mass in both routes for any
//! phases, compositions and modal fractions, and finite temperatures or typed outcomes for any
//! bulk composition.
#![allow(clippy::unwrap_used)]

use std::collections::BTreeMap;

use mineral::{Oxide, ideal_oxide_wt};
use proptest::prelude::*;
use reintegration::*;
use solvus::SolutionModel;

/// A point of the closed simplex of `n` parts: each part is dropped to zero with probability
/// about 1/4 before normalising, so edges and corners come up as well as the interior.
fn closed_simplex(n: usize) -> impl Strategy<Value = Vec<f64>> {
    proptest::collection::vec(
        (0.0f64..1.0).prop_map(|v| if v < 0.25 { 0.0 } else { v }),
        n,
    )
    .prop_filter_map("all zero", |v| {
        let s: f64 = v.iter().sum();
        (s > 0.0).then(|| v.iter().map(|x| x / s).collect())
    })
}

#[derive(Debug, Clone)]
struct Case {
    system: MineralSystem,
    /// Phase compositions over the system's basis.
    phases: Vec<Vec<f64>>,
    /// Per phase, a factor per oxide applied to its ideal analysis (a non-stoichiometric
    /// analysis entered by the user), or none.
    oxide_factors: Vec<Option<Vec<f64>>>,
    /// Micrographs: measured area and area fractions of the phases.
    micrographs: Vec<(f64, Vec<f64>)>,
    /// Excess volume from a built-in feldspar model (index into BUILTIN_IDS), or ideal.
    model: Option<usize>,
}

fn any_case() -> impl Strategy<Value = Case> {
    (
        prop::sample::select(vec![MineralSystem::Feldspar, MineralSystem::Pyroxene]),
        1usize..=4,
        1usize..=4,
    )
        .prop_flat_map(|(system, n_phases, n_micrographs)| {
            let k = system.basis().len();
            (
                Just(system),
                proptest::collection::vec(closed_simplex(k), n_phases),
                proptest::collection::vec(
                    prop::option::weighted(0.3, proptest::collection::vec(0.9f64..1.1, 8)),
                    n_phases,
                ),
                proptest::collection::vec((1.0f64..1.0e6, closed_simplex(n_phases)), n_micrographs),
                prop::option::of(0usize..solvus::BUILTIN_IDS.len()),
            )
        })
        .prop_map(|(system, phases, oxide_factors, micrographs, model)| Case {
            system,
            phases,
            oxide_factors,
            micrographs,
            model: if system == MineralSystem::Feldspar {
                model
            } else {
                None
            },
        })
}

/// The ideal oxide analysis of a composition (wt%).
fn ideal_oxides(system: MineralSystem, x: &[f64]) -> BTreeMap<Oxide, f64> {
    ideal_oxide_wt(
        &system
            .basis()
            .iter()
            .copied()
            .zip(x.iter().copied())
            .collect::<Vec<_>>(),
    )
    .unwrap()
}

fn grain_of(case: &Case) -> GrainInput {
    GrainInput {
        label: "prop".into(),
        system: case.system,
        phases: case
            .phases
            .iter()
            .zip(&case.oxide_factors)
            .enumerate()
            .map(|(i, (x, factors))| PhaseInput {
                label: format!("phase {i}"),
                fractions: x.clone(),
                spots: vec![],
                sigma: vec![],
                oxides_wt: factors.as_ref().map(|f| {
                    ideal_oxides(case.system, x)
                        .into_iter()
                        .zip(f.iter().cycle())
                        .map(|((oxide, wt), k)| (oxide, wt * k))
                        .collect()
                }),
                density_g_cm3: None,
            })
            .collect(),
        micrographs: case
            .micrographs
            .iter()
            .enumerate()
            .map(|(m, (area, f))| ModalInput {
                label: format!("micrograph {m}"),
                measured_area: *area,
                fractions: f.clone(),
                ci95: f.iter().map(|v| (*v, *v)).collect(),
                level_sensitivity: None,
            })
            .collect(),
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(400))]

    #[test]
    fn both_routes_conserve_mass(case in any_case()) {
        let grain = grain_of(&case);
        let model = case.model.map(|i| SolutionModel::builtin(solvus::BUILTIN_IDS[i]).unwrap());
        let excess: &dyn ExcessVolume = match &model {
            Some(m) => m,
            None => &IdealVolume,
        };
        let r = reintegrate(&grain, &VolumeSettings::default(), excess).unwrap();
        let n_phases = case.phases.len();

        // Source: Delesse principle (area fraction estimates volume fraction) with area
        // conserved: sum over micrographs of A_m f_mi = (sum A_m) phi_i. Tolerance 1e-12
        // relative: rounding only.
        let total_area: f64 = case.micrographs.iter().map(|(a, _)| a).sum();
        for i in 0..n_phases {
            let area_i: f64 = case.micrographs.iter().map(|(a, f)| a * f[i]).sum();
            prop_assert!((area_i - total_area * r.volume_fractions[i]).abs() <= 1e-12 * total_area);
        }
        prop_assert!((r.volume_fractions.iter().sum::<f64>() - 1.0).abs() < 1e-12);

        // Source: conservation of mass, molar route (design §3.2): moles of phase i per unit
        // volume n_i = phi_i / V_i, and the moles of each end-member in the phases,
        // sum_i n_i x_ij, equal the moles of the bulk, (sum_i n_i) X_j. Tolerance 1e-12 of the
        // total moles: rounding only.
        let n: Vec<f64> = r.volume_fractions.iter().zip(&r.molar_volumes_j_per_bar)
            .map(|(f, v)| f / v).collect();
        let n_total: f64 = n.iter().sum();
        prop_assert!(n_total.is_finite() && n_total > 0.0);
        for j in 0..case.system.basis().len() {
            let in_phases: f64 = n.iter().zip(&case.phases).map(|(ni, x)| ni * x[j]).sum();
            prop_assert!((in_phases - n_total * r.molar[j]).abs() <= 1e-12 * n_total,
                "end-member {j}: phases {in_phases}, bulk {}", n_total * r.molar[j]);
        }

        // Source: conservation of mass, mass route (design §3.2): mass of phase i per unit
        // volume m_i = phi_i rho_i; the mass of each oxide in the phases, sum_i m_i w_ik (each
        // analysis normalised to 100 wt%), equals that of the bulk, (sum_i m_i) W_k.
        // Tolerance 1e-9 wt% of the total mass: rounding only.
        let m: Vec<f64> = r.volume_fractions.iter().zip(&r.densities_g_cm3)
            .map(|(f, rho)| f * rho).collect();
        let m_total: f64 = m.iter().sum();
        let mut in_phases: BTreeMap<Oxide, f64> = BTreeMap::new();
        for (mi, phase) in m.iter().zip(&grain.phases) {
            let w = phase.oxides_wt.clone().unwrap_or_else(|| ideal_oxides(case.system, &phase.fractions));
            let sum: f64 = w.values().filter(|v| **v > 0.0).sum();
            for (oxide, wt) in w.into_iter().filter(|(_, wt)| *wt > 0.0) {
                *in_phases.entry(oxide).or_default() += mi * wt * 100.0 / sum;
            }
        }
        for (oxide, mass) in &in_phases {
            let bulk = r.bulk_oxides_wt.get(oxide).copied().unwrap_or(0.0);
            prop_assert!((mass - m_total * bulk).abs() <= 1e-9 * m_total,
                "{oxide:?}: phases {mass}, bulk {}", m_total * bulk);
        }
        prop_assert!(r.bulk_oxides_wt.keys().all(|k| in_phases.contains_key(k)));
        prop_assert!((r.bulk_oxides_wt.values().sum::<f64>() - 100.0).abs() < 1e-9);

        // Source: design §3.2: with rho_i = M_i / V_i and stoichiometric analyses the two
        // routes give the same bulk (compared in the system's comparison coordinates).
        // Tolerance 1e-9 mole fraction: rounding through the structural formula.
        for x in r.molar.iter().chain(&r.mass) {
            prop_assert!(x.is_finite() && (-1e-12..=1.0 + 1e-12).contains(x));
        }
        if case.oxide_factors.iter().all(Option::is_none) {
            prop_assert!(r.route_difference < 1e-9, "routes differ by {}", r.route_difference);
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    #[test]
    fn any_bulk_gives_a_finite_temperature_or_a_typed_outcome(
        model in prop::sample::select(solvus::BUILTIN_IDS.to_vec()),
        bulk in closed_simplex(3),
        p_kbar in -2.0f64..14.0,
    ) {
        // Source: the minimum crystallisation temperature's definition (design §3.4): a
        // temperature inside the model's range, or a typed outcome (stable at every
        // temperature, above the range, refused with a reason). A pressure outside the model's
        // range (0-10 kbar for the built-in models) is refused, never turned into a number.
        let model = SolutionModel::builtin(model).unwrap();
        let [t_lo, t_hi] = model.range.temperature_c;
        let [p_lo, p_hi] = model.range.pressure_kbar;
        let thermometer = SolvusThermometer { model };
        match thermometer.min_temperature(&bulk, p_kbar) {
            TemperatureOutcome::Value { temperature_c } => {
                prop_assert!((p_lo..=p_hi).contains(&p_kbar));
                prop_assert!(temperature_c.is_finite());
                prop_assert!(temperature_c >= t_lo - 1e-6 && temperature_c <= t_hi + 1e-6,
                    "{temperature_c} C outside {t_lo}-{t_hi}");
            }
            TemperatureOutcome::Refused { reason } => {
                prop_assert!(!reason.trim().is_empty());
                prop_assert!(!reason.contains("NaN"), "{reason}");
            }
            TemperatureOutcome::StableAtEveryTemperature | TemperatureOutcome::AboveRange => {
                prop_assert!((p_lo..=p_hi).contains(&p_kbar));
            }
            other => prop_assert!(false, "unexpected {other:?}"),
        }
        if !(p_lo..=p_hi).contains(&p_kbar) {
            let refused = matches!(
                thermometer.min_temperature(&bulk, p_kbar),
                TemperatureOutcome::Refused { .. }
            );
            prop_assert!(refused);
        }
    }
}
