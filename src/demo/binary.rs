//! The demo's files in the formats planners receive — GeoTIFF and GeoPackage through GDAL,
//! NetCDF-CF through [`super::netcdf3`] — as bytes, the same for every run.

use gdal::raster::Buffer;
use gdal::vector::{Feature, FieldDefn, LayerAccess, LayerOptions, OGRFieldType, ToGdal};
use gdal::DriverManager;
use geo::{LineString, MultiPolygon, Polygon};
use std::path::Path;

/// A polygon with text properties: `((key, value)…, ring of (lon, lat))`.
pub(crate) type PropertyPolygon = (Vec<(String, String)>, Vec<(f64, f64)>);

/// Distinguishes temporary folders of concurrent generations within one process.
static COUNTER: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);

/// The bytes of the file GDAL wrote at `path` in a fresh temporary folder.
fn via_temp(
    file: &str,
    write: impl FnOnce(&Path) -> gdal::errors::Result<()>,
) -> std::io::Result<Vec<u8>> {
    let dir = std::env::temp_dir().join(format!(
        "driftplan-demo-{}-{}",
        std::process::id(),
        COUNTER.fetch_add(1, std::sync::atomic::Ordering::Relaxed)
    ));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir)?;
    let path = dir.join(file);
    let result = write(&path)
        .map_err(|e| std::io::Error::other(format!("GDAL could not write the demo's {file}: {e}")))
        .and_then(|()| std::fs::read(&path));
    let _ = std::fs::remove_dir_all(&dir);
    result
}

/// A Float32 GeoTIFF in EPSG:4326 whose pixel centres are `lon0 + i·step`, `lat_top − j·step`
/// (`values` row-major from the north, `NaN` = nodata −9999).
pub(crate) fn geotiff(
    lon0: f64,
    lat_top: f64,
    step: f64,
    (nx, ny): (usize, usize),
    values: &[f64],
) -> std::io::Result<Vec<u8>> {
    crate::grid::crs::quiet_gdal();
    via_temp("layer.tif", |path| {
        let mem = DriverManager::get_driver_by_name("MEM")?;
        let mut ds = mem.create_with_band_type::<f32, _>("", nx, ny, 1)?;
        ds.set_geo_transform(&[
            lon0 - 0.5 * step,
            step,
            0.0,
            lat_top + 0.5 * step,
            0.0,
            -step,
        ])?;
        ds.set_spatial_ref(&gdal::spatial_ref::SpatialRef::from_epsg(4326)?)?;
        let mut band = ds.rasterband(1)?;
        band.set_no_data_value(Some(-9999.0))?;
        let data: Vec<f32> = values
            .iter()
            .map(|v| if v.is_finite() { *v as f32 } else { -9999.0 })
            .collect();
        band.write((0, 0), (nx, ny), &mut Buffer::new((nx, ny), data))?;
        let gtiff = DriverManager::get_driver_by_name("GTiff")?;
        ds.create_copy(&gtiff, path, &Default::default())?;
        Ok(())
    })
}

/// A GeoPackage layer `name` in EPSG:4326 of polygons with text properties `(key, value)`.
pub(crate) fn geopackage(name: &str, features: &[PropertyPolygon]) -> std::io::Result<Vec<u8>> {
    crate::grid::crs::quiet_gdal();
    via_temp("layer.gpkg", |path| {
        // A fixed last-change date keeps the file the same on every run.
        gdal::config::set_config_option("OGR_CURRENT_DATE", "2000-01-01T00:00:00.000Z")?;
        let driver = DriverManager::get_driver_by_name("GPKG")?;
        let mut ds = driver.create_vector_only(path)?;
        let mut srs = gdal::spatial_ref::SpatialRef::from_epsg(4326)?;
        srs.set_axis_mapping_strategy(gdal::spatial_ref::AxisMappingStrategy::TraditionalGisOrder);
        let layer = ds.create_layer(LayerOptions {
            name,
            srs: Some(&srs),
            ty: gdal::vector::OGRwkbGeometryType::wkbMultiPolygon,
            options: None,
        })?;
        if let Some((props, _)) = features.first() {
            for (k, _) in props {
                FieldDefn::new(k, OGRFieldType::OFTString)?.add_to_layer(&layer)?;
            }
        }
        for (props, ring) in features {
            let mut f = Feature::new(layer.defn())?;
            let poly = Polygon::new(LineString::from(ring.clone()), vec![]);
            f.set_geometry(MultiPolygon(vec![poly]).to_gdal()?)?;
            for (k, (_, v)) in props.iter().enumerate() {
                f.set_field_string(k, v)?;
            }
            f.create(&layer)?;
        }
        ds.close()?;
        Ok(())
    })
}
