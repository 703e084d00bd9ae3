//! Export stage: the only stage that writes files. Writes `network.geojson`, `cells.geojson`,
//! `coverage.csv` and `summary.json`, each atomically (temp file, then rename).
//!
//! Builders (`network_geojson`, `cells_geojson`, `cells_csv`, `coverage_csv`, `summary_json`)
//! return text; only [`write_atomic`] and [`write_outputs`] touch the file system.

pub mod atomic;
mod columns;
pub mod connectivity;
pub(crate) mod dissolve;
mod features_table;
pub mod geojson;
pub mod gpkg;
mod rings;
pub mod run_folder;
pub mod summary;
pub mod table;
pub mod words;

pub use atomic::write_atomic;
pub use features_table::{edge_shifts_csv, features_csv};
pub use run_folder::{verify, RunFolder};
/// Above this many cells `solve` writes cells.geojson only when asked (`--cells-geojson`): at
/// ~8 KB a cell it is ~170 MB at 20 000 cells, and cells.csv holds the same values.
pub const CELLS_GEOJSON_MAX_CELLS: usize = 20_000;

pub use geojson::{cells_csv, cells_geojson, network_geojson, network_geojson_zoned};
pub use summary::{plan_hash, summary_json, RewardSummary, Summary};
pub use table::{coverage_csv, reserves_csv, reserves_csv_zoned};

use crate::grid::GridError;
use std::path::{Path, PathBuf};

/// The sentence every output carries: results support a decision, they do not make it.
pub const CAUTION: &str = "Decision support only: the network is computed from projections with large \
uncertainty; siting decisions rest with the planning authority, local law and consultation with those \
who use the sea.";

/// What "benefit" means wherever it is shown (terminal, report, README): the score that
/// max-benefit maximises ([`crate::model::robust`]).
pub const BENEFIT: &str = "benefit = weighted targets reached: each feature scores its weight times the share of its target protected (at most 1), so a half-reached target of weight 1 scores 0.5; `of N` is the score of every target reached";

/// Errors of the export stage. Each names the file or the item that could not be written.
#[derive(Debug, thiserror::Error)]
pub enum ExportError {
    /// A file or folder could not be created, written, synced or renamed.
    #[error("cannot write `{}`: {source}", path.display())]
    Io {
        /// The file or folder concerned.
        path: PathBuf,
        /// The operating system's reason.
        #[source]
        source: std::io::Error,
    },
    /// The CRS of the grid cannot be used to unproject geometry to lon/lat.
    #[error("cannot unproject {what} to WGS84 lon/lat: {source}")]
    Projection {
        /// What was being unprojected (e.g. `reserve 3`, `cell 17`).
        what: String,
        /// The grid stage's error.
        #[source]
        source: GridError,
    },
    /// A per-cell vector does not have one value per grid cell.
    #[error("{what} has {got} values but the grid has {expected} cells (expected one value per cell id)")]
    Length {
        /// Which vector (e.g. `layer `sst``, `selected`).
        what: String,
        /// Number of grid cells.
        expected: usize,
        /// Number of values given.
        got: usize,
    },
}

/// Creates `dir` (and parents) and writes each `(file name, contents)` pair into it
/// atomically, in the order given. Stops at the first failure, which names the file.
pub fn write_outputs(dir: &Path, files: &[(&str, String)]) -> Result<(), ExportError> {
    std::fs::create_dir_all(dir).map_err(|source| ExportError::Io {
        path: dir.to_path_buf(),
        source,
    })?;
    for (name, contents) in files {
        write_atomic(&dir.join(name), contents.as_bytes())?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn write_outputs_creates_nested_dir() {
        let tmp = tempfile::tempdir().unwrap();
        let dir = tmp.path().join("a/b");
        write_outputs(&dir, &[("x.txt", "one".into()), ("y.txt", "two".into())]).unwrap();
        assert_eq!(std::fs::read_to_string(dir.join("x.txt")).unwrap(), "one");
        assert_eq!(std::fs::read_to_string(dir.join("y.txt")).unwrap(), "two");
        let mut names: Vec<_> = std::fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().file_name())
            .collect();
        names.sort();
        assert_eq!(names, vec!["x.txt", "y.txt"]);
    }

    #[test]
    fn write_outputs_names_the_blocking_file() {
        let tmp = tempfile::tempdir().unwrap();
        // A regular file where the folder should be: create_dir_all must fail on it.
        let blocker = tmp.path().join("out");
        std::fs::write(&blocker, "x").unwrap();
        let err = write_outputs(&blocker, &[("a.txt", "a".into())]).unwrap_err();
        assert!(err.to_string().contains("out"), "{err}");
    }
}
