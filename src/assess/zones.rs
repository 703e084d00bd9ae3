//! Zoned networks (`model::zones`): a cell's zone changes what it costs and how much of each
//! feature counts toward the target, so coverage, cost and reserve costs are re-scored from
//! the zone of each cell, and each zone's share of the network is summed up.

use super::Assessment;
use crate::features::FeatureTable;
use crate::grid::Grid;
use crate::model::Zoning;

/// Relative tolerance for "target reached" (as in [`super::coverage`]).
const MET_REL_TOL: f64 = 1e-9;

/// What one zone holds, over the network or within one reserve.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ZoneShare {
    /// 1-based zone code as in the `zone` column of the cell outputs.
    pub code: u8,
    /// Zone name.
    pub zone: String,
    /// 1-based reserve number (`None`: the whole network).
    pub reserve: Option<usize>,
    /// Cells in the zone.
    pub cells: usize,
    /// Sea area. Units: km².
    pub area_km2: f64,
    /// Cost paid in the zone (the cells' cost × the zone's cost share).
    pub cost: f64,
}

/// Re-scores `a` (an assessment of the chosen cells of `assignment`) for the zones: each
/// feature's protected amount counts the zone's credit, the cost each cell's zone cost share
/// (network and reserves), and targets reached are recounted. Returns each zone's share of the
/// network, then of each reserve (zones with no cell left out).
pub fn apply_zones(
    a: &mut Assessment,
    grid: &Grid,
    features: &FeatureTable,
    cost: &[f64],
    zoning: &Zoning,
    assignment: &[u8],
) -> Vec<ZoneShare> {
    for (k, (c, f)) in a.coverage.iter_mut().zip(&features.features).enumerate() {
        let protected: f64 = f
            .amounts
            .iter()
            .map(|&(cell, amt)| zoning.cell_credit(k, assignment[cell as usize]) * amt)
            .sum::<f64>()
            + 0.0;
        c.protected = protected;
        c.shortfall = (c.target - protected).max(0.0) + 0.0;
        c.reached = !c.absent && protected >= c.target - MET_REL_TOL * c.target.abs();
    }
    a.targets_reached = a.coverage.iter().filter(|c| c.reached).count();
    let cell_cost = |i: u32| zoning.cell_cost(cost[i as usize], assignment[i as usize]);
    for r in &mut a.reserves {
        r.cost = r.cells.iter().map(|&i| cell_cost(i)).sum::<f64>() + 0.0;
    }
    a.cost = (0..grid.len() as u32).map(cell_cost).sum::<f64>() + 0.0;
    let share = |reserve: Option<usize>, cells: &mut dyn Iterator<Item = u32>| -> Vec<ZoneShare> {
        let mut out: Vec<ZoneShare> = zoning
            .names
            .iter()
            .enumerate()
            .map(|(z, name)| ZoneShare {
                code: z as u8 + 1,
                zone: name.clone(),
                reserve,
                cells: 0,
                area_km2: 0.0,
                cost: 0.0,
            })
            .collect();
        for i in cells {
            if let Some(z) = Zoning::zone_of(assignment[i as usize]) {
                out[z].cells += 1;
                out[z].area_km2 += grid.cells[i as usize].sea_area_km2;
                out[z].cost += cell_cost(i);
            }
        }
        out.retain(|s| s.cells > 0);
        out
    };
    let mut out = share(None, &mut (0..grid.len() as u32));
    for (r, res) in a.reserves.iter().enumerate() {
        out.extend(share(Some(r + 1), &mut res.cells.iter().copied()));
    }
    out
}

/// `zones.csv`: each zone's cells, area and cost over the network (`reserve` = `all`), then
/// within each reserve; `zone_code` is the `zone` column of the cell outputs (0 = outside).
pub fn zones_csv(shares: &[ZoneShare]) -> String {
    let rows = shares.iter().map(|s| {
        vec![
            s.code.to_string(),
            s.zone.clone(),
            s.reserve
                .map_or_else(|| "all".to_string(), |r| r.to_string()),
            s.cells.to_string(),
            format!("{:.6}", s.area_km2 + 0.0),
            format!("{:.6}", s.cost + 0.0),
        ]
    });
    crate::export::table::csv_text(
        &["zone_code", "zone", "reserve", "cells", "area_km2", "cost"],
        rows,
    )
}

/// The zone rules a given assignment breaks, one sentence each: cells in a zone the plan does
/// not allow them (the zone's `excluded` polygons, or another zone's `required` ones) and zone
/// targets missed. A network `solve` made breaks none; one read from a file may.
pub fn zone_rule_notes(problem: &crate::model::Problem, assignment: &[u8]) -> Vec<String> {
    let Some(z) = &problem.zoning else {
        return Vec::new();
    };
    let mut notes = Vec::new();
    for (zi, name) in z.names.iter().enumerate() {
        let bad: Vec<usize> = assignment
            .iter()
            .enumerate()
            .filter(|(i, &v)| {
                v as usize == zi + 1 && !z.allowed[zi].get(*i).copied().unwrap_or(false)
            })
            .map(|(i, _)| i)
            .collect();
        if let Some(first) = bad.first() {
            notes.push(format!(
                "{} cell{} (e.g. cell {first}) in zone `{name}`, which the plan does not allow there (the zone's excluded areas, or another zone's required ones)",
                bad.len(),
                if bad.len() == 1 { " is" } else { "s are" }
            ));
        }
    }
    for (zi, name) in z.names.iter().enumerate() {
        let missed: Vec<&str> = z
            .targets
            .iter()
            .filter(|t| t.zone == zi)
            .filter(|t| {
                let held: f64 = problem.features[t.feature]
                    .amounts
                    .iter()
                    .filter(|(c, _)| assignment.get(*c as usize) == Some(&(zi as u8 + 1)))
                    .map(|(_, a)| a)
                    .sum();
                !crate::model::evaluate::at_least(held, t.amount)
            })
            .map(|t| problem.features[t.feature].name.as_str())
            .collect();
        if let Some(first) = missed.first() {
            notes.push(format!(
                "the zone target of `{name}` is missed for {} feature{} (e.g. {first})",
                missed.len(),
                if missed.len() == 1 { "" } else { "s" }
            ));
        }
    }
    notes
}

/// The `zones` member of `assessment.json`: where the zones came from (`source`: `file` or
/// `assumed`), the zone assumed for a file without zones (`assumed_zone`, else `null`), the
/// note shown in the terminal, the zone rules the network breaks ([`zone_rule_notes`]), and
/// each zone's share of the network (`reserve` `null`) and of
/// each reserve, as in `zones.csv`.
pub fn zones_json(
    source: &crate::assess::network_input::ZoneSource,
    note: Option<&str>,
    broken: &[String],
    shares: &[ZoneShare],
) -> serde_json::Value {
    use crate::assess::network_input::ZoneSource;
    let (kind, assumed) = match source {
        ZoneSource::Assumed { zone, .. } => ("assumed", Some(zone.as_str())),
        ZoneSource::File => ("file", None),
        ZoneSource::Unzoned | ZoneSource::Ignored => ("none", None),
    };
    serde_json::json!({
        "source": kind,
        "assumed_zone": assumed,
        "note": note,
        "rules_broken": broken,
        "shares": shares.iter().map(|s| serde_json::json!({
            "zone": s.zone,
            "zone_code": s.code,
            "reserve": s.reserve,
            "cells": s.cells,
            "area_km2": s.area_km2,
            "cost": s.cost,
        })).collect::<Vec<_>>(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::compare::fixtures::{assessed, cost, grid, table};

    #[test]
    fn broken_zone_rules_are_named() {
        use crate::model::{ModelFeature, Objective, Problem, Robustness, Scenario, ZoneTarget};
        // Hand: feature f holds 4 in cell 0 and 6 in cell 1; partial use may not take cell 1;
        // no-take must hold at least 5 of f. Cell 0 no-take (holds 4 < 5) and cell 1 partial
        // use break both rules; cell 1 no-take (6 ≥ 5) and cell 0 partial use break none.
        let p = Problem {
            zoning: Some(Zoning {
                names: vec!["no-take".into(), "partial-use".into()],
                cost_share: vec![1.0, 0.4],
                credit: vec![vec![1.0], vec![0.5]],
                allowed: vec![vec![true, true], vec![true, false]],
                targets: vec![ZoneTarget {
                    zone: 0,
                    feature: 0,
                    amount: 5.0,
                }],
            }),
            ..Problem::plain(
                vec![1.0; 2],
                vec![1.0; 2],
                vec![Scenario {
                    name: "s".into(),
                    weight: 1.0,
                }],
                vec![ModelFeature {
                    name: "f".into(),
                    scenario: None,
                    amounts: vec![(0, 4.0), (1, 6.0)],
                    target: 1.0,
                    weight: 1.0,
                }],
                Objective::MinCost,
                Robustness::EveryScenario,
            )
        };
        let notes = zone_rule_notes(&p, &[1, 2]);
        assert_eq!(notes.len(), 2, "{notes:?}");
        assert!(
            notes[0].contains("1 cell is")
                && notes[0].contains("cell 1")
                && notes[0].contains("`partial-use`")
        );
        assert!(notes[1].contains("`no-take`") && notes[1].contains("1 feature (e.g. f)"));
        assert!(zone_rule_notes(&p, &[2, 1]).is_empty());
    }

    #[test]
    fn zone_credits_and_cost_shares_by_hand() {
        // compare::fixtures: habitat/a holds 4, 2 in cells 0, 1 (target 4); costs are 1, 2.
        // Cell 0 no-take (full cost 1, full credit 4), cell 1 partial use (cost 0.4 × 2 = 0.8,
        // credit 0.5 × 2 = 1): habitat/a holds 5 ≥ 4, the network costs 1.8.
        let zoning = Zoning {
            names: vec!["no-take".into(), "partial-use".into()],
            cost_share: vec![1.0, 0.4],
            credit: vec![vec![1.0; 3], vec![0.5; 3]],
            allowed: vec![vec![true; 6], vec![true; 6]],
            targets: vec![],
        };
        let mut a = assessed(&[0, 1]);
        let shares = apply_zones(
            &mut a,
            &grid(),
            &table(),
            &cost(),
            &zoning,
            &[1, 2, 0, 0, 0, 0],
        );
        assert!((a.coverage[0].protected - 5.0).abs() < 1e-12);
        assert!(a.coverage[0].reached);
        assert!((a.cost - 1.8).abs() < 1e-12);
        assert!((a.reserves[0].cost - 1.8).abs() < 1e-12);
        // One no-take cell and one partial-use cell, over the network and in reserve 1.
        assert_eq!(shares.len(), 4);
        assert_eq!((shares[0].zone.as_str(), shares[0].cells), ("no-take", 1));
        assert!((shares[1].cost - 0.8).abs() < 1e-12);
        assert_eq!(shares[2].reserve, Some(1));
        // Both cells partial use: 0.5 × 6 = 3 < 4, so the target is missed.
        let mut b = assessed(&[0, 1]);
        apply_zones(
            &mut b,
            &grid(),
            &table(),
            &cost(),
            &zoning,
            &[2, 2, 0, 0, 0, 0],
        );
        assert!(!b.coverage[0].reached && (b.coverage[0].shortfall - 1.0).abs() < 1e-12);
    }
}
