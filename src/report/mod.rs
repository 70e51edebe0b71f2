//! Stage 7: the result model and its renderings (JSON and text).
//!
//! Invariant: this module converts units and words findings, nothing more;
//! every number it shows was computed by `fields` or `assess`.

pub mod diff;
pub mod html;
mod model;
pub mod summary;
pub mod sweep;
mod text;

pub use model::*;
pub(crate) use text::significant;
pub use text::{render_materials, render_text, sig4, verdict_sentence};

use crate::assess::{Assessment, FindingKind, Severity, Verdict};
use crate::case::{Case, ElectrodeKind, Geometry, Mode, Normalisation};
use crate::fields::Fields;
use crate::grid::{Grid, Layout};
use crate::materials::{LIBRARY, Quantity as Value};
use crate::meshcheck::MeshCheck;
use crate::solve::SolveReport;
use crate::units::{to_kv, to_kv_per_mm, to_mm, to_nc, to_pf};

/// The caution carried by every result.
pub const CAUTION: &str = "Screening estimate only: an electrostatic model of the drawn geometry with typical \
material values. Real breakdown strengths vary with thickness, stressed area and volume, temperature, moisture, \
ageing and waveform. Check every design against the applicable codes and standards and have it reviewed by a \
licensed or otherwise qualified engineer. A result from this tool never authorises energising or testing \
equipment.";

/// Everything `build` needs.
pub struct Inputs<'a> {
    /// The case.
    pub case: &'a Case,
    /// The grid.
    pub grid: &'a Grid,
    /// The painted layout.
    pub layout: &'a Layout,
    /// The solve's report.
    pub solve: &'a SolveReport,
    /// The fields.
    pub fields: &'a Fields,
    /// Inception of the gas parts.
    pub discharge: &'a [crate::discharge::GasInception],
    /// The mesh self-check, if it ran.
    pub mesh_check: Option<&'a MeshCheck>,
    /// The assessment.
    pub assessment: &'a Assessment,
    /// The dry-reference solve, when there was one.
    pub reference_solve: Option<&'a SolveReport>,
    /// AC cases: the losses of every region.
    pub losses: Option<&'a crate::fields::Losses>,
    /// AC cases: the regions' loss coefficients.
    pub ac: Option<&'a crate::coefficients::AcLosses>,
    /// The AC field was solved with its losses (complex).
    pub lossy: bool,
    /// DC cases: reversal and capacitive peaks, temperatures, time constants.
    pub dc: Option<&'a crate::conduction::DcResults>,
    /// AC with losses: the phase of each region's peak field, degrees.
    pub phase_deg: Option<&'a [f64]>,
}

fn verdict(v: Verdict) -> VerdictOut {
    match v {
        Verdict::Pass => VerdictOut::Pass,
        Verdict::Review => VerdictOut::Review,
        Verdict::Fail => VerdictOut::Fail,
    }
}

/// Units of extensive results: (capacitance, charge, energy).
/// The unit of an extensive loss.
fn loss_unit(n: Normalisation) -> &'static str {
    match n {
        Normalisation::PerMetreDepth | Normalisation::PerMetreAxial { .. } => "W/m",
        Normalisation::Whole => "W",
    }
}

fn extensive_units(n: Normalisation) -> (&'static str, &'static str, &'static str, &'static str) {
    match n {
        Normalisation::PerMetreDepth => ("pF/m", "nC/m", "J/m", "per metre of depth"),
        Normalisation::PerMetreAxial { .. } => ("pF/m", "nC/m", "J/m", "per metre of axial length"),
        Normalisation::Whole => ("pF", "nC", "J", "for the whole body of revolution"),
    }
}

/// Three significant digits for numbers inside sentences.
fn g3(v: f64) -> String {
    text::significant(v, 3)
}

/// Words a finding: what it means and what to do next. Fields and
/// strengths carry the case's convention `values` (rms or peak).
pub fn message(kind: &FindingKind, values: crate::units::Values) -> String {
    let field = |v: f64| format!("{} kV/mm {}", g3(to_kv_per_mm(v)), values.name());
    match kind {
        FindingKind::AboveBreakdown { e_max, strength } => format!(
            "highest field {} is above the typical short-term strength {}: expect breakdown. Thicken the \
             insulation, lower the local stress (round edges, add grading) or use a stronger material, then re-check.",
            field(*e_max),
            field(*strength)
        ),
        FindingKind::GasAboveBreakdown { e_max, strength } => format!(
            "highest field {} is above the breakdown field {} of this gas: expect discharges (partial \
             discharges where solid insulation encloses the gas, flashover where it bridges electrodes). Remove or \
             fill the gas space, or lower its stress.",
            field(*e_max),
            field(*strength)
        ),
        FindingKind::BelowSafetyFactor { margin, required } => format!(
            "margin {} is below the required safety factor {}: check the design stress against the datasheet \
             strength at this thickness and the applicable standard.",
            g3(*margin),
            g3(*required)
        ),
        FindingKind::NoStrength { material } => format!(
            "{material} has no breakdown strength (it is not an insulator here), so its margin cannot be assessed; \
             the stress it pushes onto neighbouring parts is assessed in those parts."
        ),
        FindingKind::GenericMaterial { material, parts } => format!(
            "{material} (in {}) uses generic library values: put the datasheet values under `materials:` with a \
             `source:`.",
            parts.join(", ")
        ),
        FindingKind::CapacitanceMismatch { from_charge, from_energy } => format!(
            "capacitance from charge ({} pF) and from field energy ({} pF) differ by {} %: the grid is too coarse \
             somewhere, often at sharp edges; lower grid.max_step or raise grid.cells_across.",
            g3(to_pf(*from_charge)),
            g3(to_pf(*from_energy)),
            g3(100.0 * ((from_energy - from_charge) / from_charge).abs())
        ),
        FindingKind::NoPotentialDifference => {
            "all fixed electrodes are at one potential, so there is no field to assess; check the electrode \
             potentials."
                .to_string()
        }
        FindingKind::CoarseGrid { cells_across } => format!(
            "only {cells_across} grid cell(s) across this part, so its peak field is uncertain; lower grid.max_step \
             or grid.min_step, or raise grid.cells_across."
        ),
        FindingKind::PartHidden => {
            "the part is completely covered by later parts or electrodes and owns no cells; check the part order."
                .to_string()
        }
        FindingKind::SingularPeak { e_max, point: Some(d), .. } => {
            let lambda = |v: Option<f64>| v.map_or("–".to_string(), g3);
            let at = |k: usize| d.e_at[k].map_or("–".to_string(), &field);
            format!(
                "the highest field sits at {} at ({}, {}) mm, where the drawn geometry has no finite field \
                 (|E| ~ r^(λ−1); λ = {} for the drawn wedges, {} fitted from this part's field at 0.1 and 1 mm): its \
                 peak ({} → {} → {} kV/mm {} on the self-check's grids, coarsest first) is a property of the drawing, \
                 not of the design. The field is {} at 0.1 mm and {} at 1 mm from the point; the margin is judged on \
                 the peak farther than 0.1 mm, {}. {} Model the real radius (a fillet or a rounded profile) and check \
                 again.",
                match d.kind {
                    crate::grid::SingularKind::ElectrodeEdge =>
                        format!("a sharp edge, corner or foil end of electrode {}", d.electrode),
                    crate::grid::SingularKind::TriplePoint =>
                        format!("a dielectric triple point (this part, other insulation and electrode {})", d.electrode),
                },
                g3(to_mm(d.at[0])),
                g3(to_mm(d.at[1])),
                lambda(d.exponent_drawn),
                lambda(d.exponent_fitted),
                g3(to_kv_per_mm(e_max[2])),
                g3(to_kv_per_mm(e_max[1])),
                g3(to_kv_per_mm(e_max[0])),
                values.name(),
                at(0),
                at(1),
                field(d.e_judged),
                match d.radius {
                    Some(r) => format!(
                        "An edge radius of about {} mm brings the peak there to the strength over the safety factor.",
                        g3(to_mm(r))
                    ),
                    None => "No radius estimate (no strength, or no singular exponent).".to_string(),
                },
            )
        }
        FindingKind::SingularPeak { e_max, at_edge, point: None } => format!(
            "{}, so the number depends on the grid ({} → {} → {} kV/mm {} from the coarsest to the finest grid of the \
             self-check), not on the design. {} Until then this part cannot pass.",
            if *at_edge {
                "the highest field sits at a sharp edge, corner or foil end of the drawn electrodes, where an ideal \
                 edge has no finite field"
            } else {
                "the highest field keeps growing as the grid is refined (a sharp corner of the drawn geometry, or a \
                 curved boundary resolved as steps)"
            },
            g3(to_kv_per_mm(e_max[2])),
            g3(to_kv_per_mm(e_max[1])),
            g3(to_kv_per_mm(e_max[0])),
            values.name(),
            if *at_edge {
                "Model the real edge radius (or a rounded profile) and check again."
            } else {
                "Round the corner as built, or refine the grid there, and check again."
            }
        ),
        FindingKind::MeshSensitive { estimate } => format!(
            "the estimated discretisation error of the peak field this part is judged on is {} % (above 2 %): refine the grid \
             (grid.max_step, grid.cells_across) until it settles.",
            g3(100.0 * estimate)
        ),
        FindingKind::ResultMeshSensitive { what, estimate } => format!(
            "the estimated discretisation error of {} is {} % (above 2 %, from the self-check's grids): refine the \
             grid there (grid.max_step, grid.cells_across, grid.boxes) until it settles.",
            what,
            g3(100.0 * estimate)
        ),
        FindingKind::MeshUnbracketed => {
            "the part has no cells on a coarser grid, so its highest field could not be checked for grid \
             dependence; refine the grid (grid.max_step, grid.cells_across) so that it is resolved on grids four \
             times coarser."
                .to_string()
        }
        FindingKind::ValueOutOfRange { material, detail } => {
            let (what, value, lo, hi) = match detail.quantity {
                Value::Permittivity => ("relative permittivity", detail.value, detail.range.0, detail.range.1),
                Value::Strength => (
                    "strength (kV/mm, as measured)",
                    to_kv_per_mm(detail.value),
                    to_kv_per_mm(detail.range.0),
                    to_kv_per_mm(detail.range.1),
                ),
            };
            format!(
                "{material}: {what} {} is outside the range published for {} ({} to {}); check the value and the \
                 conditions it was measured under before relying on this result.",
                g3(value),
                detail.base,
                g3(lo),
                g3(hi)
            )
        }
        FindingKind::ImplausibleInput(note) => {
            use crate::case::Magnitude;
            let (what, unit, scale) = match note.quantity {
                Magnitude::Length => ("length", "mm", 1e3),
                Magnitude::Potential => ("potential", "kV", 1e-3),
                Magnitude::PotentialDifference => ("largest potential difference", "kV", 1e-3),
                Magnitude::Strength => ("breakdown strength", "kV/mm", 1e-6),
                Magnitude::Permittivity => ("relative permittivity", "", 1.0),
            };
            let side = if note.above { "above" } else { "below" };
            let line = note.line.map(|l| format!(" (line {l})")).unwrap_or_default();
            let with_unit = |v: f64| if unit.is_empty() { g3(v * scale) } else { format!("{} {unit}", g3(v * scale)) };
            format!(
                "{}{line}: {what} {} is {side} {}, unusual for insulation work; check the value and its unit (lengths \
                 in mm, potentials in kV, strengths in kV/mm).",
                note.key,
                with_unit(note.value),
                with_unit(note.bound)
            )
        }
        FindingKind::PdAtWorkingLevel { inception, working, criterion } => format!(
            "partial discharge starts at {} kV {} ({} criterion along the critical field line), at or below the \
             working level {} kV {}: expect discharges in service, which erode the insulation around this gas. Fill \
             or remove the gas space, shield or round the electrode edge, or lower its stress; then confirm with a \
             partial-discharge test (IEC 60270).",
            g3(to_kv(*inception)),
            values.name(),
            criterion.name(),
            g3(to_kv(*working)),
            values.name()
        ),
        FindingKind::PdMarginThin { inception, ratio, required } => format!(
            "partial discharge starts at {} kV {}, only {} times the working level (the case asks for {}, \
             `limits.pd_inception_margin`): overvoltages, lower pressure, higher temperature or a rougher surface \
             can start discharges; add margin and confirm with a partial-discharge test (IEC 60270).",
            g3(to_kv(*inception)),
            values.name(),
            g3(*ratio),
            g3(*required)
        ),
        FindingKind::GasMicroGap { reduced_length_pa_m, minimum_pa_m, found } => format!(
            "the critical gap is short: density × length {} Pa·m is {} the Paschen minimum's {} Pa·m{}. There, field \
             emission and surface effects rather than gas ionisation can start discharges, so the level from the \
             gas criteria is not a safe bound; avoid such gaps at stressed interfaces (bond, impregnate or \
             fill them) and confirm by test.",
            g3(*reduced_length_pa_m),
            if *reduced_length_pa_m < *minimum_pa_m { "below" } else { "near" },
            g3(*minimum_pa_m),
            if *found { "" } else { ", too short for gas ionisation to reach either criterion at any level" }
        ),
        FindingKind::TownsendOnly { reduced_length_pa_m } => format!(
            "this gas has Townsend constants only, and its critical line (density × length {} Pa·m) is long enough \
             that Townsend's criterion with constant coefficients reads optimistic (for air it is 17 % high at 1 \
             cm); give the gas `streamer:` constants from a published source.",
            g3(*reduced_length_pa_m)
        ),
        FindingKind::PdGridDependent { levels } => {
            let kv = |v: Option<f64>| v.map_or_else(|| "none".to_string(), |v| g3(to_kv(v)));
            format!(
                "the inception level depends on the grid ({} → {} → {} kV {} from the coarsest to the finest grid of \
                 the self-check): the critical line runs where the grid does not resolve the field, typically at a \
                 triple junction or a sharp point of the drawing, where the real level is set by the micro-geometry. \
                 Model the real radius or contact, refine the grid there, or treat the junction as a discharge site.",
                kv(levels[2]),
                kv(levels[1]),
                kv(levels[0]),
                values.name()
            )
        }
        FindingKind::SurfaceStress { parts, e_t_max, at, limit } => format!(
            "the field along the surface between {} and {} reaches {} tangentially at ({} mm, {} mm), above the \
             case's limit {}: surface discharges and tracking start there well below either side's bulk strength. \
             Lengthen or shape the surface (ribs, sheds, grading), keep it clean and dry, or lower its stress.",
            parts[0],
            parts[1],
            field(*e_t_max),
            g3(to_mm(at[0])),
            g3(to_mm(at[1])),
            field(*limit)
        ),
        FindingKind::ResistiveCapacitiveCrossover { ratio } => format!(
            "conduction and displacement currents are comparable here (σ/(ωε) = {}): the part's share of the stress \
             depends on the frequency and on its conductivity, which scatters by orders of magnitude and rises \
             steeply with temperature and moisture. Repeat the check with the conductivity ten times lower and \
             higher, or measure it at the service temperature.",
            g3(*ratio)
        ),
        FindingKind::ConductionDominated { ratio } => format!(
            "the part conducts far more than it polarises at this frequency (σ/(ωε) = {}): it carries little of \
             the stress, sheds it onto its neighbours, and its conduction loss heats it.",
            g3(*ratio)
        ),
        FindingKind::FieldInversion { resistive_fraction, capacitive_fraction } => format!(
            "under DC the peak stress sits where the potential is {} % of the way up, against {} % in the capacitive \
             field: the conductivities (temperature, field) moved the stress to the other side of the insulation \
             (field inversion). Check the low-voltage side's interfaces and the whole temperature range of service.",
            g3(100.0 * resistive_fraction),
            g3(100.0 * capacitive_fraction)
        ),
        FindingKind::ReversalStress { e_reversal, strength } => format!(
            "just after a polarity reversal the field reaches {} here (the resistive field with twice the \
             capacitive change superposed), against a strength of {} and the safety factor; this matters where the \
             system reverses polarity (line-commutated converters).",
            field(*e_reversal),
            field(*strength)
        ),
        FindingKind::DcStrengthMissing { material } => format!(
            "{material} has no DC strength, so its short-term AC strength was used as a peak value; DC strengths \
             are usually higher but fall with temperature and space charge. Give the datasheet value as \
             `dc_strength_kv_per_mm` under `materials:`."
        ),
        FindingKind::WaiverUnmatched { waiver, code } => format!(
            "waiver {} of the case (code `{}`) matches no finding of this result: the finding is gone, or the code \
             or part is misspelt. Remove or correct the waiver.",
            waiver + 1,
            code
        ),
        FindingKind::WaiverRefused { waiver, code } => format!(
            "waiver {} of the case names `{}`, a failing finding: a typical strength exceeded or discharge at the \
             working level cannot be accepted by a waiver; it stays failing.",
            waiver + 1,
            code
        ),
        FindingKind::ImpulseStrengthMissing { material } => format!(
            "{material} has no lightning-impulse strength, so its short-term (AC) strength was used as a peak value; \
             impulse strengths are usually higher, so the margin is conservative. Give the datasheet value as \
             `impulse_strength_kv_per_mm` (peak) under `materials:`."
        ),
        FindingKind::TripleJunction { junction: j, electrode, solid } => format!(
            "electrode {electrode}, solid {solid} and this {} meet at ({} mm, {} mm); {}",
            if j.fluid_is_gas { "gas" } else { "liquid" },
            g3(to_mm(j.at[0])),
            g3(to_mm(j.at[1])),
            match j.exponent {
                Some(l) if j.enhanced() => format!(
                    "the field rises toward it (local exponent λ ≈ {}{}, |E| ~ r^(λ−1); {} kV/mm {} two cells from it against \
                     {} kV/mm {} eight cells away): a classic discharge site. Its peak is a property of the drawing (the \
                     drawn contact is perfectly sharp). Embed or recess the electrode edge, put a conductive or \
                     semiconductive layer at the contact, or fill the wedge, and confirm by test.",
                    g3(l),
                    j.exponent_drawn.map_or(String::new(), |d| format!(
                        " from the field; λ = {} for the drawn wedge angles and permittivities, after Meixner 1972",
                        g3(d)
                    )),
                    g3(to_kv_per_mm(j.e_near)),
                    values.name(),
                    g3(to_kv_per_mm(j.e_far)),
                    values.name()
                ),
                Some(l) => format!(
                    "the field is not enhanced there (local exponent λ ≈ {}); keep the contact free of gaps, which \
                     would make it a discharge site.",
                    g3(l)
                ),
                None => "there is no field there.".to_string(),
            }
        ),
        FindingKind::FieldLineTruncated => {
            "the critical field line was cut short at the tracing limit (100 000 points each way), so its \
             ionisation integral is incomplete and the inception level is an upper bound; coarsen the grid in the \
             gas (grid.max_step) or split the gas part, and check again."
                .to_string()
        }
        FindingKind::OperationNotStated => {
            "the case gives no `operation:`, so its potentials were read as instantaneous (peak) values of a static \
             field and every field and strength here is a peak value. For power-frequency AC with voltages stated \
             rms, write `operation: { mode: ac, values: rms }`."
                .to_string()
        }
        FindingKind::StressShift { e_max, e_max_reference, from, to, causes } => format!(
            "{} ({}) moved stress onto this part: its highest field is {} against {} with every part dry at 20 °C \
             ({:+.1} %), and its verdict worsens from {} to {}. Dry those parts, keep them cool, or give this part \
             the margin for their wet or hot state.",
            causes.join(", "),
            if causes.len() == 1 { "wet or hot" } else { "wet or hot parts" },
            field(*e_max),
            field(*e_max_reference),
            100.0 * (e_max - e_max_reference) / e_max_reference,
            verdict_word(*from),
            verdict_word(*to)
        ),
        FindingKind::DryStrengthUsed { temperature_c, water_volume_fraction, holds_for } => {
            let now = if *water_volume_fraction > 0.0 {
                format!("{} °C with {} vol% water", g3(*temperature_c), g3(100.0 * water_volume_fraction))
            } else {
                format!("{} °C", g3(*temperature_c))
            };
            let then = if holds_for.water_volume_fraction > 0.0 {
                format!(
                    "{} °C and {} vol% water",
                    g3(holds_for.temperature_c),
                    g3(100.0 * holds_for.water_volume_fraction)
                )
            } else {
                format!("dry at {} °C", g3(holds_for.temperature_c))
            };
            format!(
                "the part runs at {now}, but its strength value holds {then}; strengths fall with water and \
                 temperature (polyethylene's roughly halves from 20 to 90 °C, epoxy's DC strength falls with absorbed \
                 water; from memory), so the margin is optimistic. Give the datasheet strength at these conditions \
                 under `materials:` with `strength_at:`."
            )
        }
        FindingKind::MixingRuleRange { rule, fraction, limit } => format!(
            "{} vol% water is beyond what the {} rule describes (up to about {} vol%): treat the permittivity as \
             uncertain, and the part as wet through rather than holding absorbed water.",
            g3(100.0 * fraction),
            rule.name(),
            g3(100.0 * limit)
        ),
        FindingKind::OutsideModelRange { model, temperature_c, range } => format!(
            "{} °C is outside {} to {} °C, where the permittivity model of {model} holds; the value at the nearest \
             end (or the fit's extrapolation) was used.",
            g3(*temperature_c),
            g3(range.0),
            g3(range.1)
        ),
        FindingKind::DipoleSaturation(d) => format!(
            "the field turns the absorbed water's dipoles far enough (x = p·E/kT = {}, ⟨cos θ⟩ = {}) that the \
             polarisation is no longer linear in the field; the permittivity used is the low-field value.",
            g3(d.x),
            g3(d.cos_theta)
        ),
        FindingKind::MeshCheckFailed => {
            "the coarser grids of the mesh self-check could not be solved, so no peak field was checked for grid \
             dependence; review the grid settings."
                .to_string()
        }
    }
}

fn verdict_word(v: Verdict) -> &'static str {
    match v {
        Verdict::Pass => "pass",
        Verdict::Review => "review",
        Verdict::Fail => "fail",
    }
}

/// Builds the result model. `seconds` is the solve's wall time, measured by
/// the caller.
pub fn build(inp: &Inputs, seconds: f64) -> CheckReport {
    let Inputs {
        case,
        grid,
        layout,
        solve,
        fields,
        discharge,
        mesh_check,
        assessment,
        reference_solve,
        losses,
        ac,
        lossy,
        dc,
        phase_deg,
    } = *inp;
    let loss_unit = loss_unit(case.normalisation);
    let (c_unit, q_unit, w_unit, per) = extensive_units(case.normalisation);
    let (min_step, max_step) = grid.step_range();
    let parts = assessment
        .parts
        .iter()
        .map(|p| {
            let region = &layout.regions[p.region];
            let f = &fields.regions[p.region];
            let m = &case.materials[region.material];
            let check = mesh_check.map(|c| &c.regions[p.region]);
            let gas = p.inception.map(|k| &discharge[k]);
            PartOut {
                name: region.name.clone(),
                material: m.name.clone(),
                permittivity: p.permittivity,
                permittivity_reference: p.permittivity_reference,
                temperature_c: p.temperature_c,
                water_volume_pct: p.water_volume_fraction.map(|w| 100.0 * w),
                e_max_kv_per_mm: to_kv_per_mm(f.e_max),
                e_max_reference_kv_per_mm: p.e_max_reference.map(to_kv_per_mm),
                e_max_change_pct: p.e_max_change.map(|c| 100.0 * c),
                e_max_at_mm: f.e_max_at.map(to_mm),
                e_max_judged_kv_per_mm: to_kv_per_mm(f.e_judged),
                e_max_judged_at_mm: f.e_judged_at.map(to_mm),
                e_max_judged_error_estimate_pct: mesh_check
                    .and_then(|c| c.judged.get(p.region))
                    .and_then(|c| c.error_estimate)
                    .map(|e| 100.0 * e),
                e_mean_kv_per_mm: to_kv_per_mm(f.e_mean),
                w_max_j_per_m3: p.w_max,
                w_pol_max_j_per_m3: p.w_pol_max,
                strength_kv_per_mm: p.strength.map(to_kv_per_mm),
                margin: p.margin,
                pd_inception_kv: p.pd_inception.map(to_kv),
                pd_inception_at_mm: gas
                    .filter(|g| g.scale.is_some())
                    .and_then(|g| g.line.points.first())
                    .map(|a| a.map(to_mm)),
                pd_criterion: gas.and_then(|g| g.criterion).map(|c| c.name()),
                pd_line_length_mm: gas.filter(|g| g.scale.is_some()).map(|g| to_mm(g.line.length())),
                point_field_margin: p.point_margin,
                allowable_kv: p.allowable.map(to_kv),
                pd_line_mm: gas.map(|g| g.line.points.iter().map(|a| a.map(to_mm)).collect()).unwrap_or_default(),
                verdict: verdict(p.verdict),
                e_max_error_estimate_pct: check.and_then(|c| c.error_estimate).map(|e| 100.0 * e),
                e_max_coarser_grids_kv_per_mm: check.map(|c| [to_kv_per_mm(c.e_max[1]), to_kv_per_mm(c.e_max[2])]),
                e_max_observed_order: check.and_then(|c| c.order),
                e_max_grows_with_refinement: check.is_some_and(|c| c.growing),
                loss_density_max_w_per_m3: losses.map(|l| l.regions[p.region].density_max),
                loss: losses.map(|l| Quantity { value: l.regions[p.region].total, unit: loss_unit }),
                sigma_over_omega_epsilon: ac.map(|a| a.conduction_ratio[p.region]),
                e_max_phase_deg: phase_deg.map(|v| v[p.region]),
                temperature_range_c: dc.and_then(|d| d.temperature[p.region]),
                pd_inception_error_estimate_pct: mesh_check
                    .filter(|_| p.inception.is_some())
                    .and_then(|c| c.inception_estimate(p.region))
                    .and_then(|c| c.error_estimate)
                    .map(|e| 100.0 * e),
                e_max_capacitive_kv_per_mm: dc.map(|d| to_kv_per_mm(d.capacitive_e_max[p.region])),
                reversal_e_max_kv_per_mm: dc.map(|d| to_kv_per_mm(d.reversal_e_max[p.region])),
                time_constant_s: dc.and_then(|d| d.time_constant[p.region]),
            }
        })
        .collect();
    let electrodes = layout
        .electrodes
        .iter()
        .zip(&fields.electrodes)
        .map(|(e, f)| ElectrodeOut {
            name: e.name.clone(),
            kind: match e.kind {
                ElectrodeKind::Fixed { .. } => "fixed",
                ElectrodeKind::Floating => "floating",
            },
            potential_kv: to_kv(f.potential),
            charge: Quantity { value: to_nc(f.charge), unit: q_unit },
        })
        .collect();
    let probes = case
        .probes
        .iter()
        .zip(&fields.probes)
        .enumerate()
        .map(|(k, (p, f))| ProbeOut {
            name: p.name.clone(),
            at_mm: p.at.map(to_mm),
            part: f.part.clone(),
            potential_kv: to_kv(f.potential),
            e_kv_per_mm: to_kv_per_mm(f.e),
            e_error_estimate_pct: mesh_check
                .and_then(|c| c.probes.get(k))
                .and_then(|c| c.error_estimate)
                .map(|e| 100.0 * e),
        })
        .collect();
    let lines = case
        .lines
        .iter()
        .zip(&fields.lines)
        .enumerate()
        .map(|(k, (l, f))| {
            let mut out = line_out(l, f, case.operation.values);
            out.e_max_error_estimate_pct =
                mesh_check.and_then(|c| c.lines.get(k)).and_then(|c| c.error_estimate).map(|e| 100.0 * e);
            out
        })
        .collect();
    let findings = assessment
        .findings
        .iter()
        .zip(&assessment.accepted)
        .map(|(f, a)| FindingOut {
            accepted: a
                .map(|w| model::AcceptedOut { reason: case.waivers[w].reason.clone(), by: case.waivers[w].by.clone() }),
            code: f.kind.code(),
            severity: match f.kind.severity() {
                Severity::Info => SeverityOut::Info,
                Severity::Warning => SeverityOut::Warning,
                Severity::Fail => SeverityOut::Fail,
            },
            part: f.part.clone(),
            message: message(&f.kind, case.operation.values),
        })
        .collect();
    CheckReport {
        verdict: verdict(assessment.verdict),
        title: case.title.clone(),
        values: case.operation.values.name(),
        geometry: match case.geometry {
            Geometry::Planar => "planar",
            Geometry::Axisymmetric => "axisymmetric",
        },
        operation: OperationOut {
            mode: match case.operation.mode {
                Mode::Static => "static",
                Mode::Ac => "ac",
                Mode::Impulse => "impulse",
                Mode::Dc => "dc",
            },
            frequency_hz: (case.operation.mode == Mode::Ac).then_some(case.operation.frequency_hz),
            values: case.operation.values.name(),
            stated: case.operation.stated,
            field_with_losses: (case.operation.mode == Mode::Ac).then_some(lossy),
            dc_iterations: dc.map(|d| d.iterations),
        },
        environment: EnvironmentOut {
            temperature_c: case.environment.temperature_c,
            pressure_kpa: case.environment.pressure_pa * 1e-3,
        },
        reference: reference_solve.map(|r| ReferenceOut {
            temperature_c: crate::materials::REFERENCE_TEMPERATURE_C,
            method: r.method.clone(),
            iterations: r.iterations,
            relative_residual: r.relative_residual,
        }),
        dipole_alignment: assessment.dipole.map(|d| DipoleOut {
            part: layout.regions[d.region].name.clone(),
            x_max: d.x,
            mean_cos_theta: d.cos_theta,
            linear: d.x <= crate::assess::DIPOLE_LINEAR_LIMIT,
        }),
        results_per: per,
        grid: GridOut {
            nodes: grid.nodes(),
            nodes_x: grid.nx(),
            nodes_y: grid.ny(),
            min_step_mm: to_mm(min_step),
            max_step_mm: to_mm(max_step),
        },
        solve: SolveOut {
            method: solve.method.clone(),
            iterations: solve.iterations,
            relative_residual: solve.relative_residual,
            unknowns: solve.unknowns,
            seconds,
        },
        capacitance: assessment.capacitance.map(|c| Quantity { value: to_pf(c.from_charge), unit: c_unit }),
        energy: Quantity { value: fields.energy, unit: w_unit },
        dielectric_loss: losses.map(|l| Quantity { value: l.total, unit: loss_unit }),
        energy_error_estimate_pct: mesh_check.and_then(|c| c.energy.error_estimate).map(|e| 100.0 * e),
        field_concentration: assessment.concentration.map(|c| ConcentrationOut {
            e_max_kv_per_mm: to_kv_per_mm(c.e_max),
            gap_mm: to_mm(c.gap),
            e_uniform_kv_per_mm: to_kv_per_mm(c.e_uniform),
            factor: c.factor,
            permittivity_contrast_only: c.permittivity_contrast_only,
        }),
        mesh_check: mesh_check.map(|c| MeshCheckOut { nodes: c.nodes }),
        singular_points: fields
            .singular
            .iter()
            .zip(&assessment.singular)
            .enumerate()
            .map(|(k, (s, j))| model::SingularPointOut {
                at_mm: s.point.at.map(to_mm),
                kind: match s.point.kind {
                    crate::grid::SingularKind::ElectrodeEdge => "electrode-edge",
                    crate::grid::SingularKind::TriplePoint => "triple-point",
                },
                electrode: layout.electrodes[s.point.electrode].name.clone(),
                parts: s.regions.iter().map(|&r| layout.regions[r].name.clone()).collect(),
                exponent_drawn: s.exponent_drawn,
                exponent_fitted: s.exponent_fitted,
                distances_mm: crate::fields::SINGULAR_DISTANCES.map(to_mm),
                e_at_distances_kv_per_mm: s.e_at.map(|v| v.map(|v| to_kv_per_mm(v.e))),
                e_at_distances_error_estimate_pct: [0, 1].map(|d| {
                    mesh_check.and_then(|c| c.singular.get(k)).and_then(|c| c[d].error_estimate).map(|e| 100.0 * e)
                }),
                radius_to_allowable_mm: j.radius.map(to_mm),
            })
            .collect(),
        surfaces: fields
            .surfaces
            .iter()
            .map(|s| SurfaceOut {
                parts: s.regions.map(|r| layout.regions[r].name.clone()),
                e_tangential_max_kv_per_mm: to_kv_per_mm(s.e_t_max),
                at_mm: s.at.map(to_mm),
            })
            .collect(),
        interface_charges: dc
            .map(|d| {
                d.interfaces
                    .iter()
                    .map(|i| model::InterfaceChargeOut {
                        parts: i.regions.map(|r| layout.regions[r].name.clone()),
                        charge: Quantity { value: to_nc(i.charge), unit: q_unit },
                        density_mean_uc_per_m2: crate::units::to_uc(i.density_mean),
                    })
                    .collect()
            })
            .unwrap_or_default(),
        surface_tangential_limit_kv_per_mm: case.surface_tangential_limit.map(to_kv_per_mm),
        pd_inception_kv: assessment.pd_inception.map(to_kv),
        allowable_kv: assessment.allowable.map(|a| to_kv(a.level)),
        allowable_limited_by: assessment.allowable.map(|a| layout.regions[a.region].name.clone()),
        allowable_bisection_tolerance_pct: assessment.allowable.and_then(|a| a.bisection_tolerance).map(|t| 100.0 * t),
        allowable_error_estimate_pct: assessment.allowable.and_then(|a| {
            let c = mesh_check?;
            let gas = assessment.parts.iter().find(|p| p.region == a.region)?.inception.is_some();
            let estimate = if gas { c.inception_estimate(a.region)? } else { c.judged.get(a.region)?.clone() };
            estimate.error_estimate.map(|e| 100.0 * e)
        }),
        pd_inception_margin: case.pd_inception_margin,
        parts,
        electrodes,
        probes,
        lines,
        findings,
        caution: CAUTION,
        safety_factor: case.safety_factor,
        format_version: RESULT_FORMAT_VERSION,
        hvstack_version: env!("CARGO_PKG_VERSION"),
        case_sha256: case.source_sha256.clone(),
    }
}

/// Rounds a position in mm to 1e-9 mm, dropping the float noise of
/// m → mm conversion (3.4650000000000007 → 3.465).
fn clean(mm: f64) -> f64 {
    (mm * 1e9).round() / 1e9
}

fn line_out(line: &crate::case::Line, field: &crate::fields::LineField, values: crate::units::Values) -> LineOut {
    let samples: Vec<LineSampleOut> = field
        .samples
        .iter()
        .map(|s| LineSampleOut {
            distance_mm: clean(to_mm(s.distance)),
            x_mm: clean(to_mm(s.at[0])),
            y_mm: clean(to_mm(s.at[1])),
            potential_kv: to_kv(s.potential),
            e_kv_per_mm: to_kv_per_mm(s.e[0].hypot(s.e[1])),
            e_x_kv_per_mm: to_kv_per_mm(s.e[0]),
            e_y_kv_per_mm: to_kv_per_mm(s.e[1]),
            part: s.part.clone(),
            values: values.name(),
        })
        .collect();
    let peak = field.peak.map(|k| &samples[k]);
    LineOut {
        name: line.name.clone(),
        from_mm: line.from.map(to_mm),
        to_mm: line.to.map(to_mm),
        points: line.points,
        e_max_kv_per_mm: peak.map_or(0.0, |p| p.e_kv_per_mm),
        e_max_at_mm: peak.map_or(line.from.map(to_mm), |p| [p.x_mm, p.y_mm]),
        e_max_error_estimate_pct: None,
        samples,
    }
}

/// The samples of a line as CSV (header row, then one row per sample).
pub fn line_csv(line: &LineOut) -> Result<Vec<u8>, csv::Error> {
    let mut w = csv::Writer::from_writer(Vec::new());
    for s in &line.samples {
        w.serialize(s)?;
    }
    w.into_inner().map_err(|e| e.into_error().into())
}

/// The built-in library in report units.
pub fn materials() -> Vec<MaterialOut> {
    LIBRARY
        .iter()
        .map(|e| MaterialOut {
            name: e.name,
            class: e.class.name(),
            permittivity: e.permittivity,
            strength_kv_per_mm: e.strength_kv_per_mm,
            strength_basis: e.strength_basis.name(),
            strength_thickness_mm: e.strength_thickness_mm,
            density_kg_per_m3: e.density_kg_per_m3,
            loss_tangent: e.loss_tangent,
            source: e.source,
            permittivity_range: [e.permittivity_range.0, e.permittivity_range.1],
            strength_range_kv_per_mm: e.strength_range.map(|r| [r.0, r.1]),
            conductivity_s_per_m: e.conduction.map(|c| c.sigma_s_per_m),
            conductivity_temperature_per_k: e.conduction.map(|c| c.temperature_per_k),
            conductivity_field_mm_per_kv: e.conduction.map(|c| c.field_mm_per_kv),
            thermal_conductivity_w_per_m_k: e.thermal_conductivity_w_per_m_k,
            conduction_source: e.conduction_source,
        })
        .collect()
}
