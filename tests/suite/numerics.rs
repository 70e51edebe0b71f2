//! Numerical properties of the discretisation and the solver: observed
//! convergence order, agreement with an independent dense solver, symmetry,
//! residuals and the maximum principle.

use hvstack::assemble::{Constraint, Factors, Pattern, Stencil};
use hvstack::case::{Geometry, GridSpec};
use hvstack::grid::{Grid, graded_axis};
use hvstack::solve::{Jacobi, SolveOptions, pcg, relative_residual};
use nalgebra::{DMatrix, DVector};

const TIGHT: SolveOptions = SolveOptions { rel_tol: 1e-13, max_iterations: 100_000 };

/// Solves div(grad φ) = 0 with φ = exact on the boundary nodes (except the
/// axis in axisymmetric cases, which is a natural zero-flux boundary) and
/// returns the largest nodal error.
fn max_error(grid: &Grid, geometry: Geometry, exact: impl Fn(f64, f64) -> f64) -> f64 {
    let stencil = Stencil::build(grid, &Factors::new(grid, geometry), |_| Some([1.0; 4]));
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut cons = vec![Constraint::Free; grid.nodes()];
    // each boundary node is a fixed potential of its own
    let mut potentials = Vec::new();
    for j in 0..ny {
        for i in 0..nx {
            let on_axis = geometry == Geometry::Axisymmetric && i == 0;
            if (i == nx - 1 || j == 0 || j == ny - 1 || i == 0) && !(on_axis && j > 0 && j < ny - 1) {
                cons[grid.node(i, j).0] = Constraint::Fixed(potentials.len() as u32);
                potentials.push(exact(grid.x[i], grid.y[j]));
            }
        }
    }
    let pattern = Pattern::new(grid, &stencil, &cons).unwrap();
    let sys = pattern.system(grid, &stencil, &potentials);
    let (u, _) = pcg(&sys.matrix, &sys.rhs, &mut Jacobi::new(&sys.matrix), &TIGHT, None).unwrap();
    let phi = pattern.expand(&u, &potentials);
    (0..grid.nodes())
        .map(|n| {
            let [x, y] = grid.node_pos(hvstack::grid::NodeIx(n));
            (phi[n] - exact(x, y)).abs()
        })
        .fold(0.0, f64::max)
}

/// Nested graded grids on [0, 1]²: a graded base grid (steps growing by
/// 1.3 away from a thin feature at 0.10–0.13), then each step halved
/// `level` times, so every level has the same grading pattern.
fn graded_grid(level: u32) -> Grid {
    let spec = GridSpec { max_step: 0.125, min_step: 1e-9, cells_across: 2, growth: 1.3 };
    let mut v = graded_axis(0.0, 1.0, &[0.1, 0.13], &spec);
    for _ in 0..level {
        let mut w: Vec<f64> = v.windows(2).flat_map(|p| [p[0], 0.5 * (p[0] + p[1])]).collect();
        w.push(1.0);
        v = w;
    }
    Grid { x: v.clone(), y: v }
}

fn observed_orders(errors: &[f64]) -> Vec<f64> {
    errors.windows(2).map(|w| (w[0] / w[1]).log2()).collect()
}

/// The 5-point box-integration scheme is second-order accurate for smooth
/// solutions (common practice; e.g. LeVeque, Finite Difference Methods for
/// ODEs and PDEs, SIAM 2007, ch. 3).
#[test]
fn planar_scheme_converges_at_second_order() {
    // e^{πx}·sin(πy) is harmonic (common practice)
    let exact = |x: f64, y: f64| (std::f64::consts::PI * x).exp() * (std::f64::consts::PI * y).sin();
    let errors: Vec<f64> = (0..4).map(|l| max_error(&graded_grid(l), Geometry::Planar, exact)).collect();
    let orders = observed_orders(&errors);
    eprintln!("errors {errors:?}, orders {orders:?}");
    assert!(orders.iter().all(|p| (*p - 2.0).abs() < 0.1), "errors {errors:?}, orders {orders:?}");
}

/// The r-weighted axisymmetric scheme, axis included, is second-order
/// accurate too. 1/|x − x0| with x0 = (0, −0.5) off the domain is harmonic in
/// 3D and axisymmetric (potential of a point charge, common practice).
#[test]
fn axisymmetric_scheme_converges_at_second_order() {
    let exact = |r: f64, z: f64| 1.0 / (r * r + (z + 0.5) * (z + 0.5)).sqrt();
    let errors: Vec<f64> = (0..4).map(|l| max_error(&graded_grid(l), Geometry::Axisymmetric, exact)).collect();
    let orders = observed_orders(&errors);
    eprintln!("errors {errors:?}, orders {orders:?}");
    assert!(orders.iter().all(|p| (*p - 2.0).abs() < 0.1), "errors {errors:?}, orders {orders:?}");
}

fn small_cases() -> Vec<&'static str> {
    vec![
        "
title: dense check planar
geometry: planar
domain: { x: [0, 20], y: [0, 12] }
grid: { max_step: 1.0, cells_across: 2 }
parts:
  - { name: slab, material: glass, shape: { rect: { x: [2, 18], y: [0, 5] } } }
  - { name: ground, electrode: { potential_kv: 0 }, shape: { rect: { x: [0, 20], y: [0, 0] } } }
  - { name: bar, electrode: { potential_kv: 5 }, shape: { rect: { x: [8, 12], y: [5, 7] } } }
  - { name: foil, electrode: floating, shape: { rect: { x: [3, 7], y: [3, 3] } } }
",
        "
title: dense check axisymmetric
geometry: axisymmetric
domain: { x: [0, 15], y: [0, 15] }
grid: { max_step: 1.0, cells_across: 2 }
parts:
  - { name: sleeve, material: porcelain, shape: { rect: { x: [4, 9], y: [2, 13] } } }
  - { name: rod, electrode: { potential_kv: 12 }, shape: { rect: { x: [0, 3], y: [0, 15] } } }
  - { name: ring, electrode: floating, shape: { rect: { x: [6, 6], y: [5, 10] } } }
  - { name: tank, electrode: { potential_kv: 0 }, shape: { rect: { x: [15, 15], y: [0, 15] } } }
",
    ]
}

/// Independent check: the same matrix solved by a dense Cholesky
/// factorisation (nalgebra) agrees with PCG to near machine precision.
#[test]
fn pcg_agrees_with_a_dense_direct_solve() {
    for yaml in small_cases() {
        let case = hvstack::case::parse(yaml, "dense.yaml").unwrap();
        let prepared = hvstack::prepare(case, "dense.yaml", &hvstack::Options::default()).unwrap();
        let a = &prepared.service.system.matrix;
        let n = a.rows();
        assert!(n < 700, "keep the dense test small: {n}");
        let dense = DMatrix::from_fn(n, n, |i, j| a.get(i, j).copied().unwrap_or(0.0));
        assert_eq!(dense, dense.transpose(), "the assembled matrix is symmetric");
        let b = DVector::from_vec(prepared.service.system.rhs.clone());
        let direct = dense.clone().cholesky().expect("symmetric positive definite").solve(&b);
        let (u, rep) = pcg(a, &prepared.service.system.rhs, &mut Jacobi::new(a), &TIGHT, None).unwrap();
        let scale = b.amax().max(1.0);
        let direct_res = (&b - &dense * &direct).amax() / scale;
        // round-off of a dense factorisation: a few hundred ulps of the data (common practice)
        assert!(direct_res < 1e-12, "dense residual {direct_res}");
        let diff = u.iter().zip(direct.iter()).map(|(p, q)| (p - q).abs()).fold(0.0, f64::max);
        let vmax = 12e3;
        assert!(diff < 1e-9 * vmax, "PCG vs dense: {diff} V");
        assert!(rep.relative_residual <= 10.0 * TIGHT.rel_tol);
        assert!(relative_residual(a, &u, &prepared.service.system.rhs) <= 10.0 * TIGHT.rel_tol);
    }
}

/// Maximum principle: without space charge, potentials lie between the
/// lowest and highest electrode potentials (common practice).
#[test]
fn potentials_obey_the_maximum_principle_on_every_demo_case() {
    for path in crate::common::demo_cases() {
        let text = std::fs::read_to_string(&path).unwrap();
        let file = path.display().to_string();
        let opts = hvstack::Options::default();
        let prepared = hvstack::prepare(hvstack::case::parse(&text, &file).unwrap(), &file, &opts).unwrap();
        let sol = prepared.solve(&opts.solve).unwrap();
        let fixed: Vec<f64> = prepared
            .case
            .electrodes()
            .filter_map(|(_, _, k)| match k {
                hvstack::case::ElectrodeKind::Fixed { potential_v } => Some(potential_v),
                _ => None,
            })
            .collect();
        let lo = fixed.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = fixed.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let tol = 1e-8 * (hi - lo);
        assert!(sol.phi.iter().all(|p| *p >= lo - tol && *p <= hi + tol), "{file}");
    }
}

/// `grid.refine` and `grid.boxes` do what they say: steps inside a box's
/// rows and columns stay at or below its max_step, and refining by 2 roughly
/// doubles the nodes along each axis (definitions of the case format).
#[test]
fn refinement_controls_shape_the_grid() {
    let base = "
title: box
stack:
  form: planar
  voltage_kv: 5
  width: 20
  layers: [ { material: ptfe, thickness: 5 } ]
";
    let grid_of = |extra: &str| {
        let case = hvstack::case::parse(&format!("{base}{extra}"), "g.yaml").unwrap();
        hvstack::grid::Grid::for_case(&case, &hvstack::grid::GridLimits { max_nodes: 10_000_000 }).unwrap()
    };
    let plain = grid_of("");
    let refined = grid_of("grid: { refine: 2 }\n");
    let ratio = (refined.nx() - 1) as f64 / (plain.nx() - 1) as f64;
    assert!((ratio - 2.0).abs() < 0.1, "{ratio}");
    let boxed = grid_of("grid: { boxes: [ { x: [5, 6], y: [1, 2], max_step: 0.01 } ] }\n");
    for w in boxed.x.windows(2) {
        if w[0] >= 0.005 - 1e-12 && w[1] <= 0.006 + 1e-12 {
            assert!(w[1] - w[0] <= 0.01e-3 * (1.0 + 1e-9), "step {}", w[1] - w[0]);
        }
    }
    assert!(boxed.x.iter().any(|x| (x - 0.005).abs() < 1e-12) && boxed.y.iter().any(|y| (y - 0.002).abs() < 1e-12));
}

/// Probes between grid lines are second-order accurate inside a region:
/// each field component is interpolated bilinearly from the edge midpoints
/// where it is known. A rod over a plane (probes off every grid line): on
/// the default grid both probes lie within 0.25 % of the same case on a
/// grid 4 times finer (self-convergence, common practice); taking the
/// field constant along each cell edge (first order) was 2.5 % off at the
/// side probe.
#[test]
fn probes_between_grid_lines_converge() {
    let text = |refine: u32| {
        format!(
            "
title: rod over a plane
geometry: planar
domain: {{ x: [-30, 30], y: [0, 30] }}
grid: {{ refine: {refine} }}
parts:
  - {{ name: plane, electrode: {{ potential_kv: 0 }}, shape: {{ rect: {{ x: [-30, 30], y: [0, 0] }} }} }}
  - {{ name: rod, electrode: {{ potential_kv: 1 }}, shape: {{ circle: {{ center: [0, 6], radius: 2 }} }} }}
probes:
  - {{ name: gap, at: [3.3, 2.7] }}
  - {{ name: side, at: [-5.1, 9.4] }}
"
        )
    };
    let probes = |refine: u32| -> Vec<f64> {
        let r = hvstack::check(&text(refine), "rod.yaml", &hvstack::Options::default()).expect("case evaluates");
        r.probes.iter().map(|p| p.e_kv_per_mm).collect()
    };
    let (coarse, fine) = (probes(1), probes(4));
    for (c, f) in coarse.iter().zip(&fine) {
        assert!(((c - f) / f).abs() < 2.5e-3, "{c} vs {f}");
    }
}
