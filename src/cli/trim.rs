//! `hoverline trim VEHICLE --speed MPS`

use std::path::PathBuf;

use clap::Args;

use super::{atmosphere, print_json, CliError};
use hoverline::output::text;
use hoverline::scenario::Thresholds;
use hoverline::sweep::solve_point;
use hoverline::trim::{Condition, Objective, TiltSetting, TrimRequest};
use hoverline::vehicle::load_vehicle;

/// Arguments of `trim`.
#[derive(Debug, Args)]
pub struct TrimArgs {
    /// Vehicle file (TOML)
    vehicle: PathBuf,
    /// Airspeed (m/s)
    #[arg(long)]
    speed: f64,
    /// Flight-path angle, climbing positive (deg)
    #[arg(long, default_value_t = 0.0, allow_hyphen_values = true)]
    climb_deg: f64,
    /// Tilt of every tilt actuator (deg, 0 cruise, 90 hover); free when omitted
    #[arg(long)]
    tilt_deg: Option<f64>,
    /// Altitude (m, ISA geopotential)
    #[arg(long, default_value_t = 0.0)]
    altitude_m: f64,
    /// ISA temperature offset (K)
    #[arg(long, default_value_t = 0.0, allow_hyphen_values = true)]
    temperature_offset_k: f64,
    /// What to minimise where controls outnumber conditions
    #[arg(long, value_enum, default_value_t = ObjectiveArg::Reserve)]
    objective: ObjectiveArg,
    /// Print the point as JSON
    #[arg(long)]
    json: bool,
}

/// Trim objective on the command line.
#[derive(Debug, Clone, Copy, clap::ValueEnum)]
pub enum ObjectiveArg {
    /// Least total shaft power, keeping redundant controls off their stops and surfaces off stall
    Reserve,
    /// Least total shaft power alone (redundant controls may park at a stop)
    Power,
    /// Largest smallest stall margin
    StallMargin,
}

impl From<ObjectiveArg> for Objective {
    fn from(o: ObjectiveArg) -> Self {
        match o {
            ObjectiveArg::Reserve => Objective::Reserve,
            ObjectiveArg::Power => Objective::Power,
            ObjectiveArg::StallMargin => Objective::StallMargin,
        }
    }
}

/// Run `trim`.
pub fn run(a: TrimArgs) -> Result<(), CliError> {
    let sb = hoverline::limits::SPEED_MPS;
    if !sb.contains(a.speed) {
        return Err(CliError::Usage(format!(
            "--speed {} lies outside {}\n  hint: give an airspeed within {} (our sanity bound)",
            hoverline::limits::show(a.speed),
            sb.text(),
            sb.text()
        )));
    }
    if !a.climb_deg.is_finite() || a.climb_deg.abs() > 60.0 {
        return Err(CliError::Usage(
            "--climb-deg must lie within -60..60".into(),
        ));
    }
    let v = load_vehicle(&a.vehicle)?;
    let atm = atmosphere(a.altitude_m, a.temperature_offset_k)?;
    let tilt = match a.tilt_deg {
        Some(t) if !t.is_finite() => {
            return Err(CliError::Usage("--tilt-deg must be a number".into()))
        }
        Some(_) if v.actuators.is_empty() => {
            return Err(CliError::Usage(format!(
                "vehicle '{}' has no tilt actuator; drop --tilt-deg",
                v.name
            )))
        }
        Some(t) => {
            for act in &v.actuators {
                let (lo, hi) = (act.min_rad.to_degrees(), act.max_rad.to_degrees());
                if t < lo - 1e-9 || t > hi + 1e-9 {
                    return Err(CliError::Usage(format!(
                        "--tilt-deg {t} lies outside actuator '{}' range {lo:.1}..{hi:.1} deg",
                        act.name
                    )));
                }
            }
            TiltSetting::Fixed(vec![t.to_radians(); v.actuators.len()])
        }
        None => TiltSetting::Free,
    };
    let req = TrimRequest {
        speed_mps: a.speed,
        climb_rad: a.climb_deg.to_radians(),
        tilt,
        pitch_rad: None,
        condition: Condition::Steady,
        objective: a.objective.into(),
    };
    let (report, _) = solve_point(&v, &atm, &req, &Thresholds::default(), None, true);
    if a.json {
        print_json(&report)?;
    } else {
        out!("{}", text::point(&report));
    }
    Ok(())
}
