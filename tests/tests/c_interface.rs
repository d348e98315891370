//! The C example (runtime/examples/c/replay.c), compiled with gcc against the runtime built as a
//! static library with the `ffi` feature, reproduces the Rust replay exactly (same bits), and its
//! single-precision sensor (`--f32`) the Rust `Estimator<f32>`.

use std::path::PathBuf;
use std::process::Command;

use regimix_builder::replay::{read_inputs, replay, CsvForm};
use regimix_format::ModelView;
use regimix_runtime::{state_words_for, Estimator};
use regimix_tests::workspace_root;

fn build_static_library(root: &PathBuf) -> PathBuf {
    let target_dir = root.join("target").join("c-interface");
    let cargo = std::env::var("CARGO").unwrap_or_else(|_| "cargo".into());
    let status = Command::new(cargo)
        .current_dir(root)
        .args([
            "rustc",
            "-q",
            "-p",
            "regimix-runtime",
            "--release",
            "--features",
            "ffi,std",
            "--crate-type",
            "staticlib",
            "--target-dir",
        ])
        .arg(&target_dir)
        .status()
        .expect("run cargo");
    assert!(status.success(), "building the static library failed");
    target_dir.join("release").join("libregimix_runtime.a")
}

/// The C example compiled against the static library, in `dir`.
fn compile_example(root: &PathBuf, dir: &std::path::Path) -> PathBuf {
    let lib = build_static_library(root);
    let exe = dir.join("replay");
    let status = Command::new("gcc")
        .args(["-std=c99", "-Wall", "-Wextra", "-Werror", "-O2", "-I"])
        .arg(root.join("runtime/include"))
        .arg(root.join("runtime/examples/c/replay.c"))
        .arg(&lib)
        .args(["-lm", "-lpthread", "-ldl", "-o"])
        .arg(&exe)
        .status()
        .expect("run gcc");
    assert!(status.success(), "gcc failed");
    exe
}

/// Inputs for the tiny model sweeping both regimes, out of the domain, with a quality marker and
/// a blank; written to `dir`.
fn write_inputs(dir: &std::path::Path) -> PathBuf {
    let mut csv = String::from("time,TI-1\n");
    for k in 0..200 {
        let cell = match k {
            50 => "Bad".to_string(),
            51 => String::new(),
            120..=122 => "I/O Timeout".to_string(),
            _ => format!(
                "{}",
                80.0 + 40.0 * ((k as f64) * 0.07).sin() + if k > 180 { 90.0 } else { 0.0 }
            ),
        };
        csv.push_str(&format!(
            "2026-03-02 {:02}:{:02}:00,{cell}\n",
            k / 60,
            k % 60
        ));
    }
    let data = dir.join("inputs.csv");
    std::fs::write(&data, &csv).expect("write inputs");
    data
}

/// Runs the C example with `args` and splits its output into rows of fields.
fn run_example(exe: &PathBuf, args: &[&std::ffi::OsStr]) -> Vec<Vec<String>> {
    let out = Command::new(exe)
        .args(args)
        .output()
        .expect("run the C example");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout)
        .expect("utf-8")
        .lines()
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect()
}

#[test]
fn c_example_reproduces_the_rust_replay() {
    let root = workspace_root();
    let dir = tempfile::tempdir().expect("tempdir");
    let exe = compile_example(&root, dir.path());
    let model_path = root.join("docs/examples/tiny-model.rgmx");
    let data = write_inputs(dir.path());
    let c_rows = run_example(&exe, &[model_path.as_os_str(), data.as_os_str()]);
    let bytes = std::fs::read(&model_path).expect("model");
    let model = ModelView::parse(&bytes).expect("valid");
    let inputs = read_inputs(&data, &model, &CsvForm::default()).expect("inputs");
    let (times, rows) = (inputs.times, inputs.rows);
    let rust = replay(&bytes, &times, &rows).expect("replay");
    assert_eq!(c_rows.len(), rust.len());
    let mut flagged = 0;
    for (c, r) in c_rows.iter().zip(&rust) {
        let num = |i: usize| c[i].parse::<f64>().expect("number");
        assert_eq!(num(1).to_bits(), r.value.to_bits(), "estimate at {}", c[0]);
        assert_eq!(c[2].parse::<u16>().expect("status"), r.status);
        assert_eq!(num(3).to_bits(), r.typicality.to_bits());
        assert_eq!(c[4].parse::<u8>().expect("regime"), r.dominant + 1);
        for (i, w) in r.weights.iter().enumerate() {
            assert_eq!(num(5 + i).to_bits(), w.to_bits());
        }
        flagged += usize::from(r.status != 0);
    }
    assert!(
        flagged >= 5,
        "the replay must exercise the flags, got {flagged} flagged rows"
    );
}

#[test]
fn c_example_in_single_precision_reproduces_the_rust_f32_estimator() {
    let root = workspace_root();
    let dir = tempfile::tempdir().expect("tempdir");
    let exe = compile_example(&root, dir.path());
    let model_path = root.join("docs/examples/tiny-model.rgmx");
    let data = write_inputs(dir.path());
    let c_rows = run_example(
        &exe,
        &["--f32".as_ref(), model_path.as_os_str(), data.as_os_str()],
    );

    let bytes = std::fs::read(&model_path).expect("model");
    let model = ModelView::parse(&bytes).expect("valid");
    let inputs = read_inputs(&data, &model, &CsvForm::default()).expect("inputs");
    let mut state = vec![0.0f32; state_words_for::<f32>(&model)];
    let mut sensor = Estimator::new(model, &mut state).expect("state");
    assert_eq!(c_rows.len(), inputs.rows.len());
    let mut flagged = 0;
    for (c, row) in c_rows.iter().zip(&inputs.rows) {
        // As the C example does: parsed as a double, then rounded to a float.
        let x: Vec<f32> = row.iter().map(|&v| v as f32).collect();
        let e = sensor.step(&x);
        // 9 significant digits give back a float's bits.
        let num = |i: usize| c[i].parse::<f32>().expect("number");
        assert_eq!(num(1).to_bits(), e.value.to_bits(), "estimate at {}", c[0]);
        assert_eq!(c[2].parse::<u16>().expect("status"), e.status.0);
        assert_eq!(num(3).to_bits(), e.typicality.to_bits());
        assert_eq!(c[4].parse::<u8>().expect("regime"), e.dominant + 1);
        let weights = sensor.weights();
        assert_eq!(c.len(), 5 + weights.len());
        for (i, w) in weights.iter().enumerate() {
            assert_eq!(num(5 + i).to_bits(), w.to_bits());
        }
        flagged += usize::from(e.status.0 != 0);
    }
    assert!(flagged >= 5, "got {flagged} flagged rows");
}
