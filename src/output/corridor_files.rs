//! The files of `corridor` and `schedule`.
//!
//! - `corridor.csv`: a row per grid point, units in every header; `corridor.json`: the grid,
//!   every point, the boundaries and the outside reasons; `corridor.png` / `.svg`: the map.
//! - `schedule.toml`: the built schedule in the scenario's `[schedule]` format (what `sweep
//!   --schedule` and the transition flight read), with a comment header; `schedule.csv`: a row
//!   per grid speed with both schedules' margins; `schedule.json`: everything; the plots
//!   `schedule-map` (corridor with both schedules) and `schedule-margins` (margins along them).

use std::path::{Path, PathBuf};

use serde::Serialize;

use super::chart::{
    render, render_map, HLine, Panel, Role, Series, MARGIN_SCALE_MAX, MARGIN_SCALE_MIN,
};
use super::files::{write_atomic, write_csv, write_json, WriteError};
use crate::corridor::{Corridor, CorridorPoint, Limit, Variable};
use crate::scenario::{Scenario, Schedule, Thresholds};
use crate::schedule::{to_document, BuiltSchedule};

/// Largest margin shown on the schedule-margins plot (larger values are clipped).
pub const MARGIN_PLOT_CAP: f64 = 5.0;

/// Colour-scale range of the map (normalised margin); values beyond saturate.
pub const MAP_RANGE: (f64, f64) = (MARGIN_SCALE_MIN, MARGIN_SCALE_MAX);

fn num(v: Option<f64>) -> String {
    match v {
        Some(x) if x.is_finite() => format!("{x:.6}"),
        _ => String::new(),
    }
}

fn label(l: &Option<Limit>, margin: bool) -> String {
    match l {
        Some(l) if margin => l.margin_label(),
        Some(l) => l.boundary_label(),
        None => String::new(),
    }
}

/// Header and rows of a table of corridor points (`corridor.csv`).
pub fn point_table(
    variable: Variable,
    points: &[CorridorPoint],
) -> (Vec<String>, Vec<Vec<String>>) {
    let h: Vec<String> = [
        "speed_mps",
        &format!("{}_deg", variable.name()),
        "trimmed",
        "inside",
        "smallest_margin",
        "limiting_margin",
        "outside_reason",
        "reason",
        "trim_pitch_deg",
        "alpha_deg",
        "path_accel_mps2",
        "accel_available_mps2",
        "decel_available_mps2",
        "power_w",
        "stall_margin_deg",
        "stall_surface",
        "thrust_margin",
        "power_margin",
        "pitch_accel_up_rad_s2",
        "pitch_accel_down_rad_s2",
        "elevator_margin_deg",
        "static_margin_pct",
        "time_to_double_s",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    let rows = points
        .iter()
        .map(|p| {
            let m = p.margins.as_ref();
            vec![
                format!("{:.4}", p.speed_mps),
                format!("{:.4}", p.value_deg),
                p.trimmed.to_string(),
                p.inside.to_string(),
                num(p.smallest_margin),
                label(&p.limiting_margin, true),
                label(&p.outside_reason, false),
                p.reason.clone(),
                num(p.pitch_deg),
                num(p.alpha_deg),
                num(p.path_accel_mps2),
                num(p.accel_available_mps2),
                num(p.decel_available_mps2),
                num(p.power_w),
                num(m.and_then(|m| m.stall_deg)),
                m.and_then(|m| m.stall_surface.clone()).unwrap_or_default(),
                num(m.map(|m| m.thrust)),
                num(m.map(|m| m.power)),
                num(m.map(|m| m.pitch_accel_up_rad_s2)),
                num(m.map(|m| m.pitch_accel_down_rad_s2)),
                num(m.and_then(|m| m.elevator_deg)),
                num(m.and_then(|m| m.static_margin_pct)),
                num(m.and_then(|m| m.time_to_double_s)),
            ]
        })
        .collect();
    (h, rows)
}

/// How the smallest margin is defined, for the JSON documents.
pub const MARGIN_DEFINITION: &str = "smallest over all margins of (margin / scenario threshold - 1): \
0 at the threshold, -1 at the hard limit; stall counts only on surface parts with q*S >= 5 % of the weight";

/// A schedule table in degrees, for the documents.
#[derive(Debug, Serialize)]
pub struct TableDeg {
    /// tilt or pitch.
    pub mode: String,
    /// Speeds (m/s).
    pub speed_mps: Vec<f64>,
    /// Values (deg).
    pub value_deg: Vec<f64>,
}

/// The scenario's own schedule as a table in degrees, if it has one for this variable.
pub fn own_table(own: &Schedule, variable: Variable) -> Option<TableDeg> {
    let (mode, t) = match own {
        Schedule::Tilt(t) => (Variable::Tilt, t),
        Schedule::Pitch(t) => (Variable::Pitch, t),
        Schedule::Free => return None,
    };
    (mode == variable).then(|| TableDeg {
        mode: mode.name().into(),
        speed_mps: t.speed_mps.clone(),
        value_deg: t.value_rad.iter().map(|r| r.to_degrees()).collect(),
    })
}

/// Outside reasons with their point counts.
#[derive(Debug, Serialize)]
pub struct ReasonCount {
    /// The reason.
    pub reason: String,
    /// Number of grid points it puts outside.
    pub points: usize,
}

/// `corridor.json`.
#[derive(Debug, Serialize)]
pub struct CorridorDocument<'a> {
    /// Tool, caution, scenario and vehicle.
    #[serde(flatten)]
    pub header: super::Header<'a>,
    /// How the smallest margin is made.
    pub margin_definition: &'static str,
    /// Thresholds used.
    pub thresholds: &'a Thresholds,
    /// Speeds with inside points, as bands [from, to] (m/s).
    pub speed_bands_mps: Vec<(f64, f64)>,
    /// Outside reasons and counts.
    pub reasons: Vec<ReasonCount>,
    /// The scenario's own schedule.
    pub scenario_schedule: Option<TableDeg>,
    /// Grid, points and boundaries.
    pub corridor: &'a Corridor,
}

/// A schedule drawn over a corridor map: its role (which fixes its line code and legend
/// text) and its table.
#[derive(Debug, Clone, PartialEq)]
pub struct ScheduleLine {
    /// Built, or in use.
    pub role: Role,
    /// Airspeeds (m/s).
    pub speed_mps: Vec<f64>,
    /// Transition variable (deg); NaN leaves a gap.
    pub value_deg: Vec<f64>,
}

impl ScheduleLine {
    /// The line as a series, in its role's style.
    pub fn series(&self) -> Series {
        Series {
            label: self.role.label().to_string(),
            x: self.speed_mps.clone(),
            y: self.value_deg.clone(),
            style: self.role.style(),
        }
    }
}

/// Boundary and schedule overlays of a corridor map: one series per boundary stretch, one
/// legend entry per reason; then the schedules, each in the line code of its role.
pub fn overlays(c: &Corridor, schedules: &[ScheduleLine]) -> Vec<Series> {
    // Purple and green read on the margin scale's blues and oranges and on the grey, in
    // three patterns each; then sky blue and orange. Black is for the schedules, vermillion
    // for limits; after the list the styles repeat.
    const STYLES: [usize; 7] = [6, 3, 22, 19, 14, 2, 1];
    let mut reasons: Vec<String> = Vec::new();
    let mut out = Vec::new();
    for b in &c.boundaries {
        let r = b.reason.boundary_label();
        let (k, first) = match reasons.iter().position(|x| x == &r) {
            Some(k) => (k, false),
            None => {
                reasons.push(r.clone());
                (reasons.len() - 1, true)
            }
        };
        out.push(Series {
            label: if first { r } else { String::new() },
            x: b.speed_mps.clone(),
            y: b.value_deg.clone(),
            style: STYLES[k % STYLES.len()] + 8 * (k / STYLES.len()),
        });
    }
    out.extend(schedules.iter().map(ScheduleLine::series));
    out
}

/// Values of the map: clamped smallest margin of trimmed points, None for untrimmed ones.
pub fn map_values(c: &Corridor) -> Vec<Vec<Option<f64>>> {
    (0..c.speeds_mps.len())
        .map(|i| {
            (0..c.values_deg.len())
                .map(|j| {
                    let p = c.at(i, j);
                    if !p.trimmed {
                        return None;
                    }
                    let m = p.smallest_margin.unwrap_or(MAP_RANGE.1);
                    Some(m.clamp(MAP_RANGE.0, MAP_RANGE.1))
                })
                .collect()
        })
        .collect()
}

/// Draw a corridor map with schedules overlaid into `<stem>.png` / `.svg`.
pub fn corridor_map(
    stem: &Path,
    title: &str,
    c: &Corridor,
    schedules: &[ScheduleLine],
) -> Result<Vec<PathBuf>, WriteError> {
    render_map(
        stem,
        title,
        "airspeed (m/s)",
        c.variable.axis_label(),
        &c.speeds_mps,
        &c.values_deg,
        &map_values(c),
        "smallest margin (margin/threshold - 1): < 0 outside, >= 0 inside",
        &overlays(c, schedules),
    )
}

/// Write corridor.csv, corridor.json and the map into `dir`; returns the files written.
pub fn write_corridor(dir: &Path, sc: &Scenario, c: &Corridor) -> Result<Vec<PathBuf>, WriteError> {
    let mut out = Vec::new();
    let (h, rows) = point_table(c.variable, &c.points);
    let p = dir.join("corridor.csv");
    write_csv(&p, &h, &rows)?;
    out.push(p);
    let own = own_table(&sc.schedule, c.variable);
    let doc = CorridorDocument {
        header: super::Header::of(sc),
        margin_definition: MARGIN_DEFINITION,
        thresholds: &sc.file.thresholds,
        speed_bands_mps: c.speed_bands(),
        reasons: c
            .reason_counts()
            .into_iter()
            .map(|(reason, points)| ReasonCount { reason, points })
            .collect(),
        scenario_schedule: own,
        corridor: c,
    };
    let p = dir.join("corridor.json");
    write_json(&p, &doc)?;
    out.push(p);
    let schedules: Vec<ScheduleLine> = own_table(&sc.schedule, c.variable)
        .map(|t| {
            vec![ScheduleLine {
                role: Role::ScheduleInUse,
                speed_mps: t.speed_mps,
                value_deg: t.value_deg,
            }]
        })
        .unwrap_or_default();
    let title = format!(
        "Transition corridor: {} ({})",
        sc.vehicle.name, sc.file.name
    );
    out.extend(corridor_map(&dir.join("corridor"), &title, c, &schedules)?);
    Ok(out)
}

/// The text of `schedule.toml`: a comment header (how it was built, the caution) and the
/// schedule document.
pub fn schedule_toml(sc: &Scenario, b: &BuiltSchedule) -> Result<String, toml::ser::Error> {
    let doc = to_document(b, &sc.file.name);
    let body = toml::to_string(&doc)?;
    let c = &b.constraints;
    let header = format!(
        "# Transition schedule built by hoverline {} for scenario '{}' (vehicle '{}').\n\
         # Method: dynamic programming over the corridor grid for the largest smallest margin\n\
         # (margin / threshold - 1), then a golden-section refinement of each knot with re-trim.\n\
         # Constraints: {} non-increasing from hover to cruise; |d/dV| <= {:.2} deg per m/s\n\
         # ({:.1} deg/s at {:.2} m/s^2); |d2/dV2| <= {:.2} deg per (m/s)^2; knots every {:.2} m/s.\n\
         # Worst point: {}.\n\
         # Use: hoverline sweep SCENARIO --schedule this-file\n\
         # CAUTION: {}\n\n",
        env!("CARGO_PKG_VERSION"),
        sc.file.name,
        sc.vehicle.name,
        b.variable.name(),
        c.max_slope_deg_per_mps,
        c.rate_limit_deg_s,
        c.acceleration_mps2,
        c.smoothness_deg_per_mps2,
        c.knot_spacing_mps,
        describe(&b.worst),
        super::CAUTION,
    );
    Ok(header + &body)
}

/// One line about a point: speed, value, margin and its kind, or why it is outside.
pub fn describe(p: &CorridorPoint) -> String {
    if !p.trimmed {
        return format!(
            "{:.2} m/s at {:.1} deg: {}",
            p.speed_mps, p.value_deg, p.reason
        );
    }
    let m = p
        .smallest_margin
        .map_or("none".to_string(), |m| super::text::num(m, 3));
    let kind = p
        .limiting_margin
        .as_ref()
        .map_or(String::new(), |l| format!(" ({})", l.margin_label()));
    let out = if p.inside {
        String::new()
    } else {
        format!(", OUTSIDE the corridor: {}", p.reason)
    };
    format!(
        "{:.2} m/s at {:.1} deg: smallest margin {m}{kind}{out}",
        p.speed_mps, p.value_deg
    )
}

/// `schedule.json`.
#[derive(Debug, Serialize)]
pub struct ScheduleJson<'a> {
    /// Tool, caution, scenario and vehicle.
    #[serde(flatten)]
    pub header: super::Header<'a>,
    /// How the smallest margin is made.
    pub margin_definition: &'static str,
    /// The result.
    pub schedule: &'a BuiltSchedule,
}

/// Write schedule.toml, schedule.csv, schedule.json and the plots into `dir`.
pub fn write_schedule(
    dir: &Path,
    sc: &Scenario,
    c: &Corridor,
    b: &BuiltSchedule,
) -> Result<Vec<PathBuf>, WriteError> {
    let mut out = Vec::new();
    let p = dir.join("schedule.toml");
    let text = schedule_toml(sc, b).map_err(|e| WriteError {
        path: p.clone(),
        source: std::io::Error::other(e),
    })?;
    write_atomic(&p, text.as_bytes())?;
    out.push(p);

    // schedule.csv: the built schedule's points with the scenario's beside them.
    let (mut h, mut rows) = point_table(b.variable, &b.built.points);
    if let Some(o) = &b.scenario {
        h.push(format!("scenario_{}_deg", b.variable.name()));
        h.push("scenario_inside".into());
        h.push("scenario_smallest_margin".into());
        h.push("scenario_limiting_margin".into());
        h.push("margin_difference".into());
        for (r, q) in rows.iter_mut().zip(&o.points) {
            r.push(format!("{:.4}", q.value_deg));
            r.push(q.inside.to_string());
            r.push(num(q.smallest_margin));
            r.push(label(&q.limiting_margin, true));
        }
        for (k, r) in rows.iter_mut().enumerate() {
            let d = match (
                b.built.points[k].smallest_margin,
                o.points.get(k).and_then(|q| q.smallest_margin),
            ) {
                (Some(x), Some(y)) => Some(x - y),
                _ => None,
            };
            r.push(num(d));
        }
    }
    let p = dir.join("schedule.csv");
    write_csv(&p, &h, &rows)?;
    out.push(p);

    let doc = ScheduleJson {
        header: super::Header::of(sc),
        margin_definition: MARGIN_DEFINITION,
        schedule: b,
    };
    let p = dir.join("schedule.json");
    write_json(&p, &doc)?;
    out.push(p);

    let built = ScheduleLine {
        role: Role::BuiltSchedule,
        speed_mps: b.speed_mps.clone(),
        value_deg: b.value_deg.clone(),
    };
    let in_use = b.scenario.as_ref().map(|o| ScheduleLine {
        role: Role::ScheduleInUse,
        speed_mps: o.points.iter().map(|p| p.speed_mps).collect(),
        value_deg: o
            .points
            .iter()
            .map(|p| if p.trimmed { p.value_deg } else { f64::NAN })
            .collect(),
    });
    let schedules: Vec<ScheduleLine> = std::iter::once(built.clone())
        .chain(in_use.clone())
        .collect();
    let title = format!(
        "Built schedule in the corridor: {} ({})",
        sc.vehicle.name, sc.file.name
    );
    out.extend(corridor_map(
        &dir.join("schedule-map"),
        &title,
        c,
        &schedules,
    )?);

    // Margins along both schedules.
    let margin_of = |p: &CorridorPoint| p.smallest_margin.filter(|_| p.trimmed).unwrap_or(f64::NAN);
    let margin_line = |line: &ScheduleLine, points: &[CorridorPoint]| Series {
        x: points.iter().map(|p| p.speed_mps).collect(),
        y: points.iter().map(margin_of).collect(),
        ..line.series()
    };
    let mut series = vec![margin_line(&built, &b.built.points)];
    let mut values = vec![built.series()];
    if let (Some(o), Some(line)) = (&b.scenario, &in_use) {
        series.push(margin_line(line, &o.points));
        values.push(line.series());
    }
    // Fit the margins, but keep 0 and -1 in view and very deep values from flattening the rest.
    let lo = series
        .iter()
        .flat_map(|s| s.y.iter().copied())
        .filter(|y| y.is_finite())
        .fold(-1.5f64, f64::min)
        .max(-30.0);
    let hi = series
        .iter()
        .flat_map(|s| s.y.iter().copied())
        .filter(|y| y.is_finite())
        .fold(1.0f64, f64::max)
        .min(MARGIN_PLOT_CAP);
    let margin_range = (lo - 0.05 * (hi - lo), hi + 0.05 * (hi - lo));
    let panels = vec![
        Panel {
            title: "transition variable".into(),
            x_label: "airspeed (m/s)".into(),
            y_label: b.variable.axis_label().into(),
            series: values,
            ..Panel::default()
        },
        Panel {
            title: "smallest margin along the schedule (re-trimmed)".into(),
            x_label: "airspeed (m/s)".into(),
            y_label: "margin / threshold - 1 (-)".into(),
            series,
            hlines: vec![
                HLine {
                    y: 0.0,
                    label: Role::AtThreshold.label().into(),
                    style: Role::AtThreshold.style(),
                },
                HLine {
                    y: -1.0,
                    label: Role::HardLimit.label().into(),
                    style: Role::HardLimit.style(),
                },
            ],
            y_range: Some(margin_range),
            ..Panel::default()
        },
    ];
    let title = format!(
        "Schedule against the scenario's: {} ({})",
        sc.vehicle.name, sc.file.name
    );
    out.extend(render(&dir.join("schedule-margins"), &title, &panels, 1)?);
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn empty_corridor() -> Corridor {
        Corridor {
            variable: Variable::Tilt,
            condition: "level",
            speeds_mps: vec![0.0, 1.0],
            values_deg: vec![0.0, 90.0],
            climb_deg: 0.0,
            pitch_limits_deg: None,
            points: Vec::new(),
            boundaries: Vec::new(),
            guesses: Vec::new(),
        }
    }

    #[test]
    fn a_schedule_keeps_its_line_code_on_every_map() {
        // Common practice, no source: the same schedule must look the same on corridor.png
        // (in use alone) and schedule-map.png (with the built one), and on the margins plot.
        let line = |role| ScheduleLine {
            role,
            speed_mps: vec![0.0, 10.0],
            value_deg: vec![90.0, 0.0],
        };
        let c = empty_corridor();
        let alone = overlays(&c, &[line(Role::ScheduleInUse)]);
        let both = overlays(&c, &[line(Role::BuiltSchedule), line(Role::ScheduleInUse)]);
        let find = |s: &[Series], role: Role| {
            s.iter()
                .find(|x| x.label == role.label())
                .map(|x| x.style)
                .unwrap()
        };
        assert_eq!(
            find(&alone, Role::ScheduleInUse),
            find(&both, Role::ScheduleInUse)
        );
        assert_eq!(
            find(&both, Role::ScheduleInUse),
            Role::ScheduleInUse.style()
        );
        assert_eq!(
            find(&both, Role::BuiltSchedule),
            Role::BuiltSchedule.style()
        );
        assert_ne!(
            find(&both, Role::BuiltSchedule),
            find(&both, Role::ScheduleInUse)
        );
    }
}
