//! profile

use std::ops::Range;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::chart::*;
use super::check::*;
use super::legend::*;
use super::render::*;
use super::style::*;
use super::*;
use crate::io::export::ExportError;

struct ProfilePaint<'a> {
    title: &'a str,
    curves: Vec<SortedCurve<'a>>,
    lat: Range<f64>,
    temp: Range<f64>,
    alb: Range<f64>,
}

struct SortedCurve<'a> {
    src: &'a ProfileCurve,
    lat: Vec<f64>,
    temp: Vec<f64>,
    alb: Vec<f64>,
}

/// Temperature (top) and albedo (bottom) against latitude for several states.
///
/// One line per curve (solid if stable, dashed if not, with its own colour
/// and marker); ice edges appear as vertical ticks on the temperature
/// profile. The latitude axis spans 0…90° when all data are in the northern
/// hemisphere, −90…90° otherwise.
///
/// Errors: no curves, a curve with no points or unequal vector lengths,
/// latitudes outside ±90°, or any non-finite value.
pub fn profile_figure(title: &str, curves: &[ProfileCurve]) -> Result<Figure, ExportError> {
    check_nonempty("profile curve list", curves)?;
    let mut sorted = Vec::with_capacity(curves.len());
    for (k, c) in curves.iter().enumerate() {
        let name = |q: &str| format!("{q} of profile curve {k} ('{}')", c.label);
        check_nonempty(&name("latitude"), &c.latitude_deg)?;
        check_len(
            &name("temperature"),
            c.temperature_c.len(),
            c.latitude_deg.len(),
        )?;
        check_len(&name("albedo"), c.albedo.len(), c.latitude_deg.len())?;
        check_latitudes(&name("latitude"), &c.latitude_deg)?;
        check_finite(&name("temperature"), &c.temperature_c)?;
        check_finite(&name("albedo"), &c.albedo)?;
        check_latitudes(&name("ice edge latitude"), &c.ice_edges_deg)?;
        let mut idx: Vec<usize> = (0..c.latitude_deg.len()).collect();
        idx.sort_by(|&a, &b| c.latitude_deg[a].total_cmp(&c.latitude_deg[b]));
        sorted.push(SortedCurve {
            src: c,
            lat: idx.iter().map(|&i| c.latitude_deg[i]).collect(),
            temp: idx.iter().map(|&i| c.temperature_c[i]).collect(),
            alb: idx.iter().map(|&i| c.albedo[i]).collect(),
        });
    }
    let all_lat = curves
        .iter()
        .flat_map(|c| c.latitude_deg.iter().chain(&c.ice_edges_deg).copied());
    let (lat_lo, _) = min_max(all_lat).unwrap_or((0.0, 90.0));
    let lat = if lat_lo >= 0.0 {
        0.0..90.0
    } else {
        -90.0..90.0
    };
    let (t_lo, t_hi) =
        min_max(curves.iter().flat_map(|c| c.temperature_c.iter().copied())).unwrap_or((0.0, 1.0));
    let (a_lo, a_hi) =
        min_max(curves.iter().flat_map(|c| c.albedo.iter().copied())).unwrap_or((0.0, 1.0));
    let alb = padded(a_lo.min(0.0), a_hi.max(1.0), 0.03);
    render(&ProfilePaint {
        title,
        curves: sorted,
        lat,
        temp: padded(t_lo, t_hi, 0.06),
        alb,
    })
}

impl Paint for ProfilePaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = root.titled(self.title, title_font()).pe()?;
        let (plots, legend) = split_legend(&area);
        let (_, h) = plots.dim_in_pixel();
        let (top, bottom) = plots.split_vertically(h / 2);
        let mut tchart = build_chart(
            &top,
            self.lat.clone(),
            self.temp.clone(),
            "Latitude (°)",
            "Temperature (°C)",
        )?;
        let mut achart = build_chart(
            &bottom,
            self.lat.clone(),
            self.alb.clone(),
            "Latitude (°)",
            "Albedo (fraction)",
        )?;
        let tscreen = tchart.plotting_area().strip_coord_spec().use_screen_coord();
        let ascreen = achart.plotting_area().strip_coord_spec().use_screen_coord();
        let mut items = Vec::new();
        let mut any_unstable = false;
        for (k, c) in self.curves.iter().enumerate() {
            let colour = palette(k);
            let mark = mark_for(k);
            let dashed = !c.src.stable;
            any_unstable |= dashed;
            let tp: Vec<(f64, f64)> = c.lat.iter().copied().zip(c.temp.iter().copied()).collect();
            let ap: Vec<(f64, f64)> = c.lat.iter().copied().zip(c.alb.iter().copied()).collect();
            draw_line(&mut tchart, tp.clone(), colour, 2, dashed)?;
            draw_line(&mut achart, ap.clone(), colour, 2, dashed)?;
            for i in marker_indices(tp.len(), 7, k) {
                draw_glyph(
                    &tscreen,
                    Glyph::Mark(mark, colour),
                    tchart.backend_coord(&tp[i]),
                )?;
                draw_glyph(
                    &ascreen,
                    Glyph::Mark(mark, colour),
                    achart.backend_coord(&ap[i]),
                )?;
            }
            for &edge in &c.src.ice_edges_deg {
                if let Some(t) = linear_interp(&c.lat, &c.temp, edge) {
                    draw_glyph(
                        &tscreen,
                        Glyph::Tick(colour),
                        tchart.backend_coord(&(edge, t)),
                    )?;
                }
            }
            let label = if dashed {
                format!("{} (unstable)", c.src.label)
            } else {
                c.src.label.clone()
            };
            items.push(item(
                label,
                Sample::Line {
                    colour,
                    dashed,
                    glyph: Some(Glyph::Mark(mark, colour)),
                },
            ));
        }
        if self.curves.iter().any(|c| !c.src.ice_edges_deg.is_empty()) {
            items.push(item("ice edge", Sample::Glyph(Glyph::Tick(BLACK))));
        }
        push_stability_legend(&mut items, any_unstable);
        draw_legend(&legend, "States", &items, 14)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::plot::render::check_fig;

    fn curve(label: &str, stable: bool, shift: f64) -> ProfileCurve {
        let lat: Vec<f64> = (0..18).map(|i| 2.5 + 5.0 * i as f64).collect();
        ProfileCurve {
            label: label.into(),
            temperature_c: lat
                .iter()
                .map(|l: &f64| 30.0 - 45.0 * (l.to_radians().sin()).powi(2) + shift)
                .collect(),
            albedo: lat
                .iter()
                .map(|&l| if l > 60.0 { 0.62 } else { 0.3 })
                .collect(),
            latitude_deg: lat,
            ice_edges_deg: vec![60.0],
            stable,
        }
    }

    #[test]
    fn profile_ok_and_errors() {
        let f = profile_figure(
            "Equilibria at S = 1361 W m⁻²",
            &[curve("warm", true, 0.0), curve("cold", false, -20.0)],
        )
        .unwrap();
        check_fig(&f);
        assert!(
            std::str::from_utf8(&f.svg)
                .unwrap()
                .contains("Latitude (°)")
        );
        assert!(matches!(
            profile_figure("x", &[]),
            Err(ExportError::Empty { .. })
        ));
        let mut bad = curve("bad", true, 0.0);
        bad.temperature_c[3] = f64::NAN;
        match profile_figure("x", &[bad]) {
            Err(ExportError::NonFinite { what }) => assert!(what.contains("temperature")),
            other => panic!("{other:?}"),
        }
        let mut bad = curve("bad", true, 0.0);
        bad.albedo.pop();
        assert!(matches!(
            profile_figure("x", &[bad]),
            Err(ExportError::Shape { .. })
        ));
        let mut bad = curve("bad", true, 0.0);
        bad.latitude_deg.clear();
        bad.temperature_c.clear();
        bad.albedo.clear();
        assert!(matches!(
            profile_figure("x", &[bad]),
            Err(ExportError::Empty { .. })
        ));
        // southern hemisphere data use -90..90
        let mut both = curve("both", true, 0.0);
        both.latitude_deg = both.latitude_deg.iter().map(|l| l * 2.0 - 90.0).collect();
        check_fig(&profile_figure("global", &[both]).unwrap());
    }
}
