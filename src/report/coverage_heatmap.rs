//! Coverage through time as tables a reader can scan: per scenario, one row per species'
//! habitat or derived feature (per species where it has one), one column per year, each cell
//! the share of the target the network protects, as a number and a colour. The weakest rows
//! come first; absent features are marked, never coloured as reached. Beside them, one small
//! chart: the weakest feature's share per scenario through time against the target.

use super::chart::{line_chart, Chart, Series};
use super::escape::esc;
use crate::assess::Coverage;
use std::collections::BTreeMap;
use std::fmt::Write;

/// Shares above this are drawn at it in the chart: 200% of a target says "well protected" and
/// keeps the part around 100% readable.
const CAP_PERCENT: f64 = 200.0;

/// Share of the target protected, in per cent; `None` when the feature has no positive target.
pub(crate) fn percent_of_target(c: &Coverage) -> Option<f64> {
    (c.target > 0.0 && c.target.is_finite() && c.protected.is_finite())
        .then(|| 100.0 * c.protected / c.target)
}

/// One cell of the table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Share {
    /// Protected ÷ target in per cent (the lowest when several features share the cell).
    Percent(f64),
    /// The feature has no amount in the region that year.
    Absent,
}

/// The colour bins: (lowest per cent, fill, words). Orange shades below the target, blue at
/// or above it (Okabe–Ito orange and sky blue, lightened; readable with every colour-vision
/// type and in grey, since lightness rises with the share).
pub(crate) const BINS: [(f64, &str, &str); 5] = [
    (0.0, "#e69f00", "below 50%"),
    (50.0, "#f3c76b", "50–90%"),
    (90.0, "#fbe7bd", "90–100%"),
    (100.0, "#cde8f7", "reached (100–150%)"),
    (150.0, "#8fcbee", "150% or more"),
];

/// Fill for a share of target.
pub(crate) fn fill(percent: f64) -> &'static str {
    BINS.iter()
        .rev()
        .find(|(lo, _, _)| percent >= *lo)
        .map_or(BINS[0].1, |b| b.1)
}

/// The rows of one scenario: label and per year its share, weakest row first (lowest share
/// over its years; rows that are absent every year last), then by label.
pub(crate) fn rows(coverage: &[&Coverage]) -> Vec<(String, BTreeMap<i32, Share>)> {
    let mut out: BTreeMap<String, BTreeMap<i32, Share>> = BTreeMap::new();
    for c in coverage {
        let Some(year) = c.year else { continue };
        let label = match (&c.species, c.kind.as_str()) {
            (Some(sp), "habitat") => sp.clone(),
            (Some(sp), kind) => format!("{kind}: {sp}"),
            (None, kind) => kind.to_string(),
        };
        let share = if c.absent {
            Share::Absent
        } else {
            match percent_of_target(c) {
                Some(p) => Share::Percent(p),
                None => continue,
            }
        };
        let e = out.entry(label).or_default().entry(year).or_insert(share);
        *e = match (*e, share) {
            (Share::Percent(a), Share::Percent(b)) => Share::Percent(a.min(b)),
            (Share::Absent, s) | (s, Share::Absent) => s,
        };
    }
    let lowest = |r: &BTreeMap<i32, Share>| {
        r.values()
            .filter_map(|s| match s {
                Share::Percent(p) => Some(*p),
                Share::Absent => None,
            })
            .fold(f64::INFINITY, f64::min)
    };
    let mut v: Vec<(String, BTreeMap<i32, Share>)> = out.into_iter().collect();
    v.sort_by(|a, b| lowest(&a.1).total_cmp(&lowest(&b.1)).then(a.0.cmp(&b.0)));
    v
}

/// Coverage per scenario (scenario name order; features without a scenario under "all
/// scenarios"): headings, tables, the colour key and the weakest-feature chart.
pub(crate) fn coverage_section(coverage: &[Coverage]) -> String {
    let mut by_scenario: BTreeMap<String, Vec<&Coverage>> = BTreeMap::new();
    for c in coverage.iter().filter(|c| c.year.is_some()) {
        let key = c.scenario.clone().unwrap_or_else(|| "all scenarios".into());
        by_scenario.entry(key).or_default().push(c);
    }
    let mut s = String::new();
    let mut weakest: Vec<Series> = Vec::new();
    let mut all_years: Vec<i32> = Vec::new();
    for (name, cov) in &by_scenario {
        let rows = rows(cov);
        if rows.is_empty() {
            continue;
        }
        let mut years: Vec<i32> = rows.iter().flat_map(|r| r.1.keys().copied()).collect();
        years.sort_unstable();
        years.dedup();
        all_years.extend(&years);
        let _ = write!(
            s,
            "<table class=\"heat\" data-scenario=\"{}\"><caption>Scenario {}: share of target protected</caption><tr><th></th>",
            esc(name),
            esc(name)
        );
        for y in &years {
            let _ = write!(s, "<th>{y}</th>");
        }
        s.push_str("</tr>\n");
        for (label, shares) in &rows {
            let _ = write!(s, "<tr><th>{}</th>", esc(label));
            for y in &years {
                match shares.get(y) {
                    Some(Share::Percent(p)) => {
                        let _ = write!(
                            s,
                            "<td style=\"background:{}\">{:.0}%</td>",
                            fill(*p),
                            p.round() + 0.0
                        );
                    }
                    Some(Share::Absent) => {
                        s.push_str("<td class=\"absent\">absent</td>");
                    }
                    None => s.push_str("<td></td>"),
                }
            }
            s.push_str("</tr>\n");
        }
        s.push_str("</table>\n");
        let points: Vec<(f64, f64)> = years
            .iter()
            .filter_map(|y| {
                rows.iter()
                    .filter_map(|r| match r.1.get(y) {
                        Some(Share::Percent(p)) => Some(*p),
                        _ => None,
                    })
                    .reduce(f64::min)
                    .map(|p| (*y as f64, p.min(CAP_PERCENT)))
            })
            .collect();
        if !points.is_empty() {
            weakest.push(Series {
                label: name.clone(),
                points,
            });
        }
    }
    if s.is_empty() {
        return s;
    }
    s.push_str("<p class=\"small key\">");
    for (_, colour, words) in BINS {
        let _ = write!(
            s,
            "<span class=\"swatch\" style=\"background:{colour}\"></span>{} ",
            esc(words)
        );
    }
    s.push_str(
        "<span class=\"swatch absent\"></span>absent (no habitat in the region that year)</p>\n",
    );
    if weakest.len() > 1 || weakest.first().is_some_and(|w| w.points.len() > 1) {
        all_years.sort_unstable();
        all_years.dedup();
        s.push_str(&line_chart(&Chart {
            title: "Weakest feature per scenario",
            x_label: "year",
            y_label: "lowest share of target protected (%, capped at 200)",
            series: &weakest,
            y_range: Some((0.0, CAP_PERCENT)),
            reference: Some((100.0, "target")),
            x_ticks: Some(all_years.iter().map(|&y| y as f64).collect()),
        }));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cov(kind: &str, species: Option<&str>, year: i32, protected: f64, absent: bool) -> Coverage {
        Coverage {
            feature: format!("{kind}/{species:?}/s/{year}"),
            kind: kind.into(),
            species: species.map(str::to_string),
            scenario: Some("ssp2-4.5".into()),
            year: Some(year),
            total: if absent { 0.0 } else { 100.0 },
            protected,
            target: if absent { 0.0 } else { 30.0 },
            shortfall: 0.0,
            reached: false,
            absent,
        }
    }

    #[test]
    fn weakest_rows_first_with_hand_shares_and_absent_marked() {
        // Hand: cod 30/30 = 100% then 15/30 = 50%; hake 45/30 = 150% both years; the
        // refugium 27/30 = 90%; ling absent in 2050 and 60% in 2030.
        let c = [
            cov("habitat", Some("cod"), 2030, 30.0, false),
            cov("habitat", Some("cod"), 2050, 15.0, false),
            cov("habitat", Some("hake"), 2030, 45.0, false),
            cov("habitat", Some("hake"), 2050, 45.0, false),
            cov("refugium", None, 2050, 27.0, false),
            cov("habitat", Some("ling"), 2030, 18.0, false),
            cov("habitat", Some("ling"), 2050, 0.0, true),
        ];
        let refs: Vec<&Coverage> = c.iter().collect();
        let r = rows(&refs);
        let labels: Vec<&str> = r.iter().map(|x| x.0.as_str()).collect();
        assert_eq!(labels, ["cod", "ling", "refugium", "hake"]);
        assert_eq!(r[0].1[&2050], Share::Percent(50.0));
        assert_eq!(r[1].1[&2050], Share::Absent);
        assert_eq!(r[1].1[&2030], Share::Percent(60.0));
        let html = coverage_section(&c);
        assert!(
            html.contains("<td style=\"background:#f3c76b\">50%</td>"),
            "{html}"
        );
        assert!(
            html.contains("<td style=\"background:#8fcbee\">150%</td>"),
            "{html}"
        );
        assert!(html.contains("<td class=\"absent\">absent</td>"), "{html}");
        // The weakest-feature chart: one scenario's line, 2030 lowest 60%, 2050 lowest 50%.
        assert!(html.contains("Weakest feature per scenario"), "{html}");
    }

    #[test]
    fn colour_bins_by_hand() {
        assert_eq!(fill(0.0), "#e69f00");
        assert_eq!(fill(49.9), "#e69f00");
        assert_eq!(fill(89.0), "#f3c76b");
        assert_eq!(fill(99.5), "#fbe7bd");
        assert_eq!(fill(100.0), "#cde8f7");
        assert_eq!(fill(400.0), "#8fcbee");
    }
}
