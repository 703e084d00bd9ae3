//! Public-API tests of the grid stage against outside references: the EPSG worked example,
//! the closed-form ellipsoidal box area, geodesic polygon areas (geographiclib) and a
//! brute-force clip of every lattice square.

use driftplan::grid::{
    build_grid, lonlat_box_area_km2, Crs, CrsChoice, Grid, GridError, GridSpec, Projector,
    DENSIFY_DEG,
};
use geo::{Area, BooleanOps, Coord, Line, LineString, MultiLineString, MultiPolygon, Polygon};
use geographiclib_rs::{Geodesic, PolygonArea, Winding};

/// A lon/lat box as a counter-clockwise polygon (degrees).
fn lonlat_box(lon0: f64, lat0: f64, lon1: f64, lat1: f64) -> Polygon<f64> {
    Polygon::new(
        LineString::from(vec![
            (lon0, lat0),
            (lon1, lat0),
            (lon1, lat1),
            (lon0, lat1),
            (lon0, lat0),
        ]),
        Vec::new(),
    )
}

fn spec(cell_size_km: f64, min_sea_share: f64) -> GridSpec {
    GridSpec {
        cell_size_km,
        crs: CrsChoice::Auto,
        min_sea_share,
    }
}

// EPSG Guidance Note 7-2 (IOGP), Lambert azimuthal equal-area (method 9820) worked example
// for EPSG:3035: 50°N 5°E → E 3 962 799.45 m, N 2 999 718.85 m. Checked to the centimetre
// (the example's printed precision); the inverse to 1e-7° (≈1 cm).
#[test]
fn epsg_guidance_note_laea_example() {
    let p = Projector::new(&Crs {
        definition: "EPSG:3035".into(),
    })
    .unwrap();
    let [e, n] = p.to_xy(5.0, 50.0).unwrap();
    assert!((e - 3_962_799.45).abs() < 0.01, "easting {e}");
    assert!((n - 2_999_718.85).abs() < 0.01, "northing {n}");
    let [lon, lat] = p.to_lonlat(3_962_799.45, 2_999_718.85).unwrap();
    assert!(
        (lon - 5.0).abs() < 1e-7 && (lat - 50.0).abs() < 1e-7,
        "({lon}, {lat})"
    );
}

// Closed-form WGS84 box areas from /work/shared/CHECK-VALUES.md (A = (b²/2)·Δλ·[q(φ₂) − q(φ₁)],
// confirmed there by two methods): 1°×1° at 0–1° 12 308.4639, 45–46° 8 686.4950,
// 60–61° 6 123.1409 km²; 0.25° box 45–45.25°N 546.4688 km² (our closed form must match these
// to their printed 1e-4 km²). Our path: densify the lon/lat box, project with the auto LAEA
// centred on it, planar area. LAEA is equal-area, so only the chords between densified points
// differ from the projected curves, an error that falls with the step squared: at 0.001°
// steps it is ~5e-11 of the area (tolerance 1e-9); at the builder's DENSIFY_DEG (0.05°) it is
// ~1.4e-7 (tolerance 1e-6, the bound DENSIFY_DEG documents).
#[test]
fn projected_box_area_matches_closed_form() {
    let cases = [
        (0.0, 0.0, 1.0, 1.0, 12_308.463_9),
        (0.0, 45.0, 1.0, 46.0, 8_686.495_0),
        (0.0, 60.0, 1.0, 61.0, 6_123.140_9),
        (0.0, 45.0, 0.25, 45.25, 546.4688),
    ];
    for (lon0, lat0, lon1, lat1, want) in cases {
        let closed = lonlat_box_area_km2(lon0, lat0, lon1, lat1);
        assert!(
            (closed - want).abs() < 1e-4,
            "closed form {closed} vs {want}"
        );
        let crs = Crs::auto_laea(0.5 * (lon0 + lon1), 0.5 * (lat0 + lat1));
        let p = Projector::new(&crs).unwrap();
        let bx = MultiPolygon(vec![lonlat_box(lon0, lat0, lon1, lat1)]);
        let fine = p.polygon_to_xy(&bx, 0.001).unwrap().unsigned_area() / 1e6;
        assert!(
            ((fine - closed) / closed).abs() < 1e-9,
            "{lat0}°: {fine} vs {closed}"
        );
        let coarse = p.polygon_to_xy(&bx, DENSIFY_DEG).unwrap().unsigned_area() / 1e6;
        assert!(
            ((coarse - closed) / closed).abs() < 1e-6,
            "{lat0}° at DENSIFY_DEG: {coarse} vs {closed}"
        );
    }
}

// 5 km projected cells, near the LAEA centre and ~1100 km from it, unprojected to lon/lat
// with edges densified every 50 m, against the geodesic polygon area of geographiclib-rs
// (Karney's algorithm, an independent reference library). The projected square has straight
// edges in the plane; geographiclib joins the unprojected points by geodesics. Undensified
// (corners only) the two differ by ~1e-7 of the area; between 50 m points the curves part by
// far less than a millimetre and the difference falls to ~3e-10 (measured). Tolerance 1e-8
// relative (0.25 m² of 25 km²) leaves room for PROJ's inverse series.
#[test]
fn projected_cells_have_their_geodesic_area() {
    let geod = Geodesic::wgs84();
    let crs = Crs::auto_laea(20.0, 60.0);
    let p = Projector::new(&crs).unwrap();
    for origin in [
        [-5_000.0, -5_000.0],
        [800_000.0, 750_000.0],
        [-900_000.0, -600_000.0],
    ] {
        let g = Grid::full_rectangle(crs.clone(), 5_000.0, origin, 2, 2).unwrap();
        for id in 0..g.len() as u32 {
            let ll = g.cell_polygon_lonlat(id, &p, 50.0).unwrap();
            let ring = ll.0[0].exterior();
            let mut pa = PolygonArea::new(&geod, Winding::CounterClockwise);
            for c in &ring.0[..ring.0.len() - 1] {
                pa.add_point(c.y, c.x);
            }
            let (_, area_m2, _) = pa.compute(true);
            let km2 = area_m2 / 1e6;
            assert!(
                ((km2 - 25.0) / 25.0).abs() < 1e-8,
                "cell {id} at {origin:?}: {km2} km²"
            );
            assert_eq!(g.cells[id as usize].sea_area_km2, 25.0);
        }
    }
}

/// Checks every lattice square of a built grid against a brute-force intersection of the
/// square with the sea (geo's boolean ops on the whole sea, the slow way), and every rook
/// pair's shared edge against the common lattice segment clipped by the sea.
fn check_against_brute_force(
    g: &Grid,
    region: &MultiPolygon<f64>,
    land: Option<&MultiPolygon<f64>>,
    share: f64,
) {
    let p = g.projector().unwrap();
    let region_xy = p.polygon_to_xy(region, DENSIFY_DEG).unwrap();
    let sea = match land {
        Some(l) => region_xy.difference(&p.polygon_to_xy(l, DENSIFY_DEG).unwrap()),
        None => region_xy,
    };
    let s = g.cell_size_m;
    let full = s * s;
    // Tolerance: both sides come from overlays that snap to ~1e-9 of their extent; 1e-6 of
    // a cell is far above that and far below anything a planner would see.
    let tol = 1e-6 * full;
    let mut brute_total = 0.0;
    for row in 0..g.n_rows {
        for col in 0..g.n_cols {
            let x0 = g.origin[0] + col as f64 * s;
            let y0 = g.origin[1] + row as f64 * s;
            let sq = geo::Rect::new((x0, y0), (x0 + s, y0 + s)).to_polygon();
            let brute = sq.intersection(&sea).unsigned_area();
            match g.cell_at(col, row) {
                Some(id) => {
                    let cell = &g.cells[id as usize];
                    assert!(
                        (cell.sea_area_km2 * 1e6 - brute).abs() < tol,
                        "({col},{row}): {} vs {brute}",
                        cell.sea_area_km2 * 1e6
                    );
                    assert!(
                        brute >= share * full - tol,
                        "({col},{row}) kept below the share"
                    );
                    let poly = g.cell_polygon(id).unsigned_area();
                    assert!((poly - brute).abs() < tol);
                    assert_eq!(
                        cell.clipped.is_none(),
                        (brute - full).abs() < tol,
                        "({col},{row}) full flag"
                    );
                    brute_total += brute;
                }
                None => assert!(
                    brute < share.max(1e-9) * full + tol,
                    "({col},{row}) dropped with {brute} m²"
                ),
            }
        }
    }
    assert!((g.sea_area_km2 * 1e6 - brute_total).abs() < tol * g.len() as f64);

    // Shared edges: common lattice segment of each rook pair, clipped by the sea.
    let mut pairs = 0;
    for (id, list) in g.neighbours.iter().enumerate() {
        let ids: Vec<u32> = list.iter().map(|n| n.cell).collect();
        let mut sorted = ids.clone();
        sorted.sort();
        assert_eq!(ids, sorted, "neighbours of {id} sorted by id");
        let c = &g.cells[id];
        for (dc, dr) in [(1u32, 0u32), (0, 1)] {
            let Some(other) = g.cell_at(c.col + dc, c.row + dr) else {
                continue;
            };
            let x = g.origin[0] + (c.col + dc) as f64 * s;
            let y = g.origin[1] + (c.row + dr) as f64 * s;
            let seg = if dc == 1 {
                Line::new(
                    Coord {
                        x,
                        y: g.origin[1] + c.row as f64 * s,
                    },
                    Coord { x, y: y + s },
                )
            } else {
                Line::new(
                    Coord {
                        x: g.origin[0] + c.col as f64 * s,
                        y,
                    },
                    Coord { x: x + s, y },
                )
            };
            let inside = sea.clip(&MultiLineString(vec![LineString::from(seg)]), false);
            let brute_m: f64 = inside
                .0
                .iter()
                .flat_map(|ls| ls.lines())
                .map(|l| (l.dx()).hypot(l.dy()))
                .sum();
            let got = list
                .iter()
                .find(|n| n.cell == other)
                .map(|n| n.shared_km * 1000.0)
                .unwrap_or(0.0);
            assert!(
                (got - brute_m).abs() < 1e-5 * s,
                "pair {id}-{other}: {got} m vs {brute_m} m"
            );
            let back = g.neighbours[other as usize]
                .iter()
                .find(|n| n.cell == id as u32)
                .map(|n| n.shared_km * 1000.0);
            assert_eq!(back.unwrap_or(0.0), got, "symmetric");
            pairs += 1;
        }
    }
    assert!(pairs > 0);
}

/// Sea area of a lon/lat box with a box of land inside it, from the closed form. Units: km².
fn box_minus_box(outer: [f64; 4], hole: [f64; 4]) -> f64 {
    lonlat_box_area_km2(outer[0], outer[1], outer[2], outer[3])
        - lonlat_box_area_km2(hole[0], hole[1], hole[2], hole[3])
}

// Hand-made region: lon 10–12°E, lat 54–55.5°N with a square land hole 10.8–11.2°E,
// 54.6–55.0°N. Total sea against the closed-form ellipsoidal areas (tolerance 1e-6 relative:
// the DENSIFY_DEG chord error checked above); cells and shared edges against brute force.
#[test]
fn rectangle_with_land_hole() {
    let (outer, hole) = ([10.0, 54.0, 12.0, 55.5], [10.8, 54.6, 11.2, 55.0]);
    let region = MultiPolygon(vec![lonlat_box(outer[0], outer[1], outer[2], outer[3])]);
    let land = MultiPolygon(vec![lonlat_box(hole[0], hole[1], hole[2], hole[3])]);
    let g = build_grid(&spec(10.0, 0.0), &region, Some(&land)).unwrap();
    let want = box_minus_box(outer, hole);
    assert!(
        ((g.sea_area_km2 - want) / want).abs() < 1e-6,
        "{} vs {want}",
        g.sea_area_km2
    );
    let sum: f64 = g.cells.iter().map(|c| c.sea_area_km2).sum();
    assert_eq!(sum, g.sea_area_km2);
    // Cells are ordered by row, then column, and the lattice points back at them.
    assert!(g
        .cells
        .windows(2)
        .all(|w| (w[0].row, w[0].col) < (w[1].row, w[1].col)));
    for (id, c) in g.cells.iter().enumerate() {
        assert_eq!(g.cell_at(c.col, c.row), Some(id as u32));
    }
    check_against_brute_force(&g, &region, Some(&land), 0.0);

    // A full interior cell (10.4°E 54.3°N is ≥ 20 km from every edge): four neighbours,
    // each sharing a whole 10 km side (hand computation), no boundary edge.
    let p = g.projector().unwrap();
    let id = g.locate(p.to_xy(10.4, 54.3).unwrap()).unwrap();
    let c = &g.cells[id as usize];
    assert!(c.clipped.is_none());
    assert_eq!((c.sea_area_km2, c.perimeter_km), (100.0, 40.0));
    assert_eq!(g.neighbours[id as usize].len(), 4);
    assert!(g.neighbours[id as usize]
        .iter()
        .all(|n| n.shared_km == 10.0));
    assert_eq!(g.boundary_km(id), 0.0);
    assert!((c.lonlat[0] - 10.4).abs() < 0.1 && (c.lonlat[1] - 54.3).abs() < 0.1);

    // A cell holding land: its sea polygon has a real edge along the coast, so its boundary
    // is positive; clipped cells' areas plus full cells' add up to the sea (checked above).
    let land_id = g.locate(p.to_xy(10.8, 54.8).unwrap()).unwrap();
    assert!(g.cells[land_id as usize].clipped.is_some());
    assert!(g.boundary_km(land_id) > 1.0);
}

// The same check south of the equator (lon 150–152°E, lat 44–42.5°S, land 150.8–151.2°E,
// 43.4–43.0°S) with a sliver threshold of 0.3: dropped squares are exactly those below it.
#[test]
fn southern_hemisphere_with_sliver_threshold() {
    let (outer, hole) = ([150.0, -44.0, 152.0, -42.5], [150.8, -43.4, 151.2, -43.0]);
    let region = MultiPolygon(vec![lonlat_box(outer[0], outer[1], outer[2], outer[3])]);
    let land = MultiPolygon(vec![lonlat_box(hole[0], hole[1], hole[2], hole[3])]);
    let all = build_grid(&spec(10.0, 0.0), &region, Some(&land)).unwrap();
    let want = box_minus_box(outer, hole);
    assert!(
        ((all.sea_area_km2 - want) / want).abs() < 1e-6,
        "{} vs {want}",
        all.sea_area_km2
    );
    let g = build_grid(&spec(10.0, 0.3), &region, Some(&land)).unwrap();
    assert!(g.len() < all.len());
    check_against_brute_force(&g, &region, Some(&land), 0.3);
    assert!(g.cells.iter().all(|c| c.sea_area_km2 >= 30.0));
    assert!(g
        .cells
        .iter()
        .all(|c| c.lonlat[1] < -42.0 && c.lonlat[1] > -44.5));
}

// An irregular coast: a 14-point star of land plus a small island that falls inside single
// cells, on a region with a concave notch; every square and edge against brute force.
#[test]
fn irregular_coast_against_brute_force() {
    let region = MultiPolygon(vec![Polygon::new(
        LineString::from(vec![
            (-3.0, 47.0),
            (0.0, 47.0),
            (0.0, 48.6),
            (-1.2, 48.6),
            (-1.5, 47.7),
            (-1.8, 48.6),
            (-3.0, 48.6),
            (-3.0, 47.0),
        ]),
        Vec::new(),
    )]);
    let star: Vec<(f64, f64)> = (0..=14)
        .map(|k| {
            let a = std::f64::consts::TAU * (k % 14) as f64 / 14.0;
            let r = if k % 2 == 0 { 0.35 } else { 0.12 };
            (-2.3 + r * a.cos(), 47.6 + 0.7 * r * a.sin())
        })
        .collect();
    let star = Polygon::new(LineString::from(star), Vec::new());
    // Put the island (≈750 m × 550 m) around the centre of one lattice square, found from a
    // first build without it (same region, so the same CRS and lattice).
    let first = build_grid(
        &spec(7.5, 0.05),
        &region,
        Some(&MultiPolygon(vec![star.clone()])),
    )
    .unwrap();
    let p = first.projector().unwrap();
    let sq = first.cell_square(first.locate(p.to_xy(-0.51, 47.315).unwrap()).unwrap());
    let [lon, lat] = p.to_lonlat(sq.center().x, sq.center().y).unwrap();
    let land = MultiPolygon(vec![
        star,
        lonlat_box(lon - 0.005, lat - 0.0025, lon + 0.005, lat + 0.0025),
    ]);
    let g = build_grid(&spec(7.5, 0.05), &region, Some(&land)).unwrap();
    assert_eq!(
        (g.origin, g.n_cols, g.n_rows),
        (first.origin, first.n_cols, first.n_rows)
    );
    check_against_brute_force(&g, &region, Some(&land), 0.05);
    assert!(
        g.cells.iter().any(|c| c
            .clipped
            .as_ref()
            .is_some_and(|m| m.0.iter().any(|p| !p.interiors().is_empty()))),
        "the island leaves a hole in a cell"
    );
}

// Results must not depend on the number of threads (rayon pools of 1 and 3 threads).
#[test]
fn same_grid_whatever_the_thread_count() {
    let region = MultiPolygon(vec![lonlat_box(5.0, 40.0, 8.0, 42.0)]);
    let land = MultiPolygon(vec![lonlat_box(6.0, 40.5, 6.7, 41.1)]);
    let build = |threads| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        pool.install(|| build_grid(&spec(5.0, 0.1), &region, Some(&land)).unwrap())
    };
    let (a, b) = (build(1), build(3));
    assert_eq!(a.cells, b.cells);
    assert_eq!(a.neighbours, b.neighbours);
    assert_eq!(a.lattice, b.lattice);
}

// A given CRS: EPSG:3035 (equal-area, GRS80) gives the same sea area as the auto LAEA
// within the densification tolerance; degrees, Mercator and nonsense are refused.
#[test]
fn given_crs_is_checked() {
    let region = MultiPolygon(vec![lonlat_box(10.0, 54.0, 11.0, 55.0)]);
    let want = lonlat_box_area_km2(10.0, 54.0, 11.0, 55.0);
    let with = |crs: &str| {
        build_grid(
            &GridSpec {
                cell_size_km: 10.0,
                crs: CrsChoice::Given(crs.into()),
                min_sea_share: 0.0,
            },
            &region,
            None,
        )
    };
    let g = with("EPSG:3035").unwrap();
    assert!(((g.sea_area_km2 - want) / want).abs() < 1e-6);
    assert_eq!(g.crs.definition, "EPSG:3035");
    let e = with("EPSG:4326").unwrap_err();
    assert!(matches!(e, GridError::Geographic { .. }), "{e}");
    assert!(e.to_string().contains("degrees"));
    // Web Mercator at 54–55°N inflates areas by 1/cos²φ ≈ 2.9 (from memory: Mercator scale
    // factor sec φ on both axes).
    match with("EPSG:3857").unwrap_err() {
        GridError::NotEqualArea { ratio, .. } => assert!(ratio > 2.5 && ratio < 3.5, "{ratio}"),
        other => panic!("{other}"),
    }
    assert!(matches!(
        with("not a crs").unwrap_err(),
        GridError::Crs { .. }
    ));
}

#[test]
fn errors_name_the_problem() {
    let region = MultiPolygon(vec![lonlat_box(10.0, 54.0, 11.0, 55.0)]);
    let empty = MultiPolygon(Vec::new());
    assert!(matches!(
        build_grid(&spec(5.0, 0.1), &empty, None),
        Err(GridError::EmptyRegion(_))
    ));
    let all_land = MultiPolygon(vec![lonlat_box(9.0, 53.0, 12.0, 56.0)]);
    assert!(matches!(
        build_grid(&spec(5.0, 0.1), &region, Some(&all_land)),
        Err(GridError::EmptyRegion(_))
    ));

    // A region wider than half the globe even with western longitudes read past 180° is
    // not one region driftplan can grid in one equal-area projection.
    let too_wide = MultiPolygon(vec![
        lonlat_box(-170.0, -20.0, -10.0, -18.0),
        lonlat_box(10.0, -20.0, 170.0, -18.0),
    ]);
    let e = build_grid(&spec(500.0, 0.1), &too_wide, None).unwrap_err();
    assert!(matches!(e, GridError::Antimeridian { .. }), "{e}");

    for bad in [0.0, -5.0, f64::NAN, f64::INFINITY] {
        let e = build_grid(&spec(bad, 0.1), &region, None).unwrap_err();
        assert!(e.to_string().contains("cell_size_km"), "{e}");
    }
    let e = build_grid(&spec(5.0, 1.5), &region, None).unwrap_err();
    assert!(e.to_string().contains("min_sea_share"), "{e}");

    // 2 000 km cells over a ~7 000 km² region: no square is 10% sea.
    let e = build_grid(&spec(2000.0, 0.1), &region, None).unwrap_err();
    assert!(matches!(e, GridError::NoCells { .. }), "{e}");

    // 10°×10° at 55°N is ~710 000 km²; 0.2 km cells would be ~18 million.
    let big = MultiPolygon(vec![lonlat_box(0.0, 50.0, 10.0, 60.0)]);
    match build_grid(&spec(0.2, 0.1), &big, None).unwrap_err() {
        e @ GridError::TooManyCells {
            cells,
            suggested_km,
            ..
        } => {
            assert!(cells > 15_000_000 && cells < 20_000_000, "{cells}");
            let area = lonlat_box_area_km2(0.0, 50.0, 10.0, 60.0);
            assert!(area / (suggested_km * suggested_km) < 5_000_000.0);
            assert!(e.to_string().contains("larger cell size"), "{e}");
        }
        other => panic!("{other}"),
    }
}

#[test]
fn summary_crs_names_its_epsg_code_and_proj_string() {
    // EPSG:3035 is ETRS89-extended / LAEA Europe: Lambert azimuthal equal-area at 52°N 10°E,
    // false easting 4 321 000 m, northing 3 210 000 m, GRS80 (EPSG Geodetic Parameter
    // Dataset; the same parameters as the Guidance Note 7-2 example above). The auto LAEA is a
    // custom CRS with no EPSG code.
    let info = Crs {
        definition: "EPSG:3035".into(),
    }
    .describe();
    assert_eq!(info.epsg, Some(3035));
    let p = info.proj.unwrap();
    for part in [
        "+proj=laea",
        "+lat_0=52",
        "+lon_0=10",
        "+x_0=4321000",
        "+y_0=3210000",
    ] {
        assert!(p.contains(part), "{p}");
    }
    let auto = Crs::auto_laea(-120.0, -36.5).describe();
    assert_eq!(auto.epsg, None);
    assert!(auto.proj.unwrap().contains("+lat_0=-36.5"));
}

// A Pacific region across 180°, given as RFC 7946 asks (§3.1.9): two pieces, 175–180°E and
// 180–175°W, lat 20–15°S, with an island across 180° (179.6°E–179.6°W, 17.6–17.2°S) also in
// two pieces. Reference: the closed-form ellipsoidal areas of the whole boxes (Snyder 1987,
// eq. 3-12; longitudes measured past 180°), tolerance 1e-6 as for the land-hole region above.
// The grid is centred on the antimeridian (auto LAEA lon_0 = 180).
#[test]
fn a_region_across_the_antimeridian() {
    let region = MultiPolygon(vec![
        lonlat_box(175.0, -20.0, 180.0, -15.0),
        lonlat_box(-180.0, -20.0, -175.0, -15.0),
    ]);
    let land = MultiPolygon(vec![
        lonlat_box(179.6, -17.6, 180.0, -17.2),
        lonlat_box(-180.0, -17.6, -179.6, -17.2),
    ]);
    let g = build_grid(&spec(10.0, 0.0), &region, Some(&land)).unwrap();
    assert!(
        g.crs.definition.contains("+lon_0=180"),
        "{}",
        g.crs.definition
    );
    let want = box_minus_box([175.0, -20.0, 185.0, -15.0], [179.6, -17.6, 180.4, -17.2]);
    assert!(
        ((g.sea_area_km2 - want) / want).abs() < 1e-6,
        "{} vs {want}",
        g.sea_area_km2
    );
    // Cells on both sides of 180° are neighbours across it: the grid is one piece.
    let east = g.cells.iter().filter(|c| c.lonlat[0] > 0.0).count();
    let west = g.cells.iter().filter(|c| c.lonlat[0] < 0.0).count();
    assert!(east > 100 && west > 100, "{east} / {west}");
    let across = (0..g.len()).any(|i| {
        g.cells[i].lonlat[0] > 179.0
            && g.neighbours[i]
                .iter()
                .any(|n| g.cells[n.cell as usize].lonlat[0] < -179.0)
    });
    assert!(across, "no neighbours across 180°");
}
