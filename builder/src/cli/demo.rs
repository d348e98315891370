//! `regimix demo [--out DIR]`: the whole job on the bundled demo plant (C-301, invented).

use std::path::Path;

use regimix_builder::output::write_atomic;

/// The demo plant's files, embedded so the command works from any folder.
const FILES: [(&str, &[u8]); 4] = [
    ("c301.yaml", include_bytes!("../../../demo-data/c301.yaml")),
    (
        "c301-export-1.csv",
        include_bytes!("../../../demo-data/c301-export-1.csv"),
    ),
    (
        "c301-export-2.csv",
        include_bytes!("../../../demo-data/c301-export-2.csv"),
    ),
    (
        "c301-lab.csv",
        include_bytes!("../../../demo-data/c301-lab.csv"),
    ),
];

/// Writes the demo data into `out/demo-data`, builds the model into `out`, says where things are.
pub fn run(out: &Path, quiet: bool) -> anyhow::Result<()> {
    let data = out.join("demo-data");
    std::fs::create_dir_all(&data)
        .map_err(|e| anyhow::anyhow!("cannot create {}: {e}", data.display()))?;
    for (name, bytes) in FILES {
        write_atomic(&data.join(name), bytes)?;
    }
    if !quiet {
        eprintln!("demo plant C-301 (invented benzene–toluene splitter): estimating the distillate's toluene impurity");
    }
    super::build::run(&data.join("c301.yaml"), out, quiet)?;
    super::print_out(&(format!("report: {}", out.join("report.html").display()) + "\n"))?;
    super::print_out(
        &(format!(
            "model:  {} (inspect it with `regimix inspect`)",
            out.join("model.rgmx").display()
        ) + "\n"),
    )?;
    Ok(())
}
