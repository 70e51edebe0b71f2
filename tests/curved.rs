//! Peak fields on curved electrodes (boundary placed where it really lies
//! between nodes, surface field from a one-sided quadratic). Progress
//! towards the 0.5 % target of the curved-boundary work: these hold to 1 %.

fn peak(yaml: &str, part: &str) -> (f64, Option<f64>) {
    let r = hvstack::check(yaml, "curved.yaml", &hvstack::Options::default()).unwrap();
    let p = r.parts.iter().find(|p| p.name == part).unwrap();
    (p.e_max_kv_per_mm, p.e_max_error_estimate_pct)
}

/// An uncharged conducting cylinder across a uniform field E0 has 2·E0 at
/// its poles (common practice; conformal-mapping result). Radius 1 mm, plates
/// 40 mm away each side, E0 = 1 kV/mm.
#[test]
fn conducting_cylinder_in_a_uniform_field() {
    let (e, est) = peak(
        "
title: rod in a field
stack:
  form: planar
  voltage_kv: 80
  width: 80
  layers: [ { name: gas, material: sf6, thickness: 80 } ]
parts:
  - { name: rod, electrode: floating, shape: { circle: { center: [40, 40], radius: 1 } } }
",
        "gas",
    );
    assert!((e - 2.0).abs() / 2.0 < 0.01, "peak {e}");
    // the self-check's estimate covers the actual error
    assert!(est.unwrap() / 100.0 >= (e - 2.0).abs() / 2.0, "estimate {est:?} vs error {}", (e - 2.0).abs() / 2.0);
}

/// An uncharged conducting sphere in a uniform field E0 has 3·E0 at its
/// poles (Jackson, Classical Electrodynamics, 3rd ed. 1999, §2.5).
#[test]
fn conducting_sphere_in_a_uniform_field() {
    let (e, est) = peak(
        "
title: ball in a field
geometry: axisymmetric
domain: { x: [0, 60], y: [0, 80] }
materials:
  gas: { base: sf6, permittivity: 1.0, source: test value }
background: gas
parts:
  - { name: low, electrode: { potential_kv: 0 }, shape: { rect: { x: [0, 60], y: [0, 0] } } }
  - { name: high, electrode: { potential_kv: 80 }, shape: { rect: { x: [0, 60], y: [80, 80] } } }
  - { name: ball, electrode: floating, shape: { circle: { center: [0, 40], radius: 1 } } }
",
        "background",
    );
    assert!((e - 3.0).abs() / 3.0 < 0.01, "peak {e}");
    assert!(est.unwrap() / 100.0 >= (e - 3.0).abs() / 3.0);
}

/// Sphere (radius R, potential V) above an earthed plane, gap g: the field
/// at the gap from the method of images (common practice): charges
/// q_k = q_{k−1}·R/(2h − d_{k−1}) at d_k = R²/(2h − d_{k−1}) from the centre,
/// their images below the plane, summed here.
#[test]
fn sphere_over_a_plane_matches_the_image_series() {
    let (radius, gap, v) = (5.0f64, 5.0f64, 10.0f64);
    let h = radius + gap;
    let (mut q, mut d, mut e) = (1.0f64, 0.0f64, 0.0f64);
    for _ in 0..200 {
        let z = h - d;
        e += q * radius * v * (1.0 / (z - gap).powi(2) + 1.0 / (z + gap).powi(2));
        let next = 2.0 * h - d;
        q *= radius / next;
        d = radius * radius / next;
    }
    let (peak, _) = peak(
        "
title: sphere over a plane
geometry: axisymmetric
domain: { x: [0, 150], y: [0, 150] }
parts:
  - { name: plane, electrode: { potential_kv: 0 }, shape: { rect: { x: [0, 150], y: [0, 0] } } }
  - { name: ball, electrode: { potential_kv: 10 }, shape: { circle: { center: [0, 10], radius: 5 } } }
",
        "background",
    );
    // 3.5406 kV/mm from the series; the model's far boundary is zero-flux at 150 mm
    assert!((e - 3.5406).abs() < 1e-3, "series {e}");
    assert!((peak - e).abs() / e < 0.01, "peak {peak} vs {e}");
}

/// Moving the geometry against the grid by a fraction of a step moves the
/// peak by less than 0.3 % (issue target; grid lines follow the outline's
/// extremes, so the local grid moves with the shape).
#[test]
fn the_peak_does_not_depend_on_where_the_grid_falls() {
    let case = |c: f64| {
        format!(
            "
title: rod
stack:
  form: planar
  voltage_kv: 80
  width: 80
  layers: [ {{ name: gas, material: sf6, thickness: 80 }} ]
parts:
  - {{ name: rod, electrode: floating, shape: {{ circle: {{ center: [{c}, {c}], radius: 1 }} }} }}
"
        )
    };
    let (a, _) = peak(&case(40.0), "gas");
    for shift in [0.037, 0.29, 0.61] {
        let (b, _) = peak(&case(40.0 + shift), "gas");
        assert!((a - b).abs() / a < 0.003, "shift {shift}: {a} vs {b}");
    }
}
