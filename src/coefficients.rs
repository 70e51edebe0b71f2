//! Stage 3: material models at their state, turned into the numbers the
//! discretisation needs. The only place where materials become numbers.
//!
//! Painting (`grid`) is geometry: which region owns each cell, and for cells
//! an interface crosses, which region fills each sub-sample and the
//! interface normal. Here each region's material is evaluated at its state
//! (temperature, absorbed water, frequency: [`State`]) to a relative
//! permittivity, and each cut cell gets an effective tensor from its
//! sub-samples:
//!
//! * where exactly two regions meet, the laminate tensor (Kottke,
//!   Farjadpour & Johnson, Phys. Rev. E 77, 036611, 2008): ε_n = harmonic
//!   mean across the interface, ε_t = arithmetic mean along it,
//!   ε = ε_n·n·nᵀ + ε_t·(I − n·nᵀ), with volume fractions r-weighted in
//!   axisymmetric cases;
//! * with three or more regions, directional averages per quarter: for flux
//!   along x each row of samples is a chain in series (harmonic mean along
//!   x) and the rows conduct side by side (arithmetic mean over y), likewise
//!   along y, and no cross term.
//!
//! The coefficient type is generic ([`Coefficient`]): the real relative
//! permittivity of electrostatics is `f64`; a complex admittivity for AC
//! with losses is another instance of the same code.

use crate::case::{Case, Geometry, Mode, Part, Role};
use crate::grid::{CellIx, Grid, Layout, SUBSAMPLES};
use crate::materials::{self, Material};
use std::ops::{Add, Div, Mul, Sub};

/// What a cell coefficient must support: field arithmetic and scaling by
/// reals. Implemented for `f64` (relative permittivity).
pub trait Coefficient:
    Copy
    + Send
    + Sync
    + PartialEq
    + std::fmt::Debug
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Mul<f64, Output = Self>
{
    /// The coefficient of a real value.
    fn real(x: f64) -> Self;
    /// `kappa` limited so that a cut cell whose axis conductances in series
    /// are `hx` and `hy` stays positive semi-definite with its cross term
    /// (|κ| ≤ `factor`·2·√(hx·hy); see `assemble`).
    fn limit_cross(kappa: Self, hx: Self, hy: Self, factor: f64) -> Self;
}

/// A complex relative admittivity κ = ε′ − j·(ε″ + σ/(ωε0)): the AC
/// coefficient with losses (div(κ∇φ) = 0 is div((σ + jωε0ε*)∇φ) = 0
/// divided by jωε0).
pub use num_complex::Complex64;

impl Coefficient for Complex64 {
    fn real(x: f64) -> Complex64 {
        Complex64::new(x, 0.0)
    }

    /// The real form's bound on magnitudes: |κ| ≤ factor·2·√(|hx|·|hy|),
    /// keeping the phase.
    fn limit_cross(kappa: Complex64, hx: Complex64, hy: Complex64, factor: f64) -> Complex64 {
        let limit = factor * 2.0 * (hx.norm() * hy.norm()).sqrt();
        let m = kappa.norm();
        if m > limit { kappa * (limit / m) } else { kappa }
    }
}

impl Coefficient for f64 {
    fn real(x: f64) -> f64 {
        x
    }

    fn limit_cross(kappa: f64, hx: f64, hy: f64, factor: f64) -> f64 {
        let limit = factor * 2.0 * (hx * hy).sqrt();
        kappa.clamp(-limit, limit)
    }
}

/// The state one region's material is evaluated at.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct State {
    /// Temperature in °C.
    pub temperature_c: f64,
    /// Absorbed water, if any.
    pub water: Option<crate::case::Water>,
    /// Frequency in Hz (0 for static fields).
    pub frequency_hz: f64,
}

/// Which state a case is evaluated at.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Conditions {
    /// As the case says: each part at its temperature, with its water.
    Service,
    /// Every part dry at the reference temperature (the stress-shift
    /// comparison).
    DryReference,
}

/// The state of each region of a layout under `conditions`.
pub fn states(case: &Case, layout: &Layout, conditions: Conditions) -> Vec<State> {
    let frequency_hz = match case.operation.mode {
        Mode::Static | Mode::Dc => 0.0,
        Mode::Ac => case.operation.frequency_hz,
        Mode::Impulse => crate::case::IMPULSE_EQUIVALENT_FREQUENCY_HZ,
    };
    layout
        .regions
        .iter()
        .map(|r| {
            let part: Option<&Part> = r.part.map(|p| &case.parts[p]);
            let service = part.map(|p| p.service).unwrap_or_default();
            match conditions {
                Conditions::Service => State {
                    temperature_c: service.temperature_c.unwrap_or(case.environment.temperature_c),
                    water: service.water,
                    frequency_hz,
                },
                Conditions::DryReference => {
                    State { temperature_c: materials::REFERENCE_TEMPERATURE_C, water: None, frequency_hz }
                }
            }
        })
        .collect()
}

/// True when the case has a part or an environment away from the dry
/// reference (so that a stress-shift comparison means something).
pub fn differs_from_reference(case: &Case) -> bool {
    let hot = |t: f64| t != materials::REFERENCE_TEMPERATURE_C;
    hot(case.environment.temperature_c)
        || case.parts.iter().any(|p| {
            matches!(p.role, Role::Dielectric(_))
                && (p.service.water.is_some() || p.service.temperature_c.is_some_and(hot))
        })
}

/// The relative permittivity of a material at a state: the material's own
/// model at the temperature and frequency, mixed with absorbed water by the
/// part's rule.
pub fn permittivity(material: &Material, state: &State) -> f64 {
    let host = material.permittivity_at(state.temperature_c, state.frequency_hz);
    match state.water {
        None => host,
        Some(w) => materials::mix(host, materials::water_permittivity(state.temperature_c), w.volume_fraction, w.rule),
    }
}

/// The complex relative admittivity κ = ε′ − j·(ε″ + σ/(ωε0)) of a
/// material at an AC state: ε′ as [`permittivity`] (absorbed water mixed
/// in), ε″ the material's dielectric loss (Debye relaxation, or ε′·tan δ:
/// the host's loss tangent carried over to the wet mixture), σ its
/// conductivity at the state's temperature (without field dependence,
/// which only DC conduction models). Water's own ionic conduction is not
/// added: a wet material's losses are its measured `loss_tangent` or
/// conductivity.
pub fn admittivity(material: &Material, state: &State) -> Complex64 {
    let eps1 = permittivity(material, state);
    let host = material.permittivity_at(state.temperature_c, state.frequency_hz);
    let eps2 = material.loss_factor_at(state.temperature_c, state.frequency_hz) * eps1 / host;
    let omega = 2.0 * std::f64::consts::PI * state.frequency_hz;
    let sigma = material.conduction.map_or(0.0, |c| c.at(state.temperature_c, 0.0));
    let conduction = if omega > 0.0 { sigma / (omega * crate::units::EPSILON_0) } else { 0.0 };
    Complex64::new(eps1, -(eps2 + conduction))
}

/// Below this spread of effective loss tangents (−Im κ / Re κ) between
/// the regions of an AC case, its field is solved as lossless: the
/// magnitudes then differ from the complex solution by about the square of
/// the spread (below 1e-4 relative; a two-layer series stack gives
/// ½·Δ²·w(1 − w)), far under the discretisation error, and the losses are
/// evaluated from the real field, exact to first order.
pub const LOSSLESS_SPREAD: f64 = 0.01;

/// The complex admittivity coefficients of an AC case under `conditions`.
pub fn admittivities(case: &Case, grid: &Grid, layout: &Layout, conditions: Conditions) -> Coefficients<Complex64> {
    let region = states(case, layout, conditions)
        .iter()
        .zip(&layout.regions)
        .map(|(s, r)| admittivity(&case.materials[r.material], s))
        .collect();
    Coefficients::new(grid, case.geometry, layout, region)
}

/// The loss coefficients of an AC evaluation, per region.
#[derive(Debug, Clone, PartialEq)]
pub struct AcLosses {
    /// Angular frequency ω, rad/s.
    pub omega: f64,
    /// Effective loss factor ε″ + σ/(ωε0) of each region (relative: −Im κ).
    pub loss_factor: Vec<f64>,
    /// σ/(ωε0ε′) of each region: conduction against displacement current.
    pub conduction_ratio: Vec<f64>,
}

/// The loss coefficients of an AC case at its service state, from the
/// regions' admittivities `kappa`.
pub fn ac_losses(case: &Case, layout: &Layout, kappa: &[Complex64]) -> AcLosses {
    let omega = 2.0 * std::f64::consts::PI * case.operation.frequency_hz;
    let states = states(case, layout, Conditions::Service);
    let conduction_ratio = layout
        .regions
        .iter()
        .zip(&states)
        .zip(kappa)
        .map(|((r, s), k)| {
            let sigma = case.materials[r.material].conduction.map_or(0.0, |c| c.at(s.temperature_c, 0.0));
            sigma / (omega * crate::units::EPSILON_0 * k.re)
        })
        .collect();
    AcLosses { omega, loss_factor: kappa.iter().map(|k| -k.im).collect(), conduction_ratio }
}

/// The effective loss tangent −Im κ / Re κ of a coefficient.
pub fn effective_loss_tangent(kappa: Complex64) -> f64 {
    -kappa.im / kappa.re
}

/// True when the regions' effective loss tangents differ by more than
/// [`LOSSLESS_SPREAD`] (regions that own cells only), so that the field
/// needs the complex solve.
pub fn needs_complex_solve(layout: &Layout, region: &[Complex64]) -> bool {
    let present = layout.regions_with_cells();
    let tans = region.iter().zip(&present).filter(|(_, p)| **p).map(|(k, _)| effective_loss_tangent(*k));
    let (lo, hi) = tans.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), t| (a.min(t), b.max(t)));
    hi - lo > LOSSLESS_SPREAD
}

/// The magnitudes |κ| of complex coefficients, blended as real ones: the
/// operator whose multigrid hierarchy preconditions the complex solve.
pub fn magnitudes(grid: &Grid, geometry: Geometry, layout: &Layout, region: &[Complex64]) -> Coefficients<f64> {
    Coefficients::new(grid, geometry, layout, region.iter().map(|k| k.norm()).collect())
}

/// The breakdown strength of each region's material in the case's rms/peak
/// convention (V/m; `None` where the material has none), converted from the
/// basis it was measured in. Strengths are not derated for the state (the
/// assessment says where that matters).
/// Under DC, a material's DC strength where it has one, else its AC
/// strength as a peak value (`assess` says where).
/// Under an impulse, a material's impulse strength where it has one, else
/// its short-term (AC) strength as a peak value (conservative: impulse
/// strengths are usually higher; `assess` says where it was used).
pub fn strengths(case: &Case, layout: &Layout) -> Vec<Option<f64>> {
    layout
        .regions
        .iter()
        .map(|r| {
            let m = &case.materials[r.material];
            match case.operation.mode {
                Mode::Impulse => m.impulse_strength_v_per_m.or_else(|| m.strength_in(case.operation.values)),
                Mode::Dc => m.dc_strength_v_per_m.or_else(|| m.strength_in(case.operation.values)),
                Mode::Static | Mode::Ac => m.strength_in(case.operation.values),
            }
        })
        .collect()
}

/// Per-region and per-cut-cell coefficients of one evaluation.
#[derive(Debug, Clone, PartialEq)]
pub struct Coefficients<T> {
    /// Relative coefficient of each region (layout order).
    pub region: Vec<T>,
    /// Per cut cell (layout order): the coefficients of the quarters beside
    /// the cell's bottom, top, left and right edges, and the cross term
    /// ε_xy of its laminate tensor (zero where none).
    pub cut: Vec<([T; 4], T)>,
    /// Coefficients that vary within a region (a conductivity at each
    /// cell's temperature and field): the value of every whole cell, which
    /// then replaces `region` (left empty).
    pub cells: Option<Vec<T>>,
}

impl<T: Coefficient> Coefficients<T> {
    /// Blends the region values into every cut cell of the layout.
    pub fn new(grid: &Grid, geometry: Geometry, layout: &Layout, region: Vec<T>) -> Coefficients<T> {
        let cut = layout
            .cut_cells
            .iter()
            .map(|c| {
                let weights = sample_weights(grid, geometry, CellIx(c.cell as usize));
                let values: Vec<T> = c.samples.iter().map(|&r| region[r as usize]).collect();
                match c.normal {
                    Some(n) => laminate(&values, &c.samples, &weights, n),
                    None => (directional(&values), T::real(0.0)),
                }
            })
            .collect();
        Coefficients { region, cut, cells: None }
    }

    /// Coefficients that vary from cell to cell: `value(region, cell)` for
    /// every whole cell, and the cut-cell blends of the values of the
    /// regions that meet in each cut cell, evaluated at that cell.
    pub fn per_cell(
        grid: &Grid,
        geometry: Geometry,
        layout: &Layout,
        value: impl Fn(usize, CellIx) -> T + Sync,
    ) -> Coefficients<T> {
        let cells = layout
            .cell_region
            .iter()
            .enumerate()
            .map(|(c, &r)| if r == crate::grid::CONDUCTOR { T::real(0.0) } else { value(r as usize, CellIx(c)) })
            .collect();
        let cut = layout
            .cut_cells
            .iter()
            .map(|c| {
                let cell = CellIx(c.cell as usize);
                let weights = sample_weights(grid, geometry, cell);
                let values: Vec<T> = c.samples.iter().map(|&r| value(r as usize, cell)).collect();
                match c.normal {
                    Some(n) => laminate(&values, &c.samples, &weights, n),
                    None => (directional(&values), T::real(0.0)),
                }
            })
            .collect();
        Coefficients { region: Vec::new(), cut, cells: Some(cells) }
    }
}

/// The DC conductivity coefficients σ(T, E)/ε0 of every cell (the stencil
/// multiplies by ε0, so its conductances are σ·geometry): each region's
/// conduction model at the cell's temperature `cell_t` (°C) and field
/// magnitude `cell_e` (V/m). A material without conduction has σ = 0 (the
/// case is refused before; see `Prepared`).
pub fn conductivities(case: &Case, grid: &Grid, layout: &Layout, cell_t: &[f64], cell_e: &[f64]) -> Coefficients<f64> {
    Coefficients::per_cell(grid, case.geometry, layout, |r, c| {
        let m = &case.materials[layout.regions[r].material];
        m.conduction.map_or(0.0, |k| k.at(cell_t[c.0], cell_e[c.0])) / crate::units::EPSILON_0
    })
}

/// The thermal conductivity coefficients k/ε0 of every region (W/(m·K)
/// over ε0, as for `conductivities`).
pub fn thermal_conductivities(case: &Case, grid: &Grid, layout: &Layout) -> Coefficients<f64> {
    let region = layout
        .regions
        .iter()
        .map(|r| case.materials[r.material].thermal_conductivity_w_per_m_k.unwrap_or(0.0) / crate::units::EPSILON_0)
        .collect();
    Coefficients::new(grid, case.geometry, layout, region)
}

/// The relative permittivity coefficients of a case under `conditions`.
pub fn permittivities(case: &Case, grid: &Grid, layout: &Layout, conditions: Conditions) -> Coefficients<f64> {
    let region = states(case, layout, conditions)
        .iter()
        .zip(&layout.regions)
        .map(|(s, r)| permittivity(&case.materials[r.material], s))
        .collect();
    Coefficients::new(grid, case.geometry, layout, region)
}

/// Volume weight of each sub-sample of a cell: 1, or its radius when
/// axisymmetric.
fn sample_weights(grid: &Grid, geometry: Geometry, c: CellIx) -> Vec<f64> {
    let n = SUBSAMPLES;
    let (i, _) = grid.cell_ij(c);
    let (x0, hx) = (grid.x[i], grid.x[i + 1] - grid.x[i]);
    (0..n * n)
        .map(|k| match geometry {
            Geometry::Axisymmetric => x0 + ((k % n) as f64 + 0.5) / n as f64 * hx,
            Geometry::Planar => 1.0,
        })
        .collect()
}

/// The laminate tensor of a cell where two regions meet: quarters
/// [ε_xx, ε_xx, ε_yy, ε_yy] and ε_xy, for the unit interface normal `n`.
fn laminate<T: Coefficient>(values: &[T], regions: &[u16], weights: &[f64], n: [f64; 2]) -> ([T; 4], T) {
    let first = regions[0];
    let (a, b) = (values[0], values[regions.iter().position(|&r| r != first).unwrap_or(0)]);
    let total: f64 = weights.iter().sum();
    let fa = regions.iter().zip(weights).filter(|(r, _)| **r == first).map(|(_, w)| w).sum::<f64>() / total;
    let one = T::real(1.0);
    let e_n = one / (one / a * fa + one / b * (1.0 - fa));
    let e_t = a * fa + b * (1.0 - fa);
    let [nx, ny] = n;
    let exx = e_n * (nx * nx) + e_t * (ny * ny);
    let eyy = e_n * (ny * ny) + e_t * (nx * nx);
    ([exx, exx, eyy, eyy], (e_n - e_t) * (nx * ny))
}

/// Directional averages of a cell's quarters [bottom, top, left, right]:
/// rows in series along x averaged side by side over each half in y, and
/// likewise along y.
fn directional<T: Coefficient>(values: &[T]) -> [T; 4] {
    let n = SUBSAMPLES;
    let one = T::real(1.0);
    let series = |k: &mut dyn Iterator<Item = T>| -> T {
        let mut s = T::real(0.0);
        for v in k {
            s = s + one / v;
        }
        T::real(n as f64) / s
    };
    let rows = |range: std::ops::Range<usize>| -> T {
        let k = range.len() as f64;
        let mut s = T::real(0.0);
        for b in range {
            s = s + series(&mut (0..n).map(|a| values[b * n + a]));
        }
        s * (1.0 / k)
    };
    let cols = |range: std::ops::Range<usize>| -> T {
        let k = range.len() as f64;
        let mut s = T::real(0.0);
        for a in range {
            s = s + series(&mut (0..n).map(|b| values[b * n + a]));
        }
        s * (1.0 / k)
    };
    [rows(0..n / 2), rows(n / 2..n), cols(0..n / 2), cols(n / 2..n)]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn laminate_of_a_flat_interface_is_series_across_and_parallel_along() {
        // Half of each material, interface normal along x: ε_xx is the series
        // (harmonic) value, ε_yy the parallel (arithmetic) one, no cross term
        // (common practice for layered media).
        let n = SUBSAMPLES;
        let regions: Vec<u16> = (0..n * n).map(|k| if k % n < n / 2 { 1 } else { 2 }).collect();
        let values: Vec<f64> = regions.iter().map(|&r| if r == 1 { 2.0 } else { 8.0 }).collect();
        let (q, xy) = laminate(&values, &regions, &vec![1.0; n * n], [1.0, 0.0]);
        assert!((q[0] - 3.2).abs() < 1e-12 && (q[2] - 5.0).abs() < 1e-12 && xy == 0.0, "{q:?} {xy}");
        // directional averages: across the interface in series, and the
        // left and right quarters each lie in one material
        let d = directional(&values);
        assert!((d[0] - 3.2).abs() < 1e-12 && (d[2] - 2.0).abs() < 1e-12 && (d[3] - 8.0).abs() < 1e-12, "{d:?}");
    }
}
