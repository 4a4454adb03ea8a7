//! What a flight amounts to: transition time and distance, height excursion, the stall
//! exposure of every surface, peak thrust and power per rotor group, energy, saturations,
//! corridor exits and the events in time order.
//!
//! **Stall exposure.** A surface is beyond stall while any of its parts (the clean part, each
//! slipstream part) has its local angle of attack above the positive or below the negative
//! stall angle *and* carries load: its dynamic pressure times area is at least
//! `stall_load_fraction` (default 0.5 %) of the weight. The load rule leaves out parts whose
//! flow is too weak to matter (the clean part of a tilted wing in hover sees no airspeed and an
//! angle of attack of 90 deg). On top of that the sweep's stall rule decides
//! ([`crate::margins::stall_assessment`], at the default stalled-load share): a surface whose
//! separation is only advisory (a body, a stalled share below the threshold) or download is not
//! counted as beyond stall. Time beyond stall is summed over the samples. The same rule is
//! applied to the steady trim points of the table, so the flown exposure can be set beside the
//! quasi-steady one at the same airspeed: they differ where the flight is not steady
//! (acceleration, pitch transients, tilt lag, gusts).

use serde::Serialize;

use super::sim::{Run, Sample};
use super::table::FeedforwardTable;
use super::{FlightSettings, Manoeuvre, Reference};
use crate::atmosphere::Atmosphere;
use crate::bands::Band;
use crate::dynamics::{evaluate, Evaluation, Wind};
use crate::vehicle::Vehicle;

/// Tilt within this of its final scheduled value ends the transition (rad).
const TILT_DONE_RAD: f64 = 0.017_453_292_519_943_295;

/// A time interval in which something holds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Interval {
    /// What holds.
    pub what: String,
    /// Start (s).
    pub from_s: f64,
    /// End (s).
    pub to_s: f64,
    /// Airspeed at the start (m/s).
    pub from_speed_mps: f64,
    /// Airspeed at the end (m/s).
    pub to_speed_mps: f64,
    /// Detail (limit, reasons).
    pub detail: String,
}

impl Interval {
    /// Length (s).
    pub fn duration_s(&self) -> f64 {
        self.to_s - self.from_s
    }
}

/// One stalled interval of a surface.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StallInterval {
    /// Start (s).
    pub from_s: f64,
    /// End (s).
    pub to_s: f64,
    /// Airspeed at the start (m/s).
    pub from_speed_mps: f64,
    /// Airspeed at the end (m/s).
    pub to_speed_mps: f64,
    /// Parts beyond stall.
    pub parts: Vec<String>,
    /// Angle of attack farthest beyond stall in the interval (deg).
    pub peak_alpha_deg: f64,
}

/// Stall exposure of one surface.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurfaceExposure {
    /// Surface name ("airframe" for the derivative model).
    pub name: String,
    /// Positive stall angle (deg).
    pub stall_pos_deg: f64,
    /// Negative stall angle (deg).
    pub stall_neg_deg: f64,
    /// Largest angle of attack of a loaded part (deg).
    pub largest_alpha_deg: Option<f64>,
    /// When (s).
    pub largest_alpha_at_s: Option<f64>,
    /// At which airspeed (m/s).
    pub largest_alpha_speed_mps: Option<f64>,
    /// Smallest angle of attack of a loaded part (deg).
    pub smallest_alpha_deg: Option<f64>,
    /// Time beyond stall (s).
    pub time_beyond_stall_s: f64,
    /// Stalled intervals.
    pub stalled: Vec<StallInterval>,
    /// Speed bands where the steady trim points of the table are stalled by the same rule.
    pub steady_stalled: Vec<Band>,
    /// Share of the flight's samples where flown and steady stall state agree (0..1).
    pub steady_agreement: Option<f64>,
}

/// Use of one rotor group.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RotorUse {
    /// Group name.
    pub name: String,
    /// Rotors in the group.
    pub count: u32,
    /// Peak thrust of the group (N).
    pub peak_thrust_n: f64,
    /// When (s).
    pub peak_thrust_at_s: f64,
    /// Thrust cap of the group (N).
    pub thrust_cap_n: f64,
    /// Peak shaft power of the group (W).
    pub peak_power_w: f64,
    /// When (s).
    pub peak_power_at_s: f64,
    /// Power available to the group (W).
    pub power_available_w: f64,
    /// Energy drawn (J).
    pub energy_j: f64,
}

/// Time and distance of the transition proper.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Transition {
    /// Start of the speed ramp (s).
    pub start_s: f64,
    /// Time the end condition is first met (s).
    pub end_s: f64,
    /// Duration (s).
    pub time_s: f64,
    /// Horizontal distance (m).
    pub distance_m: f64,
    /// Energy drawn by all rotors in it (J).
    pub energy_j: f64,
    /// Height change over it (m).
    pub height_change_m: f64,
}

/// Summary of a flight.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Summary {
    /// What was flown.
    pub manoeuvre: String,
    /// Airspeed at the start (m/s).
    pub start_speed_mps: f64,
    /// Planned end airspeed (m/s).
    pub end_speed_mps: f64,
    /// Time flown (s).
    pub duration_s: f64,
    /// Why the flight was stopped early.
    pub stopped: Option<String>,
    /// The transition proper, when its end condition was met.
    pub transition: Option<Transition>,
    /// How the transition end is defined.
    pub transition_criterion: String,
    /// Largest height below the reference (m, >= 0).
    pub height_lost_m: f64,
    /// When (s).
    pub height_lost_at_s: f64,
    /// Largest height above the reference (m, >= 0).
    pub height_gained_m: f64,
    /// When (s).
    pub height_gained_at_s: f64,
    /// Height error at the end (m, positive above).
    pub final_height_error_m: f64,
    /// Largest airspeed error from the reference (m/s, magnitude).
    pub largest_speed_error_mps: f64,
    /// Lowest and highest pitch attitude (deg).
    pub pitch_range_deg: [f64; 2],
    /// Stall exposure per surface.
    pub surfaces: Vec<SurfaceExposure>,
    /// Per rotor group.
    pub rotors: Vec<RotorUse>,
    /// Energy drawn by all rotors (J).
    pub energy_j: f64,
    /// Control saturations.
    pub saturations: Vec<Interval>,
    /// Intervals outside the trimmable corridor (speeds where the table is untrimmable).
    pub corridor_exits: Vec<Interval>,
    /// Intervals where a tilt is off its schedule at the flown airspeed by more than the warning.
    pub tilt_lag: Vec<Interval>,
    /// Intervals where the plan was held back because the airspeed did not follow it.
    pub plan_held: Vec<Interval>,
    /// The load rule for stall exposure (fraction of weight).
    pub stall_load_fraction: f64,
    /// How the flight ended: "completed", "departed" (stopped by departure detection) or
    /// "held" (not stopped, but the transition was not completed by the end of the flight).
    pub outcome: String,
    /// Why, in plain words.
    pub outcome_reason: String,
    /// When (s): the stop, the first plan hold, or the end of the flight.
    pub outcome_time_s: f64,
    /// UNSAFE findings: a departed or held flight, a surface flown beyond stall by the stall
    /// rule, a pitch attitude outside the limits, flight outside the corridor. Empty when none.
    pub unsafe_findings: Vec<String>,
}

/// The outcome of a flight: (outcome, reason, time).
fn outcome_of(
    stopped: Option<&(f64, String)>,
    criterion: &str,
    transition: Option<&Transition>,
    plan_held: &[Interval],
    duration_s: f64,
) -> (String, String, f64) {
    if let Some((t, why)) = stopped {
        return ("departed".into(), format!("stopped at {t:.2} s: {why}"), *t);
    }
    if !criterion.is_empty() && transition.is_none() {
        let (t, why) = match plan_held.first() {
            Some(h) => (
                h.from_s,
                format!(
                    "the transition was not completed by the end of the flight ({duration_s:.1} s); the plan waited for the vehicle from {:.2} s at {:.1} m/s: {}",
                    h.from_s, h.from_speed_mps, h.detail
                ),
            ),
            None => (
                duration_s,
                format!(
                    "the transition was not completed by the end of the flight ({duration_s:.1} s)"
                ),
            ),
        };
        return ("held".into(), why, t);
    }
    let why = match transition {
        Some(t) => format!("transition complete at {:.2} s", t.end_s),
        None => "flown to the end without departure".into(),
    };
    (
        "completed".into(),
        why,
        transition.map_or(duration_s, |t| t.end_s),
    )
}

/// UNSAFE findings of a flight: its outcome, any surface beyond stall by the stall rule
/// (`margins::stall_assessment`), and corridor exits.
fn findings(
    v: &Vehicle,
    outcome: &(String, String, f64),
    surfaces: &[SurfaceExposure],
    corridor_exits: &[Interval],
) -> Vec<String> {
    let mut out = Vec::new();
    if outcome.0 != "completed" {
        out.push(format!("flight {}: {}", outcome.0, outcome.1));
    }
    let pitch_control = |name: &str| {
        v.surfaces
            .iter()
            .any(|s| s.name == name && s.elevator.is_some())
            || (name == "airframe" && v.derivatives.as_ref().is_some_and(|d| d.elevator.is_some()))
    };
    // Time beyond stall counts only what the stall rule calls unsafe (a wake-immersed wing
    // part, a loaded tail, a stalled share at the threshold), so any of it is a finding.
    for x in surfaces.iter().filter(|x| x.time_beyond_stall_s > 0.0) {
        let first = x.stalled.first();
        out.push(format!(
            "{} '{}' beyond stall for {:.2} s{}",
            if pitch_control(&x.name) {
                "pitch-control surface"
            } else {
                "lifting surface"
            },
            x.name,
            x.time_beyond_stall_s,
            first.map_or(String::new(), |i| format!(
                " (from {:.2} s at {:.1} m/s, alpha up to {:.1} deg)",
                i.from_s, i.from_speed_mps, i.peak_alpha_deg
            ))
        ));
    }
    for i in corridor_exits {
        out.push(format!(
            "left the corridor {:.2} to {:.2} s ({:.1} to {:.1} m/s): {}",
            i.from_s, i.to_s, i.from_speed_mps, i.to_speed_mps, i.detail
        ));
    }
    out
}

/// UNSAFE findings for the pitch attitude outside the vehicle's limits at the flown airspeed:
/// one per contiguous run of samples, with the extreme attitude and the limit it passed.
fn attitude_findings(v: &Vehicle, s: &[Sample]) -> Vec<String> {
    let outside = |x: &Sample| {
        let (lo, hi) = v.pitch_limits_rad(x.airspeed_mps);
        x.state.theta_rad < lo - 1e-9 || x.state.theta_rad > hi + 1e-9
    };
    let mut out = Vec::new();
    for (a, b) in runs(s.len(), |k| outside(&s[k])) {
        let worst = s[a..=b]
            .iter()
            .max_by(|p, q| {
                let beyond = |x: &Sample| {
                    let (lo, hi) = v.pitch_limits_rad(x.airspeed_mps);
                    (lo - x.state.theta_rad).max(x.state.theta_rad - hi)
                };
                beyond(p).total_cmp(&beyond(q))
            })
            .expect("a run has samples");
        let (lo, hi) = v.pitch_limits_rad(worst.airspeed_mps);
        out.push(format!(
            "pitch attitude outside the vehicle's limits {:.2} to {:.2} s ({:.1} to {:.1} m/s): {:.1} deg at {:.1} m/s, limits {:.1} to {:.1} deg",
            s[a].time_s,
            s[b].time_s,
            s[a].airspeed_mps,
            s[b].airspeed_mps,
            worst.state.theta_rad.to_degrees(),
            worst.airspeed_mps,
            lo.to_degrees(),
            hi.to_degrees()
        ));
    }
    out
}

/// Something that happened, for the event list.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Event {
    /// Time (s).
    pub time_s: f64,
    /// Airspeed (m/s).
    pub speed_mps: f64,
    /// Kind: corridor-exit, corridor-return, saturation, saturation-end, stall, stall-end,
    /// off-schedule, on-schedule, plan-held, plan-resumed, gust, transition-end, stopped.
    pub kind: String,
    /// Plain message.
    pub message: String,
}

/// Name of every part in sample order: (surface index, label); the derivative model last.
pub fn part_labels(v: &Vehicle) -> Vec<(usize, String)> {
    let mut out = Vec::new();
    for (i, s) in v.surfaces.iter().enumerate() {
        out.push((i, "clean".to_string()));
        for l in &s.slipstream {
            out.push((i, format!("slipstream of {}", v.rotors[l.rotor].name)));
        }
    }
    if v.derivatives.is_some() {
        out.push((v.surfaces.len(), "clean".to_string()));
    }
    out
}

/// Names and stall angles (rad) of every surface, the derivative model as "airframe".
pub fn surface_stall(v: &Vehicle) -> Vec<(String, f64, f64)> {
    let mut out: Vec<(String, f64, f64)> = v
        .surfaces
        .iter()
        .map(|s| {
            let (p, n) = s.polar.stall_angles_rad();
            (s.name.clone(), p, n)
        })
        .collect();
    if let Some(d) = &v.derivatives {
        out.push((
            "airframe".into(),
            d.alpha_stall_pos_rad,
            d.alpha_stall_neg_rad,
        ));
    }
    out
}

/// Stall state of each surface from part angles and loads: (stalled, parts beyond, alpha
/// farthest beyond stall) per surface.
fn stall_state(
    labels: &[(usize, String)],
    stall: &[(String, f64, f64)],
    alpha: &[f64],
    load: &[f64],
    min_load: f64,
) -> Vec<(bool, Vec<usize>, f64)> {
    let mut out: Vec<(bool, Vec<usize>, f64)> = vec![(false, Vec::new(), f64::NAN); stall.len()];
    for (k, (si, _)) in labels.iter().enumerate() {
        let (a, q) = (
            alpha.get(k).copied().unwrap_or(0.0),
            load.get(k).copied().unwrap_or(0.0),
        );
        if q < min_load {
            continue;
        }
        let (_, pos, neg) = stall[*si];
        if a > pos || a < neg {
            let o = &mut out[*si];
            o.0 = true;
            o.1.push(k);
            let beyond = if a > pos { a - pos } else { neg - a };
            let prev = if o.2.is_nan() {
                f64::NEG_INFINITY
            } else if o.2 > pos {
                o.2 - pos
            } else {
                neg - o.2
            };
            if beyond > prev {
                o.2 = a;
            }
        }
    }
    out
}

/// Steady stall of every table point by the load rule and the stall rule at `stalled_share`:
/// per point, per surface.
fn steady_stall(
    v: &Vehicle,
    atm: &Atmosphere,
    table: &FeedforwardTable,
    labels: &[(usize, String)],
    stall: &[(String, f64, f64)],
    min_load: f64,
    stalled_share: f64,
) -> Vec<Option<Vec<bool>>> {
    let mut e = Evaluation::default();
    let w = v.weight_n();
    table
        .points
        .iter()
        .map(|p| {
            if !p.trim.trimmed {
                return None;
            }
            evaluate(
                v,
                atm,
                &p.trim.state,
                &p.trim.controls,
                Wind::default(),
                &mut e,
            );
            let mut alpha = Vec::new();
            let mut load = Vec::new();
            for (i, s) in v.surfaces.iter().enumerate() {
                for part in e.surface_parts(i) {
                    alpha.push(part.alpha_rad);
                    load.push(part.dynamic_pressure_pa * part.fraction * s.area_m2 / w);
                }
            }
            if let (Some(d), Some(dl)) = (&v.derivatives, &e.derivatives) {
                alpha.push(dl.alpha_rad);
                load.push(
                    0.5 * atm.density_kg_m3 * e.airspeed_mps * e.airspeed_mps * d.area_m2 / w,
                );
            }
            let rule = crate::margins::stall_assessment(v, atm.density_kg_m3, &e, stalled_share);
            Some(
                stall_state(labels, stall, &alpha, &load, min_load)
                    .into_iter()
                    .enumerate()
                    .map(|(si, x)| {
                        x.0 && rule
                            .surfaces
                            .get(si)
                            .is_none_or(|st| st.verdict == crate::margins::StallVerdict::Stalled)
                    })
                    .collect(),
            )
        })
        .collect()
}

/// Contiguous runs of `flag` over the samples: (first index, last index).
fn runs(n: usize, flag: impl Fn(usize) -> bool) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    let mut start: Option<usize> = None;
    for k in 0..n {
        match (flag(k), start) {
            (true, None) => start = Some(k),
            (false, Some(s)) => {
                out.push((s, k - 1));
                start = None;
            }
            _ => {}
        }
    }
    if let Some(s) = start {
        out.push((s, n - 1));
    }
    out
}

/// Time each sample stands for (midpoint rule).
fn sample_weights(s: &[Sample]) -> Vec<f64> {
    let n = s.len();
    (0..n)
        .map(|k| {
            let a = if k == 0 {
                s[0].time_s
            } else {
                0.5 * (s[k - 1].time_s + s[k].time_s)
            };
            let b = if k + 1 == n {
                s[n - 1].time_s
            } else {
                0.5 * (s[k].time_s + s[k + 1].time_s)
            };
            b - a
        })
        .collect()
}

fn interval(s: &[Sample], (a, b): (usize, usize), what: String, detail: String) -> Interval {
    Interval {
        what,
        from_s: s[a].time_s,
        to_s: s[b].time_s,
        from_speed_mps: s[a].airspeed_mps,
        to_speed_mps: s[b].airspeed_mps,
        detail,
    }
}

/// Name of saturation flag `j` (thrusts, elevators, then tilt rate limits).
fn saturation_name(v: &Vehicle, j: usize, high: bool) -> (String, String) {
    let nt = v.rotors.len();
    let ne = v.elevators.len();
    if j < nt {
        let r = &v.rotors[j];
        (
            format!("thrust of '{}'", r.name),
            if high {
                "at the thrust available (cap or power)".into()
            } else {
                "at zero thrust".into()
            },
        )
    } else if j < nt + ne {
        let e = &v.elevators[j - nt];
        (
            format!("elevator '{}'", e.name),
            format!(
                "at its {} limit ({:.1} deg)",
                if high {
                    "trailing-edge-down"
                } else {
                    "trailing-edge-up"
                },
                if high { e.max_rad } else { e.min_rad }.to_degrees()
            ),
        )
    } else {
        let a = &v.actuators[j - nt - ne];
        (
            format!("tilt '{}'", a.name),
            format!("at its rate limit ({:.1} deg/s)", a.rate_rad_s.to_degrees()),
        )
    }
}

/// Build the summary and the events of a run.
#[allow(clippy::too_many_arguments)]
pub fn summarise(
    v: &Vehicle,
    atm: &Atmosphere,
    table: Option<&FeedforwardTable>,
    settings: &FlightSettings,
    run: &Run,
    manoeuvre: Manoeuvre,
    reference: Option<&Reference>,
    gust_start_s: Option<f64>,
) -> (Summary, Vec<Event>) {
    let s = &run.samples;
    let n = s.len();
    let wts = sample_weights(s);
    let labels = part_labels(v);
    let stall = surface_stall(v);
    let min_load = settings.stall_load_fraction;
    let mut events: Vec<Event> = Vec::new();
    let ev = |k: usize, kind: &str, message: String| Event {
        time_s: s[k].time_s,
        speed_mps: s[k].airspeed_mps,
        kind: kind.to_string(),
        message,
    };

    // Height and speed excursions.
    let herr = |k: usize| {
        let r = if s[k].height_ref_m.is_finite() {
            s[k].height_ref_m
        } else {
            0.0
        };
        s[k].height_m - r
    };
    let (mut lost, mut lost_at, mut gained, mut gained_at) = (0.0f64, 0.0, 0.0f64, 0.0);
    let mut speed_err = 0.0f64;
    let mut pitch = [f64::INFINITY, f64::NEG_INFINITY];
    for (k, x) in s.iter().enumerate() {
        let e = herr(k);
        if -e > lost {
            lost = -e;
            lost_at = x.time_s;
        }
        if e > gained {
            gained = e;
            gained_at = x.time_s;
        }
        if x.speed_ref_mps.is_finite() {
            speed_err = speed_err.max((x.speed_ref_mps - x.airspeed_mps).abs());
        }
        let th = x.state.theta_rad.to_degrees();
        pitch = [pitch[0].min(th), pitch[1].max(th)];
    }

    // Stall exposure.
    let flown: Vec<Vec<(bool, Vec<usize>, f64)>> = s
        .iter()
        .map(|x| {
            let mut st = stall_state(&labels, &stall, &x.part_alpha_rad, &x.part_load, min_load);
            // The sweep's stall rule decides: a surface whose separation is only advisory
            // (a body, a small stalled share) or download is not beyond stall.
            for (si, unsafe_stall) in x.stall_unsafe.iter().enumerate() {
                if !unsafe_stall {
                    st[si].0 = false;
                }
            }
            st
        })
        .collect();
    let steady = table.map(|t| {
        steady_stall(
            v,
            atm,
            t,
            &labels,
            &stall,
            min_load,
            settings.stalled_load_share,
        )
    });
    let mut surfaces = Vec::new();
    for (si, (name, pos, neg)) in stall.iter().enumerate() {
        let mut hi: Option<(f64, usize)> = None;
        let mut lo: Option<f64> = None;
        for (k, x) in s.iter().enumerate() {
            for (pk, (psi, _)) in labels.iter().enumerate() {
                if *psi != si || x.part_load.get(pk).copied().unwrap_or(0.0) < min_load {
                    continue;
                }
                let a = x.part_alpha_rad[pk];
                if hi.is_none_or(|(h, _)| a > h) {
                    hi = Some((a, k));
                }
                if lo.is_none_or(|l| a < l) {
                    lo = Some(a);
                }
            }
        }
        let mut time = 0.0;
        for k in 0..n {
            if flown[k][si].0 {
                time += wts[k];
            }
        }
        let stalled: Vec<StallInterval> = runs(n, |k| flown[k][si].0)
            .into_iter()
            .map(|(a, b)| {
                let mut parts: Vec<String> = Vec::new();
                let mut peak = f64::NAN;
                let mut far = f64::NEG_INFINITY;
                for f in &flown[a..=b] {
                    let st = &f[si];
                    for &pk in &st.1 {
                        let l = &labels[pk].1;
                        if !parts.contains(l) {
                            parts.push(l.clone());
                        }
                    }
                    let beyond = if st.2 > *pos { st.2 - pos } else { neg - st.2 };
                    if beyond > far {
                        far = beyond;
                        peak = st.2;
                    }
                }
                StallInterval {
                    from_s: s[a].time_s,
                    to_s: s[b].time_s,
                    from_speed_mps: s[a].airspeed_mps,
                    to_speed_mps: s[b].airspeed_mps,
                    parts,
                    peak_alpha_deg: peak.to_degrees(),
                }
            })
            .collect();
        for iv in &stalled {
            let ka = s.iter().position(|x| x.time_s >= iv.from_s).unwrap_or(0);
            let kb = s.iter().position(|x| x.time_s >= iv.to_s).unwrap_or(n - 1);
            events.push(ev(
                ka,
                "stall",
                format!("'{name}' beyond stall ({})", iv.parts.join(", ")),
            ));
            if kb + 1 < n {
                events.push(ev(kb + 1, "stall-end", format!("'{name}' unstalled")));
            }
        }
        let (steady_bands, agreement) = match (table, &steady) {
            (Some(t), Some(st)) => {
                let speeds: Vec<f64> = t.points.iter().map(|p| p.trim.speed_mps).collect();
                let flags: Vec<Vec<String>> = st
                    .iter()
                    .map(|p| match p {
                        Some(f) if f[si] => vec!["stalled".to_string()],
                        _ => vec![],
                    })
                    .collect();
                let bands = crate::bands::bands_of(&speeds, &flags);
                let mut agree = 0usize;
                let mut count = 0usize;
                for k in 0..n {
                    if let Some(Some(f)) = st.get(s[k].table_point) {
                        count += 1;
                        if f[si] == flown[k][si].0 {
                            agree += 1;
                        }
                    }
                }
                (bands, (count > 0).then(|| agree as f64 / count as f64))
            }
            _ => (Vec::new(), None),
        };
        surfaces.push(SurfaceExposure {
            name: name.clone(),
            stall_pos_deg: pos.to_degrees(),
            stall_neg_deg: neg.to_degrees(),
            largest_alpha_deg: hi.map(|h| h.0.to_degrees()),
            largest_alpha_at_s: hi.map(|h| s[h.1].time_s),
            largest_alpha_speed_mps: hi.map(|h| s[h.1].airspeed_mps),
            smallest_alpha_deg: lo.map(f64::to_degrees),
            time_beyond_stall_s: time,
            stalled,
            steady_stalled: steady_bands,
            steady_agreement: agreement,
        });
    }

    // Rotors.
    let mut rotors = Vec::new();
    for (g, r) in v.rotors.iter().enumerate() {
        let c = r.count as f64;
        let (mut pt, mut pt_at, mut pp, mut pp_at) = (0.0, 0.0, 0.0, 0.0);
        for x in s {
            if c * x.thrust_n[g] > pt {
                pt = c * x.thrust_n[g];
                pt_at = x.time_s;
            }
            if x.power_w[g] > pp {
                pp = x.power_w[g];
                pp_at = x.time_s;
            }
        }
        rotors.push(RotorUse {
            name: r.name.clone(),
            count: r.count,
            peak_thrust_n: pt,
            peak_thrust_at_s: pt_at,
            thrust_cap_n: c * r.thrust_max_n,
            peak_power_w: pp,
            peak_power_at_s: pp_at,
            power_available_w: c * r.power_max_w,
            energy_j: s.last().map_or(0.0, |x| x.energy_j[g]),
        });
    }
    let energy: f64 = rotors.iter().map(|r| r.energy_j).sum();

    // Saturations.
    let nsat = s.first().map_or(0, |x| x.saturated.len());
    let mut saturations = Vec::new();
    for j in 0..nsat {
        for (a, b) in runs(n, |k| s[k].saturated[j]) {
            let (what, detail) = saturation_name(v, j, s[a].saturated_high[j]);
            events.push(ev(a, "saturation", format!("{what} {detail}")));
            if b + 1 < n {
                events.push(ev(
                    b + 1,
                    "saturation-end",
                    format!("{what} back inside its limits"),
                ));
            }
            saturations.push(interval(s, (a, b), what, detail));
        }
    }
    for (a, b) in runs(n, |k| s[k].pitch_offset_limited) {
        let what = "pitch offset of the speed and height loops".to_string();
        let detail = format!(
            "at its limit ({:.0} deg)",
            settings.gains.pitch_offset_limit_rad.to_degrees()
        );
        events.push(ev(a, "saturation", format!("{what} {detail}")));
        if b + 1 < n {
            events.push(ev(
                b + 1,
                "saturation-end",
                format!("{what} back inside its limit"),
            ));
        }
        saturations.push(interval(s, (a, b), what, detail));
    }
    saturations.sort_by(|a, b| a.from_s.total_cmp(&b.from_s));

    // Corridor.
    let mut corridor_exits = Vec::new();
    if let Some(t) = table {
        let out = |k: usize| {
            !t.points[s[k].table_point.min(t.points.len() - 1)]
                .trim
                .trimmed
        };
        for (a, b) in runs(n, out) {
            let mut points: Vec<usize> = s[a..=b].iter().map(|x| x.table_point).collect();
            points.sort_unstable();
            points.dedup();
            let speeds: Vec<String> = points
                .iter()
                .map(|&i| format!("{:.1}", t.points[i].trim.speed_mps))
                .collect();
            let first = &t.points[points[0]].trim;
            let why = first
                .reasons
                .first()
                .map_or("no reason recorded".to_string(), |r| {
                    r.trim_start_matches("untrimmable: ").to_string()
                });
            let detail = format!(
                "untrimmable at {} m/s on this schedule (at {:.1} m/s: {why})",
                speeds.join(", "),
                first.speed_mps
            );
            let iv = interval(s, (a, b), "outside the trimmable corridor".into(), detail);
            events.push(ev(
                a,
                "corridor-exit",
                format!(
                    "left the corridor at {:.1} m/s: {}",
                    s[a].airspeed_mps, iv.detail
                ),
            ));
            if b + 1 < n {
                events.push(ev(
                    b + 1,
                    "corridor-return",
                    format!("back in the corridor at {:.1} m/s", s[b + 1].airspeed_mps),
                ));
            }
            corridor_exits.push(iv);
        }
        // Airspeeds beyond the table's ends by more than 1 m/s: no trim point covers them.
        let (lo, hi) = t.speed_range();
        let beyond = |k: usize| s[k].airspeed_mps > hi + 1.0 || s[k].airspeed_mps < lo - 1.0;
        for (a, b) in runs(n, beyond) {
            let detail = format!(
                "airspeed beyond the trim table's {lo:.1} to {hi:.1} m/s, where no trim point covers it"
            );
            let iv = interval(s, (a, b), "outside the trimmable corridor".into(), detail);
            events.push(ev(
                a,
                "corridor-exit",
                format!(
                    "left the corridor at {:.1} m/s: {}",
                    s[a].airspeed_mps, iv.detail
                ),
            ));
            corridor_exits.push(iv);
        }
        corridor_exits.sort_by(|x, y| x.from_s.total_cmp(&y.from_s));
    }

    // Tilt lag.
    let mut tilt_lag = Vec::new();
    for (i, act) in v.actuators.iter().enumerate() {
        let off = |x: &Sample| {
            let d = x.tilt_rad[i] - x.tilt_schedule_rad[i];
            if d.is_finite() {
                d
            } else {
                0.0
            }
        };
        let lag = |k: usize| off(&s[k]).abs() > settings.tilt_lag_warning_rad;
        for (a, b) in runs(n, lag) {
            let worst =
                s[a..=b]
                    .iter()
                    .map(off)
                    .fold(0.0f64, |m, d| if d.abs() > m.abs() { d } else { m });
            let what = format!("tilt '{}' off its schedule at the flown airspeed", act.name);
            let detail = format!(
                "by up to {:+.1} deg ({})",
                worst.to_degrees(),
                if worst > 0.0 {
                    "more hover-wise: the airspeed is ahead of the plan"
                } else {
                    "more cruise-wise: the airspeed lags the plan"
                }
            );
            events.push(ev(
                a,
                "off-schedule",
                format!(
                    "{what} by more than {:.1} deg",
                    settings.tilt_lag_warning_rad.to_degrees()
                ),
            ));
            if b + 1 < n {
                events.push(ev(
                    b + 1,
                    "on-schedule",
                    format!("tilt '{}' back on its schedule", act.name),
                ));
            }
            tilt_lag.push(interval(s, (a, b), what, detail));
        }
    }

    // Plan held back.
    let mut plan_held = Vec::new();
    for (a, b) in runs(n, |k| s[k].plan_held) {
        let worst = s[a..=b]
            .iter()
            .map(|x| (x.speed_ref_mps - x.airspeed_mps).abs())
            .fold(0.0, f64::max);
        let what = "the plan waits for the vehicle".to_string();
        let detail = format!(
            "airspeed up to {worst:.1} m/s off the planned speed (lead limit {:.1} m/s): the vehicle cannot {} as planned here",
            settings.plan_lead_mps,
            if reference.is_some_and(|r| r.accel_mps2 < 0.0) { "decelerate" } else { "accelerate" }
        );
        events.push(ev(a, "plan-held", format!("{what}: {detail}")));
        if b + 1 < n {
            events.push(ev(
                b + 1,
                "plan-resumed",
                "the plan follows its acceleration again".into(),
            ));
        }
        plan_held.push(interval(s, (a, b), what, detail));
    }

    // Transition proper.
    let (start_v, end_v) = reference.map_or_else(
        || {
            let v0 = s.first().map_or(0.0, |x| x.airspeed_mps);
            (v0, v0)
        },
        |r| (r.start_speed_mps, r.end_speed_mps),
    );
    let mut criterion = String::new();
    let mut transition = None;
    if let (Some(r), Some(t), Manoeuvre::HoverToCruise | Manoeuvre::CruiseToHover) =
        (reference, table, manoeuvre)
    {
        let mut ff = super::table::Feedforward::default();
        t.at(end_v, &mut ff);
        let up = end_v > start_v;
        let tol = (0.03 * end_v.abs()).max(0.5);
        criterion = format!(
            "from the start of the speed ramp until the airspeed is {} {:.1} m/s and every tilt within 1 deg of its value at {:.1} m/s",
            if up { "above" } else { "below" },
            if up { end_v - tol } else { end_v + tol },
            end_v
        );
        let done = |x: &Sample| {
            let speed_ok = if up {
                x.airspeed_mps >= end_v - tol
            } else {
                x.airspeed_mps <= end_v + tol
            };
            speed_ok
                && (0..v.actuators.len())
                    .all(|i| (x.tilt_rad[i] - ff.tilt_rad[i]).abs() <= TILT_DONE_RAD)
        };
        let k0 = s.iter().position(|x| x.time_s >= r.ramp_start_s);
        if let Some(k0) = k0 {
            if let Some(k1) = (k0..n).find(|&k| done(&s[k])) {
                let e = |k: usize| s[k].energy_j.iter().sum::<f64>();
                transition = Some(Transition {
                    start_s: s[k0].time_s,
                    end_s: s[k1].time_s,
                    time_s: s[k1].time_s - s[k0].time_s,
                    distance_m: s[k1].x_m - s[k0].x_m,
                    energy_j: e(k1) - e(k0),
                    height_change_m: s[k1].height_m - s[k0].height_m,
                });
                events.push(ev(
                    k1,
                    "transition-end",
                    format!("transition complete ({})", manoeuvre.label()),
                ));
            }
        }
    }
    if let Some(g) = gust_start_s {
        if let Some(k) = s.iter().position(|x| x.time_s >= g) {
            events.push(ev(k, "gust", "the vehicle enters the gust".into()));
        }
    }
    if let Some((t, why)) = &run.stopped {
        let k = s.iter().rposition(|x| x.time_s <= *t).unwrap_or(0);
        events.push(ev(k, "stopped", format!("flight stopped: {why}")));
    }
    events.sort_by(|a, b| a.time_s.total_cmp(&b.time_s));

    let duration_s = s.last().map_or(0.0, |x| x.time_s);
    let outcome = outcome_of(
        run.stopped.as_ref(),
        &criterion,
        transition.as_ref(),
        &plan_held,
        duration_s,
    );
    let mut unsafe_findings = findings(v, &outcome, &surfaces, &corridor_exits);
    unsafe_findings.extend(attitude_findings(v, s));
    let summary = Summary {
        manoeuvre: manoeuvre.label().to_string(),
        start_speed_mps: start_v,
        end_speed_mps: end_v,
        duration_s,
        stopped: run
            .stopped
            .as_ref()
            .map(|(t, w)| format!("at {t:.2} s: {w}")),
        transition,
        transition_criterion: criterion,
        height_lost_m: lost,
        height_lost_at_s: lost_at,
        height_gained_m: gained,
        height_gained_at_s: gained_at,
        final_height_error_m: if n > 0 { herr(n - 1) } else { 0.0 },
        largest_speed_error_mps: speed_err,
        pitch_range_deg: if n > 0 { pitch } else { [0.0, 0.0] },
        surfaces,
        rotors,
        energy_j: energy,
        saturations,
        corridor_exits,
        tilt_lag,
        plan_held,
        stall_load_fraction: min_load,
        outcome: outcome.0,
        outcome_reason: outcome.1,
        outcome_time_s: outcome.2,
        unsafe_findings,
    };
    (summary, events)
}
