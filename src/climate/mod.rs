//! Climate stage: takes the grid and per-cell sea temperature series of one scenario and
//! returns climate velocity (km/yr and bearing), climate trajectories with their source / sink /
//! corridor classes, and refugia. Everything here is a pure computation on dense per-cell
//! vectors (indexed by cell id) or sparse `(cell id, amount)` lists sorted by cell id.

pub mod refugia;
pub mod stats;
pub mod trajectory;
pub mod velocity;

pub use refugia::{
    low_exposure_cells, persistent_habitat, refugia, ExposureMetric, Refugia, RefugiaParams,
};
pub use stats::{linear_trend, quantile, weighted_quantile};
pub use trajectory::{
    classify_flow, trace, trace_all, FlowClass, FlowCounts, Stop, Trajectory, TrajectoryParams,
    TrajectorySet,
};
pub use velocity::{
    climate_velocity, ground_bearing_deg, spatial_gradient, Velocity, VelocityParams,
};

use crate::grid::GridError;

/// Errors of the climate computations (and of the derived climate features built on them).
///
/// Inputs reach these functions from the layers stage, so the messages name the input (by
/// its role, e.g. "temperature of year 2050") and the expected form.
#[derive(Debug, thiserror::Error)]
pub enum ClimateError {
    /// A per-cell vector does not have one value per grid cell.
    #[error("{what} has {got} values but the grid has {expected} cells (expected one value per cell id)")]
    CellCount {
        /// Which input.
        what: String,
        /// Grid cells.
        expected: usize,
        /// Values given.
        got: usize,
    },
    /// Two inputs that must pair up have different lengths.
    #[error("{what}: {got} given, expected {expected}")]
    Length {
        /// Which input.
        what: String,
        /// Expected count.
        expected: usize,
        /// Count given.
        got: usize,
    },
    /// A sparse `(cell, amount)` list is not sorted, repeats a cell or names no cell.
    #[error("{what}: entry {index} names cell {cell}; expected cell ids below {n_cells}, strictly ascending")]
    SparseList {
        /// Which input.
        what: String,
        /// Position in the list.
        index: usize,
        /// The offending cell id.
        cell: u32,
        /// Grid cells.
        n_cells: usize,
    },
    /// A parameter is outside its allowed range.
    #[error("`{name}` = {value} is not allowed; expected {expected}")]
    Parameter {
        /// Parameter name.
        name: String,
        /// Value given.
        value: f64,
        /// The allowed form, e.g. "a number in (0, 1)".
        expected: String,
    },
    /// The input cannot give an answer (e.g. an axis with no poleward direction).
    #[error("{0}")]
    Invalid(String),
    /// Projection failure (from the grid's CRS).
    #[error(transparent)]
    Grid(#[from] GridError),
    /// A supplied input (velocity, refugium, boundary, distinctness layer) could not be read;
    /// the layer error names the file and where in it.
    #[error(transparent)]
    Layer(#[from] crate::layers::LayerError),
}

/// Checks that a dense per-cell vector has one value per cell.
pub(crate) fn check_dense(what: &str, values: &[f64], n_cells: usize) -> Result<(), ClimateError> {
    if values.len() != n_cells {
        return Err(ClimateError::CellCount {
            what: what.to_string(),
            expected: n_cells,
            got: values.len(),
        });
    }
    Ok(())
}

/// Checks that a sparse list has strictly ascending cell ids below `n_cells`.
pub(crate) fn check_sparse(
    what: &str,
    amounts: &[(u32, f64)],
    n_cells: usize,
) -> Result<(), ClimateError> {
    let mut previous: Option<u32> = None;
    for (index, &(cell, _)) in amounts.iter().enumerate() {
        let ascending = previous.is_none_or(|p| cell > p);
        if (cell as usize) >= n_cells || !ascending {
            return Err(ClimateError::SparseList {
                what: what.to_string(),
                index,
                cell,
                n_cells,
            });
        }
        previous = Some(cell);
    }
    Ok(())
}

/// Checks `lo < value < hi` (open) or `lo <= value <= hi` (closed).
pub(crate) fn check_range(
    name: &str,
    value: f64,
    lo: f64,
    hi: f64,
    closed: bool,
) -> Result<(), ClimateError> {
    let ok = if closed {
        value >= lo && value <= hi
    } else {
        value > lo && value < hi
    };
    if !ok {
        let (a, b) = if closed { ('[', ']') } else { ('(', ')') };
        return Err(ClimateError::Parameter {
            name: name.to_string(),
            value,
            expected: format!("a number in {a}{lo}, {hi}{b}"),
        });
    }
    Ok(())
}

/// Weighted sum of sparse lists, in list order (deterministic), zero sums left out.
pub(crate) fn weighted_sparse_sum<'a>(
    n_cells: usize,
    lists: impl IntoIterator<Item = (&'a [(u32, f64)], f64)>,
) -> Vec<(u32, f64)> {
    let mut dense = vec![0.0; n_cells];
    let mut touched = vec![false; n_cells];
    for (list, w) in lists {
        for &(c, a) in list {
            dense[c as usize] += w * a;
            touched[c as usize] = true;
        }
    }
    (0..n_cells)
        .filter(|&i| touched[i] && dense[i] != 0.0)
        .map(|i| (i as u32, dense[i]))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    // Hand-checked validation cases (common practice, no source).
    #[test]
    fn sparse_lists_must_ascend_within_the_grid() {
        assert!(check_sparse("h", &[(0, 1.0), (2, 1.0)], 3).is_ok());
        assert!(matches!(
            check_sparse("h", &[(2, 1.0), (1, 1.0)], 3),
            Err(ClimateError::SparseList {
                index: 1,
                cell: 1,
                ..
            })
        ));
        assert!(check_sparse("h", &[(1, 1.0), (1, 1.0)], 3).is_err());
        assert!(check_sparse("h", &[(3, 1.0)], 3).is_err());
    }

    #[test]
    fn ranges_and_counts() {
        assert!(check_range("q", 0.5, 0.0, 1.0, false).is_ok());
        assert!(check_range("q", 0.0, 0.0, 1.0, false).is_err());
        assert!(check_range("q", 0.0, 0.0, 1.0, true).is_ok());
        assert!(check_range("q", f64::NAN, 0.0, 1.0, true).is_err());
        assert!(check_range("r", 5.0, 0.0, f64::INFINITY, false).is_ok());
        assert!(check_dense("t", &[1.0, 2.0], 3).is_err());
    }

    #[test]
    fn sparse_sum_by_hand() {
        // Hand computation: 2·[(0,1),(2,3)] + 1·[(2,−6),(3,1)] = [(0,2),(3,1)] (cell 2 cancels).
        let a = [(0u32, 1.0), (2, 3.0)];
        let b = [(2u32, -6.0), (3, 1.0)];
        let s = weighted_sparse_sum(4, [(&a[..], 2.0), (&b[..], 1.0)]);
        assert_eq!(s, vec![(0, 2.0), (3, 1.0)]);
    }
}
