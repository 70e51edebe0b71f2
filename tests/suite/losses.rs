//! AC with losses: complex admittivities κ = ε′ − j(ε″ + σ/(ωε0)), the
//! COCG solve, phasor magnitudes, loss densities and the crossover
//! findings. Every check value names its source beside it.

use crate::common::{part, rel, run};
use hvstack::coefficients::Complex64;
use hvstack::report::CheckReport;

fn codes(r: &CheckReport, part: &str) -> Vec<String> {
    r.findings.iter().filter(|f| f.part.as_deref() == Some(part)).map(|f| f.code.to_string()).collect()
}

/// ωε0 at 50 Hz, S/m per unit of relative permittivity.
const OMEGA_EPS0_50HZ: f64 = 2.0 * std::f64::consts::PI * 50.0 * 8.854_187_812_8e-12;

fn divider(conductivity: f64, values: &str, voltage_kv: f64) -> String {
    format!(
        "
title: lossy series divider
operation: {{ mode: ac, frequency_hz: 50, values: {values} }}
materials:
  hard: {{ permittivity: 4, loss_tangent: 0, conductivity_s_per_m: 1e-22, source: check value }}
  leaky: {{ permittivity: 2, loss_tangent: 0, conductivity_s_per_m: {conductivity:e}, source: check value }}
stack:
  form: planar
  voltage_kv: {voltage_kv}
  width: 10
  layers:
    - {{ name: a, material: hard, thickness: 1 }}
    - {{ name: b, material: leaky, thickness: 1 }}
"
    )
}

/// Two 1 mm layers, εr 4 (σ = 0) and εr 2 with σ = ωε0·2 at 50 Hz,
/// 10 kV rms: the series complex admittances (common practice; issue check
/// values) give 4.472 and 6.325 kV/mm rms, against 3.333 and 6.667 lossless.
#[test]
fn a_conducting_layer_sheds_its_stress_by_the_complex_divider() {
    let r = run(&divider(2.0 * OMEGA_EPS0_50HZ, "rms", 10.0));
    assert_eq!(r.operation.field_with_losses, Some(true));
    assert!(r.solve.method.starts_with("cocg"), "{}", r.solve.method);
    assert!(r.solve.relative_residual <= 1e-10);
    let (a, b) = (part(&r, "a"), part(&r, "b"));
    assert!(rel(a.e_max_kv_per_mm, 4.472) < 2e-4, "{}", a.e_max_kv_per_mm);
    assert!(rel(b.e_max_kv_per_mm, 6.325) < 2e-4, "{}", b.e_max_kv_per_mm);
    assert!(rel(b.sigma_over_omega_epsilon.unwrap(), 1.0) < 1e-9);
    // phases against the applied voltage: arg(κb/(κa + κb)) = −26.57° and
    // arg(κa/(κa + κb)) = +18.43° (same series admittances)
    let (ka, kb) = (Complex64::new(4.0, 0.0), Complex64::new(2.0, -2.0));
    let phase = |k: Complex64| (k / (ka + kb)).arg().to_degrees();
    assert!((a.e_max_phase_deg.unwrap() - phase(kb)).abs() < 0.05, "{:?} vs {}", a.e_max_phase_deg, phase(kb));
    assert!((b.e_max_phase_deg.unwrap() - phase(ka)).abs() < 0.05, "{:?} vs {}", b.e_max_phase_deg, phase(ka));
    assert!(codes(&r, "b").contains(&"resistive-capacitive-crossover".to_string()));
    assert!(!codes(&r, "a").iter().any(|c| c.contains("crossover") || c.contains("conduction")));
    // the conducting layer's loss σ·E² (Joule heating, common practice)
    let p = 2.0 * OMEGA_EPS0_50HZ * (6.325e6f64).powi(2);
    assert!(rel(b.loss_density_max_w_per_m3.unwrap(), p) < 5e-4, "{:?}", b.loss_density_max_w_per_m3);
    // per metre of depth: 1 mm × 10 mm of it
    assert!(rel(b.loss.as_ref().unwrap().value, p * 1e-5) < 5e-4);
    assert_eq!(b.loss.as_ref().unwrap().unit, "W/m");

    let lossless = run(&divider(1e-22, "rms", 10.0));
    assert_eq!(lossless.operation.field_with_losses, Some(false));
    assert!(lossless.solve.method.starts_with("pcg"), "{}", lossless.solve.method);
    assert!(rel(part(&lossless, "a").e_max_kv_per_mm, 3.333) < 2e-4);
    assert!(rel(part(&lossless, "b").e_max_kv_per_mm, 6.667) < 2e-4);
}

/// Far above the crossover (σ = 100·ωε) the layer conducts and the other
/// takes nearly all the voltage: |E_a| = U/d·|κ_b/(κ_a + κ_b)| with
/// κ_b = 2 − 200j (series admittances, common practice).
#[test]
fn a_conduction_dominated_layer_passes_the_voltage_to_its_neighbour() {
    let r = run(&divider(200.0 * OMEGA_EPS0_50HZ, "rms", 10.0));
    let kb = Complex64::new(2.0, -200.0);
    let ea = 10.0 * (kb / (Complex64::new(4.0, 0.0) + kb)).norm();
    assert!(rel(part(&r, "a").e_max_kv_per_mm, ea) < 2e-4, "{} vs {ea}", part(&r, "a").e_max_kv_per_mm);
    assert!(codes(&r, "b").contains(&"conduction-dominated".to_string()));
}

/// Peak values give the same physics: 10·√2 kV peak across the same
/// divider gives √2 times the rms fields, and the loss density is
/// ½·σ·E_peak² (dielectric-heating law with peak values, common practice).
#[test]
fn peak_values_give_the_same_loss() {
    let rms = run(&divider(2.0 * OMEGA_EPS0_50HZ, "rms", 10.0));
    let peak = run(&divider(2.0 * OMEGA_EPS0_50HZ, "peak", 10.0 * 2f64.sqrt()));
    let (br, bp) = (part(&rms, "b"), part(&peak, "b"));
    assert!(rel(bp.e_max_kv_per_mm, br.e_max_kv_per_mm * 2f64.sqrt()) < 1e-9);
    assert!(rel(bp.loss_density_max_w_per_m3.unwrap(), br.loss_density_max_w_per_m3.unwrap()) < 1e-9);
    assert!(rel(peak.dielectric_loss.as_ref().unwrap().value, rms.dielectric_loss.as_ref().unwrap().value) < 1e-9);
}

/// Dielectric heating p = ω·ε0·εr·tanδ·E²: εr 2.3, tan δ 2e-4, 10 kV/mm
/// rms at 50 Hz gives 128 W/m³ (domain fact sheet, derived from the
/// dielectric-heating law; issue check value).
#[test]
fn dielectric_heating_of_a_polyethylene_like_layer() {
    let r = run("
title: heating
operation: { mode: ac, frequency_hz: 50, values: rms }
materials:
  film: { permittivity: 2.3, loss_tangent: 2e-4, conductivity_s_per_m: 1e-22, source: check value }
stack:
  form: planar
  voltage_kv: 10
  width: 10
  layers:
    - { name: film, material: film, thickness: 1 }
");
    let f = part(&r, "film");
    assert!(rel(f.loss_density_max_w_per_m3.unwrap(), 128.0) < 2e-3, "{:?}", f.loss_density_max_w_per_m3);
    assert!(rel(r.dielectric_loss.as_ref().unwrap().value, 128.0 * 1e-5) < 2e-3);
    // a single material: losses do not change the field (lossless solve)
    assert_eq!(r.operation.field_with_losses, Some(false));
}

/// Two coaxial layers 10/15/30 mm at 100 kV rms, εr 2.3 and a wet outer
/// layer εr 4 with σ = ωε0·4 at 50 Hz: E(r) = U/(κ_k·r·Σ_j ln(r_{j+1}/r_j)/κ_j)
/// with complex κ (the multi-layer coaxial formula, common practice, with
/// admittivities in place of permittivities).
#[test]
fn a_lossy_coaxial_stack_follows_the_complex_logarithmic_divider() {
    let r = run(&format!(
        "
title: lossy coax
operation: {{ mode: ac, frequency_hz: 50, values: rms }}
materials:
  inner: {{ permittivity: 2.3, loss_tangent: 0, conductivity_s_per_m: 1e-22, source: check value }}
  wet: {{ permittivity: 4, loss_tangent: 0, conductivity_s_per_m: {:e}, source: check value }}
stack:
  form: coaxial
  voltage_kv: 100
  inner_radius: 10
  layers:
    - {{ name: inner, material: inner, thickness: 5 }}
    - {{ name: wet, material: wet, thickness: 15 }}
",
        4.0 * OMEGA_EPS0_50HZ
    ));
    let (k1, k2) = (Complex64::new(2.3, 0.0), Complex64::new(4.0, -4.0));
    let sum = Complex64::new(1.5f64.ln(), 0.0) / k1 + Complex64::new(2f64.ln(), 0.0) / k2;
    let e = |k: Complex64, r_mm: f64| 100.0 / (k * r_mm * sum).norm();
    let (inner, wet) = (part(&r, "inner"), part(&r, "wet"));
    assert!(rel(inner.e_max_kv_per_mm, e(k1, 10.0)) < 2e-3, "{} vs {}", inner.e_max_kv_per_mm, e(k1, 10.0));
    assert!(rel(wet.e_max_kv_per_mm, e(k2, 15.0)) < 2e-3, "{} vs {}", wet.e_max_kv_per_mm, e(k2, 15.0));
    assert_eq!(wet.loss.as_ref().unwrap().unit, "W/m");
}

/// The same lossy case gives byte-identical results (the kernels sum in a
/// fixed order whatever the thread count).
#[test]
fn a_lossy_solve_is_deterministic() {
    let text = divider(2.0 * OMEGA_EPS0_50HZ, "rms", 10.0);
    let a = serde_json::to_string(&run(&text)).unwrap();
    let b = serde_json::to_string(&run(&text)).unwrap();
    assert_eq!(a, b);
}
