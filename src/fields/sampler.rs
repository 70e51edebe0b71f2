//! Potential and field anywhere in the domain: probes, lines, maps, VTK and
//! field lines read through [`Sampler`].

use super::{EdgeValues, LineField, LineSample, ProbeField, TIE, boundary_corrected_edges, weight};
use crate::case::{Case, Geometry};
use crate::grid::{CONDUCTOR, Grid, Layout};

/// What lies at a sampled point.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Inside {
    /// A dielectric region (index into the layout's regions).
    Region(u32),
    /// An electrode (index into the layout's electrodes).
    Electrode(u32),
}

/// The field at one point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sample {
    /// Potential in V.
    pub potential: f64,
    /// Field components (E_x, E_y) or (E_r, E_z) in V/m.
    pub e: [f64; 2],
    /// What the point lies in (by the cell that holds it).
    pub inside: Inside,
}

impl Sample {
    /// |E| in V/m.
    pub fn magnitude(&self) -> f64 {
        self.e[0].hypot(self.e[1])
    }
}

/// Evaluates potential and field anywhere in the domain: the potential
/// bilinear in the cell that holds the point, each field component linear
/// between the two cell edges along its direction (the edge values of the
/// module docs, second order at edge midpoints). Built once per solution.
///
/// An AC solution with losses is a phasor φ′ + jφ″ (in-phase and
/// quadrature parts); then a sample's field is the phasor magnitude
/// |E| = √(|E′|² + |E″|²) (in the case's rms/peak convention: exact as an
/// rms value, an upper bound of the instantaneous peak, reached when the
/// field is linearly polarised), directed along the axis of the field's
/// ellipse (the direction of its largest instantaneous value), and the
/// potential is the phasor magnitude signed as its in-phase part.
#[derive(Debug, Clone)]
pub struct Sampler<'a> {
    pub(super) grid: &'a Grid,
    pub(super) layout: &'a Layout,
    pub(super) geometry: Geometry,
    pub(super) phi: &'a [f64],
    pub(super) ev: EdgeValues,
    /// The quadrature part of a phasor solution and its edge values.
    pub(super) quadrature: Option<(&'a [f64], EdgeValues)>,
}

/// The axis of the ellipse traced by Re((a + j·b)·e^{jωt}): the
/// instantaneous vector of largest magnitude, a·cos θ + b·sin θ with
/// tan 2θ = 2a·b/(|a|² − |b|²), scaled to the phasor magnitude
/// √(|a|² + |b|²) and signed to point along `a`.
pub fn ellipse_axis(a: [f64; 2], b: [f64; 2]) -> [f64; 2] {
    let (aa, bb, ab) = (a[0] * a[0] + a[1] * a[1], b[0] * b[0] + b[1] * b[1], a[0] * b[0] + a[1] * b[1]);
    let theta = 0.5 * (2.0 * ab).atan2(aa - bb);
    let (c, s) = (theta.cos(), theta.sin());
    let v = [a[0] * c + b[0] * s, a[1] * c + b[1] * s];
    let n = v[0].hypot(v[1]);
    if n == 0.0 {
        return [0.0, 0.0];
    }
    let sign = if v[0] * a[0] + v[1] * a[1] < 0.0 { -1.0 } else { 1.0 };
    let m = (aa + bb).sqrt() * sign / n;
    [v[0] * m, v[1] * m]
}

impl<'a> Sampler<'a> {
    /// Prepares the edge values of `phi`.
    pub fn new(case: &Case, grid: &'a Grid, layout: &'a Layout, phi: &'a [f64]) -> Self {
        Sampler {
            grid,
            layout,
            geometry: case.geometry,
            phi,
            ev: boundary_corrected_edges(grid, layout, case.geometry, phi),
            quadrature: None,
        }
    }

    /// Prepares the edge values of a phasor φ′ + jφ″ (`quadrature` = φ″;
    /// `None` for a real solution).
    pub fn phasor(
        case: &Case,
        grid: &'a Grid,
        layout: &'a Layout,
        phi: &'a [f64],
        quadrature: Option<&'a [f64]>,
    ) -> Self {
        let mut s = Sampler::new(case, grid, layout, phi);
        s.quadrature = quadrature.map(|q| (q, boundary_corrected_edges(grid, layout, case.geometry, q)));
        s
    }

    /// The in-phase and (for a phasor) quadrature field components at `at`,
    /// V/m, and the cell holding it.
    pub fn parts(&self, at: [f64; 2]) -> ([f64; 2], Option<[f64; 2]>) {
        self.parts_in_cell(self.cell_of(at), at)
    }

    fn parts_in_cell(&self, c: crate::grid::CellIx, at: [f64; 2]) -> ([f64; 2], Option<[f64; 2]>) {
        (self.field_in(c, at, &self.ev), self.quadrature.as_ref().map(|(_, q)| self.field_in(c, at, q)))
    }

    /// [`Sampler::parts`] taken in a cell of `region` that touches `at`
    /// where there is one (a point on an interface belongs to both sides).
    pub fn parts_in(&self, at: [f64; 2], region: u32) -> ([f64; 2], Option<[f64; 2]>) {
        let c = self
            .grid
            .cells_touching(at)
            .find(|c| self.layout.cell_region[c.0] == region)
            .unwrap_or_else(|| self.cell_of(at));
        self.parts_in_cell(c, at)
    }

    /// The phase of the field at `at` in `region` against the (real) fixed
    /// potentials, degrees: of the component along the axis of its ellipse
    /// (0 for a real solution).
    pub fn phase_deg(&self, at: [f64; 2], region: u32) -> f64 {
        match self.parts_in(at, region) {
            (_, None) => 0.0,
            (e, Some(q)) => {
                let u = ellipse_axis(e, q);
                let (a, b) = (e[0] * u[0] + e[1] * u[1], q[0] * u[0] + q[1] * u[1]);
                if a == 0.0 && b == 0.0 { 0.0 } else { b.atan2(a).to_degrees() }
            }
        }
    }

    fn cell_of(&self, at: [f64; 2]) -> crate::grid::CellIx {
        let (grid, layout) = (self.grid, self.layout);
        grid.cells_touching(at).find(|c| layout.cell_region[c.0] != CONDUCTOR).unwrap_or_else(|| grid.locate(at))
    }

    /// The field in cell `c` at `at`. Each component is known at the
    /// midpoints of the cell edges along its direction (second order
    /// there); it is interpolated linearly across the cell between the two
    /// edges, and along them towards the midpoint of the neighbouring
    /// cell's edges when that cell belongs to the same region and no
    /// interface cuts either (bilinear: second order inside a region; at
    /// interfaces and electrodes the cell's own edges only, since the
    /// normal component jumps there).
    fn field_in(&self, c: crate::grid::CellIx, at: [f64; 2], ev: &EdgeValues) -> [f64; 2] {
        let grid = self.grid;
        let (i, j) = grid.cell_ij(c);
        let (nx, ny) = (grid.nx(), grid.ny());
        let s = ((at[0] - grid.x[i]) / (grid.x[i + 1] - grid.x[i])).clamp(0.0, 1.0);
        let t = ((at[1] - grid.y[j]) / (grid.y[j + 1] - grid.y[j])).clamp(0.0, 1.0);
        let own = self.layout.cell_region[c.0];
        let plain = |a: usize, b: usize| {
            let k = grid.cell(a, b);
            self.layout.cell_region[k.0] == own
                && self.layout.cut_cells.binary_search_by_key(&(k.0 as u32), |q| q.cell).is_err()
        };
        let whole = plain(i, j);
        // a foil or electrode surface on the grid line between two cells
        // separates them, though the same region lies on both sides
        let free = |a: usize, b: usize| self.layout.node_electrode[grid.node(a, b).0] == crate::grid::NO_ELECTRODE;
        let mid = |v: &[f64], k: usize| 0.5 * (v[k] + v[k + 1]);
        // E_x (as G): between the bottom and top edges, and along x towards
        // the neighbouring column's edge midpoints
        let gx_at = |row: usize| {
            let here = ev.gx[row * (nx - 1) + i];
            let xm = mid(&grid.x, i);
            let other = if at[0] < xm { i.checked_sub(1) } else { (i + 2 < nx).then_some(i + 1) };
            // the grid line the two cells share
            let line = |o: usize| if o < i { i } else { i + 1 };
            match other {
                Some(o) if whole && plain(o, j) && free(line(o), j) && free(line(o), j + 1) => {
                    let xo = mid(&grid.x, o);
                    here + (ev.gx[row * (nx - 1) + o] - here) * (at[0] - xm) / (xo - xm)
                }
                _ => here,
            }
        };
        let g = (1.0 - t) * gx_at(j) + t * gx_at(j + 1);
        let ex = weight(self.geometry, at[0]).map_or(0.0, |w| g / w);
        let gy_at = |col: usize| {
            let here = ev.gy[j * nx + col];
            let ym = mid(&grid.y, j);
            let other = if at[1] < ym { j.checked_sub(1) } else { (j + 2 < ny).then_some(j + 1) };
            let line = |o: usize| if o < j { j } else { j + 1 };
            match other {
                Some(o) if whole && plain(i, o) && free(i, line(o)) && free(i + 1, line(o)) => {
                    let yo = mid(&grid.y, o);
                    here + (ev.gy[o * nx + col] - here) * (at[1] - ym) / (yo - ym)
                }
                _ => here,
            }
        };
        let ey = (1.0 - s) * gy_at(i) + s * gy_at(i + 1);
        [ex, ey]
    }

    fn potential_in(&self, c: crate::grid::CellIx, at: [f64; 2], phi: &[f64]) -> f64 {
        let grid = self.grid;
        let (i, j) = grid.cell_ij(c);
        let s = ((at[0] - grid.x[i]) / (grid.x[i + 1] - grid.x[i])).clamp(0.0, 1.0);
        let t = ((at[1] - grid.y[j]) / (grid.y[j + 1] - grid.y[j])).clamp(0.0, 1.0);
        let [a, b, cc, d] = grid.cell_nodes(c).map(|n| phi[n.0]);
        (1.0 - t) * ((1.0 - s) * a + s * b) + t * ((1.0 - s) * cc + s * d)
    }

    /// The field at `at` (m); points outside the domain are clamped to it.
    /// A point on the boundary between an electrode and insulation (an
    /// electrode outline on a grid line) is evaluated on the insulation
    /// side: of the cells that touch it, the first that is not inside an
    /// electrode.
    pub fn at(&self, at: [f64; 2]) -> Sample {
        let (grid, layout) = (self.grid, self.layout);
        let c = self.cell_of(at);
        let in_phase = self.potential_in(c, at, self.phi);
        let e = self.field_in(c, at, &self.ev);
        let (potential, [ex, ey]) = match &self.quadrature {
            None => (in_phase, e),
            Some((q, qev)) => {
                let quad = self.potential_in(c, at, q);
                let sign = if in_phase < 0.0 { -1.0 } else { 1.0 };
                (sign * in_phase.hypot(quad), ellipse_axis(e, self.field_in(c, at, qev)))
            }
        };
        let r = layout.cell_region[c.0];
        let inside = if r == CONDUCTOR {
            Inside::Electrode(layout.node_electrode[grid.cell_nodes(c)[0].0])
        } else {
            Inside::Region(r)
        };
        Sample { potential, e: [ex, ey], inside }
    }

    /// A nodal quantity (one value per grid node, e.g. a temperature)
    /// interpolated bilinearly at `at`, in the cell the field is taken from.
    pub fn interpolate(&self, nodal: &[f64], at: [f64; 2]) -> f64 {
        self.potential_in(self.cell_of(at), at, nodal)
    }

    /// An electrode owning a node of the cell that holds `at`, if any.
    pub fn electrode_near(&self, at: [f64; 2]) -> Option<u32> {
        let nodes = self.grid.cell_nodes(self.grid.locate(at));
        nodes.iter().map(|n| self.layout.node_electrode[n.0]).find(|&e| e != crate::grid::NO_ELECTRODE)
    }

    /// The domain [x min, x max, y min, y max] in m.
    pub fn domain(&self) -> [f64; 4] {
        let (x, y) = (&self.grid.x, &self.grid.y);
        [x[0], x[x.len() - 1], y[0], y[y.len() - 1]]
    }

    /// The smaller side of the cell holding `at`, m.
    pub fn cell_size(&self, at: [f64; 2]) -> f64 {
        let (i, j) = self.grid.cell_ij(self.grid.locate(at));
        (self.grid.x[i + 1] - self.grid.x[i]).min(self.grid.y[j + 1] - self.grid.y[j])
    }

    /// The layout the sampler reads.
    pub fn layout(&self) -> &'a Layout {
        self.layout
    }

    /// The grid the sampler reads.
    pub fn grid(&self) -> &'a Grid {
        self.grid
    }

    /// Name of what a sample lies in.
    pub fn name_of(&self, inside: Inside) -> &'a str {
        match inside {
            Inside::Region(r) => &self.layout.regions[r as usize].name,
            Inside::Electrode(e) => &self.layout.electrodes[e as usize].name,
        }
    }
}

pub(super) fn probe(sampler: &Sampler, at: [f64; 2]) -> ProbeField {
    let s = sampler.at(at);
    ProbeField { potential: s.potential, e: s.magnitude(), part: sampler.name_of(s.inside).to_string() }
}

/// The field along a straight line at `points` evenly spaced points, ends
/// included.
pub fn line_field(sampler: &Sampler, from: [f64; 2], to: [f64; 2], points: usize) -> LineField {
    let length = (to[0] - from[0]).hypot(to[1] - from[1]);
    let samples = (0..points)
        .map(|k| {
            let f = k as f64 / (points - 1).max(1) as f64;
            let at = [from[0] + f * (to[0] - from[0]), from[1] + f * (to[1] - from[1])];
            let s = sampler.at(at);
            LineSample {
                distance: f * length,
                at,
                potential: s.potential,
                e: s.e,
                part: sampler.name_of(s.inside).into(),
                in_electrode: matches!(s.inside, Inside::Electrode(_)),
            }
        })
        .collect::<Vec<LineSample>>();
    // Ties within rounding (a uniform field) keep the first sample, so the
    // location does not depend on solver round-off.
    let magnitude = |s: &LineSample| s.e[0].hypot(s.e[1]);
    let peak =
        samples.iter().enumerate().filter(|(_, s)| !s.in_electrode).fold(
            None,
            |best: Option<usize>, (k, s)| match best {
                Some(b) if magnitude(s) <= magnitude(&samples[b]) * (1.0 + TIE) => Some(b),
                _ => Some(k),
            },
        );
    LineField { samples, peak }
}
