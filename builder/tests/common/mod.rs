//! Helpers shared by the builder's integration tests.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// Minutes since 2026-03-02T00:00:00Z as `YYYY-MM-DD HH:MM:SS`.
pub fn stamp(minute: usize) -> String {
    let day = 2 + minute / 1440;
    let m = minute % 1440;
    format!("2026-03-{day:02} {:02}:{:02}:00", m / 60, m % 60)
}

/// The unit tests' pseudo-random generator, for test data.
#[path = "../../src/test_support.rs"]
mod test_support;
#[allow(unused_imports)] // not every test file draws test data
pub use test_support::Lcg;

/// Writes `text` to `dir/name`, returning the path.
pub fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, text).expect("write test file");
    path
}

/// Runs the `regimix` binary with `args` in `dir`.
pub fn regimix(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_regimix"))
        .args(args)
        .current_dir(dir)
        .env("RUST_BACKTRACE", "1")
        .output()
        .expect("run regimix")
}

/// Asserts a failed run: exit code 2, one line on stderr containing `needle`, no panic text.
pub fn assert_clean_failure(out: &Output, needle: &str) {
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "stderr: {stderr}");
    assert!(stderr.contains(needle), "expected `{needle}` in: {stderr}");
    assert!(
        !stderr.contains("panicked")
            && !stderr.contains("Backtrace")
            && !stderr.contains("stack backtrace"),
        "{stderr}"
    );
    assert_eq!(
        stderr.trim_end().lines().count(),
        1,
        "one message expected: {stderr}"
    );
    // Each cause once: an error that shows its cause in its message and also hands it on as
    // its source printed it twice (`{:#}` prints the whole chain).
    let parts: Vec<&str> = stderr.trim_end().split(": ").collect();
    for (i, part) in parts.iter().enumerate() {
        assert!(
            part.len() < 8 || !parts[i + 1..].contains(part),
            "`{part}` repeated in: {stderr}"
        );
    }
}

/// Lists the files in `dir`, sorted.
pub fn listing(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .expect("read dir")
        .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}
