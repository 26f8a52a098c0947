//! `consolute`: the workbench binary and its subcommands (design §4).
//!
//! This file stays thin: argument parsing here, each subcommand's work in `cli/`, the science in
//! the engine crates.

mod cli;

use std::process::ExitCode;

use clap::{Parser, Subcommand};

/// Consolute: from micrographs and microprobe analyses of exsolved crystals to reintegrated
/// bulk compositions and solvus temperatures.
#[derive(Debug, Parser)]
#[command(
    name = "consolute",
    version,
    about,
    args_conflicts_with_subcommands = true
)]
struct Cli {
    /// Project file to open in the workbench (with no command). Without it, the last project
    /// opened, or the bundled demo.
    #[arg(value_name = "PROJECT")]
    project: Option<std::path::PathBuf>,
    #[command(subcommand)]
    command: Option<Command>,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Structural formulae and end-member fractions from a CSV of spot analyses.
    Formula(cli::formula::FormulaArgs),
    /// Modal fractions of the mineral phases of a micrograph (voids excluded, with intervals).
    Segment(cli::segment::SegmentArgs),
    /// Ab-Or solvus of a solution model: consolute point, binodal, spinodal; ternary isotherm.
    Solvus(cli::solvus::SolvusArgs),
    /// Minimum crystallisation temperature of a bulk feldspar composition.
    MinTemp(cli::solvus::MinTempArgs),
    /// Two-feldspar temperatures (T_Ab, T_Or, T_An) of a coexisting pair.
    PairTemp(cli::solvus::PairTempArgs),
    /// The solution models: ids, citations, ideal-mixing choice.
    Models(cli::solvus::ModelsArgs),
    /// Recompute a whole project and write results, tables and a summary.
    Run(cli::run::RunArgs),
    /// One figure of a grain (solvus, ternary, histogram, micrograph) as SVG, PNG or PDF.
    Figure(cli::figure::FigureArgs),
    /// Pyroxene temperature of a clinopyroxene (and orthopyroxene) spot from a CSV of analyses.
    PxTemp(cli::px_temp::PxTempArgs),
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Some(Command::Formula(args)) => cli::formula::run(&args),
        Some(Command::Segment(args)) => cli::segment::run(&args),
        Some(Command::Solvus(args)) => cli::solvus::run_solvus(&args),
        Some(Command::MinTemp(args)) => cli::solvus::run_min_temp(&args),
        Some(Command::PairTemp(args)) => cli::solvus::run_pair_temp(&args),
        Some(Command::Models(args)) => cli::solvus::run_models(&args),
        Some(Command::Run(args)) => cli::run::run(&args),
        Some(Command::Figure(args)) => cli::figure::run(&args),
        Some(Command::PxTemp(args)) => cli::px_temp::run(&args),
        // No subcommand: the workbench window, on the last project or the bundled demo.
        None => match cli.project {
            Some(p) if !p.is_file() => Err(anyhow::anyhow!(
                "{}: no such project file; give the path of a project .json, or no path to open \
                 the last project",
                p.display()
            )),
            project => workbench::run(project).map_err(anyhow::Error::from),
        },
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(err) => {
            eprintln!("error: {err:#}");
            ExitCode::FAILURE
        }
    }
}
