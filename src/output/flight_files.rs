//! The files of a flight: `flight.csv` (the time history, units in every header),
//! `flight.json` (settings, summary, events, stall exposure beside the sweep's) and the plots
//! `flight_states`, `flight_alpha` and `flight_controls` (PNG and SVG); and the terminal text.

use std::fmt::Write;
use std::path::{Path, PathBuf};

use serde::Serialize;

use super::chart::{data_style, partner_style, render, HLine, Panel, Role, Series, Shade};
use super::files::{write_csv, write_json, WriteError};
use crate::flight::dispersion::Dispersion;
use crate::flight::summary::{part_labels, Interval};
use crate::flight::{Event, FeedforwardTable, Flight, Summary};
use crate::scenario::Scenario;
use crate::sweep::{Band, SweepResult};
use crate::vehicle::Vehicle;

fn cell(x: f64) -> String {
    if x.is_finite() {
        format!("{x:.6}")
    } else {
        String::new()
    }
}

fn key(name: &str) -> String {
    name.chars()
        .map(|c| {
            if c.is_whitespace() || c == ',' {
                '_'
            } else {
                c
            }
        })
        .collect()
}

/// Column name of each part angle of attack and load: `<surface>_<clean|slip-<rotor>>`.
fn part_keys(v: &Vehicle) -> Vec<String> {
    let mut names: Vec<String> = v.surfaces.iter().map(|s| key(&s.name)).collect();
    if v.derivatives.is_some() {
        names.push("airframe".into());
    }
    let mut out = Vec::new();
    for (si, label) in part_labels(v) {
        let p = if label == "clean" {
            "clean".to_string()
        } else {
            format!("slip-{}", key(label.trim_start_matches("slipstream of ")))
        };
        out.push(format!("{}_{p}", names[si]));
    }
    out
}

/// Header and rows of `flight.csv`.
pub fn time_history(v: &Vehicle, f: &Flight) -> (Vec<String>, Vec<Vec<String>>) {
    let mut h: Vec<String> = [
        "time_s",
        "x_m",
        "height_m",
        "height_ref_m",
        "climb_rate_mps",
        "airspeed_mps",
        "speed_ref_mps",
        "ground_speed_mps",
        "u_mps",
        "w_mps",
        "pitch_deg",
        "pitch_ref_deg",
        "pitch_offset_deg",
        "pitch_rate_deg_s",
        "alpha_deg",
        "wind_x_mps",
        "wind_up_mps",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    for a in &v.actuators {
        h.push(format!("tilt_{}_deg", key(&a.name)));
        h.push(format!("tilt_cmd_{}_deg", key(&a.name)));
        h.push(format!("tilt_schedule_flown_{}_deg", key(&a.name)));
    }
    for r in &v.rotors {
        let n = key(&r.name);
        h.push(format!("thrust_{n}_n"));
        h.push(format!("thrust_cmd_{n}_n"));
        h.push(format!("thrust_available_{n}_n"));
        h.push(format!("power_{n}_w"));
        h.push(format!("energy_{n}_j"));
    }
    for e in &v.elevators {
        h.push(format!("elevator_{}_deg", key(&e.name)));
    }
    let parts = part_keys(v);
    for p in &parts {
        h.push(format!("alpha_{p}_deg"));
    }
    for p in &parts {
        h.push(format!("load_{p}_per_weight"));
    }
    h.push("saturated".into());
    let nt = v.rotors.len();
    let ne = v.elevators.len();
    let sat_names: Vec<String> = v
        .rotors
        .iter()
        .map(|r| format!("thrust-{}", key(&r.name)))
        .chain(
            v.elevators
                .iter()
                .map(|e| format!("elevator-{}", key(&e.name))),
        )
        .chain(
            v.actuators
                .iter()
                .map(|a| format!("tilt-rate-{}", key(&a.name))),
        )
        .collect();
    let rows = f
        .samples
        .iter()
        .map(|s| {
            let mut r = vec![
                format!("{:.4}", s.time_s),
                cell(s.x_m),
                cell(s.height_m),
                cell(s.height_ref_m),
                cell(s.climb_rate_mps),
                cell(s.airspeed_mps),
                cell(s.speed_ref_mps),
                cell(s.ground_speed_mps),
                cell(s.state.u_mps),
                cell(s.state.w_mps),
                cell(s.state.theta_rad.to_degrees()),
                cell(s.pitch_ref_rad.to_degrees()),
                cell(s.pitch_offset_rad.to_degrees()),
                cell(s.state.q_rad_s.to_degrees()),
                cell(s.alpha_rad.to_degrees()),
                cell(s.wind.x_mps),
                cell(-s.wind.z_mps),
            ];
            for i in 0..v.actuators.len() {
                r.push(cell(s.tilt_rad[i].to_degrees()));
                r.push(cell(s.tilt_cmd_rad[i].to_degrees()));
                r.push(cell(s.tilt_schedule_rad[i].to_degrees()));
            }
            for (g, rot) in v.rotors.iter().enumerate() {
                let c = rot.count as f64;
                r.push(cell(c * s.thrust_n[g]));
                r.push(cell(c * s.thrust_cmd_n[g]));
                r.push(cell(c * s.thrust_available_n[g]));
                r.push(cell(s.power_w[g]));
                r.push(cell(s.energy_j[g]));
            }
            for k in 0..ne {
                r.push(cell(s.elevator_rad[k].to_degrees()));
            }
            for a in &s.part_alpha_rad {
                r.push(cell(a.to_degrees()));
            }
            for q in &s.part_load {
                r.push(cell(*q));
            }
            let mut sat: Vec<&str> = Vec::new();
            for (j, n) in sat_names.iter().enumerate() {
                if s.saturated.get(j).copied().unwrap_or(false) {
                    sat.push(n);
                }
            }
            if s.pitch_offset_limited {
                sat.push("pitch-offset");
            }
            let _ = nt;
            r.push(sat.join(" "));
            r
        })
        .collect();
    (h, rows)
}

/// Stall exposure of one surface beside the sweep's.
#[derive(Debug, Clone, Serialize)]
pub struct StallComparison {
    /// Surface.
    pub surface: String,
    /// The sweep's stalled bands (every part with area, whatever its load).
    pub sweep_stalled: Vec<Band>,
    /// The steady trim points stalled by the flight's load rule.
    pub steady_stalled: Vec<Band>,
    /// Airspeed ranges flown beyond stall (m/s), one per stalled interval.
    pub flown_stalled_mps: Vec<[f64; 2]>,
    /// Time beyond stall in flight (s).
    pub flown_time_beyond_stall_s: f64,
    /// Share of samples where flown and steady (load rule) stall state agree.
    pub agreement: Option<f64>,
    /// Why flown and steady differ, where they do.
    pub note: String,
}

/// Speed bands with their unit, or `no speed`.
fn bands_text(b: &[Band]) -> String {
    if b.is_empty() {
        "no speed".into()
    } else {
        super::text::speed_spans(b.iter().map(|x| (x.from_mps, x.to_mps)), 1)
    }
}

/// Flown stall exposure set beside the sweep's, surface by surface.
pub fn stall_comparison(sweep: &SweepResult, s: &Summary) -> Vec<StallComparison> {
    s.surfaces
        .iter()
        .map(|x| {
            let sw = sweep
                .stall_exposure
                .iter()
                .find(|e| e.surface == x.name)
                .map(|e| e.stalled.clone())
                .unwrap_or_default();
            let flown: Vec<[f64; 2]> = x
                .stalled
                .iter()
                .map(|i| {
                    let (a, b) = (i.from_speed_mps.min(i.to_speed_mps), i.from_speed_mps.max(i.to_speed_mps));
                    [a, b]
                })
                .collect();
            let mut notes = Vec::new();
            if bands_text(&sw) != bands_text(&x.steady_stalled) {
                notes.push(format!(
                    "the sweep counts every part of the surface, loaded or not; with the load rule (q S >= {:.1} % of the weight) the steady points are stalled at {}",
                    100.0 * s.stall_load_fraction,
                    bands_text(&x.steady_stalled)
                ));
            }
            if let Some(a) = x.steady_agreement {
                if a < 0.98 {
                    notes.push(format!(
                        "flown and steady stall state agree in {:.0} % of the flight: the flight is not steady (acceleration, pitch transients, tilt lag{})",
                        100.0 * a,
                        ", gusts"
                    ));
                }
            }
            StallComparison {
                surface: x.name.clone(),
                sweep_stalled: sw,
                steady_stalled: x.steady_stalled.clone(),
                flown_stalled_mps: flown,
                flown_time_beyond_stall_s: x.time_beyond_stall_s,
                agreement: x.steady_agreement,
                note: notes.join("; "),
            }
        })
        .collect()
}

/// The JSON document of a flight.
#[derive(Debug, Serialize)]
pub struct FlightDocument<'a> {
    /// Tool, caution, scenario and vehicle.
    #[serde(flatten)]
    pub header: super::Header<'a>,
    /// How the flight ended: completed, departed or held.
    pub outcome: &'a str,
    /// Why.
    pub outcome_reason: &'a str,
    /// When (s).
    pub outcome_time_s: f64,
    /// UNSAFE findings (empty when none).
    pub unsafe_findings: &'a [String],
    /// The flight (manoeuvre, reference, wind, summary, events, integrator statistics).
    pub flight: &'a Flight,
    /// The scenario's `[flight]` table as flown (defaults filled in).
    pub settings: &'a crate::scenario::FlightFile,
    /// Flown stall exposure beside the sweep's.
    pub stall_comparison: Vec<StallComparison>,
}

/// Build the JSON document.
pub fn document<'a>(sc: &'a Scenario, sweep: &SweepResult, f: &'a Flight) -> FlightDocument<'a> {
    FlightDocument {
        header: super::Header::of(sc),
        outcome: &f.summary.outcome,
        outcome_reason: &f.summary.outcome_reason,
        outcome_time_s: f.summary.outcome_time_s,
        unsafe_findings: &f.summary.unsafe_findings,
        flight: f,
        settings: &sc.file.flight,
        stall_comparison: stall_comparison(sweep, &f.summary),
    }
}

fn iv_text(i: &Interval) -> String {
    format!(
        "{} s ({})  {} {}",
        super::text::span(i.from_s, i.to_s, 2),
        super::text::speed_span(i.from_speed_mps, i.to_speed_mps, 1),
        i.what,
        i.detail
    )
}

/// The terminal summary of a flight.
pub fn text(sc: &Scenario, sweep: &SweepResult, f: &Flight) -> String {
    let s = &f.summary;
    let mut o = String::new();
    let _ = writeln!(
        o,
        "fly: {} ({}), {}",
        sc.file.name, sc.vehicle.name, s.manoeuvre
    );
    let _ = writeln!(
        o,
        "  {:.1} -> {:.1} m/s, {:.1} s flown, {} integrator steps ({} rejected, {} evaluations)",
        s.start_speed_mps,
        s.end_speed_mps,
        s.duration_s,
        f.integrator.accepted_steps,
        f.integrator.rejected_steps,
        f.integrator.evaluations
    );
    if let Some(w) = &s.stopped {
        let _ = writeln!(o, "  ! STOPPED {w}");
    }
    let _ = writeln!(o, "  outcome: {} ({})", s.outcome, s.outcome_reason);
    match &s.transition {
        Some(t) => {
            let _ = writeln!(
                o,
                "  transition: {:.1} s ({:.1} to {:.1} s), {:.0} m, {:.1} kJ, height change {} m",
                t.time_s,
                t.start_s,
                t.end_s,
                t.distance_m,
                t.energy_j / 1000.0,
                super::text::signed(t.height_change_m, 2)
            );
        }
        None if !s.transition_criterion.is_empty() => {
            let _ = writeln!(
                o,
                "  ! transition NOT completed ({})",
                s.transition_criterion
            );
        }
        None => {}
    }
    let _ = writeln!(
        o,
        "  height: lost {:.2} m (at {:.1} s), gained {:.2} m (at {:.1} s), final error {} m",
        s.height_lost_m,
        s.height_lost_at_s,
        s.height_gained_m,
        s.height_gained_at_s,
        super::text::signed(s.final_height_error_m, 2)
    );
    let _ = writeln!(
        o,
        "  pitch {} to {} deg, largest speed error {:.2} m/s, energy {:.1} kJ",
        super::text::num(s.pitch_range_deg[0], 1),
        super::text::num(s.pitch_range_deg[1], 1),
        s.largest_speed_error_mps,
        s.energy_j / 1000.0
    );
    let _ = writeln!(
        o,
        "\nstall exposure (a part counts while q S >= {:.1} % of the weight):",
        100.0 * s.stall_load_fraction
    );
    let _ = writeln!(
        o,
        "  {:<14} {:>9} {:>9} {:>9} {:>8} {:>9}  flown beyond stall at",
        "surface", "alpha max", "alpha min", "stall +/-", "beyond", "alpha max"
    );
    let _ = writeln!(
        o,
        "  {:<14} {:>9} {:>9} {:>9} {:>8} {:>9}",
        "", "deg", "deg", "deg", "s", "at m/s"
    );
    for x in &s.surfaces {
        let opt = |v: Option<f64>| v.map_or("-".to_string(), |a| super::text::num(a, 1));
        let flown: Vec<String> = x
            .stalled
            .iter()
            .map(|i| {
                format!(
                    "{} ({:.1} to {:.1} s)",
                    super::text::speed_span(i.from_speed_mps, i.to_speed_mps, 1),
                    i.from_s,
                    i.to_s
                )
            })
            .collect();
        let _ = writeln!(
            o,
            "  {:<14} {:>9} {:>9} {:>9} {:>8.2} {:>9}  {}",
            x.name,
            opt(x.largest_alpha_deg),
            opt(x.smallest_alpha_deg),
            format!("{:.0}/{:.0}", x.stall_pos_deg, x.stall_neg_deg),
            x.time_beyond_stall_s,
            opt(x.largest_alpha_speed_mps),
            if flown.is_empty() {
                "never".to_string()
            } else {
                flown.join(", ")
            }
        );
    }
    let _ = writeln!(o, "\nagainst the sweep (steady trim at the same speeds):");
    for c in stall_comparison(sweep, s) {
        let _ = writeln!(
            o,
            "  {:<14} sweep stalled at {}; steady with load rule at {}; agreement {}",
            c.surface,
            bands_text(&c.sweep_stalled),
            bands_text(&c.steady_stalled),
            c.agreement
                .map_or("-".into(), |a| format!("{:.0} %", 100.0 * a))
        );
        if !c.note.is_empty() {
            let _ = writeln!(o, "  {:<14} note: {}", "", c.note);
        }
    }
    let _ = writeln!(o, "\nrotor groups:");
    let _ = writeln!(
        o,
        "  {:<14} {:>11} {:>6} {:>12} {:>10} {:>6} {:>11} {:>7}",
        "group", "peak thrust", "at", "thrust_max", "peak power", "at", "power avail", "energy"
    );
    let _ = writeln!(
        o,
        "  {:<14} {:>11} {:>6} {:>12} {:>10} {:>6} {:>11} {:>7}",
        "", "N", "s", "N", "W", "s", "W", "kJ"
    );
    for r in &s.rotors {
        let _ = writeln!(
            o,
            "  {:<14} {:>11.1} {:>6.1} {:>12.1} {:>10.0} {:>6.1} {:>11.0} {:>7.1}",
            r.name,
            r.peak_thrust_n,
            r.peak_thrust_at_s,
            r.thrust_cap_n,
            r.peak_power_w,
            r.peak_power_at_s,
            r.power_available_w,
            r.energy_j / 1000.0
        );
    }
    let _ = writeln!(o, "\ncorridor:");
    if s.corridor_exits.is_empty() {
        if s.outcome == "completed" {
            let _ = writeln!(o, "  stayed inside the trimmable corridor of the schedule");
        } else {
            let _ = writeln!(
                o,
                "  ! left the trimmed flight it was following: {} at {:.2} s ({})",
                s.outcome, s.outcome_time_s, s.outcome_reason
            );
        }
    }
    for i in &s.corridor_exits {
        let _ = writeln!(
            o,
            "  ! LEFT THE CORRIDOR {} s ({}): {}",
            super::text::span(i.from_s, i.to_s, 2),
            super::text::speed_span(i.from_speed_mps, i.to_speed_mps, 1),
            i.detail
        );
    }
    let _ = writeln!(o, "\nverdict:");
    if s.unsafe_findings.is_empty() {
        let _ = writeln!(o, "  no UNSAFE finding in this flight");
    }
    for x in &s.unsafe_findings {
        let _ = writeln!(o, "  UNSAFE: {x}");
    }
    let _ = writeln!(o, "\nsaturations:");
    if s.saturations.is_empty() && s.tilt_lag.is_empty() {
        let _ = writeln!(o, "  none");
    }
    for i in s.saturations.iter().chain(&s.tilt_lag) {
        let _ = writeln!(o, "  ! {}", iv_text(i));
    }
    if !s.plan_held.is_empty() {
        let _ = writeln!(
            o,
            "\nplan held back (the vehicle does not follow the planned speed):"
        );
        for i in &s.plan_held {
            let _ = writeln!(o, "  ! {}", iv_text(i));
        }
    }
    let _ = writeln!(o, "\nevents:");
    let shown: Vec<&Event> = f.events.iter().take(40).collect();
    for e in &shown {
        let _ = writeln!(
            o,
            "  {:7.2} s {:5.1} m/s  {:<16} {}",
            e.time_s, e.speed_mps, e.kind, e.message
        );
    }
    if f.events.len() > shown.len() {
        let _ = writeln!(
            o,
            "  ... {} more in flight.json",
            f.events.len() - shown.len()
        );
    }
    let _ = writeln!(o, "\ncaution: {}", super::CAUTION);
    super::text::wrap(&o, super::text::LINE_WIDTH)
}

fn series(label: &str, x: &[f64], y: Vec<f64>, style: usize) -> Series {
    Series {
        label: label.to_string(),
        x: x.to_vec(),
        y,
        style,
    }
}

fn shades(iv: &[Interval], label: &str) -> Vec<Shade> {
    iv.iter()
        .map(|i| Shade {
            from: i.from_s,
            to: i.to_s,
            label: label.to_string(),
        })
        .collect()
}

/// Style of a reference a state follows (speed, height, pitch): the partner of the first data
/// style.
const REFERENCE: usize = 8;

/// The saturation intervals of one kind of control (`what` starts with `kind`: "thrust",
/// "elevator", "tilt").
fn saturated(sm: &Summary, kind: &str) -> Vec<Interval> {
    sm.saturations
        .iter()
        .filter(|x| x.what.starts_with(kind))
        .cloned()
        .collect()
}

/// Draw the flight plots; returns the files written.
pub fn plots(dir: &Path, sc: &Scenario, f: &Flight) -> Result<Vec<PathBuf>, WriteError> {
    let v = &sc.vehicle;
    let s = &f.samples;
    let t: Vec<f64> = s.iter().map(|x| x.time_s).collect();
    let sm = &f.summary;
    let corridor = shades(&sm.corridor_exits, "outside the trimmable corridor");
    let xr = Some((0.0, t.last().copied().unwrap_or(1.0).max(1e-3)));
    let base = |title: &str, y: &str| Panel {
        title: title.to_string(),
        x_label: "time (s)".into(),
        y_label: y.to_string(),
        x_range: xr,
        shades: corridor.clone(),
        ..Default::default()
    };
    let mut out = Vec::new();
    let title = format!("{}: {} ({})", sc.file.name, sm.manoeuvre, v.name);

    // States.
    let mut speed = base("airspeed", "airspeed (m/s)");
    speed.series.push(series(
        "airspeed",
        &t,
        s.iter().map(|x| x.airspeed_mps).collect(),
        0,
    ));
    speed.series.push(series(
        "reference",
        &t,
        s.iter().map(|x| x.speed_ref_mps).collect(),
        REFERENCE,
    ));
    let mut height = base("height above the start", "height (m)");
    height.series.push(series(
        "height",
        &t,
        s.iter().map(|x| x.height_m).collect(),
        0,
    ));
    height.series.push(series(
        "reference",
        &t,
        s.iter().map(|x| x.height_ref_m).collect(),
        REFERENCE,
    ));
    let mut pitch = base("pitch attitude", "pitch (deg)");
    pitch.series.push(series(
        "pitch",
        &t,
        s.iter().map(|x| x.state.theta_rad.to_degrees()).collect(),
        0,
    ));
    pitch.series.push(series(
        "pitch reference (trim + offset)",
        &t,
        s.iter().map(|x| x.pitch_ref_rad.to_degrees()).collect(),
        REFERENCE,
    ));
    pitch.shades.extend(shades(
        &saturated(sm, "pitch offset"),
        "pitch offset at its limit",
    ));
    let fourth = if v.actuators.is_empty() {
        let mut p = base("elevator deflection", "elevator, trailing edge down (deg)");
        for (k, e) in v.elevators.iter().enumerate() {
            p.series.push(series(
                &format!("'{}'", e.name),
                &t,
                s.iter().map(|x| x.elevator_rad[k].to_degrees()).collect(),
                data_style(k),
            ));
        }
        p.shades
            .extend(shades(&saturated(sm, "elevator"), "elevator at its limit"));
        p
    } else {
        let mut p = base("tilt (0 cruise, 90 hover)", "tilt (deg)");
        for (i, a) in v.actuators.iter().enumerate() {
            p.series.push(series(
                &format!("'{}' tilt", a.name),
                &t,
                s.iter().map(|x| x.tilt_rad[i].to_degrees()).collect(),
                data_style(i),
            ));
            p.series.push(series(
                &format!("'{}' schedule at the flown airspeed", a.name),
                &t,
                s.iter()
                    .map(|x| x.tilt_schedule_rad[i].to_degrees())
                    .collect(),
                partner_style(data_style(i)),
            ));
        }
        p.shades
            .extend(shades(&saturated(sm, "tilt"), "tilt at its rate limit"));
        p
    };
    out.extend(render(
        &dir.join("flight_states"),
        &title,
        &[speed, height, pitch, fourth],
        2,
    )?);

    // Angle of attack of every surface.
    let labels = part_labels(v);
    let mut panels = Vec::new();
    for (si, x) in sm.surfaces.iter().enumerate() {
        let mut p = Panel {
            title: format!(
                "{}: each part while it carries {:.1} % of the weight or more",
                x.name,
                100.0 * sm.stall_load_fraction
            ),
            x_label: "time (s)".into(),
            y_label: "angle of attack (deg)".into(),
            x_range: xr,
            ..Default::default()
        };
        p.shades = x
            .stalled
            .iter()
            .map(|i| Shade {
                from: i.from_s,
                to: i.to_s,
                label: "beyond stall".into(),
            })
            .collect();
        let mut style = 0;
        let mut lo = x.stall_neg_deg;
        let mut hi = x.stall_pos_deg;
        for (pk, (psi, label)) in labels.iter().enumerate() {
            if *psi != si {
                continue;
            }
            let y: Vec<f64> = s
                .iter()
                .map(|smp| {
                    if smp.part_load[pk] >= sm.stall_load_fraction {
                        smp.part_alpha_rad[pk].to_degrees()
                    } else {
                        f64::NAN
                    }
                })
                .collect();
            for a in y.iter().filter(|a| a.is_finite()) {
                lo = lo.min(*a);
                hi = hi.max(*a);
            }
            p.series.push(series(label, &t, y, data_style(style)));
            style += 1;
        }
        p.hlines.push(HLine {
            y: x.stall_pos_deg,
            label: format!("positive stall {:.1} deg", x.stall_pos_deg),
            style: Role::Threshold.style(),
        });
        p.hlines.push(HLine {
            y: x.stall_neg_deg,
            label: format!("negative stall {:.1} deg", x.stall_neg_deg),
            style: Role::ThresholdLow.style(),
        });
        let pad = 0.08 * (hi - lo).max(5.0);
        p.y_range = Some((lo - pad, hi + pad));
        panels.push(p);
    }
    if !panels.is_empty() {
        let cols = if panels.len() > 1 { 2 } else { 1 };
        out.extend(render(
            &dir.join("flight_alpha"),
            &format!("{}: angle of attack", sc.file.name),
            &panels,
            cols,
        )?);
    }

    // Thrust, power, elevator.
    let mut thrust = base("thrust of each rotor group", "thrust (N)");
    let mut power = base("shaft power of each rotor group", "power (W)");
    for (g, r) in v.rotors.iter().enumerate() {
        let c = r.count as f64;
        thrust.series.push(series(
            &format!("'{}' thrust", r.name),
            &t,
            s.iter().map(|x| c * x.thrust_n[g]).collect(),
            data_style(g),
        ));
        thrust.series.push(series(
            &format!("'{}' available", r.name),
            &t,
            s.iter().map(|x| c * x.thrust_available_n[g]).collect(),
            partner_style(data_style(g)),
        ));
        power.series.push(series(
            &format!("'{}' power", r.name),
            &t,
            s.iter().map(|x| x.power_w[g]).collect(),
            data_style(g),
        ));
        power.hlines.push(HLine {
            y: c * r.power_max_w,
            label: format!("'{}' power available", r.name),
            style: partner_style(data_style(g)),
        });
    }
    thrust
        .shades
        .extend(shades(&saturated(sm, "thrust"), "thrust at its limit"));
    let mut panels = vec![thrust, power];
    if !v.elevators.is_empty() {
        let mut p = base("elevator deflection", "elevator, trailing edge down (deg)");
        for (k, e) in v.elevators.iter().enumerate() {
            p.series.push(series(
                &format!("'{}'", e.name),
                &t,
                s.iter().map(|x| x.elevator_rad[k].to_degrees()).collect(),
                data_style(k),
            ));
            p.hlines.push(HLine {
                y: e.max_rad.to_degrees(),
                label: format!("'{}' limits", e.name),
                style: partner_style(data_style(k)),
            });
            p.hlines.push(HLine {
                y: e.min_rad.to_degrees(),
                label: String::new(),
                style: partner_style(data_style(k)),
            });
        }
        p.shades
            .extend(shades(&saturated(sm, "elevator"), "elevator at its limit"));
        panels.push(p);
    }
    out.extend(render(
        &dir.join("flight_controls"),
        &format!("{title}: rotors and elevators"),
        &panels,
        1,
    )?);
    Ok(out)
}

/// Write flight.csv, flight.json and the plots into `dir`; returns the files written.
pub fn write(
    dir: &Path,
    sc: &Scenario,
    _table: &FeedforwardTable,
    sweep: &SweepResult,
    f: &Flight,
) -> Result<Vec<PathBuf>, WriteError> {
    let mut out = Vec::new();
    let (h, rows) = time_history(&sc.vehicle, f);
    let p = dir.join("flight.csv");
    write_csv(&p, &h, &rows)?;
    out.push(p);
    let p = dir.join("flight.json");
    write_json(&p, &document(sc, sweep, f))?;
    out.push(p);
    out.extend(plots(dir, sc, f)?);
    Ok(out)
}

/// Header and rows of `dispersions.csv` (one row per dispersed flight).
pub fn dispersion_table(v: &Vehicle, d: &Dispersion) -> (Vec<String>, Vec<Vec<String>>) {
    let mut h: Vec<String> = ["run", "mass_kg", "cg_shift_x_m"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    let mut names: Vec<String> = v.surfaces.iter().map(|s| key(&s.name)).collect();
    if v.derivatives.is_some() {
        names.push("airframe".into());
    }
    for n in &names {
        h.push(format!("aero_scale_{n}"));
    }
    for r in &v.rotors {
        h.push(format!("thrust_scale_{}", key(&r.name)));
    }
    for x in [
        "transition_time_s",
        "height_lost_m",
        "height_gained_m",
        "energy_j",
    ] {
        h.push(x.to_string());
    }
    for n in &names {
        h.push(format!("time_beyond_stall_{n}_s"));
    }
    h.push("failed".into());
    let rows = d
        .flights
        .iter()
        .map(|f| {
            let mut r = vec![
                f.draw.index.to_string(),
                cell(f.draw.mass_kg),
                cell(f.draw.cg_shift_x_m),
            ];
            r.extend(f.draw.aero_scale.iter().map(|x| cell(*x)));
            r.extend(f.draw.thrust_scale.iter().map(|x| cell(*x)));
            r.push(f.transition_time_s.map_or(String::new(), cell));
            r.push(cell(f.height_lost_m));
            r.push(cell(f.height_gained_m));
            r.push(cell(f.energy_j));
            r.extend(f.time_beyond_stall_s.iter().map(|x| cell(*x)));
            r.push(f.failed.clone().unwrap_or_default());
            r
        })
        .collect();
    (h, rows)
}

/// Write `dispersions.csv` and `dispersions.json` into `dir`; returns the files written.
pub fn write_dispersions(
    dir: &Path,
    sc: &Scenario,
    d: &Dispersion,
) -> Result<Vec<PathBuf>, WriteError> {
    #[derive(Serialize)]
    struct Doc<'a> {
        #[serde(flatten)]
        header: super::Header<'a>,
        dispersion: &'a Dispersion,
    }
    let (h, rows) = dispersion_table(&sc.vehicle, d);
    let csv = dir.join("dispersions.csv");
    write_csv(&csv, &h, &rows)?;
    let json = dir.join("dispersions.json");
    write_json(
        &json,
        &Doc {
            header: super::Header::of(sc),
            dispersion: d,
        },
    )?;
    Ok(vec![csv, json])
}

/// The terminal summary of a dispersion run.
pub fn dispersion_text(sc: &Scenario, d: &Dispersion) -> String {
    let mut o = String::new();
    let s = &d.settings;
    let _ = writeln!(
        o,
        "\ndispersions: {} flights of {} (1 sd: mass {:.1} %, CG {:.3} m, surface forces {:.1} %, thrust and power {:.1} %; seed {}), nominal feedforward and feedback",
        d.flights.len(),
        sc.vehicle.name,
        s.mass_pct,
        s.cg_x_m,
        s.aero_pct,
        s.thrust_pct,
        s.seed
    );
    let _ = writeln!(
        o,
        "  completed the transition: {} of {}; departed or not flown: {}",
        d.completed,
        d.flights.len(),
        d.failed
    );
    let _ = writeln!(
        o,
        "  {:<34} {:>6} {:>9} {:>9} {:>9} {:>9} {:>9} {:>9}",
        "figure", "runs", "mean", "sd", "min", "p5", "p95", "max"
    );
    for x in &d.spreads {
        let f = |v: f64| {
            if v.is_finite() {
                format!("{v:.2}")
            } else {
                "-".into()
            }
        };
        let _ = writeln!(
            o,
            "  {:<34} {:>6} {:>9} {:>9} {:>9} {:>9} {:>9} {:>9}",
            x.name,
            x.count,
            f(x.mean),
            f(x.std_dev),
            f(x.min),
            f(x.p5),
            f(x.p95),
            f(x.max)
        );
    }
    o
}
