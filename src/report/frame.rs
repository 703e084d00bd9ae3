//! The map frame: the grid's own equal-area projected metres, y flipped, scaled uniformly to
//! SVG units. One scale for both axes, so a length in projected metres maps to one SVG length
//! everywhere and the scale bar is exact in projected metres.

use crate::grid::Grid;
use geo::{LineString, MultiPolygon};
use std::fmt::Write;

/// Margin around the map. Units: SVG units.
pub(crate) const PAD: f64 = 10.0;

/// Where projected metres land in an SVG.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct MapFrame {
    /// West edge of the lattice. Units: projected metres.
    pub min_x: f64,
    /// North edge of the lattice. Units: projected metres.
    pub max_y: f64,
    /// SVG units per projected metre.
    pub scale: f64,
    /// Width of the map area (without margins). Units: SVG units.
    pub width: f64,
    /// Height of the map area (without margins). Units: SVG units.
    pub height: f64,
}

impl MapFrame {
    /// Fits the grid's lattice extent into `max_w × max_h` SVG units, keeping the aspect.
    pub(crate) fn fit(grid: &Grid, max_w: f64, max_h: f64) -> MapFrame {
        let ex = grid.n_cols.max(1) as f64 * grid.cell_size_m;
        let ey = grid.n_rows.max(1) as f64 * grid.cell_size_m;
        let scale = (max_w / ex).min(max_h / ey);
        MapFrame {
            min_x: grid.origin[0],
            max_y: grid.origin[1] + ey,
            scale,
            width: ex * scale,
            height: ey * scale,
        }
    }

    /// Projected metres → SVG units (y grows downwards in SVG).
    pub(crate) fn to_svg(self, x: f64, y: f64) -> (f64, f64) {
        (
            PAD + (x - self.min_x) * self.scale,
            PAD + (self.max_y - y) * self.scale,
        )
    }

    /// SVG units → projected metres (the inverse of [`MapFrame::to_svg`]).
    #[cfg(test)]
    pub(crate) fn to_metres(self, u: f64, v: f64) -> (f64, f64) {
        (
            self.min_x + (u - PAD) / self.scale,
            self.max_y - (v - PAD) / self.scale,
        )
    }

    /// Appends SVG path data for a projected multipolygon: one `M…L…Z` subpath per ring, in
    /// the ring's own vertex order, coordinates rounded to 0.1 SVG unit; consecutive points
    /// that round to the same position are written once, and the closing point is left to `Z`.
    pub(crate) fn push_multipolygon(&self, out: &mut String, mp: &MultiPolygon<f64>) {
        for p in &mp.0 {
            self.push_ring(out, p.exterior());
            for h in p.interiors() {
                self.push_ring(out, h);
            }
        }
    }

    fn push_ring(&self, out: &mut String, ring: &LineString<f64>) {
        let mut pts: Vec<(f64, f64)> = Vec::with_capacity(ring.0.len());
        for c in &ring.0 {
            let (u, v) = self.to_svg(c.x, c.y);
            let q = (round1(u), round1(v));
            if pts.last() != Some(&q) {
                pts.push(q);
            }
        }
        while pts.len() > 1 && pts.first() == pts.last() {
            pts.pop();
        }
        if pts.len() < 3 {
            return;
        }
        for (i, (u, v)) in pts.iter().enumerate() {
            out.push(if i == 0 { 'M' } else { 'L' });
            // Writing to a String cannot fail.
            let _ = write!(out, "{u} {v}");
        }
        out.push('Z');
    }

    /// Appends an axis-aligned rectangle in projected metres (`x0 < x1`, `y0 < y1`) as path data.
    pub(crate) fn push_rect(&self, out: &mut String, x0: f64, y0: f64, x1: f64, y1: f64) {
        let (u0, v0) = self.to_svg(x0, y1);
        let (u1, v1) = self.to_svg(x1, y0);
        let (u0, v0, u1, v1) = (round1(u0), round1(v0), round1(u1), round1(v1));
        let _ = write!(out, "M{u0} {v0}H{u1}V{v1}H{u0}Z");
    }
}

/// Rounds to one decimal and turns −0 into 0, so path data stays short and stable.
pub(crate) fn round1(x: f64) -> f64 {
    let r = (x * 10.0).round() / 10.0;
    if r == 0.0 {
        0.0
    } else {
        r
    }
}

/// A scale bar: a round length (1, 2 or 5 × 10ᵏ km) no longer than a quarter of the map's
/// width, and its length on the map.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct ScaleBar {
    /// Length the bar stands for. Units: km (projected).
    pub km: f64,
    /// Length drawn. Units: SVG units.
    pub svg: f64,
}

/// The scale bar for a frame. Lengths are projected-metre lengths: exact in the grid's CRS;
/// on the ground an equal-area projection stretches one direction and shrinks the other by
/// the same factor, which stays within a few per cent over a planning region near the
/// projection's centre.
pub(crate) fn scale_bar(frame: &MapFrame) -> ScaleBar {
    let width_km = frame.width / frame.scale / 1000.0;
    let km = nice_floor(width_km / 4.0);
    ScaleBar {
        km,
        svg: km * 1000.0 * frame.scale,
    }
}

/// The largest 1, 2 or 5 × 10ᵏ not above `x` (x > 0); 0 for non-positive or non-finite `x`.
pub(crate) fn nice_floor(x: f64) -> f64 {
    if !(x > 0.0 && x.is_finite()) {
        return 0.0;
    }
    let p = 10f64.powf(x.log10().floor());
    let m = x / p;
    // 1e-9 absorbs the rounding of x / p when x is itself a power of ten times 1, 2 or 5.
    let f = if m >= 5.0 - 1e-9 {
        5.0
    } else if m >= 2.0 - 1e-9 {
        2.0
    } else {
        1.0
    };
    f * p
}

/// A km length as a label: no decimals from 1 km up, otherwise up to three.
pub(crate) fn km_label(km: f64) -> String {
    if km >= 1.0 {
        format!("{km:.0} km")
    } else {
        format!("{} km", (km * 1000.0).round() / 1000.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;
    use geo::polygon;

    fn grid(cols: u32, rows: u32, size: f64) -> Grid {
        Grid::full_rectangle(
            Crs::auto_laea(10.0, 55.0),
            size,
            [-50_000.0, 20_000.0],
            cols,
            rows,
        )
        .unwrap()
    }

    #[test]
    fn frame_fits_and_inverts() {
        // 10 × 5 cells of 10 km: 100 km × 50 km. Fit into 800 × 900: scale 800/100 000 m
        // = 0.008 units/m (width limits), height 50 000 × 0.008 = 400 units.
        let f = MapFrame::fit(&grid(10, 5, 10_000.0), 800.0, 900.0);
        assert!((f.scale - 0.008).abs() < 1e-15);
        assert!((f.width - 800.0).abs() < 1e-9);
        assert!((f.height - 400.0).abs() < 1e-9);
        // Hand: the south-west corner (−50 000, 20 000) is at the bottom left: (PAD, PAD + 400).
        assert_eq!(f.to_svg(-50_000.0, 20_000.0), (10.0, 410.0));
        // North-east corner (50 000, 70 000) → (810, 10).
        assert_eq!(f.to_svg(50_000.0, 70_000.0), (810.0, 10.0));
        let (x, y) = f.to_metres(123.4, 56.7);
        let (u, v) = f.to_svg(x, y);
        assert!((u - 123.4).abs() < 1e-9 && (v - 56.7).abs() < 1e-9);
    }

    #[test]
    fn scale_bar_by_hand() {
        // 100 km wide map drawn 800 units wide: 8 units per km. A quarter of the width is
        // 25 km; the largest round length not above it is 20 km → 20 × 8 = 160 units.
        let f = MapFrame::fit(&grid(10, 5, 10_000.0), 800.0, 900.0);
        let b = scale_bar(&f);
        assert_eq!(b.km, 20.0);
        assert!((b.svg - 160.0).abs() < 1e-9);
        // A tall map limited by height: 3 × 30 cells of 5 km = 15 km × 150 km into 800 × 900:
        // scale = 900 / 150 000 = 0.006 units/m, width 15 km → 90 units; a quarter is
        // 3.75 km → 2 km bar → 2000 × 0.006 = 12 units.
        let t = MapFrame::fit(&grid(3, 30, 5_000.0), 800.0, 900.0);
        let b = scale_bar(&t);
        assert_eq!(b.km, 2.0);
        assert!((b.svg - 12.0).abs() < 1e-9);
    }

    #[test]
    fn nice_floor_steps() {
        // Hand: 1-2-5 steps per decade.
        assert_eq!(nice_floor(25.0), 20.0);
        assert_eq!(nice_floor(5.0), 5.0);
        assert_eq!(nice_floor(4.99), 2.0);
        assert_eq!(nice_floor(0.37), 0.2);
        assert_eq!(nice_floor(1000.0), 1000.0);
        assert_eq!(nice_floor(0.0), 0.0);
        assert_eq!(nice_floor(f64::NAN), 0.0);
        assert_eq!(km_label(20.0), "20 km");
        assert_eq!(km_label(0.2), "0.2 km");
    }

    #[test]
    fn path_data_keeps_vertex_order_and_rounds() {
        let f = MapFrame::fit(&grid(10, 5, 10_000.0), 800.0, 900.0);
        let mp = MultiPolygon(vec![polygon![
            (x: -50_000.0, y: 20_000.0), (x: -40_000.0, y: 20_000.0),
            (x: -40_000.0, y: 20_001.0), (x: -40_000.0, y: 30_000.0), (x: -50_000.0, y: 20_000.0)
        ]]);
        let mut d = String::new();
        f.push_multipolygon(&mut d, &mp);
        // Hand: (−50 000, 20 000) → (10, 410); (−40 000, 20 000) → (90, 410); the point 1 m
        // north rounds to (90, 410) too (0.008 units) and is dropped; (−40 000, 30 000) →
        // (90, 330); the closing point is left to Z.
        assert_eq!(d, "M10 410L90 410L90 330Z");
        let mut r = String::new();
        f.push_rect(&mut r, -50_000.0, 20_000.0, -40_000.0, 30_000.0);
        assert_eq!(r, "M10 330H90V410H10Z");
        assert_eq!(round1(-0.04), 0.0);
        assert_eq!(round1(-0.04).to_string(), "0");
    }
}
