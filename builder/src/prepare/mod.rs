//! Data preparation: historian files → an aligned [`Dataset`] and an [`Audit`] of what was found.
//!
//! Steps, in order: read and merge the files ([`historian`]); mark values outside each tag's
//! valid range; resample onto the grid ([`resample`]); mark frozen stretches and Hampel spikes
//! ([`screen`]); align the target ([`target`]); apply the target transform.

pub mod audit;
pub mod historian;
pub mod resample;
pub mod screen;
pub mod target;
pub mod text;

use ndarray::Array2;
use regimix_format::transform::Transform;

use crate::config::{Config, TagSpec, TransformKind};
use crate::duration::Span;
use crate::error::DataError;
use crate::timestamp::Micros;
use audit::{Audit, TagAudit};
use historian::{RawColumn, ReadSpec};
use resample::{Grid, GridSeries};

/// Status of one grid cell.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
#[repr(u8)]
pub enum CellStatus {
    /// A usable value.
    Valid = 0,
    /// No observation within the hold limit (a gap).
    NoData = 1,
    /// The last observation was a quality marker.
    Bad = 2,
    /// The last observation was outside the tag's valid range.
    OutOfRange = 3,
    /// Part of a frozen stretch.
    Frozen = 4,
    /// Flagged by the Hampel filter.
    Spike = 5,
    /// Outside the domain of the target transform (e.g. ≤ 0 for `log`).
    OutsideTransform = 6,
}

/// The aligned data every later stage works on.
#[derive(Debug, Clone)]
pub struct Dataset {
    /// The sample grid.
    pub grid: Grid,
    /// Input tags, in config order (columns of `inputs`).
    pub input_tags: Vec<TagSpec>,
    /// Inputs in engineering units, `len × inputs`; `NaN` where not valid.
    pub inputs: Array2<f64>,
    /// Status of each input cell.
    pub input_status: Array2<CellStatus>,
    /// Target in engineering units at process time (analyzer dead time removed, lab values at
    /// their sample time); `NaN` where there is no usable value.
    pub target: Vec<f64>,
    /// Target in the model domain (after the transform).
    pub target_model: Vec<f64>,
    /// Status of each target cell.
    pub target_status: Vec<CellStatus>,
    /// The target transform.
    pub transform: Transform,
    /// Grid samples between an analyzer's readings when the export holds each reading until the
    /// next ([`Dataset::target_update_samples`]); 1 when every sample is a reading (and for lab
    /// targets).
    pub reading_cycle: usize,
}

impl Dataset {
    /// Grid time of row `k`.
    pub fn time(&self, k: usize) -> Micros {
        self.grid.time(k)
    }

    /// Rows where the target is usable.
    pub fn usable_target_rows(&self) -> usize {
        self.target_status
            .iter()
            .filter(|s| **s == CellStatus::Valid)
            .count()
    }

    /// Grid samples a target reading typically lasts: the median length of the runs of equal
    /// consecutive valid values (a run also ends at an invalid sample), when it is 2 or more; an
    /// analyzer held between its cycles shows its cycle here.
    pub fn target_update_samples(&self) -> Option<usize> {
        let mut runs = Vec::new();
        let mut run = 0usize;
        let mut last: Option<u64> = None;
        for (value, status) in self.target.iter().zip(&self.target_status) {
            let bits = (*status == CellStatus::Valid).then(|| value.to_bits());
            if bits.is_some() && bits == last {
                run += 1;
            } else {
                if run > 0 {
                    runs.push(run);
                }
                run = usize::from(bits.is_some());
            }
            last = bits;
        }
        if run > 0 {
            runs.push(run);
        }
        runs.sort_unstable();
        runs.get(runs.len() / 2).copied().filter(|&m| m >= 2)
    }

    /// Grid samples between an analyzer's readings when the export interpolated linearly between
    /// them (a historian's "interpolated" retrieval): most samples that move lie on a straight
    /// line through their neighbours (within the export's rounding), and the kinks where the
    /// slope changes — the readings — fall a whole number of cycles apart. `None` when the target
    /// does not look so. An interpolated sample depends on the next reading, which the sensor
    /// will not have online.
    pub fn target_interpolated_samples(&self) -> Option<usize> {
        let valid = |k: usize| {
            (self.target_status.get(k) == Some(&CellStatus::Valid))
                .then(|| self.target[k])
                .filter(|v| v.is_finite())
        };
        let tolerance =
            2.5 * export_resolution(self.target.iter().copied().filter(|v| v.is_finite()))?;
        let (mut moving, mut straight) = (0usize, 0usize);
        let mut kinks = Vec::new();
        for k in 1..self.target.len().saturating_sub(1) {
            let (Some(a), Some(b), Some(c)) = (valid(k - 1), valid(k), valid(k + 1)) else {
                continue;
            };
            if a == b && b == c {
                continue; // steady or held: says nothing
            }
            moving += 1;
            if (c - 2.0 * b + a).abs() <= tolerance {
                straight += 1;
            } else {
                kinks.push(k);
            }
        }
        if moving < 50 || 2 * straight < moving {
            return None;
        }
        let mut gaps: Vec<usize> = kinks.windows(2).map(|w| w[1] - w[0]).collect();
        if gaps.len() < 10 {
            return None;
        }
        gaps.sort_unstable();
        // The cycle: the most common gap (a reading that continues the slope leaves out a kink,
        // so longer gaps are its multiples).
        let mut cycle = (0usize, 0usize);
        for run in gaps.chunk_by(|a, b| a == b) {
            if run.len() > cycle.1 {
                cycle = (run[0], run.len());
            }
        }
        let cycle = cycle.0;
        let whole = gaps
            .iter()
            .filter(|&&g| {
                let r = g % cycle.max(1);
                r == 0 || r == 1 || r + 1 == cycle
            })
            .count();
        (cycle >= 3 && 5 * whole >= 4 * gaps.len()).then_some(cycle)
    }

    /// The model-domain target at its fresh readings only: a sample that repeats the reading
    /// before it is NaN, unless it lies a whole number of reading cycles into the run (a steady
    /// value the analyzer reports again). With a reading cycle of 1 this is `target_model`.
    /// A held sample lags the process by up to one cycle, so it is neither fitted nor scored.
    pub fn fresh_target_model(&self) -> Vec<f64> {
        let cycle = self.reading_cycle.max(1);
        let mut out = self.target_model.clone();
        if cycle == 1 {
            return out;
        }
        let mut last: Option<u64> = None;
        let mut into_run = 0usize;
        for ((slot, value), status) in out.iter_mut().zip(&self.target).zip(&self.target_status) {
            let bits = (*status == CellStatus::Valid).then(|| value.to_bits());
            if bits.is_some() && bits == last {
                into_run += 1;
                if !into_run.is_multiple_of(cycle) {
                    *slot = f64::NAN;
                }
            } else {
                into_run = 0;
            }
            last = bits;
        }
        out
    }
}

/// The transform a config asks for.
pub fn transform_of(config: &Config) -> Transform {
    match config.target.transform {
        TransformKind::None => Transform::Identity,
        TransformKind::Log => Transform::Log,
        TransformKind::Logit => Transform::Logit {
            full_scale: config.target.full_scale,
        },
    }
}

/// What preparation produced.
#[derive(Debug, Clone)]
pub struct Prepared {
    /// The aligned data.
    pub dataset: Dataset,
    /// Findings per tag, for `check` and the report.
    pub audit: Audit,
}

/// Median spacing of consecutive rows (`None` with fewer than two distinct times).
fn median_spacing(times: &[Micros]) -> Option<Span> {
    let mut gaps: Vec<i64> = times
        .windows(2)
        .map(|w| w[1] - w[0])
        .filter(|&g| g > 0)
        .collect();
    if gaps.is_empty() {
        return None;
    }
    let middle = (gaps.len() - 1) / 2;
    let (_, &mut median, _) = gaps.select_nth_unstable(middle);
    Some(Span::from_micros(median))
}

/// Screens one resampled tag and returns its audit entry. Spikes are looked for in the model
/// domain (`transform`): for a log-transformed impurity the noise is proportional to the level,
/// so a Hampel filter on raw values would flag every fast rise.
#[allow(clippy::too_many_arguments)]
fn screen_tag(
    spec: &TagSpec,
    role: &'static str,
    column: &RawColumn,
    out_of_range: usize,
    series: &mut GridSeries,
    config: &Config,
    grid: &Grid,
    transform: Transform,
    half_window: usize,
) -> TagAudit {
    let frozen_steps = spec.frozen_after.whole_steps(config.sample_time) as usize;
    let frozen = screen::mark_frozen(series, spec.resolution, frozen_steps);
    let half = half_window;
    let threshold = config.screening.spike_threshold;
    let spikes = if transform == Transform::Identity {
        screen::mark_spikes(series, half, threshold, spec.resolution)
    } else {
        let mut model = GridSeries {
            values: series
                .values
                .iter()
                .map(|&v| transform.forward(v).unwrap_or(f64::NAN))
                .collect(),
            status: series.status.clone(),
        };
        let count = screen::mark_spikes_with_floor(&mut model, half, threshold, |median_z| {
            spec.resolution / transform.inverse_slope(median_z)
        });
        for (k, status) in model.status.iter().enumerate() {
            if *status == CellStatus::Spike {
                series.status[k] = CellStatus::Spike;
                series.values[k] = f64::NAN;
            }
        }
        count
    };
    TagAudit::new(
        spec,
        role,
        column,
        out_of_range,
        series,
        &frozen,
        spikes,
        grid,
    )
}

/// Runs every preparation step on the files named in `config`.
pub fn prepare(config: &Config) -> Result<Prepared, DataError> {
    let analyzer = config.target.lab.is_none();
    let lab_in_data = config
        .target
        .lab
        .as_ref()
        .is_some_and(|l| l.files.is_empty());
    let mut columns: Vec<(String, &'static str)> = config
        .inputs
        .iter()
        .map(|t| (t.tag.clone(), "input"))
        .collect();
    if analyzer || lab_in_data {
        columns.push((config.target.spec.tag.clone(), "target"));
    }
    let spec = ReadSpec {
        delimiter: config.delimiter,
        timestamp: &config.timestamp,
        columns: &columns,
        naive_offset_minutes: config.naive_offset_minutes,
        decimal_comma: config.decimal_comma,
        date_order: config.date_order,
        long_format: config.long_format.as_ref(),
        any_order: false,
    };
    let mut table = historian::read_files(&config.files, &spec)?;
    let (first, last) = match (table.times.first(), table.times.last()) {
        (Some(f), Some(l)) => (*f, *l),
        _ => {
            return Err(DataError::TooShort {
                detail: "no rows".into(),
            })
        }
    };
    let grid = Grid::spanning(first, last, config.sample_time.micros());
    if grid.len < 2 && looks_like_serial_dates(first, last) {
        return Err(DataError::SerialDates {
            first: crate::timestamp::Rfc3339(first).to_string(),
            last: crate::timestamp::Rfc3339(last).to_string(),
        });
    }
    if grid.len < 2 {
        return Err(DataError::TooShort {
            detail: format!(
                "from {} to {}",
                crate::timestamp::Rfc3339(first),
                crate::timestamp::Rfc3339(last)
            ),
        });
    }
    let hold = config.hold_limit.micros();
    let half_window = config
        .screening
        .half_window_observations(config.sample_time, median_spacing(&table.times));
    let transform = transform_of(config);
    let p = config.inputs.len();
    let mut inputs = Array2::from_elem((grid.len, p), f64::NAN);
    let mut input_status = Array2::from_elem((grid.len, p), CellStatus::NoData);
    let mut tags = Vec::with_capacity(p + 1);
    for (j, spec) in config.inputs.iter().enumerate() {
        let column = &mut table.columns[j];
        let out_of_range = screen::apply_range(column, spec.range);
        let mut series = resample::resample(&table.times, column, &grid, hold);
        tags.push(screen_tag(
            spec,
            "input",
            column,
            out_of_range,
            &mut series,
            config,
            &grid,
            Transform::Identity,
            half_window,
        ));
        inputs
            .column_mut(j)
            .assign(&ndarray::ArrayView1::from(&series.values));
        input_status
            .column_mut(j)
            .assign(&ndarray::ArrayView1::from(&series.status));
        table.columns[j].values = Vec::new(); // free raw memory as soon as a tag is done
    }
    let target_spec = &config.target.spec;
    let (series, target_audit, lab) = if analyzer {
        let column = &mut table.columns[p];
        let out_of_range = screen::apply_range(column, target_spec.range);
        let mut series = resample::resample(&table.times, column, &grid, hold);
        let audit = screen_tag(
            target_spec,
            "target",
            column,
            out_of_range,
            &mut series,
            config,
            &grid,
            transform,
            half_window,
        );
        let shift = config.target.dead_time.whole_steps(config.sample_time) as usize;
        (target::remove_dead_time(series, shift), audit, None)
    } else {
        let lab_spec = config
            .target
            .lab
            .as_ref()
            .ok_or_else(|| DataError::TooShort {
                detail: "lab settings missing".into(),
            })?;
        let mut samples = if lab_in_data {
            let column =
                std::mem::replace(&mut table.columns[p], RawColumn::empty(&target_spec.tag));
            target::LabSamples::from_data_column(&table.times, column)
        } else {
            target::read_lab_files(lab_spec, &target_spec.tag)?
        };
        let below_limit = samples.column.below_limit();
        let used = target::resolve_below_limit(&mut samples.column, lab_spec.below_limit);
        let out_of_range = screen::apply_range(&mut samples.column, target_spec.range);
        let (series, placed) = target::place_lab(&samples, lab_spec.delay.micros(), &grid);
        let mut audit =
            TagAudit::for_lab(target_spec, &samples, out_of_range, &series, &placed, &grid);
        (audit.below_limit, audit.below_limit_used) = (below_limit, used);
        let files = samples.files.clone();
        (series, audit, Some((placed, files)))
    };
    tags.push(target_audit);
    let (target_model, target_status, outside) = target::apply_transform(&series, transform);
    if let Some(last) = tags.last_mut() {
        last.outside_transform = outside;
    }
    let mut dataset = Dataset {
        grid,
        input_tags: config.inputs.clone(),
        inputs,
        input_status,
        target: series.values,
        target_model,
        target_status,
        transform,
        reading_cycle: 1,
    };
    if analyzer {
        dataset.reading_cycle = dataset.target_update_samples().unwrap_or(1);
    }
    let (lab, lab_files) = lab.unzip();
    let audit = Audit::new(
        config,
        &table,
        &dataset,
        tags,
        lab,
        lab_files.unwrap_or_default(),
    );
    Ok(Prepared { dataset, audit })
}

/// Times that lie within a day of each other between 1970-01-01 05:33 and 22:13 are spreadsheet
/// serial dates (days since 1899-12-30: 20,000 is 1954, 80,000 is 2119) read as epoch seconds.
fn looks_like_serial_dates(first: Micros, last: Micros) -> bool {
    const SECOND: i64 = 1_000_000;
    (20_000 * SECOND..=80_000 * SECOND).contains(&first) && last - first < 86_400 * SECOND
}

/// The step of the decimal grid the values were written on (10^−d for the fewest decimals d ≤ 9
/// that write them all), or a relative 1e-12 of their size when no such grid fits; `None` for no
/// values. Samples at most 10,000 of them.
fn export_resolution(values: impl Iterator<Item = f64>) -> Option<f64> {
    let sample: Vec<f64> = values.take(10_000).collect();
    let size = sample.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    if sample.is_empty() {
        return None;
    }
    for d in 0..=9 {
        let scale = 10f64.powi(d);
        if sample.iter().all(|v| {
            ((v * scale).round() - v * scale).abs() <= 1e-6 * (1.0 + (v * scale).abs() * 1e-9)
        }) {
            return Some(1.0 / scale);
        }
    }
    Some(1e-12 * size.max(1e-300))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// 46082.5 is 2026-03-01 12:00 as a spreadsheet serial date (days since 1899-12-30;
    /// Python: `datetime(1899, 12, 30) + timedelta(days=46082.5)`).
    #[test]
    fn spreadsheet_serial_dates_are_recognised() {
        let s = 1_000_000;
        assert!(looks_like_serial_dates(46_082 * s, 46_082 * s + 2 * s));
        // A simulation's counter of seconds from 0, and real epoch times, are not.
        assert!(!looks_like_serial_dates(0, 3_600 * s));
        assert!(!looks_like_serial_dates(
            1_772_323_200 * s,
            1_772_409_600 * s
        ));
    }

    fn dataset(target: &[f64], reading_cycle: usize) -> Dataset {
        let n = target.len();
        Dataset {
            grid: Grid::spanning(0, 60_000_000 * (n as i64 - 1), 60_000_000),
            input_tags: Vec::new(),
            inputs: Array2::zeros((n, 0)),
            input_status: Array2::from_elem((n, 0), CellStatus::Valid),
            target: target.to_vec(),
            target_model: target.iter().map(|v| v * 10.0).collect(),
            target_status: target
                .iter()
                .map(|v| {
                    if v.is_finite() {
                        CellStatus::Valid
                    } else {
                        CellStatus::NoData
                    }
                })
                .collect(),
            transform: Transform::Identity,
            reading_cycle,
        }
    }

    /// Readings every 5 samples of a noisy process, exported interpolated (4 decimals), are
    /// recognised with their cycle; the same readings held, the continuous process itself, and
    /// a noise-free first-order response (smooth, so often nearly straight) are not.
    #[test]
    fn an_interpolated_analyzer_export_is_recognised() {
        let n = 3000;
        let mut rng = crate::test_support::Lcg(11);
        let mut noise = move || 0.5 * rng.next();
        let mut process = vec![0.0; n];
        let mut smooth = vec![0.0; n];
        let (mut y, mut z, mut u) = (2.0, 2.0, 2.0);
        for k in 0..n {
            if k % 150 == 0 {
                u = 2.0 + 2.0 * noise();
            }
            y = 0.95 * y + 0.05 * u + 0.01 * noise();
            z = 0.97 * z + 0.03 * u;
            process[k] = y;
            smooth[k] = z;
        }
        let round = |v: f64| (v * 1e4).round() / 1e4;
        let cycle = 5;
        let interpolated: Vec<f64> = (0..n)
            .map(|k| {
                let (a, b) = (k / cycle * cycle, (k / cycle + 1) * cycle);
                let t = (k - a) as f64 / cycle as f64;
                let next = process.get(b).copied().unwrap_or(process[a]);
                round(process[a] + t * (next - process[a]))
            })
            .collect();
        assert_eq!(
            dataset(&interpolated, 1).target_interpolated_samples(),
            Some(5)
        );
        let held: Vec<f64> = (0..n).map(|k| round(process[k / cycle * cycle])).collect();
        assert_eq!(dataset(&held, 1).target_interpolated_samples(), None);
        let continuous: Vec<f64> = process.iter().map(|v| round(*v)).collect();
        assert_eq!(dataset(&continuous, 1).target_interpolated_samples(), None);
        let smooth: Vec<f64> = smooth.iter().map(|v| round(*v)).collect();
        assert_eq!(dataset(&smooth, 1).target_interpolated_samples(), None);
    }

    #[test]
    fn the_export_resolution_is_the_decimal_grid() {
        assert_eq!(export_resolution([1.25, 3.5, 0.75].into_iter()), Some(0.01));
        assert_eq!(export_resolution([12.0, 7.0].into_iter()), Some(1.0));
        let r = export_resolution([1.0 / 3.0, 2.0].into_iter()).expect("some");
        assert!(r < 1e-9, "{r}");
        assert_eq!(export_resolution(std::iter::empty()), None);
    }

    /// An analyzer read every third sample: its cycle is found, the held repeats are dropped, a
    /// gap starts a new reading, and a steady value reported again a cycle later is kept.
    #[test]
    fn held_analyzer_readings_leave_the_fresh_ones() {
        let nan = f64::NAN;
        let target = [
            1.0, 1.0, 1.0, 2.0, 2.0, 2.0, 2.0, 2.0, 2.0, 2.0, 3.0, nan, 3.0, 3.0, 4.0, 4.0, 4.0,
        ];
        let mut ds = dataset(&target, 1);
        assert_eq!(ds.target_update_samples(), Some(3));
        ds.reading_cycle = 3;
        let fresh = ds.fresh_target_model();
        let kept: Vec<usize> = (0..target.len())
            .filter(|&k| fresh[k].is_finite())
            .collect();
        assert_eq!(kept, vec![0, 3, 6, 9, 10, 12, 14]);
        assert_eq!(fresh[6], 20.0, "model-domain values");
        ds.reading_cycle = 1;
        let every = ds.fresh_target_model();
        assert_eq!(every.iter().filter(|v| v.is_finite()).count(), 16);
    }
}
