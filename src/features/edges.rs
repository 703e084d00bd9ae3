//! Range edges along the poleward axis: leading (poleward) and trailing (equatorward) edge
//! positions of a species' habitat per year, how fast they shift, and the habitat near each
//! edge (the `leading-edge` and `trailing-edge` features).
//!
//! Edges as habitat-weighted quantiles of position along the poleward axis (5th/95th) are
//! common practice in range-shift studies (no single source).

use crate::climate::stats::{linear_trend, weighted_quantile};
use crate::climate::{check_range, check_sparse, ClimateError};
use crate::grid::{Grid, Projector};
use geo::LineString;
use rayon::prelude::*;
use rstar::primitives::{GeomWithData, Line};
use rstar::RTree;

/// WGS84 semi-major axis (NIMA TR8350.2). Units: m.
const WGS84_A: f64 = 6_378_137.0;
/// WGS84 flattening (NIMA TR8350.2).
const WGS84_F: f64 = 1.0 / 298.257_223_563;

/// Distance along the meridian from the equator to latitude `lat_deg` on the WGS84 ellipsoid,
/// negative south of the equator. Units: km.
///
/// Helmert's series in the third flattening n = f/(2 − f) (e.g. Deakin & Hunter, "Geometric
/// geodesy", or the "Meridian arc" series): m = a/(1+n)·[(1 + n²/4 + n⁴/64)φ
/// − (3/2)(n − n³/8) sin 2φ + (15/16)(n² − n⁴/4) sin 4φ − (35/48)n³ sin 6φ
/// + (315/512)n⁴ sin 8φ]; truncation error well under a millimetre.
pub fn meridian_distance_km(lat_deg: f64) -> f64 {
    let n = WGS84_F / (2.0 - WGS84_F);
    let (n2, n3, n4) = (n * n, n * n * n, n * n * n * n);
    let phi = lat_deg.to_radians();
    let m = WGS84_A / (1.0 + n)
        * ((1.0 + n2 / 4.0 + n4 / 64.0) * phi - 1.5 * (n - n3 / 8.0) * (2.0 * phi).sin()
            + 15.0 / 16.0 * (n2 - n4 / 4.0) * (4.0 * phi).sin()
            - 35.0 / 48.0 * n3 * (6.0 * phi).sin()
            + 315.0 / 512.0 * n4 * (8.0 * phi).sin());
    m / 1000.0
}

/// The axis along which range edges are measured.
#[derive(Debug, Clone, PartialEq)]
pub enum PolewardAxis {
    /// Meridian distance from the equator of each cell's latitude ([`meridian_distance_km`]).
    Meridian,
    /// A user line (WGS84 lon/lat), e.g. a coastline's general direction; a cell's position
    /// is the distance along the projected line of the line's nearest point to the cell
    /// centre.
    Polyline(LineString<f64>),
}

/// Per-cell positions along an axis.
#[derive(Debug, Clone, PartialEq)]
pub struct AxisPositions {
    /// Position of each cell (by id) along the axis. Units: km.
    pub km: Vec<f64>,
    /// +1 when positions grow northward, −1 southward, 0 when the axis runs east–west.
    pub northward: f64,
}

/// Positions of every cell along `axis`. A polyline is densified to 0.05° steps before it is
/// projected with the grid's CRS (a straight lon/lat segment is curved on the grid); its
/// northward sense is the sign of (last vertex latitude − first vertex latitude).
pub fn axis_positions(grid: &Grid, axis: &PolewardAxis) -> Result<AxisPositions, ClimateError> {
    match axis {
        PolewardAxis::Meridian => Ok(AxisPositions {
            km: grid
                .cells
                .iter()
                .map(|c| meridian_distance_km(c.lonlat[1]))
                .collect(),
            northward: 1.0,
        }),
        PolewardAxis::Polyline(line) => polyline_positions(grid, line),
    }
}

fn polyline_positions(grid: &Grid, line: &LineString<f64>) -> Result<AxisPositions, ClimateError> {
    let pts = &line.0;
    if pts.len() < 2 || pts.iter().any(|c| !(c.x.is_finite() && c.y.is_finite())) {
        return Err(ClimateError::Invalid(format!(
            "a poleward axis line needs at least two finite lon/lat points (got {})",
            pts.len()
        )));
    }
    let projector = Projector::new(&grid.crs)?;
    let mut xy: Vec<[f64; 2]> = Vec::new();
    for w in pts.windows(2) {
        let steps = ((w[1].x - w[0].x).abs().max((w[1].y - w[0].y).abs()) / 0.05)
            .ceil()
            .max(1.0);
        for k in 0..steps as usize {
            let t = k as f64 / steps;
            let p = projector.to_xy(
                w[0].x + t * (w[1].x - w[0].x),
                w[0].y + t * (w[1].y - w[0].y),
            )?;
            xy.push(p);
        }
    }
    let last = pts[pts.len() - 1];
    xy.push(projector.to_xy(last.x, last.y)?);
    // Cumulative length at each vertex (km).
    let mut along = vec![0.0; xy.len()];
    for i in 1..xy.len() {
        along[i] = along[i - 1] + (xy[i][0] - xy[i - 1][0]).hypot(xy[i][1] - xy[i - 1][1]) / 1000.0;
    }
    let segments: Vec<GeomWithData<Line<[f64; 2]>, usize>> = (0..xy.len() - 1)
        .map(|i| GeomWithData::new(Line::new(xy[i], xy[i + 1]), i))
        .collect();
    let tree = RTree::bulk_load(segments);
    let km = grid
        .cells
        .par_iter()
        .map(|cell| {
            let p = cell.centre;
            // The tree holds at least one segment, so a nearest one exists.
            let seg = tree
                .nearest_neighbor(&p)
                .expect("a non-empty tree has a nearest segment");
            let i = seg.data;
            let (a, b) = (xy[i], xy[i + 1]);
            let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
            let len2 = dx * dx + dy * dy;
            let t = if len2 > 0.0 {
                (((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len2).clamp(0.0, 1.0)
            } else {
                0.0
            };
            along[i] + t * (along[i + 1] - along[i])
        })
        .collect();
    let dlat = last.y - pts[0].y;
    Ok(AxisPositions {
        km,
        northward: if dlat > 0.0 {
            1.0
        } else if dlat < 0.0 {
            -1.0
        } else {
            0.0
        },
    })
}

/// Hemisphere of a species: +1 (north) or −1 (south), from the sign of its habitat-weighted
/// mean latitude pooled over the given years (sparse lists). Derived, never assumed; an error
/// when the species has no habitat or its mean lies exactly on the equator.
pub fn hemisphere(grid: &Grid, habitat_by_year: &[&[(u32, f64)]]) -> Result<f64, ClimateError> {
    let (mut sw, mut swl) = (0.0, 0.0);
    for (k, list) in habitat_by_year.iter().enumerate() {
        check_sparse(&format!("habitat of year index {k}"), list, grid.len())?;
        for &(c, a) in list.iter() {
            if a > 0.0 && a.is_finite() {
                sw += a;
                swl += a * grid.cells[c as usize].lonlat[1];
            }
        }
    }
    if sw <= 0.0 {
        return Err(ClimateError::Invalid(
            "range edges need some habitat in at least one year".into(),
        ));
    }
    let mean = swl / sw;
    if mean > 0.0 {
        Ok(1.0)
    } else if mean < 0.0 {
        Ok(-1.0)
    } else {
        Err(ClimateError::Invalid(
            "the habitat-weighted mean latitude is on the equator: poleward is undefined".into(),
        ))
    }
}

/// How range edges are measured.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EdgeParams {
    /// Quantile of habitat along the poleward axis that marks the leading edge (0.95).
    pub leading_quantile: f64,
    /// Quantile that marks the trailing edge (0.05).
    pub trailing_quantile: f64,
    /// Width of the edge zone. Units: km.
    pub band_km: f64,
}

impl Default for EdgeParams {
    fn default() -> Self {
        EdgeParams {
            leading_quantile: 0.95,
            trailing_quantile: 0.05,
            band_km: 100.0,
        }
    }
}

/// Whether an edge is clipped by the region: in some year its position lies within `band_km`
/// of the region's own limit on its side (the poleward limit for a leading edge, the
/// equatorward one for a trailing edge), so the habitat may well go on beyond the region and
/// the edge's shift measures the region's boundary rather than the species.
///
/// `edge_km` are the edge's positions per year along the axis (`None`: no habitat that year),
/// `region_km` every cell's position on the same axis, `poleward_sign` as in
/// [`RangeEdges::poleward_sign`]. Units: km.
pub fn edge_clipped(
    edge_km: &[Option<f64>],
    region_km: &[f64],
    poleward_sign: f64,
    band_km: f64,
    leading: bool,
) -> bool {
    if !poleward_sign.is_finite() || region_km.is_empty() {
        return false;
    }
    // Poleward positions: larger is further poleward.
    let pole = |x: f64| poleward_sign * x;
    let (lo, hi) = region_km
        .iter()
        .map(|&x| pole(x))
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
            (a.min(x), b.max(x))
        });
    edge_km.iter().flatten().any(|&e| {
        if leading {
            pole(e) >= hi - band_km
        } else {
            pole(e) <= lo + band_km
        }
    })
}

/// Range edges of one species in one scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct RangeEdges {
    /// Multiply axis positions by this to get poleward positions (+1 or −1).
    pub poleward_sign: f64,
    /// The years, as given.
    pub years: Vec<i32>,
    /// Leading-edge position per year along the poleward axis (`None`: no habitat that year).
    /// Units: km.
    pub leading_km: Vec<Option<f64>>,
    /// Trailing-edge position per year along the poleward axis. Units: km.
    pub trailing_km: Vec<Option<f64>>,
    /// Least-squares shift of the leading edge, poleward positive. Units: km/decade.
    pub leading_shift_km_per_decade: Option<f64>,
    /// Least-squares shift of the trailing edge, poleward positive. Units: km/decade.
    pub trailing_shift_km_per_decade: Option<f64>,
    /// Per year: habitat within `band_km` of the leading edge, and all of it poleward of the
    /// edge (sparse, habitat amount units). This is the `leading-edge` feature.
    pub leading_amounts: Vec<Vec<(u32, f64)>>,
    /// Per year: habitat within `band_km` of the trailing edge, and all of it equatorward.
    pub trailing_amounts: Vec<Vec<(u32, f64)>>,
}

/// Least-squares slope of edge position on year × 10, over the years that have an edge.
/// Units: km/decade (positions in km).
pub fn edge_shift_km_per_decade(years: &[i32], positions: &[Option<f64>]) -> Option<f64> {
    let (t, y): (Vec<f64>, Vec<f64>) = years
        .iter()
        .zip(positions)
        .filter_map(|(&yr, p)| p.map(|p| (yr as f64, p)))
        .unzip();
    linear_trend(&t, &y).map(|s| s * 10.0)
}

/// Habitat of `habitat` (sparse) in cells whose poleward position (km, per cell id) is at least
/// `edge_km − band_km` (`poleward = true`: the leading-edge zone, poleward side inclusive) or
/// at most `edge_km + band_km` (`poleward = false`: the trailing-edge zone).
pub fn habitat_near_edge(
    poleward_km: &[f64],
    habitat: &[(u32, f64)],
    edge_km: f64,
    band_km: f64,
    poleward: bool,
) -> Vec<(u32, f64)> {
    habitat
        .iter()
        .copied()
        .filter(|&(c, a)| {
            let p = poleward_km[c as usize];
            a > 0.0
                && if poleward {
                    p >= edge_km - band_km
                } else {
                    p <= edge_km + band_km
                }
        })
        .collect()
}

/// Range edges of one species in one scenario: per year the habitat-weighted quantiles
/// ([`weighted_quantile`], midpoint interpolation) of poleward position, their shift, and the
/// habitat in each edge zone. The poleward direction is `axis.northward` × the species'
/// [`hemisphere`] (pooled over the years), so southern species measure southward.
pub fn range_edges(
    grid: &Grid,
    axis: &AxisPositions,
    years: &[i32],
    habitat_by_year: &[&[(u32, f64)]],
    params: &EdgeParams,
) -> Result<RangeEdges, ClimateError> {
    if years.len() != habitat_by_year.len() {
        return Err(ClimateError::Length {
            what: "habitat lists (one per year)".into(),
            expected: years.len(),
            got: habitat_by_year.len(),
        });
    }
    if axis.km.len() != grid.len() {
        return Err(ClimateError::CellCount {
            what: "axis positions".into(),
            expected: grid.len(),
            got: axis.km.len(),
        });
    }
    check_range("leading_quantile", params.leading_quantile, 0.0, 1.0, true)?;
    check_range(
        "trailing_quantile",
        params.trailing_quantile,
        0.0,
        1.0,
        true,
    )?;
    check_range(
        "band_km",
        params.band_km,
        -f64::MIN_POSITIVE,
        f64::INFINITY,
        false,
    )?;
    if params.trailing_quantile >= params.leading_quantile {
        return Err(ClimateError::Invalid(format!(
            "the trailing-edge quantile ({}) must be below the leading-edge quantile ({})",
            params.trailing_quantile, params.leading_quantile
        )));
    }
    if axis.northward == 0.0 {
        return Err(ClimateError::Invalid(
            "the poleward axis line runs due east–west (same first and last latitude): poleward is undefined"
                .into(),
        ));
    }
    let sign = axis.northward * hemisphere(grid, habitat_by_year)?;
    let poleward_km: Vec<f64> = axis.km.iter().map(|k| sign * k).collect();
    let mut out = RangeEdges {
        poleward_sign: sign,
        years: years.to_vec(),
        leading_km: Vec::new(),
        trailing_km: Vec::new(),
        leading_shift_km_per_decade: None,
        trailing_shift_km_per_decade: None,
        leading_amounts: Vec::new(),
        trailing_amounts: Vec::new(),
    };
    for list in habitat_by_year {
        let pairs: Vec<(f64, f64)> = list
            .iter()
            .map(|&(c, a)| (poleward_km[c as usize], a))
            .collect();
        let lead = weighted_quantile(&pairs, params.leading_quantile);
        let trail = weighted_quantile(&pairs, params.trailing_quantile);
        out.leading_amounts.push(match lead {
            Some(e) => habitat_near_edge(&poleward_km, list, e, params.band_km, true),
            None => Vec::new(),
        });
        out.trailing_amounts.push(match trail {
            Some(e) => habitat_near_edge(&poleward_km, list, e, params.band_km, false),
            None => Vec::new(),
        });
        out.leading_km.push(lead);
        out.trailing_km.push(trail);
    }
    out.leading_shift_km_per_decade = edge_shift_km_per_decade(years, &out.leading_km);
    out.trailing_shift_km_per_decade = edge_shift_km_per_decade(years, &out.trailing_km);
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clipped_edges_by_hand() {
        // Region positions 0…100 km, poleward toward growing positions (+1), band 10 km.
        let region: Vec<f64> = (0..=10).map(|k| 10.0 * k as f64).collect();
        // Leading edge at 85 then 92 km: 92 ≥ 100 − 10 → clipped; 85 alone is not.
        assert!(edge_clipped(
            &[Some(85.0), Some(92.0)],
            &region,
            1.0,
            10.0,
            true
        ));
        assert!(!edge_clipped(&[Some(85.0), None], &region, 1.0, 10.0, true));
        // Trailing edge at 8 km: within 10 km of the equatorward limit 0 → clipped.
        assert!(edge_clipped(&[Some(8.0)], &region, 1.0, 10.0, false));
        assert!(!edge_clipped(&[Some(12.0)], &region, 1.0, 10.0, false));
        // Poleward toward shrinking positions (southern hemisphere on a northward axis): the
        // poleward limit is position 0, so a leading edge at 8 km is clipped.
        assert!(edge_clipped(&[Some(8.0)], &region, -1.0, 10.0, true));
        assert!(!edge_clipped(&[Some(8.0)], &region, f64::NAN, 10.0, true));
    }
    use crate::grid::Crs;
    use geographiclib_rs::{Geodesic, InverseGeodesic};

    #[test]
    fn meridian_distance_matches_geodesic_library() {
        // Reference: geographiclib-rs (Karney 2013) inverse from the equator along lon 0.
        let g = Geodesic::wgs84();
        for lat in [1.0, 10.0, 33.3, 45.0, 60.0, 89.0] {
            let s: f64 = g.inverse(0.0, 0.0, lat, 0.0);
            assert!(
                (meridian_distance_km(lat) - s / 1000.0).abs() < 1e-6,
                "{lat}"
            );
            assert!(
                (meridian_distance_km(-lat) + s / 1000.0).abs() < 1e-6,
                "{lat}"
            );
        }
        // WGS84 quarter meridian 10 001 965.729 m (from memory).
        assert!((meridian_distance_km(90.0) - 10_001.965_729).abs() < 1e-5);
    }

    #[test]
    fn polyline_positions_on_the_central_meridian() {
        // A line along the LAEA central meridian projects onto x = 0, so a cell's position
        // is its northing minus the line start's northing (closed form); the line runs north.
        let crs = Crs::auto_laea(0.0, 0.0);
        let g = Grid::full_rectangle(crs.clone(), 10_000.0, [-20_000.0, -20_000.0], 4, 4).unwrap();
        let line = LineString::from(vec![(0.0, -1.0), (0.0, 1.0)]);
        let a = axis_positions(&g, &PolewardAxis::Polyline(line)).unwrap();
        let y0 = Projector::new(&crs).unwrap().to_xy(0.0, -1.0).unwrap()[1];
        for (id, c) in g.cells.iter().enumerate() {
            assert!(
                (a.km[id] - (c.centre[1] - y0) / 1000.0).abs() < 1e-6,
                "{id}"
            );
        }
        assert_eq!(a.northward, 1.0);
        let flat = LineString::from(vec![(0.0, 0.0), (1.0, 0.0)]);
        let a = axis_positions(&g, &PolewardAxis::Polyline(flat)).unwrap();
        assert_eq!(a.northward, 0.0);
        assert!(range_edges(&g, &a, &[2030], &[&[(0, 1.0)]], &EdgeParams::default()).is_err());
    }

    #[test]
    fn edges_by_hand_on_a_column() {
        // Hand computation: five cells with axis positions 0, 10, 20, 30, 40 km and habitat
        // 1, 1, 2, 0, 0 (northern hemisphere grid, so poleward = +). Weight midpoints:
        // 0.125 (0 km), 0.375 (10 km), 0.75 (20 km). q = 0.95 → 20 km (clamped);
        // q = 0.05 → 0 km. Leading zone with band 5 km: positions ≥ 15 → cell 2 only;
        // trailing zone: positions ≤ 5 → cell 0.
        let g =
            Grid::full_rectangle(Crs::auto_laea(0.0, 50.0), 10_000.0, [0.0, 0.0], 1, 5).unwrap();
        let axis = AxisPositions {
            km: vec![0.0, 10.0, 20.0, 30.0, 40.0],
            northward: 1.0,
        };
        let h = [(0u32, 1.0), (1, 1.0), (2, 2.0)];
        let p = EdgeParams {
            band_km: 5.0,
            ..Default::default()
        };
        let e = range_edges(&g, &axis, &[2030], &[&h], &p).unwrap();
        assert_eq!(e.poleward_sign, 1.0);
        assert_eq!(e.leading_km, vec![Some(20.0)]);
        assert_eq!(e.trailing_km, vec![Some(0.0)]);
        assert_eq!(e.leading_amounts, vec![vec![(2, 2.0)]]);
        assert_eq!(e.trailing_amounts, vec![vec![(0, 1.0)]]);
        assert_eq!(e.leading_shift_km_per_decade, None);
    }

    #[test]
    fn shift_by_hand() {
        // Closed form: positions 100, 130, 160 km in 2030, 2040, 2050 → 3 km/yr = 30 km/decade;
        // a missing year is skipped.
        let s = edge_shift_km_per_decade(
            &[2030, 2040, 2045, 2050],
            &[Some(100.0), Some(130.0), None, Some(160.0)],
        );
        assert!((s.unwrap() - 30.0).abs() < 1e-9);
    }
}
