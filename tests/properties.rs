//! Property tests of invariants over random layered cases.

use hvstack::report::VerdictOut;
use proptest::prelude::*;

fn stack_yaml(voltage_kv: f64, layers: &[(f64, f64)]) -> String {
    let mut s = String::from("title: random stack\nmaterials:\n");
    for (i, (eps, _)) in layers.iter().enumerate() {
        s += &format!("  m{i}: {{ permittivity: {eps}, strength_kv_per_mm: 20, source: test value }}\n");
    }
    s += &format!("stack:\n  form: planar\n  voltage_kv: {voltage_kv}\n  width: 5\n  layers:\n");
    for (i, (_, t)) in layers.iter().enumerate() {
        s += &format!("    - {{ name: l{i}, material: m{i}, thickness: {t} }}\n");
    }
    s
}

fn verdict_rank(v: VerdictOut) -> u8 {
    match v {
        VerdictOut::Pass => 0,
        VerdictOut::Review => 1,
        VerdictOut::Fail => 2,
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    /// Series layers: E_k = U/(ε_k·Σd/ε) (series-capacitor formula, common
    /// practice); charges balance (Gauss); the potential stays between the
    /// electrode potentials (maximum principle); the energy is positive.
    #[test]
    fn random_planar_stacks_obey_the_physics(
        voltage in 0.1f64..100.0,
        layers in prop::collection::vec((1.0f64..12.0, 0.02f64..5.0), 1..5),
    ) {
        let yaml = stack_yaml(voltage, &layers);
        let case = hvstack::case::parse(&yaml, "p.yaml").unwrap();
        let opts = hvstack::Options::default();
        let prepared = hvstack::prepare(case, "p.yaml", &opts).unwrap();
        let sol = prepared.solve(&opts.solve).unwrap();
        let report = prepared.report(&sol, &opts, 0.0);
        let sum: f64 = layers.iter().map(|(e, t)| t / e).sum();
        for (i, (eps, _)) in layers.iter().enumerate() {
            let p = report.parts.iter().find(|p| p.name == format!("l{i}")).unwrap();
            let expect = voltage / (eps * sum);
            prop_assert!(((p.e_max_kv_per_mm - expect) / expect).abs() < 1e-6);
        }
        let q: f64 = report.electrodes.iter().map(|e| e.charge.value).sum();
        prop_assert!(q.abs() <= 1e-7 * report.electrodes[0].charge.value.abs());
        let v = voltage * 1e3;
        prop_assert!(sol.phi.iter().all(|p| *p >= -1e-9 * v && *p <= v * (1.0 + 1e-9)));
        prop_assert!(report.energy.value > 0.0);
    }

    /// Raising the voltage never improves the verdict.
    #[test]
    fn verdict_is_monotone_in_voltage(
        voltage in 1.0f64..60.0,
        layers in prop::collection::vec((1.0f64..12.0, 0.2f64..3.0), 1..4),
    ) {
        let low = hvstack::check(&stack_yaml(voltage, &layers), "a.yaml", &hvstack::Options::default()).unwrap();
        let high = hvstack::check(&stack_yaml(voltage * 1.7, &layers), "b.yaml", &hvstack::Options::default()).unwrap();
        prop_assert!(verdict_rank(high.verdict) >= verdict_rank(low.verdict));
    }
}
