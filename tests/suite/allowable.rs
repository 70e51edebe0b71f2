//! The allowable level (`allowable_kv`): the largest level of the fixed
//! potentials, scaled together, at which every part keeps its margin.

use crate::common::{part, rel, run};

/// Two series layers, εr 2 and 4, 1 mm each, 10 kV: E_k = U/(ε_k·Σ d_j/ε_j)
/// = 6.667 and 3.333 kV/mm (series divider, common practice); a layer keeps
/// its safety factor up to U·strength/(SF·E): 10·20/(2·6.667) = 15 kV and
/// 10·30/(2·3.333) = 45 kV, so the stack allows 15 kV, set by the first
/// (a static case: peak values, strengths given as peak values).
#[test]
fn a_series_stack_allows_what_the_series_divider_says() {
    let r = run("
title: two layers
materials:
  a: { permittivity: 2.0, strength_kv_per_mm: 20, strength_basis: peak, source: test value }
  b: { permittivity: 4.0, strength_kv_per_mm: 30, strength_basis: peak, source: test value }
stack:
  form: planar
  voltage_kv: 10
  layers:
    - { name: low, material: a, thickness: 1 }
    - { name: high, material: b, thickness: 1 }
");
    assert!(rel(part(&r, "low").allowable_kv.unwrap(), 15.0) < 1e-6);
    assert!(rel(part(&r, "high").allowable_kv.unwrap(), 45.0) < 1e-6);
    assert!(rel(r.allowable_kv.unwrap(), 15.0) < 1e-6);
    assert_eq!(r.allowable_limited_by.as_deref(), Some("low"));
    // a uniform field: the same on every grid of the self-check
    assert_eq!(r.allowable_error_estimate_pct, Some(0.0));
}

/// A gas layer judged by inception allows its inception level over the
/// required inception margin (1.25 by default); the solid beside it its
/// safety factor; the case the lower of the two.
#[test]
fn a_gas_part_allows_its_inception_level_over_the_inception_margin() {
    let r = run("
title: gas gap
materials:
  solid4: { permittivity: 4.0, strength_kv_per_mm: 20, strength_basis: rms, source: test value }
stack:
  form: planar
  voltage_kv: 3
  layers:
    - { name: gap, material: air, thickness: 1 }
    - { name: solid, material: solid4, thickness: 1 }
");
    let gap = part(&r, "gap");
    assert!(rel(gap.allowable_kv.unwrap(), gap.pd_inception_kv.unwrap() / 1.25) < 1e-12);
    let solid = part(&r, "solid");
    assert!(rel(solid.allowable_kv.unwrap(), 3.0 * solid.margin.unwrap() / 2.0) < 1e-12);
    assert_eq!(r.allowable_kv, Some(gap.allowable_kv.unwrap().min(solid.allowable_kv.unwrap())));
    assert_eq!(r.allowable_limited_by.as_deref(), Some("gap"));
}

/// A loaded HVDC cable (temperatures solved from the conduction loss,
/// which grows as U², and a field-dependent conductivity): the field does
/// not scale with the voltage, so the level is found by bisection of solves
/// at scaled levels. Checked against its own definition: the same case at
/// the level found keeps the safety factor (2, common practice for
/// screening), and 1 % above it does not.
#[test]
fn a_dc_field_that_does_not_scale_gets_its_level_by_bisection() {
    let text = std::fs::read_to_string("cases/hvdc-cable-loaded.yaml").unwrap();
    let r = run(&text);
    let level = r.allowable_kv.expect("a level by bisection");
    assert_eq!(r.allowable_bisection_tolerance_pct, Some(0.5));
    let wall = part(&r, "wall");
    assert_eq!(wall.allowable_kv, Some(level));
    // not the linear extrapolation from the working level
    let linear = 320.0 * wall.margin.unwrap() / 2.0;
    assert!(rel(level, linear) > 1e-3, "{level} against {linear}");
    let at = |kv: f64| {
        let case = text.replace("voltage_kv: 320", &format!("voltage_kv: {kv}"));
        assert_ne!(case, text);
        part(&run(&case), "wall").margin.unwrap()
    };
    assert!(at(level) >= 2.0, "margin {} at {level} kV", at(level));
    assert!(at(level * 1.01) < 2.0, "margin {} at {} kV", at(level * 1.01), level * 1.01);
}

/// A DC case with constant conductivities and no thermal solve is linear in
/// the voltage: its level is exact by scaling (no bisection).
#[test]
fn a_linear_dc_field_scales_exactly() {
    let r = run("
title: dc series
operation: { mode: dc }
materials:
  a: { permittivity: 2.0, conductivity_s_per_m: 1.0e-14, strength_kv_per_mm: 40, strength_basis: peak, source: test value }
  b: { permittivity: 4.0, conductivity_s_per_m: 4.0e-14, strength_kv_per_mm: 40, strength_basis: peak, source: test value }
stack:
  form: planar
  voltage_kv: 10
  layers:
    - { name: low, material: a, thickness: 1 }
    - { name: high, material: b, thickness: 1 }
");
    // resistive divider (common practice): E_low = U·σ_b/(σ_a + σ_b)/d = 8 kV/mm,
    // allowable 10·40/(2·8) = 25 kV
    assert_eq!(r.allowable_bisection_tolerance_pct, None);
    assert!(rel(r.allowable_kv.unwrap(), 25.0) < 1e-6, "{:?}", r.allowable_kv);
}
