//! Colour maps of our own construction, built in the Oklab colour space.
//!
//! # Oklab
//! Oklab (Björn Ottosson, "A perceptual color space for image processing",
//! 2020, published with its reference formulas on the author's web log) is a
//! colour space in which equal distances are meant to look equally different
//! and whose first coordinate L is perceived lightness (0 black … 1 white).
//! From linear sRGB (r, g, b):
//!
//! ```text
//! l = 0.4122214708 r + 0.5363325363 g + 0.0514459929 b
//! m = 0.2119034982 r + 0.6806995451 g + 0.1073969566 b
//! s = 0.0883024619 r + 0.2817188376 g + 0.6299787005 b
//! L = 0.2104542553 ∛l + 0.7936177850 ∛m − 0.0040720468 ∛s
//! a = 1.9779984951 ∛l − 2.4285922050 ∛m + 0.4505937099 ∛s
//! b = 0.0259040371 ∛l + 0.7827717662 ∛m − 0.8086757660 ∛s
//! ```
//!
//! and back with the inverse matrices given in the same publication
//! ([`oklab_to_linear`]). Gamma-encoded sRGB ↔ linear sRGB is the sRGB
//! transfer function (IEC 61966-2-1): `c ≤ 0.04045 ? c/12.92 :
//! ((c + 0.055)/1.055)^2.4`.
//!
//! # The maps
//! Each map is a table of 256 colours laid along a path in Oklab's polar
//! form (L, C, h) with chroma C = √(a² + b²) and hue h = atan2(b, a):
//!
//! - **sequential** ([`ColourMap::sequential`], for magnitudes 0 … max):
//!   L rises linearly from 0.15 to 0.96, so lightness alone orders the
//!   values and the map stays readable in grey; the hue turns from
//!   h = 330° (a dark wine) through red and copper to h = 95° (a pale
//!   straw), i.e. h(t) = 330° + 125°·t taken modulo 360°; the chroma is
//!   C(t) = 0.155·sin(πt)^0.7 + 0.02, so both ends are nearly neutral.
//! - **diverging** ([`ColourMap::diverging`], for signed values −1 … 1,
//!   zero in the middle): L falls linearly from 0.96 at the centre to 0.38
//!   at both ends; the negative half has hue 245° (blue), the positive half
//!   35° (red-orange); chroma C = 0.16·|2t − 1|^0.8, so the centre is
//!   neutral.
//!
//! Where a colour of the path lies outside the sRGB gamut its chroma is
//! reduced (bisection at fixed L and h) until it fits, so L — and with it
//! the monotone order — is kept exactly. The constants are our own choice;
//! the tests check that L is strictly monotone on each map (and on each
//! half of the diverging one) both before and after rounding to 8 bits.

/// A colour in Oklab: lightness `l` (0 … 1) and the opponent axes `a`
/// (green–red) and `b` (blue–yellow).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Oklab {
    /// Perceived lightness, 0 (black) … 1 (white).
    pub l: f64,
    /// Green (−) to red (+).
    pub a: f64,
    /// Blue (−) to yellow (+).
    pub b: f64,
}

/// sRGB transfer function, encoded → linear (IEC 61966-2-1).
pub fn srgb_to_linear(c: f64) -> f64 {
    if c <= 0.04045 {
        c / 12.92
    } else {
        ((c + 0.055) / 1.055).powf(2.4)
    }
}

/// sRGB transfer function, linear → encoded (IEC 61966-2-1).
pub fn linear_to_srgb(c: f64) -> f64 {
    if c <= 0.0031308 {
        12.92 * c
    } else {
        1.055 * c.powf(1.0 / 2.4) - 0.055
    }
}

/// Linear sRGB → Oklab (Ottosson 2020, see the module docs).
pub fn linear_to_oklab([r, g, b]: [f64; 3]) -> Oklab {
    let l = 0.4122214708 * r + 0.5363325363 * g + 0.0514459929 * b;
    let m = 0.2119034982 * r + 0.6806995451 * g + 0.1073969566 * b;
    let s = 0.0883024619 * r + 0.2817188376 * g + 0.6299787005 * b;
    let (l, m, s) = (l.cbrt(), m.cbrt(), s.cbrt());
    Oklab {
        l: 0.2104542553 * l + 0.7936177850 * m - 0.0040720468 * s,
        a: 1.9779984951 * l - 2.4285922050 * m + 0.4505937099 * s,
        b: 0.0259040371 * l + 0.7827717662 * m - 0.8086757660 * s,
    }
}

/// Oklab → linear sRGB (Ottosson 2020); may leave the gamut [0, 1]³.
pub fn oklab_to_linear(c: Oklab) -> [f64; 3] {
    let l = c.l + 0.3963377774 * c.a + 0.2158037573 * c.b;
    let m = c.l - 0.1055613458 * c.a - 0.0638541728 * c.b;
    let s = c.l - 0.0894841775 * c.a - 1.2914855480 * c.b;
    let (l, m, s) = (l * l * l, m * m * m, s * s * s);
    [
        4.0767416621 * l - 3.3077115913 * m + 0.2309699292 * s,
        -1.2684380046 * l + 2.6097574011 * m - 0.3413193965 * s,
        -0.0041960863 * l - 0.7034186147 * m + 1.7076147010 * s,
    ]
}

/// Gamma-encoded sRGB (each 0 … 1) → Oklab.
pub fn srgb_to_oklab(rgb: [f64; 3]) -> Oklab {
    linear_to_oklab(rgb.map(srgb_to_linear))
}

/// 8-bit sRGB → Oklab (for reading colours back out of a picture).
pub fn rgb8_to_oklab(rgb: [u8; 3]) -> Oklab {
    srgb_to_oklab(rgb.map(|c| c as f64 / 255.0))
}

/// The colour of polar Oklab coordinates (L, C, h in degrees), with C
/// reduced as little as needed to fit the sRGB gamut; gamma-encoded sRGB.
pub fn oklch_in_gamut(l: f64, c: f64, h_deg: f64) -> [f64; 3] {
    let (s, co) = h_deg.to_radians().sin_cos();
    let at = |c: f64| {
        oklab_to_linear(Oklab {
            l,
            a: c * co,
            b: c * s,
        })
    };
    let fits = |x: [f64; 3]| x.iter().all(|v| (-1e-9..=1.0 + 1e-9).contains(v));
    let mut best = c;
    if !fits(at(c)) {
        let (mut lo, mut hi) = (0.0, c);
        for _ in 0..50 {
            let mid = 0.5 * (lo + hi);
            if fits(at(mid)) {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        best = lo;
    }
    at(best).map(|v| linear_to_srgb(v.clamp(0.0, 1.0)))
}

/// A colour map: 256 colours from t = 0 to t = 1.
#[derive(Debug, Clone, PartialEq)]
pub struct ColourMap {
    name: &'static str,
    table: Vec<[f64; 3]>,
    diverging: bool,
}

/// Entries in each colour map's table.
pub const MAP_ENTRIES: usize = 256;

impl ColourMap {
    /// The sequential map for magnitudes (see the module docs).
    pub fn sequential() -> ColourMap {
        let table = (0..MAP_ENTRIES)
            .map(|k| {
                let t = k as f64 / (MAP_ENTRIES - 1) as f64;
                let l = 0.15 + 0.81 * t;
                let c = 0.155 * (std::f64::consts::PI * t).sin().powf(0.7) + 0.02;
                let h = (330.0 + 125.0 * t).rem_euclid(360.0);
                oklch_in_gamut(l, c, h)
            })
            .collect();
        ColourMap {
            name: "sequential",
            table,
            diverging: false,
        }
    }

    /// The diverging map for signed values, zero at t = ½ (see the module
    /// docs).
    pub fn diverging() -> ColourMap {
        let table = (0..MAP_ENTRIES)
            .map(|k| {
                let t = k as f64 / (MAP_ENTRIES - 1) as f64;
                let d = (2.0 * t - 1.0).abs();
                let l = 0.96 - 0.58 * d;
                let c = 0.16 * d.powf(0.8);
                let h = if t < 0.5 { 245.0 } else { 35.0 };
                oklch_in_gamut(l, c, h)
            })
            .collect();
        ColourMap {
            name: "diverging",
            table,
            diverging: true,
        }
    }

    /// "sequential" or "diverging".
    pub fn name(&self) -> &'static str {
        self.name
    }

    /// Whether the map is diverging (neutral at t = ½).
    pub fn is_diverging(&self) -> bool {
        self.diverging
    }

    /// The table, gamma-encoded sRGB in 0 … 1, before rounding to 8 bits.
    pub fn table(&self) -> &[[f64; 3]] {
        &self.table
    }

    /// Oklab lightness of every table entry.
    pub fn lightness(&self) -> Vec<f64> {
        self.table.iter().map(|&c| srgb_to_oklab(c).l).collect()
    }

    /// The 8-bit colour at `t` (clamped to 0 … 1; NaN gives t = 0), the
    /// nearest table entry.
    pub fn at(&self, t: f64) -> [u8; 3] {
        let t = if t.is_nan() { 0.0 } else { t.clamp(0.0, 1.0) };
        let k = (t * (MAP_ENTRIES - 1) as f64).round() as usize;
        self.table[k].map(|v| (v * 255.0).round() as u8)
    }
}

/// A qualitative palette for lines (probes, co-/cross-polar): chroma 0.14
/// and hues 255°, 40°, 145°, 320°, 90°, 200° in Oklab, at lightness 0.55
/// for the first six lines, then 0.38 and 0.72 for the next sixes (then
/// repeating), so that lines of one set differ by hue only.
pub fn line_colour(k: usize) -> [u8; 3] {
    const HUES: [f64; 6] = [255.0, 40.0, 145.0, 320.0, 90.0, 200.0];
    const LIGHT: [f64; 3] = [0.55, 0.38, 0.72];
    let l = LIGHT[(k / HUES.len()) % LIGHT.len()];
    oklch_in_gamut(l, 0.14, HUES[k % HUES.len()]).map(|v| (v * 255.0).round() as u8)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn white_and_black_are_the_ends_of_lightness() {
        // Ottosson 2020: white maps to L = 1, a = b = 0 (to the precision
        // of the published 10-digit matrices).
        let w = linear_to_oklab([1.0, 1.0, 1.0]);
        assert!((w.l - 1.0).abs() < 1e-6 && w.a.abs() < 1e-6 && w.b.abs() < 1e-6);
        let k = linear_to_oklab([0.0, 0.0, 0.0]);
        assert!(k.l.abs() < 1e-12);
    }

    #[test]
    fn the_inverse_undoes_the_forward_transform() {
        for rgb in [[0.2, 0.5, 0.9], [1.0, 0.0, 0.0], [0.05, 0.9, 0.3]] {
            let back = oklab_to_linear(linear_to_oklab(rgb));
            for (x, y) in rgb.iter().zip(back) {
                assert!((x - y).abs() < 1e-6, "{rgb:?} -> {back:?}");
            }
        }
    }

    #[test]
    fn the_transfer_function_round_trips() {
        // 1e-6: the standard's two pieces meet only to about 1e-7 at the
        // knee (c = 0.04045); elsewhere the round trip is exact to 1e-12.
        for c in [0.0, 0.01, 0.04045, 0.3, 1.0] {
            let tol = if c == 0.04045 { 1e-6 } else { 1e-12 };
            assert!((linear_to_srgb(srgb_to_linear(c)) - c).abs() < tol, "{c}");
        }
    }
}
