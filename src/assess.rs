//! Stage 6: margins, verdicts and findings. Pure judgement on SI values; no
//! text is produced here (`report` words the findings).
//!
//! * margin = typical breakdown strength / peak field of the part;
//! * part verdict: fail if margin < 1, review if margin < safety factor (or
//!   the material has no strength value), else pass;
//! * case verdict: the worst part verdict, raised to review by any warning
//!   finding and to fail by any fail finding.

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
        /// The peak sits at a sharp feature of an electrode.
        at_edge: bool,
    },
    /// The estimated discretisation error of the peak is above the limit.
    MeshSensitive {
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
            FindingKind::MeshUnbracketed => "mesh-check-unbracketed",
            FindingKind::MeshCheckFailed => "mesh-check-failed",
            FindingKind::ValueOutOfRange { .. } => "value-out-of-range",
            FindingKind::ImplausibleInput(_) => "implausible-input",
        }
    }

    /// How much it weighs.
    pub fn severity(&self) -> Severity {
        match self {
            FindingKind::AboveBreakdown { .. } | FindingKind::GasAboveBreakdown { .. } => Severity::Fail,
            FindingKind::GenericMaterial { .. } => Severity::Info,
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
}

/// Field concentration over the whole case.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Concentration {
    /// Highest field in any dielectric part, V/m.
    pub e_max: f64,
    /// Shortest distance between electrodes at different potentials, m.
    pub gap: f64,
    /// Largest potential difference / gap, V/m.
    pub e_uniform: f64,
    /// Field enhancement factor e_max / e_uniform.
    pub factor: f64,
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
    /// When there are exactly two distinct fixed potentials.
    pub capacitance: Option<Capacitance>,
    /// When electrodes at different potentials exist.
    pub concentration: Option<Concentration>,
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

/// Judges the solved case; `check` is the mesh self-check (`None` when it
/// could not be run, which is itself a finding).
pub fn assess(case: &Case, layout: &Layout, fields: &Fields, check: Option<&MeshCheck>) -> Assessment {
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
        let margin = m.strength_v_per_m.filter(|_| f.e_max > 0.0).map(|s| s / f.e_max);
        let verdict = part_verdict(margin, m.strength_v_per_m.is_some(), case.safety_factor);
        let part = Some(region.name.clone());
        match (m.strength_v_per_m, margin) {
            (None, _) => findings
                .push(Finding { kind: FindingKind::NoStrength { material: m.name.clone() }, part: part.clone() }),
            (Some(strength), Some(mg)) if mg < 1.0 => {
                let kind = if m.class == MaterialClass::Gas {
                    FindingKind::GasAboveBreakdown { e_max: f.e_max, strength }
                } else {
                    FindingKind::AboveBreakdown { e_max: f.e_max, strength }
                };
                findings.push(Finding { kind, part: part.clone() });
            }
            (Some(_), Some(mg)) if mg < case.safety_factor => findings.push(Finding {
                kind: FindingKind::BelowSafetyFactor { margin: mg, required: case.safety_factor },
                part: part.clone(),
            }),
            _ => {}
        }
        if let Some(c) = check.map(|c| &c.regions[r]) {
            let kind = match c.error_estimate {
                _ if c.growing || f.at_sharp_edge => {
                    Some(FindingKind::SingularPeak { e_max: c.e_max, at_edge: f.at_sharp_edge })
                }
                None => Some(FindingKind::MeshUnbracketed),
                Some(e) if e > MESH_ERROR_LIMIT => Some(FindingKind::MeshSensitive { estimate: e }),
                Some(_) => None,
            };
            if let Some(kind) = kind {
                findings.push(Finding { kind, part: part.clone() });
            }
        }
        if region.cells_across < MIN_CELLS_ACROSS {
            findings.push(Finding { kind: FindingKind::CoarseGrid { cells_across: region.cells_across }, part });
        }
        let e2 = f.e_max * f.e_max;
        parts.push(PartAssessment {
            region: r,
            margin,
            verdict,
            w_max: 0.5 * m.epsilon() * e2,
            w_pol_max: 0.5 * crate::units::EPSILON_0 * (m.permittivity - 1.0) * e2,
        });
    }

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

    for note in &case.implausible {
        findings.push(Finding { kind: FindingKind::ImplausibleInput(note.clone()), part: note.owner.clone() });
    }

    if check.is_none() {
        findings.push(Finding { kind: FindingKind::MeshCheckFailed, part: None });
        for p in &parts {
            if fields.regions[p.region].at_sharp_edge {
                findings.push(Finding {
                    kind: FindingKind::SingularPeak { e_max: [fields.regions[p.region].e_max; 3], at_edge: true },
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
    let capacitance = (fixed.len() == 2).then(|| {
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

    let e_max = parts.iter().map(|p| fields.regions[p.region].e_max).fold(0.0, f64::max);
    let concentration = fields.gap.map(|g| {
        let e_uniform = g.largest_difference / g.distance;
        Concentration { e_max, gap: g.distance, e_uniform, factor: e_max / e_uniform }
    });

    findings.sort_by_key(|f| std::cmp::Reverse(f.kind.severity()));
    let worst_finding = findings.iter().map(|f| match f.kind.severity() {
        Severity::Info => Verdict::Pass,
        Severity::Warning => Verdict::Review,
        Severity::Fail => Verdict::Fail,
    });
    let verdict = parts.iter().map(|p| p.verdict).chain(worst_finding).max().unwrap_or(Verdict::Pass);
    Assessment { verdict, parts, findings, capacitance, concentration }
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
