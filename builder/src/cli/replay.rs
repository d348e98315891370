//! `regimix replay MODEL DATA.csv [--out FILE]`.

use std::path::Path;

use anyhow::Context;
use regimix_builder::config::TimestampColumns;
use regimix_builder::output::write_atomic;
use regimix_builder::replay::{read_inputs, replay, to_csv, CsvForm, TextCells};
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
        long_format: None,
    })
}

/// The reader's hints name config keys (`delimiter: ";"`, `date-order`); replay takes the same
/// settings as options, so its messages name those instead.
fn as_options(message: &str) -> String {
    let mut text = message
        .replace(
            "set `date-order` to `dmy` or `mdy`",
            "pass `--date-order dmy` or `--date-order mdy`",
        )
        .replace("set `long-format: { tag-column: ", "pass `--long-format ")
        .replace(
            ", value-column: … }` with the column that holds the values",
            " VALUE_COLUMN` with the column that holds the values",
        );
    while let Some(start) = text.find("set `delimiter: \"") {
        let rest = &text[start + "set `delimiter: \"".len()..];
        let Some(end) = rest.find("\"`") else {
            break;
        };
        let written = &rest[..end];
        let option = format!("pass `--delimiter '{written}'`");
        let whole = start + "set `delimiter: \"".len() + end + "\"`".len();
        text.replace_range(start..whole, &option);
    }
    text
}

/// One line on stderr for an input with cells of text: how many, the most frequent, and the
/// option to pass when they are numbers with the other decimal mark.
fn text_warning(t: &TextCells, decimal_comma: bool, rows: usize) -> String {
    let mut line = format!(
        "warning: {}: {} of {rows} cells are text, not numbers (most often `{}`); the runtime treats them as invalid inputs",
        t.tag, t.cells, t.example
    );
    if t.other_decimal_mark {
        let other = if decimal_comma { '.' } else { ',' };
        line.push_str(&format!(
            "; some read as numbers with a decimal `{other}`: pass `--decimal-mark {other}`"
        ));
    }
    line
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
    let inputs = read_inputs(data, &model, form)
        .map_err(|e| anyhow::anyhow!(as_options(&format!("{:#}", anyhow::Error::from(e)))))?;
    let replayed = replay(&bytes, &inputs.times, &inputs.rows)
        .with_context(|| format!("{}", model_path.display()))?;
    for t in &inputs.text {
        eprintln!(
            "{}",
            text_warning(t, form.decimal_comma, inputs.times.len())
        );
    }
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

#[cfg(test)]
mod tests {
    use super::as_options;

    #[test]
    fn config_hints_become_options() {
        assert_eq!(
            as_options("x.csv:1: no column `A`; … separated by `;`, so set `delimiter: \";\"`"),
            "x.csv:1: no column `A`; … separated by `;`, so pass `--delimiter ';'`"
        );
        assert_eq!(
            as_options("`3/1/2026` is not a timestamp (day or month first: set `date-order` to `dmy` or `mdy`)"),
            "`3/1/2026` is not a timestamp (day or month first: pass `--date-order dmy` or `--date-order mdy`)"
        );
        assert_eq!(as_options("no hint here"), "no hint here");
    }
}
