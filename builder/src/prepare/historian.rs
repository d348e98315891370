//! Streaming reader for historian CSV exports.
//!
//! Rows are read one at a time into per-tag columns (the file is never held as one string). A
//! numeric cell becomes a value; an empty cell means "no observation at this time" (tags logged at
//! different moments leave blanks in a wide export); any other text (`Bad`, `I/O Timeout`,
//! `Shutdown`, `NaN`) is a quality marker: an observation known to be bad, counted per tag and per
//! distinct text, except `<` and a positive number (`<0.01`), a result below a detection limit.
//! Timestamps must not go backwards inside one file, unless the spec allows any order (lab
//! files), when the rows are sorted by time. Several files are merged by time; for duplicated
//! timestamps the rule of [`merge`] applies.

use std::borrow::Cow;
use std::collections::BTreeMap;
use std::io::Read;
use std::path::{Path, PathBuf};

use serde::Serialize;

use super::text::windows_1252;
use crate::config::{LongFormat, TimestampColumns};
use crate::error::DataError;
use crate::suggest::nearest;
use crate::timestamp::{parse_timestamp, DateOrder, Micros, Rfc3339};

/// What one raw cell held.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[repr(u8)]
pub enum Observation {
    /// A finite number.
    Value = 0,
    /// Nothing: no observation at this time.
    Empty = 1,
    /// A quality marker or non-finite number: a bad observation.
    Marker = 2,
    /// A number outside the tag's valid range (set by screening, not by the reader).
    OutOfRange = 3,
    /// A result below a detection or reporting limit, written `<` and the limit (`<0.01`,
    /// `< 5`); the value holds the limit. Bad for a process tag; what a lab target makes of it
    /// is `target.lab.below-limit`.
    BelowLimit = 4,
}

/// One tag's raw observations, aligned with [`RawTable::times`].
#[derive(Debug, Clone, PartialEq)]
pub struct RawColumn {
    /// Column name.
    pub name: String,
    /// Values; `NaN` where the cell was not a value.
    pub values: Vec<f64>,
    /// What each cell held.
    pub kinds: Vec<Observation>,
    /// Quality-marker text → count.
    pub markers: BTreeMap<String, u64>,
}

impl RawColumn {
    /// A column with no cells.
    pub fn empty(name: &str) -> Self {
        Self::new(name)
    }

    fn new(name: &str) -> Self {
        RawColumn {
            name: name.to_string(),
            values: Vec::new(),
            kinds: Vec::new(),
            markers: BTreeMap::new(),
        }
    }

    /// A cell known to be unusable, counted under `text` (a long-format row's quality code;
    /// an empty code counts as `(no quality)`).
    fn push_marker(&mut self, text: &str) {
        let text = if text.is_empty() {
            "(no quality)"
        } else {
            text
        };
        *self.markers.entry(text.to_string()).or_insert(0) += 1;
        self.values.push(f64::NAN);
        self.kinds.push(Observation::Marker);
    }

    fn push_cell(&mut self, text: &str, decimal_comma: bool) {
        let t = text.trim();
        if t.is_empty() {
            self.values.push(f64::NAN);
            self.kinds.push(Observation::Empty);
            return;
        }
        let (value, kind) = match parse_number(t, decimal_comma) {
            Some(v) if v.is_finite() => (v, Observation::Value),
            _ => match below_limit(t, decimal_comma) {
                Some(limit) => (limit, Observation::BelowLimit),
                None => {
                    if let Some(count) = self.markers.get_mut(t) {
                        *count += 1;
                    } else {
                        self.markers.insert(t.to_string(), 1);
                    }
                    (f64::NAN, Observation::Marker)
                }
            },
        };
        self.values.push(value);
        self.kinds.push(kind);
    }

    /// Cells holding a below-limit result ([`Observation::BelowLimit`]).
    pub fn below_limit(&self) -> usize {
        self.kinds
            .iter()
            .filter(|k| **k == Observation::BelowLimit)
            .count()
    }

    /// Number of non-empty cells.
    pub fn observations(&self) -> usize {
        self.kinds
            .iter()
            .filter(|k| **k != Observation::Empty)
            .count()
    }
}

/// A number cell: with `decimal_comma` the comma is the decimal mark, otherwise the point
/// (as Rust parses `f64`: exponents, `NaN` and `inf`, which the caller treats as markers), and
/// digits grouped in threes ([`grouped_number`]).
pub fn parse_number(text: &str, decimal_comma: bool) -> Option<f64> {
    // A leading minus sign as typeset (U+2212), as reports and some exports write it.
    if let Some(rest) = text.strip_prefix('\u{2212}') {
        return parse_number(rest, decimal_comma)
            .filter(|_| !rest.starts_with(['-', '+', '\u{2212}']))
            .map(|v| -v);
    }
    let plain = if decimal_comma {
        let bytes = text.as_bytes();
        let mut buf = [0u8; 64];
        if bytes.contains(&b'.') || bytes.len() > buf.len() {
            None
        } else {
            for (to, &from) in buf.iter_mut().zip(bytes) {
                *to = if from == b',' { b'.' } else { from };
            }
            std::str::from_utf8(&buf[..bytes.len()])
                .ok()
                .and_then(|t| t.parse().ok())
        }
    } else {
        text.parse().ok()
    };
    plain.or_else(|| grouped_number(text, decimal_comma))
}

/// A number whose integer digits are grouped in threes: by a space, a no-break or narrow
/// no-break space or an apostrophe (`12 345,6`, `12'345.6`; the SI Brochure, 9th edition, 2019,
/// §5.4.4, groups by a thin space), or by the mark that is not the decimal mark (`12,345.6`,
/// `12.345,6`). That mark also serves as a decimal mark in other exports, so it is taken as a
/// group separator only where it cannot be one: before a decimal mark, or twice (`1,234,567`);
/// `12,345` alone stays text, and `check` suggests the other `decimal-mark`. No exponent.
pub fn grouped_number(text: &str, decimal_comma: bool) -> Option<f64> {
    let (mark, other) = if decimal_comma {
        (',', '.')
    } else {
        ('.', ',')
    };
    let (sign, body) = match text.strip_prefix('-') {
        Some(rest) => ("-", rest),
        None => ("", text.strip_prefix('+').unwrap_or(text)),
    };
    let (int, frac) = match body.split_once(mark) {
        Some((int, frac)) => (int, Some(frac)),
        None => (body, None),
    };
    let separator = int.chars().find(|c| !c.is_ascii_digit())?;
    if !matches!(separator, ' ' | '\u{a0}' | '\u{202f}' | '\'') && separator != other {
        return None;
    }
    let groups: Vec<&str> = int.split(separator).collect();
    let (first, rest) = groups.split_first()?;
    let digits = |g: &str| g.bytes().all(|b| b.is_ascii_digit());
    if !(1..=3).contains(&first.len())
        || !digits(first)
        || rest.iter().any(|g| g.len() != 3 || !digits(g))
        || frac.is_some_and(|f| f.is_empty() || !digits(f))
        || (separator == other && frac.is_none() && groups.len() < 3)
    {
        return None;
    }
    let mut plain = String::with_capacity(text.len());
    plain.push_str(sign);
    plain.extend(groups);
    if let Some(frac) = frac {
        plain.push('.');
        plain.push_str(frac);
    }
    plain.parse().ok()
}

/// The limit of a below-limit result: `<` or `<=`, then a positive finite number, spaces
/// allowed between them (`<0.01`, `< 5`, `<=0,2` with a decimal comma).
fn below_limit(text: &str, decimal_comma: bool) -> Option<f64> {
    let rest = text.strip_prefix('<')?;
    let rest = rest.strip_prefix('=').unwrap_or(rest).trim_start();
    parse_number(rest, decimal_comma).filter(|v| v.is_finite() && *v > 0.0)
}

/// Rows of one or more files: timestamps and the requested columns.
#[derive(Debug, Clone, PartialEq)]
pub struct RawTable {
    /// Row times, microseconds since the epoch (sorted after [`merge`]).
    pub times: Vec<Micros>,
    /// Requested columns, in request order.
    pub columns: Vec<RawColumn>,
    /// What was read from each file, in reading order.
    pub files: Vec<FileRead>,
    /// Rows dropped by the duplicate-timestamp rule.
    pub duplicate_rows: usize,
}

/// What one file gave: its rows, and what was read in a way the user should know about.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FileRead {
    /// Path as given.
    pub path: String,
    /// Data rows read.
    pub rows: usize,
    /// Timestamp cells of the label rows skipped under the header ([`MAX_LABEL_ROWS`]):
    /// `Description`, `Units`.
    pub label_rows: Vec<String>,
    /// First cells of the rows after the data that are not data (a summary or "end of data"
    /// line, as some exports write; at most [`MAX_LABEL_ROWS`]), skipped.
    pub footer_rows: Vec<String>,
    /// Fields that were not UTF-8 and were read as Windows-1252 ([`windows_1252`]).
    pub windows_1252_fields: u64,
    /// Requested columns this file does not hold (others hold them; see [`read_files`]).
    pub absent: Vec<String>,
}

/// Most rows under a header that may be labels (tag descriptions, units, ranges, as many
/// historian exports write) rather than data. Such a row is recognised by a timestamp cell
/// without a digit; from the first row with a digit in it, every timestamp must parse.
pub const MAX_LABEL_ROWS: usize = 8;

/// How to read a file.
#[derive(Debug, Clone)]
pub struct ReadSpec<'a> {
    /// Field delimiter.
    pub delimiter: u8,
    /// Timestamp column(s).
    pub timestamp: &'a TimestampColumns,
    /// Columns to read, with the role used in error messages (`"input"`, `"target"`).
    pub columns: &'a [(String, &'static str)],
    /// Offset of naive timestamps, minutes east of UTC.
    pub naive_offset_minutes: i32,
    /// Numbers are written with a decimal comma (see [`parse_number`]).
    pub decimal_comma: bool,
    /// How dates not starting with the year are read.
    pub date_order: DateOrder,
    /// One row per tag and time: where the tag name and the value are.
    pub long_format: Option<&'a LongFormat>,
    /// Rows may come in any time order (a lab file sorted by sample number): they are sorted
    /// by time, keeping file order within a time. Otherwise time going backwards is an error.
    pub any_order: bool,
}

/// A CSV reader error as a [`DataError`] naming the file (and the line where known).
pub(crate) fn csv_error(path: &Path, err: csv::Error) -> DataError {
    let line = err.position().map(|p| p.line()).unwrap_or(0);
    match err.into_kind() {
        csv::ErrorKind::Io(cause) => DataError::Read {
            path: path.to_path_buf(),
            cause,
        },
        other => DataError::Csv {
            path: path.to_path_buf(),
            line,
            message: format!("{other:?}"),
        },
    }
}

/// Reads fields as text: UTF-8 as it is, anything else as Windows-1252 ([`windows_1252`]),
/// counted so that `check` can say so.
#[derive(Debug, Default)]
struct FieldText {
    /// Fields read that were not UTF-8.
    legacy: u64,
}

impl FieldText {
    fn get<'r>(&mut self, record: &'r csv::ByteRecord, index: usize) -> Cow<'r, str> {
        let bytes = record.get(index).unwrap_or(b"");
        match std::str::from_utf8(bytes) {
            Ok(text) => Cow::Borrowed(text),
            Err(_) => {
                self.legacy += 1;
                Cow::Owned(windows_1252(bytes))
            }
        }
    }
}

/// Reads one file, streaming, keeping only the timestamp and the requested columns; every
/// requested column must be in it.
pub fn read_file(path: &Path, spec: &ReadSpec<'_>) -> Result<RawTable, DataError> {
    read_one(path, spec, true).map(|(table, _)| table)
}

/// A file's header as read.
struct Header {
    /// Column names.
    names: Vec<String>,
    /// In a long-format file, the tag names its rows hold (the first [`MAX_TAG_NAMES`]).
    tags: Vec<String>,
    /// Lines above the header (a `sep=` line).
    above: u64,
    /// The delimiter the file was read with.
    delimiter: u8,
}

/// A first line `sep=;`, as spreadsheet programs write it to declare the delimiter (after a
/// UTF-8 byte-order mark, if any), at the start of `head`: the delimiter and the bytes to skip.
fn declared_delimiter(head: &[u8]) -> Option<(u8, usize)> {
    let bom = if head.starts_with(b"\xef\xbb\xbf") {
        3
    } else {
        0
    };
    let line = head.get(bom..)?;
    if !line.get(..4)?.eq_ignore_ascii_case(b"sep=") {
        return None;
    }
    let (delimiter, end) = match line.get(4..)? {
        [d, b'\r', b'\n', ..] => (*d, 7),
        [d, b'\n', ..] | [d, b'\r', ..] => (*d, 6),
        [d] => (*d, 5),
        _ => return None,
    };
    (delimiter.is_ascii() && !delimiter.is_ascii_alphanumeric()).then_some((delimiter, bom + end))
}

/// The first bytes of `input` (fewer only at its end).
fn first_bytes(input: &mut impl Read, head: &mut [u8]) -> std::io::Result<usize> {
    let mut got = 0;
    while got < head.len() {
        match input.read(&mut head[got..]) {
            Ok(0) => break,
            Ok(n) => got += n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(got)
}

/// A CSV reader positioned on a file's header.
pub struct Opened {
    /// The reader (no header handling: the first record is the header).
    pub reader: csv::Reader<Box<dyn Read>>,
    /// Lines above the header (a `sep=` line).
    pub above: u64,
    /// The delimiter in use: the file's own `sep=` declaration, else the configured one.
    pub delimiter: u8,
}

/// Opens a text export as CSV ([`super::text::open_text`]): a `sep=` first line is consumed and
/// overrides `delimiter`.
pub fn open_csv(path: &Path, delimiter: u8) -> Result<Opened, DataError> {
    let read_error = |cause| DataError::Read {
        path: path.to_path_buf(),
        cause,
    };
    let mut file = super::text::open_text(path).map_err(read_error)?;
    // Enough for a byte-order mark and `sep=;` with its line end.
    let mut head = [0u8; 16];
    let got = first_bytes(&mut file, &mut head).map_err(read_error)?;
    let (declared, skip) = match declared_delimiter(&head[..got]) {
        Some((delimiter, skip)) => (Some(delimiter), skip),
        None => (None, 0),
    };
    let rest = head.get(skip..got).unwrap_or(&[]).to_vec();
    let input: Box<dyn Read> = Box::new(std::io::Cursor::new(rest).chain(file));
    let delimiter = declared.unwrap_or(delimiter);
    let reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .has_headers(false)
        .flexible(true)
        .buffer_capacity(1 << 16)
        .from_reader(input);
    Ok(Opened {
        reader,
        above: u64::from(declared.is_some()),
        delimiter,
    })
}

/// Rows after the data that do not read as data: a summary or "end of data" line, recognised
/// as a row whose time cell has no digit or a row of the wrong width with no timestamp in it.
/// Such a row is held back; it is a footer row if no data row follows it (and at most
/// [`MAX_LABEL_ROWS`] such rows end the file), else the reason it did not read is the error.
#[derive(Default)]
struct Footer {
    rows: Vec<String>,
    first_error: Option<DataError>,
}

impl Footer {
    /// A row that did not read, for `error`; before any data row it is the error at once.
    fn push(&mut self, error: DataError, text: &str, data_rows: usize) -> Result<(), DataError> {
        if data_rows == 0 || self.rows.len() == MAX_LABEL_ROWS {
            return Err(self.first_error.take().unwrap_or(error));
        }
        self.first_error.get_or_insert(error);
        self.rows.push(text.to_string());
        Ok(())
    }

    /// A data row was read: an earlier row that did not read is an error.
    fn data_follows(&mut self) -> Result<(), DataError> {
        match self.first_error.take() {
            Some(error) => Err(error),
            None => Ok(()),
        }
    }
}

/// Reads one file; with `every_column` false, a requested column the file lacks reads as empty
/// cells and is listed in [`FileRead::absent`]. Returns the table and the header.
fn read_one(
    path: &Path,
    spec: &ReadSpec<'_>,
    every_column: bool,
) -> Result<(RawTable, Header), DataError> {
    let Opened {
        mut reader,
        above: skipped,
        delimiter,
    } = open_csv(path, spec.delimiter)?;
    let csv_error = |e: csv::Error| match csv_error(path, e) {
        DataError::Csv {
            path,
            line,
            message,
        } => DataError::Csv {
            path,
            line: line + skipped,
            message,
        },
        other => other,
    };
    let mut record = csv::ByteRecord::new();
    if !reader.read_byte_record(&mut record).map_err(csv_error)? {
        return Err(DataError::Empty {
            path: path.to_path_buf(),
        });
    }
    let mut fields = FieldText::default();
    let mut header = Vec::with_capacity(record.len());
    for i in 0..record.len() {
        let name = fields.get(&record, i);
        let name = name.trim_start_matches('\u{feff}').trim();
        if header.iter().any(|h: &String| h == name) && !name.is_empty() {
            return Err(DataError::DuplicateColumn {
                path: path.to_path_buf(),
                line: 1 + skipped,
                column: name.to_string(),
            });
        }
        header.push(name.to_string());
    }
    let locate = |name: &str, role: &'static str| -> Result<usize, DataError> {
        header
            .iter()
            .position(|h| h == name)
            .ok_or_else(|| missing_column(path, 1 + skipped, &header, name, role, delimiter))
    };
    let mut ts_index = Vec::with_capacity(2);
    for name in spec.timestamp.names() {
        ts_index.push(locate(name, "timestamp column")?);
    }
    // Long format: the tag and value columns, and each requested tag's cells as read.
    let long = match spec.long_format {
        Some(form) => Some((
            locate(&form.tag_column, "tag column of the long format")?,
            locate(&form.value_column, "value column of the long format")?,
            match &form.quality_column {
                Some(name) => Some(locate(name, "quality column of the long format")?),
                None => None,
            },
        )),
        None => None,
    };
    let mut by_tag: Vec<(Micros, u32)> = Vec::new();
    let mut seen: std::collections::BTreeSet<String> = std::collections::BTreeSet::new();
    let mut wanted = Vec::with_capacity(spec.columns.len());
    let mut absent = Vec::new();
    for (name, role) in spec.columns {
        if long.is_some() {
            wanted.push(None);
        } else if every_column || header.contains(name) {
            match locate(name, role) {
                Ok(index) => wanted.push(Some(index)),
                Err(e) => return Err(with_long_format_hint(e, path, spec, &header)),
            }
        } else {
            wanted.push(None);
            absent.push(name.clone());
        }
    }
    let mut columns: Vec<RawColumn> = spec
        .columns
        .iter()
        .map(|(n, _)| RawColumn::new(n))
        .collect();
    let mut times = Vec::new();
    // Data rows read (in the long format, `times` only fills when the rows are pivoted).
    let mut data_rows = 0usize;
    let mut labels = Vec::new();
    let mut previous: Option<Micros> = None;
    let mut previous_line = 1 + skipped;
    let mut footer = Footer::default();
    while reader.read_byte_record(&mut record).map_err(csv_error)? {
        // The reader reports the first record after the header as on the header's line (it
        // takes the header's line end in with the next record): a record starts at least one
        // line after the one before it.
        let line = (record.position().map_or(0, |p| p.line()) + skipped).max(previous_line + 1);
        previous_line = line;
        if record.len() == 1
            && record
                .get(0)
                .is_some_and(|f| f.iter().all(u8::is_ascii_whitespace))
        {
            continue; // blank line
        }
        if record.len() != header.len() {
            let error = DataError::Ragged {
                path: path.to_path_buf(),
                line,
                expected: header.len(),
                found: record.len(),
            };
            // A data row with a field too many or too few is an error; a line of text is not.
            let data_like = (0..record.len())
                .any(|i| parse_timestamp(&fields.get(&record, i), 0, spec.date_order).is_ok());
            if data_like {
                return Err(error);
            }
            footer.push(error, fields.get(&record, 0).trim(), data_rows)?;
            continue;
        }
        // A split timestamp's date and time of day, joined by a space.
        let ts_text = match ts_index[..] {
            [date, time] => {
                let (date, time) = (fields.get(&record, date), fields.get(&record, time));
                Cow::Owned(format!("{} {}", date.trim(), time.trim()))
            }
            _ => fields.get(&record, ts_index.first().copied().unwrap_or(0)),
        };
        if data_rows == 0
            && labels.len() < MAX_LABEL_ROWS
            && !ts_text.bytes().any(|b| b.is_ascii_digit())
        {
            labels.push(ts_text.trim().to_string());
            continue;
        }
        let time = match parse_timestamp(&ts_text, spec.naive_offset_minutes, spec.date_order) {
            Ok(time) => time,
            Err(cause) => {
                let error = DataError::Timestamp {
                    path: path.to_path_buf(),
                    line,
                    column: spec.timestamp.to_string(),
                    cause,
                };
                // As for label rows: a footer row's time cell has no digit in it.
                if ts_text.bytes().any(|b| b.is_ascii_digit()) {
                    return Err(error);
                }
                footer.push(error, ts_text.trim(), data_rows)?;
                continue;
            }
        };
        // A row that reads as data: whatever did not read before it was no footer.
        footer.data_follows()?;
        if let Some((tag_index, value_index, quality_index)) = long {
            // One tag's value per row; rows of tags not requested are passed over.
            let tag = fields.get(&record, tag_index);
            if seen.len() < MAX_TAG_NAMES && !seen.contains(tag.trim()) {
                seen.insert(tag.trim().to_string());
            }
            if let Some(j) = spec.columns.iter().position(|(n, _)| n == tag.trim()) {
                by_tag.push((time, j as u32));
                let quality = quality_index.map(|q| fields.get(&record, q));
                let good = spec.long_format.is_none_or(|form| {
                    quality.as_deref().is_none_or(|q| {
                        form.good_quality
                            .iter()
                            .any(|g| g.eq_ignore_ascii_case(q.trim()))
                    })
                });
                match quality {
                    Some(code) if !good => columns[j].push_marker(code.trim()),
                    _ => {
                        columns[j].push_cell(&fields.get(&record, value_index), spec.decimal_comma)
                    }
                }
            }
            data_rows += 1;
            continue;
        }
        if let (Some(prev), false) = (previous, spec.any_order) {
            if time < prev {
                return Err(DataError::NonMonotonic {
                    path: path.to_path_buf(),
                    line,
                    column: spec.timestamp.to_string(),
                    time: Rfc3339(time),
                    previous: Rfc3339(prev),
                    hint: crate::error::backwards_hint(prev - time),
                });
            }
        }
        previous = Some(time);
        times.push(time);
        data_rows += 1;
        for (column, &index) in columns.iter_mut().zip(&wanted) {
            match index {
                Some(index) => column.push_cell(&fields.get(&record, index), spec.decimal_comma),
                None => column.push_cell("", spec.decimal_comma),
            }
        }
    }
    if data_rows == 0 {
        return Err(DataError::HeaderOnly {
            path: path.to_path_buf(),
        });
    }
    let rows = data_rows;
    if spec.any_order && !times.is_sorted() {
        (times, columns) = sorted_by_time(times, columns);
    }
    let mut duplicate_rows = 0;
    if long.is_some() {
        absent = spec
            .columns
            .iter()
            .zip(&columns)
            .filter(|(_, c)| c.values.is_empty())
            .map(|((name, _), _)| name.clone())
            .collect();
        (times, columns, duplicate_rows) = pivot(by_tag, columns);
        if let (true, Some(form), Some(tag)) = (every_column, spec.long_format, absent.first()) {
            let names: Vec<String> = seen.iter().cloned().collect();
            return Err(missing_tag(path, tag, role_of(spec, tag), form, &names));
        }
    }
    let table = RawTable {
        times,
        columns,
        files: vec![FileRead {
            path: path.display().to_string(),
            rows,
            label_rows: labels,
            footer_rows: footer.rows,
            windows_1252_fields: fields.legacy,
            absent,
        }],
        duplicate_rows,
    };
    let header = Header {
        names: header,
        tags: seen.into_iter().collect(),
        above: skipped,
        delimiter,
    };
    Ok((table, header))
}

/// Rows put in time order, file order kept within a time.
fn sorted_by_time(times: Vec<Micros>, columns: Vec<RawColumn>) -> (Vec<Micros>, Vec<RawColumn>) {
    let mut order: Vec<usize> = (0..times.len()).collect();
    order.sort_by_key(|&i| times[i]); // stable
    let columns = columns
        .into_iter()
        .map(|c| RawColumn {
            values: order.iter().map(|&i| c.values[i]).collect(),
            kinds: order.iter().map(|&i| c.kinds[i]).collect(),
            ..c
        })
        .collect();
    (order.iter().map(|&i| times[i]).collect(), columns)
}

/// A long-format file's cells, read in file order into one column per tag (`by_tag[i]` is the
/// time and column of the i-th cell read), as one row per distinct time in time order. A tag
/// given twice at one time keeps its last value (or, with none, its last marker), as
/// [`merge`] does for repeated rows, and counts as a duplicate row.
fn pivot(
    by_tag: Vec<(Micros, u32)>,
    cells: Vec<RawColumn>,
) -> (Vec<Micros>, Vec<RawColumn>, usize) {
    // Each cell's position in its tag's column.
    let mut next = vec![0usize; cells.len()];
    let mut order: Vec<(Micros, u32, usize)> = by_tag
        .into_iter()
        .map(|(time, j)| {
            let at = next[j as usize];
            next[j as usize] += 1;
            (time, j, at)
        })
        .collect();
    order.sort_by_key(|&(time, _, _)| time); // stable: file order kept within a time
    let mut times: Vec<Micros> = order.iter().map(|&(t, _, _)| t).collect();
    times.dedup();
    let mut columns: Vec<RawColumn> = cells
        .iter()
        .map(|c| RawColumn {
            name: c.name.clone(),
            values: vec![f64::NAN; times.len()],
            kinds: vec![Observation::Empty; times.len()],
            markers: c.markers.clone(),
        })
        .collect();
    let mut duplicates = 0;
    let mut row = 0;
    for (i, &(time, j, at)) in order.iter().enumerate() {
        if i > 0 && time != order[i - 1].0 {
            row += 1;
        }
        let (j, source) = (j as usize, &cells[j as usize]);
        let column = &mut columns[j];
        let kind = source.kinds[at];
        if column.kinds[row] != Observation::Empty {
            duplicates += 1;
            // A later marker does not replace a value.
            if column.kinds[row] == Observation::Value && kind != Observation::Value {
                continue;
            }
        }
        if kind != Observation::Empty {
            column.values[row] = source.values[at];
            column.kinds[row] = kind;
        }
    }
    (times, columns, duplicates)
}

/// The role a requested column plays, for messages.
fn role_of(spec: &ReadSpec<'_>, name: &str) -> &'static str {
    spec.columns
        .iter()
        .find(|(n, _)| n == name)
        .map_or("column", |(_, role)| role)
}

/// Most tag names of a long-format file kept for error messages.
const MAX_TAG_NAMES: usize = 10_000;

/// The error for a tag in no row of a long-format file: the nearest names seen, or some of them.
fn missing_tag(
    path: &Path,
    tag: &str,
    role: &'static str,
    form: &LongFormat,
    seen: &[String],
) -> DataError {
    let close = nearest(tag, seen.iter().map(String::as_str), 3);
    let hint = if close.is_empty() {
        format!("; the rows name: {}", shorten_list(seen))
    } else {
        did_you_mean(&close)
    };
    DataError::MissingTag {
        path: path.to_path_buf(),
        tag: tag.to_string(),
        role,
        tag_column: form.tag_column.clone(),
        hint,
    }
}

/// A missing column's error, with a pointer to the long format when the file's first rows hold
/// a requested tag's name in some column.
fn with_long_format_hint(
    error: DataError,
    path: &Path,
    spec: &ReadSpec<'_>,
    header: &[String],
) -> DataError {
    let DataError::MissingColumn {
        path: p,
        line,
        column,
        role,
        hint,
    } = error
    else {
        return error;
    };
    let found = (|| {
        let mut reader = open_csv(path, spec.delimiter).ok()?.reader;
        let mut record = csv::ByteRecord::new();
        let mut fields = FieldText::default();
        reader.read_byte_record(&mut record).ok()?; // the header
        for _ in 0..200 {
            if !reader.read_byte_record(&mut record).ok()? {
                break;
            }
            for i in 0..record.len() {
                let cell = fields.get(&record, i);
                if spec.columns.iter().any(|(n, _)| n == cell.trim()) {
                    return header.get(i).cloned();
                }
            }
        }
        None
    })();
    let hint = match found {
        Some(tag_column) => format!(
            "; the rows name tags in column `{tag_column}`: a long-format export (one row per tag and time); set `long-format: {{ tag-column: {tag_column}, value-column: … }}` with the column that holds the values"
        ),
        None => hint,
    };
    DataError::MissingColumn {
        path: p,
        line,
        column,
        role,
        hint,
    }
}

/// The error for a column not in `header`, with what probably went wrong: another delimiter, a
/// near miss, or the header's names.
fn missing_column(
    path: &Path,
    line: u64,
    header: &[String],
    name: &str,
    role: &'static str,
    delimiter: u8,
) -> DataError {
    let close = nearest(name, header.iter().map(String::as_str), 3);
    // One header field holding another common delimiter: the wrong `delimiter`.
    let other_delimiter = match header {
        [only] => [(';', ";"), ('\t', "\\t"), ('|', "|"), (',', ",")]
            .into_iter()
            .find(|&(d, _)| d as u32 != u32::from(delimiter) && only.contains(d)),
        _ => None,
    };
    let hint = if let Some((_, written)) = other_delimiter {
        format!(
            "; the header is one field, `{}`: its fields look separated by `{written}`, so \
             set `delimiter: \"{written}\"`",
            header.first().map(String::as_str).unwrap_or("")
        )
    } else if close.is_empty() {
        format!("; the header has: {}", shorten_list(header))
    } else {
        did_you_mean(&close)
    };
    DataError::MissingColumn {
        path: path.to_path_buf(),
        line,
        column: name.to_string(),
        role,
        hint,
    }
}

/// `; did you mean `a`, `b`?` for the near misses found.
fn did_you_mean(close: &[String]) -> String {
    let names: Vec<String> = close.iter().map(|c| format!("`{c}`")).collect();
    format!("; did you mean {}?", names.join(", "))
}

fn shorten_list(names: &[String]) -> String {
    let mut out: Vec<String> = names.iter().take(12).map(|n| format!("`{n}`")).collect();
    if names.len() > 12 {
        out.push(format!("… ({} more)", names.len() - 12));
    }
    out.join(", ")
}

/// Reads every file and merges them into one table sorted by time. A file may hold only some of
/// the requested columns (historians often export one file per group of tags); each column must
/// be in at least one file, else the error names the first file and its header.
pub fn read_files(paths: &[PathBuf], spec: &ReadSpec<'_>) -> Result<RawTable, DataError> {
    let mut tables = Vec::with_capacity(paths.len());
    let mut first_header = None;
    for path in paths {
        let (table, header) = read_one(path, spec, false)?;
        first_header.get_or_insert((path, header));
        tables.push(table);
    }
    for (name, role) in spec.columns {
        let everywhere_absent = tables
            .iter()
            .all(|t| t.files.iter().all(|f| f.absent.contains(name)));
        if let (true, Some((path, header))) = (everywhere_absent, &first_header) {
            if let Some(form) = spec.long_format {
                return Err(missing_tag(path, name, role, form, &header.tags));
            }
            let line = 1 + header.above;
            let error = missing_column(path, line, &header.names, name, role, header.delimiter);
            return Err(with_long_format_hint(error, path, spec, &header.names));
        }
    }
    Ok(merge(tables))
}

/// Merges tables with the same columns into one, sorted by time.
///
/// **Duplicate timestamps.** Rows with equal times (within a file, or across files) collapse into
/// one row. For each tag the last *value* wins, taking rows in file order then line order; if no
/// row has a value, the last marker wins (so a `Bad` is kept as bad); if all are empty, the cell
/// is empty. `check` reports the rows that repeated a time for a tag their file holds.
pub fn merge(mut tables: Vec<RawTable>) -> RawTable {
    let Some(first) = tables.first_mut() else {
        return RawTable {
            times: Vec::new(),
            columns: Vec::new(),
            files: Vec::new(),
            duplicate_rows: 0,
        };
    };
    // Per table, which columns its file holds; per row, its table.
    let holds = |t: &RawTable| -> Vec<bool> {
        t.columns
            .iter()
            .map(|c| !t.files.iter().any(|f| f.absent.contains(&c.name)))
            .collect()
    };
    let mut present = vec![holds(first)];
    let mut sources = vec![0u32; first.times.len()];
    let mut out = RawTable {
        times: std::mem::take(&mut first.times),
        columns: std::mem::take(&mut first.columns),
        files: std::mem::take(&mut first.files),
        // A long-format file counts its own repeats while pivoting.
        duplicate_rows: first.duplicate_rows,
    };
    for table in tables.into_iter().skip(1) {
        out.duplicate_rows += table.duplicate_rows;
        sources.extend(std::iter::repeat_n(present.len() as u32, table.times.len()));
        present.push(holds(&table));
        out.times.extend_from_slice(&table.times);
        out.files.extend(table.files);
        for (dst, src) in out.columns.iter_mut().zip(table.columns) {
            dst.values.extend_from_slice(&src.values);
            dst.kinds.extend_from_slice(&src.kinds);
            for (text, count) in src.markers {
                *dst.markers.entry(text).or_insert(0) += count;
            }
        }
    }
    if !out.times.windows(2).all(|w| w[0] <= w[1]) {
        let mut order: Vec<u32> = (0..out.times.len() as u32).collect();
        order.sort_by_key(|&i| out.times[i as usize]); // stable: file order kept for equal times
        out.times = order.iter().map(|&i| out.times[i as usize]).collect();
        sources = order.iter().map(|&i| sources[i as usize]).collect();
        for column in &mut out.columns {
            column.values = order.iter().map(|&i| column.values[i as usize]).collect();
            column.kinds = order.iter().map(|&i| column.kinds[i as usize]).collect();
        }
    }
    collapse_duplicates(&mut out, &sources, &present);
    out
}

/// Collapses rows of equal time (see [`merge`]). `sources[k]` is row `k`'s table and
/// `present[t][c]` whether table `t`'s file holds column `c`: rows count as duplicates only
/// where they repeat a time for a column (two files holding different tags at the same times
/// are one row each, not duplicates).
fn collapse_duplicates(table: &mut RawTable, sources: &[u32], present: &[Vec<bool>]) {
    if table.times.windows(2).all(|w| w[0] < w[1]) {
        return;
    }
    let n = table.times.len();
    let mut write = 0usize;
    let mut read = 0usize;
    while read < n {
        let mut end = read + 1;
        while end < n && table.times[end] == table.times[read] {
            end += 1;
        }
        table.times[write] = table.times[read];
        for column in &mut table.columns {
            let pick = (read..end)
                .rev()
                .find(|&i| column.kinds[i] == Observation::Value)
                .or_else(|| {
                    (read..end)
                        .rev()
                        .find(|&i| column.kinds[i] != Observation::Empty)
                })
                .unwrap_or(end - 1);
            column.values[write] = column.values[pick];
            column.kinds[write] = column.kinds[pick];
        }
        let holders = |c: usize| {
            (read..end)
                .filter(|&k| {
                    let source = sources.get(k).map_or(0, |&t| t as usize);
                    present
                        .get(source)
                        .and_then(|p| p.get(c))
                        .copied()
                        .unwrap_or(true)
                })
                .count()
        };
        let repeats = (0..table.columns.len())
            .map(holders)
            .max()
            .unwrap_or(end - read);
        table.duplicate_rows += repeats.saturating_sub(1);
        write += 1;
        read = end;
    }
    table.times.truncate(write);
    for column in &mut table.columns {
        column.values.truncate(write);
        column.kinds.truncate(write);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Write;

    fn spec<'a>(columns: &'a [(String, &'static str)]) -> ReadSpec<'a> {
        ReadSpec {
            delimiter: b',',
            timestamp: Box::leak(Box::new(TimestampColumns::One("time".into()))),
            columns,
            naive_offset_minutes: 0,
            decimal_comma: false,
            date_order: DateOrder::Ymd,
            long_format: None,
            any_order: false,
        }
    }

    fn file_with(text: &[u8]) -> tempfile::NamedTempFile {
        let mut f = tempfile::NamedTempFile::new().expect("temp file");
        f.write_all(text).expect("write");
        f
    }

    fn cols(names: &[&str]) -> Vec<(String, &'static str)> {
        names.iter().map(|n| (n.to_string(), "input")).collect()
    }

    /// Grouped digits: spaces and apostrophes always; the other mark only before the decimal
    /// mark or twice, since `12,345` could be a decimal comma (common practice in regional
    /// number formats; the space grouping per the SI Brochure, 9th edition, §5.4.4).
    #[test]
    fn numbers_with_grouped_digits() {
        for (text, comma, want) in [
            ("5,140.0", false, Some(5140.0)),
            ("-1,234,567", false, Some(-1_234_567.0)),
            ("+12 345.5", false, Some(12345.5)),
            ("12\u{a0}345", false, Some(12345.0)),
            ("12\u{202f}345,25", true, Some(12345.25)),
            ("1'234'567.5", false, Some(1_234_567.5)),
            ("5.140,0", true, Some(5140.0)),
            ("1.234.567", true, Some(1_234_567.0)),
            ("12,345", false, None), // could be 12.345 with a decimal comma
            ("12.345", true, None),
            ("1,23.5", false, None),
            ("1234,567.5", false, None),
            ("12 34", false, None),
            ("1,234.", false, None),
            ("1,234.5e3", false, None),
            ("1 234,5", false, None), // a comma is no decimal mark here
            ("5,140.0", true, None),
            // The typeset minus sign, U+2212 (Unicode's MINUS SIGN), once and leading only.
            ("\u{2212}5", false, Some(-5.0)),
            ("\u{2212}1,5", true, Some(-1.5)),
            ("\u{2212}1,234.5", false, Some(-1234.5)),
            ("\u{2212}-5", false, None),
            ("\u{2212}\u{2212}5", false, None),
            ("5\u{2212}", false, None),
        ] {
            assert_eq!(parse_number(text, comma), want, "{text} (comma {comma})");
        }
    }

    #[test]
    fn reads_values_markers_and_blanks() {
        let f = file_with(
            b"time,TI-1,FI-2\n2026-03-01 00:00:00,1.5,Bad\n2026-03-01 00:01:00,,I/O Timeout\n2026-03-01 00:02:00,NaN,Bad\n",
        );
        let c = cols(&["FI-2", "TI-1"]);
        let t = read_file(f.path(), &spec(&c)).expect("reads");
        assert_eq!(t.times.len(), 3);
        assert_eq!(t.columns[0].name, "FI-2");
        assert_eq!(t.columns[0].markers.get("Bad"), Some(&2));
        assert_eq!(t.columns[0].markers.get("I/O Timeout"), Some(&1));
        assert_eq!(
            t.columns[1].kinds,
            vec![Observation::Value, Observation::Empty, Observation::Marker]
        );
        assert_eq!(t.columns[1].values[0], 1.5);
        assert_eq!(t.columns[1].markers.get("NaN"), Some(&1));
    }

    #[test]
    fn below_limit_results_keep_their_limit() {
        let f = file_with(
            b"time,LAB\n2026-03-01 00:00:00,<0.01\n2026-03-01 00:01:00,< 5\n2026-03-01 00:02:00,<=2e-3\n2026-03-01 00:03:00,<LOD\n2026-03-01 00:04:00,<0\n2026-03-01 00:05:00,>10\n",
        );
        let c = cols(&["LAB"]);
        let t = read_file(f.path(), &spec(&c)).expect("reads");
        let column = &t.columns[0];
        use Observation::{BelowLimit, Marker};
        assert_eq!(
            column.kinds,
            vec![BelowLimit, BelowLimit, BelowLimit, Marker, Marker, Marker]
        );
        assert_eq!(column.values[..3], [0.01, 5.0, 2e-3]);
        assert_eq!(column.below_limit(), 3);
        // Not a limit: no number, a limit that is not positive, an upper limit.
        let texts: Vec<&str> = column.markers.keys().map(String::as_str).collect();
        assert_eq!(texts, ["<0", "<LOD", ">10"]);
        assert_eq!(below_limit("<0,05", true), Some(0.05));
        assert_eq!(below_limit("<0.05", true), None);
    }

    /// Fields that are not UTF-8 are read as Windows-1252 and counted: a unit in the header
    /// (`°C`) and a quality marker in a cell (`Störung`), as Western European exports write them.
    #[test]
    fn fields_that_are_not_utf8_read_as_windows_1252() {
        let f = file_with(
            b"time,TI-1,TI-2 \xb0C\n2026-03-01 00:00:00,1.5,2\n2026-03-01 00:01:00,St\xf6rung,2\n",
        );
        let c = cols(&["TI-1", "TI-2 \u{b0}C"]);
        let t = read_file(f.path(), &spec(&c)).expect("reads");
        assert_eq!(t.columns[0].kinds[1], Observation::Marker);
        assert_eq!(t.columns[0].markers.get("St\u{f6}rung"), Some(&1));
        assert_eq!(t.columns[1].values, vec![2.0, 2.0]);
        assert_eq!(t.files[0].windows_1252_fields, 2);
        let f = file_with(b"time,TI-1\n2026-03-01 00:00:00,1.5\n");
        assert_eq!(
            read_file(f.path(), &spec(&cols(&["TI-1"])))
                .expect("reads")
                .files[0]
                .windows_1252_fields,
            0
        );
    }

    /// A date column and a time-of-day column read as one timestamp; errors name both.
    #[test]
    fn split_date_and_time_columns() {
        let c = cols(&["TI-1"]);
        let split = TimestampColumns::Split(["Date".into(), "Time".into()]);
        let mut s = spec(&c);
        s.timestamp = &split;
        s.date_order = DateOrder::Dmy;
        let f = file_with(
            b"Date,TI-1,Time\nDatum,,Zeit\n01.03.2026,1.5,23:59\n02.03.2026,1.6, 00:00:30 \n",
        );
        let t = read_file(f.path(), &s).expect("reads");
        let one = |text: &str| parse_timestamp(text, 0, DateOrder::Ymd).expect("time");
        assert_eq!(
            t.times,
            vec![one("2026-03-01 23:59:00"), one("2026-03-02 00:00:30")]
        );
        assert_eq!(t.files[0].label_rows, vec!["Datum Zeit"]);
        let f = file_with(b"Date,TI-1,Time\n01.03.2026,1.5,25:00\n");
        let err = read_file(f.path(), &s).expect_err("bad hour").to_string();
        assert!(
            err.contains(":2: columns `Date` + `Time`: `01.03.2026 25:00`"),
            "{err}"
        );
        let f = file_with(b"Date,TI-1\n01.03.2026,1.5\n");
        let err = read_file(f.path(), &s)
            .expect_err("no time column")
            .to_string();
        assert!(
            err.contains("no column `Time` (the timestamp column)"),
            "{err}"
        );
    }

    /// Rows of tag descriptions and units under the header are skipped and reported; a row
    /// with a digit in its timestamp cell is data, and a bad one is still an error.
    #[test]
    fn label_rows_under_the_header_are_skipped() {
        let f = file_with(
            b"time,TI-1\nDescription,Tray 12 temperature\n,degC\n2026-03-01 00:00:00,1.5\n2026-03-01 00:01:00,1.6\n",
        );
        let c = cols(&["TI-1"]);
        let t = read_file(f.path(), &spec(&c)).expect("reads");
        assert_eq!(t.columns[0].values, vec![1.5, 1.6]);
        assert_eq!(t.files[0].rows, 2);
        assert_eq!(t.files[0].label_rows, vec!["Description", ""]);
        let f = file_with(b"time,TI-1\nUnits,degC\n01.03.2026 00:00,1.5\n");
        let err = read_file(f.path(), &spec(&c)).expect_err("day-first date");
        assert!(err.to_string().contains(":3: column `time`"), "{err}");
        // Labels only under the header: a text row between data rows is an error.
        let f =
            file_with(b"time,TI-1\n2026-03-01 00:00:00,1.5\nUnits,degC\n2026-03-01 00:01:00,1.6\n");
        let err = read_file(f.path(), &spec(&c)).expect_err("text between data rows");
        assert!(err.to_string().contains(":3: column `time`"), "{err}");
        let many = format!("time,TI-1\n{}2026-03-01 00:00:00,1.5\n", "x,y\n".repeat(9));
        let f = file_with(many.as_bytes());
        let err = read_file(f.path(), &spec(&c)).expect_err("too many labels");
        assert!(err.to_string().contains(":10: column `time`"), "{err}");
    }

    /// Rows after the data that are not data (an "end of data" line, a row count in one
    /// field) are skipped and listed; the same rows followed by data are the error they were,
    /// at their own line; more than [`MAX_LABEL_ROWS`] of them are too.
    #[test]
    fn footer_rows_after_the_data_are_skipped() {
        let c = cols(&["TI-1"]);
        let f = file_with(
            b"time,TI-1\n2026-03-01 00:00:00,1.5\n2026-03-01 00:01:00,1.6\nEnd of data,\n\nRows: 2\n",
        );
        let t = read_file(f.path(), &spec(&c)).expect("reads");
        assert_eq!(t.columns[0].values, vec![1.5, 1.6]);
        assert_eq!(t.files[0].rows, 2);
        assert_eq!(t.files[0].footer_rows, vec!["End of data", "Rows: 2"]);

        let f =
            file_with(b"time,TI-1\n2026-03-01 00:00:00,1.5\nRows: 2\n2026-03-01 00:01:00,1.6\n");
        let err = read_file(f.path(), &spec(&c)).expect_err("ragged row between data");
        assert!(err.to_string().contains(":3:"), "{err}");

        let many = format!(
            "time,TI-1\n2026-03-01 00:00:00,1.5\n{}",
            "note,x\n".repeat(MAX_LABEL_ROWS + 1)
        );
        let f = file_with(many.as_bytes());
        let err = read_file(f.path(), &spec(&c)).expect_err("too many footer rows");
        assert!(err.to_string().contains(":3: column `time`"), "{err}");
    }

    #[test]
    fn other_delimiters_and_bom() {
        let f = file_with("\u{feff}time;TI-1\n1772323200;2.5\n".as_bytes());
        let c = cols(&["TI-1"]);
        let mut s = spec(&c);
        s.delimiter = b';';
        let t = read_file(f.path(), &s).expect("reads");
        assert_eq!(t.columns[0].values, vec![2.5]);
    }

    #[test]
    fn decimal_commas_read_as_numbers_when_configured() {
        let text =
            "time;TI-1\n1772323200;2,5\n1772323260;-1,25e-3\n1772323320;1.234,5\n1772323380;7\n";
        let f = file_with(text.as_bytes());
        let c = cols(&["TI-1"]);
        let mut s = spec(&c);
        s.delimiter = b';';
        s.decimal_comma = true;
        let t = read_file(f.path(), &s).expect("reads");
        let v = &t.columns[0].values;
        // `1.234,5`: the point groups thousands (before the decimal comma, it cannot be one).
        assert_eq!(v, &vec![2.5, -1.25e-3, 1234.5, 7.0]);
        s.decimal_comma = false;
        let t = read_file(f.path(), &s).expect("reads");
        assert_eq!(t.columns[0].markers.get("2,5"), Some(&1));
    }

    #[test]
    fn bad_files_name_file_line_and_column() {
        let c = cols(&["TI-1"]);
        let cases: Vec<(&[u8], &str)> = vec![
            (b"", "file is empty"),
            (b"time,TI-1\n", "header but no data rows"),
            (
                b"time,TI-1\n2026-03-01 00:00:00,1\n2026-03-01 00:01:00,1,2\n",
                ":3: row has 3 fields but the header has 2",
            ),
            (
                b"time;TI-1\n2026-03-01 00:00:00;1\n",
                ":1: no column `time` (the timestamp column); the header is one field, \
                 `time;TI-1`: its fields look separated by `;`, so set `delimiter: \";\"`",
            ),
            (
                b"time\tTI-1\n2026-03-01 00:00:00\t1\n",
                "separated by `\\t`, so set `delimiter: \"\\t\"`",
            ),
            (
                b"time,TI-1\n2026-03-01 00:00:00,1\nyesterday,2\n2026-03-01 00:02:00,3\n",
                ":3: column `time`: `yesterday` is not a timestamp",
            ),
            (
                b"time,TI-1\n03-2026-01 00:00:00,1\n",
                ":2: column `time`: `03-2026-01 00:00:00` is not a timestamp",
            ),
            (
                b"time,TI-1\r\n03-2026-01 00:00:00,1\r\n",
                ":2: column `time`",
            ),
            (
                b"time,TI-1\n2026-03-01 03:00:00,1\n2026-03-01 00:00:00,2\n",
                ":3: column `time`: time goes backwards (2026-03-01T00:00:00Z after \
                 2026-03-01T03:00:00Z); sort the export by time",
            ),
            (
                // Local time at the end of daylight saving: 02:59 is followed by 02:00 again.
                b"time,TI-1\n2026-10-25 02:59:00,1\n2026-10-25 02:00:00,2\n",
                "when daylight saving ends: export in UTC",
            ),
            (
                b"time,TI-2\n2026-03-01 00:00:00,1\n",
                ":1: no column `TI-1` (the input); did you mean `TI-2`?",
            ),
            (
                b"time,TI-1,TI-1\n2026-03-01 00:00:00,1,1\n",
                "column `TI-1` appears twice",
            ),
        ];
        for (text, expected) in cases {
            let f = file_with(text);
            let err = read_file(f.path(), &spec(&c))
                .expect_err(expected)
                .to_string();
            assert!(err.contains(expected), "expected `{expected}` in `{err}`");
            assert!(err.starts_with(&f.path().display().to_string()), "{err}");
        }
        let missing = read_file(Path::new("/no/such/file.csv"), &spec(&c)).expect_err("missing");
        assert!(missing
            .to_string()
            .contains("/no/such/file.csv: cannot read"));
    }

    #[test]
    fn merge_sorts_files_and_keeps_last_value_of_duplicates() {
        let a = file_with(b"time,TI-1\n2026-03-01 00:02:00,3\n2026-03-01 00:03:00,4\n");
        let b = file_with(
            b"time,TI-1\n2026-03-01 00:00:00,1\n2026-03-01 00:01:00,2\n2026-03-01 00:01:00,Bad\n2026-03-01 00:02:00,30\n",
        );
        let c = cols(&["TI-1"]);
        let t = read_files(&[a.path().to_path_buf(), b.path().to_path_buf()], &spec(&c))
            .expect("merge");
        assert_eq!(t.times.len(), 4);
        assert!(t.times.windows(2).all(|w| w[0] < w[1]));
        // 00:01 has a value (2) and a later marker: the value wins. 00:02: file b is later, 30 wins.
        assert_eq!(t.columns[0].values, vec![1.0, 2.0, 30.0, 4.0]);
        assert_eq!(t.duplicate_rows, 2);
        assert_eq!(t.files.len(), 2);
    }

    /// A first line `sep=;` (as spreadsheet programs write it) sets the delimiter and is not the
    /// header; messages keep the file's own line numbers.
    #[test]
    fn a_sep_line_declares_the_delimiter() {
        let c = cols(&["TI-1"]);
        let f = file_with(
            b"\xef\xbb\xbfsep=;\r\ntime;TI-1\r\n2026-03-01 00:00:00;1\r\n2026-03-01 00:01:00;2\r\n",
        );
        let t = read_file(f.path(), &spec(&c)).expect("reads");
        assert_eq!(t.columns[0].values, vec![1.0, 2.0]);
        let f = file_with(
            b"SEP=;\ntime;TI-1\n2026-03-01 00:00:00;1\nyesterday;2\n2026-03-01 00:02:00;3\n",
        );
        let err = read_file(f.path(), &spec(&c))
            .expect_err("bad time")
            .to_string();
        assert!(err.contains(":4: column `time`: `yesterday`"), "{err}");
        let err = read_file(f.path(), &spec(&cols(&["TI-2"]))).expect_err("no column");
        assert!(err.to_string().contains(":2: no column `TI-2`"), "{err}");
        // A column named `sep=x` is a header like any other.
        let f = file_with(b"sep=x,time\n1,2026-03-01 00:00:00\n");
        let mut s = spec(&c);
        let t = read_one(f.path(), &s, false).expect("reads").0;
        assert_eq!(t.times.len(), 1);
        s.delimiter = b';';
        assert!(read_file(f.path(), &s).is_err());
    }

    /// Tags split over files (one export per tag group) merge into one row per time, not
    /// duplicates; a tag in no file is an error naming the first file, with a suggestion.
    #[test]
    fn tags_split_over_files_merge_by_time() {
        let a = file_with(b"time,TI-1\n2026-03-01 00:00:00,1\n2026-03-01 00:01:00,2\n");
        let b = file_with(
            b"time,FI-1,TI-1x\n2026-03-01 00:00:00,10,0\n2026-03-01 00:01:00,20,0\n2026-03-01 00:01:00,21,0\n",
        );
        let paths = [a.path().to_path_buf(), b.path().to_path_buf()];
        let c = cols(&["TI-1", "FI-1"]);
        let t = read_files(&paths, &spec(&c)).expect("merge");
        assert_eq!(t.times.len(), 2);
        assert_eq!(t.columns[0].values, vec![1.0, 2.0]);
        assert_eq!(t.columns[1].values, vec![10.0, 21.0]);
        // Only file b repeats a time for a tag it holds.
        assert_eq!(t.duplicate_rows, 1);
        assert_eq!(t.files[0].absent, vec!["FI-1"]);
        assert_eq!(t.files[1].absent, vec!["TI-1"]);
        let c = cols(&["TI-1", "FI-2"]);
        let err = read_files(&paths, &spec(&c))
            .expect_err("FI-2 nowhere")
            .to_string();
        assert!(err.contains(":1: no column `FI-2` (the input)"), "{err}");
        assert!(err.starts_with(&a.path().display().to_string()), "{err}");
        // One file alone must hold every column.
        let err = read_file(b.path(), &spec(&cols(&["TI-1"]))).expect_err("strict");
        assert!(
            err.to_string().contains("did you mean `FI-1`, `TI-1x`?"),
            "{err}"
        );
    }

    #[test]
    fn duplicates_with_only_markers_stay_bad() {
        let a = file_with(b"time,TI-1\n2026-03-01 00:00:00,Bad\n2026-03-01 00:00:00,\n");
        let c = cols(&["TI-1"]);
        let t = read_files(&[a.path().to_path_buf()], &spec(&c)).expect("reads");
        assert_eq!(t.columns[0].kinds, vec![Observation::Marker]);
        assert_eq!(t.duplicate_rows, 1);
    }
}
