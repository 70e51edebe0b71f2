//! The review page: one self-contained HTML file per case (no scripts, no
//! external resources) with the verdict in plain words up top, the field
//! map, the parts table with margins, findings, electrodes, probes, lines,
//! the mesh self-check and the caution footer. Formatting only.

use super::text::{sig4, verdict_sentence, verdict_word};
use super::{CheckReport, SeverityOut, VerdictOut};
use maud::{DOCTYPE, Markup, PreEscaped, html};

/// What the page shows besides the result.
pub struct PageInputs<'a> {
    /// The result.
    pub report: &'a CheckReport,
    /// The case file as the user named it.
    pub case_file: &'a str,
    /// The field map as SVG markup (inlined).
    pub map_svg: &'a str,
    /// Further maps (loss density, temperature) shown after the field map.
    pub extra_map_svgs: &'a [String],
    /// Other files of the review folder, linked from the page: (file name, what it holds).
    pub files: &'a [(String, String)],
    /// The CSV file of each sampling line, in line order.
    pub line_files: &'a [String],
}

const STYLE: &str = r#"
:root { --ink: #1f2328; --muted: #59636e; --line: #d0d7de; --pass: #1a7f37; --review: #9a6700; --fail: #cf222e; }
* { box-sizing: border-box; }
body { font-family: Ubuntu, 'DejaVu Sans', 'Helvetica Neue', Arial, sans-serif; color: var(--ink); margin: 0;
       background: #f6f8fa; line-height: 1.45; }
main { max-width: 1100px; margin: 0 auto; padding: 24px; background: #ffffff; }
h1 { font-size: 1.5rem; margin: 0 0 4px; }
h2 { font-size: 1.1rem; margin: 28px 0 8px; border-bottom: 1px solid var(--line); padding-bottom: 4px; }
.meta { color: var(--muted); font-size: 0.9rem; }
.verdict { margin: 16px 0; padding: 14px 18px; border-radius: 6px; font-size: 1.15rem; font-weight: bold;
           color: #ffffff; }
.verdict.pass { background: var(--pass); } .verdict.review { background: var(--review); }
.verdict.fail { background: var(--fail); }
table { border-collapse: collapse; width: 100%; font-size: 0.9rem; }
th, td { border-bottom: 1px solid var(--line); padding: 5px 8px; text-align: left; vertical-align: top; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; }
.tag { display: inline-block; padding: 1px 7px; border-radius: 10px; font-size: 0.8rem; font-weight: bold;
       color: #ffffff; }
.tag.pass { background: var(--pass); } .tag.review, .tag.warning { background: var(--review); }
.tag.fail { background: var(--fail); } .tag.info { background: #57606a; }
figure { margin: 0; overflow-x: auto; } figure svg { max-width: 100%; height: auto; }
code { font-size: 0.85rem; word-break: break-all; }
td code { white-space: nowrap; word-break: normal; }
footer { margin-top: 32px; padding-top: 12px; border-top: 2px solid var(--ink); font-size: 0.9rem; }
"#;

/// The page head: character set, viewport, title and the inline style.
fn head(title: &str) -> Markup {
    html! {
        head {
            meta charset="utf-8";
            meta name="viewport" content="width=device-width, initial-scale=1";
            title { (title) }
            style { (PreEscaped(STYLE)) }
        }
    }
}

fn opt(v: Option<f64>) -> String {
    v.map_or_else(|| "—".to_string(), sig4)
}

fn severity(s: SeverityOut) -> &'static str {
    match s {
        SeverityOut::Info => "info",
        SeverityOut::Warning => "warning",
        SeverityOut::Fail => "fail",
    }
}

fn parts(r: &CheckReport) -> Markup {
    html! {
        table {
            thead { tr {
                th { "#" } th { "part" } th { "material" } th.num { "εr" } th.num { "peak |E| (kV/mm " (r.values) ")" }
                th.num { "at (mm)" } th.num { "judged |E| (kV/mm " (r.values) ")" } th.num { "mean |E| (kV/mm " (r.values) ")" }
                th.num { "strength (kV/mm " (r.values) ")" }
                th.num { "margin" } th.num { "error estimate (%)" } th { "verdict" }
            } }
            tbody {
                @for (k, p) in r.parts.iter().enumerate() {
                    tr {
                        td { (k + 1) } td { (p.name) } td { (p.material) } td.num { (sig4(p.permittivity)) }
                        td.num { (sig4(p.e_max_kv_per_mm)) }
                        td.num { (sig4(p.e_max_at_mm[0])) ", " (sig4(p.e_max_at_mm[1])) }
                        td.num { (sig4(p.e_max_judged_kv_per_mm)) }
                        td.num { (sig4(p.e_mean_kv_per_mm)) } td.num { (opt(p.strength_kv_per_mm)) }
                        td.num { (opt(p.margin)) }
                        td.num { (opt(if p.e_max_judged_at_mm == p.e_max_at_mm { p.e_max_error_estimate_pct } else { p.e_max_judged_error_estimate_pct })) }
                        td { span class={ "tag " (verdict_word(p.verdict)) } { (verdict_word(p.verdict)) } }
                    }
                }
            }
        }
    }
}

/// The singular points of the drawn geometry, where the case has them.
fn singular_points(r: &CheckReport) -> Markup {
    let with_error = |e: Option<f64>, x: Option<f64>| match (e, x) {
        (Some(e), Some(x)) => format!("{} ± {} %", sig4(e), crate::report::text::significant(x, 2)),
        (Some(e), None) => sig4(e),
        (None, _) => "—".to_string(),
    };
    html! {
        @if let Some(first) = r.singular_points.first() {
            h2 { "Singular points" }
            p.meta { "Where the drawn geometry has no finite field (|E| ~ r^(λ−1)): the peak there is a property of the \
                drawing, not of the design. Parts are judged on their field " (first.distances_mm[0]) " mm from these points \
                and farther; the radius is the edge radius that brings the peak to strength ÷ safety factor." }
            table {
                thead { tr {
                    th.num { "at (mm)" } th { "kind" } th { "electrode" } th { "parts" } th.num { "λ drawn" } th.num { "λ fitted" }
                    th.num { "|E| at " (first.distances_mm[0]) " mm (kV/mm " (r.values) ")" }
                    th.num { "|E| at " (first.distances_mm[1]) " mm (kV/mm " (r.values) ")" }
                    th.num { "radius (mm)" }
                } }
                tbody { @for s in &r.singular_points { tr {
                    td.num { (sig4(s.at_mm[0])) ", " (sig4(s.at_mm[1])) } td { (s.kind) } td { (s.electrode) }
                    td { (s.parts.join(", ")) } td.num { (opt(s.exponent_drawn)) } td.num { (opt(s.exponent_fitted)) }
                    td.num { (with_error(s.e_at_distances_kv_per_mm[0], s.e_at_distances_error_estimate_pct[0])) }
                    td.num { (with_error(s.e_at_distances_kv_per_mm[1], s.e_at_distances_error_estimate_pct[1])) }
                    td.num { (opt(s.radius_to_allowable_mm)) }
                } } }
            }
        }
    }
}

/// Partial-discharge inception of the gas parts, where the case has them.
fn discharge(r: &CheckReport) -> Markup {
    let gas: Vec<_> = r.parts.iter().filter(|p| p.pd_criterion.is_some() || p.point_field_margin.is_some()).collect();
    html! {
        @if !gas.is_empty() {
            h2 { "Partial discharge in gas" }
            p.meta { "Ionisation integral along the critical field line (dashed on the map), all fixed potentials scaled \
                together; a gas part's margin is its inception level ÷ the working level, required "
                (sig4(r.pd_inception_margin)) "." }
            table {
                thead { tr {
                    th { "part" } th.num { "inception (kV " (r.values) ")" } th.num { "margin" } th { "criterion" }
                    th.num { "line (mm)" } th.num { "starts at (mm)" } th.num { "point-field margin" }
                } }
                tbody { @for p in gas { tr {
                    td { (p.name) } td.num { (opt(p.pd_inception_kv)) } td.num { (opt(p.margin)) }
                    td { (p.pd_criterion.unwrap_or("—")) } td.num { (opt(p.pd_line_length_mm)) }
                    td.num { @match p.pd_inception_at_mm { Some(a) => (format!("{}, {}", sig4(a[0]), sig4(a[1]))), None => "—" } }
                    td.num { (opt(p.point_field_margin)) }
                } } }
            }
        }
    }
}

/// The stress shift against the dry case at 20 °C, and the water dipole
/// alignment, where the case has them.
fn service_conditions(r: &CheckReport) -> Markup {
    html! {
        @if let Some(reference) = &r.reference {
            h2 { "Service conditions" }
            p.meta { "Each part at its temperature and water content, against the same case with every part dry at "
                (sig4(reference.temperature_c)) " °C (solved again with the same grid and setup: " (reference.method)
                ", " (reference.iterations) " iterations)." }
            table {
                thead { tr {
                    th { "part" } th.num { "T (°C)" } th.num { "water (vol%)" } th.num { "εr dry 20 °C" } th.num { "εr" }
                    th.num { "peak |E| dry (kV/mm " (r.values) ")" } th.num { "peak |E| (kV/mm " (r.values) ")" }
                    th.num { "change (%)" }
                } }
                tbody { @for p in &r.parts { tr {
                    td { (p.name) } td.num { (sig4(p.temperature_c)) } td.num { (opt(p.water_volume_pct)) }
                    td.num { (sig4(p.permittivity_reference)) } td.num { (sig4(p.permittivity)) }
                    td.num { (opt(p.e_max_reference_kv_per_mm)) } td.num { (sig4(p.e_max_kv_per_mm)) }
                    td.num { @match p.e_max_change_pct { Some(c) => (format!("{c:+.1}")), None => "—" } }
                } } }
            }
        }
        @if let Some(d) = &r.dipole_alignment {
            p { "Water dipoles: the largest alignment is in " (d.part) ", x = p·E/kT = " (format!("{:.2e}", d.x_max))
                ", ⟨cos θ⟩ = " (format!("{:.2e}", d.mean_cos_theta)) " — "
                (if d.linear { "linear response holds." } else { "beyond linear response (see findings)." }) }
        }
    }
}

fn mesh_check(r: &CheckReport) -> Markup {
    html! {
        @match &r.mesh_check {
            None => p { "The mesh self-check did not run or could not solve its coarser grids (see findings)." },
            Some(m) => {
                p { "The case was solved again on two coarser grids (" (m.nodes[1]) " and " (m.nodes[2])
                    " nodes, against " (m.nodes[0]) "); each part's peak field is compared across the three." }
                table {
                    thead { tr {
                        th { "part" } th.num { "peak, finest (kV/mm " (r.values) ")" } th.num { "coarser grids (kV/mm " (r.values) ")" }
                        th.num { "observed order" } th.num { "error estimate (%)" } th { "grows with refinement" }
                    } }
                    tbody { @for p in &r.parts { tr {
                        td { (p.name) } td.num { (sig4(p.e_max_kv_per_mm)) }
                        td.num { @match p.e_max_coarser_grids_kv_per_mm {
                            Some(c) => { (sig4(c[0])) ", " (sig4(c[1])) }
                            None => "—",
                        } }
                        td.num { (opt(p.e_max_observed_order)) } td.num { (opt(p.e_max_error_estimate_pct)) }
                        td { @if p.e_max_grows_with_refinement { "yes — see findings" } @else { "no" } }
                    } } }
                }
            }
        }
    }
}

/// The review page as HTML.
pub fn render_page(inp: &PageInputs) -> String {
    let r = inp.report;
    let class = verdict_word(r.verdict);
    let page = html! {
        (DOCTYPE)
        html lang="en" {
            (head(&format!("{} — hvstack review", r.title)))
            body { main {
                h1 { (r.title) }
                div.meta { "Case file " code { (inp.case_file) } " · " (r.geometry) " · values " strong { (r.values) } " · results " (r.results_per) }
                div class={ "verdict " (class) } { (verdict_sentence(r.verdict)) }
                @if r.verdict != VerdictOut::Pass {
                    p { "Read the findings below: each says what the number means and what to change." }
                }
                p {
                    @match (r.allowable_kv, &r.allowable_limited_by) {
                        (Some(a), Some(by)) => {
                            "Allowable level: " b { (sig4(a)) " kV " (r.values) } " — the largest level of the fixed potentials \
                            (scaled together) at which every part keeps its safety factor and every gas part its inception \
                            margin; set by " b { (by) }
                            @if let Some(x) = r.allowable_error_estimate_pct { " (± " (crate::report::text::significant(x, 2)) " %)" }
                            @if let Some(t) = r.allowable_bisection_tolerance_pct {
                                "; the DC field does not scale with the voltage, so it was found by bisection of solves at \
                                scaled levels, within " (crate::report::text::significant(t, 2)) " %"
                            }
                            "."
                        }
                        _ => "Allowable level: not given (no part has a margin)."
                    }
                }
                h2 { "Field map" }
                figure { (PreEscaped(inp.map_svg)) }
                @for m in inp.extra_map_svgs {
                    figure { (PreEscaped(m)) }
                }
                h2 { "Parts" }
                p.meta { "Margin = typical breakdown strength ÷ peak field (gas parts: partial-discharge inception ÷ \
                    working level); the required safety factor is " (sig4(r.safety_factor)) "." }
                (parts(r))
                (discharge(r))
                (singular_points(r))
                (service_conditions(r))
                h2 { "Findings" }
                @if r.findings.is_empty() { p { "None." } } @else {
                    table { tbody { @for f in &r.findings { tr {
                        td { span class={ "tag " (severity(f.severity)) } { (severity(f.severity)) } }
                        td { code { (f.code) } }
                        td {
                            @if let Some(p) = &f.part { b { (p) } ": " } (f.message)
                            @if let Some(a) = &f.accepted { " " b { "Accepted by " (a.by) ": " } (a.reason) }
                        }
                    } } } }
                }
                h2 { "Electrodes" }
                table {
                    thead { tr { th { "electrode" } th { "kind" } th.num { "potential (kV " (r.values) ")" } th.num { "charge" } } }
                    tbody { @for e in &r.electrodes { tr {
                        td { (e.name) } td { (e.kind) } td.num { (sig4(e.potential_kv)) }
                        td.num { (sig4(e.charge.value)) " " (e.charge.unit) }
                    } } }
                }
                p.meta {
                    @if let Some(c) = &r.capacitance { "Capacitance " (sig4(c.value)) " " (c.unit) " · " }
                    "stored energy " (sig4(r.energy.value)) " " (r.energy.unit)
                    @if let Some(x) = r.energy_error_estimate_pct { " (± " (crate::report::text::significant(x, 2)) " %, the capacitance likewise)" }
                    @if let Some(c) = &r.field_concentration {
                        " · field enhancement factor " (sig4(c.factor)) " (judged peak " (sig4(c.e_max_kv_per_mm))
                        " kV/mm " (r.values) " against " (sig4(c.e_uniform_kv_per_mm)) " kV/mm " (r.values) " over the " (sig4(c.gap_mm)) " mm gap)"
                        @if c.permittivity_contrast_only { "; in series layers it only reflects their permittivity contrast" }
                    }
                }
                @if !r.probes.is_empty() {
                    h2 { "Probes" }
                    table {
                        thead { tr { th { "probe" } th.num { "at (mm)" } th { "in" } th.num { "potential (kV " (r.values) ")" }
                            th.num { "|E| (kV/mm " (r.values) ")" } th.num { "error estimate (%)" } } }
                        tbody { @for p in &r.probes { tr {
                            td { (p.name) } td.num { (sig4(p.at_mm[0])) ", " (sig4(p.at_mm[1])) } td { (p.part) }
                            td.num { (sig4(p.potential_kv)) } td.num { (sig4(p.e_kv_per_mm)) } td.num { (opt(p.e_error_estimate_pct)) }
                        } } }
                    }
                }
                @if !r.lines.is_empty() {
                    h2 { "Lines" }
                    table {
                        thead { tr { th { "line" } th.num { "from (mm)" } th.num { "to (mm)" }
                            th.num { "peak |E| (kV/mm " (r.values) ")" } th.num { "at (mm)" } th.num { "error estimate (%)" } th { "samples" } } }
                        tbody { @for (l, file) in r.lines.iter().zip(inp.line_files) { tr {
                            td { (l.name) } td.num { (sig4(l.from_mm[0])) ", " (sig4(l.from_mm[1])) }
                            td.num { (sig4(l.to_mm[0])) ", " (sig4(l.to_mm[1])) }
                            td.num { (sig4(l.e_max_kv_per_mm)) }
                            td.num { (sig4(l.e_max_at_mm[0])) ", " (sig4(l.e_max_at_mm[1])) }
                            td.num { (opt(l.e_max_error_estimate_pct)) }
                            td { a href=(file) { (file) } " (" (l.points) ")" }
                        } } }
                    }
                }
                h2 { "Mesh self-check" }
                (mesh_check(r))
                p.meta { "Grid " (r.grid.nodes_x) " × " (r.grid.nodes_y) " = " (r.grid.nodes) " nodes, steps "
                    (sig4(r.grid.min_step_mm)) " to " (sig4(r.grid.max_step_mm)) " mm; solved by " (r.solve.method)
                    " in " (r.solve.iterations) " iterations to a relative residual of "
                    (format!("{:.1e}", r.solve.relative_residual)) "." }
                @if !inp.files.is_empty() {
                    h2 { "Files" }
                    ul { @for (name, what) in inp.files { li { a href=(name) { (name) } " — " (what) } } }
                }
                footer {
                    p { b { "Caution. " } (r.caution) }
                    p.meta { "hvstack " (r.hvstack_version) " · case SHA-256 " code { (r.case_sha256) } }
                }
            } }
        }
    };
    page.into_string()
}

/// The index page of a batch review: one row per case with a link to its
/// page (`links[k]` is the folder of row k, `None` when it has no page).
pub fn render_batch(rows: &[super::summary::SummaryRow], links: &[Option<String>]) -> String {
    let any = |v: &str| rows.iter().any(|r| r.verdict == v);
    let (class, words) = if any("error") {
        ("fail", "ERROR — at least one case could not be evaluated")
    } else if any("fail") {
        ("fail", "FAIL — at least one case exceeds a typical breakdown strength")
    } else if any("review") {
        ("review", "REVIEW — at least one case needs an engineer's look")
    } else {
        ("pass", "PASS — every case passes")
    };
    let page = html! {
        (DOCTYPE)
        html lang="en" {
            (head("hvstack batch review"))
            body { main {
                h1 { "Batch review" }
                div.meta { (rows.len()) " case(s)" }
                div class={ "verdict " (class) } { (words) }
                table {
                    thead { tr { th { "case" } th { "verdict" } th { "worst part" } th.num { "peak |E| (kV/mm)" }
                        th.num { "margin" } th { "findings / error" } } }
                    tbody { @for (r, link) in rows.iter().zip(links) { tr {
                        td { @match link {
                            Some(l) => a href={ (l) "/index.html" } { (r.file) },
                            None => (r.file),
                        } }
                        td { span class={ "tag " (if r.verdict == "error" { "fail" } else { r.verdict }) } { (r.verdict) } }
                        td { (r.worst_part.as_deref().unwrap_or("—")) }
                        td.num { (opt(r.e_max_kv_per_mm)) " " (r.values.unwrap_or("")) } td.num { (opt(r.margin)) }
                        td { @if let Some(e) = &r.error { (e) } @else { (r.findings.join(", ")) } }
                    } } }
                }
                footer { p { b { "Caution. " } (super::CAUTION) } p.meta { "hvstack " (env!("CARGO_PKG_VERSION")) } }
            } }
        }
    };
    page.into_string()
}

/// The index page of a sweep's review folder (from the sweep JSON): the
/// varied keys, the worst point, the plots (SVG files beside the page) and
/// a row per point, linked to its own review page where it has one
/// (`links[k]`: the folder of point k).
pub fn render_sweep(sweep: &serde_json::Value, plots: &[(String, String)], links: &[Option<String>]) -> String {
    let points = sweep["points"].as_array().map_or(&[][..], Vec::as_slice);
    let keys: Vec<&str> = sweep["vary"].as_array().into_iter().flatten().filter_map(|v| v["key"].as_str()).collect();
    let title = points.first().and_then(|p| p["result"]["title"].as_str()).unwrap_or("");
    let values = points.first().and_then(|p| p["result"]["values"].as_str()).unwrap_or("");
    let verdict_of = |p: &serde_json::Value| p["result"]["verdict"].as_str().unwrap_or("?").to_string();
    let any = |v: &str| points.iter().any(|p| verdict_of(p) == v);
    let (class, words) = if any("fail") {
        ("fail", "FAIL — at least one point exceeds a typical breakdown strength or starts discharge")
    } else if any("review") {
        ("review", "REVIEW — at least one point needs an engineer's look")
    } else {
        ("pass", "PASS — every point passes")
    };
    let text = |v: &serde_json::Value| v.as_str().map_or_else(|| v.to_string(), str::to_string);
    let num = |v: &serde_json::Value| v.as_f64().map_or_else(|| "—".to_string(), sig4);
    let page = html! {
        (DOCTYPE)
        html lang="en" {
            (head("hvstack sweep review"))
            body { main {
                h1 { "Sweep review" }
                div.meta { (title) " · " (points.len()) " point(s) · varied: " (keys.join(", ")) " · values " strong { (values) } }
                div class={ "verdict " (class) } { (words) }
                p { "Each point is a screening check of its own. Dashed lines are the limits a figure is judged \
                     against: a part's strength over the safety factor, the safety factor, the working level times \
                     the inception margin, the working level." }
                h2 { "Plots" }
                @for (file, what) in plots {
                    figure { img src=(file) alt=(what) style="max-width:100%"; figcaption.meta { (what) } }
                }
                h2 { "Points" }
                table {
                    thead { tr {
                        th { "point" }
                        @for k in &keys { th { (k) } }
                        th { "verdict" } th.num { "allowable kV " (values) } th.num { "PD inception kV " (values) }
                    } }
                    tbody { @for (k, p) in points.iter().enumerate() { tr {
                        td { @match links.get(k).and_then(Option::as_ref) {
                            Some(l) => a href={ (l) "/index.html" } { (k + 1) },
                            None => (k + 1),
                        } }
                        @for key in &keys { td { (text(&p["set"][*key])) } }
                        td { span class={ "tag " (verdict_of(p)) } { (verdict_of(p)) } }
                        td.num { (num(&p["result"]["allowable_kv"])) }
                        td.num { (num(&p["result"]["pd_inception_kv"])) }
                    } } }
                }
                footer { p { b { "Caution. " } (super::CAUTION) } p.meta { "hvstack " (env!("CARGO_PKG_VERSION")) } }
            } }
        }
    };
    page.into_string()
}
