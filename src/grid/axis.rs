//! Graded node positions along one axis.
//!
//! Every feature coordinate (part edge, layer face, circle extreme) becomes
//! a grid line. Each interval between neighbouring feature lines asks for a
//! local step `h_k = clamp(L_k / cells_across, min_step, max_step)` (never
//! more than `L_k`), and that request spreads outward with a step that grows
//! by at most `growth` per cell. The resulting step-size function is
//!
//! `h(x) = min(h_k0, min_k [h_k + (growth − 1)·dist(x, interval_k)], max_step)`
//!
//! for x in interval k0, which is piecewise linear. Nodes are placed so that
//! each cell holds the same share of `∫ dx / h(x)` (equidistribution); the
//! integral and its inverse are evaluated in closed form on each linear piece.

use crate::case::GridSpec;

/// Relative tolerance under which two feature coordinates are one grid line.
pub const MERGE_TOLERANCE: f64 = 1e-9;

/// The planned cells of one axis: each interval between feature lines with
/// its step-size function and cell count. Counting is cheap, so the grid
/// size can be checked before any node is placed.
pub struct AxisPlan {
    intervals: Vec<(f64, f64, StepSize, usize)>,
}

impl AxisPlan {
    /// Plans the axis from `lo` to `hi` with grid lines at every feature
    /// coordinate that lies inside.
    /// `local` lists (from, to, max_step) ranges refined further; `focus`
    /// lists (coordinate, step, slope) points the step shrinks toward:
    /// h(x) ≤ step + slope·|x − coordinate| (geometric grading by
    /// 1 + slope per cell near the point; each coordinate becomes a grid
    /// line).
    pub fn new(
        lo: f64,
        hi: f64,
        features: &[f64],
        spec: &GridSpec,
        local: &[(f64, f64, f64)],
        focus: &[(f64, f64, f64)],
    ) -> AxisPlan {
        let mut all = features.to_vec();
        all.extend(focus.iter().map(|f| f.0));
        all.extend(local.iter().flat_map(|l| [l.0, l.1]));
        let lines = feature_lines(lo, hi, &all);
        let beta = spec.growth - 1.0;
        let requests: Vec<f64> = lines
            .windows(2)
            .map(|w| {
                let len = w[1] - w[0];
                let cap = local
                    .iter()
                    .filter(|l| l.0 <= w[0] + 1e-12 * len && l.1 >= w[1] - 1e-12 * len)
                    .fold(spec.max_step, |m, l| m.min(l.2));
                (len / spec.cells_across as f64).max(spec.min_step).min(cap).min(len)
            })
            .collect();
        let k = requests.len();
        let tol = MERGE_TOLERANCE * (hi - lo);
        // Influence of the intervals to the left / right, as lines in x:
        // prefix and suffix minima of h_j ∓ β·(nearest end of interval j).
        let mut left = vec![f64::INFINITY; k];
        let mut right = vec![f64::INFINITY; k];
        for j in 1..k {
            left[j] = left[j - 1].min(requests[j - 1] - beta * lines[j]);
        }
        for j in (0..k.saturating_sub(1)).rev() {
            right[j] = right[j + 1].min(requests[j + 1] + beta * lines[j + 1]);
        }
        let intervals = (0..k)
            .map(|j| {
                // focus points lie on lines: each acts on the intervals to
                // either side as a line of its own slope
                let extra = focus
                    .iter()
                    .filter_map(|&(c, h, b)| {
                        if lines[j + 1] <= c + tol {
                            Some((h + b * c, -b))
                        } else if lines[j] >= c - tol {
                            Some((h - b * c, b))
                        } else {
                            None
                        }
                    })
                    .collect();
                let size = StepSize { cap: requests[j], left: left[j], right: right[j], beta, extra };
                let n = size.cells(lines[j], lines[j + 1]);
                (lines[j], lines[j + 1], size, n)
            })
            .collect();
        AxisPlan { intervals }
    }

    /// Number of nodes the axis will have (saturating).
    pub fn nodes(&self) -> usize {
        self.intervals.iter().fold(1usize, |acc, i| acc.saturating_add(i.3))
    }

    /// Places the nodes.
    pub fn place(&self) -> Vec<f64> {
        let mut nodes = vec![self.intervals[0].0];
        for (a, b, size, n) in &self.intervals {
            nodes.extend(size.place(*a, *b, *n).into_iter().skip(1));
        }
        nodes
    }
}

/// Node coordinates from `lo` to `hi`, including every feature coordinate
/// that lies inside.
pub fn graded_axis(lo: f64, hi: f64, features: &[f64], spec: &GridSpec) -> Vec<f64> {
    AxisPlan::new(lo, hi, features, spec, &[], &[]).place()
}

/// Sorted, merged feature coordinates clipped to [lo, hi], ends included.
fn feature_lines(lo: f64, hi: f64, features: &[f64]) -> Vec<f64> {
    let tol = MERGE_TOLERANCE * (hi - lo);
    let mut v: Vec<f64> = features.iter().copied().filter(|x| *x > lo + tol && *x < hi - tol).collect();
    v.push(lo);
    v.push(hi);
    v.sort_by(f64::total_cmp);
    v.dedup_by(|b, a| *b - *a <= tol);
    if let Some(last) = v.last_mut() {
        *last = hi;
    }
    v
}

/// `h(x) = min(cap, left + β·x, right − β·x, extra lines p + q·x)` on one
/// interval.
struct StepSize {
    cap: f64,
    left: f64,
    right: f64,
    beta: f64,
    /// Lines (p, q) of focus points.
    extra: Vec<(f64, f64)>,
}

/// One linear piece `h(x) = p + q·x` on [u, v].
#[derive(Clone, Copy)]
struct Piece {
    u: f64,
    v: f64,
    p: f64,
    q: f64,
}

impl Piece {
    /// ∫_u^x dt / (p + q·t)
    fn integral_to(&self, x: f64) -> f64 {
        if self.q == 0.0 {
            (x - self.u) / self.p
        } else {
            ((self.p + self.q * x) / (self.p + self.q * self.u)).ln() / self.q
        }
    }

    /// The x where `integral_to(x) = s`.
    fn inverse(&self, s: f64) -> f64 {
        if self.q == 0.0 {
            self.u + s * self.p
        } else {
            ((self.p + self.q * self.u) * (self.q * s).exp() - self.p) / self.q
        }
    }
}

impl StepSize {
    fn candidates(&self) -> Vec<(f64, f64)> {
        let mut c = vec![(self.cap, 0.0), (self.left, self.beta), (self.right, -self.beta)];
        c.extend(&self.extra);
        c
    }

    fn pieces(&self, a: f64, b: f64) -> Vec<Piece> {
        let mut cuts = vec![a, b];
        let c = self.candidates();
        for i in 0..c.len() {
            for j in i + 1..c.len() {
                let (pi, qi) = c[i];
                let (pj, qj) = c[j];
                if pi.is_finite() && pj.is_finite() && qi != qj {
                    let x = (pj - pi) / (qi - qj);
                    if x > a && x < b {
                        cuts.push(x);
                    }
                }
            }
        }
        cuts.sort_by(f64::total_cmp);
        cuts.windows(2)
            .filter(|w| w[1] > w[0])
            .map(|w| {
                let mid = 0.5 * (w[0] + w[1]);
                let (p, q) = c
                    .iter()
                    .copied()
                    .filter(|(p, _)| p.is_finite())
                    .min_by(|x, y| (x.0 + x.1 * mid).total_cmp(&(y.0 + y.1 * mid)))
                    .unwrap_or((self.cap, 0.0));
                Piece { u: w[0], v: w[1], p, q }
            })
            .collect()
    }

    /// Cells needed from a to b: `∫ dx/h` rounded up (at least 1; capped to
    /// stay a usize).
    fn cells(&self, a: f64, b: f64) -> usize {
        let total: f64 = self.pieces(a, b).iter().map(|p| p.integral_to(p.v)).sum();
        (total - 1e-9).ceil().clamp(1.0, 1e15) as usize
    }

    /// `n` cells from a to b (both ends included), equidistributing ∫ dx/h.
    fn place(&self, a: f64, b: f64, n: usize) -> Vec<f64> {
        let pieces = self.pieces(a, b);
        let shares: Vec<f64> = pieces.iter().map(|p| p.integral_to(p.v)).collect();
        let total: f64 = shares.iter().sum();
        let mut out = Vec::with_capacity(n + 1);
        out.push(a);
        let (mut k, mut before) = (0, 0.0);
        for i in 1..n {
            let target = total * i as f64 / n as f64;
            while k + 1 < pieces.len() && before + shares[k] < target {
                before += shares[k];
                k += 1;
            }
            let x = pieces[k].inverse(target - before).clamp(pieces[k].u, pieces[k].v);
            out.push(x);
        }
        out.push(b);
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spec(max_step: f64) -> GridSpec {
        GridSpec { max_step, min_step: 1e-6, cells_across: 8, growth: 1.25 }
    }

    #[test]
    fn keeps_features_and_grades_steps() {
        let nodes = graded_axis(0.0, 10.0, &[1.0, 1.05, 4.0], &spec(0.5));
        for f in [0.0, 1.0, 1.05, 4.0, 10.0] {
            assert!(nodes.iter().any(|x| (x - f).abs() < 1e-12), "feature {f} missing");
        }
        let steps: Vec<f64> = nodes.windows(2).map(|w| w[1] - w[0]).collect();
        assert!(steps.iter().all(|h| *h > 0.0 && *h <= 0.5 + 1e-12));
        // the thin 0.05 interval gets its 8 cells (cells_across)
        let thin = nodes.iter().filter(|x| **x > 1.0 + 1e-12 && **x < 1.05 - 1e-12).count();
        assert_eq!(thin, 7);
        // growth ratio 1.25 requested; rounding to whole cells adds a little
        for w in steps.windows(2) {
            let r = w[1] / w[0];
            assert!(r < 1.4 && r > 1.0 / 1.4, "ratio {r}");
        }
    }

    #[test]
    fn a_focus_point_grades_geometrically_toward_it() {
        // steps shrink toward x = 4 by the growth ratio 1.25 per cell, down to
        // the focus step (geometric grading, common practice near singularities)
        let plan = AxisPlan::new(0.0, 10.0, &[], &spec(0.5), &[], &[(4.0, 0.01, 0.25)]);
        let nodes = plan.place();
        let k = nodes.iter().position(|x| (x - 4.0).abs() < 1e-12).expect("the focus is a grid line");
        let (left, right) = (nodes[k] - nodes[k - 1], nodes[k + 1] - nodes[k]);
        assert!(left < 0.02 && right < 0.02, "{left} {right}");
        for w in nodes[k..].windows(3) {
            let r = (w[2] - w[1]) / (w[1] - w[0]);
            assert!(r < 1.4, "ratio {r}");
        }
        // far away the step is the uniform one again
        assert!((nodes[nodes.len() - 1] - nodes[nodes.len() - 2] - 0.5).abs() < 0.1);
    }

    #[test]
    fn uniform_when_nothing_to_refine() {
        let nodes = graded_axis(0.0, 2.0, &[], &spec(0.25));
        assert_eq!(nodes.len(), 9);
    }
}
