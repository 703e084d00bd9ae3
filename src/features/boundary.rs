//! Biogeographic boundary zones (the `boundary` feature): water near given boundary lines
//! (fronts, province borders), or where many species' range edges crowd together.

use crate::climate::{check_range, ClimateError};
use crate::grid::{Grid, Projector};
use geo::MultiLineString;
use rayon::prelude::*;

pub use crate::plan::terms::Decay;

/// Distance from `p` to the segment `a`–`b` (same units as the inputs).
fn segment_distance(p: [f64; 2], a: [f64; 2], b: [f64; 2]) -> f64 {
    let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
    let len2 = dx * dx + dy * dy;
    let t = if len2 > 0.0 {
        (((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    (p[0] - a[0] - t * dx).hypot(p[1] - a[1] - t * dy)
}

/// Boundary amount from lines (WGS84 lon/lat): for each cell whose centre lies within
/// `band_km` of the nearest line, `decay` weight × the cell's sea area. Units: km².
///
/// Lines are densified to 0.05° steps and projected with the grid's CRS, so distances are
/// grid km (equal-area projection; see [`crate::climate::velocity`] on its scale error).
pub fn boundary_from_lines(
    grid: &Grid,
    lines: &MultiLineString<f64>,
    band_km: f64,
    decay: Decay,
) -> Result<Vec<(u32, f64)>, ClimateError> {
    check_range("boundary band_km", band_km, 0.0, f64::INFINITY, false)?;
    if let Decay::Exponential { scale_km } = decay {
        check_range("boundary scale_km", scale_km, 0.0, f64::INFINITY, false)?;
    }
    let projector = Projector::new(&grid.crs)?;
    let mut segments: Vec<([f64; 2], [f64; 2])> = Vec::new();
    for line in &lines.0 {
        let mut xy: Vec<[f64; 2]> = Vec::new();
        for w in line.0.windows(2) {
            let steps = ((w[1].x - w[0].x).abs().max((w[1].y - w[0].y).abs()) / 0.05)
                .ceil()
                .max(1.0);
            for k in 0..steps as usize {
                let t = k as f64 / steps;
                xy.push(projector.to_xy(
                    w[0].x + t * (w[1].x - w[0].x),
                    w[0].y + t * (w[1].y - w[0].y),
                )?);
            }
        }
        if let Some(last) = line.0.last() {
            xy.push(projector.to_xy(last.x, last.y)?);
        }
        segments.extend(xy.windows(2).map(|w| (w[0], w[1])));
        if xy.len() == 1 {
            segments.push((xy[0], xy[0]));
        }
    }
    // Smallest distance per cell (min is order-independent, so the result is deterministic).
    let band_m = band_km * 1000.0;
    let mut nearest_m = vec![f64::INFINITY; grid.len()];
    for &(a, b) in &segments {
        let min = [a[0].min(b[0]) - band_m, a[1].min(b[1]) - band_m];
        let max = [a[0].max(b[0]) + band_m, a[1].max(b[1]) + band_m];
        for id in grid.cells_in_rect(min, max) {
            let d = segment_distance(grid.cells[id as usize].centre, a, b);
            let slot = &mut nearest_m[id as usize];
            *slot = slot.min(d);
        }
    }
    Ok((0..grid.len())
        .filter_map(|i| {
            let w = decay.weight(nearest_m[i] / 1000.0, band_km);
            (w > 0.0).then(|| (i as u32, w * grid.cells[i].sea_area_km2))
        })
        .collect())
}

/// Boundary amount from range-edge density: per cell, the number of species range edges
/// (positions along the same axis as `axis_km`, e.g. leading and trailing edges of every
/// species mapped back from poleward to axis km) within `band_km` of the cell's axis position,
/// × the cell's sea area. Units: km² × edges.
pub fn boundary_from_edges(
    grid: &Grid,
    axis_km: &[f64],
    edges_km: &[f64],
    band_km: f64,
) -> Result<Vec<(u32, f64)>, ClimateError> {
    crate::climate::check_dense("axis positions", axis_km, grid.len())?;
    check_range(
        "boundary band_km",
        band_km,
        -f64::MIN_POSITIVE,
        f64::INFINITY,
        false,
    )?;
    let mut edges: Vec<f64> = edges_km.iter().copied().filter(|e| e.is_finite()).collect();
    edges.sort_by(f64::total_cmp);
    Ok((0..grid.len())
        .into_par_iter()
        .filter_map(|i| {
            let p = axis_km[i];
            // Edges within [p − band, p + band] by binary search on the sorted list.
            let lo = edges.partition_point(|&e| e < p - band_km);
            let hi = edges.partition_point(|&e| e <= p + band_km);
            let count = hi.saturating_sub(lo);
            (count > 0).then(|| (i as u32, count as f64 * grid.cells[i].sea_area_km2))
        })
        .collect())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;
    use geo::LineString;

    fn strip() -> Grid {
        // Five 10 km cells centred at x = −20, −10, 0, 10, 20 km on a LAEA at (0°, 0°).
        Grid::full_rectangle(
            Crs::auto_laea(0.0, 0.0),
            10_000.0,
            [-25_000.0, -5_000.0],
            5,
            1,
        )
        .unwrap()
    }

    #[test]
    fn line_boundary_by_hand() {
        // The central meridian projects onto x = 0, so distances are 20, 10, 0, 10, 20 km.
        // Linear decay, band 15 km: weights 0, 1/3, 1, 1/3, 0 × 100 km².
        // Exponential (scale 10 km), band 15 km: e^−1·100 at 10 km, 100 on the line.
        let g = strip();
        let lines = MultiLineString(vec![LineString::from(vec![(0.0, -1.0), (0.0, 1.0)])]);
        let b = boundary_from_lines(&g, &lines, 15.0, Decay::Linear).unwrap();
        let want = [(1u32, 100.0 / 3.0), (2, 100.0), (3, 100.0 / 3.0)];
        assert_eq!(b.len(), 3);
        for ((c, a), (wc, wa)) in b.iter().zip(want) {
            assert_eq!(*c, wc);
            assert!((a - wa).abs() < 1e-6, "{c}: {a}");
        }
        let e =
            boundary_from_lines(&g, &lines, 15.0, Decay::Exponential { scale_km: 10.0 }).unwrap();
        assert!((e[0].1 - 100.0 * (-1.0f64).exp()).abs() < 1e-6);
        assert!((e[1].1 - 100.0).abs() < 1e-6);
        assert!(boundary_from_lines(&g, &lines, 0.0, Decay::Linear).is_err());
    }

    #[test]
    fn edge_density_by_hand() {
        // Axis positions 0, 10, 20, 30, 40 km; edges at 12, 18, 41 km; band 5 km.
        // Band 5 km: cell 1 (10): 12 → 1; cell 2 (20): 18 → 1; cell 4 (40): 41 → 1.
        // Band 10 km: cell 1: 12, 18 → 2; cell 2: 12, 18 → 2; cell 3 (30): 18 and 41 are
        // 12 and 11 km away → 0; cell 4: 41 → 1; cell 0: 12 km away → 0.
        let g = strip();
        let axis = [0.0, 10.0, 20.0, 30.0, 40.0];
        let b = boundary_from_edges(&g, &axis, &[41.0, 12.0, 18.0], 5.0).unwrap();
        let cells: Vec<u32> = b.iter().map(|x| x.0).collect();
        assert_eq!(cells, vec![1, 2, 4]);
        assert!(b.iter().all(|x| (x.1 - 100.0).abs() < 1e-9));
        let b = boundary_from_edges(&g, &axis, &[41.0, 12.0, 18.0], 10.0).unwrap();
        let counts: Vec<(u32, f64)> = b.iter().map(|&(c, a)| (c, (a / 100.0).round())).collect();
        assert_eq!(counts, vec![(1, 2.0), (2, 2.0), (4, 1.0)]);
    }
}
