//! The thermostat figure: the fast branches against CO2 with the slow
//! nullcline W = V and the limit cycle drawn on them.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::axis::Axis;
use super::chart::{Chart, Stroke, build_chart, draw_halo_line, draw_marked, split_for_legend};
use super::check::{check_finite, check_len, check_nonempty, min_max};
use super::hysteresis::{Run, run_style, state_rank, state_runs};
use super::labels::GLOBAL_MEAN;
use super::legend::{LegendItem, Sample, draw_legend, item, merged};
use super::render::{PRes, Paint, render, titled};
use super::style::{Glyph, Mark, Shape, draw_arrow, draw_glyph, state_stability};
use super::{BranchCurve, Figure, Formats};
use crate::io::export::ExportError;

/// Axis title of the weathering panel.
pub const WEATHERING: &str = "Weathering W (bar Gyr-1)";

/// A slow equilibrium: CO2 ppm, global mean C, W bar Gyr-1, stable.
pub type EquilibriumMark = (f64, f64, f64, bool);

/// What [`thermostat_figure`] draws.
#[derive(Debug, Clone, Default)]
pub struct ThermostatPlot {
    /// The traced fast branches (`param` is CO2 in ppm).
    pub branches: Vec<BranchCurve>,
    /// W along each branch, bar Gyr-1, one per point of `branches`.
    pub weathering: Vec<Vec<f64>>,
    /// The outgassing rates whose nullclines W = V are drawn, bar Gyr-1.
    pub outgassing: Vec<f64>,
    /// Slow equilibria: CO2 ppm, global mean C, W, stable (fast and slow).
    pub equilibria: Vec<EquilibriumMark>,
    /// The limit cycle in order: CO2 ppm, global mean C, W (empty: none).
    pub cycle: Vec<(f64, f64, f64)>,
}

struct ThermoPaint<'a> {
    title: &'a str,
    plot: &'a ThermostatPlot,
    runs: Vec<Run>,
    p: Axis,
    gm: Axis,
    w: Axis,
}

/// Global-mean temperature (top) and weathering W (bottom) along the fast
/// branches against CO2 (log axis), coloured and named by state and
/// stability as in the hysteresis figure; in the bottom panel (log axis
/// from a twentieth of the smallest V, where W = 0 of the snowball is drawn
/// on the bottom edge) each nullcline W = V is a horizontal dotted line;
/// slow equilibria are
/// circles (filled if stable), the limit cycle a black line on a white halo
/// with arrows at its jumps, in both panels.
///
/// Errors: no branches, unequal lengths, or a non-finite value.
pub fn thermostat_figure(
    formats: Formats,
    title: &str,
    plot: &ThermostatPlot,
) -> Result<Figure, ExportError> {
    check_nonempty("branch list", &plot.branches)?;
    check_len(
        "weathering curves",
        plot.weathering.len(),
        plot.branches.len(),
    )?;
    for (b, w) in plot.branches.iter().zip(&plot.weathering) {
        let name = |q: &str| format!("{q} of branch {}", b.id);
        let n = b.param.len();
        check_nonempty(&name("CO2"), &b.param)?;
        check_len(&name("global mean"), b.global_mean_c.len(), n)?;
        check_len(&name("weathering"), w.len(), n)?;
        check_len(&name("stability flags"), b.stable.len(), n)?;
        check_len(&name("state labels"), b.state.len(), n)?;
        check_finite(&name("CO2"), &b.param)?;
        check_finite(&name("global mean"), &b.global_mean_c)?;
        check_finite(&name("weathering"), w)?;
    }
    check_finite("outgassing", &plot.outgassing)?;
    for (p, t, w, _) in &plot.equilibria {
        check_finite("slow equilibrium", &[*p, *t, *w])?;
    }
    for (p, t, w) in &plot.cycle {
        check_finite("limit cycle", &[*p, *t, *w])?;
    }
    let ps = plot.branches.iter().flat_map(|b| b.param.iter().copied());
    let (p_lo, p_hi) = min_max(ps).unwrap_or((1.0, 10.0));
    let gms = plot
        .branches
        .iter()
        .flat_map(|b| b.global_mean_c.iter().copied());
    let (g_lo, g_hi) = min_max(gms).unwrap_or((0.0, 1.0));
    // W on a log axis from a twentieth of the smallest V (the snowball's
    // W = 0 is drawn on the bottom edge) to the largest W of the branches
    let vmin = plot
        .outgassing
        .iter()
        .copied()
        .filter(|v| *v > 0.0)
        .fold(f64::INFINITY, f64::min);
    let wpos = plot
        .weathering
        .iter()
        .flatten()
        .copied()
        .filter(|w| *w > 0.0);
    let (w_lo, w_hi) = min_max(wpos).unwrap_or((1e-3, 1.0));
    let w_floor = if vmin.is_finite() { 0.05 * vmin } else { w_lo };
    let w_top = w_hi.max(2.0 * w_floor * 20.0);
    let runs = plot
        .branches
        .iter()
        .enumerate()
        .flat_map(|(k, b)| state_runs(k, &b.state, &b.stable))
        .collect();
    render(
        formats,
        &ThermoPaint {
            title,
            plot,
            runs,
            p: Axis::param("radiation.co2_ppm", p_lo, p_hi, 0.02),
            gm: Axis::padded(g_lo, g_hi, 0.06, GLOBAL_MEAN),
            w: Axis::scaled(WEATHERING.into(), w_floor, w_top, 0.0, true),
        },
    )
}

const MARK_SPACING: f64 = 120.0;

impl ThermoPaint<'_> {
    fn legend(&self) -> Vec<LegendItem> {
        let mut runs: Vec<&Run> = self.runs.iter().collect();
        runs.sort_by_key(|r| (state_rank(&r.state), !r.stable));
        let mut items: Vec<LegendItem> = runs
            .into_iter()
            .map(|r| {
                let (colour, stroke, mark) = run_style(r);
                item(
                    state_stability(&r.state, r.stable),
                    Sample::Line {
                        colour,
                        stroke,
                        mark: Some(mark),
                    },
                )
            })
            .collect();
        if !self.plot.outgassing.is_empty() {
            items.push(item(
                "nullcline W = V",
                Sample::Line {
                    colour: RGBColor(40, 40, 40),
                    stroke: Stroke::Dotted,
                    mark: None,
                },
            ));
        }
        if !self.plot.equilibria.is_empty() {
            items.push(item(
                "slow equilibrium, stable",
                Sample::Glyph(eq_glyph(true)),
            ));
            if self.plot.equilibria.iter().any(|e| !e.3) {
                items.push(item(
                    "slow equilibrium, unstable",
                    Sample::Glyph(eq_glyph(false)),
                ));
            }
        }
        if !self.plot.cycle.is_empty() {
            items.push(item("limit cycle", Sample::Halo(Stroke::Solid)));
            items.push(item("jump", Sample::Arrow));
        }
        merged(items)
    }
}

fn eq_glyph(stable: bool) -> Glyph {
    Glyph::Mark(
        Mark {
            shape: Shape::Circle,
            filled: stable,
        },
        RGBColor(0, 0, 0),
    )
}

/// Branch runs, equilibria and the cycle on one panel; `y` picks the
/// quantity of a branch point, `yq` that of an equilibrium / cycle sample.
fn draw_panel<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    pa: &ThermoPaint<'_>,
    y: &dyn Fn(usize, usize) -> f64,
    eq: &dyn Fn(&EquilibriumMark) -> f64,
    cyc: &dyn Fn(&(f64, f64, f64)) -> f64,
) -> PRes {
    let px = &pa.p;
    for r in &pa.runs {
        let b = &pa.plot.branches[r.branch];
        let pts: Vec<(f64, f64)> = r
            .points
            .iter()
            .map(|&i| (px.c(b.param[i]), y(r.branch, i)))
            .collect();
        let (colour, stroke, mark) = run_style(r);
        draw_marked(chart, &pts, colour, stroke, mark, MARK_SPACING)?;
    }
    let c: Vec<(f64, f64)> = pa.plot.cycle.iter().map(|q| (px.c(q.0), cyc(q))).collect();
    // the legs of the cycle, split at its jumps (same CO2, other climate)
    let mut leg: Vec<(f64, f64)> = Vec::new();
    let screen = chart.plotting_area().strip_coord_spec().use_screen_coord();
    for (k, q) in c.iter().enumerate() {
        let jump = k > 0 && pa.plot.cycle[k].0 == pa.plot.cycle[k - 1].0;
        if jump {
            draw_halo_line(chart, &leg, Stroke::Solid)?;
            let from = chart.backend_coord(&c[k - 1]);
            draw_arrow(&screen, from, chart.backend_coord(q))?;
            leg.clear();
        }
        leg.push(*q);
    }
    draw_halo_line(chart, &leg, Stroke::Solid)?;
    for e in &pa.plot.equilibria {
        let at = chart.backend_coord(&(px.c(e.0), eq(e)));
        draw_glyph(&screen, eq_glyph(e.3), at)?;
    }
    Ok(())
}

impl Paint for ThermoPaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = titled(root, self.title)?;
        let items = self.legend();
        let (plots, legend) = split_for_legend(&area, "Climates", &items);
        let (_, h) = plots.dim_in_pixel();
        let (top, bottom) = plots.split_vertically(h * 50 / 100);
        let mut tchart = build_chart(&top, &self.p, &self.gm, false)?;
        let mut wchart = build_chart(&bottom, &self.p, &self.w, true)?;
        let br = &self.plot.branches;
        draw_panel(
            &mut tchart,
            self,
            &|b, i| br[b].global_mean_c[i],
            &|e| e.1,
            &|q| q.1,
        )?;
        let wc = &self.plot.weathering;
        let wy = |w: f64| self.w.c(w.clamp(self.w.lo, self.w.hi));
        draw_panel(
            &mut wchart,
            self,
            &|b, i| wy(wc[b][i]),
            &|e| wy(e.2),
            &|q| wy(q.2),
        )?;
        for v in &self.plot.outgassing {
            let line = [(self.p.c(self.p.lo), wy(*v)), (self.p.c(self.p.hi), wy(*v))];
            super::chart::draw_line(&mut wchart, &line, RGBColor(40, 40, 40), 2, Stroke::Dotted)?;
        }
        draw_legend(&legend, "Climates", &items, 6)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::plot::render::{check_fig, svg_texts};

    fn plot() -> ThermostatPlot {
        let warm = BranchCurve {
            id: 1,
            param: vec![100.0, 1000.0, 10000.0],
            ice_edge_deg: vec![30.0, 50.0, 70.0],
            global_mean_c: vec![-10.0, 0.0, 10.0],
            stable: vec![true; 3],
            state: vec!["polar-caps".into(); 3],
        };
        let snow = BranchCurve {
            id: 2,
            param: vec![1.0, 100.0, 50000.0],
            ice_edge_deg: vec![0.0; 3],
            global_mean_c: vec![-40.0, -30.0, -15.0],
            stable: vec![true; 3],
            state: vec!["snowball".into(); 3],
        };
        ThermostatPlot {
            branches: vec![warm, snow],
            weathering: vec![vec![0.5, 2.0, 9.0], vec![0.0; 3]],
            outgassing: vec![0.3],
            equilibria: vec![],
            cycle: vec![
                (100.0, -10.0, 0.5),
                (100.0, -30.0, 0.0),
                (10000.0, -20.0, 0.0),
                (10000.0, 10.0, 9.0),
                (100.0, -10.0, 0.5),
            ],
        }
    }

    // The figure names its axes from the schema and its curves by state,
    // stability and role (common practice, no source).
    #[test]
    fn draws_and_names_everything() {
        let fig = thermostat_figure(Formats::All, "Thermostat", &plot()).unwrap();
        check_fig(&fig);
        let texts = svg_texts(&fig.svg);
        for t in [
            "CO2 (ppm)",
            WEATHERING,
            "polar caps, stable",
            "snowball, stable",
            "nullcline W = V",
            "limit cycle",
        ] {
            assert!(texts.iter().any(|x| x == t), "{t} missing");
        }
        let mut bad = plot();
        bad.cycle[1].1 = f64::NAN;
        assert!(matches!(
            thermostat_figure(Formats::All, "x", &bad),
            Err(ExportError::NonFinite { .. })
        ));
        let mut bad = plot();
        bad.weathering[0].pop();
        assert!(matches!(
            thermostat_figure(Formats::All, "x", &bad),
            Err(ExportError::Shape { .. })
        ));
    }
}
