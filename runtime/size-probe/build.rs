//! Puts memory.x where the cortex-m-rt linker script finds it; with feature `bench-model`,
//! writes the runtime's benchmark model for `main.rs` to include.
#[cfg(feature = "bench-model")]
#[path = "../benches/support/model.rs"]
#[allow(dead_code)] // its INPUTS are for the benchmarks
mod support;

fn main() {
    let out = std::path::PathBuf::from(std::env::var_os("OUT_DIR").expect("OUT_DIR"));
    std::fs::copy("memory.x", out.join("memory.x")).expect("copy memory.x");
    println!("cargo:rustc-link-search={}", out.display());
    println!("cargo:rerun-if-changed=memory.x");
    #[cfg(feature = "bench-model")]
    {
        std::fs::write(out.join("bench-model.rgmx"), support::model()).expect("write model");
        println!("cargo:rerun-if-changed=../benches/support/model.rs");
    }
}
