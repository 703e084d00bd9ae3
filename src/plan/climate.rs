//! The `[climate]` section of a plan: which derived climate-adaptation features to build, how,
//! and what the network must hold of each. Every key is optional except where a sub-table
//! needs its inputs; every problem is reported with its dotted key.
//!
//! ```toml
//! [climate.velocity]            # computed from [temperature] unless `speed` and `bearing` are given
//! min_gradient_c_per_km = 0.0005
//!
//! [climate.trajectories]
//! horizon_years = 60            # default: last year − first year of the plan
//! step_years = 1
//! corridor_quantile = 0.9
//!
//! [climate.corridor]
//! weight = 1                    # `target` (share 0–1) and/or `weight`
//!
//! [climate.leading-edge]
//! band_km = 100
//! quantile = 0.95
//! axis = "latitude"             # or a GeoJSON line file, e.g. "coast-axis.geojson"
//! target = 0.3
//!
//! [climate.refugium]
//! low_quantile = 0.25
//! target = 0.3
//!
//! [climate.boundary]
//! lines = "fronts.geojson"
//! band_km = 30
//! target = 0.2
//!
//! [climate.distinctness]
//! points = "samples.geojson"
//! attribute = "fst"
//! radius_km = 40
//! target = 0.3
//!
//! [climate.time]
//! weights = "discount"
//! discount_rate = 0.03
//! combine_years = true
//! ```

use super::terms::{Decay, Interpolation, Target};
use super::{reference, Checker, Extra, LayerTemplate, RawLayer};
use crate::climate::{ExposureMetric, TrajectoryParams};
use crate::layers::{Missing, Sampling};
use serde::Deserialize;
use std::path::PathBuf;

/// What the climate section is validated against.
pub(crate) struct Context<'a> {
    /// Scenario names.
    pub scenarios: &'a [String],
    /// Years.
    pub years: &'a [i32],
    /// Species names.
    #[allow(dead_code)] // part of the hook's contract; species-specific keys may use it
    pub species: &'a [&'a str],
    /// Whether the plan has a `[temperature]` layer.
    pub has_temperature: bool,
}

// ---------------------------------------------------------------- raw, as written in TOML

/// `[climate]` as written.
#[derive(Deserialize)]
pub(crate) struct RawClimate {
    velocity: Option<RawVelocity>,
    trajectories: Option<RawTrajectories>,
    corridor: Option<RawCorridor>,
    #[serde(rename = "leading-edge")]
    leading_edge: Option<RawEdge>,
    #[serde(rename = "trailing-edge")]
    trailing_edge: Option<RawEdge>,
    refugium: Option<RawRefugium>,
    boundary: Option<RawBoundary>,
    distinctness: Option<RawDistinctness>,
    time: Option<RawTime>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawVelocity {
    min_gradient_c_per_km: Option<f64>,
    speed: Option<RawLayer>,
    bearing: Option<RawLayer>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawTrajectories {
    horizon_years: Option<f64>,
    step_years: Option<f64>,
    corridor_quantile: Option<f64>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawCorridor {
    min_habitat_share: Option<f64>,
    target: Option<f64>,
    weight: Option<f64>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawEdge {
    band_km: Option<f64>,
    quantile: Option<f64>,
    axis: Option<String>,
    target: Option<f64>,
    weight: Option<f64>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawRefugium {
    metric: Option<String>,
    low_quantile: Option<f64>,
    min_habitat_share: Option<f64>,
    per_species: Option<bool>,
    low_exposure_only: Option<bool>,
    polygons: Option<RawLayer>,
    score: Option<RawLayer>,
    target: Option<f64>,
    weight: Option<f64>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawBoundary {
    lines: Option<String>,
    band_km: Option<f64>,
    decay: Option<String>,
    scale_km: Option<f64>,
    edge_density: Option<bool>,
    edge_band_km: Option<f64>,
    axis: Option<String>,
    target: Option<f64>,
    weight: Option<f64>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawDistinctness {
    points: Option<String>,
    attribute: Option<String>,
    radius_km: Option<f64>,
    method: Option<String>,
    power: Option<f64>,
    layer: Option<RawLayer>,
    target: Option<f64>,
    weight: Option<f64>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawTime {
    weights: Option<String>,
    discount_rate: Option<f64>,
    combine_years: Option<bool>,
    #[serde(flatten)]
    extra: Extra,
}

// ---------------------------------------------------------------- validated

/// What the network must hold of a derived feature: a target share and/or a weight in
/// benefit objectives (keys `target` and `weight` of every feature sub-table).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Goal {
    /// Share (0–1) of the feature's total amount the network must hold; `None`: no target.
    pub target: Option<f64>,
    /// Weight in benefit objectives (default 1).
    pub weight: f64,
}

impl Goal {
    /// The feature target: the share, or `Share(0.0)` for a weight-only feature.
    pub fn target(&self) -> Target {
        Target::Share(self.target.unwrap_or(0.0))
    }
}

/// Where climate velocity comes from (`[climate.velocity]`).
#[derive(Debug, Clone, PartialEq)]
pub enum VelocitySource {
    /// Gradient method on the plan's `[temperature]` layers (Loarie et al. 2009).
    FromTemperature {
        /// Gradient floor, key `min_gradient_c_per_km`. Units: °C/km.
        min_gradient_c_per_km: f64,
    },
    /// Given per scenario as layers (keys `speed` and `bearing`; paths may use `{scenario}`).
    Supplied {
        /// Speed of the isotherms. Units: km/yr.
        speed: Box<LayerTemplate>,
        /// Direction they move, degrees clockwise from true north.
        bearing: Box<LayerTemplate>,
    },
}

/// The axis range edges are measured along (key `axis`).
#[derive(Debug, Clone, PartialEq)]
pub enum AxisPlan {
    /// `axis = "latitude"` (the default): meridian distance from the equator.
    Latitude,
    /// `axis = "line.geojson"`: distance along a GeoJSON line (WGS84 lon/lat), e.g. a coast's
    /// general direction. Positions grow from the line's first point to its last; poleward
    /// follows from that direction's latitude change and the species' hemisphere.
    Line(PathBuf),
}

/// `[climate.corridor]`: density of climate trajectories linking first-year to last-year
/// habitat, one feature `corridor/<scenario>` (unit: trajectories).
#[derive(Debug, Clone, PartialEq)]
pub struct CorridorPlan {
    /// Key `min_habitat_share`: a cell holds habitat when more than this share (0–1) of its
    /// sea is suitable (default 0).
    pub min_habitat_share: f64,
    /// Target and weight.
    pub goal: Goal,
}

/// `[climate.leading-edge]` / `[climate.trailing-edge]`: habitat near a species' poleward /
/// equatorward range edge, one feature per species, scenario and year
/// (`leading-edge/<species>/<scenario>/<year>`, km²).
#[derive(Debug, Clone, PartialEq)]
pub struct EdgePlan {
    /// Key `band_km`: width of the edge zone inside the range (default 100). Units: km.
    pub band_km: f64,
    /// Key `quantile`: habitat-weighted quantile of poleward position that marks the edge
    /// (default 0.95 leading, 0.05 trailing).
    pub quantile: f64,
    /// Key `axis`.
    pub axis: AxisPlan,
    /// Target and weight.
    pub goal: Goal,
}

/// Where the climate refugium comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum RefugiumSource {
    /// Low-exposure water: the lowest `low_quantile` of the metric.
    Computed {
        /// Key `metric`: `speed` (climate velocity, the default) or `warming` (trend).
        metric: ExposureMetric,
        /// Key `low_quantile`: cells at or below this quantile are refugia (default 0.25).
        low_quantile: f64,
    },
    /// Key `polygons`: refugium polygons; amount = covered share × sea area.
    Polygons(LayerTemplate),
    /// Key `score`: a per-cell score (0–1); amount = score × sea area.
    Score(LayerTemplate),
}

/// `[climate.refugium]`: feature `refugium/<scenario>` (km² of refuge water, score-weighted
/// when supplied) and, with `per_species = true`, `refugium/<species>/<scenario>` (habitat
/// present in every year, km²).
#[derive(Debug, Clone, PartialEq)]
pub struct RefugiumPlan {
    /// Computed or supplied.
    pub source: RefugiumSource,
    /// Key `min_habitat_share`: persistence threshold, share (0–1) of a cell's sea that must
    /// be suitable in every year (default 0).
    pub min_habitat_share: f64,
    /// Key `per_species` (default false).
    pub per_species: bool,
    /// Key `low_exposure_only`: species refugia only in refuge water (default false).
    pub low_exposure_only: bool,
    /// Target and weight.
    pub goal: Goal,
}

/// `[climate.boundary]`: water near biogeographic boundary lines (feature `boundary`, km²
/// weighted by distance decay) and/or where many range edges cluster
/// (`boundary/<scenario>/<year>`, km² × edges).
#[derive(Debug, Clone, PartialEq)]
pub struct BoundaryPlan {
    /// Key `lines`: GeoJSON LineStrings (WGS84 lon/lat).
    pub lines: Option<PathBuf>,
    /// Key `band_km`: reach of a line (default 30). Units: km.
    pub band_km: f64,
    /// Keys `decay` (`linear`, the default, or `exponential`) and `scale_km` (default band/3).
    pub decay: Decay,
    /// Key `edge_density` (default false).
    pub edge_density: bool,
    /// Key `edge_band_km`: window for counting range edges near a cell (default 25). Units: km.
    pub edge_band_km: f64,
    /// Key `axis` for the range edges (default latitude).
    pub axis: AxisPlan,
    /// Target and weight.
    pub goal: Goal,
}

/// Where distinctness values come from.
#[derive(Debug, Clone, PartialEq)]
pub enum DistinctnessSource {
    /// Keys `points`, `attribute`, `radius_km` (default 50), `method` (`idw`, the default,
    /// or `nearest`) and `power` (IDW exponent, default 2).
    Points {
        /// GeoJSON points file.
        path: PathBuf,
        /// Numeric property holding the value (e.g. pairwise F_ST).
        attribute: String,
        /// Search radius. Units: km.
        radius_km: f64,
        /// Interpolation.
        method: Interpolation,
    },
    /// Key `layer`: a per-cell distinctness layer.
    Layer(LayerTemplate),
}

/// `[climate.distinctness]`: feature `distinctness` (km² × value).
#[derive(Debug, Clone, PartialEq)]
pub struct DistinctnessPlan {
    /// Points or a layer.
    pub source: DistinctnessSource,
    /// Target and weight.
    pub goal: Goal,
}

/// `[climate.time]`: how years count.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimePlan {
    /// Keys `weights = "equal"` (the default) or `"discount"` with `discount_rate` (per year,
    /// e.g. 0.03): `None` means equal.
    pub discount_rate: Option<f64>,
    /// Key `combine_years`: per-year derived features (edges, edge-density boundaries) become
    /// one time-weighted feature per species and scenario instead of one target per year.
    /// Without it the time weights scale each year's objective weight (× number of years, so
    /// equal weights leave weights unchanged).
    pub combine_years: bool,
}

/// Validated `[climate]` settings.
#[derive(Debug, Clone, PartialEq)]
pub struct ClimatePlan {
    /// `[climate.velocity]`.
    pub velocity: VelocitySource,
    /// `[climate.trajectories]`.
    pub trajectories: TrajectoryParams,
    /// `[climate.corridor]`.
    pub corridor: Option<CorridorPlan>,
    /// `[climate.leading-edge]`.
    pub leading_edge: Option<EdgePlan>,
    /// `[climate.trailing-edge]`.
    pub trailing_edge: Option<EdgePlan>,
    /// `[climate.refugium]`.
    pub refugium: Option<RefugiumPlan>,
    /// `[climate.boundary]`.
    pub boundary: Option<BoundaryPlan>,
    /// `[climate.distinctness]`.
    pub distinctness: Option<DistinctnessPlan>,
    /// `[climate.time]`.
    pub time: TimePlan,
}

impl ClimatePlan {
    /// True when some feature needs climate velocity (corridors; computed refugia; species
    /// refugia limited to refuge water that is computed).
    pub fn needs_velocity(&self) -> bool {
        self.corridor.is_some()
            || self
                .refugium
                .as_ref()
                .is_some_and(|r| matches!(r.source, RefugiumSource::Computed { .. }))
    }
}

// ---------------------------------------------------------------- validation

fn goal(ck: &mut Checker, key: &str, target: Option<f64>, weight: Option<f64>) -> Goal {
    if target.is_none() && weight.is_none() {
        ck.push(
            format!("{key}.target"),
            "give `target` (a share 0–1 of the feature's total, e.g. `target = 0.3`) and/or `weight` (e.g. `weight = 1`)",
        );
    }
    let target = target.map(|t| ck.share(&format!("{key}.target"), t, true));
    let weight = weight.unwrap_or(1.0);
    if !(weight.is_finite() && weight >= 0.0) {
        ck.push(
            format!("{key}.weight"),
            format!("must be a non-negative number, got {weight}"),
        );
    }
    Goal { target, weight }
}

fn positive_km(ck: &mut Checker, key: &str, v: Option<f64>, default: f64) -> f64 {
    match v {
        None => default,
        Some(v) if v.is_finite() && v > 0.0 => v,
        Some(v) => {
            ck.push(
                key,
                format!("must be a positive number of kilometres, e.g. `{default}`; got {v}"),
            );
            default
        }
    }
}

/// A quantile strictly inside (0, 1).
fn open_share(ck: &mut Checker, key: &str, v: Option<f64>, default: f64) -> f64 {
    match v {
        None => default,
        Some(v) if v > 0.0 && v < 1.0 => v,
        Some(v) => {
            ck.push(
                key,
                format!("must be a number strictly between 0 and 1, e.g. `{default}`; got {v}"),
            );
            default
        }
    }
}

fn axis(ck: &mut Checker, key: &str, raw: Option<&str>) -> AxisPlan {
    match raw {
        None | Some("latitude") => AxisPlan::Latitude,
        Some(p) => {
            let lower = p.to_ascii_lowercase();
            if lower.ends_with(".geojson") || lower.ends_with(".json") {
                AxisPlan::Line(ck.existing_file(key, p))
            } else {
                ck.push(
                    key,
                    format!("`{p}`: expected `\"latitude\"` or a GeoJSON line file (`.geojson`)"),
                );
                AxisPlan::Latitude
            }
        }
    }
}

fn geojson_file(ck: &mut Checker, key: &str, p: &str) -> PathBuf {
    let lower = p.to_ascii_lowercase();
    if !(lower.ends_with(".geojson") || lower.ends_with(".json")) {
        ck.push(key, format!("`{p}`: expected a GeoJSON file (`.geojson`)"));
    }
    ck.existing_file(key, p)
}

/// A supplied per-scenario layer: may use `{scenario}`, not `{species}` or `{year}`.
fn scenario_layer(
    ck: &mut Checker,
    key: &str,
    raw: &RawLayer,
    ctx: &Context<'_>,
) -> Option<LayerTemplate> {
    let t = ck.layer(key, raw, Missing::Error)?;
    let f = t.field.as_deref().unwrap_or("");
    for bad in ["{species}", "{year}"] {
        if t.path.contains(bad) || f.contains(bad) {
            ck.push(
                format!("{key}.path"),
                format!("may use `{{scenario}}` but not `{bad}` (one layer per scenario)"),
            );
        }
    }
    ck.template_files(key, &t, &[], ctx.scenarios, &[]);
    Some(t)
}

fn edge(ck: &mut Checker, key: &str, raw: &RawEdge, default_q: f64) -> EdgePlan {
    ck.unknown(
        key,
        &raw.extra,
        &reference::keys_of("climate.leading-edge, climate.trailing-edge"),
    );
    EdgePlan {
        band_km: positive_km(ck, &format!("{key}.band_km"), raw.band_km, 100.0),
        quantile: open_share(ck, &format!("{key}.quantile"), raw.quantile, default_q),
        axis: axis(ck, &format!("{key}.axis"), raw.axis.as_deref()),
        goal: goal(ck, key, raw.target, raw.weight),
    }
}

/// Validates `[climate]`, pushing every problem to `ck`. Returns `None` only when the
/// section cannot be used at all (never here: problems are collected and the plan fails).
pub(crate) fn validate(
    raw: &RawClimate,
    ck: &mut Checker,
    ctx: &Context<'_>,
) -> Option<ClimatePlan> {
    ck.unknown("climate", &raw.extra, &reference::keys_of("climate"));

    // Velocity.
    let velocity = match &raw.velocity {
        None => VelocitySource::FromTemperature {
            min_gradient_c_per_km: 0.0005,
        },
        Some(v) => {
            ck.unknown(
                "climate.velocity",
                &v.extra,
                &reference::keys_of("climate.velocity"),
            );
            match (&v.speed, &v.bearing) {
                (None, None) => {
                    let g = v.min_gradient_c_per_km.unwrap_or(0.0005);
                    if !(g.is_finite() && g > 0.0) {
                        ck.push(
                            "climate.velocity.min_gradient_c_per_km",
                            format!("must be a positive gradient in °C/km, e.g. 0.0005; got {g}"),
                        );
                    }
                    VelocitySource::FromTemperature {
                        min_gradient_c_per_km: g,
                    }
                }
                (Some(s), Some(b)) => {
                    if v.min_gradient_c_per_km.is_some() {
                        ck.push(
                            "climate.velocity.min_gradient_c_per_km",
                            "only used when velocity is computed from `[temperature]`; remove it or drop `speed`/`bearing`",
                        );
                    }
                    let speed = scenario_layer(ck, "climate.velocity.speed", s, ctx);
                    let bearing = scenario_layer(ck, "climate.velocity.bearing", b, ctx);
                    match (speed, bearing) {
                        (Some(mut speed), Some(mut bearing)) => {
                            speed.valid_range.get_or_insert((0.0, f64::INFINITY));
                            bearing.valid_range.get_or_insert((0.0, 360.0));
                            VelocitySource::Supplied {
                                speed: Box::new(speed),
                                bearing: Box::new(bearing),
                            }
                        }
                        _ => VelocitySource::FromTemperature {
                            min_gradient_c_per_km: 0.0005,
                        },
                    }
                }
                (s, b) => {
                    // Check the layer that is given, too, so all problems show at once.
                    if let Some(s) = s {
                        scenario_layer(ck, "climate.velocity.speed", s, ctx);
                    }
                    if let Some(b) = b {
                        scenario_layer(ck, "climate.velocity.bearing", b, ctx);
                    }
                    let missing = if s.is_none() { "speed" } else { "bearing" };
                    ck.push(
                        format!("climate.velocity.{missing}"),
                        "a supplied velocity needs both `speed` (km/yr) and `bearing` (degrees from north) layers",
                    );
                    VelocitySource::FromTemperature {
                        min_gradient_c_per_km: 0.0005,
                    }
                }
            }
        }
    };

    // Trajectories.
    let span = match (ctx.years.first(), ctx.years.last()) {
        (Some(a), Some(b)) if b > a => (b - a) as f64,
        _ => 50.0,
    };
    let trajectories = match &raw.trajectories {
        None => TrajectoryParams {
            horizon_years: span,
            ..TrajectoryParams::default()
        },
        Some(t) => {
            ck.unknown(
                "climate.trajectories",
                &t.extra,
                &reference::keys_of("climate.trajectories"),
            );
            let mut years = |key: &str, v: Option<f64>, default: f64| match v {
                None => default,
                Some(v) if v.is_finite() && v > 0.0 => v,
                Some(v) => {
                    ck.push(
                        format!("climate.trajectories.{key}"),
                        format!("must be a positive number of years, e.g. `{default}`; got {v}"),
                    );
                    default
                }
            };
            let horizon_years = years("horizon_years", t.horizon_years, span);
            let step_years = years("step_years", t.step_years, 1.0);
            let corridor_quantile = open_share(
                ck,
                "climate.trajectories.corridor_quantile",
                t.corridor_quantile,
                0.9,
            );
            TrajectoryParams {
                horizon_years,
                step_years,
                corridor_quantile,
            }
        }
    };

    let corridor = raw.corridor.as_ref().map(|c| {
        ck.unknown(
            "climate.corridor",
            &c.extra,
            &reference::keys_of("climate.corridor"),
        );
        CorridorPlan {
            min_habitat_share: c
                .min_habitat_share
                .map(|v| ck.share("climate.corridor.min_habitat_share", v, true))
                .unwrap_or(0.0),
            goal: goal(ck, "climate.corridor", c.target, c.weight),
        }
    });

    let leading_edge = raw
        .leading_edge
        .as_ref()
        .map(|e| edge(ck, "climate.leading-edge", e, 0.95));
    let trailing_edge = raw
        .trailing_edge
        .as_ref()
        .map(|e| edge(ck, "climate.trailing-edge", e, 0.05));

    if let (Some(l), Some(t)) = (&leading_edge, &trailing_edge) {
        if t.quantile >= l.quantile {
            ck.push(
                "climate.trailing-edge.quantile",
                format!(
                    "the trailing-edge quantile ({}) must be below the leading-edge quantile ({}), e.g. 0.05 and 0.95",
                    t.quantile, l.quantile
                ),
            );
        }
    }

    let refugium = raw.refugium.as_ref().map(|r| {
        let key = "climate.refugium";
        ck.unknown(
            key,
            &r.extra,
            &reference::keys_of("climate.refugium"),
        );
        let supplied_key = if r.polygons.is_some() {
            Some("polygons")
        } else if r.score.is_some() {
            Some("score")
        } else {
            None
        };
        if r.polygons.is_some() && r.score.is_some() {
            ck.push(
                format!("{key}.score"),
                "give either `polygons` or `score`, not both",
            );
        }
        if let Some(which) = supplied_key {
            for (k, given) in [
                ("metric", r.metric.is_some()),
                ("low_quantile", r.low_quantile.is_some()),
            ] {
                if given {
                    ck.push(
                        format!("{key}.{k}"),
                        format!("only used when refugia are computed; a supplied `{which}` replaces them"),
                    );
                }
            }
        }
        let source = if let Some(p) = &r.polygons {
            let t = ck.layer(&format!("{key}.polygons"), p, Missing::Zero);
            if let Some(t) = &t {
                if t.sampling != Sampling::AreaShare {
                    ck.push(
                        format!("{key}.polygons.sampling"),
                        "refugium polygons are GeoJSON polygons sampled by covered share (`area-share`)",
                    );
                }
                ck.template_files(&format!("{key}.polygons"), t, &[], ctx.scenarios, &[]);
            }
            t.map(RefugiumSource::Polygons)
        } else if let Some(s) = &r.score {
            scenario_layer(ck, &format!("{key}.score"), s, ctx).map(|mut t| {
                t.valid_range.get_or_insert((0.0, 1.0));
                RefugiumSource::Score(t)
            })
        } else {
            let metric = match r.metric.as_deref() {
                None | Some("speed") => ExposureMetric::Speed,
                Some("warming") => {
                    if !ctx.has_temperature {
                        ck.push(
                            format!("{key}.metric"),
                            "`warming` needs the temperature trend: add a `[temperature]` layer, or use `metric = \"speed\"`",
                        );
                    }
                    ExposureMetric::Warming
                }
                Some(x) => {
                    ck.push(
                        format!("{key}.metric"),
                        format!("`{x}`: expected `speed` (climate velocity) or `warming` (temperature trend)"),
                    );
                    ExposureMetric::Speed
                }
            };
            Some(RefugiumSource::Computed {
                metric,
                low_quantile: open_share(ck, &format!("{key}.low_quantile"), r.low_quantile, 0.25),
            })
        };
        RefugiumPlan {
            source: source.unwrap_or(RefugiumSource::Computed {
                metric: ExposureMetric::Speed,
                low_quantile: 0.25,
            }),
            min_habitat_share: r
                .min_habitat_share
                .map(|v| ck.share(&format!("{key}.min_habitat_share"), v, true))
                .unwrap_or(0.0),
            per_species: r.per_species.unwrap_or(false),
            low_exposure_only: r.low_exposure_only.unwrap_or(false),
            goal: goal(ck, key, r.target, r.weight),
        }
    });

    let boundary = raw.boundary.as_ref().map(|b| {
        let key = "climate.boundary";
        ck.unknown(key, &b.extra, &reference::keys_of("climate.boundary"));
        let lines = b
            .lines
            .as_deref()
            .map(|p| geojson_file(ck, &format!("{key}.lines"), p));
        let edge_density = b.edge_density.unwrap_or(false);
        if lines.is_none() && !edge_density {
            ck.push(
                format!("{key}.lines"),
                "a boundary needs `lines = \"boundary.geojson\"` and/or `edge_density = true`",
            );
        }
        let band_km = positive_km(ck, &format!("{key}.band_km"), b.band_km, 30.0);
        let decay = match b.decay.as_deref() {
            None | Some("linear") => {
                if b.scale_km.is_some() {
                    ck.push(
                        format!("{key}.scale_km"),
                        "only used with `decay = \"exponential\"`",
                    );
                }
                Decay::Linear
            }
            Some("exponential") => Decay::Exponential {
                scale_km: positive_km(ck, &format!("{key}.scale_km"), b.scale_km, band_km / 3.0),
            },
            Some(x) => {
                ck.push(
                    format!("{key}.decay"),
                    format!("`{x}`: expected `linear` or `exponential`"),
                );
                Decay::Linear
            }
        };
        BoundaryPlan {
            lines,
            band_km,
            decay,
            edge_density,
            edge_band_km: positive_km(ck, &format!("{key}.edge_band_km"), b.edge_band_km, 25.0),
            axis: axis(ck, &format!("{key}.axis"), b.axis.as_deref()),
            goal: goal(ck, key, b.target, b.weight),
        }
    });

    let distinctness = raw.distinctness.as_ref().and_then(|d| {
        let key = "climate.distinctness";
        ck.unknown(
            key,
            &d.extra,
            &reference::keys_of("climate.distinctness"),
        );
        let goal = goal(ck, key, d.target, d.weight);
        let source = match (&d.points, &d.layer) {
            (Some(_), Some(_)) => {
                ck.push(
                    format!("{key}.layer"),
                    "give either `points` (sample sites) or `layer` (per-cell values), not both",
                );
                None
            }
            (None, None) => {
                ck.push(
                    format!("{key}.points"),
                    "missing: `points = \"samples.geojson\"` with `attribute`, or `layer = { path = ..., column = ... }`",
                );
                None
            }
            (Some(p), None) => {
                let path = geojson_file(ck, &format!("{key}.points"), p);
                let attribute = match &d.attribute {
                    Some(a) => a.clone(),
                    None => {
                        ck.push(
                            format!("{key}.attribute"),
                            "missing: which point property holds the value, e.g. `attribute = \"fst\"`",
                        );
                        String::new()
                    }
                };
                let radius_km = positive_km(ck, &format!("{key}.radius_km"), d.radius_km, 50.0);
                let method = match d.method.as_deref() {
                    None | Some("idw") => {
                        let power = d.power.unwrap_or(2.0);
                        if !(power.is_finite() && power > 0.0) {
                            ck.push(
                                format!("{key}.power"),
                                format!("must be a positive exponent, e.g. 2; got {power}"),
                            );
                        }
                        Interpolation::InverseDistance { power }
                    }
                    Some("nearest") => {
                        if d.power.is_some() {
                            ck.push(format!("{key}.power"), "only used with `method = \"idw\"`");
                        }
                        Interpolation::Nearest
                    }
                    Some(x) => {
                        ck.push(
                            format!("{key}.method"),
                            format!("`{x}`: expected `idw` (inverse-distance weighting) or `nearest`"),
                        );
                        Interpolation::Nearest
                    }
                };
                Some(DistinctnessSource::Points {
                    path,
                    attribute,
                    radius_km,
                    method,
                })
            }
            (None, Some(l)) => {
                for (k, given) in [
                    ("attribute", d.attribute.is_some()),
                    ("radius_km", d.radius_km.is_some()),
                    ("method", d.method.is_some()),
                    ("power", d.power.is_some()),
                ] {
                    if given {
                        ck.push(
                            format!("{key}.{k}"),
                            "only used with `points`; a supplied `layer` gives the values per cell",
                        );
                    }
                }
                scenario_layer(ck, &format!("{key}.layer"), l, ctx).map(DistinctnessSource::Layer)
            }
        };
        source.map(|source| DistinctnessPlan { source, goal })
    });

    let time = match &raw.time {
        None => TimePlan {
            discount_rate: None,
            combine_years: false,
        },
        Some(t) => {
            let key = "climate.time";
            ck.unknown(key, &t.extra, &reference::keys_of("climate.time"));
            let discount_rate = match (t.weights.as_deref(), t.discount_rate) {
                (None | Some("equal"), None) => None,
                (None | Some("equal"), Some(_)) => {
                    ck.push(
                        format!("{key}.discount_rate"),
                        "only used with `weights = \"discount\"`",
                    );
                    None
                }
                (Some("discount"), Some(r)) => {
                    if !(r.is_finite() && r > -1.0) {
                        ck.push(
                            format!("{key}.discount_rate"),
                            format!(
                                "must be a yearly rate above −1, e.g. 0.03 for 3% a year; got {r}"
                            ),
                        );
                    }
                    Some(r)
                }
                (Some("discount"), None) => {
                    ck.push(
                        format!("{key}.discount_rate"),
                        "missing: `weights = \"discount\"` needs a yearly rate, e.g. `discount_rate = 0.03`",
                    );
                    None
                }
                (Some(x), _) => {
                    ck.push(
                        format!("{key}.weights"),
                        format!("`{x}`: expected `equal` or `discount`"),
                    );
                    None
                }
            };
            TimePlan {
                discount_rate,
                combine_years: t.combine_years.unwrap_or(false),
            }
        }
    };

    let plan = ClimatePlan {
        velocity,
        trajectories,
        corridor,
        leading_edge,
        trailing_edge,
        refugium,
        boundary,
        distinctness,
        time,
    };
    if plan.needs_velocity()
        && matches!(plan.velocity, VelocitySource::FromTemperature { .. })
        && !ctx.has_temperature
    {
        let users: Vec<&str> = [
            ("climate.corridor", plan.corridor.is_some()),
            (
                "climate.refugium",
                plan.refugium
                    .as_ref()
                    .is_some_and(|r| matches!(r.source, RefugiumSource::Computed { .. })),
            ),
        ]
        .iter()
        .filter(|u| u.1)
        .map(|u| u.0)
        .collect();
        ck.push(
            "climate.velocity",
            format!(
                "climate velocity is computed from sea temperature, but the plan has no `[temperature]` layer (needed by {}); add `[temperature]` with `path` and `column`, or supply `[climate.velocity]` `speed` and `bearing` layers",
                users.join(", ")
            ),
        );
    }
    let computes_velocity =
        ctx.has_temperature && matches!(plan.velocity, VelocitySource::FromTemperature { .. });
    if computes_velocity && plan.needs_velocity() && ctx.years.len() == 1 {
        ck.push(
            "scenarios.years",
            "climate velocity from `[temperature]` needs a trend, so at least two years",
        );
    }
    Some(plan)
}
