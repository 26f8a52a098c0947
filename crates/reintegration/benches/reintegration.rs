//! Speed of one deterministic reintegration and of a Monte Carlo run.
#![allow(clippy::unwrap_used)]

use criterion::{Criterion, black_box, criterion_group, criterion_main};
use reintegration::*;

fn grain() -> GrainInput {
    let phase = |label: &str, x: [f64; 3]| PhaseInput {
        label: label.into(),
        fractions: x.to_vec(),
        spots: vec![],
        sigma: vec![0.005; 3],
        oxides_wt: None,
        density_g_cm3: None,
    };
    GrainInput {
        label: "bench".into(),
        system: MineralSystem::Feldspar,
        phases: vec![
            phase("host", [0.07, 0.92, 0.01]),
            phase("lamella", [0.95, 0.03, 0.02]),
        ],
        micrographs: vec![ModalInput {
            label: "m".into(),
            measured_area: 1.0,
            fractions: vec![0.6, 0.4],
            ci95: vec![(0.58, 0.62), (0.38, 0.42)],
            level_sensitivity: Some(vec![(0.59, 0.61), (0.41, 0.39)]),
        }],
    }
}

fn benches(c: &mut Criterion) {
    let g = grain();
    let model = solvus::model::SolutionModel::builtin("haselton1983").unwrap();
    c.bench_function("reintegrate", |b| {
        b.iter(|| reintegrate(black_box(&g), &VolumeSettings::default(), &model).unwrap())
    });
    let settings = MonteCarloSettings {
        draws: 1000,
        temperatures: false,
        ..MonteCarloSettings::default()
    };
    c.bench_function("monte_carlo_1000_draws_bulk_only", |b| {
        b.iter(|| {
            monte_carlo(
                &g,
                &VolumeSettings::default(),
                &model,
                None,
                &settings,
                &JobControl::default(),
            )
            .unwrap()
        })
    });
    let thermometer = SolvusThermometer {
        model: model.clone(),
    };
    let with_t = MonteCarloSettings {
        draws: 1000,
        ..MonteCarloSettings::default()
    };
    c.bench_function("monte_carlo_1000_draws_with_min_temperature", |b| {
        b.iter(|| {
            monte_carlo(
                &g,
                &VolumeSettings::default(),
                &model,
                Some(&thermometer),
                &with_t,
                &JobControl::default(),
            )
            .unwrap()
        })
    });
}

/// Issue 5 targets: 100 000 draws with a binary minimum temperature under 3 s, and 10 000 draws
/// with a ternary one under 10 s, on 2 cores.
fn large_runs(c: &mut Criterion) {
    let g = grain();
    let mut group = c.benchmark_group("monte_carlo_large");
    group.sample_size(10);
    for (model_id, draws) in [("haselton1983", 100_000usize), ("fl1988", 10_000)] {
        let model = solvus::model::SolutionModel::builtin(model_id).unwrap();
        let thermometer = SolvusThermometer {
            model: model.clone(),
        };
        let settings = MonteCarloSettings {
            draws,
            pressure_sigma_kbar: 0.5,
            ..MonteCarloSettings::default()
        };
        group.bench_function(format!("{draws}_draws_{model_id}"), |b| {
            b.iter(|| {
                let r = monte_carlo(
                    &g,
                    &VolumeSettings::default(),
                    &model,
                    Some(&thermometer),
                    &settings,
                    &JobControl::default(),
                )
                .unwrap();
                assert!(r.outcomes.found > draws / 2);
                r
            })
        });
    }
    group.finish();
}

criterion_group!(all, benches, large_runs);
criterion_main!(all);
