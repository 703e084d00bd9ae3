//! Export stage, checked from outside: GeoJSON re-read by the `geojson` crate, areas
//! re-measured with geographiclib (Karney 2013 geodesic polygon area), polygons validated by
//! shapely/GEOS through tests/py/check_geojson.py, CSV re-read by the csv crate.

use driftplan::assess::{assess, Assessment};
use driftplan::export::{
    cells_csv, cells_geojson, coverage_csv, network_geojson, write_atomic, write_outputs,
};
use driftplan::features::{Feature, FeatureKind, FeatureTable, Target};
use driftplan::grid::{Crs, Grid};
use driftplan::layers::Layer;
use geo::polygon;
use geographiclib_rs::{Geodesic, PolygonArea, Winding};
use geojson::{GeoJson, GeometryValue};
use std::path::Path;
use std::str::FromStr;

/// 10 km cells, 10×10, centred on a Lambert azimuthal equal-area projection at 10°E 55°N.
fn grid() -> Grid {
    let crs = Crs::auto_laea(10.0, 55.0);
    Grid::full_rectangle(crs, 10_000.0, [-50_000.0, -50_000.0], 10, 10).unwrap()
}

fn id(col: u32, row: u32) -> u32 {
    row * 10 + col
}

/// A network with four reserves:
/// - A: ring of 8 cells (cols 1–3, rows 1–3) around the unchosen cell (2,2): one hole;
/// - B: cols 6–8, rows 6–8 without (7,7) and (8,8): a hole touching the exterior at a corner;
/// - C: (5,0) clipped to its south-east half triangle + full (6,0): a coastal reserve;
/// - D: (4,4), touching A only at a corner: a separate reserve.
fn network(g: &mut Grid) -> Vec<bool> {
    let mut sel = vec![false; g.len()];
    for r in 1..=3 {
        for c in 1..=3 {
            if (c, r) != (2, 2) {
                sel[id(c, r) as usize] = true;
            }
        }
    }
    for (c, r) in [(6, 6), (7, 6), (8, 6), (6, 7), (8, 7), (6, 8), (7, 8)] {
        sel[id(c, r) as usize] = true;
    }
    sel[id(5, 0) as usize] = true;
    sel[id(6, 0) as usize] = true;
    sel[id(4, 4) as usize] = true;
    // Clip (5,0) to the triangle below its SW–NE diagonal: half the cell, 50 km².
    let sq = g.cell_square(id(5, 0));
    let (a, b) = (sq.min(), sq.max());
    let c = &mut g.cells[id(5, 0) as usize];
    c.clipped = Some(geo::MultiPolygon(vec![polygon![
        (x: a.x, y: a.y), (x: b.x, y: a.y), (x: b.x, y: b.y), (x: a.x, y: a.y)
    ]]));
    c.sea_area_km2 = 50.0;
    g.sea_area_km2 -= 50.0;
    sel
}

fn features() -> FeatureTable {
    FeatureTable {
        scenarios: vec!["ssp2-4.5".into()],
        years: vec![2050],
        features: vec![Feature {
            name: "habitat/silver-bream/ssp2-4.5/2050".into(),
            kind: FeatureKind::Habitat,
            species: Some("silver-bream".into()),
            scenario: Some(0),
            year: Some(2050),
            unit: "km2".into(),
            amounts: vec![(id(1, 1), 40.0), (id(2, 2), 100.0), (id(9, 9), 60.0)],
            total: 200.0,
            target: Target::Share(0.3),
            weight: 1.0,
        }],
    }
}

fn setup() -> (Grid, Vec<bool>, Assessment) {
    let mut g = grid();
    let sel = network(&mut g);
    let cost: Vec<f64> = (0..g.len()).map(|i| 1.0 + i as f64 / 100.0).collect();
    let a = assess(&g, &features(), &cost, &sel);
    (g, sel, a)
}

fn positions(ring: &[geojson::Position]) -> Vec<[f64; 2]> {
    ring.iter().map(|p| [p[0], p[1]]).collect()
}

fn signed_area(r: &[[f64; 2]]) -> f64 {
    r.windows(2)
        .map(|w| w[0][0] * w[1][1] - w[1][0] * w[0][1])
        .sum::<f64>()
        / 2.0
}

/// Geodesic area of a ring in km² (geographiclib-rs, WGS84; Karney 2013), always positive.
fn geodesic_area_km2(r: &[[f64; 2]]) -> f64 {
    let g = Geodesic::wgs84();
    let mut pa = PolygonArea::new(&g, Winding::CounterClockwise);
    for p in &r[..r.len() - 1] {
        pa.add_point(p[1], p[0]);
    }
    // Signed, so a clockwise hole gives minus its area rather than the rest of the globe.
    let (_perimeter, area, _n) = pa.compute(true);
    area.abs() / 1e6
}

fn polygons(v: &GeometryValue) -> Vec<Vec<Vec<[f64; 2]>>> {
    match v {
        GeometryValue::Polygon { coordinates } => {
            vec![coordinates.iter().map(|r| positions(r)).collect()]
        }
        GeometryValue::MultiPolygon { coordinates } => coordinates
            .iter()
            .map(|p| p.iter().map(|r| positions(r)).collect())
            .collect(),
        other => panic!(
            "geometry is {}, expected Polygon or MultiPolygon",
            other.type_name()
        ),
    }
}

/// Checks RFC 7946 rules on every polygon of a FeatureCollection text and returns, per feature,
/// (properties, geodesic area km², number of holes).
fn check_rfc7946(text: &str) -> Vec<(geojson::JsonObject, f64, usize)> {
    let gj = GeoJson::from_str(text).expect("the geojson crate parses the output");
    let GeoJson::FeatureCollection(fc) = gj else {
        panic!("not a FeatureCollection")
    };
    // RFC 7946 §4: no `crs` member.
    assert!(fc
        .foreign_members
        .as_ref()
        .is_none_or(|m| !m.contains_key("crs")));
    let mut out = Vec::new();
    for f in &fc.features {
        let geom = f.geometry.as_ref().expect("every feature has a geometry");
        let mut area = 0.0;
        let mut holes = 0;
        for poly in polygons(&geom.value) {
            for (k, ring) in poly.iter().enumerate() {
                // §3.1.6: closed linear rings of at least four positions.
                assert!(ring.len() >= 4);
                assert_eq!(ring.first(), ring.last());
                // No repeated consecutive positions after rounding.
                assert!(ring.windows(2).all(|w| w[0] != w[1]));
                for p in ring {
                    for x in p {
                        // At most 6 decimals: the shortest round-trip text has ≤ 6 after the point.
                        let s = x.to_string();
                        let dec = s.split('.').nth(1).map_or(0, str::len);
                        assert!(dec <= 6, "{s} has more than 6 decimals");
                    }
                    assert!((-180.0..=180.0).contains(&p[0]) && (-90.0..=90.0).contains(&p[1]));
                }
                // §3.1.6: exterior counter-clockwise, holes clockwise (signed planar area).
                let a = signed_area(ring);
                if k == 0 {
                    assert!(a > 0.0, "exterior ring is clockwise");
                    area += geodesic_area_km2(ring);
                } else {
                    assert!(a < 0.0, "hole is counter-clockwise");
                    area -= geodesic_area_km2(ring);
                    holes += 1;
                }
            }
        }
        out.push((f.properties.clone().unwrap_or_default(), area, holes));
    }
    out
}

#[test]
fn network_geojson_is_rfc7946_and_keeps_area() {
    let (g, _sel, a) = setup();
    // Hand: A 8 cells 800 km², B 7 cells 700 km², C 50 + 100 = 150 km², D 100 km².
    let areas: Vec<f64> = a.reserves.iter().map(|r| r.area_km2).collect();
    assert_eq!(areas, vec![800.0, 700.0, 150.0, 100.0]);
    let text = network_geojson(&g, &a).unwrap();
    let feats = check_rfc7946(&text);
    assert_eq!(feats.len(), 4);
    for (k, (props, geodesic, holes)) in feats.iter().enumerate() {
        let r = &a.reserves[k];
        assert_eq!(props["reserve"], k + 1);
        assert_eq!(props["cells"], r.cells.len());
        assert_eq!(props["area_km2"].as_f64().unwrap(), r.area_km2);
        assert!((props["cost"].as_f64().unwrap() - r.cost).abs() < 1e-9);
        // The grid CRS is equal-area, so the lon/lat outline must enclose the same area as the
        // sum of the cells' sea areas. Tolerance 1e-4 relative: rounding to 1e-6° (≈ 0.1 m)
        // along up to 160 km of outline moves the area by at most ~1.6e-2 km², ≤ 1e-4 of
        // 100 km²; densified edges (2.5 km) stay within millimetres of the projected lines.
        let rel = (geodesic - r.area_km2).abs() / r.area_km2;
        assert!(
            rel < 1e-4,
            "reserve {}: geodesic {geodesic} km² vs {} km²",
            k + 1,
            r.area_km2
        );
        // A and B have one hole each (the unchosen centre cell / (7,7)); C and D none.
        assert_eq!(*holes, [1, 1, 0, 0][k], "reserve {}", k + 1);
    }
    // The decision-support note rides along as a foreign member (RFC 7946 §6.1).
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    assert!(v["driftplan"]["caution"]
        .as_str()
        .unwrap()
        .starts_with("Decision support only"));
}

#[test]
fn network_across_the_antimeridian_is_split() {
    // A 4×2 grid of 10 km cells centred on 180°E at 10°S: the reserve straddles the antimeridian.
    let g = Grid::full_rectangle(
        Crs::auto_laea(180.0, -10.0),
        10_000.0,
        [-20_000.0, 0.0],
        4,
        2,
    )
    .unwrap();
    let sel = vec![true; 8];
    let a = assess(&g, &FeatureTable::default(), &[1.0; 8], &sel);
    let text = network_geojson(&g, &a).unwrap();
    let feats = check_rfc7946(&text);
    let gj = GeoJson::from_str(&text).unwrap();
    let GeoJson::FeatureCollection(fc) = gj else {
        unreachable!()
    };
    let parts = polygons(&fc.features[0].geometry.as_ref().unwrap().value);
    // RFC 7946 §3.1.9: cut into an eastern and a western part.
    assert_eq!(parts.len(), 2);
    // Geodesic area of the parts adds up to 8 cells × 100 km² (same tolerance reasoning).
    assert!((feats[0].1 - 800.0).abs() / 800.0 < 1e-4, "{}", feats[0].1);
}

#[test]
fn python_shapely_agrees() {
    let (g, sel, a) = setup();
    let tmp = tempfile::tempdir().unwrap();
    let net = tmp.path().join("network.geojson");
    let cells = tmp.path().join("cells.geojson");
    write_atomic(&net, network_geojson(&g, &a).unwrap().as_bytes()).unwrap();
    let layers = vec![Layer {
        name: "cost".into(),
        values: vec![1.0; g.len()],
    }];
    write_atomic(
        &cells,
        cells_geojson(&g, &layers, &features(), &sel, None)
            .unwrap()
            .as_bytes(),
    )
    .unwrap();
    let required = std::env::var("DRIFTPLAN_REQUIRE_PYTHON").as_deref() == Ok("1");
    let has_shapely = std::process::Command::new("python3")
        .args(["-c", "import shapely"])
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false);
    if !has_shapely {
        assert!(
            !required,
            "DRIFTPLAN_REQUIRE_PYTHON=1 but `python3 -c 'import shapely'` fails"
        );
        eprintln!(
            "skipping shapely check: python3 with shapely not available (pip install shapely)"
        );
        return;
    }
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/py/check_geojson.py");
    for (file, n_features, n_holes) in [(&net, 4, 2), (&cells, g.len(), 0)] {
        let out = std::process::Command::new("python3")
            .arg(&script)
            .arg(file)
            .output()
            .unwrap();
        let report: serde_json::Value = serde_json::from_slice(&out.stdout)
            .unwrap_or_else(|e| panic!("{e}: {}", String::from_utf8_lossy(&out.stderr)));
        assert!(out.status.success(), "shapely found problems: {report}");
        assert_eq!(report["problems"].as_array().unwrap().len(), 0);
        assert_eq!(report["features"], n_features);
        assert_eq!(report["holes"], n_holes);
    }
}

#[test]
fn cells_outputs_carry_every_column() {
    let (g, sel, _a) = setup();
    let layers = vec![
        Layer {
            name: "Cost (EUR)".into(),
            values: (0..g.len()).map(|i| i as f64).collect(),
        },
        Layer {
            name: "sst".into(),
            values: vec![f64::NAN; g.len()],
        },
    ];
    let text = cells_geojson(&g, &layers, &features(), &sel, None).unwrap();
    let feats = check_rfc7946(&text);
    assert_eq!(feats.len(), g.len());
    let name = "habitat_silver_bream_ssp2_4_5_2050_km2";
    for (i, (props, geodesic, _)) in feats.iter().enumerate() {
        assert_eq!(props["cell"], i);
        assert_eq!(props["selected"], sel[i]);
        assert_eq!(props["cost_eur"], i as f64);
        assert!(props["sst"].is_null(), "NaN is written as null");
        let want = match i as u32 {
            x if x == id(1, 1) => 40.0,
            x if x == id(2, 2) => 100.0,
            x if x == id(9, 9) => 60.0,
            _ => 0.0,
        };
        assert_eq!(props[name].as_f64().unwrap(), want);
        // Each cell polygon encloses its sea area (geodesic check, tolerance as above).
        let area = props["area_km2"].as_f64().unwrap();
        assert!(
            (geodesic - area).abs() / area < 1e-4,
            "cell {i}: {geodesic} vs {area}"
        );
    }
    // CSV: same values, re-read by the csv crate, plus centroid lon/lat.
    let csv_text = cells_csv(&g, &layers, &features(), &sel, None).unwrap();
    let mut rd = csv::Reader::from_reader(csv_text.as_bytes());
    let header: Vec<String> = rd.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(
        header,
        ["cell", "lon", "lat", "area_km2", "selected", "cost_eur", "sst", name]
    );
    let rows: Vec<csv::StringRecord> = rd.records().map(Result::unwrap).collect();
    assert_eq!(rows.len(), g.len());
    let r = &rows[id(2, 2) as usize];
    assert_eq!(&r[0], id(2, 2).to_string());
    let lon: f64 = r[1].parse().unwrap();
    assert!((lon - g.cells[id(2, 2) as usize].lonlat[0]).abs() <= 5e-7);
    assert_eq!(&r[4], "false");
    assert_eq!(&r[6], "", "NaN is an empty field");
    assert_eq!(r[7].parse::<f64>().unwrap(), 100.0);
}

#[test]
fn length_mismatch_is_an_error_not_a_panic() {
    let g = grid();
    let layers = vec![Layer {
        name: "cost".into(),
        values: vec![1.0; 3],
    }];
    let err = cells_geojson(
        &g,
        &layers,
        &FeatureTable::default(),
        &vec![false; g.len()],
        None,
    )
    .unwrap_err();
    assert!(
        err.to_string()
            .contains("layer `cost` has 3 values but the grid has 100 cells"),
        "{err}"
    );
}

#[test]
fn coverage_csv_round_trips() {
    let (_g, _sel, a) = setup();
    let text = coverage_csv(&a);
    let mut rd = csv::Reader::from_reader(text.as_bytes());
    assert_eq!(
        rd.headers().unwrap(),
        vec![
            "feature",
            "kind",
            "species",
            "scenario",
            "year",
            "total",
            "protected",
            "target",
            "shortfall",
            "reached",
            "absent"
        ]
    );
    let rows: Vec<csv::StringRecord> = rd.records().map(Result::unwrap).collect();
    assert_eq!(rows.len(), a.coverage.len());
    for (row, c) in rows.iter().zip(&a.coverage) {
        assert_eq!(&row[0], c.feature);
        assert_eq!(&row[1], c.kind);
        assert_eq!(&row[2], c.species.as_deref().unwrap_or(""));
        assert_eq!(&row[3], c.scenario.as_deref().unwrap_or(""));
        assert_eq!(row[4].parse::<i32>().ok(), c.year);
        assert_eq!(row[5].parse::<f64>().unwrap(), c.total);
        assert_eq!(row[6].parse::<f64>().unwrap(), c.protected);
        assert_eq!(row[7].parse::<f64>().unwrap(), c.target);
        assert_eq!(row[8].parse::<f64>().unwrap(), c.shortfall);
        assert_eq!(row[9].parse::<bool>().unwrap(), c.reached);
        assert_eq!(row[10].parse::<bool>().unwrap(), c.absent);
    }
    // Hand: protected 40 (cell (1,1) is in reserve A; (2,2) is its hole) of 200, target 0.3·200 = 60.
    assert_eq!(a.coverage[0].protected, 40.0);
    assert_eq!(a.coverage[0].shortfall, 20.0);
}

#[test]
fn write_atomic_leaves_nothing_behind() {
    let tmp = tempfile::tempdir().unwrap();
    let list = |p: &Path| {
        let mut v: Vec<String> = std::fs::read_dir(p)
            .unwrap()
            .map(|e| e.unwrap().file_name().into_string().unwrap())
            .collect();
        v.sort();
        v
    };
    let target = tmp.path().join("summary.json");
    write_atomic(&target, b"{}\n").unwrap();
    assert_eq!(list(tmp.path()), ["summary.json"]);
    // Failing write: the folder does not exist; nothing may be created anywhere.
    let missing = tmp.path().join("gone/summary.json");
    let err = write_atomic(&missing, b"{}").unwrap_err();
    assert!(err.to_string().contains("gone"), "{err}");
    assert!(!missing.exists());
    assert_eq!(list(tmp.path()), ["summary.json"]);
    // write_outputs creates the folder first.
    write_outputs(&tmp.path().join("out"), &[("coverage.csv", "a\n".into())]).unwrap();
    assert_eq!(list(&tmp.path().join("out")), ["coverage.csv"]);
}

/// Scale check, run by hand (`cargo test --test export -- --ignored`): a 400×400 grid with
/// 100 000 chosen cells (every cell except a regular pattern of unchosen ones).
#[test]
#[ignore]
fn large_network_dissolves() {
    let g = Grid::full_rectangle(
        Crs::auto_laea(10.0, 55.0),
        1_000.0,
        [-200_000.0, -200_000.0],
        400,
        400,
    )
    .unwrap();
    // Choose cells in rows 0–249 (100 000 cells) except every 7th column on rows ≡ 3 (mod 5):
    // the unchosen ones are holes.
    let sel: Vec<bool> = (0..g.len())
        .map(|i| {
            let (c, r) = (i % 400, i / 400);
            r < 250 && !(r % 5 == 3 && c % 7 == 3)
        })
        .collect();
    let t = std::time::Instant::now();
    let a = assess(&g, &FeatureTable::default(), &vec![1.0; g.len()], &sel);
    let text = network_geojson(&g, &a).unwrap();
    eprintln!(
        "{} cells, {} reserves, {:.2} s, {} bytes",
        a.cells_selected,
        a.reserves.len(),
        t.elapsed().as_secs_f64(),
        text.len()
    );
    let feats = check_rfc7946(&text);
    let total: f64 = feats.iter().map(|f| f.1).sum();
    // Hand: 1 km² cells; geodesic total within the 1e-4 tolerance reasoned above.
    assert!((total - a.cells_selected as f64).abs() / total < 1e-4);
}

#[test]
fn cell_rows_join_to_their_reserves() {
    // Each cell row carries the 1-based `reserve` of network.geojson it lies in (null / empty
    // outside the network). Check by joining: per reserve, the cells carrying its number are
    // exactly `network.geojson`'s `cells` count, and a cell has a number iff it is selected.
    let (g, sel, a) = setup();
    let reserves = driftplan::assess::reserve_of_cells(&a, g.len());
    let net: serde_json::Value = serde_json::from_str(&network_geojson(&g, &a).unwrap()).unwrap();
    let want: Vec<(u64, u64)> = net["features"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            (
                f["properties"]["reserve"].as_u64().unwrap(),
                f["properties"]["cells"].as_u64().unwrap(),
            )
        })
        .collect();
    assert!(want.len() >= 2, "the fixture has several reserves");
    let text = cells_geojson(&g, &[], &FeatureTable::default(), &sel, Some(&reserves)).unwrap();
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    let mut counts = std::collections::BTreeMap::new();
    for f in v["features"].as_array().unwrap() {
        let p = &f["properties"];
        let cell = p["cell"].as_u64().unwrap() as usize;
        match p["reserve"].as_u64() {
            Some(k) => {
                assert!(sel[cell]);
                *counts.entry(k).or_insert(0u64) += 1;
            }
            None => assert!(!sel[cell] && p["reserve"].is_null()),
        }
    }
    assert_eq!(counts.into_iter().collect::<Vec<_>>(), want);
    let csv_text = cells_csv(&g, &[], &FeatureTable::default(), &sel, Some(&reserves)).unwrap();
    let mut rd = csv::Reader::from_reader(csv_text.as_bytes());
    assert_eq!(&rd.headers().unwrap()[5], "reserve");
    for (cell, r) in rd.records().map(Result::unwrap).enumerate() {
        assert_eq!(r[5].is_empty(), !sel[cell]);
    }
}
