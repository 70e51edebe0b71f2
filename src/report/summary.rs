//! Batch results: one summary row per case, a table for people and a
//! JUnit-style XML for CI systems.

use super::{CheckReport, VerdictOut};
use quick_xml::Writer;
use quick_xml::events::{BytesDecl, BytesEnd, BytesStart, BytesText, Event};
use serde::Serialize;

/// One case of a batch.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SummaryRow {
    /// Case file as given.
    pub file: String,
    /// `pass`, `review`, `fail`, or `error` (not evaluated).
    pub verdict: &'static str,
    /// Exit status the case alone would give.
    pub exit_status: u8,
    /// The part with the smallest margin (or the highest field).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub worst_part: Option<String>,
    /// Its peak field.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub e_max_kv_per_mm: Option<f64>,
    /// `rms` or `peak`: the convention of the case's fields.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub values: Option<&'static str>,
    /// Its margin.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub margin: Option<f64>,
    /// The case's lowest partial-discharge inception level (gas parts),
    /// in its convention.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pd_inception_kv: Option<f64>,
    /// Codes of the warning and fail findings.
    pub findings: Vec<&'static str>,
    /// Why the case could not be evaluated.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub error: Option<String>,
}

/// Which verdicts fail a run (its exit status and its JUnit test): the
/// CI policy of `--fail-on`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum FailOn {
    /// Review and fail both give exit status 1 (the default).
    #[default]
    Review,
    /// Only fail gives exit status 1; a case under review passes the run
    /// (its findings are still printed).
    Fail,
}

/// The exit status an evaluated case gives under a policy: 0, or 1 when
/// its verdict fails the run.
pub fn verdict_exit(verdict: VerdictOut, policy: FailOn) -> u8 {
    match (verdict, policy) {
        (VerdictOut::Pass, _) | (VerdictOut::Review, FailOn::Fail) => 0,
        (VerdictOut::Review, FailOn::Review) | (VerdictOut::Fail, _) => 1,
    }
}

/// The summary row of an evaluated case.
pub fn row(file: &str, r: &CheckReport, policy: FailOn) -> SummaryRow {
    let worst = r.parts.iter().min_by(|a, b| {
        let key = |p: &super::PartOut| p.margin.unwrap_or(f64::INFINITY);
        key(a).total_cmp(&key(b)).then(b.e_max_kv_per_mm.total_cmp(&a.e_max_kv_per_mm))
    });
    let verdict = match r.verdict {
        VerdictOut::Pass => "pass",
        VerdictOut::Review => "review",
        VerdictOut::Fail => "fail",
    };
    let exit_status = verdict_exit(r.verdict, policy);
    SummaryRow {
        file: file.to_string(),
        verdict,
        exit_status,
        worst_part: worst.map(|p| p.name.clone()),
        e_max_kv_per_mm: worst.map(|p| p.e_max_kv_per_mm),
        values: Some(r.values),
        margin: worst.and_then(|p| p.margin),
        pd_inception_kv: r.pd_inception_kv,
        findings: {
            let mut codes: Vec<&'static str> = Vec::new();
            // accepted findings no longer set the verdict and are not listed
            for f in r.findings.iter().filter(|f| f.severity != super::SeverityOut::Info && f.accepted.is_none()) {
                if !codes.contains(&f.code) {
                    codes.push(f.code);
                }
            }
            codes
        },
        error: None,
    }
}

/// The summary row of a case that could not be evaluated.
pub fn error_row(file: &str, message: &str) -> SummaryRow {
    SummaryRow {
        file: file.to_string(),
        verdict: "error",
        exit_status: 2,
        worst_part: None,
        e_max_kv_per_mm: None,
        values: None,
        margin: None,
        pd_inception_kv: None,
        findings: Vec::new(),
        error: Some(message.to_string()),
    }
}

/// The batch's exit status: the worst of its cases.
pub fn exit_status(rows: &[SummaryRow]) -> u8 {
    rows.iter().map(|r| r.exit_status).max().unwrap_or(0)
}

/// The summary table.
pub fn render_summary(rows: &[SummaryRow]) -> String {
    use super::text::{sig4, table};
    let body = rows
        .iter()
        .map(|r| {
            vec![
                r.file.clone(),
                r.verdict.to_string(),
                r.worst_part.clone().unwrap_or_else(|| "—".into()),
                match (r.e_max_kv_per_mm, r.values) {
                    (Some(e), Some(v)) => format!("{} {v}", sig4(e)),
                    _ => "—".into(),
                },
                r.margin.map_or_else(|| "—".into(), sig4),
                match (r.pd_inception_kv, r.values) {
                    (Some(kv), Some(v)) => format!("{} {v}", sig4(kv)),
                    _ => "—".into(),
                },
                match &r.error {
                    Some(e) => e.lines().next().unwrap_or_default().to_string(),
                    None => r.findings.join(", "),
                },
            ]
        })
        .collect();
    let counts = |v: &str| rows.iter().filter(|r| r.verdict == v).count();
    format!(
        "{}\n\n{} cases: {} pass, {} review, {} fail, {} not evaluated\n",
        table(
            &["case", "verdict", "worst part", "E max kV/mm", "margin", "PD inception kV", "findings / error"],
            body,
            &[3, 4, 5]
        ),
        rows.len(),
        counts("pass"),
        counts("review"),
        counts("fail"),
        counts("error")
    )
}

/// A JUnit-style XML report, one test per case: review and fail are
/// failures, cases that could not be evaluated are errors. Always
/// well-formed: markup characters are escaped by the writer, and control
/// characters (not allowed in XML 1.0 even as references) are written as
/// `\u{…}` text.
pub fn junit_xml(rows: &[SummaryRow]) -> String {
    use crate::case::text::printable;
    let mut w = Writer::new_with_indent(Vec::new(), b' ', 2);
    let failures = rows.iter().filter(|r| r.exit_status == 1).count();
    let errors = rows.iter().filter(|r| r.exit_status == 2).count();
    let (tests, failures, errors) = (rows.len().to_string(), failures.to_string(), errors.to_string());
    // Writing into a Vec cannot fail.
    let _ = w.write_event(Event::Decl(BytesDecl::new("1.0", Some("UTF-8"), None)));
    let mut suites = BytesStart::new("testsuites");
    suites.push_attribute(("name", "hvstack"));
    let _ = w.write_event(Event::Start(suites));
    let mut suite = BytesStart::new("testsuite");
    suite.push_attribute(("name", "hvstack check"));
    suite.push_attribute(("tests", tests.as_str()));
    suite.push_attribute(("failures", failures.as_str()));
    suite.push_attribute(("errors", errors.as_str()));
    let _ = w.write_event(Event::Start(suite));
    for r in rows {
        let mut case = BytesStart::new("testcase");
        case.push_attribute(("name", printable(&r.file).as_ref()));
        case.push_attribute(("classname", "hvstack.check"));
        if r.exit_status == 0 {
            let _ = w.write_event(Event::Empty(case));
            continue;
        }
        let _ = w.write_event(Event::Start(case));
        let (tag, message) = match &r.error {
            Some(e) => ("error", e.clone()),
            None => (
                "failure",
                format!(
                    "verdict {}: worst part {} (E max {} kV/mm {}, margin {}); findings: {}",
                    r.verdict,
                    r.worst_part.as_deref().unwrap_or("—"),
                    r.e_max_kv_per_mm.map_or_else(|| "—".into(), super::text::sig4),
                    r.values.unwrap_or(""),
                    r.margin.map_or_else(|| "—".into(), super::text::sig4),
                    r.findings.join(", ")
                ),
            ),
        };
        let message = message.lines().map(|l| printable(l).into_owned()).collect::<Vec<_>>().join("\n");
        let mut el = BytesStart::new(tag);
        el.push_attribute(("message", message.lines().next().unwrap_or_default()));
        el.push_attribute(("type", r.verdict));
        let _ = w.write_event(Event::Start(el));
        let _ = w.write_event(Event::Text(BytesText::new(&message)));
        let _ = w.write_event(Event::End(BytesEnd::new(tag)));
        let _ = w.write_event(Event::End(BytesEnd::new("testcase")));
    }
    let _ = w.write_event(Event::End(BytesEnd::new("testsuite")));
    let _ = w.write_event(Event::End(BytesEnd::new("testsuites")));
    let mut s = String::from_utf8(w.into_inner()).unwrap_or_default();
    s.push('\n');
    s
}
