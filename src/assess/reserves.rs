//! Reserves: the connected pieces of a network under rook adjacency.

use super::{cost_of, is_chosen, Reserve};
use crate::grid::Grid;

/// Splits the chosen cells into reserves (connected by shared edges), largest area first,
/// ties by lowest cell id. Each reserve lists its cells ascending.
pub fn reserves(grid: &Grid, cost: &[f64], selected: &[bool]) -> Vec<Reserve> {
    let n = grid.len();
    let mut seen = vec![false; n];
    let mut out = Vec::new();
    let mut stack = Vec::new();
    for start in 0..n as u32 {
        if seen[start as usize] || !is_chosen(selected, start) {
            continue;
        }
        // Depth-first flood fill over rook neighbours.
        let mut cells = Vec::new();
        seen[start as usize] = true;
        stack.push(start);
        while let Some(c) = stack.pop() {
            cells.push(c);
            for nb in &grid.neighbours[c as usize] {
                let j = nb.cell as usize;
                if j < n && !seen[j] && is_chosen(selected, nb.cell) {
                    seen[j] = true;
                    stack.push(nb.cell);
                }
            }
        }
        cells.sort_unstable();
        // Sums in ascending cell order: reproducible to the last bit.
        let area_km2 = cells
            .iter()
            .map(|&c| grid.cells[c as usize].sea_area_km2)
            .sum();
        let cost = cells.iter().map(|&c| cost_of(cost, c)).sum();
        out.push(Reserve {
            cells,
            area_km2,
            cost,
        });
    }
    // `out` is already in order of lowest cell id; a stable sort by area keeps that for ties.
    out.sort_by(|a: &Reserve, b: &Reserve| b.area_km2.total_cmp(&a.area_km2));
    out
}

#[cfg(test)]
mod tests {
    use super::super::fixtures::{grid_4x3, pick};
    use super::*;

    /// Brute-force connectivity: repeat "merge two groups that share an edge" until stable.
    fn brute_force_groups(grid: &Grid, sel: &[bool]) -> Vec<Vec<u32>> {
        let mut groups: Vec<Vec<u32>> = (0..grid.len() as u32)
            .filter(|&i| sel[i as usize])
            .map(|i| vec![i])
            .collect();
        loop {
            let mut merged = false;
            'outer: for a in 0..groups.len() {
                for b in a + 1..groups.len() {
                    let touch = groups[a].iter().any(|&x| {
                        grid.neighbours[x as usize]
                            .iter()
                            .any(|n| groups[b].contains(&n.cell))
                    });
                    if touch {
                        let gb = groups.remove(b);
                        groups[a].extend(gb);
                        groups[a].sort_unstable();
                        merged = true;
                        break 'outer;
                    }
                }
            }
            if !merged {
                return groups;
            }
        }
    }

    #[test]
    fn matches_brute_force_on_every_network_of_the_grid() {
        // All 2^12 networks of the 4×3 grid: the flood fill finds the same groups as pairwise
        // merging (order aside).
        let g = grid_4x3();
        let cost = vec![1.0; 12];
        for mask in 0u32..(1 << 12) {
            let sel: Vec<bool> = (0..12).map(|i| mask & (1 << i) != 0).collect();
            let got = reserves(&g, &cost, &sel);
            let mut got_cells: Vec<Vec<u32>> = got.iter().map(|r| r.cells.clone()).collect();
            got_cells.sort();
            let mut want = brute_force_groups(&g, &sel);
            want.sort();
            assert_eq!(got_cells, want, "mask {mask:#b}");
            // Largest first, ties by lowest id.
            for w in got.windows(2) {
                assert!(
                    w[0].area_km2 > w[1].area_km2
                        || (w[0].area_km2 == w[1].area_km2 && w[0].cells[0] < w[1].cells[0])
                );
            }
        }
    }

    #[test]
    fn diagonal_cells_are_separate_reserves() {
        let g = grid_4x3();
        // 0 and 5 touch only at a corner: rook adjacency keeps them apart.
        let sel = pick(12, &[0, 5]);
        let r = reserves(
            &g,
            &[2.0, 0.0, 0.0, 0.0, 0.0, 3.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0],
            &sel,
        );
        assert_eq!(r.len(), 2);
        assert_eq!(r[0].cells, vec![0]);
        assert_eq!(r[0].cost, 2.0);
        assert_eq!(r[1].cells, vec![5]);
        assert_eq!(r[1].cost, 3.0);
    }
}
