//! Branches of equilibria against a control parameter: ice edge and global
//! mean, curves named by state and stability, folds and jumps.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::axis::Axis;
use super::chart::{Chart, Stroke, build_chart, draw_marked, split_for_legend};
use super::check::{check_finite, check_latitudes, check_len, check_nonempty, min_max};
use super::labels::{GLOBAL_MEAN, ICE_EDGE};
use super::legend::{LegendItem, Sample, draw_legend, item, merged};
use super::render::{PRes, Paint, render, titled};
use super::style::{Glyph, Mark, draw_arrow, draw_glyph, state_stability, state_style};
use super::{BranchCurve, Figure, FoldMark, Formats};
use crate::io::export::ExportError;

/// Pixels between markers along a branch.
const MARK_SPACING: f64 = 120.0;

struct HystPaint<'a> {
    title: &'a str,
    branches: &'a [BranchCurve],
    runs: Vec<Run>,
    folds: &'a [FoldMark],
    p: Axis,
    ice: Axis,
    gm: Axis,
}

/// A maximal piece of a branch of one state and stability.
#[derive(Clone, Debug, PartialEq)]
pub(super) struct Run {
    pub(super) state: String,
    pub(super) stable: bool,
    /// Indices into the branch, consecutive.
    pub(super) points: Vec<usize>,
    pub(super) branch: usize,
}

/// Ice-edge latitude (top) and global-mean temperature (bottom) along
/// continuation branches against the scenario parameter `param_key`.
///
/// The parameter axis is labelled from the schema (label and unit) and is
/// logarithmic for CO2 and for positive ranges wider than a factor of 20.
/// Each branch is split into pieces of one state and stability: a piece is
/// drawn in its state's colour and marker, solid with filled markers if
/// stable and dashed with open markers if not, and named in the legend
/// "polar caps, stable" (pieces of the same name share one entry). Folds
/// get a circled-cross marker, and a dashed arrow runs from a fold to its
/// jump target (same parameter value) where one is given.
///
/// Errors: no branches, a branch with no points or unequal vector lengths,
/// ice-edge latitudes outside ±90 deg, or any non-finite value.
pub fn hysteresis_figure(
    formats: Formats,
    title: &str,
    param_key: &str,
    branches: &[BranchCurve],
    folds: &[FoldMark],
) -> Result<Figure, ExportError> {
    check_nonempty("branch list", branches)?;
    for b in branches {
        let name = |q: &str| format!("{q} of branch {}", b.id);
        check_nonempty(&name("parameter"), &b.param)?;
        let n = b.param.len();
        check_len(&name("ice edge"), b.ice_edge_deg.len(), n)?;
        check_len(&name("global mean temperature"), b.global_mean_c.len(), n)?;
        check_len(&name("stability flags"), b.stable.len(), n)?;
        check_len(&name("state labels"), b.state.len(), n)?;
        check_finite(&name("parameter"), &b.param)?;
        check_latitudes(&name("ice edge"), &b.ice_edge_deg)?;
        check_finite(&name("global mean temperature"), &b.global_mean_c)?;
    }
    for (k, f) in folds.iter().enumerate() {
        let name = |q: &str| format!("{q} of fold {k}");
        check_finite(&name("parameter"), &[f.param])?;
        check_latitudes(&name("ice edge"), &[f.ice_edge_deg])?;
        check_finite(&name("global mean temperature"), &[f.global_mean_c])?;
        if let Some(v) = f.jump_to_ice_edge_deg {
            check_latitudes(&name("jump target ice edge"), &[v])?;
        }
        if let Some(v) = f.jump_to_global_mean_c {
            check_finite(&name("jump target global mean temperature"), &[v])?;
        }
    }
    let ps = branches
        .iter()
        .flat_map(|b| b.param.iter().copied())
        .chain(folds.iter().map(|f| f.param));
    let (p_lo, p_hi) = min_max(ps).unwrap_or((0.0, 1.0));
    let gm_vals = branches
        .iter()
        .flat_map(|b| b.global_mean_c.iter().copied())
        .chain(
            folds
                .iter()
                .flat_map(|f| [Some(f.global_mean_c), f.jump_to_global_mean_c])
                .flatten(),
        );
    let (g_lo, g_hi) = min_max(gm_vals).unwrap_or((0.0, 1.0));
    let runs = branches
        .iter()
        .enumerate()
        .flat_map(|(k, b)| state_runs(k, &b.state, &b.stable))
        .collect();
    render(
        formats,
        &HystPaint {
            title,
            branches,
            runs,
            folds,
            p: Axis::param(param_key, p_lo, p_hi, 0.03),
            ice: Axis::padded(0.0, 90.0, 0.03, ICE_EDGE),
            gm: Axis::padded(g_lo, g_hi, 0.06, GLOBAL_MEAN),
        },
    )
}

/// Split a branch into runs of one state and stability. The segment from
/// point i-1 to i belongs to the state of point i and is stable when both
/// ends are; consecutive runs share their joining point.
pub(super) fn state_runs(branch: usize, state: &[String], stable: &[bool]) -> Vec<Run> {
    let mut runs: Vec<Run> = Vec::new();
    if state.len() == 1 {
        return vec![Run {
            state: state[0].clone(),
            stable: stable[0],
            points: vec![0],
            branch,
        }];
    }
    for i in 1..state.len() {
        let key = (&state[i], stable[i - 1] && stable[i]);
        match runs.last_mut() {
            Some(r) if r.state == *key.0 && r.stable == key.1 => r.points.push(i),
            _ => runs.push(Run {
                state: key.0.clone(),
                stable: key.1,
                points: vec![i - 1, i],
                branch,
            }),
        }
    }
    runs
}

/// Colour, stroke and marker of a run (state colour; solid and filled if
/// stable, dashed and open if not).
pub(super) fn run_style(r: &Run) -> (RGBColor, Stroke, Mark) {
    HystPaint::run_style(r)
}

/// Order of states in the legend.
pub(super) fn state_rank(label: &str) -> usize {
    ["ice-free", "polar-caps", "equatorial-belt", "snowball"]
        .iter()
        .position(|s| *s == label)
        .unwrap_or(4)
}

impl HystPaint<'_> {
    fn run_style(r: &Run) -> (RGBColor, Stroke, Mark) {
        let s = state_style(&r.state);
        let stroke = if r.stable {
            Stroke::Solid
        } else {
            Stroke::Dashed
        };
        let mark = Mark {
            shape: s.shape,
            filled: r.stable,
        };
        (s.colour, stroke, mark)
    }

    fn legend(&self) -> Vec<LegendItem> {
        let mut runs: Vec<&Run> = self.runs.iter().collect();
        runs.sort_by_key(|r| (state_rank(&r.state), !r.stable));
        let mut items: Vec<LegendItem> = runs
            .into_iter()
            .map(|r| {
                let (colour, stroke, mark) = Self::run_style(r);
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
        if !self.folds.is_empty() {
            items.push(item("fold", Sample::Glyph(Glyph::Fold)));
        }
        if self
            .folds
            .iter()
            .any(|f| f.jump_to_ice_edge_deg.is_some() || f.jump_to_global_mean_c.is_some())
        {
            items.push(item("jump after fold", Sample::Arrow));
        }
        merged(items)
    }
}

/// Draw every run of one quantity on a chart.
fn draw_runs<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    runs: &[Run],
    pts_of: &dyn Fn(&Run) -> Vec<(f64, f64)>,
) -> PRes {
    for r in runs {
        let (colour, stroke, mark) = HystPaint::run_style(r);
        draw_marked(chart, &pts_of(r), colour, stroke, mark, MARK_SPACING)?;
    }
    Ok(())
}

/// The fold markers and jump arrows on one chart; `at` gives the fold's
/// value and its jump target's.
fn draw_folds<DB: DrawingBackend>(
    chart: &Chart<'_, DB>,
    folds: &[FoldMark],
    px: &Axis,
    at: &dyn Fn(&FoldMark) -> (f64, Option<f64>),
) -> PRes {
    let screen = chart.plotting_area().strip_coord_spec().use_screen_coord();
    for f in folds {
        let (v, target) = at(f);
        let from = chart.backend_coord(&(px.c(f.param), v));
        if let Some(t) = target {
            draw_arrow(&screen, from, chart.backend_coord(&(px.c(f.param), t)))?;
        }
        draw_glyph(&screen, Glyph::Fold, from)?;
    }
    Ok(())
}

impl Paint for HystPaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = titled(root, self.title)?;
        let items = self.legend();
        let (plots, legend) = split_for_legend(&area, "Branches", &items);
        let (_, h) = plots.dim_in_pixel();
        let (top, bottom) = plots.split_vertically(h * 47 / 100);
        let mut ichart = build_chart(&top, &self.p, &self.ice, false)?;
        let mut gchart = build_chart(&bottom, &self.p, &self.gm, true)?;
        let px = &self.p;
        let pts = |r: &Run, v: &dyn Fn(&BranchCurve, usize) -> f64| -> Vec<(f64, f64)> {
            let b = &self.branches[r.branch];
            r.points
                .iter()
                .map(|&i| (px.c(b.param[i]), v(b, i)))
                .collect()
        };
        draw_runs(&mut ichart, &self.runs, &|r| {
            pts(r, &|b, i| b.ice_edge_deg[i])
        })?;
        draw_runs(&mut gchart, &self.runs, &|r| {
            pts(r, &|b, i| b.global_mean_c[i])
        })?;
        draw_folds(&ichart, self.folds, px, &|f| {
            (f.ice_edge_deg, f.jump_to_ice_edge_deg)
        })?;
        draw_folds(&gchart, self.folds, px, &|f| {
            (f.global_mean_c, f.jump_to_global_mean_c)
        })?;
        draw_legend(&legend, "Branches", &items, 6)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::plot::render::{check_fig, svg_texts};

    fn branches() -> (Vec<BranchCurve>, Vec<FoldMark>) {
        // An S-shaped curve: ice edge vs parameter with two folds.
        let mut b = BranchCurve {
            id: 1,
            ..Default::default()
        };
        for k in 0..=60 {
            let s = -1.2 + 2.4 * k as f64 / 60.0;
            let p = 1300.0 + 60.0 * (s - s * s * s);
            b.param.push(p + 80.0 * s);
            b.ice_edge_deg.push((45.0 - 35.0 * s).min(90.0));
            b.global_mean_c.push(10.0 * s);
            b.stable.push(s.abs() > 0.45);
            b.state
                .push(if s < -1.0 { "ice-free" } else { "polar-caps" }.into());
        }
        let snow = BranchCurve {
            id: 2,
            param: vec![1200.0, 1300.0, 1400.0],
            ice_edge_deg: vec![0.0; 3],
            global_mean_c: vec![-40.0, -35.0, -30.0],
            stable: vec![true; 3],
            state: vec!["snowball".into(); 3],
        };
        let folds = vec![FoldMark {
            param: 1310.0,
            ice_edge_deg: 30.0,
            global_mean_c: 4.0,
            jump_to_ice_edge_deg: Some(0.0),
            jump_to_global_mean_c: Some(-35.0),
        }];
        (vec![b, snow], folds)
    }

    #[test]
    fn hysteresis_ok_and_errors() {
        let (b, f) = branches();
        let fig = hysteresis_figure(Formats::All, "Hysteresis", "orbit.flux", &b, &f).unwrap();
        check_fig(&fig);
        let texts = svg_texts(&fig.svg);
        // axis label from the schema, curves named by state and stability,
        // each name once in the legend
        assert!(texts.iter().any(|t| t == "Stellar flux S0 (W m-2)"));
        assert!(
            !texts
                .iter()
                .any(|t| t.contains("orbit.flux") || t.contains("branch"))
        );
        for name in [
            "polar caps, stable",
            "polar caps, unstable",
            "snowball, stable",
        ] {
            assert_eq!(texts.iter().filter(|t| *t == name).count(), 1, "{name}");
        }
        check_fig(
            &hysteresis_figure(Formats::All, "No folds", "radiation.co2_ppm", &b[..1], &[])
                .unwrap(),
        );
        assert!(matches!(
            hysteresis_figure(Formats::All, "x", "orbit.flux", &[], &[]),
            Err(ExportError::Empty { .. })
        ));
        let mut bad = b.clone();
        bad[0].global_mean_c[5] = f64::NAN;
        assert!(matches!(
            hysteresis_figure(Formats::All, "x", "orbit.flux", &bad, &f),
            Err(ExportError::NonFinite { .. })
        ));
        let mut bad = b.clone();
        bad[1].stable.pop();
        assert!(matches!(
            hysteresis_figure(Formats::All, "x", "orbit.flux", &bad, &f),
            Err(ExportError::Shape { .. })
        ));
        let mut bad = b.clone();
        bad[1].state.pop();
        assert!(matches!(
            hysteresis_figure(Formats::All, "x", "orbit.flux", &bad, &f),
            Err(ExportError::Shape { .. })
        ));
        let mut badf = f.clone();
        badf[0].jump_to_global_mean_c = Some(f64::NEG_INFINITY);
        assert!(matches!(
            hysteresis_figure(Formats::All, "x", "orbit.flux", &b, &badf),
            Err(ExportError::NonFinite { .. })
        ));
    }

    #[test]
    fn co2_axis_is_logarithmic() {
        // A CO2 trace from 100 to 2000 ppm puts 1-2-5 ticks on the axis.
        let (mut b, _) = branches();
        for br in &mut b {
            let n = br.param.len();
            br.param = (0..n)
                .map(|k| 100.0 * 20f64.powf(k as f64 / (n - 1) as f64))
                .collect();
        }
        let texts = svg_texts(
            &hysteresis_figure(Formats::All, "CO2", "radiation.co2_ppm", &b, &[])
                .unwrap()
                .svg,
        );
        assert!(texts.iter().any(|t| t == "CO2 (ppm)"));
        for t in ["100", "200", "500", "1000", "2000"] {
            assert!(texts.iter().any(|x| x == t), "tick {t} missing");
        }
    }

    #[test]
    fn runs_split_on_state_and_stability() {
        let st = |s: &str| s.to_string();
        let runs = state_runs(
            0,
            &[st("a"), st("a"), st("a"), st("b"), st("b")],
            &[true, true, false, false, true],
        );
        let kinds: Vec<(&str, bool, Vec<usize>)> = runs
            .iter()
            .map(|r| (r.state.as_str(), r.stable, r.points.clone()))
            .collect();
        assert_eq!(
            kinds,
            vec![
                ("a", true, vec![0, 1]),
                ("a", false, vec![1, 2]),
                ("b", false, vec![2, 3, 4]),
            ]
        );
        assert_eq!(state_runs(3, &[st("a")], &[false])[0].points, vec![0]);
    }
}
