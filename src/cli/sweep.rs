//! `hoverline sweep SCENARIO`

use std::path::PathBuf;

use clap::Args;

use super::CliError;
use hoverline::output::text;
use hoverline::scenario::{load_scenario, load_schedule_file};
use hoverline::sweep::{run_sweep, SweepSettings};

/// Arguments of `sweep`.
#[derive(Debug, Args)]
pub struct SweepArgs {
    /// Scenario file (TOML)
    scenario: PathBuf,
    /// Output folder (default: the scenario's output_dir, else out/<scenario name>)
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// Use this schedule file (from `hoverline schedule`) instead of the scenario's schedule
    #[arg(long, value_name = "FILE")]
    schedule: Option<PathBuf>,
}

/// Run `sweep`.
pub fn run(a: SweepArgs) -> Result<(), CliError> {
    let mut sc = load_scenario(&a.scenario)?;
    if let Some(f) = &a.schedule {
        sc.schedule = load_schedule_file(f, &sc.vehicle)?;
    }
    let atm = hoverline::atmosphere::isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .map_err(|e| CliError::Analysis(e.to_string()))?;
    let settings = SweepSettings {
        speeds_mps: sc.speeds_mps.clone(),
        climb_rad: sc.climb_rad,
        schedule: sc.schedule.clone(),
        objective: sc.file.sweep.objective,
        thresholds: sc.file.thresholds.clone(),
        gains: Some(hoverline::control::law::FeedbackGains::from_file(
            &sc.file.flight,
        )),
        loop_model: hoverline::control::loops::LoopSettings::from_file(&sc.file.flight),
    };
    let bar = indicatif::ProgressBar::new(settings.speeds_mps.len() as u64);
    bar.set_style(
        indicatif::ProgressStyle::with_template("{prefix} [{bar:30}] {pos}/{len} speeds")
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
    );
    bar.set_prefix("trimming");
    let result = run_sweep(&sc.vehicle, &atm, &settings, &|| bar.inc(1));
    bar.finish_and_clear();
    out!("{}", text::sweep(&sc.file.name, &result));
    let dir = a.out.unwrap_or_else(|| sc.output_dir());
    let files = hoverline::output::sweep_files::write(&dir, &sc, &result)?;
    for f in files {
        outln!("wrote {}", f.display());
    }
    Ok(())
}
