//! PLACEHOLDER: `halotank convert`.
use std::process::ExitCode;

/// Options of `halotank convert`.
#[derive(Debug, clap::Args)]
pub struct ConvertArgs {}

/// Runs `halotank convert`.
pub fn run(_args: ConvertArgs) -> anyhow::Result<ExitCode> {
    Ok(ExitCode::SUCCESS)
}
