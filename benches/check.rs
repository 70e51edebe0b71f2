//! Where the time of a whole check goes, phase by phase, on one case
//! (default `benches/cases/square-1024.yaml`).
//!
//! Run: `cargo bench --bench check` or `cargo bench --bench check --
//! CASE.yaml`. The phases are those of `hvstack::check`: parse, prepare
//! (grid, paint, coefficients, stencil, pattern, system), the self-check's
//! coarser grids (solved first, coarsest first), the fine solve from the
//! medium grid's solution, evaluation (fields, inception, self-check
//! comparison, assessment) and the report with its JSON. Each phase is the
//! fastest of three runs (`HVSTACK_BENCH_REPEAT`); the machines are shared
//! VMs whose timings vary by tens of percent.

use std::time::Instant;

/// The command's allocator (huge pages for large blocks), so that the
/// phases cost what they cost in `hvstack check`.
#[path = "../src/cli/memory.rs"]
mod memory;

#[global_allocator]
static ALLOCATOR: memory::HugePages = memory::HugePages;

fn main() {
    let path = std::env::args()
        .skip(1)
        .find(|a| a.ends_with(".yaml"))
        .unwrap_or_else(|| "benches/cases/square-1024.yaml".into());
    let text = std::fs::read_to_string(&path).expect("benchmark case readable");
    memory::configure();
    let options = hvstack::Options::default();
    let repeat: usize = std::env::var("HVSTACK_BENCH_REPEAT").ok().and_then(|v| v.parse().ok()).unwrap_or(3);
    let mut best = [f64::INFINITY; 7];
    let mut last = None;
    for _ in 0..repeat {
        let mut t = Instant::now();
        let mut lap = |k: usize, best: &mut [f64; 7]| {
            best[k] = best[k].min(t.elapsed().as_secs_f64());
            t = Instant::now();
        };
        let case = hvstack::case::parse(&text, &path).expect("case parses");
        lap(0, &mut best);
        let prepared = hvstack::prepare(case, &path, &options).expect("case prepares");
        lap(1, &mut best);
        let coarser = hvstack::study::selfcheck::solve_coarser(&prepared, &options);
        lap(2, &mut best);
        let start = coarser.as_ref().map(|c| c.start_for(&prepared.grid));
        let solution = prepared.solve_from(&options.solve, start).expect("case solves");
        lap(3, &mut best);
        let check = coarser.map_or(hvstack::SelfCheck::Given(None), |c| hvstack::SelfCheck::Solved(Box::new(c)));
        let evaluated = prepared.evaluate_with(&solution, &options, check).expect("case evaluates");
        lap(4, &mut best);
        let report = prepared.report_of(&solution, &evaluated, 0.0);
        let json = serde_json::to_string(&report).expect("report serialises");
        lap(5, &mut best);
        last = Some((report.grid.nodes, solution.report.iterations, json.len()));
    }
    best[6] = best[..6].iter().sum();
    let (nodes, iterations, bytes) = last.expect("ran");
    println!(
        "{path}: {nodes} nodes, fine solve {iterations} iterations, JSON {bytes} bytes; fastest of {repeat} runs, s"
    );
    for (name, s) in
        ["parse", "prepare", "self-check grids", "fine solve", "evaluate", "report + JSON", "total"].iter().zip(best)
    {
        println!("  {name:<18} {s:>7.3}");
    }
}
