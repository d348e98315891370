//! Runs `step` on the benchmark model (`benches/support/model.rs`) in a plain loop, for timing
//! without criterion and for counting instructions deterministically:
//!
//! ```sh
//! cargo run --release -p regimix-runtime --example step_loop -- f64 1000000
//! valgrind --tool=callgrind target/release/examples/step_loop f64 1000   # then with 2000:
//! # instructions per step = (refs at 2000 − refs at 1000) / 10000  (10 rounds × 1000 steps)
//! ```
//!
//! Prints the best of ten rounds in ns per step.
#![allow(missing_docs)]

use regimix_runtime::{state_words_for, Estimator, ModelView, Real};

#[path = "../benches/support/model.rs"]
mod support;

fn run<T: Real>(view: ModelView<'_>, steps: usize) -> f64 {
    let mut state = vec![T::ZERO; state_words_for::<T>(&view)];
    let Ok(mut estimator) = Estimator::new(view, &mut state) else {
        return f64::NAN;
    };
    let inputs = support::INPUTS.map(T::from_f64);
    let mut best = f64::INFINITY;
    for _ in 0..10 {
        let start = std::time::Instant::now();
        for _ in 0..steps {
            std::hint::black_box(estimator.step(std::hint::black_box(&inputs)));
        }
        best = best.min(start.elapsed().as_secs_f64() * 1e9 / steps.max(1) as f64);
    }
    best
}

fn main() {
    if let Err(e) = try_main() {
        eprintln!("step_loop: {e}");
        std::process::exit(2);
    }
}

fn try_main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let float = args.get(1).map_or("f64", String::as_str);
    let steps: usize = args.get(2).map_or(Ok(1_000_000), |s| s.parse())?;
    let bytes = support::model();
    let view = ModelView::parse(&bytes)?;
    let ns = match float {
        "f64" => run::<f64>(view, steps),
        "f32" => run::<f32>(view, steps),
        other => return Err(format!("expected f64 or f32, got {other}").into()),
    };
    println!("{float}: {ns:.1} ns per step (best of 10 rounds of {steps})");
    Ok(())
}
