//! Time weights: how much each year counts when a feature's per-year amounts are combined
//! into one time-weighted amount.

use crate::climate::{check_sparse, weighted_sparse_sum, ClimateError};

/// Normalised weight of each year (sums to 1).
///
/// Equal weights when `discount_rate` is `None`; otherwise exponential discounting
/// wₜ ∝ (1 + r)^−(t − t₀) with t₀ the first year (the standard discount factor of cost–benefit
/// analysis; common practice, no source), so later years count less when r > 0. `years` must
/// be strictly ascending; r must be above −1.
pub fn time_weights(years: &[i32], discount_rate: Option<f64>) -> Result<Vec<f64>, ClimateError> {
    if years.is_empty() || years.windows(2).any(|w| w[1] <= w[0]) {
        return Err(ClimateError::Invalid(format!(
            "time weights need at least one year, strictly ascending (got {years:?})"
        )));
    }
    let raw: Vec<f64> = match discount_rate {
        None => vec![1.0; years.len()],
        Some(r) => {
            if !(r > -1.0 && r.is_finite()) {
                return Err(ClimateError::Parameter {
                    name: "discount_rate".into(),
                    value: r,
                    expected: "a yearly rate above −1, e.g. 0.03 for 3 % per year".into(),
                });
            }
            years
                .iter()
                .map(|&t| (1.0 + r).powf(-((t - years[0]) as f64)))
                .collect()
        }
    };
    let sum: f64 = raw.iter().sum();
    Ok(raw.iter().map(|w| w / sum).collect())
}

/// One time-weighted amount per cell: Σₜ wₜ·amountₜ(cell) over the years' sparse lists
/// (sorted by cell id; a cell missing from a year holds 0 that year). Units: those of the
/// amounts.
pub fn time_weighted_amounts(
    n_cells: usize,
    per_year: &[&[(u32, f64)]],
    weights: &[f64],
) -> Result<Vec<(u32, f64)>, ClimateError> {
    if per_year.len() != weights.len() {
        return Err(ClimateError::Length {
            what: "time weights (one per year of amounts)".into(),
            expected: per_year.len(),
            got: weights.len(),
        });
    }
    for (k, list) in per_year.iter().enumerate() {
        check_sparse(&format!("amounts of year index {k}"), list, n_cells)?;
    }
    Ok(weighted_sparse_sum(
        n_cells,
        per_year.iter().copied().zip(weights.iter().copied()),
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn discounted_weights_by_hand() {
        // Hand computation, r = 0.03, years 2030, 2050, 2070:
        // raw 1, 1.03^−20 = 0.553675754, 1.03^−40 = 0.306556841; sum 1.860232595
        // → 0.537567, 0.297638, 0.164795.
        let w = time_weights(&[2030, 2050, 2070], Some(0.03)).unwrap();
        let raw = [1.0, 0.553_675_754, 0.306_556_841];
        let sum: f64 = raw.iter().sum();
        for (a, b) in w.iter().zip(raw) {
            assert!((a - b / sum).abs() < 1e-8, "{a} vs {}", b / sum);
        }
        assert!((w[0] - 0.537_567).abs() < 1e-6);
        let eq = time_weights(&[2030, 2050, 2070, 2090], None).unwrap();
        assert_eq!(eq, vec![0.25; 4]);
        assert!(time_weights(&[2050, 2030], None).is_err());
        assert!(time_weights(&[2030], Some(-1.0)).is_err());
    }

    #[test]
    fn combined_amounts_by_hand() {
        // Hand computation with weights 0.75, 0.25:
        // cell 0: 0.75·4 + 0.25·0 = 3; cell 1: 0.75·2 + 0.25·6 = 3; cell 2: 0.25·8 = 2.
        let y1 = [(0u32, 4.0), (1, 2.0)];
        let y2 = [(1u32, 6.0), (2, 8.0)];
        let c = time_weighted_amounts(3, &[&y1, &y2], &[0.75, 0.25]).unwrap();
        assert_eq!(c, vec![(0, 3.0), (1, 3.0), (2, 2.0)]);
        assert!(time_weighted_amounts(3, &[&y1], &[0.5, 0.5]).is_err());
    }
}
