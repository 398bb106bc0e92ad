//! What every command shares: the parsed options, errors and exit codes,
//! loading the scenario, provenance, start profiles and reporting.

use crate::io::export::{ExportError, OutputSet};
use crate::io::scenario::{Scenario, ScenarioError};
use crate::model::Model;
use crate::model::climate::Start;
use crate::numerics::newton::NewtonOptions;
use std::path::{Path, PathBuf};

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
            CliError::Export(ExportError::Refused { .. }) => 2,
            CliError::Failed(_) | CliError::Export(_) => 1,
        }
    }
}

/// The options of one command, as the commands read them (built from
/// the clap definitions in [`super::args`]).
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
    /// `--across KEY=FROM:TO:COUNT` (map), each time it is given, in order.
    pub across: Vec<String>,
    /// `--cells N` (map).
    pub cells: Option<String>,
    /// `--threads N` (map).
    pub threads: Option<String>,
    /// `--shard K/N` (map).
    pub shard: Option<String>,
    /// `--years N` (run).
    pub years: Option<String>,
    /// `--fold-curves` (map): asked for explicitly.
    pub fold_curves: bool,
    /// `--no-fold-curves` (map). Fold curves are on for annual-mean maps
    /// unless this is set, off for seasonal ones.
    pub no_fold_curves: bool,
    /// `--hierarchy` (trace, map).
    pub hierarchy: bool,
    /// `--figures`: which figure files to render (none: tables and
    /// summaries only, as the library front asks).
    pub figures: crate::io::plot::Formats,
    /// Keep the outputs in memory instead of publishing them into `--out`
    /// (the Python front): [`publish`] fills it with (file name, bytes).
    pub capture: Option<Capture>,
    /// Set from outside (the Python front, on Ctrl-C) to stop the command
    /// at its next check ([`cancelled`]): it then fails with
    /// "interrupted" and writes nothing.
    pub cancel: Option<std::sync::Arc<std::sync::atomic::AtomicBool>>,
    /// `--outgassing V|FROM:TO:COUNT` (thermostat).
    pub outgassing: Option<String>,
    /// `--co2 FROM:TO` (thermostat).
    pub co2: Option<String>,
    /// `--cycle-at V` (thermostat).
    pub cycle_at: Option<String>,
    /// Further positional arguments (merge: shard directories).
    pub rest: Vec<PathBuf>,
    /// The command line as given (provenance).
    pub line: String,
}

/// Where a captured command leaves its outputs: (file name inside the
/// output directory, bytes), in staging order.
pub type Capture = std::sync::Arc<std::sync::Mutex<Vec<(String, Vec<u8>)>>>;

/// Publishes a command's outputs into `dir` all together
/// ([`OutputSet::publish`]), or, for a captured run, hands them over in
/// memory and writes nothing. Returns the paths (would-be paths when
/// captured).
pub fn publish(out: OutputSet, dir: &Path, args: &Args) -> Result<Vec<PathBuf>, CliError> {
    let Some(capture) = &args.capture else {
        return Ok(out.publish(dir)?);
    };
    let files = out.into_files(dir)?;
    let paths = files.iter().map(|(name, _)| dir.join(name)).collect();
    let mut held = capture
        .lock()
        .map_err(|_| CliError::Failed("the capture of the outputs was poisoned".into()))?;
    *held = files;
    Ok(paths)
}

/// Whether the run was asked to stop ([`Args::cancel`]).
pub fn cancelled(args: &Args) -> bool {
    args.cancel
        .as_ref()
        .is_some_and(|c| c.load(std::sync::atomic::Ordering::Relaxed))
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

/// Newton options from the scenario's `solver.*` keys.
pub fn newton_options(sc: &Scenario) -> NewtonOptions {
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
    let text = crate::io::input::read_text(path, crate::io::input::TABLE_MAX_BYTES).map_err(bad)?;
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
