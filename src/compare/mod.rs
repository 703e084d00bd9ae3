//! Compare stage: takes several networks' [`Assessment`]s under one plan and returns a
//! [`Comparison`]: every network-level measure side by side with the best network on each
//! (target coverage first, [`RANKING_RULE`]), and every feature's coverage side by side.
//!
//! Builders ([`compare_table`], [`compare_csv`], [`compare_json`]) turn a comparison into text;
//! writing files is left to the export stage.

mod json;
mod long_csv;
mod measures;
mod rank;
mod table;

pub use json::{compare_json, compare_json_with_zones};
pub use long_csv::{compare_csv, COMPARE_COLUMNS};
pub use measures::{network_measures, protected_share, Better, MeasureValue};
pub use rank::{differences, Difference, DifferenceOf};
pub use table::compare_table;

use crate::assess::Assessment;

/// Errors of the compare stage: the networks cannot be set side by side.
#[derive(Debug, thiserror::Error)]
pub enum CompareError {
    /// No network was given.
    #[error("nothing to compare: give at least one network (expected e.g. `driftplan compare PLAN a.geojson b.csv --out DIR`)")]
    Empty,
    /// Two networks carry the same name, so outputs could not tell them apart.
    #[error("network name `{name}` is given twice (networks {first} and {second}); outputs tell networks apart by name, so rename one")]
    DuplicateName {
        /// The repeated name.
        name: String,
        /// 0-based position of its first use.
        first: usize,
        /// 0-based position of the repeat.
        second: usize,
    },
    /// A network was assessed against a different list of features than the first one.
    #[error("network `{network}` was not assessed under the same plan as `{reference}`: {detail} (expected the same features in the same order)")]
    FeatureMismatch {
        /// The network that differs.
        network: String,
        /// The first network, whose features are the reference.
        reference: String,
        /// Where they differ.
        detail: String,
    },
}

/// One network-level measure for every network.
#[derive(Debug, Clone, PartialEq)]
pub struct Measure {
    /// Name with its unit where it has one (see [`network_measures`]).
    pub name: String,
    /// Which way is better.
    pub better: Better,
    /// One value per network, in [`Comparison::networks`] order.
    pub values: Vec<f64>,
    /// Indices of the best networks (all tied ones, ascending); empty when not ranked.
    pub best: Vec<usize>,
}

/// One feature's coverage by every network. Amounts are in the feature's own unit.
#[derive(Debug, Clone, PartialEq)]
pub struct FeatureRow {
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
    /// Total amount over the grid (the same for every network).
    pub total: f64,
    /// Target amount (the same for every network).
    pub target: f64,
    /// Amount protected, per network.
    pub protected: Vec<f64>,
    /// min(protected/target, 1) per network (0–1; 1 for a zero target), see [`protected_share`].
    pub protected_share_of_target: Vec<f64>,
    /// Whether the target is reached, per network (never when absent).
    pub reached: Vec<bool>,
    /// The feature has no amount anywhere in the region: absent, for every network alike.
    pub absent: bool,
    /// Indices of the networks holding the most of it (ties together, ascending).
    pub best: Vec<usize>,
}

/// How "best" is awarded on a measure, stated with every comparison's table.
pub const RANKING_RULE: &str = "target coverage first: `targets_reached` is ranked over every network; every other measure's best is awarded only among the networks that meet the most targets, so a network that misses targets is never best on cost, area or shape";

/// Several networks side by side.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    /// Network names, in the order given; every per-network vector follows this order.
    pub networks: Vec<String>,
    /// Networks that meet the most targets (ties all, ascending): the only ones ranked on any
    /// measure but `targets_reached` ([`RANKING_RULE`]). The others miss targets.
    pub ranked: Vec<usize>,
    /// Network-level measures, in [`network_measures`] order.
    pub measures: Vec<Measure>,
    /// Per-feature coverage, in feature-table order.
    pub features: Vec<FeatureRow>,
    /// `(network, warning)`: what a reader should know about a given network before trusting
    /// its scores (it lies outside the region, covers excluded cells, misses required ones);
    /// empty from [`compare`], filled by whoever read the networks.
    pub warnings: Vec<(String, String)>,
}

impl Comparison {
    /// Adds a measure computed outside the assessment (e.g. larval retention from the
    /// dispersal matrices), one value per network, ranked like the others: only networks that
    /// meet the most targets can be best. Panics if `values` does not hold one value per
    /// network (a caller bug).
    pub fn push_measure(&mut self, name: &str, better: Better, values: Vec<f64>) {
        assert_eq!(values.len(), self.networks.len(), "one value per network");
        let best = rank::best_among(&values, better, &self.ranked);
        self.measures.push(Measure {
            name: name.to_string(),
            better,
            values,
            best,
        });
    }

    /// The measure called `name`, if any.
    pub fn measure(&self, name: &str) -> Option<&Measure> {
        self.measures.iter().find(|m| m.name == name)
    }
}

/// Sets assessed networks side by side. All must have been assessed under the same plan, so
/// their coverage rows list the same features in the same order; names must be distinct.
pub fn compare(networks: &[(String, &Assessment)]) -> Result<Comparison, CompareError> {
    let Some((ref_name, reference)) = networks.first() else {
        return Err(CompareError::Empty);
    };
    for (i, (name, _)) in networks.iter().enumerate() {
        if let Some(first) = networks[..i].iter().position(|(n, _)| n == name) {
            return Err(CompareError::DuplicateName {
                name: name.clone(),
                first,
                second: i,
            });
        }
    }
    for (name, a) in &networks[1..] {
        check_same_features(ref_name, reference, name, a)?;
    }
    let per_network: Vec<Vec<MeasureValue>> =
        networks.iter().map(|(_, a)| network_measures(a)).collect();
    // Target coverage first (RANKING_RULE): only the networks meeting the most targets are
    // ranked on the other measures.
    let most = networks
        .iter()
        .map(|(_, a)| a.targets_reached)
        .max()
        .unwrap_or(0);
    let ranked: Vec<usize> = (0..networks.len())
        .filter(|&i| networks[i].1.targets_reached == most)
        .collect();
    // Same features ⇒ same kinds ⇒ the same measure list for every network.
    let measures = per_network[0]
        .iter()
        .enumerate()
        .map(|(k, mv)| {
            let values: Vec<f64> = per_network.iter().map(|v| v[k].value).collect();
            let best = if mv.name == "targets_reached" {
                rank::best_of(&values, mv.better)
            } else {
                rank::best_among(&values, mv.better, &ranked)
            };
            Measure {
                name: mv.name.clone(),
                better: mv.better,
                best,
                values,
            }
        })
        .collect();
    let features = reference
        .coverage
        .iter()
        .enumerate()
        .map(|(k, c)| {
            let rows: Vec<&crate::assess::Coverage> =
                networks.iter().map(|(_, a)| &a.coverage[k]).collect();
            // `+ 0.0` turns −0 (a float sum of no amounts) into 0, so outputs never show "-0".
            let protected: Vec<f64> = rows.iter().map(|r| r.protected + 0.0).collect();
            FeatureRow {
                feature: c.feature.clone(),
                kind: c.kind.clone(),
                species: c.species.clone(),
                scenario: c.scenario.clone(),
                year: c.year,
                total: c.total + 0.0,
                target: c.target + 0.0,
                protected_share_of_target: rows.iter().map(|r| protected_share(r)).collect(),
                reached: rows.iter().map(|r| r.reached).collect(),
                absent: c.absent,
                best: rank::best_of(&protected, Better::Higher),
                protected,
            }
        })
        .collect();
    Ok(Comparison {
        networks: networks.iter().map(|(n, _)| n.clone()).collect(),
        ranked,
        measures,
        features,
        warnings: Vec::new(),
    })
}

fn check_same_features(
    ref_name: &str,
    reference: &Assessment,
    name: &str,
    a: &Assessment,
) -> Result<(), CompareError> {
    let mismatch = |detail: String| CompareError::FeatureMismatch {
        network: name.to_string(),
        reference: ref_name.to_string(),
        detail,
    };
    if a.coverage.len() != reference.coverage.len() {
        return Err(mismatch(format!(
            "it has {} features, `{ref_name}` has {}",
            a.coverage.len(),
            reference.coverage.len()
        )));
    }
    for (k, (x, r)) in a.coverage.iter().zip(&reference.coverage).enumerate() {
        if (&x.feature, &x.kind, &x.scenario, x.year) != (&r.feature, &r.kind, &r.scenario, r.year)
        {
            return Err(mismatch(format!(
                "feature {k} is `{}` where `{ref_name}` has `{}`",
                x.feature, r.feature
            )));
        }
    }
    Ok(())
}

#[cfg(test)]
pub(crate) mod fixtures {
    //! Hand-built assessments shared by the compare tests.
    use crate::assess::{assess, Assessment};
    use crate::features::{Feature, FeatureKind, FeatureTable, Target};
    use crate::grid::{Crs, Grid};

    /// 3 × 2 grid of 10 km cells (100 km² each), ids row-major from the south-west:
    /// ```text
    /// row 1:  3 4 5
    /// row 0:  0 1 2
    /// ```
    pub fn grid() -> Grid {
        Grid::full_rectangle(Crs::auto_laea(10.0, 55.0), 10_000.0, [0.0, 0.0], 3, 2)
            .expect("a valid LAEA definition and positive size")
    }

    fn feature(name: &str, kind: FeatureKind, amounts: Vec<(u32, f64)>, share: f64) -> Feature {
        Feature {
            name: name.into(),
            kind,
            species: Some("silver-bream".into()),
            scenario: Some(0),
            year: Some(2050),
            unit: "km2".into(),
            total: amounts.iter().map(|a| a.1).sum(),
            amounts,
            target: Target::Share(share),
            weight: 1.0,
        }
    }

    /// Three features with hand-known amounts:
    /// * `habitat/a`: cells 0, 1, 4 hold 4, 2, 2 (total 8), target 50% = 4;
    /// * `habitat/b`: cells 2, 5 hold 3, 1 (total 4), target 50% = 2;
    /// * `refugium/c`: cell 4 holds 5 (total 5), target 40% = 2.
    pub fn table() -> FeatureTable {
        FeatureTable {
            scenarios: vec!["ssp2-4.5".into()],
            years: vec![2050],
            features: vec![
                feature(
                    "habitat/a",
                    FeatureKind::Habitat,
                    vec![(0, 4.0), (1, 2.0), (4, 2.0)],
                    0.5,
                ),
                feature(
                    "habitat/b",
                    FeatureKind::Habitat,
                    vec![(2, 3.0), (5, 1.0)],
                    0.5,
                ),
                feature("refugium/c", FeatureKind::Refugium, vec![(4, 5.0)], 0.4),
            ],
        }
    }

    /// Cost of cell i is i + 1.
    pub fn cost() -> Vec<f64> {
        (1..=6).map(f64::from).collect()
    }

    /// Assessment of the network made of `ids`.
    pub fn assessed(ids: &[u32]) -> Assessment {
        let g = grid();
        let mut sel = vec![false; g.len()];
        for &i in ids {
            sel[i as usize] = true;
        }
        assess(&g, &table(), &cost(), &sel)
    }
}

#[cfg(test)]
mod tests {
    use super::fixtures::assessed;
    use super::*;

    #[test]
    fn two_networks_by_hand() {
        // Network x = {0}: cost 1, area 100 km², exposed edge 2 sides (east → 1, north → 3)
        // = 20 km; holds a 4/4 (reached), b 0/2, c 0/2 → reached 1, shares (1 + 0 + 0)/3 = 1/3.
        // Network y = {4, 5}: cost 5 + 6 = 11, area 200 km², exposed edge: cell 4 west → 3,
        // south → 1; cell 5 south → 2 = 3 sides = 30 km; holds a 2/4 (0.5), b 1/2 (0.5),
        // c 5/2 (reached, 1) → reached 1, mean share (0.5 + 0.5 + 1)/3 = 2/3.
        let x = assessed(&[0]);
        let y = assessed(&[4, 5]);
        let c = compare(&[("x".into(), &x), ("y".into(), &y)]).unwrap();
        assert_eq!(c.networks, vec!["x", "y"]);
        let get = |n: &str| c.measure(n).unwrap();
        assert_eq!(get("cost").values, vec![1.0, 11.0]);
        assert_eq!(get("cost").best, vec![0]);
        assert!((get("area_km2").values[1] - 200.0).abs() < 1e-9);
        assert!((get("exposed_edge_km").values[0] - 20.0).abs() < 1e-9);
        assert!((get("exposed_edge_km").values[1] - 30.0).abs() < 1e-9);
        assert_eq!(get("exposed_edge_km").best, vec![0]);
        assert_eq!(get("targets_reached").values, vec![1.0, 1.0]);
        assert_eq!(get("targets_reached").best, vec![0, 1]);
        assert!((get("mean_protected_share").values[0] - 1.0 / 3.0).abs() < 1e-12);
        assert!((get("mean_protected_share").values[1] - 2.0 / 3.0).abs() < 1e-12);
        assert_eq!(get("mean_protected_share").best, vec![1]);
        assert_eq!(get("min_protected_share").values, vec![0.0, 0.5]);
        assert_eq!(get("targets_reached_habitat").values, vec![1.0, 0.0]);
        assert_eq!(get("targets_reached_refugium").values, vec![0.0, 1.0]);
        assert_eq!(get("reserves").values, vec![1.0, 1.0]);
        assert!(get("reserves").best.is_empty());
        // Feature rows: protected side by side and who holds most.
        assert_eq!(c.features[0].protected, vec![4.0, 2.0]);
        assert_eq!(c.features[0].best, vec![0]);
        assert_eq!(c.features[2].protected_share_of_target, vec![0.0, 1.0]);
        assert_eq!(c.features[2].reached, vec![false, true]);
        assert_eq!(c.features[1].scenario.as_deref(), Some("ssp2-4.5"));
        // Differences: every measure but targets_reached and reserves differs, then all three
        // features' protected amounts.
        let d = differences(&c, 0, 1).unwrap();
        let names: Vec<&str> = d.iter().map(|d| d.name.as_str()).collect();
        assert!(!names.contains(&"targets_reached") && !names.contains(&"reserves"));
        assert!(names.ends_with(&["habitat/a", "habitat/b", "refugium/c"]));
        let cost = d.iter().find(|d| d.name == "cost").unwrap();
        assert_eq!((cost.a, cost.b, cost.better), (1.0, 11.0, Some(0)));
        assert!(differences(&c, 0, 2).is_none());
    }

    #[test]
    fn refuses_what_cannot_be_compared() {
        assert!(matches!(compare(&[]), Err(CompareError::Empty)));
        let x = assessed(&[0]);
        let e = compare(&[("x".into(), &x), ("x".into(), &x)]).unwrap_err();
        assert!(e.to_string().contains("`x` is given twice"), "{e}");
        let mut other = assessed(&[1]);
        other.coverage.pop();
        let e = compare(&[("x".into(), &x), ("z".into(), &other)]).unwrap_err();
        assert!(e.to_string().contains("2 features") && e.to_string().contains("has 3"));
        other = assessed(&[1]);
        other.coverage[1].feature = "habitat/q".into();
        let e = compare(&[("x".into(), &x), ("z".into(), &other)]).unwrap_err();
        assert!(e.to_string().contains("feature 1 is `habitat/q`"), "{e}");
    }
}
