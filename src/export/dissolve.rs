//! Dissolving a reserve's cells into one outline (projected metres).
//!
//! Full lattice squares are dissolved exactly by tracing the lattice edges that separate chosen
//! from unchosen squares: O(cells), no floating-point geometry. Clipped coastal cells, whose
//! shapes are arbitrary, are then merged with the traced outline in one sweep of the polygon
//! overlay behind `geo::unary_union`.

use crate::grid::Grid;
use geo::orient::{Direction, Orient};
use geo::{Coord, LineString, MultiPolygon, Polygon};

/// Lattice step directions, counter-clockwise from east.
const STEP: [(i64, i64); 4] = [(1, 0), (0, 1), (-1, 0), (0, -1)];

/// The union of the given cells' sea polygons: exteriors counter-clockwise, holes clockwise.
pub(crate) fn dissolve(grid: &Grid, cells: &[u32]) -> MultiPolygon<f64> {
    let (full, clipped): (Vec<u32>, Vec<u32>) = cells
        .iter()
        .copied()
        .partition(|&c| grid.cells[c as usize].clipped.is_none());
    let positions: Vec<(i64, i64)> = full
        .iter()
        .map(|&c| {
            (
                grid.cells[c as usize].col as i64,
                grid.cells[c as usize].row as i64,
            )
        })
        .collect();
    let rings = trace_lattice(&positions, grid.origin, grid.cell_size_m);
    let n_exterior = rings.iter().filter(|r| ring_area(r) > 0.0).count();
    if clipped.is_empty() && n_exterior == 1 {
        // A rook-connected set of squares: one exterior, every other ring a hole of it.
        let (ext, holes): (Vec<_>, Vec<_>) = rings.into_iter().partition(|r| ring_area(r) > 0.0);
        let exterior = ext.into_iter().next().unwrap_or_else(|| LineString(vec![]));
        return MultiPolygon(vec![Polygon::new(exterior, holes)]);
    }
    // General case: hand every ring and clipped polygon to the overlay. It reads rings by
    // winding (counter-clockwise adds, clockwise subtracts), so traced holes stay holes. The
    // first ring decides the winding convention, so exteriors go first.
    let mut parts: Vec<Polygon<f64>> = Vec::new();
    let (ext, holes): (Vec<_>, Vec<_>) = rings.into_iter().partition(|r| ring_area(r) > 0.0);
    for r in ext {
        parts.push(Polygon::new(r, vec![]));
    }
    for &c in &clipped {
        if let Some(mp) = &grid.cells[c as usize].clipped {
            parts.extend(mp.0.iter().map(|p| p.orient(Direction::Default)));
        }
    }
    for r in holes {
        parts.push(Polygon::new(r, vec![]));
    }
    if parts.is_empty() {
        return MultiPolygon(vec![]);
    }
    geo::unary_union(&parts).orient(Direction::Default)
}

/// Twice-signed shoelace area of a closed ring, positive when counter-clockwise.
pub(crate) fn ring_area(r: &LineString<f64>) -> f64 {
    r.0.windows(2)
        .map(|w| w[0].x * w[1].y - w[1].x * w[0].y)
        .sum::<f64>()
        / 2.0
}

/// Boundary rings of a set of lattice squares (`(col, row)`), in projected metres: exteriors
/// counter-clockwise, holes clockwise, closed, without collinear vertices.
///
/// Each square contributes its counter-clockwise sides that do not face another square of the
/// set; these directed sides form closed loops. Where two squares of the set touch only at a
/// corner, the loop turns right (keeps the squares joined at that corner): for a rook-connected
/// set this gives simple rings, a hole touching the exterior or another hole at a single point
/// as OGC simple features allow.
pub(crate) fn trace_lattice(
    squares: &[(i64, i64)],
    origin: [f64; 2],
    size: f64,
) -> Vec<LineString<f64>> {
    if squares.is_empty() {
        return vec![];
    }
    let c0 = squares.iter().map(|s| s.0).min().unwrap_or(0);
    let r0 = squares.iter().map(|s| s.1).min().unwrap_or(0);
    let w = squares.iter().map(|s| s.0).max().unwrap_or(0) - c0 + 1;
    let h = squares.iter().map(|s| s.1).max().unwrap_or(0) - r0 + 1;
    let mut inside = vec![false; (w * h) as usize];
    for &(c, r) in squares {
        inside[((r - r0) * w + (c - c0)) as usize] = true;
    }
    let is_in = |c: i64, r: i64| c >= 0 && r >= 0 && c < w && r < h && inside[(r * w + c) as usize];
    // Vertex key over the (w+1)×(h+1) corner lattice, local coordinates.
    let key = |x: i64, y: i64| (y * (w + 1) + x) as u64;
    // Directed boundary sides as (start vertex key, direction), sorted for lookup.
    let mut edges: Vec<(u64, u8)> = Vec::new();
    for &(gc, gr) in squares {
        let (c, r) = (gc - c0, gr - r0);
        if !is_in(c, r - 1) {
            edges.push((key(c, r), 0));
        }
        if !is_in(c + 1, r) {
            edges.push((key(c + 1, r), 1));
        }
        if !is_in(c, r + 1) {
            edges.push((key(c + 1, r + 1), 2));
        }
        if !is_in(c - 1, r) {
            edges.push((key(c, r + 1), 3));
        }
    }
    edges.sort_unstable();
    edges.dedup();
    let find = |k: u64, d: u8| edges.binary_search(&(k, d)).ok();
    let mut used = vec![false; edges.len()];
    let mut rings = Vec::new();
    for start in 0..edges.len() {
        if used[start] {
            continue;
        }
        // Walk the loop through `start`: (vertex, outgoing direction) per side.
        let mut walk: Vec<((i64, i64), u8)> = Vec::new();
        let mut e = start;
        loop {
            used[e] = true;
            let (k, d) = edges[e];
            let (x, y) = ((k % (w as u64 + 1)) as i64, (k / (w as u64 + 1)) as i64);
            walk.push(((x, y), d));
            let (nx, ny) = (x + STEP[d as usize].0, y + STEP[d as usize].1);
            let nk = key(nx, ny);
            // Prefer right, then straight, then left (never back).
            let next = [(d + 3) % 4, d, (d + 1) % 4]
                .iter()
                .find_map(|&nd| find(nk, nd));
            match next {
                Some(n) if n == start => break,
                Some(n) if !used[n] => e = n,
                // Every boundary vertex has as many incoming as outgoing sides, so a loop
                // always closes; stop rather than spin if that invariant were ever broken.
                _ => break,
            }
        }
        let n = walk.len();
        let mut pts: Vec<Coord<f64>> = (0..n)
            .filter(|&i| walk[i].1 != walk[(i + n - 1) % n].1)
            .map(|i| {
                let (x, y) = walk[i].0;
                Coord {
                    x: origin[0] + (c0 + x) as f64 * size,
                    y: origin[1] + (r0 + y) as f64 * size,
                }
            })
            .collect();
        if let Some(&first) = pts.first() {
            pts.push(first);
        }
        rings.push(LineString(pts));
    }
    rings
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::{Crs, Grid};
    use geo::{polygon, Area, BooleanOps};

    fn grid(n: u32) -> Grid {
        Grid::full_rectangle(Crs::auto_laea(10.0, 55.0), 1000.0, [0.0, 0.0], n, n).unwrap()
    }

    #[test]
    fn single_square_is_its_own_ccw_outline() {
        let r = trace_lattice(&[(2, 3)], [0.0, 0.0], 10.0);
        assert_eq!(r.len(), 1);
        let xy: Vec<(f64, f64)> = r[0].0.iter().map(|c| (c.x, c.y)).collect();
        // Hand: the square [20,30]×[30,40], counter-clockwise from the south-west corner.
        assert_eq!(
            xy,
            vec![
                (20.0, 30.0),
                (30.0, 30.0),
                (30.0, 40.0),
                (20.0, 40.0),
                (20.0, 30.0)
            ]
        );
    }

    #[test]
    fn ring_of_eight_has_one_cw_hole() {
        let sq: Vec<(i64, i64)> = (0..3)
            .flat_map(|r| (0..3).map(move |c| (c, r)))
            .filter(|&p| p != (1, 1))
            .collect();
        let rings = trace_lattice(&sq, [0.0, 0.0], 1.0);
        let mut areas: Vec<f64> = rings.iter().map(ring_area).collect();
        areas.sort_by(f64::total_cmp);
        // Hand: exterior 3×3 = +9 (CCW), hole 1×1 = −1 (CW).
        assert_eq!(areas, vec![-1.0, 9.0]);
    }

    #[test]
    fn corner_touching_hole_keeps_rings_simple() {
        // Squares (rows bottom-up):   row 2: X X .
        //                             row 1: X . X
        //                             row 0: X X X
        // (1,2) and (2,1) touch only at corner (2,2), which the hole (1,1) and the exterior
        // share: a pinch the tracing must not turn into a self-touching ring.
        let sq = vec![(0, 0), (1, 0), (2, 0), (2, 1), (0, 1), (0, 2), (1, 2)];
        let rings = trace_lattice(&sq, [0.0, 0.0], 1.0);
        // Every ring visits each corner at most once (simple rings).
        for r in &rings {
            let mut v: Vec<(i64, i64)> = r.0[..r.0.len() - 1]
                .iter()
                .map(|c| (c.x as i64, c.y as i64))
                .collect();
            let n = v.len();
            v.sort();
            v.dedup();
            assert_eq!(v.len(), n, "ring repeats a vertex: {r:?}");
        }
        // Hand: area 7 squares = exterior 8 (3×3 minus the missing (2,2)) − hole 1 at (1,1).
        let total: f64 = rings.iter().map(ring_area).sum();
        assert_eq!(total, 7.0);
        assert_eq!(rings.iter().filter(|r| ring_area(r) < 0.0).count(), 1);
    }

    #[test]
    fn traced_outline_equals_boolean_union() {
        // Reference: geo's polygon overlay unioning the squares one by one, on pseudo-random
        // rook-connected shapes of a 6×6 lattice.
        let g = grid(6);
        let mut state = 12345u64;
        for _ in 0..30 {
            let mut cells = vec![14u32];
            for _ in 0..14 {
                state = state
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                let from = cells[(state >> 33) as usize % cells.len()];
                let nbs = &g.neighbours[from as usize];
                let nb = nbs[(state >> 20) as usize % nbs.len()].cell;
                if !cells.contains(&nb) {
                    cells.push(nb);
                }
            }
            cells.sort_unstable();
            let ours = dissolve(&g, &cells);
            let mut reference = MultiPolygon::<f64>(vec![]);
            for &c in &cells {
                reference = reference.union(&g.cell_polygon(c));
            }
            let a = ours.unsigned_area();
            assert!((a - cells.len() as f64 * 1e6).abs() < 1e-3);
            let diff = ours.xor(&reference).unsigned_area();
            assert!(
                diff < 1e-3,
                "cells {cells:?}: symmetric difference {diff} m²"
            );
            // Exterior CCW, holes CW.
            for p in &ours.0 {
                assert!(ring_area(p.exterior()) > 0.0);
                assert!(p.interiors().iter().all(|h| ring_area(h) < 0.0));
            }
        }
    }

    #[test]
    fn clipped_cells_are_merged_with_the_outline() {
        let mut g = grid(3);
        // Cell 1 keeps only its southern half (a coastline along y = 500 m).
        g.cells[1].clipped = Some(MultiPolygon(vec![polygon![
            (x: 1000.0, y: 0.0), (x: 2000.0, y: 0.0), (x: 2000.0, y: 500.0), (x: 1000.0, y: 500.0)
        ]]));
        let mp = dissolve(&g, &[0, 1, 2]);
        // Hand: 1 + 0.5 + 1 km² = 2.5e6 m², one polygon.
        assert_eq!(mp.0.len(), 1);
        assert!((mp.unsigned_area() - 2.5e6).abs() < 1e-3);
        assert!(ring_area(mp.0[0].exterior()) > 0.0);
    }
}
