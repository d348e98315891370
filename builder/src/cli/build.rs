//! `regimix build CONFIG [--out DIR]`.

use std::path::Path;

use regimix_builder::build::build;
use regimix_builder::config::Config;
use regimix_builder::export::{model_yaml, summary, validation_csv};
use regimix_builder::output::write_all_atomic;
use regimix_builder::report::report_html;

/// Builds, validates and writes the model, its twin, the report, the validation table and the
/// summary into `out`.
pub fn run(config_path: &Path, out: &Path, quiet: bool) -> anyhow::Result<()> {
    let config = Config::load(config_path)?;
    let started = std::time::Instant::now();
    // One spinner line per stage on stderr (hidden with --quiet or when stderr is not a terminal).
    let bar = if quiet {
        indicatif::ProgressBar::hidden()
    } else {
        let bar = indicatif::ProgressBar::new_spinner();
        bar.enable_steady_tick(std::time::Duration::from_millis(120));
        bar
    };
    let progress = |stage: &str| bar.set_message(stage.to_string());
    let built = build(&config, &progress);
    bar.finish_and_clear();
    let built = built?;
    let s = summary(&built, config.modelling.seed);
    let json = serde_json::to_string_pretty(&s)? + "\n";
    let report = report_html(&built, &config, &s);
    let yaml = model_yaml(&built);
    let csv = validation_csv(&built);
    let files: [(&str, &[u8]); 5] = [
        ("model.rgmx", &built.bytes),
        ("model.yaml", yaml.as_bytes()),
        ("report.html", report.as_bytes()),
        ("validation.csv", csv.as_bytes()),
        ("summary.json", json.as_bytes()),
    ];
    write_all_atomic(out, &files)?;
    super::print_out(&(format!(
        "{} regimes, {} regressor{}; test RMSE {:.4}{} vs global linear {:.4} ({:.2}×); R² {:.3}; out of domain {:.1} %",
        s.regime_count,
        s.regressors.len(),
        if s.regressors.len() == 1 { "" } else { "s" },
        s.test.rmse,
        match config.target.spec.unit.as_str() {
            "" => String::new(),
            unit => format!(" {unit}"),
        },
        s.baseline.test.rmse,
        s.rmse_ratio,
        s.test.r2,
        100.0 * s.test.out_of_domain_fraction
    ) + "\n"))?;
    for note in &s.notes {
        super::print_out(&(format!("note: {note}") + "\n"))?;
    }
    super::print_out(
        &(format!(
        "wrote {}/{{model.rgmx, model.yaml, report.html, validation.csv, summary.json}} in {:.1} s",
        out.display(),
        started.elapsed().as_secs_f64()
    ) + "\n"),
    )?;
    Ok(())
}
