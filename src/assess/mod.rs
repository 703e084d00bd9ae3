//! Assess stage: takes a grid, feature table, per-cell cost and a chosen network, and returns
//! an [`Assessment`]: coverage per feature, cost, area, reserves and edge length.

pub mod connectivity;
mod coverage;
mod edge;
pub mod network_input;
mod reserves;
pub mod shape;
pub mod zones;

pub use coverage::coverage;
pub use edge::{boundary_edge_km, exposed_edge_km};
pub use reserves::reserves;

use crate::features::edges::meridian_distance_km;
use crate::features::FeatureTable;
use crate::grid::Grid;

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
    pub protected: f64,
    /// Target amount.
    pub target: f64,
    /// max(0, target − protected).
    pub shortfall: f64,
    /// Whether the target is reached (within a relative tolerance of 1e-9 of the target); never
    /// for an absent feature.
    pub reached: bool,
    /// The feature has no amount anywhere in the region (zero total: a species gone from the
    /// region in this scenario and year). Its own state: it is never reached, whatever its target.
    pub absent: bool,
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

/// The 1-based reserve number of each cell (0 outside the network), in the order of
/// `assessment.reserves` (which is `network.geojson`'s `reserve` property).
pub fn reserve_of_cells(assessment: &Assessment, n_cells: usize) -> Vec<u32> {
    let mut out = vec![0; n_cells];
    for (k, r) in assessment.reserves.iter().enumerate() {
        for &c in &r.cells {
            if let Some(slot) = out.get_mut(c as usize) {
                *slot = k as u32 + 1;
            }
        }
    }
    out
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
    /// Number of targets reached (absent features never are).
    pub targets_reached: usize,
    /// Number of absent features (zero total), counted apart from reached and missed targets.
    pub targets_absent: usize,
    /// Reserve edge on the coast or the region boundary (not shared with any cell): it needs no
    /// protection from fishing pressure next door, so it is kept apart from the exposed edge.
    /// Units: km.
    pub boundary_edge_km: f64,
    /// Number of chosen cells.
    pub cells_selected: usize,
    /// Reserve edge (exposed + boundary) over the edge of circles of the same areas
    /// ([`shape::compactness_ratio`]; 1 is a circle, NaN for an empty network).
    pub compactness_ratio: f64,
    /// Longest stretch of the poleward axis (meridian distance of centroids) between
    /// consecutive chosen cells ([`shape::largest_gap_km`]). Units: km.
    pub largest_gap_km: f64,
}

/// Scores a network: coverage of every feature, cost, area, reserves and edges.
///
/// `cost` and `selected` are dense vectors indexed by cell id and should have one entry per
/// grid cell; a missing entry counts as cost 0 / not chosen. The result does not depend on the
/// number of threads.
pub fn assess(grid: &Grid, features: &FeatureTable, cost: &[f64], selected: &[bool]) -> Assessment {
    debug_assert_eq!(cost.len(), grid.len(), "one cost per cell");
    debug_assert_eq!(selected.len(), grid.len(), "one selection flag per cell");
    let coverage = coverage(features, selected);
    let targets_reached = coverage.iter().filter(|c| c.reached).count();
    let targets_absent = coverage.iter().filter(|c| c.absent).count();
    let chosen: Vec<u32> = (0..grid.len() as u32)
        .filter(|&i| is_chosen(selected, i))
        .collect();
    // Sums in ascending cell order, so the result is reproducible to the last bit.
    let area_km2: f64 = chosen
        .iter()
        .map(|&i| grid.cells[i as usize].sea_area_km2)
        .sum::<f64>()
        + 0.0; // an empty f64 sum is −0.0; + 0.0 makes it 0 so outputs never say "-0"
    let total_cost: f64 = chosen.iter().map(|&i| cost_of(cost, i)).sum::<f64>() + 0.0;
    let share_of_region = if grid.sea_area_km2 > 0.0 {
        area_km2 / grid.sea_area_km2
    } else {
        0.0
    };
    let reserves = reserves(grid, cost, selected);
    let exposed = exposed_edge_km(grid, selected);
    let boundary = boundary_edge_km(grid, selected);
    let positions: Vec<f64> = grid
        .cells
        .iter()
        .map(|c| meridian_distance_km(c.lonlat[1]))
        .collect();
    let mut chosen_flags = vec![false; grid.len()];
    for &i in &chosen {
        chosen_flags[i as usize] = true;
    }
    Assessment {
        coverage,
        cost: total_cost,
        area_km2,
        share_of_region,
        compactness_ratio: shape::compactness_ratio(&reserves, exposed + boundary),
        largest_gap_km: shape::largest_gap_km(&positions, &chosen_flags),
        reserves,
        exposed_edge_km: exposed,
        targets_reached,
        targets_absent,
        boundary_edge_km: boundary,
        cells_selected: chosen.len(),
    }
}

/// "X of Y" targets reached, with the absent features counted apart when there are any, e.g.
/// `140 of 148 (8 absent: no amount in the region, never counted as reached)`.
pub fn targets_reached_text(a: &Assessment) -> String {
    let mut s = format!("{} of {}", a.targets_reached, a.coverage.len());
    if a.targets_absent > 0 {
        s.push_str(&format!(
            " ({} absent: no amount in the region, never counted as reached)",
            a.targets_absent
        ));
    }
    s
}

/// Whether cell `id` is chosen; ids past the end of `selected` are not.
pub(crate) fn is_chosen(selected: &[bool], id: u32) -> bool {
    selected.get(id as usize).copied().unwrap_or(false)
}

/// Cost of cell `id`; ids past the end of `cost` cost nothing.
pub(crate) fn cost_of(cost: &[f64], id: u32) -> f64 {
    cost.get(id as usize).copied().unwrap_or(0.0)
}

#[cfg(test)]
pub(crate) mod fixtures {
    //! A small hand grid shared by the assess tests.
    use crate::grid::{Crs, Grid};

    /// 4 columns × 3 rows of 10 km cells (ids row-major from the south-west):
    /// ```text
    /// row 2:  8  9 10 11
    /// row 1:  4  5  6  7
    /// row 0:  0  1  2  3
    /// ```
    pub fn grid_4x3() -> Grid {
        Grid::full_rectangle(Crs::auto_laea(10.0, 55.0), 10_000.0, [0.0, 0.0], 4, 3)
            .expect("a valid LAEA definition and positive size")
    }

    /// Selection flags from a list of chosen ids.
    pub fn pick(n: usize, ids: &[u32]) -> Vec<bool> {
        let mut s = vec![false; n];
        for &i in ids {
            s[i as usize] = true;
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::fixtures::{grid_4x3, pick};
    use super::*;
    use crate::features::{Feature, FeatureKind, Target};

    fn feature(name: &str, amounts: Vec<(u32, f64)>, target: Target) -> Feature {
        let total = amounts.iter().map(|a| a.1).sum();
        Feature {
            name: name.into(),
            kind: FeatureKind::Habitat,
            species: Some("silver-bream".into()),
            scenario: Some(0),
            year: Some(2050),
            unit: "km2".into(),
            amounts,
            total,
            target,
            weight: 1.0,
        }
    }

    #[test]
    fn whole_assessment_by_hand() {
        let g = grid_4x3();
        // Chosen: {0, 1, 5} (one L-shaped reserve) and {3} and {11}.
        let sel = pick(12, &[0, 1, 5, 3, 11]);
        let cost: Vec<f64> = (0..12).map(|i| i as f64).collect();
        let table = FeatureTable {
            scenarios: vec!["ssp2-4.5".into()],
            years: vec![2050],
            features: vec![
                // Protected 2 + 5 = 7 of total 2 + 5 + 6 = 13; target 0.5·13 = 6.5 → reached.
                feature("a", vec![(1, 2.0), (5, 5.0), (6, 6.0)], Target::Share(0.5)),
                // Protected 1 (cell 3) of 1 + 4 = 5; target 3 → shortfall 2.
                feature("b", vec![(3, 1.0), (8, 4.0)], Target::Amount(3.0)),
            ],
        };
        let a = assess(&g, &table, &cost, &sel);
        // Hand computation: cost 0 + 1 + 5 + 3 + 11 = 20; area 5 × 100 km² = 500 km².
        assert_eq!(a.cost, 20.0);
        assert!((a.area_km2 - 500.0).abs() < 1e-9);
        assert!((a.share_of_region - 500.0 / 1200.0).abs() < 1e-12);
        assert_eq!(a.cells_selected, 5);
        assert_eq!(a.coverage[0].protected, 7.0);
        assert_eq!(a.coverage[0].target, 6.5);
        assert!(a.coverage[0].reached);
        assert_eq!(a.coverage[0].shortfall, 0.0);
        assert_eq!(a.coverage[0].scenario.as_deref(), Some("ssp2-4.5"));
        assert_eq!(a.coverage[1].protected, 1.0);
        assert_eq!(a.coverage[1].shortfall, 2.0);
        assert!(!a.coverage[1].reached);
        assert_eq!(a.targets_reached, 1);
        // Reserves: {0,1,5} (300 km²) first, then {3} and {11} (100 km² each, lower id first).
        let cells: Vec<Vec<u32>> = a.reserves.iter().map(|r| r.cells.clone()).collect();
        assert_eq!(cells, vec![vec![0, 1, 5], vec![3], vec![11]]);
        assert_eq!(a.reserves[0].cost, 6.0);
        // Exposed edge, counting 10 km cell sides facing unchosen cells:
        // cell 0: north→4 (1); cell 1: east→2 (1); cell 5: west→4, east→6, north→9 (3);
        // cell 3: west→2, north→7 (2); cell 11: west→10, south→7 (2). Total 9 sides = 90 km.
        assert!((a.exposed_edge_km - 90.0).abs() < 1e-9);
        // Boundary edge: cell 0 south+west (2), cell 1 south (1), cell 3 south+east (2),
        // cell 11 north+east (2), cell 5 none. Total 7 sides = 70 km.
        assert!((a.boundary_edge_km - 70.0).abs() < 1e-9);
        // Compactness: edge 160 km over circle perimeters 2√(300π) + 2·2√(100π) = 132.298 km
        // → 1.20939 (hand computation).
        assert!((a.compactness_ratio - 160.0 / 132.298).abs() < 1e-4);
        // Largest gap: chosen rows 0, 1, 2 of 10 km cells near the LAEA centre (scale ≈ 1),
        // so consecutive chosen centroids are about 10 km apart along the meridian.
        assert!(
            (a.largest_gap_km - 10.0).abs() < 0.2,
            "{}",
            a.largest_gap_km
        );
    }

    #[test]
    fn empty_network_holds_nothing() {
        let g = grid_4x3();
        let table = FeatureTable {
            scenarios: vec![],
            years: vec![],
            features: vec![feature("a", vec![(1, 2.0)], Target::Share(0.0))],
        };
        let a = assess(&g, &table, &[1.0; 12], &[false; 12]);
        assert_eq!(a.cost, 0.0);
        assert!(a.reserves.is_empty());
        assert_eq!(a.exposed_edge_km, 0.0);
        // A zero target is reached by holding nothing (hand check: 0 ≥ 0).
        assert!(a.coverage[0].reached);
        assert!(!a.coverage[0].absent);
        // Unknown scenario index is reported as no scenario rather than a panic.
        assert_eq!(a.coverage[0].scenario, None);
    }
}
