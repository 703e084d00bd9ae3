//! Which network is best on a row of values, and where two networks differ.

use super::{Better, Comparison};

/// Values this close (relative) are a tie. Two networks with the same cells give bit-equal
/// sums (assess adds in cell order), but different cell sets with equal hand totals may
/// differ in the last bits through summation order; 1e-9 is far above that and far below
/// any difference a planner would act on.
const TIE_REL_TOL: f64 = 1e-9;

/// Whether `a` and `b` are equal up to [`TIE_REL_TOL`].
pub(crate) fn tied(a: f64, b: f64) -> bool {
    a == b || (a - b).abs() <= TIE_REL_TOL * a.abs().max(b.abs())
}

/// Indices of the best values (all tied ones, ascending); empty for [`Better::Neither`] or
/// when no value is a number.
pub(crate) fn best_of(values: &[f64], better: Better) -> Vec<usize> {
    let pick = |x: f64, y: f64| match better {
        Better::Higher => x.max(y),
        Better::Lower => x.min(y),
        Better::Neither => x,
    };
    if better == Better::Neither {
        return Vec::new();
    }
    let Some(top) = values.iter().copied().filter(|v| !v.is_nan()).reduce(pick) else {
        return Vec::new();
    };
    (0..values.len())
        .filter(|&i| tied(values[i], top))
        .collect()
}

/// [`best_of`] among the networks in `among` only (indices, ascending); the others are never
/// best.
pub(crate) fn best_among(values: &[f64], better: Better, among: &[usize]) -> Vec<usize> {
    let sub: Vec<f64> = among.iter().map(|&i| values[i]).collect();
    best_of(&sub, better)
        .into_iter()
        .map(|j| among[j])
        .collect()
}

/// What a [`Difference`] is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DifferenceOf {
    /// A network-level measure ([`Comparison::measures`]).
    Measure,
    /// A feature's protected amount ([`Comparison::features`]).
    Feature,
}

/// One measure or feature on which two networks differ.
#[derive(Debug, Clone, PartialEq)]
pub struct Difference {
    /// Measure or feature name.
    pub name: String,
    /// Whether `name` is a measure or a feature.
    pub of: DifferenceOf,
    /// Value for the first network (a feature's protected amount, in the feature's unit).
    pub a: f64,
    /// Value for the second network.
    pub b: f64,
    /// Which of the two is better: `Some(0)` the first, `Some(1)` the second, `None` when the
    /// measure is not ranked.
    pub better: Option<usize>,
}

/// Every measure and feature on which networks `a` and `b` (indices into
/// [`Comparison::networks`]) differ beyond round-off, measures first, each in comparison order.
/// `None` when an index is out of range.
pub fn differences(c: &Comparison, a: usize, b: usize) -> Option<Vec<Difference>> {
    let n = c.networks.len();
    if a >= n || b >= n {
        return None;
    }
    let mut out = Vec::new();
    let mut push = |name: &str, of, better: Better, x: f64, y: f64| {
        if tied(x, y) {
            return;
        }
        let first_better = match better {
            Better::Higher => Some(x > y),
            Better::Lower => Some(x < y),
            Better::Neither => None,
        };
        out.push(Difference {
            name: name.to_string(),
            of,
            a: x,
            b: y,
            better: first_better.map(|f| if f { 0 } else { 1 }),
        });
    };
    for m in &c.measures {
        push(
            &m.name,
            DifferenceOf::Measure,
            m.better,
            m.values[a],
            m.values[b],
        );
    }
    for f in &c.features {
        push(
            &f.feature,
            DifferenceOf::Feature,
            Better::Higher,
            f.protected[a],
            f.protected[b],
        );
    }
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn best_lists_ties_together() {
        // Hand-checked: the minimum of [3, 1, 1 + 1e-12, 2] is 1 at index 1, and index 2 is
        // within 1e-9 relative of it; the maximum 3 is at index 0 only.
        let v = [3.0, 1.0, 1.0 + 1e-12, 2.0];
        assert_eq!(best_of(&v, Better::Lower), vec![1, 2]);
        assert_eq!(best_of(&v, Better::Higher), vec![0]);
        assert!(best_of(&v, Better::Neither).is_empty());
        assert_eq!(best_of(&[f64::NAN, 5.0], Better::Higher), vec![1]);
        assert!(best_of(&[], Better::Lower).is_empty());
        assert!(!tied(1.0, 1.0 + 1e-6));
        // Among networks 0 and 3 only: the lowest of [3, 2] is network 3, the highest 0.
        assert_eq!(best_among(&v, Better::Lower, &[0, 3]), vec![3]);
        assert_eq!(best_among(&v, Better::Higher, &[0, 3]), vec![0]);
        assert!(tied(0.0, 0.0));
    }
}
