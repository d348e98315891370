//! Writing output files atomically: write a temporary file beside the target, flush it to disk,
//! then rename it over the target. A failure at any point leaves an existing file untouched.

use std::io::Write;
use std::path::{Path, PathBuf};

/// Why an output could not be written.
#[derive(Debug, thiserror::Error)]
#[error("cannot write {path}: {cause}")]
pub struct OutputError {
    /// The file being written.
    pub path: PathBuf,
    /// The OS error.
    pub cause: std::io::Error,
}

/// Writes `bytes` to `path` atomically (temporary file + rename in the same folder).
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), OutputError> {
    let err = |cause| OutputError {
        path: path.to_path_buf(),
        cause,
    };
    let folder = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let temp = folder.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        let mut file = std::fs::File::create(&temp)?;
        file.write_all(bytes)?;
        file.sync_all()?;
        std::fs::rename(&temp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&temp);
    }
    result.map_err(err)
}

/// Writes several files into `dir` so that either all are replaced or none: every file goes to a
/// temporary name first; only when all are written are they renamed into place.
pub fn write_all_atomic(dir: &Path, files: &[(&str, &[u8])]) -> Result<(), OutputError> {
    let err = |path: PathBuf| move |cause| OutputError { path, cause };
    std::fs::create_dir_all(dir).map_err(err(dir.to_path_buf()))?;
    let mut temps = Vec::with_capacity(files.len());
    for (name, bytes) in files {
        let temp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
        let result = (|| {
            let mut f = std::fs::File::create(&temp)?;
            f.write_all(bytes)?;
            f.sync_all()
        })();
        if let Err(cause) = result {
            let _ = std::fs::remove_file(&temp);
            for (t, _) in &temps {
                let _ = std::fs::remove_file(t);
            }
            return Err(OutputError {
                path: dir.join(name),
                cause,
            });
        }
        temps.push((temp, dir.join(name)));
    }
    for (temp, path) in &temps {
        std::fs::rename(temp, path).map_err(err(path.clone()))?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn replaces_the_file_and_leaves_no_temporary() {
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("out.csv");
        write_atomic(&path, b"one").expect("write");
        write_atomic(&path, b"two").expect("write");
        assert_eq!(std::fs::read(&path).expect("read"), b"two");
        assert_eq!(std::fs::read_dir(dir.path()).expect("dir").count(), 1);
    }

    #[test]
    fn failure_keeps_the_old_file() {
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("missing-folder").join("out.csv");
        assert!(write_atomic(&path, b"x").is_err());
    }
}
