//! Interpolating scattered or gridded point values at cell centroids: bilinear on a complete
//! regular lattice, nearest point otherwise.

use rstar::primitives::GeomWithData;
use rstar::RTree;

/// Nearest-point sampling uses a data point only if it is within this many median data
/// spacings (median distance from a point to its nearest other point) of the cell centroid,
/// and never less than one cell side: farther cells are uncovered. Two spacings bridge a
/// single gap in the data without extrapolating far beyond its edge (common practice, no source).
pub const NEAREST_MAX_SPACINGS: f64 = 2.0;

/// Axis values closer than this share of the axis range are the same lattice line (parsing
/// noise of printed coordinates is ~1e-15 relative).
const SAME_LINE: f64 = 1e-9;

/// Spacings may differ from the mean step by this share of it and still count as regular:
/// room for coordinates printed to 4–5 significant digits.
const REGULAR_TOLERANCE: f64 = 1e-3;

/// How one cell's value is formed from data rows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Weights {
    /// The cell is outside the data.
    Outside,
    /// The value of one row (nearest point).
    One(u32),
    /// Σ wₖ·value(rowₖ) (bilinear: weights are non-negative and sum to 1).
    Four([u32; 4], [f64; 4]),
}

impl Weights {
    /// The cell's value from one column, `None` when outside the data.
    pub(crate) fn apply(&self, values: &[f64]) -> Option<f64> {
        match *self {
            Weights::Outside => None,
            Weights::One(i) => Some(values[i as usize]),
            Weights::Four(i, w) => Some((0..4).map(|k| w[k] * values[i[k] as usize]).sum()),
        }
    }
}

/// A complete regular lattice: `nx × ny` points at `x0 + i·dx`, `y0 + j·dy`, each present once.
#[derive(Debug, Clone)]
pub(crate) struct RegularLattice {
    x0: f64,
    dx: f64,
    nx: usize,
    y0: f64,
    dy: f64,
    ny: usize,
    /// Row index of the point at `(i, j)`, stored at `j * nx + i`.
    rows: Vec<u32>,
}

/// Start, step and count of an axis whose distinct values are equally spaced, if they are.
fn regular_axis(values: &[f64]) -> Option<(f64, f64, usize)> {
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    let (first, last) = (*v.first()?, *v.last()?);
    let range = last - first;
    if range.is_nan() || range <= 0.0 {
        return None;
    }
    let mut lines = vec![first];
    for &x in &v[1..] {
        if x - lines[lines.len() - 1] > range * SAME_LINE {
            lines.push(x);
        }
    }
    let n = lines.len();
    let step = range / (n - 1) as f64;
    let regular = lines
        .windows(2)
        .all(|w| ((w[1] - w[0]) - step).abs() <= REGULAR_TOLERANCE * step);
    regular.then_some((first, step, n))
}

impl RegularLattice {
    /// Recognises a complete regular lattice in `(xs, ys)`: equal spacing along each axis
    /// (within 0.1% of the step), at least 2 × 2 points, every lattice position filled once.
    pub(crate) fn detect(xs: &[f64], ys: &[f64]) -> Option<RegularLattice> {
        let (x0, dx, nx) = regular_axis(xs)?;
        let (y0, dy, ny) = regular_axis(ys)?;
        if nx.checked_mul(ny)? != xs.len() {
            return None;
        }
        let mut rows = vec![u32::MAX; nx * ny];
        for (k, (&x, &y)) in xs.iter().zip(ys).enumerate() {
            let (fi, fj) = ((x - x0) / dx, (y - y0) / dy);
            let (i, j) = (fi.round(), fj.round());
            // Every value is on a regular line (checked above), so it rounds to its index.
            if (fi - i).abs() > 0.25 || (fj - j).abs() > 0.25 {
                return None;
            }
            let slot = &mut rows[j as usize * nx + i as usize];
            if *slot != u32::MAX {
                return None;
            }
            *slot = k as u32;
        }
        Some(RegularLattice {
            x0,
            dx,
            nx,
            y0,
            dy,
            ny,
            rows,
        })
    }

    /// Bilinear weights at `(x, y)` in the lattice's coordinates; `Outside` beyond its extent.
    /// Weights (1−t)(1−u), t(1−u), (1−t)u, tu on the four surrounding points (Press et al.,
    /// Numerical Recipes, §3.6).
    pub(crate) fn weights_at(&self, x: f64, y: f64) -> Weights {
        // Cells exactly on the outer lattice line are inside; allow for round-off there.
        const EDGE: f64 = 1e-9;
        let locate = |v: f64, v0: f64, d: f64, n: usize| -> Option<(usize, f64)> {
            let f = (v - v0) / d;
            if f.is_nan() || f < -EDGE || f > (n - 1) as f64 + EDGE {
                return None;
            }
            let f = f.clamp(0.0, (n - 1) as f64);
            let i = (f.floor() as usize).min(n - 2);
            Some((i, f - i as f64))
        };
        let (Some((i, t)), Some((j, u))) = (
            locate(x, self.x0, self.dx, self.nx),
            locate(y, self.y0, self.dy, self.ny),
        ) else {
            return Weights::Outside;
        };
        let at = |i: usize, j: usize| self.rows[j * self.nx + i];
        Weights::Four(
            [at(i, j), at(i + 1, j), at(i, j + 1), at(i + 1, j + 1)],
            [(1.0 - t) * (1.0 - u), t * (1.0 - u), (1.0 - t) * u, t * u],
        )
    }

    /// True when `x` is inside the lattice's first-axis extent.
    pub(crate) fn spans_x(&self, x: f64) -> bool {
        let f = (x - self.x0) / self.dx;
        (-1e-9..=(self.nx - 1) as f64 + 1e-9).contains(&f)
    }
}

/// Nearest-point weights for each query, all in one projected CRS (metres). Returns the
/// weights and the distance limit used: `max(NEAREST_MAX_SPACINGS × median spacing, min_limit)`.
pub(crate) fn nearest(
    points: &[[f64; 2]],
    queries: &[[f64; 2]],
    min_limit: f64,
) -> (Vec<Weights>, f64) {
    let tree = RTree::bulk_load(
        points
            .iter()
            .enumerate()
            .map(|(k, p)| GeomWithData::new(*p, k as u32))
            .collect(),
    );
    let mut spacing: Vec<f64> = points
        .iter()
        .filter_map(|p| {
            tree.nearest_neighbor_iter_with_distance_2(p)
                .nth(1)
                .map(|(_, d2)| d2.sqrt())
        })
        .collect();
    spacing.sort_by(f64::total_cmp);
    let median = spacing.get(spacing.len() / 2).copied().unwrap_or(0.0);
    let limit = (NEAREST_MAX_SPACINGS * median).max(min_limit);
    let limit2 = limit * limit;
    let weights = queries
        .iter()
        .map(
            |q| match tree.nearest_neighbor_iter_with_distance_2(q).next() {
                Some((g, d2)) if d2 <= limit2 => Weights::One(g.data),
                _ => Weights::Outside,
            },
        )
        .collect();
    (weights, limit)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A lattice of lon 10..13 step 1 and lat 50..52 step 0.5, rows in a scrambled order.
    fn lattice_points() -> (Vec<f64>, Vec<f64>) {
        let mut pts = Vec::new();
        for j in 0..5 {
            for i in 0..4 {
                pts.push((10.0 + i as f64, 50.0 + 0.5 * j as f64));
            }
        }
        pts.reverse();
        pts.swap(3, 11);
        pts.into_iter().unzip()
    }

    #[test]
    fn bilinear_reproduces_a_linear_field_exactly() {
        // Bilinear interpolation is exact for v = a + b·lon + c·lat (it is exact for any
        // function linear in each coordinate: Press et al., Numerical Recipes, §3.6).
        let (xs, ys) = lattice_points();
        let f = |x: f64, y: f64| 3.0 - 0.7 * x + 2.5 * y;
        let v: Vec<f64> = xs.iter().zip(&ys).map(|(&x, &y)| f(x, y)).collect();
        let lat = RegularLattice::detect(&xs, &ys).expect("a complete regular lattice");
        for &(x, y) in &[
            (10.0, 50.0),
            (10.3, 50.2),
            (12.99, 51.7),
            (13.0, 52.0),
            (11.5, 51.25),
        ] {
            let got = lat.weights_at(x, y).apply(&v).unwrap();
            assert!(
                (got - f(x, y)).abs() < 1e-12,
                "({x}, {y}): {got} vs {}",
                f(x, y)
            );
        }
        assert_eq!(lat.weights_at(9.99, 51.0), Weights::Outside);
        assert_eq!(lat.weights_at(11.0, 52.01), Weights::Outside);
    }

    #[test]
    fn bilinear_product_term_by_hand() {
        // Hand computation on the unit square with corner values v(0,0)=1, v(1,0)=2,
        // v(0,1)=3, v(1,1)=5 at t = 0.25, u = 0.75:
        // 0.75·0.25·1 + 0.25·0.25·2 + 0.75·0.75·3 + 0.25·0.75·5
        // = 0.1875 + 0.125 + 1.6875 + 0.9375 = 2.9375. At the centre: (1+2+3+5)/4 = 2.75.
        let xs = [0.0, 1.0, 0.0, 1.0];
        let ys = [0.0, 0.0, 1.0, 1.0];
        let v = [1.0, 2.0, 3.0, 5.0];
        let lat = RegularLattice::detect(&xs, &ys).unwrap();
        assert!((lat.weights_at(0.25, 0.75).apply(&v).unwrap() - 2.9375).abs() < 1e-15);
        assert!((lat.weights_at(0.5, 0.5).apply(&v).unwrap() - 2.75).abs() < 1e-15);
    }

    #[test]
    fn incomplete_or_irregular_sets_are_not_lattices() {
        let (mut xs, mut ys) = lattice_points();
        xs.pop();
        ys.pop();
        assert!(
            RegularLattice::detect(&xs, &ys).is_none(),
            "one point missing"
        );
        let xs = [0.0, 1.0, 3.0, 0.0, 1.0, 3.0];
        let ys = [0.0, 0.0, 0.0, 1.0, 1.0, 1.0];
        assert!(
            RegularLattice::detect(&xs, &ys).is_none(),
            "unequal lon spacing"
        );
        let xs = [0.0, 1.0, 0.0, 0.0];
        let ys = [0.0, 0.0, 1.0, 1.0];
        assert!(
            RegularLattice::detect(&xs, &ys).is_none(),
            "duplicate point"
        );
        // Printed coordinates with a little rounding are still regular (0.333… printed as 0.3333).
        let xs = [0.0, 0.3333, 0.6667, 1.0, 0.0, 0.3333, 0.6667, 1.0];
        let ys = [0.0, 0.0, 0.0, 0.0, 1.0, 1.0, 1.0, 1.0];
        assert!(RegularLattice::detect(&xs, &ys).is_some());
    }

    #[test]
    fn nearest_on_an_irregular_set() {
        // Hand answer. Points A(0,0), B(10,0), C(0,25) (metres). Nearest-other-point spacings:
        // A→B 10, B→A 10, C→A 25; median 10, limit 2·10 = 20 m (above the 1 m floor).
        // Query (4,1): A at √17 ≈ 4.12 → A. (6,0): B at 4 → B. (0,14): A at 14, C at 11 → C.
        // (30,0): B at 20 → B (on the limit). (0,60): C at 35 > 20 → outside.
        let pts = [[0.0, 0.0], [10.0, 0.0], [0.0, 25.0]];
        let q = [
            [4.0, 1.0],
            [6.0, 0.0],
            [0.0, 14.0],
            [30.0, 0.0],
            [0.0, 60.0],
        ];
        let (w, limit) = nearest(&pts, &q, 1.0);
        assert_eq!(limit, 20.0);
        assert_eq!(
            w,
            vec![
                Weights::One(0),
                Weights::One(1),
                Weights::One(2),
                Weights::One(1),
                Weights::Outside
            ]
        );
        // A single point has no spacing: the floor (one cell side) is the limit.
        let (w, limit) = nearest(&[[0.0, 0.0]], &[[3.0, 4.0], [30.0, 40.0]], 5.0);
        assert_eq!(limit, 5.0);
        assert_eq!(w, vec![Weights::One(0), Weights::Outside]);
    }
}
