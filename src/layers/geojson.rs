//! Reading GeoJSON (RFC 7946) polygons, points and lines with validation that names the
//! feature and the expected form.

use super::LayerError;
use crate::grid::{Crs, Projector};
use ::geojson::{GeoJson, GeometryValue, JsonObject, Position};
use geo::{Coord, LineString, MultiPolygon, Polygon};
use std::path::{Path, PathBuf};

/// One feature of a parsed file: its index, geometry and properties.
#[derive(Debug, Clone)]
pub(crate) struct RawFeature {
    /// 0-based index in the file (0 for a bare Feature or Geometry).
    pub index: usize,
    /// The geometry, `None` for a feature with `"geometry": null`.
    pub geometry: Option<GeometryValue>,
    /// The feature's properties (empty for a bare Geometry).
    pub properties: JsonObject,
}

/// A parsed GeoJSON file, before any coordinate validation (that depends on the CRS).
#[derive(Debug, Clone)]
pub(crate) struct GeoFile {
    /// Where it was read from, for messages.
    pub path: PathBuf,
    /// Its features in file order.
    pub features: Vec<RawFeature>,
    /// The file's own CRS when its coordinates are not WGS84 lon/lat (a GeoJSON `crs` member,
    /// the layer CRS of a GeoPackage or shapefile), as a definition PROJ reads.
    pub crs: Option<String>,
}

/// Reads and parses a GeoJSON file. Malformed JSON reports serde's line and column.
pub(crate) fn parse_file(path: &Path) -> Result<GeoFile, LayerError> {
    super::require_file(path)?;
    let text = std::fs::read_to_string(path).map_err(|source| LayerError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    // A byte-order mark (written by some Windows tools) is not JSON; skip it.
    let text = text.strip_prefix('\u{feff}').unwrap_or(&text);
    let parsed: GeoJson = serde_json::from_str(text).map_err(|e| LayerError::Json {
        path: path.to_path_buf(),
        line: e.line(),
        column: e.column(),
        message: e.to_string(),
    })?;
    let crs = match &parsed {
        GeoJson::FeatureCollection(fc) => crs_member(fc.foreign_members.as_ref()),
        GeoJson::Feature(f) => crs_member(f.foreign_members.as_ref()),
        GeoJson::Geometry(g) => crs_member(g.foreign_members.as_ref()),
    };
    let features = match parsed {
        GeoJson::FeatureCollection(fc) => fc
            .features
            .into_iter()
            .enumerate()
            .map(|(index, f)| RawFeature {
                index,
                geometry: f.geometry.map(|g| g.value),
                properties: f.properties.unwrap_or_default(),
            })
            .collect(),
        GeoJson::Feature(f) => vec![RawFeature {
            index: 0,
            geometry: f.geometry.map(|g| g.value),
            properties: f.properties.unwrap_or_default(),
        }],
        GeoJson::Geometry(g) => {
            vec![RawFeature {
                index: 0,
                geometry: Some(g.value),
                properties: JsonObject::new(),
            }]
        }
    };
    Ok(GeoFile {
        path: path.to_path_buf(),
        features,
        crs,
    })
}

/// The CRS named by a GeoJSON `crs` member (GeoJSON 2008 form, still written by GDAL for
/// projected data: `{"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::3035"}}`),
/// as `EPSG:3035`; `None` when absent or naming WGS84 lon/lat (CRS84 / EPSG:4326).
fn crs_member(members: Option<&JsonObject>) -> Option<String> {
    let name = members?
        .get("crs")?
        .get("properties")?
        .get("name")?
        .as_str()?
        .to_string();
    let upper = name.to_ascii_uppercase();
    if upper.ends_with("CRS84") || upper.ends_with("EPSG::4326") || upper == "EPSG:4326" {
        return None;
    }
    // urn:ogc:def:crs:EPSG::3035 → EPSG:3035; other names go to PROJ as written.
    match upper.strip_prefix("URN:OGC:DEF:CRS:") {
        Some(rest) => {
            let mut parts = rest.split(':').filter(|p| !p.is_empty());
            match (parts.next(), parts.next_back()) {
                (Some(auth), Some(code)) => Some(format!("{auth}:{code}")),
                _ => Some(name),
            }
        }
        None => Some(name),
    }
}

/// How coordinates are checked: WGS84 lon/lat ranges, or only finiteness for a projected CRS.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Coords {
    /// lon in −180..180, lat in −90..90 (RFC 7946).
    LonLat,
    /// Any finite numbers (coordinates in a projected CRS).
    Projected,
}

impl GeoFile {
    fn geometry_error(&self, feature: usize, message: String) -> LayerError {
        LayerError::Geometry {
            path: self.path.clone(),
            feature,
            message,
        }
    }

    fn coord(
        &self,
        feature: usize,
        p: &Position,
        coords: Coords,
    ) -> Result<Coord<f64>, LayerError> {
        let s = p.as_slice();
        if s.len() < 2 {
            return Err(self.geometry_error(
                feature,
                format!("position {s:?} has fewer than 2 numbers (expected [lon, lat])"),
            ));
        }
        let (x, y) = (s[0], s[1]);
        if !(x.is_finite() && y.is_finite()) {
            return Err(self.geometry_error(
                feature,
                format!("position [{x}, {y}] is not finite (expected finite numbers)"),
            ));
        }
        if coords == Coords::LonLat
            && !((-180.0..=180.0).contains(&x) && (-90.0..=90.0).contains(&y))
        {
            return Err(self.geometry_error(
                feature,
                format!(
                    "position [{x}, {y}] is outside WGS84 lon −180..180 / lat −90..90 \
                     (expected [lon, lat] in degrees, RFC 7946; give `crs` for projected coordinates)"
                ),
            ));
        }
        Ok(Coord { x, y })
    }

    fn ring(
        &self,
        feature: usize,
        ring: &[Position],
        coords: Coords,
    ) -> Result<LineString<f64>, LayerError> {
        let pts = ring
            .iter()
            .map(|p| self.coord(feature, p, coords))
            .collect::<Result<Vec<_>, _>>()?;
        if pts.len() < 4 {
            return Err(self.geometry_error(
                feature,
                format!(
                    "a polygon ring has {} positions (expected at least 4, first = last)",
                    pts.len()
                ),
            ));
        }
        if pts.first() != pts.last() {
            return Err(self.geometry_error(
                feature,
                "a polygon ring is not closed (expected its last position to repeat the first)"
                    .into(),
            ));
        }
        Ok(LineString(pts))
    }

    fn polygon(
        &self,
        feature: usize,
        rings: &[Vec<Position>],
        coords: Coords,
    ) -> Result<Polygon<f64>, LayerError> {
        let mut it = rings.iter();
        let Some(exterior) = it.next() else {
            return Err(self.geometry_error(
                feature,
                "a polygon has no rings (expected an exterior ring)".into(),
            ));
        };
        let exterior = self.ring(feature, exterior, coords)?;
        let interiors = it
            .map(|r| self.ring(feature, r, coords))
            .collect::<Result<Vec<_>, _>>()?;
        Ok(Polygon::new(exterior, interiors))
    }

    fn collect_polygons(
        &self,
        feature: usize,
        g: &GeometryValue,
        coords: Coords,
        out: &mut Vec<Polygon<f64>>,
    ) -> Result<(), LayerError> {
        match g {
            GeometryValue::Polygon { coordinates } => {
                out.push(self.polygon(feature, coordinates, coords)?)
            }
            GeometryValue::MultiPolygon { coordinates } => {
                for p in coordinates {
                    out.push(self.polygon(feature, p, coords)?);
                }
            }
            GeometryValue::GeometryCollection { geometries } => {
                for g in geometries {
                    self.collect_polygons(feature, &g.value, coords, out)?;
                }
            }
            other => {
                return Err(self.geometry_error(
                    feature,
                    format!(
                        "geometry is a {} (expected Polygon or MultiPolygon)",
                        other.type_name()
                    ),
                ))
            }
        }
        Ok(())
    }

    /// Every feature's polygons, as `(feature index, polygons)`. Any other geometry is an error.
    ///
    /// Every feature is checked against the simple-features rules ([`super::validity`]); the
    /// error lists every invalid polygon of the file with its feature, part and place. With
    /// `repair`, an invalid feature is instead repaired by geo's `MakeValid` (even-odd rule: a
    /// bow-tie becomes two triangles, a hole outside its exterior an island of its own).
    pub(crate) fn polygons(
        &self,
        coords: Coords,
        repair: bool,
    ) -> Result<Vec<(usize, MultiPolygon<f64>)>, LayerError> {
        let mut out = Vec::with_capacity(self.features.len());
        let mut problems = Vec::new();
        for f in &self.features {
            let Some(g) = &f.geometry else {
                return Err(self.geometry_error(
                    f.index,
                    "geometry is null (expected Polygon or MultiPolygon)".into(),
                ));
            };
            let mut polys = Vec::new();
            self.collect_polygons(f.index, g, coords, &mut polys)?;
            let mut mp = MultiPolygon(polys);
            let found = super::validity::invalidities(&mp);
            if !found.is_empty() {
                if repair {
                    use geo::MakeValid;
                    mp = mp.make_valid().map_err(|e| {
                        self.geometry_error(
                            f.index,
                            format!("invalid ({}), and the repair failed: {e}", found[0].what),
                        )
                    })?;
                } else {
                    let (x, y) = match coords {
                        Coords::LonLat => ("lon", "lat"),
                        Coords::Projected => ("x", "y"),
                    };
                    problems.extend(found.into_iter().map(|p| {
                        format!(
                            "feature {}, part {}: {}, at {x} {}, {y} {}",
                            f.index, p.part, p.what, p.at[0], p.at[1]
                        )
                    }));
                }
            }
            out.push((f.index, mp));
        }
        if !problems.is_empty() {
            return Err(LayerError::InvalidPolygons {
                path: self.path.clone(),
                problems,
            });
        }
        Ok(out)
    }

    /// Every point, as `(feature index, position)`. Any geometry but Point/MultiPoint is an error.
    pub(crate) fn points(&self, coords: Coords) -> Result<Vec<(usize, [f64; 2])>, LayerError> {
        let mut out = Vec::with_capacity(self.features.len());
        for f in &self.features {
            match &f.geometry {
                Some(GeometryValue::Point { coordinates }) => {
                    let c = self.coord(f.index, coordinates, coords)?;
                    out.push((f.index, [c.x, c.y]));
                }
                Some(GeometryValue::MultiPoint { coordinates }) => {
                    for p in coordinates {
                        let c = self.coord(f.index, p, coords)?;
                        out.push((f.index, [c.x, c.y]));
                    }
                }
                Some(other) => {
                    return Err(self.geometry_error(
                        f.index,
                        format!(
                            "geometry is a {} (expected Point or MultiPoint)",
                            other.type_name()
                        ),
                    ))
                }
                None => {
                    return Err(self.geometry_error(
                        f.index,
                        "geometry is null (expected Point or MultiPoint)".into(),
                    ))
                }
            }
        }
        Ok(out)
    }

    /// Every line, as `(feature index, line)`. Any geometry but LineString/MultiLineString is an error.
    pub(crate) fn lines(
        &self,
        coords: Coords,
    ) -> Result<Vec<(usize, LineString<f64>)>, LayerError> {
        let mut out = Vec::new();
        let line = |index: usize, ps: &[Position]| -> Result<LineString<f64>, LayerError> {
            let pts = ps
                .iter()
                .map(|p| self.coord(index, p, coords))
                .collect::<Result<Vec<_>, _>>()?;
            if pts.len() < 2 {
                return Err(self.geometry_error(
                    index,
                    format!("a line has {} positions (expected at least 2)", pts.len()),
                ));
            }
            Ok(LineString(pts))
        };
        for f in &self.features {
            match &f.geometry {
                Some(GeometryValue::LineString { coordinates }) => {
                    out.push((f.index, line(f.index, coordinates)?))
                }
                Some(GeometryValue::MultiLineString { coordinates }) => {
                    for l in coordinates {
                        out.push((f.index, line(f.index, l)?));
                    }
                }
                Some(other) => {
                    return Err(self.geometry_error(
                        f.index,
                        format!(
                            "geometry is a {} (expected LineString or MultiLineString)",
                            other.type_name()
                        ),
                    ))
                }
                None => {
                    return Err(self.geometry_error(
                        f.index,
                        "geometry is null (expected LineString or MultiLineString)".into(),
                    ))
                }
            }
        }
        Ok(out)
    }

    /// The numeric property `field` of feature `index`. JSON `null` means "no data" → `None`;
    /// an absent property or a non-number is an error.
    pub(crate) fn number(&self, index: usize, field: &str) -> Result<Option<f64>, LayerError> {
        let props = &self.features[index].properties;
        let err = |message: String| LayerError::Property {
            path: self.path.clone(),
            feature: index,
            property: field.to_string(),
            message,
        };
        match props.get(field) {
            None => {
                let names: Vec<&str> = props.keys().map(String::as_str).collect();
                Err(err(format!(
                    "absent (expected a numeric property; this feature has {names:?})"
                )))
            }
            Some(serde_json::Value::Null) => Ok(None),
            Some(serde_json::Value::Number(n)) => match n.as_f64() {
                Some(v) if v.is_finite() => Ok(Some(v)),
                _ => Err(err(format!("{n} is not a finite number"))),
            },
            Some(other) => Err(err(format!(
                "{other} is not a number (expected e.g. `\"{field}\": 0.5`)"
            ))),
        }
    }
}

/// A vector file read for a lon/lat use, with its projector back to lon/lat when the file's
/// coordinates are in another CRS.
fn lonlat_file(path: &Path) -> Result<(GeoFile, Option<Projector>), LayerError> {
    let file = super::vector::read(path, None)?;
    let projector = match &file.crs {
        None => None,
        Some(def) => Some(
            Projector::new(&Crs {
                definition: def.clone(),
            })
            .map_err(|source| LayerError::Projection {
                path: path.to_path_buf(),
                source,
            })?,
        ),
    };
    Ok((file, projector))
}

fn projection_error(path: &Path) -> impl Fn(crate::grid::GridError) -> LayerError + '_ {
    move |source| LayerError::Projection {
        path: path.to_path_buf(),
        source,
    }
}

/// Every Polygon / MultiPolygon geometry of a vector file (GeoJSON FeatureCollection, Feature or
/// bare Geometry; GeoPackage, shapefile, FlatGeobuf) as one multipolygon in WGS84 lon/lat
/// degrees; a file in another CRS is unprojected (edges densified to 1 km first). Region and
/// land-mask files are read with this.
///
/// Errors name the file and feature: malformed JSON (serde's line/column), non-polygon or null
/// geometries, non-finite coordinates, lon outside −180..180 or lat outside −90..90, rings that
/// are unclosed or have fewer than 4 positions.
///
/// Polygons are checked against the simple-features rules; with `repair` invalid ones are
/// repaired instead of refused (see [`GeoFile::polygons`]).
pub fn read_multipolygon(path: &Path, repair: bool) -> Result<MultiPolygon<f64>, LayerError> {
    let (file, projector) = lonlat_file(path)?;
    let coords = if projector.is_some() {
        Coords::Projected
    } else {
        Coords::LonLat
    };
    let polys = file.polygons(coords, repair)?;
    let mp = MultiPolygon(polys.into_iter().flat_map(|(_, mp)| mp.0).collect());
    match projector {
        None => Ok(mp),
        Some(p) => p
            .polygon_to_lonlat(&mp, 1000.0)
            .map_err(projection_error(path)),
    }
}

/// Every Point / MultiPoint of a vector file as `([lon, lat], value)` in WGS84 degrees. The value
/// is the numeric property `field`, or 1.0 when `field` is `None`. Points whose property is
/// null carry no data and are left out.
pub fn read_points(path: &Path, field: Option<&str>) -> Result<Vec<([f64; 2], f64)>, LayerError> {
    let (file, projector) = lonlat_file(path)?;
    let coords = if projector.is_some() {
        Coords::Projected
    } else {
        Coords::LonLat
    };
    let pts = file.points(coords)?;
    let mut out = Vec::with_capacity(pts.len());
    for (index, p) in pts {
        let p = match &projector {
            None => p,
            Some(pr) => pr.to_lonlat(p[0], p[1]).map_err(projection_error(path))?,
        };
        match field {
            None => out.push((p, 1.0)),
            Some(f) => {
                if let Some(v) = file.number(index, f)? {
                    out.push((p, v));
                }
            }
        }
    }
    Ok(out)
}

/// Every LineString / MultiLineString of a vector file, WGS84 lon/lat degrees.
pub fn read_lines(path: &Path) -> Result<Vec<LineString<f64>>, LayerError> {
    let (file, projector) = lonlat_file(path)?;
    let coords = if projector.is_some() {
        Coords::Projected
    } else {
        Coords::LonLat
    };
    let lines = file.lines(coords)?.into_iter().map(|(_, l)| l);
    match projector {
        None => Ok(lines.collect()),
        Some(p) => lines
            .map(|l| {
                l.0.iter()
                    .map(|c| p.to_lonlat(c.x, c.y).map(|q| Coord { x: q[0], y: q[1] }))
                    .collect::<Result<Vec<_>, _>>()
                    .map(LineString)
                    .map_err(projection_error(path))
            })
            .collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Write;

    fn write(text: &str) -> tempfile::NamedTempFile {
        let mut f = tempfile::Builder::new()
            .suffix(".geojson")
            .tempfile()
            .unwrap();
        f.write_all(text.as_bytes()).unwrap();
        f
    }

    fn feature(geometry: &str, props: &str) -> String {
        format!(r#"{{"type":"Feature","properties":{props},"geometry":{geometry}}}"#)
    }

    fn collection(features: &[String]) -> String {
        format!(
            r#"{{"type":"FeatureCollection","features":[{}]}}"#,
            features.join(",")
        )
    }

    const SQUARE: &str = r#"{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,1],[0,0]]]}"#;

    #[test]
    fn reads_polygons_from_all_three_forms() {
        let multi = r#"{"type":"MultiPolygon","coordinates":[[[[2,2],[3,2],[3,3],[2,2]]],[[[5,5],[6,5],[6,6],[5,5]]]]}"#;
        let fc = write(&collection(&[feature(SQUARE, "{}"), feature(multi, "{}")]));
        assert_eq!(read_multipolygon(fc.path(), false).unwrap().0.len(), 3);
        let f = write(&feature(SQUARE, "null"));
        assert_eq!(read_multipolygon(f.path(), false).unwrap().0.len(), 1);
        let g = write(SQUARE);
        let mp = read_multipolygon(g.path(), false).unwrap();
        // Shoelace area of the unit square in degree units: 1 (hand computation).
        assert_eq!(geo::Area::unsigned_area(&mp), 1.0);
    }

    #[test]
    fn validation_names_the_feature() {
        let point = r#"{"type":"Point","coordinates":[1,2]}"#;
        let f = write(&collection(&[feature(SQUARE, "{}"), feature(point, "{}")]));
        let e = read_multipolygon(f.path(), false).unwrap_err().to_string();
        assert!(
            e.contains("feature 1") && e.contains("Point") && e.contains("expected Polygon"),
            "{e}"
        );
        let open = r#"{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,1]]]}"#;
        let e = read_multipolygon(write(open).path(), false)
            .unwrap_err()
            .to_string();
        assert!(e.contains("not closed"), "{e}");
        let short = r#"{"type":"Polygon","coordinates":[[[0,0],[1,0],[0,0]]]}"#;
        let e = read_multipolygon(write(short).path(), false)
            .unwrap_err()
            .to_string();
        assert!(e.contains("3 positions") && e.contains("at least 4"), "{e}");
        let far = r#"{"type":"Polygon","coordinates":[[[0,0],[181,0],[1,1],[0,0]]]}"#;
        let e = read_multipolygon(write(far).path(), false)
            .unwrap_err()
            .to_string();
        assert!(e.contains("181") && e.contains("−180..180"), "{e}");
        let huge = r#"{"type":"Polygon","coordinates":[[[0,0],[1e999,0],[1,1],[0,0]]]}"#;
        assert!(matches!(
            read_multipolygon(write(huge).path(), false),
            Err(LayerError::Json { .. })
        ));
    }

    #[test]
    fn malformed_json_gives_line_and_column() {
        let f = write("{\"type\": \"FeatureCollection\",\n \"features\": [ oops ]}");
        match read_multipolygon(f.path(), false) {
            Err(LayerError::Json { line, column, .. }) => assert_eq!((line, column), (2, 16)),
            other => panic!("expected a JSON error, got {other:?}"),
        }
        let missing =
            read_multipolygon(Path::new("/nonexistent/region.geojson"), false).unwrap_err();
        assert!(missing.to_string().contains("/nonexistent/region.geojson"));
    }

    #[test]
    fn points_lines_and_properties() {
        let p1 = r#"{"type":"Point","coordinates":[1,2]}"#;
        let p2 = r#"{"type":"MultiPoint","coordinates":[[3,4],[5,6]]}"#;
        let f = write(&collection(&[
            feature(p1, r#"{"n": 2.5}"#),
            feature(p2, r#"{"n": 4}"#),
            feature(p1, r#"{"n": null}"#),
        ]));
        let pts = read_points(f.path(), Some("n")).unwrap();
        assert_eq!(
            pts,
            vec![([1.0, 2.0], 2.5), ([3.0, 4.0], 4.0), ([5.0, 6.0], 4.0)]
        );
        assert_eq!(read_points(f.path(), None).unwrap().len(), 4);
        let e = read_points(f.path(), Some("m")).unwrap_err().to_string();
        assert!(
            e.contains("feature 0") && e.contains("`m`") && e.contains("absent"),
            "{e}"
        );
        let s = write(&collection(&[feature(p1, r#"{"n": "lots"}"#)]));
        let e = read_points(s.path(), Some("n")).unwrap_err().to_string();
        assert!(e.contains("not a number"), "{e}");
        let l = r#"{"type":"MultiLineString","coordinates":[[[0,0],[1,1]],[[2,2],[3,3],[4,4]]]}"#;
        let lines = read_lines(write(l).path()).unwrap();
        assert_eq!(
            lines.iter().map(|l| l.0.len()).collect::<Vec<_>>(),
            vec![2, 3]
        );
        assert!(read_lines(write(SQUARE).path()).is_err());
    }
}
