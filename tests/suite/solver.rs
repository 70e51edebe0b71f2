//! The multigrid-preconditioned solve: agreement with the simple
//! preconditioner, iteration counts across sizes and contrasts, fallback.

use hvstack::solve::{
    Amg, AmgOptions, Jacobi, LineMultigrid, Matrix, PreconditionerChoice, SolveOptions, Solver, SolverConfig, pcg,
    relative_residual, solve,
};
use sprs::TriMat;

fn config(p: PreconditionerChoice) -> SolverConfig {
    SolverConfig { options: SolveOptions::default(), preconditioner: p }
}

fn report(path: &str, p: PreconditionerChoice) -> serde_json::Value {
    let text = std::fs::read_to_string(path).unwrap();
    let opts = hvstack::Options { solve: config(p), ..Default::default() };
    serde_json::to_value(hvstack::check(&text, path, &opts).unwrap()).unwrap()
}

/// Numbers of two results agree to `tol` relative (to the larger
/// magnitude, with an absolute floor for values near zero); the solve
/// figures differ by design.
fn agree(a: &serde_json::Value, b: &serde_json::Value, tol: f64, path: &str) {
    let tolerance = |path: &str| {
        // the self-check's coarser grids are solved to 1e-8 only, and its
        // estimate is a difference of peaks
        let self_check = ["error_estimate", "coarser_grids", "observed_order", "e_max_change_pct", "e_max_reference"]
            .iter()
            .any(|k| path.contains(k));
        let tol = if self_check { 1e-3 } else { tol };
        // the order is the logarithm of a ratio of differences of nearly
        // equal peaks: the HVDC demo's three peaks differ by 1.3e-5 of the
        // field while its DC iteration, stopped at 1e-7 of the voltage,
        // leaves the coarser grids' peaks 5.6e-7 apart between two
        // solvers (measured), which moves the order by up to 11 %
        let tol = if path.contains("observed_order") { 0.15 } else { tol };
        // an error estimate is a difference of nearly equal peaks, the
        // coarser ones solved to 1e-8 from a start interpolated from the
        // coarsest grid: agreement to 1e-3 percentage points (1e-5 of the
        // field) is enough there (DC cases iterate to 1e-7 of the voltage)
        let floor = if path.contains("error_estimate_pct") { 1e-3 } else { 0.0 };
        (tol, floor)
    };
    crate::common::agree_json(a, b, path, &["solve", "reference"], &tolerance);
}

/// The three preconditioners solve the same system to 1e-10; every
/// reported figure agrees to 1e-6 (solver tolerance; issue target: every
/// result identical to the tolerance).
#[test]
fn line_multigrid_aggregation_and_jacobi_give_the_same_results_on_every_demo_case() {
    for path in crate::common::demo_cases() {
        let p = path.to_str().unwrap();
        let lines = report(p, PreconditionerChoice::Multigrid(AmgOptions::default()));
        let amg = report(p, PreconditionerChoice::Amg(AmgOptions::default()));
        let jac = report(p, PreconditionerChoice::Jacobi);
        // real systems by CG, AC with losses by COCG
        let method = |r: &serde_json::Value| r["solve"]["method"].as_str().unwrap().to_string();
        for (r, names) in [
            (&lines, ["pcg+line", "cocg+line"]),
            (&amg, ["pcg+amg", "cocg+amg"]),
            (&jac, ["pcg+jacobi", "cocg+jacobi"]),
        ] {
            assert!(names.iter().any(|m| method(r).starts_with(m)), "{p}: {}", method(r));
        }
        // shown with a failure: which case
        eprintln!("{p}");
        agree(&lines, &jac, 1e-6, "");
        agree(&amg, &jac, 1e-6, "");
    }
}

fn square_case(n: usize, thin_film: bool) -> hvstack::Prepared {
    let mut yaml = String::from(
        "
title: square
geometry: planar
domain: { x: [0, 100], y: [0, 100] }
background: upper
materials:
  upper: { permittivity: 1.0, source: test }
  lower: { permittivity: 4.0, source: test }
  disc: { permittivity: 80.0, source: test }
parts:
  - { name: lower, material: lower, shape: { rect: { x: [0, 100], y: [0, 50] } } }
  - { name: disc, material: disc, shape: { circle: { center: [50, 50], radius: 15 } } }
  - { name: bottom, electrode: { potential_kv: 0 }, shape: { rect: { x: [0, 100], y: [0, 0] } } }
  - { name: top, electrode: { potential_kv: 1 }, shape: { rect: { x: [0, 100], y: [100, 100] } } }
  - { name: foil, electrode: floating, shape: { rect: { x: [25, 75], y: [75, 75] } } }
",
    );
    if thin_film {
        yaml += "  - { name: film, material: disc, shape: { rect: { x: [0, 100], y: [30, 30.02] } } }\n";
    }
    let case = hvstack::case::parse(&yaml, "square.yaml").unwrap();
    if thin_film {
        // the default graded grid: cells 0.0025 mm high under 1.25 mm wide ones
        return hvstack::prepare(case, "square.yaml", &hvstack::Options::default()).unwrap();
    }
    let axis: Vec<f64> = (0..n).map(|i| 0.1 * i as f64 / (n - 1) as f64).collect();
    hvstack::prepare_on_grid(case, "square.yaml", hvstack::grid::Grid { x: axis.clone(), y: axis }).unwrap()
}

/// Iterations stay roughly flat across sizes, with an 80 : 1 contrast, a
/// floating electrode and cells of aspect ratio above 50 (issue target:
/// iteration count roughly flat). Aggregation: 30 is about twice what the
/// benchmark needs, the thin film's default grid, graded toward the foil's
/// ends as well, may take up to 36. Line multigrid: textbook multigrid
/// needs a handful of cycles for 1e-8 (Trottenberg, Oosterlee & Schüller,
/// *Multigrid*, 2001, ch. 1); we ask at most 12.
#[test]
fn multigrid_iterations_stay_flat() {
    let opts = SolveOptions { rel_tol: 1e-8, max_iterations: 1000 };
    let (mut amg_counts, mut line_counts) = (Vec::new(), Vec::new());
    for (n, thin) in [(65, false), (129, false), (257, false), (0, true)] {
        let p = square_case(n, thin);
        let (min_step, max_step) = p.grid.step_range();
        if thin {
            assert!(max_step / min_step > 50.0, "aspect {}", max_step / min_step);
        }
        let (a, b) = (&p.service.system.matrix, &p.service.system.rhs);
        let mut amg = Amg::new(a, &AmgOptions::default()).unwrap();
        let (x, rep) = pcg(a, b, &mut amg, &opts, None).unwrap();
        assert!(relative_residual(a, &x, b) <= 10.0 * opts.rel_tol);
        amg_counts.push(rep.iterations);
        let mut lines = LineMultigrid::new(p.pattern.structure(&p.grid, &p.service.stencil), a.rows()).unwrap();
        let (x, rep) = pcg(a, b, &mut lines, &opts, None).unwrap();
        assert!(relative_residual(a, &x, b) <= 10.0 * opts.rel_tol);
        line_counts.push(rep.iterations);
    }
    eprintln!("iterations (65², 129², 257², thin film): aggregation {amg_counts:?}, lines {line_counts:?}");
    assert!(amg_counts[..3].iter().all(|&c| c <= 30), "{amg_counts:?}");
    assert!(amg_counts[3] <= 36, "{amg_counts:?}");
    assert!(line_counts.iter().all(|&c| c <= 12), "{line_counts:?}");
}

/// The geometric multigrid's lattice operator is the system's matrix:
/// A = Eᵀ·L·E with E copying each unknown to its points (a floating
/// electrode's to all of its nodes), on every demo case (identity of the
/// assembly, exact up to rounding).
#[test]
fn the_lattice_operator_embeds_the_matrix_on_every_demo_case() {
    for path in crate::common::demo_cases() {
        let text = std::fs::read_to_string(&path).unwrap();
        let case = hvstack::case::parse(&text, "case.yaml").unwrap();
        let p = hvstack::prepare(case, "case.yaml", &hvstack::Options::default()).unwrap();
        let ev = &p.service;
        let s = p.pattern.structure(&p.grid, ev.system_stencil());
        let a = &ev.system.matrix;
        let n = a.rows();
        let u: Vec<f64> = (0..n).map(|k| ((k * 7 + 3) % 11) as f64 - 5.0).collect();
        let mut full = vec![0.0; s.lattice.points()];
        for (r, &q) in s.embedding.points.iter().enumerate() {
            full[q as usize] = u[r];
        }
        let singles = s.embedding.points.len();
        for (g, points) in s.embedding.groups.iter().enumerate() {
            points.iter().for_each(|&q| full[q as usize] = u[singles + g]);
        }
        let mut lu = vec![0.0; full.len()];
        s.lattice.apply(&full, &mut lu);
        let mut au = vec![0.0; n];
        hvstack::solve::matvec(a, &u, &mut au);
        let mut etlu: Vec<f64> = s.embedding.points.iter().map(|&q| lu[q as usize]).collect();
        etlu.extend(s.embedding.groups.iter().map(|points| points.iter().map(|&q| lu[q as usize]).sum::<f64>()));
        let scale = au.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        // a group's row sums its nodes' rows, which include the stiff ties
        // (1e4 of the largest conductance): rounding of those sums
        let tie = hvstack::assemble::GROUP_TIE * f64::EPSILON * 1e3;
        for (r, (x, y)) in etlu.iter().zip(&au).enumerate() {
            let tol = if r < singles { 1e-12 } else { tie };
            assert!((x - y).abs() <= tol * scale, "{}: row {r}: {x:e} vs {y:e}", path.display());
        }
    }
}

/// A lattice that does not fit the system (here: one unknown too many)
/// leaves the line multigrid unbuilt; the solve falls back to aggregation
/// and says so, and the answer meets the tolerance.
#[test]
fn a_lattice_that_does_not_fit_falls_back_to_aggregation() {
    let p = square_case(33, false);
    let (a, b) = (&p.service.system.matrix, &p.service.system.rhs);
    let mut structure = p.pattern.structure(&p.grid, &p.service.stencil);
    structure.embedding.groups.push(vec![0]);
    let cfg = SolverConfig {
        options: SolveOptions { rel_tol: 1e-8, max_iterations: 1000 },
        preconditioner: PreconditionerChoice::Multigrid(AmgOptions::default()),
    };
    let (x, rep) = Solver::structured(a, structure, &cfg).solve(b).unwrap();
    assert!(rep.method.starts_with("pcg+amg") && rep.method.contains("line multigrid setup failed"), "{}", rep.method);
    // the tolerance asked for (1e-8) with the factor the true residual may drift, common practice
    assert!(relative_residual(a, &x, b) <= 1e-7);
    let (_, rep) = Solver::structured(a, p.pattern.structure(&p.grid, &p.service.stencil), &cfg).solve(b).unwrap();
    assert!(rep.method.starts_with("pcg+line multigrid"), "{}", rep.method);
}

use hvstack::solve::gallery::laplace_1d;

/// A hierarchy that cannot coarsen (every coupling weak) falls back to
/// Jacobi and says so; the answer still meets the tolerance.
#[test]
fn a_failed_hierarchy_falls_back_and_says_so() {
    let a = laplace_1d(5000);
    let b = vec![1.0; 5000];
    let bad = AmgOptions { strength_threshold: 1e9, ..AmgOptions::default() };
    let cfg = SolverConfig {
        options: SolveOptions { rel_tol: 1e-8, max_iterations: 20_000 },
        preconditioner: PreconditionerChoice::Amg(bad),
    };
    let (x, rep) = solve(&a, &b, &cfg).unwrap();
    assert!(rep.method.contains("fallback"), "{}", rep.method);
    // the tolerance asked for (1e-8) with the factor the true residual may drift, common practice
    assert!(relative_residual(&a, &x, &b) <= 1e-7);
    let good = SolverConfig { preconditioner: PreconditionerChoice::Amg(AmgOptions::default()), ..cfg };
    let (_, rep) = solve(&a, &b, &good).unwrap();
    assert!(rep.method.starts_with("pcg+amg"), "{}", rep.method);
    let (_, rep) = pcg(&a, &b, &mut Jacobi::new(&a), &cfg.options, None).unwrap();
    assert_eq!(rep.method, "pcg+jacobi");
}

/// An indefinite matrix is an error, never an answer, whichever path runs.
#[test]
fn an_indefinite_matrix_is_an_error_after_fallback() {
    let mut t = TriMat::new((3, 3));
    t.add_triplet(0, 0, 1.0);
    t.add_triplet(1, 1, -1.0);
    t.add_triplet(2, 2, 1.0);
    let a: Matrix = t.to_csr::<usize>().to_other_types();
    assert!(solve(&a, &[1.0, 1.0, 1.0], &config(PreconditionerChoice::Amg(AmgOptions::default()))).is_err());
}
