//! Where each key of a case file stands: a map from key path
//! (`parts[2].shape.circle.radius`) to its line and column.
//!
//! serde reports only the first structural error; validation finds many more
//! problems and needs their lines. The YAML event stream carries a position
//! for every key and value, so one pass over it builds the map.

use std::collections::HashMap;
use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser};
use yaml_rust2::scanner::Marker;

/// Line and column (both 1-based) of every key path in a YAML document.
#[derive(Debug, Default)]
pub struct Locations {
    map: HashMap<String, (usize, usize)>,
    /// Every mapping key in document order.
    pub keys: Vec<KeySite>,
}

/// One mapping key and where it stands.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct KeySite {
    /// Path of the mapping holding the key (`parts[2].shape`).
    pub parent: String,
    /// The same path with sequence indices as `[]` and the names under
    /// `materials` as `*` (`parts[].shape`, `materials.*`).
    pub pattern: String,
    /// The key.
    pub key: String,
    /// Line.
    pub line: usize,
    /// Column.
    pub column: usize,
}

impl Locations {
    /// Builds the index; a syntax error or a document beyond the size limits
    /// comes back as (line, column, message).
    pub fn index(text: &str) -> Result<Locations, (usize, usize, String)> {
        let mut builder = Builder::default();
        let mut parser = Parser::new_from_str(text);
        // Event by event (not `Parser::load`), so that a document beyond the
        // size limits is refused where it crosses them, unread beyond.
        loop {
            let (event, mark) = parser
                .next_token()
                .map_err(|e| (e.marker().line(), e.marker().col() + 1, format!("YAML syntax error: {}", e.info())))?;
            let end = matches!(event, Event::StreamEnd | Event::DocumentEnd);
            builder.on_event(event, mark);
            if let Some(refused) = builder.too_big {
                return Err(refused);
            }
            if end {
                break;
            }
        }
        let mut map = builder.map;
        // top-level problems (a missing key) point at the start of the file
        map.insert(String::new(), (1, 1));
        Ok(Locations { map, keys: builder.keys })
    }

    /// Position of `path`, or of its nearest ancestor that has one.
    pub fn find(&self, path: &str) -> Option<(usize, usize)> {
        let mut p = path;
        loop {
            if let Some(&pos) = self.map.get(p) {
                return Some(pos);
            }
            if p.is_empty() {
                return None;
            }
            p = &p[..p.rfind(['.', '[']).unwrap_or(0)];
        }
    }
}

enum Frame {
    Map { path: String, pattern: String, key: Option<String>, keys: usize },
    Seq { path: String, pattern: String, index: usize },
}

use super::limits::{MAX_COLLECTION_ENTRIES, MAX_VALUES};

#[derive(Default)]
struct Builder {
    stack: Vec<Frame>,
    map: HashMap<String, (usize, usize)>,
    keys: Vec<KeySite>,
    values: usize,
    /// The first size limit crossed: (line, column, message). Events after it
    /// are ignored.
    too_big: Option<(usize, usize, String)>,
}

/// Pattern of a mapping's child: names under `materials` become `*`.
fn child_pattern(parent: &str, key: &str) -> String {
    if parent == "materials" { "materials.*".to_string() } else { join(parent, key) }
}

fn join(parent: &str, key: &str) -> String {
    if parent.is_empty() { key.to_string() } else { format!("{parent}.{key}") }
}

impl Builder {
    /// Path and pattern of the value about to start, recording sequence
    /// items that are collections (a scalar item, such as a coordinate,
    /// is found through its parent: same line, far less memory).
    fn value_path(&mut self, mark: Marker, collection: bool) -> (String, String) {
        self.values += 1;
        if self.values > MAX_VALUES {
            self.refuse(mark, format!("the document holds more than {MAX_VALUES} values; no case needs so many"));
        }
        match self.stack.last_mut() {
            None => (String::new(), String::new()),
            Some(Frame::Map { path, pattern, key, .. }) => {
                let k = key.as_deref().unwrap_or("?");
                (join(path, k), child_pattern(pattern, k))
            }
            Some(Frame::Seq { path, pattern, index }) => {
                let p = format!("{path}[{index}]");
                let out = (p.clone(), format!("{pattern}[]"));
                if *index >= MAX_COLLECTION_ENTRIES {
                    let message =
                        format!("`{path}` has more than {MAX_COLLECTION_ENTRIES} entries; no case needs so many");
                    self.refuse(mark, message);
                } else if collection {
                    self.map.entry(p).or_insert((mark.line(), mark.col() + 1));
                }
                out
            }
        }
    }

    fn refuse(&mut self, mark: Marker, message: String) {
        if self.too_big.is_none() {
            self.too_big = Some((mark.line(), mark.col() + 1, message));
        }
    }

    /// Moves the parent on after a complete value.
    fn value_done(&mut self) {
        match self.stack.last_mut() {
            Some(Frame::Map { key, .. }) => *key = None,
            Some(Frame::Seq { index, .. }) => *index += 1,
            None => {}
        }
    }

    fn expecting_key(&self) -> bool {
        matches!(self.stack.last(), Some(Frame::Map { key: None, .. }))
    }
}

impl MarkedEventReceiver for Builder {
    fn on_event(&mut self, ev: Event, mark: Marker) {
        if self.too_big.is_some() {
            return;
        }
        match ev {
            Event::Scalar(value, ..) if self.expecting_key() => {
                if let Some(Frame::Map { path, keys, .. }) = self.stack.last_mut() {
                    *keys += 1;
                    if *keys > MAX_COLLECTION_ENTRIES {
                        let at = if path.is_empty() { "the top level".to_string() } else { format!("`{path}`") };
                        self.refuse(
                            mark,
                            format!("{at} has more than {MAX_COLLECTION_ENTRIES} keys; no case needs so many"),
                        );
                        return;
                    }
                }
                if let Some(Frame::Map { path, pattern, key, .. }) = self.stack.last_mut() {
                    let p = join(path, &value);
                    self.map.entry(p).or_insert((mark.line(), mark.col() + 1));
                    self.keys.push(KeySite {
                        parent: path.clone(),
                        pattern: pattern.clone(),
                        key: value.clone(),
                        line: mark.line(),
                        column: mark.col() + 1,
                    });
                    *key = Some(value);
                }
            }
            Event::Scalar(..) | Event::Alias(..) => {
                self.value_path(mark, false);
                self.value_done();
            }
            Event::MappingStart(..) | Event::SequenceStart(..) => {
                // A complex (non-scalar) key is rare; it gets the key name "?".
                if self.expecting_key()
                    && let Some(Frame::Map { key, .. }) = self.stack.last_mut()
                {
                    *key = Some("?".into());
                }
                let (path, pattern) = self.value_path(mark, true);
                self.stack.push(if matches!(ev, Event::MappingStart(..)) {
                    Frame::Map { path, pattern, key: None, keys: 0 }
                } else {
                    Frame::Seq { path, pattern, index: 0 }
                });
            }
            Event::MappingEnd | Event::SequenceEnd => {
                self.stack.pop();
                self.value_done();
            }
            _ => {}
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_nested_keys_and_items() {
        let text = "title: t\nparts:\n  - name: a\n    shape: { circle: { center: [1, 2], radius: 3 } }\n  - name: b\n";
        let loc = Locations::index(text).unwrap();
        assert_eq!(loc.find("title"), Some((1, 1)));
        assert_eq!(loc.find("parts[0].name"), Some((3, 5)));
        assert_eq!(loc.find("parts[0].shape.circle.radius").map(|p| p.0), Some(4));
        assert_eq!(loc.find("parts[1].name"), Some((5, 5)));
        assert_eq!(loc.find("parts[1].material").map(|p| p.0), Some(5));
    }

    #[test]
    fn oversized_collections_are_refused_where_they_cross_the_limit() {
        let list = format!("probes: [{}]\n", vec!["[0, 0]"; MAX_COLLECTION_ENTRIES + 1].join(", "));
        let err = Locations::index(&list).unwrap_err();
        assert_eq!(err.0, 1);
        assert!(err.2.contains("`probes` has more than 10000 entries"), "{}", err.2);
        let map: String = (0..=MAX_COLLECTION_ENTRIES).map(|k| format!("k{k}: 1\n")).collect();
        let err = Locations::index(&map).unwrap_err();
        assert_eq!(err.0, MAX_COLLECTION_ENTRIES + 1);
        assert!(err.2.contains("the top level has more than 10000 keys"), "{}", err.2);
        assert!(Locations::index(&format!("probes: [{}]\n", vec!["[0, 0]"; 1000].join(", "))).is_ok());
    }

    #[test]
    fn syntax_errors_carry_a_line() {
        let err = Locations::index("a: [1, 2\nb: 3\n").unwrap_err();
        assert!(err.0 >= 1);
    }
}
