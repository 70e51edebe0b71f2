//! Stage 1: the case file. Parse the YAML (`schema`), locate every key
//! (`locate`), validate into the SI model (`validate`, `model`).
//!
//! Every problem is reported with the file, line, column and key path, and
//! all problems found by validation are reported together.

pub mod limits;
mod locate;
mod model;
pub mod schema;
pub mod text;
mod validate;

pub use model::*;

use limits::MAX_DIAGNOSTICS;
use locate::Locations;
use std::fmt;

/// One problem in a case file.
#[derive(Debug, Clone, PartialEq, Eq)]
#[non_exhaustive]
pub struct Diagnostic {
    /// Key path, e.g. `parts[2].shape.circle.radius` (empty for the whole file).
    pub key: String,
    /// 1-based line, where known.
    pub line: Option<usize>,
    /// 1-based column, where known.
    pub column: Option<usize>,
    /// What is wrong and, where possible, how to fix it.
    pub message: String,
}

/// Everything wrong with a case file.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub struct CaseError {
    /// File name as given by the caller.
    pub file: String,
    /// The problems, in file order.
    pub diagnostics: Vec<Diagnostic>,
}

/// One line per diagnostic; control characters from the case (in keys and
/// quoted values) are escaped, so a message cannot steer a terminal.
impl fmt::Display for CaseError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        use text::printable;
        for (i, d) in self.diagnostics.iter().enumerate() {
            if i > 0 {
                writeln!(f)?;
            }
            write!(f, "{}", printable(&self.file))?;
            if let Some(l) = d.line {
                write!(f, ":{l}")?;
                if let Some(c) = d.column {
                    write!(f, ":{c}")?;
                }
            }
            if d.key.is_empty() {
                write!(f, ": {}", printable(&d.message))?;
            } else {
                write!(f, ": {}: {}", printable(&d.key), printable(&d.message))?;
            }
        }
        Ok(())
    }
}

/// The JSON Schema of the case format, generated from the same types the
/// parser uses (for editors: a YAML language server can validate and
/// complete case files with it).
pub fn json_schema() -> String {
    let schema = schemars::schema_for!(schema::CaseFile);
    let mut s = serde_json::to_string_pretty(&schema).unwrap_or_default();
    s.push('\n');
    s
}

/// The bytes of a case file as text: UTF-8, with a byte that is not
/// named by line and column (1-based; the column counts characters).
/// A leading byte-order mark is kept here and skipped by [`parse`].
pub fn decode(bytes: &[u8], file: &str) -> Result<String, CaseError> {
    match std::str::from_utf8(bytes) {
        Ok(s) => Ok(s.to_string()),
        Err(e) => {
            let good = &bytes[..e.valid_up_to()];
            // the prefix is valid UTF-8 by construction
            let before = std::str::from_utf8(good).unwrap_or_default();
            let line = before.matches('\n').count() + 1;
            let column = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
            Err(CaseError {
                file: file.to_string(),
                diagnostics: vec![Diagnostic {
                    key: String::new(),
                    line: Some(line),
                    column: Some(column),
                    message: format!("byte 0x{:02X} is not UTF-8 text; save the case as UTF-8", bytes[e.valid_up_to()]),
                }],
            })
        }
    }
}

/// Parses and validates a case. `file` names the source in messages only;
/// the library never opens it. A leading byte-order mark is skipped (the
/// SHA-256 is of the whole text, mark included).
pub fn parse(text: &str, file: &str) -> Result<Case, CaseError> {
    let whole = text;
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let fail = |mut diagnostics: Vec<Diagnostic>| {
        if diagnostics.len() > MAX_DIAGNOSTICS {
            diagnostics.truncate(MAX_DIAGNOSTICS);
            diagnostics.push(Diagnostic {
                key: String::new(),
                line: None,
                column: None,
                message: format!("… and more problems (only the first {MAX_DIAGNOSTICS} are listed); fix these first"),
            });
        }
        CaseError { file: file.to_string(), diagnostics }
    };
    let locations = Locations::index(text).map_err(|(line, column, message)| {
        fail(vec![Diagnostic { key: String::new(), line: Some(line), column: Some(column), message }])
    })?;
    let unknown = unknown_keys(&locations);
    if !unknown.is_empty() {
        return Err(fail(unknown));
    }
    let de = serde_yaml::Deserializer::from_str(text);
    let parsed: schema::CaseFile = serde_path_to_error::deserialize(de).map_err(|e| {
        let key = e.path().to_string();
        let key = if key == "." { String::new() } else { key };
        let inner = e.into_inner();
        let (line, column) = match inner.location() {
            Some(l) => (Some(l.line()), Some(l.column())),
            None => match locations.find(&key) {
                Some((l, c)) => (Some(l), Some(c)),
                None => (None, None),
            },
        };
        let message = strip_location(&inner.to_string());
        // serde_yaml may put its own (shorter) path in front; ours is shown already
        let message = match message.split_once(": ") {
            Some((head, rest)) if !head.is_empty() && key.starts_with(head) => rest.to_string(),
            _ => message,
        };
        // serde stops at its first problem; the schema finds the others.
        let mut all: Vec<Diagnostic> =
            schema_errors(text, &locations).into_iter().filter(|d| d.key != key && !key.starts_with(&d.key)).collect();
        all.push(Diagnostic { key, line, column, message });
        all.sort_by_key(|d| (d.line, d.column));
        fail(all)
    })?;
    let (case, mut diagnostics) = validate::validate(parsed, &locations);
    diagnostics.sort_by_key(|d| (d.line, d.column));
    match case {
        Some(mut c) if diagnostics.is_empty() => {
            c.source_sha256 = sha256_hex(whole.as_bytes());
            Ok(c)
        }
        _ => Err(fail(diagnostics)),
    }
}

/// Every place where the case does not fit the JSON Schema of the format
/// (wrong types, missing fields), found by the `jsonschema` crate on the
/// YAML read as a plain value. Used only after serde has failed, so that a
/// case with several such problems hears of all of them at once. Empty when
/// the text cannot be read as plain JSON-like data (then serde's message
/// stands alone).
fn schema_errors(text: &str, locations: &Locations) -> Vec<Diagnostic> {
    let Ok(yaml) = serde_yaml::from_str::<serde_yaml::Value>(text) else { return Vec::new() };
    let Ok(instance) = serde_json::to_value(&yaml) else { return Vec::new() };
    let Ok(mut schema) = serde_json::to_value(schemars::schema_for!(schema::CaseFile)) else { return Vec::new() };
    unwrap_optional(&mut schema);
    let Ok(validator) = jsonschema::validator_for(&schema) else { return Vec::new() };
    validator
        .iter_errors(&instance)
        .take(MAX_DIAGNOSTICS + 1)
        .map(|e| {
            let key = key_of_pointer(e.instance_path().as_str());
            let pos = locations.find(&key);
            Diagnostic { line: pos.map(|p| p.0), column: pos.map(|p| p.1), message: e.to_string(), key }
        })
        .collect()
}

/// Replaces `anyOf: [X, {type: null}]` (how an optional structure reads in
/// the schema) by X, so that problems inside X are reported where they are
/// instead of as one "not valid under any of the schemas" on the parent.
fn unwrap_optional(v: &mut serde_json::Value) {
    use serde_json::Value;
    match v {
        Value::Object(map) => {
            let inner = match map.get("anyOf") {
                Some(Value::Array(options)) if options.len() == 2 => {
                    let is_null = |o: &Value| o.get("type") == Some(&Value::String("null".into()));
                    match (is_null(&options[0]), is_null(&options[1])) {
                        (true, false) => Some(options[1].clone()),
                        (false, true) => Some(options[0].clone()),
                        _ => None,
                    }
                }
                _ => None,
            };
            if let Some(Value::Object(inner)) = inner {
                map.remove("anyOf");
                map.extend(inner);
            }
            map.values_mut().for_each(unwrap_optional);
        }
        Value::Array(items) => items.iter_mut().for_each(unwrap_optional),
        _ => {}
    }
}

/// A JSON pointer (`/stack/layers/1/thickness`) as a key path
/// (`stack.layers[1].thickness`); names under `materials` stay names.
fn key_of_pointer(pointer: &str) -> String {
    let mut key = String::new();
    let mut previous = "";
    for raw in pointer.split('/').skip(1) {
        let segment = raw.replace("~1", "/").replace("~0", "~");
        if previous != "materials" && !segment.is_empty() && segment.bytes().all(|b| b.is_ascii_digit()) {
            key.push_str(&format!("[{segment}]"));
        } else {
            if !key.is_empty() {
                key.push('.');
            }
            key.push_str(&segment);
        }
        previous = raw;
    }
    key
}

/// SHA-256 of `bytes` as 64 lower-case hex digits.
pub fn sha256_hex(bytes: &[u8]) -> String {
    use sha2::{Digest, Sha256};
    Sha256::digest(bytes).iter().map(|b| format!("{b:02x}")).collect()
}

/// Every key the case format does not know, with the nearest known key.
fn unknown_keys(locations: &Locations) -> Vec<Diagnostic> {
    locations
        .keys
        .iter()
        .filter_map(|k| {
            let (_, known) = schema::KNOWN_KEYS.iter().find(|(p, _)| *p == k.pattern)?;
            if known.contains(&k.key.as_str()) {
                return None;
            }
            let nearest = known
                .iter()
                .map(|c| (strsim::damerau_levenshtein(&k.key, c), *c))
                .filter(|(d, c)| *d <= 1.max(c.len() / 3) && *d < c.len())
                .min()
                .map(|(_, c)| format!("did you mean `{c}`? "))
                .unwrap_or_default();
            let key = if k.parent.is_empty() { k.key.clone() } else { format!("{}.{}", k.parent, k.key) };
            Some(Diagnostic {
                key,
                line: Some(k.line),
                column: Some(k.column),
                message: format!(
                    "unknown key `{}`; {nearest}expected one of {}",
                    k.key,
                    known.iter().map(|c| format!("`{c}`")).collect::<Vec<_>>().join(", ")
                ),
            })
        })
        .collect()
}

/// serde_yaml appends " at line L column C"; the position is shown in front.
fn strip_location(message: &str) -> String {
    match message.find(" at line ") {
        Some(i) => message[..i].to_string(),
        None => message.to_string(),
    }
}
