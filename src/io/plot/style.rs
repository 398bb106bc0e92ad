//! Styles: one fixed look per climate state (lines, markers) and per map
//! regime (fill, hatch), glyphs, arrows and hatching.
//!
//! Greyscale rules: stability is shown twice (solid/dashed line and
//! filled/open marker), states by marker shape as well as colour, and map
//! regimes by fills of distinct luminance plus a hatch for the number of
//! coexisting states.

use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;

use super::colour::{
    DARK_BLUE, DARK_GREY, DARK_RED, DARK_YELLOW, GREY, LIGHT_BLUE, LIGHT_RED, LIGHT_YELLOW,
    PALE_GREY, relative_luminance,
};
use super::render::{PRes, Pe};
use crate::analysis::sweep::state_bit;
use crate::model::climate::State;

/// Marker shape.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Shape {
    /// Circle.
    Circle,
    /// Square.
    Square,
    /// Triangle pointing up.
    Up,
    /// Diamond.
    Diamond,
    /// Triangle pointing down.
    Down,
}

/// The marker shapes in order of preference.
pub(super) const SHAPES: [Shape; 5] = [
    Shape::Circle,
    Shape::Square,
    Shape::Diamond,
    Shape::Up,
    Shape::Down,
];

/// A marker: shape, filled (stable) or open (unstable).
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) struct Mark {
    /// Shape.
    pub(super) shape: Shape,
    /// Filled with the line colour (else white inside).
    pub(super) filled: bool,
}

/// The look of one climate state in line figures.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) struct StateStyle {
    /// Name for legends ("polar caps").
    pub(super) name: &'static str,
    /// Line and marker colour.
    pub(super) colour: RGBColor,
    /// Marker shape.
    pub(super) shape: Shape,
}

/// The style of a state given by its label ([`State::label`], e.g.
/// "polar-caps"); an unknown label gets the style of "other". Hues follow
/// the map: yellow ice-free, blue polar caps, red equatorial belt; the
/// snowball is black.
pub(super) fn state_style(label: &str) -> StateStyle {
    let s = |name, colour, shape| StateStyle {
        name,
        colour,
        shape,
    };
    match label {
        "ice-free" => s("ice-free", DARK_YELLOW, Shape::Circle),
        "polar-caps" => s("polar caps", DARK_BLUE, Shape::Square),
        "equatorial-belt" => s("equatorial belt", DARK_RED, Shape::Diamond),
        "snowball" => s("snowball", BLACK, Shape::Up),
        _ => s("other", DARK_GREY, Shape::Down),
    }
}

/// Legend name of a state label ("polar-caps" -> "polar caps"); unknown
/// labels are shown as given.
pub(super) fn state_name(label: &str) -> String {
    match state_style(label).name {
        "other" if label != "other" => label.replace('-', " "),
        n => n.to_string(),
    }
}

/// "polar caps, stable" / "snowball, unstable".
pub(super) fn state_stability(label: &str, stable: bool) -> String {
    let s = if stable { "stable" } else { "unstable" };
    format!("{}, {s}", state_name(label))
}

/// A drawable glyph.
#[derive(Clone, Copy, Debug)]
pub(super) enum Glyph {
    /// A data marker in a colour.
    Mark(Mark, RGBColor),
    /// Fold point: open circle with a cross, in black.
    Fold,
    /// Ice-edge tick: a vertical bar.
    Tick(RGBColor),
}

fn shape_points(shape: Shape, (x, y): (i32, i32), r: i32) -> Vec<(i32, i32)> {
    match shape {
        Shape::Square => vec![
            (x - r, y - r),
            (x + r, y - r),
            (x + r, y + r),
            (x - r, y + r),
        ],
        Shape::Up => vec![(x, y - r - 2), (x + r + 1, y + r), (x - r - 1, y + r)],
        Shape::Down => vec![(x, y + r + 2), (x + r + 1, y - r), (x - r - 1, y - r)],
        _ => vec![
            (x, y - r - 2),
            (x + r + 2, y),
            (x, y + r + 2),
            (x - r - 2, y),
        ],
    }
}

/// Draw a glyph centred at a pixel.
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
            let pts = shape_points(m.shape, (x, y), r);
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

/// A dashed arrow from one pixel to another (the jump after a fold).
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

/// A hatch pattern.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Hatch {
    /// No hatch.
    None,
    /// Rising diagonals "/".
    Forward,
    /// Falling diagonals "\".
    Back,
    /// Both diagonals "x".
    Cross,
}

#[cfg(test)]
impl Hatch {
    /// Cell of the README regime table.
    pub(super) fn markdown(self) -> &'static str {
        match self {
            Hatch::None => "none",
            Hatch::Forward => "`/`",
            Hatch::Back => "`\\`",
            Hatch::Cross => "`x`",
        }
    }
}

/// One family of diagonals over a pixel rectangle, on a global lattice so
/// that adjacent rectangles join into continuous stripes. `rising`: lines
/// x + y = c (drawn as "/"), else x - y = c ("\").
fn diagonals<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    (x0, y0): (i32, i32),
    (x1, y1): (i32, i32),
    rising: bool,
    colour: RGBColor,
) -> PRes {
    const S: i32 = 9;
    let (c0, c1) = if rising {
        (x0 + y0, x1 + y1)
    } else {
        (x0 - y1, x1 - y0)
    };
    let mut c = c0.div_euclid(S) * S;
    while c <= c1 {
        let (lo, hi) = if rising {
            (x0.max(c - y1), x1.min(c - y0))
        } else {
            (x0.max(c + y0), x1.min(c + y1))
        };
        let y = |x: i32| if rising { c - x } else { x - c };
        if lo < hi {
            area.draw(&PathElement::new(
                vec![(lo, y(lo)), (hi, y(hi))],
                colour.stroke_width(1),
            ))
            .pe()?;
        }
        c += S;
    }
    Ok(())
}

/// Hatch a pixel rectangle with a pattern in a colour.
pub(super) fn hatch<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    a: (i32, i32),
    b: (i32, i32),
    kind: Hatch,
    colour: RGBColor,
) -> PRes {
    let lo = (a.0.min(b.0), a.1.min(b.1));
    let hi = (a.0.max(b.0), a.1.max(b.1));
    match kind {
        Hatch::None => Ok(()),
        Hatch::Forward => diagonals(area, lo, hi, true, colour),
        Hatch::Back => diagonals(area, lo, hi, false, colour),
        Hatch::Cross => {
            diagonals(area, lo, hi, true, colour)?;
            diagonals(area, lo, hi, false, colour)
        }
    }
}

/// Hatch ink on a fill: white on dark fills, black on light ones.
pub(super) fn ink_on(fill: RGBColor) -> RGBColor {
    if relative_luminance(fill) < 0.18 {
        WHITE
    } else {
        BLACK
    }
}

/// A regime of a map: the set of stable states present in a cell, grouped
/// so that every regime keeps one look in every map.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub(super) enum Regime {
    /// Only ice-free climates are stable.
    IceFree,
    /// Only polar-cap climates.
    PolarCaps,
    /// Only equatorial-belt climates.
    Belt,
    /// Only the snowball.
    Snowball,
    /// Ice-free and snowball.
    IceFreeSnowball,
    /// Polar caps and snowball.
    CapsSnowball,
    /// Equatorial belt and snowball.
    BeltSnowball,
    /// Three or more kinds of stable climate.
    ThreeOrMore,
    /// Any other set: two states without the snowball, or "other" states.
    Other,
    /// No stable climate was found.
    None,
}

/// Every regime, in legend order.
pub(super) const REGIMES: [Regime; 10] = [
    Regime::IceFree,
    Regime::PolarCaps,
    Regime::Belt,
    Regime::Snowball,
    Regime::IceFreeSnowball,
    Regime::CapsSnowball,
    Regime::BeltSnowball,
    Regime::ThreeOrMore,
    Regime::Other,
    Regime::None,
];

/// The look of a regime.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) struct RegimeStyle {
    /// Legend name.
    pub(super) name: &'static str,
    /// Fill colour.
    pub(super) fill: RGBColor,
    /// Hatch pattern (its ink follows from the fill, [`ink_on`]).
    pub(super) hatch: Hatch,
}

impl Regime {
    /// The regime of a mask of stable states (bits of
    /// [`crate::analysis::sweep::state_bit`]).
    pub(super) fn of_mask(mask: u32) -> Regime {
        let has = |s: State| mask & state_bit(s) != 0;
        let warm = [State::IceFree, State::PolarCaps, State::EquatorialBelt];
        let n_warm = warm.iter().filter(|s| has(**s)).count();
        let other = has(State::Other);
        let snow = has(State::Snowball);
        match (mask.count_ones(), other, snow, n_warm) {
            (0, ..) => Regime::None,
            (n, ..) if n >= 3 => Regime::ThreeOrMore,
            (_, true, ..) => Regime::Other,
            (1, _, true, _) => Regime::Snowball,
            (1, ..) if has(State::IceFree) => Regime::IceFree,
            (1, ..) if has(State::PolarCaps) => Regime::PolarCaps,
            (1, ..) => Regime::Belt,
            (2, _, true, _) if has(State::IceFree) => Regime::IceFreeSnowball,
            (2, _, true, _) if has(State::PolarCaps) => Regime::CapsSnowball,
            (2, _, true, _) => Regime::BeltSnowball,
            _ => Regime::Other,
        }
    }

    /// Fill and hatch of the regime: Tol's medium-contrast hues (yellow
    /// ice-free, blue polar caps, red belt), dark when the state is the
    /// only stable one, light and hatched "/" when the snowball is stable
    /// too; white for the snowball alone; black crossed for three or more
    /// states; neutral greys for the rest. Fills differ in luminance.
    pub(super) fn style(self) -> RegimeStyle {
        let s = |name, fill, hatch| RegimeStyle { name, fill, hatch };
        match self {
            Regime::IceFree => s("ice-free", DARK_YELLOW, Hatch::None),
            Regime::PolarCaps => s("polar caps", DARK_BLUE, Hatch::None),
            Regime::Belt => s("equatorial belt", DARK_RED, Hatch::None),
            Regime::Snowball => s("snowball", WHITE, Hatch::None),
            Regime::IceFreeSnowball => s("ice-free + snowball", LIGHT_YELLOW, Hatch::Forward),
            Regime::CapsSnowball => s("polar caps + snowball", LIGHT_BLUE, Hatch::Forward),
            Regime::BeltSnowball => s("equatorial belt + snowball", LIGHT_RED, Hatch::Forward),
            Regime::ThreeOrMore => s("three or more states", BLACK, Hatch::Cross),
            Regime::Other => s("other combination", GREY, Hatch::Back),
            Regime::None => s("no stable climate", PALE_GREY, Hatch::None),
        }
    }
}

/// Legend text of a regime given the masks of it present in a map: a
/// group regime (three or more, other) present with a single mask names
/// that mask's states ("ice-free + polar caps + snowball").
pub(super) fn regime_legend(r: Regime, masks: &[u32]) -> String {
    let of: Vec<u32> = masks
        .iter()
        .copied()
        .filter(|m| Regime::of_mask(*m) == r)
        .collect();
    match (r, of.as_slice()) {
        (Regime::ThreeOrMore | Regime::Other, [m]) => {
            let names: Vec<String> = crate::analysis::sweep::STATES
                .iter()
                .filter(|s| m & state_bit(**s) != 0)
                .map(|s| state_name(s.label()))
                .collect();
            names.join(" + ")
        }
        _ => r.style().name.to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::sweep::STATES;

    #[test]
    fn regime_fills_differ_in_greyscale() {
        // Any two regime fills differ in relative luminance by at least
        // 0.05 (about 4 L* units at the dark end), so they stay apart when
        // printed in grey even before hatching; bound by common practice,
        // no source.
        for (i, a) in REGIMES.iter().enumerate() {
            for b in &REGIMES[i + 1..] {
                let (ya, yb) = (
                    relative_luminance(a.style().fill),
                    relative_luminance(b.style().fill),
                );
                assert!(
                    (ya - yb).abs() >= 0.05,
                    "{:?} ({ya:.3}) and {:?} ({yb:.3}) too close in greyscale",
                    a,
                    b
                );
            }
        }
    }

    #[test]
    fn every_mask_has_one_regime_whatever_else_is_present() {
        // The bit layout is that of the map files (ice-free 1, polar caps 2,
        // belt 4, snowball 8, other 16), documented in sweep.rs.
        assert_eq!(Regime::of_mask(0), Regime::None);
        assert_eq!(Regime::of_mask(8), Regime::Snowball);
        assert_eq!(Regime::of_mask(1 | 8), Regime::IceFreeSnowball);
        assert_eq!(Regime::of_mask(2 | 8), Regime::CapsSnowball);
        assert_eq!(Regime::of_mask(4 | 8), Regime::BeltSnowball);
        assert_eq!(Regime::of_mask(1 | 2 | 8), Regime::ThreeOrMore);
        assert_eq!(Regime::of_mask(1 | 2), Regime::Other);
        assert_eq!(Regime::of_mask(16), Regime::Other);
        assert_eq!(Regime::of_mask(2), Regime::PolarCaps);
        assert_eq!(Regime::of_mask(4), Regime::Belt);
        // Every regime is reachable, and distinct regimes look distinct.
        let all: std::collections::BTreeSet<Regime> = (0..32).map(Regime::of_mask).collect();
        assert_eq!(all.len(), REGIMES.len());
        for (i, a) in REGIMES.iter().enumerate() {
            for b in &REGIMES[i + 1..] {
                assert_ne!(a.style(), b.style());
            }
        }
        let masks: Vec<u32> = STATES.iter().map(|s| state_bit(*s)).collect();
        assert_eq!(masks, vec![1, 2, 4, 8, 16]);
    }

    #[test]
    fn group_regimes_name_their_single_mask() {
        assert_eq!(
            regime_legend(Regime::ThreeOrMore, &[8, 1 | 2 | 8]),
            "ice-free + polar caps + snowball"
        );
        assert_eq!(
            regime_legend(Regime::ThreeOrMore, &[1 | 2 | 8, 2 | 4 | 8]),
            "three or more states"
        );
        assert_eq!(regime_legend(Regime::Snowball, &[8]), "snowball");
    }

    #[test]
    fn states_have_distinct_markers_and_names() {
        let labels = [
            "ice-free",
            "polar-caps",
            "equatorial-belt",
            "snowball",
            "other",
        ];
        for (i, a) in labels.iter().enumerate() {
            for b in &labels[i + 1..] {
                assert_ne!(state_style(a).shape, state_style(b).shape);
                assert_ne!(state_style(a).colour, state_style(b).colour);
            }
        }
        assert_eq!(state_stability("polar-caps", true), "polar caps, stable");
        assert_eq!(state_stability("snowball", false), "snowball, unstable");
        assert_eq!(state_name("hot-house"), "hot house");
    }

    #[test]
    fn readme_documents_every_regime_style() {
        let readme =
            std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md")).unwrap();
        for r in REGIMES {
            let s = r.style();
            let RGBColor(red, g, b) = s.fill;
            let row = format!(
                "| {} | `#{red:02X}{g:02X}{b:02X}` | {} |",
                s.name,
                s.hatch.markdown()
            );
            assert!(readme.contains(&row), "README lacks the row {row}");
        }
    }

    #[test]
    fn ink_contrasts_with_fill() {
        assert_eq!(ink_on(BLACK), WHITE);
        assert_eq!(ink_on(WHITE), BLACK);
        assert_eq!(ink_on(DARK_BLUE), WHITE);
        assert_eq!(ink_on(LIGHT_YELLOW), BLACK);
    }
}
