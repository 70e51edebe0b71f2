//! Grid planning around what the geometry makes hard: the refinement boxes
//! of curved electrode outlines, and the points where the drawn geometry
//! has no finite field (sharp electrode edges and corners, foil ends, and
//! dielectric triple points where two insulating materials meet at an
//! electrode), toward which the grid is graded geometrically.

use super::{CONDUCTOR, Grid, Layout, NO_ELECTRODE, NodeIx};
use crate::case::{Case, GridSpec, Part, RefineBox, Role};
use crate::shape::{Rect, Shape};

/// How many times finer than `grid.cells_across` the default grid resolves
/// the radius of a curved outline (circle, rounded corner, fillet, arc).
const CURVED_REFINEMENT: f64 = 3.0;

/// Automatic refinement around curved electrode outlines: a box half a
/// radius wider than each arc (a whole circle; each corner of a rounded
/// rectangle; each fillet or arced edge) with a step of
/// radius / (3·cells_across). Why: the surface field of a curved conductor
/// is recovered by a one-sided quadratic along grid lines and its field
/// falls off over a fraction of the radius — with 8 cells per radius the
/// recovery misses that curvature (−0.9 % on a cylinder, −2.5 % on a
/// sphere), with 16 it is within 0.5 %, with 24 within 0.1 %
/// (`tests/suite/curved.rs`). Only the arcs are refined, so a large part with
/// small rounded corners does not refine its whole extent. Curved
/// dielectric parts are not refined: doing so doubled the nodes around a
/// void and moved its peak by under 0.05 %. The step follows the grid's
/// `cells_across`, so the self-check's coarser grids coarsen it with them.
pub fn curved_boxes(parts: &[Part], grid: &GridSpec) -> Vec<RefineBox> {
    let around = |b: Rect, radius: f64| RefineBox {
        rect: Rect {
            x0: b.x0 - 0.5 * radius,
            x1: b.x1 + 0.5 * radius,
            y0: b.y0 - 0.5 * radius,
            y1: b.y1 + 0.5 * radius,
        },
        max_step: radius / (CURVED_REFINEMENT * grid.cells_across as f64),
    };
    let mut out = Vec::new();
    for p in parts.iter().filter(|p| matches!(p.role, Role::Electrode(_))) {
        match &p.shape {
            Shape::Circle { radius, .. } if *radius > 0.0 => out.push(around(p.shape.bounds(), *radius)),
            // beads are graded toward (`bead_focus`), not boxed: a box's rows
            // and columns would cross the whole domain at the bead's step
            Shape::RoundedRect { rect: r, radius } if *radius > 0.0 => {
                let d = 2.0 * radius;
                for (x0, y0) in [(r.x0, r.y0), (r.x1 - d, r.y0), (r.x0, r.y1 - d), (r.x1 - d, r.y1 - d)] {
                    out.push(around(Rect { x0, x1: x0 + d, y0, y1: y0 + d }, *radius));
                }
            }
            Shape::Filleted { curved, radius, .. } if *radius > 0.0 && radius.is_finite() => {
                out.extend(curved.iter().map(|b| around(*b, *radius)));
            }
            _ => {}
        }
    }
    out
}

/// The focus points of the beaded foil ends (`edge_radius`) along x and
/// along y: toward each bead's outer extreme along the foil and toward its
/// centre line across it, with the step the curved-outline boxes would
/// give, radius / (3·cells_across), growing back geometrically at the
/// grid's growth. Local grading instead of a box: the three beaded foils of
/// the condenser demo grew the grid to 260 000 nodes in boxes.
pub fn bead_focus(parts: &[Part], grid: &GridSpec) -> (Vec<Focus>, Vec<Focus>) {
    let slope = grid.growth - 1.0;
    let (mut fx, mut fy) = (Vec::new(), Vec::new());
    for p in parts.iter().filter(|p| matches!(p.role, Role::Electrode(_))) {
        let Shape::Beaded { rect, radius } = &p.shape else { continue };
        let step = radius / (CURVED_REFINEMENT * grid.cells_across as f64);
        let along_x = rect.height() == 0.0;
        let c = p.shape.bead_centres();
        let (along, across) = if along_x { (&mut fx, &mut fy) } else { (&mut fy, &mut fx) };
        let tips = if along_x { [c[0][0] - radius, c[1][0] + radius] } else { [c[0][1] - radius, c[1][1] + radius] };
        along.extend(tips.map(|t| (t, step, slope)));
        across.push((if along_x { c[0][1] } else { c[0][0] }, step, slope));
    }
    (fx, fy)
}

/// A focus point of an axis: (coordinate, step there, slope at which the
/// step grows away from it), m, m, 1.
pub type Focus = (f64, f64, f64);

/// What makes a point singular.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SingularKind {
    /// A sharp convex edge or corner of an electrode (a foil end too) in
    /// one insulating material: |E| ~ r^(λ−1) with λ = π/θ, θ the
    /// insulation's opening angle.
    ElectrodeEdge,
    /// Two or more insulating materials meet at an electrode (a dielectric
    /// triple point): λ from the wedge angles and the permittivities.
    TriplePoint,
}

/// A point where the drawn geometry has no finite field.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SingularPoint {
    /// Where, m (a grid node).
    pub at: [f64; 2],
    /// What kind of point.
    pub kind: SingularKind,
    /// The electrode (layout index).
    pub electrode: usize,
}

/// A test for points inside the domain and off its boundary (a zero-flux
/// edge mirrors a corner there into a flat face).
fn inside_domain(case: &Case) -> impl Fn(&[f64; 2]) -> bool + '_ {
    let d = case.domain;
    let tol = 1e-9 * d.width().max(d.height());
    move |p: &[f64; 2]| {
        d.contains_closed(*p, tol)
            && (p[0] - d.x0).abs() > tol
            && (p[0] - d.x1).abs() > tol
            && (p[1] - d.y0).abs() > tol
            && (p[1] - d.y1).abs() > tol
    }
}

/// The sharp convex points of the electrodes (corners, foil ends) inside
/// the domain and off its boundary, in part order.
pub fn electrode_sharp_points(case: &Case) -> Vec<[f64; 2]> {
    let inside = inside_domain(case);
    case.electrodes().flat_map(|(_, p, _)| p.shape.sharp_points()).filter(|p| inside(p)).collect()
}

/// Where the field may be singular, from the outlines alone: the sharp
/// convex points of electrodes and the convex corners of insulating parts
/// that lie on an electrode (but not a rectangle's corner on a rectangular
/// electrode's face), leaving out those on the domain boundary (a
/// zero-flux edge mirrors the corner into a flat face), sorted, duplicates
/// removed. Later parts may paint over some; [`singular_points`] keeps
/// those the painted layout confirms.
pub fn singular_candidates(case: &Case) -> Vec<[f64; 2]> {
    let tol = 1e-9 * case.domain.width().max(case.domain.height());
    let inside = inside_domain(case);
    let electrodes: Vec<&Shape> = case.electrodes().map(|(_, p, _)| &p.shape).collect();
    let mut out = electrode_sharp_points(case);
    // A rectangle's corner on a rectangular electrode's face meets it at a
    // right angle: with the interface normal to the face λ = 1 whatever the
    // permittivities (ε1·cot(λπ/2) + ε2·cot(λπ/2) = 0), not singular.
    let singular_on = |part: &Shape, e: &Shape, q: [f64; 2]| {
        e.contains_closed(q, tol) && !(matches!(part, Shape::Rect(_)) && matches!(e, Shape::Rect(_)))
    };
    for p in case.parts.iter().filter(|p| matches!(p.role, Role::Dielectric(_))) {
        out.extend(
            p.shape
                .sharp_points()
                .into_iter()
                .filter(|q| inside(q) && electrodes.iter().any(|e| singular_on(&p.shape, e, *q))),
        );
    }
    out.sort_by(|a, b| a[0].total_cmp(&b[0]).then(a[1].total_cmp(&b[1])));
    out.dedup();
    out
}

/// The node at `p`, where grid lines cross within `tol`.
fn node_at(grid: &Grid, p: [f64; 2], tol: f64) -> Option<NodeIx> {
    let find = |v: &[f64], c: f64| {
        let k = v.partition_point(|&x| x < c - tol);
        (k < v.len() && (v[k] - c).abs() <= tol).then_some(k)
    };
    Some(grid.node(find(&grid.x, p[0])?, find(&grid.y, p[1])?))
}

/// The singular points of a painted layout: each candidate that is an
/// electrode node with insulation beside it. Two or more insulating
/// materials in the cells around it make a triple point, one an electrode
/// edge.
pub fn singular_points(case: &Case, grid: &Grid, layout: &Layout) -> Vec<SingularPoint> {
    let d = case.domain;
    let tol = 1e-9 * d.width().max(d.height());
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut out = Vec::new();
    for p in singular_candidates(case) {
        let Some(n) = node_at(grid, p, tol) else { continue };
        let e = layout.node_electrode[n.0];
        if e == NO_ELECTRODE {
            continue;
        }
        let (i, j) = grid.node_ij(n);
        let mut materials: Vec<usize> = Vec::new();
        for (ci, cj) in [(i.wrapping_sub(1), j.wrapping_sub(1)), (i, j.wrapping_sub(1)), (i.wrapping_sub(1), j), (i, j)]
        {
            if ci >= nx - 1 || cj >= ny - 1 {
                continue;
            }
            let r = layout.cell_region[grid.cell(ci, cj).0];
            if r != CONDUCTOR {
                let m = layout.regions[r as usize].material;
                if !materials.contains(&m) {
                    materials.push(m);
                }
            }
        }
        let kind = match materials.len() {
            0 => continue,
            1 => SingularKind::ElectrodeEdge,
            _ => SingularKind::TriplePoint,
        };
        out.push(SingularPoint { at: grid.node_pos(n), kind, electrode: e as usize });
    }
    out
}

/// How many times finer than the ungraded grid the step at a singular
/// point is at most; from there the step grows geometrically. 32 brought
/// the fields 2 mm from a 35 µm strip's edge on a board to within 0.7 % and
/// its capacitance to 0.3 % of the converged values on the default grid
/// (DEVELOPERS.md, Numerics in brief; `tests/suite/singular.rs`).
pub const SINGULAR_GRADING: f64 = 32.0;

/// Largest growth of the node count that grading may cost: where the
/// full grading would exceed it, the grading factor is halved until it
/// fits (to 2 at the least, else no grading).
pub const GRADING_NODE_BUDGET: f64 = 2.0;

/// Fraction of the domain's smaller side over which the step near a
/// singular point grows back to the ungraded step (the grading slope is
/// the largest step over this distance, at most the grid's growth − 1):
/// the near field then refines with the grid, as graded meshes for corner
/// singularities need (Babuška & Kellogg, 1979; common practice).
pub const SINGULAR_ZONE: f64 = 0.05;

/// The focus points (coordinate, step, slope) along one axis: the step at
/// each singular coordinate `c` is the ungraded grid's step there over
/// `factor` (no finer than `min_step`).
pub fn focus_points(axis: &[f64], coords: &[f64], factor: f64, spec: &GridSpec, zone: f64) -> Vec<Focus> {
    let slope = (spec.growth - 1.0).min(spec.max_step / zone);
    coords
        .iter()
        .map(|&c| {
            let k = axis.partition_point(|&x| x < c).clamp(1, axis.len() - 1);
            let mut h = axis[k] - axis[k - 1];
            if k + 1 < axis.len() {
                h = h.min(axis[k + 1] - axis[k]);
            }
            (c, (h / factor).max(spec.min_step), slope)
        })
        .collect()
}
