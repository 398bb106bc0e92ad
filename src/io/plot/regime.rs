//! regime

use plotters::coord::Shift;
use plotters::prelude::*;

use super::chart::*;
use super::check::*;
use super::field::edge_range;
use super::legend::*;
use super::render::*;
use super::style::*;
use super::*;
use crate::io::export::ExportError;

struct RegimePaint<'a> {
    title: &'a str,
    x_label: &'a str,
    y_label: &'a str,
    xe: Vec<f64>,
    ye: Vec<f64>,
    regime: &'a [u32],
    names: &'a [String],
    bistable: &'a [bool],
    boundaries: &'a [(String, Vec<(f64, f64)>)],
}

/// A categorical map of climate regimes over a two-parameter grid.
///
/// Cell `(i, j)` (around `(xs[i], ys[j])`) shows regime
/// `regime[j * xs.len() + i]`, an index into `regime_names`; regimes get
/// fills of distinct lightness (first name lightest). Cells flagged in
/// `bistable` are hatched. Boundary polylines are drawn black on a white
/// halo and labelled at their middle point; empty ones are ignored.
///
/// Errors: no regime names, too few or non-monotone grid points, wrong
/// lengths, a regime index without a name, or any non-finite coordinate.
#[allow(clippy::too_many_arguments)]
pub fn regime_figure(
    title: &str,
    x_label: &str,
    y_label: &str,
    xs: &[f64],
    ys: &[f64],
    regime: &[u32],
    regime_names: &[String],
    bistable: &[bool],
    boundaries: &[(String, Vec<(f64, f64)>)],
) -> Result<Figure, ExportError> {
    check_nonempty("regime name list", regime_names)?;
    let xe = cell_edges("regime map x coordinate", xs)?;
    let ye = cell_edges("regime map y coordinate", ys)?;
    check_len("regime map", regime.len(), xs.len() * ys.len())?;
    check_len("bistability map", bistable.len(), xs.len() * ys.len())?;
    if let Some(&r) = regime.iter().find(|&&r| r as usize >= regime_names.len()) {
        return Err(ExportError::Shape {
            what: format!(
                "regime index {r} has no name ({} regime names given)",
                regime_names.len()
            ),
        });
    }
    for (name, line) in boundaries {
        check_polyline(&format!("boundary '{name}'"), line)?;
    }
    render(&RegimePaint {
        title,
        x_label,
        y_label,
        xe,
        ye,
        regime,
        names: regime_names,
        bistable,
        boundaries,
    })
}

impl Paint for RegimePaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = root.titled(self.title, title_font()).pe()?;
        let (main, legend) = split_legend(&area);
        let mut chart = build_chart(
            &main,
            edge_range(&self.xe),
            edge_range(&self.ye),
            self.x_label,
            self.y_label,
        )?;
        let screen = chart.plotting_area().strip_coord_spec().use_screen_coord();
        let n = self.names.len();
        let colours: Vec<RGBColor> = (0..n).map(|k| category_colour(k, n)).collect();
        let nx = self.xe.len() - 1;
        let mut hatched = Vec::new();
        for j in 0..self.ye.len() - 1 {
            let mut i0 = 0;
            while i0 < nx {
                let key = (self.regime[j * nx + i0], self.bistable[j * nx + i0]);
                let mut i1 = i0 + 1;
                while i1 < nx && (self.regime[j * nx + i1], self.bistable[j * nx + i1]) == key {
                    i1 += 1;
                }
                let fill = colours[key.0 as usize];
                let a = chart.backend_coord(&(self.xe[i0], self.ye[j]));
                let b = chart.backend_coord(&(self.xe[i1], self.ye[j + 1]));
                let (lo, hi) = ((a.0.min(b.0), a.1.min(b.1)), (a.0.max(b.0), a.1.max(b.1)));
                screen.draw(&Rectangle::new([lo, hi], fill.filled())).pe()?;
                if key.1 {
                    hatched.push((lo, hi, fill));
                }
                i0 = i1;
            }
        }
        // Hatch after all fills so that no later fill covers part of a stripe.
        // Dark fills get white stripes, light fills black ones.
        for (lo, hi, fill) in hatched {
            let ink = if relative_luminance(fill) < 0.18 {
                WHITE
            } else {
                BLACK
            };
            hatch(&screen, lo, hi, ink)?;
        }
        let st = font(14.0);
        for (name, line) in self.boundaries.iter().filter(|(_, l)| !l.is_empty()) {
            draw_halo_line(&mut chart, line)?;
            let p = chart.backend_coord(&line[line.len() / 2]);
            let (w, h) = screen.estimate_text_size(name, &st).pe()?;
            let (xr, yr) = screen.get_pixel_range();
            let (w, h) = (w as i32, h as i32);
            let x = (p.0 + 6).min(xr.end - w - 6).max(xr.start + 4);
            let y = (p.1 - h - 6).max(yr.start + 4).min(yr.end - h - 4);
            screen
                .draw(&Rectangle::new(
                    [(x - 3, y - 2), (x + w + 3, y + h + 2)],
                    WHITE.mix(0.85).filled(),
                ))
                .pe()?;
            screen
                .draw(&Text::new(name.clone(), (x, y), st.clone()))
                .pe()?;
        }
        let (xr, yr) = (edge_range(&self.xe), edge_range(&self.ye));
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(xr.start, yr.start), (xr.end, yr.end)],
                BLACK.stroke_width(1),
            )))
            .pe()?;
        let mut items: Vec<LegendItem> = self
            .names
            .iter()
            .zip(&colours)
            .map(|(name, &fill)| {
                item(
                    name.clone(),
                    Sample::Swatch {
                        fill,
                        hatched: false,
                    },
                )
            })
            .collect();
        if self.bistable.iter().any(|&b| b) {
            items.push(item(
                "bistable",
                Sample::Swatch {
                    fill: WHITE,
                    hatched: true,
                },
            ));
        }
        draw_legend(&legend, "Regimes", &items, 14)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::plot::render::check_fig;

    #[test]
    fn regime_ok_and_errors() {
        let xs: Vec<f64> = (0..40).map(|i| 1200.0 + 10.0 * i as f64).collect();
        let ys: Vec<f64> = (0..30).map(|j| 0.1 + 0.05 * j as f64).collect();
        let mut reg = Vec::new();
        let mut bi = Vec::new();
        for (j, _) in ys.iter().enumerate() {
            for (i, _) in xs.iter().enumerate() {
                let s = i as i32 - j as i32;
                reg.push(if s < 5 {
                    0
                } else if s < 15 {
                    1
                } else if s < 25 {
                    2
                } else {
                    3
                });
                bi.push((8..12).contains(&s));
            }
        }
        let names: Vec<String> = ["snowball", "large ice cap", "small ice cap", "ice-free"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        let bnd = vec![
            (
                "snowball onset".to_string(),
                vec![(1250.0, 0.1), (1500.0, 1.55)],
            ),
            ("empty".to_string(), vec![]),
        ];
        check_fig(
            &regime_figure(
                "Regimes",
                "Solar constant (W m⁻²)",
                "Heat transport D (W m⁻² K⁻¹)",
                &xs,
                &ys,
                &reg,
                &names,
                &bi,
                &bnd,
            )
            .unwrap(),
        );
        let mut bad = reg.clone();
        bad[0] = 9;
        assert!(matches!(
            regime_figure("r", "x", "y", &xs, &ys, &bad, &names, &bi, &[]),
            Err(ExportError::Shape { .. })
        ));
        assert!(matches!(
            regime_figure("r", "x", "y", &xs, &ys, &reg, &[], &bi, &[]),
            Err(ExportError::Empty { .. })
        ));
        assert!(regime_figure("r", "x", "y", &xs, &ys, &reg, &names, &bi[1..], &[]).is_err());
        let badb = vec![("b".to_string(), vec![(f64::NAN, 0.0)])];
        assert!(matches!(
            regime_figure("r", "x", "y", &xs, &ys, &reg, &names, &bi, &badb),
            Err(ExportError::NonFinite { .. })
        ));
    }
}
