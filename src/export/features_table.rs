//! `features.csv`: one row per feature with its totals and target, for inspection.

use super::ExportError;
use crate::features::FeatureTable;

/// Columns: feature, kind, species, scenario, year, unit, cells, total, target.
pub fn features_csv(table: &FeatureTable) -> Result<String, ExportError> {
    let mut w = csv::Writer::from_writer(Vec::new());
    // Writing into memory cannot fail for I/O reasons; any error is still reported, not unwrapped.
    let fail = |reason: String| ExportError::Io {
        path: "features.csv".into(),
        source: std::io::Error::other(reason),
    };
    let csv_err = |e: csv::Error| fail(e.to_string());
    w.write_record([
        "feature", "kind", "species", "scenario", "year", "unit", "cells", "total", "target",
    ])
    .map_err(csv_err)?;
    for f in &table.features {
        let scenario = f
            .scenario
            .and_then(|s| table.scenarios.get(s))
            .cloned()
            .unwrap_or_default();
        w.write_record([
            f.name.clone(),
            f.kind.as_str().to_string(),
            f.species.clone().unwrap_or_default(),
            scenario,
            f.year.map(|y| y.to_string()).unwrap_or_default(),
            f.unit.clone(),
            f.amounts.len().to_string(),
            format!("{:.6}", f.total),
            format!("{:.6}", f.target.amount(f.total)),
        ])
        .map_err(csv_err)?;
    }
    let bytes = w.into_inner().map_err(|e| fail(e.to_string()))?;
    String::from_utf8(bytes).map_err(|e| fail(e.to_string()))
}

/// `edge-shifts.csv`: per species × scenario, leading and trailing edge shifts (km per decade,
/// poleward positive; empty where a species has too little habitat to place an edge).
pub fn edge_shifts_csv(
    shifts: &[crate::features::derive::EdgeShift],
) -> Result<String, ExportError> {
    let fail = |reason: String| ExportError::Io {
        path: "edge-shifts.csv".into(),
        source: std::io::Error::other(reason),
    };
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "species",
        "scenario",
        "leading_km_per_decade",
        "trailing_km_per_decade",
        "clipped",
    ])
    .map_err(|e| fail(e.to_string()))?;
    let num = |v: Option<f64>| v.map(|x| format!("{x:.3}")).unwrap_or_default();
    for s in shifts {
        w.write_record([
            s.species.clone(),
            s.scenario.clone(),
            num(s.leading_km_per_decade),
            num(s.trailing_km_per_decade),
            s.clipped_word().to_string(),
        ])
        .map_err(|e| fail(e.to_string()))?;
    }
    let bytes = w.into_inner().map_err(|e| fail(e.to_string()))?;
    String::from_utf8(bytes).map_err(|e| fail(e.to_string()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::features::{Feature, FeatureKind, Target};

    #[test]
    fn one_row_per_feature_with_target_amount() {
        let table = FeatureTable {
            scenarios: vec!["s1".into()],
            years: vec![2050],
            features: vec![Feature {
                name: "habitat/a/s1/2050".into(),
                kind: FeatureKind::Habitat,
                species: Some("a".into()),
                scenario: Some(0),
                year: Some(2050),
                unit: "km2".into(),
                amounts: vec![(0, 2.0), (3, 6.0)],
                total: 8.0,
                target: Target::Share(0.25),
                weight: 1.0,
            }],
        };
        let text = features_csv(&table).unwrap();
        // Target 25% of 8 km² = 2 km² (hand computation).
        assert_eq!(
            text.lines().nth(1).unwrap(),
            "habitat/a/s1/2050,habitat,a,s1,2050,km2,2,8.000000,2.000000"
        );
    }
}
