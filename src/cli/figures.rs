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
    Ok(s)
}
