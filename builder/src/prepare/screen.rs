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

#[cfg(test)]
fn median(buf: &mut [f64]) -> f64 {
    buf.sort_by(f64::total_cmp);
    sorted_median(buf)
}

/// Median of an ascending slice (mean of the middle pair for an even count).
fn sorted_median(sorted: &[f64]) -> f64 {
    let n = sorted.len();
    let mid = n / 2;
    if n % 2 == 1 {
        sorted[mid]
    } else {
        0.5 * (sorted[mid - 1] + sorted[mid])
    }
}

/// Median absolute deviation from `m` of an ascending slice, without sorting the deviations.
///
/// The deviations form two ascending sequences — `m − x` for values below `m`, walking down, and
/// `x − m` for the rest, walking up — so the k-th smallest deviation is the k-th smallest of two
/// sorted sequences, found by binary search on how many come from the lower side.
fn sorted_mad(sorted: &[f64], m: f64) -> f64 {
    let n = sorted.len();
    let split = sorted.partition_point(|v| *v < m);
    let (na, nb) = (split, n - split);
    let a = |j: usize| m - sorted[split - 1 - j];
    let b = |j: usize| sorted[split + j] - m;
    // k-th smallest deviation, 1-based.
    let kth = |k: usize| -> f64 {
        let (mut lo, mut hi) = (k.saturating_sub(nb), k.min(na));
        while lo < hi {
            let i = (lo + hi) / 2; // i from the lower side, k - i from the upper side
            if a(i) >= b(k - i - 1) {
                hi = i;
            } else {
                lo = i + 1;
            }
        }
        let from_a = if lo > 0 { a(lo - 1) } else { f64::NEG_INFINITY };
        let from_b = if k > lo {
            b(k - lo - 1)
        } else {
            f64::NEG_INFINITY
        };
        from_a.max(from_b)
    };
    if n % 2 == 1 {
        kth(n / 2 + 1)
    } else {
        0.5 * (kth(n / 2) + kth(n / 2 + 1))
    }
}

/// Rolling median and robust scale (MAD × 1.4826) of the valid values in a centred window of
/// `2·half + 1` cells, truncated at the ends; `NaN` where the window has no valid value.
///
/// The window is kept sorted as it slides (one insertion and one removal per step), so the cost
/// per sample is a few dozen comparisons and moves rather than a selection from scratch.
pub fn hampel_statistics(values: &[f64], half: usize) -> (Vec<f64>, Vec<f64>) {
    let n = values.len();
    let mut medians = vec![f64::NAN; n];
    let mut scales = vec![f64::NAN; n];
    let mut window: Vec<f64> = Vec::with_capacity(2 * half + 2);
    let insert = |window: &mut Vec<f64>, v: f64| {
        if !v.is_nan() {
            let at = window.partition_point(|w| w.total_cmp(&v).is_lt());
            window.insert(at, v);
        }
    };
    for &v in values.iter().take(half.min(n)) {
        insert(&mut window, v);
    }
    for k in 0..n {
        if let Some(&v) = values.get(k + half) {
            insert(&mut window, v);
        }
        if k > half {
            let gone = values[k - half - 1];
            if !gone.is_nan() {
                let at = window.partition_point(|w| w.total_cmp(&gone).is_lt());
                window.remove(at);
            }
        }
        if window.is_empty() {
            continue;
        }
        let m = sorted_median(&window);
        medians[k] = m;
        scales[k] = MAD_SCALE * sorted_mad(&window, m);
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
/// run is removed whole. Invalid cells (a `Bad` now and then) inside a run, with the same value
/// on both sides, do not split it: split, a level held for many cells would count several times
/// and crowd out the other levels from the window. On data that changes every sample this is the
/// plain Hampel filter.
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
        loop {
            while k < n && series.status[k] == CellStatus::Valid && series.values[k] == value {
                k += 1;
            }
            // Invalid cells, then the same value again: the run goes on past them.
            let mut next = k;
            while next < n && series.status[next] != CellStatus::Valid {
                next += 1;
            }
            if next > k && next < n && series.values[next] == value {
                k = next;
            } else {
                break;
            }
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
        // No spread among the window's observations (a setpoint or a discrete state that sits
        // at one level most of the time) gives no scale to judge by: no verdict, rather than
        // every departure from that level a spike.
        let scale = scales[r].max(floor(medians[r]));
        if scale > 0.0 && (x - medians[r]).abs() > threshold * scale {
            for cell in start..end {
                if series.status[cell] == CellStatus::Valid {
                    series.status[cell] = CellStatus::Spike;
                    series.values[cell] = f64::NAN;
                    count += 1;
                }
            }
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

    /// The sliding statistics equal a from-scratch median and MAD of every window.
    #[test]
    fn sliding_window_equals_brute_force() {
        let mut state = 7u64;
        let values: Vec<f64> = (0..500)
            .map(|k| {
                state = state
                    .wrapping_mul(6_364_136_223_846_793_005)
                    .wrapping_add(1);
                let r = (state >> 33) as f64 / (1u64 << 31) as f64;
                if k % 37 == 5 {
                    f64::NAN
                } else {
                    ((r * 20.0).round() / 4.0) + if k % 50 == 0 { 30.0 } else { 0.0 }
                }
            })
            .collect();
        for half in [1, 2, 5, 15] {
            let (m, s) = hampel_statistics(&values, half);
            for k in 0..values.len() {
                let lo = k.saturating_sub(half);
                let hi = (k + half + 1).min(values.len());
                let mut w: Vec<f64> = values[lo..hi]
                    .iter()
                    .copied()
                    .filter(|v| !v.is_nan())
                    .collect();
                let med = median(&mut w);
                let mut dev: Vec<f64> = w.iter().map(|v| (v - med).abs()).collect();
                assert_eq!(m[k], med, "median k={k} half={half}");
                assert_eq!(s[k], MAD_SCALE * median(&mut dev), "mad k={k} half={half}");
            }
        }
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

    /// Levels held for 12 cells with an invalid cell inside every level: each level is still
    /// one observation (the window of 7 sees 7 levels and flags the one far level), and the
    /// invalid cells stay as they were.
    #[test]
    fn an_invalid_cell_inside_a_held_level_does_not_split_it() {
        let levels = [1.0, 1.02, 0.98, 1.01, 0.99, 5.0, 1.0, 1.03, 0.97, 1.0, 1.01];
        let values: Vec<f64> = levels.iter().flat_map(|&r| [r; 12]).collect();
        let mut s = series(&values);
        for level in 0..levels.len() {
            s.status[12 * level + 5] = CellStatus::Bad;
            s.values[12 * level + 5] = f64::NAN;
        }
        let (mut whole, mut split) = (s.clone(), s.clone());
        assert_eq!(mark_spikes(&mut whole, 3, 5.0, 0.0), 11);
        assert!((60..72).all(|k| whole.status[k]
            == if k == 65 {
                CellStatus::Bad
            } else {
                CellStatus::Spike
            }));
        assert_eq!(whole.status[59], CellStatus::Valid);
        // Split at every invalid cell, a window of 7 observations would hold about three
        // levels, each counted two or three times: the far level would stand out less.
        for level in 0..levels.len() {
            split.values[12 * level + 6] += 1e-9; // the value after the gap differs slightly
        }
        let flagged = mark_spikes(&mut split, 3, 5.0, 0.0);
        assert!(flagged < 11, "{flagged}");
    }

    #[test]
    fn hampel_floor_protects_quantized_steps() {
        let mut s = series(&[1.0, 1.01, 1.02, 0.99, 1.1, 0.98, 1.01, 1.0]);
        assert_eq!(mark_spikes(&mut s.clone(), 3, 4.0, 0.0), 1);
        assert_eq!(mark_spikes(&mut s, 3, 4.0, 0.1), 0);
    }

    /// A setpoint at 100 that moves to 104 for a while, again and again: its window's
    /// observations have no spread (more than half sit at 100), so no level is a spike; a
    /// signal with spread still has its spike flagged.
    #[test]
    fn a_signal_without_spread_has_no_spikes() {
        let values: Vec<f64> = (0..700)
            .map(|k| {
                if (300..420).contains(&(k % 350)) {
                    104.0
                } else {
                    100.0
                }
            })
            .collect();
        let mut s = series(&values);
        assert_eq!(mark_spikes(&mut s, 15, 5.0, 0.0), 0);
        let mut noisy: Vec<f64> = (0..200).map(|k| 100.0 + (k as f64 * 1.7).sin()).collect();
        noisy[100] = 130.0;
        let mut s = series(&noisy);
        assert_eq!(mark_spikes(&mut s, 15, 5.0, 0.0), 1);
    }
}
