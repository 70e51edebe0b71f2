//! The built-in material library and the resolved material model.
//!
//! Every value is a *typical screening value*: real strengths fall with
//! thickness, stressed area or volume, temperature, moisture, ageing and
//! waveform. Each entry carries its source; entries whose source says
//! "from memory" must be checked against the supplier's datasheet.

pub mod gas;

use crate::units::{self, Values};

/// The state of a material, which decides which checks apply to it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MaterialClass {
    /// A gas: its breakdown is a discharge, and gaps bounded by solids are
    /// partial-discharge sites.
    Gas,
    /// An insulating liquid.
    Liquid,
    /// A solid insulation.
    Solid,
}

impl MaterialClass {
    /// Lower-case name as used in case files and reports.
    pub fn name(self) -> &'static str {
        match self {
            MaterialClass::Gas => "gas",
            MaterialClass::Liquid => "liquid",
            MaterialClass::Solid => "solid",
        }
    }
}

/// One entry of the built-in library, in the units of the case file.
#[derive(Debug, Clone, Copy)]
pub struct LibraryEntry {
    /// Name used in case files (kebab-case).
    pub name: &'static str,
    /// Gas, liquid or solid.
    pub class: MaterialClass,
    /// Relative permittivity εr at power frequency, about 20 °C.
    pub permittivity: f64,
    /// Typical short-term (power-frequency) breakdown strength in kV/mm;
    /// `None` where the material is no insulator.
    pub strength_kv_per_mm: Option<f64>,
    /// Whether the strength is an rms or a peak value (how it was measured).
    pub strength_basis: Values,
    /// Specimen thickness (or gap) of the strength value in mm, where the
    /// source states one.
    pub strength_thickness_mm: Option<f64>,
    /// Typical density in kg/m³ (to turn a water mass fraction into a
    /// volume fraction).
    pub density_kg_per_m3: f64,
    /// Loss tangent tan δ at power frequency; `None` where not meaningful.
    pub loss_tangent: Option<f64>,
    /// Where the values come from.
    pub source: &'static str,
    /// Range of relative permittivity published for this kind of material.
    pub permittivity_range: (f64, f64),
    /// Range of short-term strength in kV/mm published for it.
    pub strength_range: Option<(f64, f64)>,
    /// Volume conductivity at 20 °C and its temperature and field
    /// coefficients (DC conduction and AC conduction losses).
    pub conduction: Option<LibraryConduction>,
    /// Thermal conductivity in W/(m·K).
    pub thermal_conductivity_w_per_m_k: f64,
    /// Where the conduction and thermal values come from.
    pub conduction_source: &'static str,
}

/// Conduction values of a library entry, in the units of the case file.
#[derive(Debug, Clone, Copy)]
pub struct LibraryConduction {
    /// σ0 at 20 °C, S/m.
    pub sigma_s_per_m: f64,
    /// α in σ = σ0·exp(α·(T − 20 °C)), 1/K.
    pub temperature_per_k: f64,
    /// β in σ ∝ exp(β·E), mm/kV.
    pub field_mm_per_kv: f64,
}

impl LibraryConduction {
    /// The conduction model (SI), referred to 20 °C.
    pub fn model(&self) -> Conduction {
        Conduction {
            sigma0_s_per_m: self.sigma_s_per_m,
            reference_temperature_c: REFERENCE_TEMPERATURE_C,
            alpha_per_k: self.temperature_per_k,
            beta_m_per_v: self.field_mm_per_kv / units::kv_per_mm(1.0),
        }
    }
}

/// Conductivities of insulation scatter by orders of magnitude with
/// formulation, moisture, ageing and the time after energising (the
/// absorption current); these are screening values only.
const CONDUCTION_FROM_MEMORY: &str = "conductivity and thermal conductivity: typical values, from memory — verify \
                                      with measurements of the material";

/// Thermal conductivity from the thermal resistivity of IEC 60287-2-1
/// (2015), table 1 (3.5 K·m/W for PE, XLPE and EPR, 5.0 K·m/W for impregnated
/// paper); conductivity from memory.
const THERMAL_IEC_60287: &str = "thermal conductivity from the thermal resistivity of IEC 60287-2-1 (2015) table 1; \
                                 conductivity and its coefficients typical values, from memory — verify with \
                                 measurements of the material";

/// Pure water's conductivity from its self-ionisation (0.055 µS/cm at
/// 25 °C, common practice for ultrapure water).
const WATER_CONDUCTION: &str = "pure water 5.5 µS/m (self-ionisation, common practice for ultrapure water); \
                                service water conducts far more; thermal conductivity 0.6 W/(m·K) from memory";

const FROM_MEMORY: &str = "typical value, from memory — verify with the datasheet";

/// The built-in library, in a fixed order (gases, liquids, solids).
pub const LIBRARY: &[LibraryEntry] = &[
    LibraryEntry {
        name: "air",
        class: MaterialClass::Gas,
        permittivity: 1.0006,
        strength_kv_per_mm: Some(3.0),
        strength_basis: Values::Peak,
        strength_thickness_mm: Some(10.0),
        density_kg_per_m3: 1.204,
        loss_tangent: Some(0.0),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-14, temperature_per_k: 0.0, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.026,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "strength ≈3 kV/mm for centimetre gaps at 1 bar and 20 °C (Glossary of Meteorology, \
                 American Meteorological Society, 'electrical breakdown'); short gaps withstand more \
                 (Paschen); permittivity from memory",
        permittivity_range: (1.0, 1.001),
        strength_range: Some((2.5, 10.0)),
    },
    LibraryEntry {
        name: "nitrogen",
        class: MaterialClass::Gas,
        permittivity: 1.00055,
        strength_kv_per_mm: Some(3.3),
        strength_basis: Values::Peak,
        strength_thickness_mm: None,
        density_kg_per_m3: 1.165,
        loss_tangent: Some(0.0),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-14, temperature_per_k: 0.0, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.026,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "about 1.0–1.15 × air at 1 bar; typical value, from memory — verify",
        permittivity_range: (1.0, 1.001),
        strength_range: Some((2.5, 10.0)),
    },
    LibraryEntry {
        name: "sf6",
        class: MaterialClass::Gas,
        permittivity: 1.002,
        strength_kv_per_mm: Some(8.9),
        strength_basis: Values::Peak,
        strength_thickness_mm: None,
        density_kg_per_m3: 6.1,
        loss_tangent: Some(0.0),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-14, temperature_per_k: 0.0, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.013,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "critical E/p ≈ 8.9 kV/(mm·bar), here at 1 bar absolute; scale with pressure; \
                 typical value, from memory — verify",
        permittivity_range: (1.0, 1.003),
        strength_range: Some((5.0, 30.0)),
    },
    LibraryEntry {
        name: "mineral-oil",
        class: MaterialClass::Liquid,
        permittivity: 2.2,
        strength_kv_per_mm: Some(12.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: Some(2.5),
        density_kg_per_m3: 880.0,
        loss_tangent: Some(0.005),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-13, temperature_per_k: 0.06, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.13,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "IEC 60156 2.5 mm test cell: new treated oil > 70 kV (28 kV/mm), below 30 kV \
                 (12 kV/mm) it needs treatment; the conservative 12 kV/mm is used because large \
                 oil volumes withstand less than the test cell; permittivity from memory",
        permittivity_range: (2.1, 2.3),
        strength_range: Some((5.0, 30.0)),
    },
    LibraryEntry {
        name: "natural-ester",
        class: MaterialClass::Liquid,
        permittivity: 3.2,
        strength_kv_per_mm: Some(12.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: Some(2.5),
        density_kg_per_m3: 920.0,
        loss_tangent: Some(0.02),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-12, temperature_per_k: 0.06, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.17,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "breakdown voltage similar to mineral oil in the same test cell (Jing et al., IEEE \
                 Trans. Dielectr. Electr. Insul., 2014); taken equal to mineral-oil; permittivity \
                 from memory",
        permittivity_range: (3.0, 3.4),
        strength_range: Some((5.0, 30.0)),
    },
    LibraryEntry {
        name: "oil-impregnated-paper",
        class: MaterialClass::Solid,
        permittivity: 3.5,
        strength_kv_per_mm: Some(40.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: None,
        density_kg_per_m3: 1100.0,
        loss_tangent: Some(0.003),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-14, temperature_per_k: 0.1, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.2,
        conduction_source: THERMAL_IEC_60287,
        source: FROM_MEMORY,
        permittivity_range: (3.0, 4.0),
        strength_range: Some((20.0, 80.0)),
    },
    LibraryEntry {
        name: "pressboard",
        class: MaterialClass::Solid,
        permittivity: 4.4,
        strength_kv_per_mm: Some(40.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: Some(1.5),
        density_kg_per_m3: 1200.0,
        loss_tangent: Some(0.005),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-14, temperature_per_k: 0.1, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.2,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "oil-impregnated pressboard, 1–2 mm; typical value, from memory — verify with the \
                 datasheet",
        permittivity_range: (3.5, 4.8),
        strength_range: Some((20.0, 60.0)),
    },
    LibraryEntry {
        name: "polyethylene",
        class: MaterialClass::Solid,
        permittivity: 2.3,
        strength_kv_per_mm: Some(40.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: None,
        density_kg_per_m3: 930.0,
        loss_tangent: Some(0.0002),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-16, temperature_per_k: 0.084, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.286,
        conduction_source: THERMAL_IEC_60287,
        source: FROM_MEMORY,
        permittivity_range: (2.2, 2.4),
        strength_range: Some((20.0, 100.0)),
    },
    LibraryEntry {
        name: "xlpe",
        class: MaterialClass::Solid,
        permittivity: 2.3,
        strength_kv_per_mm: Some(30.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: None,
        density_kg_per_m3: 920.0,
        loss_tangent: Some(0.0003),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-16, temperature_per_k: 0.084, field_mm_per_kv: 0.0645 }),
        thermal_conductivity_w_per_m_k: 0.286,
        conduction_source: THERMAL_IEC_60287,
        source: "cable-scale short-term strength 30–50 kV/mm, lower end taken; typical value, from \
                 memory — verify with the datasheet",
        permittivity_range: (2.2, 2.5),
        strength_range: Some((20.0, 100.0)),
    },
    LibraryEntry {
        name: "epr",
        class: MaterialClass::Solid,
        permittivity: 3.0,
        strength_kv_per_mm: Some(25.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: None,
        density_kg_per_m3: 1250.0,
        loss_tangent: Some(0.005),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-15, temperature_per_k: 0.08, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.286,
        conduction_source: THERMAL_IEC_60287,
        source: FROM_MEMORY,
        permittivity_range: (2.5, 3.6),
        strength_range: Some((15.0, 50.0)),
    },
    LibraryEntry {
        name: "silicone-rubber",
        class: MaterialClass::Solid,
        permittivity: 3.0,
        strength_kv_per_mm: Some(20.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: Some(1.5),
        density_kg_per_m3: 1150.0,
        loss_tangent: Some(0.003),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-13, temperature_per_k: 0.05, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.25,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "1–2 mm sheet; typical value, from memory — verify with the datasheet",
        permittivity_range: (2.7, 4.6),
        strength_range: Some((10.0, 35.0)),
    },
    LibraryEntry {
        name: "epoxy",
        class: MaterialClass::Solid,
        permittivity: 3.7,
        strength_kv_per_mm: Some(20.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: Some(1.5),
        density_kg_per_m3: 1200.0,
        loss_tangent: Some(0.01),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-15, temperature_per_k: 0.1, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.2,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "unfilled cast epoxy, 1–2 mm; typical value, from memory — verify with the datasheet",
        permittivity_range: (3.3, 4.2),
        strength_range: Some((10.0, 45.0)),
    },
    LibraryEntry {
        name: "filled-epoxy",
        class: MaterialClass::Solid,
        permittivity: 4.3,
        strength_kv_per_mm: Some(15.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: Some(2.5),
        density_kg_per_m3: 1800.0,
        loss_tangent: Some(0.01),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-15, temperature_per_k: 0.1, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.8,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "silica-filled cast epoxy, 2–3 mm; typical value, from memory — verify with the \
                 datasheet",
        permittivity_range: (3.5, 6.5),
        strength_range: Some((10.0, 35.0)),
    },
    LibraryEntry {
        name: "ptfe",
        class: MaterialClass::Solid,
        permittivity: 2.1,
        strength_kv_per_mm: Some(25.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: None,
        density_kg_per_m3: 2200.0,
        loss_tangent: Some(0.0002),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-18, temperature_per_k: 0.05, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.25,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: FROM_MEMORY,
        permittivity_range: (2.0, 2.2),
        strength_range: Some((15.0, 200.0)),
    },
    LibraryEntry {
        name: "polyimide",
        class: MaterialClass::Solid,
        permittivity: 3.4,
        strength_kv_per_mm: Some(150.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: Some(0.025),
        density_kg_per_m3: 1420.0,
        loss_tangent: Some(0.002),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-16, temperature_per_k: 0.05, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.12,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "film about 25 µm thick (ASTM D149 short-time method); falls with thickness; \
                 typical value, from memory — verify with the datasheet",
        permittivity_range: (3.0, 3.6),
        strength_range: Some((50.0, 300.0)),
    },
    LibraryEntry {
        name: "mica",
        class: MaterialClass::Solid,
        permittivity: 7.0,
        strength_kv_per_mm: Some(100.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: None,
        density_kg_per_m3: 2800.0,
        loss_tangent: Some(0.0002),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-14, temperature_per_k: 0.05, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.5,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "thin muscovite splittings; typical value, from memory — verify",
        permittivity_range: (5.0, 8.0),
        strength_range: Some((30.0, 200.0)),
    },
    LibraryEntry {
        name: "porcelain",
        class: MaterialClass::Solid,
        permittivity: 6.0,
        strength_kv_per_mm: Some(18.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: None,
        density_kg_per_m3: 2400.0,
        loss_tangent: Some(0.015),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-12, temperature_per_k: 0.05, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 1.5,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: FROM_MEMORY,
        permittivity_range: (5.0, 7.5),
        strength_range: Some((10.0, 30.0)),
    },
    LibraryEntry {
        name: "alumina",
        class: MaterialClass::Solid,
        permittivity: 9.5,
        strength_kv_per_mm: Some(15.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: Some(2.0),
        density_kg_per_m3: 3900.0,
        loss_tangent: Some(0.0003),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-14, temperature_per_k: 0.05, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 25.0,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "1–3 mm; typical value, from memory — verify with the datasheet",
        permittivity_range: (8.5, 10.5),
        strength_range: Some((8.0, 35.0)),
    },
    LibraryEntry {
        name: "glass",
        class: MaterialClass::Solid,
        permittivity: 4.8,
        strength_kv_per_mm: Some(20.0),
        strength_basis: Values::Rms,
        strength_thickness_mm: None,
        density_kg_per_m3: 2230.0,
        loss_tangent: Some(0.005),
        conduction: Some(LibraryConduction { sigma_s_per_m: 1e-12, temperature_per_k: 0.08, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 1.0,
        conduction_source: CONDUCTION_FROM_MEMORY,
        source: "borosilicate; 10–40 kV/mm, strongly dependent on thickness and temperature; \
                 typical value, from memory — verify",
        permittivity_range: (4.0, 8.0),
        strength_range: Some((5.0, 50.0)),
    },
    LibraryEntry {
        name: "water",
        class: MaterialClass::Liquid,
        permittivity: 80.1,
        strength_kv_per_mm: None,
        strength_basis: Values::Rms,
        strength_thickness_mm: None,
        density_kg_per_m3: 998.2,
        loss_tangent: None,
        conduction: Some(LibraryConduction { sigma_s_per_m: 5.5e-06, temperature_per_k: 0.02, field_mm_per_kv: 0.0 }),
        thermal_conductivity_w_per_m_k: 0.6,
        conduction_source: WATER_CONDUCTION,
        source: "εr 80.10 at 20 °C (Malmberg & Maryott, J. Res. NBS 56, 1956); conducting at power \
                 frequency, not an insulator",
        permittivity_range: (55.0, 88.0),
        strength_range: None,
    },
];

/// Looks a name up in the built-in library.
pub fn library_entry(name: &str) -> Option<&'static LibraryEntry> {
    LIBRARY.iter().find(|e| e.name == name)
}

/// Which value of a material is meant.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// Relative permittivity.
    Permittivity,
    /// Short-term breakdown strength.
    Strength,
}

/// A user value outside the range published for the material it is based on.
#[derive(Debug, Clone, PartialEq)]
pub struct OutOfRange {
    /// Which value.
    pub quantity: Quantity,
    /// The value (εr, or V/m for strength).
    pub value: f64,
    /// The published range (εr, or V/m).
    pub range: (f64, f64),
    /// The library material it was compared with.
    pub base: String,
}

/// Temperature of the library values and of the dry comparison, °C.
pub const REFERENCE_TEMPERATURE_C: f64 = 20.0;

/// Frequency at which library permittivities hold (power frequency), Hz.
pub const REFERENCE_FREQUENCY_HZ: f64 = 50.0;

/// How the permittivity of a material depends on its state.
#[derive(Debug, Clone, PartialEq)]
pub enum PermittivityModel {
    /// One value at every temperature and frequency.
    Constant,
    /// Piecewise linear in temperature through (°C, εr) points in rising
    /// temperature; held at the end values outside them.
    Table(Vec<[f64; 2]>),
    /// A Debye relaxation.
    Debye(Debye),
    /// Liquid water (Malmberg & Maryott 1956), see [`water_permittivity`].
    Water,
}

/// A single Debye relaxation, ε*(ω) = ε∞ + Δε/(1 + jωτ), with an
/// Arrhenius relaxation time τ(T) = τ₂₀·exp(Ea/k·(1/T − 1/T₂₀)) (Debye,
/// *Polar Molecules*, 1929; the Arrhenius form is common practice for
/// dipolar relaxations). Engineering sign: ε* = ε′ − jε″.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Debye {
    /// High-frequency permittivity ε∞.
    pub eps_inf: f64,
    /// Relaxation strength Δε = ε_s − ε∞.
    pub delta_eps: f64,
    /// Relaxation time at 20 °C, s.
    pub tau_s: f64,
    /// Activation energy of τ, eV (0: τ independent of temperature).
    pub activation_ev: f64,
}

impl Debye {
    /// The relaxation time at `t_c` °C, s.
    pub fn tau_at(&self, t_c: f64) -> f64 {
        let ea = self.activation_ev * units::ELEMENTARY_CHARGE / units::BOLTZMANN;
        self.tau_s * (ea * (1.0 / units::kelvin(t_c) - 1.0 / units::kelvin(REFERENCE_TEMPERATURE_C))).exp()
    }

    /// (ε′, ε″) at `f_hz` and `t_c`: ε′ = ε∞ + Δε/(1 + ω²τ²),
    /// ε″ = Δε·ωτ/(1 + ω²τ²).
    pub fn at(&self, f_hz: f64, t_c: f64) -> (f64, f64) {
        let wt = 2.0 * std::f64::consts::PI * f_hz * self.tau_at(t_c);
        let d = 1.0 + wt * wt;
        (self.eps_inf + self.delta_eps / d, self.delta_eps * wt / d)
    }
}

/// Relative permittivity of liquid water at `t_c` °C: ε = 87.740 −
/// 0.40008·t + 9.398e-4·t² − 1.410e-6·t³ (Malmberg & Maryott, J. Res. NBS
/// 56(1), 1956, fitted over 0–100 °C). Static value: water's dipolar
/// relaxation lies near 20 GHz, so it holds at every technical frequency.
pub fn water_permittivity(t_c: f64) -> f64 {
    87.740 - 0.40008 * t_c + 9.398e-4 * t_c * t_c - 1.410e-6 * t_c * t_c * t_c
}

/// The temperature range of the water fit, °C.
pub const WATER_FIT_RANGE_C: (f64, f64) = (0.0, 100.0);

/// Dipole moment of a water molecule, C·m: 1.85 D (Lide, CRC Handbook of
/// Chemistry and Physics; 1 D = 3.335 64e-30 C·m), the isolated molecule's
/// value (in the liquid the effective moment is larger, from memory).
pub const WATER_DIPOLE_MOMENT: f64 = 6.17e-30;

/// Density of liquid water at 20 °C, kg/m³ (CRC Handbook of Chemistry and
/// Physics, from memory).
pub const WATER_DENSITY_KG_PER_M3: f64 = 998.2;

/// How absorbed water and its host combine to one permittivity.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MixingRule {
    /// ε^(1/3) = (1 − f)·ε_h^(1/3) + f·ε_w^(1/3) (Looyenga, Physica 31, 1965).
    Looyenga,
    /// Dilute spheres in the host: ε = ε_h·(ε_w + 2ε_h + 2f(ε_w − ε_h)) /
    /// (ε_w + 2ε_h − f(ε_w − ε_h)) (Maxwell Garnett, Phil. Trans. R. Soc. A
    /// 203, 1904).
    MaxwellGarnett,
    /// ln ε = (1 − f)·ln ε_h + f·ln ε_w (Lichtenecker, Phys. Z. 27, 1926).
    Lichtenecker,
}

impl MixingRule {
    /// The name used in case files.
    pub fn name(self) -> &'static str {
        match self {
            MixingRule::Looyenga => "looyenga",
            MixingRule::MaxwellGarnett => "maxwell-garnett",
            MixingRule::Lichtenecker => "lichtenecker",
        }
    }
}

/// The default mixing rule: Looyenga, the highest of the three for small
/// water contents, so the one that moves the most stress onto dry
/// neighbours (the cautious choice for screening them).
pub const DEFAULT_MIXING_RULE: MixingRule = MixingRule::Looyenga;

/// Above this water volume fraction Maxwell Garnett (a dilute-inclusion
/// model) is outside its range (from memory: dilute means about 10 %).
pub const MAXWELL_GARNETT_LIMIT: f64 = 0.10;

/// Above this water volume fraction no rule describes absorbed water: the
/// part is wet through (saturated polymers hold well under 10 %, from
/// memory).
pub const ABSORBED_WATER_LIMIT: f64 = 0.20;

/// The permittivity of a host `eh` holding a volume fraction `f` of water
/// of permittivity `ew`, by `rule`.
pub fn mix(eh: f64, ew: f64, f: f64, rule: MixingRule) -> f64 {
    match rule {
        MixingRule::Looyenga => ((1.0 - f) * eh.cbrt() + f * ew.cbrt()).powi(3),
        MixingRule::MaxwellGarnett => {
            let d = ew - eh;
            eh * (ew + 2.0 * eh + 2.0 * f * d) / (ew + 2.0 * eh - f * d)
        }
        MixingRule::Lichtenecker => ((1.0 - f) * eh.ln() + f * ew.ln()).exp(),
    }
}

/// The Wiener bounds of a two-phase mixture: (series, parallel), i.e. the
/// harmonic and arithmetic means (Wiener, Abh. Sächs. Ges. Wiss. 32, 1912).
/// Every mixing rule must give a value between them.
pub fn wiener_bounds(eh: f64, ew: f64, f: f64) -> (f64, f64) {
    (1.0 / ((1.0 - f) / eh + f / ew), (1.0 - f) * eh + f * ew)
}

/// Volume fraction of water from its mass per mass of dry host (`x`, a
/// fraction) and the two densities, volumes taken as additive.
pub fn volume_fraction_from_mass(x: f64, host_density: f64) -> f64 {
    let vw = x / WATER_DENSITY_KG_PER_M3;
    vw / (vw + 1.0 / host_density)
}

/// Conditions up to which a (user) strength value holds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StrengthConditions {
    /// Highest temperature, °C.
    pub temperature_c: f64,
    /// Highest water volume fraction.
    pub water_volume_fraction: f64,
}

/// A material as the solver and the assessment see it (SI units).
#[derive(Debug, Clone, PartialEq)]
pub struct Material {
    /// Name as written in the case.
    pub name: String,
    /// Gas, liquid or solid.
    pub class: MaterialClass,
    /// Relative permittivity εr dry, at 20 °C and power frequency (the
    /// reference value; the model gives it at other states).
    pub permittivity: f64,
    /// How εr depends on temperature and frequency.
    pub model: PermittivityModel,
    /// Typical short-term breakdown strength in V/m, if the material has one,
    /// as measured (see `strength_basis`).
    pub strength_v_per_m: Option<f64>,
    /// Whether the strength is an rms or a peak value.
    pub strength_basis: Values,
    /// Lightning-impulse strength (peak) in V/m, where given.
    pub impulse_strength_v_per_m: Option<f64>,
    /// DC strength in V/m, where given.
    pub dc_strength_v_per_m: Option<f64>,
    /// Specimen thickness of the strength value in m, where known.
    pub strength_thickness_m: Option<f64>,
    /// Conditions up to which the strength holds (library values: dry at 20 °C).
    pub strength_conditions: StrengthConditions,
    /// Density in kg/m³, where known.
    pub density_kg_per_m3: Option<f64>,
    /// Loss tangent, if known.
    pub loss_tangent: Option<f64>,
    /// Where the values come from.
    pub source: String,
    /// True when every value is a generic library value, not a datasheet's.
    pub generic: bool,
    /// User values outside the range published for the base material.
    pub out_of_range: Vec<OutOfRange>,
    /// How a gas starts to discharge (gases only; `None` for a gas without
    /// constants, which is then judged by its point strength alone).
    pub gas: Option<gas::GasModel>,
    /// Volume conduction, where known.
    pub conduction: Option<Conduction>,
    /// Thermal conductivity in W/(m·K), where known.
    pub thermal_conductivity_w_per_m_k: Option<f64>,
}

/// Volume conduction of an insulation:
/// σ(T, E) = σ0·exp(α·(T − T_ref))·exp(β·E), the empirical form used for
/// HVDC cable insulation (common practice; the coefficients are fits to
/// measurements over a limited range).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Conduction {
    /// σ0 at the reference temperature, S/m.
    pub sigma0_s_per_m: f64,
    /// Reference temperature T_ref, °C.
    pub reference_temperature_c: f64,
    /// α, 1/K.
    pub alpha_per_k: f64,
    /// β, m/V.
    pub beta_m_per_v: f64,
}

impl Conduction {
    /// σ at `t_c` °C and field magnitude `e_v_per_m`, S/m.
    pub fn at(&self, t_c: f64, e_v_per_m: f64) -> f64 {
        self.sigma0_s_per_m
            * (self.alpha_per_k * (t_c - self.reference_temperature_c) + self.beta_m_per_v * e_v_per_m).exp()
    }
}

/// The conditions of library strengths: dry, at 20 °C.
pub const DRY_AT_REFERENCE: StrengthConditions =
    StrengthConditions { temperature_c: REFERENCE_TEMPERATURE_C, water_volume_fraction: 0.0 };

impl Material {
    /// The resolved material of a library entry, converted to SI.
    pub fn from_library(entry: &LibraryEntry) -> Material {
        Material {
            name: entry.name.to_string(),
            class: entry.class,
            permittivity: entry.permittivity,
            model: if entry.name == "water" { PermittivityModel::Water } else { PermittivityModel::Constant },
            strength_v_per_m: entry.strength_kv_per_mm.map(units::kv_per_mm),
            strength_basis: entry.strength_basis,
            impulse_strength_v_per_m: None,
            dc_strength_v_per_m: None,
            strength_thickness_m: entry.strength_thickness_mm.map(units::mm),
            strength_conditions: DRY_AT_REFERENCE,
            density_kg_per_m3: Some(entry.density_kg_per_m3),
            loss_tangent: entry.loss_tangent,
            source: entry.source.to_string(),
            generic: true,
            out_of_range: Vec::new(),
            gas: gas::library_model(entry.name),
            conduction: entry.conduction.map(|c| c.model()),
            thermal_conductivity_w_per_m_k: Some(entry.thermal_conductivity_w_per_m_k),
        }
    }

    /// Relative permittivity (real part) at `t_c` °C and `f_hz` (0 for a
    /// static field).
    pub fn permittivity_at(&self, t_c: f64, f_hz: f64) -> f64 {
        match &self.model {
            PermittivityModel::Constant => self.permittivity,
            PermittivityModel::Table(points) => interpolate(points, t_c),
            PermittivityModel::Debye(d) => d.at(f_hz, t_c).0,
            PermittivityModel::Water => water_permittivity(t_c),
        }
    }

    /// The dielectric loss factor ε″ (relative, conduction excluded) at
    /// `t_c` °C and `f_hz`: the Debye relaxation's where the material has
    /// one, else ε′·tan δ with the material's loss tangent (0 without one).
    pub fn loss_factor_at(&self, t_c: f64, f_hz: f64) -> f64 {
        match &self.model {
            PermittivityModel::Debye(d) => d.at(f_hz, t_c).1,
            _ => self.permittivity_at(t_c, f_hz) * self.loss_tangent.unwrap_or(0.0),
        }
    }

    /// The temperature range (°C) the permittivity model holds over, where
    /// it has one.
    pub fn temperature_range(&self) -> Option<(f64, f64)> {
        match &self.model {
            PermittivityModel::Table(points) => Some((points[0][0], points[points.len() - 1][0])),
            PermittivityModel::Water => Some(WATER_FIT_RANGE_C),
            PermittivityModel::Constant | PermittivityModel::Debye(_) => None,
        }
    }

    /// The strength converted to the convention `values` (sinusoidal
    /// waveform), V/m.
    pub fn strength_in(&self, values: Values) -> Option<f64> {
        self.strength_v_per_m.map(|s| s * values.factor_from(self.strength_basis))
    }
}

/// Piecewise linear interpolation through (x, y) points in rising x, held
/// at the end values outside them.
fn interpolate(points: &[[f64; 2]], x: f64) -> f64 {
    let k = points.partition_point(|p| p[0] <= x);
    match k {
        0 => points[0][1],
        k if k == points.len() => points[k - 1][1],
        k => {
            let ([x0, y0], [x1, y1]) = (points[k - 1], points[k]);
            y0 + (y1 - y0) * (x - x0) / (x1 - x0)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn library_names_are_unique_kebab_case_and_values_physical() {
        for (i, e) in LIBRARY.iter().enumerate() {
            assert!(e.name.chars().all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '-'));
            assert!(LIBRARY[i + 1..].iter().all(|o| o.name != e.name), "{}", e.name);
            assert!(e.permittivity >= 1.0, "{}", e.name);
            assert!(e.strength_kv_per_mm.is_none_or(|s| s > 0.0), "{}", e.name);
            assert!(!e.source.is_empty());
            // conduction values within what a case may state, with a source
            let (lo, hi) = crate::case::limits::CONDUCTIVITY_RANGE_S_PER_M;
            assert!(e.conduction.is_none_or(|c| (lo..=hi).contains(&c.sigma_s_per_m)), "{}", e.name);
            assert!(e.thermal_conductivity_w_per_m_k > 0.0 && !e.conduction_source.is_empty(), "{}", e.name);
        }
    }

    #[test]
    fn water_permittivity_matches_published_value() {
        // 80.10 at 20 °C: Malmberg & Maryott, J. Res. NBS 56 (1956) 1–8
        let w = library_entry("water").unwrap();
        assert!((w.permittivity - 80.10).abs() < 0.01);
        // 78.30 at 25 °C and 69.91 at 50 °C: Malmberg & Maryott 1956
        assert!((water_permittivity(25.0) - 78.30).abs() < 0.005);
        assert!((water_permittivity(50.0) - 69.91).abs() < 0.005);
        assert!((Material::from_library(w).permittivity_at(25.0, 50.0) - 78.30).abs() < 0.005);
    }

    #[test]
    fn mixing_rules_match_published_forms_and_stay_within_the_wiener_bounds() {
        // host εr 3.6 with water (80.10 at 20 °C, Malmberg & Maryott 1956);
        // expected values from the closed forms: Maxwell Garnett (1904),
        // Lichtenecker (1926), Looyenga (Physica 31, 1965)
        let ew = water_permittivity(20.0);
        for (f, mg, li, lo) in [(0.01, 3.695, 3.713, 3.799), (0.05, 4.095, 4.204, 4.670)] {
            assert!((mix(3.6, ew, f, MixingRule::MaxwellGarnett) - mg).abs() < 0.0015, "MG {f}");
            assert!((mix(3.6, ew, f, MixingRule::Lichtenecker) - li).abs() < 0.0015, "Li {f}");
            assert!((mix(3.6, ew, f, MixingRule::Looyenga) - lo).abs() < 0.0015, "Lo {f}");
            let (lo_b, hi_b) = wiener_bounds(3.6, ew, f);
            for rule in [MixingRule::MaxwellGarnett, MixingRule::Lichtenecker, MixingRule::Looyenga] {
                let e = mix(3.6, ew, f, rule);
                assert!(lo_b <= e && e <= hi_b, "{rule:?} {f}: {e} outside [{lo_b}, {hi_b}]");
            }
        }
    }

    #[test]
    fn debye_loss_peaks_at_half_the_strength_where_omega_tau_is_one() {
        // ε″ = Δε·ωτ/(1 + ω²τ²) peaks at Δε/2 for ωτ = 1 (Debye 1929)
        let d = Debye { eps_inf: 3.0, delta_eps: 0.8, tau_s: 1e-3, activation_ev: 0.0 };
        let f = 1.0 / (2.0 * std::f64::consts::PI * 1e-3);
        let (re, im) = d.at(f, 20.0);
        assert!((im - 0.4).abs() < 1e-12 && (re - 3.4).abs() < 1e-12);
        assert!(d.at(0.1 * f, 20.0).1 < im && d.at(10.0 * f, 20.0).1 < im);
        assert!((d.at(0.0, 20.0).0 - 3.8).abs() < 1e-12, "static: ε∞ + Δε");
        // Arrhenius: with 1 eV, τ falls about 3.7-fold from 20 to 30 °C (from the form)
        let hot = Debye { activation_ev: 1.0, ..d };
        let ratio = hot.tau_at(20.0) / hot.tau_at(30.0);
        let expected = (1.0f64 / 8.617_333e-5 * (1.0 / 293.15 - 1.0 / 303.15)).exp();
        assert!((ratio - expected).abs() < 1e-6 * ratio);
    }

    #[test]
    fn a_mass_fraction_becomes_a_volume_fraction_by_the_densities() {
        // 2 g of water per 100 g of a host of 1200 kg/m³: (2/998.2)/(2/998.2 + 100/1200) (additive volumes)
        let f = volume_fraction_from_mass(0.02, 1200.0);
        assert!((f - 0.023_475).abs() < 1e-5, "{f}");
    }

    #[test]
    fn strengths_convert_between_rms_and_peak() {
        // sinusoid: peak = √2·rms (common practice); oil's 12 kV/mm is an rms value (IEC 60156)
        let oil = Material::from_library(library_entry("mineral-oil").unwrap());
        assert_eq!(oil.strength_basis, Values::Rms);
        let peak = oil.strength_in(Values::Peak).unwrap();
        assert!((peak - 12e6 * 2f64.sqrt()).abs() < 1.0);
        let air = Material::from_library(library_entry("air").unwrap());
        assert!((air.strength_in(Values::Rms).unwrap() - 3e6 / 2f64.sqrt()).abs() < 1.0);
    }
}
