//! `coverage.csv`: one row per feature with its total, protected amount, target and shortfall.

use crate::assess::Assessment;

/// Column names of `coverage.csv`, in order.
pub const COVERAGE_COLUMNS: [&str; 11] = [
    "feature",
    "kind",
    "species",
    "scenario",
    "year",
    "total",
    "protected",
    "target",
    "shortfall",
    "reached",
    "absent",
];

/// `coverage.csv`: columns [`COVERAGE_COLUMNS`], one row per feature in assessment order.
/// Missing species/scenario/year are empty fields; amounts are in each feature's own unit,
/// written in shortest round-trip form; `reached` is `true`/`false`; `absent` is `true` for a
/// feature with no amount anywhere in the region (never reached, see
/// [`crate::features::absent`]).
pub fn coverage_csv(assessment: &Assessment) -> String {
    let rows = assessment.coverage.iter().map(|c| {
        vec![
            c.feature.clone(),
            c.kind.clone(),
            c.species.clone().unwrap_or_default(),
            c.scenario.clone().unwrap_or_default(),
            c.year.map(|y| y.to_string()).unwrap_or_default(),
            c.total.to_string(),
            c.protected.to_string(),
            c.target.to_string(),
            c.shortfall.to_string(),
            c.reached.to_string(),
            c.absent.to_string(),
        ]
    });
    csv_text(&COVERAGE_COLUMNS, rows)
}

/// Column names of `reserves.csv`.
pub const RESERVE_COLUMNS: [&str; 4] = ["reserve", "cells", "area_km2", "cost"];

/// `reserves.csv`: one row per reserve, numbered from 1 in assessment order (largest first, as
/// in `network.geojson`), with its cell count, sea area and cost.
pub fn reserves_csv(assessment: &Assessment) -> String {
    let rows = assessment.reserves.iter().enumerate().map(|(i, r)| {
        vec![
            (i + 1).to_string(),
            r.cells.len().to_string(),
            format!("{:.6}", r.area_km2),
            format!("{:.6}", r.cost),
        ]
    });
    csv_text(&RESERVE_COLUMNS, rows)
}

/// `reserves.csv` of a zoned network: the [`RESERVE_COLUMNS`] (cost with each zone's cost
/// share), then per plan zone (in `zone_names` order) `cells_<zone>` and `area_km2_<zone>`: the
/// reserve's cells and sea area in that zone. `shares` are `assess::zones::apply_zones`'s.
pub fn reserves_csv_zoned(
    assessment: &Assessment,
    zone_names: &[String],
    shares: &[crate::assess::zones::ZoneShare],
) -> String {
    let mut header: Vec<String> = RESERVE_COLUMNS.iter().map(|c| c.to_string()).collect();
    for z in zone_names {
        header.push(format!("cells_{z}"));
        header.push(format!("area_km2_{z}"));
    }
    let rows = assessment.reserves.iter().enumerate().map(|(i, r)| {
        let mut row = vec![
            (i + 1).to_string(),
            r.cells.len().to_string(),
            format!("{:.6}", r.area_km2),
            format!("{:.6}", r.cost),
        ];
        for z in zone_names {
            let s = shares
                .iter()
                .find(|s| s.reserve == Some(i + 1) && &s.zone == z);
            row.push(s.map_or(0, |s| s.cells).to_string());
            row.push(format!("{:.6}", s.map_or(0.0, |s| s.area_km2) + 0.0));
        }
        row
    });
    let header: Vec<&str> = header.iter().map(String::as_str).collect();
    csv_text(&header, rows)
}

/// CSV text of a header and rows (quoted where a field needs it, by the csv crate). Rows may
/// differ in length from the header only by a caller bug; such rows are written as they are.
pub fn csv_text(header: &[&str], rows: impl IntoIterator<Item = Vec<String>>) -> String {
    let mut w = csv::WriterBuilder::new()
        .flexible(true)
        .from_writer(Vec::new());
    // Writing to an in-memory Vec cannot fail (the csv crate only reports I/O errors here,
    // and `flexible` turns off the record-length check).
    let _ = w.write_record(header);
    for r in rows {
        let _ = w.write_record(&r);
    }
    let bytes = w
        .into_inner()
        .map_err(|e| e.into_error())
        .unwrap_or_default();
    // The writer only ever received UTF-8 strings.
    String::from_utf8(bytes).unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::assess::Coverage;

    fn empty_assessment() -> Assessment {
        Assessment {
            coverage: vec![],
            cost: 0.0,
            area_km2: 0.0,
            share_of_region: 0.0,
            reserves: vec![],
            exposed_edge_km: 0.0,
            targets_reached: 0,
            targets_absent: 0,
            boundary_edge_km: 0.0,
            cells_selected: 0,
            compactness_ratio: f64::NAN,
            largest_gap_km: 0.0,
        }
    }

    #[test]
    fn reserves_in_order_with_sizes() {
        let mut a = empty_assessment();
        a.reserves = vec![
            crate::assess::Reserve {
                cells: vec![0, 1, 5],
                area_km2: 300.0,
                cost: 6.0,
            },
            crate::assess::Reserve {
                cells: vec![3],
                area_km2: 100.0,
                cost: 3.0,
            },
        ];
        // Hand-written expected text.
        assert_eq!(
            reserves_csv(&a),
            "reserve,cells,area_km2,cost\n1,3,300.000000,6.000000\n2,1,100.000000,3.000000\n"
        );
    }

    #[test]
    fn quotes_names_with_commas() {
        let a = Assessment {
            coverage: vec![Coverage {
                feature: "habitat/cod, juvenile".into(),
                kind: "habitat".into(),
                species: None,
                scenario: Some("ssp2-4.5".into()),
                year: Some(2050),
                total: 10.0,
                protected: 2.5,
                target: 3.0,
                shortfall: 0.5,
                reached: false,
                absent: false,
            }],
            ..empty_assessment()
        };
        // Expected text written out by hand following RFC 4180 quoting.
        assert_eq!(
            coverage_csv(&a),
            "feature,kind,species,scenario,year,total,protected,target,shortfall,reached,absent\n\
             \"habitat/cod, juvenile\",habitat,,ssp2-4.5,2050,10,2.5,3,0.5,false,false\n"
        );
    }
}
