//! Grid stage: takes the region (lon/lat polygons) and a grid spec, returns a [`Grid`] of
//! square equal-area cells clipped to sea, with rook neighbours and shared edge lengths.
//!
//! Look-ups (`locate`, `cells_in_rect`) use exact lattice arithmetic on the square lattice,
//! which is O(1) per cell and needs no spatial index.

use geo::MultiPolygon;

/// A projected, equal-area coordinate reference system, as PROJ understands it.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Crs {
    /// A PROJ string (`+proj=laea ...`) or an authority code (`EPSG:3035`).
    pub definition: String,
}

/// How the plan chooses the grid's CRS.
#[derive(Debug, Clone, PartialEq)]
pub enum CrsChoice {
    /// Lambert azimuthal equal-area centred on the region's bounding-box centre.
    Auto,
    /// Any CRS PROJ knows (e.g. `EPSG:3035`); it must be projected and equal-area for
    /// areas to be right (driftplan measures areas geodesically-consistent only then).
    Given(String),
}

/// What the grid stage needs to know.
#[derive(Debug, Clone, PartialEq)]
pub struct GridSpec {
    /// Side of a square cell. Units: km.
    pub cell_size_km: f64,
    /// Projection to build the grid in.
    pub crs: CrsChoice,
    /// Cells whose sea share of a full cell is below this are dropped as slivers (0–1).
    ///
    /// A square is kept when its sea area ≥ `min_sea_share` × the full cell area; shares
    /// under 1e-9 are numerical noise and always dropped. The plan's default, 0.1, drops
    /// coastal crumbs whose edge-to-area ratio would distort edge penalties.
    pub min_sea_share: f64,
}

/// One rook neighbour of a cell and the length of the edge both cells share.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Neighbour {
    /// Neighbouring cell id.
    pub cell: u32,
    /// Length of the shared sea edge. Units: km.
    pub shared_km: f64,
}

/// One planning cell: the sea part of one square of the lattice.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Cell {
    /// Column in the lattice (0 = west).
    pub col: u32,
    /// Row in the lattice (0 = south).
    pub row: u32,
    /// Centroid of the sea part, projected metres.
    pub centre: [f64; 2],
    /// Centroid of the sea part, WGS84 degrees `[lon, lat]`.
    pub lonlat: [f64; 2],
    /// Sea area. Units: km².
    pub sea_area_km2: f64,
    /// Perimeter of the sea part (shared edges, coast and region boundary). Units: km.
    pub perimeter_km: f64,
    /// The clipped sea polygon (projected metres) when the cell is not a full square.
    pub clipped: Option<MultiPolygon<f64>>,
}

/// The planning grid. Cell ids are indices into `cells` and into every dense per-cell vector.
#[derive(Debug, Clone, serde::Serialize, serde::Deserialize)]
pub struct Grid {
    /// The projected CRS cells live in.
    pub crs: Crs,
    /// Cell side. Units: metres.
    pub cell_size_m: f64,
    /// Projected coordinates of the south-west corner of column 0, row 0.
    pub origin: [f64; 2],
    /// Lattice columns.
    pub n_cols: u32,
    /// Lattice rows.
    pub n_rows: u32,
    /// Kept cells, ordered by row then column.
    pub cells: Vec<Cell>,
    /// Rook neighbours of each cell, sorted by cell id.
    pub neighbours: Vec<Vec<Neighbour>>,
    /// Cell id at each lattice position (`row * n_cols + col`), [`NO_CELL`] where none.
    pub lattice: Vec<u32>,
    /// Sea area of the whole region after clipping and sliver removal. Units: km².
    pub sea_area_km2: f64,
}

pub mod build;
pub mod crs;
pub mod ellipsoid;
pub mod neighbours;

pub use build::{build_grid, region_bounds_lonlat, DENSIFY_DEG, MAX_CELLS};
pub use crs::{CrsInfo, Projector};
pub use ellipsoid::lonlat_box_area_km2;
pub use neighbours::rook_neighbours;

use geo::{polygon, Rect};

/// Errors of the grid stage.
#[derive(Debug, thiserror::Error)]
pub enum GridError {
    /// PROJ does not understand the CRS.
    #[error("unknown or unusable CRS `{definition}`: {reason} (expected e.g. `EPSG:3035` or a `+proj=laea ...` string)")]
    Crs {
        /// The CRS text given.
        definition: String,
        /// PROJ's message.
        reason: String,
    },
    /// A coordinate could not be transformed.
    #[error("cannot transform coordinate ({lon}, {lat}): {reason}")]
    Transform {
        /// First coordinate.
        lon: f64,
        /// Second coordinate.
        lat: f64,
        /// PROJ's message.
        reason: String,
    },
    /// The grid spec or region cannot give a grid.
    #[error("{0}")]
    Invalid(String),
    /// A CRS in degrees was given where the grid needs metres.
    #[error("CRS `{definition}` is geographic (degrees); the grid needs a projected equal-area CRS in metres, e.g. `crs = \"EPSG:3035\"`, or `crs = \"auto\"` for a Lambert azimuthal equal-area centred on the region")]
    Geographic {
        /// The CRS text given.
        definition: String,
    },
    /// A projected CRS that does not keep areas (or is not in metres) over the region.
    #[error("CRS `{definition}` is not equal-area in metres over the region: a small box at ({lon:.3}, {lat:.3}) measures {ratio:.6} times its true area; use an equal-area CRS in metres, e.g. `crs = \"auto\"` (Lambert azimuthal equal-area)")]
    NotEqualArea {
        /// The CRS text given.
        definition: String,
        /// Longitude of the test box (degrees).
        lon: f64,
        /// Latitude of the test box (degrees).
        lat: f64,
        /// Projected area ÷ true ellipsoidal area of the test box.
        ratio: f64,
    },
    /// The region has no area (no polygons, or land covers it all).
    #[error("the region is empty: {0}")]
    EmptyRegion(String),
    /// The region is wider than 180° of longitude, even read across the antimeridian, or a
    /// ring jumps across it instead of being split there.
    #[error("the region spans longitudes {west}..{east}: wider than 180° even when read across the antimeridian, or a ring jumps across 180° (RFC 7946 §3.1.9: split rings that cross it into pieces either side); plan each ocean basin separately")]
    Antimeridian {
        /// Westernmost longitude found (degrees).
        west: f64,
        /// Easternmost longitude found (degrees).
        east: f64,
    },
    /// The grid would have more cells than driftplan handles.
    #[error("the grid would have about {cells} cells (limit {limit}) with cell_size_km = {cell_size_km}; use a larger cell size, e.g. `cell_size_km = {suggested_km}`")]
    TooManyCells {
        /// Estimated or counted cells.
        cells: usize,
        /// The limit, [`MAX_CELLS`].
        limit: usize,
        /// The cell size asked for. Units: km.
        cell_size_km: f64,
        /// A cell size that would stay under the limit. Units: km.
        suggested_km: f64,
    },
    /// No lattice square keeps enough sea.
    #[error("no cell keeps at least {min_sea_share} of its area as sea with cell_size_km = {cell_size_km} (sea area {sea_area_km2:.3} km²); use a smaller `cell_size_km` or a smaller `min_sea_share`")]
    NoCells {
        /// The cell size asked for. Units: km.
        cell_size_km: f64,
        /// The sliver threshold asked for (0–1).
        min_sea_share: f64,
        /// The region's sea area. Units: km².
        sea_area_km2: f64,
    },
}

/// Marks lattice positions with no kept cell in [`Grid::lattice`].
pub const NO_CELL: u32 = u32::MAX;

impl Grid {
    /// Number of cells.
    pub fn len(&self) -> usize {
        self.cells.len()
    }

    /// True when the grid has no cells.
    pub fn is_empty(&self) -> bool {
        self.cells.is_empty()
    }

    /// Lattice `(col, row)` of a projected point, if inside the lattice's extent.
    pub fn lattice_position(&self, xy: [f64; 2]) -> Option<(u32, u32)> {
        let c = ((xy[0] - self.origin[0]) / self.cell_size_m).floor();
        let r = ((xy[1] - self.origin[1]) / self.cell_size_m).floor();
        // Written so that NaN coordinates fall outside too.
        if !(c >= 0.0 && r >= 0.0 && c < self.n_cols as f64 && r < self.n_rows as f64) {
            return None;
        }
        Some((c as u32, r as u32))
    }

    /// The cell id at lattice `(col, row)`, if a cell was kept there.
    pub fn cell_at(&self, col: u32, row: u32) -> Option<u32> {
        if col >= self.n_cols || row >= self.n_rows {
            return None;
        }
        let id = self.lattice[(row as usize) * (self.n_cols as usize) + col as usize];
        (id != NO_CELL).then_some(id)
    }

    /// The cell whose square holds a projected point (exact lattice arithmetic, O(1)).
    /// A point on the land part of a clipped square still returns that cell.
    pub fn locate(&self, xy: [f64; 2]) -> Option<u32> {
        let (c, r) = self.lattice_position(xy)?;
        self.cell_at(c, r)
    }

    /// Ids of cells whose squares meet the projected rectangle `[min, max]`, ascending.
    pub fn cells_in_rect(&self, min: [f64; 2], max: [f64; 2]) -> Vec<u32> {
        if !(min.iter().chain(max.iter()).all(|v| v.is_finite())) {
            return Vec::new();
        }
        let s = self.cell_size_m;
        let c0 = (((min[0] - self.origin[0]) / s).floor().max(0.0)) as i64;
        let r0 = (((min[1] - self.origin[1]) / s).floor().max(0.0)) as i64;
        let c1 = (((max[0] - self.origin[0]) / s).floor() as i64).min(self.n_cols as i64 - 1);
        let r1 = (((max[1] - self.origin[1]) / s).floor() as i64).min(self.n_rows as i64 - 1);
        let mut out = Vec::new();
        for r in r0..=r1 {
            for c in c0..=c1 {
                if let Some(id) = self.cell_at(c as u32, r as u32) {
                    out.push(id);
                }
            }
        }
        out
    }

    /// The full lattice square of a cell (projected metres).
    pub fn cell_square(&self, id: u32) -> Rect<f64> {
        let cell = &self.cells[id as usize];
        // The same lattice-line formula the builder uses, so squares and clipped cells agree
        // to the last bit on shared lines.
        let line = |o: f64, k: u32| build::lattice_line(o, self.cell_size_m, k);
        Rect::new(
            (
                line(self.origin[0], cell.col),
                line(self.origin[1], cell.row),
            ),
            (
                line(self.origin[0], cell.col + 1),
                line(self.origin[1], cell.row + 1),
            ),
        )
    }

    /// The cell's sea polygon (projected metres): the clipped shape, or the full square.
    pub fn cell_polygon(&self, id: u32) -> MultiPolygon<f64> {
        match &self.cells[id as usize].clipped {
            Some(mp) => mp.clone(),
            None => {
                let r = self.cell_square(id);
                let (a, b) = (r.min(), r.max());
                // Counter-clockwise exterior (RFC 7946 order), starting south-west.
                MultiPolygon(vec![polygon![
                    (x: a.x, y: a.y), (x: b.x, y: a.y), (x: b.x, y: b.y), (x: a.x, y: b.y), (x: a.x, y: a.y)
                ]])
            }
        }
    }

    /// The cell's sea polygon in WGS84 lon/lat, with edges densified to `max_step_m` metres
    /// first (a straight projected edge is curved in lon/lat). `projector` must be for
    /// [`Grid::crs`] (see [`Grid::projector`]).
    pub fn cell_polygon_lonlat(
        &self,
        id: u32,
        projector: &Projector,
        max_step_m: f64,
    ) -> Result<MultiPolygon<f64>, GridError> {
        projector.polygon_to_lonlat(&self.cell_polygon(id), max_step_m)
    }

    /// A projector for this grid's CRS (one per thread: PROJ objects are not shareable).
    pub fn projector(&self) -> Result<Projector, GridError> {
        Projector::new(&self.crs)
    }

    /// Edge of a cell not shared with any other cell: coast or region boundary. Units: km.
    pub fn boundary_km(&self, id: u32) -> f64 {
        let shared: f64 = self.neighbours[id as usize]
            .iter()
            .map(|n| n.shared_km)
            .sum();
        (self.cells[id as usize].perimeter_km - shared).max(0.0)
    }

    /// A grid of `n_cols × n_rows` full square cells with no clipping: for tests, benchmarks
    /// and synthetic regions. Cell centroids are unprojected with `crs`.
    pub fn full_rectangle(
        crs: Crs,
        cell_size_m: f64,
        origin: [f64; 2],
        n_cols: u32,
        n_rows: u32,
    ) -> Result<Grid, GridError> {
        if !(cell_size_m > 0.0 && cell_size_m.is_finite()) || n_cols == 0 || n_rows == 0 {
            return Err(GridError::Invalid(format!(
                "a rectangle grid needs a positive cell size and at least one row and column (got {cell_size_m} m, {n_cols}×{n_rows})"
            )));
        }
        let n = n_cols as usize * n_rows as usize;
        if n > MAX_CELLS {
            let side_km = cell_size_m / 1000.0;
            return Err(GridError::TooManyCells {
                cells: n,
                limit: MAX_CELLS,
                cell_size_km: side_km,
                suggested_km: build::suggest_cell_km(n as f64 * side_km * side_km),
            });
        }
        let projector = Projector::new(&crs)?;
        let side_km = cell_size_m / 1000.0;
        let mut cells = Vec::with_capacity(n);
        let mut lattice = Vec::with_capacity(n);
        for row in 0..n_rows {
            for col in 0..n_cols {
                let centre = [
                    origin[0] + (col as f64 + 0.5) * cell_size_m,
                    origin[1] + (row as f64 + 0.5) * cell_size_m,
                ];
                let lonlat = projector.to_lonlat(centre[0], centre[1])?;
                lattice.push(cells.len() as u32);
                cells.push(Cell {
                    col,
                    row,
                    centre,
                    lonlat,
                    sea_area_km2: side_km * side_km,
                    perimeter_km: 4.0 * side_km,
                    clipped: None,
                });
            }
        }
        let id = |c: u32, r: u32| r * n_cols + c;
        let mut neighbours = vec![Vec::new(); cells.len()];
        for row in 0..n_rows {
            for col in 0..n_cols {
                let list = &mut neighbours[id(col, row) as usize];
                // Ascending id order: south, west, east, north.
                if row > 0 {
                    list.push(Neighbour {
                        cell: id(col, row - 1),
                        shared_km: side_km,
                    });
                }
                if col > 0 {
                    list.push(Neighbour {
                        cell: id(col - 1, row),
                        shared_km: side_km,
                    });
                }
                if col + 1 < n_cols {
                    list.push(Neighbour {
                        cell: id(col + 1, row),
                        shared_km: side_km,
                    });
                }
                if row + 1 < n_rows {
                    list.push(Neighbour {
                        cell: id(col, row + 1),
                        shared_km: side_km,
                    });
                }
            }
        }
        let sea_area_km2 = cells.len() as f64 * side_km * side_km;
        Ok(Grid {
            crs,
            cell_size_m,
            origin,
            n_cols,
            n_rows,
            cells,
            neighbours,
            lattice,
            sea_area_km2,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rect3x2() -> Grid {
        // 3 × 2 cells of 2 km with origin (1000, -4000) m.
        Grid::full_rectangle(Crs::auto_laea(5.0, 50.0), 2000.0, [1000.0, -4000.0], 3, 2).unwrap()
    }

    // Hand computation: column = floor((x − 1000)/2000), row = floor((y + 4000)/2000).
    #[test]
    fn locate_uses_lattice_arithmetic() {
        let g = rect3x2();
        assert_eq!(g.locate([1000.0, -4000.0]), Some(0));
        assert_eq!(g.locate([6999.0, -1.0]), Some(5));
        assert_eq!(g.locate([3500.0, -3000.0]), Some(1));
        assert_eq!(g.locate([7000.0, -3000.0]), None);
        assert_eq!(g.locate([999.0, -3000.0]), None);
        assert_eq!(g.locate([f64::NAN, -3000.0]), None);
        assert_eq!(
            g.cells_in_rect([2000.0, -3500.0], [3500.0, -1000.0]),
            vec![0, 1, 3, 4]
        );
        assert!(g.cells_in_rect([f64::NAN, 0.0], [1.0, 1.0]).is_empty());
        assert!(g.cells_in_rect([-9e9, -9e9], [-8e9, -8e9]).is_empty());
    }

    // Hand computation: in a 3 × 2 rectangle the middle bottom cell (id 1) has neighbours
    // 0 (west), 2 (east), 4 (north), each sharing a 2 km side; its square is
    // 3000..5000 × −4000..−2000 m; area 4 km², perimeter 8 km, of which only the south side
    // is region boundary: 8 − 3 × 2 = 2 km.
    #[test]
    fn full_rectangle_neighbours_and_squares() {
        let g = rect3x2();
        let ids: Vec<u32> = g.neighbours[1].iter().map(|n| n.cell).collect();
        assert_eq!(ids, vec![0, 2, 4]);
        assert!(g.neighbours[1].iter().all(|n| n.shared_km == 2.0));
        let r = g.cell_square(1);
        assert_eq!(
            (r.min().x, r.min().y, r.max().x, r.max().y),
            (3000.0, -4000.0, 5000.0, -2000.0)
        );
        assert_eq!(g.cells[1].sea_area_km2, 4.0);
        assert!((g.boundary_km(1) - 2.0).abs() < 1e-12);
        assert!((g.sea_area_km2 - 24.0).abs() < 1e-12);
        // Corner cell 0: neighbours 1 and 3; boundary 8 − 4 = 4 km.
        assert!((g.boundary_km(0) - 4.0).abs() < 1e-12);
    }

    #[test]
    fn full_rectangle_rejects_bad_sizes() {
        let crs = Crs::auto_laea(0.0, 0.0);
        assert!(matches!(
            Grid::full_rectangle(crs.clone(), 0.0, [0.0, 0.0], 2, 2),
            Err(GridError::Invalid(_))
        ));
        assert!(matches!(
            Grid::full_rectangle(crs.clone(), f64::NAN, [0.0, 0.0], 2, 2),
            Err(GridError::Invalid(_))
        ));
        assert!(matches!(
            Grid::full_rectangle(crs, 1000.0, [0.0, 0.0], 3000, 3000),
            Err(GridError::TooManyCells {
                cells: 9_000_000,
                ..
            })
        ));
    }
}
