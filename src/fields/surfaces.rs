//! Tangential field along the surfaces between solid parts and gas or
//! liquid parts, where creepage and surface flashover start well below the
//! bulk strength of either side.
//!
//! E_t is continuous across an uncharged interface, so it is well defined
//! on the interface itself: on an interface along a grid line it is the
//! field component of the grid edges lying in that line (E_x on a
//! horizontal line, E_y on a vertical one, each second order at the edge
//! midpoint); in a cell that a curved or slanted interface cuts it is
//! |E − (E·n)·n| at the cell centre with the interface normal n of the
//! painting.

use super::{EdgeValues, Sampler, weight};
use crate::case::Case;
use crate::grid::{CONDUCTOR, Grid, Layout};
use crate::materials::MaterialClass;

/// The largest tangential field along one solid–fluid surface (SI).
#[derive(Debug, Clone, PartialEq)]
pub struct SurfaceField {
    /// The solid region and the gas or liquid region (layout indices).
    pub regions: [usize; 2],
    /// Largest tangential |E| along the surface, V/m.
    pub e_t_max: f64,
    /// Where, m.
    pub at: [f64; 2],
}

/// Relative difference under which two candidates count as equal (ties keep
/// the first in grid order).
const TIE: f64 = 1e-6;

fn is_fluid(c: MaterialClass) -> bool {
    matches!(c, MaterialClass::Gas | MaterialClass::Liquid)
}

/// Tangential fields below this fraction of the case's largest field are
/// solver round-off (a surface across a uniform field) and count as zero.
const RESOLUTION: f64 = 1e-9;

/// Every solid–fluid surface of the layout with its largest tangential
/// field, in order of first appearance in the grid. `e_scale` is the
/// largest field of the case, V/m.
pub(super) fn surfaces(
    case: &Case,
    grid: &Grid,
    layout: &Layout,
    ev: &EdgeValues,
    sampler: &Sampler,
    e_scale: f64,
) -> Vec<SurfaceField> {
    let class = |r: u32| case.materials[layout.regions[r as usize].material].class;
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut cut = vec![false; grid.cells()];
    for c in &layout.cut_cells {
        cut[c.cell as usize] = true;
    }
    // the pair of a solid and a fluid region, solid first
    let pair = |a: u32, b: u32| -> Option<[usize; 2]> {
        if a == CONDUCTOR || b == CONDUCTOR || a == b {
            return None;
        }
        match (class(a), class(b)) {
            (MaterialClass::Solid, cb) if is_fluid(cb) => Some([a as usize, b as usize]),
            (ca, MaterialClass::Solid) if is_fluid(ca) => Some([b as usize, a as usize]),
            _ => None,
        }
    };
    let mut out: Vec<SurfaceField> = Vec::new();
    let floor = RESOLUTION * e_scale;
    let mut offer = |regions: [usize; 2], e_t: f64, at: [f64; 2]| {
        let e_t = if e_t < floor { 0.0 } else { e_t };
        offer_to(&mut out, regions, e_t, at)
    };
    // |value| of an edge, both parts of a phasor combined
    let quadrature = sampler.quadrature.as_ref().map(|q| &q.1);
    let edge = |value: &dyn Fn(&EdgeValues) -> f64| value(ev).hypot(quadrature.map_or(0.0, value));
    let region = |i: usize, j: usize| {
        let c = grid.cell(i, j).0;
        if cut[c] { CONDUCTOR } else { layout.cell_region[c] }
    };
    // horizontal grid lines: edges (i, j)–(i+1, j) between cells (i, j−1) and (i, j)
    for j in 1..ny - 1 {
        for i in 0..nx - 1 {
            if let Some(p) = pair(region(i, j - 1), region(i, j)) {
                let xm = 0.5 * (grid.x[i] + grid.x[i + 1]);
                let e = weight(case.geometry, xm).map_or(0.0, |w| edge(&|v| v.gx[j * (nx - 1) + i]) / w);
                offer(p, e, [xm, grid.y[j]]);
            }
        }
    }
    // vertical grid lines: edges (i, j)–(i, j+1) between cells (i−1, j) and (i, j)
    for j in 0..ny - 1 {
        for i in 1..nx - 1 {
            if let Some(p) = pair(region(i - 1, j), region(i, j)) {
                let ym = 0.5 * (grid.y[j] + grid.y[j + 1]);
                offer(p, edge(&|v| v.gy[j * nx + i]), [grid.x[i], ym]);
            }
        }
    }
    let nreg = layout.regions.len();
    for c in &layout.cut_cells {
        let Some(n) = c.normal else { continue };
        let mut present: Vec<u32> = c.samples.iter().map(|&s| u32::from(s)).filter(|&s| (s as usize) < nreg).collect();
        present.sort_unstable();
        present.dedup();
        let [a, b] = present[..] else { continue };
        let Some(p) = pair(a, b) else { continue };
        let (i, j) = grid.cell_ij(crate::grid::CellIx(c.cell as usize));
        let centre = [0.5 * (grid.x[i] + grid.x[i + 1]), 0.5 * (grid.y[j] + grid.y[j + 1])];
        let tangential = |e: [f64; 2]| {
            let en = e[0] * n[0] + e[1] * n[1];
            (e[0] - en * n[0]).hypot(e[1] - en * n[1])
        };
        let (e, q) = sampler.parts(centre);
        offer(p, tangential(e).hypot(q.map_or(0.0, tangential)), centre);
    }
    out
}

/// Keeps the larger of a surface's current and a new candidate (ties keep
/// the first in grid order).
fn offer_to(out: &mut Vec<SurfaceField>, regions: [usize; 2], e_t: f64, at: [f64; 2]) {
    match out.iter_mut().find(|s| s.regions == regions) {
        Some(s) if e_t > s.e_t_max * (1.0 + TIE) => {
            s.e_t_max = e_t;
            s.at = at;
        }
        Some(_) => {}
        None => out.push(SurfaceField { regions, e_t_max: e_t, at }),
    }
}
