//! The 3-DOF longitudinal rigid body (DEVELOPERS.md, "Conventions") and the loads of every component.
//!
//! Equations of motion in body axes (x forward, z down, theta nose-up):
//!
//! ```text
//! m (du/dt + q w) = X - m g sin(theta)
//! m (dw/dt - q u) = Z + m g cos(theta)
//! Iyy dq/dt       = M
//! dtheta/dt = q,  dx/dt = u cos(theta) + w sin(theta),  dh/dt = u sin(theta) - w cos(theta)
//! ```
//!
//! X, Z, M are the sums of the component loads, each computed at the component's own reference
//! point with its own local flow: the air-relative velocity of the vehicle, the velocity from
//! pitch rate at the lever arm (omega x r), downwash from an upstream surface, and rotor wake
//! over the immersed part of a surface (DEVELOPERS.md, "Conventions", shared physics). Rotors are evaluated first
//! because their induced velocities feed the slipstream.
//!
//! The derivative-model component has alpha-dot terms, which make the equations implicit in
//! dw/dt; they are linear in alpha-dot and solved in closed form.

use crate::atmosphere::{Atmosphere, G0_MPS2};
use crate::rotor;
use crate::vehicle::{Point, Vehicle};

/// Rigid-body state (body axes, inertial velocities).
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize)]
pub struct State {
    /// Forward velocity (m/s).
    pub u_mps: f64,
    /// Downward velocity (m/s).
    pub w_mps: f64,
    /// Pitch rate, nose-up positive (rad/s).
    pub q_rad_s: f64,
    /// Pitch attitude, nose-up positive (rad).
    pub theta_rad: f64,
}

impl State {
    /// State as [u, w, q, theta].
    pub fn to_array(self) -> [f64; 4] {
        [self.u_mps, self.w_mps, self.q_rad_s, self.theta_rad]
    }
    /// State from [u, w, q, theta].
    pub fn from_array(a: [f64; 4]) -> State {
        State {
            u_mps: a[0],
            w_mps: a[1],
            q_rad_s: a[2],
            theta_rad: a[3],
        }
    }
    /// Level-flight-path state at airspeed V, flight-path angle gamma and pitch theta (no wind).
    pub fn on_path(speed_mps: f64, gamma_rad: f64, theta_rad: f64) -> State {
        let alpha = theta_rad - gamma_rad;
        State {
            u_mps: speed_mps * alpha.cos(),
            w_mps: speed_mps * alpha.sin(),
            q_rad_s: 0.0,
            theta_rad,
        }
    }
}

/// Names of the linear-model states, with units.
pub const STATE_NAMES: [&str; 4] = ["u_mps", "w_mps", "q_rad_s", "theta_rad"];

/// Actuator positions seen by the airframe (after lags and rate limits).
#[derive(Debug, Clone, PartialEq, Default, serde::Serialize)]
pub struct Controls {
    /// Thrust of one rotor of each group (N).
    pub thrust_n: Vec<f64>,
    /// Deflection of each elevator, trailing-edge down positive (rad).
    pub elevator_rad: Vec<f64>,
    /// Angle of each tilt actuator, 0 cruise, pi/2 hover (rad).
    pub tilt_rad: Vec<f64>,
}

impl Controls {
    /// All zero, sized for the vehicle.
    pub fn zeros(v: &Vehicle) -> Controls {
        Controls {
            thrust_n: vec![0.0; v.rotors.len()],
            elevator_rad: vec![0.0; v.elevators.len()],
            tilt_rad: vec![0.0; v.actuators.len()],
        }
    }
    /// Flat input vector in the order thrusts, elevators, tilts.
    pub fn to_flat(&self) -> Vec<f64> {
        let mut v = Vec::with_capacity(self.len());
        v.extend_from_slice(&self.thrust_n);
        v.extend_from_slice(&self.elevator_rad);
        v.extend_from_slice(&self.tilt_rad);
        v
    }
    /// Number of inputs.
    pub fn len(&self) -> usize {
        self.thrust_n.len() + self.elevator_rad.len() + self.tilt_rad.len()
    }
    /// Whether there are no inputs.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
    /// Mutable access to input `i` in flat order.
    pub fn flat_mut(&mut self, i: usize) -> &mut f64 {
        let nt = self.thrust_n.len();
        let ne = self.elevator_rad.len();
        if i < nt {
            &mut self.thrust_n[i]
        } else if i < nt + ne {
            &mut self.elevator_rad[i - nt]
        } else {
            &mut self.tilt_rad[i - nt - ne]
        }
    }
    /// Input `i` in flat order.
    pub fn flat(&self, i: usize) -> f64 {
        let nt = self.thrust_n.len();
        let ne = self.elevator_rad.len();
        if i < nt {
            self.thrust_n[i]
        } else if i < nt + ne {
            self.elevator_rad[i - nt]
        } else {
            self.tilt_rad[i - nt - ne]
        }
    }
}

/// Velocity of the air mass in earth axes (m/s): horizontal along the flight direction
/// positive (a tailwind), vertical positive downwards (a downdraft).
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize)]
pub struct Wind {
    /// Horizontal component (m/s), positive along +x earth.
    pub x_mps: f64,
    /// Vertical component (m/s), positive down.
    pub z_mps: f64,
}

/// The flow over one part of a surface (clean, or immersed in one rotor group's wake).
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize)]
pub struct PartLoad {
    /// Area fraction of the surface (-).
    pub fraction: f64,
    /// Rotor group whose wake covers this part, `None` for the clean part.
    pub rotor: Option<usize>,
    /// Local angle of attack of the chord, incl. incidence, tilt, elevator, downwash (rad).
    pub alpha_rad: f64,
    /// Local flow speed (m/s).
    pub speed_mps: f64,
    /// Local dynamic pressure (Pa).
    pub dynamic_pressure_pa: f64,
    /// Lift of this part, perpendicular to its local flow (N).
    pub lift_n: f64,
    /// Drag of this part, along its local flow (N).
    pub drag_n: f64,
}

/// Loads of one surface.
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize)]
pub struct SurfaceLoad {
    /// Body-axis force along x (N).
    pub x_n: f64,
    /// Body-axis force along z (N).
    pub z_n: f64,
    /// Pitching moment about the CG (N m).
    pub m_nm: f64,
    /// Sum of the parts' lift (N).
    pub lift_n: f64,
    /// Sum of the parts' drag (N).
    pub drag_n: f64,
    /// First part index in [`Evaluation::parts`].
    pub first_part: usize,
    /// Number of parts.
    pub part_count: usize,
    /// Lift coefficient of the clean part (for downwash of surfaces behind it).
    pub clean_cl: f64,
}

/// Loads and inflow of one rotor group.
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize)]
pub struct RotorLoad {
    /// Thrust of the whole group (N).
    pub thrust_n: f64,
    /// Thrust axis above body x (rad).
    pub axis_rad: f64,
    /// Body-axis force along x incl. ram drag (N).
    pub x_n: f64,
    /// Body-axis force along z incl. ram drag (N).
    pub z_n: f64,
    /// Pitching moment about the CG (N m).
    pub m_nm: f64,
    /// Inflow through the disc along the induced direction (m/s).
    pub v_axial_mps: f64,
    /// Inflow in the disc plane (m/s).
    pub v_inplane_mps: f64,
    /// Per-rotor performance at this thrust and inflow.
    pub performance: rotor::RotorPerformance,
    /// Shaft power of the whole group (W).
    pub power_w: f64,
    /// `sin(axis_rad)`, kept so the next evaluation with the same axis need not compute it.
    #[serde(skip)]
    pub axis_sin: f64,
    /// `cos(axis_rad)`, as `axis_sin`.
    #[serde(skip)]
    pub axis_cos: f64,
}

/// Loads of the stability-derivative component.
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize)]
pub struct DerivativeLoad {
    /// Angle of attack at the reference point (rad).
    pub alpha_rad: f64,
    /// Body-axis force along x (N).
    pub x_n: f64,
    /// Body-axis force along z (N).
    pub z_n: f64,
    /// Pitching moment about the CG (N m).
    pub m_nm: f64,
    /// Lift (N).
    pub lift_n: f64,
    /// Drag (N).
    pub drag_n: f64,
}

/// Everything one call of the derivative function produces. Reuse it across calls: the
/// vectors keep their capacity, so the hot path does not allocate.
#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct Evaluation {
    /// d/dt of [u, w, q, theta] (SI).
    pub state_dot: [f64; 4],
    /// dx/dt (m/s), horizontal earth position.
    pub x_dot_mps: f64,
    /// dh/dt (m/s), height.
    pub h_dot_mps: f64,
    /// Total aerodynamic and propulsive force along body x (N), gravity excluded.
    pub x_n: f64,
    /// Total force along body z (N), gravity excluded.
    pub z_n: f64,
    /// Total pitching moment about the CG (N m).
    pub m_nm: f64,
    /// Airspeed at the CG (m/s).
    pub airspeed_mps: f64,
    /// Angle of attack at the CG, atan2(w_air, u_air) (rad).
    pub alpha_rad: f64,
    /// One entry per surface, in vehicle order.
    pub surfaces: Vec<SurfaceLoad>,
    /// All surface parts; each surface owns a contiguous range.
    pub parts: Vec<PartLoad>,
    /// One entry per rotor group.
    pub rotors: Vec<RotorLoad>,
    /// The derivative component, if the vehicle has one.
    pub derivatives: Option<DerivativeLoad>,
    /// Total shaft power (W).
    pub power_w: f64,
    /// Per tilt actuator `[angle, sin, cos]` of the last evaluation: the tilt is held within
    /// most trims, so its sine and cosine are computed again only when the angle changes.
    #[serde(skip)]
    pub tilt_trig: Vec<[f64; 3]>,
}

impl Evaluation {
    /// The parts of surface `i`.
    pub fn surface_parts(&self, i: usize) -> &[PartLoad] {
        let s = &self.surfaces[i];
        &self.parts[s.first_part..s.first_part + s.part_count]
    }
}

/// Wrap an angle to (-pi, pi].
pub fn wrap_pi(a: f64) -> f64 {
    use std::f64::consts::PI;
    if a > -PI && a <= PI {
        return a;
    }
    let r = a.rem_euclid(2.0 * PI);
    if r > PI {
        r - 2.0 * PI
    } else {
        r
    }
}

/// Current position of a point riding on actuator `act` (or fixed), with `trig[a]` the
/// `[angle, sin, cos]` of each actuator's tilt (as [`Point::rotated_about`]).
fn placed(v: &Vehicle, p: Point, act: Option<usize>, trig: &[[f64; 3]]) -> Point {
    match act {
        Some(a) => {
            let [_, s, c] = trig[a];
            let pivot = v.actuators[a].pivot;
            let dx = p.x_m - pivot.x_m;
            let dz = p.z_m - pivot.z_m;
            Point {
                x_m: pivot.x_m + dx * c + dz * s,
                z_m: pivot.z_m - dx * s + dz * c,
            }
        }
        None => p,
    }
}

/// `(sin, cos)` of `angle`, taken from `last = [angle, sin, cos]` when the angle is the same
/// (bit for bit) and computed (and kept) otherwise.
#[inline]
fn sin_cos_memo(angle: f64, last: &mut [f64; 3]) -> (f64, f64) {
    if last[0].to_bits() != angle.to_bits() {
        let (s, c) = angle.sin_cos();
        *last = [angle, s, c];
    }
    (last[1], last[2])
}

/// Resolve lift and drag into body axes for a local flow at body angle `flow_rad`
/// (flow_rad = atan2(w_rel, u_rel) of the surface's velocity through the air).
#[inline]
fn lift_drag_to_body(lift: f64, drag: f64, flow_rad: f64) -> (f64, f64) {
    let (s, c) = flow_rad.sin_cos();
    lift_drag_resolved(lift, drag, s, c)
}

/// As [`lift_drag_to_body`] with the sine and cosine of the flow angle given.
#[inline]
fn lift_drag_resolved(lift: f64, drag: f64, s: f64, c: f64) -> (f64, f64) {
    (-drag * c + lift * s, -drag * s - lift * c)
}

/// The nonlinear derivative function: state derivatives and the load of every component.
///
/// `state` holds inertial body velocities; `wind` is the air-mass velocity in earth axes.
/// All inputs are SI. `out` is overwritten.
pub fn evaluate(
    v: &Vehicle,
    atm: &Atmosphere,
    state: &State,
    controls: &Controls,
    wind: Wind,
    out: &mut Evaluation,
) {
    evaluate_with(v, atm, state, controls, wind, true, out);
}

/// As [`evaluate`] in still air with the alpha-dot terms of the derivative model left out:
/// the quasi-static loads that define static stability.
pub fn evaluate_quasi_static(
    v: &Vehicle,
    atm: &Atmosphere,
    state: &State,
    controls: &Controls,
    out: &mut Evaluation,
) {
    evaluate_with(v, atm, state, controls, Wind::default(), false, out);
}

fn evaluate_with(
    v: &Vehicle,
    atm: &Atmosphere,
    state: &State,
    controls: &Controls,
    wind: Wind,
    alpha_dot_terms: bool,
    out: &mut Evaluation,
) {
    let rho = atm.density_kg_m3;
    let (st, ct) = state.theta_rad.sin_cos();
    // Air-relative velocity of the CG in body axes.
    let u_air = state.u_mps - (ct * wind.x_mps - st * wind.z_mps);
    let w_air = state.w_mps - (st * wind.x_mps + ct * wind.z_mps);
    let q = state.q_rad_s;
    let tilt = &controls.tilt_rad;
    if out.tilt_trig.len() != v.actuators.len() {
        out.tilt_trig.clear();
        out.tilt_trig.resize(v.actuators.len(), [f64::NAN; 3]);
    }
    for (last, &t) in out.tilt_trig.iter_mut().zip(tilt) {
        sin_cos_memo(t, last);
    }
    let trig = &out.tilt_trig;
    // Speeds are bounded far below overflow (limits), so the plain square root is safe.
    out.airspeed_mps = (u_air * u_air + w_air * w_air).sqrt();
    out.alpha_rad = w_air.atan2(u_air);
    let mut fx = 0.0;
    let mut fz = 0.0;
    let mut mm = 0.0;
    let mut power = 0.0;
    // Velocity through the air of a point at lever arm (dx, dz) from the CG: v + omega x r.
    let local = |p: Point| -> (f64, f64, f64, f64) {
        let dx = p.x_m - v.cg.x_m;
        let dz = p.z_m - v.cg.z_m;
        (u_air + q * dz, w_air - q * dx, dx, dz)
    };

    // Rotors first: their induced velocity feeds the slipstream. The last evaluation's entry
    // of a group gives the sine and cosine of an unchanged axis.
    out.rotors.truncate(v.rotors.len());
    for (g, r) in v.rotors.iter().enumerate() {
        let pos = placed(v, r.position, r.actuator, trig);
        let (ul, wl, dx, dz) = local(pos);
        let axis = v.rotor_axis_rad(g, tilt);
        let (sa, ca) = match out.rotors.get(g) {
            Some(last) if last.axis_rad.to_bits() == axis.to_bits() => {
                (last.axis_sin, last.axis_cos)
            }
            _ => axis.sin_cos(),
        };
        // Thrust direction t = (cos tau, -sin tau); inflow through the disc along t.
        let vn = ul * ca - wl * sa;
        let (tx, tz) = (ul - vn * ca, wl + vn * sa);
        let vt = (tx * tx + tz * tz).sqrt();
        let t1 = controls.thrust_n[g].max(0.0);
        let perf = rotor::performance(t1, rho, r.disk_area_m2(), vn, vt, r.power_model);
        let n = r.count as f64;
        let mut gx = n * t1 * ca;
        let mut gz = -n * t1 * sa;
        if vt > 1e-9 {
            let d = n * r.momentum_drag_factor * perf.ram_drag_n / vt;
            gx -= d * tx;
            gz -= d * tz;
        }
        let gm = dz * gx - dx * gz;
        fx += gx;
        fz += gz;
        mm += gm;
        let gp = n * perf.shaft_power_w;
        power += gp;
        let load = RotorLoad {
            thrust_n: n * t1,
            axis_rad: axis,
            x_n: gx,
            z_n: gz,
            m_nm: gm,
            v_axial_mps: vn,
            v_inplane_mps: vt,
            performance: perf,
            power_w: gp,
            axis_sin: sa,
            axis_cos: ca,
        };
        match out.rotors.get_mut(g) {
            Some(slot) => *slot = load,
            None => out.rotors.push(load),
        }
    }

    // Surfaces, in file order (downwash sources come first).
    out.surfaces.clear();
    out.parts.clear();
    for s in &v.surfaces {
        let pos = placed(v, s.position, s.actuator, trig);
        let (ul, wl, dx, dz) = local(pos);
        let chord_angle = s.incidence_rad + s.actuator.map_or(0.0, |a| tilt[a]);
        let (flap, flap_cm) = s.elevator.map_or((0.0, 0.0), |e| {
            let el = &v.elevators[e];
            let d = controls.elevator_rad[e];
            (el.effectiveness * d, el.moment_per_rad * d)
        });
        let eps = s.downwash.as_ref().map_or(0.0, |d| {
            let src = &out.surfaces[d.source];
            let a_up = v.surfaces[d.source].polar.lift_slope_per_rad();
            if a_up > 0.0 {
                d.gradient * src.clean_cl / a_up
            } else {
                0.0
            }
        });
        let first = out.parts.len();
        let mut load = SurfaceLoad {
            first_part: first,
            ..Default::default()
        };
        let immersed: f64 = s.slipstream.iter().map(|l| l.fraction).sum();
        let clean = (1.0 - immersed).max(0.0);
        // Part 0: clean; then one per slipstream link.
        for k in 0..=s.slipstream.len() {
            let (frac, rotor_ix, ue, we, qratio) = if k == 0 {
                (clean, None, ul, wl, s.dynamic_pressure_ratio)
            } else {
                let l = &s.slipstream[k - 1];
                let rl = &out.rotors[l.rotor];
                let vw = l.wake_factor * rl.performance.induced_velocity_mps;
                let (sa, ca) = (rl.axis_sin, rl.axis_cos);
                // The wake moves against the thrust: the surface moves through it along +t.
                (l.fraction, Some(l.rotor), ul + vw * ca, wl - vw * sa, 1.0)
            };
            let speed2 = ue * ue + we * we;
            let speed = speed2.sqrt();
            let flow = we.atan2(ue) - eps;
            let alpha = wrap_pi(flow + chord_angle + flap);
            let c = s.polar.coefficients(alpha);
            let qdyn = 0.5 * rho * speed2 * qratio;
            let sa = frac * s.area_m2 * qdyn;
            let lift = sa * c.cl;
            let drag = sa * c.cd;
            // Without downwash the flow direction is the velocity's own: no sine or cosine.
            let (px, pz) = if eps == 0.0 && speed > 0.0 {
                lift_drag_resolved(lift, drag, we / speed, ue / speed)
            } else {
                lift_drag_to_body(lift, drag, flow)
            };
            let pm = sa * (c.cm + flap_cm) * s.chord_m + dz * px - dx * pz;
            load.x_n += px;
            load.z_n += pz;
            load.m_nm += pm;
            load.lift_n += lift;
            load.drag_n += drag;
            if k == 0 {
                load.clean_cl = c.cl;
            }
            out.parts.push(PartLoad {
                fraction: frac,
                rotor: rotor_ix,
                alpha_rad: alpha,
                speed_mps: speed,
                dynamic_pressure_pa: qdyn,
                lift_n: lift,
                drag_n: drag,
            });
        }
        load.part_count = out.parts.len() - first;
        fx += load.x_n;
        fz += load.z_n;
        mm += load.m_nm;
        out.surfaces.push(load);
    }

    let m = v.mass_kg;
    let g = G0_MPS2;
    // Rigid-body accelerations without alpha-dot terms.
    let mut u_dot = (fx - m * g * st) / m - q * state.w_mps;
    let mut w_dot = (fz + m * g * ct) / m + q * state.u_mps;
    let mut q_dot = mm / v.pitch_inertia_kg_m2;

    out.derivatives = None;
    if let Some(d) = &v.derivatives {
        let (ul, wl, dx, dz) = local(d.position);
        let speed2 = ul * ul + wl * wl;
        let speed = speed2.sqrt();
        let alpha = wl.atan2(ul);
        let qdyn = 0.5 * rho * speed2;
        let qs = qdyn * d.area_m2;
        let chat = if speed > 1e-6 {
            d.chord_m / (2.0 * speed)
        } else {
            0.0
        };
        let de = d.elevator.map_or(0.0, |e| controls.elevator_rad[e]);
        let a_lin = wrap_pi(alpha);
        let cl = d.cl0 + d.cl_alpha * a_lin + d.cl_q * q * chat + d.cl_elevator * de;
        let cd = d.cd0 + d.cd_alpha * a_lin + d.cd_k * (cl - d.cl0).powi(2);
        let cm = d.cm0 + d.cm_alpha * a_lin + d.cm_q * q * chat + d.cm_elevator * de;
        // The flow direction is the velocity's own: its sine and cosine without atan2.
        let (sf, cf) = if speed > 0.0 {
            (wl / speed, ul / speed)
        } else {
            alpha.sin_cos()
        };
        let (x0, z0) = lift_drag_resolved(qs * cl, qs * cd, sf, cf);
        let m0 = qs * d.chord_m * cm + dz * x0 - dx * z0;
        // Loads per unit alpha-dot.
        let (xa, za) = lift_drag_resolved(qs * d.cl_alphadot * chat, 0.0, sf, cf);
        let ma = qs * d.chord_m * d.cm_alphadot * chat + dz * xa - dx * za;
        let au = u_dot + x0 / m;
        let aw = w_dot + z0 / m;
        let alpha_dot = if alpha_dot_terms && speed2 > 1e-12 {
            let num = (ul * aw - wl * au) / speed2;
            let den = 1.0 - (ul * za - wl * xa) / (m * speed2);
            num / den
        } else {
            0.0
        };
        let xd = x0 + xa * alpha_dot;
        let zd = z0 + za * alpha_dot;
        let md = m0 + ma * alpha_dot;
        u_dot += xd / m;
        w_dot += zd / m;
        q_dot += md / v.pitch_inertia_kg_m2;
        fx += xd;
        fz += zd;
        mm += md;
        out.derivatives = Some(DerivativeLoad {
            alpha_rad: alpha,
            x_n: xd,
            z_n: zd,
            m_nm: md,
            lift_n: qs * (cl + d.cl_alphadot * chat * alpha_dot),
            drag_n: qs * cd,
        });
    }

    out.state_dot = [u_dot, w_dot, q_dot, q];
    out.x_dot_mps = state.u_mps * ct + state.w_mps * st;
    out.h_dot_mps = state.u_mps * st - state.w_mps * ct;
    out.x_n = fx;
    out.z_n = fz;
    out.m_nm = mm;
    out.power_w = power;
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wrap_keeps_the_half_open_circle() {
        use std::f64::consts::PI;
        assert_eq!(wrap_pi(PI), PI);
        assert!((wrap_pi(-PI) - PI).abs() < 1e-12);
        assert!((wrap_pi(3.0 * PI / 2.0) + PI / 2.0).abs() < 1e-12);
        assert!((wrap_pi(-7.0) - (-7.0 + 2.0 * PI)).abs() < 1e-12);
    }

    #[test]
    fn lift_is_perpendicular_to_flow() {
        // Level flow along +x (surface moving forward): lift points up (-z), drag back (-x).
        let (x, z) = lift_drag_to_body(1.0, 0.1, 0.0);
        assert!((x + 0.1).abs() < 1e-12 && (z + 1.0).abs() < 1e-12);
    }
}
