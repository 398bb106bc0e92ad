//! Colours, palettes, markers, glyphs and hatching.

use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;

use super::render::{PRes, Pe};

/// Line colours, chosen to differ in lightness as well as hue.
pub(super) const PALETTE: [RGBColor; 6] = [
    RGBColor(24, 34, 92),
    RGBColor(204, 88, 18),
    RGBColor(0, 122, 112),
    RGBColor(132, 58, 158),
    RGBColor(196, 160, 30),
    RGBColor(92, 92, 92),
];

pub(super) fn palette(i: usize) -> RGBColor {
    PALETTE[i % PALETTE.len()]
}

#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) enum Shape {
    Circle,
    Square,
    Up,
    Diamond,
    Down,
}

#[derive(Clone, Copy, Debug)]
pub(super) struct Mark {
    pub(super) shape: Shape,
    pub(super) filled: bool,
}

pub(super) fn mark_for(i: usize) -> Mark {
    const SHAPES: [Shape; 5] = [
        Shape::Circle,
        Shape::Square,
        Shape::Up,
        Shape::Diamond,
        Shape::Down,
    ];
    Mark {
        shape: SHAPES[i % 5],
        filled: (i / 5).is_multiple_of(2),
    }
}

#[derive(Clone, Copy, Debug)]
pub(super) enum Glyph {
    Mark(Mark, RGBColor),
    /// Fold point: open circle with a cross (⊗), in black.
    Fold,
    /// Ice-edge tick: a vertical bar.
    Tick(RGBColor),
}

pub(super) fn draw_glyph<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    g: Glyph,
    (x, y): (i32, i32),
) -> PRes {
    match g {
        Glyph::Mark(m, colour) => {
            let r = 5;
            let fill = if m.filled { colour } else { WHITE };
            if m.shape == Shape::Circle {
                area.draw(&Circle::new((x, y), r, fill.filled())).pe()?;
                area.draw(&Circle::new((x, y), r, colour.stroke_width(2)))
                    .pe()?;
                return Ok(());
            }
            let pts: Vec<(i32, i32)> = match m.shape {
                Shape::Square => vec![
                    (x - r, y - r),
                    (x + r, y - r),
                    (x + r, y + r),
                    (x - r, y + r),
                ],
                Shape::Up => vec![(x, y - r - 1), (x + r + 1, y + r), (x - r - 1, y + r)],
                Shape::Down => vec![(x, y + r + 1), (x + r + 1, y - r), (x - r - 1, y - r)],
                _ => vec![
                    (x, y - r - 1),
                    (x + r + 1, y),
                    (x, y + r + 1),
                    (x - r - 1, y),
                ],
            };
            area.draw(&Polygon::new(pts.clone(), fill.filled())).pe()?;
            let mut closed = pts.clone();
            closed.push(pts[0]);
            area.draw(&PathElement::new(closed, colour.stroke_width(2)))
                .pe()?;
        }
        Glyph::Fold => {
            let r = 8;
            area.draw(&Circle::new((x, y), r, WHITE.filled())).pe()?;
            area.draw(&Circle::new((x, y), r, BLACK.stroke_width(2)))
                .pe()?;
            let d = 5;
            let st = BLACK.stroke_width(2);
            area.draw(&PathElement::new(vec![(x - d, y - d), (x + d, y + d)], st))
                .pe()?;
            area.draw(&PathElement::new(vec![(x - d, y + d), (x + d, y - d)], st))
                .pe()?;
        }
        Glyph::Tick(colour) => {
            area.draw(&PathElement::new(
                vec![(x, y - 13), (x, y + 13)],
                WHITE.stroke_width(6),
            ))
            .pe()?;
            area.draw(&PathElement::new(
                vec![(x, y - 12), (x, y + 12)],
                colour.stroke_width(3),
            ))
            .pe()?;
        }
    }
    Ok(())
}

pub(super) fn draw_arrow<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    from: (i32, i32),
    to: (i32, i32),
) -> PRes {
    let colour = RGBColor(40, 40, 40);
    let (dx, dy) = ((to.0 - from.0) as f64, (to.1 - from.1) as f64);
    let len = dx.hypot(dy);
    if len < 1.0 {
        return Ok(());
    }
    let (ux, uy) = (dx / len, dy / len);
    let head = 12.0f64.min(len);
    let base = (to.0 as f64 - ux * head, to.1 as f64 - uy * head);
    let (px, py) = (-uy * 5.0, ux * 5.0);
    area.draw(&DashedPathElement::new(
        vec![from, (base.0 as i32, base.1 as i32)],
        4,
        3,
        colour.stroke_width(2),
    ))
    .pe()?;
    area.draw(&Polygon::new(
        vec![
            to,
            ((base.0 + px) as i32, (base.1 + py) as i32),
            ((base.0 - px) as i32, (base.1 - py) as i32),
        ],
        colour.filled(),
    ))
    .pe()?;
    Ok(())
}

/// Diagonal hatching ("/") of a pixel rectangle, on a global lattice so that
/// adjacent hatched rectangles join into continuous stripes.
pub(super) fn hatch<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    a: (i32, i32),
    b: (i32, i32),
    colour: RGBColor,
) -> PRes {
    const S: i32 = 9;
    let (x0, x1) = (a.0.min(b.0), a.0.max(b.0));
    let (y0, y1) = (a.1.min(b.1), a.1.max(b.1));
    let mut c = (x0 + y0).div_euclid(S) * S;
    while c <= x1 + y1 {
        let lo = x0.max(c - y1);
        let hi = x1.min(c - y0);
        if lo < hi {
            area.draw(&PathElement::new(
                vec![(lo, c - lo), (hi, c - hi)],
                colour.stroke_width(1),
            ))
            .pe()?;
        }
        c += S;
    }
    Ok(())
}

pub(super) fn lab_to_srgb(l: f64, a: f64, b: f64) -> Option<[f64; 3]> {
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
pub(super) fn lch_colour(l: f64, c: f64, h_deg: f64) -> RGBColor {
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

/// Fill colour of category `k` of `n`: lightness evenly spaced from light to dark.
pub(super) fn category_colour(k: usize, n: usize) -> RGBColor {
    let f = if n > 1 {
        k as f64 / (n - 1) as f64
    } else {
        0.0
    };
    let l = 94.0 - 62.0 * f;
    lch_colour(l, 28.0, 95.0 + 137.508 * k as f64)
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
        let mut prev = 2.0;
        for k in 0..6 {
            let RGBColor(r, g, b) = category_colour(k, 6);
            let y = luminance([r, g, b]);
            assert!(y < prev - 0.03, "category lightness too close at {k}");
            prev = y;
        }
    }
}
