//! Property tests of invariants over random layered cases.

use hvstack::report::VerdictOut;
use proptest::prelude::*;

fn stack_yaml(voltage_kv: f64, layers: &[(f64, f64)]) -> String {
    let mut s = String::from("title: random stack\nmaterials:\n");
    for (i, (eps, _)) in layers.iter().enumerate() {
        s += &format!(
            "  m{i}: {{ permittivity: {eps}, strength_kv_per_mm: 20, strength_basis: rms, source: test value }}\n"
        );
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
        let report = prepared.report(&sol, &opts, 0.0).unwrap();
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

fn coax_yaml(voltage_kv: f64, inner: f64, layers: &[(f64, f64)], foil_at: Option<f64>) -> String {
    let mut s = String::from("title: random coax\nmaterials:\n");
    for (i, (eps, _)) in layers.iter().enumerate() {
        s += &format!(
            "  m{i}: {{ permittivity: {eps}, strength_kv_per_mm: 50, strength_basis: rms, source: test value }}\n"
        );
    }
    s += &format!("stack:\n  form: coaxial\n  voltage_kv: {voltage_kv}\n  inner_radius: {inner}\n  layers:\n");
    for (i, (_, t)) in layers.iter().enumerate() {
        s += &format!("    - {{ name: l{i}, material: m{i}, thickness: {t} }}\n");
    }
    if let Some(r) = foil_at {
        s += &format!(
            "parts:\n  - {{ name: foil, electrode: floating, shape: {{ rect: {{ x: [{r}, {r}], y: [-1, 1000] }} }} }}\n"
        );
    }
    s
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 16, ..ProptestConfig::default() })]

    /// Multilayer coaxial insulation: E(r) = U/(ε_k·r·Σ ln(r_{j+1}/r_j)/ε_j)
    /// and C' = 2π·ε0/Σ ln(r_{j+1}/r_j)/ε_j (common practice); a full-length
    /// floating foil sits on the logarithmic divider and changes neither.
    #[test]
    fn random_coaxial_stacks_follow_the_logarithmic_formula(
        voltage in 1.0f64..200.0,
        inner in 0.5f64..30.0,
        layers in prop::collection::vec((1.0f64..10.0, 0.3f64..15.0), 1..4),
        foil in 0.1f64..0.9,
    ) {
        let radii: Vec<f64> = layers.iter().scan(inner, |r, (_, t)| { *r += t; Some(*r) }).collect();
        let outer = *radii.last().unwrap();
        let foil_r = inner + foil * (outer - inner);
        let foil_r = (foil_r * 1e3).round() / 1e3;
        let r = hvstack::check(&coax_yaml(voltage, inner, &layers, Some(foil_r)), "c.yaml", &hvstack::Options::default()).unwrap();
        let mut lo = inner;
        let sum: f64 = layers.iter().zip(&radii).map(|((e, _), hi)| { let v = (hi / lo).ln() / e; lo = *hi; v }).sum();
        let mut lo = inner;
        for (i, ((eps, _), hi)) in layers.iter().zip(&radii).enumerate() {
            let expect = voltage / (eps * lo * sum);
            let p = r.parts.iter().find(|p| p.name == format!("l{i}")).unwrap();
            prop_assert!(((p.e_max_kv_per_mm - expect) / expect).abs() < 1e-5, "layer {i}: {} vs {expect}", p.e_max_kv_per_mm);
            lo = *hi;
        }
        let c = r.capacitance.as_ref().unwrap().value;
        let c_expect = 2.0 * std::f64::consts::PI * hvstack::units::EPSILON_0 / sum * 1e12;
        prop_assert!(((c - c_expect) / c_expect).abs() < 1e-5);
        // potential of the foil: share of Σ ln/ε outside it
        let mut outside = 0.0;
        let mut lo = inner;
        for ((eps, _), hi) in layers.iter().zip(&radii) {
            let (a, b) = (lo.max(foil_r), *hi);
            if b > a { outside += (b / a).ln() / eps; }
            lo = *hi;
        }
        let foil_v = r.electrodes.iter().find(|e| e.name == "foil").unwrap().potential_kv;
        prop_assert!((foil_v - voltage * outside / sum).abs() < 1e-6 * voltage);
    }
}

fn mirror_case(blocks: &[(f64, f64, f64, f64, usize)], plate: (f64, f64), v: f64, mirrored: bool) -> String {
    let m = |x: f64| if mirrored { 20.0 - x } else { x };
    let span = |a: f64, b: f64| if mirrored { (m(b), m(a)) } else { (a, b) };
    let mats = ["ptfe", "epoxy", "mica", "porcelain"];
    let mut s = String::from("title: mirror\ngeometry: planar\ndomain: { x: [0, 20], y: [0, 10] }\nparts:\n");
    for (i, &(x0, x1, y0, y1, k)) in blocks.iter().enumerate() {
        let (a, b) = span(x0, x1);
        s += &format!(
            "  - {{ name: b{i}, material: {}, shape: {{ rect: {{ x: [{a}, {b}], y: [{y0}, {y1}] }} }} }}\n",
            mats[k]
        );
    }
    let (a, b) = span(plate.0, plate.1);
    s += "  - { name: ground, electrode: { potential_kv: 0 }, shape: { rect: { x: [0, 20], y: [0, 0] } } }\n";
    s += &format!(
        "  - {{ name: plate, electrode: {{ potential_kv: {v} }}, shape: {{ rect: {{ x: [{a}, {b}], y: [10, 10] }} }} }}\n"
    );
    s
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 12, ..ProptestConfig::default() })]

    /// Mirroring a case left–right mirrors its solution: every part's peak
    /// and mean field and the capacitance stay the same (symmetry of
    /// Laplace's equation, common practice).
    #[test]
    fn mirrored_cases_give_the_same_results(
        blocks in prop::collection::vec((0.0f64..9.0, 11.0f64..20.0, 0.0f64..4.0, 5.0f64..10.0, 0usize..4), 1..3),
        plate in (0.0f64..8.0, 12.0f64..20.0),
        v in 1.0f64..30.0,
    ) {
        let round = |x: f64| (x * 100.0).round() / 100.0;
        let blocks: Vec<_> = blocks.iter().map(|b| (round(b.0), round(b.1), round(b.2), round(b.3), b.4)).collect();
        let plate = (round(plate.0), round(plate.1));
        let a = hvstack::check(&mirror_case(&blocks, plate, v, false), "a.yaml", &hvstack::Options::default()).unwrap();
        let b = hvstack::check(&mirror_case(&blocks, plate, v, true), "b.yaml", &hvstack::Options::default()).unwrap();
        for (p, q) in a.parts.iter().zip(&b.parts) {
            prop_assert_eq!(&p.name, &q.name);
            let tol = 1e-6 * p.e_max_kv_per_mm.max(1e-12);
            prop_assert!((p.e_max_kv_per_mm - q.e_max_kv_per_mm).abs() <= tol, "{}: {} vs {}", p.name, p.e_max_kv_per_mm, q.e_max_kv_per_mm);
            prop_assert!((p.e_mean_kv_per_mm - q.e_mean_kv_per_mm).abs() <= 1e-6 * p.e_mean_kv_per_mm.max(1e-12));
        }
        let (ca, cb) = (a.capacitance.unwrap().value, b.capacitance.unwrap().value);
        prop_assert!((ca - cb).abs() <= 1e-6 * ca);
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    /// A solve cut short never yields a result: either the true residual met
    /// the tolerance or the check is an error (exit 2), never a verdict
    /// (issue contract).
    #[test]
    fn an_unconverged_solve_never_gives_a_verdict(
        voltage in 0.1f64..100.0,
        layers in prop::collection::vec((1.0f64..12.0, 0.02f64..5.0), 1..5),
        iterations in 1usize..6,
        multigrid in any::<bool>(),
    ) {
        use hvstack::solve::{AmgOptions, PreconditionerChoice, SolveOptions, SolverConfig};
        let preconditioner = if multigrid { PreconditionerChoice::Amg(AmgOptions::default()) } else { PreconditionerChoice::Jacobi };
        let opts = hvstack::Options {
            solve: SolverConfig { options: SolveOptions { rel_tol: 1e-12, max_iterations: iterations }, preconditioner },
            ..Default::default()
        };
        match hvstack::check(&stack_yaml(voltage, &layers), "u.yaml", &opts) {
            Ok(r) => prop_assert!(r.solve.relative_residual <= 1e-12, "{}", r.solve.relative_residual),
            Err(e) => prop_assert!(matches!(e, hvstack::Error::Solve { .. }), "{e}"),
        }
    }
}
