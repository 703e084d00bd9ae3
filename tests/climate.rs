//! Public-API tests of the climate computations and the derived climate features.

use driftplan::climate::{
    classify_flow, climate_velocity, trace, trace_all, FlowClass, Stop, TrajectoryParams,
    VelocityParams,
};
use driftplan::features::edges::{
    axis_positions, meridian_distance_km, range_edges, EdgeParams, PolewardAxis,
};
use driftplan::grid::{Crs, Grid, Projector};
use geographiclib_rs::{Geodesic, InverseGeodesic};

const YEARS: [i32; 4] = [2030, 2050, 2070, 2090];

/// An `n × n` grid of 10 km cells on a LAEA centred at (`lon0`, `lat0`), centred on it.
fn square_grid(lon0: f64, lat0: f64, n: u32) -> Grid {
    let side = 10_000.0;
    let half = n as f64 * side / 2.0;
    Grid::full_rectangle(Crs::auto_laea(lon0, lat0), side, [-half, -half], n, n).unwrap()
}

/// Temperatures of a field linear in grid km and in time:
/// T = 15 + gx·x + gy·y + trend·(t − 2030).
fn linear_field(grid: &Grid, gx: f64, gy: f64, trend: f64) -> Vec<Vec<f64>> {
    YEARS
        .iter()
        .map(|&yr| {
            grid.cells
                .iter()
                .map(|c| {
                    15.0 + gx * c.centre[0] / 1000.0
                        + gy * c.centre[1] / 1000.0
                        + trend * (yr - 2030) as f64
                })
                .collect()
        })
        .collect()
}

/// Geodesic azimuth (Karney 2013, via geographiclib-rs) from a cell centre to the point 1 km
/// further along the grid direction `dir`: an independent reference for bearings.
fn geodesic_bearing(p: &Projector, xy: [f64; 2], dir: [f64; 2]) -> f64 {
    let len = dir[0].hypot(dir[1]);
    let a = p.to_lonlat(xy[0], xy[1]).unwrap();
    let b = p
        .to_lonlat(xy[0] + 1000.0 * dir[0] / len, xy[1] + 1000.0 * dir[1] / len)
        .unwrap();
    let (_s12, azi1, _azi2, _a12): (f64, f64, f64, f64) =
        Geodesic::wgs84().inverse(a[1], a[0], b[1], b[0]);
    azi1.rem_euclid(360.0)
}

fn angle_diff(a: f64, b: f64) -> f64 {
    ((a - b + 180.0).rem_euclid(360.0) - 180.0).abs()
}

#[test]
fn linear_fields_give_trend_over_gradient_everywhere() {
    // Closed form: for T linear in grid km and time the gradient is (gx, gy) at every cell
    // (every 3×3 pair sees the plane), speed = trend/|g|, direction −g when warming.
    // Low and high latitude, both hemispheres; bearings checked against geodesic azimuths.
    for (lat0, gx, gy) in [
        (10.0, 0.003, -0.004),
        (60.0, -0.002, 0.001),
        (-40.0, 0.001, 0.005),
    ] {
        let grid = square_grid(20.0, lat0, 9);
        let trend = 0.025;
        let temps = linear_field(&grid, gx, gy, trend);
        let v = climate_velocity(&grid, &YEARS, &temps, &VelocityParams::default()).unwrap();
        let p = Projector::new(&grid.crs).unwrap();
        let g = f64::hypot(gx, gy);
        for id in 0..grid.len() {
            assert!((v.trend_c_per_yr[id] - trend).abs() < 1e-12);
            assert!((v.gradient_c_per_km[id] - g).abs() < 1e-9, "{lat0} {id}");
            assert!(
                (v.speed_km_per_yr[id] - trend / g).abs() < 1e-6,
                "{lat0} {id}"
            );
            let want = geodesic_bearing(&p, grid.cells[id].centre, [-gx, -gy]);
            // 1e-3°: a 1 km geodesic against an infinitesimal step.
            let got = v.bearing_deg[id];
            assert!(angle_diff(got, want) < 1e-3, "{lat0} {id}: {got} vs {want}");
        }
        // Corner cells lie ~57 km off the central meridian, where grid north and true north
        // differ measurably at high latitude: the correction is not a no-op there.
        if lat0 == 60.0 {
            let corner = grid.cell_at(0, 0).unwrap() as usize;
            let grid_bearing = (-gx).atan2(-gy).to_degrees().rem_euclid(360.0);
            assert!(angle_diff(v.bearing_deg[corner], grid_bearing) > 0.1);
        }
    }
}

#[test]
fn warming_points_toward_cooler_water_in_both_hemispheres() {
    // Northern hemisphere: water cools northward → isotherms move north (0°).
    // Southern hemisphere: water cools southward → they move south (180°). Cooling reverses
    // it. Centre cell on the central meridian (zero convergence). Closed-form expectations.
    let p = VelocityParams::default();
    let n = square_grid(0.0, 45.0, 5);
    let v = climate_velocity(&n, &YEARS, &linear_field(&n, 0.0, -0.005, 0.02), &p).unwrap();
    assert!(angle_diff(v.bearing_deg[12], 0.0) < 1e-6);
    let s = square_grid(0.0, -45.0, 5);
    let v = climate_velocity(&s, &YEARS, &linear_field(&s, 0.0, 0.005, 0.02), &p).unwrap();
    assert!(angle_diff(v.bearing_deg[12], 180.0) < 1e-6);
    let v = climate_velocity(&s, &YEARS, &linear_field(&s, 0.0, 0.005, -0.02), &p).unwrap();
    assert!(angle_diff(v.bearing_deg[12], 0.0) < 1e-6);
}

#[test]
fn check_values_worked_cases() {
    // CHECK-VALUES (A): SST = 20 − 0.5·(lat − 45) per 111.325 km, trend 0.02 °C/yr →
    // gradient 0.0044914 °C/km, velocity 4.453 km/yr toward north. On an equal-area km grid
    // the same field is linear in northing, and the answer is trend ÷ gradient exactly.
    let p = VelocityParams::default();
    let a = square_grid(0.0, 45.0, 5);
    let g_a = 0.5 / 111.325;
    let v = climate_velocity(&a, &YEARS, &linear_field(&a, 0.0, -g_a, 0.02), &p).unwrap();
    assert!((v.gradient_c_per_km[12] - 0.004_491_4).abs() < 1e-7);
    assert!((v.speed_km_per_yr[12] - 4.453).abs() < 5e-4);
    assert!((v.speed_km_per_yr[12] - 0.02 / g_a).abs() < 1e-9);
    assert!(angle_diff(v.bearing_deg[12], 0.0) < 1e-6);
    // CHECK-VALUES (B): SST = 10 + 0.5·lon at 60°N, trend 0.03 °C/yr → gradient
    // 0.0089875 °C/km (the lon/lat scheme), velocity 3.338 km/yr toward west (270°).
    let b = square_grid(0.0, 60.0, 5);
    let g_b = 0.008_987_5;
    let v = climate_velocity(&b, &YEARS, &linear_field(&b, g_b, 0.0, 0.03), &p).unwrap();
    assert!((v.speed_km_per_yr[12] - 3.338).abs() < 5e-4);
    assert!((v.speed_km_per_yr[12] - 0.03 / g_b).abs() < 1e-9);
    assert!(angle_diff(v.bearing_deg[12], 270.0) < 1e-6);
}

#[test]
fn trajectories_in_a_uniform_field_travel_speed_times_time() {
    // Closed form: a field warming 0.02 °C/yr and warmer to the east by 0.004 °C/km moves
    // isotherms west at 5 km/yr; in 30 years a trajectory travels 150 km west (15 cells), in
    // a straight line along its row.
    let grid = square_grid(0.0, 50.0, 41);
    let temps = linear_field(&grid, 0.004, 0.0, 0.02);
    let v = climate_velocity(&grid, &YEARS, &temps, &VelocityParams::default()).unwrap();
    let start = grid.cell_at(30, 20).unwrap();
    let p = TrajectoryParams {
        horizon_years: 30.0,
        step_years: 1.0,
        corridor_quantile: 0.9,
    };
    let t = trace(&grid, &v, start, &p).unwrap();
    let s = grid.cells[start as usize].centre;
    assert_eq!(t.stop, Stop::Horizon);
    assert!((t.end_xy[0] - (s[0] - 150_000.0)).abs() < 1e-3);
    assert!((t.end_xy[1] - s[1]).abs() < 1e-6);
    assert!((t.travelled_km - 150.0).abs() < 1e-9);
    assert_eq!(t.end_cell(), grid.cell_at(15, 20));
    assert_eq!(t.cells.len(), 16);
}

#[test]
fn a_field_converging_on_a_line_makes_a_sink_there() {
    // Cold water along row 10 (T = 15 + 0.005·|y − y₁₀| km), uniform warming 0.02 °C/yr: the
    // gradient points away from the row, so isotherms move toward it from both sides at
    // 4 km/yr; on the row the symmetric differences cancel (zero vector) and trajectories
    // stop. Hand reasoning: row 10 cells are sinks; the outer rows (nothing enters) sources.
    let grid = square_grid(0.0, 50.0, 21);
    let y_line = grid.cells[grid.cell_at(0, 10).unwrap() as usize].centre[1];
    let temps: Vec<Vec<f64>> = YEARS
        .iter()
        .map(|&yr| {
            grid.cells
                .iter()
                .map(|c| {
                    15.0 + 0.005 * ((c.centre[1] - y_line) / 1000.0).abs()
                        + 0.02 * (yr - 2030) as f64
                })
                .collect()
        })
        .collect();
    let v = climate_velocity(&grid, &YEARS, &temps, &VelocityParams::default()).unwrap();
    let p = TrajectoryParams {
        horizon_years: 40.0,
        step_years: 1.0,
        corridor_quantile: 0.9,
    };
    let set = trace_all(&grid, &v, &p).unwrap();
    let (counts, classes) = classify_flow(&grid, &set, &p).unwrap();
    for col in 0..21 {
        let line = grid.cell_at(col, 10).unwrap() as usize;
        assert_eq!(classes[line], FlowClass::Sink, "column {col}");
        assert!(counts.ends[line] > 1);
        assert_eq!(
            classes[grid.cell_at(col, 0).unwrap() as usize],
            FlowClass::Source
        );
        assert_eq!(
            classes[grid.cell_at(col, 20).unwrap() as usize],
            FlowClass::Source
        );
    }
    // 4 km/yr for 40 years = 160 km = 16 rows ≥ 10: every trajectory reaches the line.
    let on_line: u32 = (0..21)
        .map(|c| counts.ends[grid.cell_at(c, 10).unwrap() as usize])
        .sum();
    assert_eq!(on_line as usize, grid.len());
}

/// Habitat of a band `rows` long in a single column, starting at `first_row`: 100 km² a cell.
fn band(first_row: u32, rows: u32) -> Vec<(u32, f64)> {
    (first_row..first_row + rows).map(|r| (r, 100.0)).collect()
}

#[test]
fn edges_of_a_band_moving_poleward_in_both_hemispheres() {
    // A 30-cell band of habitat moving poleward 5 rows (50 grid km) per decade in one column
    // of 10 km cells on the central meridian. With equal weights the 95th / 5th quantiles
    // (midpoint rule = Hazen) fall on the band's 29th and 2nd cells (h = 30·0.95 + 0.5 = 29,
    // 30·0.05 + 0.5 = 2), so the edges sit at those cells' meridian distances (reference:
    // geographiclib-rs geodesic from the equator) and shift at 50 km/decade up to the LAEA
    // radial scale within 600 km of the centre (cos(c/2) > 0.9997; Snyder 1987).
    let years = [2030, 2040, 2050, 2060, 2070];
    let geod = Geodesic::wgs84();
    let mut results = Vec::new();
    for lat0 in [45.0, -45.0] {
        let crs = Crs::auto_laea(0.0, lat0);
        let grid = Grid::full_rectangle(crs, 10_000.0, [-5_000.0, -600_000.0], 1, 120).unwrap();
        let axis = axis_positions(&grid, &PolewardAxis::Meridian).unwrap();
        // North: the band starts at row 30 and climbs; south: it starts at row 60 and sinks.
        let starts: Vec<u32> = (0..5)
            .map(|k| if lat0 > 0.0 { 30 + 5 * k } else { 60 - 5 * k })
            .collect();
        let lists: Vec<Vec<(u32, f64)>> = starts.iter().map(|&s| band(s, 30)).collect();
        let refs: Vec<&[(u32, f64)]> = lists.iter().map(|l| &l[..]).collect();
        let params = EdgeParams {
            band_km: 25.0,
            ..Default::default()
        };
        let e = range_edges(&grid, &axis, &years, &refs, &params).unwrap();
        assert_eq!(e.poleward_sign, lat0.signum());
        let lat = |r: u32| grid.cells[r as usize].lonlat[1];
        let poleward_m = |r: u32| {
            let d: f64 = geod.inverse(0.0, 0.0, lat(r), 0.0);
            d / 1000.0
        };
        for (k, &s) in starts.iter().enumerate() {
            // Poleward-most cells of the band: north → highest rows, south → lowest.
            let (lead_row, trail_row) = if lat0 > 0.0 {
                (s + 28, s + 1)
            } else {
                (s + 1, s + 28)
            };
            assert!(
                (e.leading_km[k].unwrap() - poleward_m(lead_row)).abs() < 1e-6,
                "{lat0} {k}"
            );
            assert!(
                (e.trailing_km[k].unwrap() - poleward_m(trail_row)).abs() < 1e-6,
                "{lat0} {k}"
            );
            assert!(
                (meridian_distance_km(lat(lead_row)).abs() - poleward_m(lead_row)).abs() < 1e-6
            );
            // Leading zone (band 25 km, poleward side inclusive): the edge cell, the one
            // beyond it, and the two within 20 km equatorward: 4 cells; likewise trailing.
            assert_eq!(e.leading_amounts[k].len(), 4);
            assert_eq!(e.trailing_amounts[k].len(), 4);
        }
        let lead = e.leading_shift_km_per_decade.unwrap();
        let trail = e.trailing_shift_km_per_decade.unwrap();
        assert!((lead - 50.0).abs() < 0.05, "{lat0}: {lead}");
        assert!((trail - 50.0).abs() < 0.05, "{lat0}: {trail}");
        results.push((e.leading_km.clone(), lead, trail));
    }
    // Mirror image: the southern grid is the northern one reflected in the equator, so the
    // poleward edge positions and shifts agree.
    for k in 0..5 {
        assert!((results[0].0[k].unwrap() - results[1].0[k].unwrap()).abs() < 1e-6);
    }
    assert!((results[0].1 - results[1].1).abs() < 1e-6);
    assert!((results[0].2 - results[1].2).abs() < 1e-6);
}

#[test]
fn a_latitude_field_sampled_on_the_grid_matches_the_meridian_degree() {
    // SST = 20 − 0.5·(lat − 45) sampled at each cell's latitude on a LAEA grid centred at
    // 45°N: the grid gradient at the centre is 0.5 °C per meridian degree. Reference: the
    // length of 1° of meridian around 45°N from geographiclib-rs (Karney 2013), ≈ 111.13 km
    // (not the 111.325 km of the spherical scheme in CHECK-VALUES). Tolerance 0.01 %: the
    // central difference over ±10 km and the LAEA scale next to its centre.
    let grid = square_grid(0.0, 45.0, 5);
    let temps: Vec<Vec<f64>> = YEARS
        .iter()
        .map(|&yr| {
            grid.cells
                .iter()
                .map(|c| 20.0 - 0.5 * (c.lonlat[1] - 45.0) + 0.02 * (yr - 2030) as f64)
                .collect()
        })
        .collect();
    let v = climate_velocity(&grid, &YEARS, &temps, &VelocityParams::default()).unwrap();
    let degree_km: f64 = Geodesic::wgs84().inverse(44.5, 0.0, 45.5, 0.0);
    let degree_km = degree_km / 1000.0;
    let want = 0.5 / degree_km;
    assert!(
        (v.gradient_c_per_km[12] / want - 1.0).abs() < 1e-4,
        "{} vs {want}",
        v.gradient_c_per_km[12]
    );
    assert!((v.speed_km_per_yr[12] / (0.02 * degree_km / 0.5) - 1.0).abs() < 1e-4);
    assert!(angle_diff(v.bearing_deg[12], 0.0) < 1e-6);
}

#[test]
fn results_do_not_depend_on_the_thread_count() {
    // Determinism (common practice, no source): the same inputs on 1 and 3 threads give
    // bit-identical velocity, trajectories and flow classes.
    let grid = square_grid(5.0, 55.0, 30);
    let temps: Vec<Vec<f64>> = YEARS
        .iter()
        .map(|&yr| {
            grid.cells
                .iter()
                .map(|c| {
                    let (x, y) = (c.centre[0] / 1e5, c.centre[1] / 1e5);
                    15.0 + (x * 1.3).sin()
                        + (y * 0.7).cos() * x
                        + 0.02 * (yr - 2030) as f64 * (1.0 + 0.3 * y)
                })
                .collect()
        })
        .collect();
    let run = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        pool.install(|| {
            let v = climate_velocity(&grid, &YEARS, &temps, &VelocityParams::default()).unwrap();
            let p = TrajectoryParams::default();
            let set = trace_all(&grid, &v, &p).unwrap();
            let (counts, classes) = classify_flow(&grid, &set, &p).unwrap();
            (v, set, counts, classes)
        })
    };
    let (a, b) = (run(1), run(3));
    assert_eq!(a.0.speed_km_per_yr, b.0.speed_km_per_yr);
    assert_eq!(
        a.0.bearing_deg
            .iter()
            .map(|x| x.to_bits())
            .collect::<Vec<_>>(),
        b.0.bearing_deg
            .iter()
            .map(|x| x.to_bits())
            .collect::<Vec<_>>()
    );
    assert_eq!(a.1, b.1);
    assert_eq!(a.2, b.2);
    assert_eq!(a.3, b.3);
    // The field is not trivial: more than one flow class appears.
    let mut kinds = a.3.clone();
    kinds.sort();
    kinds.dedup();
    assert!(kinds.len() > 1, "{kinds:?}");
}

#[test]
fn velocity_next_to_a_coast_is_trend_over_gradient_in_every_sea_cell() {
    // SST = 20 − 0.5·(lat − 45) + 0.02·(t − 2030) as an ocean product delivers it: a 0.1°
    // lon/lat lattice with the points on land left out. The grid has a coast (a land block
    // covering its north-east quarter). Reference, as in the test above: 1° of meridian near
    // 45°N from geographiclib-rs (Karney 2013), so speed = 0.02 · degree_km / 0.5 km/yr in
    // every sea cell, coastal ones included (0.3 % for the LAEA scale and the curvature of
    // latitude lines across the 120 km grid).
    use driftplan::grid::{build_grid, CrsChoice, GridSpec};
    use driftplan::layers::{sample, LayerSpec, Missing, Sampling, SourceCache};
    let dir = tempfile::tempdir().unwrap();
    let ring = |w: f64, s: f64, e: f64, n: f64| {
        geo::MultiPolygon(vec![geo::Polygon::new(
            geo::LineString::from(vec![(w, s), (e, s), (e, n), (w, n), (w, s)]),
            vec![],
        )])
    };
    let region = ring(-0.8, 44.5, 0.8, 45.5);
    let land = ring(0.1, 45.05, 1.0, 46.0);
    let spec = GridSpec {
        cell_size_km: 10.0,
        crs: CrsChoice::Auto,
        min_sea_share: 0.1,
    };
    let grid = build_grid(&spec, &region, Some(&land)).unwrap();
    let on_land = |lon: f64, lat: f64| lon > 0.15 && lat > 45.05;
    let mut temps = Vec::new();
    let cache = SourceCache::new();
    for &yr in &YEARS {
        let mut text = String::from("lon,lat,sst\n");
        for j in 0..=14 {
            for i in 0..=20 {
                let (lon, lat) = (-1.0 + 0.1 * i as f64, 44.3 + 0.1 * j as f64);
                if !on_land(lon, lat) {
                    let t = 20.0 - 0.5 * (lat - 45.0) + 0.02 * (yr - 2030) as f64;
                    text.push_str(&format!("{lon:.1},{lat:.1},{t}\n"));
                }
            }
        }
        let path = dir.path().join(format!("sst_{yr}.csv"));
        std::fs::write(&path, text).unwrap();
        let layer = sample(
            &format!("sst_c/s/{yr}"),
            &LayerSpec {
                path,
                sampling: Sampling::Interpolate,
                field: Some("sst".into()),
                layer: None,
                year: None,
                years_window: 1,
                crs: None,
                valid_range: None,
                missing: Missing::Error,
                repair: false,
            },
            &grid,
            &cache,
        )
        .unwrap();
        temps.push(layer.values);
    }
    let coastal: usize = cache.sampling_reports().iter().map(|r| r.coastal).sum();
    assert!(coastal > 0, "the test must exercise the coastal fallback");
    let v = climate_velocity(&grid, &YEARS, &temps, &VelocityParams::default()).unwrap();
    let degree_m: f64 = Geodesic::wgs84().inverse(44.5, 0.0, 45.5, 0.0);
    let want = 0.02 * (degree_m / 1000.0) / 0.5;
    for id in 0..grid.len() {
        let got = v.speed_km_per_yr[id];
        assert!(
            (got / want - 1.0).abs() < 3e-3,
            "cell {id}: {got} vs {want}"
        );
        assert!(v.bearing_deg[id].is_finite() && !v.floored[id]);
    }
}
