//! `compare.json`: a comparison for scripts, keys in a fixed order, units in key names.

use super::Comparison;
use crate::export::CAUTION;
use serde::Serialize;

#[derive(Serialize)]
struct MeasureOut<'a> {
    measure: &'a str,
    better: &'a str,
    values: &'a [f64],
    best: Vec<&'a str>,
}

#[derive(Serialize)]
struct FeatureOut<'a> {
    feature: &'a str,
    kind: &'a str,
    species: Option<&'a str>,
    scenario: Option<&'a str>,
    year: Option<i32>,
    total: f64,
    target: f64,
    protected: &'a [f64],
    protected_share_of_target: &'a [f64],
    reached: &'a [bool],
    absent: bool,
    best: Vec<&'a str>,
}

#[derive(Serialize)]
struct WarningOut<'a> {
    network: &'a str,
    warning: &'a str,
}

#[derive(Serialize)]
struct ComparisonOut<'a> {
    networks: &'a [String],
    ranking_rule: &'a str,
    ranked: Vec<&'a str>,
    warnings: Vec<WarningOut<'a>>,
    measures: Vec<MeasureOut<'a>>,
    features: Vec<FeatureOut<'a>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    zones: Option<&'a serde_json::Value>,
    caution: &'a str,
    driftplan_version: &'a str,
}

/// `compare.json`, pretty-printed, keys in this order:
/// * `networks`: names, in the order every `values`/`protected`/... array follows;
/// * `ranking_rule`: how `best` is awarded ([`super::RANKING_RULE`]); `ranked`: the networks
///   that meet the most targets, the only ones that can be best on a measure other than
///   `targets_reached`;
/// * `warnings`: `[{network, warning}]`, what to know about a given network before trusting
///   its scores (outside the region, excluded cells covered, required cells left out);
/// * `measures`: `[{measure, better, values, best}]` where `measure` carries its unit
///   (`area_km2`, `exposed_edge_km`), `better` is `higher`/`lower`/`none` and `best` lists
///   the best networks by name;
/// * `features`: `[{feature, kind, species, scenario, year, total, target, protected,
///   protected_share_of_target, reached, absent, best}]`, amounts in the feature's own unit,
///   `protected_share_of_target` = min(protected/target, 1) (0 for an absent feature);
/// * `caution`, `driftplan_version`.
///
/// Non-finite numbers are written as `null`.
pub fn compare_json(c: &Comparison) -> String {
    compare_json_with_zones(c, None)
}

/// [`compare_json`] with a `zones` member after `features` when `zones` is given (how a zoned
/// network's zones were read and each zone's share; `assess` writes it into
/// `assessment.json`).
pub fn compare_json_with_zones(c: &Comparison, zones: Option<&serde_json::Value>) -> String {
    let names =
        |idx: &[usize]| -> Vec<&str> { idx.iter().map(|&i| c.networks[i].as_str()).collect() };
    let out = ComparisonOut {
        networks: &c.networks,
        ranking_rule: super::RANKING_RULE,
        ranked: names(&c.ranked),
        warnings: c
            .warnings
            .iter()
            .map(|(network, warning)| WarningOut { network, warning })
            .collect(),
        measures: c
            .measures
            .iter()
            .map(|m| MeasureOut {
                measure: &m.name,
                better: m.better.as_str(),
                values: &m.values,
                best: names(&m.best),
            })
            .collect(),
        features: c
            .features
            .iter()
            .map(|f| FeatureOut {
                feature: &f.feature,
                kind: &f.kind,
                species: f.species.as_deref(),
                scenario: f.scenario.as_deref(),
                year: f.year,
                total: f.total,
                target: f.target,
                protected: &f.protected,
                protected_share_of_target: &f.protected_share_of_target,
                reached: &f.reached,
                absent: f.absent,
                best: names(&f.best),
            })
            .collect(),
        zones,
        caution: CAUTION,
        driftplan_version: env!("CARGO_PKG_VERSION"),
    };
    // Strings, numbers and arrays always serialise (serde_json writes non-finite floats as null).
    let mut s = serde_json::to_string_pretty(&out).unwrap_or_default();
    s.push('\n');
    s
}

#[cfg(test)]
mod tests {
    use super::super::{compare, fixtures::assessed};
    use super::*;

    #[test]
    fn parsed_back_with_serde_json() {
        let x = assessed(&[0]);
        let y = assessed(&[4, 5]);
        let c = compare(&[("x".into(), &x), ("y".into(), &y)]).unwrap();
        let text = compare_json(&c);
        let v: serde_json::Value = serde_json::from_str(&text).unwrap();
        let keys: Vec<&str> = v.as_object().unwrap().keys().map(String::as_str).collect();
        let mut want = vec![
            "networks",
            "ranking_rule",
            "ranked",
            "warnings",
            "measures",
            "features",
            "caution",
            "driftplan_version",
        ];
        want.sort_unstable();
        // serde_json's default map sorts keys; the set is what is documented.
        assert_eq!(keys, want);
        assert_eq!(v["networks"], serde_json::json!(["x", "y"]));
        let cost = &v["measures"][0];
        assert_eq!(cost["measure"], "cost");
        assert_eq!(cost["better"], "lower");
        // Hand values from the fixture: costs 1 and 5 + 6 = 11; x is cheaper.
        assert_eq!(cost["values"], serde_json::json!([1.0, 11.0]));
        assert_eq!(cost["best"], serde_json::json!(["x"]));
        let reserves = v["measures"]
            .as_array()
            .unwrap()
            .iter()
            .find(|m| m["measure"] == "reserves")
            .unwrap();
        assert_eq!(reserves["best"], serde_json::json!([]));
        let f = &v["features"][2];
        for key in [
            "feature",
            "kind",
            "species",
            "scenario",
            "year",
            "total",
            "target",
            "protected",
            "protected_share_of_target",
            "reached",
            "best",
        ] {
            assert!(f.get(key).is_some(), "missing {key}");
        }
        assert_eq!(f["kind"], "refugium");
        assert_eq!(f["protected"], serde_json::json!([0.0, 5.0]));
        assert_eq!(f["reached"], serde_json::json!([false, true]));
        // Key order in the text is the documented order.
        let pos = |k: &str| text.find(&format!("\"{k}\"")).unwrap();
        assert!(pos("networks") < pos("measures") && pos("measures") < pos("features"));
        assert!(pos("features") < pos("caution"));
    }
}
