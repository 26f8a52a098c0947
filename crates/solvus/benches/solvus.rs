//! Criterion benches of the solvus engine on the inputs of
//! `tests/reference/solvus_scipy_reference.py`, followed by the speed ratio against the SciPy
//! timings recorded in `tests/reference/solvus_scipy_reference.json`.
//!
//! `cargo bench -p solvus` (release build). Targets (issue 3): binary solvus of 200
//! temperatures plus the critical point under 2 ms; ternary isotherm under 20 ms; minimum
//! temperature under 0.2 ms (binary) and 2 ms (ternary); pair thermometry under 0.1 ms; and at
//! least 50 times faster than the SciPy script on the same work.
#![allow(clippy::unwrap_used)]

use std::hint::black_box;
use std::time::{Duration, Instant};

use criterion::{Criterion, criterion_group};
use solvus::{
    Composition, DEFAULT_UNCERTAINTY, SolutionModel, adjust_pair, min_crystallisation_temperature,
    pair_temperatures, solvus_curve, ternary_isotherm,
};

const SCIPY: &str = include_str!("../../../tests/reference/solvus_scipy_reference.json");

struct Inputs {
    haselton: SolutionModel,
    eg: SolutionModel,
    bulk_binary: Composition,
    bulk_ternary: Composition,
    alkali: Composition,
    plag: Composition,
}

fn inputs() -> Inputs {
    Inputs {
        haselton: SolutionModel::builtin("haselton1983").unwrap(),
        eg: SolutionModel::builtin("eg1990").unwrap(),
        bulk_binary: Composition::ab_or(0.45).unwrap(),
        bulk_ternary: Composition::new(0.45, 0.50, 0.05).unwrap(),
        alkali: Composition::new(0.483, 0.492, 0.025).unwrap(),
        plag: Composition::new(0.732, 0.153, 0.115).unwrap(),
    }
}

type Task = (&'static str, f64, Box<dyn Fn(&Inputs)>);

/// The benchmarked jobs: name (as in the SciPy JSON), target in seconds, the work.
fn tasks() -> Vec<Task> {
    vec![
        (
            "binary_solvus",
            2e-3,
            Box::new(|i: &Inputs| {
                black_box(solvus_curve(black_box(&i.haselton), 1000.0, 200, 473.15).unwrap());
            }),
        ),
        (
            "ternary_isotherm",
            20e-3,
            Box::new(|i: &Inputs| {
                black_box(ternary_isotherm(black_box(&i.eg), 1073.15, 1000.0).unwrap());
            }),
        ),
        (
            "min_temp_binary",
            0.2e-3,
            Box::new(|i: &Inputs| {
                black_box(
                    min_crystallisation_temperature(black_box(&i.haselton), &i.bulk_binary, 1000.0)
                        .unwrap(),
                );
            }),
        ),
        (
            "min_temp_ternary",
            2e-3,
            Box::new(|i: &Inputs| {
                black_box(
                    min_crystallisation_temperature(black_box(&i.eg), &i.bulk_ternary, 1000.0)
                        .unwrap(),
                );
            }),
        ),
        (
            "pair_temperatures",
            0.1e-3,
            Box::new(|i: &Inputs| {
                black_box(pair_temperatures(black_box(&i.eg), &i.alkali, &i.plag, 1000.0).unwrap());
            }),
        ),
    ]
}

fn benches(c: &mut Criterion) {
    let i = inputs();
    for (name, _, work) in tasks() {
        c.bench_function(name, |b| b.iter(|| work(&i)));
    }
    c.bench_function("pair_adjustment", |b| {
        b.iter(|| {
            black_box(
                adjust_pair(
                    black_box(&i.eg),
                    &i.alkali,
                    &i.plag,
                    1000.0,
                    DEFAULT_UNCERTAINTY,
                )
                .unwrap(),
            )
        })
    });
}

criterion_group!(solvus_benches, benches);

/// Mean time of one run, measured over at least half a second.
fn mean_seconds(work: &dyn Fn(&Inputs), i: &Inputs) -> f64 {
    work(i);
    let mut runs = 0u32;
    let start = Instant::now();
    while start.elapsed() < Duration::from_millis(500) || runs < 5 {
        work(i);
        runs += 1;
    }
    start.elapsed().as_secs_f64() / f64::from(runs)
}

fn print_ratios() {
    let scipy: serde_json::Value = serde_json::from_str(SCIPY).unwrap();
    println!();
    println!(
        "Speed against SciPy {} (NumPy {}, Python {}; tests/reference/solvus_scipy_reference.py):",
        scipy["scipy"].as_str().unwrap_or("?"),
        scipy["numpy"].as_str().unwrap_or("?"),
        scipy["python"].as_str().unwrap_or("?")
    );
    println!(
        "{:<18} {:>12} {:>12} {:>10} {:>12}  target",
        "task", "rust", "scipy", "ratio", "target time"
    );
    let i = inputs();
    for (name, target, work) in tasks() {
        let rust = mean_seconds(&*work, &i);
        let Some(py) = scipy["seconds_median"][name].as_f64() else {
            continue;
        };
        let ratio = py / rust;
        let ok = rust < target && ratio >= 50.0;
        println!(
            "{name:<18} {:>9.1} us {:>9.1} us {:>9.0}x {:>9.1} us  {}",
            rust * 1e6,
            py * 1e6,
            ratio,
            target * 1e6,
            if ok { "met" } else { "NOT met" }
        );
    }
}

fn main() {
    solvus_benches();
    Criterion::default().configure_from_args().final_summary();
    let args: Vec<String> = std::env::args().collect();
    if !args.iter().any(|a| a == "--test" || a == "--list") {
        print_ratios();
    }
}
