//! `icefold map`: regime maps over one traced parameter and one to
//! 4 slice parameters (the files: `super::mapout`;
//! shards and `merge`: [`super::shard`]).
use super::context::{Args, CliError, VERSION, load, written_list};
use super::mapout::{MapWriter, Tally, residual_column, scenario_num};
use super::progress::Progress;
use super::shard::{SHARD_FORMAT, ShardFile};
use crate::analysis::ordered::{OrderedStop, run_ordered};
use crate::analysis::sweep::{AcrossAxis, MapModel, MapSpec, Slice, regime_label};
use crate::cli::trace::parse_range;
use crate::io::export::OutputSet;
use crate::model::Param;
use std::path::PathBuf;

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

pub(super) fn parse_count(
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

/// Most `--across` keys a map takes.
pub(super) const MAX_ACROSS_KEYS: usize = 4;

/// Most slices a map takes (the product of the `--across` counts).
pub(super) const MAX_SLICES: usize = 1_000_000;

/// The parsed `--across` options of a map.
pub(super) struct Acrosses {
    /// Every across parameter, in the order given.
    pub(super) params: Vec<Param>,
    /// The first key's FROM, TO, COUNT.
    pub(super) first: (f64, f64, usize),
    /// The further keys.
    pub(super) more: Vec<AcrossAxis>,
}

/// Parses every `--across` (the first the slowest in slice order) into
/// the map's first key and its further axes; refuses a key given twice,
/// an across key equal to `vary`, more than [`MAX_ACROSS_KEYS`] keys and a
/// product of more than [`MAX_SLICES`] slices.
pub(super) fn parse_acrosses(
    texts: &[String],
    model: &crate::model::Model,
    vary: Param,
) -> Result<Acrosses, CliError> {
    if texts.len() > MAX_ACROSS_KEYS {
        return Err(usage(format!(
            "--across given {} times: a map takes 1 to {MAX_ACROSS_KEYS} across keys",
            texts.len()
        )));
    }
    let mut params: Vec<Param> = Vec::new();
    let mut first = (0.0, 0.0, 0);
    let mut more = Vec::new();
    let mut slices: usize = 1;
    for (k, text) in texts.iter().enumerate() {
        let (p, from, to, count) = parse_across(text, model)?;
        if p == vary {
            return Err(usage(format!(
                "--across and --vary are both `{}`: choose two different keys",
                vary.key()
            )));
        }
        if params.contains(&p) {
            return Err(usage(format!(
                "--across `{text}`: the key {} is given twice (each across key once)",
                p.key()
            )));
        }
        slices = slices.saturating_mul(count);
        if slices > MAX_SLICES {
            return Err(usage(format!(
                "--across: the product of the COUNTs is over {MAX_SLICES} slices (at `{text}`); use fewer values or split the map"
            )));
        }
        params.push(p);
        if k == 0 {
            first = (from, to, count);
        } else {
            more.push(AcrossAxis {
                key: p.key().into(),
                from,
                to,
                count,
            });
        }
    }
    Ok(Acrosses {
        params,
        first,
        more,
    })
}

/// Slices a worker may finish ahead of the next one to be written, per
/// thread ([`crate::analysis::ordered::run_ordered`]).
const WINDOW_PER_THREAD: usize = 4;

/// A map's options, checked against the model that computes it: the
/// grid ([`MapSpec`]), the across and traced parameters, the worker count
/// and the shard.
pub(super) struct MapPlan {
    /// The map's grid and command.
    pub(super) spec: MapSpec,
    /// The first across parameter.
    pub(super) across: Param,
    /// The traced parameter.
    pub(super) vary: Param,
    /// Worker threads.
    pub(super) workers: usize,
    /// `--shard K/N`, if given.
    pub(super) shard: Option<(usize, usize)>,
}

/// Reads the map options of `args` for the model `mm`: `--vary`/`--from`/
/// `--to`, every `--across` (default orbit.obliquity=0:90:91), the keys the
/// model cannot take, `--fold-curves` with a seasonal model, `--cells`,
/// `--threads`, `--shard`. Errors: exit 2 with the option named.
pub(super) fn plan(args: &Args, mm: &MapModel) -> Result<MapPlan, CliError> {
    let model = mm.annual();
    let default_across = vec!["orbit.obliquity=0:90:91".to_string()];
    let across_texts = if args.across.is_empty() {
        &default_across
    } else {
        &args.across
    };
    let (vary, v_from, v_to) = parse_range(args, &model)?;
    let Acrosses {
        params,
        first: (a_from, a_to, count),
        more,
    } = parse_acrosses(across_texts, &model, vary)?;
    let across = params[0];
    let across_flag = if args.across.is_empty() {
        "--across (default)"
    } else {
        "--across"
    };
    let vary_flag = if args.vary.is_some() {
        "--vary"
    } else {
        "--vary (default)"
    };
    for (flag, p) in params
        .iter()
        .map(|p| (across_flag, *p))
        .chain([(vary_flag, vary)])
    {
        if let Some(e) = seasonal_key_error(mm, flag, p) {
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
        more,
    };
    // the worker count as rayon would choose it (RAYON_NUM_THREADS, else
    // the cores) when --threads is not given
    let workers = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| CliError::Failed(format!("cannot start worker threads: {e}")))?
        .current_num_threads();
    Ok(MapPlan {
        spec,
        across,
        vary,
        workers,
        shard,
    })
}

/// One map to compute: the scenario, the model it makes and the map's
/// options checked against that model.
pub(super) struct MapJob<'a> {
    /// The scenario (its `solver.*` keys).
    pub(super) sc: &'a crate::io::scenario::Scenario,
    /// The model that computes the slices.
    pub(super) mm: &'a MapModel,
    /// The map's options.
    pub(super) plan: &'a MapPlan,
}

/// Computes the slices of every job (of its plan's shard, if any) on the
/// first plan's workers, all jobs' slices in one pool (so a short map's
/// last slices overlap the next map's first), and hands them to `sink`
/// as (job, slice) in job order and within a job in slice order, at most a
/// window of finished slices held ahead of the next ([`run_ordered`]); the
/// dense solves inside a slice run on its own thread, so no result depends
/// on the threads. `what` names the progress bar. Errors: a cancelled run
/// (Args::cancel, checked between slices), or the sink's.
pub(super) fn compute_slices(
    args: &Args,
    jobs: &[MapJob],
    what: &str,
    mut sink: impl FnMut(usize, Slice) -> Result<(), CliError>,
) -> Result<(), CliError> {
    let workers = jobs.first().map_or(1, |j| j.plan.workers);
    let items: Vec<(usize, usize)> = jobs
        .iter()
        .enumerate()
        .flat_map(|(k, job)| {
            let shard = job.plan.shard;
            (0..job.plan.spec.slices())
                .filter(move |j| shard.is_none_or(|(s, n)| j % n == s))
                .map(move |j| (k, j))
        })
        .collect();
    let bar = Progress::bar(what, items.len() as u64, "slices", args.quiet);
    // parallel only over slices: the dense solves inside a slice (faer:
    // the seasonal model's monodromy LU and Floquet eigenvalues) run on the
    // slice's thread, so a slice's result cannot depend on the threads
    faer::set_global_parallelism(faer::Par::Seq);
    let solver: Vec<(f64, f64, f64)> = jobs
        .iter()
        .map(|job| {
            (
                job.sc.num("solver.warm_start"),
                job.sc.num("solver.cold_start"),
                job.sc.num("solver.tolerance"),
            )
        })
        .collect();
    let run = run_ordered(
        &items,
        workers,
        WINDOW_PER_THREAD * workers,
        |&(k, j)| {
            if super::context::cancelled(args) {
                return None;
            }
            let (job, (warm, cold, tol)) = (&jobs[k], solver[k]);
            let p = job.plan;
            let s = job.mm.slice(&p.spec, p.across, p.vary, j, warm, cold, tol);
            bar.inc();
            Some((k, s))
        },
        |(k, s)| sink(k, s),
    );
    bar.finish();
    match run {
        Ok(_) => Ok(()),
        Err(OrderedStop::Cancelled) => Err(CliError::Failed("interrupted; nothing written".into())),
        Err(OrderedStop::Sink(e)) => Err(e),
    }
}

/// Runs `map` (with `--hierarchy`: the map of each model of the hierarchy,
/// `cli::maphier`).
pub fn cmd_map(args: &Args) -> Result<String, CliError> {
    if args.hierarchy {
        return super::maphier::cmd_map_hierarchy(args);
    }
    let sc = load(args)?;
    // the scenario's own model: periodic climates for a seasonal scenario,
    // never an annual-mean map in its place
    let mm = map_model(&sc)?;
    let plan = plan(args, &mm)?;
    let (spec, shard) = (&plan.spec, plan.shard);
    let tol = sc.num("solver.tolerance");
    let dir = args
        .out
        .clone()
        .unwrap_or_else(|| PathBuf::from("out").join("map"));
    let mut out = OutputSet::new();
    let scenario = sc.to_json();
    let mut writer = MapWriter::new(
        &mm,
        spec,
        scenario_num(&scenario, "solver.tolerance", 1e-10),
    );
    let mut shard_slices: Vec<Slice> = Vec::new();
    let job = MapJob {
        sc: &sc,
        mm: &mm,
        plan: &plan,
    };
    compute_slices(args, &[job], &format!("map ({})", mm.name()), |_, s| {
        if shard.is_some() {
            shard_slices.push(s);
            Ok(())
        } else {
            writer.push(s)
        }
    })?;
    if let Some((k, n)) = shard {
        let file = ShardFile {
            format: SHARD_FORMAT.into(),
            tool: format!("icefold {VERSION}"),
            model: mm.name().into(),
            spec: spec.clone(),
            scenario,
            scenario_toml: sc.to_toml(),
            shard: (k, n),
            slices: shard_slices,
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
    let tally = writer.finish(
        &scenario,
        &sc.to_toml(),
        sc.name(),
        &dir,
        &mut out,
        args.figures,
    )?;
    let written = super::context::publish(out, &dir, args)?;
    Ok(map_report(&mm, spec, tol, &tally) + &written_list(&written))
}

/// The map's stdout report: the model that made it, regimes present,
/// failed slices, traced points above the corrector tolerance
/// ([`MapModel::tolerance`] of `tol`, `solver.tolerance`), notes.
pub(super) fn map_report(mm: &MapModel, spec: &MapSpec, tol: f64, tl: &Tally) -> String {
    let (unit, _) = mm.residual();
    let tol = mm.tolerance(tol);
    let over: String = spec
        .more
        .iter()
        .map(|a| format!(" x {} over {}..{}", a.key, a.from, a.to))
        .collect();
    let mut s = format!(
        "map: {} slices of {} over {}..{}{over}, traced in {}\n  model: {}\n",
        tl.slices,
        spec.across,
        spec.across_from,
        spec.across_to,
        spec.vary,
        model_line(mm)
    );
    for r in &tl.seen {
        s += &format!("  regime present: {}\n", regime_label(*r));
    }
    if tl.failed > 0 {
        s += &format!(
            "  {} of {} slices failed (no branch traced): their cells are missing values in map.nc (slice_failed = 1), see summary.json failed_slices\n",
            tl.failed, tl.slices
        );
    }
    if tl.above > 0 {
        s += &format!(
            "  residual: {} of {} traced points stop above the tolerance {tol:e} {unit} at the rounding floor (largest {:.3e} {unit}; map.csv {}, map.nc slice_max_residual)\n",
            tl.above,
            tl.points,
            tl.worst,
            residual_column(mm)
        );
    }
    if tl.notes > 0 {
        s += &format!(
            "  {} notes (branches ended early or seeds not continued): see summary.json\n",
            tl.notes
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
