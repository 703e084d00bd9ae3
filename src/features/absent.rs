//! Absent features: a feature with no amount anywhere in the region (zero total) in its
//! scenario and year, e.g. a species that has left the region under strong warming. Absent is
//! its own state: its target (a share of nothing) is never counted as reached. This module finds
//! them in a [`FeatureTable`] and words them for people.

use super::{FeatureKind, FeatureTable};
use std::collections::BTreeMap;

/// Whether a feature is absent: no positive amount in any cell.
pub fn is_absent(f: &super::Feature) -> bool {
    !f.amounts.iter().any(|(_, a)| *a > 0.0)
}

/// Names of the species whose habitat is absent in every scenario and year of the table (in
/// first-appearance order): most likely a wrong file or column, so a plan error unless the
/// plan says the species may be absent.
pub fn species_nowhere(table: &FeatureTable) -> Vec<String> {
    let mut seen: Vec<(String, bool)> = Vec::new();
    for f in table
        .features
        .iter()
        .filter(|f| f.kind == FeatureKind::Habitat)
    {
        let Some(sp) = &f.species else { continue };
        let present = !is_absent(f);
        match seen.iter_mut().find(|(n, _)| n == sp) {
            Some(entry) => entry.1 |= present,
            None => seen.push((sp.clone(), present)),
        }
    }
    seen.into_iter()
        .filter(|(_, present)| !present)
        .map(|(n, _)| n)
        .collect()
}

/// One message per species of `species` (the plan's, in order) with no habitat anywhere in
/// `table` that the plan does not allow to be absent (`may_be_absent`), naming its key and
/// layer and the way out. Empty when every species has habitat somewhere or may be absent.
pub fn refused_species(species: &[crate::plan::SpeciesPlan], table: &FeatureTable) -> Vec<String> {
    let nowhere = species_nowhere(table);
    species
        .iter()
        .enumerate()
        .filter(|(_, sp)| !sp.may_be_absent && nowhere.contains(&sp.name))
        .map(|(i, sp)| {
            let field = sp
                .habitat
                .field
                .as_deref()
                .map(|f| format!(" (column/property `{f}`)"))
                .unwrap_or_default();
            format!(
                "species[{i}] `{}`: its habitat layer `{}`{field} gives no habitat in any cell of the region in any scenario or year; check the file, column and coordinates, or set `may_be_absent = true` in that [[species]] table if the species truly has no habitat here",
                sp.name, sp.habitat.path
            )
        })
        .collect()
}

/// `a`, `a and b`, `a, b and c`.
fn and_list(items: &[String]) -> String {
    match items {
        [] => String::new(),
        [one] => one.clone(),
        [init @ .., last] => format!("{} and {last}", init.join(", ")),
    }
}

/// One sentence per absent species × scenario (habitat) and per absent derived kind ×
/// species × scenario, years listed, in feature-table order, e.g. "species cod has no habitat
/// in the region in ssp5-8.5 in 2070 and 2090" or "leading-edge of cod in ssp5-8.5 in 2070 and
/// 2090 has no amount in the region". Empty when nothing is absent.
pub fn absent_notes(table: &FeatureTable) -> Vec<String> {
    // (kind, species, scenario index) → years, in first-appearance order.
    type Group = (FeatureKind, Option<String>, Option<usize>);
    let mut groups: Vec<(Group, Vec<String>)> = Vec::new();
    for f in table.features.iter().filter(|f| is_absent(f)) {
        let key = (f.kind, f.species.clone(), f.scenario);
        let year = f.year.map(|y| y.to_string());
        match groups.iter_mut().find(|(k, _)| *k == key) {
            Some((_, years)) => years.extend(year),
            None => groups.push((key, year.into_iter().collect())),
        }
    }
    groups
        .into_iter()
        .map(|((kind, species, s), years)| {
            let scenario = s
                .and_then(|i| table.scenarios.get(i))
                .map(|n| format!(" in {n}"))
                .unwrap_or_default();
            let when = if years.is_empty() {
                String::new()
            } else {
                format!(" in {}", and_list(&years))
            };
            match (kind, species) {
                (FeatureKind::Habitat, Some(sp)) => {
                    format!("species {sp} has no habitat in the region{scenario}{when}")
                }
                (k, Some(sp)) => format!(
                    "{} of {sp}{scenario}{when} has no amount in the region",
                    k.as_str()
                ),
                (k, None) => format!("{}{scenario}{when} has no amount in the region", k.as_str()),
            }
        })
        .collect()
}

/// At most `max` notes, then one line counting the rest (they are all in `coverage.csv`).
pub fn first_notes(mut notes: Vec<String>, max: usize) -> Vec<String> {
    if notes.len() > max {
        let rest = notes.len() - max;
        notes.truncate(max);
        notes.push(format!(
            "… and {rest} more (coverage.csv marks every absent feature)"
        ));
    }
    notes
}

/// Absent features per kind, for a count line (`habitat` 3, `leading-edge` 2 …), kinds in
/// vocabulary order.
pub fn absent_counts(table: &FeatureTable) -> BTreeMap<FeatureKind, usize> {
    let mut m = BTreeMap::new();
    for f in table.features.iter().filter(|f| is_absent(f)) {
        *m.entry(f.kind).or_insert(0) += 1;
    }
    m
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::features::{Feature, Target};

    fn habitat(species: &str, scenario: usize, year: i32, amounts: Vec<(u32, f64)>) -> Feature {
        Feature {
            name: format!("habitat/{species}/s{scenario}/{year}"),
            kind: FeatureKind::Habitat,
            species: Some(species.into()),
            scenario: Some(scenario),
            year: Some(year),
            unit: "km2".into(),
            total: amounts.iter().map(|a| a.1).sum(),
            amounts,
            target: Target::Share(0.3),
            weight: 1.0,
        }
    }

    #[test]
    fn notes_group_years_and_species_nowhere_is_found() {
        let table = FeatureTable {
            scenarios: vec!["ssp1-2.6".into(), "ssp5-8.5".into()],
            years: vec![2050, 2070, 2090],
            features: vec![
                // cod: present in ssp1-2.6; gone from ssp5-8.5 in 2070 and 2090.
                habitat("cod", 0, 2050, vec![(0, 1.0)]),
                habitat("cod", 0, 2090, vec![(0, 1.0)]),
                habitat("cod", 1, 2050, vec![(1, 2.0)]),
                habitat("cod", 1, 2070, vec![]),
                habitat("cod", 1, 2090, vec![(3, 0.0)]),
                // ghost: no habitat anywhere.
                habitat("ghost", 0, 2050, vec![]),
                habitat("ghost", 1, 2050, vec![]),
                Feature {
                    kind: FeatureKind::LeadingEdge,
                    name: "leading-edge/ghost/ssp1-2.6".into(),
                    ..habitat("ghost", 0, 2050, vec![])
                },
            ],
        };
        assert_eq!(
            absent_notes(&table),
            vec![
                "species cod has no habitat in the region in ssp5-8.5 in 2070 and 2090",
                "species ghost has no habitat in the region in ssp1-2.6 in 2050",
                "species ghost has no habitat in the region in ssp5-8.5 in 2050",
                "leading-edge of ghost in ssp1-2.6 in 2050 has no amount in the region",
            ]
        );
        assert_eq!(species_nowhere(&table), vec!["ghost"]);
        let counts = absent_counts(&table);
        assert_eq!(counts[&FeatureKind::Habitat], 4);
        assert_eq!(counts[&FeatureKind::LeadingEdge], 1);
        assert_eq!(
            and_list(&["a".into(), "b".into(), "c".into()]),
            "a, b and c"
        );
        let few = first_notes(absent_notes(&table), 2);
        assert_eq!(few.len(), 3);
        assert!(few[2].starts_with("… and 2 more"), "{few:?}");
    }
}
