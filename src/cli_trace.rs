//! `icefold trace` (continuation in one parameter).
use crate::cli::{Args, CliError};

/// Runs `trace` (not yet available).
pub fn cmd_trace(_args: &Args) -> Result<String, CliError> {
    Err(CliError::Failed(
        "trace: continuation is not built yet".into(),
    ))
}
