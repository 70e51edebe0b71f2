//! Steady DC conduction: σ(T, E), the thermal solve, field inversion,
//! polarity reversal and time constants. Every check value names its
//! source beside it.

use crate::common::{part, rel, run};

/// A coaxial XLPE-like wall 10/20 mm at 100 kV DC, σ = 1e-16·exp(0.1·(T −
/// 20)) S/m, conductor at `t_conductor`, screen at 60 °C.
fn coax(t_conductor: f64) -> String {
    format!(
        "
title: dc coax
operation: {{ mode: dc }}
materials:
  wall: {{ permittivity: 2.3, conductivity_s_per_m: 1e-16, conductivity_temperature_per_k: 0.1,
          thermal_conductivity_w_per_m_k: 0.286, strength_kv_per_mm: 30, strength_basis: rms, source: check value }}
stack:
  form: coaxial
  voltage_kv: 100
  inner_radius: 10
  face_temperatures_c: [{t_conductor}, 60]
  layers:
    - {{ name: wall, material: wall, thickness: 10 }}
probes:
  - {{ name: conductor, at: [10, 0] }}
  - {{ name: screen, at: [20, 0] }}
"
    )
}

/// The closed form for σ(T) with the logarithmic temperature profile of a
/// coaxial wall (steady heat conduction without internal sources): σ ∝
/// (R/r)^γ with γ = α·ΔT/ln(R/r0), so E(r) = U·γ·r^(γ−1)/(R^γ − r0^γ)
/// (derived from J = I/(2πr) = σE; common practice for HVDC cable
/// insulation). In kV/mm with r in mm.
fn closed_form(delta_t: f64, r: f64) -> f64 {
    let gamma = 0.1 * delta_t / 2f64.ln();
    100.0 * gamma * r.powf(gamma - 1.0) / (20f64.powf(gamma) - 10f64.powf(gamma))
}

fn probe(r: &hvstack::report::CheckReport, name: &str) -> f64 {
    r.probes.iter().find(|p| p.name == name).expect("probe").e_kv_per_mm
}

/// Conductor 10 K hotter than the screen: 8.40 kV/mm at the conductor and
/// 11.41 at the screen (issue check values; closed form above), inverted
/// against the capacitive 14.43 / 7.21 kV/mm (single-layer coaxial formula,
/// common practice); just after a reversal the conductor sees
/// |8.40 − 2·14.43| = 20.46 kV/mm (superposition, issue check value).
#[test]
fn a_loaded_dc_cable_inverts_its_field_and_a_reversal_adds_the_capacitive_change() {
    let r = run(&coax(70.0));
    assert!(rel(closed_form(10.0, 10.0), 8.40) < 1e-3 && rel(closed_form(10.0, 20.0), 11.41) < 1e-3);
    let w = part(&r, "wall");
    // the peaks are recovered on the surfaces: the conductor's resistive
    // field is 2·E_capacitive − E_reversal there
    let at_conductor = 2.0 * w.e_max_capacitive_kv_per_mm.unwrap() - w.reversal_e_max_kv_per_mm.unwrap();
    assert!(rel(at_conductor, closed_form(10.0, 10.0)) < 3e-3, "{at_conductor}");
    // probes take the field of the cell beside the point (first order where
    // σ varies across the cell): within 1.5 % on the default grid
    assert!(rel(probe(&r, "conductor"), closed_form(10.0, 10.0)) < 0.015, "{}", probe(&r, "conductor"));
    assert!(rel(probe(&r, "screen"), closed_form(10.0, 20.0)) < 0.015, "{}", probe(&r, "screen"));
    assert!(rel(w.e_max_kv_per_mm, 11.41) < 3e-3, "{}", w.e_max_kv_per_mm);
    assert!((w.e_max_at_mm[0] - 20.0).abs() < 1e-6, "peak at the screen: {:?}", w.e_max_at_mm);
    assert!(rel(w.e_max_capacitive_kv_per_mm.unwrap(), 100.0 / (10.0 * 2f64.ln())) < 2e-3);
    assert!(rel(w.reversal_e_max_kv_per_mm.unwrap(), 20.46) < 3e-3, "{:?}", w.reversal_e_max_kv_per_mm);
    let [lo, hi] = w.temperature_range_c.unwrap();
    assert!((lo - 60.0).abs() < 1e-6 && (hi - 70.0).abs() < 1e-6, "{lo} {hi}");
    assert!(r.findings.iter().any(|f| f.code == "field-inversion" && f.part.as_deref() == Some("wall")));
    assert_eq!(r.operation.mode, "dc");
    assert!(r.capacitance.is_none(), "a DC field gives no capacitance");
}

/// At ΔT = ln 2/α = 6.93 K the conductivity gradient cancels the
/// geometry: the field is uniform, U/d = 10 kV/mm (issue check value; γ = 1
/// in the closed form).
#[test]
fn at_the_balancing_temperature_difference_the_field_is_uniform() {
    let r = run(&coax(60.0 + 2f64.ln() / 0.1));
    let w = part(&r, "wall");
    assert!(rel(w.e_max_kv_per_mm, 10.0) < 3e-3, "{}", w.e_max_kv_per_mm);
    assert!(rel(w.e_mean_kv_per_mm, 10.0) < 3e-3, "{}", w.e_mean_kv_per_mm);
}

/// Equal temperatures: σ uniform, so the resistive field is the capacitive
/// one, 14.43 / 7.21 kV/mm (single-layer coaxial formula, common
/// practice), and there is no inversion.
#[test]
fn at_equal_temperatures_the_dc_field_is_the_capacitive_one() {
    let r = run(&coax(60.0));
    assert!(rel(probe(&r, "conductor"), 14.43) < 3e-3, "{}", probe(&r, "conductor"));
    assert!(rel(probe(&r, "screen"), 7.213) < 3e-3, "{}", probe(&r, "screen"));
    assert!(!r.findings.iter().any(|f| f.code == "field-inversion"));
}

/// Series planar layers under DC share the voltage by their resistances:
/// E_k ∝ 1/σ_k (domain fact sheet, from memory: "for DC replace ε by σ"),
/// against ε in AC; XLPE-like σ 1e-16 S/m, εr 2.3 gives ε/σ ≈ 57 h (issue
/// check value).
#[test]
fn series_layers_share_dc_by_resistance_and_relax_in_hours() {
    let r = run("
title: dc layers
operation: { mode: dc }
materials:
  a: { permittivity: 2.3, conductivity_s_per_m: 1e-16, source: check value }
  b: { permittivity: 4.6, conductivity_s_per_m: 1e-15, source: check value }
stack:
  form: planar
  voltage_kv: 11
  width: 10
  layers:
    - { name: a, material: a, thickness: 1 }
    - { name: b, material: b, thickness: 1 }
");
    // J continuous: σa·Ea = σb·Eb, Ea + Eb = 11 kV/mm → 10 and 1 kV/mm
    assert!(rel(part(&r, "a").e_max_kv_per_mm, 10.0) < 1e-6, "{}", part(&r, "a").e_max_kv_per_mm);
    assert!(rel(part(&r, "b").e_max_kv_per_mm, 1.0) < 1e-5, "{}", part(&r, "b").e_max_kv_per_mm);
    let tau = part(&r, "a").time_constant_s.unwrap();
    assert!(rel(tau[0] / 3600.0, 56.6) < 2e-3 && tau[0] == tau[1], "{tau:?}");
    assert!(part(&r, "a").temperature_range_c.is_none(), "no thermal solve without electrode temperatures");
    // the interface accumulates ρs = ε0·(εb·Eb − εa·Ea) = 8.854e-12·(4.6·1e6 − 2.3·1e7) = −162.9 µC/m²
    // (Gauss's law at the interface, common practice): −1629 nC per metre of the 10 mm width
    let i = &r.interface_charges[0];
    assert_eq!(i.parts, ["a".to_string(), "b".to_string()]);
    assert!(rel(i.density_mean_uc_per_m2, -162.9) < 1e-3, "{}", i.density_mean_uc_per_m2);
    assert!(rel(i.charge.value, -1629.0) < 1e-3, "{}", i.charge.value);
}

/// A field-dependent conductivity σ = σ0·exp(β·E) in one of two series
/// layers: the Picard iteration reaches the state where σa(Ea)·Ea =
/// σb·Eb and Ea + Eb = U/d (solved here by bisection; the empirical form
/// is common practice for HVDC insulation).
#[test]
fn a_field_dependent_conductivity_converges_to_the_current_balance() {
    let r = run("
title: dc field dependence
operation: { mode: dc }
materials:
  a: { permittivity: 2.3, conductivity_s_per_m: 1e-16, conductivity_field_mm_per_kv: 0.1, source: check value }
  b: { permittivity: 2.3, conductivity_s_per_m: 1e-16, source: check value }
stack:
  form: planar
  voltage_kv: 40
  width: 10
  layers:
    - { name: a, material: a, thickness: 1 }
    - { name: b, material: b, thickness: 1 }
");
    // f(Ea) = exp(0.1·Ea)·Ea − (40 − Ea) = 0, Ea in kV/mm
    let (mut lo, mut hi) = (0.0f64, 40.0f64);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if (0.1 * mid).exp() * mid > 40.0 - mid {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    let ea = 0.5 * (lo + hi);
    assert!(rel(part(&r, "a").e_max_kv_per_mm, ea) < 1e-5, "{} vs {ea}", part(&r, "a").e_max_kv_per_mm);
    assert!(r.operation.dc_iterations.unwrap() > 2);
}

/// A conductive, hot, thermally poor layer at a high voltage has no
/// steady state (its Joule heat grows faster with temperature than it can
/// be conducted away): an error, never a verdict.
#[test]
fn thermal_runaway_is_an_error_not_a_verdict() {
    let text = "
title: runaway
operation: { mode: dc }
materials:
  leaky: { permittivity: 4, conductivity_s_per_m: 1e-8, conductivity_temperature_per_k: 0.1,
           thermal_conductivity_w_per_m_k: 0.05, source: check value }
stack:
  form: planar
  voltage_kv: 200
  width: 10
  face_temperatures_c: [80, 80]
  layers:
    - { name: wall, material: leaky, thickness: 20 }
";
    let e = hvstack::check(text, "runaway.yaml", &hvstack::Options::default()).expect_err("no steady state");
    let message = e.to_string();
    assert!(message.contains("runaway") || message.contains("did not settle"), "{message}");
}

/// A material without a conductivity cannot be solved under DC: a clear
/// error naming it.
#[test]
fn dc_needs_every_conductivity() {
    let text = "
title: no sigma
operation: { mode: dc }
materials:
  odd: { permittivity: 3, source: check value }
stack:
  form: planar
  voltage_kv: 10
  layers:
    - { name: wall, material: odd, thickness: 2 }
";
    let e = hvstack::check(text, "nosigma.yaml", &hvstack::Options::default()).expect_err("refused");
    assert!(e.to_string().contains("odd has no conductivity"), "{e}");
}

/// Electrodes drawn as parts carry `temperature_c`: a 2 mm slab between
/// plates at 80 °C (energised, y = 0) and 40 °C (earthed, y = 2 mm), σ =
/// σ0·exp(0.02·(T − 20)). Steady heat conduction gives a linear T(y), so
/// J = σ·E constant gives E(y) = U·a·e^(−a·y)/(1 − e^(−a·d)) with
/// a = α·dT/dy (1D closed form, derived from J = σE and common practice):
/// the peak is at the cold plate.
#[test]
fn drawn_electrodes_carry_temperatures() {
    let r = run("
title: hot and cold plates
geometry: planar
domain: { x: [0, 10], y: [-1, 3] }
operation: { mode: dc }
background: slab
materials:
  slab: { permittivity: 3, conductivity_s_per_m: 1e-15, conductivity_temperature_per_k: 0.02,
          thermal_conductivity_w_per_m_k: 0.2, source: check value }
parts:
  - { name: hot plate, electrode: { potential_kv: 10 }, temperature_c: 80, shape: { rect: { x: [0, 10], y: [-1, 0] } } }
  - { name: cold plate, electrode: { potential_kv: 0 }, temperature_c: 40, shape: { rect: { x: [0, 10], y: [2, 3] } } }
");
    let a = 0.02 * (40.0 - 80.0) / 2.0; // per mm
    let e = |y: f64| 10.0 * a * (-a * y).exp() / (1.0 - (-a * 2.0f64).exp());
    let slab = part(&r, "background");
    assert!(rel(slab.e_max_kv_per_mm, e(2.0)) < 2e-3, "{} vs {}", slab.e_max_kv_per_mm, e(2.0));
    assert!((slab.e_max_at_mm[1] - 2.0).abs() < 1e-9, "{:?}", slab.e_max_at_mm);
    let [lo, hi] = slab.temperature_range_c.unwrap();
    assert!((lo - 40.0).abs() < 1e-6 && (hi - 80.0).abs() < 1e-6, "{lo} {hi}");
}

/// A conductor's loss instead of its temperature: 30 W/m into a wall
/// 10/20 mm of k = 0.286 W/(m·K) with the screen at 50 °C raises the
/// conductor by Q·ln(R/r)/(2πk) = 11.57 K (the insulation's thermal
/// resistance, IEC 60287-2-1:2015, T1 = ρT/(2π)·ln(1 + 2t/dc)); the
/// conductor is isothermal and passes its heat on through the wall.
#[test]
fn a_conductor_loss_sets_the_conductor_temperature() {
    let r = run("
title: cable with conductor loss
operation: { mode: dc }
materials:
  wall: { permittivity: 2.3, conductivity_s_per_m: 1e-16, conductivity_temperature_per_k: 0.1,
          thermal_conductivity_w_per_m_k: 0.286, source: check value }
stack:
  form: coaxial
  voltage_kv: 100
  inner_radius: 10
  length: 5
  face_temperatures_c: [null, 50]
  conductor_heat_w_per_m: 30
  layers:
    - { name: wall, material: wall, thickness: 10 }
");
    let [lo, hi] = part(&r, "wall").temperature_range_c.unwrap();
    let rise = 30.0 * 2f64.ln() / (2.0 * std::f64::consts::PI * 0.286);
    assert!((lo - 50.0).abs() < 1e-6, "{lo}");
    assert!((hi - (50.0 + rise)).abs() < 0.01 * rise, "{hi} vs {}", 50.0 + rise);
}
