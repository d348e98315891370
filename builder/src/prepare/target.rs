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
    /// Rows of the data files left out as repeats of the result on the row before
    /// ([`LabSamples::from_data_column`]).
    pub held_repeats: usize,
}

impl LabSamples {
    /// Keeps the non-empty cells of a column, in order (a lab file's rows: every row is a
    /// sample, even one equal to the row before).
    pub fn from_column(times: &[Micros], column: RawColumn) -> LabSamples {
        Self::keep(times, column, &[])
    }

    /// Keeps the lab results of a column of the data files. Mostly empty, such a column holds
    /// one result per non-empty cell; but a historian that stores the lab value as a tag often
    /// exports it on every row, held until the next result. When runs of equal results on
    /// adjacent rows are the rule ([`held_repeats`]), only the first row of each run is a result:
    /// the time it appeared. A result equal to the one before it then reads as a repeat.
    pub fn from_data_column(times: &[Micros], column: RawColumn) -> LabSamples {
        let repeats = held_repeats(&column);
        Self::keep(times, column, &repeats)
    }

    fn keep(times: &[Micros], column: RawColumn, repeats: &[bool]) -> LabSamples {
        let repeated = |i: usize| repeats.get(i).copied().unwrap_or(false);
        let keep: Vec<usize> = (0..times.len())
            .filter(|&i| column.kinds[i] != Observation::Empty && !repeated(i))
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
            held_repeats: repeats.iter().filter(|r| **r).count(),
        }
    }
}

/// Per row: does it repeat the result (a value or a below-limit result) of the row before it,
/// in a column whose results are held over several rows? Held means that the median run of
/// equal results on adjacent rows is at least 2 rows; otherwise no row is a repeat (separate
/// results that happen to be equal, in a column with blank rows between results).
pub fn held_repeats(column: &RawColumn) -> Vec<bool> {
    let n = column.kinds.len();
    let result = |i: usize| {
        matches!(
            column.kinds[i],
            Observation::Value | Observation::BelowLimit
        )
    };
    let mut repeats = vec![false; n];
    let mut runs: Vec<usize> = Vec::new();
    for i in 0..n {
        if !result(i) {
            continue;
        }
        let same = i > 0
            && result(i - 1)
            && column.kinds[i] == column.kinds[i - 1]
            && column.values[i].to_bits() == column.values[i - 1].to_bits();
        if same {
            repeats[i] = true;
            if let Some(last) = runs.last_mut() {
                *last += 1;
            }
        } else {
            runs.push(1);
        }
    }
    runs.sort_unstable();
    let held = runs.get(runs.len() / 2).is_some_and(|&median| median >= 2);
    if !held {
        repeats.fill(false);
    }
    repeats
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
        any_order: true,
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
    /// Rows of the data files left out as repeats of a held result.
    pub held_repeats: usize,
}

/// Puts each lab result on the grid row nearest its sample time (stamp minus `delay`).
pub fn place_lab(samples: &LabSamples, delay: i64, grid: &Grid) -> (GridSeries, LabPlacement) {
    let mut series = GridSeries {
        values: vec![f64::NAN; grid.len],
        status: vec![CellStatus::NoData; grid.len],
    };
    let mut placement = LabPlacement {
        held_repeats: samples.held_repeats,
        ..LabPlacement::default()
    };
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

    /// A column from cells: a number is a value, `E` empty, `<x` below the limit x, text a
    /// marker.
    fn column(cells: &[&str]) -> RawColumn {
        let mut c = RawColumn::empty("lab");
        for cell in cells {
            let (value, kind) = match *cell {
                "E" => (f64::NAN, Observation::Empty),
                text if text.starts_with('<') => {
                    (text[1..].parse().expect("limit"), Observation::BelowLimit)
                }
                text => match text.parse::<f64>() {
                    Ok(v) => (v, Observation::Value),
                    Err(_) => (f64::NAN, Observation::Marker),
                },
            };
            c.values.push(value);
            c.kinds.push(kind);
        }
        c
    }

    #[test]
    fn results_held_on_every_row_are_taken_once() {
        let cells = [
            "E", "1.5", "1.5", "1.5", "2", "2", "<0.1", "<0.1", "Bad", "2", "2", "2",
        ];
        let times: Vec<Micros> = (0..cells.len() as i64).collect();
        let s = LabSamples::from_data_column(&times, column(&cells));
        // Runs of 3, 2, 2 and 3 rows (the marker ends one): each taken at its first row.
        assert_eq!(s.times, vec![1, 4, 6, 8, 9]);
        assert_eq!(s.held_repeats, 6);
        assert_eq!(s.column.values[..3], [1.5, 2.0, 0.1]);
        assert_eq!(s.column.kinds[2], Observation::BelowLimit);
        assert_eq!(s.column.kinds[3], Observation::Marker);
        // The same cells from a lab file: every row is a sample.
        assert_eq!(
            LabSamples::from_column(&times, column(&cells)).times.len(),
            11
        );
    }

    #[test]
    fn separate_results_that_happen_to_be_equal_are_kept() {
        // Blank rows between results: equal neighbours among the results are no run.
        let sparse = ["1.5", "E", "E", "1.5", "E", "2", "E", "E", "2"];
        assert!(held_repeats(&column(&sparse)).iter().all(|r| !r));
        // Results on adjacent rows, a few equal to the one before: runs are not the rule.
        let dense = ["1", "2", "2", "3", "4", "5", "5", "6"];
        assert!(held_repeats(&column(&dense)).iter().all(|r| !r));
        let times: Vec<Micros> = (0..dense.len() as i64).collect();
        let s = LabSamples::from_data_column(&times, column(&dense));
        assert_eq!((s.times.len(), s.held_repeats), (8, 0));
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
            held_repeats: 0,
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
                same_row: 1,
                held_repeats: 0
            }
        );
    }

    /// Settings for one lab file with the time in column `drawn`: `,`, UTC, year first.
    fn lab_file(path: std::path::PathBuf) -> LabSpec {
        LabSpec {
            files: vec![path],
            timestamp: TimestampColumns::One("drawn".into()),
            delimiter: b',',
            naive_offset_minutes: 0,
            decimal_comma: false,
            date_order: crate::timestamp::DateOrder::Ymd,
            long_format: None,
            delay: crate::duration::Span::from_secs(0),
            stamped_at: crate::config::LabStamp::Sample,
            below_limit: BelowLimit::Skip,
        }
    }

    /// A lab system's export sorted by sample number is not in time order: its rows are put in
    /// time order (two samples at one time keep their file order), where a data file's rows
    /// going backwards are an error.
    #[test]
    fn lab_files_may_come_in_any_order() {
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("lab.csv");
        std::fs::write(
            &path,
            "drawn,XA-1\n2026-03-02 10:00,0.3\n2026-03-02 08:00,0.1\n\
             2026-03-02 09:00,0.2\n2026-03-02 08:00,0.15\n",
        )
        .expect("write");
        let samples = read_lab_files(&lab_file(path), "XA-1").expect("read");
        let hour = 3_600_000_000;
        let eight = samples.times[0];
        assert_eq!(
            samples.times,
            vec![eight, eight + hour, eight + 2 * hour],
            "the two 08:00 samples are one row"
        );
        // The later of the two 08:00 rows in the file wins, as for duplicates in order.
        assert_eq!(samples.column.values, vec![0.15, 0.2, 0.3]);
    }

    #[test]
    fn lab_files_use_their_own_delimiter_offset_and_date_order() {
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("lab.csv");
        std::fs::write(&path, "drawn;XA-1\n02.03.2026 09:15:00;0.42\n").expect("write");
        let lab = LabSpec {
            delimiter: b';',
            naive_offset_minutes: 60,
            date_order: crate::timestamp::DateOrder::Dmy,
            ..lab_file(path)
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
