//! What the network map draws besides cells, in the grid's projected metres: the land mask
//! clipped to the map, a lon/lat graticule (curves, computed through the grid's own
//! projection) with degree labels, and the direction of true north at the map's centre. Built
//! once from the plan's land polygons and the grid; [`super::network_map`] draws it.

use crate::grid::{Grid, GridError};
use geo::{BooleanOps, Coord, LineString, MultiLineString, MultiPolygon, Rect};

/// One graticule line: a meridian or a parallel, projected and clipped to the map.
#[derive(Debug, Clone, PartialEq)]
pub struct GraticuleLine {
    /// True for a meridian (constant longitude), false for a parallel.
    pub meridian: bool,
    /// The line's longitude or latitude. Units: degrees.
    pub degrees: f64,
    /// Its label, e.g. `120.5°W`, `36°S`.
    pub label: String,
    /// The clipped line's pieces in projected metres.
    pub pieces: MultiLineString<f64>,
}

/// The map's base: land, graticule and north.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Basemap {
    /// Land polygons in projected metres, clipped to the grid's lattice extent.
    pub land: Option<MultiPolygon<f64>>,
    /// Meridians then parallels, west to east and south to north.
    pub graticule: Vec<GraticuleLine>,
    /// Direction of true north at the map's centre, clockwise from the map's up. Units:
    /// degrees.
    pub north_deg: f64,
}

/// Graticule spacings tried, finest first. Units: degrees.
const STEPS: [f64; 12] = [
    0.05, 0.1, 0.2, 0.25, 0.5, 1.0, 2.0, 2.5, 5.0, 10.0, 15.0, 30.0,
];

/// The finest spacing that gives at most `max_lines` lines over `span` degrees.
pub(crate) fn graticule_step(span: f64, max_lines: f64) -> f64 {
    STEPS
        .iter()
        .copied()
        .find(|s| span / s <= max_lines)
        .unwrap_or(30.0)
}

/// A degree label: `120.5°W`, `0°`, `36°S`, with as many decimals as the step needs.
pub(crate) fn degree_label(value: f64, meridian: bool, step: f64) -> String {
    let decimals = if step >= 1.0 {
        0
    } else if step >= 0.1 && (step * 10.0).fract().abs() < 1e-9 {
        1
    } else {
        2
    };
    let v = if meridian {
        // −180..180, so a Pacific map labels 170°E, 180°, 170°W.
        let w = (value + 180.0).rem_euclid(360.0) - 180.0;
        if (w + 180.0).abs() < 1e-9 {
            180.0
        } else {
            w
        }
    } else {
        value
    };
    // As many decimals as the step needs, trailing zeros dropped: 10°, 9.5°, 12.25°.
    let text = format!("{:.*}", decimals, v.abs());
    let text = if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    };
    let zero = v.abs() < 0.5 * 10f64.powi(-(decimals as i32));
    let hemisphere = match (
        zero || (meridian && (v.abs() - 180.0).abs() < 1e-9),
        meridian,
        v > 0.0,
    ) {
        (true, _, _) => "",
        (false, true, true) => "E",
        (false, true, false) => "W",
        (false, false, true) => "N",
        (false, false, false) => "S",
    };
    format!("{text}°{hemisphere}")
}

impl Basemap {
    /// Land (lon/lat, as read from the plan's land file) and the graticule for `grid`.
    pub fn build(
        grid: &Grid,
        land_lonlat: Option<&MultiPolygon<f64>>,
    ) -> Result<Basemap, GridError> {
        let p = grid.projector()?;
        let (x0, y0) = (grid.origin[0], grid.origin[1]);
        let x1 = x0 + grid.n_cols.max(1) as f64 * grid.cell_size_m;
        let y1 = y0 + grid.n_rows.max(1) as f64 * grid.cell_size_m;
        let frame = Rect::new(Coord { x: x0, y: y0 }, Coord { x: x1, y: y1 }).to_polygon();
        let land = match land_lonlat {
            None => None,
            Some(ll) => {
                let xy = p.polygon_to_xy(ll, crate::grid::DENSIFY_DEG)?;
                let clipped = xy.intersection(&MultiPolygon(vec![frame.clone()]));
                (!clipped.0.is_empty()).then_some(clipped)
            }
        };
        // The frame's lon/lat range, from points along and inside it, longitudes unwrapped
        // around the centre's so a map across 180° has one continuous range.
        let centre = p.to_lonlat((x0 + x1) / 2.0, (y0 + y1) / 2.0)?;
        let (mut lon_lo, mut lon_hi, mut lat_lo, mut lat_hi) =
            (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
        for i in 0..=10 {
            for j in 0..=10 {
                let x = x0 + (x1 - x0) * i as f64 / 10.0;
                let y = y0 + (y1 - y0) * j as f64 / 10.0;
                let ll = p.to_lonlat(x, y)?;
                let lon = centre[0] + (ll[0] - centre[0] + 180.0).rem_euclid(360.0) - 180.0;
                lon_lo = lon_lo.min(lon);
                lon_hi = lon_hi.max(lon);
                lat_lo = lat_lo.min(ll[1]);
                lat_hi = lat_hi.max(ll[1]);
            }
        }
        let step = graticule_step((lon_hi - lon_lo).max(lat_hi - lat_lo), 6.0);
        let mut graticule = Vec::new();
        let clip = |pts: Vec<Coord<f64>>| -> MultiLineString<f64> {
            frame.clip(&MultiLineString(vec![LineString(pts)]), false)
        };
        let samples = 60;
        let lat_a = (lat_lo - step).max(-89.9);
        let lat_b = (lat_hi + step).min(89.9);
        let mut lon = (lon_lo / step).ceil() * step;
        while lon <= lon_hi + 1e-9 {
            let pts = (0..=samples)
                .map(|k| {
                    let lat = lat_a + (lat_b - lat_a) * k as f64 / samples as f64;
                    p.to_xy(lon, lat).map(|q| Coord { x: q[0], y: q[1] })
                })
                .collect::<Result<Vec<_>, _>>()?;
            let pieces = clip(pts);
            if !pieces.0.is_empty() {
                graticule.push(GraticuleLine {
                    meridian: true,
                    degrees: lon,
                    label: degree_label(lon, true, step),
                    pieces,
                });
            }
            lon += step;
        }
        let (lon_a, lon_b) = (lon_lo - step, lon_hi + step);
        let mut lat = (lat_lo / step).ceil() * step;
        while lat <= lat_hi + 1e-9 {
            let pts = (0..=samples)
                .map(|k| {
                    let lon = lon_a + (lon_b - lon_a) * k as f64 / samples as f64;
                    p.to_xy(lon, lat).map(|q| Coord { x: q[0], y: q[1] })
                })
                .collect::<Result<Vec<_>, _>>()?;
            let pieces = clip(pts);
            if !pieces.0.is_empty() {
                graticule.push(GraticuleLine {
                    meridian: false,
                    degrees: lat,
                    label: degree_label(lat, false, step),
                    pieces,
                });
            }
            lat += step;
        }
        // True north: the grid direction of a short step north from the centre.
        let a = p.to_xy(centre[0], centre[1])?;
        let b = p.to_xy(centre[0], (centre[1] + 0.05).min(89.99))?;
        let north_deg = (b[0] - a[0]).atan2(b[1] - a[1]).to_degrees();
        Ok(Basemap {
            land,
            graticule,
            north_deg,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steps_and_labels_by_hand() {
        // 4.5° of longitude, at most 6 lines: 1° gives 4.5 lines.
        assert_eq!(graticule_step(4.5, 6.0), 1.0);
        assert_eq!(graticule_step(0.6, 6.0), 0.1);
        assert_eq!(graticule_step(400.0, 6.0), 30.0);
        assert_eq!(degree_label(-120.5, true, 0.5), "120.5°W");
        assert_eq!(degree_label(-36.0, false, 1.0), "36°S");
        assert_eq!(degree_label(0.0, true, 1.0), "0°");
        assert_eq!(degree_label(180.0, true, 5.0), "180°");
        // A Pacific map's unwrapped 190°E is 170°W.
        assert_eq!(degree_label(190.0, true, 5.0), "170°W");
        assert_eq!(degree_label(12.25, true, 0.25), "12.25°E");
        assert_eq!(degree_label(10.0, true, 0.5), "10°E");
        assert_eq!(degree_label(12.5, true, 0.25), "12.5°E");
    }
}
