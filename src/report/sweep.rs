//! The result of a sweep: JSON `{ "vary": [...], "points": [ { "set":
//! { KEY: value, … }, "result": <check JSON> } ] }`, a text table and a CSV
//! of verdict, allowable level, partial-discharge inception and each
//! part's judged peak and margin per point. Formatting only.

use super::CheckReport;
use super::text::sig4;
use crate::study::{Point, Vary};
use serde::Serialize;
use serde_json::Value;

/// One point as the JSON shows it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PointOut<'a> {
    /// The varied keys and their values at this point.
    pub set: serde_json::Map<String, serde_json::Value>,
    /// The check of the point.
    pub result: &'a CheckReport,
}

/// The JSON of a sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepOut<'a> {
    /// The varied keys and their values.
    pub vary: &'a [Vary],
    /// Every point, first key slowest.
    pub points: Vec<PointOut<'a>>,
}

/// The JSON model of a sweep.
pub fn sweep_out<'a>(vary: &'a [Vary], points: &'a [Point]) -> SweepOut<'a> {
    SweepOut {
        vary,
        points: points.iter().map(|p| PointOut { set: p.set.iter().cloned().collect(), result: &p.result }).collect(),
    }
}

fn value_text(v: &Value) -> String {
    v.as_str().map_or_else(|| v.to_string(), str::to_string)
}

fn points_of(sweep: &Value) -> &[Value] {
    sweep["points"].as_array().map_or(&[], Vec::as_slice)
}

/// Part names over all points, in first-seen order.
fn part_names(points: &[Value]) -> Vec<String> {
    let mut names: Vec<String> = Vec::new();
    for p in points {
        for part in p["result"]["parts"].as_array().into_iter().flatten() {
            if let Some(n) = part["name"].as_str()
                && !names.iter().any(|k| k == n)
            {
                names.push(n.to_string());
            }
        }
    }
    names
}

/// The varied keys, in order.
fn keys(sweep: &Value) -> Vec<String> {
    sweep["vary"].as_array().into_iter().flatten().filter_map(|v| v["key"].as_str().map(str::to_string)).collect()
}

/// Header and rows of the table (one row per point), from the sweep JSON.
fn cells(sweep: &Value) -> (Vec<String>, Vec<Vec<String>>) {
    let points = points_of(sweep);
    let keys = keys(sweep);
    let values = points.first().and_then(|p| p["result"]["values"].as_str()).unwrap_or("");
    let names = part_names(points);
    let mut head: Vec<String> = keys.clone();
    head.extend(["verdict".to_string(), format!("allowable kV {values}"), format!("PD inception kV {values}")]);
    for n in &names {
        head.push(format!("{n}: E judged kV/mm {values}"));
        head.push(format!("{n}: margin"));
    }
    let opt = |v: &Value| v.as_f64().map_or_else(|| "—".to_string(), sig4);
    let rows = points
        .iter()
        .map(|p| {
            let r = &p["result"];
            let mut row: Vec<String> = keys.iter().map(|k| value_text(&p["set"][k])).collect();
            row.extend([
                r["verdict"].as_str().unwrap_or("?").to_string(),
                opt(&r["allowable_kv"]),
                opt(&r["pd_inception_kv"]),
            ]);
            for n in &names {
                let part = r["parts"].as_array().and_then(|a| a.iter().find(|q| q["name"].as_str() == Some(n)));
                row.push(part.map_or_else(|| "—".to_string(), |q| opt(&q["e_max_judged_kv_per_mm"])));
                row.push(part.map_or_else(|| "—".to_string(), |q| opt(&q["margin"])));
            }
            row
        })
        .collect();
    (head, rows)
}

/// The sweep (its JSON, `sweep_out` or combined shards) as an aligned text
/// table, with the worst point, the spread and the caution.
pub fn render_table(sweep: &Value) -> String {
    let points = points_of(sweep);
    let nkeys = keys(sweep).len();
    let (head, rows) = cells(sweep);
    let head_refs: Vec<&str> = head.iter().map(String::as_str).collect();
    let numeric: Vec<usize> = (0..head.len()).filter(|&k| k > nkeys).collect();
    let mut out = format!(
        "hvstack sweep — {} point(s) of {}\n\n",
        points.len(),
        points.first().and_then(|p| p["result"]["title"].as_str()).unwrap_or("")
    );
    out.push_str(&super::text::table(&head_refs, rows.clone(), &numeric));
    if points.len() > 1 {
        out.push_str(&worst_and_spread(sweep, &head, &rows));
    }
    out.push_str(
        "\n\nEach point is a screening check of its own (margins on judged peaks, safety factor and inception \
         margin of the case). Check every design against the applicable codes and have it reviewed by a licensed \
         or otherwise qualified engineer.\n",
    );
    out
}

/// The worst point (worst verdict, then the lowest allowable level, then
/// the smallest margin of any part) and the lowest and highest value of
/// every figure column.
fn worst_and_spread(sweep: &Value, head: &[String], rows: &[Vec<String>]) -> String {
    let points = points_of(sweep);
    let keys = keys(sweep);
    let rank = |p: &Value| match p["result"]["verdict"].as_str() {
        Some("fail") => 2,
        Some("review") => 1,
        _ => 0,
    };
    let allowable = |p: &Value| p["result"]["allowable_kv"].as_f64().unwrap_or(f64::INFINITY);
    let low = |p: &Value| {
        p["result"]["parts"]
            .as_array()
            .into_iter()
            .flatten()
            .filter_map(|q| q["margin"].as_f64())
            .fold(f64::INFINITY, f64::min)
    };
    let worst = points
        .iter()
        .enumerate()
        .max_by(|(_, a), (_, b)| {
            rank(a).cmp(&rank(b)).then(allowable(b).total_cmp(&allowable(a))).then(low(b).total_cmp(&low(a)))
        })
        .map(|(k, _)| k)
        .unwrap_or(0);
    let w = &points[worst];
    let set: Vec<String> = keys.iter().map(|k| format!("{k}={}", value_text(&w["set"][k]))).collect();
    let mut out = format!(
        "\n\nworst point  {} ({}{})\nspread (lowest … highest over the points)\n",
        set.join(", "),
        w["result"]["verdict"].as_str().unwrap_or("?"),
        w["result"]["allowable_kv"].as_f64().map_or_else(String::new, |a| format!(
            ", allowable {} kV {}",
            sig4(a),
            w["result"]["values"].as_str().unwrap_or("")
        ))
    );
    for (c, name) in head.iter().enumerate().skip(keys.len() + 1) {
        let v: Vec<f64> = rows.iter().filter_map(|r| r[c].parse::<f64>().ok()).collect();
        if let (Some(lo), Some(hi)) = (v.iter().copied().reduce(f64::min), v.iter().copied().reduce(f64::max)) {
            out.push_str(&format!(" {name}: {} … {}\n", sig4(lo), sig4(hi)));
        }
    }
    out.trim_end().to_string()
}

/// The sweep as CSV (header row, then one row per point).
pub fn render_csv(sweep: &Value) -> Result<String, csv::Error> {
    let (head, rows) = cells(sweep);
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(&head)?;
    for r in rows {
        // the table's dash for "none" is an empty field in CSV
        w.write_record(r.iter().map(|c| if c == "—" { "" } else { c.as_str() }))?;
    }
    let bytes = w.into_inner().map_err(|e| csv::Error::from(e.into_error()))?;
    Ok(String::from_utf8_lossy(&bytes).into_owned())
}
