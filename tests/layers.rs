//! Public-API tests of the layers stage on the fixtures in tests/data/layers/.

use driftplan::grid::{Crs, Grid, Projector};
use driftplan::layers::{
    read_multipolygon, read_points, sample, LayerError, LayerSpec, Missing, Sampling, SourceCache,
};
use std::path::{Path, PathBuf};

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/layers")
        .join(name)
}

fn spec(path: PathBuf, sampling: Sampling, field: Option<&str>, crs: Option<&str>) -> LayerSpec {
    LayerSpec {
        path,
        sampling,
        field: field.map(str::to_string),
        layer: None,
        year: None,
        years_window: 1,
        crs: crs.map(str::to_string),
        valid_range: None,
        missing: Missing::Zero,
        repair: false,
    }
}

/// 2 × 1 cells of 1 km in EPSG:3035, south-west corner at E 4 000 000, N 3 000 000.
fn grid_3035(n_cols: u32, n_rows: u32) -> Grid {
    Grid::full_rectangle(
        Crs {
            definition: "EPSG:3035".into(),
        },
        1000.0,
        [4.0e6, 3.0e6],
        n_cols,
        n_rows,
    )
    .unwrap()
}

/// 10 × 10 cells of 10 km in a LAEA centred at 5°E 50°N, placed so that (5°E, 50°N) — projected
/// (0, 0) — is the centre of cell 55 (column 5, row 5).
fn grid_laea() -> Grid {
    Grid::full_rectangle(
        Crs::auto_laea(5.0, 50.0),
        10_000.0,
        [-55_000.0, -55_000.0],
        10,
        10,
    )
    .unwrap()
}

#[test]
fn area_share_and_mean_by_hand() {
    // Hand computation (cell units, cell 0 = x 0..1, cell 1 = x 1..2, y 0..1):
    // polygon A (depth 10) = x 0..0.5, y 0..1 → 0.5 of cell 0;
    // polygon B (depth 40) = x 0.5..2, y 0..0.5 → 0.25 of cell 0 and 0.5 of cell 1.
    // Share: cell 0 = 0.75, cell 1 = 0.5.
    // Area-weighted mean: cell 0 = (10·0.5 + 40·0.25) / 0.75 = 15 / 0.75 = 20; cell 1 = 40.
    let g = grid_3035(2, 1);
    let cache = SourceCache::new();
    let share = sample(
        "share",
        &spec(
            data("areas_3035.geojson"),
            Sampling::AreaShare,
            None,
            Some("EPSG:3035"),
        ),
        &g,
        &cache,
    )
    .unwrap();
    assert!((share.values[0] - 0.75).abs() < 1e-12, "{:?}", share.values);
    assert!((share.values[1] - 0.5).abs() < 1e-12);
    let mean = sample(
        "depth",
        &spec(
            data("areas_3035.geojson"),
            Sampling::AreaMean,
            Some("depth"),
            Some("EPSG:3035"),
        ),
        &g,
        &cache,
    )
    .unwrap();
    assert_eq!(mean.name, "depth");
    assert!((mean.values[0] - 20.0).abs() < 1e-9, "{:?}", mean.values);
    assert!((mean.values[1] - 40.0).abs() < 1e-9);
    // Parsed once, cut once: the file and its projected index are two cache entries.
    assert_eq!(cache.len(), 2);
}

/// Writes a lon/lat GeoJSON polygon whose corners are the given projected points of `g`.
fn lonlat_polygon(dir: &Path, g: &Grid, corners: &[[f64; 2]]) -> PathBuf {
    let p = Projector::new(&g.crs).unwrap();
    let mut ring: Vec<[f64; 2]> = corners
        .iter()
        .map(|c| p.to_lonlat(c[0], c[1]).unwrap())
        .collect();
    ring.push(ring[0]);
    let text = serde_json::json!({"type": "Polygon", "coordinates": [ring]}).to_string();
    let path = dir.join("poly.geojson");
    std::fs::write(&path, text).unwrap();
    path
}

#[test]
fn area_share_of_lonlat_polygons() {
    // Hand computation: a polygon over the west half of cell 55 (x −5000..0 m, y −5000..5000 m)
    // covers 0.5 of it; a 10 km square centred on the corner (5000, 5000) covers a quarter of
    // cells 55, 56, 65, 66. The corners are unprojected to lon/lat and sampled back; a straight
    // lon/lat edge of 10 km bends by well under a metre in this LAEA, so 1e-3 is ample.
    let g = grid_laea();
    let dir = tempfile::tempdir().unwrap();
    let half = lonlat_polygon(
        dir.path(),
        &g,
        &[
            [-5000.0, -5000.0],
            [0.0, -5000.0],
            [0.0, 5000.0],
            [-5000.0, 5000.0],
        ],
    );
    let layer = sample(
        "half",
        &spec(half, Sampling::AreaShare, None, None),
        &g,
        &SourceCache::new(),
    )
    .unwrap();
    for (id, v) in layer.values.iter().enumerate() {
        let want = if id == 55 { 0.5 } else { 0.0 };
        assert!((v - want).abs() < 1e-3, "cell {id}: {v}");
    }
    let q = lonlat_polygon(
        dir.path(),
        &g,
        &[
            [0.0, 0.0],
            [10_000.0, 0.0],
            [10_000.0, 10_000.0],
            [0.0, 10_000.0],
        ],
    );
    let layer = sample(
        "quarter",
        &spec(q, Sampling::AreaShare, None, None),
        &g,
        &SourceCache::new(),
    )
    .unwrap();
    for (id, v) in layer.values.iter().enumerate() {
        let want = if [55, 56, 65, 66].contains(&id) {
            0.25
        } else {
            0.0
        };
        assert!((v - want).abs() < 1e-3, "cell {id}: {v}");
    }
}

#[test]
fn point_count_sum_mean_by_hand() {
    // Hand answer: (5, 50), (5.01, 50.01), (5.02, 49.99) lie within 2 km of the centre of
    // cell 55 (0.01° ≈ 0.7 km east, 1.1 km north at 50°N); (5.14, 50) is ≈ 10.0 km east, the
    // centre of cell 56. Catches 2, 3, 7 and 10.
    // Count: 3 and 1; sum: 12 and 10; mean: 4 and 10. Every other cell is empty.
    let g = grid_laea();
    let cache = SourceCache::new();
    let run = |s: Sampling, f: Option<&str>| {
        sample("p", &spec(data("points.geojson"), s, f, None), &g, &cache).unwrap()
    };
    let count = run(Sampling::PointCount, None);
    let sum = run(Sampling::PointSum, Some("catch"));
    let mean = run(Sampling::PointMean, Some("catch"));
    for (id, ((c, s), m)) in count
        .values
        .iter()
        .zip(&sum.values)
        .zip(&mean.values)
        .enumerate()
    {
        let want = match id {
            55 => (3.0, 12.0, 4.0),
            56 => (1.0, 10.0, 10.0),
            _ => (0.0, 0.0, 0.0),
        };
        assert_eq!((*c, *s, *m), want, "cell {id}");
    }
    // One parse for three layers.
    assert_eq!(cache.len(), 1);
}

#[test]
fn epsg3035_input_is_reprojected() {
    // EPSG Guidance Note 7-2 (IOGP), LAEA example for EPSG:3035: 50°N 5°E ↔ E 3 962 799.45 m,
    // N 2 999 718.85 m. Given in EPSG:3035, the point must land in the cell of (5°E, 50°N): 55.
    let g = grid_laea();
    let s = spec(
        data("point_3035.geojson"),
        Sampling::PointCount,
        None,
        Some("EPSG:3035"),
    );
    let layer = sample("p", &s, &g, &SourceCache::new()).unwrap();
    assert_eq!(layer.values[55], 1.0);
    assert_eq!(layer.values.iter().sum::<f64>(), 1.0);
    // Read as lon/lat, the same file is out of range: the CRS matters.
    let bad = spec(data("point_3035.geojson"), Sampling::PointCount, None, None);
    assert!(matches!(
        sample("p", &bad, &g, &SourceCache::new()),
        Err(LayerError::Geometry { .. })
    ));
}

#[test]
fn bilinear_on_a_lattice_csv() {
    // The lattice holds a = 1 + 2·lon + 3·lat and b = lon·lat on a 0.5° grid. Bilinear
    // interpolation is exact for functions linear in each coordinate (Press et al., Numerical
    // Recipes, §3.6), so both are reproduced at every cell's lon/lat centroid.
    let g = grid_laea();
    let cache = SourceCache::new();
    let a = sample(
        "a",
        &spec(data("lattice.csv"), Sampling::Interpolate, Some("a"), None),
        &g,
        &cache,
    )
    .unwrap();
    let b = sample(
        "b",
        &spec(data("lattice.csv"), Sampling::Interpolate, Some("b"), None),
        &g,
        &cache,
    )
    .unwrap();
    for (id, cell) in g.cells.iter().enumerate() {
        let [lon, lat] = cell.lonlat;
        assert!(
            (a.values[id] - (1.0 + 2.0 * lon + 3.0 * lat)).abs() < 1e-9,
            "cell {id}"
        );
        assert!((b.values[id] - lon * lat).abs() < 1e-9, "cell {id}");
    }
    // The CSV was parsed once, its weights computed once, for both columns.
    assert_eq!(cache.len(), 2);
}

#[test]
fn bilinear_product_case_at_set_centroids() {
    // Hand computation on the lattice cell lon 4..4.5, lat 49..49.5 for b = lon·lat with the
    // centroid moved to (4.125, 49.375): t = 0.25, u = 0.75;
    // corners b(4,49) = 196, b(4.5,49) = 220.5, b(4,49.5) = 198, b(4.5,49.5) = 222.75;
    // b = 0.75·0.25·196 + 0.25·0.25·220.5 + 0.75·0.75·198 + 0.25·0.75·222.75
    //   = 36.75 + 13.78125 + 111.375 + 41.765625 = 203.671875 (= 4.125 · 49.375).
    let mut g = grid_3035(1, 1);
    g.cells[0].lonlat = [4.125, 49.375];
    let b = sample(
        "b",
        &spec(data("lattice.csv"), Sampling::Interpolate, Some("b"), None),
        &g,
        &SourceCache::new(),
    )
    .unwrap();
    assert!((b.values[0] - 203.671875).abs() < 1e-12);
}

#[test]
fn nearest_on_an_irregular_csv() {
    // Hand answer (metres from the grid origin): points P1 (500, 500) = 1, P2 (1700, 400) = 2,
    // P3 (600, 1900) = 3. Nearest-other distances 1204, 1204, 1404 → median 1204, limit
    // 2 × 1204 = 2408 m. Cell centres (x, y) and their nearest point:
    // row 0: (500,500) P1 0 → 1; (1500,500) P2 224 → 2; (2500,500) P2 806 → 2;
    //        (3500,500) P2 1803 → 2; (4500,500) P2 2802 > limit; (5500,500) uncovered.
    // row 1: (500,1500) P3 412 → 3; (1500,1500) P3 985 (P2 1118) → 3; (2500,1500) P2 1360 → 2;
    //        (3500,1500) P2 2110 → 2; (4500,1500) P2 3007 > limit; (5500,1500) uncovered.
    let g = grid_3035(6, 2);
    let mut s = spec(
        data("irregular_3035.csv"),
        Sampling::Interpolate,
        Some("depth"),
        Some("EPSG:3035"),
    );
    let layer = sample("d", &s, &g, &SourceCache::new()).unwrap();
    assert_eq!(
        layer.values,
        vec![1.0, 2.0, 2.0, 2.0, 0.0, 0.0, 3.0, 3.0, 2.0, 2.0, 0.0, 0.0]
    );
    s.missing = Missing::Error;
    let e = sample("d", &s, &g, &SourceCache::new()).unwrap_err();
    match &e {
        LayerError::Uncovered {
            count,
            total,
            examples,
            ..
        } => {
            assert_eq!((*count, *total), (4, 12));
            assert!(
                examples.starts_with("cell 4 (lon ") && examples.contains("cell 11"),
                "{examples}"
            );
        }
        other => panic!("expected Uncovered, got {other:?}"),
    }
    assert!(e.to_string().contains("4 of 12 cells"), "{e}");
}

#[test]
fn error_cases_name_file_and_place() {
    let g = grid_laea();
    let cache = SourceCache::new();
    // Missing file.
    let e = sample(
        "x",
        &spec(data("absent.geojson"), Sampling::AreaShare, None, None),
        &g,
        &cache,
    )
    .unwrap_err();
    assert!(
        matches!(e, LayerError::Io { .. }) && e.to_string().contains("absent.geojson"),
        "{e}"
    );
    // Malformed GeoJSON: the missing comma on line 4 (serde's line/column).
    let e = sample(
        "x",
        &spec(data("malformed.geojson"), Sampling::AreaShare, None, None),
        &g,
        &cache,
    )
    .unwrap_err();
    match &e {
        LayerError::Json { line, .. } => assert_eq!(*line, 4, "{e}"),
        other => panic!("expected a JSON error, got {other:?}"),
    }
    assert!(e.to_string().contains("malformed.geojson"));
    // NaN in a CSV: line 4 (the header is line 1), column `sst`.
    let e = sample(
        "x",
        &spec(data("nan.csv"), Sampling::Interpolate, Some("sst"), None),
        &g,
        &cache,
    )
    .unwrap_err();
    let msg = e.to_string();
    assert!(
        msg.contains("nan.csv") && msg.contains("line 4") && msg.contains("`sst`"),
        "{msg}"
    );
    // Value outside valid_range: catch 10 in feature 3 exceeds [0, 8].
    let mut s = spec(
        data("points.geojson"),
        Sampling::PointSum,
        Some("catch"),
        None,
    );
    s.valid_range = Some((0.0, 8.0));
    let e = sample("x", &s, &g, &cache).unwrap_err();
    match &e {
        LayerError::OutOfRange {
            location, value, ..
        } => {
            assert_eq!(location, "feature 3");
            assert_eq!(*value, 10.0);
        }
        other => panic!("expected OutOfRange, got {other:?}"),
    }
    // A sampled value outside the range: sums 12 in cell 55 exceed [0, 11] though no point does.
    let mut s = spec(
        data("points.geojson"),
        Sampling::PointSum,
        Some("catch"),
        None,
    );
    s.valid_range = Some((0.0, 11.0));
    let e = sample("x", &s, &g, &cache).unwrap_err().to_string();
    assert!(e.contains("cell 55") && e.contains("12"), "{e}");
    // Uncovered cells with Missing::Error: 98 of the 100 cells have no point.
    let mut s = spec(data("points.geojson"), Sampling::PointCount, None, None);
    s.missing = Missing::Error;
    let e = sample("x", &s, &g, &cache).unwrap_err().to_string();
    assert!(
        e.contains("98 of 100 cells") && e.contains("cell 0 (lon "),
        "{e}"
    );
    // A field-based sampling without a field.
    let e = sample(
        "x",
        &spec(data("points.geojson"), Sampling::PointSum, None, None),
        &g,
        &cache,
    )
    .unwrap_err();
    assert!(matches!(e, LayerError::Spec { .. }), "{e}");
    // Points sampled as polygons.
    let e = sample(
        "x",
        &spec(data("points.geojson"), Sampling::AreaShare, None, None),
        &g,
        &cache,
    )
    .unwrap_err();
    assert!(
        e.to_string().contains("feature 0") && e.to_string().contains("Point"),
        "{e}"
    );
}

/// Shoelace area of a ring, in squared input units (Gauss's area formula; hand-checkable).
fn shoelace(ring: &[serde_json::Value]) -> f64 {
    let pts: Vec<(f64, f64)> = ring
        .iter()
        .map(|p| (p[0].as_f64().unwrap(), p[1].as_f64().unwrap()))
        .collect();
    pts.windows(2)
        .map(|w| w[0].0 * w[1].1 - w[1].0 * w[0].1)
        .sum::<f64>()
        .abs()
        / 2.0
}

#[test]
fn independent_parse_of_the_region_fixture() {
    // Independent check: walk region.geojson with serde_json alone, count polygons and rings and
    // sum exterior-minus-hole shoelace areas (degree units), and compare with read_multipolygon
    // (geo's area). By hand: bay = 2·1.5 + (2·0.5)/2 − 0.5·0.5 = 3.25; islands = 0.125 + 0.25.
    let text = std::fs::read_to_string(data("region.geojson")).unwrap();
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    let (mut polys, mut rings, mut area) = (0, 0, 0.0);
    for f in v["features"].as_array().unwrap() {
        let g = &f["geometry"];
        let list: Vec<&serde_json::Value> = match g["type"].as_str().unwrap() {
            "Polygon" => vec![&g["coordinates"]],
            "MultiPolygon" => g["coordinates"].as_array().unwrap().iter().collect(),
            other => panic!("unexpected {other}"),
        };
        for p in list {
            polys += 1;
            for (k, r) in p.as_array().unwrap().iter().enumerate() {
                rings += 1;
                let a = shoelace(r.as_array().unwrap());
                area += if k == 0 { a } else { -a };
            }
        }
    }
    assert!((area - (3.25 + 0.375)).abs() < 1e-12, "hand total {area}");
    let mp = read_multipolygon(&data("region.geojson"), false).unwrap();
    assert_eq!(mp.0.len(), polys);
    assert_eq!(
        mp.0.iter().map(|p| 1 + p.interiors().len()).sum::<usize>(),
        rings
    );
    assert!((geo::Area::unsigned_area(&mp) - area).abs() < 1e-12);
    // Points fixture: four positions, catches summing to 22.
    let pts = read_points(&data("points.geojson"), Some("catch")).unwrap();
    assert_eq!(pts.len(), 4);
    assert_eq!(pts.iter().map(|p| p.1).sum::<f64>(), 22.0);
}

/// Writes a `lon,lat,v` CSV of the lattice lon 4.0 + 0.1·i (i < 21), lat 49.4 + 0.1·j
/// (j < 13) with `v = f(lon, lat)`, leaving out the points where `land(lon, lat)`.
fn lattice_csv(
    dir: &Path,
    name: &str,
    f: &dyn Fn(f64, f64) -> f64,
    land: &dyn Fn(f64, f64) -> bool,
) -> PathBuf {
    let mut text = String::from("lon,lat,v\n");
    for j in 0..13 {
        for i in 0..21 {
            let (lon, lat) = (4.0 + 0.1 * i as f64, 49.4 + 0.1 * j as f64);
            if !land(lon, lat) {
                text.push_str(&format!("{lon:.1},{lat:.1},{}\n", f(lon, lat)));
            }
        }
    }
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

#[test]
fn a_lattice_with_land_left_out_stays_bilinear_where_it_can() {
    // Requirement (sampling of ocean products that omit land points): the complete lattice
    // and the same lattice with "land" points deleted give identical values in every cell
    // whose four corners are present; the other cells get the coastal plane, which for a
    // plane v = a + b·lon + c·lat reproduces it exactly (bilinear is exact for such a field:
    // Press et al., Numerical Recipes, §3.6), so every cell matches the field to 1e-9.
    let dir = tempfile::tempdir().unwrap();
    let f = |lon: f64, lat: f64| 12.0 + 0.9 * lon - 2.1 * lat;
    // An island: 3 × 3 lattice points (5.1–5.3°E, 50.0–50.2°N) are land; cells over it have
    // no corner present and take the plane through the ring of points around it.
    let land = |lon: f64, lat: f64| (5.05..5.35).contains(&lon) && (49.95..50.25).contains(&lat);
    let full = lattice_csv(dir.path(), "full.csv", &f, &|_, _| false);
    let holes = lattice_csv(dir.path(), "holes.csv", &f, &land);
    let g = grid_laea();
    let cache = SourceCache::new();
    let a = sample(
        "full",
        &spec(full, Sampling::Interpolate, Some("v"), None),
        &g,
        &cache,
    )
    .unwrap();
    let b = sample(
        "sst_c/s/2030",
        &spec(holes, Sampling::Interpolate, Some("v"), None),
        &g,
        &cache,
    )
    .unwrap();
    let reports = cache.sampling_reports();
    let full_r = reports.iter().find(|r| r.layer == "full").unwrap();
    let r = reports.iter().find(|r| r.layer == "sst_c/s/2030").unwrap();
    assert_eq!(full_r.bilinear, g.len(), "{full_r:?}");
    assert_eq!(r.bilinear + r.coastal + r.nearest + r.missing, g.len());
    assert!(r.coastal > 0 && r.bilinear > 0, "{r:?}");
    assert_eq!(r.missing, 0);
    assert!(
        r.method
            .starts_with("bilinear on a lattice of step 0.1 × 0.1°"),
        "{}",
        r.method
    );
    let mut identical = 0;
    for (id, c) in g.cells.iter().enumerate() {
        let [lon, lat] = c.lonlat;
        assert!((b.values[id] - f(lon, lat)).abs() < 1e-9, "cell {id}");
        if a.values[id] == b.values[id] {
            identical += 1;
        }
    }
    // Every bilinear cell is bit-identical to the complete lattice's value.
    assert!(identical >= r.bilinear, "{identical} < {}", r.bilinear);
}

#[test]
fn points_off_one_lattice_fall_back_to_nearest_and_say_why() {
    // A lattice with one point moved off its line (5.0 → 5.04) is not one lattice: the layer
    // is sampled by nearest point and the report names an x coordinate off the lattice.
    let dir = tempfile::tempdir().unwrap();
    let path = lattice_csv(dir.path(), "off.csv", &|_, _| 1.0, &|_, _| false);
    let text = std::fs::read_to_string(&path)
        .unwrap()
        .replacen("5.0,49.4,", "5.04,49.4,", 1);
    std::fs::write(&path, text).unwrap();
    let g = grid_laea();
    let cache = SourceCache::new();
    sample(
        "off",
        &spec(path, Sampling::Interpolate, Some("v"), None),
        &g,
        &cache,
    )
    .unwrap();
    let r = &cache.sampling_reports()[0];
    assert_eq!(r.nearest, g.len(), "{r:?}");
    assert!(
        r.method.contains("not one regular lattice") && r.method.contains("x = "),
        "{}",
        r.method
    );
}

#[test]
fn a_projected_lattice_with_a_hole_is_bilinear_in_its_own_crs() {
    // An EPSG:3035 point grid of 500 m step (E 3 999 750 + 500·i, N 2 999 750 + 500·j), with
    // v = 2 + 0.003·(E − 4e6) − 0.001·(N − 3e6) (a plane in the file's CRS) and one point left
    // out. Every cell centre of a 1 km EPSG:3035 grid reproduces the plane: bilinear where the
    // four corners exist, the coastal plane next to the hole (Press et al., §3.6; a plane is
    // reproduced exactly by both rules). The PROJ round trip lonlat ↔ 3035 costs < 1 mm.
    let dir = tempfile::tempdir().unwrap();
    let f = |e: f64, n: f64| 2.0 + 0.003 * (e - 4.0e6) - 0.001 * (n - 3.0e6);
    let mut text = String::from("x,y,v\n");
    for j in 0..6 {
        for i in 0..10 {
            if (i, j) == (4, 2) {
                continue;
            }
            let (e, n) = (
                3_999_750.0 + 500.0 * i as f64,
                2_999_750.0 + 500.0 * j as f64,
            );
            text.push_str(&format!("{e},{n},{}\n", f(e, n)));
        }
    }
    let path = dir.path().join("proj.csv");
    std::fs::write(&path, text).unwrap();
    let g = grid_3035(4, 2);
    let cache = SourceCache::new();
    let layer = sample(
        "v",
        &spec(path, Sampling::Interpolate, Some("v"), Some("EPSG:3035")),
        &g,
        &cache,
    )
    .unwrap();
    for (id, c) in g.cells.iter().enumerate() {
        let want = f(c.centre[0], c.centre[1]);
        assert!(
            (layer.values[id] - want).abs() < 1e-5,
            "cell {id}: {} vs {want}",
            layer.values[id]
        );
    }
    let r = &cache.sampling_reports()[0];
    // By hand: cell centres are at E 4 000 500 + 1000·k, lattice lines at 3 999 750 + 500·i,
    // so a centre sits at lattice position 1.5 + 2k; the hole (i, j) = (4, 2) is a corner only
    // of the cell centred (4 001 500, 3 000 500) — at position (3.5, 1.5).
    assert_eq!(
        (r.bilinear, r.coastal, r.nearest, r.missing),
        (7, 1, 0, 0),
        "{r:?}"
    );
    assert!(r.method.contains("(file units)"), "{}", r.method);
}

#[test]
fn a_lattice_across_the_antimeridian_is_one_lattice() {
    // Points at 0.25° from 176°E to 176°W written in −180…180 longitudes (so the x values jump
    // from 180 to −179.75): still one lattice; a plane v = 2 + 0.5·(lon mod 360) − lat is
    // reproduced bilinearly in every cell of a grid centred on 180° (Press et al., §3.6).
    let dir = tempfile::tempdir().unwrap();
    let f = |lon: f64, lat: f64| 2.0 + 0.5 * lon.rem_euclid(360.0) - lat;
    let mut text = String::from("lon,lat,v\n");
    for j in 0..21 {
        for i in 0..33 {
            let lon = 176.0 + 0.25 * i as f64;
            let lon = if lon > 180.0 { lon - 360.0 } else { lon };
            let lat = -20.0 + 0.25 * j as f64;
            text.push_str(&format!("{lon},{lat},{}\n", f(lon, lat)));
        }
    }
    let path = dir.path().join("pacific.csv");
    std::fs::write(&path, text).unwrap();
    let g = Grid::full_rectangle(
        Crs::auto_laea(180.0, -17.5),
        10_000.0,
        [-150_000.0, -150_000.0],
        30,
        30,
    )
    .unwrap();
    let cache = SourceCache::new();
    let layer = sample(
        "v",
        &spec(path, Sampling::Interpolate, Some("v"), None),
        &g,
        &cache,
    )
    .unwrap();
    let r = &cache.sampling_reports()[0];
    assert_eq!(r.bilinear, g.len(), "{r:?}");
    for (id, c) in g.cells.iter().enumerate() {
        let want = f(c.lonlat[0], c.lonlat[1]);
        assert!(
            (layer.values[id] - want).abs() < 1e-9,
            "cell {id}: {} vs {want}",
            layer.values[id]
        );
    }
}

#[test]
fn a_short_csv_row_is_named_in_plain_words() {
    // A row with a value missing: the message says how many values the row and the header hold.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("short.csv");
    std::fs::write(&path, "lon,lat,v\n4.0,49.5,1\n4.5,49.5\n").unwrap();
    let e = sample(
        "v",
        &spec(path, Sampling::Interpolate, Some("v"), None),
        &grid_laea(),
        &SourceCache::new(),
    )
    .unwrap_err()
    .to_string();
    assert!(
        e.contains("short.csv: line 3: expected 3 fields, found 2"),
        "{e}"
    );
}

#[test]
fn csv_rows_at_one_point_are_kept_once_or_refused_naming_both_lines() {
    // The same point twice with the same values is one point (kept once, so the lattice of
    // four reads); with different values no rule can say which is meant, so both lines are
    // named.
    let dir = tempfile::tempdir().unwrap();
    let lattice = "lon,lat,v\n4.5,49.5,1\n5.5,49.5,2\n4.5,50.5,3\n5.5,50.5,4\n";
    let same = dir.path().join("same.csv");
    std::fs::write(&same, format!("{lattice}4.5,49.5,1\n")).unwrap();
    let diff = dir.path().join("diff.csv");
    std::fs::write(&diff, format!("{lattice}4.5,49.5,7\n")).unwrap();
    let read = |p: &Path, sampling| {
        sample(
            "v",
            &spec(p.to_path_buf(), sampling, Some("v"), None),
            &grid_laea(),
            &SourceCache::new(),
        )
    };
    // Bilinear at the lattice's centre, (5°E, 50°N) = the centre of cell 55: the mean of the
    // four corners, (1 + 2 + 3 + 4) / 4 = 2.5 (hand value).
    let layer = read(&same, Sampling::Interpolate).unwrap();
    assert!(
        (layer.values[55] - 2.5).abs() < 1e-9,
        "{}",
        layer.values[55]
    );
    let e = read(&diff, Sampling::Interpolate).unwrap_err().to_string();
    assert!(
        e.contains("diff.csv: line 6")
            && e.contains("also on line 2")
            && e.contains("`v` (1 there, 7 here)"),
        "{e}"
    );
    // A column named twice (case does not matter) is refused naming it and both positions.
    let twice = dir.path().join("twice.csv");
    std::fs::write(&twice, "lon,lat,v,V\n5.0,50.0,1,2\n").unwrap();
    let e = read(&twice, Sampling::Interpolate).unwrap_err().to_string();
    assert!(
        e.contains("twice.csv: line 1") && e.contains("`V` appears twice (columns 3 and 4)"),
        "{e}"
    );
}

#[test]
fn csv_bytes_that_are_not_utf8_name_line_and_column() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("latin1.csv");
    std::fs::write(
        &path,
        b"lon,lat,v\n4.0,49.5,1\n4.5,49.5,caf\xe9\n".as_slice(),
    )
    .unwrap();
    let e = sample(
        "v",
        &spec(path, Sampling::Interpolate, Some("v"), None),
        &grid_laea(),
        &SourceCache::new(),
    )
    .unwrap_err()
    .to_string();
    assert!(
        e.contains("latin1.csv: line 3, column `v`: not valid UTF-8"),
        "{e}"
    );
}

#[test]
fn geojson_with_a_byte_order_mark_reads_and_a_folder_says_so() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bom.geojson");
    let body = r#"{"type":"Polygon","coordinates":[[[4,49],[5,49],[5,50],[4,50],[4,49]]]}"#;
    std::fs::write(&path, format!("\u{feff}{body}")).unwrap();
    let mp = read_multipolygon(&path, false).unwrap();
    assert_eq!(mp.0.len(), 1);
    let folder = dir.path().join("folder.geojson");
    std::fs::create_dir(&folder).unwrap();
    let e = read_multipolygon(&folder, false).unwrap_err().to_string();
    assert!(
        e.contains("folder.geojson") && e.contains("is a directory"),
        "{e}"
    );
}

#[test]
fn invalid_polygons_are_listed_with_feature_part_and_place_or_repaired_when_asked() {
    // Feature 0 is valid; feature 1 a bow-tie whose diagonals cross at (4.5, 49.5); feature 2
    // a square with a hole outside it. Repair (even-odd rule) turns the bow-tie into two
    // triangles of a quarter of the square each (hand area: 2 × ¼ × 1 × 1 = 0.5 deg²) and the
    // stray hole into an island of its own.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bad.geojson");
    std::fs::write(
        &path,
        r#"{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,1],[0,0]]]}},
{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[[[4,49],[5,50],[5,49],[4,50],[4,49]]]}},
{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[[[10,10],[11,10],[11,11],[10,11],[10,10]],[[20,20],[21,20],[21,21],[20,21],[20,20]]]}}
]}"#,
    )
    .unwrap();
    let e = read_multipolygon(&path, false).unwrap_err().to_string();
    assert!(e.contains("bad.geojson: 2 invalid polygons"), "{e}");
    assert!(
        e.contains(
            "feature 1, part 0: the exterior ring crosses or touches itself, at lon 4.5, lat 49.5"
        ),
        "{e}"
    );
    assert!(
        e.contains("feature 2, part 0: hole 0 is not inside the exterior ring, at lon 20, lat 20"),
        "{e}"
    );
    assert!(e.contains("repair_polygons = true"), "{e}");
    let repaired = read_multipolygon(&path, true).unwrap();
    use geo::{Area, Validation};
    assert!(repaired.is_valid(), "geo's validation accepts the repair");
    // Areas in square degrees (planar): 1 (feature 0) + 0.5 (bow-tie) + 1 + 1 (square and the
    // hole made an island).
    assert!(
        (repaired.unsigned_area() - 3.5).abs() < 1e-9,
        "{}",
        repaired.unsigned_area()
    );
}
