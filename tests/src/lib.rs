//! Cross-crate checks for regimix live in `tests/tests/`; this library only locates the
//! workspace for them.

use std::path::PathBuf;

/// The workspace root (the folder holding `demo-data/`).
pub fn workspace_root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .map(PathBuf::from)
        .unwrap_or_default()
}
