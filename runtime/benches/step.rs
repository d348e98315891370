//! `step` on a model of 6 regimes × 12 regressors with a 6-variable antecedent, in f64 and f32.
//! `cargo bench -p regimix-runtime --bench step`
#![allow(missing_docs)] // criterion_group! generates undocumented items

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use regimix_runtime::{state_words, state_words_for, Estimator, ModelView};

#[path = "support/model.rs"]
mod support;
use support::{model, INPUTS};

fn step(c: &mut Criterion) {
    let bytes = model();
    let view = ModelView::parse(&bytes).expect("valid");
    let mut group = c.benchmark_group("step 6 regimes x 12 regressors, 6-D antecedent");
    let mut s64 = vec![0.0f64; state_words(&view)];
    let mut e64 = Estimator::new(view, &mut s64).expect("state");
    let x64 = INPUTS;
    group.bench_function("f64", |b| b.iter(|| e64.step(black_box(&x64))));
    let mut s32 = vec![0.0f32; state_words_for::<f32>(&view)];
    let mut e32 = Estimator::new(view, &mut s32).expect("state");
    let x32 = INPUTS.map(|x| x as f32);
    group.bench_function("f32", |b| b.iter(|| e32.step(black_box(&x32))));
    group.finish();
    eprintln!(
        "state: {} bytes in f64, {} in f32 (with its parameter copy)",
        8 * state_words(&view),
        4 * state_words_for::<f32>(&view)
    );
}

criterion_group!(benches, step);
criterion_main!(benches);
