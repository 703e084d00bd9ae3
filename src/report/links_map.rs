//! The links map: the network's reserves over land and sea, with an arrow from each reserve to
//! each other reserve its larvae settle in, as wide as the share of its larvae that do. It
//! answers "which reserves seed which" at a glance; `connectivity.csv` holds the numbers.

use super::basemap::Basemap;
use super::cells_path::cells_path;
use super::escape::esc;
use super::frame::{round1, MapFrame, PAD};
use super::network_map::{
    network_frame, push_north_arrow, push_path, push_reserve_labels, push_scale_bar,
};
use super::palette::{LAND, RESERVE, SEA};
use crate::assess::connectivity::ReserveLink;
use crate::assess::Reserve;
use crate::export::dissolve::dissolve;
use crate::grid::Grid;
use std::fmt::Write;

/// Most arrows drawn: beyond a few dozen a map of arrows no longer reads.
pub(crate) const MAX_ARROWS: usize = 30;
/// Arrow stroke width of the weakest and the strongest link drawn. Units: SVG units.
const THIN: f64 = 1.0;
const THICK: f64 = 7.0;
/// Narrowest drawing, so the two legend lines fit. Units: SVG units.
const MIN_SVG_W: f64 = 560.0;
/// Arrow colour: Okabe–Ito blue, apart from the green reserves and the grey land.
const ARROW: &str = "#0072B2";

/// Inline SVG of the reserves and the strongest `links` between them (at most
/// [`MAX_ARROWS`], `links` strongest first as `assess::connectivity::reserve_links` returns
/// them). Reserve indices in `links` are checked by the caller.
pub(crate) fn links_map(
    grid: &Grid,
    reserves: &[Reserve],
    links: &[ReserveLink],
    base: Option<&Basemap>,
) -> String {
    let frame = network_frame(grid);
    // Wide enough for the legend beside a tall, thin region.
    let w = (frame.width + 2.0 * PAD).max(MIN_SVG_W);
    let h = frame.height + 2.0 * PAD + 58.0;
    let shown = &links[..links.len().min(MAX_ARROWS)];
    let mut s = String::new();
    let _ = write!(
        s,
        r#"<svg class="map links" viewBox="0 0 {w} {h}" width="{w}" height="{h}" role="img" aria-label="Map of larval links between reserves: {n} arrows">"#,
        w = round1(w),
        h = round1(h),
        n = shown.len()
    );
    let _ = write!(
        s,
        r##"<defs><marker id="dp-link-head" viewBox="0 0 10 10" refX="9" refY="5" markerUnits="userSpaceOnUse" markerWidth="12" markerHeight="12" orient="auto"><path d="M0 0L10 5L0 10z" fill="{ARROW}"/></marker></defs><rect x="0" y="0" width="{}" height="{}" fill="#ffffff"/>"##,
        round1(w),
        round1(h)
    );
    if let Some(l) = base.and_then(|b| b.land.as_ref()) {
        let mut d = String::new();
        frame.push_multipolygon(&mut d, l);
        push_path(
            &mut s,
            "land",
            &d,
            &format!(r##"fill="{LAND}" stroke="#6b6256" stroke-width="0.8""##),
        );
    }
    push_path(
        &mut s,
        "sea",
        &cells_path(grid, &frame, |_| true),
        &format!(r#"fill="{SEA}" stroke="none""#),
    );
    s.push_str(r#"<g class="reserves">"#);
    let mut anchors = Vec::with_capacity(reserves.len());
    for (k, r) in reserves.iter().enumerate() {
        let shape = dissolve(grid, &r.cells);
        let mut d = String::new();
        frame.push_multipolygon(&mut d, &shape);
        let _ = write!(
            s,
            r##"<path class="reserve" data-reserve="{}" fill="{RESERVE}" fill-opacity="0.45" stroke="#1a1a1a" stroke-width="0.8" fill-rule="evenodd" d="{d}"/>"##,
            k + 1
        );
        anchors.push(reserve_anchor(&frame, &shape));
    }
    s.push_str("</g>");
    let strongest = shown.first().map_or(0.0, |l| l.share);
    s.push_str(r#"<g class="links" fill="none">"#);
    for l in shown {
        let (Some(a), Some(b)) = (anchors[l.from], anchors[l.to]) else {
            continue;
        };
        let width = if strongest > 0.0 {
            THIN + (THICK - THIN) * (l.share / strongest).sqrt()
        } else {
            THIN
        };
        let _ = write!(
            s,
            r#"<path class="link" data-from="{f}" data-to="{t}" data-share="{share}" d="{d}" stroke="{ARROW}" stroke-opacity="0.8" stroke-width="{sw}" stroke-linecap="round" marker-end="url(#dp-link-head)"><title>Reserve {f} → reserve {t}: {pct} of the larvae released in {f} settle in {t}</title></path>"#,
            f = l.from + 1,
            t = l.to + 1,
            share = l.share,
            d = arc(a, b),
            sw = round1(width),
            pct = esc(&percent(l.share)),
        );
    }
    s.push_str("</g>");
    push_reserve_labels(&mut s, grid, &frame, reserves);
    if let Some(b) = base {
        push_north_arrow(&mut s, &frame, b.north_deg);
    }
    push_scale_bar(&mut s, &frame);
    let _ = write!(
        s,
        r##"<g class="legend" font-size="12"><path d="M{x0} {y}H{x1}" stroke="{ARROW}" stroke-width="{t}" marker-end="url(#dp-link-head)"/><text x="{tx}" y="{ty}">strongest link: {pct} of a reserve's larvae settle in the other;</text><text x="{tx}" y="{ty2}">arrow width grows with the square root of the share</text></g>"##,
        x0 = PAD,
        x1 = PAD + 40.0,
        y = round1(PAD + frame.height + 34.0),
        t = THICK,
        tx = PAD + 52.0,
        ty = round1(PAD + frame.height + 38.0),
        ty2 = round1(PAD + frame.height + 54.0),
        pct = esc(&percent(strongest)),
    );
    s.push_str("</svg>");
    s
}

/// Where a reserve's arrows start and end: the same interior point its number is drawn at.
fn reserve_anchor(frame: &MapFrame, shape: &geo::MultiPolygon<f64>) -> Option<(f64, f64)> {
    use geo::InteriorPoint;
    shape.interior_point().map(|p| frame.to_svg(p.x(), p.y()))
}

/// A gently curved path from `a` to `b` (bowing to the right of the direction of travel, so
/// the arrows a → b and b → a do not overlap), shortened at both ends to leave the reserve
/// numbers readable.
fn arc(a: (f64, f64), b: (f64, f64)) -> String {
    let (dx, dy) = (b.0 - a.0, b.1 - a.1);
    let len = dx.hypot(dy);
    if len < 1e-9 {
        return String::new();
    }
    let (ux, uy) = (dx / len, dy / len);
    let trim = (len * 0.2).min(12.0);
    let (sx, sy) = (a.0 + ux * trim, a.1 + uy * trim);
    let (ex, ey) = (b.0 - ux * trim, b.1 - uy * trim);
    // SVG y grows downwards, so (−uy, ux) is to the right of the direction of travel.
    let bow = 0.15 * len;
    let (cx, cy) = ((a.0 + b.0) / 2.0 - uy * bow, (a.1 + b.1) / 2.0 + ux * bow);
    format!(
        "M{} {}Q{} {} {} {}",
        round1(sx),
        round1(sy),
        round1(cx),
        round1(cy),
        round1(ex),
        round1(ey)
    )
}

/// A share as a percentage with enough digits to tell small links apart.
fn percent(share: f64) -> String {
    let p = 100.0 * share;
    if p >= 10.0 {
        format!("{p:.0}%")
    } else if p >= 1.0 {
        format!("{p:.1}%")
    } else {
        format!("{p:.2}%")
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;

    #[test]
    fn arrows_are_drawn_strongest_widest_and_capped() {
        let g = Grid::full_rectangle(Crs::auto_laea(4.0, 56.0), 5_000.0, [0.0, 0.0], 6, 1).unwrap();
        let reserves: Vec<Reserve> = [0u32, 2, 5]
            .iter()
            .map(|&c| Reserve {
                cells: vec![c],
                area_km2: 25.0,
                cost: 1.0,
            })
            .collect();
        let links = vec![
            ReserveLink {
                from: 0,
                to: 1,
                share: 0.2,
            },
            ReserveLink {
                from: 1,
                to: 0,
                share: 0.05,
            },
        ];
        let svg = links_map(&g, &reserves, &links, None);
        assert_eq!(svg.matches(r#"class="link""#).count(), 2);
        // Width: strongest 7, the other 1 + 6·√(0.05/0.2) = 4 (hand computation).
        assert!(svg.contains(r#"data-from="1" data-to="2" data-share="0.2""#));
        assert!(svg.contains(r#"stroke-width="7" stroke-linecap"#), "{svg}");
        assert!(svg.contains(r#"stroke-width="4" stroke-linecap"#), "{svg}");
        assert!(svg.contains("strongest link: 20%"));
        let many: Vec<ReserveLink> = (0..40)
            .map(|k| ReserveLink {
                from: k % 3,
                to: (k + 1) % 3,
                share: 1.0 / (k + 1) as f64,
            })
            .collect();
        let svg = links_map(&g, &reserves, &many, None);
        assert_eq!(svg.matches(r#"class="link""#).count(), MAX_ARROWS);
        assert_eq!(percent(0.004567), "0.46%");
        assert_eq!(percent(0.25), "25%");
    }

    #[test]
    fn the_arc_bows_right_of_travel_and_stops_short() {
        // From (0,0) to (100,0): trim min(20, 12) = 12; control point at (50, 15) (SVG y down
        // is to the right when travelling east).
        assert_eq!(arc((0.0, 0.0), (100.0, 0.0)), "M12 0Q50 15 88 0");
    }
}
