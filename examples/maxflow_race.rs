//! Times the decomposition's min-cut subproblem (hand-written Boykov–Kolmogorov,
//! `solve::decompose::maxflow`) against petgraph 0.8's Dinic on the same grid energies, and
//! checks that both find the same max-flow value. Run in release:
//! `cargo run --release --features cbc --example maxflow_race -- 316`.

use std::time::Instant;

use driftplan::solve::decompose::maxflow::Energy;
use petgraph::graph::{DiGraph, NodeIndex};
use rand::{Rng, SeedableRng};

fn main() {
    let side: usize = std::env::args()
        .nth(1)
        .and_then(|s| s.parse().ok())
        .unwrap_or(316);
    let n = side * side;
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
    for (label, spread) in [("smooth unary", 0.2), ("noisy unary", 2.0)] {
        // Unary: a smooth north–south trend plus noise; pairs: rook neighbours, weight 0.5.
        let unary: Vec<f64> = (0..n)
            .map(|i| {
                let r = (i / side) as f64 / side as f64;
                (r - 0.5) * 2.0 + rng.gen_range(-spread..spread)
            })
            .collect();
        let mut pairs = Vec::new();
        for i in 0..n {
            if (i + 1) % side != 0 {
                pairs.push((i as u32, i as u32 + 1, 0.5));
            }
            if i + side < n {
                pairs.push((i as u32, (i + side) as u32, 0.5));
            }
        }
        let e = Energy {
            unary: unary.clone(),
            pairs: pairs.clone(),
            directed: Vec::new(),
            fixed: vec![None; n],
        };
        let t = Instant::now();
        let cut = e.minimise();
        let bk = t.elapsed().as_secs_f64();
        let constant: f64 = unary.iter().map(|u| u.min(0.0)).sum();
        // Same network for Dinic: s = n, t = n + 1.
        let t = Instant::now();
        let mut g: DiGraph<(), f64> = DiGraph::with_capacity(n + 2, 2 * pairs.len() + n);
        for _ in 0..n + 2 {
            g.add_node(());
        }
        let (s, sink) = (NodeIndex::new(n), NodeIndex::new(n + 1));
        for (i, &u) in unary.iter().enumerate() {
            if u < 0.0 {
                g.add_edge(s, NodeIndex::new(i), -u);
            } else if u > 0.0 {
                g.add_edge(NodeIndex::new(i), sink, u);
            }
        }
        for &(i, j, w) in &pairs {
            g.add_edge(NodeIndex::new(i as usize), NodeIndex::new(j as usize), w);
            g.add_edge(NodeIndex::new(j as usize), NodeIndex::new(i as usize), w);
        }
        let (flow, _) = petgraph::algo::dinics(&g, s, sink);
        let dinic = t.elapsed().as_secs_f64();
        println!(
            "{n} cells, {label}: Boykov–Kolmogorov {bk:.3} s (energy {:.6}), petgraph Dinic \
             {dinic:.3} s (energy {:.6})",
            cut.value,
            constant + flow
        );
    }
}
