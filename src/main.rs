//! The `icefold` command: a thin layer over the library (see `icefold --help`).
use std::process::ExitCode;

fn main() -> ExitCode {
    let argv: Vec<String> = std::env::args().skip(1).collect();
    let result = icefold::cli::parse_args(&argv).and_then(|a| icefold::cli::run(&a));
    match result {
        Ok(text) => {
            print!("{text}");
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("icefold: error: {e}");
            ExitCode::from(e.exit_code())
        }
    }
}
