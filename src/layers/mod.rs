//! Layers stage: reads GeoJSON polygons/points and CSV `lon,lat,value` point grids and
//! returns dense per-cell values on a [`crate::grid::Grid`].

use std::path::PathBuf;

/// How a source file becomes one value per cell.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sampling {
    /// GeoJSON polygons: share (0–1) of the cell's sea area they cover.
    AreaShare,
    /// GeoJSON polygons: area-weighted mean of a numeric attribute over the covered part.
    AreaMean,
    /// GeoJSON points: number of points in the cell.
    PointCount,
    /// GeoJSON points: sum of an attribute over points in the cell.
    PointSum,
    /// GeoJSON points: mean of an attribute over points in the cell.
    PointMean,
    /// CSV point grid: bilinear on a regular lon/lat lattice, nearest point otherwise.
    Interpolate,
}

/// What to do with cells the source does not cover.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Missing {
    /// Report them as an error (the default: never use missing data silently).
    Error,
    /// Treat them as zero (right for habitat polygons: no polygon means no habitat).
    Zero,
}

/// A fully resolved layer source (templates already filled in, path absolute).
#[derive(Debug, Clone, PartialEq)]
pub struct LayerSpec {
    /// The file to read (`.geojson`/`.json` or `.csv`).
    pub path: PathBuf,
    /// How to turn it into per-cell values.
    pub sampling: Sampling,
    /// GeoJSON property, or CSV column, that holds the value (not needed for share/count).
    pub field: Option<String>,
    /// CRS of the file's coordinates; `None` means WGS84 lon/lat (RFC 7946).
    pub crs: Option<String>,
    /// Values outside this closed range are reported as errors.
    pub valid_range: Option<(f64, f64)>,
    /// Policy for uncovered cells.
    pub missing: Missing,
}

/// Per-cell values of one layer.
#[derive(Debug, Clone, PartialEq)]
pub struct Layer {
    /// Layer name as used in outputs (e.g. `cost`, `sst_ssp2-4.5_2050`).
    pub name: String,
    /// One value per cell id.
    pub values: Vec<f64>,
}
