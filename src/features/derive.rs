//! Derived climate-adaptation features of a plan: takes the plan's `[climate]` settings, the
//! grid, the sea temperature of every scenario and year and the habitat features, and returns
//! the derived features (corridor, leading / trailing edge, refugium, boundary, distinctness),
//! the per-cell layers worth inspecting, and each species' range-edge shift. This is the seam
//! the pipeline calls; the computations live in [`crate::climate`] and the sibling modules.
//!
//! Feature names: `corridor/<scenario>`, `leading-edge/<species>/<scenario>/<year>` (or
//! `leading-edge/<species>/<scenario>` with `combine_years`), `trailing-edge/...` likewise,
//! `refugium/<scenario>`, `refugium/<species>/<scenario>`, `boundary` (lines),
//! `boundary/<scenario>/<year>` (edge density), `distinctness` (or `distinctness/<scenario>`
//! for a per-scenario layer).

use super::boundary::{boundary_from_edges, boundary_from_lines};
use super::corridor::{corridor_density, HabitatEnds};
use super::distinctness::interpolate_points;
use super::edges::PolewardAxis;
use super::edges::{axis_positions, habitat_near_edge, range_edges, AxisPositions, EdgeParams};
use super::time::{time_weighted_amounts, time_weights};
use super::{Feature, FeatureKind, FeatureTable, Target};
use crate::climate::{
    classify_flow, climate_velocity, linear_trend, low_exposure_cells, persistent_habitat,
    trace_all, ClimateError, ExposureMetric, FlowClass, Velocity, VelocityParams,
};
use crate::grid::{Grid, Projector};
use crate::layers::{read_lines, read_points, sample, Layer, SourceCache};
use crate::plan::climate::{
    AxisPlan, ClimatePlan, DistinctnessSource, Goal, RefugiumSource, VelocitySource,
};
use geo::MultiLineString;
use rayon::prelude::*;
use std::collections::BTreeMap;

/// How fast one species' range edges move in one scenario, measured along the leading-edge
/// axis (latitude unless `[climate.leading-edge]` names a line) with the plan's edge quantiles.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct EdgeShift {
    /// Species name.
    pub species: String,
    /// Scenario name.
    pub scenario: String,
    /// +1 when poleward is toward growing axis positions, −1 when toward shrinking ones (from
    /// the axis direction and the species' hemisphere); NaN when the species has no habitat
    /// in the scenario (then both shifts are `None`).
    pub poleward_sign: f64,
    /// Least-squares shift of the leading edge, poleward positive (`None`: fewer than two
    /// years with habitat). Units: km/decade.
    pub leading_km_per_decade: Option<f64>,
    /// Least-squares shift of the trailing edge, poleward positive. Units: km/decade.
    pub trailing_km_per_decade: Option<f64>,
    /// The leading edge lies within one edge band of the region's poleward limit in some year
    /// ([`super::edges::edge_clipped`]): its shift measures the region, not the species.
    pub leading_clipped: bool,
    /// The trailing edge lies within one edge band of the region's equatorward limit.
    pub trailing_clipped: bool,
}

impl EdgeShift {
    /// `leading`, `trailing`, `both` or empty: the `clipped` column of `edge-shifts.csv`.
    pub fn clipped_word(&self) -> &'static str {
        match (self.leading_clipped, self.trailing_clipped) {
            (true, true) => "both",
            (true, false) => "leading",
            (false, true) => "trailing",
            (false, false) => "",
        }
    }
}

/// One sentence per edge side and set of scenarios, naming the species whose edge is clipped
/// there, e.g. "trailing edges within one edge band of the region's equatorward limit, so
/// their shifts measure the region, not the species: cod and ling in ssp1-2.6 and ssp5-8.5".
pub fn clipped_notes(shifts: &[EdgeShift]) -> Vec<String> {
    let join = |v: &[String]| -> String {
        match v {
            [] => String::new(),
            [one] => one.clone(),
            [init @ .., last] => format!("{} and {last}", init.join(", ")),
        }
    };
    let mut out = Vec::new();
    for (leading, edge, side) in [
        (true, "leading", "poleward"),
        (false, "trailing", "equatorward"),
    ] {
        // species → scenarios where its edge is clipped, in first-appearance order.
        let mut per_species: Vec<(String, Vec<String>)> = Vec::new();
        for s in shifts {
            let clipped = if leading {
                s.leading_clipped
            } else {
                s.trailing_clipped
            };
            if !clipped {
                continue;
            }
            match per_species.iter_mut().find(|(sp, _)| *sp == s.species) {
                Some((_, sc)) => sc.push(s.scenario.clone()),
                None => per_species.push((s.species.clone(), vec![s.scenario.clone()])),
            }
        }
        // scenario list → species, in first-appearance order.
        let mut groups: Vec<(Vec<String>, Vec<String>)> = Vec::new();
        for (sp, sc) in per_species {
            match groups.iter_mut().find(|(k, _)| *k == sc) {
                Some((_, v)) => v.push(sp),
                None => groups.push((sc, vec![sp])),
            }
        }
        for (scenarios, species) in groups {
            out.push(format!(
                "{edge} edges within one edge band of the region's {side} limit, so their shifts measure the region, not the species: {} in {}",
                join(&species),
                join(&scenarios)
            ));
        }
    }
    out
}

/// Everything the `[climate]` section derives.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Derived {
    /// New features with kind, species, scenario, year, unit, target and weight.
    pub features: Vec<Feature>,
    /// Per-cell layers worth inspecting: `velocity_km_per_yr/<scenario>`,
    /// `velocity_bearing_deg/<scenario>`, `warming_c_per_yr/<scenario>`,
    /// `corridor_density/<scenario>`, `flow_class/<scenario>` (codes from [`flow_class_code`]),
    /// `refugium/<scenario>` (1 refuge / 0, or the supplied share or score),
    /// `boundary_weight` (0–1), `distinctness` (the interpolated value).
    pub layers: Vec<Layer>,
    /// Per species × scenario (species order, then scenario order).
    pub edge_shifts: Vec<EdgeShift>,
    /// Per scenario: cells whose temperature gradient was below the velocity floor (speed
    /// capped, bearing left missing on purpose); 0 when velocity was supplied or not needed.
    pub velocity_floored: Vec<(String, usize)>,
}

/// Numeric code of a flow class in the `flow_class/<scenario>` layer: 0 source, 1 sink,
/// 2 corridor, 3 other, NaN no data.
pub fn flow_class_code(c: FlowClass) -> f64 {
    match c {
        FlowClass::Source => 0.0,
        FlowClass::Sink => 1.0,
        FlowClass::Corridor => 2.0,
        FlowClass::Other => 3.0,
        FlowClass::NoData => f64::NAN,
    }
}

/// Unit grid-axis direction `[east, north]` of the ground bearing `bearing_deg` (clockwise from
/// true north) at `lonlat`: the inverse of [`crate::climate::ground_bearing_deg`].
///
/// A ±25 m step along the bearing is taken on the WGS84 ellipsoid with the meridian (M) and
/// prime-vertical (N) radii of curvature, Δφ = s·cos β / M, Δλ = s·sin β / (N cos φ) (Snyder
/// 1987, USGS Prof. Paper 1395, p. 24–25), and both ends are projected.
pub fn grid_direction(
    projector: &Projector,
    lonlat: [f64; 2],
    bearing_deg: f64,
) -> Result<[f64; 2], ClimateError> {
    if !(bearing_deg.is_finite() && lonlat[0].is_finite() && lonlat[1].is_finite()) {
        return Err(ClimateError::Invalid(format!(
            "a grid direction needs a finite bearing and position (got {bearing_deg}° at {lonlat:?})"
        )));
    }
    // WGS84 (NIMA TR8350.2).
    const A: f64 = 6_378_137.0;
    let f = 1.0 / 298.257_223_563;
    let e2 = f * (2.0 - f);
    let phi = lonlat[1].to_radians();
    let w = 1.0 - e2 * phi.sin().powi(2);
    let m = A * (1.0 - e2) / w.powf(1.5);
    let n = A / w.sqrt();
    const HALF_STEP_M: f64 = 25.0;
    let b = bearing_deg.to_radians();
    let dlat = (HALF_STEP_M * b.cos() / m).to_degrees();
    let dlon = (HALF_STEP_M * b.sin() / (n * phi.cos())).to_degrees();
    let p = projector.to_xy(lonlat[0] - dlon, lonlat[1] - dlat)?;
    let q = projector.to_xy(lonlat[0] + dlon, lonlat[1] + dlat)?;
    let (dx, dy) = (q[0] - p[0], q[1] - p[1]);
    let len = dx.hypot(dy);
    Ok([dx / len, dy / len])
}

/// A velocity field from supplied layers: `speed` (km/yr) and `bearing` (degrees from true
/// north) per cell, with an optional temperature trend (°C/yr) for the warming metric.
/// Non-finite speed or bearing marks a cell without velocity (NaN, like missing temperature);
/// zero speed gives a zero vector. The gradient is unknown (NaN).
pub fn velocity_from_layers(
    grid: &Grid,
    speed: &[f64],
    bearing: &[f64],
    trend: Option<Vec<f64>>,
) -> Result<Velocity, ClimateError> {
    let n = grid.len();
    crate::climate::check_dense("velocity speed", speed, n)?;
    crate::climate::check_dense("velocity bearing", bearing, n)?;
    let trend = trend.unwrap_or_else(|| vec![f64::NAN; n]);
    crate::climate::check_dense("temperature trend", &trend, n)?;
    const CHUNK: usize = 8192;
    let ids: Vec<usize> = (0..n).collect();
    let vectors: Vec<Vec<[f64; 2]>> = ids
        .par_chunks(CHUNK)
        .map(|chunk| -> Result<Vec<[f64; 2]>, ClimateError> {
            let projector = Projector::new(&grid.crs)?;
            chunk
                .iter()
                .map(|&id| {
                    let (s, b) = (speed[id], bearing[id]);
                    if !(s.is_finite() && b.is_finite()) {
                        return Ok([f64::NAN, f64::NAN]);
                    }
                    if s == 0.0 {
                        return Ok([0.0, 0.0]);
                    }
                    let d = grid_direction(&projector, grid.cells[id].lonlat, b)?;
                    Ok([s * d[0], s * d[1]])
                })
                .collect()
        })
        .collect::<Result<_, _>>()?;
    let grid_velocity: Vec<[f64; 2]> = vectors.into_iter().flatten().collect();
    let ok = |id: usize| speed[id].is_finite() && bearing[id].is_finite();
    Ok(Velocity {
        trend_c_per_yr: trend,
        gradient_xy: vec![[f64::NAN, f64::NAN]; n],
        gradient_c_per_km: vec![f64::NAN; n],
        speed_km_per_yr: (0..n)
            .map(|i| if ok(i) { speed[i] } else { f64::NAN })
            .collect(),
        bearing_deg: (0..n)
            .map(|i| {
                if ok(i) && speed[i] > 0.0 {
                    bearing[i].rem_euclid(360.0)
                } else {
                    f64::NAN
                }
            })
            .collect(),
        floored: vec![false; n],
        grid_velocity,
    })
}

/// Habitat of cells where more than `share` (0–1) of the sea is suitable: amount >
/// share × sea area (any positive amount when `share` is 0).
fn above_share(grid: &Grid, list: &[(u32, f64)], share: f64) -> Vec<(u32, f64)> {
    list.iter()
        .copied()
        .filter(|&(c, a)| a > 0.0 && a > share * grid.cells[c as usize].sea_area_km2)
        .collect()
}

fn sparse_total(amounts: &[(u32, f64)]) -> f64 {
    // An empty f64 sum is −0.0 (an absent feature); + 0.0 keeps "-0" out of outputs.
    amounts.iter().map(|a| a.1).sum::<f64>() + 0.0
}

/// What is shared by every feature a seam call makes.
struct Maker<'a> {
    grid: &'a Grid,
    years: &'a [i32],
    /// Normalised time weights, one per year.
    time_weights: Vec<f64>,
    combine_years: bool,
}

impl Maker<'_> {
    #[allow(clippy::too_many_arguments)] // one feature's full description, all of it needed
    fn one(
        &self,
        name: String,
        kind: FeatureKind,
        species: Option<&str>,
        scenario: Option<usize>,
        year: Option<i32>,
        unit: &str,
        amounts: Vec<(u32, f64)>,
        target: Target,
        weight: f64,
    ) -> Feature {
        Feature {
            name,
            kind,
            species: species.map(str::to_string),
            scenario,
            year,
            unit: unit.to_string(),
            total: sparse_total(&amounts),
            amounts,
            target,
            weight,
        }
    }

    /// Per-year amounts as features: one per year (objective weight × time weight × years), or
    /// one time-weighted feature when years are combined. `base` is the name without the year.
    #[allow(clippy::too_many_arguments)] // as `one`
    fn per_year(
        &self,
        base: String,
        kind: FeatureKind,
        species: Option<&str>,
        scenario: usize,
        unit: &str,
        per_year: Vec<Vec<(u32, f64)>>,
        goal: &Goal,
    ) -> Result<Vec<Feature>, ClimateError> {
        if self.combine_years {
            let lists: Vec<&[(u32, f64)]> = per_year.iter().map(Vec::as_slice).collect();
            let amounts = time_weighted_amounts(self.grid.len(), &lists, &self.time_weights)?;
            return Ok(vec![self.one(
                base,
                kind,
                species,
                Some(scenario),
                None,
                unit,
                amounts,
                goal.target(),
                goal.weight,
            )]);
        }
        let n = self.years.len() as f64;
        Ok(per_year
            .into_iter()
            .enumerate()
            .map(|(k, amounts)| {
                let year = self.years[k];
                self.one(
                    format!("{base}/{year}"),
                    kind,
                    species,
                    Some(scenario),
                    Some(year),
                    unit,
                    amounts,
                    goal.target(),
                    goal.weight * self.time_weights[k] * n,
                )
            })
            .collect())
    }
}

/// Species, scenario index and year of a habitat feature.
type HabitatKey<'a> = (&'a str, usize, i32);

/// Habitat lists of one species in one scenario, one per year (empty where the table has none).
type SpeciesYears<'a> = Vec<&'a [(u32, f64)]>;

fn axis_for(grid: &Grid, plan: &AxisPlan) -> Result<AxisPositions, ClimateError> {
    let axis = match plan {
        AxisPlan::Latitude => PolewardAxis::Meridian,
        AxisPlan::Line(path) => {
            let mut lines = read_lines(path)?;
            if lines.len() != 1 {
                return Err(ClimateError::Invalid(format!(
                    "{}: a range-edge axis file must hold exactly one LineString (found {})",
                    path.display(),
                    lines.len()
                )));
            }
            PolewardAxis::Polyline(lines.remove(0))
        }
    };
    axis_positions(grid, &axis)
}

/// The output of one scenario.
#[derive(Default)]
struct ScenarioOut {
    features: Vec<Feature>,
    layers: Vec<Layer>,
    shifts: Vec<EdgeShift>,
    /// Cells whose temperature gradient was below the floor (0 without computed velocity).
    floored: usize,
}

/// Derives every feature the plan's `[climate]` section asks for (see the module doc).
///
/// `temperature[s][k][cell]` is the sea temperature (°C) of scenario `s` in `years[k]`; empty
/// when the plan has no `[temperature]`. `habitat` holds the habitat features (kind
/// [`FeatureKind::Habitat`], species, scenario index into `scenarios`, year; amounts km²).
/// Supplied layers are sampled through `cache`. Features with no target get
/// `Target::Share(0.0)` and their weight. Scenarios are processed in parallel; the output
/// order (static features, then scenario by scenario) does not depend on the thread count.
pub fn derive_climate_features(
    plan: &ClimatePlan,
    grid: &Grid,
    scenarios: &[String],
    years: &[i32],
    temperature: &[Vec<Vec<f64>>],
    habitat: &FeatureTable,
    cache: &SourceCache,
) -> Result<Derived, ClimateError> {
    if !temperature.is_empty() && temperature.len() != scenarios.len() {
        return Err(ClimateError::Length {
            what: "temperature series (one per scenario)".into(),
            expected: scenarios.len(),
            got: temperature.len(),
        });
    }
    if !habitat.scenarios.is_empty() && habitat.scenarios != scenarios {
        return Err(ClimateError::Invalid(format!(
            "the habitat features are for scenarios {:?} but climate features were asked for {:?}",
            habitat.scenarios, scenarios
        )));
    }
    let maker = Maker {
        grid,
        years,
        time_weights: time_weights(years, plan.time.discount_rate)?,
        combine_years: plan.time.combine_years,
    };

    // Habitat by (species, scenario, year), species in order of first appearance.
    let mut species: Vec<&str> = Vec::new();
    let mut lookup: BTreeMap<HabitatKey<'_>, &[(u32, f64)]> = BTreeMap::new();
    for f in &habitat.features {
        if f.kind != FeatureKind::Habitat {
            continue;
        }
        let (Some(sp), Some(sc), Some(yr)) = (f.species.as_deref(), f.scenario, f.year) else {
            continue;
        };
        crate::climate::check_sparse(&f.name, &f.amounts, grid.len())?;
        if !species.contains(&sp) {
            species.push(sp);
        }
        lookup.insert((sp, sc, yr), &f.amounts);
    }
    // [scenario][species][year]
    let habitat_lists: Vec<Vec<SpeciesYears<'_>>> = (0..scenarios.len())
        .map(|sc| {
            species
                .iter()
                .map(|sp| {
                    years
                        .iter()
                        .map(|&y| lookup.get(&(*sp, sc, y)).copied().unwrap_or(&[]))
                        .collect()
                })
                .collect()
        })
        .collect();

    let mut out = Derived::default();
    static_features(plan, grid, &maker, cache, &mut out)?;

    // Axes, computed once (a line file is read once).
    let edge_axis = plan
        .leading_edge
        .as_ref()
        .map(|e| &e.axis)
        .unwrap_or(&AxisPlan::Latitude);
    let mut axes: Vec<(AxisPlan, AxisPositions)> = Vec::new();
    for a in [
        Some(edge_axis),
        plan.trailing_edge.as_ref().map(|e| &e.axis),
        plan.boundary
            .as_ref()
            .filter(|b| b.edge_density)
            .map(|b| &b.axis),
    ]
    .into_iter()
    .flatten()
    {
        if !axes.iter().any(|(p, _)| p == a) {
            axes.push((a.clone(), axis_for(grid, a)?));
        }
    }
    let axis = |p: &AxisPlan| -> &AxisPositions {
        // Every axis a plan names was pushed above.
        &axes.iter().find(|(q, _)| q == p).expect("axis computed").1
    };
    let ctx = ScenarioCtx {
        plan,
        grid,
        scenarios,
        years,
        temperature,
        species: &species,
        maker: &maker,
        cache,
        edge_axis: axis(edge_axis),
        trailing_axis: plan.trailing_edge.as_ref().map(|e| axis(&e.axis)),
        boundary_axis: plan
            .boundary
            .as_ref()
            .filter(|b| b.edge_density)
            .map(|b| axis(&b.axis)),
    };
    let per_scenario: Vec<ScenarioOut> = (0..scenarios.len())
        .into_par_iter()
        .map(|s| ctx.scenario(s, &habitat_lists[s]))
        .collect::<Result<_, _>>()?;
    let mut shifts = Vec::new();
    for (s, o) in per_scenario.into_iter().enumerate() {
        out.velocity_floored.push((scenarios[s].clone(), o.floored));
        out.features.extend(o.features);
        out.layers.extend(o.layers);
        shifts.push(o.shifts);
    }
    // Species order, then scenario order.
    for k in 0..species.len() {
        for s in &shifts {
            out.edge_shifts.push(s[k].clone());
        }
    }
    Ok(out)
}

/// Boundary lines and distinctness: features that do not depend on scenario or year (or, for
/// a per-scenario distinctness layer, only on the scenario).
fn static_features(
    plan: &ClimatePlan,
    grid: &Grid,
    maker: &Maker<'_>,
    cache: &SourceCache,
    out: &mut Derived,
) -> Result<(), ClimateError> {
    if let Some(b) = &plan.boundary {
        if let Some(path) = &b.lines {
            let lines = MultiLineString(read_lines(path)?);
            let amounts = boundary_from_lines(grid, &lines, b.band_km, b.decay)?;
            let mut weight = vec![0.0; grid.len()];
            for &(c, a) in &amounts {
                weight[c as usize] = a / grid.cells[c as usize].sea_area_km2;
            }
            out.layers.push(Layer {
                name: "boundary_weight".into(),
                values: weight,
            });
            out.features.push(maker.one(
                "boundary".into(),
                FeatureKind::Boundary,
                None,
                None,
                None,
                "km2",
                amounts,
                b.goal.target(),
                b.goal.weight,
            ));
        }
    }
    if let Some(d) = &plan.distinctness {
        let to_amounts = |values: &[(u32, f64)]| -> Vec<(u32, f64)> {
            values
                .iter()
                .filter(|v| v.1 != 0.0)
                .map(|&(c, v)| (c, v * grid.cells[c as usize].sea_area_km2))
                .collect()
        };
        let dense = |values: &[(u32, f64)]| {
            let mut d = vec![0.0; grid.len()];
            for &(c, v) in values {
                d[c as usize] = v;
            }
            d
        };
        match &d.source {
            DistinctnessSource::Points {
                path,
                attribute,
                radius_km,
                method,
            } => {
                let points = read_points(path, Some(attribute))?;
                let values = interpolate_points(grid, &points, *radius_km, *method)?;
                out.layers.push(Layer {
                    name: "distinctness".into(),
                    values: dense(&values),
                });
                out.features.push(maker.one(
                    "distinctness".into(),
                    FeatureKind::Distinctness,
                    None,
                    None,
                    None,
                    "km2 x value",
                    to_amounts(&values),
                    d.goal.target(),
                    d.goal.weight,
                ));
            }
            DistinctnessSource::Layer(t) if !t.varies_by_scenario_or_year() => {
                let layer = sample("distinctness", &t.fixed(), grid, cache)?;
                let values: Vec<(u32, f64)> = layer
                    .values
                    .iter()
                    .enumerate()
                    .filter(|v| v.1.is_finite() && *v.1 != 0.0)
                    .map(|(i, v)| (i as u32, *v))
                    .collect();
                out.features.push(maker.one(
                    "distinctness".into(),
                    FeatureKind::Distinctness,
                    None,
                    None,
                    None,
                    "km2 x value",
                    to_amounts(&values),
                    d.goal.target(),
                    d.goal.weight,
                ));
                out.layers.push(layer);
            }
            // Per-scenario layers are handled with each scenario.
            DistinctnessSource::Layer(_) => {}
        }
    }
    Ok(())
}

/// Inputs every scenario shares.
struct ScenarioCtx<'a> {
    plan: &'a ClimatePlan,
    grid: &'a Grid,
    scenarios: &'a [String],
    years: &'a [i32],
    temperature: &'a [Vec<Vec<f64>>],
    species: &'a [&'a str],
    maker: &'a Maker<'a>,
    cache: &'a SourceCache,
    edge_axis: &'a AxisPositions,
    trailing_axis: Option<&'a AxisPositions>,
    boundary_axis: Option<&'a AxisPositions>,
}

impl ScenarioCtx<'_> {
    fn layer(&self, name: String, values: Vec<f64>) -> Layer {
        Layer { name, values }
    }

    /// Temperature trend per cell (°C/yr), if the plan has temperature.
    fn trend(&self, s: usize) -> Option<Vec<f64>> {
        let t = self.temperature.get(s)?;
        if t.len() != self.years.len() || self.years.len() < 2 {
            return None;
        }
        let yrs: Vec<f64> = self.years.iter().map(|&y| y as f64).collect();
        Some(
            (0..self.grid.len())
                .into_par_iter()
                .map(|c| {
                    let series: Vec<f64> = t
                        .iter()
                        .map(|l| l.get(c).copied().unwrap_or(f64::NAN))
                        .collect();
                    linear_trend(&yrs, &series).unwrap_or(f64::NAN)
                })
                .collect(),
        )
    }

    fn velocity(&self, s: usize) -> Result<Option<Velocity>, ClimateError> {
        let sc = &self.scenarios[s];
        match &self.plan.velocity {
            VelocitySource::Supplied { speed, bearing } => {
                let sp = sample(&format!("velocity_km_per_yr/{sc}"), &speed.resolve("", sc, 0), self.grid, self.cache)?;
                let be = sample(&format!("velocity_bearing_deg/{sc}"), &bearing.resolve("", sc, 0), self.grid, self.cache)?;
                Ok(Some(velocity_from_layers(self.grid, &sp.values, &be.values, self.trend(s))?))
            }
            VelocitySource::FromTemperature {
                min_gradient_c_per_km,
            } => match self.temperature.get(s) {
                Some(t) if self.years.len() >= 2 => Ok(Some(climate_velocity(
                    self.grid,
                    self.years,
                    t,
                    &VelocityParams {
                        min_gradient_c_per_km: *min_gradient_c_per_km,
                    },
                )?)),
                _ if self.plan.needs_velocity() => Err(ClimateError::Invalid(format!(
                    "scenario {sc}: climate velocity is computed from sea temperature, but none was given for it (the plan needs a `[temperature]` layer and at least two years)"
                ))),
                _ => Ok(None),
            },
        }
    }

    fn scenario(
        &self,
        s: usize,
        habitat: &[SpeciesYears<'_>],
    ) -> Result<ScenarioOut, ClimateError> {
        let grid = self.grid;
        let n = grid.len();
        let sc = self.scenarios[s].as_str();
        let plan = self.plan;
        let mut out = ScenarioOut::default();
        let velocity = self.velocity(s)?;
        if let Some(v) = &velocity {
            out.floored = v.floored.iter().filter(|&&f| f).count();
            out.layers.push(self.layer(
                format!("velocity_km_per_yr/{sc}"),
                v.speed_km_per_yr.clone(),
            ));
            out.layers
                .push(self.layer(format!("velocity_bearing_deg/{sc}"), v.bearing_deg.clone()));
            if v.trend_c_per_yr.iter().any(|t| t.is_finite()) {
                out.layers
                    .push(self.layer(format!("warming_c_per_yr/{sc}"), v.trend_c_per_yr.clone()));
            }
        }

        // Corridors (Burrows et al. 2014 trajectories).
        if let Some(c) = &plan.corridor {
            // `velocity` is Some here: `self.velocity` errs when corridors need it and it is missing.
            let v = velocity
                .as_ref()
                .expect("velocity present when corridors are asked for");
            let set = trace_all(grid, v, &plan.trajectories)?;
            let (_, classes) = classify_flow(grid, &set, &plan.trajectories)?;
            out.layers.push(self.layer(
                format!("flow_class/{sc}"),
                classes.iter().map(|&c| flow_class_code(c)).collect(),
            ));
            let ends: Vec<[Vec<(u32, f64)>; 2]> = habitat
                .iter()
                .map(|h| {
                    [
                        above_share(grid, h.first().copied().unwrap_or(&[]), c.min_habitat_share),
                        above_share(grid, h.last().copied().unwrap_or(&[]), c.min_habitat_share),
                    ]
                })
                .collect();
            let ends: Vec<HabitatEnds<'_>> = ends
                .iter()
                .map(|[a, b]| HabitatEnds { first: a, last: b })
                .collect();
            let density = corridor_density(grid, &set, &ends, 0.0)?;
            let mut dense = vec![0.0; n];
            for &(cell, d) in &density.total {
                dense[cell as usize] = d;
            }
            out.layers
                .push(self.layer(format!("corridor_density/{sc}"), dense));
            out.features.push(self.maker.one(
                format!("corridor/{sc}"),
                FeatureKind::Corridor,
                None,
                Some(s),
                None,
                "trajectories",
                density.total,
                c.goal.target(),
                c.goal.weight,
            ));
        }

        // Range edges, their shifts and the edge zones.
        // Defaults 0.95 / 0.05, moved where needed so the trailing quantile stays below the
        // leading one (plan validation checks the pair when both are given).
        let (lead_q, trail_q) = match (&plan.leading_edge, &plan.trailing_edge) {
            (Some(l), Some(t)) => (l.quantile, t.quantile),
            (Some(l), None) => (l.quantile, 0.05f64.min(0.5 * l.quantile)),
            (None, Some(t)) => (0.95f64.max(0.5 * (1.0 + t.quantile)), t.quantile),
            (None, None) => (0.95, 0.05),
        };
        let params = EdgeParams {
            leading_quantile: lead_q,
            trailing_quantile: trail_q,
            band_km: plan.leading_edge.as_ref().map_or(100.0, |e| e.band_km),
        };
        // Edge positions per year on the boundary axis (axis km), for edge density.
        let mut boundary_edges: Vec<Vec<f64>> = vec![Vec::new(); self.years.len()];
        for (k, sp) in self.species.iter().enumerate() {
            let lists = &habitat[k];
            let has_habitat = lists.iter().any(|l| l.iter().any(|a| a.1 > 0.0));
            if !has_habitat {
                out.shifts.push(EdgeShift {
                    species: sp.to_string(),
                    scenario: sc.to_string(),
                    poleward_sign: f64::NAN,
                    leading_km_per_decade: None,
                    trailing_km_per_decade: None,
                    leading_clipped: false,
                    trailing_clipped: false,
                });
                continue;
            }
            let edges = range_edges(grid, self.edge_axis, self.years, lists, &params)?;
            out.shifts.push(EdgeShift {
                species: sp.to_string(),
                scenario: sc.to_string(),
                poleward_sign: edges.poleward_sign,
                leading_km_per_decade: edges.leading_shift_km_per_decade,
                trailing_km_per_decade: edges.trailing_shift_km_per_decade,
                leading_clipped: super::edges::edge_clipped(
                    &edges.leading_km,
                    &self.edge_axis.km,
                    edges.poleward_sign,
                    params.band_km,
                    true,
                ),
                trailing_clipped: super::edges::edge_clipped(
                    &edges.trailing_km,
                    &self.edge_axis.km,
                    edges.poleward_sign,
                    plan.trailing_edge
                        .as_ref()
                        .map_or(params.band_km, |e| e.band_km),
                    false,
                ),
            });
            if let Some(e) = &plan.leading_edge {
                out.features.extend(self.maker.per_year(
                    format!("leading-edge/{sp}/{sc}"),
                    FeatureKind::LeadingEdge,
                    Some(sp),
                    s,
                    "km2",
                    edges.leading_amounts.clone(),
                    &e.goal,
                )?);
            }
            if let (Some(e), Some(axis)) = (&plan.trailing_edge, self.trailing_axis) {
                let (positions, sign) = if std::ptr::eq(axis, self.edge_axis) {
                    (edges.trailing_km.clone(), edges.poleward_sign)
                } else {
                    let t = range_edges(grid, axis, self.years, lists, &params)?;
                    (t.trailing_km, t.poleward_sign)
                };
                let poleward_km: Vec<f64> = axis.km.iter().map(|x| sign * x).collect();
                let amounts = lists
                    .iter()
                    .zip(&positions)
                    .map(|(l, p)| match p {
                        Some(edge) => habitat_near_edge(&poleward_km, l, *edge, e.band_km, false),
                        None => Vec::new(),
                    })
                    .collect();
                out.features.extend(self.maker.per_year(
                    format!("trailing-edge/{sp}/{sc}"),
                    FeatureKind::TrailingEdge,
                    Some(sp),
                    s,
                    "km2",
                    amounts,
                    &e.goal,
                )?);
            }
            if let Some(axis) = self.boundary_axis {
                let b = if std::ptr::eq(axis, self.edge_axis) {
                    edges.clone()
                } else {
                    range_edges(grid, axis, self.years, lists, &params)?
                };
                for (y, slot) in boundary_edges.iter_mut().enumerate() {
                    // Poleward km back to axis km: the sign is ±1, its own inverse.
                    for p in [b.leading_km[y], b.trailing_km[y]].into_iter().flatten() {
                        slot.push(p * b.poleward_sign);
                    }
                }
            }
        }
        if let (Some(b), Some(axis)) = (&plan.boundary, self.boundary_axis) {
            let per_year = boundary_edges
                .iter()
                .map(|e| boundary_from_edges(grid, &axis.km, e, b.edge_band_km))
                .collect::<Result<Vec<_>, _>>()?;
            out.features.extend(self.maker.per_year(
                format!("boundary/{sc}"),
                FeatureKind::Boundary,
                None,
                s,
                "km2 x edges",
                per_year,
                &b.goal,
            )?);
        }

        // Refugia.
        if let Some(r) = &plan.refugium {
            let (low, values): (Vec<bool>, Vec<f64>) = match &r.source {
                RefugiumSource::Computed {
                    metric,
                    low_quantile,
                } => {
                    let v = velocity
                        .as_ref()
                        .expect("velocity present when computed refugia are asked for");
                    let exposure = match metric {
                        ExposureMetric::Speed => &v.speed_km_per_yr,
                        ExposureMetric::Warming => &v.trend_c_per_yr,
                    };
                    if exposure.iter().all(|x| !x.is_finite()) {
                        return Err(ClimateError::Invalid(format!(
                            "scenario {sc}: refugia by `{}` need finite values, but none were derived (warming needs `[temperature]`)",
                            if *metric == ExposureMetric::Speed { "speed" } else { "warming" }
                        )));
                    }
                    let low = low_exposure_cells(exposure, *low_quantile)?;
                    let values = low.iter().map(|&l| if l { 1.0 } else { 0.0 }).collect();
                    (low, values)
                }
                RefugiumSource::Polygons(t) | RefugiumSource::Score(t) => {
                    let layer = sample(
                        &format!("refugium/{sc}"),
                        &t.resolve("", sc, 0),
                        grid,
                        self.cache,
                    )?;
                    let low = layer
                        .values
                        .iter()
                        .map(|&v| v.is_finite() && v > 0.0)
                        .collect();
                    (low, layer.values)
                }
            };
            let amounts: Vec<(u32, f64)> = (0..n)
                .filter(|&i| low[i])
                .map(|i| (i as u32, values[i] * grid.cells[i].sea_area_km2))
                .collect();
            out.layers
                .push(self.layer(format!("refugium/{sc}"), values));
            out.features.push(self.maker.one(
                format!("refugium/{sc}"),
                FeatureKind::Refugium,
                None,
                Some(s),
                None,
                "km2",
                amounts,
                r.goal.target(),
                r.goal.weight,
            ));
            if r.per_species {
                for (k, sp) in self.species.iter().enumerate() {
                    let filtered: Vec<Vec<(u32, f64)>> = habitat[k]
                        .iter()
                        .map(|l| above_share(grid, l, r.min_habitat_share))
                        .collect();
                    let lists: Vec<&[(u32, f64)]> = filtered.iter().map(Vec::as_slice).collect();
                    let mut p = persistent_habitat(n, &lists, 0.0)?;
                    if r.low_exposure_only {
                        p.retain(|&(c, _)| low[c as usize]);
                    }
                    out.features.push(self.maker.one(
                        format!("refugium/{sp}/{sc}"),
                        FeatureKind::Refugium,
                        Some(sp),
                        Some(s),
                        None,
                        "km2",
                        p,
                        r.goal.target(),
                        r.goal.weight,
                    ));
                }
            }
        }

        // A per-scenario distinctness layer.
        if let Some(d) = &plan.distinctness {
            if let DistinctnessSource::Layer(t) = &d.source {
                if t.varies_by_scenario_or_year() {
                    let layer = sample(
                        &format!("distinctness/{sc}"),
                        &t.resolve("", sc, 0),
                        grid,
                        self.cache,
                    )?;
                    let amounts = (0..n)
                        .filter(|&i| layer.values[i].is_finite() && layer.values[i] != 0.0)
                        .map(|i| (i as u32, layer.values[i] * grid.cells[i].sea_area_km2))
                        .collect();
                    out.features.push(self.maker.one(
                        format!("distinctness/{sc}"),
                        FeatureKind::Distinctness,
                        None,
                        Some(s),
                        None,
                        "km2 x value",
                        amounts,
                        d.goal.target(),
                        d.goal.weight,
                    ));
                    out.layers.push(layer);
                }
            }
        }
        Ok(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::climate::ground_bearing_deg;
    use crate::grid::Crs;

    #[test]
    fn grid_direction_on_the_central_meridian_is_the_bearing() {
        // On a LAEA's central meridian grid north is true north (zero convergence; Snyder
        // 1987), so bearing 0 → grid [0, 1], 90 → [1, 0], 225 → [−√½, −√½].
        let crs = Crs::auto_laea(0.0, -40.0);
        let p = Projector::new(&crs).unwrap();
        let h = std::f64::consts::FRAC_1_SQRT_2;
        for (b, want) in [(0.0, [0.0, 1.0]), (90.0, [1.0, 0.0]), (225.0, [-h, -h])] {
            let d = grid_direction(&p, [0.0, -40.0], b).unwrap();
            assert!(
                (d[0] - want[0]).abs() < 1e-6 && (d[1] - want[1]).abs() < 1e-6,
                "{b}: {d:?}"
            );
        }
        assert!(grid_direction(&p, [0.0, -40.0], f64::NAN).is_err());
    }

    #[test]
    fn grid_direction_inverts_ground_bearing_off_the_meridian() {
        // Independent implementation of the other direction (`ground_bearing_deg`, which
        // unprojects a grid step): the round trip returns the bearing. 6°E of the central
        // meridian at 40°S the convergence is several degrees, so a no-op would fail.
        let crs = Crs::auto_laea(0.0, -40.0);
        let p = Projector::new(&crs).unwrap();
        let ll = [6.0, -41.0];
        let xy = p.to_xy(ll[0], ll[1]).unwrap();
        let north = grid_direction(&p, ll, 0.0).unwrap();
        assert!(
            north[0].atan2(north[1]).to_degrees().abs() > 2.0,
            "{north:?}"
        );
        for b in [0.0, 37.0, 135.0, 250.0, 359.0] {
            let d = grid_direction(&p, ll, b).unwrap();
            let back = ground_bearing_deg(&p, xy, d).unwrap();
            let diff = (back - b + 540.0).rem_euclid(360.0) - 180.0;
            assert!(diff.abs() < 1e-5, "{b} → {back}");
        }
    }

    #[test]
    fn supplied_velocity_by_hand() {
        // 3×1 strip centred on the central meridian: speed 2, 0, NaN km/yr, bearing 90 (east).
        // Hand reasoning: cell 0 is 10 km west of the meridian, where the meridian convergence
        // is about 0.06°, so its vector is [2, ~0]; cell 1 stands still; cell 2 has none.
        let g = Grid::full_rectangle(
            Crs::auto_laea(0.0, -40.0),
            10_000.0,
            [-15_000.0, -5_000.0],
            3,
            1,
        )
        .unwrap();
        let v = velocity_from_layers(&g, &[2.0, 0.0, f64::NAN], &[90.0, 90.0, 90.0], None).unwrap();
        assert!((v.grid_velocity[0][0] - 2.0).abs() < 1e-5 && v.grid_velocity[0][1].abs() < 0.01);
        assert_eq!(v.grid_velocity[1], [0.0, 0.0]);
        assert!(v.grid_velocity[2][0].is_nan());
        assert!(v.bearing_deg[1].is_nan() && v.speed_km_per_yr[1] == 0.0);
        assert!(v.speed_km_per_yr[2].is_nan());
        assert!(velocity_from_layers(&g, &[1.0], &[0.0; 3], None).is_err());
    }

    #[test]
    fn per_year_weights_and_combined_amounts_by_hand() {
        // Hand computation, years 2030 and 2050, time weights 0.75 / 0.25 (set directly):
        // separate features get weight 2 × w × 2 = 3 and 1; combined, cell 0 holds
        // 0.75·4 + 0.25·0 = 3 and cell 1 0.75·2 + 0.25·6 = 3 (total 6).
        let g = Grid::full_rectangle(Crs::auto_laea(0.0, 0.0), 10_000.0, [0.0, 0.0], 2, 1).unwrap();
        let mut m = Maker {
            grid: &g,
            years: &[2030, 2050],
            time_weights: vec![0.75, 0.25],
            combine_years: false,
        };
        let goal = Goal {
            target: Some(0.3),
            weight: 2.0,
        };
        let lists = vec![vec![(0u32, 4.0), (1, 2.0)], vec![(1u32, 6.0)]];
        let f = m
            .per_year(
                "x/a/s".into(),
                FeatureKind::LeadingEdge,
                Some("a"),
                0,
                "km2",
                lists.clone(),
                &goal,
            )
            .unwrap();
        assert_eq!(f.len(), 2);
        assert_eq!(
            (f[0].name.as_str(), f[0].year, f[0].weight),
            ("x/a/s/2030", Some(2030), 3.0)
        );
        assert_eq!((f[1].weight, f[1].total), (1.0, 6.0));
        assert_eq!(f[0].target, Target::Share(0.3));
        m.combine_years = true;
        let c = m
            .per_year(
                "x/a/s".into(),
                FeatureKind::LeadingEdge,
                Some("a"),
                0,
                "km2",
                lists,
                &goal,
            )
            .unwrap();
        assert_eq!(c.len(), 1);
        assert_eq!(c[0].amounts, vec![(0, 3.0), (1, 3.0)]);
        assert_eq!((c[0].year, c[0].total, c[0].weight), (None, 6.0, 2.0));
    }

    #[test]
    fn share_filter_and_flow_codes() {
        // 100 km² cells: share 0.1 keeps amounts above 10 km² (hand computation).
        let g = Grid::full_rectangle(Crs::auto_laea(0.0, 0.0), 10_000.0, [0.0, 0.0], 3, 1).unwrap();
        let l = [(0u32, 5.0), (1, 10.0), (2, 10.5)];
        assert_eq!(above_share(&g, &l, 0.1), vec![(2, 10.5)]);
        assert_eq!(above_share(&g, &l, 0.0).len(), 3);
        assert_eq!(flow_class_code(FlowClass::Corridor), 2.0);
        assert!(flow_class_code(FlowClass::NoData).is_nan());
    }
}
