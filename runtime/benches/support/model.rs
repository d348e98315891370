//! The benchmark model: 6 regimes × 12 regressors with a 6-variable antecedent over 6 inputs,
//! log-transformed target. Shared by `benches/step.rs` and `examples/step_loop.rs`.

use regimix_format::encode::{InputSpec, ModelSpec, RegimeSpec};
use regimix_format::transform::Transform;
use regimix_format::{InputSettings, Regressor, Source, TargetSettings};

/// Inputs for every step (engineering units, near the training means).
pub const INPUTS: [f64; 6] = [95.0, 101.0, 99.0, 103.0, 97.0, 100.0];

/// Encoded benchmark model.
pub fn model() -> Vec<u8> {
    let n = 6;
    let p = 6;
    let regressors: Vec<Regressor> = (0..12)
        .map(|k| Regressor {
            source: Source::Input((k % n) as u8),
            lag: (k / n * 3) as u16,
        })
        .collect();
    let regimes = (0..6)
        .map(|i| RegimeSpec {
            center: (0..p).map(|a| ((i + a) % 3) as f64 - 1.0).collect(),
            factor: (0..p)
                .flat_map(|r| (0..=r).map(move |c| if r == c { 1.0 } else { 0.1 }))
                .collect(),
            eta: 2.0,
            offset: 0.1 * i as f64,
            coefficients: (0..12).map(|k| 0.01 * (k + i) as f64).collect(),
        })
        .collect();
    ModelSpec {
        builder_version: "bench".into(),
        target_tag: "Y".into(),
        target_unit: "%".into(),
        sample_time: 60.0,
        transform: Transform::Log,
        target: TargetSettings {
            full_scale: 1.0,
            low: 1e-6,
            high: 100.0,
            fuzziness: 2.0,
            domain_threshold: 0.01,
            residual_sd: 0.1,
            bias_gain: 0.3,
            bias_limit: 1.0,
            outlier_k: 3.0,
        },
        hold_limit: 5,
        lab_window: 120,
        inputs: (0..n)
            .map(|j| InputSpec {
                tag: format!("T{j}"),
                unit: "degC".into(),
                settings: InputSettings {
                    low: 0.0,
                    high: 200.0,
                    mean: 100.0,
                    std: 10.0,
                },
            })
            .collect(),
        regressors,
        antecedent: (0..p as u16).collect(),
        regimes,
    }
    .to_bytes()
    .expect("encode")
}
