//! Margins at a trim point (DESIGN.md §4): stall margin of every surface, thrust and power
//! margin of every rotor group, pitch authority nose-up and nose-down, elevator travel left,
//! static margin where wingborne, and the fastest-growing mode.
//!
//! - Stall margin: degrees from the local angle of attack of each immersed or clean part to
//!   its positive and negative stall angle; the smaller of the two; negative when stalled.
//!   Only parts whose dynamic-pressure load q S_part reaches [`LOADED_PART_SHARE`] of the
//!   weight count (in hover the clean part of a wing sees no flow at all), and a part in
//!   download (wake-dominated, flow more than 45 deg off the chord) is not counted as stalled
//!   ([`part_counts_for_stall`]).
//! - Thrust margin: (T_available - T) / T_available, with T_available limited by the thrust
//!   cap and by the power available at the current inflow (momentum theory, Glauert).
//! - Power margin: (P_available - P) / P_available.
//! - Pitch authority: dq/dt (rad/s^2) reached at the trim state when every rotor thrust and
//!   elevator is moved to the limit that pitches the nose up (or down), each in the direction
//!   its own B-matrix column says; tilt actuators are left alone (they are slow).
//! - Static margin: K_n = -Cm_alpha / CL_alpha = (dM/dw) / (dZ/dw) / c_ref with quasi-static
//!   loads (alpha-dot terms off), thrust held, at the trim speed; reported where aerodynamic
//!   lift carries at least half of the weight ("wingborne").

use crate::atmosphere::Atmosphere;
use crate::dynamics::{evaluate, evaluate_quasi_static, Controls, Evaluation, State, Wind};
use crate::linear::{LinearModel, Mode};
use crate::rotor::{self, ThrustLimit};
use crate::vehicle::Vehicle;

/// Stall margin of one surface.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct SurfaceMargin {
    /// Surface name.
    pub name: String,
    /// Angle of attack of the clean part (deg), or of the critical part where the clean
    /// part carries no load (hover).
    pub alpha_deg: f64,
    /// Angle of attack of the most critical part (deg).
    pub critical_alpha_deg: f64,
    /// Which part is critical: "clean" or "slipstream of <rotor>".
    pub critical_part: String,
    /// Smallest margin to a stall angle over all parts (deg); negative when stalled.
    pub stall_margin_deg: f64,
    /// Positive stall angle (deg).
    pub stall_pos_deg: f64,
    /// Negative stall angle (deg).
    pub stall_neg_deg: f64,
    /// Total lift (N).
    pub lift_n: f64,
    /// Total drag (N).
    pub drag_n: f64,
    /// Whether any part carries load ([`part_is_loaded`]); stall of an unloaded surface is
    /// reported but not flagged.
    pub loaded: bool,
}

/// Smallest share of the weight that a surface part's dynamic-pressure load q S_part must
/// reach before its stall counts (common practice, no source: below it the part cannot
/// change the trim or the handling).
pub const LOADED_PART_SHARE: f64 = 0.005;

/// Whether a surface part of total area `area_m2` carries enough dynamic pressure to count.
pub fn part_is_loaded(p: &crate::dynamics::PartLoad, area_m2: f64, weight_n: f64) -> bool {
    p.fraction > 0.0 && p.dynamic_pressure_pa * area_m2 * p.fraction >= LOADED_PART_SHARE * weight_n
}

/// Angle beyond which a wake-dominated part is in download rather than stalled (rad).
pub const DOWNLOAD_ALPHA_RAD: f64 = std::f64::consts::FRAC_PI_4;

/// Whether a part's flow is dominated by a rotor wake: the part is immersed and the freestream
/// dynamic pressure is below half of its local one.
pub fn wake_dominated(p: &crate::dynamics::PartLoad, freestream_q_pa: f64) -> bool {
    p.rotor.is_some() && freestream_q_pa < 0.5 * p.dynamic_pressure_pa
}

/// Whether a part's stall counts: it is loaded ([`part_is_loaded`]) and not in download. A
/// fixed wing under a rotor meets the wake at up to 90 deg in hover; that separated flow is the
/// rotor's download, which the trim carries as a force, not a stall of a lifting surface. A
/// wake-dominated part flown edge-on to its wake (a tilt-wing, a tail-sitter's elevons) still
/// counts: its stall is the one that matters there.
pub fn part_counts_for_stall(
    p: &crate::dynamics::PartLoad,
    area_m2: f64,
    weight_n: f64,
    freestream_q_pa: f64,
) -> bool {
    part_is_loaded(p, area_m2, weight_n)
        && !(wake_dominated(p, freestream_q_pa)
            && p.alpha_rad.abs() > DOWNLOAD_ALPHA_RAD
            && p.alpha_rad.abs() < std::f64::consts::PI - DOWNLOAD_ALPHA_RAD)
}

/// Thrust and power margin of one rotor group.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct RotorMargin {
    /// Group name.
    pub name: String,
    /// Number of rotors.
    pub count: u32,
    /// Thrust of the whole group (N).
    pub thrust_n: f64,
    /// Thrust axis above body x (deg).
    pub axis_deg: f64,
    /// Shaft power of the whole group (W).
    pub power_w: f64,
    /// Thrust available to the whole group at this inflow (N).
    pub thrust_available_n: f64,
    /// What limits the thrust available.
    pub limited_by: ThrustLimit,
    /// (T_available - T) / T_available.
    pub thrust_margin: f64,
    /// (P_available - P) / P_available.
    pub power_margin: f64,
    /// Induced velocity (m/s).
    pub induced_velocity_mps: f64,
    /// In the vortex-ring band (warning).
    pub vortex_ring: bool,
}

/// All margins of a trim point.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Margins {
    /// Per surface (serialised by the point report as its `surfaces`).
    #[serde(skip)]
    pub surfaces: Vec<SurfaceMargin>,
    /// Per rotor group (serialised by the point report as its `rotors`).
    #[serde(skip)]
    pub rotors: Vec<RotorMargin>,
    /// Smallest surface stall margin (deg).
    pub stall_deg: f64,
    /// Surface with the smallest stall margin.
    pub stall_surface: String,
    /// Smallest thrust margin over groups that carry load.
    pub thrust: f64,
    /// Smallest power margin.
    pub power: f64,
    /// Achievable nose-up pitch acceleration (rad/s^2, >= 0 when authority exists).
    pub pitch_accel_up_rad_s2: f64,
    /// Achievable nose-down pitch acceleration, as a positive number (rad/s^2).
    pub pitch_accel_down_rad_s2: f64,
    /// Smallest elevator travel left over elevators with authority (deg); None without one.
    pub elevator_deg: Option<f64>,
    /// Static margin (% reference chord) where wingborne.
    pub static_margin_pct: Option<f64>,
    /// Share of the weight carried by aerodynamic lift (-).
    pub lift_share: f64,
    /// Largest real part of any eigenvalue (1/s).
    pub max_real_per_s: f64,
    /// Its time to double (s), when positive.
    pub time_to_double_s: Option<f64>,
}

/// Lift share above which a point counts as wingborne.
pub const WINGBORNE_LIFT_SHARE: f64 = 0.5;

/// Share of the weight carried by aerodynamic forces (surfaces and derivative model).
pub fn lift_share(v: &Vehicle, state: &State, e: &Evaluation) -> f64 {
    let (s, c) = state.theta_rad.sin_cos();
    let mut x = 0.0;
    let mut z = 0.0;
    for l in &e.surfaces {
        x += l.x_n;
        z += l.z_n;
    }
    if let Some(d) = &e.derivatives {
        x += d.x_n;
        z += d.z_n;
    }
    (s * x - c * z) / v.weight_n()
}

/// Thrust available to one rotor of each group at the evaluated inflow, with its limit.
pub fn thrust_available(v: &Vehicle, atm: &Atmosphere, e: &Evaluation) -> Vec<(f64, ThrustLimit)> {
    v.rotors
        .iter()
        .zip(&e.rotors)
        .map(|(r, l)| {
            rotor::thrust_available_with_limit(
                r.thrust_max_n,
                r.power_max_w,
                atm.density_kg_m3,
                r.disk_area_m2(),
                l.v_axial_mps,
                l.v_inplane_mps,
                r.power_model,
            )
        })
        .collect()
}

/// Compute every margin at a trim point.
pub fn margins(
    v: &Vehicle,
    atm: &Atmosphere,
    state: &State,
    controls: &Controls,
    e: &Evaluation,
    lin: &LinearModel,
    modes: &[Mode],
) -> Margins {
    // Surfaces.
    let mut surfaces = Vec::new();
    for (i, s) in v.surfaces.iter().enumerate() {
        let (pos, neg) = s.polar.stall_angles_rad();
        let parts = e.surface_parts(i);
        let w = v.weight_n();
        let q_inf = 0.5 * atm.density_kg_m3 * e.airspeed_mps * e.airspeed_mps;
        let counts = |p: &crate::dynamics::PartLoad| part_counts_for_stall(p, s.area_m2, w, q_inf);
        let loaded = parts.iter().any(counts);
        let mut best = f64::INFINITY;
        let mut crit_alpha = parts[0].alpha_rad;
        let mut crit_name = "clean".to_string();
        for p in parts {
            let counts = if loaded {
                part_is_loaded(p, s.area_m2, w)
            } else {
                p.fraction > 0.0
            };
            if !counts {
                continue;
            }
            let m = (pos - p.alpha_rad).min(p.alpha_rad - neg);
            if m < best {
                best = m;
                crit_alpha = p.alpha_rad;
                crit_name = match p.rotor {
                    None => "clean".into(),
                    Some(r) => format!("slipstream of {}", v.rotors[r].name),
                };
            }
        }
        // The clean part when it carries load; otherwise the critical (immersed) part.
        let clean = &parts[0];
        let shown_alpha = if !loaded || counts(clean) {
            clean.alpha_rad
        } else {
            crit_alpha
        };
        let load = &e.surfaces[i];
        surfaces.push(SurfaceMargin {
            name: s.name.clone(),
            alpha_deg: shown_alpha.to_degrees(),
            critical_alpha_deg: crit_alpha.to_degrees(),
            critical_part: crit_name,
            stall_margin_deg: best.to_degrees(),
            stall_pos_deg: pos.to_degrees(),
            stall_neg_deg: neg.to_degrees(),
            lift_n: load.lift_n,
            drag_n: load.drag_n,
            loaded,
        });
    }
    if let (Some(d), Some(dl)) = (&v.derivatives, &e.derivatives) {
        let m = (d.alpha_stall_pos_rad - dl.alpha_rad).min(dl.alpha_rad - d.alpha_stall_neg_rad);
        surfaces.push(SurfaceMargin {
            name: "airframe".into(),
            alpha_deg: dl.alpha_rad.to_degrees(),
            critical_alpha_deg: dl.alpha_rad.to_degrees(),
            critical_part: "clean".into(),
            stall_margin_deg: m.to_degrees(),
            stall_pos_deg: d.alpha_stall_pos_rad.to_degrees(),
            stall_neg_deg: d.alpha_stall_neg_rad.to_degrees(),
            lift_n: dl.lift_n,
            drag_n: dl.drag_n,
            loaded: true,
        });
    }
    let any_loaded = surfaces.iter().any(|s| s.loaded);
    let (stall_deg, stall_surface) = surfaces
        .iter()
        .filter(|s| s.loaded || !any_loaded)
        .map(|s| (s.stall_margin_deg, s.name.clone()))
        .fold((f64::INFINITY, String::new()), |a, b| {
            if b.0 < a.0 {
                b
            } else {
                a
            }
        });

    // Rotors.
    let avail = thrust_available(v, atm, e);
    let mut rotors = Vec::new();
    for ((r, l), (ta, lim)) in v.rotors.iter().zip(&e.rotors).zip(&avail) {
        let n = r.count as f64;
        let t1 = l.thrust_n / n;
        let thrust_margin = if *ta > 0.0 { (ta - t1) / ta } else { -1.0 };
        let power_margin = (r.power_max_w - l.performance.shaft_power_w) / r.power_max_w;
        rotors.push(RotorMargin {
            name: r.name.clone(),
            count: r.count,
            thrust_n: l.thrust_n,
            axis_deg: l.axis_rad.to_degrees(),
            power_w: l.power_w,
            thrust_available_n: n * ta,
            limited_by: *lim,
            thrust_margin,
            power_margin,
            induced_velocity_mps: l.performance.induced_velocity_mps,
            vortex_ring: rotor::in_vortex_ring_state(
                t1,
                atm.density_kg_m3,
                r.disk_area_m2(),
                l.v_axial_mps,
                l.v_inplane_mps,
            ),
        });
    }
    // Thrust margin matters for groups that carry load (more than 2 % of weight).
    let w = v.weight_n();
    let thrust = rotors
        .iter()
        .filter(|r| r.thrust_n > 0.02 * w)
        .map(|r| r.thrust_margin)
        .fold(f64::INFINITY, f64::min);
    let thrust = if thrust.is_finite() { thrust } else { 1.0 };
    let power = rotors
        .iter()
        .map(|r| r.power_margin)
        .fold(f64::INFINITY, f64::min);

    // Pitch authority.
    let (up, down) = pitch_authority(v, atm, state, controls, lin, &avail);

    // Elevator travel left where it has authority.
    let nt = v.rotors.len();
    let mut elevator_deg: Option<f64> = None;
    for (k, el) in v.elevators.iter().enumerate() {
        let col = lin.b[nt + k];
        let authority = col[2].abs() * (el.max_rad - el.min_rad);
        if authority < 0.05 {
            continue;
        }
        let d = controls.elevator_rad[k];
        let left = (el.max_rad - d).min(d - el.min_rad).to_degrees();
        elevator_deg = Some(elevator_deg.map_or(left, |m| m.min(left)));
    }

    let share = lift_share(v, state, e);
    let static_margin_pct = (share >= WINGBORNE_LIFT_SHARE)
        .then(|| static_margin(v, atm, state, controls))
        .flatten()
        .map(|k| 100.0 * k);

    let (max_real, t2) = modes
        .iter()
        .map(|m| (m.real_per_s, m.time_to_double_s))
        .fold(
            (f64::NEG_INFINITY, None),
            |a, b| if b.0 > a.0 { b } else { a },
        );

    Margins {
        surfaces,
        rotors,
        stall_deg,
        stall_surface,
        thrust,
        power,
        pitch_accel_up_rad_s2: up,
        pitch_accel_down_rad_s2: down,
        elevator_deg,
        static_margin_pct,
        lift_share: share,
        max_real_per_s: max_real,
        time_to_double_s: t2,
    }
}

/// Achievable pitch acceleration nose-up and nose-down (both as positive numbers when the
/// vehicle can pitch that way) with thrusts and elevators at the limits that help.
pub fn pitch_authority(
    v: &Vehicle,
    atm: &Atmosphere,
    state: &State,
    controls: &Controls,
    lin: &LinearModel,
    avail: &[(f64, ThrustLimit)],
) -> (f64, f64) {
    let mut e = Evaluation::default();
    let nt = v.rotors.len();
    let ne = v.elevators.len();
    let mut result = [0.0; 2];
    for (k, sign) in [1.0f64, -1.0].into_iter().enumerate() {
        let mut c = controls.clone();
        for ((t, col), a) in c.thrust_n.iter_mut().zip(&lin.b).zip(avail) {
            let dq = col[2] * sign;
            if dq.abs() > 1e-12 {
                *t = if dq > 0.0 { a.0 } else { 0.0 };
            }
        }
        for ((d, col), el) in c
            .elevator_rad
            .iter_mut()
            .zip(&lin.b[nt..nt + ne])
            .zip(&v.elevators)
        {
            let dq = col[2] * sign;
            if dq.abs() > 1e-12 {
                *d = if dq > 0.0 { el.max_rad } else { el.min_rad };
            }
        }
        evaluate(v, atm, state, &c, Wind::default(), &mut e);
        result[k] = sign * e.state_dot[2];
    }
    (result[0], result[1])
}

/// Static margin K_n (fraction of reference chord) from quasi-static loads.
pub fn static_margin(
    v: &Vehicle,
    atm: &Atmosphere,
    state: &State,
    controls: &Controls,
) -> Option<f64> {
    let speed = state.u_mps.hypot(state.w_mps);
    if speed < 1.0 {
        return None;
    }
    let h = 1e-4 * speed;
    let mut e = Evaluation::default();
    let mut sp = *state;
    sp.w_mps += h;
    evaluate_quasi_static(v, atm, &sp, controls, &mut e);
    let (zp, mp) = (e.z_n, e.m_nm);
    let mut sm = *state;
    sm.w_mps -= h;
    evaluate_quasi_static(v, atm, &sm, controls, &mut e);
    let (zm, mm) = (e.z_n, e.m_nm);
    let dz = (zp - zm) / (2.0 * h);
    let dm = (mp - mm) / (2.0 * h);
    if dz.abs() < 1e-9 {
        return None;
    }
    Some(dm / dz / v.reference.chord_m)
}
