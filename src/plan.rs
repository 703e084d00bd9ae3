//! Plan stage: reads a plan file (TOML), validates every key and resolves its paths, returning
//! a [`Plan`] or a [`PlanError`] that lists every problem found, each with its key.
//!
//! Paths in a plan are relative to the plan file. Layer paths may be templates over
//! `{species}`, `{scenario}` and `{year}`.

use crate::grid::{CrsChoice, GridSpec};
use crate::layers::{LayerSpec, Missing, Sampling};
use crate::model::{Objective, Robustness};
use serde::Deserialize;
use sha2::{Digest, Sha256};
use std::collections::BTreeMap;
use std::fmt;
use std::path::{Path, PathBuf};

pub mod climate;
pub mod connectivity;
pub mod reference;
pub mod terms;
pub mod zones;

/// One problem found in a plan: where (`key`) and what was expected.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanIssue {
    /// Dotted key path, e.g. `grid.cell_size_km` or `species[2].habitat.path`.
    pub key: String,
    /// What is wrong and what was expected.
    pub message: String,
}

/// A plan that could not be read or validated: every problem at once.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanError {
    /// The plan file.
    pub file: PathBuf,
    /// Every problem found.
    pub issues: Vec<PlanIssue>,
}

impl fmt::Display for PlanError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let n = self.issues.len();
        write!(
            f,
            "{}: {n} problem{} found",
            self.file.display(),
            if n == 1 { "" } else { "s" }
        )?;
        for issue in &self.issues {
            write!(f, "\n  - `{}`: {}", issue.key, issue.message)?;
        }
        Ok(())
    }
}

impl std::error::Error for PlanError {}

/// A layer source as written in the plan, before templates are filled in.
#[derive(Debug, Clone, PartialEq)]
pub struct LayerTemplate {
    /// Absolute path template (may hold `{species}`, `{scenario}`, `{year}`).
    pub path: String,
    /// How values are taken onto cells.
    pub sampling: Sampling,
    /// Property / column template, if any.
    pub field: Option<String>,
    /// Layer of a multi-layer vector file (GeoPackage), if named.
    pub layer: Option<String>,
    /// NetCDF files: average this many years centred on the year asked for (1: that year).
    pub years_window: u32,
    /// CRS of the file's coordinates (`None`: the file's own, else WGS84 lon/lat).
    pub crs: Option<String>,
    /// Values outside this range are errors.
    pub valid_range: Option<(f64, f64)>,
    /// What to do with uncovered cells.
    pub missing: Missing,
    /// Repair invalid polygons instead of refusing them (the plan's `repair_polygons`).
    pub repair: bool,
}

impl LayerTemplate {
    /// Fills in the template for one species, scenario and year.
    pub fn resolve(&self, species: &str, scenario: &str, year: i32) -> LayerSpec {
        let fill = |s: &str| {
            s.replace("{species}", species)
                .replace("{scenario}", scenario)
                .replace("{year}", &year.to_string())
        };
        LayerSpec {
            path: PathBuf::from(fill(&self.path)),
            sampling: self.sampling,
            field: self.field.as_deref().map(fill),
            layer: self.layer.clone(),
            year: (year != 0).then_some(year),
            years_window: self.years_window,
            crs: self.crs.clone(),
            valid_range: self.valid_range,
            missing: self.missing,
            repair: self.repair,
        }
    }

    /// The resolved spec of a layer that uses no template fields.
    pub fn fixed(&self) -> LayerSpec {
        self.resolve("", "", 0)
    }

    /// True when the path or field depends on the scenario or year.
    pub fn varies_by_scenario_or_year(&self) -> bool {
        let f = self.field.as_deref().unwrap_or("");
        let netcdf = self.path.to_ascii_lowercase().ends_with(".nc");
        netcdf
            || ["{scenario}", "{year}"]
                .iter()
                .any(|t| self.path.contains(t) || f.contains(t))
    }
}

/// The first brace use in a template that is not `{species}`, `{scenario}` or `{year}` (an
/// unknown or broken placeholder, a lone brace), if any.
fn bad_placeholder(text: &str) -> Option<String> {
    const KNOWN: [&str; 3] = ["{species}", "{scenario}", "{year}"];
    let mut rest = text;
    while let Some(i) = rest.find(['{', '}']) {
        let tail = &rest[i..];
        match KNOWN.iter().find(|k| tail.starts_with(*k)) {
            Some(k) => rest = &tail[k.len()..],
            None => {
                let end = tail[1..]
                    .find(['{', '}'])
                    .map(|j| j + 2)
                    .unwrap_or(tail.len())
                    .min(tail.len());
                return Some(tail[..end].to_string());
            }
        }
    }
    None
}

/// A species and its habitat source.
#[derive(Debug, Clone, PartialEq)]
pub struct SpeciesPlan {
    /// Species name (used in feature names; letters, digits, `-`, `_`).
    pub name: String,
    /// Habitat suitability share (0–1) of each cell, per scenario and year.
    pub habitat: LayerTemplate,
    /// Target share overriding the default.
    pub target: Option<f64>,
    /// Weight in benefit objectives.
    pub weight: f64,
    /// Key `may_be_absent`: the species may have no habitat anywhere in the region (in every
    /// scenario and year) without that being a plan error; its features are then reported
    /// as absent.
    pub may_be_absent: bool,
}

/// How per-cell cost is defined.
#[derive(Debug, Clone, PartialEq)]
pub enum CostPlan {
    /// Cost is sea area (km²).
    Area,
    /// Cost read from a layer (e.g. forgone fishing value).
    Layer {
        /// The cost source.
        layer: LayerTemplate,
        /// True when values are per km² (a cell costs value × sea area); false when per cell.
        per_km2: bool,
    },
}

/// Polygons that lock cells in or out; a cell counts when this share of its sea is covered.
#[derive(Debug, Clone, PartialEq)]
pub struct AreaRule {
    /// Polygon source.
    pub layer: LayerTemplate,
    /// Covered share (0–1] at which a cell counts.
    pub min_share: f64,
}

/// Budget as the plan states it.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct BudgetPlan {
    /// Most total cost.
    pub max_cost: Option<f64>,
    /// Most share (0–1) of the region's sea area.
    pub max_share: Option<f64>,
}

/// Relative gap used when the plan states none: 0.5 %. Exact solves of large grids can spend
/// many minutes proving the last fraction of a percent; within 0.5 % of the optimum is far
/// below the uncertainty of the habitat projections (common practice, no source).
pub const DEFAULT_GAP: f64 = 0.005;

/// Time limit used when the plan states none: 300 s for all the solves of one command.
pub const DEFAULT_TIME_LIMIT_S: f64 = 300.0;

/// Solver controls.
#[derive(Debug, Clone, PartialEq)]
pub struct SolverPlan {
    /// Wall-clock limit for all the solves of one command (the main solve and the stress or
    /// sweep solves share it, see [`crate::solve::time`]). Units: s.
    pub time_limit_s: f64,
    /// Relative gap at which to stop.
    pub gap: f64,
    /// Solver threads.
    pub threads: Option<u32>,
    /// Exact method: the direct model, the decomposition, or chosen by size
    /// ([`crate::solve::decompose::Method`]).
    pub method: crate::solve::decompose::Method,
    /// Whether `time_limit_s` is [`DEFAULT_TIME_LIMIT_S`] because the plan states none.
    pub time_limit_is_default: bool,
    /// Whether `gap` is [`DEFAULT_GAP`] because the plan states none.
    pub gap_is_default: bool,
}

impl Default for SolverPlan {
    fn default() -> Self {
        SolverPlan {
            time_limit_s: DEFAULT_TIME_LIMIT_S,
            gap: DEFAULT_GAP,
            threads: None,
            method: crate::solve::decompose::Method::Auto,
            time_limit_is_default: true,
            gap_is_default: true,
        }
    }
}

impl SolverPlan {
    /// One line for the run header and `check`, e.g. `gap 0.5% (default), time limit 300 s
    /// for all solves (default)`.
    pub fn describe(&self) -> String {
        let mark = |d: bool| if d { " (default)" } else { "" };
        format!(
            "gap {}%{}, time limit {} s for all solves{}{}",
            trim_number(100.0 * self.gap),
            mark(self.gap_is_default),
            trim_number(self.time_limit_s),
            mark(self.time_limit_is_default),
            self.threads
                .map(|t| format!(", {t} threads"))
                .unwrap_or_default()
        )
    }
}

/// A number with at most three decimals and no trailing zeros (`0.5`, `300`, `0.125`).
fn trim_number(x: f64) -> String {
    let s = format!("{x:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    s.to_string()
}

/// Default of `connectivity_min_link`: one larva in a hundred (the resolution of 100
/// particles per cell; weaker links are mostly sampling noise; common practice, no source).
pub const DEFAULT_MIN_LINK: f64 = 0.01;

/// Default of `connectivity_links_per_cell`: a cell's four strongest links (as many as its
/// rook neighbours; keeps the model to a few variables per cell).
pub const DEFAULT_LINKS_PER_CELL: usize = 4;

/// The connectivity reward keys of `[optimise]`, checked; `None` when the weight is absent or 0.
fn link_rule(
    ck: &mut Checker,
    o: &RawOptimise,
    has_connectivity: bool,
) -> Option<crate::connectivity::LinkRule> {
    let w = o.connectivity_weight?;
    let mut ok = true;
    if !(w.is_finite() && w >= 0.0) {
        ck.push(
            "optimise.connectivity_weight",
            format!("must be a non-negative weight per unit of larval exchange, e.g. `connectivity_weight = 10`; got {w}"),
        );
        ok = false;
    }
    if w > 0.0 && !has_connectivity {
        ck.push(
            "optimise.connectivity_weight",
            "needs a `[connectivity]` section (currents and larval traits, or supplied matrices) to say which cells exchange larvae",
        );
        ok = false;
    }
    let min_link = o.connectivity_min_link.unwrap_or(DEFAULT_MIN_LINK);
    if !(min_link.is_finite() && min_link >= 0.0) {
        ck.push(
            "optimise.connectivity_min_link",
            format!("must be a non-negative link strength (share of larvae), e.g. `connectivity_min_link = 0.01`; got {min_link}"),
        );
    }
    let per_cell = match o.connectivity_links_per_cell {
        None => DEFAULT_LINKS_PER_CELL,
        Some(k @ 1..=64) => k as usize,
        Some(k) => {
            ck.push(
                "optimise.connectivity_links_per_cell",
                format!("must be a whole number from 1 to 64, e.g. `connectivity_links_per_cell = 4`; got {k}"),
            );
            DEFAULT_LINKS_PER_CELL
        }
    };
    if !ok || w == 0.0 {
        return None;
    }
    Some(crate::connectivity::LinkRule {
        weight: w,
        min_link,
        per_cell,
    })
}

/// Spatial rules of the optimisation (`[optimise]` keys beyond objective and robustness).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SpatialRules {
    /// Weight per km of reserve edge exposed to unprotected sea (compactness); `None`: off.
    pub edge_penalty: Option<f64>,
    /// Whether coast and region-boundary edges count as exposed edge (default: no, only edges
    /// facing unprotected sea count).
    pub count_coast_edges: bool,
    /// Stepping-stone rule: longest stretch along the poleward axis without a reserve. Units: km.
    pub max_gap_km: Option<f64>,
    /// Minimum reserve size: no lone chosen cell smaller than this (`model::min_size`).
    /// Units: km².
    pub min_reserve_km2: Option<f64>,
    /// Key `min_chosen_neighbours`: every chosen free cell has at least this many chosen
    /// rook neighbours (`model::neighbours`); `None`: off.
    pub min_chosen_neighbours: Option<u32>,
    /// Keys `connectivity_weight`, `connectivity_min_link`, `connectivity_links_per_cell`:
    /// reward larval exchange between chosen cells (`model::links`); `None`: off.
    pub connectivity: Option<crate::connectivity::LinkRule>,
}

/// A validated plan: every path absolute, every value checked.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// Plan name for outputs.
    pub name: String,
    /// The plan file.
    pub file: PathBuf,
    /// SHA-256 of the plan file bytes (hex), so outputs say which plan made them.
    pub hash: String,
    /// Region polygons (GeoJSON, lon/lat).
    pub region: PathBuf,
    /// Land polygons to cut out (GeoJSON, lon/lat).
    pub land: Option<PathBuf>,
    /// Repair invalid input polygons (geo's `MakeValid`) instead of refusing them; off unless
    /// the plan says `repair_polygons = true`, so a broken file is never changed silently.
    pub repair_polygons: bool,
    /// Grid settings.
    pub grid: GridSpec,
    /// Scenario names.
    pub scenarios: Vec<String>,
    /// Scenario weights for the `expected` rule (one per scenario).
    pub scenario_weights: Vec<f64>,
    /// Years, ascending.
    pub years: Vec<i32>,
    /// Species.
    pub species: Vec<SpeciesPlan>,
    /// Sea temperature per scenario and year (°C), if given.
    pub temperature: Option<LayerTemplate>,
    /// Cost definition.
    pub cost: CostPlan,
    /// Cells that must be in every network.
    pub required: Option<AreaRule>,
    /// Cells that may never be chosen.
    pub excluded: Option<AreaRule>,
    /// Default target share (0–1].
    pub default_target: f64,
    /// Budget.
    pub budget: BudgetPlan,
    /// Objective.
    pub objective: Objective,
    /// Robustness rule.
    pub robustness: Robustness,
    /// Edge penalty and max gap.
    pub rules: SpatialRules,
    /// Solver controls.
    pub solver: SolverPlan,
    /// Management zones, strictest first (empty: one kind of protection).
    pub zones: Vec<zones::ZonePlan>,
    /// Derived climate-adaptation features (`[climate]`), if asked for.
    pub climate: Option<climate::ClimatePlan>,
    /// Larval dispersal and reachability (`[connectivity]`), if asked for.
    pub connectivity: Option<connectivity::ConnectivityPlan>,
}

// ---------------------------------------------------------------- raw, as written in TOML

pub(crate) type Extra = BTreeMap<String, toml::Value>;

#[derive(Deserialize, Default)]
struct RawPlan {
    name: Option<String>,
    region: Option<String>,
    land: Option<String>,
    repair_polygons: Option<bool>,
    grid: Option<RawGrid>,
    scenarios: Option<RawScenarios>,
    #[serde(default)]
    species: Vec<RawSpecies>,
    species_list: Option<RawSpeciesList>,
    temperature: Option<RawLayer>,
    cost: Option<toml::Value>,
    required: Option<RawAreaRule>,
    excluded: Option<RawAreaRule>,
    targets: Option<RawTargets>,
    budget: Option<RawBudget>,
    optimise: Option<RawOptimise>,
    solver: Option<RawSolver>,
    climate: Option<climate::RawClimate>,
    connectivity: Option<connectivity::RawConnectivity>,
    #[serde(default)]
    zones: Vec<zones::RawZone>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawGrid {
    cell_size_km: Option<f64>,
    crs: Option<String>,
    min_sea_share: Option<f64>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawScenarios {
    names: Option<Vec<String>>,
    years: Option<Vec<i32>>,
    weights: Option<Vec<f64>>,
    #[serde(flatten)]
    extra: Extra,
}

/// A layer source as written in TOML (shared by every section that reads a layer).
#[derive(Deserialize, Clone)]
pub(crate) struct RawLayer {
    path: Option<String>,
    column: Option<String>,
    attribute: Option<String>,
    band: Option<u32>,
    variable: Option<String>,
    years_window: Option<u32>,
    layer: Option<String>,
    sampling: Option<String>,
    crs: Option<String>,
    min: Option<f64>,
    max: Option<f64>,
    missing: Option<String>,
    per: Option<String>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize, Clone)]
struct RawSpecies {
    name: Option<String>,
    habitat: Option<RawLayer>,
    target: Option<f64>,
    weight: Option<f64>,
    may_be_absent: Option<bool>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawAreaRule {
    #[serde(flatten)]
    layer: RawLayer,
    min_share: Option<f64>,
}

/// `[species_list]`: many species that share one habitat source (a file per scenario and year
/// with a column per species), so a 40-species plan is not 40 tables.
#[derive(Deserialize)]
struct RawSpeciesList {
    names: Option<Vec<String>>,
    habitat: Option<RawLayer>,
    target: Option<f64>,
    weight: Option<f64>,
    may_be_absent: Option<bool>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawTargets {
    default: Option<f64>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawBudget {
    max_cost: Option<f64>,
    max_share: Option<f64>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawOptimise {
    objective: Option<String>,
    robustness: Option<String>,
    edge_penalty: Option<f64>,
    count_coast_edges: Option<bool>,
    max_gap_km: Option<f64>,
    min_reserve_km2: Option<f64>,
    min_chosen_neighbours: Option<i64>,
    connectivity_weight: Option<f64>,
    connectivity_min_link: Option<f64>,
    connectivity_links_per_cell: Option<i64>,
    #[serde(flatten)]
    extra: Extra,
}

#[derive(Deserialize)]
struct RawSolver {
    time_limit_s: Option<f64>,
    gap: Option<f64>,
    threads: Option<u32>,
    method: Option<String>,
    #[serde(flatten)]
    extra: Extra,
}

// ---------------------------------------------------------------- validation

/// Collects problems while validating.
pub(crate) struct Checker {
    dir: PathBuf,
    issues: Vec<PlanIssue>,
    /// The plan's `repair_polygons`, given to every layer template.
    repair: bool,
}

impl Checker {
    pub(crate) fn push(&mut self, key: impl Into<String>, message: impl Into<String>) {
        self.issues.push(PlanIssue {
            key: key.into(),
            message: message.into(),
        });
    }

    pub(crate) fn unknown(&mut self, table: &str, extra: &Extra, known: &[&str]) {
        for key in extra.keys() {
            let full = if table.is_empty() {
                key.clone()
            } else {
                format!("{table}.{key}")
            };
            self.push(
                full,
                format!("unknown key; expected one of: {}", known.join(", ")),
            );
        }
    }

    pub(crate) fn resolve(&self, rel: &str) -> PathBuf {
        let p = Path::new(rel);
        if p.is_absolute() {
            p.to_path_buf()
        } else {
            self.dir.join(p)
        }
    }

    pub(crate) fn existing_file(&mut self, key: &str, rel: &str) -> PathBuf {
        let path = self.resolve(rel);
        if !path.is_file() {
            self.push(
                key,
                format!(
                    "{} (paths are relative to the plan file)",
                    not_a_file(&path)
                ),
            );
        }
        path
    }

    pub(crate) fn share(&mut self, key: &str, v: f64, allow_zero: bool) -> f64 {
        let ok = v.is_finite() && v <= 1.0 && (v > 0.0 || (allow_zero && v == 0.0));
        if !ok {
            self.push(
                key,
                format!(
                    "must be a share between {} and 1 (e.g. 0.3 for 30%), got {v}",
                    if allow_zero { "0" } else { "0 (exclusive)" }
                ),
            );
        }
        v
    }

    pub(crate) fn layer(
        &mut self,
        key: &str,
        raw: &RawLayer,
        default_missing: Missing,
    ) -> Option<LayerTemplate> {
        self.unknown(key, &raw.extra, &reference::keys_of("layer"));
        if raw.per.is_some() && key != "cost" {
            self.push(
                format!("{key}.per"),
                "`per` is only for `[cost]` (`per = \"km2\"` or `per = \"cell\"`)",
            );
        }
        let Some(rel) = raw.path.as_deref() else {
            self.push(
                format!("{key}.path"),
                "missing: the file to read, e.g. `path = \"habitat.csv\"`",
            );
            return None;
        };
        let path = self.resolve(rel).to_string_lossy().into_owned();
        let lower = rel.to_ascii_lowercase();
        let is_csv = lower.ends_with(".csv");
        let is_raster = crate::layers::RASTER_EXTENSIONS
            .iter()
            .any(|e| lower.ends_with(&format!(".{e}")));
        let is_vector = [".geojson", ".json", ".gpkg", ".shp", ".fgb"]
            .iter()
            .any(|e| lower.ends_with(e));
        if !is_csv && !is_vector && !is_raster {
            self.push(
                format!("{key}.path"),
                format!(
                    "`{rel}`: not a format driftplan reads ({}); expected a .csv point grid, a .geojson, .gpkg, .shp or .fgb vector file, or a .tif raster",
                    crate::layers::FORMATS
                ),
            );
        }
        let sampling = match raw.sampling.as_deref() {
            None if is_csv || is_raster => Sampling::Interpolate,
            None if raw.attribute.is_some() => Sampling::AreaMean,
            None => Sampling::AreaShare,
            Some("interpolate") => Sampling::Interpolate,
            Some("area-share") => Sampling::AreaShare,
            Some("area-mean") => Sampling::AreaMean,
            Some("point-count") => Sampling::PointCount,
            Some("point-sum") => Sampling::PointSum,
            Some("point-mean") => Sampling::PointMean,
            Some(other) => {
                self.push(
                    format!("{key}.sampling"),
                    format!("unknown sampling `{other}`; expected interpolate, area-share, area-mean, point-count, point-sum or point-mean"),
                );
                Sampling::AreaShare
            }
        };
        if (is_csv || is_raster) && sampling != Sampling::Interpolate {
            self.push(
                format!("{key}.sampling"),
                "a CSV point grid or a raster can only be sampled with `interpolate`",
            );
        }
        if is_vector && sampling == Sampling::Interpolate {
            self.push(
                format!("{key}.sampling"),
                "`interpolate` needs a CSV `lon,lat,value` point grid",
            );
        }
        let field = raw
            .column
            .clone()
            .or_else(|| raw.attribute.clone())
            .or_else(|| raw.band.map(|b| b.to_string()))
            .or_else(|| raw.variable.clone());
        let is_netcdf = lower.ends_with(".nc");
        let field_key = if raw.column.is_some() {
            "column"
        } else if raw.attribute.is_some() {
            "attribute"
        } else {
            "variable"
        };
        for (k, text) in [("path", rel), (field_key, field.as_deref().unwrap_or(""))] {
            if let Some(bad) = bad_placeholder(text) {
                self.push(
                    format!("{key}.{k}"),
                    format!("`{bad}` in `{text}`: the only placeholders are `{{species}}`, `{{scenario}}` and `{{year}}`, and braces are for them alone"),
                );
            }
        }
        // `column` and `attribute` name the same thing in different files; a wrong one would
        // otherwise be ignored silently.
        if is_vector && raw.column.is_some() {
            self.push(
                format!("{key}.column"),
                "`column` is for CSV point grids; name a vector file's property with `attribute = \"…\"`",
            );
        }
        if (is_csv || is_raster) && raw.attribute.is_some() {
            self.push(
                format!("{key}.attribute"),
                "`attribute` is for vector files; name a CSV column with `column = \"…\"` (a raster band with `band`)",
            );
        }
        if raw.years_window.is_some() && !is_netcdf {
            self.push(
                format!("{key}.years_window"),
                "`years_window` is for NetCDF files with a time axis (`.nc`)",
            );
        }
        if raw.years_window == Some(0) {
            self.push(
                format!("{key}.years_window"),
                "a window of at least 1 year, e.g. `years_window = 20`",
            );
        }
        if raw.band == Some(0) {
            self.push(format!("{key}.band"), "bands count from 1");
        }
        let needs_field = !is_raster
            && matches!(
                sampling,
                Sampling::Interpolate
                    | Sampling::AreaMean
                    | Sampling::PointSum
                    | Sampling::PointMean
            );
        if needs_field && field.is_none() {
            let which = if is_csv { "column" } else { "attribute" };
            self.push(
                format!("{key}.{which}"),
                format!("missing: which {which} holds the values, e.g. `{which} = \"value\"`"),
            );
        }
        let valid_range = match (raw.min, raw.max) {
            (None, None) => None,
            (lo, hi) => {
                let (lo, hi) = (lo.unwrap_or(f64::NEG_INFINITY), hi.unwrap_or(f64::INFINITY));
                if lo.is_nan() || hi.is_nan() || lo > hi {
                    self.push(
                        format!("{key}.min"),
                        format!("`min` ({lo}) must not exceed `max` ({hi})"),
                    );
                }
                Some((lo, hi))
            }
        };
        let missing = match raw.missing.as_deref() {
            None => default_missing,
            Some("error") => Missing::Error,
            Some("zero") => Missing::Zero,
            Some(other) => {
                self.push(
                    format!("{key}.missing"),
                    format!("`{other}`: expected `error` or `zero`"),
                );
                default_missing
            }
        };
        Some(LayerTemplate {
            path,
            sampling,
            field,
            layer: raw.layer.clone(),
            years_window: raw.years_window.unwrap_or(1).max(1),
            crs: raw.crs.clone(),
            valid_range,
            missing,
            repair: self.repair,
        })
    }

    /// Every file a template expands to must exist.
    pub(crate) fn template_files(
        &mut self,
        key: &str,
        t: &LayerTemplate,
        species: &[&str],
        scenarios: &[String],
        years: &[i32],
    ) {
        let mut seen = std::collections::BTreeSet::new();
        let sp: Vec<&str> = if species.is_empty() {
            vec![""]
        } else {
            species.to_vec()
        };
        let sc: Vec<&str> = if scenarios.is_empty() {
            vec![""]
        } else {
            scenarios.iter().map(String::as_str).collect()
        };
        let yr: Vec<i32> = if years.is_empty() {
            vec![0]
        } else {
            years.to_vec()
        };
        for s in &sp {
            for c in &sc {
                for y in &yr {
                    let p = t.resolve(s, c, *y).path;
                    if seen.insert(p.clone()) && !p.is_file() {
                        self.push(format!("{key}.path"), not_a_file(&p));
                    }
                }
            }
        }
    }
}

/// One species entry checked: its name (`name_key` names the key of the name), target, weight
/// and habitat layer (under `key`), with every problem pushed to `ck`. `names` collects the
/// names seen so far, so a name given twice is reported.
#[allow(clippy::too_many_arguments)]
fn species_entry(
    ck: &mut Checker,
    name_key: &str,
    key: &str,
    s: &RawSpecies,
    names: &mut std::collections::BTreeSet<String>,
    scenarios: &[String],
    years: &[i32],
) -> Option<SpeciesPlan> {
    if key != "species_list" {
        ck.unknown(key, &s.extra, &reference::keys_of("species[]"));
    }
    let name = s.name.clone().unwrap_or_default();
    if !valid_species_name(&name) {
        ck.push(
                name_key.to_string(),
                format!("`{name}`: a species needs a name (e.g. `amber-wrasse` or `Sebastes fasciatus`) without `/`, braces, quotes, backslashes or space at either end"),
            );
    } else if !names.insert(name.clone()) {
        ck.push(
            name_key.to_string(),
            format!("species `{name}` is listed twice"),
        );
    }
    let target = s
        .target
        .map(|v| ck.share(&format!("{key}.target"), v, true));
    let weight = s.weight.unwrap_or(1.0);
    if !(weight.is_finite() && weight >= 0.0) {
        ck.push(
            format!("{key}.weight"),
            format!("must be a non-negative number, got {weight}"),
        );
    }
    let Some(h) = &s.habitat else {
        ck.push(
            format!("{key}.habitat"),
            "missing: `habitat = { path = \"...\", column = \"...\" }`",
        );
        return None;
    };
    // Habitat polygons say where the species lives: outside them is no habitat, not
    // missing data. Point grids and rasters that miss cells are still errors.
    let polygons = h.path.as_deref().is_some_and(|p| {
        let p = p.to_ascii_lowercase();
        [".geojson", ".json", ".gpkg", ".shp", ".fgb"]
            .iter()
            .any(|e| p.ends_with(e))
    });
    let default_missing = if polygons {
        Missing::Zero
    } else {
        Missing::Error
    };
    if let Some(mut t) = ck.layer(&format!("{key}.habitat"), h, default_missing) {
        // Habitat is a suitability share of each cell.
        if t.valid_range.is_none() {
            t.valid_range = Some((0.0, 1.0));
        }
        ck.template_files(&format!("{key}.habitat"), &t, &[&name], scenarios, years);
        return Some(SpeciesPlan {
            name,
            habitat: t,
            target,
            weight,
            may_be_absent: s.may_be_absent.unwrap_or(false),
        });
    }
    None
}

/// A species name as planners write it, Latin binomials with spaces included
/// (`Sebastes fasciatus`): any text without `/` (it separates the parts of feature names),
/// braces (template placeholders), quotes, backslashes or control characters, and without
/// space at either end. Column and file names derived from it are made safe where they are
/// written (`export::columns`); tables keep the name as given.
fn valid_species_name(s: &str) -> bool {
    !s.is_empty()
        && s.trim() == s
        && s.chars().count() <= 100
        && !s
            .chars()
            .any(|c| c.is_control() || matches!(c, '/' | '{' | '}' | '"' | '\\'))
}

fn valid_name(s: &str) -> bool {
    !s.is_empty()
        && s.chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_' || c == '.')
}

impl Plan {
    /// Reads and validates a plan file, checking that every input file it names exists.
    pub fn load(path: &Path) -> Result<Plan, PlanError> {
        let bytes = std::fs::read(path).map_err(|e| PlanError {
            file: path.to_path_buf(),
            issues: vec![PlanIssue {
                key: "(file)".into(),
                message: format!("cannot read the plan file: {e}"),
            }],
        })?;
        let text = String::from_utf8(bytes.clone()).map_err(|_| PlanError {
            file: path.to_path_buf(),
            issues: vec![PlanIssue {
                key: "(file)".into(),
                message: "the plan file is not UTF-8 text".into(),
            }],
        })?;
        let dir = path.parent().map(Path::to_path_buf).unwrap_or_default();
        let dir = if dir.as_os_str().is_empty() {
            PathBuf::from(".")
        } else {
            dir
        };
        let hash = Sha256::digest(&bytes)
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect::<String>();
        Plan::from_toml(&text, path, &dir, hash)
    }

    /// Validates plan text; `dir` is where relative paths start.
    pub fn from_toml(text: &str, file: &Path, dir: &Path, hash: String) -> Result<Plan, PlanError> {
        let fail = |issues| PlanError {
            file: file.to_path_buf(),
            issues,
        };
        let raw: RawPlan = toml::from_str(text).map_err(|e| {
            let (line, col) = e.span().map(|s| line_col(text, s.start)).unwrap_or((0, 0));
            fail(vec![PlanIssue {
                key: format!("line {line}, column {col}"),
                message: format!("not valid plan TOML: {}", e.message()),
            }])
        })?;
        let mut ck = Checker {
            dir: dir.to_path_buf(),
            issues: Vec::new(),
            repair: raw.repair_polygons.unwrap_or(false),
        };
        ck.unknown("", &raw.extra, &reference::keys_of(""));
        let name = raw.name.clone().unwrap_or_else(|| {
            file.file_stem()
                .map(|s| s.to_string_lossy().into_owned())
                .unwrap_or_else(|| "plan".into())
        });
        let region = match raw.region.as_deref() {
            Some(r) => ck.existing_file("region", r),
            None => {
                ck.push("region", "missing: a GeoJSON file of the sea region's polygon(s), e.g. `region = \"region.geojson\"`");
                PathBuf::new()
            }
        };
        let land = raw.land.as_deref().map(|l| ck.existing_file("land", l));

        // Grid.
        let grid = match &raw.grid {
            None => {
                ck.push(
                    "grid",
                    "missing table `[grid]` with at least `cell_size_km = 5`",
                );
                GridSpec {
                    cell_size_km: 1.0,
                    crs: CrsChoice::Auto,
                    min_sea_share: 0.1,
                }
            }
            Some(g) => {
                ck.unknown("grid", &g.extra, &reference::keys_of("grid"));
                let cell = match g.cell_size_km {
                    Some(v) if v.is_finite() && v > 0.0 => v,
                    Some(v) => {
                        ck.push("grid.cell_size_km", format!("must be a positive number of kilometres, e.g. `cell_size_km = 5`; got {v}"));
                        1.0
                    }
                    None => {
                        ck.push(
                            "grid.cell_size_km",
                            "missing: a positive number of kilometres, e.g. `cell_size_km = 5`",
                        );
                        1.0
                    }
                };
                let crs = match g.crs.as_deref() {
                    None | Some("auto") => CrsChoice::Auto,
                    Some(s) => CrsChoice::Given(s.to_string()),
                };
                let min_sea_share = g
                    .min_sea_share
                    .map(|v| ck.share("grid.min_sea_share", v, true))
                    .unwrap_or(0.1);
                GridSpec {
                    cell_size_km: cell,
                    crs,
                    min_sea_share,
                }
            }
        };

        // Scenarios and years.
        let (scenarios, years, scenario_weights) = match &raw.scenarios {
            None => {
                ck.push(
                    "scenarios",
                    "missing table `[scenarios]` with `names = [...]` and `years = [...]`",
                );
                (vec![], vec![], vec![])
            }
            Some(s) => {
                ck.unknown("scenarios", &s.extra, &reference::keys_of("scenarios"));
                let names = s.names.clone().unwrap_or_default();
                if names.is_empty() {
                    ck.push(
                        "scenarios.names",
                        "needs at least one scenario name, e.g. `names = [\"ssp2-4.5\"]`",
                    );
                }
                let mut uniq = std::collections::BTreeSet::new();
                for (i, n) in names.iter().enumerate() {
                    if !valid_name(n) {
                        ck.push(
                            format!("scenarios.names[{i}]"),
                            format!("`{n}`: use letters, digits, `-`, `_` or `.`"),
                        );
                    }
                    if !uniq.insert(n.clone()) {
                        ck.push(
                            format!("scenarios.names[{i}]"),
                            format!("`{n}` is listed twice"),
                        );
                    }
                }
                let mut years = s.years.clone().unwrap_or_default();
                if years.is_empty() {
                    ck.push(
                        "scenarios.years",
                        "needs at least one year, e.g. `years = [2030, 2050]`",
                    );
                }
                if years.windows(2).any(|w| w[0] >= w[1]) {
                    ck.push("scenarios.years", "years must be strictly increasing");
                }
                years.dedup();
                let weights = match &s.weights {
                    None => vec![1.0; names.len()],
                    Some(w) => {
                        if w.len() != names.len() {
                            ck.push(
                                "scenarios.weights",
                                format!(
                                    "needs one weight per scenario ({}), got {}",
                                    names.len(),
                                    w.len()
                                ),
                            );
                        }
                        if w.iter().any(|x| !(x.is_finite() && *x >= 0.0))
                            || w.iter().sum::<f64>() <= 0.0
                        {
                            ck.push(
                                "scenarios.weights",
                                "weights must be non-negative numbers, not all zero",
                            );
                        }
                        w.clone()
                    }
                };
                (names, years, weights)
            }
        };

        // Targets.
        let default_target = match &raw.targets {
            None => 0.3,
            Some(t) => {
                ck.unknown("targets", &t.extra, &reference::keys_of("targets"));
                t.default
                    .map(|v| ck.share("targets.default", v, false))
                    .unwrap_or(0.3)
            }
        };

        // Species: each `[[species]]` table, then each name of `[species_list]` with the list's
        // shared keys. (name key, key of the other fields, the species as written.)
        let mut entries: Vec<(String, String, RawSpecies)> = raw
            .species
            .iter()
            .enumerate()
            .map(|(i, s)| {
                (
                    format!("species[{i}].name"),
                    format!("species[{i}]"),
                    s.clone(),
                )
            })
            .collect();
        if let Some(l) = &raw.species_list {
            ck.unknown(
                "species_list",
                &l.extra,
                &reference::keys_of("species_list"),
            );
            let names = l.names.clone().unwrap_or_default();
            if names.is_empty() {
                ck.push(
                    "species_list.names",
                    "needs at least one species name, e.g. `names = [\"amber-wrasse\", \"Sebastes fasciatus\"]`",
                );
            }
            for (j, n) in names.into_iter().enumerate() {
                entries.push((
                    format!("species_list.names[{j}]"),
                    "species_list".into(),
                    RawSpecies {
                        name: Some(n),
                        habitat: l.habitat.clone(),
                        target: l.target,
                        weight: l.weight,
                        may_be_absent: l.may_be_absent,
                        extra: Extra::new(),
                    },
                ));
            }
        }
        if entries.is_empty() {
            ck.push(
                "species",
                "needs at least one `[[species]]` with `name` and `habitat` (or a `[species_list]`)",
            );
        }
        let mut species = Vec::new();
        let mut names = std::collections::BTreeSet::new();
        // The list's shared keys are checked for every species (their files may differ by
        // species), but a problem of the shared keys is reported once.
        let before = ck.issues.len();
        for (name_key, key, s) in &entries {
            if let Some(sp) =
                species_entry(&mut ck, name_key, key, s, &mut names, &scenarios, &years)
            {
                species.push(sp);
            }
        }
        let mut seen = std::collections::BTreeSet::new();
        let species_issues: Vec<PlanIssue> = ck
            .issues
            .drain(before..)
            .filter(|i| seen.insert((i.key.clone(), i.message.clone())))
            .collect();
        ck.issues.extend(species_issues);

        let temperature = raw.temperature.as_ref().and_then(|t| {
            let lt = ck.layer("temperature", t, Missing::Error)?;
            ck.template_files("temperature", &lt, &[], &scenarios, &years);
            Some(lt)
        });

        // Cost.
        let cost = match &raw.cost {
            None => CostPlan::Area,
            Some(toml::Value::String(s)) if s == "area" => CostPlan::Area,
            Some(v @ toml::Value::Table(_)) => match v.clone().try_into::<RawLayer>() {
                Ok(rl) => match ck.layer("cost", &rl, Missing::Error) {
                    Some(mut t) => {
                        if t.varies_by_scenario_or_year() {
                            ck.push("cost.path", "cost must not depend on {scenario} or {year}");
                        }
                        if t.valid_range.is_none() {
                            t.valid_range = Some((0.0, f64::INFINITY));
                        }
                        ck.template_files("cost", &t, &[], &[], &[]);
                        let per_km2 = match rl.per.as_deref() {
                            None | Some("km2") => true,
                            Some("cell") => false,
                            Some(x) => {
                                ck.push("cost.per", format!("`{x}`: expected `km2` (value per km², the default) or `cell`"));
                                true
                            }
                        };
                        CostPlan::Layer { layer: t, per_km2 }
                    }
                    None => CostPlan::Area,
                },
                Err(e) => {
                    ck.push("cost", format!("{e}"));
                    CostPlan::Area
                }
            },
            Some(_) => {
                ck.push(
                    "cost",
                    "expected `cost = \"area\"` or a table `[cost]` with `path` and `column`",
                );
                CostPlan::Area
            }
        };

        let mut area_rule = |key: &str, raw: &Option<RawAreaRule>, default_share: f64| {
            raw.as_ref().and_then(|r| {
                let t = ck.layer(key, &r.layer, Missing::Zero)?;
                if t.sampling != Sampling::AreaShare {
                    ck.push(
                        format!("{key}.sampling"),
                        "required/excluded areas must be GeoJSON polygons (area-share)",
                    );
                }
                ck.template_files(key, &t, &[], &[], &[]);
                let min_share = r
                    .min_share
                    .map(|v| ck.share(&format!("{key}.min_share"), v, false))
                    .unwrap_or(default_share);
                Some(AreaRule {
                    layer: t,
                    min_share,
                })
            })
        };
        // A cell is required when at least half of it is protected already; any overlap with a
        // shipping lane excludes it (common practice, no source; both configurable).
        let required = area_rule("required", &raw.required, 0.5);
        let excluded = area_rule("excluded", &raw.excluded, 0.01);

        let budget = match &raw.budget {
            None => BudgetPlan::default(),
            Some(b) => {
                ck.unknown("budget", &b.extra, &reference::keys_of("budget"));
                if let Some(c) = b.max_cost {
                    if !(c.is_finite() && c >= 0.0) {
                        ck.push(
                            "budget.max_cost",
                            format!("must be a non-negative number in cost units, got {c}"),
                        );
                    }
                }
                let max_share = b.max_share.map(|v| ck.share("budget.max_share", v, false));
                BudgetPlan {
                    max_cost: b.max_cost,
                    max_share,
                }
            }
        };

        let mut rules = SpatialRules::default();
        let (objective, robustness) = match &raw.optimise {
            None => (Objective::MinCost, Robustness::EveryScenario),
            Some(o) => {
                ck.unknown("optimise", &o.extra, &reference::keys_of("optimise"));
                if let Some(w) = o.edge_penalty {
                    if !(w.is_finite() && w >= 0.0) {
                        ck.push("optimise.edge_penalty", format!("must be a non-negative weight per km of exposed edge, e.g. `edge_penalty = 1`; got {w}"));
                    }
                }
                if let Some(g) = o.max_gap_km {
                    if !(g.is_finite() && g > 0.0) {
                        ck.push("optimise.max_gap_km", format!("must be a positive number of kilometres, e.g. `max_gap_km = 100`; got {g}"));
                    }
                }
                if let Some(m) = o.min_reserve_km2 {
                    if !(m.is_finite() && m > 0.0) {
                        ck.push("optimise.min_reserve_km2", format!("must be a positive area in km², e.g. `min_reserve_km2 = 50`; got {m}"));
                    }
                }
                let min_chosen_neighbours = match o.min_chosen_neighbours {
                    None | Some(0) => None,
                    Some(k @ 1..=4) => Some(k as u32),
                    Some(k) => {
                        ck.push("optimise.min_chosen_neighbours", format!("must be a whole number from 0 to 4 (a square cell has four rook neighbours), e.g. `min_chosen_neighbours = 1`; got {k}"));
                        None
                    }
                };
                let connectivity = link_rule(&mut ck, o, raw.connectivity.is_some());
                rules = SpatialRules {
                    connectivity,
                    min_chosen_neighbours,
                    edge_penalty: o.edge_penalty.filter(|w| *w > 0.0),
                    count_coast_edges: o.count_coast_edges.unwrap_or(false),
                    max_gap_km: o.max_gap_km,
                    min_reserve_km2: o.min_reserve_km2,
                };
                let objective = match o.objective.as_deref() {
                    None | Some("min-cost") => Objective::MinCost,
                    Some("max-benefit") => Objective::MaxBenefit,
                    Some(x) => {
                        ck.push(
                            "optimise.objective",
                            format!("`{x}`: expected `min-cost` or `max-benefit`"),
                        );
                        Objective::MinCost
                    }
                };
                let robustness = match o.robustness.as_deref() {
                    None | Some("every-scenario") => Robustness::EveryScenario,
                    Some("worst-case") => Robustness::WorstCase,
                    Some("expected") => Robustness::Expected,
                    Some("least-regret") => Robustness::LeastRegret,
                    Some(x) => {
                        ck.push(
                            "optimise.robustness",
                            format!("`{x}`: expected `every-scenario`, `worst-case`, `expected` or `least-regret`"),
                        );
                        Robustness::EveryScenario
                    }
                };
                (objective, robustness)
            }
        };
        if objective == Objective::MaxBenefit
            && budget.max_cost.is_none()
            && budget.max_share.is_none()
        {
            ck.push(
                "budget",
                "`max-benefit` needs a budget: `max_cost` and/or `max_share`",
            );
        }

        let solver = match &raw.solver {
            None => SolverPlan::default(),
            Some(s) => {
                ck.unknown("solver", &s.extra, &reference::keys_of("solver"));
                if let Some(t) = s.time_limit_s {
                    if !(t.is_finite() && t > 0.0) {
                        ck.push(
                            "solver.time_limit_s",
                            format!("must be a positive number of seconds, got {t}"),
                        );
                    }
                }
                let gap = s.gap.unwrap_or(DEFAULT_GAP);
                if !(gap.is_finite() && (0.0..1.0).contains(&gap)) {
                    ck.push(
                        "solver.gap",
                        format!("must be a relative gap in [0, 1), e.g. 0.01 for 1%; got {gap}"),
                    );
                }
                if s.threads == Some(0) {
                    ck.push("solver.threads", "must be at least 1");
                }
                let method = match s.method.as_deref() {
                    None => crate::solve::decompose::Method::Auto,
                    Some(m) => crate::solve::decompose::Method::parse(m).unwrap_or_else(|| {
                        ck.push(
                            "solver.method",
                            format!("expected `auto`, `direct` or `decompose`, got `{m}`"),
                        );
                        crate::solve::decompose::Method::Auto
                    }),
                };
                SolverPlan {
                    time_limit_s: s.time_limit_s.unwrap_or(DEFAULT_TIME_LIMIT_S),
                    gap,
                    threads: s.threads,
                    method,
                    time_limit_is_default: s.time_limit_s.is_none(),
                    gap_is_default: s.gap.is_none(),
                }
            }
        };

        let species_names: Vec<&str> = species.iter().map(|s| s.name.as_str()).collect();
        let climate = raw.climate.as_ref().and_then(|c| {
            climate::validate(
                c,
                &mut ck,
                &climate::Context {
                    scenarios: &scenarios,
                    years: &years,
                    species: &species_names,
                    has_temperature: temperature.is_some(),
                },
            )
        });

        let zones = zones::check(&mut ck, &raw.zones, &species_names);
        let connectivity = raw
            .connectivity
            .as_ref()
            .map(|c| connectivity::validate(c, &mut ck, &species_names, &scenarios));

        if !ck.issues.is_empty() {
            return Err(fail(ck.issues));
        }
        Ok(Plan {
            name,
            file: file.to_path_buf(),
            hash,
            region,
            land,
            repair_polygons: ck.repair,
            grid,
            scenarios,
            scenario_weights,
            years,
            species,
            temperature,
            cost,
            required,
            excluded,
            default_target,
            budget,
            objective,
            robustness,
            rules,
            solver,
            climate,
            connectivity,
            zones,
        })
    }

    /// The target share of a species (its override, or the default).
    pub fn target_share(&self, species: &SpeciesPlan) -> f64 {
        species.target.unwrap_or(self.default_target)
    }
}

/// 1-based line and column of a byte offset.
fn line_col(text: &str, offset: usize) -> (usize, usize) {
    let before = &text[..offset.min(text.len())];
    let line = before.matches('\n').count() + 1;
    let col = before
        .rsplit('\n')
        .next()
        .map(|l| l.chars().count())
        .unwrap_or(0)
        + 1;
    (line, col)
}

/// Why `path`, which is not a regular file, cannot be read: a folder given where a file was
/// meant says so, rather than "not found".
pub(crate) fn not_a_file(path: &Path) -> String {
    if path.is_dir() {
        format!("{} is a directory (expected a file)", path.display())
    } else {
        format!("file not found: {}", path.display())
    }
}

#[cfg(test)]
mod placeholder_tests {
    use super::bad_placeholder;

    #[test]
    fn only_the_three_placeholders_pass() {
        assert_eq!(bad_placeholder("ocean/{scenario}_{year}.csv"), None);
        assert_eq!(bad_placeholder("{species}"), None);
        assert_eq!(bad_placeholder("{spec[es}").as_deref(), Some("{spec[es}"));
        assert_eq!(bad_placeholder("a_{Year}.csv").as_deref(), Some("{Year}"));
        assert_eq!(bad_placeholder("a_{year.csv").as_deref(), Some("{year.csv"));
        assert_eq!(bad_placeholder("a}b").as_deref(), Some("}b"));
    }
}
