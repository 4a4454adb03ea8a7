//! `hoverline schedule` (being written).

use clap::Args;

use super::CliError;

/// Arguments of `schedule`.
#[derive(Debug, Args)]
pub struct ScheduleArgs {
    /// Scenario file (TOML)
    scenario: std::path::PathBuf,
}

/// Run `schedule`.
pub fn run(a: ScheduleArgs) -> Result<(), CliError> {
    Err(CliError::Analysis(format!("{} is not built yet", a.scenario.display())))
}
