//! What changed between two results of a case: per part the peak field, the
//! margin and the verdict, and the case verdict, so a review of a design
//! change shows its effect. Works on the result JSON (older or newer
//! versions alike), not on internal types.

use super::text::{sig4, table};
use serde::Serialize;
use serde_json::Value;

/// One part's figures in one result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PartFigures {
    /// Peak field, kV/mm.
    pub e_max_kv_per_mm: Option<f64>,
    /// Margin.
    pub margin: Option<f64>,
    /// Verdict.
    pub verdict: Option<String>,
}

/// One part in both results (`None` where it is missing from one).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PartChange {
    /// Part name.
    pub name: String,
    /// Before.
    pub old: Option<PartFigures>,
    /// After.
    pub new: Option<PartFigures>,
}

/// The difference between two results.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Diff {
    /// Case verdict before and after.
    pub verdict: [Option<String>; 2],
    /// Parts in the order of the new result, then parts only in the old one.
    pub parts: Vec<PartChange>,
}

/// Why `v` is not an hvstack result JSON, if it is not: an object with
/// `hvstack_version`, `format_version`, a `verdict` of pass, review or
/// fail, and `parts`, a list of objects each with a string `name`.
pub fn not_a_result(v: &Value) -> Option<String> {
    let Some(map) = v.as_object() else {
        return Some(format!("is {}, not an object", kind(v)));
    };
    for key in ["hvstack_version", "format_version"] {
        if !map.contains_key(key) {
            return Some(format!("has no `{key}`"));
        }
    }
    match v["verdict"].as_str() {
        Some("pass" | "review" | "fail") => {}
        _ => return Some(format!("`verdict` is {}, not \"pass\", \"review\" or \"fail\"", kind(&v["verdict"]))),
    }
    let Some(parts) = v["parts"].as_array() else {
        return Some(format!("`parts` is {}, not a list", kind(&v["parts"])));
    };
    parts.iter().position(|p| !p["name"].is_string()).map(|k| format!("`parts[{k}]` has no `name` string"))
}

/// A JSON value's kind in words.
fn kind(v: &Value) -> &'static str {
    match v {
        Value::Null => "missing or null",
        Value::Bool(_) => "a boolean",
        Value::Number(_) => "a number",
        Value::String(_) => "a string",
        Value::Array(_) => "a list",
        Value::Object(_) => "an object",
    }
}

fn figures(p: &Value) -> PartFigures {
    PartFigures {
        e_max_kv_per_mm: p["e_max_kv_per_mm"].as_f64(),
        margin: p["margin"].as_f64(),
        verdict: p["verdict"].as_str().map(str::to_string),
    }
}

fn parts(v: &Value) -> Vec<(String, PartFigures)> {
    v["parts"]
        .as_array()
        .map(|a| a.iter().map(|p| (p["name"].as_str().unwrap_or("?").to_string(), figures(p))).collect())
        .unwrap_or_default()
}

/// Compares two result JSON documents.
pub fn diff(old: &Value, new: &Value) -> Diff {
    let (o, n) = (parts(old), parts(new));
    let mut out: Vec<PartChange> = n
        .iter()
        .map(|(name, f)| PartChange {
            name: name.clone(),
            old: o.iter().find(|(k, _)| k == name).map(|(_, f)| f.clone()),
            new: Some(f.clone()),
        })
        .collect();
    for (name, f) in &o {
        if !n.iter().any(|(k, _)| k == name) {
            out.push(PartChange { name: name.clone(), old: Some(f.clone()), new: None });
        }
    }
    let verdict = |v: &Value| v["verdict"].as_str().map(str::to_string);
    Diff { verdict: [verdict(old), verdict(new)], parts: out }
}

fn arrow(old: Option<String>, new: Option<String>) -> String {
    match (old, new) {
        (Some(a), Some(b)) if a == b => a,
        (a, b) => format!("{} → {}", a.unwrap_or_else(|| "—".into()), b.unwrap_or_else(|| "—".into())),
    }
}

fn number_change(old: Option<f64>, new: Option<f64>) -> String {
    match (old, new) {
        (Some(a), Some(b)) if a == b => sig4(a),
        (Some(a), Some(b)) if a != 0.0 => format!("{} → {} ({:+.1} %)", sig4(a), sig4(b), 100.0 * (b - a) / a.abs()),
        (a, b) => format!("{} → {}", a.map_or_else(|| "—".into(), sig4), b.map_or_else(|| "—".into(), sig4)),
    }
}

/// The difference as a table.
pub fn render_diff(d: &Diff) -> String {
    let rows = d
        .parts
        .iter()
        .map(|c| {
            let get = |f: &Option<PartFigures>, k: usize| {
                f.as_ref().and_then(|f| match k {
                    0 => f.e_max_kv_per_mm,
                    _ => f.margin,
                })
            };
            let verdict = |f: &Option<PartFigures>| f.as_ref().and_then(|f| f.verdict.clone());
            let status = match (&c.old, &c.new) {
                (None, _) => "added",
                (_, None) => "removed",
                (Some(a), Some(b)) if a == b => "same",
                _ => "changed",
            };
            vec![
                c.name.clone(),
                status.to_string(),
                number_change(get(&c.old, 0), get(&c.new, 0)),
                number_change(get(&c.old, 1), get(&c.new, 1)),
                arrow(verdict(&c.old), verdict(&c.new)),
            ]
        })
        .collect();
    format!(
        "verdict  {}\n\n{}\n",
        arrow(d.verdict[0].clone(), d.verdict[1].clone()),
        table(&["part", "", "E max kV/mm", "margin", "verdict"], rows, &[])
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn only_hvstack_results_are_compared() {
        let good =
            json!({ "hvstack_version": "0.1.0", "format_version": 1, "verdict": "pass", "parts": [ { "name": "a" } ] });
        assert_eq!(not_a_result(&good), None);
        assert!(not_a_result(&json!([1, 2, 3])).unwrap().contains("a list, not an object"));
        assert!(not_a_result(&json!({ "verdict": 5 })).unwrap().contains("hvstack_version"));
        let mut bad = good.clone();
        bad["verdict"] = json!(5);
        assert!(not_a_result(&bad).unwrap().contains("`verdict` is a number"));
        bad["verdict"] = json!("pass");
        bad["parts"] = json!([ { "nom": "a" } ]);
        assert!(not_a_result(&bad).unwrap().contains("parts[0]"));
    }
}
