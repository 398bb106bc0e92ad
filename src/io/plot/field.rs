//! Filled two-dimensional fields (insolation, the seasonal cycle) with a
//! colour bar and overlay lines.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::axis::{Axis, wants_log};
use super::chart::{Stroke, Ticked, build_chart, draw_frame, draw_halo_line, tick_label};
use super::check::{cell_edges, check_finite, check_len, check_polyline, edge_range, min_max};
use super::colour::seq;
use super::legend::{Sample, draw_legend, item};
use super::render::{PRes, Paint, Pe, font, render, titled};
use super::{Figure, Formats};
use crate::io::export::ExportError;

/// Width of the colour-bar column, pixels.
const BAR_COLUMN: u32 = 150;

struct FieldPaint<'a> {
    title: &'a str,
    x: Axis,
    y: Axis,
    colour: Axis,
    overlay_label: &'a str,
    xe: Vec<f64>,
    ye: Vec<f64>,
    values: &'a [f64],
    overlay: &'a [Vec<(f64, f64)>],
}

/// A filled two-dimensional field with a colour bar and optional overlay lines.
///
/// `values[j * xs.len() + i]` is the value at `(xs[i], ys[j])`; each value
/// fills the cell around its grid point. `xs` and `ys` need at least two
/// strictly monotone points. Overlay polylines (e.g. the ice edge through the
/// year) are drawn black on a white halo and named `overlay_label` in a key
/// under the colour bar (no key when it is empty); empty polylines are
/// ignored. Titles should follow the unit style of [`super::labels`]. A
/// positive y grid spanning more than a factor of 20 is drawn on a log axis,
/// its cells split halfway in log10 y.
///
/// Errors: too few grid points, non-monotone axes, wrong `values` length, or
/// any non-finite value (named).
#[allow(clippy::too_many_arguments)]
pub fn field_figure(
    formats: Formats,
    title: &str,
    x_label: &str,
    y_label: &str,
    colour_label: &str,
    xs: &[f64],
    ys: &[f64],
    values: &[f64],
    overlay: &[Vec<(f64, f64)>],
    overlay_label: &str,
) -> Result<Figure, ExportError> {
    let xe = cell_edges("field x coordinate", xs)?;
    // y on a log axis where its values span more than the factor of
    // [`wants_log`] (e.g. outgassing rates over decades): the cells then
    // split halfway in log10 y, and `ye` holds axis coordinates (log10)
    let (y_lo, y_hi) = min_max(ys.iter().copied()).unwrap_or((0.0, 1.0));
    let y_log = wants_log("", y_lo, y_hi);
    let ye = if y_log {
        let logs: Vec<f64> = ys.iter().map(|y| y.log10()).collect();
        cell_edges("field y coordinate", &logs)?
    } else {
        cell_edges("field y coordinate", ys)?
    };
    check_len("field values", values.len(), xs.len() * ys.len())?;
    check_finite(&format!("field values ({colour_label})"), values)?;
    for (k, line) in overlay.iter().enumerate() {
        check_polyline(&format!("overlay line {k}"), line)?;
    }
    let (vmin, vmax) = min_max(values.iter().copied()).unwrap_or((0.0, 1.0));
    let ((x0, x1), (y0, y1)) = (edge_range(&xe), edge_range(&ye));
    render(
        formats,
        &FieldPaint {
            title,
            x: Axis::linear(x0, x1, x_label),
            y: if y_log {
                Axis::scaled(y_label.into(), 10f64.powf(y0), 10f64.powf(y1), 0.0, true)
            } else {
                Axis::linear(y0, y1, y_label)
            },
            colour: Axis::linear(vmin, vmax, colour_label),
            overlay_label,
            xe,
            ye,
            values,
            overlay,
        },
    )
}

impl FieldPaint<'_> {
    fn colour_bar<DB: DrawingBackend>(&self, bar: &DrawingArea<DB, Shift>) -> PRes {
        let c = &self.colour;
        let ticks = c.ticks();
        let yr = Ticked::of(c);
        let mut cb = ChartBuilder::on(bar)
            .margin(10)
            .margin_left(6)
            .margin_right(4)
            .x_label_area_size(46)
            .right_y_label_area_size(86)
            .build_cartesian_2d(0.0..1.0, yr)
            .pe()?;
        let fy = |v: &f64| tick_label(&ticks, *v);
        cb.configure_mesh()
            .disable_x_mesh()
            .disable_y_mesh()
            .x_labels(0)
            .y_desc(c.label.as_str())
            .axis_desc_style(font(17.0))
            .label_style(font(14.0))
            .y_label_formatter(&fy)
            .axis_style(BLACK.stroke_width(1))
            .draw()
            .pe()?;
        let n = 128;
        let (lo, hi) = (c.lo, c.hi);
        cb.draw_series((0..n).map(|k| {
            let a = lo + (hi - lo) * k as f64 / n as f64;
            let b = lo + (hi - lo) * (k + 1) as f64 / n as f64;
            Rectangle::new(
                [(0.0, a), (1.0, b)],
                seq((k as f64 + 0.5) / n as f64).filled(),
            )
        }))
        .pe()?;
        cb.draw_series(std::iter::once(Rectangle::new(
            [(0.0, lo), (1.0, hi)],
            BLACK.stroke_width(1),
        )))
        .pe()?;
        Ok(())
    }
}

impl Paint for FieldPaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = titled(root, self.title)?;
        let (w, h) = area.dim_in_pixel();
        let (main, column) = area.split_horizontally(w.saturating_sub(BAR_COLUMN));
        let with_key = !self.overlay_label.is_empty() && self.overlay.iter().any(|l| !l.is_empty());
        let (bar, key) = column.split_vertically(if with_key { h.saturating_sub(70) } else { h });
        let mut chart = build_chart(&main, &self.x, &self.y, true)?;
        let nx = self.xe.len() - 1;
        let (vmin, vmax) = (self.colour.lo, self.colour.hi);
        let level = |v: f64| (((v - vmin) / (vmax - vmin)) * 255.0).round() as i32;
        let mut rects = Vec::new();
        for j in 0..self.ye.len() - 1 {
            let row = &self.values[j * nx..(j + 1) * nx];
            let mut i0 = 0;
            while i0 < nx {
                let lv = level(row[i0]);
                let mut i1 = i0 + 1;
                while i1 < nx && level(row[i1]) == lv {
                    i1 += 1;
                }
                rects.push(Rectangle::new(
                    [(self.xe[i0], self.ye[j]), (self.xe[i1], self.ye[j + 1])],
                    seq(lv as f64 / 255.0).filled(),
                ));
                i0 = i1;
            }
        }
        chart.draw_series(rects).pe()?;
        for line in self.overlay.iter().filter(|l| !l.is_empty()) {
            let line: Vec<(f64, f64)> = line.iter().map(|&(x, y)| (x, self.y.c(y))).collect();
            draw_halo_line(&mut chart, &line, Stroke::Solid)?;
        }
        draw_frame(&mut chart)?;
        self.colour_bar(&bar)?;
        if with_key {
            let items = [item(self.overlay_label, Sample::Halo(Stroke::Solid))];
            draw_legend(&key, "Lines", &items, 4)?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::plot::render::check_fig;

    #[test]
    fn field_ok_and_errors() {
        let xs: Vec<f64> = (0..36).map(|i| -87.5 + 5.0 * i as f64).collect();
        let ys: Vec<f64> = (0..73).map(|d| d as f64 * 5.0).collect();
        let mut v = Vec::new();
        for y in &ys {
            for x in &xs {
                v.push(
                    400.0
                        * (1.0
                            + (x.to_radians() + (y / 365.0 * std::f64::consts::TAU).sin() * 0.4)
                                .cos())
                        / 2.0,
                );
            }
        }
        let edge: Vec<(f64, f64)> = ys
            .iter()
            .map(|&d| (60.0 + 10.0 * (d / 58.0).sin(), d))
            .collect();
        let f = field_figure(
            Formats::All,
            "Daily-mean insolation",
            super::super::labels::LATITUDE,
            super::super::labels::DAY_OF_YEAR,
            super::super::labels::INSOLATION,
            &xs,
            &ys,
            &v,
            &[edge.clone(), vec![]],
            "ice edge",
        )
        .unwrap();
        check_fig(&f);
        let mut bad = v.clone();
        bad[10] = f64::INFINITY;
        assert!(matches!(
            field_figure(Formats::All, "t", "x", "y", "c", &xs, &ys, &bad, &[], ""),
            Err(ExportError::NonFinite { .. })
        ));
        assert!(matches!(
            field_figure(Formats::All, "t", "x", "y", "c", &xs, &ys, &v[1..], &[], ""),
            Err(ExportError::Shape { .. })
        ));
        assert!(field_figure(Formats::All, "t", "x", "y", "c", &[], &[], &[], &[], "").is_err());
        assert!(
            field_figure(
                Formats::All,
                "t",
                "x",
                "y",
                "c",
                &[1.0, 1.0],
                &[0.0, 1.0],
                &[0.0; 4],
                &[],
                ""
            )
            .is_err()
        );
        let bad_line = vec![(0.0, f64::NAN)];
        assert!(matches!(
            field_figure(
                Formats::All,
                "t",
                "x",
                "y",
                "c",
                &xs,
                &ys,
                &v,
                &[bad_line],
                ""
            ),
            Err(ExportError::NonFinite { .. })
        ));
        // constant field is fine
        check_fig(
            &field_figure(
                Formats::All,
                "t",
                "x",
                "y",
                "c",
                &[0.0, 1.0],
                &[0.0, 1.0],
                &[3.0; 4],
                &[],
                "",
            )
            .unwrap(),
        );
    }

    /// A y grid spanning decades gets a log axis with decade ticks; a
    /// narrow one stays linear (the rule of `wants_log`: common practice,
    /// no source).
    #[test]
    fn wide_positive_y_gets_a_log_axis() {
        use crate::io::plot::render::svg_texts;
        let xs = [0.0, 1.0, 2.0];
        let wide = [0.1, 1.0, 10.0, 100.0];
        let v = vec![0.5; xs.len() * wide.len()];
        let f = field_figure(Formats::Svg, "t", "x", "y", "c", &xs, &wide, &v, &[], "").unwrap();
        assert!(f.png.is_empty());
        let texts = svg_texts(&f.svg);
        for tick in ["0.1", "1", "10", "100"] {
            assert!(texts.iter().any(|t| t == tick), "{tick} in {texts:?}");
        }
        let narrow = [1.0, 2.0, 3.0, 4.0];
        let texts = svg_texts(
            &field_figure(Formats::Svg, "t", "x", "y", "c", &xs, &narrow, &v, &[], "")
                .unwrap()
                .svg,
        );
        assert!(!texts.iter().any(|t| t == "100"), "{texts:?}");
    }
}
