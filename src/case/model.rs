//! The validated case in SI units: what the rest of the pipeline reads.

use crate::materials::{Material, MixingRule};
use crate::shape::{Rect, Shape};
pub use crate::units::Values;

/// Planar or axisymmetric cross-section.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Geometry {
    /// Coordinates (x, y); the field is uniform along the depth z.
    Planar,
    /// Coordinates (r, z); the field is uniform around the axis r = 0.
    Axisymmetric,
}

/// How extensive results (charge, capacitance, energy) are normalised.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Normalisation {
    /// Planar: per metre of depth.
    PerMetreDepth,
    /// Axisymmetric coaxial stack: per metre of axial length, the model
    /// having this axial length in metres.
    PerMetreAxial {
        /// Modelled axial length in m.
        length_m: f64,
    },
    /// Axisymmetric: the whole body of revolution.
    Whole,
}

/// Grid controls in metres.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GridSpec {
    /// Largest step.
    pub max_step: f64,
    /// Smallest step the grading may use (features thinner than this still
    /// get one cell).
    pub min_step: f64,
    /// Cells placed across every interval between feature lines.
    pub cells_across: usize,
    /// Largest ratio between neighbouring steps.
    pub growth: f64,
}

impl GridSpec {
    /// The same spec `factor` times coarser: steps × factor, cells across ÷
    /// factor (at least one).
    pub fn coarsened(&self, factor: f64) -> GridSpec {
        GridSpec {
            max_step: self.max_step * factor,
            min_step: self.min_step * factor,
            cells_across: ((self.cells_across as f64 / factor).round() as usize).max(1),
            growth: self.growth,
        }
    }
}

/// A local refinement box (m).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RefineBox {
    /// The box.
    pub rect: Rect,
    /// Largest step in the rows and columns that cross it.
    pub max_step: f64,
}

/// Index into [`Case::materials`].
pub type MaterialId = usize;

/// What a part is electrically.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Role {
    /// Insulation of the given material.
    Dielectric(MaterialId),
    /// A conductor.
    Electrode(ElectrodeKind),
}

/// How an electrode's potential is set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ElectrodeKind {
    /// Fixed potential in volts.
    Fixed {
        /// Potential in V.
        potential_v: f64,
    },
    /// Unknown potential, zero net charge.
    Floating,
}

/// Absorbed water in a dielectric part.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Water {
    /// Volume fraction of water in the wet material (0 to 1).
    pub volume_fraction: f64,
    /// How the value was given (for reports).
    pub given: WaterGiven,
    /// The mixing rule.
    pub rule: MixingRule,
}

/// How a water content was written in the case.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum WaterGiven {
    /// `volume_pct`: volume of water per volume of wet material, %.
    VolumePct(f64),
    /// `mass_pct`: mass of water per mass of dry material, %.
    MassPct(f64),
}

/// The service conditions of a dielectric part (both optional).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Service {
    /// Temperature in °C (else the environment's).
    pub temperature_c: Option<f64>,
    /// Absorbed water.
    pub water: Option<Water>,
    /// DC electrodes: heat put into the insulation, W over the modelled
    /// extent (per metre of depth when planar).
    pub heat_w: Option<f64>,
}

/// The surroundings of the whole case.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Environment {
    /// Temperature in °C of every part that states none.
    pub temperature_c: f64,
    /// Gas pressure in Pa.
    pub pressure_pa: f64,
}

/// How the applied potentials vary in time.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mode {
    /// A static field: the potentials are instantaneous values, and every
    /// field is the instantaneous (peak) value for them.
    Static,
    /// Sinusoidal AC at `frequency_hz`.
    Ac,
    /// A standard lightning impulse (1.2/50 µs, IEC 60060-1): the
    /// potentials are its peak values; the field is capacitive, with
    /// permittivities taken at `IMPULSE_EQUIVALENT_FREQUENCY_HZ`.
    Impulse,
    /// Steady DC: the field is set by the conductivities σ(T, E)
    /// (div(σ∇φ) = 0), with a thermal solve where electrodes have
    /// temperatures.
    Dc,
}

/// The frequency at which permittivities are taken for an impulse: the
/// bandwidth of its 1.2 µs front by the rise-time rule f ≈ 0.35/t_r
/// (common practice), about 290 kHz.
pub const IMPULSE_EQUIVALENT_FREQUENCY_HZ: f64 = 0.35 / 1.2e-6;

/// The `operation:` of a case.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Operation {
    /// Static or AC.
    pub mode: Mode,
    /// Frequency in Hz (AC; 50 by default, unused when static).
    pub frequency_hz: f64,
    /// The convention of every voltage, field and strength of the case.
    pub values: Values,
    /// False when the case gave no `operation:` (then static, peak).
    pub stated: bool,
}

/// A painted part.
#[derive(Debug, Clone, PartialEq)]
pub struct Part {
    /// Unique name.
    pub name: String,
    /// Dielectric or electrode.
    pub role: Role,
    /// Outline in metres.
    pub shape: Shape,
    /// Key path in the case file (for messages).
    pub key: String,
    /// Line in the case file, where known (for messages).
    pub line: Option<usize>,
    /// Column in the case file, where known (for messages).
    pub column: Option<usize>,
    /// Service conditions (dielectric parts; default for electrodes).
    pub service: Service,
}

/// A finding accepted in the case file: shown as accepted in every
/// report, never dropped.
#[derive(Debug, Clone, PartialEq)]
pub struct Waiver {
    /// The finding's code.
    pub code: String,
    /// The part it concerns (`None`: any part).
    pub part: Option<String>,
    /// Why it is acceptable.
    pub reason: String,
    /// Who accepted it.
    pub by: String,
    /// Key path in the case file (for messages).
    pub key: String,
}

/// A probe point.
#[derive(Debug, Clone, PartialEq)]
pub struct Probe {
    /// Name shown in the report.
    pub name: String,
    /// Position in m.
    pub at: [f64; 2],
}

/// A straight sampling line.
#[derive(Debug, Clone, PartialEq)]
pub struct Line {
    /// Name shown in the report.
    pub name: String,
    /// Start in m.
    pub from: [f64; 2],
    /// End in m.
    pub to: [f64; 2],
    /// Number of sample points, ends included (at least 2).
    pub points: usize,
}

/// A validated case in SI units.
#[derive(Debug, Clone, PartialEq)]
pub struct Case {
    /// Free text.
    pub title: String,
    /// Findings an engineer accepted.
    pub waivers: Vec<Waiver>,
    /// Planar or axisymmetric.
    pub geometry: Geometry,
    /// How extensive results are normalised.
    pub normalisation: Normalisation,
    /// Extent of the cross-section in m.
    pub domain: Rect,
    /// Material of cells no part covers.
    pub background: MaterialId,
    /// Grid controls.
    pub grid: GridSpec,
    /// Local refinement boxes.
    pub refine_boxes: Vec<RefineBox>,
    /// Materials in use (library entries resolved, overrides applied).
    pub materials: Vec<Material>,
    /// Parts in painting order (stack layers and stack electrodes first).
    pub parts: Vec<Part>,
    /// Probe points.
    pub probes: Vec<Probe>,
    /// Sampling lines.
    pub lines: Vec<Line>,
    /// Required ratio of strength to peak field.
    pub safety_factor: f64,
    /// Required ratio of partial-discharge inception level to the working
    /// level (gas parts).
    pub pd_inception_margin: f64,
    /// Largest tangential field along solid–fluid surfaces, V/m in the
    /// case's convention (the engineer's own; `None`: no limit).
    pub surface_tangential_limit: Option<f64>,
    /// Surroundings.
    pub environment: Environment,
    /// Time behaviour and the rms/peak convention.
    pub operation: Operation,
    /// SHA-256 of the case text (hex), set by `parse`; empty for cases
    /// built in code.
    pub source_sha256: String,
    /// Legal values outside the ranges usual in insulation work (probable
    /// unit slips), found by validation; `assess` turns them into warnings.
    pub implausible: Vec<Implausible>,
}

/// The kind of value an [`Implausible`] note is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Magnitude {
    /// A length (m).
    Length,
    /// An electrode potential (V).
    Potential,
    /// The largest difference between fixed potentials (V).
    PotentialDifference,
    /// A breakdown strength (V/m).
    Strength,
    /// A relative permittivity.
    Permittivity,
}

/// A legal value outside the range usual in insulation work.
#[derive(Debug, Clone, PartialEq)]
pub struct Implausible {
    /// Key path of the value.
    pub key: String,
    /// Line in the case file, where known.
    pub line: Option<usize>,
    /// The part, layer or material it belongs to, where one does.
    pub owner: Option<String>,
    /// What kind of value.
    pub quantity: Magnitude,
    /// The value (SI).
    pub value: f64,
    /// The bound it crosses (SI).
    pub bound: f64,
    /// True when the value is above the bound, false when below.
    pub above: bool,
}

impl Case {
    /// Indices of the electrode parts, in painting order.
    pub fn electrodes(&self) -> impl Iterator<Item = (usize, &Part, ElectrodeKind)> {
        self.parts.iter().enumerate().filter_map(|(i, p)| match p.role {
            Role::Electrode(k) => Some((i, p, k)),
            Role::Dielectric(_) => None,
        })
    }
}
