//! Charts on [`Axis`] coordinates: frame, grid and ticks, lines in data
//! coordinates (solid, dashed, dotted, with or without a halo) and markers
//! spaced along a curve on screen.

use std::ops::Range;

use plotters::coord::Shift;
use plotters::coord::ranged1d::{DefaultFormatting, KeyPointHint};
use plotters::prelude::*;

use super::axis::Axis;
use super::legend::{LegendItem, legend_width};
use super::render::{PRes, Pe, font};
use super::style::{Glyph, Mark, draw_glyph};

/// One axis in [`Axis`] coordinates with the ticks chosen by
/// [`Axis::ticks`] (grid lines at the major ticks, light ones at the minor).
#[derive(Clone, Debug)]
pub(super) struct Ticked {
    lo: f64,
    hi: f64,
    major: Vec<f64>,
    minor: Vec<f64>,
}

impl Ticked {
    /// The coordinate of an axis.
    pub(super) fn of(a: &Axis) -> Ticked {
        let r = a.range();
        Ticked {
            lo: r.start,
            hi: r.end,
            major: a.ticks().into_iter().map(|t| t.0).collect(),
            minor: a.minor(),
        }
    }
}

impl Ranged for Ticked {
    type FormatOption = DefaultFormatting;
    type ValueType = f64;

    fn map(&self, v: &f64, limit: (i32, i32)) -> i32 {
        let span = self.hi - self.lo;
        let f = if span != 0.0 {
            (v - self.lo) / span
        } else {
            0.5
        };
        let len = (limit.1 - limit.0) as f64;
        if !f.is_finite() {
            return limit.0;
        }
        limit.0 + (len * f.clamp(-10.0, 10.0)).round() as i32
    }

    fn key_points<H: KeyPointHint>(&self, hint: H) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            self.minor.clone()
        } else {
            self.major.clone()
        }
    }

    fn range(&self) -> Range<f64> {
        self.lo..self.hi
    }
}

/// Coordinates of every chart.
pub(super) type Coord = Cartesian2d<Ticked, Ticked>;
/// A chart on [`Coord`].
pub(super) type Chart<'a, DB> = ChartContext<'a, DB, Coord>;

/// Line pattern.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Stroke {
    /// Continuous.
    Solid,
    /// Long dashes (unstable states).
    Dashed,
    /// Short dashes (curves continued by another method).
    Dotted,
}

/// Pixel size of the tick-label areas.
const X_LABEL_AREA: u32 = 46;
const Y_LABEL_AREA: u32 = 74;

/// The text of the tick nearest to `c` (axis coordinate).
pub(super) fn tick_label(ticks: &[(f64, String)], c: f64) -> String {
    ticks
        .iter()
        .min_by(|a, b| (a.0 - c).abs().total_cmp(&(b.0 - c).abs()))
        .map(|t| t.1.clone())
        .unwrap_or_default()
}

/// A framed chart with grid lines at the ticks of `x` and `y`, tick text
/// and axis titles. `x_title: false` leaves out the x-axis title (for the
/// upper of two stacked panels that share it).
pub(super) fn build_chart<'a, DB: DrawingBackend>(
    area: &'a DrawingArea<DB, Shift>,
    x: &Axis,
    y: &Axis,
    x_title: bool,
) -> PRes<Chart<'a, DB>> {
    let (xt, yt) = (x.ticks(), y.ticks());
    let (xr, yr) = (Ticked::of(x), Ticked::of(y));
    let mut chart = ChartBuilder::on(area)
        .margin(10)
        .margin_right(18)
        .x_label_area_size(if x_title {
            X_LABEL_AREA
        } else {
            X_LABEL_AREA - 20
        })
        .y_label_area_size(Y_LABEL_AREA)
        .build_cartesian_2d(xr, yr)
        .pe()?;
    let fx = |c: &f64| tick_label(&xt, *c);
    let fy = |c: &f64| tick_label(&yt, *c);
    let mut mesh = chart.configure_mesh();
    mesh.y_desc(y.label.as_str())
        .axis_desc_style(font(17.0))
        .label_style(font(14.0))
        .x_label_formatter(&fx)
        .y_label_formatter(&fy)
        .light_line_style(RGBColor(238, 238, 238).stroke_width(1))
        .bold_line_style(RGBColor(210, 210, 210).stroke_width(1))
        .axis_style(BLACK.stroke_width(1));
    if x_title {
        mesh.x_desc(x.label.as_str());
    }
    mesh.draw().pe()?;
    Ok(chart)
}

/// Draw the chart's frame (after fills that cover the plotting area).
pub(super) fn draw_frame<DB: DrawingBackend>(chart: &mut Chart<'_, DB>) -> PRes {
    let (xr, yr) = (chart.x_range(), chart.y_range());
    chart
        .draw_series(std::iter::once(Rectangle::new(
            [(xr.start, yr.start), (xr.end, yr.end)],
            BLACK.stroke_width(1),
        )))
        .pe()?;
    Ok(())
}

/// Draw a polyline in axis coordinates.
pub(super) fn draw_line<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    pts: &[(f64, f64)],
    colour: RGBColor,
    width: u32,
    stroke: Stroke,
) -> PRes {
    if pts.len() < 2 {
        return Ok(());
    }
    let st = colour.stroke_width(width);
    let pts = pts.iter().copied();
    match stroke {
        Stroke::Solid => chart.draw_series(LineSeries::new(pts, st)).map(|_| ()),
        Stroke::Dashed => chart
            .draw_series(DashedLineSeries::new(pts, 9, 6, st))
            .map(|_| ()),
        Stroke::Dotted => chart
            .draw_series(DashedLineSeries::new(pts, 4, 5, st))
            .map(|_| ()),
    }
    .pe()
}

/// A black line on a white halo, readable over any fill. Solid lines get a
/// continuous halo; dotted ones a halo around each dash only, so that a
/// dotted line drawn over a solid one still shows its pattern.
pub(super) fn draw_halo_line<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    pts: &[(f64, f64)],
    stroke: Stroke,
) -> PRes {
    if pts.len() == 1 {
        let screen = chart.plotting_area().strip_coord_spec().use_screen_coord();
        let p = chart.backend_coord(&pts[0]);
        screen.draw(&Circle::new(p, 4, BLACK.filled())).pe()?;
        return Ok(());
    }
    match stroke {
        Stroke::Solid => {
            draw_line(chart, pts, WHITE, 6, Stroke::Solid)?;
            draw_line(chart, pts, BLACK, 2, Stroke::Solid)
        }
        other => {
            draw_line(chart, pts, WHITE, 8, other)?;
            draw_line(chart, pts, BLACK, 4, other)
        }
    }
}

/// Draw a line with markers every `spacing` pixels along it on screen.
pub(super) fn draw_marked<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    pts: &[(f64, f64)],
    colour: RGBColor,
    stroke: Stroke,
    mark: Mark,
    spacing: f64,
) -> PRes {
    draw_line(chart, pts, colour, 2, stroke)?;
    let screen_pts: Vec<(i32, i32)> = pts.iter().map(|p| chart.backend_coord(p)).collect();
    let screen = chart.plotting_area().strip_coord_spec().use_screen_coord();
    for (p, _) in along(&screen_pts, spacing) {
        draw_glyph(&screen, Glyph::Mark(mark, colour), p)?;
    }
    Ok(())
}

/// Split an area into the plots and a legend column on the right, as wide
/// as the legend entries need (at most 40 % of the width).
pub(super) fn split_for_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    heading: &str,
    items: &[LegendItem],
) -> (DrawingArea<DB, Shift>, DrawingArea<DB, Shift>) {
    let (w, _) = area.dim_in_pixel();
    let lw = legend_width(area, heading, items, 150, w * 2 / 5);
    area.split_horizontally(w.saturating_sub(lw))
}

/// Screen positions (with the index of the nearer data point) every
/// `spacing` pixels along a polyline, starting `spacing / 2` in; a curve
/// shorter than that gets one position at its middle.
pub(super) fn along(screen: &[(i32, i32)], spacing: f64) -> Vec<((i32, i32), usize)> {
    if screen.is_empty() {
        return Vec::new();
    }
    let seg = |i: usize| {
        let (a, b) = (screen[i - 1], screen[i]);
        ((b.0 - a.0) as f64).hypot((b.1 - a.1) as f64)
    };
    let total: f64 = (1..screen.len()).map(seg).sum();
    let mut out = Vec::new();
    let mut next = if total < spacing {
        total / 2.0
    } else {
        spacing / 2.0
    };
    let mut run = 0.0;
    for i in 1..screen.len() {
        let l = seg(i);
        while l > 0.0 && next <= run + l {
            let f = (next - run) / l;
            let (a, b) = (screen[i - 1], screen[i]);
            let p = (
                a.0 + ((b.0 - a.0) as f64 * f).round() as i32,
                a.1 + ((b.1 - a.1) as f64 * f).round() as i32,
            );
            out.push((p, if f < 0.5 { i - 1 } else { i }));
            next += spacing;
        }
        run += l;
    }
    if out.is_empty() {
        out.push((screen[0], 0));
    }
    out
}

/// Linear interpolation in ascending `xs`, clamped at the ends.
pub(super) fn linear_interp(xs: &[f64], ys: &[f64], x: f64) -> Option<f64> {
    if xs.is_empty() {
        return None;
    }
    if x <= xs[0] {
        return Some(ys[0]);
    }
    for i in 1..xs.len() {
        if x <= xs[i] {
            let span = xs[i] - xs[i - 1];
            let f = if span > 0.0 {
                (x - xs[i - 1]) / span
            } else {
                0.0
            };
            return Some(ys[i - 1] + f * (ys[i] - ys[i - 1]));
        }
    }
    ys.last().copied()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn markers_are_spaced_along_the_curve() {
        // A 300 px straight line with 100 px spacing: at 50, 150, 250 px
        // (worked by hand).
        let pts = [(0, 0), (100, 0), (300, 0)];
        let at: Vec<(i32, i32)> = along(&pts, 100.0).into_iter().map(|p| p.0).collect();
        assert_eq!(at, vec![(50, 0), (150, 0), (250, 0)]);
        // Short curve: one marker at its middle.
        let at = along(&[(0, 0), (0, 40)], 100.0);
        assert_eq!(at, vec![((0, 20), 1)]);
        assert_eq!(along(&[(3, 4)], 100.0), vec![((3, 4), 0)]);
    }

    #[test]
    fn interpolation_clamps() {
        let (xs, ys) = ([0.0, 1.0, 3.0], [0.0, 10.0, 30.0]);
        assert_eq!(linear_interp(&xs, &ys, 2.0), Some(20.0));
        assert_eq!(linear_interp(&xs, &ys, -1.0), Some(0.0));
        assert_eq!(linear_interp(&xs, &ys, 9.0), Some(30.0));
        assert_eq!(linear_interp(&[], &[], 1.0), None);
    }
}
