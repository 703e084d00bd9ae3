//! Reduced-cost fixing from a Lagrangian cut (Caprara, Fischetti & Toth 1999, §3, in the form
//! for cut subproblems): with L(λ) and a cut x̂ at multipliers λ, a network with xᵢ ≠ x̂ᵢ has
//! objective ≥ L(λ) + δᵢ, where δᵢ is the cut's flip cost ([`super::maxflow::Cut`]). So when
//! L(λ) + δᵢ > U, the objective of a known network, every better network keeps xᵢ = x̂ᵢ.
//!
//! For max-benefit the same holds in the minimised sense (L and U of the negated objective,
//! [`super::lagrange`]): the inner minimum separates into the cut and box terms in y, t, r that
//! do not depend on x, so forcing xᵢ to flip raises only the cut part, by at least δᵢ.

use crate::model::{CellStatus, Problem};

use super::lagrange::Evaluation;

/// Relative margin on the comparison with U, so rounding in L never fixes a cell that an
/// equally good network could flip (common practice, no source).
const MARGIN: f64 = 1e-9;

/// Per cell: `Some(v)` where every network better than `upper` has xᵢ = v (required and
/// excluded cells included), `None` where the cell stays free.
pub fn fix(problem: &Problem, at: &Evaluation, upper: f64) -> Vec<Option<bool>> {
    let limit = upper + MARGIN * upper.abs().max(1.0);
    (0..problem.n_cells())
        .map(|i| match problem.status[i] {
            CellStatus::Required => Some(true),
            CellStatus::Excluded => Some(false),
            CellStatus::Free => (at.bound + at.cut.flip_cost[i] > limit).then_some(at.cut.x[i]),
        })
        .collect()
}
