//! The first look at a vehicle (`hoverline check`): mass and weight, hover thrust-to-weight,
//! disc loading and ideal hover power, wing loading, each surface's aspect ratio, finite lift
//! slope and stall angles, the wingborne stall speed, the static margin in cruise
//! configuration, and warnings for suspicious values.
//!
//! Ideal hover power of the whole vehicle from momentum theory: P = W^1.5 / sqrt(2 rho A),
//! A the total disc area (Leishman, Principles of Helicopter Aerodynamics, ch. 2).
//! Stall speed V_s = sqrt(2 W / (rho S CL_max)) with the reference area and the largest lift
//! coefficient of the wing surfaces (Anderson, Aircraft Performance and Design).

use serde::Serialize;

use super::{SurfaceRole, Vehicle};
use crate::atmosphere::Atmosphere;
use crate::margins::static_margin;
use crate::trim::{trim, Condition, Objective, TiltSetting, TrimRequest};

/// One surface in the summary.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurfaceSummary {
    /// Name.
    pub name: String,
    /// wing, tail or body.
    pub role: SurfaceRole,
    /// Area (m^2).
    pub area_m2: f64,
    /// Aspect ratio (-).
    pub aspect_ratio: f64,
    /// Finite lift slope (per rad).
    pub lift_slope_per_rad: f64,
    /// Positive stall angle (deg).
    pub stall_pos_deg: f64,
    /// Negative stall angle (deg).
    pub stall_neg_deg: f64,
    /// Largest lift coefficient (at the positive stall angle).
    pub cl_max: f64,
    /// Whether it rides on a tilt actuator.
    pub tilts: bool,
    /// Immersed fraction in rotor wakes (-).
    pub immersed_fraction: f64,
}

/// One rotor group in the summary.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RotorSummary {
    /// Name.
    pub name: String,
    /// Rotors.
    pub count: u32,
    /// Disc loading at the group's thrust cap (N/m^2).
    pub disk_loading_at_cap_n_m2: f64,
    /// Thrust cap of the whole group (N).
    pub thrust_max_n: f64,
    /// Thrust the group can make in hover within its power (N).
    pub hover_thrust_available_n: f64,
    /// Whether it tilts.
    pub tilts: bool,
}

/// The whole summary.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Summary {
    /// Vehicle name.
    pub name: String,
    /// Mass (kg).
    pub mass_kg: f64,
    /// Weight (N).
    pub weight_n: f64,
    /// Pitch inertia (kg m^2).
    pub pitch_inertia_kg_m2: f64,
    /// Air density used (kg/m^3).
    pub density_kg_m3: f64,
    /// Hover thrust available over weight, thrust acting up in hover configuration (-).
    pub hover_thrust_to_weight: f64,
    /// Weight over total disc area of the rotors that lift in hover (N/m^2).
    pub disk_loading_n_m2: f64,
    /// Ideal hover power of the whole vehicle (W).
    pub ideal_hover_power_w: f64,
    /// Weight over reference area (N/m^2).
    pub wing_loading_n_m2: f64,
    /// Wingborne stall speed (m/s), None without a wing.
    pub stall_speed_mps: Option<f64>,
    /// Static margin in cruise configuration (% reference chord), None if it cannot be trimmed.
    pub static_margin_pct: Option<f64>,
    /// Speed at which the static margin was taken (m/s).
    pub static_margin_speed_mps: Option<f64>,
    /// Surfaces.
    pub surfaces: Vec<SurfaceSummary>,
    /// Rotor groups.
    pub rotors: Vec<RotorSummary>,
    /// Suspicious values.
    pub warnings: Vec<String>,
}

/// Tilt of every actuator at its hover end (the limit nearest 90 deg).
fn hover_tilt(v: &Vehicle) -> Vec<f64> {
    let h = std::f64::consts::FRAC_PI_2;
    v.actuators
        .iter()
        .map(|a| h.clamp(a.min_rad, a.max_rad))
        .collect()
}

/// Summarise a vehicle in the given atmosphere.
pub fn summarise(v: &Vehicle, atm: &Atmosphere) -> Summary {
    let w = v.weight_n();
    let rho = atm.density_kg_m3;
    let tilt_h = hover_tilt(v);
    let mut lift_area = 0.0;
    let mut hover_thrust = 0.0;
    let mut rotors = Vec::new();
    let mut hover_x = Vec::new();
    for (g, r) in v.rotors.iter().enumerate() {
        let n = r.count as f64;
        let axis = v.rotor_axis_rad(g, &tilt_h);
        let up = axis.sin();
        let a = r.disk_area_m2();
        let t_avail = crate::rotor::thrust_available(
            r.thrust_max_n,
            r.power_max_w,
            rho,
            a,
            0.0,
            0.0,
            r.power_model,
        );
        if up > 0.5 {
            lift_area += n * a;
            let pos = match r.actuator {
                Some(k) => r.position.rotated_about(v.actuators[k].pivot, tilt_h[k]),
                None => r.position,
            };
            hover_x.push(pos.x_m);
        }
        hover_thrust += n * t_avail * up.max(0.0);
        rotors.push(RotorSummary {
            name: r.name.clone(),
            count: r.count,
            disk_loading_at_cap_n_m2: r.thrust_max_n / a,
            thrust_max_n: n * r.thrust_max_n,
            hover_thrust_available_n: n * t_avail,
            tilts: r.actuator.is_some(),
        });
    }
    let tail_sitter = v.actuators.is_empty() && lift_area == 0.0;
    if tail_sitter {
        // Thrust along body x: the vehicle hovers nose-up; every rotor lifts.
        for (g, r) in v.rotors.iter().enumerate() {
            lift_area += r.count as f64 * r.disk_area_m2();
            hover_thrust +=
                rotors[g].hover_thrust_available_n * v.rotor_axis_rad(g, &tilt_h).cos().max(0.0);
        }
    }
    let surfaces: Vec<SurfaceSummary> = v
        .surfaces
        .iter()
        .map(|s| {
            let (p, n) = s.polar.stall_angles_rad();
            SurfaceSummary {
                name: s.name.clone(),
                role: s.role,
                area_m2: s.area_m2,
                aspect_ratio: s.aspect_ratio(),
                lift_slope_per_rad: s.polar.lift_slope_per_rad(),
                stall_pos_deg: p.to_degrees(),
                stall_neg_deg: n.to_degrees(),
                cl_max: s.polar.cl_max(),
                tilts: s.actuator.is_some(),
                immersed_fraction: s.slipstream.iter().map(|l| l.fraction).sum(),
            }
        })
        .collect();
    let cl_max = surfaces
        .iter()
        .filter(|s| s.role == SurfaceRole::Wing)
        .map(|s| s.cl_max * s.area_m2)
        .sum::<f64>()
        / v.reference.area_m2;
    let cl_max = match &v.derivatives {
        Some(d) => d.cl0 + d.cl_alpha * d.alpha_stall_pos_rad,
        None => cl_max,
    };
    let stall_speed =
        (cl_max > 0.0).then(|| (2.0 * w / (rho * v.reference.area_m2 * cl_max)).sqrt());

    // Static margin in cruise configuration: tilt at the cruise end, trimmed at 1.4 V_s.
    let (mut sm, mut sm_speed) = (None, None);
    if let Some(vs) = stall_speed {
        let speed = 1.4 * vs;
        let cruise_tilt: Vec<f64> = v
            .actuators
            .iter()
            .map(|a| 0f64.clamp(a.min_rad, a.max_rad))
            .collect();
        let req = TrimRequest {
            speed_mps: speed,
            climb_rad: 0.0,
            tilt: TiltSetting::Fixed(cruise_tilt),
            pitch_rad: None,
            condition: Condition::Steady,
            objective: Objective::Reserve,
        };
        let sol = trim(v, atm, &req, None, true);
        if sol.trimmed() {
            sm = static_margin(v, atm, &sol.state, &sol.controls).map(|k| 100.0 * k);
            sm_speed = Some(speed);
        }
    }

    let mut warnings = Vec::new();
    let tw = hover_thrust / w;
    if tw < 1.1 {
        warnings.push(format!(
            "hover thrust-to-weight {tw:.2} is below 1.1: little thrust is left for control and climb"
        ));
    }
    if !tail_sitter && !hover_x.is_empty() {
        let lo = hover_x.iter().cloned().fold(f64::INFINITY, f64::min);
        let hi = hover_x.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
        if v.cg.x_m < lo - 1e-9 || v.cg.x_m > hi + 1e-9 {
            warnings.push(format!(
                "CG at x = {:.3} m lies outside the hover rotor footprint ({lo:.3} to {hi:.3} m): hover pitch trim needs a lifting surface or cannot be reached",
                v.cg.x_m
            ));
        }
    }
    // The default scenario threshold (common practice, no source); a scenario may set another.
    let sm_floor = crate::scenario::Thresholds::default().static_margin_pct;
    for r in &rotors {
        if r.hover_thrust_available_n < r.thrust_max_n * (1.0 - 1e-6) {
            warnings.push(format!(
                "rotor group '{}': its thrust cap ({:.1} N per rotor) is above the {:.1} N its power gives in hover; the power, not the cap, limits it at low speed",
                r.name, r.thrust_max_n, r.hover_thrust_available_n
            ));
        }
    }
    match sm {
        Some(k) if k < 0.0 => warnings.push(format!(
            "static margin in cruise configuration is negative ({k:.1} % chord): the airframe is statically unstable in pitch"
        )),
        Some(k) if k < sm_floor => warnings.push(format!(
            "static margin in cruise configuration is {k:.1} % chord, below the default threshold of {sm_floor:.1} %"
        )),
        None if stall_speed.is_some() => warnings.push(
            "the cruise configuration could not be trimmed at 1.4 times the stall speed; static margin unknown".into(),
        ),
        _ => {}
    }
    Summary {
        name: v.name.clone(),
        mass_kg: v.mass_kg,
        weight_n: w,
        pitch_inertia_kg_m2: v.pitch_inertia_kg_m2,
        density_kg_m3: rho,
        hover_thrust_to_weight: tw,
        disk_loading_n_m2: if lift_area > 0.0 {
            w / lift_area
        } else {
            f64::INFINITY
        },
        ideal_hover_power_w: if lift_area > 0.0 {
            w.powf(1.5) / (2.0 * rho * lift_area).sqrt()
        } else {
            f64::INFINITY
        },
        wing_loading_n_m2: w / v.reference.area_m2,
        stall_speed_mps: stall_speed,
        static_margin_pct: sm,
        static_margin_speed_mps: sm_speed,
        surfaces,
        rotors,
        warnings,
    }
}
