//! field

use std::ops::Range;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::chart::*;
use super::check::*;
use super::render::*;
use super::style::*;
use super::*;
use crate::io::export::ExportError;

struct FieldPaint<'a> {
    title: &'a str,
    x_label: &'a str,
    y_label: &'a str,
    colour_label: &'a str,
    xe: Vec<f64>,
    ye: Vec<f64>,
    values: &'a [f64],
    vmin: f64,
    vmax: f64,
    overlay: &'a [Vec<(f64, f64)>],
}

/// A filled two-dimensional field with a colour bar and optional overlay lines.
///
/// `values[j * xs.len() + i]` is the value at `(xs[i], ys[j])`; each value
/// fills the cell around its grid point. `xs` and `ys` need at least two
/// strictly monotone points. Overlay polylines (e.g. the ice edge through the
/// year) are drawn black on a white halo; empty polylines are ignored.
///
/// Errors: too few grid points, non-monotone axes, wrong `values` length, or
/// any non-finite value (named).
#[allow(clippy::too_many_arguments)]
pub fn field_figure(
    title: &str,
    x_label: &str,
    y_label: &str,
    colour_label: &str,
    xs: &[f64],
    ys: &[f64],
    values: &[f64],
    overlay: &[Vec<(f64, f64)>],
) -> Result<Figure, ExportError> {
    let xe = cell_edges("field x coordinate", xs)?;
    let ye = cell_edges("field y coordinate", ys)?;
    check_len("field values", values.len(), xs.len() * ys.len())?;
    check_finite(&format!("field values ({colour_label})"), values)?;
    for (k, line) in overlay.iter().enumerate() {
        check_polyline(&format!("overlay line {k}"), line)?;
    }
    let (vmin, vmax) = min_max(values.iter().copied()).unwrap_or((0.0, 1.0));
    let (vmin, vmax) = if vmax > vmin {
        (vmin, vmax)
    } else {
        let r = padded(vmin, vmax, 0.0);
        (r.start, r.end)
    };
    render(&FieldPaint {
        title,
        x_label,
        y_label,
        colour_label,
        xe,
        ye,
        values,
        vmin,
        vmax,
        overlay,
    })
}

pub(super) fn edge_range(e: &[f64]) -> Range<f64> {
    let (a, b) = (e[0], e[e.len() - 1]);
    a.min(b)..a.max(b)
}

impl Paint for FieldPaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = root.titled(self.title, title_font()).pe()?;
        let (w, _) = area.dim_in_pixel();
        let (main, bar) = area.split_horizontally(w.saturating_sub(140));
        let mut chart = build_chart(
            &main,
            edge_range(&self.xe),
            edge_range(&self.ye),
            self.x_label,
            self.y_label,
        )?;
        let nx = self.xe.len() - 1;
        let span = self.vmax - self.vmin;
        let level = |v: f64| (((v - self.vmin) / span) * 255.0).round() as i32;
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
            draw_halo_line(&mut chart, line)?;
        }
        // Redraw the frame over the cells.
        let (xr, yr) = (edge_range(&self.xe), edge_range(&self.ye));
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(xr.start, yr.start), (xr.end, yr.end)],
                BLACK.stroke_width(1),
            )))
            .pe()?;

        // Colour bar.
        let mut cb = ChartBuilder::on(&bar)
            .margin(12)
            .margin_left(8)
            .margin_right(20)
            .x_label_area_size(48)
            .y_label_area_size(66)
            .build_cartesian_2d(0.0..1.0, self.vmin..self.vmax)
            .pe()?;
        cb.configure_mesh()
            .disable_x_mesh()
            .disable_y_mesh()
            .x_labels(0)
            .y_desc(self.colour_label)
            .axis_desc_style(font(17.0))
            .label_style(font(14.0))
            .y_label_formatter(&tick_fmt)
            .axis_style(BLACK.stroke_width(1))
            .draw()
            .pe()?;
        let n = 128;
        cb.draw_series((0..n).map(|k| {
            let a = self.vmin + span * k as f64 / n as f64;
            let b = self.vmin + span * (k + 1) as f64 / n as f64;
            Rectangle::new(
                [(0.0, a), (1.0, b)],
                seq((k as f64 + 0.5) / n as f64).filled(),
            )
        }))
        .pe()?;
        cb.draw_series(std::iter::once(Rectangle::new(
            [(0.0, self.vmin), (1.0, self.vmax)],
            BLACK.stroke_width(1),
        )))
        .pe()?;
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
            "Daily-mean insolation",
            "Latitude (°)",
            "Day of year",
            "Insolation (W m⁻²)",
            &xs,
            &ys,
            &v,
            &[edge.clone(), vec![]],
        )
        .unwrap();
        check_fig(&f);
        let mut bad = v.clone();
        bad[10] = f64::INFINITY;
        assert!(matches!(
            field_figure("t", "x", "y", "c", &xs, &ys, &bad, &[]),
            Err(ExportError::NonFinite { .. })
        ));
        assert!(matches!(
            field_figure("t", "x", "y", "c", &xs, &ys, &v[1..], &[]),
            Err(ExportError::Shape { .. })
        ));
        assert!(field_figure("t", "x", "y", "c", &[], &[], &[], &[]).is_err());
        assert!(
            field_figure("t", "x", "y", "c", &[1.0, 1.0], &[0.0, 1.0], &[0.0; 4], &[]).is_err()
        );
        let bad_line = vec![(0.0, f64::NAN)];
        assert!(matches!(
            field_figure("t", "x", "y", "c", &xs, &ys, &v, &[bad_line]),
            Err(ExportError::NonFinite { .. })
        ));
        // constant field is fine
        check_fig(
            &field_figure("t", "x", "y", "c", &[0.0, 1.0], &[0.0, 1.0], &[3.0; 4], &[]).unwrap(),
        );
    }
}
