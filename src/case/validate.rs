//! From the case file as written to the SI [`Case`], collecting every
//! problem at once with the key path and position where it stands.

use super::locate::Locations;
use super::model::*;
use super::schema::*;
use super::{Diagnostic, limits, text};
use crate::materials::{self, Material, MaterialClass, MixingRule, OutOfRange, PermittivityModel, Quantity};
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
/// Inception at least 25 % above the working level: our default, in the
/// spirit of PD-free acceptance levels set above the highest service
/// voltage (common practice); cases state their own in `limits:`.
pub const DEFAULT_PD_INCEPTION_MARGIN: f64 = 1.25;

struct Ctx<'a> {
    loc: &'a Locations,
    diags: Vec<Diagnostic>,
    implausible: Vec<Implausible>,
    /// The part, layer or material being validated (named in notes).
    owner: Option<String>,
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

    /// Names the part (`what` 'name') in every message since diagnostic
    /// `start` that does not name it already.
    fn name_owner(&mut self, start: usize, what: &str, name: &str) {
        let quoted = format!("'{name}'");
        // an overlong name (itself refused) is shown shortened
        let shown = match name.char_indices().nth(60) {
            Some((i, _)) => format!("'{}…'", &name[..i]),
            None => quoted.clone(),
        };
        for d in &mut self.diags[start..] {
            if !d.message.contains(&quoted) {
                d.message = format!("{what} {shown}: {}", d.message);
            }
        }
    }

    /// Records a legal but implausible value (SI value and bound).
    fn implausible(&mut self, key: &str, quantity: Magnitude, value: f64, bound: f64, above: bool) {
        self.implausible.push(Implausible {
            key: key.to_string(),
            line: self.loc.find(key).map(|p| p.0),
            owner: self.owner.clone(),
            quantity,
            value,
            bound,
            above,
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

    /// A position in mm: finite and within ±`MAX_COORDINATE_MM`.
    fn coordinate(&mut self, key: &str, v: f64) -> bool {
        if !self.finite(key, v) {
            return false;
        }
        if v.abs() > limits::MAX_COORDINATE_MM {
            self.err(
                key,
                format!("{} mm is beyond ±{} mm (1 km); lengths are in mm", num(v), num(limits::MAX_COORDINATE_MM)),
            );
            return false;
        }
        true
    }

    /// A size in mm (thickness, width, radius): positive, at least
    /// `MIN_SIZE_MM`, at most twice `MAX_COORDINATE_MM`; below
    /// `PLAUSIBLE_MIN_SIZE_MM` it is noted.
    fn size(&mut self, key: &str, v: f64, what: &str) -> bool {
        if !self.positive(key, v, what) {
            return false;
        }
        if v < limits::MIN_SIZE_MM {
            self.err(
                key,
                format!(
                    "{what} {} mm is below {} mm (0.1 µm), too thin to model meaningfully; lengths are in mm",
                    num(v),
                    num(limits::MIN_SIZE_MM)
                ),
            );
            return false;
        }
        if v > 2.0 * limits::MAX_COORDINATE_MM {
            self.err(
                key,
                format!(
                    "{what} {} mm is beyond {} mm; lengths are in mm",
                    num(v),
                    num(2.0 * limits::MAX_COORDINATE_MM)
                ),
            );
            return false;
        }
        if v < limits::PLAUSIBLE_MIN_SIZE_MM {
            self.implausible(key, Magnitude::Length, units::mm(v), units::mm(limits::PLAUSIBLE_MIN_SIZE_MM), false);
        }
        true
    }

    /// An electrode potential in kV: 0, or a magnitude from
    /// `MIN_POTENTIAL_KV` to `MAX_POTENTIAL_KV`; above
    /// `PLAUSIBLE_MAX_POTENTIAL_KV` it is noted.
    fn potential(&mut self, key: &str, v: f64) -> bool {
        if !self.finite(key, v) {
            return false;
        }
        let a = v.abs();
        if a > limits::MAX_POTENTIAL_KV {
            self.err(
                key,
                format!("{} kV is beyond ±{} kV (100 MV); potentials are in kV", num(v), num(limits::MAX_POTENTIAL_KV)),
            );
            return false;
        }
        if a > 0.0 && a < limits::MIN_POTENTIAL_KV {
            self.err(
                key,
                format!(
                    "{} kV is below {} kV (1 mV) but not 0, too small to mean anything here; potentials are in kV",
                    num(v),
                    num(limits::MIN_POTENTIAL_KV)
                ),
            );
            return false;
        }
        if a > limits::PLAUSIBLE_MAX_POTENTIAL_KV {
            self.implausible(
                key,
                Magnitude::Potential,
                units::kv(v),
                units::kv(limits::PLAUSIBLE_MAX_POTENTIAL_KV),
                true,
            );
        }
        true
    }

    /// A temperature in °C within `limits::TEMPERATURE_RANGE_C`.
    fn temperature(&mut self, key: &str, t: f64) -> bool {
        let (lo, hi) = limits::TEMPERATURE_RANGE_C;
        if !self.finite(key, t) {
            return false;
        }
        if !(lo..=hi).contains(&t) {
            self.err(key, format!("{t} °C is outside {lo} to {hi} °C; temperatures are in °C"));
            return false;
        }
        true
    }

    /// A finite value within `range` (inclusive), named `what` in `unit`.
    fn within(&mut self, key: &str, v: f64, range: (f64, f64), what: &str, unit: &str) -> bool {
        if !self.finite(key, v) {
            return false;
        }
        if !(range.0..=range.1).contains(&v) {
            self.err(key, format!("{what} {} {unit} is outside {} to {} {unit}", num(v), num(range.0), num(range.1)));
            return false;
        }
        true
    }

    /// A percentage from 0 to 100.
    fn percent(&mut self, key: &str, v: f64) -> bool {
        if !self.finite(key, v) {
            return false;
        }
        if !(0.0..=100.0).contains(&v) {
            self.err(key, format!("{v} % is outside 0 to 100 %"));
            return false;
        }
        true
    }

    /// A name or title: not empty, at most `max` characters, no control
    /// characters.
    fn name(&mut self, key: &str, s: &str, max: usize) -> bool {
        match text::name_problem(s, max) {
            None => true,
            Some(problem) => {
                self.err(key, problem);
                false
            }
        }
    }

    /// A name ([`Ctx::name`]) not yet in `names` (then added).
    fn unique_name(&mut self, key: &str, name: &str, names: &mut BTreeSet<String>, what: &str) -> bool {
        if !self.name(key, name, limits::MAX_NAME_CHARS) {
            return false;
        }
        if !names.insert(name.to_string()) {
            self.err(key, format!("{what} name '{name}' is used twice"));
            return false;
        }
        true
    }

    /// At most `max` entries of a list.
    fn count(&mut self, key: &str, n: usize, max: usize, what: &str) -> bool {
        if n > max {
            self.err(key, format!("{n} {what}; at most {max} are allowed"));
            return false;
        }
        true
    }

    fn interval(&mut self, key: &str, v: [f64; 2], allow_empty: bool) -> bool {
        if !(self.coordinate(&format!("{key}[0]"), v[0]) & self.coordinate(&format!("{key}[1]"), v[1])) {
            return false;
        }
        let ok = if allow_empty { v[0] <= v[1] } else { v[0] < v[1] };
        if !ok {
            let need = if allow_empty { "must not exceed" } else { "must be less than" };
            self.err(key, format!("start {} {need} end {}", v[0], v[1]));
            return false;
        }
        let width = v[1] - v[0];
        if width > 0.0 && width < limits::MIN_SIZE_MM {
            self.err(
                key,
                format!(
                    "spans {} mm, below {} mm (0.1 µm); make it 0 (a foil) or at least that; lengths are in mm",
                    num(width),
                    num(limits::MIN_SIZE_MM)
                ),
            );
            return false;
        }
        if width > 0.0 && width < limits::PLAUSIBLE_MIN_SIZE_MM {
            self.implausible(key, Magnitude::Length, units::mm(width), units::mm(limits::PLAUSIBLE_MIN_SIZE_MM), false);
        }
        true
    }
}

/// A number for a message: plain, or with an exponent when very large or
/// very small (1e300 rather than 301 digits).
fn num(v: f64) -> String {
    let a = v.abs();
    if a != 0.0 && !(1e-4..1e7).contains(&a) { format!("{v:e}") } else { format!("{v}") }
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

/// A material's `source:` on one line: runs of white space (a folded or
/// literal block) become one space; other control characters and overlong
/// text are refused.
fn source_text(s: &str) -> Result<String, String> {
    let joined = s.split_whitespace().collect::<Vec<_>>().join(" ");
    match text::name_problem(&joined, limits::MAX_SOURCE_CHARS) {
        None => Ok(joined),
        Some(problem) => Err(format!("the source {problem}")),
    }
}

fn user_material(ctx: &mut Ctx, name: &str, f: &MaterialFile) -> Option<Material> {
    let key = format!("materials.{name}");
    if !ctx.name(&key, name, limits::MAX_NAME_CHARS) {
        return None;
    }
    let base_name = f.base.as_deref().unwrap_or(name);
    let base = materials::library_entry(base_name);
    if f.base.is_some() && base.is_none() {
        let known = materials::LIBRARY.iter().map(|e| e.name);
        ctx.err(&format!("{key}.base"), format!("unknown base material '{base_name}'{}", suggestion(base_name, known)));
        return None;
    }
    let mut ok = true;
    let (permittivity, model) = permittivity_model(ctx, &key, f, base)?;
    let strength = match f.strength_kv_per_mm {
        Some(s) => {
            let k = format!("{key}.strength_kv_per_mm");
            if ctx.positive(&k, s, "breakdown strength") {
                if !(limits::MIN_STRENGTH_KV_PER_MM..=limits::MAX_STRENGTH_KV_PER_MM).contains(&s) {
                    ctx.err(
                        &k,
                        format!(
                            "breakdown strength {} kV/mm is outside {} to {} kV/mm; strengths are in kV/mm",
                            num(s),
                            num(limits::MIN_STRENGTH_KV_PER_MM),
                            num(limits::MAX_STRENGTH_KV_PER_MM)
                        ),
                    );
                    ok = false;
                } else if s > limits::PLAUSIBLE_MAX_STRENGTH_KV_PER_MM {
                    let bound = units::kv_per_mm(limits::PLAUSIBLE_MAX_STRENGTH_KV_PER_MM);
                    ctx.implausible(&k, Magnitude::Strength, units::kv_per_mm(s), bound, true);
                }
            } else {
                ok = false;
            }
            Some(s)
        }
        None => base.and_then(|b| b.strength_kv_per_mm),
    };
    let impulse_strength = f.impulse_strength_kv_per_mm;
    let dc_strength = f.dc_strength_kv_per_mm;
    for (value, name, what) in
        [(impulse_strength, "impulse_strength_kv_per_mm", "impulse"), (dc_strength, "dc_strength_kv_per_mm", "DC")]
    {
        if let Some(s) = value
            && !(s.is_finite() && (limits::MIN_STRENGTH_KV_PER_MM..=limits::MAX_STRENGTH_KV_PER_MM).contains(&s))
        {
            ctx.err(
                &format!("{key}.{name}"),
                format!(
                    "{what} strength {s} kV/mm is outside {} to {} kV/mm; strengths are in kV/mm (peak)",
                    num(limits::MIN_STRENGTH_KV_PER_MM),
                    num(limits::MAX_STRENGTH_KV_PER_MM)
                ),
            );
            ok = false;
        }
    }
    let loss_tangent = match f.loss_tangent {
        Some(t) => {
            let k = format!("{key}.loss_tangent");
            ok &= ctx.finite(&k, t);
            if t < 0.0 {
                ctx.err(&k, format!("loss tangent must not be negative, found {t}"));
                ok = false;
            } else if t > limits::MAX_LOSS_TANGENT {
                ctx.err(&k, format!("loss tangent {} is beyond {}", num(t), num(limits::MAX_LOSS_TANGENT)));
                ok = false;
            }
            Some(t)
        }
        None => base.and_then(|b| b.loss_tangent),
    };
    let strength_basis = match (f.strength_kv_per_mm, f.strength_basis) {
        (Some(_), Some(b)) => values_of(b),
        (Some(_), None) => {
            ctx.err(
                &format!("{key}.strength_kv_per_mm"),
                "say whether this strength is an rms or a peak value: add `strength_basis: rms` (power-frequency \
                 tests such as IEC 60243-1 state rms voltages) or `strength_basis: peak`",
            );
            ok = false;
            Values::Rms
        }
        (None, Some(_)) => {
            ctx.err(&format!("{key}.strength_basis"), "applies to a `strength_kv_per_mm` given with it");
            ok = false;
            Values::Rms
        }
        (None, None) => base.map_or(Values::Rms, |b| b.strength_basis),
    };
    let strength_conditions = match &f.strength_at {
        None => materials::DRY_AT_REFERENCE,
        Some(at) => {
            let k = format!("{key}.strength_at");
            let t = at.temperature_c.unwrap_or(materials::REFERENCE_TEMPERATURE_C);
            let w = at.water_volume_pct.unwrap_or(0.0);
            ok &= ctx.temperature(&format!("{k}.temperature_c"), t);
            ok &= ctx.percent(&format!("{k}.water_volume_pct"), w);
            materials::StrengthConditions { temperature_c: t, water_volume_fraction: w / 100.0 }
        }
    };
    let density_kg_per_m3 = match f.density_kg_per_m3 {
        Some(d) => {
            let k = format!("{key}.density_kg_per_m3");
            if ctx.positive(&k, d, "density") && d > MAX_DENSITY_KG_PER_M3 {
                ctx.err(&k, format!("density {} kg/m³ is beyond {MAX_DENSITY_KG_PER_M3} kg/m³", num(d)));
                ok = false;
            }
            ok &= d > 0.0;
            Some(d)
        }
        None => base.map(|b| b.density_kg_per_m3),
    };
    let own_values = f.permittivity.is_some()
        || f.strength_kv_per_mm.is_some()
        || f.loss_tangent.is_some()
        || f.class.is_some()
        || f.strength_at.is_some()
        || f.density_kg_per_m3.is_some()
        || f.permittivity_vs_temperature_c.is_some()
        || f.debye.is_some()
        || f.townsend.is_some()
        || f.impulse_strength_kv_per_mm.is_some()
        || f.dc_strength_kv_per_mm.is_some()
        || f.streamer.is_some()
        || f.conductivity_s_per_m.is_some()
        || f.reference_temperature_c.is_some()
        || f.conductivity_temperature_per_k.is_some()
        || f.conductivity_field_mm_per_kv.is_some()
        || f.thermal_conductivity_w_per_m_k.is_some();
    let source = match (&f.source, own_values, base) {
        (Some(s), _, _) if !s.trim().is_empty() => match source_text(s) {
            Ok(s) => s,
            Err(problem) => {
                ctx.err(&format!("{key}.source"), problem);
                return None;
            }
        },
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
    let gas = gas_model(ctx, &key, f, base, class);
    ok &= gas.is_ok();
    let conduction = conduction(ctx, &key, f, base);
    ok &= conduction.is_ok();
    let thermal = match f.thermal_conductivity_w_per_m_k {
        Some(k) => {
            ok &= ctx.within(
                &format!("{key}.thermal_conductivity_w_per_m_k"),
                k,
                limits::THERMAL_CONDUCTIVITY_RANGE_W_PER_M_K,
                "thermal conductivity",
                "W/(m·K)",
            );
            Some(k)
        }
        None => base.map(|b| b.thermal_conductivity_w_per_m_k),
    };
    ok.then(|| Material {
        name: name.to_string(),
        class,
        permittivity,
        model,
        strength_v_per_m: strength.map(units::kv_per_mm),
        strength_basis,
        impulse_strength_v_per_m: impulse_strength.map(units::kv_per_mm),
        dc_strength_v_per_m: dc_strength.map(units::kv_per_mm),
        strength_thickness_m: if f.strength_kv_per_mm.is_some() {
            None
        } else {
            base.and_then(|b| b.strength_thickness_mm).map(units::mm)
        },
        strength_conditions,
        density_kg_per_m3,
        loss_tangent,
        source,
        generic: !own_values,
        out_of_range,
        gas: gas.ok().flatten(),
        conduction: conduction.ok().flatten(),
        thermal_conductivity_w_per_m_k: thermal,
    })
}

/// The volume conduction of a user material: its own keys over its base's
/// values (σ0 at 20 °C and the base's coefficients).
fn conduction(
    ctx: &mut Ctx,
    key: &str,
    f: &MaterialFile,
    base: Option<&materials::LibraryEntry>,
) -> Result<Option<materials::Conduction>, ()> {
    let inherited = base.and_then(|b| b.conduction).map(|c| c.model());
    let coefficients_given = f.reference_temperature_c.is_some()
        || f.conductivity_temperature_per_k.is_some()
        || f.conductivity_field_mm_per_kv.is_some();
    let Some(sigma0) = f.conductivity_s_per_m.or_else(|| {
        // a base's σ0 holds at its own reference temperature only
        if f.reference_temperature_c.is_some() { None } else { inherited.map(|c| c.sigma0_s_per_m) }
    }) else {
        if coefficients_given {
            ctx.err(
                &format!("{key}.conductivity_s_per_m"),
                "conductivity coefficients need the conductivity they modify: add `conductivity_s_per_m` (S/m at \
                 `reference_temperature_c`)",
            );
            return Err(());
        }
        return Ok(None);
    };
    let mut ok = true;
    if f.conductivity_s_per_m.is_some() {
        ok &= ctx.within(
            &format!("{key}.conductivity_s_per_m"),
            sigma0,
            limits::CONDUCTIVITY_RANGE_S_PER_M,
            "conductivity",
            "S/m",
        );
    }
    let t_ref = f.reference_temperature_c.unwrap_or(materials::REFERENCE_TEMPERATURE_C);
    if f.reference_temperature_c.is_some() {
        ok &= ctx.temperature(&format!("{key}.reference_temperature_c"), t_ref);
    }
    let alpha = match f.conductivity_temperature_per_k {
        Some(a) => {
            ok &= ctx.within(
                &format!("{key}.conductivity_temperature_per_k"),
                a,
                limits::CONDUCTIVITY_TEMPERATURE_RANGE_PER_K,
                "temperature coefficient of conductivity",
                "1/K",
            );
            a
        }
        None => inherited.map_or(0.0, |c| c.alpha_per_k),
    };
    let beta = match f.conductivity_field_mm_per_kv {
        Some(b) => {
            ok &= ctx.within(
                &format!("{key}.conductivity_field_mm_per_kv"),
                b,
                limits::CONDUCTIVITY_FIELD_RANGE_MM_PER_KV,
                "field coefficient of conductivity",
                "mm/kV",
            );
            b / units::kv_per_mm(1.0)
        }
        None => inherited.map_or(0.0, |c| c.beta_m_per_v),
    };
    if !ok {
        return Err(());
    }
    Ok(Some(materials::Conduction {
        sigma0_s_per_m: sigma0,
        reference_temperature_c: t_ref,
        alpha_per_k: alpha,
        beta_m_per_v: beta,
    }))
}

/// The discharge model of a user material: its own `townsend:` and
/// `streamer:` constants, else its base gas's; only gases have one.
fn gas_model(
    ctx: &mut Ctx,
    key: &str,
    f: &MaterialFile,
    base: Option<&materials::LibraryEntry>,
    class: MaterialClass,
) -> Result<Option<materials::gas::GasModel>, ()> {
    use materials::gas::{GasModel, Streamer, Townsend};
    if class != MaterialClass::Gas {
        for (given, k) in [(f.townsend.is_some(), "townsend"), (f.streamer.is_some(), "streamer")] {
            if given {
                ctx.err(&format!("{key}.{k}"), "discharge constants apply to gases only (`class: gas`)");
                return Err(());
            }
        }
        return Ok(None);
    }
    let inherited = base.and_then(|b| materials::gas::library_model(b.name));
    if f.townsend.is_none() && f.streamer.is_none() {
        return Ok(inherited);
    }
    let mut ok = true;
    let mut range = |ctx: &mut Ctx, k: String, v: f64, lo: f64, hi: f64, unit: &str| {
        if !(v.is_finite() && v > lo && v <= hi) {
            ctx.err(&k, format!("must be above {} and at most {} {unit}, found {v}", num(lo), num(hi)));
            ok = false;
        }
    };
    let townsend = f.townsend.as_ref().map(|t| {
        let k = format!("{key}.townsend");
        range(ctx, format!("{k}.a_per_pa_m"), t.a_per_pa_m, 0.0, 1e3, "per (Pa·m)");
        range(ctx, format!("{k}.b_v_per_pa_m"), t.b_v_per_pa_m, 0.0, 1e4, "V/(Pa·m)");
        range(ctx, format!("{k}.gamma"), t.gamma, 0.0, 1.0, "");
        Townsend { a_per_pa_m: t.a_per_pa_m, b_v_per_pa_m: t.b_v_per_pa_m, gamma: t.gamma }
    });
    let townsend = if f.townsend.is_some() { townsend } else { inherited.and_then(|g| g.townsend) };
    let streamer = f.streamer.as_ref().map(|s| {
        let k = format!("{key}.streamer");
        range(ctx, format!("{k}.critical_v_per_pa_m"), s.critical_v_per_pa_m, 0.0, 1e4, "V/(Pa·m)");
        range(ctx, format!("{k}.b"), s.b, 0.0, 1e6, "(Pa·m)^n");
        range(ctx, format!("{k}.n"), s.n, 0.0, 2.0, "");
        if let Some(from) = s.from_pa_m {
            range(ctx, format!("{k}.from_pa_m"), from, -f64::MIN_POSITIVE, 1e9, "Pa·m");
        }
        (Streamer { critical_v_per_pa_m: s.critical_v_per_pa_m, b: s.b, n: s.n }, s.from_pa_m)
    });
    if !ok {
        return Err(());
    }
    let (streamer, from) = match streamer {
        Some((s, from)) => (Some(s), from),
        None => (inherited.and_then(|g| g.streamer), inherited.map(|g| g.streamer_from_pa_m)),
    };
    let streamer_from_pa_m = match (streamer, from) {
        (None, _) => f64::INFINITY,
        (Some(_), Some(v)) => v,
        (Some(_), None) => townsend.map_or(0.0, |t| t.paschen_minimum().0),
    };
    Ok(Some(GasModel { townsend, streamer, streamer_from_pa_m }))
}

/// Densest material accepted, kg/m³ (osmium is about 22 600, from memory).
const MAX_DENSITY_KG_PER_M3: f64 = 30_000.0;

fn values_of(v: ValuesFile) -> Values {
    match v {
        ValuesFile::Rms => Values::Rms,
        ValuesFile::Peak => Values::Peak,
    }
}

/// The permittivity model of a user material and its reference value (dry,
/// 20 °C, power frequency): one of `permittivity`, a temperature table or a
/// Debye relaxation, else the base material's.
fn permittivity_model(
    ctx: &mut Ctx,
    key: &str,
    f: &MaterialFile,
    base: Option<&materials::LibraryEntry>,
) -> Option<(f64, PermittivityModel)> {
    let given = [f.permittivity.is_some(), f.permittivity_vs_temperature_c.is_some(), f.debye.is_some()];
    if given.iter().filter(|g| **g).count() > 1 {
        ctx.err(key, "give one of `permittivity`, `permittivity_vs_temperature_c` or `debye`, not several");
        return None;
    }
    let eps_ok = |ctx: &mut Ctx, k: &str, e: f64| {
        if !ctx.finite(k, e) {
            return false;
        }
        if e < 1.0 {
            ctx.err(k, format!("relative permittivity must be at least 1, found {e}"));
            return false;
        }
        if e > limits::MAX_PERMITTIVITY {
            ctx.err(k, format!("relative permittivity {} is beyond {}", num(e), num(limits::MAX_PERMITTIVITY)));
            return false;
        }
        if e > limits::PLAUSIBLE_MAX_PERMITTIVITY {
            ctx.implausible(k, Magnitude::Permittivity, e, limits::PLAUSIBLE_MAX_PERMITTIVITY, true);
        }
        true
    };
    if let Some(table) = &f.permittivity_vs_temperature_c {
        let k = format!("{key}.permittivity_vs_temperature_c");
        if table.len() < 2 || table.len() > MAX_TABLE_POINTS {
            ctx.err(&k, format!("give from 2 to {MAX_TABLE_POINTS} [°C, εr] points, found {}", table.len()));
            return None;
        }
        let mut ok = true;
        for (i, p) in table.iter().enumerate() {
            ok &= ctx.temperature(&format!("{k}[{i}][0]"), p[0]);
            ok &= eps_ok(ctx, &format!("{k}[{i}][1]"), p[1]);
            if i > 0 && p[0] <= table[i - 1][0] {
                ctx.err(&format!("{k}[{i}][0]"), "temperatures must rise from point to point");
                ok = false;
            }
        }
        if !ok {
            return None;
        }
        let model = PermittivityModel::Table(table.clone());
        let probe = Material { model: model.clone(), ..Material::from_library(&materials::LIBRARY[0]) };
        return Some((probe.permittivity_at(materials::REFERENCE_TEMPERATURE_C, 0.0), model));
    }
    if let Some(d) = &f.debye {
        let k = format!("{key}.debye");
        let mut ok = eps_ok(ctx, &format!("{k}.eps_inf"), d.eps_inf);
        if !(d.delta_eps.is_finite() && (0.0..=limits::MAX_PERMITTIVITY).contains(&d.delta_eps)) {
            ctx.err(
                &format!("{k}.delta_eps"),
                format!("must be from 0 to {}, found {}", num(limits::MAX_PERMITTIVITY), d.delta_eps),
            );
            ok = false;
        }
        if !(d.tau_s.is_finite() && d.tau_s > 0.0 && d.tau_s <= 1e6) {
            ctx.err(&format!("{k}.tau_s"), format!("must be above 0 s and at most 1e6 s, found {}", d.tau_s));
            ok = false;
        }
        let ea = d.activation_ev.unwrap_or(0.0);
        if !(ea.is_finite() && (0.0..=5.0).contains(&ea)) {
            ctx.err(&format!("{k}.activation_ev"), format!("must be from 0 to 5 eV, found {ea}"));
            ok = false;
        }
        if !ok {
            return None;
        }
        let debye = materials::Debye { eps_inf: d.eps_inf, delta_eps: d.delta_eps, tau_s: d.tau_s, activation_ev: ea };
        let reference = debye.at(materials::REFERENCE_FREQUENCY_HZ, materials::REFERENCE_TEMPERATURE_C).0;
        return Some((reference, PermittivityModel::Debye(debye)));
    }
    match (f.permittivity, base) {
        (Some(e), _) => eps_ok(ctx, &format!("{key}.permittivity"), e).then_some((e, PermittivityModel::Constant)),
        (None, Some(b)) => {
            let model = if b.name == "water" { PermittivityModel::Water } else { PermittivityModel::Constant };
            Some((b.permittivity, model))
        }
        (None, None) => {
            ctx.err(
                key,
                "a new material needs `permittivity`, `permittivity_vs_temperature_c` or `debye` (or `base:` naming a \
                 built-in material)",
            );
            None
        }
    }
}

/// Most points of a permittivity table.
const MAX_TABLE_POINTS: usize = 100;

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
            if let Some(rad) = r.edge_radius {
                let rk = format!("{k}.edge_radius");
                if !ctx.size(&rk, rad, "edge radius") || !ok {
                    return None;
                }
                let (w, h) = (r.x[1] - r.x[0], r.y[1] - r.y[0]);
                if r.radius.is_some() || (w > 0.0) == (h > 0.0) {
                    ctx.err(
                        &rk,
                        "`edge_radius` beads the ends of a foil: a `rect` of zero thickness in x or in y, without `radius`",
                    );
                    return None;
                }
                if 2.0 * rad > w.max(h) {
                    ctx.err(&rk, format!("edge radius {rad} is more than half the foil's length ({})", 0.5 * w.max(h)));
                    return None;
                }
                return Some(Shape::Beaded { rect, radius: units::mm(rad) });
            }
            match r.radius {
                None => ok.then_some(Shape::Rect(rect)),
                Some(rad) => {
                    let rk = format!("{k}.radius");
                    if !ctx.size(&rk, rad, "corner radius") || !ok {
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
            let ok = ctx.coordinate(&format!("{k}.center[0]"), c.center[0])
                & ctx.coordinate(&format!("{k}.center[1]"), c.center[1])
                & ctx.size(&format!("{k}.radius"), c.radius, "radius");
            ok.then(|| Shape::Circle { center: c.center.map(units::mm), radius: units::mm(c.radius) })
        }
        (None, None, Some(v)) => polygon(ctx, key, s, v),
        _ => {
            ctx.err(key, "give exactly one of `rect`, `circle` or `polygon`");
            None
        }
    }
}

/// A polygon, optionally filleted or with arced edges: at most
/// `MAX_POLYGON_VERTICES` vertices, no repeated neighbours, an area, and an
/// outline that does not cross itself (before and after rounding).
fn polygon(ctx: &mut Ctx, key: &str, s: &ShapeFile, v: &[[f64; 2]]) -> Option<Shape> {
    let k = format!("{key}.polygon");
    if !ctx.count(&k, v.len(), limits::MAX_POLYGON_VERTICES, "vertices") {
        return None;
    }
    let mut ok = true;
    for (i, p) in v.iter().enumerate() {
        ok &= ctx.coordinate(&format!("{k}[{i}][0]"), p[0]) & ctx.coordinate(&format!("{k}[{i}][1]"), p[1]);
    }
    if v.len() < 3 {
        ctx.err(&k, format!("a polygon needs at least 3 vertices, found {}", v.len()));
        return None;
    }
    if !ok {
        return None;
    }
    if let Some(i) = (0..v.len()).find(|&i| v[i] == v[(i + 1) % v.len()]) {
        let j = (i + 1) % v.len();
        ctx.err(&format!("{k}[{j}]"), format!("vertex {j} repeats vertex {i} ({}, {}); remove one", v[i][0], v[i][1]));
        return None;
    }
    let pts: Vec<[f64; 2]> = v.iter().map(|p| p.map(units::mm)).collect();
    let poly = Shape::Polygon(pts.clone());
    if let Some(c) = crate::shape::self_crossing(&pts) {
        let n = v.len();
        let (a, b) = c.edges;
        ctx.err(
            &k,
            format!(
                "the outline crosses itself: edge {a} (vertex {a} → {}) meets edge {b} (vertex {b} → {}) at ({}, {}) \
                 mm; order the vertices around the outline",
                (a + 1) % n,
                (b + 1) % n,
                mm_text(c.at[0]),
                mm_text(c.at[1])
            ),
        );
        return None;
    }
    if poly.area() <= 0.0 {
        ctx.err(&k, "polygon encloses no area");
        return None;
    }
    let rounded = if let Some(arcs) = &s.arcs {
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
            if a.radius == 0.0 {
                ctx.err(&format!("{k}.radius"), "an arc radius cannot be 0 (leave the edge straight)");
                ok = false;
            } else if !ctx.size(&format!("{k}.radius"), a.radius.abs(), "arc radius") {
                ok = false;
            }
            list.push((a.edge, units::mm(a.radius)));
        }
        if !ok {
            return None;
        }
        crate::shape::arced(&pts, &list).map_err(|e| (ak, e))
    } else if let Some(r) = s.fillet {
        let fk = format!("{key}.fillet");
        if !ctx.size(&fk, r, "fillet radius") {
            return None;
        }
        crate::shape::fillet(&pts, units::mm(r)).map_err(|e| (fk, e))
    } else {
        return Some(poly);
    };
    match rounded {
        Ok(shape) => {
            if let Shape::Filleted { points, .. } = &shape
                && let Some(c) = crate::shape::self_crossing(points)
            {
                let at = format!("({}, {}) mm", mm_text(c.at[0]), mm_text(c.at[1]));
                let what = if s.arcs.is_some() { "arcs" } else { "fillet" };
                ctx.err(
                    &format!("{key}.{what}"),
                    format!(
                        "the rounded outline crosses itself near {at}; use smaller radii or move the vertices apart"
                    ),
                );
                return None;
            }
            Some(shape)
        }
        Err((k, e)) => {
            ctx.err(&k, e);
            None
        }
    }
}

/// A length in m written in mm, rounded to the nanometre.
fn mm_text(m: f64) -> String {
    let v = m * 1e3;
    let s = format!("{v:.6}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.to_string() }
}

/// Names of a stack's energised and earthed electrodes.
fn stack_electrode_names(form: StackForm) -> [&'static str; 2] {
    match form {
        StackForm::Planar => ["energised face", "earthed face"],
        StackForm::Coaxial => ["conductor", "screen"],
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
    let mut ok = ctx.potential("stack.voltage_kv", s.voltage_kv);
    if s.layers.is_empty() {
        ctx.err("stack.layers", "a stack needs at least one layer");
        return None;
    }
    if !ctx.count("stack.layers", s.layers.len(), limits::MAX_LAYERS, "layers") {
        return None;
    }
    let faces = stack_electrode_names(s.form);
    let mut names: BTreeSet<String> = BTreeSet::new();
    let mut layers = Vec::new();
    for (i, l) in s.layers.iter().enumerate() {
        let key = format!("stack.layers[{i}]");
        let start = ctx.diags.len();
        let name = l.name.clone().unwrap_or_else(|| format!("layer {}", i + 1));
        ctx.owner = Some(name.clone());
        let mut good = true;
        if l.name.is_some() {
            let nk = format!("{key}.name");
            good &= ctx.name(&nk, &name, limits::MAX_NAME_CHARS);
            if good && (faces.contains(&name.as_str()) || name == "background") {
                ctx.err(&nk, format!("'{name}' is the name of a stack electrode or the background; rename the layer"));
                good = false;
            }
        }
        if good && !names.insert(name.clone()) {
            ctx.err(&format!("{key}.name"), format!("layer name '{name}' is used twice; layer names must be unique"));
            good = false;
        }
        let m = table.resolve(ctx, &format!("{key}.material"), &l.material);
        let tk = format!("{key}.thickness");
        let t = ctx.size(&tk, l.thickness, "thickness");
        if t && l.thickness > limits::PLAUSIBLE_MAX_LAYER_MM {
            let bound = units::mm(limits::PLAUSIBLE_MAX_LAYER_MM);
            ctx.implausible(&tk, Magnitude::Length, units::mm(l.thickness), bound, true);
        }
        let sv = service(ctx, &key, l.temperature_c, l.water.as_ref(), m.map(|m| &table.used[m]));
        ctx.name_owner(start, "layer", &name);
        ctx.owner = None;
        match (m, t, good, sv) {
            (Some(m), true, true, Some(sv)) => layers.push((name, m, units::mm(l.thickness), key, sv)),
            _ => ok = false,
        }
    }
    let v = units::kv(s.voltage_kv);
    let total: f64 = layers.iter().map(|l| l.2).sum();
    if total > units::mm(limits::MAX_COORDINATE_MM) {
        ctx.err(
            "stack.layers",
            format!("the layers add up to {} mm, beyond {} mm", mm_text(total), limits::MAX_COORDINATE_MM),
        );
        return None;
    }
    let loc = ctx.loc;
    let position = |key: &str| loc.find(key).map_or((None, None), |(l, c)| (Some(l), Some(c)));
    let (line, column) = position("stack");
    let mut face_t = [None, None];
    if let Some(t) = s.face_temperatures_c {
        let mut good = true;
        for v in t.iter().flatten() {
            good &= ctx.temperature("stack.face_temperatures_c", *v);
        }
        if good {
            face_t = t;
        }
    }
    let heat = match s.conductor_heat_w_per_m {
        Some(h) if ctx.within("stack.conductor_heat_w_per_m", h, (0.0, limits::MAX_HEAT_W), "heat", "W/m") => {
            if face_t[0].is_some() {
                ctx.err(
                    "stack.conductor_heat_w_per_m",
                    "give the energised face either a temperature or a heat input, not both",
                );
                None
            } else {
                Some(h)
            }
        }
        _ => None,
    };
    let electrode = |name: &str, r: Rect, potential_v: f64| Part {
        name: name.to_string(),
        role: Role::Electrode(ElectrodeKind::Fixed { potential_v }),
        shape: Shape::Rect(r),
        key: "stack".to_string(),
        line,
        column,
        service: Service {
            temperature_c: if potential_v != 0.0 { face_t[0] } else { face_t[1] },
            water: None,
            heat_w: None,
        },
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
                    ok &= ctx.size("stack.width", w, "width");
                    (0.0, units::mm(w))
                }
                (None, Some(d)) => (d.x0, d.x1),
                (None, None) => (0.0, units::mm(DEFAULT_STACK_WIDTH_MM)),
            };
            let mut y = 0.0;
            let mut parts = Vec::new();
            for (name, m, t, key, service) in layers {
                let (line, column) = position(&key);
                parts.push(Part {
                    name,
                    role: Role::Dielectric(m),
                    shape: Shape::Rect(Rect { x0, x1: w, y0: y, y1: y + t }),
                    line,
                    column,
                    key,
                    service,
                });
                y += t;
            }
            let mut energised = electrode(faces[0], Rect { x0, x1: w, y0: 0.0, y1: 0.0 }, v);
            energised.service.heat_w = heat;
            parts.push(energised);
            parts.push(electrode(faces[1], Rect { x0, x1: w, y0: total, y1: total }, 0.0));
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
            ok &= ctx.size("stack.inner_radius", ri, "inner radius");
            let ri = units::mm(ri);
            let (z0, len) = match (s.length, domain) {
                (Some(l), _) => {
                    ok &= ctx.size("stack.length", l, "length");
                    (0.0, units::mm(l))
                }
                (None, Some(d)) => (d.y0, d.y1),
                (None, None) => (0.0, total),
            };
            let mut r = ri;
            let mut parts = Vec::new();
            for (name, m, t, key, service) in layers {
                let (line, column) = position(&key);
                parts.push(Part {
                    name,
                    role: Role::Dielectric(m),
                    shape: Shape::Rect(Rect { x0: r, x1: r + t, y0: z0, y1: len }),
                    line,
                    column,
                    key,
                    service,
                });
                r += t;
            }
            let mut conductor = electrode(faces[0], Rect { x0: 0.0, x1: ri, y0: z0, y1: len }, v);
            conductor.service.heat_w = heat.map(|h| h * (len - z0));
            parts.push(conductor);
            parts.push(electrode(faces[1], Rect { x0: r, x1: r, y0: z0, y1: len }, 0.0));
            let domain = Rect { x0: ri, x1: r, y0: z0, y1: len };
            ok.then_some(Stack { parts, domain, coaxial: true })
        }
    }
}

/// Default number of sample points along a line (ends included).
const DEFAULT_LINE_POINTS: usize = 401;

/// Checks `lines:`: printable unique names, finite end points inside the
/// domain, distinct ends, a bounded number of points.
fn sampling_lines(ctx: &mut Ctx, lines: &Option<Vec<LineFile>>, domain: Option<&Rect>) -> Option<Vec<Line>> {
    let mut ok = true;
    let mut out = Vec::new();
    let mut names = BTreeSet::new();
    let list = lines.as_deref().unwrap_or_default();
    if !ctx.count("lines", list.len(), limits::MAX_LINES, "lines") {
        return None;
    }
    let mut total = 0usize;
    for (i, l) in list.iter().enumerate() {
        let key = format!("lines[{i}]");
        let start = ctx.diags.len();
        ok &= ctx.unique_name(&format!("{key}.name"), &l.name, &mut names, "line");
        let mut ends = Vec::new();
        for (end, p) in [("from", l.from), ("to", l.to)] {
            let k = format!("{key}.{end}");
            if !(ctx.coordinate(&format!("{k}[0]"), p[0]) & ctx.coordinate(&format!("{k}[1]"), p[1])) {
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
        if !(2..=limits::MAX_LINE_POINTS).contains(&points) {
            ctx.err(&format!("{key}.points"), format!("must be from 2 to {}, found {points}", limits::MAX_LINE_POINTS));
            ok = false;
        } else {
            total += points;
            if total > limits::MAX_TOTAL_LINE_POINTS {
                ctx.err(
                    &format!("{key}.points"),
                    format!(
                        "the lines up to this one ask for {total} points; all lines together may have at most {}",
                        limits::MAX_TOTAL_LINE_POINTS
                    ),
                );
                ok = false;
                total = 0;
            }
        }
        if let [from, to] = ends[..] {
            if from == to {
                ctx.err(&format!("{key}.to"), "the line has the same start and end");
                ok = false;
            }
            out.push(Line { name: l.name.clone(), from, to, points });
        }
        ctx.name_owner(start, "line", &l.name);
    }
    ok.then_some(out)
}

fn refine_boxes(ctx: &mut Ctx, g: Option<&GridFile>) -> Option<Vec<RefineBox>> {
    let mut ok = true;
    let mut out = Vec::new();
    let list = g.and_then(|g| g.boxes.as_deref()).unwrap_or_default();
    if !ctx.count("grid.boxes", list.len(), limits::MAX_REFINE_BOXES, "refinement boxes") {
        return None;
    }
    for (i, b) in list.iter().enumerate() {
        let key = format!("grid.boxes[{i}]");
        let good = ctx.interval(&format!("{key}.x"), b.x, false)
            & ctx.interval(&format!("{key}.y"), b.y, false)
            & ctx.size(&format!("{key}.max_step"), b.max_step, "max_step");
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
        ok &= ctx.size("grid.max_step", s, "max_step");
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
    let mut ctx = Ctx { loc, diags: Vec::new(), implausible: Vec::new(), owner: None };
    let mut ok = true;

    if let Some(t) = &f.title {
        ok &= ctx.name("title", t, limits::MAX_TITLE_CHARS);
    }
    if let Some(u) = &f.units
        && u != "mm"
    {
        ctx.err("units", format!("only `mm` is supported in this version, found '{u}'"));
        ok = false;
    }

    let mut table =
        MaterialTable { user: BTreeMap::new(), invalid: BTreeSet::new(), used: Vec::new(), ids: BTreeMap::new() };
    let user_materials = f.materials.as_ref().map_or(0, BTreeMap::len);
    ok &= ctx.count("materials", user_materials, limits::MAX_MATERIALS, "materials");
    for (name, m) in f.materials.iter().flatten().take(limits::MAX_MATERIALS) {
        ctx.owner = Some(name.clone());
        match user_material(&mut ctx, name, m) {
            Some(m) => {
                table.user.insert(name.clone(), m);
            }
            None => {
                table.invalid.insert(name.clone());
                ok = false;
            }
        }
        ctx.owner = None;
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
    if let Some(d) = domain {
        let extent = d.width().max(d.height());
        let bound = units::mm(limits::PLAUSIBLE_MAX_EXTENT_MM);
        if extent > bound {
            let key = if f.domain.is_some() { "domain" } else { "stack" };
            ctx.implausible(key, Magnitude::Length, extent, bound, true);
        }
    }

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
    let part_files = f.parts.as_deref().unwrap_or_default();
    if !ctx.count("parts", part_files.len(), limits::MAX_PARTS, "parts") {
        return (None, ctx.diags);
    }
    for (i, p) in part_files.iter().enumerate() {
        let key = format!("parts[{i}]");
        let start = ctx.diags.len();
        ctx.owner = Some(p.name.clone());
        let part = one_part(&mut ctx, &key, p, &mut names, &mut table, geometry, domain);
        ctx.name_owner(start, "part", &p.name);
        ctx.owner = None;
        match part {
            Some(part) => parts.push(part),
            None => ok = false,
        }
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
    if ok {
        note_small_difference(&mut ctx, &parts);
    }

    let probes = probes(&mut ctx, &f.probes, domain.as_ref());
    let lines = sampling_lines(&mut ctx, &f.lines, domain.as_ref());
    let safety_factor = f.limits.as_ref().and_then(|l| l.safety_factor).unwrap_or(DEFAULT_SAFETY_FACTOR);
    if !(safety_factor.is_finite() && (1.0..=limits::MAX_SAFETY_FACTOR).contains(&safety_factor)) {
        ctx.err(
            "limits.safety_factor",
            format!("must be a number from 1 to {}, found {safety_factor}", limits::MAX_SAFETY_FACTOR),
        );
        ok = false;
    }
    let pd_inception_margin =
        f.limits.as_ref().and_then(|l| l.pd_inception_margin).unwrap_or(DEFAULT_PD_INCEPTION_MARGIN);
    if !(pd_inception_margin.is_finite() && (1.0..=limits::MAX_SAFETY_FACTOR).contains(&pd_inception_margin)) {
        ctx.err(
            "limits.pd_inception_margin",
            format!("must be a number from 1 to {}, found {pd_inception_margin}", limits::MAX_SAFETY_FACTOR),
        );
        ok = false;
    }

    let surface_tangential_limit = f.limits.as_ref().and_then(|l| l.surface_tangential_kv_per_mm);
    if let Some(v) = surface_tangential_limit
        && !(v.is_finite() && v > 0.0 && v <= limits::MAX_STRENGTH_KV_PER_MM)
    {
        ctx.err(
            "limits.surface_tangential_kv_per_mm",
            format!("must be above 0 and at most {} kV/mm, found {v}", num(limits::MAX_STRENGTH_KV_PER_MM)),
        );
        ok = false;
    }

    let grid = domain.and_then(|d| grid_spec(&mut ctx, f.grid.as_ref(), &d));
    let refine_boxes = refine_boxes(&mut ctx, f.grid.as_ref());
    let environment = environment(&mut ctx, f.environment.as_ref());
    let operation = operation(&mut ctx, f.operation.as_ref());
    let (
        Some(domain),
        Some(grid),
        Some(refine_boxes),
        Some(background),
        Some(probes),
        Some(lines),
        Some(environment),
        Some(operation),
        true,
    ) = (domain, grid, refine_boxes, background, probes, lines, environment, operation, ok && ctx.diags.is_empty())
    else {
        return (None, ctx.diags);
    };
    let electrodes = || parts.iter().filter(|p| matches!(p.role, Role::Electrode(_)));
    if operation.mode == Mode::Dc {
        for p in electrodes().filter(|p| p.service.heat_w.is_some()) {
            let key = electrode_key(p, "conductor_heat_w_per_m", "heat_w");
            if p.service.temperature_c.is_some() {
                ctx.err(&key, format!("electrode '{}': give either a temperature or a heat input, not both", p.name));
            } else if !electrodes().any(|e| e.service.temperature_c.is_some()) {
                ctx.err(
                    &key,
                    format!(
                        "electrode '{}': its heat needs somewhere to go; give another electrode (the screen or \
                         earth) a temperature (`temperature_c`; for a stack, `face_temperatures_c`)",
                        p.name
                    ),
                );
            }
        }
        if !ctx.diags.is_empty() {
            return (None, ctx.diags);
        }
    }
    if operation.mode != Mode::Dc {
        for p in electrodes().filter(|p| p.service.heat_w.is_some()) {
            let key = electrode_key(p, "conductor_heat_w_per_m", "heat_w");
            ctx.err(&key, format!("electrode '{}': a heat input applies to `operation: {{ mode: dc }}`", p.name));
        }
        for p in parts.iter().filter(|p| matches!(p.role, Role::Electrode(_)) && p.service.temperature_c.is_some()) {
            let key = electrode_key(p, "face_temperatures_c", "temperature_c");
            ctx.err(
                &key,
                format!(
                    "electrode '{}': an electrode temperature drives the thermal solve of `operation: {{ mode: dc }}`; \
                     in other modes give temperatures to the insulating parts",
                    p.name
                ),
            );
        }
        if !ctx.diags.is_empty() {
            return (None, ctx.diags);
        }
    }
    let waivers = waivers(&mut ctx, f.waivers.as_deref().unwrap_or_default(), &parts);
    if !ctx.diags.is_empty() {
        return (None, ctx.diags);
    }
    let case = Case {
        waivers,
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
        pd_inception_margin,
        surface_tangential_limit: surface_tangential_limit.map(units::kv_per_mm),
        source_sha256: String::new(),
        implausible: ctx.implausible,
        environment,
        operation,
    };
    (Some(case), ctx.diags)
}

/// The key of an electrode's thermal value in messages: `stack.STACK_KEY`
/// for a stack's faces, else the part's own `PART_KEY`.
fn electrode_key(p: &Part, stack_key: &str, part_key: &str) -> String {
    if p.key == "stack" { format!("stack.{stack_key}") } else { format!("{}.{part_key}", p.key) }
}

/// Most characters of a waiver's reason.
const MAX_REASON_CHARS: usize = 500;

/// `waivers:`: a finding code (kebab-case), an optional part that exists,
/// a reason and who accepted it (printable text, not empty).
fn waivers(ctx: &mut Ctx, list: &[WaiverFile], parts: &[Part]) -> Vec<Waiver> {
    let mut out = Vec::new();
    if !ctx.count("waivers", list.len(), limits::MAX_PARTS, "waivers") {
        return out;
    }
    for (k, w) in list.iter().enumerate() {
        let key = format!("waivers[{k}]");
        let mut ok = true;
        if w.code.is_empty() || !w.code.chars().all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '-') {
            ctx.err(
                &format!("{key}.code"),
                format!("'{}' is not a finding code (kebab-case, as reports print it)", text::printable(&w.code)),
            );
            ok = false;
        }
        if let Some(p) = &w.part
            && p != "background"
            && !parts.iter().any(|q| &q.name == p)
        {
            ctx.err(&format!("{key}.part"), format!("no part is named '{}'", text::printable(p)));
            ok = false;
        }
        for (value, name, max) in [(&w.reason, "reason", MAX_REASON_CHARS), (&w.by, "by", limits::MAX_NAME_CHARS)] {
            let joined = value.split_whitespace().collect::<Vec<_>>().join(" ");
            if joined.is_empty() {
                ctx.err(&format!("{key}.{name}"), format!("a waiver needs `{name}:` (who accepted it and why)"));
                ok = false;
            } else if let Some(problem) = text::name_problem(&joined, max) {
                ctx.err(&format!("{key}.{name}"), format!("the {name} {problem}"));
                ok = false;
            }
        }
        if ok {
            let clean = |v: &str| v.split_whitespace().collect::<Vec<_>>().join(" ");
            out.push(Waiver {
                code: w.code.clone(),
                part: w.part.clone(),
                reason: clean(&w.reason),
                by: clean(&w.by),
                key,
            });
        }
    }
    out
}

/// One entry of `parts:`: a unique printable name, one role, a valid shape
/// that reaches into the domain; electrodes need an extent (a foil is a
/// line, not a point).
fn one_part(
    ctx: &mut Ctx,
    key: &str,
    p: &PartFile,
    names: &mut BTreeSet<String>,
    table: &mut MaterialTable,
    geometry: Geometry,
    domain: Option<Rect>,
) -> Option<Part> {
    let mut ok = ctx.name(&format!("{key}.name"), &p.name, limits::MAX_NAME_CHARS);
    if ok && !names.insert(p.name.clone()) {
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
            ctx.err(key, "a part is either insulation (`material:`) or a conductor (`electrode:`), not both");
            None
        }
        (None, None) => {
            ctx.err(key, "give the part a `material:` or make it an `electrode:`");
            None
        }
        (Some(m), None) => table.resolve(ctx, &format!("{key}.material"), m).map(Role::Dielectric),
        (None, Some(ElectrodeFile::Floating)) => Some(Role::Electrode(ElectrodeKind::Floating)),
        (None, Some(ElectrodeFile::PotentialKv(v))) => ctx
            .potential(&format!("{key}.electrode.potential_kv"), v)
            .then(|| Role::Electrode(ElectrodeKind::Fixed { potential_v: units::kv(v) })),
    };
    let mut sh = shape(ctx, &format!("{key}.shape"), &p.shape);
    if matches!(sh, Some(Shape::Beaded { .. })) && matches!(role, Some(Role::Dielectric(_))) {
        ctx.err(
            &format!("{key}.shape.rect.edge_radius"),
            "`edge_radius` beads the ends of a foil electrode; this part is insulation",
        );
        sh = None;
    }
    let material = match role {
        Some(Role::Dielectric(m)) => Some(&table.used[m]),
        _ => None,
    };
    let mut sv = if role.is_some() { service(ctx, key, p.temperature_c, p.water.as_ref(), material) } else { None };
    if let Some(h) = p.heat_w {
        let k = format!("{key}.heat_w");
        if material.is_some() {
            ctx.err(&k, "applies to electrodes (their own loss heats the insulation)");
            sv = None;
        } else if !ctx.within(&k, h, (0.0, limits::MAX_HEAT_W), "heat", "W") {
            sv = None;
        } else if let Some(s) = sv.as_mut() {
            s.heat_w = Some(h);
        }
    }
    let (Some(role), Some(sh), Some(service), true) = (role, sh, sv, ok) else { return None };
    let b = sh.bounds();
    let shape_key = format!("{key}.shape");
    match role {
        Role::Dielectric(_) if sh.area() <= 0.0 => {
            ctx.err(&shape_key, "an insulating part needs an area; only electrodes may be lines (foils)");
            return None;
        }
        Role::Electrode(_) if b.width() == 0.0 && b.height() == 0.0 => {
            ctx.err(&shape_key, "an electrode needs an extent: this one is a single point (give a foil a length)");
            return None;
        }
        _ => {}
    }
    // a circle centred on the axis is a sphere; anything else must stay at r ≥ 0
    let sphere = matches!(sh, Shape::Circle { center, .. } if center[0] == 0.0);
    if geometry == Geometry::Axisymmetric && b.x0 < 0.0 && !sphere {
        ctx.err(&shape_key, "axisymmetric parts cannot reach negative radius (x < 0); only a circle centred on the axis (a sphere) may cross it");
        return None;
    }
    if let Some(d) = domain
        && !b.intersects(&d)
    {
        ctx.err(&shape_key, "lies entirely outside the domain");
        return None;
    }
    let (line, column) = match ctx.loc.find(key) {
        Some((l, c)) => (Some(l), Some(c)),
        None => (None, None),
    };
    Some(Part { name: p.name.clone(), role, shape: sh, key: key.to_string(), line, column, service })
}

/// The service conditions of a part or layer: its temperature and absorbed
/// water. `material` is the part's material (`None` for an electrode).
fn service(
    ctx: &mut Ctx,
    key: &str,
    temperature: Option<f64>,
    water: Option<&WaterFile>,
    material: Option<&Material>,
) -> Option<Service> {
    let mut ok = true;
    if let Some(t) = temperature {
        // an electrode's temperature is a boundary value of the DC thermal
        // solve (checked against the mode once the case is read)
        ok &= ctx.temperature(&format!("{key}.temperature_c"), t);
    }
    let Some(w) = water else { return ok.then_some(Service { temperature_c: temperature, water: None, heat_w: None }) };
    let wk = format!("{key}.water");
    let Some(m) = material else {
        ctx.err(&wk, "only insulating parts absorb water, not electrodes");
        return None;
    };
    if m.class == MaterialClass::Gas {
        ctx.err(&wk, format!("{} is a gas; absorbed water applies to solids and liquids", m.name));
        return None;
    }
    if matches!(m.model, PermittivityModel::Water) {
        ctx.err(&wk, format!("{} is water already", m.name));
        return None;
    }
    let rule = match w.rule {
        None => materials::DEFAULT_MIXING_RULE,
        Some(RuleFile::Looyenga) => MixingRule::Looyenga,
        Some(RuleFile::MaxwellGarnett) => MixingRule::MaxwellGarnett,
        Some(RuleFile::Lichtenecker) => MixingRule::Lichtenecker,
    };
    let (fraction, given) = match (w.volume_pct, w.mass_pct) {
        (Some(v), None) => {
            if !ctx.percent(&format!("{wk}.volume_pct"), v) {
                return None;
            }
            (v / 100.0, WaterGiven::VolumePct(v))
        }
        (None, Some(x)) => {
            if !ctx.percent(&format!("{wk}.mass_pct"), x) {
                return None;
            }
            let Some(density) = m.density_kg_per_m3 else {
                ctx.err(
                    &format!("{wk}.mass_pct"),
                    format!("needs the density of {}: give it `density_kg_per_m3` under `materials:`", m.name),
                );
                return None;
            };
            (materials::volume_fraction_from_mass(x / 100.0, density), WaterGiven::MassPct(x))
        }
        _ => {
            ctx.err(&wk, "give exactly one of `volume_pct` or `mass_pct`");
            return None;
        }
    };
    let water = (fraction > 0.0).then_some(Water { volume_fraction: fraction, given, rule });
    ok.then_some(Service { temperature_c: temperature, water, heat_w: None })
}

/// `environment:` with its defaults (20 °C, 101.325 kPa).
fn environment(ctx: &mut Ctx, e: Option<&EnvironmentFile>) -> Option<Environment> {
    let t = e.and_then(|e| e.temperature_c).unwrap_or(materials::REFERENCE_TEMPERATURE_C);
    let p = e.and_then(|e| e.pressure_kpa).unwrap_or(STANDARD_PRESSURE_KPA);
    let mut ok = ctx.temperature("environment.temperature_c", t);
    let (lo, hi) = limits::PRESSURE_RANGE_KPA;
    if ctx.finite("environment.pressure_kpa", p) && !(lo..=hi).contains(&p) {
        ctx.err(
            "environment.pressure_kpa",
            format!("{p} kPa is outside {lo} to {hi} kPa (absolute); pressures are in kPa"),
        );
        ok = false;
    }
    ok &= p.is_finite();
    ok.then_some(Environment { temperature_c: t, pressure_pa: p * 1e3 })
}

/// Standard atmospheric pressure, kPa (ISO 2533).
const STANDARD_PRESSURE_KPA: f64 = 101.325;

/// Default AC frequency, Hz.
const DEFAULT_FREQUENCY_HZ: f64 = 50.0;

/// `operation:`: static (instantaneous, i.e. peak, values) unless it says
/// `ac`; AC needs `values: rms | peak` stated.
fn operation(ctx: &mut Ctx, o: Option<&OperationFile>) -> Option<Operation> {
    let Some(o) = o else {
        return Some(Operation {
            mode: Mode::Static,
            frequency_hz: DEFAULT_FREQUENCY_HZ,
            values: Values::Peak,
            stated: false,
        });
    };
    let mode = match o.mode {
        None | Some(ModeFile::Static) => Mode::Static,
        Some(ModeFile::Ac) => Mode::Ac,
        Some(ModeFile::Impulse) => Mode::Impulse,
        Some(ModeFile::Dc) => Mode::Dc,
    };
    let mut ok = true;
    let values = match (mode, o.values) {
        (Mode::Static, None | Some(ValuesFile::Peak)) => Values::Peak,
        (Mode::Static, Some(ValuesFile::Rms)) => {
            ctx.err(
                "operation.values",
                "a static field has instantaneous values, not rms ones; for power-frequency voltages stated rms write \
                 `mode: ac`",
            );
            ok = false;
            Values::Peak
        }
        (Mode::Impulse, None | Some(ValuesFile::Peak)) => Values::Peak,
        (Mode::Impulse, Some(ValuesFile::Rms)) => {
            ctx.err("operation.values", "an impulse is stated by its peak value, not an rms one; write `values: peak`");
            ok = false;
            Values::Peak
        }
        (Mode::Dc, None | Some(ValuesFile::Peak)) => Values::Peak,
        (Mode::Dc, Some(ValuesFile::Rms)) => {
            ctx.err(
                "operation.values",
                "a DC voltage is stated by its steady value; write `values: peak` (or leave `values` out)",
            );
            ok = false;
            Values::Peak
        }
        (Mode::Ac, Some(v)) => values_of(v),
        (Mode::Ac, None) => {
            ctx.err(
                "operation",
                "say whether the AC voltages are rms or peak values: add `values: rms` (how system voltages are \
                 usually stated) or `values: peak`",
            );
            ok = false;
            Values::Rms
        }
    };
    let frequency_hz = match (mode, o.frequency_hz) {
        (Mode::Static, Some(_)) => {
            ctx.err("operation.frequency_hz", "applies to `mode: ac`; a static field has no frequency");
            ok = false;
            DEFAULT_FREQUENCY_HZ
        }
        (Mode::Impulse, Some(_)) => {
            ctx.err(
                "operation.frequency_hz",
                "applies to `mode: ac`; an impulse is the standard 1.2/50 µs shape (permittivities are taken at \
                 about 290 kHz, the bandwidth of its front)",
            );
            ok = false;
            DEFAULT_FREQUENCY_HZ
        }
        (Mode::Dc, Some(_)) => {
            ctx.err("operation.frequency_hz", "applies to `mode: ac`; a DC field has no frequency");
            ok = false;
            DEFAULT_FREQUENCY_HZ
        }
        (_, None) => DEFAULT_FREQUENCY_HZ,
        (Mode::Ac, Some(f)) => {
            let (lo, hi) = limits::FREQUENCY_RANGE_HZ;
            if !(f.is_finite() && (lo..=hi).contains(&f)) {
                ctx.err("operation.frequency_hz", format!("{f} Hz is outside {} to {} Hz", num(lo), num(hi)));
                ok = false;
            }
            f
        }
    };
    ok.then_some(Operation { mode, frequency_hz, values, stated: true })
}

/// Notes a largest difference between fixed potentials below
/// `PLAUSIBLE_MIN_DIFFERENCE_KV` (but not zero: that has its own finding).
fn note_small_difference(ctx: &mut Ctx, parts: &[Part]) {
    let fixed: Vec<(&Part, f64)> = parts
        .iter()
        .filter_map(|p| match p.role {
            Role::Electrode(ElectrodeKind::Fixed { potential_v }) => Some((p, potential_v)),
            _ => None,
        })
        .collect();
    let lo = fixed.iter().map(|f| f.1).fold(f64::INFINITY, f64::min);
    let hi = fixed.iter().map(|f| f.1).fold(f64::NEG_INFINITY, f64::max);
    let bound = units::kv(limits::PLAUSIBLE_MIN_DIFFERENCE_KV);
    let difference = hi - lo;
    if difference > 0.0 && difference < bound {
        let largest = fixed.iter().max_by(|a, b| a.1.abs().total_cmp(&b.1.abs())).map(|f| f.0);
        let key = match largest {
            Some(p) if p.key.starts_with("parts[") => format!("{}.electrode.potential_kv", p.key),
            _ => "stack.voltage_kv".to_string(),
        };
        ctx.owner = largest.map(|p| p.name.clone());
        ctx.implausible(&key, Magnitude::PotentialDifference, difference, bound, false);
        ctx.owner = None;
    }
}

/// Checks `probes:`: at most `MAX_PROBES`, printable unique names,
/// positions inside the domain.
fn probes(ctx: &mut Ctx, list: &Option<Vec<ProbeFile>>, domain: Option<&Rect>) -> Option<Vec<Probe>> {
    let list = list.as_deref().unwrap_or_default();
    if !ctx.count("probes", list.len(), limits::MAX_PROBES, "probes") {
        return None;
    }
    let mut ok = true;
    let mut out = Vec::new();
    let mut names = BTreeSet::new();
    for (i, p) in list.iter().enumerate() {
        let key = format!("probes[{i}]");
        let start = ctx.diags.len();
        ok &= ctx.unique_name(&format!("{key}.name"), &p.name, &mut names, "probe");
        if ctx.coordinate(&format!("{key}.at[0]"), p.at[0]) & ctx.coordinate(&format!("{key}.at[1]"), p.at[1]) {
            let at = p.at.map(units::mm);
            if let Some(d) = domain
                && !d.contains_closed(at, 0.0)
            {
                ctx.err(&format!("{key}.at"), "the probe lies outside the domain");
                ok = false;
            }
            out.push(Probe { name: p.name.clone(), at });
        } else {
            ok = false;
        }
        ctx.name_owner(start, "probe", &p.name);
    }
    ok.then_some(out)
}
