//! The result of a sweep: JSON `{ "vary": [...], "points": [ { "set":
//! { KEY: value, … }, "result": <check JSON> } ] }`, a text table and a CSV
//! of verdict, allowable level, partial-discharge inception and each
//! part's judged peak and margin per point. Formatting only.

use super::CheckReport;
use super::text::sig4;
use crate::picture::plot::{Plot, Series, SeriesKind};
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
        "hvstack sweep — {} point(s) of {}\n",
        points.len(),
        points.first().and_then(|p| p["result"]["title"].as_str()).unwrap_or("")
    );
    let samples = &sweep["samples"];
    if !samples.is_null() {
        out.push_str(&format!(
            "random study: {} points, each key drawn {} (seed {})\n",
            samples["count"],
            samples["distribution"].as_str().unwrap_or(""),
            samples["seed"]
        ));
    }
    out.push('\n');
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

/// How many combinations of the other keys one plot draws a series for.
pub const MAX_PLOT_GROUPS: usize = 6;

/// The plots of a sweep, from its JSON: for every varied key, the judged
/// peak field of each part (its strength over the safety factor dashed),
/// each part's margin (the safety factor dashed), the partial-discharge
/// inception of each gas part (the working level times the inception
/// margin dashed; only when some part has one) and the allowable level
/// (the working level dashed), against the key's values. With several keys
/// the other keys' combinations are separate series (the first
/// `MAX_PLOT_GROUPS`). Each comes with a file stem.
pub fn plots(sweep: &Value) -> Vec<(String, Plot)> {
    let points = points_of(sweep);
    let keys = keys(sweep);
    let names = part_names(points);
    let values = points.first().and_then(|p| p["result"]["values"].as_str()).unwrap_or("").to_string();
    let mut out = Vec::new();
    for (ki, key) in keys.iter().enumerate() {
        let listed: Vec<&Value> =
            sweep["vary"][ki]["values"].as_array().map(|a| a.iter().collect()).unwrap_or_default();
        let numeric = listed.iter().all(|v| v.as_f64().is_some());
        let x_of = |p: &Value| -> f64 {
            let v = &p["set"][key];
            if numeric {
                v.as_f64().unwrap_or(f64::NAN)
            } else {
                listed.iter().position(|w| *w == v).map_or(f64::NAN, |k| k as f64)
            }
        };
        // the other keys' settings of each point: one series group each
        // (named by the last step of each key path, to keep legends short)
        let group_of = |p: &Value| -> String {
            keys.iter()
                .filter(|k| *k != key)
                .map(|k| {
                    let short = k.rsplit(['.', ']']).find(|s| !s.is_empty()).unwrap_or(k);
                    format!("{short}={}", value_text(&p["set"][k]))
                })
                .collect::<Vec<_>>()
                .join(", ")
        };
        // a random study's points scatter: one group, markers only
        let random = !sweep["samples"].is_null();
        let group_of = |p: &Value| if random { String::new() } else { group_of(p) };
        let data = if random { SeriesKind::Points } else { SeriesKind::Data };
        let limit = if random { SeriesKind::LimitPoints } else { SeriesKind::Limit };
        let mut groups: Vec<String> = Vec::new();
        for p in points {
            let g = group_of(p);
            if !groups.contains(&g) {
                groups.push(g);
            }
        }
        let shown = groups.len().min(MAX_PLOT_GROUPS);
        let more = if groups.len() > shown {
            format!(" (the first {shown} of {} combinations of the other keys)", groups.len())
        } else {
            String::new()
        };
        let categories = (!numeric).then(|| listed.iter().map(|v| value_text(v)).collect::<Vec<_>>());
        let stem = crate::case::text::file_stem(key, 40, "key");
        // one series of `figure` per group, sorted along x; each group of a
        // colour slot gets a colour of its own
        let series = |label: &str, colour: usize, kind: SeriesKind, figure: &dyn Fn(&Value) -> Option<f64>| {
            groups[..shown]
                .iter()
                .enumerate()
                .map(|(gi, g)| {
                    let mut pts: Vec<[f64; 2]> = points
                        .iter()
                        .filter(|p| group_of(p) == *g)
                        .map(|p| [x_of(p), figure(&p["result"]).unwrap_or(f64::NAN)])
                        .filter(|q| q[0].is_finite())
                        .collect();
                    pts.sort_by(|a, b| a[0].total_cmp(&b[0]));
                    let label = if g.is_empty() { label.to_string() } else { format!("{label}, {g}") };
                    Series { label, kind, colour: colour * shown + gi, points: pts }
                })
                .collect::<Vec<_>>()
        };
        let part_field = |n: &str, field: &str| {
            let (n, field) = (n.to_string(), field.to_string());
            move |r: &Value| -> Option<f64> {
                r["parts"].as_array()?.iter().find(|q| q["name"].as_str() == Some(n.as_str()))?[field.as_str()].as_f64()
            }
        };
        let working = |r: &Value| -> Option<f64> {
            r["electrodes"]
                .as_array()?
                .iter()
                .filter(|e| e["kind"].as_str() == Some("fixed"))
                .filter_map(|e| e["potential_kv"].as_f64())
                .map(f64::abs)
                .reduce(f64::max)
        };
        let plot = |title: &str, y_label: String, series: Vec<Series>| Plot {
            title: format!("{title}{more}"),
            x_label: key.clone(),
            y_label,
            categories: categories.clone(),
            series,
        };
        let mut peak = Vec::new();
        let mut margin = Vec::new();
        let mut pd = Vec::new();
        for (c, n) in names.iter().enumerate() {
            let gas = points.iter().any(|p| part_field(n, "pd_inception_kv")(&p["result"]).is_some());
            peak.extend(series(n, c, data, &part_field(n, "e_max_judged_kv_per_mm")));
            let strength = part_field(n, "strength_kv_per_mm");
            let allowed = |r: &Value| Some(strength(r)? / r["safety_factor"].as_f64()?);
            if !gas && points.iter().any(|p| allowed(&p["result"]).is_some()) {
                peak.extend(series(&format!("{n}: strength / safety factor"), c, limit, &allowed));
            }
            if points.iter().any(|p| part_field(n, "margin")(&p["result"]).is_some()) {
                margin.extend(series(n, c, data, &part_field(n, "margin")));
            }
            if gas {
                pd.extend(series(n, c, data, &part_field(n, "pd_inception_kv")));
            }
        }
        let sf = |r: &Value| r["safety_factor"].as_f64();
        margin.extend(series("safety factor", names.len(), limit, &sf));
        for list in [&mut peak, &mut margin, &mut pd] {
            dedupe_limits(list);
        }
        out.push((format!("plot-{stem}-peak"), plot("Judged peak field", format!("kV/mm {values}"), peak)));
        out.push((format!("plot-{stem}-margin"), plot("Margin (strength / judged peak)", "margin".into(), margin)));
        if !pd.is_empty() {
            let needed = |r: &Value| Some(working(r)? * r["pd_inception_margin"].as_f64()?);
            pd.extend(series("working level × inception margin", names.len(), limit, &needed));
            out.push((
                format!("plot-{stem}-pd-inception"),
                plot("Partial-discharge inception", format!("kV {values}"), pd),
            ));
        }
        let mut allowable = series("allowable level", 0, data, &|r: &Value| r["allowable_kv"].as_f64());
        allowable.extend(series("working level", 1, limit, &working));
        dedupe_limits(&mut allowable);
        out.push((format!("plot-{stem}-allowable"), plot("Allowable level", format!("kV {values}"), allowable)));
    }
    out
}

/// Drops a limit series that repeats an earlier one's points (the same
/// limit in every group), keeping the first, its group named no more.
fn dedupe_limits(list: &mut Vec<Series>) {
    let mut kept: Vec<Series> = Vec::new();
    for s in list.drain(..) {
        match kept.iter_mut().find(|k| {
            k.kind == s.kind && matches!(s.kind, SeriesKind::Limit | SeriesKind::LimitPoints) && k.points == s.points
        }) {
            Some(k) => {
                if let Some((head, _)) = k.label.split_once(", ") {
                    k.label = head.to_string();
                }
            }
            None => kept.push(s),
        }
    }
    *list = kept;
}
