//! The human report: aligned tables, findings and the caution footer.

use super::{CheckReport, MaterialOut, PartOut, SeverityOut, VerdictOut};
use comfy_table::{CellAlignment, Table, presets::NOTHING};
use std::fmt::Write;

const WIDTH: usize = 100;

/// Four significant digits, switching to exponent form for very large or
/// small magnitudes.
pub fn sig4(v: f64) -> String {
    significant(v, 4)
}

/// `digits` significant digits, switching to exponent form below 1e-3 and
/// from 1e6.
pub(crate) fn significant(v: f64, digits: i32) -> String {
    if v == 0.0 {
        return "0".to_string();
    }
    if !v.is_finite() {
        return format!("{v}");
    }
    let mag = v.abs().log10().floor() as i32;
    if !(-3..6).contains(&mag) {
        let d = (digits - 1) as usize;
        return format!("{v:.d$e}");
    }
    let decimals = (digits - 1 - mag).max(0) as usize;
    format!("{v:.decimals$}")
}

fn opt(v: Option<f64>) -> String {
    v.map_or_else(|| "—".to_string(), sig4)
}

/// The verdict in plain words.
pub fn verdict_sentence(v: VerdictOut) -> &'static str {
    match v {
        VerdictOut::Pass => "PASS — every part meets the safety factor; no warnings",
        VerdictOut::Review => "REVIEW — something needs an engineer's look (see findings)",
        VerdictOut::Fail => {
            "FAIL — a typical breakdown strength is exceeded or discharge starts at the working level (see findings)"
        }
    }
}

pub(crate) fn verdict_word(v: VerdictOut) -> &'static str {
    match v {
        VerdictOut::Pass => "pass",
        VerdictOut::Review => "review",
        VerdictOut::Fail => "fail",
    }
}

pub(crate) fn table(header: &[&str], rows: Vec<Vec<String>>, right: &[usize]) -> String {
    let mut t = Table::new();
    t.load_style(NOTHING).set_header(header.to_vec());
    for r in rows {
        t.add_row(r);
    }
    for &c in right {
        if let Some(col) = t.column_mut(c) {
            col.set_cell_alignment(CellAlignment::Right);
        }
    }
    t.lines().map(|l| l.trim_end().to_string()).collect::<Vec<_>>().join("\n")
}

fn wrap(out: &mut String, first: &str, text: &str) {
    let indent = " ".repeat(first.chars().count());
    let opts = textwrap::Options::new(WIDTH).initial_indent(first).subsequent_indent(&indent);
    for line in textwrap::wrap(text, opts) {
        let _ = writeln!(out, "{line}");
    }
}

/// What the case's values are, in words.
fn values_sentence(r: &CheckReport) -> String {
    match (r.operation.mode, r.operation.frequency_hz) {
        ("ac", Some(f)) => format!(
            "{} — AC at {} Hz: every voltage, field and strength below is an {} value{}{}",
            r.values,
            f,
            r.values,
            if r.values == "rms" { " (energies are time averages)" } else { "" },
            if r.operation.field_with_losses == Some(true) {
                "; solved with losses: fields are phasor magnitudes, charges their in-phase part"
            } else {
                ""
            }
        ),
        ("dc", _) => "peak — steady DC: every voltage, field and strength below is the steady (peak) value; the field \
                      is set by the conductivities"
            .to_string(),
        ("impulse", _) => "peak — lightning impulse (1.2/50 µs): every voltage, field and strength below is a peak \
                           value"
            .to_string(),
        _ => format!(
            "peak — static field: every voltage, field and strength below is an instantaneous (peak) value{}",
            if r.operation.stated { "" } else { " (no `operation:` given)" }
        ),
    }
}

/// Surfaces listed in the text report (all are in the JSON).
const MAX_SURFACES_LISTED: usize = 5;

/// Renders a check result for a terminal. Deterministic: the solve time is
/// left out so the same case always gives the same text.
pub fn render_text(r: &CheckReport) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "hvstack {} — screening check", r.hvstack_version);
    let _ = writeln!(o, "case         {}", r.title);
    let _ = writeln!(o, "verdict      {}", verdict_sentence(r.verdict));
    let _ = writeln!(o, "values       {}", values_sentence(r));
    let _ = writeln!(o, "geometry     {}; charge, capacitance and energy {}", r.geometry, r.results_per);
    let g = &r.grid;
    let _ = writeln!(
        o,
        "grid         {} × {} = {} nodes, steps {} to {} mm",
        g.nodes_x,
        g.nodes_y,
        g.nodes,
        sig4(g.min_step_mm),
        sig4(g.max_step_mm)
    );
    let s = &r.solve;
    let _ = writeln!(
        o,
        "solve        {}, {} iterations, relative residual {:.1e}, {} unknowns",
        s.method, s.iterations, s.relative_residual, s.unknowns
    );
    let _ = writeln!(
        o,
        "limits       safety factor {}; partial-discharge inception margin {}",
        sig4(r.safety_factor),
        sig4(r.pd_inception_margin)
    );
    let v = r.values;
    let _ = match (r.allowable_kv, &r.allowable_limited_by) {
        (Some(a), Some(by)) => writeln!(
            o,
            "allowable    {} kV {v}: the largest level of the fixed potentials (scaled together) at which every part \
             keeps its margin; set by {by}{}{}",
            sig4(a),
            r.allowable_error_estimate_pct.map_or_else(String::new, |x| format!(" (± {} %)", significant(x, 2))),
            r.allowable_bisection_tolerance_pct.map_or_else(String::new, |t| format!(
                "; the DC field does not scale with the voltage, so found by bisection of solves at scaled levels, \
                 within {} %",
                significant(t, 2)
            ))
        ),
        _ => writeln!(o, "allowable    — (no part has a margin)"),
    };

    let _ = writeln!(o, "\nparts");
    let rows = r
        .parts
        .iter()
        .map(|p| {
            vec![
                p.name.clone(),
                p.material.clone(),
                sig4(p.permittivity),
                sig4(p.e_max_kv_per_mm),
                format!("{}, {}", sig4(p.e_max_at_mm[0]), sig4(p.e_max_at_mm[1])),
                sig4(p.e_mean_kv_per_mm),
                sig4(p.w_pol_max_j_per_m3),
                opt(p.strength_kv_per_mm),
                opt(p.margin),
                verdict_word(p.verdict).to_string(),
            ]
        })
        .collect();
    let v = r.values;
    let (e_max, e_mean, strength) =
        (format!("E max kV/mm {v}"), format!("E mean kV/mm {v}"), format!("strength kV/mm {v}"));
    let head = ["part", "material", "εr", &e_max, "at mm", &e_mean, "w_pol max J/m³", &strength, "margin", "verdict"];
    let _ = writeln!(o, "{}", table(&head, rows, &[2, 3, 4, 5, 6, 7, 8]));
    let gas: Vec<&PartOut> =
        r.parts.iter().filter(|p| p.pd_criterion.is_some() || p.point_field_margin.is_some()).collect();
    if !gas.is_empty() {
        let _ = writeln!(
            o,
            "\npartial-discharge inception in gas (ionisation integral along the critical field line; all fixed \
             potentials scaled together; gas parts' margin = inception / working level)"
        );
        let rows = gas
            .iter()
            .map(|p| {
                vec![
                    p.name.clone(),
                    opt(p.pd_inception_kv),
                    opt(p.margin),
                    p.pd_criterion.unwrap_or("—").to_string(),
                    opt(p.pd_line_length_mm),
                    p.pd_inception_at_mm.map_or_else(|| "—".into(), |a| format!("{}, {}", sig4(a[0]), sig4(a[1]))),
                    opt(p.point_field_margin),
                ]
            })
            .collect();
        let inc = format!("inception kV {v}");
        let head = ["part", &inc, "margin", "criterion", "line mm", "starts at mm", "point-field margin"];
        let _ = writeln!(o, "{}", table(&head, rows, &[1, 2, 4, 6]));
    }

    if !r.surfaces.is_empty() {
        let _ = writeln!(
            o,
            "\nsurfaces between solids and gases or liquids (largest tangential field; worst first{})",
            r.surface_tangential_limit_kv_per_mm.map_or_else(
                || ", no limit given: `limits.surface_tangential_kv_per_mm`".to_string(),
                |l| format!(", limit {} kV/mm {v}", sig4(l))
            )
        );
        let mut worst: Vec<&super::SurfaceOut> = r.surfaces.iter().collect();
        worst.sort_by(|a, b| b.e_tangential_max_kv_per_mm.total_cmp(&a.e_tangential_max_kv_per_mm));
        let rows = worst
            .iter()
            .take(MAX_SURFACES_LISTED)
            .map(|s| {
                vec![
                    s.parts[0].clone(),
                    s.parts[1].clone(),
                    sig4(s.e_tangential_max_kv_per_mm),
                    format!("{}, {}", sig4(s.at_mm[0]), sig4(s.at_mm[1])),
                ]
            })
            .collect();
        let et = format!("E tangential max kV/mm {v}");
        let _ = writeln!(o, "{}", table(&["solid", "gas or liquid", &et, "at mm"], rows, &[2, 3]));
        if worst.len() > MAX_SURFACES_LISTED {
            let _ = writeln!(o, " … and {} more in the JSON", worst.len() - MAX_SURFACES_LISTED);
        }
    }

    if !r.singular_points.is_empty() {
        let _ = writeln!(
            o,
            "\nsingular points of the drawn geometry (|E| ~ r^(λ−1): the peak there is a property of the drawing; \
             the field at stated distances and the edge radius that brings it to strength / safety factor)"
        );
        let d = r.singular_points[0].distances_mm;
        let rows = r
            .singular_points
            .iter()
            .map(|s| {
                let with_error =
                    |k: usize| match (s.e_at_distances_kv_per_mm[k], s.e_at_distances_error_estimate_pct[k]) {
                        (Some(e), Some(x)) => format!("{} ± {} %", sig4(e), significant(x, 2)),
                        (Some(e), None) => sig4(e),
                        (None, _) => "—".into(),
                    };
                vec![
                    format!("{}, {}", sig4(s.at_mm[0]), sig4(s.at_mm[1])),
                    s.kind.to_string(),
                    s.electrode.clone(),
                    opt(s.exponent_drawn),
                    opt(s.exponent_fitted),
                    with_error(0),
                    with_error(1),
                    opt(s.radius_to_allowable_mm),
                ]
            })
            .collect();
        let (e0, e1) = (format!("E at {} mm kV/mm {v}", d[0]), format!("E at {} mm kV/mm {v}", d[1]));
        let head = ["at mm", "kind", "electrode", "λ drawn", "λ fitted", &e0, &e1, "radius mm"];
        let _ = writeln!(o, "{}", table(&head, rows, &[3, 4, 5, 6, 7]));
        for p in r.parts.iter().filter(|p| p.e_max_judged_at_mm != p.e_max_at_mm && p.pd_criterion.is_none()) {
            let _ = writeln!(
                o,
                " {}: judged on {} kV/mm {v} at {}, {} mm{} (its peak at a singular point does not count)",
                p.name,
                sig4(p.e_max_judged_kv_per_mm),
                sig4(p.e_max_judged_at_mm[0]),
                sig4(p.e_max_judged_at_mm[1]),
                p.e_max_judged_error_estimate_pct.map_or_else(String::new, |x| format!(", ± {} %", significant(x, 2)))
            );
        }
    }

    if let Some(reference) = &r.reference {
        let _ = writeln!(
            o,
            "\nservice conditions against the same case dry at {} °C (solved again: {}, {} iterations)",
            sig4(reference.temperature_c),
            reference.method,
            reference.iterations
        );
        let rows = r
            .parts
            .iter()
            .map(|p| {
                vec![
                    p.name.clone(),
                    sig4(p.temperature_c),
                    opt(p.water_volume_pct),
                    sig4(p.permittivity_reference),
                    sig4(p.permittivity),
                    opt(p.e_max_reference_kv_per_mm),
                    sig4(p.e_max_kv_per_mm),
                    p.e_max_change_pct.map_or_else(|| "—".to_string(), |c| format!("{c:+.1}")),
                ]
            })
            .collect();
        let (dry, now) = (format!("E max dry kV/mm {v}"), format!("E max kV/mm {v}"));
        let head = ["part", "T °C", "water vol%", "εr dry 20 °C", "εr", &dry, &now, "change %"];
        let _ = writeln!(o, "{}", table(&head, rows, &[1, 2, 3, 4, 5, 6, 7]));
    }
    if let Some(d) = &r.dipole_alignment {
        let _ = writeln!(
            o,
            "water dipoles  largest alignment in {}: x = p·E/kT = {:.2e}, ⟨cos θ⟩ = {:.2e} ({})",
            d.part,
            d.x_max,
            d.mean_cos_theta,
            if d.linear { "linear response holds" } else { "beyond linear response" }
        );
    }

    if let Some(m) = &r.mesh_check {
        let _ = writeln!(o, "\nmesh self-check (grids of {} / {} / {} nodes)", m.nodes[0], m.nodes[1], m.nodes[2]);
        let rows = r
            .parts
            .iter()
            .map(|p| {
                let coarser = p.e_max_coarser_grids_kv_per_mm.unwrap_or([f64::NAN; 2]);
                vec![
                    p.name.clone(),
                    sig4(p.e_max_kv_per_mm),
                    sig4(coarser[0]),
                    sig4(coarser[1]),
                    p.e_max_observed_order.map_or_else(|| "—".to_string(), |q| format!("{q:.2}")),
                    opt(p.e_max_error_estimate_pct),
                    if p.e_max_grows_with_refinement { "grows with refinement" } else { "" }.to_string(),
                ]
            })
            .collect();
        let coarse = format!("coarse kV/mm {}", r.values);
        let head = ["part", "E max fine", "medium", &coarse, "order", "error est. %", ""];
        let _ = writeln!(o, "{}", table(&head, rows, &[1, 2, 3, 4, 5]));
    }

    let _ = writeln!(o, "\nelectrodes");
    let unit = r.electrodes.first().map_or("nC", |e| e.charge.unit);
    let rows = r
        .electrodes
        .iter()
        .map(|e| vec![e.name.clone(), e.kind.to_string(), sig4(e.potential_kv), sig4(e.charge.value)])
        .collect();
    let charge_head = format!("charge {unit}");
    let potential_head = format!("potential kV {}", r.values);
    let _ = writeln!(o, "{}", table(&["electrode", "kind", &potential_head, &charge_head], rows, &[2, 3]));

    let _ = writeln!(o);
    if let Some(c) = &r.field_concentration {
        let _ = writeln!(
            o,
            "peak field   {} kV/mm {v} (judged); gap {} mm, uniform-field value {} kV/mm {v}, enhancement factor {}{}",
            sig4(c.e_max_kv_per_mm),
            sig4(c.gap_mm),
            sig4(c.e_uniform_kv_per_mm),
            sig4(c.factor),
            if c.permittivity_contrast_only {
                " (series layers: the factor only reflects their permittivity contrast)"
            } else {
                ""
            }
        );
    }
    if let Some(c) = &r.capacitance {
        let _ = writeln!(o, "capacitance  {} {} (from the electrode charge)", sig4(c.value), c.unit);
    }
    let _ = writeln!(o, "energy       {} {}", sig4(r.energy.value), r.energy.unit);
    if let Some(n) = r.operation.dc_iterations {
        let _ = writeln!(
            o,
            "\nDC conduction (steady state after {n} iterations; capacitive = just after switching on; reversal = just \
             after the polarity reverses, superposition)"
        );
        let range = |v: Option<[f64; 2]>, scale: f64| {
            v.map_or("—".into(), |[a, b]| format!("{} – {}", sig4(a * scale), sig4(b * scale)))
        };
        let rows = r
            .parts
            .iter()
            .map(|p| {
                vec![
                    p.name.clone(),
                    sig4(p.e_max_kv_per_mm),
                    opt(p.e_max_capacitive_kv_per_mm),
                    opt(p.reversal_e_max_kv_per_mm),
                    range(p.temperature_range_c, 1.0),
                    range(p.time_constant_s, 1.0 / 3600.0),
                ]
            })
            .collect();
        let _ = writeln!(
            o,
            "{}",
            table(
                &["part", "E max kV/mm", "capacitive kV/mm", "reversal kV/mm", "T °C", "ε/σ h"],
                rows,
                &[1, 2, 3, 4, 5]
            )
        );
        if !r.interface_charges.is_empty() {
            let rows = r
                .interface_charges
                .iter()
                .map(|i| {
                    vec![
                        format!("{} | {}", i.parts[0], i.parts[1]),
                        sig4(i.charge.value),
                        sig4(i.density_mean_uc_per_m2),
                    ]
                })
                .collect();
            let head = format!("charge {}", r.interface_charges[0].charge.unit);
            let _ = writeln!(o, "{}", table(&["interface", &head, "mean µC/m²"], rows, &[1, 2]));
        }
    }
    if let Some(l) = &r.dielectric_loss {
        let _ = writeln!(o, "losses       {} {} (dielectric and conduction, all parts)", sig4(l.value), l.unit);
        let rows = r
            .parts
            .iter()
            .map(|p| {
                vec![
                    p.name.clone(),
                    opt(p.loss_density_max_w_per_m3),
                    p.loss.as_ref().map_or("—".into(), |q| sig4(q.value)),
                    opt(p.sigma_over_omega_epsilon),
                    p.e_max_phase_deg.map_or("—".into(), |v| format!("{v:.1}")),
                ]
            })
            .collect();
        let head = format!("loss {}", l.unit);
        let _ = writeln!(
            o,
            "{}",
            table(&["part", "loss density max W/m³", &head, "σ/(ωε)", "phase of E max °"], rows, &[1, 2, 3, 4])
        );
    }

    if !r.probes.is_empty() {
        let _ = writeln!(o, "\nprobes");
        let rows = r
            .probes
            .iter()
            .map(|p| {
                vec![
                    p.name.clone(),
                    format!("{}, {}", sig4(p.at_mm[0]), sig4(p.at_mm[1])),
                    p.part.clone(),
                    sig4(p.potential_kv),
                    sig4(p.e_kv_per_mm),
                ]
            })
            .collect();
        let (pk, ek) = (format!("potential kV {v}"), format!("E kV/mm {v}"));
        let _ = writeln!(o, "{}", table(&["probe", "at mm", "in part", &pk, &ek], rows, &[1, 3, 4]));
    }

    if !r.lines.is_empty() {
        let _ = writeln!(o, "\nlines (samples in the CSV of --report)");
        let rows = r
            .lines
            .iter()
            .map(|l| {
                vec![
                    l.name.clone(),
                    format!("{}, {}", sig4(l.from_mm[0]), sig4(l.from_mm[1])),
                    format!("{}, {}", sig4(l.to_mm[0]), sig4(l.to_mm[1])),
                    sig4(l.e_max_kv_per_mm),
                    format!("{}, {}", sig4(l.e_max_at_mm[0]), sig4(l.e_max_at_mm[1])),
                ]
            })
            .collect();
        let head = ["line", "from mm", "to mm", "E max kV/mm", "at mm"];
        let _ = writeln!(o, "{}", table(&head, rows, &[1, 2, 3, 4]));
    }

    let _ = writeln!(o, "\nfindings");
    if r.findings.is_empty() {
        let _ = writeln!(o, "  none");
    }
    for f in &r.findings {
        let sev = match f.severity {
            SeverityOut::Info => "info",
            SeverityOut::Warning => "WARNING",
            SeverityOut::Fail => "FAIL",
        };
        let part = f.part.as_ref().map_or(String::new(), |p| format!(" [{p}]"));
        let accepted = f.accepted.as_ref().map_or(String::new(), |a| format!(" ACCEPTED by {}: {}", a.by, a.reason));
        wrap(&mut o, &format!("  {sev:<8}"), &format!("{}{part}: {}{accepted}", f.code, f.message));
    }
    let _ = writeln!(o, "\ncaution");
    wrap(&mut o, "  ", r.caution);
    o
}

/// Renders the built-in material library.
pub fn render_materials(list: &[MaterialOut]) -> String {
    let mut o = String::new();
    let rows = list
        .iter()
        .map(|m| {
            vec![
                m.name.to_string(),
                m.class.to_string(),
                sig4(m.permittivity),
                format!("{}–{}", m.permittivity_range[0], m.permittivity_range[1]),
                match m.strength_kv_per_mm {
                    Some(s) => format!("{} {}", sig4(s), m.strength_basis),
                    None => "—".to_string(),
                },
                opt(m.strength_thickness_mm),
                m.strength_range_kv_per_mm.map_or_else(|| "—".to_string(), |r| format!("{}–{}", r[0], r[1])),
                opt(m.loss_tangent),
            ]
        })
        .collect();
    let head = ["material", "class", "εr", "εr range", "strength kV/mm", "at mm", "range", "tan δ"];
    let _ = writeln!(o, "{}", table(&head, rows, &[2, 3, 4, 5, 6, 7]));
    let rows = list
        .iter()
        .map(|m| {
            vec![
                m.name.to_string(),
                opt(m.conductivity_s_per_m),
                opt(m.conductivity_temperature_per_k),
                opt(m.conductivity_field_mm_per_kv),
                sig4(m.thermal_conductivity_w_per_m_k),
            ]
        })
        .collect();
    let head = ["material", "σ at 20 °C S/m", "α 1/K", "β mm/kV", "k W/(m·K)"];
    let _ = writeln!(o, "\nconduction (AC losses, DC fields) and heat\n{}", table(&head, rows, &[1, 2, 3, 4]));
    let _ = writeln!(o, "\nsources");
    for m in list {
        wrap(&mut o, &format!("  {:<22}", m.name), m.source);
        wrap(&mut o, &format!("  {:<22}", ""), m.conduction_source);
    }
    let _ = writeln!(o);
    wrap(
        &mut o,
        "",
        "Typical screening values at power frequency and about 20 °C, dry, not design values; each strength is marked rms or peak as measured (solids and liquids with rms power-frequency voltages, gases as peak breakdown fields) and, where the source states it, with its specimen thickness or gap (at mm): use the datasheet of the material you buy, at your thickness, temperature and waveform. The ranges are what is published for each kind of material (from memory, to be verified); a user value outside them is flagged.",
    );
    o
}
