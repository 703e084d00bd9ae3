//! Coordinate transforms between WGS84 lon/lat and the grid's projected CRS, through PROJ as
//! GDAL's spatial-reference layer (OSR) links it: one PROJ for transforms and file readers.

use super::ellipsoid::lonlat_box_area_km2;
use super::{Crs, GridError};
use gdal::spatial_ref::{AxisMappingStrategy, CoordTransform, SpatialRef};
use geo::{Coord, LineString, MultiPolygon, Polygon, Rect};

/// WGS84 longitude/latitude in that axis order (RFC 7946 order). `OGC:CRS84` is EPSG:4326
/// with lon/lat axis order, so no axis swapping is needed on input or output.
pub const LONLAT: &str = "OGC:CRS84";

impl Crs {
    /// Lambert azimuthal equal-area on WGS84 centred at `(lon0, lat0)`: equal-area everywhere,
    /// with little shape distortion near the centre (common practice, no source).
    pub fn auto_laea(lon0: f64, lat0: f64) -> Crs {
        Crs {
            definition: format!(
                "+proj=laea +lat_0={lat0:.6} +lon_0={lon0:.6} +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs +type=crs"
            ),
        }
    }
}

/// A CRS as summary.json records it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CrsInfo {
    /// The definition the grid was built with (`auto` LAEA PROJ string, `EPSG:3035`, …).
    pub definition: String,
    /// The same CRS as a PROJ string (as GDAL/PROJ export it).
    pub proj: Option<String>,
    /// Its EPSG code, when it is (or is identified as) an EPSG CRS; `null` for the custom
    /// LAEA of `crs = "auto"`.
    pub epsg: Option<u32>,
}

impl Crs {
    /// The CRS described for summary.json: PROJ string and EPSG code where there is one.
    pub fn describe(&self) -> CrsInfo {
        let srs = spatial_ref(&self.definition).ok();
        let proj = srs.as_ref().and_then(|s| s.to_proj4().ok());
        let epsg = srs.and_then(|mut s| {
            if s.auth_name().as_deref() != Some("EPSG") {
                s.auto_identify_epsg().ok()?;
            }
            (s.auth_name().as_deref() == Some("EPSG"))
                .then(|| s.auth_code().ok())
                .flatten()
                .map(|c| c as u32)
        });
        CrsInfo {
            definition: self.definition.clone(),
            proj: proj.map(|p| p.trim().to_string()),
            epsg,
        }
    }
}

/// GDAL prints its errors on stderr unless told otherwise; driftplan reports them itself
/// (with the file and CRS), so GDAL is silenced once per process.
pub(crate) fn quiet_gdal() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| gdal::config::set_error_handler(|_, _, _| {}));
}

/// A spatial reference from any definition GDAL/PROJ reads (`EPSG:3035`, a PROJ string,
/// WKT, `OGC:CRS84`), with x = easting/longitude and y = northing/latitude whatever the
/// authority's axis order.
pub(crate) fn spatial_ref(definition: &str) -> Result<SpatialRef, String> {
    quiet_gdal();
    let mut srs = SpatialRef::from_definition(definition).map_err(|e| e.to_string())?;
    srs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    Ok(srs)
}

/// Transforms points and polygons both ways between lon/lat and one projected CRS.
///
/// A `Projector` wraps two GDAL coordinate transformations, which must not be shared
/// between threads, so parallel code creates one per worker (`rayon`'s `map_init`).
pub struct Projector {
    forward: CoordTransform,
    inverse: CoordTransform,
    crs: Crs,
}

impl std::fmt::Debug for Projector {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Projector").field("crs", &self.crs).finish()
    }
}

/// One point through a transformation; `None` with the reason when it fails or is not finite.
fn convert(t: &CoordTransform, a: f64, b: f64) -> Result<[f64; 2], String> {
    let (mut x, mut y, mut z) = ([a], [b], [0.0]);
    t.transform_coords(&mut x, &mut y, &mut z)
        .map_err(|e| e.to_string())?;
    if !(x[0].is_finite() && y[0].is_finite()) {
        return Err("result is not finite".into());
    }
    Ok([x[0], y[0]])
}

impl Projector {
    /// Builds transforms lon/lat ⇄ `crs`. Fails with the CRS text when PROJ does not know it.
    pub fn new(crs: &Crs) -> Result<Projector, GridError> {
        let err = |reason: String| GridError::Crs {
            definition: crs.definition.clone(),
            reason,
        };
        let lonlat = spatial_ref(LONLAT).map_err(err)?;
        let target = spatial_ref(&crs.definition).map_err(err)?;
        let make = |from: &SpatialRef, to: &SpatialRef| {
            CoordTransform::new(from, to).map_err(|e| err(e.to_string()))
        };
        Ok(Projector {
            forward: make(&lonlat, &target)?,
            inverse: make(&target, &lonlat)?,
            crs: crs.clone(),
        })
    }

    /// lon/lat degrees → projected metres.
    pub fn to_xy(&self, lon: f64, lat: f64) -> Result<[f64; 2], GridError> {
        convert(&self.forward, lon, lat).map_err(|reason| GridError::Transform { lon, lat, reason })
    }

    /// Projected metres → lon/lat degrees.
    pub fn to_lonlat(&self, x: f64, y: f64) -> Result<[f64; 2], GridError> {
        convert(&self.inverse, x, y).map_err(|reason| GridError::Transform {
            lon: x,
            lat: y,
            reason,
        })
    }

    /// The projected CRS.
    pub fn crs(&self) -> &Crs {
        &self.crs
    }

    /// Checks that the CRS keeps areas in square metres over the lon/lat rectangle `bounds`:
    /// at its four corners and centre, a 0.01° box must project to within 1% of its true
    /// ellipsoidal area ([`lonlat_box_area_km2`]). A CRS in degrees fails with
    /// [`GridError::Geographic`]; one in other units or not equal-area (Mercator, UTM far
    /// from its meridian) with [`GridError::NotEqualArea`].
    ///
    /// The 1% allowance lets through equal-area CRSs on another ellipsoid (GRS80 vs WGS84
    /// differ by ~1e-9) while catching feet (×10.76), kilometres (×1e-6) and conformal
    /// projections whose scale error exceeds 0.5%.
    pub fn check_equal_area_metres(&self, bounds: Rect<f64>) -> Result<(), GridError> {
        let (lo, hi) = (bounds.min(), bounds.max());
        let centre = bounds.center();
        let d = 0.01;
        for (lon, lat) in [
            (lo.x, lo.y),
            (hi.x, lo.y),
            (hi.x, hi.y),
            (lo.x, hi.y),
            (centre.x, centre.y),
        ] {
            // Keep the test box inside valid lon/lat (bounds past 180° come from regions
            // across the antimeridian).
            let lon = ((lon + 180.0).rem_euclid(360.0) - 180.0).clamp(-180.0, 180.0 - d);
            let lat = lat.clamp(-90.0, 90.0 - d);
            let corners = [
                (lon, lat),
                (lon + d, lat),
                (lon + d, lat + d),
                (lon, lat + d),
            ];
            let mut xy = [[0.0; 2]; 4];
            for (k, (a, b)) in corners.iter().enumerate() {
                xy[k] = self.to_xy(*a, *b)?;
            }
            // Shoelace relative to the first corner (avoids cancellation at large offsets).
            let mut twice = 0.0;
            for k in 1..3 {
                let (p, q) = (xy[k], xy[k + 1]);
                twice +=
                    (p[0] - xy[0][0]) * (q[1] - xy[0][1]) - (q[0] - xy[0][0]) * (p[1] - xy[0][1]);
            }
            let planar = 0.5 * twice.abs();
            let truth_m2 = lonlat_box_area_km2(lon, lat, lon + d, lat + d) * 1.0e6;
            let ratio = planar / truth_m2;
            if ratio < 1.0e-9 {
                return Err(GridError::Geographic {
                    definition: self.crs.definition.clone(),
                });
            }
            // Also catches a NaN ratio.
            if (ratio - 1.0).abs() > 0.01 || ratio.is_nan() {
                return Err(GridError::NotEqualArea {
                    definition: self.crs.definition.clone(),
                    lon,
                    lat,
                    ratio,
                });
            }
        }
        Ok(())
    }

    /// Projects a lon/lat polygon, first densifying its edges so no segment spans more than
    /// `max_step_deg` degrees (a straight lon/lat edge is curved in the projection).
    pub fn polygon_to_xy(
        &self,
        polygon: &MultiPolygon<f64>,
        max_step_deg: f64,
    ) -> Result<MultiPolygon<f64>, GridError> {
        map_multipolygon(polygon, max_step_deg, |c| self.to_xy(c.x, c.y))
    }

    /// Unprojects a projected polygon to lon/lat, first densifying its edges so no segment is
    /// longer than `max_step_m` metres (a straight projected edge is curved in lon/lat).
    pub fn polygon_to_lonlat(
        &self,
        polygon: &MultiPolygon<f64>,
        max_step_m: f64,
    ) -> Result<MultiPolygon<f64>, GridError> {
        map_multipolygon(polygon, max_step_m, |c| self.to_lonlat(c.x, c.y))
    }
}

/// Densify every ring to `max_step` (in the input's units), then map each vertex.
fn map_multipolygon(
    polygon: &MultiPolygon<f64>,
    max_step: f64,
    f: impl Fn(Coord<f64>) -> Result<[f64; 2], GridError>,
) -> Result<MultiPolygon<f64>, GridError> {
    let ring = |ls: &LineString<f64>| -> Result<LineString<f64>, GridError> {
        let mut out = Vec::with_capacity(ls.0.len());
        for w in ls.0.windows(2) {
            let (a, b) = (w[0], w[1]);
            let len = ((b.x - a.x).powi(2) + (b.y - a.y).powi(2)).sqrt();
            let steps = if max_step > 0.0 {
                (len / max_step).ceil().max(1.0) as usize
            } else {
                1
            };
            for k in 0..steps {
                let t = k as f64 / steps as f64;
                let p = f(Coord {
                    x: a.x + t * (b.x - a.x),
                    y: a.y + t * (b.y - a.y),
                })?;
                out.push(Coord { x: p[0], y: p[1] });
            }
        }
        if let Some(last) = ls.0.last() {
            let p = f(*last)?;
            out.push(Coord { x: p[0], y: p[1] });
        }
        Ok(LineString(out))
    };
    let mut polys = Vec::with_capacity(polygon.0.len());
    for p in &polygon.0 {
        let exterior = ring(p.exterior())?;
        let interiors = p
            .interiors()
            .iter()
            .map(ring)
            .collect::<Result<Vec<_>, _>>()?;
        polys.push(Polygon::new(exterior, interiors));
    }
    Ok(MultiPolygon(polys))
}

#[cfg(test)]
mod tests {
    use super::*;
    use geo::polygon;

    // Hand computation: a 1° × 1° box densified to 0.25° steps has 4 points per edge plus
    // the closing point = 17 coordinates; its corners map to themselves through a round trip.
    #[test]
    fn densify_then_round_trip() {
        let p = Projector::new(&Crs::auto_laea(10.5, 54.5)).unwrap();
        let bx = MultiPolygon(vec![polygon![
            (x: 10.0, y: 54.0), (x: 11.0, y: 54.0), (x: 11.0, y: 55.0), (x: 10.0, y: 55.0), (x: 10.0, y: 54.0)
        ]]);
        let xy = p.polygon_to_xy(&bx, 0.25).unwrap();
        assert_eq!(xy.0[0].exterior().0.len(), 17);
        let back = p.polygon_to_lonlat(&xy, 1.0e9).unwrap();
        for (a, b) in back.0[0].exterior().0.iter().zip(
            xy.0[0]
                .exterior()
                .0
                .iter()
                .map(|c| p.to_lonlat(c.x, c.y).unwrap()),
        ) {
            assert_eq!([a.x, a.y], b);
        }
        // PROJ's inverse LAEA inverts the authalic latitude with a truncated series: round
        // trips agree to ~2e-9° (0.25 mm, measured); tolerance 1e-8° (about 1 mm).
        let c = back.0[0].exterior().0[4];
        assert!(
            (c.x - 11.0).abs() < 1e-8 && (c.y - 54.0).abs() < 1e-8,
            "{c:?}"
        );
    }

    // The auto LAEA centre maps to (0, 0) (definition of x_0 = y_0 = 0, the projection's
    // origin at lat_0/lon_0), and passes the equal-area check everywhere in a 20° box.
    #[test]
    fn auto_laea_is_centred_and_equal_area() {
        let p = Projector::new(&Crs::auto_laea(-30.0, -45.0)).unwrap();
        let [x, y] = p.to_xy(-30.0, -45.0).unwrap();
        assert!(x.abs() < 1e-6 && y.abs() < 1e-6);
        p.check_equal_area_metres(Rect::new((-40.0, -55.0), (-20.0, -35.0)))
            .unwrap();
    }

    #[test]
    fn unknown_crs_names_itself() {
        let e = Projector::new(&Crs {
            definition: "EPSG:999999".into(),
        })
        .unwrap_err();
        assert!(e.to_string().contains("EPSG:999999"), "{e}");
    }
}
