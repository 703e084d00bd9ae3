//! Coverage through time: for each scenario, the share of each target the network holds in
//! each year. One line per species (habitat) or per feature kind; when that would be more
//! lines than a reader can follow, the lowest and the median share across all of them.

use super::chart::{line_chart, Chart, Series};
use crate::assess::Coverage;
use std::collections::BTreeMap;

/// Most lines per chart before falling back to lowest and median (eight Okabe–Ito hues).
const MAX_LINES: usize = 8;
/// Shares above this are drawn at it: 200% of a target says "well protected" and keeps the
/// interesting part (around 100%) readable.
pub(crate) const CAP_PERCENT: f64 = 200.0;

/// Share of the target protected, in per cent; `None` when the feature has no positive target.
pub(crate) fn percent_of_target(c: &Coverage) -> Option<f64> {
    (c.target > 0.0 && c.target.is_finite() && c.protected.is_finite())
        .then(|| 100.0 * c.protected / c.target)
}

/// The lines of one scenario: per line label, per year, the lowest share among its features.
fn lines(rows: &[&Coverage]) -> BTreeMap<String, BTreeMap<i32, f64>> {
    let mut out: BTreeMap<String, BTreeMap<i32, f64>> = BTreeMap::new();
    for c in rows {
        let (Some(year), Some(p)) = (c.year, percent_of_target(c)) else {
            continue;
        };
        let label = match &c.species {
            Some(sp) => format!("{} {sp}", c.kind),
            None => c.kind.clone(),
        };
        let e = out.entry(label).or_default().entry(year).or_insert(p);
        *e = e.min(p);
    }
    out
}

/// Median of a non-empty slice (mean of the middle two for an even count).
pub(crate) fn median(v: &mut [f64]) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        (v[n / 2 - 1] + v[n / 2]) / 2.0
    }
}

/// The series drawn for one scenario.
pub(crate) fn scenario_series(rows: &[&Coverage]) -> Vec<Series> {
    let lines = lines(rows);
    if lines.len() <= MAX_LINES {
        return lines
            .into_iter()
            .map(|(label, pts)| Series {
                label,
                points: pts.into_iter().map(|(y, p)| (y as f64, p)).collect(),
            })
            .collect();
    }
    let mut by_year: BTreeMap<i32, Vec<f64>> = BTreeMap::new();
    for c in rows {
        if let (Some(y), Some(p)) = (c.year, percent_of_target(c)) {
            by_year.entry(y).or_default().push(p);
        }
    }
    let lowest = by_year
        .iter()
        .map(|(&y, v)| (y as f64, v.iter().copied().fold(f64::INFINITY, f64::min)))
        .collect();
    let middle = by_year
        .iter_mut()
        .map(|(&y, v)| (y as f64, median(v)))
        .collect();
    vec![
        Series {
            label: format!("lowest of {} features", rows.len()),
            points: lowest,
        },
        Series {
            label: "median".into(),
            points: middle,
        },
    ]
}

/// One chart per scenario (scenario name order; features without a scenario under
/// "all scenarios"), only for scenarios with year-specific targets.
pub(crate) fn coverage_charts(coverage: &[Coverage]) -> Vec<String> {
    let mut by_scenario: BTreeMap<String, Vec<&Coverage>> = BTreeMap::new();
    for c in coverage.iter().filter(|c| c.year.is_some()) {
        let key = c.scenario.clone().unwrap_or_else(|| "all scenarios".into());
        by_scenario.entry(key).or_default().push(c);
    }
    by_scenario
        .iter()
        .filter_map(|(name, rows)| {
            let series = scenario_series(rows);
            if series.is_empty() {
                return None;
            }
            let mut years: Vec<i32> = rows.iter().filter_map(|c| c.year).collect();
            years.sort_unstable();
            years.dedup();
            let title = format!("Scenario {name}: share of target protected");
            Some(line_chart(&Chart {
                title: &title,
                x_label: "year",
                y_label: "protected ÷ target (%, capped at 200)",
                series: &series,
                y_range: Some((0.0, CAP_PERCENT)),
                reference: Some((100.0, "target")),
                x_ticks: Some(years.iter().map(|&y| y as f64).collect()),
            }))
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cov(
        kind: &str,
        species: Option<&str>,
        scenario: &str,
        year: i32,
        protected: f64,
        target: f64,
    ) -> Coverage {
        Coverage {
            feature: format!("{kind}/{species:?}/{scenario}/{year}"),
            kind: kind.into(),
            species: species.map(str::to_string),
            scenario: Some(scenario.into()),
            year: Some(year),
            total: 100.0,
            protected,
            target,
            shortfall: (target - protected).max(0.0),
            reached: protected >= target,
            absent: false,
        }
    }

    #[test]
    fn one_line_per_species_lowest_share_per_year() {
        let rows = [
            cov("habitat", Some("cod"), "ssp1-2.6", 2030, 30.0, 30.0),
            cov("habitat", Some("cod"), "ssp1-2.6", 2050, 15.0, 30.0),
            cov("refugium", None, "ssp1-2.6", 2050, 9.0, 10.0),
            cov("refugium", None, "ssp1-2.6", 2050, 12.0, 10.0),
            // No positive target: not drawn.
            cov("habitat", Some("hake"), "ssp1-2.6", 2050, 1.0, 0.0),
        ];
        let refs: Vec<&Coverage> = rows.iter().collect();
        let s = scenario_series(&refs);
        // Hand: cod 2030 = 30/30 = 100%, 2050 = 15/30 = 50%; refugium 2050: lowest of
        // 90% and 120% = 90%. Lines in label order.
        assert_eq!(s.len(), 2);
        assert_eq!(s[0].label, "habitat cod");
        assert_eq!(s[0].points, vec![(2030.0, 100.0), (2050.0, 50.0)]);
        assert_eq!(s[1].label, "refugium");
        assert_eq!(s[1].points, vec![(2050.0, 90.0)]);
    }

    #[test]
    fn many_lines_fall_back_to_lowest_and_median() {
        // Ten species in 2050 holding 10%, 20%, …, 100% of their targets.
        let names: Vec<String> = (0..10).map(|k| format!("sp{k}")).collect();
        let rows: Vec<Coverage> = (0..10)
            .map(|k| {
                cov(
                    "habitat",
                    Some(&names[k]),
                    "ssp5-8.5",
                    2050,
                    (k + 1) as f64,
                    10.0,
                )
            })
            .collect();
        let refs: Vec<&Coverage> = rows.iter().collect();
        let s = scenario_series(&refs);
        // Hand: lowest 10%; median of 10..100 step 10 = (50 + 60)/2 = 55%.
        assert_eq!(s.len(), 2);
        assert_eq!(s[0].points, vec![(2050.0, 10.0)]);
        assert_eq!(s[1].points, vec![(2050.0, 55.0)]);
        assert_eq!(median(&mut [3.0, 1.0, 2.0]), 2.0);
    }

    #[test]
    fn one_chart_per_scenario() {
        let rows = [
            cov("habitat", Some("cod"), "ssp5-8.5", 2050, 1.0, 2.0),
            cov("habitat", Some("cod"), "ssp1-2.6", 2050, 1.0, 2.0),
        ];
        let charts = coverage_charts(&rows);
        assert_eq!(charts.len(), 2);
        // BTreeMap order: ssp1-2.6 before ssp5-8.5.
        assert!(charts[0].contains("Scenario ssp1-2.6"));
        assert!(charts[1].contains("Scenario ssp5-8.5"));
    }
}
