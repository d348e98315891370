//! The checked-in C header matches what cbindgen generates from `src/ffi.rs`.
//! Set `REGIMIX_BLESS=1` to rewrite it after changing the C interface. (cbindgen reads the source
//! file, so this runs without the `ffi` feature.)

#[test]
fn header_is_current() {
    let dir = env!("CARGO_MANIFEST_DIR");
    let config =
        cbindgen::Config::from_file(format!("{dir}/cbindgen.toml")).expect("cbindgen.toml");
    let mut generated = Vec::new();
    cbindgen::Builder::new()
        .with_config(config)
        .with_src(format!("{dir}/src/ffi.rs"))
        .generate()
        .expect("cbindgen generates the header")
        .write(&mut generated);
    let generated = String::from_utf8(generated).expect("utf-8");
    let path = format!("{dir}/include/regimix.h");
    if std::env::var_os("REGIMIX_BLESS").is_some() {
        std::fs::write(&path, &generated).expect("write header");
    }
    let committed = std::fs::read_to_string(&path).unwrap_or_default();
    assert!(
        committed == generated,
        "runtime/include/regimix.h is stale: run with REGIMIX_BLESS=1"
    );
}
