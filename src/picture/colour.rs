//! The colour scale of field maps: a ramp designed in the Oklab space
//! (Ottosson, "A perceptual color space for image processing", 2020),
//! where equal distances look like equal colour differences.
//!
//! Lightness rises linearly from dark indigo to pale sand, so the scale
//! reads correctly in grey-scale print and for readers with a colour
//! vision deficiency; hue turns from indigo through teal to sand and the
//! chroma stays moderate so every step is in the sRGB gamut or close to it.

use palette::{Clamp, FromColor, Oklch, Srgb};

/// Entries of the lookup table.
pub const STEPS: usize = 256;

/// Oklch lightness at the bottom and top of the scale.
const LIGHTNESS: (f32, f32) = (0.26, 0.95);
/// Hue in degrees at the bottom and top (decreasing: indigo → teal → sand).
const HUE: (f32, f32) = (285.0, 95.0);
/// Chroma at the ends and in the middle.
const CHROMA: (f32, f32) = (0.07, 0.11);

/// The scale's colour at `t` ∈ [0, 1] as 8-bit sRGB.
pub fn at(t: f64) -> [u8; 3] {
    let t = t.clamp(0.0, 1.0) as f32;
    let l = LIGHTNESS.0 + (LIGHTNESS.1 - LIGHTNESS.0) * t;
    let h = HUE.0 + (HUE.1 - HUE.0) * t;
    // Chroma peaks mid-scale: the gamut is narrow near black and white.
    let c = CHROMA.0 + (CHROMA.1 - CHROMA.0) * (1.0 - (2.0 * t - 1.0).powi(2));
    let rgb: Srgb<u8> = Srgb::from_color(Oklch::new(l, c, h)).clamp().into_format();
    [rgb.red, rgb.green, rgb.blue]
}

/// The whole scale as a lookup table of `STEPS` entries.
pub fn table() -> Vec<[u8; 3]> {
    (0..STEPS).map(|k| at(k as f64 / (STEPS - 1) as f64)).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use palette::Oklab;

    /// Oklab lightness of an 8-bit sRGB colour (for tests of the scale).
    fn lightness(rgb: [u8; 3]) -> f32 {
        let c: Srgb<f32> = Srgb::new(rgb[0], rgb[1], rgb[2]).into_format();
        Oklab::from_color(c).l
    }

    /// Oklab distance between two 8-bit sRGB colours.
    fn distance(a: [u8; 3], b: [u8; 3]) -> f32 {
        let lab = |v: [u8; 3]| {
            let c: Srgb<f32> = Srgb::new(v[0], v[1], v[2]).into_format();
            Oklab::from_color(c)
        };
        let (p, q) = (lab(a), lab(b));
        ((p.l - q.l).powi(2) + (p.a - q.a).powi(2) + (p.b - q.b).powi(2)).sqrt()
    }

    #[test]
    fn lightness_rises_evenly_along_the_scale() {
        // Perceptual uniformity as in Ottosson (2020): Oklab lightness
        // linear in the scale value. 8-bit rounding moves L by up to ~0.002,
        // so steps are judged 8 entries apart (ΔL ≈ 0.02), within ±25 %.
        let t = table();
        let ls: Vec<f32> = t.iter().map(|c| lightness(*c)).collect();
        let mean = 8.0 * (ls[STEPS - 1] - ls[0]) / (STEPS - 1) as f32;
        assert!(mean > 0.0);
        for k in (0..STEPS - 8).step_by(8) {
            let d = ls[k + 8] - ls[k];
            assert!(d > 0.75 * mean && d < 1.25 * mean, "lightness step {d} at {k} vs mean {mean}");
        }
        assert!((ls[0] - LIGHTNESS.0).abs() < 0.02 && (ls[STEPS - 1] - LIGHTNESS.1).abs() < 0.02);
    }

    #[test]
    fn colour_steps_are_even() {
        // Equal scale steps give colour differences within a factor 2.5 of
        // each other, measured 16 entries apart (common practice for
        // judging colour maps: near-constant ΔE along the map).
        let t = table();
        let d: Vec<f32> = (0..STEPS - 16).step_by(16).map(|k| distance(t[k], t[k + 16])).collect();
        let (lo, hi) = d.iter().fold((f32::MAX, 0f32), |(lo, hi), &v| (lo.min(v), hi.max(v)));
        assert!(hi / lo < 2.5, "colour steps from {lo} to {hi}");
    }
}
