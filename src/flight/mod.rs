//! The transition flown in time (DEVELOPERS.md, "Flight and loop margins"): the nonlinear 3-DOF model of
//! [`crate::dynamics`] integrated with the Dormand-Prince 5(4) method (ode_solvers `Dopri5`,
//! adaptive step, stated relative and absolute tolerances), with actuators, wind and a
//! feedback law that follows the schedule.
//!
//! States: `u, w, q, theta, x, h`, the integrals of the speed and height errors, the angle of
//! each tilt actuator, the thrust of each rotor group, the energy drawn by each group, the
//! position of each elevator behind its servo and, closed loop, one delay state per thrust and
//! elevator command.
//!
//! - **Tilt actuators:** a first-order servo of bandwidth `w_s` behind a rate limit,
//!   `dtau/dt = clamp(w_s (tau_cmd - tau), -rate, +rate)`, the command held in the range.
//! - **Rotors:** first-order thrust lag `dT/dt = (T_cmd - T) / tau_T` (time constants below
//!   [`MIN_THRUST_LAG_S`] are raised to it), the command limited to `0..T_available`, where
//!   `T_available` respects both the thrust cap and the shaft power available at the current
//!   inflow (momentum theory, `rotor::thrust_available`).
//! - **Elevators:** a first-order servo of bandwidth `[flight] elevator_bandwidth_rad_s`
//!   towards the command limited to the travel (0 positions them at once).
//! - **Delay:** closed loop, every thrust and elevator command passes the sensor-plus-
//!   computation delay `[flight] loop_delay_s` as its first-order Pade approximant
//!   `(1 - s T / 2) / (1 + s T / 2)`, the same model the loop margins use.
//! - **Wind:** steady wind plus an optional 1-cosine discrete gust ([`wind`], MIL-F-8785C).
//! - **Manoeuvre:** hold, a speed ramp at the planned acceleration (or deceleration) between
//!   the ends of the trim table, hold; the planned speed is governed so that it never runs
//!   more than `plan_lead_mps` ahead of the flown airspeed ([`Reference`]); the reference
//!   height follows the scenario's flight-path angle. The feedforward (trim pitch, thrusts,
//!   elevators) and the tilt command follow the table at the planned speed.
//! - **Feedback:** feedforward from the trim table at the measured airspeed plus the law of
//!   [`crate::control::law`] (speed, height and pitch-attitude loops, pseudo-inverse allocation). Speed and
//!   height integrators stop while the pitch offset or a feedback input is at a limit
//!   (conditional integration against wind-up).
//!
//! The integration is split at every known discontinuity of the inputs (ends of the ramp,
//! gust edges, a height-command step) so each piece starts cleanly; the integrator's
//! continuous (dense) output is sampled at a fixed spacing for the time history. A flight that
//! departs (non-finite state, pitch rate above 6 rad/s, height 100 m off the reference, speed
//! far beyond the table) is stopped and reported, never left to run on.

pub mod dispersion;
pub mod sim;
pub mod summary;
pub mod table;
pub mod wind;

use serde::Serialize;

use crate::atmosphere::Atmosphere;
use crate::dynamics::{Controls, State, Wind};
use crate::input::{Invalid, KeyPath};
use crate::scenario::{FlightFile, Scenario, TransitionFile};
use crate::vehicle::Vehicle;

pub use crate::control::law::FeedbackGains;
pub use crate::control::TrimPoint;
pub use sim::Sample;
pub use summary::{Event, Summary};
pub use table::FeedforwardTable;
pub use wind::{Gust, WindModel};

pub use crate::control::MIN_THRUST_LAG_S;

/// Longest flight simulated (s).
pub const MAX_DURATION_S: f64 = 3600.0;

/// What can stop a flight before it starts, or during it.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FlightError {
    /// The start point of the manoeuvre cannot be trimmed.
    #[error("the flight cannot start at {speed_mps:.1} m/s: it is untrimmable ({reasons})\n  hint: start from a trimmable speed; check the sweep's first (or, with --back, last) point")]
    StartUntrimmable {
        /// Start speed (m/s).
        speed_mps: f64,
        /// Trim reasons.
        reasons: String,
    },
    /// No point of the table is trimmed.
    #[error("no point of the trim table is trimmed, so there is no feedforward to fly\n  hint: run `hoverline sweep` on the scenario and fix the untrimmable points first")]
    NoTrimmedPoint,
    /// Too many inputs for the fixed-size law.
    #[error(
        "the vehicle has {inputs} feedback inputs or tilt actuators; at most {max} are supported"
    )]
    TooManyInputs {
        /// Inputs of the vehicle.
        inputs: usize,
        /// Largest supported.
        max: usize,
    },
    /// The integrator gave up.
    #[error("integration stopped at t = {time_s:.3} s: {why}\n  hint: loosen [flight] relative_tolerance or check the vehicle for a fast unstable mode")]
    Integration {
        /// Time reached (s).
        time_s: f64,
        /// The integrator's message.
        why: String,
    },
    /// A manoeuvre parameter is out of range.
    #[error("{0}")]
    Manoeuvre(String),
}

/// Which manoeuvre to fly.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum Manoeuvre {
    /// From the lowest table speed to the highest.
    HoverToCruise,
    /// From the highest table speed to the lowest.
    CruiseToHover,
    /// Hold the trimmed table point nearest `speed_mps` for `duration_s`, with a step of
    /// `height_step_m` in the height command at `height_step_at_s` (0 m for none).
    Hold {
        /// Speed (m/s).
        speed_mps: f64,
        /// Duration (s).
        duration_s: f64,
        /// Height-command step (m).
        height_step_m: f64,
        /// Time of the step (s).
        height_step_at_s: f64,
    },
}

impl Manoeuvre {
    /// Short name for reports.
    pub fn label(&self) -> &'static str {
        match self {
            Manoeuvre::HoverToCruise => "hover to cruise",
            Manoeuvre::CruiseToHover => "cruise to hover",
            Manoeuvre::Hold { .. } => "hold",
        }
    }
}

/// Resolved, validated settings of a flight (SI).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FlightSettings {
    /// Time held before the speed ramp (s).
    pub hold_before_s: f64,
    /// Time held after the ramp (s).
    pub hold_after_s: f64,
    /// Spacing of the time history (s).
    pub sample_step_s: f64,
    /// Integrator relative tolerance (-).
    pub relative_tolerance: f64,
    /// Integrator absolute tolerance (SI).
    pub absolute_tolerance: f64,
    /// Tilt servo bandwidth (rad/s).
    pub tilt_servo_bandwidth_rad_s: f64,
    /// Elevator servo bandwidth (rad/s); 0 positions the elevators at once.
    pub elevator_bandwidth_rad_s: f64,
    /// Sensor-plus-computation delay of the feedback (s), flown as the first-order Pade
    /// approximant the loop margins use; 0 for none.
    pub loop_delay_s: f64,
    /// Feedback design.
    pub gains: FeedbackGains,
    /// Steady wind (earth axes).
    pub steady_wind: Wind,
    /// Gust as given (penetration speed resolved per manoeuvre).
    pub gust: Option<crate::scenario::GustFile>,
    /// Load fraction (q S / W) from which a surface part counts for stall exposure.
    pub stall_load_fraction: f64,
    /// Stalled load share at which stall is unsafe (the scenario's
    /// `[thresholds] stalled_load_share`; see [`crate::margins::stall_assessment`]).
    pub stalled_load_share: f64,
    /// Tilt lag that is reported (rad).
    pub tilt_lag_warning_rad: f64,
    /// Flight-path angle of the reference (rad).
    pub climb_rad: f64,
    /// Planned acceleration (m/s^2).
    pub acceleration_mps2: f64,
    /// Planned deceleration (m/s^2, positive).
    pub deceleration_mps2: f64,
    /// Largest lead of the planned speed over the flown airspeed (m/s).
    pub plan_lead_mps: f64,
    /// Angle-of-attack protection margin (rad); `None` leaves the protection off.
    pub alpha_protection_margin_rad: Option<f64>,
}

impl Default for FlightSettings {
    fn default() -> Self {
        FlightSettings::from_file(&FlightFile::default(), &TransitionFile::default(), 0.0)
            .expect("the defaults are valid")
    }
}

fn check(p: &KeyPath, key: &str, v: f64, lo: f64, hi: f64, hint: &str) -> Result<f64, Invalid> {
    if v.is_finite() && v >= lo && v <= hi {
        Ok(v)
    } else {
        Err(Invalid::new(
            p.key(key),
            format!("must lie in {lo}..{hi}, got {}", crate::limits::show(v)),
            hint,
        ))
    }
}

fn positive(p: &KeyPath, key: &str, v: f64, hi: f64, hint: &str) -> Result<f64, Invalid> {
    if v.is_finite() && v > 0.0 && v <= hi {
        Ok(v)
    } else {
        Err(Invalid::new(
            p.key(key),
            format!(
                "must be above 0 and at most {hi}, got {}",
                crate::limits::show(v)
            ),
            hint,
        ))
    }
}

impl FlightSettings {
    /// Settings of a scenario (its `[flight]` and `[transition]` tables and climb angle).
    pub fn from_scenario(sc: &Scenario) -> Result<FlightSettings, Invalid> {
        let mut s = FlightSettings::from_file(&sc.file.flight, &sc.file.transition, sc.climb_rad)?;
        s.stalled_load_share = sc.file.thresholds.stalled_load_share;
        Ok(s)
    }

    /// Validate a `[flight]` table against the ranges the simulation supports.
    pub fn from_file(
        f: &FlightFile,
        tr: &TransitionFile,
        climb_rad: f64,
    ) -> Result<FlightSettings, Invalid> {
        let p = KeyPath::root().key("flight");
        let bw = "a loop bandwidth in rad/s, e.g. 0.5 (speed), 0.8 (height), 3 (pitch)";
        let zeta = "a damping ratio, 0.5..1.2 is usual";
        check(
            &p,
            "hold_before_s",
            f.hold_before_s,
            0.0,
            600.0,
            "seconds of steady flight before the ramp",
        )?;
        check(
            &p,
            "hold_after_s",
            f.hold_after_s,
            0.0,
            600.0,
            "seconds of steady flight after the ramp",
        )?;
        positive(
            &p,
            "sample_step_s",
            f.sample_step_s,
            1.0,
            "0.02 s resolves stall and saturation intervals well",
        )?;
        check(
            &p,
            "relative_tolerance",
            f.relative_tolerance,
            1e-12,
            1e-2,
            "1e-6 is the default",
        )?;
        check(
            &p,
            "absolute_tolerance",
            f.absolute_tolerance,
            1e-12,
            1e-2,
            "1e-6 is the default",
        )?;
        positive(
            &p,
            "tilt_servo_bandwidth_rad_s",
            f.tilt_servo_bandwidth_rad_s,
            1000.0,
            "a servo bandwidth in rad/s, e.g. 8",
        )?;
        check(
            &p,
            "loop_delay_s",
            f.loop_delay_s,
            0.0,
            0.5,
            "the sensor-plus-computation delay in s, e.g. 0.02 (0 leaves it out)",
        )?;
        check(
            &p,
            "elevator_bandwidth_rad_s",
            f.elevator_bandwidth_rad_s,
            0.0,
            1000.0,
            "an elevator servo bandwidth in rad/s, e.g. 30 (0 = positioned at once)",
        )?;
        positive(
            &p,
            "pitch_bandwidth_rad_s",
            f.pitch_bandwidth_rad_s,
            100.0,
            bw,
        )?;
        positive(&p, "pitch_damping", f.pitch_damping, 5.0, zeta)?;
        positive(
            &p,
            "height_bandwidth_rad_s",
            f.height_bandwidth_rad_s,
            100.0,
            bw,
        )?;
        positive(&p, "height_damping", f.height_damping, 5.0, zeta)?;
        check(
            &p,
            "height_integral_ratio",
            f.height_integral_ratio,
            0.0,
            5.0,
            "0 for no integral, 0.25 places the integral pole at a quarter of the bandwidth",
        )?;
        positive(
            &p,
            "speed_bandwidth_rad_s",
            f.speed_bandwidth_rad_s,
            100.0,
            bw,
        )?;
        positive(&p, "speed_damping", f.speed_damping, 5.0, zeta)?;
        positive(
            &p,
            "pitch_offset_limit_deg",
            f.pitch_offset_limit_deg,
            90.0,
            "degrees, e.g. 20",
        )?;
        positive(
            &p,
            "pitch_offset_scale_deg",
            f.pitch_offset_scale_deg,
            90.0,
            "degrees, e.g. 10",
        )?;
        positive(
            &p,
            "pitch_priority",
            f.pitch_priority,
            1e6,
            "a weight, e.g. 10",
        )?;
        check(
            &p,
            "headwind_mps",
            f.headwind_mps,
            -50.0,
            50.0,
            "m/s, positive against the flight direction",
        )?;
        check(
            &p,
            "updraft_mps",
            f.updraft_mps,
            -30.0,
            30.0,
            "m/s, positive up",
        )?;
        check(
            &p,
            "stall_load_fraction",
            f.stall_load_fraction,
            0.0,
            0.5,
            "0.005 counts a part once it carries 0.5 % of the weight at unit coefficient",
        )?;
        positive(
            &p,
            "tilt_lag_warning_deg",
            f.tilt_lag_warning_deg,
            90.0,
            "degrees, e.g. 5",
        )?;
        check(
            &p,
            "alpha_protection_margin_deg",
            f.alpha_protection_margin_deg,
            0.0,
            20.0,
            "degrees short of the stall angle, e.g. 2",
        )?;
        positive(
            &p,
            "plan_lead_mps",
            f.plan_lead_mps,
            100.0,
            "m/s, e.g. 2: how far the planned speed may run ahead of the flown airspeed",
        )?;
        if let Some(g) = &f.gust {
            let gp = p.key("gust");
            check(
                &gp,
                "start_s",
                g.start_s,
                0.0,
                MAX_DURATION_S,
                "seconds from the start of the flight",
            )?;
            check(
                &gp,
                "amplitude_mps",
                g.amplitude_mps,
                0.0,
                50.0,
                "a positive peak velocity; the direction key gives the sense",
            )?;
            positive(
                &gp,
                "length_m",
                g.length_m,
                1e4,
                "the distance to the gust peak, e.g. 30 m",
            )?;
            positive(
                &gp,
                "min_penetration_mps",
                g.min_penetration_mps,
                100.0,
                "m/s, e.g. 2",
            )?;
        }
        Ok(FlightSettings {
            hold_before_s: f.hold_before_s,
            hold_after_s: f.hold_after_s,
            sample_step_s: f.sample_step_s,
            relative_tolerance: f.relative_tolerance,
            absolute_tolerance: f.absolute_tolerance,
            tilt_servo_bandwidth_rad_s: f.tilt_servo_bandwidth_rad_s,
            elevator_bandwidth_rad_s: f.elevator_bandwidth_rad_s,
            loop_delay_s: f.loop_delay_s,
            gains: FeedbackGains::from_file(f),
            steady_wind: Wind {
                x_mps: 0.0 - f.headwind_mps,
                z_mps: 0.0 - f.updraft_mps,
            },
            gust: f.gust.clone(),
            stall_load_fraction: f.stall_load_fraction,
            stalled_load_share: crate::trim::TRIM_STALLED_SHARE,
            tilt_lag_warning_rad: f.tilt_lag_warning_deg.to_radians(),
            climb_rad,
            acceleration_mps2: tr.acceleration_mps2,
            deceleration_mps2: tr.deceleration_mps2,
            plan_lead_mps: f.plan_lead_mps,
            alpha_protection_margin_rad: f
                .alpha_protection
                .then(|| f.alpha_protection_margin_deg.to_radians()),
        })
    }
}

/// The reference of a manoeuvre: the planned airspeed, governed so that it never runs more
/// than `lead_mps` ahead of the flown airspeed, and the reference height along the scenario's
/// flight-path angle.
///
/// The planned speed `V_p` is a state: `dV_p/dt = a g`, `g = clamp((L - l) / (L / 2), 0, 1)`
/// with `l` the lead of the plan over the flown airspeed (in the direction of the ramp) and
/// `L = lead_mps`: full planned acceleration while the lead is under half of `L`, none at `L`.
/// So a vehicle that cannot accelerate as planned transitions more slowly instead of being
/// handed the feedforward of a speed it has not reached, and the schedule never runs back.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Reference {
    /// Speed before the ramp (m/s).
    pub start_speed_mps: f64,
    /// Speed after the ramp (m/s).
    pub end_speed_mps: f64,
    /// Planned acceleration, signed (m/s^2).
    pub accel_mps2: f64,
    /// Ramp start (s).
    pub ramp_start_s: f64,
    /// Ramp end if the plan is never held back (s).
    pub planned_ramp_end_s: f64,
    /// Time held after the plan reaches the end speed (s).
    pub hold_after_s: f64,
    /// Latest end of the flight (s).
    pub end_limit_s: f64,
    /// Largest lead of the plan over the flown airspeed (m/s).
    pub lead_mps: f64,
    /// Flight-path angle (rad; written to files in degrees as `climb_deg`).
    #[serde(rename = "climb_deg", serialize_with = "as_degrees")]
    pub climb_rad: f64,
    /// Height-command step (m).
    pub height_step_m: f64,
    /// Time of the step (s).
    pub height_step_at_s: f64,
}

fn as_degrees<S: serde::Serializer>(x: &f64, s: S) -> Result<S::Ok, S::Error> {
    s.serialize_f64(x.to_degrees())
}

impl Reference {
    /// The planned speed held to the span of the ramp (m/s).
    pub fn clamp_speed(&self, v_mps: f64) -> f64 {
        let (lo, hi) = if self.start_speed_mps <= self.end_speed_mps {
            (self.start_speed_mps, self.end_speed_mps)
        } else {
            (self.end_speed_mps, self.start_speed_mps)
        };
        v_mps.clamp(lo, hi)
    }

    /// Rate of the planned speed (m/s^2) at `t_s` with planned speed `plan_mps` and flown
    /// airspeed `flown_mps`.
    pub fn speed_rate(&self, t_s: f64, plan_mps: f64, flown_mps: f64) -> f64 {
        let a = self.accel_mps2;
        if t_s < self.ramp_start_s || a == 0.0 {
            return 0.0;
        }
        let sign = a.signum();
        if (self.end_speed_mps - plan_mps) * sign <= 0.0 {
            return 0.0;
        }
        let lead = (plan_mps - flown_mps) * sign;
        let l = self.lead_mps;
        a * ((l - lead) / (0.5 * l)).clamp(0.0, 1.0)
    }

    /// Whether the plan has reached its end speed.
    pub fn reached(&self, plan_mps: f64) -> bool {
        (self.end_speed_mps - plan_mps) * self.accel_mps2.signum() <= 1e-9 || self.accel_mps2 == 0.0
    }

    /// Height-command step in force at `t_s` (m).
    pub fn height_step(&self, t_s: f64) -> f64 {
        if self.height_step_m != 0.0 && t_s >= self.height_step_at_s {
            self.height_step_m
        } else {
            0.0
        }
    }

    /// Times where the reference changes its formula (s).
    pub fn breakpoints(&self) -> Vec<f64> {
        let mut b = vec![self.ramp_start_s];
        if self.height_step_m != 0.0 {
            b.push(self.height_step_at_s);
        }
        b
    }
}

/// The flown time history with its summary and events.
#[derive(Debug, Clone, Serialize)]
pub struct Flight {
    /// What was flown.
    pub manoeuvre: Manoeuvre,
    /// The reference (closed-loop flights).
    pub reference: Option<Reference>,
    /// The wind and gust.
    pub wind: WindModel,
    /// Samples at the fixed spacing, and at the last time reached.
    #[serde(skip)]
    pub samples: Vec<Sample>,
    /// Summary.
    pub summary: Summary,
    /// Events in time order.
    pub events: Vec<Event>,
    /// Integrator statistics.
    pub integrator: sim::IntegratorStats,
}

/// Resolve the reference of a manoeuvre on a table: (start point index, reference).
pub fn reference_for(
    table: &FeedforwardTable,
    settings: &FlightSettings,
    manoeuvre: Manoeuvre,
) -> Result<(usize, Reference), FlightError> {
    let pts = &table.points;
    let first_trimmed = pts
        .iter()
        .position(|p| p.trim.trimmed)
        .ok_or(FlightError::NoTrimmedPoint)?;
    let last_trimmed = pts
        .iter()
        .rposition(|p| p.trim.trimmed)
        .ok_or(FlightError::NoTrimmedPoint)?;
    let untrimmable = |i: usize| FlightError::StartUntrimmable {
        speed_mps: pts[i].trim.speed_mps,
        reasons: pts[i].trim.reasons.join("; "),
    };
    let hb = settings.hold_before_s;
    let ha = settings.hold_after_s;
    let (start, v0, v1, accel, hold_end, step, step_at): (usize, f64, f64, f64, f64, f64, f64) =
        match manoeuvre {
            Manoeuvre::HoverToCruise => {
                if !pts[0].trim.trimmed {
                    return Err(untrimmable(0));
                }
                let (v0, v1) = (pts[0].trim.speed_mps, pts[last_trimmed].trim.speed_mps);
                (0, v0, v1, settings.acceleration_mps2, ha, 0.0, 0.0)
            }
            Manoeuvre::CruiseToHover => {
                let last = pts.len() - 1;
                if !pts[last].trim.trimmed {
                    return Err(untrimmable(last));
                }
                let (v0, v1) = (pts[last].trim.speed_mps, pts[first_trimmed].trim.speed_mps);
                (last, v0, v1, -settings.deceleration_mps2, ha, 0.0, 0.0)
            }
            Manoeuvre::Hold {
                speed_mps,
                duration_s,
                height_step_m,
                height_step_at_s,
            } => {
                if !(duration_s.is_finite() && duration_s > 0.0 && duration_s <= MAX_DURATION_S) {
                    return Err(FlightError::Manoeuvre(format!(
                        "hold duration {duration_s} s must lie in 0..{MAX_DURATION_S} s"
                    )));
                }
                if !(height_step_m.is_finite()
                    && height_step_at_s.is_finite()
                    && height_step_at_s >= 0.0)
                {
                    return Err(FlightError::Manoeuvre(
                        "the height step and its time must be finite, the time not negative".into(),
                    ));
                }
                let i = table.nearest(speed_mps);
                let i = if pts[i].trim.trimmed {
                    i
                } else {
                    let s = table.nearest_trimmed(speed_mps).trim.speed_mps;
                    table.nearest(s)
                };
                let v = pts[i].trim.speed_mps;
                return Ok((
                    i,
                    Reference {
                        start_speed_mps: v,
                        end_speed_mps: v,
                        accel_mps2: 0.0,
                        ramp_start_s: duration_s,
                        planned_ramp_end_s: duration_s,
                        hold_after_s: 0.0,
                        end_limit_s: duration_s,
                        lead_mps: settings.plan_lead_mps,
                        climb_rad: settings.climb_rad,
                        height_step_m,
                        height_step_at_s,
                    },
                ));
            }
        };
    let ramp = (v1 - v0) / accel;
    let ramp = if ramp.is_finite() { ramp.max(0.0) } else { 0.0 };
    // Room for a plan held back by the governor: up to three times the planned ramp.
    let end = hb + 3.0 * ramp + hold_end;
    if end > MAX_DURATION_S {
        return Err(FlightError::Manoeuvre(format!(
            "the manoeuvre would last {end:.0} s (longest {MAX_DURATION_S} s); hint: raise the planned acceleration"
        )));
    }
    let _ = first_trimmed;
    Ok((
        start,
        Reference {
            start_speed_mps: v0,
            end_speed_mps: v1,
            accel_mps2: accel,
            ramp_start_s: hb,
            planned_ramp_end_s: hb + ramp,
            hold_after_s: hold_end,
            end_limit_s: end,
            lead_mps: settings.plan_lead_mps,
            climb_rad: settings.climb_rad,
            height_step_m: step,
            height_step_at_s: step_at,
        },
    ))
}

/// The planned speed at `t_s` if the governor never holds it back (m/s).
pub fn planned_speed_at(r: &Reference, t_s: f64) -> f64 {
    r.clamp_speed(r.start_speed_mps + r.accel_mps2 * (t_s - r.ramp_start_s).max(0.0))
}

/// Resolve the gust of the settings for a reference (penetration speed at its start time).
pub fn wind_for(settings: &FlightSettings, reference: Option<&Reference>) -> WindModel {
    let gust = settings.gust.as_ref().map(|g| {
        let v = reference.map_or(0.0, |r| planned_speed_at(r, g.start_s));
        Gust {
            start_s: g.start_s,
            direction: g.direction,
            amplitude_mps: g.amplitude_mps,
            length_m: g.length_m,
            shape: g.shape,
            penetration_mps: v.max(g.min_penetration_mps),
        }
    });
    WindModel {
        steady: settings.steady_wind,
        gust,
    }
}

/// Fly a manoeuvre closed loop from its trimmed start point. `progress` receives the fraction
/// of the flight done (0..1).
pub fn fly(
    v: &Vehicle,
    atm: &Atmosphere,
    table: &FeedforwardTable,
    settings: &FlightSettings,
    manoeuvre: Manoeuvre,
    progress: &dyn Fn(f64),
) -> Result<Flight, FlightError> {
    fly_perturbed(
        v,
        atm,
        table,
        settings,
        manoeuvre,
        &State::default(),
        progress,
    )
}

/// As [`fly`], with `perturbation` added to the trimmed start state (u, w, q, theta).
pub fn fly_perturbed(
    v: &Vehicle,
    atm: &Atmosphere,
    table: &FeedforwardTable,
    settings: &FlightSettings,
    manoeuvre: Manoeuvre,
    perturbation: &State,
    progress: &dyn Fn(f64),
) -> Result<Flight, FlightError> {
    let (start, reference) = reference_for(table, settings, manoeuvre)?;
    let p = &table.points[start].trim;
    let initial = State {
        u_mps: p.state.u_mps + perturbation.u_mps,
        w_mps: p.state.w_mps + perturbation.w_mps,
        q_rad_s: p.state.q_rad_s + perturbation.q_rad_s,
        theta_rad: p.state.theta_rad + perturbation.theta_rad,
    };
    let wind = wind_for(settings, Some(&reference));
    let mode = sim::Mode::Closed {
        table,
        gains: &settings.gains,
        reference,
    };
    let run = sim::run(
        v,
        atm,
        settings,
        &mode,
        &wind,
        &initial,
        &p.controls,
        reference.end_limit_s,
        progress,
    )?;
    let summary = summary::summarise(
        v,
        atm,
        Some(table),
        settings,
        &run,
        manoeuvre,
        Some(&reference),
        wind.gust.map(|g| g.start_s),
    );
    Ok(Flight {
        manoeuvre,
        reference: Some(reference),
        wind,
        samples: run.samples,
        events: summary.1,
        summary: summary.0,
        integrator: run.stats,
    })
}

/// Fly open loop: fixed commands (thrust per rotor, elevators, tilts) from `initial` for
/// `duration_s`, in the settings' steady wind and gust (gust penetration at its floor speed).
pub fn fly_open_loop(
    v: &Vehicle,
    atm: &Atmosphere,
    settings: &FlightSettings,
    initial: &State,
    commands: &Controls,
    duration_s: f64,
) -> Result<Flight, FlightError> {
    if !(duration_s.is_finite() && duration_s > 0.0 && duration_s <= MAX_DURATION_S) {
        return Err(FlightError::Manoeuvre(format!(
            "duration {duration_s} s must lie in 0..{MAX_DURATION_S} s"
        )));
    }
    let n = v.control_count();
    if commands.len() != n {
        return Err(FlightError::Manoeuvre(format!(
            "{} commands given for {n} inputs",
            commands.len()
        )));
    }
    let wind = wind_for(settings, None);
    let mode = sim::Mode::Open { commands };
    let run = sim::run(
        v,
        atm,
        settings,
        &mode,
        &wind,
        initial,
        commands,
        duration_s,
        &|_| {},
    )?;
    let manoeuvre = Manoeuvre::Hold {
        speed_mps: initial.u_mps.hypot(initial.w_mps),
        duration_s,
        height_step_m: 0.0,
        height_step_at_s: 0.0,
    };
    let (summary, events) = summary::summarise(
        v,
        atm,
        None,
        settings,
        &run,
        manoeuvre,
        None,
        wind.gust.map(|g| g.start_s),
    );
    Ok(Flight {
        manoeuvre,
        reference: None,
        wind,
        samples: run.samples,
        summary,
        events,
        integrator: run.stats,
    })
}
