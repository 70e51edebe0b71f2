//! Peak fields on curved boundaries against closed forms on the default
//! grid: electrodes (boundary placed where it really lies between nodes,
//! surface field from a one-sided quadratic) and dielectric inclusions
//! (laminate tensor, fitted inclusion fields). Issue target: within 0.5 %,
//! the self-check's estimate covering the true error.

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
    let (e, est) = peak(&rod_in_a_field("", "{ circle: { center: [40, 40], radius: 1 } }"), "gas");
    assert!((e - 2.0).abs() / 2.0 < 0.005, "peak {e}");
    // the self-check's estimate covers the actual error
    assert!(est.unwrap() / 100.0 >= (e - 2.0).abs() / 2.0, "estimate {est:?} vs error {}", (e - 2.0).abs() / 2.0);
}

/// An uncharged conducting sphere in a uniform field E0 has 3·E0 at its
/// poles (Jackson, Classical Electrodynamics, 3rd ed. 1999, §2.5).
#[test]
fn conducting_sphere_in_a_uniform_field() {
    let (e, est) = peak(&ball_in_a_field("{ circle: { center: [0, 40], radius: 1 } }"), "background");
    assert!((e - 3.0).abs() / 3.0 < 0.005, "peak {e}");
    assert!(est.unwrap() / 100.0 >= (e - 3.0).abs() / 3.0);
}

/// A floating ball of radius 1 mm centred on the axis at z = 40 mm between
/// plates 80 mm apart at 0 and 80 kV (E0 = 1 kV/mm), drawn with `shape`.
fn ball_in_a_field(shape: &str) -> String {
    format!(
        "
title: ball in a field
geometry: axisymmetric
domain: {{ x: [0, 60], y: [0, 80] }}
materials:
  gas: {{ base: sf6, permittivity: 1.0, source: test value }}
background: gas
parts:
  - {{ name: low, electrode: {{ potential_kv: 0 }}, shape: {{ rect: {{ x: [0, 60], y: [0, 0] }} }} }}
  - {{ name: high, electrode: {{ potential_kv: 80 }}, shape: {{ rect: {{ x: [0, 60], y: [80, 80] }} }} }}
  - {{ name: ball, electrode: floating, shape: {shape} }}
"
    )
}

/// Sphere (radius R, potential V) above an earthed plane, gap g: the field
/// at the gap from the method of images (common practice): charges
/// q_k = q_{k−1}·R/(2h − d_{k−1}) at d_k = R²/(2h − d_{k−1}) from the centre,
/// their images below the plane, summed here.
#[test]
fn sphere_over_a_plane_matches_the_image_series() {
    let e = image_series(5.0, 5.0, 10.0);
    let (peak, est) = peak(
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
    assert!((peak - e).abs() / e < 0.005, "peak {peak} vs {e}");
    assert!(est.unwrap() / 100.0 >= (peak - e).abs() / e, "estimate {est:?}");
}

/// A floating rod between plates 80 mm apart at 0 and 80 kV (E0 = 1 kV/mm)
/// in SF6, drawn with `shape`; `grid` is an optional `grid:` line.
fn rod_in_a_field(grid: &str, shape: &str) -> String {
    format!(
        "
title: rod in a field
{grid}
stack:
  form: planar
  voltage_kv: 80
  width: 80
  layers: [ {{ name: gas, material: sf6, thickness: 80 }} ]
parts:
  - {{ name: rod, electrode: floating, shape: {shape} }}
"
    )
}

/// Moving the geometry against the grid by a fraction of a step moves the
/// peak by less than 0.3 % (issue target; grid lines follow the outline's
/// extremes, so the local grid moves with the shape).
#[test]
fn the_peak_does_not_depend_on_where_the_grid_falls() {
    let case = |c: f64| rod_in_a_field("", &format!("{{ circle: {{ center: [{c}, {c}], radius: 1 }} }}"));
    let (a, _) = peak(&case(40.0), "gas");
    for shift in [0.037, 0.29, 0.61] {
        let (b, _) = peak(&case(40.0 + shift), "gas");
        assert!((a - b).abs() / a < 0.003, "shift {shift}: {a} vs {b}");
    }
}

/// A circular (planar: cylindrical) or spherical (axisymmetric) inclusion of
/// relative permittivity `inner` in `outer`, radius 1 mm, in a uniform
/// field E0 = 1 kV/mm between plates 100 mm apart.
fn inclusion_case(geometry: &str, outer: f64, inner: f64, shift: f64) -> String {
    let c = 50.0 + shift;
    let (center, x) =
        if geometry == "axisymmetric" { (format!("[0, {c}]"), "0") } else { (format!("[{c}, {c}]"), "0") };
    format!(
        "
title: inclusion in a uniform field
geometry: {geometry}
domain: {{ x: [{x}, 100], y: [0, 100] }}
materials:
  host: {{ base: epoxy, permittivity: {outer}, source: test value }}
  filler: {{ base: air, permittivity: {inner}, source: test value }}
background: host
parts:
  - {{ name: low, electrode: {{ potential_kv: 0 }}, shape: {{ rect: {{ x: [0, 100], y: [0, 0] }} }} }}
  - {{ name: high, electrode: {{ potential_kv: 100 }}, shape: {{ rect: {{ x: [0, 100], y: [100, 100] }} }} }}
  - {{ name: inclusion, material: filler, shape: {{ circle: {{ center: {center}, radius: 1 }} }} }}
"
    )
}

/// Field inside the inclusion (uniform), and the peak of the field outside
/// it, for E0 = 1: cylinder E_in = 2·ε_o/(ε_o + ε_i), sphere
/// E_in = 3·ε_o/(2·ε_o + ε_i) (Jackson, Classical Electrodynamics, 3rd ed.
/// 1999, §4.4 and problem 4.10; Stratton, Electromagnetic Theory, 1941,
/// §3.25). Outside, the peak sits on the outline: where the field is
/// tangential (E_out = E_in) for a lower-permittivity inclusion, where it is
/// normal (E_out = ε_i/ε_o·E_in) for a higher one.
fn inclusion_fields(geometry: &str, outer: f64, inner: f64) -> (f64, f64) {
    let e_in =
        if geometry == "axisymmetric" { 3.0 * outer / (2.0 * outer + inner) } else { 2.0 * outer / (outer + inner) };
    (e_in, if inner < outer { e_in } else { e_in * inner / outer })
}

fn parts(yaml: &str) -> Vec<hvstack::report::PartOut> {
    hvstack::check(yaml, "inclusion.yaml", &hvstack::Options::default()).unwrap().parts
}

/// Gas voids in solid insulation, both geometries, on the default grid:
/// the void's peak (its uniform interior field) and the solid's peak beside
/// it within 0.5 % of the closed form for permittivity ratios up to 6, and
/// the self-check's estimate covering the true error (issue target; the
/// error grows with the ratio, see the next test).
#[test]
fn voids_match_the_closed_form_within_half_a_percent() {
    for geometry in ["planar", "axisymmetric"] {
        for outer in [2.3, 3.7, 6.0] {
            let (e_in, e_out) = inclusion_fields(geometry, outer, 1.0);
            let p = parts(&inclusion_case(geometry, outer, 1.0, 0.0));
            for (part, exact) in [("inclusion", e_in), ("background", e_out)] {
                let q = p.iter().find(|q| q.name == part).unwrap();
                let error = (q.e_max_kv_per_mm - exact).abs() / exact;
                assert!(error < 0.005, "{geometry} εr {outer}, {part}: {} vs {exact}", q.e_max_kv_per_mm);
                let est = q.e_max_error_estimate_pct.unwrap() / 100.0;
                assert!(est >= error, "{geometry} εr {outer}, {part}: estimate {est} below error {error}");
            }
        }
    }
}

/// Higher contrasts and inclusions of higher permittivity (a water drop):
/// the error grows with the ratio (0.7 % at 10:1, 3 % at 27:1 on the
/// default grid, measured) and the estimate still covers it.
#[test]
fn high_contrast_inclusions_have_a_covering_estimate() {
    for geometry in ["planar", "axisymmetric"] {
        for (outer, inner) in [(10.0, 1.0), (2.0, 10.0), (3.0, 80.0)] {
            let (e_in, e_out) = inclusion_fields(geometry, outer, inner);
            let p = parts(&inclusion_case(geometry, outer, inner, 0.0));
            for (part, exact) in [("inclusion", e_in), ("background", e_out)] {
                let q = p.iter().find(|q| q.name == part).unwrap();
                let error = (q.e_max_kv_per_mm - exact).abs() / exact;
                let est = q.e_max_error_estimate_pct.unwrap() / 100.0;
                assert!(error < 0.04, "{geometry} {outer}/{inner}, {part}: {} vs {exact}", q.e_max_kv_per_mm);
                assert!(est >= error, "{geometry} {outer}/{inner}, {part}: estimate {est} below error {error}");
            }
        }
    }
}

/// Moving a void against the grid by a fraction of a step changes its peak
/// by less than 0.3 % (issue target).
#[test]
fn void_peaks_do_not_depend_on_where_the_grid_falls() {
    for geometry in ["planar", "axisymmetric"] {
        let peak = |shift: f64| {
            let p = parts(&inclusion_case(geometry, 3.7, 1.0, shift));
            p.iter().find(|q| q.name == "inclusion").unwrap().e_max_kv_per_mm
        };
        let a = peak(0.0);
        for shift in [0.013, 0.037, 0.29] {
            let b = peak(shift);
            assert!((a - b).abs() / a < 0.003, "{geometry} shift {shift}: {a} vs {b}");
        }
    }
}

/// Refining the grid keeps curved-electrode peaks within 0.5 % with a
/// covering estimate (closed form 2·E0 as above): no drift under
/// refinement (boundary crossings nearer a node than 5 % of a step once
/// snapped and pushed the peak up by 2 % at 64 cells per radius).
#[test]
fn curved_electrode_peaks_hold_under_refinement() {
    for cells in [8, 16, 32] {
        let grid = format!("grid: {{ cells_across: {cells} }}");
        let (e, est) = peak(&rod_in_a_field(&grid, "{ circle: { center: [40, 40], radius: 1 } }"), "gas");
        let error = (e - 2.0).abs() / 2.0;
        assert!(error < 0.005, "{cells} cells: peak {e}");
        assert!(est.unwrap() / 100.0 >= error, "{cells} cells: estimate {est:?} vs {error}");
    }
}

/// The sphere–plane gap's peak does not depend on where the grid falls
/// (issue target 0.3 %).
#[test]
fn sphere_plane_peak_does_not_depend_on_where_the_grid_falls() {
    let case = |z: f64| {
        format!(
            "
title: sphere over a plane
geometry: axisymmetric
domain: {{ x: [0, 150], y: [0, 150] }}
parts:
  - {{ name: plane, electrode: {{ potential_kv: 0 }}, shape: {{ rect: {{ x: [0, 150], y: [0, 0] }} }} }}
  - {{ name: ball, electrode: {{ potential_kv: 10 }}, shape: {{ circle: {{ center: [0, {z}], radius: 5 }} }} }}
"
        )
    };
    // The gap changes with the shift, so each peak is compared with its own
    // image series; the relative errors may differ by less than 0.3 %.
    let error = |z: f64| {
        let (p, _) = peak(&case(z), "background");
        p / image_series(5.0, z - 5.0, 10.0) - 1.0
    };
    let a = error(10.0);
    for shift in [0.01, 0.037, 0.29] {
        let b = error(10.0 + shift);
        assert!((a - b).abs() < 0.003, "shift {shift}: error {a} vs {b}");
    }
}

/// Field at the gap of a sphere (radius R, potential V) over an earthed
/// plane, gap g, from the method of images (as in
/// `sphere_over_a_plane_matches_the_image_series`).
fn image_series(radius: f64, gap: f64, v: f64) -> f64 {
    let h = radius + gap;
    let (mut q, mut d, mut e) = (1.0f64, 0.0f64, 0.0f64);
    for _ in 0..200 {
        let z = h - d;
        e += q * radius * v * (1.0 / (z - gap).powi(2) + 1.0 / (z + gap).powi(2));
        let next = 2.0 * h - d;
        q *= radius / next;
        d = radius * radius / next;
    }
    e
}

/// Arced polygon edges (`shape.arcs`) draw the same conductors as circles:
/// a diamond with four outward arcs of the circumradius is the cylinder, a
/// profile of two arcs against the axis is the sphere; closed forms 2·E0 and
/// 3·E0 as above, within 0.5 %, no sharp-edge finding.
#[test]
fn arced_profiles_match_the_circles() {
    let rod = rod_in_a_field(
        "",
        "{ polygon: [[39, 40], [40, 39], [41, 40], [40, 41]], \
         arcs: [ { edge: 0, radius: 1 }, { edge: 1, radius: 1 }, { edge: 2, radius: 1 }, { edge: 3, radius: 1 } ] }",
    );
    let ball = ball_in_a_field(
        "{ polygon: [[0, 39], [1, 40], [0, 41]], arcs: [ { edge: 0, radius: 1 }, { edge: 1, radius: 1 } ] }",
    );
    for (yaml, part, exact) in [(rod.as_str(), "gas", 2.0), (ball.as_str(), "background", 3.0)] {
        let r = hvstack::check(yaml, "arcs.yaml", &hvstack::Options::default()).unwrap();
        let p = r.parts.iter().find(|p| p.name == part).unwrap();
        let error = (p.e_max_kv_per_mm - exact).abs() / exact;
        assert!(error < 0.005, "{part}: {} vs {exact}", p.e_max_kv_per_mm);
        assert!(p.e_max_error_estimate_pct.unwrap() / 100.0 >= error);
        assert!(!r.findings.iter().any(|f| f.code == "singular-peak"), "{:?}", r.findings);
    }
}
