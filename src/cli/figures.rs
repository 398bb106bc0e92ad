//! `icefold figures`: regenerate the README figures.

use super::context::{Args, CliError};
use std::path::PathBuf;

/// Runs `figures`: every figure command into its own folder of DIR.
pub fn cmd_figures(args: &Args) -> Result<String, CliError> {
    let dir = args.out.clone().unwrap_or_else(|| PathBuf::from("figures"));
    let mut s = String::new();
    type Cmd = fn(&Args) -> Result<String, CliError>;
    let commands: [(&str, Cmd); 5] = [
        ("trace", super::trace::cmd_trace),
        ("solve", super::solve::cmd_solve),
        ("sun", super::sun::cmd_sun),
        ("map", super::map::cmd_map),
        ("periodic", super::seasons::cmd_periodic),
    ];
    for (cmd, run) in commands {
        let sub = cmd;
        let a = Args {
            command: cmd.into(),
            out: Some(dir.join(sub)),
            quiet: args.quiet,
            // the README map shows fold-continued boundaries beside the
            // slice-joined ones
            fold_curves: cmd == "map",
            line: format!(
                "icefold {cmd} --out {}{}",
                dir.join(sub).display(),
                if cmd == "map" { " --fold-curves" } else { "" }
            ),
            ..Args::default()
        };
        s += &run(&a)?;
    }
    // the model hierarchy of the sea-ice scenario (about 2.5 minutes)
    let sea_ice = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("scenarios/sea-ice.toml");
    let out = dir.join("hierarchy");
    let a = Args {
        command: "trace".into(),
        scenario: Some(sea_ice.clone()),
        out: Some(out.clone()),
        quiet: args.quiet,
        hierarchy: true,
        vary: Some("radiation.forcing".into()),
        from: Some("-30".into()),
        to: Some("15".into()),
        line: format!(
            "icefold trace {} --hierarchy --vary radiation.forcing --from -30 --to 15 --out {}",
            sea_ice.display(),
            out.display()
        ),
        ..Args::default()
    };
    s += &super::trace::cmd_trace(&a)?;
    // the thermostat of the invented outer-edge planet
    let outer = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("scenarios/outer-edge.toml");
    let out = dir.join("thermostat");
    let a = Args {
        command: "thermostat".into(),
        scenario: Some(outer.clone()),
        out: Some(out.clone()),
        quiet: args.quiet,
        outgassing: Some(README_OUTGASSING.into()),
        line: format!(
            "icefold thermostat {} --outgassing {README_OUTGASSING} --out {}",
            outer.display(),
            out.display()
        ),
        ..Args::default()
    };
    s += &super::thermostat::cmd_thermostat(&a)?;
    Ok(s)
}

/// The outgassing rates of the README's thermostat example, bar Gyr-1.
pub const README_OUTGASSING: &str = "0.1:1:10";
