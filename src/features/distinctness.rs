//! Genetic distinctness (the `distinctness` feature): values measured at sampling points
//! (e.g. a population's differentiation from the rest) spread onto nearby cells, and Nei's
//! G_ST from allele frequencies.

use crate::climate::{check_range, ClimateError};
use crate::grid::{Grid, Projector};
use rayon::prelude::*;
use rstar::primitives::GeomWithData;
use rstar::RTree;

pub use crate::plan::terms::Interpolation;

/// Values at points (WGS84 `[lon, lat]`, value) spread onto cells: each cell centre takes the
/// interpolated value of the points within `radius_km` (grid km), 0 beyond it. A point exactly
/// on a cell centre gives that cell its value (the mean, if several coincide). Sparse result
/// sorted by cell id, zero values left out. Units: those of the values.
pub fn interpolate_points(
    grid: &Grid,
    points: &[([f64; 2], f64)],
    radius_km: f64,
    method: Interpolation,
) -> Result<Vec<(u32, f64)>, ClimateError> {
    check_range(
        "distinctness radius_km",
        radius_km,
        0.0,
        f64::INFINITY,
        false,
    )?;
    if let Interpolation::InverseDistance { power } = method {
        check_range("distinctness power", power, 0.0, f64::INFINITY, false)?;
    }
    let projector = Projector::new(&grid.crs)?;
    let mut items = Vec::with_capacity(points.len());
    for (i, &(ll, v)) in points.iter().enumerate() {
        if !v.is_finite() {
            return Err(ClimateError::Invalid(format!(
                "distinctness point {i} at ({}, {}) has no finite value (got {v})",
                ll[0], ll[1]
            )));
        }
        items.push(GeomWithData::new(projector.to_xy(ll[0], ll[1])?, i));
    }
    let tree = RTree::bulk_load(items);
    let r_m = radius_km * 1000.0;
    let out: Vec<Option<(u32, f64)>> = grid
        .cells
        .par_iter()
        .enumerate()
        .map(|(id, cell)| {
            let c = cell.centre;
            // (point index, distance m), sorted by index so sums do not depend on tree order.
            let mut near: Vec<(usize, f64)> = tree
                .locate_within_distance(c, r_m * r_m)
                .map(|p| (p.data, (p.geom()[0] - c[0]).hypot(p.geom()[1] - c[1])))
                .filter(|&(_, d)| d <= r_m)
                .collect();
            if near.is_empty() {
                return None;
            }
            near.sort_by_key(|&(i, _)| i);
            let value = match method {
                Interpolation::Nearest => {
                    let best = near
                        .iter()
                        .min_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
                    // `near` is not empty here.
                    points[best.expect("non-empty").0].1
                }
                Interpolation::InverseDistance { power } => {
                    let on: Vec<f64> = near
                        .iter()
                        .filter(|p| p.1 == 0.0)
                        .map(|p| points[p.0].1)
                        .collect();
                    if !on.is_empty() {
                        on.iter().sum::<f64>() / on.len() as f64
                    } else {
                        let (mut sv, mut sw) = (0.0, 0.0);
                        for &(i, d) in &near {
                            let w = d.powf(-power);
                            sv += w * points[i].1;
                            sw += w;
                        }
                        sv / sw
                    }
                }
            };
            (value != 0.0).then_some((id as u32, value))
        })
        .collect();
    Ok(out.into_iter().flatten().collect())
}

/// Nei's G_ST = (H_T − H_S)/H_T for one locus (Nei 1973, PNAS 70:3321): `freqs[p][a]` is the
/// frequency of allele `a` in population `p` (each row sums to 1); H_S is the mean over
/// populations of 1 − Σₐ p²; H_T is 1 − Σₐ p̄ₐ² of the mean frequencies (equal population
/// weights). 0 when H_T = 0 (one allele fixed everywhere: nothing to differentiate).
pub fn nei_gst(freqs: &[Vec<f64>]) -> Result<f64, ClimateError> {
    let n_alleles = freqs.first().map_or(0, |f| f.len());
    if freqs.is_empty() || n_alleles == 0 {
        return Err(ClimateError::Invalid(
            "G_ST needs at least one population with allele frequencies".into(),
        ));
    }
    for (p, row) in freqs.iter().enumerate() {
        let sum: f64 = row.iter().sum();
        // 1e-6 allows frequencies rounded to six decimals.
        if row.len() != n_alleles
            || row.iter().any(|f| !(0.0..=1.0).contains(f))
            || (sum - 1.0).abs() > 1e-6
        {
            return Err(ClimateError::Invalid(format!(
                "allele frequencies of population {p} must be {n_alleles} numbers in [0, 1] summing to 1 (got {row:?})"
            )));
        }
    }
    let n = freqs.len() as f64;
    let hs = freqs
        .iter()
        .map(|row| 1.0 - row.iter().map(|f| f * f).sum::<f64>())
        .sum::<f64>()
        / n;
    let ht = 1.0
        - (0..n_alleles)
            .map(|a| {
                let mean = freqs.iter().map(|row| row[a]).sum::<f64>() / n;
                mean * mean
            })
            .sum::<f64>();
    Ok(if ht > 0.0 { (ht - hs) / ht } else { 0.0 })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::Crs;

    #[test]
    fn idw_and_nearest_by_hand() {
        // One 10 km cell centred at (5, 5) km on a LAEA at (0°, 0°). Points placed (through
        // the inverse projection) 3 km east (value 10) and 4 km north (value 20) of the
        // centre, and one 30 km away (value 99, outside the 10 km radius).
        // IDW p = 2: (10/9 + 20/16)/(1/9 + 1/16) = (85/36)/(25/144) = 13.6 (hand computation).
        // Nearest: 10.
        let crs = Crs::auto_laea(0.0, 0.0);
        let g = Grid::full_rectangle(crs.clone(), 10_000.0, [0.0, 0.0], 1, 1).unwrap();
        let p = Projector::new(&crs).unwrap();
        let pts = vec![
            (p.to_lonlat(8_000.0, 5_000.0).unwrap(), 10.0),
            (p.to_lonlat(5_000.0, 9_000.0).unwrap(), 20.0),
            (p.to_lonlat(35_000.0, 5_000.0).unwrap(), 99.0),
        ];
        let idw = interpolate_points(
            &g,
            &pts,
            10.0,
            Interpolation::InverseDistance { power: 2.0 },
        )
        .unwrap();
        assert_eq!(idw.len(), 1);
        assert!((idw[0].1 - 13.6).abs() < 1e-6, "{idw:?}");
        let near = interpolate_points(&g, &pts, 10.0, Interpolation::Nearest).unwrap();
        assert!((near[0].1 - 10.0).abs() < 1e-12);
        // Radius 2 km holds no point → nothing.
        assert!(interpolate_points(&g, &pts, 2.0, Interpolation::Nearest)
            .unwrap()
            .is_empty());
        assert!(interpolate_points(&g, &pts, 0.0, Interpolation::Nearest).is_err());
    }

    #[test]
    fn gst_check_values() {
        // Two populations with allele frequencies 0.9/0.1 and 0.1/0.9: H_S = 0.18,
        // H_T = 0.5, G_ST = 0.64 (CHECK-VALUES, computed; formula from memory, Nei 1973).
        let g = nei_gst(&[vec![0.9, 0.1], vec![0.1, 0.9]]).unwrap();
        assert!((g - 0.64).abs() < 1e-12);
        // Hand computation: fixed for different alleles → H_S = 0, H_T = 0.5 → 1.
        assert!((nei_gst(&[vec![1.0, 0.0], vec![0.0, 1.0]]).unwrap() - 1.0).abs() < 1e-12);
        // Identical populations → 0; one allele everywhere → 0.
        assert!(nei_gst(&[vec![0.3, 0.7], vec![0.3, 0.7]]).unwrap().abs() < 1e-12);
        assert_eq!(nei_gst(&[vec![1.0], vec![1.0]]).unwrap(), 0.0);
        assert!(nei_gst(&[vec![0.5, 0.6]]).is_err());
        assert!(nei_gst(&[]).is_err());
    }
}
