//! Writing a run's results: `results.json` (design §4 keys), CSV tables and a plain-text summary.

use std::fmt::Write as _;
use std::path::Path;

use reintegration::{GrainSummary, MineralSystem, aggregate_sample};
use serde_json::{Value, json};

use crate::document::Project;
use crate::io::{ProjectError, write_atomically};
use crate::run::{GrainResult, RunResult};

/// The JSON keys of the bulk fractions of a system.
fn bulk_keys(system: MineralSystem) -> &'static [&'static str] {
    match system {
        MineralSystem::Feldspar => &["x_ab", "x_or", "x_an"],
        MineralSystem::Pyroxene => &["x_di", "x_hd", "x_en", "x_fs"],
    }
}

fn summary_json(s: &reintegration::Summary) -> Value {
    json!({
        "median": s.median, "p2_5": s.p2_5, "p97_5": s.p97_5, "mean": s.mean, "sd": s.sd,
        "mcse_median": if s.mcse_median.is_finite() { json!(s.mcse_median) } else { Value::Null },
        "draws": s.n,
    })
}

fn grain_json(g: &GrainResult) -> Value {
    let keys = bulk_keys(g.system);
    let bulk: serde_json::Map<String, Value> = keys
        .iter()
        .zip(&g.monte_carlo.bulk)
        .map(|(k, s)| ((*k).to_string(), json!(s.median)))
        .collect();
    let bulk_intervals: serde_json::Map<String, Value> = keys
        .iter()
        .zip(&g.monte_carlo.bulk)
        .map(|(k, s)| ((*k).to_string(), summary_json(s)))
        .collect();
    let nominal: serde_json::Map<String, Value> = keys
        .iter()
        .zip(&g.reintegration.molar)
        .map(|(k, v)| ((*k).to_string(), json!(v)))
        .collect();
    json!({
        "sample": g.sample,
        "grain": g.grain,
        "system": g.system,
        "bulk": bulk,
        "bulk_intervals": bulk_intervals,
        "bulk_nominal_molar_route": nominal,
        "bulk_mass_route": g.reintegration.mass,
        "route_difference": g.reintegration.route_difference,
        "volume_fractions": g.reintegration.volume_fractions,
        "min_temperature_c": g.min_temperature().map(summary_json),
        "min_temperature_outcomes": g.monte_carlo.outcomes,
        "pyroxene_pair_temperature": g.pyroxene_pair.as_ref().map(|t| json!({
            "thermometer": t.thermometer.id(), "temperature_c": t.temperature_c,
            "see_c": t.see_c, "warnings": t.warnings,
        })),
        "exsolution_temperature_c": g.pair.as_ref().map(|p| json!({
            "t_ab": p.temperatures_c[0], "t_or": p.temperatures_c[1], "t_an": p.temperatures_c[2],
            "spread": p.spread_c, "adjusted": p.adjusted_c, "concordant": p.concordant,
        })),
        "phases": g.phases.iter().map(|p| json!({
            "label": p.label, "mean": p.mean, "sd": p.sd, "spots_used": p.spots_used,
            "spots_excluded": p.spots_excluded,
        })).collect::<Vec<_>>(),
        "micrographs": g.micrographs.iter().map(|m| json!({
            "label": m.label, "fractions": m.fractions, "ci95": m.ci95,
            "unmixing_fractions": m.unmixing_fractions, "excluded_fraction": m.excluded_fraction,
            "measured_pixels": m.measured_pixels, "measured_area_um2": m.measured_area_um2,
            "levels": m.levels,
        })).collect::<Vec<_>>(),
        "notes": g.notes,
    })
}

/// Per-sample aggregates of a run.
fn samples_json(run: &RunResult) -> Vec<Value> {
    let mut ids: Vec<&str> = run.grains.iter().map(|g| g.sample.as_str()).collect();
    ids.dedup();
    ids.iter()
        .map(|id| {
            let grains: Vec<&GrainResult> = run.grains.iter().filter(|g| g.sample == *id).collect();
            let summaries: Vec<GrainSummary> = grains
                .iter()
                .map(|g| GrainSummary {
                    label: g.grain.clone(),
                    bulk: g.monte_carlo.bulk.iter().map(|s| s.median).collect(),
                    bulk_sd: g.monte_carlo.bulk.iter().map(|s| s.sd).collect(),
                    min_temperature_c: g.min_temperature().map(|s| (s.median, s.sd)),
                })
                .collect();
            let agg = aggregate_sample(&summaries);
            json!({
                "sample": id,
                "grains": grains.iter().map(|g| g.grain.clone()).collect::<Vec<_>>(),
                "bulk_mean": agg.bulk_mean,
                "bulk_between_grain_sd": agg.bulk_between_grain_sd,
                "min_temperature_mean_c": agg.min_temperature_mean_c,
                "min_temperature_se_c": agg.min_temperature_se_c,
                "min_temperature_between_grain_sd_c": agg.min_temperature_between_grain_sd_c,
                "min_temperature_mswd": agg.min_temperature_mswd,
            })
        })
        .collect()
}

/// The whole results document.
pub fn results_json(project: &Project, run: &RunResult) -> Value {
    json!({
        "project": project.name,
        "consolute_version": env!("CARGO_PKG_VERSION"),
        "settings": project.settings,
        "grains": run.grains.iter().map(grain_json).collect::<Vec<_>>(),
        "samples": samples_json(run),
        "failures": run.failures,
    })
}

fn csv_field(text: &str) -> String {
    if text.contains([',', '"', '\n']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

fn fmt_opt(v: Option<f64>, decimals: usize) -> String {
    v.map(|v| format!("{v:.decimals$}")).unwrap_or_default()
}

/// `phases.csv`: one row per phase of each grain.
pub fn phases_csv(run: &RunResult) -> String {
    let mut out =
        String::from("sample,grain,phase,spots_used,spots_excluded,composition,volume_fraction\n");
    for g in &run.grains {
        for (i, p) in g.phases.iter().enumerate() {
            let comp: Vec<String> = g
                .basis
                .iter()
                .zip(p.mean.iter().zip(&p.sd))
                .map(|(b, (m, s))| format!("{b} {m:.4}±{s:.4}"))
                .collect();
            let _ = writeln!(
                out,
                "{},{},{},{},{},{},{:.4}",
                csv_field(&g.sample),
                csv_field(&g.grain),
                csv_field(&p.label),
                p.spots_used.len(),
                p.spots_excluded.len(),
                csv_field(&comp.join(" ")),
                g.reintegration
                    .volume_fractions
                    .get(i)
                    .copied()
                    .unwrap_or(0.0)
            );
        }
    }
    out
}

/// `bulk.csv`: one row per grain, bulk fraction medians and 95 % intervals.
pub fn bulk_csv(run: &RunResult) -> String {
    let mut out = String::from(
        "sample,grain,system,end_member,median,p2_5,p97_5,molar_route_nominal,mass_route_nominal\n",
    );
    for g in &run.grains {
        for (j, s) in g.monte_carlo.bulk.iter().enumerate() {
            let _ = writeln!(
                out,
                "{},{},{:?},{},{:.4},{:.4},{:.4},{:.4},{:.4}",
                csv_field(&g.sample),
                csv_field(&g.grain),
                g.system,
                g.basis[j],
                s.median,
                s.p2_5,
                s.p97_5,
                g.reintegration.molar[j],
                g.reintegration.mass[j]
            );
        }
    }
    out
}

/// `temperatures.csv`: minimum crystallisation and exsolution temperatures per grain.
pub fn temperatures_csv(run: &RunResult) -> String {
    let mut out = String::from(
        "sample,grain,min_t_median_c,min_t_p2_5_c,min_t_p97_5_c,min_t_mcse_c,draws_with_t,draws,pair_t_ab_c,pair_t_or_c,pair_t_an_c,pair_adjusted_c\n",
    );
    for g in &run.grains {
        let t = g.min_temperature();
        let pair = g.pair.as_ref();
        let _ = writeln!(
            out,
            "{},{},{},{},{},{},{},{},{},{},{},{}",
            csv_field(&g.sample),
            csv_field(&g.grain),
            fmt_opt(t.map(|s| s.median), 1),
            fmt_opt(t.map(|s| s.p2_5), 1),
            fmt_opt(t.map(|s| s.p97_5), 1),
            fmt_opt(t.map(|s| s.mcse_median).filter(|v| v.is_finite()), 2),
            g.monte_carlo.outcomes.found,
            g.monte_carlo.temperature_draws.len(),
            fmt_opt(pair.and_then(|p| p.temperatures_c[0]), 1),
            fmt_opt(pair.and_then(|p| p.temperatures_c[1]), 1),
            fmt_opt(pair.and_then(|p| p.temperatures_c[2]), 1),
            fmt_opt(pair.and_then(|p| p.adjusted_c), 1),
        );
    }
    out
}

/// A plain-text summary for a person.
pub fn summary_text(project: &Project, run: &RunResult) -> String {
    let s = &project.settings;
    let mut out = String::new();
    let _ = writeln!(out, "Consolute results: {}", project.name);
    let _ = writeln!(
        out,
        "Model {} at {} kbar (sigma {} kbar); {} Monte Carlo draws per grain, seed {}.",
        s.feldspar_model, s.pressure_kbar, s.pressure_sigma_kbar, s.draws, s.seed
    );
    let _ = writeln!(out);
    for g in &run.grains {
        let _ = writeln!(out, "{} / {} ({:?})", g.sample, g.grain, g.system);
        let bulk: Vec<String> = g
            .basis
            .iter()
            .zip(&g.monte_carlo.bulk)
            .map(|(b, s)| format!("{b} {:.3} [{:.3}-{:.3}]", s.median, s.p2_5, s.p97_5))
            .collect();
        let _ = writeln!(out, "  bulk: {}", bulk.join(", "));
        match g.min_temperature() {
            Some(t) => {
                let _ = writeln!(
                    out,
                    "  minimum crystallisation temperature: {:.0} C (95 % {:.0}-{:.0} C; MC error of the median {:.1} C)",
                    t.median, t.p2_5, t.p97_5, t.mcse_median
                );
            }
            None => {
                let _ = writeln!(out, "  minimum crystallisation temperature: none");
            }
        }
        if let Some(p) = &g.pair {
            let show = |v: Option<f64>| v.map_or("none".to_string(), |v| format!("{v:.0} C"));
            let _ = writeln!(
                out,
                "  lamella pair: T_Ab {}, T_Or {}, T_An {}; adjusted {}",
                show(p.temperatures_c[0]),
                show(p.temperatures_c[1]),
                show(p.temperatures_c[2]),
                show(p.adjusted_c)
            );
        }
        if let Some(t) = &g.pyroxene_pair {
            let _ = writeln!(
                out,
                "  lamella pair ({}): {:.0} C ± {:.0} C (published SEE)",
                t.thermometer.id(),
                t.temperature_c,
                t.see_c
            );
        }
        for n in &g.notes {
            let _ = writeln!(out, "  note: {n}");
        }
        let _ = writeln!(out);
    }
    for f in &run.failures {
        let _ = writeln!(out, "FAILED {} / {}: {}", f.sample, f.grain, f.message);
    }
    out
}

/// Write `results.json`, `phases.csv`, `bulk.csv`, `temperatures.csv` and `summary.txt` into
/// `dir` (created if needed), each atomically.
///
/// # Errors
/// [`ProjectError::Io`] naming the file.
pub fn write_outputs(project: &Project, run: &RunResult, dir: &Path) -> Result<(), ProjectError> {
    std::fs::create_dir_all(dir).map_err(|source| ProjectError::Io {
        path: dir.to_path_buf(),
        source,
    })?;
    let mut results = serde_json::to_string_pretty(&results_json(project, run))
        .unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    results.push('\n');
    write_atomically(&dir.join("results.json"), results.as_bytes())?;
    write_atomically(&dir.join("phases.csv"), phases_csv(run).as_bytes())?;
    write_atomically(&dir.join("bulk.csv"), bulk_csv(run).as_bytes())?;
    write_atomically(
        &dir.join("temperatures.csv"),
        temperatures_csv(run).as_bytes(),
    )?;
    write_atomically(
        &dir.join("summary.txt"),
        summary_text(project, run).as_bytes(),
    )?;
    Ok(())
}
