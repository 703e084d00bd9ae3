//! `summary.json`: the facts of one run, for people and for scripts.

use super::CAUTION;
use crate::assess::Assessment;
use crate::layers::SamplingReport;
use crate::model::ScenarioResult;
use crate::solve::Solution;
use serde::Serialize;
use sha2::{Digest, Sha256};
use std::collections::BTreeMap;

/// The facts of one run. Field order is the key order of `summary.json`. Non-finite numbers
/// (e.g. a heuristic's bound and gap) are written as `null`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Summary {
    /// Plan name (from the plan file).
    pub plan: String,
    /// SHA-256 of the plan file's bytes, lower-case hex: ties outputs to the exact plan.
    pub plan_sha256: String,
    /// Solver that produced the network (`highs`, `greedy`, ...).
    pub solver: String,
    /// How the solve ended (`optimal`, `gap-limit`, `time-limit`, `heuristic`).
    pub status: String,
    /// Objective value of the network, in the problem's own sense.
    pub objective: f64,
    /// Best proven bound on the objective.
    pub bound: f64,
    /// Relative gap between objective and bound (0–1).
    pub gap: f64,
    /// Solve wall-clock time. Units: s.
    pub seconds: f64,
    /// Total cost of the network.
    pub cost: f64,
    /// Sea area of the network. Units: km².
    pub area_km2: f64,
    /// Network area over the region's sea area (0–1).
    pub share_of_region: f64,
    /// Number of reserves (connected pieces).
    pub reserves: usize,
    /// Reserve edge facing unprotected sea. Units: km.
    pub exposed_edge_km: f64,
    /// Reserve edge on the coast or the region boundary. Units: km.
    pub boundary_edge_km: f64,
    /// Reserve edge over the edge of circles of the same areas (1 = circle; null if empty).
    pub compactness_ratio: f64,
    /// Longest stretch of the poleward axis between consecutive chosen cells. Units: km.
    pub largest_gap_km: f64,
    /// Targets reached (absent features never are).
    pub targets_reached: usize,
    /// Features absent from the region (zero total in their scenario and year): counted
    /// apart, never reached.
    pub targets_absent: usize,
    /// Targets in the plan (absent features included).
    pub targets_total: usize,
    /// Cells in the network.
    pub cells_selected: usize,
    /// Cells in the grid.
    pub cells: usize,
    /// Plain warnings about the run (e.g. a gap above 5 %: the network may be far from the
    /// best one); empty when there is nothing to warn about.
    pub warnings: Vec<String>,
    /// What these results are and are not.
    pub caution: String,
    /// Per scenario: benefit, best achievable benefit, regret and targets reached.
    pub scenarios: Vec<ScenarioResult>,
    /// How each point-lattice layer was sampled: cells bilinear / coastal fallback / nearest
    /// / missing (empty when the plan has no point lattices).
    pub sampling: Vec<SamplingReport>,
    /// Per scenario: cells whose temperature gradient was below the velocity floor (speed
    /// capped, bearing missing on purpose). Empty without velocity from temperature.
    pub velocity_floored_cells: BTreeMap<String, usize>,
    /// The grid's projected CRS: as given, as a PROJ string, and its EPSG code where it has one.
    pub grid_crs: Option<crate::grid::CrsInfo>,
    /// A zoned network's zones: each zone's cells, sea area and cost over the network (absent
    /// without `[[zones]]`).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub zones: Vec<crate::assess::zones::ZoneShare>,
    /// Per species and scenario with `[connectivity]`: the network's self-recruitment, its
    /// share of the reachable future habitat and how far its larvae travel (absent without
    /// `[connectivity]`).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub connectivity: Vec<crate::assess::connectivity::NetworkConnectivity>,
    /// With `connectivity_weight`: the link strength the network holds, the number of links
    /// the reward kept and the reward in the objective (absent otherwise).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub connectivity_reward: Option<RewardSummary>,
    /// driftplan version that wrote the file.
    pub driftplan_version: String,
}

/// The connectivity reward of a run (`model::links`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct RewardSummary {
    /// Objective weight per unit of link strength (`connectivity_weight`).
    pub weight: f64,
    /// Links kept for the reward (pairs of cells).
    pub links_kept: usize,
    /// Link strength the network holds (own shares plus pairs with both ends chosen).
    pub linked: f64,
    /// weight × linked: what the reward takes off a minimised objective (adds to a maximised
    /// one).
    pub reward: f64,
}

impl RewardSummary {
    /// The reward summary of `selected` under `reward`.
    pub fn new(reward: &crate::model::LinkReward, selected: &[bool]) -> RewardSummary {
        let linked = reward.linked(selected);
        RewardSummary {
            weight: reward.weight,
            links_kept: reward.pairs.len(),
            linked,
            reward: reward.weight * linked,
        }
    }
}

impl Summary {
    /// Gathers the summary of a run from its solution and assessment. `plan_sha256` is
    /// [`plan_hash`] of the plan file; `grid_cells` the number of grid cells.
    pub fn new(
        plan: &str,
        plan_sha256: &str,
        solution: &Solution,
        assessment: &Assessment,
        grid_cells: usize,
    ) -> Summary {
        Summary {
            plan: plan.to_string(),
            plan_sha256: plan_sha256.to_string(),
            solver: solution.solver.clone(),
            status: solution.status.as_str().to_string(),
            objective: solution.objective,
            bound: solution.bound,
            gap: solution.gap,
            seconds: solution.seconds,
            cost: assessment.cost,
            area_km2: assessment.area_km2,
            share_of_region: assessment.share_of_region,
            reserves: assessment.reserves.len(),
            exposed_edge_km: assessment.exposed_edge_km,
            boundary_edge_km: assessment.boundary_edge_km,
            compactness_ratio: assessment.compactness_ratio,
            largest_gap_km: assessment.largest_gap_km,
            targets_reached: assessment.targets_reached,
            targets_absent: assessment.targets_absent,
            targets_total: assessment.coverage.len(),
            cells_selected: assessment.cells_selected,
            cells: grid_cells,
            warnings: crate::solve::warnings(solution),
            caution: CAUTION.to_string(),
            scenarios: solution.scenarios.clone(),
            sampling: Vec::new(),
            velocity_floored_cells: BTreeMap::new(),
            grid_crs: None,
            zones: Vec::new(),
            connectivity: Vec::new(),
            connectivity_reward: None,
            driftplan_version: env!("CARGO_PKG_VERSION").to_string(),
        }
    }
}

/// SHA-256 of `bytes` as 64 lower-case hex digits.
pub fn plan_hash(bytes: &[u8]) -> String {
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// `summary.json`: pretty-printed, keys in [`Summary`] field order, trailing newline.
pub fn summary_json(summary: &Summary) -> String {
    // A struct of strings and numbers always serialises (serde_json writes non-finite floats
    // as null rather than failing).
    let mut s = serde_json::to_string_pretty(summary).unwrap_or_default();
    s.push('\n');
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::solve::SolveStatus;

    #[test]
    fn sha256_known_vectors() {
        // FIPS 180-2, Appendix B.1 ("abc") and the empty-message digest.
        assert_eq!(
            plan_hash(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        assert_eq!(
            plan_hash(b""),
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
        );
    }

    #[test]
    fn json_has_stable_keys_and_null_for_nan() {
        let sol = Solution {
            selected: vec![true, false],
            status: SolveStatus::Heuristic,
            objective: 7.0,
            bound: f64::NAN,
            gap: f64::NAN,
            seconds: 0.25,
            solver: "greedy".into(),
            scenarios: vec![ScenarioResult {
                name: "s1".into(),
                benefit: 2.5,
                benefit_max: 3.0,
                best: Some(3.0),
                regret: Some(0.5),
                targets_reached: 2,
                targets: 3,
                absent: 0,
            }],
            scenario_best: None,
            zones: None,
        };
        let a = Assessment {
            coverage: vec![],
            cost: 7.0,
            area_km2: 100.0,
            share_of_region: 0.5,
            reserves: vec![],
            exposed_edge_km: 40.0,
            targets_reached: 0,
            targets_absent: 0,
            boundary_edge_km: 0.0,
            cells_selected: 1,
            compactness_ratio: 1.0,
            largest_gap_km: 0.0,
        };
        let s = Summary::new("demo", &plan_hash(b"abc"), &sol, &a, 2);
        let text = summary_json(&s);
        let v: serde_json::Value = serde_json::from_str(&text).unwrap();
        assert!(v["bound"].is_null());
        assert_eq!(v["scenarios"][0]["regret"], 0.5);
        assert_eq!(v["status"], "heuristic");
        assert_eq!(v["cells"], 2);
        // A heuristic proves no bound: no gap warning (its status already says so).
        assert_eq!(v["warnings"], serde_json::json!([]));
        assert!(v["caution"]
            .as_str()
            .unwrap()
            .starts_with("Decision support only"));
        // An exact solve that ends above a 5 % gap carries a plain warning (solve::warnings).
        let loose = Solution {
            status: SolveStatus::TimeLimit,
            solver: "highs".into(),
            bound: 6.44,
            gap: 0.08,
            ..sol.clone()
        };
        let v: serde_json::Value =
            serde_json::from_str(&summary_json(&Summary::new("demo", "x", &loose, &a, 2))).unwrap();
        let w = v["warnings"][0].as_str().unwrap();
        assert!(w.contains("8.00%") && w.contains("time limit"), "{w}");
        // Key order follows the struct: `plan` first, `driftplan_version` last.
        let first = text.find("\"plan\"").unwrap();
        let last = text.find("\"driftplan_version\"").unwrap();
        assert!(
            first < text.find("\"solver\"").unwrap() && text.find("\"caution\"").unwrap() < last
        );
    }
}
