//! Selection frequency: how often each cell is chosen across a set of networks (a sweep's
//! budgets, the scenario-specific solves). Cells chosen in every network are the robust core;
//! cells chosen only sometimes are options to trade.

/// Per-cell selection frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct SelectionFrequency {
    /// Share of the networks that choose each cell (0–1), one value per cell.
    pub share: Vec<f64>,
    /// Number of networks counted.
    pub networks: usize,
}

impl SelectionFrequency {
    /// Class word of cell `i`: `core` (in every network), `frequent` (at least half),
    /// `occasional` (some), `never`.
    pub fn class(&self, i: usize) -> &'static str {
        let s = self.share[i];
        if self.networks > 0 && s >= 1.0 {
            "core"
        } else if s >= 0.5 {
            "frequent"
        } else if s > 0.0 {
            "occasional"
        } else {
            "never"
        }
    }
}

impl SelectionFrequency {
    /// Every cell's class word ([`SelectionFrequency::class`]), in cell order.
    pub fn classes(&self) -> Vec<&'static str> {
        (0..self.share.len()).map(|i| self.class(i)).collect()
    }

    /// Every cell's class as a number for a map, lowest to highest: 0 never, 1 occasional,
    /// 2 frequent, 3 core.
    pub fn class_codes(&self) -> Vec<f64> {
        (0..self.share.len())
            .map(|i| match self.class(i) {
                "core" => 3.0,
                "frequent" => 2.0,
                "occasional" => 1.0,
                _ => 0.0,
            })
            .collect()
    }

    /// The robust core: cells chosen in every network.
    pub fn core(&self) -> Vec<bool> {
        (0..self.share.len())
            .map(|i| self.class(i) == "core")
            .collect()
    }
}

/// Selection frequency of a sweep: over all its networks and the stress test's scenario
/// designs together, and over each group alone.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepFrequency {
    /// Over the sweep's networks and the scenario designs.
    pub all: SelectionFrequency,
    /// Over the sweep's networks only.
    pub sweep: SelectionFrequency,
    /// Over the scenario designs only (rows of the stress test that have a network).
    pub scenarios: SelectionFrequency,
}

impl SweepFrequency {
    /// Counts `n_cells` cells over the sweep's networks and the designs in `stress`.
    pub fn new(
        n_cells: usize,
        sweep: &crate::study::Sweep,
        stress: Option<&crate::study::StressMatrix>,
    ) -> Self {
        let sweep_nets: Vec<&[bool]> = sweep
            .runs
            .iter()
            .map(|r| r.solution.selected.as_slice())
            .collect();
        let scen_nets: Vec<&[bool]> = stress
            .iter()
            .flat_map(|m| m.rows.iter())
            .filter(|r| !r.selected.is_empty())
            .map(|r| r.selected.as_slice())
            .collect();
        let all: Vec<&[bool]> = sweep_nets.iter().chain(&scen_nets).copied().collect();
        SweepFrequency {
            all: selection_frequency(n_cells, &all),
            sweep: selection_frequency(n_cells, &sweep_nets),
            scenarios: selection_frequency(n_cells, &scen_nets),
        }
    }

    /// The three shares as layers (`selection_share`, `_sweep`, `_scenarios`) for the cell
    /// GeoJSON.
    pub fn layers(&self) -> Vec<crate::layers::Layer> {
        [
            ("selection_share", &self.all),
            ("selection_share_sweep", &self.sweep),
            ("selection_share_scenarios", &self.scenarios),
        ]
        .into_iter()
        .map(|(name, f)| crate::layers::Layer {
            name: name.into(),
            values: f.share.clone(),
        })
        .collect()
    }
}

/// Frequency of each of `n_cells` cells over `networks` (each one flag per cell).
pub fn selection_frequency(n_cells: usize, networks: &[&[bool]]) -> SelectionFrequency {
    let mut count = vec![0usize; n_cells];
    for net in networks {
        for (c, &s) in count.iter_mut().zip(net.iter()) {
            *c += s as usize;
        }
    }
    let m = networks.len();
    SelectionFrequency {
        share: count
            .iter()
            .map(|&c| if m > 0 { c as f64 / m as f64 } else { 0.0 })
            .collect(),
        networks: m,
    }
}

/// `selection-frequency.csv`: cell id, share of networks choosing it, class.
pub fn frequency_csv(f: &SelectionFrequency) -> String {
    let rows = (0..f.share.len()).map(|i| {
        vec![
            i.to_string(),
            format!("{:.6}", f.share[i]),
            f.class(i).to_string(),
        ]
    });
    crate::export::table::csv_text(&["cell", "selection_share", "class"], rows)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_by_hand() {
        // Hand count over 4 networks: cell 0 in all (core), cell 1 in 2 (frequent, 0.5),
        // cell 2 in 1 (occasional, 0.25), cell 3 in none.
        let a = [true, true, false, false];
        let b = [true, true, true, false];
        let c = [true, false, false, false];
        let d = [true, false, false, false];
        let f = selection_frequency(4, &[&a, &b, &c, &d]);
        assert_eq!(f.share, vec![1.0, 0.5, 0.25, 0.0]);
        let classes: Vec<&str> = (0..4).map(|i| f.class(i)).collect();
        assert_eq!(classes, vec!["core", "frequent", "occasional", "never"]);
        assert_eq!(f.class_codes(), vec![3.0, 2.0, 1.0, 0.0]);
        assert_eq!(f.core(), vec![true, false, false, false]);
        let csv = frequency_csv(&f);
        assert!(
            csv.starts_with("cell,selection_share,class\n0,1.000000,core\n"),
            "{csv}"
        );
    }
}
