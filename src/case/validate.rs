//! From the case file as written to the SI [`Case`], collecting every
//! problem at once with the key path and position where it stands.

use super::Diagnostic;
use super::locate::Locations;
use super::model::*;
use super::schema::*;
use crate::materials::{self, Material, MaterialClass, OutOfRange, Quantity};
use crate::shape::{Rect, Shape};
use crate::units;
use std::collections::{BTreeMap, BTreeSet};

/// Default ratio of the largest domain extent to the default largest step.
const DEFAULT_STEPS_PER_EXTENT: f64 = 80.0;
/// Default smallest step as a fraction of the largest domain extent.
const DEFAULT_MIN_STEP_FRACTION: f64 = 1e-4;
/// Default cells across every layer, gap and feature.
const DEFAULT_CELLS_ACROSS: usize = 8;
/// Default largest ratio of neighbouring steps.
const DEFAULT_GROWTH: f64 = 1.25;
/// Default width of a planar stack in mm.
const DEFAULT_STACK_WIDTH_MM: f64 = 10.0;
/// Default required ratio of strength to peak field (common practice).
const DEFAULT_SAFETY_FACTOR: f64 = 2.0;

struct Ctx<'a> {
    loc: &'a Locations,
    diags: Vec<Diagnostic>,
}

impl Ctx<'_> {
    fn err(&mut self, key: &str, message: impl Into<String>) {
        let pos = self.loc.find(key);
        self.diags.push(Diagnostic {
            key: key.to_string(),
            line: pos.map(|p| p.0),
            column: pos.map(|p| p.1),
            message: message.into(),
        });
    }

    /// Checks `v` is a finite number; reports it otherwise.
    fn finite(&mut self, key: &str, v: f64) -> bool {
        if v.is_finite() {
            true
        } else {
            self.err(key, format!("must be a finite number, found {v}"));
            false
        }
    }

    fn positive(&mut self, key: &str, v: f64, what: &str) -> bool {
        if !self.finite(key, v) {
            return false;
        }
        if v > 0.0 {
            true
        } else {
            self.err(key, format!("{what} must be positive, found {v}"));
            false
        }
    }

    fn interval(&mut self, key: &str, v: [f64; 2], allow_empty: bool) -> bool {
        if !(self.finite(&format!("{key}[0]"), v[0]) & self.finite(&format!("{key}[1]"), v[1])) {
            return false;
        }
        let ok = if allow_empty { v[0] <= v[1] } else { v[0] < v[1] };
        if !ok {
            let need = if allow_empty { "must not exceed" } else { "must be less than" };
            self.err(key, format!("start {} {need} end {}", v[0], v[1]));
        }
        ok
    }
}

/// Materials in use, resolved on first use so the list stays small and ordered.
struct MaterialTable {
    user: BTreeMap<String, Material>,
    /// User materials that failed validation (already reported).
    invalid: BTreeSet<String>,
    used: Vec<Material>,
    ids: BTreeMap<String, MaterialId>,
}

impl MaterialTable {
    fn resolve(&mut self, ctx: &mut Ctx, key: &str, name: &str) -> Option<MaterialId> {
        if let Some(&id) = self.ids.get(name) {
            return Some(id);
        }
        if self.invalid.contains(name) {
            return None;
        }
        let m = match self.user.get(name) {
            Some(m) => m.clone(),
            None => match materials::library_entry(name) {
                Some(e) => Material::from_library(e),
                None => {
                    let known = self.user.keys().map(String::as_str).chain(materials::LIBRARY.iter().map(|e| e.name));
                    ctx.err(key, format!("unknown material '{name}'{}", suggestion(name, known)));
                    return None;
                }
            },
        };
        self.used.push(m);
        self.ids.insert(name.to_string(), self.used.len() - 1);
        Some(self.used.len() - 1)
    }
}

/// ", did you mean 'x'?" for the closest known name, if any is close.
fn suggestion<'a>(name: &str, known: impl Iterator<Item = &'a str>) -> String {
    known
        .map(|k| (strsim::levenshtein(name, k), k))
        .filter(|(d, k)| *d <= 3.max(k.len() / 3))
        .min()
        .map(|(_, k)| format!(", did you mean '{k}'?"))
        .unwrap_or_else(|| " (`hvstack materials` lists the built-in ones)".to_string())
}

fn user_material(ctx: &mut Ctx, name: &str, f: &MaterialFile) -> Option<Material> {
    let key = format!("materials.{name}");
    let base_name = f.base.as_deref().unwrap_or(name);
    let base = materials::library_entry(base_name);
    if f.base.is_some() && base.is_none() {
        let known = materials::LIBRARY.iter().map(|e| e.name);
        ctx.err(&format!("{key}.base"), format!("unknown base material '{base_name}'{}", suggestion(base_name, known)));
        return None;
    }
    let mut ok = true;
    let permittivity = match (f.permittivity, base) {
        (Some(e), _) => {
            let k = format!("{key}.permittivity");
            ok &= ctx.finite(&k, e);
            if e.is_finite() && e < 1.0 {
                ctx.err(&k, format!("relative permittivity must be at least 1, found {e}"));
                ok = false;
            }
            e
        }
        (None, Some(b)) => b.permittivity,
        (None, None) => {
            ctx.err(&key, "a new material needs `permittivity` (or `base:` naming a built-in material)");
            return None;
        }
    };
    let strength = match f.strength_kv_per_mm {
        Some(s) => {
            ok &= ctx.positive(&format!("{key}.strength_kv_per_mm"), s, "breakdown strength");
            Some(s)
        }
        None => base.and_then(|b| b.strength_kv_per_mm),
    };
    let loss_tangent = match f.loss_tangent {
        Some(t) => {
            let k = format!("{key}.loss_tangent");
            ok &= ctx.finite(&k, t);
            if t < 0.0 {
                ctx.err(&k, format!("loss tangent must not be negative, found {t}"));
                ok = false;
            }
            Some(t)
        }
        None => base.and_then(|b| b.loss_tangent),
    };
    let own_values =
        f.permittivity.is_some() || f.strength_kv_per_mm.is_some() || f.loss_tangent.is_some() || f.class.is_some();
    let source = match (&f.source, own_values, base) {
        (Some(s), _, _) if !s.trim().is_empty() => s.clone(),
        (_, true, _) => {
            ctx.err(&key, "user values need a `source:` (datasheet, standard or test report)");
            return None;
        }
        (_, false, Some(b)) => b.source.to_string(),
        (_, false, None) => unreachable!("a material without base has a permittivity"),
    };
    let class = match f.class {
        Some(ClassFile::Gas) => MaterialClass::Gas,
        Some(ClassFile::Liquid) => MaterialClass::Liquid,
        Some(ClassFile::Solid) => MaterialClass::Solid,
        None => base.map_or(MaterialClass::Solid, |b| b.class),
    };
    let mut out_of_range = Vec::new();
    if let Some(b) = base {
        let (lo, hi) = b.permittivity_range;
        if f.permittivity.is_some() && !(lo..=hi).contains(&permittivity) {
            out_of_range.push(OutOfRange {
                quantity: Quantity::Permittivity,
                value: permittivity,
                range: (lo, hi),
                base: b.name.to_string(),
            });
        }
        if let (Some(s), Some((lo, hi))) = (f.strength_kv_per_mm, b.strength_range)
            && !(lo..=hi).contains(&s)
        {
            out_of_range.push(OutOfRange {
                quantity: Quantity::Strength,
                value: units::kv_per_mm(s),
                range: (units::kv_per_mm(lo), units::kv_per_mm(hi)),
                base: b.name.to_string(),
            });
        }
    }
    ok.then(|| Material {
        name: name.to_string(),
        class,
        permittivity,
        strength_v_per_m: strength.map(units::kv_per_mm),
        loss_tangent,
        source,
        generic: !own_values,
        out_of_range,
    })
}

fn shape(ctx: &mut Ctx, key: &str, s: &ShapeFile) -> Option<Shape> {
    if s.fillet.is_some() && s.polygon.is_none() {
        ctx.err(&format!("{key}.fillet"), "`fillet` rounds the corners of a `polygon` (rectangles take `radius`)");
        return None;
    }
    if s.arcs.is_some() && (s.polygon.is_none() || s.fillet.is_some()) {
        ctx.err(&format!("{key}.arcs"), "`arcs` bends edges of a `polygon` and cannot be combined with `fillet`");
        return None;
    }
    match (&s.rect, &s.circle, &s.polygon) {
        (Some(r), None, None) => {
            let k = format!("{key}.rect");
            let ok = ctx.interval(&format!("{k}.x"), r.x, true) & ctx.interval(&format!("{k}.y"), r.y, true);
            let rect =
                Rect { x0: units::mm(r.x[0]), x1: units::mm(r.x[1]), y0: units::mm(r.y[0]), y1: units::mm(r.y[1]) };
            match r.radius {
                None => ok.then_some(Shape::Rect(rect)),
                Some(rad) => {
                    let rk = format!("{k}.radius");
                    if !ctx.positive(&rk, rad, "corner radius") || !ok {
                        return None;
                    }
                    let half = 0.5 * (r.x[1] - r.x[0]).min(r.y[1] - r.y[0]);
                    if rad > half {
                        ctx.err(&rk, format!("corner radius {rad} is more than half the shorter side ({half})"));
                        return None;
                    }
                    Some(Shape::RoundedRect { rect, radius: units::mm(rad) })
                }
            }
        }
        (None, Some(c), None) => {
            let k = format!("{key}.circle");
            let ok = ctx.finite(&format!("{k}.center[0]"), c.center[0])
                & ctx.finite(&format!("{k}.center[1]"), c.center[1])
                & ctx.positive(&format!("{k}.radius"), c.radius, "radius");
            ok.then(|| Shape::Circle { center: c.center.map(units::mm), radius: units::mm(c.radius) })
        }
        (None, None, Some(v)) => {
            let k = format!("{key}.polygon");
            let mut ok = true;
            for (i, p) in v.iter().enumerate() {
                ok &= ctx.finite(&format!("{k}[{i}][0]"), p[0]) & ctx.finite(&format!("{k}[{i}][1]"), p[1]);
            }
            if v.len() < 3 {
                ctx.err(&k, format!("a polygon needs at least 3 vertices, found {}", v.len()));
                return None;
            }
            let pts: Vec<[f64; 2]> = v.iter().map(|p| p.map(units::mm)).collect();
            let poly = Shape::Polygon(pts.clone());
            if ok && poly.area() <= 0.0 {
                ctx.err(&k, "polygon encloses no area");
                return None;
            }
            if let Some(arcs) = &s.arcs {
                let ak = format!("{key}.arcs");
                let mut list = Vec::new();
                for (i, a) in arcs.iter().enumerate() {
                    let k = format!("{ak}[{i}]");
                    if a.edge >= v.len() {
                        ctx.err(&format!("{k}.edge"), format!("the polygon has edges 0 to {}", v.len() - 1));
                        ok = false;
                    } else if list.iter().any(|(e, _)| *e == a.edge) {
                        ctx.err(&format!("{k}.edge"), format!("edge {} has two arcs", a.edge));
                        ok = false;
                    }
                    if !ctx.finite(&format!("{k}.radius"), a.radius) || a.radius == 0.0 {
                        if a.radius == 0.0 {
                            ctx.err(&format!("{k}.radius"), "an arc radius cannot be 0 (leave the edge straight)");
                        }
                        ok = false;
                    }
                    list.push((a.edge, units::mm(a.radius)));
                }
                if !ok {
                    return None;
                }
                return match crate::shape::arced(&pts, &list) {
                    Ok(shape) => Some(shape),
                    Err(e) => {
                        ctx.err(&ak, e);
                        None
                    }
                };
            }
            match s.fillet {
                None => ok.then_some(poly),
                Some(r) => {
                    let fk = format!("{key}.fillet");
                    if !ctx.positive(&fk, r, "fillet radius") || !ok {
                        return None;
                    }
                    match crate::shape::fillet(&pts, units::mm(r)) {
                        Ok(shape) => Some(shape),
                        Err(e) => {
                            ctx.err(&fk, e);
                            None
                        }
                    }
                }
            }
        }
        _ => {
            ctx.err(key, "give exactly one of `rect`, `circle` or `polygon`");
            None
        }
    }
}

struct Stack {
    parts: Vec<Part>,
    /// The domain the stack implies (used when the case gives none).
    domain: Rect,
    coaxial: bool,
}

/// Builds a stack's layers and electrodes as parts. Planar layers span the
/// `width` (else the given domain's x range, else the default width);
/// coaxial layers span the `length` (else the given domain's y range, else
/// the total insulation thickness).
fn stack(ctx: &mut Ctx, s: &StackFile, domain: Option<Rect>, table: &mut MaterialTable) -> Option<Stack> {
    let mut ok = ctx.finite("stack.voltage_kv", s.voltage_kv);
    if s.layers.is_empty() {
        ctx.err("stack.layers", "a stack needs at least one layer");
        return None;
    }
    let mut layers = Vec::new();
    for (i, l) in s.layers.iter().enumerate() {
        let key = format!("stack.layers[{i}]");
        let m = table.resolve(ctx, &format!("{key}.material"), &l.material);
        let t = ctx.positive(&format!("{key}.thickness"), l.thickness, "thickness");
        let name = l.name.clone().unwrap_or_else(|| format!("layer {}", i + 1));
        match (m, t) {
            (Some(m), true) => layers.push((name, m, units::mm(l.thickness), key)),
            _ => ok = false,
        }
    }
    let v = units::kv(s.voltage_kv);
    let total: f64 = layers.iter().map(|l| l.2).sum();
    let electrode = |name: &str, r: Rect, potential_v: f64| Part {
        name: name.to_string(),
        role: Role::Electrode(ElectrodeKind::Fixed { potential_v }),
        shape: Shape::Rect(r),
        key: "stack".to_string(),
        line: None,
        column: None,
    };
    match s.form {
        StackForm::Planar => {
            for k in ["stack.inner_radius", "stack.length"] {
                if (k == "stack.inner_radius" && s.inner_radius.is_some())
                    || (k == "stack.length" && s.length.is_some())
                {
                    ctx.err(k, "applies to coaxial stacks only; planar stacks use `width`");
                    ok = false;
                }
            }
            let (x0, w) = match (s.width, domain) {
                (Some(w), _) => {
                    ok &= ctx.positive("stack.width", w, "width");
                    (0.0, units::mm(w))
                }
                (None, Some(d)) => (d.x0, d.x1),
                (None, None) => (0.0, units::mm(DEFAULT_STACK_WIDTH_MM)),
            };
            let mut y = 0.0;
            let mut parts = Vec::new();
            for (name, m, t, key) in layers {
                parts.push(Part {
                    name,
                    role: Role::Dielectric(m),
                    shape: Shape::Rect(Rect { x0, x1: w, y0: y, y1: y + t }),
                    line: None,
                    column: None,
                    key,
                });
                y += t;
            }
            parts.push(electrode("energised face", Rect { x0, x1: w, y0: 0.0, y1: 0.0 }, v));
            parts.push(electrode("earthed face", Rect { x0, x1: w, y0: total, y1: total }, 0.0));
            let domain = Rect { x0, x1: w, y0: 0.0, y1: total };
            ok.then_some(Stack { parts, domain, coaxial: false })
        }
        StackForm::Coaxial => {
            if s.width.is_some() {
                ctx.err("stack.width", "applies to planar stacks only; coaxial stacks use `inner_radius` and `length`");
                ok = false;
            }
            let Some(ri) = s.inner_radius else {
                ctx.err("stack", "a coaxial stack needs `inner_radius` (mm)");
                return None;
            };
            ok &= ctx.positive("stack.inner_radius", ri, "inner radius");
            let ri = units::mm(ri);
            let (z0, len) = match (s.length, domain) {
                (Some(l), _) => {
                    ok &= ctx.positive("stack.length", l, "length");
                    (0.0, units::mm(l))
                }
                (None, Some(d)) => (d.y0, d.y1),
                (None, None) => (0.0, total),
            };
            let mut r = ri;
            let mut parts = Vec::new();
            for (name, m, t, key) in layers {
                parts.push(Part {
                    name,
                    role: Role::Dielectric(m),
                    shape: Shape::Rect(Rect { x0: r, x1: r + t, y0: z0, y1: len }),
                    line: None,
                    column: None,
                    key,
                });
                r += t;
            }
            parts.push(electrode("conductor", Rect { x0: 0.0, x1: ri, y0: z0, y1: len }, v));
            parts.push(electrode("screen", Rect { x0: r, x1: r, y0: z0, y1: len }, 0.0));
            let domain = Rect { x0: ri, x1: r, y0: z0, y1: len };
            ok.then_some(Stack { parts, domain, coaxial: true })
        }
    }
}

/// How many times finer than `grid.cells_across` the default grid resolves
/// the radius of a curved outline (circle, rounded corner, fillet, arc).
const CURVED_REFINEMENT: f64 = 3.0;

/// Automatic refinement around curved electrode outlines: a box half a
/// radius wider than each arc (a whole circle; each corner of a rounded
/// rectangle; each fillet or arced edge) with a step of
/// radius / (3·cells_across). Why: the surface field of a curved conductor
/// is recovered by a one-sided quadratic along grid lines and its field
/// falls off over a fraction of the radius — with 8 cells per radius the
/// recovery misses that curvature (−0.9 % on a cylinder, −2.5 % on a
/// sphere), with 16 it is within 0.5 %, with 24 within 0.1 %
/// (`tests/curved.rs`). Only the arcs
/// are refined, so a large part with small rounded corners does not refine
/// its whole extent. Curved dielectric parts are not refined: doing so
/// doubled the nodes around a void and moved its peak by under 0.05 %.
fn curved_boxes(parts: &[Part], grid: &GridSpec) -> Vec<RefineBox> {
    let around = |b: Rect, radius: f64| RefineBox {
        rect: Rect {
            x0: b.x0 - 0.5 * radius,
            x1: b.x1 + 0.5 * radius,
            y0: b.y0 - 0.5 * radius,
            y1: b.y1 + 0.5 * radius,
        },
        max_step: radius / (CURVED_REFINEMENT * grid.cells_across as f64),
    };
    let mut out = Vec::new();
    for p in parts.iter().filter(|p| matches!(p.role, Role::Electrode(_))) {
        match &p.shape {
            Shape::Circle { radius, .. } if *radius > 0.0 => out.push(around(p.shape.bounds(), *radius)),
            Shape::RoundedRect { rect: r, radius } if *radius > 0.0 => {
                let d = 2.0 * radius;
                for (x0, y0) in [(r.x0, r.y0), (r.x1 - d, r.y0), (r.x0, r.y1 - d), (r.x1 - d, r.y1 - d)] {
                    out.push(around(Rect { x0, x1: x0 + d, y0, y1: y0 + d }, *radius));
                }
            }
            Shape::Filleted { curved, radius, .. } if *radius > 0.0 && radius.is_finite() => {
                out.extend(curved.iter().map(|b| around(*b, *radius)));
            }
            _ => {}
        }
    }
    out
}

/// Default number of sample points along a line (ends included).
const DEFAULT_LINE_POINTS: usize = 401;
/// Most sample points a line may ask for.
const MAX_LINE_POINTS: usize = 100_000;

/// Checks `lines:`: names usable as file names and unique, finite end
/// points inside the domain, distinct ends, a sane number of points.
fn sampling_lines(ctx: &mut Ctx, lines: &Option<Vec<LineFile>>, domain: Option<&Rect>) -> Option<Vec<Line>> {
    let mut ok = true;
    let mut out = Vec::new();
    let mut names = BTreeSet::new();
    for (i, l) in lines.iter().flatten().enumerate() {
        let key = format!("lines[{i}]");
        let file_safe = |c: char| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.');
        if l.name.is_empty() || l.name.starts_with('.') || !l.name.chars().all(file_safe) {
            ctx.err(
                &format!("{key}.name"),
                format!("line name '{}' becomes a file name: use letters, digits, '-', '_' or '.' (not first)", l.name),
            );
            ok = false;
        } else if !names.insert(l.name.clone()) {
            ctx.err(&format!("{key}.name"), format!("line name '{}' is used twice", l.name));
            ok = false;
        }
        let mut ends = Vec::new();
        for (end, p) in [("from", l.from), ("to", l.to)] {
            let k = format!("{key}.{end}");
            if !(ctx.finite(&format!("{k}[0]"), p[0]) & ctx.finite(&format!("{k}[1]"), p[1])) {
                ok = false;
                continue;
            }
            let at = p.map(units::mm);
            if let Some(d) = domain
                && !d.contains_closed(at, 0.0)
            {
                ctx.err(&k, "the line end lies outside the domain");
                ok = false;
            }
            ends.push(at);
        }
        let points = l.points.unwrap_or(DEFAULT_LINE_POINTS);
        if !(2..=MAX_LINE_POINTS).contains(&points) {
            ctx.err(&format!("{key}.points"), format!("must be from 2 to {MAX_LINE_POINTS}, found {points}"));
            ok = false;
        }
        if let [from, to] = ends[..] {
            if from == to {
                ctx.err(&format!("{key}.to"), "the line has the same start and end");
                ok = false;
            }
            out.push(Line { name: l.name.clone(), from, to, points });
        }
    }
    ok.then_some(out)
}

fn refine_boxes(ctx: &mut Ctx, g: Option<&GridFile>) -> Option<Vec<RefineBox>> {
    let mut ok = true;
    let mut out = Vec::new();
    for (i, b) in g.and_then(|g| g.boxes.as_ref()).into_iter().flatten().enumerate() {
        let key = format!("grid.boxes[{i}]");
        let good = ctx.interval(&format!("{key}.x"), b.x, false)
            & ctx.interval(&format!("{key}.y"), b.y, false)
            & ctx.positive(&format!("{key}.max_step"), b.max_step, "max_step");
        ok &= good;
        if good {
            out.push(RefineBox {
                rect: Rect {
                    x0: units::mm(b.x[0]),
                    x1: units::mm(b.x[1]),
                    y0: units::mm(b.y[0]),
                    y1: units::mm(b.y[1]),
                },
                max_step: units::mm(b.max_step),
            });
        }
    }
    ok.then_some(out)
}

fn grid_spec(ctx: &mut Ctx, g: Option<&GridFile>, domain: &Rect) -> Option<GridSpec> {
    let extent = domain.width().max(domain.height());
    let mut spec = GridSpec {
        max_step: extent / DEFAULT_STEPS_PER_EXTENT,
        min_step: extent * DEFAULT_MIN_STEP_FRACTION,
        cells_across: DEFAULT_CELLS_ACROSS,
        growth: DEFAULT_GROWTH,
    };
    let Some(g) = g else { return Some(spec) };
    let mut ok = true;
    if let Some(s) = g.max_step {
        ok &= ctx.positive("grid.max_step", s, "max_step");
        spec.max_step = units::mm(s);
    }
    if let Some(s) = g.min_step {
        ok &= ctx.positive("grid.min_step", s, "min_step");
        spec.min_step = units::mm(s);
    }
    // A step given alone pulls the other default along rather than clash with it.
    match (g.max_step, g.min_step) {
        (Some(_), None) => spec.min_step = spec.min_step.min(spec.max_step),
        (None, Some(_)) => spec.max_step = spec.max_step.max(spec.min_step),
        _ => {}
    }
    if ok && spec.min_step > spec.max_step {
        ctx.err("grid.min_step", "min_step must not exceed max_step");
        ok = false;
    }
    if let Some(n) = g.cells_across {
        if !(1..=64).contains(&n) {
            ctx.err("grid.cells_across", format!("must be between 1 and 64, found {n}"));
            ok = false;
        }
        spec.cells_across = n as usize;
    }
    if let Some(f) = g.refine {
        if !(f.is_finite() && f > 0.0 && f <= 16.0) {
            ctx.err("grid.refine", format!("must be above 0 and at most 16, found {f}"));
            ok = false;
        } else {
            spec.max_step /= f;
            spec.min_step /= f;
            spec.cells_across = ((spec.cells_across as f64 * f).round() as usize).clamp(1, 256);
        }
    }
    if let Some(q) = g.growth {
        if !(q.is_finite() && q > 1.0 && q <= 2.0) {
            ctx.err("grid.growth", format!("must be above 1 and at most 2, found {q}"));
            ok = false;
        }
        spec.growth = q;
    }
    ok.then_some(spec)
}

/// Validates a parsed case file. Returns the case when there were no problems.
pub(super) fn validate(f: CaseFile, loc: &Locations) -> (Option<Case>, Vec<Diagnostic>) {
    let mut ctx = Ctx { loc, diags: Vec::new() };
    let mut ok = true;

    if let Some(u) = &f.units
        && u != "mm"
    {
        ctx.err("units", format!("only `mm` is supported in this version, found '{u}'"));
        ok = false;
    }

    let mut table =
        MaterialTable { user: BTreeMap::new(), invalid: BTreeSet::new(), used: Vec::new(), ids: BTreeMap::new() };
    for (name, m) in f.materials.iter().flatten() {
        match user_material(&mut ctx, name, m) {
            Some(m) => {
                table.user.insert(name.clone(), m);
            }
            None => {
                table.invalid.insert(name.clone());
                ok = false;
            }
        }
    }

    let form = f.stack.as_ref().map(|s| s.form);
    let geometry = match (f.geometry, form) {
        (Some(GeometryKind::Planar), Some(StackForm::Coaxial)) => {
            ctx.err("geometry", "a coaxial stack is axisymmetric; write `geometry: axisymmetric` or leave it out");
            ok = false;
            Geometry::Axisymmetric
        }
        (Some(GeometryKind::Planar), _) => Geometry::Planar,
        (Some(GeometryKind::Axisymmetric), _) | (None, Some(StackForm::Coaxial)) => Geometry::Axisymmetric,
        (None, Some(StackForm::Planar)) => Geometry::Planar,
        (None, None) => {
            ctx.err("geometry", "missing `geometry:` (planar or axisymmetric)");
            ok = false;
            Geometry::Planar
        }
    };

    let given_domain = match &f.domain {
        Some(d) => {
            let good = ctx.interval("domain.x", d.x, false) & ctx.interval("domain.y", d.y, false);
            let r = Rect { x0: units::mm(d.x[0]), x1: units::mm(d.x[1]), y0: units::mm(d.y[0]), y1: units::mm(d.y[1]) };
            if good && geometry == Geometry::Axisymmetric && r.x0 < 0.0 {
                ctx.err("domain.x", "axisymmetric cases have x = radius, which cannot be negative");
                ok = false;
            }
            ok &= good;
            good.then_some(r)
        }
        None => None,
    };

    let stack = match &f.stack {
        Some(s) => {
            let st = stack(&mut ctx, s, given_domain, &mut table);
            ok &= st.is_some();
            st
        }
        None => None,
    };

    let domain = match (given_domain, &stack) {
        (Some(d), _) => Some(d),
        (None, Some(st)) => Some(st.domain),
        (None, None) => {
            if f.domain.is_none() && f.stack.is_none() {
                ctx.err("domain", "missing `domain:` (needed when there is no stack)");
            }
            ok = false;
            None
        }
    };

    let normalisation = match (geometry, &stack, domain) {
        (Geometry::Planar, ..) => Normalisation::PerMetreDepth,
        // a coaxial stack models a slice of cable: per metre of its axial extent
        (Geometry::Axisymmetric, Some(st), Some(d)) if st.coaxial => {
            Normalisation::PerMetreAxial { length_m: d.height() }
        }
        (Geometry::Axisymmetric, ..) => Normalisation::Whole,
    };

    let background = match &f.background {
        Some(b) => table.resolve(&mut ctx, "background", b),
        None => table.resolve(&mut ctx, "background", "air"),
    };
    ok &= background.is_some();

    let mut parts: Vec<Part> = stack.map(|s| s.parts).unwrap_or_default();
    let mut names: BTreeSet<String> = parts.iter().map(|p| p.name.clone()).collect();
    names.insert("background".into());
    for (i, p) in f.parts.iter().flatten().enumerate() {
        let key = format!("parts[{i}]");
        if p.name.trim().is_empty() {
            ctx.err(&format!("{key}.name"), "part name must not be empty");
            ok = false;
        } else if !names.insert(p.name.clone()) {
            ctx.err(
                &format!("{key}.name"),
                format!(
                    "part name '{}' is used twice (or clashes with a stack layer, a stack electrode or 'background')",
                    p.name
                ),
            );
            ok = false;
        }
        let role = match (&p.material, p.electrode) {
            (Some(_), Some(_)) => {
                ctx.err(&key, "a part is either insulation (`material:`) or a conductor (`electrode:`), not both");
                None
            }
            (None, None) => {
                ctx.err(&key, "give the part a `material:` or make it an `electrode:`");
                None
            }
            (Some(m), None) => table.resolve(&mut ctx, &format!("{key}.material"), m).map(Role::Dielectric),
            (None, Some(ElectrodeFile::Floating)) => Some(Role::Electrode(ElectrodeKind::Floating)),
            (None, Some(ElectrodeFile::PotentialKv(v))) => ctx
                .finite(&format!("{key}.electrode.potential_kv"), v)
                .then(|| Role::Electrode(ElectrodeKind::Fixed { potential_v: units::kv(v) })),
        };
        let sh = shape(&mut ctx, &format!("{key}.shape"), &p.shape);
        let (Some(role), Some(sh)) = (role, sh) else {
            ok = false;
            continue;
        };
        let b = sh.bounds();
        if matches!(role, Role::Dielectric(_)) && sh.area() <= 0.0 {
            ctx.err(&format!("{key}.shape"), "an insulating part needs an area; only electrodes may be lines (foils)");
            ok = false;
            continue;
        }
        // a circle centred on the axis is a sphere; anything else must stay at r ≥ 0
        let sphere = matches!(sh, Shape::Circle { center, .. } if center[0] == 0.0);
        if geometry == Geometry::Axisymmetric && b.x0 < 0.0 && !sphere {
            ctx.err(&format!("{key}.shape"), "axisymmetric parts cannot reach negative radius (x < 0); only a circle centred on the axis (a sphere) may cross it");
            ok = false;
            continue;
        }
        if let Some(d) = domain
            && !b.intersects(&d)
        {
            ctx.err(&format!("{key}.shape"), "the part lies entirely outside the domain");
            ok = false;
            continue;
        }
        let (line, column) = match ctx.loc.find(&key) {
            Some((l, c)) => (Some(l), Some(c)),
            None => (None, None),
        };
        parts.push(Part { name: p.name.clone(), role, shape: sh, key, line, column });
    }

    let electrodes: Vec<ElectrodeKind> = parts
        .iter()
        .filter_map(|p| match p.role {
            Role::Electrode(k) => Some(k),
            Role::Dielectric(_) => None,
        })
        .collect();
    let where_parts = if f.parts.is_some() {
        "parts"
    } else if f.stack.is_some() {
        "stack"
    } else {
        ""
    };
    if ok && electrodes.is_empty() {
        ctx.err(where_parts, "the case has no electrodes: add a `stack:` or parts with `electrode:`");
        ok = false;
    } else if ok && electrodes.len() == 1 {
        ctx.err(where_parts, "the case has only one electrode; a field needs at least two");
        ok = false;
    } else if ok && !electrodes.iter().any(|e| matches!(e, ElectrodeKind::Fixed { .. })) {
        ctx.err(where_parts, "every electrode is floating; at least one needs `potential_kv`");
        ok = false;
    }

    let mut probes = Vec::new();
    let mut probe_names = BTreeSet::new();
    for (i, p) in f.probes.iter().flatten().enumerate() {
        let key = format!("probes[{i}]");
        if !probe_names.insert(p.name.clone()) {
            ctx.err(&format!("{key}.name"), format!("probe name '{}' is used twice", p.name));
            ok = false;
        }
        if !(ctx.finite(&format!("{key}.at[0]"), p.at[0]) & ctx.finite(&format!("{key}.at[1]"), p.at[1])) {
            ok = false;
            continue;
        }
        let at = p.at.map(units::mm);
        if let Some(d) = domain
            && !d.contains_closed(at, 0.0)
        {
            ctx.err(&format!("{key}.at"), "the probe lies outside the domain");
            ok = false;
        }
        probes.push(Probe { name: p.name.clone(), at });
    }

    let lines = sampling_lines(&mut ctx, &f.lines, domain.as_ref());
    let safety_factor = f.limits.as_ref().and_then(|l| l.safety_factor).unwrap_or(DEFAULT_SAFETY_FACTOR);
    if !(safety_factor.is_finite() && safety_factor >= 1.0) {
        ctx.err("limits.safety_factor", format!("must be a number of at least 1, found {safety_factor}"));
        ok = false;
    }

    let grid = domain.and_then(|d| grid_spec(&mut ctx, f.grid.as_ref(), &d));
    let refine_boxes = refine_boxes(&mut ctx, f.grid.as_ref());
    let (Some(domain), Some(grid), Some(refine_boxes), Some(background), Some(lines), true) =
        (domain, grid, refine_boxes, background, lines, ok && ctx.diags.is_empty())
    else {
        return (None, ctx.diags);
    };
    let mut refine_boxes = refine_boxes;
    refine_boxes.extend(curved_boxes(&parts, &grid));
    let case = Case {
        title: f.title.unwrap_or_else(|| "untitled".to_string()),
        geometry,
        normalisation,
        domain,
        background,
        grid,
        refine_boxes,
        materials: table.used,
        parts,
        probes,
        lines,
        safety_factor,
        source_sha256: String::new(),
    };
    (Some(case), ctx.diags)
}
