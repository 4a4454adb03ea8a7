//! The validated vehicle: mass properties, lifting surfaces, rotor groups, tilt actuators,
//! elevators, slipstream links and an optional whole-vehicle stability-derivative model.
//!
//! Every value here has passed validation in [`file`] (positive mass, ordered tables, links
//! that point at existing components), so the physics never re-checks. Positions are in the
//! body frame of DEVELOPERS.md "Conventions": x forward, z down, metres, from the vehicle's own datum.

pub mod file;
pub mod summary;

use crate::aero::Polar;
use crate::rotor::PowerModel;

pub use file::{load_vehicle, parse_vehicle};

/// A point in the body x-z plane (m).
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize)]
pub struct Point {
    /// Forward coordinate (m).
    pub x_m: f64,
    /// Downward coordinate (m).
    pub z_m: f64,
}

impl Point {
    /// This point rotated nose-up by `angle_rad` about `pivot` (body x-z plane).
    pub fn rotated_about(self, pivot: Point, angle_rad: f64) -> Point {
        let (s, c) = angle_rad.sin_cos();
        let dx = self.x_m - pivot.x_m;
        let dz = self.z_m - pivot.z_m;
        Point {
            x_m: pivot.x_m + dx * c + dz * s,
            z_m: pivot.z_m - dx * s + dz * c,
        }
    }
}

/// A tilt actuator: 0 = cruise, 90 deg = hover (DEVELOPERS.md, "Conventions").
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct TiltActuator {
    /// Name used in files and reports.
    pub name: String,
    /// Lower limit (rad).
    pub min_rad: f64,
    /// Upper limit (rad).
    pub max_rad: f64,
    /// Rate limit (rad/s).
    pub rate_rad_s: f64,
    /// Pivot point; surfaces and rotors on the actuator rotate about it.
    pub pivot: Point,
}

/// An elevator (or elevon) on a surface or on the derivative model.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Elevator {
    /// Name used in files and reports.
    pub name: String,
    /// Lower deflection limit (rad), trailing-edge up.
    pub min_rad: f64,
    /// Upper deflection limit (rad), trailing-edge down.
    pub max_rad: f64,
    /// Change of the surface's angle of attack per unit deflection (tau, -).
    pub effectiveness: f64,
    /// Change of the surface's quarter-chord moment coefficient per radian (-).
    pub moment_per_rad: f64,
}

/// What a surface is, for reports and for picking the reference surface.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum SurfaceRole {
    /// A main wing.
    Wing,
    /// A horizontal tail or canard.
    Tail,
    /// The fuselage or lifting body.
    Body,
}

/// Part of a surface immersed in a rotor group's wake.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct SlipstreamLink {
    /// Index of the rotor group in [`Vehicle::rotors`].
    pub rotor: usize,
    /// Fraction of the surface area immersed (0..1).
    pub fraction: f64,
    /// Wake velocity as a multiple of the rotor's induced velocity (1 at the disc, 2 far downstream).
    pub wake_factor: f64,
}

/// Downwash at a surface from an upstream surface: eps = gradient * CL_up / a_up.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Downwash {
    /// Index of the upstream surface (earlier in [`Vehicle::surfaces`]).
    pub source: usize,
    /// d eps / d alpha of the upstream surface in attached flow (-).
    pub gradient: f64,
}

/// A lifting surface (wing, tail or body).
#[derive(Debug, Clone)]
pub struct Surface {
    /// Name used in files and reports.
    pub name: String,
    /// What the surface is.
    pub role: SurfaceRole,
    /// Planform area (m^2).
    pub area_m2: f64,
    /// Span (m).
    pub span_m: f64,
    /// Mean aerodynamic chord (m).
    pub chord_m: f64,
    /// Reference point (quarter chord) at zero tilt.
    pub position: Point,
    /// Incidence of the chord above body x at zero tilt (rad).
    pub incidence_rad: f64,
    /// Tilt actuator the surface rides on.
    pub actuator: Option<usize>,
    /// Elevator on this surface (index into [`Vehicle::elevators`]).
    pub elevator: Option<usize>,
    /// Downwash from an upstream surface.
    pub downwash: Option<Downwash>,
    /// Slipstream immersion by rotor groups; fractions sum to at most 1.
    pub slipstream: Vec<SlipstreamLink>,
    /// Full-range section/surface polar.
    pub polar: Polar,
    /// Dynamic-pressure ratio of the clean part (tail efficiency eta, -).
    pub dynamic_pressure_ratio: f64,
}

impl Surface {
    /// Aspect ratio b^2 / S.
    pub fn aspect_ratio(&self) -> f64 {
        self.span_m * self.span_m / self.area_m2
    }
}

/// A group of identical rotors lumped together.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct RotorGroup {
    /// Name used in files and reports.
    pub name: String,
    /// Number of identical rotors.
    pub count: u32,
    /// Rotor radius (m).
    pub radius_m: f64,
    /// Hub position of the group's thrust centre at zero tilt.
    pub position: Point,
    /// Thrust axis above body x at zero tilt (rad).
    pub mounting_rad: f64,
    /// Tilt actuator the group rides on.
    pub actuator: Option<usize>,
    /// Thrust cap of one rotor (N).
    pub thrust_max_n: f64,
    /// Shaft power available to one rotor (W).
    pub power_max_w: f64,
    /// How shaft power follows from ideal power.
    pub power_model: PowerModel,
    /// First-order thrust lag time constant (s).
    pub thrust_lag_s: f64,
    /// Scale on the momentum drag in edgewise flow (-).
    pub momentum_drag_factor: f64,
}

impl RotorGroup {
    /// Disc area of one rotor (m^2).
    pub fn disk_area_m2(&self) -> f64 {
        std::f64::consts::PI * self.radius_m * self.radius_m
    }
}

/// Whole-vehicle stability-derivative aerodynamics (per rad; q and alpha-dot made
/// non-dimensional with c / (2V)), for users with wind-tunnel or flight-test derivatives.
/// Forces act at the reference point; alpha is measured from body x.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct DerivativeModel {
    /// Reference area (m^2).
    pub area_m2: f64,
    /// Reference chord (m).
    pub chord_m: f64,
    /// Point the coefficients refer to.
    pub position: Point,
    /// Lift at zero alpha.
    pub cl0: f64,
    /// dCL/dalpha.
    pub cl_alpha: f64,
    /// dCL/d(q c / 2V).
    pub cl_q: f64,
    /// dCL/d(alpha-dot c / 2V).
    pub cl_alphadot: f64,
    /// dCL/d elevator.
    pub cl_elevator: f64,
    /// Drag at zero alpha.
    pub cd0: f64,
    /// dCD/dalpha.
    pub cd_alpha: f64,
    /// Induced drag factor k in CD += k (CL - CL0)^2.
    pub cd_k: f64,
    /// Pitching moment at zero alpha.
    pub cm0: f64,
    /// dCm/dalpha.
    pub cm_alpha: f64,
    /// dCm/d(q c / 2V).
    pub cm_q: f64,
    /// dCm/d(alpha-dot c / 2V).
    pub cm_alphadot: f64,
    /// dCm/d elevator.
    pub cm_elevator: f64,
    /// Stall angles (rad) that bound the model's validity.
    pub alpha_stall_pos_rad: f64,
    /// Negative stall angle (rad).
    pub alpha_stall_neg_rad: f64,
    /// Elevator of the model (index into [`Vehicle::elevators`]).
    pub elevator: Option<usize>,
}

/// Reference geometry for coefficients and static margin.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Reference {
    /// Reference area (m^2).
    pub area_m2: f64,
    /// Reference chord (m).
    pub chord_m: f64,
    /// Reference span (m).
    pub span_m: f64,
    /// Chord-wise origin for static margin and neutral point in % chord (leading edge of the
    /// reference chord, body x, m).
    pub leading_edge_x_m: f64,
}

/// A validated vehicle.
#[derive(Debug, Clone)]
pub struct Vehicle {
    /// Name from the file.
    pub name: String,
    /// Free text from the file.
    pub description: String,
    /// Mass (kg).
    pub mass_kg: f64,
    /// Pitch moment of inertia about the CG (kg m^2).
    pub pitch_inertia_kg_m2: f64,
    /// Centre of gravity.
    pub cg: Point,
    /// Reference geometry.
    pub reference: Reference,
    /// Tilt actuators.
    pub actuators: Vec<TiltActuator>,
    /// Elevators of all surfaces and of the derivative model.
    pub elevators: Vec<Elevator>,
    /// Lifting surfaces in evaluation order (downwash sources first).
    pub surfaces: Vec<Surface>,
    /// Rotor groups.
    pub rotors: Vec<RotorGroup>,
    /// Optional whole-vehicle derivative aerodynamics.
    pub derivatives: Option<DerivativeModel>,
    /// Pitch attitude limits that every trim respects.
    pub attitude: AttitudeLimits,
}

/// What kind of VTOL airframe a vehicle is, from its layout: it sets the default attitude
/// limits and the transition variable.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum VehicleClass {
    /// Tilt-wing or tilt-rotor: at least one tilt actuator.
    Tilt,
    /// Tail-sitter: no tilt actuator, the strongest rotor group thrusts along the body axis
    /// (mounting below 45 deg), so the airframe pitches up to hover.
    TailSitter,
    /// Lift+cruise: no tilt actuator, the strongest rotor group thrusts up.
    LiftCruise,
}

impl VehicleClass {
    /// Default pitch attitude limits (rad) of the class (common practice, no source): a tilt
    /// or lift+cruise vehicle flies near level (-15..20 deg); a tail-sitter pitches through to
    /// 10 deg beyond the attitude that points its strongest rotor group straight up.
    pub fn default_pitch_limits_rad(self, strongest_mounting_rad: f64) -> (f64, f64) {
        match self {
            VehicleClass::Tilt | VehicleClass::LiftCruise => {
                ((-15f64).to_radians(), 20f64.to_radians())
            }
            VehicleClass::TailSitter => (
                (-15f64).to_radians(),
                std::f64::consts::FRAC_PI_2 - strongest_mounting_rad + 10f64.to_radians(),
            ),
        }
    }

    /// Label for reports.
    pub fn label(self) -> &'static str {
        match self {
            VehicleClass::Tilt => "tilt vehicle",
            VehicleClass::TailSitter => "tail-sitter",
            VehicleClass::LiftCruise => "lift+cruise",
        }
    }
}

/// Pitch attitude limits against airspeed: a table of (speed, lowest, highest) rows,
/// interpolated linearly and held beyond its ends.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct AttitudeLimits {
    /// Rows (speed m/s, lowest pitch rad, highest pitch rad), speeds increasing.
    pub rows: Vec<(f64, f64, f64)>,
    /// Whether the limits come from the vehicle file (`false`: the class default).
    pub from_file: bool,
}

impl AttitudeLimits {
    /// Constant limits (rad).
    pub fn constant(lo_rad: f64, hi_rad: f64, from_file: bool) -> AttitudeLimits {
        AttitudeLimits {
            rows: vec![(0.0, lo_rad, hi_rad)],
            from_file,
        }
    }

    /// Lowest and highest pitch attitude (rad) at an airspeed (m/s).
    pub fn at(&self, speed_mps: f64) -> (f64, f64) {
        let r = &self.rows;
        let first = r[0];
        if speed_mps <= first.0 || r.len() == 1 {
            return (first.1, first.2);
        }
        for w in r.windows(2) {
            let (a, b) = (w[0], w[1]);
            if speed_mps <= b.0 {
                let t = (speed_mps - a.0) / (b.0 - a.0);
                return (a.1 + t * (b.1 - a.1), a.2 + t * (b.2 - a.2));
            }
        }
        let last = r[r.len() - 1];
        (last.1, last.2)
    }

    /// The widest range over all speeds (rad).
    pub fn envelope(&self) -> (f64, f64) {
        self.rows
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), r| {
                (l.min(r.1), h.max(r.2))
            })
    }
}

impl Vehicle {
    /// Weight at standard gravity (N).
    pub fn weight_n(&self) -> f64 {
        self.mass_kg * crate::atmosphere::G0_MPS2
    }

    /// Number of control inputs: one thrust per rotor group, each elevator, each tilt actuator.
    pub fn control_count(&self) -> usize {
        self.rotors.len() + self.elevators.len() + self.actuators.len()
    }

    /// Names of the control inputs in the order of [`crate::dynamics::Controls::to_flat`].
    pub fn input_names(&self) -> Vec<String> {
        let mut v = Vec::with_capacity(self.control_count());
        v.extend(self.rotors.iter().map(|r| format!("thrust_{}_n", r.name)));
        v.extend(
            self.elevators
                .iter()
                .map(|e| format!("elevator_{}_rad", e.name)),
        );
        v.extend(
            self.actuators
                .iter()
                .map(|a| format!("tilt_{}_rad", a.name)),
        );
        v
    }

    /// A copy with a scenario's mass case applied: new mass (inertia scaled with it, radius of
    /// gyration kept) and a CG shift (m).
    pub fn with_mass_case(&self, mass_kg: Option<f64>, cg_shift: Point) -> Vehicle {
        let mut v = self.clone();
        if let Some(m) = mass_kg {
            v.pitch_inertia_kg_m2 *= m / v.mass_kg;
            v.mass_kg = m;
        }
        v.cg.x_m += cg_shift.x_m;
        v.cg.z_m += cg_shift.z_m;
        v
    }

    /// Total tilt-free thrust axis angle of a rotor group for the given actuator angles (rad).
    pub fn rotor_axis_rad(&self, group: usize, tilt_rad: &[f64]) -> f64 {
        let r = &self.rotors[group];
        r.mounting_rad + r.actuator.map_or(0.0, |a| tilt_rad[a])
    }

    /// Whether the vehicle has a tilt actuator (transition variable is tilt) or not (pitch).
    pub fn has_tilt(&self) -> bool {
        !self.actuators.is_empty()
    }

    /// The vehicle's class from its layout ([`VehicleClass`]).
    pub fn class(&self) -> VehicleClass {
        classify_layout(!self.actuators.is_empty(), &self.rotors)
    }

    /// Lowest and highest pitch attitude (rad) allowed at an airspeed (m/s).
    pub fn pitch_limits_rad(&self, speed_mps: f64) -> (f64, f64) {
        self.attitude.at(speed_mps)
    }
}

/// The rotor group with the most total thrust.
pub fn strongest_rotor(rotors: &[RotorGroup]) -> Option<&RotorGroup> {
    rotors.iter().max_by(|a, b| {
        (a.thrust_max_n * a.count as f64).total_cmp(&(b.thrust_max_n * b.count as f64))
    })
}

/// Class of a layout: tilt when it has an actuator; otherwise by the strongest group's axis.
pub fn classify_layout(has_actuator: bool, rotors: &[RotorGroup]) -> VehicleClass {
    if has_actuator {
        return VehicleClass::Tilt;
    }
    match strongest_rotor(rotors) {
        Some(r) if r.mounting_rad.abs() < std::f64::consts::FRAC_PI_4 => VehicleClass::TailSitter,
        _ => VehicleClass::LiftCruise,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rotation_nose_up_turns_forward_into_up() {
        let p = Point { x_m: 1.0, z_m: 0.0 }.rotated_about(Point::default(), 90f64.to_radians());
        assert!(p.x_m.abs() < 1e-12);
        assert!((p.z_m + 1.0).abs() < 1e-12);
    }
}
