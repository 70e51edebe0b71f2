//! The result model: the only serialisable output of a check, in report
//! units (mm, kV, kV/mm, pF, nC, J) with the unit in every field name or
//! beside every value. Building it converts units and words findings; it
//! computes nothing physical.

use serde::Serialize;

/// Version of the result JSON layout.
pub const RESULT_FORMAT_VERSION: u32 = 1;

/// A value with its unit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Quantity {
    /// Number.
    pub value: f64,
    /// Unit, e.g. `pF/m`.
    pub unit: &'static str,
}

/// Verdict words.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum VerdictOut {
    /// Every margin met.
    Pass,
    /// Needs an engineer's look.
    Review,
    /// Typical strength exceeded.
    Fail,
}

/// Severity words.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum SeverityOut {
    /// For information.
    Info,
    /// Needs attention.
    Warning,
    /// Fails the case.
    Fail,
}

/// `grid`
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GridOut {
    /// Node count.
    pub nodes: usize,
    /// Nodes along x (or r).
    pub nodes_x: usize,
    /// Nodes along y (or z).
    pub nodes_y: usize,
    /// Smallest step.
    pub min_step_mm: f64,
    /// Largest step.
    pub max_step_mm: f64,
}

/// `solve`
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SolveOut {
    /// Method and preconditioner.
    pub method: String,
    /// Iterations.
    pub iterations: usize,
    /// True relative residual.
    pub relative_residual: f64,
    /// Unknowns.
    pub unknowns: usize,
    /// Wall time of the solve (set by the caller; the library has no clock).
    pub seconds: f64,
}

/// `field_concentration`
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ConcentrationOut {
    /// Highest judged field in any dielectric part (`e_max_judged_kv_per_mm`).
    pub e_max_kv_per_mm: f64,
    /// Shortest distance between electrodes at different fixed potentials.
    pub gap_mm: f64,
    /// Largest potential difference / gap.
    pub e_uniform_kv_per_mm: f64,
    /// Field enhancement factor e_max / e_uniform.
    pub factor: f64,
    /// True for a plain planar stack: the factor only reflects the layers'
    /// permittivity contrast (series layers), not a geometric concentration.
    pub permittivity_contrast_only: bool,
}

/// One singular point of the drawn geometry.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SingularPointOut {
    /// Where, [x, y] (or [r, z]).
    pub at_mm: [f64; 2],
    /// `electrode-edge` (a sharp edge, corner or foil end in one insulating
    /// material) or `triple-point` (two or more insulating materials meet
    /// at the electrode there).
    pub kind: &'static str,
    /// The electrode.
    pub electrode: String,
    /// The insulating parts around the point.
    pub parts: Vec<String>,
    /// λ of |E| ~ r^(λ−1) from the drawn wedge angles and permittivities
    /// (one wedge π/θ; two after Meixner 1972; null for other arrangements).
    pub exponent_drawn: Option<f64>,
    /// λ fitted from the fields at the two distances.
    pub exponent_fitted: Option<f64>,
    /// The stated distances from the point.
    pub distances_mm: [f64; 2],
    /// The largest field in the insulation at each distance, in the case's
    /// convention (null where no insulation lies at that distance).
    pub e_at_distances_kv_per_mm: [Option<f64>; 2],
    /// Estimated discretisation error of each, from the mesh self-check.
    pub e_at_distances_error_estimate_pct: [Option<f64>; 2],
    /// Radius of curvature that brings the peak there down to the strength
    /// over the safety factor (of the part with the highest field at the
    /// inner distance; null without a strength or a singular exponent).
    pub radius_to_allowable_mm: Option<f64>,
}

/// One dielectric part.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PartOut {
    /// Part name.
    pub name: String,
    /// Material name.
    pub material: String,
    /// Relative permittivity at the part's service conditions.
    pub permittivity: f64,
    /// Relative permittivity of the same material dry at 20 °C.
    pub permittivity_reference: f64,
    /// The part's temperature, °C.
    pub temperature_c: f64,
    /// Absorbed water, volume % (null when dry).
    pub water_volume_pct: Option<f64>,
    /// Peak field (on the part's surface or inside), in the case's
    /// convention (`values`).
    pub e_max_kv_per_mm: f64,
    /// The peak field of the same case with every part dry at 20 °C (null
    /// when the case is at those conditions already).
    pub e_max_reference_kv_per_mm: Option<f64>,
    /// Change of the peak against that reference, %.
    pub e_max_change_pct: Option<f64>,
    /// Where the peak is, [x, y] (or [r, z]).
    pub e_max_at_mm: [f64; 2],
    /// The peak the margin rests on, in the case's convention: `e_max`
    /// unless that sits at a singular point of the drawn geometry (see
    /// `singular_points`), else the larger of the part's field 0.1 mm from
    /// each such point and its peak farther away.
    pub e_max_judged_kv_per_mm: f64,
    /// Where it is, [x, y] (or [r, z]).
    pub e_max_judged_at_mm: [f64; 2],
    /// Estimated discretisation error of `e_max_judged_kv_per_mm` from the
    /// mesh self-check (null where it could not bracket it).
    pub e_max_judged_error_estimate_pct: Option<f64>,
    /// Area- (planar) or volume- (axisymmetric) weighted mean field.
    pub e_mean_kv_per_mm: f64,
    /// Largest energy density ½·ε·E².
    pub w_max_j_per_m3: f64,
    /// Largest polarisation energy density ½·ε0·(εr−1)·E².
    pub w_pol_max_j_per_m3: f64,
    /// Typical short-term breakdown strength in the case's convention
    /// (converted from the basis it was measured in; null when the material
    /// has none).
    pub strength_kv_per_mm: Option<f64>,
    /// strength / e_max for solids and liquids; for gas parts judged by
    /// partial-discharge inception, `pd_inception_kv` / working level (null
    /// when there is no strength, no field or no inception level).
    pub margin: Option<f64>,
    /// Gas parts: the level of the largest fixed |potential| at which
    /// partial discharge starts when all fixed potentials scale together,
    /// in the case's convention (null for other parts, and for gas parts
    /// where no level was found).
    pub pd_inception_kv: Option<f64>,
    /// Where the critical field line starts (its high-field end), [x, y].
    pub pd_inception_at_mm: Option<[f64; 2]>,
    /// `townsend` or `streamer`: the criterion that gave the level.
    pub pd_criterion: Option<&'static str>,
    /// Length of the critical field line in gas.
    pub pd_line_length_mm: Option<f64>,
    /// Gas parts judged by inception: strength / e_max of the point field,
    /// for information only.
    pub point_field_margin: Option<f64>,
    /// The level of the largest fixed |potential| this part alone allows
    /// (its margin met exactly), in the case's convention (null as
    /// `allowable_kv`).
    pub allowable_kv: Option<f64>,
    /// The critical field line in mm (drawn on the maps; left out of JSON).
    #[serde(skip)]
    pub pd_line_mm: Vec<[f64; 2]>,
    /// Part verdict.
    pub verdict: VerdictOut,
    /// Estimated discretisation error of `e_max_kv_per_mm` from the mesh
    /// self-check (null where the check could not bracket it).
    pub e_max_error_estimate_pct: Option<f64>,
    /// The peak on the two coarser grids of the self-check (medium, coarse).
    pub e_max_coarser_grids_kv_per_mm: Option<[f64; 2]>,
    /// Observed order of convergence of the peak, where defined.
    pub e_max_observed_order: Option<f64>,
    /// The peak keeps growing under refinement (a singular edge or corner).
    pub e_max_grows_with_refinement: bool,
    /// AC: largest dielectric and conduction loss density, W/m³ (at the
    /// part's peak field; null unless ac).
    pub loss_density_max_w_per_m3: Option<f64>,
    /// AC: the part's loss (W, or W per metre of depth or axial length; null
    /// unless ac).
    pub loss: Option<Quantity>,
    /// AC: conduction against displacement current, σ/(ωε0εr) (null unless
    /// ac).
    pub sigma_over_omega_epsilon: Option<f64>,
    /// AC solved with losses: the phase of the peak field against the
    /// applied voltage, degrees (null otherwise).
    pub e_max_phase_deg: Option<f64>,
    /// DC with a thermal solve: the part's lowest and highest temperature,
    /// °C (null otherwise).
    pub temperature_range_c: Option<[f64; 2]>,
    /// Gas parts: estimated discretisation error of `pd_inception_kv` from
    /// the self-check's three levels (null where one is missing).
    pub pd_inception_error_estimate_pct: Option<f64>,
    /// DC: the peak of the capacitive field of the same potentials (just
    /// after switching on), kV/mm (null unless dc).
    pub e_max_capacitive_kv_per_mm: Option<f64>,
    /// DC: the peak field just after the polarity reverses from +U to −U:
    /// the resistive field plus twice the capacitive change (superposition),
    /// kV/mm (null unless dc).
    pub reversal_e_max_kv_per_mm: Option<f64>,
    /// DC: the time constant ε/σ of the capacitive-to-resistive transition
    /// over the part's temperature range, [shortest, longest], s (null
    /// unless dc).
    pub time_constant_s: Option<[f64; 2]>,
}

/// `operation`
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OperationOut {
    /// `static`, `ac`, `dc` or `impulse`.
    pub mode: &'static str,
    /// AC frequency (null unless ac).
    pub frequency_hz: Option<f64>,
    /// `rms` or `peak`.
    pub values: &'static str,
    /// False when the case gave no `operation:` (the static default).
    pub stated: bool,
    /// AC: true when the field was solved with the losses (complex
    /// admittivities; fields are phasor magnitudes), false when the loss
    /// tangents differ too little to change it (null unless ac).
    pub field_with_losses: Option<bool>,
    /// DC: iterations of the conduction (and thermal) solve (null unless dc).
    pub dc_iterations: Option<usize>,
}

/// `environment`
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EnvironmentOut {
    /// Temperature of parts that state none, °C.
    pub temperature_c: f64,
    /// Gas pressure, kPa absolute.
    pub pressure_kpa: f64,
}

/// `reference`: the same case dry at 20 °C, solved for the stress shift.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReferenceOut {
    /// Temperature of every part, °C.
    pub temperature_c: f64,
    /// Method of the extra solve (the first solve's setup reused).
    pub method: String,
    /// Its iterations.
    pub iterations: usize,
    /// Its true relative residual.
    pub relative_residual: f64,
}

/// `dipole_alignment`: how far the field turns absorbed water's dipoles.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DipoleOut {
    /// The part with the largest alignment.
    pub part: String,
    /// x = p·E/(k·T) with p = 6.17e-30 C·m and E the instantaneous peak field.
    pub x_max: f64,
    /// ⟨cos θ⟩ = L(x), the Langevin function (≈ x/3 while x ≪ 1).
    pub mean_cos_theta: f64,
    /// Linear response holds (x ≤ 0.3).
    pub linear: bool,
}

/// `mesh_check`
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeshCheckOut {
    /// Nodes of the fine (reported), medium and coarse grid.
    pub nodes: [usize; 3],
}

/// One electrode.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ElectrodeOut {
    /// Part name.
    pub name: String,
    /// `fixed` or `floating`.
    pub kind: &'static str,
    /// Potential (solved for floating electrodes).
    pub potential_kv: f64,
    /// Charge by the Gauss flux integral.
    pub charge: Quantity,
}

/// One probe.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProbeOut {
    /// Probe name.
    pub name: String,
    /// Position.
    pub at_mm: [f64; 2],
    /// Part the probe lies in.
    pub part: String,
    /// Potential.
    pub potential_kv: f64,
    /// |E|.
    pub e_kv_per_mm: f64,
    /// Estimated discretisation error of `e_kv_per_mm` from the mesh
    /// self-check (null where it could not be bracketed).
    pub e_error_estimate_pct: Option<f64>,
}

/// One finding.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FindingOut {
    /// Stable kebab-case code.
    pub code: &'static str,
    /// Weight.
    pub severity: SeverityOut,
    /// Part concerned.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub part: Option<String>,
    /// What it means and what to do next.
    pub message: String,
    /// Accepted by a waiver of the case (absent otherwise): it no longer
    /// sets the verdict.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub accepted: Option<AcceptedOut>,
}

/// Who accepted a finding, and why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AcceptedOut {
    /// Why it is acceptable.
    pub reason: String,
    /// Who accepted it.
    pub by: String,
}

/// The result of `check`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CheckReport {
    /// Case verdict.
    pub verdict: VerdictOut,
    /// Case title.
    pub title: String,
    /// `rms` or `peak`: the convention of every voltage, field and strength
    /// in this result.
    pub values: &'static str,
    /// `planar` or `axisymmetric`.
    pub geometry: &'static str,
    /// How the potentials vary in time.
    pub operation: OperationOut,
    /// Surroundings.
    pub environment: EnvironmentOut,
    /// The dry comparison (only when some part is wet or away from 20 °C).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub reference: Option<ReferenceOut>,
    /// Water dipole alignment (only when some part holds water).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dipole_alignment: Option<DipoleOut>,
    /// What extensive results refer to.
    pub results_per: &'static str,
    /// Grid summary.
    pub grid: GridOut,
    /// Solve summary.
    pub solve: SolveOut,
    /// Capacitance from the electrode charge (two distinct fixed potentials only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub capacitance: Option<Quantity>,
    /// Stored electrostatic energy.
    pub energy: Quantity,
    /// Estimated discretisation error of `energy` (and, with two fixed
    /// potentials, of `capacitance`: C = 2W/ΔV²) from the mesh self-check.
    pub energy_error_estimate_pct: Option<f64>,
    /// AC: total dielectric and conduction loss of the case (absent unless
    /// ac).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dielectric_loss: Option<Quantity>,
    /// Field concentration (electrodes at different potentials only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub field_concentration: Option<ConcentrationOut>,
    /// The mesh self-check's grids (absent when it could not run).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mesh_check: Option<MeshCheckOut>,
    /// Solid–gas and solid–liquid surfaces with their largest tangential
    /// field, in the case's convention.
    pub surfaces: Vec<SurfaceOut>,
    /// Points where the drawn geometry has no finite field (sharp electrode
    /// edges and corners, foil ends, dielectric triple points), described
    /// without the grid.
    pub singular_points: Vec<SingularPointOut>,
    /// DC: the charge accumulated on each interface between two insulating
    /// parts (absent unless dc).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub interface_charges: Vec<InterfaceChargeOut>,
    /// The case's limit on the tangential field (null: none given).
    pub surface_tangential_limit_kv_per_mm: Option<f64>,
    /// The lowest `pd_inception_kv` over the gas parts (null without gas
    /// parts that have one), in the case's convention.
    pub pd_inception_kv: Option<f64>,
    /// Required ratio of inception level to working level.
    pub pd_inception_margin: f64,
    /// The largest level of the largest fixed |potential| (all fixed
    /// potentials scaled together), in the case's convention, at which
    /// every part keeps the safety factor on its judged peak and every gas
    /// part the inception margin (null when no part has a margin). Exact
    /// by scaling where the field is linear in the potentials; where it is
    /// not (DC with field- or temperature-dependent conduction), found by
    /// bisection of solves at scaled levels.
    pub allowable_kv: Option<f64>,
    /// The part that sets `allowable_kv`.
    pub allowable_limited_by: Option<String>,
    /// Where `allowable_kv` was found by bisection: the bracket's relative
    /// width (the level given keeps every margin, one higher by this
    /// fraction does not); null where it is exact by scaling.
    pub allowable_bisection_tolerance_pct: Option<f64>,
    /// Estimated discretisation error of `allowable_kv` (that of the
    /// limiting part's judged peak or inception level).
    pub allowable_error_estimate_pct: Option<f64>,
    /// Dielectric parts, background included when it has cells.
    pub parts: Vec<PartOut>,
    /// Electrodes.
    pub electrodes: Vec<ElectrodeOut>,
    /// Probes.
    pub probes: Vec<ProbeOut>,
    /// Sampling lines: a summary each (the samples go to CSV, not JSON).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub lines: Vec<LineOut>,
    /// Findings, most severe first.
    pub findings: Vec<FindingOut>,
    /// The screening caution that goes with every result.
    pub caution: &'static str,
    /// Required safety factor used.
    pub safety_factor: f64,
    /// Result layout version.
    pub format_version: u32,
    /// Version of hvstack that produced the result.
    pub hvstack_version: &'static str,
    /// SHA-256 of the case file's bytes (hex), empty for cases built in code.
    pub case_sha256: String,
}

/// DC: one interface's accumulated charge.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InterfaceChargeOut {
    /// The two parts.
    pub parts: [String; 2],
    /// Net charge (nC, or nC/m).
    pub charge: Quantity,
    /// Mean surface charge density, µC/m².
    pub density_mean_uc_per_m2: f64,
}

/// One solid–fluid surface.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurfaceOut {
    /// The solid part and the gas or liquid part.
    pub parts: [String; 2],
    /// Largest tangential |E| along the surface.
    pub e_tangential_max_kv_per_mm: f64,
    /// Where it occurs, [x, y].
    pub at_mm: [f64; 2],
}

/// A sampling line: where it runs and its largest field.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LineOut {
    /// Name from the case.
    pub name: String,
    /// Start [x, y] in mm.
    pub from_mm: [f64; 2],
    /// End [x, y] in mm.
    pub to_mm: [f64; 2],
    /// Number of samples.
    pub points: usize,
    /// Largest |E| over the samples outside electrodes, kV/mm.
    pub e_max_kv_per_mm: f64,
    /// Where it occurs [x, y] in mm.
    pub e_max_at_mm: [f64; 2],
    /// Estimated discretisation error of `e_max_kv_per_mm` from the mesh
    /// self-check (null where it could not be bracketed).
    pub e_max_error_estimate_pct: Option<f64>,
    /// The samples, start to end (written as CSV, left out of JSON).
    #[serde(skip)]
    pub samples: Vec<LineSampleOut>,
}

/// One sample of a line: a CSV row. In axisymmetric cases x is r and y is z.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LineSampleOut {
    /// Distance from the start in mm.
    pub distance_mm: f64,
    /// x (or r) in mm.
    pub x_mm: f64,
    /// y (or z) in mm.
    pub y_mm: f64,
    /// Potential in kV.
    pub potential_kv: f64,
    /// |E| in kV/mm.
    pub e_kv_per_mm: f64,
    /// E_x (or E_r) in kV/mm.
    pub e_x_kv_per_mm: f64,
    /// E_y (or E_z) in kV/mm.
    pub e_y_kv_per_mm: f64,
    /// Part (or electrode) the sample lies in.
    pub part: String,
    /// `rms` or `peak`: the convention of the potential and field columns.
    pub values: &'static str,
}

/// One material of the built-in library, as listed by `materials`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MaterialOut {
    /// Name used in cases.
    pub name: &'static str,
    /// gas, liquid or solid.
    pub class: &'static str,
    /// Relative permittivity.
    pub permittivity: f64,
    /// Typical short-term breakdown strength, in its basis.
    pub strength_kv_per_mm: Option<f64>,
    /// `rms` or `peak`: how the strength was measured.
    pub strength_basis: &'static str,
    /// Specimen thickness of the strength, where the source states one.
    pub strength_thickness_mm: Option<f64>,
    /// Typical density.
    pub density_kg_per_m3: f64,
    /// Loss tangent.
    pub loss_tangent: Option<f64>,
    /// Source of the values.
    pub source: &'static str,
    /// Range of relative permittivity published for this kind of material.
    pub permittivity_range: [f64; 2],
    /// Range of strength published for it.
    pub strength_range_kv_per_mm: Option<[f64; 2]>,
    /// Volume conductivity at 20 °C, S/m.
    pub conductivity_s_per_m: Option<f64>,
    /// Its temperature coefficient α, 1/K.
    pub conductivity_temperature_per_k: Option<f64>,
    /// Its field coefficient β, mm/kV.
    pub conductivity_field_mm_per_kv: Option<f64>,
    /// Thermal conductivity, W/(m·K).
    pub thermal_conductivity_w_per_m_k: f64,
    /// Source of the conduction and thermal values.
    pub conduction_source: &'static str,
}
