//! Incremental network state for the heuristics: cost, area, holdings, per-scenario benefit,
//! exposed edge and max-gap violations, each updated in time proportional to what one cell
//! touches. The final answer of every heuristic is re-scored by `model::evaluate`.

use crate::model::compact::neighbour_lists;
use crate::model::robust::{combine, is_minimisation, scenario_benefits};
use crate::model::spacing::gap_rows;
use crate::model::{CellMajor, CellStatus, Objective, Problem};

/// What flipping one cell would change.
pub(crate) struct Flip {
    pub d_cost: f64,
    pub d_area: f64,
    pub d_exposed: f64,
    /// Change of the link strength held (connectivity reward, `model::links`).
    pub d_linked: f64,
    /// Change of Σₖ max(0, Tₖ − protectedₖ)/Tₖ (normalised shortfall).
    pub d_shortfall: f64,
    /// Change of the number of broken hard spatial rules: violated max-gap rows plus lone
    /// undersized cells (minimum size).
    pub d_violated: i64,
}

pub(crate) struct State<'a> {
    pub p: &'a Problem,
    pub selected: Vec<bool>,
    /// Amounts by cell (one compact index, `model::cell_major`).
    cell_feats: CellMajor,
    /// For each feature, the scenarios it counts in and its coefficient wₖ/capₖ there.
    feat_coef: Vec<f64>,
    feat_scen: Vec<Vec<u32>>,
    /// Benefit cap of each feature (`ModelFeature::benefit_cap`, cached: it sums amounts).
    caps: Vec<Option<f64>>,
    pub protected: Vec<f64>,
    /// Features whose holding is below the target (`evaluate::at_least`), kept up to date by
    /// [`State::flip`] so the greedy loop need not rescan every feature after each step.
    unmet: usize,
    pub benefit: Vec<f64>,
    pub cost: f64,
    pub area: f64,
    pub exposed: f64,
    pub shortfall: f64,
    nb: Vec<Vec<(u32, f64)>>,
    pub weight: f64,
    /// Link strength held, each cell's kept link partners and the reward's weight.
    pub linked: f64,
    partners: Vec<Vec<(u32, f64)>>,
    link_weight: f64,
    // Max gap: rows, their cover counts, position counts.
    rows_trigger: Vec<Option<usize>>,
    row_count: Vec<u32>,
    cell_rows: Vec<Vec<u32>>,
    pos_of: Vec<Option<usize>>,
    pos_count: Vec<u32>,
    pos_row: Vec<Option<u32>>,
    pub violated: i64,
    scratch: Vec<f64>,
    // Minimum size: whether the rule applies to each cell, and its chosen-neighbour count.
    lone_applies: Vec<bool>,
    chosen_nb: Vec<u32>,
}

impl<'a> State<'a> {
    /// The empty network (nothing chosen, not even required cells).
    pub fn new(p: &'a Problem) -> Self {
        let n = p.n_cells();
        let s_count = p.scenarios.len();
        let cell_feats = CellMajor::new(p);
        let mut feat_coef = vec![0.0; p.features.len()];
        let mut feat_scen = vec![Vec::new(); p.features.len()];
        let sb = scenario_benefits(p);
        let benefit = vec![0.0; s_count];
        for (s, b) in sb.iter().enumerate() {
            for &(k, coef) in &b.terms {
                feat_coef[k] = coef;
                feat_scen[k].push(s as u32);
            }
        }
        let shortfall = p.features.iter().filter(|f| f.target > 0.0).count() as f64;
        let (nb, weight) = match &p.edge_penalty {
            Some(pen) => (neighbour_lists(pen, n), pen.weight),
            None => (vec![Vec::new(); n], 0.0),
        };
        let (partners, link_weight) = match &p.link_reward {
            Some(r) => (r.partner_lists(n), r.weight),
            None => (vec![Vec::new(); n], 0.0),
        };
        let mut st = State {
            p,
            selected: vec![false; n],
            cell_feats,
            feat_coef,
            feat_scen,
            caps: p.features.iter().map(|f| f.benefit_cap()).collect(),
            protected: vec![0.0; p.features.len()],
            unmet: p
                .features
                .iter()
                .filter(|f| !crate::model::evaluate::at_least(0.0, f.target))
                .count(),
            benefit,
            cost: 0.0,
            area: 0.0,
            exposed: 0.0,
            shortfall,
            nb,
            weight,
            linked: 0.0,
            partners,
            link_weight,
            rows_trigger: Vec::new(),
            row_count: Vec::new(),
            cell_rows: vec![Vec::new(); n],
            pos_of: vec![None; n],
            pos_count: Vec::new(),
            pos_row: Vec::new(),
            violated: 0,
            scratch: vec![0.0; s_count],
            lone_applies: match &p.min_reserve {
                Some(m) => (0..n)
                    .map(|i| m.applies(i, &p.status, &p.area_km2))
                    .collect(),
                None => Vec::new(),
            },
            chosen_nb: vec![0; n],
        };
        if let Some(sp) = &p.spacing {
            let (rows, pos_of) = gap_rows(sp, &p.status);
            let npos = pos_of.iter().flatten().max().map_or(0, |m| m + 1);
            st.pos_row = vec![None; npos];
            for (r, row) in rows.iter().enumerate() {
                for &c in &row.cover {
                    st.cell_rows[c as usize].push(r as u32);
                }
                if let Some(q) = row.trigger {
                    st.pos_row[q] = Some(r as u32);
                }
                st.rows_trigger.push(row.trigger);
            }
            st.row_count = vec![0; rows.len()];
            st.pos_count = vec![0; npos];
            st.pos_of = pos_of;
            // Only the start row (≥ 1) is violated by the empty network.
            st.violated = st.rows_trigger.iter().filter(|t| t.is_none()).count() as i64;
        }
        st
    }

    /// The network holding exactly the required cells.
    pub fn with_required(p: &'a Problem) -> Self {
        let mut st = State::new(p);
        for i in 0..p.n_cells() {
            if p.status[i] == CellStatus::Required {
                st.flip(i);
            }
        }
        st
    }

    /// Start from a given network.
    pub fn from_selection(p: &'a Problem, selected: &[bool]) -> Self {
        let mut st = State::new(p);
        for (i, s) in selected.iter().enumerate() {
            if *s {
                st.flip(i);
            }
        }
        st
    }

    fn credit_delta(&self, k: usize, da: f64) -> (f64, f64) {
        let f = &self.p.features[k];
        let h = self.protected[k];
        // Benefit grows up to the cap (target, or total for a weight-only feature); the
        // shortfall only counts real targets.
        let d_capped = self.caps[k].map_or(0.0, |c| (h + da).min(c) - h.min(c));
        let t = f.target;
        let d_short = if t > 0.0 {
            (t - h - da).max(0.0) / t - (t - h).max(0.0) / t
        } else {
            0.0
        };
        (d_capped, d_short)
    }

    fn row_violated(&self, r: usize, count: u32, pos_count: &dyn Fn(usize) -> u32) -> bool {
        match self.rows_trigger[r] {
            None => count == 0,
            Some(q) => pos_count(q) > 0 && count == 0,
        }
    }

    /// Effect of flipping cell `i`; per-scenario benefit changes are left in `scratch`.
    pub fn delta(&mut self, i: usize) -> Flip {
        let sign = if self.selected[i] { -1.0 } else { 1.0 };
        self.scratch.iter_mut().for_each(|x| *x = 0.0);
        let mut d_short = 0.0;
        let (feats, amounts) = self.cell_feats.cell(i);
        for (&k, &a) in feats.iter().zip(amounts) {
            let (dc, ds) = self.credit_delta(k as usize, sign * a);
            d_short += ds;
            let coef = self.feat_coef[k as usize];
            for &s in &self.feat_scen[k as usize] {
                self.scratch[s as usize] += coef * dc;
            }
        }
        let mut shared = 0.0;
        for &(j, l) in &self.nb[i] {
            if self.selected[j as usize] {
                shared += l;
            }
        }
        let alone = self
            .p
            .edge_penalty
            .as_ref()
            .map_or(0.0, |e| e.exposed_if_alone_km[i]);
        let d_exposed = sign * (alone - 2.0 * shared);
        let mut with_partners = 0.0;
        for &(j, v) in &self.partners[i] {
            if self.selected[j as usize] {
                with_partners += v;
            }
        }
        let d_linked = sign * with_partners;
        let mut d_violated = 0;
        if !self.rows_trigger.is_empty() {
            let step: i64 = if self.selected[i] { -1 } else { 1 };
            let q_i = self.pos_of[i];
            let new_pos = |q: usize| -> u32 {
                let c = self.pos_count[q] as i64;
                (if Some(q) == q_i { c + step } else { c }) as u32
            };
            let old_pos = |q: usize| -> u32 { self.pos_count[q] };
            let mut touched: Vec<u32> = self.cell_rows[i].clone();
            if let Some(q) = q_i {
                if let Some(r) = self.pos_row[q] {
                    touched.push(r);
                }
            }
            touched.sort_unstable();
            touched.dedup();
            for r in touched {
                let r = r as usize;
                let old = self.row_count[r];
                let in_cover = self.cell_rows[i].contains(&(r as u32));
                let new = if in_cover {
                    (old as i64 + step) as u32
                } else {
                    old
                };
                d_violated += self.row_violated(r, new, &new_pos) as i64
                    - self.row_violated(r, old, &old_pos) as i64;
            }
        }
        d_violated += self.lone_delta(i);
        Flip {
            d_cost: sign * self.p.cost[i],
            d_area: sign * self.p.area_km2[i],
            d_exposed,
            d_linked,
            d_shortfall: d_short,
            d_violated,
        }
    }

    /// A cell breaks the minimum-size rule when the rule applies, it is chosen and none of
    /// its neighbours is.
    fn lone(&self, c: usize, chosen: bool, chosen_neighbours: u32) -> bool {
        self.lone_applies[c] && chosen && chosen_neighbours == 0
    }

    /// Change of the number of lone undersized cells if cell `i` is flipped: `i` itself and
    /// each of its neighbours may change.
    fn lone_delta(&self, i: usize) -> i64 {
        let Some(m) = &self.p.min_reserve else {
            return 0;
        };
        let sel = self.selected[i];
        let mut d = self.lone(i, !sel, self.chosen_nb[i]) as i64
            - self.lone(i, sel, self.chosen_nb[i]) as i64;
        for &j in &m.neighbours[i] {
            let j = j as usize;
            let c = self.chosen_nb[j];
            let c_new = if sel { c - 1 } else { c + 1 };
            let sj = self.selected[j];
            d += self.lone(j, sj, c_new) as i64 - self.lone(j, sj, c) as i64;
        }
        d
    }

    /// Rook neighbours of cell `i` with their shared edge (km), sorted by neighbour; empty
    /// without an edge penalty.
    pub fn neighbours(&self, i: usize) -> &[(u32, f64)] {
        &self.nb[i]
    }

    /// Chosen cells that currently break the minimum-size rule, ascending.
    pub fn lone_cells(&self) -> Vec<usize> {
        (0..self.lone_applies.len())
            .filter(|&c| self.lone(c, self.selected[c], self.chosen_nb[c]))
            .collect()
    }

    /// Flip cell `i` in or out of the network.
    pub fn flip(&mut self, i: usize) {
        let f = self.delta(i);
        let sign = if self.selected[i] { -1.0 } else { 1.0 };
        for (s, d) in self.scratch.iter().enumerate() {
            self.benefit[s] += d;
        }
        let (feats, amounts) = self.cell_feats.cell(i);
        for (&k, &a) in feats.iter().zip(amounts) {
            let k = k as usize;
            let target = self.p.features[k].target;
            let was = crate::model::evaluate::at_least(self.protected[k], target);
            self.protected[k] += sign * a;
            let now = crate::model::evaluate::at_least(self.protected[k], target);
            if was != now {
                if now {
                    self.unmet -= 1;
                } else {
                    self.unmet += 1;
                }
            }
        }
        self.cost += f.d_cost;
        self.area += f.d_area;
        self.exposed += f.d_exposed;
        self.linked += f.d_linked;
        self.shortfall += f.d_shortfall;
        self.violated += f.d_violated;
        if !self.rows_trigger.is_empty() {
            let step: i64 = if self.selected[i] { -1 } else { 1 };
            for idx in 0..self.cell_rows[i].len() {
                let r = self.cell_rows[i][idx] as usize;
                self.row_count[r] = (self.row_count[r] as i64 + step) as u32;
            }
            if let Some(q) = self.pos_of[i] {
                self.pos_count[q] = (self.pos_count[q] as i64 + step) as u32;
            }
        }
        if let Some(m) = &self.p.min_reserve {
            for &j in &m.neighbours[i] {
                let c = &mut self.chosen_nb[j as usize];
                *c = if self.selected[i] { *c - 1 } else { *c + 1 };
            }
        }
        self.selected[i] = !self.selected[i];
    }

    /// The pairwise part of the objective for given totals: edge weight × exposed − link
    /// weight × linked (added to minimisations, subtracted from maximisations).
    pub fn pairwise(&self, exposed: f64, linked: f64) -> f64 {
        self.weight * exposed - self.link_weight * linked
    }

    /// Change of [`State::pairwise`] by the flip `f`.
    pub fn d_pairwise(&self, f: &Flip) -> f64 {
        self.pairwise(f.d_exposed, f.d_linked)
    }

    /// Objective in the problem's sense for given totals (max-benefit combined by the rule,
    /// edge penalty and connectivity reward applied), using `benefits` per scenario.
    pub fn objective_with(&self, cost: f64, exposed: f64, linked: f64, benefits: &[f64]) -> f64 {
        let pen = self.pairwise(exposed, linked);
        match self.p.objective {
            Objective::MinCost => cost + pen,
            Objective::MaxBenefit => {
                let c = combine(self.p, benefits, self.p.scenario_best.as_deref());
                if is_minimisation(self.p) {
                    c + pen
                } else {
                    c - pen
                }
            }
        }
    }

    /// Current objective.
    pub fn objective(&self) -> f64 {
        self.objective_with(self.cost, self.exposed, self.linked, &self.benefit)
    }

    /// Objective after the flip described by `f` (call right after [`State::delta`]).
    pub fn objective_after(&self, f: &Flip) -> f64 {
        let benefits: Vec<f64> = self
            .benefit
            .iter()
            .zip(&self.scratch)
            .map(|(b, d)| b + d)
            .collect();
        self.objective_with(
            self.cost + f.d_cost,
            self.exposed + f.d_exposed,
            self.linked + f.d_linked,
            &benefits,
        )
    }

    /// Mean per-scenario benefit change of the last delta (tie-break for min/max rules).
    pub fn mean_scratch(&self) -> f64 {
        self.scratch.iter().sum::<f64>() / self.scratch.len().max(1) as f64
    }

    /// Whether cost and area are within the budget after adding `d_cost`, `d_area`.
    pub fn fits(&self, d_cost: f64, d_area: f64) -> bool {
        let b = &self.p.budget;
        let ok = |limit: Option<f64>, used: f64| {
            limit.is_none_or(|m| used <= m + crate::model::evaluate::TOLERANCE * m.abs().max(1.0))
        };
        ok(b.max_cost, self.cost + d_cost) && ok(b.max_area_km2, self.area + d_area)
    }

    /// Targets still unmet (min-cost), up to the evaluate tolerance.
    pub fn unmet(&self) -> usize {
        debug_assert_eq!(
            self.unmet,
            self.p
                .features
                .iter()
                .zip(&self.protected)
                .filter(|(f, h)| !crate::model::evaluate::at_least(**h, f.target))
                .count()
        );
        self.unmet
    }

    /// Indices of the max-gap rows currently violated.
    pub fn violated_rows(&self) -> Vec<usize> {
        (0..self.rows_trigger.len())
            .filter(|&r| self.row_violated(r, self.row_count[r], &|q| self.pos_count[q]))
            .collect()
    }

    /// Cells of a max-gap row's cover (recomputed from the problem; rows are few).
    pub fn row_cover(&self, r: usize) -> Vec<u32> {
        (0..self.p.n_cells() as u32)
            .filter(|&c| self.cell_rows[c as usize].contains(&(r as u32)))
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::compact::unit_grid_penalty;
    use crate::model::{evaluate, ModelFeature, Robustness, Scenario};
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    /// After any sequence of flips, the incremental totals equal `model::evaluate`'s
    /// recomputation from the raw amounts (the project's independent referee): holdings,
    /// cost, exposed edge, link strength, objective and the count of unmet targets.
    #[test]
    fn incremental_totals_match_a_full_recount() {
        let mut rng = ChaCha8Rng::seed_from_u64(11);
        for round in 0..20 {
            let (rows, cols) = (4, 5);
            let n = rows * cols;
            let features: Vec<ModelFeature> = (0..6)
                .map(|k| {
                    let amounts: Vec<(u32, f64)> = (0..n as u32)
                        .filter_map(|c| {
                            let keep = rng.gen_bool(0.4);
                            let a = rng.gen_range(0.1..3.0);
                            keep.then_some((c, a))
                        })
                        .collect();
                    let total: f64 = amounts.iter().map(|a| a.1).sum();
                    ModelFeature {
                        name: format!("f{k}"),
                        scenario: None,
                        amounts,
                        target: 0.3 * total,
                        weight: 1.0,
                    }
                })
                .collect();
            // Links between random pairs (the connectivity reward, model::links).
            let pairs = (0..n as u32)
                .flat_map(|i| (i + 1..n as u32).map(move |j| (i, j)))
                .filter(|_| rng.gen_bool(0.1))
                .map(|(i, j)| (i, j, 0.1 * (1 + (i + j) % 5) as f64))
                .collect();
            let p = Problem {
                edge_penalty: Some(unit_grid_penalty(rows, cols, 0.5)),
                link_reward: Some(crate::model::LinkReward { weight: 0.7, pairs }),
                ..Problem::plain(
                    (0..n).map(|_| rng.gen_range(1.0..5.0)).collect(),
                    vec![1.0; n],
                    vec![Scenario {
                        name: "s".into(),
                        weight: 1.0,
                    }],
                    features,
                    Objective::MinCost,
                    Robustness::EveryScenario,
                )
            };
            let mut st = State::new(&p);
            for _ in 0..60 {
                st.flip(rng.gen_range(0..n));
                let e = evaluate(&p, &st.selected);
                // Absent features (no amount anywhere) are never "reached" in `evaluate`, but
                // hold their target 0: count by the same at-least rule as the state.
                let unmet = p
                    .features
                    .iter()
                    .zip(&e.protected)
                    .filter(|(f, h)| !crate::model::evaluate::at_least(**h, f.target))
                    .count();
                assert_eq!(st.unmet(), unmet, "round {round}");
                for (a, b) in st.protected.iter().zip(&e.protected) {
                    assert!((a - b).abs() < 1e-9, "round {round}: {a} vs {b}");
                }
                assert!((st.cost - e.cost).abs() < 1e-9);
                assert!((st.exposed - e.exposed_edge_km).abs() < 1e-9);
                assert!((st.linked - e.linked).abs() < 1e-9);
                assert!((st.objective() - e.objective).abs() < 1e-9);
            }
        }
    }
}
