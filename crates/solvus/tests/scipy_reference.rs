//! The solvus engine against reference values computed with SciPy.
//!
//! Source: tests/reference/solvus_scipy_reference.py (brentq, fsolve and SLSQP of SciPy; the
//! versions are written in the JSON), which implements the same published equations
//! independently in NumPy. Regenerate with `python3 tests/reference/solvus_scipy_reference.py`.
#![allow(clippy::unwrap_used)]

use serde_json::Value;
use solvus::{
    BinodalOutcome, Composition, MinTemperature, SolutionModel, binodal, critical_point,
    min_crystallisation_temperature, pair_temperatures, solvus_curve, ternary_isotherm,
};

const FIXTURE: &str = include_str!("../../../tests/reference/solvus_scipy_reference.json");

fn values() -> Value {
    let v: Value = serde_json::from_str(FIXTURE).unwrap();
    assert!(
        v["scipy"].as_str().is_some(),
        "the fixture must name its SciPy version"
    );
    v["values"].clone()
}

fn f(v: &Value) -> f64 {
    v.as_f64().unwrap()
}

#[test]
fn critical_points_match_scipy() {
    // Tolerance: both find the sign change of d3G/dX3 with Brent's method to ~1e-15 in X.
    let v = values();
    for (key, expect) in v["critical_points"].as_object().unwrap() {
        let (id, p) = key.split_once('@').unwrap();
        let c = critical_point(&SolutionModel::builtin(id).unwrap(), p.parse().unwrap()).unwrap();
        assert!(
            (c.temperature_k - f(&expect["temperature_k"])).abs() < 1e-6,
            "{key}"
        );
        assert!((c.x_or - f(&expect["x_or"])).abs() < 1e-7, "{key}");
    }
}

#[test]
fn binodal_limbs_and_solvus_curve_match_scipy() {
    // Tolerance 1e-8 in X_Or: fsolve (xtol 1e-13) and the slope-Newton solver both converge to
    // round-off; 1e-9 K on the sampled temperatures (same formula).
    let v = values();
    let m = SolutionModel::builtin("haselton1983").unwrap();
    for (t_c, expect) in v["haselton1983_limbs_1kbar"].as_object().unwrap() {
        let t: f64 = t_c.parse::<f64>().unwrap() + 273.15;
        let BinodalOutcome::Gap(p) = binodal(&m, t, 1000.0).unwrap() else {
            panic!()
        };
        assert!((p.x_or_na_limb - f(&expect["x_or_na_limb"])).abs() < 1e-8);
        assert!((p.x_or_k_limb - f(&expect["x_or_k_limb"])).abs() < 1e-8);
    }
    let curve = solvus_curve(&m, 1000.0, 200, 473.15).unwrap();
    let reference = &v["binary_solvus_haselton1983_1kbar"];
    assert!(
        (curve.critical.temperature_k - f(&reference["critical"]["temperature_k"])).abs() < 1e-6
    );
    for (i, point) in reference["points"].as_array().unwrap().iter().enumerate() {
        let mine = curve.points[1 + 20 * i];
        assert!((mine.temperature_k - f(&point["temperature_k"])).abs() < 1e-9);
        assert!(
            (mine.x_or_na_limb - f(&point["x_or_na_limb"])).abs() < 1e-8,
            "{i}"
        );
        assert!(
            (mine.x_or_k_limb - f(&point["x_or_k_limb"])).abs() < 1e-8,
            "{i}"
        );
    }
}

#[test]
fn minimum_temperatures_match_scipy() {
    let v = values();
    // Binary: both Brent's method on the limb position, xtol 1e-7 K; tolerance 1e-5 K.
    let m = SolutionModel::builtin("haselton1983").unwrap();
    let r =
        min_crystallisation_temperature(&m, &Composition::ab_or(0.45).unwrap(), 1000.0).unwrap();
    let MinTemperature::Found { temperature_k, .. } = r.outcome else {
        panic!()
    };
    assert!((temperature_k - f(&v["min_temp_binary_haselton1983_1kbar_xor0.45_k"])).abs() < 1e-5);
    // Ternary: both bisect on T to a 1e-3 K bracket with a tangent-plane test; tolerance 2e-3 K.
    let m = SolutionModel::builtin("eg1990").unwrap();
    let bulk = Composition::new(0.45, 0.50, 0.05).unwrap();
    let r = min_crystallisation_temperature(&m, &bulk, 1000.0).unwrap();
    let MinTemperature::Found { temperature_k, .. } = r.outcome else {
        panic!()
    };
    let expect = f(&v["min_temp_ternary_eg1990_1kbar_ab0.45_or0.50_an0.05_k"]);
    assert!(
        (temperature_k - expect).abs() < 2e-3,
        "{temperature_k} vs {expect}"
    );
}

#[test]
fn ternary_isotherm_matches_scipy() {
    let v = values();
    let iso_ref = &v["isotherm_eg1990_800c_1kbar"];
    let m = SolutionModel::builtin("eg1990").unwrap();
    let t = 1073.15;
    let iso = ternary_isotherm(&m, t, 1000.0).unwrap();
    // Or-An edge tie-line: tolerance 1e-8 (both converge to round-off).
    let edge = iso
        .tie_lines
        .iter()
        .find(|tl| tl.na_rich.x_ab == 0.0)
        .unwrap();
    let plag = iso_ref["or_an_edge"]["plag"].as_array().unwrap();
    let kfs = iso_ref["or_an_edge"]["kfs"].as_array().unwrap();
    assert!((edge.na_rich.x_an - f(&plag[2])).abs() < 1e-8);
    assert!((edge.k_rich.x_or - f(&kfs[1])).abs() < 1e-8);
    // Critical point of the isotherm: both solve Gibbs' criteria with finite-difference third
    // derivatives; tolerance 1e-6.
    let c = iso.critical_point.unwrap();
    assert!((c.x_or - f(&iso_ref["critical_point"]["x_or"])).abs() < 1e-6);
    assert!((c.x_an - f(&iso_ref["critical_point"]["x_an"])).abs() < 1e-6);
    assert!(iso_ref["all_stable"].as_bool().unwrap() && iso.three_phase.is_none());
    // A SciPy tie-line is an equilibrium of this crate's model: equal mu within 1e-6 J/mol.
    let tl = &iso_ref["tie_line_at_kfs_x_ab_0.315"];
    let y = |k: &str| {
        let a = tl[k].as_array().unwrap();
        let (or, an) = (f(&a[0]), f(&a[1]));
        [1.0 - or - an, or, an]
    };
    let at = m.at(t, 1000.0).unwrap();
    let (mp, mk) = (
        at.chemical_potentials(
            &Composition::new(y("plag")[0], y("plag")[1], y("plag")[2]).unwrap(),
        ),
        at.chemical_potentials(&Composition::new(y("kfs")[0], y("kfs")[1], y("kfs")[2]).unwrap()),
    );
    for i in 0..3 {
        assert!(
            (mp[i] - mk[i]).abs() < 1e-6,
            "component {i}: {} vs {}",
            mp[i],
            mk[i]
        );
    }
}

#[test]
fn pair_temperatures_match_scipy() {
    // Same closed-form equation; tolerance 1e-9 K.
    let v = values();
    let r = pair_temperatures(
        &SolutionModel::builtin("eg1990").unwrap(),
        &Composition::new(0.483, 0.492, 0.025).unwrap(),
        &Composition::new(0.732, 0.153, 0.115).unwrap(),
        1000.0,
    )
    .unwrap();
    let p = &v["pair_eg1990_g4_1kbar_k"];
    assert!((r.ab.temperature_k().unwrap() - f(&p["ab"])).abs() < 1e-9);
    assert!((r.or.temperature_k().unwrap() - f(&p["or"])).abs() < 1e-9);
    assert!((r.an.temperature_k().unwrap() - f(&p["an"])).abs() < 1e-9);
}
