//! Times the runtime's `step` on a model file: `cargo run --release -p regimix-builder --example
//! step_timing -- MODEL [SAMPLES]`. Inputs vary around each input's training mean. Prints JSON.

use std::time::Instant;

use regimix_runtime::{state_words, Estimator, ModelView};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let path = std::env::args()
        .nth(1)
        .ok_or("usage: step_timing MODEL [SAMPLES]")?;
    let samples: usize = std::env::args()
        .nth(2)
        .map_or(Ok(1_000_000), |s| s.parse())?;
    let bytes = std::fs::read(&path)?;
    let model = ModelView::parse(&bytes)?;
    let n = model.n_inputs();
    let rows: Vec<Vec<f64>> = (0..1000)
        .map(|k| {
            (0..n)
                .map(|j| {
                    let s = model.input(j).map_or((0.0, 1.0), |s| (s.mean, s.std));
                    s.0 + 0.5 * s.1 * ((k * (j + 1)) as f64 * 0.01).sin()
                })
                .collect()
        })
        .collect();
    let mut state = vec![0.0f64; state_words(&model)];
    let mut e = Estimator::new(model, &mut state)?;
    let mut sink = 0.0;
    let start = Instant::now();
    for k in 0..samples {
        sink += e.step(&rows[k % rows.len()]).value;
    }
    let ns = start.elapsed().as_nanos() as f64 / samples as f64;
    println!("{{\"ns_per_step\": {ns}, \"samples\": {samples}, \"checksum\": {sink}}}");
    Ok(())
}
