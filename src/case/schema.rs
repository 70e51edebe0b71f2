//! The case file as written (format version 1): a serde mirror of the YAML.
//!
//! Lengths in mm, potentials in kV, strengths in kV/mm. Nothing here is
//! validated beyond its type; `validate` turns it into the SI [`super::Case`].
//! Unknown keys are rejected so a typo never silently falls back to a default.

use schemars::JsonSchema;
use serde::Deserialize;
use std::collections::BTreeMap;

/// The whole case file.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct CaseFile {
    /// Free text.
    pub title: Option<String>,
    /// `planar` or `axisymmetric`.
    pub geometry: Option<GeometryKind>,
    /// Only `mm` in this version.
    pub units: Option<String>,
    /// Extent of the cross-section.
    pub domain: Option<DomainFile>,
    /// Material of every cell no part covers.
    pub background: Option<String>,
    /// Grid controls.
    pub grid: Option<GridFile>,
    /// User materials and overrides of built-in ones.
    pub materials: Option<BTreeMap<String, MaterialFile>>,
    /// Shortcut for layered insulation between two electrodes.
    pub stack: Option<StackFile>,
    /// Parts painted in order.
    pub parts: Option<Vec<PartFile>>,
    /// Points where potential and field are reported.
    pub probes: Option<Vec<ProbeFile>>,
    /// Straight lines along which the field is sampled (CSV in `--report`).
    pub lines: Option<Vec<LineFile>>,
    /// Assessment limits.
    pub limits: Option<LimitsFile>,
    /// Surroundings: temperature and gas pressure.
    pub environment: Option<EnvironmentFile>,
    /// Static or AC, the frequency, and whether values are rms or peak.
    pub operation: Option<OperationFile>,
    /// Findings an engineer has accepted, with the reason and who.
    pub waivers: Option<Vec<WaiverFile>>,
}

/// One entry of `waivers:`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct WaiverFile {
    /// The finding's code, e.g. `singular-peak`.
    pub code: String,
    /// The part it concerns (every part when left out).
    pub part: Option<String>,
    /// Why it is acceptable.
    pub reason: String,
    /// Who accepted it.
    pub by: String,
}

/// `environment:`
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct EnvironmentFile {
    /// Temperature of every part that states none, °C (default 20).
    pub temperature_c: Option<f64>,
    /// Gas pressure, kPa absolute (default 101.325).
    pub pressure_kpa: Option<f64>,
}

/// `operation:`
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct OperationFile {
    /// `static` (instantaneous values, default) or `ac`.
    pub mode: Option<ModeFile>,
    /// AC frequency in Hz (default 50).
    pub frequency_hz: Option<f64>,
    /// `rms` or `peak`: how every voltage, field and strength of the case
    /// is meant (static fields: `peak` only; AC: required).
    pub values: Option<ValuesFile>,
}

/// `operation.mode:` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum ModeFile {
    /// A static field: potentials are instantaneous values.
    Static,
    /// Sinusoidal AC.
    Ac,
    /// A lightning impulse: potentials are the impulse's peak values.
    Impulse,
    /// Steady DC: the field of resistive conduction.
    Dc,
}

/// `rms` or `peak`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum ValuesFile {
    /// Root-mean-square values.
    Rms,
    /// Peak values.
    Peak,
}

/// `water:` of a part or layer: exactly one of `volume_pct` or `mass_pct`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct WaterFile {
    /// Water volume per volume of wet material, %.
    pub volume_pct: Option<f64>,
    /// Water mass per mass of dry material, % (needs the material's density).
    pub mass_pct: Option<f64>,
    /// `looyenga` (default), `maxwell-garnett` or `lichtenecker`.
    pub rule: Option<RuleFile>,
}

/// Mixing rules.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "kebab-case")]
pub enum RuleFile {
    /// Looyenga (1965).
    Looyenga,
    /// Maxwell Garnett (1904), dilute inclusions.
    MaxwellGarnett,
    /// Lichtenecker (1926), logarithmic.
    Lichtenecker,
}

/// `debye:` of a material: a single Debye relaxation.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct DebyeFile {
    /// High-frequency relative permittivity ε∞.
    pub eps_inf: f64,
    /// Relaxation strength Δε = ε_static − ε∞.
    pub delta_eps: f64,
    /// Relaxation time at 20 °C, s.
    pub tau_s: f64,
    /// Activation energy of the relaxation time, eV (default 0).
    pub activation_ev: Option<f64>,
}

/// `townsend:` of a gas: Townsend's ionisation coefficient α = A·p·exp(−B·p/E)
/// and secondary emission γ (p at 20 °C density).
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct TownsendFile {
    /// A, per (Pa·m).
    pub a_per_pa_m: f64,
    /// B, V/(Pa·m).
    pub b_v_per_pa_m: f64,
    /// Secondary emission coefficient γ.
    pub gamma: f64,
}

/// `streamer:` of a gas: the streamer criterion whose uniform-field form is
/// E = (E/p)_cr·p·(1 + B/(p·l)^n).
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct StreamerFile {
    /// (E/p)_cr, V/(Pa·m).
    pub critical_v_per_pa_m: f64,
    /// B, (Pa·m)^n.
    pub b: f64,
    /// The exponent n.
    pub n: f64,
    /// p·l in Pa·m above which it applies (default: the Paschen minimum of
    /// the gas's Townsend constants, else 0).
    pub from_pa_m: Option<f64>,
}

/// `strength_at:` of a material: conditions up to which its strength holds.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct StrengthAtFile {
    /// Highest temperature, °C (default 20).
    pub temperature_c: Option<f64>,
    /// Highest absorbed water, volume % (default 0).
    pub water_volume_pct: Option<f64>,
}

/// `geometry:` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum GeometryKind {
    /// x, y; results per metre of depth.
    Planar,
    /// x = radius r ≥ 0, y = axial z.
    Axisymmetric,
}

/// `domain:`
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct DomainFile {
    /// [x min, x max] in mm.
    pub x: [f64; 2],
    /// [y min, y max] in mm.
    pub y: [f64; 2],
}

/// `grid:`
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct GridFile {
    /// Largest step in mm.
    pub max_step: Option<f64>,
    /// Smallest step the grading may use in mm.
    pub min_step: Option<f64>,
    /// Cells placed across every layer, gap and feature.
    pub cells_across: Option<u32>,
    /// Largest ratio between neighbouring steps.
    pub growth: Option<f64>,
    /// Global refinement factor (2 = steps halved, twice the cells across).
    pub refine: Option<f64>,
    /// Local refinement: rows and columns crossing each box get at most its
    /// `max_step`.
    pub boxes: Option<Vec<BoxFile>>,
}

/// One local refinement box, in mm.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct BoxFile {
    /// [x min, x max]
    pub x: [f64; 2],
    /// [y min, y max]
    pub y: [f64; 2],
    /// Largest step inside the box's rows and columns.
    pub max_step: f64,
}

/// One entry of `materials:`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct MaterialFile {
    /// Built-in material to inherit from.
    pub base: Option<String>,
    /// `gas`, `liquid` or `solid`.
    pub class: Option<ClassFile>,
    /// Relative permittivity.
    pub permittivity: Option<f64>,
    /// Typical short-term breakdown strength in kV/mm.
    pub strength_kv_per_mm: Option<f64>,
    /// Loss tangent.
    pub loss_tangent: Option<f64>,
    /// Where the values come from (required for user values).
    pub source: Option<String>,
    /// `rms` or `peak`: how `strength_kv_per_mm` was measured (required with it).
    pub strength_basis: Option<ValuesFile>,
    /// Conditions up to which the strength holds (default: dry at 20 °C).
    pub strength_at: Option<StrengthAtFile>,
    /// Density in kg/m³ (to convert a water `mass_pct`).
    pub density_kg_per_m3: Option<f64>,
    /// Relative permittivity at temperatures: [[°C, εr], ...], rising.
    pub permittivity_vs_temperature_c: Option<Vec<[f64; 2]>>,
    /// A Debye relaxation (frequency and temperature dependence).
    pub debye: Option<DebyeFile>,
    /// Lightning-impulse (1.2/50 µs) breakdown strength in kV/mm, peak.
    pub impulse_strength_kv_per_mm: Option<f64>,
    /// DC breakdown strength in kV/mm.
    pub dc_strength_kv_per_mm: Option<f64>,
    /// Townsend constants of a gas.
    pub townsend: Option<TownsendFile>,
    /// Streamer constants of a gas.
    pub streamer: Option<StreamerFile>,
    /// Volume conductivity σ0 in S/m at `reference_temperature_c`.
    pub conductivity_s_per_m: Option<f64>,
    /// Temperature at which `conductivity_s_per_m` holds, °C (default 20).
    pub reference_temperature_c: Option<f64>,
    /// α in σ = σ0·exp(α·(T − T_ref))·exp(β·E), 1/K.
    pub conductivity_temperature_per_k: Option<f64>,
    /// β in σ = σ0·exp(α·(T − T_ref))·exp(β·E), mm/kV (default 0).
    pub conductivity_field_mm_per_kv: Option<f64>,
    /// Thermal conductivity in W/(m·K).
    pub thermal_conductivity_w_per_m_k: Option<f64>,
}

/// `class:` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum ClassFile {
    /// A gas.
    Gas,
    /// A liquid.
    Liquid,
    /// A solid.
    Solid,
}

/// `stack:`
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct StackFile {
    /// `planar` or `coaxial`.
    pub form: StackForm,
    /// Potential of the energised face in kV; the outer face is at 0.
    pub voltage_kv: f64,
    /// Planar only: extent along x in mm.
    pub width: Option<f64>,
    /// Coaxial only: radius of the energised conductor in mm.
    pub inner_radius: Option<f64>,
    /// Coaxial only: axial length modelled in mm (results are per metre).
    pub length: Option<f64>,
    /// Layers from the energised face outward.
    pub layers: Vec<LayerFile>,
    /// `mode: dc` only: temperatures of the energised and the earthed face,
    /// °C (boundary values of the thermal solve); `null` for a face without
    /// one (e.g. a conductor given `conductor_heat_w_per_m`).
    pub face_temperatures_c: Option<[Option<f64>; 2]>,
    /// `mode: dc` only: the heat the energised face puts into the
    /// insulation (a cable conductor's loss), W per metre (of depth, or of
    /// axial length), instead of its temperature.
    pub conductor_heat_w_per_m: Option<f64>,
}

/// `stack.form:` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum StackForm {
    /// Layers stacked along y from y = 0.
    Planar,
    /// Layers stacked along r from the inner radius.
    Coaxial,
}

/// One layer of a stack.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct LayerFile {
    /// Optional name; unnamed layers are "layer N".
    pub name: Option<String>,
    /// Material name.
    pub material: String,
    /// Thickness in mm.
    pub thickness: f64,
    /// Temperature in °C (default: the environment's).
    pub temperature_c: Option<f64>,
    /// Absorbed water.
    pub water: Option<WaterFile>,
}

/// One entry of `parts:`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct PartFile {
    /// Unique name.
    pub name: String,
    /// Material (for dielectric parts).
    pub material: Option<String>,
    /// Electrode role (for conductors).
    pub electrode: Option<ElectrodeFile>,
    /// Outline.
    pub shape: ShapeFile,
    /// Temperature in °C (dielectric parts; default: the environment's).
    pub temperature_c: Option<f64>,
    /// `mode: dc`, electrodes only: the heat the electrode puts into the
    /// insulation (its own loss), W per metre of depth (planar) or W
    /// (axisymmetric).
    pub heat_w: Option<f64>,
    /// Absorbed water (dielectric parts).
    pub water: Option<WaterFile>,
}

/// `electrode:` values: `floating` or `{ potential_kv: V }`.
#[derive(Debug, Clone, Copy)]
pub enum ElectrodeFile {
    /// Unknown potential, zero net charge.
    Floating,
    /// Fixed potential in kV.
    PotentialKv(f64),
}

impl JsonSchema for ElectrodeFile {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "Electrode".into()
    }

    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({
            "description": "`floating` (unknown potential, zero net charge) or `{ potential_kv: V }` (fixed potential in kV)",
            "oneOf": [
                { "const": "floating" },
                {
                    "type": "object",
                    "properties": { "potential_kv": { "type": "number" } },
                    "required": ["potential_kv"],
                    "additionalProperties": false
                }
            ]
        })
    }
}

impl<'de> Deserialize<'de> for ElectrodeFile {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        const EXPECTED: &str = "`floating` or `{ potential_kv: <kV> }`";
        impl<'de> serde::de::Visitor<'de> for V {
            type Value = ElectrodeFile;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str(EXPECTED)
            }
            fn visit_str<E: serde::de::Error>(self, v: &str) -> Result<Self::Value, E> {
                match v {
                    "floating" => Ok(ElectrodeFile::Floating),
                    _ => Err(E::invalid_value(serde::de::Unexpected::Str(v), &EXPECTED)),
                }
            }
            fn visit_map<A: serde::de::MapAccess<'de>>(self, mut map: A) -> Result<Self::Value, A::Error> {
                let mut value = None;
                while let Some(key) = map.next_key::<String>()? {
                    match key.as_str() {
                        "potential_kv" if value.is_none() => value = Some(map.next_value::<f64>()?),
                        "potential_kv" => return Err(serde::de::Error::duplicate_field("potential_kv")),
                        other => return Err(serde::de::Error::unknown_field(other, &["potential_kv"])),
                    }
                }
                value.map(ElectrodeFile::PotentialKv).ok_or_else(|| serde::de::Error::missing_field("potential_kv"))
            }
        }
        d.deserialize_any(V)
    }
}

/// `shape:` — exactly one of `rect`, `circle` or `polygon`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ShapeFile {
    /// `{ rect: { x: [a, b], y: [c, d] } }`
    pub rect: Option<RectFile>,
    /// `{ circle: { center: [x, y], radius: r } }`
    pub circle: Option<CircleFile>,
    /// `{ polygon: [[x, y], ...] }`
    pub polygon: Option<Vec<[f64; 2]>>,
    /// With `polygon`: round every corner with this radius (mm).
    pub fillet: Option<f64>,
    /// With `polygon`: edges bent into circular arcs.
    pub arcs: Option<Vec<ArcFile>>,
}

/// One arced edge of a polygon.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ArcFile {
    /// Edge index: edge i runs from vertex i to vertex i + 1 (from 0; the
    /// last edge closes the polygon).
    pub edge: usize,
    /// Radius in mm: positive bulges outward, negative inward.
    pub radius: f64,
}

/// A rectangle in mm.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RectFile {
    /// [x min, x max]
    pub x: [f64; 2],
    /// [y min, y max]
    pub y: [f64; 2],
    /// Corner radius (rounded corners; at most half the shorter side).
    pub radius: Option<f64>,
    /// A foil electrode (zero thickness in x or y) only: the radius of its
    /// rolled or beaded ends, mm — a disc at each end, inside the drawn
    /// length, instead of a sharp foil end.
    pub edge_radius: Option<f64>,
}

/// A circle in mm.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct CircleFile {
    /// Centre [x, y].
    pub center: [f64; 2],
    /// Radius.
    pub radius: f64,
}

/// One entry of `probes:`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ProbeFile {
    /// Name shown in the report.
    pub name: String,
    /// Position [x, y] in mm.
    pub at: [f64; 2],
}

/// One entry of `lines:`: a straight line sampled at evenly spaced points.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct LineFile {
    /// Name shown in the report and used in the CSV file name.
    pub name: String,
    /// Start [x, y] in mm.
    pub from: [f64; 2],
    /// End [x, y] in mm.
    pub to: [f64; 2],
    /// Number of sample points, ends included (default 401).
    pub points: Option<usize>,
}

/// `limits:`
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct LimitsFile {
    /// Required ratio of strength to peak field.
    pub safety_factor: Option<f64>,
    /// Required ratio of a gas part's partial-discharge inception level to
    /// the working level.
    pub pd_inception_margin: Option<f64>,
    /// Largest tangential field allowed along solid–gas and solid–liquid
    /// surfaces, kV/mm in the case's convention (no limit when absent).
    pub surface_tangential_kv_per_mm: Option<f64>,
}

/// The keys each mapping of the case format accepts, by path pattern
/// (sequence items `[]`, names under `materials` `*`). Used to report every
/// unknown key at once with a suggestion; `tests` checks it against the
/// serde definitions above.
pub const KNOWN_KEYS: &[(&str, &[&str])] = &[
    (
        "",
        &[
            "title",
            "geometry",
            "units",
            "domain",
            "background",
            "grid",
            "materials",
            "stack",
            "parts",
            "probes",
            "lines",
            "limits",
            "environment",
            "operation",
            "waivers",
        ],
    ),
    ("environment", &["temperature_c", "pressure_kpa"]),
    ("operation", &["mode", "frequency_hz", "values"]),
    ("domain", &["x", "y"]),
    ("grid", &["max_step", "min_step", "cells_across", "growth", "refine", "boxes"]),
    ("grid.boxes[]", &["x", "y", "max_step"]),
    (
        "materials.*",
        &[
            "base",
            "class",
            "permittivity",
            "strength_kv_per_mm",
            "loss_tangent",
            "source",
            "strength_basis",
            "strength_at",
            "density_kg_per_m3",
            "permittivity_vs_temperature_c",
            "debye",
            "townsend",
            "streamer",
            "impulse_strength_kv_per_mm",
            "dc_strength_kv_per_mm",
            "conductivity_s_per_m",
            "reference_temperature_c",
            "conductivity_temperature_per_k",
            "conductivity_field_mm_per_kv",
            "thermal_conductivity_w_per_m_k",
        ],
    ),
    ("materials.*.townsend", &["a_per_pa_m", "b_v_per_pa_m", "gamma"]),
    ("materials.*.streamer", &["critical_v_per_pa_m", "b", "n", "from_pa_m"]),
    ("materials.*.strength_at", &["temperature_c", "water_volume_pct"]),
    ("materials.*.debye", &["eps_inf", "delta_eps", "tau_s", "activation_ev"]),
    (
        "stack",
        &[
            "form",
            "voltage_kv",
            "width",
            "inner_radius",
            "length",
            "layers",
            "face_temperatures_c",
            "conductor_heat_w_per_m",
        ],
    ),
    ("stack.layers[]", &["name", "material", "thickness", "temperature_c", "water"]),
    ("stack.layers[].water", &["volume_pct", "mass_pct", "rule"]),
    ("parts[]", &["name", "material", "electrode", "shape", "temperature_c", "water", "heat_w"]),
    ("parts[].water", &["volume_pct", "mass_pct", "rule"]),
    ("parts[].electrode", &["potential_kv"]),
    ("parts[].shape", &["rect", "circle", "polygon", "fillet", "arcs"]),
    ("parts[].shape.arcs[]", &["edge", "radius"]),
    ("parts[].shape.rect", &["x", "y", "radius", "edge_radius"]),
    ("parts[].shape.circle", &["center", "radius"]),
    ("probes[]", &["name", "at"]),
    ("lines[]", &["name", "from", "to", "points"]),
    ("limits", &["safety_factor", "pd_inception_margin", "surface_tangential_kv_per_mm"]),
    ("waivers[]", &["code", "part", "reason", "by"]),
];
