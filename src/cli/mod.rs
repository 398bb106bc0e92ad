//! The command line: parse, load the scenario, call the library, write results.
//! Exit codes: 0 success, 1 the computation failed, 2 bad input.

use crate::io::export::{Cell, ExportError, OutputSet, Table};
use crate::io::plot;
use crate::io::scenario::{Scenario, ScenarioError};
use crate::model::Model;
use crate::model::climate::{Equilibrium, Start, find_equilibria, standard_starts};
use crate::numerics::newton::NewtonOptions;
use std::path::{Path, PathBuf};

pub mod map;
pub mod seasons;
pub mod trace;

/// Tool version, written into every output.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");

/// A failure of a command, with its exit code.
#[derive(Debug, thiserror::Error)]
pub enum CliError {
    /// Bad command line (exit 2).
    #[error("{0}")]
    Usage(String),
    /// Bad scenario (exit 2).
    #[error(transparent)]
    Scenario(#[from] ScenarioError),
    /// The computation failed (exit 1).
    #[error("{0}")]
    Failed(String),
    /// Writing outputs failed (exit 1).
    #[error(transparent)]
    Export(#[from] ExportError),
}

impl CliError {
    /// Process exit code.
    pub fn exit_code(&self) -> u8 {
        match self {
            CliError::Usage(_) | CliError::Scenario(_) => 2,
            CliError::Failed(_) | CliError::Export(_) => 1,
        }
    }
}

/// Usage text.
pub const USAGE: &str = "\
icefold: every equilibrium climate of a zonal-mean energy-balance planet

USAGE:
    icefold <COMMAND> [SCENARIO] [OPTIONS]

COMMANDS:
    trace   trace every branch of equilibria in one parameter; folds, hysteresis
    map     regime map: trace in one parameter for every value of another, in parallel
    merge   join map shards (DIR...) into the files a single run writes
    solve   equilibria from warm and cold starts (and --start FILE)
    periodic  periodic (seasonal) climates by shooting, with Floquet stability
    run     integrate the seasonal model --years N from --from warm|cold|FILE
    sun     daily and annual-mean insolation of the scenario's orbit
    check   validate the scenario and print it fully resolved
    figures regenerate the README figures into DIR (default figures/)

SCENARIO is a TOML file; without it the built-in default (scenarios/orbital.toml) is used.

OPTIONS:
    --set KEY=VALUE   override a scenario key, e.g. --set orbit.flux=1300 (repeatable)
    --out DIR         output directory (default: out/<command>)
    --start FILE      (solve) extra start: a profile.csv (latitude_deg, temperature_c)
    --vary KEY        (trace) parameter to vary (default orbit.flux)
    --from X --to Y   (trace, map) parameter range; (run) --from warm|cold|FILE
    --years N         (run) years to integrate
    --across KEY=FROM:TO:COUNT  (map) the slice parameter (default orbit.obliquity=0:90:91)
    --cells N         (map) cells of the regular summary grid (default 200)
    --threads N       (map) worker threads (default: all cores); results do not depend on it
    --shard K/N       (map) compute only slices K, K+N, ... and write a shard file
    --fold-curves     (map) also continue each boundary's fold in two parameters
    --quiet           no progress on stderr
    -h, --help        this text
";

/// Parsed command line.
#[derive(Debug, Default, Clone)]
pub struct Args {
    /// Command name.
    pub command: String,
    /// Scenario path (None: built-in default).
    pub scenario: Option<PathBuf>,
    /// `--set` overrides.
    pub sets: Vec<String>,
    /// `--out`.
    pub out: Option<PathBuf>,
    /// `--start`.
    pub start: Option<PathBuf>,
    /// `--vary`.
    pub vary: Option<String>,
    /// `--from`.
    pub from: Option<String>,
    /// `--to`.
    pub to: Option<String>,
    /// `--quiet`.
    pub quiet: bool,
    /// `--across KEY=FROM:TO:COUNT` (map).
    pub across: Option<String>,
    /// `--cells N` (map).
    pub cells: Option<String>,
    /// `--threads N` (map).
    pub threads: Option<String>,
    /// `--shard K/N` (map).
    pub shard: Option<String>,
    /// `--years N` (run).
    pub years: Option<String>,
    /// `--fold-curves` (map).
    pub fold_curves: bool,
    /// Further positional arguments (merge: shard directories).
    pub rest: Vec<PathBuf>,
    /// The command line as given (provenance).
    pub line: String,
}

/// Parses `argv` (without the program name).
pub fn parse_args(argv: &[String]) -> Result<Args, CliError> {
    let mut a = Args {
        line: format!("icefold {}", argv.join(" ")),
        ..Args::default()
    };
    let mut it = argv.iter();
    let value = |flag: &str, it: &mut std::slice::Iter<String>| {
        it.next()
            .cloned()
            .ok_or_else(|| CliError::Usage(format!("{flag} needs a value (see icefold --help)")))
    };
    while let Some(arg) = it.next() {
        match arg.as_str() {
            "-h" | "--help" => a.command = "help".into(),
            "--set" => a.sets.push(value("--set", &mut it)?),
            "--out" => a.out = Some(value("--out", &mut it)?.into()),
            "--start" => a.start = Some(value("--start", &mut it)?.into()),
            "--vary" => a.vary = Some(value("--vary", &mut it)?),
            "--from" => a.from = Some(value("--from", &mut it)?),
            "--to" => a.to = Some(value("--to", &mut it)?),
            "--quiet" | "-q" => a.quiet = true,
            "--fold-curves" => a.fold_curves = true,
            "--across" => a.across = Some(value("--across", &mut it)?),
            "--cells" => a.cells = Some(value("--cells", &mut it)?),
            "--threads" => a.threads = Some(value("--threads", &mut it)?),
            "--shard" => a.shard = Some(value("--shard", &mut it)?),
            "--years" => a.years = Some(value("--years", &mut it)?),
            s if s.starts_with("--") => {
                return Err(CliError::Usage(format!(
                    "unknown option `{s}` (see icefold --help)"
                )));
            }
            s if a.command.is_empty() => a.command = s.to_string(),
            s if a.command == "merge" => a.rest.push(s.into()),
            s if a.scenario.is_none() => a.scenario = Some(s.into()),
            s => {
                return Err(CliError::Usage(format!(
                    "unexpected argument `{s}` (one scenario file at most)"
                )));
            }
        }
    }
    if a.command.is_empty() {
        a.command = "help".into();
    }
    Ok(a)
}

/// Runs a parsed command; returns what to print on stdout.
pub fn run(args: &Args) -> Result<String, CliError> {
    match args.command.as_str() {
        "help" => Ok(USAGE.to_string()),
        "check" => {
            let sc = load(args)?;
            Ok(format!("# {} (valid)\n{}", sc.source, sc.to_toml()))
        }
        "solve" => cmd_solve(args),
        "sun" => cmd_sun(args),
        "trace" => crate::cli::trace::cmd_trace(args),
        "map" => crate::cli::map::cmd_map(args),
        "run" => {
            let s = args.years.as_deref().ok_or_else(|| {
                CliError::Usage("run needs --years N (see icefold --help)".into())
            })?;
            let years: usize = s.trim().parse().map_err(|_| {
                CliError::Usage(format!("--years `{s}` is not a whole number of years"))
            })?;
            crate::cli::seasons::cmd_run(args, years, args.from.as_deref())
        }
        "periodic" => crate::cli::seasons::cmd_periodic(args),
        "merge" => crate::cli::map::cmd_merge(args),
        "figures" => cmd_figures(args),
        other => Err(CliError::Usage(format!(
            "unknown command `{other}`; commands: trace, map, merge, solve, periodic, run, sun, check, figures (see icefold --help)"
        ))),
    }
}

/// Loads the scenario named on the command line with its overrides.
pub fn load(args: &Args) -> Result<Scenario, CliError> {
    Ok(Scenario::load(args.scenario.as_deref(), &args.sets)?)
}

/// Output directory of a command.
pub fn out_dir(args: &Args) -> PathBuf {
    args.out
        .clone()
        .unwrap_or_else(|| PathBuf::from("out").join(&args.command))
}

/// Provenance header shared by JSON outputs.
pub fn provenance(sc: &Scenario, args: &Args) -> serde_json::Map<String, serde_json::Value> {
    let mut m = serde_json::Map::new();
    m.insert("tool".into(), format!("icefold {VERSION}").into());
    m.insert("command".into(), args.line.clone().into());
    m.insert("scenario_source".into(), sc.source.clone().into());
    m.insert("scenario".into(), sc.to_json());
    m
}

fn newton_options(sc: &Scenario) -> NewtonOptions {
    NewtonOptions {
        tolerance: sc.num("solver.tolerance"),
        max_iterations: sc.int("solver.max_iterations") as usize,
        ..NewtonOptions::default()
    }
}

/// Reads a start profile (CSV with `latitude_deg` and `temperature_c`
/// columns, e.g. a previous profile.csv; only its first equilibrium is used)
/// and interpolates it linearly in latitude onto the model's bands.
pub fn read_start(path: &Path, model: &Model) -> Result<Start, CliError> {
    let bad = |why: String| CliError::Usage(format!("--start {}: {why}", path.display()));
    let text = std::fs::read_to_string(path).map_err(|e| bad(e.to_string()))?;
    let mut lines = text
        .lines()
        .filter(|l| !l.trim().is_empty() && !l.starts_with('#'));
    let header: Vec<&str> = lines
        .next()
        .ok_or_else(|| bad("empty file".into()))?
        .split(',')
        .collect();
    let col = |name: &str| header.iter().position(|h| h.trim() == name);
    let (il, it) = (
        col("latitude_deg").ok_or_else(|| bad("no `latitude_deg` column".into()))?,
        col("temperature_c").ok_or_else(|| bad("no `temperature_c` column".into()))?,
    );
    let ie = col("equilibrium");
    let mut pts: Vec<(f64, f64)> = Vec::new();
    let mut first_eq: Option<String> = None;
    for (k, line) in lines.enumerate() {
        let cells: Vec<&str> = line.split(',').collect();
        if let Some(ie) = ie {
            let e = cells.get(ie).unwrap_or(&"").to_string();
            match &first_eq {
                None => first_eq = Some(e),
                Some(f) if *f != e => continue,
                _ => {}
            }
        }
        let num = |i: usize| -> Result<f64, CliError> {
            let v: f64 = cells
                .get(i)
                .and_then(|c| c.trim().parse().ok())
                .ok_or_else(|| bad(format!("row {} is not numeric", k + 2)))?;
            if v.is_finite() {
                Ok(v)
            } else {
                Err(bad(format!("row {} has a non-finite value", k + 2)))
            }
        };
        let (lat, t) = (num(il)?, num(it)?);
        if !(-90.0..=90.0).contains(&lat) || !(-273.15..=1000.0).contains(&t) {
            return Err(bad(format!(
                "row {}: latitude {lat} or temperature {t} out of range",
                k + 2
            )));
        }
        pts.push((lat, t));
    }
    if pts.len() < 2 {
        return Err(bad("needs at least two rows".into()));
    }
    pts.sort_by(|a, b| a.0.total_cmp(&b.0));
    let interp = |lat: f64| -> f64 {
        let lat = if model.grid.symmetric { lat.abs() } else { lat };
        match pts.iter().position(|p| p.0 >= lat) {
            Some(0) => pts[0].1,
            None => pts[pts.len() - 1].1,
            Some(k) => {
                let (a, b) = (pts[k - 1], pts[k]);
                if b.0 == a.0 {
                    b.1
                } else {
                    a.1 + (b.1 - a.1) * (lat - a.0) / (b.0 - a.0)
                }
            }
        }
    };
    let temperature = model.grid.latitudes_deg().into_iter().map(interp).collect();
    Ok(Start {
        label: path.display().to_string(),
        temperature,
    })
}

fn equilibrium_json(id: usize, e: &Equilibrium) -> serde_json::Value {
    let d = &e.diagnostics;
    serde_json::json!({
        "equilibrium": id,
        "start": e.start,
        "global_mean_temperature_c": d.global_mean_c,
        "ice_area_fraction": d.ice_area_fraction,
        "ice_edges_deg": d.ice_edges_deg,
        "planetary_albedo": d.planetary_albedo,
        "state": d.state.label(),
        "stable": e.unstable_modes == 0,
        "unstable_modes": e.unstable_modes,
        "energy_imbalance_wm2": d.energy_imbalance,
        "residual_wm2": e.residual,
        "newton_iterations": e.newton_iterations,
        "spun_up_first": e.spun_up,
    })
}

fn cmd_solve(args: &Args) -> Result<String, CliError> {
    let sc = load(args)?;
    let model = sc.model();
    let mut starts = standard_starts(
        model.len(),
        sc.num("solver.warm_start"),
        sc.num("solver.cold_start"),
    );
    if let Some(p) = &args.start {
        starts.push(read_start(p, &model)?);
    }
    let search = find_equilibria(&model, &starts, &newton_options(&sc));
    report_starts(
        args.quiet,
        &search.failures,
        search.equilibria.len(),
        "an",
        "equilibrium",
    )?;
    let dir = out_dir(args);
    let mut out = OutputSet::new();
    let lat = model.grid.latitudes_deg();
    let mut table = Table::new(&[
        "equilibrium",
        "latitude_deg",
        "sin_latitude",
        "temperature_c",
        "albedo",
        "insolation_wm2",
        "absorbed_wm2",
        "olr_wm2",
        "transport_wm2",
    ]);
    let mut curves = Vec::new();
    for (k, e) in search.equilibria.iter().enumerate() {
        let fl = model.band_fluxes(&e.temperature);
        let albedo: Vec<f64> = fl
            .insolation
            .iter()
            .zip(&fl.absorbed)
            .map(|(s, a)| {
                if *s > 0.0 {
                    1.0 - a / s
                } else {
                    1.0 - model.planet.albedo.open
                }
            })
            .collect();
        for i in 0..model.len() {
            table.push_row(vec![
                Cell::Int(k as i64 + 1),
                Cell::Num(lat[i]),
                Cell::Num(model.grid.centres[i]),
                Cell::Num(e.temperature[i]),
                Cell::Num(albedo[i]),
                Cell::Num(fl.insolation[i]),
                Cell::Num(fl.absorbed[i]),
                Cell::Num(fl.olr[i]),
                Cell::Num(fl.transport[i]),
            ]);
        }
        curves.push(plot::ProfileCurve {
            label: format!("{}", k + 1),
            state: e.diagnostics.state.label().into(),
            latitude_deg: lat.clone(),
            temperature_c: e.temperature.clone(),
            albedo,
            ice_edges_deg: e.diagnostics.ice_edges_deg.clone(),
            stable: e.unstable_modes == 0,
        });
    }
    let mut summary = provenance(&sc, args);
    summary.insert(
        "equilibria".into(),
        search
            .equilibria
            .iter()
            .enumerate()
            .map(|(k, e)| equilibrium_json(k + 1, e))
            .collect(),
    );
    summary.insert(
        "failed_starts".into(),
        search
            .failures
            .iter()
            .map(|(l, e)| serde_json::json!({"start": l, "reason": e.to_string()}))
            .collect(),
    );
    let fig = plot::profile_figure(&format!("Equilibrium climates: {}", sc.name()), &curves)?;
    out.add_table(dir.join("profile.csv"), &table)?;
    out.add_text(
        dir.join("summary.json"),
        &(serde_json::to_string_pretty(&summary).unwrap_or_default() + "\n"),
    );
    out.add(dir.join("profiles.svg"), fig.svg);
    out.add(dir.join("profiles.png"), fig.png);
    out.add_text(dir.join("scenario.toml"), &sc.to_toml());
    let written = out.commit()?;
    let mut s = format!("{}: {} equilibria\n", sc.name(), search.equilibria.len());
    s += "  #  state            global mean C  ice fraction  ice edges (deg N)  stable  iterations\n";
    for (k, e) in search.equilibria.iter().enumerate() {
        let d = &e.diagnostics;
        let edges: Vec<String> = d.ice_edges_deg.iter().map(|x| format!("{x:.2}")).collect();
        s += &format!(
            "  {:<2} {:<16} {:>13.3}  {:>12.4}  {:<17}  {:<6}  {}\n",
            k + 1,
            d.state.label(),
            d.global_mean_c,
            d.ice_area_fraction,
            if edges.is_empty() {
                "-".into()
            } else {
                edges.join(", ")
            },
            if e.unstable_modes == 0 { "yes" } else { "no" },
            e.newton_iterations
        );
    }
    s += &written_list(&written);
    Ok(s)
}

/// Reports the starts that failed (on stderr unless quiet) and fails the
/// command, writing nothing, when none reached a result. `noun` names the
/// result ("equilibrium"), `article` its article ("an").
pub fn report_starts<E: std::fmt::Display>(
    quiet: bool,
    failures: &[(String, E)],
    found: usize,
    article: &str,
    noun: &str,
) -> Result<(), CliError> {
    if !quiet {
        for (label, err) in failures {
            eprintln!("icefold: start `{label}` did not reach {article} {noun}: {err}");
        }
    }
    if found == 0 {
        let why: Vec<String> = failures.iter().map(|(l, e)| format!("{l}: {e}")).collect();
        return Err(CliError::Failed(format!(
            "no {noun} found; nothing written ({})",
            why.join("; ")
        )));
    }
    Ok(())
}

/// "wrote: a, b, c" line.
pub fn written_list(paths: &[PathBuf]) -> String {
    let names: Vec<String> = paths.iter().map(|p| p.display().to_string()).collect();
    format!("wrote: {}\n", names.join(", "))
}

fn cmd_sun(args: &Args) -> Result<String, CliError> {
    let sc = load(args)?;
    let model = sc.model();
    let ins = model.insolation();
    let dir = out_dir(args);
    const DAYS: usize = 365;
    let lats: Vec<f64> = (0..=180).map(|k| -90.0 + k as f64).collect();
    let days: Vec<f64> = (0..=DAYS).map(|d| d as f64).collect();
    let mut table = Table::new(&["latitude_deg", "day_of_year", "insolation_wm2"]);
    let mut field = vec![0.0; lats.len() * days.len()];
    for (j, lat) in lats.iter().enumerate() {
        let x = lat.to_radians().sin();
        for (i, d) in days.iter().enumerate() {
            let s = ins.daily(x, d / DAYS as f64);
            field[j * days.len() + i] = s;
            table.push_row(vec![Cell::Num(*lat), Cell::Num(*d), Cell::Num(s)]);
        }
    }
    let mut annual = Table::new(&["latitude_deg", "insolation_wm2"]);
    for (lat, x) in model.grid.latitudes_deg().iter().zip(&model.grid.centres) {
        annual.push_row(vec![Cell::Num(*lat), Cell::Num(ins.annual_mean(*x))]);
    }
    let fig = plot::field_figure(
        &format!("Daily-mean insolation: {}", sc.name()),
        plot::labels::DAY_OF_YEAR,
        plot::labels::LATITUDE,
        plot::labels::INSOLATION,
        &days,
        &lats,
        &field,
        &[],
        "",
    )?;
    let mut out = OutputSet::new();
    out.add_table(dir.join("insolation.csv"), &table)?;
    out.add_table(dir.join("annual_insolation.csv"), &annual)?;
    out.add(dir.join("insolation.svg"), fig.svg);
    out.add(dir.join("insolation.png"), fig.png);
    out.add_text(dir.join("scenario.toml"), &sc.to_toml());
    let written = out.commit()?;
    let g = &model.grid;
    let mean: f64 = g
        .weights
        .iter()
        .zip(&g.centres)
        .map(|(w, x)| w * ins.annual_mean(*x))
        .sum();
    let mut s = format!(
        "{}: annual global mean {:.3} W m-2 (S0/4 = {:.3}); equator {:.2}, pole {:.2} W m-2\n",
        sc.name(),
        mean,
        model.planet.orbit.flux / 4.0,
        ins.annual_mean(0.0),
        ins.annual_mean(1.0)
    );
    if let crate::physics::insolation::InsolationLaw::Legendre { .. } = model.planet.insolation {
        s += "note: insolation.kind = \"legendre\" has no seasons; the daily values equal the annual mean\n";
    }
    s += &written_list(&written);
    Ok(s)
}

fn cmd_figures(args: &Args) -> Result<String, CliError> {
    let dir = args
        .scenario
        .clone()
        .unwrap_or_else(|| PathBuf::from("figures"));
    let mut s = String::new();
    for (cmd, sub) in [
        ("trace", "trace"),
        ("solve", "solve"),
        ("sun", "sun"),
        ("map", "map"),
        ("periodic", "periodic"),
    ] {
        let a = Args {
            command: cmd.into(),
            out: Some(dir.join(sub)),
            quiet: args.quiet,
            line: format!("icefold {cmd} --out {}", dir.join(sub).display()),
            ..Args::default()
        };
        s += &run(&a)?;
    }
    Ok(s)
}
