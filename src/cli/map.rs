//! `icefold map`: regime maps over two parameters (shards and `merge`:
//! [`super::shard`]).
use super::context::{Args, CliError, VERSION, load, written_list};
use super::progress::Progress;
use super::shard::{SHARD_FORMAT, ShardFile};
use crate::analysis::sweep::{
    MapModel, MapSpec, STATES, Slice, join_boundaries, regime_label, state_bit,
};
use crate::cli::trace::parse_range;
use crate::io::export::{Cell, OutputSet, Table};
use crate::io::netcdf::{FILL_F64, FILL_I32, NcFile};
use crate::io::plot;
use crate::model::Param;
use rayon::prelude::*;
use std::path::{Path, PathBuf};

pub(super) fn usage(msg: String) -> CliError {
    CliError::Usage(msg)
}

/// Parses `KEY=FROM:TO:COUNT`.
pub(super) fn parse_across(
    text: &str,
    model: &crate::model::Model,
) -> Result<(Param, f64, f64, usize), CliError> {
    let bad = |why: &str| {
        usage(format!(
            "--across `{text}`: {why} (expected KEY=FROM:TO:COUNT, e.g. orbit.obliquity=0:90:91)"
        ))
    };
    let (key, range) = text.split_once('=').ok_or_else(|| bad("no `=`"))?;
    let param =
        Param::from_key(key.trim()).ok_or_else(|| bad("not a parameter that can be varied"))?;
    if !model.has_param(param) {
        return Err(bad("this key does not apply to the scenario"));
    }
    let parts: Vec<&str> = range.split(':').collect();
    if parts.len() != 3 {
        return Err(bad("need three fields after `=`"));
    }
    let num = |s: &str| s.trim().parse::<f64>().ok().filter(|x| x.is_finite());
    let from = num(parts[0]).ok_or_else(|| bad("FROM is not a finite number"))?;
    let to = num(parts[1]).ok_or_else(|| bad("TO is not a finite number"))?;
    let count: usize = parts[2]
        .trim()
        .parse()
        .map_err(|_| bad("COUNT is not a whole number"))?;
    if count < 2 {
        return Err(bad("COUNT must be at least 2"));
    }
    if count > 100_000 {
        return Err(bad("COUNT must be at most 100000"));
    }
    if from >= to {
        return Err(bad("the range is empty or inverted (need FROM < TO)"));
    }
    let (lo, hi) = param.range();
    if from < lo || to > hi {
        return Err(bad(&format!("{key} must stay within {lo} to {hi}")));
    }
    Ok((param, from, to, count))
}

fn parse_count(
    flag: &str,
    v: &Option<String>,
    default: usize,
    lo: usize,
    hi: usize,
) -> Result<usize, CliError> {
    match v {
        None => Ok(default),
        Some(s) => match s.trim().parse::<usize>() {
            Ok(n) if (lo..=hi).contains(&n) => Ok(n),
            _ => Err(usage(format!(
                "{flag} `{s}`: expected a whole number from {lo} to {hi}"
            ))),
        },
    }
}

fn parse_shard(v: &Option<String>) -> Result<Option<(usize, usize)>, CliError> {
    let Some(s) = v else { return Ok(None) };
    let bad = || {
        usage(format!(
            "--shard `{s}`: expected K/N with 0 <= K < N, e.g. --shard 0/4"
        ))
    };
    let (k, n) = s.split_once('/').ok_or_else(bad)?;
    let k: usize = k.trim().parse().map_err(|_| bad())?;
    let n: usize = n.trim().parse().map_err(|_| bad())?;
    if n == 0 || k >= n {
        return Err(bad());
    }
    Ok(Some((k, n)))
}

/// The model the scenario asks for: the seasonal model (with sea ice
/// where `seaice.enabled`) when `seasons.enabled`, else the annual-mean
/// model. Never a substitute: sea ice without seasons, or a seasonal model
/// the scenario cannot build, is a usage error naming the key.
pub(super) fn map_model(sc: &crate::io::scenario::Scenario) -> Result<MapModel, CliError> {
    if sc.flag("seasons.enabled") {
        return sc.seasonal_model().map(MapModel::Seasonal).map_err(|e| {
            usage(format!(
                "`seasons.enabled` = true, but the seasonal model refuses this scenario: {e}"
            ))
        });
    }
    if sc.flag("seaice.enabled") {
        return Err(usage(
            "`seaice.enabled` = true needs `seasons.enabled` = true (sea ice is part of the seasonal model): set seasons.enabled = true for a seasonal map with sea ice, or seaice.enabled = false for the annual-mean map".into(),
        ));
    }
    Ok(MapModel::Annual(sc.model()))
}

/// Why the map model cannot take `param` on the axis named by `flag`
/// (`--across` or `--vary`), if it cannot: the seasonal model with sea ice
/// does not use `albedo.threshold` (ice where the enthalpy is negative),
/// and a seasonal model whose insolation is not orbital does not depend on
/// `orbit.obliquity` or `orbit.eccentricity` (its insolation tables ignore
/// the orbit).
pub(super) fn seasonal_key_error(mm: &MapModel, flag: &str, param: Param) -> Option<String> {
    let MapModel::Seasonal(sm) = mm else {
        return None;
    };
    let key = param.key();
    if sm.has_sea_ice() && param == Param::Threshold {
        return Some(format!(
            "{flag} {key}: the seasonal model with sea ice does not use {key} (ice is where the surface enthalpy is negative); choose another key or set seaice.enabled = false"
        ));
    }
    let orbital = matches!(
        sm.model().planet.insolation,
        crate::physics::insolation::InsolationLaw::Orbital
    );
    if !orbital && matches!(param, Param::Obliquity | Param::Eccentricity) {
        return Some(format!(
            "{flag} {key}: the seasonal model with insolation.kind = \"{}\" does not depend on {key} (only orbital insolation follows the orbit); choose another key or set insolation.kind = \"orbital\"",
            insolation_kind(sm.model())
        ));
    }
    None
}

fn insolation_kind(m: &crate::model::Model) -> &'static str {
    use crate::physics::insolation::InsolationLaw;
    match m.planet.insolation {
        InsolationLaw::Orbital => "orbital",
        InsolationLaw::Legendre { .. } => "legendre",
        InsolationLaw::Idealised { .. } => "idealised",
    }
}

/// Runs `map`.
pub fn cmd_map(args: &Args) -> Result<String, CliError> {
    let sc = load(args)?;
    // the scenario's own model: periodic climates for a seasonal scenario,
    // never an annual-mean map in its place
    let mm = map_model(&sc)?;
    let model = mm.annual();
    let across_text = args
        .across
        .clone()
        .unwrap_or_else(|| "orbit.obliquity=0:90:91".into());
    let (across, a_from, a_to, count) = parse_across(&across_text, &model)?;
    let (vary, v_from, v_to) = parse_range(args, &model)?;
    if across == vary {
        return Err(usage(format!(
            "--across and --vary are both `{}`: choose two different keys",
            vary.key()
        )));
    }
    let flags = [
        if args.across.is_some() {
            "--across"
        } else {
            "--across (default)"
        },
        if args.vary.is_some() {
            "--vary"
        } else {
            "--vary (default)"
        },
    ];
    for (flag, p) in flags.into_iter().zip([across, vary]) {
        if let Some(e) = seasonal_key_error(&mm, flag, p) {
            return Err(usage(e));
        }
    }
    if args.fold_curves && matches!(mm, MapModel::Seasonal(_)) {
        return Err(usage(format!(
            "--fold-curves: folds are continued in two parameters for the annual-mean model only, and this scenario's model is {} (a seasonal map joins the folds of its slices); drop --fold-curves",
            mm.name()
        )));
    }
    let cells = parse_count("--cells", &args.cells, 200, 2, 100_000)?;
    let threads = parse_count("--threads", &args.threads, 0, 1, 1024).or_else(|e| {
        if args.threads.is_none() {
            Ok(0)
        } else {
            Err(e)
        }
    })?;
    let shard = parse_shard(&args.shard)?;
    let spec = MapSpec {
        across: across.key().into(),
        across_from: a_from,
        across_to: a_to,
        count,
        vary: vary.key().into(),
        vary_from: v_from,
        vary_to: v_to,
        cells,
        fold_curves: !args.no_fold_curves && matches!(mm, MapModel::Annual(_)),
    };
    let indices: Vec<usize> = (0..count)
        .filter(|j| shard.is_none_or(|(k, n)| j % n == k))
        .collect();
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| CliError::Failed(format!("cannot start worker threads: {e}")))?;
    let bar = Progress::bar(
        &format!("map ({})", mm.name()),
        indices.len() as u64,
        "slices",
        args.quiet,
    );
    // rayon only at the outer loop: the dense solves inside a slice (faer:
    // the seasonal model's monodromy LU and Floquet eigenvalues) run on the
    // slice's thread, so a slice's result cannot depend on the pool
    faer::set_global_parallelism(faer::Par::Seq);
    let (warm, cold, tol) = (
        sc.num("solver.warm_start"),
        sc.num("solver.cold_start"),
        sc.num("solver.tolerance"),
    );
    // a cancelled run (Args::cancel) stops between slices
    let slices: Option<Vec<Slice>> = pool.install(|| {
        indices
            .par_iter()
            .map(|&j| {
                if super::context::cancelled(args) {
                    return None;
                }
                let s = mm.slice(&spec, across, vary, j, warm, cold, tol);
                bar.inc();
                Some(s)
            })
            .collect()
    });
    bar.finish();
    let slices = slices.ok_or_else(|| CliError::Failed("interrupted; nothing written".into()))?;
    let dir = args
        .out
        .clone()
        .unwrap_or_else(|| PathBuf::from("out").join("map"));
    let mut out = OutputSet::new();
    if let Some((k, n)) = shard {
        let file = ShardFile {
            format: SHARD_FORMAT.into(),
            tool: format!("icefold {VERSION}"),
            model: mm.name().into(),
            spec: spec.clone(),
            scenario: sc.to_json(),
            scenario_toml: sc.to_toml(),
            shard: (k, n),
            slices,
        };
        let text = serde_json::to_string(&file).map_err(|e| CliError::Failed(e.to_string()))?;
        out.add_text(dir.join(format!("shard-{k}-of-{n}.json")), &text);
        let written = if args.capture.is_some() {
            super::context::publish(out, &dir, args)?
        } else {
            out.commit()?
        };
        return Ok(format!(
            "map shard {k}/{n} ({} model): {} slices\n{}",
            mm.name(),
            file.slices.len(),
            written_list(&written)
        ));
    }
    render(
        &mm,
        &spec,
        &sc.to_json(),
        &sc.to_toml(),
        sc.name(),
        &slices,
        &dir,
        &mut out,
        !args.no_figures,
    )?;
    let written = super::context::publish(out, &dir, args)?;
    Ok(map_report(&mm, &spec, tol, &slices) + &written_list(&written))
}

/// The map's stdout report: the model that made it, regimes present,
/// failed slices, traced points above the corrector tolerance
/// ([`MapModel::tolerance`] of `tol`, `solver.tolerance`), notes.
pub(super) fn map_report(mm: &MapModel, spec: &MapSpec, tol: f64, slices: &[Slice]) -> String {
    let (unit, _) = mm.residual();
    let tol = mm.tolerance(tol);
    let mut seen = std::collections::BTreeSet::new();
    for s in slices.iter().filter(|s| !s.points.is_empty()) {
        for r in &s.regime {
            seen.insert(*r);
        }
    }
    let mut s = format!(
        "map: {} slices of {} over {}..{}, traced in {}\n  model: {}\n",
        slices.len(),
        spec.across,
        spec.across_from,
        spec.across_to,
        spec.vary,
        model_line(mm)
    );
    for r in seen {
        s += &format!("  regime present: {}\n", regime_label(r));
    }
    let failed = slices.iter().filter(|s| s.points.is_empty()).count();
    if failed > 0 {
        s += &format!(
            "  {failed} of {} slices failed (no branch traced): their cells are missing values in map.nc (slice_failed = 1), see summary.json failed_slices\n",
            slices.len()
        );
    }
    let pts = slices.iter().flat_map(|s| s.points.iter());
    let above = pts.clone().filter(|q| q.residual > tol).count();
    let total = pts.clone().count();
    if above > 0 {
        let worst = pts.map(|q| q.residual).fold(0.0, f64::max);
        s += &format!(
            "  residual: {above} of {total} traced points stop above the tolerance {tol:e} {unit} at the rounding floor (largest {worst:.3e} {unit}; map.csv {}, map.nc slice_max_residual)\n",
            residual_column(mm)
        );
    }
    let notes: usize = slices.iter().map(|s| s.notes.len()).sum();
    if notes > 0 {
        s += &format!(
            "  {notes} notes (branches ended early or seeds not continued): see summary.json\n"
        );
    }
    s
}

/// The model in one line: its name, steps per year and how stability is
/// decided (stdout report).
fn model_line(mm: &MapModel) -> String {
    match mm.steps_per_year() {
        None => format!("{} (equilibria; stability from the Jacobian)", mm.name()),
        Some(n) => format!(
            "{} ({n} steps per year; periodic climates, stability from the Floquet multipliers)",
            mm.name()
        ),
    }
}

/// The map.csv column of the residual, named with its unit.
fn residual_column(mm: &MapModel) -> &'static str {
    match mm {
        MapModel::Annual(_) => "residual_wm2",
        MapModel::Seasonal(_) => "residual_k",
    }
}

pub(super) fn scenario_num(scenario: &serde_json::Value, key: &str, default: f64) -> f64 {
    scenario
        .get(key)
        .and_then(|v| v.as_f64())
        .unwrap_or(default)
}

fn sanitize(key: &str) -> String {
    key.replace('.', "_")
}

/// Renders the files of a complete map into `out` (staged, not written).
#[allow(clippy::too_many_arguments)]
pub(super) fn render(
    mm: &MapModel,
    spec: &MapSpec,
    scenario: &serde_json::Value,
    scenario_toml: &str,
    name: &str,
    slices: &[Slice],
    dir: &Path,
    out: &mut OutputSet,
    figures: bool,
) -> Result<(), CliError> {
    let (ak, vk) = (spec.across.as_str(), spec.vary.as_str());
    // a slice with no branch traced failed: it is not "no stable climate"
    let failed: Vec<&Slice> = slices.iter().filter(|s| s.points.is_empty()).collect();
    if !slices.is_empty() && failed.len() == slices.len() {
        let s = failed[0];
        return Err(CliError::Failed(format!(
            "every slice of the map failed (no branch traced); slice {} ({ak} = {}): {}; nothing written",
            s.index,
            s.across,
            if s.notes.is_empty() {
                "no seed converged".to_string()
            } else {
                s.notes.join("; ")
            }
        )));
    }
    // map.csv
    let mut t = Table::new(&[
        ak,
        "branch",
        vk,
        "state",
        "stable",
        "unstable_modes",
        "global_mean_temperature_c",
        "ice_area_fraction",
        "ice_edges_deg",
        residual_column(mm),
        "habitable_fraction",
    ]);
    for s in slices {
        for q in &s.points {
            let edges: Vec<String> = q.ice_edges_deg.iter().map(|e| format!("{e}")).collect();
            t.push_row(vec![
                Cell::Num(s.across),
                Cell::Int(q.branch as i64),
                Cell::Num(q.value),
                Cell::Text(q.state.clone()),
                Cell::Bool(q.unstable_modes == 0),
                Cell::modes(q.unstable_modes),
                Cell::Num(q.global_mean_c),
                Cell::Num(q.ice_area_fraction),
                Cell::Text(edges.join(";")),
                Cell::Num(q.residual),
                Cell::Num(q.habitable_fraction),
            ]);
        }
    }
    out.add_table(dir.join("map.csv"), &t)?;
    // boundaries.csv
    let mut bounds = join_boundaries(slices);
    if let (true, MapModel::Annual(model)) = (spec.fold_curves, mm) {
        let (ap, vp) = (
            Param::from_key(ak).expect("validated key"),
            Param::from_key(vk).expect("validated key"),
        );
        let (warm, cold) = (
            scenario_num(scenario, "solver.warm_start", 30.0),
            scenario_num(scenario, "solver.cold_start", -60.0),
        );
        let tol = scenario_num(scenario, "solver.tolerance", 1e-10);
        let extra = crate::analysis::sweep::continue_boundaries(
            model, spec, ap, vp, &bounds, warm, cold, tol,
        );
        bounds.extend(extra);
    }
    let mut bt = Table::new(&["curve", "method", "transition", ak, vk]);
    for (k, b) in bounds.iter().enumerate() {
        for (a, v) in &b.points {
            bt.push_row(vec![
                Cell::Int(k as i64 + 1),
                Cell::Text(b.method.into()),
                Cell::Text(b.transition.clone()),
                Cell::Num(*a),
                Cell::Num(*v),
            ]);
        }
    }
    out.add_table(dir.join("boundaries.csv"), &bt)?;
    // gridded summary
    let xs: Vec<f64> = slices.iter().map(|s| s.across).collect();
    let ys: Vec<f64> = (0..spec.cells).map(|c| spec.cell_value(c)).collect();
    let (nx, ny) = (xs.len(), ys.len());
    let mut regime = vec![0i32; nx * ny];
    let mut count = vec![0i32; nx * ny];
    for (i, s) in slices.iter().enumerate() {
        let bad = s.points.is_empty();
        for j in 0..ny {
            regime[j * nx + i] = if bad { FILL_I32 } else { s.regime[j] as i32 };
            count[j * nx + i] = if bad {
                FILL_I32
            } else {
                s.stable_count[j] as i32
            };
        }
    }
    let nc = map_netcdf(
        mm,
        spec,
        name,
        scenario_toml,
        slices,
        (&xs, &ys),
        (&regime, &count),
    )?;
    out.add_netcdf(dir.join("map.nc"), nc)?;
    // figure
    // (failed slices are drawn as cells without a stable climate; the
    // title says how many)
    let drawn: Vec<u32> = regime
        .iter()
        .map(|r| if *r == FILL_I32 { 0 } else { *r as u32 })
        .collect();
    let mut masks: Vec<u32> = regime
        .iter()
        .filter(|r| **r != FILL_I32)
        .map(|r| *r as u32)
        .collect();
    masks.sort_unstable();
    masks.dedup();
    let names: Vec<String> = masks.iter().map(|m| regime_label(*m)).collect();
    let map = plot::RegimeMap {
        across_key: ak.to_string(),
        vary_key: vk.to_string(),
        across: xs.clone(),
        vary: ys.clone(),
        regime: drawn,
        boundaries: bounds
            .iter()
            .filter(|b| b.points.len() >= 2 && crate::analysis::sweep::is_transition(&b.transition))
            .map(|b| plot::BoundaryLine {
                transition: b.transition.clone(),
                method: plot::BoundaryMethod::from_name(b.method).unwrap_or_default(),
                points: b.points.clone(),
            })
            .collect(),
    };
    let head = match mm {
        MapModel::Annual(_) => "Stable climates".to_string(),
        MapModel::Seasonal(_) => format!("Stable periodic climates ({} model)", mm.name()),
    };
    let title = if failed.is_empty() {
        format!("{head}: {name}")
    } else {
        format!(
            "{head}: {name} ({} of {} slices failed, drawn empty)",
            failed.len(),
            slices.len()
        )
    };
    if figures {
        let fig = plot::regime_figure(&title, &map)?;
        out.add(dir.join("map.svg"), fig.svg);
        out.add(dir.join("map.png"), fig.png);
    }
    // summary
    let notes: Vec<serde_json::Value> = slices
        .iter()
        .filter(|s| !s.notes.is_empty())
        .map(|s| serde_json::json!({ "slice": s.index, ak: s.across, "notes": s.notes }))
        .collect();
    let (unit, measure) = mm.residual();
    let tol = mm.tolerance(scenario_num(scenario, "solver.tolerance", 1e-10));
    let summary = serde_json::json!({
        "tool": format!("icefold {VERSION}"),
        "command": spec.command(),
        "model": mm.name(),
        "steps_per_year": mm.steps_per_year(),
        "stability": mm.stability(),
        "scenario": scenario,
        "spec": spec,
        "regimes": names,
        "boundaries": bounds.iter().map(|b| serde_json::json!({"transition": b.transition, "method": b.method, "points": b.points.len()})).collect::<Vec<_>>(),
        "notes": notes,
        "residual": {
            "measure": measure,
            "unit": unit,
            "tolerance": tol,
            "max": slices.iter().flat_map(|s| s.points.iter()).map(|q| q.residual).fold(0.0, f64::max),
            "points": slices.iter().map(|s| s.points.len()).sum::<usize>(),
            "points_above_tolerance": slices.iter().flat_map(|s| s.points.iter()).filter(|q| q.residual > tol).count(),
        },
        "failed_slices": failed
            .iter()
            .map(|s| serde_json::json!({ "slice": s.index, ak: s.across, "reasons": s.notes }))
            .collect::<Vec<_>>(),
    });
    out.add_json(dir.join("summary.json"), &summary);
    out.add_text(dir.join("scenario.toml"), scenario_toml);
    Ok(())
}

/// The CF-1.8 NetCDF content of `map.nc`: the slice and cell axes (the
/// cells with their bounds), per cell the regime mask and the number of
/// stable climates, and per cell and climate (warmest first, `_FillValue`
/// past a cell's count) its state, global mean temperature, ice edges
/// (most poleward per hemisphere) and habitable fraction. `xs`, `ys` are the axes, `regime`, `count` the per-cell grids
/// (index `j * xs.len() + i`).
fn map_netcdf(
    mm: &MapModel,
    spec: &MapSpec,
    name: &str,
    scenario_toml: &str,
    slices: &[Slice],
    (xs, ys): (&[f64], &[f64]),
    (regime, count): (&[i32], &[i32]),
) -> Result<NcFile, CliError> {
    let (ak, vk) = (spec.across.as_str(), spec.vary.as_str());
    let (nx, ny) = (xs.len(), ys.len());
    let nclim = slices
        .iter()
        .flat_map(|s| s.climates.iter().map(Vec::len))
        .max()
        .unwrap_or(0)
        .max(1);
    let mut state = vec![FILL_I32; ny * nx * nclim];
    let mut mean = vec![FILL_F64; ny * nx * nclim];
    let mut north = vec![FILL_F64; ny * nx * nclim];
    let mut south = vec![FILL_F64; ny * nx * nclim];
    let mut habitable = vec![FILL_F64; ny * nx * nclim];
    for (i, s) in slices.iter().enumerate() {
        for (j, cell) in s.climates.iter().enumerate().take(ny) {
            for (k, c) in cell.iter().enumerate() {
                let at = (j * nx + i) * nclim + k;
                state[at] = c.state as i32;
                mean[at] = c.global_mean_c;
                north[at] = c.ice_edge_north_deg;
                south[at] = c.ice_edge_south_deg;
                habitable[at] = c.habitable_fraction;
            }
        }
    }
    // cell edges, by the formula of MapSpec::cell_value
    let edge =
        |c: usize| spec.vary_from + (spec.vary_to - spec.vary_from) * c as f64 / spec.cells as f64;
    let bnds: Vec<f64> = (0..ny).flat_map(|c| [edge(c), edge(c + 1)]).collect();
    let mut nc = NcFile::new();
    let across_p = Param::from_key(ak).expect("validated key");
    let vary_p = Param::from_key(vk).expect("validated key");
    let (adim, vdim) = (sanitize(ak), sanitize(vk));
    let bdim = format!("{vdim}_bnds");
    nc.add_dim(&vdim, ny)?;
    nc.add_dim(&adim, nx)?;
    nc.add_dim("climate", nclim)?;
    nc.add_dim("nv", 2)?;
    let cell3 = [vdim.as_str(), adim.as_str(), "climate"];
    let cell2 = [vdim.as_str(), adim.as_str()];
    let v = nc.add_var_f64(&adim, &[&adim], xs.to_vec())?;
    nc.var_attrs_text(
        v,
        &[
            ("long_name", &format!("{ak} (slice parameter)")),
            ("units", across_p.unit()),
            ("axis", "X"),
        ],
    );
    let v = nc.add_var_f64(&vdim, &[&vdim], ys.to_vec())?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                &format!("{vk} (traced parameter, cell centres)"),
            ),
            ("units", vary_p.unit()),
            ("axis", "Y"),
            ("bounds", &bdim),
        ],
    );
    let v = nc.add_var_f64(&bdim, &[&vdim, "nv"], bnds)?;
    nc.var_attrs_text(
        v,
        &[
            ("long_name", &format!("{vk} at the edges of each cell")),
            ("units", vary_p.unit()),
        ],
    );
    let v = nc.add_var_i32("climate", &["climate"], (1..=nclim as i32).collect())?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "number of the stable climate within its cell (warmest first)",
            ),
            ("units", "1"),
        ],
    );
    let meanings = "ice_free polar_caps equatorial_belt snowball other";
    let bits: Vec<i32> = STATES.iter().map(|s| state_bit(*s) as i32).collect();
    let v = nc.add_var_i32("regime", &cell2, regime.to_vec())?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "stable climates present (bit mask of their states)",
            ),
            ("units", "1"),
        ],
    );
    nc.var_attr_i32(v, "flag_masks", &bits);
    nc.var_attr_text(v, "flag_meanings", meanings);
    nc.var_attr_i32(v, "_FillValue", &[FILL_I32]);
    let v = nc.add_var_i32("stable_climates", &cell2, count.to_vec())?;
    nc.var_attrs_text(
        v,
        &[
            ("long_name", "number of coexisting stable climates"),
            ("units", "1"),
        ],
    );
    nc.var_attr_i32(v, "_FillValue", &[FILL_I32]);
    let flags: Vec<i32> = slices.iter().map(|s| s.points.is_empty() as i32).collect();
    let v = nc.add_var_i32("slice_failed", &[adim.as_str()], flags)?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "whether the slice failed (no branch traced; its cells are missing values)",
            ),
            ("units", "1"),
            ("flag_meanings", "computed failed"),
        ],
    );
    nc.var_attr_i32(v, "flag_values", &[0, 1]);
    let worst: Vec<f64> = slices
        .iter()
        .map(|s| {
            if s.points.is_empty() {
                FILL_F64
            } else {
                s.points.iter().map(|q| q.residual).fold(0.0, f64::max)
            }
        })
        .collect();
    let v = nc.add_var_f64("slice_max_residual", &[adim.as_str()], worst)?;
    let (unit, measure) = mm.residual();
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                &format!("largest residual over the slice's traced points: {measure}"),
            ),
            ("units", unit),
            (
                "comment",
                &format!(
                    "above the corrector tolerance where Newton reached the rounding floor of double precision (see map.csv {})",
                    residual_column(mm)
                ),
            ),
        ],
    );
    nc.var_attr_f64(v, "_FillValue", &[FILL_F64]);
    let v = nc.add_var_i32("state", &cell3, state)?;
    nc.var_attrs_text(
        v,
        &[
            ("long_name", "state of each stable climate of the cell"),
            ("units", "1"),
        ],
    );
    nc.var_attr_i32(v, "_FillValue", &[FILL_I32]);
    nc.var_attr_i32(v, "flag_values", &bits);
    nc.var_attr_text(v, "flag_meanings", meanings);
    let v = nc.add_var_f64("global_mean_temperature", &cell3, mean)?;
    nc.var_attr_f64(v, "_FillValue", &[FILL_F64]);
    nc.var_attrs_text(
        v,
        &[
            ("standard_name", "surface_temperature"),
            (
                "long_name",
                "global (area-weighted) mean surface temperature of each stable climate",
            ),
            ("units", "degC"),
            ("cell_methods", "area: mean"),
        ],
    );
    for (var, data, text) in [
        (
            "ice_edge_north_deg",
            north,
            "most poleward ice edge of the northern hemisphere of each stable climate (90 with no ice there, 0 when all of the hemisphere is ice)",
        ),
        (
            "ice_edge_south_deg",
            south,
            "most poleward ice edge of the southern hemisphere of each stable climate (-90 with no ice there, 0 when all of the hemisphere is ice)",
        ),
    ] {
        let v = nc.add_var_f64(var, &cell3, data)?;
        nc.var_attr_f64(v, "_FillValue", &[FILL_F64]);
        nc.var_attrs_text(v, &[("long_name", text), ("units", "degrees_north")]);
    }
    let v = nc.add_var_f64("habitable_fraction", &cell3, habitable)?;
    nc.var_attr_f64(v, "_FillValue", &[FILL_F64]);
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "habitable fraction of the surface of each stable climate (area with habitability.min_c <= T <= habitability.max_c)",
            ),
            ("units", "1"),
            (
                "comment",
                "the temperature profile is taken piecewise linear between band centres; area is uniform in sin(latitude)",
            ),
        ],
    );
    nc.var_attr_f64(v, "valid_min", &[0.0]);
    nc.var_attr_f64(v, "valid_max", &[1.0]);
    nc.global_attr_text("Conventions", "CF-1.8");
    nc.global_attr_text("title", &format!("Regime map: {name}"));
    nc.global_attr_text("source", &format!("icefold {VERSION}"));
    nc.global_attr_text("history", &spec.command());
    nc.global_attr_text("model", mm.name());
    if let Some(n) = mm.steps_per_year() {
        nc.global_attr_i32("steps_per_year", &[n as i32]);
    }
    nc.global_attr_text("stability", mm.stability());
    let what = match mm {
        MapModel::Annual(_) => "equilibria of the annual-mean model",
        MapModel::Seasonal(_) => {
            "periodic climates of the seasonal model (each reported by its annual-mean profile)"
        }
    };
    nc.global_attr_text(
        "comment",
        &format!(
            "One slice per value of {ak}: the {what}, traced by continuation in {vk}. The traced range is summarised on {} cells: the stable climates of a cell are the stable branch segments spanning its centre, each with the values of the traced point nearest the centre.",
            spec.cells
        ),
    );
    nc.global_attr_text("scenario", scenario_toml);
    Ok(nc)
}
