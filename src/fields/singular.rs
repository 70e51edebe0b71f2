//! Singular points described without the grid: at each point where the
//! drawn geometry has no finite field (`grid::singular_points`: sharp
//! electrode edges and corners, foil ends, dielectric triple points), the
//! field goes as |E| ~ r^(λ−1). The description gives λ of the drawn
//! wedges (Meixner 1972) beside λ fitted between two stated distances, and
//! the largest field in the insulation on circles of those radii — numbers
//! that converge under refinement where the point's own peak does not.

use super::{Inside, Sampler};
use crate::grid::{SingularKind, SingularPoint};

/// The stated distances from a singular point at which its field is
/// reported, m: 0.1 mm and 1 mm (the inner one is also the radius inside
/// which a part's peak does not count for its margin).
pub const SINGULAR_DISTANCES: [f64; 2] = [1e-4, 1e-3];

/// Samples on each circle.
const RING_SAMPLES: usize = 64;

/// One singular point and its field.
#[derive(Debug, Clone, PartialEq)]
pub struct SingularField {
    /// The point (grid stage).
    pub point: SingularPoint,
    /// The insulating regions around it (layout indices, ascending).
    pub regions: Vec<usize>,
    /// λ of the drawn wedges (`wedge_exponent`), where the insulation
    /// around the point is one or two straight wedges.
    pub exponent_drawn: Option<f64>,
    /// λ fitted between the stated distances (`fitted_exponent`).
    pub exponent_fitted: Option<f64>,
    /// Largest |E| in the insulation on each circle of `SINGULAR_DISTANCES`,
    /// V/m, with the region it lies in (`None` where no sample of the circle
    /// is in insulation).
    pub e_at: [Option<RingPeak>; 2],
    /// The same per region around the point (`regions` order).
    pub e_at_by_region: Vec<[Option<RingPeak>; 2]>,
    /// λ fitted in each region around the point (`regions` order).
    pub fitted_by_region: Vec<Option<f64>>,
}

/// The largest field on a circle around a point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RingPeak {
    /// |E|, V/m.
    pub e: f64,
    /// The region it lies in (layout index).
    pub region: usize,
    /// Where, m.
    pub at: [f64; 2],
}

/// λ = 1 + ln(e1/e2)/ln(r1/r2) from the fields at the stated distances
/// r1, r2 along one direction: the direction of the largest field on the
/// inner circle, where the field goes as r^(λ−1)·f(θ) with f fixed
/// (the largest field on each circle would mix directions where the outer
/// circle reaches a uniform field elsewhere, such as the field under a
/// strip). `None` where the outer point along it is not in the same
/// region.
pub fn fitted_exponent(sampler: &Sampler, at: [f64; 2], inner: Option<RingPeak>) -> Option<f64> {
    let inner = inner.filter(|v| v.e > 0.0)?;
    let [r1, r2] = SINGULAR_DISTANCES;
    let scale = r2 / r1;
    let outer = [at[0] + scale * (inner.at[0] - at[0]), at[1] + scale * (inner.at[1] - at[1])];
    let s = sampler.at(outer);
    let e2 = s.magnitude();
    (s.inside == Inside::Region(inner.region as u32) && e2 > 0.0).then(|| 1.0 + (inner.e / e2).ln() / (r1 / r2).ln())
}

/// Largest |E| on a circle of radius `r` around `at` over the samples that
/// `keep` accepts, V/m, with the region it lies in.
pub(crate) fn ring_max(sampler: &Sampler, at: [f64; 2], r: f64, keep: impl Fn(u32) -> bool) -> Option<RingPeak> {
    (0..RING_SAMPLES)
        .map(|k| {
            // half a step off the axes: a circle through the point crosses the
            // grid lines and interfaces that meet there, never samples on them
            let a = 2.0 * std::f64::consts::PI * (k as f64 + 0.5) / RING_SAMPLES as f64;
            let p = [at[0] + r * a.cos(), at[1] + r * a.sin()];
            (sampler.at(p), p)
        })
        .filter_map(|(s, p)| match s.inside {
            Inside::Region(reg) if keep(reg) => Some(RingPeak { e: s.magnitude(), region: reg as usize, at: p }),
            _ => None,
        })
        .fold(None, |best: Option<RingPeak>, v| match best {
            Some(b) if b.e >= v.e => Some(b),
            _ => Some(v),
        })
}

/// The singular points of a solution, described. Points closer than the
/// inner stated distance to an earlier one on the same electrode (the two
/// corners of a thin strip's edge) are one point, a triple point if either
/// is. `permittivity` is each region's relative permittivity.
pub fn singular_fields(points: &[SingularPoint], sampler: &Sampler, permittivity: &[f64]) -> Vec<SingularField> {
    let mut kept: Vec<SingularPoint> = Vec::new();
    for p in points {
        let near = kept.iter_mut().find(|k| {
            k.electrode == p.electrode && (k.at[0] - p.at[0]).hypot(k.at[1] - p.at[1]) < SINGULAR_DISTANCES[0]
        });
        match near {
            Some(k) if p.kind == SingularKind::TriplePoint => k.kind = SingularKind::TriplePoint,
            Some(_) => {}
            None => kept.push(*p),
        }
    }
    kept.into_iter()
        .map(|point| {
            let h = sampler.cell_size(point.at);
            let mut regions: Vec<usize> = (0..RING_SAMPLES)
                .filter_map(|k| {
                    let a = 2.0 * std::f64::consts::PI * (k as f64 + 0.5) / RING_SAMPLES as f64;
                    let r = 0.5 * h;
                    match sampler.at([point.at[0] + r * a.cos(), point.at[1] + r * a.sin()]).inside {
                        Inside::Region(reg) => Some(reg as usize),
                        Inside::Electrode(_) => None,
                    }
                })
                .collect();
            regions.sort_unstable();
            regions.dedup();
            let e_at = SINGULAR_DISTANCES.map(|r| ring_max(sampler, point.at, r, |_| true));
            let e_at_by_region: Vec<[Option<RingPeak>; 2]> = regions
                .iter()
                .map(|&reg| SINGULAR_DISTANCES.map(|r| ring_max(sampler, point.at, r, |k| k as usize == reg)))
                .collect();
            let exponent_fitted = fitted_exponent(sampler, point.at, e_at[0]);
            let fitted_by_region = e_at_by_region.iter().map(|v| fitted_exponent(sampler, point.at, v[0])).collect();
            SingularField {
                point,
                regions,
                exponent_drawn: drawn_wedges(sampler, point.at, h, permittivity).and_then(|w| wedge_exponent(&w)),
                exponent_fitted,
                e_at,
                e_at_by_region,
                fitted_by_region,
            }
        })
        .collect()
}

/// The radius of curvature that brings the peak at a singular point down
/// to `allowable`, m, from the field `e1` at distance `r1` and the exponent
/// λ < 1. Rounding the sharp point along an equipotential of
/// φ ∝ r^λ·cos(λθ) gives a tip at r0 with radius of curvature ρ = r0/(1−λ)
/// and a tip field equal to the sharp field at r0 (derived from the polar
/// curvature of r^λ·cos(λθ) = const; for λ = ½ the parabola of a thin
/// edge, ρ = 2·r0). With E(r) = e1·(r/r1)^(λ−1):
/// ρ = r1·(allowable/e1)^(1/(λ−1)) / (1 − λ). `None` for λ ≥ 1 (no
/// singularity) or non-positive values.
pub fn radius_to_allowable(e1: f64, r1: f64, lambda: f64, allowable: f64) -> Option<f64> {
    (lambda < 1.0 && lambda > 0.0 && e1 > 0.0 && allowable > 0.0 && r1 > 0.0)
        .then(|| r1 * (allowable / e1).powf(1.0 / (lambda - 1.0)) / (1.0 - lambda))
}

/// The local exponent λ of the field |E| ~ r^(λ−1) at the apex of
/// dielectric wedges between two conductor faces, from their opening
/// angles θ (radians) and relative permittivities ε, in order from one
/// conductor face to the other: one wedge λ = π/θ; two wedges the smallest
/// root of ε1·cot(λθ1) + ε2·cot(λθ2) = 0 (separation of variables with φ
/// and ε·∂φ/∂n continuous across the interface; Meixner, IEEE Trans.
/// Antennas Propag. 20(4), 1972). `None` for other arrangements.
pub fn wedge_exponent(wedges: &[(f64, f64)]) -> Option<f64> {
    match *wedges {
        [(t, _)] if t > 0.0 => Some(std::f64::consts::PI / t),
        [(t1, e1), (t2, e2)] if t1 > 0.0 && t2 > 0.0 && e1 > 0.0 && e2 > 0.0 => {
            let f = |l: f64| e1 / (l * t1).tan() + e2 / (l * t2).tan();
            // f falls from +∞ (λ → 0) to −∞ at the first pole λ = π/max θ
            let (mut lo, mut hi) = (1e-9, std::f64::consts::PI / t1.max(t2) * (1.0 - 1e-12));
            for _ in 0..200 {
                let mid = 0.5 * (lo + hi);
                if f(mid) > 0.0 {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            Some(0.5 * (lo + hi))
        }
        _ => None,
    }
}

/// Samples around a junction on a circle of this many cells.
const WEDGE_RADIUS_CELLS: f64 = 0.5;
/// Angular samples of the circle.
const WEDGE_SAMPLES: usize = 720;

/// The dielectric wedges around `at`: the regions met on a small circle,
/// in order from one conductor face to the other, with their angles and
/// permittivities (`None` unless the insulation is one contiguous arc of
/// at most two regions).
pub(crate) fn drawn_wedges(sampler: &Sampler, at: [f64; 2], h: f64, permittivity: &[f64]) -> Option<Vec<(f64, f64)>> {
    let r = WEDGE_RADIUS_CELLS * h;
    let inside: Vec<Inside> = (0..WEDGE_SAMPLES)
        .map(|k| {
            let a = 2.0 * std::f64::consts::PI * (k as f64 + 0.5) / WEDGE_SAMPLES as f64;
            sampler.at([at[0] + r * a.cos(), at[1] + r * a.sin()]).inside
        })
        .collect();
    let Some(start) = inside.iter().position(|i| matches!(i, Inside::Electrode(_))) else {
        // the end of a zero-thickness foil: one wedge of 2π where a single
        // material surrounds it (λ = ½)
        return match inside.first() {
            Some(&Inside::Region(reg)) if inside.iter().all(|i| *i == Inside::Region(reg)) => {
                Some(vec![(2.0 * std::f64::consts::PI, permittivity[reg as usize])])
            }
            _ => None,
        };
    };
    let step = 2.0 * std::f64::consts::PI / WEDGE_SAMPLES as f64;
    let mut arcs: Vec<Vec<(u32, f64)>> = Vec::new();
    let mut current: Vec<(u32, f64)> = Vec::new();
    for k in 1..=WEDGE_SAMPLES {
        match inside[(start + k) % WEDGE_SAMPLES] {
            Inside::Electrode(_) => {
                if !current.is_empty() {
                    arcs.push(std::mem::take(&mut current));
                }
            }
            Inside::Region(reg) => match current.last_mut() {
                Some((last, angle)) if *last == reg => *angle += step,
                _ => current.push((reg, step)),
            },
        }
    }
    match &arcs[..] {
        [arc] if arc.len() <= 2 => Some(arc.iter().map(|&(reg, a)| (a, permittivity[reg as usize])).collect()),
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wedge_exponents_match_the_closed_forms() {
        use std::f64::consts::PI;
        // a 90° conductor corner in one medium (air in 270°): λ = 2/3, |E| ~ r^(−1/3)
        // (Jackson, Classical Electrodynamics, 3rd ed. 1999, §2.11)
        assert!((wedge_exponent(&[(1.5 * PI, 1.0)]).unwrap() - 2.0 / 3.0).abs() < 1e-12);
        // the same corner split into two wedges of one permittivity gives the same λ
        assert!((wedge_exponent(&[(0.5 * PI, 2.0), (PI, 2.0)]).unwrap() - 2.0 / 3.0).abs() < 1e-9);
        // strip edge on a board, air 90° and εr 4.4 in 180°: λ = (2/π)·atan√(1 + 2/4.4) = 0.5593
        // (derived after Meixner 1972; issue check value)
        let l = wedge_exponent(&[(0.5 * PI, 1.0), (PI, 4.4)]).unwrap();
        assert!((l - 0.5593).abs() < 5e-5, "{l}");
        assert!((l - 2.0 / PI * (1.0f64 + 2.0 / 4.4).sqrt().atan()).abs() < 1e-9);
        assert_eq!(wedge_exponent(&[]), None);
    }

    #[test]
    fn the_radius_that_removes_a_peak() {
        // λ = ½ (a thin edge): the sharp field at r0 = ρ/2 is the tip's
        // (derived above). A field of 4 kV/mm at 0.1 mm falls to 2 kV/mm at
        // 0.4 mm, so ρ = 0.8 mm
        let rho = radius_to_allowable(4e6, 1e-4, 0.5, 2e6).unwrap();
        assert!((rho - 8e-4).abs() < 1e-12, "{rho}");
        assert_eq!(radius_to_allowable(4e6, 1e-4, 1.0, 2e6), None);
    }
}
