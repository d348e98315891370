//! Writes the demo plant's CSV files: `demo-plant [OUT_DIR]` (default: `demo-data`).

fn main() -> std::process::ExitCode {
    let out = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "demo-data".to_string());
    match regimix_demo_plant::write_files(std::path::Path::new(&out)) {
        Ok(files) => {
            for f in files {
                println!("wrote {}", f.display());
            }
            std::process::ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("demo-plant: {e}");
            std::process::ExitCode::from(2)
        }
    }
}
