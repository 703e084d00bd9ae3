//! The two passes over every amount that each Lagrangian step makes — the per-cell weight
//! Σₖ λₖaᵢₖ and the per-row sum Σᵢ aᵢₖxᵢ — in parallel, with the same bits as in sequence.
//!
//! On a 268 102-cell bench (480 rows, 38 M amounts) these two passes took 38 % of the
//! decomposition's time in one thread, the max-flow 36 %. Cells are split into blocks, each
//! block walks every row's amounts between its first and last cell (found by binary search:
//! amounts are sorted by cell), so every cell still receives its rows' terms in row order;
//! row sums run one row per task, each in cell order. Neither result depends on the number of
//! threads.

use crate::model::ModelFeature;
use rayon::prelude::*;

/// Cells per parallel block of [`subtract_weighted`].
const BLOCK: usize = 16_384;

/// `u[i] −= Σ lₖ·aᵢₖ` over `rows` = `(feature index, lₖ)`, skipping lₖ = 0, each cell's
/// terms in the order of `rows`. Every feature's amounts must be sorted by cell (as
/// [`ModelFeature::amounts`] promises; [`sorted_by_cell`] checks it).
pub fn subtract_weighted(u: &mut [f64], features: &[ModelFeature], rows: &[(usize, f64)]) {
    let active: Vec<(usize, f64)> = rows.iter().copied().filter(|r| r.1 != 0.0).collect();
    u.par_chunks_mut(BLOCK).enumerate().for_each(|(b, block)| {
        let (lo, hi) = ((b * BLOCK) as u32, (b * BLOCK + block.len()) as u32);
        for &(k, l) in &active {
            let amounts = &features[k].amounts;
            let from = amounts.partition_point(|e| e.0 < lo);
            for &(c, a) in amounts[from..].iter().take_while(|e| e.0 < hi) {
                block[(c - lo) as usize] -= l * a;
            }
        }
    });
}

/// `Σᵢ aᵢₖ·x[i]` for each feature index `k` of `rows`, in cell order.
pub fn row_sums(x: &[f64], features: &[ModelFeature], rows: &[usize]) -> Vec<f64> {
    rows.par_iter()
        .map(|&k| {
            features[k]
                .amounts
                .iter()
                .map(|&(c, a)| a * x[c as usize])
                .sum()
        })
        .collect()
}

/// Whether every feature's amounts are sorted by strictly ascending cell.
pub fn sorted_by_cell(features: &[ModelFeature]) -> bool {
    features
        .iter()
        .all(|f| f.amounts.windows(2).all(|w| w[0].0 < w[1].0))
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    fn features(n: u32, k: usize, rng: &mut rand_chacha::ChaCha8Rng) -> Vec<ModelFeature> {
        (0..k)
            .map(|f| {
                let mut amounts = Vec::new();
                for c in 0..n {
                    if rng.gen_bool(0.3) {
                        amounts.push((c, rng.gen_range(0.1..5.0)));
                    }
                }
                ModelFeature {
                    name: format!("f{f}"),
                    scenario: None,
                    amounts,
                    target: 1.0,
                    weight: 1.0,
                }
            })
            .collect()
    }

    #[test]
    fn parallel_passes_give_the_sequential_bits() {
        // Reference: the plain sequential loops (feature by feature scatter; per-row sum in
        // cell order), written out here; results must agree bit for bit, across block edges.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
        let n = 3 * BLOCK as u32 + 517;
        let fs = features(n, 9, &mut rng);
        assert!(sorted_by_cell(&fs));
        let rows: Vec<(usize, f64)> = (0..9)
            .map(|k| (k, if k == 4 { 0.0 } else { rng.gen_range(0.0..2.0) }))
            .collect();
        let base: Vec<f64> = (0..n).map(|_| rng.gen_range(-1.0..1.0)).collect();
        let mut want = base.clone();
        for &(k, l) in &rows {
            if l != 0.0 {
                for &(c, a) in &fs[k].amounts {
                    want[c as usize] -= l * a;
                }
            }
        }
        let mut got = base;
        subtract_weighted(&mut got, &fs, &rows);
        assert!(want
            .iter()
            .zip(&got)
            .all(|(a, b)| a.to_bits() == b.to_bits()));
        let x: Vec<f64> = (0..n).map(|_| rng.gen_range(0.0..1.0)).collect();
        let idx: Vec<usize> = (0..9).collect();
        let sums = row_sums(&x, &fs, &idx);
        for (k, s) in sums.iter().enumerate() {
            let mut w = 0.0;
            for &(c, a) in &fs[k].amounts {
                w += a * x[c as usize];
            }
            assert_eq!(s.to_bits(), w.to_bits());
        }
        let mut unsorted = fs;
        unsorted[2].amounts.swap(0, 1);
        assert!(!sorted_by_cell(&unsorted));
    }
}
