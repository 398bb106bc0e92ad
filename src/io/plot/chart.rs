//! Charts: axes, lines in data coordinates and the legend column.

use std::ops::Range;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::render::{Chart, PRes, Pe, font, tick_fmt};

const LEGEND_WIDTH: u32 = 230;

pub(super) fn build_chart<'a, DB: DrawingBackend>(
    area: &'a DrawingArea<DB, Shift>,
    x: Range<f64>,
    y: Range<f64>,
    x_label: &str,
    y_label: &str,
) -> PRes<Chart<'a, DB>> {
    let mut chart = ChartBuilder::on(area)
        .margin(12)
        .x_label_area_size(48)
        .y_label_area_size(78)
        .build_cartesian_2d(x, y)
        .pe()?;
    chart
        .configure_mesh()
        .x_desc(x_label)
        .y_desc(y_label)
        .axis_desc_style(font(17.0))
        .label_style(font(14.0))
        .x_label_formatter(&tick_fmt)
        .y_label_formatter(&tick_fmt)
        .light_line_style(RGBColor(244, 244, 244).stroke_width(1))
        .bold_line_style(RGBColor(200, 200, 200).stroke_width(1))
        .axis_style(BLACK.stroke_width(1))
        .draw()
        .pe()?;
    Ok(chart)
}

/// Draw a polyline in data coordinates, solid or dashed.
pub(super) fn draw_line<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    pts: Vec<(f64, f64)>,
    colour: RGBColor,
    width: u32,
    dashed: bool,
) -> PRes {
    if pts.len() < 2 {
        return Ok(());
    }
    if dashed {
        chart
            .draw_series(DashedLineSeries::new(pts, 9, 6, colour.stroke_width(width)))
            .pe()?;
    } else {
        chart
            .draw_series(LineSeries::new(pts, colour.stroke_width(width)))
            .pe()?;
    }
    Ok(())
}

/// Black line with a white halo, readable over any fill.
pub(super) fn draw_halo_line<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    pts: &[(f64, f64)],
) -> PRes {
    if pts.len() == 1 {
        let screen = chart.plotting_area().strip_coord_spec().use_screen_coord();
        let p = chart.backend_coord(&pts[0]);
        screen.draw(&Circle::new(p, 4, BLACK.filled())).pe()?;
        return Ok(());
    }
    draw_line(chart, pts.to_vec(), WHITE, 5, false)?;
    draw_line(chart, pts.to_vec(), BLACK, 2, false)
}

/// Indices at which to place markers along a curve of `n` points (about `k` of them).
pub(super) fn marker_indices(n: usize, k: usize, offset: usize) -> impl Iterator<Item = usize> {
    let step = (n / k.max(1)).max(1);
    (offset % step..n).step_by(step)
}

pub(super) fn linear_interp(xs: &[f64], ys: &[f64], x: f64) -> Option<f64> {
    // xs sorted ascending
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

pub(super) fn split_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
) -> (DrawingArea<DB, Shift>, DrawingArea<DB, Shift>) {
    let (w, _) = area.dim_in_pixel();
    area.split_horizontally(w.saturating_sub(LEGEND_WIDTH))
}
