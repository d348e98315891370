//! Times Gustafson–Kessel and fuzzy c-means iterations on a raw data file, for the side-by-side
//! comparison in `scripts/bench/compare_clustering.py`.
//!
//! `cargo run --release -p regimix-builder --example gk_timing -- FILE N D C ITERATIONS`
//! FILE holds N·D little-endian f64 values, row-major. Prints one JSON object.

use std::time::Instant;

use regimix_builder::regimes::init::kmeans_plus_plus;
use regimix_builder::regimes::kernel::{pass, Columns, Norm};
use regimix_builder::regimes::{data_scale, fuzzy_c_means, gk_step, GkState, RegimeParams, Start};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    if args.len() != 6 {
        return Err("usage: gk_timing FILE N D C ITERATIONS".into());
    }
    let bytes = std::fs::read(&args[1])?;
    let (n, d, c, iterations): (usize, usize, usize, usize) = (
        args[2].parse()?,
        args[3].parse()?,
        args[4].parse()?,
        args[5].parse()?,
    );
    if bytes.len() != n * d * 8 {
        return Err(format!(
            "{} holds {} bytes, expected {}",
            args[1],
            bytes.len(),
            n * d * 8
        )
        .into());
    }
    let rows: Vec<f64> = bytes
        .chunks_exact(8)
        .map(|b| f64::from_le_bytes([b[0], b[1], b[2], b[3], b[4], b[5], b[6], b[7]]))
        .collect();
    let data = Columns::from_rows(&rows, d);
    drop(rows);
    let mut params = RegimeParams::new(c);
    params.restarts = 1;
    let scale = data_scale(&data, &params)?;
    let centers = kmeans_plus_plus(&data, c, 1);

    // Fuzzy c-means iterations (Euclidean pass).
    let mut u = vec![0.0; n * c];
    let norms: Vec<Norm> = centers.iter().cloned().map(Norm::euclidean).collect();
    let start = Instant::now();
    for _ in 0..iterations {
        pass(&data, &norms, 2.0, &mut u, &centers, true);
    }
    let fcm_seconds = start.elapsed().as_secs_f64() / iterations as f64;

    let fcm = fuzzy_c_means(&data, c, 2.0, Start::Centers(centers), 1e-3, 5);
    let mut state = GkState {
        centers: fcm.centers,
        fuzzy_covariances: fcm.fuzzy_covariances,
        memberships: fcm.memberships,
    };
    let start = Instant::now();
    for _ in 0..iterations {
        gk_step(&data, &mut state, &params, scale)?;
    }
    let gk_seconds = start.elapsed().as_secs_f64() / iterations as f64;
    println!(
        "{{\"n\": {n}, \"d\": {d}, \"c\": {c}, \"threads\": {}, \"gk_seconds_per_iteration\": {gk_seconds}, \"fcm_seconds_per_iteration\": {fcm_seconds}}}",
        rayon::current_num_threads()
    );
    Ok(())
}
