//! The built-in material library and the resolved material model.
//!
//! Every value is a *typical screening value*: real strengths fall with
//! thickness, stressed area or volume, temperature, moisture, ageing and
//! waveform. Each entry carries its source; entries whose source says
//! "from memory" must be checked against the supplier's datasheet.

use crate::units;

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
    /// Loss tangent tan δ at power frequency; `None` where not meaningful.
    pub loss_tangent: Option<f64>,
    /// Where the values come from.
    pub source: &'static str,
    /// Range of relative permittivity published for this kind of material.
    pub permittivity_range: (f64, f64),
    /// Range of short-term strength in kV/mm published for it.
    pub strength_range: Option<(f64, f64)>,
}

const FROM_MEMORY: &str = "typical value, from memory — verify with the datasheet";

/// The built-in library, in a fixed order (gases, liquids, solids).
pub const LIBRARY: &[LibraryEntry] = &[
    LibraryEntry {
        name: "air",
        class: MaterialClass::Gas,
        permittivity: 1.0006,
        strength_kv_per_mm: Some(3.0),
        loss_tangent: Some(0.0),
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
        loss_tangent: Some(0.0),
        source: "about 1.0–1.15 × air at 1 bar; typical value, from memory — verify",
        permittivity_range: (1.0, 1.001),
        strength_range: Some((2.5, 10.0)),
    },
    LibraryEntry {
        name: "sf6",
        class: MaterialClass::Gas,
        permittivity: 1.002,
        strength_kv_per_mm: Some(8.9),
        loss_tangent: Some(0.0),
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
        loss_tangent: Some(0.005),
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
        loss_tangent: Some(0.02),
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
        loss_tangent: Some(0.003),
        source: FROM_MEMORY,
        permittivity_range: (3.0, 4.0),
        strength_range: Some((20.0, 80.0)),
    },
    LibraryEntry {
        name: "pressboard",
        class: MaterialClass::Solid,
        permittivity: 4.4,
        strength_kv_per_mm: Some(40.0),
        loss_tangent: Some(0.005),
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
        loss_tangent: Some(0.0002),
        source: FROM_MEMORY,
        permittivity_range: (2.2, 2.4),
        strength_range: Some((20.0, 100.0)),
    },
    LibraryEntry {
        name: "xlpe",
        class: MaterialClass::Solid,
        permittivity: 2.3,
        strength_kv_per_mm: Some(30.0),
        loss_tangent: Some(0.0003),
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
        loss_tangent: Some(0.005),
        source: FROM_MEMORY,
        permittivity_range: (2.5, 3.6),
        strength_range: Some((15.0, 50.0)),
    },
    LibraryEntry {
        name: "silicone-rubber",
        class: MaterialClass::Solid,
        permittivity: 3.0,
        strength_kv_per_mm: Some(20.0),
        loss_tangent: Some(0.003),
        source: "1–2 mm sheet; typical value, from memory — verify with the datasheet",
        permittivity_range: (2.7, 4.6),
        strength_range: Some((10.0, 35.0)),
    },
    LibraryEntry {
        name: "epoxy",
        class: MaterialClass::Solid,
        permittivity: 3.7,
        strength_kv_per_mm: Some(20.0),
        loss_tangent: Some(0.01),
        source: "unfilled cast epoxy, 1–2 mm; typical value, from memory — verify with the datasheet",
        permittivity_range: (3.3, 4.2),
        strength_range: Some((10.0, 45.0)),
    },
    LibraryEntry {
        name: "filled-epoxy",
        class: MaterialClass::Solid,
        permittivity: 4.3,
        strength_kv_per_mm: Some(15.0),
        loss_tangent: Some(0.01),
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
        loss_tangent: Some(0.0002),
        source: FROM_MEMORY,
        permittivity_range: (2.0, 2.2),
        strength_range: Some((15.0, 200.0)),
    },
    LibraryEntry {
        name: "polyimide",
        class: MaterialClass::Solid,
        permittivity: 3.4,
        strength_kv_per_mm: Some(150.0),
        loss_tangent: Some(0.002),
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
        loss_tangent: Some(0.0002),
        source: "thin muscovite splittings; typical value, from memory — verify",
        permittivity_range: (5.0, 8.0),
        strength_range: Some((30.0, 200.0)),
    },
    LibraryEntry {
        name: "porcelain",
        class: MaterialClass::Solid,
        permittivity: 6.0,
        strength_kv_per_mm: Some(18.0),
        loss_tangent: Some(0.015),
        source: FROM_MEMORY,
        permittivity_range: (5.0, 7.5),
        strength_range: Some((10.0, 30.0)),
    },
    LibraryEntry {
        name: "alumina",
        class: MaterialClass::Solid,
        permittivity: 9.5,
        strength_kv_per_mm: Some(15.0),
        loss_tangent: Some(0.0003),
        source: "1–3 mm; typical value, from memory — verify with the datasheet",
        permittivity_range: (8.5, 10.5),
        strength_range: Some((8.0, 35.0)),
    },
    LibraryEntry {
        name: "glass",
        class: MaterialClass::Solid,
        permittivity: 4.8,
        strength_kv_per_mm: Some(20.0),
        loss_tangent: Some(0.005),
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
        loss_tangent: None,
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

/// A material as the solver and the assessment see it (SI units).
#[derive(Debug, Clone, PartialEq)]
pub struct Material {
    /// Name as written in the case.
    pub name: String,
    /// Gas, liquid or solid.
    pub class: MaterialClass,
    /// Relative permittivity εr.
    pub permittivity: f64,
    /// Typical short-term breakdown strength in V/m, if the material has one.
    pub strength_v_per_m: Option<f64>,
    /// Loss tangent, if known.
    pub loss_tangent: Option<f64>,
    /// Where the values come from.
    pub source: String,
    /// True when every value is a generic library value, not a datasheet's.
    pub generic: bool,
    /// User values outside the range published for the base material.
    pub out_of_range: Vec<OutOfRange>,
}

impl Material {
    /// The resolved material of a library entry, converted to SI.
    pub fn from_library(entry: &LibraryEntry) -> Material {
        Material {
            name: entry.name.to_string(),
            class: entry.class,
            permittivity: entry.permittivity,
            strength_v_per_m: entry.strength_kv_per_mm.map(units::kv_per_mm),
            loss_tangent: entry.loss_tangent,
            source: entry.source.to_string(),
            generic: true,
            out_of_range: Vec::new(),
        }
    }

    /// Absolute permittivity ε = ε0·εr in F/m.
    pub fn epsilon(&self) -> f64 {
        units::EPSILON_0 * self.permittivity
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
        }
    }

    #[test]
    fn water_permittivity_matches_published_value() {
        // 80.10 at 20 °C: Malmberg & Maryott, J. Res. NBS 56 (1956) 1–8
        let w = library_entry("water").unwrap();
        assert!((w.permittivity - 80.10).abs() < 0.01);
    }
}
