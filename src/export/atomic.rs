//! Atomic file writes: a reader sees either the old file or the complete new one, never a
//! half-written file, and a failed write leaves nothing behind.

use super::ExportError;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// Distinguishes temp files of concurrent writes within one process.
static COUNTER: AtomicU64 = AtomicU64::new(0);

/// Writes `bytes` to `path` atomically: into a temp file in the same folder (so the rename
/// cannot cross file systems), fsync, then rename over `path`. On any error the temp file is
/// removed and the error names `path`.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), ExportError> {
    let io = |source| ExportError::Io {
        path: path.to_path_buf(),
        source,
    };
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path.file_name().ok_or_else(|| {
        io(std::io::Error::new(
            std::io::ErrorKind::InvalidInput,
            "the path has no file name",
        ))
    })?;
    let tmp = dir.join(format!(
        ".{}.tmp-{}-{}",
        name.to_string_lossy(),
        std::process::id(),
        COUNTER.fetch_add(1, Ordering::Relaxed)
    ));
    let result = (|| {
        let mut f = std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        drop(f);
        std::fs::rename(&tmp, path)
    })();
    if let Err(e) = result {
        // Best effort: the temp file may not exist if creating it was what failed.
        let _ = std::fs::remove_file(&tmp);
        return Err(io(e));
    }
    // Make the rename itself durable; some platforms cannot open a folder, which is harmless.
    if let Ok(d) = std::fs::File::open(&dir) {
        let _ = d.sync_all();
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn entries(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn replaces_content_and_leaves_no_temp_file() {
        let tmp = tempfile::tempdir().unwrap();
        let p = tmp.path().join("summary.json");
        write_atomic(&p, b"first").unwrap();
        write_atomic(&p, b"second").unwrap();
        assert_eq!(std::fs::read(&p).unwrap(), b"second");
        assert_eq!(entries(tmp.path()), vec!["summary.json"]);
    }

    #[test]
    fn missing_dir_fails_and_names_the_path() {
        let tmp = tempfile::tempdir().unwrap();
        let p = tmp.path().join("no-such-dir/coverage.csv");
        let err = write_atomic(&p, b"x").unwrap_err();
        assert!(
            err.to_string().contains("no-such-dir/coverage.csv"),
            "{err}"
        );
        assert!(!p.exists());
        assert!(entries(tmp.path()).is_empty());
    }

    #[test]
    fn failed_rename_removes_temp_file() {
        let tmp = tempfile::tempdir().unwrap();
        // The target is a non-empty folder: rename of a file over it fails.
        let p = tmp.path().join("network.geojson");
        std::fs::create_dir(&p).unwrap();
        std::fs::write(p.join("keep"), "x").unwrap();
        assert!(write_atomic(&p, b"{}").is_err());
        assert_eq!(entries(tmp.path()), vec!["network.geojson"]);
        assert!(p.is_dir());
    }
}
