//! Readable, unique column / property names for per-cell outputs.

use crate::features::FeatureTable;
use crate::layers::Layer;
use std::collections::BTreeSet;

/// Columns every per-cell output starts with (GeoJSON leaves out `lon`/`lat`, which the
/// geometry already carries).
pub(crate) const FIXED: [&str; 5] = ["cell", "lon", "lat", "area_km2", "selected"];

/// Lower-cases and maps every character outside `[a-z0-9]` to `_`, collapsing runs and
/// trimming (`²`/`³` become `2`/`3`): `habitat/Silver-Bream/ssp2-4.5/2050` → `habitat_silver_bream_ssp2_4_5_2050`.
pub(crate) fn sanitize(name: &str) -> String {
    let mut out = String::with_capacity(name.len());
    for ch in name.chars().flat_map(char::to_lowercase) {
        // Superscript powers keep their meaning in units: `km²` → `km2`.
        let ch = match ch {
            '²' => '2',
            '³' => '3',
            c => c,
        };
        if ch.is_ascii_lowercase() || ch.is_ascii_digit() {
            out.push(ch);
        } else if !out.ends_with('_') {
            out.push('_');
        }
    }
    out.trim_matches('_').to_string()
}

/// Names for each layer value, then each feature amount (feature name + `_` + unit, e.g.
/// `habitat_silver_bream_ssp2_4_5_2050_km2`). A name already taken (by a fixed column or an
/// earlier name) gets `_2`, `_3`, ... so every column is unique and the order is fixed.
pub(crate) fn value_names(layers: &[Layer], features: &FeatureTable) -> Vec<String> {
    // `reserve` follows the fixed columns where a network's reserves are written.
    let mut taken: BTreeSet<String> = FIXED
        .iter()
        .chain(&["reserve"])
        .map(|s| s.to_string())
        .collect();
    let mut out = Vec::with_capacity(layers.len() + features.features.len());
    let mut add = |base: String, fallback: &str| {
        let base = if base.is_empty() {
            fallback.to_string()
        } else {
            base
        };
        let mut name = base.clone();
        let mut k = 2;
        while taken.contains(&name) {
            name = format!("{base}_{k}");
            k += 1;
        }
        taken.insert(name.clone());
        out.push(name);
    };
    for l in layers {
        add(sanitize(&l.name), "layer");
    }
    for f in &features.features {
        let unit = sanitize(&f.unit);
        let base = sanitize(&f.name);
        let full = if unit.is_empty() || base.is_empty() {
            base
        } else {
            format!("{base}_{unit}")
        };
        add(full, "feature");
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::features::{Feature, FeatureKind, Target};

    #[test]
    fn sanitized_names() {
        // Hand-worked examples of the rule in the doc comment.
        assert_eq!(
            sanitize("habitat/Silver-Bream/ssp2-4.5/2050"),
            "habitat_silver_bream_ssp2_4_5_2050"
        );
        assert_eq!(sanitize("  SST (°C) "), "sst_c");
        assert_eq!(sanitize("km²"), "km2");
        assert_eq!(sanitize("--"), "");
    }

    #[test]
    fn names_are_unique_and_keep_units() {
        let layers = vec![
            Layer {
                name: "selected".into(),
                values: vec![],
            },
            Layer {
                name: "Cost".into(),
                values: vec![],
            },
            Layer {
                name: "cost".into(),
                values: vec![],
            },
        ];
        let f = Feature {
            name: "refugium/ssp5-8.5".into(),
            kind: FeatureKind::Refugium,
            species: None,
            scenario: None,
            year: None,
            unit: "km2".into(),
            amounts: vec![],
            total: 0.0,
            target: Target::Share(0.1),
            weight: 1.0,
        };
        let t = FeatureTable {
            scenarios: vec![],
            years: vec![],
            features: vec![f],
        };
        assert_eq!(
            value_names(&layers, &t),
            vec!["selected_2", "cost", "cost_2", "refugium_ssp5_8_5_km2"]
        );
    }
}
