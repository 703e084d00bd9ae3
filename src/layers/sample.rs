//! Sampling one layer source onto the grid: dispatch on [`Sampling`], reprojection, valid-range
//! checks and the missing-cell policy.

use super::area::PolygonIndex;
use super::cache::SourceCache;
use super::csv::{self as csvfile, CsvTable};
use super::geojson::{Coords, GeoFile};
use super::points::{nearest, Method, RegularLattice, Weights};
use super::raster::{self, Raster};
use super::vector;
use super::{Layer, LayerError, LayerSpec, Missing, Sampling, SamplingReport};
use crate::grid::{Crs, Grid, Projector};
use geo::MultiPolygon;
use rayon::prelude::*;
use std::path::Path;

/// How many uncovered cells an [`LayerError::Uncovered`] message lists.
const EXAMPLES: usize = 5;

/// Samples the source `spec` onto `grid` and returns the layer `name`, one value per cell id.
///
/// Polygons and points are reprojected into the grid's CRS (from `spec.crs`, or WGS84 lon/lat);
/// CSV lattices are interpolated in their own coordinates. Values outside `spec.valid_range` —
/// in the file or after sampling — are errors; uncovered cells follow `spec.missing`.
/// Parsed files are taken from / put into `cache`.
pub fn sample(
    name: &str,
    spec: &LayerSpec,
    grid: &Grid,
    cache: &SourceCache,
) -> Result<Layer, LayerError> {
    let values = match spec.sampling {
        Sampling::AreaShare => area_share(spec, grid, cache)?,
        Sampling::AreaMean => area_mean(spec, grid, cache)?,
        Sampling::PointCount | Sampling::PointSum | Sampling::PointMean => {
            points(spec, grid, cache)?
        }
        Sampling::Interpolate if raster::is_raster(&spec.path) => {
            raster_values(name, spec, grid, cache)?
        }
        Sampling::Interpolate => interpolate(name, spec, grid, cache)?,
    };
    if let Some((min, max)) = spec.valid_range {
        for (id, v) in values.iter().enumerate() {
            if let Some(v) = *v {
                if !(min..=max).contains(&v) {
                    return Err(LayerError::OutOfRange {
                        path: spec.path.clone(),
                        location: format!("sampled value of {}", describe_cell(grid, id)),
                        value: v,
                        min,
                        max,
                    });
                }
            }
        }
    }
    let uncovered: Vec<usize> = values
        .iter()
        .enumerate()
        .filter(|(_, v)| v.is_none())
        .map(|(i, _)| i)
        .collect();
    if spec.missing == Missing::Error && !uncovered.is_empty() {
        let examples: Vec<String> = uncovered
            .iter()
            .take(EXAMPLES)
            .map(|&id| describe_cell(grid, id))
            .collect();
        return Err(LayerError::Uncovered {
            path: spec.path.clone(),
            sampling: spec.sampling.name(),
            count: uncovered.len(),
            total: grid.len(),
            examples: examples.join(", "),
        });
    }
    Ok(Layer {
        name: name.to_string(),
        values: values.into_iter().map(|v| v.unwrap_or(0.0)).collect(),
    })
}

fn describe_cell(grid: &Grid, id: usize) -> String {
    let [lon, lat] = grid.cells[id].lonlat;
    format!("cell {id} (lon {lon:.4}, lat {lat:.4})")
}

fn coords(crs: Option<&str>) -> Coords {
    if crs.is_some() {
        Coords::Projected
    } else {
        Coords::LonLat
    }
}

/// The CRS a vector file's coordinates are in: the plan's `crs`, else the file's own.
fn file_crs<'a>(spec: &'a LayerSpec, file: &'a GeoFile) -> Option<&'a str> {
    spec.crs.as_deref().or(file.crs.as_deref())
}

fn field(spec: &LayerSpec) -> Result<&str, LayerError> {
    spec.field.as_deref().ok_or_else(|| LayerError::Spec {
        path: spec.path.clone(),
        message: format!(
            "{} sampling needs the property/column that holds the values (expected e.g. `column = \"value\"`)",
            spec.sampling.name()
        ),
    })
}

fn check_range(
    spec: &LayerSpec,
    location: impl FnOnce() -> String,
    value: f64,
) -> Result<(), LayerError> {
    match spec.valid_range {
        Some((min, max)) if !(min..=max).contains(&value) => Err(LayerError::OutOfRange {
            path: spec.path.clone(),
            location: location(),
            value,
            min,
            max,
        }),
        _ => Ok(()),
    }
}

/// A key that identifies the grid's lattice, for cache entries prepared for one grid.
fn grid_key(grid: &Grid) -> String {
    format!(
        "{}|{}|{:?}|{}x{}|{}",
        grid.crs.definition,
        grid.cell_size_m,
        grid.origin,
        grid.n_cols,
        grid.n_rows,
        grid.len()
    )
}

/// Moves source coordinates into the grid's CRS.
struct ToGrid<'a> {
    path: &'a Path,
    /// `None` when the source is already in the grid's CRS.
    grid: Option<Projector>,
    /// The source CRS, `None` for WGS84 lon/lat.
    source: Option<Projector>,
    /// Densify projected edges to at most this length before unprojecting. Units: m.
    step_m: f64,
    /// Densify lon/lat edges to at most this length before projecting. Units: degrees.
    step_deg: f64,
}

impl<'a> ToGrid<'a> {
    /// From coordinates in `crs` (`None`: WGS84 lon/lat) of the file at `path`.
    fn new(path: &'a Path, crs: Option<&str>, grid: &Grid) -> Result<ToGrid<'a>, LayerError> {
        let err = |source| LayerError::Projection {
            path: path.to_path_buf(),
            source,
        };
        let same = crs == Some(grid.crs.definition.as_str());
        let source = match (crs, same) {
            (Some(def), false) => Some(
                Projector::new(&Crs {
                    definition: def.to_string(),
                })
                .map_err(err)?,
            ),
            _ => None,
        };
        let grid_proj = if same {
            None
        } else {
            Some(Projector::new(&grid.crs).map_err(err)?)
        };
        // Half a cell keeps the curvature of long edges well below a cell's size; 1e-5° ≈ 1 m
        // floors it for tiny test cells.
        let step_m = grid.cell_size_m / 2.0;
        let step_deg = (grid.cell_size_m / 2.0 / 111_320.0).clamp(1e-5, 0.25);
        Ok(ToGrid {
            path,
            grid: grid_proj,
            source,
            step_m,
            step_deg,
        })
    }

    fn err(&self, source: crate::grid::GridError) -> LayerError {
        LayerError::Projection {
            path: self.path.to_path_buf(),
            source,
        }
    }

    fn point(&self, p: [f64; 2]) -> Result<[f64; 2], LayerError> {
        let Some(g) = &self.grid else { return Ok(p) };
        let ll = match &self.source {
            Some(s) => s.to_lonlat(p[0], p[1]).map_err(|e| self.err(e))?,
            None => p,
        };
        g.to_xy(ll[0], ll[1]).map_err(|e| self.err(e))
    }

    fn polygon(&self, mp: &MultiPolygon<f64>) -> Result<MultiPolygon<f64>, LayerError> {
        let Some(g) = &self.grid else {
            return Ok(mp.clone());
        };
        let ll = match &self.source {
            Some(s) => s
                .polygon_to_lonlat(mp, self.step_m)
                .map_err(|e| self.err(e))?,
            None => mp.clone(),
        };
        g.polygon_to_xy(&ll, self.step_deg).map_err(|e| self.err(e))
    }
}

fn geo_file(spec: &LayerSpec, cache: &SourceCache) -> Result<std::sync::Arc<GeoFile>, LayerError> {
    let kind = format!("vector|{:?}", spec.layer);
    cache.get_or_load(&spec.path, &kind, || {
        vector::read(&spec.path, spec.layer.as_deref())
    })
}

/// The polygon file projected into the grid's CRS and cut on its lattice; one entry per
/// feature, in file order.
fn polygon_index(
    spec: &LayerSpec,
    grid: &Grid,
    cache: &SourceCache,
) -> Result<(std::sync::Arc<GeoFile>, std::sync::Arc<PolygonIndex>), LayerError> {
    let file = geo_file(spec, cache)?;
    let kind = format!(
        "polygons|{:?}|{:?}|{}|{}",
        spec.crs,
        spec.layer,
        spec.repair,
        grid_key(grid)
    );
    let index = cache.get_or_load(&spec.path, &kind, || {
        let crs = file_crs(spec, &file);
        let to_grid = ToGrid::new(&spec.path, crs, grid)?;
        let projected = file
            .polygons(coords(crs), spec.repair)?
            .iter()
            .map(|(_, mp)| to_grid.polygon(mp))
            .collect::<Result<Vec<_>, _>>()?;
        Ok(PolygonIndex::build(grid, &projected))
    })?;
    Ok((file, index))
}

fn area_share(
    spec: &LayerSpec,
    grid: &Grid,
    cache: &SourceCache,
) -> Result<Vec<Option<f64>>, LayerError> {
    let (_, index) = polygon_index(spec, grid, cache)?;
    Ok((0..grid.len() as u32)
        .into_par_iter()
        .map(|id| index.share(grid, id))
        .collect())
}

fn area_mean(
    spec: &LayerSpec,
    grid: &Grid,
    cache: &SourceCache,
) -> Result<Vec<Option<f64>>, LayerError> {
    let field = field(spec)?;
    let (file, index) = polygon_index(spec, grid, cache)?;
    // Feature k of the file is polygon k of the index (`polygons` keeps one entry per feature).
    let mut values = Vec::with_capacity(file.features.len());
    for f in &file.features {
        let v = file.number(f.index, field)?;
        if let Some(v) = v {
            check_range(
                spec,
                || format!("feature {}, property `{field}`", f.index),
                v,
            )?;
        }
        values.push(v);
    }
    Ok((0..grid.len() as u32)
        .into_par_iter()
        .map(|id| {
            // Area-weighted mean: Σ vᵢ·aᵢ / Σ aᵢ over polygons with data; overlapping polygons
            // each weigh with their own covered area.
            let (mut num, mut den) = (0.0, 0.0);
            for (p, a) in index.covered_by_each(grid, id) {
                if let Some(v) = values[p as usize] {
                    num += v * a;
                    den += a;
                }
            }
            (den > 0.0).then(|| num / den)
        })
        .collect())
}

fn points(
    spec: &LayerSpec,
    grid: &Grid,
    cache: &SourceCache,
) -> Result<Vec<Option<f64>>, LayerError> {
    let file = geo_file(spec, cache)?;
    let field = match spec.sampling {
        Sampling::PointCount => None,
        _ => Some(field(spec)?),
    };
    let crs = file_crs(spec, &file);
    let to_grid = ToGrid::new(&spec.path, crs, grid)?;
    let mut sum = vec![0.0; grid.len()];
    let mut count = vec![0u32; grid.len()];
    for (index, p) in file.points(coords(crs))? {
        let v = match field {
            None => 1.0,
            Some(f) => match file.number(index, f)? {
                Some(v) => v,
                None => continue, // JSON null: no data at this point.
            },
        };
        check_range(spec, || format!("feature {index}"), v)?;
        if let Some(id) = grid.locate(to_grid.point(p)?) {
            sum[id as usize] += v;
            count[id as usize] += 1;
        }
    }
    Ok(sum
        .into_iter()
        .zip(count)
        .map(|(s, n)| match (n, spec.sampling) {
            (0, _) => None,
            (n, Sampling::PointMean) => Some(s / n as f64),
            (_, _) => Some(s),
        })
        .collect())
}

/// Per-cell interpolation weights for one CSV's coordinates on one grid (shared by its columns).
struct Interpolator {
    weights: Vec<Weights>,
    /// How the weights were formed (e.g. "bilinear on a lattice of step 0.25 × 0.25, 812 of
    /// 1000 positions present").
    method: String,
    /// Cells per rule: bilinear, coastal, nearest, missing.
    counts: [usize; 4],
}

fn count_methods(methods: impl Iterator<Item = Method>) -> [usize; 4] {
    let mut counts = [0; 4];
    for m in methods {
        counts[match m {
            Method::Bilinear => 0,
            Method::Coastal => 1,
            Method::Nearest => 2,
            Method::Missing => 3,
        }] += 1;
    }
    counts
}

fn interpolate(
    name: &str,
    spec: &LayerSpec,
    grid: &Grid,
    cache: &SourceCache,
) -> Result<Vec<Option<f64>>, LayerError> {
    let column = field(spec)?;
    let c = coords(spec.crs.as_deref());
    let table: std::sync::Arc<CsvTable> =
        cache.get_or_load(&spec.path, &format!("csv|{c:?}"), || {
            csvfile::parse_file(&spec.path, c)
        })?;
    let values = table.column(column)?;
    for (v, line) in values.iter().zip(&table.lines) {
        check_range(spec, || format!("line {line}, column `{column}`"), *v)?;
    }
    let kind = format!("interpolate|{:?}|{}", spec.crs, grid_key(grid));
    let interp = cache.get_or_load(&spec.path, &kind, || interpolator(spec, grid, &table))?;
    let [bilinear, coastal, nearest, missing] = interp.counts;
    cache.record(SamplingReport {
        layer: name.to_string(),
        path: spec.path.display().to_string(),
        method: interp.method.clone(),
        bilinear,
        coastal,
        nearest,
        missing,
        pixel_mean: 0,
    });
    // Bilinear and nearest values lie within the file's values; a coastal plane may
    // extrapolate past them, so keep it inside the layer's valid range (a habitat share
    // stays in 0–1 next to the coast).
    let clamp = |v: f64| match spec.valid_range {
        Some((min, max)) => v.clamp(min, max),
        None => v,
    };
    Ok(interp
        .weights
        .iter()
        .map(|w| w.apply(values).map(clamp))
        .collect())
}

fn interpolator(
    spec: &LayerSpec,
    grid: &Grid,
    table: &CsvTable,
) -> Result<Interpolator, LayerError> {
    let err = |source| LayerError::Projection {
        path: spec.path.clone(),
        source,
    };
    // A lon/lat lattice across the antimeridian (longitudes 170…180 and −180…−170) is one
    // lattice once western longitudes are read as lon + 360; queries pick the matching variant.
    let unwrapped: Vec<f64>;
    let xs: &[f64] = match (
        &spec.crs,
        table.xs.iter().copied().fold(f64::NAN, f64::min),
        table.xs.iter().copied().fold(f64::NAN, f64::max),
    ) {
        (None, lo, hi) if hi - lo > 180.0 => {
            unwrapped = table
                .xs
                .iter()
                .map(|&x| if x < 0.0 { x + 360.0 } else { x })
                .collect();
            &unwrapped
        }
        _ => &table.xs,
    };
    let not_lattice = match RegularLattice::fit(xs, &table.ys) {
        Ok(lattice) => {
            // Bilinear in the file's own coordinates, at each cell's lon/lat centroid.
            let source = match &spec.crs {
                Some(def) => Some(
                    Projector::new(&Crs {
                        definition: def.clone(),
                    })
                    .map_err(err)?,
                ),
                None => None,
            };
            let mut weights = Vec::with_capacity(grid.len());
            let mut methods = Vec::with_capacity(grid.len());
            for cell in &grid.cells {
                let [lon, lat] = cell.lonlat;
                let q = match &source {
                    Some(s) => s.to_xy(lon, lat).map_err(err)?,
                    // A 0..360 lattice holds western longitudes as lon + 360: prefer the
                    // variant inside the lattice, then one within a step of its edge.
                    None => {
                        let variants = [lon, lon + 360.0, lon - 360.0];
                        let lon = variants
                            .iter()
                            .copied()
                            .min_by_key(|&l| lattice.x_reach(l))
                            .unwrap_or(lon);
                        [lon, lat]
                    }
                };
                let (w, m) = lattice.weights_at(q[0], q[1]);
                weights.push(w);
                methods.push(m);
            }
            let (positions, present) = lattice.positions();
            let (dx, dy) = lattice.steps();
            let units = if spec.crs.is_some() {
                " (file units)"
            } else {
                "°"
            };
            return Ok(Interpolator {
                counts: count_methods(methods.into_iter()),
                weights,
                method: format!(
                    "bilinear on a lattice of step {} × {}{units}, {present} of {positions} positions present",
                    round_sig(dx),
                    round_sig(dy)
                ),
            });
        }
        Err(e) => e,
    };
    // Nearest point, measured in the grid's equal-area metres.
    let to_grid = ToGrid::new(&spec.path, spec.crs.as_deref(), grid)?;
    let pts = table
        .xs
        .iter()
        .zip(&table.ys)
        .map(|(&x, &y)| to_grid.point([x, y]))
        .collect::<Result<Vec<_>, _>>()?;
    let queries: Vec<[f64; 2]> = grid.cells.iter().map(|c| c.centre).collect();
    let (weights, limit) = nearest(&pts, &queries, grid.cell_size_m);
    let reason = not_lattice.describe(&|row| {
        table
            .lines
            .get(row)
            .map(|l| format!("line {l}"))
            .unwrap_or_else(|| format!("row {row}"))
    });
    Ok(Interpolator {
        counts: count_methods(weights.iter().map(|w| match w {
            Weights::Outside => Method::Missing,
            _ => Method::Nearest,
        })),
        weights,
        method: format!(
            "nearest point within {:.1} km, because the points are not one regular lattice: {reason}",
            limit / 1000.0
        ),
    })
}

/// `x` to 6 significant digits, for messages (a lattice step of 0.25 prints as 0.25, not
/// 0.25000000000000355).
fn round_sig(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let scale = 10f64.powi(5 - x.abs().log10().floor() as i32);
    (x * scale).round() / scale
}

/// The band a raster layer reads: the layer's `band` (1-based), band 1 by default.
fn band(spec: &LayerSpec) -> Result<usize, LayerError> {
    match spec.field.as_deref() {
        None => Ok(1),
        Some(b) => b.trim().parse::<usize>().map_err(|_| LayerError::Spec {
            path: spec.path.clone(),
            message: format!("band `{b}` is not a band number (expected e.g. `band = 1`)"),
        }),
    }
}

/// A raster sampled onto the grid. Coarser than the cells (a pixel's ground area at the
/// raster's centre ≥ a cell's): bilinear at each cell's centroid on the pixel centres, nodata
/// pixels absent as land points are in a lattice (same coastal fallback, same counts). Finer:
/// the mean of the pixels whose centres fall in the cell, weighted by pixel area (for a
/// lon/lat raster ∝ cos(latitude); equal in a projected one) — the area-weighted mean of the
/// pixels inside the cell to within a pixel along its edge; a cell no pixel centre falls in
/// (a sliver) falls back to bilinear.
fn raster_values(
    name: &str,
    spec: &LayerSpec,
    grid: &Grid,
    cache: &SourceCache,
) -> Result<Vec<Option<f64>>, LayerError> {
    let netcdf = vector::ext(&spec.path) == "nc";
    let (b, what) = if netcdf {
        (
            0,
            format!("variable {}", spec.field.as_deref().unwrap_or("?")),
        )
    } else {
        let b = band(spec)?;
        (b, format!("band {b}"))
    };
    let r: std::sync::Arc<Raster> = if netcdf {
        let year = spec.year.ok_or_else(|| LayerError::Spec {
            path: spec.path.clone(),
            message: "a NetCDF layer is read for a year of the plan; use it where the plan has years (temperature, habitat)".into(),
        })?;
        let kind = format!("netcdf|{:?}|{year}|{}", spec.field, spec.years_window);
        cache.get_or_load(&spec.path, &kind, || {
            raster::read_netcdf(&spec.path, spec.field.as_deref(), year, spec.years_window)
        })?
    } else {
        cache.get_or_load(&spec.path, &format!("raster|{b}"), || {
            raster::read(&spec.path, b)
        })?
    };
    for (k, v) in r.values.iter().enumerate() {
        if v.is_finite() {
            check_range(
                spec,
                || format!("{what}, pixel (col {}, row {})", k % r.nx, k / r.nx),
                *v,
            )?;
        }
    }
    let crs = spec.crs.as_deref().or(r.crs.as_deref());
    let err = |source| LayerError::Projection {
        path: spec.path.clone(),
        source,
    };
    let source = match crs {
        Some(def) => Some(
            Projector::new(&Crs {
                definition: def.to_string(),
            })
            .map_err(err)?,
        ),
        None => None,
    };
    let grid_proj = Projector::new(&grid.crs).map_err(err)?;
    // Ground area of the central pixel, in the grid's equal-area m².
    let to_grid = |p: [f64; 2]| -> Result<[f64; 2], LayerError> {
        let ll = match &source {
            Some(s) => s.to_lonlat(p[0], p[1]).map_err(err)?,
            None => p,
        };
        grid_proj.to_xy(ll[0], ll[1]).map_err(err)
    };
    let c = r.centre(r.nx / 2, r.ny / 2);
    let (hx, hy) = (0.5 * r.dx, 0.5 * r.dy);
    let corners = [
        to_grid([c[0] - hx, c[1] - hy])?,
        to_grid([c[0] + hx, c[1] - hy])?,
        to_grid([c[0] + hx, c[1] + hy])?,
        to_grid([c[0] - hx, c[1] + hy])?,
    ];
    let pixel_m2 = 0.5
        * (0..4)
            .map(|k| {
                let (p, q) = (corners[k], corners[(k + 1) % 4]);
                p[0] * q[1] - q[0] * p[1]
            })
            .sum::<f64>()
            .abs();
    let cell_m2 = grid.cell_size_m * grid.cell_size_m;
    let lattice = r.lattice();
    let bilinear_at = |lonlat: [f64; 2]| -> Result<(Weights, Method), LayerError> {
        let q = match &source {
            Some(s) => s.to_xy(lonlat[0], lonlat[1]).map_err(err)?,
            None => {
                let variants = [lonlat[0], lonlat[0] + 360.0, lonlat[0] - 360.0];
                let lon = variants
                    .iter()
                    .copied()
                    .min_by_key(|&l| lattice.x_reach(l))
                    .unwrap_or(lonlat[0]);
                [lon, lonlat[1]]
            }
        };
        Ok(lattice.weights_at(q[0], q[1]))
    };
    let mut values = vec![None; grid.len()];
    let mut pixel_mean = 0;
    if pixel_m2 < cell_m2 {
        // Sum value × weight per cell over the pixels whose centres fall in it.
        let mut num = vec![0.0; grid.len()];
        let mut den = vec![0.0; grid.len()];
        for j in 0..r.ny {
            for i in 0..r.nx {
                let v = r.values[j * r.nx + i];
                if !v.is_finite() {
                    continue;
                }
                let p = r.centre(i, j);
                let ll = match &source {
                    Some(s) => s.to_lonlat(p[0], p[1]).map_err(err)?,
                    None => p,
                };
                let Ok(xy) = grid_proj.to_xy(ll[0], ll[1]) else {
                    continue;
                };
                if let Some(id) = grid.locate(xy) {
                    let w = if source.is_none() {
                        ll[1].to_radians().cos()
                    } else {
                        1.0
                    };
                    num[id as usize] += w * v;
                    den[id as usize] += w;
                }
            }
        }
        for id in 0..grid.len() {
            if den[id] > 0.0 {
                values[id] = Some(num[id] / den[id]);
                pixel_mean += 1;
            }
        }
    }
    let mut counted = Vec::new();
    for (id, cell) in grid.cells.iter().enumerate() {
        if values[id].is_some() {
            continue;
        }
        let (w, m) = bilinear_at(cell.lonlat)?;
        values[id] = w.apply(&r.values);
        counted.push(m);
    }
    let clamp = |v: f64| match spec.valid_range {
        Some((min, max)) => v.clamp(min, max),
        None => v,
    };
    let [bilinear, coastal, nearest, missing] = count_methods(counted.into_iter());
    let (positions, present) = lattice.positions();
    let rule = if pixel_m2 < cell_m2 {
        "area-weighted mean of the pixels in each cell"
    } else {
        "bilinear on pixel centres"
    };
    cache.record(SamplingReport {
        layer: name.to_string(),
        path: spec.path.display().to_string(),
        method: format!(
            "raster {what}, {rule} ({} × {} pixels of {:.3} km², {present} of {positions} with data)",
            r.nx,
            r.ny,
            pixel_m2 / 1e6
        ),
        bilinear,
        coastal,
        nearest,
        missing,
        pixel_mean,
    });
    Ok(values.into_iter().map(|v| v.map(clamp)).collect())
}
