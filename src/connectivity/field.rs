//! A surface current field on the planning grid: one (u, v) per cell, interpolated bilinearly
//! between the centres of the lattice squares.
//!
//! # Units
//! Positions in the grid's projected metres; velocities in m/s (u eastward, v northward, taken
//! along the grid's x and y axes — in an azimuthal equal-area grid the axes turn away from
//! east and north by the meridian convergence, a few degrees at the edges of a regional grid,
//! which is below the accuracy of current products at planning-cell resolution).

use crate::grid::Grid;

/// Per-cell currents on a grid, with bilinear look-ups.
#[derive(Debug, Clone, Copy)]
pub struct CurrentField<'a> {
    grid: &'a Grid,
    u: &'a [f64],
    v: &'a [f64],
}

impl<'a> CurrentField<'a> {
    /// A field from per-cell eastward (`u`) and northward (`v`) components (m/s), one value
    /// per cell id.
    pub fn new(grid: &'a Grid, u: &'a [f64], v: &'a [f64]) -> Self {
        debug_assert_eq!(u.len(), grid.len());
        debug_assert_eq!(v.len(), grid.len());
        CurrentField { grid, u, v }
    }

    /// The grid the field lives on.
    pub fn grid(&self) -> &'a Grid {
        self.grid
    }

    /// The fastest current of any cell. Units: m/s.
    pub fn max_speed(&self) -> f64 {
        self.u
            .iter()
            .zip(self.v)
            .map(|(a, b)| a.hypot(*b))
            .filter(|s| s.is_finite())
            .fold(0.0, f64::max)
    }

    /// Velocity at a projected point (m/s): bilinear between the four lattice-square centres
    /// around it, using only those that hold a cell and renormalising their weights. Inside
    /// the sea this is plain bilinear interpolation (exact for fields linear in x and y); next
    /// to land or the grid's edge the missing corners drop out, so a uniform field stays
    /// uniform up to the coast. Zero where no corner holds a cell (deep in land).
    pub fn velocity(&self, xy: [f64; 2]) -> [f64; 2] {
        let g = self.grid;
        let gx = (xy[0] - g.origin[0]) / g.cell_size_m - 0.5;
        let gy = (xy[1] - g.origin[1]) / g.cell_size_m - 0.5;
        if !(gx.is_finite() && gy.is_finite()) {
            return [0.0, 0.0];
        }
        let (c0, r0) = (gx.floor(), gy.floor());
        let (fx, fy) = (gx - c0, gy - r0);
        let mut w_sum = 0.0;
        let mut uv = [0.0, 0.0];
        for (dc, dr, w) in [
            (0.0, 0.0, (1.0 - fx) * (1.0 - fy)),
            (1.0, 0.0, fx * (1.0 - fy)),
            (0.0, 1.0, (1.0 - fx) * fy),
            (1.0, 1.0, fx * fy),
        ] {
            let (c, r) = (c0 + dc, r0 + dr);
            if w <= 0.0 || c < 0.0 || r < 0.0 || c >= g.n_cols as f64 || r >= g.n_rows as f64 {
                continue;
            }
            if let Some(id) = g.cell_at(c as u32, r as u32) {
                w_sum += w;
                uv[0] += w * self.u[id as usize];
                uv[1] += w * self.v[id as usize];
            }
        }
        if w_sum > 0.0 {
            [uv[0] / w_sum, uv[1] / w_sum]
        } else {
            [0.0, 0.0]
        }
    }
}

/// The field laid out for the tracking loop: one `[u, v, sea]` node per lattice square, with a
/// ring of empty nodes around the lattice, so a bilinear look-up is four loads from two rows
/// and no bounds or land checks — `sea` is 1 where a cell holds the square, else 0 (and u, v
/// are 0 there); where all four are at sea (most of the sea) the bilinear coefficients are
/// kept ready. [`FieldLattice::velocity`] is [`CurrentField::velocity`] in this layout: the
/// missing corners drop out of Σw·u / Σw·sea exactly as they do there.
#[derive(Debug, Clone)]
pub struct FieldLattice {
    nodes: Vec<[f64; 4]>,
    /// Per node k, the bilinear coefficients of the square of centres with lower-left k when
    /// all four hold a cell: u = a + b·fx + c·fy + d·fx·fy as `[a, b, c, d]` for u, then v
    /// (one cache line; Σw = 1 there, so no renormalising division). NaN where not all four
    /// do, which tells the vector look-up (`super::lanes`) to take the careful way there.
    pub(super) full: Vec<[f64; 8]>,
    /// Whether node k's square of centres has all four corners at sea.
    is_full: Vec<bool>,
    /// Nodes per padded row (lattice columns + 2).
    pub(super) width: usize,
    /// Padded columns and rows minus one: the largest valid lower-left corner index + 1.
    pub(super) limit: [f64; 2],
    /// Projected position of the padded lattice's first square centre. Units: m.
    pub(super) base: [f64; 2],
    /// 1 / cell size. Units: 1/m.
    pub(super) inv_cell: f64,
}

impl FieldLattice {
    /// Lays out `field` (one pass over its grid's lattice).
    pub fn new(field: &CurrentField<'_>) -> Self {
        let g = field.grid;
        let (cols, rows) = (g.n_cols as usize, g.n_rows as usize);
        let width = cols + 2;
        let mut nodes = vec![[0.0; 4]; width * (rows + 2)];
        for r in 0..rows {
            for c in 0..cols {
                if let Some(id) = g.cell_at(c as u32, r as u32) {
                    let id = id as usize;
                    nodes[(r + 1) * width + c + 1] = [field.u[id], field.v[id], 1.0, 0.0];
                }
            }
        }
        let mut full = vec![[f64::NAN; 8]; nodes.len()];
        let mut is_full = vec![false; nodes.len()];
        for k in 0..nodes.len().saturating_sub(width + 1) {
            let (a, b, c, d) = (
                nodes[k],
                nodes[k + 1],
                nodes[k + width],
                nodes[k + width + 1],
            );
            if a[2] + b[2] + c[2] + d[2] == 4.0 {
                is_full[k] = true;
                for (i, o) in [(0, 0), (1, 4)] {
                    full[k][o..o + 4].copy_from_slice(&[
                        a[i],
                        b[i] - a[i],
                        c[i] - a[i],
                        d[i] - b[i] - c[i] + a[i],
                    ]);
                }
            }
        }
        FieldLattice {
            nodes,
            full,
            is_full,
            width,
            limit: [(cols + 1) as f64, (rows + 1) as f64],
            // Padded index p = lattice index + 1, so the centre of padded square 0 lies half
            // a cell before the lattice origin.
            base: [
                g.origin[0] - 0.5 * g.cell_size_m,
                g.origin[1] - 0.5 * g.cell_size_m,
            ],
            inv_cell: 1.0 / g.cell_size_m,
        }
    }

    /// Squares in the padded lattice.
    pub fn nodes(&self) -> usize {
        self.nodes.len()
    }

    /// Velocity at a projected point (m/s), as [`CurrentField::velocity`] (to rounding: the
    /// position is scaled by the reciprocal of the cell size).
    #[inline(always)]
    pub fn velocity(&self, x: f64, y: f64) -> [f64; 2] {
        let gx = (x - self.base[0]) * self.inv_cell;
        let gy = (y - self.base[1]) * self.inv_cell;
        // Written so that NaN falls outside too: no corner holds a cell out there.
        if !(gx >= 0.0 && gy >= 0.0 && gx < self.limit[0] && gy < self.limit[1]) {
            return [0.0, 0.0];
        }
        // Truncation is the floor here (both are ≥ 0), without a libm call; through i64,
        // which the processor converts to directly.
        let (c0, r0) = (gx as i64 as usize, gy as i64 as usize);
        let (fx, fy) = (gx - c0 as f64, gy - r0 as f64);
        let k = r0 * self.width + c0;
        if self.is_full[k] {
            let q = &self.full[k];
            let fxy = fx * fy;
            return [
                q[0] + q[1] * fx + q[2] * fy + q[3] * fxy,
                q[4] + q[5] * fx + q[6] * fy + q[7] * fxy,
            ];
        }
        let (a, b) = (self.nodes[k], self.nodes[k + 1]);
        let (c, d) = (self.nodes[k + self.width], self.nodes[k + self.width + 1]);
        let (w00, w10) = ((1.0 - fx) * (1.0 - fy), fx * (1.0 - fy));
        let (w01, w11) = ((1.0 - fx) * fy, fx * fy);
        let sea = w00 * a[2] + w10 * b[2] + w01 * c[2] + w11 * d[2];
        if sea <= 0.0 {
            return [0.0, 0.0];
        }
        let u = w00 * a[0] + w10 * b[0] + w01 * c[0] + w11 * d[0];
        let v = w00 * a[1] + w10 * b[1] + w01 * c[1] + w11 * d[1];
        [u / sea, v / sea]
    }
}

/// A 9 × 7 test grid of 1 km cells with a 3 × 2 block of land inside (shared by the tests
/// of the look-ups and of the tracking lanes).
#[cfg(test)]
pub(super) fn land_block_grid() -> Grid {
    use crate::grid::Crs;
    let mut grid =
        Grid::full_rectangle(Crs::auto_laea(10.0, 50.0), 1000.0, [-3000.0, 500.0], 9, 7).unwrap();
    grid.cells
        .retain(|c| !(3..6).contains(&c.col) || !(2..4).contains(&c.row));
    grid.lattice = vec![crate::grid::NO_CELL; 9 * 7];
    for (id, c) in grid.cells.iter().enumerate() {
        grid.lattice[(c.row * 9 + c.col) as usize] = id as u32;
    }
    grid
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;

    #[test]
    fn bilinear_reproduces_a_linear_field_and_a_uniform_one_at_the_edge() {
        // Bilinear interpolation is exact for functions linear in x and y (textbook property
        // of bilinear interpolation).
        let grid =
            Grid::full_rectangle(Crs::auto_laea(10.0, 50.0), 1000.0, [0.0, 0.0], 5, 4).unwrap();
        let u: Vec<f64> = grid.cells.iter().map(|c| 0.001 * c.centre[0]).collect();
        let v: Vec<f64> = grid
            .cells
            .iter()
            .map(|c| 2.0 - 0.0005 * c.centre[1])
            .collect();
        let f = CurrentField::new(&grid, &u, &v);
        let p = [2345.0, 1876.0];
        let got = f.velocity(p);
        assert!((got[0] - 2.345).abs() < 1e-12);
        assert!((got[1] - (2.0 - 0.938)).abs() < 1e-12);
        // A uniform field stays uniform in the outer half cell, where corners are missing.
        let one = vec![0.3; grid.len()];
        let f = CurrentField::new(&grid, &one, &one);
        assert_eq!(f.velocity([100.0, 3950.0]), [0.3, 0.3]);
    }
    #[test]
    fn the_lattice_layout_gives_the_reference_velocities() {
        // The tracking loop's layout against the plain look-up above (the reference): same
        // values to rounding everywhere — inside, next to land, in the outer half cell and
        // beyond the grid — on a grid with a land block and a non-linear field.
        let grid = land_block_grid();
        let u: Vec<f64> = grid
            .cells
            .iter()
            .map(|c| (c.centre[0] / 700.0).sin())
            .collect();
        let v: Vec<f64> = grid
            .cells
            .iter()
            .map(|c| (c.centre[1] / 900.0).cos())
            .collect();
        let f = CurrentField::new(&grid, &u, &v);
        let lat = FieldLattice::new(&f);
        let mut checked = 0;
        for i in -30..130 {
            for j in -30..100 {
                let p = [-3000.0 + 83.3 * i as f64, 500.0 + 81.7 * j as f64];
                let (want, got) = (f.velocity(p), lat.velocity(p[0], p[1]));
                for k in 0..2 {
                    assert!(
                        (want[k] - got[k]).abs() < 1e-12,
                        "{p:?}: {want:?} vs {got:?}"
                    );
                }
                checked += usize::from(want != [0.0, 0.0]);
            }
        }
        assert!(checked > 4000, "{checked}");
        assert_eq!(lat.velocity(f64::NAN, 0.0), [0.0, 0.0]);
    }
}
