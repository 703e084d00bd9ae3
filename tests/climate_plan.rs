//! The `[climate]` plan section and the derived-feature seam: plan parsing and its errors,
//! derived features on a small hand-built grid with known answers, and the demo region's
//! velocities and range-edge shifts against published magnitudes.

use driftplan::climate::{ExposureMetric, TrajectoryParams};
use driftplan::features::boundary::Decay;
use driftplan::features::derive::{derive_climate_features, Derived};
use driftplan::features::distinctness::Interpolation;
use driftplan::features::habitat::{habitat_feature, HabitatLayer};
use driftplan::features::{Feature, FeatureKind, FeatureTable, Target};
use driftplan::grid::{build_grid, Crs, Grid};
use driftplan::layers::{read_multipolygon, sample, Missing, Sampling, SourceCache};
use driftplan::plan::climate::{
    AxisPlan, BoundaryPlan, ClimatePlan, CorridorPlan, DistinctnessPlan, DistinctnessSource,
    EdgePlan, Goal, RefugiumPlan, RefugiumSource, TimePlan, VelocitySource,
};
use driftplan::plan::{LayerTemplate, Plan, PlanError};
use std::path::{Path, PathBuf};

// ---------------------------------------------------------------- plan section

fn climate_demo_text() -> String {
    std::fs::read_to_string("scenarios/demo-climate.toml").expect("the committed climate demo plan")
}

fn load_text(text: &str) -> Result<Plan, PlanError> {
    Plan::from_toml(
        text,
        Path::new("scenarios/test.toml"),
        Path::new("scenarios"),
        "0".into(),
    )
}

fn has_issue(err: &PlanError, key: &str, words: &str) -> bool {
    err.issues
        .iter()
        .any(|i| i.key == key && i.message.contains(words))
}

#[test]
fn the_climate_demo_plan_parses() {
    let plan = Plan::load(Path::new("scenarios/demo-climate.toml")).unwrap();
    let c = plan.climate.expect("a [climate] section");
    assert!(matches!(
        c.velocity,
        VelocitySource::FromTemperature { min_gradient_c_per_km } if min_gradient_c_per_km == 0.0005
    ));
    assert_eq!(c.trajectories.horizon_years, 60.0);
    let corridor = c.corridor.unwrap();
    assert_eq!(
        corridor.goal,
        Goal {
            target: None,
            weight: 1.0
        }
    );
    assert_eq!(corridor.goal.target(), Target::Share(0.0));
    let lead = c.leading_edge.unwrap();
    assert_eq!((lead.band_km, lead.quantile), (60.0, 0.95));
    assert_eq!(lead.axis, AxisPlan::Latitude);
    assert_eq!(lead.goal.target, Some(0.3));
    let r = c.refugium.unwrap();
    assert_eq!(
        r.source,
        RefugiumSource::Computed {
            metric: ExposureMetric::Speed,
            low_quantile: 0.25
        }
    );
    let b = c.boundary.unwrap();
    assert!(b.lines.unwrap().ends_with("demo-data/merrow-front.geojson"));
    assert_eq!(b.decay, Decay::Linear);
    match c.distinctness.unwrap().source {
        DistinctnessSource::Points {
            attribute,
            radius_km,
            method,
            ..
        } => {
            assert_eq!((attribute.as_str(), radius_km), ("gst", 40.0));
            assert_eq!(method, Interpolation::InverseDistance { power: 2.0 });
        }
        other => panic!("{other:?}"),
    }
    assert_eq!(c.time.discount_rate, None);
}

#[test]
fn bad_keys_and_values_are_named() {
    let text = climate_demo_text()
        .replace(
            "band_km = 60\nquantile = 0.95",
            "band_km = -60\nquantile = 1.5\nband = 3",
        )
        .replace(
            "low_quantile = 0.25",
            "low_quantile = 0.25\nmetric_name = \"x\"",
        )
        .replace("method = \"idw\"", "method = \"kriging\"")
        .replace("decay = \"linear\"", "decay = \"linear\"\nscale_km = 4")
        .replace("weights = \"equal\"", "weights = \"discount\"")
        .replace("[climate.time]", "[climate.tide]\nx = 1\n[climate.time]")
        .replace(
            "min_habitat_share = 0.1\nweight = 1",
            "min_habitat_share = 0.1",
        )
        .replace("horizon_years = 60", "horizon_years = 0");
    let err = load_text(&text).unwrap_err();
    for (key, words) in [
        (
            "climate.leading-edge.band_km",
            "positive number of kilometres",
        ),
        ("climate.leading-edge.quantile", "strictly between 0 and 1"),
        ("climate.leading-edge.band", "unknown key"),
        ("climate.refugium.metric_name", "unknown key"),
        ("climate.distinctness.method", "`kriging`"),
        ("climate.boundary.scale_km", "exponential"),
        ("climate.time.discount_rate", "needs a yearly rate"),
        ("climate.tide", "unknown key"),
        ("climate.corridor.target", "and/or `weight`"),
        (
            "climate.trajectories.horizon_years",
            "positive number of years",
        ),
    ] {
        assert!(
            has_issue(&err, key, words),
            "missing `{key}` ({words}) in {err}"
        );
    }
}

#[test]
fn computed_velocity_without_temperature_is_a_clear_error() {
    // Drop the whole [temperature] table (up to the next table).
    let full = climate_demo_text();
    let at = full.find("\n[temperature]\n").unwrap() + 1;
    let end = at + full[at + 1..].find("\n[").unwrap() + 1;
    let text = format!("{}{}", &full[..at], &full[end + 1..]);
    assert!(!text.contains("\n[temperature]\n"));
    let err = load_text(&text).unwrap_err();
    let issue = err
        .issues
        .iter()
        .find(|i| i.key == "climate.velocity")
        .unwrap_or_else(|| panic!("no climate.velocity issue in {err}"));
    assert!(
        issue.message.contains("no `[temperature]`"),
        "{}",
        issue.message
    );
    assert!(
        issue.message.contains("climate.corridor") && issue.message.contains("climate.refugium")
    );
    // Without features that need velocity the same plan is fine.
    let mut lines = Vec::new();
    let mut skip = false;
    for l in text.lines() {
        if l.starts_with('[') {
            skip = l == "[climate.velocity]"
                || l == "[climate.corridor]"
                || l == "[climate.refugium]"
                || l == "[climate.trajectories]";
        }
        if !skip {
            lines.push(l);
        }
    }
    let ok = load_text(&lines.join("\n"));
    assert!(ok.is_ok(), "{}", ok.unwrap_err());
}

#[test]
fn supplied_layers_and_crossed_quantiles_are_checked() {
    let text = climate_demo_text()
        .replace(
            "min_gradient_c_per_km = 0.0005",
            "speed = { path = \"../tests/data/climate/velocity_{scenario}.csv\", column = \"speed_km_per_yr\" }",
        )
        .replace("quantile = 0.05", "quantile = 0.97");
    let err = load_text(&text).unwrap_err();
    assert!(
        has_issue(&err, "climate.velocity.bearing", "both `speed`"),
        "{err}"
    );
    assert!(
        has_issue(&err, "climate.trailing-edge.quantile", "must be below"),
        "{err}"
    );
    // The speed file is templated by scenario; the demo's scenario names have no such file.
    assert!(
        has_issue(&err, "climate.velocity.speed.path", "file not found"),
        "{err}"
    );
}

// ---------------------------------------------------------------- the seam on a small grid

/// 8×8 grid of 10 km cells on a LAEA centred at (0°, 40°S), cells centred at
/// x, y = −35, −25, …, 35 km; ids row-major from the south-west.
fn grid8() -> Grid {
    Grid::full_rectangle(
        Crs::auto_laea(0.0, -40.0),
        10_000.0,
        [-40_000.0, -40_000.0],
        8,
        8,
    )
    .unwrap()
}

const YEARS: [i32; 3] = [2030, 2050, 2070];

/// T = 20 + 0.01·y_km + trend(col)·(year − 2050), trend 0.01 °C/yr in columns 0–1 and 0.03
/// elsewhere. The period mean is 20 + 0.01·y (the years' mean offset is 0), so the gradient
/// is 0.01 °C/km northward everywhere and velocity = trend / gradient = 1 or 3 km/yr, due
/// grid south (closed form, Loarie et al. 2009).
fn temperature(grid: &Grid) -> Vec<Vec<f64>> {
    YEARS
        .iter()
        .map(|&y| {
            grid.cells
                .iter()
                .map(|c| {
                    let trend = if c.col < 2 { 0.01 } else { 0.03 };
                    20.0 + 0.01 * c.centre[1] / 1000.0 + trend * (y - 2050) as f64
                })
                .collect()
        })
        .collect()
}

fn rows(grid: &Grid, first: u32, last: u32) -> Vec<(u32, f64)> {
    (0..grid.len() as u32)
        .filter(|&i| (first..=last).contains(&grid.cells[i as usize].row))
        .map(|i| (i, grid.cells[i as usize].sea_area_km2))
        .collect()
}

fn habitat_feature_of(sp: &str, s: usize, year: i32, amounts: Vec<(u32, f64)>) -> Feature {
    Feature {
        name: format!("habitat/{sp}/s{s}/{year}"),
        kind: FeatureKind::Habitat,
        species: Some(sp.into()),
        scenario: Some(s),
        year: Some(year),
        unit: "km2".into(),
        total: amounts.iter().map(|a| a.1).sum(),
        amounts,
        target: Target::Share(0.3),
        weight: 1.0,
    }
}

/// One species whose habitat band (four full rows) moves one row (10 km) south every 20 years:
/// rows 4–7 in 2030, 3–6 in 2050, 2–5 in 2070.
fn moving_band(grid: &Grid, scenarios: usize) -> FeatureTable {
    let mut features = Vec::new();
    for s in 0..scenarios {
        for (k, &y) in YEARS.iter().enumerate() {
            let k = k as u32;
            features.push(habitat_feature_of("sp", s, y, rows(grid, 4 - k, 7 - k)));
        }
    }
    FeatureTable {
        scenarios: (1..=scenarios).map(|s| format!("s{s}")).collect(),
        years: YEARS.to_vec(),
        features,
    }
}

fn goal(target: f64) -> Goal {
    Goal {
        target: Some(target),
        weight: 1.0,
    }
}

fn bare_plan() -> ClimatePlan {
    ClimatePlan {
        velocity: VelocitySource::FromTemperature {
            min_gradient_c_per_km: 0.0005,
        },
        trajectories: TrajectoryParams {
            horizon_years: 40.0,
            step_years: 1.0,
            corridor_quantile: 0.9,
        },
        corridor: None,
        leading_edge: None,
        trailing_edge: None,
        refugium: None,
        boundary: None,
        distinctness: None,
        time: TimePlan {
            discount_rate: None,
            combine_years: false,
        },
    }
}

fn run(
    plan: &ClimatePlan,
    grid: &Grid,
    temperature: &[Vec<Vec<f64>>],
    habitat: &FeatureTable,
) -> Derived {
    let scenarios = habitat.scenarios.clone();
    derive_climate_features(
        plan,
        grid,
        &scenarios,
        &YEARS,
        temperature,
        habitat,
        &SourceCache::default(),
    )
    .unwrap()
}

fn feature<'a>(d: &'a Derived, name: &str) -> &'a Feature {
    d.features
        .iter()
        .find(|f| f.name == name)
        .unwrap_or_else(|| {
            let names: Vec<&str> = d.features.iter().map(|f| f.name.as_str()).collect();
            panic!("no feature {name} among {names:?}")
        })
}

fn layer<'a>(d: &'a Derived, name: &str) -> &'a [f64] {
    &d.layers
        .iter()
        .find(|l| l.name == name)
        .unwrap_or_else(|| panic!("no layer {name}"))
        .values
}

fn cells(f: &Feature) -> Vec<u32> {
    f.amounts.iter().map(|a| a.0).collect()
}

#[test]
fn velocity_refugia_and_corridors_through_the_seam() {
    let g = grid8();
    let t = temperature(&g);
    let habitat = {
        // Habitat in the north row now and everywhere later, so every trajectory that stays
        // in the sea links habitat.
        let f = vec![
            habitat_feature_of("sp", 0, 2030, rows(&g, 7, 7)),
            habitat_feature_of("sp", 0, 2050, rows(&g, 0, 7)),
            habitat_feature_of("sp", 0, 2070, rows(&g, 0, 7)),
        ];
        FeatureTable {
            scenarios: vec!["s1".into()],
            years: YEARS.to_vec(),
            features: f,
        }
    };
    let mut plan = bare_plan();
    plan.corridor = Some(CorridorPlan {
        min_habitat_share: 0.0,
        goal: Goal {
            target: None,
            weight: 2.0,
        },
    });
    plan.refugium = Some(RefugiumPlan {
        source: RefugiumSource::Computed {
            metric: ExposureMetric::Speed,
            low_quantile: 0.25,
        },
        min_habitat_share: 0.0,
        per_species: true,
        low_exposure_only: true,
        goal: goal(0.5),
    });
    let d = run(&plan, &g, &[t], &habitat);

    // Velocity = trend / gradient (closed form above): 1 km/yr in columns 0–1, 3 elsewhere,
    // toward the south (bearing 180° up to the meridian convergence, < 0.5° within 40 km of
    // the central meridian at 40°S: Δλ·sin φ ≈ 0.47°·0.64).
    let speed = layer(&d, "velocity_km_per_yr/s1");
    let bearing = layer(&d, "velocity_bearing_deg/s1");
    for (i, c) in g.cells.iter().enumerate() {
        let want = if c.col < 2 { 1.0 } else { 3.0 };
        assert!((speed[i] - want).abs() < 1e-9, "cell {i}: {}", speed[i]);
        assert!((bearing[i] - 180.0).abs() < 0.5, "cell {i}: {}", bearing[i]);
    }
    let warming = layer(&d, "warming_c_per_yr/s1");
    assert!((warming[0] - 0.01).abs() < 1e-12 && (warming[2] - 0.03).abs() < 1e-12);

    // Refugia: type-7 quantile 0.25 of 16 ones and 48 threes is h = 63·0.25 = 15.75 →
    // 1 + 0.75·(3 − 1) = 2.5 (Hyndman & Fan 1996), so exactly columns 0–1 are refuge water:
    // 16 cells × 100 km² = 1 600 km².
    let r = feature(&d, "refugium/s1");
    assert_eq!(r.kind, FeatureKind::Refugium);
    assert!(r.amounts.iter().all(|&(c, _)| g.cells[c as usize].col < 2));
    assert_eq!(r.amounts.len(), 16);
    assert!((r.total - 1600.0).abs() < 1e-6);
    assert_eq!(r.target, Target::Share(0.5));
    // The species holds habitat in all three years only in row 7; in refuge water only in
    // its columns 0–1: 2 cells, 200 km².
    let rs = feature(&d, "refugium/sp/s1");
    assert_eq!(rs.amounts.len(), 2);
    assert!((rs.total - 200.0).abs() < 1e-6);

    // Corridors: trajectories start at row 7 (y = 35 km) and run 40 years due south. In
    // columns 0–1 (1 km/yr) they end 40 km south, at the centre of row 3, visiting rows
    // 7…3: 5 cells each. Elsewhere (3 km/yr, 120 km) they leave the 80 km grid and link
    // nothing. Density 1 on those 10 cells (hand reasoning; Burrows et al. 2014 tracing).
    let c = feature(&d, "corridor/s1");
    assert_eq!(
        (c.kind, c.unit.as_str()),
        (FeatureKind::Corridor, "trajectories")
    );
    assert_eq!(c.amounts.len(), 10, "{:?}", c.amounts);
    for &(cell, n) in &c.amounts {
        let cell = &g.cells[cell as usize];
        assert!(cell.col < 2 && (3..=7).contains(&cell.row) && n == 1.0);
    }
    assert_eq!((c.target, c.weight), (Target::Share(0.0), 2.0));
    assert_eq!(layer(&d, "corridor_density/s1").len(), g.len());
    assert_eq!(layer(&d, "flow_class/s1").len(), g.len());
}

#[test]
fn range_edges_and_time_weights_through_the_seam() {
    let g = grid8();
    let habitat = moving_band(&g, 1);
    let mut plan = bare_plan();
    let edge = |q| EdgePlan {
        band_km: 5.0,
        quantile: q,
        axis: AxisPlan::Latitude,
        goal: goal(0.3),
    };
    plan.leading_edge = Some(edge(0.95));
    plan.trailing_edge = Some(edge(0.05));
    // No temperature: edges need none.
    let d = run(&plan, &g, &[], &habitat);

    // Southern hemisphere: poleward is south. The 95th percentile of 32 equal weights lies
    // inside the southernmost row of the band (midpoint ranks 24.5…31.5 of 32 hold 0.95·32),
    // and the 5 km band keeps that row only (the next row is 10 km away): row 4 in 2030,
    // 3 in 2050, 2 in 2070, 8 cells × 100 km² each. The trailing edge is the northern row.
    for (k, y) in YEARS.iter().enumerate() {
        let k = k as u32;
        let lead = feature(&d, &format!("leading-edge/sp/s1/{y}"));
        let trail = feature(&d, &format!("trailing-edge/sp/s1/{y}"));
        assert!(
            cells(lead)
                .iter()
                .all(|&c| g.cells[c as usize].row == 4 - k),
            "{lead:?}"
        );
        assert!(cells(trail)
            .iter()
            .all(|&c| g.cells[c as usize].row == 7 - k));
        assert!((lead.total - 800.0).abs() < 1e-6 && (trail.total - 800.0).abs() < 1e-6);
        assert_eq!((lead.year, lead.weight), (Some(*y), 1.0));
    }
    // The band moves 10 km (one grid row; LAEA scale error < 0.01% within 60 km of the
    // centre, Snyder 1987) per 20 years: 5 km/decade poleward at both edges.
    assert_eq!(d.edge_shifts.len(), 1);
    let s = &d.edge_shifts[0];
    assert_eq!(s.poleward_sign, -1.0);
    assert!(
        (s.leading_km_per_decade.unwrap() - 5.0).abs() < 0.02,
        "{s:?}"
    );
    assert!(
        (s.trailing_km_per_decade.unwrap() - 5.0).abs() < 0.02,
        "{s:?}"
    );
    // Clipping, by hand on the 8-row grid: the trailing (northern) edge sits in row 7 in
    // 2030, the region's own northernmost row (its equatorward limit here), within the 5 km
    // band: clipped. The leading edge reaches row 2 at most, 20 km from the southern limit
    // (row 0): not clipped.
    assert!(s.trailing_clipped && !s.leading_clipped, "{s:?}");
    assert_eq!(s.clipped_word(), "trailing");
    let csv = driftplan::export::edge_shifts_csv(&d.edge_shifts).unwrap();
    assert!(
        csv.starts_with("species,scenario,leading_km_per_decade,trailing_km_per_decade,clipped\n")
    );
    assert!(csv.lines().nth(1).unwrap().ends_with(",trailing"), "{csv}");
    let notes = driftplan::features::derive::clipped_notes(&d.edge_shifts);
    assert_eq!(notes, vec!["trailing edges within one edge band of the region's equatorward limit, so their shifts measure the region, not the species: sp in s1"]);

    // Combined through time with a 3% discount: weights ∝ 1, 1.03^−20, 1.03^−40
    // (= 1, 0.553676, 0.306557; sum 1.860233), so each leading row keeps that share of its
    // 100 km² per cell and the total is 800 km² (hand computation).
    plan.time = TimePlan {
        discount_rate: Some(0.03),
        combine_years: true,
    };
    let d = run(&plan, &g, &[], &habitat);
    let lead = feature(&d, "leading-edge/sp/s1");
    assert_eq!(lead.year, None);
    assert!((lead.total - 800.0).abs() < 1e-6);
    let row4 = lead
        .amounts
        .iter()
        .find(|a| g.cells[a.0 as usize].row == 4)
        .unwrap();
    assert!((row4.1 - 100.0 / 1.860_233).abs() < 1e-4, "{row4:?}");
    assert!(!d.features.iter().any(|f| f.name.ends_with("/2050")));
}

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/climate")
        .join(name)
}

fn template(
    path: &str,
    sampling: Sampling,
    field: Option<&str>,
    missing: Missing,
) -> LayerTemplate {
    LayerTemplate {
        path: fixture(path).to_string_lossy().into_owned(),
        sampling,
        field: field.map(str::to_string),
        layer: None,
        years_window: 1,
        crs: None,
        valid_range: None,
        missing,
        repair: false,
    }
}

#[test]
fn supplied_inputs_through_the_seam() {
    // Fixtures in tests/data/climate (hand-written): a boundary line and refugium polygon
    // edge on the central meridian (lon 0, which this LAEA maps onto x = 0), sample points
    // at the projection centre (a cell corner) and 3° east (out of reach), and velocity
    // CSVs with constant speed 2.5 (s1) or 4 (s2) km/yr toward the east.
    let g = grid8();
    let habitat = moving_band(&g, 2);
    let mut plan = bare_plan();
    plan.velocity = VelocitySource::Supplied {
        speed: Box::new(template(
            "velocity_{scenario}.csv",
            Sampling::Interpolate,
            Some("speed_km_per_yr"),
            Missing::Error,
        )),
        bearing: Box::new(template(
            "velocity_{scenario}.csv",
            Sampling::Interpolate,
            Some("bearing_deg"),
            Missing::Error,
        )),
    };
    plan.refugium = Some(RefugiumPlan {
        source: RefugiumSource::Polygons(template(
            "refugia.geojson",
            Sampling::AreaShare,
            None,
            Missing::Zero,
        )),
        min_habitat_share: 0.0,
        per_species: false,
        low_exposure_only: false,
        goal: goal(0.3),
    });
    plan.boundary = Some(BoundaryPlan {
        lines: Some(fixture("boundary.geojson")),
        band_km: 12.0,
        decay: Decay::Linear,
        edge_density: true,
        edge_band_km: 3.0,
        axis: AxisPlan::Latitude,
        goal: goal(0.2),
    });
    plan.distinctness = Some(DistinctnessPlan {
        source: DistinctnessSource::Points {
            path: fixture("samples.geojson"),
            attribute: "gst".into(),
            radius_km: 8.0,
            method: Interpolation::Nearest,
        },
        goal: goal(0.4),
    });
    let d = run(&plan, &g, &[], &habitat);

    // Supplied speed comes back as given, bearing 90° (east).
    for (s, v) in [("s1", 2.5), ("s2", 4.0)] {
        assert!(layer(&d, &format!("velocity_km_per_yr/{s}"))
            .iter()
            .all(|x| (x - v).abs() < 1e-9));
        assert!(layer(&d, &format!("velocity_bearing_deg/{s}"))
            .iter()
            .all(|x| (x - 90.0).abs() < 1e-9));
    }
    // Refugium polygon west of x = 0: columns 0–3 fully covered, 32 × 100 km².
    let r = feature(&d, "refugium/s2");
    assert!(r.amounts.iter().all(|&(c, _)| g.cells[c as usize].col < 4));
    assert!((r.total - 3200.0).abs() < 1e-3, "{}", r.total);
    // Boundary line on x = 0: cell centres at |x| = 5 km get 1 − 5/12 = 7/12 of 100 km²,
    // the next columns (15 km) are beyond the 12 km band: 16 cells, 933.33 km².
    let b = feature(&d, "boundary");
    assert_eq!((b.scenario, b.year), (None, None));
    assert_eq!(b.amounts.len(), 16);
    assert!((b.total - 16.0 * 700.0 / 12.0).abs() < 1e-3, "{}", b.total);
    // Edge density with a 3 km window: in 2030 the band's edges lie in rows 4 and 7, so
    // those rows count one edge each: 16 cells × 100 km².
    let e = feature(&d, "boundary/s1/2030");
    assert_eq!(e.unit, "km2 x edges");
    let rows_hit: std::collections::BTreeSet<u32> =
        cells(e).iter().map(|&c| g.cells[c as usize].row).collect();
    assert_eq!(rows_hit.into_iter().collect::<Vec<_>>(), vec![4, 7]);
    assert!((e.total - 1600.0).abs() < 1e-6);
    // Distinctness: the point at the centre is 7.07 km from the four cells around it and
    // at least 15.8 km from any other; the far point is 250 km away. 4 × 0.2 × 100 km².
    let g_st = feature(&d, "distinctness");
    assert_eq!(g_st.amounts.len(), 4);
    assert!((g_st.total - 80.0).abs() < 1e-9);
    assert_eq!(d.edge_shifts.len(), 2);
}

#[test]
fn missing_temperature_is_an_error_at_the_seam_too() {
    let g = grid8();
    let mut plan = bare_plan();
    plan.corridor = Some(CorridorPlan {
        min_habitat_share: 0.0,
        goal: goal(0.1),
    });
    let habitat = moving_band(&g, 1);
    let err = derive_climate_features(
        &plan,
        &g,
        &habitat.scenarios,
        &YEARS,
        &[],
        &habitat,
        &SourceCache::default(),
    )
    .unwrap_err();
    assert!(err.to_string().contains("temperature"), "{err}");
}

// ---------------------------------------------------------------- the demo region

/// The climate demo plan on a 10 km grid (coarser than the plan's 5 km, to keep the test
/// fast), run through grid, layers and the seam.
fn demo_derived() -> (Grid, Derived) {
    let text = climate_demo_text().replace("cell_size_km = 5 ", "cell_size_km = 10");
    let plan = Plan::from_toml(
        &text,
        Path::new("scenarios/demo-climate.toml"),
        Path::new("scenarios"),
        "0".into(),
    )
    .unwrap();
    let region = read_multipolygon(&plan.region, false).unwrap();
    let land = read_multipolygon(plan.land.as_ref().unwrap(), false).unwrap();
    let grid = build_grid(&plan.grid, &region, Some(&land)).unwrap();
    let cache = SourceCache::default();
    let t = plan.temperature.as_ref().unwrap();
    let temperature: Vec<Vec<Vec<f64>>> = plan
        .scenarios
        .iter()
        .map(|s| {
            plan.years
                .iter()
                .map(|&y| {
                    sample("sst", &t.resolve("", s, y), &grid, &cache)
                        .unwrap()
                        .values
                })
                .collect()
        })
        .collect();
    let mut features = Vec::new();
    for sp in &plan.species {
        for (ci, s) in plan.scenarios.iter().enumerate() {
            for &y in &plan.years {
                let l = sample("h", &sp.habitat.resolve(&sp.name, s, y), &grid, &cache).unwrap();
                features.push(habitat_feature(
                    &grid,
                    &HabitatLayer {
                        species: &sp.name,
                        scenario: ci,
                        scenario_name: s,
                        year: y,
                        share: &l.values,
                        target_share: 0.3,
                        weight: 1.0,
                    },
                ));
            }
        }
    }
    let habitat = FeatureTable {
        scenarios: plan.scenarios.clone(),
        years: plan.years.clone(),
        features,
    };
    let d = derive_climate_features(
        plan.climate.as_ref().unwrap(),
        &grid,
        &plan.scenarios,
        &plan.years,
        &temperature,
        &habitat,
        &cache,
    )
    .unwrap();
    (grid, d)
}

fn median(v: &[f64]) -> f64 {
    driftplan::climate::quantile(v, 0.5).unwrap()
}

#[test]
fn demo_velocities_and_range_shifts_match_published_magnitudes() {
    let (grid, d) = demo_derived();
    let scenarios = ["ssp1-2.6", "ssp2-4.5", "ssp5-8.5"];
    let med: Vec<f64> = scenarios
        .iter()
        .map(|s| median(layer(&d, &format!("velocity_km_per_yr/{s}"))) * 10.0)
        .collect();
    eprintln!("median velocity km/decade: {med:?}");
    // Burrows et al. 2011 (Science 334:652): global ocean mean 21.7 km/decade, 1960–2009
    // (from memory). The middle scenario's median lies within a factor of two of it.
    assert!(med[1] > 21.7 / 2.0 && med[1] < 21.7 * 2.0, "{med:?}");
    // Marine range shifts reported 1.4–28 km/decade (CHECK-VALUES, confirmed): the low and
    // middle scenarios' medians fall inside that span.
    for m in &med[..2] {
        assert!((1.4..=28.0).contains(m), "{med:?}");
    }
    // Same spatial gradient, so speed scales with the warming rate (closed form): the demo
    // warms at 0.008, 0.018 and 0.032 °C/yr, ratios 2.25 and 4 (the upwelling cell warms
    // slower, and is a small part of the sea: 5% slack).
    assert!((med[1] / med[0] / 2.25 - 1.0).abs() < 0.05, "{med:?}");
    assert!((med[2] / med[0] / 4.0 - 1.0).abs() < 0.05, "{med:?}");

    // Leading edges move poleward (south) in every scenario and faster with more warming.
    let mean_shift = |s: &str| {
        let v: Vec<f64> = d
            .edge_shifts
            .iter()
            .filter(|e| e.scenario == s)
            .filter_map(|e| e.leading_km_per_decade)
            .collect();
        assert_eq!(v.len(), 12, "{s}");
        v.iter().sum::<f64>() / v.len() as f64
    };
    let shifts: Vec<f64> = scenarios.iter().map(|s| mean_shift(s)).collect();
    eprintln!("mean leading-edge shift km/decade: {shifts:?}");
    assert!(d.edge_shifts.iter().all(|e| e.poleward_sign == -1.0));
    assert!(
        shifts[0] > 0.0 && shifts[0] < shifts[1] && shifts[1] < shifts[2],
        "{shifts:?}"
    );
    // The features the plan asks for exist in every scenario, with their targets.
    for s in scenarios {
        assert_eq!(
            feature(&d, &format!("refugium/{s}")).target,
            Target::Share(0.3)
        );
        assert_eq!(
            feature(&d, &format!("corridor/{s}")).target,
            Target::Share(0.0)
        );
        let lead = feature(&d, &format!("leading-edge/amber-wrasse/{s}/2090"));
        assert!(lead.total > 0.0 && lead.target == Target::Share(0.3));
    }
    let b = feature(&d, "boundary");
    let dist = feature(&d, "distinctness");
    assert!(b.total > 0.0 && dist.total > 0.0);
    assert!(grid.len() > 1000);
}

#[test]
fn committed_demo_files_match_the_generator() {
    // Regression guard: the committed demo data and plans are exactly what `demo::generate`
    // writes (regenerate with `driftplan demo` after changing the generator).
    for (rel, text) in driftplan::demo::generate().unwrap() {
        let on_disk = std::fs::read(&rel).unwrap_or_default();
        assert!(
            on_disk == text,
            "{} differs from the generator",
            rel.display()
        );
    }
}

#[test]
fn derived_features_do_not_depend_on_the_thread_count() {
    // Same inputs in a 1-thread and a 3-thread pool must give identical output (rayon work is
    // collected in index order; integer counts and fixed-order sums only).
    let g = grid8();
    let t = temperature(&g);
    let habitat = moving_band(&g, 2);
    let mut plan = bare_plan();
    plan.corridor = Some(CorridorPlan {
        min_habitat_share: 0.0,
        goal: goal(0.1),
    });
    plan.leading_edge = Some(EdgePlan {
        band_km: 15.0,
        quantile: 0.9,
        axis: AxisPlan::Latitude,
        goal: goal(0.3),
    });
    plan.refugium = Some(RefugiumPlan {
        source: RefugiumSource::Computed {
            metric: ExposureMetric::Warming,
            low_quantile: 0.3,
        },
        min_habitat_share: 0.0,
        per_species: true,
        low_exposure_only: false,
        goal: goal(0.3),
    });
    let temps = vec![t.clone(), t];
    let in_pool = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| run(&plan, &g, &temps, &habitat))
    };
    let one = in_pool(1);
    let three = in_pool(3);
    assert!(one.features.len() > 5);
    // Compare bit patterns (NaN-safe: layers hold NaN where undefined).
    let bits = |d: &Derived| -> Vec<u64> {
        d.layers
            .iter()
            .flat_map(|l| l.values.iter().map(|v| v.to_bits()))
            .chain(
                d.features
                    .iter()
                    .flat_map(|f| f.amounts.iter().map(|a| a.1.to_bits())),
            )
            .collect()
    };
    assert_eq!(bits(&one), bits(&three));
    assert_eq!(one.features, three.features);
}
