//! The `icefold` command: parses the command line (see `icefold --help`),
//! runs the library and maps errors to exit codes (0, 1 failed, 2 bad input).
use clap::{CommandFactory, Parser};
use icefold::cli::args::{Cli, Command};
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            // help and version go to stdout with exit 0; usage errors are
            // one line on stderr with exit 2
            if !e.use_stderr() {
                let _ = e.print();
                return ExitCode::SUCCESS;
            }
            eprintln!("icefold: error: {}", one_line(&e));
            return ExitCode::from(2);
        }
    };
    if let Command::Completions(c) = &cli.command {
        clap_complete::generate(
            c.shell,
            &mut Cli::command(),
            "icefold",
            &mut std::io::stdout(),
        );
        return ExitCode::SUCCESS;
    }
    let argv: Vec<String> = std::env::args().skip(1).collect();
    let Some(args) = cli.into_args(format!("icefold {}", argv.join(" "))) else {
        return ExitCode::SUCCESS;
    };
    match icefold::cli::run(&args) {
        Ok(text) => {
            // a reader that closed the pipe (`| head`) is not an error of
            // the run: the outputs are already published
            use std::io::Write;
            let mut out = std::io::stdout().lock();
            let _ = out.write_all(text.as_bytes()).and_then(|()| out.flush());
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("icefold: error: {e}");
            ExitCode::from(e.exit_code())
        }
    }
}

/// clap's error as one line: the message and its tips, without the usage
/// block (`--help` shows that).
fn one_line(e: &clap::Error) -> String {
    let text = e.render().to_string();
    let parts: Vec<&str> = text
        .lines()
        .map(str::trim)
        .filter(|l| {
            !l.is_empty() && !l.starts_with("Usage:") && !l.starts_with("For more information")
        })
        .map(|l| l.strip_prefix("error: ").unwrap_or(l))
        .collect();
    format!("{} (see --help)", parts.join("; "))
}
