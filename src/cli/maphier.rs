//! `icefold map --hierarchy`: the map of one planet in each model of the
//! hierarchy ((a) annual mean, (b) seasonal, (c) seasonal with sea ice,
//! built by [`super::hierarchy::hierarchy_scenarios`] as `trace
//! --hierarchy` builds them), side by side in one set of files: which
//! regimes and boundaries survive which physics.
use super::context::{Args, CliError, VERSION, load, written_list};
use super::hierarchy::{MODELS, hierarchy_scenarios};
use super::map::{MapJob, MapPlan, compute_slices, map_model, map_report, plan, usage};
use super::mapnc::{NcPart, map_netcdf};
use super::mapout::{MapWriter, Rendered, scenario_num};
use crate::analysis::sweep::{MapModel, is_transition};
use crate::io::export::OutputSet;
use crate::io::plot;
use crate::model::Param;
use std::path::PathBuf;

/// Prefixes a usage error of one model's map with the model's name.
fn of_model(name: &str, e: CliError) -> CliError {
    match e {
        CliError::Usage(m) => usage(format!("--hierarchy, the {name} model: {m}")),
        other => other,
    }
}

/// The lines of a CSV after its header.
fn body(csv: &[u8]) -> &[u8] {
    match csv.iter().position(|b| *b == b'\n') {
        Some(i) => &csv[i + 1..],
        None => &[],
    }
}

/// Runs `map --hierarchy`: the same sweep (`--across`, `--vary`, `--from`,
/// `--to`, `--cells`) for each model of the hierarchy, each computed
/// exactly as a plain `map` of that model's scenario (the slices of all
/// three in one pool of workers, handed on model by model in slice order,
/// so nothing depends on the threads). Writes `map.csv` and
/// `boundaries.csv` (the rows of the three maps with a leading `model`
/// column; `map.csv` with both `residual_wm2` and `residual_k`, the
/// other model's empty), `map.nc` (a `model`
/// dimension before the map's own), `summary.json` (per model the
/// `summary.json` its plain map writes), `map_hierarchy.svg/.png` (the
/// models' boundaries overlaid) and `scenario.toml`.
///
/// Refused (exit 2): `--shard` (no shard files of several models),
/// `--fold-curves` (the seasonal models have no fold curves), a
/// `radiation.forcing` axis with a nonzero `seaice.ocean_heat_flux` F_b
/// (models (a) and (b) carry F_b inside their forcing, so one axis of F
/// would not be the same planet in the three models), and whatever one
/// model's map refuses, named with its model.
pub fn cmd_map_hierarchy(args: &Args) -> Result<String, CliError> {
    if args.shard.is_some() {
        return Err(usage(
            "--shard: not with --hierarchy (a hierarchy map computes three models in one run and writes no shard files); drop --shard, or shard the map of each model on its own (--set seasons.enabled=... --set seaice.enabled=...)".into(),
        ));
    }
    if args.fold_curves {
        return Err(usage(
            "--fold-curves: not with --hierarchy (folds are continued in two parameters for the annual-mean model only, and (b) and (c) are seasonal); drop it: model (a) continues its folds by default (--no-fold-curves turns that off)".into(),
        ));
    }
    let sc = load(args)?;
    let fb = sc.num("seaice.ocean_heat_flux");
    let variants = hierarchy_scenarios(args, &sc)?;
    let mut models: Vec<MapModel> = Vec::new();
    let mut plans: Vec<MapPlan> = Vec::new();
    for (v, (name, _, _)) in variants.iter().zip(&MODELS) {
        let mm = map_model(v).map_err(|e| of_model(name, e))?;
        plans.push(plan(args, &mm).map_err(|e| of_model(name, e))?);
        models.push(mm);
    }
    let first = &plans[0];
    let forcing_axis = first.vary == Param::Forcing
        || first.across == Param::Forcing
        || first
            .spec
            .more
            .iter()
            .any(|a| a.key == Param::Forcing.key());
    if forcing_axis && fb != 0.0 {
        return Err(usage(format!(
            "--hierarchy with radiation.forcing as --vary or --across: the annual-mean and seasonal models carry the sea-ice model's ocean heat flux seaice.ocean_heat_flux = {fb} W m-2 inside their forcing, so one axis of F is not the same planet in the three models; map another key (e.g. orbit.flux), or set seaice.ocean_heat_flux = 0"
        )));
    }
    // one grid for all: the models differ in physics, never in the map
    for (k, p) in plans.iter().enumerate() {
        let mut spec = p.spec.clone();
        spec.fold_curves = plans[2].spec.fold_curves;
        if spec != plans[2].spec {
            return Err(CliError::Failed(format!(
                "internal: the {} model's map grid ({}) is not that of the others ({}); nothing written",
                MODELS[k].0,
                spec.command(),
                plans[2].spec.command()
            )));
        }
    }
    let tol = sc.num("solver.tolerance");
    let scenarios: Vec<serde_json::Value> = variants.iter().map(|v| v.to_json()).collect();
    let mut writers: Vec<MapWriter> = models
        .iter()
        .zip(&plans)
        .zip(&scenarios)
        .enumerate()
        .map(|(k, ((mm, p), scenario))| {
            MapWriter::new(
                mm,
                &p.spec,
                scenario_num(scenario, "solver.tolerance", 1e-10),
            )
            .with_model_column(MODELS[k].0)
        })
        .collect();
    // every model's slices in one pool, handed on model by model
    let jobs: Vec<MapJob> = variants
        .iter()
        .zip(&models)
        .zip(&plans)
        .map(|((sc, mm), plan)| MapJob { sc, mm, plan })
        .collect();
    compute_slices(args, &jobs, "map --hierarchy", |k, s| writers[k].push(s))?;
    let mut rendered: Vec<Rendered> = Vec::new();
    let mut reports = String::new();
    for (k, (((w, mm), p), v)) in writers
        .into_iter()
        .zip(&models)
        .zip(&plans)
        .zip(&variants)
        .enumerate()
    {
        let (name, label, _) = MODELS[k];
        let (r, _) = w
            .render(&scenarios[k], v.name(), plot::Formats::None)
            .map_err(|e| match e {
                CliError::Failed(m) => CliError::Failed(format!("the {name} model: {m}")),
                other => other,
            })?;
        reports += &format!("{label}:\n{}", map_report(mm, &p.spec, tol, &r.tally));
        rendered.push(r);
    }
    // the command that reproduces the hierarchy map: the grid of the maps,
    // and --no-fold-curves when model (a) left its folds alone
    let command = format!(
        "{}{} --hierarchy",
        plans[2]
            .spec
            .command()
            .trim_end_matches(" --no-fold-curves"),
        if plans[0].spec.fold_curves {
            ""
        } else {
            " --no-fold-curves"
        }
    );
    let dir = args
        .out
        .clone()
        .unwrap_or_else(|| PathBuf::from("out").join("map"));
    let mut out = OutputSet::new();
    let mut csv = Vec::new();
    let mut bounds_csv = Vec::new();
    for (k, r) in rendered.iter_mut().enumerate() {
        let b = r.boundaries.to_csv()?.into_bytes();
        if k == 0 {
            csv.append(&mut r.csv);
            bounds_csv.extend_from_slice(&b);
        } else {
            csv.extend_from_slice(body(&r.csv));
            bounds_csv.extend_from_slice(body(&b));
        }
    }
    out.add(dir.join("map.csv"), csv);
    out.add(dir.join("boundaries.csv"), bounds_csv);
    let spec = &plans[2].spec;
    let ys = rendered[0].ys.clone();
    // the figure before map.nc takes the slices' climates (it needs none)
    let fig = if args.figures.any() {
        Some(figure(args.figures, sc.name(), &plans, &rendered)?)
    } else {
        None
    };
    let mut parts: Vec<NcPart> = rendered
        .iter_mut()
        .zip(&models)
        .enumerate()
        .map(|(k, (r, mm))| NcPart {
            mm,
            model: Some(MODELS[k].0),
            slices: &mut r.kept,
            regime: &r.regime,
            count: &r.count,
        })
        .collect();
    let nc = map_netcdf(
        &mut parts,
        spec,
        &format!("{} (model hierarchy)", sc.name()),
        &sc.to_toml(),
        &ys,
        &command,
    )?;
    out.add_netcdf(dir.join("map.nc"), nc)?;
    if let Some(fig) = fig {
        fig.add_to(&mut out, &dir, "map_hierarchy");
    }
    // (the command without --threads and --out, as a plain map's: the
    // same bytes whatever the threads)
    let mut summary = serde_json::Map::new();
    summary.insert("tool".into(), format!("icefold {VERSION}").into());
    summary.insert("command".into(), command.clone().into());
    summary.insert("scenario".into(), sc.to_json());
    summary.insert("ocean_heat_flux_as_forcing_wm2".into(), fb.into());
    summary.insert(
        "models".into(),
        rendered
            .iter()
            .enumerate()
            .map(|(k, r)| {
                serde_json::json!({
                    "model": MODELS[k].0,
                    "label": MODELS[k].1,
                    "map": r.summary,
                })
            })
            .collect::<Vec<_>>()
            .into(),
    );
    out.add_json(dir.join("summary.json"), &summary);
    out.add_text(dir.join("scenario.toml"), &sc.to_toml());
    let written = super::context::publish(out, &dir, args)?;
    Ok(format!(
        "map --hierarchy: {}, the same map in {} models\n{reports}{}",
        sc.name(),
        MODELS.len(),
        written_list(&written)
    ))
}

/// The figure comparing the models' regime boundaries (those drawn on a
/// plain map's figure: transitions of at least two points, at the first
/// value of every further across key).
fn figure(
    formats: plot::Formats,
    name: &str,
    plans: &[MapPlan],
    rendered: &[Rendered],
) -> Result<plot::Figure, CliError> {
    let spec = &plans[2].spec;
    let models: Vec<plot::ModelBoundaries> = rendered
        .iter()
        .enumerate()
        .map(|(k, r)| plot::ModelBoundaries {
            label: MODELS[k].1.into(),
            lines: r
                .bounds
                .iter()
                .filter(|(i, b)| *i == 0 && b.points.len() >= 2 && is_transition(&b.transition))
                .map(|(_, b)| plot::BoundaryLine {
                    transition: b.transition.clone(),
                    method: plot::BoundaryMethod::from_name(b.method).unwrap_or_default(),
                    points: b.points.clone(),
                })
                .collect(),
        })
        .collect();
    let at: String = spec
        .more
        .iter()
        .map(|a| format!(", {} = {}", a.key, a.from))
        .collect();
    let title = if at.is_empty() {
        format!("Regime boundaries in the model hierarchy: {name}")
    } else {
        format!(
            "Regime boundaries in the model hierarchy at {}: {name}",
            &at[2..]
        )
    };
    Ok(plot::hierarchy_map_figure(
        formats,
        &title,
        (&spec.across, (spec.across_from, spec.across_to)),
        (&spec.vary, (spec.vary_from, spec.vary_to)),
        &models,
    )?)
}
