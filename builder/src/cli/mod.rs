//! Command-line interface: one module per subcommand over the library.

mod build;
mod check;
mod demo;
mod inspect;
mod replay;

use std::path::PathBuf;

use clap::{Parser, Subcommand};
use regimix_builder::config::LongFormat;

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
    /// Run the whole job on the bundled demo plant (an invented distillation column): build,
    /// validate and report.
    Demo {
        /// Output folder.
        #[arg(long, default_value = "regimix-demo")]
        out: PathBuf,
        /// No progress lines on stderr.
        #[arg(long)]
        quiet: bool,
    },
    /// Build a soft sensor: prepare the data, find regimes, select lags and dead times, fit and
    /// validate through the runtime; writes model.rgmx, model.yaml, report.html, validation.csv
    /// and summary.json.
    Build {
        /// The YAML project config.
        config: PathBuf,
        /// Output folder (created if needed; files replaced atomically).
        #[arg(long, default_value = "out")]
        out: PathBuf,
        /// No progress lines on stderr.
        #[arg(long)]
        quiet: bool,
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
        /// Read the CSV as this project config's `data` section describes it (timestamp,
        /// delimiter, decimal mark, date order, offset, long format) instead of the options
        /// below.
        #[arg(long, value_name = "CONFIG", conflicts_with_all = [
            "timestamp", "delimiter", "decimal_mark", "date_order", "naive_offset", "long_format"
        ])]
        like: Option<PathBuf>,
        /// Timestamp column (default: the first column), or a date column and a time-of-day
        /// column: `--timestamp date time`.
        #[arg(long, num_args = 1..=2, value_names = ["COLUMN", "TIME_COLUMN"])]
        timestamp: Vec<String>,
        /// Field delimiter.
        #[arg(long, default_value_t = ',')]
        delimiter: char,
        /// Decimal mark of the numbers: `.` or `,`.
        #[arg(long, default_value_t = '.')]
        decimal_mark: char,
        /// Order of dates that do not start with the year: `dmy` (31.12.2026) or `mdy`
        /// (12/31/2026); `ymd` accepts year-first dates only.
        #[arg(long, default_value = "ymd", value_parser = ["ymd", "dmy", "mdy"])]
        date_order: String,
        /// UTC offset of timestamps written without one: `+01:00`, `-05:30` or `UTC`.
        #[arg(long, default_value = "UTC", allow_hyphen_values = true)]
        naive_offset: String,
        /// One row per tag and time: the column holding the tag name and the one holding the
        /// value (`--long-format Tag Value`).
        #[arg(long, num_args = 2, value_names = ["TAG_COLUMN", "VALUE_COLUMN"])]
        long_format: Vec<String>,
        /// With `--long-format`: the column of quality codes; rows whose code is not a
        /// `--good-quality` code are invalid inputs.
        #[arg(long, requires = "long_format")]
        quality_column: Option<String>,
        /// A quality code that means a usable value (repeatable; compared without regard to
        /// case).
        #[arg(long, requires = "quality_column", default_value = "Good")]
        good_quality: Vec<String>,
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

/// Writes `text` to stdout; a reader that went away (`| head`) ends the output quietly.
pub fn print_out(text: &str) -> anyhow::Result<()> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        other => Ok(other?),
    }
}

/// Runs the parsed command.
pub fn run(cli: Cli) -> anyhow::Result<()> {
    match cli.command {
        Command::Check { config, json } => check::run(&config, json),
        Command::Build { config, out, quiet } => build::run(&config, &out, quiet),
        Command::Demo { out, quiet } => demo::run(&out, quiet),
        Command::Replay {
            model,
            data,
            out,
            like,
            timestamp,
            delimiter,
            decimal_mark,
            date_order,
            naive_offset,
            long_format,
            quality_column,
            good_quality,
        } => {
            let mut form = replay::csv_form(
                timestamp,
                delimiter,
                decimal_mark,
                &date_order,
                &naive_offset,
            )?;
            if let Ok([tag_column, value_column]) = <[String; 2]>::try_from(long_format) {
                form.long_format = Some(LongFormat {
                    tag_column,
                    value_column,
                    quality_column,
                    good_quality,
                });
            }
            if let Some(config) = &like {
                form = replay::form_of(config)?;
            }
            replay::run(&model, &data, out.as_deref(), &form, like.is_some())
        }
        Command::Inspect { model, json } => inspect::run(&model, json),
    }
}
