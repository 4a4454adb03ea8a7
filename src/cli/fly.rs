//! `hoverline fly SCENARIO [--schedule FILE] [--out DIR] [--back] [--json]`

use std::path::PathBuf;

use clap::Args;

use super::{print_json, CliError};
use hoverline::flight::{fly, FeedforwardTable, FlightSettings, Manoeuvre};
use hoverline::input::InputError;
use hoverline::scenario::{load_scenario, load_schedule_file};
use hoverline::sweep::{run_sweep, SweepSettings};
use hoverline::trim::Objective;

/// Arguments of `fly`.
#[derive(Debug, Args)]
pub struct FlyArgs {
    /// Scenario file (TOML)
    scenario: PathBuf,
    /// Schedule file to fly instead of the scenario's (as written by `hoverline schedule`)
    #[arg(long, value_name = "FILE")]
    schedule: Option<PathBuf>,
    /// Output folder (default: the scenario's output_dir, else out/<scenario name>)
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// Fly cruise to hover instead of hover to cruise
    #[arg(long)]
    back: bool,
    /// Print the summary and events as JSON instead of text
    #[arg(long)]
    json: bool,
    /// Also fly N dispersed vehicles (mass, CG, aerodynamics, thrust; see [flight.dispersions])
    /// with the nominal feedforward and feedback, and report the spread
    #[arg(long, value_name = "N")]
    dispersions: Option<usize>,
}

/// Run `fly`.
pub fn run(a: FlyArgs) -> Result<(), CliError> {
    let sc = load_scenario(&a.scenario)?;
    let schedule = match &a.schedule {
        Some(p) => load_schedule_file(p, &sc.vehicle)?,
        None => sc.schedule.clone(),
    };
    let settings = FlightSettings::from_scenario(&sc).map_err(|inv| {
        let text = std::fs::read_to_string(&a.scenario).unwrap_or_default();
        CliError::Input(InputError::from_invalid(&a.scenario, &text, inv))
    })?;
    let atm = hoverline::atmosphere::isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .map_err(|e| CliError::Analysis(e.to_string()))?;
    let sweep_settings = SweepSettings {
        speeds_mps: sc.speeds_mps.clone(),
        climb_rad: sc.climb_rad,
        schedule: schedule.clone(),
        objective: Objective::Reserve,
        thresholds: sc.file.thresholds.clone(),
        gains: None,
    };
    let bar = indicatif::ProgressBar::new(sweep_settings.speeds_mps.len() as u64);
    bar.set_style(
        indicatif::ProgressStyle::with_template("{prefix} [{bar:30}] {pos}/{len} {msg}")
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
    );
    bar.set_prefix("trimming");
    bar.set_message("speeds");
    let sweep = run_sweep(&sc.vehicle, &atm, &sweep_settings, &|| bar.inc(1));
    let table =
        FeedforwardTable::from_sweep(&sc.vehicle, &sweep.points, &schedule, &settings.gains)
            .map_err(|e| CliError::Analysis(e.to_string()))?;
    bar.set_prefix("flying");
    bar.set_message("% of the flight");
    bar.set_length(100);
    bar.set_position(0);
    let manoeuvre = if a.back {
        Manoeuvre::CruiseToHover
    } else {
        Manoeuvre::HoverToCruise
    };
    let flight = fly(&sc.vehicle, &atm, &table, &settings, manoeuvre, &|f| {
        bar.set_position((100.0 * f) as u64)
    })
    .map_err(|e| CliError::Analysis(e.to_string()))?;
    let dispersion = match a.dispersions {
        Some(0) => {
            return Err(CliError::Usage(
                "--dispersions needs at least one run".into(),
            ))
        }
        Some(n) if n > 1_000_000 => {
            return Err(CliError::Usage(format!(
                "--dispersions {n}: at most 1000000 runs"
            )))
        }
        Some(n) => {
            bar.set_prefix("dispersions");
            bar.set_message("flights");
            bar.set_length(n as u64);
            bar.set_position(0);
            let d = &sc.file.flight.dispersions;
            Some(hoverline::flight::dispersion::run_dispersions(
                &sc.vehicle,
                &atm,
                &table,
                &settings,
                manoeuvre,
                d,
                n,
                &|| bar.inc(1),
            ))
        }
        None => None,
    };
    bar.finish_and_clear();
    let dir = a.out.unwrap_or_else(|| sc.output_dir());
    let mut files = hoverline::output::flight_files::write(&dir, &sc, &table, &sweep, &flight)?;
    if let Some(d) = &dispersion {
        files.extend(hoverline::output::flight_files::write_dispersions(
            &dir, &sc, d,
        )?);
    }
    if a.json {
        print_json(&hoverline::output::flight_files::document(
            &sc, &sweep, &flight,
        ))?;
    } else {
        out!(
            "{}",
            hoverline::output::flight_files::text(&sc, &sweep, &flight)
        );
        if let Some(d) = &dispersion {
            out!(
                "{}",
                hoverline::output::flight_files::dispersion_text(&sc, d)
            );
        }
        for f in files {
            outln!("wrote {}", f.display());
        }
    }
    Ok(())
}
