//! Reading and resampling a 1,000,000-row × 20-tag historian export (target: ≤ 5 s on one core).
//!
//! The file is generated once into Cargo's target tmp dir. Run: `cargo bench -p regimix-builder --bench ingest`.

#![allow(missing_docs)] // criterion_group! generates undocumented items

use std::fmt::Write as _;
use std::io::Write as _;
use std::path::{Path, PathBuf};

use criterion::{criterion_group, criterion_main, Criterion};
use regimix_builder::config::{Config, RawConfig};
use regimix_builder::prepare::prepare;

const ROWS: usize = 1_000_000;
const TAGS: usize = 20;

fn data_file() -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR"));
    let path = dir.join("ingest-1m-20.csv");
    if path.exists() {
        return path;
    }
    let mut file = std::io::BufWriter::new(std::fs::File::create(&path).expect("create"));
    let mut line = String::from("time");
    for j in 0..TAGS {
        write!(line, ",T{j:02}").expect("fmt");
    }
    writeln!(file, "{line}").expect("write");
    let mut state = 1u64;
    for k in 0..ROWS {
        line.clear();
        write!(line, "{}", 1_772_409_600 + 60 * k as i64).expect("fmt");
        for j in 0..TAGS {
            state = state
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1);
            let noise = (state >> 40) as f64 / (1u64 << 24) as f64;
            let v = 100.0 + 10.0 * ((k as f64) * 1e-4 * (j + 1) as f64).sin() + noise;
            write!(line, ",{v:.3}").expect("fmt");
        }
        writeln!(file, "{line}").expect("write");
    }
    file.flush().expect("flush");
    path
}

fn config(path: &Path) -> Config {
    let mut yaml = format!(
        "data: {{ files: ['{}'], timestamp: time }}\nsample-time: 1min\ntarget: {{ tag: T00, source: analyzer }}\ninputs:\n",
        path.display()
    );
    for j in 1..TAGS {
        writeln!(yaml, "  - {{ tag: T{j:02}, range: [0, 1000] }}").expect("fmt");
    }
    // At most 12 antecedent variables (the format's limit); reading covers every tag anyway.
    yaml.push_str("regimes: { variables: [T01, T02, T03, T04, T05, T06] }\n");
    RawConfig::parse(&yaml, Path::new("bench.yaml"))
        .expect("parse")
        .check(Path::new(""), Path::new("bench.yaml"))
        .expect("check")
}

fn ingest(c: &mut Criterion) {
    let path = data_file();
    let cfg = config(&path);
    let mut group = c.benchmark_group("ingest");
    group.sample_size(10);
    group.bench_function("read+resample+screen 1M rows x 20 tags", |b| {
        b.iter(|| prepare(&cfg).expect("prepare"))
    });
    group.finish();
}

criterion_group!(benches, ingest);
criterion_main!(benches);
