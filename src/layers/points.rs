//! Interpolating scattered or gridded point values at cell centroids: bilinear on a regular
//! lattice (complete, or with points left out where there is land), with a coastal fallback
//! per cell; nearest point when the points do not lie on one lattice.

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

/// A coordinate may lie this share of a step off its lattice line and still count as on it:
/// room for coordinates printed to 4–5 significant digits (0.3333 for 1/3 is 1e-4 of a step).
const ON_LINE_TOLERANCE: f64 = 1e-2;

/// A lattice may have at most this many positions per point present: a quarter of the
/// positions filled is an ocean product over a mostly-land box, far sparser is scattered data
/// whose coordinates happen to be rounded (and would cost memory for nothing).
const MAX_POSITIONS_PER_POINT: usize = 16;

/// A least-squares plane needs points that are not all on one line: the determinant of the
/// normal matrix XᵀX (coordinates in lattice steps) must exceed this share of n³ for n points.
/// Three corners of one lattice square give det = 1 against n³ = 27.
const MIN_PLANE_DETERMINANT: f64 = 1e-6;

/// How one cell's value is formed from data rows.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Weights {
    /// The cell is outside the data.
    Outside,
    /// The value of one row (nearest point).
    One(u32),
    /// Σ wₖ·value(rowₖ) (bilinear: weights are non-negative and sum to 1).
    Four([u32; 4], [f64; 4]),
    /// Σ wₖ·value(rowₖ) over a few rows (a plane fitted through the points present; weights
    /// sum to 1 but may be negative, since the plane extrapolates).
    Many(Box<[(u32, f64)]>),
}

impl Weights {
    /// The cell's value from one column, `None` when outside the data.
    pub(crate) fn apply(&self, values: &[f64]) -> Option<f64> {
        match self {
            Weights::Outside => None,
            Weights::One(i) => Some(values[*i as usize]),
            Weights::Four(i, w) => Some((0..4).map(|k| w[k] * values[i[k] as usize]).sum()),
            Weights::Many(list) => Some(list.iter().map(|&(i, w)| w * values[i as usize]).sum()),
        }
    }
}

/// Which rule formed a cell's value: what `check`, the run header and summary.json count.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Method {
    /// Bilinear on the four surrounding lattice points.
    Bilinear,
    /// Some surrounding points are absent (land): a plane through the points present.
    Coastal,
    /// Nearest present point (within one lattice step, or by distance on scattered points).
    Nearest,
    /// No data near the cell: the layer's `missing` rule applies.
    Missing,
}

/// A regular lattice `x0 + i·dx`, `y0 + j·dy` (`nx × ny` positions), each position holding at
/// most one point; positions without a point are absent (land in an ocean product).
#[derive(Debug, Clone)]
pub(crate) struct RegularLattice {
    x0: f64,
    dx: f64,
    nx: usize,
    y0: f64,
    dy: f64,
    ny: usize,
    /// Row index of the point at `(i, j)`, stored at `j * nx + i`; `u32::MAX` when absent.
    rows: Vec<u32>,
}

/// Why a point set is not one regular lattice (the layer then falls back to nearest point,
/// and says so).
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum NotLattice {
    /// Every point has the same coordinate on this axis.
    OneLine(&'static str),
    /// A coordinate lies off every line of the axis's spacing.
    OffLine {
        /// `x` or `y`.
        axis: &'static str,
        /// The coordinate.
        value: f64,
        /// The spacing inferred from the closest pair of lines.
        step: f64,
    },
    /// Two points fall on one lattice position (rows, 0-based).
    Duplicate(usize, usize),
    /// The lattice would have far more positions than there are points.
    TooSparse {
        /// Lattice positions.
        positions: usize,
        /// Points present.
        points: usize,
    },
}

impl NotLattice {
    /// A sentence for messages; `line` maps a 0-based row to its line in the file.
    pub(crate) fn describe(&self, line: &dyn Fn(usize) -> String) -> String {
        match self {
            NotLattice::OneLine(axis) => format!("all points share one {axis} coordinate"),
            NotLattice::OffLine { axis, value, step } => format!(
                "{axis} = {value} is off the regular lattice of step {step} that the closest {axis} values suggest"
            ),
            NotLattice::Duplicate(a, b) => {
                format!("{} and {} are the same lattice point", line(*a), line(*b))
            }
            NotLattice::TooSparse { positions, points } => format!(
                "{points} points would fill only {positions} lattice positions sparsely (fewer than 1 in {MAX_POSITIONS_PER_POINT})"
            ),
        }
    }
}

/// Start, step and number of lines of an axis whose distinct values lie on equally spaced lines,
/// some of which may be empty. The step is set by the closest pair of distinct values and then
/// refined over the whole range.
fn regular_axis(values: &[f64], axis: &'static str) -> Result<(f64, f64, usize), NotLattice> {
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    let (Some(&first), Some(&last)) = (v.first(), v.last()) else {
        return Err(NotLattice::OneLine(axis));
    };
    let range = last - first;
    if range.is_nan() || range <= 0.0 {
        return Err(NotLattice::OneLine(axis));
    }
    let mut lines = vec![first];
    for &x in &v[1..] {
        if x - lines[lines.len() - 1] > range * SAME_LINE {
            lines.push(x);
        }
    }
    let closest = lines
        .windows(2)
        .map(|w| w[1] - w[0])
        .fold(f64::INFINITY, f64::min);
    let steps = (range / closest).round().max(1.0);
    if steps > (values.len() * MAX_POSITIONS_PER_POINT) as f64 {
        return Err(NotLattice::TooSparse {
            positions: steps as usize + 1,
            points: values.len(),
        });
    }
    let step = range / steps;
    for &x in &lines {
        let f = (x - first) / step;
        if (f - f.round()).abs() > ON_LINE_TOLERANCE {
            return Err(NotLattice::OffLine {
                axis,
                value: x,
                step,
            });
        }
    }
    Ok((first, step, steps as usize + 1))
}

impl RegularLattice {
    /// Fits a regular lattice to `(xs, ys)`: equally spaced lines on each axis (the closest pair
    /// of values sets the step; every value within 1% of a step of its line), at least 2 × 2
    /// positions, each position holding at most one point. Positions may be empty.
    pub(crate) fn fit(xs: &[f64], ys: &[f64]) -> Result<RegularLattice, NotLattice> {
        let (x0, dx, nx) = regular_axis(xs, "x")?;
        let (y0, dy, ny) = regular_axis(ys, "y")?;
        let positions = nx.saturating_mul(ny);
        if positions > xs.len().saturating_mul(MAX_POSITIONS_PER_POINT) {
            return Err(NotLattice::TooSparse {
                positions,
                points: xs.len(),
            });
        }
        let mut rows = vec![u32::MAX; positions];
        for (k, (&x, &y)) in xs.iter().zip(ys).enumerate() {
            let i = (((x - x0) / dx).round() as usize).min(nx - 1);
            let j = (((y - y0) / dy).round() as usize).min(ny - 1);
            let slot = &mut rows[j * nx + i];
            if *slot != u32::MAX {
                return Err(NotLattice::Duplicate(*slot as usize, k));
            }
            *slot = k as u32;
        }
        Ok(RegularLattice {
            x0,
            dx,
            nx,
            y0,
            dy,
            ny,
            rows,
        })
    }

    /// A lattice from its parts: `nx × ny` positions at `x0 + i·dx`, `y0 + j·dy` (steps may be
    /// negative), `rows[j·nx + i]` the data row there or `u32::MAX` when absent.
    pub(crate) fn from_parts(
        x0: f64,
        dx: f64,
        nx: usize,
        y0: f64,
        dy: f64,
        ny: usize,
        rows: Vec<u32>,
    ) -> RegularLattice {
        RegularLattice {
            x0,
            dx,
            nx,
            y0,
            dy,
            ny,
            rows,
        }
    }

    /// Number of lattice positions and of those holding a point.
    pub(crate) fn positions(&self) -> (usize, usize) {
        let present = self.rows.iter().filter(|&&r| r != u32::MAX).count();
        (self.rows.len(), present)
    }

    /// The lattice steps `(dx, dy)` in its own coordinates.
    pub(crate) fn steps(&self) -> (f64, f64) {
        (self.dx, self.dy)
    }

    fn row(&self, i: i64, j: i64) -> Option<u32> {
        if i < 0 || j < 0 || i >= self.nx as i64 || j >= self.ny as i64 {
            return None;
        }
        let r = self.rows[j as usize * self.nx + i as usize];
        (r != u32::MAX).then_some(r)
    }

    /// Weights at `(x, y)` in the lattice's coordinates and the rule that formed them:
    ///
    /// 1. inside the lattice with all four surrounding points present: bilinear, weights
    ///    (1−t)(1−u), t(1−u), (1−t)u, tu (Press et al., Numerical Recipes, §3.6);
    /// 2. some of the four absent (the coast), or the cell up to one step outside the
    ///    lattice's extent: the plane through the three corners present, or else the
    ///    least-squares plane through the points present among the four and the ring one step
    ///    beyond them (needs three not on one line). Like bilinear, this reproduces a field
    ///    linear in x and y exactly, so a smooth field stays smooth up to the coast;
    /// 3. otherwise the nearest present point among those sixteen (distance in lattice steps);
    /// 4. otherwise `Outside` (the layer's `missing` rule).
    pub(crate) fn weights_at(&self, x: f64, y: f64) -> (Weights, Method) {
        // Cells exactly on the outer lattice line are inside; allow for round-off there.
        const EDGE: f64 = 1e-9;
        let (fmax, gmax) = ((self.nx - 1) as f64, (self.ny - 1) as f64);
        let snap = |v: f64, last: f64| {
            if v.abs() < EDGE {
                0.0
            } else if (v - last).abs() < EDGE {
                last
            } else {
                v
            }
        };
        let f = snap((x - self.x0) / self.dx, fmax);
        let g = snap((y - self.y0) / self.dy, gmax);
        if !(f.is_finite() && g.is_finite()) {
            return (Weights::Outside, Method::Missing);
        }
        if f < -1.0 - EDGE || f > fmax + 1.0 + EDGE || g < -1.0 - EDGE || g > gmax + 1.0 + EDGE {
            return (Weights::Outside, Method::Missing);
        }
        // The enclosing lattice square (i, j)–(i+1, j+1); on the outer line, the last square.
        let square = |v: f64, n: usize| -> i64 {
            if v == (n - 1) as f64 {
                n as i64 - 2
            } else {
                v.floor() as i64
            }
        };
        let (i, j) = (square(f, self.nx), square(g, self.ny));
        let corners = [(i, j), (i + 1, j), (i, j + 1), (i + 1, j + 1)];
        let present: Vec<(i64, i64, u32)> = corners
            .iter()
            .filter_map(|&(a, b)| self.row(a, b).map(|r| (a, b, r)))
            .collect();
        if present.len() == 4 {
            let (t, u) = (f - i as f64, g - j as f64);
            let rows = [present[0].2, present[1].2, present[2].2, present[3].2];
            return (
                Weights::Four(
                    rows,
                    [(1.0 - t) * (1.0 - u), t * (1.0 - u), (1.0 - t) * u, t * u],
                ),
                Method::Bilinear,
            );
        }
        let mut ring = Vec::new();
        for b in j - 1..=j + 2 {
            for a in i - 1..=i + 2 {
                if let Some(r) = self.row(a, b) {
                    ring.push((a, b, r));
                }
            }
        }
        let points = if present.len() == 3 { &present } else { &ring };
        if let Some(w) = plane_weights(points, f, g) {
            return (Weights::Many(w.into_boxed_slice()), Method::Coastal);
        }
        let nearest = ring.iter().min_by(|p, q| {
            let d = |&(a, b, _): &(i64, i64, u32)| (a as f64 - f).powi(2) + (b as f64 - g).powi(2);
            d(p).total_cmp(&d(q)).then(p.2.cmp(&q.2))
        });
        match nearest {
            Some(&(_, _, r)) => (Weights::One(r), Method::Nearest),
            None => (Weights::Outside, Method::Missing),
        }
    }

    /// How far `x` is from the lattice's first-axis extent: 0 inside, 1 within one step of it
    /// (still served by the nearest-point fallback), 2 farther.
    pub(crate) fn x_reach(&self, x: f64) -> u8 {
        let f = (x - self.x0) / self.dx;
        let last = (self.nx - 1) as f64;
        if (-1e-9..=last + 1e-9).contains(&f) {
            0
        } else if (-1.0 - 1e-9..=last + 1.0 + 1e-9).contains(&f) {
            1
        } else {
            2
        }
    }
}

/// Weights of the least-squares plane v ≈ α + β·(a − f) + γ·(b − g) through `points`
/// (lattice positions with their rows), evaluated at `(f, g)`: α = e₁ᵀ(XᵀX)⁻¹Xᵀv, so row k
/// weighs cᵀxₖ with c = (XᵀX)⁻¹e₁ (normal equations; e.g. Press et al., Numerical Recipes,
/// §15.4). With exactly three points this is the plane through them. `None` with fewer than
/// three points or all on one line.
fn plane_weights(points: &[(i64, i64, u32)], f: f64, g: f64) -> Option<Vec<(u32, f64)>> {
    if points.len() < 3 {
        return None;
    }
    let xs: Vec<[f64; 3]> = points
        .iter()
        .map(|&(a, b, _)| [1.0, a as f64 - f, b as f64 - g])
        .collect();
    let mut m = [[0.0; 3]; 3];
    for x in &xs {
        for r in 0..3 {
            for c in 0..3 {
                m[r][c] += x[r] * x[c];
            }
        }
    }
    // First column of the inverse by cofactors: (M⁻¹)ᵣ₀ = C₀ᵣ / det (M symmetric).
    let cof =
        |r0: usize, r1: usize, c0: usize, c1: usize| m[r0][c0] * m[r1][c1] - m[r0][c1] * m[r1][c0];
    let c00 = cof(1, 2, 1, 2);
    let c01 = -cof(1, 2, 0, 2);
    let c02 = cof(1, 2, 0, 1);
    let det = m[0][0] * c00 + m[0][1] * c01 + m[0][2] * c02;
    if det.abs() <= MIN_PLANE_DETERMINANT * m[0][0].powi(3) {
        return None;
    }
    let c = [c00 / det, c01 / det, c02 / det];
    Some(
        points
            .iter()
            .zip(&xs)
            .map(|(&(_, _, r), x)| (r, c[0] * x[0] + c[1] * x[1] + c[2] * x[2]))
            .collect(),
    )
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
        let lat = RegularLattice::fit(&xs, &ys).expect("a complete regular lattice");
        assert_eq!(lat.positions(), (20, 20));
        for &(x, y) in &[
            (10.0, 50.0),
            (10.3, 50.2),
            (12.99, 51.7),
            (13.0, 52.0),
            (11.5, 51.25),
        ] {
            let (w, m) = lat.weights_at(x, y);
            assert_eq!(m, Method::Bilinear);
            let got = w.apply(&v).unwrap();
            assert!(
                (got - f(x, y)).abs() < 1e-12,
                "({x}, {y}): {got} vs {}",
                f(x, y)
            );
        }
        // Beyond one step of the extent: no data. Within one step: the plane through the
        // edge points, exact for this plane.
        assert_eq!(lat.weights_at(8.99, 51.0).1, Method::Missing);
        assert_eq!(lat.weights_at(11.0, 52.51).1, Method::Missing);
        let (w, m) = lat.weights_at(9.7, 51.1);
        assert_eq!(m, Method::Coastal);
        assert!((w.apply(&v).unwrap() - f(9.7, 51.1)).abs() < 1e-12);
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
        let lat = RegularLattice::fit(&xs, &ys).unwrap();
        assert!((lat.weights_at(0.25, 0.75).0.apply(&v).unwrap() - 2.9375).abs() < 1e-15);
        assert!((lat.weights_at(0.5, 0.5).0.apply(&v).unwrap() - 2.75).abs() < 1e-15);
    }

    #[test]
    fn coastal_plane_by_hand() {
        // The same square with v(1,1) absent (land) and v(0,0)=1, v(1,0)=2, v(0,1)=3: the plane
        // through them is v = 1 + t + 2u (by hand), so (0.25, 0.75) → 2.75 and the absent
        // corner (1, 1) itself → 4.
        let xs = [0.0, 1.0, 0.0];
        let ys = [0.0, 0.0, 1.0];
        let v = [1.0, 2.0, 3.0];
        let lat = RegularLattice::fit(&xs, &ys).unwrap();
        assert_eq!(lat.positions(), (4, 3));
        for (x, y, want) in [(0.25, 0.75, 2.75), (1.0, 1.0, 4.0), (0.0, 0.0, 1.0)] {
            let (w, m) = lat.weights_at(x, y);
            assert_eq!(m, Method::Coastal);
            assert!((w.apply(&v).unwrap() - want).abs() < 1e-12, "({x}, {y})");
        }
        // Two points on one line cannot carry a plane: nearest point. By hand: the y step is
        // 2 (the only pair of y values), so (0.9, 0.2) is at lattice (0.9, 0.1), 0.02 steps²
        // from position (1, 0) and 0.82 from (0, 0); (3, 2) is outside the ring.
        let lat = RegularLattice::fit(&[0.0, 1.0, 3.0], &[0.0, 0.0, 2.0]).unwrap();
        let (w, m) = lat.weights_at(0.9, 0.2);
        assert_eq!(m, Method::Nearest);
        assert_eq!(w, Weights::One(1));
    }

    /// A 30 × 20 lattice at lon 140.0 + 0.25·i, lat −40.0 + 0.25·j with a "land" blob of
    /// points removed (the points whose lattice position falls in an ellipse), scrambled.
    fn coast(with_land_removed: bool) -> (Vec<f64>, Vec<f64>) {
        let mut pts = Vec::new();
        for j in 0..20 {
            for i in 0..30 {
                let land =
                    ((i as f64 - 12.0) / 6.3).powi(2) + ((j as f64 - 9.0) / 4.1).powi(2) < 1.0;
                if !(with_land_removed && land) {
                    pts.push((140.0 + 0.25 * i as f64, -40.0 + 0.25 * j as f64));
                }
            }
        }
        pts.reverse();
        pts.into_iter().unzip()
    }

    #[test]
    fn land_points_left_out_keep_bilinear_where_corners_exist() {
        // Requirement: a complete lattice and the same lattice with land points deleted give
        // identical values wherever the four corners are present; elsewhere, on a plane
        // v = a + b·lon + c·lat, the coastal plane fit is exact (to round-off, 1e-9 here), and
        // the nearest point (at most two steps away on each axis) is within
        // 2(|b|·dx + |c|·dy) (triangle inequality, our own bound).
        let f = |x: f64, y: f64| 11.0 + 0.8 * x - 1.3 * y;
        let (cx, cy) = coast(false);
        let (hx, hy) = coast(true);
        assert!(
            hx.len() < cx.len() && hx.len() > cx.len() / 2,
            "{}",
            hx.len()
        );
        let full = RegularLattice::fit(&cx, &cy).unwrap();
        let holey = RegularLattice::fit(&hx, &hy).expect("a lattice with holes is still one");
        assert_eq!(holey.positions(), (600, hx.len()));
        let cv: Vec<f64> = cx.iter().zip(&cy).map(|(&x, &y)| f(x, y)).collect();
        let hv: Vec<f64> = hx.iter().zip(&hy).map(|(&x, &y)| f(x, y)).collect();
        let bound = 0.8 * 0.25 + 1.3 * 0.25;
        let mut seen = [0usize; 4];
        for q in 0..2000 {
            // A deterministic scatter of query points over the lattice's extent.
            let x = 140.0 + 7.25 * ((q as f64 * 0.618_034) % 1.0);
            let y = -40.0 + 4.75 * ((q as f64 * 0.414_214) % 1.0);
            let a = full.weights_at(x, y).0.apply(&cv).unwrap();
            let (w, m) = holey.weights_at(x, y);
            seen[m as usize] += 1;
            match m {
                Method::Bilinear => assert_eq!(w.apply(&hv), Some(a), "({x}, {y})"),
                Method::Coastal => assert!((w.apply(&hv).unwrap() - f(x, y)).abs() < 1e-9),
                Method::Nearest => {
                    assert!((w.apply(&hv).unwrap() - f(x, y)).abs() <= 2.0 * bound + 1e-12)
                }
                Method::Missing => {}
            }
        }
        // Every rule was exercised (the blob is larger than one lattice square).
        assert!(seen[0] > 0 && seen[1] > 0 && seen[3] > 0, "{seen:?}");
    }

    #[test]
    fn sets_that_are_not_one_lattice_say_why() {
        let (mut xs, mut ys) = lattice_points();
        xs.pop();
        ys.pop();
        assert!(
            RegularLattice::fit(&xs, &ys).is_ok(),
            "one point missing is still a lattice"
        );
        // The closest pair (0, 1) suggests a step of 1, refined to 2.5 / 3 over the range;
        // 1 is then a fifth of a step off its line.
        let xs = [0.0, 1.0, 2.5, 0.0, 1.0, 2.5];
        let ys = [0.0, 0.0, 0.0, 1.0, 1.0, 1.0];
        match RegularLattice::fit(&xs, &ys) {
            Err(NotLattice::OffLine {
                axis: "x",
                value,
                step,
            }) => {
                assert_eq!(value, 1.0);
                assert!((step - 2.5 / 3.0).abs() < 1e-12);
            }
            other => panic!("{other:?}"),
        }
        // Spacing 0, 1, 3 is a lattice of step 1 with the line at 2 empty.
        let xs = [0.0, 1.0, 3.0, 0.0, 1.0, 3.0];
        assert_eq!(RegularLattice::fit(&xs, &ys).unwrap().positions(), (8, 6));
        let xs = [0.0, 1.0, 0.0, 0.0];
        let ys = [0.0, 0.0, 1.0, 1.0];
        assert_eq!(
            RegularLattice::fit(&xs, &ys).unwrap_err(),
            NotLattice::Duplicate(2, 3)
        );
        assert_eq!(
            RegularLattice::fit(&[1.0, 1.0], &[0.0, 1.0]).unwrap_err(),
            NotLattice::OneLine("x")
        );
        // Scattered stations whose closest pair is 1e-3 of the range apart.
        let xs = [0.0, 0.001, 0.37, 0.61, 1.0];
        let ys = [0.0, 0.5, 0.2, 0.9, 1.0];
        assert!(RegularLattice::fit(&xs, &ys).is_err());
        // Printed coordinates with a little rounding are still regular (0.333… printed as 0.3333).
        let xs = [0.0, 0.3333, 0.6667, 1.0, 0.0, 0.3333, 0.6667, 1.0];
        let ys = [0.0, 0.0, 0.0, 0.0, 1.0, 1.0, 1.0, 1.0];
        assert!(RegularLattice::fit(&xs, &ys).is_ok());
        let msg = NotLattice::Duplicate(2, 3).describe(&|r| format!("line {}", r + 2));
        assert_eq!(msg, "line 4 and line 5 are the same lattice point");
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
