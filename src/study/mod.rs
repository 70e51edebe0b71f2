//! Studies above the pipeline: a sweep sets case keys to each combination
//! of values and checks every point as a case of its own (validated alike,
//! so a bad point is reported with its values and key). Points run in
//! parallel on rayon's pool and come back in point order, whatever the job
//! count. No file or terminal I/O: the case text comes in, results go out.
//!
//! Key paths are spelt as error messages print them: `stack.layers[1].thickness`,
//! `parts[3].water.volume_pct`, `environment.temperature_c` (indices from 0).
//! Missing mapping keys are created (a case without `environment:` can
//! still vary `environment.temperature_c`); a sequence index must exist.

pub mod allowable;
pub mod batch;
pub mod selfcheck;

use crate::report::CheckReport;
use crate::{Error, Options, SelfCheck};
use rayon::prelude::*;

/// Most values one `--vary` may list or generate.
pub const MAX_VALUES: usize = 1000;
/// Most points of a sweep (the product of the value counts).
pub const MAX_POINTS: usize = 10_000;

/// One varied key and its values.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Vary {
    /// Key path.
    pub key: String,
    /// Values, in order (numbers, or words for keys that take words).
    pub values: Vec<serde_json::Value>,
    /// `KEY=±T%`: a tolerance band around the case's own value, T/100;
    /// `resolve` turns it into the values low, nominal, high.
    #[serde(skip)]
    pub tolerance: Option<f64>,
}

/// A study could not be set up or one of its points could not be
/// evaluated (nothing is reported then).
#[derive(Debug, thiserror::Error)]
pub enum StudyError {
    /// A `--vary` argument is malformed.
    #[error("--vary {arg}: {why}")]
    BadVary {
        /// The argument as given.
        arg: String,
        /// What is wrong.
        why: String,
    },
    /// A key path does not lead to a value that can be set.
    #[error("{file}: --vary {key}: {why}")]
    BadKey {
        /// Case file name.
        file: String,
        /// The key path.
        key: String,
        /// What is wrong.
        why: String,
    },
    /// Too many points.
    #[error("the sweep has {points} points, above the limit of {MAX_POINTS}")]
    TooManyPoints {
        /// Product of the value counts.
        points: usize,
    },
    /// The case text is not YAML at all.
    #[error("{file}: {why}")]
    NotYaml {
        /// Case file name.
        file: String,
        /// The parser's message.
        why: String,
    },
    /// A point's review files could not be built or kept.
    #[error("sweep point {set}: review files: {why}")]
    Review {
        /// The point's values, `KEY=VALUE, …`.
        set: String,
        /// The problem.
        why: String,
    },
    /// One point did not evaluate.
    #[error("sweep point {set}: {source}")]
    Point {
        /// The point's values, `KEY=VALUE, …`.
        set: String,
        /// The problem.
        source: Box<Error>,
    },
}

/// One point of a sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct Point {
    /// The value of each varied key (in `--vary` order).
    pub set: Vec<(String, serde_json::Value)>,
    /// The check of that point.
    pub result: CheckReport,
}

/// Parses `KEY=VALUES`: a comma list (`0.5,1,2`; words are kept as words)
/// or `start:stop:count` (count values evenly spaced, both ends included).
pub fn parse_vary(arg: &str) -> Result<Vary, StudyError> {
    let bad = |why: &str| StudyError::BadVary { arg: arg.to_string(), why: why.to_string() };
    let (key, values) =
        arg.split_once('=').ok_or_else(|| bad("expected KEY=VALUES, e.g. stack.voltage_kv=10,20,30"))?;
    let key = key.trim();
    if key.is_empty() || key.contains(char::is_whitespace) {
        return Err(bad("the key is empty or holds spaces"));
    }
    let values = values.trim();
    if let Some(band) = values.strip_prefix('±').or_else(|| values.strip_prefix("+-")) {
        let pct = band.trim().strip_suffix('%').ok_or_else(|| bad("a tolerance is ±T% (e.g. ±10%)"))?;
        let t: f64 = pct.trim().parse().map_err(|_| bad("the tolerance is not a number"))?;
        if !(t > 0.0 && t < 100.0) {
            return Err(bad("a tolerance must lie between 0 and 100 %"));
        }
        return Ok(Vary { key: key.to_string(), values: Vec::new(), tolerance: Some(t / 100.0) });
    }
    let parts: Vec<&str> = values.split(':').collect();
    let list: Vec<serde_json::Value> = if parts.len() == 3 {
        let num =
            |s: &str, what: &str| s.trim().parse::<f64>().map_err(|_| bad(&format!("{what} `{s}` is not a number")));
        let (start, stop) = (num(parts[0], "start")?, num(parts[1], "stop")?);
        let count: usize = parts[2].trim().parse().map_err(|_| bad("count is not a whole number"))?;
        if !(start.is_finite() && stop.is_finite()) {
            return Err(bad("start and stop must be finite"));
        }
        if count == 0 || count > MAX_VALUES {
            return Err(bad(&format!("count must be 1 to {MAX_VALUES}")));
        }
        (0..count)
            .map(|k| {
                let t = if count == 1 { 0.0 } else { k as f64 / (count - 1) as f64 };
                number(start + t * (stop - start))
            })
            .collect()
    } else if parts.len() == 1 {
        values
            .split(',')
            .map(|v| {
                let v = v.trim();
                if v.is_empty() {
                    return Err(bad("an empty value in the list"));
                }
                Ok(match v.parse::<f64>() {
                    Ok(x) if x.is_finite() => number(x),
                    Ok(_) => return Err(bad(&format!("`{v}` is not a finite number"))),
                    Err(_) => serde_json::Value::String(v.to_string()),
                })
            })
            .collect::<Result<_, _>>()?
    } else {
        return Err(bad("expected a comma list or start:stop:count"));
    };
    if list.len() > MAX_VALUES {
        return Err(bad(&format!("more than {MAX_VALUES} values")));
    }
    Ok(Vary { key: key.to_string(), values: list, tolerance: None })
}

/// The value at a key path, if it is there.
fn get_key<'a>(doc: &'a serde_yaml::Value, key: &str) -> Option<&'a serde_yaml::Value> {
    let mut at = doc;
    for step in steps(key).ok()? {
        at = match step {
            Step::Key(k) => at.as_mapping()?.get(serde_yaml::Value::String(k))?,
            Step::Index(i) => at.as_sequence()?.get(i)?,
        };
    }
    Some(at)
}

/// Turns each tolerance band into its values: the case's own value at the
/// key times 1 − T, 1 and 1 + T (the corners and the nominal point).
pub fn resolve(text: &str, file: &str, vary: &[Vary]) -> Result<Vec<Vary>, StudyError> {
    let doc: serde_yaml::Value =
        serde_yaml::from_str(text).map_err(|e| StudyError::NotYaml { file: file.to_string(), why: e.to_string() })?;
    vary.iter()
        .map(|v| match v.tolerance {
            None => Ok(v.clone()),
            Some(t) => {
                let x =
                    get_key(&doc, &v.key).and_then(serde_yaml::Value::as_f64).ok_or_else(|| StudyError::BadKey {
                        file: file.to_string(),
                        key: v.key.clone(),
                        why: "a tolerance band needs a number at this key in the case".into(),
                    })?;
                Ok(Vary {
                    key: v.key.clone(),
                    values: vec![number(x * (1.0 - t)), number(x), number(x * (1.0 + t))],
                    tolerance: None,
                })
            }
        })
        .collect()
}

/// A seeded random tolerance study: `samples` points, each drawing every
/// toleranced key independently.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Sampling {
    /// Points drawn.
    pub samples: usize,
    /// Seed of the ChaCha8 stream.
    pub seed: u64,
}

/// How the points of a sweep are formed from the varied values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Design {
    /// Every combination, the first key slowest.
    #[default]
    Grid,
    /// Point k takes the k-th value of every key (a random study's draws).
    Zip,
}

/// Draws `sampling.samples` values for every tolerance band, uniform within
/// nominal·(1 ± T) (T the band's fraction, nominal the case's own value),
/// rounded to 6 significant digits; point k of the study (`Design::Zip`)
/// takes draw k of every key. The numbers come from ChaCha8 seeded with
/// `sampling.seed` (a stream rand guarantees across versions and machines),
/// each a 53-bit fraction of one 64-bit output, draw k of key j being
/// output k·keys + j: the same seed gives the same study everywhere.
pub fn resolve_random(text: &str, file: &str, vary: &[Vary], sampling: Sampling) -> Result<Vec<Vary>, StudyError> {
    use rand::{Rng, SeedableRng};
    if let Some(v) = vary.iter().find(|v| v.tolerance.is_none()) {
        return Err(StudyError::BadVary {
            arg: v.key.clone(),
            why: "a random study (--samples) varies tolerance bands only: give KEY=±T%".into(),
        });
    }
    if sampling.samples == 0 || sampling.samples > MAX_POINTS {
        return Err(StudyError::TooManyPoints { points: sampling.samples });
    }
    let nominal = resolve(text, file, vary)?;
    let mut rng = rand::rngs::ChaCha8Rng::seed_from_u64(sampling.seed);
    let mut values: Vec<Vec<serde_json::Value>> = vec![Vec::with_capacity(sampling.samples); vary.len()];
    for _ in 0..sampling.samples {
        for (j, v) in vary.iter().enumerate() {
            let u = (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
            let x = nominal[j].values[1].as_f64().unwrap_or(f64::NAN);
            let t = v.tolerance.unwrap_or(0.0);
            values[j].push(number(significant_digits(x * (1.0 + t * (2.0 * u - 1.0)), 6)));
        }
    }
    Ok(vary.iter().zip(values).map(|(v, values)| Vary { key: v.key.clone(), values, tolerance: None }).collect())
}

/// `x` rounded to `digits` significant digits.
fn significant_digits(x: f64, digits: i32) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let scale = 10f64.powi(digits - 1 - x.abs().log10().floor() as i32);
    (x * scale).round() / scale
}

/// A JSON number, whole numbers without a fraction (so `3` stays `3`).
fn number(x: f64) -> serde_json::Value {
    // rounding residue of start + t·(stop − start) below 1e-12 relative
    let r = (x * 1e12).round() / 1e12;
    if r.fract() == 0.0 && r.abs() < 1e15 { serde_json::Value::from(r as i64) } else { serde_json::Value::from(r) }
}

/// One step of a key path.
#[derive(Debug, Clone, PartialEq)]
enum Step {
    Key(String),
    Index(usize),
}

/// Splits `a.b[2].c` into steps.
fn steps(key: &str) -> Result<Vec<Step>, String> {
    let mut out = Vec::new();
    for segment in key.split('.') {
        let (name, mut rest) = match segment.find('[') {
            Some(i) => (&segment[..i], &segment[i..]),
            None => (segment, ""),
        };
        if name.is_empty() && out.is_empty() {
            return Err("the path starts with an index; name the list first (e.g. parts[0])".into());
        }
        if !name.is_empty() {
            out.push(Step::Key(name.to_string()));
        }
        while let Some(r) = rest.strip_prefix('[') {
            let close = r.find(']').ok_or("an index is not closed with `]`")?;
            let index: usize = r[..close].trim().parse().map_err(|_| format!("`{}` is not an index", &r[..close]))?;
            out.push(Step::Index(index));
            rest = &r[close + 1..];
        }
        if !rest.is_empty() {
            return Err(format!("unexpected `{rest}` after an index"));
        }
    }
    Ok(out)
}

/// Sets the value at `key` in a YAML document, creating missing mapping
/// keys on the way.
pub fn set_key(doc: &mut serde_yaml::Value, key: &str, value: &serde_json::Value) -> Result<(), String> {
    use serde_yaml::Value as Y;
    let steps = steps(key)?;
    let mut at = doc;
    let mut walked = String::new();
    for step in &steps {
        at = match step {
            Step::Key(k) => {
                walked = if walked.is_empty() { k.clone() } else { format!("{walked}.{k}") };
                if at.is_null() {
                    *at = Y::Mapping(serde_yaml::Mapping::new());
                }
                let Y::Mapping(m) = at else {
                    return Err(format!("`{walked}` is inside a value that is not a mapping"));
                };
                m.entry(Y::String(k.clone())).or_insert(Y::Null)
            }
            Step::Index(i) => {
                let Y::Sequence(s) = at else { return Err(format!("`{walked}` is not a list")) };
                let n = s.len();
                walked = format!("{walked}[{i}]");
                s.get_mut(*i).ok_or_else(|| format!("`{walked}`: the list has {n} entries (indices from 0)"))?
            }
        };
    }
    if matches!(at, Y::Mapping(_) | Y::Sequence(_)) {
        return Err(format!("`{key}` holds a mapping or list, not a single value"));
    }
    *at = serde_yaml::to_value(value).map_err(|e| e.to_string())?;
    Ok(())
}

/// The points of the varied values: every combination, first key slowest
/// (`Design::Grid`), or the k-th value of every key (`Design::Zip`, keys of
/// one length).
fn combinations(vary: &[Vary], design: Design) -> Vec<Vec<usize>> {
    if design == Design::Zip {
        let n = vary.iter().map(|v| v.values.len()).min().unwrap_or(0);
        return (0..n).map(|k| vec![k; vary.len()]).collect();
    }
    let mut out = vec![Vec::new()];
    for v in vary {
        out = out.into_iter().flat_map(|c| (0..v.values.len()).map(move |k| [c.clone(), vec![k]].concat())).collect();
    }
    out
}

/// Writes a point's values as `KEY=VALUE, …`.
pub fn describe(set: &[(String, serde_json::Value)]) -> String {
    set.iter()
        .map(|(k, v)| format!("{k}={}", v.as_str().map_or_else(|| v.to_string(), str::to_string)))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Checks the case at every combination of the varied values (see the
/// module docs). `file` names the case in messages; each point is checked
/// under `FILE [KEY=VALUE, …]`, its line numbers those of the point's text.
pub fn sweep(text: &str, file: &str, vary: &[Vary], options: &Options) -> Result<Vec<Point>, StudyError> {
    sweep_shard(text, file, vary, options, &Run::default())
}

/// How a sweep runs: which slice of its points, and what to call as each
/// point ends (a progress bar; called from rayon's threads).
#[derive(Default)]
pub struct Run<'a> {
    /// Slice `I` of `N` (1 ≤ I ≤ N): every N-th point from the I-th;
    /// `None`: every point.
    pub shard: Option<(usize, usize)>,
    /// How the points are formed from the values.
    pub design: Design,
    /// Called once per point evaluated.
    pub progress: Option<&'a (dyn Fn() + Sync)>,
    /// When given, each point's review files are built and handed to it
    /// with the point's index in the whole sweep (from 0), as the point
    /// ends; an error ends the sweep.
    pub review: Option<&'a ReviewSink<'a>>,
}

/// Takes a point's review files (the binary writes them).
pub type ReviewSink<'a> = dyn Fn(usize, Vec<crate::review::ReviewFile>) -> Result<(), String> + Sync + 'a;

/// The points of slice `I` of `N` (`shard = Some((I, N))`, 1 ≤ I ≤ N):
/// every N-th point from the I-th, in order, so that N slices cover the
/// sweep and `combine_shards` interleaves them back; `None`: every point.
pub fn sweep_shard(
    text: &str,
    file: &str,
    vary: &[Vary],
    options: &Options,
    run: &Run,
) -> Result<Vec<Point>, StudyError> {
    let shard = run.shard;
    let tick = || {
        if let Some(f) = run.progress {
            f();
        }
    };
    let doc: serde_yaml::Value =
        serde_yaml::from_str(text).map_err(|e| StudyError::NotYaml { file: file.to_string(), why: e.to_string() })?;
    if let Some(v) = vary.iter().find(|v| v.tolerance.is_some() || v.values.is_empty()) {
        return Err(StudyError::BadKey {
            file: file.to_string(),
            key: v.key.clone(),
            why: "no values (a tolerance band is resolved first: `study::resolve`)".into(),
        });
    }
    let points: usize = match run.design {
        Design::Grid => {
            vary.iter().map(|v| v.values.len()).try_fold(1usize, |a, n| a.checked_mul(n)).unwrap_or(usize::MAX)
        }
        Design::Zip => vary.iter().map(|v| v.values.len()).min().unwrap_or(0),
    };
    if points > MAX_POINTS {
        return Err(StudyError::TooManyPoints { points });
    }
    // every key must lead somewhere before any point is solved
    for v in vary {
        let mut probe = doc.clone();
        set_key(&mut probe, &v.key, &v.values[0]).map_err(|why| StudyError::BadKey {
            file: file.to_string(),
            key: v.key.clone(),
            why,
        })?;
    }
    // each point with its index in the whole sweep (its review folder's name)
    let combos: Vec<(usize, Vec<usize>)> = match shard {
        Some((i, n)) => {
            combinations(vary, run.design).into_iter().enumerate().filter(|(k, _)| k % n == i - 1).collect()
        }
        None => combinations(vary, run.design).into_iter().enumerate().collect(),
    };
    let Some((first_index, first_combo)) = combos.first() else { return Ok(Vec::new()) };
    // the text and name of each point
    let point = |combo: &Vec<usize>| -> Result<(Settings, String, String), StudyError> {
        let set: Vec<(String, serde_json::Value)> =
            vary.iter().zip(combo).map(|(v, &k)| (v.key.clone(), v.values[k].clone())).collect();
        let mut d = doc.clone();
        for (k, value) in &set {
            // the keys were checked above: a failure here is a value the key cannot take
            set_key(&mut d, k, value).map_err(|why| StudyError::BadKey {
                file: file.to_string(),
                key: k.clone(),
                why,
            })?;
        }
        let text = serde_yaml::to_string(&d)
            .map_err(|e| StudyError::NotYaml { file: file.to_string(), why: e.to_string() })?;
        let name = format!("{file} [{}]", describe(&set));
        Ok((set, text, name))
    };
    let fail =
        |set: &[(String, serde_json::Value)], e: Error| StudyError::Point { set: describe(set), source: Box::new(e) };
    // the end of every point: its review files when asked, the progress tick
    let finish = |index: usize,
                  set: Settings,
                  name: &str,
                  p: &crate::Prepared,
                  solution: &crate::Solution,
                  result: CheckReport|
     -> Result<Point, StudyError> {
        if let Some(review) = run.review {
            let files = crate::review::files(p, solution, &result, name)
                .map_err(|e| StudyError::Review { set: describe(&set), why: e.to_string() })?;
            review(index, files).map_err(|why| StudyError::Review { set: describe(&set), why })?;
        }
        tick();
        Ok(Point { set, result })
    };
    let prepare = |text: &str, name: &str, base: Option<&crate::Prepared>| {
        crate::case::parse(text, name).map_err(Error::from).and_then(|c| match base {
            Some(b) => crate::prepare_like(c, name, options, b),
            None => crate::prepare(c, name, options),
        })
    };
    let (set0, text0, name0) = point(first_combo)?;
    let base = prepare(&text0, &name0, None).map_err(|e| fail(&set0, e))?;
    let (solution, check) = base.solve_nested(options).map_err(|e| fail(&set0, e))?;
    let evaluated = base.evaluate_with(&solution, options, check).map_err(|e| fail(&set0, e))?;
    let first_result = base.report_of(&solution, &evaluated, 0.0);
    let first = finish(*first_index, set0, &name0, &base, &solution, first_result)?;
    // Every other point: potentials only — when its fixed potentials are a
    // multiple of the first point's it takes that solution and self-check
    // scaled (the field is linear in them); otherwise it is solved, and a
    // point of the first point's geometry (values changed only) keeps its
    // grid numbering and pattern (`prepare_like`).
    let potentials_only = vary.iter().all(|v| is_potential_key(&v.key));
    let rest: Vec<Point> = combos[1..]
        .par_iter()
        .map(|(index, combo)| {
            let (set, text, name) = point(combo)?;
            let p = prepare(&text, &name, Some(&base)).map_err(|e| fail(&set, e))?;
            let (sol, result) = match p.potential_multiple_of(&base).filter(|_| potentials_only) {
                Some(s) => {
                    let sol = p.scaled_solution(&solution, s);
                    let check = SelfCheck::Given(evaluated.check.as_ref().map(|c| Box::new(c.scaled(s))));
                    let e = p.evaluate_with(&sol, options, check);
                    e.map(|e| {
                        let r = p.report_of(&sol, &e, 0.0);
                        (sol, r)
                    })
                }
                None => p.solve_nested(options).and_then(|(sol, check)| {
                    let e = p.evaluate_with(&sol, options, check)?;
                    let r = p.report_of(&sol, &e, 0.0);
                    Ok((sol, r))
                }),
            }
            .map_err(|e| fail(&set, e))?;
            finish(*index, set, &name, &p, &sol, result)
        })
        .collect::<Result<_, _>>()?;
    Ok(std::iter::once(first).chain(rest).collect())
}

/// A sweep's exit status: the worst of its points' under the policy
/// (`report::summary::verdict_exit`).
pub fn exit_status(points: &[Point], fail_on: crate::report::summary::FailOn) -> u8 {
    points.iter().map(|p| crate::report::summary::verdict_exit(p.result.verdict, fail_on)).max().unwrap_or(0)
}

/// Interleaves the JSON of shards `1/N … N/N` of one sweep (each
/// `{vary, points, shard: {index, count}}`, in any order) back into the
/// JSON of the whole sweep, `{vary, points}`, point k from shard
/// (k mod N) + 1. Refuses shards of different sweeps, missing or repeated
/// slices.
pub fn combine_shards(shards: &[(String, serde_json::Value)]) -> Result<serde_json::Value, String> {
    let Some((first_name, first)) = shards.first() else { return Err("no shards given".into()) };
    let count = first["shard"]["count"]
        .as_u64()
        .ok_or_else(|| format!("{first_name}: not a sweep shard (no `shard.count`)"))? as usize;
    let mut by_index: Vec<Option<&serde_json::Value>> = vec![None; count];
    for (name, s) in shards {
        let (Some(i), Some(n)) = (s["shard"]["index"].as_u64(), s["shard"]["count"].as_u64()) else {
            return Err(format!("{name}: not a sweep shard (no `shard.index` and `shard.count`)"));
        };
        if n as usize != count {
            return Err(format!("{name}: a shard of {n}, the others of {count}"));
        }
        if s["vary"] != first["vary"] || s["samples"] != first["samples"] {
            return Err(format!("{name}: a shard of a different sweep (its `vary` differs from {first_name}'s)"));
        }
        let slot =
            by_index.get_mut((i as usize).wrapping_sub(1)).ok_or_else(|| format!("{name}: shard index {i} of {n}"))?;
        if slot.is_some() {
            return Err(format!("{name}: shard {i}/{n} given twice"));
        }
        *slot = Some(s);
    }
    if let Some(k) = by_index.iter().position(Option::is_none) {
        return Err(format!("shard {}/{count} is missing", k + 1));
    }
    let lists: Vec<&Vec<serde_json::Value>> = by_index
        .iter()
        .map(|s| s.and_then(|s| s["points"].as_array()))
        .collect::<Option<_>>()
        .ok_or("a shard has no `points` list")?;
    let total: usize = lists.iter().map(|l| l.len()).sum();
    let mut points = Vec::with_capacity(total);
    for k in 0..total {
        let p = lists[k % count].get(k / count).ok_or_else(|| format!("shard {} has too few points", k % count + 1))?;
        points.push(p.clone());
    }
    let mut whole = serde_json::json!({ "vary": first["vary"], "points": points });
    if !first["samples"].is_null() {
        whole["samples"] = first["samples"].clone();
    }
    Ok(whole)
}

/// The value of each varied key at one point.
type Settings = Vec<(String, serde_json::Value)>;

/// Keys that set a fixed potential: `stack.voltage_kv` and any
/// `….potential_kv`.
fn is_potential_key(key: &str) -> bool {
    key == "stack.voltage_kv" || key.ends_with(".potential_kv")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn values_come_as_lists_or_ranges() {
        let v = parse_vary("stack.voltage_kv=10, 20,30").unwrap();
        assert_eq!(v.key, "stack.voltage_kv");
        assert_eq!(v.values, vec![serde_json::json!(10), serde_json::json!(20), serde_json::json!(30)]);
        let r = parse_vary("stack.layers[1].thickness=0.5:1:3").unwrap();
        assert_eq!(r.values, vec![serde_json::json!(0.5), serde_json::json!(0.75), serde_json::json!(1)]);
        assert_eq!(parse_vary("operation.mode=ac,static").unwrap().values[1], serde_json::json!("static"));
        assert!(parse_vary("novalues").is_err());
        assert!(parse_vary("a=1:2").is_err());
        assert!(parse_vary("a=1:2:0").is_err());
        assert!(parse_vary("a=1,,2").is_err());
        assert_eq!(parse_vary("stack.layers[0].thickness=±10%").unwrap().tolerance, Some(0.1));
        assert!(parse_vary("a=±10").is_err() && parse_vary("a=±150%").is_err());
        let r = resolve(
            "stack: { layers: [ { thickness: 2 } ] }\n",
            "t.yaml",
            &[parse_vary("stack.layers[0].thickness=±10%").unwrap()],
        )
        .unwrap();
        assert_eq!(r[0].values, vec![serde_json::json!(1.8), serde_json::json!(2), serde_json::json!(2.2)]);
        assert!(resolve("a: x\n", "t.yaml", &[parse_vary("a=±5%").unwrap()]).is_err());
    }

    #[test]
    fn keys_are_set_where_error_messages_point() {
        let mut doc: serde_yaml::Value =
            serde_yaml::from_str("stack: { layers: [ { thickness: 1 }, { thickness: 2 } ] }\n").unwrap();
        set_key(&mut doc, "stack.layers[1].thickness", &serde_json::json!(3.5)).unwrap();
        set_key(&mut doc, "environment.temperature_c", &serde_json::json!(90)).unwrap();
        let text = serde_yaml::to_string(&doc).unwrap();
        assert!(text.contains("thickness: 3.5") && text.contains("temperature_c: 90"), "{text}");
        let e = set_key(&mut doc, "stack.layers[5].thickness", &serde_json::json!(1)).unwrap_err();
        assert!(e.contains("the list has 2 entries"), "{e}");
        assert!(set_key(&mut doc, "stack.layers", &serde_json::json!(1)).unwrap_err().contains("mapping or list"));
        assert!(set_key(&mut doc, "stack.layers.x", &serde_json::json!(1)).is_err());
    }

    #[test]
    fn random_draws_stay_in_the_band_and_repeat_with_the_seed() {
        let text = "stack: { layers: [ { thickness: 2 }, { thickness: 1 } ] }\n";
        let vary = [
            parse_vary("stack.layers[0].thickness=±10%").unwrap(),
            parse_vary("stack.layers[1].thickness=±5%").unwrap(),
        ];
        let draw = |seed| resolve_random(text, "t.yaml", &vary, Sampling { samples: 200, seed }).unwrap();
        let a = draw(7);
        assert_eq!(a, draw(7));
        assert_ne!(a, draw(8));
        let x: Vec<f64> = a[0].values.iter().map(|v| v.as_f64().unwrap()).collect();
        assert!(x.iter().all(|v| (1.8..=2.2).contains(v)), "{x:?}");
        // uniform: the mean of 200 draws within ±0.04 of 2 (4 standard
        // errors: σ = 0.2/√3, common practice)
        let mean = x.iter().sum::<f64>() / 200.0;
        assert!((mean - 2.0).abs() < 0.04, "{mean}");
        // both halves of the band are drawn
        assert!(x.iter().any(|v| *v < 1.9) && x.iter().any(|v| *v > 2.1));
        let y: Vec<f64> = a[1].values.iter().map(|v| v.as_f64().unwrap()).collect();
        assert!(y.iter().all(|v| (0.95..=1.05).contains(v)));
        // a listed key is refused
        let listed = [parse_vary("stack.layers[0].thickness=1,2").unwrap()];
        assert!(resolve_random(text, "t.yaml", &listed, Sampling { samples: 3, seed: 1 }).is_err());
    }

    #[test]
    fn combinations_run_first_key_slowest() {
        let v = |n: usize| Vary {
            key: "k".into(),
            values: (0..n).map(|k| serde_json::json!(k)).collect(),
            tolerance: None,
        };
        assert_eq!(
            combinations(&[v(2), v(3)], Design::Grid),
            vec![vec![0, 0], vec![0, 1], vec![0, 2], vec![1, 0], vec![1, 1], vec![1, 2]]
        );
    }
}
