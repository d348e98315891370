//! `regimix replay MODEL DATA.csv [--out FILE]`.

use std::path::Path;

use anyhow::Context;
use regimix_builder::config::{Config, TimestampColumns};
use regimix_builder::output::write_atomic;
use regimix_builder::prepare::audit::tag_list;
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

/// The CSV's form as a project config's `data` section gives it (`replay --like`).
pub fn form_of(config: &Path) -> anyhow::Result<CsvForm> {
    let c = Config::load(config)?;
    Ok(CsvForm {
        timestamp: Some(c.timestamp),
        delimiter: c.delimiter,
        decimal_comma: c.decimal_comma,
        naive_offset_minutes: c.naive_offset_minutes,
        date_order: c.date_order,
        long_format: c.long_format,
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

/// Lines for stderr about inputs with cells of text. Inputs that are mostly text reading as
/// numbers with the other decimal mark share one line naming `--decimal-mark` (a setting, not
/// the data); inputs with text in at most 1 % of the rows (quality markers now and then) share
/// one line; every other input gets its own ([`text_warning`]).
fn text_warnings(text: &[TextCells], decimal_comma: bool, rows: usize) -> Vec<String> {
    let misread = |t: &&TextCells| t.other_decimal_mark && 2 * t.cells as usize > rows;
    let (wrong_mark, others): (Vec<&TextCells>, Vec<&TextCells>) = text.iter().partition(misread);
    let (few, others): (Vec<&TextCells>, Vec<&TextCells>) = others
        .into_iter()
        .partition(|t| 100 * t.cells as usize <= rows && !t.other_decimal_mark);
    let mut lines = Vec::new();
    if let Some(first) = wrong_mark.first() {
        let other = if decimal_comma { '.' } else { ',' };
        let names: Vec<&str> = wrong_mark.iter().map(|t| t.tag.as_str()).collect();
        lines.push(format!(
            "warning: {}: most cells are text that reads as numbers with a decimal `{other}` (like `{}`): pass `--decimal-mark {other}`; until then the runtime treats them as invalid inputs",
            tag_list(&names),
            first.example
        ));
    }
    if !few.is_empty() {
        let total: u64 = few.iter().map(|t| t.cells).sum();
        let counts: Vec<String> = few
            .iter()
            .map(|t| format!("{} ×{}", t.tag, t.cells))
            .collect();
        let shown = counts.len().min(6);
        let more = if counts.len() > shown {
            format!(" and {} more inputs", counts.len() - shown)
        } else {
            String::new()
        };
        lines.push(format!(
            "note: {total} cells of text such as `{}` ({}{more}); the runtime treats them as invalid inputs",
            few[0].example,
            counts[..shown].join(", ")
        ));
    }
    lines.extend(
        others
            .into_iter()
            .map(|t| text_warning(t, decimal_comma, rows)),
    );
    lines
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

/// Replays `data` through the model and writes the estimates (stdout without `--out`). With
/// `from_config` the form came from a config (`--like`), whose keys the hints then name.
pub fn run(
    model_path: &Path,
    data: &Path,
    out: Option<&Path>,
    form: &CsvForm,
    from_config: bool,
) -> anyhow::Result<()> {
    let bytes = std::fs::read(model_path)
        .with_context(|| format!("cannot read model {}", model_path.display()))?;
    let model = ModelView::parse(&bytes).with_context(|| format!("{}", model_path.display()))?;
    let inputs = read_inputs(data, &model, form).map_err(|e| {
        let message = format!("{:#}", anyhow::Error::from(e));
        anyhow::anyhow!(if from_config {
            message
        } else {
            as_options(&message)
        })
    })?;
    let replayed = replay(&bytes, &inputs.times, &inputs.rows)
        .with_context(|| format!("{}", model_path.display()))?;
    for line in text_warnings(&inputs.text, form.decimal_comma, inputs.times.len()) {
        eprintln!("{line}");
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
    use super::{as_options, text_warnings};
    use regimix_builder::replay::TextCells;

    fn cells(tag: &str, cells: u64, example: &str, other: bool) -> TextCells {
        TextCells {
            tag: tag.into(),
            cells,
            example: example.into(),
            other_decimal_mark: other,
        }
    }

    #[test]
    fn inputs_misread_by_the_decimal_mark_share_one_warning() {
        let text = [
            cells("FT-1", 1000, "0,000", true),
            cells("FT-2", 990, "5,4", true),
            cells("TI-3", 30, "Bad", false),
            cells("TI-4", 2, "1,5", true), // a few such cells among numbers: its own line
            cells("TI-5", 4, "Comm Fail", false), // markers now and then: one line for all
            cells("TI-6", 1, "Bad", false),
        ];
        let lines = text_warnings(&text, false, 1000);
        assert_eq!(lines.len(), 4, "{lines:#?}");
        assert!(
            lines[0].starts_with("warning: FT-1 and FT-2: most cells are text")
                && lines[0].contains("pass `--decimal-mark ,`"),
            "{}",
            lines[0]
        );
        assert_eq!(
            lines[1],
            "note: 5 cells of text such as `Comm Fail` (TI-5 ×4, TI-6 ×1); the runtime treats \
             them as invalid inputs"
        );
        assert!(
            lines[2].starts_with("warning: TI-3: 30 of 1000 cells"),
            "{}",
            lines[2]
        );
        assert!(lines[3].contains("pass `--decimal-mark ,`"), "{}", lines[3]);
    }

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
