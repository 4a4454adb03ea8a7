//! The figures of `check --plot` and `sweep`, drawn with the chart kit in [`super::chart`]
//! as PNG and SVG pairs.
//!
//! - `polar_<surface>`: lift, drag and moment coefficients of each surface's full-circle polar
//!   (alpha from -180 to 180 deg), with the stall angles marked, plus a close-up around stall;
//! - `trim_curves`: pitch attitude, tilt, rotor thrust and elevator against airspeed;
//! - `surface_alpha`: each surface's angle of attack (clean part and the part in a rotor wake)
//!   against airspeed, with its stall angles and the bands where it is stalled;
//! - `margins`: stall, thrust, power, pitch-authority and static margins and the largest
//!   eigenvalue real part against airspeed, with the scenario thresholds and unsafe bands;
//! - `eigenvalues`: every mode of every trimmed point in the complex plane, coloured by speed.
//!
//! Untrimmed points and absent values are gaps in the lines, never zeros.

use std::path::{Path, PathBuf};

use super::chart::{self, HLine, Overlay, Panel, Series, Shade, VLine};
use super::files::WriteError;
use crate::scenario::Scenario;
use crate::sweep::{Band, PointReport, SweepResult};
use crate::vehicle::Vehicle;

/// Step of the polar plots (deg).
const POLAR_STEP_DEG: f64 = 0.5;

use chart::{data_style, partner_style, Role};

/// Thresholds and the positive stall angle; the lower threshold and the negative stall angle.
pub const THRESHOLD: usize = Role::Threshold.style();
pub const THRESHOLD_2: usize = Role::ThresholdLow.style();
/// Neutral stability.
const NEUTRAL: usize = Role::Neutral.style();

/// A name made safe for a file name: letters, digits, '-' and '_' kept, the rest '_'.
fn file_part(name: &str) -> String {
    let s: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect();
    if s.is_empty() {
        "unnamed".into()
    } else {
        s
    }
}

/// Full-range polar of every surface: `polar_<surface name>.png` and `.svg` in `dir`, with
/// CL, CD and CM (about the quarter chord, nose-up positive) against alpha from -180 to 180
/// deg and the stall angles of `polar.stall_angles_rad()` as vertical lines. Returns every
/// file written.
pub fn polars(v: &Vehicle, dir: &Path) -> Result<Vec<PathBuf>, WriteError> {
    let mut out = Vec::new();
    let n = (360.0 / POLAR_STEP_DEG).round() as usize;
    let alpha_deg: Vec<f64> = (0..=n)
        .map(|k| -180.0 + k as f64 * POLAR_STEP_DEG)
        .collect();
    for s in &v.surfaces {
        let c: Vec<_> = alpha_deg
            .iter()
            .map(|a| s.polar.coefficients(a.to_radians()))
            .collect();
        let series = vec![
            Series {
                label: "lift coefficient CL".into(),
                x: alpha_deg.clone(),
                y: c.iter().map(|k| k.cl).collect(),
                style: 0,
            },
            Series {
                label: "drag coefficient CD".into(),
                x: alpha_deg.clone(),
                y: c.iter().map(|k| k.cd).collect(),
                style: 1,
            },
            Series {
                label: "moment coefficient CM (quarter chord, nose-up +)".into(),
                x: alpha_deg.clone(),
                y: c.iter().map(|k| k.cm).collect(),
                style: 2 + 16,
            },
        ];
        let (pos, neg) = s.polar.stall_angles_rad();
        let (pos, neg) = (pos.to_degrees(), neg.to_degrees());
        let vlines = vec![
            VLine {
                x: pos,
                label: format!("positive stall {pos:.1} deg"),
                style: THRESHOLD,
            },
            VLine {
                x: neg,
                label: format!("negative stall {neg:.1} deg"),
                style: THRESHOLD_2,
            },
        ];
        let kind = match s.polar {
            crate::aero::polar::Polar::Table(_) => "tabulated polar",
            crate::aero::polar::Polar::Parametric(_) => "parametric polar",
        };
        let full = Panel {
            title: "full circle".into(),
            x_label: "angle of attack alpha (deg)".into(),
            y_label: "coefficient (-)".into(),
            series: series.clone(),
            vlines: vlines.clone(),
            x_range: Some((-180.0, 180.0)),
            x_tick_step: Some(30.0),
            ..Panel::default()
        };
        // Close-up: 20 deg beyond each stall angle, on 5-deg boundaries.
        let lo = (((neg.min(pos) - 20.0) / 5.0).floor() * 5.0).max(-180.0);
        let hi = (((pos.max(neg) + 20.0) / 5.0).ceil() * 5.0).min(180.0);
        let close = Panel {
            title: "around stall".into(),
            x_range: Some((lo, hi)),
            x_tick_step: Some(if hi - lo > 80.0 { 10.0 } else { 5.0 }),
            series: series
                .iter()
                .map(|q| {
                    let keep: Vec<usize> = (0..q.x.len())
                        .filter(|&i| q.x[i] >= lo && q.x[i] <= hi)
                        .collect();
                    Series {
                        x: keep.iter().map(|&i| q.x[i]).collect(),
                        y: keep.iter().map(|&i| q.y[i]).collect(),
                        ..q.clone()
                    }
                })
                .collect(),
            ..full.clone()
        };
        let stem = dir.join(format!("polar_{}", file_part(&s.name)));
        let title = format!("{}: '{}' {kind}", v.name, s.name);
        out.extend(chart::render(&stem, &title, &[full, close], 1)?);
    }
    Ok(out)
}

/// The four sweep figures (`trim_curves`, `surface_alpha`, `margins`, `eigenvalues`, each
/// PNG and SVG) in `dir`. Returns every file written.
pub fn sweep(dir: &Path, sc: &Scenario, r: &SweepResult) -> Result<Vec<PathBuf>, WriteError> {
    let mut out = Vec::new();
    let head = format!("{} ({})", sc.file.name, sc.vehicle.name);
    let ctx = Ctx::new(&r.points);
    out.extend(chart::render(
        &dir.join("trim_curves"),
        &format!("{head}: trim along the speed sweep"),
        &trim_panels(&ctx),
        2,
    )?);
    let alpha = alpha_panels(&ctx, r);
    let cols = if alpha.len() > 1 { 2 } else { 1 };
    out.extend(chart::render(
        &dir.join("surface_alpha"),
        &format!("{head}: surface angle of attack"),
        &alpha,
        cols,
    )?);
    out.extend(chart::render(
        &dir.join("margins"),
        &format!("{head}: margins"),
        &margin_panels(&ctx, sc, r),
        2,
    )?);
    let (points, overlay) = eigen_points(&ctx, sc);
    out.extend(chart::render_scatter(
        &dir.join("eigenvalues"),
        &format!("{head}: eigenvalues of the linear models"),
        "real part (1/s)",
        "imaginary part (rad/s)",
        &points,
        "airspeed (m/s)",
        &overlay,
    )?);
    Ok(out)
}

/// Shared data of the sweep figures.
struct Ctx<'a> {
    points: &'a [PointReport],
    speeds: Vec<f64>,
    /// Typical spacing of the speeds (m/s), to draw a band of points as the speed interval
    /// they stand for.
    step: f64,
    x_range: Option<(f64, f64)>,
}

const SPEED_LABEL: &str = "airspeed (m/s)";

impl<'a> Ctx<'a> {
    fn new(points: &'a [PointReport]) -> Ctx<'a> {
        let speeds: Vec<f64> = points.iter().map(|p| p.speed_mps).collect();
        let mut d: Vec<f64> = speeds
            .windows(2)
            .map(|w| (w[1] - w[0]).abs())
            .filter(|d| *d > 0.0 && d.is_finite())
            .collect();
        d.sort_by(f64::total_cmp);
        let step = d.get(d.len() / 2).copied().unwrap_or(0.0);
        let lo = speeds.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = speeds.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let x_range = (lo.is_finite() && hi > lo).then_some((lo, hi));
        Ctx {
            points,
            speeds,
            step,
            x_range,
        }
    }

    /// One value per point, NaN where absent.
    fn col(&self, f: impl Fn(&PointReport) -> Option<f64>) -> Vec<f64> {
        self.points
            .iter()
            .map(|p| f(p).unwrap_or(f64::NAN))
            .collect()
    }

    fn series(
        &self,
        label: String,
        style: usize,
        f: impl Fn(&PointReport) -> Option<f64>,
    ) -> Series {
        Series {
            label,
            x: self.speeds.clone(),
            y: self.col(f),
            style,
        }
    }

    fn panel(&self, title: &str, y_label: &str) -> Panel {
        Panel {
            title: title.into(),
            x_label: SPEED_LABEL.into(),
            y_label: y_label.into(),
            x_range: self.x_range,
            ..Panel::default()
        }
    }

    /// Names of actuators of `kind`, in order of first appearance.
    fn actuator_names(&self, kind: &str) -> Vec<String> {
        first_seen(self.points.iter().flat_map(|p| {
            p.actuators
                .iter()
                .filter(move |a| a.kind == kind)
                .map(|a| a.name.as_str())
        }))
    }

    /// Names of surfaces, in order of first appearance.
    fn surface_names(&self) -> Vec<String> {
        first_seen(
            self.points
                .iter()
                .flat_map(|p| p.surfaces.iter().map(|s| s.name.as_str())),
        )
    }

    /// Names of rotor groups, in order of first appearance.
    fn rotor_names(&self) -> Vec<String> {
        first_seen(
            self.points
                .iter()
                .flat_map(|p| p.rotors.iter().map(|g| g.name.as_str())),
        )
    }

    /// A band of sweep points as shaded speed interval: half a step beyond each end point,
    /// inside the sweep.
    fn shade(&self, b: &Band, label: &str) -> Shade {
        let h = 0.5 * self.step;
        let (mut from, mut to) = (b.from_mps - h, b.to_mps + h);
        if let Some((lo, hi)) = self.x_range {
            from = from.max(lo);
            to = to.min(hi);
        }
        Shade {
            from,
            to,
            label: label.into(),
        }
    }
}

/// Limits of an actuator, from the first point that reports it.
fn limits(ctx: &Ctx, kind: &str, name: &str) -> Option<(f64, f64)> {
    ctx.points
        .iter()
        .flat_map(|p| p.actuators.iter())
        .find(|a| a.kind == kind && a.name == name)
        .map(|a| (a.min, a.max))
}

fn actuator_value(p: &PointReport, kind: &str, name: &str) -> Option<f64> {
    p.actuators
        .iter()
        .find(|a| a.kind == kind && a.name == name)
        .map(|a| a.value)
}

fn limit_lines(ctx: &Ctx, kind: &str, names: &[String]) -> Vec<HLine> {
    let mut out = Vec::new();
    for (k, n) in names.iter().enumerate() {
        if let Some((lo, hi)) = limits(ctx, kind, n) {
            let style = partner_style(data_style(k));
            out.push(HLine {
                y: lo,
                label: format!("'{n}' travel {lo:.0} to {hi:.0} deg"),
                style,
            });
            out.push(HLine {
                y: hi,
                label: String::new(),
                style,
            });
        }
    }
    out
}

fn trim_panels(ctx: &Ctx) -> Vec<Panel> {
    let mut panels = Vec::new();
    let mut pitch = ctx.panel("pitch attitude and angle of attack", "angle (deg)");
    pitch.series = vec![
        ctx.series("pitch attitude theta".into(), data_style(0), |p| {
            p.pitch_deg
        }),
        ctx.series("angle of attack at the CG".into(), data_style(1), |p| {
            p.alpha_deg
        }),
    ];
    panels.push(pitch);

    let tilts = ctx.actuator_names("tilt");
    if !tilts.is_empty() {
        let mut tilt = ctx.panel("tilt (0 = cruise, 90 = hover)", "tilt angle (deg)");
        tilt.series = tilts
            .iter()
            .enumerate()
            .map(|(k, n)| {
                ctx.series(format!("'{n}'"), data_style(k), |p| {
                    actuator_value(p, "tilt", n)
                })
            })
            .collect();
        tilt.hlines = limit_lines(ctx, "tilt", &tilts);
        panels.push(tilt);
    }

    let rotors = ctx.actuator_names("thrust");
    if !rotors.is_empty() {
        let mut thrust = ctx.panel("thrust per rotor group", "thrust of the group (N)");
        for (k, n) in rotors.iter().enumerate() {
            thrust
                .series
                .push(ctx.series(format!("'{n}' thrust"), data_style(k), |p| {
                    actuator_value(p, "thrust", n)
                }));
            thrust.series.push(ctx.series(
                format!("'{n}' available"),
                partner_style(data_style(k)),
                |p| {
                    p.actuators
                        .iter()
                        .find(|a| a.kind == "thrust" && a.name == *n)
                        .map(|a| a.max)
                },
            ));
        }
        panels.push(thrust);
    }

    let elevators = ctx.actuator_names("elevator");
    if !elevators.is_empty() {
        let mut elev = ctx.panel("elevator (trailing edge down +)", "deflection (deg)");
        elev.series = elevators
            .iter()
            .enumerate()
            .map(|(k, n)| {
                ctx.series(format!("'{n}'"), data_style(k), |p| {
                    actuator_value(p, "elevator", n)
                })
            })
            .collect();
        elev.hlines = limit_lines(ctx, "elevator", &elevators);
        panels.push(elev);
    }
    panels
}

fn alpha_panels(ctx: &Ctx, r: &SweepResult) -> Vec<Panel> {
    let mut panels = Vec::new();
    for name in ctx.surface_names() {
        let find = |p: &PointReport| p.surfaces.iter().find(|s| s.name == name).cloned();
        let mut panel = ctx.panel(&format!("'{name}'"), "angle of attack (deg)");
        // The clean part (outside every wake) and the most loaded part inside a rotor wake:
        // in hover and slow flight they differ by tens of degrees, which is the point of
        // the slipstream.
        panel.series = vec![
            ctx.series("clean part (no wake)".into(), data_style(0), |p| {
                find(p).map(|s| s.alpha_geometric_deg)
            }),
        ];
        if ctx
            .points
            .iter()
            .any(|p| find(p).is_some_and(|s| s.slipstream_alpha_deg.is_some()))
        {
            panel.series.push(
                ctx.series("part in the slipstream".into(), data_style(1), |p| {
                    find(p).and_then(|s| s.slipstream_alpha_deg)
                }),
            );
        }
        // Stall angles: reference lines when constant over the sweep, else curves.
        let pos: Vec<f64> = ctx
            .points
            .iter()
            .filter_map(|p| find(p).map(|s| s.stall_pos_deg))
            .collect();
        let neg: Vec<f64> = ctx
            .points
            .iter()
            .filter_map(|p| find(p).map(|s| s.stall_neg_deg))
            .collect();
        let constant = |v: &[f64]| v.windows(2).all(|w| (w[1] - w[0]).abs() < 1e-9);
        if constant(&pos) && constant(&neg) && !pos.is_empty() && !neg.is_empty() {
            panel.hlines = vec![
                HLine {
                    y: pos[0],
                    label: format!("positive stall {:.1} deg", pos[0]),
                    style: THRESHOLD,
                },
                HLine {
                    y: neg[0],
                    label: format!("negative stall {:.1} deg", neg[0]),
                    style: THRESHOLD_2,
                },
            ];
        } else {
            panel
                .series
                .push(ctx.series("positive stall angle".into(), THRESHOLD, |p| {
                    find(p).map(|s| s.stall_pos_deg)
                }));
            panel
                .series
                .push(ctx.series("negative stall angle".into(), THRESHOLD_2, |p| {
                    find(p).map(|s| s.stall_neg_deg)
                }));
        }
        if let Some(e) = r.stall_exposure.iter().find(|e| e.surface == name) {
            panel.shades = e.stalled.iter().map(|b| ctx.shade(b, "stalled")).collect();
        }
        panels.push(panel);
    }
    panels
}

fn margin_panels(ctx: &Ctx, sc: &Scenario, r: &SweepResult) -> Vec<Panel> {
    let th = &sc.file.thresholds;
    let shades: Vec<Shade> = r
        .bands
        .iter()
        .map(|b| ctx.shade(b, "unsafe band"))
        .collect();
    let margin = |p: &PointReport| p.margins.clone();
    let mut panels = Vec::new();

    let mut stall = ctx.panel("stall margin", "stall margin (deg)");
    // A surface whose stall alone does not make a point unsafe (no immersed wing part, no
    // loaded tail part, no part carrying the stalled-load-share threshold) is shown apart,
    // with the same colour.
    for (k, n) in ctx.surface_names().iter().enumerate() {
        let margin_if = |loaded: bool| {
            move |p: &PointReport| {
                p.surfaces
                    .iter()
                    .find(|s| s.name == *n && s.in_verdict == loaded)
                    .map(|s| s.stall_margin_deg)
            }
        };
        stall
            .series
            .push(ctx.series(format!("'{n}'"), data_style(k), margin_if(true)));
        let unloaded = ctx.series(
            format!("'{n}' advisory only"),
            partner_style(data_style(k)),
            margin_if(false),
        );
        if unloaded.y.iter().any(|v| v.is_finite()) {
            stall.series.push(unloaded);
        }
    }
    stall.hlines = vec![HLine {
        y: th.stall_margin_deg,
        label: format!("threshold {:.1} deg", th.stall_margin_deg),
        style: THRESHOLD,
    }];
    panels.push(stall);

    let mut rotor = ctx.panel("thrust and power margin", "margin (% of available)");
    for (k, n) in ctx.rotor_names().iter().enumerate() {
        let g = |p: &PointReport| p.rotors.iter().find(|g| g.name == *n).cloned();
        rotor
            .series
            .push(ctx.series(format!("'{n}' thrust"), data_style(k), |p| {
                g(p).map(|g| 100.0 * g.thrust_margin)
            }));
        rotor.series.push(
            ctx.series(format!("'{n}' power"), partner_style(data_style(k)), |p| {
                g(p).map(|g| 100.0 * g.power_margin)
            }),
        );
    }
    rotor.hlines = vec![
        HLine {
            y: 100.0 * th.thrust_margin,
            label: format!("thrust threshold {:.0} %", 100.0 * th.thrust_margin),
            style: THRESHOLD,
        },
        HLine {
            y: 100.0 * th.power_margin,
            label: format!("power threshold {:.0} %", 100.0 * th.power_margin),
            style: THRESHOLD_2,
        },
    ];
    panels.push(rotor);

    let mut pitch = ctx.panel(
        "pitch authority",
        "pitch acceleration available (rad/s\u{b2})",
    );
    pitch.series = vec![
        ctx.series("nose-up".into(), data_style(0), |p| {
            margin(p).map(|m| m.pitch_accel_up_rad_s2)
        }),
        ctx.series("nose-down".into(), data_style(1), |p| {
            margin(p).map(|m| m.pitch_accel_down_rad_s2)
        }),
    ];
    pitch.hlines = vec![HLine {
        y: th.pitch_accel_rad_s2,
        label: format!("threshold {:.2} rad/s\u{b2}", th.pitch_accel_rad_s2),
        style: THRESHOLD,
    }];
    panels.push(pitch);

    let mut sm = ctx.panel(
        "static margin (wingborne points only)",
        "static margin (% chord)",
    );
    sm.series = vec![ctx.series("static margin".into(), data_style(0), |p| {
        margin(p).and_then(|m| m.static_margin_pct)
    })];
    sm.hlines = vec![HLine {
        y: th.static_margin_pct,
        label: format!("threshold {:.1} % chord", th.static_margin_pct),
        style: THRESHOLD,
    }];
    panels.push(sm);

    let mut eig = ctx.panel("largest eigenvalue real part", "real part (1/s)");
    eig.series = vec![ctx.series("largest real part".into(), data_style(0), |p| {
        margin(p).map(|m| m.max_real_per_s)
    })];
    eig.hlines = vec![HLine {
        y: 0.0,
        label: "neutral stability".into(),
        style: NEUTRAL,
    }];
    if th.time_to_double_s > 0.0 {
        let growth = std::f64::consts::LN_2 / th.time_to_double_s;
        eig.hlines.push(HLine {
            y: growth,
            label: format!("doubles in {:.1} s (threshold)", th.time_to_double_s),
            style: THRESHOLD,
        });
    }
    panels.push(eig);

    let elevator = ctx.col(|p| margin(p).and_then(|m| m.elevator_deg));
    if elevator.iter().any(|v| v.is_finite()) {
        let mut el = ctx.panel("elevator travel left", "travel left (deg)");
        el.series = vec![Series {
            label: "smallest travel left".into(),
            x: ctx.speeds.clone(),
            y: elevator,
            style: data_style(0),
        }];
        el.hlines = vec![HLine {
            y: th.elevator_margin_deg,
            label: format!("threshold {:.1} deg", th.elevator_margin_deg),
            style: THRESHOLD,
        }];
        panels.push(el);
    }
    let (gm, pm) = (ctx.col(loop_gain_margin_db), ctx.col(loop_phase_margin_deg));
    if gm.iter().chain(&pm).any(|v| v.is_finite()) {
        let mut g = ctx.panel(
            "loop gain margin (smallest over actuators)",
            "gain margin (dB)",
        );
        g.series = vec![Series {
            label: "feedback law broken at each actuator".into(),
            x: ctx.speeds.clone(),
            y: gm,
            style: data_style(0),
        }];
        g.hlines = vec![HLine {
            y: th.gain_margin_db,
            label: format!("threshold {:.1} dB", th.gain_margin_db),
            style: THRESHOLD,
        }];
        panels.push(g);
        let mut ph = ctx.panel(
            "loop phase margin (smallest over actuators)",
            "phase margin (deg)",
        );
        ph.series = vec![Series {
            label: "feedback law broken at each actuator".into(),
            x: ctx.speeds.clone(),
            y: pm,
            style: data_style(0),
        }];
        ph.hlines = vec![HLine {
            y: th.phase_margin_deg,
            label: format!("threshold {:.0} deg", th.phase_margin_deg),
            style: THRESHOLD,
        }];
        panels.push(ph);
    }
    for p in &mut panels {
        p.shades = shades.clone();
    }
    panels
}

/// Smallest gain margin over the loops of a point (dB), if any loop has one.
pub fn loop_gain_margin_db(p: &PointReport) -> Option<f64> {
    p.loop_margins
        .iter()
        .filter(|m| m.in_loop)
        .filter_map(|m| m.gain_margin_db)
        .reduce(f64::min)
}

/// Smallest phase margin over the loops of a point (deg), if any loop has one.
pub fn loop_phase_margin_deg(p: &PointReport) -> Option<f64> {
    p.loop_margins
        .iter()
        .filter(|m| m.in_loop)
        .filter_map(|m| m.phase_margin_deg)
        .reduce(f64::min)
}

fn eigen_points(ctx: &Ctx, sc: &Scenario) -> (Vec<(f64, f64, f64)>, Overlay) {
    let mut pts = Vec::new();
    for p in ctx.points {
        for m in &p.modes {
            pts.push((m.real_per_s, m.imag_rad_s, p.speed_mps));
            if m.imag_rad_s > 0.0 {
                pts.push((m.real_per_s, -m.imag_rad_s, p.speed_mps));
            }
        }
    }
    let mut overlay = Overlay {
        vlines: vec![VLine {
            x: 0.0,
            label: "neutral stability (real part 0)".into(),
            style: NEUTRAL,
        }],
        ..Overlay::default()
    };
    let t2 = sc.file.thresholds.time_to_double_s;
    if t2 > 0.0 {
        overlay.vlines.push(VLine {
            x: std::f64::consts::LN_2 / t2,
            label: format!("doubles in {t2:.1} s (threshold)"),
            style: THRESHOLD,
        });
    }
    (pts, overlay)
}

/// Distinct names in order of first appearance.
fn first_seen<'n>(names: impl Iterator<Item = &'n str>) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for n in names {
        if !out.iter().any(|o| o == n) {
            out.push(n.to_string());
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linear::Mode;
    use crate::sweep::{
        ActuatorValue, MarginValues, Residual, RotorValue, StallExposure, SurfaceValue,
    };

    fn demo(rel: &str) -> PathBuf {
        Path::new(env!("CARGO_MANIFEST_DIR")).join(rel)
    }

    fn temp_dir(tag: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("hoverline-plots-{tag}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&d);
        d
    }

    /// A hand-made sweep point; `trimmed = false` leaves every value absent, as the sweep
    /// does for an untrimmable point.
    fn point(speed: f64, trimmed: bool) -> PointReport {
        let mut p = PointReport {
            speed_mps: speed,
            climb_deg: 0.0,
            altitude_m: 0.0,
            density_kg_m3: 1.225,
            mass_kg: 5.0,
            weight_n: 49.0,
            trimmed,
            reasons: Vec::new(),
            reason_kinds: Vec::new(),
            advisories: Vec::new(),
            active_limits: Vec::new(),
            pitch_deg: None,
            alpha_deg: None,
            path_accel_mps2: None,
            residual: Residual {
                x_n: 0.0,
                z_n: 0.0,
                m_nm: 0.0,
            },
            iterations: 3,
            actuators: Vec::new(),
            rotors: Vec::new(),
            surfaces: Vec::new(),
            modes: Vec::new(),
            margins: None,
            state_names: Vec::new(),
            input_names: Vec::new(),
            open_loop_demands: Vec::new(),
            loop_margins: Vec::new(),
            a_matrix: None,
            b_matrix: None,
        };
        if !trimmed {
            p.reasons.push("untrimmable: thrust cap".into());
            return p;
        }
        let act =
            |name: &str, kind: &str, value: f64, unit: &str, min: f64, max: f64| ActuatorValue {
                name: name.into(),
                kind: kind.into(),
                value,
                unit: unit.into(),
                min,
                max,
            };
        p.pitch_deg = Some(90.0 - 4.0 * speed);
        p.alpha_deg = Some(90.0 - 4.0 * speed);
        p.actuators = vec![
            act("front", "thrust", 40.0 - speed, "N", 0.0, 60.0),
            act("elevons", "elevator", -speed / 4.0, "deg", -30.0, 30.0),
            act("wing-tilt", "tilt", 90.0 - 4.0 * speed, "deg", 0.0, 95.0),
        ];
        p.rotors = vec![RotorValue {
            name: "front".into(),
            count: 2,
            thrust_n: 40.0 - speed,
            axis_deg: 90.0,
            power_w: 500.0,
            thrust_margin: 0.3,
            power_margin: 0.2,
            limited_by: "cap".into(),
            induced_velocity_mps: 8.0,
        }];
        p.surfaces = vec![SurfaceValue {
            name: "wing".into(),
            alpha_deg: 20.0 - speed,
            alpha_geometric_deg: 20.0 - speed,
            critical_alpha_deg: 22.0 - speed,
            critical_part: "clean".into(),
            stall_angle_deg: 14.0,
            stall_margin_deg: speed - 8.0,
            stall_pos_deg: 14.0,
            stall_neg_deg: -12.0,
            lift_n: 10.0,
            drag_n: 1.0,
            slipstream_q_ratio: None,
            slipstream_alpha_deg: None,
            stalled_share: 0.0,
            in_verdict: speed > 0.5,
            verdict: crate::margins::StallVerdict::Attached,
        }];
        p.modes = vec![Mode {
            name: "short-period".into(),
            real_per_s: -1.0 - 0.1 * speed,
            imag_rad_s: 2.0,
            natural_freq_rad_s: 2.3,
            damping_ratio: 0.4,
            period_s: Some(3.1),
            time_to_double_s: None,
            time_to_half_s: Some(0.6),
            shape: [1.0, 0.5, 0.2, 0.1],
            level_8785c: None,
        }];
        p.margins = Some(MarginValues {
            surfaces: Vec::new(),
            rotors: Vec::new(),
            stall_deg: speed - 8.0,
            stall_surface: "wing".into(),
            stalled_load_share: 0.0,
            stall_verdict: crate::margins::StallVerdict::Attached,
            thrust: 0.3,
            power: 0.2,
            pitch_accel_up_rad_s2: 3.0,
            pitch_accel_down_rad_s2: 2.0,
            elevator_deg: Some(20.0),
            static_margin_pct: (speed > 8.0).then_some(6.0),
            lift_share: speed / 20.0,
            max_real_per_s: -1.0 - 0.1 * speed,
            time_to_double_s: None,
        });
        p
    }

    fn synthetic() -> SweepResult {
        let points: Vec<PointReport> = (0..=20).map(|k| point(k as f64, k != 5)).collect();
        let band = |a: f64, b: f64, r: &str| Band {
            from_mps: a,
            to_mps: b,
            reasons: vec![r.into()],
        };
        SweepResult {
            points,
            bands: vec![band(0.0, 7.0, "stall of 'wing'")],
            stall_exposure: vec![StallExposure {
                surface: "wing".into(),
                stalled: vec![band(0.0, 7.0, "stalled (clean)")],
                near_stall: vec![band(0.0, 10.0, "margin below 3.0 deg (clean)")],
            }],
        }
    }

    #[test]
    fn untrimmed_points_are_gaps_not_zeros() {
        let r = synthetic();
        let ctx = Ctx::new(&r.points);
        let pitch = ctx.series("pitch".into(), 0, |p| p.pitch_deg);
        assert!(pitch.y[5].is_nan());
        assert_eq!(pitch.y[4], 90.0 - 16.0);
        let panels = trim_panels(&ctx);
        let thrust = panels
            .iter()
            .find(|p| p.title.starts_with("thrust"))
            .unwrap();
        assert!(thrust.series.iter().all(|s| s.y[5].is_nan()));
        // One-metre-per-second sweep: a band of points covers half a step beyond its ends.
        assert_eq!(ctx.step, 1.0);
        let sh = ctx.shade(&r.bands[0], "unsafe band");
        assert_eq!((sh.from, sh.to), (0.0, 7.5));
    }

    #[test]
    fn sweep_writes_four_figures_with_labels_and_thresholds() {
        let sc = crate::scenario::load_scenario(&demo("scenarios/tail-sitter-transition.toml"))
            .expect("demo scenario loads");
        let dir = temp_dir("sweep");
        let files = sweep(&dir, &sc, &synthetic()).expect("sweep plots render");
        assert_eq!(files.len(), 8);
        for stem in ["trim_curves", "surface_alpha", "margins", "eigenvalues"] {
            for ext in ["png", "svg"] {
                let f = dir.join(format!("{stem}.{ext}"));
                assert!(files.contains(&f), "{} not returned", f.display());
                assert!(f.exists());
            }
        }
        let eig = std::fs::read_to_string(dir.join("eigenvalues.svg")).unwrap();
        assert!(eig.contains("real part (1/s)"));
        assert!(eig.contains("imaginary part (rad/s)"));
        let margins = std::fs::read_to_string(dir.join("margins.svg")).unwrap();
        assert!(margins.contains("advisory only"));
        let th = &sc.file.thresholds;
        assert!(margins.contains(&format!("threshold {:.1} deg", th.stall_margin_deg)));
        assert!(margins.contains("unsafe band"));
        let trim = std::fs::read_to_string(dir.join("trim_curves.svg")).unwrap();
        // plotters escapes the apostrophe in SVG text; a rotor group's thrust and thrust
        // available share one legend heading.
        assert!(trim.contains("&apos;front&apos;:"));
        assert!(trim.contains("\nthrust\n"));
        assert!(trim.contains("available"));
        assert!(trim.contains("tilt angle (deg)"));
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn polars_write_one_pair_per_surface_with_30_degree_ticks() {
        let v = crate::vehicle::load_vehicle(&demo("vehicles/tilt-wing-courier.toml"))
            .expect("demo vehicle loads");
        let dir = temp_dir("polars");
        let files = polars(&v, &dir).expect("polar plots render");
        assert_eq!(files.len(), 2 * v.surfaces.len());
        let s = &v.surfaces[0];
        let svg =
            std::fs::read_to_string(dir.join(format!("polar_{}.svg", file_part(&s.name)))).unwrap();
        assert!(svg.contains("angle of attack alpha (deg)"));
        for tick in ["-150", "-120", "120", "150"] {
            assert!(svg.contains(&format!("\n{tick}\n")), "tick {tick} missing");
        }
        let pos = s.polar.stall_angles_rad().0.to_degrees();
        assert!(svg.contains(&format!("positive stall {pos:.1} deg")));
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn file_names_are_made_safe() {
        assert_eq!(file_part("main wing/left"), "main_wing_left");
        assert_eq!(file_part("tail-2"), "tail-2");
        assert_eq!(file_part(""), "unnamed");
    }
}
