//! Field lines: curves everywhere tangent to E, traced through the parts a
//! caller says they may run in.
//!
//! A line is followed in both directions from its seed with the midpoint
//! (second-order Runge–Kutta) rule on the unit field direction; the step is
//! a fraction of the local cell size, halved while the direction turns by
//! more than a set angle within a step (so lines bend correctly round
//! electrode edges, where the grid is fine). A direction stops at an
//! electrode, on entering a part the line may not cross (located by
//! bisection to 1e-9 of a step), at the domain's edge, where the
//! field reverses within a step (a zero-thickness foil) or vanishes, or
//! after a bounded number of points.

use super::{Inside, Sampler};

/// How finely lines are traced.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TraceConfig {
    /// Step as a fraction of the local cell size.
    pub step_cells: f64,
    /// Largest turn of the field direction within a step, rad.
    pub max_turn_rad: f64,
    /// Most points per direction.
    pub max_points: usize,
}

impl Default for TraceConfig {
    fn default() -> Self {
        TraceConfig { step_cells: 0.25, max_turn_rad: 0.05, max_points: 100_000 }
    }
}

/// Why one direction of a line ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum End {
    /// On an electrode (layout index).
    Electrode(u32),
    /// On entering a region the line may not cross (layout index).
    Region(u32),
    /// At the edge of the domain.
    Domain,
    /// Where the field vanishes (a symmetry point).
    Stagnation,
    /// After the most points allowed.
    Truncated,
}

/// A traced field line.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldLine {
    /// Points in m, in order along the line.
    pub points: Vec<[f64; 2]>,
    /// |E| at each point, V/m (the solution's convention).
    pub e: Vec<f64>,
    /// Region at each point (layout index).
    pub regions: Vec<u32>,
    /// How the line ends at its first and its last point.
    pub ends: [End; 2],
}

impl FieldLine {
    /// A line with no points (nothing could be traced).
    pub fn empty() -> FieldLine {
        FieldLine { points: Vec::new(), e: Vec::new(), regions: Vec::new(), ends: [End::Stagnation; 2] }
    }

    /// Length of each segment, m.
    pub fn segments(&self) -> impl Iterator<Item = f64> + '_ {
        self.points.windows(2).map(|w| (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1]))
    }

    /// Total length, m.
    pub fn length(&self) -> f64 {
        self.segments().sum()
    }

    /// The line reversed (ends swapped).
    pub fn reversed(mut self) -> FieldLine {
        self.points.reverse();
        self.e.reverse();
        self.regions.reverse();
        self.ends.reverse();
        self
    }
}

fn unit(e: [f64; 2], sign: f64) -> Option<[f64; 2]> {
    let m = e[0].hypot(e[1]);
    (m > 0.0 && m.is_finite()).then(|| [sign * e[0] / m, sign * e[1] / m])
}

fn lerp(a: [f64; 2], b: [f64; 2], t: f64) -> [f64; 2] {
    [a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1])]
}

/// Bisection steps that locate an exit to 1e-9 of the step (so lines
/// across a uniform layer agree in length far below the tie tolerance of
/// the inception search).
const EXIT_BISECTIONS: usize = 30;

/// The last point of the segment p → q where `inside` still holds (p
/// inside, q not), by bisection.
fn last_inside(p: [f64; 2], q: [f64; 2], inside: &dyn Fn([f64; 2]) -> bool) -> [f64; 2] {
    let (mut lo, mut hi) = (0.0, 1.0);
    for _ in 0..EXIT_BISECTIONS {
        let m = 0.5 * (lo + hi);
        if inside(lerp(p, q, m)) { lo = m } else { hi = m }
    }
    lerp(p, q, lo)
}

/// Excursion beyond the domain's edge, as a fraction of the step, that
/// counts as rounding (a line along a zero-flux edge), not as leaving.
const EDGE_ROUNDING: f64 = 1e-6;

/// One direction from `seed`: points after the seed, and how it ended.
fn half(
    sampler: &Sampler,
    seed: [f64; 2],
    sign: f64,
    continues: &dyn Fn(Inside) -> bool,
    config: &TraceConfig,
    max_length: f64,
) -> (Vec<([f64; 2], f64, u32)>, End) {
    let domain = sampler.domain();
    let inside_domain = |p: [f64; 2]| p[0] >= domain[0] && p[0] <= domain[1] && p[1] >= domain[2] && p[1] <= domain[3];
    let cos_turn = config.max_turn_rad.cos();
    let mut out = Vec::new();
    let mut p = seed;
    let mut length = 0.0;
    let floor = 1e-9 * sampler.at(seed).magnitude();
    loop {
        if out.len() >= config.max_points || length > max_length {
            return (out, End::Truncated);
        }
        let s = sampler.at(p);
        let Some(d1) = unit(s.e, sign).filter(|_| s.magnitude() > floor) else {
            return (out, End::Stagnation);
        };
        let h0 = config.step_cells * sampler.cell_size(p);
        let mut h = h0;
        let q = loop {
            let mid = [p[0] + 0.5 * h * d1[0], p[1] + 0.5 * h * d1[1]];
            let Some(d2) = unit(sampler.at(mid).e, sign) else {
                return (out, End::Stagnation);
            };
            if d1[0] * d2[0] + d1[1] * d2[1] < cos_turn && h > 1e-3 * h0 {
                h *= 0.5;
                continue;
            }
            break [p[0] + h * d2[0], p[1] + h * d2[1]];
        };
        // a direction's last point: on the boundary it left by, where that
        // lies in a region
        let finish = |mut out: Vec<([f64; 2], f64, u32)>, b: [f64; 2], end: End| {
            let sb = sampler.at(b);
            if let Inside::Region(r) = sb.inside {
                out.push((b, sb.magnitude(), r));
            }
            (out, end)
        };
        // Edges of the domain that are not electrodes carry no flux, so no
        // line crosses them: a line running along one (a seed on the edge)
        // that strays out by rounding stays on it; one that leaves by more
        // than rounding ends there.
        let on_edge = [q[0].clamp(domain[0], domain[1]), q[1].clamp(domain[2], domain[3])];
        let q = if (q[0] - on_edge[0]).hypot(q[1] - on_edge[1]) <= EDGE_ROUNDING * h { on_edge } else { q };
        if !inside_domain(q) {
            return finish(out, last_inside(p, q, &inside_domain), End::Domain);
        }
        let sq = sampler.at(q);
        // The field reverses within the step: the line has reached a
        // conductor with no cells (a zero-thickness foil) or a point where
        // lines meet; it ends where the direction turns.
        let forward = |e: [f64; 2]| unit(e, sign).is_some_and(|d| d1[0] * d[0] + d1[1] * d[1] > 0.0);
        if !forward(sq.e) {
            let b = last_inside(p, q, &|x| forward(sampler.at(x).e));
            return finish(out, b, sampler.electrode_near(q).map_or(End::Stagnation, End::Electrode));
        }
        if !continues(sq.inside) {
            let end = match sq.inside {
                Inside::Electrode(e) => End::Electrode(e),
                Inside::Region(r) => End::Region(r),
            };
            return finish(out, last_inside(p, q, &|x| continues(sampler.at(x).inside)), end);
        }
        let Inside::Region(r) = sq.inside else { unreachable!("a continuing point lies in a region") };
        length += h;
        out.push((q, sq.magnitude(), r));
        p = q;
    }
}

/// Traces the field line through `seed` in both directions while
/// `continues` holds for what the points lie in. `None` when the seed
/// itself does not continue or the field vanishes there.
pub fn trace(
    sampler: &Sampler,
    seed: [f64; 2],
    continues: &dyn Fn(Inside) -> bool,
    config: &TraceConfig,
) -> Option<FieldLine> {
    let s = sampler.at(seed);
    let Inside::Region(r0) = s.inside else { return None };
    if !continues(s.inside) || s.magnitude().is_nan() || s.magnitude() <= 0.0 {
        return None;
    }
    let d = sampler.domain();
    let max_length = 4.0 * ((d[1] - d[0]) + (d[3] - d[2]));
    let (back, end0) = half(sampler, seed, -1.0, continues, config, max_length);
    let (fore, end1) = half(sampler, seed, 1.0, continues, config, max_length);
    let n = back.len() + 1 + fore.len();
    let (mut points, mut e, mut regions) = (Vec::with_capacity(n), Vec::with_capacity(n), Vec::with_capacity(n));
    for &(p, m, r) in back.iter().rev().chain(std::iter::once(&(seed, s.magnitude(), r0))).chain(fore.iter()) {
        points.push(p);
        e.push(m);
        regions.push(r);
    }
    Some(FieldLine { points, e, regions, ends: [end0, end1] })
}
