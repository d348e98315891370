//! `regimix check CONFIG [--json]`.

use std::path::Path;

use anyhow::Context;
use regimix_builder::config::Config;
use regimix_builder::prepare::prepare;

/// Audits the data of `config_path` and prints the findings.
pub fn run(config_path: &Path, json: bool) -> anyhow::Result<()> {
    let config = Config::load(config_path)?;
    let prepared = prepare(&config)?;
    let text = if json {
        serde_json::to_string_pretty(&prepared.audit).context("writing JSON")? + "\n"
    } else {
        prepared.audit.to_string()
    };
    super::print_out(&text)
}
