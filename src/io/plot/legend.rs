//! Legends: entries with their samples, merged by name, laid out in a
//! column beside the plots whose width follows from the entries.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::chart::Stroke;
use super::render::{PRes, Pe, bold, font, text_size, wrap_text};
use super::style::{Glyph, Hatch, Mark, draw_arrow, draw_glyph, hatch, ink_on};

/// Width of the sample drawn before each entry, pixels.
const SAMPLE_W: i32 = 44;
/// Gap between sample and text.
const GAP: i32 = 10;
/// Padding around the column.
const PAD: i32 = 10;
/// Minimum row height.
const ROW_H: i32 = 24;
/// Entry text size.
const TEXT: f64 = 15.0;
/// Heading text size.
const HEADING: f64 = 16.0;

/// What an entry shows before its text.
#[derive(Clone, Debug)]
pub(super) enum Sample {
    /// A coloured line, optionally with a marker on it.
    Line {
        /// Colour.
        colour: RGBColor,
        /// Pattern.
        stroke: Stroke,
        /// Marker drawn at the middle.
        mark: Option<Mark>,
    },
    /// A black line on a white halo (map boundaries).
    Halo(Stroke),
    /// A glyph alone.
    Glyph(Glyph),
    /// A filled, possibly hatched box.
    Swatch {
        /// Fill.
        fill: RGBColor,
        /// Hatch (ink from the fill).
        hatch: Hatch,
    },
    /// The jump arrow.
    Arrow,
}

/// One legend entry.
#[derive(Clone, Debug)]
pub(super) struct LegendItem {
    /// Text.
    pub(super) label: String,
    /// Sample.
    pub(super) sample: Sample,
}

/// A legend entry.
pub(super) fn item(label: impl Into<String>, sample: Sample) -> LegendItem {
    LegendItem {
        label: label.into(),
        sample,
    }
}

/// The entries with repeated labels dropped (the first one of each name
/// is kept, in order).
pub(super) fn merged(items: Vec<LegendItem>) -> Vec<LegendItem> {
    let mut out: Vec<LegendItem> = Vec::new();
    for it in items {
        if !out.iter().any(|o| o.label == it.label) {
            out.push(it);
        }
    }
    out
}

/// Width a legend column needs for its entries, between `min_w` and
/// `max_w` pixels (entries wider than that are wrapped when drawn).
pub(super) fn legend_width<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    heading: &str,
    items: &[LegendItem],
    min_w: u32,
    max_w: u32,
) -> u32 {
    let st = font(TEXT);
    let text = items
        .iter()
        .map(|it| text_size(area, &it.label, &st).0)
        .max()
        .unwrap_or(0);
    let head = text_size(area, heading, &bold(HEADING)).0;
    let need = (PAD + SAMPLE_W + GAP + text + PAD).max(PAD + head + PAD);
    (need.max(0) as u32).clamp(min_w, max_w.max(min_w))
}

fn draw_sample<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    sample: &Sample,
    (x0, cy): (i32, i32),
) -> PRes {
    let x1 = x0 + SAMPLE_W;
    let mid = ((x0 + x1) / 2, cy);
    match sample {
        Sample::Line {
            colour,
            stroke,
            mark,
        } => {
            line_sample(area, (x0, x1, cy), *colour, 2, *stroke)?;
            if let Some(m) = mark {
                draw_glyph(area, Glyph::Mark(*m, *colour), mid)?;
            }
        }
        Sample::Halo(stroke) => {
            let (w, inner) = if *stroke == Stroke::Solid {
                (6, 2)
            } else {
                (8, 4)
            };
            area.draw(&Rectangle::new(
                [(x0 - 2, cy - 7), (x1 + 2, cy + 7)],
                RGBColor(200, 200, 200).filled(),
            ))
            .pe()?;
            line_sample(area, (x0, x1, cy), WHITE, w, *stroke)?;
            line_sample(area, (x0, x1, cy), BLACK, inner, *stroke)?;
        }
        Sample::Glyph(g) => draw_glyph(area, *g, mid)?,
        Sample::Swatch { fill, hatch: h } => {
            let (a, b) = ((x0 + 2, cy - 9), (x1 - 2, cy + 9));
            area.draw(&Rectangle::new([a, b], fill.filled())).pe()?;
            hatch(area, a, b, *h, ink_on(*fill))?;
            area.draw(&Rectangle::new([a, b], BLACK.stroke_width(1)))
                .pe()?;
        }
        Sample::Arrow => draw_arrow(area, (mid.0, cy - 10), (mid.0, cy + 10))?,
    }
    Ok(())
}

fn line_sample<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    (x0, x1, y): (i32, i32, i32),
    colour: RGBColor,
    width: u32,
    stroke: Stroke,
) -> PRes {
    let st = colour.stroke_width(width);
    let (on, off) = match stroke {
        Stroke::Solid => {
            return area
                .draw(&PathElement::new(vec![(x0, y), (x1, y)], st))
                .pe();
        }
        Stroke::Dashed => (9, 6),
        Stroke::Dotted => (4, 5),
    };
    let mut x = x0;
    while x < x1 {
        let e = (x + on).min(x1);
        area.draw(&PathElement::new(vec![(x, y), (e, y)], st))
            .pe()?;
        x = e + off;
    }
    Ok(())
}

/// Draw a legend with a heading in its own column area (local pixel
/// coordinates), wrapping entries to the column width. Entries that do
/// not fit below each other are summarised as "... N more".
pub(super) fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    heading: &str,
    items: &[LegendItem],
    top: i32,
) -> PRes {
    let (w, h) = area.dim_in_pixel();
    let (w, h) = (w as i32, h as i32);
    let st = font(TEXT);
    let line_h = text_size(area, "Ag", &st).1.max(12) + 3;
    let text_x = PAD + SAMPLE_W + GAP;
    let text_w = (w - text_x - PAD).max(40);
    let mut y = top;
    area.draw(&Text::new(heading.to_string(), (PAD, y), bold(HEADING)))
        .pe()?;
    y += ROW_H + 4;
    for (k, it) in items.iter().enumerate() {
        let lines = wrap_text(area, &it.label, &st, text_w);
        let row = (lines.len() as i32 * line_h + 6).max(ROW_H);
        let reserve = if k + 1 < items.len() { line_h + 4 } else { 0 };
        if y + row + reserve > h - PAD {
            area.draw(&Text::new(
                format!("... {} more", items.len() - k),
                (PAD, y + 4),
                st.clone(),
            ))
            .pe()?;
            break;
        }
        let cy = y + row / 2;
        draw_sample(area, &it.sample, (PAD, cy))?;
        let mut ty = cy - (lines.len() as i32 * line_h) / 2 + 1;
        for l in lines {
            area.draw(&Text::new(l, (text_x, ty), st.clone())).pe()?;
            ty += line_h;
        }
        y += row;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::plot::render::ensure_font;

    #[test]
    fn same_names_merge_keeping_the_first() {
        let s = |c| Sample::Swatch {
            fill: RGBColor(c, c, c),
            hatch: Hatch::None,
        };
        let m = merged(vec![
            item("polar caps, stable", s(1)),
            item("snowball, stable", s(2)),
            item("polar caps, stable", s(3)),
        ]);
        let names: Vec<&str> = m.iter().map(|i| i.label.as_str()).collect();
        assert_eq!(names, ["polar caps, stable", "snowball, stable"]);
        assert!(matches!(m[0].sample, Sample::Swatch { fill, .. } if fill == RGBColor(1, 1, 1)));
    }

    #[test]
    fn width_follows_the_longest_entry() {
        ensure_font().unwrap();
        let mut svg = String::new();
        let root = SVGBackend::with_string(&mut svg, (1000, 700)).into_drawing_area();
        let short = [item("fold", Sample::Arrow)];
        let long = [item(
            "ice-free + polar caps + snowball, a long entry",
            Sample::Arrow,
        )];
        let (ws, wl) = (
            legend_width(&root, "States", &short, 100, 400),
            legend_width(&root, "States", &long, 100, 400),
        );
        assert!(ws < wl, "{ws} {wl}");
        // the long entry's text fits in what it asked for
        let need = text_size(&root, &long[0].label, &font(TEXT)).0;
        assert!(wl as i32 >= need + SAMPLE_W + GAP + 2 * PAD || wl == 400);
        assert_eq!(legend_width(&root, "States", &long, 100, 150), 150);
    }
}
