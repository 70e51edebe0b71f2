//! Fuzzes case parsing, validation, gridding and painting: any input must
//! give a case or located errors, never a panic. Solves only tiny grids.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let Ok(case) = hvstack::case::parse(text, "fuzz.yaml") else { return };
    let options = hvstack::Options {
        limits: hvstack::grid::GridLimits { max_nodes: 4_000 },
        ..Default::default()
    };
    if let Ok(prepared) = hvstack::prepare(case, "fuzz.yaml", &options) {
        if let Ok(solution) = prepared.solve(&options.solve)
            && let Ok(report) = prepared.report(&solution, &options, 0.0)
        {
            let _ = hvstack::report::render_text(&report);
        }
    }
});
