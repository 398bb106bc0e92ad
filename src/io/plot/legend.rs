//! Legends: entries, samples and their layout.

use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::FontStyle;

use super::render::{FONT, PRes, Pe, font};
use super::style::{Glyph, draw_arrow, draw_glyph, hatch};

const ROW_H: i32 = 22;

pub(super) enum Sample {
    Line {
        colour: RGBColor,
        dashed: bool,
        glyph: Option<Glyph>,
    },
    Glyph(Glyph),
    Swatch {
        fill: RGBColor,
        hatched: bool,
    },
    Arrow,
}

pub(super) struct LegendItem {
    pub(super) label: String,
    pub(super) sample: Sample,
}

/// Legend entries for line styles: "stable" (solid) and, when any curve
/// has unstable parts, "unstable" (dashed).
pub(super) fn push_stability_legend(items: &mut Vec<LegendItem>, any_unstable: bool) {
    for (label, dashed) in [("stable", false), ("unstable", true)] {
        if dashed && !any_unstable {
            continue;
        }
        items.push(item(
            label,
            Sample::Line {
                colour: BLACK,
                dashed,
                glyph: None,
            },
        ));
    }
}

pub(super) fn item(label: impl Into<String>, sample: Sample) -> LegendItem {
    LegendItem {
        label: label.into(),
        sample,
    }
}

/// Draw a legend in its own column area (local pixel coordinates).
pub(super) fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    heading: &str,
    items: &[LegendItem],
    top: i32,
) -> PRes {
    let (w, h) = area.dim_in_pixel();
    let (w, h) = (w as i32, h as i32);
    let st = font(15.0);
    let x0 = 8;
    let mut y = top;
    area.draw(&Text::new(
        heading.to_string(),
        (x0, y),
        TextStyle::from((FONT, 16.0).into_font().style(FontStyle::Bold)),
    ))
    .pe()?;
    y += ROW_H + 4;
    let max_rows = ((h - y - 10) / ROW_H).max(1) as usize;
    let shown = if items.len() > max_rows {
        max_rows - 1
    } else {
        items.len()
    };
    for it in &items[..shown] {
        let cy = y + ROW_H / 2;
        let (sx0, sx1) = (x0, x0 + 40);
        match &it.sample {
            Sample::Line {
                colour,
                dashed,
                glyph,
            } => {
                let st = colour.stroke_width(2);
                if *dashed {
                    area.draw(&DashedPathElement::new(
                        vec![(sx0, cy), (sx1, cy)],
                        8,
                        5,
                        st,
                    ))
                    .pe()?;
                } else {
                    area.draw(&PathElement::new(vec![(sx0, cy), (sx1, cy)], st))
                        .pe()?;
                }
                if let Some(g) = glyph {
                    draw_glyph(area, *g, ((sx0 + sx1) / 2, cy))?;
                }
            }
            Sample::Glyph(g) => draw_glyph(area, *g, ((sx0 + sx1) / 2, cy))?,
            Sample::Swatch { fill, hatched } => {
                let (a, b) = ((sx0 + 4, cy - 8), (sx1 - 4, cy + 8));
                area.draw(&Rectangle::new([a, b], fill.filled())).pe()?;
                if *hatched {
                    hatch(area, a, b, BLACK)?;
                }
                area.draw(&Rectangle::new([a, b], BLACK.stroke_width(1)))
                    .pe()?;
            }
            Sample::Arrow => draw_arrow(area, (sx0 + 20, cy - 9), (sx0 + 20, cy + 9))?,
        }
        area.draw(&Text::new(it.label.clone(), (sx1 + 10, cy - 8), st.clone()))
            .pe()?;
        y += ROW_H;
        if y > h || sx1 > w {
            break;
        }
    }
    if shown < items.len() {
        area.draw(&Text::new(
            format!("… {} more", items.len() - shown),
            (x0, y + 4),
            st,
        ))
        .pe()?;
    }
    Ok(())
}
