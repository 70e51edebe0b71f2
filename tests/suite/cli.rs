//! The command line as a user meets it: exit status, streams, messages.

use std::path::Path;
use std::process::{Command, Output};

fn hvstack(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_hvstack")).args(args).output().expect("binary runs")
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// Every file in tests/bad states the message fragment it must produce
/// (`# expect: …`) and, where a line applies, the line (`# line: N`).
#[test]
fn bad_inputs_exit_2_with_a_located_message() {
    let mut count = 0;
    let mut paths: Vec<_> = std::fs::read_dir("tests/bad").unwrap().map(|e| e.unwrap().path()).collect();
    paths.sort();
    for path in paths {
        if path.extension().and_then(|e| e.to_str()) != Some("yaml") {
            continue;
        }
        // lossy: the catalogue holds a file that is not UTF-8 on purpose
        let text = String::from_utf8_lossy(&std::fs::read(&path).unwrap()).into_owned();
        let header = |key: &str| text.lines().find_map(|l| l.strip_prefix(&format!("# {key}: ")).map(str::to_string));
        let expect = header("expect").unwrap_or_else(|| panic!("{}: no `# expect:` line", path.display()));
        let file = path.to_str().unwrap();
        let out = hvstack(&["check", file]);
        let err = stderr(&out);
        assert_eq!(out.status.code(), Some(2), "{file}: {err}");
        assert!(out.stdout.is_empty(), "{file}: nothing on stdout");
        assert!(err.contains(&expect), "{file}: expected «{expect}» in «{err}»");
        assert!(err.starts_with(file), "{file}: message names the file: «{err}»");
        if let Some(line) = header("line") {
            assert!(err.contains(&format!("{file}:{line}")), "{file}: expected line {line} in «{err}»");
        }
        assert!(!err.contains("panicked"), "{file}");
        assert!(!err.chars().any(|c| c.is_control() && c != '\n'), "{file}: control characters reach the terminal");
        count += 1;
    }
    assert!(count >= 50, "catalogue has {count} files");
}

#[test]
fn demo_cases_exit_by_verdict_and_json_is_alone_on_stdout() {
    for path in crate::common::demo_cases() {
        let out = hvstack(&["check", path.to_str().unwrap(), "--format", "json"]);
        let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("stdout is one JSON document");
        let expected = if v["verdict"] == "pass" { 0 } else { 1 };
        assert_eq!(out.status.code(), Some(expected), "{}", path.display());
        for key in
            ["verdict", "title", "geometry", "grid", "solve", "energy", "parts", "electrodes", "probes", "findings"]
        {
            assert!(v.get(key).is_some(), "{}: missing {key}", path.display());
        }
        assert!(v["caution"].as_str().unwrap().contains("licensed"));
        let text = hvstack(&["check", path.to_str().unwrap()]);
        assert_eq!(text.status.code(), Some(expected));
        assert!(String::from_utf8_lossy(&text.stdout).contains("caution"));
    }
}

#[test]
fn same_case_gives_identical_json_apart_from_the_solve_time() {
    let run = || {
        let out = hvstack(&["check", "cases/condenser-foils.yaml", "--format", "json"]);
        let mut v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        v["solve"]["seconds"] = serde_json::Value::Null;
        serde_json::to_string(&v).unwrap()
    };
    assert_eq!(run(), run());
}

#[test]
fn materials_are_listed_with_sources() {
    let out = hvstack(&["materials", "--format", "json"]);
    assert_eq!(out.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let list = v.as_array().unwrap();
    assert!(list.len() >= 15);
    assert!(list.iter().all(|m| !m["source"].as_str().unwrap().is_empty()));
    let text = hvstack(&["materials"]);
    assert!(String::from_utf8_lossy(&text.stdout).contains("polyimide"));
}

#[test]
fn help_is_there_for_every_command() {
    for args in [vec!["--help"], vec!["check", "--help"], vec!["materials", "--help"]] {
        let out = hvstack(&args);
        assert_eq!(out.status.code(), Some(0));
        assert!(!out.stdout.is_empty());
    }
    let out = hvstack(&["check", "--help"]);
    assert!(
        String::from_utf8_lossy(&out.stdout).contains("Exit status")
            || String::from_utf8_lossy(&hvstack(&["--help"]).stdout).contains("Exit status")
    );
}

#[test]
fn a_missing_file_is_exit_2() {
    let out = hvstack(&["check", "no/such/case.yaml"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("no/such/case.yaml"));
    assert!(!Path::new("no").exists());
}

/// Every unknown key of a case is reported at once, each with its line and,
/// where one is close, the key that was probably meant.
#[test]
fn all_unknown_keys_are_reported_at_once_with_suggestions() {
    let (out, err) = check_text(
        "titel: typo\ngeometry: planar\ndomain: { x: [0, 10], y: [0, 10] }\nmaterials:\n  r: { permitivity: 4, source: t }\nparts:\n  - { name: a, electrode: { potential_kv: 5 }, shape: { circle: { centre: [5, 5], radius: 1 } } }\n",
    );
    assert_eq!(out.status.code(), Some(2));
    for (line, fragment) in
        [(1, "did you mean `title`?"), (5, "did you mean `permittivity`?"), (7, "did you mean `center`?")]
    {
        assert!(
            err.lines().any(|l| l.contains(&format!("case.yaml:{line}:")) && l.contains(fragment)),
            "{fragment} in {err}"
        );
    }
}

/// Checks a case given as text (written to a temporary `case.yaml`):
/// the output and its stderr.
fn check_text(text: &str) -> (Output, String) {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("case.yaml");
    std::fs::write(&file, text).unwrap();
    let out = hvstack(&["check", file.to_str().unwrap()]);
    let err = stderr(&out);
    (out, err)
}

/// Values of the wrong type are all reported at once too (serde stops at
/// the first; the JSON Schema of the format finds the rest), each with its
/// file, line, column and key.
#[test]
fn all_wrong_types_are_reported_at_once() {
    let (out, err) = check_text(
        "title: two wrong types\nstack:\n  form: planar\n  voltage_kv: twelve\n  layers:\n    - { name: a, material: ptfe, thickness: 1 }\n    - { name: b, material: mica, thickness: thin }\nprobes:\n  - { name: p, at: [1, \"x\"] }\n",
    );
    assert_eq!(out.status.code(), Some(2));
    for (line, key) in [(4, "stack.voltage_kv"), (7, "stack.layers[1].thickness"), (9, "probes[0].at[1]")] {
        assert!(err.lines().any(|l| l.contains(&format!("case.yaml:{line}:")) && l.contains(key)), "{key} in {err}");
    }
}

/// The table of known keys (used for the all-at-once report) agrees with
/// the serde schema: a case using every key once parses.
#[test]
fn the_known_key_table_matches_the_schema() {
    let every_key = "
title: all keys
geometry: axisymmetric
units: mm
domain: { x: [0, 20], y: [0, 20] }
background: air
grid: { max_step: 1, min_step: 0.01, cells_across: 4, growth: 1.3, refine: 1, boxes: [ { x: [1, 2], y: [1, 2], max_step: 0.5 } ] }
environment: { temperature_c: 25, pressure_kpa: 100 }
operation: { mode: ac, frequency_hz: 60, values: rms }
materials:
  m: { base: epoxy, class: solid, permittivity: 4, strength_kv_per_mm: 20, strength_basis: rms, strength_at: { temperature_c: 90, water_volume_pct: 1 }, density_kg_per_m3: 1200, loss_tangent: 0.01, source: test }
  t: { permittivity_vs_temperature_c: [[20, 3.6], [90, 4.1]], source: test }
  d: { debye: { eps_inf: 3.2, delta_eps: 0.6, tau_s: 1e-3, activation_ev: 0.9 }, source: test }
stack: { form: coaxial, voltage_kv: 1, inner_radius: 1, length: 20, layers: [ { name: l, material: m, thickness: 19, temperature_c: 70, water: { mass_pct: 1, rule: lichtenecker } } ] }
parts:
  - { name: a, material: m, shape: { rect: { x: [2, 3], y: [2, 3], radius: 0.1 } }, temperature_c: 40, water: { volume_pct: 2, rule: maxwell-garnett } }
  - { name: a2, material: t, shape: { rect: { x: [3, 4], y: [2, 3] } } }
  - { name: a3, material: d, shape: { rect: { x: [4, 5], y: [2, 3] } } }
  - { name: b, electrode: { potential_kv: 1 }, shape: { circle: { center: [0, 10], radius: 0.5 } } }
  - { name: c, material: air, shape: { polygon: [[5, 5], [6, 5], [6, 6]] } }
probes: [ { name: p, at: [5, 5] } ]
limits: { safety_factor: 2 }
";
    let r = hvstack::case::parse(every_key, "all.yaml");
    assert!(r.is_ok(), "{:?}", r.err());
}

/// A folder is a batch: one summary row per case, the worst exit status
/// (the demo folder holds failing cases: 1), a JUnit XML that parses with
/// one test per case, and the same rows whatever `--jobs` says.
#[test]
fn a_folder_is_checked_as_a_batch() {
    let dir = std::env::temp_dir().join(format!("hvstack-batch-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let junit = dir.join("results.xml");
    let out = hvstack(&["check", "cases", "--format", "json", "--quiet", "--junit", junit.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    let rows: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let n = rows.as_array().unwrap().len();
    assert!(n >= 5);
    let xml = std::fs::read_to_string(&junit).unwrap();
    let mut reader = quick_xml::Reader::from_str(&xml);
    let (mut cases, mut failures) = (0, 0);
    loop {
        match reader.read_event().expect("well-formed XML") {
            quick_xml::events::Event::Start(e) | quick_xml::events::Event::Empty(e) => match e.name().as_ref() {
                "testcase" => cases += 1,
                "failure" | "error" => failures += 1,
                _ => {}
            },
            quick_xml::events::Event::Eof => break,
            _ => {}
        }
    }
    assert_eq!(cases, n);
    assert_eq!(failures, rows.as_array().unwrap().iter().filter(|r| r["exit_status"] != 0).count());
    let two = hvstack(&["check", "cases", "--format", "json", "--quiet", "--jobs", "2"]);
    assert_eq!(two.stdout, out.stdout, "same rows with --jobs 2");
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn batch_summary_table() {
    let out = hvstack(&["check", "cases", "--quiet"]);
    insta::assert_snapshot!("batch_summary", String::from_utf8_lossy(&out.stdout));
}

/// `diff` shows each part's change; here the voltage rises 12 → 15 kV and the
/// cushion thins, so every field rises by the same ratio (series layers,
/// common practice) and the snapshot keeps the table's layout.
#[test]
fn diff_of_a_design_change() {
    let dir = std::env::temp_dir().join(format!("hvstack-diff-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let text = std::fs::read_to_string("cases/planar-sheet.yaml").unwrap();
    let changed = text
        .replace("voltage_kv: 12", "voltage_kv: 15")
        .replace("thickness: 1.0 }", "thickness: 0.8 }")
        .replace("to: [10, 3.125]", "to: [10, 2.925]");
    let new = dir.join("sheet.yaml");
    std::fs::write(&new, changed).unwrap();
    let old_json = dir.join("old.json");
    let out = hvstack(&["check", "cases/planar-sheet.yaml", "--format", "json"]);
    std::fs::write(&old_json, &out.stdout).unwrap();
    let d = hvstack(&["diff", old_json.to_str().unwrap(), new.to_str().unwrap()]);
    assert_eq!(d.status.code(), Some(0), "{}", stderr(&d));
    insta::assert_snapshot!("diff_planar_sheet", String::from_utf8_lossy(&d.stdout));
    let bad = hvstack(&["diff", "no/such.json", new.to_str().unwrap()]);
    assert_eq!(bad.status.code(), Some(2));
    std::fs::remove_dir_all(&dir).unwrap();
}

/// The JSON Schema published in the repository is the one the types
/// generate (regenerate with `hvstack schema > cases/case.schema.json`).
#[test]
fn published_schema_is_current() {
    let out = hvstack(&["schema"]);
    assert_eq!(out.status.code(), Some(0));
    let published = std::fs::read_to_string("cases/case.schema.json").unwrap();
    assert_eq!(String::from_utf8_lossy(&out.stdout), published, "regenerate cases/case.schema.json");
    let v: serde_json::Value = serde_json::from_str(&published).unwrap();
    for key in ["title", "geometry", "domain", "stack", "parts", "probes", "limits", "materials", "grid"] {
        assert!(v["properties"][key].is_object(), "schema lacks {key}");
    }
}

/// `--shard I/N` slices a batch into disjoint parts that cover it.
#[test]
fn shards_are_disjoint_and_cover_the_batch() {
    let files = |args: &[&str]| -> Vec<String> {
        let out = hvstack(args);
        let rows: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        rows.as_array().unwrap().iter().map(|r| r["file"].as_str().unwrap().to_string()).collect()
    };
    let all = files(&["check", "cases", "--quiet", "--format", "json"]);
    let mut parts: Vec<String> = (1..=3)
        .flat_map(|i| files(&["check", "cases", "--quiet", "--format", "json", "--shard", &format!("{i}/3")]))
        .collect();
    parts.sort();
    assert_eq!(parts, all);
    assert_eq!(hvstack(&["check", "cases", "--shard", "0/3"]).status.code(), Some(2));
}

/// README's table of limits states the numbers the code enforces
/// (`hvstack::case::limits`); a change to one must change the other.
#[test]
fn readme_states_the_limits_the_code_enforces() {
    use hvstack::case::limits as l;
    let readme = std::fs::read_to_string("README.md").unwrap();
    let section = readme.split("## Limits").nth(1).expect("README has a Limits section");
    let section = section.split("\n## ").next().unwrap();
    let mib = (l::MAX_CASE_BYTES / (1024 * 1024)).to_string();
    let counts = [
        l::MAX_COLLECTION_ENTRIES,
        l::MAX_VALUES,
        l::MAX_DIAGNOSTICS,
        l::MAX_TITLE_CHARS,
        l::MAX_NAME_CHARS,
        l::MAX_SOURCE_CHARS,
        l::MAX_PARTS,
        l::MAX_LAYERS,
        l::MAX_MATERIALS,
        l::MAX_POLYGON_VERTICES,
        l::MAX_PROBES,
        l::MAX_LINES,
        l::MAX_LINE_POINTS,
        l::MAX_TOTAL_LINE_POINTS,
        l::MAX_REFINE_BOXES,
        hvstack::DEFAULT_MAX_NODES,
        hvstack::grid::MAX_SUPPORTED_NODES,
    ];
    let values = [
        l::MAX_COORDINATE_MM,
        l::MIN_SIZE_MM,
        l::MAX_POTENTIAL_KV,
        l::MAX_PERMITTIVITY,
        l::MIN_STRENGTH_KV_PER_MM,
        l::MAX_STRENGTH_KV_PER_MM,
        l::MAX_LOSS_TANGENT,
        l::MAX_SAFETY_FACTOR,
        l::PLAUSIBLE_MAX_POTENTIAL_KV,
        l::PLAUSIBLE_MIN_DIFFERENCE_KV,
        l::PLAUSIBLE_MAX_EXTENT_MM,
        l::PLAUSIBLE_MAX_LAYER_MM,
        l::PLAUSIBLE_MIN_SIZE_MM,
        l::PLAUSIBLE_MAX_STRENGTH_KV_PER_MM,
        l::PLAUSIBLE_MAX_PERMITTIVITY,
    ];
    assert!(section.contains(&format!("{mib} MiB")), "case size");
    for n in counts {
        assert!(section.contains(&n.to_string()), "README Limits lacks {n}");
    }
    for v in values {
        assert!(section.contains(&v.to_string()), "README Limits lacks {v}");
    }
    assert!(section.contains(&format!("{:e} kV", l::MIN_POTENTIAL_KV)), "smallest potential");
}

/// README's example report is the real output of its command, so the
/// documentation cannot drift from the program.
#[test]
fn readme_example_report_is_current() {
    let readme = std::fs::read_to_string("README.md").unwrap();
    let start = "```\n$ hvstack check cases/moist-resin-gap.yaml\n";
    let at = readme.find(start).expect("README has the example report") + start.len();
    let shown = &readme[at..at + readme[at..].find("```\n").expect("the example block ends")];
    let out = hvstack(&["check", "cases/moist-resin-gap.yaml"]);
    assert_eq!(String::from_utf8_lossy(&out.stdout), shown, "update README's example report");
}

/// CI policy (issue 15): `--fail-on fail` lets a case under review pass the
/// exit status and its JUnit test, while a failing case still fails; the
/// default (`review`) fails both, as before.
#[test]
fn fail_on_chooses_whether_review_fails_the_run() {
    let review = "cases/moist-resin-gap.yaml";
    let fail = "cases/resin-void.yaml";
    assert_eq!(hvstack(&["check", review]).status.code(), Some(1));
    assert_eq!(hvstack(&["check", review, "--fail-on", "fail"]).status.code(), Some(0));
    assert_eq!(hvstack(&["check", fail, "--fail-on", "fail"]).status.code(), Some(1));
    let dir = tempfile::tempdir().unwrap();
    let junit = dir.path().join("results.xml");
    let out = hvstack(&["check", review, fail, "--fail-on", "fail", "--junit", junit.to_str().unwrap(), "--quiet"]);
    assert_eq!(out.status.code(), Some(1));
    let xml = std::fs::read_to_string(&junit).unwrap();
    assert!(xml.contains(r#"failures="1""#), "{xml}");
    let out = hvstack(&["sweep", review, "--vary", "stack.voltage_kv=1,2", "--fail-on", "fail"]);
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
}

/// `diff` (issue 15): findings added or removed, the input keys that
/// differ between two case files, exit 1 when the new verdict is worse, and
/// a warning when the two sides are different cases.
#[test]
fn diff_lists_finding_and_input_changes_and_fails_when_worse() {
    let dir = tempfile::tempdir().unwrap();
    let thinner = dir.path().join("thinner-gap.yaml");
    let text = std::fs::read_to_string("cases/moist-resin-gap.yaml").unwrap();
    assert!(text.contains("thickness: 0.4"));
    std::fs::write(&thinner, text.replace("thickness: 0.4", "thickness: 0.2")).unwrap();
    let t = thinner.to_str().unwrap();
    let better = hvstack(&["diff", "cases/moist-resin-gap.yaml", t, "--format", "json"]);
    assert_eq!(better.status.code(), Some(0), "{}", String::from_utf8_lossy(&better.stderr));
    let d: serde_json::Value = serde_json::from_slice(&better.stdout).unwrap();
    assert_eq!(d["inputs"], serde_json::json!(["stack.layers[1].thickness"]));
    assert_eq!(d["worse"], false);
    assert!(d["different_cases"].is_null());
    let removed: Vec<&str> = d["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["change"] == "removed")
        .map(|f| f["code"].as_str().unwrap())
        .collect();
    assert!(removed.contains(&"pd-margin-thin"), "{removed:?}");
    // the other way round the verdict of the air gap gets worse, the case's stays
    let back = hvstack(&["diff", t, "cases/moist-resin-gap.yaml", "--format", "json"]);
    let d: serde_json::Value = serde_json::from_slice(&back.stdout).unwrap();
    assert!(d["findings"].as_array().unwrap().iter().any(|f| f["change"] == "added" && f["code"] == "pd-margin-thin"));
    // a worse case verdict fails the run; different cases are flagged
    let worse = hvstack(&["diff", "cases/planar-sheet.yaml", "cases/moist-resin-gap.yaml"]);
    assert_eq!(worse.status.code(), Some(1));
    let text = String::from_utf8_lossy(&worse.stdout);
    assert!(text.contains("look like different cases") && text.contains("(worse)"), "{text}");
}
