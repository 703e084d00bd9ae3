//! Assess stage: takes a grid, feature table, per-cell cost and a chosen network, and returns
//! an [`Assessment`]: coverage per feature, cost, area, reserves and edge length.

/// How well a network holds one feature.
#[derive(Debug, Clone, PartialEq)]
pub struct Coverage {
    /// Feature name.
    pub feature: String,
    /// Feature kind word (`habitat`, `refugium`, ...).
    pub kind: String,
    /// Species, if any.
    pub species: Option<String>,
    /// Scenario name, if any.
    pub scenario: Option<String>,
    /// Year, if any.
    pub year: Option<i32>,
    /// Total amount over the grid.
    pub total: f64,
    /// Amount inside the network.
    pub held: f64,
    /// Target amount.
    pub target: f64,
    /// max(0, target − held).
    pub shortfall: f64,
    /// Whether the target is met (within a relative tolerance of 1e-9 of the target).
    pub met: bool,
}

/// One connected piece of a network (rook adjacency).
#[derive(Debug, Clone, PartialEq)]
pub struct Reserve {
    /// Cell ids, ascending.
    pub cells: Vec<u32>,
    /// Sea area. Units: km².
    pub area_km2: f64,
    /// Total cost of its cells.
    pub cost: f64,
}

/// Everything measured about one network.
#[derive(Debug, Clone, PartialEq)]
pub struct Assessment {
    /// Per feature, in feature-table order.
    pub coverage: Vec<Coverage>,
    /// Total cost of chosen cells.
    pub cost: f64,
    /// Total sea area chosen. Units: km².
    pub area_km2: f64,
    /// Chosen sea area over the region's sea area (0–1).
    pub share_of_region: f64,
    /// Connected reserves, largest first (ties by lowest cell id).
    pub reserves: Vec<Reserve>,
    /// Reserve edge facing unprotected sea (shared edges with unchosen cells). Units: km.
    pub exposed_edge_km: f64,
    /// Number of targets met.
    pub targets_met: usize,
}
