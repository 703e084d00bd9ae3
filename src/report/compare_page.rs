//! `report.html` of `driftplan compare`: the networks' maps side by side, the measure table
//! with the ranking rule, and the per-feature table. Pure: returns the text.

use super::escape::esc;
use super::feature_map::value_label;
use super::{panels_html, tables, NetworkPanels, STYLE};
use crate::compare::{Comparison, RANKING_RULE};
use crate::export::{ExportError, CAUTION};
use crate::grid::Grid;
use crate::model::CellStatus;
use std::fmt::Write;

/// Everything the comparison page shows, borrowed from the run.
#[derive(Debug, Clone)]
pub struct CompareReport<'a> {
    /// Plan name, shown in the page title.
    pub title: &'a str,
    /// Facts in display order (plan, hash, which files were compared …).
    pub facts: Vec<(String, String)>,
    /// The planning grid.
    pub grid: &'a Grid,
    /// Required / excluded / free, one per cell id.
    pub status: &'a [CellStatus],
    /// One map per network, in comparison order.
    pub panels: NetworkPanels,
    /// The comparison itself.
    pub comparison: &'a Comparison,
}

/// Renders the comparison page (module doc). Fails with [`ExportError::Length`] when `status`
/// does not have one value per cell, a reserve names a cell the grid lacks, or the panels do
/// not match the comparison's networks.
pub fn compare_report_html(r: &CompareReport) -> Result<String, ExportError> {
    let n = r.grid.len();
    let c = r.comparison;
    if r.status.len() != n {
        return Err(ExportError::Length {
            what: "status".into(),
            expected: n,
            got: r.status.len(),
        });
    }
    if r.panels.panels.len() != c.networks.len() {
        return Err(ExportError::Length {
            what: "network maps (one per compared network)".into(),
            expected: c.networks.len(),
            got: r.panels.panels.len(),
        });
    }
    for panel in &r.panels.panels {
        for res in &panel.reserves {
            if let Some(&bad) = res.cells.iter().find(|&&id| id as usize >= n) {
                return Err(ExportError::Length {
                    what: format!("network `{}` (cell id {bad})", panel.label),
                    expected: n,
                    got: bad as usize + 1,
                });
            }
        }
    }
    let mut s = String::with_capacity(64 * 1024);
    let _ = write!(
        s,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"><title>{t} · driftplan comparison</title><style>{STYLE}</style></head><body>\n<h1>{t}: {k} networks compared</h1>\n",
        t = esc(r.title),
        k = c.networks.len()
    );
    let _ = writeln!(
        s,
        "<p class=\"caution\" role=\"note\"><strong>Caution.</strong> {}</p>",
        esc(CAUTION)
    );
    s.push_str("<h2>Facts</h2>\n");
    s.push_str(&tables::facts_table(&r.facts));
    s.push('\n');
    s.push_str(&panels_html(r.grid, r.status, &r.panels));
    s.push_str(&measure_table(c));
    s.push_str(&feature_table(c));
    let _ = write!(
        s,
        "<p class=\"small\">Written by driftplan {}.</p>\n</body></html>\n",
        esc(env!("CARGO_PKG_VERSION"))
    );
    Ok(s)
}

/// Every measure with its better direction, each network's value, the best marked ★; the
/// ranking rule above it and the networks it leaves unranked in the header.
fn measure_table(c: &Comparison) -> String {
    let mut s = format!(
        "<h2>Measures</h2>\n<p class=\"small\">Ranking rule: {}. ★ best on that measure (ties all marked).</p>\n<table class=\"measures\"><thead><tr><th scope=\"col\">measure</th><th scope=\"col\">better</th>",
        esc(RANKING_RULE)
    );
    for (i, name) in c.networks.iter().enumerate() {
        let note = if c.ranked.contains(&i) {
            String::new()
        } else {
            "<br><span class=\"small\">misses targets, not ranked</span>".into()
        };
        let _ = write!(s, "<th scope=\"col\">{}{note}</th>", esc(name));
    }
    s.push_str("</tr></thead><tbody>");
    for m in &c.measures {
        let _ = write!(
            s,
            "<tr><th scope=\"row\">{}</th><td>{}</td>",
            esc(&m.name),
            m.better.as_str()
        );
        for (i, v) in m.values.iter().enumerate() {
            let text = if v.is_finite() {
                value_label(*v)
            } else {
                "–".into()
            };
            let mark = if m.best.contains(&i) { " ★" } else { "" };
            let _ = write!(s, "<td>{}{mark}</td>", esc(&text));
        }
        s.push_str("</tr>");
    }
    s.push_str("</tbody></table>\n");
    s
}

/// One row per feature: scenario, year, target and each network's share of the target (`reached`
/// when protected).
fn feature_table(c: &Comparison) -> String {
    let mut s = String::from(
        "<h2>Features</h2>\n<p class=\"small\">Each network's holding as a share of the feature's target; reached = target protected; absent = no amount in the region, never reached.</p>\n<table class=\"features\"><thead><tr><th scope=\"col\">feature</th><th scope=\"col\">scenario</th><th scope=\"col\">year</th><th scope=\"col\">target</th>",
    );
    for name in &c.networks {
        let _ = write!(s, "<th scope=\"col\">{}</th>", esc(name));
    }
    s.push_str("</tr></thead><tbody>");
    for f in &c.features {
        let _ = write!(
            s,
            "<tr><th scope=\"row\">{}</th><td>{}</td><td>{}</td><td>{}</td>",
            esc(&f.feature),
            esc(f.scenario.as_deref().unwrap_or("–")),
            f.year.map(|y| y.to_string()).unwrap_or_else(|| "–".into()),
            esc(&value_label(f.target))
        );
        for (share, &reached) in f.protected_share_of_target.iter().zip(&f.reached) {
            if f.absent {
                s.push_str("<td>absent</td>");
            } else if reached {
                s.push_str("<td>reached</td>");
            } else {
                let _ = write!(s, "<td>{:.0}%</td>", 100.0 * share);
            }
        }
        s.push_str("</tr>");
    }
    s.push_str("</tbody></table>\n");
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::compare::{compare, fixtures};
    use crate::report::NetworkPanel;

    #[test]
    fn maps_measures_and_features_on_one_page() {
        let g = fixtures::grid();
        // Fixture hand values: x = {0} and y = {4, 5} both meet 1 of 3 targets; z = {} none.
        let (x, y, z) = (
            fixtures::assessed(&[0]),
            fixtures::assessed(&[4, 5]),
            fixtures::assessed(&[]),
        );
        let c = compare(&[("x".into(), &x), ("y".into(), &y), ("z<".into(), &z)]).unwrap();
        let status = vec![CellStatus::Free; g.len()];
        let panels = NetworkPanels {
            title: "Networks side by side".into(),
            note: "One map per network.".into(),
            panels: [&x, &y, &z]
                .iter()
                .zip(&c.networks)
                .map(|(a, n)| NetworkPanel {
                    label: n.clone(),
                    reserves: a.reserves.clone(),
                })
                .collect(),
        };
        let html = compare_report_html(&CompareReport {
            title: "Plan",
            facts: vec![("plan".into(), "Plan".into())],
            grid: &g,
            status: &status,
            panels: panels.clone(),
            comparison: &c,
        })
        .unwrap();
        assert_eq!(html.matches("class=\"map panel\"").count(), 3);
        assert!(html.contains(&esc(RANKING_RULE)));
        // z meets no target: it is unranked, so the empty network is not best on cost (0).
        assert_eq!(html.matches("misses targets, not ranked").count(), 1);
        assert!(
            html.contains(
                "<th scope=\"row\">cost</th><td>lower</td><td>1 ★</td><td>11</td><td>0</td>"
            ),
            "{html}"
        );
        assert!(html.contains("z&lt;"));
        // Feature rows: habitat/a is reached by x; y holds 2 of its target 4 → 50 %.
        assert!(html.contains("<th scope=\"row\">habitat/a</th><td>ssp2-4.5</td><td>2050</td><td>4</td><td>reached</td><td>50%</td><td>0%</td>"), "{html}");
        for bad in ["http://", "https://", "<script", "src="] {
            assert!(!html.contains(bad), "{bad}");
        }
        let mut short = panels;
        short.panels.pop();
        let err = compare_report_html(&CompareReport {
            title: "Plan",
            facts: vec![],
            grid: &g,
            status: &status,
            panels: short,
            comparison: &c,
        })
        .unwrap_err();
        assert!(
            err.to_string().contains("one per compared network"),
            "{err}"
        );
    }
}
