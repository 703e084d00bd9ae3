//! `compare.csv`: a comparison in long form, one row per (measure or feature, network).

use super::Comparison;

/// Column names of `compare.csv`, in order.
///
/// * `row`: `measure` or `feature`.
/// * `name`: the measure name (unit in the name, e.g. `area_km2`) or the feature name.
/// * `kind`, `species`, `scenario`, `year`: the feature's (empty on measure rows).
/// * `network`: the network's name.
/// * `value`: the measure's value (empty on feature rows).
/// * `better`: `higher`, `lower` or `none` (not ranked); `higher` on feature rows (more protected).
/// * `best`: `true` when this network is best on the row's measure or holds the most of the
///   feature (ties all `true`); `false` otherwise and on unranked measures.
/// * `total`, `target`, `protected`: the feature's amounts in its own unit (empty on measure rows).
/// * `protected_share_of_target`: min(protected/target, 1), 0–1 (empty on measure rows).
/// * `reached`: `true`/`false` (empty on measure rows).
/// * `ranked`: `true` when the network meets the most targets of all networks compared, so it
///   competes for `best` on every measure ([`super::RANKING_RULE`]); `false`: it misses
///   targets.
pub const COMPARE_COLUMNS: [&str; 16] = [
    "row",
    "name",
    "kind",
    "species",
    "scenario",
    "year",
    "network",
    "value",
    "better",
    "best",
    "total",
    "target",
    "protected",
    "protected_share_of_target",
    "reached",
    "ranked",
];

/// `compare.csv`: columns [`COMPARE_COLUMNS`]; measure rows first (measure order, then network
/// order), then feature rows (feature order, then network order). Numbers are written in
/// shortest round-trip form.
pub fn compare_csv(c: &Comparison) -> String {
    let mut w = csv::Writer::from_writer(Vec::new());
    // Writing to an in-memory Vec cannot fail, and every record has the header's 16 fields.
    let _ = w.write_record(COMPARE_COLUMNS);
    for m in &c.measures {
        for (i, net) in c.networks.iter().enumerate() {
            let _ = w.write_record([
                "measure",
                &m.name,
                "",
                "",
                "",
                "",
                net,
                &m.values[i].to_string(),
                m.better.as_str(),
                &m.best.contains(&i).to_string(),
                "",
                "",
                "",
                "",
                "",
                &c.ranked.contains(&i).to_string(),
            ]);
        }
    }
    for f in &c.features {
        let year = f.year.map(|y| y.to_string()).unwrap_or_default();
        for (i, net) in c.networks.iter().enumerate() {
            let _ = w.write_record([
                "feature",
                &f.feature,
                &f.kind,
                f.species.as_deref().unwrap_or(""),
                f.scenario.as_deref().unwrap_or(""),
                &year,
                net,
                "",
                "higher",
                &f.best.contains(&i).to_string(),
                &f.total.to_string(),
                &f.target.to_string(),
                &f.protected[i].to_string(),
                &f.protected_share_of_target[i].to_string(),
                &f.reached[i].to_string(),
                &c.ranked.contains(&i).to_string(),
            ]);
        }
    }
    let bytes = w
        .into_inner()
        .map_err(|e| e.into_error())
        .unwrap_or_default();
    // The writer only received UTF-8 strings.
    String::from_utf8(bytes).unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::super::{compare, fixtures::assessed};
    use super::*;

    #[test]
    fn parsed_back_with_the_csv_crate() {
        let x = assessed(&[0]);
        let y = assessed(&[4, 5]);
        let c = compare(&[("x, first".into(), &x), ("y".into(), &y)]).unwrap();
        let text = compare_csv(&c);
        let mut r = csv::Reader::from_reader(text.as_bytes());
        assert_eq!(
            r.headers().unwrap(),
            &csv::StringRecord::from(COMPARE_COLUMNS.to_vec())
        );
        let rows: Vec<csv::StringRecord> = r.records().map(|r| r.unwrap()).collect();
        // 14 measures (10 + 2 shares + 2 kinds) × 2 networks, then 3 features × 2 networks.
        assert_eq!(rows.len(), 14 * 2 + 3 * 2);
        // First row: cost of network `x, first` (quoted by the writer): 1, lower, best.
        assert_eq!(
            &rows[0].iter().collect::<Vec<_>>(),
            &[
                "measure", "cost", "", "", "", "", "x, first", "1", "lower", "true", "", "", "",
                "", "", "true"
            ]
        );
        // Hand value from the fixture: y holds 5 of refugium/c against a target of 2 → reached.
        let last = rows.last().unwrap();
        assert_eq!(&last[1], "refugium/c");
        assert_eq!(&last[6], "y");
        assert_eq!(last[12].parse::<f64>().unwrap(), 5.0);
        assert_eq!(last[11].parse::<f64>().unwrap(), 2.0);
        assert_eq!(&last[13], "1");
        assert_eq!(&last[14], "true");
        assert_eq!(&last[9], "true");
        // mean_protected_share of y = 2/3 survives the text round trip exactly.
        let mean = rows
            .iter()
            .find(|r| &r[1] == "mean_protected_share" && &r[6] == "y")
            .unwrap();
        assert_eq!(
            mean[7].parse::<f64>().unwrap(),
            c.measure("mean_protected_share").unwrap().values[1]
        );
    }
}
