//! The speed sweep: trim, linearise and assess every airspeed from hover to cruise, then
//! collect the unsafe bands and each surface's stall exposure.
//!
//! Points are solved in fixed chunks of consecutive speeds; inside a chunk each point starts
//! from its neighbour's solution (warm start), and the first point of a chunk tries every cold
//! start and keeps the best branch; so does any point whose warm-started solution fails, and a
//! point with a stalled surface on entry into the stalled run and every fourth point inside it,
//! since that is where a second branch is likely. The chunking does not depend on the number of threads, so
//! results are the same on every machine; chunks run in parallel with rayon.

use rayon::prelude::*;
use serde::Serialize;

use crate::atmosphere::Atmosphere;
pub use crate::bands::{bands_of, Band};
use crate::control::TrimPoint;
use crate::dynamics::{Controls, State, STATE_NAMES};
use crate::linear::{linearise, modes, LinearModel, Mode};
use crate::margins::{margins, Margins};
use crate::scenario::{Schedule, Thresholds};
use crate::trim::{trim, Condition, Objective, TiltSetting, TrimGuess, TrimRequest, TrimSolution};
use crate::vehicle::Vehicle;

/// Consecutive speeds solved with warm starts by one task.
pub const CHUNK: usize = 16;

/// Inputs of a sweep that are not the vehicle.
#[derive(Debug, Clone)]
pub struct SweepSettings {
    /// Airspeeds (m/s).
    pub speeds_mps: Vec<f64>,
    /// Flight-path angle (rad).
    pub climb_rad: f64,
    /// Schedule of the transition variable.
    pub schedule: Schedule,
    /// Trim objective.
    pub objective: Objective,
    /// Thresholds for unsafe points.
    pub thresholds: Thresholds,
    /// Feedback law whose loop margins are computed at every trimmed point (None: skip).
    pub gains: Option<crate::control::law::FeedbackGains>,
    /// The loop model around the law (delay, servos) for the loop margins.
    pub loop_model: crate::control::loops::LoopSettings,
}

/// Residual of a point.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Residual {
    /// Force along body x (N).
    pub x_n: f64,
    /// Force along body z (N).
    pub z_n: f64,
    /// Pitching moment (N m).
    pub m_nm: f64,
}

/// One control input at a point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ActuatorValue {
    /// Name.
    pub name: String,
    /// thrust, elevator or tilt.
    pub kind: String,
    /// Value in `unit`.
    pub value: f64,
    /// N (whole group) or deg.
    pub unit: String,
    /// Lower limit.
    pub min: f64,
    /// Upper limit (thrust: available at this inflow).
    pub max: f64,
}

/// A rotor group at a point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RotorValue {
    /// Name.
    pub name: String,
    /// Rotors in the group.
    pub count: u32,
    /// Thrust of the whole group (N).
    pub thrust_n: f64,
    /// Thrust axis above body x (deg).
    pub axis_deg: f64,
    /// Shaft power of the whole group (W).
    pub power_w: f64,
    /// (T_available - T) / T_available.
    pub thrust_margin: f64,
    /// (P_available - P) / P_available.
    pub power_margin: f64,
    /// cap or power.
    pub limited_by: String,
    /// Induced velocity (m/s).
    pub induced_velocity_mps: f64,
}

/// A surface at a point (the margins module's record, serialised as is).
pub use crate::margins::SurfaceMargin as SurfaceValue;

/// Headline margins of a point (JSON `margins`; the per-surface and per-rotor records are
/// reported beside them as `surfaces` and `rotors`).
pub use crate::margins::Margins as MarginValues;

/// One point of a sweep, in the JSON layout other programs rely on.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PointReport {
    /// Airspeed (m/s).
    pub speed_mps: f64,
    /// Flight-path angle (deg).
    pub climb_deg: f64,
    /// Altitude (m).
    pub altitude_m: f64,
    /// Air density (kg/m^3).
    pub density_kg_m3: f64,
    /// Mass (kg).
    pub mass_kg: f64,
    /// Weight (N).
    pub weight_n: f64,
    /// Whether trim converged.
    pub trimmed: bool,
    /// Why the point is unsafe or untrimmable; empty when trimmed and safe.
    pub reasons: Vec<String>,
    /// Kinds of the reasons, for grouping into bands.
    #[serde(skip)]
    pub reason_kinds: Vec<String>,
    /// Notes that do not make the point unsafe (partial separation, separation on a body).
    pub advisories: Vec<String>,
    /// Limits active at the solution.
    pub active_limits: Vec<String>,
    /// Pitch attitude (deg).
    pub pitch_deg: Option<f64>,
    /// Angle of attack at the CG (deg); null in hover, where it is undefined.
    pub alpha_deg: Option<f64>,
    /// Acceleration along the path (m/s^2), zero for steady trim.
    pub path_accel_mps2: Option<f64>,
    /// Trim residual.
    pub residual: Residual,
    /// Trim iterations.
    pub iterations: usize,
    /// Controls.
    pub actuators: Vec<ActuatorValue>,
    /// Rotor groups.
    pub rotors: Vec<RotorValue>,
    /// Surfaces.
    pub surfaces: Vec<SurfaceValue>,
    /// Modes of the linear model.
    pub modes: Vec<Mode>,
    /// Headline margins (null when untrimmed).
    pub margins: Option<MarginValues>,
    /// Linear-model state names.
    pub state_names: Vec<String>,
    /// Linear-model input names.
    pub input_names: Vec<String>,
    /// Unstable open-loop modes and the loop crossover each demands (empty when untrimmed).
    pub open_loop_demands: Vec<crate::control::loops::OpenLoopDemand>,
    /// Loop margins of the feedback law at each actuator (empty when untrimmed or not asked).
    pub loop_margins: Vec<crate::control::loops::LoopMargin>,
    /// A matrix rows (null when untrimmed).
    pub a_matrix: Option<Vec<Vec<f64>>>,
    /// B matrix rows (null when untrimmed).
    pub b_matrix: Option<Vec<Vec<f64>>>,
}

/// Stall exposure of one surface over the sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StallExposure {
    /// Surface name.
    pub surface: String,
    /// Bands where a part of the surface is beyond a stall angle.
    pub stalled: Vec<Band>,
    /// Bands where the margin is below the threshold (stalled bands included).
    pub near_stall: Vec<Band>,
}

/// A whole sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepResult {
    /// Every point.
    pub points: Vec<PointReport>,
    /// Unsafe bands.
    pub bands: Vec<Band>,
    /// Stall exposure per surface.
    pub stall_exposure: Vec<StallExposure>,
}

/// Transition variable at a speed: tilt for each actuator (rad) and the pitch hint (rad).
pub fn schedule_at(v: &Vehicle, schedule: &Schedule, speed_mps: f64) -> (TiltSetting, Option<f64>) {
    match schedule {
        Schedule::Free => (TiltSetting::Free, None),
        Schedule::Tilt(t) => (
            TiltSetting::Fixed(vec![t.at(speed_mps); v.actuators.len()]),
            None,
        ),
        Schedule::Pitch(t) => (TiltSetting::Free, Some(t.at(speed_mps))),
    }
}

/// Trim, linearise and assess one point.
pub fn solve_point(
    v: &Vehicle,
    atm: &Atmosphere,
    req: &TrimRequest,
    thresholds: &Thresholds,
    warm: Option<&TrimGuess>,
    explore: bool,
) -> (PointReport, TrimSolution) {
    let sol = trim(v, atm, req, warm, explore);
    let report = assess(v, atm, req, &sol, thresholds);
    (report, sol)
}

/// Add the loop margins of a feedback law to an assessed, trimmed point, with the reasons
/// where the closed loop falls short: unstable, nominal or with the plant mismatch, or a
/// symmetric disk margin that does not cover the thresholds' gain and phase margins
/// (MIL-F-9490D defaults: 6 dB, 45 deg).
#[allow(clippy::too_many_arguments)]
pub fn add_loop_margins(
    v: &Vehicle,
    atm: &Atmosphere,
    req: &TrimRequest,
    sol: &TrimSolution,
    th: &Thresholds,
    gains: &crate::control::law::FeedbackGains,
    ls: &crate::control::loops::LoopSettings,
    report: &mut PointReport,
) {
    // The point's own linear model (already in the report); re-linearise only if it is absent.
    let lin = match (&report.a_matrix, &report.b_matrix) {
        (Some(a), Some(b)) => LinearModel::from_rows(a, b),
        _ => None,
    };
    let Some(lin) = lin.or_else(|| {
        sol.trimmed()
            .then(|| linearise(v, atm, &sol.state, &sol.controls))
    }) else {
        return;
    };
    let m = crate::control::loops::loop_margins(
        v,
        &sol.state,
        &sol.controls,
        &lin,
        gains,
        req.climb_rad,
        ls,
    );
    let disk = crate::control::loops::disk_margin_for(th.gain_margin_db, th.phase_margin_deg);
    let short = crate::control::loops::margin_shortfalls(&m, disk);
    if !short.is_empty() {
        let kind = if m.iter().any(|x| !x.closed_loop_stable) {
            "closed loop unstable"
        } else {
            "loop margins"
        };
        report.reason_kinds.push(kind.into());
        report.reasons.extend(short);
    }
    report.loop_margins = m;
}

/// Build the report of a solved point: linear model, modes, margins, reasons.
pub fn assess(
    v: &Vehicle,
    atm: &Atmosphere,
    req: &TrimRequest,
    sol: &TrimSolution,
    th: &Thresholds,
) -> PointReport {
    let trimmed = sol.trimmed();
    let mut report = PointReport {
        speed_mps: req.speed_mps,
        climb_deg: req.climb_rad.to_degrees(),
        altitude_m: atm.altitude_m,
        density_kg_m3: atm.density_kg_m3,
        mass_kg: v.mass_kg,
        weight_n: v.weight_n(),
        trimmed,
        reasons: Vec::new(),
        reason_kinds: Vec::new(),
        advisories: Vec::new(),
        active_limits: sol.active_limits.clone(),
        pitch_deg: None,
        alpha_deg: None,
        path_accel_mps2: None,
        residual: Residual {
            x_n: sol.residual_x_n,
            z_n: sol.residual_z_n,
            m_nm: sol.residual_m_nm,
        },
        iterations: sol.iterations,
        actuators: Vec::new(),
        rotors: Vec::new(),
        surfaces: Vec::new(),
        modes: Vec::new(),
        margins: None,
        state_names: STATE_NAMES.iter().map(|s| s.to_string()).collect(),
        input_names: v.input_names(),
        open_loop_demands: Vec::new(),
        loop_margins: Vec::new(),
        a_matrix: None,
        b_matrix: None,
    };
    if !trimmed {
        for r in &sol.reasons {
            report.reasons.push(format!("untrimmable: {r}"));
        }
        report.reason_kinds.push("untrimmable".into());
        return report;
    }
    let lin = linearise(v, atm, &sol.state, &sol.controls);
    // Absurd magnitudes can overflow the model: no modes or margins from a non-finite one.
    let eigen = if lin.is_finite() {
        crate::linear::try_eigenvalues(&lin.a).map(|_| ())
    } else {
        Err(crate::linear::EigenError::NonFinite)
    };
    if let Err(err) = eigen {
        report.trimmed = false;
        report.reasons.push(format!("untrimmable: {err}"));
        report.reason_kinds.push("untrimmable".into());
        return report;
    }
    let e = &sol.evaluation;
    let share = crate::margins::lift_share(v, &sol.state, e);
    let ms = modes(
        &lin.a,
        req.speed_mps,
        crate::margins::wingborne(v, atm.density_kg_m3, req.speed_mps, share),
    );
    let m = margins(
        v,
        atm,
        &sol.state,
        &sol.controls,
        e,
        &lin,
        &ms,
        th.stalled_load_share,
    );
    report.pitch_deg = Some(sol.state.theta_rad.to_degrees());
    // Undefined without airspeed.
    report.alpha_deg = (e.airspeed_mps > 1e-9).then(|| e.alpha_rad.to_degrees());
    report.path_accel_mps2 = Some(sol.path_accel_mps2);
    report.actuators = actuator_values(v, sol, &m);
    report.rotors = m
        .rotors
        .iter()
        .map(|r| RotorValue {
            name: r.name.clone(),
            count: r.count,
            thrust_n: r.thrust_n,
            axis_deg: r.axis_deg,
            power_w: r.power_w,
            thrust_margin: r.thrust_margin,
            power_margin: r.power_margin,
            limited_by: format!("{:?}", r.limited_by).to_lowercase(),
            induced_velocity_mps: r.induced_velocity_mps,
        })
        .collect();
    report.surfaces = m.surfaces.clone();
    let (reasons, kinds) = unsafe_reasons(&m, th);
    report.reasons = reasons;
    report.reason_kinds = kinds;
    report.advisories = advisories(&m);
    report.margins = Some(m);
    report.open_loop_demands = crate::control::loops::open_loop_demands(&ms);
    report.modes = ms;
    report.a_matrix = Some(lin.a_rows());
    report.b_matrix = Some(lin.b_rows());
    report
}

fn actuator_values(v: &Vehicle, sol: &TrimSolution, m: &Margins) -> Vec<ActuatorValue> {
    let mut out = Vec::new();
    for (g, r) in v.rotors.iter().enumerate() {
        out.push(ActuatorValue {
            name: r.name.clone(),
            kind: "thrust".into(),
            value: sol.controls.thrust_n[g] * r.count as f64,
            unit: "N".into(),
            min: 0.0,
            max: m.rotors[g].thrust_available_n,
        });
    }
    for (k, e) in v.elevators.iter().enumerate() {
        out.push(ActuatorValue {
            name: e.name.clone(),
            kind: "elevator".into(),
            value: sol.controls.elevator_rad[k].to_degrees(),
            unit: "deg".into(),
            min: e.min_rad.to_degrees(),
            max: e.max_rad.to_degrees(),
        });
    }
    for (k, a) in v.actuators.iter().enumerate() {
        out.push(ActuatorValue {
            name: a.name.clone(),
            kind: "tilt".into(),
            value: sol.controls.tilt_rad[k].to_degrees(),
            unit: "deg".into(),
            min: a.min_rad.to_degrees(),
            max: a.max_rad.to_degrees(),
        });
    }
    out
}

/// Reasons a trimmed point is unsafe against the thresholds, and their kinds.
pub fn unsafe_reasons(m: &Margins, th: &Thresholds) -> (Vec<String>, Vec<String>) {
    let mut r = Vec::new();
    let mut k = Vec::new();
    stall_reasons(m, th, &mut r, &mut k);
    for g in &m.rotors {
        if g.thrust_n > 0.0 && g.thrust_margin < th.thrust_margin {
            r.push(format!(
                "thrust margin of '{}' {:.0} % (threshold {:.0} %, limited by {})",
                g.name,
                100.0 * g.thrust_margin,
                100.0 * th.thrust_margin,
                g.limited_by.words()
            ));
            k.push(format!("thrust margin of '{}'", g.name));
        }
        if g.power_margin < th.power_margin {
            r.push(format!(
                "power margin of '{}' {:.0} % (threshold {:.0} %)",
                g.name,
                100.0 * g.power_margin,
                100.0 * th.power_margin
            ));
            k.push(format!("power margin of '{}'", g.name));
        }
        if g.vortex_ring {
            r.push(format!("rotor group '{}' in the vortex-ring band", g.name));
            k.push(format!("vortex ring of '{}'", g.name));
        }
    }
    for (dir, val) in [
        ("nose-up", m.pitch_accel_up_rad_s2),
        ("nose-down", m.pitch_accel_down_rad_s2),
    ] {
        if val < th.pitch_accel_rad_s2 {
            r.push(format!(
                "{dir} pitch authority {val:.2} rad/s^2 (threshold {:.2})",
                th.pitch_accel_rad_s2
            ));
            k.push(format!("{dir} pitch authority"));
        }
    }
    if let Some(e) = m.elevator_deg {
        if e < th.elevator_margin_deg {
            r.push(format!(
                "elevator travel left {e:.1} deg (threshold {:.1} deg)",
                th.elevator_margin_deg
            ));
            k.push("elevator travel".into());
        }
    }
    if let Some(sm) = m.static_margin_pct {
        if sm < th.static_margin_pct {
            r.push(format!(
                "static margin {sm:.1} % chord (threshold {:.1} %)",
                th.static_margin_pct
            ));
            k.push("static margin".into());
        }
    }
    if let Some(t2) = m.time_to_double_s {
        if th.time_to_double_s > 0.0 && t2 < th.time_to_double_s {
            r.push(format!(
                "unstable mode doubles in {t2:.2} s (threshold {:.1} s)",
                th.time_to_double_s
            ));
            k.push("fast instability".into());
        }
    }
    (r, k)
}

/// Stall reasons under the three-part rule of [`crate::margins::stall_assessment`].
fn stall_reasons(m: &Margins, th: &Thresholds, r: &mut Vec<String>, k: &mut Vec<String>) {
    use crate::margins::StallVerdict;
    for s in &m.surfaces {
        if s.verdict == StallVerdict::Stalled {
            r.push(stall_text(s));
            k.push(format!("stall of '{}'", s.name));
        } else if s.in_verdict && s.stall_margin_deg < th.stall_margin_deg {
            r.push(format!(
                "stall margin of '{}' {:.1} deg ({} at alpha {:.1} deg, stall at {:.1} deg; threshold {:.1} deg)",
                s.name,
                s.stall_margin_deg,
                s.critical_part,
                s.critical_alpha_deg,
                s.stall_angle_deg,
                th.stall_margin_deg
            ));
            k.push(format!("stall margin of '{}'", s.name));
        }
    }
    if m.stalled_load_share >= th.stalled_load_share {
        r.push(format!(
            "stalled load share {:.1} % of the weight (threshold {:.1} %)",
            100.0 * m.stalled_load_share,
            100.0 * th.stalled_load_share
        ));
        k.push("stalled load share".into());
    }
}

fn stall_text(s: &crate::margins::SurfaceMargin) -> String {
    format!(
        "'{}' stalled: {} at alpha {:.1} deg, {:.1} deg beyond its stall angle {:.1} deg",
        s.name,
        s.critical_part,
        s.critical_alpha_deg,
        -s.stall_margin_deg.min(0.0),
        s.stall_angle_deg
    )
}

/// Advisory notes of a trimmed point: stall that does not make it unsafe on its own.
pub fn advisories(m: &Margins) -> Vec<String> {
    use crate::margins::StallVerdict;
    m.surfaces
        .iter()
        .filter(|s| s.verdict == StallVerdict::Advisory)
        .map(|s| {
            format!(
                "'{}' partly separated ({:.1} % of the weight on stalled parts; {} at alpha {:.1} deg, stall at {:.1} deg)",
                s.name,
                100.0 * s.stalled_share,
                s.critical_part,
                s.critical_alpha_deg,
                s.stall_angle_deg
            )
        })
        .collect()
}

/// Run a whole sweep. `progress` is called once per solved point (from any thread).
pub fn run_sweep(
    v: &Vehicle,
    atm: &Atmosphere,
    s: &SweepSettings,
    progress: &(dyn Fn() + Sync),
) -> SweepResult {
    let chunks: Vec<&[f64]> = s.speeds_mps.chunks(CHUNK).collect();
    let solved: Vec<Vec<PointReport>> = chunks
        .par_iter()
        .map(|speeds| {
            let mut warm: Option<TrimGuess> = None;
            let mut stalled_run = 0usize;
            let mut out = Vec::with_capacity(speeds.len());
            for (i, &speed) in speeds.iter().enumerate() {
                let (tilt, pitch) = schedule_at(v, &s.schedule, speed);
                let req = TrimRequest {
                    speed_mps: speed,
                    climb_rad: s.climb_rad,
                    tilt,
                    pitch_rad: pitch,
                    condition: Condition::Steady,
                    objective: s.objective,
                };
                let explore = i == 0;
                let (mut rep, mut sol) =
                    solve_point(v, atm, &req, &s.thresholds, warm.as_ref(), explore);
                // A stalled surface hints at a second branch (a tilt-wing near stall, a
                // tail-sitter at low speed): try every start and keep the best.
                // Inside a stalled run, look again on entry and every fourth point.
                let stalled = rep
                    .margins
                    .as_ref()
                    .is_some_and(|m| m.stall_verdict != crate::margins::StallVerdict::Attached);
                // A failed warm start already makes `trim` try every cold start: only a
                // point solved from its warm start alone is solved again.
                if !explore
                    && !sol.every_start
                    && (!sol.trimmed() || (stalled && stalled_run % 4 == 0))
                {
                    (rep, sol) = solve_point(v, atm, &req, &s.thresholds, warm.as_ref(), true);
                }
                let stalled = rep
                    .margins
                    .as_ref()
                    .is_some_and(|m| m.stall_verdict != crate::margins::StallVerdict::Attached);
                stalled_run = if stalled { stalled_run + 1 } else { 0 };
                if let Some(g) = &s.gains {
                    add_loop_margins(
                        v,
                        atm,
                        &req,
                        &sol,
                        &s.thresholds,
                        g,
                        &s.loop_model,
                        &mut rep,
                    );
                }
                if sol.trimmed() {
                    warm = Some(sol.guess());
                }
                out.push(rep);
                progress();
            }
            out
        })
        .collect();
    let points: Vec<PointReport> = solved.into_iter().flatten().collect();
    let speeds: Vec<f64> = points.iter().map(|p| p.speed_mps).collect();
    let flags: Vec<Vec<String>> = points.iter().map(|p| p.reason_kinds.clone()).collect();
    let bands = bands_of(&speeds, &flags);
    let stall_exposure = stall_exposure(v, &points, &s.thresholds);
    SweepResult {
        points,
        bands,
        stall_exposure,
    }
}

fn stall_exposure(v: &Vehicle, points: &[PointReport], th: &Thresholds) -> Vec<StallExposure> {
    let speeds: Vec<f64> = points.iter().map(|p| p.speed_mps).collect();
    let mut names: Vec<String> = v.surfaces.iter().map(|s| s.name.clone()).collect();
    if v.derivatives.is_some() {
        names.push("airframe".into());
    }
    names
        .into_iter()
        .map(|name| {
            let surface = |p: &PointReport| p.surfaces.iter().find(|s| s.name == name).cloned();
            let stalled: Vec<Vec<String>> = points
                .iter()
                .map(|p| match surface(p) {
                    Some(s) if s.verdict == crate::margins::StallVerdict::Stalled => {
                        vec![format!("stalled ({})", s.critical_part)]
                    }
                    _ => vec![],
                })
                .collect();
            let near: Vec<Vec<String>> = points
                .iter()
                .map(|p| match surface(p) {
                    Some(s)
                        if s.verdict == crate::margins::StallVerdict::Stalled
                            || (s.in_verdict && s.stall_margin_deg < th.stall_margin_deg) =>
                    {
                        vec![format!(
                            "margin below {:.1} deg ({})",
                            th.stall_margin_deg, s.critical_part
                        )]
                    }
                    _ => vec![],
                })
                .collect();
            StallExposure {
                surface: name.clone(),
                stalled: bands_of(&speeds, &stalled),
                near_stall: bands_of(&speeds, &near),
            }
        })
        .collect()
}

impl PointReport {
    /// The trim point of this report for the feedback law (controls from the actuator list,
    /// state from pitch and angle of attack in still air, A and B from the matrices).
    pub fn trim_point(&self, v: &Vehicle) -> TrimPoint {
        let p = self;
        let mut controls = Controls::zeros(v);
        let find = |kind: &str, name: &str| {
            p.actuators
                .iter()
                .find(|a| a.kind == kind && a.name == name)
                .map(|a| a.value)
        };
        for (g, r) in v.rotors.iter().enumerate() {
            controls.thrust_n[g] = find("thrust", &r.name).unwrap_or(0.0) / r.count as f64;
        }
        for (k, e) in v.elevators.iter().enumerate() {
            controls.elevator_rad[k] = find("elevator", &e.name).unwrap_or(0.0).to_radians();
        }
        for (k, a) in v.actuators.iter().enumerate() {
            controls.tilt_rad[k] = find("tilt", &a.name)
                .unwrap_or(a.max_rad.to_degrees())
                .to_radians();
        }
        let theta = p.pitch_deg.unwrap_or(0.0).to_radians();
        let alpha = p.alpha_deg.unwrap_or(0.0).to_radians();
        let state = State {
            u_mps: p.speed_mps * alpha.cos(),
            w_mps: p.speed_mps * alpha.sin(),
            q_rad_s: 0.0,
            theta_rad: theta,
        };
        let linear = match (&p.a_matrix, &p.b_matrix) {
            (Some(a), Some(b)) if a.len() == 4 && b.len() == 4 => {
                let am = nalgebra::Matrix4::from_fn(|i, j| a[i].get(j).copied().unwrap_or(0.0));
                let m = b[0].len();
                let cols = (0..m)
                    .map(|j| {
                        [
                            b[0][j],
                            b[1].get(j).copied().unwrap_or(0.0),
                            b[2].get(j).copied().unwrap_or(0.0),
                            b[3].get(j).copied().unwrap_or(0.0),
                        ]
                    })
                    .collect();
                Some(LinearModel { a: am, b: cols })
            }
            _ => None,
        };
        TrimPoint {
            speed_mps: p.speed_mps,
            trimmed: p.trimmed && linear.is_some() && p.pitch_deg.is_some(),
            reasons: p.reasons.clone(),
            state,
            controls,
            linear,
        }
    }
}

/// The trim points of a sweep's reports, in order, for the feedback law's table.
pub fn trim_points(v: &Vehicle, points: &[PointReport]) -> Vec<TrimPoint> {
    points.iter().map(|p| p.trim_point(v)).collect()
}
