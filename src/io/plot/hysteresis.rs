//! hysteresis

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

struct HystPaint<'a> {
    title: &'a str,
    param_label: &'a str,
    branches: &'a [BranchCurve],
    folds: &'a [FoldMark],
    p: Range<f64>,
    ice: Range<f64>,
    gm: Range<f64>,
}

/// Ice-edge latitude (top) and global-mean temperature (bottom) along
/// continuation branches against a control parameter.
///
/// Consecutive points that are both stable are joined by solid segments; a
/// segment touching an unstable point is dashed. Folds get a ⊗ marker, and a
/// dashed arrow runs from a fold to its jump target (same parameter value)
/// where one is given.
///
/// Errors: no branches, a branch with no points or unequal vector lengths,
/// ice-edge latitudes outside ±90°, or any non-finite value.
pub fn hysteresis_figure(
    title: &str,
    param_label: &str,
    branches: &[BranchCurve],
    folds: &[FoldMark],
) -> Result<Figure, ExportError> {
    check_nonempty("branch list", branches)?;
    for b in branches {
        let name = |q: &str| format!("{q} of branch {}", b.id);
        check_nonempty(&name("parameter"), &b.param)?;
        check_len(&name("ice edge"), b.ice_edge_deg.len(), b.param.len())?;
        check_len(
            &name("global mean temperature"),
            b.global_mean_c.len(),
            b.param.len(),
        )?;
        check_len(&name("stability flags"), b.stable.len(), b.param.len())?;
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
    let ice_vals = branches
        .iter()
        .flat_map(|b| b.ice_edge_deg.iter().copied())
        .chain(
            folds
                .iter()
                .flat_map(|f| [Some(f.ice_edge_deg), f.jump_to_ice_edge_deg])
                .flatten(),
        );
    let (i_lo, i_hi) = min_max(ice_vals).unwrap_or((0.0, 90.0));
    let ice = padded(i_lo.min(0.0), i_hi.max(90.0), 0.02);
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
    render(&HystPaint {
        title,
        param_label,
        branches,
        folds,
        p: padded(p_lo, p_hi, 0.03),
        ice,
        gm: padded(g_lo, g_hi, 0.06),
    })
}

/// Split a branch into maximal runs of equal line style; returns (dashed, points).
fn styled_runs(param: &[f64], val: &[f64], stable: &[bool]) -> Vec<(bool, Vec<(f64, f64)>)> {
    let mut runs: Vec<(bool, Vec<(f64, f64)>)> = Vec::new();
    for i in 1..param.len() {
        let dashed = !(stable[i - 1] && stable[i]);
        match runs.last_mut() {
            Some((d, pts)) if *d == dashed => pts.push((param[i], val[i])),
            _ => runs.push((dashed, vec![(param[i - 1], val[i - 1]), (param[i], val[i])])),
        }
    }
    runs
}

impl Paint for HystPaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = root.titled(self.title, title_font()).pe()?;
        let (plots, legend) = split_legend(&area);
        let (_, h) = plots.dim_in_pixel();
        let (top, bottom) = plots.split_vertically(h / 2);
        let mut ichart = build_chart(
            &top,
            self.p.clone(),
            self.ice.clone(),
            self.param_label,
            "Ice-edge latitude (°)",
        )?;
        let mut gchart = build_chart(
            &bottom,
            self.p.clone(),
            self.gm.clone(),
            self.param_label,
            "Global-mean temperature (°C)",
        )?;
        let iscreen = ichart.plotting_area().strip_coord_spec().use_screen_coord();
        let gscreen = gchart.plotting_area().strip_coord_spec().use_screen_coord();
        let mut items = Vec::new();
        let mut any_unstable = false;
        for (k, b) in self.branches.iter().enumerate() {
            let colour = palette(b.id);
            let mark = mark_for(b.id);
            for (dashed, pts) in styled_runs(&b.param, &b.ice_edge_deg, &b.stable) {
                any_unstable |= dashed;
                draw_line(&mut ichart, pts, colour, 2, dashed)?;
            }
            for (dashed, pts) in styled_runs(&b.param, &b.global_mean_c, &b.stable) {
                draw_line(&mut gchart, pts, colour, 2, dashed)?;
            }
            any_unstable |= b.stable.iter().any(|s| !s);
            for i in marker_indices(b.param.len(), 9, k) {
                let g = Glyph::Mark(mark, colour);
                draw_glyph(
                    &iscreen,
                    g,
                    ichart.backend_coord(&(b.param[i], b.ice_edge_deg[i])),
                )?;
                draw_glyph(
                    &gscreen,
                    g,
                    gchart.backend_coord(&(b.param[i], b.global_mean_c[i])),
                )?;
            }
            items.push(item(
                format!("branch {}", b.id),
                Sample::Line {
                    colour,
                    dashed: false,
                    glyph: Some(Glyph::Mark(mark, colour)),
                },
            ));
        }
        let mut any_jump = false;
        for f in self.folds {
            let fi = ichart.backend_coord(&(f.param, f.ice_edge_deg));
            let fg = gchart.backend_coord(&(f.param, f.global_mean_c));
            if let Some(t) = f.jump_to_ice_edge_deg {
                draw_arrow(&iscreen, fi, ichart.backend_coord(&(f.param, t)))?;
                any_jump = true;
            }
            if let Some(t) = f.jump_to_global_mean_c {
                draw_arrow(&gscreen, fg, gchart.backend_coord(&(f.param, t)))?;
                any_jump = true;
            }
            draw_glyph(&iscreen, Glyph::Fold, fi)?;
            draw_glyph(&gscreen, Glyph::Fold, fg)?;
        }
        push_stability_legend(&mut items, any_unstable);
        if !self.folds.is_empty() {
            items.push(item("fold", Sample::Glyph(Glyph::Fold)));
        }
        if any_jump {
            items.push(item("jump after fold", Sample::Arrow));
        }
        draw_legend(&legend, "Branches", &items, 14)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::plot::render::check_fig;

    fn branches() -> (Vec<BranchCurve>, Vec<FoldMark>) {
        // An S-shaped curve: ice edge vs parameter with two folds.
        let mut b = BranchCurve {
            id: 0,
            ..Default::default()
        };
        for k in 0..=60 {
            let s = -1.2 + 2.4 * k as f64 / 60.0;
            let p = 1300.0 + 60.0 * (s - s * s * s);
            b.param.push(p + 80.0 * s);
            b.ice_edge_deg.push(45.0 - 35.0 * s);
            b.global_mean_c.push(10.0 * s);
            b.stable.push(s.abs() > 0.45);
        }
        let snow = BranchCurve {
            id: 1,
            param: vec![1200.0, 1300.0, 1400.0],
            ice_edge_deg: vec![0.0; 3],
            global_mean_c: vec![-40.0, -35.0, -30.0],
            stable: vec![true; 3],
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
        check_fig(&hysteresis_figure("Hysteresis", "Solar constant (W m⁻²)", &b, &f).unwrap());
        check_fig(&hysteresis_figure("No folds", "S (W m⁻²)", &b[..1], &[]).unwrap());
        assert!(matches!(
            hysteresis_figure("x", "p", &[], &[]),
            Err(ExportError::Empty { .. })
        ));
        let mut bad = b.clone();
        bad[0].global_mean_c[5] = f64::NAN;
        assert!(matches!(
            hysteresis_figure("x", "p", &bad, &f),
            Err(ExportError::NonFinite { .. })
        ));
        let mut bad = b.clone();
        bad[1].stable.pop();
        assert!(matches!(
            hysteresis_figure("x", "p", &bad, &f),
            Err(ExportError::Shape { .. })
        ));
        let mut badf = f.clone();
        badf[0].jump_to_global_mean_c = Some(f64::NEG_INFINITY);
        assert!(matches!(
            hysteresis_figure("x", "p", &b, &badf),
            Err(ExportError::NonFinite { .. })
        ));
    }

    #[test]
    fn styled_runs_split_on_stability() {
        let runs = styled_runs(
            &[0.0, 1.0, 2.0, 3.0, 4.0],
            &[0.0; 5],
            &[true, true, false, true, true],
        );
        let kinds: Vec<(bool, usize)> = runs.iter().map(|(d, p)| (*d, p.len())).collect();
        assert_eq!(kinds, vec![(false, 2), (true, 3), (false, 2)]);
    }
}
