//! Polygon validity by the OGC Simple Features rules, as the `geo` crate's `Validation` states
//! them: every ring has at least 3 distinct points and does not cross or touch itself; every hole
//! lies inside its exterior and meets it, or another hole, at points only; the parts of a
//! multipolygon do not overlap and meet at points only.
//!
//! geo's own ring check compares every pair of segments, which takes minutes on a coastline
//! ring of 10⁵ vertices, so rings are checked here with geo's sweep-line
//! [`Intersections`] and ring pairs with geo's [`Relate`] after an envelope test (an R-tree).
//! The rules are geo's; the tests hold the verdict equal to geo's `Validation` on random
//! polygons. Each problem comes with a place (the crossing point, or a vertex of the ring
//! concerned), in the file's own coordinates, so a planner can find it in a GIS.

use geo::algorithm::sweep::{Cross, Intersections};
use geo::coordinate_position::CoordPos;
use geo::dimensions::Dimensions;
use geo::line_intersection::LineIntersection;
use geo::{
    BoundingRect, Contains, Coord, Line, LineString, MultiPolygon, Point, Polygon,
    PreparedGeometry, Relate,
};
use rstar::{RTree, RTreeObject, AABB};

/// One way a polygon breaks the rules.
#[derive(Debug, Clone, PartialEq)]
pub struct Invalidity {
    /// 0-based index of the part (polygon) within the feature's multipolygon.
    pub part: usize,
    /// What is wrong, in words (e.g. "the exterior ring crosses itself").
    pub what: String,
    /// Where: a crossing point or a vertex of the ring concerned, in the file's coordinates.
    pub at: [f64; 2],
}

/// Every rule the multipolygon breaks, parts in order; empty when it is valid.
pub fn invalidities(mp: &MultiPolygon<f64>) -> Vec<Invalidity> {
    let mut out = Vec::new();
    for (part, poly) in mp.0.iter().enumerate() {
        polygon_invalidities(part, poly, &mut out);
    }
    // Parts: only pairs whose envelopes meet can overlap or share an edge.
    let boxes = envelopes(mp.0.iter().map(|p| p.exterior()));
    for (i, j) in envelope_pairs(&boxes) {
        let (a, b) = (&mp.0[i], &mp.0[j]);
        let im = a.relate(b);
        if im.get(CoordPos::Inside, CoordPos::Inside) == Dimensions::TwoDimensional {
            out.push(Invalidity {
                part: j,
                what: format!("parts {i} and {j} overlap"),
                at: meeting_point(a.exterior(), b.exterior()),
            });
        }
        if im.get(CoordPos::OnBoundary, CoordPos::OnBoundary) == Dimensions::OneDimensional {
            out.push(Invalidity {
                part: j,
                what: format!("parts {i} and {j} share an edge (parts may meet at points only)"),
                at: meeting_point(a.exterior(), b.exterior()),
            });
        }
    }
    out.sort_by_key(|p| p.part);
    out
}

/// The rules of one polygon: its rings, then its holes against the exterior and each other.
fn polygon_invalidities(part: usize, poly: &Polygon<f64>, out: &mut Vec<Invalidity>) {
    let name = |k: usize| {
        if k == 0 {
            "the exterior ring".to_string()
        } else {
            format!("hole {}", k - 1)
        }
    };
    let rings: Vec<&LineString<f64>> = std::iter::once(poly.exterior())
        .chain(poly.interiors())
        .collect();
    let mut simple = true;
    for (k, ring) in rings.iter().enumerate() {
        let Some(first) = ring.0.first() else {
            continue;
        };
        if distinct_points(ring) < 3 {
            simple = false;
            out.push(Invalidity {
                part,
                what: format!("{} has fewer than 3 distinct points", name(k)),
                at: [first.x, first.y],
            });
        } else if let Some(at) = self_crossing(ring) {
            simple = false;
            out.push(Invalidity {
                part,
                what: format!("{} crosses or touches itself", name(k)),
                at: [at.x, at.y],
            });
        }
    }
    if rings.len() < 2 || !simple {
        // Containment of holes means little while a ring is not simple; geo's validation
        // likewise reports what it can, and the ring problem is the one to fix first.
        return;
    }
    let exterior = Polygon::new(poly.exterior().clone(), vec![]);
    let prepared = PreparedGeometry::from(&exterior);
    let holes: Vec<Polygon<f64>> = poly
        .interiors()
        .iter()
        .map(|h| Polygon::new(h.clone(), vec![]))
        .collect();
    for (h, hole) in holes.iter().enumerate() {
        let im = prepared.relate(hole);
        if !im.is_contains() {
            out.push(Invalidity {
                part,
                what: format!("hole {h} is not inside the exterior ring"),
                at: outside_vertex(&exterior, hole.exterior()),
            });
        }
        if im.get(CoordPos::OnBoundary, CoordPos::OnBoundary) == Dimensions::OneDimensional {
            out.push(Invalidity {
                part,
                what: format!(
                    "hole {h} shares an edge with the exterior ring (they may meet at points only)"
                ),
                at: meeting_point(poly.exterior(), hole.exterior()),
            });
        }
    }
    let boxes = envelopes(poly.interiors().iter());
    for (i, j) in envelope_pairs(&boxes) {
        let im = holes[i].relate(&holes[j]);
        if im.get(CoordPos::Inside, CoordPos::Inside) == Dimensions::TwoDimensional {
            out.push(Invalidity {
                part,
                what: format!("holes {i} and {j} overlap"),
                at: meeting_point(holes[i].exterior(), holes[j].exterior()),
            });
        }
        if im.get(CoordPos::OnBoundary, CoordPos::OnBoundary) == Dimensions::OneDimensional {
            out.push(Invalidity {
                part,
                what: format!("holes {i} and {j} share an edge (they may meet at points only)"),
                at: meeting_point(holes[i].exterior(), holes[j].exterior()),
            });
        }
    }
}

fn distinct_points(ring: &LineString<f64>) -> usize {
    let mut keys: Vec<(u64, u64)> = ring
        .0
        .iter()
        .map(|c| (c.x.to_bits(), c.y.to_bits()))
        .collect();
    keys.sort_unstable();
    keys.dedup();
    keys.len()
}

/// A segment of a ring with its position, so the sweep can tell neighbours apart.
#[derive(Debug, Clone, Copy)]
struct Segment {
    /// Which ring (0 or 1) when two rings are swept together.
    ring: u8,
    /// Index of the segment along its ring.
    index: usize,
    line: Line<f64>,
}

impl Cross for Segment {
    type Scalar = f64;
    fn line(&self) -> Line<f64> {
        self.line
    }
}

/// The ring's vertices with repeated consecutive points dropped (repeats are allowed), closed.
fn vertices(ring: &LineString<f64>) -> Vec<Coord<f64>> {
    let mut pts: Vec<Coord<f64>> = Vec::with_capacity(ring.0.len());
    for c in &ring.0 {
        if pts.last() != Some(c) {
            pts.push(*c);
        }
    }
    if pts.len() > 1 && pts.first() != pts.last() {
        pts.push(pts[0]);
    }
    pts
}

fn segments(ring: &LineString<f64>, tag: u8) -> Vec<Segment> {
    vertices(ring)
        .windows(2)
        .enumerate()
        .map(|(index, w)| Segment {
            ring: tag,
            index,
            line: Line::new(w[0], w[1]),
        })
        .collect()
}

/// The first place (in sweep order) where a closed ring crosses or touches itself: two
/// segments that are not neighbours meeting anywhere, or neighbours meeting anywhere but their
/// shared vertex (a spike that doubles back). `None` for a simple ring.
pub fn self_crossing(ring: &LineString<f64>) -> Option<Coord<f64>> {
    let segs = segments(ring, 0);
    let n = segs.len();
    let mut found: Option<(usize, usize, Coord<f64>)> = None;
    for (a, b, hit) in Intersections::from_iter(segs.iter().copied()) {
        let (i, j) = (a.index.min(b.index), a.index.max(b.index));
        let shared = if j == i + 1 {
            Some(segs[j].line.start)
        } else if i == 0 && j == n - 1 {
            Some(segs[0].line.start)
        } else {
            None
        };
        let at = match hit {
            LineIntersection::SinglePoint {
                intersection,
                is_proper,
            } => {
                if !is_proper && Some(intersection) == shared {
                    continue;
                }
                intersection
            }
            LineIntersection::Collinear { intersection } => intersection.start,
        };
        // The sweep's order depends on the segments' x-extents only; keep the crossing of the
        // lowest pair of segment indices so the reported place is the same on every run.
        if found.is_none_or(|(fi, fj, _)| (i, j) < (fi, fj)) {
            found = Some((i, j, at));
        }
    }
    found.map(|(_, _, at)| at)
}

/// A point where two rings meet (the crossing of lowest segment indices), or else the first
/// vertex of `b`.
fn meeting_point(a: &LineString<f64>, b: &LineString<f64>) -> [f64; 2] {
    let segs: Vec<Segment> = segments(a, 0).into_iter().chain(segments(b, 1)).collect();
    let mut best: Option<((usize, usize), Coord<f64>)> = None;
    for (s, t, hit) in Intersections::from_iter(segs) {
        if s.ring == t.ring {
            continue;
        }
        let (sa, sb) = if s.ring == 0 { (s, t) } else { (t, s) };
        let at = match hit {
            LineIntersection::SinglePoint { intersection, .. } => intersection,
            LineIntersection::Collinear { intersection } => intersection.start,
        };
        let key = (sa.index, sb.index);
        if best.is_none_or(|(k, _)| key < k) {
            best = Some((key, at));
        }
    }
    match best {
        Some((_, c)) => [c.x, c.y],
        None => b.0.first().map_or([f64::NAN; 2], |c| [c.x, c.y]),
    }
}

/// The first vertex of `ring` outside `area`, or else the place where the two boundaries meet.
fn outside_vertex(area: &Polygon<f64>, ring: &LineString<f64>) -> [f64; 2] {
    match ring
        .0
        .iter()
        .find(|c| !area.contains(&Point::from(**c)) && !on_boundary(area, c))
    {
        Some(c) => [c.x, c.y],
        None => meeting_point(area.exterior(), ring),
    }
}

fn on_boundary(area: &Polygon<f64>, c: &Coord<f64>) -> bool {
    use geo::CoordinatePosition;
    area.coordinate_position(c) == CoordPos::OnBoundary
}

/// One envelope per ring, with its index.
fn envelopes<'a>(rings: impl Iterator<Item = &'a LineString<f64>>) -> Vec<Envelope> {
    rings
        .enumerate()
        .filter_map(|(index, r)| {
            let b = r.bounding_rect()?;
            Some(Envelope {
                index,
                aabb: AABB::from_corners([b.min().x, b.min().y], [b.max().x, b.max().y]),
            })
        })
        .collect()
}

struct Envelope {
    index: usize,
    aabb: AABB<[f64; 2]>,
}

impl RTreeObject for Envelope {
    type Envelope = AABB<[f64; 2]>;
    fn envelope(&self) -> Self::Envelope {
        self.aabb
    }
}

/// Pairs `(i, j)`, `i < j`, whose envelopes meet, in order.
fn envelope_pairs(boxes: &[Envelope]) -> Vec<(usize, usize)> {
    if boxes.len() < 2 {
        return Vec::new();
    }
    let tree = RTree::bulk_load(
        boxes
            .iter()
            .map(|b| Envelope {
                index: b.index,
                aabb: b.aabb,
            })
            .collect(),
    );
    let mut pairs: Vec<(usize, usize)> = boxes
        .iter()
        .flat_map(|b| {
            tree.locate_in_envelope_intersecting(&b.aabb)
                .filter(|o| o.index > b.index)
                .map(|o| (b.index, o.index))
                .collect::<Vec<_>>()
        })
        .collect();
    pairs.sort_unstable();
    pairs
}

#[cfg(test)]
mod tests {
    use super::*;
    use geo::{polygon, Validation};
    use rand::{Rng, SeedableRng};

    fn square(x0: f64, y0: f64, s: f64) -> LineString<f64> {
        LineString::from(vec![
            (x0, y0),
            (x0 + s, y0),
            (x0 + s, y0 + s),
            (x0, y0 + s),
            (x0, y0),
        ])
    }

    #[test]
    fn a_bow_tie_crosses_itself_at_its_middle() {
        // Hand case: the diagonals of the unit square meet at (0.5, 0.5).
        let bow = polygon![(x: 0.0, y: 0.0), (x: 1.0, y: 1.0), (x: 1.0, y: 0.0), (x: 0.0, y: 1.0)];
        let found = invalidities(&MultiPolygon(vec![bow.clone()]));
        assert_eq!(found.len(), 1);
        assert!(found[0].what.contains("exterior ring crosses"), "{found:?}");
        assert_eq!(found[0].at, [0.5, 0.5]);
        // geo's own validation agrees (the reference this module follows).
        assert!(!bow.is_valid());
    }

    #[test]
    fn a_hole_outside_its_exterior_is_named_at_its_vertex() {
        let p = Polygon::new(square(0.0, 0.0, 1.0), vec![square(5.0, 5.0, 1.0)]);
        let found = invalidities(&MultiPolygon(vec![p.clone()]));
        assert_eq!(found.len(), 1, "{found:?}");
        assert_eq!(found[0].what, "hole 0 is not inside the exterior ring");
        assert_eq!(found[0].at, [5.0, 5.0]);
        assert!(!p.is_valid());
    }

    #[test]
    fn overlapping_parts_and_shared_edges_are_found() {
        let a = Polygon::new(square(0.0, 0.0, 2.0), vec![]);
        let b = Polygon::new(square(1.0, 1.0, 2.0), vec![]);
        let c = Polygon::new(square(2.0, 0.0, 1.0), vec![]); // shares the edge x = 2 with a
        let found = invalidities(&MultiPolygon(vec![a, b, c]));
        let words: Vec<&str> = found.iter().map(|f| f.what.as_str()).collect();
        assert!(words.contains(&"parts 0 and 1 overlap"), "{words:?}");
        assert!(
            words
                .iter()
                .any(|w| w.starts_with("parts 0 and 2 share an edge")),
            "{words:?}"
        );
        // The overlap's place is where the boundaries cross: (2, 1) or (1, 2).
        let overlap = found
            .iter()
            .find(|f| f.what == "parts 0 and 1 overlap")
            .unwrap();
        assert!(
            [[2.0, 1.0], [1.0, 2.0]].contains(&overlap.at),
            "{overlap:?}"
        );
    }

    #[test]
    fn valid_shapes_pass() {
        // A hole touching the exterior at one point, parts meeting at a corner, repeated
        // vertices: all valid under OGC rules (and under geo's validation).
        let touching_hole = Polygon::new(
            square(0.0, 0.0, 4.0),
            vec![LineString::from(vec![
                (0.0, 2.0),
                (2.0, 1.0),
                (2.0, 3.0),
                (0.0, 2.0),
            ])],
        );
        let corner = MultiPolygon(vec![
            Polygon::new(square(10.0, 0.0, 1.0), vec![]),
            Polygon::new(square(11.0, 1.0, 1.0), vec![]),
        ]);
        let repeated = Polygon::new(
            LineString::from(vec![
                (0.0, 0.0),
                (1.0, 0.0),
                (1.0, 0.0),
                (1.0, 1.0),
                (0.0, 0.0),
            ]),
            vec![],
        );
        for mp in [
            MultiPolygon(vec![touching_hole]),
            corner,
            MultiPolygon(vec![repeated]),
        ] {
            assert!(mp.is_valid(), "geo says valid");
            assert_eq!(invalidities(&mp), vec![], "{mp:?}");
        }
    }

    /// Random star-shaped and random-walk rings, some with holes: our verdict equals geo's
    /// `Validation` (the reference implementation of the same OGC rules).
    #[test]
    fn verdict_equals_geo_validation_on_random_polygons() {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(17);
        let mut invalid = 0;
        for case in 0..600 {
            let n = rng.gen_range(3..12);
            let ring = |rng: &mut rand_chacha::ChaCha8Rng, cx: f64, cy: f64, r: f64, star: bool| {
                let mut pts: Vec<(f64, f64)> = (0..n)
                    .map(|k| {
                        if star {
                            let a = std::f64::consts::TAU * (k as f64 + rng.gen::<f64>() * 0.9)
                                / n as f64;
                            let rr = r * (0.3 + 0.7 * rng.gen::<f64>());
                            (cx + rr * a.cos(), cy + rr * a.sin())
                        } else {
                            (cx + r * rng.gen::<f64>(), cy + r * rng.gen::<f64>())
                        }
                    })
                    .collect();
                pts.push(pts[0]);
                LineString::from(pts)
            };
            let star = case % 3 != 0;
            let ext = ring(&mut rng, 0.0, 0.0, 10.0, star);
            let holes = (0..rng.gen_range(0..3))
                .map(|_| {
                    let (hx, hy) = (rng.gen_range(-8.0..8.0), rng.gen_range(-8.0..8.0));
                    ring(&mut rng, hx, hy, 2.5, true)
                })
                .collect();
            let poly = Polygon::new(ext, holes);
            let parts = if case % 5 == 0 {
                vec![
                    poly,
                    Polygon::new(ring(&mut rng, 12.0, 0.0, 6.0, true), vec![]),
                ]
            } else {
                vec![poly]
            };
            let mp = MultiPolygon(parts);
            let ours = invalidities(&mp).is_empty();
            assert_eq!(
                ours,
                mp.is_valid(),
                "case {case}: {mp:?}\n{:?}",
                invalidities(&mp)
            );
            invalid += usize::from(!ours);
        }
        // The cases exercise both verdicts.
        assert!(invalid > 100 && invalid < 500, "{invalid} invalid of 600");
    }

    #[test]
    fn a_long_ring_is_checked_quickly_and_correctly() {
        // A 200 000-vertex circle-like ring (a detailed coastline): valid; with one vertex
        // moved across the ring it crosses itself near that vertex.
        let n = 200_000;
        let mut pts: Vec<(f64, f64)> = (0..n)
            .map(|k| {
                let a = std::f64::consts::TAU * k as f64 / n as f64;
                (a.cos() * (1.0 + 0.01 * (7.0 * a).sin()), a.sin())
            })
            .collect();
        pts.push(pts[0]);
        let ring = LineString::from(pts.clone());
        assert_eq!(self_crossing(&ring), None);
        // One vertex pulled beyond the far side: its two long edges cross the ring.
        pts[1000] = (-2.0, 0.0);
        let crossed = self_crossing(&LineString::from(pts)).expect("crosses");
        assert!(crossed.x < 1.1 && crossed.x > -1.1, "{crossed:?}");
    }
}
