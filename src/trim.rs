//! Trim: pitch attitude and controls that make the vehicle steady at a given airspeed and
//! flight-path angle (DESIGN.md §4).
//!
//! Unknowns are pitch attitude (unless held), one thrust per rotor group, each elevator and
//! each tilt actuator that is free. Conditions are du/dt = dw/dt = dq/dt = 0 at q = 0, or, with
//! pitch held (a tail-sitter corridor point), zero vertical acceleration and zero dq/dt with the
//! acceleration along the path left free and reported.
//!
//! Method (ours, documented in DEVELOPERS.md): a bounded gradient-projection method.
//! 1. Restoration: minimum-norm Gauss-Newton steps dz = -J^T (J J^T + lambda I)^-1 r on the
//!    free, scaled unknowns, with a forward-difference Jacobian, step length control and
//!    clamping to the actuator limits (a clamped unknown leaves the free set).
//! 2. Optimisation, when unknowns outnumber conditions: a step along the objective gradient
//!    projected on the null space of J, followed by restoration; accepted when the objective
//!    falls, with the step grown or shrunk accordingly (default objective: total shaft power).
//!    The alternative objective (largest smallest stall margin) is minimised with argmin's
//!    Nelder-Mead over the null-space coordinates, each trial restored to feasibility.
//! 3. Power: a group whose shaft power exceeds what is available at its inflow has its thrust
//!    bound lowered to the thrust available (rotor::thrust_available) and the point is solved again.
//!
//! Several starts are tried where branches exist; a point that does not converge is reported
//! as untrimmable with the limits that were active, never as a number.

// The numerical kernels below index several fixed arrays with one loop variable.
#![allow(clippy::needless_range_loop)]

use crate::atmosphere::Atmosphere;
use crate::dynamics::{evaluate, Controls, Evaluation, State, Wind};
use crate::rotor;
use crate::vehicle::Vehicle;

/// Largest number of trim unknowns supported (pitch + controls).
pub const MAX_UNKNOWNS: usize = 24;

/// What the trim minimises where controls outnumber conditions.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Objective {
    /// Total shaft power, plus a penalty that keeps redundant controls off their stops and
    /// the surfaces off stall where another solution costs a little more power
    /// ([`reserve_penalty`]).
    #[default]
    Reserve,
    /// Total shaft power of all rotor groups alone: redundant controls may park at a stop.
    Power,
    /// Largest smallest stall margin over the parts whose stall alone is unsafe.
    StallMargin,
}

/// Share of a control's travel the reserve objective keeps free at each end (common
/// practice, no source).
pub const RESERVE_TRAVEL_SHARE: f64 = 0.15;

/// Stall margin the reserve objective keeps on the parts whose stall alone is unsafe (rad;
/// 3 deg, the default threshold).
pub const RESERVE_STALL_MARGIN_RAD: f64 = 3.0 * std::f64::consts::PI / 180.0;

/// Weight of one control parked at its stop, in units of the vehicle's ideal hover power
/// (our choice: a few per cent of power buys the reserve back).
const RESERVE_STOP_WEIGHT: f64 = 0.03;

/// Weight of a surface at its stall angle, in units of the ideal hover power (our choice).
const RESERVE_STALL_WEIGHT: f64 = 0.05;

/// Weight pulling a control without effect to mid-travel (tiny; only breaks the tie).
const RESERVE_CENTRE_WEIGHT: f64 = 1e-4;

/// Weight of a pitch attitude 10 deg off level, in units of the ideal hover power (our
/// choice: where pitch is redundant, as with tilt free, a tilt vehicle flies near level
/// unless that costs more than about 1 % of power).
const RESERVE_LEVEL_WEIGHT: f64 = 0.01;

/// Stalled load share the trim's stall terms use (the default scenario threshold).
pub const TRIM_STALLED_SHARE: f64 = 0.05;

/// The reserve penalty (dimensionless, in units of ideal hover power): for the pitch and each
/// elevator unknown at normalised position u in [0, 1] of its travel,
/// `W_stop (max(0, r - d) / r)^2 + W_centre (2u - 1)^2` with d = min(u, 1 - u) and
/// r = [`RESERVE_TRAVEL_SHARE`]; plus `W_stall (max(0, m0 - m) / m0)^2` on the smallest stall
/// margin m of the parts whose stall alone is unsafe, m0 = [`RESERVE_STALL_MARGIN_RAD`];
/// plus `W_level (theta / 10 deg)^2` on the pitch attitude theta (rad), if it is an unknown.
/// Thrusts and tilts are left out: a thrust's reserve is the thrust margin (and a pusher idle
/// in hover is not a problem); a tilt is the slow transition variable, whose hover setting
/// sits near its stop by design.
pub fn reserve_penalty(travel: &[f64], stall_margin_rad: f64, pitch_rad: Option<f64>) -> f64 {
    let mut j = pitch_rad.map_or(0.0, |t| {
        let x = t / 10f64.to_radians();
        RESERVE_LEVEL_WEIGHT * x * x
    });
    for &u in travel {
        let d = u.min(1.0 - u);
        let short = (RESERVE_TRAVEL_SHARE - d).max(0.0) / RESERVE_TRAVEL_SHARE;
        j += RESERVE_STOP_WEIGHT * short * short
            + RESERVE_CENTRE_WEIGHT * (2.0 * u - 1.0) * (2.0 * u - 1.0);
    }
    if stall_margin_rad.is_finite() {
        let short =
            (RESERVE_STALL_MARGIN_RAD - stall_margin_rad).max(0.0) / RESERVE_STALL_MARGIN_RAD;
        j += RESERVE_STALL_WEIGHT * short * short;
    }
    j
}

/// How the tilt actuators are set.
#[derive(Debug, Clone, PartialEq)]
pub enum TiltSetting {
    /// Every actuator at the given angle (rad), clamped to its range.
    Fixed(Vec<f64>),
    /// Tilt is a trim unknown.
    Free,
}

/// Which equilibrium is sought.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Condition {
    /// du/dt = dw/dt = dq/dt = 0.
    Steady,
    /// Pitch held; vertical acceleration and dq/dt zero; acceleration along the path free.
    HeldPitch,
}

/// One trim problem.
#[derive(Debug, Clone)]
pub struct TrimRequest {
    /// Airspeed (m/s), >= 0.
    pub speed_mps: f64,
    /// Flight-path angle, climbing positive (rad).
    pub climb_rad: f64,
    /// Tilt actuator setting.
    pub tilt: TiltSetting,
    /// Pitch attitude held (rad), for [`Condition::HeldPitch`]; a hint otherwise.
    pub pitch_rad: Option<f64>,
    /// Equilibrium sought.
    pub condition: Condition,
    /// Objective for redundant controls.
    pub objective: Objective,
}

/// Why the solver stopped.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum TrimStatus {
    /// Residual below tolerance.
    Converged,
    /// No equilibrium found; the reasons name the limits that prevent it.
    Untrimmable,
}

/// A trim solution (or the best attempt when untrimmable).
#[derive(Debug, Clone)]
pub struct TrimSolution {
    /// Converged or not.
    pub status: TrimStatus,
    /// Limits that were active at the solution, or that prevent trim (text).
    pub reasons: Vec<String>,
    /// Names of limits active at a converged solution (controls at a bound).
    pub active_limits: Vec<String>,
    /// The state at the solution (q = 0).
    pub state: State,
    /// The controls at the solution.
    pub controls: Controls,
    /// Residual force along body x (N).
    pub residual_x_n: f64,
    /// Residual force along body z (N).
    pub residual_z_n: f64,
    /// Residual pitching moment (N m).
    pub residual_m_nm: f64,
    /// Acceleration along the flight path (m/s^2): zero for steady trim, the result for held pitch.
    pub path_accel_mps2: f64,
    /// Objective value at the solution (W for power; deg for stall margin).
    pub objective_value: f64,
    /// Iterations used over all starts.
    pub iterations: usize,
    /// Derivative-function evaluations used.
    pub evaluations: usize,
    /// The full evaluation at the solution.
    pub evaluation: Evaluation,
    /// Whether every start was tried (the warm start, if any, and all cold starts): a second
    /// call with `explore` would repeat the same deterministic work and find the same answer.
    pub every_start: bool,
}

impl TrimSolution {
    /// Whether the point is trimmed.
    pub fn trimmed(&self) -> bool {
        self.status == TrimStatus::Converged
    }
}

/// Convergence tolerance on the scaled residual (forces over weight, moment over weight times
/// reference chord).
pub const RESIDUAL_TOL: f64 = 1e-10;

#[derive(Clone, Copy, Debug, PartialEq)]
enum UnknownKind {
    Pitch,
    Thrust(usize),
    Elevator(usize),
    Tilt(usize),
}

/// The problem in scaled unknowns z = x / scale with bounds.
struct Problem<'a> {
    v: &'a Vehicle,
    atm: &'a Atmosphere,
    req: &'a TrimRequest,
    kinds: Vec<UnknownKind>,
    scale: Vec<f64>,
    lo: Vec<f64>,
    hi: Vec<f64>,
    base: Controls,
    pitch_held: f64,
    weight: f64,
    moment_scale: f64,
    power_scale: f64,
    evals: usize,
    // Scratch.
    controls: Controls,
    eval: Evaluation,
}

/// Result of evaluating the problem at z.
#[derive(Clone, Copy, Debug)]
struct Point3 {
    r: [f64; 3],
    m: usize,
    objective: f64,
}

impl<'a> Problem<'a> {
    fn new(v: &'a Vehicle, atm: &'a Atmosphere, req: &'a TrimRequest) -> Problem<'a> {
        let mut kinds = Vec::new();
        let mut scale = Vec::new();
        let mut lo = Vec::new();
        let mut hi = Vec::new();
        let mut base = Controls::zeros(v);
        if req.condition == Condition::Steady {
            // The vehicle's attitude limits at this speed bound the pitch unknown.
            let (p_lo, p_hi) = v.pitch_limits_rad(req.speed_mps);
            kinds.push(UnknownKind::Pitch);
            scale.push(1.0);
            lo.push(p_lo);
            hi.push(p_hi);
        }
        for (g, r) in v.rotors.iter().enumerate() {
            kinds.push(UnknownKind::Thrust(g));
            scale.push(r.thrust_max_n);
            lo.push(0.0);
            hi.push(1.0);
        }
        for (e, el) in v.elevators.iter().enumerate() {
            kinds.push(UnknownKind::Elevator(e));
            let s = (el.max_rad - el.min_rad).max(1e-3);
            scale.push(s);
            lo.push(el.min_rad / s);
            hi.push(el.max_rad / s);
        }
        match &req.tilt {
            TiltSetting::Fixed(t) => {
                for (a, act) in v.actuators.iter().enumerate() {
                    let val = t.get(a).copied().unwrap_or(act.max_rad);
                    base.tilt_rad[a] = val.clamp(act.min_rad, act.max_rad);
                }
            }
            TiltSetting::Free => {
                for (a, act) in v.actuators.iter().enumerate() {
                    kinds.push(UnknownKind::Tilt(a));
                    scale.push(1.0);
                    lo.push(act.min_rad);
                    hi.push(act.max_rad);
                }
            }
        }
        let weight = v.weight_n();
        let moment_scale = weight * v.reference.chord_m.max(0.05);
        // Ideal hover power of the whole vehicle on all rotor discs, as a power scale.
        let area: f64 = v
            .rotors
            .iter()
            .map(|r| r.count as f64 * r.disk_area_m2())
            .sum();
        let power_scale = weight * (weight / (2.0 * atm.density_kg_m3 * area)).sqrt();
        Problem {
            v,
            atm,
            req,
            kinds,
            scale,
            lo,
            hi,
            controls: base.clone(),
            base,
            pitch_held: req.pitch_rad.unwrap_or(0.0),
            weight,
            moment_scale,
            power_scale,
            evals: 0,
            eval: Evaluation::default(),
        }
    }

    fn n(&self) -> usize {
        self.kinds.len()
    }

    fn m(&self) -> usize {
        match self.req.condition {
            Condition::Steady => 3,
            Condition::HeldPitch => 2,
        }
    }

    /// Set the scratch controls and state from z; returns the state.
    fn apply(&mut self, z: &[f64]) -> State {
        self.controls.clone_from(&self.base);
        let mut theta = self.pitch_held;
        for (i, k) in self.kinds.iter().enumerate() {
            let x = z[i] * self.scale[i];
            match *k {
                UnknownKind::Pitch => theta = x,
                UnknownKind::Thrust(g) => self.controls.thrust_n[g] = x,
                UnknownKind::Elevator(e) => self.controls.elevator_rad[e] = x,
                UnknownKind::Tilt(a) => self.controls.tilt_rad[a] = x,
            }
        }
        State::on_path(self.req.speed_mps, self.req.climb_rad, theta)
    }

    fn eval(&mut self, z: &[f64]) -> Point3 {
        let state = self.apply(z);
        self.evals += 1;
        evaluate(
            self.v,
            self.atm,
            &state,
            &self.controls,
            Wind::default(),
            &mut self.eval,
        );
        let d = self.eval.state_dot;
        let m = self.v.mass_kg;
        let r = match self.req.condition {
            Condition::Steady => [
                m * d[0] / self.weight,
                m * d[1] / self.weight,
                self.v.pitch_inertia_kg_m2 * d[2] / self.moment_scale,
            ],
            Condition::HeldPitch => {
                // Earth-vertical acceleration (up) at q = 0: u_dot sin(theta) - w_dot cos(theta).
                let (s, c) = state.theta_rad.sin_cos();
                let up = d[0] * s - d[1] * c;
                [
                    m * up / self.weight,
                    self.v.pitch_inertia_kg_m2 * d[2] / self.moment_scale,
                    0.0,
                ]
            }
        };
        let objective = match self.req.objective {
            Objective::Power => self.eval.power_w / self.power_scale,
            Objective::Reserve => {
                let mut travel = [0.0; MAX_UNKNOWNS];
                let mut n = 0;
                let mut pitch = None;
                for (i, k) in self.kinds.iter().enumerate() {
                    if *k == UnknownKind::Pitch {
                        pitch = Some(z[i] * self.scale[i]);
                    }
                    let reserved = matches!(k, UnknownKind::Pitch | UnknownKind::Elevator(_));
                    if !reserved || self.hi[i] - self.lo[i] < 1e-12 {
                        continue;
                    }
                    travel[n] = ((z[i] - self.lo[i]) / (self.hi[i] - self.lo[i])).clamp(0.0, 1.0);
                    n += 1;
                }
                let stall = smallest_stall_margin_rad(self.v, self.atm.density_kg_m3, &self.eval);
                self.eval.power_w / self.power_scale + reserve_penalty(&travel[..n], stall, pitch)
            }
            Objective::StallMargin => {
                -smallest_stall_margin_rad(self.v, self.atm.density_kg_m3, &self.eval)
            }
        };
        Point3 {
            r,
            m: self.m(),
            objective,
        }
    }
}

fn norm_inf(r: &[f64; 3], m: usize) -> f64 {
    r[..m].iter().fold(0.0, |a, &b| a.max(b.abs()))
}

/// Smallest stall margin (rad) over the parts whose stall alone is unsafe
/// ([`crate::margins::stall_assessment`] at [`TRIM_STALLED_SHARE`]), and of the derivative
/// model; infinite when none carries load.
pub fn smallest_stall_margin_rad(v: &Vehicle, density_kg_m3: f64, e: &Evaluation) -> f64 {
    let mut best = crate::margins::stall_assessment(v, density_kg_m3, e, TRIM_STALLED_SHARE)
        .verdict_margin_rad;
    if let (Some(d), Some(dl)) = (&v.derivatives, &e.derivatives) {
        best = best
            .min(d.alpha_stall_pos_rad - dl.alpha_rad)
            .min(dl.alpha_rad - d.alpha_stall_neg_rad);
    }
    best
}

/// Jacobian (m x n, row-major in a fixed array) by forward differences on the free unknowns.
fn jacobian(
    p: &mut Problem,
    z: &[f64],
    f0: &Point3,
    free: &[bool],
    jac: &mut [[f64; MAX_UNKNOWNS]; 3],
    grad: &mut [f64; MAX_UNKNOWNS],
) {
    let n = p.n();
    let mut zz = [0.0; MAX_UNKNOWNS];
    zz[..n].copy_from_slice(&z[..n]);
    for j in 0..n {
        if !free[j] {
            for row in jac.iter_mut() {
                row[j] = 0.0;
            }
            grad[j] = 0.0;
            continue;
        }
        // Step towards the interior so that bounds are never crossed.
        let h = 1e-6 * (1.0 + z[j].abs());
        let h = if z[j] + h > p.hi[j] { -h } else { h };
        zz[j] = z[j] + h;
        let f = p.eval(&zz[..n]);
        zz[j] = z[j];
        for i in 0..3 {
            jac[i][j] = (f.r[i] - f0.r[i]) / h;
        }
        grad[j] = (f.objective - f0.objective) / h;
    }
}

/// Solve (J J^T + lambda I) y = b for the m x m system (m <= 3), padded with identity.
fn solve_normal(
    jac: &[[f64; MAX_UNKNOWNS]; 3],
    n: usize,
    m: usize,
    lambda: f64,
    b: [f64; 3],
) -> Option<[f64; 3]> {
    let mut a = nalgebra::Matrix3::<f64>::identity();
    for i in 0..m {
        for k in 0..m {
            let mut s = 0.0;
            for j in 0..n {
                s += jac[i][j] * jac[k][j];
            }
            a[(i, k)] = s + if i == k { lambda } else { 0.0 };
        }
    }
    let rhs = nalgebra::Vector3::new(b[0], b[1], b[2]);
    a.lu().solve(&rhs).map(|y| [y[0], y[1], y[2]])
}

/// Minimum-norm Gauss-Newton step on an active set: unknowns sitting on a bound whose step
/// would push them outward are held, and the step is recomputed without them.
fn active_set_step(
    p: &Problem,
    z: &[f64],
    jac: &[[f64; MAX_UNKNOWNS]; 3],
    r: &[f64; 3],
    lambda: f64,
    dz: &mut [f64; MAX_UNKNOWNS],
) -> bool {
    let n = p.n();
    let m = p.m();
    let mut free = [true; MAX_UNKNOWNS];
    let mut jf = *jac;
    for _ in 0..=n {
        let neg = [-r[0], -r[1], -r[2]];
        let Some(y) = solve_normal(&jf, n, m, lambda, neg) else {
            return false;
        };
        let mut changed = false;
        for j in 0..n {
            dz[j] = if free[j] {
                (0..m).map(|i| jf[i][j] * y[i]).sum()
            } else {
                0.0
            };
            let at_lo = z[j] <= p.lo[j] + 1e-12 && dz[j] < 0.0;
            let at_hi = z[j] >= p.hi[j] - 1e-12 && dz[j] > 0.0;
            if free[j] && (at_lo || at_hi) {
                free[j] = false;
                for row in jf.iter_mut() {
                    row[j] = 0.0;
                }
                changed = true;
            }
        }
        if !changed {
            return true;
        }
    }
    true
}

/// Restore feasibility from z (in place). Returns (converged, iterations, last point).
fn restore(p: &mut Problem, z: &mut [f64], max_iter: usize) -> (bool, usize, Point3) {
    let n = p.n();
    let m = p.m();
    let mut f = p.eval(z);
    let mut jac = [[0.0; MAX_UNKNOWNS]; 3];
    let mut grad = [0.0; MAX_UNKNOWNS];
    let all = [true; MAX_UNKNOWNS];
    let mut lambda = 1e-12;
    let mut it = 0;
    // Residual a few iterations back: a start that does not halve it in that many steps is
    // stuck in a local minimum of the residual and is abandoned (the caller tries others).
    const STALL_WINDOW: usize = 6;
    let mut history = [f64::INFINITY; STALL_WINDOW];
    while it < max_iter {
        let res = norm_inf(&f.r, m);
        if res < RESIDUAL_TOL {
            return (true, it, f);
        }
        if it >= STALL_WINDOW && res > 0.5 * history[it % STALL_WINDOW] {
            break;
        }
        history[it % STALL_WINDOW] = res;
        it += 1;
        jacobian(p, z, &f, &all[..n], &mut jac, &mut grad);
        let mut dz = [0.0; MAX_UNKNOWNS];
        if !active_set_step(p, z, &jac, &f.r, lambda, &mut dz) {
            lambda = (lambda * 100.0).max(1e-8);
            continue;
        }
        // Trust region in scaled units.
        let big = dz[..n].iter().fold(0.0f64, |a, b| a.max(b.abs()));
        let cap = 0.3;
        let mut t = if big > cap { cap / big } else { 1.0 };
        let mut accepted = false;
        let mut trial = [0.0; MAX_UNKNOWNS];
        for _ in 0..10 {
            for j in 0..n {
                trial[j] = (z[j] + t * dz[j]).clamp(p.lo[j], p.hi[j]);
            }
            let ft = p.eval(&trial[..n]);
            let rt = norm_inf(&ft.r, m);
            if rt < res * (1.0 - 1e-4 * t) || rt < RESIDUAL_TOL {
                z[..n].copy_from_slice(&trial[..n]);
                f = ft;
                accepted = true;
                break;
            }
            t *= 0.5;
        }
        if accepted {
            lambda = (lambda * 0.1).max(1e-12);
        } else {
            lambda = (lambda * 100.0).max(1e-6);
            if lambda > 1e4 {
                break;
            }
        }
    }
    let ok = norm_inf(&f.r, m) < RESIDUAL_TOL;
    (ok, it, f)
}

/// Move along the feasible set to lower the (smooth) objective. Returns iterations used.
fn optimise_gradient(p: &mut Problem, z: &mut [f64], f: &mut Point3, max_outer: usize) -> usize {
    let n = p.n();
    let m = p.m();
    if n <= m {
        return 0;
    }
    let mut step = 0.05;
    let mut iters = 0;
    let mut jac = [[0.0; MAX_UNKNOWNS]; 3];
    let mut grad = [0.0; MAX_UNKNOWNS];
    for _ in 0..max_outer {
        iters += 1;
        // Free set: not at a bound, or at a bound with the descent direction pointing inward.
        let mut free = [true; MAX_UNKNOWNS];
        let all_free = [true; MAX_UNKNOWNS];
        jacobian(p, z, f, &all_free[..n], &mut jac, &mut grad);
        for j in 0..n {
            let at_lo = z[j] <= p.lo[j] + 1e-9 && grad[j] > 0.0;
            let at_hi = z[j] >= p.hi[j] - 1e-9 && grad[j] < 0.0;
            if at_lo || at_hi {
                free[j] = false;
                for row in jac.iter_mut() {
                    row[j] = 0.0;
                }
            }
        }
        // Projected gradient d = -(g - J^T (J J^T)^-1 J g) on the free set.
        let mut jg = [0.0; 3];
        for (i, v) in jg.iter_mut().enumerate().take(m) {
            *v = (0..n)
                .filter(|&j| free[j])
                .map(|j| jac[i][j] * grad[j])
                .sum();
        }
        let Some(y) = solve_normal(&jac, n, m, 1e-12, jg) else {
            break;
        };
        let mut d = [0.0; MAX_UNKNOWNS];
        let mut dn = 0.0f64;
        for j in 0..n {
            if free[j] {
                d[j] = -(grad[j] - (0..m).map(|i| jac[i][j] * y[i]).sum::<f64>());
                dn = dn.max(d[j].abs());
            }
        }
        if dn < 1e-7 {
            break;
        }
        let mut improved = false;
        let mut gain = 0.0;
        for _ in 0..6 {
            let mut trial = [0.0; MAX_UNKNOWNS];
            for j in 0..n {
                trial[j] = (z[j] + step * d[j] / dn).clamp(p.lo[j], p.hi[j]);
            }
            let (ok, _, ft) = restore(p, &mut trial[..n], 8);
            if ok && ft.objective < f.objective - 1e-12 {
                gain = f.objective - ft.objective;
                z[..n].copy_from_slice(&trial[..n]);
                *f = ft;
                improved = true;
                step = (step * 2.0).min(0.5);
                break;
            }
            step *= 0.3;
        }
        // Stop when the objective no longer moves by 1e-6 of itself (power is scaled to the
        // hover power, so this is a micro-watt-level change on a small vehicle).
        if !improved || step < 1e-6 || gain < 1e-6 * f.objective.abs().max(1e-3) {
            break;
        }
    }
    iters
}

/// Minimise a non-smooth objective with argmin's Nelder-Mead over null-space coordinates.
fn optimise_nelder_mead(p: &mut Problem, z: &mut [f64], f: &mut Point3) -> usize {
    use argmin::core::{CostFunction, Executor};
    use argmin::solver::neldermead::NelderMead;
    let n = p.n();
    let m = p.m();
    if n <= m {
        return 0;
    }
    let dim = n - m;
    // Orthonormal null-space basis of J from an SVD.
    let mut jac = [[0.0; MAX_UNKNOWNS]; 3];
    let mut grad = [0.0; MAX_UNKNOWNS];
    let free = [true; MAX_UNKNOWNS];
    jacobian(p, z, f, &free[..n], &mut jac, &mut grad);
    let jm = nalgebra::DMatrix::from_fn(m, n, |i, j| jac[i][j]);
    let full = jm.transpose() * &jm;
    // Non-finite derivatives or a decomposition past its budget: no optimisation step.
    if full.iter().any(|x| !x.is_finite()) {
        return 0;
    }
    let Some(eig) = nalgebra::linalg::SymmetricEigen::try_new(
        full,
        f64::EPSILON,
        crate::linear::SCHUR_MAX_ITERATIONS,
    ) else {
        return 0;
    };
    let mut idx: Vec<usize> = (0..n).collect();
    idx.sort_by(|&a, &b| {
        eig.eigenvalues[a]
            .partial_cmp(&eig.eigenvalues[b])
            .unwrap_or(std::cmp::Ordering::Equal)
    });
    let basis: Vec<Vec<f64>> = idx[..dim]
        .iter()
        .map(|&k| eig.eigenvectors.column(k).iter().copied().collect())
        .collect();

    struct Cost<'p, 'a> {
        p: std::cell::RefCell<&'p mut Problem<'a>>,
        z0: Vec<f64>,
        basis: Vec<Vec<f64>>,
    }
    impl CostFunction for Cost<'_, '_> {
        type Param = Vec<f64>;
        type Output = f64;
        fn cost(&self, y: &Self::Param) -> Result<f64, argmin::core::Error> {
            let mut p = self.p.borrow_mut();
            let n = p.n();
            let mut z = self.z0.clone();
            for (k, b) in self.basis.iter().enumerate() {
                for j in 0..n {
                    z[j] += y[k] * b[j];
                }
            }
            for j in 0..n {
                z[j] = z[j].clamp(p.lo[j], p.hi[j]);
            }
            let (ok, _, f) = restore(&mut p, &mut z, 10);
            Ok(if ok {
                f.objective
            } else {
                1e3 + norm_inf(&f.r, p.m())
            })
        }
    }
    let z0 = z[..n].to_vec();
    let mut simplex = vec![vec![0.0; dim]];
    for k in 0..dim {
        let mut s = vec![0.0; dim];
        s[k] = 0.1;
        simplex.push(s);
    }
    let cost = Cost {
        p: std::cell::RefCell::new(p),
        z0: z0.clone(),
        basis: basis.clone(),
    };
    let solver = match NelderMead::new(simplex).with_sd_tolerance(1e-6) {
        Ok(s) => s,
        Err(_) => return 0,
    };
    let res = Executor::new(cost, solver)
        .configure(|st| st.max_iters(80))
        .run();
    let Ok(res) = res else { return 0 };
    let iters = res.state.iter as usize;
    let Some(best) = res.state.best_param.clone() else {
        return iters;
    };
    let cost = res.problem.problem.expect("problem is returned");
    let p = cost.p.into_inner();
    let mut zn = z0;
    for (k, b) in basis.iter().enumerate() {
        for j in 0..n {
            zn[j] += best[k] * b[j];
        }
    }
    for j in 0..n {
        zn[j] = zn[j].clamp(p.lo[j], p.hi[j]);
    }
    let (ok, _, fnew) = restore(p, &mut zn, 10);
    if ok && fnew.objective < f.objective {
        z[..n].copy_from_slice(&zn);
        *f = fnew;
    }
    iters
}

/// A starting guess (unscaled): pitch (rad) and controls.
#[derive(Debug, Clone, PartialEq)]
pub struct TrimGuess {
    /// Pitch attitude (rad).
    pub theta_rad: f64,
    /// Controls.
    pub controls: Controls,
}

impl TrimSolution {
    /// This solution as a starting guess for a neighbouring point.
    pub fn guess(&self) -> TrimGuess {
        TrimGuess {
            theta_rad: self.state.theta_rad,
            controls: self.controls.clone(),
        }
    }
}

fn to_scaled(p: &Problem, g: &TrimGuess) -> Vec<f64> {
    p.kinds
        .iter()
        .enumerate()
        .map(|(i, k)| {
            let x = match *k {
                UnknownKind::Pitch => g.theta_rad,
                UnknownKind::Thrust(gr) => g.controls.thrust_n.get(gr).copied().unwrap_or(0.0),
                UnknownKind::Elevator(e) => g.controls.elevator_rad.get(e).copied().unwrap_or(0.0),
                UnknownKind::Tilt(a) => g.controls.tilt_rad.get(a).copied().unwrap_or(0.0),
            };
            (x / p.scale[i]).clamp(p.lo[i], p.hi[i])
        })
        .collect()
}

/// Cold starting guesses: pitch near the flight path and near thrust-up attitudes, thrust
/// sharing the weight, elevators neutral, free tilt at mid-range.
pub fn cold_guesses(v: &Vehicle, req: &TrimRequest) -> Vec<TrimGuess> {
    let w = v.weight_n();
    let n_rotors: f64 = v.rotors.iter().map(|r| r.count as f64).sum();
    let mut base = Controls::zeros(v);
    for (g, r) in v.rotors.iter().enumerate() {
        base.thrust_n[g] = (w / n_rotors).min(r.thrust_max_n) * 0.8;
    }
    match &req.tilt {
        TiltSetting::Fixed(t) => base.tilt_rad.clone_from(t),
        TiltSetting::Free => {
            // Thrust up (tilt 90 deg) below about 1.5 times the ideal hover induced velocity
            // of the whole vehicle, where the wing cannot carry the weight yet; mid-travel
            // above it (the restoration finds the rest).
            let area: f64 = v
                .rotors
                .iter()
                .map(|r| r.count as f64 * r.disk_area_m2())
                .sum();
            let v_h = (w / (2.0 * 1.225 * area)).sqrt();
            for (a, act) in v.actuators.iter().enumerate() {
                base.tilt_rad[a] = if req.speed_mps < 1.5 * v_h {
                    std::f64::consts::FRAC_PI_2.clamp(act.min_rad, act.max_rad)
                } else {
                    0.5 * (act.min_rad + act.max_rad)
                };
            }
        }
    }
    let mut thetas = vec![req.climb_rad + 0.03];
    if let Some(h) = req.pitch_rad {
        thetas.insert(0, h);
    }
    // Attitudes that point the mean rotor axis up (tail-sitters in hover and transition).
    let mean_axis: f64 =
        v.rotors.iter().map(|r| r.mounting_rad).sum::<f64>() / v.rotors.len() as f64;
    if v.actuators.is_empty() && mean_axis.abs() < 0.5 {
        for deg in [85.0f64, 60.0, 35.0, 15.0] {
            thetas.push(deg.to_radians());
        }
    } else {
        // Nose-up attitudes matter where the wing stalls or the elevator runs out (a tilt
        // vehicle between hover and wingborne flight), nose-down ones where rotors push.
        for t in [0.0, 0.15, 0.35, -0.2, 0.55] {
            thetas.push(t);
        }
    }
    thetas
        .into_iter()
        .map(|t| TrimGuess {
            theta_rad: t,
            controls: base.clone(),
        })
        .collect()
}

/// Trim one point. `warm` is tried first (from a neighbouring point); cold starts follow if it
/// fails, or always when `explore` is set (to find the best branch).
pub fn trim(
    v: &Vehicle,
    atm: &Atmosphere,
    req: &TrimRequest,
    warm: Option<&TrimGuess>,
    explore: bool,
) -> TrimSolution {
    let mut starts: Vec<TrimGuess> = Vec::new();
    if let Some(w) = warm {
        starts.push(w.clone());
    }
    let cold = cold_guesses(v, req);
    let mut best: Option<(Vec<f64>, Point3, Vec<Option<f64>>)> = None;
    let mut p = Problem::new(v, atm, req);
    let mut iterations = 0;
    let mut power_caps: Vec<Option<f64>> = vec![None; v.rotors.len()];
    let mut tried_cold = false;
    let mut k = 0;
    loop {
        if k >= starts.len() {
            let have_solution = best
                .as_ref()
                .is_some_and(|(_, b, _)| norm_inf(&b.r, b.m) < RESIDUAL_TOL);
            if tried_cold || (!explore && have_solution) {
                break;
            }
            starts.extend(cold.iter().cloned());
            tried_cold = true;
            if k >= starts.len() {
                break;
            }
        }
        let g = starts[k].clone();
        k += 1;
        // Power-derived thrust bounds belong to one start's solution branch.
        power_caps.iter_mut().for_each(|c| *c = None);
        for pass in 0..3 {
            // Apply power-derived thrust caps.
            for (i, kind) in p.kinds.iter().enumerate() {
                if let UnknownKind::Thrust(gr) = *kind {
                    p.hi[i] = power_caps[gr].map_or(1.0, |c| (c / p.scale[i]).min(1.0));
                }
            }
            let mut z = to_scaled(&p, &g);
            // Feasible points converge in well under 20 steps from any of the starts.
            let (ok, it, mut f) = restore(&mut p, &mut z, 25);
            iterations += it;
            if !ok {
                if best.as_ref().is_none_or(|b| {
                    norm_inf(&b.1.r, b.1.m) > RESIDUAL_TOL
                        && norm_inf(&f.r, f.m) < norm_inf(&b.1.r, b.1.m)
                }) {
                    best = Some((z, f, power_caps.clone()));
                }
                break;
            }
            iterations += match req.objective {
                Objective::Power | Objective::Reserve => {
                    optimise_gradient(&mut p, &mut z, &mut f, 30)
                }
                Objective::StallMargin => optimise_nelder_mead(&mut p, &mut z, &mut f),
            };
            // Check power at this solution; cap thrust where power is short and solve again.
            p.eval(&z);
            let mut capped = false;
            for (gr, r) in v.rotors.iter().enumerate() {
                let rl = &p.eval.rotors[gr];
                let per = rl.performance.shaft_power_w;
                if per > r.power_max_w * (1.0 + 1e-9) {
                    let avail = rotor::thrust_available(
                        r.thrust_max_n,
                        r.power_max_w,
                        atm.density_kg_m3,
                        r.disk_area_m2(),
                        rl.v_axial_mps,
                        rl.v_inplane_mps,
                        r.power_model,
                    );
                    let old = power_caps[gr].unwrap_or(f64::INFINITY);
                    power_caps[gr] = Some(avail.min(old * 0.999_999));
                    capped = true;
                }
            }
            if capped && pass < 2 {
                continue;
            }
            let feasible_power = !capped;
            let score = if feasible_power {
                f.objective
            } else {
                f64::INFINITY
            };
            let better = match &best {
                None => true,
                Some((_, bf, _)) => {
                    let b_ok = norm_inf(&bf.r, bf.m) < RESIDUAL_TOL;
                    !b_ok || score < bf.objective - 1e-9
                }
            };
            if (better && feasible_power) || best.is_none() {
                best = Some((z, f, power_caps.clone()));
            }
            break;
        }
    }
    let (z, f, caps) = best.expect("at least one start is always tried");
    let state = p.apply(&z);
    let controls = p.controls.clone();
    p.eval(&z);
    let converged = norm_inf(&f.r, f.m) < RESIDUAL_TOL && power_ok(v, &p.eval);
    let mut active = Vec::new();
    for (j, kind) in p.kinds.iter().enumerate() {
        let at_lo = z[j] <= p.lo[j] + 1e-9;
        let at_hi = z[j] >= p.hi[j] - 1e-9;
        if !(at_lo || at_hi) {
            continue;
        }
        active.push(limit_name(v, req.speed_mps, *kind, at_hi, &caps));
    }
    let reasons = if converged {
        Vec::new()
    } else {
        untrimmable_reasons(v, &p, &f, &active)
    };
    let d = p.eval.state_dot;
    let alpha = state.theta_rad - req.climb_rad;
    // Acceleration along the path (body acceleration projected on the velocity direction):
    // zero in steady trim, the result with pitch held. The residual is what is left after it.
    let path_accel = match req.condition {
        Condition::Steady => 0.0,
        Condition::HeldPitch => d[0] * alpha.cos() + d[1] * alpha.sin(),
    };
    let m = v.mass_kg;
    TrimSolution {
        status: if converged {
            TrimStatus::Converged
        } else {
            TrimStatus::Untrimmable
        },
        reasons,
        active_limits: active,
        state,
        controls,
        residual_x_n: m * (d[0] - path_accel * alpha.cos()),
        residual_z_n: m * (d[1] - path_accel * alpha.sin()),
        residual_m_nm: v.pitch_inertia_kg_m2 * d[2],
        path_accel_mps2: path_accel,
        objective_value: match req.objective {
            Objective::Power | Objective::Reserve => p.eval.power_w,
            Objective::StallMargin => {
                smallest_stall_margin_rad(v, atm.density_kg_m3, &p.eval).to_degrees()
            }
        },
        iterations,
        evaluations: p.evals,
        evaluation: p.eval.clone(),
        every_start: tried_cold,
    }
}

fn power_ok(v: &Vehicle, e: &Evaluation) -> bool {
    v.rotors
        .iter()
        .zip(&e.rotors)
        .all(|(r, l)| l.performance.shaft_power_w <= r.power_max_w * (1.0 + 1e-6))
}

fn limit_name(
    v: &Vehicle,
    speed_mps: f64,
    kind: UnknownKind,
    at_hi: bool,
    caps: &[Option<f64>],
) -> String {
    match kind {
        UnknownKind::Pitch => {
            let (lo, hi) = v.pitch_limits_rad(speed_mps);
            format!(
                "pitch attitude at its {} limit ({:.1} deg)",
                if at_hi { "upper" } else { "lower" },
                if at_hi { hi } else { lo }.to_degrees()
            )
        }
        UnknownKind::Thrust(g) => {
            let r = &v.rotors[g];
            if at_hi {
                if caps[g].is_some() {
                    format!(
                        "power of rotor group '{}' ({:.0} W per rotor)",
                        r.name, r.power_max_w
                    )
                } else {
                    format!(
                        "thrust cap of rotor group '{}' ({:.0} N per rotor)",
                        r.name, r.thrust_max_n
                    )
                }
            } else {
                format!("rotor group '{}' at zero thrust", r.name)
            }
        }
        UnknownKind::Elevator(e) => {
            let el = &v.elevators[e];
            format!(
                "elevator '{}' at its {} limit ({:.1} deg)",
                el.name,
                if at_hi {
                    "trailing-edge-down"
                } else {
                    "trailing-edge-up"
                },
                if at_hi { el.max_rad } else { el.min_rad }.to_degrees()
            )
        }
        UnknownKind::Tilt(a) => {
            let act = &v.actuators[a];
            format!(
                "tilt '{}' at its {} limit ({:.1} deg)",
                act.name,
                if at_hi { "upper" } else { "lower" },
                if at_hi { act.max_rad } else { act.min_rad }.to_degrees()
            )
        }
    }
}

fn untrimmable_reasons(v: &Vehicle, p: &Problem, f: &Point3, active: &[String]) -> Vec<String> {
    let mut out = Vec::new();
    let labels: &[&str] = match p.req.condition {
        Condition::Steady => &["force along x", "force along z", "pitching moment"],
        Condition::HeldPitch => &["vertical force", "pitching moment"],
    };
    let mut worst = Vec::new();
    for (i, l) in labels.iter().enumerate() {
        if f.r[i].abs() >= RESIDUAL_TOL {
            worst.push(format!(
                "{l} unbalanced by {:.3} % of weight{}",
                100.0 * f.r[i].abs(),
                if i == labels.len() - 1 {
                    " x chord"
                } else {
                    ""
                }
            ));
        }
    }
    if !active.is_empty() {
        out.push(format!("limits reached: {}", active.join("; ")));
    }
    if !power_ok(v, &p.eval) {
        for (r, l) in v.rotors.iter().zip(&p.eval.rotors) {
            if l.performance.shaft_power_w > r.power_max_w * (1.0 + 1e-6) {
                out.push(format!(
                    "power of rotor group '{}': needs {:.0} W per rotor, {:.0} W available",
                    r.name, l.performance.shaft_power_w, r.power_max_w
                ));
            }
        }
    }
    // Rotor groups working near their limits in the closest attempt.
    let rho = p.atm.density_kg_m3;
    for (r, l) in v.rotors.iter().zip(&p.eval.rotors) {
        let t1 = l.thrust_n / r.count as f64;
        let avail = rotor::thrust_available(
            r.thrust_max_n,
            r.power_max_w,
            rho,
            r.disk_area_m2(),
            l.v_axial_mps,
            l.v_inplane_mps,
            r.power_model,
        );
        if t1 >= 0.9 * avail && avail > 0.0 && !active.iter().any(|a| a.contains(&r.name)) {
            out.push(format!(
                "rotor group '{}' near the thrust it can make ({:.0} of {:.0} N per rotor, limited by {})",
                r.name,
                t1,
                avail,
                if avail < r.thrust_max_n * 0.999 { "power" } else { "its thrust cap" }
            ));
        }
    }
    if !worst.is_empty() {
        out.push(format!(
            "no equilibrium in the closest attempt: {}",
            worst.join(", ")
        ));
    }
    if out.is_empty() {
        out.push("the solver did not converge from any start".to_string());
    }
    out
}
