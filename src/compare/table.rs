//! A comparison as a fixed-width table for the terminal.

use super::Comparison;

/// Most features listed in the "reached by some networks only" part; the rest are counted.
const MAX_FEATURE_LINES: usize = 20;

/// Marks the best network(s) on a measure.
const BEST: &str = " *";

/// A measure's values as text: whole numbers when every value is whole (counts, whole costs),
/// otherwise three decimals; non-finite values as `-`.
fn format_row(values: &[f64]) -> Vec<String> {
    let whole = values
        .iter()
        .all(|v| v.is_finite() && v.fract() == 0.0 && v.abs() < 1e15);
    values
        .iter()
        .map(|v| {
            if !v.is_finite() {
                "-".to_string()
            } else if *v == 0.0 {
                // Also turns −0 (an empty float sum) into a plain 0.
                if whole {
                    "0".into()
                } else {
                    format!("{:.3}", 0.0)
                }
            } else if whole {
                format!("{v:.0}")
            } else {
                format!("{v:.3}")
            }
        })
        .collect()
}

/// Lays out rows in columns: the first `left` columns left-aligned, the rest right-aligned,
/// two spaces apart, no trailing spaces.
fn layout(rows: &[Vec<String>], left: usize) -> String {
    let n = rows.iter().map(Vec::len).max().unwrap_or(0);
    let width: Vec<usize> = (0..n)
        .map(|k| {
            rows.iter()
                .filter_map(|r| r.get(k))
                .map(|s| s.chars().count())
                .max()
                .unwrap_or(0)
        })
        .collect();
    let mut out = String::new();
    for r in rows {
        let mut line = String::new();
        for (k, cell) in r.iter().enumerate() {
            if k > 0 {
                line.push_str("  ");
            }
            let pad = width[k].saturating_sub(cell.chars().count());
            if k < left {
                line.push_str(cell);
                line.push_str(&" ".repeat(pad));
            } else {
                line.push_str(&" ".repeat(pad));
                line.push_str(cell);
            }
        }
        out.push_str(line.trim_end());
        out.push('\n');
    }
    out
}

/// The ranking rule in words, naming the networks it leaves unranked (they miss targets).
pub fn ranking_line(c: &Comparison) -> String {
    let most = c
        .measure("targets_reached")
        .and_then(|m| c.ranked.first().map(|&i| m.values[i]))
        .unwrap_or(0.0);
    let missing: Vec<&str> = (0..c.networks.len())
        .filter(|i| !c.ranked.contains(i))
        .map(|i| c.networks[i].as_str())
        .collect();
    let mut s = format!(
        "Ranking: target coverage first. `*` on targets_reached marks the most targets reached ({most:.0} of {}); on every other measure `*` is awarded only among the networks that meet that many.",
        c.features.len()
    );
    if !missing.is_empty() {
        s.push_str(&format!(
            " Not ranked, misses targets: {}.",
            missing.join(", ")
        ));
    }
    s.push('\n');
    s
}

/// The comparison as a readable terminal table: every measure with its better direction and
/// each network's value (the best marked `*`), then the features whose target some networks
/// meet and others do not (at most 20 listed; the full list is in `compare.csv`).
pub fn compare_table(c: &Comparison) -> String {
    let mut out = format!(
        "{} networks compared: {}\n",
        c.networks.len(),
        c.networks.join(", ")
    );
    out.push_str(&ranking_line(c));
    out.push('\n');
    let mut rows = vec![{
        let mut h = vec!["measure".to_string(), "better".to_string()];
        // Header names carry the marker's width too, so names line up with the numbers.
        h.extend(c.networks.iter().map(|n| format!("{n}  ")));
        h
    }];
    for m in &c.measures {
        let mut r = vec![m.name.clone(), m.better.as_str().to_string()];
        for (i, v) in format_row(&m.values).into_iter().enumerate() {
            let mark = if m.best.contains(&i) { BEST } else { "  " };
            r.push(format!("{v}{mark}"));
        }
        rows.push(r);
    }
    out.push_str(&layout(&rows, 2));
    out.push_str(
        "* best on that measure (ties all marked; see the ranking rule above); better: which way is better, none = not ranked\n",
    );
    let split: Vec<_> = c
        .features
        .iter()
        .filter(|f| f.reached.iter().any(|&m| m) && !f.reached.iter().all(|&m| m))
        .collect();
    let absent = c.features.iter().filter(|f| f.absent).count();
    out.push('\n');
    if absent > 0 {
        out.push_str(&format!(
            "{absent} features are absent (no amount in the region): no network meets them.\n"
        ));
    }
    if split.is_empty() {
        out.push_str(&format!(
            "Every network meets the same targets ({} features).\n",
            c.features.len()
        ));
        return out;
    }
    out.push_str(&format!(
        "Targets reached by some networks only ({} of {} features):\n\n",
        split.len(),
        c.features.len()
    ));
    let mut rows = vec![{
        let mut h = vec![
            "feature".to_string(),
            "scenario".to_string(),
            "year".to_string(),
        ];
        h.extend(c.networks.iter().cloned());
        h
    }];
    for f in split.iter().take(MAX_FEATURE_LINES) {
        let mut r = vec![
            f.feature.clone(),
            f.scenario.clone().unwrap_or_else(|| "-".into()),
            f.year.map(|y| y.to_string()).unwrap_or_else(|| "-".into()),
        ];
        r.extend(
            f.protected_share_of_target
                .iter()
                .zip(&f.reached)
                .map(|(s, &reached)| {
                    if reached {
                        "reached".to_string()
                    } else {
                        format!("{:.0}%", s * 100.0)
                    }
                }),
        );
        rows.push(r);
    }
    out.push_str(&layout(&rows, 3));
    if split.len() > MAX_FEATURE_LINES {
        out.push_str(&format!(
            "... and {} more (see compare.csv)\n",
            split.len() - MAX_FEATURE_LINES
        ));
    }
    out.push_str("reached = target protected; otherwise the share of the target protected\n");
    out
}

#[cfg(test)]
mod tests {
    use super::super::{compare, fixtures::assessed};
    use super::*;

    #[test]
    fn readable_fixed_width_table() {
        let x = assessed(&[0]);
        let y = assessed(&[4, 5]);
        let c = compare(&[("x".into(), &x), ("other".into(), &y)]).unwrap();
        let t = compare_table(&c);
        let lines: Vec<&str> = t.lines().collect();
        assert_eq!(lines[0], "2 networks compared: x, other");
        // Both meet 1 of 3 targets (fixture hand values), so both are ranked.
        assert!(
            lines[1].starts_with("Ranking: target coverage first"),
            "{t}"
        );
        assert!(lines[1].contains("(1 of 3)") && !lines[1].contains("Not ranked"));
        // Hand layout: `measure` column 24 wide (`targets_reached_refugium`), `better` 6 wide,
        // each network column 7 wide (`0.333 *`), two spaces between columns; numbers and
        // names right-aligned with room for the best marker ` *`.
        let row = |name: &str, better: &str, a: &str, b: &str| {
            format!("{name:<24}  {better:<6}  {a:>7}  {b:>7}")
                .trim_end()
                .to_string()
        };
        assert_eq!(lines[3], row("measure", "better", "x  ", "other  "));
        assert_eq!(lines[4], row("cost", "lower", "1 *", "11  "));
        assert_eq!(lines[8], row("reserves", "none", "1  ", "1  "));
        // Tie on targets reached: both marked.
        assert_eq!(lines[13], row("targets_reached", "higher", "1 *", "1 *"));
        // Hand values: mean shares 1/3 and 2/3; the worst share of x is 0 (not -0).
        assert_eq!(
            lines[14],
            row("mean_protected_share", "higher", "0.333  ", "0.667 *")
        );
        assert_eq!(
            lines[15],
            row("min_protected_share", "higher", "0.000  ", "0.500 *")
        );
        // Split targets: a reached only by x, c only by `other`; b by neither so not listed.
        // Hand values: other holds 2 of a's target 4 → 50%; x holds 0 of c → 0%.
        assert!(
            t.contains("Targets reached by some networks only (2 of 3 features)"),
            "{t}"
        );
        assert!(
            t.contains("habitat/a   ssp2-4.5  2050  reached      50%"),
            "{t}"
        );
        assert!(
            t.contains("refugium/c  ssp2-4.5  2050       0%  reached"),
            "{t}"
        );
        assert!(!t.contains("habitat/b"));
        assert!(lines.iter().all(|l| !l.ends_with(' ')));
    }

    #[test]
    fn formats_whole_and_fractional_rows() {
        assert_eq!(format_row(&[1.0, 11.0]), vec!["1", "11"]);
        // −0 (an empty float sum) prints as a plain 0.
        assert_eq!(format_row(&[-0.0, 3.0]), vec!["0", "3"]);
        assert_eq!(format_row(&[-0.0, 0.5]), vec!["0.000", "0.500"]);
        assert_eq!(format_row(&[0.5, 2.0]), vec!["0.500", "2.000"]);
        assert_eq!(format_row(&[f64::NAN, 2.0]), vec!["-", "2.000"]);
    }
}
