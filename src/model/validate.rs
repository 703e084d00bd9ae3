//! Checks that a [`Problem`] is well formed before any solver sees it, so solvers can index
//! without bounds surprises and every bad value is reported with where it is.

use super::{CellStatus, Objective, Problem, Robustness};

/// A problem that cannot be solved as stated. Each message names the field, the index and the
/// expected form.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ModelError {
    /// A per-cell or per-scenario vector has the wrong length.
    #[error("`{field}` has {found} entries but the problem has {expected} {what}")]
    Length {
        /// Field name, e.g. `area_km2`.
        field: &'static str,
        /// Entries found.
        found: usize,
        /// Entries expected.
        expected: usize,
        /// What the entries count (`cells`, `scenarios`).
        what: &'static str,
    },
    /// A value is negative, NaN or infinite where a finite non-negative number is needed.
    #[error("`{field}` entry {index} is {value}; expected {expected}")]
    Value {
        /// Field name, e.g. `cost`.
        field: String,
        /// Entry index (cell, feature, scenario or pair).
        index: usize,
        /// The offending value.
        value: f64,
        /// The expected form.
        expected: &'static str,
    },
    /// A feature or pair refers to a cell or scenario that does not exist, or is out of order.
    #[error("{0}")]
    Reference(String),
    /// Objective and robustness rule do not combine.
    #[error("{0}")]
    Combination(String),
    /// The required cells alone exceed the budget.
    #[error("the required cells alone use {used:.3} of {what} but the budget allows {limit:.3}")]
    RequiredOverBudget {
        /// `cost` or `area (km²)`.
        what: &'static str,
        /// Used by the required cells.
        used: f64,
        /// The budget limit.
        limit: f64,
    },
}

fn check_nonneg(field: &str, index: usize, value: f64) -> Result<(), ModelError> {
    if value.is_finite() && value >= 0.0 {
        Ok(())
    } else {
        Err(ModelError::Value {
            field: field.to_string(),
            index,
            value,
            expected: "a finite number >= 0",
        })
    }
}

fn check_len(
    field: &'static str,
    found: usize,
    expected: usize,
    what: &'static str,
) -> Result<(), ModelError> {
    if found == expected {
        Ok(())
    } else {
        Err(ModelError::Length {
            field,
            found,
            expected,
            what,
        })
    }
}

impl Problem {
    /// Check lengths, value ranges, references and the objective × robustness combination.
    /// Every solver calls this first.
    ///
    /// `MinCost` with `Expected` is rejected: with min-cost every target is a hard constraint
    /// in every scenario, so there is no benefit to average and silently ignoring the scenario
    /// weights would mislead (see [`super::robust`]).
    pub fn validate(&self) -> Result<(), ModelError> {
        let n = self.n_cells();
        check_len("area_km2", self.area_km2.len(), n, "cells")?;
        check_len("status", self.status.len(), n, "cells")?;
        for (i, &c) in self.cost.iter().enumerate() {
            check_nonneg("cost", i, c)?;
        }
        for (i, &a) in self.area_km2.iter().enumerate() {
            check_nonneg("area_km2", i, a)?;
        }
        if self.scenarios.is_empty() {
            return Err(ModelError::Reference(
                "the problem has no scenario; expected at least one".into(),
            ));
        }
        for (s, sc) in self.scenarios.iter().enumerate() {
            check_nonneg("scenarios.weight", s, sc.weight)?;
        }
        if self.robustness == Robustness::Expected
            && self.scenarios.iter().map(|s| s.weight).sum::<f64>() <= 0.0
        {
            return Err(ModelError::Combination(
                "the `expected` rule needs scenario weights with a positive sum".into(),
            ));
        }
        for (k, f) in self.features.iter().enumerate() {
            if let Some(s) = f.scenario {
                if s >= self.scenarios.len() {
                    return Err(ModelError::Reference(format!(
                        "feature {k} (`{}`) names scenario {s} but there are {} scenarios",
                        f.name,
                        self.scenarios.len()
                    )));
                }
            }
            check_nonneg(&format!("features[{k}].target"), k, f.target)?;
            check_nonneg(&format!("features[{k}].weight"), k, f.weight)?;
            let mut last: Option<u32> = None;
            for &(c, a) in &f.amounts {
                if c as usize >= n || last.is_some_and(|l| l >= c) {
                    return Err(ModelError::Reference(format!(
                        "feature {k} (`{}`): amount for cell {c} is out of range or not in \
                         increasing cell order (expected cells 0..{n}, sorted, each once)",
                        f.name
                    )));
                }
                // The field name is formatted only for a bad value: once per amount it cost
                // seconds at 1M cells × 480 rows.
                if !(a.is_finite() && a >= 0.0) {
                    check_nonneg(&format!("features[{k}].amounts"), c as usize, a)?;
                }
                last = Some(c);
            }
        }
        if let Some(m) = self.budget.max_cost {
            check_nonneg("budget.max_cost", 0, m)?;
        }
        if let Some(m) = self.budget.max_area_km2 {
            check_nonneg("budget.max_area_km2", 0, m)?;
        }
        if let Some(pen) = &self.edge_penalty {
            check_nonneg("edge_penalty.weight", 0, pen.weight)?;
            check_len(
                "edge_penalty.exposed_if_alone_km",
                pen.exposed_if_alone_km.len(),
                n,
                "cells",
            )?;
            for (i, &p) in pen.exposed_if_alone_km.iter().enumerate() {
                check_nonneg("edge_penalty.exposed_if_alone_km", i, p)?;
            }
            for (q, &(i, j, l)) in pen.pairs.iter().enumerate() {
                if i >= j || j as usize >= n {
                    return Err(ModelError::Reference(format!(
                        "edge_penalty.pairs[{q}] = ({i}, {j}); expected i < j < {n}"
                    )));
                }
                check_nonneg("edge_penalty.pairs shared km", q, l)?;
            }
        }
        if let Some(r) = &self.link_reward {
            check_nonneg("link_reward.weight", 0, r.weight)?;
            for (q, &(i, j, v)) in r.pairs.iter().enumerate() {
                if i >= j || j as usize >= n {
                    return Err(ModelError::Reference(format!(
                        "link_reward.pairs[{q}] = ({i}, {j}); expected i < j < {n}"
                    )));
                }
                check_nonneg("link_reward.pairs strength", q, v)?;
            }
        }
        if let Some(sp) = &self.spacing {
            check_len("spacing.position_km", sp.position_km.len(), n, "cells")?;
            for (i, &p) in sp.position_km.iter().enumerate() {
                if !p.is_finite() {
                    return Err(ModelError::Value {
                        field: "spacing.position_km".into(),
                        index: i,
                        value: p,
                        expected: "a finite position along the shift axis in km",
                    });
                }
            }
            if !(sp.max_gap_km.is_finite() && sp.max_gap_km > 0.0) {
                return Err(ModelError::Value {
                    field: "spacing.max_gap_km".into(),
                    index: 0,
                    value: sp.max_gap_km,
                    expected: "a positive number of km, e.g. 100",
                });
            }
        }
        if let Some(best) = &self.scenario_best {
            check_len(
                "scenario_best",
                best.len(),
                self.scenarios.len(),
                "scenarios",
            )?;
        }
        if let Some(z) = &self.zoning {
            if z.is_empty() || z.len() > 250 {
                return Err(ModelError::Combination(format!(
                    "zones: expected 1 to 250 zones, found {}",
                    z.len()
                )));
            }
            check_len("zoning.cost_share", z.cost_share.len(), z.len(), "zones")?;
            check_len("zoning.credit", z.credit.len(), z.len(), "zones")?;
            check_len("zoning.allowed", z.allowed.len(), z.len(), "zones")?;
            for (k, name) in z.names.iter().enumerate() {
                check_len(
                    "zoning.credit[zone]",
                    z.credit[k].len(),
                    self.features.len(),
                    "features",
                )?;
                check_len(
                    "zoning.allowed[zone]",
                    z.allowed[k].len(),
                    self.n_cells(),
                    "cells",
                )?;
                let bad_share = !(z.cost_share[k].is_finite() && z.cost_share[k] >= 0.0);
                let bad_credit = z.credit[k].iter().any(|c| !(c.is_finite() && *c >= 0.0));
                if bad_share || bad_credit {
                    return Err(ModelError::Combination(format!(
                        "zone `{name}`: cost shares and credits must be finite and ≥ 0"
                    )));
                }
            }
            for t in &z.targets {
                if t.zone >= z.len() || t.feature >= self.features.len() || !t.amount.is_finite() {
                    return Err(ModelError::Combination(format!(
                        "a zone target names zone {} and feature {} (there are {} zones and {} features) or is not finite",
                        t.zone,
                        t.feature,
                        z.len(),
                        self.features.len()
                    )));
                }
            }
        }
        if let Some(alt) = &self.alternative {
            if self.keep_objective.is_none() {
                return Err(ModelError::Combination(
                    "a portfolio member (alternative) needs a kept objective: the limit the \
                     plan's objective must stay within"
                        .into(),
                ));
            }
            if alt.min_difference == 0 {
                return Err(ModelError::Combination(
                    "a portfolio member must differ from earlier ones in at least 1 cell".into(),
                ));
            }
            for s in &alt.avoid {
                check_len("alternative.avoid", s.len(), self.n_cells(), "cells")?;
            }
        }
        if let Some(v) = self.keep_objective {
            let allowed = self.objective == Objective::MaxBenefit || self.alternative.is_some();
            if !allowed || !v.is_finite() {
                return Err(ModelError::Combination(format!(
                    "a kept objective ({v}) is the second stage of a max-benefit problem: it \
                     needs objective `max-benefit` and a finite value (min-cost already \
                     minimises cost)"
                )));
            }
        }
        if self.objective == Objective::MinCost && self.robustness == Robustness::Expected {
            return Err(ModelError::Combination(
                "`min-cost` with `expected` is not supported: min-cost holds every target in \
                 every scenario, so there is no benefit to average; use `every-scenario` with \
                 min-cost, or `expected` with `max-benefit`"
                    .into(),
            ));
        }
        let required = |v: &[f64]| -> f64 {
            v.iter()
                .zip(&self.status)
                .filter(|(_, s)| **s == CellStatus::Required)
                .map(|(x, _)| *x)
                .sum()
        };
        if let Some(limit) = self.budget.max_cost {
            let used = required(&self.cost);
            if used > limit * (1.0 + 1e-12) {
                return Err(ModelError::RequiredOverBudget {
                    what: "cost",
                    used,
                    limit,
                });
            }
        }
        if let Some(limit) = self.budget.max_area_km2 {
            let used = required(&self.area_km2);
            if used > limit * (1.0 + 1e-12) {
                return Err(ModelError::RequiredOverBudget {
                    what: "area (km²)",
                    used,
                    limit,
                });
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Budget, ModelFeature, Scenario};

    fn ok_problem() -> Problem {
        Problem {
            cost: vec![1.0, 2.0],
            area_km2: vec![1.0, 1.0],
            status: vec![CellStatus::Required, CellStatus::Free],
            scenarios: vec![Scenario {
                name: "s".into(),
                weight: 1.0,
            }],
            features: vec![ModelFeature {
                name: "f".into(),
                scenario: Some(0),
                amounts: vec![(0, 1.0), (1, 2.0)],
                target: 2.0,
                weight: 1.0,
            }],
            objective: Objective::MinCost,
            robustness: Robustness::EveryScenario,
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
    fn each_error_is_found_and_located() {
        assert_eq!(ok_problem().validate(), Ok(()));
        let mut p = ok_problem();
        p.area_km2.pop();
        assert!(matches!(
            p.validate(),
            Err(ModelError::Length {
                field: "area_km2",
                found: 1,
                expected: 2,
                ..
            })
        ));
        let mut p = ok_problem();
        p.cost[1] = -1.0;
        assert!(matches!(
            p.validate(),
            Err(ModelError::Value { index: 1, .. })
        ));
        let mut p = ok_problem();
        p.features[0].amounts = vec![(1, 2.0), (0, 1.0)];
        assert!(matches!(p.validate(), Err(ModelError::Reference(_))));
        // A negative or NaN amount names the feature's amounts and the cell (the field name
        // is built only on failure).
        for bad in [-1.0, f64::NAN] {
            let mut p = ok_problem();
            p.features[0].amounts = vec![(0, 1.0), (1, bad)];
            match p.validate() {
                Err(ModelError::Value { field, index, .. }) => {
                    assert_eq!((field.as_str(), index), ("features[0].amounts", 1));
                }
                other => panic!("{other:?}"),
            }
        }
        let mut p = ok_problem();
        p.features[0].scenario = Some(3);
        assert!(matches!(p.validate(), Err(ModelError::Reference(_))));
        let mut p = ok_problem();
        p.robustness = Robustness::Expected;
        assert!(matches!(p.validate(), Err(ModelError::Combination(_))));
        // The required cell 0 costs 1 > budget 0.5.
        let mut p = ok_problem();
        p.budget.max_cost = Some(0.5);
        assert_eq!(
            p.validate(),
            Err(ModelError::RequiredOverBudget {
                what: "cost",
                used: 1.0,
                limit: 0.5
            })
        );
        let mut p = ok_problem();
        p.spacing = Some(crate::model::Spacing {
            position_km: vec![0.0, 1.0],
            max_gap_km: 0.0,
        });
        assert!(matches!(p.validate(), Err(ModelError::Value { .. })));
    }
}
