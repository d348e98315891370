//! `regimix check CONFIG [--json]`.

use std::io::Write;
use std::path::Path;

use anyhow::Context;
use regimix_builder::config::Config;
use regimix_builder::prepare::prepare;

/// Audits the data of `config_path` and prints the findings.
pub fn run(config_path: &Path, json: bool) -> anyhow::Result<()> {
    let config = Config::load(config_path)?;
    let prepared = prepare(&config)?;
    let mut out = std::io::stdout().lock();
    if json {
        serde_json::to_writer_pretty(&mut out, &prepared.audit).context("writing JSON")?;
        writeln!(out)?;
    } else {
        write!(out, "{}", prepared.audit)?;
    }
    Ok(())
}
