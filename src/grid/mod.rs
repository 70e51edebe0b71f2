//! Stage 2: the rectilinear grid and the parts painted onto it.
//!
//! Potentials live on nodes, materials on cells. Invariant: only this module
//! maps a position or an (i, j) pair to a node or cell index; every other
//! stage goes through [`Grid`]'s methods.

mod axis;
mod paint;
mod singular;

pub use axis::{AxisPlan, graded_axis};
pub use paint::{CONDUCTOR, CutCell, ElectrodeInfo, Layout, NO_ELECTRODE, Region, SUBSAMPLES};
pub use singular::{
    GRADING_NODE_BUDGET, SINGULAR_GRADING, SINGULAR_ZONE, SingularKind, SingularPoint, curved_boxes,
    electrode_sharp_points, singular_candidates, singular_points,
};

use crate::case::Case;

/// Node index (row-major, x fastest).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct NodeIx(pub usize);

/// Cell index (row-major, x fastest).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct CellIx(pub usize);

/// A non-uniform rectilinear grid.
#[derive(Debug, Clone, PartialEq)]
pub struct Grid {
    /// Node x (or r) coordinates in m, increasing.
    pub x: Vec<f64>,
    /// Node y (or z) coordinates in m, increasing.
    pub y: Vec<f64>,
}

/// Limits on the grid size.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GridLimits {
    /// Largest number of nodes allowed.
    pub max_nodes: usize,
}

/// Why a grid could not be built.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum GridError {
    /// The grid would exceed the node limit.
    #[error(
        "the grid would need {} nodes ({} × {}, {} GB of memory), above the limit of {limit}; raise grid.max_step or grid.min_step, lower grid.cells_across, or raise --max-nodes",
        count_text(*.nodes), count_text(*.nx), count_text(*.ny), memory_estimate_gb(*.nodes)
    )]
    TooLarge {
        /// Nodes needed.
        nodes: usize,
        /// Nodes along x.
        nx: usize,
        /// Nodes along y.
        ny: usize,
        /// The limit.
        limit: usize,
    },
    /// Two electrodes share grid nodes in a way that cannot be solved.
    #[error("{key}: electrode '{a}' touches electrode '{b}' ({why}); separate them or merge them into one part")]
    ElectrodesTouch {
        /// Key path of the later electrode.
        key: String,
        /// Line of the later electrode, if known.
        line: Option<usize>,
        /// Column of the later electrode, if known.
        column: Option<usize>,
        /// Earlier electrode.
        a: String,
        /// Later electrode.
        b: String,
        /// What is wrong with the contact.
        why: &'static str,
    },
    /// An electrode shape contains no grid node.
    #[error("{key}: electrode '{name}' covers no grid node inside the domain")]
    EmptyElectrode {
        /// Key path.
        key: String,
        /// Line, if known.
        line: Option<usize>,
        /// Column, if known.
        column: Option<usize>,
        /// Part name.
        name: String,
    },
}

/// Peak memory per grid node of a whole check, measured at a million
/// nodes (about 365 MB; DEVELOPERS.md, benchmarks), rounded up.
pub const BYTES_PER_NODE: usize = 400;

/// Largest node count the solver's 32-bit indices allow, with room for
/// the extra unknowns of floating electrodes.
pub const MAX_SUPPORTED_NODES: usize = 1 << 31;

/// A count that may have saturated at `usize::MAX` (grid plans count with
/// saturating arithmetic): "more than 1.8e19" then, the number otherwise.
pub fn count_text(n: usize) -> String {
    if n == usize::MAX { format!("more than {:.1e}", usize::MAX as f64) } else { n.to_string() }
}

/// Estimated peak memory in GB of a check with this many nodes.
pub fn memory_estimate_gb(nodes: usize) -> String {
    if nodes == usize::MAX {
        return format!("more than {:.0e}", usize::MAX as f64 * BYTES_PER_NODE as f64 / 1e9);
    }
    let gb = nodes as f64 * BYTES_PER_NODE as f64 / 1e9;
    if gb < 0.1 {
        "about 0.1".to_string()
    } else if gb < 1e6 {
        format!("about {gb:.1}")
    } else {
        format!("about {gb:.0e}")
    }
}

impl GridError {
    /// `:line:column` of the part the error is about, where known.
    pub fn position(&self) -> String {
        match self {
            GridError::TooLarge { .. } => String::new(),
            GridError::ElectrodesTouch { line, column, .. } | GridError::EmptyElectrode { line, column, .. } => {
                match (line, column) {
                    (Some(l), Some(c)) => format!(":{l}:{c}"),
                    (Some(l), None) => format!(":{l}"),
                    _ => String::new(),
                }
            }
        }
    }
}

/// How the grid is graded toward the singular points: the step there is
/// the ungraded step over `factor` (1: not graded).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Grading {
    /// Refinement factor at the points.
    pub factor: f64,
}

/// How a grid is planned from its case: the grading toward the singular
/// points, and how many times coarser than the case's own grid it is (1
/// for the reported grid; the self-check's grids √2 and 2 or 2 and 4).
/// Coarsening scales every step alike — `grid.max_step`, `min_step`,
/// `cells_across`, the case's refinement boxes and the curved-outline
/// boxes — so that the three grids of the self-check differ by one ratio.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GridPlan {
    /// Grading toward the singular points.
    pub grading: Grading,
    /// Coarsening factor (≥ 1).
    pub coarsening: f64,
}

/// The two axis plans of a case.
struct Plans {
    x: AxisPlan,
    y: AxisPlan,
}

impl Plans {
    fn nodes(&self) -> usize {
        self.x.nodes().saturating_mul(self.y.nodes())
    }
}

/// Feature coordinates, the grid settings and the refinement ranges of a
/// case along both axes, coarsened as asked.
struct Features {
    fx: Vec<f64>,
    fy: Vec<f64>,
    spec: crate::case::GridSpec,
    bx: Vec<(f64, f64, f64)>,
    by: Vec<(f64, f64, f64)>,
    /// Focus points of beaded foil ends (`singular::bead_focus`).
    focus_x: Vec<(f64, f64, f64)>,
    focus_y: Vec<(f64, f64, f64)>,
}

impl Features {
    fn of(case: &Case, coarsening: f64) -> Features {
        let (mut fx, mut fy) = (Vec::new(), Vec::new());
        for p in &case.parts {
            let (bx, by) = p.shape.breakpoints();
            fx.extend(bx);
            fy.extend(by);
        }
        let boxes: Vec<crate::case::RefineBox> =
            case.refine_boxes.iter().copied().chain(curved_boxes(&case.parts, &case.grid)).collect();
        let bx = boxes.iter().map(|b| (b.rect.x0, b.rect.x1, b.max_step * coarsening)).collect();
        let by = boxes.iter().map(|b| (b.rect.y0, b.rect.y1, b.max_step * coarsening)).collect();
        let (mut focus_x, mut focus_y) = singular::bead_focus(&case.parts, &case.grid);
        for f in focus_x.iter_mut().chain(focus_y.iter_mut()) {
            f.1 *= coarsening;
        }
        Features { fx, fy, spec: case.grid.coarsened(coarsening), bx, by, focus_x, focus_y }
    }

    /// The axis plans graded toward `points` by `grading`.
    fn plans(&self, case: &Case, points: &[[f64; 2]], grading: Grading) -> Plans {
        let d = case.domain;
        let plain = Plans {
            x: AxisPlan::new(d.x0, d.x1, &self.fx, &self.spec, &self.bx, &self.focus_x),
            y: AxisPlan::new(d.y0, d.y1, &self.fy, &self.spec, &self.by, &self.focus_y),
        };
        if points.is_empty() || grading.factor <= 1.0 {
            return plain;
        }
        let zone = SINGULAR_ZONE * d.width().min(d.height());
        let (gx, gy) = (plain.x.place(), plain.y.place());
        let cx: Vec<f64> = points.iter().map(|p| p[0]).collect();
        let cy: Vec<f64> = points.iter().map(|p| p[1]).collect();
        let mut fpx = singular::focus_points(&gx, &cx, grading.factor, &self.spec, zone);
        let mut fpy = singular::focus_points(&gy, &cy, grading.factor, &self.spec, zone);
        fpx.extend_from_slice(&self.focus_x);
        fpy.extend_from_slice(&self.focus_y);
        Plans {
            x: AxisPlan::new(d.x0, d.x1, &self.fx, &self.spec, &self.bx, &fpx),
            y: AxisPlan::new(d.y0, d.y1, &self.fy, &self.spec, &self.by, &fpy),
        }
    }
}

/// The grading a case's default grid gets: `SINGULAR_GRADING`, halved
/// until the graded grid has at most `GRADING_NODE_BUDGET` times the nodes
/// of the ungraded one (1, no grading, when even a factor of 2 costs more,
/// when there are no singular points, or when the ungraded grid is over
/// the node limit already).
pub fn grading_for(case: &Case, limits: &GridLimits) -> Grading {
    let points = singular_candidates(case);
    let features = Features::of(case, 1.0);
    let none = Grading { factor: 1.0 };
    let base = features.plans(case, &points, none).nodes();
    if points.is_empty() || base > limits.max_nodes.min(MAX_SUPPORTED_NODES) {
        return none;
    }
    let mut factor = SINGULAR_GRADING;
    while factor >= 2.0 {
        let g = Grading { factor };
        if features.plans(case, &points, g).nodes() as f64 <= GRADING_NODE_BUDGET * base as f64 {
            return g;
        }
        factor *= 0.5;
    }
    none
}

impl Grid {
    /// Builds the default grid for a case: grid lines on every part
    /// boundary, graded toward its singular points (`grading_for`).
    pub fn for_case(case: &Case, limits: &GridLimits) -> Result<Grid, GridError> {
        Grid::planned(case, limits, GridPlan { grading: grading_for(case, limits), coarsening: 1.0 })
    }

    /// Builds the grid for a case as `plan` says (the self-check's coarser
    /// grids keep the reported grid's grading).
    pub fn planned(case: &Case, limits: &GridLimits, plan: GridPlan) -> Result<Grid, GridError> {
        let plans = Features::of(case, plan.coarsening).plans(case, &singular_candidates(case), plan.grading);
        let (nx, ny) = (plans.x.nodes(), plans.y.nodes());
        let nodes = plans.nodes();
        let limit = limits.max_nodes.min(MAX_SUPPORTED_NODES);
        if nodes > limit {
            return Err(GridError::TooLarge { nodes, nx, ny, limit });
        }
        Ok(Grid { x: plans.x.place(), y: plans.y.place() })
    }

    /// Nodes along x.
    pub fn nx(&self) -> usize {
        self.x.len()
    }

    /// Nodes along y.
    pub fn ny(&self) -> usize {
        self.y.len()
    }

    /// Number of nodes.
    pub fn nodes(&self) -> usize {
        self.nx() * self.ny()
    }

    /// Number of cells.
    pub fn cells(&self) -> usize {
        (self.nx() - 1) * (self.ny() - 1)
    }

    /// Values at this grid's nodes, interpolated bilinearly from `values`
    /// at the nodes of `other` (a grid of the same domain: the self-check's
    /// coarser grids); nodes outside `other` take its nearest edge.
    pub fn interpolate_from(&self, other: &Grid, values: &[f64]) -> Vec<f64> {
        // for each coordinate: the cell of `other` and the weight of its upper node
        let locate = |along: &[f64], at: &[f64]| -> Vec<(usize, f64)> {
            at.iter()
                .map(|&v| {
                    let k = along.partition_point(|&c| c <= v).clamp(1, along.len().max(2) - 1) - 1;
                    let (a, b) = (along[k], along[(k + 1).min(along.len() - 1)]);
                    let t = if b > a { ((v - a) / (b - a)).clamp(0.0, 1.0) } else { 0.0 };
                    (k, t)
                })
                .collect()
        };
        let (xs, ys) = (locate(&other.x, &self.x), locate(&other.y, &self.y));
        let (onx, ony) = (other.nx(), other.ny());
        let at = |i: usize, j: usize| values[j.min(ony - 1) * onx + i.min(onx - 1)];
        let mut out = Vec::with_capacity(self.nodes());
        for &(j, ty) in &ys {
            for &(i, tx) in &xs {
                let lower = at(i, j) * (1.0 - tx) + at(i + 1, j) * tx;
                let upper = at(i, j + 1) * (1.0 - tx) + at(i + 1, j + 1) * tx;
                out.push(lower * (1.0 - ty) + upper * ty);
            }
        }
        out
    }

    /// Node at column i, row j.
    pub fn node(&self, i: usize, j: usize) -> NodeIx {
        NodeIx(j * self.nx() + i)
    }

    /// Column and row of a node.
    pub fn node_ij(&self, n: NodeIx) -> (usize, usize) {
        (n.0 % self.nx(), n.0 / self.nx())
    }

    /// Position of a node.
    pub fn node_pos(&self, n: NodeIx) -> [f64; 2] {
        let (i, j) = self.node_ij(n);
        [self.x[i], self.y[j]]
    }

    /// Cell at column i, row j (its lower-left node is node (i, j)).
    pub fn cell(&self, i: usize, j: usize) -> CellIx {
        CellIx(j * (self.nx() - 1) + i)
    }

    /// Column and row of a cell.
    pub fn cell_ij(&self, c: CellIx) -> (usize, usize) {
        (c.0 % (self.nx() - 1), c.0 / (self.nx() - 1))
    }

    /// The four corner nodes of a cell: lower-left, lower-right, upper-left, upper-right.
    pub fn cell_nodes(&self, c: CellIx) -> [NodeIx; 4] {
        let (i, j) = self.cell_ij(c);
        [self.node(i, j), self.node(i + 1, j), self.node(i, j + 1), self.node(i + 1, j + 1)]
    }

    /// Centre of a cell.
    pub fn cell_center(&self, c: CellIx) -> [f64; 2] {
        let (i, j) = self.cell_ij(c);
        [0.5 * (self.x[i] + self.x[i + 1]), 0.5 * (self.y[j] + self.y[j + 1])]
    }

    /// The cell containing `p` (points on a grid line go to the cell above / to the right,
    /// except on the last line).
    pub fn locate(&self, p: [f64; 2]) -> CellIx {
        let find = |v: &[f64], t: f64| v.partition_point(|&c| c <= t).clamp(1, v.len() - 1) - 1;
        self.cell(find(&self.x, p[0]), find(&self.y, p[1]))
    }

    /// Every cell whose closed extent holds `p` (one inside a cell, two on a
    /// grid line, four at a node), the one [`Grid::locate`] gives first,
    /// then the others in grid order.
    pub fn cells_touching(&self, p: [f64; 2]) -> impl Iterator<Item = CellIx> + '_ {
        let first = self.locate(p);
        let (i, j) = self.cell_ij(first);
        let columns = Self::beside(&self.x, i, p[0]);
        let rows = Self::beside(&self.y, j, p[1]);
        std::iter::once(first).chain(
            rows.flat_map(move |jj| columns.clone().map(move |ii| (ii, jj)))
                .map(|(ii, jj)| self.cell(ii, jj))
                .filter(move |&c| c != first),
        )
    }

    /// Cell columns (or rows) beside coordinate `t` on axis `v`, given the
    /// one `k` that holds it: `k`, and its neighbour too when `t` lies on
    /// the grid line between them.
    fn beside(v: &[f64], k: usize, t: f64) -> std::ops::RangeInclusive<usize> {
        let lo = if t == v[k] && k > 0 { k - 1 } else { k };
        let hi = if t == v[k + 1] && k + 2 < v.len() { k + 1 } else { k };
        lo..=hi
    }

    /// Smallest and largest step over both axes.
    pub fn step_range(&self) -> (f64, f64) {
        self.x
            .windows(2)
            .chain(self.y.windows(2))
            .map(|w| w[1] - w[0])
            .fold((f64::INFINITY, 0.0), |(lo, hi), h| (lo.min(h), hi.max(h)))
    }

    /// Index range of grid lines within [lo, hi] (inclusive) on an axis.
    pub fn line_range(v: &[f64], lo: f64, hi: f64, tol: f64) -> std::ops::Range<usize> {
        let a = v.partition_point(|&c| c < lo - tol);
        let b = v.partition_point(|&c| c <= hi + tol);
        a..b.max(a)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn index_maps_round_trip_on_a_non_square_grid() {
        let g = Grid { x: vec![0.0, 1.0, 2.0, 3.0], y: vec![0.0, 0.5] };
        for n in 0..g.nodes() {
            let (i, j) = g.node_ij(NodeIx(n));
            assert_eq!(g.node(i, j), NodeIx(n));
        }
        for c in 0..g.cells() {
            let (i, j) = g.cell_ij(CellIx(c));
            assert_eq!(g.cell(i, j), CellIx(c));
        }
        assert_eq!(g.locate([2.5, 0.25]), g.cell(2, 0));
        assert_eq!(g.locate([3.0, 0.5]), g.cell(2, 0));
        assert_eq!(g.cell_nodes(g.cell(1, 0)), [NodeIx(1), NodeIx(2), NodeIx(5), NodeIx(6)]);
        let touching = |g: &Grid, p| g.cells_touching(p).collect::<Vec<_>>();
        assert_eq!(touching(&g, [2.5, 0.25]), vec![g.cell(2, 0)]);
        assert_eq!(touching(&g, [2.0, 0.25]), vec![g.cell(2, 0), g.cell(1, 0)]);
        let g2 = Grid { x: vec![0.0, 1.0, 2.0], y: vec![0.0, 1.0, 2.0] };
        assert_eq!(touching(&g2, [1.0, 1.0]), vec![g2.cell(1, 1), g2.cell(0, 0), g2.cell(1, 0), g2.cell(0, 1)]);
    }
}
