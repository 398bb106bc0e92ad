//! The same planet in several models (the model hierarchy): their
//! branches of climates overlaid against one control parameter, ice edge
//! and global mean, one colour and marker per model; and their regime
//! maps' boundaries overlaid over the two parameters of a map.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::axis::Axis;
use super::chart::{Stroke, build_chart, draw_marked, split_for_legend};
use super::check::{
    check_finite, check_latitudes, check_len, check_nonempty, check_polyline, min_max,
};
use super::labels::{GLOBAL_MEAN, ICE_EDGE};
use super::legend::{Sample, draw_legend, item};
use super::render::{PRes, Paint, render, titled};
use super::style::{Mark, SHAPES};
use super::{BoundaryLine, BoundaryMethod, BranchCurve, Figure, Formats};
use crate::io::export::ExportError;

/// The branches of one model of the hierarchy.
#[derive(Debug, Clone, Default)]
pub struct ModelCurves {
    /// Legend name of the model ("annual mean").
    pub label: String,
    /// Its branches (state labels are not used here).
    pub branches: Vec<BranchCurve>,
}

/// Model colours: Tol's bright blue, red, green, purple (distinct in
/// greyscale by marker shape as well).
const MODEL_COLOURS: [RGBColor; 4] = [
    RGBColor(0x44, 0x77, 0xAA),
    RGBColor(0xEE, 0x66, 0x77),
    RGBColor(0x22, 0x88, 0x33),
    RGBColor(0xAA, 0x33, 0x77),
];

struct HierPaint<'a> {
    title: &'a str,
    models: &'a [ModelCurves],
    p: Axis,
    ice: Axis,
    gm: Axis,
}

/// Refuses an empty model list and more models than the colours tell
/// apart (one colour and marker per model).
fn check_model_count<T>(models: &[T]) -> Result<(), ExportError> {
    check_nonempty("model list", models)?;
    if models.len() > MODEL_COLOURS.len() {
        return Err(ExportError::Shape {
            what: format!(
                "model list: {} models, at most {} can be told apart",
                models.len(),
                MODEL_COLOURS.len()
            ),
        });
    }
    Ok(())
}

/// Ice-edge latitude (top) and global-mean temperature (bottom) of every
/// model's branches against `param_key`: model m in colour m and marker
/// shape m, stable pieces solid with filled markers, unstable ones dashed
/// with open markers; the legend names each model once per stability.
///
/// Errors: no models, a model without branches, a branch with no points
/// or unequal lengths, ice edges outside ±90 deg, or non-finite values.
pub fn hierarchy_figure(
    formats: Formats,
    title: &str,
    param_key: &str,
    models: &[ModelCurves],
) -> Result<Figure, ExportError> {
    check_model_count(models)?;
    for m in models {
        check_nonempty(&format!("branches of {}", m.label), &m.branches)?;
        for b in &m.branches {
            let name = |q: &str| format!("{q} of {} branch {}", m.label, b.id);
            check_nonempty(&name("parameter"), &b.param)?;
            let n = b.param.len();
            check_len(&name("ice edge"), b.ice_edge_deg.len(), n)?;
            check_len(&name("global mean temperature"), b.global_mean_c.len(), n)?;
            check_len(&name("stability flags"), b.stable.len(), n)?;
            check_finite(&name("parameter"), &b.param)?;
            check_latitudes(&name("ice edge"), &b.ice_edge_deg)?;
            check_finite(&name("global mean temperature"), &b.global_mean_c)?;
        }
    }
    let all = || models.iter().flat_map(|m| m.branches.iter());
    let (p_lo, p_hi) = min_max(all().flat_map(|b| b.param.iter().copied())).unwrap_or((0.0, 1.0));
    let (g_lo, g_hi) =
        min_max(all().flat_map(|b| b.global_mean_c.iter().copied())).unwrap_or((0.0, 1.0));
    render(
        formats,
        &HierPaint {
            title,
            models,
            p: Axis::param(param_key, p_lo, p_hi, 0.03),
            ice: Axis::padded(0.0, 90.0, 0.03, ICE_EDGE),
            gm: Axis::padded(g_lo, g_hi, 0.06, GLOBAL_MEAN),
        },
    )
}

/// Runs of one stability along a branch: (stable, point indices), the
/// segment i-1..i stable when both ends are.
fn stability_runs(stable: &[bool]) -> Vec<(bool, Vec<usize>)> {
    if stable.len() == 1 {
        return vec![(stable[0], vec![0])];
    }
    let mut runs: Vec<(bool, Vec<usize>)> = Vec::new();
    for i in 1..stable.len() {
        let s = stable[i - 1] && stable[i];
        match runs.last_mut() {
            Some(r) if r.0 == s => r.1.push(i),
            _ => runs.push((s, vec![i - 1, i])),
        }
    }
    runs
}

impl Paint for HierPaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = titled(root, self.title)?;
        let mut items = Vec::new();
        for (k, m) in self.models.iter().enumerate() {
            let any = |s: bool| {
                m.branches
                    .iter()
                    .any(|b| stability_runs(&b.stable).iter().any(|r| r.0 == s))
            };
            for (s, word, stroke) in [
                (true, "stable", Stroke::Solid),
                (false, "unstable", Stroke::Dashed),
            ] {
                if any(s) {
                    items.push(item(
                        format!("{}, {word}", m.label),
                        Sample::Line {
                            colour: MODEL_COLOURS[k],
                            stroke,
                            mark: Some(Mark {
                                shape: SHAPES[k],
                                filled: s,
                            }),
                        },
                    ));
                }
            }
        }
        let (plots, legend) = split_for_legend(&area, "Models", &items);
        let (_, h) = plots.dim_in_pixel();
        let (top, bottom) = plots.split_vertically(h * 47 / 100);
        let mut ichart = build_chart(&top, &self.p, &self.ice, false)?;
        let mut gchart = build_chart(&bottom, &self.p, &self.gm, true)?;
        for (k, m) in self.models.iter().enumerate() {
            for b in &m.branches {
                for (s, idx) in stability_runs(&b.stable) {
                    let stroke = if s { Stroke::Solid } else { Stroke::Dashed };
                    let mark = Mark {
                        shape: SHAPES[k],
                        filled: s,
                    };
                    let pts = |v: &[f64]| -> Vec<(f64, f64)> {
                        idx.iter().map(|&i| (self.p.c(b.param[i]), v[i])).collect()
                    };
                    draw_marked(
                        &mut ichart,
                        &pts(&b.ice_edge_deg),
                        MODEL_COLOURS[k],
                        stroke,
                        mark,
                        140.0,
                    )?;
                    draw_marked(
                        &mut gchart,
                        &pts(&b.global_mean_c),
                        MODEL_COLOURS[k],
                        stroke,
                        mark,
                        140.0,
                    )?;
                }
            }
        }
        draw_legend(&legend, "Models", &items, 6)
    }
}

/// The regime boundaries of one model's map, for
/// [`hierarchy_map_figure`].
#[derive(Debug, Clone, Default)]
pub struct ModelBoundaries {
    /// Legend name of the model ("(a) annual mean").
    pub label: String,
    /// Its boundary curves (points: across value, traced value); may be
    /// empty (a model without a regime boundary in the map).
    pub lines: Vec<BoundaryLine>,
}

struct BoundPaint<'a> {
    title: &'a str,
    models: &'a [ModelBoundaries],
    x: Axis,
    y: Axis,
}

/// The regime boundaries of several models of one planet overlaid over
/// the plane of a map: the across parameter `across_key` over `across`
/// (lo, hi) horizontally, the traced `vary_key` over `vary` vertically;
/// model m in colour m with marker shape m, boundaries joined from slices
/// solid, fold curves continued in two parameters dotted. The legend
/// names each model once ("no boundary" for a model without one) and the
/// two line patterns present. Axes are labelled from the schema.
///
/// Errors: no models, more than can be told apart, an empty or inverted
/// range, or a non-finite boundary point.
pub fn hierarchy_map_figure(
    formats: Formats,
    title: &str,
    (across_key, across): (&str, (f64, f64)),
    (vary_key, vary): (&str, (f64, f64)),
    models: &[ModelBoundaries],
) -> Result<Figure, ExportError> {
    check_model_count(models)?;
    for (what, (lo, hi)) in [("across range", across), ("traced range", vary)] {
        check_finite(what, &[lo, hi])?;
        if lo >= hi {
            return Err(ExportError::Shape {
                what: format!("{what} {lo}..{hi} is empty or inverted"),
            });
        }
    }
    for m in models {
        for b in &m.lines {
            check_polyline(
                &format!("boundary '{}' of {}", b.transition, m.label),
                &b.points,
            )?;
        }
    }
    render(
        formats,
        &BoundPaint {
            title,
            models,
            x: Axis::param(across_key, across.0, across.1, 0.0),
            y: Axis::param(vary_key, vary.0, vary.1, 0.0),
        },
    )
}

fn method_stroke(m: BoundaryMethod) -> Stroke {
    match m {
        BoundaryMethod::Slices => Stroke::Solid,
        BoundaryMethod::FoldContinuation => Stroke::Dotted,
    }
}

impl Paint for BoundPaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = titled(root, self.title)?;
        let mut items = Vec::new();
        for (k, m) in self.models.iter().enumerate() {
            let label = if m.lines.is_empty() {
                format!("{}: no boundary", m.label)
            } else {
                m.label.clone()
            };
            items.push(item(
                label,
                Sample::Line {
                    colour: MODEL_COLOURS[k],
                    stroke: Stroke::Solid,
                    mark: Some(Mark {
                        shape: SHAPES[k],
                        filled: true,
                    }),
                },
            ));
        }
        let lines = || self.models.iter().flat_map(|m| m.lines.iter());
        for (method, text) in [
            (BoundaryMethod::Slices, "folds of the slices joined"),
            (
                BoundaryMethod::FoldContinuation,
                "fold continued in both parameters",
            ),
        ] {
            if lines().any(|b| b.method == method) {
                items.push(item(
                    text,
                    Sample::Line {
                        colour: RGBColor(0x33, 0x33, 0x33),
                        stroke: method_stroke(method),
                        mark: None,
                    },
                ));
            }
        }
        let (plots, legend) = split_for_legend(&area, "Models", &items);
        let mut chart = build_chart(&plots, &self.x, &self.y, true)?;
        for (k, m) in self.models.iter().enumerate() {
            for b in &m.lines {
                let pts: Vec<(f64, f64)> = b
                    .points
                    .iter()
                    .map(|(a, v)| (self.x.c(*a), self.y.c(*v)))
                    .collect();
                let mark = Mark {
                    shape: SHAPES[k],
                    filled: true,
                };
                draw_marked(
                    &mut chart,
                    &pts,
                    MODEL_COLOURS[k],
                    method_stroke(b.method),
                    mark,
                    110.0,
                )?;
            }
        }
        draw_legend(&legend, "Models", &items, 6)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::plot::render::{check_fig, svg_texts};

    fn curve(shift: f64) -> BranchCurve {
        let mut b = BranchCurve {
            id: 1,
            ..Default::default()
        };
        for k in 0..=20 {
            let s = k as f64 / 20.0;
            b.param.push(-10.0 + 20.0 * s + shift);
            b.ice_edge_deg.push(30.0 + 50.0 * s);
            b.global_mean_c.push(-5.0 + 20.0 * s);
            b.stable.push(k != 3);
            b.state.push("polar-caps".into());
        }
        b
    }

    #[test]
    fn models_are_named_once_per_stability() {
        let models = vec![
            ModelCurves {
                label: "annual mean".into(),
                branches: vec![curve(0.0)],
            },
            ModelCurves {
                label: "seasonal with sea ice".into(),
                branches: vec![curve(2.0)],
            },
        ];
        let fig =
            hierarchy_figure(Formats::All, "Hierarchy", "radiation.forcing", &models).unwrap();
        check_fig(&fig);
        let texts = svg_texts(&fig.svg);
        for name in [
            "annual mean, stable",
            "annual mean, unstable",
            "seasonal with sea ice, stable",
        ] {
            assert_eq!(texts.iter().filter(|t| *t == name).count(), 1, "{name}");
        }
        assert!(matches!(
            hierarchy_figure(Formats::All, "x", "radiation.forcing", &[]),
            Err(ExportError::Empty { .. })
        ));
        let mut bad = models.clone();
        bad[1].branches[0].global_mean_c[2] = f64::NAN;
        assert!(matches!(
            hierarchy_figure(Formats::All, "x", "radiation.forcing", &bad),
            Err(ExportError::NonFinite { .. })
        ));
    }

    #[test]
    fn boundary_overlay_names_every_model() {
        let line = |shift: f64, method| BoundaryLine {
            transition: "polar-caps -> snowball".into(),
            method,
            points: (0..=10)
                .map(|k| (k as f64, 1250.0 + shift + k as f64))
                .collect(),
        };
        let models = vec![
            ModelBoundaries {
                label: "(a) annual mean".into(),
                lines: vec![line(0.0, BoundaryMethod::Slices)],
            },
            ModelBoundaries {
                label: "(b) seasonal".into(),
                lines: vec![line(5.0, BoundaryMethod::FoldContinuation)],
            },
            ModelBoundaries {
                label: "(c) seasonal with sea ice".into(),
                lines: Vec::new(),
            },
        ];
        let fig = hierarchy_map_figure(
            Formats::All,
            "Boundaries",
            ("radiation.a", (0.0, 10.0)),
            ("orbit.flux", (1240.0, 1270.0)),
            &models,
        )
        .unwrap();
        check_fig(&fig);
        let texts = svg_texts(&fig.svg);
        for name in [
            "(a) annual mean",
            "(b) seasonal",
            "(c) seasonal with sea ice: no boundary",
            "folds of the slices joined",
            "fold continued in both parameters",
        ] {
            assert_eq!(texts.iter().filter(|t| *t == name).count(), 1, "{name}");
        }
        let mut bad = models.clone();
        bad[0].lines[0].points[3].1 = f64::NAN;
        assert!(matches!(
            hierarchy_map_figure(
                Formats::All,
                "x",
                ("radiation.a", (0.0, 10.0)),
                ("orbit.flux", (1240.0, 1270.0)),
                &bad
            ),
            Err(ExportError::NonFinite { .. })
        ));
        assert!(
            hierarchy_map_figure(
                Formats::All,
                "x",
                ("radiation.a", (10.0, 0.0)),
                ("orbit.flux", (1240.0, 1270.0)),
                &models
            )
            .is_err()
        );
    }
}
