//! Rasters (GeoTIFF and any raster GDAL reads): one band as a lattice of pixel centres, its
//! nodata, scale and offset honoured, in the raster's own CRS.

use super::points::RegularLattice;
use super::LayerError;
use gdal::Dataset;
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
    crate::grid::crs::quiet_gdal();
    if !path.exists() {
        return Err(LayerError::Io {
            path: path.to_path_buf(),
            source: std::io::Error::new(std::io::ErrorKind::NotFound, "no such file"),
        });
    }
    let spec = |message: String| LayerError::Spec {
        path: path.to_path_buf(),
        message,
    };
    let ds = Dataset::open_ex(
        path,
        gdal::DatasetOptions {
            open_flags: gdal::GdalOpenFlags::GDAL_OF_RASTER,
            ..Default::default()
        },
    )
    .map_err(|e| super::vector::unreadable(path, &e.to_string()))?;
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
