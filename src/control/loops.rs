//! Loop margins of the flight's feedback law (`control::law`) closed around the linear model of
//! a trim point: each loop broken at its actuator, one at a time, all others closed, as
//! MIL-F-9490D asks of flight-control systems (gain and phase margin at each actuator input).
//!
//! The closed loop is assembled from the linear model (A, B in u, w, q, theta), the height and
//! the two integrators of the law, and a first-order lag per rotor group; elevators act at
//! once. The law is taken frozen at the point (the frozen-point analysis of gain-scheduled
//! control): its feedforward and gains do not move with the state, and the pitch offset's
//! limits and the redistribution at limits are left out (they act only at a limit). Breaking
//! the loop at actuator `j` gives the state-space loop `(A_j, b_j, c_j)`: the plant and the
//! other loops in `A_j`, the actuator's input column `b_j`, and the law's command to it `c_j`.
//! In the negative-feedback convention the loop transfer is `L(s) = -c_j (sI - A_j)^-1 b_j`,
//! and the closed loop's characteristic polynomial is `det(sI - A_j) (1 + L(s))`.
//!
//! Margins from the frequency response (Bode and Nyquist, as in Franklin, Powell and
//! Emami-Naeini, Feedback Control of Dynamic Systems, ch. 6):
//! - gain margin: `-20 log10 |L|` at a phase crossover (phase of L an odd multiple of -180
//!   deg), the smallest positive one; the smallest negative one is the gain-reduction margin
//!   (conditionally stable loops, open-loop unstable airframes);
//! - phase margin: `180 deg + arg L` at a gain crossover (`|L| = 1`), the smallest over all;
//! - delay margin: the pure delay that uses up the phase margin, `PM / w_c`, the smallest over
//!   the gain crossovers;
//! - crossover frequency: `w_c` of the crossover that sets the phase margin.
//!
//! The response is sampled on a logarithmic grid from 1e-3 to 1e3 rad/s (100 points per
//! decade) and each crossing refined by bisection in log frequency to 1e-10 relative.

use nalgebra::{Complex, DMatrix, DVector};
use serde::Serialize;

use super::law::{allocation, feedback_inputs, law, FeedbackGains, LawInput};
use crate::dynamics::{Controls, State};
use crate::linear::LinearModel;
use crate::vehicle::Vehicle;

/// Margins of one loop broken at one actuator.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LoopMargin {
    /// Loops of the law that drive this actuator (speed, height, pitch attitude).
    pub loop_name: String,
    /// The actuator where the loop is broken (`thrust <group>`, `elevator <name>`).
    pub actuator: String,
    /// Whether the law moves this actuator at this point at all.
    pub in_loop: bool,
    /// Gain increase to instability (dB, > 0).
    pub gain_margin_db: Option<f64>,
    /// Gain decrease to instability (dB, < 0), for conditionally stable loops.
    pub gain_reduction_margin_db: Option<f64>,
    /// Phase margin (deg).
    pub phase_margin_deg: Option<f64>,
    /// Delay margin (s).
    pub delay_margin_s: Option<f64>,
    /// Gain-crossover frequency of the phase margin (rad/s).
    pub crossover_rad_s: Option<f64>,
    /// Phase-crossover frequency of the gain margin (rad/s).
    pub phase_crossover_rad_s: Option<f64>,
    /// Whether the whole closed loop is stable at this point.
    pub closed_loop_stable: bool,
}

/// Margins of a loop transfer function from its frequency response.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct FrequencyMargins {
    /// Smallest positive gain margin (dB).
    pub gain_margin_db: Option<f64>,
    /// Gain-reduction margin, the negative margin nearest zero (dB).
    pub gain_reduction_margin_db: Option<f64>,
    /// Smallest phase margin (deg).
    pub phase_margin_deg: Option<f64>,
    /// Smallest delay margin over the gain crossovers with positive phase margin (s).
    pub delay_margin_s: Option<f64>,
    /// Gain-crossover frequency of the phase margin (rad/s).
    pub crossover_rad_s: Option<f64>,
    /// Phase-crossover frequency of the gain margin (rad/s).
    pub phase_crossover_rad_s: Option<f64>,
}

/// Lowest frequency of the search (rad/s).
pub const OMEGA_MIN_RAD_S: f64 = 1e-3;
/// Highest frequency of the search (rad/s).
pub const OMEGA_MAX_RAD_S: f64 = 1e3;
const POINTS_PER_DECADE: usize = 100;

fn wrap_deg(a: f64) -> f64 {
    let r = (a + 180.0).rem_euclid(360.0) - 180.0;
    if r <= -180.0 {
        r + 360.0
    } else {
        r
    }
}

/// Bisection in log frequency for a sign change of `f` between `lo` and `hi`.
fn refine(f: &dyn Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> f64 {
    let mut flo = f(lo);
    for _ in 0..80 {
        let mid = (lo * hi).sqrt();
        let fm = f(mid);
        if (fm > 0.0) == (flo > 0.0) {
            lo = mid;
            flo = fm;
        } else {
            hi = mid;
        }
        if hi / lo - 1.0 < 1e-10 {
            break;
        }
    }
    (lo * hi).sqrt()
}

/// Margins of the loop whose frequency response is `l(w)` (negative-feedback convention),
/// searched between `w_lo` and `w_hi` (rad/s, 0 < w_lo < w_hi).
pub fn frequency_margins(
    l: &dyn Fn(f64) -> Complex<f64>,
    w_lo: f64,
    w_hi: f64,
) -> FrequencyMargins {
    let mut out = FrequencyMargins::default();
    if !(w_lo > 0.0 && w_hi > w_lo && w_lo.is_finite() && w_hi.is_finite()) {
        return out;
    }
    let decades = (w_hi / w_lo).log10();
    let n = ((decades * POINTS_PER_DECADE as f64).ceil() as usize).max(2);
    let ws: Vec<f64> = (0..=n)
        .map(|k| w_lo * 10f64.powf(decades * k as f64 / n as f64))
        .collect();
    let resp: Vec<Complex<f64>> = ws.iter().map(|&w| l(w)).collect();
    if resp.iter().any(|z| !z.re.is_finite() || !z.im.is_finite()) {
        return out;
    }
    // Unwrapped phase (deg) along the grid.
    let mut phase = Vec::with_capacity(resp.len());
    let mut prev = resp[0].arg().to_degrees();
    phase.push(prev);
    for z in &resp[1..] {
        let p = prev + wrap_deg(z.arg().to_degrees() - prev);
        phase.push(p);
        prev = p;
    }
    let gain_db = |w: f64| 20.0 * l(w).norm().log10();
    // Gain crossovers.
    let mut pm: Option<(f64, f64)> = None;
    let mut delay: Option<f64> = None;
    for k in 0..n {
        let (a, b) = (resp[k].norm(), resp[k + 1].norm());
        if (a - 1.0) * (b - 1.0) <= 0.0 && a != b {
            let w = refine(&|w| l(w).norm() - 1.0, ws[k], ws[k + 1]);
            let m = wrap_deg(180.0 + l(w).arg().to_degrees());
            if pm.is_none_or(|(p, _)| m < p) {
                pm = Some((m, w));
            }
            if m > 0.0 {
                let d = m.to_radians() / w;
                delay = Some(delay.map_or(d, |x: f64| x.min(d)));
            }
        }
    }
    // Phase crossovers: unwrapped phase through -180 + 360 k.
    let mut gm_up: Option<(f64, f64)> = None;
    let mut gm_down: Option<f64> = None;
    for k in 0..n {
        let (p0, p1) = (phase[k], phase[k + 1]);
        let lo = p0.min(p1);
        let hi = p0.max(p1);
        let first = ((lo + 180.0) / 360.0).ceil() as i64;
        let last = ((hi + 180.0) / 360.0).floor() as i64;
        for m in first..=last {
            let target = -180.0 + 360.0 * m as f64;
            if (p0 - target) * (p1 - target) > 0.0 || p0 == p1 {
                continue;
            }
            // Refine on the continuous phase near this segment.
            let base = p0;
            let f = |w: f64| {
                let raw = l(w).arg().to_degrees();
                base + wrap_deg(raw - base) - target
            };
            let w = refine(&f, ws[k], ws[k + 1]);
            let g = -gain_db(w);
            if g > 0.0 {
                if gm_up.is_none_or(|(x, _)| g < x) {
                    gm_up = Some((g, w));
                }
            } else if gm_down.is_none_or(|x| g > x) {
                gm_down = Some(g);
            }
        }
    }
    out.phase_margin_deg = pm.map(|p| p.0);
    out.crossover_rad_s = pm.map(|p| p.1);
    out.delay_margin_s = delay;
    out.gain_margin_db = gm_up.map(|g| g.0);
    out.phase_crossover_rad_s = gm_up.map(|g| g.1);
    out.gain_reduction_margin_db = gm_down;
    out
}

/// A single-input single-output state-space system `y = c (sI - a)^-1 b + d`.
#[derive(Debug, Clone, PartialEq)]
pub struct Siso {
    /// State matrix (n x n).
    pub a: DMatrix<f64>,
    /// Input column (n).
    pub b: DVector<f64>,
    /// Output row (n).
    pub c: DVector<f64>,
    /// Feedthrough.
    pub d: f64,
}

impl Siso {
    /// Frequency response at `w_rad_s`.
    pub fn response(&self, w_rad_s: f64) -> Complex<f64> {
        let n = self.a.nrows();
        let m = DMatrix::from_fn(n, n, |i, j| {
            Complex::new(-self.a[(i, j)], if i == j { w_rad_s } else { 0.0 })
        });
        let rhs = DVector::from_fn(n, |i, _| Complex::new(self.b[i], 0.0));
        match m.lu().solve(&rhs) {
            Some(x) => (0..n).map(|i| x[i] * self.c[i]).sum::<Complex<f64>>() + self.d,
            None => Complex::new(f64::INFINITY, 0.0),
        }
    }

    /// Margins of this system taken as a loop transfer (negative-feedback convention).
    pub fn margins(&self) -> FrequencyMargins {
        frequency_margins(&|w| self.response(w), OMEGA_MIN_RAD_S, OMEGA_MAX_RAD_S)
    }
}

/// The closed loop of the law around a trim point, with every actuator's input exposed.
#[derive(Debug, Clone, PartialEq)]
pub struct ClosedLoop {
    /// Open-loop matrix (plant, height, integrators, thrust lags), no law.
    pub a_open: DMatrix<f64>,
    /// Input column of each actuator (thrust commands, then elevators).
    pub b: Vec<DVector<f64>>,
    /// The law's command to each actuator as a row over the states.
    pub c: Vec<DVector<f64>>,
    /// Actuator names.
    pub actuators: Vec<String>,
    /// Loops that drive each actuator.
    pub loop_names: Vec<String>,
}

impl ClosedLoop {
    /// Closed-loop matrix with the law's command to actuator `j` scaled by `gains[j]`.
    pub fn a_closed(&self, gains: &[f64]) -> DMatrix<f64> {
        let mut a = self.a_open.clone();
        for (j, (b, c)) in self.b.iter().zip(&self.c).enumerate() {
            a += gains.get(j).copied().unwrap_or(1.0) * b * c.transpose();
        }
        a
    }

    /// The loop broken at actuator `j`, in the negative-feedback convention.
    pub fn broken(&self, j: usize) -> Siso {
        let mut g = vec![1.0; self.b.len()];
        g[j] = 0.0;
        Siso {
            a: self.a_closed(&g),
            b: self.b[j].clone(),
            c: -self.c[j].clone(),
            d: 0.0,
        }
    }

    /// Whether every eigenvalue of the closed loop has a negative real part.
    pub fn stable(&self) -> bool {
        let a = self.a_closed(&vec![1.0; self.b.len()]);
        a.complex_eigenvalues().iter().all(|l| l.re < -1e-9)
    }
}

/// Assemble the closed loop of the law (`gains`) around the trim point (`state`, `controls`,
/// `lin`). States: u, w, q, theta, h, speed integral, height integral, thrust of each group.
pub fn closed_loop(
    v: &Vehicle,
    state: &State,
    controls: &Controls,
    lin: &LinearModel,
    gains: &FeedbackGains,
    climb_rad: f64,
) -> ClosedLoop {
    let nt = v.rotors.len();
    let ne = v.elevators.len();
    // The law handles at most MAX_INPUTS inputs; further ones are left out of the analysis.
    let m = feedback_inputs(v).min(super::law::MAX_INPUTS);
    let n = 7 + nt;
    let (st, ct) = state.theta_rad.sin_cos();
    let (u0, w0) = (state.u_mps, state.w_mps);
    let cg = climb_rad.cos().max(0.1);
    let mut a = DMatrix::zeros(n, n);
    for i in 0..4 {
        for k in 0..4 {
            a[(i, k)] = lin.a[(i, k)];
        }
    }
    // Thrust lags feed the plant.
    for g in 0..nt {
        let col = lin.b.get(g).copied().unwrap_or([0.0; 4]);
        for i in 0..4 {
            a[(i, 7 + g)] = col[i];
        }
        let tau = v.rotors[g].thrust_lag_s.max(super::MIN_THRUST_LAG_S);
        a[(7 + g, 7 + g)] = -1.0 / tau;
    }
    // Height rate and the path speed (still air).
    let hdot = [st, -ct, 0.0, u0 * ct + w0 * st];
    let vpath = [ct / cg, st / cg, 0.0, (-u0 * st + w0 * ct) / cg];
    for k in 0..4 {
        a[(4, k)] = hdot[k];
        a[(5, k)] = -vpath[k];
    }
    a[(6, 4)] = -1.0;
    // Law inputs as rows over the states.
    let row = |f: &dyn Fn(&mut DVector<f64>)| {
        let mut r = DVector::zeros(n);
        f(&mut r);
        r
    };
    let speed_error = row(&|r| (0..4).for_each(|k| r[k] = -vpath[k]));
    let speed_integral = row(&|r| r[5] = 1.0);
    let height_error = row(&|r| r[4] = -1.0);
    let height_rate_error = row(&|r| (0..4).for_each(|k| r[k] = -hdot[k]));
    let height_integral = row(&|r| r[6] = 1.0);
    let pitch = row(&|r| r[3] = 1.0);
    let pitch_rate = row(&|r| r[2] = 1.0);
    let own = row(&|r| (0..4).for_each(|k| r[k] = lin.a[(2, k)]));
    let al = allocation(v, state, controls, lin);
    let unit = |set: &dyn Fn(&mut LawInput)| {
        let mut i = LawInput::default();
        set(&mut i);
        law(gains, &al, &i, None).delta
    };
    let k_speed = unit(&|i| i.speed_error_mps = 1.0);
    let k_speed_i = unit(&|i| i.speed_integral_m = 1.0);
    let k_height = unit(&|i| i.height_error_m = 1.0);
    let k_height_rate = unit(&|i| i.height_rate_error_mps = 1.0);
    let k_height_i = unit(&|i| i.height_integral_m_s = 1.0);
    let k_pitch = unit(&|i| i.pitch_rad = 1.0);
    let k_rate = unit(&|i| i.pitch_rate_rad_s = 1.0);
    let k_own = unit(&|i| i.pitch_accel_own_rad_s2 = 1.0);
    let mut b = Vec::with_capacity(m);
    let mut c = Vec::with_capacity(m);
    let mut names = Vec::with_capacity(m);
    let mut loops = Vec::with_capacity(m);
    for j in 0..m {
        let mut bj = DVector::zeros(n);
        if j < nt {
            bj[7 + j] = -a[(7 + j, 7 + j)];
            names.push(format!("thrust {}", v.rotors[j].name));
        } else {
            let col = lin.b.get(j).copied().unwrap_or([0.0; 4]);
            for i in 0..4 {
                bj[i] = col[i];
            }
            names.push(format!("elevator {}", v.elevators[j - nt].name));
        }
        let cj = &speed_error * k_speed[j]
            + &speed_integral * k_speed_i[j]
            + &height_error * k_height[j]
            + &height_rate_error * k_height_rate[j]
            + &height_integral * k_height_i[j]
            + &pitch * k_pitch[j]
            + &pitch_rate * k_rate[j]
            + &own * k_own[j];
        // Which loops drive it: response to 1 m/s, 1 m and 1 deg errors, relative.
        let contrib = [
            ("speed", k_speed[j].abs()),
            ("height", k_height[j].abs()),
            ("pitch attitude", k_pitch[j].abs() * 1f64.to_radians()),
        ];
        let big = contrib.iter().map(|x| x.1).fold(0.0, f64::max);
        let list: Vec<&str> = contrib
            .iter()
            .filter(|x| big > 0.0 && x.1 >= 0.2 * big)
            .map(|x| x.0)
            .collect();
        loops.push(list.join(", "));
        b.push(bj);
        c.push(cj);
    }
    let _ = ne;
    ClosedLoop {
        a_open: a,
        b,
        c,
        actuators: names,
        loop_names: loops,
    }
}

/// Loop margins at every actuator of the law at a trim point, in the order thrust groups then
/// elevators. `climb_rad` is the trim's flight-path angle (the speed loop holds the speed
/// along it).
pub fn loop_margins(
    v: &Vehicle,
    state: &State,
    controls: &Controls,
    lin: &LinearModel,
    gains: &FeedbackGains,
    climb_rad: f64,
) -> Vec<LoopMargin> {
    let cl = closed_loop(v, state, controls, lin, gains, climb_rad);
    let stable = cl.stable();
    (0..cl.b.len())
        .map(|j| {
            let in_loop = cl.c[j].norm() * cl.b[j].norm() > 1e-12;
            let fm = if in_loop {
                cl.broken(j).margins()
            } else {
                FrequencyMargins::default()
            };
            LoopMargin {
                loop_name: if in_loop {
                    cl.loop_names[j].clone()
                } else {
                    String::new()
                },
                actuator: cl.actuators[j].clone(),
                in_loop,
                gain_margin_db: fm.gain_margin_db,
                gain_reduction_margin_db: fm.gain_reduction_margin_db,
                phase_margin_deg: fm.phase_margin_deg,
                delay_margin_s: if stable { fm.delay_margin_s } else { None },
                crossover_rad_s: fm.crossover_rad_s,
                phase_crossover_rad_s: fm.phase_crossover_rad_s,
                closed_loop_stable: stable,
            }
        })
        .collect()
}

/// Reasons a point's loop margins fall short of the thresholds (gain margin in dB, phase
/// margin in deg), for the unsafe bands; an unstable closed loop is a reason by itself.
pub fn margin_shortfalls(
    m: &[LoopMargin],
    gain_margin_db: f64,
    phase_margin_deg: f64,
) -> Vec<String> {
    let mut out = Vec::new();
    if m.iter().any(|x| !x.closed_loop_stable) {
        out.push("closed loop unstable".to_string());
    }
    for x in m.iter().filter(|x| x.in_loop) {
        if let Some(g) = x.gain_margin_db {
            if g < gain_margin_db {
                out.push(format!(
                    "gain margin at {} {g:.1} dB (threshold {gain_margin_db:.1} dB)",
                    x.actuator
                ));
            }
        }
        if let Some(g) = x.gain_reduction_margin_db {
            if g > -gain_margin_db {
                out.push(format!(
                    "gain-reduction margin at {} {g:.1} dB (threshold -{gain_margin_db:.1} dB)",
                    x.actuator
                ));
            }
        }
        if let Some(p) = x.phase_margin_deg {
            if p < phase_margin_deg {
                out.push(format!(
                    "phase margin at {} {p:.1} deg (threshold {phase_margin_deg:.1} deg)",
                    x.actuator
                ));
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wrap_keeps_the_half_open_circle() {
        assert_eq!(wrap_deg(180.0), 180.0);
        assert_eq!(wrap_deg(-180.0), 180.0);
        assert!((wrap_deg(190.0) + 170.0).abs() < 1e-12);
        assert!((wrap_deg(-370.0) + 10.0).abs() < 1e-12);
    }
}
