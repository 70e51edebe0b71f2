//! Sweeps (`hvstack sweep`, `study::sweep`): each point is a case of its
//! own, checked against closed forms; bad points and keys are refused.

use crate::common::rel;
use hvstack::study::{parse_vary, sweep};
use std::process::Command;

fn points(text: &str, vary: &[&str]) -> Vec<hvstack::study::Point> {
    let vary: Vec<_> = vary.iter().map(|v| parse_vary(v).unwrap()).collect();
    sweep(text, "study.yaml", &vary, &hvstack::Options::default()).expect("every point evaluates")
}

fn part<'a>(p: &'a hvstack::study::Point, name: &str) -> &'a hvstack::report::PartOut {
    p.result.parts.iter().find(|q| q.name == name).unwrap()
}

/// A 0.1 mm εr 3.5 film over an air gap (as in `tests/suite/discharge.rs`).
const FILM_AND_GAP: &str = "
title: film over a gap
materials:
  film: { permittivity: 3.5, strength_kv_per_mm: 200, strength_basis: peak, source: test value }
  gas: { base: air, permittivity: 1.0, source: test value }
stack:
  form: planar
  voltage_kv: 0.5
  layers:
    - { name: film, material: film, thickness: 0.1 }
    - { name: gap, material: gas, thickness: 0.05 }
";

/// The field is linear in the voltage: every judged peak over U is the
/// same at 0.5, 1 and 2 kV (to solver round-off), and the allowable level
/// does not move (superposition, common practice).
#[test]
fn a_voltage_sweep_is_exactly_linear() {
    let p = points(FILM_AND_GAP, &["stack.voltage_kv=0.5,1,2"]);
    assert_eq!(p.len(), 3);
    let per_volt = |k: usize, name: &str| part(&p[k], name).e_max_judged_kv_per_mm / [0.5, 1.0, 2.0][k];
    for name in ["film", "gap"] {
        for k in 1..3 {
            assert!(rel(per_volt(k, name), per_volt(0, name)) < 1e-8, "{name}");
        }
    }
    for k in 1..3 {
        assert!(rel(p[k].result.allowable_kv.unwrap(), p[0].result.allowable_kv.unwrap()) < 1e-8);
        assert!(rel(p[k].result.pd_inception_kv.unwrap(), p[0].result.pd_inception_kv.unwrap()) < 1e-6);
    }
}

/// Gap thickness 20 / 50 / 100 µm: the stack incepts at 843 / 867 V
/// (Paschen through the series divider, issue 12 figures) and at 100 µm
/// 1.7 % below Paschen's 1112 V on the streamer curve (J. Lux's Paschen
/// notes; `tests/suite/discharge.rs`).
#[test]
fn a_gap_sweep_follows_paschen_through_the_divider() {
    let p = points(FILM_AND_GAP, &["stack.layers[1].thickness=0.02,0.05,0.1"]);
    let v: Vec<f64> = p.iter().map(|q| 1e3 * q.result.pd_inception_kv.unwrap()).collect();
    assert!(rel(v[0], 843.0) < 0.01 && rel(v[1], 867.0) < 0.01, "{v:?}");
    assert!(rel(v[2], 1112.0) < 0.025, "{v:?}");
    assert_eq!(p[2].set[0], ("stack.layers[1].thickness".to_string(), serde_json::json!(0.1)));
}

/// A coaxial wall of 5, 10 and 20 mm on a 10 mm conductor at 100 kV:
/// E(r_i) = U/(r_i·ln(r_o/r_i)) (common practice).
#[test]
fn a_wall_thickness_sweep_follows_the_logarithmic_formula() {
    let text = "
title: wall
stack:
  form: coaxial
  voltage_kv: 100
  inner_radius: 10
  length: 20
  layers: [ { name: wall, material: xlpe, thickness: 10 } ]
";
    let p = points(text, &["stack.layers[0].thickness=5:20:4"]);
    for (q, t) in p.iter().zip([5.0, 10.0, 15.0, 20.0]) {
        let exact = 100.0 / (10.0 * ((10.0 + t) / 10.0f64).ln());
        assert!(rel(part(q, "wall").e_max_judged_kv_per_mm, exact) < 1e-6, "{t} mm");
    }
}

fn hvstack(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_hvstack")).args(args).output().expect("binary runs")
}

/// The command prints the exact JSON shape, and a grid of two keys, first
/// slowest; a point that does not validate is reported with its key and
/// value, exit 2, and nothing on stdout.
#[test]
fn the_sweep_command_prints_points_and_refuses_bad_ones() {
    let dir = tempfile::tempdir().unwrap();
    let case = dir.path().join("film.yaml");
    std::fs::write(&case, FILM_AND_GAP).unwrap();
    let c = case.to_str().unwrap();
    let out = hvstack(&[
        "sweep",
        c,
        "--vary",
        "stack.voltage_kv=0.5,1",
        "--vary",
        "stack.layers[1].thickness=0.02,0.05",
        "--format",
        "json",
    ]);
    assert!(matches!(out.status.code(), Some(0 | 1)), "{}", String::from_utf8_lossy(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["vary"][1]["key"], "stack.layers[1].thickness");
    let points = v["points"].as_array().unwrap();
    assert_eq!(points.len(), 4);
    assert_eq!(points[1]["set"], serde_json::json!({ "stack.voltage_kv": 0.5, "stack.layers[1].thickness": 0.05 }));
    assert!(points[3]["result"]["parts"].is_array());

    let bad = hvstack(&["sweep", c, "--vary", "stack.layers[1].thickness=0.05,-1"]);
    assert_eq!(bad.status.code(), Some(2));
    assert!(bad.stdout.is_empty());
    let e = String::from_utf8_lossy(&bad.stderr);
    assert!(e.contains("stack.layers[1].thickness=-1") && e.contains("thickness must be positive"), "{e}");

    let missing = hvstack(&["sweep", c, "--vary", "parts[0].water.volume_pct=1"]);
    assert_eq!(missing.status.code(), Some(2));
    assert!(
        String::from_utf8_lossy(&missing.stderr).contains("`parts` is not a list"),
        "{}",
        String::from_utf8_lossy(&missing.stderr)
    );

    let table = hvstack(&["sweep", c, "--vary", "stack.voltage_kv=0.5,1", "--format", "csv"]);
    let csv = String::from_utf8_lossy(&table.stdout);
    assert!(csv.starts_with("stack.voltage_kv,verdict,allowable kV peak"), "{csv}");
    assert_eq!(csv.lines().count(), 3);
}

/// Two results agree to `tol` relative (estimates and orders to 1e-3
/// absolute, near zero 1e-9), findings exactly; `solve` is left out (a
/// reused point says it was not solved again).
fn agree(a: &serde_json::Value, b: &serde_json::Value, tol: f64, path: &str) {
    let tolerance = |path: &str| {
        let floor = if path.contains("error_estimate_pct") || path.contains("observed_order") { 1e-3 } else { 1e-9 };
        (tol, floor)
    };
    crate::common::agree_json(a, b, path, &["solve", "case_sha256", "reference"], &tolerance);
}

/// A sweep of potentials only solves its first point: every other point
/// takes that solution and self-check scaled (superposition, common
/// practice), and its result is the result of checking that point on its
/// own, figure by figure (to 1e-6 relative: the solver's tolerance).
#[test]
fn a_potential_sweep_reuses_the_first_solve_and_matches_separate_checks() {
    let text = std::fs::read_to_string("cases/busbar-support.yaml").unwrap();
    let p = points(&text, &["parts[2].electrode.potential_kv=12,30"]);
    assert!(!p[0].result.solve.method.contains("not solved again"));
    assert!(p[1].result.solve.method.contains("not solved again"), "{}", p[1].result.solve.method);
    let alone = hvstack::check(
        &text.replace("potential_kv: 24 }", "potential_kv: 30 }"),
        "alone.yaml",
        &hvstack::Options::default(),
    )
    .unwrap();
    agree(&serde_json::to_value(&p[1].result).unwrap(), &serde_json::to_value(&alone).unwrap(), 1e-6, "");
}

/// A sweep of material values and frequency keeps the first point's grid,
/// numbering and pattern (`prepare_like`): every point's result is the
/// result of checking that point on its own, exactly (the same matrices,
/// the same solves; invariant of the study layer).
#[test]
fn a_values_sweep_keeps_the_geometry_and_matches_separate_checks_exactly() {
    let text = std::fs::read_to_string("cases/wet-bushing-layer.yaml").unwrap();
    let p = points(&text, &["materials.rip-wet.conductivity_s_per_m=1e-9,1e-8", "operation.frequency_hz=50,60"]);
    assert_eq!(p.len(), 4);
    let alone = hvstack::check(
        &text.replace("3e-9      # wet", "1e-8 # wet").replace("frequency_hz: 50", "frequency_hz: 60"),
        "study.yaml [materials.rip-wet.conductivity_s_per_m=1e-8, operation.frequency_hz=60]",
        &hvstack::Options::default(),
    )
    .unwrap();
    let mut a = serde_json::to_value(&p[3].result).unwrap();
    let mut b = serde_json::to_value(&alone).unwrap();
    for v in [&mut a, &mut b] {
        v["case_sha256"] = serde_json::Value::Null;
    }
    assert_eq!(a, b);
    // the values matter: the wet layer's share moves with its conductivity
    let wet = |k: usize| part(&p[k], "wet layer").e_max_kv_per_mm;
    assert!(rel(wet(0), wet(2)) > 1e-3, "{} {}", wet(0), wet(2));
}

/// `KEY=±T%` sweeps the case's own value low, nominal and high; the table
/// names the worst point (here the thinnest film: the highest field in
/// the gap, series divider) and the spread of each figure.
#[test]
fn a_tolerance_band_sweeps_around_the_case_value() {
    let dir = tempfile::tempdir().unwrap();
    let case = dir.path().join("film.yaml");
    std::fs::write(&case, FILM_AND_GAP).unwrap();
    let out =
        hvstack(&["sweep", case.to_str().unwrap(), "--vary", "stack.layers[0].thickness=±10%", "--format", "json"]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["vary"][0]["values"], serde_json::json!([0.09, 0.1, 0.11]));
    let text = hvstack(&["sweep", case.to_str().unwrap(), "--vary", "stack.layers[0].thickness=±10%"]);
    let t = String::from_utf8_lossy(&text.stdout);
    assert!(t.contains("worst point  stack.layers[0].thickness=0.09"), "{t}");
    assert!(t.contains("spread (lowest … highest over the points)"), "{t}");
    let bad = hvstack(&["sweep", case.to_str().unwrap(), "--vary", "stack.layers[0].name=±10%"]);
    assert_eq!(bad.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&bad.stderr).contains("needs a number"));
}

/// `--shard I/N` checks every N-th point from the I-th; `sweep-combine`
/// joins the N outputs, in any order, into the JSON of the whole sweep
/// (figures identical; `solve` differs where a shard solved a point the
/// whole sweep reused) and refuses an incomplete set.
#[test]
fn sharded_sweeps_combine_into_the_whole() {
    let dir = tempfile::tempdir().unwrap();
    let case = dir.path().join("film.yaml");
    std::fs::write(&case, FILM_AND_GAP).unwrap();
    let c = case.to_str().unwrap();
    let args = [
        "sweep",
        c,
        "--vary",
        "stack.voltage_kv=0.5,1,2",
        "--vary",
        "stack.layers[1].thickness=0.02,0.05",
        "--format",
        "json",
    ];
    let whole: serde_json::Value = serde_json::from_slice(&hvstack(&args).stdout).unwrap();
    let mut files = Vec::new();
    for i in [2, 1] {
        let shard = format!("{i}/2");
        let out = hvstack(&[&args[..], &["--shard", &shard]].concat());
        let f = dir.path().join(format!("shard-{i}.json"));
        std::fs::write(&f, &out.stdout).unwrap();
        files.push(f.to_str().unwrap().to_string());
    }
    let combined = hvstack(&["sweep-combine", &files[0], &files[1], "--format", "json"]);
    assert_eq!(combined.status.code(), Some(0), "{}", String::from_utf8_lossy(&combined.stderr));
    let combined: serde_json::Value = serde_json::from_slice(&combined.stdout).unwrap();
    let strip = |mut v: serde_json::Value| {
        for p in v["points"].as_array_mut().unwrap() {
            p["result"].as_object_mut().unwrap().remove("solve");
        }
        v
    };
    assert_eq!(strip(combined), strip(whole));
    let missing = hvstack(&["sweep-combine", &files[0]]);
    assert_eq!(missing.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&missing.stderr).contains("shard 1/2 is missing"));
}

/// `sweep --report DIR`: plots of peak field, margin, PD inception and
/// allowable level against each varied key (limits dashed, a marker per
/// point), every point's review folder and an index linking them; a
/// sharded sweep numbers its folders as the whole sweep does, and
/// `sweep-combine --report` draws the same plots as the unsharded run.
#[test]
fn a_sweep_review_folder_has_plots_and_every_points_page() {
    let dir = tempfile::tempdir().unwrap();
    let case = dir.path().join("film.yaml");
    std::fs::write(&case, FILM_AND_GAP).unwrap();
    let c = case.to_str().unwrap();
    let at = |name: &str| dir.path().join(name);
    let sweep = ["sweep", c, "--vary", "stack.layers[1].thickness=0.02,0.05,0.1", "--format", "json", "--quiet"];
    let out = hvstack(&[&sweep[..], &["--report", at("whole").to_str().unwrap()]].concat());
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
    let stem = "plot-stack-layers-1-thickness";
    for figure in ["peak", "margin", "pd-inception", "allowable"] {
        let svg = std::fs::read_to_string(at("whole").join(format!("{stem}-{figure}.svg"))).unwrap();
        assert!(svg.contains("stroke-dasharray"), "{figure}: no limit line");
        assert!(svg.matches("<circle").count() >= 3, "{figure}: a marker per point");
        let png = std::fs::read(at("whole").join(format!("{stem}-{figure}.png"))).unwrap();
        assert_eq!(&png[1..4], b"PNG");
    }
    let index = std::fs::read_to_string(at("whole").join("index.html")).unwrap();
    for k in 1..=3 {
        let page = format!("point-{k:04}/index.html");
        assert!(index.contains(&page) && at("whole").join(&page).is_file(), "{page}");
    }
    // shard 2/2 holds point 2 of the whole sweep
    let mut shards = Vec::new();
    for i in 1..=2 {
        let folder = at(&format!("shard-{i}"));
        let shard = format!("{i}/2");
        let out = hvstack(&[&sweep[..], &["--shard", &shard, "--report", folder.to_str().unwrap()]].concat());
        assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
        let f = at(&format!("shard-{i}.json"));
        std::fs::write(&f, &out.stdout).unwrap();
        shards.push(f.to_str().unwrap().to_string());
    }
    assert!(at("shard-2/point-0002/index.html").is_file() && !at("shard-2/point-0001").exists());
    let out = hvstack(&["sweep-combine", &shards[0], &shards[1], "--report", at("combined").to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
    for figure in ["peak", "margin", "pd-inception", "allowable"] {
        let name = format!("{stem}-{figure}.svg");
        assert_eq!(std::fs::read(at("combined").join(&name)).unwrap(), std::fs::read(at("whole").join(&name)).unwrap());
    }
    // the case file is not a review folder to replace
    let refused = hvstack(&[&sweep[..], &["--report", c]].concat());
    assert_eq!(refused.status.code(), Some(2));
    assert_eq!(std::fs::read_to_string(&case).unwrap(), FILM_AND_GAP);
}

/// `--samples N --seed S`: a seeded random tolerance study; the same seed
/// gives the same points (ChaCha8, reproducible by rand's guarantee),
/// every draw lies in its band, shards combine into the whole, and a
/// listed key is refused (exit 2).
#[test]
fn a_random_tolerance_study_repeats_with_its_seed() {
    let dir = tempfile::tempdir().unwrap();
    let case = dir.path().join("film.yaml");
    std::fs::write(&case, FILM_AND_GAP).unwrap();
    let c = case.to_str().unwrap();
    let args =
        ["sweep", c, "--vary", "stack.layers[1].thickness=±20%", "--samples", "6", "--seed", "5", "--format", "json"];
    let run = |extra: &[&str]| {
        let out = hvstack(&[&args[..], extra].concat());
        assert!(out.status.code() != Some(2), "{}", String::from_utf8_lossy(&out.stderr));
        serde_json::from_slice::<serde_json::Value>(&out.stdout).unwrap()
    };
    let a = run(&[]);
    assert_eq!(a, run(&[]));
    assert_eq!(a["samples"]["count"], 6);
    let points = a["points"].as_array().unwrap();
    assert_eq!(points.len(), 6);
    for p in points {
        let t = p["set"]["stack.layers[1].thickness"].as_f64().unwrap();
        assert!((0.04..=0.06).contains(&t), "{t}");
    }
    let other = hvstack(&[
        "sweep",
        c,
        "--vary",
        "stack.layers[1].thickness=±20%",
        "--samples",
        "6",
        "--seed",
        "6",
        "--format",
        "json",
    ]);
    assert_ne!(serde_json::from_slice::<serde_json::Value>(&other.stdout).unwrap()["vary"], a["vary"]);
    let mut files = Vec::new();
    for i in 1..=2 {
        let f = dir.path().join(format!("r{i}.json"));
        std::fs::write(&f, serde_json::to_vec(&run(&["--shard", &format!("{i}/2")])).unwrap()).unwrap();
        files.push(f.to_str().unwrap().to_string());
    }
    let combined = hvstack(&["sweep-combine", &files[0], &files[1], "--format", "json"]);
    let combined: serde_json::Value = serde_json::from_slice(&combined.stdout).unwrap();
    assert_eq!(combined["samples"], a["samples"]);
    let sets =
        |v: &serde_json::Value| v["points"].as_array().unwrap().iter().map(|p| p["set"].clone()).collect::<Vec<_>>();
    assert_eq!(sets(&combined), sets(&a));
    let listed = hvstack(&["sweep", c, "--vary", "stack.voltage_kv=1,2", "--samples", "3"]);
    assert_eq!(listed.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&listed.stderr).contains("tolerance bands only"));
}
