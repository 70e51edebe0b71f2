//! What changed between two results of a case: per part the peak field, the
//! margin and the verdict, the case verdict, the findings added, removed or
//! changed in severity, and (when both sides are case files) the input keys
//! that differ, so a review of a design change shows its effect; a warning
//! when the two sides are not the same case at all. Works on the result
//! JSON (older or newer versions alike), not on internal types.

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

/// One finding that changed: added, removed, or of another severity.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FindingChange {
    /// Finding code.
    pub code: String,
    /// The part it is about, if any.
    pub part: Option<String>,
    /// `added`, `removed` or `severity`.
    pub change: &'static str,
    /// Severity before (null when added).
    pub old_severity: Option<String>,
    /// Severity after (null when removed).
    pub new_severity: Option<String>,
}

/// The difference between two results.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Diff {
    /// Case verdict before and after.
    pub verdict: [Option<String>; 2],
    /// The new verdict is worse than the old (pass < review < fail).
    pub worse: bool,
    /// Why the two sides look like different cases (title, geometry or part
    /// names differ); null when they look like the same case.
    pub different_cases: Option<String>,
    /// Parts in the order of the new result, then parts only in the old one.
    pub parts: Vec<PartChange>,
    /// Findings added, removed or changed in severity.
    pub findings: Vec<FindingChange>,
    /// Input keys whose values differ (when both sides are case files);
    /// null when the inputs are not known.
    pub inputs: Option<Vec<String>>,
}

fn rank(v: Option<&str>) -> u8 {
    match v {
        Some("pass") => 0,
        Some("review") => 1,
        Some("fail") => 2,
        _ => 0,
    }
}

/// (code, part, severity) of every finding, in order.
fn findings_of(v: &Value) -> Vec<(String, Option<String>, String)> {
    v["findings"]
        .as_array()
        .map(|a| {
            a.iter()
                .map(|f| {
                    (
                        f["code"].as_str().unwrap_or("?").to_string(),
                        f["part"].as_str().map(str::to_string),
                        f["severity"].as_str().unwrap_or("?").to_string(),
                    )
                })
                .collect()
        })
        .unwrap_or_default()
}

/// Findings matched by code and part, the k-th of a kind with the k-th.
fn finding_changes(old: &Value, new: &Value) -> Vec<FindingChange> {
    let (o, n) = (findings_of(old), findings_of(new));
    let mut used = vec![false; o.len()];
    let mut out = Vec::new();
    for (code, part, sev) in &n {
        match (0..o.len()).find(|&k| !used[k] && &o[k].0 == code && &o[k].1 == part) {
            Some(k) => {
                used[k] = true;
                if &o[k].2 != sev {
                    out.push(FindingChange {
                        code: code.clone(),
                        part: part.clone(),
                        change: "severity",
                        old_severity: Some(o[k].2.clone()),
                        new_severity: Some(sev.clone()),
                    });
                }
            }
            None => out.push(FindingChange {
                code: code.clone(),
                part: part.clone(),
                change: "added",
                old_severity: None,
                new_severity: Some(sev.clone()),
            }),
        }
    }
    for (code, part, sev) in o.iter().zip(&used).filter(|(_, u)| !**u).map(|(f, _)| f) {
        out.push(FindingChange {
            code: code.clone(),
            part: part.clone(),
            change: "removed",
            old_severity: Some(sev.clone()),
            new_severity: None,
        });
    }
    out
}

/// Why two results look like different cases, if they do.
fn different_cases(old: &Value, new: &Value) -> Option<String> {
    let mut why = Vec::new();
    if old["title"] != new["title"] {
        why.push(format!("the titles differ ({} / {})", old["title"], new["title"]));
    }
    if old["geometry"] != new["geometry"] {
        why.push(format!("the geometries differ ({} / {})", old["geometry"], new["geometry"]));
    }
    let names = |v: &Value| {
        let mut n: Vec<String> = parts(v).into_iter().map(|(k, _)| k).collect();
        n.sort();
        n
    };
    if names(old) != names(new) {
        why.push("the part names differ".to_string());
    }
    (!why.is_empty()).then(|| why.join("; "))
}

/// The key paths (as error messages print them) whose values differ
/// between two case documents, in document order, lists compared entry by
/// entry.
pub fn input_changes(old: &serde_yaml::Value, new: &serde_yaml::Value) -> Vec<String> {
    fn walk(a: Option<&serde_yaml::Value>, b: Option<&serde_yaml::Value>, path: &str, out: &mut Vec<String>) {
        use serde_yaml::Value as Y;
        match (a, b) {
            (Some(Y::Mapping(x)), Some(Y::Mapping(y))) => {
                let mut keys: Vec<&Y> = x.keys().collect();
                keys.extend(y.keys().filter(|k| !x.contains_key(*k)));
                for k in keys {
                    let name = k.as_str().map_or_else(|| format!("{k:?}"), str::to_string);
                    let p = if path.is_empty() { name } else { format!("{path}.{name}") };
                    walk(x.get(k), y.get(k), &p, out);
                }
            }
            (Some(Y::Sequence(x)), Some(Y::Sequence(y))) => {
                for k in 0..x.len().max(y.len()) {
                    walk(x.get(k), y.get(k), &format!("{path}[{k}]"), out);
                }
            }
            (a, b) if a != b => out.push(path.to_string()),
            _ => {}
        }
    }
    let mut out = Vec::new();
    walk(Some(old), Some(new), "", &mut out);
    out
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
    Diff {
        verdict: [verdict(old), verdict(new)],
        worse: rank(new["verdict"].as_str()) > rank(old["verdict"].as_str()),
        different_cases: different_cases(old, new),
        parts: out,
        findings: finding_changes(old, new),
        inputs: None,
    }
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
    let mut out = String::new();
    if let Some(why) = &d.different_cases {
        out.push_str(&format!("WARNING  the two sides look like different cases: {why}\n"));
    }
    out.push_str(&format!(
        "verdict  {}{}\n\n{}\n",
        arrow(d.verdict[0].clone(), d.verdict[1].clone()),
        if d.worse { " (worse)" } else { "" },
        table(&["part", "", "E max kV/mm", "margin", "verdict"], rows, &[])
    ));
    if !d.findings.is_empty() {
        let rows = d
            .findings
            .iter()
            .map(|f| {
                vec![
                    f.code.clone(),
                    f.part.clone().unwrap_or_else(|| "—".into()),
                    f.change.to_string(),
                    arrow(f.old_severity.clone(), f.new_severity.clone()),
                ]
            })
            .collect();
        out.push_str(&format!("\nfindings\n{}\n", table(&["code", "part", "change", "severity"], rows, &[])));
    }
    match &d.inputs {
        Some(keys) if keys.is_empty() => out.push_str("\ninputs   the same\n"),
        Some(keys) => out.push_str(&format!("\ninputs that differ\n {}\n", keys.join("\n "))),
        None => {}
    }
    out
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
