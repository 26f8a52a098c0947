//! Property tests of the solvus engine over random compositions, temperatures and pressures.
#![allow(clippy::unwrap_used)]

use proptest::prelude::*;
use solvus::{
    BinodalOutcome, Composition, SolutionModel, binodal, critical_point, pair_temperatures,
};

fn any_model() -> impl Strategy<Value = SolutionModel> {
    prop::sample::select(solvus::BUILTIN_IDS.to_vec())
        .prop_map(|id| SolutionModel::builtin(id).unwrap())
}

fn interior_composition() -> impl Strategy<Value = Composition> {
    (0.01f64..1.0, 0.01f64..1.0, 0.01f64..1.0).prop_map(|(a, b, c)| {
        let s = a + b + c;
        Composition::new(a / s, b / s, c / s).unwrap()
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    #[test]
    fn gibbs_duhem_holds_everywhere(
        model in any_model(),
        x in interior_composition(),
        t in 500.0f64..1800.0,
        p in 0.0f64..10_000.0,
    ) {
        // Source: Gibbs-Duhem relation sum_i X_i d(RT ln gamma_i) = 0 and the Euler relation
        // G_ex = sum_i X_i RT ln gamma_i (any thermodynamics text). Tolerance: FD error.
        let at = model.at(t, p).unwrap();
        let lg = at.rt_ln_gamma(&x);
        let euler: f64 = x.as_array().iter().zip(lg).map(|(a, b)| a * b).sum();
        prop_assert!((euler - at.excess_gibbs(&x)).abs() < 1e-7);
        let h = 1e-6;
        let a = x.as_array();
        for dir in [[-1.0, 1.0, 0.0], [-1.0, 0.0, 1.0]] {
            let xp = Composition { x_ab: a[0] + h * dir[0], x_or: a[1] + h * dir[1], x_an: a[2] + h * dir[2] };
            let xm = Composition { x_ab: a[0] - h * dir[0], x_or: a[1] - h * dir[1], x_an: a[2] - h * dir[2] };
            let (gp, gm) = (at.rt_ln_gamma(&xp), at.rt_ln_gamma(&xm));
            let gd: f64 = (0..3).map(|i| a[i] * (gp[i] - gm[i]) / (2.0 * h)).sum();
            prop_assert!(gd.abs() < 1e-3, "Gibbs-Duhem residual {gd}");
        }
    }

    #[test]
    fn binodal_pair_returns_its_temperature_as_pair_temperature(
        model in any_model(),
        below in 0.005f64..450.0,
        p in 0.0f64..10_000.0,
    ) {
        // Source: definition of the binodal (equal activities in both phases): the two-feldspar
        // temperatures of a binodal pair equal the binodal's temperature. Tolerance 1e-5 K.
        let c = critical_point(&model, p).unwrap();
        let t = c.temperature_k - below;
        let BinodalOutcome::Gap(pair) = binodal(&model, t, p).unwrap() else {
            return Err(TestCaseError::fail("no gap below the critical point"));
        };
        prop_assert!(pair.x_or_na_limb < c.x_or && pair.x_or_k_limb > c.x_or);
        let a = Composition::ab_or(pair.x_or_na_limb).unwrap();
        let b = Composition::ab_or(pair.x_or_k_limb).unwrap();
        let r = pair_temperatures(&model, &a, &b, p).unwrap();
        if t > 473.15 {
            prop_assert!((r.ab.temperature_k().unwrap() - t).abs() < 1e-5);
            prop_assert!((r.or.temperature_k().unwrap() - t).abs() < 1e-5);
        }
    }
}

fn ternary_model() -> impl Strategy<Value = SolutionModel> {
    prop::sample::select(vec!["eg1990", "fl1988"])
        .prop_map(|id| SolutionModel::builtin(id).unwrap())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(24))]

    #[test]
    fn ternary_min_temperature_is_the_stability_limit(
        model in ternary_model(),
        x in interior_composition(),
        p in 0.0f64..10_000.0,
    ) {
        // Source: the definition (design §3.4) with the tangent-plane criterion of Michelsen
        // (1982): stable 0.05 C above the minimum temperature, unstable 0.05 C below; the other
        // outcomes are consistent with the ends of the range.
        use solvus::{MinTemperature, min_crystallisation_temperature, tangent_plane_stability};
        let r = min_crystallisation_temperature(&model, &x, p).unwrap();
        match r.outcome {
            MinTemperature::Found { temperature_k, conjugate } => {
                prop_assert!(temperature_k.is_finite());
                let above = tangent_plane_stability(&model, &x, temperature_k + 0.05, p).unwrap();
                let below = tangent_plane_stability(&model, &x, temperature_k - 0.05, p).unwrap();
                prop_assert!(above.stable, "above {temperature_k}");
                prop_assert!(!below.stable, "below {temperature_k}");
                prop_assert!(conjugate.x_ab >= 0.0 && conjugate.x_or >= 0.0 && conjugate.x_an >= 0.0);
            }
            MinTemperature::StableInRange { t_min_k, .. } => {
                prop_assert!(tangent_plane_stability(&model, &x, t_min_k, p).unwrap().stable);
            }
            MinTemperature::UnstableAtRangeTop { t_max_k } => {
                prop_assert!(!tangent_plane_stability(&model, &x, t_max_k, p).unwrap().stable);
            }
            other => prop_assert!(false, "unexpected {other:?}"),
        }
    }

    #[test]
    fn ternary_isotherms_are_equilibria_everywhere(
        model in ternary_model(),
        t_c in 350.0f64..1300.0,
        p in 0.0f64..10_000.0,
    ) {
        // Source: equilibrium condition mu_i(1) = mu_i(2) for every component of every
        // reported tie-line, and three equal potentials at a three-phase triangle (any
        // thermodynamics text). Tolerance 1e-6 J/mol.
        use solvus::ternary_isotherm;
        let t = t_c + 273.15;
        let iso = ternary_isotherm(&model, t, p).unwrap();
        prop_assert!(!iso.tie_lines.is_empty());
        prop_assert!(!iso.unresolved_band, "a band was left unresolved");
        let at = model.at(t, p).unwrap();
        for tl in &iso.tie_lines {
            let (a, b) = (tl.na_rich, tl.k_rich);
            let (ma, mb) = (at.chemical_potentials(&a), at.chemical_potentials(&b));
            let (xa, xb) = (a.as_array(), b.as_array());
            for i in 0..3 {
                prop_assert!(xa[i].is_finite() && xb[i].is_finite());
                if xa[i] > 0.0 && xb[i] > 0.0 {
                    prop_assert!((ma[i] - mb[i]).abs() < 1e-6, "{tl:?}");
                }
            }
        }
        if let Some(c) = iso.critical_point {
            prop_assert!(c.x_ab > 0.0 && c.x_or > 0.0 && c.x_an > 0.0);
        }
    }
}
