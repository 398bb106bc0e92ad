//! The command line as clap sees it: one struct per command, each option's
//! doc comment is its `--help` text. [`Cli::into_args`] turns the parsed
//! command into the [`Args`] the commands read (the second, validating
//! stage lives with each command, where the scenario is known).

use super::context::Args;
use crate::io::plot::Formats;
use crate::model::Param;
use clap::builder::PossibleValuesParser;
use clap::{ArgAction, Parser, Subcommand};
use std::path::PathBuf;

/// Every equilibrium climate of a zonal-mean energy-balance planet: branches,
/// folds (tipping points), regime maps and periodic seasonal climates.
#[derive(Debug, Parser)]
#[command(
    name = "icefold",
    version,
    propagate_version = true,
    arg_required_else_help = true,
    after_help = "Without a SCENARIO the built-in default (scenarios/orbital.toml) is used. \
                  Exit codes: 0 success, 1 a computation failed, 2 bad input."
)]
pub struct Cli {
    /// The command to run.
    #[command(subcommand)]
    pub command: Command,
}

/// The commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Trace every branch of equilibria in one parameter: stable and
    /// unstable states, folds, the jump at each fold, bistable windows.
    Trace(TraceCmd),
    /// Regime map: a trace in one parameter for every value of another, in
    /// parallel, with the scenario's model (periodic climates when
    /// seasons.enabled); results do not depend on threads or shards.
    Map(MapCmd),
    /// Join `map --shard` results into exactly the files a single run writes.
    Merge(MergeCmd),
    /// Equilibria from warm (ice-free) and cold (snowball) starts, with
    /// their stability.
    Solve(SolveCmd),
    /// Periodic (seasonally repeating) climates by shooting, with Floquet
    /// multipliers.
    Periodic(SolveCmd),
    /// Integrate the seasonal model in time.
    Run(RunCmd),
    /// The carbonate-silicate thermostat: for each outgassing rate, the
    /// slow CO2 equilibria on the fast climate's branches, or the snowball
    /// limit cycle with its period.
    Thermostat(ThermostatCmd),
    /// Daily-mean and annual-mean insolation of the scenario's orbit.
    Sun(ScenarioCmd),
    /// Validate the scenario and print it fully resolved, with units.
    Check(CheckCmd),
    /// Regenerate the README figures.
    Figures(FiguresCmd),
    /// Print a shell completion script (bash, zsh or fish) on stdout.
    Completions(CompletionsCmd),
}

/// The scenario and its overrides.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct ScenarioOpts {
    /// Scenario file (TOML); default: the built-in scenarios/orbital.toml.
    #[arg(value_name = "SCENARIO")]
    pub scenario: Option<PathBuf>,
    /// Override a scenario key, e.g. `--set orbit.flux=1300` (repeatable).
    #[arg(long = "set", value_name = "KEY=VALUE", action = ArgAction::Append)]
    pub sets: Vec<String>,
}

/// Where outputs go and whether progress is shown.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct OutputOpts {
    /// Output directory (default: out/COMMAND). It holds this command's
    /// outputs only and is replaced whole when they are ready.
    #[arg(long, value_name = "DIR", value_parser = out_dir_arg)]
    pub out: Option<PathBuf>,
    /// No progress on stderr.
    #[arg(long, short)]
    pub quiet: bool,
    /// Which figure files to write: none, svg, png or all (default all).
    #[arg(long, value_name = "WHICH", value_parser = figures_arg)]
    pub figures: Option<Formats>,
}

/// `--figures`: one of [`Formats::NAMES`].
fn figures_arg(v: &str) -> Result<Formats, String> {
    Formats::from_name(v).ok_or_else(|| {
        format!(
            "`{v}` is not a figure choice (allowed: {})",
            Formats::NAMES.join(", ")
        )
    })
}

/// `--out`: a directory name (not empty, not `.`, `..` or `/`).
fn out_dir_arg(v: &str) -> Result<PathBuf, String> {
    let p = PathBuf::from(v);
    match p.components().next_back() {
        _ if v.is_empty() => Err("an empty path; give a directory, e.g. --out out/run".into()),
        Some(std::path::Component::Normal(_)) => Ok(p),
        _ => Err(format!(
            "`{v}` does not end in a directory name (the set replaces the whole directory, so not `.`, `..` or `/`)"
        )),
    }
}

fn param_keys() -> PossibleValuesParser {
    PossibleValuesParser::new(Param::ALL.iter().map(|p| p.key()))
}

/// A scenario-only command with outputs (`sun`).
#[derive(Debug, Clone, Default, clap::Args)]
pub struct ScenarioCmd {
    #[command(flatten)]
    #[allow(missing_docs)]
    pub scenario: ScenarioOpts,
    #[command(flatten)]
    #[allow(missing_docs)]
    pub output: OutputOpts,
}

/// `check`.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct CheckCmd {
    #[command(flatten)]
    #[allow(missing_docs)]
    pub scenario: ScenarioOpts,
}

/// The traced parameter and its range (`trace`, `map`).
#[derive(Debug, Clone, Default, clap::Args)]
pub struct RangeOpts {
    /// Parameter to vary (default orbit.flux).
    #[arg(long, value_name = "KEY", value_parser = param_keys())]
    pub vary: Option<String>,
    /// Start of the range (default: 0.8 of the scenario's flux, or the
    /// scenario's value minus 20%).
    #[arg(long, value_name = "X", allow_negative_numbers = true)]
    pub from: Option<String>,
    /// End of the range (default: 1.15 of the scenario's flux, or the
    /// scenario's value plus 20%).
    #[arg(long, value_name = "Y", allow_negative_numbers = true)]
    pub to: Option<String>,
}

/// `trace`.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct TraceCmd {
    #[command(flatten)]
    #[allow(missing_docs)]
    pub scenario: ScenarioOpts,
    #[command(flatten)]
    #[allow(missing_docs)]
    pub range: RangeOpts,
    /// Trace the same planet in the model hierarchy: annual mean, seasonal,
    /// seasonal with sea ice; writes one overlay figure and table.
    #[arg(long)]
    pub hierarchy: bool,
    #[command(flatten)]
    #[allow(missing_docs)]
    pub output: OutputOpts,
}

/// `map`.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct MapCmd {
    #[command(flatten)]
    #[allow(missing_docs)]
    pub scenario: ScenarioOpts,
    /// The slice parameter and its grid, KEY=FROM:TO:COUNT (default
    /// orbit.obliquity=0:90:91). Repeatable (up to 4 keys): the slices are
    /// the product of the grids, the first key varying slowest.
    #[arg(long, value_name = "KEY=FROM:TO:COUNT")]
    pub across: Vec<String>,
    #[command(flatten)]
    #[allow(missing_docs)]
    pub range: RangeOpts,
    /// Cells of the regular summary grid in the traced parameter (default 200).
    #[arg(long, value_name = "N")]
    pub cells: Option<String>,
    /// Worker threads (default: all cores); results do not depend on it.
    #[arg(long, value_name = "N")]
    pub threads: Option<String>,
    /// Compute only slices K, K+N, K+2N, ... and write a shard file.
    #[arg(long, value_name = "K/N")]
    pub shard: Option<String>,
    /// Continue each boundary's fold in both parameters (annual-mean model
    /// only; the default there, so this flag is kept for compatibility).
    #[arg(long, conflicts_with = "no_fold_curves")]
    pub fold_curves: bool,
    /// Do not continue the folds in two parameters (annual-mean maps).
    #[arg(long)]
    pub no_fold_curves: bool,
    /// Map the same planet in the model hierarchy: annual mean, seasonal,
    /// seasonal with sea ice (as trace --hierarchy builds them); one set of
    /// files with a model column or dimension, and a figure comparing the
    /// models' boundaries. Not with --shard or --fold-curves.
    #[arg(long)]
    pub hierarchy: bool,
    #[command(flatten)]
    #[allow(missing_docs)]
    pub output: OutputOpts,
}

/// `merge`.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct MergeCmd {
    /// Shard directories (their shard-*.json files) or shard files.
    #[arg(value_name = "DIR", required = true)]
    pub dirs: Vec<PathBuf>,
    #[command(flatten)]
    #[allow(missing_docs)]
    pub output: OutputOpts,
}

/// `solve` and `periodic`.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct SolveCmd {
    #[command(flatten)]
    #[allow(missing_docs)]
    pub scenario: ScenarioOpts,
    /// Extra start: a profile.csv (columns latitude_deg, temperature_c).
    #[arg(long, value_name = "FILE")]
    pub start: Option<PathBuf>,
    #[command(flatten)]
    #[allow(missing_docs)]
    pub output: OutputOpts,
}

/// `run`.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct RunCmd {
    #[command(flatten)]
    #[allow(missing_docs)]
    pub scenario: ScenarioOpts,
    /// Years to integrate.
    #[arg(long, value_name = "N", required = true)]
    pub years: String,
    /// Start: `warm`, `cold` or a state.csv written by an earlier run
    /// (default warm).
    #[arg(long, value_name = "warm|cold|FILE")]
    pub from: Option<String>,
    #[command(flatten)]
    #[allow(missing_docs)]
    pub output: OutputOpts,
}

/// `thermostat`.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct ThermostatCmd {
    #[command(flatten)]
    #[allow(missing_docs)]
    pub scenario: ScenarioOpts,
    /// Outgassing rates V in bar Gyr-1: one value, FROM:TO:COUNT evenly
    /// spaced, or FROM:TO:COUNT:log evenly spaced in ln V, ends included
    /// (default: the scenario's weathering.outgassing).
    #[arg(long, value_name = "V|FROM:TO:COUNT[:log]", allow_hyphen_values = true)]
    pub outgassing: Option<String>,
    /// CO2 range of the trace of the fast climate, ppm (default 1:1000000).
    #[arg(long, value_name = "FROM:TO", allow_hyphen_values = true)]
    pub co2: Option<String>,
    /// Also vary this parameter, KEY=FROM:TO:COUNT: one thermostat per
    /// value, in parallel, written as thermostat_map.csv (where the planet
    /// settles and where it cycles).
    #[arg(long, value_name = "KEY=FROM:TO:COUNT")]
    pub across: Option<String>,
    /// Worker threads for --across (default: all cores); results do not
    /// depend on it.
    #[arg(long, value_name = "N")]
    pub threads: Option<String>,
    /// Write the cycle of this outgassing rate to cycle.csv (default: the
    /// first rate that cycles).
    #[arg(long, value_name = "V", allow_hyphen_values = true)]
    pub cycle_at: Option<String>,
    #[command(flatten)]
    #[allow(missing_docs)]
    pub output: OutputOpts,
}

/// `figures`.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct FiguresCmd {
    /// Directory to write into (default figures/).
    #[arg(value_name = "DIR")]
    pub dir: Option<PathBuf>,
    /// No progress on stderr.
    #[arg(long, short)]
    pub quiet: bool,
}

/// `completions`.
#[derive(Debug, Clone, clap::Args)]
pub struct CompletionsCmd {
    /// The shell.
    #[arg(value_enum)]
    pub shell: clap_complete::Shell,
}

fn base(command: &str, s: ScenarioOpts, o: OutputOpts, line: String) -> Args {
    Args {
        command: command.into(),
        scenario: s.scenario,
        sets: s.sets,
        out: o.out,
        quiet: o.quiet,
        figures: o.figures.unwrap_or_default(),
        line,
        ..Args::default()
    }
}

impl Cli {
    /// The command's options as the commands read them; `line` is the
    /// command line as given (provenance). `completions` has none (None).
    pub fn into_args(self, line: String) -> Option<Args> {
        let a = match self.command {
            Command::Trace(c) => Args {
                vary: c.range.vary,
                from: c.range.from,
                to: c.range.to,
                hierarchy: c.hierarchy,
                ..base("trace", c.scenario, c.output, line)
            },
            Command::Map(c) => Args {
                across: c.across,
                vary: c.range.vary,
                from: c.range.from,
                to: c.range.to,
                cells: c.cells,
                threads: c.threads,
                shard: c.shard,
                fold_curves: c.fold_curves,
                no_fold_curves: c.no_fold_curves,
                hierarchy: c.hierarchy,
                ..base("map", c.scenario, c.output, line)
            },
            Command::Merge(c) => Args {
                rest: c.dirs,
                ..base("merge", ScenarioOpts::default(), c.output, line)
            },
            Command::Solve(c) => Args {
                start: c.start,
                ..base("solve", c.scenario, c.output, line)
            },
            Command::Periodic(c) => Args {
                start: c.start,
                ..base("periodic", c.scenario, c.output, line)
            },
            Command::Run(c) => Args {
                years: Some(c.years),
                from: c.from,
                ..base("run", c.scenario, c.output, line)
            },
            Command::Thermostat(c) => Args {
                outgassing: c.outgassing,
                co2: c.co2,
                cycle_at: c.cycle_at,
                across: c.across.into_iter().collect(),
                threads: c.threads,
                ..base("thermostat", c.scenario, c.output, line)
            },
            Command::Sun(c) => base("sun", c.scenario, c.output, line),
            Command::Check(c) => base("check", c.scenario, OutputOpts::default(), line),
            Command::Figures(c) => Args {
                out: c.dir,
                quiet: c.quiet,
                command: "figures".into(),
                line,
                ..Args::default()
            },
            Command::Completions(_) => return None,
        };
        Some(a)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn definition_is_consistent() {
        Cli::command().debug_assert();
    }

    fn parse(argv: &[&str]) -> Result<Cli, clap::Error> {
        Cli::try_parse_from(std::iter::once("icefold").chain(argv.iter().copied()))
    }

    #[test]
    fn foreign_and_repeated_options_are_errors() {
        use clap::error::ErrorKind;
        // --cells belongs to map, not trace
        let e = parse(&["trace", "--cells", "3"]).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::UnknownArgument);
        let e = parse(&["trace", "--out", "a", "--out", "b"]).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::ArgumentConflict);
        // --set is repeatable
        let c = parse(&["solve", "--set", "a.b=1", "--set", "c.d=2"]).unwrap();
        let a = c.into_args(String::new()).unwrap();
        assert_eq!(a.sets, ["a.b=1", "c.d=2"]);
        // negative numbers are values, not options
        let c = parse(&["trace", "--vary", "albedo.threshold", "--from", "-20"]).unwrap();
        assert_eq!(
            c.into_args(String::new()).unwrap().from.as_deref(),
            Some("-20")
        );
    }
}
