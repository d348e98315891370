//! The Hampel filter's rolling median and robust scale against pandas.
//!
//! Fixture: builder/tests/fixtures/hampel_pandas.csv, made by scripts/fixtures/hampel_pandas.py
//! with `Series.rolling(9, center=True, min_periods=1).median()` and a rolling `np.nanmedian`
//! MAD (pandas and numpy versions are on the fixture's first line).

use regimix_builder::prepare::screen::hampel_statistics;

#[test]
fn rolling_median_and_mad_match_pandas() {
    let text = include_str!("fixtures/hampel_pandas.csv");
    let mut lines = text.lines();
    let provenance = lines.next().expect("provenance line");
    assert!(provenance.starts_with("# pandas "), "{provenance}");
    assert_eq!(lines.next(), Some("value,median,scale"));
    let rows: Vec<[f64; 3]> = lines
        .map(|l| {
            let v: Vec<f64> = l.split(',').map(|c| c.parse().expect("number")).collect();
            [v[0], v[1], v[2]]
        })
        .collect();
    assert_eq!(rows.len(), 200);
    let values: Vec<f64> = rows.iter().map(|r| r[0]).collect();
    let (medians, scales) = hampel_statistics(&values, 4);
    for (k, row) in rows.iter().enumerate() {
        assert!(
            (medians[k] - row[1]).abs() < 1e-12,
            "median at {k}: {} vs {}",
            medians[k],
            row[1]
        );
        assert!(
            (scales[k] - row[2]).abs() < 1e-12,
            "scale at {k}: {} vs {}",
            scales[k],
            row[2]
        );
    }
}
