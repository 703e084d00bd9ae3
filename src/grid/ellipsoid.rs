//! Closed-form areas on the WGS84 ellipsoid: the yardstick for checking that a CRS keeps areas.

/// WGS84 semi-major axis. Units: metres.
pub const WGS84_A: f64 = 6_378_137.0;
/// WGS84 flattening (dimensionless).
pub const WGS84_F: f64 = 1.0 / 298.257_223_563;

/// Area of the lon/lat box `[lon0, lon1] × [lat0, lat1]` on the WGS84 ellipsoid, its edges
/// running along meridians and parallels (not geodesics). Degrees in; order of the bounds
/// does not matter. Units: km².
///
/// A = (b²/2)·Δλ·[q(φ₂) − q(φ₁)], q(φ) = sinφ/(1−e²sin²φ) + (1/(2e))·ln((1+e·sinφ)/(1−e·sinφ)):
/// the authalic-latitude zone formula (q as in Snyder 1987, *Map Projections: A Working Manual*,
/// USGS PP 1395, eq. 3-12, equation number from memory; the box form is the one in the
/// project's check values).
pub fn lonlat_box_area_km2(lon0: f64, lat0: f64, lon1: f64, lat1: f64) -> f64 {
    let e2 = WGS84_F * (2.0 - WGS84_F);
    let e = e2.sqrt();
    let b = WGS84_A * (1.0 - WGS84_F);
    let q = |lat_deg: f64| {
        let s = lat_deg.to_radians().sin();
        s / (1.0 - e2 * s * s) + (1.0 / (2.0 * e)) * ((1.0 + e * s) / (1.0 - e * s)).ln()
    };
    let dlon = (lon1 - lon0).abs().to_radians();
    let m2 = 0.5 * b * b * dlon * (q(lat0.max(lat1)) - q(lat0.min(lat1)));
    m2 / 1.0e6
}

#[cfg(test)]
mod tests {
    use super::*;

    // Values from /work/shared/CHECK-VALUES.md, "Area of a lon/lat box on an ellipsoid":
    // WGS84 1°×1° boxes, confirmed there by two methods. Tolerance 1e-4 km² = the printed
    // precision of the reference values.
    #[test]
    fn one_degree_boxes_match_reference_values() {
        let cases = [
            (0.0, 12_308.463_9),
            (30.0, 10_642.393_4),
            (45.0, 8_686.495_0),
            (60.0, 6_123.140_9),
            (89.0, 108.8667),
        ];
        for (lat, want) in cases {
            let got = lonlat_box_area_km2(10.0, lat, 11.0, lat + 1.0);
            assert!((got - want).abs() < 1e-4, "box at {lat}°: {got} vs {want}");
        }
    }

    // Same source: 0.25° box 45–45.25°N = 546.4688 km²; whole ellipsoid 510 065 621.72 km².
    #[test]
    fn quarter_degree_box_and_whole_ellipsoid() {
        let got = lonlat_box_area_km2(0.0, 45.0, 0.25, 45.25);
        assert!((got - 546.4688).abs() < 1e-4, "{got}");
        let whole = lonlat_box_area_km2(-180.0, -90.0, 180.0, 90.0);
        assert!((whole - 510_065_621.72).abs() < 0.01, "{whole}");
    }

    // Southern boxes mirror northern ones (symmetry of the ellipsoid); bounds in any order.
    #[test]
    fn south_mirrors_north_and_order_free() {
        let n = lonlat_box_area_km2(0.0, 45.0, 1.0, 46.0);
        let s = lonlat_box_area_km2(1.0, -45.0, 0.0, -46.0);
        assert!((n - s).abs() < 1e-9);
    }
}
