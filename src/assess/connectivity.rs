//! How a network fares on connectivity, per species and scenario: the share of the larvae it
//! releases that settle back in it (self-recruitment), the share of the species' reachability
//! feature it holds, and how far larvae leaving its reserves travel. `summary.json`, the
//! terminal summary and `connectivity.csv` all read these numbers from here.

use crate::connectivity::{network_retention, summarise, SpeciesLinks};
use crate::features::{FeatureKind, FeatureTable};
use crate::grid::Grid;

/// One species in one scenario, for one network.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct NetworkConnectivity {
    /// Species name.
    pub species: String,
    /// Scenario name.
    pub scenario: String,
    /// Share of the larvae released in reserves that settle in reserves (0–1).
    pub retention: f64,
    /// Share of the species' reachability feature the network holds (0–1); `None` without
    /// such a feature or when it is zero everywhere.
    pub reachability_share: Option<f64>,
    /// Weighted median distance of the links leaving reserves. Units: km.
    pub median_km: f64,
    /// Weighted 90th-percentile distance of the links leaving reserves. Units: km.
    pub p90_km: f64,
}

/// Share of the `reachability/<species>/<scenario>` feature held by `selected` (`None` without
/// the feature or when its total is zero).
pub fn reachability_share(
    features: &FeatureTable,
    species: &str,
    scenario: usize,
    selected: &[bool],
) -> Option<f64> {
    let f = features.features.iter().find(|f| {
        f.kind == FeatureKind::Reachability
            && f.species.as_deref() == Some(species)
            && f.scenario == Some(scenario)
    })?;
    let held: f64 = f
        .amounts
        .iter()
        .filter(|a| selected[a.0 as usize])
        .map(|a| a.1)
        .sum();
    (f.total > 0.0).then(|| held / f.total)
}

/// The connectivity of `selected` for every matrix in `links` (in their order).
pub fn network_connectivity(
    grid: &Grid,
    scenarios: &[String],
    links: &[SpeciesLinks],
    features: &FeatureTable,
    selected: &[bool],
) -> Vec<NetworkConnectivity> {
    links
        .iter()
        .map(|l| {
            let s = summarise(grid, &l.matrix, Some(selected));
            NetworkConnectivity {
                species: l.species.clone(),
                scenario: scenarios[l.scenario].clone(),
                retention: network_retention(&l.matrix, selected),
                reachability_share: reachability_share(features, &l.species, l.scenario, selected),
                median_km: s.median_km,
                p90_km: s.p90_km,
            }
        })
        .collect()
}

/// Network-level connectivity measures for `compare` and `assess`, per species in matrix
/// order: `retention_<species>` (mean over scenarios of [`NetworkConnectivity::retention`]) and,
/// where the species has reachability features, `reachability_share_<species>` (their mean).
/// Higher is better for both.
pub fn connectivity_measures(rows: &[NetworkConnectivity]) -> Vec<(String, f64)> {
    let mut species: Vec<&str> = Vec::new();
    for r in rows {
        if !species.contains(&r.species.as_str()) {
            species.push(&r.species);
        }
    }
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
    let mut out = Vec::new();
    for sp in species {
        let mine: Vec<&NetworkConnectivity> = rows.iter().filter(|r| r.species == sp).collect();
        let kept: Vec<f64> = mine.iter().map(|r| r.retention).collect();
        out.push((format!("retention_{sp}"), mean(&kept)));
        let reach: Vec<f64> = mine.iter().filter_map(|r| r.reachability_share).collect();
        if !reach.is_empty() {
            out.push((format!("reachability_share_{sp}"), mean(&reach)));
        }
    }
    out
}

/// One line per species for the terminal: the range over scenarios of retention and
/// reachability, e.g. `amber-wrasse: keeps 12.0–15.5% of its larvae, holds 40.0–52.0% of the
/// reachable future habitat`.
pub fn connectivity_lines(rows: &[NetworkConnectivity]) -> Vec<String> {
    let mut species: Vec<&str> = Vec::new();
    for r in rows {
        if !species.contains(&r.species.as_str()) {
            species.push(&r.species);
        }
    }
    let range = |v: Vec<f64>| -> Option<String> {
        let lo = v.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        if !lo.is_finite() {
            return None;
        }
        let (a, b) = (format!("{:.1}", 100.0 * lo), format!("{:.1}", 100.0 * hi));
        Some(if a == b {
            format!("{a}%")
        } else {
            format!("{a}–{b}%")
        })
    };
    species
        .iter()
        .map(|sp| {
            let mine: Vec<&NetworkConnectivity> =
                rows.iter().filter(|r| r.species == *sp).collect();
            let keeps = range(mine.iter().map(|r| r.retention).collect()).unwrap_or_default();
            let reach = range(mine.iter().filter_map(|r| r.reachability_share).collect());
            let varies = mine.windows(2).any(|w| {
                w[0].retention != w[1].retention
                    || w[0].reachability_share != w[1].reachability_share
            });
            let many = if varies { " (range over scenarios)" } else { "" };
            match reach {
                Some(r) => format!(
                    "{sp}: keeps {keeps} of the larvae it releases, holds {r} of the reachable future habitat{many}"
                ),
                None => format!("{sp}: keeps {keeps} of the larvae it releases{many}"),
            }
        })
        .collect()
}

/// Larval exchange from one reserve to another.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct ReserveLink {
    /// Source reserve, 0-based in `Assessment::reserves` order (network.geojson's number − 1).
    pub from: usize,
    /// Destination reserve, 0-based.
    pub to: usize,
    /// Share of the larvae released in `from` that settle in `to`: Σ_{i∈from} Σ_{j∈to} P[i→j]
    /// / |from|, weighted over scenarios by the plan's weights and averaged over species.
    pub share: f64,
}

/// The exchange between every ordered pair of distinct reserves, strongest first (ties by
/// reserve numbers), zeros left out. `reserve_of` is each cell's 1-based reserve (0 outside,
/// as [`super::reserve_of_cells`] returns it); `scenario_weights` are normalised here (equal
/// when they sum to 0).
pub fn reserve_links(
    links: &[SpeciesLinks],
    scenario_weights: &[f64],
    reserve_of: &[u32],
) -> Vec<ReserveLink> {
    let n_res = reserve_of.iter().copied().max().unwrap_or(0) as usize;
    if n_res < 2 || links.is_empty() {
        return Vec::new();
    }
    let mut size = vec![0usize; n_res];
    for &r in reserve_of.iter().filter(|&&r| r > 0) {
        size[r as usize - 1] += 1;
    }
    let shares = crate::model::robust::normalised_shares(scenario_weights);
    let weight = |s: usize| shares.get(s).copied().unwrap_or(0.0);
    let mut species: Vec<&str> = Vec::new();
    for l in links {
        if !species.contains(&l.species.as_str()) {
            species.push(&l.species);
        }
    }
    let per_species = 1.0 / species.len() as f64;
    let mut share = vec![0.0; n_res * n_res];
    for l in links {
        let w = weight(l.scenario) * per_species;
        for (i, row) in l.matrix.rows.iter().enumerate() {
            let a = reserve_of[i] as usize;
            if a == 0 {
                continue;
            }
            for &(j, p) in row {
                let b = reserve_of[j as usize] as usize;
                if b != 0 && b != a {
                    share[(a - 1) * n_res + (b - 1)] += w * p / size[a - 1] as f64;
                }
            }
        }
    }
    let mut out: Vec<ReserveLink> = share
        .iter()
        .enumerate()
        .filter(|(_, &v)| v > 0.0)
        .map(|(k, &v)| ReserveLink {
            from: k / n_res,
            to: k % n_res,
            share: v,
        })
        .collect();
    out.sort_by(|x, y| {
        y.share
            .total_cmp(&x.share)
            .then((x.from, x.to).cmp(&(y.from, y.to)))
    });
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::connectivity::{Dispersal, Origin};
    use crate::grid::{Crs, Grid};

    #[test]
    fn retention_and_lines_by_hand() {
        // Three 10 km cells in a row; P[0→0] 0.2, P[0→1] 0.3, P[0→2] 0.1, P[1→0] 0.4.
        // Network {0, 1}: from 0, 0.2 + 0.3 stay; from 1, 0.4 stays → (0.5 + 0.4) / 2 = 0.45
        // (hand computation). Links leaving reserves: 0 km ×0.2, 10 km ×(0.3 + 0.4), 20 km ×0.1
        // (cumulative 0.2, 0.9, 1.0 of 1.0) → median 10 km, 90th percentile 10 km.
        let g =
            Grid::full_rectangle(Crs::auto_laea(10.0, 50.0), 10_000.0, [0.0, 0.0], 3, 1).unwrap();
        let l = SpeciesLinks {
            species: "cod".into(),
            scenario: 0,
            matrix: Dispersal {
                rows: vec![vec![(0, 0.2), (1, 0.3), (2, 0.1)], vec![(0, 0.4)], vec![]],
            },
            origin: Origin::Supplied("m.csv".into()),
        };
        let rows = network_connectivity(
            &g,
            &["s1".to_string()],
            &[l],
            &FeatureTable::default(),
            &[true, true, false],
        );
        assert!((rows[0].retention - 0.45).abs() < 1e-12);
        assert!((rows[0].median_km - 10.0).abs() < 1e-6);
        assert!((rows[0].p90_km - 10.0).abs() < 1e-6);
        assert_eq!(rows[0].reachability_share, None);
        assert_eq!(
            connectivity_lines(&rows),
            vec!["cod: keeps 45.0% of the larvae it releases".to_string()]
        );
    }

    #[test]
    fn reserve_links_by_hand() {
        // Cells 0, 1 in reserve 1; cell 2 in reserve 2; cell 3 outside. Species a, one
        // scenario: P[0→2] 0.4, P[1→2] 0.2, P[2→0] 0.5, P[1→3] 0.3 (outside: not counted).
        // Species b: P[2→1] 0.1. Reserve 1 → 2: a (0.4 + 0.2)/2 = 0.3, b 0 → mean 0.15.
        // Reserve 2 → 1: a 0.5/1, b 0.1/1 → mean 0.3 (hand computation).
        let a = SpeciesLinks {
            species: "a".into(),
            scenario: 0,
            matrix: Dispersal {
                rows: vec![
                    vec![(2, 0.4)],
                    vec![(2, 0.2), (3, 0.3)],
                    vec![(0, 0.5)],
                    vec![],
                ],
            },
            origin: Origin::Supplied("a.csv".into()),
        };
        let b = SpeciesLinks {
            species: "b".into(),
            scenario: 0,
            matrix: Dispersal {
                rows: vec![vec![], vec![], vec![(1, 0.1)], vec![]],
            },
            origin: Origin::Supplied("b.csv".into()),
        };
        let r = reserve_links(&[a, b], &[1.0], &[1, 1, 2, 0]);
        assert_eq!(r.len(), 2);
        assert_eq!((r[0].from, r[0].to), (1, 0));
        assert!((r[0].share - 0.3).abs() < 1e-12);
        assert_eq!((r[1].from, r[1].to), (0, 1));
        assert!((r[1].share - 0.15).abs() < 1e-12);
        // One reserve: nothing to link.
        assert!(reserve_links(&[], &[1.0], &[1, 1, 0, 0]).is_empty());
    }
}
