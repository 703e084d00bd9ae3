//! The plan's `[[zones]]`: management zones a chosen cell can take (e.g. `no-take` and
//! `partial-use`), each with its own cost share, feature credit, zone target and cells it must
//! or may not take. Listed strictest first: a network given without zones (assess) is scored as
//! if every chosen cell were in the first zone.
//!
//! ```toml
//! [[zones]]
//! name = "no-take"
//! target = 0.1                  # at least 10 % of each feature's total inside no-take cells
//!
//! [[zones]]
//! name = "partial-use"
//! cost_share = 0.4              # 40 % of the forgone-fishing cost is lost here
//! credit = 0.5                  # half of each feature's amount counts toward its target
//! credit_by_kind = { refugium = 0.2 }
//! credit_by_species = { "harbour-seagrass" = 0.8 }
//! excluded = { path = "../demo-data/spawning-grounds.geojson" }
//! ```

use serde::Deserialize;

use super::{reference, Checker, Extra, LayerTemplate, Missing, RawLayer, Sampling};

/// One zone as the plan states it.
#[derive(Debug, Clone, PartialEq)]
pub struct ZonePlan {
    /// Zone name (used in outputs).
    pub name: String,
    /// Share of a cell's cost paid when it takes this zone (default 1).
    pub cost_share: f64,
    /// Share of every feature's amount that counts toward its target in this zone (default 1).
    pub credit: f64,
    /// Credit by feature kind (`habitat`, `corridor`, `leading-edge`, `trailing-edge`,
    /// `refugium`, `boundary`, `distinctness`), over `credit`.
    pub credit_by_kind: Vec<(String, f64)>,
    /// Credit by species name, over the kind's and `credit`.
    pub credit_by_species: Vec<(String, f64)>,
    /// Share of each targeted feature's total that must lie in cells of this zone.
    pub target: Option<f64>,
    /// Cells mostly inside these polygons must take this zone (they are in every network).
    pub required: Option<LayerTemplate>,
    /// Cells touching these polygons may not take this zone.
    pub excluded: Option<LayerTemplate>,
}

impl ZonePlan {
    /// The credit of a feature of `kind` (its plan word) and `species` in this zone.
    pub fn credit_for(&self, kind: &str, species: Option<&str>) -> f64 {
        if let Some(sp) = species {
            if let Some((_, c)) = self.credit_by_species.iter().find(|(s, _)| s == sp) {
                return *c;
            }
        }
        self.credit_by_kind
            .iter()
            .find(|(k, _)| k == kind)
            .map_or(self.credit, |(_, c)| *c)
    }
}

/// The feature kinds a credit may name.
pub const KINDS: [&str; 8] = [
    "habitat",
    "corridor",
    "leading-edge",
    "trailing-edge",
    "refugium",
    "boundary",
    "distinctness",
    "reachability",
];

#[derive(Deserialize)]
pub(crate) struct RawZone {
    name: Option<String>,
    cost_share: Option<f64>,
    credit: Option<f64>,
    credit_by_kind: Option<std::collections::BTreeMap<String, f64>>,
    credit_by_species: Option<std::collections::BTreeMap<String, f64>>,
    target: Option<f64>,
    required: Option<RawLayer>,
    excluded: Option<RawLayer>,
    #[serde(flatten)]
    extra: Extra,
}

/// Validates `[[zones]]`, naming each problem `zones[i].key`.
pub(crate) fn check(ck: &mut Checker, raw: &[RawZone], species: &[&str]) -> Vec<ZonePlan> {
    let mut out: Vec<ZonePlan> = Vec::new();
    for (i, z) in raw.iter().enumerate() {
        let key = |k: &str| format!("zones[{i}].{k}");
        ck.unknown(
            &format!("zones[{i}]"),
            &z.extra,
            &reference::keys_of("zones[]"),
        );
        let name = match &z.name {
            Some(n) if super::valid_name(n) => n.clone(),
            Some(n) => {
                ck.push(
                    key("name"),
                    format!("`{n}` is not a usable name; use letters, digits, `-`, `_` or `.`"),
                );
                n.clone()
            }
            None => {
                ck.push(
                    key("name"),
                    "missing: each zone needs a name, e.g. `name = \"no-take\"`",
                );
                format!("zone-{}", i + 1)
            }
        };
        if out.iter().any(|o| o.name == name) {
            ck.push(key("name"), format!("zone `{name}` is listed twice"));
        }
        let non_negative = |ck: &mut Checker, k: String, v: f64| {
            if !(v.is_finite() && v >= 0.0) {
                ck.push(
                    k,
                    format!("must be a finite number ≥ 0 (a share, 1 = all of it), got {v}"),
                );
            }
            v
        };
        let cost_share = z
            .cost_share
            .map_or(1.0, |v| non_negative(ck, key("cost_share"), v));
        let credit = z.credit.map_or(1.0, |v| non_negative(ck, key("credit"), v));
        let mut credit_by_kind = Vec::new();
        for (k, v) in z.credit_by_kind.iter().flatten() {
            if !KINDS.contains(&k.as_str()) {
                ck.push(
                    key(&format!("credit_by_kind.{k}")),
                    format!("not a feature kind; expected one of: {}", KINDS.join(", ")),
                );
            }
            credit_by_kind.push((
                k.clone(),
                non_negative(ck, key(&format!("credit_by_kind.{k}")), *v),
            ));
        }
        let mut credit_by_species = Vec::new();
        for (s, v) in z.credit_by_species.iter().flatten() {
            if !species.contains(&s.as_str()) {
                ck.push(
                    key(&format!("credit_by_species.{s}")),
                    format!(
                        "no species `{s}` in the plan; expected one of: {}",
                        species.join(", ")
                    ),
                );
            }
            credit_by_species.push((
                s.clone(),
                non_negative(ck, key(&format!("credit_by_species.{s}")), *v),
            ));
        }
        let target = z.target.map(|v| ck.share(&key("target"), v, true));
        let polygons = |ck: &mut Checker, what: &str, raw: &Option<RawLayer>| {
            raw.as_ref().and_then(|r| {
                let t = ck.layer(&key(what), r, Missing::Zero)?;
                if t.sampling != Sampling::AreaShare {
                    ck.push(
                        key(&format!("{what}.sampling")),
                        "zone areas must be GeoJSON polygons (area-share)",
                    );
                }
                ck.template_files(&key(what), &t, &[], &[], &[]);
                Some(t)
            })
        };
        let required = polygons(ck, "required", &z.required);
        let excluded = polygons(ck, "excluded", &z.excluded);
        out.push(ZonePlan {
            name,
            cost_share,
            credit,
            credit_by_kind,
            credit_by_species,
            target,
            required,
            excluded,
        });
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn species_credit_beats_kind_credit_beats_the_zone_credit() {
        let z = ZonePlan {
            name: "partial-use".into(),
            cost_share: 0.4,
            credit: 0.5,
            credit_by_kind: vec![("refugium".into(), 0.2)],
            credit_by_species: vec![("cod".into(), 0.8)],
            target: None,
            required: None,
            excluded: None,
        };
        assert_eq!(z.credit_for("habitat", Some("hake")), 0.5);
        assert_eq!(z.credit_for("refugium", Some("hake")), 0.2);
        assert_eq!(z.credit_for("refugium", Some("cod")), 0.8);
        assert_eq!(z.credit_for("boundary", None), 0.5);
    }
}
