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
}
