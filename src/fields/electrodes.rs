//! The shortest gap between electrodes at different fixed potentials.

use super::Gap;
use crate::case::ElectrodeKind;
use crate::grid::{Grid, Layout, NodeIx};

/// Nodes of an electrode that have a neighbour outside it.
fn surface(grid: &Grid, layout: &Layout, nodes: &[NodeIx]) -> Vec<[f64; 2]> {
    nodes
        .iter()
        .filter(|n| {
            let (i, j) = grid.node_ij(**n);
            let own = layout.node_electrode[n.0];
            let around = [(i.wrapping_sub(1), j), (i + 1, j), (i, j.wrapping_sub(1)), (i, j + 1)];
            around
                .iter()
                .any(|&(a, b)| a < grid.nx() && b < grid.ny() && layout.node_electrode[grid.node(a, b).0] != own)
        })
        .map(|n| grid.node_pos(*n))
        .collect()
}

/// Smallest distance between two point sets (sweep over x-sorted `b`).
fn min_distance(a: &[[f64; 2]], b: &mut [[f64; 2]]) -> f64 {
    b.sort_by(|p, q| p[0].total_cmp(&q[0]));
    let mut best = f64::INFINITY;
    for p in a {
        let k = b.partition_point(|q| q[0] < p[0]);
        for q in b[k..].iter() {
            if q[0] - p[0] >= best {
                break;
            }
            best = best.min(((q[0] - p[0]).powi(2) + (q[1] - p[1]).powi(2)).sqrt());
        }
        for q in b[..k].iter().rev() {
            if p[0] - q[0] >= best {
                break;
            }
            best = best.min(((q[0] - p[0]).powi(2) + (q[1] - p[1]).powi(2)).sqrt());
        }
    }
    best
}

pub(super) fn gap(grid: &Grid, layout: &Layout, members: &[Vec<NodeIx>]) -> Option<Gap> {
    let fixed: Vec<(f64, Vec<[f64; 2]>)> = layout
        .electrodes
        .iter()
        .zip(members)
        .filter_map(|(e, nodes)| match e.kind {
            ElectrodeKind::Fixed { potential_v } => Some((potential_v, surface(grid, layout, nodes))),
            ElectrodeKind::Floating => None,
        })
        .collect();
    let (lo, hi) = fixed.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), e| (lo.min(e.0), hi.max(e.0)));
    let mut distance = f64::INFINITY;
    for (k, a) in fixed.iter().enumerate() {
        for b in &fixed[k + 1..] {
            if a.0 != b.0 {
                distance = distance.min(min_distance(&a.1, &mut b.1.clone()));
            }
        }
    }
    (distance.is_finite() && hi > lo).then_some(Gap { distance, largest_difference: hi - lo })
}
