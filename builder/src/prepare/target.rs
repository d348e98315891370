//! Target alignment: analyzer dead time, lab samples onto the grid, the target transform.

use regimix_format::transform::Transform;

use super::historian::{self, FileRead, Observation, RawColumn, ReadSpec};
use super::resample::{Grid, GridSeries};
use super::CellStatus;
use crate::config::{BelowLimit, LabSpec};
use crate::error::DataError;
use crate::timestamp::Micros;

/// Shifts an analyzer series back by its dead time, so row `k` holds the process value at time
/// `k` (the analyzer reports it `shift` samples later). The last `shift` rows have no target.
pub fn remove_dead_time(mut series: GridSeries, shift: usize) -> GridSeries {
    let n = series.values.len();
    let shift = shift.min(n);
    series.values.drain(..shift);
    series.status.drain(..shift);
    series.values.resize(n, f64::NAN);
    series.status.resize(n, CellStatus::NoData);
    series
}

/// Lab results as read: one entry per non-empty cell, at the stamped time.
#[derive(Debug, Clone)]
pub struct LabSamples {
    /// Stamped times.
    pub times: Vec<Micros>,
    /// Values, kinds and marker counts.
    pub column: RawColumn,
    /// What was read from each lab file (none when the data files hold the lab values).
    pub files: Vec<FileRead>,
}

impl LabSamples {
    /// Keeps the non-empty cells of a (mostly empty) column from the data files.
    pub fn from_column(times: &[Micros], column: RawColumn) -> LabSamples {
        let keep: Vec<usize> = (0..times.len())
            .filter(|&i| column.kinds[i] != Observation::Empty)
            .collect();
        LabSamples {
            times: keep.iter().map(|&i| times[i]).collect(),
            column: RawColumn {
                name: column.name.clone(),
                values: keep.iter().map(|&i| column.values[i]).collect(),
                kinds: keep.iter().map(|&i| column.kinds[i]).collect(),
                markers: column.markers,
            },
            files: Vec::new(),
        }
    }
}

/// Reads the lab files named in the config.
pub fn read_lab_files(lab: &LabSpec, tag: &str) -> Result<LabSamples, DataError> {
    let columns = [(tag.to_string(), "target")];
    let spec = ReadSpec {
        delimiter: lab.delimiter,
        timestamp: &lab.timestamp,
        columns: &columns,
        naive_offset_minutes: lab.naive_offset_minutes,
        decimal_comma: lab.decimal_comma,
        date_order: lab.date_order,
        long_format: lab.long_format.as_ref(),
    };
    let table = historian::read_files(&lab.files, &spec).map_err(|e| e.in_section("target.lab"))?;
    let files = table.files;
    let column = table
        .columns
        .into_iter()
        .next()
        .unwrap_or_else(|| RawColumn::empty(tag));
    let mut samples = LabSamples::from_column(&table.times, column);
    samples.files = files;
    Ok(samples)
}

/// Turns below-limit results into values per `policy` (half the limit, or the limit); with
/// [`BelowLimit::Skip`] they stay bad. Returns how many became values. Runs before the range
/// check, which then treats them like any other value.
pub fn resolve_below_limit(column: &mut RawColumn, policy: BelowLimit) -> usize {
    let Some(factor) = policy.factor() else {
        return 0;
    };
    let mut used = 0;
    for (value, kind) in column.values.iter_mut().zip(column.kinds.iter_mut()) {
        if *kind == Observation::BelowLimit {
            *value *= factor;
            *kind = Observation::Value;
            used += 1;
        }
    }
    used
}

/// How lab samples landed on the grid.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, serde::Serialize)]
pub struct LabPlacement {
    /// Lab values placed on a grid row.
    pub placed: usize,
    /// Samples whose sample time falls outside the data span.
    pub outside_span: usize,
    /// Values replaced by a later value on the same grid row (the later one is kept).
    pub same_row: usize,
}

/// Puts each lab result on the grid row nearest its sample time (stamp minus `delay`).
pub fn place_lab(samples: &LabSamples, delay: i64, grid: &Grid) -> (GridSeries, LabPlacement) {
    let mut series = GridSeries {
        values: vec![f64::NAN; grid.len],
        status: vec![CellStatus::NoData; grid.len],
    };
    let mut placement = LabPlacement::default();
    for (i, &stamp) in samples.times.iter().enumerate() {
        let Some(k) = grid.nearest_index(stamp - delay) else {
            placement.outside_span += 1;
            continue;
        };
        let status = match samples.column.kinds[i] {
            Observation::Value => CellStatus::Valid,
            Observation::Marker | Observation::BelowLimit => CellStatus::Bad,
            Observation::OutOfRange => CellStatus::OutOfRange,
            Observation::Empty => continue,
        };
        if series.status[k] == CellStatus::Valid {
            if status != CellStatus::Valid {
                continue; // a later marker does not erase a value
            }
            placement.same_row += 1;
        } else if status == CellStatus::Valid {
            placement.placed += 1;
        }
        series.status[k] = status;
        series.values[k] = samples.column.values[i];
    }
    (series, placement)
}

/// Applies the transform to valid cells; cells outside its domain become invalid. Returns the
/// model-domain values, the updated status and how many cells fell outside the domain.
pub fn apply_transform(
    series: &GridSeries,
    transform: Transform,
) -> (Vec<f64>, Vec<CellStatus>, usize) {
    let mut status = series.status.clone();
    let mut outside = 0;
    let model = series
        .values
        .iter()
        .zip(status.iter_mut())
        .map(|(&v, s)| {
            if *s != CellStatus::Valid {
                return f64::NAN;
            }
            match transform.forward(v) {
                Some(z) => z,
                None => {
                    *s = CellStatus::OutsideTransform;
                    outside += 1;
                    f64::NAN
                }
            }
        })
        .collect();
    (model, status, outside)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::config::TimestampColumns;

    fn valid(values: &[f64]) -> GridSeries {
        GridSeries {
            values: values.to_vec(),
            status: vec![CellStatus::Valid; values.len()],
        }
    }

    #[test]
    fn dead_time_moves_readings_back() {
        let s = remove_dead_time(valid(&[1.0, 2.0, 3.0, 4.0]), 2);
        assert_eq!(&s.values[..2], &[3.0, 4.0]);
        assert_eq!(s.status[2], CellStatus::NoData);
        assert_eq!(
            remove_dead_time(valid(&[1.0]), 5).status,
            vec![CellStatus::NoData]
        );
    }

    #[test]
    fn lab_results_go_to_their_sample_time() {
        let grid = Grid {
            start: 0,
            step: 60,
            len: 10,
        };
        let samples = LabSamples {
            times: vec![200, 400, 430, 2000, 500],
            column: RawColumn {
                name: "lab".into(),
                values: vec![1.0, 2.0, 3.0, 9.0, f64::NAN],
                kinds: vec![
                    Observation::Value,
                    Observation::Value,
                    Observation::Value,
                    Observation::Value,
                    Observation::Marker,
                ],
                markers: Default::default(),
            },
            files: vec![],
        };
        // Stamped at result time, 2 min after sampling.
        let (s, p) = place_lab(&samples, 120, &grid);
        assert_eq!(s.values[1], 1.0); // 200-120 = 80 s → row 1
        assert_eq!(s.values[5], 3.0); // 280 and 310 s both → row 5; the later result wins
        assert_eq!(s.status[6], CellStatus::Bad); // 380 s → row 6
        assert_eq!(
            p,
            LabPlacement {
                placed: 2,
                outside_span: 1,
                same_row: 1
            }
        );
    }

    #[test]
    fn lab_files_use_their_own_delimiter_offset_and_date_order() {
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("lab.csv");
        std::fs::write(&path, "drawn;XA-1\n02.03.2026 09:15:00;0.42\n").expect("write");
        let lab = LabSpec {
            files: vec![path],
            timestamp: TimestampColumns::One("drawn".into()),
            delimiter: b';',
            naive_offset_minutes: 60,
            decimal_comma: false,
            date_order: crate::timestamp::DateOrder::Dmy,
            long_format: None,
            delay: crate::duration::Span::from_secs(0),
            stamped_at: crate::config::LabStamp::Sample,
            below_limit: BelowLimit::Skip,
        };
        let samples = read_lab_files(&lab, "XA-1").expect("read");
        // 09:15 at UTC+01:00 is 08:15Z: 1772439300 s since the epoch (Python's datetime).
        assert_eq!(samples.times, vec![1_772_439_300 * 1_000_000]);
        assert_eq!(samples.column.values, vec![0.42]);

        // The same file read with the data's `,`: the hint to set the delimiter says where.
        let lab = LabSpec {
            delimiter: b',',
            ..lab
        };
        let err = read_lab_files(&lab, "XA-1")
            .expect_err("wrong delimiter")
            .to_string();
        assert!(err.contains("set `delimiter: \";\"`"), "{err}");
        assert!(
            err.ends_with("(these files' settings go under `target.lab`)"),
            "{err}"
        );
        // Errors with nothing to set get no such note.
        let lab = LabSpec {
            delimiter: b';',
            files: vec![dir.path().join("missing.csv")],
            ..lab
        };
        let err = read_lab_files(&lab, "XA-1")
            .expect_err("no file")
            .to_string();
        assert!(!err.contains("target.lab"), "{err}");
    }

    #[test]
    fn transform_invalidates_values_outside_its_domain() {
        let (z, status, outside) = apply_transform(&valid(&[1.0, 0.0, -2.0]), Transform::Log);
        assert_eq!(z[0], 0.0);
        assert_eq!(outside, 2);
        assert_eq!(status[1], CellStatus::OutsideTransform);
    }
}
