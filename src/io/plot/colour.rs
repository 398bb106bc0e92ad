//! Colours: the categorical palette (Tol's medium-contrast scheme), the
//! sequential map for filled fields, and luminance in greyscale.

use plotters::style::RGBColor;

/// Paul Tol's medium-contrast scheme (P. Tol, "Colour Schemes", SRON
/// technical note SRON/EPS/TN/09-002, issue 3.2, 2021,
/// <https://personal.sron.nl/~pault/data/colourschemes.pdf>): three hues,
/// each light and dark, designed to be distinct for colour-blind readers
/// and in greyscale. Light yellow.
pub(super) const LIGHT_YELLOW: RGBColor = RGBColor(0xEE, 0xCC, 0x66);
/// Tol medium contrast: light red.
pub(super) const LIGHT_RED: RGBColor = RGBColor(0xEE, 0x99, 0xAA);
/// Tol medium contrast: light blue.
pub(super) const LIGHT_BLUE: RGBColor = RGBColor(0x66, 0x99, 0xCC);
/// Tol medium contrast: dark yellow.
pub(super) const DARK_YELLOW: RGBColor = RGBColor(0x99, 0x77, 0x00);
/// Tol medium contrast: dark red.
pub(super) const DARK_RED: RGBColor = RGBColor(0x99, 0x44, 0x55);
/// Tol medium contrast: dark blue.
pub(super) const DARK_BLUE: RGBColor = RGBColor(0x00, 0x44, 0x88);
/// Tol's pale grey (his colour for missing data).
pub(super) const PALE_GREY: RGBColor = RGBColor(0xDD, 0xDD, 0xDD);
/// Tol's neutral grey of the bright scheme.
pub(super) const GREY: RGBColor = RGBColor(0xBB, 0xBB, 0xBB);
/// A dark neutral grey for lines of "other" states.
pub(super) const DARK_GREY: RGBColor = RGBColor(0x66, 0x66, 0x66);

fn lab_to_srgb(l: f64, a: f64, b: f64) -> Option<[f64; 3]> {
    let fy = (l + 16.0) / 116.0;
    let fx = fy + a / 500.0;
    let fz = fy - b / 200.0;
    let d = 6.0 / 29.0;
    let finv = |t: f64| {
        if t > d {
            t * t * t
        } else {
            3.0 * d * d * (t - 4.0 / 29.0)
        }
    };
    let (x, y, z) = (0.95047 * finv(fx), finv(fy), 1.08883 * finv(fz));
    let lin = [
        3.2406 * x - 1.5372 * y - 0.4986 * z,
        -0.9689 * x + 1.8758 * y + 0.0415 * z,
        0.0557 * x - 0.2040 * y + 1.0570 * z,
    ];
    if lin.iter().any(|c| !(-1e-9..=1.0 + 1e-9).contains(c)) {
        return None;
    }
    Some(lin.map(|c| {
        let c = c.clamp(0.0, 1.0);
        if c <= 0.0031308 {
            12.92 * c
        } else {
            1.055 * c.powf(1.0 / 2.4) - 0.055
        }
    }))
}

/// sRGB colour of CIE L*C*h, reducing chroma until it is displayable
/// (lightness is kept exactly, so lightness ordering survives).
fn lch_colour(l: f64, c: f64, h_deg: f64) -> RGBColor {
    let h = h_deg.to_radians();
    let at = |c: f64| lab_to_srgb(l, c * h.cos(), c * h.sin());
    let rgb = match at(c) {
        Some(v) => v,
        None => {
            let (mut lo, mut hi) = (0.0, c);
            for _ in 0..30 {
                let mid = 0.5 * (lo + hi);
                if at(mid).is_some() {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            at(lo).unwrap_or([l / 100.0; 3])
        }
    };
    let q = |v: f64| (v * 255.0).round().clamp(0.0, 255.0) as u8;
    RGBColor(q(rgb[0]), q(rgb[1]), q(rgb[2]))
}

/// The sequential colour map used for filled fields, `t` in 0…1 (clamped).
///
/// It runs from deep indigo through blue-teal and green to pale straw; CIE
/// lightness rises linearly from 14 to 96, so the map reads correctly when
/// printed in greyscale. Returns sRGB bytes.
pub fn sequential_colour(t: f64) -> [u8; 3] {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let l = 14.0 + 82.0 * t;
    let c = 10.0 + 40.0 * (std::f64::consts::PI * t).sin();
    let h = 290.0 - 205.0 * t;
    let RGBColor(r, g, b) = lch_colour(l, c, h);
    [r, g, b]
}

/// WCAG relative luminance of an sRGB colour, 0 (black) … 1 (white).
pub(super) fn relative_luminance(RGBColor(r, g, b): RGBColor) -> f64 {
    let lin = |v: u8| {
        let v = v as f64 / 255.0;
        if v <= 0.04045 {
            v / 12.92
        } else {
            ((v + 0.055) / 1.055).powf(2.4)
        }
    };
    0.2126 * lin(r) + 0.7152 * lin(g) + 0.0722 * lin(b)
}

pub(super) fn seq(t: f64) -> RGBColor {
    let [r, g, b] = sequential_colour(t);
    RGBColor(r, g, b)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn luminance([r, g, b]: [u8; 3]) -> f64 {
        relative_luminance(RGBColor(r, g, b))
    }

    #[test]
    fn colour_map_is_monotone_in_lightness() {
        let mut prev = -1.0;
        for k in 0..=64 {
            let y = luminance(sequential_colour(k as f64 / 64.0));
            assert!(y > prev, "luminance not increasing at step {k}");
            prev = y;
        }
        // NaN input gives the first colour, never a panic.
        assert_eq!(sequential_colour(f64::NAN), sequential_colour(0.0));
    }

    #[test]
    fn luminance_of_known_colours() {
        // WCAG 2 relative luminance: white 1, black 0, mid grey #777777
        // about 0.184 (computed by hand from the sRGB transfer function).
        assert!((relative_luminance(RGBColor(255, 255, 255)) - 1.0).abs() < 1e-12);
        assert_eq!(relative_luminance(RGBColor(0, 0, 0)), 0.0);
        assert!((relative_luminance(RGBColor(0x77, 0x77, 0x77)) - 0.184).abs() < 1e-3);
    }
}
