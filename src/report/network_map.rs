//! The network map: sea cells, excluded and required cells, reserves dissolved exactly as in
//! `network.geojson`, a scale bar and a legend, as one inline SVG. A zoned network's cells are
//! filled in their zone's colour under the reserve outlines, with a legend entry per zone.

use super::basemap::Basemap;
use super::cells_path::cells_path;
use super::escape::esc;
use super::frame::{km_label, round1, scale_bar, MapFrame, PAD};
use super::palette::{zone_colour, EXCLUDED, LAND, REQUIRED, RESERVE, SEA};
use super::ReportZones;
use crate::assess::Reserve;
use crate::export::dissolve::dissolve;
use crate::grid::Grid;
use crate::model::CellStatus;
use std::fmt::Write;

/// Largest map area: the page's content width. Units: SVG units.
const MAX_W: f64 = 1000.0;
const MAX_H: f64 = 900.0;
/// Space under the map for the scale bar and legend. Units: SVG units.
const FOOTER: f64 = 64.0;
/// Narrowest drawing, so the legend (up to six entries) fits beside a tall, thin region.
/// Units: SVG units.
const MIN_SVG_W: f64 = 900.0;

/// The map frame the network map uses (shared with tests that invert its coordinates).
pub(crate) fn network_frame(grid: &Grid) -> MapFrame {
    MapFrame::fit(grid, MAX_W, MAX_H)
}

/// Height of the second legend row, which lists the zones. Units: SVG units.
const ZONE_ROW: f64 = 24.0;

/// Inline SVG of the network. `status`, `reserves` and `zones` are checked by the caller (one
/// status and zone per cell, reserve cell ids in range).
pub(crate) fn network_map(
    grid: &Grid,
    status: &[CellStatus],
    reserves: &[Reserve],
    zones: Option<&ReportZones>,
    base: Option<&Basemap>,
) -> String {
    let frame = network_frame(grid);
    let w = (frame.width + 2.0 * PAD).max(MIN_SVG_W);
    let h = frame.height + 2.0 * PAD + FOOTER + if zones.is_some() { ZONE_ROW } else { 0.0 };
    let mut s = String::new();
    let _ = write!(
        s,
        r#"<svg class="map" viewBox="0 0 {w} {h}" width="{w}" height="{h}" role="img" aria-label="Map of the network: {n} reserves">"#,
        w = round1(w),
        h = round1(h),
        n = reserves.len()
    );
    // Hatches for the two cell rules, so they read without colour too.
    let _ = write!(
        s,
        concat!(
            r#"<defs><pattern id="dp-excluded" patternUnits="userSpaceOnUse" width="6" height="6" patternTransform="rotate(45)">"#,
            r#"<rect width="6" height="6" fill="{sea}"/><line x1="0" y1="0" x2="0" y2="6" stroke="{ex}" stroke-width="2"/></pattern>"#,
            r#"<pattern id="dp-required" patternUnits="userSpaceOnUse" width="5" height="5" patternTransform="rotate(-45)">"#,
            r#"<line x1="0" y1="0" x2="0" y2="5" stroke="{rq}" stroke-width="2"/></pattern></defs>"#
        ),
        sea = SEA,
        ex = EXCLUDED,
        rq = REQUIRED
    );
    // Outside the region stays blank (white); land is drawn in its own colour, its outline
    // the coastline.
    let _ = write!(
        s,
        r##"<rect x="0" y="0" width="{}" height="{}" fill="#ffffff"/>"##,
        round1(w),
        round1(h)
    );
    let land = base.and_then(|b| b.land.as_ref()).map(|l| {
        let mut d = String::new();
        frame.push_multipolygon(&mut d, l);
        d
    });
    if let Some(d) = &land {
        push_path(
            &mut s,
            "land",
            d,
            &format!(r##"fill="{LAND}" stroke="#6b6256" stroke-width="0.8""##),
        );
    }
    let sea = cells_path(grid, &frame, |_| true);
    push_path(
        &mut s,
        "sea",
        &sea,
        &format!(r#"fill="{SEA}" stroke="none""#),
    );
    let excluded = cells_path(grid, &frame, |id| {
        status.get(id as usize) == Some(&CellStatus::Excluded)
    });
    push_path(
        &mut s,
        "excluded",
        &excluded,
        &format!(r#"fill="url(#dp-excluded)" stroke="{EXCLUDED}" stroke-width="0.8""#),
    );
    // Zones: each zone's cells in its colour; the reserves are then drawn as outlines on top.
    let present = zones.map(|z| zones_present(z)).unwrap_or_default();
    if let Some(z) = zones {
        s.push_str(r#"<g class="zones">"#);
        for &(zi, n) in &present {
            let d = cells_path(grid, &frame, |id| {
                z.assignment.get(id as usize) == Some(&(zi as u8 + 1))
            });
            let _ = write!(
                s,
                r#"<path class="zone" data-zone="{name}" data-cells="{n}" fill="{c}" fill-opacity="0.85" stroke="none" fill-rule="evenodd" d="{d}"><title>Zone {name}: {cells}</title></path>"#,
                name = esc(&z.names[zi]),
                c = zone_colour(zi),
                cells = crate::export::words::count(n, "cell"),
            );
        }
        s.push_str("</g>");
    }
    let reserve_fill = if zones.is_some() {
        r#"fill="none""#.to_string()
    } else {
        format!(r#"fill="{RESERVE}" fill-opacity="0.85""#)
    };
    s.push_str(r#"<g class="reserves">"#);
    for (k, r) in reserves.iter().enumerate() {
        let mut d = String::new();
        frame.push_multipolygon(&mut d, &dissolve(grid, &r.cells));
        let _ = write!(
            s,
            r##"<path class="reserve" data-reserve="{}" {reserve_fill} stroke="#1a1a1a" stroke-width="1.2" fill-rule="evenodd" d="{d}"><title>Reserve {}: {}, {:.1} km²</title></path>"##,
            k + 1,
            k + 1,
            crate::export::words::count(r.cells.len(), "cell"),
            r.area_km2
        );
    }
    s.push_str("</g>");
    let required = cells_path(grid, &frame, |id| {
        status.get(id as usize) == Some(&CellStatus::Required)
    });
    push_path(
        &mut s,
        "required",
        &required,
        &format!(r#"fill="url(#dp-required)" stroke="{REQUIRED}" stroke-width="1""#),
    );
    if let Some(b) = base {
        push_graticule(&mut s, &frame, b);
    }
    push_reserve_labels(&mut s, grid, &frame, reserves);
    if let Some(b) = base {
        push_north_arrow(&mut s, &frame, b.north_deg);
    }
    push_scale_bar(&mut s, &frame);
    let present_items = Present {
        land: land.is_some(),
        required: !required.is_empty(),
        excluded: !excluded.is_empty(),
        outside: grid.len() < (grid.n_cols as usize) * (grid.n_rows as usize),
    };
    push_legend(
        &mut s,
        &frame,
        reserves.len(),
        zones.is_some(),
        &present_items,
    );
    if let Some(z) = zones {
        push_zone_legend(&mut s, &frame, z, &present);
    }
    s.push_str("</svg>");
    s
}

/// Which legend entries have something on the map.
struct Present {
    land: bool,
    required: bool,
    excluded: bool,
    outside: bool,
}

/// Meridians and parallels as thin lines, each labelled where it leaves the map: meridians
/// along the bottom edge, parallels along the left.
fn push_graticule(s: &mut String, frame: &MapFrame, b: &Basemap) {
    s.push_str(r##"<g class="graticule" fill="none" stroke="#5f5f5f" stroke-width="0.5" stroke-dasharray="3 3">"##);
    for g in &b.graticule {
        for piece in &g.pieces.0 {
            let mut d = String::new();
            for (i, c) in piece.0.iter().enumerate() {
                let (u, v) = frame.to_svg(c.x, c.y);
                let _ = write!(
                    d,
                    "{}{} {}",
                    if i == 0 { 'M' } else { 'L' },
                    round1(u),
                    round1(v)
                );
            }
            let _ = write!(s, r#"<path data-degrees="{}" d="{d}"/>"#, g.degrees);
        }
    }
    s.push_str("</g>");
    s.push_str(r##"<g class="graticule-labels" font-size="11" fill="#333333" stroke="#ffffff" stroke-width="3" paint-order="stroke">"##);
    for g in &b.graticule {
        // The end of the line nearest the bottom (meridians) or the left (parallels).
        let ends = g
            .pieces
            .0
            .iter()
            .flat_map(|l| [l.0.first(), l.0.last()])
            .flatten();
        let pick = ends.map(|c| frame.to_svg(c.x, c.y)).max_by(|a, b| {
            if g.meridian {
                a.1.total_cmp(&b.1)
            } else {
                b.0.total_cmp(&a.0)
            }
        });
        let Some((u, v)) = pick else { continue };
        let (x, y, anchor) = if g.meridian {
            (u, v - 4.0, "middle")
        } else {
            (u + 4.0, v - 3.0, "start")
        };
        let _ = write!(
            s,
            r#"<text class="graticule-label" x="{}" y="{}" text-anchor="{anchor}">{}</text>"#,
            round1(x),
            round1(y),
            esc(&g.label)
        );
    }
    s.push_str("</g>");
}

/// Each reserve's number (as in network.geojson and reserves.csv) at a point inside it.
pub(crate) fn push_reserve_labels(
    s: &mut String,
    grid: &Grid,
    frame: &MapFrame,
    reserves: &[Reserve],
) {
    use geo::InteriorPoint;
    s.push_str(r##"<g class="reserve-labels" font-size="12" font-weight="600" fill="#1a1a1a" stroke="#ffffff" stroke-width="3" paint-order="stroke" text-anchor="middle">"##);
    for (k, r) in reserves.iter().enumerate() {
        let Some(p) = dissolve(grid, &r.cells).interior_point() else {
            continue;
        };
        let (u, v) = frame.to_svg(p.x(), p.y());
        let _ = write!(
            s,
            r#"<text class="reserve-label" data-reserve="{n}" x="{}" y="{}">{n}</text>"#,
            round1(u),
            round1(v + 4.0),
            n = k + 1
        );
    }
    s.push_str("</g>");
}

/// An arrow in the map's top-right corner pointing to true north at the map's centre.
pub(crate) fn push_north_arrow(s: &mut String, frame: &MapFrame, north_deg: f64) {
    let (cx, cy) = (round1(PAD + frame.width - 22.0), round1(PAD + 30.0));
    let _ = write!(
        s,
        r##"<g class="north-arrow" data-north-deg="{:.2}" transform="rotate({:.2} {cx} {cy})"><circle cx="{cx}" cy="{cy}" r="17" fill="#ffffff" fill-opacity="0.85" stroke="#1a1a1a" stroke-width="0.8"/><path d="M{cx} {}L{} {}L{cx} {}L{} {}Z" fill="#1a1a1a"/><text x="{cx}" y="{}" font-size="11" font-weight="700" text-anchor="middle">N</text></g>"##,
        north_deg,
        north_deg,
        round1(cy - 13.0),
        round1(cx + 6.0),
        round1(cy + 8.0),
        round1(cy + 3.0),
        round1(cx - 6.0),
        round1(cy + 8.0),
        round1(cy - 15.0),
    );
}

/// The zones with at least one cell, as `(zone index, cells)` in plan order.
fn zones_present(z: &ReportZones) -> Vec<(usize, usize)> {
    let mut counts = vec![0usize; z.names.len()];
    for &v in z.assignment {
        if let Some(c) = (v as usize).checked_sub(1).and_then(|i| counts.get_mut(i)) {
            *c += 1;
        }
    }
    counts
        .into_iter()
        .enumerate()
        .filter(|(_, n)| *n > 0)
        .collect()
}

/// The second legend row: one swatch per zone present, named with its cell count.
fn push_zone_legend(s: &mut String, frame: &MapFrame, z: &ReportZones, present: &[(usize, usize)]) {
    let y = round1(PAD + frame.height + 40.0 + ZONE_ROW);
    s.push_str(r#"<g class="legend zone-legend" font-size="12">"#);
    let mut x = PAD;
    for &(zi, n) in present {
        let label = format!(
            "Zone {} ({n} cell{})",
            z.names[zi],
            if n == 1 { "" } else { "s" }
        );
        let _ = write!(
            s,
            r##"<rect class="legend-zone" data-zone="{name}" x="{x}" y="{y}" width="16" height="12" fill="{c}" fill-opacity="0.85" stroke="#1a1a1a" stroke-width="0.5"/><text x="{tx}" y="{ty}">{label}</text>"##,
            name = esc(&z.names[zi]),
            x = round1(x),
            c = zone_colour(zi),
            tx = round1(x + 22.0),
            ty = round1(y + 10.5),
            label = esc(&label)
        );
        // About 7 units a character at 12 px, and at least the first row's spacing.
        x += (30.0 + 7.0 * label.chars().count() as f64).max(150.0);
    }
    s.push_str("</g>");
}

/// Largest side of a small network map, several of which sit side by side. Units: SVG units.
const PANEL_MAX: f64 = 340.0;

/// A small inline SVG of one network among several (sweep budgets, compared networks): sea,
/// excluded cells (plain tint), reserves and required cells (outlined), and a scale bar. It
/// defines no ids, so any number of panels can share a page. `status` and `reserves` are
/// checked by the caller.
pub(crate) fn network_panel(
    grid: &Grid,
    status: &[CellStatus],
    reserves: &[Reserve],
    label: &str,
) -> String {
    let frame = MapFrame::fit(grid, PANEL_MAX, PANEL_MAX);
    let w = frame.width + 2.0 * PAD;
    let h = frame.height + 2.0 * PAD + 30.0;
    let mut s = String::new();
    let _ = write!(
        s,
        r#"<svg class="map panel" viewBox="0 0 {w} {h}" width="{w}" height="{h}" role="img" aria-label="Map of the network {l}: {n} reserves">"#,
        w = round1(w),
        h = round1(h),
        l = esc(label),
        n = reserves.len()
    );
    let _ = write!(
        s,
        r##"<rect x="0" y="0" width="{}" height="{}" fill="#ffffff"/>"##,
        round1(w),
        round1(h)
    );
    push_path(
        &mut s,
        "sea",
        &cells_path(grid, &frame, |_| true),
        &format!(r#"fill="{SEA}" stroke="none""#),
    );
    push_path(
        &mut s,
        "excluded",
        &cells_path(grid, &frame, |id| {
            status.get(id as usize) == Some(&CellStatus::Excluded)
        }),
        &format!(r#"fill="{EXCLUDED}" fill-opacity="0.35" stroke="none""#),
    );
    s.push_str(r#"<g class="reserves">"#);
    for (k, r) in reserves.iter().enumerate() {
        let mut d = String::new();
        frame.push_multipolygon(&mut d, &dissolve(grid, &r.cells));
        let _ = write!(
            s,
            r##"<path class="reserve" data-reserve="{}" fill="{RESERVE}" fill-opacity="0.85" stroke="#1a1a1a" stroke-width="0.8" fill-rule="evenodd" d="{d}"/>"##,
            k + 1
        );
    }
    s.push_str("</g>");
    push_path(
        &mut s,
        "required",
        &cells_path(grid, &frame, |id| {
            status.get(id as usize) == Some(&CellStatus::Required)
        }),
        &format!(r#"fill="none" stroke="{REQUIRED}" stroke-width="1""#),
    );
    push_scale_bar(&mut s, &frame);
    s.push_str("</svg>");
    s
}

pub(crate) fn push_path(s: &mut String, class: &str, d: &str, style: &str) {
    if d.is_empty() {
        return;
    }
    let _ = write!(
        s,
        r#"<path class="{class}" {style} fill-rule="evenodd" d="{d}"/>"#
    );
}

/// A bar with end ticks and its length, under the map's south-west corner.
pub(crate) fn push_scale_bar(s: &mut String, frame: &MapFrame) {
    let bar = scale_bar(frame);
    if bar.km <= 0.0 {
        return;
    }
    let x0 = PAD;
    let x1 = round1(PAD + bar.svg);
    let y = round1(PAD + frame.height + 18.0);
    let _ = write!(
        s,
        r##"<g class="scale-bar" data-km="{km}" data-svg-length="{len}"><path d="M{x0} {yt}V{y}H{x1}V{yt}" fill="none" stroke="#1a1a1a" stroke-width="1.5"/><text x="{tx}" y="{ty}" font-size="12">{label}</text></g>"##,
        km = bar.km,
        len = bar.svg,
        yt = round1(y - 5.0),
        tx = round1(x1 + 6.0),
        ty = round1(y + 4.0),
        label = esc(&km_label(bar.km)),
    );
}

fn push_legend(
    s: &mut String,
    frame: &MapFrame,
    n_reserves: usize,
    zoned: bool,
    present: &Present,
) {
    let y = round1(PAD + frame.height + 40.0);
    let reserve = if zoned {
        (
            r##"fill="none" stroke="#1a1a1a" stroke-width="1.2""##.to_string(),
            format!("Reserve outline ({n_reserves})"),
        )
    } else {
        (
            format!(
                r##"fill="{RESERVE}" fill-opacity="0.85" stroke="#1a1a1a" stroke-width="1.2""##
            ),
            format!("Reserve ({n_reserves})"),
        )
    };
    let mut items: Vec<(String, String)> = vec![
        (
            format!(r##"fill="{SEA}" stroke="#999999" stroke-width="0.5""##),
            "Sea, not chosen".into(),
        ),
        reserve,
    ];
    if present.required {
        items.push((
            format!(r#"fill="url(#dp-required)" stroke="{REQUIRED}""#),
            "Required cell".into(),
        ));
    }
    if present.excluded {
        items.push((
            format!(r#"fill="url(#dp-excluded)" stroke="{EXCLUDED}""#),
            "Excluded cell".into(),
        ));
    }
    if present.land {
        items.push((
            format!(r##"fill="{LAND}" stroke="#6b6256" stroke-width="0.8""##),
            "Land".into(),
        ));
    }
    if present.outside {
        items.push((
            r##"fill="#ffffff" stroke="#999999" stroke-width="0.5""##.into(),
            "Outside the region".into(),
        ));
    }
    s.push_str(r#"<g class="legend" font-size="12">"#);
    let mut x = PAD;
    for (style, label) in &items {
        let _ = write!(
            s,
            r#"<rect x="{x}" y="{y}" width="16" height="12" {style}/><text x="{tx}" y="{ty}">{label}</text>"#,
            x = round1(x),
            tx = round1(x + 22.0),
            ty = round1(y + 10.5),
            label = esc(label)
        );
        x += 148.0;
    }
    s.push_str("</g>");
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::assess::reserves;
    use crate::export::network_geojson;
    use crate::grid::Crs;
    use geojson::{GeoJson, GeometryValue};
    use std::str::FromStr;

    /// SVG path data → rings of `(u, v)` SVG points (only the `M`, `L`, `Z` this module writes).
    pub(crate) fn parse_path(d: &str) -> Vec<Vec<(f64, f64)>> {
        let mut rings = Vec::new();
        for sub in d.split('Z').filter(|p| !p.is_empty()) {
            let ring: Vec<(f64, f64)> = sub
                .trim_start_matches('M')
                .split('L')
                .map(|pt| {
                    let mut it = pt.split(' ').map(|v| v.parse::<f64>().unwrap());
                    (it.next().unwrap(), it.next().unwrap())
                })
                .collect();
            rings.push(ring);
        }
        rings
    }

    /// True when `p` is within `tol` of the segment `a`–`b`.
    fn near_segment(p: [f64; 2], a: [f64; 2], b: [f64; 2], tol: f64) -> bool {
        let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
        let len2 = dx * dx + dy * dy;
        let t = if len2 > 0.0 {
            (((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len2).clamp(0.0, 1.0)
        } else {
            0.0
        };
        let (qx, qy) = (a[0] + t * dx, a[1] + t * dy);
        ((p[0] - qx).powi(2) + (p[1] - qy).powi(2)).sqrt() <= tol
    }

    /// Checks one GeoJSON ring (projected back to metres) against one SVG ring (inverted to
    /// metres): same start, same vertices in the same order; GeoJSON may add points along
    /// an edge (its densification for lon/lat).
    pub(crate) fn assert_same_ring(geo: &[[f64; 2]], svg: &[[f64; 2]], tol: f64) {
        let close = |p: [f64; 2], q: [f64; 2]| (p[0] - q[0]).hypot(p[1] - q[1]) <= tol;
        let mut q: Vec<[f64; 2]> = svg.to_vec();
        q.push(svg[0]);
        assert!(close(geo[0], q[0]), "start {:?} vs {:?}", geo[0], q[0]);
        let mut j = 0;
        for &p in &geo[1..] {
            if j + 1 < q.len() && close(p, q[j + 1]) {
                j += 1;
            } else {
                assert!(
                    j + 1 < q.len() && near_segment(p, q[j], q[j + 1], tol),
                    "GeoJSON point {p:?} is off SVG edge {j} ({:?} → {:?})",
                    q[j],
                    q.get(j + 1)
                );
            }
        }
        assert_eq!(j, q.len() - 1, "SVG vertices not all visited in order");
    }

    #[test]
    fn reserve_paths_match_network_geojson() {
        // 6 × 6 cells of 5 km; a ring reserve with a hole and a separate L shape.
        let g = Grid::full_rectangle(
            Crs::auto_laea(4.0, 56.0),
            5_000.0,
            [-15_000.0, -15_000.0],
            6,
            6,
        )
        .unwrap();
        let mut sel = vec![false; g.len()];
        for (c, r) in [
            (0, 0),
            (1, 0),
            (2, 0),
            (0, 1),
            (2, 1),
            (0, 2),
            (1, 2),
            (2, 2),
            (4, 4),
            (5, 4),
            (5, 5),
        ] {
            sel[r * 6 + c] = true;
        }
        let cost = vec![1.0; g.len()];
        let res = reserves(&g, &cost, &sel);
        let assessment = crate::assess::Assessment {
            coverage: vec![],
            cost: 0.0,
            area_km2: 0.0,
            share_of_region: 0.0,
            reserves: res.clone(),
            exposed_edge_km: 0.0,
            targets_reached: 0,
            targets_absent: 0,
            boundary_edge_km: 0.0,
            cells_selected: 11,
            compactness_ratio: f64::NAN,
            largest_gap_km: 0.0,
        };
        let gj = network_geojson(&g, &assessment).unwrap();
        let svg = network_map(&g, &vec![CellStatus::Free; g.len()], &res, None, None);
        let frame = network_frame(&g);
        let projector = g.projector().unwrap();
        let GeoJson::FeatureCollection(fc) = GeoJson::from_str(&gj).unwrap() else {
            panic!("not a FeatureCollection")
        };
        assert_eq!(fc.features.len(), 2);
        // Tolerance: 0.05 SVG unit of rounding is 0.05 / scale metres (here 0.05 / (800/30 000)
        // ≈ 1.9 m), plus 6-decimal lon/lat rounding (≈ 0.1 m).
        let tol = 0.06 / frame.scale;
        for (k, f) in fc.features.iter().enumerate() {
            let marker = format!(r#"data-reserve="{}""#, k + 1);
            let at = svg.find(&marker).unwrap();
            let d0 = svg[at..].find(" d=\"").unwrap() + at + 4;
            let d1 = svg[d0..].find('"').unwrap() + d0;
            let svg_rings: Vec<Vec<[f64; 2]>> = parse_path(&svg[d0..d1])
                .into_iter()
                .map(|r| {
                    r.into_iter()
                        .map(|(u, v)| {
                            let (x, y) = frame.to_metres(u, v);
                            [x, y]
                        })
                        .collect()
                })
                .collect();
            let GeometryValue::Polygon { coordinates } = &f.geometry.as_ref().unwrap().value else {
                panic!("reserve {k} is not one polygon")
            };
            assert_eq!(coordinates.len(), svg_rings.len());
            // Hand: the 8-cell ring (largest, first) has exterior + hole; the L shape one ring.
            assert_eq!(coordinates.len(), if k == 0 { 2 } else { 1 });
            for (ring, svg_ring) in coordinates.iter().zip(&svg_rings) {
                let metres: Vec<[f64; 2]> = ring
                    .iter()
                    .map(|p| projector.to_xy(p[0], p[1]).unwrap())
                    .collect();
                assert_same_ring(&metres, svg_ring, tol);
            }
        }
    }

    #[test]
    fn rules_are_drawn_with_their_classes() {
        let g = Grid::full_rectangle(Crs::auto_laea(4.0, 56.0), 5_000.0, [0.0, 0.0], 3, 1).unwrap();
        let status = [CellStatus::Required, CellStatus::Free, CellStatus::Excluded];
        let svg = network_map(&g, &status, &[], None, None);
        assert!(svg.contains(r#"class="required""#));
        assert!(svg.contains(r#"class="excluded""#));
        assert!(!svg.contains(r#"class="reserve""#));
        // 15 km wide map at 800 units: a quarter is 3.75 km → 2 km bar = 2000 × 800/15 000
        // = 106.67 units (hand computation).
        assert!(svg.contains(r#"data-km="2""#), "{svg}");
        assert!(svg.contains("2 km"));
    }
}
