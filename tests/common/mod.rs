//! Helpers shared by the integration tests.

use std::path::PathBuf;

/// The demo cases (`cases/*.yaml`), sorted; at least five.
#[allow(dead_code)]
pub fn demo_cases() -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir("cases")
        .expect("cases/ exists")
        .map(|e| e.expect("readable entry").path())
        .filter(|p| p.extension().and_then(|e| e.to_str()) == Some("yaml"))
        .collect();
    v.sort();
    assert!(v.len() >= 5, "the issue asks for at least five demo cases");
    v
}

/// Checks case text with the default options; panics when it does not evaluate.
#[allow(dead_code)]
pub fn run(yaml: &str) -> hvstack::report::CheckReport {
    hvstack::check(yaml, "test.yaml", &hvstack::Options::default()).expect("case evaluates")
}

/// The part of a result named `name`.
#[allow(dead_code)]
pub fn part<'a>(r: &'a hvstack::report::CheckReport, name: &str) -> &'a hvstack::report::PartOut {
    r.parts.iter().find(|p| p.name == name).unwrap_or_else(|| panic!("no part {name}"))
}

/// |a − b| / |b|.
#[allow(dead_code)]
pub fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}
