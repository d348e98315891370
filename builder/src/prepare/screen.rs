//! Screening of grid series: valid ranges, frozen sensors, spikes.

use super::historian::{Observation, RawColumn};
use super::resample::GridSeries;
use super::CellStatus;

/// Marks raw values outside `[low, high]` as out of range; returns how many.
pub fn apply_range(column: &mut RawColumn, range: Option<(f64, f64)>) -> usize {
    let Some((low, high)) = range else { return 0 };
    let mut count = 0;
    for (value, kind) in column.values.iter_mut().zip(column.kinds.iter_mut()) {
        if *kind == Observation::Value && !(low..=high).contains(value) {
            *kind = Observation::OutOfRange;
            *value = f64::NAN;
            count += 1;
        }
    }
    count
}

/// A run of grid cells where a tag did not change.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub struct Stretch {
    /// First grid index.
    pub start: usize,
    /// Number of grid cells.
    pub len: usize,
}

/// Marks frozen stretches: runs of consecutive valid cells whose spread (max − min) stays within
/// `resolution` and that last longer than `max_cells - 1` steps (i.e. first-to-last time exceeds
/// the frozen-after span). Returns the stretches found.
pub fn mark_frozen(series: &mut GridSeries, resolution: f64, frozen_steps: usize) -> Vec<Stretch> {
    let n = series.values.len();
    let mut stretches = Vec::new();
    let mut k = 0;
    while k < n {
        if series.status[k] != CellStatus::Valid {
            k += 1;
            continue;
        }
        let (mut lo, mut hi) = (series.values[k], series.values[k]);
        let mut end = k + 1;
        while end < n && series.status[end] == CellStatus::Valid {
            let v = series.values[end];
            let (nlo, nhi) = (lo.min(v), hi.max(v));
            if nhi - nlo > resolution {
                break;
            }
            lo = nlo;
            hi = nhi;
            end += 1;
        }
        let len = end - k;
        if len - 1 > frozen_steps {
            for cell in k..end {
                series.status[cell] = CellStatus::Frozen;
                series.values[cell] = f64::NAN;
            }
            stretches.push(Stretch { start: k, len });
        }
        k = end;
    }
    stretches
}

/// Consistency constant of the MAD for normally distributed data, 1/Φ⁻¹(3/4).
pub const MAD_SCALE: f64 = 1.482_602_218_505_602;

fn median(buf: &mut [f64]) -> f64 {
    let n = buf.len();
    let mid = n / 2;
    let (_, upper, _) = buf.select_nth_unstable_by(mid, f64::total_cmp);
    let upper = *upper;
    if n % 2 == 1 {
        upper
    } else {
        let lower = buf[..mid].iter().copied().fold(f64::NEG_INFINITY, f64::max);
        0.5 * (lower + upper)
    }
}

/// Rolling median and robust scale (MAD × 1.4826) of the valid values in a centred window of
/// `2·half + 1` cells, truncated at the ends; `NaN` where the window has no valid value.
pub fn hampel_statistics(values: &[f64], half: usize) -> (Vec<f64>, Vec<f64>) {
    let n = values.len();
    let mut medians = vec![f64::NAN; n];
    let mut scales = vec![f64::NAN; n];
    let mut window = Vec::with_capacity(2 * half + 1);
    let mut deviations = Vec::with_capacity(2 * half + 1);
    for k in 0..n {
        let lo = k.saturating_sub(half);
        let hi = (k + half + 1).min(n);
        window.clear();
        window.extend(values[lo..hi].iter().copied().filter(|v| !v.is_nan()));
        if window.is_empty() {
            continue;
        }
        let m = median(&mut window);
        deviations.clear();
        deviations.extend(window.iter().map(|v| (v - m).abs()));
        medians[k] = m;
        scales[k] = MAD_SCALE * median(&mut deviations);
    }
    (medians, scales)
}

/// Hampel filter: marks valid cells farther than `threshold` robust standard deviations from
/// the window median as spikes. The scale never goes below `floor` (the tag's resolution), so
/// quantized signals in a flat window are not flagged for one step. Returns the count.
pub fn mark_spikes(series: &mut GridSeries, half: usize, threshold: f64, floor: f64) -> usize {
    mark_spikes_with_floor(series, half, threshold, |_| floor)
}

/// [`mark_spikes`] with a scale floor that depends on the window median (used when screening
/// in a transformed domain, where a fixed resolution in units maps to a level-dependent floor).
///
/// A value held over several cells (an analyzer between cycles, a historian's sample-and-hold)
/// is one observation: the filter runs over runs of equal consecutive valid values, and a flagged
/// run is removed whole. On data that changes every sample this is the plain Hampel filter.
pub fn mark_spikes_with_floor(
    series: &mut GridSeries,
    half: usize,
    threshold: f64,
    floor: impl Fn(f64) -> f64,
) -> usize {
    let n = series.values.len();
    // Runs of equal consecutive valid values: (first cell, one past the last cell).
    let mut runs: Vec<(usize, usize)> = Vec::new();
    let mut observations: Vec<f64> = Vec::new();
    let mut k = 0;
    while k < n {
        if series.status[k] != CellStatus::Valid {
            observations.push(f64::NAN); // invalid cells keep windows from reaching across gaps
            runs.push((k, k));
            k += 1;
            continue;
        }
        let start = k;
        let value = series.values[k];
        while k < n && series.status[k] == CellStatus::Valid && series.values[k] == value {
            k += 1;
        }
        runs.push((start, k));
        observations.push(value);
    }
    let (medians, scales) = hampel_statistics(&observations, half);
    let mut count = 0;
    for (r, &(start, end)) in runs.iter().enumerate() {
        let x = observations[r];
        if x.is_nan() {
            continue;
        }
        let scale = scales[r].max(floor(medians[r]));
        if (x - medians[r]).abs() > threshold * scale {
            for cell in start..end {
                series.status[cell] = CellStatus::Spike;
                series.values[cell] = f64::NAN;
            }
            count += end - start;
        }
    }
    count
}

#[cfg(test)]
mod tests {
    use super::*;

    fn series(values: &[f64]) -> GridSeries {
        GridSeries {
            values: values.to_vec(),
            status: values
                .iter()
                .map(|v| {
                    if v.is_nan() {
                        CellStatus::NoData
                    } else {
                        CellStatus::Valid
                    }
                })
                .collect(),
        }
    }

    #[test]
    fn range_marks_values_outside() {
        let mut c = RawColumn {
            name: "x".into(),
            values: vec![1.0, 5.0, -1.0],
            kinds: vec![Observation::Value; 3],
            markers: Default::default(),
        };
        assert_eq!(apply_range(&mut c, Some((0.0, 4.0))), 2);
        assert_eq!(c.kinds[1], Observation::OutOfRange);
        assert_eq!(apply_range(&mut c, None), 0);
    }

    #[test]
    fn frozen_needs_longer_than_the_limit() {
        // 5 equal cells span 4 steps: frozen if the limit is 3 steps, not if it is 4.
        let values = [1.0, 2.0, 2.0, 2.0, 2.0, 2.0, 3.0];
        let mut s = series(&values);
        assert!(mark_frozen(&mut s, 0.0, 4).is_empty());
        let found = mark_frozen(&mut s, 0.0, 3);
        assert_eq!(found, vec![Stretch { start: 1, len: 5 }]);
        assert_eq!(s.status[1], CellStatus::Frozen);
        assert_eq!(s.status[6], CellStatus::Valid);
    }

    #[test]
    fn frozen_uses_resolution_and_stops_at_gaps() {
        let mut s = series(&[1.0, 1.004, 0.998, f64::NAN, 1.0, 1.0]);
        assert_eq!(
            mark_frozen(&mut s, 0.01, 1),
            vec![Stretch { start: 0, len: 3 }]
        );
        assert_eq!(s.status[4], CellStatus::Valid);
    }

    #[test]
    fn median_of_even_count_averages_the_middle_pair() {
        assert_eq!(median(&mut [4.0, 1.0, 3.0, 2.0]), 2.5);
        assert_eq!(median(&mut [5.0, 1.0, 3.0]), 3.0);
    }

    #[test]
    fn hampel_flags_an_isolated_spike_only() {
        let mut values: Vec<f64> = (0..40).map(|k| (k as f64 * 0.3).sin()).collect();
        values[20] += 10.0;
        let mut s = series(&values);
        assert_eq!(mark_spikes(&mut s, 5, 4.0, 0.0), 1);
        assert_eq!(s.status[20], CellStatus::Spike);
    }

    #[test]
    fn held_values_count_once() {
        // An analyzer holding each reading for 5 cells: a window of 7 runs sees 7 readings.
        let readings = [1.0, 1.02, 0.98, 1.01, 0.99, 5.0, 1.0, 1.03, 0.97, 1.0, 1.01];
        let values: Vec<f64> = readings.iter().flat_map(|&r| [r; 5]).collect();
        let mut s = series(&values);
        assert_eq!(mark_spikes(&mut s, 3, 5.0, 0.0), 5);
        assert!(s.status[25..30].iter().all(|c| *c == CellStatus::Spike));
        assert_eq!(s.status[24], CellStatus::Valid);
    }

    #[test]
    fn hampel_floor_protects_quantized_steps() {
        let mut s = series(&[1.0, 1.0, 1.0, 1.0, 1.1, 1.0, 1.0, 1.0]);
        assert_eq!(mark_spikes(&mut s.clone(), 3, 4.0, 0.0), 1);
        assert_eq!(mark_spikes(&mut s, 3, 4.0, 0.1), 0);
    }
}
