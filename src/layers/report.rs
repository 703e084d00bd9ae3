//! Sampling reports in words: one line per group of layers sampled alike, for `check` and the
//! run header (summary.json keeps every layer).

use super::SamplingReport;

/// At most this many lines; the rest are counted ("… and 3 more groups").
const MAX_LINES: usize = 12;

/// Lines describing how the point-lattice layers were sampled. Layers that share a name stem
/// (`habitat`, `sst_c`, …), a rule and the same cell counts are one line.
pub fn sampling_lines(reports: &[SamplingReport]) -> Vec<String> {
    // (stem, method, counts) → (layers, first layer name)
    let mut groups: Vec<(String, &str, [usize; 5], usize, &str)> = Vec::new();
    for r in reports {
        let stem = r.layer.split('/').next().unwrap_or(&r.layer).to_string();
        let counts = [r.bilinear, r.coastal, r.nearest, r.missing, r.pixel_mean];
        match groups
            .iter_mut()
            .find(|g| g.0 == stem && g.1 == r.method && g.2 == counts)
        {
            Some(g) => g.3 += 1,
            None => groups.push((stem, &r.method, counts, 1, &r.layer)),
        }
    }
    let mut lines: Vec<String> = groups
        .iter()
        .take(MAX_LINES)
        .map(|(stem, method, c, n, first)| {
            let which = if *n == 1 {
                first.to_string()
            } else {
                format!("{stem} ({n} layers)")
            };
            let pixels = if c[4] > 0 {
                format!("{} pixel mean, ", c[4])
            } else {
                String::new()
            };
            format!(
                "{which}: {method}; cells: {pixels}{} bilinear, {} coastal fallback, {} nearest, {} missing",
                c[0], c[1], c[2], c[3]
            )
        })
        .collect();
    if groups.len() > MAX_LINES {
        lines.push(format!(
            "… and {} more groups (every layer is listed in summary.json)",
            groups.len() - MAX_LINES
        ));
    }
    lines
}

#[cfg(test)]
mod tests {
    use super::*;

    fn report(layer: &str, bilinear: usize, coastal: usize) -> SamplingReport {
        SamplingReport {
            layer: layer.into(),
            path: "x.csv".into(),
            method: "bilinear".into(),
            bilinear,
            coastal,
            nearest: 0,
            missing: 1,
            pixel_mean: 0,
        }
    }

    #[test]
    fn groups_alike_layers_and_keeps_different_ones_apart() {
        // By hand: two habitat layers sampled alike are one line; a third with other counts
        // and a temperature layer get a line each.
        let r = [
            report("habitat/a/s/2030", 10, 2),
            report("habitat/b/s/2030", 10, 2),
            report("habitat/c/s/2030", 9, 3),
            report("sst_c/s/2030", 12, 0),
        ];
        let lines = sampling_lines(&r);
        assert_eq!(lines.len(), 3, "{lines:?}");
        assert_eq!(
            lines[0],
            "habitat (2 layers): bilinear; cells: 10 bilinear, 2 coastal fallback, 0 nearest, 1 missing"
        );
        assert!(lines[1].starts_with("habitat/c/s/2030: "));
        assert!(lines[2].starts_with("sst_c/s/2030: "));
    }
}
