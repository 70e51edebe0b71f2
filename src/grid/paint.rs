//! Painting parts onto the grid: which dielectric region owns each cell and
//! which electrode owns each node.
//!
//! Dielectric parts paint cells whose centre they contain, in case order, so
//! a later part overrides earlier cells. Electrodes are closed sets: every
//! node inside or on the outline belongs to the electrode, and electrodes
//! take precedence over insulation at their nodes. A cell whose four nodes
//! belong to one electrode is conductor interior and carries no field.

use super::{Grid, GridError};
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
}

impl Layout {
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
        Ok(Layout { regions, cell_region, electrodes, node_electrode })
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
