//! Model stage: a solver-neutral statement of the reserve-selection problem. It takes the
//! features, costs and rules and returns a [`Problem`]; it knows no solver (`solve::*` translate
//! it). [`evaluate()`] recomputes everything about a network from raw amounts and is the
//! independent check every solver and test relies on.
//!
//! The formulations (minimum set, maximum coverage, robustness rules, edge penalty, max gap) are
//! documented in [`robust`], [`compact`] and [`spacing`].

pub mod alternative;
pub mod cell_major;
pub mod compact;
pub mod evaluate;
pub mod links;
pub mod min_size;
pub mod neighbours;
pub mod robust;
pub mod spacing;
mod validate;
pub mod zones;

pub use alternative::Alternative;
pub use cell_major::CellMajor;
pub use evaluate::{evaluate, evaluate_zoned, Evaluation, ScenarioResult};
pub use links::LinkReward;
pub use min_size::MinReserve;
pub use neighbours::MinNeighbours;
pub use spacing::Spacing;
pub use validate::ModelError;
pub use zones::{ZoneTarget, Zoning};

/// Whether a cell may, must or must not be chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum CellStatus {
    /// The optimiser decides.
    Free,
    /// In every network (existing protected areas).
    Required,
    /// Never chosen (shipping lanes, ports, platforms).
    Excluded,
}

/// What the optimiser is asked to do.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Objective {
    /// Hold every target at least cost (the minimum-set problem).
    MinCost,
    /// Within the budget, hold the most weighted target attainment (maximum coverage).
    MaxBenefit,
}

/// How scenarios are combined.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Robustness {
    /// Targets hold in every scenario and year (hard constraints).
    EveryScenario,
    /// Maximise the benefit of the worst scenario (max-min).
    WorstCase,
    /// Maximise the scenario-weighted mean benefit.
    Expected,
    /// Minimise the largest regret (min-max regret, Kouvelis & Yu 1997).
    LeastRegret,
}

impl Robustness {
    /// The plan-file word for the rule.
    pub fn as_str(self) -> &'static str {
        match self {
            Robustness::EveryScenario => "every-scenario",
            Robustness::WorstCase => "worst-case",
            Robustness::Expected => "expected",
            Robustness::LeastRegret => "least-regret",
        }
    }
}

/// One scenario as the model sees it.
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    /// Scenario name (e.g. `ssp2-4.5`).
    pub name: String,
    /// Weight for the `expected` rule (weights need not sum to one; they are normalised).
    pub weight: f64,
}

/// One feature row of the model.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelFeature {
    /// Feature name (for diagnosis and reports).
    pub name: String,
    /// Scenario index, or `None` if the feature holds in all scenarios alike.
    pub scenario: Option<usize>,
    /// `(cell, amount)`, sorted by cell, no zeros.
    pub amounts: Vec<(u32, f64)>,
    /// Absolute amount the network must hold.
    pub target: f64,
    /// Weight in benefit objectives.
    pub weight: f64,
}

/// The most a network may use. Both limits apply when both are set.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Budget {
    /// Most total cost.
    pub max_cost: Option<f64>,
    /// Most total sea area. Units: km².
    pub max_area_km2: Option<f64>,
}

/// Edge-penalty data (compactness): weight per km of reserve edge exposed to unprotected sea.
#[derive(Debug, Clone, PartialEq)]
pub struct EdgePenalty {
    /// Objective weight per km of exposed edge.
    pub weight: f64,
    /// `(i, j, shared km)` with `i < j`, each neighbouring pair once.
    pub pairs: Vec<(u32, u32, f64)>,
    /// Edge of each cell that counts as exposed when it is chosen: shared edges plus whatever
    /// coast/region-boundary edge the plan says counts. Units: km.
    pub exposed_if_alone_km: Vec<f64>,
}

/// A solver-neutral reserve-selection problem.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// Cost of protecting each cell.
    pub cost: Vec<f64>,
    /// Sea area of each cell. Units: km².
    pub area_km2: Vec<f64>,
    /// Free / required / excluded per cell.
    pub status: Vec<CellStatus>,
    /// Scenarios (at least one).
    pub scenarios: Vec<Scenario>,
    /// Feature rows.
    pub features: Vec<ModelFeature>,
    /// What to optimise.
    pub objective: Objective,
    /// How to combine scenarios.
    pub robustness: Robustness,
    /// Budget limits.
    pub budget: Budget,
    /// Optional compactness term.
    pub edge_penalty: Option<EdgePenalty>,
    /// Optional connectivity reward: larval exchange between chosen cells ([`links`]).
    pub link_reward: Option<LinkReward>,
    /// Optional stepping-stone rule along the shift axis (max gap).
    pub spacing: Option<Spacing>,
    /// Optional minimum reserve size (no lone cell below the area; [`min_size`]).
    pub min_reserve: Option<MinReserve>,
    /// Neighbour rule: chosen free cells need k chosen rook neighbours (`model::neighbours`).
    pub min_neighbours: Option<MinNeighbours>,
    /// Best benefit each scenario can reach on its own under the same budget and rules (Bₛ*),
    /// needed by [`Robustness::LeastRegret`] and to report regret. `None`: the solver computes it
    /// first (see `solve::with_scenario_best`). Units: weighted targets (see [`robust`]).
    pub scenario_best: Option<Vec<f64>>,
    /// Lexicographic second stage of a max-benefit problem: `Some(v)` keeps the objective at
    /// least as good as `v` (≥ [`keep_floor`]`(v)` when maximised, ≤ the mirror when minimised,
    /// as least-regret is) and minimises the total cost among such networks; the objective of
    /// the solve is then that cost. The budget sweep uses it so that a budget too small for
    /// every target does not spend cost that buys no benefit. Exact solvers only.
    pub keep_objective: Option<f64>,
    /// Portfolio member ([`alternative`]): with a kept objective, the second stage seeks the
    /// network most different from earlier ones (each by at least a stated number of cells)
    /// instead of the least cost. Exact solvers only.
    pub alternative: Option<Alternative>,
    /// Management zones ([`zones`]): each chosen cell takes one zone with its own cost and
    /// feature credit. Exact solvers only.
    pub zoning: Option<Zoning>,
}

/// Slack below a kept objective `v` (module [`Problem::keep_objective`]): the first stage's
/// own network must stay feasible although the solver recomputes its objective with row
/// tolerances of about 1e-7 (HiGHS primal feasibility tolerance; from memory); 1e-6 relative is
/// above that and far below any benefit difference a planner acts on.
pub fn keep_slack(v: f64) -> f64 {
    1e-6 * v.abs().max(1.0)
}

/// The least objective a kept maximisation may reach: `v −` [`keep_slack`]`(v)`.
pub fn keep_floor(v: f64) -> f64 {
    v - keep_slack(v)
}

impl ModelFeature {
    /// The holding at which the feature's benefit credit stops growing: its target when it
    /// has one; otherwise its whole amount over the region, so a weight-only feature (target 0,
    /// e.g. a corridor weight) earns wₖ·protectedₖ/totalₖ — in proportion to how much the network
    /// holds. `None` for a weight-only feature with no amount anywhere (it earns nothing and
    /// nothing can change that). Units: the feature's own.
    pub fn benefit_cap(&self) -> Option<f64> {
        if self.target > 0.0 {
            return Some(self.target);
        }
        let total: f64 = self.amounts.iter().map(|(_, a)| a).sum();
        (total > 0.0).then_some(total)
    }
}

impl Problem {
    /// A problem with only its essentials: every cell free, no budget, and none of the optional
    /// rules (edge penalty, connectivity reward, max gap, minimum size, kept objective,
    /// alternative, zones). Callers
    /// set what they need with struct update syntax (`Problem { budget, ..Problem::plain(…) }`).
    pub fn plain(
        cost: Vec<f64>,
        area_km2: Vec<f64>,
        scenarios: Vec<Scenario>,
        features: Vec<ModelFeature>,
        objective: Objective,
        robustness: Robustness,
    ) -> Problem {
        Problem {
            status: vec![CellStatus::Free; cost.len()],
            cost,
            area_km2,
            scenarios,
            features,
            objective,
            robustness,
            budget: Budget::default(),
            edge_penalty: None,
            link_reward: None,
            spacing: None,
            min_reserve: None,
            min_neighbours: None,
            scenario_best: None,
            keep_objective: None,
            alternative: None,
            zoning: None,
        }
    }

    /// Number of cells (decision variables before auxiliaries).
    pub fn n_cells(&self) -> usize {
        self.cost.len()
    }

    /// Indices of the features that count in scenario `s`: its own features plus the
    /// scenario-free ones (`scenario: None`), in feature order.
    pub fn scenario_features(&self, s: usize) -> Vec<usize> {
        self.features
            .iter()
            .enumerate()
            .filter(|(_, f)| f.scenario.is_none_or(|fs| fs == s))
            .map(|(k, _)| k)
            .collect()
    }
}
