//! Stage 5b: partial-discharge inception in every gas part, from
//! ionisation integrals along field lines.
//!
//! A point criterion cannot judge a gas at a sharp edge: the point peak
//! there grows without bound under refinement. The ionisation integral
//! along the field line through it settles, because the edge singularity
//! |E| ~ r^(λ−1) (λ > 0) is integrable.
//!
//! For each gas part with a discharge model (`materials::gas`), lines are
//! seeded at its high-field cells (the peak first, then the strongest cells
//! at least a sixteenth of the part's extent apart) and traced through every
//! gas part they reach. In a linear case the field scales with the fixed
//! potentials, so for each line the scale `s` of those potentials at which
//! its integral reaches the criterion follows from one solve (bisection on
//! `s`, the integrals being monotone in it):
//!
//! * Townsend: ∫α(s·E) dx = ln(1 + 1/γ) where the line's reduced length
//!   p20·l is below the gas's streamer switch;
//! * above the switch, the lower of that and the streamer criterion
//!   ∫ p20·[(s·E/p20 − (E/p)_cr)/((E/p)_cr·B)]^(1/n) dx = 1.
//!
//! E is the instantaneous peak field (the solution's values times √2 when
//! the case speaks rms). The part's inception scale is the lowest over its
//! lines; that line is the critical one.

use crate::case::Case;
use crate::fields::trace::{End, FieldLine, TraceConfig, trace};
use crate::fields::{Fields, Inside, Sampler, drawn_wedges, ring_max, wedge_exponent};
use crate::grid::{CellIx, Layout};
use crate::materials::MaterialClass;
use crate::materials::gas::{GasModel, reduced_pressure};
use crate::units::Values;

/// Most field lines seeded per gas part.
pub const MAX_SEEDS: usize = 40;
/// Seeds are cells whose field is at least this fraction of the part's
/// strongest cell.
const SEED_FIELD_FRACTION: f64 = 0.5;
/// Seeds lie at least this fraction of the part's extent apart.
const SEED_SPACING: f64 = 1.0 / 16.0;

/// Relative difference under which two lines' inception scales count as
/// equal (well above what the solve tolerance leaves).
const TIE: f64 = 1e-6;

/// Which criterion decided a line.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Criterion {
    /// ∫α dx = ln(1 + 1/γ).
    Townsend,
    /// ∫α_eff dx = K (Schumann's streamer criterion).
    Streamer,
}

impl Criterion {
    /// Lower-case name for reports.
    pub fn name(self) -> &'static str {
        match self {
            Criterion::Townsend => "townsend",
            Criterion::Streamer => "streamer",
        }
    }
}

/// The inception of one gas part.
#[derive(Debug, Clone, PartialEq)]
pub struct GasInception {
    /// Region index in the layout.
    pub region: usize,
    /// Factor on every fixed potential at which discharge starts (`None`
    /// when no line reaches a criterion at any level: a gap too short for
    /// gas ionisation, or no field).
    pub scale: Option<f64>,
    /// The criterion that decided it.
    pub criterion: Option<Criterion>,
    /// The critical line, starting at its high-field end (empty when no
    /// line could be traced).
    pub line: FieldLine,
    /// Reduced length p20·l of the critical line in gas, Pa·m.
    pub reduced_length_pa_m: f64,
    /// The critical line's reduced length is below the Paschen minimum's
    /// p·d: the left branch, where field emission and surface effects can
    /// start a discharge that gas ionisation alone would not.
    pub left_branch: bool,
    /// The Paschen minimum's p·d of the part's gas, Pa·m.
    pub left_branch_below_pa_m: f64,
    /// The critical line is long, and its gas has only Townsend constants
    /// (whose inception is optimistic there).
    pub townsend_only: bool,
    /// The critical line was cut short at the point limit.
    pub truncated: bool,
    /// Field lines traced for the part.
    pub lines_traced: usize,
}

/// Settings of the inception search.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Config {
    /// How lines are traced.
    pub trace: TraceConfig,
}

/// What one gas part's lines are integrated with.
#[derive(Debug, Clone, Copy)]
struct Gas {
    model: GasModel,
    /// Pressure at 20 °C density, Pa.
    p20: f64,
}

/// The gas of each region: `None` for solids, liquids and gases without a
/// discharge model.
fn gases(case: &Case, layout: &Layout) -> Vec<Option<Gas>> {
    let states = crate::coefficients::states(case, layout, crate::coefficients::Conditions::Service);
    layout
        .regions
        .iter()
        .zip(&states)
        .map(|(region, state)| {
            let m = &case.materials[region.material];
            let model = m.gas.filter(|_| m.class == MaterialClass::Gas)?;
            let p20 = reduced_pressure(case.environment.pressure_pa, state.temperature_c);
            Some(Gas { model, p20 })
        })
        .collect()
}

/// Seeds of one region (its cells given): its peak, then its strongest
/// cells spread apart.
fn seeds(sampler: &Sampler, own_cells: &[u32], peak: [f64; 2]) -> Vec<[f64; 2]> {
    let grid = sampler.grid();
    let mut cells: Vec<(f64, [f64; 2])> = Vec::with_capacity(own_cells.len());
    let (mut lo, mut hi) = ([f64::INFINITY; 2], [f64::NEG_INFINITY; 2]);
    for &c in own_cells {
        let (i, j) = grid.cell_ij(CellIx(c as usize));
        let centre = [0.5 * (grid.x[i] + grid.x[i + 1]), 0.5 * (grid.y[j] + grid.y[j + 1])];
        for k in 0..2 {
            lo[k] = lo[k].min(centre[k]);
            hi[k] = hi[k].max(centre[k]);
        }
        cells.push((sampler.at(centre).magnitude(), centre));
    }
    let strongest = cells.iter().map(|c| c.0).fold(0.0, f64::max);
    cells.retain(|c| c.0 >= SEED_FIELD_FRACTION * strongest);
    // strongest first; fields equal within rounding (a uniform field) keep
    // grid order (the sort is stable), so the seeds do not depend on
    // solver round-off. The bands are counted down from the strongest, so
    // a uniform field's cells, all within rounding of it, share the first
    // band (bands on a fixed scale would cut through them).
    let rank = |e: f64| ((strongest - e) / (strongest * TIE)).floor() as i64;
    cells.sort_by_key(|c| rank(c.0));
    let spacing = SEED_SPACING * (hi[0] - lo[0]).hypot(hi[1] - lo[1]);
    let mut out = vec![peak];
    for (_, p) in cells {
        if out.len() >= MAX_SEEDS {
            break;
        }
        if out.iter().all(|q| (p[0] - q[0]).hypot(p[1] - q[1]) >= spacing) {
            out.push(p);
        }
    }
    out
}

/// Cells round a sharp point inside which the grid's field is replaced by
/// the power law fitted outside it.
const SINGULAR_INNER_CELLS: f64 = 3.0;
/// The fit uses line samples from the inner radius out to this multiple.
const SINGULAR_FIT_SPAN: f64 = 3.0;
/// Substeps of the power-law segment: radii r_in·q^k down to 1e-6·r_in.
const SINGULAR_RATIO: f64 = 0.8;

/// A line that starts at a sharp electrode point, with the grid's field
/// near the point replaced by the power law |E| = E_in·(r/r_in)^m fitted
/// (least squares in log–log) to the line's samples between r_in and
/// 3·r_in, r_in three cells. Near a sharp point the grid cannot resolve
/// |E| ~ r^(λ−1) and reads low, so an integral taken from the grid alone
/// converges only as h^(2λ−1) (h^(1/3) at a right-angled edge); the fitted
/// exponent restores the local behaviour. The exponent is bounded to
/// [−0.75, 0]. Lines not starting within a cell of a sharp point are
/// returned unchanged; so are lines where fewer than three samples fall in
/// the fit span.
fn with_singular_start(line: FieldLine, sharp: &[[f64; 2]], sampler: &Sampler) -> FieldLine {
    let Some(&start) = line.points.first() else { return line };
    let h = sampler.cell_size(start);
    let Some(&corner) = sharp.iter().find(|p| (p[0] - start[0]).hypot(p[1] - start[1]) <= h) else {
        return line;
    };
    let r_in = SINGULAR_INNER_CELLS * h;
    let r = |p: [f64; 2]| (p[0] - corner[0]).hypot(p[1] - corner[1]);
    // samples of the first stretch of the line in the fit span
    let fit: Vec<(f64, f64)> = line
        .points
        .iter()
        .zip(&line.e)
        .take_while(|(p, _)| r(**p) <= SINGULAR_FIT_SPAN * r_in)
        .filter(|(p, e)| r(**p) >= r_in && **e > 0.0)
        .map(|(p, e)| (r(*p).ln(), e.ln()))
        .collect();
    let Some(first_out) = line.points.iter().position(|p| r(*p) >= r_in) else { return line };
    if fit.len() < 3 {
        return line;
    }
    let n = fit.len() as f64;
    let (mx, my) = (fit.iter().map(|f| f.0).sum::<f64>() / n, fit.iter().map(|f| f.1).sum::<f64>() / n);
    let sxx: f64 = fit.iter().map(|f| (f.0 - mx).powi(2)).sum();
    let sxy: f64 = fit.iter().map(|f| (f.0 - mx) * (f.1 - my)).sum();
    if sxx.is_nan() || sxx <= 0.0 {
        return line;
    }
    let m = (sxy / sxx).clamp(-0.75, 0.0);
    let anchor = line.points[first_out];
    let (ra, ea) = (r(anchor), line.e[first_out]);
    let dir = [(anchor[0] - corner[0]) / ra, (anchor[1] - corner[1]) / ra];
    let region = line.regions[first_out];
    let mut out = FieldLine { points: Vec::new(), e: Vec::new(), regions: Vec::new(), ends: line.ends };
    let mut radius = 1e-6 * ra;
    while radius < ra {
        out.points.push([corner[0] + radius * dir[0], corner[1] + radius * dir[1]]);
        out.e.push(ea * (radius / ra).powf(m));
        out.regions.push(region);
        radius /= SINGULAR_RATIO;
    }
    out.points.extend_from_slice(&line.points[first_out..]);
    out.e.extend_from_slice(&line.e[first_out..]);
    out.regions.extend_from_slice(&line.regions[first_out..]);
    out
}

/// Trapezoidal ∫ f(|E|, gas) dx along a line.
fn integral(line: &FieldLine, gas: &[Option<Gas>], f: &dyn Fn(f64, &Gas) -> f64) -> f64 {
    let value = |k: usize| gas[line.regions[k] as usize].as_ref().map_or(0.0, |g| f(line.e[k], g));
    line.segments().enumerate().map(|(k, l)| 0.5 * (value(k) + value(k + 1)) * l).sum()
}

/// The scale s at which `g(s)` (increasing in s) reaches `target`, to a
/// relative 1e-10; `None` when it stays below even at `s_max`.
fn solve_scale(g: &dyn Fn(f64) -> f64, target: f64, s_max: f64) -> Option<f64> {
    let (mut lo, mut hi) = (1.0, 1.0);
    if g(hi) >= target {
        while g(lo) >= target {
            lo *= 0.5;
            if lo < 1e-30 {
                return Some(0.0);
            }
        }
        hi = 2.0 * lo;
    } else {
        while g(hi) < target {
            hi *= 2.0;
            if hi > s_max {
                return None;
            }
        }
        lo = 0.5 * hi;
    }
    while (hi - lo) > 1e-10 * hi {
        let m = 0.5 * (lo + hi);
        if g(m) >= target { hi = m } else { lo = m }
    }
    Some(hi)
}

/// Largest scale searched: beyond any level a case can hold (potentials
/// go down to 1e-6 kV, gaps up to a kilometre).
const MAX_SCALE: f64 = 1e15;

/// The inception scale of one line and the criterion that gives it.
fn line_inception(line: &FieldLine, gas: &[Option<Gas>], own: &Gas, peak: f64) -> (Option<(f64, Criterion)>, f64) {
    let reduced = integral(line, gas, &|_, g| g.p20);
    let mut best: Option<(f64, Criterion)> = None;
    let mut consider = |s: Option<f64>, c: Criterion| {
        if let Some(s) = s
            && best.is_none_or(|b| s < b.0)
        {
            best = Some((s, c));
        }
    };
    if let Some(t) = own.model.townsend {
        let g = |s: f64| integral(line, gas, &|e, g| g.model.townsend.map_or(0.0, |t| t.alpha(s * peak * e, g.p20)));
        consider(solve_scale(&g, t.threshold(), MAX_SCALE), Criterion::Townsend);
    }
    let streamer_applies = reduced >= own.model.streamer_from_pa_m || own.model.townsend.is_none();
    if own.model.streamer.is_some() && streamer_applies {
        let g =
            |s: f64| integral(line, gas, &|e, g| g.model.streamer.map_or(0.0, |st| st.integrand(s * peak * e, g.p20)));
        consider(solve_scale(&g, 1.0, MAX_SCALE), Criterion::Streamer);
    }
    (best, reduced)
}

/// What the lines of one case are traced and integrated with.
struct Search<'a> {
    sampler: &'a Sampler<'a>,
    gas: Vec<Option<Gas>>,
    /// Peak field per unit of the solution's field (√2 for rms cases).
    peak: f64,
    sharp: Vec<[f64; 2]>,
    /// The cells of each gas region (empty for other regions), in grid order.
    cells: Vec<Vec<u32>>,
    config: &'a Config,
}

/// The inception of every gas part that has a discharge model and cells,
/// in layout order.
pub fn inception(case: &Case, sampler: &Sampler, fields: &Fields, config: &Config) -> Vec<GasInception> {
    let gas = gases(case, sampler.layout());
    let mut cells = vec![Vec::new(); gas.len()];
    for (c, &r) in sampler.layout().cell_region.iter().enumerate() {
        if gas.get(r as usize).is_some_and(|g| g.is_some()) {
            cells[r as usize].push(c as u32);
        }
    }
    let search = Search {
        sampler,
        gas,
        cells,
        peak: Values::Peak.factor_from(case.operation.values),
        sharp: crate::grid::electrode_sharp_points(case),
        config,
    };
    search
        .gas
        .iter()
        .enumerate()
        .filter_map(|(r, own)| own.as_ref().map(|own| (r, own)))
        .filter(|(r, _)| fields.regions[*r].cells > 0)
        .map(|(r, own)| search.part(r, own, &fields.regions[r]))
        .collect()
}

impl Search<'_> {
    /// The lowest inception over the lines seeded in gas region `r`.
    fn part(&self, r: usize, own: &Gas, f: &crate::fields::RegionField) -> GasInception {
        let mut result = GasInception {
            region: r,
            scale: None,
            criterion: None,
            line: FieldLine::empty(),
            reduced_length_pa_m: 0.0,
            left_branch: false,
            left_branch_below_pa_m: own.model.left_branch_below_pa_m(),
            townsend_only: false,
            truncated: false,
            lines_traced: 0,
        };
        if f.e_max <= 0.0 {
            return result;
        }
        let gas = &self.gas;
        let continues = |inside: Inside| matches!(inside, Inside::Region(k) if gas[k as usize].is_some());
        let mut best: Option<(f64, Criterion, FieldLine, f64)> = None;
        let mut longest: Option<(FieldLine, f64)> = None;
        for seed in seeds(self.sampler, &self.cells[r], f.e_max_at) {
            let Some(line) = trace(self.sampler, seed, &continues, &self.config.trace) else { continue };
            result.lines_traced += 1;
            // start at the high-field end (the first in a uniform field)
            let higher_last = matches!((line.e.first(), line.e.last()), (Some(&a), Some(&b)) if b > a * (1.0 + TIE));
            let line = if higher_last { line.reversed() } else { line };
            let line = with_singular_start(line, &self.sharp, self.sampler);
            let (found, reduced) = line_inception(&line, gas, own, self.peak);
            match found {
                // lines within rounding of each other (a uniform field) keep
                // the first seed's, so the location does not depend on
                // solver round-off
                Some((s, c)) if best.as_ref().is_none_or(|b| s < b.0 * (1.0 - TIE)) => {
                    best = Some((s, c, line, reduced))
                }
                Some(_) => {}
                None if longest.as_ref().is_none_or(|l| reduced > l.1) => longest = Some((line, reduced)),
                None => {}
            }
        }
        let (line, reduced) = match best {
            Some((s, c, line, reduced)) => {
                result.scale = Some(s);
                result.criterion = Some(c);
                (line, reduced)
            }
            None => longest.unwrap_or((FieldLine::empty(), 0.0)),
        };
        result.truncated = line.ends.contains(&End::Truncated);
        result.reduced_length_pa_m = reduced;
        result.left_branch = !line.points.is_empty() && reduced < own.model.left_branch_below_pa_m();
        result.townsend_only = own.model.streamer.is_none()
            && own.model.townsend.is_some_and(|t| reduced > TOWNSEND_RANGE_MINIMA * t.paschen_minimum().0);
        result.line = line;
        result
    }
}

/// Townsend's criterion with constant A and B is trusted up to this many
/// times the Paschen minimum's p·d (air: about 5 Pa·m, where it meets the
/// streamer curve; beyond it reads high, 17 % at 1 cm).
const TOWNSEND_RANGE_MINIMA: f64 = 5.0;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scale_search_brackets_and_converges() {
        // g(s) = s² reaches 4 at s = 2 (exact), from above and below 1
        let s = solve_scale(&|s| s * s, 4.0, 1e6).unwrap();
        assert!((s - 2.0).abs() < 1e-9);
        let s = solve_scale(&|s| s * s, 0.01, 1e6).unwrap();
        assert!((s - 0.1).abs() < 1e-10);
        assert_eq!(solve_scale(&|s| 1.0 - 1.0 / (1.0 + s), 2.0, 1e6), None);
    }
}

/// A triple junction: where an electrode, a solid and a gas or liquid
/// meet. Its field is singular (|E| ~ r^(λ−1)) when λ < 1, which depends on
/// the contact angles and the permittivities; λ is estimated from the
/// fluid-side field at two distances from the junction.
#[derive(Debug, Clone, PartialEq)]
pub struct Junction {
    /// Where, m (a grid node on the electrode's surface).
    pub at: [f64; 2],
    /// The electrode (layout index).
    pub electrode: usize,
    /// The solid region (layout index).
    pub solid: usize,
    /// The gas or liquid region (layout index).
    pub fluid: usize,
    /// Whether that region is a gas (else a liquid).
    pub fluid_is_gas: bool,
    /// Largest fluid-side |E| at `JUNCTION_NEAR_CELLS` cells from it, V/m.
    pub e_near: f64,
    /// Largest fluid-side |E| at `JUNCTION_FAR_CELLS` cells from it, V/m.
    pub e_far: f64,
    /// The estimated local exponent λ = 1 + ln(e_near/e_far)/ln(r_near/r_far).
    pub exponent: Option<f64>,
    /// The exponent of the drawn wedges (`wedge_exponent`), where the
    /// insulation around the junction is one or two straight wedges
    /// between conductor faces.
    pub exponent_drawn: Option<f64>,
}

impl Junction {
    /// The field rises toward the junction (λ below 0.9, allowing for the
    /// scatter of a two-distance estimate).
    pub fn enhanced(&self) -> bool {
        self.exponent.is_some_and(|l| l < JUNCTION_ENHANCED_BELOW)
    }
}

/// λ below this counts as an enhanced junction.
pub const JUNCTION_ENHANCED_BELOW: f64 = 0.9;
/// Distance in cells of the near field sample: two cells out, where the
/// sampler interpolates between resolved values (the cells touching the
/// point hold averages of a singular field, biased differently on a graded
/// grid than on a uniform one).
const JUNCTION_NEAR_CELLS: f64 = 2.0;
/// Distance in cells of the far field sample.
const JUNCTION_FAR_CELLS: f64 = 8.0;
/// Junctions closer than this many cells to an earlier one of the same
/// materials are the same junction.
const JUNCTION_MERGE_CELLS: f64 = 3.0;
/// Most junctions listed.
pub const MAX_JUNCTIONS: usize = 50;

/// The triple junctions of the layout, in grid order.
/// `permittivity` is each region's relative permittivity (for the drawn
/// wedges' exponent).
pub fn triple_junctions(case: &Case, sampler: &Sampler, permittivity: &[f64]) -> Vec<Junction> {
    use crate::grid::{CONDUCTOR, NO_ELECTRODE, NodeIx};
    let (grid, layout) = (sampler.grid(), sampler.layout());
    let class = |r: u32| case.materials[layout.regions[r as usize].material].class;
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut out: Vec<Junction> = Vec::new();
    for n in 0..grid.nodes() {
        let e = layout.node_electrode[n];
        if e == NO_ELECTRODE {
            continue;
        }
        let (i, j) = grid.node_ij(NodeIx(n));
        let mut solid = None;
        let mut fluid = None;
        for (ci, cj) in [(i.wrapping_sub(1), j.wrapping_sub(1)), (i, j.wrapping_sub(1)), (i.wrapping_sub(1), j), (i, j)]
        {
            if ci >= nx - 1 || cj >= ny - 1 {
                continue;
            }
            let r = layout.cell_region[grid.cell(ci, cj).0];
            if r == CONDUCTOR {
                continue;
            }
            match class(r) {
                MaterialClass::Solid => solid = solid.or(Some(r)),
                MaterialClass::Gas | MaterialClass::Liquid => fluid = fluid.or(Some(r)),
            }
        }
        let (Some(solid), Some(fl)) = (solid, fluid) else { continue };
        // a node inside an electrode line lying on a solid–fluid surface (a
        // foil or sleeve on the surface) is on a contact line, not a junction
        let on = |a: usize, b: usize| a < nx && b < ny && layout.node_electrode[grid.node(a, b).0] == e;
        let cell_class = |ci: usize, cj: usize| {
            (ci < nx - 1 && cj < ny - 1)
                .then(|| layout.cell_region[grid.cell(ci, cj).0])
                .filter(|&r| r != CONDUCTOR)
                .map(class)
        };
        let along_x = on(i.wrapping_sub(1), j)
            && on(i + 1, j)
            && cell_class(i, j) != cell_class(i, j.wrapping_sub(1))
            && cell_class(i.wrapping_sub(1), j) == cell_class(i, j)
            && cell_class(i.wrapping_sub(1), j.wrapping_sub(1)) == cell_class(i, j.wrapping_sub(1));
        let along_y = on(i, j.wrapping_sub(1))
            && on(i, j + 1)
            && cell_class(i, j) != cell_class(i.wrapping_sub(1), j)
            && cell_class(i, j.wrapping_sub(1)) == cell_class(i, j)
            && cell_class(i.wrapping_sub(1), j.wrapping_sub(1)) == cell_class(i.wrapping_sub(1), j);
        if along_x || along_y {
            continue;
        }
        let at = grid.node_pos(NodeIx(n));
        let h = sampler.cell_size(at);
        let same = |k: &Junction| {
            k.solid == solid as usize
                && k.fluid == fl as usize
                && (k.at[0] - at[0]).hypot(k.at[1] - at[1]) <= JUNCTION_MERGE_CELLS * h
        };
        if out.iter().any(same) {
            continue;
        }
        if out.len() >= MAX_JUNCTIONS {
            break;
        }
        let r_near = JUNCTION_NEAR_CELLS * h;
        let r_far = JUNCTION_FAR_CELLS * h;
        let e_near = ring_max(sampler, at, r_near, |r| r == fl).map_or(0.0, |v| v.e);
        let e_far = ring_max(sampler, at, r_far, |r| r == fl).map_or(0.0, |v| v.e);
        let exponent = (e_near > 0.0 && e_far > 0.0).then(|| 1.0 + (e_near / e_far).ln() / (r_near / r_far).ln());
        out.push(Junction {
            at,
            electrode: e as usize,
            solid: solid as usize,
            fluid: fl as usize,
            fluid_is_gas: class(fl) == MaterialClass::Gas,
            e_near,
            e_far,
            exponent,
            exponent_drawn: drawn_wedges(sampler, at, h, permittivity).and_then(|w| wedge_exponent(&w)),
        });
    }
    out
}
