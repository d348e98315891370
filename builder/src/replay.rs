//! Runs the runtime crate over a table of inputs, from the model file's bytes: what `regimix
//! replay` prints and what validation scores, so that what is validated is exactly what runs.

use std::fmt::Write as _;
use std::path::Path;

use regimix_format::{DecodeError, ModelView};
use regimix_runtime::{state_words, Estimator, Status};

use crate::config::{LongFormat, TimestampColumns};
use crate::error::DataError;
use crate::prepare::historian::{
    csv_error, open_csv, parse_number, read_file, Observation, RawColumn, ReadSpec,
};
use crate::prepare::text::windows_1252;
use crate::timestamp::{DateOrder, Micros, Rfc3339};

/// One replayed sample.
#[derive(Debug, Clone, PartialEq)]
pub struct ReplayRow {
    /// Sample time.
    pub time: Micros,
    /// Estimate, engineering units.
    pub value: f64,
    /// Raw model-domain estimate.
    pub model_value: f64,
    /// Status flags.
    pub status: u16,
    /// Largest typicality.
    pub typicality: f64,
    /// Dominant regime.
    pub dominant: u8,
    /// Regime weights.
    pub weights: Vec<f64>,
}

/// Status flags as text: `ok`, or names joined with `|`.
pub fn status_text(status: u16) -> String {
    const NAMES: [(u16, &str); 7] = [
        (Status::INPUT_SUBSTITUTED, "substituted"),
        (Status::INPUT_INVALID, "input-invalid"),
        (Status::OUT_OF_DOMAIN, "out-of-domain"),
        (Status::WARMING_UP, "warming-up"),
        (Status::FALLBACK, "fallback"),
        (Status::WRONG_INPUT_COUNT, "wrong-input-count"),
        (Status::CLIPPED, "clipped"),
    ];
    let names: Vec<&str> = NAMES
        .iter()
        .filter(|(bit, _)| status & bit != 0)
        .map(|(_, n)| *n)
        .collect();
    if names.is_empty() {
        "ok".to_string()
    } else {
        names.join("|")
    }
}

/// Steps a fresh estimator over `rows` (each row: the model's inputs in order).
pub fn replay(
    bytes: &[u8],
    times: &[Micros],
    rows: &[Vec<f64>],
) -> Result<Vec<ReplayRow>, DecodeError> {
    let model = ModelView::parse(bytes)?;
    let mut state = vec![0.0f64; state_words(&model)];
    let Ok(mut estimator) = Estimator::new(model, &mut state) else {
        return Err(DecodeError::LimitExceeded);
    };
    Ok(times
        .iter()
        .zip(rows)
        .map(|(&time, row)| {
            let e = estimator.step(row);
            ReplayRow {
                time,
                value: e.value,
                model_value: e.model_value,
                status: e.status.0,
                typicality: e.typicality,
                dominant: e.dominant,
                weights: estimator.weights().to_vec(),
            }
        })
        .collect())
}

/// How a replay CSV is written (the defaults: first column, `,`, decimal point, UTC, year first).
#[derive(Debug, Clone, PartialEq)]
pub struct CsvForm {
    /// Timestamp column(s); `None`: the first column.
    pub timestamp: Option<TimestampColumns>,
    /// Field delimiter (a `sep=` first line overrides it).
    pub delimiter: u8,
    /// Numbers are written with a decimal comma.
    pub decimal_comma: bool,
    /// Offset of timestamps written without one, minutes east of UTC.
    pub naive_offset_minutes: i32,
    /// How dates not starting with the year are read.
    pub date_order: DateOrder,
    /// One row per tag and time: where the tag name and the value are.
    pub long_format: Option<LongFormat>,
}

impl Default for CsvForm {
    fn default() -> Self {
        CsvForm {
            timestamp: None,
            delimiter: b',',
            decimal_comma: false,
            naive_offset_minutes: 0,
            date_order: DateOrder::Ymd,
            long_format: None,
        }
    }
}

/// A replay CSV as read: one step per row.
#[derive(Debug, Clone, PartialEq)]
pub struct Inputs {
    /// Row times.
    pub times: Vec<Micros>,
    /// The model's inputs per row, in model order; NaN where a cell held no value.
    pub rows: Vec<Vec<f64>>,
    /// Inputs with cells of text rather than numbers, in model order.
    pub text: Vec<TextCells>,
}

/// Cells of one input that held text, not a number (the runtime treats them as invalid).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TextCells {
    /// The input's tag.
    pub tag: String,
    /// Cells of text.
    pub cells: u64,
    /// The most frequent text (the first in order among equals).
    pub example: String,
    /// Some text reads as a number with the other decimal mark (`2,019` read with `.`): the
    /// decimal mark is likely set wrong.
    pub other_decimal_mark: bool,
}

/// Reads a CSV for replay: the timestamp column(s) (default: the first column) and the model's
/// input tags, one step per row. Quality markers, below-limit readings and blanks become NaN (the
/// runtime substitutes them); cells of text are counted per input.
pub fn read_inputs(
    path: &Path,
    model: &ModelView<'_>,
    form: &CsvForm,
) -> Result<Inputs, DataError> {
    let timestamp = match &form.timestamp {
        Some(t) => t.clone(),
        None => TimestampColumns::One(first_column(path, form.delimiter)?),
    };
    let columns: Vec<(String, &'static str)> = (0..model.n_inputs())
        .map(|j| (model.input_tag(j).to_string(), "model input"))
        .collect();
    let spec = ReadSpec {
        delimiter: form.delimiter,
        timestamp: &timestamp,
        columns: &columns,
        naive_offset_minutes: form.naive_offset_minutes,
        decimal_comma: form.decimal_comma,
        date_order: form.date_order,
        long_format: form.long_format.as_ref(),
        any_order: false,
    };
    let table = read_file(path, &spec)?;
    // Only values: a below-limit reading (`<0.01`) holds its limit but is not a measurement.
    let value = |c: &RawColumn, k: usize| match c.kinds[k] {
        Observation::Value => c.values[k],
        _ => f64::NAN,
    };
    let rows = (0..table.times.len())
        .map(|k| table.columns.iter().map(|c| value(c, k)).collect())
        .collect();
    let text = table
        .columns
        .iter()
        .filter_map(|c| {
            let cells: u64 = c.markers.values().sum();
            let (example, _) = c
                .markers
                .iter()
                .max_by(|a, b| a.1.cmp(b.1).then(b.0.cmp(a.0)))?;
            Some(TextCells {
                tag: c.name.clone(),
                cells,
                example: example.clone(),
                other_decimal_mark: c
                    .markers
                    .keys()
                    .any(|t| parse_number(t, !form.decimal_comma).is_some_and(f64::is_finite)),
            })
        })
        .collect();
    Ok(Inputs {
        times: table.times,
        rows,
        text,
    })
}

fn first_column(path: &Path, delimiter: u8) -> Result<String, DataError> {
    let mut reader = open_csv(path, delimiter)?.reader;
    let mut record = csv::ByteRecord::new();
    match reader.read_byte_record(&mut record) {
        Ok(true) => {
            let bytes = record.get(0).unwrap_or(b"");
            let name = match std::str::from_utf8(bytes) {
                Ok(text) => text.to_string(),
                Err(_) => windows_1252(bytes),
            };
            Ok(name.trim_start_matches('\u{feff}').trim().to_string())
        }
        Ok(false) => Err(DataError::Empty {
            path: path.to_path_buf(),
        }),
        Err(e) => Err(csv_error(path, e)),
    }
}

/// The replay table as CSV: timestamp, estimate, status (integer), flags, typicality, regime,
/// then one weight column per regime. Numbers use the shortest text that reads back exactly.
pub fn to_csv(rows: &[ReplayRow], regimes: usize) -> String {
    let mut out = String::from("timestamp,estimate,status,flags,typicality,regime");
    for i in 1..=regimes {
        let _ = write!(out, ",weight_{i}");
    }
    out.push('\n');
    for r in rows {
        let _ = write!(
            out,
            "{},{:?},{},{},{:?},{}",
            Rfc3339(r.time),
            r.value,
            r.status,
            status_text(r.status),
            r.typicality,
            r.dominant + 1
        );
        for w in &r.weights {
            let _ = write!(out, ",{w:?}");
        }
        out.push('\n');
    }
    out
}
