//! Cost of the partial-discharge search (seeding, tracing, integrals)
//! against the whole check of the same case.
//!
//! Run: `cargo bench --bench discharge` (default case
//! `benches/cases/busbar-air-1m.yaml`) or `cargo bench --bench discharge --
//! CASE.yaml`. Each figure is the fastest of three runs.

use std::time::Instant;

fn fastest<T>(mut f: impl FnMut() -> T) -> (f64, T) {
    let mut best = f64::INFINITY;
    let mut out = None;
    for _ in 0..3 {
        let t = Instant::now();
        let v = f();
        best = best.min(t.elapsed().as_secs_f64());
        out = Some(v);
    }
    (best, out.expect("ran"))
}

fn main() {
    let path = std::env::args()
        .skip(1)
        .find(|a| a.ends_with(".yaml"))
        .unwrap_or_else(|| "benches/cases/busbar-air-1m.yaml".into());
    let text = std::fs::read_to_string(&path).expect("benchmark case readable");
    let options = hvstack::Options::default();
    let (whole, report) = fastest(|| hvstack::check(&text, &path, &options).expect("case evaluates"));
    let case = hvstack::case::parse(&text, &path).expect("case parses");
    let prepared = hvstack::prepare(case, &path, &options).expect("case prepares");
    let solution = prepared.solve(&options.solve).expect("case solves");
    let fields = prepared.fields(&prepared.service, &solution.phi, solution.quadrature.as_deref());
    let (trace, inception) =
        fastest(|| prepared.discharge(&prepared.sampler(&solution.phi, solution.quadrature.as_deref()), &fields));
    let lines: usize = inception.iter().map(|g| g.lines_traced).sum();
    println!(
        "{path}: {} nodes; check {:.3} s; inception search {:.3} s on the fine grid ({lines} lines) = {:.1} % of the \
         check (the self-check repeats it on its two coarser grids)",
        report.grid.nodes,
        whole,
        trace,
        100.0 * trace / whole
    );
}
