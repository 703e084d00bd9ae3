//! Vector files other than GeoJSON — GeoPackage, shapefile, FlatGeobuf and whatever else GDAL's
//! vector drivers open — read into the same [`GeoFile`] form as GeoJSON, with the layer's own
//! CRS, so every sampling rule and check applies to them unchanged.

use super::geojson::{self as gj, GeoFile, RawFeature};
use super::LayerError;
use ::geojson::{GeoJson, JsonObject};
use gdal::vector::{FieldValue, LayerAccess};
use gdal::Dataset;
use std::path::Path;

/// The formats driftplan reads, for the message when a file is none of them.
pub const FORMATS: &str =
    "CSV point grids, GeoJSON, GeoPackage, shapefile, FlatGeobuf, GeoTIFF and other GDAL rasters";

/// True when the path names a GeoJSON file (parsed by driftplan itself).
pub(crate) fn is_geojson(path: &Path) -> bool {
    matches!(ext(path).as_str(), "geojson" | "json")
}

/// The lower-case extension of `path` (empty when it has none).
pub(crate) fn ext(path: &Path) -> String {
    path.extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase())
        .unwrap_or_default()
}

/// Reads a vector file: GeoJSON by driftplan's own parser, anything else through GDAL.
/// `layer` picks one layer of a multi-layer file (a GeoPackage); a file with one layer needs
/// none.
pub(crate) fn read(path: &Path, layer: Option<&str>) -> Result<GeoFile, LayerError> {
    if is_geojson(path) {
        return gj::parse_file(path);
    }
    read_ogr(path, layer)
}

/// A "not a format driftplan reads" error for `path`, with GDAL's reason.
pub(crate) fn unreadable(path: &Path, reason: &str) -> LayerError {
    LayerError::Spec {
        path: path.to_path_buf(),
        message: format!("cannot read it: not a format driftplan reads ({FORMATS}): {reason}"),
    }
}

fn read_ogr(path: &Path, layer: Option<&str>) -> Result<GeoFile, LayerError> {
    crate::grid::crs::quiet_gdal();
    super::require_file(path)?;
    let ds = Dataset::open_ex(
        path,
        gdal::DatasetOptions {
            open_flags: gdal::GdalOpenFlags::GDAL_OF_VECTOR,
            ..Default::default()
        },
    )
    .map_err(|e| unreadable(path, &e.to_string()))?;
    let spec_err = |message: String| LayerError::Spec {
        path: path.to_path_buf(),
        message,
    };
    let names: Vec<String> = ds.layers().map(|l| l.name()).collect();
    let mut lyr = match (layer, names.len()) {
        (Some(name), _) => ds.layer_by_name(name).map_err(|_| {
            spec_err(format!(
                "has no layer `{name}` (its layers: {})",
                names.join(", ")
            ))
        })?,
        (None, 1) => ds
            .layer(0)
            .map_err(|e| spec_err(format!("cannot open its layer: {e}")))?,
        (None, 0) => return Err(spec_err("has no vector layers".into())),
        (None, _) => {
            return Err(spec_err(format!(
                "has {} layers ({}); name one with `layer = \"…\"`",
                names.len(),
                names.join(", ")
            )))
        }
    };
    let crs = match lyr.spatial_ref() {
        Some(srs) => srs_definition(&srs),
        None => None,
    };
    let mut features = Vec::new();
    for (index, f) in lyr.features().enumerate() {
        let geometry = match f.geometry() {
            None => None,
            Some(g) => {
                let text = g.json().map_err(|e| LayerError::Geometry {
                    path: path.to_path_buf(),
                    feature: index,
                    message: format!("cannot convert the geometry: {e}"),
                })?;
                match text.parse::<GeoJson>() {
                    Ok(GeoJson::Geometry(g)) => Some(g.value),
                    _ => {
                        return Err(LayerError::Geometry {
                            path: path.to_path_buf(),
                            feature: index,
                            message: "the geometry is not a simple-features geometry".into(),
                        })
                    }
                }
            }
        };
        let mut properties = JsonObject::new();
        for (name, value) in f.fields() {
            let v = match value {
                None => serde_json::Value::Null,
                Some(FieldValue::IntegerValue(i)) => i.into(),
                Some(FieldValue::Integer64Value(i)) => i.into(),
                Some(FieldValue::RealValue(x)) => serde_json::Number::from_f64(x)
                    .map(serde_json::Value::Number)
                    .unwrap_or(serde_json::Value::Null),
                Some(FieldValue::StringValue(s)) => s.into(),
                Some(other) => format!("{other:?}").into(),
            };
            properties.insert(name, v);
        }
        features.push(RawFeature {
            index,
            geometry,
            properties,
        });
    }
    Ok(GeoFile {
        path: path.to_path_buf(),
        features,
        crs,
    })
}

/// A file's CRS as a definition for [`crate::grid::Projector`]: `AUTH:CODE` when it has one,
/// else its WKT; `None` for WGS84 lon/lat (EPSG:4326, CRS84), which needs no transform.
///
/// Any geographic CRS counts as lon/lat: datum shifts between WGS84 and e.g. ETRS89 or a
/// climate model's sphere are metres, far below a planning cell, and lon/lat files keep
/// their 0–360 longitudes working.
pub(crate) fn srs_definition(srs: &gdal::spatial_ref::SpatialRef) -> Option<String> {
    if srs.is_geographic() {
        return None;
    }
    let auth = match (srs.auth_name(), srs.auth_code()) {
        (Some(name), Ok(code)) => Some(format!("{name}:{code}")),
        _ => None,
    };
    match auth.as_deref() {
        Some("EPSG:4326") | Some("OGC:CRS84") => None,
        Some(a) => Some(a.to_string()),
        None => srs.to_wkt().ok(),
    }
}
