//! The feedback law of the transition flight: feedforward from the trim table plus a cascade of
//! speed, height and pitch-attitude loops, mapped onto the thrusts and elevators by a weighted
//! pseudo-inverse control allocation on the scheduled linear model.
//!
//! Commanded accelerations (earth axes: `a_x` forward, `a_h` up; `qdot` nose-up):
//!
//! ```text
//! a_x  = a_ref + k_V e_V + k_VI int(e_V)          e_V = V_ref - V_path (air-relative)
//! a_h  = k_h e_h + k_hd (hdot_ref - hdot) + k_hI int(e_h)     e_h = h_ref - h
//! dth  = stage A of [a_x, a_h]                    pitch-attitude offset, within its limits
//! qdot = k_th (theta_ff + dth - theta) - k_q q
//! d    = stage B of [a_x - E_th,x dth, a_h - E_th,h dth, qdot - qdot_0]   thrust and elevator increments
//! ```
//!
//! `qdot_0` is the airframe's own pitch acceleration at the current state with the feedforward
//! controls (the nonlinear model evaluated once more): the pitch channel is a dynamic
//! inversion, so pitch follows the designed second-order response wherever the controls have
//! the authority, whatever the airframe's own pitch stiffness and damping (a stalled wing in
//! transition makes both strongly nonlinear). The force channels are not inverted; their
//! integrators take up what the trim table does not cover.
//!
//! Gains come from the loop design (natural frequency w, damping zeta): the pitch loop is
//! `k_th = w^2, k_q = 2 zeta w`; the speed loop is proportional-integral with closed-loop
//! `s^2 + k_V s + k_VI = s^2 + 2 zeta w s + w^2`; the height loop places its poles at
//! `(s + p)(s^2 + 2 zeta w s + w^2)` with the integral pole `p = r w`:
//! `k_hd = 2 zeta w + p, k_h = w^2 + 2 zeta w p, k_hI = w^2 p` (pole placement, as in Franklin,
//! Powell and Emami-Naeini, Feedback Control of Dynamic Systems, ch. 4 and 7). The design takes
//! the commanded accelerations as achieved; actuator lags and the airframe's own dynamics are
//! what the loop margins (`crate::control::loops`) measure.
//!
//! Allocation (weighted minimum-norm pseudo-inverse, damped, then redistributed at limits): the
//! effectiveness of each input on `[a_x, a_h, qdot]` comes from the B matrix of the trim point
//! rotated into earth axes; the effectiveness of a pitch-attitude change at fixed earth
//! velocity comes from the A matrix, `A[:, theta] - w A[:, u] + u A[:, w]`. Stage A splits
//! `[a_x, a_h]` between the thrusts and a pitch offset (elevators excluded, they are the pitch
//! control); stage B spreads what is left plus `qdot` over thrusts and elevators, the pitch
//! channel weighted by `pitch_priority`. Each input is normalised by its range (thrust cap,
//! half the elevator travel) and weighted by its headroom at the trim point (down to a floor
//! of 0.02), so an input sitting at a limit in trim (a lift rotor idle in cruise) plays
//! almost no part in the linear law. When an input (or the pitch offset) would cross a limit,
//! the redistributed pseudo-inverse holds it there and hands the rest to the free inputs, the
//! idle ones included. The pitch offset's limits carry an angle-of-attack protection (see
//! `flight::sim`). Tilt actuators follow the schedule only; they are not feedback inputs.
//! The solves use `(E W E^T + Lambda)^-1` with `Lambda` 1e-3 of each diagonal element plus 1e-4
//! of the largest, which keeps the gains bounded where a channel has almost no authority
//! (forward force from the thrusts in hover) and leaves the others practically exact.

use crate::dynamics::{Controls, State};
use crate::linear::LinearModel;
use crate::vehicle::Vehicle;

/// Largest number of thrust and elevator inputs the feedback law handles.
pub const MAX_INPUTS: usize = 24;

/// Headroom (fraction of an input's range) below which its allocation weight falls off.
const HEADROOM_FULL: f64 = 0.05;

/// Smallest allocation weight: an input at a limit in trim still takes demand once the others
/// are held at their limits.
pub const WEIGHT_FLOOR: f64 = 0.02;

/// Damping of the allocation solves, as a fraction of each diagonal element.
const ALLOCATION_DAMPING: f64 = 1e-3;

/// Damping floor of the allocation solves, as a fraction of the largest diagonal element.
const ALLOCATION_FLOOR: f64 = 1e-4;

/// Design of the feedback law (SI; angles in rad).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct FeedbackGains {
    /// Pitch-attitude loop natural frequency (rad/s).
    pub pitch_bandwidth_rad_s: f64,
    /// Pitch-attitude loop damping ratio (-).
    pub pitch_damping: f64,
    /// Height loop natural frequency (rad/s).
    pub height_bandwidth_rad_s: f64,
    /// Height loop damping ratio (-).
    pub height_damping: f64,
    /// Integral pole over height bandwidth (-); 0 leaves the integral out.
    pub height_integral_ratio: f64,
    /// Speed loop natural frequency (rad/s).
    pub speed_bandwidth_rad_s: f64,
    /// Speed loop damping ratio (-).
    pub speed_damping: f64,
    /// Largest pitch-attitude offset (rad).
    pub pitch_offset_limit_rad: f64,
    /// Pitch-attitude offset worth one unit of effort in the allocation (rad).
    pub pitch_offset_scale_rad: f64,
    /// Weight of the pitch channel in stage B (-).
    pub pitch_priority: f64,
}

impl Default for FeedbackGains {
    fn default() -> Self {
        FeedbackGains::from_file(&crate::scenario::FlightFile::default())
    }
}

impl FeedbackGains {
    /// The design of a scenario's `[flight]` table (values assumed validated).
    pub fn from_file(f: &crate::scenario::FlightFile) -> FeedbackGains {
        FeedbackGains {
            pitch_bandwidth_rad_s: f.pitch_bandwidth_rad_s,
            pitch_damping: f.pitch_damping,
            height_bandwidth_rad_s: f.height_bandwidth_rad_s,
            height_damping: f.height_damping,
            height_integral_ratio: f.height_integral_ratio,
            speed_bandwidth_rad_s: f.speed_bandwidth_rad_s,
            speed_damping: f.speed_damping,
            pitch_offset_limit_rad: f.pitch_offset_limit_deg.to_radians(),
            pitch_offset_scale_rad: f.pitch_offset_scale_deg.to_radians(),
            pitch_priority: f.pitch_priority,
        }
    }

    /// Pitch stiffness k_th (1/s^2) and rate gain k_q (1/s).
    pub fn pitch_gains(&self) -> (f64, f64) {
        let w = self.pitch_bandwidth_rad_s;
        (w * w, 2.0 * self.pitch_damping * w)
    }

    /// Speed gains k_V (1/s) and k_VI (1/s^2).
    pub fn speed_gains(&self) -> (f64, f64) {
        let w = self.speed_bandwidth_rad_s;
        (2.0 * self.speed_damping * w, w * w)
    }

    /// Height gains k_h (1/s^2), k_hd (1/s) and k_hI (1/s^3).
    pub fn height_gains(&self) -> (f64, f64, f64) {
        let w = self.height_bandwidth_rad_s;
        let z = self.height_damping;
        let p = self.height_integral_ratio * w;
        (w * w + 2.0 * z * w * p, 2.0 * z * w + p, w * w * p)
    }
}

/// The allocation data of one trim point: effectiveness of every input and of the pitch
/// offset, and the headroom weights. Fixed-size so that interpolating it does not allocate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Allocation {
    /// Number of inputs in use (thrusts then elevators, as in [`Controls::to_flat`]).
    pub inputs: usize,
    /// Number of thrust inputs (the first ones).
    pub thrusts: usize,
    /// Earth accelerations [a_x, a_h] per rad of pitch at fixed earth velocity (m/s^2/rad).
    pub theta_effect: [f64; 2],
    /// Effect of each input on [a_x, a_h, qdot] per unit (per N or per rad).
    pub effect: [[f64; 3]; MAX_INPUTS],
    /// Range scale of each input (thrust cap, half the elevator travel).
    pub scale: [f64; MAX_INPUTS],
    /// First-pass weight of each input from its headroom in trim (0..1).
    pub weight: [f64; MAX_INPUTS],
}

impl Allocation {
    /// An allocation that commands nothing.
    pub fn zero(inputs: usize) -> Allocation {
        Allocation {
            inputs,
            thrusts: 0,
            theta_effect: [0.0; 2],
            effect: [[0.0; 3]; MAX_INPUTS],
            scale: [1.0; MAX_INPUTS],
            weight: [0.0; MAX_INPUTS],
        }
    }

    /// `(1 - t) a + t b`, element by element.
    pub fn blend(a: &Allocation, b: &Allocation, t: f64) -> Allocation {
        let mut o = *a;
        let s = 1.0 - t;
        for k in 0..2 {
            o.theta_effect[k] = s * a.theta_effect[k] + t * b.theta_effect[k];
        }
        for j in 0..a.inputs.min(MAX_INPUTS) {
            for k in 0..3 {
                o.effect[j][k] = s * a.effect[j][k] + t * b.effect[j][k];
            }
            o.weight[j] = s * a.weight[j] + t * b.weight[j];
        }
        o
    }
}

/// Number of feedback inputs of a vehicle (thrust groups and elevators).
pub fn feedback_inputs(v: &Vehicle) -> usize {
    v.rotors.len() + v.elevators.len()
}

/// Range scale and limits (lo, hi) of feedback input `j` (flat order).
pub fn input_range(v: &Vehicle, j: usize) -> (f64, f64, f64) {
    let nt = v.rotors.len();
    if j < nt {
        let r = &v.rotors[j];
        (r.thrust_max_n, 0.0, r.thrust_max_n)
    } else {
        let e = &v.elevators[j - nt];
        (
            0.5 * (e.max_rad - e.min_rad).max(1e-3),
            e.min_rad,
            e.max_rad,
        )
    }
}

/// Earth-axis effect [a_x, a_h, qdot] of a body-axis derivative column [udot, wdot, qdot]
/// at pitch attitude `theta_rad`.
fn to_earth(col: &[f64; 4], theta_rad: f64) -> [f64; 3] {
    let (s, c) = theta_rad.sin_cos();
    [col[0] * c + col[1] * s, col[0] * s - col[1] * c, col[2]]
}

/// Invert a symmetric positive 3x3 (or the leading 2x2 when `n` is 2) after damping each
/// diagonal element by [`ALLOCATION_DAMPING`] of itself plus [`ALLOCATION_FLOOR`] of the
/// largest (so a channel without authority gets bounded gains, and the others stay exact).
fn damped_inverse(m: &[[f64; 3]; 3], n: usize) -> Option<[[f64; 3]; 3]> {
    let big = (0..n).map(|i| m[i][i]).fold(0.0f64, f64::max);
    let mut a = nalgebra::Matrix3::<f64>::identity();
    for i in 0..n {
        for k in 0..n {
            a[(i, k)] = m[i][k]
                + if i == k {
                    ALLOCATION_DAMPING * m[i][i] + ALLOCATION_FLOOR * big + 1e-12
                } else {
                    0.0
                };
        }
    }
    let inv = a.try_inverse()?;
    let mut o = [[0.0; 3]; 3];
    for i in 0..n {
        for k in 0..n {
            o[i][k] = inv[(i, k)];
        }
    }
    Some(o)
}

/// The allocation data at a trim point (state, controls) with its linear model.
pub fn allocation(
    v: &Vehicle,
    state: &State,
    controls: &Controls,
    lin: &LinearModel,
) -> Allocation {
    let n = feedback_inputs(v).min(MAX_INPUTS);
    let mut al = Allocation::zero(n);
    al.thrusts = v.rotors.len().min(n);
    let th = state.theta_rad;
    for j in 0..n {
        let (scale, lo, hi) = input_range(v, j);
        let x = controls.flat(j);
        let headroom = ((x - lo).min(hi - x) / (hi - lo).max(1e-12)).max(0.0);
        al.weight[j] = (headroom / HEADROOM_FULL).clamp(WEIGHT_FLOOR, 1.0);
        al.scale[j] = scale;
        al.effect[j] = lin.b.get(j).map_or([0.0; 3], |c| to_earth(c, th));
    }
    // Pitch offset at fixed earth velocity.
    let a = &lin.a;
    let (u, w) = (state.u_mps, state.w_mps);
    let col = [
        a[(0, 3)] - w * a[(0, 0)] + u * a[(0, 1)],
        a[(1, 3)] - w * a[(1, 0)] + u * a[(1, 1)],
        0.0,
        0.0,
    ];
    let et = to_earth(&col, th);
    al.theta_effect = [et[0], et[1]];
    al
}

/// One allocation problem: inputs with effect columns on up to three channels, range
/// scales, first-pass weights and limits relative to the current value (delta bounds).
struct Problem {
    n: usize,
    rows: usize,
    r: [f64; 3],
    effect: [[f64; 3]; MAX_INPUTS + 1],
    scale: [f64; MAX_INPUTS + 1],
    weight: [f64; MAX_INPUTS + 1],
    lo: [f64; MAX_INPUTS + 1],
    hi: [f64; MAX_INPUTS + 1],
}

/// Result of an allocation.
#[derive(Debug, Clone, Copy)]
struct Solved {
    delta: [f64; MAX_INPUTS + 1],
    fixed: [bool; MAX_INPUTS + 1],
    high: [bool; MAX_INPUTS + 1],
    shortfall: f64,
}

/// Weighted damped minimum-norm solve of `E d = nu` over the inputs not `fixed`, on the
/// range-normalised inputs, rows weighted by `r`.
fn min_norm(
    p: &Problem,
    w: &[f64; MAX_INPUTS + 1],
    fixed: &[bool; MAX_INPUTS + 1],
    nu: &[f64; 3],
    d: &mut [f64; MAX_INPUTS + 1],
) {
    let mut m = [[0.0; 3]; 3];
    for j in 0..p.n {
        if fixed[j] || w[j] <= 0.0 {
            continue;
        }
        let sw = p.scale[j] * w[j];
        let e = p.effect[j];
        for (i, mi) in m.iter_mut().enumerate().take(p.rows) {
            for (k, mik) in mi.iter_mut().enumerate().take(p.rows) {
                *mik += p.r[i] * e[i] * sw * p.r[k] * e[k] * sw;
            }
        }
    }
    let Some(inv) = damped_inverse(&m, p.rows) else {
        return;
    };
    let mut y = [0.0; 3];
    for (l, yl) in y.iter_mut().enumerate().take(p.rows) {
        *yl = (0..p.rows).map(|k| inv[l][k] * p.r[k] * nu[k]).sum();
    }
    for j in 0..p.n {
        if fixed[j] {
            continue;
        }
        let sw = p.scale[j] * w[j];
        d[j] = sw
            * sw
            * (0..p.rows)
                .map(|l| p.r[l] * p.effect[j][l] * y[l])
                .sum::<f64>();
    }
}

/// Allocate `nu`: the headroom-weighted pseudo-inverse first; with `limited`, then the
/// redistributed pseudo-inverse (Virnig and Bodden, 1994): every input that would cross a
/// limit is held at it and what it leaves undone is spread over the inputs still free, with
/// the same weights (so the result is continuous in the demand), until no input crosses a
/// limit. An input at a limit in trim has a small weight, not none: it takes the demand the
/// others cannot.
fn allocate(p: &Problem, nu: &[f64; 3], limited: bool) -> Solved {
    let mut s = Solved {
        delta: [0.0; MAX_INPUTS + 1],
        fixed: [false; MAX_INPUTS + 1],
        high: [false; MAX_INPUTS + 1],
        shortfall: 0.0,
    };
    min_norm(p, &p.weight, &s.fixed, nu, &mut s.delta);
    if limited {
        for _pass in 0..=p.n {
            let mut changed = false;
            for j in 0..p.n {
                if s.fixed[j] {
                    continue;
                }
                let tol = 1e-9 * p.scale[j];
                if s.delta[j] < p.lo[j] - tol || s.delta[j] > p.hi[j] + tol {
                    s.fixed[j] = true;
                    s.high[j] = s.delta[j] > p.hi[j];
                    s.delta[j] = s.delta[j].clamp(p.lo[j], p.hi[j].max(p.lo[j]));
                    changed = true;
                }
            }
            if !changed {
                break;
            }
            let mut rem = *nu;
            for j in 0..p.n {
                if s.fixed[j] {
                    for (k, x) in rem.iter_mut().enumerate().take(p.rows) {
                        *x -= p.effect[j][k] * s.delta[j];
                    }
                }
            }
            min_norm(p, &p.weight, &s.fixed, &rem, &mut s.delta);
        }
    }
    let mut miss = [0.0; 3];
    for (k, mk) in miss.iter_mut().enumerate().take(p.rows) {
        *mk = nu[k] - (0..p.n).map(|j| p.effect[j][k] * s.delta[j]).sum::<f64>();
    }
    let norm = |v: &[f64; 3]| {
        (0..p.rows)
            .map(|k| (p.r[k] * v[k]).powi(2))
            .sum::<f64>()
            .sqrt()
    };
    s.shortfall = norm(&miss) / norm(nu).max(1e-9);
    s
}

/// What the feedback law reads (errors and measurements, SI).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LawInput {
    /// Speed error V_ref - V (m/s).
    pub speed_error_mps: f64,
    /// Integral of the speed error (m).
    pub speed_integral_m: f64,
    /// Height error h_ref - h (m).
    pub height_error_m: f64,
    /// Height-rate error hdot_ref - hdot (m/s).
    pub height_rate_error_mps: f64,
    /// Integral of the height error (m s).
    pub height_integral_m_s: f64,
    /// Feedforward pitch attitude (rad).
    pub pitch_ff_rad: f64,
    /// Pitch attitude (rad).
    pub pitch_rad: f64,
    /// Pitch rate (rad/s).
    pub pitch_rate_rad_s: f64,
    /// Planned acceleration (m/s^2).
    pub accel_ref_mps2: f64,
    /// The airframe's own pitch acceleration with the feedforward controls (rad/s^2).
    pub pitch_accel_own_rad_s2: f64,
}

/// Limits of the feedback inputs: feedforward value and bounds of each input (thrust per
/// rotor in N, elevator in rad), and the bounds of the pitch offset (rad).
#[derive(Debug, Clone, Copy)]
pub struct InputLimits {
    /// Feedforward value.
    pub base: [f64; MAX_INPUTS],
    /// Lower bound.
    pub lo: [f64; MAX_INPUTS],
    /// Upper bound.
    pub hi: [f64; MAX_INPUTS],
    /// Lowest pitch offset (rad, <= 0 unless the protection pushes the nose up).
    pub pitch_offset_lo_rad: f64,
    /// Highest pitch offset (rad).
    pub pitch_offset_hi_rad: f64,
}

/// What the feedback law commands.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LawOutput {
    /// Commanded accelerations [a_x, a_h] (m/s^2) and qdot (rad/s^2).
    pub accel_cmd: [f64; 3],
    /// Pitch-attitude offset (rad).
    pub pitch_offset_rad: f64,
    /// Whether the pitch offset sits at a limit.
    pub pitch_offset_limited: bool,
    /// Increment of each feedback input (N per rotor for thrusts, rad for elevators).
    pub delta: [f64; MAX_INPUTS],
    /// Inputs held at a limit.
    pub fixed: [bool; MAX_INPUTS],
    /// Held at the upper limit.
    pub high: [bool; MAX_INPUTS],
    /// Share of the weighted demand of stage B left unmet (0 = all met).
    pub shortfall: f64,
}

/// Evaluate the feedback law. With `limits` the allocation respects them (redistributed
/// pseudo-inverse); without, it is the linear first pass used by the loop analysis.
pub fn law(
    g: &FeedbackGains,
    al: &Allocation,
    inp: &LawInput,
    limits: Option<&InputLimits>,
) -> LawOutput {
    let (kv, kvi) = g.speed_gains();
    let (kh, khd, khi) = g.height_gains();
    let (kth, kq) = g.pitch_gains();
    let n = al.inputs.min(MAX_INPUTS);
    let nt = al.thrusts.min(n);
    let ax = inp.accel_ref_mps2 + kv * inp.speed_error_mps + kvi * inp.speed_integral_m;
    let ah =
        kh * inp.height_error_m + khd * inp.height_rate_error_mps + khi * inp.height_integral_m_s;

    // Stage A: [a_x, a_h] over the thrusts and the pitch offset (the last input).
    let mut pa = Problem {
        n: nt + 1,
        rows: 2,
        r: [1.0, 1.0, 1.0],
        effect: [[0.0; 3]; MAX_INPUTS + 1],
        scale: [1.0; MAX_INPUTS + 1],
        weight: [0.0; MAX_INPUTS + 1],
        lo: [f64::NEG_INFINITY; MAX_INPUTS + 1],
        hi: [f64::INFINITY; MAX_INPUTS + 1],
    };
    for j in 0..nt {
        pa.effect[j] = al.effect[j];
        pa.scale[j] = al.scale[j];
        pa.weight[j] = al.weight[j];
        if let Some(l) = limits {
            pa.lo[j] = l.lo[j] - l.base[j];
            pa.hi[j] = l.hi[j] - l.base[j];
        }
    }
    pa.effect[nt] = [al.theta_effect[0], al.theta_effect[1], 0.0];
    pa.scale[nt] = g.pitch_offset_scale_rad;
    pa.weight[nt] = 1.0;
    if let Some(l) = limits {
        pa.lo[nt] = l.pitch_offset_lo_rad;
        pa.hi[nt] = l.pitch_offset_hi_rad;
    }
    let sa = allocate(&pa, &[ax, ah, 0.0], limits.is_some());
    let dth = sa.delta[nt];

    // Stage B: what the offset does not do, and the pitch channel, over thrusts and elevators.
    let qd = kth * (inp.pitch_ff_rad + dth - inp.pitch_rad) - kq * inp.pitch_rate_rad_s;
    let nu = [
        ax - al.theta_effect[0] * dth,
        ah - al.theta_effect[1] * dth,
        qd - inp.pitch_accel_own_rad_s2,
    ];
    let mut pb = Problem {
        n,
        rows: 3,
        r: [1.0, 1.0, g.pitch_priority],
        effect: [[0.0; 3]; MAX_INPUTS + 1],
        scale: [1.0; MAX_INPUTS + 1],
        weight: [0.0; MAX_INPUTS + 1],
        lo: [f64::NEG_INFINITY; MAX_INPUTS + 1],
        hi: [f64::INFINITY; MAX_INPUTS + 1],
    };
    for j in 0..n {
        pb.effect[j] = al.effect[j];
        pb.scale[j] = al.scale[j];
        pb.weight[j] = al.weight[j];
        if let Some(l) = limits {
            pb.lo[j] = l.lo[j] - l.base[j];
            pb.hi[j] = l.hi[j] - l.base[j];
        }
    }
    let sb = allocate(&pb, &nu, limits.is_some());
    let mut out = LawOutput {
        accel_cmd: [ax, ah, qd],
        pitch_offset_rad: dth,
        pitch_offset_limited: sa.fixed[nt],
        delta: [0.0; MAX_INPUTS],
        fixed: [false; MAX_INPUTS],
        high: [false; MAX_INPUTS],
        shortfall: sb.shortfall,
    };
    out.delta[..n].copy_from_slice(&sb.delta[..n]);
    out.fixed[..n].copy_from_slice(&sb.fixed[..n]);
    out.high[..n].copy_from_slice(&sb.high[..n]);
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn height_gains_place_the_designed_poles() {
        let g = FeedbackGains::default();
        let (kh, khd, khi) = g.height_gains();
        let w = g.height_bandwidth_rad_s;
        let z = g.height_damping;
        let p = g.height_integral_ratio * w;
        // s^3 + khd s^2 + kh s + khi must vanish at s = -p and at the complex pair.
        let ch = |s: nalgebra::Complex<f64>| s * s * s + s * s * khd + s * kh + khi;
        let pair = nalgebra::Complex::new(-z * w, w * (1.0 - z * z).sqrt());
        assert!(ch(nalgebra::Complex::new(-p, 0.0)).norm() < 1e-12);
        assert!(ch(pair).norm() < 1e-12);
    }
}
