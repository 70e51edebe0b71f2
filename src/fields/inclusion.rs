//! Peak fields of curved inclusions (voids, particles, rounded inserts) and
//! of the material around them.
//!
//! Why: next to a curved material interface the nodal fields of the
//! box-integration scheme scatter by a few per cent from node to node (the
//! interface cuts cells at every angle), although the potential and the
//! field averaged over the inclusion converge at second order with the
//! laminate tensor of `grid::paint`. A single node's value is therefore a
//! poor peak. Instead the potential inside an inclusion is fitted by least
//! squares with a quadratic, φ ≈ c0 + c1·x + c2·y + c3·x² + c4·x·y + c5·y²,
//! and its gradient gives the field inside and on the outline. The field
//! just outside follows from the interface conditions of electrostatics:
//! tangential E continuous, normal D = ε·E continuous, so
//! E_out = E_t + (ε_in/ε_out)·E_n (e.g. Jackson, Classical
//! Electrodynamics, 3rd ed. 1999, §4.4).
//!
//! The fit is used only where it represents the potential well (relative
//! residual below `FIT_TOLERANCE`) and the inclusion touches no electrode;
//! elsewhere the nodal recovery of `fields` stands.

use crate::case::Case;
use crate::grid::{CONDUCTOR, Grid, Layout, NO_ELECTRODE};
use nalgebra::{SMatrix, SVector};

/// Largest RMS misfit of the quadratic, relative to the potential span over
/// the inclusion, for the fit to stand in for the nodal peaks.
const FIT_TOLERANCE: f64 = 2e-2;
/// Fewest nodes an inclusion needs for a fit.
const MIN_NODES: usize = 12;
/// Cells around an inclusion whose nodal values the enclosing region does
/// not use for its peak (replaced by the interface values).
pub(super) const BAND_CELLS: usize = 2;

/// A quadratic potential fitted around `origin`, coordinates scaled by `scale`.
#[derive(Debug, Clone)]
pub(super) struct Quadratic {
    c: SVector<f64, 6>,
    origin: [f64; 2],
    scale: f64,
}

impl Quadratic {
    /// E = −∇φ at `p`.
    pub(super) fn field(&self, p: [f64; 2]) -> [f64; 2] {
        let (u, v) = ((p[0] - self.origin[0]) / self.scale, (p[1] - self.origin[1]) / self.scale);
        let c = &self.c;
        [-(c[1] + 2.0 * c[3] * u + c[4] * v) / self.scale, -(c[2] + c[4] * u + 2.0 * c[5] * v) / self.scale]
    }
}

fn basis(u: f64, v: f64, terms: usize) -> SVector<f64, 6> {
    let all = [1.0, u, v, u * u, u * v, v * v];
    SVector::<f64, 6>::from_fn(|k, _| if k < terms { all[k] } else { 0.0 })
}

/// The quadratic terms must explain at least this share of the linear
/// fit's mean square misfit to be kept; otherwise the field is uniform
/// within the discretisation noise and the linear fit (fewer parameters,
/// less noise) is used.
const QUADRATIC_GAIN: f64 = 0.25;

/// A fitted inclusion potential.
#[derive(Debug, Clone)]
pub(super) struct Fitted {
    /// The polynomial (linear or quadratic).
    pub(super) potential: Quadratic,
    /// RMS misfit relative to the potential span.
    pub(super) misfit: f64,
    /// Relative field uncertainty the fit leaves: the field variation the
    /// next order could still hold (see `SPREAD_PER_MISFIT`).
    pub(super) spread: f64,
}

/// Relative field change per relative potential misfit of an unmodelled
/// term: a term q·u² over u ∈ [−1, 1] leaves an RMS misfit of about 0.3·q
/// and changes the field by about 4·q relative to the span, so ≈ 4/0.3.
const SPREAD_PER_MISFIT: f64 = 13.0;

/// Least-squares linear and quadratic fits through (position, potential)
/// samples; the quadratic is kept only where its extra terms explain most
/// of the linear fit's misfit (`QUADRATIC_GAIN`). `None` when too few
/// samples or the normal equations are singular (samples on a line).
pub(super) fn fit(samples: &[([f64; 2], f64)]) -> Option<Fitted> {
    let (linear, l) = fit_terms(samples, 3)?;
    let (quadratic, q) = fit_terms(samples, 6)?;
    Some(if q * q < QUADRATIC_GAIN * l * l {
        Fitted { potential: quadratic, misfit: q, spread: SPREAD_PER_MISFIT * q }
    } else {
        Fitted { potential: linear, misfit: l, spread: SPREAD_PER_MISFIT * (l * l - q * q).max(0.0).sqrt() }
    })
}

/// Least-squares fit with the first `terms` basis functions (3: linear, 6: quadratic).
fn fit_terms(samples: &[([f64; 2], f64)], terms: usize) -> Option<(Quadratic, f64)> {
    if samples.len() < MIN_NODES {
        return None;
    }
    let n = samples.len() as f64;
    let origin = [samples.iter().map(|s| s.0[0]).sum::<f64>() / n, samples.iter().map(|s| s.0[1]).sum::<f64>() / n];
    let scale = samples.iter().map(|s| (s.0[0] - origin[0]).hypot(s.0[1] - origin[1])).fold(0.0, f64::max);
    if scale <= 0.0 {
        return None;
    }
    let mut ata = SMatrix::<f64, 6, 6>::zeros();
    let mut atb = SVector::<f64, 6>::zeros();
    for (p, phi) in samples {
        let b = basis((p[0] - origin[0]) / scale, (p[1] - origin[1]) / scale, terms);
        ata += b * b.transpose();
        atb += b * *phi;
    }
    // Unused terms get an identity row so the system stays regular.
    for k in terms..6 {
        ata[(k, k)] = 1.0;
    }
    let c = ata.cholesky()?.solve(&atb);
    let q = Quadratic { c, origin, scale };
    let (lo, hi) = samples.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), s| (a.min(s.1), b.max(s.1)));
    let misfit = samples
        .iter()
        .map(|(p, phi)| {
            let r = basis((p[0] - origin[0]) / scale, (p[1] - origin[1]) / scale, terms).dot(&q.c) - phi;
            r * r
        })
        .sum::<f64>()
        / n;
    let span = hi - lo;
    let relative = if span > 0.0 { misfit.sqrt() / span } else { 0.0 };
    Some((q, relative))
}

/// A peak candidate: (|E| in V/m, position, region, relative error floor).
pub(super) type Candidate = (f64, [f64; 2], usize, f64);

/// Error model of the interface scheme for fitted inclusions, per unit of
/// (κ − 1)·√(h/a), with κ the permittivity ratio across the outline (≥ 1),
/// h the largest grid step over the inclusion and a its half-width.
/// Measured against the closed forms of circular and spherical inclusions
/// in a uniform field (`tests/suite/curved.rs`, κ from 1.4 to 27, 8 to 32 cells
/// per radius; largest ratios seen 0.27 % for inclusions of lower
/// permittivity than their surroundings and 0.88 % for higher), with
/// margin.
const LOWER_PERMITTIVITY_ERROR: f64 = 0.004;
const HIGHER_PERMITTIVITY_ERROR: f64 = 0.013;

/// The fitted inclusions of a layout: for each region a fit where one
/// stands, and the peak candidates it gives (its own, and the interface
/// values of the regions around it).
/// `permittivity` is the relative permittivity of each region.
pub(super) fn fitted(
    case: &Case,
    grid: &Grid,
    layout: &Layout,
    permittivity: &[f64],
    phi: &[f64],
) -> (Vec<bool>, Vec<Candidate>) {
    let (nx, ny) = (grid.nx(), grid.ny());
    let nreg = layout.regions.len();
    let mut samples: Vec<Vec<([f64; 2], f64)>> = vec![Vec::new(); nreg];
    let mut touches_electrode = vec![false; nreg];
    for j in 0..ny {
        for i in 0..nx {
            let n = grid.node(i, j);
            let mut region = None;
            let mut single = true;
            for (ci, cj) in
                [(i.wrapping_sub(1), j.wrapping_sub(1)), (i, j.wrapping_sub(1)), (i.wrapping_sub(1), j), (i, j)]
            {
                if ci >= nx - 1 || cj >= ny - 1 {
                    continue;
                }
                let r = layout.cell_region[grid.cell(ci, cj).0];
                if r == CONDUCTOR {
                    single = false;
                    continue;
                }
                if layout.node_electrode[n.0] != NO_ELECTRODE {
                    touches_electrode[r as usize] = true;
                }
                match region {
                    None => region = Some(r),
                    Some(q) if q != r => single = false,
                    _ => {}
                }
            }
            if let (Some(r), true) = (region, single && layout.node_electrode[n.0] == NO_ELECTRODE) {
                samples[r as usize].push((grid.node_pos(n), phi[n.0]));
            }
        }
    }
    let mut is_fitted = vec![false; nreg];
    let mut out = Vec::new();
    for (r, region) in layout.regions.iter().enumerate() {
        let Some(pi) = region.part else { continue };
        let shape = &case.parts[pi].shape;
        if matches!(shape, crate::shape::Shape::Rect(_)) || touches_electrode[r] {
            continue;
        }
        let Some(fit) = fit(&samples[r]) else { continue };
        if fit.misfit > FIT_TOLERANCE {
            continue;
        }
        let q = &fit.potential;
        is_fitted[r] = true;
        let eps_in = permittivity[r];
        let d = case.domain;
        // Interface values first: they also give the contrast κ for the floor.
        let mut inside = Vec::new();
        let mut outside_values = Vec::new();
        let mut kappa: f64 = 1.0;
        let mut lower = true;
        for p in shape.outline() {
            if !d.contains_closed(p, 0.0) {
                continue;
            }
            let e_in = q.field(p);
            inside.push((e_in[0].hypot(e_in[1]), p));
            // Outward normal and the region just outside.
            let mut n = shape.normal_near(p);
            let c = grid.locate(p);
            let (ci, cj) = grid.cell_ij(c);
            let step = 0.25 * (grid.x[ci + 1] - grid.x[ci]).min(grid.y[cj + 1] - grid.y[cj]);
            if shape.contains_closed([p[0] + step * n[0], p[1] + step * n[1]], 0.0) {
                n = [-n[0], -n[1]];
            }
            let outside = [p[0] + step * n[0], p[1] + step * n[1]];
            if !d.contains_closed(outside, 0.0) {
                continue;
            }
            let ro = layout.cell_region[grid.locate(outside).0];
            if ro == CONDUCTOR || ro as usize == r {
                continue;
            }
            let eps_out = permittivity[ro as usize];
            if eps_in.max(eps_out) / eps_in.min(eps_out) > kappa {
                kappa = eps_in.max(eps_out) / eps_in.min(eps_out);
                lower = eps_in < eps_out;
            }
            let en = e_in[0] * n[0] + e_in[1] * n[1];
            let e_out =
                [e_in[0] + (eps_in / eps_out - 1.0) * en * n[0], e_in[1] + (eps_in / eps_out - 1.0) * en * n[1]];
            outside_values.push((e_out[0].hypot(e_out[1]), p, ro as usize));
        }
        let b = shape.bounds();
        let half_width = 0.5 * b.width().min(b.height());
        let xs = Grid::line_range(&grid.x, b.x0, b.x1, 0.0);
        let ys = Grid::line_range(&grid.y, b.y0, b.y1, 0.0);
        let steps = |v: &[f64], k: std::ops::Range<usize>| {
            let k = k.start.saturating_sub(1)..(k.end + 1).min(v.len());
            v[k].windows(2).map(|w| w[1] - w[0]).fold(0.0, f64::max)
        };
        let h = steps(&grid.x, xs).max(steps(&grid.y, ys));
        let per = if lower { LOWER_PERMITTIVITY_ERROR } else { HIGHER_PERMITTIVITY_ERROR };
        let floor = per * (kappa - 1.0) * (h / half_width).sqrt() + fit.spread;
        out.extend(inside.into_iter().map(|(e, p)| (e, p, r, floor)));
        out.extend(outside_values.into_iter().map(|(e, p, ro)| (e, p, ro, floor)));
        for (p, _) in &samples[r] {
            let e = q.field(*p);
            out.push((e[0].hypot(e[1]), *p, r, floor));
        }
    }
    (is_fitted, out)
}
