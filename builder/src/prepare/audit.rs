//! What `regimix check` reports: per-tag findings, time coverage and plain-language warnings.

use std::collections::BTreeMap;
use std::fmt;

use serde::Serialize;

use super::historian::{parse_number, FileRead, RawColumn, RawTable};
use super::resample::{Grid, GridSeries};
use super::screen::Stretch;
use super::target::{LabPlacement, LabSamples};
use super::{CellStatus, Dataset};
use crate::config::{BelowLimit, Config, TagSpec, TargetSource};
use crate::duration::Span;
use crate::timestamp::Rfc3339;

/// A stretch of time on the grid, in readable form.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Period {
    /// First grid time, RFC 3339 UTC.
    pub start: String,
    /// Length, e.g. `3h`.
    pub duration: String,
    /// Grid samples in the stretch.
    pub samples: usize,
    /// Start and end (exclusive) in microseconds since the epoch, for comparing stretches.
    #[serde(skip)]
    pub span: (i64, i64),
}

impl Period {
    fn from_stretch(stretch: &Stretch, grid: &Grid) -> Period {
        let from = grid.time(stretch.start);
        let length = stretch.len as i64 * grid.step;
        Period {
            start: Rfc3339(from).to_string(),
            duration: Span::from_micros(length).to_string(),
            samples: stretch.len,
            span: (from, from + length),
        }
    }
}

/// Findings for one tag.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TagAudit {
    /// Column name.
    pub tag: String,
    /// Engineering unit.
    pub unit: String,
    /// `input` or `target`.
    pub role: &'static str,
    /// Rows read (for a lab target: lab results read).
    pub rows: usize,
    /// Non-empty cells among those rows.
    pub observations: usize,
    /// Usable share of grid samples in percent (lab target: of lab results).
    pub valid_percent: f64,
    /// Quality-marker text → count.
    pub markers: BTreeMap<String, u64>,
    /// Of those cells, how many are numbers written with the other decimal mark than the
    /// config's `decimal-mark` (a setting to change, not bad data).
    pub misread_numbers: u64,
    /// Cells written as below a limit (`<0.01`).
    pub below_limit: usize,
    /// Of those, how many were used as values (a lab target's `below-limit: half` or `limit`).
    pub below_limit_used: usize,
    /// Values outside the configured range.
    pub out_of_range: usize,
    /// Frozen stretches.
    pub frozen: Vec<Period>,
    /// Samples removed by the Hampel filter.
    pub spikes: usize,
    /// Target values outside the transform's domain.
    pub outside_transform: usize,
    /// Smallest usable value, in units.
    pub min: Option<f64>,
    /// Mean usable value, in units.
    pub mean: Option<f64>,
    /// Largest usable value, in units.
    pub max: Option<f64>,
    /// Longest stretch with no data at all (gap), if any.
    pub longest_gap: Option<Period>,
}

fn stats(values: &[f64], status: &[CellStatus]) -> (usize, Option<f64>, Option<f64>, Option<f64>) {
    let mut n = 0usize;
    let (mut lo, mut hi, mut sum) = (f64::INFINITY, f64::NEG_INFINITY, 0.0);
    for (v, s) in values.iter().zip(status) {
        if *s == CellStatus::Valid {
            n += 1;
            lo = lo.min(*v);
            hi = hi.max(*v);
            sum += v;
        }
    }
    if n == 0 {
        (0, None, None, None)
    } else {
        (n, Some(lo), Some(sum / n as f64), Some(hi))
    }
}

fn longest_gap(status: &[CellStatus], grid: &Grid) -> Option<Period> {
    let mut best: Option<Stretch> = None;
    let mut k = 0;
    while k < status.len() {
        if status[k] != CellStatus::NoData {
            k += 1;
            continue;
        }
        let start = k;
        while k < status.len() && status[k] == CellStatus::NoData {
            k += 1;
        }
        if best.is_none_or(|b| k - start > b.len) {
            best = Some(Stretch {
                start,
                len: k - start,
            });
        }
    }
    best.map(|s| Period::from_stretch(&s, grid))
}

impl TagAudit {
    /// Findings for a resampled tag (an input or an analyzer target).
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        spec: &TagSpec,
        role: &'static str,
        column: &RawColumn,
        out_of_range: usize,
        series: &GridSeries,
        frozen: &[Stretch],
        spikes: usize,
        grid: &Grid,
    ) -> TagAudit {
        let (n, min, mean, max) = stats(&series.values, &series.status);
        TagAudit {
            tag: spec.tag.clone(),
            unit: spec.unit.clone(),
            role,
            rows: column.kinds.len(),
            observations: column.observations(),
            valid_percent: 100.0 * n as f64 / grid.len.max(1) as f64,
            markers: column.markers.clone(),
            misread_numbers: 0, // counted by `Audit::new`, which knows the setting
            below_limit: column.below_limit(),
            below_limit_used: 0,
            out_of_range,
            frozen: frozen
                .iter()
                .map(|s| Period::from_stretch(s, grid))
                .collect(),
            spikes,
            outside_transform: 0,
            min,
            mean,
            max,
            longest_gap: longest_gap(&series.status, grid),
        }
    }

    /// Findings for a lab target.
    pub fn for_lab(
        spec: &TagSpec,
        samples: &LabSamples,
        out_of_range: usize,
        series: &GridSeries,
        placement: &LabPlacement,
        _grid: &Grid,
    ) -> TagAudit {
        let (_, min, mean, max) = stats(&series.values, &series.status);
        let rows = samples.times.len();
        TagAudit {
            tag: spec.tag.clone(),
            unit: spec.unit.clone(),
            role: "target",
            rows,
            observations: rows,
            valid_percent: 100.0 * placement.placed as f64 / rows.max(1) as f64,
            markers: samples.column.markers.clone(),
            misread_numbers: 0,
            below_limit: 0, // counted by the caller before the policy turns them into values
            below_limit_used: 0,
            out_of_range,
            frozen: Vec::new(),
            spikes: 0,
            outside_transform: 0,
            min,
            mean,
            max,
            longest_gap: None,
        }
    }
}

/// How often each spacing between consecutive raw timestamps occurs.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IntervalCount {
    /// Spacing, e.g. `1min`.
    pub interval: String,
    /// Occurrences.
    pub count: usize,
}

/// Target summary.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TargetAudit {
    /// `analyzer` or `lab`.
    pub source: TargetSource,
    /// Grid rows with a usable target value (after dead-time removal or lab placement).
    pub usable_samples: usize,
    /// Lab placement counts (lab targets only).
    pub lab: Option<LabPlacement>,
    /// Analyzer targets: how long a reading typically lasts when the export holds it between
    /// updates ([`Dataset::target_update_samples`]), e.g. `5min`.
    pub update_every: Option<String>,
    /// Fresh readings among the usable samples: what `build` fits and scores
    /// ([`Dataset::fresh_target_model`]; all of them unless an analyzer's readings are held).
    pub fresh_readings: usize,
    /// Analyzer targets: the interval between readings when the export interpolated between
    /// them ([`Dataset::target_interpolated_samples`]), e.g. `5min`; `None` otherwise.
    pub interpolated_every: Option<String>,
}

/// Everything `check` reports.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Audit {
    /// Files read: the data files, then any lab files.
    pub files: Vec<FileRead>,
    /// First timestamp.
    pub first: String,
    /// Last timestamp.
    pub last: String,
    /// Grid spacing.
    pub sample_time: String,
    /// Grid samples.
    pub grid_samples: usize,
    /// Rows collapsed by the duplicate-timestamp rule.
    pub duplicate_rows: usize,
    /// Median spacing of raw timestamps.
    pub median_interval: Option<String>,
    /// Most frequent raw spacings, most frequent first (at most 5).
    pub intervals: Vec<IntervalCount>,
    /// Widest spacing between consecutive rows: (time of the row before it, spacing µs).
    #[serde(skip)]
    pub widest_raw_gap: Option<(i64, i64)>,
    /// Widest spacing between consecutive rows, readable.
    pub widest_gap: Option<Period>,
    /// Target summary.
    pub target: TargetAudit,
    /// Per tag, inputs first, target last.
    pub tags: Vec<TagAudit>,
    /// Plain-language warnings.
    pub warnings: Vec<String>,
}

impl Audit {
    /// Collects the audit after preparation; `lab_files` are the lab files read (if any).
    pub fn new(
        config: &Config,
        table: &RawTable,
        dataset: &Dataset,
        tags: Vec<TagAudit>,
        lab: Option<LabPlacement>,
        lab_files: Vec<FileRead>,
    ) -> Audit {
        let mut counts: BTreeMap<i64, usize> = BTreeMap::new();
        for w in table.times.windows(2) {
            *counts.entry(w[1] - w[0]).or_insert(0) += 1;
        }
        let total: usize = counts.values().sum();
        let median = {
            let mut seen = 0;
            counts.iter().find_map(|(gap, c)| {
                seen += c;
                (seen * 2 >= total).then_some(*gap)
            })
        };
        let mut frequent: Vec<(i64, usize)> = counts.into_iter().collect();
        frequent.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(&b.0)));
        let intervals = frequent
            .iter()
            .take(5)
            .map(|(gap, count)| IntervalCount {
                interval: Span::from_micros(*gap).to_string(),
                count: *count,
            })
            .collect();
        let widest_raw_gap = table
            .times
            .windows(2)
            .map(|w| (w[0], w[1] - w[0]))
            .max_by_key(|(_, gap)| *gap);
        let first = table.times.first().copied().unwrap_or(0);
        let last = table.times.last().copied().unwrap_or(0);
        let mut audit = Audit {
            files: table.files.iter().cloned().chain(lab_files).collect(),
            first: Rfc3339(first).to_string(),
            last: Rfc3339(last).to_string(),
            sample_time: config.sample_time.to_string(),
            grid_samples: dataset.grid.len,
            duplicate_rows: table.duplicate_rows,
            median_interval: median.map(|m| Span::from_micros(m).to_string()),
            intervals,
            widest_raw_gap,
            widest_gap: widest_raw_gap.map(|(at, gap)| Period {
                start: Rfc3339(at).to_string(),
                duration: Span::from_micros(gap).to_string(),
                samples: (gap / config.sample_time.micros()) as usize,
                span: (at, at + gap),
            }),
            target: TargetAudit {
                source: config.target.source,
                usable_samples: dataset.usable_target_rows(),
                lab,
                update_every: (dataset.reading_cycle > 1).then(|| {
                    Span::from_micros(dataset.reading_cycle as i64 * config.sample_time.micros())
                        .to_string()
                }),
                fresh_readings: dataset
                    .fresh_target_model()
                    .iter()
                    .zip(&dataset.target_status)
                    .filter(|(v, s)| v.is_finite() && **s == CellStatus::Valid)
                    .count(),
                interpolated_every: interpolated_every(config, dataset),
            },
            tags,
            warnings: Vec::new(),
        };
        for tag in &mut audit.tags {
            let (comma, _) = decimal_setting(config, tag);
            tag.misread_numbers = tag
                .markers
                .iter()
                .filter(|(text, _)| parse_number(text, !comma).is_some_and(f64::is_finite))
                .map(|(_, n)| n)
                .sum();
        }
        audit.warnings = warnings(config, &audit, median);
        audit
    }
}

/// Whether `tag`'s cells were read with a decimal comma, and the key that says so.
fn decimal_setting(config: &Config, tag: &TagAudit) -> (bool, &'static str) {
    match config.target.lab.as_ref().filter(|l| !l.files.is_empty()) {
        Some(lab) if tag.role == "target" => (lab.decimal_comma, "target.lab.decimal-mark"),
        _ => (config.decimal_comma, "data.decimal-mark"),
    }
}

impl TagAudit {
    /// Most of the cells read as markers are numbers with the other decimal mark: the setting
    /// is wrong, not the data.
    pub fn decimal_mark_misread(&self) -> bool {
        let markers: u64 = self.markers.values().sum();
        self.misread_numbers > 0 && 2 * self.misread_numbers >= markers
    }
}

/// Stretches (start, end) sorted by start, joined where the next starts at most `gap` after one
/// ends: (start, end, pieces joined).
fn joined_stretches(spans: impl Iterator<Item = (i64, i64)>, gap: i64) -> Vec<(i64, i64, usize)> {
    let mut spans: Vec<(i64, i64)> = spans.collect();
    spans.sort_unstable();
    let mut out: Vec<(i64, i64, usize)> = Vec::new();
    for (from, to) in spans {
        match out.last_mut() {
            Some(last) if from - last.1 <= gap => {
                last.1 = last.1.max(to);
                last.2 += 1;
            }
            _ => out.push((from, to, 1)),
        }
    }
    out
}

/// `A`, `A and B`, `A, B and C`, or `A, B, C and 4 more tags`.
pub fn tag_list(names: &[&str]) -> String {
    match names {
        [] => String::new(),
        [one] => one.to_string(),
        [a, b] => format!("{a} and {b}"),
        [a, b, c] => format!("{a}, {b} and {c}"),
        [a, b, c, rest @ ..] => format!("{a}, {b}, {c} and {} more tags", rest.len()),
    }
}

/// Groups of input tags frozen over the same stretch (each member overlapping the group's
/// first stretch by at least half the longer of the two), with at least three tags, or every
/// input when there are two: a whole unit standing still, not a transmitter.
fn frozen_together(tags: &[TagAudit]) -> Vec<Vec<(&String, &Period)>> {
    let inputs = tags.iter().filter(|t| t.role == "input").count();
    let needed = inputs.clamp(2, 3);
    let mut stretches: Vec<(&String, &Period)> = tags
        .iter()
        .filter(|t| t.role == "input")
        .flat_map(|t| t.frozen.iter().map(move |p| (&t.tag, p)))
        .collect();
    stretches.sort_by_key(|(_, p)| p.span);
    let mut taken = vec![false; stretches.len()];
    let mut groups = Vec::new();
    for i in 0..stretches.len() {
        if taken[i] {
            continue;
        }
        let (first_tag, anchor) = stretches[i];
        let mut group = vec![(first_tag, anchor)];
        let mut members = vec![i];
        for (j, &(tag, p)) in stretches.iter().enumerate().skip(i + 1) {
            if taken[j] || group.iter().any(|(t, _)| *t == tag) {
                continue;
            }
            let overlap = anchor.span.1.min(p.span.1) - anchor.span.0.max(p.span.0);
            let longer = (anchor.span.1 - anchor.span.0).max(p.span.1 - p.span.0);
            if 2 * overlap >= longer {
                group.push((tag, p));
                members.push(j);
            }
        }
        if group.len() < needed {
            continue;
        }
        // A member's stretch broken by a marker cell: its other pieces inside the group's
        // span belong to it too.
        let from = group.iter().map(|(_, p)| p.span.0).min().unwrap_or(0);
        let to = group.iter().map(|(_, p)| p.span.1).max().unwrap_or(0);
        for (j, &(tag, p)) in stretches.iter().enumerate() {
            let inside = to.min(p.span.1) - from.max(p.span.0);
            let member = group.iter().any(|(t, _)| *t == tag);
            if !taken[j] && !members.contains(&j) && member && 2 * inside >= p.span.1 - p.span.0 {
                group.push((tag, p));
                members.push(j);
            }
        }
        for j in members {
            taken[j] = true;
        }
        // In the audit's (the config's) order.
        let rank = |tag: &String| tags.iter().position(|t| &t.tag == tag);
        group.sort_by_key(|&(tag, p)| (rank(tag), p.span));
        groups.push(group);
    }
    groups
}

/// `{who}: cells like `x` are numbers with a decimal comma: set `data.decimal-mark: ","``
/// when some of `tag`'s marker cells are numbers with the other decimal mark.
fn decimal_mark_warning(config: &Config, tag: &TagAudit, who: &str) -> Option<String> {
    let (comma, key) = decimal_setting(config, tag);
    let text = tag
        .markers
        .keys()
        .find(|t| parse_number(t, !comma).is_some_and(f64::is_finite))?;
    let other = if comma { '.' } else { ',' };
    // `12,345`: a decimal comma, or a comma grouping thousands; the text cannot tell.
    let grouping = text.matches(other).count() == 1
        && text
            .rsplit(other)
            .next()
            .is_some_and(|t| t.len() == 3 && t.bytes().all(|b| b.is_ascii_digit()));
    Some(format!(
        "{who}: cells like `{text}` are numbers with a decimal {}: set `{key}: \"{other}\"`{}",
        if comma { "point" } else { "comma" },
        if grouping {
            format!(" (if the `{other}` groups thousands instead, export the numbers without digit grouping)")
        } else {
            String::new()
        }
    ))
}

/// Below this many usable target samples a model cannot be fitted and validated honestly
/// (common practice: several samples per parameter plus a held-out block).
pub const MIN_TARGET_SAMPLES: usize = 30;

/// Distinct quality-marker texts listed per tag in the text audit.
const MARKER_TEXTS: usize = 8;

/// The interval between an analyzer's readings when the export interpolated between them.
fn interpolated_every(config: &Config, dataset: &Dataset) -> Option<String> {
    if config.target.source != TargetSource::Analyzer {
        return None;
    }
    let cycle = dataset.target_interpolated_samples()?;
    Some(Span::from_micros(cycle as i64 * config.sample_time.micros()).to_string())
}

/// What to do about an interpolated analyzer export (a warning in `check`, a note in `build`).
pub fn interpolated_warning(tag: &str, every: &str) -> String {
    format!(
        "{tag} looks interpolated between analyzer readings about every {every} (most samples that move lie on straight lines between kinks that many samples apart): an interpolated sample depends on the next reading, which the sensor will not have online, so the validation would look better than the sensor runs; export the readings held until the next (the historian's \"previous value\" or step retrieval) instead"
    )
}

fn warnings(config: &Config, audit: &Audit, median: Option<i64>) -> Vec<String> {
    let mut out = Vec::new();
    // A wrong decimal mark turns whole columns into text: one warning per setting, first, and
    // none of the findings that follow from it (markers, unusable samples) for those tags.
    let mut misread: BTreeMap<&str, Vec<&TagAudit>> = BTreeMap::new();
    for tag in audit.tags.iter().filter(|t| t.decimal_mark_misread()) {
        misread
            .entry(decimal_setting(config, tag).1)
            .or_default()
            .push(tag);
    }
    for tags in misread.values() {
        let names: Vec<&str> = tags.iter().map(|t| t.tag.as_str()).collect();
        let Some(first) = tags.first() else {
            continue;
        };
        if let Some(warning) = decimal_mark_warning(config, first, &tag_list(&names)) {
            out.push(format!("{warning}; until then these cells read as text"));
        }
    }
    // Many tags frozen over the same stretch: one warning for the stretch, not one per tag.
    let mut together: Vec<(&String, (i64, i64))> = Vec::new();
    for group in frozen_together(&audit.tags) {
        let mut names: Vec<&str> = group.iter().map(|(t, _)| t.as_str()).collect();
        names.dedup();
        let from = group.iter().map(|(_, p)| p.span.0).min().unwrap_or(0);
        let to = group.iter().map(|(_, p)| p.span.1).max().unwrap_or(0);
        out.push(format!(
            "{} froze together for {} from {}: a shutdown, a trip or a historian fault rather \
             than the transmitters; these samples are left out like any frozen value",
            tag_list(&names),
            Span::from_micros(to - from),
            Rfc3339(from)
        ));
        together.extend(group.into_iter().map(|(t, p)| (t, p.span)));
    }
    let ts = config.sample_time;
    if let Some(m) = median {
        let m = Span::from_micros(m);
        if m > config.hold_limit {
            out.push(format!(
                "raw rows come every {m} (median) but hold-limit is {}: most grid samples will be empty; raise hold-limit or sample-time",
                config.hold_limit
            ));
        } else if m > ts {
            out.push(format!(
                "raw rows come every {m} (median), slower than sample-time {ts}: values are held between rows"
            ));
        }
    }
    let widest = audit.widest_raw_gap;
    if let Some((at, gap)) = widest {
        if gap > config.hold_limit.micros() {
            out.push(format!(
                "no rows at all for {} from {} (an export or historian outage): lag buffers restart after it",
                Span::from_micros(gap),
                Rfc3339(at)
            ));
        }
    }
    if let Some(every) = &audit.target.interpolated_every {
        out.push(interpolated_warning(&config.target.spec.tag, every));
    }
    if audit.duplicate_rows > 0 {
        out.push(format!(
            "{} repeated the timestamp of another row; for each tag the last value was kept",
            counted(audit.duplicate_rows as u64, "row", "rows")
        ));
    }
    for tag in &audit.tags {
        let name = &tag.tag;
        // A historian that records on change writes a tag only now and then: most rows leave
        // its cell empty, and samples beyond the hold limit after a record have no value.
        let sparse = tag.observations * 2 < tag.rows;
        if tag.role == "input" && tag.valid_percent < 80.0 && sparse {
            out.push(format!(
                "{name}: a value in only {} of {} rows, so {:.1} % of samples have none within `hold-limit` ({}): if the historian records on change (compression), set `hold-limit` to its longest interval between records (often 10 min to 1 h), or export values at a fixed interval",
                tag.observations,
                tag.rows,
                100.0 - tag.valid_percent,
                config.hold_limit
            ));
        } else if tag.role == "input" && tag.valid_percent < 80.0 && !tag.decimal_mark_misread() {
            out.push(format!(
                "{name}: only {:.1} % of samples are usable (gaps, quality markers, frozen values, spikes or out of range)",
                tag.valid_percent
            ));
        }
        // Pieces of one stretch split by a cell without a usable value (a quality marker, a
        // missed row) are reported as the one stretch they are.
        for (from, to, pieces) in joined_stretches(
            tag.frozen
                .iter()
                .filter(|f| !together.contains(&(name, f.span)))
                .map(|f| f.span),
            config.hold_limit.micros(),
        ) {
            let split = if pieces > 1 {
                format!(" (in {pieces} pieces split by cells without a usable value)")
            } else {
                String::new()
            };
            out.push(format!(
                "{name}: frozen for {} from {}{split} — check the transmitter and its historian compression; a setpoint or a state that legitimately holds still needs a longer `frozen-after` on this tag",
                Span::from_micros(to - from),
                Rfc3339(from)
            ));
        }
        let marker_total: u64 = tag.markers.values().sum();
        if marker_total > 0 && !tag.decimal_mark_misread() {
            let kinds: Vec<&str> = tag.markers.keys().map(String::as_str).take(4).collect();
            out.push(format!(
                "{name}: {} with quality markers ({})",
                counted(marker_total, "cell", "cells"),
                kinds.join(", ")
            ));
            // Some numbers written with the other decimal mark among the markers: say so.
            out.extend(decimal_mark_warning(config, tag, name));
        }
        below_limit_warnings(config, tag, &mut out);
        if tag.out_of_range > 0 {
            out.push(format!(
                "{name}: {} outside the configured range",
                counted(tag.out_of_range as u64, "value", "values")
            ));
        }
        if tag.spikes > 0 {
            out.push(format!(
                "{name}: {} removed by the Hampel filter",
                counted(tag.spikes as u64, "spike", "spikes")
            ));
        }
        if tag.outside_transform > 0 {
            out.push(format!(
                "{name}: {} values outside the domain of the target transform (≤ 0 for log; outside (0, full-scale) for logit)",
                tag.outside_transform
            ));
        }
        let spec = if tag.role == "target" {
            Some(&config.target.spec)
        } else {
            config.inputs.iter().find(|s| s.tag == tag.tag)
        };
        if let (Some(lo), Some(hi), Some(spec)) = (tag.min, tag.max, spec) {
            if hi - lo <= spec.resolution {
                out.push(format!(
                    "{name}: does not vary over the data (range {} ≤ resolution): it carries no information",
                    hi - lo
                ));
            }
        }
        if tag.role == "input" {
            if let Some(gap) = &tag.longest_gap {
                let tag_gap = gap.samples as i64 * ts.micros();
                let explained = widest.is_some_and(|(_, g)| tag_gap <= g);
                if !explained && tag_gap > 12 * config.hold_limit.micros().max(ts.micros()) {
                    out.push(format!(
                        "{name}: longest gap {} from {}: lag buffers restart after it",
                        gap.duration, gap.start
                    ));
                }
            }
        }
    }
    if audit.target.usable_samples == 0 {
        out.push("the target has no usable samples: nothing to fit a model to".to_string());
    } else if audit.target.usable_samples < MIN_TARGET_SAMPLES {
        out.push(format!(
            "only {} usable target samples: too few to fit and validate a model (aim for well over {MIN_TARGET_SAMPLES})",
            audit.target.usable_samples
        ));
    }
    if let Some(lab) = &audit.target.lab {
        if lab.outside_span > 0 {
            out.push(format!(
                "{} outside the time span of the process data, not used",
                counted(lab.outside_span as u64, "lab result", "lab results")
            ));
        }
        if lab.held_repeats > 0 {
            out.push(format!(
                "the data files repeat each lab result on the rows after it until the next: {} left out, the first row of each run taken as the result (stamped when it appeared); a result equal to the one before it cannot be told from a repeat",
                counted(lab.held_repeats as u64, "repeat", "repeats")
            ));
        }
        if lab.same_row > 0 {
            out.push(format!(
                "{} on the same sample-time row as a later one; the later result was kept",
                counted(lab.same_row as u64, "lab result", "lab results")
            ));
        }
    }
    out
}

/// Width of a text table's tag column: the longest tag name, at least 16 characters.
pub fn tag_column_width<'a>(tags: impl Iterator<Item = &'a str>) -> usize {
    tags.map(|t| t.chars().count()).max().unwrap_or(0).max(16)
}

/// Skipped rows' first cells, quoted and comma-separated (`(blank)` for an empty one).
fn quoted_rows(rows: &[String]) -> String {
    let quoted: Vec<String> = rows
        .iter()
        .map(|l| match l.as_str() {
            "" => "(blank)".to_string(),
            l => format!("`{l}`"),
        })
        .collect();
    quoted.join(", ")
}

/// `n` and the noun in the number it takes: `1 cell`, `2 cells`.
fn counted(n: u64, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

/// Above this share of below-limit results, a substituted value shapes the low end of the fit
/// (US EPA, Guidance for Data Quality Assessment QA/G-9, 2000: substitution for fewer than 15 %
/// non-detects; recalled from memory).
const SUBSTITUTION_SHARE: f64 = 0.15;

/// What became of a tag's below-limit cells (`<0.01`).
fn below_limit_warnings(config: &Config, tag: &TagAudit, out: &mut Vec<String>) {
    let (name, below) = (&tag.tag, tag.below_limit);
    if below == 0 {
        return;
    }
    let lab = config.target.lab.as_ref().filter(|_| tag.role == "target");
    let Some(lab) = lab else {
        out.push(format!(
            "{name}: {} with below-limit readings (`<` and a number), treated as bad",
            counted(below as u64, "cell", "cells")
        ));
        return;
    };
    let share = below as f64 / tag.rows.max(1) as f64;
    if tag.below_limit_used == 0 {
        out.push(format!(
            "{name}: {below} results ({:.0} %) are below a detection limit (`<` and a number) and were left out, so the model only sees the target above it; `target.lab.below-limit: half` or `limit` uses them",
            100.0 * share
        ));
        return;
    }
    let what = match lab.below_limit {
        BelowLimit::Half => "half the limit",
        _ => "the limit",
    };
    out.push(format!(
        "{name}: {} below a detection limit used as {what}",
        counted(tag.below_limit_used as u64, "result", "results")
    ));
    if share > SUBSTITUTION_SHARE {
        out.push(format!(
            "{name}: {:.0} % of results are below the limit: the substituted values shape the low end of the fit; treat estimates near the limit as \"below it\", not as numbers",
            100.0 * share
        ));
    }
}

fn num(v: Option<f64>) -> String {
    match v {
        Some(x) if x != 0.0 && (x.abs() >= 1e5 || x.abs() < 1e-3) => format!("{x:.4e}"),
        Some(x) => format!("{x:.4}"),
        None => "—".to_string(),
    }
}

impl fmt::Display for Audit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        writeln!(f, "Data")?;
        for file in &self.files {
            write!(f, "  {} ({} rows", file.path, file.rows)?;
            if !file.label_rows.is_empty() {
                write!(
                    f,
                    "; {} under the header skipped: {}",
                    counted(file.label_rows.len() as u64, "label row", "label rows"),
                    quoted_rows(&file.label_rows)
                )?;
            }
            if !file.footer_rows.is_empty() {
                write!(
                    f,
                    "; {} after the data skipped: {}",
                    counted(file.footer_rows.len() as u64, "row", "rows"),
                    quoted_rows(&file.footer_rows)
                )?;
            }
            if !file.absent.is_empty() {
                let names: Vec<String> = file.absent.iter().map(|n| format!("`{n}`")).collect();
                write!(f, "; without {} (other files hold them)", names.join(", "))?;
            }
            if file.windows_1252_fields > 0 {
                write!(
                    f,
                    "; {} fields not UTF-8, read as Windows-1252",
                    file.windows_1252_fields
                )?;
            }
            writeln!(f, ")")?;
        }
        writeln!(f, "  time span        {} → {}", self.first, self.last)?;
        let spacing: Vec<String> = self
            .intervals
            .iter()
            .map(|i| format!("{} ×{}", i.interval, i.count))
            .collect();
        writeln!(
            f,
            "  raw spacing      median {}; most frequent: {}",
            self.median_interval.as_deref().unwrap_or("—"),
            spacing.join(", ")
        )?;
        writeln!(
            f,
            "  grid             {} samples every {}",
            self.grid_samples, self.sample_time
        )?;
        writeln!(f, "  duplicate rows   {}", self.duplicate_rows)?;
        writeln!(
            f,
            "  target           {} usable samples ({}{})",
            self.target.usable_samples,
            match self.target.source {
                TargetSource::Analyzer => "analyzer",
                TargetSource::Lab => "lab",
            },
            match &self.target.update_every {
                Some(every) => format!(
                    "; a new reading every {every}, held in between: {} fresh readings to fit",
                    self.target.fresh_readings
                ),
                None => String::new(),
            }
        )?;
        writeln!(f)?;
        writeln!(f, "Tags")?;
        let w = tag_column_width(self.tags.iter().map(|t| t.tag.as_str()));
        writeln!(
            f,
            "  {:<w$} {:<7} {:>8} {:>7} {:>7} {:>7} {:>6} {:>6}  {:>11} {:>11} {:>11}  unit",
            "tag",
            "role",
            "rows",
            "valid%",
            "markers",
            "frozen",
            "spikes",
            "range",
            "min",
            "mean",
            "max"
        )?;
        for t in &self.tags {
            let markers: u64 = t.markers.values().sum();
            let frozen: usize = t.frozen.iter().map(|p| p.samples).sum();
            writeln!(
                f,
                "  {:<w$} {:<7} {:>8} {:>7.1} {:>7} {:>7} {:>6} {:>6}  {:>11} {:>11} {:>11}  {}",
                t.tag,
                t.role,
                t.rows,
                t.valid_percent,
                markers,
                frozen,
                t.spikes,
                t.out_of_range,
                num(t.min),
                num(t.mean),
                num(t.max),
                t.unit
            )?;
        }
        let with_markers: Vec<&TagAudit> =
            self.tags.iter().filter(|t| !t.markers.is_empty()).collect();
        if !with_markers.is_empty() {
            writeln!(f)?;
            writeln!(f, "Quality markers")?;
            for t in with_markers {
                // The most frequent texts first; a column of numbers the reader could not parse
                // would otherwise list every value. Numbers with the other decimal mark are
                // counted as one item (the warnings name the setting).
                let number = |k: &str| {
                    [false, true]
                        .into_iter()
                        .any(|comma| parse_number(k, comma).is_some_and(f64::is_finite))
                };
                let mut texts: Vec<(&String, &u64)> = t
                    .markers
                    .iter()
                    .filter(|(k, _)| t.misread_numbers == 0 || !number(k))
                    .collect();
                texts.sort_by(|a, b| b.1.cmp(a.1).then(a.0.cmp(b.0)));
                let misread = (t.misread_numbers > 0)
                    .then(|| format!("numbers with the other decimal mark ×{}", t.misread_numbers));
                let mut list: Vec<String> = misread
                    .into_iter()
                    .chain(
                        texts
                            .iter()
                            .take(MARKER_TEXTS)
                            .map(|(k, v)| format!("\"{k}\" ×{v}")),
                    )
                    .collect();
                if texts.len() > MARKER_TEXTS {
                    let rest: u64 = texts[MARKER_TEXTS..].iter().map(|(_, v)| **v).sum();
                    list.push(format!(
                        "… {} more texts ×{rest}",
                        texts.len() - MARKER_TEXTS
                    ));
                }
                writeln!(f, "  {:<w$} {}", t.tag, list.join(", "))?;
            }
        }
        let frozen: Vec<(&str, &Period)> = self
            .tags
            .iter()
            .flat_map(|t| t.frozen.iter().map(move |p| (t.tag.as_str(), p)))
            .collect();
        if !frozen.is_empty() {
            writeln!(f)?;
            writeln!(f, "Frozen stretches")?;
            for (tag, p) in frozen {
                writeln!(
                    f,
                    "  {:<w$} from {} for {} ({} samples)",
                    tag, p.start, p.duration, p.samples
                )?;
            }
        }
        writeln!(f)?;
        if self.warnings.is_empty() {
            writeln!(f, "No warnings.")?;
        } else {
            writeln!(f, "Warnings")?;
            for w in &self.warnings {
                writeln!(f, "  - {w}")?;
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const HOUR: i64 = 3_600_000_000;

    /// An input tag frozen over the given (start, end) hours.
    fn input(name: &str, frozen: &[(i64, i64)]) -> TagAudit {
        TagAudit {
            tag: name.to_string(),
            unit: String::new(),
            role: "input",
            rows: 0,
            observations: 0,
            valid_percent: 100.0,
            markers: BTreeMap::new(),
            misread_numbers: 0,
            below_limit: 0,
            below_limit_used: 0,
            out_of_range: 0,
            frozen: frozen
                .iter()
                .map(|&(a, b)| Period {
                    start: Rfc3339(a * HOUR).to_string(),
                    duration: Span::from_micros((b - a) * HOUR).to_string(),
                    samples: (b - a) as usize,
                    span: (a * HOUR, b * HOUR),
                })
                .collect(),
            spikes: 0,
            outside_transform: 0,
            min: None,
            mean: None,
            max: None,
            longest_gap: None,
        }
    }

    fn names(group: &[(&String, &Period)]) -> Vec<String> {
        group.iter().map(|(t, _)| t.to_string()).collect()
    }

    #[test]
    fn tags_frozen_over_one_stretch_form_one_group_with_their_broken_pieces() {
        // A shutdown from hour 100 to 136 freezes C, A, D (in two pieces, split by a marker)
        // and B; B also freezes alone earlier, E only elsewhere.
        let tags = [
            input("A", &[(100, 136)]),
            input("B", &[(10, 30), (101, 136)]),
            input("C", &[(100, 135)]),
            input("D", &[(100, 112), (113, 136)]),
            input("E", &[(200, 230)]),
        ];
        let groups = frozen_together(&tags);
        assert_eq!(groups.len(), 1);
        assert_eq!(names(&groups[0]), ["A", "B", "C", "D", "D"]);
        let config_order: Vec<(i64, i64)> = groups[0].iter().map(|(_, p)| p.span).collect();
        assert_eq!(config_order[3], (100 * HOUR, 112 * HOUR));
    }

    #[test]
    fn pieces_of_one_frozen_stretch_are_joined() {
        let spans = [(130, 140), (100, 112), (113, 125), (300, 310)]
            .map(|(a, b): (i64, i64)| (a * HOUR, b * HOUR));
        let joined = joined_stretches(spans.into_iter(), HOUR);
        assert_eq!(
            joined,
            [
                (100 * HOUR, 125 * HOUR, 2),
                (130 * HOUR, 140 * HOUR, 1),
                (300 * HOUR, 310 * HOUR, 1)
            ]
        );
    }

    #[test]
    fn two_of_many_or_barely_overlapping_stretches_stay_separate() {
        let tags = [
            input("A", &[(100, 136)]),
            input("B", &[(100, 136)]),
            input("C", &[]),
            input("D", &[(130, 170)]), // overlaps A's by 6 h of 40
        ];
        assert!(frozen_together(&tags).is_empty());
        // With only two inputs, both frozen together is the whole unit.
        let pair = [input("A", &[(100, 136)]), input("B", &[(102, 136)])];
        assert_eq!(frozen_together(&pair).len(), 1);
    }
}
