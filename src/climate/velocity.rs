//! Climate velocity by the gradient method (Loarie et al. 2009, Nature 462:1052; Burrows et
//! al. 2011, Science 334:652): the speed at which isotherms move over the sea surface,
//! velocity = temporal trend (°C/yr) ÷ spatial gradient (°C/km), pointing down the gradient
//! (toward cooler water) when the sea warms.
//!
//! Distances are taken on the grid itself: cells are squares of `cell_size_m` in an
//! equal-area projection, so the east–west and north–south differences need no cos(lat)
//! correction. For a Lambert azimuthal equal-area grid centred on the region the grid
//! kilometre differs from a ground kilometre by the projection's scale factor, cos(c/2) along
//! and 1/cos(c/2) across the radius at angular distance c from the centre (Snyder 1987,
//! USGS Prof. Paper 1395, p. 182): under 0.4 % within 1 000 km of the centre.

use super::stats::linear_trend;
use super::{check_dense, ClimateError};
use crate::grid::{Grid, Projector};
use rayon::prelude::*;

/// Settings of the gradient-method velocity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VelocityParams {
    /// Smallest spatial gradient used as the divisor, so flat water gets a large but finite
    /// speed. Units: °C/km. Burrows et al. 2011 floor the gradient for the same reason; the
    /// default 0.0005 °C/km is of the order used there (from memory, not confirmed). With a
    /// trend of 0.02 °C/yr it caps speeds at 40 km/yr.
    pub min_gradient_c_per_km: f64,
}

impl Default for VelocityParams {
    fn default() -> Self {
        VelocityParams {
            min_gradient_c_per_km: 0.0005,
        }
    }
}

/// Climate velocity of one scenario, one value per cell id. `NaN` marks cells without a full,
/// finite temperature series (or, for the gradient, without a usable neighbour).
#[derive(Debug, Clone, PartialEq)]
pub struct Velocity {
    /// Least-squares temperature trend over the years. Units: °C/yr.
    pub trend_c_per_yr: Vec<f64>,
    /// Spatial gradient of the period-mean temperature in grid axes `[east, north]` (grid
    /// north, not true north). Units: °C/km.
    pub gradient_xy: Vec<[f64; 2]>,
    /// Magnitude of the gradient before the floor. Units: °C/km.
    pub gradient_c_per_km: Vec<f64>,
    /// |trend| ÷ max(|gradient|, floor). Units: km/yr.
    pub speed_km_per_yr: Vec<f64>,
    /// Direction the isotherms move, degrees clockwise from true north (0–360): down the
    /// gradient when warming, up it when cooling. `NaN` where the direction is undefined (zero
    /// gradient or zero trend) and, on purpose, where the gradient is below the floor: there
    /// the direction is set by noise in nearly flat water and is not reported.
    pub bearing_deg: Vec<f64>,
    /// True where the gradient was below the floor (the speed is then trend ÷ floor, a cap).
    pub floored: Vec<bool>,
    /// The velocity vector in grid axes `[east, north]`, used to trace trajectories on the
    /// grid. `[0, 0]` where the direction is undefined. Units: km/yr.
    pub grid_velocity: Vec<[f64; 2]>,
}

/// Spatial gradient of a per-cell field in grid axes `[east, north]`. Units: field units/km.
///
/// The 3×3 window of Burrows et al. 2011, as a weighted least-squares plane
/// T ≈ a + gₓ·Δx + g_y·Δy through the window's cells with weights (1, 2, 1) ⊗ (1, 2, 1)
/// (south/centre/north row × west/centre/east column), Δx, Δy the offsets (km) of each cell's
/// sea-part centroid from the centre cell's. On a window of full cells this is exactly their
/// scheme, (Σ wᵣ(T_E − T_W))/(2Δ·Σ wᵣ) east–west and likewise north–south (the weighted normal
/// equations separate on the symmetric 3×3 design). Cells missing from the window (land,
/// outside the grid, non-finite value) are left out; because the fit uses the true centroid
/// positions, a linear field gives its exact gradient next to the coast and at the region's
/// edge, where clipped cells' centroids are off their square centres. Where the cells present
/// lie on one line (a channel one cell wide) the gradient along it is that line's weighted
/// slope and across it 0. `None` where the cell's own value is missing or it has no usable
/// neighbour.
pub fn spatial_gradient(grid: &Grid, field: &[f64]) -> Result<Vec<Option<[f64; 2]>>, ClimateError> {
    check_dense("field for the spatial gradient", field, grid.len())?;
    let cell = |col: i64, row: i64| -> Option<(usize, f64)> {
        if col < 0 || row < 0 {
            return None;
        }
        let id = grid.cell_at(col as u32, row as u32)? as usize;
        let v = field[id];
        v.is_finite().then_some((id, v))
    };
    const WEIGHTS: [(i64, f64); 3] = [(-1, 1.0), (0, 2.0), (1, 1.0)];
    let spacing_km = grid.cell_size_m / 1000.0;
    let out = (0..grid.len())
        .into_par_iter()
        .map(|id| {
            if !field[id].is_finite() {
                return None;
            }
            let (c, r) = (grid.cells[id].col as i64, grid.cells[id].row as i64);
            let centre = grid.cells[id].centre;
            // Weighted sums for the normal equations of (a, gx, gy), offsets in km.
            let mut m = [[0.0f64; 3]; 3];
            let mut rhs = [0.0f64; 3];
            let mut neighbours = 0;
            let mut vmax = 0.0f64;
            for (dr, wr) in WEIGHTS {
                for (dc, wc) in WEIGHTS {
                    let Some((k, v)) = cell(c + dc, r + dr) else {
                        continue;
                    };
                    if k != id {
                        neighbours += 1;
                    }
                    vmax = vmax.max(v.abs());
                    let p = grid.cells[k].centre;
                    let x = [
                        1.0,
                        (p[0] - centre[0]) / 1000.0,
                        (p[1] - centre[1]) / 1000.0,
                    ];
                    let w = wr * wc;
                    for i in 0..3 {
                        rhs[i] += w * x[i] * v;
                        for j in 0..3 {
                            m[i][j] += w * x[i] * x[j];
                        }
                    }
                }
            }
            if neighbours == 0 {
                return None;
            }
            let g = solve_plane(&m, &rhs).unwrap_or_else(|| line_slope(&m, &rhs));
            // Components at the round-off of the values are zero: a symmetric field gives an
            // exact 0 (no direction), not 1e-17 pointing anywhere.
            let noise = 1e-12 * vmax / spacing_km;
            Some(g.map(|x| if x.abs() <= noise { 0.0 } else { x }))
        })
        .collect();
    Ok(out)
}

/// (gx, gy) of the weighted plane fit from its normal equations M·(a, gx, gy) = rhs, by
/// Cramer's rule; `None` when the cells lie on one line (M singular to round-off).
fn solve_plane(m: &[[f64; 3]; 3], rhs: &[f64; 3]) -> Option<[f64; 2]> {
    let det3 = |a: &[[f64; 3]; 3]| {
        a[0][0] * (a[1][1] * a[2][2] - a[1][2] * a[2][1])
            - a[0][1] * (a[1][0] * a[2][2] - a[1][2] * a[2][0])
            + a[0][2] * (a[1][0] * a[2][1] - a[1][1] * a[2][0])
    };
    let det = det3(m);
    // Scale: the weight total times the spread of offsets squared, twice.
    let scale = m[0][0] * (m[1][1] + m[2][2]).powi(2);
    // Also catches NaN: a NaN determinant fails the comparison.
    if det.abs().partial_cmp(&(1e-9 * scale)) != Some(std::cmp::Ordering::Greater) {
        return None;
    }
    let with = |col: usize| {
        let mut a = *m;
        for i in 0..3 {
            a[i][col] = rhs[i];
        }
        det3(&a)
    };
    Some([with(1) / det, with(2) / det])
}

/// Gradient of cells on one line: the weighted least-squares slope along the line's
/// direction (from the offsets' weighted covariance), 0 across it.
fn line_slope(m: &[[f64; 3]; 3], rhs: &[f64; 3]) -> [f64; 2] {
    let w = m[0][0];
    let (mx, my, mv) = (m[0][1] / w, m[0][2] / w, rhs[0] / w);
    let sxx = m[1][1] / w - mx * mx;
    let syy = m[2][2] / w - my * my;
    let sxy = m[1][2] / w - mx * my;
    let sxv = rhs[1] / w - mx * mv;
    let syv = rhs[2] / w - my * mv;
    let len2 = sxx + syy;
    if len2.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
        return [0.0, 0.0];
    }
    // Unit direction of the line: the principal axis of the offsets (the larger variance).
    let (ux, uy) = if sxx >= syy {
        let n = (sxx * sxx + sxy * sxy).sqrt();
        (sxx / n, sxy / n)
    } else {
        let n = (sxy * sxy + syy * syy).sqrt();
        (sxy / n, syy / n)
    };
    let slope = (ux * sxv + uy * syv) / len2;
    [slope * ux, slope * uy]
}

/// True-north bearing (degrees clockwise, 0–360) of the ground direction that the grid
/// direction `dir` (`[east, north]` in grid axes) takes at projected point `xy`.
///
/// Grid north differs from true north by the meridian convergence of the projection, which
/// grows away from a LAEA grid's central meridian. The point is stepped ±50 m along `dir`,
/// both ends are unprojected, and the azimuth is atan2(Δλ·cosφ·N, Δφ·M) with the WGS84
/// meridian (M) and prime-vertical (N) radii of curvature (Snyder 1987, p. 24–25): exact for
/// an infinitesimal step, in any projection.
pub fn ground_bearing_deg(
    projector: &Projector,
    xy: [f64; 2],
    dir: [f64; 2],
) -> Result<f64, ClimateError> {
    let len = dir[0].hypot(dir[1]);
    if !len.is_finite() || len <= 0.0 {
        return Err(ClimateError::Invalid(format!(
            "a bearing needs a non-zero, finite direction (got [{}, {}])",
            dir[0], dir[1]
        )));
    }
    const STEP_M: f64 = 50.0;
    let (ux, uy) = (dir[0] / len * STEP_M, dir[1] / len * STEP_M);
    let a = projector.to_lonlat(xy[0] - ux, xy[1] - uy)?;
    let b = projector.to_lonlat(xy[0] + ux, xy[1] + uy)?;
    let mut dlon = b[0] - a[0];
    if dlon > 180.0 {
        dlon -= 360.0;
    } else if dlon < -180.0 {
        dlon += 360.0;
    }
    let phi = (0.5 * (a[1] + b[1])).to_radians();
    // WGS84 (NIMA TR8350.2): a = 6 378 137 m, f = 1/298.257223563.
    let e2 = {
        let f = 1.0 / 298.257_223_563;
        f * (2.0 - f)
    };
    let w = 1.0 - e2 * phi.sin().powi(2);
    let m = (1.0 - e2) / w.powf(1.5); // radii over a; only their ratio matters here
    let n = 1.0 / w.sqrt();
    let east = dlon.to_radians() * phi.cos() * n;
    let north = (b[1] - a[1]).to_radians() * m;
    Ok(east.atan2(north).to_degrees().rem_euclid(360.0))
}

/// Climate velocity of one scenario by the gradient method (Loarie et al. 2009; Burrows et al.
/// 2011).
///
/// `temperature[k][cell]` is the sea temperature (°C) of `years[k]`; one vector per year, one
/// value per cell id; non-finite values mark missing data. Per cell: the trend is the
/// least-squares slope over the years (°C/yr); the gradient ([`spatial_gradient`]) is taken
/// on the period-mean temperature, as Loarie et al. 2009 use the mean climate of the period;
/// speed = |trend| ÷ max(|gradient|, floor) (km/yr); the vector points down the gradient when
/// warming and up it when cooling, and its bearing is corrected to true north
/// ([`ground_bearing_deg`]). Cells with any missing year have no velocity (`NaN`).
pub fn climate_velocity(
    grid: &Grid,
    years: &[i32],
    temperature: &[Vec<f64>],
    params: &VelocityParams,
) -> Result<Velocity, ClimateError> {
    if temperature.len() != years.len() {
        return Err(ClimateError::Length {
            what: "temperature layers (one per year)".into(),
            expected: years.len(),
            got: temperature.len(),
        });
    }
    if years.len() < 2 || years.windows(2).any(|w| w[1] <= w[0]) {
        return Err(ClimateError::Invalid(format!(
            "a temperature trend needs at least two years in strictly ascending order (got {years:?})"
        )));
    }
    let floor = params.min_gradient_c_per_km;
    if !(floor > 0.0 && floor.is_finite()) {
        return Err(ClimateError::Parameter {
            name: "min_gradient_c_per_km".into(),
            value: floor,
            expected: "a positive number of °C/km, e.g. 0.0005".into(),
        });
    }
    for (k, layer) in temperature.iter().enumerate() {
        check_dense(
            &format!("temperature of year {}", years[k]),
            layer,
            grid.len(),
        )?;
    }
    let t: Vec<f64> = years.iter().map(|&y| y as f64).collect();
    let (trend, mean): (Vec<f64>, Vec<f64>) = (0..grid.len())
        .into_par_iter()
        .map(|id| {
            let series: Vec<f64> = temperature.iter().map(|layer| layer[id]).collect();
            match linear_trend(&t, &series) {
                Some(s) => (s, series.iter().sum::<f64>() / series.len() as f64),
                None => (f64::NAN, f64::NAN),
            }
        })
        .unzip();
    let gradient = spatial_gradient(grid, &mean)?;
    let nan2 = [f64::NAN, f64::NAN];
    let mut gradient_xy = vec![nan2; grid.len()];
    let mut gradient_c_per_km = vec![f64::NAN; grid.len()];
    let mut speed = vec![f64::NAN; grid.len()];
    let mut grid_velocity = vec![nan2; grid.len()];
    let mut floored = vec![false; grid.len()];
    for id in 0..grid.len() {
        let Some(g) = gradient[id] else { continue };
        let magnitude = g[0].hypot(g[1]);
        gradient_xy[id] = g;
        gradient_c_per_km[id] = magnitude;
        let s = trend[id].abs() / magnitude.max(floor);
        speed[id] = s;
        floored[id] = trend[id].is_finite() && magnitude < floor;
        grid_velocity[id] = if magnitude > 0.0 && trend[id] != 0.0 {
            // Isotherms move down the gradient when warming (−ĝ), up it when cooling.
            let k = -trend[id].signum() * s / magnitude;
            [k * g[0], k * g[1]]
        } else {
            [0.0, 0.0]
        };
    }
    // PROJ objects are per thread (see `Projector`); one per chunk keeps set-up cheap.
    const CHUNK: usize = 8192;
    let ids: Vec<usize> = (0..grid.len()).collect();
    let bearings: Vec<Vec<f64>> = ids
        .par_chunks(CHUNK)
        .map(|chunk| -> Result<Vec<f64>, ClimateError> {
            let projector = Projector::new(&grid.crs)?;
            chunk
                .iter()
                .map(|&id| {
                    let v = grid_velocity[id];
                    if v[0].is_finite() && (v[0] != 0.0 || v[1] != 0.0) && !floored[id] {
                        ground_bearing_deg(&projector, grid.cells[id].centre, v)
                    } else {
                        Ok(f64::NAN)
                    }
                })
                .collect()
        })
        .collect::<Result<_, _>>()?;
    Ok(Velocity {
        trend_c_per_yr: trend,
        gradient_xy,
        gradient_c_per_km,
        speed_km_per_yr: speed,
        bearing_deg: bearings.into_iter().flatten().collect(),
        floored,
        grid_velocity,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;

    fn grid(lat0: f64, n: u32) -> Grid {
        let side = 10_000.0;
        let half = n as f64 * side / 2.0;
        Grid::full_rectangle(Crs::auto_laea(0.0, lat0), side, [-half, -half], n, n).unwrap()
    }

    #[test]
    fn gradient_of_a_plane_is_exact_even_with_holes() {
        // Closed form: T = 3 + 0.01·x_km − 0.02·y_km has gradient [0.01, −0.02] °C/km.
        let g = grid(45.0, 5);
        let mut f: Vec<f64> = g
            .cells
            .iter()
            .map(|c| 3.0 + 0.01 * c.centre[0] / 1000.0 - 0.02 * c.centre[1] / 1000.0)
            .collect();
        // Knock out two neighbours of the centre cell: the remaining pairs still see the plane.
        f[g.cell_at(3, 3).unwrap() as usize] = f64::NAN;
        f[g.cell_at(1, 2).unwrap() as usize] = f64::NAN;
        let grad = spatial_gradient(&g, &f).unwrap();
        for (id, v) in grad.iter().enumerate() {
            if f[id].is_finite() {
                let v = v.unwrap();
                assert!(
                    (v[0] - 0.01).abs() < 1e-12 && (v[1] + 0.02).abs() < 1e-12,
                    "{id}: {v:?}"
                );
            } else {
                assert!(v.is_none());
            }
        }
    }

    #[test]
    fn gradient_of_a_plane_is_exact_where_cells_are_clipped() {
        // Closed form again, T = 3 + 0.01·x_km − 0.02·y_km, but three cells are clipped (their
        // sea-part centroids moved off the square centres, as at a coast) and the field is
        // sampled at those centroids: the fit through the true positions still returns
        // [0.01, −0.02] in every cell.
        let mut g = grid(45.0, 5);
        for (id, shift) in [
            (6usize, [2_300.0, -1_700.0]),
            (12, [-3_100.0, 900.0]),
            (18, [0.0, 4_000.0]),
        ] {
            g.cells[id].centre[0] += shift[0];
            g.cells[id].centre[1] += shift[1];
        }
        let f: Vec<f64> = g
            .cells
            .iter()
            .map(|c| 3.0 + 0.01 * c.centre[0] / 1000.0 - 0.02 * c.centre[1] / 1000.0)
            .collect();
        for v in spatial_gradient(&g, &f).unwrap() {
            let v = v.unwrap();
            assert!(
                (v[0] - 0.01).abs() < 1e-12 && (v[1] + 0.02).abs() < 1e-12,
                "{v:?}"
            );
        }
    }

    #[test]
    fn a_channel_one_cell_wide_has_its_slope_along_and_none_across() {
        // A 5 × 1 strip: the cells lie on one line, so only the east–west slope is defined.
        // T = 7 − 0.03·x_km: by the closed form, [−0.03, 0] everywhere.
        let g =
            Grid::full_rectangle(Crs::auto_laea(0.0, 45.0), 10_000.0, [0.0, 0.0], 5, 1).unwrap();
        let f: Vec<f64> = g
            .cells
            .iter()
            .map(|c| 7.0 - 0.03 * c.centre[0] / 1000.0)
            .collect();
        for v in spatial_gradient(&g, &f).unwrap() {
            let v = v.unwrap();
            assert!((v[0] + 0.03).abs() < 1e-12 && v[1].abs() < 1e-12, "{v:?}");
        }
    }

    #[test]
    fn sobel_weights_by_hand() {
        // Hand computation on a 3×3 block, values (row-major from the south-west):
        //   south row 0 1 2 / centre row 0 2 4 / north row 0 1 8 (°C), spacing 10 km.
        // East–west pairs: south (1, 1), centre (2, 2), north (1, 7), weights 1, 2, 1:
        //   (1·(1+1) + 2·(2+2) + 1·(1+7)) / (2·(1+2+1)) / 10 = 18/8/10 = 0.225 °C/km.
        // South–north pairs: west col (0,0), centre col (1,−1)→ values 1,2,1: (1, −1),
        //   east col 2,4,8: (2, 4): (1·0 + 2·0 + 1·6)/8/10 = 0.075 °C/km.
        let g = grid(45.0, 3);
        let f = [0.0, 1.0, 2.0, 0.0, 2.0, 4.0, 0.0, 1.0, 8.0];
        let v = spatial_gradient(&g, &f).unwrap()[4].unwrap();
        assert!((v[0] - 0.225).abs() < 1e-12, "{v:?}");
        assert!((v[1] - 0.075).abs() < 1e-12, "{v:?}");
    }

    #[test]
    fn bearing_on_the_central_meridian_is_grid_bearing() {
        // On a LAEA's central meridian grid north is true north (zero convergence; Snyder
        // 1987): grid east → 90°, grid south → 180°.
        let p = Projector::new(&Crs::auto_laea(0.0, 60.0)).unwrap();
        let e = ground_bearing_deg(&p, [0.0, 0.0], [1.0, 0.0]).unwrap();
        let s = ground_bearing_deg(&p, [0.0, 0.0], [0.0, -1.0]).unwrap();
        assert!((e - 90.0).abs() < 1e-6, "{e}");
        assert!((s - 180.0).abs() < 1e-6, "{s}");
        assert!(ground_bearing_deg(&p, [0.0, 0.0], [0.0, 0.0]).is_err());
    }

    #[test]
    fn bearing_off_the_central_meridian_follows_the_meridian() {
        // Independent check: the meridian through (5°E, 60°N) runs from its projection at
        // 59.9°N to 60.1°N; the ground direction of that grid vector is true north (0°).
        let p = Projector::new(&Crs::auto_laea(0.0, 60.0)).unwrap();
        let a = p.to_xy(5.0, 59.9).unwrap();
        let b = p.to_xy(5.0, 60.1).unwrap();
        let m = p.to_xy(5.0, 60.0).unwrap();
        let dir = [b[0] - a[0], b[1] - a[1]];
        // Grid north differs from true north here by several degrees (convergence)...
        assert!(dir[0].atan2(dir[1]).to_degrees().abs() > 3.0);
        // ...and the correction removes it.
        let bearing = ground_bearing_deg(&p, m, dir).unwrap();
        let off = (bearing + 180.0).rem_euclid(360.0) - 180.0;
        assert!(off.abs() < 1e-3, "{bearing}");
    }

    #[test]
    fn rejects_bad_inputs() {
        let g = grid(45.0, 3);
        let ok = vec![vec![0.0; 9], vec![1.0; 9]];
        let p = VelocityParams::default();
        assert!(climate_velocity(&g, &[2030], &ok[..1], &p).is_err());
        assert!(climate_velocity(&g, &[2050, 2030], &ok, &p).is_err());
        assert!(climate_velocity(&g, &[2030, 2050, 2070], &ok, &p).is_err());
        assert!(climate_velocity(&g, &[2030, 2050], &[vec![0.0; 9], vec![0.0; 8]], &p).is_err());
        let bad = VelocityParams {
            min_gradient_c_per_km: 0.0,
        };
        assert!(climate_velocity(&g, &[2030, 2050], &ok, &bad).is_err());
    }

    #[test]
    fn flat_water_uses_the_floor_and_has_no_direction() {
        // Closed form: uniform warming of 0.01 °C/yr, zero gradient → speed 0.01 / 0.0005 = 20.
        let g = grid(45.0, 3);
        let temps = vec![vec![10.0; 9], vec![10.2; 9]];
        let v = climate_velocity(&g, &[2030, 2050], &temps, &VelocityParams::default()).unwrap();
        assert!((v.speed_km_per_yr[4] - 20.0).abs() < 1e-9);
        assert!(v.bearing_deg[4].is_nan());
        assert_eq!(v.grid_velocity[4], [0.0, 0.0]);
        assert!(v.floored[4]);
    }

    #[test]
    fn a_gradient_below_the_floor_caps_the_speed_and_leaves_the_bearing_missing() {
        // T = 10 + 0.0001·x_km + 0.01·(t − 2030): gradient 0.0001 °C/km, below the floor of
        // 0.0005, so speed = 0.01 / 0.0005 = 20 km/yr (closed form) and the bearing is missing
        // on purpose; a gradient of 0.001 (above the floor) keeps its bearing: 270°, toward
        // cooler water (west), since the centre cell sits on the grid's central meridian where
        // grid east is true east (zero convergence; Snyder 1987).
        let g = grid(45.0, 3);
        for (slope, floored) in [(0.0001, true), (0.001, false)] {
            let temps: Vec<Vec<f64>> = [0.0, 20.0]
                .iter()
                .map(|dt| {
                    g.cells
                        .iter()
                        .map(|c| 10.0 + slope * c.centre[0] / 1000.0 + 0.01 * dt)
                        .collect()
                })
                .collect();
            let v =
                climate_velocity(&g, &[2030, 2050], &temps, &VelocityParams::default()).unwrap();
            assert_eq!(v.floored[4], floored);
            if floored {
                assert!((v.speed_km_per_yr[4] - 20.0).abs() < 1e-9);
                assert!(v.bearing_deg[4].is_nan());
            } else {
                assert!((v.speed_km_per_yr[4] - 10.0).abs() < 1e-9);
                assert!(
                    (v.bearing_deg[4] - 270.0).abs() < 1e-6,
                    "{}",
                    v.bearing_deg[4]
                );
            }
        }
    }
}
