//! Helpers shared by the integration tests.

use std::path::PathBuf;

/// The demo cases (`cases/*.yaml`), sorted; at least five.
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
