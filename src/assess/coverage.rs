//! Coverage of each feature by a network: total, protected, target, shortfall, reached, absent.

use super::{is_chosen, Coverage};
use crate::features::{Feature, FeatureTable};
use rayon::prelude::*;

/// Relative tolerance for "target reached": the solver's own feasibility tolerance is about 1e-9
/// of the row scale (HiGHS default primal feasibility tolerance is 1e-7 absolute; from memory),
/// so a network the solver calls feasible must not be reported as short by rounding noise.
const MET_REL_TOL: f64 = 1e-9;

/// Below this many stored amounts the loop runs on one thread: spawning costs more than it saves.
const PARALLEL_MIN_AMOUNTS: usize = 50_000;

/// Coverage of every feature by the chosen cells, in feature-table order.
///
/// Each feature's protected amount is summed in ascending cell order, so the result is the same
/// whatever the number of threads.
pub fn coverage(features: &FeatureTable, selected: &[bool]) -> Vec<Coverage> {
    let stored: usize = features.features.iter().map(|f| f.amounts.len()).sum();
    let one = |f: &Feature| feature_coverage(f, &features.scenarios, selected);
    if stored >= PARALLEL_MIN_AMOUNTS {
        features.features.par_iter().map(one).collect()
    } else {
        features.features.iter().map(one).collect()
    }
}

fn feature_coverage(f: &Feature, scenarios: &[String], selected: &[bool]) -> Coverage {
    let protected: f64 = f
        .amounts
        .iter()
        .filter(|(c, _)| is_chosen(selected, *c))
        .map(|(_, a)| a)
        .sum::<f64>()
        + 0.0; // an empty f64 sum is −0.0; + 0.0 makes it 0 so outputs never say "-0"
               // `+ 0.0`: the total of no amounts is −0.0, and outputs never say "-0".
    let total = f.total + 0.0;
    let target = f.target.amount(total) + 0.0;
    // No amount anywhere: absent, never reached (a 0 ≥ 0 comparison would call it reached).
    let absent = crate::features::absent::is_absent(f);
    let reached = !absent && protected >= target - MET_REL_TOL * target.abs();
    Coverage {
        feature: f.name.clone(),
        kind: f.kind.as_str().to_string(),
        species: f.species.clone(),
        scenario: f.scenario.and_then(|s| scenarios.get(s).cloned()),
        year: f.year,
        total,
        protected,
        target,
        shortfall: (target - protected).max(0.0) + 0.0,
        reached,
        absent,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::features::{FeatureKind, Target};

    fn table(n_features: usize, n_cells: u32) -> FeatureTable {
        let features = (0..n_features)
            .map(|k| {
                // Feature k is present in every cell c with c % (k + 2) == 0, amount c + k.
                let amounts: Vec<(u32, f64)> = (0..n_cells)
                    .filter(|c| c % (k as u32 + 2) == 0)
                    .map(|c| (c, (c as usize + k) as f64 * 0.1))
                    .collect();
                Feature {
                    name: format!("f{k}"),
                    kind: FeatureKind::Refugium,
                    species: None,
                    scenario: None,
                    year: None,
                    unit: "km2".into(),
                    total: amounts.iter().map(|a| a.1).sum(),
                    amounts,
                    target: Target::Share(0.3),
                    weight: 1.0,
                }
            })
            .collect();
        FeatureTable {
            scenarios: vec![],
            years: vec![],
            features,
        }
    }

    #[test]
    fn parallel_matches_brute_force() {
        // Large enough to take the parallel path: n/2 + n/3 + n/4 + n/5 ≈ 77k stored amounts.
        let n = 60_000u32;
        let t = table(4, n);
        let sel: Vec<bool> = (0..n).map(|c| c % 3 == 0).collect();
        let cov = coverage(&t, &sel);
        for (k, c) in cov.iter().enumerate() {
            // Brute force: sum over every cell of the dense amount.
            let mut protected = 0.0;
            for cell in 0..n {
                if cell % (k as u32 + 2) == 0 && cell % 3 == 0 {
                    protected += (cell as usize + k) as f64 * 0.1;
                }
            }
            assert!(
                (c.protected - protected).abs() <= 1e-9 * protected,
                "feature {k}"
            );
            assert_eq!(c.reached, c.protected >= 0.3 * c.total * (1.0 - 1e-9));
        }
    }

    #[test]
    fn an_absent_feature_is_never_reached() {
        // A species with no habitat in the region (zero total, −0.0 as an empty float sum):
        // its 30% target is 0, and 0 ≥ 0 would call it reached; it is absent instead, and no
        // amount prints as "-0".
        let f = Feature {
            name: "habitat/gone/ssp5-8.5/2090".into(),
            kind: FeatureKind::Habitat,
            species: Some("gone".into()),
            scenario: None,
            year: Some(2090),
            unit: "km2".into(),
            amounts: vec![],
            total: [0.0f64; 0].iter().sum(),
            target: Target::Share(0.3),
            weight: 1.0,
        };
        for sel in [vec![true, true], vec![false, false]] {
            let c = feature_coverage(&f, &[], &sel);
            assert!(c.absent && !c.reached, "{c:?}");
            for v in [c.total, c.protected, c.target, c.shortfall] {
                assert!(v == 0.0 && v.is_sign_positive(), "{c:?}");
            }
        }
        // A weight-only feature (target 0) that is present is reached by holding nothing.
        let present = Feature {
            amounts: vec![(1, 2.0)],
            total: 2.0,
            target: Target::Share(0.0),
            ..f
        };
        let c = feature_coverage(&present, &[], &[false, false]);
        assert!(c.reached && !c.absent);
    }

    #[test]
    fn met_within_relative_tolerance() {
        let f = Feature {
            name: "x".into(),
            kind: FeatureKind::Habitat,
            species: None,
            scenario: None,
            year: None,
            unit: "km2".into(),
            amounts: vec![(0, 1.0 - 5e-10), (1, 1.0)],
            total: 2.0 - 5e-10,
            target: Target::Amount(1.0),
            weight: 1.0,
        };
        // Protected 1 − 5e-10 against target 1: inside the 1e-9 relative tolerance → reached.
        assert!(feature_coverage(&f, &[], &[true, false]).reached);
        let f2 = Feature {
            amounts: vec![(0, 1.0 - 2e-9)],
            ..f
        };
        // 1 − 2e-9 is outside the tolerance → not reached; shortfall 2e-9 by hand.
        let c = feature_coverage(&f2, &[], &[true]);
        assert!(!c.reached);
        assert!((c.shortfall - 2e-9).abs() < 1e-15);
    }
}
