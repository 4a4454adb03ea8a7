//! Command-line arguments (clap) and the dispatch to one file per command.

/// `print!` to stdout that stops quietly once stdout is closed (see [`write_stdout`]).
macro_rules! out {
    ($($t:tt)*) => {
        $crate::cli::write_stdout(format_args!($($t)*))
    };
}

/// `println!` to stdout that stops quietly once stdout is closed (see [`write_stdout`]).
macro_rules! outln {
    () => {
        $crate::cli::write_stdout(format_args!("\n"))
    };
    ($($t:tt)*) => {
        $crate::cli::write_stdout(format_args!("{}\n", format_args!($($t)*)))
    };
}

mod check;
mod corridor;
mod fly;
mod report;
mod schedule;
mod sweep;
mod trim;

use std::path::PathBuf;

use clap::{Parser, Subcommand};

use hoverline::input::InputError;
use hoverline::output::files::WriteError;

const ABOUT: &str = "Transition-phase trim and stability analysis for VTOL airframes.\n\n\
CAUTION: a preliminary design aid built on quasi-steady, simplified models. It is not a flight \
clearance. Defer to the applicable airworthiness authority, local aviation rules and licensed \
flight-test practice.";

/// The caution shown under every command's help.
const CAUTION_HELP: &str =
    "CAUTION: preliminary design aid, not a flight clearance. Defer to the applicable \
airworthiness authority, local aviation rules and licensed flight-test practice.";

/// hoverline command line.
#[derive(Debug, Parser)]
#[command(name = "hoverline", version, about = ABOUT, long_about = ABOUT)]
pub struct Args {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// First look at a vehicle: weights, loadings, hover power, surfaces, stall speed, static margin, warnings
    #[command(after_help = CAUTION_HELP)]
    Check(check::CheckArgs),
    /// Trim one point in full detail: attitude, controls, margins, modes
    #[command(after_help = CAUTION_HELP)]
    Trim(trim::TrimArgs),
    /// Trim a scenario's whole speed sweep; write trim.csv, sweep.json and plots
    #[command(after_help = CAUTION_HELP)]
    Sweep(sweep::SweepArgs),
    /// Map the trimmable region over airspeed and tilt (or pitch); write corridor.csv, corridor.json and a plot
    #[command(after_help = CAUTION_HELP)]
    Corridor(corridor::CorridorArgs),
    /// Build the transition schedule with the largest smallest margin through the corridor
    #[command(after_help = CAUTION_HELP)]
    Schedule(schedule::ScheduleArgs),
    /// Fly the transition in time (hover to cruise, or back); write flight.csv, flight.json and plots
    #[command(after_help = CAUTION_HELP)]
    Fly(fly::FlyArgs),
    /// Run sweep, corridor, schedule and flight; write one self-contained report.html with the data files
    #[command(after_help = CAUTION_HELP)]
    Report(report::ReportArgs),
}

/// What can go wrong in a command.
#[derive(Debug, thiserror::Error)]
pub enum CliError {
    /// A user file is wrong (exit 2).
    #[error("{0}")]
    Input(#[from] InputError),
    /// Bad usage (exit 2).
    #[error("{0}")]
    Usage(String),
    /// Results could not be written (exit 1).
    #[error("{0}")]
    Write(#[from] WriteError),
    /// The analysis could not be completed (exit 1).
    #[error("{0}")]
    Analysis(String),
}

impl CliError {
    /// Exit status for this error.
    pub fn exit_code(&self) -> u8 {
        match self {
            CliError::Input(_) | CliError::Usage(_) => 2,
            CliError::Write(_) | CliError::Analysis(_) => 1,
        }
    }
}

/// Run the parsed command.
pub fn run(args: Args) -> Result<(), CliError> {
    match args.command {
        Command::Check(a) => check::run(a),
        Command::Trim(a) => trim::run(a),
        Command::Sweep(a) => sweep::run(a),
        Command::Corridor(a) => corridor::run(a),
        Command::Schedule(a) => schedule::run(a),
        Command::Fly(a) => fly::run(a),
        Command::Report(a) => report::run(a),
    }
}

/// Set once stdout is found closed (a pager or `head` quit reading).
static STDOUT_CLOSED: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

/// Write text for a reader to stdout, every line wrapped to
/// [`hoverline::output::text::LINE_WIDTH`] columns (see [`write_raw`] for the closed stdout).
pub(crate) fn write_stdout(args: std::fmt::Arguments) {
    let text = std::fmt::format(args);
    write_raw(&hoverline::output::text::wrap(
        &text,
        hoverline::output::text::LINE_WIDTH,
    ));
}

/// Write to stdout as is. A closed stdout (broken pipe) is not an error of the command:
/// printing stops quietly and the command goes on to write its files and exit 0, so
/// `hoverline sweep s.toml | head` loses nothing.
fn write_raw(text: &str) {
    use std::io::Write;
    use std::sync::atomic::Ordering;
    if STDOUT_CLOSED.load(Ordering::Relaxed) {
        return;
    }
    let mut out = std::io::stdout().lock();
    if out
        .write_all(text.as_bytes())
        .and_then(|_| out.flush())
        .is_err()
    {
        STDOUT_CLOSED.store(true, Ordering::Relaxed);
    }
}

/// Print JSON to stdout, unwrapped.
fn print_json<T: serde::Serialize>(v: &T) -> Result<(), CliError> {
    let mut s = serde_json::to_string_pretty(v).map_err(|e| CliError::Analysis(e.to_string()))?;
    s.push('\n');
    write_raw(&s);
    Ok(())
}

/// An atmosphere from flags, with the flag named in errors.
fn atmosphere(
    altitude_m: f64,
    offset_k: f64,
) -> Result<hoverline::atmosphere::Atmosphere, CliError> {
    let b = hoverline::limits::TEMPERATURE_OFFSET_K;
    if !b.contains(offset_k) {
        return Err(CliError::Usage(format!(
            "--temperature-offset-k {} lies outside {}\n  hint: give an offset from ISA within {} (our sanity bound)",
            hoverline::limits::show(offset_k),
            b.text(),
            b.text()
        )));
    }
    hoverline::atmosphere::isa(altitude_m, offset_k)
        .map_err(|e| CliError::Usage(format!("--altitude-m / --temperature-offset-k: {e}")))
}

#[allow(dead_code)]
fn out_dir(given: Option<PathBuf>, default: PathBuf) -> PathBuf {
    given.unwrap_or(default)
}
