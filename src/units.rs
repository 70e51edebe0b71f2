//! Unit conversions at the edges of the pipeline.
//!
//! Invariant: everything inside the library is SI (metres, volts, V/m,
//! farads, coulombs, joules). Case files speak millimetres and kilovolts and
//! reports speak mm, kV and kV/mm; the conversions happen here and are called
//! only by `case` (on the way in) and `report` (on the way out).

/// Vacuum permittivity ε0 in F/m (CODATA 2018 recommended value).
pub const EPSILON_0: f64 = 8.854_187_812_8e-12;

/// Millimetres to metres.
pub fn mm(value_mm: f64) -> f64 {
    value_mm * 1e-3
}

/// Metres to millimetres.
pub fn to_mm(value_m: f64) -> f64 {
    value_m * 1e3
}

/// Kilovolts to volts.
pub fn kv(value_kv: f64) -> f64 {
    value_kv * 1e3
}

/// Volts to kilovolts.
pub fn to_kv(value_v: f64) -> f64 {
    value_v * 1e-3
}

/// kV/mm to V/m.
pub fn kv_per_mm(value: f64) -> f64 {
    value * 1e6
}

/// V/m to kV/mm.
pub fn to_kv_per_mm(value_v_per_m: f64) -> f64 {
    value_v_per_m * 1e-6
}

/// Farads to picofarads.
pub fn to_pf(value_f: f64) -> f64 {
    value_f * 1e12
}

/// Coulombs to nanocoulombs.
pub fn to_nc(value_c: f64) -> f64 {
    value_c * 1e9
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trips() {
        // exact decimal scalings, common practice
        assert!((to_mm(mm(12.5)) - 12.5).abs() < 1e-12);
        assert!((to_kv_per_mm(kv_per_mm(3.0)) - 3.0).abs() < 1e-12);
        assert!((to_kv(kv(10.0)) - 10.0).abs() < 1e-12);
    }
}
