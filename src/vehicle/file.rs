//! The vehicle file (TOML): strict serde structs that mirror the file, and the build step that
//! validates them into a [`Vehicle`].
//!
//! Keys carry their unit (`mass_kg`, `area_m2`, `incidence_deg`); unknown keys are errors.
//! A tabulated polar is a CSV beside the vehicle file with columns `alpha_deg, cl, cd, cm`.

use std::collections::HashMap;
use std::path::Path;

use serde::Deserialize;

use super::{
    AttitudeLimits, DerivativeModel, Downwash, Elevator, Point, Reference, RotorGroup,
    SlipstreamLink, Surface, SurfaceRole, TiltActuator, Vehicle,
};
use crate::aero::{
    helmbold_lift_slope, lifting_line_lift_slope, viterna_cd_max, LiftSlopeMethod, ParametricPolar,
    ParametricSpec, Polar, TablePolar,
};
use crate::input::{InputError, Invalid, KeyPath};
use crate::limits::{self, Bound};
use crate::rotor::PowerModel;

/// Top level of a vehicle file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VehicleFile {
    /// Vehicle name.
    pub name: String,
    /// Free text.
    #[serde(default)]
    pub description: String,
    /// Mass properties.
    pub mass: MassFile,
    /// Reference geometry; defaults to the first wing (or the first surface).
    pub reference: Option<ReferenceFile>,
    /// Tilt actuators.
    #[serde(default)]
    pub actuator: Vec<ActuatorFile>,
    /// Lifting surfaces.
    #[serde(default)]
    pub surface: Vec<SurfaceFile>,
    /// Rotor groups.
    #[serde(default)]
    pub rotor: Vec<RotorFile>,
    /// Whole-vehicle stability derivatives.
    pub derivatives: Option<DerivativesFile>,
    /// Pitch attitude limits; the vehicle class default when absent.
    pub limits: Option<LimitsFile>,
}

/// `[limits]`: pitch attitude limits, constant or against airspeed (not both).
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LimitsFile {
    /// Lowest pitch attitude (deg).
    pub pitch_min_deg: Option<f64>,
    /// Highest pitch attitude (deg).
    pub pitch_max_deg: Option<f64>,
    /// Limits against airspeed, speeds increasing.
    #[serde(default)]
    pub pitch_by_speed: Vec<PitchRowFile>,
}

/// `[[limits.pitch_by_speed]]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PitchRowFile {
    /// Airspeed (m/s).
    pub speed_mps: f64,
    /// Lowest pitch attitude (deg).
    pub min_deg: f64,
    /// Highest pitch attitude (deg).
    pub max_deg: f64,
}

/// `[mass]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MassFile {
    /// Mass (kg).
    pub mass_kg: f64,
    /// Pitch inertia about the CG (kg m^2).
    pub pitch_inertia_kg_m2: f64,
    /// CG, body x (m).
    pub cg_x_m: f64,
    /// CG, body z (m).
    #[serde(default)]
    pub cg_z_m: f64,
}

/// `[reference]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ReferenceFile {
    /// Area (m^2).
    pub area_m2: f64,
    /// Chord (m).
    pub chord_m: f64,
    /// Span (m).
    pub span_m: f64,
    /// Leading edge of the reference chord, body x (m).
    pub leading_edge_x_m: f64,
}

/// `[[actuator]]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ActuatorFile {
    /// Name.
    pub name: String,
    /// Lower limit (deg).
    pub min_deg: f64,
    /// Upper limit (deg).
    pub max_deg: f64,
    /// Rate limit (deg/s).
    pub rate_deg_s: f64,
    /// Pivot, body x (m).
    pub pivot_x_m: f64,
    /// Pivot, body z (m).
    #[serde(default)]
    pub pivot_z_m: f64,
}

/// `[[surface]]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SurfaceFile {
    /// Name.
    pub name: String,
    /// wing, tail or body.
    pub role: SurfaceRole,
    /// Area (m^2).
    pub area_m2: f64,
    /// Span (m).
    pub span_m: f64,
    /// Mean chord (m).
    pub chord_m: f64,
    /// Quarter-chord point, body x (m).
    pub x_m: f64,
    /// Quarter-chord point, body z (m).
    #[serde(default)]
    pub z_m: f64,
    /// Incidence (deg).
    #[serde(default)]
    pub incidence_deg: f64,
    /// Name of the tilt actuator it rides on.
    pub tilt_actuator: Option<String>,
    /// Upstream surface whose downwash it sees.
    pub downwash_from: Option<String>,
    /// d eps / d alpha (-).
    pub downwash_gradient: Option<f64>,
    /// Dynamic-pressure ratio of the clean part (tail efficiency, default 1).
    pub dynamic_pressure_ratio: Option<f64>,
    /// Elevator.
    pub elevator: Option<ElevatorFile>,
    /// Polar.
    pub polar: PolarFile,
    /// Slipstream immersion.
    #[serde(default)]
    pub slipstream: Vec<SlipstreamFile>,
}

/// `[surface.elevator]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ElevatorFile {
    /// Name.
    pub name: String,
    /// Trailing-edge-up limit (deg, negative).
    pub min_deg: f64,
    /// Trailing-edge-down limit (deg).
    pub max_deg: f64,
    /// Angle-of-attack change per unit deflection (tau); surfaces only.
    pub effectiveness: Option<f64>,
    /// Quarter-chord moment coefficient change per radian of deflection (thin-airfoil flap
    /// theory gives about -0.65 for a 25 % chord flap); surfaces only, default 0.
    pub moment_per_rad: Option<f64>,
}

/// `[surface.polar]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields, tag = "kind", rename_all = "kebab-case")]
pub enum PolarFile {
    /// Attached flow blended into flat-plate flow.
    Parametric {
        /// Section lift slope (per rad); 2 pi by thin-airfoil theory.
        section_lift_slope_per_rad: Option<f64>,
        /// helmbold (default) or lifting-line.
        lift_slope_method: Option<LiftSlopeMethod>,
        /// Span efficiency for lifting line and induced drag (default 0.85).
        span_efficiency: Option<f64>,
        /// Lift at zero alpha.
        #[serde(default)]
        cl0: f64,
        /// Positive stall angle (deg).
        stall_pos_deg: f64,
        /// Negative stall angle (deg).
        stall_neg_deg: f64,
        /// Zero-lift drag.
        cd0: f64,
        /// Pitching moment about the quarter chord in attached flow.
        #[serde(default)]
        cm0: f64,
        /// Drag normal to the flow (default Viterna 1.11 + 0.018 AR).
        cd_max: Option<f64>,
        /// Lift scale in reversed flow (default 0.7, common practice).
        reverse_lift_factor: Option<f64>,
        /// Width of the stall blend (deg, default 8).
        stall_blend_deg: Option<f64>,
    },
    /// A CSV beside the vehicle file.
    Table {
        /// Path relative to the vehicle file.
        file: String,
    },
}

/// `[[surface.slipstream]]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SlipstreamFile {
    /// Rotor group name.
    pub rotor: String,
    /// Immersed area fraction.
    pub fraction: f64,
    /// Wake velocity / induced velocity (1..2).
    pub wake_factor: f64,
}

/// `[[rotor]]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RotorFile {
    /// Name.
    pub name: String,
    /// Number of identical rotors.
    pub count: u32,
    /// Hub, body x (m).
    pub x_m: f64,
    /// Hub, body z (m).
    #[serde(default)]
    pub z_m: f64,
    /// Radius (m).
    pub radius_m: f64,
    /// Thrust axis above body x (deg): 0 pusher/tractor, 90 lift rotor.
    pub mounting_deg: f64,
    /// Tilt actuator it rides on.
    pub tilt_actuator: Option<String>,
    /// Thrust cap per rotor (N).
    pub thrust_max_n: f64,
    /// Shaft power available per rotor (W).
    pub power_max_w: f64,
    /// Figure of merit (0..1).
    pub figure_of_merit: Option<f64>,
    /// Induced power factor kappa (>= 1).
    pub induced_power_factor: Option<f64>,
    /// Thrust lag time constant (s).
    pub thrust_lag_s: f64,
    /// Scale on the momentum (ram) drag in edgewise flow (default 1; 0 leaves it out).
    pub momentum_drag_factor: Option<f64>,
}

/// `[derivatives]`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(missing_docs)]
pub struct DerivativesFile {
    pub area_m2: f64,
    pub chord_m: f64,
    pub x_m: Option<f64>,
    pub z_m: Option<f64>,
    pub cl0: f64,
    pub cl_alpha_per_rad: f64,
    #[serde(default)]
    pub cl_q_per_rad: f64,
    #[serde(default)]
    pub cl_alphadot_per_rad: f64,
    #[serde(default)]
    pub cl_elevator_per_rad: f64,
    pub cd0: f64,
    #[serde(default)]
    pub cd_alpha_per_rad: f64,
    #[serde(default)]
    pub cd_k: f64,
    #[serde(default)]
    pub cm0: f64,
    pub cm_alpha_per_rad: f64,
    #[serde(default)]
    pub cm_q_per_rad: f64,
    #[serde(default)]
    pub cm_alphadot_per_rad: f64,
    #[serde(default)]
    pub cm_elevator_per_rad: f64,
    pub stall_pos_deg: f64,
    pub stall_neg_deg: f64,
    pub elevator: Option<ElevatorFile>,
}

/// Read, parse and validate a vehicle file.
pub fn load_vehicle(path: &Path) -> Result<Vehicle, InputError> {
    let text = crate::input::read_text(
        path,
        "vehicle file",
        "check the path; demo vehicles are in vehicles/",
    )?;
    parse_vehicle(&text, path)
}

/// Parse and validate vehicle text; `path` names the file in errors and anchors table CSVs.
pub fn parse_vehicle(text: &str, path: &Path) -> Result<Vehicle, InputError> {
    let file: VehicleFile =
        toml::from_str(text).map_err(|e| InputError::from_toml(path, text, &e))?;
    let dir = path.parent().unwrap_or(Path::new("."));
    build(file, dir).map_err(|e| match e {
        BuildError::Invalid(inv) => InputError::from_invalid(path, text, inv),
        BuildError::Table(err) => err,
    })
}

enum BuildError {
    Invalid(Invalid),
    Table(InputError),
}

impl From<Invalid> for BuildError {
    fn from(i: Invalid) -> Self {
        BuildError::Invalid(i)
    }
}

fn bad(path: KeyPath, msg: impl Into<String>, hint: impl Into<String>) -> BuildError {
    BuildError::Invalid(Invalid::new(path, msg, hint))
}

/// Checks that a value is finite and inside [lo, hi] (either bound optional, strict or not).
struct Check<'a> {
    path: &'a KeyPath,
}

impl Check<'_> {
    fn finite(&self, key: &str, v: f64) -> Result<f64, BuildError> {
        if v.is_finite() {
            Ok(v)
        } else {
            Err(bad(
                self.path.key(key),
                format!("value {v} is not a finite number"),
                "write a plain decimal number",
            ))
        }
    }
    // Kept for keys without a sanity bound in `crate::limits`.
    #[allow(dead_code)]
    fn positive(&self, key: &str, v: f64) -> Result<f64, BuildError> {
        let v = self.finite(key, v)?;
        if v > 0.0 {
            Ok(v)
        } else {
            Err(bad(
                self.path.key(key),
                format!("must be greater than zero, got {v}"),
                "give a positive value in the unit the key names",
            ))
        }
    }
    fn range(&self, key: &str, v: f64, lo: f64, hi: f64, hint: &str) -> Result<f64, BuildError> {
        let v = self.finite(key, v)?;
        if (lo..=hi).contains(&v) {
            Ok(v)
        } else {
            Err(bad(
                self.path.key(key),
                format!("must lie in {lo}..{hi}, got {v}"),
                hint,
            ))
        }
    }
    /// Finite and inside one of the sanity bounds of [`crate::limits`].
    fn bounded(&self, key: &str, v: f64, b: Bound) -> Result<f64, BuildError> {
        let v = self.finite(key, v)?;
        if b.contains(v) {
            Ok(v)
        } else {
            Err(bad(
                self.path.key(key),
                format!("{} is outside {}", b.value(v), b.text()),
                format!(
                    "give a value within {} (our sanity bound, see README.md)",
                    b.text()
                ),
            ))
        }
    }
    fn limits(&self, min_key: &str, min: f64, max_key: &str, max: f64) -> Result<(), BuildError> {
        self.finite(min_key, min)?;
        self.finite(max_key, max)?;
        if min > max {
            Err(bad(
                self.path.key(min_key),
                format!("{min_key} = {min} is above {max_key} = {max}"),
                format!("swap the values or lower {min_key}"),
            ))
        } else {
            Ok(())
        }
    }
}

fn unique_names<'a>(
    what: &str,
    names: impl Iterator<Item = &'a str>,
) -> Result<HashMap<&'a str, usize>, BuildError> {
    let mut map = HashMap::new();
    for (i, n) in names.enumerate() {
        let p = KeyPath::root().key(what).index(i).key("name");
        if n.trim().is_empty() {
            return Err(bad(p, "name is empty", "give every component a short name"));
        }
        if let Some(m) = limits::name_problem(n) {
            return Err(bad(p, m, limits::NAME_HINT));
        }
        if map.insert(n, i).is_some() {
            return Err(bad(
                p,
                format!("a second {what} is named '{n}'"),
                "names must be unique within their kind",
            ));
        }
    }
    Ok(map)
}

fn lookup(
    map: &HashMap<&str, usize>,
    name: &str,
    kind: &str,
    path: KeyPath,
) -> Result<usize, BuildError> {
    map.get(name).copied().ok_or_else(|| {
        let mut known: Vec<&&str> = map.keys().collect();
        known.sort();
        let list = known.iter().map(|s| format!("'{s}'")).collect::<Vec<_>>();
        bad(
            path,
            format!("no {kind} is named '{name}'"),
            if list.is_empty() {
                format!("the file defines no {kind}; add one or remove this link")
            } else {
                format!("use one of {}", list.join(", "))
            },
        )
    })
}

fn elevator(
    e: &ElevatorFile,
    on_surface: bool,
    path: &KeyPath,
    names: &mut HashMap<String, usize>,
    out: &mut Vec<Elevator>,
) -> Result<usize, BuildError> {
    let c = Check { path };
    c.limits("min_deg", e.min_deg, "max_deg", e.max_deg)?;
    c.range(
        "min_deg",
        e.min_deg,
        -90.0,
        90.0,
        "elevator limits are angles in degrees, within -90..90",
    )?;
    c.range(
        "max_deg",
        e.max_deg,
        -90.0,
        90.0,
        "elevator limits are angles in degrees, within -90..90",
    )?;
    let (tau, cm) = if on_surface {
        let Some(tau) = e.effectiveness else {
            return Err(bad(
                path.key("effectiveness"),
                "missing key effectiveness",
                "give tau, the angle-of-attack change per unit deflection, typically 0.3..0.8",
            ));
        };
        let tau = c.range(
            "effectiveness",
            tau,
            0.0,
            1.5,
            "effectiveness tau is the angle-of-attack change per deflection, typically 0.3..0.8",
        )?;
        let cm = c.range(
            "moment_per_rad",
            e.moment_per_rad.unwrap_or(0.0),
            -2.0,
            0.0,
            "a trailing-edge-down deflection gives a nose-down moment: -0.3..-0.8 per rad",
        )?;
        (tau, cm)
    } else {
        if e.effectiveness.is_some() || e.moment_per_rad.is_some() {
            return Err(bad(
                path.key("effectiveness"),
                "the derivative model's elevator takes no effectiveness or moment_per_rad",
                "give its effect as cl_elevator_per_rad and cm_elevator_per_rad in [derivatives]",
            ));
        }
        (0.0, 0.0)
    };
    if let Some(m) = limits::name_problem(&e.name) {
        return Err(bad(path.key("name"), m, limits::NAME_HINT));
    }
    if names.insert(e.name.clone(), out.len()).is_some() {
        return Err(bad(
            path.key("name"),
            format!("a second elevator is named '{}'", e.name),
            "elevator names must be unique",
        ));
    }
    out.push(Elevator {
        name: e.name.clone(),
        min_rad: e.min_deg.to_radians(),
        max_rad: e.max_deg.to_radians(),
        effectiveness: tau,
        moment_per_rad: cm,
    });
    Ok(out.len() - 1)
}

fn build(f: VehicleFile, dir: &Path) -> Result<Vehicle, BuildError> {
    let root = KeyPath::root();
    if let Some(m) = limits::name_problem(&f.name) {
        return Err(bad(root.key("name"), m, limits::NAME_HINT));
    }
    let mp = root.key("mass");
    let c = Check { path: &mp };
    let mass_kg = c.bounded("mass_kg", f.mass.mass_kg, limits::MASS_KG)?;
    let inertia = c.bounded(
        "pitch_inertia_kg_m2",
        f.mass.pitch_inertia_kg_m2,
        limits::PITCH_INERTIA_KG_M2,
    )?;
    let cg = Point {
        x_m: c.bounded("cg_x_m", f.mass.cg_x_m, limits::POSITION_M)?,
        z_m: c.bounded("cg_z_m", f.mass.cg_z_m, limits::POSITION_M)?,
    };
    if f.surface.is_empty() && f.derivatives.is_none() {
        return Err(bad(
            root.key("surface"),
            "the vehicle has no lifting surface and no derivative model",
            "add at least one [[surface]] (the body itself counts) or a [derivatives] table",
        ));
    }
    if f.rotor.is_empty() {
        return Err(bad(
            root.key("rotor"),
            "the vehicle has no rotor or propeller",
            "add at least one [[rotor]] group; a glider cannot be trimmed in level flight",
        ));
    }

    // Actuators.
    let act_names = unique_names("actuator", f.actuator.iter().map(|a| a.name.as_str()))?;
    let mut actuators = Vec::new();
    for (i, a) in f.actuator.iter().enumerate() {
        let p = root.key("actuator").index(i);
        let c = Check { path: &p };
        c.limits("min_deg", a.min_deg, "max_deg", a.max_deg)?;
        let hint = "tilt is 0 deg in cruise and 90 deg in hover; keep limits within -30..120";
        c.range("min_deg", a.min_deg, -30.0, 120.0, hint)?;
        c.range("max_deg", a.max_deg, -30.0, 120.0, hint)?;
        c.bounded("rate_deg_s", a.rate_deg_s, limits::RATE_DEG_S)?;
        actuators.push(TiltActuator {
            name: a.name.clone(),
            min_rad: a.min_deg.to_radians(),
            max_rad: a.max_deg.to_radians(),
            rate_rad_s: a.rate_deg_s.to_radians(),
            pivot: Point {
                x_m: c.bounded("pivot_x_m", a.pivot_x_m, limits::POSITION_M)?,
                z_m: c.bounded("pivot_z_m", a.pivot_z_m, limits::POSITION_M)?,
            },
        });
    }

    // Rotors.
    let rotor_names = unique_names("rotor", f.rotor.iter().map(|r| r.name.as_str()))?;
    let mut rotors = Vec::new();
    for (i, r) in f.rotor.iter().enumerate() {
        let p = root.key("rotor").index(i);
        let c = Check { path: &p };
        if r.count == 0 || r.count > limits::MAX_ROTOR_COUNT {
            return Err(bad(
                p.key("count"),
                format!(
                    "count must lie in 1..{}, got {}",
                    limits::MAX_ROTOR_COUNT,
                    r.count
                ),
                "give the number of identical rotors in the group",
            ));
        }
        let power_model = match (r.figure_of_merit, r.induced_power_factor) {
            (Some(fm), None) => PowerModel::FigureOfMerit(c.range(
                "figure_of_merit",
                fm,
                0.05,
                1.0,
                "figure of merit is ideal over actual hover power: 0.5..0.8 for small rotors",
            )?),
            (None, Some(k)) => PowerModel::InducedFactor(c.range(
                "induced_power_factor",
                k,
                1.0,
                3.0,
                "induced power factor kappa is 1.1..1.2 for typical rotors",
            )?),
            _ => {
                return Err(bad(
                    p.key("figure_of_merit"),
                    "give exactly one of figure_of_merit and induced_power_factor",
                    "figure_of_merit = 0.65 is typical for a small rotor",
                ))
            }
        };
        let actuator = match &r.tilt_actuator {
            Some(n) => Some(lookup(&act_names, n, "actuator", p.key("tilt_actuator"))?),
            None => None,
        };
        c.range(
            "thrust_lag_s",
            r.thrust_lag_s,
            0.0,
            10.0,
            "thrust lag is a time constant in seconds, 0.02..0.3 for electric rotors",
        )?;
        rotors.push(RotorGroup {
            name: r.name.clone(),
            count: r.count,
            radius_m: c.bounded("radius_m", r.radius_m, limits::LENGTH_M)?,
            position: Point {
                x_m: c.bounded("x_m", r.x_m, limits::POSITION_M)?,
                z_m: c.bounded("z_m", r.z_m, limits::POSITION_M)?,
            },
            mounting_rad: c
                .range(
                    "mounting_deg",
                    r.mounting_deg,
                    -180.0,
                    180.0,
                    "0 deg thrusts forward, 90 deg thrusts up",
                )?
                .to_radians(),
            actuator,
            thrust_max_n: c.bounded("thrust_max_n", r.thrust_max_n, limits::THRUST_N)?,
            power_max_w: c.bounded("power_max_w", r.power_max_w, limits::POWER_W)?,
            power_model,
            thrust_lag_s: r.thrust_lag_s,
            momentum_drag_factor: c.range(
                "momentum_drag_factor",
                r.momentum_drag_factor.unwrap_or(1.0),
                0.0,
                2.0,
                "1 keeps the momentum-theory value, 0 leaves it out (thrust data that include it)",
            )?,
        });
    }

    // Surfaces.
    let surf_names = unique_names("surface", f.surface.iter().map(|s| s.name.as_str()))?;
    let mut elevators = Vec::new();
    let mut elev_names = HashMap::new();
    let mut surfaces = Vec::new();
    for (i, s) in f.surface.iter().enumerate() {
        let p = root.key("surface").index(i);
        let c = Check { path: &p };
        let area = c.bounded("area_m2", s.area_m2, limits::AREA_M2)?;
        let span = c.bounded("span_m", s.span_m, limits::LENGTH_M)?;
        let chord = c.bounded("chord_m", s.chord_m, limits::LENGTH_M)?;
        let ar = span * span / area;
        if !(0.05..=60.0).contains(&ar) {
            return Err(bad(
                p.key("span_m"),
                format!("aspect ratio span^2/area = {ar:.3} is not physical"),
                "check span_m and area_m2 (aspect ratio 0.05..60)",
            ));
        }
        let actuator = match &s.tilt_actuator {
            Some(n) => Some(lookup(&act_names, n, "actuator", p.key("tilt_actuator"))?),
            None => None,
        };
        let downwash = match (&s.downwash_from, s.downwash_gradient) {
            (Some(n), g) => {
                let src = lookup(&surf_names, n, "surface", p.key("downwash_from"))?;
                if src >= i {
                    return Err(bad(
                        p.key("downwash_from"),
                        format!("downwash source '{n}' is not listed before this surface"),
                        "list the upstream surface first in the file",
                    ));
                }
                let g = c.range(
                    "downwash_gradient",
                    g.unwrap_or(0.0),
                    0.0,
                    1.0,
                    "d eps/d alpha is about 2 a_w / (pi AR_w), typically 0.2..0.5",
                )?;
                Some(Downwash {
                    source: src,
                    gradient: g,
                })
            }
            (None, Some(_)) => {
                return Err(bad(
                    p.key("downwash_gradient"),
                    "downwash_gradient is given without downwash_from",
                    "name the upstream surface with downwash_from",
                ))
            }
            (None, None) => None,
        };
        let elevator = match &s.elevator {
            Some(e) => Some(elevator(
                e,
                true,
                &p.key("elevator"),
                &mut elev_names,
                &mut elevators,
            )?),
            None => None,
        };
        let mut slipstream = Vec::new();
        let mut total = 0.0;
        for (j, l) in s.slipstream.iter().enumerate() {
            let lp = p.key("slipstream").index(j);
            let lc = Check { path: &lp };
            let rotor = lookup(&rotor_names, &l.rotor, "rotor", lp.key("rotor"))?;
            let fraction = lc.range(
                "fraction",
                l.fraction,
                0.0,
                1.0,
                "fraction is the share of the surface area inside the wake, 0..1",
            )?;
            let wake_factor = lc.range(
                "wake_factor",
                l.wake_factor,
                1.0,
                2.0,
                "the wake reaches 1x the induced velocity at the disc and 2x far downstream",
            )?;
            total += fraction;
            slipstream.push(SlipstreamLink {
                rotor,
                fraction,
                wake_factor,
            });
        }
        if total > 1.0 + 1e-9 {
            return Err(bad(
                p.key("slipstream"),
                format!("immersed fractions add up to {total:.3}, more than the whole surface"),
                "reduce the fractions so that they sum to at most 1",
            ));
        }
        let polar = build_polar(&s.polar, &p.key("polar"), ar, dir)?;
        let dynamic_pressure_ratio = c.range(
            "dynamic_pressure_ratio",
            s.dynamic_pressure_ratio.unwrap_or(1.0),
            0.1,
            1.5,
            "tail efficiency eta is 0.8..1.0",
        )?;
        surfaces.push(Surface {
            name: s.name.clone(),
            role: s.role,
            area_m2: area,
            span_m: span,
            chord_m: chord,
            position: Point {
                x_m: c.bounded("x_m", s.x_m, limits::POSITION_M)?,
                z_m: c.bounded("z_m", s.z_m, limits::POSITION_M)?,
            },
            incidence_rad: c
                .range(
                    "incidence_deg",
                    s.incidence_deg,
                    -90.0,
                    90.0,
                    "incidence is the chord angle above body x in degrees",
                )?
                .to_radians(),
            actuator,
            elevator,
            downwash,
            slipstream,
            polar,
            dynamic_pressure_ratio,
        });
    }

    let derivatives = match &f.derivatives {
        Some(d) => Some(build_derivatives(d, cg, &mut elev_names, &mut elevators)?),
        None => None,
    };

    let reference = match &f.reference {
        Some(r) => {
            let p = root.key("reference");
            let c = Check { path: &p };
            Reference {
                area_m2: c.bounded("area_m2", r.area_m2, limits::AREA_M2)?,
                chord_m: c.bounded("chord_m", r.chord_m, limits::LENGTH_M)?,
                span_m: c.bounded("span_m", r.span_m, limits::LENGTH_M)?,
                leading_edge_x_m: c.bounded(
                    "leading_edge_x_m",
                    r.leading_edge_x_m,
                    limits::POSITION_M,
                )?,
            }
        }
        None => default_reference(&surfaces, derivatives.as_ref(), cg),
    };

    let attitude = build_limits(f.limits.as_ref(), !actuators.is_empty(), &rotors)?;

    Ok(Vehicle {
        attitude,
        name: f.name,
        description: f.description,
        mass_kg,
        pitch_inertia_kg_m2: inertia,
        cg,
        reference,
        actuators,
        elevators,
        surfaces,
        rotors,
        derivatives,
    })
}

fn build_limits(
    l: Option<&LimitsFile>,
    has_actuator: bool,
    rotors: &[RotorGroup],
) -> Result<AttitudeLimits, BuildError> {
    let p = KeyPath::root().key("limits");
    let hint = "pitch attitude is nose-up positive in degrees; keep limits within -90..135";
    let Some(l) = l else {
        let class = super::classify_layout(has_actuator, rotors);
        let mounting = super::strongest_rotor(rotors).map_or(0.0, |r| r.mounting_rad);
        let (lo, hi) = class.default_pitch_limits_rad(mounting);
        return Ok(AttitudeLimits::constant(lo, hi, false));
    };
    let c = Check { path: &p };
    match (
        l.pitch_min_deg,
        l.pitch_max_deg,
        l.pitch_by_speed.is_empty(),
    ) {
        (Some(lo), Some(hi), true) => {
            c.limits("pitch_min_deg", lo, "pitch_max_deg", hi)?;
            c.range("pitch_min_deg", lo, -90.0, 135.0, hint)?;
            c.range("pitch_max_deg", hi, -90.0, 135.0, hint)?;
            Ok(AttitudeLimits::constant(
                lo.to_radians(),
                hi.to_radians(),
                true,
            ))
        }
        (None, None, false) => {
            let mut rows = Vec::with_capacity(l.pitch_by_speed.len());
            for (i, r) in l.pitch_by_speed.iter().enumerate() {
                let rp = p.key("pitch_by_speed").index(i);
                let c = Check { path: &rp };
                let sp = c.range(
                    "speed_mps",
                    r.speed_mps,
                    0.0,
                    300.0,
                    "airspeed of the row in m/s, rows in increasing order",
                )?;
                if let Some(&(prev, _, _)) = rows.last() {
                    if sp <= prev {
                        return Err(bad(
                            rp.key("speed_mps"),
                            format!("speed {sp} m/s does not increase on the row before"),
                            "list the rows in increasing airspeed",
                        ));
                    }
                }
                c.limits("min_deg", r.min_deg, "max_deg", r.max_deg)?;
                c.range("min_deg", r.min_deg, -90.0, 135.0, hint)?;
                c.range("max_deg", r.max_deg, -90.0, 135.0, hint)?;
                rows.push((sp, r.min_deg.to_radians(), r.max_deg.to_radians()));
            }
            Ok(AttitudeLimits {
                rows,
                from_file: true,
            })
        }
        (_, _, true) => Err(bad(
            p.key(if l.pitch_min_deg.is_none() {
                "pitch_min_deg"
            } else {
                "pitch_max_deg"
            }),
            "give both pitch_min_deg and pitch_max_deg",
            "or list [[limits.pitch_by_speed]] rows with speed_mps, min_deg and max_deg",
        )),
        _ => Err(bad(
            p.key("pitch_by_speed"),
            "give either constant limits or [[limits.pitch_by_speed]] rows, not both",
            "remove pitch_min_deg and pitch_max_deg, or the rows",
        )),
    }
}

fn default_reference(surfaces: &[Surface], d: Option<&DerivativeModel>, cg: Point) -> Reference {
    if let Some(d) = d {
        return Reference {
            area_m2: d.area_m2,
            chord_m: d.chord_m,
            span_m: d.area_m2 / d.chord_m,
            leading_edge_x_m: cg.x_m + 0.25 * d.chord_m,
        };
    }
    let s = surfaces
        .iter()
        .find(|s| s.role == SurfaceRole::Wing)
        .unwrap_or(&surfaces[0]);
    Reference {
        area_m2: s.area_m2,
        chord_m: s.chord_m,
        span_m: s.span_m,
        leading_edge_x_m: s.position.x_m + 0.25 * s.chord_m,
    }
}

fn build_derivatives(
    d: &DerivativesFile,
    cg: Point,
    elev_names: &mut HashMap<String, usize>,
    elevators: &mut Vec<Elevator>,
) -> Result<DerivativeModel, BuildError> {
    let p = KeyPath::root().key("derivatives");
    let c = Check { path: &p };
    for (k, v) in [
        ("cl0", d.cl0),
        ("cl_alpha_per_rad", d.cl_alpha_per_rad),
        ("cl_q_per_rad", d.cl_q_per_rad),
        ("cl_alphadot_per_rad", d.cl_alphadot_per_rad),
        ("cl_elevator_per_rad", d.cl_elevator_per_rad),
        ("cd_alpha_per_rad", d.cd_alpha_per_rad),
        ("cd_k", d.cd_k),
        ("cm0", d.cm0),
        ("cm_alpha_per_rad", d.cm_alpha_per_rad),
        ("cm_q_per_rad", d.cm_q_per_rad),
        ("cm_alphadot_per_rad", d.cm_alphadot_per_rad),
        ("cm_elevator_per_rad", d.cm_elevator_per_rad),
    ] {
        c.bounded(k, v, limits::DERIVATIVE_PER_RAD)?;
    }
    let stall_hint = "stall angles are in degrees, 0..90 (negative stall as a negative number)";
    let sp = c.range("stall_pos_deg", d.stall_pos_deg, 0.0, 90.0, stall_hint)?;
    let sn = c.range("stall_neg_deg", d.stall_neg_deg, -90.0, 0.0, stall_hint)?;
    if sp == 0.0 || sn == 0.0 {
        return Err(bad(
            p.key("stall_pos_deg"),
            "stall angles must not be zero",
            stall_hint,
        ));
    }
    let elevator = match &d.elevator {
        Some(e) => Some(elevator(
            e,
            false,
            &p.key("elevator"),
            elev_names,
            elevators,
        )?),
        None => None,
    };
    Ok(DerivativeModel {
        area_m2: c.bounded("area_m2", d.area_m2, limits::AREA_M2)?,
        chord_m: c.bounded("chord_m", d.chord_m, limits::LENGTH_M)?,
        position: Point {
            x_m: c.bounded("x_m", d.x_m.unwrap_or(cg.x_m), limits::POSITION_M)?,
            z_m: c.bounded("z_m", d.z_m.unwrap_or(cg.z_m), limits::POSITION_M)?,
        },
        cl0: d.cl0,
        cl_alpha: d.cl_alpha_per_rad,
        cl_q: d.cl_q_per_rad,
        cl_alphadot: d.cl_alphadot_per_rad,
        cl_elevator: d.cl_elevator_per_rad,
        cd0: c.range(
            "cd0",
            d.cd0,
            0.0,
            2.0,
            "zero-lift drag coefficient, 0.01..0.1",
        )?,
        cd_alpha: d.cd_alpha_per_rad,
        cd_k: d.cd_k,
        cm0: d.cm0,
        cm_alpha: d.cm_alpha_per_rad,
        cm_q: d.cm_q_per_rad,
        cm_alphadot: d.cm_alphadot_per_rad,
        cm_elevator: d.cm_elevator_per_rad,
        alpha_stall_pos_rad: sp.to_radians(),
        alpha_stall_neg_rad: sn.to_radians(),
        elevator,
    })
}

fn build_polar(
    pf: &PolarFile,
    p: &KeyPath,
    aspect_ratio: f64,
    dir: &Path,
) -> Result<Polar, BuildError> {
    let c = Check { path: p };
    match pf {
        PolarFile::Parametric {
            section_lift_slope_per_rad,
            lift_slope_method,
            span_efficiency,
            cl0,
            stall_pos_deg,
            stall_neg_deg,
            cd0,
            cm0,
            cd_max,
            reverse_lift_factor,
            stall_blend_deg,
        } => {
            let a0 = c.range(
                "section_lift_slope_per_rad",
                section_lift_slope_per_rad.unwrap_or(2.0 * std::f64::consts::PI),
                0.5,
                8.0,
                "a section lift slope is near 2 pi = 6.28 per rad (0.11 per deg)",
            )?;
            let e = c.range(
                "span_efficiency",
                span_efficiency.unwrap_or(0.85),
                0.3,
                1.0,
                "span efficiency is 0.7..0.95",
            )?;
            let stall_hint = "stall angles are in degrees, 0..90 (negative stall as a negative number, e.g. -14)";
            let sp = c.range("stall_pos_deg", *stall_pos_deg, 0.0, 90.0, stall_hint)?;
            let sn = c.range("stall_neg_deg", *stall_neg_deg, -90.0, 0.0, stall_hint)?;
            if sp < 1.0 || sn > -1.0 {
                return Err(bad(
                    p.key(if sp < 1.0 {
                        "stall_pos_deg"
                    } else {
                        "stall_neg_deg"
                    }),
                    "stall angle closer than 1 deg to zero",
                    stall_hint,
                ));
            }
            let a = match lift_slope_method.unwrap_or(LiftSlopeMethod::Helmbold) {
                LiftSlopeMethod::Helmbold => helmbold_lift_slope(a0, aspect_ratio),
                LiftSlopeMethod::LiftingLine => lifting_line_lift_slope(a0, aspect_ratio, e),
            };
            let spec = ParametricSpec {
                lift_slope_per_rad: a,
                cl0: c.range("cl0", *cl0, -1.5, 1.5, "lift at zero angle of attack, 0 for a symmetric section")?,
                alpha_stall_pos_rad: sp.to_radians(),
                alpha_stall_neg_rad: sn.to_radians(),
                cd0: c.range("cd0", *cd0, 0.0, 1.0, "zero-lift drag, 0.006..0.05")?,
                induced_drag_factor: 1.0 / (std::f64::consts::PI * e * aspect_ratio),
                cm0: c.range("cm0", *cm0, -0.5, 0.5, "moment about the quarter chord, 0 for symmetric")?,
                cd_max: c.range(
                    "cd_max",
                    cd_max.unwrap_or_else(|| viterna_cd_max(aspect_ratio)),
                    0.5,
                    2.5,
                    "drag normal to the flow: 1.17 for a square plate, 2.0 for a long one (Hoerner)",
                )?,
                reverse_lift_factor: c.range(
                    "reverse_lift_factor",
                    reverse_lift_factor.unwrap_or(0.7),
                    0.0,
                    1.0,
                    "lift in trailing-edge-first flow relative to forward flow, about 0.7",
                )?,
                blend_width_rad: c
                    .range(
                        "stall_blend_deg",
                        stall_blend_deg.unwrap_or(8.0),
                        0.5,
                        20.0,
                        "width of the stall transition in degrees, 4..12",
                    )?
                    .to_radians(),
            };
            ParametricPolar::new(spec)
                .map(Polar::Parametric)
                .map_err(|e| bad(p.clone(), e.to_string(), ""))
        }
        PolarFile::Table { file } => {
            let csv_path = dir.join(file);
            load_table(&csv_path, &p.key("file")).map(Polar::Table)
        }
    }
}

/// Read a tabulated polar CSV (`alpha_deg, cl, cd, cm`, `#` comment lines allowed); a file
/// that cannot be read is reported on the vehicle file's `file =` line (`key`).
fn load_table(path: &Path, key: &KeyPath) -> Result<TablePolar, BuildError> {
    let text = crate::input::read_text(
        path,
        "polar table",
        "the table file is found relative to the vehicle file",
    )
    .map_err(|e| match e.line {
        Some(_) => BuildError::Table(e),
        None => bad(
            key.clone(),
            format!("{}: {}", path.display(), e.message),
            e.hint,
        ),
    })?;
    let mut header_line = 1;
    let mut alpha = Vec::new();
    let mut cl = Vec::new();
    let mut cd = Vec::new();
    let mut cm = Vec::new();
    let mut lines = Vec::new();
    let mut header_seen = false;
    for (ln, raw) in text.lines().enumerate() {
        let line = raw.trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        if !header_seen {
            header_seen = true;
            header_line = ln + 1;
            let cols: Vec<&str> = line.split(',').map(str::trim).collect();
            if cols != ["alpha_deg", "cl", "cd", "cm"] {
                return Err(BuildError::Table(InputError {
                    file: path.to_path_buf(),
                    line: Some(ln + 1),
                    message: match crate::input::excerpt(path, "csv", line) {
                        Some(x) => format!("header is '{x}'"),
                        None => "the first line is not the header alpha_deg,cl,cd,cm".into(),
                    },
                    hint: "the first non-comment line must be: alpha_deg,cl,cd,cm".into(),
                }));
            }
            continue;
        }
        let vals: Result<Vec<f64>, _> = line.split(',').map(|s| s.trim().parse::<f64>()).collect();
        match vals {
            Ok(v)
                if v.len() == 4
                    && v.iter().all(|x| x.is_finite())
                    && v[1..].iter().all(|x| x.abs() <= limits::POLAR_COEFFICIENT) =>
            {
                alpha.push(v[0]);
                cl.push(v[1]);
                cd.push(v[2]);
                cm.push(v[3]);
                lines.push(ln + 1);
            }
            _ => {
                return Err(BuildError::Table(InputError {
                    file: path.to_path_buf(),
                    line: Some(ln + 1),
                    message: format!(
                        "row{} is not four finite numbers with coefficients within +-{}",
                        crate::input::excerpt(path, "csv", line)
                            .map_or(String::new(), |x| format!(" '{x}'")),
                        limits::POLAR_COEFFICIENT
                    ),
                    hint: format!(
                        "each row is alpha_deg,cl,cd,cm as decimal numbers; |cl|, |cd|, |cm| <= {} is our sanity bound",
                        limits::POLAR_COEFFICIENT
                    ),
                }))
            }
        }
    }
    TablePolar::new(&alpha, &cl, &cd, &cm).map_err(|e| {
        let row = e.row();
        let text = e.to_string();
        // One hint: the polar's own when it gives one.
        let (message, hint) = match text.split_once("; hint: ") {
            Some((m, h)) => (m.to_string(), h.to_string()),
            None => (text, "rows run from alpha_deg = -180 to 180, strictly increasing, with equal values at both ends".into()),
        };
        BuildError::Table(InputError {
            file: path.to_path_buf(),
            // A problem of the whole table (too few rows) points at its header.
            line: Some(row.and_then(|r| lines.get(r).copied()).unwrap_or(header_line)),
            message,
            hint,
        })
    })
}
