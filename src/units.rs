//! Unit conversions at the edges of the pipeline.
//!
//! Invariant: everything inside the library is SI (metres, volts, V/m,
//! farads, coulombs, joules). Case files speak millimetres and kilovolts and
//! reports speak mm, kV and kV/mm; the conversions happen here and are called
//! only by `case` (on the way in) and `report` (on the way out).

/// Vacuum permittivity ε0 in F/m (CODATA 2018 recommended value).
pub const EPSILON_0: f64 = 8.854_187_812_8e-12;

/// Boltzmann constant in J/K (exact in the SI since 2019).
pub const BOLTZMANN: f64 = 1.380_649e-23;

/// Elementary charge in C (exact in the SI since 2019): J per eV.
pub const ELEMENTARY_CHARGE: f64 = 1.602_176_634e-19;

/// Zero of the Celsius scale in K.
pub const ZERO_CELSIUS_K: f64 = 273.15;

/// °C to K.
pub fn kelvin(t_c: f64) -> f64 {
    t_c + ZERO_CELSIUS_K
}

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

/// Coulombs to microcoulombs (surface densities: C/m² to µC/m²).
pub fn to_uc(value_c: f64) -> f64 {
    value_c * 1e6
}

/// Whether voltages, fields and strengths are rms or peak values.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Values {
    /// Root-mean-square values of a sinusoid.
    Rms,
    /// Peak (instantaneous maximum) values.
    Peak,
}

impl Values {
    /// "rms" or "peak".
    pub fn name(self) -> &'static str {
        match self {
            Values::Rms => "rms",
            Values::Peak => "peak",
        }
    }

    /// The factor that turns a value given as `from` into this convention
    /// (sinusoidal waveform: peak = √2·rms).
    pub fn factor_from(self, from: Values) -> f64 {
        match (from, self) {
            (Values::Rms, Values::Peak) => std::f64::consts::SQRT_2,
            (Values::Peak, Values::Rms) => std::f64::consts::FRAC_1_SQRT_2,
            _ => 1.0,
        }
    }
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

    #[test]
    fn rms_and_peak_differ_by_root_two() {
        // sinusoid: peak = √2·rms (common practice)
        assert!((Values::Peak.factor_from(Values::Rms) - 2f64.sqrt()).abs() < 1e-15);
        assert!((Values::Rms.factor_from(Values::Peak) * 2f64.sqrt() - 1.0).abs() < 1e-15);
        assert_eq!(Values::Rms.factor_from(Values::Rms), 1.0);
    }
}
