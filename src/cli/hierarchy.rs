//! `icefold trace --hierarchy`: the same planet in the model hierarchy,
//! (a) the annual-mean model, (b) the seasonal model without sea-ice
//! thermodynamics, (c) the seasonal model with them (Wagner & Eisenman
//! 2015), traced over one range of one parameter, side by side: which
//! folds and bistable windows survive which physics.
use super::context::{Args, CliError, load, out_dir, provenance, written_list};
use super::progress::Progress;
use super::trace::parse_range;
use crate::analysis::branches::{Hysteresis, TraceOptions, poleward_edge_deg, trace_all};
use crate::analysis::periodic::{SeasonalTraceOptions, trace_seasonal};
use crate::io::export::{Cell, OutputSet, Table};
use crate::io::plot::{self, ModelCurves};
use crate::io::scenario::Scenario;

/// The models of the hierarchy: (name in outputs, legend label, the
/// `--set` lines that make the scenario that model).
pub(super) const MODELS: [(&str, &str, [&str; 2]); 3] = [
    (
        "annual-mean",
        "(a) annual mean",
        ["seasons.enabled=false", "seaice.enabled=false"],
    ),
    (
        "seasonal",
        "(b) seasonal",
        ["seasons.enabled=true", "seaice.enabled=false"],
    ),
    (
        "seasonal-sea-ice",
        "(c) seasonal with sea ice",
        ["seasons.enabled=true", "seaice.enabled=true"],
    ),
];

/// Runs `trace --hierarchy`. The three models are the same planet: the
/// ocean heat flux F_b (`seaice.ocean_heat_flux`), which the sea-ice model
/// adds under its mixed layer everywhere, is added to the forcing of (a)
/// and (b) (a trace in `radiation.forcing` is reported on the axis of the
/// scenario's F). Writes `hierarchy.csv` (every traced point,
/// with its model), `hierarchy_folds.csv`, `summary.json` (per model its
/// folds, bistable windows and notes), `hierarchy.svg`/`.png` (the three
/// models' branches overlaid) and `scenario.toml`.
pub fn cmd_hierarchy(args: &Args) -> Result<String, CliError> {
    let sc = load(args)?;
    let base = sc.to_toml();
    let fb = sc.num("seaice.ocean_heat_flux");
    let variants = hierarchy_scenarios(args, &sc)?;
    let model = variants[2].model();
    let (param, from, to) = parse_range(args, &model)?;
    // traced in F itself, (a) and (b) run over the range shifted by F_b and
    // are reported on the axis of F
    let shift = if param == crate::model::Param::Forcing {
        fb
    } else {
        0.0
    };
    let bar = Progress::spinner("trace", args.quiet);
    let mut progress = |msg: &str| bar.message(msg);
    let (warm, cold) = (sc.num("solver.warm_start"), sc.num("solver.cold_start"));
    let mut traces: Vec<Hysteresis> = Vec::new();
    for (k, v) in variants.iter().enumerate() {
        progress(&format!("model {}", MODELS[k].0));
        let mut h = if k == 0 {
            let opts = TraceOptions {
                tolerance: v.num("solver.tolerance"),
                ..TraceOptions::default()
            };
            let mut h = trace_all(
                &v.model(),
                param,
                from + shift,
                to + shift,
                warm,
                cold,
                &opts,
                &mut progress,
            );
            shift_axis(&mut h, shift);
            h
        } else {
            let sm = v
                .seasonal_model()
                .map_err(|e| CliError::Usage(format!("seasonal model: {e}")))?;
            let s = if k == 1 { shift } else { 0.0 };
            let mut h = trace_seasonal(
                &sm,
                param,
                from + s,
                to + s,
                warm,
                cold,
                &SeasonalTraceOptions::default(),
                &mut progress,
            );
            crate::analysis::branches::drop_unphysical(sm.model(), &mut h);
            shift_axis(&mut h, s);
            h
        };
        h.failures
            .iter_mut()
            .for_each(|f| *f = format!("{}: {f}", MODELS[k].0));
        traces.push(h);
    }
    bar.finish();
    if let Some(k) = traces.iter().position(|h| h.branches.is_empty()) {
        return Err(CliError::Failed(format!(
            "the {} model: no branch could be traced over [{from}, {to}] ({}); nothing written",
            MODELS[k].0,
            traces[k].failures.join("; ")
        )));
    }
    let key = param.key();
    let mut columns = vec!["model"];
    columns.extend(super::trace::branch_columns(key));
    let mut points = Table::new(&columns);
    let mut folds = Table::new(&[
        "model",
        "branch",
        key,
        "global_mean_temperature_c",
        "ice_edge_north_deg",
        "from_state",
    ]);
    let mut curves = Vec::new();
    let mut per_model = Vec::new();
    let mut text = format!(
        "{}: the model hierarchy in {key} over [{from}, {to}]\n",
        sc.name()
    );
    for (k, h) in traces.iter().enumerate() {
        let name = MODELS[k].0;
        for b in &h.branches {
            for q in &b.points {
                let mut row = vec![Cell::Text(name.into())];
                row.extend(super::trace::branch_row(b.id, q));
                points.push_row(row);
            }
            for f in &b.folds {
                let d = &f.point.diagnostics;
                folds.push_row(vec![
                    Cell::Text(name.into()),
                    Cell::Int(b.id as i64),
                    Cell::Num(f.point.p),
                    Cell::Num(d.global_mean_c),
                    Cell::Num(poleward_edge_deg(d)),
                    Cell::Text(f.from_state.label().into()),
                ]);
            }
        }
        let mut fold_values: Vec<(f64, f64, &str)> = h
            .branches
            .iter()
            .flat_map(|b| b.folds.iter())
            .map(|f| {
                (
                    f.point.p,
                    poleward_edge_deg(&f.point.diagnostics),
                    f.from_state.label(),
                )
            })
            .collect();
        fold_values.sort_by(|a, b| a.0.total_cmp(&b.0));
        text += &format!(
            "  {:<18} {} branches, {} folds",
            name,
            h.branches.len(),
            fold_values.len()
        );
        if h.bistable.is_empty() {
            text += ", no bistable window\n";
        } else {
            let w: Vec<String> = h
                .bistable
                .iter()
                .map(|(a, b)| format!("{a:.6} to {b:.6}"))
                .collect();
            text += &format!(", bistable from {}\n", w.join(", "));
        }
        per_model.push(serde_json::json!({
            "model": name,
            "branches": h.branches.len(),
            "points": h.branches.iter().map(|b| b.points.len()).sum::<usize>(),
            "folds": fold_values.iter().map(|(p, e, s)| serde_json::json!({"value": p, "ice_edge_north_deg": e, "from_state": s})).collect::<Vec<_>>(),
            "bistable_windows": h.bistable.iter().map(|(a, b)| serde_json::json!({"from": a, "to": b})).collect::<Vec<_>>(),
            "failures": h.failures,
        }));
        curves.push(ModelCurves {
            label: MODELS[k].1.into(),
            branches: super::trace::branch_curves(h),
        });
    }
    let fig = if !args.figures.any() {
        None
    } else {
        Some(plot::hierarchy_figure(
            args.figures,
            &format!("Branches of climates in the model hierarchy: {}", sc.name()),
            key,
            &curves,
        )?)
    };
    let dir = out_dir(args);
    let mut out = OutputSet::new();
    out.add_table(dir.join("hierarchy.csv"), &points)?;
    out.add_table(dir.join("hierarchy_folds.csv"), &folds)?;
    let mut summary = provenance(&sc, args);
    summary.insert("vary".into(), key.into());
    summary.insert("range".into(), serde_json::json!([from, to]));
    summary.insert("models".into(), per_model.into());
    summary.insert("ocean_heat_flux_as_forcing_wm2".into(), fb.into());
    out.add_json(dir.join("summary.json"), &summary);
    if let Some(fig) = fig {
        fig.add_to(&mut out, &dir, "hierarchy");
    }
    out.add_text(dir.join("scenario.toml"), &base);
    let written = super::context::publish(out, &dir, args)?;
    Ok(text + &written_list(&written))
}

/// The scenario of each model of the hierarchy ([`MODELS`], in order),
/// the same planet in each: `sc` with the `--set` lines of `args` and then
/// those of the model, and the ocean heat flux F_b
/// (`seaice.ocean_heat_flux`), which the sea-ice model adds under its mixed
/// layer everywhere, added to the forcing of (a) and (b):
/// `radiation.forcing` = F + F_b there. Used by `trace --hierarchy` and
/// `map --hierarchy`. Errors (exit 2): a model's scenario that does not
/// validate, or a scenario the seasonal models refuse (e.g. a symmetric
/// grid), naming the model.
pub(super) fn hierarchy_scenarios(args: &Args, sc: &Scenario) -> Result<Vec<Scenario>, CliError> {
    let base = sc.to_toml();
    // the same planet in every model: the ocean heat flux F_b that the
    // sea-ice model takes from below enters (a) and (b) as a forcing
    let fb = sc.num("seaice.ocean_heat_flux");
    let f0 = sc.num("radiation.forcing");
    let variants: Vec<Scenario> = MODELS
        .iter()
        .enumerate()
        .map(|(k, (_, _, sets))| {
            let mut all = args.sets.clone();
            all.extend(sets.iter().map(|s| s.to_string()));
            if k < 2 {
                all.push(format!("radiation.forcing={}", f0 + fb));
            }
            Scenario::parse(&base, &sc.source, &all)
        })
        .collect::<Result<_, _>>()?;
    // the seasonal models need the full grid: say so before computing
    for (v, (name, _, _)) in variants.iter().zip(&MODELS).skip(1) {
        v.seasonal_model().map_err(|e| {
            CliError::Usage(format!(
                "--hierarchy: the {name} model refuses this scenario: {e}"
            ))
        })?;
    }
    Ok(variants)
}

/// Moves a trace in `radiation.forcing` made at F + s onto the axis of F:
/// every point, fold, jump target, window and the range by -s.
fn shift_axis(h: &mut Hysteresis, s: f64) {
    if s == 0.0 {
        return;
    }
    for b in &mut h.branches {
        for q in &mut b.points {
            q.p -= s;
        }
        for f in &mut b.folds {
            f.point.p -= s;
            if let Some(j) = f.jump_to.as_mut() {
                j.p -= s;
            }
        }
    }
    for w in &mut h.bistable {
        w.0 -= s;
        w.1 -= s;
    }
    h.range = (h.range.0 - s, h.range.1 - s);
}
