//! `hoverline corridor` (being written).

use clap::Args;

use super::CliError;

/// Arguments of `corridor`.
#[derive(Debug, Args)]
pub struct CorridorArgs {
    /// Scenario file (TOML)
    scenario: std::path::PathBuf,
}

/// Run `corridor`.
pub fn run(a: CorridorArgs) -> Result<(), CliError> {
    Err(CliError::Analysis(format!("{} is not built yet", a.scenario.display())))
}
