//! Stage 6: margins, verdicts and findings. Pure judgement on SI values; no
//! text is produced here (`report` words the findings).
//!
//! * margin = typical breakdown strength / peak field of the part;
//! * part verdict: fail if margin < 1, review if margin < safety factor (or
//!   the material has no strength value), else pass;
//! * case verdict: the worst part verdict, raised to review by any warning
//!   finding and to fail by any fail finding.
//!
//! Findings come from rules, one function per finding family: per part
//! `gas_rule` and `inception_grid_rule` (gas parts with a discharge model),
//! `strength_rule` (the others), `mesh_rule`, `state_findings`; per case
//! `stress_shifts`, `surface_rule`, `material_rules`, and the junction,
//! operation, implausible-input and potential checks. A new mode adds its
//! rules here rather than branches in them.

use crate::case::{Case, ElectrodeKind};
use crate::fields::Fields;
use crate::grid::Layout;
use crate::materials::MaterialClass;
use crate::meshcheck::MeshCheck;

/// Parts thinner than this many cells get a coarse-grid finding.
pub const MIN_CELLS_ACROSS: usize = 3;
/// Largest estimated discretisation error of a part's peak field before a
/// finding is raised (issue contract: 2 %).
pub const MESH_ERROR_LIMIT: f64 = 0.02;
/// Largest relative difference tolerated between the charge and energy
/// capacitances before a finding is raised.
pub const CAPACITANCE_TOLERANCE: f64 = 0.01;

/// Outcome of a check, ordered from best to worst.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Verdict {
    /// Every margin met, nothing flagged.
    Pass,
    /// Something needs an engineer's look.
    Review,
    /// A typical breakdown strength is exceeded.
    Fail,
}

/// Weight of a finding.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Severity {
    /// For information; does not change the verdict.
    Info,
    /// Makes the verdict at least review.
    Warning,
    /// Makes the verdict fail.
    Fail,
}

/// What was found, with the values behind it (SI).
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum FindingKind {
    /// A solid or liquid part's peak field exceeds its typical strength.
    AboveBreakdown {
        /// Peak field, V/m.
        e_max: f64,
        /// Typical strength, V/m.
        strength: f64,
    },
    /// A gas part's peak field exceeds its breakdown field.
    GasAboveBreakdown {
        /// Peak field, V/m.
        e_max: f64,
        /// Breakdown field, V/m.
        strength: f64,
    },
    /// Margin below the required safety factor.
    BelowSafetyFactor {
        /// Strength / peak field.
        margin: f64,
        /// Required ratio.
        required: f64,
    },
    /// The material has no strength value, so no margin.
    NoStrength {
        /// Material name.
        material: String,
    },
    /// Values come from the generic built-in library.
    GenericMaterial {
        /// Material name.
        material: String,
        /// Parts made of it.
        parts: Vec<String>,
    },
    /// Capacitance from charge and from field energy disagree.
    CapacitanceMismatch {
        /// From Q/V.
        from_charge: f64,
        /// From 2W/V².
        from_energy: f64,
    },
    /// All fixed electrodes are at one potential.
    NoPotentialDifference,
    /// A part has too few grid cells across.
    CoarseGrid {
        /// Cells across its narrowest extent.
        cells_across: usize,
    },
    /// A part is completely painted over by later parts or electrodes.
    PartHidden,
    /// The peak grows under refinement: a singularity of the drawn geometry.
    SingularPeak {
        /// Peak on the fine, medium and coarse grid, V/m.
        e_max: [f64; 3],
        /// The peak sits at a singular point of the drawn geometry.
        at_edge: bool,
        /// That point described, where it is one the grid stage found.
        point: Option<SingularDetail>,
    },
    /// The estimated discretisation error of the peak is above the limit.
    MeshSensitive {
        /// Estimated relative error.
        estimate: f64,
    },
    /// The estimated discretisation error of a probe's field, a line's
    /// peak or the energy (and capacitance) is above the limit.
    ResultMeshSensitive {
        /// What: "probe NAME", "line NAME" or "the stored energy".
        what: String,
        /// Estimated relative error.
        estimate: f64,
    },
    /// The part vanished on a coarser grid, so its peak could not be checked.
    MeshUnbracketed,
    /// The coarser grids could not be solved; no peak could be checked.
    MeshCheckFailed,
    /// A legal input value lies outside the range usual in insulation work
    /// (a probable unit slip).
    ImplausibleInput(crate::case::Implausible),
    /// The case states no `operation:`, so its potentials were read as
    /// instantaneous (peak) values of a static field.
    OperationNotStated,
    /// Water or temperature elsewhere moved stress onto this part enough to
    /// worsen its verdict against the dry case at the reference temperature.
    StressShift {
        /// Peak field at service conditions, V/m (case convention).
        e_max: f64,
        /// Peak field dry at the reference temperature, V/m.
        e_max_reference: f64,
        /// Verdict dry at the reference temperature.
        from: Verdict,
        /// Verdict at service conditions.
        to: Verdict,
        /// The wet or hot parts that moved it.
        causes: Vec<String>,
    },
    /// The part is wetter or hotter than its strength value holds for.
    DryStrengthUsed {
        /// The part's temperature, °C.
        temperature_c: f64,
        /// Its water volume fraction.
        water_volume_fraction: f64,
        /// What the strength holds for.
        holds_for: crate::materials::StrengthConditions,
    },
    /// A water content outside what its mixing rule (or any) describes.
    MixingRuleRange {
        /// The rule.
        rule: crate::materials::MixingRule,
        /// Water volume fraction.
        fraction: f64,
        /// The fraction the rule holds up to.
        limit: f64,
    },
    /// A temperature outside the range a permittivity model holds over.
    OutsideModelRange {
        /// What the model is of ("water", or a material name).
        model: String,
        /// The temperature, °C.
        temperature_c: f64,
        /// The model's range, °C.
        range: (f64, f64),
    },
    /// Water dipoles are aligned far enough for linear response to fail.
    DipoleSaturation(Dipole),
    /// Partial discharge starts at or below the working level.
    PdAtWorkingLevel {
        /// Inception level of the largest fixed |potential|, V (case convention).
        inception: f64,
        /// The working level, V.
        working: f64,
        /// The criterion that decided it.
        criterion: crate::discharge::Criterion,
    },
    /// Partial-discharge inception lies above the working level by less
    /// than the required margin.
    PdMarginThin {
        /// Inception level, V.
        inception: f64,
        /// Inception / working level.
        ratio: f64,
        /// Required ratio.
        required: f64,
    },
    /// The critical gap is on the left branch of the Paschen curve (or too
    /// short for gas ionisation at any level).
    GasMicroGap {
        /// Reduced length p20·l of the critical line, Pa·m.
        reduced_length_pa_m: f64,
        /// The p·d of the Paschen minimum, Pa·m.
        minimum_pa_m: f64,
        /// Whether any inception level was found.
        found: bool,
    },
    /// The gas has Townsend constants only, and its critical line is long
    /// enough that they read optimistic.
    TownsendOnly {
        /// Reduced length p20·l of the critical line, Pa·m.
        reduced_length_pa_m: f64,
    },
    /// The critical field line was cut short at the point limit.
    FieldLineTruncated,
    /// The inception level changes with the grid by more than the limit
    /// (a triple junction or a gap the grid does not resolve).
    PdGridDependent {
        /// Inception level on the fine, medium and coarse grid, V.
        levels: [Option<f64>; 3],
    },
    /// The tangential field along a solid–fluid surface exceeds the case's
    /// limit.
    SurfaceStress {
        /// The solid and the fluid part.
        parts: [String; 2],
        /// Largest tangential field, V/m (case convention).
        e_t_max: f64,
        /// Where, m.
        at: [f64; 2],
        /// The limit, V/m.
        limit: f64,
    },
    /// Under an impulse, the material has no impulse strength, so its
    /// short-term (AC) strength was used as a peak value.
    ImpulseStrengthMissing {
        /// Material name.
        material: String,
    },
    /// AC: the part's conduction current is comparable to its displacement
    /// current (σ/(ωε) between `CROSSOVER_RANGE`'s ends).
    ResistiveCapacitiveCrossover {
        /// σ/(ωε0ε′).
        ratio: f64,
    },
    /// AC: the part conducts far more than it polarises (σ/(ωε) above
    /// `CROSSOVER_RANGE`): it carries little stress and sheds it.
    ConductionDominated {
        /// σ/(ωε0ε′).
        ratio: f64,
    },
    /// DC: the resistive peak lies on the other side of the insulation
    /// from the capacitive one (the stress moved, e.g. from conductor to
    /// screen in a loaded cable).
    FieldInversion {
        /// Potential fraction at the resistive peak.
        resistive_fraction: f64,
        /// Potential fraction at the capacitive peak.
        capacitive_fraction: f64,
    },
    /// DC: the field just after a polarity reversal exceeds the strength
    /// divided by the safety factor.
    ReversalStress {
        /// Peak reversal field, V/m.
        e_reversal: f64,
        /// Strength used, V/m.
        strength: f64,
    },
    /// DC: the material has no DC strength, so its AC strength was used as
    /// a peak value.
    DcStrengthMissing {
        /// Material name.
        material: String,
    },
    /// A waiver of the case matches no finding.
    WaiverUnmatched {
        /// Index into `case.waivers`.
        waiver: usize,
        /// Its code.
        code: String,
    },
    /// A waiver names a failing finding, which cannot be accepted.
    WaiverRefused {
        /// Index into `case.waivers`.
        waiver: usize,
        /// Its code.
        code: String,
    },
    /// An electrode, a solid and a gas or liquid meet.
    TripleJunction {
        /// Where and how strongly.
        junction: crate::discharge::Junction,
        /// The electrode's name.
        electrode: String,
        /// The solid part's name (the finding's part is the gas or liquid).
        solid: String,
    },
    /// A user value lies outside the range published for its base material.
    ValueOutOfRange {
        /// Material name.
        material: String,
        /// What is out of range.
        detail: crate::materials::OutOfRange,
    },
}

impl FindingKind {
    /// Short stable code.
    pub fn code(&self) -> &'static str {
        match self {
            FindingKind::AboveBreakdown { .. } => "above-typical-strength",
            FindingKind::GasAboveBreakdown { .. } => "gas-discharge",
            FindingKind::BelowSafetyFactor { .. } => "thin-margin",
            FindingKind::NoStrength { .. } => "no-strength-value",
            FindingKind::GenericMaterial { .. } => "generic-material-values",
            FindingKind::CapacitanceMismatch { .. } => "capacitance-cross-check",
            FindingKind::NoPotentialDifference => "no-potential-difference",
            FindingKind::CoarseGrid { .. } => "coarse-grid",
            FindingKind::PartHidden => "part-hidden",
            FindingKind::SingularPeak { .. } => "singular-peak",
            FindingKind::MeshSensitive { .. } => "mesh-sensitive",
            FindingKind::ResultMeshSensitive { .. } => "result-mesh-sensitive",
            FindingKind::MeshUnbracketed => "mesh-check-unbracketed",
            FindingKind::MeshCheckFailed => "mesh-check-failed",
            FindingKind::ValueOutOfRange { .. } => "value-out-of-range",
            FindingKind::ImplausibleInput(_) => "implausible-input",
            FindingKind::OperationNotStated => "operation-not-stated",
            FindingKind::StressShift { .. } => "stress-shifted",
            FindingKind::DryStrengthUsed { .. } => "dry-strength-used",
            FindingKind::MixingRuleRange { .. } => "mixing-rule-range",
            FindingKind::OutsideModelRange { .. } => "outside-model-range",
            FindingKind::DipoleSaturation(_) => "dipole-saturation",
            FindingKind::PdAtWorkingLevel { .. } => "pd-at-working-level",
            FindingKind::PdMarginThin { .. } => "pd-margin-thin",
            FindingKind::GasMicroGap { .. } => "gas-micro-gap",
            FindingKind::TownsendOnly { .. } => "townsend-only",
            FindingKind::FieldLineTruncated => "field-line-truncated",
            FindingKind::PdGridDependent { .. } => "pd-grid-dependent",
            FindingKind::TripleJunction { .. } => "triple-junction",
            FindingKind::SurfaceStress { .. } => "surface-stress",
            FindingKind::ImpulseStrengthMissing { .. } => "impulse-strength-missing",
            FindingKind::ResistiveCapacitiveCrossover { .. } => "resistive-capacitive-crossover",
            FindingKind::ConductionDominated { .. } => "conduction-dominated",
            FindingKind::FieldInversion { .. } => "field-inversion",
            FindingKind::ReversalStress { .. } => "polarity-reversal-stress",
            FindingKind::DcStrengthMissing { .. } => "dc-strength-missing",
            FindingKind::WaiverUnmatched { .. } => "waiver-unmatched",
            FindingKind::WaiverRefused { .. } => "waiver-refused",
        }
    }

    /// How much it weighs.
    pub fn severity(&self) -> Severity {
        match self {
            FindingKind::AboveBreakdown { .. }
            | FindingKind::GasAboveBreakdown { .. }
            | FindingKind::PdAtWorkingLevel { .. } => Severity::Fail,
            FindingKind::GenericMaterial { .. }
            | FindingKind::OperationNotStated
            | FindingKind::DipoleSaturation(_)
            | FindingKind::ImpulseStrengthMissing { .. }
            | FindingKind::ConductionDominated { .. }
            | FindingKind::DcStrengthMissing { .. } => Severity::Info,
            FindingKind::TripleJunction { junction, .. } if !junction.enhanced() => Severity::Info,
            _ => Severity::Warning,
        }
    }
}

/// A finding, optionally about one part.
#[derive(Debug, Clone, PartialEq)]
pub struct Finding {
    /// What was found.
    pub kind: FindingKind,
    /// Part it concerns.
    pub part: Option<String>,
}

/// The judgement of one dielectric part.
#[derive(Debug, Clone, PartialEq)]
pub struct PartAssessment {
    /// Region index in the layout.
    pub region: usize,
    /// Strength / peak field; `None` with no strength or no field.
    pub margin: Option<f64>,
    /// Part verdict.
    pub verdict: Verdict,
    /// Largest energy density ½·ε·E² in J/m³.
    pub w_max: f64,
    /// Largest polarisation energy density ½·ε0·(εr − 1)·E² in J/m³.
    pub w_pol_max: f64,
    /// Relative permittivity at service conditions.
    pub permittivity: f64,
    /// Relative permittivity dry at the reference temperature.
    pub permittivity_reference: f64,
    /// Temperature, °C.
    pub temperature_c: f64,
    /// Absorbed water volume fraction, if any.
    pub water_volume_fraction: Option<f64>,
    /// Breakdown strength in the case's convention (rms or peak), V/m.
    pub strength: Option<f64>,
    /// Peak field dry at the reference temperature, V/m (when the case
    /// differs from it).
    pub e_max_reference: Option<f64>,
    /// Relative change of the peak field against that reference.
    pub e_max_change: Option<f64>,
    /// Gas parts with a discharge model: index into the inception list.
    pub inception: Option<usize>,
    /// Partial-discharge inception level of the largest fixed |potential|,
    /// V (case convention); gas parts with a discharge model only.
    pub pd_inception: Option<f64>,
    /// Strength / peak field of a gas part judged by inception: for
    /// information only (its verdict comes from the inception margin).
    pub point_margin: Option<f64>,
    /// The level of the largest fixed |potential| (all fixed potentials
    /// scaled together, case convention), V, at which this part just keeps
    /// its safety factor (gas parts judged by inception: its inception
    /// margin); `None` without a margin or when the field does not scale
    /// with the potentials (then `study::allowable_by_bisection` finds it
    /// and sets it here).
    pub allowable: Option<f64>,
    /// The level this part would allow if its field scaled with the
    /// potentials from here on (the local linear extrapolation, V): equal to
    /// `allowable` for linear fields; one step of the bisection otherwise.
    pub allowable_if_linear: Option<f64>,
}

/// The largest level the case allows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Allowable {
    /// The level of the largest fixed |potential|, V (case convention).
    pub level: f64,
    /// The part that sets it (layout region).
    pub region: usize,
    /// Found by bisection of solves at scaled levels (a field that does not
    /// scale with the potentials): the relative tolerance of `level`, which
    /// is the highest level found to keep every margin. `None`: exact by
    /// scaling.
    pub bisection_tolerance: Option<f64>,
}

/// How far the field turns the water dipoles of a part toward it: x =
/// p·E/(k·T) with E the instantaneous peak field, and the mean ⟨cos θ⟩ =
/// L(x) = coth x − 1/x (Langevin function; Debye, *Polar Molecules*, 1929).
/// For x ≪ 1, L(x) ≈ x/3 and the polarisation is linear in E.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Dipole {
    /// Region of the part with the largest x.
    pub region: usize,
    /// The largest x.
    pub x: f64,
    /// ⟨cos θ⟩ at that x.
    pub cos_theta: f64,
}

/// Above this x = p·E/(k·T) linear response no longer holds well enough:
/// L(x) falls 1 % below x/3 near x = 0.39 (from the series x/3 − x³/45).
pub const DIPOLE_LINEAR_LIMIT: f64 = 0.3;

/// The Langevin function L(x) = coth x − 1/x (its series below 1e-3, where
/// the difference cancels).
pub fn langevin(x: f64) -> f64 {
    if x.abs() < 1e-3 { x / 3.0 - x * x * x / 45.0 } else { 1.0 / x.tanh() - 1.0 / x }
}

/// Two temperatures this close count as the same for a strength value, K
/// (datasheet strengths are quoted at "room temperature", 20–25 °C).
pub const STRENGTH_TEMPERATURE_SLACK_K: f64 = 10.0;

/// Field concentration over the whole case.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Concentration {
    /// Highest judged field in any dielectric part (`RegionField::e_judged`:
    /// 0.1 mm from a singular point where the peak sits at one), V/m.
    pub e_max: f64,
    /// Shortest distance between electrodes at different potentials, m.
    pub gap: f64,
    /// Largest potential difference / gap, V/m.
    pub e_uniform: f64,
    /// Field enhancement factor e_max / e_uniform.
    pub factor: f64,
    /// The case is a plain planar stack: the factor only reflects the
    /// layers' permittivity contrast, not a geometric concentration.
    pub permittivity_contrast_only: bool,
}

/// Capacitance between the two fixed potentials.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Capacitance {
    /// From the electrode charge, Q/ΔV (F, or F/m).
    pub from_charge: f64,
    /// From the field energy, 2W/ΔV² (F, or F/m).
    pub from_energy: f64,
}

/// The assessment of a case.
#[derive(Debug, Clone, PartialEq)]
pub struct Assessment {
    /// Case verdict.
    pub verdict: Verdict,
    /// Parts that own cells, in layout order.
    pub parts: Vec<PartAssessment>,
    /// Findings, most severe first.
    pub findings: Vec<Finding>,
    /// For each finding, the case's waiver that accepts it (index into
    /// `case.waivers`).
    pub accepted: Vec<Option<usize>>,
    /// When there are exactly two distinct fixed potentials.
    pub capacitance: Option<Capacitance>,
    /// When electrodes at different potentials exist.
    pub concentration: Option<Concentration>,
    /// Water dipole alignment, when a part holds water.
    pub dipole: Option<Dipole>,
    /// The largest fixed |potential|, V (case convention): the level
    /// inception levels are compared with.
    pub working_level: f64,
    /// The lowest partial-discharge inception level over the gas parts, V
    /// (`None` without gas parts that have an inception level).
    pub pd_inception: Option<f64>,
    /// Per singular point of `Fields::singular` (same order).
    pub singular: Vec<SingularJudgement>,
    /// The largest level of the fixed potentials (scaled together) at which
    /// every part keeps its safety factor and every gas part its inception
    /// margin: the lowest of the parts' `allowable` (`None` when no part has
    /// one, or the field does not scale with the potentials).
    pub allowable: Option<Allowable>,
}

/// The level a part allows when the field scales with the potentials:
/// E ∝ U, so a solid or liquid keeps strength / E ≥ SF up to
/// U_w·margin/SF (U_w the working level, margin = strength / judged peak);
/// a gas part judged by inception keeps its margin up to
/// inception level / required inception margin.
pub fn allowable_level(
    working: f64,
    margin: Option<f64>,
    gas: bool,
    safety_factor: f64,
    pd_margin: f64,
) -> Option<f64> {
    let m = margin.filter(|m| m.is_finite() && *m > 0.0 && working > 0.0)?;
    Some(working * m / if gas { pd_margin } else { safety_factor })
}

/// A singular point as one part sees it (the `singular-peak` finding).
#[derive(Debug, Clone, PartialEq)]
pub struct SingularDetail {
    /// Electrode edge or triple point.
    pub kind: crate::grid::SingularKind,
    /// Where, m.
    pub at: [f64; 2],
    /// The electrode's name.
    pub electrode: String,
    /// The part's largest |E| at the stated distances
    /// (`fields::SINGULAR_DISTANCES`), V/m.
    pub e_at: [Option<f64>; 2],
    /// λ of the drawn wedges.
    pub exponent_drawn: Option<f64>,
    /// λ fitted from the part's fields at the stated distances.
    pub exponent_fitted: Option<f64>,
    /// The peak the part is judged on, V/m.
    pub e_judged: f64,
    /// Radius of curvature that brings the part's peak there down to its
    /// strength over the safety factor, m.
    pub radius: Option<f64>,
}

/// What the assessment adds to one singular point of `Fields::singular`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SingularJudgement {
    /// Radius of curvature that brings the field at the point down to the
    /// strength over the safety factor of the region with the highest
    /// field at the inner stated distance, m (`None` without a strength or
    /// a singular exponent).
    pub radius: Option<f64>,
}

/// The radius that removes the peak at a point, from the field at the
/// inner stated distance, the exponent (of the drawn wedges where known:
/// the fitted one is only as good as the grid's resolution of the inner
/// distance) and the allowable field
/// strength / safety factor (`fields::radius_to_allowable`).
fn radius_for(e1: Option<f64>, lambda: Option<f64>, strength: Option<f64>, safety_factor: f64) -> Option<f64> {
    crate::fields::radius_to_allowable(e1?, crate::fields::SINGULAR_DISTANCES[0], lambda?, strength? / safety_factor)
}

/// The singular point nearest to a part's peak among those the part
/// touches, described for the part.
fn singular_detail(
    layout: &Layout,
    fields: &Fields,
    region: usize,
    strength: Option<f64>,
    safety_factor: f64,
) -> Option<SingularDetail> {
    let f = &fields.regions[region];
    let d = |s: &crate::fields::SingularField| (s.point.at[0] - f.e_max_at[0]).hypot(s.point.at[1] - f.e_max_at[1]);
    let s = fields.singular.iter().filter(|s| s.regions.contains(&region)).min_by(|a, b| d(a).total_cmp(&d(b)))?;
    let k = s.regions.iter().position(|&r| r == region)?;
    let e_at = s.e_at_by_region[k].map(|v| v.map(|v| v.e));
    let exponent_fitted = s.fitted_by_region[k];
    Some(SingularDetail {
        kind: s.point.kind,
        at: s.point.at,
        electrode: layout.electrodes[s.point.electrode].name.clone(),
        e_at,
        exponent_drawn: s.exponent_drawn,
        exponent_fitted,
        e_judged: f.e_judged,
        radius: radius_for(e_at[0], s.exponent_drawn.or(exponent_fitted), strength, safety_factor),
    })
}

/// The dry-reference evaluation of a case.
#[derive(Debug, Clone, Copy)]
pub struct Reference<'a> {
    /// Relative permittivity of each region, dry at the reference temperature.
    pub permittivity: &'a [f64],
    /// The fields of that evaluation.
    pub fields: &'a Fields,
    /// Inception of its gas parts.
    pub discharge: &'a [crate::discharge::GasInception],
}

/// What the assessment judges.
#[derive(Debug, Clone, Copy)]
pub struct Inputs<'a> {
    /// The case.
    pub case: &'a Case,
    /// Its layout.
    pub layout: &'a Layout,
    /// Relative permittivity of each region at service conditions.
    pub permittivity: &'a [f64],
    /// The fields at service conditions.
    pub fields: &'a Fields,
    /// The mesh self-check (`None` when it could not be run).
    pub check: Option<&'a MeshCheck>,
    /// The dry reference, when the case differs from it.
    pub reference: Option<Reference<'a>>,
    /// Partial-discharge inception of the gas parts with a discharge model.
    pub discharge: &'a [crate::discharge::GasInception],
    /// Where electrodes, solids and gases or liquids meet.
    pub junctions: &'a [crate::discharge::Junction],
    /// AC cases: the regions' loss coefficients.
    pub ac: Option<&'a crate::coefficients::AcLosses>,
    /// DC cases: reversal and capacitive peaks, temperatures.
    pub dc: Option<&'a crate::conduction::DcResults>,
}

/// Part verdict from its margin.
pub fn part_verdict(margin: Option<f64>, has_strength: bool, safety_factor: f64) -> Verdict {
    match (margin, has_strength) {
        (_, false) => Verdict::Review,
        (None, true) => Verdict::Pass,
        (Some(m), true) if m < 1.0 => Verdict::Fail,
        (Some(m), true) if m < safety_factor => Verdict::Review,
        _ => Verdict::Pass,
    }
}

/// Judges the solved case (see [`Inputs`]).
pub fn assess(inp: &Inputs) -> Assessment {
    let Inputs { case, layout, permittivity, fields, check, reference, discharge, junctions, ac, dc } = *inp;
    let linear = dc.is_none_or(|d| d.linear);
    let working = working_level(layout);
    let states = crate::coefficients::states(case, layout, crate::coefficients::Conditions::Service);
    let strengths = crate::coefficients::strengths(case, layout);
    let mut parts = Vec::new();
    let mut findings = Vec::new();
    for (r, region) in layout.regions.iter().enumerate() {
        let f = &fields.regions[r];
        if f.cells == 0 {
            if region.part.is_some() {
                findings.push(Finding { kind: FindingKind::PartHidden, part: Some(region.name.clone()) });
            }
            continue;
        }
        let m = &case.materials[region.material];
        let strength = strengths[r];
        // a peak at a singular point is a property of the drawing: the
        // margin rests on the peak away from it (`RegionField::e_judged`)
        let point_margin = strength.filter(|_| f.e_judged > 0.0).map(|s| s / f.e_judged);
        let part = Some(region.name.clone());
        let inception = discharge.iter().position(|d| d.region == r);
        let (margin, verdict) = match inception.map(|k| &discharge[k]) {
            Some(g) => {
                let (margin, verdict, kinds) = gas_rule(g, f.e_max, working, case);
                findings.extend(kinds.into_iter().map(|kind| Finding { kind, part: part.clone() }));
                if let Some(kind) = check.and_then(|c| inception_grid_rule(c, r, working)) {
                    findings.push(Finding { kind, part: part.clone() });
                }
                (margin, verdict)
            }
            None => (point_margin, part_verdict(point_margin, strength.is_some(), case.safety_factor)),
        };
        let mut kinds: Vec<FindingKind> = Vec::new();
        if inception.is_none() {
            kinds.extend(strength_rule(m, f.e_judged, strength, margin, case.safety_factor));
            kinds.extend(impulse_rule(case, m));
        }
        // a gas part judged by inception has its level checked against the
        // self-check's grids instead (`inception_grid_rule`): its point peak
        // is for information only
        if let (None, Some(c)) = (inception, check) {
            let detail = || singular_detail(layout, fields, r, strength, case.safety_factor);
            kinds.extend(mesh_rule(&c.regions[r], &c.judged[r], f, detail));
        }
        if region.cells_across < MIN_CELLS_ACROSS {
            kinds.push(FindingKind::CoarseGrid { cells_across: region.cells_across });
        }
        let state = states[r];
        kinds.extend(state_findings(m, &state, strength.is_some()));
        kinds.extend(ac.and_then(|a| conduction_rule(a.conduction_ratio[r])));
        if let Some(d) = dc {
            kinds.extend(dc_rules(d, r, m, strength, case.safety_factor));
        }
        findings.extend(kinds.into_iter().map(|kind| Finding { kind, part: part.clone() }));
        let eps = permittivity[r];
        let e2 = f.e_max * f.e_max;
        let if_linear =
            allowable_level(working, margin, inception.is_some(), case.safety_factor, case.pd_inception_margin);
        parts.push(PartAssessment {
            region: r,
            margin,
            verdict,
            w_max: 0.5 * crate::units::EPSILON_0 * eps * e2,
            w_pol_max: 0.5 * crate::units::EPSILON_0 * (eps - 1.0) * e2,
            permittivity: eps,
            permittivity_reference: reference.map_or(eps, |rf| rf.permittivity[r]),
            temperature_c: state.temperature_c,
            water_volume_fraction: state.water.map(|w| w.volume_fraction),
            strength,
            e_max_reference: reference.map(|rf| rf.fields.regions[r].e_max),
            e_max_change: reference
                .map(|rf| rf.fields.regions[r].e_max)
                .filter(|&e| e > 0.0)
                .map(|e| (f.e_max - e) / e),
            inception,
            pd_inception: inception.and_then(|k| discharge[k].scale).map(|s| s * working),
            point_margin: point_margin.filter(|_| inception.is_some()),
            allowable: if_linear.filter(|_| linear),
            allowable_if_linear: if_linear,
        });
    }
    let pd_inception = parts.iter().filter_map(|p| p.pd_inception).min_by(f64::total_cmp);
    if let Some(rf) = reference {
        findings.extend(stress_shifts(case, layout, &parts, fields, rf));
    }
    let dipole = dipole_alignment(case, &parts, fields);
    if let Some(d) = dipole.filter(|d| d.x > DIPOLE_LINEAR_LIMIT) {
        findings.push(Finding {
            kind: FindingKind::DipoleSaturation(d),
            part: Some(layout.regions[d.region].name.clone()),
        });
    }
    findings.extend(surface_rule(case, layout, fields));
    findings.extend(junctions.iter().map(|j| Finding {
        kind: FindingKind::TripleJunction {
            junction: j.clone(),
            electrode: layout.electrodes[j.electrode].name.clone(),
            solid: layout.regions[j.solid].name.clone(),
        },
        part: Some(layout.regions[j.fluid].name.clone()),
    }));
    if !case.operation.stated {
        findings.push(Finding { kind: FindingKind::OperationNotStated, part: None });
    }

    findings.extend(material_rules(case, layout, &parts));

    for note in &case.implausible {
        findings.push(Finding { kind: FindingKind::ImplausibleInput(note.clone()), part: note.owner.clone() });
    }

    if check.is_none() {
        findings.push(Finding { kind: FindingKind::MeshCheckFailed, part: None });
        for p in parts.iter().filter(|p| p.inception.is_none()) {
            if fields.regions[p.region].at_sharp_edge {
                let point = singular_detail(layout, fields, p.region, p.strength, case.safety_factor);
                findings.push(Finding {
                    kind: FindingKind::SingularPeak {
                        e_max: [fields.regions[p.region].e_max; 3],
                        at_edge: true,
                        point,
                    },
                    part: Some(layout.regions[p.region].name.clone()),
                });
            }
        }
    }

    let mut fixed: Vec<f64> = layout
        .electrodes
        .iter()
        .filter_map(|e| match e.kind {
            ElectrodeKind::Fixed { potential_v } => Some(potential_v),
            ElectrodeKind::Floating => None,
        })
        .collect();
    fixed.sort_by(f64::total_cmp);
    fixed.dedup();
    if fixed.len() < 2 {
        findings.push(Finding { kind: FindingKind::NoPotentialDifference, part: None });
    }
    // a DC field's electrode charges include the space charge of conduction:
    // they give no capacitance
    let capacitance = (fixed.len() == 2 && dc.is_none()).then(|| {
        let dv = fixed[1] - fixed[0];
        let q: f64 = layout
            .electrodes
            .iter()
            .zip(&fields.electrodes)
            .filter(|(e, _)| matches!(e.kind, ElectrodeKind::Fixed { potential_v } if potential_v == fixed[1]))
            .map(|(_, f)| f.charge)
            .sum();
        Capacitance { from_charge: q / dv, from_energy: 2.0 * fields.energy_from_cells / (dv * dv) }
    });
    if let Some(c) = capacitance
        && ((c.from_energy - c.from_charge) / c.from_charge).abs() > CAPACITANCE_TOLERANCE
    {
        findings.push(Finding {
            kind: FindingKind::CapacitanceMismatch { from_charge: c.from_charge, from_energy: c.from_energy },
            part: None,
        });
    }

    // a peak at a singular point grows without bound under refinement: the
    // factor takes the judged peaks
    let e_max = parts.iter().map(|p| fields.regions[p.region].e_judged).fold(0.0, f64::max);
    let concentration = fields.gap.map(|g| {
        let e_uniform = g.largest_difference / g.distance;
        let plain_stack =
            case.geometry == crate::case::Geometry::Planar && case.parts.iter().all(|p| p.key.starts_with("stack"));
        Concentration {
            e_max,
            gap: g.distance,
            e_uniform,
            factor: e_max / e_uniform,
            permittivity_contrast_only: plain_stack,
        }
    });

    findings.extend(check.map(|c| result_mesh_rule(case, c)).unwrap_or_default());
    findings.extend(waiver_rule(case, &findings));
    findings.sort_by_key(|f| std::cmp::Reverse(f.kind.severity()));
    let accepted = accepted_findings(case, &findings);
    let worst_finding =
        findings.iter().zip(&accepted).filter(|(_, a)| a.is_none()).map(|(f, _)| match f.kind.severity() {
            Severity::Info => Verdict::Pass,
            Severity::Warning => Verdict::Review,
            Severity::Fail => Verdict::Fail,
        });
    // a part under review whose every warning was accepted passes
    for p in &mut parts {
        let name = &layout.regions[p.region].name;
        let warnings: Vec<bool> = findings
            .iter()
            .zip(&accepted)
            .filter(|(f, _)| f.part.as_ref() == Some(name) && f.kind.severity() == Severity::Warning)
            .map(|(_, a)| a.is_some())
            .collect();
        if p.verdict == Verdict::Review && !warnings.is_empty() && warnings.iter().all(|a| *a) {
            p.verdict = Verdict::Pass;
        }
    }
    let verdict = parts.iter().map(|p| p.verdict).chain(worst_finding).max().unwrap_or(Verdict::Pass);
    let allowable = parts
        .iter()
        .filter_map(|p| p.allowable.map(|level| Allowable { level, region: p.region, bisection_tolerance: None }))
        .min_by(|a, b| a.level.total_cmp(&b.level));
    Assessment {
        verdict,
        parts,
        findings,
        accepted,
        capacitance,
        concentration,
        dipole,
        working_level: working,
        pd_inception,
        allowable,
        singular: fields
            .singular
            .iter()
            .map(|sf| SingularJudgement {
                radius: sf.e_at[0].and_then(|v| {
                    radius_for(
                        Some(v.e),
                        sf.exponent_drawn.or(sf.exponent_fitted),
                        strengths[v.region],
                        case.safety_factor,
                    )
                }),
            })
            .collect(),
    }
}

/// Probes, line peaks and the energy whose estimated discretisation error
/// exceeds `MESH_ERROR_LIMIT` (a probe or line with a growing value near a
/// singular point counts by its estimate too).
fn result_mesh_rule(case: &Case, check: &MeshCheck) -> Vec<Finding> {
    let over = |c: &crate::meshcheck::RegionCheck| c.error_estimate.filter(|e| *e > MESH_ERROR_LIMIT);
    let mut out = Vec::new();
    let named = case.probes.iter().map(|p| format!("probe {}", p.name)).zip(&check.probes);
    let lines = case.lines.iter().map(|l| format!("the peak of line {}", l.name)).zip(&check.lines);
    for (what, c) in named.chain(lines).chain(std::iter::once(("the stored energy".to_string(), &check.energy))) {
        if let Some(estimate) = over(c) {
            out.push(Finding { kind: FindingKind::ResultMeshSensitive { what, estimate }, part: None });
        }
    }
    out
}

/// True when waiver `w` names finding `f` (its code, and its part unless
/// the waiver names none).
fn waiver_matches(w: &crate::case::Waiver, f: &Finding) -> bool {
    w.code == f.kind.code() && (w.part.is_none() || w.part == f.part)
}

/// Waivers that match no finding (stale, or a misspelt code) and waivers
/// of failing findings (which cannot be accepted).
fn waiver_rule(case: &Case, findings: &[Finding]) -> Vec<Finding> {
    let mut out = Vec::new();
    for (k, w) in case.waivers.iter().enumerate() {
        let matched: Vec<&Finding> = findings.iter().filter(|f| waiver_matches(w, f)).collect();
        if matched.is_empty() {
            out.push(Finding {
                kind: FindingKind::WaiverUnmatched { waiver: k, code: w.code.clone() },
                part: w.part.clone(),
            });
        } else if matched.iter().any(|f| f.kind.severity() == Severity::Fail) {
            out.push(Finding {
                kind: FindingKind::WaiverRefused { waiver: k, code: w.code.clone() },
                part: w.part.clone(),
            });
        }
    }
    out
}

/// For each finding, the waiver that accepts it: the first matching one,
/// for warnings and information only (a failing finding stays failing).
fn accepted_findings(case: &Case, findings: &[Finding]) -> Vec<Option<usize>> {
    findings
        .iter()
        .map(|f| {
            let own = matches!(f.kind, FindingKind::WaiverUnmatched { .. } | FindingKind::WaiverRefused { .. });
            (!own && f.kind.severity() != Severity::Fail)
                .then(|| case.waivers.iter().position(|w| waiver_matches(w, f)))
                .flatten()
        })
        .collect()
}

/// The inception level of gas region `r` moves by more than
/// `INCEPTION_CHANGE_LIMIT` between the fine and the medium grid of the
/// self-check (or only one of them has a level).
fn inception_grid_rule(check: &MeshCheck, r: usize, working: f64) -> Option<FindingKind> {
    let (_, s) = check.inception.iter().find(|(region, _)| *region == r)?;
    let changed = match (s[0], s[1]) {
        (Some(a), Some(b)) => ((a - b) / a).abs() > crate::meshcheck::INCEPTION_CHANGE_LIMIT,
        (None, None) => false,
        _ => true,
    };
    changed.then(|| FindingKind::PdGridDependent { levels: s.map(|v| v.map(|v| v * working)) })
}

/// A solid or liquid part (or a gas without a discharge model) judged by
/// its point margin: above the typical strength, below the safety factor,
/// or no strength at all.
fn strength_rule(
    m: &crate::materials::Material,
    e_max: f64,
    strength: Option<f64>,
    margin: Option<f64>,
    safety_factor: f64,
) -> Option<FindingKind> {
    match (strength, margin) {
        (None, _) => Some(FindingKind::NoStrength { material: m.name.clone() }),
        (Some(strength), Some(mg)) if mg < 1.0 => Some(if m.class == MaterialClass::Gas {
            FindingKind::GasAboveBreakdown { e_max, strength }
        } else {
            FindingKind::AboveBreakdown { e_max, strength }
        }),
        (Some(_), Some(mg)) if mg < safety_factor => {
            Some(FindingKind::BelowSafetyFactor { margin: mg, required: safety_factor })
        }
        _ => None,
    }
}

/// Under an impulse, a material judged by its AC strength (it has no
/// impulse strength of its own).
fn impulse_rule(case: &Case, m: &crate::materials::Material) -> Option<FindingKind> {
    (case.operation.mode == crate::case::Mode::Impulse
        && m.impulse_strength_v_per_m.is_none()
        && m.strength_v_per_m.is_some())
    .then(|| FindingKind::ImpulseStrengthMissing { material: m.name.clone() })
}

/// A DC part's peak counts as moved to the other side when the potential
/// at it crossed this fraction of the way between the lowest and highest
/// fixed potentials from the capacitive peak's (half way: from the
/// high-voltage half to the low-voltage half, or back).
pub const INVERSION_FRACTION: f64 = 0.5;

/// DC: the stress moved to the other electrode's side (field inversion),
/// a polarity reversal beyond the strength with its safety factor, and the
/// AC strength used for a DC stress.
fn dc_rules(
    d: &crate::conduction::DcResults,
    r: usize,
    m: &crate::materials::Material,
    strength: Option<f64>,
    safety_factor: f64,
) -> Vec<FindingKind> {
    let mut out = Vec::new();
    let [dc, cap] = d.peak_potential_fraction[r];
    if (dc - INVERSION_FRACTION) * (cap - INVERSION_FRACTION) < 0.0 && (dc - cap).abs() >= INVERSION_FRACTION {
        out.push(FindingKind::FieldInversion { resistive_fraction: dc, capacitive_fraction: cap });
    }
    if let Some(s) = strength
        && d.reversal_e_max[r] * safety_factor > s
    {
        out.push(FindingKind::ReversalStress { e_reversal: d.reversal_e_max[r], strength: s });
    }
    if m.dc_strength_v_per_m.is_none() && m.strength_v_per_m.is_some() {
        out.push(FindingKind::DcStrengthMissing { material: m.name.clone() });
    }
    out
}

/// σ/(ωε) between these, conduction and displacement currents are
/// comparable: the stress split depends on frequency and on the
/// conductivity (common practice: a decade either side of the crossover
/// σ = ωε).
pub const CROSSOVER_RANGE: (f64, f64) = (0.1, 10.0);

/// AC: where a part lies between capacitive and resistive behaviour.
fn conduction_rule(ratio: f64) -> Option<FindingKind> {
    if ratio > CROSSOVER_RANGE.1 {
        Some(FindingKind::ConductionDominated { ratio })
    } else if ratio >= CROSSOVER_RANGE.0 {
        Some(FindingKind::ResistiveCapacitiveCrossover { ratio })
    } else {
        None
    }
}

/// A part's peak against the self-check's coarser grids: singular (growing,
/// or at a singular point of the drawing), unbracketed, or above the error
/// limit. A part whose peak sits at a singular point is judged on its peak
/// away from it (`judged`), whose estimate must then meet the limit too.
fn mesh_rule(
    c: &crate::meshcheck::RegionCheck,
    judged: &crate::meshcheck::RegionCheck,
    f: &crate::fields::RegionField,
    detail: impl Fn() -> Option<SingularDetail>,
) -> Vec<FindingKind> {
    let mut out = Vec::new();
    if c.growing || f.at_sharp_edge {
        out.push(FindingKind::SingularPeak { e_max: c.e_max, at_edge: f.at_sharp_edge, point: detail() });
        if !f.at_sharp_edge {
            // growing away from any known point: no number to judge
            return out;
        }
    }
    let basis = if f.at_sharp_edge { judged } else { c };
    match basis.error_estimate {
        None => out.push(FindingKind::MeshUnbracketed),
        Some(e) if e > MESH_ERROR_LIMIT => out.push(FindingKind::MeshSensitive { estimate: e }),
        Some(_) => {}
    }
    out
}

/// Materials in use: user values outside the published range of their
/// base, and generic library values.
fn material_rules(case: &Case, layout: &Layout, parts: &[PartAssessment]) -> Vec<Finding> {
    let mut findings = Vec::new();
    for (id, m) in case.materials.iter().enumerate() {
        let users: Vec<String> = parts
            .iter()
            .filter(|p| layout.regions[p.region].material == id)
            .map(|p| layout.regions[p.region].name.clone())
            .collect();
        if users.is_empty() {
            continue;
        }
        for detail in &m.out_of_range {
            findings.push(Finding {
                kind: FindingKind::ValueOutOfRange { material: m.name.clone(), detail: detail.clone() },
                part: None,
            });
        }
        if m.generic {
            findings.push(Finding {
                kind: FindingKind::GenericMaterial { material: m.name.clone(), parts: users },
                part: None,
            });
        }
    }

    findings
}

/// Surfaces whose tangential field exceeds the case's own limit
/// (`limits.surface_tangential_kv_per_mm`); no built-in limit.
fn surface_rule(case: &Case, layout: &Layout, fields: &Fields) -> Vec<Finding> {
    let Some(limit) = case.surface_tangential_limit else { return Vec::new() };
    fields
        .surfaces
        .iter()
        .filter(|s| s.e_t_max > limit)
        .map(|s| Finding {
            kind: FindingKind::SurfaceStress {
                parts: s.regions.map(|r| layout.regions[r].name.clone()),
                e_t_max: s.e_t_max,
                at: s.at,
                limit,
            },
            part: Some(layout.regions[s.regions[1]].name.clone()),
        })
        .collect()
}

/// The largest |potential| of the fixed electrodes, V.
pub fn working_level(layout: &Layout) -> f64 {
    layout
        .electrodes
        .iter()
        .filter_map(|e| match e.kind {
            ElectrodeKind::Fixed { potential_v } => Some(potential_v.abs()),
            ElectrodeKind::Floating => None,
        })
        .fold(0.0, f64::max)
}

/// A gas part judged by its partial-discharge inception: margin =
/// inception level / working level; fail at or below 1, review below the
/// case's `pd_inception_margin`; review too when the part has field but no
/// level was found (too short a gap for gas ionisation).
fn gas_rule(
    g: &crate::discharge::GasInception,
    e_max: f64,
    working: f64,
    case: &Case,
) -> (Option<f64>, Verdict, Vec<FindingKind>) {
    let mut kinds = Vec::new();
    let margin = g.scale.filter(|_| working > 0.0 && e_max > 0.0);
    let verdict = match (margin, e_max > 0.0 && working > 0.0) {
        (Some(m), _) if m <= 1.0 => {
            kinds.push(FindingKind::PdAtWorkingLevel {
                inception: m * working,
                working,
                criterion: g.criterion.unwrap_or(crate::discharge::Criterion::Townsend),
            });
            Verdict::Fail
        }
        (Some(m), _) if m < case.pd_inception_margin => {
            kinds.push(FindingKind::PdMarginThin {
                inception: m * working,
                ratio: m,
                required: case.pd_inception_margin,
            });
            Verdict::Review
        }
        (Some(_), _) | (None, false) => Verdict::Pass,
        (None, true) => Verdict::Review,
    };
    if e_max > 0.0 && working > 0.0 && (g.left_branch || margin.is_none()) {
        kinds.push(FindingKind::GasMicroGap {
            reduced_length_pa_m: g.reduced_length_pa_m,
            minimum_pa_m: g.left_branch_below_pa_m,
            found: margin.is_some(),
        });
    }
    if g.townsend_only && margin.is_some() {
        kinds.push(FindingKind::TownsendOnly { reduced_length_pa_m: g.reduced_length_pa_m });
    }
    if g.truncated {
        kinds.push(FindingKind::FieldLineTruncated);
    }
    (margin, verdict, kinds)
}

/// Findings about a part's state: a strength used beyond the conditions it
/// holds for, a water content outside its mixing rule, a temperature
/// outside a permittivity model.
fn state_findings(
    m: &crate::materials::Material,
    state: &crate::coefficients::State,
    has_strength: bool,
) -> Vec<FindingKind> {
    use crate::materials::{ABSORBED_WATER_LIMIT, MAXWELL_GARNETT_LIMIT, MixingRule, WATER_FIT_RANGE_C};
    let mut out = Vec::new();
    let water = state.water.map_or(0.0, |w| w.volume_fraction);
    let holds = m.strength_conditions;
    if has_strength
        && (state.temperature_c > holds.temperature_c + STRENGTH_TEMPERATURE_SLACK_K
            || water > holds.water_volume_fraction)
    {
        out.push(FindingKind::DryStrengthUsed {
            temperature_c: state.temperature_c,
            water_volume_fraction: water,
            holds_for: holds,
        });
    }
    if let Some(w) = state.water {
        let limit = if w.rule == MixingRule::MaxwellGarnett {
            MAXWELL_GARNETT_LIMIT.min(ABSORBED_WATER_LIMIT)
        } else {
            ABSORBED_WATER_LIMIT
        };
        if w.volume_fraction > limit {
            out.push(FindingKind::MixingRuleRange { rule: w.rule, fraction: w.volume_fraction, limit });
        }
        let (lo, hi) = WATER_FIT_RANGE_C;
        if !(lo..=hi).contains(&state.temperature_c) {
            out.push(FindingKind::OutsideModelRange {
                model: "water".into(),
                temperature_c: state.temperature_c,
                range: WATER_FIT_RANGE_C,
            });
        }
    }
    if let Some((lo, hi)) = m.temperature_range()
        && !(lo..=hi).contains(&state.temperature_c)
    {
        out.push(FindingKind::OutsideModelRange {
            model: m.name.clone(),
            temperature_c: state.temperature_c,
            range: (lo, hi),
        });
    }
    out
}

/// Parts whose verdict is worse at service conditions than dry at the
/// reference temperature: the stress that wet or hot parts shed onto them.
fn stress_shifts(
    case: &Case,
    layout: &Layout,
    parts: &[PartAssessment],
    fields: &Fields,
    rf: Reference,
) -> Vec<Finding> {
    let changed: Vec<String> = parts
        .iter()
        .filter(|p| p.water_volume_fraction.is_some() || p.permittivity != p.permittivity_reference)
        .map(|p| layout.regions[p.region].name.clone())
        .collect();
    parts
        .iter()
        .filter_map(|p| {
            let e_ref = rf.fields.regions[p.region].e_max;
            let from = match rf.discharge.iter().find(|d| d.region == p.region) {
                Some(g) => gas_rule(g, e_ref, working_level(layout), case).1,
                None => {
                    let margin_ref = p.strength.filter(|_| e_ref > 0.0).map(|s| s / e_ref);
                    part_verdict(margin_ref, p.strength.is_some(), case.safety_factor)
                }
            };
            let name = &layout.regions[p.region].name;
            let causes: Vec<String> = changed.iter().filter(|c| *c != name).cloned().collect();
            (p.verdict > from && !causes.is_empty()).then(|| Finding {
                kind: FindingKind::StressShift {
                    e_max: fields.regions[p.region].e_max,
                    e_max_reference: e_ref,
                    from,
                    to: p.verdict,
                    causes,
                },
                part: Some(name.clone()),
            })
        })
        .collect()
}

/// The largest water dipole alignment over the parts that hold water.
fn dipole_alignment(case: &Case, parts: &[PartAssessment], fields: &Fields) -> Option<Dipole> {
    let peak = crate::units::Values::Peak.factor_from(case.operation.values);
    parts
        .iter()
        .filter(|p| p.water_volume_fraction.is_some())
        .map(|p| {
            let e = fields.regions[p.region].e_max * peak;
            let x = crate::materials::WATER_DIPOLE_MOMENT * e
                / (crate::units::BOLTZMANN * crate::units::kelvin(p.temperature_c));
            Dipole { region: p.region, x, cos_theta: langevin(x) }
        })
        .max_by(|a, b| a.x.total_cmp(&b.x))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn verdict_thresholds() {
        // margin = strength / peak; fail below 1, review below the safety factor (issue contract)
        assert_eq!(part_verdict(Some(0.99), true, 2.0), Verdict::Fail);
        assert_eq!(part_verdict(Some(1.0), true, 2.0), Verdict::Review);
        assert_eq!(part_verdict(Some(1.99), true, 2.0), Verdict::Review);
        assert_eq!(part_verdict(Some(2.0), true, 2.0), Verdict::Pass);
        assert_eq!(part_verdict(None, true, 2.0), Verdict::Pass);
        assert_eq!(part_verdict(Some(10.0), false, 2.0), Verdict::Review);
    }
}
