//! The transition corridor (DEVELOPERS.md, "Corridor and schedule"): the map of trimmable points over airspeed and the
//! transition variable, each point with its smallest margin, the margin that sets it and the
//! limit that puts it outside; and the corridor's boundaries as polylines with the reason
//! along every stretch.
//!
//! # The transition variable and the trim at a point
//! - A vehicle with tilt actuators uses the tilt angle (every actuator at the same angle). A
//!   point is a steady trim (du/dt = dw/dt = dq/dt = 0) at the airspeed with that tilt held;
//!   pitch attitude and the other controls are trim unknowns.
//! - A vehicle without one (tail-sitter, lift+cruise) uses the pitch attitude. A point is level,
//!   quasi-steady flight with pitch held: vertical force and pitching moment balanced within
//!   the limits and the acceleration along the path left free and reported, as constant-height
//!   transition analyses of tail-sitters define their corridors
//!   ([`crate::trim::Condition::HeldPitch`]).
//!
//! # Smallest margin
//! Every margin of [`crate::margins`] is made dimensionless with its scenario threshold:
//!
//! ```text
//! n_k = m_k / t_k - 1        (0 at the threshold, -1 at the hard limit m_k = 0)
//! ```
//!
//! for the stall margin of each surface (deg), the thrust and power margin of each rotor group,
//! the pitch authority nose-up and nose-down (rad/s^2), the elevator travel left (deg), the
//! static margin where wingborne (% chord) and, for an unstable mode, its time to double (s).
//! The smallest margin of a point is min_k n_k and the limiting margin is the arg-min. A kind
//! whose threshold is zero or negative cannot be scaled and is left out of the minimum (its hard
//! limit still applies). An untrimmable point has no margin.
//!
//! Stall counts only on surface parts that are loaded, as in [`crate::margins`] (`q_part S_part`
//! at least [`crate::margins::LOADED_PART_SHARE`] of the weight: in hover the clean part of a
//! tilted wing sees no flow), and that are not in download (a wake-dominated part with its flow
//! more than 45 deg off the chord, see [`crate::margins::part_counts_for_stall`]): a fixed wing
//! under a tilted rotor meets the wake at up to 90 deg in hover, which is the rotor's download,
//! carried by the trim as a force, not a stall of a lifting surface.
//!
//! # Inside the corridor
//! A point is inside when it is trimmed and no hard limit is crossed: for tilt vehicles the
//! trimmed pitch attitude within the corridor's pitch limits (a tilt vehicle can point its
//! thrust up at any tilt by pitching the whole airframe; the limits keep the corridor to
//! attitudes an airframe flies), no loaded surface part beyond a stall angle, thrust and power within what is available, pitch authority nose-up and
//! nose-down at least the scenario threshold, no mode doubling faster than the scenario's
//! time-to-double threshold. An untrimmable point is named by the limit its best attempt sits on
//! (power, thrust cap, elevator travel, a rotor at zero thrust, the pitch search bound) or as
//! "no equilibrium".
//!
//! # Acceleration still available
//! `a_avail = a_path + sum_g max(c_g (T_avail,g - T_g), -c_g T_g) / m` with
//! `c_g = cos(theta + axis_g - gamma)` the share of group g's thrust along the flight path: the
//! along-path part of the thrust each group still has (or could shed), every other force held
//! (a first-order estimate: the vertical force and moment are not re-balanced). The deceleration
//! available is the mirror image.
//!
//! # Grid and boundaries
//! Speeds are solved in parallel with rayon in fixed chunks of [`SPEED_CHUNK`] consecutive
//! speeds; every point starts from a trimmed neighbour (along its speed, or at the same value
//! one speed lower), so results do not depend on the number of threads. Boundaries are traced by marching squares on the inside/outside field at the
//! grid points (a boundary runs halfway between an inside and an outside point); each crossing
//! carries the limit of its outside point, and a polyline is split into stretches of one reason.
//! Two edges are traced: the trimmable region's (reasons: thrust cap, power, elevator travel,
//! a rotor at zero thrust, no equilibrium) and the corridor's inside it (stall, pitch
//! authority, instability, pitch attitude), the latter only where it does not run along the
//! former. The ends of the transition-variable range close the trimmable region ("tilt
//! actuator range" or "end of the pitch grid"); the ends of the speed range do not.

use rayon::prelude::*;
use serde::{Serialize, Serializer};

use crate::atmosphere::Atmosphere;
use crate::margins;
use crate::rotor::ThrustLimit;
use crate::scenario::{Scenario, Thresholds};
use crate::sweep::assess;
use crate::trim::{trim, Condition, Objective, TiltSetting, TrimGuess, TrimRequest, TrimSolution};
use crate::vehicle::Vehicle;

/// Default step of the transition variable (deg).
pub const DEFAULT_VALUE_STEP_DEG: f64 = 1.0;

/// Thrust share of the weight above which a group's thrust margin counts (as in margins).
const LOAD_CARRYING_SHARE: f64 = 0.02;

/// What goes wrong while setting up a corridor.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CorridorError {
    /// The grid cannot be built.
    #[error("corridor grid: {0}")]
    Grid(String),
}

/// The transition variable of a corridor.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Variable {
    /// Tilt angle of every tilt actuator (0 cruise, 90 deg hover).
    Tilt,
    /// Pitch attitude (nose-up positive), for vehicles without a tilt actuator.
    Pitch,
}

impl Variable {
    /// The variable of a vehicle: tilt when it has a tilt actuator, pitch otherwise.
    pub fn of(v: &Vehicle) -> Variable {
        if v.has_tilt() {
            Variable::Tilt
        } else {
            Variable::Pitch
        }
    }

    /// Short name: `tilt` or `pitch`.
    pub fn name(self) -> &'static str {
        match self {
            Variable::Tilt => "tilt",
            Variable::Pitch => "pitch",
        }
    }

    /// Axis label with unit.
    pub fn axis_label(self) -> &'static str {
        match self {
            Variable::Tilt => "tilt angle (deg, 90 = hover)",
            Variable::Pitch => "pitch attitude (deg)",
        }
    }
}

/// A margin kind or a limit that bounds the corridor.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub enum Limit {
    /// Stall of a surface (a part beyond a stall angle), or its stall margin.
    Stall(String),
    /// Thrust of a rotor group at its cap, or its thrust margin.
    Thrust(String),
    /// Shaft power of a rotor group at what is available, or its power margin.
    Power(String),
    /// Nose-up pitch authority.
    PitchUp,
    /// Nose-down pitch authority.
    PitchDown,
    /// Elevator travel.
    Elevator,
    /// Static margin (wingborne).
    StaticMargin,
    /// A mode that doubles faster than the threshold.
    Instability,
    /// A rotor group at zero thrust at the best attempt.
    ZeroThrust(String),
    /// Pitch attitude outside the corridor's limits (tilt vehicles) or the search bound.
    PitchAttitude,
    /// No equilibrium without a named limit.
    NoEquilibrium,
    /// The end of the transition-variable range (boundaries only).
    VariableRange(Variable),
}

impl Limit {
    /// Label as a limit that puts a point outside (a boundary reason).
    pub fn boundary_label(&self) -> String {
        match self {
            Limit::Stall(s) => format!("stall of '{s}'"),
            Limit::Thrust(r) => format!("thrust cap of '{r}'"),
            Limit::Power(r) => format!("power of '{r}'"),
            Limit::PitchUp => "nose-up pitch authority".into(),
            Limit::PitchDown => "nose-down pitch authority".into(),
            Limit::Elevator => "elevator travel".into(),
            Limit::StaticMargin => "static margin".into(),
            Limit::Instability => "fast instability".into(),
            Limit::ZeroThrust(r) => format!("'{r}' at zero thrust"),
            Limit::PitchAttitude => "pitch attitude limit".into(),
            Limit::NoEquilibrium => "no equilibrium".into(),
            Limit::VariableRange(Variable::Tilt) => "tilt actuator range".into(),
            Limit::VariableRange(Variable::Pitch) => "end of the pitch grid".into(),
        }
    }

    /// Label as the margin that sets the smallest margin of a point.
    pub fn margin_label(&self) -> String {
        match self {
            Limit::Stall(s) => format!("stall margin of '{s}'"),
            Limit::Thrust(r) => format!("thrust margin of '{r}'"),
            Limit::Power(r) => format!("power margin of '{r}'"),
            Limit::PitchUp => "nose-up pitch authority".into(),
            Limit::PitchDown => "nose-down pitch authority".into(),
            Limit::Elevator => "elevator travel".into(),
            Limit::StaticMargin => "static margin".into(),
            Limit::Instability => "time to double".into(),
            other => other.boundary_label(),
        }
    }
}

fn ser_limit<S: Serializer>(l: &Option<Limit>, s: S) -> Result<S::Ok, S::Error> {
    match l {
        Some(l) => s.serialize_str(&l.boundary_label()),
        None => s.serialize_none(),
    }
}

fn ser_margin_kind<S: Serializer>(l: &Option<Limit>, s: S) -> Result<S::Ok, S::Error> {
    match l {
        Some(l) => s.serialize_str(&l.margin_label()),
        None => s.serialize_none(),
    }
}

fn ser_limits<S: Serializer>(l: &[Limit], s: S) -> Result<S::Ok, S::Error> {
    s.collect_seq(l.iter().map(|l| l.boundary_label()))
}

/// Raw margins of a trimmed point, in their own units.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PointMargins {
    /// Smallest stall margin over the loaded surfaces (deg); None when no surface is loaded.
    pub stall_deg: Option<f64>,
    /// Surface it belongs to.
    pub stall_surface: Option<String>,
    /// Smallest thrust margin over load-carrying groups (-).
    pub thrust: f64,
    /// Smallest power margin (-).
    pub power: f64,
    /// Nose-up pitch acceleration available (rad/s^2).
    pub pitch_accel_up_rad_s2: f64,
    /// Nose-down pitch acceleration available (rad/s^2).
    pub pitch_accel_down_rad_s2: f64,
    /// Elevator travel left (deg).
    pub elevator_deg: Option<f64>,
    /// Static margin where wingborne (% chord).
    pub static_margin_pct: Option<f64>,
    /// Time to double of the fastest unstable mode (s).
    pub time_to_double_s: Option<f64>,
}

/// One grid point of a corridor.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CorridorPoint {
    /// Airspeed (m/s).
    pub speed_mps: f64,
    /// Transition variable (deg): tilt or pitch attitude.
    pub value_deg: f64,
    /// Whether the trim converged.
    pub trimmed: bool,
    /// Trimmed and no hard limit crossed.
    pub inside: bool,
    /// Smallest normalised margin (m / threshold - 1; 0 at threshold, -1 at the limit).
    pub smallest_margin: Option<f64>,
    /// The margin that sets it.
    #[serde(serialize_with = "ser_margin_kind")]
    pub limiting_margin: Option<Limit>,
    /// Why the point is outside (the first of `violations`); None when inside.
    #[serde(serialize_with = "ser_limit")]
    pub outside_reason: Option<Limit>,
    /// Every hard limit crossed, most basic first.
    #[serde(serialize_with = "ser_limits")]
    pub violations: Vec<Limit>,
    /// Text: why outside, or what limits the margin.
    pub reason: String,
    /// Pitch attitude (deg).
    pub pitch_deg: Option<f64>,
    /// Angle of attack at the CG (deg).
    pub alpha_deg: Option<f64>,
    /// Acceleration along the path at the point (m/s^2): 0 for steady trim.
    pub path_accel_mps2: Option<f64>,
    /// Largest along-path acceleration from the remaining thrust (m/s^2).
    pub accel_available_mps2: Option<f64>,
    /// Largest along-path deceleration from shedding thrust (m/s^2, positive).
    pub decel_available_mps2: Option<f64>,
    /// Total shaft power (W).
    pub power_w: Option<f64>,
    /// Raw margins (trimmed points).
    pub margins: Option<PointMargins>,
}

/// Which edge a boundary belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Envelope {
    /// The edge of the trimmable region.
    Trimmable,
    /// The edge of the corridor (trimmed and no hard limit crossed) inside the trimmable region.
    Corridor,
}

/// A stretch of a corridor boundary with one reason.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Boundary {
    /// The edge it belongs to.
    pub envelope: Envelope,
    /// What limits the corridor along this stretch.
    #[serde(serialize_with = "ser_limit_plain")]
    pub reason: Limit,
    /// Airspeeds of the vertices (m/s).
    pub speed_mps: Vec<f64>,
    /// Transition variable at the vertices (deg).
    pub value_deg: Vec<f64>,
}

fn ser_limit_plain<S: Serializer>(l: &Limit, s: S) -> Result<S::Ok, S::Error> {
    s.serialize_str(&l.boundary_label())
}

/// Settings of a corridor that are not the vehicle.
#[derive(Debug, Clone, PartialEq)]
pub struct CorridorSettings {
    /// Transition variable.
    pub variable: Variable,
    /// Airspeeds (m/s), strictly increasing, >= 0.
    pub speeds_mps: Vec<f64>,
    /// Transition-variable values (rad), strictly increasing.
    pub values_rad: Vec<f64>,
    /// Flight-path angle (rad).
    pub climb_rad: f64,
    /// Margin thresholds.
    pub thresholds: Thresholds,
    /// Trim objective where controls are redundant.
    pub objective: Objective,
}

/// Default range of the transition variable (rad): the range common to all tilt actuators;
/// for pitch, the widest range of the vehicle's attitude limits.
pub fn default_value_range_rad(v: &Vehicle) -> (f64, f64) {
    if v.has_tilt() {
        return v
            .actuators
            .iter()
            .fold((f64::NEG_INFINITY, f64::INFINITY), |(l, h), a| {
                (l.max(a.min_rad), h.min(a.max_rad))
            });
    }
    v.attitude.envelope()
}

/// Evenly spaced values from `lo` to `hi` (both included when the step divides the span).
pub fn spaced(lo: f64, hi: f64, step: f64) -> Vec<f64> {
    if step.is_nan() || step <= 0.0 || hi.is_nan() || lo.is_nan() || hi < lo {
        return vec![lo];
    }
    let n = ((hi - lo) / step + 1e-9).floor() as usize;
    let mut v: Vec<f64> = (0..=n).map(|k| lo + k as f64 * step).collect();
    if hi - v[n] > 1e-9 * step {
        v.push(hi);
    }
    v
}

impl CorridorSettings {
    /// Settings for a scenario: speeds from its sweep range in steps of `speed_step_mps`
    /// (default: half the sweep step), the variable over [`default_value_range_rad`] in steps of
    /// `value_step_deg` (default 1 deg), its climb angle and thresholds, and the default pitch
    /// limits for tilt vehicles.
    pub fn for_scenario(
        sc: &Scenario,
        speed_step_mps: Option<f64>,
        value_step_deg: Option<f64>,
    ) -> Result<CorridorSettings, CorridorError> {
        let v = &sc.vehicle;
        let from = sc.file.sweep.from_mps;
        let to = sc.file.sweep.to_mps;
        let ds = speed_step_mps.unwrap_or(0.5 * sc.file.sweep.step_mps);
        let dy = value_step_deg.unwrap_or(DEFAULT_VALUE_STEP_DEG);
        if !(ds.is_finite() && ds > 0.0) {
            return Err(CorridorError::Grid(format!(
                "speed step {ds} m/s is not positive; hint: give a step such as 0.5"
            )));
        }
        if !(dy.is_finite() && dy > 0.0) {
            return Err(CorridorError::Grid(format!(
                "step of the transition variable {dy} deg is not positive; hint: give a step such as 1"
            )));
        }
        let (lo, hi) = default_value_range_rad(v);
        // Counts in floating point before anything is allocated.
        let max_axis = crate::limits::MAX_GRID_AXIS as f64;
        let ns = crate::limits::point_count(from, to, ds);
        let nv = crate::limits::point_count(lo.to_degrees(), hi.to_degrees(), dy);
        if ns > max_axis || nv > max_axis || ns * nv > crate::limits::MAX_GRID_POINTS as f64 {
            return Err(CorridorError::Grid(format!(
                "the grid would have {ns:.3e} speeds x {nv:.3e} values; hint: use larger steps (at most {} per axis and {} points)",
                crate::limits::MAX_GRID_AXIS,
                crate::limits::MAX_GRID_POINTS
            )));
        }
        let speeds = spaced(from, to, ds);
        let values: Vec<f64> = spaced(lo.to_degrees(), hi.to_degrees(), dy)
            .into_iter()
            .map(f64::to_radians)
            .collect();
        let s = CorridorSettings {
            variable: Variable::of(v),
            speeds_mps: speeds,
            values_rad: values,
            climb_rad: sc.climb_rad,
            thresholds: sc.file.thresholds.clone(),
            objective: sc.file.sweep.objective,
        };
        s.validate()?;
        Ok(s)
    }

    /// Check the grid: both axes finite, strictly increasing, not empty; speeds >= 0; at most
    /// one million points.
    pub fn validate(&self) -> Result<(), CorridorError> {
        let inc = |x: &[f64]| {
            !x.is_empty() && x.iter().all(|a| a.is_finite()) && x.windows(2).all(|w| w[1] > w[0])
        };
        if !inc(&self.speeds_mps) || self.speeds_mps[0] < 0.0 {
            return Err(CorridorError::Grid(
                "airspeeds must be finite, non-negative and increasing; hint: check the sweep range".into(),
            ));
        }
        if !inc(&self.values_rad) {
            return Err(CorridorError::Grid(
                "values of the transition variable must be finite and increasing".into(),
            ));
        }
        let n = self.speeds_mps.len() * self.values_rad.len();
        if n > crate::limits::MAX_GRID_POINTS {
            return Err(CorridorError::Grid(format!(
                "{n} grid points; hint: use larger steps (at most {} points)",
                crate::limits::MAX_GRID_POINTS
            )));
        }
        Ok(())
    }
}

/// A whole corridor.
#[derive(Debug, Clone, Serialize)]
pub struct Corridor {
    /// Transition variable.
    pub variable: Variable,
    /// How a point is trimmed.
    pub condition: &'static str,
    /// Airspeeds (m/s).
    pub speeds_mps: Vec<f64>,
    /// Transition-variable values (deg).
    pub values_deg: Vec<f64>,
    /// Flight-path angle (deg).
    pub climb_deg: f64,
    /// Pitch attitude limits for tilt vehicles (deg).
    pub pitch_limits_deg: Option<(f64, f64)>,
    /// Every point, speed-major: index `i * values_deg.len() + j`.
    pub points: Vec<CorridorPoint>,
    /// Boundaries.
    pub boundaries: Vec<Boundary>,
    /// Trim solution of each trimmed point as a warm start for later work.
    #[serde(skip)]
    pub guesses: Vec<Option<TrimGuess>>,
}

impl CorridorPoint {
    /// A point not (yet) trimmed, with no reason.
    pub fn untrimmed(speed_mps: f64, value_deg: f64) -> CorridorPoint {
        CorridorPoint {
            speed_mps,
            value_deg,
            trimmed: false,
            inside: false,
            smallest_margin: None,
            limiting_margin: None,
            outside_reason: None,
            violations: Vec::new(),
            reason: String::new(),
            pitch_deg: None,
            alpha_deg: None,
            path_accel_mps2: None,
            accel_available_mps2: None,
            decel_available_mps2: None,
            power_w: None,
            margins: None,
        }
    }
}

impl Corridor {
    /// The point at speed index `i` and value index `j`.
    pub fn at(&self, i: usize, j: usize) -> &CorridorPoint {
        &self.points[i * self.values_deg.len() + j]
    }

    /// Warm start stored for point (i, j).
    pub fn guess(&self, i: usize, j: usize) -> Option<&TrimGuess> {
        self.guesses[i * self.values_deg.len() + j].as_ref()
    }

    /// Smallest margin of inside points, None elsewhere: `grid[i][j]`.
    pub fn inside_margins(&self) -> Vec<Vec<Option<f64>>> {
        (0..self.speeds_mps.len())
            .map(|i| {
                (0..self.values_deg.len())
                    .map(|j| {
                        let p = self.at(i, j);
                        if p.inside {
                            p.smallest_margin.or(Some(f64::INFINITY))
                        } else {
                            None
                        }
                    })
                    .collect()
            })
            .collect()
    }

    /// Distinct outside reasons with their number of points, most frequent first.
    pub fn reason_counts(&self) -> Vec<(String, usize)> {
        let mut out: Vec<(String, usize)> = Vec::new();
        for p in &self.points {
            if let Some(l) = &p.outside_reason {
                let k = l.boundary_label();
                match out.iter_mut().find(|e| e.0 == k) {
                    Some(e) => e.1 += 1,
                    None => out.push((k, 1)),
                }
            }
        }
        out.sort_by_key(|e| std::cmp::Reverse(e.1));
        out
    }

    /// Speeds (m/s) with at least one inside point, as contiguous bands (from, to).
    pub fn speed_bands(&self) -> Vec<(f64, f64)> {
        let mut out: Vec<(f64, f64)> = Vec::new();
        let mut open = false;
        for (i, &s) in self.speeds_mps.iter().enumerate() {
            let any = (0..self.values_deg.len()).any(|j| self.at(i, j).inside);
            if any {
                if open {
                    if let Some(b) = out.last_mut() {
                        b.1 = s;
                    }
                } else {
                    out.push((s, s));
                }
            }
            open = any;
        }
        out
    }
}

/// The trim request of a corridor point.
pub fn request(
    variable: Variable,
    v: &Vehicle,
    speed_mps: f64,
    value_rad: f64,
    climb_rad: f64,
    objective: Objective,
) -> TrimRequest {
    match variable {
        Variable::Tilt => TrimRequest {
            speed_mps,
            climb_rad,
            tilt: TiltSetting::Fixed(vec![value_rad; v.actuators.len()]),
            pitch_rad: None,
            condition: Condition::Steady,
            objective,
        },
        Variable::Pitch => TrimRequest {
            speed_mps,
            climb_rad,
            tilt: TiltSetting::Fixed(v.actuators.iter().map(|a| a.max_rad).collect()),
            pitch_rad: Some(value_rad),
            condition: Condition::HeldPitch,
            objective,
        },
    }
}

/// Normalised margin m / t - 1, or None when the threshold cannot scale it.
pub fn normalise(margin: f64, threshold: f64) -> Option<f64> {
    (threshold > 1e-12 && margin.is_finite()).then(|| margin / threshold - 1.0)
}

/// Along-path acceleration and deceleration available from the remaining thrust (m/s^2),
/// see the module documentation.
pub fn accel_available(
    v: &Vehicle,
    atm: &Atmosphere,
    sol: &TrimSolution,
    climb_rad: f64,
) -> (f64, f64) {
    let e = &sol.evaluation;
    let avail = margins::thrust_available(v, atm, e);
    let mut up = 0.0;
    let mut down = 0.0;
    for ((r, l), (ta, _)) in v.rotors.iter().zip(&e.rotors).zip(&avail) {
        let t = l.thrust_n;
        let ta = ta * r.count as f64;
        let c = (sol.state.theta_rad + l.axis_rad - climb_rad).cos();
        let more = c * (ta - t).max(0.0);
        let none = -c * t;
        up += more.max(none);
        down += more.min(none);
    }
    let m = v.mass_kg;
    (
        sol.path_accel_mps2 + up / m,
        -(sol.path_accel_mps2 + down / m),
    )
}

/// The limit an untrimmable point's best attempt sits on.
fn untrimmable_limit(v: &Vehicle, atm: &Atmosphere, sol: &TrimSolution) -> (Limit, String) {
    let e = &sol.evaluation;
    let avail = margins::thrust_available(v, atm, e);
    for (g, r) in v.rotors.iter().enumerate() {
        let p = e.rotors.get(g).map_or(0.0, |l| l.performance.shaft_power_w);
        if p > r.power_max_w * (1.0 + 1e-6) {
            return (
                Limit::Power(r.name.clone()),
                format!(
                    "untrimmable: '{}' needs {:.0} W per rotor, {:.0} W available",
                    r.name, p, r.power_max_w
                ),
            );
        }
    }
    for (g, r) in v.rotors.iter().enumerate() {
        let t = sol.controls.thrust_n.get(g).copied().unwrap_or(0.0);
        let (ta, lim) = avail
            .get(g)
            .copied()
            .unwrap_or((r.thrust_max_n, ThrustLimit::Cap));
        if t >= ta * (1.0 - 1e-6) || t >= r.thrust_max_n * (1.0 - 1e-6) {
            let l = match lim {
                ThrustLimit::Power => Limit::Power(r.name.clone()),
                ThrustLimit::Cap => Limit::Thrust(r.name.clone()),
            };
            return (
                l,
                format!(
                    "untrimmable: '{}' at the thrust available ({:.1} N per rotor)",
                    r.name, ta
                ),
            );
        }
    }
    for (k, el) in v.elevators.iter().enumerate() {
        let d = sol.controls.elevator_rad.get(k).copied().unwrap_or(0.0);
        if d >= el.max_rad - 1e-9 || d <= el.min_rad + 1e-9 {
            return (
                Limit::Elevator,
                format!(
                    "untrimmable: elevator '{}' at its limit ({:.1} deg)",
                    el.name,
                    d.to_degrees()
                ),
            );
        }
    }
    for (g, r) in v.rotors.iter().enumerate() {
        if sol.controls.thrust_n.get(g).copied().unwrap_or(0.0) <= 1e-9 {
            return (
                Limit::ZeroThrust(r.name.clone()),
                format!("untrimmable: '{}' at zero thrust", r.name),
            );
        }
    }
    if sol
        .active_limits
        .iter()
        .any(|a| a.starts_with("pitch attitude"))
    {
        return (
            Limit::PitchAttitude,
            "untrimmable: pitch attitude at its limit".into(),
        );
    }
    (
        Limit::NoEquilibrium,
        format!(
            "untrimmable: {}",
            sol.reasons.first().map_or("no equilibrium", String::as_str)
        ),
    )
}

/// Evaluate one corridor point: trim (warm-started when `warm` is given; every cold start
/// too when `explore`), assess, and classify. Returns the point and the trim solution.
#[allow(clippy::too_many_arguments)]
pub fn evaluate_point(
    v: &Vehicle,
    atm: &Atmosphere,
    s: &CorridorSettings,
    speed_mps: f64,
    value_rad: f64,
    warm: Option<&TrimGuess>,
    explore: bool,
) -> (CorridorPoint, TrimSolution) {
    let req = request(
        s.variable,
        v,
        speed_mps,
        value_rad,
        s.climb_rad,
        s.objective,
    );
    let sol = trim(v, atm, &req, warm, explore);
    let point = classify(v, atm, s, &req, &sol);
    (point, sol)
}

/// Classify a solved point (see the module documentation).
pub fn classify(
    v: &Vehicle,
    atm: &Atmosphere,
    s: &CorridorSettings,
    req: &TrimRequest,
    sol: &TrimSolution,
) -> CorridorPoint {
    let value_rad = match s.variable {
        Variable::Tilt => match &req.tilt {
            TiltSetting::Fixed(t) => t.first().copied().unwrap_or(0.0),
            TiltSetting::Free => sol.controls.tilt_rad.first().copied().unwrap_or(0.0),
        },
        Variable::Pitch => req.pitch_rad.unwrap_or(sol.state.theta_rad),
    };
    let mut p = CorridorPoint::untrimmed(req.speed_mps, value_rad.to_degrees());
    p.trimmed = sol.trimmed();
    if !sol.trimmed() {
        let (l, text) = untrimmable_limit(v, atm, sol);
        p.violations.push(l.clone());
        p.outside_reason = Some(l);
        p.reason = text;
        return p;
    }
    let rep = assess(v, atm, req, sol, &s.thresholds);
    let th = &s.thresholds;
    let (a_up, a_down) = accel_available(v, atm, sol, s.climb_rad);
    p.pitch_deg = rep.pitch_deg;
    p.alpha_deg = rep.alpha_deg;
    p.path_accel_mps2 = Some(sol.path_accel_mps2);
    p.accel_available_mps2 = Some(a_up);
    p.decel_available_mps2 = Some(a_down);
    p.power_w = Some(sol.evaluation.power_w);

    // Stall margins of the surfaces whose stall alone is unsafe (margins::stall_assessment).
    let stall: Vec<(String, f64)> = rep
        .surfaces
        .iter()
        .filter(|s| s.in_verdict)
        .map(|s| (s.name.clone(), s.stall_margin_deg))
        .collect();
    let Some(m) = rep.margins.as_ref() else {
        // assess always gives margins for a trimmed point; be safe anyway.
        p.reason = "no margins at a trimmed point".into();
        p.violations.push(Limit::NoEquilibrium);
        p.outside_reason = Some(Limit::NoEquilibrium);
        return p;
    };
    let w = v.weight_n();
    // Normalised margins by kind.
    let mut kinds: Vec<(Limit, f64, String)> = Vec::new();
    let mut push = |l: Limit, raw: f64, t: f64, text: String| {
        if let Some(n) = normalise(raw, t) {
            kinds.push((l, n, text));
        }
    };
    for (name, d) in &stall {
        push(
            Limit::Stall(name.clone()),
            *d,
            th.stall_margin_deg,
            format!(
                "stall margin of '{name}' {d:.1} deg (threshold {:.1})",
                th.stall_margin_deg
            ),
        );
    }
    let mut thrust_min = f64::INFINITY;
    for g in rep.rotors.iter() {
        if g.thrust_n > LOAD_CARRYING_SHARE * w {
            thrust_min = thrust_min.min(g.thrust_margin);
            push(
                Limit::Thrust(g.name.clone()),
                g.thrust_margin,
                th.thrust_margin,
                format!(
                    "thrust margin of '{}' {:.0} % (threshold {:.0} %)",
                    g.name,
                    100.0 * g.thrust_margin,
                    100.0 * th.thrust_margin
                ),
            );
        }
        push(
            Limit::Power(g.name.clone()),
            g.power_margin,
            th.power_margin,
            format!(
                "power margin of '{}' {:.0} % (threshold {:.0} %)",
                g.name,
                100.0 * g.power_margin,
                100.0 * th.power_margin
            ),
        );
    }
    push(
        Limit::PitchUp,
        m.pitch_accel_up_rad_s2,
        th.pitch_accel_rad_s2,
        format!(
            "nose-up pitch authority {:.2} rad/s^2 (threshold {:.2})",
            m.pitch_accel_up_rad_s2, th.pitch_accel_rad_s2
        ),
    );
    push(
        Limit::PitchDown,
        m.pitch_accel_down_rad_s2,
        th.pitch_accel_rad_s2,
        format!(
            "nose-down pitch authority {:.2} rad/s^2 (threshold {:.2})",
            m.pitch_accel_down_rad_s2, th.pitch_accel_rad_s2
        ),
    );
    if let Some(e) = m.elevator_deg {
        push(
            Limit::Elevator,
            e,
            th.elevator_margin_deg,
            format!(
                "elevator travel left {e:.1} deg (threshold {:.1})",
                th.elevator_margin_deg
            ),
        );
    }
    if let Some(sm) = m.static_margin_pct {
        push(
            Limit::StaticMargin,
            sm,
            th.static_margin_pct,
            format!(
                "static margin {sm:.1} % chord (threshold {:.1})",
                th.static_margin_pct
            ),
        );
    }
    if let Some(t2) = m.time_to_double_s {
        push(
            Limit::Instability,
            t2,
            th.time_to_double_s,
            format!(
                "a mode doubles in {t2:.2} s (threshold {:.1})",
                th.time_to_double_s
            ),
        );
    }
    if let Some((l, n, text)) = kinds.iter().min_by(|a, b| a.1.total_cmp(&b.1)).cloned() {
        p.smallest_margin = Some(n);
        p.limiting_margin = Some(l);
        p.reason = text;
    }

    // Hard limits: the corridor's own pitch limits first, then the physical limits.
    {
        let (lo, hi) = v.pitch_limits_rad(req.speed_mps);
        let th = sol.state.theta_rad;
        if th < lo - 1e-9 || th > hi + 1e-9 {
            p.violations.push(Limit::PitchAttitude);
        }
    }
    if m.stall_verdict == margins::StallVerdict::Stalled {
        // Name the surface that stalls: the one with the most stalled load.
        let name = rep
            .surfaces
            .iter()
            .filter(|s| s.verdict == margins::StallVerdict::Stalled)
            .max_by(|a, b| a.stalled_share.total_cmp(&b.stalled_share))
            .map_or_else(|| m.stall_surface.clone(), |s| s.name.clone());
        p.violations.push(Limit::Stall(name));
    }
    for g in rep.rotors.iter() {
        if g.power_margin < -1e-9 {
            p.violations.push(Limit::Power(g.name.clone()));
        }
    }
    if thrust_min < -1e-9 {
        if let Some(g) = rep.rotors.iter().find(|g| g.thrust_margin < -1e-9) {
            p.violations.push(Limit::Thrust(g.name.clone()));
        }
    }
    if m.pitch_accel_up_rad_s2 < th.pitch_accel_rad_s2 {
        p.violations.push(Limit::PitchUp);
    }
    if m.pitch_accel_down_rad_s2 < th.pitch_accel_rad_s2 {
        p.violations.push(Limit::PitchDown);
    }
    if m.time_to_double_s.is_some_and(|t| t < th.time_to_double_s) {
        p.violations.push(Limit::Instability);
    }
    p.margins = Some(PointMargins {
        // The verdict margin the margins module already took over the same parts.
        stall_deg: m.stall_deg.is_finite().then_some(m.stall_deg),
        stall_surface: m.stall_deg.is_finite().then(|| m.stall_surface.clone()),
        thrust: m.thrust,
        power: m.power,
        pitch_accel_up_rad_s2: m.pitch_accel_up_rad_s2,
        pitch_accel_down_rad_s2: m.pitch_accel_down_rad_s2,
        elevator_deg: m.elevator_deg,
        static_margin_pct: m.static_margin_pct,
        time_to_double_s: m.time_to_double_s,
    });
    // Inside means trimmed, no hard limit crossed and every normalised margin >= 0.
    let hard = !p.violations.is_empty();
    if !hard && p.smallest_margin.is_some_and(|n| n < 0.0) {
        if let Some(l) = p.limiting_margin.clone() {
            p.violations.push(l);
        }
    }
    p.inside = p.violations.is_empty();
    if let Some(l) = p.violations.first() {
        p.outside_reason = Some(l.clone());
        if hard {
            p.reason = outside_text(l, &p, sol);
        } else {
            p.reason = format!("below its threshold: {}", p.reason);
        }
    }
    p
}

fn outside_text(l: &Limit, p: &CorridorPoint, sol: &TrimSolution) -> String {
    let m = p.margins.as_ref();
    match l {
        Limit::Stall(s) => format!(
            "'{s}' stalled: stall margin {:.1} deg",
            m.and_then(|m| m.stall_deg).unwrap_or(f64::NAN)
        ),
        Limit::PitchUp => format!(
            "nose-up pitch authority {:.2} rad/s^2 below the threshold",
            m.map_or(f64::NAN, |m| m.pitch_accel_up_rad_s2)
        ),
        Limit::PitchDown => format!(
            "nose-down pitch authority {:.2} rad/s^2 below the threshold",
            m.map_or(f64::NAN, |m| m.pitch_accel_down_rad_s2)
        ),
        Limit::Instability => format!(
            "a mode doubles in {:.2} s, faster than the threshold",
            m.and_then(|m| m.time_to_double_s).unwrap_or(f64::NAN)
        ),
        Limit::PitchAttitude => format!(
            "trimmed pitch attitude {:.1} deg outside the corridor's limits",
            sol.state.theta_rad.to_degrees()
        ),
        other => other.boundary_label(),
    }
}

/// Consecutive speeds solved by one task (each column warm-starts from the one before).
pub const SPEED_CHUNK: usize = 8;

/// Rows tried with every cold start to seed the first speed of a chunk.
const SEED_ROWS: usize = 10;

/// What a solved column hands to the next one: per row, inside or not and the trim solution.
type Column = Vec<(CorridorPoint, Option<TrimGuess>)>;

/// Ordering of points for picking the better of two solutions and the best row: inside
/// before outside before untrimmed, then the larger smallest margin.
fn score(p: &CorridorPoint) -> (u8, f64) {
    let r = match (p.trimmed, p.inside) {
        (true, true) => 2,
        (true, false) => 1,
        _ => 0,
    };
    (r, p.smallest_margin.unwrap_or(f64::INFINITY))
}

fn better(a: &CorridorPoint, b: &CorridorPoint) -> bool {
    score(a).partial_cmp(&score(b)) == Some(std::cmp::Ordering::Greater)
}

/// Row of the best point of a column.
fn best_row(col: &[(CorridorPoint, Option<TrimGuess>)]) -> Option<usize> {
    col.iter()
        .enumerate()
        .filter(|(_, (p, _))| p.trimmed)
        .max_by(|(_, (a, _)), (_, (b, _))| {
            score(a)
                .partial_cmp(&score(b))
                .unwrap_or(std::cmp::Ordering::Equal)
        })
        .map(|(j, _)| j)
}

/// Seed the first speed of a chunk: every few rows tried with every cold start; returns a
/// pseudo previous column holding those solutions.
fn seed_column(v: &Vehicle, atm: &Atmosphere, s: &CorridorSettings, speed: f64) -> Column {
    let nv = s.values_rad.len();
    let step = nv.div_ceil(SEED_ROWS).max(1);
    (0..nv)
        .map(|j| {
            if j % step == step / 2 || j + 1 == nv {
                let (p, sol) = evaluate_point(v, atm, s, speed, s.values_rad[j], None, true);
                let g = sol.trimmed().then(|| sol.guess());
                (p, g)
            } else {
                let mut p = CorridorPoint::untrimmed(speed, s.values_rad[j].to_degrees());
                p.reason = "not tried".into();
                (p, None)
            }
        })
        .collect()
}

/// Solve one speed, walking from the best row of the previous (or seed) column up to the top
/// value and then down from it. Each point starts from the previous point of the walk when
/// that trimmed, else from the previous column's point at the same value, else from the last
/// trimmed point of the walk (a point with none of these tries every cold start). A point
/// that comes out worse than the previous column's point at the same value (outside where that
/// was inside, or untrimmed where that trimmed) is tried again from that point and the better
/// solution is kept: a warm start can hold on to a stalled branch.
fn solve_column(
    v: &Vehicle,
    atm: &Atmosphere,
    s: &CorridorSettings,
    speed: f64,
    prev: &Column,
    progress: &(dyn Fn() + Sync),
) -> Column {
    let nv = s.values_rad.len();
    let start = best_row(prev).unwrap_or(nv - 1);
    let order: Vec<usize> = (start..nv).chain((0..start).rev()).collect();
    let mut col: Vec<Option<(CorridorPoint, Option<TrimGuess>)>> = vec![None; nv];
    let mut last_ok: Option<TrimGuess> = None;
    let mut anchor: Option<TrimGuess> = None;
    let mut prev_j: Option<usize> = None;
    for (n, &j) in order.iter().enumerate() {
        // The downward leg restarts from the start row.
        if n > 0 && j + 1 == start {
            last_ok.clone_from(&anchor);
            prev_j = Some(start);
        }
        let neighbour = prev_j
            .and_then(|k| col[k].as_ref())
            .and_then(|(_, g)| g.clone());
        let (prev_point, prev_guess) = match prev.get(j) {
            Some((p, g)) => (Some(p), g.as_ref()),
            None => (None, None),
        };
        let from_neighbour = neighbour.is_some();
        let warm = neighbour
            .or_else(|| prev_guess.cloned())
            .or_else(|| last_ok.clone());
        let (mut p, sol) = evaluate_point(
            v,
            atm,
            s,
            speed,
            s.values_rad[j],
            warm.as_ref(),
            warm.is_none(),
        );
        let mut g = sol.trimmed().then(|| sol.guess());
        if let (true, Some(pp), Some(pg)) = (from_neighbour, prev_point, prev_guess) {
            if score(pp).0 > score(&p).0 {
                let (p2, sol2) = evaluate_point(v, atm, s, speed, s.values_rad[j], Some(pg), false);
                if better(&p2, &p) {
                    p = p2;
                    g = sol2.trimmed().then(|| sol2.guess());
                }
            }
        }
        if g.is_some() {
            last_ok.clone_from(&g);
        }
        if n == 0 {
            anchor = g.clone().or_else(|| prev_guess.cloned());
        }
        col[j] = Some((p, g));
        prev_j = Some(j);
        progress();
    }
    col.into_iter().flatten().collect()
}

/// Compute a corridor. `progress` is called once per solved point (from any thread).
pub fn compute(
    v: &Vehicle,
    atm: &Atmosphere,
    s: &CorridorSettings,
    progress: &(dyn Fn() + Sync),
) -> Result<Corridor, CorridorError> {
    s.validate()?;
    let nv = s.values_rad.len();
    let columns: Vec<Column> = s
        .speeds_mps
        .par_chunks(SPEED_CHUNK)
        .flat_map_iter(|chunk| {
            let mut prev = seed_column(v, atm, s, chunk[0]);
            let mut cols = Vec::with_capacity(chunk.len());
            for &speed in chunk {
                let col = solve_column(v, atm, s, speed, &prev, progress);
                prev.clone_from(&col);
                cols.push(col);
            }
            cols
        })
        .collect();
    let mut points = Vec::with_capacity(s.speeds_mps.len() * nv);
    let mut guesses = Vec::with_capacity(points.capacity());
    for c in columns {
        for (p, g) in c {
            points.push(p);
            guesses.push(g);
        }
    }
    let mut c = Corridor {
        variable: s.variable,
        condition: match s.variable {
            Variable::Tilt => "steady trim, tilt held, pitch free",
            Variable::Pitch => "pitch held, vertical force and pitching moment balanced, acceleration along the path free",
        },
        speeds_mps: s.speeds_mps.clone(),
        values_deg: s.values_rad.iter().map(|x| x.to_degrees()).collect(),
        climb_deg: s.climb_rad.to_degrees(),
        pitch_limits_deg: {
            let (a, b) = v.attitude.envelope();
            Some((a.to_degrees(), b.to_degrees()))
        },
        points,
        boundaries: Vec::new(),
        guesses,
    };
    c.boundaries = boundaries(&c);
    Ok(c)
}

// ---------------------------------------------------------------------------------------
// Boundaries by marching squares

/// What lies at a vertex of the padded grid.
#[derive(Clone, Copy, PartialEq)]
enum Cell {
    Inside,
    /// An outside grid point (index into the points).
    Outside(usize),
    /// Beyond the ends of the variable range.
    VariableEnd,
    /// Beyond the ends of the speed range (no boundary is drawn there).
    SpeedEnd,
}

/// Trace the boundaries: the edge of the trimmable region, then the edge of the corridor where
/// it does not run along the first (see the module documentation).
pub fn boundaries(c: &Corridor) -> Vec<Boundary> {
    let mut out = trace(c, Envelope::Trimmable);
    out.extend(trace(c, Envelope::Corridor));
    out
}

fn trace(c: &Corridor, envelope: Envelope) -> Vec<Boundary> {
    let ns = c.speeds_mps.len();
    let nv = c.values_deg.len();
    if ns == 0 || nv == 0 {
        return Vec::new();
    }
    let member = |k: usize| match envelope {
        Envelope::Trimmable => c.points[k].trimmed,
        Envelope::Corridor => c.points[k].inside,
    };
    // Padded grid: index a in 0..ns+2 (speed), b in 0..nv+2 (value).
    let cell = |a: usize, b: usize| -> Cell {
        if a == 0 || a == ns + 1 {
            return Cell::SpeedEnd;
        }
        if b == 0 || b == nv + 1 {
            return Cell::VariableEnd;
        }
        let k = (a - 1) * nv + (b - 1);
        if member(k) {
            Cell::Inside
        } else {
            Cell::Outside(k)
        }
    };
    let xs = |a: usize| -> f64 {
        if a == 0 {
            c.speeds_mps[0]
                - if ns > 1 {
                    c.speeds_mps[1] - c.speeds_mps[0]
                } else {
                    1.0
                }
        } else if a == ns + 1 {
            c.speeds_mps[ns - 1]
                + if ns > 1 {
                    c.speeds_mps[ns - 1] - c.speeds_mps[ns - 2]
                } else {
                    1.0
                }
        } else {
            c.speeds_mps[a - 1]
        }
    };
    let ys = |b: usize| -> f64 {
        if b == 0 {
            c.values_deg[0]
                - if nv > 1 {
                    c.values_deg[1] - c.values_deg[0]
                } else {
                    1.0
                }
        } else if b == nv + 1 {
            c.values_deg[nv - 1]
                + if nv > 1 {
                    c.values_deg[nv - 1] - c.values_deg[nv - 2]
                } else {
                    1.0
                }
        } else {
            c.values_deg[b - 1]
        }
    };
    let inside = |a: usize, b: usize| cell(a, b) == Cell::Inside;

    // Crossing edges are identified by their inside vertex and direction. An edge key:
    // (a, b, horizontal) for the edge from (a, b) to (a+1, b) (horizontal = along speed) or
    // to (a, b+1).
    type Key = (usize, usize, bool);
    let crossing = |k: Key| -> ((f64, f64), Cell) {
        let (a, b, h) = k;
        let (a2, b2) = if h { (a + 1, b) } else { (a, b + 1) };
        let p = (0.5 * (xs(a) + xs(a2)), 0.5 * (ys(b) + ys(b2)));
        let out = if inside(a, b) {
            cell(a2, b2)
        } else {
            cell(a, b)
        };
        (p, out)
    };
    // Segments per square (a, b) with corners (a,b), (a+1,b), (a+1,b+1), (a,b+1).
    let mut adj: std::collections::HashMap<Key, Vec<Key>> = std::collections::HashMap::new();
    for a in 0..=ns {
        for b in 0..=nv {
            let c0 = inside(a, b);
            let c1 = inside(a + 1, b);
            let c2 = inside(a + 1, b + 1);
            let c3 = inside(a, b + 1);
            let bottom: Key = (a, b, true);
            let right: Key = (a + 1, b, false);
            let top: Key = (a, b + 1, true);
            let left: Key = (a, b, false);
            let idx = (c0 as u8) | (c1 as u8) << 1 | (c2 as u8) << 2 | (c3 as u8) << 3;
            let segs: &[(Key, Key)] = match idx {
                0 | 15 => &[],
                1 | 14 => &[(left, bottom)],
                2 | 13 => &[(bottom, right)],
                4 | 11 => &[(right, top)],
                8 | 7 => &[(top, left)],
                3 | 12 => &[(left, right)],
                6 | 9 => &[(bottom, top)],
                // Saddles: keep the inside corners apart.
                5 => &[(left, bottom), (right, top)],
                10 => &[(bottom, right), (top, left)],
                _ => &[],
            };
            for &(p, q) in segs {
                adj.entry(p).or_default().push(q);
                adj.entry(q).or_default().push(p);
            }
        }
    }
    // Trace closed loops in a deterministic order.
    let mut keys: Vec<Key> = adj.keys().copied().collect();
    keys.sort_unstable();
    let mut seen: std::collections::HashSet<Key> = std::collections::HashSet::new();
    let mut loops: Vec<Vec<Key>> = Vec::new();
    for &start in &keys {
        if seen.contains(&start) {
            continue;
        }
        let mut path = vec![start];
        seen.insert(start);
        let mut prev = start;
        let mut cur = adj[&start][0];
        while cur != start && !seen.contains(&cur) {
            seen.insert(cur);
            path.push(cur);
            let nb = &adj[&cur];
            let next = if nb[0] != prev {
                nb[0]
            } else {
                nb.get(1).copied().unwrap_or(nb[0])
            };
            prev = cur;
            cur = next;
        }
        loops.push(path);
    }
    // Cut each loop into stretches of one reason; crossings towards the speed ends are gaps.
    let mut out = Vec::new();
    for lp in loops {
        let pts: Vec<((f64, f64), Option<Limit>)> = lp
            .iter()
            .map(|&k| {
                let (p, o) = crossing(k);
                // On the corridor's edge, stretches that run along the trimmable region's edge
                // (an untrimmable point or the end of the range outside) are left to that one.
                let l = match (o, envelope) {
                    (Cell::Outside(i), Envelope::Corridor) if !c.points[i].trimmed => None,
                    (Cell::VariableEnd, Envelope::Corridor) => None,
                    (Cell::Outside(i), _) => Some(
                        c.points[i]
                            .outside_reason
                            .clone()
                            .unwrap_or(Limit::NoEquilibrium),
                    ),
                    (Cell::VariableEnd, Envelope::Trimmable) => {
                        Some(Limit::VariableRange(c.variable))
                    }
                    (Cell::SpeedEnd | Cell::Inside, _) => None,
                };
                (p, l)
            })
            .collect();
        let n = pts.len();
        // Start the walk at a change of reason (or a gap) so stretches do not wrap.
        let start = (0..n)
            .find(|&i| pts[i].1 != pts[(i + n - 1) % n].1)
            .unwrap_or(0);
        let mut cur: Option<Boundary> = None;
        for step in 0..=n {
            let (p, l) = &pts[(start + step) % n];
            match (l, cur.as_mut()) {
                (Some(l), Some(b)) if &b.reason == l => {
                    b.speed_mps.push(p.0);
                    b.value_deg.push(p.1);
                }
                (l, open) => {
                    if let Some(b) = open {
                        // Close the stretch at this point so stretches join without gaps.
                        if l.is_some() {
                            b.speed_mps.push(p.0);
                            b.value_deg.push(p.1);
                        }
                    }
                    if let Some(b) = cur.take() {
                        out.push(b);
                    }
                    if step < n {
                        if let Some(l) = l {
                            cur = Some(Boundary {
                                envelope,
                                reason: l.clone(),
                                speed_mps: vec![p.0],
                                value_deg: vec![p.1],
                            });
                        }
                    }
                }
            }
        }
        if let Some(b) = cur.take() {
            out.push(b);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A 6 x 5 corridor with a 3 x 2 block inside, stalled to the left and untrimmable above.
    fn block() -> Corridor {
        let speeds: Vec<f64> = (0..6).map(f64::from).collect();
        let values: Vec<f64> = (0..5).map(|j| 10.0 * j as f64).collect();
        let mut points = Vec::new();
        for &s in &speeds {
            for &y in &values {
                let mut p = CorridorPoint::untrimmed(s, y);
                if y <= 30.0 {
                    p.trimmed = true;
                    let inside = (2.0..=4.0).contains(&s) && (10.0..=20.0).contains(&y);
                    p.inside = inside;
                    if !inside {
                        p.violations.push(Limit::Stall("wing".into()));
                        p.outside_reason = Some(Limit::Stall("wing".into()));
                    }
                } else {
                    p.outside_reason = Some(Limit::Thrust("rotor".into()));
                }
                points.push(p);
            }
        }
        let n = points.len();
        Corridor {
            variable: Variable::Tilt,
            condition: "test",
            speeds_mps: speeds,
            values_deg: values,
            climb_deg: 0.0,
            pitch_limits_deg: None,
            points,
            boundaries: Vec::new(),
            guesses: vec![None; n],
        }
    }

    #[test]
    fn boundaries_run_halfway_between_inside_and_outside_points() {
        let c = block();
        let b = boundaries(&c);
        // The corridor's edge is one closed loop of one reason around the block.
        let edge: Vec<&Boundary> = b
            .iter()
            .filter(|x| x.envelope == Envelope::Corridor)
            .collect();
        assert_eq!(edge.len(), 1);
        assert_eq!(edge[0].reason, Limit::Stall("wing".into()));
        let e = edge[0];
        assert_eq!(e.speed_mps.first(), e.speed_mps.last());
        for (&x, &y) in e.speed_mps.iter().zip(&e.value_deg) {
            assert!(
                (1.5..=4.5).contains(&x) && (5.0..=25.0).contains(&y),
                "({x}, {y})"
            );
            // Every vertex is a crossing midway between grid points.
            let on_x = (x - x.round()).abs() < 1e-12 || (x - x.floor() - 0.5).abs() < 1e-12;
            let on_y = (y / 10.0 - (y / 10.0).round()).abs() < 1e-12
                || (y / 10.0 - (y / 10.0).floor() - 0.5).abs() < 1e-12;
            assert!(on_x && on_y);
        }
        // The trimmable region's edge: the thrust cap along the top (halfway between 30 and
        // 40 deg) and the actuator range along the bottom; nothing at the speed ends.
        let top: Vec<&Boundary> = b
            .iter()
            .filter(|x| x.reason == Limit::Thrust("rotor".into()))
            .collect();
        assert_eq!(top.len(), 1);
        assert!(top[0].value_deg.iter().all(|&y| (y - 35.0).abs() < 1e-12));
        assert!(b
            .iter()
            .any(|x| x.reason == Limit::VariableRange(Variable::Tilt)));
        assert!(b
            .iter()
            .flat_map(|x| x.speed_mps.iter())
            .all(|&s| (-0.5..=5.5).contains(&s)));
    }

    #[test]
    fn normalised_margin_is_zero_at_threshold_and_minus_one_at_the_limit() {
        assert_eq!(normalise(3.0, 3.0), Some(0.0));
        assert_eq!(normalise(0.0, 3.0), Some(-1.0));
        assert_eq!(normalise(1.0, 0.0), None);
    }
}
