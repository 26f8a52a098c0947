//! `consolute run PROJECT --out DIR`.

use std::path::PathBuf;

use anyhow::Context;
use clap::Args;
use project::output::{results_json, write_outputs};
use project::{RunProgress, load_project, run_project};
use reintegration::JobControl;

/// Arguments of `consolute run`.
#[derive(Debug, Args)]
pub struct RunArgs {
    /// The project file (JSON).
    pub project: PathBuf,
    /// Folder for results.json, the CSV tables and the summary (created if needed).
    #[arg(long)]
    pub out: PathBuf,
    /// Override the number of Monte Carlo draws per grain.
    #[arg(long)]
    pub draws: Option<usize>,
    /// Also print results.json on stdout.
    #[arg(long)]
    pub json: bool,
}

/// Progress lines on stderr.
struct StderrProgress;

impl RunProgress for StderrProgress {
    fn grain(&self, index: usize, total: usize, sample: &str, grain: &str) {
        eprintln!("[{}/{total}] {sample} / {grain}", index + 1);
    }
}

/// Run `consolute run`.
pub fn run(args: &RunArgs) -> anyhow::Result<()> {
    let mut project = load_project(&args.project)?;
    if let Some(draws) = args.draws {
        project.settings.draws = draws;
    }
    let result = run_project(
        &project,
        &args.project,
        &StderrProgress,
        &JobControl::default(),
    )
    .map_err(anyhow::Error::msg)
    .with_context(|| format!("running {}", args.project.display()))?;
    write_outputs(&project, &result, &args.out)?;
    let report = project::report::write_report(&project, &args.project, &result, &args.out)?;
    for p in &report.problems {
        eprintln!("figure not written: {p}");
    }
    if args.json {
        println!(
            "{}",
            serde_json::to_string_pretty(&results_json(&project, &result))?
        );
    }
    eprintln!(
        "wrote results.json, phases.csv, bulk.csv, temperatures.csv, summary.txt, report.md, report.html and {} figure files to {}",
        report.figures.len(),
        args.out.display()
    );
    if result.failures.is_empty() {
        Ok(())
    } else {
        for f in &result.failures {
            eprintln!("grain {} / {}: {}", f.sample, f.grain, f.message);
        }
        anyhow::bail!(
            "{} of {} grains could not be computed (their results are missing; see above)",
            result.failures.len(),
            result.failures.len() + result.grains.len()
        )
    }
}
