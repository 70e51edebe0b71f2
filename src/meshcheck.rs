//! Stage 5b: the mesh self-check. The case is solved again on two coarser
//! grids (steps ×√2 and ×2, with as many fewer cells across features) and
//! each part's peak field is compared across the three grids. (Factors 2
//! and 4 left small curved features with one or two cells on the coarsest
//! grid, and the estimates there meant little.)
//!
//! With peaks E1 (fine), E2, E3 (coarsest) and a refinement ratio r (from
//! the node counts, r = √(N_fine/N_coarser)), the differences d12 = E1 − E2
//! and d23 = E2 − E3 give the observed order `p = ln(|d23|/|d12|)/ln r` and
//! the Richardson estimate of the fine grid's error `|d12|/(r^q − 1)` with
//! q = min(p, 2) (the scheme's order; a higher observed order is not
//! trusted to shrink the estimate). Where the differences do not shrink
//! the estimate assumes order ½: the larger difference / (r^½ − 1). A peak that keeps growing under
//! refinement without slowing (`d12 ≥ 0.7·d23 > 0`) is a field singularity
//! of the drawn geometry (a sharp edge or corner), not a converging number.
//! Peaks that carry an error floor (`RegionField::e_max_floor`, from the
//! error model of fitted inclusions) never get a smaller estimate.

use crate::fields::RegionField;

/// Growth ratio d12/d23 above which a rising peak counts as not converging
/// (p < 0.5 at r = 2).
pub const SINGULAR_RATIO: f64 = 0.7;
/// Order assumed where the three peaks show none (differences that do not
/// shrink): the estimate is then the larger difference / (r^0.5 − 1), about
/// 5× it at r = √2 — deliberately pessimistic.
pub const SLOWEST_ORDER: f64 = 0.5;
/// An observed order above this (the scheme's 2 plus scatter) means the
/// three values are not yet in the asymptotic range: the differences fell
/// faster than the scheme can make them (a graded grid whose finest cells
/// coarsen less than the rest).
pub const TRUSTED_ORDER_ABOVE_SCHEME: f64 = 2.5;
/// The estimate's safety factor then, after the grid convergence index
/// (Roache, *Verification and Validation in Computational Science and
/// Engineering*, 1998: 1.25 for three grids in the asymptotic range, 3
/// otherwise; from memory): the strip-on-board case's field 2 mm beyond the
/// edge converges at order 1.4 under refinement while its three self-check
/// grids show 6.6, and order 2 alone gave 0.40 % against a true 0.52 %.
pub const UNTRUSTED_ORDER_SAFETY: f64 = 3.0;
/// Relative differences below this are solver round-off, not grid effects.
pub const SOLVER_NOISE: f64 = 1e-6;
/// Relative growth below which a rising peak is taken as converged anyway.
pub const NEGLIGIBLE_CHANGE: f64 = 1e-3;

/// The self-check of one region.
#[derive(Debug, Clone, PartialEq)]
pub struct RegionCheck {
    /// Peak field on the fine, medium and coarse grid (V/m).
    pub e_max: [f64; 3],
    /// Observed order of convergence, where the differences allow one.
    pub order: Option<f64>,
    /// Estimated relative error of the fine grid's peak; `None` where the
    /// region has no cells on a coarser grid (nothing to compare).
    pub error_estimate: Option<f64>,
    /// The peak grows under refinement without converging.
    pub growing: bool,
}

/// The self-check of a case.
#[derive(Debug, Clone, PartialEq)]
pub struct MeshCheck {
    /// Nodes of the fine, medium and coarse grid.
    pub nodes: [usize; 3],
    /// Per region of the layout (same order).
    pub regions: Vec<RegionCheck>,
    /// Partial-discharge inception scale of each gas region with a
    /// discharge model on the fine, medium and coarse grid (`None` where a
    /// grid gave no level).
    pub inception: Vec<(usize, [Option<f64>; 3])>,
    /// Per probe of the case: its |E| on the three grids, judged.
    pub probes: Vec<RegionCheck>,
    /// Per sampling line: its peak |E| on the three grids, judged.
    pub lines: Vec<RegionCheck>,
    /// The stored energy on the three grids, judged (with two fixed
    /// potentials it is ½·C·ΔV², so it judges the capacitance too).
    pub energy: RegionCheck,
    /// Per region: its judged peak (`RegionField::e_judged`), judged.
    pub judged: Vec<RegionCheck>,
    /// Per singular point of the fine grid (`Fields::singular`, same
    /// order): its field at each stated distance, judged (no estimate where
    /// a coarser grid does not have the point).
    pub singular: Vec<[RegionCheck; 2]>,
}

impl RegionCheck {
    fn scaled(&self, s: f64) -> RegionCheck {
        RegionCheck { e_max: self.e_max.map(|e| e * s), ..self.clone() }
    }
}

impl MeshCheck {
    /// The same check for every fixed potential multiplied by `s` (the
    /// field being linear in the potentials): fields × s, the energy × s²,
    /// inception scales ÷ s; orders, estimates and growth are ratios and
    /// do not change.
    pub fn scaled(&self, s: f64) -> MeshCheck {
        let all = |v: &[RegionCheck]| v.iter().map(|c| c.scaled(s)).collect();
        MeshCheck {
            nodes: self.nodes,
            regions: all(&self.regions),
            inception: self.inception.iter().map(|(r, v)| (*r, v.map(|x| x.map(|x| x / s)))).collect(),
            probes: all(&self.probes),
            lines: all(&self.lines),
            energy: RegionCheck { e_max: self.energy.e_max.map(|e| e * s * s), ..self.energy.clone() },
            judged: all(&self.judged),
            singular: self.singular.iter().map(|c| c.clone().map(|c| c.scaled(s))).collect(),
        }
    }

    /// The refinement ratio between the grids, from their node counts.
    pub fn ratio(&self) -> f64 {
        ratio(self.nodes)
    }

    /// The judgement of a gas region's inception level (`None` unless all
    /// three grids gave one).
    pub fn inception_estimate(&self, region: usize) -> Option<RegionCheck> {
        let (_, s) = self.inception.iter().find(|(r, _)| *r == region)?;
        let [Some(a), Some(b), Some(c)] = *s else { return None };
        Some(estimate([a, b, c], self.ratio()))
    }
}

fn ratio(nodes: [usize; 3]) -> f64 {
    ((nodes[0] as f64 / nodes[1] as f64).sqrt() * (nodes[1] as f64 / nodes[2] as f64).sqrt()).sqrt()
}

/// Largest change of a gas part's inception level between the fine and
/// the medium grid before it is called grid-dependent.
pub const INCEPTION_CHANGE_LIMIT: f64 = 0.05;

/// Judges one region's three peaks with refinement ratio `r`.
pub fn judge(e: [f64; 3], cells: [usize; 3], r: f64) -> RegionCheck {
    if cells.contains(&0) {
        return RegionCheck { e_max: e, order: None, error_estimate: None, growing: false };
    }
    estimate(e, r)
}

/// The Richardson judgement (module docs) of any reported number computed
/// on the fine, medium and coarse grid, `v` (fine first), with refinement
/// ratio `r`: a probe's field, a line's peak, the energy, an inception
/// level. Non-finite values give no estimate.
pub fn estimate(v: [f64; 3], r: f64) -> RegionCheck {
    let e = v;
    let [e1, e2, e3] = e;
    if e.iter().any(|x| !x.is_finite()) {
        return RegionCheck { e_max: e, order: None, error_estimate: None, growing: false };
    }
    if e1 == 0.0 {
        return RegionCheck { e_max: e, order: None, error_estimate: Some(0.0), growing: false };
    }
    let (d12, d23) = (e1 - e2, e2 - e3);
    if d12.abs().max(d23.abs()) <= SOLVER_NOISE * e1 {
        // the same peak on all three grids, to solver accuracy (a uniform field)
        return RegionCheck { e_max: e, order: None, error_estimate: Some(0.0), growing: false };
    }
    let growing = d12 > NEGLIGIBLE_CHANGE * e1 && d23 > 0.0 && d12 >= SINGULAR_RATIO * d23;
    let same_sign = d12 * d23 > 0.0 && d12.abs() < d23.abs();
    let order = same_sign.then(|| (d23.abs() / d12.abs()).ln() / r.ln());
    let error = match order {
        // an order below the slowest one worth the name counts as that one
        // (differences that barely shrink would otherwise blow the estimate up)
        Some(p) if !growing => {
            let safety = if p > TRUSTED_ORDER_ABOVE_SCHEME { UNTRUSTED_ORDER_SAFETY } else { 1.0 };
            safety * d12.abs() / (r.powf(p.clamp(SLOWEST_ORDER, 2.0)) - 1.0)
        }
        // Differences that do not shrink show no convergence yet: assume
        // the slowest order still worth the name.
        _ => d12.abs().max(d23.abs()) / (r.powf(SLOWEST_ORDER) - 1.0),
    };
    RegionCheck { e_max: e, order, error_estimate: Some(error / e1), growing }
}

/// Compares the region peaks of three solutions (fine first).
pub fn compare(fields: [&[RegionField]; 3], nodes: [usize; 3]) -> MeshCheck {
    let r = ratio(nodes);
    let per_region = |value: fn(&RegionField) -> f64| -> Vec<RegionCheck> {
        (0..fields[0].len())
            .map(|k| {
                let mut c = judge(fields.map(|f| value(&f[k])), fields.map(|f| f[k].cells), r);
                // The error model of the fine grid's peak bounds the estimate below.
                c.error_estimate = c.error_estimate.map(|e| e.max(fields[0][k].e_max_floor));
                c
            })
            .collect()
    };
    let none = RegionCheck { e_max: [0.0; 3], order: None, error_estimate: None, growing: false };
    MeshCheck {
        nodes,
        regions: per_region(|f| f.e_max),
        judged: per_region(|f| f.e_judged),
        inception: Vec::new(),
        probes: Vec::new(),
        lines: Vec::new(),
        energy: none,
        singular: Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn second_order_sequence_gives_order_two_and_a_covering_estimate() {
        // E(h) = 1 + h², h = 0.01, 0.02, 0.04: Richardson extrapolation, common practice
        let c = judge([1.0001, 1.0004, 1.0016], [9, 9, 9], 2.0);
        assert!((c.order.unwrap() - 2.0).abs() < 1e-6);
        assert!((c.error_estimate.unwrap() - 1e-4 / 1.0001).abs() < 1e-9);
        assert!(!c.growing);
    }

    #[test]
    fn a_singular_peak_is_seen_growing() {
        // E ∝ h^(-1/3) at a 90° conductor corner (Jackson, Classical Electrodynamics, 3rd ed. 1999, §2.11)
        let e = |h: f64| h.powf(-1.0 / 3.0);
        let c = judge([e(0.01), e(0.02), e(0.04)], [9, 9, 9], 2.0);
        assert!(c.growing);
        assert!(c.error_estimate.unwrap() > 0.2);
    }

    #[test]
    fn missing_cells_leave_the_check_unbracketed() {
        let c = judge([1.0, 0.0, 0.0], [9, 0, 0], 2.0);
        assert_eq!(c.error_estimate, None);
    }
}
