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
