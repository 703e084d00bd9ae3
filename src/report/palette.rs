//! Colours of the report: a colour-blind-safe qualitative palette for map classes and chart
//! lines, and a perceptually uniform sequential ramp for feature maps.

/// Okabe & Ito (2008), "Color Universal Design (CUD): how to make figures and presentations
/// that are friendly to colorblind people" (J*Fly, jfly.uni-koeln.de/color), also printed in
/// Wong (2011), Nature Methods 8:441. Order: orange, sky blue, bluish green, yellow, blue,
/// vermillion, reddish purple, black.
pub(crate) const OKABE_ITO: [&str; 8] = [
    "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7", "#000000",
];

/// Reserves: bluish green.
pub(crate) const RESERVE: &str = "#009E73";
/// Required cells: blue.
pub(crate) const REQUIRED: &str = "#0072B2";
/// Excluded cells: vermillion.
pub(crate) const EXCLUDED: &str = "#D55E00";
/// Management zones, in plan order: the Okabe–Ito hues not taken by the cell rules (blue,
/// vermillion) — bluish green (the reserve colour, for the first and strictest zone), orange,
/// reddish purple, yellow, sky blue, black. A plan with more zones reuses them in turn.
pub(crate) const ZONES: [&str; 6] = [
    "#009E73", "#E69F00", "#CC79A7", "#F0E442", "#56B4E9", "#000000",
];

/// The colour of zone `index` (0-based, plan order).
pub(crate) fn zone_colour(index: usize) -> &'static str {
    ZONES[index % ZONES.len()]
}

/// Unselected sea: a light tint of the sky blue (20% sky blue on white), quiet under the classes.
pub(crate) const SEA: &str = "#DDF0FB";
/// Cells without a finite value on a feature map.
pub(crate) const NO_VALUE: &str = "#BDBDBD";

/// The viridis ramp (van der Walt & Smith 2015, the matplotlib default colormap) sampled at
/// seventeen even stops t = 0, 1/16, …, 1. Values read from matplotlib 3.11's `viridis`
/// colormap (`colormaps['viridis'](k / 16)`, rounded to 0–255).
const VIRIDIS: [[u8; 3]; 17] = [
    [0x44, 0x01, 0x54],
    [0x48, 0x18, 0x6a],
    [0x47, 0x2d, 0x7b],
    [0x42, 0x40, 0x86],
    [0x3b, 0x52, 0x8b],
    [0x33, 0x63, 0x8d],
    [0x2c, 0x72, 0x8e],
    [0x26, 0x82, 0x8e],
    [0x21, 0x91, 0x8c],
    [0x1f, 0xa0, 0x88],
    [0x28, 0xae, 0x80],
    [0x3f, 0xbc, 0x73],
    [0x5e, 0xc9, 0x62],
    [0x84, 0xd4, 0x4b],
    [0xad, 0xdc, 0x30],
    [0xd8, 0xe2, 0x19],
    [0xfd, 0xe7, 0x25],
];

/// The colour of `t` (0–1, clamped; NaN → 0) on the viridis ramp, linear in sRGB between
/// the seventeen stops, as `[r, g, b]` 0–255.
pub(crate) fn ramp_rgb(t: f64) -> [u8; 3] {
    let t = if t.is_nan() { 0.0 } else { t.clamp(0.0, 1.0) };
    let pos = t * (VIRIDIS.len() - 1) as f64;
    let k = (pos.floor() as usize).min(VIRIDIS.len() - 2);
    let f = pos - k as f64;
    let (a, b) = (VIRIDIS[k], VIRIDIS[k + 1]);
    let mut out = [0u8; 3];
    for i in 0..3 {
        // Within 0..=255 because it lies between two u8 values.
        out[i] = (a[i] as f64 + f * (b[i] as f64 - a[i] as f64)).round() as u8;
    }
    out
}

/// `#rrggbb` of a colour.
pub(crate) fn hex(rgb: [u8; 3]) -> String {
    format!("#{:02x}{:02x}{:02x}", rgb[0], rgb[1], rgb[2])
}

/// The ramp stops as `(offset 0–1, #rrggbb)`, for an SVG gradient legend.
pub(crate) fn ramp_stops() -> Vec<(f64, String)> {
    VIRIDIS
        .iter()
        .enumerate()
        .map(|(k, &c)| (k as f64 / (VIRIDIS.len() - 1) as f64, hex(c)))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ramp_endpoints_and_midpoint() {
        // Endpoints of viridis: #440154 and #fde725 (matplotlib 3.11 `viridis(0)`, `viridis(1)`).
        assert_eq!(hex(ramp_rgb(0.0)), "#440154");
        assert_eq!(hex(ramp_rgb(1.0)), "#fde725");
        // Out of range and NaN clamp to the ends.
        assert_eq!(ramp_rgb(-3.0), ramp_rgb(0.0));
        assert_eq!(ramp_rgb(7.0), ramp_rgb(1.0));
        assert_eq!(ramp_rgb(f64::NAN), ramp_rgb(0.0));
        // Hand: t = 1/32 is halfway between the first two stops (68,1,84) and (72,24,106):
        // 70, 12.5 → 13, 95.
        assert_eq!(ramp_rgb(1.0 / 32.0), [70, 13, 95]);
    }

    #[test]
    fn ramp_follows_matplotlib_viridis() {
        // Reference: matplotlib 3.11 `colormaps['viridis'](t)` × 255, rounded (its 256-entry
        // table); seventeen linear stops stay within 3 of it per channel.
        for (t, want) in [
            (0.1, [72, 36, 117]),
            (0.3, [53, 95, 141]),
            (0.6, [34, 168, 132]),
            (0.9, [189, 223, 38]),
        ] {
            let got = ramp_rgb(t);
            for i in 0..3 {
                assert!(
                    (got[i] as i32 - want[i]).abs() <= 3,
                    "t = {t}: {got:?} vs {want:?}"
                );
            }
        }
    }

    #[test]
    fn zone_colours_are_okabe_ito_and_clear_of_the_rules() {
        // Every zone colour is one of the Okabe–Ito eight, none is the required or excluded
        // colour, and the six differ.
        let mut v = ZONES.to_vec();
        assert!(v.iter().all(|c| OKABE_ITO.contains(c)));
        assert!(!v.contains(&REQUIRED) && !v.contains(&EXCLUDED));
        v.sort_unstable();
        v.dedup();
        assert_eq!(v.len(), 6);
        assert_eq!(zone_colour(0), RESERVE);
        assert_eq!(zone_colour(6), zone_colour(0));
    }

    #[test]
    fn okabe_ito_hues_are_distinct() {
        let mut v = OKABE_ITO.to_vec();
        v.sort_unstable();
        v.dedup();
        assert_eq!(v.len(), 8);
        assert_eq!(ramp_stops().len(), 17);
        assert_eq!(ramp_stops()[16], (1.0, "#fde725".to_string()));
    }
}
