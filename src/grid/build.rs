//! Builds the planning grid from WGS84 region and land polygons.
//!
//! 1. Project region and land into the grid CRS, densifying lon/lat edges to [`DENSIFY_DEG`]
//!    first; sea = region − land (non-zero fill, so overlapping land polygons stay land).
//! 2. Lay a square lattice over the sea's projected bounding box, its origin snapped to a
//!    multiple of the cell size, so the same CRS and cell size always give the same squares.
//! 3. Cut the sea into cells by recursive bisection of the lattice: each step clips the sea
//!    rings of a block of squares against the two halves of the block (Sutherland–Hodgman
//!    against one axis-parallel line, exact on the cut line). A block whose rings all run
//!    along its border is uniform — wholly sea or wholly not — so all its squares are
//!    classified at once without any polygon work. Every ring vertex is handled
//!    O(log cells) times and only squares the coast or region boundary passes through are
//!    ever turned into polygons; no boolean operation is run against the whole region per
//!    cell. Blocks are processed in parallel (rayon); cell ids are then ordered by row and
//!    column, so results do not depend on the thread count.
//! 4. Squares whose sea area is below `min_sea_share` of a full square are dropped.
//! 5. Rook neighbours with shared sea edge lengths ([`super::neighbours`]).

use super::neighbours::rook_neighbours;
use super::{Cell, Crs, CrsChoice, Grid, GridError, GridSpec, Projector, NO_CELL};
use geo::algorithm::bool_ops::{FillRule, OpType};
use geo::orient::{Direction, Orient};
use geo::{
    Area, BooleanOps, BoundingRect, Centroid, Coord, LineString, MultiPolygon, Polygon, Rect,
};
use rayon::prelude::*;

/// Longest lon/lat edge step before projecting region and land. Units: degrees.
///
/// 0.05° (≈5.6 km of latitude) keeps the chord-versus-curve area error of a projected
/// 1°×1° box near 1.4e-7 of its area, under the 1e-6 the box-area tests demand.
pub const DENSIFY_DEG: f64 = 0.05;

/// Most cells a grid may have (the design target is 1 000 000; beyond 5 000 000 memory and
/// solve times stop being practical on one machine).
pub const MAX_CELLS: usize = 5_000_000;

/// Most lattice squares over the sea's bounding box (the lattice index holds 4 bytes each).
const MAX_LATTICE: usize = 200_000_000;

/// Land is clipped to the region's lon/lat bounding box grown by this much before it is
/// projected, so world-wide land files never reach the far side of the projection. The
/// margin keeps the clip's own edges away from the region. Units: degrees.
const LAND_MARGIN_DEG: f64 = 0.5;

/// Sea shares below this are numerical slivers and always dropped, whatever `min_sea_share`.
const MIN_KEEP_SHARE: f64 = 1e-9;

/// Vertices closer than this share of the cell side to a square's edge are moved onto it,
/// so both cells of a shared edge see exactly the same line. The cleaning overlay snaps to
/// ~1e-9 of a cell side, so 1e-7 leaves a wide margin and moves real coast by under 1 mm
/// for 5 km cells.
pub(crate) const SNAP_SHARE: f64 = 1e-7;

/// A ring without the repeated closing vertex.
type Ring = Vec<Coord<f64>>;

/// The lon/lat bounding box of the region, after checking that every coordinate is finite
/// WGS84 degrees and that the region does not cross the antimeridian. Units: degrees.
pub fn region_bounds_lonlat(region: &MultiPolygon<f64>) -> Result<Rect<f64>, GridError> {
    let mut lo = Coord {
        x: f64::INFINITY,
        y: f64::INFINITY,
    };
    let mut hi = Coord {
        x: f64::NEG_INFINITY,
        y: f64::NEG_INFINITY,
    };
    let mut any = false;
    for (pi, poly) in region.0.iter().enumerate() {
        for (ri, ring) in std::iter::once(poly.exterior())
            .chain(poly.interiors())
            .enumerate()
        {
            for (vi, c) in ring.0.iter().enumerate() {
                if !(c.x.is_finite() && c.y.is_finite() && c.x.abs() <= 180.0 && c.y.abs() <= 90.0)
                {
                    return Err(GridError::Invalid(format!(
                        "region polygon {pi}, ring {ri}, vertex {vi}: ({}, {}) is not WGS84 lon/lat (expected longitude −180..180 and latitude −90..90 degrees)",
                        c.x, c.y
                    )));
                }
                any = true;
                lo = Coord {
                    x: lo.x.min(c.x),
                    y: lo.y.min(c.y),
                };
                hi = Coord {
                    x: hi.x.max(c.x),
                    y: hi.y.max(c.y),
                };
            }
            for w in ring.0.windows(2) {
                if (w[1].x - w[0].x).abs() > 180.0 {
                    return Err(GridError::Antimeridian {
                        west: lo.x.min(w[0].x).min(w[1].x),
                        east: hi.x.max(w[0].x).max(w[1].x),
                    });
                }
            }
        }
    }
    if !any {
        return Err(GridError::EmptyRegion("the region has no polygons".into()));
    }
    // An RFC 7946 region across 180° comes split into pieces near +180 and −180: measured
    // with western longitudes as lon + 360 it is one compact box (e.g. 170…190), and the
    // bounds are returned that way (east > 180), so the grid is centred on the antimeridian.
    if hi.x - lo.x > 180.0 {
        let (mut ulo, mut uhi) = (f64::INFINITY, f64::NEG_INFINITY);
        for c in region.0.iter().flat_map(|p| {
            std::iter::once(p.exterior())
                .chain(p.interiors())
                .flat_map(|r| r.0.iter())
        }) {
            let x = if c.x < 0.0 { c.x + 360.0 } else { c.x };
            ulo = ulo.min(x);
            uhi = uhi.max(x);
        }
        if uhi - ulo > 180.0 {
            return Err(GridError::Antimeridian {
                west: lo.x,
                east: hi.x,
            });
        }
        return Ok(Rect::new(
            Coord { x: ulo, y: lo.y },
            Coord { x: uhi, y: hi.y },
        ));
    }
    Ok(Rect::new(lo, hi))
}

/// A ring's longitudes made continuous: ±360° added where consecutive points jump by more
/// than 180° (no real edge of a region or cell spans half the globe), so a shape across the
/// antimeridian is whole on an extended longitude axis.
pub(crate) fn continuous_longitudes(ring: &[Coord<f64>]) -> Vec<Coord<f64>> {
    let mut out: Vec<Coord<f64>> = Vec::with_capacity(ring.len());
    let mut shift = 0.0;
    for (i, c) in ring.iter().enumerate() {
        if i > 0 {
            let d = c.x - ring[i - 1].x;
            if d > 180.0 {
                shift -= 360.0;
            } else if d < -180.0 {
                shift += 360.0;
            }
        }
        out.push(Coord {
            x: c.x + shift,
            y: c.y,
        });
    }
    out
}

/// A ring made continuous ([`continuous_longitudes`]), then shifted by a whole turn to overlap
/// the box `x0..x1` most — so land given as RFC 7946 pieces either side of 180° meets a region
/// box that runs past 180°.
fn ring_near(ring: &[Coord<f64>], x0: f64, x1: f64) -> Vec<Coord<f64>> {
    let mut out = continuous_longitudes(ring);
    let (lo, hi) = out
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), c| {
            (a.min(c.x), b.max(c.x))
        });
    let overlap = |k: f64| (hi + k).min(x1) - (lo + k).max(x0);
    let best =
        [-360.0, 0.0, 360.0]
            .into_iter()
            .fold(0.0, |b, k| if overlap(k) > overlap(b) { k } else { b });
    out.iter_mut().for_each(|c| c.x += best);
    out
}

/// A cell size (km) that keeps a sea of `sea_area_km2` under [`MAX_CELLS`], rounded up to
/// two significant digits.
pub(crate) fn suggest_cell_km(sea_area_km2: f64) -> f64 {
    let x = (sea_area_km2 / MAX_CELLS as f64).sqrt() * 1.05;
    if !(x > 0.0 && x.is_finite()) {
        return 1.0;
    }
    let step = 10f64.powf(x.log10().floor() - 1.0);
    (x / step).ceil() * step
}

/// Builds the planning grid of `spec` over the sea of `region` minus `land` (both WGS84
/// lon/lat). Cells are ordered by row (south first), then column (west first).
pub fn build_grid(
    spec: &GridSpec,
    region: &MultiPolygon<f64>,
    land: Option<&MultiPolygon<f64>>,
) -> Result<Grid, GridError> {
    let side_km = spec.cell_size_km;
    if !(side_km.is_finite() && side_km > 0.0) {
        return Err(GridError::Invalid(format!(
            "`cell_size_km` must be a positive number of kilometres, e.g. `cell_size_km = 5`; got {side_km}"
        )));
    }
    let share = spec.min_sea_share;
    if !(0.0..=1.0).contains(&share) {
        return Err(GridError::Invalid(format!(
            "`min_sea_share` must be a share of a cell between 0 and 1, e.g. `min_sea_share = 0.1`; got {share}"
        )));
    }
    let bounds = region_bounds_lonlat(region)?;
    let crs = match &spec.crs {
        CrsChoice::Auto => {
            let c = bounds.center();
            Crs::auto_laea(c.x, c.y)
        }
        CrsChoice::Given(s) => Crs {
            definition: s.clone(),
        },
    };
    let projector = Projector::new(&crs)?;
    if matches!(spec.crs, CrsChoice::Given(_)) {
        projector.check_equal_area_metres(bounds)?;
    }

    let region_xy = projector.polygon_to_xy(&region.orient(Direction::Default), DENSIFY_DEG)?;
    let land_xy = match land {
        Some(l) => projector.polygon_to_xy(&clip_land_lonlat(l, bounds)?, DENSIFY_DEG)?,
        None => MultiPolygon(Vec::new()),
    };
    // Non-zero fill: region and land polygons are oriented (exteriors counter-clockwise,
    // holes clockwise), so overlapping land polygons add up instead of cancelling.
    let sea = region_xy
        .boolean_op_with_fill_rule(&land_xy, OpType::Difference, FillRule::NonZero)
        .orient(Direction::Default);
    let sea_m2 = sea.unsigned_area();
    let bb = match sea.bounding_rect() {
        Some(bb) if sea_m2 > 0.0 => bb,
        _ => {
            return Err(GridError::EmptyRegion(if land.is_some() {
                "no sea is left after removing land (or the region polygons have no area)".into()
            } else {
                "the region polygons have no area".into()
            }))
        }
    };

    let s = side_km * 1000.0;
    let too_many = |cells: usize| GridError::TooManyCells {
        cells,
        limit: MAX_CELLS,
        cell_size_km: side_km,
        suggested_km: suggest_cell_km(sea_m2 / 1.0e6),
    };
    let estimate = sea_m2 / (s * s);
    if estimate > MAX_CELLS as f64 {
        return Err(too_many(estimate.ceil() as usize));
    }
    let origin = [(bb.min().x / s).floor() * s, (bb.min().y / s).floor() * s];
    let n_cols = ((bb.max().x - origin[0]) / s).ceil().max(1.0);
    let n_rows = ((bb.max().y - origin[1]) / s).ceil().max(1.0);
    if n_cols * n_rows > MAX_LATTICE as f64 {
        return Err(GridError::Invalid(format!(
            "the sea's bounding box holds {} × {} lattice squares of {side_km} km (limit {MAX_LATTICE}); use a larger `cell_size_km`",
            n_cols, n_rows
        )));
    }
    let (n_cols, n_rows) = (n_cols as u32, n_rows as u32);
    let lat = Lattice {
        origin,
        s,
        keep_m2: share.max(MIN_KEEP_SHARE) * s * s,
    };

    let rings: Vec<Ring> = sea
        .0
        .iter()
        .flat_map(|p| std::iter::once(p.exterior()).chain(p.interiors()))
        .map(open_ring)
        .filter(|r| r.len() >= 3)
        .collect();
    let mut raw = split(
        &lat,
        rings,
        Block {
            c0: 0,
            c1: n_cols,
            r0: 0,
            r1: n_rows,
        },
    );
    raw.sort_unstable_by_key(|c| (c.row, c.col));
    if raw.is_empty() {
        return Err(GridError::NoCells {
            cell_size_km: side_km,
            min_sea_share: share,
            sea_area_km2: sea_m2 / 1.0e6,
        });
    }
    if raw.len() > MAX_CELLS {
        return Err(too_many(raw.len()));
    }

    // Centroids to lon/lat: one PROJ object per chunk (they cannot be shared across threads).
    let lonlats: Vec<Vec<[f64; 2]>> = raw
        .par_chunks(4096)
        .map(|chunk| {
            let p = Projector::new(&crs)?;
            chunk
                .iter()
                .map(|c| p.to_lonlat(c.centre[0], c.centre[1]))
                .collect::<Result<Vec<_>, _>>()
        })
        .collect::<Result<_, GridError>>()?;

    let mut lattice = vec![NO_CELL; n_cols as usize * n_rows as usize];
    let mut cells = Vec::with_capacity(raw.len());
    for (id, (c, lonlat)) in raw
        .into_iter()
        .zip(lonlats.into_iter().flatten())
        .enumerate()
    {
        lattice[c.row as usize * n_cols as usize + c.col as usize] = id as u32;
        cells.push(Cell {
            col: c.col,
            row: c.row,
            centre: c.centre,
            lonlat,
            sea_area_km2: c.area_m2 / 1.0e6,
            perimeter_km: c.perimeter_m / 1000.0,
            clipped: c.clipped,
        });
    }
    let sea_area_km2 = cells.iter().map(|c| c.sea_area_km2).sum();
    let mut grid = Grid {
        crs,
        cell_size_m: s,
        origin,
        n_cols,
        n_rows,
        cells,
        neighbours: Vec::new(),
        lattice,
        sea_area_km2,
    };
    grid.neighbours = rook_neighbours(&grid);
    Ok(grid)
}

/// Land rings (oriented) cut to the region's lon/lat box plus a margin. Each surviving ring
/// becomes the exterior of its own polygon; orientation carries the hole/solid meaning, read
/// with the non-zero fill rule.
fn clip_land_lonlat(
    land: &MultiPolygon<f64>,
    bounds: Rect<f64>,
) -> Result<MultiPolygon<f64>, GridError> {
    for (pi, poly) in land.0.iter().enumerate() {
        for (ri, ring) in std::iter::once(poly.exterior())
            .chain(poly.interiors())
            .enumerate()
        {
            if let Some((vi, c)) = ring
                .0
                .iter()
                .enumerate()
                .find(|(_, c)| !(c.x.is_finite() && c.y.is_finite()))
            {
                return Err(GridError::Invalid(format!(
                    "land polygon {pi}, ring {ri}, vertex {vi}: ({}, {}) is not a finite lon/lat coordinate",
                    c.x, c.y
                )));
            }
        }
    }
    let m = LAND_MARGIN_DEG;
    let (lo, hi) = (bounds.min(), bounds.max());
    // A box past 180° (antimeridian regions) keeps its extended longitudes.
    let (x0, x1) = if hi.x > 180.0 {
        (lo.x - m, hi.x + m)
    } else {
        ((lo.x - m).max(-180.0), (hi.x + m).min(180.0))
    };
    let (y0, y1) = ((lo.y - m).max(-90.0), (hi.y + m).min(90.0));
    let mut out = Vec::new();
    for poly in land.orient(Direction::Default).0 {
        for ring in std::iter::once(poly.exterior()).chain(poly.interiors()) {
            let mut r = open_ring(ring);
            if hi.x > 180.0 {
                r = ring_near(&r, x0, x1);
            }
            for (axis, v, keep_low) in [
                (Axis::X, x0, false),
                (Axis::X, x1, true),
                (Axis::Y, y0, false),
                (Axis::Y, y1, true),
            ] {
                if r.len() < 3 {
                    break;
                }
                r = clip_ring(&r, axis, v, keep_low);
            }
            if r.len() >= 3 {
                out.push(Polygon::new(LineString(r), Vec::new()));
            }
        }
    }
    Ok(MultiPolygon(out))
}

/// Ring coordinates without the closing repeat.
fn open_ring(ls: &LineString<f64>) -> Ring {
    let mut v = ls.0.clone();
    if v.len() > 1 && v.first() == v.last() {
        v.pop();
    }
    v
}

/// The square lattice: line `k` lies at `origin + k·s` on each axis.
struct Lattice {
    origin: [f64; 2],
    s: f64,
    /// Least sea area a kept cell must have. Units: m².
    keep_m2: f64,
}

impl Lattice {
    fn x(&self, col: u32) -> f64 {
        lattice_line(self.origin[0], self.s, col)
    }
    fn y(&self, row: u32) -> f64 {
        lattice_line(self.origin[1], self.s, row)
    }
}

/// Coordinate of lattice line `k`; the one formula every part of the grid stage uses, so
/// both cells on a line see the same number.
pub(crate) fn lattice_line(origin: f64, s: f64, k: u32) -> f64 {
    origin + k as f64 * s
}

/// A block of lattice squares, half-open: columns `c0..c1`, rows `r0..r1`.
#[derive(Debug, Clone, Copy)]
struct Block {
    c0: u32,
    c1: u32,
    r0: u32,
    r1: u32,
}

impl Block {
    fn n_cells(&self) -> u64 {
        (self.c1 - self.c0) as u64 * (self.r1 - self.r0) as u64
    }
}

/// A kept cell before ids are assigned.
struct RawCell {
    col: u32,
    row: u32,
    centre: [f64; 2],
    area_m2: f64,
    perimeter_m: f64,
    clipped: Option<MultiPolygon<f64>>,
}

#[derive(Debug, Clone, Copy)]
enum Axis {
    X,
    Y,
}

/// Sutherland–Hodgman clip of one ring against the half-plane `v ≤ m` (`keep_low`) or
/// `v ≥ m`. New vertices lie exactly on the line. For a non-convex ring the result may run
/// back and forth along the line; that adds no area, and winding numbers inside the
/// half-plane are unchanged, which is all the bisection relies on.
fn clip_ring(ring: &[Coord<f64>], axis: Axis, m: f64, keep_low: bool) -> Ring {
    let v = |c: &Coord<f64>| match axis {
        Axis::X => c.x,
        Axis::Y => c.y,
    };
    let inside = |c: &Coord<f64>| if keep_low { v(c) <= m } else { v(c) >= m };
    let cross = |p: &Coord<f64>, q: &Coord<f64>| {
        let t = (m - v(p)) / (v(q) - v(p));
        match axis {
            Axis::X => Coord {
                x: m,
                y: p.y + t * (q.y - p.y),
            },
            Axis::Y => Coord {
                x: p.x + t * (q.x - p.x),
                y: m,
            },
        }
    };
    let n = ring.len();
    let mut out = Vec::with_capacity(n + 4);
    for i in 0..n {
        let p = &ring[(i + n - 1) % n];
        let q = &ring[i];
        match (inside(p), inside(q)) {
            (true, true) => out.push(*q),
            (false, true) => {
                if v(q) != m {
                    out.push(cross(p, q));
                }
                out.push(*q);
            }
            (true, false) => {
                if v(p) != m {
                    out.push(cross(p, q));
                }
            }
            (false, false) => {}
        }
    }
    // A ring left lying wholly on the cut line encloses nothing.
    if out.iter().all(|c| v(c) == m) {
        out.clear();
    }
    out
}

/// Twice the signed area of the rings, measured from `o` to limit rounding. Units: m².
fn twice_signed_area(rings: &[Ring], o: Coord<f64>) -> f64 {
    let mut sum = 0.0;
    for r in rings {
        let n = r.len();
        for i in 0..n {
            let (p, q) = (r[i], r[(i + 1) % n]);
            sum += (p.x - o.x) * (q.y - o.y) - (q.x - o.x) * (p.y - o.y);
        }
    }
    sum
}

/// Cuts the sea rings of `block` into kept cells (any order).
fn split(lat: &Lattice, rings: Vec<Ring>, block: Block) -> Vec<RawCell> {
    if rings.is_empty() {
        return Vec::new();
    }
    // Shrink the block to the rings' extent: empty margins cost nothing further.
    let (mut lo, mut hi) = (
        Coord {
            x: f64::INFINITY,
            y: f64::INFINITY,
        },
        Coord {
            x: f64::NEG_INFINITY,
            y: f64::NEG_INFINITY,
        },
    );
    for c in rings.iter().flatten() {
        lo = Coord {
            x: lo.x.min(c.x),
            y: lo.y.min(c.y),
        };
        hi = Coord {
            x: hi.x.max(c.x),
            y: hi.y.max(c.y),
        };
    }
    let idx = |v: f64, o: f64| (v - o) / lat.s;
    let clamp = |f: f64, a: u32, b: u32| f.max(a as f64).min(b as f64) as u32;
    let block = Block {
        c0: clamp(idx(lo.x, lat.origin[0]).floor(), block.c0, block.c1),
        c1: clamp(idx(hi.x, lat.origin[0]).ceil(), block.c0, block.c1),
        r0: clamp(idx(lo.y, lat.origin[1]).floor(), block.r0, block.r1),
        r1: clamp(idx(hi.y, lat.origin[1]).ceil(), block.r0, block.r1),
    };
    if block.c0 >= block.c1 || block.r0 >= block.r1 {
        return Vec::new();
    }
    let (x0, x1, y0, y1) = (
        lat.x(block.c0),
        lat.x(block.c1),
        lat.y(block.r0),
        lat.y(block.r1),
    );

    // Uniform block: every edge runs along the block's border, so the winding number is the
    // same everywhere inside; the area says which (1 = sea, 0 = not).
    let on_border = |p: &Coord<f64>, q: &Coord<f64>| {
        (p.x == x0 && q.x == x0)
            || (p.x == x1 && q.x == x1)
            || (p.y == y0 && q.y == y0)
            || (p.y == y1 && q.y == y1)
    };
    let uniform = rings
        .iter()
        .all(|r| (0..r.len()).all(|i| on_border(&r[i], &r[(i + 1) % r.len()])));
    if uniform {
        let area = 0.5 * twice_signed_area(&rings, Coord { x: x0, y: y0 });
        if area > 0.5 * (x1 - x0) * (y1 - y0) {
            return full_cells(lat, block);
        }
        return Vec::new();
    }
    if block.n_cells() == 1 {
        return finish_cell(lat, block.c0, block.r0, &rings)
            .into_iter()
            .collect();
    }

    let (axis, m, lo_block, hi_block) = if block.c1 - block.c0 >= block.r1 - block.r0 {
        let mid = block.c0 + (block.c1 - block.c0) / 2;
        (
            Axis::X,
            lat.x(mid),
            Block { c1: mid, ..block },
            Block { c0: mid, ..block },
        )
    } else {
        let mid = block.r0 + (block.r1 - block.r0) / 2;
        (
            Axis::Y,
            lat.y(mid),
            Block { r1: mid, ..block },
            Block { r0: mid, ..block },
        )
    };
    let cut = |keep_low: bool| -> Vec<Ring> {
        rings
            .iter()
            .map(|r| clip_ring(r, axis, m, keep_low))
            .filter(|r| r.len() >= 3)
            .collect()
    };
    let vertices: usize = rings.iter().map(Vec::len).sum();
    let (mut a, b) = if block.n_cells() >= 64 || vertices >= 2048 {
        rayon::join(
            || split(lat, cut(true), lo_block),
            || split(lat, cut(false), hi_block),
        )
    } else {
        (
            split(lat, cut(true), lo_block),
            split(lat, cut(false), hi_block),
        )
    };
    a.extend(b);
    a
}

/// Every square of a uniform sea block, as full cells.
fn full_cells(lat: &Lattice, block: Block) -> Vec<RawCell> {
    let s = lat.s;
    let mut out = Vec::with_capacity(block.n_cells() as usize);
    for row in block.r0..block.r1 {
        for col in block.c0..block.c1 {
            out.push(RawCell {
                col,
                row,
                centre: [
                    0.5 * (lat.x(col) + lat.x(col + 1)),
                    0.5 * (lat.y(row) + lat.y(row + 1)),
                ],
                area_m2: s * s,
                perimeter_m: 4.0 * s,
                clipped: None,
            });
        }
    }
    out
}

/// One square the sea boundary passes through: clean its rings into a valid polygon,
/// snap vertices onto the square's edges, measure it; `None` when it is a sliver.
fn finish_cell(lat: &Lattice, col: u32, row: u32, rings: &[Ring]) -> Option<RawCell> {
    let (x0, x1, y0, y1) = (lat.x(col), lat.x(col + 1), lat.y(row), lat.y(row + 1));
    let full_m2 = (x1 - x0) * (y1 - y0);
    if 0.5 * twice_signed_area(rings, Coord { x: x0, y: y0 }) < lat.keep_m2 {
        return None;
    }
    // The clipped rings may run back and forth along the square's edges; a union with
    // nothing under the non-zero rule turns them into valid polygons (holes included).
    let loose = MultiPolygon(
        rings
            .iter()
            .map(|r| Polygon::new(LineString(r.clone()), Vec::new()))
            .collect(),
    );
    let clean = loose.boolean_op_with_fill_rule(
        &MultiPolygon(Vec::new()),
        OpType::Union,
        FillRule::NonZero,
    );
    let eps = SNAP_SHARE * lat.s;
    let snap = |v: f64, a: f64, b: f64| {
        if (v - a).abs() <= eps {
            a
        } else if (v - b).abs() <= eps {
            b
        } else {
            v.clamp(a, b)
        }
    };
    let fix_ring = |ls: &LineString<f64>| -> Option<LineString<f64>> {
        let mut v: Vec<Coord<f64>> = Vec::with_capacity(ls.0.len());
        for c in &ls.0 {
            let c = Coord {
                x: snap(c.x, x0, x1),
                y: snap(c.y, y0, y1),
            };
            if v.last() != Some(&c) {
                v.push(c);
            }
        }
        (v.len() >= 4).then_some(LineString(v))
    };
    let polys: Vec<Polygon<f64>> = clean
        .0
        .iter()
        .filter_map(|p| {
            let ext = fix_ring(p.exterior())?;
            Some(Polygon::new(
                ext,
                p.interiors().iter().filter_map(fix_ring).collect(),
            ))
        })
        .collect();
    let mp = MultiPolygon(polys).orient(Direction::Default);
    let area_m2 = mp.unsigned_area();
    if area_m2 < lat.keep_m2 {
        return None;
    }
    let on_edge = |c: &Coord<f64>| c.x == x0 || c.x == x1 || c.y == y0 || c.y == y1;
    let is_square = mp.0.len() == 1
        && mp.0[0].interiors().is_empty()
        && mp.0[0].exterior().0.iter().all(on_edge)
        && area_m2 >= full_m2 * (1.0 - 1e-9);
    if is_square {
        return full_cells(
            lat,
            Block {
                c0: col,
                c1: col + 1,
                r0: row,
                r1: row + 1,
            },
        )
        .pop();
    }
    let perimeter_m =
        mp.0.iter()
            .flat_map(|p| std::iter::once(p.exterior()).chain(p.interiors()))
            .flat_map(|ls| {
                ls.0.windows(2)
                    .map(|w| (w[1].x - w[0].x).hypot(w[1].y - w[0].y))
            })
            .sum();
    let centre = mp
        .centroid()
        .map(|p| [p.x(), p.y()])
        .unwrap_or([0.5 * (x0 + x1), 0.5 * (y0 + y1)]);
    Some(RawCell {
        col,
        row,
        centre,
        area_m2,
        perimeter_m,
        clipped: Some(mp),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use geo::polygon;

    fn c(x: f64, y: f64) -> Coord<f64> {
        Coord { x, y }
    }

    // Hand computation: the unit square (0,0)-(1,1) clipped to x ≤ 0.25 is the box
    // (0,0)-(0.25,1), area 0.25; clipped to x ≥ 0.25 the rest, area 0.75.
    #[test]
    fn clip_ring_splits_a_square() {
        let sq = vec![c(0.0, 0.0), c(1.0, 0.0), c(1.0, 1.0), c(0.0, 1.0)];
        let lo = clip_ring(&sq, Axis::X, 0.25, true);
        let hi = clip_ring(&sq, Axis::X, 0.25, false);
        assert!(
            (0.5 * twice_signed_area(std::slice::from_ref(&lo), c(0.0, 0.0)) - 0.25).abs() < 1e-15
        );
        assert!((0.5 * twice_signed_area(&[hi], c(0.0, 0.0)) - 0.75).abs() < 1e-15);
        // New vertices lie exactly on the cut line.
        assert!(lo.iter().all(|p| p.x <= 0.25));
        assert_eq!(lo.iter().filter(|p| p.x == 0.25).count(), 2);
    }

    // Hand computation: a U-shaped ring (two prongs joined at the bottom) cut above the
    // bottom bar leaves two prongs joined by a zero-width run along the cut line; its area
    // is that of the two prongs, 2 × (1 × 2) = 4, and the winding number is 0 between them.
    #[test]
    fn clip_ring_non_convex_keeps_area() {
        let u = vec![
            c(0.0, 0.0),
            c(3.0, 0.0),
            c(3.0, 3.0),
            c(2.0, 3.0),
            c(2.0, 1.0),
            c(1.0, 1.0),
            c(1.0, 3.0),
            c(0.0, 3.0),
        ];
        let top = clip_ring(&u, Axis::Y, 1.0, false);
        assert!((0.5 * twice_signed_area(&[top], c(0.0, 0.0)) - 4.0).abs() < 1e-12);
        // Ring wholly on the cut line is dropped.
        let flat = vec![c(0.0, 1.0), c(1.0, 1.0), c(2.0, 1.0)];
        assert!(clip_ring(&flat, Axis::Y, 1.0, true).is_empty());
    }

    // Hand computation: a 10 km × 10 km sea square with origin on the lattice and 4 km cells
    // gives 3 × 3 squares; full ones: (0,0),(1,0),(0,1),(1,1) = 4 of 16 km²; column 2 and row
    // 2 squares hold 2 km × 4 km = 8 km² (share 0.5), the corner 2 × 2 = 4 km² (0.25).
    #[test]
    fn split_classifies_full_and_partial_squares() {
        let lat = Lattice {
            origin: [0.0, 0.0],
            s: 4000.0,
            keep_m2: 0.3 * 16.0e6,
        };
        let sea = vec![
            c(0.0, 0.0),
            c(10_000.0, 0.0),
            c(10_000.0, 10_000.0),
            c(0.0, 10_000.0),
        ];
        let mut cells = split(
            &lat,
            vec![sea],
            Block {
                c0: 0,
                c1: 3,
                r0: 0,
                r1: 3,
            },
        );
        cells.sort_by_key(|k| (k.row, k.col));
        let got: Vec<(u32, u32, f64, bool)> = cells
            .iter()
            .map(|k| {
                (
                    k.col,
                    k.row,
                    (k.area_m2 / 1e6 * 1e9).round() / 1e9,
                    k.clipped.is_some(),
                )
            })
            .collect();
        assert_eq!(
            got,
            vec![
                (0, 0, 16.0, false),
                (1, 0, 16.0, false),
                (2, 0, 8.0, true),
                (0, 1, 16.0, false),
                (1, 1, 16.0, false),
                (2, 1, 8.0, true),
                (0, 2, 8.0, true),
                (1, 2, 8.0, true),
            ],
            "the 4 km² corner is below the 0.3 share and dropped"
        );
        // Perimeter of a 2 km × 4 km piece = 12 km; its centroid is the piece's centre.
        let k = &cells[2];
        assert!((k.perimeter_m - 12_000.0).abs() < 1e-6);
        assert!((k.centre[0] - 9_000.0).abs() < 1e-6 && (k.centre[1] - 2_000.0).abs() < 1e-6);
    }

    // Hand computation: a 4 km square cell holding a 1 km × 1 km hole has sea 15 km² and
    // perimeter 16 + 4 = 20 km; the hole survives the cleaning overlay.
    #[test]
    fn finish_cell_keeps_holes() {
        let lat = Lattice {
            origin: [0.0, 0.0],
            s: 4000.0,
            keep_m2: 0.0,
        };
        let outer = vec![
            c(0.0, 0.0),
            c(4000.0, 0.0),
            c(4000.0, 4000.0),
            c(0.0, 4000.0),
        ];
        let hole = vec![
            c(1000.0, 1000.0),
            c(1000.0, 2000.0),
            c(2000.0, 2000.0),
            c(2000.0, 1000.0),
        ];
        let k = finish_cell(&lat, 0, 0, &[outer, hole]).expect("cell kept");
        assert!((k.area_m2 - 15.0e6).abs() < 1e-3);
        assert!((k.perimeter_m - 20_000.0).abs() < 1e-6);
        assert_eq!(
            k.clipped.as_ref().map(|m| m.0[0].interiors().len()),
            Some(1)
        );
    }

    #[test]
    fn region_bounds_and_its_errors() {
        let r = MultiPolygon(vec![
            polygon![(x: 10.0, y: 50.0), (x: 12.0, y: 50.0), (x: 12.0, y: 51.0), (x: 10.0, y: 50.0)],
        ]);
        let b = region_bounds_lonlat(&r).unwrap();
        assert_eq!(
            (b.min().x, b.min().y, b.max().x, b.max().y),
            (10.0, 50.0, 12.0, 51.0)
        );
        assert!(matches!(
            region_bounds_lonlat(&MultiPolygon(vec![])),
            Err(GridError::EmptyRegion(_))
        ));
        let bad = MultiPolygon(vec![
            polygon![(x: 10.0, y: 95.0), (x: 12.0, y: 50.0), (x: 12.0, y: 51.0)],
        ]);
        let e = region_bounds_lonlat(&bad).unwrap_err().to_string();
        assert!(e.contains("polygon 0, ring 0, vertex 0"), "{e}");
        let jump = MultiPolygon(vec![
            polygon![(x: 179.0, y: 0.0), (x: -179.0, y: 0.0), (x: -179.0, y: 1.0), (x: 179.0, y: 1.0)],
        ]);
        assert!(matches!(
            region_bounds_lonlat(&jump),
            Err(GridError::Antimeridian { .. })
        ));
    }

    // Hand computation: 1 000 000 km² over 5 000 000 cells needs 0.2 km² cells, side
    // √0.2 = 0.447 km; ×1.05 = 0.4696, rounded up to two digits = 0.47 km.
    #[test]
    fn suggested_cell_size() {
        assert!((suggest_cell_km(1.0e6) - 0.47).abs() < 1e-12);
        let s = suggest_cell_km(3.0e8);
        assert!(3.0e8 / (s * s) < MAX_CELLS as f64);
    }
}
