//! `consolute figure KIND PROJECT --grain SAMPLE/GRAIN --out FILE.{svg,png,pdf}`.

use std::path::PathBuf;

use anyhow::{Context, bail};
use clap::Args;
use project::figure::{FigureKind, FigureSize, GrainFigureOptions, grain_figure, render};
use project::{Quiet, load_project, run_project};
use reintegration::JobControl;
use serde_json::json;

/// Arguments of `consolute figure`.
#[derive(Debug, Args)]
pub struct FigureArgs {
    /// Figure kind: solvus, ternary, quadrilateral (pyroxene), histogram or micrograph.
    pub kind: String,
    /// The project file (JSON).
    pub project: PathBuf,
    /// The grain, as SAMPLE/GRAIN.
    #[arg(long)]
    pub grain: String,
    /// Output file; the extension chooses the format (.svg, .png, .pdf).
    #[arg(long)]
    pub out: PathBuf,
    /// Resolution of a PNG, dots per inch.
    #[arg(long, default_value_t = 300.0)]
    pub dpi: f64,
    /// Width in mm (84 single column, 174 double column).
    #[arg(long, default_value_t = 84.0)]
    pub width_mm: f64,
    /// More solution models to overlay on the solvus figure (ids, comma-separated).
    #[arg(long, value_delimiter = ',')]
    pub models: Vec<String>,
    /// Isotherm spacing of the ternary figure, °C.
    #[arg(long, default_value_t = 100.0)]
    pub interval_c: f64,
    /// Which micrograph of the grain (1 = first).
    #[arg(long, default_value_t = 1)]
    pub micrograph: usize,
    /// Leave the spinodal off the solvus figure.
    #[arg(long)]
    pub no_spinodal: bool,
    /// Override the number of Monte Carlo draws.
    #[arg(long)]
    pub draws: Option<usize>,
    /// Print a JSON object describing the file written.
    #[arg(long)]
    pub json: bool,
}

/// Run `consolute figure`.
pub fn run(args: &FigureArgs) -> anyhow::Result<()> {
    let Some(kind) = FigureKind::from_name(&args.kind) else {
        bail!(
            "unknown figure kind '{}': use one of {}",
            args.kind,
            FigureKind::ALL.map(|k| k.name()).join(", ")
        );
    };
    let ext = args
        .out
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or_default();
    let Some(format) = render::Format::from_extension(ext) else {
        bail!(
            "--out {}: the extension must be .svg, .png or .pdf",
            args.out.display()
        );
    };
    if !(args.width_mm.is_finite() && (20.0..=500.0).contains(&args.width_mm)) {
        bail!(
            "--width-mm {}: give a width from 20 to 500 mm",
            args.width_mm
        );
    }
    if args.micrograph == 0 {
        bail!("--micrograph counts from 1");
    }
    let Some((sample, grain)) = args.grain.split_once('/') else {
        bail!("--grain '{}': write it as SAMPLE/GRAIN", args.grain);
    };
    let mut project = load_project(&args.project)?;
    if let Some(d) = args.draws {
        project.settings.draws = d;
    }
    let known: Vec<String> = project
        .samples
        .iter()
        .flat_map(|s| s.grains.iter().map(move |g| format!("{}/{}", s.id, g.id)))
        .collect();
    // compute only the grain asked for
    project.samples.retain(|s| s.id == sample);
    for s in &mut project.samples {
        s.grains.retain(|g| g.id == grain);
    }
    if project.samples.iter().all(|s| s.grains.is_empty()) {
        bail!(
            "--grain {}: no such grain in {} (grains: {})",
            args.grain,
            args.project.display(),
            known.join(", ")
        );
    }
    let result = run_project(&project, &args.project, &Quiet, &JobControl::default())
        .map_err(anyhow::Error::msg)
        .with_context(|| format!("running {}", args.project.display()))?;
    if let Some(f) = result.failures.first() {
        bail!(
            "grain {} / {} could not be computed: {}",
            f.sample,
            f.grain,
            f.message
        );
    }
    let Some(g) = result.grains.first() else {
        bail!("grain {} gave no result", args.grain);
    };
    let options = GrainFigureOptions {
        size: FigureSize::WidthMm(args.width_mm),
        extra_models: args.models.clone(),
        isotherm_interval_c: args.interval_c,
        micrograph: args.micrograph - 1,
        spinodal: !args.no_spinodal,
        ..GrainFigureOptions::default()
    };
    let fig = grain_figure(kind, &project, &args.project, g, &options)?;
    let bytes = render::encode(&fig, format, args.dpi)?;
    project::write_atomically(&args.out, &bytes)?;
    let (pw, ph) = render::pixel_size(&fig, args.dpi);
    if args.json {
        println!(
            "{}",
            serde_json::to_string_pretty(&json!({
                "kind": kind.name(),
                "grain": args.grain,
                "file": args.out,
                "width_mm": fig.width_mm,
                "height_mm": fig.height_mm,
                "pixels": if ext.eq_ignore_ascii_case("png") { json!([pw, ph]) } else { serde_json::Value::Null },
                "legend": fig.legend.iter().map(|e| e.label.clone()).collect::<Vec<_>>(),
            }))?
        );
    } else {
        eprintln!(
            "wrote the {} figure of {} to {} ({:.0} x {:.0} mm)",
            kind.name(),
            args.grain,
            args.out.display(),
            fig.width_mm,
            fig.height_mm
        );
    }
    Ok(())
}
