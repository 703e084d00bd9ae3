//! Features stage: turns layers (and derived climate layers) into a [`FeatureTable`] of sparse
//! per-cell amounts, each with its scenario, year, kind and target.

pub mod absent;
pub mod boundary;
pub mod corridor;
pub mod derive;
pub mod distinctness;
pub mod edges;
pub mod reachability;
pub mod time;

pub use crate::plan::terms::Target;

/// What kind of thing a feature is.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize, serde::Deserialize,
)]
pub enum FeatureKind {
    /// A species' suitable habitat in one scenario and year (km²).
    Habitat,
    /// Density of climate trajectories linking present to future habitat.
    Corridor,
    /// Habitat near the poleward (leading) range edge.
    LeadingEdge,
    /// Habitat near the equatorward (trailing) range edge.
    TrailingEdge,
    /// Persistent habitat or low-velocity water.
    Refugium,
    /// Biogeographic boundary zone.
    Boundary,
    /// Genetically distinct population.
    Distinctness,
    /// Future habitat reached by larvae from present habitat (`features::reachability`).
    Reachability,
}

impl FeatureKind {
    /// The vocabulary name used in plan files and outputs.
    pub fn as_str(self) -> &'static str {
        match self {
            FeatureKind::Habitat => "habitat",
            FeatureKind::Corridor => "corridor",
            FeatureKind::LeadingEdge => "leading-edge",
            FeatureKind::TrailingEdge => "trailing-edge",
            FeatureKind::Refugium => "refugium",
            FeatureKind::Boundary => "boundary",
            FeatureKind::Distinctness => "distinctness",
            FeatureKind::Reachability => "reachability",
        }
    }
}

/// One feature: sparse amounts per cell plus what the network must hold of it.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Feature {
    /// Unique name, e.g. `habitat/silver-bream/ssp2-4.5/2050`.
    pub name: String,
    /// What kind of feature this is.
    pub kind: FeatureKind,
    /// Species it belongs to, if any.
    pub species: Option<String>,
    /// Index into [`FeatureTable::scenarios`], if scenario-specific.
    pub scenario: Option<usize>,
    /// Year, if year-specific (`None` for time-weighted or static features).
    pub year: Option<i32>,
    /// Unit of the amounts (e.g. `km2`).
    pub unit: String,
    /// `(cell id, amount)` pairs, sorted by cell id, zero amounts left out.
    pub amounts: Vec<(u32, f64)>,
    /// Sum of all amounts over the grid.
    pub total: f64,
    /// What the network must hold.
    pub target: Target,
    /// Weight in benefit objectives (1 by default).
    pub weight: f64,
}

/// Every feature of a run.
#[derive(Debug, Clone, PartialEq, Default, serde::Serialize, serde::Deserialize)]
pub struct FeatureTable {
    /// Scenario names, in plan order.
    pub scenarios: Vec<String>,
    /// Years, ascending.
    pub years: Vec<i32>,
    /// The features.
    pub features: Vec<Feature>,
}

pub mod habitat;
