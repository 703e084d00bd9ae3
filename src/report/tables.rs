//! HTML tables of the report: run facts, the scenario stress test and the budget sweep.

use super::escape::esc;
use super::feature_map::value_label;
use super::{StressTable, SweepPoint};
use std::fmt::Write;

/// Cell tints of the stress table: every target reached, at least half reached, fewer. Light tints of
/// Okabe–Ito bluish green, orange and vermillion, with a text mark as well so colour is not
/// the only cue.
const ALL_MET: &str = "#d4efe5";
const HALF_MET: &str = "#fbecc7";
const FEW_MET: &str = "#f7d5bf";

/// Two-column table of `(name, value)` facts in the order given.
pub(crate) fn facts_table(facts: &[(String, String)]) -> String {
    let mut s = String::from(r#"<table class="facts"><tbody>"#);
    for (k, v) in facts {
        let _ = write!(
            s,
            "<tr><th scope=\"row\">{}</th><td>{}</td></tr>",
            esc(k),
            esc(v)
        );
    }
    s.push_str("</tbody></table>");
    s
}

/// Designed-for × evaluated-in table: each cell shows targets reached / total and the benefit.
/// The shape is checked by the caller.
pub(crate) fn stress_table(t: &StressTable) -> String {
    let mut s = String::from(
        r#"<table class="stress"><thead><tr><th scope="col">designed for ↓ / evaluated in →</th>"#,
    );
    for c in &t.evaluated_in {
        let _ = write!(s, r#"<th scope="col">{}</th>"#, esc(c));
    }
    s.push_str("</tr></thead><tbody>");
    for (label, row) in t.designed_for.iter().zip(&t.cells) {
        let _ = write!(s, r#"<tr><th scope="row">{}</th>"#, esc(label));
        for cell in row {
            let (bg, mark) = if cell.targets_reached >= cell.targets_total {
                (ALL_MET, "✓")
            } else if 2 * cell.targets_reached >= cell.targets_total {
                (HALF_MET, "△")
            } else {
                (FEW_MET, "✗")
            };
            let _ = write!(
                s,
                r#"<td style="background:{bg}">{mark} {}/{} reached<br><span class="small">benefit {}</span></td>"#,
                cell.targets_reached,
                cell.targets_total,
                esc(&value_label(cell.benefit))
            );
        }
        s.push_str("</tr>");
    }
    s.push_str("</tbody></table>");
    s
}

/// One row per sweep point: budget share (%), cost, benefit and the solver's gap (%).
pub(crate) fn sweep_table(points: &[SweepPoint]) -> String {
    let mut s = String::from(
        r#"<table class="sweep"><thead><tr><th scope="col">budget (% of region)</th><th scope="col">cost</th><th scope="col">benefit</th><th scope="col">gap (%)</th></tr></thead><tbody>"#,
    );
    for p in points {
        let _ = write!(
            s,
            "<tr><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
            esc(&value_label(100.0 * p.budget_share)),
            esc(&value_label(p.cost)),
            esc(&value_label(p.benefit)),
            esc(&value_label(100.0 * p.gap))
        );
    }
    s.push_str("</tbody></table>");
    s
}

#[cfg(test)]
mod tests {
    use super::super::StressCell;
    use super::*;

    #[test]
    fn facts_are_escaped_in_order() {
        let t = facts_table(&[("plan".into(), "a<b".into()), ("gap".into(), "0 %".into())]);
        assert_eq!(
            t,
            r#"<table class="facts"><tbody><tr><th scope="row">plan</th><td>a&lt;b</td></tr><tr><th scope="row">gap</th><td>0 %</td></tr></tbody></table>"#
        );
    }

    #[test]
    fn stress_cells_show_counts_and_tints() {
        let cell = |m, b| StressCell {
            targets_reached: m,
            targets_total: 4,
            benefit: b,
        };
        let t = StressTable {
            designed_for: vec!["ssp1-2.6".into(), "robust".into()],
            evaluated_in: vec!["ssp1-2.6".into(), "ssp5-8.5 & co".into()],
            cells: vec![
                vec![cell(4, 1.0), cell(1, 0.25)],
                vec![cell(4, 1.0), cell(2, 0.5)],
            ],
        };
        let h = stress_table(&t);
        // Hand: 4/4 → all reached; 1/4 < half → few; 2/4 = half → half tint.
        assert!(h.contains(&format!(r#"background:{ALL_MET}">✓ 4/4 reached"#)));
        assert!(h.contains(&format!(r#"background:{FEW_MET}">✗ 1/4 reached"#)));
        assert!(h.contains(&format!(r#"background:{HALF_MET}">△ 2/4 reached"#)));
        assert!(h.contains("ssp5-8.5 &amp; co"));
        assert_eq!(h.matches("<tr>").count(), 3);
    }

    #[test]
    fn sweep_rows_in_percent() {
        let h = sweep_table(&[SweepPoint {
            budget_share: 0.3,
            cost: 1234.6,
            benefit: 0.87,
            gap: 0.001,
            targets_reached: 3,
            targets_total: 4,
        }]);
        // Hand: 0.3 → 30 %, cost 1234.6 → 1235 (four significant digits), gap 0.001 → 0.1 %.
        assert!(
            h.contains("<td>30</td><td>1235</td><td>0.87</td><td>0.1</td>"),
            "{h}"
        );
    }
}
