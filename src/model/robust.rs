//! Objectives and robustness rules: how targets and scenarios become one number to optimise.
//!
//! # Benefit
//! A feature k with target Tₖ > 0 and weight wₖ earns wₖ·min(protectedₖ/Tₖ, 1): its credit is capped
//! at its target (maximum coverage, Church & ReVelle 1974, Papers of the Regional Science
//! Association 32:101). A weight-only feature (Tₖ = 0, e.g. a corridor weight) has no target to
//! meet, so its credit is proportional to what the network holds: wₖ·protectedₖ/Aₖ with Aₖ its total
//! amount over the region (capₖ = Tₖ or Aₖ, [`super::ModelFeature::benefit_cap`]).
//! The benefit of scenario s is Bₛ(x) = Σ_{k ∈ Fₛ} wₖ·min(protectedₖ/capₖ, 1), where Fₛ holds the
//! features of scenario s plus the scenario-free ones. Units: weighted targets reached (with unit
//! weights, Bₛ counts targets reached, fractions for partly reached ones); it is not normalised, so
//! Bₛ ranges over [0, Σ_{k∈Fₛ} wₖ].
//!
//! Linear form: yₖ ∈ [0, capₖ] continuous, yₖ ≤ Σᵢ aᵢₖxᵢ, Bₛ = Σ_{k∈Fₛ} (wₖ/capₖ)·yₖ.
//!
//! # Objectives
//! * `MinCost` (minimum set): min Σᵢ cᵢxᵢ s.t. Σᵢ aᵢₖxᵢ ≥ Tₖ for every feature of every
//!   scenario (and the budget, if one is set, as a hard limit).
//! * `MaxBenefit` (maximum coverage): within the budget (Σ cᵢxᵢ ≤ max cost, Σ areaᵢxᵢ ≤ max
//!   area) maximise the rule's combination of the Bₛ below.
//!
//! # Robustness rules with `MaxBenefit`
//! * `EveryScenario`: maximise Σₛ Bₛ (every scenario counts in full).
//! * `WorstCase` (max-min): maximise t with t ≤ Bₛ for all s.
//! * `Expected`: maximise Σₛ πₛBₛ with πₛ = weightₛ / Σ weight.
//! * `LeastRegret` (min-max regret, Kouvelis & Yu 1997, Robust Discrete Optimization and Its
//!   Applications; from memory): first solve each scenario alone for its best benefit Bₛ*
//!   (same budget, required/excluded cells and max gap; no edge penalty: Bₛ* is a benefit),
//!   then minimise r with r ≥ Bₛ* − Bₛ(x) for all s. The objective is a minimisation.
//!
//! Edge penalty: see [`super::compact`] (added to minimisations, subtracted from maximisations).
//!
//! # Robustness rules with `MinCost`
//! Every target is hard in every scenario. `WorstCase` reduces to that exactly (the worst
//! scenario meets all targets ⇔ every scenario does). `LeastRegret` on cost also reduces to it:
//! with cost regret C(x) − Cₛ* and the same x required to meet every scenario, the largest
//! regret is C(x) − minₛ Cₛ*, minimised by the every-scenario optimum; the objective reported
//! is then the cost (plus edge penalty). `Expected` is rejected (see [`super::Problem::validate`]).

use super::{Objective, Problem, Robustness};

/// The rule actually applied: `MinCost` turns `WorstCase`/`LeastRegret` into `EveryScenario`
/// (module doc); `MaxBenefit` keeps the rule.
pub fn effective_robustness(problem: &Problem) -> Robustness {
    match problem.objective {
        Objective::MinCost => Robustness::EveryScenario,
        Objective::MaxBenefit => problem.robustness,
    }
}

/// Whether the objective is minimised (min-cost, least-regret) or maximised.
pub fn is_minimisation(problem: &Problem) -> bool {
    problem.objective == Objective::MinCost
        || effective_robustness(problem) == Robustness::LeastRegret
}

/// Bₛ as a linear function of the capped holdings yₖ: Bₛ = Σ coef·yₖ.
#[derive(Debug, Clone, PartialEq)]
pub struct ScenarioBenefit {
    /// `(feature, wₖ/capₖ)` for features of the scenario with a benefit cap.
    pub terms: Vec<(usize, f64)>,
    /// Σ wₖ over the scenario's features that can earn credit: the largest Bₛ can be.
    pub max: f64,
}

/// Linear benefit of every scenario (module doc).
pub fn scenario_benefits(problem: &Problem) -> Vec<ScenarioBenefit> {
    (0..problem.scenarios.len())
        .map(|s| {
            let mut b = ScenarioBenefit {
                terms: Vec::new(),
                max: 0.0,
            };
            for k in problem.scenario_features(s) {
                let f = &problem.features[k];
                if let Some(cap) = f.benefit_cap() {
                    b.max += f.weight;
                    b.terms.push((k, f.weight / cap));
                }
            }
            b
        })
        .collect()
}

/// Normalised scenario weights πₛ for the `expected` rule (uniform if all weights are zero).
pub fn scenario_shares(problem: &Problem) -> Vec<f64> {
    let weights: Vec<f64> = problem.scenarios.iter().map(|s| s.weight).collect();
    normalised_shares(&weights)
}

/// `weights` scaled to sum to 1 (uniform if they sum to zero or less): πₛ from a plan's
/// scenario weights.
pub fn normalised_shares(weights: &[f64]) -> Vec<f64> {
    let total: f64 = weights.iter().sum();
    let n = weights.len() as f64;
    weights
        .iter()
        .map(|w| if total > 0.0 { w / total } else { 1.0 / n })
        .collect()
}

/// Combine per-scenario benefits by the rule of a `MaxBenefit` problem (before any edge
/// penalty): Σ Bₛ, min Bₛ, Σ πₛBₛ, or max(0, maxₛ(Bₛ* − Bₛ)). Returns NaN for least-regret when `best`
/// is unknown.
pub fn combine(problem: &Problem, benefits: &[f64], best: Option<&[f64]>) -> f64 {
    match effective_robustness(problem) {
        Robustness::EveryScenario => benefits.iter().sum(),
        Robustness::WorstCase => benefits.iter().copied().fold(f64::INFINITY, f64::min),
        Robustness::Expected => scenario_shares(problem)
            .iter()
            .zip(benefits)
            .map(|(p, b)| p * b)
            .sum(),
        Robustness::LeastRegret => match best {
            Some(best) => best
                .iter()
                .zip(benefits)
                .map(|(bs, b)| bs - b)
                // Regret is ≥ 0 (model::evaluate): start the maximum at 0.
                .fold(0.0, f64::max),
            None => f64::NAN,
        },
    }
}

/// Scenario `s` alone: its own features and the scenario-free ones (renumbered to scenario
/// 0), that one scenario (weight 1), rule `EveryScenario`, no Bₛ*; everything else (objective,
/// costs, status, budget, edge penalty, max gap, minimum size) as in `problem`. Zones keep
/// their costs and allowed cells; their credits and zone targets follow the features kept
/// (a zone target on a feature of another scenario is dropped with its feature).
pub fn restrict_to_scenario(problem: &Problem, s: usize) -> Problem {
    let kept = problem.scenario_features(s);
    let zoning = problem.zoning.as_ref().map(|z| crate::model::Zoning {
        credit: z
            .credit
            .iter()
            .map(|row| kept.iter().map(|&k| row[k]).collect())
            .collect(),
        targets: z
            .targets
            .iter()
            .filter_map(|t| {
                let at = kept.iter().position(|&k| k == t.feature)?;
                Some(crate::model::ZoneTarget {
                    feature: at,
                    ..t.clone()
                })
            })
            .collect(),
        ..z.clone()
    });
    let features = kept
        .into_iter()
        .map(|k| {
            let mut f = problem.features[k].clone();
            f.scenario = f.scenario.map(|_| 0);
            f
        })
        .collect();
    let mut sc = problem.scenarios[s].clone();
    sc.weight = 1.0;
    Problem {
        scenarios: vec![sc],
        features,
        robustness: Robustness::EveryScenario,
        scenario_best: None,
        zoning,
        ..problem.clone()
    }
}

/// The problem of scenario `s` alone, whose optimum is Bₛ* for least-regret: max-benefit
/// under the same budget, cell status, max gap and minimum size, scenario `s`'s features only
/// (scenario-free ones kept), one scenario, no edge penalty and no connectivity reward (Bₛ* is a
/// benefit).
pub fn scenario_problem(problem: &Problem, s: usize) -> Problem {
    Problem {
        objective: Objective::MaxBenefit,
        edge_penalty: None,
        link_reward: None,
        ..restrict_to_scenario(problem, s)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Budget, CellStatus, ModelFeature, Scenario};

    fn two_scenarios() -> Problem {
        let f =
            |name: &str, s: Option<usize>, amounts: Vec<(u32, f64)>, target, weight| ModelFeature {
                name: name.into(),
                scenario: s,
                amounts,
                target,
                weight,
            };
        Problem {
            cost: vec![1.0, 1.0],
            area_km2: vec![1.0, 1.0],
            status: vec![CellStatus::Free; 2],
            scenarios: vec![
                Scenario {
                    name: "a".into(),
                    weight: 3.0,
                },
                Scenario {
                    name: "b".into(),
                    weight: 1.0,
                },
            ],
            features: vec![
                f("p", Some(0), vec![(0, 2.0)], 4.0, 1.0),
                f("q", Some(1), vec![(1, 1.0)], 1.0, 2.0),
                f("r", None, vec![(0, 1.0)], 0.0, 0.5),
            ],
            objective: Objective::MaxBenefit,
            robustness: Robustness::Expected,
            budget: Budget::default(),
            edge_penalty: None,
            link_reward: None,
            spacing: None,
            scenario_best: None,
            min_reserve: None,
            min_neighbours: None,
            keep_objective: None,
            alternative: None,
            zoning: None,
        }
    }

    #[test]
    fn benefit_coefficients_and_combination() {
        // Hand computation: scenario a holds p (w 1, T 4) and the weight-only r (w 0.5, total
        // amount 1, so cap 1): terms [(0, 1/4), (2, 0.5)], max 1.5. Scenario b: q (w 2, T 1)
        // and r.
        let p = two_scenarios();
        let b = scenario_benefits(&p);
        assert_eq!(b[0].terms, vec![(0, 0.25), (2, 0.5)]);
        assert_eq!(b[0].max, 1.5);
        assert_eq!(b[1].terms, vec![(1, 2.0), (2, 0.5)]);
        assert_eq!(b[1].max, 2.5);
        // π = (3/4, 1/4); benefits (1, 2) → expected 0.75 + 0.5 = 1.25.
        assert_eq!(scenario_shares(&p), vec![0.75, 0.25]);
        assert_eq!(combine(&p, &[1.0, 2.0], None), 1.25);
        let mut q = p.clone();
        q.robustness = Robustness::WorstCase;
        assert_eq!(combine(&q, &[1.0, 2.0], None), 1.0);
        q.robustness = Robustness::LeastRegret;
        // Regrets (1.5 − 1, 2.5 − 2) = (0.5, 0.5) → 0.5; (1.5−1.5, 2.5−1) → 1.5.
        assert_eq!(combine(&q, &[1.0, 2.0], Some(&[1.5, 2.5])), 0.5);
        assert_eq!(combine(&q, &[1.5, 1.0], Some(&[1.5, 2.5])), 1.5);
        assert!(combine(&q, &[1.0, 2.0], None).is_nan());
        q.objective = Objective::MinCost;
        assert_eq!(effective_robustness(&q), Robustness::EveryScenario);
        let sub = scenario_problem(&p, 1);
        assert_eq!(
            sub.features
                .iter()
                .map(|f| f.name.as_str())
                .collect::<Vec<_>>(),
            vec!["q", "r"]
        );
        assert_eq!(sub.features[0].scenario, Some(0));
    }

    #[test]
    fn zone_credits_and_targets_follow_the_kept_features() {
        use crate::model::{ZoneTarget, Zoning};
        // Features p (scenario a), q (scenario b), r (both). Scenario b keeps q and r, so
        // partial use's credits (0.1, 0.2, 0.3) become (0.2, 0.3); the zone target on q
        // (feature 1) becomes feature 0 and the one on p is dropped.
        let mut p = two_scenarios();
        p.zoning = Some(Zoning {
            names: vec!["no-take".into(), "partial-use".into()],
            cost_share: vec![1.0, 0.5],
            credit: vec![vec![1.0; 3], vec![0.1, 0.2, 0.3]],
            allowed: vec![vec![true; 2]; 2],
            targets: vec![
                ZoneTarget {
                    zone: 0,
                    feature: 0,
                    amount: 1.0,
                },
                ZoneTarget {
                    zone: 0,
                    feature: 1,
                    amount: 0.5,
                },
            ],
        });
        let sub = restrict_to_scenario(&p, 1);
        sub.validate().unwrap();
        let z = sub.zoning.unwrap();
        assert_eq!(z.credit, vec![vec![1.0, 1.0], vec![0.2, 0.3]]);
        assert_eq!(
            z.targets,
            vec![ZoneTarget {
                zone: 0,
                feature: 0,
                amount: 0.5
            }]
        );
        assert_eq!(z.cost_share, vec![1.0, 0.5]);
    }
}
