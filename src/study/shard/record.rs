//! A job's result as written into a shard's `shard.json` and read back by the merge, exactly.
//!
//! Merged outputs must equal a one-machine run's byte for byte, so every number goes through
//! the file unchanged: an [`Exact`] is written as Rust's shortest round-trip text of the `f64`
//! (`0.1`, `1e-7`, `NaN`, `inf`), which `str::parse` turns back into the same bits (NaN aside,
//! whose payload no output shows). JSON numbers would not do: they have no NaN or infinity
//! (gaps and unproven bounds are NaN), and serde_json's default parser is not correctly
//! rounded. Networks are stored as the ids of their chosen cells.

use serde::{Deserialize, Deserializer, Serialize, Serializer};

use crate::model::ScenarioResult;
use crate::solve::{Solution, SolveStatus};
use crate::study::{Replacement, StressRow, SweepRun};

/// An `f64` written as text that parses back to the same value (module doc).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Exact(pub f64);

impl Serialize for Exact {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(&format!("{:?}", self.0))
    }
}

impl<'de> Deserialize<'de> for Exact {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let text = String::deserialize(d)?;
        text.parse::<f64>().map(Exact).map_err(|_| {
            serde::de::Error::custom(format!(
                "`{text}` is not a number (expected e.g. `0.25`, `NaN` or `inf`)"
            ))
        })
    }
}

fn exact_vec(v: &[f64]) -> Vec<Exact> {
    v.iter().copied().map(Exact).collect()
}

fn plain_vec(v: &[Exact]) -> Vec<f64> {
    v.iter().map(|e| e.0).collect()
}

/// The ids of the `true` cells.
fn chosen(selected: &[bool]) -> Vec<u32> {
    (0..selected.len() as u32)
        .filter(|&c| selected[c as usize])
        .collect()
}

/// One flag per cell from chosen ids; `None` when an id is not a cell.
fn flags(chosen: &[u32], cells: usize) -> Option<Vec<bool>> {
    let mut v = vec![false; cells];
    for &c in chosen {
        *v.get_mut(c as usize)? = true;
    }
    Some(v)
}

/// Why a record cannot be read back.
fn bad(what: &str) -> String {
    format!("{what} (the shard was written for another grid, or edited)")
}

/// [`ScenarioResult`], exactly.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ScenarioRecord {
    name: String,
    benefit: Exact,
    benefit_max: Exact,
    best: Option<Exact>,
    regret: Option<Exact>,
    targets_reached: usize,
    targets: usize,
    absent: usize,
}

impl From<&ScenarioResult> for ScenarioRecord {
    fn from(r: &ScenarioResult) -> Self {
        ScenarioRecord {
            name: r.name.clone(),
            benefit: Exact(r.benefit),
            benefit_max: Exact(r.benefit_max),
            best: r.best.map(Exact),
            regret: r.regret.map(Exact),
            targets_reached: r.targets_reached,
            targets: r.targets,
            absent: r.absent,
        }
    }
}

impl From<&ScenarioRecord> for ScenarioResult {
    fn from(r: &ScenarioRecord) -> Self {
        ScenarioResult {
            name: r.name.clone(),
            benefit: r.benefit.0,
            benefit_max: r.benefit_max.0,
            best: r.best.map(|e| e.0),
            regret: r.regret.map(|e| e.0),
            targets_reached: r.targets_reached,
            targets: r.targets,
            absent: r.absent,
        }
    }
}

/// [`Solution`], exactly (the network as chosen cell ids).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SolutionRecord {
    chosen: Vec<u32>,
    status: String,
    objective: Exact,
    bound: Exact,
    gap: Exact,
    seconds: Exact,
    solver: String,
    scenarios: Vec<ScenarioRecord>,
    scenario_best: Option<Vec<Exact>>,
    zones: Option<Vec<u8>>,
}

impl From<&Solution> for SolutionRecord {
    fn from(s: &Solution) -> Self {
        SolutionRecord {
            chosen: chosen(&s.selected),
            status: s.status.as_str().to_string(),
            objective: Exact(s.objective),
            bound: Exact(s.bound),
            gap: Exact(s.gap),
            seconds: Exact(s.seconds),
            solver: s.solver.clone(),
            scenarios: s.scenarios.iter().map(Into::into).collect(),
            scenario_best: s.scenario_best.as_deref().map(exact_vec),
            zones: s.zones.clone(),
        }
    }
}

impl SolutionRecord {
    /// Whether two solves found the same: everything but their time.
    pub fn same_but_timing(&self, other: &SolutionRecord) -> bool {
        let mut a = self.clone();
        a.seconds = other.seconds;
        // NaN ≠ NaN, so compare the written text.
        serde_json::to_string(&a).ok() == serde_json::to_string(other).ok()
    }

    /// The solution on a grid of `cells` cells.
    pub fn solution(&self, cells: usize) -> Result<Solution, String> {
        let status = [
            SolveStatus::Optimal,
            SolveStatus::GapLimit,
            SolveStatus::TimeLimit,
            SolveStatus::Heuristic,
        ]
        .into_iter()
        .find(|s| s.as_str() == self.status)
        .ok_or_else(|| format!("unknown solver status `{}`", self.status))?;
        Ok(Solution {
            selected: flags(&self.chosen, cells)
                .ok_or_else(|| bad(&format!("a network names a cell beyond {cells}")))?,
            status,
            objective: self.objective.0,
            bound: self.bound.0,
            gap: self.gap.0,
            seconds: self.seconds.0,
            solver: self.solver.clone(),
            scenarios: self.scenarios.iter().map(Into::into).collect(),
            scenario_best: self.scenario_best.as_deref().map(plain_vec),
            zones: self.zones.clone(),
        })
    }
}

/// [`SweepRun`] (one budget of the sweep), exactly.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BudgetRecord {
    share: Exact,
    budget_km2: Exact,
    budget_cost: Exact,
    solution: SolutionRecord,
    cost: Exact,
    area_km2: Exact,
    targets_reached: usize,
    reached: Vec<bool>,
    cost_gap: Exact,
}

impl From<&SweepRun> for BudgetRecord {
    fn from(r: &SweepRun) -> Self {
        BudgetRecord {
            share: Exact(r.share),
            budget_km2: Exact(r.budget_km2),
            budget_cost: Exact(r.budget_cost),
            solution: (&r.solution).into(),
            cost: Exact(r.cost),
            area_km2: Exact(r.area_km2),
            targets_reached: r.targets_reached,
            reached: r.reached.clone(),
            cost_gap: Exact(r.cost_gap),
        }
    }
}

impl BudgetRecord {
    /// The budget's run on a grid of `cells` cells.
    pub fn run(&self, cells: usize) -> Result<SweepRun, String> {
        Ok(SweepRun {
            share: self.share.0,
            budget_km2: self.budget_km2.0,
            budget_cost: self.budget_cost.0,
            solution: self.solution.solution(cells)?,
            cost: self.cost.0,
            area_km2: self.area_km2.0,
            targets_reached: self.targets_reached,
            reached: self.reached.clone(),
            cost_gap: self.cost_gap.0,
        })
    }
}

/// [`StressRow`] (one scenario design), exactly. `chosen` is `None` when the scenario alone
/// has no network (the row's `selected` is empty).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignRecord {
    designed_for: String,
    status: String,
    gap: Exact,
    evaluated: Vec<ScenarioRecord>,
    chosen: Option<Vec<u32>>,
    zones: Option<Vec<u8>>,
    /// Which exact method solved the design; absent from parts written before it was kept.
    #[serde(default)]
    solver: String,
}

impl From<&StressRow> for DesignRecord {
    fn from(r: &StressRow) -> Self {
        DesignRecord {
            designed_for: r.designed_for.clone(),
            status: r.status.clone(),
            gap: Exact(r.gap),
            evaluated: r.evaluated.iter().map(Into::into).collect(),
            chosen: (!r.selected.is_empty()).then(|| chosen(&r.selected)),
            zones: r.zones.clone(),
            solver: r.solver.clone(),
        }
    }
}

impl DesignRecord {
    /// The design's row on a grid of `cells` cells.
    pub fn row(&self, cells: usize) -> Result<StressRow, String> {
        Ok(StressRow {
            designed_for: self.designed_for.clone(),
            status: self.status.clone(),
            gap: self.gap.0,
            evaluated: self.evaluated.iter().map(Into::into).collect(),
            selected: match &self.chosen {
                None => Vec::new(),
                Some(c) => flags(c, cells)
                    .ok_or_else(|| bad(&format!("a design names a cell beyond {cells}")))?,
            },
            zones: self.zones.clone(),
            solver: self.solver.clone(),
        })
    }
}

/// [`Replacement`] (one re-solve with a unit forbidden), exactly.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct UnitRecord {
    label: String,
    forbidden: Vec<u32>,
    without: Option<SolutionRecord>,
    cost: Exact,
    at_least: Exact,
    at_most: Exact,
}

impl From<&Replacement> for UnitRecord {
    fn from(r: &Replacement) -> Self {
        UnitRecord {
            label: r.label.clone(),
            forbidden: r.forbidden.clone(),
            without: r.without.as_ref().map(Into::into),
            cost: Exact(r.cost),
            at_least: Exact(r.at_least),
            at_most: Exact(r.at_most),
        }
    }
}

impl UnitRecord {
    /// The re-solve's row on a grid of `cells` cells.
    pub fn replacement(&self, cells: usize) -> Result<Replacement, String> {
        Ok(Replacement {
            label: self.label.clone(),
            forbidden: self.forbidden.clone(),
            without: self
                .without
                .as_ref()
                .map(|s| s.solution(cells))
                .transpose()?,
            cost: self.cost.0,
            at_least: self.at_least.0,
            at_most: self.at_most.0,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exact_numbers_survive_the_file_bit_for_bit() {
        // Values whose shortest decimal text is long or special: 0.1 + 0.2 (IEEE 754 gives
        // 0.30000000000000004), the smallest subnormal, the largest finite f64, −0.0, ±∞.
        let values = [
            0.1 + 0.2,
            f64::from_bits(1),
            f64::MAX,
            -0.0,
            f64::INFINITY,
            f64::NEG_INFINITY,
            1.0 / 3.0,
        ];
        for v in values {
            let text = serde_json::to_string(&Exact(v)).unwrap();
            let back: Exact = serde_json::from_str(&text).unwrap();
            assert_eq!(back.0.to_bits(), v.to_bits(), "{v} → {text}");
        }
        let nan: Exact =
            serde_json::from_str(&serde_json::to_string(&Exact(f64::NAN)).unwrap()).unwrap();
        assert!(nan.0.is_nan());
        let e = serde_json::from_str::<Exact>("\"ten\"").unwrap_err();
        assert!(e.to_string().contains("`ten` is not a number"), "{e}");
    }

    #[test]
    fn a_solution_comes_back_whole() {
        let s = Solution {
            selected: vec![false, true, true, false],
            status: SolveStatus::GapLimit,
            objective: 7.25,
            bound: f64::NAN,
            gap: 0.004,
            seconds: 0.125,
            solver: "highs".into(),
            scenarios: vec![],
            scenario_best: Some(vec![1.5, f64::INFINITY]),
            zones: None,
        };
        let text = serde_json::to_string(&SolutionRecord::from(&s)).unwrap();
        let back: SolutionRecord = serde_json::from_str(&text).unwrap();
        let t = back.solution(4).unwrap();
        assert_eq!(t.selected, s.selected);
        assert_eq!(t.status, s.status);
        assert!(t.bound.is_nan());
        assert_eq!(t.scenario_best, s.scenario_best);
        let e = back.solution(2).unwrap_err();
        assert!(e.contains("beyond 2"), "{e}");
    }
}
