//! The mesh self-check, a study of one case on coarser grids: the case
//! gridded again √2 and 2 times coarser (2 and 4 above
//! `LARGE_GRID_NODES`) with the reported grid's grading, solved to
//! `SELF_CHECK_TOLERANCE`, and every figure compared across the three grids
//! (`meshcheck`: Richardson estimates and observed orders).

use crate::grid::{self, Grid};
use crate::{LARGE_GRID_NODES, Options, Prepared, SELF_CHECK_TOLERANCE, discharge, fields, meshcheck};

/// The mesh self-check: the case solved again on grids √2 and 2 times
/// coarser (2 and 4 above `LARGE_GRID_NODES`), and each part's peak
/// compared (see `meshcheck`).
/// `None` when a coarser grid cannot be solved (then nothing is
/// bracketed and the assessment says so).
pub fn run(
    prepared: &Prepared,
    fine: &fields::Fields,
    fine_discharge: &[discharge::GasInception],
    options: &Options,
) -> Option<meshcheck::MeshCheck> {
    let mut coarser = Vec::new();
    // Large grids resolve their features well even twice as coarse, and
    // the check's cost matters there: ratios 2 and 4 instead of √2 and 2.
    let factors = if prepared.grid.nodes() > LARGE_GRID_NODES { [2.0, 4.0] } else { [std::f64::consts::SQRT_2, 2.0] };
    // the reported grid's grading, so that the three grids refine alike
    let grading = grid::grading_for(&prepared.case, &options.limits);
    for coarsening in factors {
        let plan = grid::GridPlan { grading, coarsening };
        let grid = Grid::planned(&prepared.case, &options.limits, plan).ok()?;
        let p = crate::prepare_evaluations(prepared.case.clone(), &prepared.file, grid, false).ok()?;
        // Peaks need far less than the reported solve's tolerance: a
        // relative residual of 1e-8 moves them by well under 1e-6.
        let mut config = options.solve;
        config.options.rel_tol = config.options.rel_tol.max(SELF_CHECK_TOLERANCE);
        let s = p.solve(&config).ok()?;
        let f = p.fields(&p.service, &s.phi, s.quadrature.as_deref());
        let d = p.discharge(&p.sampler(&s.phi, s.quadrature.as_deref()), &f);
        coarser.push((p.grid.nodes(), f, d));
    }
    let nodes = [prepared.grid.nodes(), coarser[0].0, coarser[1].0];
    let mut check = meshcheck::compare([&fine.regions, &coarser[0].1.regions, &coarser[1].1.regions], nodes);
    let r = check.ratio();
    let all = [fine, &coarser[0].1, &coarser[1].1];
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
        .map(|g| (g.region, [g.scale, scale(&coarser[0].2, g.region), scale(&coarser[1].2, g.region)]))
        .collect();
    Some(check)
}
