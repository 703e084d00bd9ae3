//! Polygon overlay on the grid: how much of each cell's sea polygon a set of polygons covers.
//!
//! Each input polygon is cut, by recursive bisection along lattice lines, into leaves that are
//! either a whole lattice rectangle inside the polygon ("full") or the polygon's part inside
//! one cell square ("partial"). Cutting costs O(V log V) boolean work per polygon of V vertices
//! instead of O(V) per cell, and cells inside a polygon need no boolean operation at all. The
//! leaves go into an rstar R-tree, so each cell meets only the leaves whose rectangle holds it.

use crate::grid::Grid;
use geo::{Area, BooleanOps, BoundingRect, MultiPolygon, Rect};
use rstar::primitives::{GeomWithData, Rectangle};
use rstar::RTree;

/// A leaf's area within this relative distance of its rectangle's area counts as covering it
/// whole: boolean-operation round-off on metre coordinates is ~1e-12 relative, and a gap of
/// 1e-9 of a rectangle changes a share by at most 1e-9.
const FULL_TOLERANCE: f64 = 1e-9;

/// A piece of one input polygon.
#[derive(Debug)]
enum Piece {
    /// The leaf rectangle lies wholly inside the polygon.
    Full,
    /// The polygon's part inside one cell square (projected metres).
    Partial(MultiPolygon<f64>),
}

#[derive(Debug)]
struct Leaf {
    /// Index of the input polygon this piece came from.
    polygon: u32,
    piece: Piece,
}

/// Input polygons prepared for one grid: lattice-aligned leaves in an R-tree.
#[derive(Debug)]
pub(crate) struct PolygonIndex {
    tree: RTree<GeomWithData<Rectangle<[f64; 2]>, u32>>,
    leaves: Vec<Leaf>,
}

/// Lattice rectangle `[c0, c1) × [r0, r1)` in column/row numbers.
#[derive(Debug, Clone, Copy)]
struct Span {
    c0: u32,
    c1: u32,
    r0: u32,
    r1: u32,
}

struct Lattice {
    origin: [f64; 2],
    size: f64,
}

impl Lattice {
    fn rect(&self, s: Span) -> Rect<f64> {
        let (ox, oy, d) = (self.origin[0], self.origin[1], self.size);
        Rect::new(
            (ox + s.c0 as f64 * d, oy + s.r0 as f64 * d),
            (ox + s.c1 as f64 * d, oy + s.r1 as f64 * d),
        )
    }

    /// Cuts `piece` (already inside `span`'s rectangle) into leaves, appending them to `out`.
    fn cut(&self, polygon: u32, span: Span, piece: MultiPolygon<f64>, out: &mut Vec<(Span, Leaf)>) {
        let area = piece.unsigned_area();
        let rect_area = self.rect(span).unsigned_area();
        if area <= rect_area * FULL_TOLERANCE {
            return;
        }
        if area >= rect_area * (1.0 - FULL_TOLERANCE) {
            out.push((
                span,
                Leaf {
                    polygon,
                    piece: Piece::Full,
                },
            ));
            return;
        }
        let (w, h) = (span.c1 - span.c0, span.r1 - span.r0);
        if w == 1 && h == 1 {
            out.push((
                span,
                Leaf {
                    polygon,
                    piece: Piece::Partial(piece),
                },
            ));
            return;
        }
        let (a, b) = if w >= h {
            let m = span.c0 + w / 2;
            (Span { c1: m, ..span }, Span { c0: m, ..span })
        } else {
            let m = span.r0 + h / 2;
            (Span { r1: m, ..span }, Span { r0: m, ..span })
        };
        let clip = |s: Span| piece.intersection(&self.rect(s).to_polygon());
        let (pa, pb) = (clip(a), clip(b));
        // Halves are independent; recursion order (a then b) keeps the output deterministic.
        let (mut la, mut lb) = (Vec::new(), Vec::new());
        rayon::join(
            || self.cut(polygon, a, pa, &mut la),
            || self.cut(polygon, b, pb, &mut lb),
        );
        out.append(&mut la);
        out.append(&mut lb);
    }
}

impl PolygonIndex {
    /// Cuts `polygons` (projected metres, the grid's CRS) into leaves on `grid`'s lattice.
    /// Parts outside the lattice are dropped.
    pub(crate) fn build(grid: &Grid, polygons: &[MultiPolygon<f64>]) -> PolygonIndex {
        let lattice = Lattice {
            origin: grid.origin,
            size: grid.cell_size_m,
        };
        let per_polygon: Vec<Vec<(Span, Leaf)>> = {
            use rayon::prelude::*;
            polygons
                .par_iter()
                .enumerate()
                .map(|(i, mp)| {
                    let mut out = Vec::new();
                    if let Some(span) = lattice_span(grid, mp) {
                        let piece = mp.intersection(&lattice.rect(span).to_polygon());
                        lattice.cut(i as u32, span, piece, &mut out);
                    }
                    out
                })
                .collect()
        };
        let mut leaves = Vec::new();
        let mut boxes = Vec::new();
        for (span, leaf) in per_polygon.into_iter().flatten() {
            let r = lattice.rect(span);
            boxes.push(GeomWithData::new(
                Rectangle::from_corners([r.min().x, r.min().y], [r.max().x, r.max().y]),
                leaves.len() as u32,
            ));
            leaves.push(leaf);
        }
        PolygonIndex {
            tree: RTree::bulk_load(boxes),
            leaves,
        }
    }

    /// Leaves holding cell `id`, sorted by input polygon.
    fn leaves_at(&self, grid: &Grid, id: u32) -> Vec<&Leaf> {
        let sq = grid.cell_square(id);
        // The square's centre is never on a lattice line, so it lies strictly inside exactly
        // the leaves (at most one per polygon) that hold the whole square.
        let c = sq.center();
        let mut found: Vec<&Leaf> = self
            .tree
            .locate_all_at_point(&[c.x, c.y])
            .map(|g| &self.leaves[g.data as usize])
            .collect();
        found.sort_by_key(|l| l.polygon);
        found
    }

    /// Area of cell `id`'s sea polygon covered by each input polygon that meets it, as
    /// `(polygon index, covered area)`, ascending by polygon. Units: m² (grid CRS).
    pub(crate) fn covered_by_each(&self, grid: &Grid, id: u32) -> Vec<(u32, f64)> {
        let sea = grid.cells[id as usize].clipped.as_ref();
        let sea_area = || grid.cell_polygon(id).unsigned_area();
        self.leaves_at(grid, id)
            .into_iter()
            .map(|leaf| {
                let a = match (&leaf.piece, sea) {
                    (Piece::Full, _) => sea_area(),
                    (Piece::Partial(p), None) => p.unsigned_area(),
                    (Piece::Partial(p), Some(s)) => p.intersection(s).unsigned_area(),
                };
                (leaf.polygon, a)
            })
            .filter(|&(_, a)| a > 0.0)
            .collect()
    }

    /// Share (0–1) of cell `id`'s sea polygon covered by the union of all input polygons;
    /// `None` when no polygon meets the cell.
    pub(crate) fn share(&self, grid: &Grid, id: u32) -> Option<f64> {
        let leaves = self.leaves_at(grid, id);
        if leaves.is_empty() {
            return None;
        }
        if leaves.iter().any(|l| matches!(l.piece, Piece::Full)) {
            return Some(1.0);
        }
        let cell = grid.cell_polygon(id);
        let cell_area = cell.unsigned_area();
        // Overlapping polygons must not count twice: union their parts in this cell.
        let mut covered: Option<MultiPolygon<f64>> = None;
        for l in leaves {
            if let Piece::Partial(p) = &l.piece {
                covered = Some(match covered {
                    None => p.clone(),
                    Some(c) => c.union(p),
                });
            }
        }
        let covered = covered?;
        let area = match &grid.cells[id as usize].clipped {
            None => covered.unsigned_area(),
            Some(s) => covered.intersection(s).unsigned_area(),
        };
        if area <= 0.0 || cell_area <= 0.0 {
            return None;
        }
        Some((area / cell_area).clamp(0.0, 1.0))
    }
}

/// The lattice rectangle spanned by a polygon's bounding box, clamped to the lattice.
fn lattice_span(grid: &Grid, mp: &MultiPolygon<f64>) -> Option<Span> {
    let bb = mp.bounding_rect()?;
    let s = grid.cell_size_m;
    let to_idx = |v: f64, o: f64, n: u32| ((v - o) / s).clamp(0.0, n as f64);
    let c0 = to_idx(bb.min().x, grid.origin[0], grid.n_cols).floor() as u32;
    let c1 = to_idx(bb.max().x, grid.origin[0], grid.n_cols).ceil() as u32;
    let r0 = to_idx(bb.min().y, grid.origin[1], grid.n_rows).floor() as u32;
    let r1 = to_idx(bb.max().y, grid.origin[1], grid.n_rows).ceil() as u32;
    (c0 < c1 && r0 < r1).then_some(Span { c0, c1, r0, r1 })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;
    use geo::{polygon, Polygon};

    /// 4 × 4 cells of 1000 m in EPSG:3035 with the origin at (4 000 000, 3 000 000).
    fn grid() -> Grid {
        Grid::full_rectangle(
            Crs {
                definition: "EPSG:3035".into(),
            },
            1000.0,
            [4.0e6, 3.0e6],
            4,
            4,
        )
        .unwrap()
    }

    /// A rectangle in cell units (column, row) from the origin, as projected metres.
    fn rect(x0: f64, y0: f64, x1: f64, y1: f64) -> Polygon<f64> {
        let (ox, oy, s) = (4.0e6, 3.0e6, 1000.0);
        Rect::new((ox + x0 * s, oy + y0 * s), (ox + x1 * s, oy + y1 * s)).to_polygon()
    }

    fn mp(p: Polygon<f64>) -> MultiPolygon<f64> {
        MultiPolygon(vec![p])
    }

    fn shares(g: &Grid, index: &PolygonIndex) -> Vec<Option<f64>> {
        (0..g.len() as u32).map(|id| index.share(g, id)).collect()
    }

    #[test]
    fn half_of_one_cell() {
        // Hand computation: the rectangle x 0..0.5, y 0..1 (cell units) is half of cell 0.
        let g = grid();
        let index = PolygonIndex::build(&g, &[mp(rect(0.0, 0.0, 0.5, 1.0))]);
        let s = shares(&g, &index);
        assert!((s[0].unwrap() - 0.5).abs() < 1e-12);
        assert!(s[1..].iter().all(Option::is_none));
    }

    #[test]
    fn quarter_of_four_cells() {
        // Hand computation: a one-cell square centred on the corner shared by cells (1,1),
        // (2,1), (1,2), (2,2) covers a quarter of each of them and nothing else.
        let g = grid();
        let index = PolygonIndex::build(&g, &[mp(rect(1.5, 1.5, 2.5, 2.5))]);
        let s = shares(&g, &index);
        for id in 0..16u32 {
            let (c, r) = (id % 4, id / 4);
            if (1..=2).contains(&c) && (1..=2).contains(&r) {
                assert!((s[id as usize].unwrap() - 0.25).abs() < 1e-12, "cell {id}");
            } else {
                assert!(s[id as usize].is_none(), "cell {id}");
            }
        }
    }

    #[test]
    fn triangle_shares_and_covered_areas() {
        // Hand computation: the triangle (0,0),(2,0),(0,2) in cell units holds cell (0,0)
        // whole (its far corner (1,1) lies on the hypotenuse x + y = 2), half of cells (1,0)
        // and (0,1) (each cut along its diagonal), and only touches cell (1,1) at a point.
        let g = grid();
        let (ox, oy, s) = (4.0e6, 3.0e6, 1000.0);
        let tri = polygon![(x: ox, y: oy), (x: ox + 2.0 * s, y: oy), (x: ox, y: oy + 2.0 * s), (x: ox, y: oy)];
        let index = PolygonIndex::build(&g, &[mp(tri)]);
        let sh = shares(&g, &index);
        assert!((sh[0].unwrap() - 1.0).abs() < 1e-12);
        assert!((sh[1].unwrap() - 0.5).abs() < 1e-12);
        assert!((sh[4].unwrap() - 0.5).abs() < 1e-12);
        assert!(sh[5].is_none());
        // Covered area of cell (1,0): half of 1000 m × 1000 m = 500 000 m².
        let c = index.covered_by_each(&g, 1);
        assert_eq!(c.len(), 1);
        assert!((c[0].1 - 5.0e5).abs() < 1e-3);
    }

    #[test]
    fn overlapping_polygons_are_not_counted_twice() {
        // Hand computation: two copies of the same half-cell rectangle still cover half the cell;
        // a full-cell polygon beside them makes the share exactly 1.
        let g = grid();
        let half = mp(rect(0.0, 0.0, 0.5, 1.0));
        let index = PolygonIndex::build(&g, &[half.clone(), half]);
        assert!((index.share(&g, 0).unwrap() - 0.5).abs() < 1e-12);
        assert_eq!(index.covered_by_each(&g, 0).len(), 2);
        let index = PolygonIndex::build(
            &g,
            &[mp(rect(0.0, 0.0, 0.5, 1.0)), mp(rect(0.0, 0.0, 1.0, 1.0))],
        );
        assert_eq!(index.share(&g, 0), Some(1.0));
    }

    #[test]
    fn large_polygon_makes_full_leaves_and_hole_is_uncovered() {
        // Hand computation: a polygon over the whole lattice with a one-cell hole at cell (1,1)
        // covers 15 cells wholly and leaves cell 5 uncovered. Bisection leaves: every leaf must
        // be a whole rectangle (no partial piece), since all boundaries run along lattice lines.
        let g = grid();
        let outer = rect(-1.0, -1.0, 5.0, 5.0);
        let hole = rect(1.0, 1.0, 2.0, 2.0);
        let p = Polygon::new(outer.exterior().clone(), vec![hole.exterior().clone()]);
        let index = PolygonIndex::build(&g, &[mp(p)]);
        assert!(index.leaves.iter().all(|l| matches!(l.piece, Piece::Full)));
        let s = shares(&g, &index);
        for (id, v) in s.iter().enumerate() {
            if id == 5 {
                assert!(v.is_none());
            } else {
                assert_eq!(*v, Some(1.0), "cell {id}");
            }
        }
    }

    #[test]
    fn clipped_cell_share_is_of_its_sea_part() {
        // Hand computation: cell 0's sea part is its left half (x 0..0.5); a polygon over the
        // bottom half of the cell (y 0..0.5) covers the quarter x 0..0.5, y 0..0.5, which is
        // half of the sea part. A whole-cell polygon covers all of it.
        let mut g = grid();
        g.cells[0].clipped = Some(mp(rect(0.0, 0.0, 0.5, 1.0)));
        let index = PolygonIndex::build(&g, &[mp(rect(0.0, 0.0, 1.0, 0.5))]);
        assert!((index.share(&g, 0).unwrap() - 0.5).abs() < 1e-12);
        let c = index.covered_by_each(&g, 0);
        assert!((c[0].1 - 2.5e5).abs() < 1e-3, "{c:?}");
        let index = PolygonIndex::build(&g, &[mp(rect(-1.0, -1.0, 2.0, 2.0))]);
        assert_eq!(index.share(&g, 0), Some(1.0));
        assert!((index.covered_by_each(&g, 0)[0].1 - 5.0e5).abs() < 1e-3);
    }

    #[test]
    fn polygon_outside_lattice_covers_nothing() {
        let g = grid();
        let index = PolygonIndex::build(&g, &[mp(rect(10.0, 10.0, 12.0, 12.0))]);
        assert!(shares(&g, &index).iter().all(Option::is_none));
    }

    #[test]
    fn shares_of_a_circle_sum_to_its_area() {
        // Closed form: a regular n-gon of circumradius r has area (n/2)·r²·sin(2π/n). On a
        // 100 × 100 lattice of 1 km cells, a 720-gon of radius 40 km centred at (50, 50) km
        // gives Σ share·(1 km²) = that area; cells in the middle are whole (share 1).
        let g = Grid::full_rectangle(
            Crs {
                definition: "EPSG:3035".into(),
            },
            1000.0,
            [4.0e6, 3.0e6],
            100,
            100,
        )
        .unwrap();
        let (n, r) = (720, 40_000.0);
        let ring: Vec<(f64, f64)> = (0..=n)
            .map(|k| {
                let a = 2.0 * std::f64::consts::PI * (k % n) as f64 / n as f64;
                (
                    4.0e6 + 50_000.0 + r * a.cos(),
                    3.0e6 + 50_000.0 + r * a.sin(),
                )
            })
            .collect();
        let circle = Polygon::new(ring.into(), vec![]);
        let index = PolygonIndex::build(&g, &[mp(circle)]);
        let total: f64 = (0..g.len() as u32)
            .filter_map(|id| index.share(&g, id))
            .sum::<f64>()
            * 1.0e6;
        let want = n as f64 / 2.0 * r * r * (2.0 * std::f64::consts::PI / n as f64).sin();
        assert!((total - want).abs() / want < 1e-9, "{total} vs {want}");
        assert_eq!(index.share(&g, 50 * 100 + 50), Some(1.0));
        assert!(index.share(&g, 0).is_none());
    }
}
