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

/// Any point of the closed Ab-Or-An simplex: each fraction is dropped to zero with probability
/// about 1/4 before normalising, so edges and corners come up as often as the interior.
fn closed_simplex() -> impl Strategy<Value = Composition> {
    let part = (0.0f64..1.0).prop_map(|v| if v < 0.25 { 0.0 } else { v });
    (part.clone(), part.clone(), part).prop_filter_map("all zero", |(a, b, c)| {
        let s = a + b + c;
        (s > 0.0).then(|| Composition::new(a / s, b / s, c / s).unwrap())
    })
}

/// A refusal is a typed error whose message says something and shows no NaN (design rule: bad
/// input gets a clear message, never a NaN shown as a result).
fn check_refusal(message: &str) -> Result<(), TestCaseError> {
    prop_assert!(!message.trim().is_empty(), "empty message");
    prop_assert!(!message.contains("NaN"), "NaN in message: {message}");
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn min_temperature_is_finite_or_a_typed_refusal_anywhere_on_the_simplex(
        model in any_model(),
        x in closed_simplex(),
        p_kbar in -2.0f64..14.0,
    ) {
        // Source: the definition of the minimum crystallisation temperature (design §3.4): a
        // temperature inside the model's range, or one of the typed outcomes (stable at every
        // temperature, unstable at the top, composition outside the model). A pressure outside
        // the model's stated range (0-10 kbar for the built-in models) is an error, never a
        // number. Tolerance on the range ends 1e-6 K: the bisection stops inside the interval.
        use solvus::{MinTemperature, min_crystallisation_temperature};
        let [p_lo, p_hi] = model.range.pressure_kbar;
        let [t_lo, t_hi] = model.range.temperature_c.map(|t| t + 273.15);
        match min_crystallisation_temperature(&model, &x, p_kbar * 1000.0) {
            Ok(r) => {
                prop_assert!((p_lo..=p_hi).contains(&p_kbar), "accepted {p_kbar} kbar");
                match r.outcome {
                    MinTemperature::Found { temperature_k, conjugate } => {
                        prop_assert!(temperature_k.is_finite());
                        prop_assert!(temperature_k >= t_lo - 1e-6 && temperature_k <= t_hi + 1e-6,
                            "{temperature_k} K outside {t_lo}-{t_hi}");
                        let c = conjugate.as_array();
                        prop_assert!(c.iter().all(|v| v.is_finite() && *v >= -1e-12));
                        prop_assert!((c.iter().sum::<f64>() - 1.0).abs() < 1e-9);
                    }
                    MinTemperature::StableInRange { t_min_k, t_max_k } => {
                        prop_assert!(t_min_k.is_finite() && t_max_k.is_finite());
                    }
                    MinTemperature::UnstableAtRangeTop { t_max_k } => {
                        prop_assert!(t_max_k.is_finite());
                    }
                    MinTemperature::OutsideCompositionRange { reason } => {
                        // Only a binary model refuses a composition: too much An to project.
                        prop_assert!(x.x_an > model.range.max_x_an, "{reason}");
                        check_refusal(&reason)?;
                    }
                    other => prop_assert!(false, "unexpected {other:?}"),
                }
            }
            Err(e) => {
                prop_assert!(!(p_lo..=p_hi).contains(&p_kbar), "refused {p_kbar} kbar: {e}");
                check_refusal(&e.to_string())?;
            }
        }
    }

    #[test]
    fn pair_temperatures_are_finite_or_typed_anywhere_on_the_simplex(
        model in any_model(),
        a in closed_simplex(),
        b in closed_simplex(),
        p_kbar in 0.0f64..10.0,
    ) {
        // Source: the two-feldspar method (Fuhrman & Lindsley 1988): each component gives the
        // temperature where its activities in the two phases are equal, searched over the
        // model's temperature range, or says there is none. Every temperature found is finite
        // and inside that range (1e-6 K, the root finder's stopping tolerance); the spread is
        // the largest minus the smallest of them.
        use solvus::ComponentTemperature;
        let [t_lo, t_hi] = model.range.temperature_c.map(|t| t + 273.15);
        match pair_temperatures(&model, &a, &b, p_kbar * 1000.0) {
            Ok(r) => {
                let found: Vec<f64> = r.components().iter().filter_map(|c| c.temperature_k()).collect();
                for c in r.components() {
                    match c {
                        ComponentTemperature::Root { temperature_k } => {
                            prop_assert!(temperature_k.is_finite());
                            prop_assert!(*temperature_k >= t_lo - 1e-6 && *temperature_k <= t_hi + 1e-6,
                                "{temperature_k} K outside {t_lo}-{t_hi}");
                        }
                        ComponentTemperature::NoRootInRange { reason } => check_refusal(reason)?,
                        other => prop_assert!(false, "unexpected {other:?}"),
                    }
                }
                match r.spread_k {
                    Some(s) => {
                        prop_assert!(found.len() >= 2);
                        let hi = found.iter().copied().fold(f64::MIN, f64::max);
                        let lo = found.iter().copied().fold(f64::MAX, f64::min);
                        prop_assert!((s - (hi - lo)).abs() < 1e-9);
                    }
                    None => prop_assert!(found.len() < 2),
                }
            }
            Err(e) => {
                // Only a binary model refuses a composition (too much An to project).
                prop_assert!(a.x_an > model.range.max_x_an || b.x_an > model.range.max_x_an, "{e}");
                check_refusal(&e.to_string())?;
            }
        }
    }
}

/// Cations per 6 oxygens of any pyroxene: Si, Al, Ti, Cr, Na, K, Mn in and beyond their
/// natural ranges, and Ca, Mg, Fe sharing the remaining M-site cations with each allowed to be
/// zero (so pure end-members and Fe- or Mg-free pyroxenes come up).
fn any_pyroxene() -> impl Strategy<Value = solvus::pyroxene::PyroxeneCations> {
    let minor = |hi: f64| (0.0f64..1.0).prop_map(move |v| if v < 0.3 { 0.0 } else { v * hi });
    (
        (1.5f64..2.1, minor(0.5), minor(0.08), minor(0.05)),
        (minor(0.3), minor(0.02), minor(0.05)),
        (minor(1.0), minor(1.0), minor(1.0)),
    )
        .prop_map(|((si, al, ti, cr), (na, k, mn), (ca, mg, fe))| {
            let m = ca + mg + fe;
            // Ca + Mg + Fe fill what is left of the four cations (zero if nothing was drawn).
            let room = (4.0 - si - al - ti - cr - na - k - mn).max(0.0);
            let scale = if m > 0.0 { room / m } else { 0.0 };
            solvus::pyroxene::PyroxeneCations {
                si,
                ti,
                al,
                cr,
                fe_total: fe * scale,
                mn,
                mg: mg * scale,
                ca: ca * scale,
                na,
                k,
            }
        })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]

    #[test]
    fn pyroxene_thermometers_give_a_finite_temperature_or_a_typed_refusal(
        cpx in any_pyroxene(),
        opx in any_pyroxene(),
        p_kbar in 0.0f64..60.0,
    ) {
        // Source: the published equations (Brey & Köhler 1990; Wells 1977; Putirka 2008 eqs 36,
        // 37, 32d): each is a ratio with logarithms of activities or component ratios; where a
        // logarithm's argument is not positive or the result is not a temperature above 0 K the
        // equation has no value, which must be said (PyroxeneError), never shown as NaN or inf.
        use solvus::pyroxene::{PyroxeneThermometer, pyroxene_temperature};
        for thermometer in PyroxeneThermometer::ALL {
            match pyroxene_temperature(thermometer, &cpx, Some(&opx), p_kbar) {
                Ok(t) => {
                    prop_assert!(t.temperature_c.is_finite() && t.temperature_c > -273.15,
                        "{} gave {} for {cpx:?} / {opx:?}", thermometer.id(), t.temperature_c);
                    prop_assert!(t.see_c.is_finite() && t.see_c > 0.0);
                    for w in &t.warnings {
                        prop_assert!(!w.contains("NaN") && !w.contains("inf"),
                            "{}: warning {w} for {cpx:?} / {opx:?}", thermometer.id());
                    }
                }
                Err(e) => check_refusal(&e.to_string())?,
            }
        }
        // A two-pyroxene thermometer without its orthopyroxene is a typed refusal.
        for thermometer in PyroxeneThermometer::ALL.into_iter().filter(|t| t.needs_pair()) {
            let e = pyroxene_temperature(thermometer, &cpx, None, p_kbar).unwrap_err();
            check_refusal(&e.to_string())?;
        }
    }
}
