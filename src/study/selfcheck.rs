//! The mesh self-check, a study of one case on coarser grids: the case
//! gridded again √2 and 2 times coarser (2 and 4 above
//! `LARGE_GRID_NODES`) with the reported grid's grading, solved to
//! `SELF_CHECK_TOLERANCE`, and every figure compared across the three grids
//! (`meshcheck`: Richardson estimates and observed orders).

use crate::grid::{self, Grid};
use crate::{LARGE_GRID_NODES, Options, Prepared, SELF_CHECK_TOLERANCE, discharge, fields, meshcheck};

/// One coarser grid of the self-check, solved.
#[derive(Debug, Clone)]
pub struct CoarseSolve {
    /// The grid.
    pub grid: Grid,
    /// Its nodal potential (the in-phase part of an AC phasor), V.
    pub phi: Vec<f64>,
    /// AC with losses: the quadrature part, V.
    pub quadrature: Option<Vec<f64>>,
    /// Its fields.
    pub fields: fields::Fields,
    /// Its inception levels.
    pub discharge: Vec<discharge::GasInception>,
    /// Its solve.
    pub report: crate::solve::SolveReport,
}

/// The self-check's two coarser grids, solved, the medium grid first.
#[derive(Debug, Clone)]
pub struct Coarser(pub [CoarseSolve; 2]);

impl Coarser {
    /// A starting guess on `grid` from the medium grid's solution
    /// (bilinear interpolation), for the fine solve.
    pub fn start_for(&self, grid: &Grid) -> crate::Start {
        start_from(&self.0[0], grid)
    }
}

fn start_from(c: &CoarseSolve, grid: &Grid) -> crate::Start {
    crate::Start {
        phi: grid.interpolate_from(&c.grid, &c.phi),
        quadrature: c.quadrature.as_ref().map(|q| grid.interpolate_from(&c.grid, q)),
    }
}

/// The self-check's coarser grids of `prepared`, solved coarsest first,
/// each solve starting from the coarser one's solution interpolated (full
/// multigrid's nesting: each starts close, so it needs fewer iterations).
/// `None` when a grid cannot be built or solved (then nothing is
/// bracketed and the assessment says so).
pub fn solve_coarser(prepared: &Prepared, options: &Options) -> Option<Coarser> {
    // Large grids resolve their features well even twice as coarse, and
    // the check's cost matters there: ratios 2 and 4 instead of √2 and 2.
    let factors = if prepared.grid.nodes() > LARGE_GRID_NODES { [2.0, 4.0] } else { [std::f64::consts::SQRT_2, 2.0] };
    // the reported grid's grading, so that the three grids refine alike
    let grading = grid::grading_for(&prepared.case, &options.limits);
    // Peaks need far less than the reported solve's tolerance: a relative
    // residual of 1e-8 moves them by well under 1e-6.
    let mut config = options.solve;
    config.options.rel_tol = config.options.rel_tol.max(SELF_CHECK_TOLERANCE);
    let mut solved: Vec<CoarseSolve> = Vec::new();
    for coarsening in [factors[1], factors[0]] {
        let plan = grid::GridPlan { grading, coarsening };
        let grid = Grid::planned(&prepared.case, &options.limits, plan).ok()?;
        let p = crate::prepare_evaluations(prepared.case.clone(), &prepared.file, grid, false).ok()?;
        let start = solved.last().map(|c| start_from(c, &p.grid));
        let s = p.solve_from(&config, start).ok()?;
        let f = p.fields(&p.service, &s.phi, s.quadrature.as_deref());
        let d = p.discharge(&p.sampler(&s.phi, s.quadrature.as_deref()), &f);
        solved.push(CoarseSolve {
            grid: p.grid.clone(),
            phi: s.phi,
            quadrature: s.quadrature,
            fields: f,
            discharge: d,
            report: s.report,
        });
    }
    // solved coarsest first: the medium grid is the last
    let medium = solved.pop()?;
    let coarse = solved.pop()?;
    Some(Coarser([medium, coarse]))
}

/// The mesh self-check: the case solved again on grids √2 and 2 times
/// coarser (2 and 4 above `LARGE_GRID_NODES`), and each part's peak
/// compared (see `meshcheck`). `None` when a coarser grid cannot be solved.
pub fn run(
    prepared: &Prepared,
    fine: &fields::Fields,
    fine_discharge: &[discharge::GasInception],
    options: &Options,
) -> Option<meshcheck::MeshCheck> {
    Some(compare(prepared, fine, fine_discharge, &solve_coarser(prepared, options)?))
}

/// The self-check of the fine fields against solved coarser grids.
pub fn compare(
    prepared: &Prepared,
    fine: &fields::Fields,
    fine_discharge: &[discharge::GasInception],
    coarser: &Coarser,
) -> meshcheck::MeshCheck {
    let [m, c] = &coarser.0;
    let coarser = [(m.grid.nodes(), &m.fields, &m.discharge), (c.grid.nodes(), &c.fields, &c.discharge)];
    let nodes = [prepared.grid.nodes(), coarser[0].0, coarser[1].0];
    let mut check = meshcheck::compare([&fine.regions, &coarser[0].1.regions, &coarser[1].1.regions], nodes);
    let r = check.ratio();
    let all = [fine, coarser[0].1, coarser[1].1];
    check.probes = (0..fine.probes.len()).map(|k| meshcheck::estimate(all.map(|f| f.probes[k].e), r)).collect();
    let line_peak = |f: &fields::Fields, k: usize| {
        f.lines[k].peak.map_or(f64::NAN, |p| {
            let e = f.lines[k].samples[p].e;
            e[0].hypot(e[1])
        })
    };
    check.lines = (0..fine.lines.len()).map(|k| meshcheck::estimate(all.map(|f| line_peak(f, k)), r)).collect();
    check.energy = meshcheck::estimate(all.map(|f| f.energy), r);
    // the same point on each grid (singular points lie on feature lines,
    // which every grid has)
    let ring = |f: &fields::Fields, at: [f64; 2], d: usize| {
        f.singular
            .iter()
            .find(|s| (s.point.at[0] - at[0]).hypot(s.point.at[1] - at[1]) <= 1e-9)
            .and_then(|s| s.e_at[d])
            .map_or(f64::NAN, |v| v.e)
    };
    check.singular = fine
        .singular
        .iter()
        .map(|s| [0, 1].map(|d| meshcheck::estimate(all.map(|f| ring(f, s.point.at, d)), r)))
        .collect();
    let scale = |list: &[discharge::GasInception], r: usize| list.iter().find(|g| g.region == r).and_then(|g| g.scale);
    check.inception = fine_discharge
        .iter()
        .map(|g| (g.region, [g.scale, scale(coarser[0].2, g.region), scale(coarser[1].2, g.region)]))
        .collect();
    check
}
