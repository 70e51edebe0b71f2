//! Waivers: findings an engineer accepts in the case file, shown as
//! accepted in every report and never dropped.

use crate::common::{part, run};
use hvstack::report::{CheckReport, VerdictOut};

/// A 1 mm epoxy sheet at 12 kV rms: 12 kV/mm against 20 kV/mm rms with a
/// safety factor 2 is a thin margin (review), from the series divider
/// (common practice; library strength from memory).
fn sheet(waivers: &str) -> CheckReport {
    run(&format!(
        "
title: sheet
operation: {{ mode: ac, values: rms }}
materials:
  resin: {{ base: epoxy, strength_kv_per_mm: 20, strength_basis: rms, source: test value }}
stack:
  form: planar
  voltage_kv: 12
  layers:
    - {{ name: sheet, material: resin, thickness: 1 }}
{waivers}"
    ))
}

#[test]
fn an_accepted_warning_is_shown_and_no_longer_sets_the_verdict() {
    let plain = sheet("");
    assert_eq!(plain.verdict, VerdictOut::Review);
    let thin: Vec<_> = plain.findings.iter().filter(|f| f.code == "thin-margin").collect();
    assert_eq!(thin.len(), 1, "{:?}", plain.findings);

    let waived = sheet(
        "waivers:\n  - { code: thin-margin, part: sheet, reason: routine-tested at 2.5 × U0 per the product \
         standard, by: A. Engineer }\n",
    );
    let f = waived.findings.iter().find(|f| f.code == "thin-margin").expect("the finding stays in the report");
    let a = f.accepted.as_ref().expect("marked accepted");
    assert_eq!(a.by, "A. Engineer");
    assert!(a.reason.starts_with("routine-tested"));
    assert_eq!(part(&waived, "sheet").verdict, VerdictOut::Pass);
    assert_eq!(waived.verdict, VerdictOut::Pass);
    let text = hvstack::report::render_text(&waived);
    assert!(text.contains("ACCEPTED by A. Engineer"), "{text}");
}

#[test]
fn a_stale_waiver_is_reported_and_a_failing_finding_cannot_be_waived() {
    let stale = sheet("waivers:\n  - { code: singular-peak, reason: drawn sharp, by: B }\n");
    assert!(stale.findings.iter().any(|f| f.code == "waiver-unmatched" && f.accepted.is_none()));
    assert_eq!(stale.verdict, VerdictOut::Review);

    // 30 kV across 1 mm: above the 20 kV/mm rms strength, a fail
    let text = "
title: overstressed
operation: { mode: ac, values: rms }
materials:
  resin: { base: epoxy, strength_kv_per_mm: 20, strength_basis: rms, source: test value }
stack:
  form: planar
  voltage_kv: 30
  layers:
    - { name: sheet, material: resin, thickness: 1 }
waivers:
  - { code: above-typical-strength, part: sheet, reason: we like it, by: C }
";
    let r = run(text);
    assert_eq!(r.verdict, VerdictOut::Fail);
    assert!(r.findings.iter().any(|f| f.code == "waiver-refused"));
    assert!(r.findings.iter().filter(|f| f.code == "above-typical-strength").all(|f| f.accepted.is_none()));
}
