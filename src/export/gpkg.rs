//! `driftplan.gpkg`: the network and the cells as GeoPackage layers in the grid's equal-area
//! CRS (recorded in the file), optionally also in WGS84 lon/lat — one file a GIS opens quickly
//! at any grid size, with every field of cells.csv.

use super::columns::value_names;
use super::dissolve::dissolve;
use super::geojson::for_each_row;
use super::ExportError;
use crate::assess::Assessment;
use crate::features::FeatureTable;
use crate::grid::Grid;
use crate::layers::Layer;
use gdal::vector::{Feature, FieldDefn, LayerAccess, LayerOptions, OGRFieldType, ToGdal};
use gdal::DriverManager;
use geo::MultiPolygon;
use std::path::Path;

/// GeoPackages record a last-change time; a fixed one keeps the file the same for the same
/// inputs (GDAL's `OGR_CURRENT_DATE` setting).
const FIXED_DATE: &str = "2000-01-01T00:00:00.000Z";

/// What goes into the GeoPackage.
pub struct GpkgContent<'a> {
    /// The grid.
    pub grid: &'a Grid,
    /// The network's assessment (its reserves).
    pub assessment: &'a Assessment,
    /// Per-cell layers, as in cells.csv.
    pub layers: &'a [Layer],
    /// Features, as in cells.csv.
    pub features: &'a FeatureTable,
    /// Selected flag per cell.
    pub selected: &'a [bool],
    /// 1-based reserve number per cell, 0 outside the network.
    pub reserves: &'a [u32],
    /// Also write `network_wgs84` and `cells_wgs84` in EPSG:4326.
    pub wgs84: bool,
}

/// Writes `path` (a `.gpkg`) with layers `network` (one feature per reserve: `reserve`,
/// `cells`, `area_km2`, `cost`) and `cells` (`cell`, `area_km2`, `selected`, `reserve`, then
/// every layer value and feature amount) in the grid's CRS, and with `wgs84` the same in
/// EPSG:4326. Written to a temporary file in the same folder and renamed, so a reader never
/// sees half a GeoPackage.
pub fn write_gpkg(path: &Path, c: &GpkgContent<'_>) -> Result<(), ExportError> {
    let dir = path.parent().unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "driftplan.gpkg".into());
    let tmp = dir.join(format!(".{name}.tmp-{}.gpkg", std::process::id()));
    let result = write_to(&tmp, c).and_then(|()| {
        std::fs::rename(&tmp, path).map_err(|source| ExportError::Io {
            path: path.to_path_buf(),
            source,
        })
    });
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

fn gdal_err(path: &Path) -> impl Fn(gdal::errors::GdalError) -> ExportError + '_ {
    move |e| ExportError::Io {
        path: path.to_path_buf(),
        source: std::io::Error::other(e.to_string()),
    }
}

fn write_to(path: &Path, c: &GpkgContent<'_>) -> Result<(), ExportError> {
    crate::grid::crs::quiet_gdal();
    let err = gdal_err(path);
    let _ = std::fs::remove_file(path);
    gdal::config::set_config_option("OGR_CURRENT_DATE", FIXED_DATE).map_err(&err)?;
    let driver = DriverManager::get_driver_by_name("GPKG").map_err(&err)?;
    let mut ds = driver.create_vector_only(path).map_err(&err)?;
    let grid_srs =
        crate::grid::crs::spatial_ref(&c.grid.crs.definition).map_err(|m| ExportError::Io {
            path: path.to_path_buf(),
            source: std::io::Error::other(m),
        })?;
    let wgs84_srs = crate::grid::crs::spatial_ref("EPSG:4326").map_err(|m| ExportError::Io {
        path: path.to_path_buf(),
        source: std::io::Error::other(m),
    })?;
    let projector = if c.wgs84 {
        Some(crate::grid::Projector::new(&c.grid.crs).map_err(|source| {
            ExportError::Projection {
                what: "the grid".into(),
                source,
            }
        })?)
    } else {
        None
    };
    let step = c.grid.cell_size_m / 4.0;
    let to_lonlat = |mp: &MultiPolygon<f64>, what: &dyn Fn() -> String| {
        projector
            .as_ref()
            .map(|p| {
                p.polygon_to_lonlat(mp, step)
                    .map_err(|source| ExportError::Projection {
                        what: what(),
                        source,
                    })
            })
            .transpose()
    };
    let names = value_names(c.layers, c.features);
    let mut txn = ds.start_transaction().map_err(&err)?;
    for (suffix, srs, lonlat) in [("", &grid_srs, false), ("_wgs84", &wgs84_srs, true)] {
        if lonlat && !c.wgs84 {
            continue;
        }
        // network
        let layer = txn
            .create_layer(LayerOptions {
                name: &format!("network{suffix}"),
                srs: Some(srs),
                ty: gdal::vector::OGRwkbGeometryType::wkbMultiPolygon,
                options: None,
            })
            .map_err(&err)?;
        for (n, ty) in [
            ("reserve", OGRFieldType::OFTInteger),
            ("cells", OGRFieldType::OFTInteger),
            ("area_km2", OGRFieldType::OFTReal),
            ("cost", OGRFieldType::OFTReal),
        ] {
            FieldDefn::new(n, ty)
                .and_then(|f| f.add_to_layer(&layer))
                .map_err(&err)?;
        }
        for (k, r) in c.assessment.reserves.iter().enumerate() {
            let mut mp = dissolve(c.grid, &r.cells);
            if lonlat {
                if let Some(ll) = to_lonlat(&mp, &|| format!("reserve {}", k + 1))? {
                    mp = ll;
                }
            }
            let mut f = Feature::new(layer.defn()).map_err(&err)?;
            f.set_geometry(mp.to_gdal().map_err(&err)?).map_err(&err)?;
            f.set_field_integer(0, k as i32 + 1).map_err(&err)?;
            f.set_field_integer(1, r.cells.len() as i32).map_err(&err)?;
            f.set_field_double(2, r.area_km2).map_err(&err)?;
            f.set_field_double(3, r.cost).map_err(&err)?;
            f.create(&layer).map_err(&err)?;
        }
        // cells
        let layer = txn
            .create_layer(LayerOptions {
                name: &format!("cells{suffix}"),
                srs: Some(srs),
                ty: gdal::vector::OGRwkbGeometryType::wkbMultiPolygon,
                options: None,
            })
            .map_err(&err)?;
        let fixed = [
            ("cell", OGRFieldType::OFTInteger),
            ("area_km2", OGRFieldType::OFTReal),
            ("selected", OGRFieldType::OFTInteger),
            ("reserve", OGRFieldType::OFTInteger),
        ];
        for (n, ty) in fixed {
            FieldDefn::new(n, ty)
                .and_then(|f| f.add_to_layer(&layer))
                .map_err(&err)?;
        }
        for n in &names {
            FieldDefn::new(n, OGRFieldType::OFTReal)
                .and_then(|f| f.add_to_layer(&layer))
                .map_err(&err)?;
        }
        let grid = c.grid;
        for_each_row(c.layers, c.features, 0, grid.len(), |cell, values| {
            let mut mp = grid.cell_polygon(cell);
            if lonlat {
                if let Some(ll) = to_lonlat(&mp, &|| format!("cell {cell}"))? {
                    mp = ll;
                }
            }
            let i = cell as usize;
            let mut f = Feature::new(layer.defn()).map_err(&err)?;
            f.set_geometry(mp.to_gdal().map_err(&err)?).map_err(&err)?;
            f.set_field_integer(0, cell as i32).map_err(&err)?;
            f.set_field_double(1, grid.cells[i].sea_area_km2)
                .map_err(&err)?;
            f.set_field_integer(2, c.selected[i] as i32).map_err(&err)?;
            match c.reserves[i] {
                0 => f.set_field_null(3).map_err(&err)?,
                k => f.set_field_integer(3, k as i32).map_err(&err)?,
            }
            for (k, v) in values.iter().enumerate() {
                if v.is_finite() {
                    f.set_field_double(fixed.len() + k, *v).map_err(&err)?;
                } else {
                    f.set_field_null(fixed.len() + k).map_err(&err)?;
                }
            }
            f.create(&layer).map_err(&err)?;
            Ok(())
        })?;
    }
    txn.commit().map_err(&err)?;
    ds.close().map_err(&err)?;
    Ok(())
}
