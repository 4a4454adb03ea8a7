//! `hoverline fly` (being written).

use clap::Args;

use super::CliError;

/// Arguments of `fly`.
#[derive(Debug, Args)]
pub struct FlyArgs {
    /// Scenario file (TOML)
    scenario: std::path::PathBuf,
}

/// Run `fly`.
pub fn run(a: FlyArgs) -> Result<(), CliError> {
    Err(CliError::Analysis(format!("{} is not built yet", a.scenario.display())))
}
