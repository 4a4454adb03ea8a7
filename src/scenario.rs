//! The scenario file (TOML): which vehicle, the atmosphere, the mass case, the speed sweep, the
//! flight-path angle, the transition schedule, the margin thresholds and the output folder.
//!
//! A schedule is a table of the transition variable against airspeed: tilt angle for vehicles
//! with a tilt actuator, pitch attitude for vehicles without one (tail-sitters), or `free`
//! (the trim solver picks it). `hoverline schedule` writes files in this same format.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::input::{InputError, Invalid, KeyPath};
use crate::vehicle::{load_vehicle, Point, Vehicle};

/// Top level of a scenario file.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct ScenarioFile {
    /// Scenario name; also the default output folder `out/<name>/`.
    pub name: String,
    /// Free text.
    #[serde(default)]
    pub description: String,
    /// Vehicle file, relative to the scenario file.
    pub vehicle: String,
    /// Output folder (relative to the working directory); default `out/<name>`.
    pub output_dir: Option<String>,
    /// Atmosphere.
    #[serde(default)]
    pub atmosphere: AtmosphereFile,
    /// Mass case overrides.
    #[serde(default)]
    pub mass_case: MassCaseFile,
    /// Speed sweep.
    pub sweep: SweepFile,
    /// Transition schedule.
    #[serde(default)]
    pub schedule: ScheduleFile,
    /// Margin thresholds.
    #[serde(default)]
    pub thresholds: Thresholds,
    /// Transition manoeuvre settings.
    #[serde(default)]
    pub transition: TransitionFile,
    /// How `hoverline fly` flies the transition: feedback design, wind, gust, integration.
    #[serde(default)]
    pub flight: FlightFile,
}

/// `[atmosphere]`
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct AtmosphereFile {
    /// Geopotential altitude (m).
    #[serde(default)]
    pub altitude_m: f64,
    /// ISA temperature offset (K).
    #[serde(default)]
    pub temperature_offset_k: f64,
}

/// `[mass_case]`
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct MassCaseFile {
    /// Mass replacing the vehicle's (kg).
    pub mass_kg: Option<f64>,
    /// CG shift forward (m).
    #[serde(default)]
    pub cg_shift_x_m: f64,
    /// CG shift down (m).
    #[serde(default)]
    pub cg_shift_z_m: f64,
}

/// `[sweep]`
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct SweepFile {
    /// First airspeed (m/s).
    pub from_mps: f64,
    /// Last airspeed (m/s).
    pub to_mps: f64,
    /// Step (m/s).
    pub step_mps: f64,
    /// Flight-path angle, climbing positive (deg).
    #[serde(default)]
    pub climb_deg: f64,
    /// What trim minimises where controls outnumber conditions: "reserve" (default: least
    /// power keeping control and stall reserves), "power" (least power alone) or
    /// "stall-margin" (largest smallest stall margin).
    #[serde(default)]
    pub objective: crate::trim::Objective,
}

/// What the schedule table holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ScheduleMode {
    /// The trim solver chooses the transition variable.
    #[default]
    Free,
    /// Tilt angle of every tilt actuator against speed.
    Tilt,
    /// Pitch attitude against speed (vehicles without a tilt actuator).
    Pitch,
}

/// `[schedule]`
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct ScheduleFile {
    /// free, tilt or pitch.
    #[serde(default)]
    pub mode: ScheduleMode,
    /// Airspeeds of the table (m/s), increasing.
    #[serde(default)]
    pub speed_mps: Vec<f64>,
    /// Transition variable at each speed (deg).
    #[serde(default)]
    pub value_deg: Vec<f64>,
}

/// `[thresholds]`: margins below these make a point unsafe. The defaults are common practice
/// for preliminary design, not requirements.
#[derive(Debug, Clone, Deserialize, Serialize, PartialEq)]
#[serde(deny_unknown_fields, default)]
pub struct Thresholds {
    /// Smallest stall margin of any surface part whose stall alone is unsafe (deg).
    pub stall_margin_deg: f64,
    /// Stalled load share at which stall makes a point unsafe (-): sum of q S of the stalled
    /// wing and tail parts over the weight.
    pub stalled_load_share: f64,
    /// Smallest thrust margin of any rotor group (fraction of thrust available).
    pub thrust_margin: f64,
    /// Smallest power margin of any rotor group (fraction of power available).
    pub power_margin: f64,
    /// Smallest pitch acceleration authority, nose-up and nose-down (rad/s^2).
    pub pitch_accel_rad_s2: f64,
    /// Smallest elevator travel left (deg), checked only where the elevator has authority.
    pub elevator_margin_deg: f64,
    /// Smallest static margin where wingborne (% chord).
    pub static_margin_pct: f64,
    /// Shortest acceptable time to double amplitude of an unstable mode (s).
    pub time_to_double_s: f64,
    /// Smallest loop gain margin (dB).
    pub gain_margin_db: f64,
    /// Smallest loop phase margin (deg).
    pub phase_margin_deg: f64,
}

impl Default for Thresholds {
    fn default() -> Self {
        // Common practice, no source: typical preliminary-design allowances.
        Thresholds {
            stall_margin_deg: 3.0,
            // Our choice: a twentieth of the weight on separated flow changes the trim and the
            // handling noticeably; below it, stall is reported as advisory.
            stalled_load_share: 0.05,
            thrust_margin: 0.15,
            power_margin: 0.10,
            pitch_accel_rad_s2: 0.5,
            elevator_margin_deg: 2.0,
            static_margin_pct: 5.0,
            // Bare-airframe hover modes of VTOL vehicles typically double in 1-3 s and are
            // stabilised by the flight-control system; faster growth needs a high-bandwidth
            // loop (common practice, no source).
            time_to_double_s: 1.0,
            // MIL-F-9490D flight-control stability margins (from memory).
            gain_margin_db: 6.0,
            phase_margin_deg: 45.0,
        }
    }
}

/// `[transition]`: how the manoeuvre is flown.
#[derive(Debug, Clone, Deserialize, Serialize, PartialEq)]
#[serde(deny_unknown_fields, default)]
pub struct TransitionFile {
    /// Planned acceleration along the path (m/s^2).
    pub acceleration_mps2: f64,
    /// Planned deceleration for cruise-to-hover (m/s^2, positive).
    pub deceleration_mps2: f64,
    /// Smoothness bound of a built schedule: the largest |d2y/dV2| of the transition variable
    /// y against airspeed V, estimated on the schedule's knots as
    /// 2 (s_k - s_(k-1)) / (h_(k-1) + h_k) with s_k the slope and h_k the speed span of
    /// segment k (deg per (m/s)^2).
    pub smoothness_deg_per_mps2: f64,
}

impl Default for TransitionFile {
    fn default() -> Self {
        // Common practice, no source.
        TransitionFile {
            acceleration_mps2: 1.0,
            deceleration_mps2: 0.8,
            smoothness_deg_per_mps2: 4.0,
        }
    }
}

/// `[flight]`: settings of the transition flown in time (`hoverline fly`). The feedback law is
/// given by its design: bandwidth (rad/s) and damping ratio of each loop, from which the gains
/// follow (see `flight::law`). The defaults are common practice for small electric VTOL
/// aircraft and fly every demo vehicle; they are not requirements. Validated in
/// `flight::FlightSettings::from_file`.
#[derive(Debug, Clone, Deserialize, Serialize, PartialEq)]
#[serde(deny_unknown_fields, default)]
pub struct FlightFile {
    /// Time held at the start speed before the speed ramp begins (s).
    pub hold_before_s: f64,
    /// Time held at the end speed after the ramp (s).
    pub hold_after_s: f64,
    /// Spacing of the recorded time history (s).
    pub sample_step_s: f64,
    /// Relative tolerance of the Dormand-Prince integrator (-).
    pub relative_tolerance: f64,
    /// Absolute tolerance of the integrator (SI units of each state).
    pub absolute_tolerance: f64,
    /// Bandwidth of the tilt servo behind its rate limit (rad/s).
    pub tilt_servo_bandwidth_rad_s: f64,
    /// Pitch-attitude loop natural frequency (rad/s).
    pub pitch_bandwidth_rad_s: f64,
    /// Pitch-attitude loop damping ratio (-).
    pub pitch_damping: f64,
    /// Height loop natural frequency (rad/s).
    pub height_bandwidth_rad_s: f64,
    /// Height loop damping ratio (-).
    pub height_damping: f64,
    /// Height integral pole as a fraction of the height bandwidth (0 = no integral).
    pub height_integral_ratio: f64,
    /// Speed loop natural frequency, proportional-integral (rad/s).
    pub speed_bandwidth_rad_s: f64,
    /// Speed loop damping ratio (-).
    pub speed_damping: f64,
    /// Largest pitch-attitude offset the speed and height loops may command (deg).
    pub pitch_offset_limit_deg: f64,
    /// Pitch-attitude offset that counts as one unit of control effort in the allocation (deg).
    pub pitch_offset_scale_deg: f64,
    /// Weight of the pitch channel against the force channels in the allocation (-).
    pub pitch_priority: f64,
    /// Steady headwind (m/s, positive against the direction of flight).
    pub headwind_mps: f64,
    /// Steady updraft (m/s, positive up).
    pub updraft_mps: f64,
    /// Optional discrete gust.
    pub gust: Option<GustFile>,
    /// A surface part counts for stall exposure only while its dynamic pressure times area is
    /// at least this fraction of the weight (-).
    pub stall_load_fraction: f64,
    /// Tilt off its schedule at the flown airspeed by more than this is reported (deg).
    pub tilt_lag_warning_deg: f64,
    /// Largest lead of the planned speed over the flown airspeed (m/s): the plan waits for a
    /// vehicle that cannot accelerate as planned.
    pub plan_lead_mps: f64,
    /// Angle-of-attack protection: the speed and height loops may not pitch a loaded,
    /// unstalled surface part past its stall angle less the margin.
    pub alpha_protection: bool,
    /// Margin of the angle-of-attack protection (deg).
    pub alpha_protection_margin_deg: f64,
    /// Uncertainties for `hoverline fly --dispersions N`.
    pub dispersions: DispersionFile,
}

/// `[flight.dispersions]`: one standard deviation of each uncertainty of the Monte Carlo
/// dispersion runs (normal, truncated at three standard deviations). The defaults are common
/// practice for preliminary design, not requirements.
#[derive(Debug, Clone, Deserialize, Serialize, PartialEq)]
#[serde(deny_unknown_fields, default)]
pub struct DispersionFile {
    /// Mass (% of the mass; inertia scales with it).
    pub mass_pct: f64,
    /// CG position along body x (m).
    pub cg_x_m: f64,
    /// Aerodynamic forces and moments of each surface (% of their value).
    pub aero_pct: f64,
    /// Thrust and power available of each rotor group (% of their value).
    pub thrust_pct: f64,
    /// Seed of the random sequence (the same seed gives the same runs).
    pub seed: u64,
}

impl Default for DispersionFile {
    fn default() -> Self {
        // Common practice, no source.
        DispersionFile {
            mass_pct: 3.0,
            cg_x_m: 0.01,
            aero_pct: 5.0,
            thrust_pct: 3.0,
            seed: 1,
        }
    }
}

impl Default for FlightFile {
    fn default() -> Self {
        // Common practice, no source: loop bandwidths a factor of 3 to 4 apart (inner pitch loop
        // fastest), damping ratios near 0.8.
        FlightFile {
            hold_before_s: 2.0,
            hold_after_s: 8.0,
            sample_step_s: 0.02,
            relative_tolerance: 1e-6,
            absolute_tolerance: 1e-6,
            tilt_servo_bandwidth_rad_s: 8.0,
            pitch_bandwidth_rad_s: 3.0,
            pitch_damping: 0.8,
            height_bandwidth_rad_s: 0.8,
            height_damping: 0.9,
            height_integral_ratio: 0.25,
            speed_bandwidth_rad_s: 0.5,
            speed_damping: 0.9,
            pitch_offset_limit_deg: 20.0,
            pitch_offset_scale_deg: 10.0,
            pitch_priority: 10.0,
            headwind_mps: 0.0,
            updraft_mps: 0.0,
            gust: None,
            stall_load_fraction: crate::margins::LOADED_PART_SHARE,
            tilt_lag_warning_deg: 5.0,
            plan_lead_mps: 2.0,
            alpha_protection: true,
            alpha_protection_margin_deg: 2.0,
            dispersions: DispersionFile::default(),
        }
    }
}

/// Direction of a discrete gust.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum GustDirection {
    /// Air moving up (updraft).
    #[default]
    Up,
    /// Air moving down.
    Down,
    /// Air moving against the direction of flight (headwind).
    Head,
    /// Air moving with the direction of flight (tailwind).
    Tail,
}

/// Shape of a discrete gust.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum GustShape {
    /// 1-cosine up and back down over twice the gust length.
    #[default]
    Full,
    /// MIL-F-8785C discrete gust: 1-cosine rise over the gust length, then held.
    Ramp,
}

/// `[flight.gust]`: a 1-cosine discrete gust.
#[derive(Debug, Clone, Deserialize, Serialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct GustFile {
    /// Time the vehicle enters the gust (s from the start of the flight).
    pub start_s: f64,
    /// Direction of the air motion.
    #[serde(default)]
    pub direction: GustDirection,
    /// Peak gust velocity (m/s, positive).
    pub amplitude_mps: f64,
    /// Gust length d_m: distance from the gust edge to the peak (m).
    pub length_m: f64,
    /// full (up and down) or ramp (MIL-F-8785C rise and hold).
    #[serde(default)]
    pub shape: GustShape,
    /// Slowest penetration speed (m/s): at lower planned airspeed the gust passes at this speed,
    /// standing for the motion of the gust front itself.
    #[serde(default = "default_penetration")]
    pub min_penetration_mps: f64,
}

fn default_penetration() -> f64 {
    // Common practice, no source.
    2.0
}

/// A schedule of the transition variable against airspeed, validated.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub enum Schedule {
    /// The solver picks the variable.
    Free,
    /// Tilt (rad) of every tilt actuator, interpolated linearly in speed.
    Tilt(Table),
    /// Pitch attitude (rad), interpolated linearly in speed.
    Pitch(Table),
}

/// A piecewise-linear table y(speed); held constant outside its range.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Table {
    /// Speeds (m/s), strictly increasing.
    pub speed_mps: Vec<f64>,
    /// Values (rad).
    pub value_rad: Vec<f64>,
}

impl Table {
    /// Linear interpolation, clamped at the ends.
    pub fn at(&self, speed_mps: f64) -> f64 {
        let s = &self.speed_mps;
        let y = &self.value_rad;
        if speed_mps <= s[0] {
            return y[0];
        }
        if speed_mps >= s[s.len() - 1] {
            return y[y.len() - 1];
        }
        let i = s.partition_point(|&x| x <= speed_mps) - 1;
        let t = (speed_mps - s[i]) / (s[i + 1] - s[i]);
        y[i] + t * (y[i + 1] - y[i])
    }
}

/// A validated scenario with its vehicle loaded and the mass case applied.
#[derive(Debug, Clone)]
pub struct Scenario {
    /// The file contents, as read.
    pub file: ScenarioFile,
    /// Where the scenario file is.
    pub path: PathBuf,
    /// The vehicle file path.
    pub vehicle_path: PathBuf,
    /// The vehicle with the mass case applied.
    pub vehicle: Vehicle,
    /// Speeds of the sweep (m/s).
    pub speeds_mps: Vec<f64>,
    /// Flight-path angle (rad).
    pub climb_rad: f64,
    /// The schedule.
    pub schedule: Schedule,
}

impl Scenario {
    /// Output folder: the file's `output_dir`, else `out/<name>`.
    pub fn output_dir(&self) -> PathBuf {
        match &self.file.output_dir {
            Some(d) => PathBuf::from(d),
            None => PathBuf::from("out").join(folder_name(&self.file.name)),
        }
    }
}

/// A name made safe as one path component: characters other than letters, digits, `-`, `_`
/// and `.` become `_`, leading dots are dropped (no `..`, no hidden folder, no separator).
pub fn folder_name(name: &str) -> String {
    let s: String = name
        .chars()
        .map(|c| {
            if c.is_alphanumeric() || matches!(c, '-' | '_' | '.') {
                c
            } else {
                '_'
            }
        })
        .collect();
    let s = s.trim_start_matches('.');
    if s.is_empty() {
        "scenario".into()
    } else {
        s.to_string()
    }
}

/// Read, parse and validate a scenario file and the vehicle it names.
pub fn load_scenario(path: &Path) -> Result<Scenario, InputError> {
    let text = crate::input::read_text(
        path,
        "scenario file",
        "check the path; demo scenarios are in scenarios/",
    )?;
    let file: ScenarioFile =
        toml::from_str(&text).map_err(|e| InputError::from_toml(path, &text, &e))?;
    let dir = path.parent().unwrap_or(Path::new("."));
    let vehicle_path = dir.join(&file.vehicle);
    let base = load_vehicle(&vehicle_path).map_err(|e| {
        // A vehicle file that cannot be read is reported on the `vehicle =` line.
        if e.line.is_none() && e.file == vehicle_path {
            let inv = Invalid::new(
                KeyPath::root().key("vehicle"),
                format!("{}: {}", vehicle_path.display(), e.message),
                e.hint,
            );
            InputError::from_invalid(path, &text, inv)
        } else {
            e
        }
    })?;
    build(file, path, vehicle_path, base).map_err(|inv| InputError::from_invalid(path, &text, inv))
}

fn finite(path: KeyPath, v: f64) -> Result<f64, Invalid> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(Invalid::new(
            path,
            format!("{v} is not a finite number"),
            "write a plain decimal number",
        ))
    }
}

/// Refuse a `[flight]` sample step that would record more than
/// [`crate::limits::MAX_FLIGHT_SAMPLES`] samples over the longest flight the sweep range allows.
fn flight_sample_count(file: &ScenarioFile, from: f64, to: f64) -> Result<(), Invalid> {
    let f = &file.flight;
    let tr = &file.transition;
    // The simulation leaves room for three times the planned ramp (flight::Reference).
    let ramp = (to - from) / tr.acceleration_mps2.min(tr.deceleration_mps2);
    let duration =
        (f.hold_before_s + 3.0 * ramp + f.hold_after_s).min(crate::flight::MAX_DURATION_S);
    let count = duration / f.sample_step_s + 2.0;
    let max = crate::limits::MAX_FLIGHT_SAMPLES;
    if count > max as f64 {
        return Err(Invalid::new(
            KeyPath::root().key("flight").key("sample_step_s"),
            format!(
                "a flight of up to {duration:.0} s would record {count:.3e} samples (at most {max})"
            ),
            format!(
                "give a sample step of at least {:.2e} s; 0.02 s is the default",
                duration / (max as f64 - 2.0)
            ),
        ));
    }
    Ok(())
}

/// Finite and inside one of the sanity bounds of [`crate::limits`].
fn bounded(path: KeyPath, v: f64, b: crate::limits::Bound) -> Result<f64, Invalid> {
    let v = finite(path.clone(), v)?;
    if b.contains(v) {
        Ok(v)
    } else {
        Err(Invalid::new(
            path,
            format!("{} is outside {}", b.value(v), b.text()),
            format!(
                "give a value within {} (our sanity bound, see README.md)",
                b.text()
            ),
        ))
    }
}

/// Refuse an airspeed outside [`crate::limits::SPEED_MPS`].
fn speed_in_bound(path: KeyPath, v: f64) -> Result<f64, Invalid> {
    let b = crate::limits::SPEED_MPS;
    if b.contains(v) {
        Ok(v)
    } else {
        Err(Invalid::new(
            path,
            format!(
                "airspeed {} m/s is outside {}",
                crate::limits::show(v),
                b.text()
            ),
            format!("give an airspeed within {} (our sanity bound)", b.text()),
        ))
    }
}

/// Validate a schedule table for a vehicle.
pub fn build_schedule(s: &ScheduleFile, v: &Vehicle, p: &KeyPath) -> Result<Schedule, Invalid> {
    if s.mode == ScheduleMode::Free {
        if !s.speed_mps.is_empty() || !s.value_deg.is_empty() {
            return Err(Invalid::new(
                p.key("mode"),
                "a table is given but mode is free",
                "set mode = \"tilt\" (or \"pitch\" for a vehicle without tilt actuator), or remove the table",
            ));
        }
        return Ok(Schedule::Free);
    }
    if s.mode == ScheduleMode::Tilt && !v.has_tilt() {
        return Err(Invalid::new(
            p.key("mode"),
            format!("vehicle '{}' has no tilt actuator", v.name),
            "use mode = \"pitch\" for a tail-sitter, or \"free\"",
        ));
    }
    if s.mode == ScheduleMode::Pitch && v.has_tilt() {
        return Err(Invalid::new(
            p.key("mode"),
            format!(
                "vehicle '{}' has tilt actuators, so its transition variable is tilt, not pitch",
                v.name
            ),
            "use mode = \"tilt\" with a tilt table, or \"free\" to let the trim choose the tilt",
        ));
    }
    if s.speed_mps.len() < 2 || s.speed_mps.len() != s.value_deg.len() {
        return Err(Invalid::new(
            p.key("speed_mps"),
            format!(
                "the table needs at least two points and equal lengths (speed_mps has {}, value_deg has {})",
                s.speed_mps.len(),
                s.value_deg.len()
            ),
            "give speed_mps = [..] and value_deg = [..] of the same length",
        ));
    }
    for (i, w) in s.speed_mps.windows(2).enumerate() {
        finite(p.key("speed_mps"), w[0])?;
        finite(p.key("speed_mps"), w[1])?;
        if w[1] <= w[0] {
            return Err(Invalid::new(
                p.key("speed_mps"),
                format!("speeds are not increasing at entry {}", i + 2),
                "list speeds in increasing order without repeats",
            ));
        }
    }
    if s.speed_mps[0] < 0.0 {
        return Err(Invalid::new(
            p.key("speed_mps"),
            "negative airspeed in the table",
            "start at 0 m/s or above",
        ));
    }
    speed_in_bound(p.key("speed_mps"), s.speed_mps[s.speed_mps.len() - 1])?;
    let (lo, hi) = match s.mode {
        ScheduleMode::Tilt => v
            .actuators
            .iter()
            .fold((f64::NEG_INFINITY, f64::INFINITY), |(l, h), a| {
                (l.max(a.min_rad.to_degrees()), h.min(a.max_rad.to_degrees()))
            }),
        _ => (-30.0, 120.0),
    };
    for &y in &s.value_deg {
        let y = finite(p.key("value_deg"), y)?;
        if y < lo - 1e-9 || y > hi + 1e-9 {
            return Err(Invalid::new(
                p.key("value_deg"),
                format!("value {y} deg lies outside {lo:.1}..{hi:.1} deg"),
                "keep the schedule inside the actuator range (tilt) or -30..120 deg (pitch)",
            ));
        }
    }
    let table = Table {
        speed_mps: s.speed_mps.clone(),
        value_rad: s.value_deg.iter().map(|d| d.to_radians()).collect(),
    };
    Ok(match s.mode {
        ScheduleMode::Tilt => Schedule::Tilt(table),
        _ => Schedule::Pitch(table),
    })
}

fn build(
    file: ScenarioFile,
    path: &Path,
    vehicle_path: PathBuf,
    base: Vehicle,
) -> Result<Scenario, Invalid> {
    let root = KeyPath::root();
    if let Some(m) = crate::limits::name_problem(&file.name) {
        return Err(Invalid::new(root.key("name"), m, crate::limits::NAME_HINT));
    }
    let ap = root.key("atmosphere");
    let alt = finite(ap.key("altitude_m"), file.atmosphere.altitude_m)?;
    let dt = finite(
        ap.key("temperature_offset_k"),
        file.atmosphere.temperature_offset_k,
    )?;
    let tb = crate::limits::TEMPERATURE_OFFSET_K;
    if !tb.contains(dt) {
        return Err(Invalid::new(
            ap.key("temperature_offset_k"),
            format!("{} is outside {}", tb.value(dt), tb.text()),
            format!(
                "give an offset from ISA within {} (our sanity bound)",
                tb.text()
            ),
        ));
    }
    if crate::atmosphere::isa(alt, dt).is_err() {
        return Err(Invalid::new(
            ap.key("altitude_m"),
            format!(
                "altitude {} m lies outside the model",
                crate::limits::show(alt)
            ),
            "use an altitude within the troposphere (-500..11000 m)",
        ));
    }
    let mp = root.key("mass_case");
    if let Some(m) = file.mass_case.mass_kg {
        bounded(mp.key("mass_kg"), m, crate::limits::MASS_KG)?;
    }
    let shift = Point {
        x_m: bounded(
            mp.key("cg_shift_x_m"),
            file.mass_case.cg_shift_x_m,
            crate::limits::POSITION_M,
        )?,
        z_m: bounded(
            mp.key("cg_shift_z_m"),
            file.mass_case.cg_shift_z_m,
            crate::limits::POSITION_M,
        )?,
    };
    let vehicle = base.with_mass_case(file.mass_case.mass_kg, shift);

    let sp = root.key("sweep");
    let from = finite(sp.key("from_mps"), file.sweep.from_mps)?;
    let to = finite(sp.key("to_mps"), file.sweep.to_mps)?;
    let step = finite(sp.key("step_mps"), file.sweep.step_mps)?;
    if from < 0.0 {
        return Err(Invalid::new(
            sp.key("from_mps"),
            "negative airspeed",
            "start the sweep at 0 m/s (hover) or above",
        ));
    }
    if to < from {
        return Err(Invalid::new(
            sp.key("to_mps"),
            format!("to_mps = {to} is below from_mps = {from}"),
            "swap the values",
        ));
    }
    if step <= 0.0 {
        return Err(Invalid::new(
            sp.key("step_mps"),
            "step must be positive",
            "give a step such as 1.0 m/s",
        ));
    }
    speed_in_bound(sp.key("from_mps"), from)?;
    speed_in_bound(sp.key("to_mps"), to)?;
    // The count in floating point first: a tiny step must not wrap the cast.
    let count = crate::limits::point_count(from, to, step);
    if count > crate::limits::MAX_SWEEP_POINTS as f64 {
        return Err(Invalid::new(
            sp.key("step_mps"),
            format!("the sweep would have {count:.3e} points"),
            format!(
                "use a larger step (at most {} points)",
                crate::limits::MAX_SWEEP_POINTS
            ),
        ));
    }
    let n = ((to - from) / step + 1e-9).floor() as usize + 1;
    let mut speeds: Vec<f64> = (0..n).map(|i| from + i as f64 * step).collect();
    if (to - speeds[n - 1]).abs() > 1e-9 * to.abs().max(1.0) {
        speeds.push(to);
    }
    let climb = finite(sp.key("climb_deg"), file.sweep.climb_deg)?;
    if climb.abs() > 60.0 {
        return Err(Invalid::new(
            sp.key("climb_deg"),
            "flight-path angle beyond 60 deg",
            "give climb_deg within -60..60",
        ));
    }
    let schedule = build_schedule(&file.schedule, &vehicle, &root.key("schedule"))?;

    let th = &file.thresholds;
    let tp = root.key("thresholds");
    for (k, v) in [
        ("stall_margin_deg", th.stall_margin_deg),
        ("thrust_margin", th.thrust_margin),
        ("power_margin", th.power_margin),
        ("pitch_accel_rad_s2", th.pitch_accel_rad_s2),
        ("elevator_margin_deg", th.elevator_margin_deg),
        ("static_margin_pct", th.static_margin_pct),
        ("time_to_double_s", th.time_to_double_s),
        ("gain_margin_db", th.gain_margin_db),
        ("phase_margin_deg", th.phase_margin_deg),
    ] {
        // Zero or below would switch the check off without saying so.
        if finite(tp.key(k), v)? <= 0.0 {
            return Err(Invalid::new(
                tp.key(k),
                format!("threshold must be greater than zero, got {v}"),
                "give a positive threshold; a threshold of zero or below would switch its check off",
            ));
        }
    }
    let share = finite(tp.key("stalled_load_share"), th.stalled_load_share)?;
    if !(crate::margins::LOADED_PART_SHARE..=1.0).contains(&share) {
        return Err(Invalid::new(
            tp.key("stalled_load_share"),
            format!("must lie in 0.005..1, got {share}"),
            "a fraction of the weight, e.g. 0.05 for 5 %; parts below 0.005 are never counted",
        ));
    }
    let tr = &file.transition;
    let trp = root.key("transition");
    for (k, v) in [
        ("acceleration_mps2", tr.acceleration_mps2),
        ("deceleration_mps2", tr.deceleration_mps2),
        ("smoothness_deg_per_mps2", tr.smoothness_deg_per_mps2),
    ] {
        let v = finite(trp.key(k), v)?;
        if v <= 0.0 {
            return Err(Invalid::new(
                trp.key(k),
                "must be positive",
                "give a positive value",
            ));
        }
        let b = crate::limits::ACCELERATION_MPS2;
        if k != "smoothness_deg_per_mps2" && !b.contains(v) {
            return Err(Invalid::new(
                trp.key(k),
                format!("{} m/s^2 is outside {}", crate::limits::show(v), b.text()),
                format!("give a value within {} (our sanity bound)", b.text()),
            ));
        }
    }
    // One validation of [flight], whichever command reads it.
    crate::flight::FlightSettings::from_file(&file.flight, tr, climb.to_radians())?;
    flight_sample_count(&file, from, to)?;
    Ok(Scenario {
        file,
        path: path.to_path_buf(),
        vehicle_path,
        vehicle,
        speeds_mps: speeds,
        climb_rad: climb.to_radians(),
        schedule,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_interpolates_and_clamps() {
        let t = Table {
            speed_mps: vec![0.0, 10.0, 20.0],
            value_rad: vec![1.0, 0.5, 0.0],
        };
        assert_eq!(t.at(-1.0), 1.0);
        assert!((t.at(5.0) - 0.75).abs() < 1e-12);
        assert!((t.at(15.0) - 0.25).abs() < 1e-12);
        assert_eq!(t.at(30.0), 0.0);
    }

    #[test]
    fn folder_names_stay_inside_their_parent() {
        // Common practice, no source: a path component holds no separator and is not `..`.
        assert_eq!(folder_name("../../escaped"), "_.._escaped");
        assert_eq!(folder_name(".."), "scenario");
        assert_eq!(folder_name("courier-transition"), "courier-transition");
    }
}

/// A schedule file: a TOML file with a `[schedule]` table in the scenario format, optionally
/// with `name` and `description` (what `hoverline schedule` writes).
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct ScheduleDocument {
    /// Name of the schedule.
    #[serde(default)]
    pub name: String,
    /// Free text (how it was made).
    #[serde(default)]
    pub description: String,
    /// The table.
    pub schedule: ScheduleFile,
}

/// Read and validate a schedule file for a vehicle.
pub fn load_schedule_file(path: &Path, v: &Vehicle) -> Result<Schedule, InputError> {
    let text = crate::input::read_text(
        path,
        "schedule file",
        "give a file written by `hoverline schedule` or a TOML file with a [schedule] table",
    )?;
    let doc: ScheduleDocument =
        toml::from_str(&text).map_err(|e| InputError::from_toml(path, &text, &e))?;
    build_schedule(&doc.schedule, v, &KeyPath::root().key("schedule"))
        .map_err(|inv| InputError::from_invalid(path, &text, inv))
}
