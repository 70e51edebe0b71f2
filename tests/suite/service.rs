//! Materials in service: absorbed water, temperature and frequency through
//! the coefficient stage, the dry-reference comparison, the rms/peak
//! convention and the dipole-alignment check. Every check value names its
//! source beside it.

use crate::common::{part, rel, run};
use hvstack::report::CheckReport;
use proptest::prelude::*;

/// A dry 1 mm film of εr 2.3 over 1 mm of an εr 3.6 host holding 5 vol%
/// water at 20 °C, 10 kV across: the wet layer's permittivity rises to 4.670
/// (Looyenga, Physica 31, 1965, with water 80.10 from Malmberg & Maryott
/// 1956), so the series divider (common practice) gives 6.70 and 3.30 kV/mm
/// against 6.10 and 3.90 dry.
#[test]
fn water_moves_stress_onto_the_dry_film() {
    let r = run("
title: dry film over a wet layer
operation: { mode: ac, values: rms }
materials:
  film: { permittivity: 2.3, strength_kv_per_mm: 100, strength_basis: rms, source: test value }
  host: { permittivity: 3.6, strength_kv_per_mm: 30, strength_basis: rms, source: test value }
stack:
  form: planar
  voltage_kv: 10
  layers:
    - { name: film, material: film, thickness: 1 }
    - { name: wet, material: host, thickness: 1, water: { volume_pct: 5 } }
");
    let (film, wet) = (part(&r, "film"), part(&r, "wet"));
    assert!(rel(wet.permittivity, 4.670) < 3e-4, "{}", wet.permittivity);
    assert_eq!(wet.permittivity_reference, 3.6);
    assert!(rel(film.e_max_kv_per_mm, 6.700) < 1e-3, "{}", film.e_max_kv_per_mm);
    assert!(rel(wet.e_max_kv_per_mm, 3.300) < 1e-3, "{}", wet.e_max_kv_per_mm);
    assert!(rel(film.e_max_reference_kv_per_mm.unwrap(), 6.102) < 1e-3);
    assert!(rel(wet.e_max_reference_kv_per_mm.unwrap(), 3.898) < 1e-3);
    assert!(rel(film.e_max_change_pct.unwrap(), 100.0 * (6.700 / 6.102 - 1.0)) < 2e-3);
    assert_eq!(wet.water_volume_pct, Some(5.0));
    let reference = r.reference.as_ref().expect("a dry reference was solved");
    assert!(reference.method.contains("hierarchy reused"), "{}", reference.method);
}

/// The three mixing rules through the whole pipeline, host 3.6 with 1 vol%
/// water at 20 °C: Maxwell Garnett 3.695, Lichtenecker 3.713, Looyenga 3.799
/// (closed forms: Maxwell Garnett 1904, Lichtenecker 1926, Looyenga 1965).
#[test]
fn each_mixing_rule_gives_its_published_value() {
    for (rule, expected) in [("maxwell-garnett", 3.695), ("lichtenecker", 3.713), ("looyenga", 3.799)] {
        let r = run(&format!(
            "title: rule\nmaterials:\n  host: {{ permittivity: 3.6, source: test value }}\nstack:\n  form: planar\n  voltage_kv: 1\n  layers:\n    - {{ name: wet, material: host, thickness: 1, water: {{ volume_pct: 1, rule: {rule} }} }}\n"
        ));
        assert!((part(&r, "wet").permittivity - expected).abs() < 1.5e-3, "{rule}: {}", part(&r, "wet").permittivity);
    }
}

/// Water's permittivity follows its temperature: 78.30 at 25 °C, 69.91 at
/// 50 °C (Malmberg & Maryott, J. Res. NBS 56, 1956).
#[test]
fn water_follows_its_temperature() {
    for (t, expected) in [(25.0, 78.30), (50.0, 69.91)] {
        let r = run(&format!(
            "title: water\nstack:\n  form: planar\n  voltage_kv: 1\n  layers:\n    - {{ name: w, material: water, thickness: 1, temperature_c: {t} }}\n"
        ));
        assert!((part(&r, "w").permittivity - expected).abs() < 0.005, "{t} °C");
    }
}

/// A water mass fraction becomes a volume fraction through the densities:
/// 2 g per 100 g of an 1800 kg/m³ host is (2/998.2)/(2/998.2 + 100/1800)
/// = 3.481 vol% (additive volumes; water 998.2 kg/m³, CRC Handbook, from
/// memory).
#[test]
fn a_mass_fraction_uses_the_material_density() {
    let r = run("
title: mass
materials:
  host: { permittivity: 4, density_kg_per_m3: 1800, source: test value }
stack:
  form: planar
  voltage_kv: 1
  layers:
    - { name: wet, material: host, thickness: 1, water: { mass_pct: 2 } }
");
    let expected = 100.0 * (2.0 / 998.2) / (2.0 / 998.2 + 100.0 / 1800.0);
    assert!((part(&r, "wet").water_volume_pct.unwrap() - expected).abs() < 1e-9);
    assert!((expected - 3.481).abs() < 1e-3);
}

/// A Debye relaxation: static ε∞ + Δε; at ωτ = 1 the real part is ε∞ + Δε/2
/// (Debye 1929).
#[test]
fn debye_materials_follow_the_frequency() {
    let case = |operation: &str| {
        format!(
            "title: debye\n{operation}\nmaterials:\n  d: {{ debye: {{ eps_inf: 3.0, delta_eps: 1.0, tau_s: 1.0e-3 }}, source: test value }}\nstack:\n  form: planar\n  voltage_kv: 1\n  layers:\n    - {{ name: p, material: d, thickness: 1 }}\n"
        )
    };
    let at = |r: &CheckReport| part(r, "p").permittivity;
    assert!((at(&run(&case("operation: { mode: static }"))) - 4.0).abs() < 1e-12);
    let f = 1.0 / (2.0 * std::f64::consts::PI * 1.0e-3);
    let r = run(&case(&format!("operation: {{ mode: ac, frequency_hz: {f}, values: rms }}")));
    assert!((at(&r) - 3.5).abs() < 1e-9, "{}", at(&r));
}

/// A permittivity table is interpolated linearly in temperature (common
/// practice), and a temperature outside it is held at the end value with a
/// finding.
#[test]
fn temperature_tables_interpolate_and_say_when_outside() {
    let case = |t: f64| {
        run(&format!(
            "title: table\nmaterials:\n  t: {{ permittivity_vs_temperature_c: [[20, 3.6], [90, 4.3]], source: test value }}\nstack:\n  form: planar\n  voltage_kv: 1\n  layers:\n    - {{ name: p, material: t, thickness: 1, temperature_c: {t} }}\n"
        ))
    };
    let r = case(55.0);
    assert!((part(&r, "p").permittivity - 3.95).abs() < 1e-12);
    assert!(!r.findings.iter().any(|f| f.code == "outside-model-range"));
    let r = case(120.0);
    assert!((part(&r, "p").permittivity - 4.3).abs() < 1e-12);
    assert!(r.findings.iter().any(|f| f.code == "outside-model-range" && f.part.as_deref() == Some("p")));
}

/// The same physical case stated as AC rms or as static peak (√2 × the rms
/// voltage) gives the same margins: fields and strengths are compared like
/// with like (sinusoid: peak = √2·rms, common practice). Oil's 12 kV/mm is
/// an rms value (IEC 60156), so as a peak value it reads 16.97 kV/mm.
#[test]
fn rms_and_peak_cases_give_the_same_margins() {
    let case = |operation: &str, kv: f64| {
        run(&format!(
            "title: oil gap\n{operation}\nstack:\n  form: planar\n  voltage_kv: {kv}\n  layers:\n    - {{ name: oil, material: mineral-oil, thickness: 2 }}\n"
        ))
    };
    let rms = case("operation: { mode: ac, values: rms }", 10.0);
    let peak = case("operation: { mode: ac, values: peak }", 10.0 * 2f64.sqrt());
    let fixed = case("operation: { mode: static }", 10.0 * 2f64.sqrt());
    assert_eq!((rms.values, peak.values, fixed.values), ("rms", "peak", "peak"));
    let m = |r: &CheckReport| part(r, "oil").margin.unwrap();
    assert!(rel(m(&peak), m(&rms)) < 1e-9 && rel(m(&fixed), m(&rms)) < 1e-9);
    assert!((part(&rms, "oil").strength_kv_per_mm.unwrap() - 12.0).abs() < 1e-12);
    assert!((part(&peak, "oil").strength_kv_per_mm.unwrap() - 16.97).abs() < 0.01);
    assert!(!rms.findings.iter().any(|f| f.code == "operation-not-stated"));
    let unstated =
        run("title: t\nstack:\n  form: planar\n  voltage_kv: 1\n  layers: [ { material: ptfe, thickness: 1 } ]\n");
    assert!(
        unstated
            .findings
            .iter()
            .any(|f| f.code == "operation-not-stated" && f.severity == hvstack::report::SeverityOut::Info)
    );
    assert_eq!(unstated.values, "peak");
}

/// Dipole alignment: x = p·E/(k·T), ⟨cos θ⟩ = L(x) = coth x − 1/x (Debye,
/// Polar Molecules, 1929). With p = 6.17e-30 C·m (1.85 D) x reaches 1 near
/// 656 kV/mm at 20 °C (kT/p; 650 for p = 6.2e-30, from the same formula),
/// so insulation stresses stay in the linear range; an info finding appears
/// only above x = 0.3.
#[test]
fn dipole_alignment_is_reported_and_tiny_at_insulation_stresses() {
    let e_unit: f64 = 1.380_649e-23 * 293.15 / 6.17e-30; // V/m at x = 1
    assert!((e_unit / 1e6 - 656.0).abs() < 1.0);
    assert!((hvstack::assess::langevin(1.0) - (1.0 / 1f64.tanh() - 1.0)).abs() < 1e-15);
    // small x: L(x) ≈ x/3 − x³/45 (series of coth x − 1/x)
    assert!((hvstack::assess::langevin(1e-4) - 1e-4 / 3.0).abs() < 1e-9 * 1e-4);
    let case = |kv: f64| {
        run(&format!(
            "title: wet\nmaterials:\n  host: {{ permittivity: 3.0, source: test value }}\nstack:\n  form: planar\n  voltage_kv: {kv}\n  layers:\n    - {{ name: wet, material: host, thickness: 1, water: {{ volume_pct: 1 }} }}\n"
        ))
    };
    let low = case(20.0); // 20 kV/mm peak, static
    let d = low.dipole_alignment.as_ref().expect("reported for a wet part");
    assert!(rel(d.x_max, 20e6 / e_unit) < 1e-6 && d.linear, "{d:?}");
    assert!(!low.findings.iter().any(|f| f.code == "dipole-saturation"));
    let high = case(250.0); // x ≈ 0.38
    assert!(high.findings.iter().any(|f| f.code == "dipole-saturation"));
    assert!(!high.dipole_alignment.as_ref().unwrap().linear);
}

/// A strength holds only for the conditions it was measured at: a hot or
/// wet part gets `dry-strength-used` unless `strength_at` covers it.
#[test]
fn strengths_used_beyond_their_conditions_are_flagged() {
    let case = |at: &str| {
        run(&format!(
            "title: hot\nmaterials:\n  hot: {{ permittivity: 3.0, strength_kv_per_mm: 30, strength_basis: rms, {at}source: test value }}\nstack:\n  form: planar\n  voltage_kv: 1\n  layers:\n    - {{ name: p, material: hot, thickness: 1, temperature_c: 90 }}\n"
        ))
    };
    assert!(case("").findings.iter().any(|f| f.code == "dry-strength-used"));
    assert!(!case("strength_at: { temperature_c: 90 }, ").findings.iter().any(|f| f.code == "dry-strength-used"));
}

/// Maxwell Garnett is a dilute-inclusion model: beyond about 10 vol% the
/// case gets `mixing-rule-range` (from memory).
#[test]
fn mixing_rules_outside_their_range_are_flagged() {
    let r = run("
title: soaked
materials:
  host: { permittivity: 3.0, source: test value }
stack:
  form: planar
  voltage_kv: 1
  layers:
    - { name: p, material: host, thickness: 1, water: { volume_pct: 15, rule: maxwell-garnett } }
");
    assert!(r.findings.iter().any(|f| f.code == "mixing-rule-range"));
}

/// A case at the reference conditions is solved once: no reference, no
/// shift figures.
#[test]
fn a_dry_case_at_20_c_needs_no_second_solve() {
    let r = run(
        "title: dry\nstack:\n  form: planar\n  voltage_kv: 1\n  layers: [ { name: p, material: ptfe, thickness: 1 } ]\n",
    );
    assert!(r.reference.is_none());
    assert!(part(&r, "p").e_max_reference_kv_per_mm.is_none());
}

proptest! {
    /// Every mixing rule stays within the Wiener bounds (series ≤ ε ≤
    /// parallel; Wiener 1912) for any host, water permittivity and fraction.
    #[test]
    fn mixing_rules_stay_within_the_wiener_bounds(eh in 1.0f64..20.0, ew in 1.0f64..100.0, f in 0.0f64..1.0) {
        use hvstack::materials::{MixingRule, mix, wiener_bounds};
        let (lo, hi) = wiener_bounds(eh, ew, f);
        for rule in [MixingRule::Looyenga, MixingRule::MaxwellGarnett, MixingRule::Lichtenecker] {
            let e = mix(eh, ew, f, rule);
            prop_assert!(e >= lo * (1.0 - 1e-12) && e <= hi * (1.0 + 1e-12), "{:?}: {} outside [{}, {}]", rule, e, lo, hi);
        }
    }
}

/// Warm surroundings with materials whose permittivity does not change with
/// temperature move no stress: no second solve, but the strengths are still
/// flagged as dry values at 20 °C.
#[test]
fn a_warm_case_of_constant_materials_needs_no_second_solve() {
    let r = run(
        "title: warm\nenvironment: { temperature_c: 60 }\nstack:\n  form: planar\n  voltage_kv: 1\n  layers: [ { name: p, material: ptfe, thickness: 1 } ]\n",
    );
    assert!(r.reference.is_none());
    assert_eq!(part(&r, "p").temperature_c, 60.0);
    assert!(r.findings.iter().any(|f| f.code == "dry-strength-used" && f.part.as_deref() == Some("p")));
}

/// Lightning impulse: potentials are peaks; a material's impulse strength
/// (peak) sets its margin, else its AC strength as a peak value with an
/// info finding. 1 mm of each layer in series at 100 kV peak: E_k = U/(ε_k·Σ
/// d_j/ε_j) (series-capacitor formula, common practice): εr 4 and 2 give
/// 33.33 and 66.67 kV/mm.
#[test]
fn impulse_mode_uses_impulse_strengths() {
    let r = run("
title: impulse
operation: { mode: impulse }
materials:
  rated: { permittivity: 4.0, strength_kv_per_mm: 40, strength_basis: rms, impulse_strength_kv_per_mm: 120, source: test value }
  plain: { permittivity: 2.0, strength_kv_per_mm: 60, strength_basis: rms, source: test value }
stack:
  form: planar
  voltage_kv: 100
  layers:
    - { name: a, material: rated, thickness: 1 }
    - { name: b, material: plain, thickness: 1 }
");
    assert_eq!(r.values, "peak");
    assert_eq!(r.operation.mode, "impulse");
    let (a, b) = (part(&r, "a"), part(&r, "b"));
    assert!(rel(a.e_max_kv_per_mm, 100.0 / 3.0) < 1e-6);
    assert!(rel(b.e_max_kv_per_mm, 200.0 / 3.0) < 1e-6);
    // a: its impulse strength; b: 60 kV/mm rms as a peak, 60·√2
    assert!(rel(a.strength_kv_per_mm.unwrap(), 120.0) < 1e-12);
    assert!(rel(b.strength_kv_per_mm.unwrap(), 60.0 * 2f64.sqrt()) < 1e-12);
    let missing: Vec<_> = r.findings.iter().filter(|f| f.code == "impulse-strength-missing").collect();
    assert_eq!(missing.len(), 1);
    assert_eq!(missing[0].part.as_deref(), Some("b"));
}
