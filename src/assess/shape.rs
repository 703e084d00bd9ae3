//! Shape of a network: how compact its reserves are and how far apart they lie along the
//! poleward axis — the two spatial properties planners check by eye on a map.

use super::Reserve;

/// Total reserve edge over the edge the same reserves would have as circles:
/// `edge_km / Σᵣ 2√(π·Aᵣ)`. 1 for circles (the least perimeter for an area, the isoperimetric
/// inequality), 4/(2√π) ≈ 1.128 for a square, larger for ragged or thin networks. NaN without
/// reserves. Units: none.
pub fn compactness_ratio(reserves: &[Reserve], edge_km: f64) -> f64 {
    let circles: f64 = reserves
        .iter()
        .map(|r| 2.0 * (std::f64::consts::PI * r.area_km2).sqrt())
        .sum();
    if circles > 0.0 {
        edge_km / circles
    } else {
        f64::NAN
    }
}

/// Longest stretch of the shift axis between consecutive chosen cells (their positions along
/// the axis, e.g. poleward distance of the centroids): the widest step a shifting species must
/// make between reserves. 0 with fewer than two chosen positions. Units: km.
pub fn largest_gap_km(position_km: &[f64], selected: &[bool]) -> f64 {
    let mut p: Vec<f64> = position_km
        .iter()
        .zip(selected)
        .filter(|(_, s)| **s)
        .map(|(x, _)| *x)
        .collect();
    p.sort_by(f64::total_cmp);
    p.windows(2).map(|w| w[1] - w[0]).fold(0.0, f64::max)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn square_reserve_ratio_is_the_isoperimetric_value() {
        // A 10 km square: perimeter 40 km, area 100 km²; circle of 100 km² has perimeter
        // 2√(100π) = 35.449 km → 40/35.449 = 1.12838 = 2/√π (isoperimetric quotient of a square,
        // handbook value).
        let r = Reserve {
            cells: vec![0],
            area_km2: 100.0,
            cost: 1.0,
        };
        let got = compactness_ratio(&[r], 40.0);
        assert!((got - 2.0 / std::f64::consts::PI.sqrt()).abs() < 1e-12);
        assert!(compactness_ratio(&[], 0.0).is_nan());
    }

    #[test]
    fn largest_gap_between_chosen_positions() {
        // Hand check: chosen positions 0, 10, 45 (unsorted input, one unchosen at 20) → gaps
        // 10 and 35 → 35.
        let pos = [45.0, 20.0, 0.0, 10.0];
        assert_eq!(largest_gap_km(&pos, &[true, false, true, true]), 35.0);
        assert_eq!(largest_gap_km(&pos, &[true, false, false, false]), 0.0);
    }
}
