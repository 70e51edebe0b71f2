//! Painting parts onto the grid: which dielectric region owns each cell and
//! which electrode owns each node.
//!
//! Dielectric parts paint cells whose centre they contain, in case order, so
//! a later part overrides earlier cells. Electrodes are closed sets: every
//! node inside or on the outline belongs to the electrode, and electrodes
//! take precedence over insulation at their nodes. A cell whose four nodes
//! belong to one electrode is conductor interior and carries no field.

use super::{CellIx, Grid, GridError};
use crate::case::{Case, ElectrodeKind, MaterialId, Role};

/// `cell_region` value of a conductor cell.
pub const CONDUCTOR: u32 = u32::MAX;
/// `node_electrode` value of a node that belongs to no electrode.
pub const NO_ELECTRODE: u32 = u32::MAX;

/// A dielectric region: the background or one dielectric part.
#[derive(Debug, Clone, PartialEq)]
pub struct Region {
    /// Part name ("background" for uncovered cells).
    pub name: String,
    /// Material.
    pub material: MaterialId,
    /// Index into `case.parts`, `None` for the background.
    pub part: Option<usize>,
    /// Grid cells across the part's narrowest drawn extent (`usize::MAX` for
    /// the background).
    pub cells_across: usize,
}

/// An electrode as painted.
#[derive(Debug, Clone, PartialEq)]
pub struct ElectrodeInfo {
    /// Index into `case.parts`.
    pub part: usize,
    /// Part name.
    pub name: String,
    /// Fixed or floating.
    pub kind: ElectrodeKind,
}

/// Ownership of cells and nodes.
#[derive(Debug, Clone, PartialEq)]
pub struct Layout {
    /// Region 0 is the background, then each dielectric part in case order.
    pub regions: Vec<Region>,
    /// Region index of each cell, or [`CONDUCTOR`].
    pub cell_region: Vec<u32>,
    /// Electrodes in case order.
    pub electrodes: Vec<ElectrodeInfo>,
    /// Electrode index of each node, or [`NO_ELECTRODE`].
    pub node_electrode: Vec<u32>,
    /// Cells cut by a curved or slanted dielectric interface, with the
    /// region of each sub-sample (sorted by cell).
    pub cut_cells: Vec<CutCell>,
    /// Edges where a curved electrode outline lies between the nodes.
    pub boundary_edges: Vec<BoundaryEdge>,
}

/// A grid edge from a free node into a curved electrode, which the
/// electrode's real outline crosses before the electrode node.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BoundaryEdge {
    /// Along x (edge index into the horizontal edges) or y (vertical edges).
    pub horizontal: bool,
    /// Edge index (`j·(nx−1) + i` for horizontal, `j·nx + i` for vertical).
    pub edge: u32,
    /// The free node the edge starts from.
    pub free_node: u32,
    /// Fraction of the edge from the free node to the outline (≥ `MIN_THETA`).
    pub theta: f64,
    /// Outward normal of the electrode where the edge meets it.
    pub normal: [f64; 2],
}

/// Smallest boundary fraction used: nearer outlines are treated as at this
/// fraction, which keeps the matrix well conditioned (common practice in
/// Shortley–Weller discretisations). At 0.05 the snapping moved the outline
/// near the extremes of circles (where grid lines pass within h²/2r of it)
/// by enough to push surface peaks up by 2 % at 64 cells per radius; 0.01
/// leaves that below the recovery's own scatter.
pub const MIN_THETA: f64 = 0.01;

/// A cell that a dielectric interface crosses: which region fills each of
/// its sub-samples, and the interface normal. Geometry only; the
/// coefficient stage turns it into an effective permittivity for any
/// material values.
#[derive(Debug, Clone, PartialEq)]
pub struct CutCell {
    /// The cell.
    pub cell: u32,
    /// Region of each of the `SUBSAMPLES`² sub-samples, row by row from the
    /// lower left (x fastest).
    pub samples: Vec<u16>,
    /// Where exactly two regions meet: the unit normal of the nearest
    /// curved or slanted dielectric outline (for the laminate tensor).
    pub normal: Option<[f64; 2]>,
}

/// Edges from free nodes into curved electrodes, with where the outline
/// really lies (Shortley & Weller, J. Appl. Phys. 9, 1938).
fn boundary_edges(case: &Case, grid: &Grid, electrodes: &[ElectrodeInfo], node_electrode: &[u32]) -> Vec<BoundaryEdge> {
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut out = Vec::new();
    for j in 0..ny {
        for i in 0..nx {
            let n = grid.node(i, j);
            let e = node_electrode[n.0];
            if e == NO_ELECTRODE {
                continue;
            }
            let shape = &case.parts[electrodes[e as usize].part].shape;
            if matches!(shape, crate::shape::Shape::Rect(_)) {
                continue;
            }
            let around =
                [(i.wrapping_sub(1), j, true), (i + 1, j, true), (i, j.wrapping_sub(1), false), (i, j + 1, false)];
            for (a, b, horizontal) in around {
                if a >= nx || b >= ny {
                    continue;
                }
                let m = grid.node(a, b);
                if node_electrode[m.0] != NO_ELECTRODE {
                    continue;
                }
                let Some((t, normal)) = shape.entry(grid.node_pos(m), grid.node_pos(n)) else { continue };
                let edge = if horizontal { b * (nx - 1) + a.min(i) } else { b.min(j) * nx + a };
                out.push(BoundaryEdge {
                    horizontal,
                    edge: edge as u32,
                    free_node: m.0 as u32,
                    theta: t.max(MIN_THETA),
                    normal,
                });
            }
        }
    }
    out
}

/// Sub-samples per cell side used to find a cut cell's fill fractions.
pub const SUBSAMPLES: usize = 16;

/// The dielectric region at a point: the last dielectric part containing
/// it, else the background (region 0). `part_region[p]` is the region of
/// part p (dielectric parts only).
fn region_at(case: &Case, part_region: &[Option<u16>], p: [f64; 2]) -> u16 {
    case.parts
        .iter()
        .zip(part_region)
        .rev()
        .find_map(|(part, r)| match (part.role, r) {
            (Role::Dielectric(_), Some(r)) if part.shape.contains_closed(p, 0.0) => Some(*r),
            _ => None,
        })
        .unwrap_or(0)
}

/// The sub-sampled regions of a cell crossed by interfaces, or `None` when
/// one region fills it (judged on a 3 × 3 probe first, then 16 × 16).
fn cut_cell(case: &Case, grid: &Grid, part_region: &[Option<u16>], c: CellIx) -> Option<CutCell> {
    let (i, j) = grid.cell_ij(c);
    let (x0, y0) = (grid.x[i], grid.y[j]);
    let (hx, hy) = (grid.x[i + 1] - x0, grid.y[j + 1] - y0);
    let at = |u: f64, v: f64| region_at(case, part_region, [x0 + u * hx, y0 + v * hy]);
    let probe = [1.0 / 6.0, 0.5, 5.0 / 6.0];
    let first = at(0.5, 0.5);
    if probe.iter().all(|&u| probe.iter().all(|&v| at(u, v) == first)) {
        return None;
    }
    let n = SUBSAMPLES;
    let mut samples = vec![0u16; n * n];
    for b in 0..n {
        for a in 0..n {
            samples[b * n + a] = at((a as f64 + 0.5) / n as f64, (b as f64 + 0.5) / n as f64);
        }
    }
    let a = samples[0];
    let two = match samples.iter().find(|&&v| v != a) {
        Some(&b) => samples.iter().all(|&v| v == a || v == b),
        None => return None,
    };
    let normal = if two { interface_normal(case, [x0 + 0.5 * hx, y0 + 0.5 * hy]) } else { None };
    Some(CutCell { cell: c.0 as u32, samples, normal })
}

/// The unit normal of the interface in a cell: that of the nearest outline
/// of a dielectric part that is not an axis-aligned rectangle (those lie on
/// grid lines).
fn interface_normal(case: &Case, centre: [f64; 2]) -> Option<[f64; 2]> {
    let shape = case
        .parts
        .iter()
        .filter(|p| matches!(p.role, Role::Dielectric(_)) && !matches!(p.shape, crate::shape::Shape::Rect(_)))
        .map(|p| (p.shape.outline_distance(centre), &p.shape))
        .min_by(|a, b| a.0.total_cmp(&b.0))?
        .1;
    Some(shape.normal_near(centre))
}

/// The region of each part: dielectric parts get 1, 2, … in case order
/// (region 0 is the background), electrodes none.
fn part_regions(case: &Case) -> Vec<Option<u16>> {
    let mut next = 0u16;
    case.parts
        .iter()
        .map(|p| match p.role {
            Role::Dielectric(_) => {
                next += 1;
                Some(next)
            }
            Role::Electrode(_) => None,
        })
        .collect()
}

impl Layout {
    /// Whether `other` paints the same geometry: the same regions in the
    /// same cells and cut cells, the same electrodes (fixed or floating) on
    /// the same nodes and the same curved boundary edges; materials and
    /// potentials may differ. Two such layouts number their unknowns alike
    /// and give matrices of one pattern.
    pub fn same_geometry(&self, other: &Layout) -> bool {
        let floating = |l: &Layout| -> Vec<bool> {
            l.electrodes.iter().map(|e| matches!(e.kind, ElectrodeKind::Floating)).collect()
        };
        self.regions.len() == other.regions.len()
            && self.cell_region == other.cell_region
            && self.node_electrode == other.node_electrode
            && self.cut_cells == other.cut_cells
            && self.boundary_edges == other.boundary_edges
            && floating(self) == floating(other)
    }

    /// Whether each region (layout order) owns at least one cell.
    pub fn regions_with_cells(&self) -> Vec<bool> {
        let mut present = vec![false; self.regions.len()];
        for &r in self.cell_region.iter().filter(|&&r| r != CONDUCTOR) {
            present[r as usize] = true;
        }
        present
    }

    /// Paints the case's parts onto `grid`.
    pub fn paint(case: &Case, grid: &Grid) -> Result<Layout, GridError> {
        let d = case.domain;
        let tol = super::axis::MERGE_TOLERANCE * d.width().max(d.height()) * 10.0;
        let mut regions =
            vec![Region { name: "background".into(), material: case.background, part: None, cells_across: usize::MAX }];
        let mut cell_region = vec![0u32; grid.cells()];
        let mut electrodes = Vec::new();
        let mut node_electrode = vec![NO_ELECTRODE; grid.nodes()];

        for (pi, part) in case.parts.iter().enumerate() {
            let b = part.shape.bounds();
            let xr = Grid::line_range(&grid.x, b.x0, b.x1, tol);
            let yr = Grid::line_range(&grid.y, b.y0, b.y1, tol);
            match part.role {
                Role::Dielectric(material) => {
                    let r = regions.len() as u32;
                    let across = [xr.len(), yr.len()].iter().map(|n| n.saturating_sub(1)).min().unwrap_or(0);
                    regions.push(Region { name: part.name.clone(), material, part: Some(pi), cells_across: across });
                    for j in yr.start..yr.end.saturating_sub(1) {
                        for i in xr.start..xr.end.saturating_sub(1) {
                            let c = grid.cell(i, j);
                            if part.shape.contains_closed(grid.cell_center(c), 0.0) {
                                cell_region[c.0] = r;
                            }
                        }
                    }
                }
                Role::Electrode(kind) => {
                    let e = electrodes.len() as u32;
                    let mut count = 0usize;
                    for j in yr.clone() {
                        for i in xr.clone() {
                            let n = grid.node(i, j);
                            if !part.shape.contains_closed(grid.node_pos(n), tol) {
                                continue;
                            }
                            count += 1;
                            let prev = node_electrode[n.0];
                            if prev == NO_ELECTRODE {
                                node_electrode[n.0] = e;
                                continue;
                            }
                            let other: &ElectrodeInfo = &electrodes[prev as usize];
                            let why = match (other.kind, kind) {
                                (ElectrodeKind::Fixed { potential_v: a }, ElectrodeKind::Fixed { potential_v: b })
                                    if a == b =>
                                {
                                    continue;
                                }
                                (ElectrodeKind::Fixed { .. }, ElectrodeKind::Fixed { .. }) => {
                                    "a short circuit between different potentials"
                                }
                                _ => "a floating electrode cannot touch another electrode",
                            };
                            return Err(GridError::ElectrodesTouch {
                                key: part.key.clone(),
                                line: part.line,
                                column: part.column,
                                a: other.name.clone(),
                                b: part.name.clone(),
                                why,
                            });
                        }
                    }
                    if count == 0 {
                        return Err(GridError::EmptyElectrode {
                            key: part.key.clone(),
                            line: part.line,
                            column: part.column,
                            name: part.name.clone(),
                        });
                    }
                    electrodes.push(ElectrodeInfo { part: pi, name: part.name.clone(), kind });
                }
            }
        }

        for (c, region) in cell_region.iter_mut().enumerate() {
            let [a, b, cc, dd] = grid.cell_nodes(super::CellIx(c)).map(|n| node_electrode[n.0]);
            if a != NO_ELECTRODE && a == b && a == cc && a == dd {
                *region = CONDUCTOR;
            }
        }
        // Cells near curved or slanted dielectric outlines may be cut.
        let mut candidate = vec![false; grid.cells()];
        for part in &case.parts {
            if !matches!(part.role, Role::Dielectric(_)) || matches!(part.shape, crate::shape::Shape::Rect(_)) {
                continue;
            }
            let b = part.shape.bounds();
            let xr = Grid::line_range(&grid.x, b.x0, b.x1, tol);
            let yr = Grid::line_range(&grid.y, b.y0, b.y1, tol);
            for j in yr.start.saturating_sub(1)..(yr.end + 1).min(grid.ny() - 1) {
                for i in xr.start.saturating_sub(1)..(xr.end + 1).min(grid.nx() - 1) {
                    candidate[grid.cell(i, j).0] = true;
                }
            }
        }
        let part_region = part_regions(case);
        let cut_cells = candidate
            .iter()
            .enumerate()
            .filter(|&(c, &k)| k && cell_region[c] != CONDUCTOR)
            .filter_map(|(c, _)| cut_cell(case, grid, &part_region, CellIx(c)))
            .collect();
        let boundary_edges = boundary_edges(case, grid, &electrodes, &node_electrode);
        Ok(Layout { regions, cell_region, electrodes, node_electrode, cut_cells, boundary_edges })
    }

    /// Number of cells owned by each region.
    pub fn region_cell_counts(&self) -> Vec<usize> {
        let mut counts = vec![0; self.regions.len()];
        for &r in &self.cell_region {
            if r != CONDUCTOR {
                counts[r as usize] += 1;
            }
        }
        counts
    }
}
