//! The invented demo region: the Merrow Coast, a fictional temperate coast in the open South
//! Pacific (about 34–39.5°S, 117–121.5°W, where no real coast lies). Everything here is made
//! up by deterministic formulas (no randomness), so [`generate`] returns byte-identical files
//! on every run.
//!
//! The coast runs north–south for about 600 km with a bay and two islands; the sea cools toward
//! the pole (south), warms at three scenario rates, and an upwelling cell off the southern
//! headland stays cool. Twelve invented species follow thermal niches and depth ranges, so their
//! habitat shifts south as the sea warms.

use std::f64::consts::PI;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

mod binary;
mod netcdf3;

/// Scenario names (IPCC AR6 shared socio-economic pathways) and their invented warming rates
/// (°C per year of sea-surface temperature, chosen to be plausible, not taken from any model).
pub const SCENARIOS: [(&str, f64); 3] = [
    ("ssp1-2.6", 0.008),
    ("ssp2-4.5", 0.018),
    ("ssp5-8.5", 0.032),
];

/// Years of the demo's time steps.
pub const YEARS: [i32; 4] = [2030, 2050, 2070, 2090];

/// Year the baseline temperature field describes.
const BASE_YEAR: f64 = 2020.0;

/// Extent of the region (lon/lat degrees).
const WEST: f64 = -121.5;
const EAST: f64 = -117.0;
const SOUTH: f64 = -39.5;
const NORTH: f64 = -34.0;

/// Spacing of the CSV point grids. Units: degrees.
const STEP: f64 = 0.1;

/// An invented species' niche: thermal optimum and tolerance (°C), depth range (m).
struct Species {
    name: &'static str,
    t_opt: f64,
    t_sd: f64,
    depth_min: f64,
    depth_max: f64,
}

const SPECIES: [Species; 12] = [
    Species {
        name: "amber-wrasse",
        t_opt: 18.5,
        t_sd: 1.2,
        depth_min: 0.0,
        depth_max: 80.0,
    },
    Species {
        name: "banded-kelpfish",
        t_opt: 16.0,
        t_sd: 1.0,
        depth_min: 0.0,
        depth_max: 40.0,
    },
    Species {
        name: "coral-drift-snapper",
        t_opt: 19.5,
        t_sd: 1.5,
        depth_min: 10.0,
        depth_max: 150.0,
    },
    Species {
        name: "dusky-reef-perch",
        t_opt: 17.0,
        t_sd: 1.3,
        depth_min: 0.0,
        depth_max: 100.0,
    },
    Species {
        name: "emerald-urchin",
        t_opt: 15.0,
        t_sd: 1.2,
        depth_min: 0.0,
        depth_max: 30.0,
    },
    Species {
        name: "fan-shell-scallop",
        t_opt: 16.5,
        t_sd: 1.8,
        depth_min: 20.0,
        depth_max: 120.0,
    },
    Species {
        name: "grey-shelf-shark",
        t_opt: 17.5,
        t_sd: 2.0,
        depth_min: 30.0,
        depth_max: 300.0,
    },
    Species {
        name: "harbour-seagrass",
        t_opt: 18.0,
        t_sd: 1.4,
        depth_min: 0.0,
        depth_max: 15.0,
    },
    Species {
        name: "ink-cap-octopus",
        t_opt: 15.5,
        t_sd: 1.6,
        depth_min: 0.0,
        depth_max: 200.0,
    },
    Species {
        name: "jade-rock-lobster",
        t_opt: 16.8,
        t_sd: 1.1,
        depth_min: 5.0,
        depth_max: 60.0,
    },
    Species {
        name: "keel-fin-trevally",
        t_opt: 19.0,
        t_sd: 1.8,
        depth_min: 0.0,
        depth_max: 250.0,
    },
    Species {
        name: "lattice-sponge",
        t_opt: 14.5,
        t_sd: 1.5,
        depth_min: 100.0,
        depth_max: 800.0,
    },
];

/// The two islands: centre lon, lat and radius (degrees of latitude).
const ISLANDS: [(f64, f64, f64); 2] = [(-118.9, -35.3, 0.12), (-118.4, -38.1, 0.08)];

/// Bay centre latitude, half-width and depth (degrees).
const BAY: (f64, f64, f64) = (-36.6, 0.25, 0.35);

/// Upwelling centre (lon offset from coast in degrees, lat) and radius (km).
const UPWELLING: (f64, f64, f64) = (0.25, -38.6, 45.0);

/// Kilometres per degree of latitude, a rounded mean (common practice, no source): the demo's
/// fields only need to be smooth and plausible, not geodesically exact.
const KM_PER_DEG: f64 = 111.2;

/// Longitude of the coastline at a latitude: a gentle wiggle plus the bay.
fn coast_lon(lat: f64) -> f64 {
    let wiggle = 0.25 * (2.0 * PI * (lat - NORTH) / 3.7).sin()
        + 0.1 * (2.0 * PI * (lat - NORTH) / 1.3).sin();
    let u = (lat - BAY.0) / BAY.1;
    let bay = if u.abs() < 1.0 {
        BAY.2 * (1.0 - u * u).sqrt()
    } else {
        0.0
    };
    -120.2 + wiggle - bay
}

/// Approximate distance (km) east of the coast; negative on land.
fn offshore_km(lon: f64, lat: f64) -> f64 {
    (lon - coast_lon(lat)) * KM_PER_DEG * lat.to_radians().cos()
}

/// Approximate distance (km) between two lon/lat points (equirectangular).
fn dist_km(a: (f64, f64), b: (f64, f64)) -> f64 {
    let mean_lat = (0.5 * (a.1 + b.1)).to_radians();
    let dx = (a.0 - b.0) * KM_PER_DEG * mean_lat.cos();
    let dy = (a.1 - b.1) * KM_PER_DEG;
    (dx * dx + dy * dy).sqrt()
}

/// Sea depth (m, positive down; negative is land elevation): a shelf to 200 m at 60 km, then a
/// slope to the abyss; shallow banks around the islands.
fn depth_m(lon: f64, lat: f64) -> f64 {
    let d = offshore_km(lon, lat);
    if d <= 0.0 {
        return 5.0 * d;
    }
    let mut depth = if d < 60.0 {
        5.0 + 195.0 * d / 60.0
    } else {
        200.0 + 3800.0 * (1.0 - (-(d - 60.0) / 40.0).exp())
    };
    for &(ilon, ilat, r) in &ISLANDS {
        let from_shore = dist_km((lon, lat), (ilon, ilat)) - r * KM_PER_DEG;
        if from_shore <= 0.0 {
            return 5.0 * from_shore;
        }
        depth = depth.min(5.0 + 8.0 * from_shore);
    }
    depth
}

/// Weight (0–1) of the upwelling cell at a point.
fn upwelling(lon: f64, lat: f64) -> f64 {
    let centre = (coast_lon(UPWELLING.1) + UPWELLING.0, UPWELLING.1);
    let d = dist_km((lon, lat), centre);
    (-(d / UPWELLING.2).powi(2)).exp()
}

/// Sea-surface temperature (°C) in a year under a warming rate: 19.5 °C at the northern edge,
/// about 0.9 °C cooler per degree poleward, slightly warmer offshore, 2 °C cooler in the
/// upwelling cell, which also warms at 40% of the regional rate.
fn sst_c(lon: f64, lat: f64, rate: f64, year: i32) -> f64 {
    let base = 19.5 + 0.9 * (lat - NORTH) + 0.004 * offshore_km(lon, lat).clamp(0.0, 250.0);
    let up = upwelling(lon, lat);
    base - 2.0 * up + rate * (year as f64 - BASE_YEAR) * (1.0 - 0.6 * up)
}

fn logistic(x: f64) -> f64 {
    1.0 / (1.0 + (-x).exp())
}

/// Habitat suitability (0–1): Gaussian thermal niche × soft depth range; below 0.02 is none.
fn suitability(s: &Species, temp: f64, depth: f64) -> f64 {
    if depth <= 0.0 {
        return 0.0;
    }
    let thermal = (-0.5 * ((temp - s.t_opt) / s.t_sd).powi(2)).exp();
    let w = 0.15 * (s.depth_max - s.depth_min).max(10.0);
    let depth_fit = logistic((depth - s.depth_min) / w) * logistic((s.depth_max - depth) / w);
    let v = thermal * depth_fit;
    if v < 0.02 {
        0.0
    } else {
        v
    }
}

/// Fishing port in the bay (lon, lat).
fn port() -> (f64, f64) {
    (coast_lon(BAY.0) + 0.05, BAY.0)
}

/// Forgone fishing value per km² (an invented index): high inshore, near the port and on the
/// shelf break.
fn fishing_cost(lon: f64, lat: f64) -> f64 {
    let d = offshore_km(lon, lat).max(0.0);
    let depth = depth_m(lon, lat);
    2.0 + 18.0 * (-d / 35.0).exp()
        + 12.0 * (-dist_km((lon, lat), port()) / 50.0).exp()
        + 5.0 * (-((depth - 200.0) / 120.0).powi(2)).exp()
}

/// Lattice of CSV points over the sea: (lon, lat) in row order (south to north, west to
/// east). Land points are left out, as ocean products leave them out.
fn lattice() -> Vec<(f64, f64)> {
    full_lattice()
        .into_iter()
        .filter(|&(lon, lat)| depth_m(lon, lat) > 0.0)
        .collect()
}

/// Every point of the lattice, land included.
fn full_lattice() -> Vec<(f64, f64)> {
    let n_lon = ((EAST - WEST) / STEP).round() as i64 + 1;
    let n_lat = ((NORTH - SOUTH) / STEP).round() as i64 + 1;
    let mut pts = Vec::with_capacity((n_lon * n_lat) as usize);
    for j in 0..n_lat {
        for i in 0..n_lon {
            pts.push((
                round(WEST + i as f64 * STEP, 6),
                round(SOUTH + j as f64 * STEP, 6),
            ));
        }
    }
    pts
}

fn round(v: f64, digits: i32) -> f64 {
    let f = 10f64.powi(digits);
    let r = (v * f).round() / f;
    if r == 0.0 {
        0.0 // no "-0"
    } else {
        r
    }
}

fn ring_json(ring: &[(f64, f64)]) -> String {
    let pts: Vec<String> = ring
        .iter()
        .map(|(x, y)| format!("[{},{}]", round(*x, 6), round(*y, 6)))
        .collect();
    format!("[{}]", pts.join(","))
}

/// One polygon feature: its properties (a JSON object) and its rings.
type PolygonFeature = (String, Vec<Vec<(f64, f64)>>);

fn feature_collection(features: &[PolygonFeature]) -> String {
    let mut out = String::from("{\"type\":\"FeatureCollection\",\"features\":[\n");
    for (k, (props, rings)) in features.iter().enumerate() {
        let rings: Vec<String> = rings.iter().map(|r| ring_json(r)).collect();
        let _ = writeln!(
            out,
            "{{\"type\":\"Feature\",\"properties\":{props},\"geometry\":{{\"type\":\"Polygon\",\"coordinates\":[{}]}}}}{}",
            rings.join(","),
            if k + 1 < features.len() { "," } else { "" }
        );
    }
    out.push_str("]}\n");
    out
}

/// A closed counter-clockwise circle ring (lon/lat) of `radius_deg` degrees of latitude.
fn circle(lon: f64, lat: f64, radius_deg: f64, n: usize) -> Vec<(f64, f64)> {
    let k = 1.0 / lat.to_radians().cos();
    let mut ring: Vec<(f64, f64)> = (0..n)
        .map(|i| {
            let a = 2.0 * PI * i as f64 / n as f64;
            (lon + radius_deg * k * a.cos(), lat + radius_deg * a.sin())
        })
        .collect();
    ring.push(ring[0]);
    ring
}

fn closed(mut ring: Vec<(f64, f64)>) -> Vec<(f64, f64)> {
    ring.push(ring[0]);
    ring
}

/// Every demo file: (path relative to the output folder, contents).
pub fn generate() -> std::io::Result<Vec<(PathBuf, Vec<u8>)>> {
    let mut files = Vec::new();
    let data = Path::new("demo-data");

    // Region: one rectangle; land is cut out by the land mask.
    let region = closed(vec![
        (WEST, SOUTH),
        (EAST, SOUTH),
        (EAST, NORTH),
        (WEST, NORTH),
    ]);
    files.push((
        data.join("region.geojson"),
        feature_collection(&[(
            "{\"name\":\"Merrow Coast planning region (invented)\"}".into(),
            vec![region],
        )]),
    ));

    // Land: west of the coastline (sampled every 0.02°), plus the two islands.
    let mut mainland = vec![(WEST - 1.0, NORTH + 0.5), (WEST - 1.0, SOUTH - 0.5)];
    let n = ((NORTH + 0.5 - (SOUTH - 0.5)) / 0.02).round() as usize;
    for i in 0..=n {
        let lat = SOUTH - 0.5 + i as f64 * 0.02;
        mainland.push((coast_lon(lat), lat));
    }
    let mut land = vec![(
        "{\"name\":\"Merrow mainland (invented)\"}".to_string(),
        vec![closed(mainland)],
    )];
    for (k, &(lon, lat, r)) in ISLANDS.iter().enumerate() {
        let name = ["Tarn Isle", "Little Skerrow"][k];
        land.push((
            format!("{{\"name\":\"{name} (invented)\"}}"),
            vec![circle(lon, lat, r, 48)],
        ));
    }
    files.push((data.join("land.geojson"), feature_collection(&land)));

    // Existing protected areas (required): an inshore box north of the bay and a ring of sea
    // around Tarn Isle (the island itself is land and drops out).
    let c = coast_lon(-35.0);
    let inshore = closed(vec![
        (c - 0.05, -35.25),
        (c + 0.3, -35.25),
        (c + 0.3, -34.9),
        (c - 0.05, -34.9),
    ]);
    let (ilon, ilat, r) = ISLANDS[0];
    let ring = circle(ilon, ilat, r + 0.15, 48);
    let protected: Vec<binary::PropertyPolygon> = [
        ("Northern Reef Reserve (invented)", &inshore),
        ("Tarn Isle Sanctuary (invented)", &ring),
    ]
    .iter()
    .map(|(name, r)| {
        (
            vec![
                ("name".to_string(), name.to_string()),
                ("status".to_string(), "existing".to_string()),
            ],
            r.to_vec(),
        )
    })
    .collect();
    files.push((
        data.join("protected.geojson"),
        feature_collection(&[
            (
                "{\"name\":\"Northern Reef Reserve (invented)\",\"status\":\"existing\"}".into(),
                vec![inshore],
            ),
            (
                "{\"name\":\"Tarn Isle Sanctuary (invented)\",\"status\":\"existing\"}".into(),
                vec![ring],
            ),
        ]),
    ));

    // Shipping lane (excluded): a 9 km wide band from the port east-north-east to the edge.
    let (plon, plat) = port();
    let (elon, elat) = (EAST + 0.2, -35.8);
    let (dx, dy) = (elon - plon, elat - plat);
    let len = (dx * dx + dy * dy).sqrt();
    let (nx, ny) = (-dy / len * 0.04, dx / len * 0.04);
    let lane = closed(vec![
        (plon - nx, plat - ny),
        (elon - nx, elat - ny),
        (elon + nx, elat + ny),
        (plon + nx, plat + ny),
    ]);
    files.push((
        data.join("shipping-lane.geojson"),
        feature_collection(&[(
            "{\"name\":\"Halden Bay shipping lane (invented)\"}".into(),
            vec![lane],
        )]),
    ));

    let pts = lattice();

    // Static layers: depth and fishing cost.
    let mut stat = String::from("lon,lat,depth_m,fishing_cost\n");
    for &(lon, lat) in &pts {
        let _ = writeln!(
            stat,
            "{lon},{lat},{},{}",
            round(depth_m(lon, lat), 1),
            round(fishing_cost(lon, lat), 3)
        );
    }
    files.push((data.join("static.csv"), stat));

    // Ocean layers per scenario and year: temperature and every species' suitability.
    for (scenario, rate) in SCENARIOS {
        for year in YEARS {
            let mut csv = String::from("lon,lat,sst_c");
            for s in &SPECIES {
                csv.push(',');
                csv.push_str(s.name);
            }
            csv.push('\n');
            for &(lon, lat) in &pts {
                let t = sst_c(lon, lat, rate, year);
                let d = depth_m(lon, lat);
                let _ = write!(csv, "{lon},{lat},{}", round(t, 3));
                for s in &SPECIES {
                    let _ = write!(csv, ",{}", round(suitability(s, t, d), 3));
                }
                csv.push('\n');
            }
            files.push((
                data.join("ocean").join(format!("{scenario}_{year}.csv")),
                csv,
            ));
        }
    }

    files.push((PathBuf::from("scenarios").join("demo.toml"), plan_toml()));

    // Climate-adaptation inputs and the plan that uses them.
    files.push((data.join("merrow-front.geojson"), front_geojson()));
    files.push((data.join("genetic-samples.geojson"), samples_geojson()));
    files.push((
        PathBuf::from("scenarios").join("demo-climate.toml"),
        climate_plan_toml(),
    ));

    // Connectivity: an invented surface current field and the plan that tracks larvae in it.
    let mut cur = String::from("lon,lat,u,v\n");
    for &(lon, lat) in &pts {
        let (u, v) = current_m_s(lon, lat);
        let _ = writeln!(cur, "{lon},{lat},{},{}", round(u, 4), round(v, 4));
    }
    files.push((data.join("currents.csv"), cur));
    files.push((
        PathBuf::from("scenarios").join("demo-connectivity.toml"),
        connectivity_plan_toml(),
    ));
    let mut out: Vec<(PathBuf, Vec<u8>)> = files
        .into_iter()
        .map(|(p, t)| (p, t.into_bytes()))
        .collect();
    out.extend(binary_files(data, &protected)?);
    Ok(out)
}

/// Name of the species whose habitat the climate demo reads from GeoTIFFs.
const RASTER_SPECIES: &str = "harbour-seagrass";

/// The climate demo's inputs in the formats planners receive: sea temperature as NetCDF-CF
/// (one file per scenario, every year on a no-leap time axis, Kelvin packed as short with a
/// scale factor, land as _FillValue, 0–360 longitudes, latitudes north to south), one
/// species' habitat as GeoTIFFs (land as nodata), the protected areas as a GeoPackage.
fn binary_files(
    data: &Path,
    protected: &[binary::PropertyPolygon],
) -> std::io::Result<Vec<(PathBuf, Vec<u8>)>> {
    use netcdf3::{AttrValue, Data, Var};
    let mut out = Vec::new();
    let pts = full_lattice();
    let n_lon = ((EAST - WEST) / STEP).round() as usize + 1;
    let n_lat = ((NORTH - SOUTH) / STEP).round() as usize + 1;
    // Lattice rows from the north, as rasters and most model output store them.
    let at = |i: usize, j_from_north: usize| pts[(n_lat - 1 - j_from_north) * n_lon + i];
    let text = |s: &str| AttrValue::Text(s.to_string());
    // Two steps a year, mid-January and mid-July (days of a 365-day year), ±1.5 °C of
    // season (southern summer in January), so the year's mean is the annual field.
    let seasons = [(15.0, 1.5), (196.0, -1.5)];
    for (scenario, rate) in SCENARIOS {
        let mut time = Vec::new();
        let mut tos = Vec::new();
        for year in YEARS {
            for (day, season) in seasons {
                time.push((year - 1850) as f64 * 365.0 + day);
                for j in 0..n_lat {
                    for i in 0..n_lon {
                        let (lon, lat) = at(i, j);
                        tos.push(if depth_m(lon, lat) > 0.0 {
                            // Packed: (K − 273.15) / 0.01 = °C × 100.
                            ((sst_c(lon, lat, rate, year) + season) * 100.0).round() as i16
                        } else {
                            i16::MIN
                        });
                    }
                }
            }
        }
        let lat: Vec<f64> = (0..n_lat)
            .map(|j| round(NORTH - j as f64 * STEP, 6))
            .collect();
        let lon: Vec<f64> = (0..n_lon)
            .map(|i| round(WEST + i as f64 * STEP + 360.0, 6))
            .collect();
        let vars = vec![
            Var {
                name: "time".into(),
                dims: vec![0],
                attrs: vec![
                    ("standard_name".into(), text("time")),
                    ("units".into(), text("days since 1850-01-01")),
                    ("calendar".into(), text("noleap")),
                ],
                data: Data::Double(time),
            },
            Var {
                name: "lat".into(),
                dims: vec![1],
                attrs: vec![
                    ("standard_name".into(), text("latitude")),
                    ("units".into(), text("degrees_north")),
                ],
                data: Data::Double(lat),
            },
            Var {
                name: "lon".into(),
                dims: vec![2],
                attrs: vec![
                    ("standard_name".into(), text("longitude")),
                    ("units".into(), text("degrees_east")),
                ],
                data: Data::Double(lon),
            },
            Var {
                name: "tos".into(),
                dims: vec![0, 1, 2],
                attrs: vec![
                    ("standard_name".into(), text("sea_surface_temperature")),
                    ("units".into(), text("K")),
                    ("scale_factor".into(), AttrValue::Double(vec![0.01])),
                    ("add_offset".into(), AttrValue::Double(vec![273.15])),
                    ("_FillValue".into(), AttrValue::Short(vec![i16::MIN])),
                ],
                data: Data::Short(tos),
            },
        ];
        let globals = vec![
            ("Conventions".into(), text("CF-1.8")),
            (
                "title".into(),
                text(&format!(
                    "Invented sea-surface temperature of the Merrow Coast demo, {scenario}"
                )),
            ),
        ];
        let dims = [
            ("time", YEARS.len() * seasons.len()),
            ("lat", n_lat),
            ("lon", n_lon),
        ];
        out.push((
            data.join("ocean").join(format!("sst_{scenario}.nc")),
            netcdf3::write(&dims, &globals, &vars),
        ));
        let species = SPECIES
            .iter()
            .find(|s| s.name == RASTER_SPECIES)
            .ok_or_else(|| std::io::Error::other("the raster species is one of the demo's"))?;
        for year in YEARS {
            let mut values = Vec::with_capacity(n_lon * n_lat);
            for j in 0..n_lat {
                for i in 0..n_lon {
                    let (lon, lat) = at(i, j);
                    let d = depth_m(lon, lat);
                    values.push(if d > 0.0 {
                        round(suitability(species, sst_c(lon, lat, rate, year), d), 3)
                    } else {
                        f64::NAN
                    });
                }
            }
            out.push((
                data.join("rasters")
                    .join(format!("{RASTER_SPECIES}_{scenario}_{year}.tif")),
                binary::geotiff(WEST, NORTH, STEP, (n_lon, n_lat), &values)?,
            ));
        }
    }
    out.push((
        data.join("protected.gpkg"),
        binary::geopackage("protected_areas", protected)?,
    ));
    Ok(out)
}

/// Latitude (degrees) of the invented Merrow Front: the 0.5°-wide window of latitudes that
/// holds the most species range edges (5th and 95th habitat-weighted percentiles of latitude,
/// weights suitability × cos lat on the CSV lattice) in the first year of the middle scenario.
/// Windows are centred every 0.05° from 1° inside the region's southern edge to 1° inside its
/// northern edge, because the edges of ranges cut off by the region's limits pile up there;
/// the first of equally full windows wins.
fn front_lat() -> f64 {
    let (_, rate) = SCENARIOS[1];
    let pts = lattice();
    let mut edges = Vec::new();
    for s in &SPECIES {
        let pairs: Vec<(f64, f64)> = pts
            .iter()
            .filter_map(|&(lon, lat)| {
                let v = suitability(s, sst_c(lon, lat, rate, YEARS[0]), depth_m(lon, lat));
                (v > 0.0).then(|| (lat, v * lat.to_radians().cos()))
            })
            .collect();
        for q in [0.05, 0.95] {
            if let Some(e) = crate::climate::weighted_quantile(&pairs, q) {
                edges.push(e);
            }
        }
    }
    let (mut best, mut best_count) = (0.5 * (SOUTH + NORTH), 0usize);
    let n = ((NORTH - SOUTH - 2.0) / 0.05).round() as usize;
    for i in 0..=n {
        let centre = SOUTH + 1.0 + i as f64 * 0.05;
        let count = edges.iter().filter(|e| (*e - centre).abs() <= 0.25).count();
        if count > best_count {
            best = centre;
            best_count = count;
        }
    }
    round(best, 2)
}

/// The Merrow Front (invented): a biogeographic boundary line from the coast out to the
/// region's eastern edge at [`front_lat`], with a gentle meander. One GeoJSON LineString.
fn front_geojson() -> String {
    let lat0 = front_lat();
    let start = coast_lon(lat0) - 0.05;
    let end = EAST + 0.1;
    let n = 40;
    let pts: Vec<(f64, f64)> = (0..=n)
        .map(|i| {
            let lon = start + (end - start) * i as f64 / n as f64;
            (lon, lat0 + 0.08 * (2.0 * PI * (lon - start) / 1.5).sin())
        })
        .collect();
    format!(
        "{{\"type\":\"FeatureCollection\",\"features\":[\n{{\"type\":\"Feature\",\"properties\":{{\"name\":\"Merrow Front (invented)\",\"kind\":\"biogeographic boundary\"}},\"geometry\":{{\"type\":\"LineString\",\"coordinates\":{}}}}}\n]}}\n",
        ring_json(&pts)
    )
}

/// Genetic sampling sites (invented): lon, lat and the frequency of one allele of an invented
/// locus. Frequencies follow a cline across the front; the two island populations and the
/// upwelling population are set apart (isolation and local retention, invented).
fn sample_sites() -> Vec<(String, f64, f64, f64)> {
    let front = front_lat();
    let shelf = |lat: f64| coast_lon(lat) + 20.0 / (KM_PER_DEG * lat.to_radians().cos());
    let cline = |lat: f64| 0.5 + 0.3 * ((lat - front) / 0.6).tanh();
    let mut sites = Vec::new();
    for (k, lat) in [-34.5, -35.9, -37.0, -37.6, -39.2].into_iter().enumerate() {
        sites.push((format!("shelf-{}", k + 1), shelf(lat), lat, cline(lat)));
    }
    let (ilon, ilat, r) = ISLANDS[0];
    sites.push(("tarn-isle".into(), ilon + r + 0.1, ilat, cline(ilat) - 0.35));
    let (ilon, ilat, r) = ISLANDS[1];
    sites.push((
        "little-skerrow".into(),
        ilon + r + 0.1,
        ilat,
        cline(ilat) + 0.3,
    ));
    let up = (coast_lon(UPWELLING.1) + UPWELLING.0, UPWELLING.1);
    sites.push(("upwelling".into(), up.0, up.1, 0.08));
    sites
        .into_iter()
        .map(|(n, lon, lat, p)| (n, lon, lat, p.clamp(0.0, 1.0)))
        .collect()
}

/// Genetic samples as GeoJSON points with `gst`: Nei's G_ST (Nei 1973) between the site and
/// the pooled sample (mean allele frequency over all sites), a measure of how distinct the
/// site's population is.
fn samples_geojson() -> String {
    let sites = sample_sites();
    let mean = sites.iter().map(|s| s.3).sum::<f64>() / sites.len() as f64;
    let mut out = String::from("{\"type\":\"FeatureCollection\",\"features\":[\n");
    for (k, (name, lon, lat, p)) in sites.iter().enumerate() {
        // Frequencies in [0, 1] summing to 1 by construction, so G_ST is defined.
        let gst =
            crate::features::distinctness::nei_gst(&[vec![*p, 1.0 - p], vec![mean, 1.0 - mean]])
                .expect("two valid allele-frequency rows");
        let _ = writeln!(
            out,
            "{{\"type\":\"Feature\",\"properties\":{{\"site\":\"{name}\",\"allele_freq\":{},\"gst\":{}}},\"geometry\":{{\"type\":\"Point\",\"coordinates\":[{},{}]}}}}{}",
            round(*p, 4),
            round(gst, 4),
            round(*lon, 6),
            round(*lat, 6),
            if k + 1 < sites.len() { "," } else { "" }
        );
    }
    out.push_str("]}\n");
    out
}

/// The demo plan with climate-adaptation features: targets on leading edges, refugia, the
/// front and distinct populations; weights on corridors and trailing edges.
fn climate_plan_toml() -> String {
    let base = plan_toml()
        .replacen(
            "# driftplan demo plan: the Merrow Coast",
            "# driftplan climate demo plan: the Merrow Coast",
            1,
        )
        .replacen(
            "name = \"merrow-coast-demo\"",
            "name = \"merrow-coast-climate-demo\"",
            1,
        );
    // Inputs as planners receive them: NetCDF-CF temperature, a GeoTIFF habitat, a GeoPackage.
    let base = base
        .replacen(
            "[temperature]\npath = \"../demo-data/ocean/{scenario}_{year}.csv\"\ncolumn = \"sst_c\"\n",
            "[temperature]\n# Sea-surface temperature as climate models deliver it: NetCDF-CF, one file per\n# scenario with every year on a no-leap time axis (the year's value is the mean of its\n# time steps), Kelvin packed as short with a scale factor, land as _FillValue.\npath = \"../demo-data/ocean/sst_{scenario}.nc\"\nvariable = \"tos\"\n",
            1,
        )
        .replacen(
            "path = \"../demo-data/protected.geojson\"",
            "path = \"../demo-data/protected.gpkg\"    # a GeoPackage, as agencies publish them",
            1,
        )
        .replacen(
            &format!("name = \"{RASTER_SPECIES}\"\nhabitat = {{ path = \"../demo-data/ocean/{{scenario}}_{{year}}.csv\", column = \"{{species}}\" }}"),
            &format!("name = \"{RASTER_SPECIES}\"\n# A habitat model delivered as GeoTIFFs (one band, land as nodata).\nhabitat = {{ path = \"../demo-data/rasters/{{species}}_{{scenario}}_{{year}}.tif\" }}"),
            1,
        );
    base + r#"
# ---------------------------------------------------------------- climate-adaptation features
# Inspect every derived layer with `driftplan features scenarios/demo-climate.toml --out DIR`.

[climate.velocity]
# Computed from [temperature] by the gradient method; flat water is floored at this gradient.
min_gradient_c_per_km = 0.0005

[climate.trajectories]
horizon_years = 60        # 2030 to 2090
step_years = 1

[climate.corridor]
# Water that climate trajectories cross between today's and 2090's habitat: weight only.
min_habitat_share = 0.1
weight = 1

[climate.leading-edge]
# Habitat within 60 km of each species' poleward (southern) range edge, every year.
band_km = 60
quantile = 0.95
target = 0.3

[climate.trailing-edge]
band_km = 60
quantile = 0.05
weight = 0.5

[climate.refugium]
# The quarter of the sea where isotherms move slowest (the upwelling cell and steep fronts).
metric = "speed"
low_quantile = 0.25
target = 0.3

[climate.boundary]
# The Merrow Front, where many range edges meet.
lines = "../demo-data/merrow-front.geojson"
band_km = 30
decay = "linear"
target = 0.2

[climate.distinctness]
# Genetically distinct populations (Nei's G_ST against the pooled sample), spread 40 km.
points = "../demo-data/genetic-samples.geojson"
attribute = "gst"
radius_km = 40
method = "idw"
target = 0.3

[climate.time]
weights = "equal"
"#
}

/// The demo's invented surface current (u east, v north; m/s): a poleward (southward)
/// boundary current over the shelf, strongest 30 km offshore, an equatorward counter-current
/// beyond the shelf break around 130 km out, and gentle cross-shelf meanders.
fn current_m_s(lon: f64, lat: f64) -> (f64, f64) {
    let d = offshore_km(lon, lat).max(0.0);
    let along =
        -0.35 * (-((d - 30.0) / 25.0).powi(2)).exp() + 0.15 * (-((d - 130.0) / 40.0).powi(2)).exp();
    let across = 0.04 * (2.0 * PI * (lat - NORTH) / 1.5).sin() * (-d / 80.0).exp();
    (across, along)
}

/// The connectivity demo plan: the demo plan with larvae of three species tracked in the
/// invented currents, a reachability target per species and scenario, and a reward for larval
/// exchange between reserves.
fn connectivity_plan_toml() -> String {
    let mut t = plan_toml()
        .replace(
            "name = \"merrow-coast-demo\"",
            "name = \"merrow-coast-connectivity-demo\"",
        )
        .replace(
            "# driftplan demo plan:",
            "# driftplan connectivity demo plan:",
        )
        .replace(
            "robustness = \"every-scenario\"\n",
            "robustness = \"every-scenario\"\n# Reward larval exchange between chosen cells: at 50 cost units per unit of link strength\n# the network keeps about twice the share of its larvae for about 6% more cost.\nconnectivity_weight = 50\n",
        );
    t.push_str(
        r#"
[connectivity]
# Larvae drift in an invented current: a poleward boundary current over the shelf and an
# equatorward counter-current offshore (the same field in every scenario).
u = { path = "../demo-data/currents.csv", column = "u" }
v = { path = "../demo-data/currents.csv", column = "v" }
particles_per_cell = 20
seed = 7
reachability_target = 0.3   # 30% of each species' settler-weighted reach of its 2090 habitat

[[connectivity.species]]
name = "amber-wrasse"
larval_days = 25
diffusivity_m2_s = 10
settle_from_day = 20
settle_to_day = 25

[[connectivity.species]]
name = "emerald-urchin"
larval_days = 40
diffusivity_m2_s = 10

[[connectivity.species]]
name = "jade-rock-lobster"
larval_days = 60
diffusivity_m2_s = 20
settle_from_day = 45
settle_to_day = 60
"#,
    );
    t
}

/// The demo plan file (lives in `scenarios/`, so data paths start with `../demo-data/`).
fn plan_toml() -> String {
    let mut t = String::new();
    t.push_str(
        r#"# driftplan demo plan: the Merrow Coast, an invented region with invented data
# (regenerate with `driftplan demo`). Paths are relative to this file.
name = "merrow-coast-demo"
region = "../demo-data/region.geojson"
land = "../demo-data/land.geojson"

[grid]
cell_size_km = 5          # side of a square equal-area cell
crs = "auto"              # Lambert azimuthal equal-area centred on the region
min_sea_share = 0.1       # drop cells with less than 10% sea

[scenarios]
names = ["ssp1-2.6", "ssp2-4.5", "ssp5-8.5"]
years = [2030, 2050, 2070, 2090]

[temperature]
path = "../demo-data/ocean/{scenario}_{year}.csv"
column = "sst_c"

[targets]
# 30% of each species' habitat in every scenario and year (the share of Kunming-Montreal
# Global Biodiversity Framework Target 3).
default = 0.3

[cost]
# Forgone fishing value per km²; a cell costs this times its sea area.
path = "../demo-data/static.csv"
column = "fishing_cost"

[required]
# Existing protected areas: cells at least half inside are in every network.
path = "../demo-data/protected.geojson"
min_share = 0.5

[excluded]
# The shipping lane: any cell it touches may not be chosen.
path = "../demo-data/shipping-lane.geojson"
min_share = 0.01

[budget]
max_share = 0.5           # at most half of the region's sea

[optimise]
objective = "min-cost"
robustness = "every-scenario"

[solver]
time_limit_s = 120        # for all the solves of one command together (main solve and stress test)
gap = 0.005
"#,
    );
    for s in &SPECIES {
        let _ = write!(
            t,
            "\n[[species]]\nname = \"{}\"\nhabitat = {{ path = \"../demo-data/ocean/{{scenario}}_{{year}}.csv\", column = \"{{species}}\" }}\n",
            s.name
        );
    }
    t
}

/// Writes every demo file under `dir` (creating folders) and returns the plan file's path and
/// every file written, relative to `dir` and `/`-separated.
pub fn write(dir: &Path) -> std::io::Result<(PathBuf, Vec<String>)> {
    let mut written = Vec::new();
    for (rel, text) in generate()? {
        let path = dir.join(&rel);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent)?;
        }
        let tmp = path.with_extension("tmp-write");
        std::fs::write(&tmp, text)?;
        std::fs::rename(&tmp, &path)?;
        written.push(rel.to_string_lossy().replace('\\', "/"));
    }
    Ok((dir.join("scenarios").join("demo.toml"), written))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn generation_is_deterministic() {
        assert_eq!(generate().unwrap(), generate().unwrap());
    }

    #[test]
    fn sea_cools_poleward_and_warms_with_time() {
        // In the southern hemisphere poleward is south: lower latitude number, cooler water.
        let lon = -118.0;
        assert!(sst_c(lon, -39.0, 0.018, 2030) < sst_c(lon, -34.5, 0.018, 2030));
        // 0.018 °C/yr over 60 years outside the upwelling cell: +1.08 °C (hand computation).
        let warm = sst_c(lon, -34.5, 0.018, 2090) - sst_c(lon, -34.5, 0.018, 2030);
        assert!((warm - 1.08).abs() < 1e-9, "{warm}");
    }

    #[test]
    fn samples_carry_nei_gst_against_the_pooled_sample() {
        // Closed form for one biallelic locus, site frequency p and pooled mean m:
        // H_S = (2p(1−p) + 2m(1−m))/2, H_T = 2p̄(1−p̄) with p̄ = (p + m)/2 (Nei 1973).
        let sites = sample_sites();
        let m = sites.iter().map(|s| s.3).sum::<f64>() / sites.len() as f64;
        let text = samples_geojson();
        for (name, _, _, p) in &sites {
            let hs = (2.0 * p * (1.0 - p) + 2.0 * m * (1.0 - m)) / 2.0;
            let pb = 0.5 * (p + m);
            let ht = 2.0 * pb * (1.0 - pb);
            let want = round((ht - hs) / ht, 4);
            assert!(
                text.contains(&format!(
                    "\"site\":\"{name}\",\"allele_freq\":{},\"gst\":{want}}}",
                    round(*p, 4)
                )),
                "{name}: {want}"
            );
        }
        // The upwelling population is the most distinct (set apart on purpose): farthest
        // from the pooled frequency, so the largest G_ST.
        let far = sites
            .iter()
            .max_by(|a, b| (a.3 - m).abs().total_cmp(&(b.3 - m).abs()))
            .unwrap();
        assert_eq!(far.0, "upwelling");
    }

    #[test]
    fn front_holds_the_most_range_edges() {
        // Brute force, independently of `front_lat`'s loop: the edges within ±0.25° of the
        // front are at least as many as around any latitude on a 0.01° grid inside the
        // searched span, and the line runs from land out past the region's eastern edge.
        let (_, rate) = SCENARIOS[1];
        let mut edges = Vec::new();
        for s in &SPECIES {
            let pairs: Vec<(f64, f64)> = lattice()
                .into_iter()
                .filter_map(|(lon, lat)| {
                    let v = suitability(s, sst_c(lon, lat, rate, YEARS[0]), depth_m(lon, lat));
                    (v > 0.0).then(|| (lat, v * lat.to_radians().cos()))
                })
                .collect();
            edges.push(crate::climate::weighted_quantile(&pairs, 0.05).unwrap());
            edges.push(crate::climate::weighted_quantile(&pairs, 0.95).unwrap());
        }
        let count = |c: f64| {
            edges
                .iter()
                .filter(|e| (*e - c).abs() <= 0.25 + 1e-9)
                .count()
        };
        let front = front_lat();
        assert!((SOUTH + 1.0..=NORTH - 1.0).contains(&front));
        let best = (0..=350)
            .map(|i| count(SOUTH + 1.0 + i as f64 * 0.01))
            .max()
            .unwrap();
        // A 0.01° grid can catch a window the 0.05° search steps over by at most one edge.
        assert!(
            count(front) + 1 >= best && count(front) >= 3,
            "{} vs {best}",
            count(front)
        );
        let line = front_geojson();
        assert!(line.contains("\"LineString\""));
        assert!(depth_m(coast_lon(front) - 0.05, front) < 0.0);
    }

    #[test]
    fn coast_has_land_west_and_sea_east() {
        assert!(depth_m(-121.4, -37.0) < 0.0);
        assert!(depth_m(-117.5, -37.0) > 1000.0);
        // Inside the bay the coast retreats west by the bay depth (0.35°) at its centre.
        let no_bay = -120.2
            + 0.25 * (2.0 * PI * (BAY.0 - NORTH) / 3.7).sin()
            + 0.1 * (2.0 * PI * (BAY.0 - NORTH) / 1.3).sin();
        assert!((coast_lon(BAY.0) - (no_bay - 0.35)).abs() < 1e-12);
    }
}
