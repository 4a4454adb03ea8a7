//! `hoverline schedule SCENARIO`: compute the corridor, build the schedule with the largest
//! smallest margin through it, compare it with the scenario's own, write schedule.toml (the
//! scenario's `[schedule]` format), schedule.csv, schedule.json and plots.

use std::path::PathBuf;

use clap::Args;

use super::corridor::{compute_with_bar, settings};
use super::CliError;
use hoverline::output::corridor_files::{describe, write_schedule};
use hoverline::output::text::{num, signed, speed_span, speed_spans};
use hoverline::scenario::load_scenario;
use hoverline::schedule::{build, verdict, ScheduleSettings};

/// Arguments of `schedule`.
#[derive(Debug, Args)]
pub struct ScheduleArgs {
    /// Scenario file (TOML)
    scenario: PathBuf,
    /// Output folder (default: the scenario's output_dir, else out/<scenario name>)
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    #[command(flatten)]
    grid: super::corridor::GridArgs,
    /// Speed spacing of the schedule's knots (m/s; default 1)
    #[arg(long, value_name = "MPS")]
    knot_spacing: Option<f64>,
    /// Skip the continuous refinement (grid optimum only)
    #[arg(long)]
    no_refine: bool,
    /// Print the result as JSON on stdout instead of the summary
    #[arg(long)]
    json: bool,
}

/// Run `schedule`.
pub fn run(a: ScheduleArgs) -> Result<(), CliError> {
    let mut sc = load_scenario(&a.scenario)?;
    let s = settings(&mut sc, &a.grid)?;
    let mut ss = ScheduleSettings::for_scenario(&sc);
    if let Some(k) = a.knot_spacing {
        if !(k.is_finite() && k > 0.0) {
            return Err(CliError::Usage(format!(
                "--knot-spacing: {k} is not a positive speed\n  hint: give a spacing such as 1.0"
            )));
        }
        ss.knot_spacing_mps = k;
    }
    ss.refine = !a.no_refine;
    let dv = match s.speeds_mps.as_slice() {
        [a, b, ..] => b - a,
        _ => 0.0,
    };
    ss.check_grid(s.speeds_mps.len(), s.values_rad.len(), dv)
        .map_err(|e| CliError::Usage(e.to_string()))?;
    let c = compute_with_bar(&sc, &s)?;
    let atm = hoverline::atmosphere::isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .map_err(|e| CliError::Analysis(e.to_string()))?;
    let b = build(&sc.vehicle, &atm, &s, &c, &ss, &sc.schedule).map_err(|e| match e {
        // Settings come from the flags and the scenario: bad input.
        hoverline::schedule::ScheduleError::Settings(_) => CliError::Usage(e.to_string()),
        _ => CliError::Analysis(e.to_string()),
    })?;

    let dir = a.out.unwrap_or_else(|| sc.output_dir());
    let files = write_schedule(&dir, &sc, &c, &b)?;
    if a.json {
        // Nothing but data on stdout.
        return super::print_json(&b);
    }
    print_text(&sc, &b);
    for f in files {
        outln!("wrote {}", f.display());
    }
    outln!("caution: {}", hoverline::output::CAUTION);
    Ok(())
}

/// Print the human summary of a built schedule.
fn print_text(sc: &hoverline::scenario::Scenario, b: &hoverline::schedule::BuiltSchedule) {
    let k = &b.constraints;
    outln!(
        "schedule: {} ({}), {} against airspeed",
        sc.file.name,
        sc.vehicle.name,
        b.variable.name()
    );
    outln!(
        "  constraints: never rising with speed; slope at most {:.2} deg per m/s ({:.1} deg/s at \
         {:.2} m/s^2); curvature at most {:.2} deg per (m/s)^2; knots every {:.2} m/s",
        k.max_slope_deg_per_mps,
        k.rate_limit_deg_s,
        k.acceleration_mps2,
        k.smoothness_deg_per_mps2,
        k.knot_spacing_mps
    );
    outln!("  {:>6}  {:>8}", "speed", b.variable.name());
    outln!("  {:>6}  {:>8}", "m/s", "deg");
    for (v, y) in b.speed_mps.iter().zip(&b.value_deg) {
        outln!("  {v:6.2}  {:>8}", num(*y, 2));
    }
    match &b.left_corridor {
        None => outln!(
            "  smallest margin on the grid (dynamic programming): {:.3}",
            b.grid_smallest_margin
        ),
        Some(note) => outln!("  NOTE: {note}"),
    }
    outln!("  worst point, re-trimmed: {}", describe(&b.worst));
    if b.built.outside > 0 {
        outln!(
            "  {} re-trimmed points fall outside the corridor",
            b.built.outside
        );
    }
    if !b.short_of_acceleration.is_empty() {
        outln!(
            "  acceleration available below the planned {:.2} m/s^2 at {}",
            k.acceleration_mps2,
            speed_spans(b.short_of_acceleration.iter().copied(), 1)
        );
    }
    match &b.scenario {
        Some(o) => {
            outln!("  compared with {}:", o.label);
            outln!("    its worst point: {}", describe(&o.worst));
            if o.outside > 0 {
                outln!(
                    "    {} of its points are outside the corridor ({} untrimmable)",
                    o.outside,
                    o.untrimmed
                );
            }
            for band in &b.comparison {
                let d = match (band.mean_difference, band.largest_difference) {
                    (Some(m), Some(l)) => {
                        format!(
                            ", margin difference mean {}, largest {}",
                            signed(m, 3),
                            signed(l, 3)
                        )
                    }
                    _ => String::new(),
                };
                let who = match band.better.as_str() {
                    "built" => "built is better",
                    "scenario" => "scenario's is better",
                    _ => "equal",
                };
                outln!(
                    "    {}: {who}{d}",
                    speed_span(band.from_mps, band.to_mps, 2)
                );
            }
            if let Some((better, why)) = verdict(b) {
                outln!(
                    "  the built schedule is {}: {why}",
                    if better { "better" } else { "NOT better" }
                );
            }
        }
        None => outln!("  the scenario has no schedule of this kind to compare with"),
    }
}
