//! Stage 5: from nodal potentials to fields, energies, charges and the
//! statistics of every region.
//!
//! Edge quantities. On each horizontal edge the flux-like value
//! `G = r·E_r` (axisymmetric) or `G = E_x` (planar) is taken from the same
//! form the assembly used (`assemble::radial_weight`): `G = Δφ/ln(r2/r1)`
//! on radial edges away from the axis (constant along a coaxial layer, so
//! coaxial stacks come out exact), `G = r_mid·Δφ/h` in the first cells off
//! the axis, `G = Δφ/h` in planar cases. Vertical
//! edges carry `E_y = Δφ/h`. Each value is second-order accurate at its edge
//! midpoint.
//!
//! Surface peaks. The field of a region at a node is recovered from the
//! edges of that region only: interpolated between the two edges beside the
//! node when both lie in the region, otherwise extrapolated linearly from
//! the two nearest edges inside it (a second-order one-sided difference).
//! Material interfaces and electrode surfaces are nodes, so the peak field
//! of a part is evaluated on its real surface. A region's peak is the
//! largest |E| over its nodes.
//!
//! Energies: `w = ½·ε0·εr·E²` and the polarisation share
//! `w_pol = ½·ε0·(εr − 1)·E²` per unit volume. The stored energy reported is
//! the discrete one, `½·Σ G·(Δφ)² = ½·Σ_k Q_k·V_k`; the energy integrated
//! from cell-centre fields is kept for the capacitance cross-check.
//! Charges are the Gauss flux out of each electrode's nodes.

mod electrodes;
mod inclusion;
mod peaks;
mod sampler;
mod singular;
mod surfaces;
pub mod trace;

use electrodes::gap;
use peaks::{SURFACE_FLOOR, near_any, smooth_surface_fields, surface_fields};
use sampler::probe;
pub use sampler::{Inside, Sample, Sampler, line_field};

pub use singular::{RingPeak, SINGULAR_DISTANCES, SingularField, radius_to_allowable, singular_fields, wedge_exponent};
pub(crate) use singular::{drawn_wedges, ring_max};
pub use surfaces::SurfaceField;

use crate::assemble::{Stencil, is_log_form, radial_weight};
use crate::case::{Case, ElectrodeKind, Geometry, Normalisation};
use crate::grid::{CONDUCTOR, CellIx, Grid, Layout, NO_ELECTRODE, NodeIx};
use std::f64::consts::PI;

/// Charges below this fraction of the largest electrode charge are reported
/// as zero (solver round-off, well above the 1e-10 solve tolerance's effect).
const CHARGE_RESOLUTION: f64 = 1e-8;

/// Marks a cut cell in peak recovery.
const CUT: u32 = u32::MAX - 1;
/// Whole cells a region needs before its cut cells are left out of its peak.
const MIN_WHOLE_CELLS: usize = 4;

/// Relative difference under which two peak candidates count as equal
/// (well above what the solve tolerance leaves in a uniform field).
const TIE: f64 = 1e-6;

/// Field statistics of one dielectric region (SI).
#[derive(Debug, Clone, PartialEq)]
pub struct RegionField {
    /// Number of cells the region owns.
    pub cells: usize,
    /// Largest |E| in V/m.
    pub e_max: f64,
    /// Where it occurs (m).
    pub e_max_at: [f64; 2],
    /// Volume-weighted (area-weighted when planar) mean |E| in V/m.
    pub e_mean: f64,
    /// The peak sits at a singular point (`grid::singular_points`: a sharp
    /// electrode edge or corner, a foil end, a dielectric triple point;
    /// within the inner stated distance or two cells), where the drawn
    /// geometry has no finite field.
    pub at_sharp_edge: bool,
    /// The peak that judges the part: `e_max` unless that sits at a singular
    /// point, else the larger of the part's field at the inner stated
    /// distance `SINGULAR_DISTANCES[0]` from each singular point it touches
    /// and its peak farther from every one (than that distance or two
    /// cells, whichever is more), V/m.
    pub e_judged: f64,
    /// Where it occurs (m).
    pub e_judged_at: [f64; 2],
    /// Smallest relative error the peak can be claimed to (from the error
    /// model of fitted inclusions; 0 for nodal peaks). The mesh self-check
    /// never reports less.
    pub e_max_floor: f64,
    /// ∫|E|² dV over the region (V²·m, or V² per metre of depth or axial
    /// length as the case normalises): the loss integral.
    pub e_squared_volume: f64,
}

/// The dielectric loss of one region (SI).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RegionLoss {
    /// Largest loss density, W/m³ (at the region's peak field).
    pub density_max: f64,
    /// Loss of the region: W, or W per metre of depth or of axial length as
    /// the case normalises.
    pub total: f64,
}

/// The dielectric (and conduction) losses of an AC field: the density
/// p = ω·ε0·ε″·|E|² with rms values, ½·ω·ε0·ε″·|E|² with peak values
/// (ε″ the effective loss factor ε″ + σ/(ωε0); the dielectric-heating law,
/// e.g. von Hippel, *Dielectrics and Waves*, 1954), its largest value per
/// region (at the peak field: ε″ is uniform in a region) and its integral.
pub fn losses(fields: &Fields, ac: &crate::coefficients::AcLosses, values: crate::units::Values) -> Losses {
    let regions: Vec<RegionLoss> = fields
        .regions
        .iter()
        .zip(loss_coefficients(ac, values))
        .map(|(r, k)| RegionLoss { density_max: k * r.e_max * r.e_max, total: k * r.e_squared_volume })
        .collect();
    Losses { total: regions.iter().map(|r| r.total).sum(), regions }
}

/// Each region's loss density per squared field, W/m³ per (V/m)²:
/// ω·ε0·ε″ with rms values, ½·ω·ε0·ε″ with peak values.
pub fn loss_coefficients(ac: &crate::coefficients::AcLosses, values: crate::units::Values) -> Vec<f64> {
    let per_rms = match values {
        crate::units::Values::Rms => 1.0,
        crate::units::Values::Peak => 0.5,
    };
    ac.loss_factor.iter().map(|e2| per_rms * ac.omega * crate::units::EPSILON_0 * e2).collect()
}

/// The losses of every region and of the case.
#[derive(Debug, Clone, PartialEq)]
pub struct Losses {
    /// Per region (layout order).
    pub regions: Vec<RegionLoss>,
    /// Sum over the regions (W, W/m).
    pub total: f64,
}

/// The quadrature part of an AC solution with losses and the complex
/// stencil it was solved with.
#[derive(Debug, Clone, Copy)]
pub struct Quadrature<'a> {
    /// φ″ at every node, V.
    pub phi: &'a [f64],
    /// The complex stencil of the solve.
    pub stencil: &'a Stencil<crate::coefficients::Complex64>,
}

/// One electrode after the solve (SI, normalised as the case says).
#[derive(Debug, Clone, PartialEq)]
pub struct ElectrodeField {
    /// Potential in V (solved for floating electrodes).
    pub potential: f64,
    /// Charge in C, C per metre of depth, or C per metre of axial length.
    pub charge: f64,
}

/// A probe's values.
#[derive(Debug, Clone, PartialEq)]
pub struct ProbeField {
    /// Potential in V.
    pub potential: f64,
    /// |E| in V/m.
    pub e: f64,
    /// Name of the part the probe lies in.
    pub part: String,
}

/// The field along one sampling line of the case.
#[derive(Debug, Clone, PartialEq)]
pub struct LineField {
    /// Samples in order from the start.
    pub samples: Vec<LineSample>,
    /// Index of the sample with the largest |E| outside electrodes (the
    /// first of equal ones within rounding), if any sample is outside.
    pub peak: Option<usize>,
}

/// One sample of a line.
#[derive(Debug, Clone, PartialEq)]
pub struct LineSample {
    /// Distance from the line's start in m.
    pub distance: f64,
    /// Position in m.
    pub at: [f64; 2],
    /// Potential in V.
    pub potential: f64,
    /// Field components in V/m.
    pub e: [f64; 2],
    /// Name of the part the sample lies in.
    pub part: String,
    /// The sample lies inside an electrode.
    pub in_electrode: bool,
}

/// Shortest distance between electrodes at different fixed potentials.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Gap {
    /// Distance in m.
    pub distance: f64,
    /// Largest difference between fixed potentials in V.
    pub largest_difference: f64,
}

/// Everything the assessment needs from the solved potential.
#[derive(Debug, Clone, PartialEq)]
pub struct Fields {
    /// Per region of the layout (same order).
    pub regions: Vec<RegionField>,
    /// Per electrode of the layout (same order).
    pub electrodes: Vec<ElectrodeField>,
    /// Stored energy of the discrete solution (J, J/m), normalised.
    pub energy: f64,
    /// Energy integrated from cell-centre fields (J, J/m), normalised.
    pub energy_from_cells: f64,
    /// Per probe of the case (same order).
    pub probes: Vec<ProbeField>,
    /// Gap between electrodes at different potentials, if there are two.
    pub gap: Option<Gap>,
    /// Per sampling line of the case (same order).
    pub lines: Vec<LineField>,
    /// Solid–fluid surfaces and their largest tangential field.
    pub surfaces: Vec<SurfaceField>,
    /// The singular points of the geometry and their field.
    pub singular: Vec<SingularField>,
}

impl Fields {
    /// The first result that is not a finite number, named (`None` when
    /// all are finite). A solve that converged gives finite fields; this is
    /// the last guard against a verdict from numbers that mean nothing.
    pub fn first_non_finite(&self) -> Option<String> {
        let bad = |v: f64| !v.is_finite();
        // an empty region, or one without a peak, has no location (NaN)
        for (k, r) in self.regions.iter().enumerate().filter(|(_, r)| r.cells > 0) {
            if bad(r.e_max) || bad(r.e_mean) || (r.e_max > 0.0 && r.e_max_at.iter().any(|&v| bad(v))) {
                return Some(format!("the field of region {k}"));
            }
        }
        if let Some(k) = self.electrodes.iter().position(|e| bad(e.potential) || bad(e.charge)) {
            return Some(format!("the potential or charge of electrode {k}"));
        }
        if bad(self.energy) || bad(self.energy_from_cells) {
            return Some("the stored energy".into());
        }
        if let Some(k) = self.probes.iter().position(|p| bad(p.potential) || bad(p.e)) {
            return Some(format!("probe {k}"));
        }
        if let Some(s) = self.surfaces.iter().find(|s| !s.e_t_max.is_finite()) {
            return Some(format!("the tangential field between regions {} and {}", s.regions[0], s.regions[1]));
        }
        if let Some(k) =
            self.lines.iter().position(|l| l.samples.iter().any(|s| bad(s.potential) || s.e.iter().any(|&v| bad(v))))
        {
            return Some(format!("line {k}"));
        }
        None
    }
}

/// Edge values of a nodal potential (see the module docs).
#[derive(Debug, Clone)]
struct EdgeValues {
    gx: Vec<f64>,
    gy: Vec<f64>,
}

fn edge_values(grid: &Grid, geometry: Geometry, phi: &[f64]) -> EdgeValues {
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut gx = vec![0.0; (nx - 1) * ny];
    let mut gy = vec![0.0; nx * (ny - 1)];
    for j in 0..ny {
        for i in 0..nx - 1 {
            let d = phi[grid.node(i, j).0] - phi[grid.node(i + 1, j).0];
            let (x0, x1) = (grid.x[i], grid.x[i + 1]);
            gx[j * (nx - 1) + i] = match geometry {
                Geometry::Planar => d / (x1 - x0),
                Geometry::Axisymmetric => d * radial_weight(x0, x1),
            };
        }
    }
    for j in 0..ny - 1 {
        for i in 0..nx {
            gy[j * nx + i] = (phi[grid.node(i, j).0] - phi[grid.node(i, j + 1).0]) / (grid.y[j + 1] - grid.y[j]);
        }
    }
    EdgeValues { gx, gy }
}

/// Edge values with the drop across a curved electrode outline taken over
/// θ·h, where the outline really lies.
fn boundary_corrected_edges(grid: &Grid, layout: &Layout, geo: Geometry, phi: &[f64]) -> EdgeValues {
    let mut ev = edge_values(grid, geo, phi);
    for b in &layout.boundary_edges {
        let v = if b.horizontal { &mut ev.gx[b.edge as usize] } else { &mut ev.gy[b.edge as usize] };
        *v /= b.theta;
    }
    ev
}

/// Radial weight: E_x = G / weight(x).
fn weight(geometry: Geometry, x: f64) -> Option<f64> {
    match geometry {
        Geometry::Planar => Some(1.0),
        Geometry::Axisymmetric if x > 0.0 => Some(x),
        Geometry::Axisymmetric => None, // on the axis E_r = 0 by symmetry
    }
}

/// Linear inter- or extrapolation through (a, fa), (b, fb) at t.
fn line(a: f64, fa: f64, b: f64, fb: f64, t: f64) -> f64 {
    fa + (fb - fa) * (t - a) / (b - a)
}

/// Recovers one field component at coordinate `t` of a node from the edges
/// along that axis. `coord` are the node coordinates along the axis, `k`
/// the node's index on it, and `value(e)` / `inside(e)` give edge e's value
/// (e runs over the axis' intervals) and whether it belongs to the region.
fn recover(coord: &[f64], k: usize, value: impl Fn(usize) -> f64, inside: impl Fn(usize) -> bool) -> f64 {
    let mid = |e: usize| 0.5 * (coord[e] + coord[e + 1]);
    let t = coord[k];
    let left = (k > 0 && inside(k - 1)).then(|| k - 1);
    let right = (k + 1 < coord.len() && inside(k)).then_some(k);
    match (left, right) {
        (Some(l), Some(r)) => line(mid(l), value(l), mid(r), value(r), t),
        (Some(l), None) if l > 0 && inside(l - 1) => line(mid(l), value(l), mid(l - 1), value(l - 1), t),
        (None, Some(r)) if r + 2 < coord.len() && inside(r + 1) => line(mid(r), value(r), mid(r + 1), value(r + 1), t),
        (Some(e), _) | (_, Some(e)) => value(e),
        (None, None) => 0.0,
    }
}

/// Volume of a cell (area when planar, per metre of depth).
pub(crate) fn cell_volume(grid: &Grid, geometry: Geometry, c: CellIx) -> f64 {
    let (i, j) = grid.cell_ij(c);
    let (x0, x1, hy) = (grid.x[i], grid.x[i + 1], grid.y[j + 1] - grid.y[j]);
    match geometry {
        Geometry::Planar => (x1 - x0) * hy,
        Geometry::Axisymmetric => PI * (x1 * x1 - x0 * x0) * hy,
    }
}

/// Scale applied to extensive results (charge, energy).
pub fn extensive_scale(n: Normalisation) -> f64 {
    match n {
        Normalisation::PerMetreAxial { length_m } => 1.0 / length_m,
        Normalisation::PerMetreDepth | Normalisation::Whole => 1.0,
    }
}

/// Computes every field result from the nodal potential `phi`.
/// `permittivity` is the relative permittivity of each region at the
/// evaluation's state (from the coefficient stage).
/// With `quadrature` (an AC solution with losses: φ = φ′ + jφ″) every
/// magnitude is the phasor magnitude √(|E′|² + |E″|²), energies sum both
/// parts, and charges are the in-phase part of the complex flux (Re Q, so
/// that ½·Σ V·Q is still the stored energy). Fitted inclusions are not
/// used for phasors (their interface values need the complex contrast);
/// their nodal peaks stand.
pub fn compute(
    case: &Case,
    grid: &Grid,
    layout: &Layout,
    stencil: &Stencil,
    permittivity: &[f64],
    phi: &[f64],
    quadrature: Option<Quadrature>,
) -> Fields {
    let geo = case.geometry;
    let ev = boundary_corrected_edges(grid, layout, geo, phi);
    let evq = quadrature.map(|q| boundary_corrected_edges(grid, layout, geo, q.phi));
    let (nx, ny) = (grid.nx(), grid.ny());
    // Peaks are recovered from cells a single material fills: a cell cut by
    // a curved interface carries a blend of both sides' fields. Regions with
    // too few whole cells fall back to using their cut cells too.
    let mut cut = vec![false; grid.cells()];
    for c in &layout.cut_cells {
        cut[c.cell as usize] = true;
    }
    // Fitted inclusions replace their own nodal peaks, and those of the
    // cells around them, by fit and interface values (see `inclusion`).
    let (fitted, fitted_peaks) = match quadrature {
        None => inclusion::fitted(case, grid, layout, permittivity, phi),
        Some(_) => (vec![false; layout.regions.len()], Vec::new()),
    };
    let mut near_inclusion = vec![false; grid.cells()];
    let band = inclusion::BAND_CELLS as isize;
    for (c, &r) in layout.cell_region.iter().enumerate() {
        if r == CONDUCTOR || !fitted[r as usize] {
            continue;
        }
        let (ci, cj) = grid.cell_ij(CellIx(c));
        for dj in -band..=band {
            for di in -band..=band {
                let (a, b) = (ci as isize + di, cj as isize + dj);
                if a >= 0 && b >= 0 && (a as usize) < nx - 1 && (b as usize) < ny - 1 {
                    near_inclusion[grid.cell(a as usize, b as usize).0] = true;
                }
            }
        }
    }
    let mut whole = vec![0usize; layout.regions.len()];
    for (c, &r) in layout.cell_region.iter().enumerate() {
        if r != CONDUCTOR && !cut[c] {
            whole[r as usize] += 1;
        }
    }
    let peak_region_of = |i: usize, j: usize| {
        let c = grid.cell(i, j).0;
        let r = layout.cell_region[c];
        if r != CONDUCTOR && (fitted[r as usize] || near_inclusion[c]) {
            return CUT;
        }
        if r != CONDUCTOR && cut[c] && whole[r as usize] >= MIN_WHOLE_CELLS { CUT } else { r }
    };
    let eps: Vec<f64> = permittivity.iter().map(|e| crate::units::EPSILON_0 * e).collect();

    let nreg = layout.regions.len();
    let mut cells = vec![0usize; nreg];
    let mut vol = vec![0.0; nreg];
    let mut e_vol = vec![0.0; nreg];
    let mut e2_vol = vec![0.0; nreg];
    let mut energy_cells = 0.0;
    for j in 0..ny - 1 {
        for i in 0..nx - 1 {
            let c = grid.cell(i, j);
            let r = layout.cell_region[c.0];
            if r == CONDUCTOR {
                continue;
            }
            let r = r as usize;
            let (x0, x1, hy) = (grid.x[i], grid.x[i + 1], grid.y[j + 1] - grid.y[j]);
            let xc = 0.5 * (x0 + x1);
            let v = cell_volume(grid, geo, c);
            // (|E|², ∫|E|² dV) of one part of the solution in this cell
            let part = |ev: &EdgeValues| {
                let g = 0.5 * (ev.gx[j * (nx - 1) + i] + ev.gx[(j + 1) * (nx - 1) + i]);
                let ey = 0.5 * (ev.gy[j * nx + i] + ev.gy[j * nx + i + 1]);
                let ex = g / weight(geo, xc).unwrap_or(1.0);
                // ∫E_r² dV in closed form for the 1/r profile of a log-form cell
                let int_ex2 = match geo {
                    Geometry::Axisymmetric if is_log_form(x0) => 2.0 * PI * hy * g * g / radial_weight(x0, x1),
                    _ => ex * ex * v,
                };
                (ex * ex + ey * ey, int_ex2 + ey * ey * v)
            };
            let (mut e2, mut int_e2) = part(&ev);
            if let Some(q) = &evq {
                let (a, b) = part(q);
                e2 += a;
                int_e2 += b;
            }
            let e = e2.sqrt();
            cells[r] += 1;
            vol[r] += v;
            e_vol[r] += e * v;
            e2_vol[r] += int_e2;
            energy_cells += 0.5 * eps[r] * int_e2;
        }
    }

    let mut e_max = vec![0.0f64; nreg];
    let mut e_max_at = vec![[f64::NAN; 2]; nreg];
    // the same peaks farther than the inner stated distance from every
    // singular point: what a part's margin rests on
    let points = crate::grid::singular_points(case, grid, layout);
    // (nodes within two cells of a point carry the discretisation error of
    // the singularity: the field at the inner distance stands for them)
    let exclusion: Vec<f64> = points
        .iter()
        .map(|p| {
            let (i, j) = grid.cell_ij(grid.locate(p.at));
            SINGULAR_DISTANCES[0].max(2.0 * (grid.x[i + 1] - grid.x[i]).max(grid.y[j + 1] - grid.y[j]))
        })
        .collect();
    let far = |at: [f64; 2]| points.iter().zip(&exclusion).all(|(p, x)| (p.at[0] - at[0]).hypot(p.at[1] - at[1]) >= *x);
    let mut e_judged = vec![0.0f64; nreg];
    let mut e_judged_at = vec![[f64::NAN; 2]; nreg];
    let mut seen = [u32::MAX; 4];
    // Nodes of curved electrodes are staircase points inside the outline;
    // their surface field comes from `surface_fields` instead.
    // Free nodes right beside such an outline take their field across an
    // edge shortened to θ·h, which scatters: they are left to it as well.
    let tol = 1e-9 * case.domain.width().max(case.domain.height());
    let curved_at = |e: u32, at: [f64; 2]| case.parts[layout.electrodes[e as usize].part].shape.curved_at(at, tol);
    let mut beside_outline = vec![false; grid.nodes()];
    for b in &layout.boundary_edges {
        beside_outline[b.free_node as usize] = true;
    }
    for j in 0..ny {
        for i in 0..nx {
            let own = layout.node_electrode[grid.node(i, j).0];
            if (own != NO_ELECTRODE && curved_at(own, [grid.x[i], grid.y[j]])) || beside_outline[grid.node(i, j).0] {
                continue;
            }
            seen.fill(u32::MAX);
            let touching =
                [(i.wrapping_sub(1), j.wrapping_sub(1)), (i, j.wrapping_sub(1)), (i.wrapping_sub(1), j), (i, j)];
            for (s, &(ci, cj)) in touching.iter().enumerate() {
                if ci >= nx - 1 || cj >= ny - 1 {
                    continue;
                }
                let r = peak_region_of(ci, cj);
                if r == CONDUCTOR || r == CUT || seen.contains(&r) {
                    continue;
                }
                seen[s] = r;
                // horizontal edge e on row j touches cells (e, j−1) and (e, j)
                let in_h =
                    |e: usize| (j > 0 && peak_region_of(e, j - 1) == r) || (j + 1 < ny && peak_region_of(e, j) == r);
                let in_v =
                    |e: usize| (i > 0 && peak_region_of(i - 1, e) == r) || (i + 1 < nx && peak_region_of(i, e) == r);
                let squared = |ev: &EdgeValues| {
                    let gx = recover(&grid.x, i, |e| ev.gx[j * (nx - 1) + e], in_h);
                    let ey = recover(&grid.y, j, |e| ev.gy[e * nx + i], in_v);
                    let ex = weight(geo, grid.x[i]).map_or(0.0, |w| gx / w);
                    ex * ex + ey * ey
                };
                let e = (squared(&ev) + evq.as_ref().map_or(0.0, squared)).sqrt();
                let r = r as usize;
                // ties (within rounding) keep the first node in grid order, so
                // uniform fields report a stable location
                let at = [grid.x[i], grid.y[j]];
                if e > e_max[r] * (1.0 + TIE) || e_max_at[r][0].is_nan() {
                    e_max[r] = e_max[r].max(e);
                    e_max_at[r] = at;
                }
                if far(at) && (e > e_judged[r] * (1.0 + TIE) || e_judged_at[r][0].is_nan()) {
                    e_judged[r] = e_judged[r].max(e);
                    e_judged_at[r] = at;
                }
            }
        }
    }

    // Surface field of curved electrodes where each grid line meets them,
    // and the fitted inclusions' values.
    let mut floor = vec![0.0f64; nreg];
    let mut raw = surface_fields(grid, layout, phi);
    if let Some(q) = quadrature {
        // the same crossings in the same order: combine the two parts
        for (r, q) in raw.iter_mut().zip(surface_fields(grid, layout, q.phi)) {
            r.0 = r.0.hypot(q.0);
        }
    }
    let surface =
        smooth_surface_fields(case, grid, layout, raw).into_iter().map(|(v, at, r)| (v, at, r, SURFACE_FLOOR));
    for (value, at, r, f) in surface.chain(fitted_peaks) {
        if value > e_max[r] * (1.0 + TIE) || e_max_at[r][0].is_nan() {
            e_max[r] = e_max[r].max(value);
            e_max_at[r] = at;
            floor[r] = f;
        }
        if far(at) && (value > e_judged[r] * (1.0 + TIE) || e_judged_at[r][0].is_nan()) {
            e_judged[r] = e_judged[r].max(value);
            e_judged_at[r] = at;
        }
    }

    let sharp: Vec<[f64; 2]> = points.iter().map(|p| p.at).collect();
    let regions: Vec<RegionField> = (0..nreg)
        .map(|r| {
            let at_sharp_edge = e_max[r] > 0.0 && (!far(e_max_at[r]) || near_any(grid, e_max_at[r], &sharp));
            // a region with every peak candidate near a singular point is
            // judged on its peak (conservative)
            let (judged, judged_at) = if at_sharp_edge && !e_judged_at[r][0].is_nan() {
                (e_judged[r], e_judged_at[r])
            } else {
                (e_max[r], e_max_at[r])
            };
            RegionField {
                cells: cells[r],
                e_max: e_max[r],
                e_max_at: e_max_at[r],
                e_judged: judged,
                e_judged_at: judged_at,
                e_mean: if vol[r] > 0.0 { e_vol[r] / vol[r] } else { 0.0 },
                at_sharp_edge,
                e_max_floor: floor[r],
                e_squared_volume: extensive_scale(case.normalisation) * e2_vol[r],
            }
        })
        .collect();

    let scale = extensive_scale(case.normalisation);
    let mut members: Vec<Vec<NodeIx>> = vec![Vec::new(); layout.electrodes.len()];
    for (n, &e) in layout.node_electrode.iter().enumerate() {
        if e != NO_ELECTRODE {
            members[e as usize].push(NodeIx(n));
        }
    }
    // An electrode whose nodes all belong to an earlier one at the same
    // potential owns none: it keeps its potential and carries no charge.
    let mut electrodes: Vec<ElectrodeField> = members
        .iter()
        .zip(&layout.electrodes)
        .map(|(nodes, info)| ElectrodeField {
            potential: nodes.first().map(|n| phi[n.0]).unwrap_or(match info.kind {
                ElectrodeKind::Fixed { potential_v } => potential_v,
                ElectrodeKind::Floating => 0.0,
            }),
            charge: scale
                * match quadrature {
                    None => stencil.outflux(grid, phi, nodes.iter().copied()),
                    Some(q) => q.stencil.outflux_phasor(grid, phi, q.phi, nodes.iter().copied()).re,
                },
        })
        .collect();
    // Charges far below the largest one are solver round-off (a floating
    // electrode's net charge is zero by construction): report them as zero.
    let largest = electrodes.iter().map(|e| e.charge.abs()).fold(0.0, f64::max);
    for e in &mut electrodes {
        if e.charge.abs() <= CHARGE_RESOLUTION * largest {
            e.charge = 0.0;
        }
    }

    let sampler = Sampler { grid, layout, geometry: geo, phi, ev, quadrature: quadrature.map(|q| q.phi).zip(evq) };
    let probes = case.probes.iter().map(|p| probe(&sampler, p.at)).collect();
    let lines = case.lines.iter().map(|l| line_field(&sampler, l.from, l.to, l.points)).collect();
    let e_scale = e_max.iter().copied().fold(0.0, f64::max);
    let surfaces = surfaces::surfaces(case, grid, layout, &sampler.ev, &sampler, e_scale);
    let singular = singular_fields(&points, &sampler, permittivity);
    let mut regions = regions;
    for sf in &singular {
        for (&r, at) in sf.regions.iter().zip(&sf.e_at_by_region) {
            if let Some(v) = at[0].filter(|v| regions[r].at_sharp_edge && v.e > regions[r].e_judged * (1.0 + TIE)) {
                regions[r].e_judged = v.e;
                regions[r].e_judged_at = v.at;
            }
        }
    }
    Fields {
        regions,
        electrodes,
        energy: scale
            * match quadrature {
                None => stencil.energy(grid, phi),
                Some(q) => q.stencil.energy_phasor(grid, phi, q.phi),
            },
        energy_from_cells: scale * energy_cells,
        probes,
        gap: gap(grid, layout, &members),
        lines,
        surfaces,
        singular,
    }
}
