//! One module per subcommand. Each exposes a clap `Args` struct and `run(&Args) -> anyhow::Result<()>`;
//! with `--json` it prints one JSON object on stdout, otherwise a readable table.

pub mod figure;
pub mod formula;
pub mod px_temp;
pub mod run;
pub mod segment;
pub mod solvus;
