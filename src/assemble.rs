//! Stage 3: box-integration (finite-volume) discretisation of
//! div(ε grad φ) = 0 and the linear system for the unknown potentials.
//!
//! Each node owns a control box bounded by the cell mid-lines. Each cell,
//! with its own permittivity ε, contributes to the four edges along its
//! sides the flux through the part of the box faces it contains:
//!
//! * planar, per metre of depth: horizontal edges `G = ε_x·(hy/2)/hx`,
//!   vertical edges `G = ε_y·(hx/2)/hy` (ε_x = ε_y = ε except in cells cut by
//!   a curved dielectric interface, see `grid::Layout::cut_cells`);
//! * axisymmetric (whole revolution, factor 2π): radial edges
//!   `G = 2π·ε·(hz/2)/ln(r2/r1)`, which is exact for the logarithmic
//!   potential of a coaxial layer (the midpoint form `2π·ε·(hz/2)·r_mid/hr`
//!   is used on cells touching the axis, where ln diverges); axial edges
//!   `G = 2π·ε·A/hz` with A the annulus area `(r_o² − r_i²)/2` between the
//!   edge and the box face at `face_radius` (exact for r² as well as ln r). Boxes on the axis are discs, so the axis is
//!   a zero-flux boundary by construction and nothing divides by r = 0.
//!
//! The flux between nodes a and b is `G·(φa − φb)`. Because each edge's
//! conductance sums the cells on both sides of it, normal flux is continuous
//! across material interfaces and a layered planar stack is reproduced
//! exactly. Outer edges that are not electrodes get no flux (natural
//! Neumann condition). Fixed-potential nodes are eliminated into the
//! right-hand side, which keeps the matrix symmetric; all nodes of a
//! floating electrode share one unknown whose row is the sum of theirs,
//! which states zero net charge. The matrix is symmetric positive definite
//! whenever at least one node has a fixed potential.

use crate::case::{Case, ElectrodeKind, Geometry};
use crate::grid::{CONDUCTOR, CellIx, Grid, Layout, NO_ELECTRODE, NodeIx};
use crate::solve::{Matrix, RowBlock, from_row_blocks, sort_and_merge};
use crate::units::EPSILON_0;
use rayon::prelude::*;
use std::f64::consts::PI;

/// `w` such that the radial flux per radian and unit length is `ε·w·Δφ` on
/// the radial edge r1–r2: the log form `1/ln(r2/r1)`, or the midpoint form
/// `r_mid/(r2 − r1)` on the cell touching the axis.
pub fn radial_weight(r1: f64, r2: f64) -> f64 {
    if r1 > 0.0 { 1.0 / ((r2 - r1) / r1).ln_1p() } else { 0.5 * (r1 + r2) / (r2 - r1) }
}

/// Radius of the control-box face between the nodes at r1 and r2:
/// `r_f² = (r2² − r1²) / (2·ln(r2/r1))`, the midpoint on the axis cell.
///
/// Why: a two-point flux `G·Δφ` with the log-form `G` is exact for ln r
/// (coaxial layers); putting the face at this `r_f` makes the same flux exact
/// for the even r² behaviour every smooth potential has near the axis as
/// well. With faces at the arithmetic midpoint the log form costs the scheme
/// its second order next to the axis (observed order ≈ 1.6 instead of 2.0 on
/// the point-charge test in `tests/numerics.rs`).
pub fn face_radius(r1: f64, r2: f64) -> f64 {
    if r1 > 0.0 { ((r2 - r1) * (r1 + r2) / (2.0 * ((r2 - r1) / r1).ln_1p())).sqrt() } else { 0.5 * (r1 + r2) }
}

/// True where [`radial_weight`] uses the log form.
pub fn is_log_form(r1: f64) -> bool {
    r1 > 0.0
}

/// Edge conductances of the discretised operator (F, or F/m when planar).
#[derive(Debug, Clone, PartialEq)]
pub struct Stencil {
    /// Edge (i, j)–(i+1, j) at index `j·(nx−1) + i`.
    pub gx: Vec<f64>,
    /// Edge (i, j)–(i, j+1) at index `j·nx + i`.
    pub gy: Vec<f64>,
    /// Diagonal couplings of cells cut by an oblique interface (the ε_xy
    /// term of their laminate tensor): (node, other node, conductance),
    /// both directions, sorted. Conductances may be negative.
    pub cross: Vec<(u32, u32, f64)>,
}

/// Per-unit-permittivity conductances of cell (i, j)'s quarters: (bottom or
/// top edge, left edge, right edge), and the weight of the cross term
/// (1 planar, 2π·r_centre axisymmetric).
fn cell_factors(grid: &Grid, geometry: Geometry, i: usize, j: usize) -> (f64, f64, f64, f64) {
    let (x0, x1) = (grid.x[i], grid.x[i + 1]);
    let (hx, hy) = (x1 - x0, grid.y[j + 1] - grid.y[j]);
    match geometry {
        Geometry::Planar => (0.5 * hy / hx, 0.5 * hx / hy, 0.5 * hx / hy, 1.0),
        Geometry::Axisymmetric => {
            let radial = radial_weight(x0, x1);
            let xm = face_radius(x0, x1);
            (
                2.0 * PI * 0.5 * hy * radial,
                2.0 * PI * 0.5 * (xm * xm - x0 * x0) / hy,
                2.0 * PI * 0.5 * (x1 * x1 - xm * xm) / hy,
                2.0 * PI * 0.5 * (x0 + x1),
            )
        }
    }
}

impl Stencil {
    /// Conductances from the painted layout. `eps(c)` is the absolute
    /// permittivity of cell c; conductor cells contribute nothing.
    /// `eps(c)` gives the permittivity of cell c's quarter beside its bottom,
    /// top, left and right edge (`None` for conductor cells).
    pub fn build(grid: &Grid, geometry: Geometry, eps: impl Fn(CellIx) -> Option<[f64; 4]>) -> Stencil {
        let (nx, ny) = (grid.nx(), grid.ny());
        let mut gx = vec![0.0; (nx - 1) * ny];
        let mut gy = vec![0.0; nx * (ny - 1)];
        for j in 0..ny - 1 {
            for i in 0..nx - 1 {
                let Some([e_bottom, e_top, e_left, e_right]) = eps(grid.cell(i, j)) else { continue };
                let (g_h, g_left, g_right, _) = cell_factors(grid, geometry, i, j);
                gx[j * (nx - 1) + i] += e_bottom * g_h;
                gx[(j + 1) * (nx - 1) + i] += e_top * g_h;
                gy[j * nx + i] += e_left * g_left;
                gy[j * nx + i + 1] += e_right * g_right;
            }
        }
        Stencil { gx, gy, cross: Vec::new() }
    }

    /// The stencil of a case's painted layout. An edge that a curved
    /// electrode outline crosses at fraction θ from its free node carries the
    /// flux between that node and the outline: its conductance is divided by
    /// θ (the symmetric Shortley–Weller form, which keeps the matrix SPD).
    pub fn for_case(case: &Case, grid: &Grid, layout: &Layout) -> Stencil {
        let mut s = Stencil::bulk(case, grid, layout);
        for b in &layout.boundary_edges {
            let g = if b.horizontal { &mut s.gx[b.edge as usize] } else { &mut s.gy[b.edge as usize] };
            *g /= b.theta;
        }
        s
    }

    fn bulk(case: &Case, grid: &Grid, layout: &Layout) -> Stencil {
        let eps: Vec<f64> = layout.regions.iter().map(|r| case.materials[r.material].epsilon()).collect();
        let mut s = Stencil::build(grid, case.geometry, |c| {
            let r = layout.cell_region[c.0];
            if r == CONDUCTOR {
                return None;
            }
            match layout.cut_cells.binary_search_by_key(&(c.0 as u32), |k| k.cell) {
                Ok(k) => Some(layout.cut_cells[k].eps.map(|e| EPSILON_0 * e)),
                Err(_) => Some([eps[r as usize]; 4]),
            }
        });
        s.cross = cross_couplings(grid, case.geometry, layout);
        s
    }

    /// The neighbours of node n with their conductances: up to four along
    /// the grid lines, then any diagonal couplings.
    pub fn neighbours(&self, grid: &Grid, n: NodeIx) -> impl Iterator<Item = (NodeIx, f64)> {
        let start = self.cross.partition_point(|c| (c.0 as usize) < n.0);
        let diagonal =
            self.cross[start..].iter().take_while(move |c| c.0 as usize == n.0).map(|c| (NodeIx(c.1 as usize), c.2));
        self.axis_neighbours(grid, n).chain(diagonal)
    }

    fn axis_neighbours(&self, grid: &Grid, n: NodeIx) -> impl Iterator<Item = (NodeIx, f64)> {
        let (nx, ny) = (grid.nx(), grid.ny());
        let (i, j) = grid.node_ij(n);
        let mut out = [(NodeIx(0), 0.0); 4];
        let mut k = 0;
        if i > 0 {
            out[k] = (grid.node(i - 1, j), self.gx[j * (nx - 1) + i - 1]);
            k += 1;
        }
        if i + 1 < nx {
            out[k] = (grid.node(i + 1, j), self.gx[j * (nx - 1) + i]);
            k += 1;
        }
        if j > 0 {
            out[k] = (grid.node(i, j - 1), self.gy[(j - 1) * nx + i]);
            k += 1;
        }
        if j + 1 < ny {
            out[k] = (grid.node(i, j + 1), self.gy[j * nx + i]);
            k += 1;
        }
        out.into_iter().take(k)
    }

    /// Discrete energy `½·Σ_edges G·(Δφ)²` of a nodal potential (J, or J/m).
    pub fn energy(&self, grid: &Grid, phi: &[f64]) -> f64 {
        let (nx, ny) = (grid.nx(), grid.ny());
        let mut w = 0.0;
        for j in 0..ny {
            for i in 0..nx - 1 {
                let d = phi[grid.node(i + 1, j).0] - phi[grid.node(i, j).0];
                w += self.gx[j * (nx - 1) + i] * d * d;
            }
        }
        for j in 0..ny - 1 {
            for i in 0..nx {
                let d = phi[grid.node(i, j + 1).0] - phi[grid.node(i, j).0];
                w += self.gy[j * nx + i] * d * d;
            }
        }
        for &(a, b, g) in self.cross.iter().filter(|c| c.0 < c.1) {
            let d = phi[a as usize] - phi[b as usize];
            w += g * d * d;
        }
        0.5 * w
    }

    /// Net flux `Σ G·(φn − φm)` leaving a set of nodes: by Gauss's law the
    /// charge enclosed (C, or C/m when planar).
    pub fn outflux(&self, grid: &Grid, phi: &[f64], nodes: impl Iterator<Item = NodeIx>) -> f64 {
        nodes.map(|n| self.neighbours(grid, n).map(|(m, g)| g * (phi[n.0] - phi[m.0])).sum::<f64>()).sum()
    }
}

/// Safety margin on the cross term: |κ| ≤ this × 2·√(Hx·Hy), which keeps
/// each cut cell's contribution positive semi-definite (see
/// `cross_couplings`).
const CROSS_LIMIT: f64 = 0.95;

/// The ε_xy term of each cut cell's laminate tensor as diagonal couplings.
///
/// With bilinear φ in the cell, ∫ε_xy·∂xφ·∂yφ dA = κ·(s·φ)(t·φ), where
/// s·φ = φ2 − φ1 + φ4 − φ3 and t·φ = φ3 − φ1 + φ4 − φ2 (nodes 1–4 at the
/// lower left, lower right, upper left, upper right) and κ = ε_xy/4
/// (planar; × 2π·r_centre axisymmetric). That is a conductance 2κ between
/// nodes 1 and 4 and −2κ between nodes 2 and 3. The cell's own axis
/// conductances bound its energy below by Hx·(s·φ)² + Hy·(t·φ)² (Hx, Hy the
/// series values of its two x and two y quarters), so |κ| ≤ 2·√(Hx·Hy)
/// keeps its whole contribution positive semi-definite and the matrix SPD.
fn cross_couplings(grid: &Grid, geometry: Geometry, layout: &Layout) -> Vec<(u32, u32, f64)> {
    let mut out = Vec::new();
    for c in layout.cut_cells.iter().filter(|c| c.eps_xy != 0.0) {
        let (i, j) = grid.cell_ij(CellIx(c.cell as usize));
        let (g_h, g_left, g_right, w) = cell_factors(grid, geometry, i, j);
        let series = |a: f64, b: f64| a * b / (a + b);
        let hx = series(c.eps[0] * g_h, c.eps[1] * g_h);
        let hy = series(c.eps[2] * g_left, c.eps[3] * g_right);
        let limit = CROSS_LIMIT * 2.0 * (hx * hy).sqrt();
        let kappa = EPSILON_0 * (0.25 * w * c.eps_xy).clamp(-limit, limit);
        let [n1, n2, n3, n4] = grid.cell_nodes(CellIx(c.cell as usize)).map(|n| n.0 as u32);
        for (a, b, g) in [(n1, n4, 2.0 * kappa), (n2, n3, -2.0 * kappa)] {
            out.push((a, b, g));
            out.push((b, a, g));
        }
    }
    out.sort_by_key(|c| (c.0, c.1));
    // Neighbouring cut cells share no diagonal, but merge defensively.
    out.dedup_by(|next, kept| {
        if (next.0, next.1) == (kept.0, kept.1) {
            kept.2 += next.2;
            true
        } else {
            false
        }
    });
    out
}

/// Nodes per parallel assembly task.
const NODE_CHUNK: usize = 8192;

/// What the potential of a node is.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Constraint {
    /// An unknown of its own.
    Free,
    /// Fixed potential in V.
    Fixed(f64),
    /// Shares one unknown with every node of the same group (a floating electrode).
    Group(u32),
}

/// The constraints of a painted case.
pub fn constraints(layout: &Layout) -> Vec<Constraint> {
    layout
        .node_electrode
        .iter()
        .map(|&e| {
            if e == NO_ELECTRODE {
                return Constraint::Free;
            }
            match layout.electrodes[e as usize].kind {
                ElectrodeKind::Fixed { potential_v } => Constraint::Fixed(potential_v),
                ElectrodeKind::Floating => Constraint::Group(e),
            }
        })
        .collect()
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Dof {
    Unknown(usize),
    Fixed(f64),
}

/// The linear system `A·u = b` for the unknown potentials.
#[derive(Debug, Clone)]
pub struct System {
    /// Symmetric positive definite matrix (CSR, both triangles stored).
    pub matrix: Matrix,
    /// Right-hand side (from the fixed potentials).
    pub rhs: Vec<f64>,
    dofs: Vec<Dof>,
}

/// Why a system could not be assembled.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum AssembleError {
    /// No node has a fixed potential, so the potential is undetermined.
    #[error("no node has a fixed potential; the potential is undetermined")]
    NoFixedPotential,
}

impl System {
    /// Numbers the unknowns (free nodes in node order, then one per group)
    /// and assembles the matrix row by row straight into CSR, free rows in
    /// parallel chunks (each row summed in a fixed order: deterministic).
    pub fn assemble(grid: &Grid, stencil: &Stencil, constraints: &[Constraint]) -> Result<System, AssembleError> {
        if !constraints.iter().any(|c| matches!(c, Constraint::Fixed(_))) {
            return Err(AssembleError::NoFixedPotential);
        }
        let mut dofs = vec![Dof::Fixed(0.0); constraints.len()];
        let mut rows: Vec<Vec<NodeIx>> = Vec::new();
        let mut group_row: std::collections::BTreeMap<u32, usize> = Default::default();
        let mut free = 0usize;
        for (n, c) in constraints.iter().enumerate() {
            if let Constraint::Free = c {
                dofs[n] = Dof::Unknown(free);
                free += 1;
            }
        }
        for (n, c) in constraints.iter().enumerate() {
            match *c {
                Constraint::Free => {}
                Constraint::Fixed(v) => dofs[n] = Dof::Fixed(v),
                Constraint::Group(g) => {
                    let next = free + group_row.len();
                    let r = *group_row.entry(g).or_insert(next);
                    dofs[n] = Dof::Unknown(r);
                    if r - free == rows.len() {
                        rows.push(Vec::new());
                    }
                    rows[r - free].push(NodeIx(n));
                }
            }
        }
        let size = free + rows.len();
        // One row: the flux balance of a node (or of all nodes of a group),
        // merged by column. Returns the right-hand side.
        let emit = |row: usize, nodes: &mut dyn Iterator<Item = NodeIx>, entries: &mut Vec<(u32, f64)>| {
            entries.clear();
            let mut b = 0.0;
            for n in nodes {
                for (m, g) in stencil.neighbours(grid, n) {
                    if g == 0.0 {
                        continue;
                    }
                    entries.push((row as u32, g));
                    match dofs[m.0] {
                        Dof::Unknown(q) => entries.push((q as u32, -g)),
                        Dof::Fixed(v) => b += g * v,
                    }
                }
            }
            sort_and_merge(entries);
            b
        };
        // Free rows in parallel over chunks of nodes (rows come in node order).
        let parts: Vec<(RowBlock, Vec<f64>)> = (0..constraints.len().div_ceil(NODE_CHUNK))
            .into_par_iter()
            .map(|c| {
                let (mut block, mut b) = (RowBlock::default(), Vec::new());
                let mut entries = Vec::new();
                for n in c * NODE_CHUNK..((c + 1) * NODE_CHUNK).min(constraints.len()) {
                    if let (Dof::Unknown(r), Constraint::Free) = (dofs[n], constraints[n]) {
                        b.push(emit(r, &mut std::iter::once(NodeIx(n)), &mut entries));
                        block.push_row(entries.iter().copied());
                    }
                }
                (block, b)
            })
            .collect();
        let mut rhs = Vec::with_capacity(size);
        let mut blocks = Vec::with_capacity(parts.len() + 1);
        for (block, b) in parts {
            rhs.extend_from_slice(&b);
            blocks.push(block);
        }
        let (mut groups, mut entries) = (RowBlock::default(), Vec::new());
        for (k, nodes) in rows.iter().enumerate() {
            rhs.push(emit(free + k, &mut nodes.iter().copied(), &mut entries));
            groups.push_row(entries.iter().copied());
        }
        blocks.push(groups);
        let matrix = from_row_blocks(size, size, blocks);
        Ok(System { matrix, rhs, dofs })
    }

    /// Number of unknowns.
    pub fn unknowns(&self) -> usize {
        self.rhs.len()
    }

    /// Nodal potentials from the solved unknowns.
    pub fn expand(&self, u: &[f64]) -> Vec<f64> {
        self.dofs
            .iter()
            .map(|d| match *d {
                Dof::Unknown(k) => u[k],
                Dof::Fixed(v) => v,
            })
            .collect()
    }
}
