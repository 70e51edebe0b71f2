//! The mesh self-check as an engineer meets it.

use hvstack::report::VerdictOut;

fn run(yaml: &str) -> hvstack::report::CheckReport {
    hvstack::check(yaml, "test.yaml", &hvstack::Options::default()).expect("case evaluates")
}

/// A sharp electrode edge on a board: the field at an ideal 90° corner is
/// unbounded (E ∝ ρ^(-1/3), Jackson, Classical Electrodynamics, 3rd ed.
/// 1999, §2.11), so the peak is flagged and the verdict is never a plain
/// pass, even with every margin ample (issue contract).
#[test]
fn a_sharp_electrode_edge_is_flagged_and_never_passes() {
    let r = run("
title: track on a board
geometry: planar
domain: { x: [0, 40], y: [0, 20] }
parts:
  - { name: board, material: glass, shape: { rect: { x: [0, 40], y: [0, 3] } } }
  - { name: ground plane, electrode: { potential_kv: 0 }, shape: { rect: { x: [0, 40], y: [0, 0] } } }
  - { name: track, electrode: { potential_kv: 0.5 }, shape: { rect: { x: [15, 25], y: [3, 3.2] } } }
");
    let board = r.parts.iter().find(|p| p.name == "board").unwrap();
    assert!(board.margin.unwrap() > 2.0, "margin is ample: {:?}", board.margin);
    assert!(r.findings.iter().any(|f| f.code == "singular-peak" && f.part.as_deref() == Some("board")));
    assert_ne!(r.verdict, VerdictOut::Pass);
}

/// A uniform field has the same peak on every grid: a zero error estimate
/// and no mesh findings (series-capacitor field, common practice).
#[test]
fn a_uniform_field_needs_no_mesh_warning() {
    let r = run("
title: flat
stack:
  form: planar
  voltage_kv: 5
  layers:
    - { name: a, material: ptfe, thickness: 1 }
    - { name: b, material: mica, thickness: 0.5 }
");
    for p in &r.parts {
        assert_eq!(p.e_max_error_estimate_pct, Some(0.0), "{}", p.name);
        assert!(!p.e_max_grows_with_refinement);
    }
    assert!(r.findings.iter().all(|f| !f.code.starts_with("mesh") && f.code != "singular-peak"));
    assert_eq!(r.mesh_check.as_ref().map(|m| m.nodes.len()), Some(3));
}

/// Rounding the corners of the same bar (a polygon with `fillet`) gives a
/// peak that converges: no singular-peak finding and a small error estimate
/// (the advice the finding gives, followed). The bar is embedded in a
/// solid: a gas around it would be judged by its inception level instead.
#[test]
fn a_filleted_corner_converges() {
    let bar = |shape: &str| {
        run(&format!(
            "
title: bar over a plane
geometry: planar
domain: {{ x: [0, 40], y: [0, 30] }}
background: silicone-rubber
parts:
  - {{ name: ground, electrode: {{ potential_kv: 0 }}, shape: {{ rect: {{ x: [0, 40], y: [0, 0] }} }} }}
  - {{ name: bar, electrode: {{ potential_kv: 10 }}, shape: {shape} }}
"
        ))
    };
    let sharp = bar("{ polygon: [[15, 10], [25, 10], [25, 16], [15, 16]] }");
    assert!(sharp.findings.iter().any(|f| f.code == "singular-peak"));
    let round = bar("{ polygon: [[15, 10], [25, 10], [25, 16], [15, 16]], fillet: 1.5 }");
    assert!(
        !round.findings.iter().any(|f| f.code == "singular-peak" || f.code == "mesh-sensitive"),
        "{:?}",
        round.findings
    );
    let p = &round.parts[0];
    assert!(p.e_max_error_estimate_pct.unwrap() < 2.0);
    // The sharp bar's number is not comparable: it depends on the grid (and
    // on the default grid it can fall below the rounded bar's converged peak).
    assert!(sharp.parts[0].e_max_grows_with_refinement || sharp.findings.iter().any(|f| f.code == "singular-peak"));
}
