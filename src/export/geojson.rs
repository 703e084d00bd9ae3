//! GeoJSON (RFC 7946) and CSV views of a network and of every cell.
//!
//! Geometry is dissolved and measured in the grid's projected CRS, then unprojected to WGS84
//! lon/lat with densified edges (a straight projected edge is curved in lon/lat), rounded to
//! 6 decimals, oriented (exterior counter-clockwise, holes clockwise) and split at the
//! antimeridian. No `crs` member is written: RFC 7946 §4 removed it; lon/lat WGS84 is implied.

use super::columns::value_names;
use super::dissolve::dissolve;
use super::rings::{
    clean_multipolygon, push_geometry, push_num, push_prop, round6, split_antimeridian, Poly,
};
use super::{ExportError, CAUTION};
use crate::assess::zones::ZoneShare;
use crate::assess::Assessment;
use crate::features::FeatureTable;
use crate::grid::{Grid, GridError, Projector};
use crate::layers::Layer;
use geo::MultiPolygon;
use rayon::prelude::*;
use std::fmt::Write;

/// Cells per parallel work unit for per-cell outputs: large enough to amortise a PROJ
/// context per worker, small enough to balance 1M cells over a few threads.
const CHUNK: usize = 4096;

/// Densification step for unprojection: a quarter cell keeps the lon/lat outline within
/// millimetres of the projected straight edge at planning cell sizes (common practice, no source).
fn max_step_m(grid: &Grid) -> f64 {
    grid.cell_size_m / 4.0
}

/// Unprojects a projected polygon and makes it RFC 7946 ready.
fn to_rfc7946(
    projector: &Projector,
    mp: &MultiPolygon<f64>,
    step: f64,
    what: impl Fn() -> String,
) -> Result<Vec<Poly>, ExportError> {
    let ll = projector
        .polygon_to_lonlat(mp, step)
        .map_err(|source| ExportError::Projection {
            what: what(),
            source,
        })?;
    Ok(clean_multipolygon(&split_antimeridian(ll)))
}

/// One projector per rayon worker (PROJ objects are not thread-safe); the error of a
/// failed construction is re-created per use because `GridError` is not `Clone`.
fn worker_projector<'a>(
    p: &'a Result<Projector, GridError>,
    grid: &Grid,
) -> Result<&'a Projector, ExportError> {
    p.as_ref().map_err(|e| ExportError::Projection {
        what: "the grid's CRS".into(),
        source: GridError::Crs {
            definition: grid.crs.definition.clone(),
            reason: e.to_string(),
        },
    })
}

/// The `"driftplan"` foreign member (RFC 7946 §6.1 allows members beyond the spec): what wrote
/// the file and the decision-support caution.
fn push_header(out: &mut String) {
    out.push_str(r#"{"type":"FeatureCollection","driftplan":{"caution":"#);
    out.push_str(&json_str(CAUTION));
    out.push_str(r#","version":"#);
    out.push_str(&json_str(env!("CARGO_PKG_VERSION")));
    out.push_str(r#"},"features":["#);
}

fn json_str(s: &str) -> String {
    // Serialising a &str to JSON cannot fail.
    serde_json::to_string(s).unwrap_or_else(|_| "\"\"".into())
}

/// `network.geojson`: one Feature per reserve (in assessment order, `reserve` = 1-based
/// position), its cells dissolved into one Polygon or MultiPolygon in WGS84 lon/lat.
/// Properties: `reserve`, `cells` (count), `area_km2` (sea area, km²) and `cost`.
pub fn network_geojson(grid: &Grid, assessment: &Assessment) -> Result<String, ExportError> {
    check_reserves(grid, assessment)?;
    let parts: Vec<Part> = assessment
        .reserves
        .iter()
        .enumerate()
        .map(|(k, r)| {
            let mut props = String::new();
            let _ = write!(
                props,
                r#""reserve":{id},"cells":{n},"area_km2":"#,
                id = k + 1,
                n = r.cells.len()
            );
            push_num(&mut props, r.area_km2);
            props.push_str(r#","cost":"#);
            push_num(&mut props, r.cost);
            Part {
                cells: r.cells.clone(),
                properties: props,
                what: format!("reserve {}", k + 1),
            }
        })
        .collect();
    parts_geojson(grid, &parts)
}

/// `network.geojson` of a zoned network (`model::zones`): one Feature per reserve and zone —
/// the reserve's cells of that zone dissolved — in assessment order, then zone order, `id`
/// numbering the features from 1. Properties: `reserve` (1-based, as in `reserves.csv`),
/// `zone` (the zone's name, which `driftplan assess` reads back), `zone_code` (1-based, as in
/// the cells' `zone` column), `cells`, `area_km2` and `cost` of that part, and `zones`: the
/// whole reserve's make-up, `{zone name: {"cells": n, "area_km2": km²}}`.
///
/// `assignment` holds each cell's zone (0 outside, 1 + zone index) and `shares` the
/// per-reserve zone shares of `assess::zones::apply_zones` for the same network.
pub fn network_geojson_zoned(
    grid: &Grid,
    assessment: &Assessment,
    assignment: &[u8],
    shares: &[ZoneShare],
) -> Result<String, ExportError> {
    check_reserves(grid, assessment)?;
    if assignment.len() != grid.len() {
        return Err(ExportError::Length {
            what: "zone assignment".into(),
            expected: grid.len(),
            got: assignment.len(),
        });
    }
    let mut parts = Vec::new();
    for (k, r) in assessment.reserves.iter().enumerate() {
        let here: Vec<&ZoneShare> = shares.iter().filter(|z| z.reserve == Some(k + 1)).collect();
        let mut make_up = String::from("{");
        for (j, z) in here.iter().enumerate() {
            if j > 0 {
                make_up.push(',');
            }
            let _ = write!(
                make_up,
                r#"{}:{{"cells":{},"area_km2":"#,
                json_str(&z.zone),
                z.cells
            );
            push_num(&mut make_up, z.area_km2);
            make_up.push('}');
        }
        make_up.push('}');
        for z in &here {
            let cells: Vec<u32> = r
                .cells
                .iter()
                .copied()
                .filter(|&c| assignment[c as usize] == z.code)
                .collect();
            let mut props = String::new();
            let _ = write!(
                props,
                r#""reserve":{id},"zone":{name},"zone_code":{code},"cells":{n},"area_km2":"#,
                id = k + 1,
                name = json_str(&z.zone),
                code = z.code,
                n = cells.len()
            );
            push_num(&mut props, z.area_km2);
            props.push_str(r#","cost":"#);
            push_num(&mut props, z.cost);
            props.push_str(r#","zones":"#);
            props.push_str(&make_up);
            parts.push(Part {
                cells,
                properties: props,
                what: format!("reserve {}, zone `{}`", k + 1, z.zone),
            });
        }
    }
    parts_geojson(grid, &parts)
}

/// Checks every reserve's cell ids against the grid.
fn check_reserves(grid: &Grid, assessment: &Assessment) -> Result<(), ExportError> {
    for (k, r) in assessment.reserves.iter().enumerate() {
        if let Some(&bad) = r.cells.iter().find(|&&c| c as usize >= grid.len()) {
            return Err(ExportError::Length {
                what: format!("reserve {} (cell id {bad})", k + 1),
                expected: grid.len(),
                got: bad as usize + 1,
            });
        }
    }
    Ok(())
}

/// One feature of `network.geojson`: cells to dissolve and its properties (JSON members
/// without the braces).
struct Part {
    cells: Vec<u32>,
    properties: String,
    what: String,
}

/// A FeatureCollection of dissolved parts, `id` = 1-based position.
fn parts_geojson(grid: &Grid, parts: &[Part]) -> Result<String, ExportError> {
    let step = max_step_m(grid);
    let features: Vec<String> = parts
        .par_iter()
        .enumerate()
        .map_init(
            || Projector::new(&grid.crs),
            |p, (k, part)| {
                let projector = worker_projector(p, grid)?;
                let polys = to_rfc7946(projector, &dissolve(grid, &part.cells), step, || {
                    part.what.clone()
                })?;
                let mut f = String::new();
                let _ = write!(
                    f,
                    r#"{{"type":"Feature","id":{id},"properties":{{{props}}},"geometry":"#,
                    id = k + 1,
                    props = part.properties
                );
                push_geometry(&mut f, &polys);
                f.push('}');
                Ok(f)
            },
        )
        .collect::<Result<_, ExportError>>()?;
    let mut out = String::with_capacity(features.iter().map(|f| f.len() + 2).sum::<usize>() + 512);
    push_header(&mut out);
    for (i, f) in features.iter().enumerate() {
        out.push_str(if i > 0 { ",\n" } else { "\n" });
        out.push_str(f);
    }
    out.push_str("\n]}\n");
    Ok(out)
}

/// Checks every per-cell vector has one value per cell.
fn check_lengths(grid: &Grid, layers: &[Layer], selected: &[bool]) -> Result<(), ExportError> {
    let n = grid.len();
    if selected.len() != n {
        return Err(ExportError::Length {
            what: "selected".into(),
            expected: n,
            got: selected.len(),
        });
    }
    for l in layers {
        if l.values.len() != n {
            return Err(ExportError::Length {
                what: format!("layer `{}`", l.name),
                expected: n,
                got: l.values.len(),
            });
        }
    }
    Ok(())
}

/// Calls `row(cell, values)` for each cell in `lo..hi`, with `values` = each layer's value
/// then each feature's amount (0 where the feature is absent). Sparse amounts are walked with
/// one cursor per feature, so a chunk costs O(cells × columns), no dense feature matrix.
pub(crate) fn for_each_row(
    layers: &[Layer],
    features: &FeatureTable,
    lo: usize,
    hi: usize,
    mut row: impl FnMut(u32, &[f64]) -> Result<(), ExportError>,
) -> Result<(), ExportError> {
    let mut cursor: Vec<usize> = features
        .features
        .iter()
        .map(|f| f.amounts.partition_point(|a| (a.0 as usize) < lo))
        .collect();
    let mut values = vec![0.0; layers.len() + features.features.len()];
    for cell in lo..hi {
        for (v, l) in values.iter_mut().zip(layers) {
            *v = l.values[cell];
        }
        for (k, f) in features.features.iter().enumerate() {
            let v = &mut values[layers.len() + k];
            *v = 0.0;
            // Amounts are sorted by cell id (a FeatureTable invariant); duplicates add up.
            while let Some(&(c, a)) = f.amounts.get(cursor[k]) {
                if c as usize > cell {
                    break;
                }
                if c as usize == cell {
                    *v += a;
                }
                cursor[k] += 1;
            }
        }
        row(cell as u32, &values)?;
    }
    Ok(())
}

/// `cells.geojson`: every cell's sea polygon in WGS84 lon/lat with properties `cell`,
/// `area_km2` (sea area, km²), `selected`, with `reserves` the 1-based `reserve` number of
/// `network.geojson` the cell belongs to (null outside the network) so cells join to reserves,
/// each layer's value (sanitized layer name) and each feature's amount (sanitized feature name
/// + unit, e.g. `habitat_cod_ssp2_4_5_2050_km2`). Non-finite values are written as `null`.
pub fn cells_geojson(
    grid: &Grid,
    layers: &[Layer],
    features: &FeatureTable,
    selected: &[bool],
    reserves: Option<&[u32]>,
) -> Result<String, ExportError> {
    cells_geojson_with_text(grid, layers, &[], features, selected, reserves)
}

/// A word per cell (e.g. a selection class), written as a string property.
#[derive(Debug, Clone, PartialEq)]
pub struct TextLayer {
    /// Property name (used as is; keep it a plain identifier).
    pub name: String,
    /// One word per cell id.
    pub values: Vec<&'static str>,
}

/// [`cells_geojson`] with string properties after `selected` (one [`TextLayer`] each, in
/// order), before the numeric layers.
pub fn cells_geojson_with_text(
    grid: &Grid,
    layers: &[Layer],
    text: &[TextLayer],
    features: &FeatureTable,
    selected: &[bool],
    reserves: Option<&[u32]>,
) -> Result<String, ExportError> {
    check_lengths(grid, layers, selected)?;
    if let Some(t) = text.iter().find(|t| t.values.len() != grid.len()) {
        return Err(ExportError::Length {
            what: format!("text layer `{}`", t.name),
            expected: grid.len(),
            got: t.values.len(),
        });
    }
    let text_names: Vec<String> = text.iter().map(|t| json_str(&t.name)).collect();
    let names: Vec<String> = value_names(layers, features)
        .iter()
        .map(|n| json_str(n))
        .collect();
    let step = max_step_m(grid);
    let n = grid.len();
    let chunks: Vec<String> = (0..n.div_ceil(CHUNK))
        .into_par_iter()
        .map_init(
            || Projector::new(&grid.crs),
            |p, chunk| {
                let projector = worker_projector(p, grid)?;
                let (lo, hi) = (chunk * CHUNK, ((chunk + 1) * CHUNK).min(n));
                let mut out = String::new();
                for_each_row(layers, features, lo, hi, |cell, values| {
                    let polys = to_rfc7946(projector, &grid.cell_polygon(cell), step, || {
                        format!("cell {cell}")
                    })?;
                    if cell > 0 {
                        out.push(',');
                    }
                    let _ = write!(
                        out,
                        "\n{{\"type\":\"Feature\",\"id\":{cell},\"properties\":{{\"cell\":{cell},\"area_km2\":"
                    );
                    push_num(&mut out, grid.cells[cell as usize].sea_area_km2);
                    out.push_str(if selected[cell as usize] { ",\"selected\":true" } else { ",\"selected\":false" });
                    if let Some(r) = reserves {
                        match r[cell as usize] {
                            0 => out.push_str(",\"reserve\":null"),
                            k => {
                                let _ = write!(out, ",\"reserve\":{k}");
                            }
                        }
                    }
                    for (name, t) in text_names.iter().zip(text) {
                        out.push(',');
                        out.push_str(name);
                        out.push(':');
                        out.push_str(&json_str(t.values[cell as usize]));
                    }
                    for (name, v) in names.iter().zip(values) {
                        out.push(',');
                        out.push_str(name);
                        out.push(':');
                        push_prop(&mut out, *v);
                    }
                    out.push_str("},\"geometry\":");
                    push_geometry(&mut out, &polys);
                    out.push('}');
                    Ok(())
                })?;
                Ok(out)
            },
        )
        .collect::<Result<_, ExportError>>()?;
    let mut out = String::with_capacity(chunks.iter().map(String::len).sum::<usize>() + 512);
    push_header(&mut out);
    for c in &chunks {
        out.push_str(c);
    }
    out.push_str("\n]}\n");
    Ok(out)
}

/// `cells.csv`: the columns of [`cells_geojson`] plus the sea centroid's WGS84 `lon`,`lat`
/// (degrees, 6 decimals), one row per cell — the practical format at a million cells.
/// Columns: `cell,lon,lat,area_km2,selected,[reserve,]<layers...>,<features...>` (`reserve`
/// with `reserves`: the 1-based reserve number, empty outside the network); non-finite values
/// are left empty.
pub fn cells_csv(
    grid: &Grid,
    layers: &[Layer],
    features: &FeatureTable,
    selected: &[bool],
    reserves: Option<&[u32]>,
) -> Result<String, ExportError> {
    check_lengths(grid, layers, selected)?;
    let mut header: Vec<String> = super::columns::FIXED
        .iter()
        .map(|s| s.to_string())
        .collect();
    if reserves.is_some() {
        header.push("reserve".into());
    }
    header.extend(value_names(layers, features));
    let n = grid.len();
    let chunks: Vec<String> = (0..n.div_ceil(CHUNK))
        .into_par_iter()
        .map(|chunk| {
            let (lo, hi) = (chunk * CHUNK, ((chunk + 1) * CHUNK).min(n));
            let mut w = csv::WriterBuilder::new()
                .has_headers(false)
                .from_writer(Vec::new());
            let mut record: Vec<String> = Vec::with_capacity(header.len());
            let num = |x: f64| {
                if x.is_finite() {
                    x.to_string()
                } else {
                    String::new()
                }
            };
            for_each_row(layers, features, lo, hi, |cell, values| {
                let c = &grid.cells[cell as usize];
                record.clear();
                record.push(cell.to_string());
                record.push(num(round6(c.lonlat[0])));
                record.push(num(round6(c.lonlat[1])));
                record.push(num(c.sea_area_km2));
                record.push(selected[cell as usize].to_string());
                if let Some(r) = reserves {
                    record.push(match r[cell as usize] {
                        0 => String::new(),
                        k => k.to_string(),
                    });
                }
                record.extend(values.iter().map(|&v| num(v)));
                // Writing to an in-memory Vec cannot fail.
                let _ = w.write_record(&record);
                Ok(())
            })?;
            let bytes = w
                .into_inner()
                .map_err(|e| e.into_error())
                .unwrap_or_default();
            // csv writes only the UTF-8 strings it was given.
            Ok::<String, ExportError>(String::from_utf8(bytes).unwrap_or_default())
        })
        .collect::<Result<_, ExportError>>()?;
    let mut w = csv::Writer::from_writer(Vec::new());
    let _ = w.write_record(&header);
    let mut out = String::from_utf8(w.into_inner().unwrap_or_default()).unwrap_or_default();
    for c in &chunks {
        out.push_str(c);
    }
    Ok(out)
}
