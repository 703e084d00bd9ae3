//! Rasters (GeoTIFF and any raster GDAL reads): one band as a lattice of pixel centres, its
//! nodata, scale and offset honoured, in the raster's own CRS.

use super::points::RegularLattice;
use super::LayerError;
use gdal::{Dataset, Metadata};
use std::path::Path;

/// Extensions read as rasters (through GDAL).
pub const RASTER_EXTENSIONS: [&str; 7] = ["tif", "tiff", "img", "asc", "vrt", "nc", "grd"];

/// True when `path` names a raster file by its extension.
pub(crate) fn is_raster(path: &Path) -> bool {
    RASTER_EXTENSIONS.contains(&super::vector::ext(path).as_str())
}

/// One raster band: pixel `(i, j)` (column, row from the top) has its centre at
/// `(x0 + i·dx, y0 + j·dy)` in the raster's CRS and value `values[j·nx + i]` (`NaN`: nodata).
#[derive(Debug, Clone)]
pub(crate) struct Raster {
    /// Centre of the top-left pixel, x.
    pub x0: f64,
    /// Pixel width (positive).
    pub dx: f64,
    /// Columns.
    pub nx: usize,
    /// Centre of the top-left pixel, y.
    pub y0: f64,
    /// Pixel height (negative for the usual north-up raster).
    pub dy: f64,
    /// Rows.
    pub ny: usize,
    /// Physical values (scale and offset applied), row-major; `NaN` where nodata.
    pub values: Vec<f64>,
    /// The raster's CRS as a definition PROJ reads; `None` for WGS84 lon/lat.
    pub crs: Option<String>,
}

impl Raster {
    /// The pixel-centre lattice with nodata pixels absent, for bilinear sampling with the
    /// coastal fallback; row index = pixel index.
    pub(crate) fn lattice(&self) -> RegularLattice {
        let rows = self
            .values
            .iter()
            .enumerate()
            .map(|(k, v)| if v.is_finite() { k as u32 } else { u32::MAX })
            .collect();
        RegularLattice::from_parts(self.x0, self.dx, self.nx, self.y0, self.dy, self.ny, rows)
    }

    /// Centre of pixel `(i, j)`.
    pub(crate) fn centre(&self, i: usize, j: usize) -> [f64; 2] {
        [self.x0 + i as f64 * self.dx, self.y0 + j as f64 * self.dy]
    }
}

/// Reads band `band` (1-based) of the raster at `path`.
pub(crate) fn read(path: &Path, band: usize) -> Result<Raster, LayerError> {
    read_mean(path, &path.to_string_lossy(), &[band])
}

/// Opens `source` (a file, or a GDAL subdataset name such as `NETCDF:"f.nc":tos`) as a raster.
fn open(path: &Path, source: &str) -> Result<Dataset, LayerError> {
    crate::grid::crs::quiet_gdal();
    super::require_file(path)?;
    Dataset::open_ex(
        source,
        gdal::DatasetOptions {
            open_flags: gdal::GdalOpenFlags::GDAL_OF_RASTER,
            ..Default::default()
        },
    )
    .map_err(|e| super::vector::unreadable(path, &e.to_string()))
}

/// Kelvin units of the CF `units` attribute (UDUNITS spellings), converted to °C on reading.
fn is_kelvin(units: &str) -> bool {
    matches!(
        units.trim().to_ascii_lowercase().as_str(),
        "k" | "kelvin" | "degk" | "deg_k" | "degrees_k" | "kelvins"
    )
}

/// A NetCDF-CF variable for one year: the mean of its time steps in that year, or in the
/// `window` years centred on it (`window = 20` → year − 10 … year + 9). Packed values are
/// unpacked (`scale_factor`, `add_offset`), `_FillValue` / `missing_value` are nodata, Kelvin
/// becomes °C; 0–360 longitudes and descending latitudes come through GDAL's north-up view.
pub(crate) fn read_netcdf(
    path: &Path,
    variable: Option<&str>,
    year: i32,
    window: u32,
) -> Result<Raster, LayerError> {
    let spec = |message: String| LayerError::Spec {
        path: path.to_path_buf(),
        message,
    };
    let Some(var) = variable else {
        let ds = open(path, &path.to_string_lossy())?;
        let names: Vec<String> = ds
            .metadata_domain("SUBDATASETS")
            .unwrap_or_default()
            .iter()
            .filter(|l| l.contains("_NAME="))
            .filter_map(|l| l.rsplit(':').next().map(str::to_string))
            .collect();
        return Err(spec(format!(
            "name the NetCDF variable to read with `variable = \"…\"` (the file has: {})",
            if names.is_empty() {
                "one variable".to_string()
            } else {
                names.join(", ")
            }
        )));
    };
    let source = format!("NETCDF:\"{}\":{var}", path.display());
    let ds = open(path, &source).map_err(|_| {
        spec(format!(
            "has no variable `{var}` GDAL can read as a lat/lon grid"
        ))
    })?;
    let extra = ds.metadata_item("NETCDF_DIM_EXTRA", "").unwrap_or_default();
    let dims: Vec<&str> = extra
        .trim_matches(|c| c == '{' || c == '}')
        .split(',')
        .map(str::trim)
        .filter(|d| !d.is_empty())
        .collect();
    let time = match dims.as_slice() {
        [t] => *t,
        [] => {
            return Err(spec(format!(
                "variable `{var}` has no time axis; a NetCDF layer needs one (CF time coordinate)"
            )))
        }
        more => {
            return Err(spec(format!(
                "variable `{var}` has dimensions {more:?} besides lat/lon; driftplan reads one 2-D field per time step (select a depth level first, e.g. with `ncks -d`)"
            )))
        }
    };
    let units = ds
        .metadata_item(&format!("{time}#units"), "")
        .ok_or_else(|| {
            spec(format!(
                "time axis `{time}` has no `units` attribute (CF §4.4)"
            ))
        })?;
    let calendar = super::cf_time::Calendar::parse(
        ds.metadata_item(&format!("{time}#calendar"), "").as_deref(),
    )
    .map_err(|m| spec(format!("time axis `{time}`: {m}")))?;
    let mut values = Vec::new();
    for b in 1..=ds.raster_count() {
        let band = ds
            .rasterband(b)
            .map_err(|e| spec(format!("band {b}: {e}")))?;
        let v = band
            .metadata_item(&format!("NETCDF_DIM_{time}"), "")
            .and_then(|t| t.trim().parse::<f64>().ok())
            .ok_or_else(|| spec(format!("time step {b} has no time value")))?;
        values.push(v);
    }
    let years = super::cf_time::years(&values, &units, calendar)
        .map_err(|m| spec(format!("time axis `{time}`: {m}")))?;
    let half = window as i32 / 2;
    let (first, last) = (year - half, year - half + window as i32 - 1);
    let bands: Vec<usize> = years
        .iter()
        .enumerate()
        .filter(|(_, y)| (first..=last).contains(*y))
        .map(|(k, _)| k + 1)
        .collect();
    if bands.is_empty() {
        let (lo, hi) = (years.iter().min(), years.iter().max());
        return Err(spec(format!(
            "variable `{var}` has no time steps in {} (its time axis covers {}–{})",
            if window == 1 {
                year.to_string()
            } else {
                format!("{first}–{last}")
            },
            lo.map(|y| y.to_string()).unwrap_or_default(),
            hi.map(|y| y.to_string()).unwrap_or_default()
        )));
    }
    let kelvin = ds
        .metadata_item(&format!("{var}#units"), "")
        .is_some_and(|u| is_kelvin(&u));
    let mut r = read_mean(path, &source, &bands)?;
    if kelvin {
        for v in &mut r.values {
            *v -= 273.15;
        }
    }
    Ok(r)
}

/// The per-pixel mean of `bands` (1-based) of `source`, with nodata, scale and offset applied;
/// a pixel that is nodata in any of the bands is nodata. A raster with no CRS is taken as
/// WGS84 lon/lat (as NetCDF-CF files without a grid mapping are).
fn read_mean(path: &Path, source: &str, bands: &[usize]) -> Result<Raster, LayerError> {
    let band = bands[0];
    let mut acc: Option<Raster> = None;
    for &b in bands {
        let r = read_band(path, source, b)?;
        acc = Some(match acc {
            None => r,
            Some(mut a) => {
                for (x, y) in a.values.iter_mut().zip(&r.values) {
                    *x += y;
                }
                a
            }
        });
    }
    let mut r = acc.ok_or_else(|| LayerError::Spec {
        path: path.to_path_buf(),
        message: format!("band {band}: nothing to read"),
    })?;
    let n = bands.len() as f64;
    if n > 1.0 {
        for v in &mut r.values {
            *v /= n;
        }
    }
    Ok(r)
}

/// Band `band` (1-based) of `source` (a path or GDAL subdataset name) of the file `path`.
fn read_band(path: &Path, source: &str, band: usize) -> Result<Raster, LayerError> {
    let spec = |message: String| LayerError::Spec {
        path: path.to_path_buf(),
        message,
    };
    let ds = open(path, source)?;
    let count = ds.raster_count();
    if band == 0 || band > count {
        return Err(spec(format!(
            "has {count} band(s); `band = {band}` is not one of them (bands count from 1)"
        )));
    }
    let gt = ds
        .geo_transform()
        .map_err(|e| spec(format!("has no georeferencing (geotransform): {e}")))?;
    if gt[2] != 0.0 || gt[4] != 0.0 {
        return Err(spec(
            "is a rotated raster (its geotransform has rotation terms); warp it north-up first, e.g. with gdalwarp"
                .into(),
        ));
    }
    let (nx, ny) = ds.raster_size();
    if nx < 2 || ny < 2 {
        return Err(spec(format!(
            "is {nx} × {ny} pixels; at least 2 × 2 are needed"
        )));
    }
    let rb = ds
        .rasterband(band)
        .map_err(|e| spec(format!("band {band}: {e}")))?;
    let buf = rb
        .read_as::<f64>((0, 0), (nx, ny), (nx, ny), None)
        .map_err(|e| spec(format!("band {band} cannot be read: {e}")))?;
    let nodata = rb.no_data_value();
    let scale = rb.scale().unwrap_or(1.0);
    let offset = rb.offset().unwrap_or(0.0);
    let values = buf
        .data()
        .iter()
        .map(|&v| {
            let is_nodata = match nodata {
                Some(nd) if nd.is_nan() => v.is_nan(),
                Some(nd) => v == nd,
                None => false,
            };
            if is_nodata || !v.is_finite() {
                f64::NAN
            } else {
                v * scale + offset
            }
        })
        .collect();
    let crs = match ds.spatial_ref() {
        Ok(srs) => super::vector::srs_definition(&srs),
        Err(_) => None,
    };
    Ok(Raster {
        x0: gt[0] + 0.5 * gt[1],
        dx: gt[1],
        nx,
        y0: gt[3] + 0.5 * gt[5],
        dy: gt[5],
        ny,
        values,
        crs,
    })
}
