//! Minimum of a pseudo-boolean energy with submodular pairwise terms, solved exactly as an
//! s–t minimum cut (Kolmogorov & Zabih 2004, IEEE TPAMI 26(2):147, "What energy functions can
//! be minimized via graph cuts?") with the Boykov–Kolmogorov max-flow algorithm (Boykov &
//! Kolmogorov 2004, IEEE TPAMI 26(9):1124): two search trees grown from the terminals, reused
//! between augmentations, with orphan adoption. On the grid graphs of a plan it beat Dinic's
//! algorithm (petgraph 0.8) by a wide margin (docs/method.md, "Decomposition"), so it is kept.
//!
//! The energy is E(x) = Σᵢ uᵢxᵢ + Σ_{(i,j)} wᵢⱼ|xᵢ − xⱼ| + Σ_{(i,j)} rᵢⱼxᵢ(1 − xⱼ) over
//! xᵢ ∈ {0, 1} with wᵢⱼ, rᵢⱼ ≥ 0, some cells fixed. Chosen cells (x = 1) end on the source side
//! of the cut, so the directed term is the arc i → j, cut exactly when i is chosen and j not.
//! It carries a reward for choosing both ends: −r·xᵢxⱼ = −r·xᵢ + r·xᵢ(1 − xⱼ), which is
//! submodular (Kolmogorov & Zabih 2004, the regularity condition).

/// An energy to minimise (module doc).
#[derive(Debug, Clone, PartialEq)]
pub struct Energy {
    /// Unary term uᵢ (paid when xᵢ = 1).
    pub unary: Vec<f64>,
    /// `(i, j, wᵢⱼ)`, wᵢⱼ ≥ 0: paid when xᵢ ≠ xⱼ.
    pub pairs: Vec<(u32, u32, f64)>,
    /// `(i, j, rᵢⱼ)`, rᵢⱼ ≥ 0: paid when xᵢ = 1 and xⱼ = 0.
    pub directed: Vec<(u32, u32, f64)>,
    /// `Some(v)` fixes xᵢ = v.
    pub fixed: Vec<Option<bool>>,
}

/// A minimiser of an [`Energy`] and what the residual graph proves about each cell.
#[derive(Debug, Clone, PartialEq)]
pub struct Cut {
    /// xᵢ of a minimiser.
    pub x: Vec<bool>,
    /// E(x), the least energy.
    pub value: f64,
    /// A lower bound on how much E rises if cell i is forced to the other value: the residual
    /// capacity of its terminal arc after the max-flow (a feasible flow in the residual graph
    /// with that cell tied to the other terminal, hence ≤ that min cut). 0 for fixed cells.
    pub flip_cost: Vec<f64>,
}

const NONE: u32 = u32::MAX;
const TERMINAL: u32 = u32::MAX - 1;
const ORPHAN: u32 = u32::MAX - 2;

/// Residual graph of the energy's free cells, in compressed rows: arcs `first[v]..first[v+1]`
/// leave node v; arc a and `a ^ 1` are each other's reverse.
struct Graph {
    first: Vec<u32>,
    /// Arcs in the order they were added (pairs), indexed through `order`.
    head: Vec<u32>,
    cap: Vec<f64>,
    /// Arc ids grouped by tail node (CSR over `first`).
    out: Vec<u32>,
    /// Residual terminal capacity: > 0 from the source, < 0 to the sink.
    tr: Vec<f64>,
}

impl Energy {
    /// E(x) evaluated directly (for checks).
    pub fn value(&self, x: &[bool]) -> f64 {
        let un: f64 = (0..x.len()).filter(|&i| x[i]).map(|i| self.unary[i]).sum();
        let pw: f64 = self
            .pairs
            .iter()
            .filter(|(i, j, _)| x[*i as usize] != x[*j as usize])
            .map(|(_, _, w)| *w)
            .sum();
        let dw: f64 = self
            .directed
            .iter()
            .filter(|(i, j, _)| x[*i as usize] && !x[*j as usize])
            .map(|(_, _, r)| *r)
            .sum();
        un + pw + dw
    }

    /// An exact minimiser (module doc).
    pub fn minimise(&self) -> Cut {
        self.minimise_reusing(&mut None)
    }

    /// [`Self::minimise`] that starts from the flow `kept` of an earlier call on an energy
    /// with the same pairs, directed terms and fixed cells (only the unary terms differ), and
    /// keeps this call's flow there for the next one: dynamic graph cuts (Kohli & Torr 2007,
    /// IEEE TPAMI 29(12):2079). A change of uᵢ changes only cell i's terminal arcs, so the old
    /// flow stays a flow of an equivalent network (both terminal capacities raised by one
    /// constant, which moves every cut by the same amount) once its residual terminal
    /// capacity moves by the change; max-flow then only pushes what the change opened. The
    /// value is E(x) evaluated at the minimiser. Every [`REBUILD_EVERY`] calls the graph is
    /// built afresh, so rounding in the residual capacities does not build up.
    pub fn minimise_reusing(&self, kept: &mut Option<Reuse>) -> Cut {
        let n = self.unary.len();
        // Fold the pairs that touch a fixed cell into the unary terms and a constant.
        let mut u = self.unary.clone();
        let mut constant = 0.0;
        for (i, f) in self.fixed.iter().enumerate() {
            if *f == Some(true) {
                constant += u[i];
            }
        }
        // (i, j, capacity i → j, capacity j → i).
        let mut arcs: Vec<(u32, u32, f64, f64)> =
            Vec::with_capacity(self.pairs.len() + self.directed.len());
        for &(i, j, w) in &self.pairs {
            if w <= 0.0 || i == j {
                continue;
            }
            match (self.fixed[i as usize], self.fixed[j as usize]) {
                (None, None) => arcs.push((i, j, w, w)),
                (None, Some(v)) => fold(&mut u, &mut constant, i, v, w),
                (Some(v), None) => fold(&mut u, &mut constant, j, v, w),
                (Some(a), Some(b)) => {
                    if a != b {
                        constant += w;
                    }
                }
            }
        }
        for &(i, j, r) in &self.directed {
            if r <= 0.0 || i == j {
                continue;
            }
            match (self.fixed[i as usize], self.fixed[j as usize]) {
                (None, None) => arcs.push((i, j, r, 0.0)),
                // r·xᵢ when j is left out; nothing when j is chosen.
                (None, Some(b)) => {
                    if !b {
                        u[i as usize] += r;
                    }
                }
                // r·(1 − xⱼ) when i is chosen; nothing when i is left out.
                (Some(a), None) => {
                    if a {
                        constant += r;
                        u[j as usize] -= r;
                    }
                }
                (Some(a), Some(b)) => {
                    if a && !b {
                        constant += r;
                    }
                }
            }
        }
        // uᵢxᵢ = min(uᵢ, 0) + (arc to the sink of uᵢ if uᵢ > 0, cut when xᵢ = 1; or arc from the
        // source of −uᵢ if uᵢ < 0, cut when xᵢ = 0).
        let mut tr = vec![0.0; n];
        for i in 0..n {
            if self.fixed[i].is_none() {
                constant += u[i].min(0.0);
                tr[i] = -u[i];
            }
        }
        let (mut g, uses) = match kept.take() {
            Some(r) if r.uses < REBUILD_EVERY && r.tr0.len() == n && r.arcs == arcs.len() => {
                let mut g = r.graph;
                for ((now, new), old) in g.tr.iter_mut().zip(&tr).zip(&r.tr0) {
                    *now += new - old;
                }
                (g, r.uses + 1)
            }
            _ => (Graph::new(n, &arcs, tr.clone()), 0),
        };
        let flow = g.max_flow();
        let source_side = g.source_side();
        let x: Vec<bool> = (0..n)
            .map(|i| self.fixed[i].unwrap_or(source_side[i]))
            .collect();
        let flip_cost = (0..n)
            .map(|i| match self.fixed[i] {
                Some(_) => 0.0,
                None => g.flip_flow(i, x[i]),
            })
            .collect();
        // A fresh graph's flow is the whole max-flow; a reused one's only what this call added.
        let value = if uses == 0 {
            constant + flow
        } else {
            self.value(&x)
        };
        *kept = Some(Reuse {
            graph: g,
            tr0: tr,
            arcs: arcs.len(),
            uses,
        });
        Cut {
            value,
            x,
            flip_cost,
        }
    }
}

/// Calls of [`Energy::minimise_reusing`] between two fresh builds of the graph.
pub const REBUILD_EVERY: usize = 64;

/// The residual graph of a minimisation, kept for the next ([`Energy::minimise_reusing`]).
pub struct Reuse {
    graph: Graph,
    /// Each node's terminal capacity −uᵢ (after folding the fixed cells) when it was built or
    /// last moved.
    tr0: Vec<f64>,
    /// Number of arcs, a cheap check that the next energy has the same pairs.
    arcs: usize,
    /// Calls since the graph was built.
    uses: usize,
}

/// w·|xᵢ − v| with v fixed: w(1 − xᵢ) when v = 1, w·xᵢ when v = 0.
fn fold(u: &mut [f64], constant: &mut f64, i: u32, v: bool, w: f64) {
    if v {
        *constant += w;
        u[i as usize] -= w;
    } else {
        u[i as usize] += w;
    }
}

impl Graph {
    /// The graph of arcs `(i, j, capacity i → j, capacity j → i)` and terminal capacities.
    fn new(n: usize, pairs: &[(u32, u32, f64, f64)], tr: Vec<f64>) -> Graph {
        let mut head = Vec::with_capacity(2 * pairs.len());
        let mut cap = Vec::with_capacity(2 * pairs.len());
        let mut deg = vec![0u32; n + 1];
        for &(i, j, forward, backward) in pairs {
            head.push(j);
            cap.push(forward);
            head.push(i);
            cap.push(backward);
            deg[i as usize] += 1;
            deg[j as usize] += 1;
        }
        let mut first = vec![0u32; n + 1];
        for v in 0..n {
            first[v + 1] = first[v] + deg[v];
        }
        let mut fill = first.clone();
        let mut out = vec![0u32; head.len()];
        for (q, &(i, j, _, _)) in pairs.iter().enumerate() {
            out[fill[i as usize] as usize] = 2 * q as u32;
            fill[i as usize] += 1;
            out[fill[j as usize] as usize] = 2 * q as u32 + 1;
            fill[j as usize] += 1;
        }
        Graph {
            first,
            head,
            cap,
            out,
            tr,
        }
    }

    fn arcs(&self, v: usize) -> std::ops::Range<usize> {
        self.first[v] as usize..self.first[v + 1] as usize
    }

    /// The Boykov–Kolmogorov algorithm; returns the flow value. Capacities at or below
    /// `eps` count as saturated (rounding of f64 sums).
    fn max_flow(&mut self) -> f64 {
        let n = self.tr.len();
        let scale = self
            .tr
            .iter()
            .chain(self.cap.iter())
            .fold(0.0f64, |m, c| m.max(c.abs()));
        let eps = 1e-13 * scale.max(1e-300);
        // tree: 0 free, 1 source tree, 2 sink tree.
        let mut tree = vec![0u8; n];
        let mut parent = vec![NONE; n];
        let mut dist = vec![0u32; n];
        let mut stamp = vec![0u32; n];
        let mut time = 1u32;
        let mut active = std::collections::VecDeque::new();
        let mut queued = vec![false; n];
        let mut flow = 0.0;
        for v in 0..n {
            if self.tr[v] > eps {
                tree[v] = 1;
            } else if self.tr[v] < -eps {
                tree[v] = 2;
            } else {
                continue;
            }
            parent[v] = TERMINAL;
            dist[v] = 1;
            stamp[v] = time;
            active.push_back(v as u32);
            queued[v] = true;
        }
        let mut orphans: std::collections::VecDeque<u32> = std::collections::VecDeque::new();
        loop {
            // Growth: find an arc from the source tree to the sink tree.
            let mut bridge = None;
            while let Some(&v) = active.front() {
                let v = v as usize;
                if tree[v] == 0 {
                    active.pop_front();
                    queued[v] = false;
                    continue;
                }
                for k in self.arcs(v) {
                    let a = self.out[k] as usize;
                    let open = if tree[v] == 1 {
                        self.cap[a] > eps
                    } else {
                        self.cap[a ^ 1] > eps
                    };
                    if !open {
                        continue;
                    }
                    let w = self.head[a] as usize;
                    if tree[w] == 0 {
                        tree[w] = tree[v];
                        parent[w] = (a ^ 1) as u32;
                        dist[w] = dist[v] + 1;
                        stamp[w] = stamp[v];
                        if !queued[w] {
                            active.push_back(w as u32);
                            queued[w] = true;
                        }
                    } else if tree[w] != tree[v] {
                        bridge = Some(if tree[v] == 1 { a } else { a ^ 1 });
                        break;
                    }
                }
                if bridge.is_some() {
                    break;
                }
                active.pop_front();
                queued[v] = false;
            }
            let Some(bridge) = bridge else { break };
            time += 1;
            // Augment along source root → … → tail(bridge) → head(bridge) → … → sink root.
            let s_node = self.head[bridge ^ 1] as usize;
            let t_node = self.head[bridge] as usize;
            let mut delta = self.cap[bridge];
            let mut v = s_node;
            while parent[v] != TERMINAL {
                let a = parent[v] as usize;
                delta = delta.min(self.cap[a ^ 1]);
                v = self.head[a] as usize;
            }
            delta = delta.min(self.tr[v]);
            let mut v = t_node;
            while parent[v] != TERMINAL {
                let a = parent[v] as usize;
                delta = delta.min(self.cap[a]);
                v = self.head[a] as usize;
            }
            delta = delta.min(-self.tr[v]);
            self.cap[bridge] -= delta;
            self.cap[bridge ^ 1] += delta;
            let mut v = s_node;
            while parent[v] != TERMINAL {
                let a = parent[v] as usize;
                self.cap[a] += delta;
                self.cap[a ^ 1] -= delta;
                let up = self.head[a] as usize;
                if self.cap[a ^ 1] <= eps {
                    parent[v] = ORPHAN;
                    orphans.push_back(v as u32);
                }
                v = up;
            }
            self.tr[v] -= delta;
            if self.tr[v] <= eps {
                parent[v] = ORPHAN;
                orphans.push_back(v as u32);
            }
            let mut v = t_node;
            while parent[v] != TERMINAL {
                let a = parent[v] as usize;
                self.cap[a ^ 1] += delta;
                self.cap[a] -= delta;
                let up = self.head[a] as usize;
                if self.cap[a] <= eps {
                    parent[v] = ORPHAN;
                    orphans.push_back(v as u32);
                }
                v = up;
            }
            self.tr[v] += delta;
            if self.tr[v] >= -eps {
                parent[v] = ORPHAN;
                orphans.push_back(v as u32);
            }
            flow += delta;
            // Adoption: give each orphan a new parent in its tree whose path reaches the
            // terminal, or free it.
            while let Some(o) = orphans.pop_front() {
                let o = o as usize;
                let side = tree[o];
                let mut best: Option<(u32, u32)> = None;
                for k in self.arcs(o) {
                    let a = self.out[k] as usize;
                    let w = self.head[a] as usize;
                    if tree[w] != side {
                        continue;
                    }
                    let open = if side == 1 {
                        self.cap[a ^ 1] > eps
                    } else {
                        self.cap[a] > eps
                    };
                    if !open {
                        continue;
                    }
                    // Walk up from w: does it reach the terminal?
                    let mut d = 0u32;
                    let mut u = w;
                    let reaches = loop {
                        if stamp[u] == time {
                            d += dist[u];
                            break true;
                        }
                        d += 1;
                        match parent[u] {
                            TERMINAL => {
                                stamp[u] = time;
                                dist[u] = 1;
                                break true;
                            }
                            ORPHAN | NONE => break false,
                            p => u = self.head[p as usize] as usize,
                        }
                    };
                    if !reaches {
                        continue;
                    }
                    if best.is_none_or(|(_, bd)| d < bd) {
                        best = Some((a as u32, d));
                    }
                    // Mark the path so later walks stop early.
                    let mut u = w;
                    let mut dd = d;
                    while stamp[u] != time {
                        stamp[u] = time;
                        dist[u] = dd;
                        dd -= 1;
                        u = self.head[parent[u] as usize] as usize;
                    }
                }
                match best {
                    Some((a, d)) => {
                        parent[o] = a;
                        stamp[o] = time;
                        dist[o] = d + 1;
                    }
                    None => {
                        for k in self.arcs(o) {
                            let a = self.out[k] as usize;
                            let w = self.head[a] as usize;
                            if tree[w] != side {
                                continue;
                            }
                            let open = if side == 1 {
                                self.cap[a ^ 1] > eps
                            } else {
                                self.cap[a] > eps
                            };
                            if open && !queued[w] {
                                active.push_back(w as u32);
                                queued[w] = true;
                            }
                            let p = parent[w];
                            if p != TERMINAL
                                && p != ORPHAN
                                && p != NONE
                                && self.head[p as usize] as usize == o
                            {
                                parent[w] = ORPHAN;
                                orphans.push_back(w as u32);
                            }
                        }
                        tree[o] = 0;
                        parent[o] = NONE;
                    }
                }
            }
        }
        flow
    }

    /// A feasible flow in the residual graph once node `v` is tied to the other terminal: a
    /// lower bound on how much the min cut rises (max-flow/min-cut duality). A chosen node
    /// tied to the sink takes the paths s→v and s→u→v over its neighbours u; an unchosen node
    /// tied to the source takes v→t and v→u→t. The paths share no arc, so their sum is a flow.
    fn flip_flow(&self, v: usize, chosen: bool) -> f64 {
        // Residual capacity towards v (chosen) or away from v (unchosen) per neighbour, with
        // parallel arcs merged: they share the neighbour's terminal arc.
        let mut via: Vec<(u32, f64)> = self
            .arcs(v)
            .map(|k| {
                let a = self.out[k] as usize;
                let c = if chosen { self.cap[a ^ 1] } else { self.cap[a] };
                (self.head[a], c.max(0.0))
            })
            .collect();
        via.sort_by_key(|p| p.0);
        let mut f = if chosen {
            self.tr[v].max(0.0)
        } else {
            (-self.tr[v]).max(0.0)
        };
        let mut k = 0;
        while k < via.len() {
            let u = via[k].0;
            let mut c = 0.0;
            while k < via.len() && via[k].0 == u {
                c += via[k].1;
                k += 1;
            }
            let t = if chosen {
                self.tr[u as usize].max(0.0)
            } else {
                (-self.tr[u as usize]).max(0.0)
            };
            f += t.min(c);
        }
        f
    }

    /// Nodes reachable from the source in the residual graph (the source side of a min cut).
    fn source_side(&self) -> Vec<bool> {
        let n = self.tr.len();
        let scale = self
            .tr
            .iter()
            .chain(self.cap.iter())
            .fold(0.0f64, |m, c| m.max(c.abs()));
        let eps = 1e-13 * scale.max(1e-300);
        let mut seen = vec![false; n];
        let mut stack: Vec<usize> = (0..n).filter(|&v| self.tr[v] > eps).collect();
        for &v in &stack {
            seen[v] = true;
        }
        while let Some(v) = stack.pop() {
            for k in self.arcs(v) {
                let a = self.out[k] as usize;
                let w = self.head[a] as usize;
                if !seen[w] && self.cap[a] > eps {
                    seen[w] = true;
                    stack.push(w);
                }
            }
        }
        seen
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};

    /// Brute-force enumeration of all 2ⁿ assignments (n ≤ 16) against the min cut, with random
    /// unary terms of both signs, random pair weights on a grid plus random extra pairs, random
    /// directed terms in every other case, and random fixed cells. Reference: exhaustive enumeration of the energy.
    #[test]
    fn min_cut_equals_enumeration() {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        for case in 0..300 {
            let n = rng.gen_range(1..=16usize);
            let cols = rng.gen_range(1..=4usize);
            let unary: Vec<f64> = (0..n).map(|_| rng.gen_range(-3.0..3.0)).collect();
            let mut pairs = Vec::new();
            for i in 0..n {
                if (i + 1) % cols != 0 && i + 1 < n {
                    pairs.push((i as u32, i as u32 + 1, rng.gen_range(0.0..2.0)));
                }
                if i + cols < n {
                    pairs.push((i as u32, (i + cols) as u32, rng.gen_range(0.0..2.0)));
                }
            }
            for _ in 0..rng.gen_range(0..4) {
                let i = rng.gen_range(0..n as u32);
                let j = rng.gen_range(0..n as u32);
                pairs.push((i, j, rng.gen_range(0.0..1.0)));
            }
            // Directed terms (a link reward's form) in half the cases, on grid neighbours and
            // random pairs alike.
            let mut directed = Vec::new();
            if case % 2 == 1 {
                for _ in 0..rng.gen_range(1..=n + 2) {
                    let i = rng.gen_range(0..n as u32);
                    let j = rng.gen_range(0..n as u32);
                    directed.push((i, j, rng.gen_range(0.0..2.5)));
                }
            }
            let fixed: Vec<Option<bool>> = (0..n)
                .map(|_| match rng.gen_range(0..8) {
                    0 => Some(true),
                    1 => Some(false),
                    _ => None,
                })
                .collect();
            let e = Energy {
                unary,
                pairs,
                directed,
                fixed,
            };
            check_against_enumeration(&e, &e.minimise(), case);
            // The same energy with new unary terms, five times, each max-flow starting from
            // the last one's flow (dynamic graph cuts), against enumeration again.
            let mut kept = None;
            let mut e = e;
            for step in 0..6 {
                let cut = e.minimise_reusing(&mut kept);
                check_against_enumeration(&e, &cut, 1000 * step + case);
                for u in &mut e.unary {
                    *u += rng.gen_range(-1.0..1.0) * if step % 2 == 0 { 0.1 } else { 2.0 };
                }
            }
        }
    }

    /// `cut` against exhaustive enumeration of `e`: the least energy, a minimiser, and flip
    /// costs that bound the rise of each cell's flip from below.
    fn check_against_enumeration(e: &Energy, cut: &Cut, case: usize) {
        let n = e.unary.len();
        let fixed = &e.fixed;
        let mut best = f64::INFINITY;
        let mut best_flip = vec![f64::INFINITY; n];
        let mut x = vec![false; n];
        for mask in 0u32..(1 << n) {
            for (b, xb) in x.iter_mut().enumerate() {
                *xb = mask >> b & 1 == 1;
            }
            if (0..n).any(|i| fixed[i].is_some_and(|v| v != x[i])) {
                continue;
            }
            let v = e.value(&x);
            best = best.min(v);
            for i in 0..n {
                if x[i] != cut.x[i] {
                    best_flip[i] = best_flip[i].min(v);
                }
            }
        }
        assert!(
            (cut.value - best).abs() < 1e-9,
            "case {case}: {} vs {best}",
            cut.value
        );
        assert!(
            (e.value(&cut.x) - best).abs() < 1e-9,
            "case {case}: minimiser"
        );
        for (i, &flipped) in best_flip.iter().enumerate() {
            // The flip cost is a valid lower bound on the rise when cell i changes.
            assert!(
                best + cut.flip_cost[i] <= flipped + 1e-9,
                "case {case} cell {i}: {} + {} > {}",
                best,
                cut.flip_cost[i],
                flipped
            );
        }
    }

    /// A link reward on two cells, worked by hand: E = 1·x₀ + 1·x₁ − 3·x₀x₁, written as
    /// unary −2, −2 and the directed term 3·x₀(1 − x₁). Values: (0,0) 0, (1,0) 1, (0,1) 1,
    /// (1,1) −1, so both are chosen and the least energy is −1 (hand enumeration).
    #[test]
    fn a_link_reward_pulls_two_cells_in_together() {
        let e = Energy {
            unary: vec![1.0 - 3.0, 1.0],
            pairs: vec![],
            directed: vec![(0, 1, 3.0)],
            fixed: vec![None, None],
        };
        let cut = e.minimise();
        assert_eq!(cut.x, vec![true, true]);
        assert!((cut.value + 1.0).abs() < 1e-12);
        assert!((e.value(&[true, false]) - 1.0).abs() < 1e-12);
        assert!((e.value(&[false, true]) - 1.0).abs() < 1e-12);
        // With cell 1 fixed out the reward cannot be had: x₀ = 0, energy 0.
        let out = Energy {
            fixed: vec![None, Some(false)],
            ..e
        };
        let cut = out.minimise();
        assert_eq!(cut.x, vec![false, false]);
        assert!(cut.value.abs() < 1e-12);
    }

    /// Without pairs the energy separates: xᵢ = 1 exactly where uᵢ < 0, and the flip cost is
    /// |uᵢ| (hand derivation).
    #[test]
    fn separable_energy() {
        let e = Energy {
            unary: vec![-2.0, 1.5, 0.0, -0.5],
            pairs: vec![],
            directed: vec![],
            fixed: vec![None, None, None, Some(false)],
        };
        let cut = e.minimise();
        assert_eq!(cut.x, vec![true, false, false, false]);
        assert_eq!(cut.value, -2.0);
        assert_eq!(cut.flip_cost, vec![2.0, 1.5, 0.0, 0.0]);
    }
}
