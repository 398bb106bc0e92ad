//! Regime maps: which stable climates exist over two parameters, with
//! fold boundaries drawn and labelled over the map.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::axis::{Axis, wants_log};
use super::chart::{Chart, Stroke, build_chart, draw_frame, draw_halo_line, split_for_legend};
use super::check::{cell_edges, check_len, check_polyline, edge_range, min_max};
use super::legend::{LegendItem, Sample, draw_legend, item};
use super::placement::{Labelled, PxBox, place_labels};
use super::render::{PRes, Paint, Pe, font, render, text_size, titled};
use super::style::{REGIMES, Regime, hatch, ink_on, regime_legend, state_name};
use super::{BoundaryLine, BoundaryMethod, Figure, Formats, RegimeMap};
use crate::analysis::sweep::STATES;
use crate::io::export::ExportError;

/// Smallest drawn size of a cell with three or more stable states, pixels,
/// so that a thin sliver of that regime stays visible.
const MIN_PX: i32 = 6;

/// A pixel rectangle: low and high corners.
type Px = ((i32, i32), (i32, i32));

struct RegimePaint<'a> {
    title: &'a str,
    map: &'a RegimeMap,
    x: Axis,
    y: Axis,
    /// Cell edges in axis coordinates.
    xe: Vec<f64>,
    ye: Vec<f64>,
    /// Distinct masks present, ascending.
    masks: Vec<u32>,
}

/// Axis and cell edges (in axis coordinates) of a grid of a parameter:
/// log scale when [`wants_log`] says so, edges then halfway in log space.
fn grid_axis(what: &str, key: &str, v: &[f64]) -> Result<(Axis, Vec<f64>), ExportError> {
    cell_edges(what, v)?;
    let (lo, hi) = min_max(v.iter().copied()).unwrap_or((0.0, 1.0));
    let log = wants_log(key, lo, hi);
    let coords: Vec<f64> = if log {
        v.iter().map(|x| x.log10()).collect()
    } else {
        v.to_vec()
    };
    let edges = cell_edges(what, &coords)?;
    let (a, b) = edge_range(&edges);
    let (a, b) = if log {
        (10f64.powf(a), 10f64.powf(b))
    } else {
        (a, b)
    };
    let axis = Axis::scaled(crate::io::schema::axis_label(key), a, b, 0.0, log);
    Ok((axis, edges))
}

/// A categorical map of climate regimes over two scenario parameters.
///
/// Cell `(i, j)` (around `(across[i], vary[j])`) shows the regime of the
/// mask `regime[j * across.len() + i]`: each regime keeps the same fill and
/// hatch in every map whatever else is present (see the README table).
/// Cells of three or more stable states are drawn at least 5 pixels wide
/// and high with a white outline, so that a thin sliver stays visible.
/// Boundaries are black on a white halo, solid when joined from slices and
/// dotted when continued as fold curves, and labelled beside the curve
/// ("polar caps → snowball") where a label fits without overlapping
/// another; a transition left without a label is named in the legend.
/// Axes are labelled from the schema; log scales as for traces.
///
/// Errors: too few or non-monotone grid points, a wrong number of cells, a
/// mask with bits of no state, or any non-finite coordinate.
pub fn regime_figure(
    formats: Formats,
    title: &str,
    map: &RegimeMap,
) -> Result<Figure, ExportError> {
    let (x, xe) = grid_axis("regime map across values", &map.across_key, &map.across)?;
    let (y, ye) = grid_axis("regime map traced values", &map.vary_key, &map.vary)?;
    check_len(
        "regime map",
        map.regime.len(),
        map.across.len() * map.vary.len(),
    )?;
    let all_bits = STATES
        .iter()
        .fold(0u32, |m, s| m | crate::analysis::sweep::state_bit(*s));
    if let Some(m) = map.regime.iter().find(|m| **m & !all_bits != 0) {
        return Err(ExportError::Shape {
            what: format!("regime mask {m} has bits of no climate state"),
        });
    }
    for b in &map.boundaries {
        check_polyline(&format!("boundary '{}'", b.transition), &b.points)?;
    }
    let mut masks = map.regime.clone();
    masks.sort_unstable();
    masks.dedup();
    render(
        formats,
        &RegimePaint {
            title,
            map,
            x,
            y,
            xe,
            ye,
            masks,
        },
    )
}

/// "polar-caps -> snowball" as "polar caps → snowball".
fn transition_text(t: &str) -> String {
    match t.split_once(" -> ") {
        Some((a, b)) => format!("{} → {}", state_name(a), state_name(b)),
        None => t.to_string(),
    }
}

fn stroke_of(m: BoundaryMethod) -> Stroke {
    match m {
        BoundaryMethod::Slices => Stroke::Solid,
        BoundaryMethod::FoldContinuation => Stroke::Dotted,
    }
}

impl RegimePaint<'_> {
    fn lines(&self) -> impl Iterator<Item = &BoundaryLine> {
        self.map.boundaries.iter().filter(|b| !b.points.is_empty())
    }

    fn legend(&self, unlabelled: &[String]) -> Vec<LegendItem> {
        let mut items: Vec<LegendItem> = REGIMES
            .iter()
            .filter(|r| self.masks.iter().any(|m| Regime::of_mask(*m) == **r))
            .map(|r| {
                let s = r.style();
                item(
                    regime_legend(*r, &self.masks),
                    Sample::Swatch {
                        fill: s.fill,
                        hatch: s.hatch,
                    },
                )
            })
            .collect();
        for (m, text) in [
            (BoundaryMethod::Slices, "fold line, slices joined"),
            (BoundaryMethod::FoldContinuation, "fold line, continued"),
        ] {
            if self.lines().any(|b| b.method == m) {
                items.push(item(text, Sample::Halo(stroke_of(m))));
            }
        }
        for t in unlabelled {
            items.push(item(format!("line: {t}"), Sample::Halo(Stroke::Solid)));
        }
        items
    }

    /// Screen rectangle of cells i0..i1 of row j (low corner, high corner).
    fn cell_px<DB: DrawingBackend>(
        &self,
        chart: &Chart<'_, DB>,
        (i0, i1, j): (usize, usize, usize),
    ) -> ((i32, i32), (i32, i32)) {
        let a = chart.backend_coord(&(self.xe[i0], self.ye[j]));
        let b = chart.backend_coord(&(self.xe[i1], self.ye[j + 1]));
        ((a.0.min(b.0), a.1.min(b.1)), (a.0.max(b.0), a.1.max(b.1)))
    }

    /// Fill and hatch the cells; returns the (grown) rectangles of cells
    /// with three or more states.
    fn draw_cells<DB: DrawingBackend>(&self, chart: &Chart<'_, DB>) -> PRes<Vec<Px>> {
        let screen = chart.plotting_area().strip_coord_spec().use_screen_coord();
        let nx = self.xe.len() - 1;
        let mut hatched = Vec::new();
        let mut slivers = Vec::new();
        for j in 0..self.ye.len() - 1 {
            let row = &self.map.regime[j * nx..(j + 1) * nx];
            let mut i0 = 0;
            while i0 < nx {
                let r = Regime::of_mask(row[i0]);
                let mut i1 = i0 + 1;
                while i1 < nx && Regime::of_mask(row[i1]) == r {
                    i1 += 1;
                }
                let (lo, hi) = self.cell_px(chart, (i0, i1, j));
                let s = r.style();
                screen
                    .draw(&Rectangle::new([lo, hi], s.fill.filled()))
                    .pe()?;
                hatched.push((lo, hi, s));
                if r == Regime::ThreeOrMore {
                    slivers.push(grow(lo, hi, MIN_PX));
                }
                i0 = i1;
            }
        }
        // Hatch after all fills so that no later fill covers a stripe.
        for (lo, hi, s) in hatched {
            hatch(&screen, lo, hi, s.hatch, ink_on(s.fill))?;
        }
        Ok(slivers)
    }

    /// Three-state cells once more, over the boundaries, at least MIN_PX
    /// in size, on a white outline: a sliver between two boundaries (where
    /// the third state exists between two folds) stays visible.
    fn draw_slivers<DB: DrawingBackend>(&self, chart: &Chart<'_, DB>, slivers: &[Px]) -> PRes {
        let screen = chart.plotting_area().strip_coord_spec().use_screen_coord();
        let s = Regime::ThreeOrMore.style();
        for (a, b) in slivers {
            screen
                .draw(&Rectangle::new(
                    [(a.0 - 1, a.1 - 1), (b.0 + 1, b.1 + 1)],
                    WHITE.filled(),
                ))
                .pe()?;
        }
        for (lo, hi) in slivers {
            screen
                .draw(&Rectangle::new([*lo, *hi], s.fill.filled()))
                .pe()?;
        }
        for (lo, hi) in slivers {
            hatch(&screen, *lo, *hi, s.hatch, ink_on(s.fill))?;
        }
        Ok(())
    }

    /// Boundaries: joined slices first, continued fold curves on top.
    fn draw_boundaries<DB: DrawingBackend>(&self, chart: &mut Chart<'_, DB>) -> PRes {
        for m in [BoundaryMethod::Slices, BoundaryMethod::FoldContinuation] {
            for b in self.lines().filter(|b| b.method == m) {
                let pts: Vec<(f64, f64)> = b
                    .points
                    .iter()
                    .map(|(a, v)| (self.x.c(*a), self.y.c(*v)))
                    .collect();
                draw_halo_line(chart, &pts, stroke_of(m))?;
            }
        }
        Ok(())
    }

    /// Label the boundaries; returns the transitions that got no label.
    fn draw_labels<DB: DrawingBackend>(&self, chart: &Chart<'_, DB>) -> PRes<Vec<String>> {
        let screen = chart.plotting_area().strip_coord_spec().use_screen_coord();
        let st = font(14.0);
        let (xr, yr) = screen.get_pixel_range();
        let area = PxBox {
            x: xr.start,
            y: yr.start,
            w: xr.end - xr.start,
            h: yr.end - yr.start,
        };
        let curves: Vec<Labelled> = self
            .lines()
            .map(|b| {
                let text = transition_text(&b.transition);
                Labelled {
                    size: text_size(&screen, &text, &st),
                    text,
                    pts: b
                        .points
                        .iter()
                        .map(|(a, v)| chart.backend_coord(&(self.x.c(*a), self.y.c(*v))))
                        .collect(),
                }
            })
            .collect();
        let at = place_labels(area, &curves);
        let mut missing: Vec<String> = Vec::new();
        for (c, p) in curves.iter().zip(&at) {
            if let Some((x, y)) = p {
                let (w, h) = c.size;
                screen
                    .draw(&Rectangle::new(
                        [(x - 3, y - 3), (x + w + 3, y + h + 3)],
                        WHITE.mix(0.88).filled(),
                    ))
                    .pe()?;
                screen
                    .draw(&Text::new(c.text.clone(), (*x, *y), st.clone()))
                    .pe()?;
            }
        }
        for (c, p) in curves.iter().zip(&at) {
            let labelled = curves
                .iter()
                .zip(&at)
                .any(|(o, q)| o.text == c.text && q.is_some());
            if p.is_none() && !labelled && !missing.contains(&c.text) {
                missing.push(c.text.clone());
            }
        }
        Ok(missing)
    }
}

/// A pixel rectangle grown to at least `min` pixels in each direction,
/// about its centre.
fn grow(lo: (i32, i32), hi: (i32, i32), min: i32) -> ((i32, i32), (i32, i32)) {
    let fix = |a: i32, b: i32| {
        if b - a >= min {
            (a, b)
        } else {
            let c = (a + b) / 2;
            (c - min / 2, c - min / 2 + min)
        }
    };
    let (x0, x1) = fix(lo.0, hi.0);
    let (y0, y1) = fix(lo.1, hi.1);
    ((x0, y0), (x1, y1))
}

impl Paint for RegimePaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = titled(root, self.title)?;
        // The legend width must be known before the map is laid out; labels
        // that do not fit are only known after. Reserve room for the worst
        // case: every distinct transition listed.
        let mut all: Vec<String> = self
            .lines()
            .map(|b| transition_text(&b.transition))
            .collect();
        all.sort();
        all.dedup();
        let sizing = self.legend(&all);
        let (main, legend) = split_for_legend(&area, "Stable climates", &sizing);
        let mut chart = build_chart(&main, &self.x, &self.y, true)?;
        let slivers = self.draw_cells(&chart)?;
        self.draw_boundaries(&mut chart)?;
        self.draw_slivers(&chart, &slivers)?;
        let missing = self.draw_labels(&chart)?;
        draw_frame(&mut chart)?;
        draw_legend(&legend, "Stable climates", &self.legend(&missing), 6)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::plot::FIGURE_WIDTH;
    use crate::io::plot::colour::relative_luminance as relative;
    use crate::io::plot::colour::{DARK_BLUE, LIGHT_BLUE, LIGHT_YELLOW};
    use crate::io::plot::render::{check_fig, decode_png, svg_texts};

    /// A map over obliquity and flux whose left half holds mask `left`
    /// and right half mask `right`, with `band` in row `band_row` if given.
    fn map(left: u32, right: u32, band: Option<(usize, u32)>) -> RegimeMap {
        let across: Vec<f64> = (0..20).map(|i| 4.5 * i as f64).collect();
        let vary: Vec<f64> = (0..300).map(|j| 1100.0 + 1.5 * j as f64).collect();
        let mut regime = Vec::new();
        for j in 0..vary.len() {
            for i in 0..across.len() {
                regime.push(match band {
                    Some((row, m)) if row == j => m,
                    _ if i < 10 => left,
                    _ => right,
                });
            }
        }
        RegimeMap {
            across_key: "orbit.obliquity".into(),
            vary_key: "orbit.flux".into(),
            across,
            vary,
            regime,
            boundaries: vec![],
        }
    }

    fn pixel(rgb: &[u8], x: usize, y: usize) -> RGBColor {
        let k = 3 * (y * FIGURE_WIDTH as usize + x);
        RGBColor(rgb[k], rgb[k + 1], rgb[k + 2])
    }

    #[test]
    fn regime_ok_and_errors() {
        let mut m = map(2 | 8, 1 | 8, None);
        m.boundaries = vec![
            BoundaryLine {
                transition: "polar-caps -> snowball".into(),
                method: BoundaryMethod::Slices,
                points: vec![(0.0, 1150.0), (85.0, 1400.0)],
            },
            BoundaryLine {
                transition: "polar-caps -> snowball".into(),
                method: BoundaryMethod::FoldContinuation,
                points: vec![(0.0, 1151.0), (85.0, 1401.0)],
            },
            BoundaryLine::default(),
        ];
        let f = regime_figure(Formats::All, "Regimes", &m).unwrap();
        check_fig(&f);
        let texts = svg_texts(&f.svg);
        for text in [
            "Obliquity (deg)",
            "Stellar flux S0 (W m-2)",
            "polar caps + snowball",
            "ice-free + snowball",
            "polar caps → snowball",
            "fold line, slices joined",
            "fold line, continued",
        ] {
            assert!(texts.iter().any(|t| t == text), "{text} missing");
        }
        assert!(!texts.iter().any(|t| t.contains("orbit.")));
        let mut bad = m.clone();
        bad.regime[0] = 64;
        assert!(matches!(
            regime_figure(Formats::All, "r", &bad),
            Err(ExportError::Shape { .. })
        ));
        let mut bad = m.clone();
        bad.regime.pop();
        assert!(matches!(
            regime_figure(Formats::All, "r", &bad),
            Err(ExportError::Shape { .. })
        ));
        let mut bad = m.clone();
        bad.across = vec![1.0];
        assert!(regime_figure(Formats::All, "r", &bad).is_err());
        let mut bad = m.clone();
        bad.boundaries[0].points[0].1 = f64::NAN;
        assert!(matches!(
            regime_figure(Formats::All, "r", &bad),
            Err(ExportError::NonFinite { .. })
        ));
    }

    /// The most frequent colour in a pixel rectangle.
    fn dominant(rgb: &[u8], xs: std::ops::Range<usize>, ys: std::ops::Range<usize>) -> RGBColor {
        let mut counts: std::collections::HashMap<(u8, u8, u8), usize> = Default::default();
        for y in ys {
            for x in xs.clone() {
                let RGBColor(r, g, b) = pixel(rgb, x, y);
                *counts.entry((r, g, b)).or_default() += 1;
            }
        }
        let ((r, g, b), _) = counts.into_iter().max_by_key(|(c, n)| (*n, *c)).unwrap();
        RGBColor(r, g, b)
    }

    #[test]
    fn a_regime_keeps_its_colour_whatever_else_is_present() {
        // The same left half next to different right halves (so that a
        // different set of regimes is present each time): the left half
        // keeps the fill of its regime, and each right half has its own.
        for (right, fill) in [
            (8, WHITE),
            (1 | 8, LIGHT_YELLOW),
            (1 | 2 | 8, BLACK),
            (2, DARK_BLUE),
        ] {
            let rgb = decode_png(
                &regime_figure(Formats::All, "Map", &map(2 | 8, right, None))
                    .unwrap()
                    .png,
            );
            assert_eq!(
                dominant(&rgb, 120..300, 100..600),
                LIGHT_BLUE,
                "left of {right}"
            );
            assert_eq!(
                dominant(&rgb, 560..620, 100..600),
                fill,
                "right half {right}"
            );
        }
    }

    #[test]
    fn a_one_cell_three_state_sliver_is_visible() {
        // 300 rows over about 600 pixels: one row is about 2 pixels high.
        // Drawn at least MIN_PX high, the sliver shows as a dark band
        // across the map (rows of mostly dark pixels; diagonal hatch lines
        // never make one); without it there is none.
        let dark_rows = |m: &RegimeMap| {
            let rgb = decode_png(&regime_figure(Formats::All, "Map", m).unwrap().png);
            (100..600)
                .filter(|&y| {
                    (150..170)
                        .filter(|&x| relative(pixel(&rgb, x, y)) < 0.02)
                        .count()
                        >= 12
                })
                .count()
        };
        let with = dark_rows(&map(2 | 8, 2 | 8, Some((150, 1 | 2 | 8))));
        let without = dark_rows(&map(2 | 8, 2 | 8, None));
        assert_eq!(without, 0);
        assert!(with >= MIN_PX as usize - 1, "{with} dark rows");
    }

    #[test]
    fn log_axis_for_a_co2_map() {
        let mut m = map(2 | 8, 8, None);
        m.vary_key = "radiation.co2_ppm".into();
        m.vary = (0..300)
            .map(|j| 100.0 * 20f64.powf(j as f64 / 299.0))
            .collect();
        let texts = svg_texts(&regime_figure(Formats::All, "CO2", &m).unwrap().svg);
        for t in ["CO2 (ppm)", "100", "200", "500", "1000", "2000"] {
            assert!(texts.iter().any(|x| x == t), "{t} missing");
        }
    }

    #[test]
    fn small_helpers() {
        assert_eq!(
            transition_text("polar-caps -> snowball"),
            "polar caps → snowball"
        );
        assert_eq!(
            transition_text("unstable-branch fold"),
            "unstable-branch fold"
        );
        assert_eq!(grow((10, 10), (11, 30), 5), ((8, 10), (13, 30)));
        assert_eq!(grow((10, 10), (20, 30), 5), ((10, 10), (20, 30)));
    }
}
