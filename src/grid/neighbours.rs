//! Rook neighbours of grid cells and the length of sea edge each pair shares.

use super::build::{lattice_line, SNAP_SHARE};
use super::{Grid, Neighbour};
use rayon::prelude::*;

/// Neighbours sharing less than this share of a cell side are dropped (they touch at a
/// point or along a numerical sliver, not along a real edge).
const MIN_SHARED_SHARE: f64 = 1e-6;

/// Rook neighbours (south, west, east, north) of every cell of `grid`, each list sorted by
/// cell id, with the length of the sea edge both cells share. Full squares share a whole
/// side; a clipped cell shares only the part of the lattice line where both cells' sea
/// polygons have edges. Reads `cells`, `lattice` and the lattice geometry; ignores
/// `grid.neighbours`. Units of `shared_km`: km.
pub fn rook_neighbours(grid: &Grid) -> Vec<Vec<Neighbour>> {
    let min_m = MIN_SHARED_SHARE * grid.cell_size_m;
    (0..grid.cells.len())
        .into_par_iter()
        .map(|id| {
            let c = &grid.cells[id];
            let id = id as u32;
            // Ascending id order: south, west, east, north (ids run row by row).
            let candidates = [
                c.row.checked_sub(1).and_then(|r| grid.cell_at(c.col, r)),
                c.col.checked_sub(1).and_then(|q| grid.cell_at(q, c.row)),
                grid.cell_at(c.col + 1, c.row),
                grid.cell_at(c.col, c.row + 1),
            ];
            candidates
                .into_iter()
                .flatten()
                .filter_map(|other| {
                    let m = shared_edge_m(grid, id.min(other), id.max(other));
                    (m >= min_m).then_some(Neighbour {
                        cell: other,
                        shared_km: m / 1000.0,
                    })
                })
                .collect()
        })
        .collect()
}

/// Length of sea edge shared by rook-adjacent cells `a < b` (b east or north of a).
/// Units: metres.
pub fn shared_edge_m(grid: &Grid, a: u32, b: u32) -> f64 {
    let (ca, cb) = (&grid.cells[a as usize], &grid.cells[b as usize]);
    let s = grid.cell_size_m;
    let (axis, line, span) = if ca.row == cb.row && cb.col == ca.col + 1 {
        let span = (
            lattice_line(grid.origin[1], s, ca.row),
            lattice_line(grid.origin[1], s, ca.row + 1),
        );
        (0, lattice_line(grid.origin[0], s, cb.col), span)
    } else if ca.col == cb.col && cb.row == ca.row + 1 {
        let span = (
            lattice_line(grid.origin[0], s, ca.col),
            lattice_line(grid.origin[0], s, ca.col + 1),
        );
        (1, lattice_line(grid.origin[1], s, cb.row), span)
    } else {
        return 0.0;
    };
    let eps = SNAP_SHARE * s;
    let ia = intervals_on_line(grid, a, axis, line, span, eps);
    let ib = intervals_on_line(grid, b, axis, line, span, eps);
    overlap_length(&ia, &ib)
}

/// The parts of the line `coord[axis] = line` (within `span` along the other axis) where a
/// cell's sea polygon has edges, as sorted disjoint intervals.
fn intervals_on_line(
    grid: &Grid,
    id: u32,
    axis: usize,
    line: f64,
    span: (f64, f64),
    eps: f64,
) -> Vec<(f64, f64)> {
    let cell = &grid.cells[id as usize];
    let Some(mp) = &cell.clipped else {
        return vec![span];
    };
    let v = |c: &geo::Coord<f64>| if axis == 0 { c.x } else { c.y };
    let mut iv: Vec<(f64, f64)> = Vec::new();
    for ring in
        mp.0.iter()
            .flat_map(|p| std::iter::once(p.exterior()).chain(p.interiors()))
    {
        for w in ring.0.windows(2) {
            let (p, q) = (w[0], w[1]);
            if (v(&p) - line).abs() <= eps && (v(&q) - line).abs() <= eps {
                let (a, b) = if axis == 0 { (p.y, q.y) } else { (p.x, q.x) };
                let (lo, hi) = (a.min(b).max(span.0), a.max(b).min(span.1));
                if hi > lo {
                    iv.push((lo, hi));
                }
            }
        }
    }
    iv.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut merged: Vec<(f64, f64)> = Vec::with_capacity(iv.len());
    for (lo, hi) in iv {
        match merged.last_mut() {
            Some(last) if lo <= last.1 => last.1 = last.1.max(hi),
            _ => merged.push((lo, hi)),
        }
    }
    merged
}

/// Total length of the intersection of two sorted disjoint interval lists.
fn overlap_length(a: &[(f64, f64)], b: &[(f64, f64)]) -> f64 {
    let (mut i, mut j, mut sum) = (0, 0, 0.0);
    while i < a.len() && j < b.len() {
        let lo = a[i].0.max(b[j].0);
        let hi = a[i].1.min(b[j].1);
        if hi > lo {
            sum += hi - lo;
        }
        if a[i].1 < b[j].1 {
            i += 1;
        } else {
            j += 1;
        }
    }
    sum
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::{Cell, Crs, Grid, NO_CELL};
    use geo::{polygon, MultiPolygon};

    // Brute force: sample both interval lists on a fine grid of points and count the points
    // inside both; compared with the sweep's exact total.
    #[test]
    fn overlap_length_matches_brute_force() {
        let a = [(0.0, 1.0), (2.0, 3.5), (4.0, 6.0)];
        let b = [(0.5, 2.5), (3.0, 4.5), (5.5, 7.0)];
        let n = 700_000;
        let inside = |l: &[(f64, f64)], x: f64| l.iter().any(|&(lo, hi)| x > lo && x < hi);
        let hits = (0..n).filter(|k| {
            let x = (*k as f64 + 0.5) * 7.0 / n as f64;
            inside(&a, x) && inside(&b, x)
        });
        let brute = hits.count() as f64 * 7.0 / n as f64;
        // By hand: [0.5,1] [2,2.5] [3,3.5] [4,4.5] [5.5,6] → 5 × 0.5 = 2.5.
        assert!((overlap_length(&a, &b) - 2.5).abs() < 1e-12);
        assert!((brute - 2.5).abs() < 1e-4);
    }

    fn cell(col: u32, row: u32, clipped: Option<MultiPolygon<f64>>) -> Cell {
        Cell {
            col,
            row,
            centre: [0.0, 0.0],
            lonlat: [0.0, 0.0],
            sea_area_km2: 0.0,
            perimeter_km: 0.0,
            clipped,
        }
    }

    // Hand computation, 1 km cells: cell 0 is a full square at (0,0); cell 1 east of it holds
    // only the lower 0.3 km of its square (sea polygon 1000..2000 × 0..300), so they share
    // 0.3 km; cell 2 north of cell 0 is a triangle touching the common line at one point only,
    // so it is not a neighbour.
    #[test]
    fn clipped_neighbours_share_only_sea_edges() {
        let east = MultiPolygon(vec![
            polygon![(x: 1000.0, y: 0.0), (x: 2000.0, y: 0.0), (x: 2000.0, y: 300.0), (x: 1000.0, y: 300.0), (x: 1000.0, y: 0.0)],
        ]);
        let north = MultiPolygon(vec![
            polygon![(x: 0.0, y: 1000.0), (x: 1000.0, y: 1500.0), (x: 0.0, y: 2000.0), (x: 0.0, y: 1000.0)],
        ]);
        let grid = Grid {
            crs: Crs::auto_laea(0.0, 0.0),
            cell_size_m: 1000.0,
            origin: [0.0, 0.0],
            n_cols: 2,
            n_rows: 2,
            cells: vec![
                cell(0, 0, None),
                cell(1, 0, Some(east)),
                cell(0, 1, Some(north)),
            ],
            neighbours: Vec::new(),
            lattice: vec![0, 1, 2, NO_CELL],
            sea_area_km2: 0.0,
        };
        let n = rook_neighbours(&grid);
        assert_eq!(
            n[0],
            vec![Neighbour {
                cell: 1,
                shared_km: 0.3
            }]
        );
        assert_eq!(
            n[1],
            vec![Neighbour {
                cell: 0,
                shared_km: 0.3
            }]
        );
        assert!(n[2].is_empty());
        assert!((shared_edge_m(&grid, 0, 1) - 300.0).abs() < 1e-9);
        assert_eq!(shared_edge_m(&grid, 1, 2), 0.0, "not rook-adjacent");
    }
}
