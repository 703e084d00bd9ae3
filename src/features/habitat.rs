//! Habitat features: each species' suitable habitat (km²) in each scenario and year.

use super::{Feature, FeatureKind, Target};
use crate::grid::Grid;

/// Suitability shares of one species in one scenario and year, one value (0–1) per cell.
pub struct HabitatLayer<'a> {
    /// Species name.
    pub species: &'a str,
    /// Scenario index.
    pub scenario: usize,
    /// Scenario name (for the feature name).
    pub scenario_name: &'a str,
    /// Year.
    pub year: i32,
    /// Share of each cell's sea that is suitable habitat (0–1).
    pub share: &'a [f64],
    /// Target share of the total.
    pub target_share: f64,
    /// Benefit weight.
    pub weight: f64,
}

/// Turns a suitability layer into a habitat feature: amount = share × sea area, so the unit
/// is km² of suitable habitat and the target is a share of that scenario-year's total.
pub fn habitat_feature(grid: &Grid, layer: &HabitatLayer<'_>) -> Feature {
    let mut amounts: Vec<(u32, f64)> = layer
        .share
        .iter()
        .zip(&grid.cells)
        .enumerate()
        .filter(|(_, (s, _))| **s > 0.0)
        .map(|(i, (s, c))| (i as u32, s * c.sea_area_km2))
        .collect();
    // A filtered collect grows by doubling: up to half the allocation would be slack, which
    // at 1M cells × 480 features is gigabytes.
    amounts.shrink_to_fit();
    // An empty f64 sum is −0.0 (a species with no habitat); + 0.0 keeps "-0" out of outputs.
    let total = amounts.iter().map(|(_, a)| a).sum::<f64>() + 0.0;
    Feature {
        name: format!(
            "habitat/{}/{}/{}",
            layer.species, layer.scenario_name, layer.year
        ),
        kind: FeatureKind::Habitat,
        species: Some(layer.species.to_string()),
        scenario: Some(layer.scenario),
        year: Some(layer.year),
        unit: "km2".into(),
        amounts,
        total,
        target: Target::Share(layer.target_share),
        weight: layer.weight,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;

    #[test]
    fn amount_is_share_times_sea_area() {
        // 2×1 grid of 10 km cells: 100 km² each (hand computation: 10 km × 10 km).
        let grid =
            Grid::full_rectangle(Crs::auto_laea(0.0, -40.0), 10_000.0, [0.0, 0.0], 2, 1).unwrap();
        let share = [0.25, 0.0];
        let f = habitat_feature(
            &grid,
            &HabitatLayer {
                species: "a",
                scenario: 0,
                scenario_name: "s",
                year: 2050,
                share: &share,
                target_share: 0.3,
                weight: 1.0,
            },
        );
        assert_eq!(f.amounts.len(), 1);
        assert!((f.amounts[0].1 - 25.0).abs() < 1e-9);
        assert!((f.target.amount(f.total) - 7.5).abs() < 1e-9);
        assert_eq!(f.name, "habitat/a/s/2050");
    }
}
