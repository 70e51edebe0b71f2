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

/// Walks two result JSON documents side by side: numbers agree to the
/// relative tolerance and absolute floor `tolerance(path)` gives (relative
/// to the larger magnitude), everything else exactly; top-level keys in
/// `skip` are left out (figures that differ by design, such as `solve`).
#[allow(dead_code)]
pub fn agree_json(
    a: &serde_json::Value,
    b: &serde_json::Value,
    path: &str,
    skip: &[&str],
    tolerance: &dyn Fn(&str) -> (f64, f64),
) {
    use serde_json::Value::*;
    match (a, b) {
        (Number(x), Number(y)) => {
            let (x, y) = (x.as_f64().unwrap(), y.as_f64().unwrap());
            let (tol, floor) = tolerance(path);
            let scale = x.abs().max(y.abs()).max(1e-9);
            assert!((x - y).abs() <= (tol * scale).max(floor), "{path}: {x} vs {y}");
        }
        (Array(x), Array(y)) => {
            assert_eq!(x.len(), y.len(), "{path}");
            for (k, (p, q)) in x.iter().zip(y).enumerate() {
                agree_json(p, q, &format!("{path}[{k}]"), skip, tolerance);
            }
        }
        (Object(x), Object(y)) => {
            for (k, v) in x {
                if path.is_empty() && skip.contains(&k.as_str()) {
                    continue;
                }
                agree_json(v, &y[k], &format!("{path}.{k}"), skip, tolerance);
            }
        }
        _ => assert_eq!(a, b, "{path}"),
    }
}
