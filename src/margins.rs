//! Margins at a trim point (DEVELOPERS.md, "Stall"): stall margin of every surface, thrust and power
//! margin of every rotor group, pitch authority nose-up and nose-down, elevator travel left,
//! static margin where wingborne, and the fastest-growing mode.
//!
//! - Stall: the three-part rule of [`stall_assessment`] (one function for sweep, corridor,
//!   trim objective and flight): degrees from the local angle of attack of each counted part
//!   to its stall angle, the stalled load share, and the point's verdict (attached, advisory,
//!   stalled). Download under a rotor wake never counts.
//! - Thrust margin: (T_available - T) / T_available, with T_available limited by the thrust
//!   cap and by the power available at the current inflow (momentum theory, Glauert).
//! - Power margin: (P_available - P) / P_available.
//! - Pitch authority: dq/dt (rad/s^2) reached at the trim state when every rotor thrust and
//!   elevator is moved to the limit that pitches the nose up (or down), each in the direction
//!   its own B-matrix column says; tilt actuators are left alone (they are slow).
//! - Static margin: K_n = -Cm_alpha / CL_alpha = (dM/dw) / (dZ/dw) / c_ref with quasi-static
//!   loads (alpha-dot terms off), thrust held, at the trim speed; reported only where the
//!   point is wingborne ([`wingborne`]: the wings carry at least 80 % of the weight, at or
//!   above the clean stall speed), null elsewhere. The lift share is reported beside it.

use crate::atmosphere::Atmosphere;
use crate::dynamics::{evaluate, evaluate_quasi_static, Controls, Evaluation, State, Wind};
use crate::linear::{LinearModel, Mode};
use crate::rotor::{self, ThrustLimit};
use crate::vehicle::Vehicle;

/// Stall state of a surface or a point under the three-part stall rule ([`stall_assessment`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum StallVerdict {
    /// No counted part beyond stall.
    Attached,
    /// Separation that a reviewer notes but that does not by itself make the point unsafe: a
    /// stalled load share below the threshold, or separation on a body.
    Advisory,
    /// Stall that makes the point unsafe.
    Stalled,
}

/// Stall margin of one surface.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct SurfaceMargin {
    /// Surface name.
    pub name: String,
    /// Angle of attack of the clean part (deg), or of the critical part where the clean
    /// part carries no load (hover).
    pub alpha_deg: f64,
    /// Geometric angle of attack (deg): free stream, attitude, incidence, tilt and downwash,
    /// without any rotor wake (the clean part's).
    pub alpha_geometric_deg: f64,
    /// Angle of attack of the critical part (deg): the counted part closest to (or farthest
    /// beyond) a stall angle.
    pub critical_alpha_deg: f64,
    /// Which part is critical: "clean" or "slipstream of <rotor>".
    pub critical_part: String,
    /// The stall angle on the critical part's side (deg).
    pub stall_angle_deg: f64,
    /// Margin of the critical part to its stall angle (deg); negative when stalled.
    pub stall_margin_deg: f64,
    /// Positive stall angle (deg).
    pub stall_pos_deg: f64,
    /// Negative stall angle (deg).
    pub stall_neg_deg: f64,
    /// Total lift (N).
    pub lift_n: f64,
    /// Total drag (N).
    pub drag_n: f64,
    /// Dynamic pressure of the most loaded wake-immersed part over the free-stream dynamic
    /// pressure; None without an immersed part or without airspeed.
    pub slipstream_q_ratio: Option<f64>,
    /// Angle of attack of the most loaded wake-immersed part (deg), the part of
    /// `slipstream_q_ratio`; None without an immersed part.
    pub slipstream_alpha_deg: Option<f64>,
    /// Sum of q S over the stalled counted parts, over the weight (-).
    pub stalled_share: f64,
    /// Whether the surface's stall margin enters the verdict: it has a part whose stall alone
    /// is unsafe (an immersed wing part, a loaded tail part, a part carrying at least the
    /// stalled-load-share threshold).
    pub in_verdict: bool,
    /// The surface's stall state.
    pub verdict: StallVerdict,
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

/// Whether a part is in download: wake-dominated with its flow more than 45 deg off the chord.
/// A fixed wing under a rotor meets the wake at up to 90 deg in hover; that separated flow is
/// the rotor's download, which the trim carries as a force, not a stall of a lifting surface.
pub fn in_download(p: &crate::dynamics::PartLoad, freestream_q_pa: f64) -> bool {
    wake_dominated(p, freestream_q_pa)
        && p.alpha_rad.abs() > DOWNLOAD_ALPHA_RAD
        && p.alpha_rad.abs() < std::f64::consts::PI - DOWNLOAD_ALPHA_RAD
}

/// Whether a part's stall counts at all: it is loaded ([`part_is_loaded`]) and not in download
/// ([`in_download`]). A wake-dominated part flown edge-on to its wake (a tilt-wing, a
/// tail-sitter's elevons) still counts.
pub fn part_counts_for_stall(
    p: &crate::dynamics::PartLoad,
    area_m2: f64,
    weight_n: f64,
    freestream_q_pa: f64,
) -> bool {
    part_is_loaded(p, area_m2, weight_n) && !in_download(p, freestream_q_pa)
}

/// Stall of one surface under the rule of [`stall_assessment`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SurfaceStall {
    /// Index of the critical part within the surface's parts (the first part when none counts).
    pub critical_part: usize,
    /// Margin of the critical part (rad); infinite when no part counts.
    pub margin_rad: f64,
    /// Whether the critical part is one whose stall alone is unsafe.
    pub in_verdict: bool,
    /// Stalled load share of the surface (-).
    pub stalled_share: f64,
    /// Stall state.
    pub verdict: StallVerdict,
}

/// Stall of a whole point.
#[derive(Debug, Clone, PartialEq)]
pub struct StallAssessment {
    /// Per surface, in vehicle order.
    pub surfaces: Vec<SurfaceStall>,
    /// Stalled load share of the point (-): sum of q S over the stalled counted parts of wings
    /// and tails, over the weight.
    pub stalled_load_share: f64,
    /// Smallest margin (rad) over the parts whose stall alone is unsafe; infinite when none.
    pub verdict_margin_rad: f64,
    /// The surface that sets it.
    pub verdict_surface: Option<usize>,
    /// The point's stall state.
    pub verdict: StallVerdict,
}

/// The stall rule, one function for the sweep, the corridor, the trim objective and the flight.
///
/// Counted parts carry at least [`LOADED_PART_SHARE`] of the weight as q S_part and are not in
/// download ([`in_download`]; download never counts). Then:
/// - **unsafe (hard)**: a stalled wake-immersed part of a wing; a stalled part of a tail (the
///   pitch-control surface); a stalled part that alone carries at least `stalled_share_limit`
///   of the weight; or the stalled load share of wings and tails at or above that limit;
/// - **advisory**: a stalled load share between the counting floor and the limit, or any
///   separation on a body (a fuselage separates gradually and does not stall like a wing).
///
/// The verdict margin is the smallest margin over the parts whose stall alone is unsafe.
pub fn stall_assessment(
    v: &Vehicle,
    density_kg_m3: f64,
    e: &Evaluation,
    stalled_share_limit: f64,
) -> StallAssessment {
    use crate::vehicle::SurfaceRole;
    let w = v.weight_n();
    let q_inf = 0.5 * density_kg_m3 * e.airspeed_mps * e.airspeed_mps;
    let mut out = StallAssessment {
        surfaces: Vec::with_capacity(v.surfaces.len()),
        stalled_load_share: 0.0,
        verdict_margin_rad: f64::INFINITY,
        verdict_surface: None,
        verdict: StallVerdict::Attached,
    };
    let mut hard = false;
    let mut body_separated = false;
    for (i, s) in v.surfaces.iter().enumerate() {
        let (pos, neg) = s.polar.stall_angles_rad();
        let mut st = SurfaceStall {
            critical_part: 0,
            margin_rad: f64::INFINITY,
            in_verdict: false,
            stalled_share: 0.0,
            verdict: StallVerdict::Attached,
        };
        let mut any_critical = false;
        for (k, p) in e.surface_parts(i).iter().enumerate() {
            if !part_counts_for_stall(p, s.area_m2, w, q_inf) {
                continue;
            }
            let share = p.dynamic_pressure_pa * s.area_m2 * p.fraction / w;
            let margin = (pos - p.alpha_rad).min(p.alpha_rad - neg);
            let critical = match s.role {
                SurfaceRole::Body => false,
                SurfaceRole::Tail => true,
                SurfaceRole::Wing => p.rotor.is_some() || share >= stalled_share_limit,
            };
            let stalled = margin < 0.0;
            if stalled && s.role != SurfaceRole::Body {
                st.stalled_share += share;
            }
            if stalled && s.role == SurfaceRole::Body {
                body_separated = true;
                st.verdict = StallVerdict::Advisory;
            }
            // The critical part: a verdict part before any other, then the smallest margin.
            let take = match (critical, any_critical) {
                (true, false) => true,
                (false, true) => false,
                _ => margin < st.margin_rad,
            };
            if take {
                st.critical_part = k;
                st.margin_rad = margin;
                any_critical |= critical;
            }
            if critical && stalled {
                hard = true;
                st.verdict = StallVerdict::Stalled;
            }
        }
        st.in_verdict = any_critical;
        if any_critical && st.margin_rad < out.verdict_margin_rad {
            out.verdict_margin_rad = st.margin_rad;
            out.verdict_surface = Some(i);
        }
        if st.verdict == StallVerdict::Attached && st.stalled_share > 0.0 {
            st.verdict = StallVerdict::Advisory;
        }
        out.stalled_load_share += st.stalled_share;
        out.surfaces.push(st);
    }
    if out.stalled_load_share >= stalled_share_limit {
        hard = true;
        for st in out.surfaces.iter_mut().filter(|st| st.stalled_share > 0.0) {
            st.verdict = StallVerdict::Stalled;
        }
    }
    out.verdict = if hard {
        StallVerdict::Stalled
    } else if body_separated || out.stalled_load_share >= LOADED_PART_SHARE {
        StallVerdict::Advisory
    } else {
        StallVerdict::Attached
    };
    out
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
    /// Smallest stall margin (deg) over the parts whose stall alone is unsafe
    /// ([`stall_assessment`]); infinite (null in JSON) when no such part carries load.
    pub stall_deg: f64,
    /// Surface with that margin (empty when none).
    pub stall_surface: String,
    /// Stalled load share of the point (-): q S of the stalled counted wing and tail parts over
    /// the weight.
    pub stalled_load_share: f64,
    /// The point's stall state under the three-part rule.
    pub stall_verdict: StallVerdict,
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

/// Lift share above which a point counts as wingborne (common practice, no source: the
/// wings carry most of the weight).
pub const WINGBORNE_LIFT_SHARE: f64 = 0.8;

/// Clean stall speed (m/s): the speed at which the wings at their largest lift coefficient
/// carry the weight in the free stream alone, V_s = sqrt(2 W / (rho sum(S CL_max))); None
/// without a wing.
pub fn clean_stall_speed_mps(v: &Vehicle, density_kg_m3: f64) -> Option<f64> {
    let lift: f64 = v
        .surfaces
        .iter()
        .filter(|s| s.role == crate::vehicle::SurfaceRole::Wing)
        .map(|s| s.area_m2 * s.polar.cl_max())
        .sum::<f64>()
        + v.derivatives.as_ref().map_or(0.0, |d| {
            d.area_m2 * (d.cl0 + d.cl_alpha * d.alpha_stall_pos_rad)
        });
    (lift > 0.0).then(|| (2.0 * v.weight_n() / (density_kg_m3 * lift)).sqrt())
}

/// Whether a point is wingborne: the wings carry at least [`WINGBORNE_LIFT_SHARE`] of the
/// weight and the airspeed is at least the clean stall speed, so the lift does not depend on
/// rotor wakes (powered lift below that speed is not wingborne flight).
pub fn wingborne(v: &Vehicle, density_kg_m3: f64, speed_mps: f64, share: f64) -> bool {
    share >= WINGBORNE_LIFT_SHARE
        && clean_stall_speed_mps(v, density_kg_m3).is_some_and(|vs| speed_mps >= vs)
}

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
#[allow(clippy::too_many_arguments)]
pub fn margins(
    v: &Vehicle,
    atm: &Atmosphere,
    state: &State,
    controls: &Controls,
    e: &Evaluation,
    lin: &LinearModel,
    modes: &[Mode],
    stalled_share_limit: f64,
) -> Margins {
    // Surfaces.
    let stall = stall_assessment(v, atm.density_kg_m3, e, stalled_share_limit);
    let q_inf = 0.5 * atm.density_kg_m3 * e.airspeed_mps * e.airspeed_mps;
    let mut surfaces = Vec::with_capacity(v.surfaces.len() + 1);
    for ((i, s), st) in v.surfaces.iter().enumerate().zip(&stall.surfaces) {
        let (pos, neg) = s.polar.stall_angles_rad();
        let parts = e.surface_parts(i);
        let crit = &parts[st.critical_part];
        let clean = &parts[0];
        let counted = st.margin_rad.is_finite();
        // The clean part when it carries load; otherwise the critical (immersed) part.
        let shown_alpha = if counted && !part_is_loaded(clean, s.area_m2, v.weight_n()) {
            crit.alpha_rad
        } else {
            clean.alpha_rad
        };
        let wake_part = parts
            .iter()
            .filter(|p| p.rotor.is_some() && p.fraction > 0.0)
            .max_by(|a, b| {
                (a.dynamic_pressure_pa * a.fraction)
                    .total_cmp(&(b.dynamic_pressure_pa * b.fraction))
            });
        let q_ratio = wake_part
            .filter(|_| q_inf > 1e-9)
            .map(|p| p.dynamic_pressure_pa / q_inf);
        let margin = if counted {
            st.margin_rad
        } else {
            (pos - crit.alpha_rad).min(crit.alpha_rad - neg)
        };
        let load = &e.surfaces[i];
        surfaces.push(SurfaceMargin {
            name: s.name.clone(),
            alpha_deg: shown_alpha.to_degrees(),
            alpha_geometric_deg: clean.alpha_rad.to_degrees(),
            critical_alpha_deg: crit.alpha_rad.to_degrees(),
            critical_part: match crit.rotor {
                None => "clean".into(),
                Some(r) => format!("slipstream of {}", v.rotors[r].name),
            },
            stall_angle_deg: if pos - crit.alpha_rad < crit.alpha_rad - neg {
                pos
            } else {
                neg
            }
            .to_degrees(),
            stall_margin_deg: margin.to_degrees(),
            stall_pos_deg: pos.to_degrees(),
            stall_neg_deg: neg.to_degrees(),
            lift_n: load.lift_n,
            drag_n: load.drag_n,
            slipstream_q_ratio: q_ratio,
            slipstream_alpha_deg: wake_part.map(|p| p.alpha_rad.to_degrees()),
            stalled_share: st.stalled_share,
            in_verdict: st.in_verdict,
            verdict: st.verdict,
        });
    }
    let mut stall_deg = stall.verdict_margin_rad.to_degrees();
    let mut stall_surface = stall
        .verdict_surface
        .map_or(String::new(), |i| v.surfaces[i].name.clone());
    let mut stall_verdict = stall.verdict;
    if let (Some(d), Some(dl)) = (&v.derivatives, &e.derivatives) {
        // The derivative model is the whole airframe: its stall always enters the verdict.
        let m = (d.alpha_stall_pos_rad - dl.alpha_rad).min(dl.alpha_rad - d.alpha_stall_neg_rad);
        let side = if d.alpha_stall_pos_rad - dl.alpha_rad < dl.alpha_rad - d.alpha_stall_neg_rad {
            d.alpha_stall_pos_rad
        } else {
            d.alpha_stall_neg_rad
        };
        let verdict = if m < 0.0 {
            StallVerdict::Stalled
        } else {
            StallVerdict::Attached
        };
        if m.to_degrees() < stall_deg {
            stall_deg = m.to_degrees();
            stall_surface = "airframe".into();
        }
        if verdict == StallVerdict::Stalled {
            stall_verdict = StallVerdict::Stalled;
        }
        surfaces.push(SurfaceMargin {
            name: "airframe".into(),
            alpha_deg: dl.alpha_rad.to_degrees(),
            alpha_geometric_deg: dl.alpha_rad.to_degrees(),
            critical_alpha_deg: dl.alpha_rad.to_degrees(),
            critical_part: "clean".into(),
            stall_angle_deg: side.to_degrees(),
            stall_margin_deg: m.to_degrees(),
            stall_pos_deg: d.alpha_stall_pos_rad.to_degrees(),
            stall_neg_deg: d.alpha_stall_neg_rad.to_degrees(),
            lift_n: dl.lift_n,
            drag_n: dl.drag_n,
            slipstream_q_ratio: None,
            slipstream_alpha_deg: None,
            stalled_share: if m < 0.0 { 1.0 } else { 0.0 },
            in_verdict: true,
            verdict,
        });
    }

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
    let static_margin_pct = wingborne(v, atm.density_kg_m3, e.airspeed_mps, share)
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
        stalled_load_share: stall.stalled_load_share,
        stall_verdict,
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
