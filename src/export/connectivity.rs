//! Connectivity outputs: each dispersal matrix as `connectivity-<species>[-<scenario>].csv`
//! (`from,to,probability`, the form a plan's `matrix` key reads back) and `connectivity.csv`,
//! one row per species and scenario with its dispersal summary and, for a network, the
//! share of its larvae it keeps and the share of the reachability feature it holds.

use super::table::csv_text;
use crate::connectivity::{network_retention, summarise, Dispersal, Origin, SpeciesLinks};
use crate::features::FeatureTable;
use crate::grid::Grid;

/// `from,to,probability` rows of a matrix, by source then destination cell.
pub fn dispersal_csv(m: &Dispersal) -> String {
    let rows = m.rows.iter().enumerate().flat_map(|(i, row)| {
        row.iter()
            .map(move |&(j, p)| vec![i.to_string(), j.to_string(), format!("{p}")])
    });
    csv_text(&["from", "to", "probability"], rows)
}

/// The file name of one matrix: `connectivity-<species>.csv` for a one-scenario plan, else
/// `connectivity-<species>-<scenario>.csv`.
pub fn dispersal_file_name(links: &SpeciesLinks, scenarios: &[String]) -> String {
    if scenarios.len() == 1 {
        format!("connectivity-{}.csv", links.species)
    } else {
        format!(
            "connectivity-{}-{}.csv",
            links.species, scenarios[links.scenario]
        )
    }
}

/// Columns of `connectivity.csv`.
pub const CONNECTIVITY_COLUMNS: [&str; 14] = [
    "species",
    "scenario",
    "source",
    "links",
    "settled_share",
    "beached_share",
    "left_grid_share",
    "local_share",
    "mean_km",
    "median_km",
    "p90_km",
    "mean_bearing_deg",
    "network_retention",
    "reachability_protected_share",
];

/// `connectivity.csv`: per species and scenario, how larvae disperse and — when `selected` is
/// given — the network's self-recruitment (share of larvae released in reserves that settle
/// in reserves), the summary of the links leaving reserves, and the share of the
/// reachability feature the network holds. Network columns are empty without a network.
pub fn connectivity_csv(
    grid: &Grid,
    scenarios: &[String],
    links: &[SpeciesLinks],
    features: &FeatureTable,
    selected: Option<&[bool]>,
) -> String {
    let f6 = |x: f64| format!("{x:.6}");
    let rows = links.iter().map(|l| {
        let s = summarise(grid, &l.matrix, selected);
        let (source, beached, left) = match &l.origin {
            Origin::Particles {
                released,
                beached,
                left_grid,
                ..
            } => {
                let n = (*released).max(1) as f64;
                (
                    "particles".to_string(),
                    f6(*beached as f64 / n),
                    f6(*left_grid as f64 / n),
                )
            }
            Origin::Supplied(p) => (p.display().to_string(), String::new(), String::new()),
        };
        let (retention, reach) = match selected {
            None => (String::new(), String::new()),
            Some(sel) => {
                let reach = crate::assess::connectivity::reachability_share(
                    features, &l.species, l.scenario, sel,
                )
                .map(f6)
                .unwrap_or_default();
                (f6(network_retention(&l.matrix, sel)), reach)
            }
        };
        vec![
            l.species.clone(),
            scenarios[l.scenario].clone(),
            source,
            l.matrix.links().to_string(),
            f6(s.settled_share),
            beached,
            left,
            f6(s.local_share),
            format!("{:.3}", s.mean_km),
            format!("{:.3}", s.median_km),
            format!("{:.3}", s.p90_km),
            s.mean_bearing_deg
                .map(|b| format!("{b:.1}"))
                .unwrap_or_default(),
            retention,
            reach,
        ]
    });
    csv_text(&CONNECTIVITY_COLUMNS, rows)
}

/// `connectivity.csv` of `compare`: the network columns for each network given, with its name
/// in a first column `network`, so networks can be compared on connectivity.
pub fn compare_connectivity_csv(
    grid: &Grid,
    scenarios: &[String],
    links: &[SpeciesLinks],
    features: &FeatureTable,
    networks: &[(String, Vec<bool>)],
) -> String {
    let mut header = vec!["network"];
    header.extend(CONNECTIVITY_COLUMNS);
    let mut rows = Vec::new();
    for (name, sel) in networks {
        let text = connectivity_csv(grid, scenarios, links, features, Some(sel));
        let mut r = csv::Reader::from_reader(text.as_bytes());
        for rec in r.records().flatten() {
            let mut row = vec![name.clone()];
            row.extend(rec.iter().map(str::to_string));
            rows.push(row);
        }
    }
    csv_text(&header, rows)
}

/// Every connectivity file of a run (none without `[connectivity]`): the matrices and
/// `connectivity.csv`.
pub fn connectivity_files(
    grid: &Grid,
    scenarios: &[String],
    links: &[SpeciesLinks],
    features: &FeatureTable,
    selected: Option<&[bool]>,
) -> Vec<(String, String)> {
    if links.is_empty() {
        return Vec::new();
    }
    let mut files: Vec<(String, String)> = links
        .iter()
        .map(|l| (dispersal_file_name(l, scenarios), dispersal_csv(&l.matrix)))
        .collect();
    files.push((
        "connectivity.csv".into(),
        connectivity_csv(grid, scenarios, links, features, selected),
    ));
    files
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_written_matrix_reads_back_the_same() {
        let m = Dispersal {
            rows: vec![vec![(0, 0.125), (2, 1.0 / 3.0)], vec![], vec![(1, 0.75)]],
        };
        let text = dispersal_csv(&m);
        assert!(text.starts_with("from,to,probability\n0,0,0.125\n"));
        let dir = std::env::temp_dir().join(format!("driftplan-conn-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let p = dir.join("m.csv");
        std::fs::write(&p, &text).unwrap();
        let back = crate::layers::read_dispersal_matrix(&p, 3).unwrap();
        assert_eq!(back, m.rows);
        // A row over 1 and an unknown cell are refused with the line.
        std::fs::write(&p, "from,to,probability\n0,1,0.7\n0,2,0.5\n").unwrap();
        let e = crate::layers::read_dispersal_matrix(&p, 3).unwrap_err();
        assert!(e.to_string().contains("sum to 1.2"), "{e}");
        std::fs::write(&p, "from,to,probability\n0,7,0.5\n").unwrap();
        let e = crate::layers::read_dispersal_matrix(&p, 3).unwrap_err();
        assert!(e.to_string().contains("line 2"), "{e}");
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
