//! The simulation core: the right-hand side of the flight equations with actuators and the
//! feedback law, its integration with Dormand-Prince 5(4) in pieces between discontinuities,
//! and the sampling of the dense output into a time history.

use std::cell::{Cell, RefCell};

use nalgebra::DVector;
use ode_solvers::continuous_output_model::ContinuousOutputModel;
use ode_solvers::{Dopri5, OutputType, System};
use serde::Serialize;

use super::table::{Feedforward, FeedforwardTable};
use super::wind::WindModel;
use super::{FeedbackGains, FlightError, FlightSettings, Reference};
use crate::atmosphere::{isa, Atmosphere};
use crate::control::law::{law, InputLimits, LawInput, MAX_INPUTS};
use crate::control::MIN_THRUST_LAG_S;
use crate::dynamics::{evaluate, Controls, Evaluation, State, Wind};
use crate::rotor;
use crate::vehicle::Vehicle;

/// Angle-of-attack protection: narrow the pitch-offset limits so that no loaded part that is
/// short of a stall angle is pitched past it less `margin_rad`. A part's angle of attack is
/// taken to follow pitch at fixed flight path, scaled by the ratio of airspeed to the part's
/// local flow speed (a part in a strong slipstream moves less). Parts already beyond a stall
/// angle are left alone (the trim itself may have them there). Returns whether a limit was
/// narrowed.
#[allow(clippy::too_many_arguments)]
fn protect(
    v: &Vehicle,
    e: &Evaluation,
    density_kg_m3: f64,
    lim: &mut InputLimits,
    pitch_error_rad: f64,
    margin_rad: f64,
    min_load: f64,
    offset_limit_rad: f64,
) -> bool {
    let w = v.weight_n();
    let mut hi = offset_limit_rad;
    let mut lo = -offset_limit_rad;
    let mut check = |alpha: f64, pos: f64, neg: f64, load: f64, sens: f64| {
        if load < min_load || sens <= 1e-3 {
            return;
        }
        if alpha < pos {
            hi = hi.min(pitch_error_rad + (pos - margin_rad - alpha) / sens);
        }
        if alpha > neg {
            lo = lo.max(pitch_error_rad - (alpha - neg - margin_rad) / sens);
        }
    };
    for (i, surf) in v.surfaces.iter().enumerate() {
        let (pos, neg) = surf.polar.stall_angles_rad();
        for p in e.surface_parts(i) {
            let sens = if p.speed_mps > 1e-6 {
                (e.airspeed_mps / p.speed_mps).min(1.0)
            } else {
                0.0
            };
            check(
                p.alpha_rad,
                pos,
                neg,
                p.dynamic_pressure_pa * p.fraction * surf.area_m2 / w,
                sens,
            );
        }
    }
    if let (Some(dm), Some(dl)) = (&v.derivatives, &e.derivatives) {
        let load = 0.5 * density_kg_m3 * e.airspeed_mps * e.airspeed_mps * dm.area_m2 / w;
        check(
            dl.alpha_rad,
            dm.alpha_stall_pos_rad,
            dm.alpha_stall_neg_rad,
            load,
            1.0,
        );
    }
    hi = hi.clamp(-offset_limit_rad, offset_limit_rad);
    lo = lo.clamp(-offset_limit_rad, offset_limit_rad);
    if hi < lo {
        let m = 0.5 * (hi + lo);
        hi = m;
        lo = m;
    }
    let narrowed = hi < offset_limit_rad || lo > -offset_limit_rad;
    lim.pitch_offset_hi_rad = hi;
    lim.pitch_offset_lo_rad = lo;
    narrowed
}

/// Step budget of one integration piece: a regular flight takes well under a hundred steps per
/// simulated second; inputs chattering between limits take far more, and are stopped here.
const MAX_STEPS_PER_PIECE: u32 = 60_000;

/// Share of the demand left unmet above which the speed and height integrators are held.
const SHORTFALL_HOLD: f64 = 0.05;

/// How the inputs are set.
pub enum Mode<'a> {
    /// Fixed commands (thrust per rotor, elevators, tilts in flat order).
    Open {
        /// The commands.
        commands: &'a Controls,
    },
    /// Feedforward plus feedback, following a reference.
    Closed {
        /// Trim table.
        table: &'a FeedforwardTable,
        /// Feedback design.
        gains: &'a FeedbackGains,
        /// Reference.
        reference: Reference,
    },
}

/// Positions of the states in the integrator's vector.
#[derive(Debug, Clone, Copy)]
pub struct Layout {
    /// Tilt actuators.
    pub tilts: usize,
    /// Rotor groups.
    pub rotors: usize,
    /// Elevator servo states (one per elevator, or none when they are positioned at once).
    pub servos: usize,
    /// Delay states (one per thrust and elevator command in closed loop, or none).
    pub delays: usize,
}

impl Layout {
    /// Speed-error integral.
    pub const SPEED_INTEGRAL: usize = 6;
    /// Height-error integral.
    pub const HEIGHT_INTEGRAL: usize = 7;
    /// Planned (governed) airspeed.
    pub const PLAN_SPEED: usize = 8;
    /// Reference height without the command step.
    pub const PLAN_HEIGHT: usize = 9;
    const FIXED: usize = 10;
    /// Tilt state of actuator `i` (rad).
    pub fn tilt(&self, i: usize) -> usize {
        Self::FIXED + i
    }
    /// Thrust state of group `g` (N per rotor).
    pub fn thrust(&self, g: usize) -> usize {
        Self::FIXED + self.tilts + g
    }
    /// Energy drawn by group `g` (J).
    pub fn energy(&self, g: usize) -> usize {
        Self::FIXED + self.tilts + self.rotors + g
    }
    /// Position of elevator `k` behind its servo (rad).
    pub fn servo(&self, k: usize) -> usize {
        Self::FIXED + self.tilts + 2 * self.rotors + k
    }
    /// Pade delay state of feedback input `j` (thrusts, then elevators).
    pub fn delay(&self, j: usize) -> usize {
        Self::FIXED + self.tilts + 2 * self.rotors + self.servos + j
    }
    /// Length of the state vector.
    pub fn len(&self) -> usize {
        Self::FIXED + self.tilts + 2 * self.rotors + self.servos + self.delays
    }
    /// Never empty (rigid-body states are always there).
    pub fn is_empty(&self) -> bool {
        false
    }
}

/// Everything the right-hand side works out besides the derivatives.
#[derive(Debug, Clone, Copy)]
pub struct Diagnostics {
    /// Whether the evaluation was valid (finite, atmosphere in range).
    pub ok: bool,
    /// Air density (kg/m^3).
    pub density_kg_m3: f64,
    /// Airspeed at the CG (m/s).
    pub airspeed_mps: f64,
    /// Air-relative speed along the reference path (m/s).
    pub path_speed_mps: f64,
    /// Rate of climb (m/s).
    pub climb_rate_mps: f64,
    /// Air velocity (earth axes).
    pub wind: Wind,
    /// Reference speed (m/s), NaN open loop.
    pub speed_ref_mps: f64,
    /// Reference height (m), NaN open loop.
    pub height_ref_m: f64,
    /// Pitch reference incl. offset (rad), NaN open loop.
    pub pitch_ref_rad: f64,
    /// Pitch offset of the speed and height loops (rad).
    pub pitch_offset_rad: f64,
    /// Pitch offset at its limit.
    pub pitch_offset_limited: bool,
    /// Angle-of-attack protection narrowed the pitch-offset limits.
    pub alpha_protected: bool,
    /// The plan is held back (under half its rate) because the airspeed does not follow.
    pub plan_held: bool,
    /// Tilt command after range limits (rad).
    pub tilt_cmd_rad: [f64; MAX_INPUTS],
    /// Tilt rate limit active.
    pub tilt_rate_limited: [bool; MAX_INPUTS],
    /// Thrust command per rotor after limits (N).
    pub thrust_cmd_n: [f64; MAX_INPUTS],
    /// Thrust available per rotor (N).
    pub thrust_available_n: [f64; MAX_INPUTS],
    /// Feedback input at a limit (thrusts then elevators).
    pub saturated: [bool; MAX_INPUTS],
    /// Which limit: true = upper.
    pub saturated_high: [bool; MAX_INPUTS],
    /// Integrators held.
    pub integrators_held: bool,
    /// Share of the allocation demand left unmet (0..1).
    pub shortfall: f64,
    /// Scheduled tilt at the measured airspeed (rad).
    pub tilt_schedule_rad: [f64; MAX_INPUTS],
    /// Nearest table point.
    pub table_point: usize,
}

impl Default for Diagnostics {
    fn default() -> Self {
        Diagnostics {
            ok: true,
            density_kg_m3: 0.0,
            airspeed_mps: 0.0,
            path_speed_mps: 0.0,
            climb_rate_mps: 0.0,
            wind: Wind::default(),
            speed_ref_mps: f64::NAN,
            height_ref_m: f64::NAN,
            pitch_ref_rad: f64::NAN,
            pitch_offset_rad: 0.0,
            pitch_offset_limited: false,
            alpha_protected: false,
            plan_held: false,
            tilt_cmd_rad: [0.0; MAX_INPUTS],
            tilt_rate_limited: [false; MAX_INPUTS],
            thrust_cmd_n: [0.0; MAX_INPUTS],
            thrust_available_n: [0.0; MAX_INPUTS],
            saturated: [false; MAX_INPUTS],
            saturated_high: [false; MAX_INPUTS],
            integrators_held: false,
            shortfall: 0.0,
            tilt_schedule_rad: [f64::NAN; MAX_INPUTS],
            table_point: 0,
        }
    }
}

/// Scratch reused by every right-hand-side call (the hot path does not allocate).
pub struct Scratch {
    /// Loads.
    pub eval: Evaluation,
    /// Actuator positions.
    pub controls: Controls,
    /// Feedforward at the current airspeed.
    pub ff: Feedforward,
    /// Diagnostics.
    pub diag: Diagnostics,
}

/// Guards that stop a departed flight.
#[derive(Debug, Clone, Copy)]
struct Guards {
    max_rate_rad_s: f64,
    max_height_error_m: Option<f64>,
    max_speed_mps: f64,
}

/// The system handed to the integrator.
pub struct Sys<'a> {
    v: &'a Vehicle,
    altitude_m: f64,
    offset_k: f64,
    mode: &'a Mode<'a>,
    wind: &'a WindModel,
    tilt_servo: f64,
    elevator_servo: f64,
    delay_s: f64,
    alpha_protection_rad: Option<f64>,
    min_load: f64,
    stalled_share: f64,
    path_cos: f64,
    layout: Layout,
    scratch: RefCell<Scratch>,
    bad: Cell<bool>,
    stop: RefCell<Option<(f64, String)>>,
    done: Cell<Option<f64>>,
    guards: Guards,
    progress: &'a dyn Fn(f64),
    last_progress: Cell<f64>,
    end_s: f64,
}

impl<'a> Sys<'a> {
    /// A system for vehicle `v` in the atmosphere of `atm` (its altitude is the start height).
    pub fn new(
        v: &'a Vehicle,
        atm: &Atmosphere,
        settings: &FlightSettings,
        mode: &'a Mode<'a>,
        wind: &'a WindModel,
        end_s: f64,
        progress: &'a dyn Fn(f64),
    ) -> Sys<'a> {
        let (max_speed, height) = match mode {
            Mode::Open { .. } => (1000.0, None),
            Mode::Closed { table, .. } => (3.0 * table.speed_range().1 + 30.0, Some(100.0)),
        };
        Sys {
            v,
            altitude_m: atm.altitude_m,
            offset_k: atm.temperature_offset_k,
            mode,
            wind,
            tilt_servo: settings.tilt_servo_bandwidth_rad_s,
            elevator_servo: settings.elevator_bandwidth_rad_s,
            delay_s: settings.loop_delay_s,
            alpha_protection_rad: settings.alpha_protection_margin_rad,
            min_load: settings.stall_load_fraction,
            stalled_share: settings.stalled_load_share,
            path_cos: settings.climb_rad.cos().max(0.1),
            layout: Layout {
                tilts: v.actuators.len(),
                rotors: v.rotors.len(),
                servos: if settings.elevator_bandwidth_rad_s > 0.0 {
                    v.elevators.len()
                } else {
                    0
                },
                delays: if settings.loop_delay_s > 0.0 && matches!(mode, Mode::Closed { .. }) {
                    v.rotors.len() + v.elevators.len()
                } else {
                    0
                },
            },
            scratch: RefCell::new(Scratch {
                eval: Evaluation::default(),
                controls: Controls::zeros(v),
                ff: Feedforward::default(),
                diag: Diagnostics::default(),
            }),
            bad: Cell::new(false),
            stop: RefCell::new(None),
            done: Cell::new(None),
            guards: Guards {
                max_rate_rad_s: 6.0,
                max_height_error_m: height,
                max_speed_mps: max_speed,
            },
            progress,
            last_progress: Cell::new(f64::NEG_INFINITY),
            end_s,
        }
    }

    /// State layout.
    pub fn layout(&self) -> Layout {
        self.layout
    }

    /// Right-hand side at time `t` into `dy`; loads and diagnostics stay in `s`.
    pub fn rhs(&self, t: f64, y: &[f64], dy: &mut [f64], s: &mut Scratch) {
        let v = self.v;
        let l = self.layout;
        let d = &mut s.diag;
        *d = Diagnostics::default();
        let (u, w, q, th, h) = (y[0], y[1], y[2], y[3], y[5]);
        let atm = match isa(self.altitude_m + h, self.offset_k) {
            Ok(a) if y.iter().all(|x| x.is_finite()) => a,
            _ => {
                d.ok = false;
                dy.iter_mut().for_each(|x| *x = 0.0);
                return;
            }
        };
        d.density_kg_m3 = atm.density_kg_m3;
        let wind = self.wind.at(t);
        d.wind = wind;
        let (st, ct) = th.sin_cos();
        let ua = u - (ct * wind.x_mps - st * wind.z_mps);
        let wa = w - (st * wind.x_mps + ct * wind.z_mps);
        d.airspeed_mps = ua.hypot(wa);
        d.path_speed_mps = (ua * ct + wa * st) / self.path_cos;
        d.climb_rate_mps = u * st - w * ct;
        for (i, act) in v.actuators.iter().enumerate() {
            s.controls.tilt_rad[i] = y[l.tilt(i)].clamp(act.min_rad, act.max_rad);
        }
        let nt = v.rotors.len();
        let ne = v.elevators.len();
        for g in 0..nt {
            s.controls.thrust_n[g] = y[l.thrust(g)].max(0.0);
        }
        let mut cmd = [0.0; MAX_INPUTS];
        let mut tilt_cmd = [0.0; MAX_INPUTS];
        let mut err = (0.0, 0.0);
        let mut plan_rates = (0.0, 0.0);
        let mut thrust_limit = [f64::NAN; MAX_INPUTS];
        match self.mode {
            Mode::Open { commands } => {
                for (j, c) in cmd.iter_mut().enumerate().take(nt + ne) {
                    *c = commands.flat(j);
                }
                for (i, c) in tilt_cmd.iter_mut().enumerate().take(v.actuators.len()) {
                    *c = commands.tilt_rad[i];
                }
            }
            Mode::Closed {
                table,
                gains,
                reference,
            } => {
                let vr = reference.clamp_speed(y[Layout::PLAN_SPEED]);
                let ar = reference.speed_rate(t, vr, d.path_speed_mps);
                let hr = y[Layout::PLAN_HEIGHT] + reference.height_step(t);
                let hdr = vr * reference.climb_rad.sin();
                plan_rates = (ar, hdr);
                d.plan_held = reference.accel_mps2 != 0.0
                    && t >= reference.ramp_start_s
                    && !reference.reached(vr)
                    && ar.abs() < 0.5 * reference.accel_mps2.abs();
                // Feedforward and tilt follow the plan; the allocation is scheduled on the
                // measured airspeed.
                table.at(vr, &mut s.ff);
                let alloc = table.allocation_at(d.airspeed_mps);
                let ff = &s.ff;
                d.table_point = table.nearest(d.airspeed_mps);
                for (i, x) in d
                    .tilt_schedule_rad
                    .iter_mut()
                    .enumerate()
                    .take(v.actuators.len())
                {
                    *x = table.tilt_at(d.airspeed_mps, i);
                }
                // The airframe's own pitch acceleration with the feedforward inputs.
                for g in 0..nt {
                    s.controls.thrust_n[g] = ff.inputs[g].max(0.0);
                }
                for (k, e) in v.elevators.iter().enumerate() {
                    s.controls.elevator_rad[k] = ff.inputs[nt + k].clamp(e.min_rad, e.max_rad);
                }
                let state = State {
                    u_mps: u,
                    w_mps: w,
                    q_rad_s: q,
                    theta_rad: th,
                };
                evaluate(v, &atm, &state, &s.controls, wind, &mut s.eval);
                let own_qdot = s.eval.state_dot[2];
                let mut lim = InputLimits {
                    base: ff.inputs,
                    lo: [0.0; MAX_INPUTS],
                    hi: [0.0; MAX_INPUTS],
                    pitch_offset_lo_rad: -gains.pitch_offset_limit_rad,
                    pitch_offset_hi_rad: gains.pitch_offset_limit_rad,
                };
                for (g, r) in v.rotors.iter().enumerate() {
                    lim.hi[g] = r.thrust_max_n;
                    s.controls.thrust_n[g] = y[l.thrust(g)].max(0.0);
                }
                for (k, e) in v.elevators.iter().enumerate() {
                    lim.lo[nt + k] = e.min_rad;
                    lim.hi[nt + k] = e.max_rad;
                }
                if let Some(margin) = self.alpha_protection_rad {
                    d.alpha_protected = protect(
                        v,
                        &s.eval,
                        atm.density_kg_m3,
                        &mut lim,
                        th - ff.pitch_rad,
                        margin,
                        self.min_load,
                        gains.pitch_offset_limit_rad,
                    );
                }
                d.speed_ref_mps = vr;
                d.height_ref_m = hr;
                let inp = LawInput {
                    speed_error_mps: vr - d.path_speed_mps,
                    speed_integral_m: y[Layout::SPEED_INTEGRAL],
                    height_error_m: hr - h,
                    height_rate_error_mps: hdr - d.climb_rate_mps,
                    height_integral_m_s: y[Layout::HEIGHT_INTEGRAL],
                    pitch_ff_rad: ff.pitch_rad,
                    pitch_rad: th,
                    pitch_rate_rad_s: q,
                    accel_ref_mps2: ar,
                    pitch_accel_own_rad_s2: own_qdot,
                };
                err = (inp.speed_error_mps, inp.height_error_m);
                let mut out = law(gains, &alloc, &inp, Some(&lim));
                // Power: where a command needs more shaft power than available at this
                // inflow, lower that rotor's limit to the thrust available and allocate again
                // (one power evaluation per rotor; the root solve only when it is short).
                let mut again = false;
                for (g, r) in v.rotors.iter().enumerate() {
                    let c = ff.inputs[g] + out.delta[g];
                    if c <= 0.0 {
                        continue;
                    }
                    let rl = &s.eval.rotors[g];
                    let (rho, area) = (atm.density_kg_m3, r.disk_area_m2());
                    let p = rotor::performance(
                        c,
                        rho,
                        area,
                        rl.v_axial_mps,
                        rl.v_inplane_mps,
                        r.power_model,
                    );
                    if p.shaft_power_w > r.power_max_w {
                        lim.hi[g] = rotor::thrust_available(
                            r.thrust_max_n,
                            r.power_max_w,
                            rho,
                            area,
                            rl.v_axial_mps,
                            rl.v_inplane_mps,
                            r.power_model,
                        );
                        again = true;
                    }
                }
                if again {
                    out = law(gains, &alloc, &inp, Some(&lim));
                }
                thrust_limit = lim.hi;
                d.pitch_offset_rad = out.pitch_offset_rad;
                d.pitch_offset_limited = out.pitch_offset_limited;
                d.pitch_ref_rad = ff.pitch_rad + out.pitch_offset_rad;
                d.shortfall = out.shortfall;
                for (j, c) in cmd.iter_mut().enumerate().take(nt + ne) {
                    *c = ff.inputs[j] + out.delta[j];
                    // Held at a limit counts as a saturation when the trim value is not at that
                    // limit, or when demand goes unmet (an input idle in trim is not saturated).
                    let held_at = if out.high[j] { lim.hi[j] } else { lim.lo[j] };
                    let scale = if j < nt {
                        v.rotors[j].thrust_max_n
                    } else {
                        0.5 * (lim.hi[j] - lim.lo[j])
                    };
                    let away = (held_at - ff.inputs[j]).abs() > 0.01 * scale.abs().max(1e-9);
                    d.saturated[j] = out.fixed[j] && (away || out.shortfall > SHORTFALL_HOLD);
                    d.saturated_high[j] = out.high[j];
                }
                tilt_cmd[..v.actuators.len()].copy_from_slice(&ff.tilt_rad[..v.actuators.len()]);
            }
        }
        // The feedback's sensor-plus-computation delay, as the loop margins model it: the
        // first-order Pade approximant (1 - s T / 2) / (1 + s T / 2) of each command,
        // out = 2 z - c with dz/dt = (c - z) 2 / T.
        for j in 0..l.delays {
            let z = y[l.delay(j)];
            dy[l.delay(j)] = (cmd[j] - z) * 2.0 / self.delay_s;
            cmd[j] = 2.0 * z - cmd[j];
        }
        for (k, e) in v.elevators.iter().enumerate() {
            let c = cmd[nt + k];
            let x = c.clamp(e.min_rad, e.max_rad);
            if (c - x).abs() > 1e-9 {
                d.saturated[nt + k] = true;
                d.saturated_high[nt + k] = c > x;
            }
            s.controls.elevator_rad[k] = if l.servos > 0 {
                // A first-order servo towards the (limited) command.
                let pos = y[l.servo(k)];
                dy[l.servo(k)] = self.elevator_servo * (x - pos);
                pos.clamp(e.min_rad, e.max_rad)
            } else {
                x
            };
        }
        let state = State {
            u_mps: u,
            w_mps: w,
            q_rad_s: q,
            theta_rad: th,
        };
        evaluate(v, &atm, &state, &s.controls, wind, &mut s.eval);
        let e = &s.eval;
        for (g, r) in v.rotors.iter().enumerate() {
            let rl = &e.rotors[g];
            // Closed loop the limit came with the allocation; open loop it is worked out here.
            let avail = if thrust_limit[g].is_finite() {
                thrust_limit[g]
            } else {
                rotor::thrust_available(
                    r.thrust_max_n,
                    r.power_max_w,
                    atm.density_kg_m3,
                    r.disk_area_m2(),
                    rl.v_axial_mps,
                    rl.v_inplane_mps,
                    r.power_model,
                )
            };
            let c = cmd[g];
            let x = c.clamp(0.0, avail.max(0.0));
            let tol = 1e-6 * r.thrust_max_n;
            if c < x - tol || c > x + tol {
                d.saturated[g] = true;
                d.saturated_high[g] = c > x + tol;
            }
            d.thrust_cmd_n[g] = x;
            d.thrust_available_n[g] = avail;
            let lag = r.thrust_lag_s.max(MIN_THRUST_LAG_S);
            dy[l.thrust(g)] = (x - y[l.thrust(g)]) / lag;
            dy[l.energy(g)] = rl.power_w;
        }
        for (i, act) in v.actuators.iter().enumerate() {
            let c = tilt_cmd[i].clamp(act.min_rad, act.max_rad);
            d.tilt_cmd_rad[i] = c;
            let x = y[l.tilt(i)];
            let want = self.tilt_servo * (c - x);
            let rate = want.clamp(-act.rate_rad_s, act.rate_rad_s);
            d.tilt_rate_limited[i] = (want - rate).abs() > 1e-9;
            dy[l.tilt(i)] = rate;
        }
        dy[..4].copy_from_slice(&e.state_dot);
        dy[4] = e.x_dot_mps;
        dy[5] = e.h_dot_mps;
        // Conditional integration, blended so the right-hand side stays continuous: full rate
        // while the demand is met, none once SHORTFALL_HOLD of it is not.
        let gate = if d.pitch_offset_limited {
            0.0
        } else {
            (2.0 - 2.0 * d.shortfall / SHORTFALL_HOLD).clamp(0.0, 1.0)
        };
        d.integrators_held = gate < 1.0;
        let closed = matches!(self.mode, Mode::Closed { .. });
        dy[Layout::SPEED_INTEGRAL] = if closed { gate * err.0 } else { 0.0 };
        dy[Layout::HEIGHT_INTEGRAL] = if closed { gate * err.1 } else { 0.0 };
        dy[Layout::PLAN_SPEED] = plan_rates.0;
        dy[Layout::PLAN_HEIGHT] = plan_rates.1;
        if dy.iter().any(|x| !x.is_finite()) {
            d.ok = false;
            dy.iter_mut().for_each(|x| *x = 0.0);
        }
    }

    fn check_departure(&self, t: f64, y: &[f64]) -> Option<String> {
        if self.bad.get() || y.iter().any(|x| !x.is_finite()) {
            return Some(
                "the state or the loads became non-finite, or the height left the ISA troposphere"
                    .into(),
            );
        }
        let g = &self.guards;
        if y[2].abs() > g.max_rate_rad_s {
            return Some(format!(
                "pitch rate {:.1} deg/s beyond {:.0} deg/s",
                y[2].to_degrees(),
                g.max_rate_rad_s.to_degrees()
            ));
        }
        let speed = y[0].hypot(y[1]);
        if speed > g.max_speed_mps {
            return Some(format!(
                "speed {speed:.1} m/s beyond {:.0} m/s",
                g.max_speed_mps
            ));
        }
        if let (Some(lim), Mode::Closed { reference, .. }) = (g.max_height_error_m, self.mode) {
            let dh = y[5] - y[Layout::PLAN_HEIGHT] - reference.height_step(t);
            if dh.abs() > lim {
                return Some(format!(
                    "height {dh:+.1} m off the reference (limit {lim:.0} m)"
                ));
            }
        }
        None
    }
}

struct SysRef<'s, 'a>(&'s Sys<'a>);

impl System<f64, DVector<f64>> for SysRef<'_, '_> {
    fn system(&self, t: f64, y: &DVector<f64>, dy: &mut DVector<f64>) {
        let mut s = self.0.scratch.borrow_mut();
        self.0.rhs(t, y.as_slice(), dy.as_mut_slice(), &mut s);
        if !s.diag.ok {
            self.0.bad.set(true);
        }
    }

    fn solout(&mut self, t: f64, y: &DVector<f64>, _dy: &DVector<f64>) -> bool {
        let sys = self.0;
        if t - sys.last_progress.get() >= 0.25 {
            sys.last_progress.set(t);
            (sys.progress)((t / sys.end_s).clamp(0.0, 1.0));
        }
        if let Some(why) = sys.check_departure(t, y.as_slice()) {
            *sys.stop.borrow_mut() = Some((t, why));
            return true;
        }
        // The manoeuvre is over once the plan has held its end speed for the hold time.
        if let Mode::Closed { reference, .. } = sys.mode {
            if reference.accel_mps2 != 0.0 && t >= reference.ramp_start_s {
                let plan = reference.clamp_speed(y[Layout::PLAN_SPEED]);
                match sys.done.get() {
                    None if reference.reached(plan) => sys.done.set(Some(t)),
                    Some(t0) if t >= t0 + reference.hold_after_s => return true,
                    _ => {}
                }
            }
        }
        false
    }
}

/// Integrator statistics.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct IntegratorStats {
    /// Right-hand-side evaluations.
    pub evaluations: u64,
    /// Accepted steps.
    pub accepted_steps: u64,
    /// Rejected steps.
    pub rejected_steps: u64,
    /// Pieces integrated separately.
    pub pieces: usize,
    /// Relative tolerance (-).
    pub relative_tolerance: f64,
    /// Absolute tolerance (SI).
    pub absolute_tolerance: f64,
}

/// One sample of the time history (SI; angles in rad).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sample {
    /// Time (s).
    pub time_s: f64,
    /// Horizontal distance from the start (m).
    pub x_m: f64,
    /// Height above the start (m).
    pub height_m: f64,
    /// Rigid-body state.
    pub state: State,
    /// Airspeed (m/s).
    pub airspeed_mps: f64,
    /// Angle of attack at the CG (rad).
    pub alpha_rad: f64,
    /// Rate of climb (m/s).
    pub climb_rate_mps: f64,
    /// Horizontal ground speed (m/s).
    pub ground_speed_mps: f64,
    /// Reference airspeed (m/s), NaN open loop.
    pub speed_ref_mps: f64,
    /// Reference height (m), NaN open loop.
    pub height_ref_m: f64,
    /// Pitch reference (rad), NaN open loop.
    pub pitch_ref_rad: f64,
    /// Pitch offset from the speed and height loops (rad).
    pub pitch_offset_rad: f64,
    /// Air velocity (earth axes).
    pub wind: Wind,
    /// Tilt of each actuator (rad).
    pub tilt_rad: Vec<f64>,
    /// Tilt command: the schedule at the planned airspeed (rad).
    pub tilt_cmd_rad: Vec<f64>,
    /// The schedule at the flown airspeed (rad), NaN open loop.
    pub tilt_schedule_rad: Vec<f64>,
    /// Thrust per rotor of each group (N).
    pub thrust_n: Vec<f64>,
    /// Thrust command per rotor after limits (N).
    pub thrust_cmd_n: Vec<f64>,
    /// Thrust available per rotor (N): the lower of the cap and the thrust the shaft power
    /// allows at the sample's inflow, as in the sweep (`margins::thrust_available`).
    pub thrust_available_n: Vec<f64>,
    /// Shaft power of each group (W).
    pub power_w: Vec<f64>,
    /// Energy drawn by each group so far (J).
    pub energy_j: Vec<f64>,
    /// Elevator deflections (rad).
    pub elevator_rad: Vec<f64>,
    /// Angle of attack of every surface part, in evaluation order (rad); the derivative
    /// model, if any, last.
    pub part_alpha_rad: Vec<f64>,
    /// Dynamic pressure x area of every part over the weight (-).
    pub part_load: Vec<f64>,
    /// Per surface, whether its stall is unsafe under the sweep's stall rule
    /// ([`crate::margins::stall_assessment`] at the default stalled-load share).
    pub stall_unsafe: Vec<bool>,
    /// Feedback input at a limit (thrusts then elevators); then each tilt at its rate limit.
    pub saturated: Vec<bool>,
    /// Saturation at the upper limit (same layout).
    pub saturated_high: Vec<bool>,
    /// Pitch offset at its limit.
    pub pitch_offset_limited: bool,
    /// Angle-of-attack protection narrowing the pitch-offset limits.
    pub alpha_protected: bool,
    /// The plan held back because the airspeed does not follow it.
    pub plan_held: bool,
    /// Nearest table point (closed loop).
    pub table_point: usize,
}

/// The integrated flight before summary.
pub struct Run {
    /// Samples.
    pub samples: Vec<Sample>,
    /// Why the flight stopped early (time, reason).
    pub stopped: Option<(f64, String)>,
    /// Statistics.
    pub stats: IntegratorStats,
}

fn sample_of(sys: &Sys, t: f64, y: &DVector<f64>) -> Sample {
    let v = sys.v;
    let l = sys.layout;
    let mut dy = vec![0.0; l.len()];
    let mut s = sys.scratch.borrow_mut();
    sys.rhs(t, y.as_slice(), &mut dy, &mut s);
    let e = &s.eval;
    let d = &s.diag;
    let w = v.weight_n();
    let mut part_alpha = Vec::with_capacity(e.parts.len() + 1);
    let mut part_load = Vec::with_capacity(e.parts.len() + 1);
    for (i, surf) in v.surfaces.iter().enumerate() {
        for p in e.surface_parts(i) {
            part_alpha.push(p.alpha_rad);
            part_load.push(p.dynamic_pressure_pa * p.fraction * surf.area_m2 / w);
        }
    }
    if let (Some(dm), Some(dl)) = (&v.derivatives, &e.derivatives) {
        part_alpha.push(dl.alpha_rad);
        part_load.push(0.5 * d.density_kg_m3 * e.airspeed_mps * e.airspeed_mps * dm.area_m2 / w);
    }
    let stall_unsafe = crate::margins::stall_assessment(v, d.density_kg_m3, e, sys.stalled_share)
        .surfaces
        .iter()
        .map(|st| st.verdict == crate::margins::StallVerdict::Stalled)
        .collect();
    let nt = v.rotors.len();
    let ne = v.elevators.len();
    let na = v.actuators.len();
    let mut saturated: Vec<bool> = d.saturated[..nt + ne].to_vec();
    saturated.extend_from_slice(&d.tilt_rate_limited[..na]);
    let mut high: Vec<bool> = d.saturated_high[..nt + ne].to_vec();
    high.extend((0..na).map(|i| dy[l.tilt(i)] > 0.0));
    let th = y[3];
    Sample {
        time_s: t,
        x_m: y[4],
        height_m: y[5],
        state: State {
            u_mps: y[0],
            w_mps: y[1],
            q_rad_s: y[2],
            theta_rad: th,
        },
        airspeed_mps: d.airspeed_mps,
        alpha_rad: e.alpha_rad,
        climb_rate_mps: d.climb_rate_mps,
        ground_speed_mps: e.x_dot_mps,
        speed_ref_mps: d.speed_ref_mps,
        height_ref_m: d.height_ref_m,
        pitch_ref_rad: d.pitch_ref_rad,
        pitch_offset_rad: d.pitch_offset_rad,
        wind: d.wind,
        tilt_rad: (0..na).map(|i| y[l.tilt(i)]).collect(),
        tilt_cmd_rad: d.tilt_cmd_rad[..na].to_vec(),
        tilt_schedule_rad: d.tilt_schedule_rad[..na].to_vec(),
        thrust_n: (0..nt).map(|g| y[l.thrust(g)].max(0.0)).collect(),
        thrust_cmd_n: d.thrust_cmd_n[..nt].to_vec(),
        // One definition with the sweep (`margins::thrust_available`): the lower of the cap
        // and the thrust the power allows at this inflow, whether or not the command needs it.
        thrust_available_n: v
            .rotors
            .iter()
            .zip(&e.rotors)
            .map(|(r, rl)| {
                crate::rotor::thrust_available(
                    r.thrust_max_n,
                    r.power_max_w,
                    d.density_kg_m3,
                    r.disk_area_m2(),
                    rl.v_axial_mps,
                    rl.v_inplane_mps,
                    r.power_model,
                )
            })
            .collect(),
        power_w: e.rotors.iter().map(|r| r.power_w).collect(),
        energy_j: (0..nt).map(|g| y[l.energy(g)]).collect(),
        elevator_rad: s.controls.elevator_rad.clone(),
        part_alpha_rad: part_alpha,
        part_load,
        stall_unsafe,
        saturated,
        saturated_high: high,
        pitch_offset_limited: d.pitch_offset_limited,
        alpha_protected: d.alpha_protected,
        plan_held: d.plan_held,
        table_point: d.table_point,
    }
}

/// Integrate from `initial` (rigid-body state, actuators at `start_controls`) to `end_s` and
/// sample the result.
#[allow(clippy::too_many_arguments)]
pub fn run(
    v: &Vehicle,
    atm: &Atmosphere,
    settings: &FlightSettings,
    mode: &Mode,
    wind: &WindModel,
    initial: &State,
    start_controls: &Controls,
    end_s: f64,
    progress: &dyn Fn(f64),
) -> Result<Run, FlightError> {
    let inputs = v.rotors.len() + v.elevators.len();
    if inputs > MAX_INPUTS || v.actuators.len() > MAX_INPUTS {
        return Err(FlightError::TooManyInputs {
            inputs: inputs.max(v.actuators.len()),
            max: MAX_INPUTS,
        });
    }
    let sys = Sys::new(v, atm, settings, mode, wind, end_s, progress);
    let l = sys.layout();
    let y0 = initial_vector(&sys, initial, start_controls);
    // Pieces between the known discontinuities of the inputs.
    let mut cuts: Vec<f64> = Vec::new();
    if let Mode::Closed { reference, .. } = mode {
        cuts.extend(reference.breakpoints());
    }
    if let Some(g) = &wind.gust {
        cuts.extend(g.breakpoints());
    }
    cuts.retain(|t| t.is_finite() && *t > 1e-9 && *t < end_s - 1e-9);
    cuts.push(end_s);
    cuts.sort_by(f64::total_cmp);
    cuts.dedup_by(|a, b| (*a - *b).abs() < 1e-9);

    let mut stats = IntegratorStats {
        relative_tolerance: settings.relative_tolerance,
        absolute_tolerance: settings.absolute_tolerance,
        ..Default::default()
    };
    let mut pieces: Vec<(f64, f64, ContinuousOutputModel<f64, DVector<f64>>)> = Vec::new();
    let mut t0 = 0.0;
    let mut y = y0;
    let mut reached = 0.0;
    for &t1 in &cuts {
        if t1 - t0 <= 1e-9 {
            continue;
        }
        let mut model = ContinuousOutputModel::default();
        let mut stepper = Dopri5::from_param(
            SysRef(&sys),
            t0,
            t1,
            t1 - t0,
            y.clone(),
            settings.relative_tolerance,
            settings.absolute_tolerance,
            0.9,
            0.04,
            0.2,
            10.0,
            (t1 - t0).min(0.25),
            0.0,
            MAX_STEPS_PER_PIECE,
            u32::MAX,
            OutputType::Continuous,
        );
        let res = stepper.integrate_with_continuous_output_model(&mut model);
        let st = match res {
            Ok(st) => st,
            Err(e) => {
                // Keep what was flown and say why it ends (inputs chattering between limits,
                // a state the integrator cannot follow at the stated tolerance).
                match stepper.x_out().last().copied() {
                    Some(t_last) if t_last > t0 => {
                        pieces.push((t0, t_last, model));
                        reached = t_last;
                    }
                    _ if pieces.is_empty() => {
                        return Err(FlightError::Integration {
                            time_s: t0,
                            why: e.to_string(),
                        });
                    }
                    _ => {}
                }
                let why = format!("the integrator could not go on ({e}): the inputs likely chatter between limits");
                *sys.stop.borrow_mut() = Some((reached, why));
                break;
            }
        };
        stats.evaluations += st.num_eval as u64;
        stats.accepted_steps += st.accepted_steps as u64;
        stats.rejected_steps += st.rejected_steps as u64;
        stats.pieces += 1;
        let (Some(&t_last), Some(y_last)) = (stepper.x_out().last(), stepper.y_out().last()) else {
            break;
        };
        y = y_last.clone();
        reached = t_last;
        pieces.push((t0, t_last, model));
        if sys.stop.borrow().is_some() || t_last < t1 - 1e-9 {
            break;
        }
        let _ = l;
        t0 = t1;
    }
    let stopped = sys.stop.borrow().clone();
    // Sample the dense output.
    let dt = settings.sample_step_s;
    let n = (reached / dt + 1e-9).floor() as usize;
    let mut times: Vec<f64> = (0..=n).map(|k| k as f64 * dt).collect();
    if reached - times[times.len() - 1] > 1e-9 {
        times.push(reached);
    }
    let mut samples = Vec::with_capacity(times.len());
    let mut k = 0;
    for &t in &times {
        while k + 1 < pieces.len() && t > pieces[k].1 {
            k += 1;
        }
        let yt = if t <= 0.0 || pieces.is_empty() {
            Some(initial_vector(&sys, initial, start_controls))
        } else {
            let (a, b, m) = &pieces[k];
            m.evaluate(t.clamp(*a, *b))
        };
        if let Some(yt) = yt {
            samples.push(sample_of(&sys, t, &yt));
        }
    }
    (sys.progress)(1.0);
    Ok(Run {
        samples,
        stopped,
        stats,
    })
}

fn initial_vector(sys: &Sys, initial: &State, c: &Controls) -> DVector<f64> {
    let l = sys.layout();
    let v = sys.v;
    let mut y = DVector::zeros(l.len());
    y[0] = initial.u_mps;
    y[1] = initial.w_mps;
    y[2] = initial.q_rad_s;
    y[3] = initial.theta_rad;
    for (i, act) in v.actuators.iter().enumerate() {
        y[l.tilt(i)] = c
            .tilt_rad
            .get(i)
            .copied()
            .unwrap_or(act.max_rad)
            .clamp(act.min_rad, act.max_rad);
    }
    for (g, r) in v.rotors.iter().enumerate() {
        y[l.thrust(g)] = c
            .thrust_n
            .get(g)
            .copied()
            .unwrap_or(0.0)
            .clamp(0.0, r.thrust_max_n);
    }
    let nt = v.rotors.len();
    for (k, e) in v.elevators.iter().enumerate() {
        let x = c
            .elevator_rad
            .get(k)
            .copied()
            .unwrap_or(0.0)
            .clamp(e.min_rad, e.max_rad);
        if l.servos > 0 {
            y[l.servo(k)] = x;
        }
        if l.delays > 0 {
            y[l.delay(nt + k)] = x;
        }
    }
    if l.delays > 0 {
        for g in 0..nt {
            y[l.delay(g)] = y[l.thrust(g)];
        }
    }
    if let Mode::Closed { reference, .. } = sys.mode {
        y[Layout::PLAN_SPEED] = reference.start_speed_mps;
    }
    y
}
