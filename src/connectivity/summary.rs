//! Summaries of a dispersal matrix: how far and which way larvae travel, and how much of what a
//! network releases stays in it.
//!
//! # Formulas
//! Each source cell releases the same number of larvae, so the link i→j carries weight P[i→j].
//! Its distance dᵢⱼ is between the two cells' sea centroids in the grid's projected metres
//! (equal-area azimuthal projection: distances are true near the centre and within a few per
//! cent across a regional grid); its bearing is atan2(Δx, Δy), clockwise from grid north.
//! - mean distance = Σ P·d / Σ P; median and 90th percentile: the weighted quantiles (the
//!   smallest d whose cumulative weight reaches q·Σ P; common practice, no source).
//! - mean bearing: direction of Σ P·(sin θ, cos θ) over links that move (d > 0) — the circular
//!   mean (Mardia & Jupp, Directional Statistics, §2.2).
//! - retention of a network R: Σ_{i∈R} Σ_{j∈R} P[i→j] / |R| — the share of larvae released in
//!   reserves that settle in reserves (the network's self-recruitment).

use super::Dispersal;
use crate::grid::Grid;

/// How far and which way a species' larvae travel.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct DispersalSummary {
    /// Mean share of released larvae that settle anywhere (mean row sum).
    pub settled_share: f64,
    /// Mean share that settle in the cell they were released in (mean P[i→i]).
    pub local_share: f64,
    /// Weighted mean dispersal distance. Units: km.
    pub mean_km: f64,
    /// Weighted median dispersal distance. Units: km.
    pub median_km: f64,
    /// Weighted 90th-percentile dispersal distance. Units: km.
    pub p90_km: f64,
    /// Weighted circular-mean bearing of the links that move; `None` when none move.
    /// Units: degrees clockwise from grid north, 0–360.
    pub mean_bearing_deg: Option<f64>,
}

/// Summarises `m` on `grid`; `sources` limits the rows used (`None`: every cell).
pub fn summarise(grid: &Grid, m: &Dispersal, sources: Option<&[bool]>) -> DispersalSummary {
    let mut links: Vec<(f64, f64)> = Vec::new();
    let (mut sum_p, mut local, mut rows) = (0.0, 0.0, 0usize);
    let (mut s, mut c) = (0.0, 0.0);
    for (i, row) in m.rows.iter().enumerate() {
        if sources.is_some_and(|r| !r[i]) {
            continue;
        }
        rows += 1;
        let a = grid.cells[i].centre;
        for &(j, p) in row {
            let b = grid.cells[j as usize].centre;
            let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
            let d = dx.hypot(dy) / 1000.0;
            links.push((d, p));
            sum_p += p;
            if j as usize == i {
                local += p;
            }
            if d > 0.0 {
                s += p * dx / (d * 1000.0);
                c += p * dy / (d * 1000.0);
            }
        }
    }
    links.sort_by(|x, y| x.0.total_cmp(&y.0));
    let quantile = |q: f64| {
        let goal = q * sum_p;
        let mut acc = 0.0;
        for &(d, p) in &links {
            acc += p;
            if acc >= goal * (1.0 - 1e-12) {
                return d;
            }
        }
        links.last().map_or(0.0, |l| l.0)
    };
    let rows = rows.max(1) as f64;
    DispersalSummary {
        settled_share: sum_p / rows,
        local_share: local / rows,
        mean_km: if sum_p > 0.0 {
            links.iter().map(|l| l.0 * l.1).sum::<f64>() / sum_p
        } else {
            0.0
        },
        median_km: quantile(0.5),
        p90_km: quantile(0.9),
        mean_bearing_deg: (s.hypot(c) > 1e-12).then(|| s.atan2(c).to_degrees().rem_euclid(360.0)),
    }
}

/// Share of the larvae released in chosen cells that settle in chosen cells (0 for an empty
/// network).
pub fn network_retention(m: &Dispersal, selected: &[bool]) -> f64 {
    let mut n = 0usize;
    let mut kept = 0.0;
    for (i, row) in m.rows.iter().enumerate() {
        if !selected[i] {
            continue;
        }
        n += 1;
        kept += row
            .iter()
            .filter(|e| selected[e.0 as usize])
            .map(|e| e.1)
            .sum::<f64>();
    }
    if n == 0 {
        0.0
    } else {
        kept / n as f64
    }
}
