//! `consolute px-temp CSV --cpx SPOT [--opx SPOT] --thermometer ID --pressure-kbar P [--json]`.

use std::path::PathBuf;

use anyhow::{Context, anyhow};
use clap::Args;
use mineral::{Analysis, SpotTable, read_spot_file};
use project::px::thermometry_cations;
use serde_json::json;
use solvus::pyroxene::{PyroxeneThermometer, pyroxene_temperature};

/// Arguments of `consolute px-temp`.
#[derive(Debug, Args)]
pub struct PxTempArgs {
    /// CSV of pyroxene spot analyses (oxide wt%).
    pub csv: PathBuf,
    /// Spot id of the clinopyroxene (the `spot` column).
    #[arg(long)]
    pub cpx: String,
    /// Spot id of the orthopyroxene, for the two-pyroxene thermometers.
    #[arg(long)]
    pub opx: Option<String>,
    /// Thermometer: bk1990, wells1977, putirka2008-36, putirka2008-37 (pairs); putirka2008-32d
    /// (clinopyroxene alone).
    #[arg(long)]
    pub thermometer: String,
    /// Pressure, kbar.
    #[arg(long)]
    pub pressure_kbar: f64,
    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    pub json: bool,
}

fn spot<'a>(
    table: &'a SpotTable,
    id: &str,
    file: &std::path::Path,
) -> anyhow::Result<&'a Analysis> {
    let matches: Vec<&Analysis> = table.analyses.iter().filter(|a| a.id.spot == id).collect();
    match matches.as_slice() {
        [one] => Ok(one),
        [] => Err(anyhow!(
            "{}: no analysis with spot id '{id}' (the spot column holds ids such as '{}')",
            file.display(),
            table
                .analyses
                .first()
                .map(|a| a.id.spot.as_str())
                .unwrap_or("")
        )),
        _ => Err(anyhow!(
            "{}: {} analyses have spot id '{id}'; spot ids must be unique",
            file.display(),
            matches.len()
        )),
    }
}

/// Run `consolute px-temp`.
pub fn run(args: &PxTempArgs) -> anyhow::Result<()> {
    let thermometer = PyroxeneThermometer::from_id(&args.thermometer).ok_or_else(|| {
        anyhow!(
            "unknown thermometer '{}'; use one of: {}",
            args.thermometer,
            PyroxeneThermometer::ALL.map(|t| t.id()).join(", ")
        )
    })?;
    let table = read_spot_file(&args.csv)?;
    let cations = |id: &str| -> anyhow::Result<_> {
        thermometry_cations(spot(&table, id, &args.csv)?)
            .ok_or_else(|| anyhow!("spot '{id}' has no usable oxide values"))
    };
    let cpx = cations(&args.cpx)?;
    let opx = args.opx.as_deref().map(cations).transpose()?;
    let t = pyroxene_temperature(thermometer, &cpx, opx.as_ref(), args.pressure_kbar)
        .with_context(|| format!("spots in {}", args.csv.display()))?;
    if args.json {
        println!(
            "{}",
            serde_json::to_string_pretty(&json!({
                "temperature_c": t.temperature_c,
                "thermometer": thermometer.id(),
                "citation": thermometer.citation(),
                "see_c": t.see_c,
                "pressure_kbar": args.pressure_kbar,
                "cpx": args.cpx,
                "opx": args.opx,
                "warnings": t.warnings,
            }))?
        );
    } else {
        println!(
            "{:.0} C ± {:.0} C (published standard error), {} at {} kbar",
            t.temperature_c,
            t.see_c,
            thermometer.id(),
            args.pressure_kbar
        );
        println!("{}", thermometer.citation());
        for w in &t.warnings {
            println!("warning: {w}");
        }
    }
    Ok(())
}
