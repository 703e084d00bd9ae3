//! Management zones: each chosen cell takes exactly one zone (e.g. `no-take`, `partial-use`),
//! with the zone's own cost and its own credit toward each feature's target.
//!
//! # Formulation
//! One binary wᵢ_z per cell and zone with Σ_z wᵢ_z = xᵢ (so at most one zone per cell, and xᵢ
//! keeps meaning "in the network" for every other rule: area budget, max gap, minimum size,
//! required and excluded cells). Then
//! * cost: Σᵢ Σ_z s_z·cᵢ·wᵢ_z (s_z the zone's cost share, e.g. 1 for no-take, 0.4 where some
//!   fishing goes on), in the min-cost objective, the cost budget and the least-cost stage;
//! * holdings toward targets: Σᵢ Σ_z r_zk·aᵢₖ·wᵢ_z (r_zk the zone's credit for feature k);
//! * zone targets: Σᵢ aᵢₖ·wᵢ_z ≥ T_zk (e.g. at least 10 % of each species' habitat in no-take);
//! * cells a zone may not take: wᵢ_z fixed at 0;
//! * edge penalty: a shared edge counts when its two cells are in different zones or one is
//!   outside the network, eᵢⱼ ≥ wᵢ_z − wⱼ_z and eᵢⱼ ≥ wⱼ_z − wᵢ_z for every z. With zone 0 meaning
//!   "outside", this is lᵢⱼ·[zᵢ ≠ zⱼ] and reduces to lᵢⱼ·|xᵢ − xⱼ| with one zone.
//!
//! A network is an assignment: per cell 0 (outside) or 1 + the zone's index.

/// The plan's zones as the model sees them.
#[derive(Debug, Clone, PartialEq)]
pub struct Zoning {
    /// Zone names, in plan order.
    pub names: Vec<String>,
    /// Share of a cell's cost paid in each zone (1 = the full cost).
    pub cost_share: Vec<f64>,
    /// `credit[z][k]`: share of feature k's amount in a cell of zone z that counts toward the
    /// feature's target (1 = all of it).
    pub credit: Vec<Vec<f64>>,
    /// `allowed[z][i]`: whether cell i may take zone z.
    pub allowed: Vec<Vec<bool>>,
    /// Targets per zone: the feature's own amount in cells of that zone must reach it.
    pub targets: Vec<ZoneTarget>,
}

/// At least `amount` of feature `feature` in cells of zone `zone`.
#[derive(Debug, Clone, PartialEq)]
pub struct ZoneTarget {
    /// Zone index.
    pub zone: usize,
    /// Feature index.
    pub feature: usize,
    /// Least amount. Units: the feature's own.
    pub amount: f64,
}

impl Zoning {
    /// Number of zones.
    pub fn len(&self) -> usize {
        self.names.len()
    }

    /// Whether there are no zones.
    pub fn is_empty(&self) -> bool {
        self.names.is_empty()
    }

    /// The zone index of a cell's assignment value (`None`: outside the network).
    pub fn zone_of(value: u8) -> Option<usize> {
        (value > 0).then(|| value as usize - 1)
    }

    /// Cost of cell `i` (base cost `cost`) under assignment value `value`.
    pub fn cell_cost(&self, cost: f64, value: u8) -> f64 {
        Self::zone_of(value).map_or(0.0, |z| self.cost_share[z] * cost)
    }

    /// Credit of feature `k` in a cell with assignment value `value` (0 outside).
    pub fn cell_credit(&self, k: usize, value: u8) -> f64 {
        Self::zone_of(value).map_or(0.0, |z| self.credit[z][k])
    }

    /// The zone names of an assignment, one per cell (empty outside the network).
    pub fn words(&self, assignment: &[u8]) -> Vec<String> {
        assignment
            .iter()
            .map(|&v| Self::zone_of(v).map_or_else(String::new, |z| self.names[z].clone()))
            .collect()
    }
}

/// The assignment of an unzoned network (or of one given without zones): every chosen cell in
/// the first zone (the plan lists its strictest zone first).
pub fn first_zone(selected: &[bool]) -> Vec<u8> {
    selected.iter().map(|&s| u8::from(s)).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn costs_and_credits_follow_the_zone() {
        // Hand: no-take pays the full cost 10 and counts all habitat; partial use pays 40 %
        // (4) and counts half; outside pays and counts nothing.
        let z = Zoning {
            names: vec!["no-take".into(), "partial-use".into()],
            cost_share: vec![1.0, 0.4],
            credit: vec![vec![1.0], vec![0.5]],
            allowed: vec![vec![true], vec![true]],
            targets: vec![],
        };
        assert_eq!(z.cell_cost(10.0, 1), 10.0);
        assert_eq!(z.cell_cost(10.0, 2), 4.0);
        assert_eq!(z.cell_cost(10.0, 0), 0.0);
        assert_eq!(z.cell_credit(0, 2), 0.5);
        assert_eq!(z.words(&[0, 2, 1]), vec!["", "partial-use", "no-take"]);
        assert_eq!(first_zone(&[true, false]), vec![1, 0]);
    }
}
