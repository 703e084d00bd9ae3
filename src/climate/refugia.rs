//! Climate refugia: habitat that persists through every year of a scenario, and water that
//! warms least or where isotherms move slowest.

use super::stats::quantile;
use super::velocity::Velocity;
use super::{check_dense, check_range, check_sparse, weighted_sparse_sum, ClimateError};
use crate::grid::Grid;

/// Which climate exposure marks low-exposure (refuge) water.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ExposureMetric {
    /// Climate velocity speed (km/yr): slow-moving isotherms.
    Speed,
    /// Temperature trend (°C/yr, signed: cooling water counts as least warming).
    Warming,
}

/// How refugia are found.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RefugiaParams {
    /// A cell holds habitat in a year when its amount is above this (amount units, e.g. km²).
    pub habitat_threshold: f64,
    /// Cells at or below this quantile (0–1, type 7) of the exposure metric are low-exposure.
    pub quantile: f64,
    /// Exposure metric.
    pub metric: ExposureMetric,
    /// When true, a species' refugium is its persistent habitat in low-exposure cells only;
    /// when false, all of its persistent habitat.
    pub species_need_low_exposure: bool,
}

impl Default for RefugiaParams {
    fn default() -> Self {
        RefugiaParams {
            habitat_threshold: 0.0,
            quantile: 0.25,
            metric: ExposureMetric::Speed,
            species_need_low_exposure: false,
        }
    }
}

/// Refugium amounts of one scenario, sparse `(cell id, amount)` lists sorted by cell id.
#[derive(Debug, Clone, PartialEq)]
pub struct Refugia {
    /// Sea area of the low-exposure cells. Units: km².
    pub climate: Vec<(u32, f64)>,
    /// Per species (input order): its refugium habitat (habitat amount units).
    pub per_species: Vec<Vec<(u32, f64)>>,
    /// Sum of the species refugia per cell (habitat amount units).
    pub all_species: Vec<(u32, f64)>,
}

/// Habitat that persists: cells whose amount is above `threshold` in every year, with the
/// smallest amount over the years (the habitat present throughout). Each year's list is
/// sparse, sorted by cell id; cells absent from a list hold none that year.
pub fn persistent_habitat(
    n_cells: usize,
    habitat_by_year: &[&[(u32, f64)]],
    threshold: f64,
) -> Result<Vec<(u32, f64)>, ClimateError> {
    if habitat_by_year.is_empty() {
        return Err(ClimateError::Invalid(
            "persistent habitat needs at least one year".into(),
        ));
    }
    let mut min = vec![f64::INFINITY; n_cells];
    let mut years_present = vec![0usize; n_cells];
    for (k, list) in habitat_by_year.iter().enumerate() {
        check_sparse(&format!("habitat of year index {k}"), list, n_cells)?;
        for &(c, a) in list.iter() {
            if a > threshold {
                years_present[c as usize] += 1;
                min[c as usize] = min[c as usize].min(a);
            }
        }
    }
    let all = habitat_by_year.len();
    Ok((0..n_cells)
        .filter(|&i| years_present[i] == all)
        .map(|i| (i as u32, min[i]))
        .collect())
}

/// Low-exposure cells: finite `exposure` at or below its `q` quantile (Hyndman & Fan 1996
/// type 7 over the finite values). Cells with non-finite exposure are never low-exposure.
pub fn low_exposure_cells(exposure: &[f64], q: f64) -> Result<Vec<bool>, ClimateError> {
    check_range("refugium quantile", q, 0.0, 1.0, true)?;
    let Some(cut) = quantile(exposure, q) else {
        return Ok(vec![false; exposure.len()]);
    };
    Ok(exposure
        .iter()
        .map(|&v| v.is_finite() && v <= cut)
        .collect())
}

/// Refugia of one scenario: the sea area of low-exposure cells ([`low_exposure_cells`] on the
/// chosen metric of `velocity`), and per species the persistent habitat
/// ([`persistent_habitat`]), kept only in low-exposure cells when the parameters ask for it.
/// `species_habitat[s][k]` is species `s`'s sparse habitat in year `k` of the scenario.
pub fn refugia(
    grid: &Grid,
    velocity: &Velocity,
    species_habitat: &[Vec<&[(u32, f64)]>],
    params: &RefugiaParams,
) -> Result<Refugia, ClimateError> {
    let exposure = match params.metric {
        ExposureMetric::Speed => &velocity.speed_km_per_yr,
        ExposureMetric::Warming => &velocity.trend_c_per_yr,
    };
    check_dense("velocity", exposure, grid.len())?;
    let low = low_exposure_cells(exposure, params.quantile)?;
    let climate = (0..grid.len())
        .filter(|&i| low[i])
        .map(|i| (i as u32, grid.cells[i].sea_area_km2))
        .collect();
    let per_species = species_habitat
        .iter()
        .map(|years| {
            let mut p = persistent_habitat(grid.len(), years, params.habitat_threshold)?;
            if params.species_need_low_exposure {
                p.retain(|&(c, _)| low[c as usize]);
            }
            Ok(p)
        })
        .collect::<Result<Vec<_>, ClimateError>>()?;
    let all_species = weighted_sparse_sum(grid.len(), per_species.iter().map(|l| (&l[..], 1.0)));
    Ok(Refugia {
        climate,
        per_species,
        all_species,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;

    #[test]
    fn persistence_by_hand() {
        // Hand computation over 3 years, threshold 0.1:
        // cell 0: 0.5, 0.4, 0.6 → persists with 0.4; cell 1: 0.5, absent, 0.5 → no;
        // cell 2: 0.05, 0.3, 0.3 → no (0.05 ≤ 0.1); cell 3: 0.2 ×3 → 0.2.
        let y1 = [(0u32, 0.5), (1, 0.5), (2, 0.05), (3, 0.2)];
        let y2 = [(0u32, 0.4), (2, 0.3), (3, 0.2)];
        let y3 = [(0u32, 0.6), (1, 0.5), (2, 0.3), (3, 0.2)];
        let p = persistent_habitat(4, &[&y1, &y2, &y3], 0.1).unwrap();
        assert_eq!(p, vec![(0, 0.4), (3, 0.2)]);
        assert!(persistent_habitat(4, &[], 0.1).is_err());
        assert!(persistent_habitat(2, &[&y1], 0.1).is_err());
    }

    #[test]
    fn lowest_quarter_by_hand() {
        // Type 7 quantile 0.25 of 1,2,3,4,5 (NaN ignored): h = 1 → 2. Cells ≤ 2 are low.
        let low = low_exposure_cells(&[5.0, 1.0, f64::NAN, 2.0, 4.0, 3.0], 0.25).unwrap();
        assert_eq!(low, vec![false, true, false, true, false, false]);
        assert!(low_exposure_cells(&[1.0], 1.5).is_err());
    }

    #[test]
    fn refugia_on_a_small_grid() {
        // 2×2 grid of 10 km cells (100 km² each); speeds 1, 4, 2, 8 km/yr. The 0.25 quantile
        // (type 7) of (1, 2, 4, 8) is 1 + 0.75·(2 − 1) = 1.75 → only cell 0 is low-exposure.
        // Species A persists in cells 0 and 1 (min 0.3 and 0.5); with low exposure required
        // only cell 0 stays. Species B persists in cell 0 (0.2).
        let g =
            Grid::full_rectangle(Crs::auto_laea(0.0, 50.0), 10_000.0, [0.0, 0.0], 2, 2).unwrap();
        let speed = vec![1.0, 4.0, 2.0, 8.0];
        let v = Velocity {
            trend_c_per_yr: vec![0.02; 4],
            gradient_xy: vec![[0.0, 0.0]; 4],
            gradient_c_per_km: vec![0.0; 4],
            speed_km_per_yr: speed,
            bearing_deg: vec![0.0; 4],
            floored: vec![false; 4],
            grid_velocity: vec![[0.0, 0.0]; 4],
        };
        let a1 = [(0u32, 0.3), (1, 0.5)];
        let a2 = [(0u32, 0.4), (1, 0.6), (2, 0.9)];
        let b1 = [(0u32, 0.2)];
        let species = vec![vec![&a1[..], &a2[..]], vec![&b1[..], &b1[..]]];
        let params = RefugiaParams {
            species_need_low_exposure: true,
            ..Default::default()
        };
        let r = refugia(&g, &v, &species, &params).unwrap();
        assert_eq!(r.climate.len(), 1);
        assert_eq!(r.climate[0].0, 0);
        assert!((r.climate[0].1 - 100.0).abs() < 1e-9);
        assert_eq!(r.per_species, vec![vec![(0, 0.3)], vec![(0, 0.2)]]);
        assert_eq!(r.all_species.len(), 1);
        assert!((r.all_species[0].1 - 0.5).abs() < 1e-12);
        let params = RefugiaParams {
            species_need_low_exposure: false,
            ..Default::default()
        };
        let r = refugia(&g, &v, &species, &params).unwrap();
        assert_eq!(r.per_species[0], vec![(0, 0.3), (1, 0.5)]);
        // Warming metric: all trends equal → every cell is at the quantile → all low.
        let params = RefugiaParams {
            metric: ExposureMetric::Warming,
            ..Default::default()
        };
        assert_eq!(refugia(&g, &v, &species, &params).unwrap().climate.len(), 4);
    }
}
