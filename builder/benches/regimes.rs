//! One Gustafson–Kessel iteration (distances, memberships and the next covariances in one data
//! pass, plus the per-regime regularization and factorization), on both cores.
//!
//! `cargo bench -p regimix-builder --bench regimes`. The headline case is N = 1,000,000, d = 8,
//! c = 6; its arithmetic bound is 2·N·c·(2d² + d) flops (see docs/benchmarks.md).
#![allow(missing_docs)] // criterion_group! generates undocumented items

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use regimix_builder::regimes::kernel::Columns;
use regimix_builder::regimes::{data_scale, fuzzy_c_means, gk_step, GkState, RegimeParams, Start};

/// Seeded mixture of `c` anisotropic Gaussian clusters in `d` dimensions, column-major.
pub fn mixture(n: usize, d: usize, c: usize, seed: u64) -> Columns {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let centers: Vec<Vec<f64>> = (0..c)
        .map(|_| (0..d).map(|_| rng.gen_range(-5.0..5.0)).collect())
        .collect();
    let scales: Vec<Vec<f64>> = (0..c)
        .map(|_| (0..d).map(|_| rng.gen_range(0.2..1.5)).collect())
        .collect();
    let mut rows = Vec::with_capacity(n * d);
    for k in 0..n {
        let i = k % c;
        for j in 0..d {
            let g: f64 = (0..4).map(|_| rng.gen::<f64>() - 0.5).sum::<f64>() * 1.7;
            rows.push(centers[i][j] + scales[i][j] * g);
        }
    }
    Columns::from_rows(&rows, d)
}

fn gk_iteration(crit: &mut Criterion) {
    let mut group = crit.benchmark_group("gk_iteration");
    group.sample_size(10);
    let grid: Vec<(usize, usize, usize)> = [10_000, 100_000, 1_000_000]
        .iter()
        .flat_map(|&n| {
            [4, 8]
                .iter()
                .flat_map(move |&d| [3, 6].iter().map(move |&c| (n, d, c)))
        })
        .collect();
    for &(n, d, c) in &grid {
        let data = mixture(n, d, c, 7);
        let mut params = RegimeParams::new(c);
        params.restarts = 1;
        let scale = data_scale(&data, &params).expect("scale");
        let centers = regimix_builder::regimes::init::kmeans_plus_plus(&data, c, 1);
        let fcm = fuzzy_c_means(&data, c, 2.0, Start::Centers(centers), 1e-3, 5);
        let start = GkState {
            centers: fcm.centers,
            fuzzy_covariances: fcm.fuzzy_covariances,
            memberships: fcm.memberships,
        };
        group.throughput(Throughput::Elements(n as u64));
        group.bench_function(
            BenchmarkId::from_parameter(format!("N={n} d={d} c={c}")),
            |b| {
                b.iter_batched_ref(
                    || start.clone(),
                    |state| gk_step(&data, state, &params, scale).expect("step"),
                    criterion::BatchSize::LargeInput,
                )
            },
        );
    }
    group.finish();
}

criterion_group!(benches, gk_iteration);
criterion_main!(benches);
