//! The network-level measures a comparison ranks: the one list to extend when a new measure
//! is wanted.

use crate::assess::{Assessment, Coverage};
use serde::Serialize;
use std::collections::BTreeMap;

/// Which way a measure is better.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Better {
    /// More is better (coverage).
    Higher,
    /// Less is better (cost, area, exposed edge).
    Lower,
    /// Neither direction is better in general; the measure is shown but not ranked.
    Neither,
}

impl Better {
    /// The word used in outputs: `higher`, `lower` or `none`.
    pub fn as_str(self) -> &'static str {
        match self {
            Better::Higher => "higher",
            Better::Lower => "lower",
            Better::Neither => "none",
        }
    }
}

/// One measure of one network.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasureValue {
    /// Name with its unit where it has one (`area_km2`, `exposed_edge_km`).
    pub name: String,
    /// Which way is better.
    pub better: Better,
    /// The value.
    pub value: f64,
}

fn m(name: impl Into<String>, better: Better, value: f64) -> MeasureValue {
    MeasureValue {
        name: name.into(),
        better,
        // −0 (a float sum of nothing, e.g. the cost of an empty network) is written as 0.
        value: value + 0.0,
    }
}

/// How much of its target a feature holds, capped at 1 (0–1). A target of zero or less is
/// protected whole by any network, as [`Coverage::reached`] counts it reached; an absent feature (no amount
/// in the region) holds nothing of anything: 0.
pub fn protected_share(c: &Coverage) -> f64 {
    if c.absent {
        0.0
    } else if c.target > 0.0 {
        // `+ 0.0` turns −0 (the sum of no amounts) into 0, so outputs never show "-0".
        (c.protected / c.target).clamp(0.0, 1.0) + 0.0
    } else {
        1.0
    }
}

/// Every network-level measure of one assessment, in output order. Networks assessed under
/// the same plan get the same names in the same order.
///
/// * `cost` (plan cost units), `area_km2`, `share_of_region` (0–1), `cells_selected`,
///   `exposed_edge_km`: lower is better (a smaller, more compact network for the same
///   coverage).
/// * `total_edge_km` (exposed plus coast/boundary edge), `compactness_ratio` (reserve edge over circle perimeters, 1 = circle) and
///   `largest_gap_km` (widest step along the poleward axis between chosen cells): lower is
///   better.
/// * `reserves`: not ranked: fewer reserves are compact, more spread risk; planners weigh it.
/// * `targets_reached`, `mean_protected_share` (mean over present features of min(protected/target, 1)),
///   `min_protected_share` (the worst present feature's share; 1 means every target reached; absent
///   features, with no amount in the region, are left out of both) and
///   `targets_reached_<kind>` per feature kind present (`habitat`, `leading-edge`, ...,
///   alphabetical): higher is better. The share measures are left out when the plan has no
///   features (a mean of nothing is not a number).
pub fn network_measures(a: &Assessment) -> Vec<MeasureValue> {
    let mut out = vec![
        m("cost", Better::Lower, a.cost),
        m("area_km2", Better::Lower, a.area_km2),
        m("share_of_region", Better::Lower, a.share_of_region),
        m("cells_selected", Better::Lower, a.cells_selected as f64),
        m("reserves", Better::Neither, a.reserves.len() as f64),
        m("exposed_edge_km", Better::Lower, a.exposed_edge_km),
        m(
            "total_edge_km",
            Better::Lower,
            a.exposed_edge_km + a.boundary_edge_km,
        ),
        m("compactness_ratio", Better::Lower, a.compactness_ratio),
        m("largest_gap_km", Better::Lower, a.largest_gap_km),
        m("targets_reached", Better::Higher, a.targets_reached as f64),
    ];
    if a.coverage.iter().any(|c| !c.absent) {
        // Summed in feature order, so the value is reproducible to the last bit.
        let shares: Vec<f64> = a
            .coverage
            .iter()
            .filter(|c| !c.absent)
            .map(protected_share)
            .collect();
        let mean = shares.iter().sum::<f64>() / shares.len() as f64;
        let min = shares.iter().copied().fold(f64::INFINITY, f64::min);
        out.push(m("mean_protected_share", Better::Higher, mean));
        out.push(m("min_protected_share", Better::Higher, min));
    }
    let mut per_kind: BTreeMap<&str, usize> = BTreeMap::new();
    for c in &a.coverage {
        *per_kind.entry(c.kind.as_str()).or_default() += usize::from(c.reached);
    }
    for (kind, reached) in per_kind {
        out.push(m(
            format!("targets_reached_{kind}"),
            Better::Higher,
            reached as f64,
        ));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cov(kind: &str, protected: f64, target: f64) -> Coverage {
        Coverage {
            feature: format!("{kind}-{protected}"),
            kind: kind.into(),
            species: None,
            scenario: None,
            year: None,
            total: 10.0,
            protected,
            target,
            shortfall: (target - protected).max(0.0),
            reached: protected >= target,
            absent: false,
        }
    }

    fn assessment(coverage: Vec<Coverage>) -> Assessment {
        Assessment {
            targets_reached: coverage.iter().filter(|c| c.reached).count(),
            targets_absent: 0,
            coverage,
            cost: 7.5,
            area_km2: 300.0,
            share_of_region: 0.25,
            reserves: vec![],
            exposed_edge_km: 80.0,
            boundary_edge_km: 20.0,
            cells_selected: 3,
            compactness_ratio: 1.5,
            largest_gap_km: 12.0,
        }
    }

    #[test]
    fn shares_and_kind_counts_by_hand() {
        // Hand computation: protected shares min(2/4, 1) = 0.5, min(6/3, 1) = 1, min(0/2, 1) = 0,
        // zero target → 1. Mean (0.5 + 1 + 0 + 1)/4 = 0.625, min 0.
        // Reached: habitat 6≥3 and 0≥0 → 2 of 3 habitat; refugium 0 of 1.
        let a = assessment(vec![
            cov("habitat", 2.0, 4.0),
            cov("habitat", 6.0, 3.0),
            cov("refugium", 0.0, 2.0),
            cov("habitat", 0.0, 0.0),
        ]);
        let got: Vec<(String, Better, f64)> = network_measures(&a)
            .into_iter()
            .map(|v| (v.name, v.better, v.value))
            .collect();
        let want = vec![
            ("cost", Better::Lower, 7.5),
            ("area_km2", Better::Lower, 300.0),
            ("share_of_region", Better::Lower, 0.25),
            ("cells_selected", Better::Lower, 3.0),
            ("reserves", Better::Neither, 0.0),
            ("exposed_edge_km", Better::Lower, 80.0),
            ("total_edge_km", Better::Lower, 100.0),
            ("compactness_ratio", Better::Lower, 1.5),
            ("largest_gap_km", Better::Lower, 12.0),
            ("targets_reached", Better::Higher, 2.0),
            ("mean_protected_share", Better::Higher, 0.625),
            ("min_protected_share", Better::Higher, 0.0),
            ("targets_reached_habitat", Better::Higher, 2.0),
            ("targets_reached_refugium", Better::Higher, 0.0),
        ];
        let want: Vec<(String, Better, f64)> = want
            .into_iter()
            .map(|(n, b, v)| (n.to_string(), b, v))
            .collect();
        assert_eq!(got, want);
    }

    #[test]
    fn absent_features_are_left_out_of_the_shares() {
        // Hand: present features hold 2/4 and 6/3 → shares 0.5 and 1, mean 0.75, min 0.5;
        // the absent one (zero target of a zero total) would add a share of 1 as a reached zero
        // target, but is absent: not reached, not in the shares.
        let mut gone = cov("habitat", 0.0, 0.0);
        gone.reached = false;
        gone.absent = true;
        let a = assessment(vec![
            cov("habitat", 2.0, 4.0),
            cov("habitat", 6.0, 3.0),
            gone.clone(),
        ]);
        assert_eq!(protected_share(&gone), 0.0);
        let get = |n: &str| {
            network_measures(&a)
                .into_iter()
                .find(|v| v.name == n)
                .unwrap()
                .value
        };
        assert_eq!(get("mean_protected_share"), 0.75);
        assert_eq!(get("min_protected_share"), 0.5);
        assert_eq!(get("targets_reached_habitat"), 1.0);
    }

    #[test]
    fn no_features_leaves_out_share_measures() {
        let names: Vec<String> = network_measures(&assessment(vec![]))
            .into_iter()
            .map(|v| v.name)
            .collect();
        assert!(!names
            .iter()
            .any(|n| n.contains("share_") && n.contains("protected")));
        assert_eq!(names.len(), 10);
    }
}
