//! Steady DC conduction with temperature (`operation.mode: dc`): a study
//! over the pipeline's stages that reuses what does not change.
//!
//! Physics. In steady state the current density is divergence-free:
//! div(σ∇φ) = 0 with σ = σ0·exp(α(T − T_ref))·exp(β·|E|) per material
//! (`materials::Conduction`). Where electrodes carry temperatures, the
//! temperature solves div(k∇T) = −q with q = σ·|E|² (the insulation's own
//! conduction loss; the conductor loss is represented by the electrode
//! temperatures or by the heat inputs given to electrodes), electrodes
//! without a temperature are isothermal bodies whose net heat flow is their
//! heat input (zero without one), and the outer boundary is adiabatic
//! (zero flux). Without electrode temperatures each part is at its stated
//! (or the environment's) temperature.
//!
//! Method. Picard iteration: σ is evaluated per cell at the last
//! temperature and field, the conduction and heat problems are solved
//! again, until the potential changes by less than `POTENTIAL_TOLERANCE`
//! (relative to the largest potential difference) and the temperature by
//! less than `TEMPERATURE_TOLERANCE_K`. Setup is kept: the unknown
//! numbering and matrix pattern of the electric problem (the case's own),
//! one multigrid hierarchy for every conduction solve (each warm-started
//! from the last), and the thermal pattern, matrix and hierarchy built
//! once (only its sources change). Not converging, or a temperature
//! beyond the accepted range (thermal runaway), is an error: no verdict is
//! given from an unconverged state.
//!
//! The capacitive field of the same potentials (div(ε∇φ) = 0) is solved
//! too: it is the field just after switching on, and the change a polarity
//! reversal superposes on the resistive field.

use crate::assemble::{self, AssembleError, Factors, Pattern, Stencil};
use crate::case::{Case, Geometry};
use crate::coefficients::{self, Conditions};
use crate::grid::{CONDUCTOR, CellIx, Grid, Layout};
use crate::solve::{SolveError, SolveReport, Solver, SolverConfig};
use std::f64::consts::PI;

/// Most Picard iterations.
pub const MAX_ITERATIONS: usize = 200;
/// Largest change of the potential between iterations at convergence,
/// relative to the largest difference between fixed potentials.
pub const POTENTIAL_TOLERANCE: f64 = 1e-7;
/// Largest mismatch between the field σ was evaluated at and the field it
/// gives, relative to the largest field, at convergence.
pub const FIELD_TOLERANCE: f64 = 1e-6;
/// Smallest under-relaxation step of the field used for σ(E).
pub const MIN_RELAXATION: f64 = 1.0 / 16.0;
/// Largest change of the temperature between iterations at convergence, K.
pub const TEMPERATURE_TOLERANCE_K: f64 = 1e-4;

/// The DC state of a solved case.
#[derive(Debug, Clone)]
pub struct DcState {
    /// The capacitive potential of the same fixed potentials, V.
    pub capacitive: Vec<f64>,
    /// The solved temperature at every node, °C (`None` without electrode
    /// temperatures: parts at their stated temperatures).
    pub temperature: Option<Vec<f64>>,
    /// Picard iterations taken.
    pub iterations: usize,
    /// What the thermal solves did (the last one).
    pub thermal_solve: Option<SolveReport>,
}

/// Why a DC state could not be found. None may lead to a verdict.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum DcError {
    /// A linear solve failed.
    #[error("{0}")]
    Solve(#[from] SolveError),
    /// The thermal problem could not be set up.
    #[error("the thermal problem could not be set up: {0}")]
    Thermal(#[from] AssembleError),
    /// The iteration did not settle.
    #[error(
        "the DC conduction field did not settle in {iterations} iterations (last change {change:.1e} of the \
         voltage, {change_k:.1e} K); the conductivity's field coefficient may be too steep for a steady state, \
         or the case is near thermal runaway. No verdict is given."
    )]
    NoSteadyState {
        /// Iterations taken.
        iterations: usize,
        /// Last relative change of the potential.
        change: f64,
        /// Last change of the temperature, K.
        change_k: f64,
    },
    /// The temperature left the accepted range.
    #[error(
        "thermal runaway: the insulation's conduction loss heats it to {t_max_c:.0} °C and beyond, faster than it \
         conducts the heat away; there is no steady state at this voltage and these temperatures. No verdict is \
         given."
    )]
    Runaway {
        /// The highest temperature reached, °C.
        t_max_c: f64,
    },
    /// A part's material has no conductivity.
    #[error("{0} has no conductivity; DC mode needs `conductivity_s_per_m` for every insulating material")]
    NoConductivity(String),
}

/// The thermal problem of a case, set up once.
struct Thermal {
    pattern: Pattern,
    /// Its edge conductances (k/ε0, see `coefficients`).
    stencil: Stencil,
    matrix: crate::solve::Matrix,
    /// Right-hand side of the fixed temperatures alone.
    rhs: Vec<f64>,
    fixed: Vec<f64>,
    /// The electrodes' heat inputs as nodal sources, W (each on one node of
    /// its electrode: an isothermal group, whose row sums its nodes).
    heat: Vec<f64>,
}

fn thermal(case: &Case, grid: &Grid, layout: &Layout, factors: &Factors) -> Result<Option<Thermal>, DcError> {
    let temps: Vec<Option<f64>> = layout.electrodes.iter().map(|e| case.parts[e.part].service.temperature_c).collect();
    let Some((constraints, fixed)) = assemble::thermal_constraints(layout, &temps) else { return Ok(None) };
    let k = coefficients::thermal_conductivities(case, grid, layout);
    let stencil = Stencil::new(grid, layout, factors, &k);
    let pattern = Pattern::new(grid, &stencil, &constraints)?;
    let matrix = pattern.matrix(grid, &stencil);
    let rhs = pattern.rhs(grid, &stencil, &fixed);
    let mut heat = vec![0.0; grid.nodes()];
    for (k, e) in layout.electrodes.iter().enumerate() {
        if let (Some(h), Some(n)) =
            (case.parts[e.part].service.heat_w, layout.node_electrode.iter().position(|&x| x as usize == k))
        {
            heat[n] += h;
        }
    }
    Ok(Some(Thermal { pattern, stencil, matrix, rhs, fixed, heat }))
}

/// |E| at every cell centre from the nodal potential (the mean of the two
/// edge differences along each axis), V/m.
fn cell_fields(grid: &Grid, phi: &[f64]) -> Vec<f64> {
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut out = vec![0.0; grid.cells()];
    for j in 0..ny - 1 {
        for i in 0..nx - 1 {
            let p = |a: usize, b: usize| phi[grid.node(a, b).0];
            let (hx, hy) = (grid.x[i + 1] - grid.x[i], grid.y[j + 1] - grid.y[j]);
            let ex = 0.5 * ((p(i, j) - p(i + 1, j)) + (p(i, j + 1) - p(i + 1, j + 1))) / hx;
            let ey = 0.5 * ((p(i, j) - p(i, j + 1)) + (p(i + 1, j) - p(i + 1, j + 1))) / hy;
            out[grid.cell(i, j).0] = ex.hypot(ey);
        }
    }
    out
}

/// Temperature of every cell: the mean of its nodes' where solved, else
/// its region's state temperature.
fn cell_temperatures(case: &Case, grid: &Grid, layout: &Layout, nodal: Option<&[f64]>) -> Vec<f64> {
    let states = coefficients::states(case, layout, Conditions::Service);
    (0..grid.cells())
        .map(|c| match nodal {
            Some(t) => grid.cell_nodes(CellIx(c)).iter().map(|n| t[n.0]).sum::<f64>() / 4.0,
            None => {
                let r = layout.cell_region[c];
                if r == CONDUCTOR { case.environment.temperature_c } else { states[r as usize].temperature_c }
            }
        })
        .collect()
}

/// Each node's share of the cells' Joule heat σ·|E|²·V (a quarter of each
/// cell's), W (or W/m).
fn joule_sources(grid: &Grid, geometry: Geometry, sigma: &[f64], e: &[f64]) -> Vec<f64> {
    let mut q = vec![0.0; grid.nodes()];
    for c in (0..grid.cells()).map(CellIx) {
        let heat = sigma[c.0] * e[c.0] * e[c.0] * crate::fields::cell_volume(grid, geometry, c);
        for n in grid.cell_nodes(c) {
            q[n.0] += 0.25 * heat;
        }
    }
    q
}

/// The inputs of a DC solve: a prepared case's geometry and numbering.
pub struct Inputs<'a> {
    /// The case.
    pub case: &'a Case,
    /// The grid.
    pub grid: &'a Grid,
    /// The layout.
    pub layout: &'a Layout,
    /// Geometric factors.
    pub factors: &'a Factors,
    /// The electric unknowns and pattern.
    pub pattern: &'a Pattern,
    /// Fixed potentials by electrode, V.
    pub potentials: &'a [f64],
    /// The capacitive (ε) system of the case.
    pub capacitive: &'a crate::assemble::System,
    /// Its stencil.
    pub capacitive_stencil: &'a Stencil,
}

/// Solves the steady DC state (see the module docs). Returns the resistive
/// nodal potential, the report of its last solve and the DC state.
pub fn steady(inp: &Inputs, config: &SolverConfig) -> Result<(Vec<f64>, SolveReport, DcState), DcError> {
    let Inputs { case, grid, layout, factors, pattern, potentials, capacitive, capacitive_stencil } = *inp;
    for (r, _) in layout.regions.iter().zip(layout.regions_with_cells()).filter(|(_, p)| *p) {
        let m = &case.materials[r.material];
        if m.conduction.is_none() {
            return Err(DcError::NoConductivity(m.name.clone()));
        }
    }
    let (cap_u, _) = Solver::structured(&capacitive.matrix, pattern.structure(grid, capacitive_stencil), config)
        .solve(&capacitive.rhs)?;
    let cap = pattern.expand(&cap_u, potentials);
    let span = potentials.iter().fold(0.0f64, |m, v| m.max(v.abs())).max(f64::MIN_POSITIVE);

    let thermal = thermal(case, grid, layout, factors)?;
    let mut thermal_solver =
        thermal.as_ref().map(|t| Solver::structured(&t.matrix, t.pattern.structure(grid, &t.stencil), config));
    let mut thermal_report = None;
    let solve_t = |solver: &mut Solver, t: &Thermal, q: &[f64], start: Option<&[f64]>| {
        let mut b = t.rhs.clone();
        t.pattern.add_sources(&mut b, &t.heat);
        t.pattern.add_sources(&mut b, q);
        let (u, rep) = solver.solve_from(&t.matrix, &b, start)?;
        Ok::<_, SolveError>((t.pattern.expand(&u, &t.fixed), u, rep))
    };
    let mut t_nodal: Option<Vec<f64>> = None;
    let mut t_unknowns: Option<Vec<f64>> = None;
    if let (Some(t), Some(s)) = (&thermal, thermal_solver.as_mut()) {
        let (nodal, u, rep) = solve_t(s, t, &vec![0.0; grid.nodes()], None)?;
        t_nodal = Some(nodal);
        t_unknowns = Some(u);
        thermal_report = Some(rep);
    }

    let system_of = |t: &[f64], e: &[f64]| {
        let sigma = coefficients::conductivities(case, grid, layout, t, e);
        let stencil = Stencil::new(grid, layout, factors, &sigma);
        // the coefficients are σ/ε0 (see `coefficients::conductivities`)
        let cells: Vec<f64> = sigma.cells.iter().flatten().map(|c| c * crate::units::EPSILON_0).collect();
        (pattern.system(grid, &stencil, potentials), cells, stencil)
    };
    // the field starts from the capacitive one (exact where σ ∝ ε)
    let mut cell_t = cell_temperatures(case, grid, layout, t_nodal.as_deref());
    let mut cell_e = cell_fields(grid, &cap);
    let (first, mut sigma_cells, first_stencil) = system_of(&cell_t, &cell_e);
    let mut solver = Solver::structured(&first.matrix, pattern.structure(grid, &first_stencil), config);
    drop(first_stencil);
    let (mut u, _) = solver.solve(&first.rhs)?;
    let mut phi = pattern.expand(&u, potentials);
    let (mut relaxation, mut last_mismatch): (f64, f64) = (1.0, f64::INFINITY);
    for iteration in 1..=MAX_ITERATIONS {
        // heat from the last field, then the new temperature
        let mut change_k: f64 = 0.0;
        if let (Some(t), Some(s), Some(old)) = (&thermal, thermal_solver.as_mut(), t_nodal.as_ref()) {
            let e = cell_fields(grid, &phi);
            let q = joule_sources(grid, case.geometry, &sigma_cells, &e);
            let (nodal, tu, rep) = solve_t(s, t, &q, t_unknowns.as_deref())?;
            change_k = nodal.iter().zip(old).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max);
            let t_max = nodal.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            if t_max.is_nan() || t_max > crate::case::limits::TEMPERATURE_RANGE_C.1 {
                return Err(DcError::Runaway { t_max_c: t_max });
            }
            t_nodal = Some(nodal);
            t_unknowns = Some(tu);
            thermal_report = Some(rep);
        }
        cell_t = cell_temperatures(case, grid, layout, t_nodal.as_deref());
        // Under-relaxed field for σ(E): a steep exp(β·E) makes the plain
        // fixed point oscillate; the step is halved whenever the mismatch
        // between the field used and the field it gives grows.
        let fresh = cell_fields(grid, &phi);
        let scale = fresh.iter().copied().fold(f64::MIN_POSITIVE, f64::max);
        let mismatch = fresh.iter().zip(&cell_e).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max) / scale;
        if mismatch > last_mismatch {
            relaxation = (0.5 * relaxation).max(MIN_RELAXATION);
        }
        last_mismatch = mismatch;
        for (e, f) in cell_e.iter_mut().zip(&fresh) {
            *e += relaxation * (f - *e);
        }
        let (system, cells, _) = system_of(&cell_t, &cell_e);
        sigma_cells = cells;
        let (next, rep) = solver.solve_from(&system.matrix, &system.rhs, Some(&u))?;
        let next_phi = pattern.expand(&next, potentials);
        let change = next_phi.iter().zip(&phi).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max) / span;
        u = next;
        phi = next_phi;
        if change <= POTENTIAL_TOLERANCE && change_k <= TEMPERATURE_TOLERANCE_K && mismatch <= FIELD_TOLERANCE {
            let state =
                DcState { capacitive: cap, temperature: t_nodal, iterations: iteration, thermal_solve: thermal_report };
            return Ok((phi, rep, state));
        }
        if iteration == MAX_ITERATIONS {
            return Err(DcError::NoSteadyState { iterations: iteration, change, change_k });
        }
    }
    unreachable!("the loop returns")
}

/// The lowest and highest temperature of each region's nodes, °C.
pub fn region_temperatures(grid: &Grid, layout: &Layout, nodal: &[f64]) -> Vec<Option<[f64; 2]>> {
    let mut out: Vec<Option<[f64; 2]>> = vec![None; layout.regions.len()];
    for (c, &r) in layout.cell_region.iter().enumerate() {
        if r == CONDUCTOR {
            continue;
        }
        for n in grid.cell_nodes(CellIx(c)) {
            let t = nodal[n.0];
            let e = out[r as usize].get_or_insert([t, t]);
            e[0] = e[0].min(t);
            e[1] = e[1].max(t);
        }
    }
    out
}

/// The dielectric relaxation time ε0·εr/σ of each region over its
/// temperature range: [shortest (hottest), longest (coldest)], s (`None`
/// without conduction). σ at zero field.
pub fn time_constants(
    case: &Case,
    layout: &Layout,
    permittivity: &[f64],
    temperatures: &[Option<[f64; 2]>],
) -> Vec<Option<[f64; 2]>> {
    let states = coefficients::states(case, layout, Conditions::Service);
    layout
        .regions
        .iter()
        .enumerate()
        .map(|(r, region)| {
            let c = case.materials[region.material].conduction?;
            let [lo, hi] = temperatures[r].unwrap_or([states[r].temperature_c; 2]);
            let tau = |t: f64| crate::units::EPSILON_0 * permittivity[r] / c.at(t, 0.0);
            let (a, b) = (tau(lo), tau(hi));
            Some([a.min(b), a.max(b)])
        })
        .collect()
}

/// What the DC evaluation adds to the fields, per region (layout order).
#[derive(Debug, Clone, PartialEq)]
pub struct DcResults {
    /// Peak of the capacitive field (switching on), V/m.
    pub capacitive_e_max: Vec<f64>,
    /// Peak of the field just after a polarity reversal from +U to −U:
    /// |E_dc − 2·E_capacitive| (superposition), V/m.
    pub reversal_e_max: Vec<f64>,
    /// Where the resistive and the capacitive peak lie, as the fraction of
    /// the way from the lowest to the highest fixed potential of the
    /// potential there: [resistive, capacitive].
    pub peak_potential_fraction: Vec<[f64; 2]>,
    /// Lowest and highest temperature, °C (solved temperatures only).
    pub temperature: Vec<Option<[f64; 2]>>,
    /// ε/σ over the temperature range, s.
    pub time_constant: Vec<Option<[f64; 2]>>,
    /// Picard iterations taken.
    pub iterations: usize,
    /// Charge accumulated on each interface between two insulating parts.
    pub interfaces: Vec<InterfaceCharge>,
    /// The field scales with the potentials (`linear_in_voltage`).
    pub linear: bool,
}

/// True when a DC state's field scales with the fixed potentials: no
/// temperatures solved from the conduction loss (which grows as U²) and no
/// field-dependent conductivity (β = 0) in any material in use.
pub fn linear_in_voltage(case: &Case, layout: &Layout, state: &DcState) -> bool {
    state.temperature.is_none()
        && layout
            .regions
            .iter()
            .zip(layout.regions_with_cells())
            .filter(|(_, used)| *used)
            .all(|(r, _)| case.materials[r.material].conduction.is_none_or(|c| c.beta_m_per_v == 0.0))
}

/// The charge a DC field accumulates on one interface between two parts
/// (where σ/ε differs on the two sides: ρs = ε2·E2n − ε1·E1n).
#[derive(Debug, Clone, PartialEq)]
pub struct InterfaceCharge {
    /// The two regions (layout order, lower index first).
    pub regions: [usize; 2],
    /// Net charge, C (or C/m as the case normalises).
    pub charge: f64,
    /// Mean surface density: charge over the interface's area, C/m².
    pub density_mean: f64,
}

/// Interface charges below this fraction of the largest |charge| of the
/// case's electrodes are round-off and count as zero.
const INTERFACE_CHARGE_RESOLUTION: f64 = 1e-7;

/// The charge on every interface between two insulating regions: the Gauss
/// flux of D = ε·E out of the dual cells of the free nodes whose cells
/// belong to exactly those two regions (the band around the interface: its
/// net flux is the charge enclosed, however the interface cuts the cells),
/// with the interface's area from the cell faces between the two regions.
/// `stencil` is the permittivity stencil; `electrode_charge` the largest
/// electrode |charge| as reported (for the round-off floor), `scale` the
/// case's normalisation of extensive results.
pub fn interface_charges(
    grid: &Grid,
    geometry: Geometry,
    layout: &Layout,
    stencil: &Stencil,
    phi: &[f64],
    electrode_charge: f64,
    scale: f64,
) -> Vec<InterfaceCharge> {
    use std::collections::BTreeMap;
    let (nx, ny) = (grid.nx(), grid.ny());
    let region = |i: usize, j: usize| layout.cell_region[grid.cell(i, j).0];
    let pair =
        |a: u32, b: u32| (a != b && a != CONDUCTOR && b != CONDUCTOR).then(|| [a.min(b) as usize, a.max(b) as usize]);
    let mut charge: BTreeMap<[usize; 2], f64> = BTreeMap::new();
    for j in 0..ny {
        for i in 0..nx {
            let n = grid.node(i, j);
            if layout.node_electrode[n.0] != crate::grid::NO_ELECTRODE {
                continue;
            }
            let mut present: Vec<u32> =
                [(i.wrapping_sub(1), j.wrapping_sub(1)), (i, j.wrapping_sub(1)), (i.wrapping_sub(1), j), (i, j)]
                    .iter()
                    .filter(|&&(a, b)| a < nx - 1 && b < ny - 1)
                    .map(|&(a, b)| region(a, b))
                    .collect();
            present.sort_unstable();
            present.dedup();
            if let [a, b] = present[..]
                && let Some(p) = pair(a, b)
            {
                *charge.entry(p).or_default() += stencil.outflux(grid, phi, std::iter::once(n));
            }
        }
    }
    let mut area: BTreeMap<[usize; 2], f64> = BTreeMap::new();
    for j in 0..ny - 1 {
        for i in 0..nx - 1 {
            let (x0, x1, hy) = (grid.x[i], grid.x[i + 1], grid.y[j + 1] - grid.y[j]);
            if j > 0
                && let Some(p) = pair(region(i, j - 1), region(i, j))
            {
                *area.entry(p).or_default() += match geometry {
                    Geometry::Planar => x1 - x0,
                    Geometry::Axisymmetric => PI * (x1 * x1 - x0 * x0),
                };
            }
            if i > 0
                && let Some(p) = pair(region(i - 1, j), region(i, j))
            {
                *area.entry(p).or_default() += match geometry {
                    Geometry::Planar => hy,
                    Geometry::Axisymmetric => 2.0 * PI * x0 * hy,
                };
            }
        }
    }
    charge
        .into_iter()
        .map(|(regions, q)| {
            let q = if (scale * q).abs() <= INTERFACE_CHARGE_RESOLUTION * electrode_charge { 0.0 } else { q };
            let a = area.get(&regions).copied().unwrap_or(0.0);
            InterfaceCharge { regions, charge: scale * q, density_mean: if a > 0.0 { q / a } else { 0.0 } }
        })
        .collect()
}
