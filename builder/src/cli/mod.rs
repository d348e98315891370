//! Command-line interface: one module per subcommand over the library.

mod check;

use std::path::PathBuf;

use clap::{Parser, Subcommand};

/// Build fuzzy multi-model soft sensors from plant historian data.
///
/// Exit status: 0 success, 2 bad input (config, data or files), 1 internal error.
#[derive(Debug, Parser)]
#[command(name = "regimix", version, about, long_about = None)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Audit the data named in a config: per-tag findings and warnings; writes nothing.
    Check {
        /// The YAML project config.
        config: PathBuf,
        /// Print machine-readable JSON instead of text.
        #[arg(long)]
        json: bool,
    },
}

/// Runs the parsed command.
pub fn run(cli: Cli) -> anyhow::Result<()> {
    match cli.command {
        Command::Check { config, json } => check::run(&config, json),
    }
}
