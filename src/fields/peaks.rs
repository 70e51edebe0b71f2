//! Surface peaks on curved electrodes and the sharp points of the drawing.

use crate::case::{Case, Geometry};
use crate::grid::{CONDUCTOR, Grid, Layout, NO_ELECTRODE, NodeIx};
use crate::shape::dist;

/// Error floor of peaks on curved electrode surfaces: the surface recovery
/// settles about 0.3–0.4 % high under refinement (conducting cylinder and
/// sphere in a uniform field, 16 to 64 cells per radius, domains 80 to
/// 400 radii; `tests/suite/curved.rs`), which differences between grids do not
/// reveal. The self-check never reports less.
pub(super) const SURFACE_FLOOR: f64 = 0.005;

/// Smallest |n·axis| for which a grid line's crossing gives the surface
/// field: further from the normal, the axial component is too small a part
/// of the field to divide by.
const MIN_NORMAL_COMPONENT: f64 = 0.7;

/// The field on curved electrode surfaces: at each crossing of a grid line
/// with the outline, dφ/ds along the line from a quadratic through the
/// outline (at the electrode potential), the free node before it and the
/// node before that (a second-order one-sided difference; linear when that
/// node is missing), divided by the normal's component along the line
/// (the field at a conductor is normal to it). Returns (|E|, point, region).
pub(super) fn surface_fields(grid: &Grid, layout: &Layout, phi: &[f64]) -> Vec<(f64, [f64; 2], usize, u32)> {
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut out = Vec::new();
    for b in &layout.boundary_edges {
        let a = NodeIx(b.free_node as usize);
        let (ia, ja) = grid.node_ij(a);
        let (e, axis) = if b.horizontal { (b.edge as usize % (nx - 1), 0) } else { (b.edge as usize / nx, 1) };
        // direction from the free node towards the electrode: +1 or −1 along the axis
        let own = if axis == 0 { ia } else { ja };
        let dir: isize = if e == own { 1 } else { -1 };
        let coord = if axis == 0 { &grid.x } else { &grid.y };
        let h = (coord[(own as isize + dir) as usize] - coord[own]).abs();
        let s = b.theta * h;
        let n_axis = b.normal[axis].abs();
        if n_axis < MIN_NORMAL_COMPONENT {
            continue;
        }
        // the electrode node beyond the outline holds the electrode's potential
        let beyond = if axis == 0 {
            grid.node((ia as isize + dir) as usize, ja)
        } else {
            grid.node(ia, (ja as isize + dir) as usize)
        };
        let v = phi[beyond.0];
        let len = if axis == 0 { nx } else { ny };
        // free nodes going away from the outline: distance from it and potential
        let node_at = |k: isize| -> Option<(f64, f64)> {
            if k < 0 || k as usize >= len {
                return None;
            }
            let n = if axis == 0 { grid.node(k as usize, ja) } else { grid.node(ia, k as usize) };
            (layout.node_electrode[n.0] == NO_ELECTRODE).then(|| (s + (coord[k as usize] - coord[own]).abs(), phi[n.0]))
        };
        let own_i = own as isize;
        // A node very near the outline amplifies its error by h/s: then fit
        // through the next two nodes instead (both at least h/2 away).
        let pts = if s >= 0.5 * h {
            [node_at(own_i), node_at(own_i - dir)]
        } else {
            [node_at(own_i - dir), node_at(own_i - 2 * dir)]
        };
        let slope = match pts {
            [Some((d1, p1)), Some((d2, p2))] => {
                // quadratic through (0, v), (d1, p1), (d2, p2): derivative at 0
                let (a1, a2) = ((p1 - v) / d1, (p2 - v) / d2);
                (a1 * d2 - a2 * d1) / (d2 - d1)
            }
            [Some((d1, p1)), None] => (p1 - v) / d1,
            _ => (phi[a.0] - v) / s,
        };
        let mut at = grid.node_pos(a);
        at[axis] += dir as f64 * s;
        // the dielectric cell beside the edge
        let (ci, cj) = if axis == 0 { (e, ja) } else { (ia, e) };
        let cells = if axis == 0 { [(ci, cj), (ci, cj.wrapping_sub(1))] } else { [(ci, cj), (ci.wrapping_sub(1), cj)] };
        let region = cells
            .iter()
            .filter(|&&(x, y)| x < nx - 1 && y < ny - 1)
            .map(|&(x, y)| layout.cell_region[grid.cell(x, y).0])
            .find(|&r| r != CONDUCTOR);
        if let Some(r) = region {
            out.push((slope.abs() / n_axis, at, r as usize, layout.node_electrode[beyond.0]));
        }
    }
    out
}

/// A surface field value and where it was taken.
type SurfaceSample = (f64, [f64; 2]);

/// Half-width of the smoothing window along an outline, in local grid steps.
const SMOOTH_HALF_WIDTH_STEPS: f64 = 2.5;
/// Fewest samples a smoothing window needs (else the raw value stands).
const SMOOTH_MIN_SAMPLES: usize = 5;

/// Smooths the surface fields of each electrode (and each region beside
/// it) along its outline: every value is replaced by the least-squares
/// quadratic in arc length through the samples within
/// `SMOOTH_HALF_WIDTH_STEPS` local grid steps of it, evaluated at the
/// sample (a Savitzky–Golay filter on irregular samples: Savitzky & Golay,
/// Anal. Chem. 36, 1627, 1964). In axisymmetric cases the samples are
/// mirrored across the axis first (the field is symmetric about it).
///
/// Why: grid lines cut the outline at every fraction of a step, and the
/// one-sided differences scatter by about half a per cent from crossing to
/// crossing; a quadratic window keeps the smooth peak of the surface field
/// (exact for a quadratic profile) and averages the scatter.
pub(super) fn smooth_surface_fields(
    case: &Case,
    grid: &Grid,
    layout: &Layout,
    raw: Vec<(f64, [f64; 2], usize, u32)>,
) -> Vec<(f64, [f64; 2], usize)> {
    let mut groups: std::collections::BTreeMap<(u32, usize), Vec<SurfaceSample>> = Default::default();
    let mut out = Vec::new();
    for (value, at, region, electrode) in raw {
        if (electrode as usize) < layout.electrodes.len() {
            groups.entry((electrode, region)).or_default().push((value, at));
        } else {
            out.push((value, at, region));
        }
    }
    let axisymmetric = case.geometry == Geometry::Axisymmetric;
    for ((electrode, region), samples) in groups {
        let outline = case.parts[layout.electrodes[electrode as usize].part].shape.outline();
        let perimeter: f64 = (0..outline.len()).map(|k| dist(outline[k], outline[(k + 1) % outline.len()])).sum();
        let mut pool: Vec<(f64, [f64; 2], f64)> =
            samples.iter().map(|&(v, p)| (v, p, arc_position(&outline, p))).collect();
        if axisymmetric {
            let mirrored: Vec<_> = samples
                .iter()
                .filter(|s| s.1[0] > 0.0)
                .map(|&(v, p)| (v, [-p[0], p[1]], arc_position(&outline, [-p[0], p[1]])))
                .collect();
            pool.extend(mirrored);
        }
        for &(value, at) in &samples {
            let (ci, cj) = grid.cell_ij(grid.locate(at));
            let h = (grid.x[ci + 1] - grid.x[ci]).max(grid.y[cj + 1] - grid.y[cj]);
            let reach = SMOOTH_HALF_WIDTH_STEPS * h;
            let t0 = arc_position(&outline, at);
            let window: Vec<(f64, f64)> = pool
                .iter()
                .filter(|q| dist(q.1, at) <= reach)
                .map(|q| {
                    let mut d = q.2 - t0;
                    if d > 0.5 * perimeter {
                        d -= perimeter;
                    } else if d < -0.5 * perimeter {
                        d += perimeter;
                    }
                    (d, q.0)
                })
                .collect();
            let smoothed = if window.len() >= SMOOTH_MIN_SAMPLES { quadratic_at_zero(&window) } else { value };
            out.push((smoothed, at, region));
        }
    }
    out
}

/// Value at 0 of the least-squares quadratic through (t, v) points.
fn quadratic_at_zero(points: &[(f64, f64)]) -> f64 {
    let scale = points.iter().map(|p| p.0.abs()).fold(0.0, f64::max).max(f64::MIN_POSITIVE);
    let mut ata = nalgebra::Matrix3::<f64>::zeros();
    let mut atb = nalgebra::Vector3::<f64>::zeros();
    for &(t, v) in points {
        let u = t / scale;
        let b = nalgebra::Vector3::new(1.0, u, u * u);
        ata += b * b.transpose();
        atb += b * v;
    }
    match ata.cholesky() {
        Some(c) => c.solve(&atb)[0],
        None => points.iter().map(|p| p.1).sum::<f64>() / points.len() as f64,
    }
}

/// Arc length along a closed outline polygon to the point nearest `p`.
fn arc_position(outline: &[[f64; 2]], p: [f64; 2]) -> f64 {
    let mut best = (f64::INFINITY, 0.0);
    let mut run = 0.0;
    for k in 0..outline.len() {
        let (a, b) = (outline[k], outline[(k + 1) % outline.len()]);
        let len = dist(a, b);
        let t = if len > 0.0 {
            (((p[0] - a[0]) * (b[0] - a[0]) + (p[1] - a[1]) * (b[1] - a[1])) / (len * len)).clamp(0.0, 1.0)
        } else {
            0.0
        };
        let q = [a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1])];
        let d = dist(p, q);
        if d < best.0 {
            best = (d, run + t * len);
        }
        run += len;
    }
    best.1
}

/// True when `at` lies within two local grid steps of one of `points`.
pub(super) fn near_any(grid: &Grid, at: [f64; 2], points: &[[f64; 2]]) -> bool {
    let c = grid.locate(at);
    let (i, j) = grid.cell_ij(c);
    let reach = 2.0 * (grid.x[i + 1] - grid.x[i]).max(grid.y[j + 1] - grid.y[j]);
    points.iter().any(|p| (p[0] - at[0]).abs() <= reach && (p[1] - at[1]).abs() <= reach)
}
