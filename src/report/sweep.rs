//! The result of a sweep: JSON `{ "vary": [...], "points": [ { "set":
//! { KEY: value, … }, "result": <check JSON> } ] }`, a text table and a CSV
//! of verdict, allowable level, partial-discharge inception and each
//! part's judged peak and margin per point. Formatting only.

use super::text::sig4;
use super::{CheckReport, VerdictOut};
use crate::study::{Point, Vary};
use serde::Serialize;

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

fn verdict_word(v: VerdictOut) -> &'static str {
    match v {
        VerdictOut::Pass => "pass",
        VerdictOut::Review => "review",
        VerdictOut::Fail => "fail",
    }
}

fn value_text(v: &serde_json::Value) -> String {
    v.as_str().map_or_else(|| v.to_string(), str::to_string)
}

/// Part names over all points, in first-seen order.
fn part_names(points: &[Point]) -> Vec<String> {
    let mut names: Vec<String> = Vec::new();
    for p in points {
        for part in &p.result.parts {
            if !names.contains(&part.name) {
                names.push(part.name.clone());
            }
        }
    }
    names
}

/// Header and rows of the table (one row per point).
fn cells(vary: &[Vary], points: &[Point]) -> (Vec<String>, Vec<Vec<String>>) {
    let values = points.first().map_or("", |p| p.result.values);
    let names = part_names(points);
    let mut head: Vec<String> = vary.iter().map(|v| v.key.clone()).collect();
    head.extend(["verdict".to_string(), format!("allowable kV {values}"), format!("PD inception kV {values}")]);
    for n in &names {
        head.push(format!("{n}: E judged kV/mm {values}"));
        head.push(format!("{n}: margin"));
    }
    let opt = |v: Option<f64>| v.map_or_else(|| "—".to_string(), sig4);
    let rows = points
        .iter()
        .map(|p| {
            let mut row: Vec<String> = p.set.iter().map(|(_, v)| value_text(v)).collect();
            row.extend([
                verdict_word(p.result.verdict).to_string(),
                opt(p.result.allowable_kv),
                opt(p.result.pd_inception_kv),
            ]);
            for n in &names {
                let part = p.result.parts.iter().find(|q| &q.name == n);
                row.push(opt(part.map(|q| q.e_max_judged_kv_per_mm)));
                row.push(opt(part.and_then(|q| q.margin)));
            }
            row
        })
        .collect();
    (head, rows)
}

/// The sweep as an aligned text table, with the caution.
pub fn render_table(vary: &[Vary], points: &[Point]) -> String {
    let (head, rows) = cells(vary, points);
    let head_refs: Vec<&str> = head.iter().map(String::as_str).collect();
    let numeric: Vec<usize> = (0..head.len()).filter(|&k| k > vary.len()).collect();
    let mut out = format!(
        "hvstack sweep — {} point(s) of {}\n\n",
        points.len(),
        points.first().map_or("", |p| p.result.title.as_str())
    );
    out.push_str(&super::text::table(&head_refs, rows.clone(), &numeric));
    if points.len() > 1 {
        out.push_str(&worst_and_spread(vary, points, &head, &rows));
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
fn worst_and_spread(vary: &[Vary], points: &[Point], head: &[String], rows: &[Vec<String>]) -> String {
    let rank = |v: VerdictOut| match v {
        VerdictOut::Pass => 0,
        VerdictOut::Review => 1,
        VerdictOut::Fail => 2,
    };
    let low = |p: &Point| p.result.parts.iter().filter_map(|q| q.margin).fold(f64::INFINITY, f64::min);
    let worst = points
        .iter()
        .enumerate()
        .max_by(|(_, a), (_, b)| {
            rank(a.result.verdict)
                .cmp(&rank(b.result.verdict))
                .then(
                    b.result
                        .allowable_kv
                        .unwrap_or(f64::INFINITY)
                        .total_cmp(&a.result.allowable_kv.unwrap_or(f64::INFINITY)),
                )
                .then(low(b).total_cmp(&low(a)))
        })
        .map(|(k, _)| k)
        .unwrap_or(0);
    let mut out = format!(
        "\n\nworst point  {} ({}{})\nspread (lowest … highest over the points)\n",
        crate::study::describe(&points[worst].set),
        verdict_word(points[worst].result.verdict),
        points[worst].result.allowable_kv.map_or_else(String::new, |a| format!(
            ", allowable {} kV {}",
            sig4(a),
            points[worst].result.values
        ))
    );
    for (c, name) in head.iter().enumerate().skip(vary.len() + 1) {
        let v: Vec<f64> = rows.iter().filter_map(|r| r[c].parse::<f64>().ok()).collect();
        if let (Some(lo), Some(hi)) = (v.iter().copied().reduce(f64::min), v.iter().copied().reduce(f64::max)) {
            out.push_str(&format!(" {name}: {} … {}\n", sig4(lo), sig4(hi)));
        }
    }
    out.trim_end().to_string()
}

/// The sweep as CSV (header row, then one row per point).
pub fn render_csv(vary: &[Vary], points: &[Point]) -> Result<String, csv::Error> {
    let (head, rows) = cells(vary, points);
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(&head)?;
    for r in rows {
        // the table's dash for "none" is an empty field in CSV
        w.write_record(r.iter().map(|c| if c == "—" { "" } else { c.as_str() }))?;
    }
    let bytes = w.into_inner().map_err(|e| csv::Error::from(e.into_error()))?;
    Ok(String::from_utf8_lossy(&bytes).into_owned())
}
