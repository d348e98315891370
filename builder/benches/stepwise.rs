//! Stepwise structure selection: 20 inputs × 30 lags (600 candidates), c = 6, N = 200,000, both
//! cores (target < 30 s). `cargo bench -p regimix-builder --bench stepwise`
#![allow(missing_docs)] // criterion_group! generates undocumented items

use criterion::{criterion_group, criterion_main, Criterion};
use regimix_builder::identify::design::Regressors;
use regimix_builder::identify::stepwise::{select, StructureParams};

/// Seeded data: 20 random-step inputs, a target driven by three of them with dead times,
/// six regimes' memberships from a slow scheduling signal.
pub fn problem(n: usize) -> (Vec<Vec<f64>>, Vec<f64>, Vec<Vec<f64>>) {
    let mut state = 99u64;
    let mut uniform = move || {
        state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    let inputs: Vec<Vec<f64>> = (0..20)
        .map(|_| {
            let mut level = 0.0;
            (0..n)
                .map(|k| {
                    if k % 23 == 0 {
                        level = uniform() - 0.5;
                    }
                    level
                })
                .collect()
        })
        .collect();
    let mut y = vec![0.0; n];
    for k in 12..n {
        y[k] = 0.8 * y[k - 1] + 0.3 * inputs[0][k - 3] + 0.2 * inputs[5][k - 7]
            - 0.1 * inputs[9][k - 11]
            + 0.01 * (uniform() - 0.5);
    }
    let weights: Vec<Vec<f64>> = (0..6)
        .map(|i| {
            (0..n)
                .map(|k| {
                    let s = ((k as f64) / 5000.0).sin() * 3.0;
                    let d: Vec<f64> = (0..6)
                        .map(|j| (s - (j as f64 - 2.5)).powi(2).max(1e-9))
                        .collect();
                    (1.0 / d[i]) / d.iter().map(|v| 1.0 / v).sum::<f64>()
                })
                .collect()
        })
        .collect();
    (inputs, y, weights)
}

fn stepwise(c: &mut Criterion) {
    let (inputs, y, weights) = problem(200_000);
    let params = StructureParams::new(vec![29; 20], 0);
    let mut group = c.benchmark_group("stepwise");
    group.sample_size(10);
    group.bench_function("600 candidates, c=6, N=200000", |b| {
        b.iter(|| select(&params, &weights, Regressors::new(&inputs, &y), &y).expect("select"))
    });
    group.finish();
}

criterion_group!(benches, stepwise);
criterion_main!(benches);
