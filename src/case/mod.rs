//! Stage 1: the case file. Parse the YAML (`schema`), locate every key
//! (`locate`), validate into the SI model (`validate`, `model`).
//!
//! Every problem is reported with the file, line, column and key path, and
//! all problems found by validation are reported together.

mod locate;
mod model;
pub mod schema;
mod validate;

pub use model::*;

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

impl fmt::Display for CaseError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, d) in self.diagnostics.iter().enumerate() {
            if i > 0 {
                writeln!(f)?;
            }
            write!(f, "{}", self.file)?;
            if let Some(l) = d.line {
                write!(f, ":{l}")?;
                if let Some(c) = d.column {
                    write!(f, ":{c}")?;
                }
            }
            if d.key.is_empty() {
                write!(f, ": {}", d.message)?;
            } else {
                write!(f, ": {}: {}", d.key, d.message)?;
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

/// Parses and validates a case. `file` names the source in messages only;
/// the library never opens it.
pub fn parse(text: &str, file: &str) -> Result<Case, CaseError> {
    let fail = |diagnostics: Vec<Diagnostic>| CaseError { file: file.to_string(), diagnostics };
    let locations = Locations::index(text).map_err(|(line, column, message)| {
        fail(vec![Diagnostic {
            key: String::new(),
            line: Some(line),
            column: Some(column),
            message: format!("YAML syntax error: {message}"),
        }])
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
        fail(vec![Diagnostic { key, line, column, message }])
    })?;
    let (case, mut diagnostics) = validate::validate(parsed, &locations);
    diagnostics.sort_by_key(|d| (d.line, d.column));
    match case {
        Some(mut c) if diagnostics.is_empty() => {
            c.source_sha256 = sha256_hex(text.as_bytes());
            Ok(c)
        }
        _ => Err(fail(diagnostics)),
    }
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
