//! Plane shapes in SI coordinates (metres) and their point tests.
//!
//! Coordinates are (x, y) for planar cases and (r, z) for axisymmetric ones.
//! Shapes know nothing about grids: painting them onto a grid is `grid`'s job.

/// An axis-aligned rectangle; zero width or height makes a line (a foil).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rect {
    /// Lower x bound.
    pub x0: f64,
    /// Upper x bound.
    pub x1: f64,
    /// Lower y bound.
    pub y0: f64,
    /// Upper y bound.
    pub y1: f64,
}

impl Rect {
    /// Width along x.
    pub fn width(&self) -> f64 {
        self.x1 - self.x0
    }

    /// Height along y.
    pub fn height(&self) -> f64 {
        self.y1 - self.y0
    }

    /// True when `p` lies in the closed rectangle grown by `tol` on every side.
    pub fn contains_closed(&self, p: [f64; 2], tol: f64) -> bool {
        p[0] >= self.x0 - tol && p[0] <= self.x1 + tol && p[1] >= self.y0 - tol && p[1] <= self.y1 + tol
    }

    /// True when the two closed rectangles share at least one point.
    pub fn intersects(&self, other: &Rect) -> bool {
        self.x0 <= other.x1 && other.x0 <= self.x1 && self.y0 <= other.y1 && other.y0 <= self.y1
    }
}

/// A shape a part is drawn with.
#[derive(Debug, Clone, PartialEq)]
pub enum Shape {
    /// Axis-aligned rectangle (or line, when thin in one direction).
    Rect(Rect),
    /// Circle (in axisymmetric cases: a torus, or a sphere when centred on the axis).
    Circle {
        /// Centre.
        center: [f64; 2],
        /// Radius.
        radius: f64,
    },
    /// Simple polygon given by its vertices in order.
    Polygon(Vec<[f64; 2]>),
    /// Polygon whose corners are rounded: `points` is the outline with each
    /// fillet arc sampled finely; `breaks` are the points where grid lines
    /// belong (the tangent points of the arcs).
    Filleted {
        /// Outline, arcs sampled.
        points: Vec<[f64; 2]>,
        /// Points where grid lines belong: the ends of every arc and its
        /// extremes along x and y, and the polygon's vertices.
        breaks: Vec<[f64; 2]>,
        /// Smallest arc radius.
        radius: f64,
        /// Bounding boxes of the arcs (where the default grid is refined).
        curved: Vec<Rect>,
        /// Convex corners left sharp (where an arc meets an edge at an angle).
        sharp: Vec<[f64; 2]>,
    },
    /// Axis-aligned rectangle with its four corners rounded to `radius`
    /// (at most half the shorter side).
    RoundedRect {
        /// The outer rectangle.
        rect: Rect,
        /// Corner radius.
        radius: f64,
    },
    /// A zero-thickness foil (a rectangle thin in one direction) whose two
    /// ends are rolled or beaded: a disc of `radius` at each end, inside the
    /// drawn length (its outer extreme at the drawn end).
    Beaded {
        /// The foil line.
        rect: Rect,
        /// Radius of the beads.
        radius: f64,
    },
}

impl Shape {
    /// The bead centres of a beaded foil (empty for other shapes).
    pub fn bead_centres(&self) -> Vec<[f64; 2]> {
        match self {
            Shape::Beaded { rect: r, radius } if r.height() == 0.0 => {
                vec![[r.x0 + radius, r.y0], [r.x1 - radius, r.y0]]
            }
            Shape::Beaded { rect: r, radius } => vec![[r.x0, r.y0 + radius], [r.x0, r.y1 - radius]],
            _ => Vec::new(),
        }
    }

    /// The bead discs of a beaded foil as circles.
    fn beads(&self) -> Vec<Shape> {
        let radius = match self {
            Shape::Beaded { radius, .. } => *radius,
            _ => 0.0,
        };
        self.bead_centres().into_iter().map(|center| Shape::Circle { center, radius }).collect()
    }

    /// True where the outline near `p` is curved, so that nodal peaks there
    /// give way to the surface fields recovered along the outline: every
    /// non-rectangular shape, and for a beaded foil its beads only.
    pub fn curved_at(&self, p: [f64; 2], tol: f64) -> bool {
        match self {
            Shape::Rect(_) => false,
            Shape::Beaded { .. } => self.beads().iter().any(|b| b.contains_closed(p, tol)),
            _ => true,
        }
    }

    /// Bounding box.
    pub fn bounds(&self) -> Rect {
        match self {
            Shape::Rect(r) => *r,
            Shape::Circle { center, radius } => {
                Rect { x0: center[0] - radius, x1: center[0] + radius, y0: center[1] - radius, y1: center[1] + radius }
            }
            Shape::RoundedRect { rect, .. } => *rect,
            Shape::Polygon(v) | Shape::Filleted { points: v, .. } => bounds_of(v),
            Shape::Beaded { rect: r, radius } if r.height() == 0.0 => {
                Rect { x0: r.x0, x1: r.x1, y0: r.y0 - radius, y1: r.y0 + radius }
            }
            Shape::Beaded { rect: r, radius } => Rect { x0: r.x0 - radius, x1: r.x0 + radius, y0: r.y0, y1: r.y1 },
        }
    }

    /// The outline as a closed polygon (last point not repeated), arcs
    /// sampled every few degrees: for drawing, not for geometry tests.
    pub fn outline(&self) -> Vec<[f64; 2]> {
        const ARC_STEPS: usize = 96;
        let arc = |c: [f64; 2], r: f64, from: f64, steps: usize| {
            (0..=steps).map(move |k| {
                let a = from + std::f64::consts::FRAC_PI_2 * k as f64 / steps as f64;
                [c[0] + r * a.cos(), c[1] + r * a.sin()]
            })
        };
        match self {
            Shape::Rect(r) => vec![[r.x0, r.y0], [r.x1, r.y0], [r.x1, r.y1], [r.x0, r.y1]],
            Shape::Circle { center, radius } => (0..ARC_STEPS)
                .map(|k| {
                    let a = std::f64::consts::TAU * k as f64 / ARC_STEPS as f64;
                    [center[0] + radius * a.cos(), center[1] + radius * a.sin()]
                })
                .collect(),
            Shape::Polygon(v) | Shape::Filleted { points: v, .. } => v.clone(),
            Shape::RoundedRect { rect: r, radius } => {
                let q = ARC_STEPS / 4;
                let (rad, h) = (*radius, std::f64::consts::FRAC_PI_2);
                arc([r.x1 - rad, r.y0 + rad], rad, -h, q)
                    .chain(arc([r.x1 - rad, r.y1 - rad], rad, 0.0, q))
                    .chain(arc([r.x0 + rad, r.y1 - rad], rad, h, q))
                    .chain(arc([r.x0 + rad, r.y0 + rad], rad, 2.0 * h, q))
                    .collect()
            }
            Shape::Beaded { radius, .. } => {
                // one bead, the foil to the other, around that bead, and back
                let c = self.bead_centres();
                let (a, b) = (c[0], c[1]);
                let dir = [
                    (b[0] - a[0]) / (b[0] - a[0]).hypot(b[1] - a[1]),
                    (b[1] - a[1]) / (b[0] - a[0]).hypot(b[1] - a[1]),
                ];
                let start = dir[1].atan2(dir[0]);
                let around = |c: [f64; 2], from: f64| {
                    (0..=ARC_STEPS).map(move |k| {
                        let t = from + std::f64::consts::TAU * k as f64 / ARC_STEPS as f64;
                        [c[0] + radius * t.cos(), c[1] + radius * t.sin()]
                    })
                };
                around(a, start).chain(around(b, start + std::f64::consts::PI)).collect()
            }
        }
    }

    /// Area enclosed (zero for a line).
    pub fn area(&self) -> f64 {
        match self {
            Shape::Rect(r) => r.width() * r.height(),
            Shape::Circle { radius, .. } => std::f64::consts::PI * radius * radius,
            Shape::Polygon(v) | Shape::Filleted { points: v, .. } => polygon_signed_area(v).abs(),
            Shape::RoundedRect { rect, radius } => {
                rect.width() * rect.height() - (4.0 - std::f64::consts::PI) * radius * radius
            }
            Shape::Beaded { radius, .. } => 2.0 * std::f64::consts::PI * radius * radius,
        }
    }

    /// Coordinates along x and along y where the shape has an edge, a vertex
    /// or an extreme point; grid lines are placed there.
    pub fn breakpoints(&self) -> (Vec<f64>, Vec<f64>) {
        match self {
            Shape::Rect(r) => (vec![r.x0, r.x1], vec![r.y0, r.y1]),
            Shape::Circle { center, radius } => (
                vec![center[0] - radius, center[0], center[0] + radius],
                vec![center[1] - radius, center[1], center[1] + radius],
            ),
            Shape::Polygon(v) | Shape::Filleted { breaks: v, .. } => {
                (v.iter().map(|p| p[0]).collect(), v.iter().map(|p| p[1]).collect())
            }
            Shape::RoundedRect { rect: r, radius } => {
                (vec![r.x0, r.x0 + radius, r.x1 - radius, r.x1], vec![r.y0, r.y0 + radius, r.y1 - radius, r.y1])
            }
            Shape::Beaded { .. } => {
                let (mut xs, mut ys) = (Vec::new(), Vec::new());
                for b in self.beads() {
                    let (x, y) = b.breakpoints();
                    xs.extend(x);
                    ys.extend(y);
                }
                (xs, ys)
            }
        }
    }

    /// Points where the outline has a sharp convex feature: the corners of
    /// a rectangle, the ends of a zero-thickness rectangle (a foil), the
    /// convex vertices of a polygon. Around a conductor such a point has no
    /// finite field (Jackson, Classical Electrodynamics, 3rd ed. 1999,
    /// §2.11): the peak there depends on the grid.
    pub fn sharp_points(&self) -> Vec<[f64; 2]> {
        match self {
            Shape::Rect(r) => {
                let mut v = vec![[r.x0, r.y0], [r.x1, r.y0], [r.x0, r.y1], [r.x1, r.y1]];
                v.dedup();
                if r.width() == 0.0 || r.height() == 0.0 {
                    v = vec![[r.x0, r.y0], [r.x1, r.y1]];
                    v.dedup();
                }
                v
            }
            Shape::Circle { .. } | Shape::RoundedRect { .. } | Shape::Beaded { .. } => Vec::new(),
            Shape::Filleted { sharp, .. } => sharp.clone(),
            Shape::Polygon(v) => {
                let orientation = polygon_signed_area(v).signum();
                (0..v.len())
                    .filter(|&i| {
                        let (a, b, c) = (v[(i + v.len() - 1) % v.len()], v[i], v[(i + 1) % v.len()]);
                        let cross = (b[0] - a[0]) * (c[1] - b[1]) - (b[1] - a[1]) * (c[0] - b[0]);
                        cross * orientation > 0.0
                    })
                    .map(|i| v[i])
                    .collect()
            }
        }
    }

    /// Where the segment from `a` (outside) to `b` first meets the shape:
    /// the fraction t ∈ [0, 1] of the way, and the outward normal there.
    /// `None` for rectangles (their edges lie on grid lines) or when the
    /// segment does not meet the outline.
    pub fn entry(&self, a: [f64; 2], b: [f64; 2]) -> Option<(f64, [f64; 2])> {
        let d = [b[0] - a[0], b[1] - a[1]];
        match self {
            Shape::Rect(_) => None,
            // the foil itself lies on a grid line; only the beads are curved
            Shape::Beaded { .. } => {
                let inside = |bead: &&Shape| bead.contains_closed(b, 0.0) && !bead.contains_closed(a, 0.0);
                self.beads()
                    .iter()
                    .filter(inside)
                    .filter_map(|bead| bead.entry(a, b))
                    .min_by(|x, y| x.0.total_cmp(&y.0))
            }
            Shape::RoundedRect { .. } => {
                // bisection on the signed distance along the segment
                let sd = |t: f64| self.signed_distance([a[0] + t * d[0], a[1] + t * d[1]]);
                if sd(0.0) <= 0.0 || sd(1.0) > 0.0 {
                    return None;
                }
                let (mut lo, mut hi) = (0.0, 1.0);
                for _ in 0..60 {
                    let mid = 0.5 * (lo + hi);
                    if sd(mid) > 0.0 { lo = mid } else { hi = mid }
                }
                let p = [a[0] + hi * d[0], a[1] + hi * d[1]];
                Some((hi, self.outward_normal(p)))
            }
            Shape::Circle { center, radius } => {
                let f = [a[0] - center[0], a[1] - center[1]];
                let qa = d[0] * d[0] + d[1] * d[1];
                let qb = 2.0 * (f[0] * d[0] + f[1] * d[1]);
                let qc = f[0] * f[0] + f[1] * f[1] - radius * radius;
                let disc = qb * qb - 4.0 * qa * qc;
                if qa == 0.0 || disc < 0.0 {
                    return None;
                }
                let t = ((-qb - disc.sqrt()) / (2.0 * qa)).clamp(0.0, 1.0);
                let p = [a[0] + t * d[0], a[1] + t * d[1]];
                let n = [(p[0] - center[0]) / radius, (p[1] - center[1]) / radius];
                Some((t, n))
            }
            Shape::Polygon(v) | Shape::Filleted { points: v, .. } => {
                let orientation = polygon_signed_area(v).signum();
                polygon_edges(v)
                    .filter_map(|(p, q)| {
                        let e = [q[0] - p[0], q[1] - p[1]];
                        let den = d[0] * e[1] - d[1] * e[0];
                        if den == 0.0 {
                            return None;
                        }
                        let w = [p[0] - a[0], p[1] - a[1]];
                        let t = (w[0] * e[1] - w[1] * e[0]) / den;
                        let u = (w[0] * d[1] - w[1] * d[0]) / den;
                        if !(-1e-12..=1.0 + 1e-12).contains(&t) || !(-1e-12..=1.0 + 1e-12).contains(&u) {
                            return None;
                        }
                        let len = (e[0] * e[0] + e[1] * e[1]).sqrt();
                        // outward normal of a counter-clockwise polygon is (e_y, −e_x)
                        let n = [orientation * e[1] / len, -orientation * e[0] / len];
                        Some((t.clamp(0.0, 1.0), n))
                    })
                    .min_by(|x, y| x.0.total_cmp(&y.0))
            }
        }
    }

    /// Distance from `p` to the nearest point of the outline.
    pub fn outline_distance(&self, p: [f64; 2]) -> f64 {
        let edges =
            |v: &[[f64; 2]]| polygon_edges(v).map(|(a, b)| segment_distance(a, b, p)).fold(f64::INFINITY, f64::min);
        match self {
            Shape::Circle { center, radius } => ((p[0] - center[0]).hypot(p[1] - center[1]) - radius).abs(),
            Shape::RoundedRect { .. } => self.signed_distance(p).abs(),
            Shape::Rect(r) => edges(&[[r.x0, r.y0], [r.x1, r.y0], [r.x1, r.y1], [r.x0, r.y1]]),
            Shape::Polygon(v) | Shape::Filleted { points: v, .. } => edges(v),
            Shape::Beaded { rect: r, .. } => self
                .beads()
                .iter()
                .map(|b| b.outline_distance(p))
                .fold(segment_distance([r.x0, r.y0], [r.x1, r.y1], p), f64::min),
        }
    }

    /// Unit normal of the outline at the outline point nearest `p` (its
    /// sign is not specified; a tensor n·nᵀ does not need it).
    pub fn normal_near(&self, p: [f64; 2]) -> [f64; 2] {
        let unit = |v: [f64; 2]| {
            let len = v[0].hypot(v[1]);
            if len > 0.0 { [v[0] / len, v[1] / len] } else { [1.0, 0.0] }
        };
        let nearest_edge = |v: &[[f64; 2]]| {
            polygon_edges(v)
                .min_by(|a, b| segment_distance(a.0, a.1, p).total_cmp(&segment_distance(b.0, b.1, p)))
                .map_or([1.0, 0.0], |(a, b)| unit([b[1] - a[1], a[0] - b[0]]))
        };
        match self {
            Shape::Circle { center, .. } => unit([p[0] - center[0], p[1] - center[1]]),
            Shape::RoundedRect { .. } => {
                let n = self.outward_normal(p);
                if n == [0.0, 0.0] { [1.0, 0.0] } else { n }
            }
            Shape::Rect(r) => nearest_edge(&[[r.x0, r.y0], [r.x1, r.y0], [r.x1, r.y1], [r.x0, r.y1]]),
            Shape::Polygon(v) | Shape::Filleted { points: v, .. } => nearest_edge(v),
            Shape::Beaded { rect: r, .. } => {
                let beads = self.beads();
                let nearest = beads.iter().min_by(|a, b| a.outline_distance(p).total_cmp(&b.outline_distance(p)));
                match nearest {
                    Some(b) if b.outline_distance(p) < segment_distance([r.x0, r.y0], [r.x1, r.y1], p) => {
                        b.normal_near(p)
                    }
                    _ => unit([-(r.y1 - r.y0), r.x1 - r.x0]),
                }
            }
        }
    }

    /// True when `p` lies inside the shape or within `tol` of its outline.
    pub fn contains_closed(&self, p: [f64; 2], tol: f64) -> bool {
        match self {
            Shape::Rect(r) => r.contains_closed(p, tol),
            Shape::Circle { center, radius } => {
                let (dx, dy) = (p[0] - center[0], p[1] - center[1]);
                (dx * dx + dy * dy).sqrt() <= radius + tol
            }
            Shape::Polygon(v) | Shape::Filleted { points: v, .. } => {
                point_in_polygon(v, p) || polygon_edges(v).any(|(a, b)| segment_distance(a, b, p) <= tol)
            }
            Shape::RoundedRect { .. } => self.signed_distance(p) <= tol,
            Shape::Beaded { rect, .. } => {
                rect.contains_closed(p, tol) || self.beads().iter().any(|b| b.contains_closed(p, tol))
            }
        }
    }

    /// Signed distance to a rounded rectangle's outline (negative inside);
    /// for other shapes only its sign is meaningful.
    fn signed_distance(&self, p: [f64; 2]) -> f64 {
        match self {
            Shape::RoundedRect { rect: r, radius } => {
                let (cx, cy) = (0.5 * (r.x0 + r.x1), 0.5 * (r.y0 + r.y1));
                let qx = (p[0] - cx).abs() - (0.5 * r.width() - radius);
                let qy = (p[1] - cy).abs() - (0.5 * r.height() - radius);
                let outside = (qx.max(0.0).powi(2) + qy.max(0.0).powi(2)).sqrt();
                outside + qx.max(qy).min(0.0) - radius
            }
            _ => {
                if self.contains_closed(p, 0.0) {
                    -1.0
                } else {
                    1.0
                }
            }
        }
    }

    /// Outward normal of a rounded rectangle at a point of its outline.
    fn outward_normal(&self, p: [f64; 2]) -> [f64; 2] {
        let Shape::RoundedRect { rect: r, radius } = self else { return [0.0, 0.0] };
        let (cx, cy) = (0.5 * (r.x0 + r.x1), 0.5 * (r.y0 + r.y1));
        // a stadium (radius half the shorter side) has an inner rectangle of
        // zero width, which rounding can make slightly negative
        let (hx, hy) = ((0.5 * r.width() - radius).max(0.0), (0.5 * r.height() - radius).max(0.0));
        // nearest point of the inner rectangle; the normal points away from it
        let nx = (p[0] - cx).clamp(-hx, hx) + cx;
        let ny = (p[1] - cy).clamp(-hy, hy) + cy;
        let (dx, dy) = (p[0] - nx, p[1] - ny);
        let len = (dx * dx + dy * dy).sqrt();
        if len > 0.0 { [dx / len, dy / len] } else { [0.0, 0.0] }
    }
}

fn polygon_edges(v: &[[f64; 2]]) -> impl Iterator<Item = ([f64; 2], [f64; 2])> + '_ {
    (0..v.len()).map(move |i| (v[i], v[(i + 1) % v.len()]))
}

/// Segments per quarter turn of a fillet arc.
const ARC_SEGMENTS_PER_QUARTER: f64 = 24.0;

/// Rounds every corner of a polygon with an arc of `radius` tangent to both
/// edges. Errors name the corner whose edges are too short for the radius.
pub fn fillet(v: &[[f64; 2]], radius: f64) -> Result<Shape, String> {
    let n = v.len();
    let mut points = Vec::new();
    let mut breaks = Vec::new();
    let mut used = vec![0.0; n]; // length taken from each edge (i → i+1)
    let mut arcs = Vec::with_capacity(n);
    for i in 0..n {
        let (a, b, c) = (v[(i + n - 1) % n], v[i], v[(i + 1) % n]);
        let (la, lc) = (dist(a, b), dist(c, b));
        if la == 0.0 || lc == 0.0 {
            return Err(format!("corner {} repeats a point", i + 1));
        }
        let u = [(a[0] - b[0]) / la, (a[1] - b[1]) / la];
        let w = [(c[0] - b[0]) / lc, (c[1] - b[1]) / lc];
        let cos = (u[0] * w[0] + u[1] * w[1]).clamp(-1.0, 1.0);
        let theta = cos.acos();
        if theta < 1e-9 || (std::f64::consts::PI - theta) < 1e-9 {
            return Err(format!("corner {} is degenerate (its edges are collinear)", i + 1));
        }
        let t = radius / (0.5 * theta).tan();
        used[(i + n - 1) % n] += t;
        used[i] += t;
        let t1 = [b[0] + u[0] * t, b[1] + u[1] * t];
        let t2 = [b[0] + w[0] * t, b[1] + w[1] * t];
        let bis = [u[0] + w[0], u[1] + w[1]];
        let bl = (bis[0] * bis[0] + bis[1] * bis[1]).sqrt();
        let h = radius / (0.5 * theta).sin();
        let centre = [b[0] + bis[0] / bl * h, b[1] + bis[1] / bl * h];
        arcs.push((t1, t2, centre));
    }
    for i in 0..n {
        if used[i] > dist(v[i], v[(i + 1) % n]) * (1.0 + 1e-12) {
            return Err(format!(
                "the fillet radius is too large for the edge from corner {} to corner {}",
                i + 1,
                (i + 1) % n + 1
            ));
        }
    }
    let mut curved = Vec::new();
    for (t1, t2, c) in arcs {
        let first = points.len();
        let a1 = (t1[1] - c[1]).atan2(t1[0] - c[0]);
        let mut a2 = (t2[1] - c[1]).atan2(t2[0] - c[0]);
        // the short way round
        let mut sweep = a2 - a1;
        while sweep > std::f64::consts::PI {
            sweep -= 2.0 * std::f64::consts::PI;
        }
        while sweep < -std::f64::consts::PI {
            sweep += 2.0 * std::f64::consts::PI;
        }
        a2 = a1 + sweep;
        let steps = ((sweep.abs() / std::f64::consts::FRAC_PI_2) * ARC_SEGMENTS_PER_QUARTER).ceil().max(1.0) as usize;
        for k in 0..=steps {
            let ang = a1 + (a2 - a1) * k as f64 / steps as f64;
            points.push([c[0] + radius * ang.cos(), c[1] + radius * ang.sin()]);
        }
        breaks.push(t1);
        breaks.push(t2);
        curved.push(bounds_of(&points[first..]));
    }
    points.dedup();
    Ok(Shape::Filleted { points, breaks, radius, curved, sharp: Vec::new() })
}

/// Bounding box of points.
fn bounds_of(points: &[[f64; 2]]) -> Rect {
    points
        .iter()
        .fold(Rect { x0: f64::INFINITY, x1: f64::NEG_INFINITY, y0: f64::INFINITY, y1: f64::NEG_INFINITY }, |b, p| {
            Rect { x0: b.x0.min(p[0]), x1: b.x1.max(p[0]), y0: b.y0.min(p[1]), y1: b.y1.max(p[1]) }
        })
}

/// Replaces edges of a polygon by circular arcs: `arcs` holds (edge, radius)
/// with edge i running from vertex i to vertex i + 1 (0-based), a positive
/// radius bulging outward and a negative one inward (the shorter arc
/// through both ends). For axisymmetric profiles: bushing sheds, grading
/// ring sections, domed ends. Errors name the edge whose chord is longer
/// than the arc's diameter.
pub fn arced(v: &[[f64; 2]], arcs: &[(usize, f64)]) -> Result<Shape, String> {
    use std::f64::consts::{FRAC_PI_2, PI};
    let n = v.len();
    let orientation = polygon_signed_area(v).signum();
    let mut points = Vec::new();
    let mut breaks: Vec<[f64; 2]> = v.to_vec();
    let mut curved = Vec::new();
    let mut smallest = f64::INFINITY;
    for i in 0..n {
        let (a, b) = (v[i], v[(i + 1) % n]);
        points.push(a);
        let Some(&(_, radius)) = arcs.iter().find(|(e, _)| *e == i) else { continue };
        let chord = dist(a, b);
        let r = radius.abs();
        if chord == 0.0 || r < 0.5 * chord * (1.0 - 1e-12) {
            return Err(format!(
                "the arc radius {} mm is less than half the edge from corner {} to corner {}",
                1e3 * r,
                i + 1,
                (i + 1) % n + 1
            ));
        }
        if r > 1e6 * chord {
            return Err(format!(
                "the arc on the edge from corner {} to corner {} is straight to a millionth: leave the edge straight",
                i + 1,
                (i + 1) % n + 1
            ));
        }
        smallest = smallest.min(r);
        let e = [(b[0] - a[0]) / chord, (b[1] - a[1]) / chord];
        let outward = [orientation * e[1], -orientation * e[0]];
        let bulge = if radius > 0.0 { outward } else { [-outward[0], -outward[1]] };
        let d = (r * r - 0.25 * chord * chord).max(0.0).sqrt();
        let m = [0.5 * (a[0] + b[0]), 0.5 * (a[1] + b[1])];
        let c = [m[0] - bulge[0] * d, m[1] - bulge[1] * d];
        let a1 = (a[1] - c[1]).atan2(a[0] - c[0]);
        let mut sweep = (b[1] - c[1]).atan2(b[0] - c[0]) - a1;
        while sweep > PI {
            sweep -= 2.0 * PI;
        }
        while sweep < -PI {
            sweep += 2.0 * PI;
        }
        let steps = ((sweep.abs() / FRAC_PI_2) * ARC_SEGMENTS_PER_QUARTER).ceil().max(1.0) as usize;
        let first = points.len() - 1;
        for k in 1..steps {
            let ang = a1 + sweep * k as f64 / steps as f64;
            points.push([c[0] + r * ang.cos(), c[1] + r * ang.sin()]);
        }
        let mut arc = points[first..].to_vec();
        arc.push(b);
        curved.push(bounds_of(&arc));
        // The arc's extremes along x and y become grid lines, as for circles.
        for q in 0..4 {
            let ang = q as f64 * FRAC_PI_2;
            // the direction lies on the arc if some turn of it falls inside the sweep
            let within = (-1..=1).any(|turns| {
                let t = (ang + turns as f64 * 2.0 * PI - a1) / sweep;
                t > 0.0 && t < 1.0
            });
            if within {
                breaks.push([c[0] + r * ang.cos(), c[1] + r * ang.sin()]);
            }
        }
    }
    points.dedup();
    // Convex vertices where the outline turns by more than a few degrees
    // stay sharp corners.
    let sharp = v
        .iter()
        .filter(|&&p| {
            let Some(k) = points.iter().position(|q| *q == p) else { return false };
            let (prev, next) = (points[(k + points.len() - 1) % points.len()], points[(k + 1) % points.len()]);
            let (u, w) = ([p[0] - prev[0], p[1] - prev[1]], [next[0] - p[0], next[1] - p[1]]);
            let cross = u[0] * w[1] - u[1] * w[0];
            let turn = cross.atan2(u[0] * w[0] + u[1] * w[1]);
            turn * orientation > 5f64.to_radians()
        })
        .copied()
        .collect();
    Ok(Shape::Filleted { points, breaks, radius: smallest, curved, sharp })
}

/// Two edges of a closed outline that cross or touch although they are not
/// neighbours (the outline is not simple: a bow-tie, a loop).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Crossing {
    /// The two edges (edge i runs from point i to point i + 1).
    pub edges: (usize, usize),
    /// A point where they meet.
    pub at: [f64; 2],
}

/// The first pair of non-neighbouring edges of the closed outline `v` that
/// meet, if any. Zero-length edges are skipped. A sweep over the edges
/// sorted by their smallest x compares only edges whose x ranges overlap,
/// so sampled arcs of thousands of points stay cheap.
pub fn self_crossing(v: &[[f64; 2]]) -> Option<Crossing> {
    let n = v.len();
    let edges: Vec<usize> = (0..n).filter(|&i| v[i] != v[(i + 1) % n]).collect();
    let m = edges.len();
    if m < 4 {
        return None;
    }
    // neighbours in the cyclic order of the non-degenerate edges
    let rank: std::collections::HashMap<usize, usize> = edges.iter().enumerate().map(|(k, &i)| (i, k)).collect();
    let seg = |i: usize| (v[i], v[(i + 1) % n]);
    let mut order = edges.clone();
    let lo = |i: usize| v[i][0].min(v[(i + 1) % n][0]);
    let hi = |i: usize| v[i][0].max(v[(i + 1) % n][0]);
    order.sort_by(|&a, &b| lo(a).total_cmp(&lo(b)).then(a.cmp(&b)));
    for (k, &a) in order.iter().enumerate() {
        for &b in &order[k + 1..] {
            if lo(b) > hi(a) {
                break;
            }
            let (ra, rb) = (rank[&a], rank[&b]);
            let d = ra.abs_diff(rb);
            if d == 1 || d == m - 1 {
                continue;
            }
            let ((p, q), (r, s)) = (seg(a), seg(b));
            if let Some(at) = segments_meet(p, q, r, s) {
                return Some(Crossing { edges: (a.min(b), a.max(b)), at });
            }
        }
    }
    None
}

/// A point shared by the closed segments p–q and r–s, if any.
fn segments_meet(p: [f64; 2], q: [f64; 2], r: [f64; 2], s: [f64; 2]) -> Option<[f64; 2]> {
    let cross = |o: [f64; 2], a: [f64; 2], b: [f64; 2]| (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0]);
    let on = |a: [f64; 2], b: [f64; 2], c: [f64; 2]| {
        c[0] >= a[0].min(b[0]) && c[0] <= a[0].max(b[0]) && c[1] >= a[1].min(b[1]) && c[1] <= a[1].max(b[1])
    };
    let (d1, d2, d3, d4) = (cross(r, s, p), cross(r, s, q), cross(p, q, r), cross(p, q, s));
    if ((d1 > 0.0 && d2 < 0.0) || (d1 < 0.0 && d2 > 0.0)) && ((d3 > 0.0 && d4 < 0.0) || (d3 < 0.0 && d4 > 0.0)) {
        let t = d1 / (d1 - d2);
        return Some([p[0] + t * (q[0] - p[0]), p[1] + t * (q[1] - p[1])]);
    }
    for (d, c, a, b) in [(d1, p, r, s), (d2, q, r, s), (d3, r, p, q), (d4, s, p, q)] {
        if d == 0.0 && on(a, b, c) {
            return Some(c);
        }
    }
    None
}

/// Distance between two points.
pub(crate) fn dist(a: [f64; 2], b: [f64; 2]) -> f64 {
    ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2)).sqrt()
}

/// Shoelace formula.
fn polygon_signed_area(v: &[[f64; 2]]) -> f64 {
    0.5 * polygon_edges(v).map(|(a, b)| a[0] * b[1] - b[0] * a[1]).sum::<f64>()
}

/// Crossing-number test (points on the outline may go either way).
fn point_in_polygon(v: &[[f64; 2]], p: [f64; 2]) -> bool {
    let mut inside = false;
    for (a, b) in polygon_edges(v) {
        if (a[1] > p[1]) != (b[1] > p[1]) {
            let x = a[0] + (p[1] - a[1]) / (b[1] - a[1]) * (b[0] - a[0]);
            if p[0] < x {
                inside = !inside;
            }
        }
    }
    inside
}

/// Euclidean distance from `p` to the segment `a`–`b`.
pub fn segment_distance(a: [f64; 2], b: [f64; 2], p: [f64; 2]) -> f64 {
    let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
    let len2 = dx * dx + dy * dy;
    let t = if len2 > 0.0 { (((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len2).clamp(0.0, 1.0) } else { 0.0 };
    let (qx, qy) = (a[0] + t * dx - p[0], a[1] + t * dy - p[1]);
    (qx * qx + qy * qy).sqrt()
}

#[cfg(test)]
mod tests {

    #[test]
    fn a_stadium_has_a_normal_at_every_outline_point() {
        // radius half the width: the inner rectangle has zero width, and a
        // rounding residue once made `clamp` panic (found with 1 mm foils)
        let s = Shape::RoundedRect { rect: Rect { x0: 8.25e-3, x1: 9.25e-3, y0: 0.01, y1: 0.05 }, radius: 5e-4 };
        let (t, n) = s.entry([8.0e-3, 0.03], [8.75e-3, 0.03]).expect("the segment enters the stadium");
        assert!((t - 1.0 / 3.0).abs() < 1e-9, "{t}");
        assert!((n[0] + 1.0).abs() < 1e-9 && n[1].abs() < 1e-9, "{n:?}");
    }

    #[test]
    fn a_beaded_foil_is_its_line_and_two_discs() {
        let s = Shape::Beaded { rect: Rect { x0: 0.0, x1: 10.0, y0: 5.0, y1: 5.0 }, radius: 1.0 };
        assert_eq!(s.bead_centres(), vec![[1.0, 5.0], [9.0, 5.0]]);
        assert!(s.contains_closed([0.0, 5.0], 0.0) && s.contains_closed([1.0, 5.9], 0.0));
        assert!(s.contains_closed([5.0, 5.0], 0.0) && !s.contains_closed([5.0, 5.5], 0.0));
        assert!(s.sharp_points().is_empty());
        assert_eq!(s.bounds(), Rect { x0: 0.0, x1: 10.0, y0: 4.0, y1: 6.0 });
        // entering the left bead from outside along y: the disc's top
        let (t, n) = s.entry([1.0, 8.0], [1.0, 5.0]).unwrap();
        assert!((t - 2.0 / 3.0).abs() < 1e-12 && (n[1] - 1.0).abs() < 1e-12);
        // a node on the foil line away from the beads has no curved entry
        assert_eq!(s.entry([5.0, 8.0], [5.0, 5.0]), None);
        assert!(s.curved_at([1.0, 5.5], 0.0) && !s.curved_at([5.0, 5.0], 0.0));
    }

    use super::*;

    #[test]
    fn polygon_area_and_membership() {
        // unit square and a right triangle: elementary geometry, common practice
        let sq = Shape::Polygon(vec![[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]]);
        assert!((sq.area() - 1.0).abs() < 1e-15);
        assert!(sq.contains_closed([0.5, 0.5], 0.0));
        assert!(sq.contains_closed([1.0, 0.5], 1e-12));
        assert!(!sq.contains_closed([1.1, 0.5], 1e-12));
        let tri = Shape::Polygon(vec![[0.0, 0.0], [2.0, 0.0], [0.0, 2.0]]);
        assert!((tri.area() - 2.0).abs() < 1e-15);
        assert!(!tri.contains_closed([1.5, 1.5], 1e-9));
    }

    #[test]
    fn rounded_rect_area_membership_and_entry() {
        // area w·h − (4 − π)·r², elementary geometry, common practice
        let s = Shape::RoundedRect { rect: Rect { x0: 0.0, x1: 4.0, y0: 0.0, y1: 2.0 }, radius: 0.5 };
        assert!((s.area() - (8.0 - (4.0 - std::f64::consts::PI) * 0.25)).abs() < 1e-12);
        assert!(s.contains_closed([2.0, 1.0], 0.0));
        assert!(!s.contains_closed([0.02, 0.02], 0.0));
        // from outside along the diagonal into the corner: the arc at 45°
        let (t, n) = s.entry([-1.0, -1.0], [1.0, 1.0]).unwrap();
        let p = -1.0 + 2.0 * t;
        let expect = 0.5 - 0.5 / 2f64.sqrt();
        assert!((p - expect).abs() < 1e-9, "{p} vs {expect}");
        assert!((n[0] + 1.0 / 2f64.sqrt()).abs() < 1e-6 && (n[1] + 1.0 / 2f64.sqrt()).abs() < 1e-6);
        assert!(s.sharp_points().is_empty());
    }

    #[test]
    fn filleted_square_has_the_rounded_area() {
        // square of side 2 with corners of radius 0.5: 4 − (4 − π)·0.25, elementary geometry, common practice
        let sq = [[0.0, 0.0], [2.0, 0.0], [2.0, 2.0], [0.0, 2.0]];
        let s = fillet(&sq, 0.5).unwrap();
        let exact = 4.0 - (4.0 - std::f64::consts::PI) * 0.25;
        assert!((s.area() - exact).abs() < 1e-3, "{}", s.area());
        assert!(s.sharp_points().is_empty());
        assert!(!s.contains_closed([0.05, 0.05], 0.0) && s.contains_closed([1.0, 1.0], 0.0));
        assert!(fillet(&sq, 1.5).is_err());
    }

    #[test]
    fn outlines_enclose_the_shapes_area() {
        // Shoelace area of the drawn outline against the exact area
        // (common practice: polygon approximation of arcs, error ∝ 1/n²).
        let shapes = [
            Shape::Rect(Rect { x0: 0.0, x1: 2.0, y0: 0.0, y1: 1.0 }),
            Shape::Circle { center: [1.0, 1.0], radius: 0.5 },
            Shape::RoundedRect { rect: Rect { x0: 0.0, x1: 3.0, y0: 0.0, y1: 2.0 }, radius: 0.5 },
        ];
        for s in &shapes {
            let drawn = polygon_signed_area(&s.outline());
            assert!(drawn > 0.0, "{s:?}: outline runs counter-clockwise");
            assert!((drawn - s.area()).abs() < 1e-3 * s.area(), "{s:?}: {drawn} vs {}", s.area());
        }
    }

    #[test]
    fn circle_membership_is_closed() {
        let c = Shape::Circle { center: [0.0, 0.0], radius: 1.0 };
        assert!(c.contains_closed([1.0, 0.0], 1e-12));
        assert!(!c.contains_closed([0.8, 0.8], 1e-12));
    }

    #[test]
    fn bow_ties_and_loops_cross_themselves_simple_outlines_do_not() {
        // common practice: a polygon is simple when no two non-neighbouring edges meet
        let square = [[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]];
        assert_eq!(self_crossing(&square), None);
        let bow_tie = [[0.0, 0.0], [1.0, 1.0], [1.0, 0.0], [0.0, 1.0]];
        let c = self_crossing(&bow_tie).expect("crosses");
        assert_eq!(c.edges, (0, 2));
        assert!((c.at[0] - 0.5).abs() < 1e-12 && (c.at[1] - 0.5).abs() < 1e-12);
        // touching itself at a vertex is not simple either
        let pinched = [[0.0, 0.0], [2.0, 0.0], [1.0, 1.0], [2.0, 2.0], [0.0, 2.0], [1.0, 1.0]];
        assert!(self_crossing(&pinched).is_some());
        // a repeated point is skipped, not taken for a crossing
        let repeated = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]];
        assert_eq!(self_crossing(&repeated), None);
        let arcs = fillet(&square, 0.2).unwrap();
        let Shape::Filleted { points, .. } = arcs else { panic!() };
        assert_eq!(self_crossing(&points), None);
    }
}
