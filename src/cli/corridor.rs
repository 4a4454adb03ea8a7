//! `hoverline corridor SCENARIO`: map the trimmable region over airspeed and the transition
//! variable, write corridor.csv, corridor.json and the corridor plot.

use std::path::PathBuf;

use clap::Args;

use super::CliError;
use hoverline::corridor::{compute, Corridor, CorridorSettings};
use hoverline::output::corridor_files::write_corridor;
use hoverline::output::text::{num, span, speed_span, speed_spans};
use hoverline::scenario::{load_scenario, Scenario};

/// Arguments of `corridor`.
#[derive(Debug, Args)]
pub struct CorridorArgs {
    /// Scenario file (TOML)
    scenario: PathBuf,
    /// Output folder (default: the scenario's output_dir, else out/<scenario name>)
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    #[command(flatten)]
    grid: GridArgs,
    /// Print the corridor as JSON on stdout instead of the summary
    #[arg(long)]
    json: bool,
}

/// Corridor-grid flags shared by `corridor` and `schedule`.
#[derive(Debug, Args)]
pub struct GridArgs {
    /// Airspeed step of the corridor grid (m/s; default half the scenario's sweep step)
    #[arg(long, value_name = "MPS")]
    speed_step: Option<f64>,
    /// Step of the transition variable (deg; default 1)
    #[arg(long, value_name = "DEG")]
    value_step: Option<f64>,
    /// Lowest pitch attitude allowed in every trim, replacing the vehicle's limits (deg)
    #[arg(long, value_name = "DEG", allow_hyphen_values = true)]
    pitch_min: Option<f64>,
    /// Highest pitch attitude allowed in every trim, replacing the vehicle's limits (deg)
    #[arg(long, value_name = "DEG", allow_hyphen_values = true)]
    pitch_max: Option<f64>,
}

/// Grid settings from the scenario and the grid flags. `--pitch-min` / `--pitch-max` replace
/// the vehicle's attitude limits for this run (in every trim, not only in the corridor).
pub(super) fn settings(sc: &mut Scenario, g: &GridArgs) -> Result<CorridorSettings, CliError> {
    if g.pitch_min.is_some() || g.pitch_max.is_some() {
        let (lo, hi) = sc.vehicle.attitude.envelope();
        let lo = g.pitch_min.map_or(lo, f64::to_radians);
        let hi = g.pitch_max.map_or(hi, f64::to_radians);
        let ok = |x: f64| x.is_finite() && (-90f64..=135.0).contains(&x.to_degrees());
        if !(ok(lo) && ok(hi) && hi > lo) {
            return Err(CliError::Usage(
                "--pitch-min / --pitch-max: the range is empty or outside -90..135 deg\n  hint: give --pitch-min below --pitch-max".into(),
            ));
        }
        sc.vehicle.attitude = hoverline::vehicle::AttitudeLimits::constant(lo, hi, true);
    }
    CorridorSettings::for_scenario(sc, g.speed_step, g.value_step)
        .map_err(|e| CliError::Usage(format!("--speed-step / --value-step: {e}")))
}

/// Compute a corridor with a progress bar on stderr.
pub(super) fn compute_with_bar(sc: &Scenario, s: &CorridorSettings) -> Result<Corridor, CliError> {
    let atm = hoverline::atmosphere::isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .map_err(|e| CliError::Analysis(e.to_string()))?;
    let n = (s.speeds_mps.len() * s.values_rad.len()) as u64;
    let bar = indicatif::ProgressBar::new(n);
    bar.set_style(
        indicatif::ProgressStyle::with_template(
            "{prefix} [{bar:30}] {pos}/{len} points ({eta} left)",
        )
        .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
    );
    bar.set_prefix("corridor");
    let c =
        compute(&sc.vehicle, &atm, s, &|| bar.inc(1)).map_err(|e| CliError::Usage(e.to_string()));
    bar.finish_and_clear();
    c
}

/// Print a short summary of a corridor.
pub(super) fn summary(sc: &Scenario, c: &Corridor) {
    let inside = c.points.iter().filter(|p| p.inside).count();
    let trimmed = c.points.iter().filter(|p| p.trimmed).count();
    let last = |v: &[f64]| v.last().copied().unwrap_or(f64::NAN);
    outln!(
        "corridor: {} ({}), {} x {} grid: {} speeds {}, {} {} deg",
        sc.file.name,
        sc.vehicle.name,
        c.speeds_mps.len(),
        c.values_deg.len(),
        c.speeds_mps.len(),
        speed_span(c.speeds_mps[0], last(&c.speeds_mps), 1),
        c.variable.name(),
        span(c.values_deg[0], last(&c.values_deg), 1),
    );
    outln!("  trim: {}", c.condition);
    if let Some((lo, hi)) = c.pitch_limits_deg {
        outln!("  pitch attitude allowed inside: {} deg", span(lo, hi, 1));
    }
    outln!(
        "  {} of {} points trimmed, {} inside the corridor",
        trimmed,
        c.points.len(),
        inside
    );
    let bands = c.speed_bands();
    if bands.is_empty() {
        outln!("  no speed has a point inside the corridor");
    } else {
        outln!(
            "  speeds with a point inside: {}",
            speed_spans(bands.iter().copied(), 2)
        );
    }
    // Per speed a few rows: the inside range and the best point.
    let var = c.variable.name();
    outln!(
        "  {:>6}  {:<22} {:>8} {:>8}  {}",
        "speed",
        format!("inside, {var}"),
        format!("best {var}"),
        "smallest",
        "limited by"
    );
    outln!("  {:>6}  {:<22} {:>8} {:>8}", "m/s", "deg", "deg", "margin");
    let stride = (c.speeds_mps.len() / 12).max(1);
    for i in (0..c.speeds_mps.len()).step_by(stride) {
        let ins: Vec<usize> = (0..c.values_deg.len())
            .filter(|&j| c.at(i, j).inside)
            .collect();
        let range = match (ins.first(), ins.last()) {
            (Some(&a), Some(&b)) => format!(
                "{}{}",
                span(c.values_deg[a], c.values_deg[b], 1),
                if ins.len() < b - a + 1 { " (gaps)" } else { "" }
            ),
            _ => "none".to_string(),
        };
        let best = ins.iter().map(|&j| c.at(i, j)).max_by(|a, b| {
            a.smallest_margin
                .unwrap_or(f64::INFINITY)
                .total_cmp(&b.smallest_margin.unwrap_or(f64::INFINITY))
        });
        let (at, margin, why) = match best {
            Some(p) => (
                num(p.value_deg, 1),
                p.smallest_margin.map_or("none".into(), |m| num(m, 3)),
                p.limiting_margin
                    .as_ref()
                    .map_or(String::new(), |l| l.margin_label()),
            ),
            None => ("-".into(), "-".into(), String::new()),
        };
        outln!(
            "  {:>6.2}  {:<22} {:>8} {:>8}  {}",
            c.speeds_mps[i],
            range,
            at,
            margin,
            why
        );
    }
    let reasons = c.reason_counts();
    if !reasons.is_empty() {
        outln!("  outside the corridor because of:");
        for (r, n) in reasons {
            outln!("    {r:<40} {n} points");
        }
    }
}

/// Run `corridor`.
pub fn run(a: CorridorArgs) -> Result<(), CliError> {
    let mut sc = load_scenario(&a.scenario)?;
    let s = settings(&mut sc, &a.grid)?;
    let c = compute_with_bar(&sc, &s)?;
    let dir = a.out.unwrap_or_else(|| sc.output_dir());
    let files = write_corridor(&dir, &sc, &c)?;
    if a.json {
        // Nothing but data on stdout.
        return super::print_json(&c);
    }
    summary(&sc, &c);
    for f in files {
        outln!("wrote {}", f.display());
    }
    outln!("caution: {}", hoverline::output::CAUTION);
    Ok(())
}
