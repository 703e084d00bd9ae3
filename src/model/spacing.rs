//! Max gap (stepping stones along the shift axis): no stretch of the axis longer than
//! `max_gap_km` may pass without a chosen cell, so that species shifting poleward find a
//! reserve within reach of the last one.
//!
//! # Definition
//! Let p₁ < … < pₘ be the distinct positions (km along the shift axis) of the cells that may be
//! chosen (excluded cells removed) and g = `max_gap_km`. A network meets the rule when
//! 1. its first chosen position is at most p₁ + g (the start of the axis is covered),
//! 2. its last chosen position is at least pₘ − g (the end is covered), and
//! 3. each chosen position p is followed, if pₘ − p > g, by a chosen position within
//!    r(p) = max(g, next(p) − p), where next(p) is the next allowed position after p.
//!
//! The `max(g, next(p) − p)` term is a deliberate relaxation: where the data themselves leave a
//! stretch longer than g with no allowed cell (land, a port, a shipping lane), the rule asks
//! for the very next allowed position instead of declaring every network infeasible.
//!
//! # Linear form (one row per allowed position plus one)
//! With uₚ ∈ [0, 1] continuous for each allowed position p:
//! * xᵢ ≤ uₚ for every allowed cell i at position p (uₚ is 1 if any cell at p is chosen),
//! * Σ_{i: p < posᵢ ≤ p + r(p)} xᵢ ≥ uₚ for every p with pₘ − p > g (condition 3; 2 follows),
//! * Σ_{i: posᵢ ≤ p₁ + g} xᵢ ≥ 1 (condition 1).
//!
//! This is the window constraint of the brief ("every window [t, t+g] holds a chosen cell")
//! made exact for discrete positions: a window starting only at cell positions misses a gap
//! between two chosen cells whose interior holds no window start (cells at 0, 5, 10 km with
//! g = 6: {0, 10} passes every window starting at a cell position but leaves a 10 km gap).
//! Using uₚ keeps the row count at the number of positions, not cells, which matters on a
//! 2-D grid where a whole row of cells shares one position.
//!
//! Default: [`DEFAULT_MAX_GAP_KM`] = 100 km, the upper end of the 50–100 km spacing in the
//! California MLPA science guidelines (California Dept. of Fish and Game, MLPA Master Plan
//! 2008; spacing from memory).

use super::CellStatus;

/// Default max gap. Units: km. California MLPA science guidelines, 50–100 km spacing (from memory).
pub const DEFAULT_MAX_GAP_KM: f64 = 100.0;

/// Stepping-stone rule data.
#[derive(Debug, Clone, PartialEq)]
pub struct Spacing {
    /// Position of each cell's centroid along the shift axis (e.g. poleward distance from a
    /// reference line, in the grid's equal-area CRS). Units: km.
    pub position_km: Vec<f64>,
    /// Longest stretch of the axis allowed without a chosen cell. Units: km.
    pub max_gap_km: f64,
}

/// How a network fares under the max-gap rule.
#[derive(Debug, Clone, PartialEq)]
pub struct GapReport {
    /// Longest stretch of the axis (among the start stretch, the end stretch and the stretches
    /// between consecutive chosen positions) without a chosen cell. Infinite when nothing is
    /// chosen. Units: km.
    pub longest_gap_km: f64,
    /// Whether the rule (conditions 1–3 in the module doc) holds.
    pub reached: bool,
}

/// Distinct sorted positions of the allowed (non-excluded) cells.
pub fn allowed_positions(spacing: &Spacing, status: &[CellStatus]) -> Vec<f64> {
    let mut p: Vec<f64> = spacing
        .position_km
        .iter()
        .zip(status)
        .filter(|(_, s)| **s != CellStatus::Excluded)
        .map(|(p, _)| *p)
        .collect();
    p.sort_by(f64::total_cmp);
    p.dedup();
    p
}

/// Reach r(p) = max(g, next(p) − p) for position index `q` of `positions`.
fn reach(positions: &[f64], q: usize, g: f64) -> f64 {
    match positions.get(q + 1) {
        Some(next) => g.max(next - positions[q]),
        None => g,
    }
}

/// Check the max-gap rule directly from the chosen positions (conditions 1–3 of the module
/// doc), independently of the linear rows in [`gap_rows`].
pub fn check_gaps(spacing: &Spacing, status: &[CellStatus], selected: &[bool]) -> GapReport {
    let allowed = allowed_positions(spacing, status);
    let g = spacing.max_gap_km;
    let mut chosen: Vec<f64> = spacing
        .position_km
        .iter()
        .zip(selected)
        .filter(|(_, s)| **s)
        .map(|(p, _)| *p)
        .collect();
    chosen.sort_by(f64::total_cmp);
    chosen.dedup();
    let (Some(&first), Some(&last), Some(&p1), Some(&pm)) = (
        chosen.first(),
        chosen.last(),
        allowed.first(),
        allowed.last(),
    ) else {
        return GapReport {
            longest_gap_km: f64::INFINITY,
            reached: allowed.is_empty(),
        };
    };
    let mut longest = (first - p1).max(pm - last).max(0.0);
    let mut reached = first <= p1 + g && pm - last <= g;
    for w in chosen.windows(2) {
        let gap = w[1] - w[0];
        longest = longest.max(gap);
        // Position index of w[0] among the allowed positions (chosen cells are allowed).
        let q = allowed.partition_point(|&p| p < w[0]);
        if pm - w[0] > g && gap > reach(&allowed, q, g) {
            reached = false;
        }
    }
    GapReport {
        longest_gap_km: longest,
        reached,
    }
}

/// One linear row of the max-gap rule: Σ_{i ∈ cover} xᵢ ≥ u_{trigger} (or ≥ 1 when
/// `trigger` is `None`). `trigger` indexes [`allowed_positions`].
#[derive(Debug, Clone, PartialEq)]
pub struct GapRow {
    /// Position index whose indicator must be covered, or `None` for the start row (≥ 1).
    pub trigger: Option<usize>,
    /// Cells whose choice covers the row, in increasing cell order.
    pub cover: Vec<u32>,
}

/// The covering rows of the linear form (module doc) plus, for each allowed cell, the index of
/// its position among [`allowed_positions`] (`None` for excluded cells).
pub fn gap_rows(spacing: &Spacing, status: &[CellStatus]) -> (Vec<GapRow>, Vec<Option<usize>>) {
    let allowed = allowed_positions(spacing, status);
    let g = spacing.max_gap_km;
    let position_of: Vec<Option<usize>> = spacing
        .position_km
        .iter()
        .zip(status)
        .map(|(p, s)| (*s != CellStatus::Excluded).then(|| allowed.partition_point(|&a| a < *p)))
        .collect();
    let (Some(&p1), Some(&pm)) = (allowed.first(), allowed.last()) else {
        return (Vec::new(), position_of);
    };
    // Allowed cells sorted by position, so each row's cover is a contiguous run.
    let mut by_pos: Vec<(f64, u32)> = position_of
        .iter()
        .enumerate()
        .filter(|(_, q)| q.is_some())
        .map(|(i, _)| (spacing.position_km[i], i as u32))
        .collect();
    by_pos.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
    let cells_in = |lo_excl: Option<f64>, hi: f64| -> Vec<u32> {
        let mut v: Vec<u32> = by_pos
            .iter()
            .filter(|(p, _)| lo_excl.is_none_or(|lo| *p > lo) && *p <= hi)
            .map(|(_, i)| *i)
            .collect();
        v.sort_unstable();
        v
    };
    let mut rows = vec![GapRow {
        trigger: None,
        cover: cells_in(None, p1 + g),
    }];
    for (q, &p) in allowed.iter().enumerate() {
        if pm - p > g {
            rows.push(GapRow {
                trigger: Some(q),
                cover: cells_in(Some(p), p + reach(&allowed, q, g)),
            });
        }
    }
    (rows, position_of)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    fn sp(pos: &[f64], g: f64) -> Spacing {
        Spacing {
            position_km: pos.to_vec(),
            max_gap_km: g,
        }
    }

    #[test]
    fn window_example_from_the_module_doc() {
        // Hand example (module doc): cells at 0, 5, 10 km, g = 6. {0, 10} leaves a 10 km gap
        // although cell 5 could close it; {0, 5, 10} meets the rule, longest gap 5 km.
        let s = sp(&[0.0, 5.0, 10.0], 6.0);
        let st = vec![CellStatus::Free; 3];
        let r = check_gaps(&s, &st, &[true, false, true]);
        assert!(!r.reached);
        assert_eq!(r.longest_gap_km, 10.0);
        let r = check_gaps(&s, &st, &[true, true, true]);
        assert!(r.reached);
        assert_eq!(r.longest_gap_km, 5.0);
        // {5} alone: start stretch 5 ≤ 6, end stretch 5 ≤ 6 → reached.
        assert!(check_gaps(&s, &st, &[false, true, false]).reached);
        // Excluding cell 5 leaves a 10 km data gap: {0, 10} is then the best possible and
        // passes because r(0) = max(6, 10 − 0) = 10.
        let st2 = vec![CellStatus::Free, CellStatus::Excluded, CellStatus::Free];
        assert!(check_gaps(&s, &st2, &[true, false, true]).reached);
        assert!(!check_gaps(&s, &st2, &[true, false, false]).reached);
    }

    #[test]
    fn rows_agree_with_direct_check() {
        // Independent check: the linear rows (gap_rows) accept exactly the networks that the
        // direct gap computation (check_gaps) accepts, over every subset of random instances.
        let mut rng = ChaCha8Rng::seed_from_u64(7);
        for _ in 0..40 {
            let n = rng.gen_range(1..9);
            let pos: Vec<f64> = (0..n).map(|_| rng.gen_range(0..12) as f64 * 5.0).collect();
            let st: Vec<CellStatus> = (0..n)
                .map(|_| {
                    if rng.gen_bool(0.2) {
                        CellStatus::Excluded
                    } else {
                        CellStatus::Free
                    }
                })
                .collect();
            let s = sp(&pos, rng.gen_range(1..30) as f64);
            let (rows, pos_of) = gap_rows(&s, &st);
            for mask in 0u32..(1 << n) {
                let sel: Vec<bool> = (0..n)
                    .map(|i| mask >> i & 1 == 1 && st[i] != CellStatus::Excluded)
                    .collect();
                let npos = allowed_positions(&s, &st).len();
                let mut u = vec![0.0; npos];
                for i in 0..n {
                    if sel[i] {
                        u[pos_of[i].unwrap()] = 1.0;
                    }
                }
                let rows_ok = rows.iter().all(|r| {
                    let lhs: f64 = r.cover.iter().map(|&i| sel[i as usize] as u8 as f64).sum();
                    lhs >= r.trigger.map_or(1.0, |q| u[q])
                });
                let direct = check_gaps(&s, &st, &sel).reached;
                if npos > 0 {
                    assert_eq!(
                        rows_ok, direct,
                        "pos {pos:?} st {st:?} g {} sel {sel:?}",
                        s.max_gap_km
                    );
                }
            }
        }
    }
}
