//! Errors of the data-preparation stage. Each names the file, and where it can, the line and column.

use std::path::PathBuf;

use crate::timestamp::{Rfc3339, TimestampError};

/// Why the data files could not be turned into a dataset.
#[derive(Debug, thiserror::Error)]
pub enum DataError {
    /// The file could not be opened or read.
    #[error("{path}: cannot read: {cause}")]
    Read {
        /// File.
        path: PathBuf,
        /// OS error.
        cause: std::io::Error,
    },
    /// The CSV parser failed (e.g. an unterminated quote).
    #[error("{path}:{line}: malformed CSV: {message}")]
    Csv {
        /// File.
        path: PathBuf,
        /// 1-based line.
        line: u64,
        /// Parser message.
        message: String,
    },
    /// Nothing in the file.
    #[error("{path}: the file is empty; expected a header line and data rows")]
    Empty {
        /// File.
        path: PathBuf,
    },
    /// A header and no rows.
    #[error("{path}: the file has a header but no data rows")]
    HeaderOnly {
        /// File.
        path: PathBuf,
    },
    /// A column the config names is not in the header.
    #[error("{path}:{line}: no column `{column}` (the {role}){hint}")]
    MissingColumn {
        /// File.
        path: PathBuf,
        /// Line of the header (1, or 2 under a `sep=` line).
        line: u64,
        /// Name from the config.
        column: String,
        /// What the config uses it for.
        role: &'static str,
        /// Nearest header names, already formatted.
        hint: String,
    },
    /// A tag the config names never appears in a long-format file's tag column.
    #[error("{path}: no rows for `{tag}` (the {role}) in column `{tag_column}`{hint}")]
    MissingTag {
        /// File (the first of the files read).
        path: PathBuf,
        /// Name from the config.
        tag: String,
        /// What the config uses it for.
        role: &'static str,
        /// The long format's tag column.
        tag_column: String,
        /// Nearest tag names seen, or some of them, already formatted.
        hint: String,
    },
    /// The same column name twice in one header.
    #[error("{path}:{line}: column `{column}` appears twice in the header")]
    DuplicateColumn {
        /// File.
        path: PathBuf,
        /// Line of the header.
        line: u64,
        /// Column name.
        column: String,
    },
    /// A row with a different field count than the header.
    #[error("{path}:{line}: row has {found} fields but the header has {expected}")]
    Ragged {
        /// File.
        path: PathBuf,
        /// 1-based line.
        line: u64,
        /// Header fields.
        expected: usize,
        /// Fields on this row.
        found: usize,
    },
    /// A timestamp cell that does not parse.
    #[error("{path}:{line}: {column}: {cause}")]
    Timestamp {
        /// File.
        path: PathBuf,
        /// 1-based line.
        line: u64,
        /// The timestamp column(s), as "column `time`".
        column: String,
        /// What was wrong.
        cause: TimestampError,
    },
    /// Time going backwards inside one file.
    #[error("{path}:{line}: {column}: time goes backwards ({time} after {previous}); {hint}")]
    NonMonotonic {
        /// File.
        path: PathBuf,
        /// 1-based line.
        line: u64,
        /// The timestamp column(s), as "column `time`".
        column: String,
        /// This row's time.
        time: Rfc3339,
        /// The previous row's time.
        previous: Rfc3339,
        /// What to do: [`backwards_hint`].
        hint: &'static str,
    },
    /// An error in files whose settings live under a config section of their own (the lab
    /// files, under `target.lab`): a hint to set a key says where.
    #[error("{inner}{}", where_to_set(inner, section))]
    InSection {
        /// Dotted section, e.g. `target.lab`.
        section: &'static str,
        /// The error as the reader gave it.
        inner: Box<DataError>,
    },
    /// Spreadsheet serial dates read as epoch seconds: the whole export within seconds of 1970.
    #[error("the timestamps run from {first} to {last}: they look like spreadsheet serial dates (days since 1899-12-30, such as 46082.5) read as seconds since 1970; export the timestamps as dates")]
    SerialDates {
        /// First time as read.
        first: String,
        /// Last time as read.
        last: String,
    },
    /// After resampling, nothing is left to work with.
    #[error("the data span less than two sample-times ({detail}); export a longer period")]
    TooShort {
        /// Detail.
        detail: String,
    },
}

impl DataError {
    /// This error, for files whose settings live under `section` rather than `data`.
    pub fn in_section(self, section: &'static str) -> DataError {
        DataError::InSection {
            section,
            inner: Box::new(self),
        }
    }
}

/// ` (under `target.lab`)` when `inner`'s message tells the user to set a key, else nothing.
fn where_to_set(inner: &DataError, section: &str) -> String {
    let message = inner.to_string();
    if message.contains("set `") {
        format!(" (these files' settings go under `{section}`)")
    } else {
        String::new()
    }
}

/// Advice for a file whose time steps back by `back_micros`: a step of at most an hour is what
/// local time does at the end of daylight saving (common practice: historians export local time
/// unless told otherwise), anything else an unsorted export.
pub fn backwards_hint(back_micros: i64) -> &'static str {
    if back_micros > 0 && back_micros <= 3_600_000_000 {
        "a step back of up to an hour is what local time does when daylight saving ends: export \
         in UTC or with UTC offsets (`naive-offset` is one fixed offset), or sort the export by time"
    } else {
        "sort the export by time"
    }
}
