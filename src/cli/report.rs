//! `hoverline report SCENARIO [--out DIR] [--schedule FILE] [--json]`: run the sweep, the
//! corridor, the schedule comparison and the hover-to-cruise flight, write their files, then
//! one self-contained `report.html` and `report.json` (the verdict) beside them.
//!
//! A part whose analysis cannot be completed is reported as "not available" in its section
//! and on stderr; the report is still written, and the exit status is then 1.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::time::Duration;

use clap::Args;

use super::CliError;
use hoverline::corridor::{compute, CorridorSettings};
use hoverline::flight::{fly, FeedforwardTable, FlightSettings, Manoeuvre};
use hoverline::input::InputError;
use hoverline::output::report::{self, Figure, Figures, ReportInputs, Severity};
use hoverline::output::{corridor_files, files, flight_files, sweep_files};
use hoverline::scenario::{load_scenario, load_schedule_file, Schedule};
use hoverline::schedule::{build, ScheduleSettings};
use hoverline::sweep::{run_sweep, SweepSettings};
use hoverline::trim::Objective;

/// Arguments of `report`.
#[derive(Debug, Args)]
pub struct ReportArgs {
    /// Scenario file (TOML)
    scenario: PathBuf,
    /// Output folder (default: the scenario's output_dir, else out/<scenario name>)
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// Use this schedule file (from `hoverline schedule`) instead of the scenario's schedule
    #[arg(long, value_name = "FILE")]
    schedule: Option<PathBuf>,
    /// Print the verdict as JSON on stdout (and nothing else)
    #[arg(long)]
    json: bool,
}

fn bar(len: u64, prefix: &str, what: &str) -> indicatif::ProgressBar {
    let b = indicatif::ProgressBar::new(len);
    b.set_style(
        indicatif::ProgressStyle::with_template("{prefix:>18} [{bar:30}] {pos}/{len} {msg}")
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
    );
    b.set_prefix(prefix.to_string());
    b.set_message(what.to_string());
    b
}

fn spinner(prefix: &str, what: &str) -> indicatif::ProgressBar {
    let b = indicatif::ProgressBar::new_spinner();
    b.set_style(
        indicatif::ProgressStyle::with_template("{prefix:>18} {spinner} {msg} ({elapsed})")
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_spinner()),
    );
    b.set_prefix(prefix.to_string());
    b.set_message(what.to_string());
    b.enable_steady_tick(Duration::from_millis(120));
    b
}

fn read_figure(dir: &Path, name: &str) -> Figure {
    let p = dir.join(name);
    let text = std::fs::read_to_string(&p).map_err(|e| format!("cannot read {name}: {e}"))?;
    report::inline_svg(&text).map_err(|e| format!("{name}: {e}"))
}

fn file_names(dir: &Path, written: &[PathBuf]) -> Vec<String> {
    let mut out: Vec<String> = written
        .iter()
        .filter_map(|p| {
            let ext = p.extension()?.to_str()?;
            // Data files only: the figures are inside the report.
            matches!(ext, "csv" | "json" | "toml").then(|| {
                p.strip_prefix(dir)
                    .unwrap_or(p)
                    .to_string_lossy()
                    .to_string()
            })
        })
        .collect();
    out.sort();
    out.dedup();
    out
}

fn today_utc() -> String {
    // SOURCE_DATE_EPOCH makes the date reproducible (build-reproducibility convention).
    let secs = std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|s| s.trim().parse::<i64>().ok())
        .unwrap_or_else(|| {
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map_or(0, |d| d.as_secs() as i64)
        });
    report::utc_date(secs)
}

/// Colour only on a terminal and only when NO_COLOR is unset or empty (no-color.org).
fn use_colour() -> bool {
    std::io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty())
}

/// Run `report`.
pub fn run(a: ReportArgs) -> Result<(), CliError> {
    let mut sc = load_scenario(&a.scenario)?;
    let from = match &a.schedule {
        Some(p) => {
            sc.schedule = load_schedule_file(p, &sc.vehicle)?;
            format!("schedule file {}", p.display())
        }
        None => format!("the [schedule] of {}", a.scenario.display()),
    };
    let schedule_source = match &sc.schedule {
        Schedule::Free => format!("free (trim picks the transition variable), {from}"),
        Schedule::Tilt(_) => format!("tilt against airspeed, {from}"),
        Schedule::Pitch(_) => format!("pitch attitude against airspeed, {from}"),
    };
    let flight_settings = FlightSettings::from_scenario(&sc).map_err(|inv| {
        let text = std::fs::read_to_string(&a.scenario).unwrap_or_default();
        CliError::Input(InputError::from_invalid(&a.scenario, &text, inv))
    })?;
    let atm = hoverline::atmosphere::isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .map_err(|e| {
        CliError::Input(InputError::file(
            &a.scenario,
            format!("[atmosphere]: {e}"),
            "give an altitude inside the troposphere (0..11000 m) and a modest temperature offset",
        ))
    })?;
    let out_dir = a.out.clone().unwrap_or_else(|| sc.output_dir());
    // The run is written as a set: staged, then moved in with the page last.
    let run = files::RunFolder::begin(&out_dir)?;
    let dir = run.staging().to_path_buf();
    let mut written: Vec<PathBuf> = Vec::new();

    // 1. The sweep along the schedule in use.
    let settings = SweepSettings {
        speeds_mps: sc.speeds_mps.clone(),
        climb_rad: sc.climb_rad,
        schedule: sc.schedule.clone(),
        objective: sc.file.sweep.objective,
        thresholds: sc.file.thresholds.clone(),
        gains: Some(hoverline::flight::law::FeedbackGains::from_file(
            &sc.file.flight,
        )),
    };
    let b = bar(settings.speeds_mps.len() as u64, "1/4 sweep", "speeds");
    let sweep = run_sweep(&sc.vehicle, &atm, &settings, &|| b.inc(1));
    b.finish_and_clear();
    written.extend(sweep_files::write(&dir, &sc, &sweep)?);

    // 2. The corridor and 3. the schedule built through it, compared with the one in use.
    let corridor = CorridorSettings::for_scenario(&sc, None, None)
        .map_err(|e| e.to_string())
        .and_then(|cs| {
            let b = bar(
                (cs.speeds_mps.len() * cs.values_rad.len()) as u64,
                "2/4 corridor",
                "points",
            );
            let c = compute(&sc.vehicle, &atm, &cs, &|| b.inc(1)).map_err(|e| e.to_string());
            b.finish_and_clear();
            c.map(|c| (cs, c))
        });
    let schedule = match &corridor {
        Ok((cs, c)) => {
            written.extend(corridor_files::write_corridor(&dir, &sc, c)?);
            let sp = spinner("3/4 schedule", "building and comparing schedules");
            let ss = ScheduleSettings::for_scenario(&sc);
            let r = build(&sc.vehicle, &atm, cs, c, &ss, &sc.schedule).map_err(|e| e.to_string());
            sp.finish_and_clear();
            if let Ok(bs) = &r {
                written.extend(corridor_files::write_schedule(&dir, &sc, c, bs)?);
            }
            r
        }
        Err(why) => Err(format!(
            "the corridor it is built in is not available ({why})"
        )),
    };

    // 4. The hover-to-cruise flight; its feedforward table is trimmed for least power, as in
    // `hoverline fly`.
    let power_sweep;
    let ff_sweep = if settings.objective != Objective::StallMargin {
        &sweep
    } else {
        let s2 = SweepSettings {
            objective: Objective::Reserve,
            ..settings.clone()
        };
        let b = bar(s2.speeds_mps.len() as u64, "4/4 flight trim", "speeds");
        power_sweep = run_sweep(&sc.vehicle, &atm, &s2, &|| b.inc(1));
        b.finish_and_clear();
        &power_sweep
    };
    let flight = FeedforwardTable::from_sweep(
        &sc.vehicle,
        &ff_sweep.points,
        &sc.schedule,
        &flight_settings.gains,
    )
    .map_err(|e| e.to_string())
    .and_then(|table| {
        let b = bar(100, "4/4 flight", "% of the flight");
        let r = fly(
            &sc.vehicle,
            &atm,
            &table,
            &flight_settings,
            Manoeuvre::HoverToCruise,
            &|x| b.set_position((100.0 * x) as u64),
        )
        .map_err(|e| e.to_string());
        b.finish_and_clear();
        r.map(|f| (table, f))
    });
    if let Ok((table, f)) = &flight {
        written.extend(flight_files::write(&dir, &sc, table, ff_sweep, f)?);
    }

    // Figures, read back from the files just written.
    let corridor_fig = match (&corridor, &schedule) {
        (Err(why), _) => Err(why.clone()),
        (Ok(_), Ok(_)) => read_figure(&dir, "schedule-map.svg"),
        (Ok(_), Err(_)) => read_figure(&dir, "corridor.svg"),
    };
    let flight_fig = |name: &str| match &flight {
        Ok(_) => read_figure(&dir, name),
        Err(why) => Err(why.clone()),
    };
    let figures = Figures {
        corridor: corridor_fig,
        schedule_margins: match &schedule {
            Ok(_) => read_figure(&dir, "schedule-margins.svg"),
            Err(why) => Err(why.clone()),
        },
        trim_curves: read_figure(&dir, "trim_curves.svg"),
        surface_alpha: read_figure(&dir, "surface_alpha.svg"),
        margins: read_figure(&dir, "margins.svg"),
        eigenvalues: read_figure(&dir, "eigenvalues.svg"),
        flight_states: flight_fig("flight_states.svg"),
        flight_alpha: flight_fig("flight_alpha.svg"),
        flight_controls: flight_fig("flight_controls.svg"),
    };
    let mut names = file_names(&dir, &written);
    names.push("report.json".into());
    names.sort();
    let date = today_utc();
    let inputs = ReportInputs {
        scenario: &sc,
        atmosphere: &atm,
        schedule_source: &schedule_source,
        date_utc: &date,
        sweep: &sweep,
        corridor: corridor.as_ref().map(|(_, c)| c).map_err(Clone::clone),
        schedule: schedule.as_ref().map_err(Clone::clone),
        flight: flight.as_ref().map(|(_, f)| f).map_err(Clone::clone),
        figures: &figures,
        files: &names,
    };
    let summary = report::summary(&inputs);
    files::write_json(&dir.join("report.json"), &summary)?;
    let staged = report::write(&dir, &inputs)?;
    run.commit(&["report.json", "report.html"])?;
    let path = out_dir.join(staged.strip_prefix(&dir).unwrap_or(&staged));

    if a.json {
        super::print_json(&summary)?;
    } else {
        let colour = use_colour();
        outln!(
            "report: {} ({}), {} unsafe, {} caution, {} ok, {} notes",
            sc.file.name,
            sc.vehicle.name,
            summary.counts[0],
            summary.counts[1],
            summary.counts[2],
            summary.counts[3]
        );
        for x in &summary.findings {
            let (word, code) = match x.severity {
                Severity::Unsafe => ("UNSAFE ", "1;31"),
                Severity::Caution => ("CAUTION", "33"),
                Severity::Ok => ("OK     ", "32"),
                Severity::Note => ("NOTE   ", "34"),
            };
            let word = if colour {
                format!("\x1b[{code}m{word}\x1b[0m")
            } else {
                word.to_string()
            };
            outln!("  {word} {}: {}", x.topic, x.text);
        }
        outln!("wrote {}", path.display());
        outln!("  and {} data files beside it", names.len());
        outln!("{}", hoverline::output::CAUTION);
    }
    if !summary.not_available.is_empty() {
        let parts: Vec<String> = summary
            .not_available
            .iter()
            .filter(|m| matches!(m.what.as_str(), "corridor" | "schedule" | "flight"))
            .map(|m| format!("{}: {}", m.what, m.why))
            .collect();
        if !parts.is_empty() {
            return Err(CliError::Analysis(format!(
                "the report {} was written, but part of the analysis could not be completed:\n  {}",
                path.display(),
                parts.join("\n  ")
            )));
        }
        for m in &summary.not_available {
            eprintln!("warning: {} not available: {}", m.what, m.why);
        }
    }
    Ok(())
}
