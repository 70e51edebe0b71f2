//! What a case may hold: hard limits (beyond them a case is refused, exit
//! status 2) and the ranges usual in insulation work (beyond them a case is
//! evaluated but gets an `implausible-input` warning). README.md lists the
//! same numbers; `tests/suite/cli.rs` checks that it does.
//!
//! The hard limits keep memory and time bounded whatever the input, and
//! keep numbers away from where floating point stops meaning anything (a
//! domain of 1e300 mm, a potential of 1e-30 kV). The plausible ranges catch
//! unit slips: a layer of 2000 mm where 2 was meant, 17 000 kV.

/// Largest case file read, in bytes (64 MiB). Also the largest result JSON
/// `diff` reads.
pub const MAX_CASE_BYTES: u64 = 64 * 1024 * 1024;
/// Most entries of one YAML list or mapping. The largest lists a valid
/// case holds have 1000 entries; far longer ones are refused while the YAML
/// is read, before anything is built per entry (a 48 MB list of six million
/// probes once took 78 s and 7.7 GB to be refused).
pub const MAX_COLLECTION_ENTRIES: usize = 10_000;
/// Most values (scalars and collections) in one document: room for the
/// largest valid case (1000 polygons of 1000 vertices).
pub const MAX_VALUES: usize = 4_000_000;
/// Most problems listed for one case (the rest are mentioned, not listed).
pub const MAX_DIAGNOSTICS: usize = 200;
/// Longest title, in characters.
pub const MAX_TITLE_CHARS: usize = 200;
/// Longest name of a part, layer, material, probe or line, in characters.
pub const MAX_NAME_CHARS: usize = 80;
/// Longest `source:` of a material, in characters.
pub const MAX_SOURCE_CHARS: usize = 1000;
/// Most parts (`parts:` entries).
pub const MAX_PARTS: usize = 1000;
/// Most stack layers.
pub const MAX_LAYERS: usize = 200;
/// Most user materials.
pub const MAX_MATERIALS: usize = 200;
/// Most vertices of one polygon.
pub const MAX_POLYGON_VERTICES: usize = 1000;
/// Most probes.
pub const MAX_PROBES: usize = 1000;
/// Most sampling lines.
pub const MAX_LINES: usize = 100;
/// Most sample points of one line.
pub const MAX_LINE_POINTS: usize = 100_000;
/// Most sample points of all lines together.
pub const MAX_TOTAL_LINE_POINTS: usize = 400_000;
/// Most local refinement boxes.
pub const MAX_REFINE_BOXES: usize = 200;
/// Largest coordinate magnitude, mm (1 km).
pub const MAX_COORDINATE_MM: f64 = 1e6;
/// Smallest non-zero size (thickness, width, radius), mm (0.1 µm).
pub const MIN_SIZE_MM: f64 = 1e-4;
/// Largest potential magnitude, kV (100 MV).
pub const MAX_POTENTIAL_KV: f64 = 1e5;
/// Smallest non-zero potential magnitude, kV (1 mV).
pub const MIN_POTENTIAL_KV: f64 = 1e-6;
/// Largest relative permittivity.
pub const MAX_PERMITTIVITY: f64 = 1e5;
/// Largest breakdown strength, kV/mm.
pub const MAX_STRENGTH_KV_PER_MM: f64 = 1e4;
/// Smallest breakdown strength, kV/mm.
pub const MIN_STRENGTH_KV_PER_MM: f64 = 1e-3;
/// Largest loss tangent.
pub const MAX_LOSS_TANGENT: f64 = 100.0;
/// Conductivities accepted, S/m: from the best insulators (about 1e-20)
/// to semiconducting screens (about 1e3).
pub const CONDUCTIVITY_RANGE_S_PER_M: (f64, f64) = (1e-22, 1e4);
/// Temperature coefficients α of conductivity accepted, 1/K (insulation
/// lies near 0.02–0.15 /K, from memory).
pub const CONDUCTIVITY_TEMPERATURE_RANGE_PER_K: (f64, f64) = (-0.5, 0.5);
/// Field coefficients β of conductivity accepted, mm/kV (XLPE near
/// 0.03–0.1 mm/kV, from memory).
pub const CONDUCTIVITY_FIELD_RANGE_MM_PER_KV: (f64, f64) = (0.0, 2.0);
/// Thermal conductivities accepted, W/(m·K) (gases about 0.01, aluminium
/// nitride about 300).
pub const THERMAL_CONDUCTIVITY_RANGE_W_PER_M_K: (f64, f64) = (1e-3, 500.0);
/// Largest heat input of one electrode, W (or W/m): 1 MW.
pub const MAX_HEAT_W: f64 = 1e6;
/// Temperatures accepted, °C (cryogenic gas insulation aside, insulation
/// runs between these; the water fit holds over 0–100 °C only).
pub const TEMPERATURE_RANGE_C: (f64, f64) = (-100.0, 400.0);
/// Gas pressures accepted, kPa absolute.
pub const PRESSURE_RANGE_KPA: (f64, f64) = (1.0, 10_000.0);
/// AC frequencies accepted, Hz.
pub const FREQUENCY_RANGE_HZ: (f64, f64) = (1e-3, 1e9);
/// Largest safety factor.
pub const MAX_SAFETY_FACTOR: f64 = 100.0;

/// Above this potential magnitude (kV) a case gets `implausible-input`:
/// beyond the highest lightning-impulse test levels of the highest system
/// voltages (about 2400 kV for 1100–1200 kV systems, IEC 60071-1:2019
/// table 3, from memory).
pub const PLAUSIBLE_MAX_POTENTIAL_KV: f64 = 2500.0;
/// Below this largest potential difference (kV) a case gets
/// `implausible-input`: 10 V is below any insulation co-ordination level
/// (IEC 60664-1:2020 starts its tables at 50 V, from memory).
pub const PLAUSIBLE_MIN_DIFFERENCE_KV: f64 = 0.01;
/// Above this domain extent (mm) a case gets `implausible-input` (20 m).
pub const PLAUSIBLE_MAX_EXTENT_MM: f64 = 20_000.0;
/// Above this stack layer thickness (mm) a case gets `implausible-input`.
pub const PLAUSIBLE_MAX_LAYER_MM: f64 = 500.0;
/// Below this size (mm) a case gets `implausible-input` (1 µm; thinner
/// than the thinnest capacitor films, about 2 µm, from memory).
pub const PLAUSIBLE_MIN_SIZE_MM: f64 = 1e-3;
/// Above this strength (kV/mm) a case gets `implausible-input` (thin
/// polypropylene film reaches about 700 kV/mm, from memory).
pub const PLAUSIBLE_MAX_STRENGTH_KV_PER_MM: f64 = 1000.0;
/// Above this relative permittivity a case gets `implausible-input`
/// (ferroelectric ceramics aside, insulation stays below 100, from memory).
pub const PLAUSIBLE_MAX_PERMITTIVITY: f64 = 1000.0;
