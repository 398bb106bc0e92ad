//! The command line: a thin layer over the library. [`args`] defines the
//! commands and options (clap); [`context`] holds what every command shares;
//! each command has its own file. Exit codes: 0 success, 1 the computation
//! failed, 2 bad input.

pub mod args;
pub mod context;
pub mod figures;
pub mod hierarchy;
pub mod map;
mod maphier;
mod mapnc;
mod mapout;
pub mod progress;
pub mod seasons;
pub mod shard;
pub mod solve;
pub mod state;
pub mod sun;
pub mod thermomap;
pub mod thermostat;
pub mod trace;

pub use context::{Args, CliError, VERSION};

/// Runs one command; returns what to print on stdout.
pub fn run(args: &Args) -> Result<String, CliError> {
    // refuse an unusable --out before computing (the full check is made
    // again when the outputs are published)
    let writes = [
        "solve",
        "sun",
        "trace",
        "map",
        "merge",
        "run",
        "periodic",
        "thermostat",
    ];
    if writes.contains(&args.command.as_str()) && args.capture.is_none() {
        let dir = match (&args.out, args.command.as_str()) {
            (Some(d), _) => d.clone(),
            (None, "merge") => std::path::PathBuf::from("out").join("map"),
            (None, _) => context::out_dir(args),
        };
        crate::io::publish::precheck(&dir)?;
    }
    match args.command.as_str() {
        "check" => {
            let sc = context::load(args)?;
            // check refuses what the commands would refuse: the seasonal
            // model's own conditions apply when seasons are enabled, and are
            // noted when they are not (run and periodic would refuse)
            let seasonal = sc.seasonal_model().err();
            match seasonal {
                Some(e) if sc.flag("seasons.enabled") => Err(CliError::Usage(format!(
                    "seasons.enabled = true, but the seasonal model refuses this scenario: {e}"
                ))),
                Some(e) => Ok(format!(
                    "# {} (valid; `run` and `periodic` would refuse it: {e})\n{}",
                    sc.source,
                    sc.to_toml()
                )),
                None => Ok(format!("# {} (valid)\n{}", sc.source, sc.to_toml())),
            }
        }
        "solve" => solve::cmd_solve(args),
        "sun" => sun::cmd_sun(args),
        "trace" => trace::cmd_trace(args),
        "thermostat" => thermostat::cmd_thermostat(args),
        "map" => map::cmd_map(args),
        "merge" => shard::cmd_merge(args),
        "run" => {
            let s = args.years.as_deref().unwrap_or_default();
            let years: usize = s.trim().parse().map_err(|_| {
                CliError::Usage(format!("--years `{s}` is not a whole number of years"))
            })?;
            seasons::cmd_run(args, years, args.from.as_deref())
        }
        "periodic" => seasons::cmd_periodic(args),
        "figures" => figures::cmd_figures(args),
        other => Err(CliError::Usage(format!("unknown command `{other}`"))),
    }
}
