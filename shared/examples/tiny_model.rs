//! Writes the tiny example model of `docs/model-format.md` and prints its hex dump:
//! `cargo run -p regimix-format --features encode --example tiny_model -- docs/examples/tiny-model.rgmx`

use regimix_format::encode::{InputSpec, ModelSpec, RegimeSpec};
use regimix_format::transform::Transform;
use regimix_format::{InputSettings, Regressor, Source, TargetSettings};

/// One input (TI-1, °C), two regimes, a static consequent on the current input.
pub fn tiny_model() -> ModelSpec {
    ModelSpec {
        builder_version: "0.1.0".into(),
        target_tag: "X".into(),
        target_unit: "%".into(),
        sample_time: 60.0,
        transform: Transform::Identity,
        target: TargetSettings {
            full_scale: 1.0,
            low: -1000.0,
            high: 1000.0,
            fuzziness: 2.0,
            domain_threshold: 0.05,
            residual_sd: 1.0,
            bias_gain: 0.5,
            bias_limit: 10.0,
            outlier_k: 3.0,
        },
        hold_limit: 2,
        lab_window: 4,
        inputs: vec![InputSpec {
            tag: "TI-1".into(),
            unit: "degC".into(),
            settings: InputSettings {
                low: 0.0,
                high: 200.0,
                mean: 100.0,
                std: 10.0,
            },
        }],
        regressors: vec![Regressor {
            source: Source::Input(0),
            lag: 0,
        }],
        antecedent: vec![0],
        regimes: vec![
            RegimeSpec {
                center: vec![-1.0],
                factor: vec![1.0],
                eta: 1.0,
                offset: 1.0,
                coefficients: vec![0.5],
            },
            RegimeSpec {
                center: vec![1.0],
                factor: vec![1.0],
                eta: 1.0,
                offset: -2.0,
                coefficients: vec![0.25],
            },
        ],
    }
}

/// Sixteen bytes per line: offset, hex bytes.
pub fn hex_dump(bytes: &[u8]) -> String {
    let mut out = String::new();
    for (i, line) in bytes.chunks(16).enumerate() {
        let hex: Vec<String> = line.iter().map(|b| format!("{b:02x}")).collect();
        out.push_str(&format!("{:04x}  {}\n", i * 16, hex.join(" ")));
    }
    out
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let bytes = tiny_model().to_bytes()?;
    if let Some(path) = std::env::args().nth(1) {
        std::fs::write(path, &bytes)?;
    }
    print!("{}", hex_dump(&bytes));
    Ok(())
}
