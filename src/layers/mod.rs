//! Layers stage: reads GeoJSON polygons/points and CSV `lon,lat,value` point grids and
//! returns dense per-cell values on a [`crate::grid::Grid`].
//!
//! Takes a [`LayerSpec`] (file, sampling rule, field, CRS, valid range, missing-cell policy)
//! and a grid; returns a [`Layer`] with one value per cell id. Parsed files are shared
//! between layers through a [`SourceCache`], so the twelve columns of one CSV are parsed once.
//!
//! Geometry is done in the grid's projected equal-area CRS: inputs are reprojected with PROJ
//! on the way in (see [`crate::grid::Projector`]).

use std::path::PathBuf;

mod area;
mod cache;
mod cf_time;
mod csv;
mod geojson;
mod matrix;
mod points;
mod raster;
mod report;
mod sample;
mod validity;
mod vector;

pub use cache::SourceCache;
pub(crate) use csv::describe_error as describe_csv_error;
pub use geojson::{read_lines, read_multipolygon, read_points};
pub use matrix::read_dispersal_matrix;
pub use points::NEAREST_MAX_SPACINGS;
pub use raster::RASTER_EXTENSIONS;
pub use report::sampling_lines;
pub use sample::sample;
pub use validity::{invalidities, self_crossing, Invalidity};
pub use vector::FORMATS;

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
    /// CSV point grid: bilinear on a regular lattice (with a coastal fallback where points
    /// are absent), nearest point when the points are not one lattice.
    Interpolate,
}

impl Sampling {
    /// The name used in plan files and messages (`area-share`, `interpolate`, ...).
    pub fn name(self) -> &'static str {
        match self {
            Sampling::AreaShare => "area-share",
            Sampling::AreaMean => "area-mean",
            Sampling::PointCount => "point-count",
            Sampling::PointSum => "point-sum",
            Sampling::PointMean => "point-mean",
            Sampling::Interpolate => "interpolate",
        }
    }
}

/// What to do with cells the source does not cover.
///
/// A cell is *uncovered* when the source says nothing about it: no polygon overlaps it
/// (area samplings), no point falls in it (point samplings), or it lies outside the data
/// lattice / beyond the nearest-point distance ([`Sampling::Interpolate`]).
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
    /// Which layer of a multi-layer vector file (a GeoPackage) to read; `None` for files with
    /// one layer.
    pub layer: Option<String>,
    /// The year asked for, when the file holds a time axis (NetCDF-CF); `None` for layers
    /// that do not depend on the year.
    pub year: Option<i32>,
    /// NetCDF-CF: the mean over this many years centred on `year` (1: that year's steps).
    pub years_window: u32,
    /// CRS of the file's coordinates; `None` means the file's own CRS (a GeoPackage or
    /// shapefile layer's, a GeoJSON `crs` member), or else WGS84 lon/lat (RFC 7946).
    pub crs: Option<String>,
    /// Values outside this closed range are reported as errors.
    pub valid_range: Option<(f64, f64)>,
    /// Policy for uncovered cells.
    pub missing: Missing,
    /// Repair invalid polygons (geo's `MakeValid`, even-odd rule) instead of refusing them.
    pub repair: bool,
}

impl LayerSpec {
    /// A spec of `path` sampled by `sampling` with every other key at its plan default: no
    /// field, the file's only layer, no year, the file's own CRS, no valid range, uncovered
    /// cells an error, invalid polygons refused.
    pub fn new(path: impl Into<PathBuf>, sampling: Sampling) -> LayerSpec {
        LayerSpec {
            path: path.into(),
            sampling,
            field: None,
            layer: None,
            year: None,
            years_window: 1,
            crs: None,
            valid_range: None,
            missing: Missing::Error,
            repair: false,
        }
    }
}

/// How one point-lattice layer was sampled: the rule and the number of cells each fallback
/// served. `check`, the run header and summary.json show these, so a coastal lattice that
/// fell back to nearest point never does so silently.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct SamplingReport {
    /// Layer name (e.g. `habitat/kelp/ssp2-4.5/2050`, `sst_c/ssp1-2.6/2030`).
    pub layer: String,
    /// The file sampled.
    pub path: String,
    /// The rule in words (bilinear on a lattice of step …, or nearest point and why).
    pub method: String,
    /// Cells with all four surrounding lattice points present.
    pub bilinear: usize,
    /// Cells next to absent points (land): bilinear weights renormalised over those present.
    pub coastal: usize,
    /// Cells given the nearest present point.
    pub nearest: usize,
    /// Cells with no data near them (the layer's `missing` rule).
    pub missing: usize,
    /// Cells given the area-weighted mean of the raster pixels inside them (rasters finer
    /// than the cells).
    pub pixel_mean: usize,
}

/// Per-cell values of one layer.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Layer {
    /// Layer name as used in outputs (e.g. `cost`, `sst_ssp2-4.5_2050`).
    pub name: String,
    /// One value per cell id.
    pub values: Vec<f64>,
}

/// Errors of the layers stage. Each names the file and where in it the problem is
/// (feature index, property, CSV line and column) and the form that was expected.
#[derive(Debug, thiserror::Error)]
pub enum LayerError {
    /// The file cannot be opened or read.
    #[error("{path}: cannot read file: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The operating system's error.
        source: std::io::Error,
    },
    /// The file is not valid JSON / GeoJSON.
    #[error("{path}: line {line}, column {column}: {message} (expected a GeoJSON FeatureCollection, Feature or Geometry, RFC 7946)")]
    Json {
        /// The file.
        path: PathBuf,
        /// 1-based line serde reports.
        line: usize,
        /// 1-based column serde reports.
        column: usize,
        /// serde's message.
        message: String,
    },
    /// A geometry is of the wrong kind or has invalid coordinates or rings.
    #[error("{path}: feature {feature}: {message}")]
    Geometry {
        /// The file.
        path: PathBuf,
        /// 0-based feature index (0 for a bare Geometry).
        feature: usize,
        /// What is wrong and what was expected.
        message: String,
    },
    /// A feature property is missing or not a number.
    #[error("{path}: feature {feature}: property `{property}`: {message}")]
    Property {
        /// The file.
        path: PathBuf,
        /// 0-based feature index.
        feature: usize,
        /// The property name.
        property: String,
        /// What is wrong and what was expected.
        message: String,
    },
    /// The CSV header lacks a needed column.
    #[error("{path}: line 1 (header): {message}")]
    CsvHeader {
        /// The file.
        path: PathBuf,
        /// What is missing and what was expected.
        message: String,
    },
    /// A CSV value is unparsable, NaN or infinite, or a row is malformed.
    #[error("{path}: line {line}{}: {message}", column_part(column))]
    Csv {
        /// The file.
        path: PathBuf,
        /// 1-based line number in the file (the header is line 1).
        line: u64,
        /// The column name (or `?` when the row itself is malformed, and no column is named).
        column: String,
        /// What is wrong and what was expected.
        message: String,
    },
    /// A value lies outside the layer's `valid_range`.
    #[error("{path}: {location}: value {value} is outside the valid range [{min}, {max}]")]
    OutOfRange {
        /// The file.
        path: PathBuf,
        /// Where: `feature 3`, `line 17`, or `cell 12 (lon, lat)` for a derived value.
        location: String,
        /// The offending value.
        value: f64,
        /// Lower bound of the valid range.
        min: f64,
        /// Upper bound of the valid range.
        max: f64,
    },
    /// Some cells are not covered and the policy is [`Missing::Error`].
    #[error("{path}: {count} of {total} cells are not covered by this {sampling} layer, e.g. {examples}; fix the data or set `missing = \"zero\"`")]
    Uncovered {
        /// The file.
        path: PathBuf,
        /// How the layer was sampled.
        sampling: &'static str,
        /// Number of uncovered cells.
        count: usize,
        /// Number of cells in the grid.
        total: usize,
        /// The first few uncovered cells with their lon/lat.
        examples: String,
    },
    /// The spec is inconsistent (e.g. a needed `field` is absent, a CSV sampled as polygons).
    #[error("{path}: {message}")]
    Spec {
        /// The file.
        path: PathBuf,
        /// What is wrong and what was expected.
        message: String,
    },
    /// Polygons that break the simple-features rules (a ring crossing itself, a hole outside
    /// its exterior, overlapping parts): every one found, with its feature, part and place.
    #[error("{path}: {} invalid polygon{} (OGC simple-features rules):\n    - {}{}\n  fix them in a GIS, or set `repair_polygons = true` at the top of the plan to repair them (crossing rings are split into valid parts by the even-odd rule)", .problems.len(), if .problems.len() == 1 { "" } else { "s" }, .problems.iter().take(10).cloned().collect::<Vec<_>>().join("\n    - "), if .problems.len() > 10 { format!("\n    - … and {} more", .problems.len() - 10) } else { String::new() })]
    InvalidPolygons {
        /// The file.
        path: PathBuf,
        /// `feature F, part P: what, at (x, y)` for each problem, in file order.
        problems: Vec<String>,
    },
    /// A CRS is unknown to PROJ or a coordinate cannot be transformed.
    #[error("{path}: {source}")]
    Projection {
        /// The file.
        path: PathBuf,
        /// The grid stage's projection error.
        source: crate::grid::GridError,
    },
}

/// An [`LayerError::Io`] when `path` is a directory or does not exist, so every reader says
/// "is a directory" or "no such file" before a library tries (GDAL would open a folder of
/// shapefiles as one dataset).
pub(crate) fn require_file(path: &std::path::Path) -> Result<(), LayerError> {
    let kind = if path.is_dir() {
        std::io::Error::other("is a directory (expected a file)")
    } else if !path.exists() {
        std::io::Error::new(std::io::ErrorKind::NotFound, "no such file")
    } else {
        return Ok(());
    };
    Err(LayerError::Io {
        path: path.to_path_buf(),
        source: kind,
    })
}

/// `, column `name`` for a CSV message, or nothing when the problem is the row as a whole (`?`).
pub(crate) fn column_part(column: &str) -> String {
    if column == "?" {
        String::new()
    } else {
        format!(", column `{column}`")
    }
}
