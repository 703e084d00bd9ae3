//! Shared by the fuzz targets: the input bytes as a file (driftplan's readers take paths, as
//! a run does) and a small grid over the demo region to sample onto.
#![allow(dead_code)]

use driftplan::grid::{build_grid, CrsChoice, Grid, GridSpec};
use geo::{polygon, MultiPolygon};
use std::path::Path;
use std::sync::OnceLock;

/// Calls `f` with a file holding `data`, named `input.<ext>`, in a fresh temp folder.
pub fn with_file(data: &[u8], ext: &str, f: impl FnOnce(&Path)) {
    let dir = tempfile::tempdir_in("/dev/shm")
        .or_else(|_| tempfile::tempdir())
        .expect("a temp folder");
    let path = dir.path().join(format!("input.{ext}"));
    std::fs::write(&path, data).expect("write the input");
    f(&path);
}

/// A 20 km grid over the demo region's box (about 350 cells).
pub fn grid() -> &'static Grid {
    static GRID: OnceLock<Grid> = OnceLock::new();
    GRID.get_or_init(|| {
        let region = MultiPolygon(vec![polygon![
            (x: -121.5, y: -39.5), (x: -117.0, y: -39.5), (x: -117.0, y: -34.0),
            (x: -121.5, y: -34.0), (x: -121.5, y: -39.5)
        ]]);
        let spec = GridSpec {
            cell_size_km: 20.0,
            crs: CrsChoice::Auto,
            min_sea_share: 0.1,
        };
        build_grid(&spec, &region, None).expect("the demo region's grid")
    })
}
