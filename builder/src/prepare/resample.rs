//! Resampling raw observations onto the regular sample grid.
//!
//! A grid point takes the most recent non-empty observation at or before it, if that observation is
//! no older than the hold limit. A good value gives a valid cell; a quality marker or out-of-range
//! value gives a bad cell (a bad reading is never papered over with an older good one); anything
//! older than the hold limit gives "no data", so long gaps are never bridged.

use super::historian::{Observation, RawColumn};
use super::CellStatus;
use crate::timestamp::Micros;

/// The regular time grid: `start + k·step` for `k < len`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub struct Grid {
    /// First grid time (a whole multiple of `step` since the epoch).
    pub start: Micros,
    /// Grid spacing in microseconds.
    pub step: i64,
    /// Number of grid points.
    pub len: usize,
}

impl Grid {
    /// The grid of whole multiples of `step` between the first and last time.
    pub fn spanning(first: Micros, last: Micros, step: i64) -> Grid {
        let start =
            first.div_euclid(step) * step + if first.rem_euclid(step) == 0 { 0 } else { step };
        let end = last.div_euclid(step) * step;
        let len = if end >= start {
            ((end - start) / step + 1) as usize
        } else {
            0
        };
        Grid { start, step, len }
    }

    /// Time of grid point `k`.
    pub fn time(&self, k: usize) -> Micros {
        self.start + self.step * k as i64
    }

    /// Nearest grid index of a time, if inside the grid.
    pub fn nearest_index(&self, time: Micros) -> Option<usize> {
        let offset = time - self.start;
        let k = (offset as f64 / self.step as f64).round();
        if k < 0.0 || k >= self.len as f64 {
            None
        } else {
            Some(k as usize)
        }
    }
}

/// One tag on the grid.
#[derive(Debug, Clone, PartialEq)]
pub struct GridSeries {
    /// Values; `NaN` where the cell is not valid.
    pub values: Vec<f64>,
    /// Status of each cell.
    pub status: Vec<CellStatus>,
}

/// Resamples one column (aligned with `times`, sorted ascending) onto `grid`.
pub fn resample(times: &[Micros], column: &RawColumn, grid: &Grid, hold_limit: i64) -> GridSeries {
    let mut values = vec![f64::NAN; grid.len];
    let mut status = vec![CellStatus::NoData; grid.len];
    let mut next = 0usize;
    let mut last: Option<usize> = None;
    for k in 0..grid.len {
        let t = grid.time(k);
        while next < times.len() && times[next] <= t {
            if column.kinds[next] != Observation::Empty {
                last = Some(next);
            }
            next += 1;
        }
        let Some(i) = last else { continue };
        if t - times[i] > hold_limit {
            continue;
        }
        match column.kinds[i] {
            Observation::Value => {
                values[k] = column.values[i];
                status[k] = CellStatus::Valid;
            }
            Observation::Marker | Observation::BelowLimit => status[k] = CellStatus::Bad,
            Observation::OutOfRange => status[k] = CellStatus::OutOfRange,
            Observation::Empty => {}
        }
    }
    GridSeries { values, status }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::BTreeMap;

    fn column(kinds: &[Observation], values: &[f64]) -> RawColumn {
        RawColumn {
            name: "x".into(),
            values: values.to_vec(),
            kinds: kinds.to_vec(),
            markers: BTreeMap::new(),
        }
    }

    #[test]
    fn grid_spans_whole_multiples() {
        let g = Grid::spanning(61, 250, 60);
        assert_eq!((g.start, g.len), (120, 3));
        assert_eq!(g.time(2), 240);
        assert_eq!(Grid::spanning(120, 120, 60).len, 1);
        assert_eq!(g.nearest_index(149), Some(0));
        assert_eq!(g.nearest_index(151), Some(1));
        assert_eq!(g.nearest_index(500), None);
    }

    #[test]
    fn holds_last_value_up_to_the_limit_and_not_across_gaps() {
        use Observation::*;
        let times = [0, 60, 300, 330];
        let col = column(&[Value, Value, Marker, Value], &[1.0, 2.0, f64::NAN, 4.0]);
        let grid = Grid {
            start: 0,
            step: 60,
            len: 7,
        };
        let s = resample(&times, &col, &grid, 120);
        use CellStatus as C;
        // t=0:1, 60:2, 120:2 (age 60), 180:2 (age 120), 240: too old, 300: marker, 360: 4 (age 30)
        assert_eq!(
            s.status,
            vec![
                C::Valid,
                C::Valid,
                C::Valid,
                C::Valid,
                C::NoData,
                C::Bad,
                C::Valid
            ]
        );
        assert_eq!(s.values[3], 2.0);
        assert_eq!(s.values[6], 4.0);
    }

    #[test]
    fn empty_cells_do_not_break_the_hold() {
        use Observation::*;
        let times = [0, 60];
        let col = column(&[Value, Empty], &[5.0, f64::NAN]);
        let grid = Grid {
            start: 0,
            step: 60,
            len: 2,
        };
        let s = resample(&times, &col, &grid, 60);
        assert_eq!(s.values, vec![5.0, 5.0]);
    }
}
