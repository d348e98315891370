//! `regimix replay MODEL DATA.csv [--out FILE]`.

use std::path::Path;

use anyhow::Context;
use regimix_builder::config::TimestampColumns;
use regimix_builder::output::write_atomic;
use regimix_builder::replay::{read_inputs, replay, to_csv, CsvForm};
use regimix_builder::timestamp::{parse_offset, DateOrder};
use regimix_format::ModelView;

/// The CSV's form from the command line's options.
pub fn csv_form(
    timestamp: Vec<String>,
    delimiter: char,
    decimal_mark: char,
    date_order: &str,
    naive_offset: &str,
) -> anyhow::Result<CsvForm> {
    if !delimiter.is_ascii() {
        anyhow::bail!("--delimiter must be one ASCII character");
    }
    let decimal_comma = match decimal_mark {
        '.' => false,
        ',' => true,
        other => anyhow::bail!("--decimal-mark must be `.` or `,`, not `{other}`"),
    };
    let date_order = match date_order {
        "dmy" => DateOrder::Dmy,
        "mdy" => DateOrder::Mdy,
        _ => DateOrder::Ymd, // clap allows only ymd, dmy, mdy
    };
    let Some(naive_offset_minutes) = parse_offset(naive_offset) else {
        anyhow::bail!(
            "--naive-offset must be like `+01:00`, `-05:30` or `UTC`, not `{naive_offset}`"
        );
    };
    let timestamp = match <[String; 2]>::try_from(timestamp) {
        Ok(split) => Some(TimestampColumns::Split(split)),
        Err(one) => one.into_iter().next().map(TimestampColumns::One),
    };
    Ok(CsvForm {
        timestamp,
        delimiter: delimiter as u8,
        decimal_comma,
        naive_offset_minutes,
        date_order,
    })
}

/// Replays `data` through the model and writes the estimates (stdout without `--out`).
pub fn run(
    model_path: &Path,
    data: &Path,
    out: Option<&Path>,
    form: &CsvForm,
) -> anyhow::Result<()> {
    let bytes = std::fs::read(model_path)
        .with_context(|| format!("cannot read model {}", model_path.display()))?;
    let model = ModelView::parse(&bytes).with_context(|| format!("{}", model_path.display()))?;
    let (times, rows) = read_inputs(data, &model, form)?;
    let replayed =
        replay(&bytes, &times, &rows).with_context(|| format!("{}", model_path.display()))?;
    let text = to_csv(&replayed, model.n_regimes());
    match out {
        Some(path) => {
            write_atomic(path, text.as_bytes())?;
            eprintln!("wrote {} rows to {}", replayed.len(), path.display());
        }
        None => super::print_out(&text)?,
    }
    Ok(())
}
