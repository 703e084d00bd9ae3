//! Lon/lat rings made ready for RFC 7946: six decimals, no repeated points, exterior
//! counter-clockwise and holes clockwise, split at the antimeridian.

use geo::{BooleanOps, LineString, MultiPolygon, Polygon, Rect};
use std::fmt::Write;

/// A cleaned ring: closed, `[lon, lat]` rounded to 6 decimals.
pub(crate) type Ring = Vec<[f64; 2]>;
/// A cleaned polygon: exterior first, then holes.
pub(crate) type Poly = Vec<Ring>;

/// Rounds to 6 decimals (≈ 0.1 m on the ground, the precision RFC 7946 §11.2 suggests is
/// plenty), and turns −0 into 0.
pub(crate) fn round6(x: f64) -> f64 {
    let r = (x * 1e6).round() / 1e6;
    if r == 0.0 {
        0.0
    } else {
        r
    }
}

/// The signed shoelace area of a closed ring in degrees², positive when
/// counter-clockwise (RFC 7946 §3.1.6 defines orientation on the lon/lat plane).
pub(crate) fn signed_area(r: &[[f64; 2]]) -> f64 {
    r.windows(2)
        .map(|w| w[0][0] * w[1][1] - w[1][0] * w[0][1])
        .sum::<f64>()
        / 2.0
}

/// Rounds, drops consecutive repeats and closes a ring; orients it counter-clockwise when
/// `exterior`, clockwise otherwise. `None` when fewer than 3 distinct points or no area remain.
pub(crate) fn clean_ring(ls: &LineString<f64>, exterior: bool) -> Option<Ring> {
    let mut out: Ring = Vec::with_capacity(ls.0.len());
    for c in &ls.0 {
        let p = [round6(c.x), round6(c.y)];
        if out.last() != Some(&p) {
            out.push(p);
        }
    }
    while out.len() > 1 && out.first() == out.last() {
        out.pop();
    }
    if out.len() < 3 {
        return None;
    }
    let first = out[0];
    out.push(first);
    let a = signed_area(&out);
    if a == 0.0 {
        return None;
    }
    if (a > 0.0) != exterior {
        out.reverse();
    }
    Some(out)
}

/// Cleans every polygon; a polygon whose exterior vanishes on rounding is dropped.
pub(crate) fn clean_multipolygon(mp: &MultiPolygon<f64>) -> Vec<Poly> {
    let mut out = Vec::with_capacity(mp.0.len());
    for p in &mp.0 {
        let Some(ext) = clean_ring(p.exterior(), true) else {
            continue;
        };
        let mut poly = vec![ext];
        poly.extend(p.interiors().iter().filter_map(|h| clean_ring(h, false)));
        out.push(poly);
    }
    out
}

/// True when some ring jumps by more than 180° of longitude between consecutive points: the
/// shape crosses the antimeridian (edges are short, a few km, so no real edge spans 180°).
fn crosses_antimeridian(mp: &MultiPolygon<f64>) -> bool {
    mp.0.iter().any(|p| {
        std::iter::once(p.exterior())
            .chain(p.interiors())
            .any(|r| r.0.windows(2).any(|w| (w[1].x - w[0].x).abs() > 180.0))
    })
}

/// Makes a ring's longitudes continuous (see [`crate::grid::build::continuous_longitudes`]).
fn unwrap_ring(r: &LineString<f64>) -> LineString<f64> {
    LineString(crate::grid::build::continuous_longitudes(&r.0))
}

/// RFC 7946 §3.1.9: a shape crossing the antimeridian is cut into parts on either side.
/// Shapes that do not cross are returned unchanged.
pub(crate) fn split_antimeridian(mp: MultiPolygon<f64>) -> MultiPolygon<f64> {
    if !crosses_antimeridian(&mp) {
        return mp;
    }
    let mut parts = Vec::new();
    for p in &mp.0 {
        let ext = unwrap_ring(p.exterior());
        // Holes are unwrapped alone and may land a turn away from the exterior; bring each
        // back next to the exterior by its first point.
        let x_ref = ext.0.first().map_or(0.0, |c| c.x);
        let holes: Vec<LineString<f64>> = p
            .interiors()
            .iter()
            .map(|h| {
                let mut u = unwrap_ring(h);
                let off =
                    u.0.first()
                        .map_or(0.0, |c| ((c.x - x_ref) / 360.0).round() * 360.0);
                u.0.iter_mut().for_each(|c| c.x -= off);
                u
            })
            .collect();
        let whole = Polygon::new(ext, holes);
        // Cut with one 360°-wide window per turn of longitude, shifting each piece home.
        for turn in [-1.0f64, 0.0, 1.0] {
            let lo = -180.0 + 360.0 * turn;
            let window = Rect::new((lo, -90.0), (lo + 360.0, 90.0)).to_polygon();
            for mut piece in whole.intersection(&window).0 {
                let shift = -360.0 * turn;
                piece.exterior_mut(|r| r.0.iter_mut().for_each(|c| c.x += shift));
                piece.interiors_mut(|hs| {
                    hs.iter_mut()
                        .for_each(|r| r.0.iter_mut().for_each(|c| c.x += shift))
                });
                parts.push(piece);
            }
        }
    }
    MultiPolygon(parts)
}

/// Writes a number as JSON: shortest round-trip form, `null` when not finite (JSON has no NaN).
pub(crate) fn push_num(out: &mut String, x: f64) {
    if x.is_finite() {
        // Writing to a String cannot fail.
        let _ = write!(out, "{x}");
    } else {
        out.push_str("null");
    }
}

/// Significant digits of property values in `cells.geojson`: a single-precision float's worth,
/// more than any input layer carries, and it keeps a many-cell file about half the size.
pub(crate) const PROPERTY_DIGITS: i32 = 7;

/// Writes `x` rounded to [`PROPERTY_DIGITS`] significant digits (trailing zeros dropped), or
/// `null` if it is not finite.
pub(crate) fn push_prop(out: &mut String, x: f64) {
    if !x.is_finite() {
        out.push_str("null");
        return;
    }
    if x == 0.0 {
        out.push('0');
        return;
    }
    let decimals = (PROPERTY_DIGITS - 1 - x.abs().log10().floor() as i32).max(0) as usize;
    let mut t = format!("{x:.decimals$}");
    if t.contains('.') {
        while t.ends_with('0') {
            t.pop();
        }
        if t.ends_with('.') {
            t.pop();
        }
    }
    if t == "-0" {
        t = "0".into();
    }
    out.push_str(&t);
}

/// Writes an RFC 7946 geometry object: `Polygon` for one part, `MultiPolygon` for several,
/// `null` for none (allowed for a Feature's geometry, §3.2).
pub(crate) fn push_geometry(out: &mut String, polys: &[Poly]) {
    let push_poly = |out: &mut String, poly: &Poly| {
        out.push('[');
        for (i, ring) in poly.iter().enumerate() {
            if i > 0 {
                out.push(',');
            }
            out.push('[');
            for (j, p) in ring.iter().enumerate() {
                if j > 0 {
                    out.push(',');
                }
                out.push('[');
                push_num(out, p[0]);
                out.push(',');
                push_num(out, p[1]);
                out.push(']');
            }
            out.push(']');
        }
        out.push(']');
    };
    match polys {
        [] => out.push_str("null"),
        [one] => {
            out.push_str(r#"{"type":"Polygon","coordinates":"#);
            push_poly(out, one);
            out.push('}');
        }
        many => {
            out.push_str(r#"{"type":"MultiPolygon","coordinates":["#);
            for (i, p) in many.iter().enumerate() {
                if i > 0 {
                    out.push(',');
                }
                push_poly(out, p);
            }
            out.push_str("]}");
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn properties_keep_seven_significant_digits() {
        // Hand rounding to 7 significant digits.
        let p = |x: f64| {
            let mut s = String::new();
            push_prop(&mut s, x);
            s
        };
        assert_eq!(p(14.636362520229403), "14.63636");
        assert_eq!(p(0.0007152257290744193), "0.0007152257");
        assert_eq!(p(3.5), "3.5");
        assert_eq!(p(18442521.3), "18442521");
        assert_eq!(p(-2.0), "-2");
        assert_eq!(p(-0.0), "0");
        assert_eq!(p(f64::NAN), "null");
    }
    use geo::{line_string, Area};

    #[test]
    fn rounding_is_six_decimals() {
        // Hand: the 7th decimal decides (4 → down, 6 → up); −0.0000004 rounds to 0, printed "0".
        assert_eq!(round6(12.345_678_49), 12.345_678);
        assert_eq!(round6(-0.000_000_4), 0.0);
        assert_eq!(round6(-0.000_000_4).to_string(), "0");
        assert_eq!(round6(1.000_000_6), 1.000_001);
    }

    #[test]
    fn clean_ring_drops_repeats_and_orients() {
        // Clockwise unit square with a point repeated after rounding.
        let ls = line_string![
            (x: 0.0, y: 0.0), (x: 0.0, y: 1.0), (x: 0.000_000_1, y: 1.0), (x: 1.0, y: 1.0),
            (x: 1.0, y: 0.0), (x: 0.0, y: 0.0)
        ];
        let r = clean_ring(&ls, true).unwrap();
        // Hand: 4 distinct corners + closing point, now counter-clockwise (area +1).
        assert_eq!(r.len(), 5);
        assert_eq!(signed_area(&r), 1.0);
        let h = clean_ring(&ls, false).unwrap();
        assert_eq!(signed_area(&h), -1.0);
        // A sliver that rounds to a line has no area left.
        let sliver = line_string![(x: 0.0, y: 0.0), (x: 1.0, y: 0.0), (x: 1.0, y: 0.000_000_1), (x: 0.0, y: 0.0)];
        assert!(clean_ring(&sliver, true).is_none());
    }

    #[test]
    fn antimeridian_box_is_split_in_two() {
        // A 2°×1° box from 179°E to 179°W, as unprojection returns it (longitudes wrap).
        let mp = MultiPolygon(vec![Polygon::new(
            line_string![
                (x: 179.0, y: 10.0), (x: -179.0, y: 10.0), (x: -179.0, y: 11.0), (x: 179.0, y: 11.0),
                (x: 179.0, y: 10.0)
            ],
            vec![],
        )]);
        let split = split_antimeridian(mp);
        assert_eq!(split.0.len(), 2);
        // Hand: each half is 1°×1° (planar degrees²), all longitudes within [−180, 180].
        for p in &split.0 {
            assert!((p.unsigned_area() - 1.0).abs() < 1e-9);
            assert!(p
                .exterior()
                .0
                .iter()
                .all(|c| (-180.0..=180.0).contains(&c.x)));
        }
        let mut min_x: Vec<f64> = split
            .0
            .iter()
            .map(|p| {
                p.exterior()
                    .0
                    .iter()
                    .map(|c| c.x)
                    .fold(f64::INFINITY, f64::min)
            })
            .collect();
        min_x.sort_by(f64::total_cmp);
        assert_eq!(min_x, vec![-180.0, 179.0]);
    }

    #[test]
    fn geometry_json_shapes() {
        let sq: Poly = vec![vec![[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 0.0]]];
        let mut s = String::new();
        push_geometry(&mut s, std::slice::from_ref(&sq));
        assert_eq!(
            s,
            r#"{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,0]]]}"#
        );
        let mut m = String::new();
        push_geometry(&mut m, &[sq.clone(), sq]);
        assert!(m.starts_with(r#"{"type":"MultiPolygon","coordinates":[[[[0,0]"#));
        let mut n = String::new();
        push_num(&mut n, f64::NAN);
        assert_eq!(n, "null");
    }
}
