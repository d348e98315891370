//! Command-line interface: one module per subcommand over the library.

mod check;
mod inspect;
mod replay;

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
    /// Run a model file over a CSV of inputs: per row the estimate, status flags, typicality and
    /// regime weights, exactly as the runtime computes them.
    Replay {
        /// The model file (`.rgmx`).
        model: PathBuf,
        /// CSV with a timestamp column and the model's input tags, one row per sample.
        data: PathBuf,
        /// Write the table here (atomically) instead of to stdout.
        #[arg(long)]
        out: Option<PathBuf>,
        /// Timestamp column (default: the first column).
        #[arg(long)]
        timestamp: Option<String>,
        /// Field delimiter.
        #[arg(long, default_value_t = ',')]
        delimiter: char,
    },
    /// Show what a model file holds: regimes, operating points, gains, dead times, time
    /// constants, limits and settings.
    Inspect {
        /// The model file (`.rgmx`).
        model: PathBuf,
        /// Print machine-readable JSON instead of text.
        #[arg(long)]
        json: bool,
    },
}

/// Runs the parsed command.
pub fn run(cli: Cli) -> anyhow::Result<()> {
    match cli.command {
        Command::Check { config, json } => check::run(&config, json),
        Command::Replay {
            model,
            data,
            out,
            timestamp,
            delimiter,
        } => replay::run(
            &model,
            &data,
            out.as_deref(),
            timestamp.as_deref(),
            delimiter,
        ),
        Command::Inspect { model, json } => inspect::run(&model, json),
    }
}
