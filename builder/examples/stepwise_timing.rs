//! One timed run of the stepwise benchmark's problem (see benches/stepwise.rs):
//! `cargo run --release -p regimix-builder --example stepwise_timing`

#[path = "../benches/stepwise.rs"]
#[allow(dead_code, unused_imports)]
mod bench;

fn main() {
    let (inputs, y, weights) = bench::problem(200_000);
    let params = regimix_builder::identify::stepwise::StructureParams::new(vec![29; 20], 0);
    let start = std::time::Instant::now();
    let sel = regimix_builder::identify::stepwise::select(
        &params,
        &weights,
        regimix_builder::identify::design::Regressors::new(&inputs, &y),
        &y,
    );
    println!(
        "{:.2} s; {:?}",
        start.elapsed().as_secs_f64(),
        sel.map(|s| s.terms)
    );
}
