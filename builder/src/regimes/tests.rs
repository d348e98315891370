use super::antecedent::Antecedent;
use super::kernel::Columns;
use super::validity::{choose_count, sweep};
use super::*;

use crate::test_support::Lcg;

/// A static, continuous piecewise-linear process y(x) on [0, len(slopes)] with one regime per
/// unit interval, sampled with small noise; product space (x, y), scaled.
fn piecewise_process(n: usize, slopes: &[f64]) -> Columns {
    let mut rng = Lcg(5);
    let mut rows = Vec::with_capacity(2 * n);
    let span = slopes.len() as f64;
    for _ in 0..n {
        let x = span / 2.0 * (1.0 + rng.next());
        let mut y = 0.0;
        for (i, s) in slopes.iter().enumerate() {
            y += s * (x - i as f64).clamp(0.0, 1.0);
        }
        rows.extend([x, y + 0.02 * rng.next()]);
    }
    let scaling = scaling::Scaling::fit(&rows, 2);
    for row in rows.chunks_exact_mut(2) {
        scaling.apply(row);
    }
    Columns::from_rows(&rows, 2)
}

/// Three regimes of slopes 1, −2 and 3.
fn three_regime_process(n: usize) -> Columns {
    piecewise_process(n, &[1.0, -2.0, 3.0])
}

#[test]
fn automatic_count_finds_three_regimes() {
    let data = three_regime_process(3000);
    let params = RegimeParams::new(2);
    let table = sweep(&data, 2..=6, &params).expect("sweep");
    let validity: Vec<validity::Validity> = table.into_iter().map(|(_, v)| v).collect();
    for v in &validity {
        eprintln!(
            "c={} PC={:.3} PE={:.3} XB={:.4} FHV={:.4} PD={:.1} APD={:.1} AWCD={:.3}",
            v.count,
            v.partition_coefficient,
            v.partition_entropy,
            v.xie_beni,
            v.fuzzy_hypervolume,
            v.partition_density,
            v.average_partition_density,
            v.average_within_distance
        );
    }
    assert_eq!(choose_count(&validity), Some(3));
}

#[test]
fn automatic_count_finds_four_regimes() {
    let data = piecewise_process(4000, &[1.0, -2.0, 3.0, -1.0]);
    let table = sweep(&data, 2..=6, &RegimeParams::new(2)).expect("sweep");
    let validity: Vec<validity::Validity> = table.into_iter().map(|(_, v)| v).collect();
    let fhv: Vec<f64> = validity.iter().map(|v| v.fuzzy_hypervolume).collect();
    assert_eq!(
        choose_count(&validity),
        Some(4),
        "FHV by count 2..=6: {fhv:?}"
    );
}

#[test]
fn same_seed_gives_identical_partition() {
    let data = three_regime_process(1500);
    let params = RegimeParams::new(3);
    let a = cluster(&data, &params).expect("cluster");
    let b = cluster(&data, &params).expect("cluster");
    assert_eq!(a, b);
    let mut other = params.clone();
    other.seed = 99;
    other.restarts = 1;
    let c = cluster(&data, &other).expect("cluster");
    assert!(c.converged);
}

#[test]
fn memberships_are_a_fuzzy_partition() {
    let data = three_regime_process(900);
    let p = cluster(&data, &RegimeParams::new(3)).expect("cluster");
    for k in 0..p.len() {
        let row = p.row(k);
        let s: f64 = row.iter().sum();
        assert!((s - 1.0).abs() < 1e-12);
        assert!(row.iter().all(|u| (0.0..=1.0).contains(u)));
    }
    assert!(
        p.objective_history
            .windows(2)
            .all(|w| w[1] <= w[0] * (1.0 + 1e-9)),
        "GK objective must not increase"
    );
}

#[test]
fn collinear_variables_do_not_break_clustering() {
    // Two temperatures that move together exactly, plus a third: singular without regularization.
    let mut rng = Lcg(11);
    let mut rows = Vec::new();
    for k in 0..1200 {
        let level = if k % 2 == 0 { -1.0 } else { 1.0 } + 0.1 * rng.next();
        rows.extend([level, 2.0 * level, 0.3 * rng.next()]);
    }
    let data = Columns::from_rows(&rows, 3);
    let mut params = RegimeParams::new(2);
    params.regularization.shrinkage = 0.0;
    params.regularization.max_condition = 1e8;
    let p = cluster(&data, &params).expect("the eigenvalue cap must keep covariances regular");
    let mut centers: Vec<f64> = p.centers.iter().map(|c| c[0]).collect();
    centers.sort_by(f64::total_cmp);
    assert!(
        (centers[0] + 1.0).abs() < 0.05 && (centers[1] - 1.0).abs() < 0.05,
        "{centers:?}"
    );
}

#[test]
fn parameter_rules_are_checked_up_front() {
    let data = three_regime_process(100);
    let mut p = RegimeParams::new(1);
    assert_eq!(cluster(&data, &p), Err(RegimeError::TooFewRegimes(1)));
    p.count = 3;
    p.fuzziness = 1.0;
    assert_eq!(cluster(&data, &p), Err(RegimeError::Fuzziness(1.0)));
    p.fuzziness = 2.0;
    p.regularization.shrinkage = 1.5;
    assert_eq!(cluster(&data, &p), Err(RegimeError::Shrinkage(1.5)));
    p.regularization.shrinkage = 0.0;
    p.volumes = Some(vec![1.0, -1.0, 1.0]);
    assert_eq!(
        cluster(&data, &p),
        Err(RegimeError::Volumes { expected: 3 })
    );
    p.volumes = None;
    p.count = 8;
    assert!(matches!(
        cluster(&data, &p),
        Err(RegimeError::TooFewRows { needed: 120, .. })
    ));
    let nan = Columns::from_rows(&[0.0, f64::NAN, 1.0, 2.0], 1);
    let mut tiny = RegimeParams::new(2);
    tiny.count = 2;
    assert!(matches!(
        tiny.check(4, 1),
        Err(RegimeError::TooFewRows { .. })
    ));
    assert!(matches!(
        check_data(&nan),
        Err(RegimeError::NonFinite { row: 1, column: 0 })
    ));
    let constant = Columns::from_rows(&[1.0, 1.0, 1.0], 1);
    assert_eq!(
        check_data(&constant),
        Err(RegimeError::Constant { column: 0 })
    );
}

#[test]
fn antecedent_projection_flags_samples_outside_the_trained_domain() {
    let data = three_regime_process(3000);
    let p = cluster(&data, &RegimeParams::new(3)).expect("cluster");
    let ante = Antecedent::project(&p, &data, &[0], None, 0.01).expect("project");
    // Inside the training range: typical; the memberships sum to one.
    let inside = ante.evaluate(&[0.0]);
    assert!((inside.memberships.iter().sum::<f64>() - 1.0).abs() < 1e-12);
    let top = inside.typicality.iter().copied().fold(0.0, f64::max);
    assert!(
        top > ante.domain_threshold,
        "{top} vs {}",
        ante.domain_threshold
    );
    // Far outside (x scaled by the training std: 20 standard deviations): not typical of any regime.
    let outside = ante.evaluate(&[20.0]);
    let top = outside.typicality.iter().copied().fold(0.0, f64::max);
    assert!(
        top < ante.domain_threshold,
        "{top} vs {}",
        ante.domain_threshold
    );
    // About 1 % of training rows fall below the threshold by construction.
    assert!(ante.domain_threshold > 0.0 && ante.domain_threshold < 0.5);
}

/// Two operating points along five correlated variables (a throughput and what follows it),
/// padded with `noise` independent variables, scaled: like a plant with two production rates
/// and many tags that only carry noise.
fn two_modes_among_noise(n: usize, noise: usize) -> Columns {
    let mut rng = Lcg(11);
    let dim = 5 + noise;
    let mut rows = Vec::with_capacity(n * dim);
    for k in 0..n {
        let mode = if k % 2 == 0 { 1.0 } else { -1.0 };
        let a = mode + 0.5 * rng.next();
        rows.extend((0..5).map(|_| a + 0.5 * rng.next()));
        rows.extend((0..noise).map(|_| rng.next()));
    }
    let scaling = scaling::Scaling::fit(&rows, dim);
    for row in rows.chunks_exact_mut(dim) {
        scaling.apply(row);
    }
    Columns::from_rows(&rows, dim)
}

/// Among many uninformative variables, GK from a separating fuzzy c-means start falls onto the
/// grand mean (every membership 1/2); `cluster` then steps the shrinkage up until the two
/// operating points are found again.
#[test]
fn regimes_that_fall_onto_one_point_are_kept_apart_by_more_shrinkage() {
    let data = two_modes_among_noise(2000, 7);
    let params = RegimeParams::new(2);
    let plain = cluster_from(&data, &fcm_starts(&data, &params), &params).expect("cluster");
    assert!(
        plain.collapsed(),
        "the case this guards against: {:?}",
        plain.centers
    );
    let part = cluster(&data, &params).expect("cluster");
    assert!(!part.collapsed(), "{:?}", part.centers);
    assert!(part.shrinkage > params.regularization.shrinkage);
    assert!(SHRINKAGE_STEPS.contains(&part.shrinkage));
    // One regime on each operating point along the informative variables.
    let mut first: Vec<f64> = part.centers.iter().map(|c| c[0]).collect();
    first.sort_by(f64::total_cmp);
    assert!(first[0] < -0.5 && first[1] > 0.5, "{first:?}");
    // Where GK keeps them apart, nothing changes.
    let three = three_regime_process(600);
    let kept = cluster(&three, &RegimeParams::new(3)).expect("cluster");
    assert_eq!(kept.shrinkage, 0.01);
    let params = RegimeParams::new(3);
    let plain = cluster_from(&three, &fcm_starts(&three, &params), &params).expect("cluster");
    assert_eq!(kept, plain);
}
