//! Latitude profiles of equilibrium states: temperature and albedo.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::axis::Axis;
use super::chart::{Stroke, build_chart, draw_marked, linear_interp, split_for_legend};
use super::check::{check_finite, check_latitudes, check_len, check_nonempty, min_max};
use super::labels::{ALBEDO, LATITUDE, TEMPERATURE};
use super::legend::{LegendItem, Sample, draw_legend, item};
use super::render::{PRes, Paint, render, titled};
use super::style::{Glyph, Mark, SHAPES, Shape, draw_glyph, state_stability, state_style};
use super::{Figure, Formats, ProfileCurve};
use crate::io::export::ExportError;

/// Pixels between markers along a profile.
const MARK_SPACING: f64 = 110.0;

struct ProfilePaint<'a> {
    title: &'a str,
    curves: Vec<SortedCurve<'a>>,
    lat: Axis,
    temp: Axis,
    alb: Axis,
}

struct SortedCurve<'a> {
    src: &'a ProfileCurve,
    lat: Vec<f64>,
    temp: Vec<f64>,
    alb: Vec<f64>,
    colour: RGBColor,
    mark: Mark,
}

/// Marker shapes: the state's own shape, or, for a second curve of the
/// same state and stability, the next shape not yet used by such a pair.
fn curve_shapes(curves: &[ProfileCurve]) -> Vec<Shape> {
    let mut used: Vec<(String, bool, Shape)> = Vec::new();
    let mut out = Vec::with_capacity(curves.len());
    for c in curves {
        let own = state_style(&c.state).shape;
        let taken = |s: Shape| {
            used.iter()
                .any(|(st, stable, sh)| *st == c.state && *stable == c.stable && *sh == s)
        };
        let shape = if taken(own) {
            SHAPES.iter().copied().find(|s| !taken(*s)).unwrap_or(own)
        } else {
            own
        };
        used.push((c.state.clone(), c.stable, shape));
        out.push(shape);
    }
    out
}

/// Temperature (top) and albedo (bottom) against latitude for several states.
///
/// One line per curve, coloured by its state (solid with filled markers if
/// stable, dashed with open markers if not); the legend names each curve
/// "label: state, stable". Ice edges appear as vertical ticks on the
/// temperature profile. The latitude axis spans 0…90 deg when all data are
/// in the northern hemisphere, −90…90 deg otherwise.
///
/// Errors: no curves, a curve with no points or unequal vector lengths,
/// latitudes outside ±90 deg, or any non-finite value.
pub fn profile_figure(
    formats: Formats,
    title: &str,
    curves: &[ProfileCurve],
) -> Result<Figure, ExportError> {
    check_nonempty("profile curve list", curves)?;
    let shapes = curve_shapes(curves);
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
            colour: state_style(&c.state).colour,
            mark: Mark {
                shape: shapes[k],
                filled: c.stable,
            },
        });
    }
    let all_lat = curves
        .iter()
        .flat_map(|c| c.latitude_deg.iter().chain(&c.ice_edges_deg).copied());
    let (lat_lo, _) = min_max(all_lat).unwrap_or((0.0, 90.0));
    let lat = if lat_lo >= 0.0 {
        Axis::linear(0.0, 90.0, LATITUDE)
    } else {
        Axis::linear(-90.0, 90.0, LATITUDE)
    };
    let (t_lo, t_hi) =
        min_max(curves.iter().flat_map(|c| c.temperature_c.iter().copied())).unwrap_or((0.0, 1.0));
    let (a_lo, a_hi) =
        min_max(curves.iter().flat_map(|c| c.albedo.iter().copied())).unwrap_or((0.0, 1.0));
    render(
        formats,
        &ProfilePaint {
            title,
            curves: sorted,
            lat,
            temp: Axis::padded(t_lo, t_hi, 0.06, TEMPERATURE),
            alb: Axis::padded(a_lo.min(0.0), a_hi.max(1.0), 0.03, ALBEDO),
        },
    )
}

impl ProfilePaint<'_> {
    fn legend(&self) -> Vec<LegendItem> {
        let mut items: Vec<LegendItem> = self
            .curves
            .iter()
            .map(|c| {
                let name = state_stability(&c.src.state, c.src.stable);
                let label = if c.src.label.is_empty() {
                    name
                } else {
                    format!("{}: {name}", c.src.label)
                };
                item(
                    label,
                    Sample::Line {
                        colour: c.colour,
                        stroke: stroke_of(c.src.stable),
                        mark: Some(c.mark),
                    },
                )
            })
            .collect();
        if self.curves.iter().any(|c| !c.src.ice_edges_deg.is_empty()) {
            items.push(item("ice edge", Sample::Glyph(Glyph::Tick(BLACK))));
        }
        items
    }
}

fn stroke_of(stable: bool) -> Stroke {
    if stable {
        Stroke::Solid
    } else {
        Stroke::Dashed
    }
}

impl Paint for ProfilePaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = titled(root, self.title)?;
        let items = self.legend();
        let (plots, legend) = split_for_legend(&area, "States", &items);
        let (_, h) = plots.dim_in_pixel();
        let (top, bottom) = plots.split_vertically(h * 47 / 100);
        let mut tchart = build_chart(&top, &self.lat, &self.temp, false)?;
        let mut achart = build_chart(&bottom, &self.lat, &self.alb, true)?;
        for c in &self.curves {
            let stroke = stroke_of(c.src.stable);
            let tp: Vec<(f64, f64)> = c.lat.iter().copied().zip(c.temp.iter().copied()).collect();
            let ap: Vec<(f64, f64)> = c.lat.iter().copied().zip(c.alb.iter().copied()).collect();
            draw_marked(&mut tchart, &tp, c.colour, stroke, c.mark, MARK_SPACING)?;
            draw_marked(&mut achart, &ap, c.colour, stroke, c.mark, MARK_SPACING)?;
            let tscreen = tchart.plotting_area().strip_coord_spec().use_screen_coord();
            for &edge in &c.src.ice_edges_deg {
                if let Some(t) = linear_interp(&c.lat, &c.temp, edge) {
                    let p = tchart.backend_coord(&(edge, t));
                    draw_glyph(&tscreen, Glyph::Tick(c.colour), p)?;
                }
            }
        }
        draw_legend(&legend, "States", &items, 6)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::plot::render::{check_fig, svg_texts};

    fn curve(label: &str, state: &str, stable: bool, shift: f64) -> ProfileCurve {
        let lat: Vec<f64> = (0..18).map(|i| 2.5 + 5.0 * i as f64).collect();
        ProfileCurve {
            label: label.into(),
            state: state.into(),
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
            Formats::All,
            "Equilibria at S0 = 1361 W m-2",
            &[
                curve("1", "polar-caps", true, 0.0),
                curve("2", "snowball", false, -20.0),
            ],
        )
        .unwrap();
        check_fig(&f);
        let texts = svg_texts(&f.svg);
        for t in [
            "Latitude (deg)",
            "1: polar caps, stable",
            "2: snowball, unstable",
        ] {
            assert!(texts.iter().any(|x| x == t), "{t} missing");
        }
        assert!(matches!(
            profile_figure(Formats::All, "x", &[]),
            Err(ExportError::Empty { .. })
        ));
        let mut bad = curve("bad", "ice-free", true, 0.0);
        bad.temperature_c[3] = f64::NAN;
        match profile_figure(Formats::All, "x", &[bad]) {
            Err(ExportError::NonFinite { what }) => assert!(what.contains("temperature")),
            other => panic!("{other:?}"),
        }
        let mut bad = curve("bad", "ice-free", true, 0.0);
        bad.albedo.pop();
        assert!(matches!(
            profile_figure(Formats::All, "x", &[bad]),
            Err(ExportError::Shape { .. })
        ));
        let mut bad = curve("bad", "ice-free", true, 0.0);
        bad.latitude_deg.clear();
        bad.temperature_c.clear();
        bad.albedo.clear();
        assert!(matches!(
            profile_figure(Formats::All, "x", &[bad]),
            Err(ExportError::Empty { .. })
        ));
        // southern hemisphere data use -90..90
        let mut both = curve("both", "ice-free", true, 0.0);
        both.latitude_deg = both.latitude_deg.iter().map(|l| l * 2.0 - 90.0).collect();
        check_fig(&profile_figure(Formats::All, "global", &[both]).unwrap());
    }

    #[test]
    fn repeated_states_get_their_own_marker() {
        let c = [
            curve("1", "polar-caps", true, 0.0),
            curve("2", "polar-caps", true, -5.0),
            curve("3", "polar-caps", false, -9.0),
            curve("4", "snowball", true, -30.0),
        ];
        let s = curve_shapes(&c);
        assert_eq!(s[0], Shape::Square);
        assert_ne!(s[1], Shape::Square);
        // a different stability is already told apart by dashes and open markers
        assert_eq!(s[2], Shape::Square);
        assert_eq!(s[3], Shape::Up);
    }
}
