//! Grids graded toward singular points, and the points described without
//! the grid: the strip-on-board acceptance figures, convergence order near
//! a 90° corner, exponents against the closed forms, error bars that cover
//! the true error, and a part judged away from the point.

use crate::common::{part, rel, run};
use hvstack::grid::{Grading, Grid, GridPlan};

/// A 35 µm × 3 mm copper strip on a 1.6 mm FR-4 board (εr 4.4) over a
/// ground plane, in air; probes 2 mm beyond the strip's edge in the board
/// and in the air (the case that showed the pollution of a singular edge).
fn strip(grid: &str) -> String {
    format!(
        "
title: thin strip on a board
geometry: planar
domain: {{ x: [0, 20], y: [0, 8] }}
background: air
grid: {grid}
materials:
  fr4: {{ permittivity: 4.4, strength_kv_per_mm: 20, strength_basis: rms, source: test value }}
parts:
  - {{ name: board, material: fr4, shape: {{ rect: {{ x: [0, 20], y: [0, 1.6] }} }} }}
  - {{ name: ground, electrode: {{ potential_kv: 0 }}, shape: {{ rect: {{ x: [0, 20], y: [0, 0] }} }} }}
  - {{ name: strip, electrode: {{ potential_kv: 1 }}, shape: {{ rect: {{ x: [5, 8], y: [1.6, 1.635] }} }} }}
probes:
  - {{ name: board, at: [10, 1.0] }}
  - {{ name: air, at: [10, 2.0] }}
"
    )
}

fn capacitance(r: &hvstack::report::CheckReport) -> f64 {
    r.capacitance.as_ref().expect("two fixed potentials").value
}

/// Issue acceptance figure: on the default grid the fields 2 mm beyond the
/// edge are within 1 % and the capacitance within 0.5 % of a converged
/// reference (the same case on a grid 4 times finer, which is within 0.1 %
/// of the Richardson limit of refine 2, 4, 8: measured), without the node
/// count more than doubling against the ungraded grid. The estimates of
/// the self-check cover those true errors.
#[test]
fn strip_on_board_meets_the_acceptance_figures() {
    let default = run(&strip("{}"));
    let reference = run(&strip("{ refine: 4 }"));
    for (p, r) in default.probes.iter().zip(&reference.probes) {
        let error = rel(p.e_kv_per_mm, r.e_kv_per_mm);
        assert!(error < 0.01, "probe {}: {error}", p.name);
        assert!(p.e_error_estimate_pct.unwrap() / 100.0 >= error, "probe {} estimate", p.name);
    }
    let c_error = rel(capacitance(&default), capacitance(&reference));
    assert!(c_error < 0.005, "capacitance {c_error}");
    assert!(default.energy_error_estimate_pct.unwrap() / 100.0 >= c_error);

    let case = hvstack::case::parse(&strip("{}"), "strip.yaml").unwrap();
    let plain = GridPlan { grading: Grading { factor: 1.0 }, coarsening: 1.0 };
    let ungraded = Grid::planned(&case, &hvstack::Options::default().limits, plain).unwrap().nodes();
    assert!(default.grid.nodes <= 2 * ungraded, "{} against {ungraded}", default.grid.nodes);
    assert!(default.grid.nodes > ungraded, "the default grid is graded");
}

/// The strip's singular points: the corners on the board are triple points
/// whose drawn wedges (air 90°, board 180°) give λ = (2/π)·atan√(1 +
/// 2ε_air/ε_board) = 0.5593 for εr 4.4 (issue check value, derived after
/// Meixner 1972); the top corners, in air only, lie 35 µm away and merge
/// into them. (The fitted exponent is reported but not checked here: from
/// 0.1 to 1 mm the field of a 35 µm strip over a 1.6 mm board follows its
/// thickness and the board, not the corner's own r^(λ−1); the bar below
/// checks the fit.)
#[test]
fn strip_edges_are_triple_points_with_the_closed_form_exponents() {
    let r = run(&strip("{}"));
    assert_eq!(r.singular_points.len(), 2, "{:?}", r.singular_points);
    for s in &r.singular_points {
        assert_eq!(s.kind, "triple-point");
        assert_eq!(s.electrode, "strip");
        assert_eq!(s.parts, ["background", "board"]);
        assert!((s.exponent_drawn.unwrap() - 0.5593).abs() < 2e-3, "{:?}", s.exponent_drawn);
        assert!(s.exponent_fitted.is_some());
        assert_eq!(s.distances_mm, [0.1, 1.0]);
        let [e1, e2] = s.e_at_distances_kv_per_mm.map(Option::unwrap);
        assert!(e1 > e2);
        // settled: the estimate of each is small
        for x in s.e_at_distances_error_estimate_pct {
            assert!(x.unwrap() < 5.0, "{x:?}");
        }
    }
    // the board's peak sits at a singular point: it is judged 0.1 mm away
    let board = part(&r, "board");
    assert!(board.e_max_judged_kv_per_mm < board.e_max_kv_per_mm);
    let margin = board.strength_kv_per_mm.unwrap() / board.e_max_judged_kv_per_mm;
    assert!(rel(board.margin.unwrap(), margin) < 1e-12);
    assert!(r.findings.iter().any(|f| f.code == "singular-peak" && f.message.contains("triple point")));
}

/// A square bar in silicone over a plane: near its 90° corners the field
/// goes as r^(−1/3), which on uniform grids holds the capacitance to order
/// 2λ = 4/3 (measured 1.33 from refine 1, 2, 4, 8 without grading; Strang &
/// Fix, *An Analysis of the Finite Element Method*, 1973, from memory). On
/// the graded grids the order is back near the scheme's 2 (measured 2.1
/// and 1.8), and a probe 1 mm off the corner is within 0.2 % on the default
/// grid (2.9 % ungraded).
fn bar(refine: u32) -> hvstack::report::CheckReport {
    run(&format!(
        "
title: square bar in a solid over a plane
geometry: planar
domain: {{ x: [0, 40], y: [0, 30] }}
background: silicone-rubber
grid: {{ refine: {refine} }}
parts:
  - {{ name: ground, electrode: {{ potential_kv: 0 }}, shape: {{ rect: {{ x: [0, 40], y: [0, 0] }} }} }}
  - {{ name: bar, electrode: {{ potential_kv: 10 }}, shape: {{ rect: {{ x: [15, 25], y: [10, 16] }} }} }}
probes:
  - {{ name: off corner, at: [14.3, 9.3] }}
"
    ))
}

#[test]
fn graded_grids_converge_at_the_regular_rate_near_a_right_angle() {
    let runs: Vec<_> = [1, 2, 4].into_iter().map(bar).collect();
    let c: Vec<f64> = runs.iter().map(capacitance).collect();
    let order = ((c[0] - c[1]) / (c[1] - c[2])).ln() / 2f64.ln();
    assert!(order > 1.7, "capacitance order {order} ({c:?})");
    // the probe off the corner: within 0.3 % of refine 4 on the default grid
    let e: Vec<f64> = runs.iter().map(|r| r.probes[0].e_kv_per_mm).collect();
    assert!(rel(e[0], e[2]) < 0.003, "{e:?}");
    // the four corners are electrode edges of the drawn λ = 2/3
    let s = &runs[0].singular_points;
    assert_eq!(s.len(), 4, "{s:?}");
    for p in s {
        assert_eq!(p.kind, "electrode-edge");
        assert!((p.exponent_drawn.unwrap() - 2.0 / 3.0).abs() < 1e-9);
        assert!((p.exponent_fitted.unwrap() - 2.0 / 3.0).abs() < 0.02, "{:?}", p.exponent_fitted);
    }
}

/// A wire of radius a = 1 mm with its axis h = 10 mm over a plane at
/// 10 kV: E_max = V·√(h² − a²)/(a·(h − a)·acosh(h/a)) and C = 2πε0/acosh(h/a)
/// per metre (line-charge images; Kuffel, Zaengl & Kuffel, *High Voltage
/// Engineering Fundamentals*, 2000). Drawn as a circle, and as a foil of
/// length 2a whose two beads (`edge_radius: a`) are that circle: the bead
/// machinery gives the closed form as the circle does.
fn wire(shape: &str) -> hvstack::report::CheckReport {
    run(&format!(
        "
title: wire over a plane
geometry: planar
domain: {{ x: [-100, 100], y: [0, 100] }}
background: air
parts:
  - {{ name: plane, electrode: {{ potential_kv: 0 }}, shape: {{ rect: {{ x: [-100, 100], y: [0, 0] }} }} }}
  - {{ name: wire, electrode: {{ potential_kv: 10 }}, shape: {shape} }}
"
    ))
}

#[test]
fn a_beaded_foil_end_has_the_field_of_its_bead() {
    let (h, a, v) = (10.0f64, 1.0f64, 10.0f64);
    let e_exact = v * (h * h - a * a).sqrt() / (a * (h - a) * (h / a).acosh());
    let c_exact = 2.0 * std::f64::consts::PI * 8.8541878128 / (h / a).acosh();
    let bead = wire("{ rect: { x: [-1, 1], y: [10, 10], edge_radius: 1 } }");
    let circle = wire("{ circle: { center: [0, 10], radius: 1 } }");
    for r in [&bead, &circle] {
        let e = part(r, "background").e_max_kv_per_mm;
        // the domain's zero-flux sides and top move the closed form by a few 0.1 %
        assert!(rel(e, e_exact) < 0.006, "{e} against {e_exact}");
        assert!(rel(capacitance(r), c_exact) < 0.004, "{} against {c_exact}", capacitance(r));
    }
    assert!(rel(part(&bead, "background").e_max_kv_per_mm, part(&circle, "background").e_max_kv_per_mm) < 0.006);
    // a beaded foil has no singular point
    assert!(bead.singular_points.is_empty());
    assert!(!bead.findings.iter().any(|f| f.code == "singular-peak"));
}

/// The condenser demo's three beaded foils (0.5 mm) leave only the sleeve's
/// sharp ends singular, and the grid stays local: 54 448 nodes measured,
/// where the same foils drawn 1 mm thick with rounded ends (`radius: 0.5`)
/// take 230 181 and boxes around the beads gave 260 000 (both measured).
#[test]
fn beaded_foils_are_not_singular_and_grade_locally() {
    let text = std::fs::read_to_string("cases/condenser-foils.yaml").unwrap();
    assert!(text.contains("edge_radius"));
    let r = run(&text);
    assert!(r.singular_points.iter().all(|s| s.electrode == "flange sleeve"), "{:?}", r.singular_points);
    assert_eq!(r.singular_points.len(), 2);
    assert!(r.grid.nodes < 100_000, "{}", r.grid.nodes);
}
