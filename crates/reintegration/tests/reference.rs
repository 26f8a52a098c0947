//! Reintegration checks against the worked example of design §3.2, the consistency of the two
//! routes, and the behaviour of the Monte Carlo propagation.

use std::collections::BTreeMap;

use mineral::{EndMember, Oxide, ideal_oxide_wt};
use proptest::prelude::*;
use reintegration::*;

fn phase(label: &str, fractions: &[f64]) -> PhaseInput {
    PhaseInput {
        label: label.into(),
        fractions: fractions.to_vec(),
        spots: vec![],
        sigma: vec![],
        oxides_wt: None,
        density_g_cm3: None,
    }
}

fn modal(fractions: &[f64], half_width: f64) -> ModalInput {
    ModalInput {
        label: "bse".into(),
        measured_area: 1.0,
        fractions: fractions.to_vec(),
        ci95: fractions
            .iter()
            .map(|f| (f - half_width, f + half_width))
            .collect(),
        level_sensitivity: None,
    }
}

fn worked_example_grain() -> GrainInput {
    GrainInput {
        label: "worked".into(),
        system: MineralSystem::Feldspar,
        phases: vec![
            phase("host", &[0.07, 0.92, 0.01]),
            phase("lamella", &[0.95, 0.03, 0.02]),
        ],
        micrographs: vec![modal(&[0.6, 0.4], 0.02)],
    }
}

/// Symmetric Ab-Or excess volume W_V X_Ab X_Or, independent of the solvus crate.
struct SymmetricAbOr(f64);

impl ExcessVolume for SymmetricAbOr {
    fn excess_j_per_bar(&self, x: &[f64]) -> f64 {
        self.0 * x[0] * x[1]
    }
    fn describe(&self) -> String {
        "symmetric".into()
    }
}

#[test]
fn worked_example_of_the_molar_route() {
    // Source: design §3.2 worked example, derived from Holland & Powell (2011) volumes (high
    // albite 10.105, sanidine 10.871, anorthite 10.079 J/bar) with a symmetric excess volume of
    // 0.394 J/bar (Haselton et al. 1983): bulk Ab 0.4361, Or 0.5497, An 0.0142. The published
    // figures have four decimals, so the tolerance is 5e-5.
    let r = reintegrate(
        &worked_example_grain(),
        &VolumeSettings::default(),
        &SymmetricAbOr(0.394),
    )
    .expect("valid grain");
    for (got, want) in r.molar.iter().zip([0.4361, 0.5497, 0.0142]) {
        assert!((got - want).abs() < 5e-5, "{:?}", r.molar);
    }
    // Area weighting alone would give Or 0.564 (same source): volume weighting moves it.
    assert!(r.molar[1] < 0.56);
    // The solvus crate's Haselton et al. (1983) model carries the same W_V terms.
    let model = solvus::model::SolutionModel::builtin("haselton1983").expect("built in");
    let r2 = reintegrate(&worked_example_grain(), &VolumeSettings::default(), &model)
        .expect("valid grain");
    for (a, b) in r.molar.iter().zip(&r2.molar) {
        assert!((a - b).abs() < 1e-12);
    }
}

#[test]
fn molar_and_mass_routes_agree_when_densities_are_m_over_v() {
    // Source: design §3.2: with rho_i = M_i / V_i and stoichiometric analyses the two routes are
    // algebraically the same (moles = f rho / M = f / V). Tolerance 1e-9: rounding only.
    let r = reintegrate(
        &worked_example_grain(),
        &VolumeSettings::default(),
        &SymmetricAbOr(0.394),
    )
    .expect("valid");
    assert!(r.route_difference < 1e-9, "{}", r.route_difference);
    assert!(r.notes.is_empty(), "{:?}", r.notes);
    // Densities near the end-members': sanidine 2.56, high albite ~2.59 g/cm3 (design §3.1).
    assert!((r.densities_g_cm3[0] - 2.56).abs() < 0.02);
    assert!((r.densities_g_cm3[1] - 2.60).abs() < 0.02);
}

#[test]
fn a_user_density_that_breaks_m_over_v_is_reported() {
    let mut grain = worked_example_grain();
    grain.phases[0].density_g_cm3 = Some(2.70);
    let r = reintegrate(&grain, &VolumeSettings::default(), &IdealVolume).expect("valid");
    assert!(
        r.notes
            .iter()
            .any(|n| n.contains("host") && n.contains("differs"))
    );
    assert!(r.route_difference > 0.005);
}

#[test]
fn real_analyses_feed_the_mass_route() {
    // Stoichiometric oxide analyses give the same result as the fractions alone
    // (source: stoichiometry; tolerance 1e-9).
    let mut grain = worked_example_grain();
    for p in &mut grain.phases {
        let basis = MineralSystem::Feldspar.basis();
        let mix: Vec<(EndMember, f64)> = basis
            .iter()
            .copied()
            .zip(p.fractions.iter().copied())
            .collect();
        let mut wt = ideal_oxide_wt(&mix).expect("valid");
        // A total of 99 wt% must not matter: the mass route normalises each analysis.
        wt.values_mut().for_each(|v| *v *= 0.99);
        p.oxides_wt = Some(wt);
    }
    let r = reintegrate(&grain, &VolumeSettings::default(), &IdealVolume).expect("valid");
    assert!(r.route_difference < 1e-9);
    let total: f64 = r.bulk_oxides_wt.values().sum();
    assert!((total - 100.0).abs() < 1e-9);
}

#[test]
fn micrographs_are_combined_by_measured_area() {
    // Source: area weighting by definition: 0.5 on 3 units of area and 0.7 on 1 unit give 0.55.
    let mut grain = worked_example_grain();
    grain.micrographs = vec![
        ModalInput {
            measured_area: 3.0,
            ..modal(&[0.5, 0.5], 0.01)
        },
        ModalInput {
            measured_area: 1.0,
            ..modal(&[0.7, 0.3], 0.01)
        },
    ];
    let r = reintegrate(&grain, &VolumeSettings::default(), &IdealVolume).expect("valid");
    assert!((r.volume_fractions[0] - 0.55).abs() < 1e-12);
}

#[test]
fn bad_input_names_the_grain_and_the_place() {
    let mut grain = worked_example_grain();
    grain.phases[1].fractions = vec![0.9, 0.3, 0.02];
    let err = reintegrate(&grain, &VolumeSettings::default(), &IdealVolume).expect_err("bad sum");
    let text = err.to_string();
    assert!(
        text.contains("grain 'worked'") && text.contains("phase 'lamella'"),
        "{text}"
    );
    let mut grain = worked_example_grain();
    grain.micrographs[0].fractions = vec![0.6, f64::NAN];
    let err = reintegrate(&grain, &VolumeSettings::default(), &IdealVolume).expect_err("nan");
    assert!(err.to_string().contains("micrograph 'bse'"));
}

fn run(grain: &GrainInput, settings: &MonteCarloSettings) -> MonteCarloResult {
    monte_carlo(
        grain,
        &VolumeSettings::default(),
        &SymmetricAbOr(0.394),
        None,
        settings,
        &JobControl::default(),
    )
    .expect("runs")
}

#[test]
fn monte_carlo_is_reproducible_for_any_thread_count() {
    let settings = MonteCarloSettings {
        draws: 500,
        seed: 99,
        temperatures: false,
        ..MonteCarloSettings::default()
    };
    let grain = worked_example_grain();
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("pool")
        .install(|| run(&grain, &settings));
    let three = rayon::ThreadPoolBuilder::new()
        .num_threads(3)
        .build()
        .expect("pool")
        .install(|| run(&grain, &settings));
    assert_eq!(one.bulk_draws, three.bulk_draws);
    let other_seed = run(
        &grain,
        &MonteCarloSettings {
            seed: 100,
            ..settings
        },
    );
    assert_ne!(one.bulk_draws, other_seed.bulk_draws);
}

#[test]
fn monte_carlo_spread_matches_the_delta_method() {
    // Source: first-order error propagation (delta method; e.g. Taylor 1997, ch. 3; from
    // memory). With only the modal fraction uncertain (sigma_f = 0.02 / 1.96 on the host, the
    // lamella taking the rest) the spread of bulk X_Or is |dX_Or/df| sigma_f, with the derivative
    // taken by central differences of the deterministic route. 4000 draws give the SD to about
    // 1.1 % (1/sqrt(2n)), and clipping/nonlinearity are negligible at this size: accept 5 %.
    let grain = GrainInput {
        micrographs: vec![ModalInput {
            ci95: vec![(0.58, 0.62), (0.40, 0.40)],
            ..modal(&[0.6, 0.4], 0.0)
        }],
        ..worked_example_grain()
    };
    let settings = MonteCarloSettings {
        draws: 4000,
        volume_rel_sigma: 0.0,
        temperatures: false,
        ..MonteCarloSettings::default()
    };
    let mc = run(&grain, &settings);
    let at = |f: f64| {
        let mut g = worked_example_grain();
        g.micrographs = vec![modal(&[f, 1.0 - f], 0.0)];
        reintegrate(&g, &VolumeSettings::default(), &SymmetricAbOr(0.394))
            .expect("valid")
            .molar[1]
    };
    let h = 1e-4;
    let slope = (at(0.6 + h) - at(0.6 - h)) / (2.0 * h);
    // The host's sigma, renormalised against a fixed lamella fraction: d(f/(f+0.4))/df = 0.4.
    let sigma_f = 0.02 / 1.959_963_984_540_054 * 0.4;
    let expected = slope.abs() * sigma_f;
    let got = mc.bulk[1].sd;
    assert!(
        ((got - expected) / expected).abs() < 0.05,
        "{got} vs {expected}"
    );
    // The median sits on the deterministic value within a few MC standard errors.
    assert!((mc.bulk[1].median - at(0.6)).abs() < 4.0 * mc.bulk[1].mcse_median + 1e-6);
}

#[test]
fn zero_uncertainty_gives_the_deterministic_result_every_draw() {
    let mut grain = worked_example_grain();
    grain.micrographs = vec![modal(&[0.6, 0.4], 0.0)];
    let settings = MonteCarloSettings {
        draws: 64,
        volume_rel_sigma: 0.0,
        temperatures: false,
        ..MonteCarloSettings::default()
    };
    let mc = run(&grain, &settings);
    let det = reintegrate(&grain, &VolumeSettings::default(), &SymmetricAbOr(0.394)).expect("ok");
    for j in 0..3 {
        assert!(mc.bulk[j].sd < 1e-15);
        assert!((mc.bulk[j].median - det.molar[j]).abs() < 1e-12);
    }
}

#[test]
fn a_cancelled_run_says_so() {
    let control = JobControl::default();
    control
        .cancel
        .store(true, std::sync::atomic::Ordering::Relaxed);
    let err = monte_carlo(
        &worked_example_grain(),
        &VolumeSettings::default(),
        &IdealVolume,
        None,
        &MonteCarloSettings::default(),
        &control,
    )
    .expect_err("cancelled");
    assert_eq!(err, ReintegrationError::Cancelled);
}

#[test]
fn minimum_temperature_draws_come_from_the_solvus() {
    // The thermometer is the solvus engine's own minimum temperature: the Monte Carlo median of a
    // run with no uncertainty equals a direct call (tolerance 1e-9 C).
    let model = solvus::model::SolutionModel::builtin("haselton1983").expect("built in");
    let thermometer = SolvusThermometer {
        model: model.clone(),
    };
    let mut grain = worked_example_grain();
    grain.micrographs = vec![modal(&[0.6, 0.4], 0.0)];
    let settings = MonteCarloSettings {
        draws: 40,
        volume_rel_sigma: 0.0,
        ..MonteCarloSettings::default()
    };
    let mc = monte_carlo(
        &grain,
        &VolumeSettings::default(),
        &model,
        Some(&thermometer),
        &settings,
        &JobControl::default(),
    )
    .expect("runs");
    assert_eq!(mc.outcomes.found, 40);
    let det = reintegrate(&grain, &VolumeSettings::default(), &model).expect("ok");
    let direct = match thermometer.min_temperature(&det.molar, 1.0) {
        TemperatureOutcome::Value { temperature_c } => temperature_c,
        other => panic!("{other:?}"),
    };
    let t = mc.min_temperature_c.expect("temperatures");
    assert!((t.median - direct).abs() < 1e-9);
    // Haselton et al. (1983) consolute point at 1 kbar is 682.4 C (design §3.3): a bulk near
    // X_Or 0.55 must lie below it and well above 500 C (limb at 0.7591).
    assert!(direct < 682.5 && direct > 500.0, "{direct}");
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    /// Mass balance: for any phases and fractions the bulk sums to one and lies between the
    /// phases in every component (it is a convex combination).
    #[test]
    fn bulk_is_a_convex_combination(
        a in proptest::collection::vec(0.0f64..1.0, 3),
        b in proptest::collection::vec(0.0f64..1.0, 3),
        f in 0.0f64..1.0,
    ) {
        let norm = |v: &Vec<f64>| -> Option<Vec<f64>> {
            let s: f64 = v.iter().sum();
            (s > 1e-6).then(|| v.iter().map(|x| x / s).collect())
        };
        let (Some(a), Some(b)) = (norm(&a), norm(&b)) else { return Ok(()); };
        let grain = GrainInput {
            label: "p".into(),
            system: MineralSystem::Feldspar,
            phases: vec![phase("1", &a), phase("2", &b)],
            micrographs: vec![modal(&[f, 1.0 - f], 0.0)],
        };
        let r = reintegrate(&grain, &VolumeSettings::default(), &SymmetricAbOr(0.394)).expect("valid");
        prop_assert!((r.molar.iter().sum::<f64>() - 1.0).abs() < 1e-9);
        for j in 0..3 {
            prop_assert!(r.molar[j] >= a[j].min(b[j]) - 1e-12 && r.molar[j] <= a[j].max(b[j]) + 1e-12);
            prop_assert!(r.molar[j].is_finite() && r.mass[j].is_finite());
        }
        // Oxide mass is conserved: the bulk oxides total 100 wt%.
        let total: f64 = r.bulk_oxides_wt.values().sum();
        prop_assert!((total - 100.0).abs() < 1e-9);
        let _: &BTreeMap<Oxide, f64> = &r.bulk_oxides_wt;
    }
}

#[test]
fn one_phase_gives_back_its_own_composition() {
    // Source: mass balance (a single phase is its own bulk). Tolerance 1e-12: rounding only.
    let grain = GrainInput {
        phases: vec![phase("only", &[0.2, 0.7, 0.1])],
        micrographs: vec![modal(&[1.0], 0.0)],
        ..worked_example_grain()
    };
    let r = reintegrate(&grain, &VolumeSettings::default(), &SymmetricAbOr(0.394)).expect("ok");
    for (got, want) in r.molar.iter().zip([0.2, 0.7, 0.1]) {
        assert!((got - want).abs() < 1e-12);
    }
    for (got, want) in r.mass.iter().zip([0.2, 0.7, 0.1]) {
        assert!((got - want).abs() < 1e-9);
    }
}

#[test]
fn two_phases_of_one_composition_give_that_composition() {
    // Source: mass balance; whatever the fractions, a mixture of identical phases is that phase.
    for f in [0.0, 0.13, 0.5, 0.98, 1.0] {
        let grain = GrainInput {
            phases: vec![phase("a", &[0.3, 0.6, 0.1]), phase("b", &[0.3, 0.6, 0.1])],
            micrographs: vec![modal(&[f, 1.0 - f], 0.0)],
            ..worked_example_grain()
        };
        let r = reintegrate(&grain, &VolumeSettings::default(), &SymmetricAbOr(0.394)).expect("ok");
        for (got, want) in r.molar.iter().zip([0.3, 0.6, 0.1]) {
            assert!((got - want).abs() < 1e-12, "f = {f}");
        }
    }
}

#[test]
fn small_uncertainties_put_the_median_on_the_point_result() {
    // With uncertainties ten times smaller than the demo's, the Monte Carlo median must sit within
    // 1e-4 of the point result (a first-order effect of the uncertainty, here ~1e-3 x slope).
    let mut grain = worked_example_grain();
    grain.micrographs = vec![modal(&[0.6, 0.4], 0.002)];
    for p in &mut grain.phases {
        p.sigma = vec![0.0005; 3];
    }
    let settings = MonteCarloSettings {
        draws: 2000,
        volume_rel_sigma: 0.0002,
        temperatures: false,
        ..MonteCarloSettings::default()
    };
    let mc = run(&grain, &settings);
    let det = reintegrate(&grain, &VolumeSettings::default(), &SymmetricAbOr(0.394)).expect("ok");
    for j in 0..3 {
        assert!((mc.bulk[j].median - det.molar[j]).abs() < 1e-4, "{j}");
    }
}

#[test]
fn one_and_two_threads_give_the_same_numbers() {
    let settings = MonteCarloSettings {
        draws: 300,
        seed: 5,
        temperatures: false,
        ..MonteCarloSettings::default()
    };
    let grain = worked_example_grain();
    let with = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .expect("pool")
            .install(|| run(&grain, &settings))
    };
    assert_eq!(with(1), with(2));
}

#[test]
fn augite_and_pigeonite_reintegrate_alike_by_both_routes() {
    // Source: design §3.2 (routes agree when rho = M/V) with Holland & Powell (2011) volumes of
    // diopside, hedenbergite, enstatite and ferrosilite; a synthetic augite (Di 0.62 Hd 0.20
    // En 0.10 Fs 0.08) with pigeonite lamellae (Di 0.08 Hd 0.04 En 0.52 Fs 0.36), stoichiometric
    // oxide analyses, area fractions 0.7 / 0.3. Tolerance 1e-9: the routes are algebraically equal
    // in Wo, En, Fs (the cation ratios an analysis fixes).
    let basis = MineralSystem::Pyroxene.basis();
    let px = |label: &str, x: [f64; 4]| {
        let mix: Vec<(EndMember, f64)> = basis.iter().copied().zip(x).collect();
        PhaseInput {
            oxides_wt: Some(ideal_oxide_wt(&mix).expect("valid")),
            ..phase(label, &x)
        }
    };
    let grain = GrainInput {
        label: "px".into(),
        system: MineralSystem::Pyroxene,
        phases: vec![
            px("augite", [0.62, 0.20, 0.10, 0.08]),
            px("pigeonite", [0.08, 0.04, 0.52, 0.36]),
        ],
        micrographs: vec![modal(&[0.7, 0.3], 0.01)],
    };
    let r = reintegrate(&grain, &VolumeSettings::default(), &IdealVolume).expect("valid");
    assert!(r.route_difference < 1e-9, "{}", r.route_difference);
    assert!((r.molar.iter().sum::<f64>() - 1.0).abs() < 1e-12);
    // Mass balance: the bulk lies between the phases in every component.
    for j in 0..4 {
        let (a, b) = (grain.phases[0].fractions[j], grain.phases[1].fractions[j]);
        assert!(r.molar[j] >= a.min(b) && r.molar[j] <= a.max(b));
    }
}
