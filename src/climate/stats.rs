//! Small statistics shared by the climate computations: least-squares trend and quantiles.

/// Ordinary least-squares slope of `y` on `t` (Units: y-units per t-unit, e.g. °C/yr).
///
/// slope = Σ(tᵢ − t̄)(yᵢ − ȳ) / Σ(tᵢ − t̄)² (the normal-equation solution; any statistics
/// handbook). Returns `None` when fewer than two points are given, the lengths differ, any
/// value is not finite, or every `t` is the same.
pub fn linear_trend(t: &[f64], y: &[f64]) -> Option<f64> {
    if t.len() != y.len() || t.len() < 2 {
        return None;
    }
    if t.iter().chain(y).any(|v| !v.is_finite()) {
        return None;
    }
    let n = t.len() as f64;
    let tm = t.iter().sum::<f64>() / n;
    let ym = y.iter().sum::<f64>() / n;
    let (mut sxy, mut sxx) = (0.0, 0.0);
    for (ti, yi) in t.iter().zip(y) {
        sxy += (ti - tm) * (yi - ym);
        sxx += (ti - tm) * (ti - tm);
    }
    (sxx > 0.0).then(|| sxy / sxx)
}

/// Sample quantile `q` (0–1) of the finite values, by linear interpolation between order
/// statistics: Hyndman & Fan 1996 (The American Statistician 50:361) type 7, the default of
/// R's `quantile`. Non-finite values are ignored; `None` when none are left or `q` is outside
/// [0, 1].
pub fn quantile(values: &[f64], q: f64) -> Option<f64> {
    if !(0.0..=1.0).contains(&q) {
        return None;
    }
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let h = (v.len() - 1) as f64 * q;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(v.len() - 1);
    Some(v[lo] + (h - lo as f64) * (v[hi] - v[lo]))
}

/// Weighted quantile `q` (0–1) of `(value, weight)` pairs.
///
/// Each value sits at the middle of its weight on the cumulative-weight scale,
/// pₖ = (Σ_{j<k} wⱼ + wₖ/2) / Σw, and the quantile interpolates linearly between neighbouring
/// pₖ, clamped to the smallest / largest value outside [p₁, pₙ]. With equal weights this is
/// Hyndman & Fan 1996 type 5 (Hazen's rule), so a band of habitat that moves by a whole number
/// of cells moves its quantiles by exactly that distance. Pairs with non-finite values or
/// non-positive weights are ignored; `None` when no weight is left or `q` is outside [0, 1].
pub fn weighted_quantile(pairs: &[(f64, f64)], q: f64) -> Option<f64> {
    if !(0.0..=1.0).contains(&q) {
        return None;
    }
    let mut v: Vec<(f64, f64)> = pairs
        .iter()
        .copied()
        .filter(|&(x, w)| x.is_finite() && w.is_finite() && w > 0.0)
        .collect();
    if v.is_empty() {
        return None;
    }
    v.sort_by(|a, b| a.0.total_cmp(&b.0));
    let total: f64 = v.iter().map(|p| p.1).sum();
    let mut below = 0.0;
    let mut prev: Option<(f64, f64)> = None; // (position on the weight scale, value)
    for &(x, w) in &v {
        let p = (below + 0.5 * w) / total;
        below += w;
        match prev {
            None if q <= p => return Some(x),
            Some((pp, xp)) if q <= p => {
                let f = if p > pp { (q - pp) / (p - pp) } else { 1.0 };
                return Some(xp + f * (x - xp));
            }
            _ => prev = Some((p, x)),
        }
    }
    prev.map(|(_, x)| x)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn trend_matches_hand_computation() {
        // Hand computation: t = 0,1,2,3, y = 1,3,2,6: t̄ = 1.5, ȳ = 3,
        // Σ(t−t̄)(y−ȳ) = (−1.5)(−2)+(−0.5)(0)+(0.5)(−1)+(1.5)(3) = 7, Σ(t−t̄)² = 5 → 1.4.
        let s = linear_trend(&[0.0, 1.0, 2.0, 3.0], &[1.0, 3.0, 2.0, 6.0]).unwrap();
        assert!((s - 1.4).abs() < 1e-12);
        // Exact line y = 0.02 t + 15 over calendar years (closed form: slope 0.02).
        let t = [2030.0, 2050.0, 2070.0, 2090.0];
        let y: Vec<f64> = t.iter().map(|t| 15.0 + 0.02 * (t - 2030.0)).collect();
        assert!((linear_trend(&t, &y).unwrap() - 0.02).abs() < 1e-12);
        assert_eq!(linear_trend(&[1.0], &[1.0]), None);
        assert_eq!(linear_trend(&[1.0, 1.0], &[1.0, 2.0]), None);
        assert_eq!(linear_trend(&[1.0, 2.0], &[1.0, f64::NAN]), None);
    }

    #[test]
    fn type7_quantile_matches_r_default() {
        // Hand computation of type 7 (Hyndman & Fan 1996): x = 1..=5 sorted, q = 0.1:
        // h = 4·0.1 = 0.4 → 1 + 0.4·(2 − 1) = 1.4. q = 0.5 → 3 (median).
        let x = [5.0, 1.0, 3.0, 2.0, 4.0, f64::NAN];
        assert!((quantile(&x, 0.1).unwrap() - 1.4).abs() < 1e-12);
        assert!((quantile(&x, 0.5).unwrap() - 3.0).abs() < 1e-12);
        assert_eq!(quantile(&x, 0.0), Some(1.0));
        assert_eq!(quantile(&x, 1.0), Some(5.0));
        assert_eq!(quantile(&[], 0.5), None);
        assert_eq!(quantile(&x, 1.5), None);
    }

    #[test]
    fn weighted_quantile_matches_hand_computation() {
        // Hand computation: values 10, 20, 30 with weights 1, 2, 1 (total 4).
        // Midpoints on the weight scale: 0.5/4 = 0.125, (1+1)/4 = 0.5, (3+0.5)/4 = 0.875.
        // q = 0.95 ≥ 0.875 → 30 (clamped). q = 0.05 ≤ 0.125 → 10.
        // q = 0.3: between 0.125 (10) and 0.5 (20): 10 + (0.175/0.375)·10 = 14.6667.
        // q = 0.75: between 0.5 (20) and 0.875 (30): 20 + (0.25/0.375)·10 = 26.6667.
        let p = [(30.0, 1.0), (10.0, 1.0), (20.0, 2.0), (99.0, 0.0)];
        assert_eq!(weighted_quantile(&p, 0.95), Some(30.0));
        assert_eq!(weighted_quantile(&p, 0.05), Some(10.0));
        assert!(
            (weighted_quantile(&p, 0.3).unwrap() - (10.0 + 0.175 / 0.375 * 10.0)).abs() < 1e-12
        );
        assert!(
            (weighted_quantile(&p, 0.75).unwrap() - (20.0 + 0.25 / 0.375 * 10.0)).abs() < 1e-12
        );
        assert_eq!(weighted_quantile(&[(1.0, 0.0)], 0.5), None);
    }

    #[test]
    fn equal_weights_give_hazen_type5() {
        // Hyndman & Fan 1996 type 5: Q(p) = x[h] interpolated, h = n·p + 0.5 (1-based).
        // n = 20 values 0..19, p = 0.95 → h = 19.5 → between x₁₉ = 18 and x₂₀ = 19: 18.5.
        // p = 0.05 → h = 1.5 → 0.5.
        let p: Vec<(f64, f64)> = (0..20).map(|i| (i as f64, 3.0)).collect();
        assert!((weighted_quantile(&p, 0.95).unwrap() - 18.5).abs() < 1e-12);
        assert!((weighted_quantile(&p, 0.05).unwrap() - 0.5).abs() < 1e-12);
    }
}
