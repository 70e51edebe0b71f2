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
//!
//! Structure apart from values: [`Factors`] (per-unit-permittivity
//! conductances of every cell quarter) and [`Pattern`] (the numbering of the
//! unknowns and the sparsity of the matrix) depend on the geometry only and
//! are built once; a [`Stencil`] (edge conductances) is built from each
//! evaluation's coefficients, and the matrix values and the right-hand side
//! (from any set of electrode potentials) from a stencil.

use crate::case::{ElectrodeKind, Geometry};
use crate::coefficients::Complex64;
use crate::coefficients::{Coefficient, Coefficients};
use crate::grid::{CONDUCTOR, CellIx, Grid, Layout, NO_ELECTRODE, NodeIx};
use crate::solve::Matrix;
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
/// the point-charge test in `tests/suite/numerics.rs`).
pub fn face_radius(r1: f64, r2: f64) -> f64 {
    if r1 > 0.0 { ((r2 - r1) * (r1 + r2) / (2.0 * ((r2 - r1) / r1).ln_1p())).sqrt() } else { 0.5 * (r1 + r2) }
}

/// True where [`radial_weight`] uses the log form.
pub fn is_log_form(r1: f64) -> bool {
    r1 > 0.0
}

/// Per-unit-permittivity conductances of every cell quarter, computed once
/// per grid. They separate into a column and a row factor: planar
/// `g_h = (1/hx)·(hy/2)`, `g_v = (hx/2)·(1/hy)`; axisymmetric
/// `g_h = 2π·w_r·(hz/2)` with the radial weight w_r of [`radial_weight`],
/// `g_v = π·(r_f² − r²)·(1/hz)` on each side of the face radius r_f, and the
/// cross-term weight 2π·r_centre.
#[derive(Debug, Clone, PartialEq)]
pub struct Factors {
    /// Per cell column i: [g_h, g_left, g_right, w] column factors.
    column: Vec<[f64; 4]>,
    /// Per cell row j: the row factors.
    row: Vec<[f64; 4]>,
}

impl Factors {
    /// The factors of a grid.
    pub fn new(grid: &Grid, geometry: Geometry) -> Factors {
        let column = grid
            .x
            .windows(2)
            .map(|w| {
                let (x0, x1) = (w[0], w[1]);
                match geometry {
                    Geometry::Planar => {
                        let hx = x1 - x0;
                        [1.0 / hx, 0.5 * hx, 0.5 * hx, 1.0]
                    }
                    Geometry::Axisymmetric => {
                        let xm = face_radius(x0, x1);
                        [
                            2.0 * PI * radial_weight(x0, x1),
                            PI * (xm * xm - x0 * x0),
                            PI * (x1 * x1 - xm * xm),
                            PI * (x0 + x1),
                        ]
                    }
                }
            })
            .collect();
        let row = grid
            .y
            .windows(2)
            .map(|w| {
                let hy = w[1] - w[0];
                [0.5 * hy, 1.0 / hy, 1.0 / hy, 1.0]
            })
            .collect();
        Factors { column, row }
    }

    /// (bottom or top edge, left edge, right edge) quarter conductances per
    /// unit permittivity of cell (i, j), and the weight of its cross term.
    fn cell(&self, i: usize, j: usize) -> (f64, f64, f64, f64) {
        let (c, r) = (self.column[i], self.row[j]);
        (c[0] * r[0], c[1] * r[1], c[2] * r[2], c[3] * r[3])
    }
}

/// Edge conductances of the discretised operator (F, or F/m when planar),
/// for coefficients of type `T`.
#[derive(Debug, Clone, PartialEq)]
pub struct Stencil<T = f64> {
    /// Edge (i, j)–(i+1, j) at index `j·(nx−1) + i`.
    pub gx: Vec<T>,
    /// Edge (i, j)–(i, j+1) at index `j·nx + i`.
    pub gy: Vec<T>,
    /// Diagonal couplings of cells cut by an oblique interface (the ε_xy
    /// term of their laminate tensor): (node, other node, conductance),
    /// both directions, sorted. Every cell where two regions meet has them,
    /// zero or not, so that the matrix pattern does not depend on values.
    pub cross: Vec<(u32, u32, T)>,
}

impl<T: Coefficient> Stencil<T> {
    /// Conductances from per-cell coefficients: `coefficient(c)` gives the
    /// relative coefficient of cell c's quarter beside its bottom, top, left
    /// and right edge (`None` for conductor cells). No boundary edges, no
    /// cross terms (for tests of the scheme itself).
    pub fn build(grid: &Grid, factors: &Factors, coefficient: impl Fn(CellIx) -> Option<[T; 4]>) -> Stencil<T> {
        let (nx, ny) = (grid.nx(), grid.ny());
        let zero = T::real(0.0);
        let mut gx = vec![zero; (nx - 1) * ny];
        let mut gy = vec![zero; nx * (ny - 1)];
        for j in 0..ny - 1 {
            for i in 0..nx - 1 {
                let Some([e_bottom, e_top, e_left, e_right]) = coefficient(grid.cell(i, j)) else { continue };
                let (g_h, g_left, g_right, _) = factors.cell(i, j);
                let (b, t, l, r) = (j * (nx - 1) + i, (j + 1) * (nx - 1) + i, j * nx + i, j * nx + i + 1);
                gx[b] = gx[b] + e_bottom * (EPSILON_0 * g_h);
                gx[t] = gx[t] + e_top * (EPSILON_0 * g_h);
                gy[l] = gy[l] + e_left * (EPSILON_0 * g_left);
                gy[r] = gy[r] + e_right * (EPSILON_0 * g_right);
            }
        }
        Stencil { gx, gy, cross: Vec::new() }
    }

    /// The stencil of a painted layout at one evaluation's coefficients.
    /// An edge that a curved electrode outline crosses at fraction θ from
    /// its free node carries the flux between that node and the outline: its
    /// conductance is divided by θ (the symmetric Shortley–Weller form, which
    /// keeps the matrix SPD).
    pub fn new(grid: &Grid, layout: &Layout, factors: &Factors, coefficients: &Coefficients<T>) -> Stencil<T> {
        let mut s = Stencil::build(grid, factors, |c| {
            let r = layout.cell_region[c.0];
            if r == CONDUCTOR {
                return None;
            }
            match layout.cut_cells.binary_search_by_key(&(c.0 as u32), |k| k.cell) {
                Ok(k) => Some(coefficients.cut[k].0),
                Err(_) => {
                    Some([coefficients.cells.as_ref().map_or_else(|| coefficients.region[r as usize], |v| v[c.0]); 4])
                }
            }
        });
        for b in &layout.boundary_edges {
            let g = if b.horizontal { &mut s.gx[b.edge as usize] } else { &mut s.gy[b.edge as usize] };
            *g = *g * (1.0 / b.theta);
        }
        s.cross = cross_couplings(grid, layout, factors, coefficients);
        s
    }

    /// The neighbours of node n with their conductances: up to four along
    /// the grid lines, then any diagonal couplings.
    pub fn neighbours(&self, grid: &Grid, n: NodeIx) -> impl Iterator<Item = (NodeIx, T)> {
        let start = self.cross.partition_point(|c| (c.0 as usize) < n.0);
        let diagonal =
            self.cross[start..].iter().take_while(move |c| c.0 as usize == n.0).map(|c| (NodeIx(c.1 as usize), c.2));
        self.axis_neighbours(grid, n).chain(diagonal)
    }

    fn axis_neighbours(&self, grid: &Grid, n: NodeIx) -> impl Iterator<Item = (NodeIx, T)> {
        let (nx, ny) = (grid.nx(), grid.ny());
        let (i, j) = grid.node_ij(n);
        let mut out = [(NodeIx(0), T::real(0.0)); 4];
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
}

impl Stencil<f64> {
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

impl Stencil<Complex64> {
    /// Stored energy of a phasor φ′ + jφ″: `½·Σ_edges Re G·(Δφ′² + Δφ″²)`
    /// (J, or J/m; in the case's rms/peak convention).
    pub fn energy_phasor(&self, grid: &Grid, re: &[f64], im: &[f64]) -> f64 {
        let real = Stencil { gx: self.re(&self.gx), gy: self.re(&self.gy), cross: Vec::new() };
        let mut w = real.energy(grid, re) + real.energy(grid, im);
        for &(a, b, g) in self.cross.iter().filter(|c| c.0 < c.1) {
            let (dr, di) = (re[a as usize] - re[b as usize], im[a as usize] - im[b as usize]);
            w += 0.5 * g.re * (dr * dr + di * di);
        }
        w
    }

    fn re(&self, g: &[Complex64]) -> Vec<f64> {
        g.iter().map(|g| g.re).collect()
    }

    /// Net complex flux `Σ G·(φn − φm)` leaving a set of nodes for the
    /// phasor φ′ + jφ″: the complex charge I/(jω) (C, or C/m).
    pub fn outflux_phasor(
        &self,
        grid: &Grid,
        re: &[f64],
        im: &[f64],
        nodes: impl Iterator<Item = NodeIx>,
    ) -> Complex64 {
        nodes
            .map(|n| {
                self.neighbours(grid, n)
                    .map(|(m, g)| g * Complex64::new(re[n.0] - re[m.0], im[n.0] - im[m.0]))
                    .sum::<Complex64>()
            })
            .sum()
    }
}

/// Safety margin on the cross term: |κ| ≤ this × 2·√(Hx·Hy), which keeps
/// each cut cell's contribution positive semi-definite (see
/// `cross_couplings`).
const CROSS_LIMIT: f64 = 0.95;

/// The ε_xy term of each laminate cut cell as diagonal couplings.
///
/// With bilinear φ in the cell, ∫ε_xy·∂xφ·∂yφ dA = κ·(s·φ)(t·φ), where
/// s·φ = φ2 − φ1 + φ4 − φ3 and t·φ = φ3 − φ1 + φ4 − φ2 (nodes 1–4 at the
/// lower left, lower right, upper left, upper right) and κ = ε_xy/4
/// (planar; × 2π·r_centre axisymmetric). That is a conductance 2κ between
/// nodes 1 and 4 and −2κ between nodes 2 and 3. The cell's own axis
/// conductances bound its energy below by Hx·(s·φ)² + Hy·(t·φ)² (Hx, Hy the
/// series values of its two x and two y quarters), so |κ| ≤ 2·√(Hx·Hy)
/// keeps its whole contribution positive semi-definite and the matrix SPD.
fn cross_couplings<T: Coefficient>(
    grid: &Grid,
    layout: &Layout,
    factors: &Factors,
    coefficients: &Coefficients<T>,
) -> Vec<(u32, u32, T)> {
    let mut out = Vec::new();
    for (c, (q, xy)) in layout.cut_cells.iter().zip(&coefficients.cut) {
        if c.normal.is_none() {
            continue;
        }
        let (i, j) = grid.cell_ij(CellIx(c.cell as usize));
        let (g_h, g_left, g_right, w) = factors.cell(i, j);
        let series = |a: T, b: T| a * b / (a + b);
        let hx = series(q[0] * g_h, q[1] * g_h);
        let hy = series(q[2] * g_left, q[3] * g_right);
        let kappa = T::limit_cross(*xy * (0.25 * w), hx, hy, CROSS_LIMIT) * EPSILON_0;
        let [n1, n2, n3, n4] = grid.cell_nodes(CellIx(c.cell as usize)).map(|n| n.0 as u32);
        for (a, b, g) in [(n1, n4, kappa * 2.0), (n2, n3, kappa * -2.0)] {
            out.push((a, b, g));
            out.push((b, a, g));
        }
    }
    out.sort_by_key(|c| (c.0, c.1));
    // Neighbouring cut cells share no diagonal, but merge defensively.
    out.dedup_by(|next, kept| {
        if (next.0, next.1) == (kept.0, kept.1) {
            kept.2 = kept.2 + next.2;
            true
        } else {
            false
        }
    });
    out
}

/// The conductance that ties neighbouring nodes of one floating electrode
/// in the lattice operator of the geometric multigrid, in units of the
/// largest edge conductance: stiff enough that the group moves as one in the
/// preconditioner (its own matrix row is exact either way), mild enough for
/// single-precision line factors.
pub const GROUP_TIE: f64 = 1e4;

/// Nodes per parallel assembly task.
const NODE_CHUNK: usize = 8192;

/// What the potential of a node is.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Constraint {
    /// An unknown of its own.
    Free,
    /// A fixed potential: index into the potentials given to
    /// [`Pattern::rhs`] (the electrode index for a painted case).
    Fixed(u32),
    /// Shares one unknown with every node of the same group (a floating electrode).
    Group(u32),
}

/// The constraints of a painted case: fixed electrodes by their index.
pub fn constraints(layout: &Layout) -> Vec<Constraint> {
    layout
        .node_electrode
        .iter()
        .map(|&e| {
            if e == NO_ELECTRODE {
                return Constraint::Free;
            }
            match layout.electrodes[e as usize].kind {
                ElectrodeKind::Fixed { .. } => Constraint::Fixed(e),
                ElectrodeKind::Floating => Constraint::Group(e),
            }
        })
        .collect()
}

/// The constraints of the DC thermal problem: electrodes with a
/// temperature are fixed at it (by electrode index into the returned
/// values, °C), the others are isothermal bodies of unknown temperature
/// with no net heat flow (a group, as a floating electrode); other nodes
/// are free. `None` when no electrode has a temperature.
pub fn thermal_constraints(layout: &Layout, temperature_c: &[Option<f64>]) -> Option<(Vec<Constraint>, Vec<f64>)> {
    temperature_c.iter().any(Option::is_some).then(|| {
        let constraints = layout
            .node_electrode
            .iter()
            .map(|&e| match e {
                NO_ELECTRODE => Constraint::Free,
                e if temperature_c[e as usize].is_some() => Constraint::Fixed(e),
                e => Constraint::Group(e),
            })
            .collect();
        (constraints, temperature_c.iter().map(|t| t.unwrap_or(0.0)).collect())
    })
}

/// The electrode potentials of a painted case in V, by electrode index (0
/// for floating ones, which are unknowns).
pub fn potentials(layout: &Layout) -> Vec<f64> {
    layout
        .electrodes
        .iter()
        .map(|e| match e.kind {
            ElectrodeKind::Fixed { potential_v } => potential_v,
            ElectrodeKind::Floating => 0.0,
        })
        .collect()
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Dof {
    /// Its unknown (row); 32 bits, as the matrix's column indices.
    Unknown(u32),
    /// The index of its fixed potential.
    Fixed(u32),
}

/// The numbering of the unknowns and the sparsity pattern of the matrix:
/// built once from the geometry, then filled with the values of any
/// stencil of the same layout.
#[derive(Debug, Clone)]
pub struct Pattern {
    dofs: Vec<Dof>,
    /// Free nodes, in node order (row r is the node `free[r]`).
    free: Vec<NodeIx>,
    /// The nodes of each group row (after the free rows).
    groups: Vec<Vec<NodeIx>>,
    indptr: Vec<usize>,
    indices: Vec<u32>,
}

/// The linear system `A·u = b` for the unknown potentials.
#[derive(Debug, Clone)]
pub struct System {
    /// Symmetric positive definite matrix (CSR, both triangles stored).
    pub matrix: Matrix,
    /// Right-hand side (from the fixed potentials).
    pub rhs: Vec<f64>,
}

/// Why a system could not be assembled.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum AssembleError {
    /// No node has a fixed potential, so the potential is undetermined.
    #[error("no node has a fixed potential; the potential is undetermined")]
    NoFixedPotential,
}

/// True when an edge of this conductance belongs to the pattern: grid
/// edges with no conductance (between conductor cells) do not; diagonal
/// couplings always do.
fn in_pattern<T: Coefficient>(g: T, diagonal: bool) -> bool {
    diagonal || g != T::real(0.0)
}

impl Pattern {
    /// Numbers the unknowns (free nodes in node order, then one per group)
    /// and finds every row's columns from the edges of `stencil` (any
    /// evaluation of the layout: the pattern does not depend on values).
    pub fn new<T: Coefficient>(
        grid: &Grid,
        stencil: &Stencil<T>,
        constraints: &[Constraint],
    ) -> Result<Pattern, AssembleError> {
        if !constraints.iter().any(|c| matches!(c, Constraint::Fixed(_))) {
            return Err(AssembleError::NoFixedPotential);
        }
        let mut dofs = vec![Dof::Fixed(0); constraints.len()];
        let mut free = Vec::with_capacity(constraints.iter().filter(|c| matches!(c, Constraint::Free)).count());
        for (n, c) in constraints.iter().enumerate() {
            if let Constraint::Free = c {
                dofs[n] = Dof::Unknown(free.len() as u32);
                free.push(NodeIx(n));
            }
        }
        let mut groups: Vec<Vec<NodeIx>> = Vec::new();
        let mut group_row: std::collections::BTreeMap<u32, usize> = Default::default();
        for (n, c) in constraints.iter().enumerate() {
            match *c {
                Constraint::Free => {}
                Constraint::Fixed(k) => dofs[n] = Dof::Fixed(k),
                Constraint::Group(g) => {
                    let next = free.len() + group_row.len();
                    let r = *group_row.entry(g).or_insert(next);
                    dofs[n] = Dof::Unknown(r as u32);
                    if r - free.len() == groups.len() {
                        groups.push(Vec::new());
                    }
                    groups[r - free.len()].push(NodeIx(n));
                }
            }
        }
        let mut p = Pattern { dofs, free, groups, indptr: Vec::new(), indices: Vec::new() };
        // The columns of each row: itself and every unknown it couples to.
        let row_columns = |row: usize, nodes: &[NodeIx], out: &mut Vec<u32>| {
            out.clear();
            out.push(row as u32);
            for &n in nodes {
                let axis = 4.min(stencil.axis_neighbours(grid, n).count());
                for (k, (m, g)) in stencil.neighbours(grid, n).enumerate() {
                    if let (true, Dof::Unknown(q)) = (in_pattern(g, k >= axis), p.dofs[m.0]) {
                        out.push(q);
                    }
                }
            }
            out.sort_unstable();
            out.dedup();
        };
        let chunks: Vec<(Vec<usize>, Vec<u32>)> = p
            .free
            .par_chunks(NODE_CHUNK)
            .enumerate()
            .map(|(c, nodes)| {
                let (mut counts, mut cols, mut row) = (Vec::new(), Vec::new(), Vec::new());
                for (k, &n) in nodes.iter().enumerate() {
                    row_columns(c * NODE_CHUNK + k, &[n], &mut row);
                    counts.push(row.len());
                    cols.extend_from_slice(&row);
                }
                (counts, cols)
            })
            .collect();
        // Kept for the life of the case: reserved for the free rows' columns
        // and an estimate of the groups', trimmed at the end.
        let rows = p.free.len() + p.groups.len();
        let group_entries: usize = p.groups.iter().map(|g| 5 * g.len()).sum();
        let mut indptr = Vec::with_capacity(rows + 1);
        indptr.push(0usize);
        let mut indices = Vec::with_capacity(chunks.iter().map(|c| c.1.len()).sum::<usize>() + group_entries);
        for (counts, cols) in chunks {
            for c in counts {
                indptr.push(indptr[indptr.len() - 1] + c);
            }
            indices.extend_from_slice(&cols);
        }
        let mut row = Vec::new();
        for (k, nodes) in p.groups.iter().enumerate() {
            row_columns(p.free.len() + k, nodes, &mut row);
            indptr.push(indptr[indptr.len() - 1] + row.len());
            indices.extend_from_slice(&row);
        }
        indices.shrink_to_fit();
        p.indptr = indptr;
        p.indices = indices;
        Ok(p)
    }

    /// Number of unknowns.
    pub fn unknowns(&self) -> usize {
        self.indptr.len() - 1
    }

    /// The nodes whose balance row `r` states.
    fn row_nodes(&self, r: usize) -> &[NodeIx] {
        if r < self.free.len() { std::slice::from_ref(&self.free[r]) } else { &self.groups[r - self.free.len()] }
    }

    /// The matrix values (CSR order) of `stencil`: each row the flux balance
    /// of its node (or of all nodes of a group), rows in parallel, each
    /// entry summed in a fixed order (deterministic).
    pub fn values<T: Coefficient>(&self, grid: &Grid, stencil: &Stencil<T>) -> Vec<T> {
        let zero = T::real(0.0);
        let mut data = vec![zero; self.indices.len()];
        let fill = |r: usize, out: &mut [T]| {
            let cols = &self.indices[self.indptr[r]..self.indptr[r + 1]];
            let diag = cols.binary_search(&(r as u32)).unwrap_or(0);
            for &n in self.row_nodes(r) {
                let axis = 4.min(stencil.axis_neighbours(grid, n).count());
                for (k, (m, g)) in stencil.neighbours(grid, n).enumerate() {
                    if !in_pattern(g, k >= axis) {
                        continue;
                    }
                    out[diag] = out[diag] + g;
                    if let Dof::Unknown(q) = self.dofs[m.0]
                        && let Ok(at) = cols.binary_search(&q)
                    {
                        out[at] = out[at] - g;
                    }
                }
            }
        };
        // Rows are contiguous in `data`: split it into chunks of rows, filled
        // in parallel.
        let rows = self.unknowns();
        let mut rest: &mut [T] = &mut data;
        let mut chunks = Vec::with_capacity(rows.div_ceil(NODE_CHUNK));
        for first in (0..rows).step_by(NODE_CHUNK) {
            let last = (first + NODE_CHUNK).min(rows);
            let (head, tail) = rest.split_at_mut(self.indptr[last] - self.indptr[first]);
            chunks.push((first, last, head));
            rest = tail;
        }
        chunks.into_par_iter().for_each(|(first, last, out)| {
            let base = self.indptr[first];
            for r in first..last {
                fill(r, &mut out[self.indptr[r] - base..self.indptr[r + 1] - base]);
            }
        });
        data
    }

    /// The complex matrix of a complex stencil.
    pub fn complex_matrix(&self, grid: &Grid, stencil: &Stencil<Complex64>) -> crate::solve::ComplexMatrix {
        let n = self.unknowns();
        let values = self.values(grid, stencil);
        let structure = Matrix::new((n, n), self.indptr.clone(), self.indices.clone(), vec![0.0; self.indices.len()]);
        crate::solve::ComplexMatrix::new(structure, &values)
    }

    /// Nodal potentials (in-phase and quadrature) from a complex solution;
    /// fixed potentials are real (in phase).
    pub fn expand_phasor(&self, u: &crate::solve::ComplexVector, potentials: &[f64]) -> (Vec<f64>, Vec<f64>) {
        (self.expand(&u.re, potentials), self.expand(&u.im, &vec![0.0; potentials.len()]))
    }

    /// The matrix of a real stencil.
    pub fn matrix(&self, grid: &Grid, stencil: &Stencil<f64>) -> Matrix {
        let n = self.unknowns();
        Matrix::new((n, n), self.indptr.clone(), self.indices.clone(), self.values(grid, stencil))
    }

    /// The right-hand side for the fixed potentials `potentials` (V, by
    /// the index in `Constraint::Fixed`): Σ G·V over each row's couplings to
    /// fixed nodes.
    pub fn rhs<T: Coefficient>(&self, grid: &Grid, stencil: &Stencil<T>, potentials: &[f64]) -> Vec<T> {
        (0..self.unknowns())
            .into_par_iter()
            .with_min_len(NODE_CHUNK)
            .map(|r| {
                let mut b = T::real(0.0);
                for &n in self.row_nodes(r) {
                    for (m, g) in stencil.neighbours(grid, n) {
                        if let Dof::Fixed(k) = self.dofs[m.0] {
                            b = b + g * potentials[k as usize];
                        }
                    }
                }
                b
            })
            .collect()
    }

    /// The lattice form of a real stencil's operator, for the geometric
    /// multigrid (`solve::LineMultigrid`): lattice point (i, j) is grid node
    /// (i, j); fixed nodes are decoupled rows; the nodes of a floating
    /// electrode keep their own couplings and are tied to their neighbours
    /// in the group by [`GROUP_TIE`] times the largest conductance, so that
    /// the lattice operator is a stiff model of the group (its couplings
    /// within the group cancel in the system's matrix, see
    /// `solve::Embedding`).
    pub fn structure(&self, grid: &Grid, stencil: &Stencil<f64>) -> crate::solve::Structure {
        let (nx, ny) = (grid.nx(), grid.ny());
        let largest = stencil.gx.iter().chain(&stencil.gy).fold(0.0f64, |m, g| m.max(g.abs()));
        let tie = GROUP_TIE * largest.max(f64::MIN_POSITIVE);
        let mut l = crate::solve::Lattice::zeros(nx, ny);
        let unknown = |n: NodeIx| match self.dofs[n.0] {
            Dof::Unknown(q) => Some(q),
            Dof::Fixed(_) => None,
        };
        let groups = self.free.len() as u32;
        // conductance between two nodes as the lattice sees it
        let tied = |a: NodeIx, b: NodeIx, g: f64| match (unknown(a), unknown(b)) {
            (Some(p), Some(q)) if p == q && p >= groups => g + tie,
            _ => g,
        };
        let point = |n: NodeIx| {
            let (i, j) = grid.node_ij(n);
            i + nx * j
        };
        // per point: the excess (conductance to fixed nodes) and the
        // couplings towards (i−1, j) and (i, j−1)
        let rows: Vec<[f64; 3]> = (0..nx * ny)
            .into_par_iter()
            .with_min_len(NODE_CHUNK)
            .map(|k| {
                let (i, j) = (k % nx, k / nx);
                let n = grid.node(i, j);
                if unknown(n).is_none() {
                    return [1.0, 0.0, 0.0];
                }
                let mut row = [0.0; 3];
                for (m, g) in stencil.axis_neighbours(grid, n) {
                    let (mi, mj) = grid.node_ij(m);
                    if unknown(m).is_none() {
                        row[0] += g;
                    } else if mi < i || mj < j {
                        row[1 + usize::from(mj < j)] = -tied(n, m, g);
                    }
                }
                row
            })
            .collect();
        for (k, [excess, w, s]) in rows.into_iter().enumerate() {
            (l.excess[k], l.w[k], l.s[k]) = (excess, w, s);
        }
        // diagonal couplings, each stored on the upper of its two nodes
        for &(a, b, g) in &stencil.cross {
            let (a, b) = (NodeIx(a as usize), NodeIx(b as usize));
            if unknown(a).is_none() {
                continue;
            }
            let k = point(a);
            let ((ia, ja), (ib, jb)) = (grid.node_ij(a), grid.node_ij(b));
            if unknown(b).is_none() {
                l.excess[k] += g;
            } else if jb + 1 == ja {
                if ib + 1 == ia {
                    l.sw[k] = -g;
                } else if ib == ia + 1 {
                    l.se[k] = -g;
                }
            }
        }
        let embedding = crate::solve::Embedding {
            points: self.free.iter().map(|&n| point(n) as u32).collect(),
            groups: self.groups.iter().map(|g| g.iter().map(|&n| point(n) as u32).collect()).collect(),
        };
        crate::solve::Structure { lattice: l, embedding }
    }

    /// The system of a real stencil for the given fixed potentials.
    pub fn system(&self, grid: &Grid, stencil: &Stencil<f64>, potentials: &[f64]) -> System {
        System { matrix: self.matrix(grid, stencil), rhs: self.rhs(grid, stencil, potentials) }
    }

    /// Adds nodal sources (one value per grid node) to a right-hand side:
    /// each unknown's row gets the sources of its nodes.
    pub fn add_sources(&self, b: &mut [f64], nodal: &[f64]) {
        for (n, d) in self.dofs.iter().enumerate() {
            if let Dof::Unknown(k) = *d {
                b[k as usize] += nodal[n];
            }
        }
    }

    /// The unknowns of a nodal potential (the inverse of `expand` on the
    /// free nodes; a floating electrode's unknown is the mean over its
    /// nodes): a starting guess from a potential known at every node.
    pub fn restrict(&self, nodal: &[f64]) -> Vec<f64> {
        let mut u = vec![0.0; self.unknowns()];
        let mut count = vec![0u32; self.unknowns()];
        for (n, d) in self.dofs.iter().enumerate() {
            if let Dof::Unknown(k) = *d {
                u[k as usize] += nodal[n];
                count[k as usize] += 1;
            }
        }
        u.iter_mut().zip(&count).for_each(|(v, &c)| *v /= f64::from(c.max(1)));
        u
    }

    /// Nodal potentials from the solved unknowns and the fixed potentials.
    pub fn expand(&self, u: &[f64], potentials: &[f64]) -> Vec<f64> {
        self.dofs
            .iter()
            .map(|d| match *d {
                Dof::Unknown(k) => u[k as usize],
                Dof::Fixed(k) => potentials[k as usize],
            })
            .collect()
    }
}
