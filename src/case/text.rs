//! Rules for the text a case carries into every output (titles, names,
//! sources) and the one escaping used wherever text reaches a terminal,
//! XML or a file name.
//!
//! Control characters and the Unicode bidirectional controls can make a
//! terminal print what is not there (a fake `verdict PASS` line, hidden
//! text) and make XML malformed, so names refuse them and every output
//! escapes them.

use std::borrow::Cow;

/// True for characters no name or title may hold: the C0 and C1 control
/// characters (Unicode category Cc, including tab and newline) and the
/// bidirectional embedding, override and isolate controls (U+202A–U+202E,
/// U+2066–U+2069) and marks (U+200E, U+200F, U+061C).
pub fn forbidden(c: char) -> bool {
    c.is_control()
        || matches!(c, '\u{202A}'..='\u{202E}' | '\u{2066}'..='\u{2069}' | '\u{200E}' | '\u{200F}' | '\u{061C}')
}

/// `s` with every [`forbidden`] character written as `\u{…}`, so it shows
/// as what it is and cannot steer a terminal or break XML.
pub fn printable(s: &str) -> Cow<'_, str> {
    if !s.chars().any(forbidden) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if forbidden(c) {
            out.push_str(&format!("\\u{{{:x}}}", c as u32));
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// Why a name or title is refused, if it is: empty (after trimming), longer
/// than `max_chars` characters, or holding a [`forbidden`] character.
pub fn name_problem(s: &str, max_chars: usize) -> Option<String> {
    if s.trim().is_empty() {
        return Some("must not be empty".into());
    }
    let n = s.chars().count();
    if n > max_chars {
        return Some(format!("is {n} characters long; at most {max_chars} are allowed"));
    }
    s.chars().find(|&c| forbidden(c)).map(|c| {
        format!(
            "holds the control character U+{:04X} (at character {}); names and titles are printed to terminals and \
             written into XML, so write them without control characters",
            c as u32,
            s.chars().position(|x| x == c).unwrap_or(0) + 1
        )
    })
}

/// A file-name stem for a free-text name: ASCII letters and digits, '-'
/// and '_' kept, every other run of characters one '-', at most
/// `max_len` bytes, never empty (`fallback` then).
pub fn file_stem(name: &str, max_len: usize, fallback: &str) -> String {
    let mut out = String::new();
    for c in name.chars() {
        if c.is_ascii_alphanumeric() || c == '_' || c == '-' {
            out.push(c);
        } else if !out.ends_with('-') {
            out.push('-');
        }
        if out.len() >= max_len {
            break;
        }
    }
    let trimmed = out.trim_matches('-');
    if trimmed.is_empty() { fallback.to_string() } else { trimmed.to_string() }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_what_could_steer_a_terminal() {
        assert_eq!(printable("plain – ok"), "plain – ok");
        assert_eq!(printable("a\u{1b}[2Kb"), "a\\u{1b}[2Kb");
        assert_eq!(printable("x\ny"), "x\\u{a}y");
        assert_eq!(printable("\u{202e}rev"), "\\u{202e}rev");
    }

    #[test]
    fn names_are_refused_for_the_right_reasons() {
        assert!(name_problem("cast body", 80).is_none());
        assert!(name_problem("Ø 12 – Füllung", 80).is_none());
        assert!(name_problem("  ", 80).unwrap().contains("empty"));
        assert!(name_problem(&"x".repeat(81), 80).unwrap().contains("81 characters"));
        assert!(name_problem("ok\u{1b}[31m", 80).unwrap().contains("U+001B"));
        assert!(name_problem("tab\there", 80).unwrap().contains("U+0009"));
    }

    #[test]
    fn file_stems_are_safe_and_never_empty() {
        assert_eq!(file_stem("through void", 60, "line"), "through-void");
        assert_eq!(file_stem("../../etc/passwd", 60, "line"), "etc-passwd");
        assert_eq!(file_stem("Ø", 60, "line"), "line");
        assert_eq!(file_stem("a  b//c", 60, "line"), "a-b-c");
        assert!(file_stem(&"y".repeat(500), 60, "line").len() <= 60);
    }
}
