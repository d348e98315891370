//! The YAML project config: [`RawConfig`] mirrors the file, [`Config`] is the checked form.
//!
//! Every key is documented in `docs/config.md`. Unknown keys are errors that name the key, where
//! it is, and the nearest valid keys. Checks that need the data (do the named columns exist?)
//! happen when the files are read, in [`crate::prepare`].

use std::path::{Path, PathBuf};

use serde::Deserialize;

use crate::duration::Span;
use crate::suggest::nearest;
use crate::timestamp::{parse_offset, DateOrder};

/// Why a config file was rejected.
#[derive(Debug, thiserror::Error)]
pub enum ConfigError {
    /// The file could not be read.
    #[error("cannot read config {path}: {cause}")]
    Read {
        /// The config path.
        path: PathBuf,
        /// The OS error.
        cause: std::io::Error,
    },
    /// An unknown key, with the nearest valid ones.
    #[error("{path}: unknown key `{key}`{location}{hint}")]
    UnknownKey {
        /// The config path.
        path: PathBuf,
        /// The key as written.
        key: String,
        /// ` in data (line 3, column 3)` or empty.
        location: String,
        /// `; did you mean `timestamp`?` or the list of valid keys.
        hint: String,
    },
    /// The YAML did not parse or a value has the wrong type.
    #[error("{path}: {message}")]
    Syntax {
        /// The config path.
        path: PathBuf,
        /// The parser's message, with line and column.
        message: String,
    },
    /// The file parsed as YAML but is not a mapping of keys (a data export passed by mistake,
    /// an empty file).
    #[error(
        "{path} is not a regimix config: {found}; a config is a YAML mapping with `data`, \
         `sample-time`, `target` and `inputs` (docs/config.md; demo-data/c301.yaml is an example)"
    )]
    NotAConfig {
        /// The config path.
        path: PathBuf,
        /// What the file holds instead, in plain words.
        found: String,
    },
    /// A value breaks one of the rules in `docs/config.md`.
    #[error("{path}: `{key}` {problem}")]
    Invalid {
        /// The config path.
        path: PathBuf,
        /// Dotted key, e.g. `inputs[2].range`.
        key: String,
        /// What is wrong, in plain words.
        problem: String,
    },
}

/// Where the target values come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum TargetSource {
    /// An online analyzer: a frequent series that lags the process by a dead time.
    Analyzer,
    /// Laboratory results: sparse samples.
    Lab,
}

/// Which time a lab file stamps on each result.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum LabStamp {
    /// When the material was drawn.
    #[default]
    Sample,
    /// When the result became available; the lab delay is subtracted.
    Result,
}

/// What a lab result below a detection limit (`<0.01`) becomes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum BelowLimit {
    /// Left out, like a quality marker (the default: no value is made up, but a target that
    /// often sits below the limit is then only seen above it).
    #[default]
    Skip,
    /// Half the limit (a common substitution when few results are below it).
    Half,
    /// The limit itself (an upper bound of the true value).
    Limit,
}

impl BelowLimit {
    /// Factor applied to the limit, or `None` for [`BelowLimit::Skip`].
    pub fn factor(self) -> Option<f64> {
        match self {
            BelowLimit::Skip => None,
            BelowLimit::Half => Some(0.5),
            BelowLimit::Limit => Some(1.0),
        }
    }
}

/// Optional transform of the target before modelling.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum TransformKind {
    /// Model the value as it is.
    #[default]
    None,
    /// Natural logarithm of the value (impurities spanning decades).
    Log,
    /// `ln(p / (1 - p))` with `p = value / full-scale` (fractions near 0 or 1).
    Logit,
}

/// The config file as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct RawConfig {
    /// The historian export files.
    pub data: RawData,
    /// The grid every tag is resampled onto.
    pub sample_time: Span,
    /// A grid point takes the last observation no older than this (default 3 × sample-time).
    #[serde(default)]
    pub hold_limit: Option<Span>,
    /// Frozen-sensor and spike screening.
    #[serde(default)]
    pub screening: RawScreening,
    /// The quality variable to estimate.
    pub target: RawTarget,
    /// The cheap, frequent measurements the estimate is computed from.
    pub inputs: Vec<RawInput>,
    /// Regime clustering.
    #[serde(default)]
    pub regimes: RawRegimes,
    /// Regressor structure search.
    #[serde(default)]
    pub structure: RawStructure,
    /// The time split for honest validation.
    #[serde(default)]
    pub validation: RawValidation,
    /// Settings the runtime applies (substitution, lab bias update).
    #[serde(default)]
    pub runtime: RawRuntime,
}

/// How many regimes: a number or `auto`.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub enum RegimeCount {
    /// Chosen by the validity rule over `count-range`.
    Auto,
    /// Fixed.
    Fixed(usize),
}

impl<'de> Deserialize<'de> for RegimeCount {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        #[derive(Deserialize)]
        #[serde(untagged)]
        enum Raw {
            Number(usize),
            Text(String),
        }
        match Raw::deserialize(d)? {
            Raw::Number(n) => Ok(RegimeCount::Fixed(n)),
            Raw::Text(t) if t == "auto" => Ok(RegimeCount::Auto),
            Raw::Text(t) => Err(serde::de::Error::custom(format!(
                "`{t}` is not a regime count: write a number or `auto`"
            ))),
        }
    }
}

/// The `regimes` section.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct RawRegimes {
    /// `auto` (default) or a number.
    pub count: Option<RegimeCount>,
    /// Range searched by `auto` (default [2, 6]).
    pub count_range: Option<[usize; 2]>,
    /// Scheduling variables (input tags); default all inputs.
    pub variables: Option<Vec<String>>,
    /// Cluster in the product space of the variables and the target (default false).
    pub include_target: Option<bool>,
    /// Fuzziness m (default 2).
    pub fuzziness: Option<f64>,
    /// Babuška shrinkage γ (default 0.01).
    pub shrinkage: Option<f64>,
    /// Eigenvalue-ratio cap β (default 1e15).
    pub max_condition: Option<f64>,
    /// Starts per count (default 3).
    pub restarts: Option<usize>,
    /// Seed (default 1).
    pub seed: Option<u64>,
    /// Share of training samples allowed below the trained-domain threshold (default 0.01).
    pub domain_quantile: Option<f64>,
}

/// How the local models are estimated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Estimation {
    /// Weighted least squares per regime (interpretable local models).
    #[default]
    Local,
    /// One least-squares problem for the blend (accuracy).
    Global,
}

/// The `structure` section.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct RawStructure {
    /// Largest input lag (dead time + order) searched, default 30 × sample-time; per input override.
    pub max_lag: Option<Span>,
    /// Largest output lag in samples (analyzer targets only; default 2 for analyzers, 0 for lab).
    pub max_output_lag: Option<usize>,
    /// `local` (default) or `global`.
    pub estimation: Option<Estimation>,
    /// Relative validation improvement needed to add a regressor (default 0.01).
    pub min_improvement: Option<f64>,
    /// Refine the blended model on its free-run simulation error (default false).
    pub refine_output_error: Option<bool>,
}

/// The `validation` section.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct RawValidation {
    /// Share of the time span at the end kept for the final test (default 0.25).
    pub test_share: Option<f64>,
}

/// The `runtime` section.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct RawRuntime {
    /// How long an invalid input is replaced by its last good value (default 5 × sample-time).
    pub hold_limit: Option<Span>,
    /// Oldest lab result the bias update accepts (default: lab delay + 1 h, or 2 h for analyzers).
    pub lab_window: Option<Span>,
    /// Bias filter gain in (0, 1] (default 0.3).
    pub bias_gain: Option<f64>,
    /// Lab residuals beyond this many residual SDs are rejected (default 3).
    pub outlier_k: Option<f64>,
}

/// The `data` section.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct RawData {
    /// CSV files, relative to the config file; read in order, then merged by time.
    pub files: Vec<PathBuf>,
    /// Timestamp column, or a date column and a time-of-day column.
    #[serde(default = "default_timestamp")]
    pub timestamp: TimestampColumns,
    /// Field delimiter, one ASCII character.
    #[serde(default = "default_delimiter")]
    pub delimiter: char,
    /// UTC offset of timestamps written without one, e.g. `+01:00`.
    #[serde(default = "default_offset")]
    pub naive_offset: String,
    /// Decimal mark of numbers, `.` or `,`.
    #[serde(default = "default_decimal_mark")]
    pub decimal_mark: char,
    /// How dates not starting with the year are read: `ymd` (none accepted), `dmy` or `mdy`.
    #[serde(default)]
    pub date_order: DateOrder,
    /// One row per tag and time (a long-format export) instead of one column per tag.
    #[serde(default)]
    pub long_format: Option<LongFormat>,
}

/// Where a long-format export (one row per tag and time, as many historians write a query
/// result) holds the tag's name and its value.
#[derive(Debug, Clone, PartialEq, Eq, Deserialize, serde::Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct LongFormat {
    /// Column holding the tag name.
    pub tag_column: String,
    /// Column holding the value.
    pub value_column: String,
    /// Column holding a quality code per row, if any: a row whose code is not in
    /// `good-quality` counts as a quality marker (its code is the marker text).
    #[serde(default)]
    pub quality_column: Option<String>,
    /// Quality codes that mean a usable value, compared without regard to case (default
    /// `[Good]`; OPC-style numeric codes need listing, e.g. `[192]`).
    #[serde(default = "default_good_quality")]
    pub good_quality: Vec<String>,
}

/// The quality codes that mean a usable value when none are configured: `Good`.
pub fn default_good_quality() -> Vec<String> {
    vec!["Good".to_string()]
}

/// The `screening` section.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct RawScreening {
    /// A value unchanged (within the tag's resolution) for longer than this is frozen (default 2h).
    pub frozen_after: Option<Span>,
    /// Half-width of the Hampel window (default 15 × sample-time).
    pub spike_half_window: Option<Span>,
    /// Hampel threshold in robust standard deviations (default 5).
    pub spike_threshold: Option<f64>,
}

/// One entry of `inputs`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct RawInput {
    /// Column name in the data files.
    pub tag: String,
    /// Engineering unit, for reports.
    #[serde(default)]
    pub unit: String,
    /// Valid range `[low, high]`; values outside are invalid.
    #[serde(default)]
    pub range: Option<[f64; 2]>,
    /// Smallest meaningful change (instrument resolution or noise floor); default 0.
    #[serde(default)]
    pub resolution: f64,
    /// Per-tag override of `screening.frozen-after`.
    #[serde(default)]
    pub frozen_after: Option<Span>,
    /// Per-tag override of `structure.max-lag`.
    #[serde(default)]
    pub max_lag: Option<Span>,
}

/// The `target` section.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct RawTarget {
    /// Column name (in the data files, or in the lab files for a lab target).
    pub tag: String,
    /// Engineering unit.
    #[serde(default)]
    pub unit: String,
    /// `analyzer` or `lab`.
    pub source: TargetSource,
    /// Analyzer only: how long the analyzer reading lags the process.
    #[serde(default)]
    pub dead_time: Option<Span>,
    /// Lab only: where lab results live and how they are stamped.
    #[serde(default)]
    pub lab: Option<RawLab>,
    /// Valid range `[low, high]`.
    #[serde(default)]
    pub range: Option<[f64; 2]>,
    /// Smallest meaningful change; default 0.
    #[serde(default)]
    pub resolution: f64,
    /// Override of `screening.frozen-after` for the target.
    #[serde(default)]
    pub frozen_after: Option<Span>,
    /// `none`, `log` or `logit`.
    #[serde(default)]
    pub transform: TransformKind,
    /// For `logit`: the value that means fraction 1 (100 for %, 1e6 for ppm). Default 1.
    #[serde(default)]
    pub full_scale: Option<f64>,
}

/// The `target.lab` section.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct RawLab {
    /// Lab CSV files relative to the config; empty means the target column of the data files.
    #[serde(default)]
    pub files: Vec<PathBuf>,
    /// Timestamp column(s) of the lab files (default: the data files' timestamp name).
    #[serde(default)]
    pub timestamp: Option<TimestampColumns>,
    /// Field delimiter of the lab files (default: `data.delimiter`); a lab system's export often
    /// differs from the historian's.
    #[serde(default)]
    pub delimiter: Option<char>,
    /// UTC offset of the lab files' naive timestamps (default: `data.naive-offset`); lab systems
    /// often write local time where historians write UTC.
    #[serde(default)]
    pub naive_offset: Option<String>,
    /// Decimal mark of the lab files' numbers (default: `data.decimal-mark`).
    #[serde(default)]
    pub decimal_mark: Option<char>,
    /// Date order of the lab files' timestamps (default: `data.date-order`).
    #[serde(default)]
    pub date_order: Option<DateOrder>,
    /// `sample` or `result`.
    #[serde(default)]
    pub stamped_at: LabStamp,
    /// `skip`, `half` or `limit`: what a result written `<` and a limit becomes.
    #[serde(default)]
    pub below_limit: BelowLimit,
    /// Result time minus sample time; required when `stamped-at: result`.
    #[serde(default)]
    pub delay: Option<Span>,
    /// The lab files hold one row per analysis and time (not inherited from `data`).
    #[serde(default)]
    pub long_format: Option<LongFormat>,
}

/// A delimiter must be one ASCII character other than the quote.
fn check_delimiter(
    d: char,
    key: &str,
    invalid: &dyn Fn(&str, String) -> ConfigError,
) -> Result<u8, ConfigError> {
    if d.is_ascii() && d != '"' {
        Ok(d as u8)
    } else {
        Err(invalid(
            key,
            format!("`{d}` must be one ASCII character other than `\"`"),
        ))
    }
}

/// A decimal mark, `.` or `,`: whether numbers use a decimal comma.
fn check_decimal_mark(
    mark: char,
    key: &str,
    invalid: &dyn Fn(&str, String) -> ConfigError,
) -> Result<bool, ConfigError> {
    match mark {
        '.' => Ok(false),
        ',' => Ok(true),
        other => Err(invalid(key, format!("`{other}` must be `.` or `,`"))),
    }
}

/// A UTC offset like `+01:00`, `-05:30` or `UTC`, in minutes east of UTC.
fn check_offset(
    text: &str,
    key: &str,
    invalid: &dyn Fn(&str, String) -> ConfigError,
) -> Result<i32, ConfigError> {
    parse_offset(text).ok_or_else(|| {
        invalid(
            key,
            format!("`{text}` is not an offset like `+01:00`, `-05:30` or `UTC`"),
        )
    })
}

fn default_timestamp() -> TimestampColumns {
    TimestampColumns::One("timestamp".to_string())
}

/// Where each row's time is: one column (`time`), or a date column and a time-of-day column
/// (`[date, time]`, as lab systems and older exports write them), whose cells are joined with a
/// space and read as one timestamp.
#[derive(Debug, Clone, PartialEq, Eq, Deserialize, serde::Serialize)]
#[serde(
    untagged,
    expecting = "a column name, or a list of two: the date column and the time-of-day column"
)]
pub enum TimestampColumns {
    /// One column holds date and time.
    One(String),
    /// The date in the first column, the time of day in the second.
    Split([String; 2]),
}

impl TimestampColumns {
    /// The column names, in order.
    pub fn names(&self) -> &[String] {
        match self {
            TimestampColumns::One(name) => std::slice::from_ref(name),
            TimestampColumns::Split(names) => names,
        }
    }

    /// Whether `tag` is one of the timestamp columns.
    pub fn contains(&self, tag: &str) -> bool {
        self.names().iter().any(|n| n == tag)
    }
}

/// "column `time`" or "columns `date` + `time`", for messages.
impl std::fmt::Display for TimestampColumns {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            TimestampColumns::One(name) => write!(f, "column `{name}`"),
            TimestampColumns::Split([date, time]) => write!(f, "columns `{date}` + `{time}`"),
        }
    }
}
fn default_delimiter() -> char {
    ','
}
fn default_decimal_mark() -> char {
    '.'
}
fn default_offset() -> String {
    "+00:00".to_string()
}

/// A checked tag: name, unit and screening limits.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct TagSpec {
    /// Column name.
    pub tag: String,
    /// Engineering unit.
    pub unit: String,
    /// Valid range, if any.
    pub range: Option<(f64, f64)>,
    /// Smallest meaningful change.
    pub resolution: f64,
    /// Frozen after this long without change.
    pub frozen_after: Span,
}

/// Checked lab settings.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct LabSpec {
    /// Lab files (absolute or relative to the working directory); empty: the data files.
    pub files: Vec<PathBuf>,
    /// Timestamp column(s) of the lab files.
    pub timestamp: TimestampColumns,
    /// Field delimiter byte of the lab files.
    pub delimiter: u8,
    /// Offset applied to the lab files' naive timestamps, minutes east of UTC.
    pub naive_offset_minutes: i32,
    /// The lab files write numbers with a decimal comma.
    pub decimal_comma: bool,
    /// How the lab files' dates are read.
    pub date_order: DateOrder,
    /// The lab files' long format, if they have one.
    pub long_format: Option<LongFormat>,
    /// Subtracted from each stamp to get the sample time (zero when stamped at sample time).
    pub delay: Span,
    /// How the files stamp results.
    pub stamped_at: LabStamp,
    /// What a below-limit result becomes.
    pub below_limit: BelowLimit,
}

/// Checked target settings.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct TargetSpec {
    /// Tag, unit, range, screening.
    pub spec: TagSpec,
    /// Analyzer or lab.
    pub source: TargetSource,
    /// Analyzer dead time (zero for lab).
    pub dead_time: Span,
    /// Lab settings (for `source: lab`).
    pub lab: Option<LabSpec>,
    /// Target transform.
    pub transform: TransformKind,
    /// Full scale for `logit`.
    pub full_scale: f64,
}

/// Checked screening settings.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Screening {
    /// Hampel half-window, in time (at least one sample-time); `None`: 15 observations.
    pub spike_half_window: Option<Span>,
    /// Hampel threshold in robust standard deviations.
    pub spike_threshold: f64,
}

/// Hampel half-window in observations when `screening.spike-half-window` is not set.
pub const DEFAULT_HALF_WINDOW: usize = 15;

impl Screening {
    /// The Hampel half-window in observations for rows that come every `raw_spacing` on a grid
    /// of `sample_time`: the window counts observations (a held value once), so it is sized by
    /// the slower of the two; a grid finer than the rows would otherwise stretch it in time.
    pub fn half_window_observations(&self, sample_time: Span, raw_spacing: Option<Span>) -> usize {
        let Some(half) = self.spike_half_window else {
            return DEFAULT_HALF_WINDOW;
        };
        let step = raw_spacing.map_or(sample_time.micros(), |r| {
            r.micros().max(sample_time.micros())
        });
        (half.micros() / step.max(1)).max(1) as usize
    }
}

/// Checked modelling settings.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Modelling {
    /// Regime count.
    pub count: RegimeCount,
    /// Range for `auto`.
    pub count_range: (usize, usize),
    /// Indices (into `inputs`) of the scheduling variables.
    pub variables: Vec<usize>,
    /// The config lists the scheduling variables (else they are all inputs at first, and
    /// `build` may narrow them to the inputs the structure uses).
    pub variables_given: bool,
    /// Product-space clustering.
    pub include_target: bool,
    /// Fuzziness.
    pub fuzziness: f64,
    /// Shrinkage γ.
    pub shrinkage: f64,
    /// Eigenvalue cap β.
    pub max_condition: f64,
    /// Starts.
    pub restarts: usize,
    /// Seed.
    pub seed: u64,
    /// Trained-domain quantile.
    pub domain_quantile: f64,
    /// Largest lag per input, samples.
    pub max_lag: Vec<usize>,
    /// Largest output lag, samples.
    pub max_output_lag: usize,
    /// Local or global estimation.
    pub estimation: Estimation,
    /// Stepwise entry threshold.
    pub min_improvement: f64,
    /// Output-error refinement requested.
    pub refine_output_error: bool,
    /// Test share.
    pub test_share: f64,
    /// Substitution hold, samples.
    pub hold_limit: u16,
    /// Lab window, samples.
    pub lab_window: u16,
    /// Bias gain.
    pub bias_gain: f64,
    /// Outlier threshold.
    pub outlier_k: f64,
}

/// The checked config, with paths resolved against the config's folder.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Config {
    /// Data files.
    pub files: Vec<PathBuf>,
    /// Timestamp column(s).
    pub timestamp: TimestampColumns,
    /// Field delimiter byte.
    pub delimiter: u8,
    /// Offset applied to naive timestamps, minutes east of UTC.
    pub naive_offset_minutes: i32,
    /// Numbers are written with a decimal comma.
    pub decimal_comma: bool,
    /// How dates not starting with the year are read.
    pub date_order: DateOrder,
    /// The data files' long format, if they have one.
    pub long_format: Option<LongFormat>,
    /// Grid spacing.
    pub sample_time: Span,
    /// Maximum age of a held value.
    pub hold_limit: Span,
    /// Spike screening.
    pub screening: Screening,
    /// The target.
    pub target: TargetSpec,
    /// The inputs.
    pub inputs: Vec<TagSpec>,
    /// Regimes, structure, validation and runtime settings.
    pub modelling: Modelling,
}

impl Config {
    /// Reads, parses and checks a config file.
    pub fn load(path: &Path) -> Result<Config, ConfigError> {
        let text = std::fs::read_to_string(path).map_err(|cause| ConfigError::Read {
            path: path.to_path_buf(),
            cause,
        })?;
        let raw = RawConfig::parse(&text, path)?;
        let base = path.parent().unwrap_or_else(|| Path::new(""));
        raw.check(base, path)
    }
}

impl RawConfig {
    /// Parses YAML text; `path` is only used in messages.
    pub fn parse(text: &str, path: &Path) -> Result<RawConfig, ConfigError> {
        serde_norway::from_str(text).map_err(|err| {
            match serde_norway::from_str::<serde_norway::Value>(text) {
                Ok(value) if !value.is_mapping() => ConfigError::NotAConfig {
                    path: path.to_path_buf(),
                    found: not_a_mapping(&value, text),
                },
                _ => explain_yaml_error(&err, path),
            }
        })
    }

    /// Applies the rules of `docs/config.md`; relative paths are resolved against `base`.
    pub fn check(self, base: &Path, path: &Path) -> Result<Config, ConfigError> {
        let invalid = |key: &str, problem: String| ConfigError::Invalid {
            path: path.to_path_buf(),
            key: key.to_string(),
            problem,
        };
        if self.data.files.is_empty() {
            return Err(invalid("data.files", "lists no files".into()));
        }
        let delimiter = check_delimiter(self.data.delimiter, "data.delimiter", &invalid)?;
        let naive_offset_minutes =
            check_offset(&self.data.naive_offset, "data.naive-offset", &invalid)?;
        let decimal_comma =
            check_decimal_mark(self.data.decimal_mark, "data.decimal-mark", &invalid)?;
        if self.sample_time.micros() <= 0 {
            return Err(invalid("sample-time", "must be more than zero".into()));
        }
        let ts = self.sample_time;
        let hold_limit = self
            .hold_limit
            .unwrap_or(Span::from_micros(3 * ts.micros()));
        let frozen_default = self
            .screening
            .frozen_after
            .unwrap_or(Span::from_secs(2 * 3600));
        let half = self.screening.spike_half_window;
        if let Some(half) = half.filter(|h| h.whole_steps(ts) < 1) {
            return Err(invalid(
                "screening.spike-half-window",
                format!("{half} is shorter than one sample-time ({ts})"),
            ));
        }
        let spike_threshold = self.screening.spike_threshold.unwrap_or(5.0);
        if !(spike_threshold.is_finite() && spike_threshold > 0.0) {
            return Err(invalid(
                "screening.spike-threshold",
                format!("{spike_threshold} must be a positive number"),
            ));
        }
        if self.inputs.is_empty() {
            return Err(invalid("inputs", "lists no input tags".into()));
        }
        let tag_spec = |key: &str,
                        tag: &str,
                        unit: &str,
                        range: Option<[f64; 2]>,
                        resolution: f64,
                        frozen: Option<Span>|
         -> Result<TagSpec, ConfigError> {
            if tag.trim().is_empty() {
                return Err(invalid(&format!("{key}.tag"), "is empty".into()));
            }
            let range = match range {
                Some([lo, hi]) if lo.is_finite() && hi.is_finite() && lo < hi => Some((lo, hi)),
                Some([lo, hi]) => {
                    return Err(invalid(
                        &format!("{key}.range"),
                        format!("[{lo}, {hi}] must be two finite numbers, low < high"),
                    ))
                }
                None => None,
            };
            if !(resolution.is_finite() && resolution >= 0.0) {
                return Err(invalid(
                    &format!("{key}.resolution"),
                    format!("{resolution} must be zero or more"),
                ));
            }
            Ok(TagSpec {
                tag: tag.to_string(),
                unit: unit.to_string(),
                range,
                resolution,
                frozen_after: frozen.unwrap_or(frozen_default),
            })
        };
        let mut inputs = Vec::with_capacity(self.inputs.len());
        for (i, input) in self.inputs.iter().enumerate() {
            let key = format!("inputs[{i}]");
            inputs.push(tag_spec(
                &key,
                &input.tag,
                &input.unit,
                input.range,
                input.resolution,
                input.frozen_after,
            )?);
        }
        for (i, a) in inputs.iter().enumerate() {
            if inputs[..i].iter().any(|b| b.tag == a.tag) {
                return Err(invalid(
                    &format!("inputs[{i}].tag"),
                    format!("`{}` is listed twice", a.tag),
                ));
            }
            if self.data.timestamp.contains(&a.tag) {
                return Err(invalid(
                    &format!("inputs[{i}].tag"),
                    format!("`{}` is the timestamp column", a.tag),
                ));
            }
            if a.tag == self.target.tag {
                return Err(invalid(
                    &format!("inputs[{i}].tag"),
                    format!(
                        "`{}` is the target: an estimator cannot use its own target as input",
                        a.tag
                    ),
                ));
            }
        }
        let t = &self.target;
        let spec = tag_spec(
            "target",
            &t.tag,
            &t.unit,
            t.range,
            t.resolution,
            t.frozen_after,
        )?;
        let (dead_time, lab) = match t.source {
            TargetSource::Analyzer => {
                if t.lab.is_some() {
                    return Err(invalid("target.lab", "is only for `source: lab`".into()));
                }
                (t.dead_time.unwrap_or(Span::from_secs(0)), None)
            }
            TargetSource::Lab => {
                if t.dead_time.is_some() {
                    return Err(invalid(
                        "target.dead-time",
                        "is only for `source: analyzer`; a lab target uses `lab.delay`".into(),
                    ));
                }
                let lab = t.lab.clone().unwrap_or_default();
                let delay =
                    match (lab.stamped_at, lab.delay) {
                        (LabStamp::Result, Some(d)) => d,
                        (LabStamp::Result, None) => return Err(invalid(
                            "target.lab.delay",
                            "is required when `stamped-at: result` (time from sampling to result)"
                                .into(),
                        )),
                        (LabStamp::Sample, Some(_)) => {
                            return Err(invalid(
                                "target.lab.delay",
                                "applies only with `stamped-at: result`".into(),
                            ))
                        }
                        (LabStamp::Sample, None) => Span::from_secs(0),
                    };
                let files: Vec<PathBuf> = lab.files.iter().map(|f| base.join(f)).collect();
                if files.is_empty()
                    && (lab.delimiter.is_some()
                        || lab.naive_offset.is_some()
                        || lab.decimal_mark.is_some()
                        || lab.date_order.is_some())
                {
                    return Err(invalid(
                        "target.lab",
                        "`delimiter`, `naive-offset`, `decimal-mark` and `date-order` apply to \
                         lab `files`; \
                         without them the target column of the data files is read with the \
                         `data` settings"
                            .into(),
                    ));
                }
                let timestamp = lab.timestamp.unwrap_or_else(|| self.data.timestamp.clone());
                let lab_delimiter = match lab.delimiter {
                    Some(d) => check_delimiter(d, "target.lab.delimiter", &invalid)?,
                    None => delimiter,
                };
                let lab_offset = match &lab.naive_offset {
                    Some(o) => check_offset(o, "target.lab.naive-offset", &invalid)?,
                    None => naive_offset_minutes,
                };
                let lab_comma = match lab.decimal_mark {
                    Some(m) => check_decimal_mark(m, "target.lab.decimal-mark", &invalid)?,
                    None => decimal_comma,
                };
                (
                    Span::from_secs(0),
                    Some(LabSpec {
                        files,
                        timestamp,
                        delimiter: lab_delimiter,
                        naive_offset_minutes: lab_offset,
                        decimal_comma: lab_comma,
                        date_order: lab.date_order.unwrap_or(self.data.date_order),
                        long_format: lab.long_format.clone(),
                        delay,
                        stamped_at: lab.stamped_at,
                        below_limit: lab.below_limit,
                    }),
                )
            }
        };
        let full_scale = t.full_scale.unwrap_or(1.0);
        if !(full_scale.is_finite() && full_scale > 0.0) {
            return Err(invalid(
                "target.full-scale",
                format!("{full_scale} must be positive"),
            ));
        }
        if t.full_scale.is_some() && t.transform != TransformKind::Logit {
            return Err(invalid(
                "target.full-scale",
                "applies only with `transform: logit`".into(),
            ));
        }
        let modelling = self.modelling(
            &inputs,
            &invalid,
            ts,
            t.source,
            lab.as_ref().map(|l| l.delay),
        )?;
        Ok(Config {
            modelling,
            files: self.data.files.iter().map(|f| base.join(f)).collect(),
            timestamp: self.data.timestamp,
            delimiter,
            naive_offset_minutes,
            decimal_comma,
            date_order: self.data.date_order,
            long_format: self.data.long_format.clone(),
            sample_time: ts,
            hold_limit,
            screening: Screening {
                spike_half_window: half,
                spike_threshold,
            },
            target: TargetSpec {
                spec,
                source: t.source,
                dead_time,
                lab,
                transform: t.transform,
                full_scale,
            },
            inputs,
        })
    }
}

impl RawConfig {
    fn modelling(
        &self,
        inputs: &[TagSpec],
        invalid: &dyn Fn(&str, String) -> ConfigError,
        ts: Span,
        source: TargetSource,
        lab_delay: Option<Span>,
    ) -> Result<Modelling, ConfigError> {
        let r = &self.regimes;
        let count = r.count.clone().unwrap_or(RegimeCount::Auto);
        if let RegimeCount::Fixed(n) = count {
            if !(2..=regimix_format::limits::MAX_REGIMES).contains(&n) {
                return Err(invalid(
                    "regimes.count",
                    format!(
                        "{n} must be between 2 and {}",
                        regimix_format::limits::MAX_REGIMES
                    ),
                ));
            }
        }
        let [lo, hi] = r.count_range.unwrap_or([2, 6]);
        if !(2 <= lo && lo <= hi && hi <= regimix_format::limits::MAX_REGIMES) {
            return Err(invalid(
                "regimes.count-range",
                format!(
                    "[{lo}, {hi}] must satisfy 2 ≤ low ≤ high ≤ {}",
                    regimix_format::limits::MAX_REGIMES
                ),
            ));
        }
        let variables = match &r.variables {
            None => (0..inputs.len()).collect(),
            Some(names) => {
                let mut idx = Vec::new();
                for name in names {
                    match inputs.iter().position(|t| &t.tag == name) {
                        Some(j) => idx.push(j),
                        None => {
                            let close = nearest(name, inputs.iter().map(|t| t.tag.as_str()), 3);
                            return Err(invalid(
                                "regimes.variables",
                                format!(
                                    "`{name}` is not an input{}",
                                    if close.is_empty() {
                                        String::new()
                                    } else {
                                        format!("; did you mean {}?", quote_list(&close))
                                    }
                                ),
                            ));
                        }
                    }
                }
                idx
            }
        };
        // Unset with more inputs than the regimes take: `build` narrows them down.
        let max = regimix_format::limits::MAX_ANTECEDENT;
        if r.variables.is_some() && (variables.is_empty() || variables.len() > max) {
            return Err(invalid(
                "regimes.variables",
                format!("must name 1 to {max} inputs"),
            ));
        }
        let fuzziness = r.fuzziness.unwrap_or(2.0);
        if !(fuzziness > 1.0 && fuzziness <= 10.0) {
            return Err(invalid(
                "regimes.fuzziness",
                format!("{fuzziness} must be above 1 (2 is usual)"),
            ));
        }
        let shrinkage = r.shrinkage.unwrap_or(0.01);
        if !(0.0..=1.0).contains(&shrinkage) {
            return Err(invalid(
                "regimes.shrinkage",
                format!("{shrinkage} must be between 0 and 1"),
            ));
        }
        let max_condition = r.max_condition.unwrap_or(1e15);
        if !(max_condition >= 1.0) {
            return Err(invalid(
                "regimes.max-condition",
                format!("{max_condition} must be at least 1"),
            ));
        }
        let restarts = r.restarts.unwrap_or(3);
        if restarts == 0 {
            return Err(invalid("regimes.restarts", "must be at least 1".into()));
        }
        let domain_quantile = r.domain_quantile.unwrap_or(0.01);
        if !(0.0..0.5).contains(&domain_quantile) {
            return Err(invalid(
                "regimes.domain-quantile",
                format!("{domain_quantile} must be in [0, 0.5)"),
            ));
        }
        let st = &self.structure;
        let default_lag = st.max_lag.unwrap_or(Span::from_micros(30 * ts.micros()));
        let max_lag: Vec<usize> = self
            .inputs
            .iter()
            .map(|i| i.max_lag.unwrap_or(default_lag).whole_steps(ts) as usize)
            .collect();
        if max_lag.iter().any(|l| *l > regimix_format::limits::MAX_LAG) {
            return Err(invalid(
                "structure.max-lag",
                format!("is longer than {} samples", regimix_format::limits::MAX_LAG),
            ));
        }
        let max_output_lag = match (source, st.max_output_lag) {
            (TargetSource::Lab, Some(n)) if n > 0 => {
                return Err(invalid(
                    "structure.max-output-lag",
                    format!("{n} needs a frequent target: lab results are too sparse to feed back; use 0 (a static/FIR model) or an analyzer target"),
                ))
            }
            (TargetSource::Lab, _) => 0,
            (TargetSource::Analyzer, n) => n.unwrap_or(2),
        };
        let min_improvement = st.min_improvement.unwrap_or(0.01);
        if !(0.0..0.5).contains(&min_improvement) {
            return Err(invalid(
                "structure.min-improvement",
                format!("{min_improvement} must be in [0, 0.5)"),
            ));
        }
        let test_share = self.validation.test_share.unwrap_or(0.25);
        if !(0.05..=0.5).contains(&test_share) {
            return Err(invalid(
                "validation.test-share",
                format!("{test_share} must be between 0.05 and 0.5"),
            ));
        }
        let rt = &self.runtime;
        let hold = rt
            .hold_limit
            .unwrap_or(Span::from_micros(5 * ts.micros()))
            .whole_steps(ts);
        const MAX_WINDOW: i64 = regimix_format::limits::MAX_LAB_WINDOW as i64;
        let window = match rt.lab_window {
            Some(w) if w.whole_steps(ts) > MAX_WINDOW => {
                return Err(invalid(
                    "runtime.lab-window",
                    format!(
                        "{w} is {} samples of {ts}; the runtime keeps at most {MAX_WINDOW}",
                        w.whole_steps(ts)
                    ),
                ));
            }
            Some(w) => w.whole_steps(ts),
            // The lab delay plus an hour (two hours for an analyzer), at most what the runtime
            // keeps: a short sample time would otherwise ask for more.
            None => Span::from_micros(
                lab_delay.map_or(2 * 3_600_000_000, |d| d.micros() + 3_600_000_000),
            )
            .whole_steps(ts)
            .min(MAX_WINDOW),
        };
        if let Some(delay) = lab_delay.filter(|d| d.whole_steps(ts) >= window) {
            return Err(invalid(
                "runtime.lab-window",
                format!(
                    "the lab delay {delay} is {} samples of {ts}, beyond the {window}-sample lab window (at most {MAX_WINDOW}): no lab result could reach the bias update; use a longer sample-time or a longer lab-window",
                    delay.whole_steps(ts)
                ),
            ));
        }
        if hold > i64::from(u16::MAX) {
            return Err(invalid(
                "runtime.hold-limit",
                format!("{hold} samples of {ts}; at most {}", u16::MAX),
            ));
        }
        let bias_gain = rt.bias_gain.unwrap_or(0.3);
        if !(bias_gain > 0.0 && bias_gain <= 1.0) {
            return Err(invalid(
                "runtime.bias-gain",
                format!("{bias_gain} must be in (0, 1]"),
            ));
        }
        let outlier_k = rt.outlier_k.unwrap_or(3.0);
        if !(outlier_k > 0.0) {
            return Err(invalid(
                "runtime.outlier-k",
                format!("{outlier_k} must be positive"),
            ));
        }
        Ok(Modelling {
            count,
            count_range: (lo, hi),
            variables,
            variables_given: r.variables.is_some(),
            include_target: r.include_target.unwrap_or(false),
            fuzziness,
            shrinkage,
            max_condition,
            restarts,
            seed: r.seed.unwrap_or(1),
            domain_quantile,
            max_lag,
            max_output_lag,
            estimation: st.estimation.unwrap_or_default(),
            min_improvement,
            refine_output_error: st.refine_output_error.unwrap_or(false),
            test_share,
            hold_limit: hold as u16,
            lab_window: window as u16,
            bias_gain,
            outlier_k,
        })
    }
}

/// What a YAML document that is not a mapping holds, for [`ConfigError::NotAConfig`].
fn not_a_mapping(value: &serde_norway::Value, text: &str) -> String {
    let first = text
        .lines()
        .map(str::trim)
        .find(|l| !l.is_empty())
        .unwrap_or("");
    let separators = first.matches([',', ';', '\t']).count();
    match value {
        serde_norway::Value::Null => "the file is empty".to_string(),
        serde_norway::Value::String(_) if separators >= 2 => format!(
            "it reads like a data export (first line `{}`); name the export under `data.files` \
             in a config and pass the config",
            clip(first, 80)
        ),
        serde_norway::Value::Sequence(_) => "it holds a list".to_string(),
        _ => format!("it holds a single value (first line `{}`)", clip(first, 80)),
    }
}

/// `text` cut to at most `max` characters, with `…` where it was cut.
fn clip(text: &str, max: usize) -> String {
    match text.char_indices().nth(max) {
        Some((at, _)) => format!("{}…", &text[..at]),
        None => text.to_string(),
    }
}

/// Turns the YAML parser's message into ours; unknown keys get the nearest valid names.
fn explain_yaml_error(err: &serde_norway::Error, path: &Path) -> ConfigError {
    let message = err.to_string();
    if let Some((section, key, expected)) = parse_unknown_field(&message) {
        let location = match (section.is_empty(), err.location()) {
            (false, Some(loc)) => format!(
                " in `{section}` (line {}, column {})",
                loc.line(),
                loc.column()
            ),
            (true, Some(loc)) => format!(" (line {}, column {})", loc.line(), loc.column()),
            (false, None) => format!(" in `{section}`"),
            (true, None) => String::new(),
        };
        let close = nearest(&key, expected.iter().map(String::as_str), 3);
        let hint = if close.is_empty() {
            format!("; valid keys here: {}", quote_list(&expected))
        } else {
            format!("; did you mean {}?", quote_list(&close))
        };
        return ConfigError::UnknownKey {
            path: path.to_path_buf(),
            key,
            location,
            hint,
        };
    }
    // The parser quotes the offending value whole: a long one is cut in the middle, keeping
    // the line and column at the end.
    let chars = message.chars().count();
    let message = if chars > 400 {
        let tail: String = message.chars().skip(chars - 120).collect();
        format!("{} … {tail}", clip(&message, 240).trim_end_matches('…'))
    } else {
        message
    };
    ConfigError::Syntax {
        path: path.to_path_buf(),
        message,
    }
}

fn quote_list(names: &[String]) -> String {
    names
        .iter()
        .map(|n| format!("`{n}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Picks apart serde's "unknown field `x`, expected one of `a`, `b`" (with an optional
/// `section: ` prefix) into (section, key, expected keys).
fn parse_unknown_field(message: &str) -> Option<(String, String, Vec<String>)> {
    let at = message.find("unknown field `")?;
    let section = message[..at]
        .trim_end()
        .trim_end_matches(':')
        .trim()
        .to_string();
    let rest = &message[at + "unknown field `".len()..];
    let end = rest.find('`')?;
    let key = rest[..end].to_string();
    let tail = &rest[end + 1..];
    let expected = tail
        .split('`')
        .skip(1)
        .step_by(2)
        .map(str::to_string)
        .collect();
    Some((section, key, expected))
}

#[cfg(test)]
mod tests {
    use super::*;

    const MINIMAL: &str = "
data:
  files: [plant.csv]
  timestamp: time
sample-time: 1min
target:
  tag: XA-1
  source: analyzer
  dead-time: 10min
inputs:
  - tag: TI-1
    unit: degC
    range: [0, 200]
";

    fn load(text: &str) -> Result<Config, ConfigError> {
        let path = Path::new("cfg.yaml");
        RawConfig::parse(text, path)?.check(Path::new("/plant"), path)
    }

    #[test]
    fn minimal_config_gets_documented_defaults() {
        let c = load(MINIMAL).expect("valid");
        assert_eq!(c.files, vec![PathBuf::from("/plant/plant.csv")]);
        assert_eq!(c.delimiter, b',');
        assert!(!c.decimal_comma);
        assert_eq!(c.sample_time, Span::from_secs(60));
        assert_eq!(c.hold_limit, Span::from_secs(180));
        // Unset: 15 observations whatever the rows' spacing.
        assert_eq!(c.screening.spike_half_window, None);
        let minute = Span::from_secs(60);
        for raw in [None, Some(Span::from_secs(10)), Some(Span::from_secs(300))] {
            assert_eq!(c.screening.half_window_observations(minute, raw), 15);
        }
        // Set in time: divided by the sample time, or by the rows' spacing when they are slower.
        let set = Screening {
            spike_half_window: Some(Span::from_secs(15 * 60)),
            spike_threshold: 5.0,
        };
        let half = |raw| set.half_window_observations(minute, raw);
        assert_eq!(half(None), 15);
        assert_eq!(half(Some(Span::from_secs(10))), 15);
        assert_eq!(half(Some(Span::from_secs(300))), 3);
        assert_eq!(half(Some(Span::from_secs(7200))), 1);
        assert_eq!(c.screening.spike_threshold, 5.0);
        assert_eq!(c.inputs[0].frozen_after, Span::from_secs(7200));
        assert_eq!(c.inputs[0].range, Some((0.0, 200.0)));
        assert_eq!(c.target.dead_time, Span::from_secs(600));
        assert_eq!(c.target.transform, TransformKind::None);
    }

    #[test]
    fn timestamp_in_one_column_or_split_into_date_and_time() {
        let c = load(MINIMAL).expect("valid");
        assert_eq!(c.timestamp, TimestampColumns::One("time".into()));
        let split = MINIMAL.replace("  timestamp: time", "  timestamp: [Date, Time]");
        let c = load(&split).expect("valid");
        assert_eq!(
            c.timestamp,
            TimestampColumns::Split(["Date".into(), "Time".into()])
        );
        assert_eq!(c.timestamp.to_string(), "columns `Date` + `Time`");
        assert!(c.timestamp.contains("Time") && !c.timestamp.contains("TI-1"));
        let three = MINIMAL.replace("  timestamp: time", "  timestamp: [a, b, c]");
        let err = load(&three).expect_err("three columns").to_string();
        assert!(
            err.contains(
                "a column name, or a list of two: the date column and the time-of-day column"
            ),
            "{err}"
        );
        let clash = split.replace("  - tag: TI-1", "  - tag: Time");
        let err = load(&clash)
            .expect_err("input is a timestamp column")
            .to_string();
        assert!(err.contains("`Time` is the timestamp column"), "{err}");
    }

    /// More inputs than the regimes can take: unset, all are kept for `build` to narrow down;
    /// listed, at most 12.
    #[test]
    fn more_inputs_than_the_regimes_take() {
        let mut text = MINIMAL.to_string();
        for j in 2..=13 {
            text.push_str(&format!("  - tag: TI-{j}\n"));
        }
        let c = load(&text).expect("13 inputs");
        assert_eq!(c.modelling.variables.len(), 13);
        assert!(!c.modelling.variables_given);
        let names: Vec<String> = (1..=13).map(|j| format!("TI-{j}")).collect();
        let listed = format!("{text}regimes:\n  variables: [{}]\n", names.join(", "));
        let err = load(&listed).expect_err("13 listed").to_string();
        assert!(err.contains("must name 1 to 12 inputs"), "{err}");
        let text = format!("{text}regimes:\n  variables: [TI-1, TI-2]\n");
        assert_eq!(
            load(&text).expect("two variables").modelling.variables,
            vec![0, 1]
        );
    }

    #[test]
    fn unknown_key_names_key_place_and_nearest() {
        let text = MINIMAL.replace("  timestamp: time", "  timestmp: time");
        let err = load(&text).expect_err("typo must fail").to_string();
        assert!(err.contains("unknown key `timestmp`"), "{err}");
        assert!(err.contains("did you mean `timestamp`"), "{err}");
        assert!(err.contains("line 4"), "{err}");
    }

    #[test]
    fn unknown_key_far_from_everything_lists_valid_keys() {
        let text = format!("{MINIMAL}zzzzzzzz: 1\n");
        let err = load(&text).expect_err("must fail").to_string();
        assert!(err.contains("unknown key `zzzzzzzz`"), "{err}");
        assert!(err.contains("valid keys here"), "{err}");
    }

    #[test]
    fn a_data_export_passed_as_config_is_named_not_echoed() {
        // A delimited export is one long YAML string: the message must say what it is and
        // stay short, not quote the whole file back.
        let mut export = String::from("Zeit;FT-101;FT-102;TT-110\n");
        for k in 0..5000 {
            export.push_str(&format!("01.01.2026 00:{:02}:00;40,5;5,9;95,2\n", k % 60));
        }
        let err = load(&export).expect_err("not a config").to_string();
        assert!(err.contains("is not a regimix config"), "{err}");
        assert!(err.contains("reads like a data export"), "{err}");
        assert!(err.contains("`Zeit;FT-101;FT-102;TT-110`"), "{err}");
        assert!(err.len() < 400, "{} bytes: {err}", err.len());

        let err = load("").expect_err("empty").to_string();
        assert!(err.contains("the file is empty"), "{err}");
        let err = load("- a\n- b\n").expect_err("list").to_string();
        assert!(err.contains("holds a list"), "{err}");
    }

    #[test]
    fn a_long_value_of_the_wrong_type_is_cut_in_the_middle() {
        let long = "x".repeat(5000);
        let text = MINIMAL.replace(
            "sample-time: 1min",
            &format!("sample-time: 1min\ntarget: {long}"),
        );
        let err = load(&text).expect_err("wrong type").to_string();
        assert!(err.len() < 600, "{} bytes: {err}", err.len());
        assert!(err.contains(" … "), "{err}");
        assert!(err.contains("line 6"), "the location stays: {err}");
    }
    #[test]
    fn durations_need_units() {
        let err = load(&MINIMAL.replace("sample-time: 1min", "sample-time: 60"))
            .expect_err("unitless")
            .to_string();
        assert!(err.contains("write a number and a unit"), "{err}");
    }

    #[test]
    fn rule_violations_name_the_key() {
        let cases = [
            (MINIMAL.replace("[0, 200]", "[200, 0]"), "inputs[0].range"),
            (
                MINIMAL.replace("sample-time: 1min", "sample-time: 0s"),
                "sample-time",
            ),
            (MINIMAL.replace("tag: TI-1", "tag: XA-1"), "inputs[0].tag"),
            (
                MINIMAL.replace("source: analyzer", "source: lab"),
                "target.dead-time",
            ),
            (
                MINIMAL.replace("  dead-time: 10min", "  dead-time: 10min\n  lab: {}"),
                "target.lab",
            ),
            (
                MINIMAL.replace("  dead-time: 10min", "  full-scale: 100"),
                "target.full-scale",
            ),
        ];
        for (text, key) in cases {
            let err = load(&text).expect_err(key).to_string();
            assert!(err.contains(&format!("`{key}`")), "{key}: {err}");
        }
    }

    /// A short sample time: the default lab window stops at what the runtime keeps (4096
    /// samples) instead of failing; a set one beyond it, or a lab delay beyond the window, is an
    /// error that names `runtime.lab-window`.
    #[test]
    fn the_lab_window_fits_the_runtime() {
        let fast = MINIMAL.replace("sample-time: 1min", "sample-time: 1s");
        let c = load(&fast).expect("valid");
        assert_eq!(c.modelling.lab_window, 4096);
        let err = load(&format!("{fast}runtime: {{ lab-window: 2h }}\n"))
            .expect_err("too long")
            .to_string();
        assert!(
            err.contains("runtime.lab-window") && err.contains("7200 samples of 1s"),
            "{err}"
        );
        let lab = fast.replace(
            "  source: analyzer\n  dead-time: 10min",
            "  source: lab\n  lab:\n    files: [lab.csv]\n    stamped-at: result\n    delay: 2h",
        );
        let err = load(&lab).expect_err("delay beyond").to_string();
        assert!(
            err.contains("runtime.lab-window") && err.contains("the lab delay 2h is 7200 samples"),
            "{err}"
        );
        // At one minute the same delay fits: 3 h = 180 samples.
        let c = load(&lab.replace("sample-time: 1s", "sample-time: 1min")).expect("valid");
        assert_eq!(c.modelling.lab_window, 180);
    }

    #[test]
    fn lab_stamped_at_result_needs_delay() {
        let text = MINIMAL.replace(
            "  source: analyzer\n  dead-time: 10min",
            "  source: lab\n  lab:\n    files: [lab.csv]\n    stamped-at: result",
        );
        let err = load(&text).expect_err("no delay").to_string();
        assert!(err.contains("target.lab.delay"), "{err}");
        let ok = load(&text.replace("stamped-at: result", "stamped-at: result\n    delay: 2h"))
            .expect("valid");
        let lab = ok.target.lab.expect("lab");
        assert_eq!(lab.delay, Span::from_secs(7200));
        assert_eq!(lab.timestamp, TimestampColumns::One("time".into()));
        assert_eq!(lab.files, vec![PathBuf::from("/plant/lab.csv")]);
    }

    #[test]
    fn lab_files_inherit_or_override_the_data_delimiter_offset_and_decimal_mark() {
        let lab_target = |extra: &str| {
            MINIMAL
                .replace(
                    "  timestamp: time",
                    "  timestamp: time\n  delimiter: \";\"\n  naive-offset: UTC\n  decimal-mark: \",\"",
                )
                .replace(
                    "  source: analyzer\n  dead-time: 10min",
                    &format!("  source: lab\n  lab:\n    files: [lab.csv]{extra}"),
                )
        };
        let inherited = load(&lab_target("")).expect("valid");
        let lab = inherited.target.lab.expect("lab");
        assert_eq!((inherited.delimiter, lab.delimiter), (b';', b';'));
        assert_eq!(lab.naive_offset_minutes, 0);
        assert!(inherited.decimal_comma && lab.decimal_comma);
        let own = load(&lab_target(
            "\n    delimiter: \",\"\n    naive-offset: \"+01:00\"\n    decimal-mark: \".\"",
        ))
        .expect("valid");
        let lab = own.target.lab.expect("lab");
        assert_eq!((own.delimiter, lab.delimiter), (b';', b','));
        assert_eq!(
            (own.naive_offset_minutes, lab.naive_offset_minutes),
            (0, 60)
        );
        assert!(own.decimal_comma && !lab.decimal_comma);
        for (extra, key) in [
            ("\n    delimiter: \"é\"", "target.lab.delimiter"),
            ("\n    naive-offset: CET", "target.lab.naive-offset"),
            ("\n    decimal-mark: \";\"", "target.lab.decimal-mark"),
        ] {
            let err = load(&lab_target(extra)).expect_err(key).to_string();
            assert!(err.contains(&format!("`{key}`")), "{key}: {err}");
        }
        // Without lab files the target column comes from the data files, read as data.
        let no_files = lab_target("\n    delimiter: \",\"").replace("    files: [lab.csv]\n", "");
        let err = load(&no_files).expect_err("no files").to_string();
        assert!(err.contains("`target.lab`"), "{err}");
    }
}
