//! Human-readable summaries for the terminal. Every function returns a `String`; the binary
//! prints it.

use std::fmt::Write;

use crate::sweep::{PointReport, SweepResult};
use crate::vehicle::summary::Summary;

fn opt(v: Option<f64>, digits: usize) -> String {
    match v {
        Some(x) if x.is_finite() => format!("{x:.digits$}"),
        _ => "-".into(),
    }
}

/// The `check` summary.
pub fn check(s: &Summary) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "vehicle: {}", s.name);
    let _ = writeln!(
        o,
        "  mass {:.2} kg, weight {:.1} N, pitch inertia {:.3} kg m^2",
        s.mass_kg, s.weight_n, s.pitch_inertia_kg_m2
    );
    let _ = writeln!(o, "  air density {:.4} kg/m^3", s.density_kg_m3);
    let _ = writeln!(
        o,
        "  hover thrust-to-weight {:.2}",
        s.hover_thrust_to_weight
    );
    let _ = writeln!(
        o,
        "  disc loading {:.1} N/m^2, ideal hover power {:.0} W",
        s.disk_loading_n_m2, s.ideal_hover_power_w
    );
    let _ = writeln!(o, "  wing loading {:.1} N/m^2", s.wing_loading_n_m2);
    let _ = writeln!(
        o,
        "  wingborne stall speed {} m/s",
        opt(s.stall_speed_mps, 1)
    );
    let _ = writeln!(
        o,
        "  static margin, cruise configuration: {} % chord{}",
        opt(s.static_margin_pct, 1),
        s.static_margin_speed_mps
            .map(|v| format!(" (at {v:.1} m/s)"))
            .unwrap_or_default()
    );
    let _ = writeln!(o, "\nsurfaces:");
    let _ = writeln!(
        o,
        "  {:<16} {:>6} {:>8} {:>6} {:>11} {:>9} {:>9} {:>7} {:>8}",
        "name",
        "role",
        "area_m2",
        "AR",
        "a_per_rad",
        "stall+deg",
        "stall-deg",
        "cl_max",
        "immersed"
    );
    for x in &s.surfaces {
        let _ = writeln!(
            o,
            "  {:<16} {:>6} {:>8.3} {:>6.2} {:>11.3} {:>9.1} {:>9.1} {:>7.2} {:>8.2}",
            x.name,
            format!("{:?}", x.role).to_lowercase(),
            x.area_m2,
            x.aspect_ratio,
            x.lift_slope_per_rad,
            x.stall_pos_deg,
            x.stall_neg_deg,
            x.cl_max,
            x.immersed_fraction
        );
    }
    let _ = writeln!(o, "\nrotor groups:");
    let _ = writeln!(
        o,
        "  {:<16} {:>5} {:>12} {:>16} {:>18}",
        "name", "count", "thrust_max_n", "hover_avail_n", "disk_load_cap_n_m2"
    );
    for r in &s.rotors {
        let _ = writeln!(
            o,
            "  {:<16} {:>5} {:>12.1} {:>16.1} {:>18.1}",
            r.name, r.count, r.thrust_max_n, r.hover_thrust_available_n, r.disk_loading_at_cap_n_m2
        );
    }
    if s.warnings.is_empty() {
        let _ = writeln!(o, "\nwarnings: none");
    } else {
        let _ = writeln!(o, "\nwarnings:");
        for w in &s.warnings {
            let _ = writeln!(o, "  ! {w}");
        }
    }
    let _ = writeln!(o, "\ncaution: {}", super::CAUTION);
    o
}

/// One trim point in full.
pub fn point(p: &PointReport) -> String {
    let mut o = String::new();
    let _ = writeln!(
        o,
        "trim at {:.2} m/s, climb {:.1} deg, altitude {:.0} m (density {:.4} kg/m^3), mass {:.2} kg",
        p.speed_mps, p.climb_deg, p.altitude_m, p.density_kg_m3, p.mass_kg
    );
    if !p.trimmed {
        let _ = writeln!(o, "  UNTRIMMABLE");
        for r in &p.reasons {
            let _ = writeln!(o, "  - {r}");
        }
        let _ = writeln!(o, "\ncaution: {}", super::CAUTION);
        return o;
    }
    let _ = writeln!(
        o,
        "  pitch {} deg, alpha {} deg, residual X {:.2e} N, Z {:.2e} N, M {:.2e} N m ({} iterations)",
        opt(p.pitch_deg, 2),
        opt(p.alpha_deg, 2),
        p.residual.x_n,
        p.residual.z_n,
        p.residual.m_nm,
        p.iterations
    );
    let _ = writeln!(o, "\ncontrols:");
    for a in &p.actuators {
        let _ = writeln!(
            o,
            "  {:<10} {:<16} {:>9.2} {:<3} (limits {:.1} .. {:.1})",
            a.kind, a.name, a.value, a.unit, a.min, a.max
        );
    }
    if !p.active_limits.is_empty() {
        let _ = writeln!(o, "  active limits: {}", p.active_limits.join("; "));
    }
    let _ = writeln!(o, "\nrotor groups:");
    let _ = writeln!(
        o,
        "  {:<16} {:>9} {:>8} {:>9} {:>8} {:>8} {:>7}",
        "name", "thrust_n", "axis_deg", "power_w", "T_marg", "P_marg", "v_i_mps"
    );
    for r in &p.rotors {
        let _ = writeln!(
            o,
            "  {:<16} {:>9.1} {:>8.1} {:>9.0} {:>7.0}% {:>7.0}% {:>7.2}",
            r.name,
            r.thrust_n,
            r.axis_deg,
            r.power_w,
            100.0 * r.thrust_margin,
            100.0 * r.power_margin,
            r.induced_velocity_mps
        );
    }
    let _ = writeln!(o, "\nsurfaces:");
    let _ = writeln!(
        o,
        "  {:<16} {:>9} {:>10} {:>10} {:>9} {:>9}  critical part",
        "name", "alpha_deg", "crit_alpha", "margin_deg", "lift_n", "drag_n"
    );
    for s in &p.surfaces {
        let _ = writeln!(
            o,
            "  {:<16} {:>9.2} {:>10.2} {:>10.2} {:>9.1} {:>9.1}  {}",
            s.name,
            s.alpha_deg,
            s.critical_alpha_deg,
            s.stall_margin_deg,
            s.lift_n,
            s.drag_n,
            s.critical_part
        );
    }
    if let Some(m) = &p.margins {
        let _ = writeln!(o, "\nmargins:");
        let stall = if m.stall_deg.is_finite() {
            format!(
                "stall margin {:.2} deg ('{}')",
                m.stall_deg, m.stall_surface
            )
        } else {
            "stall margin: no part whose stall alone is unsafe carries load".to_string()
        };
        let _ = writeln!(
            o,
            "  {stall}, stalled load share {:.1} % ({}), thrust {:.0} %, power {:.0} %",
            100.0 * m.stalled_load_share,
            match m.stall_verdict {
                crate::margins::StallVerdict::Attached => "attached",
                crate::margins::StallVerdict::Advisory => "advisory",
                crate::margins::StallVerdict::Stalled => "stalled",
            },
            100.0 * m.thrust,
            100.0 * m.power
        );
        let _ = writeln!(
            o,
            "  pitch authority nose-up {:.2} rad/s^2, nose-down {:.2} rad/s^2",
            m.pitch_accel_up_rad_s2, m.pitch_accel_down_rad_s2
        );
        let _ = writeln!(
            o,
            "  elevator travel left {} deg, static margin {} % chord, lift share {:.0} %",
            opt(m.elevator_deg, 1),
            opt(m.static_margin_pct, 1),
            100.0 * m.lift_share
        );
    }
    let _ = writeln!(o, "\nmodes:");
    let _ = writeln!(
        o,
        "  {:<28} {:>10} {:>10} {:>9} {:>8} {:>9} {:>9} {:>9}",
        "name", "real_1/s", "imag_rad/s", "wn_rad/s", "zeta", "period_s", "t_half_s", "t_dbl_s"
    );
    for m in &p.modes {
        let _ = writeln!(
            o,
            "  {:<28} {:>10.4} {:>10.4} {:>9.4} {:>8.3} {:>9} {:>9} {:>9}{}",
            m.name,
            m.real_per_s,
            m.imag_rad_s,
            m.natural_freq_rad_s,
            m.damping_ratio,
            opt(m.period_s, 2),
            opt(m.time_to_half_s, 2),
            opt(m.time_to_double_s, 2),
            m.level_8785c
                .map(|l| {
                    format!(
                        "  (MIL-F-8785C {}, indication only)",
                        crate::linear::level_label(l)
                    )
                })
                .unwrap_or_default()
        );
    }
    if !p.reasons.is_empty() {
        let _ = writeln!(o, "\nunsafe:");
        for r in &p.reasons {
            let _ = writeln!(o, "  - {r}");
        }
    }
    let _ = writeln!(o, "\ncaution: {}", super::CAUTION);
    o
}

/// The compact sweep table and the unsafe bands.
pub fn sweep(name: &str, r: &SweepResult) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "sweep: {name}");
    let _ = writeln!(
        o,
        "  {:>6} {:>4} {:>7} {:>7} {:>8} {:>8} {:>7} {:>7} {:>7} {:>8}  worst surface / reasons",
        "V_mps", "ok", "pitch", "alpha", "stall_d", "thrust%", "power%", "q+", "q-", "maxRe"
    );
    for p in &r.points {
        match &p.margins {
            Some(m) => {
                let _ = writeln!(
                    o,
                    "  {:>6.1} {:>4} {:>7} {:>7} {:>8} {:>8.0} {:>7.0} {:>7.2} {:>7.2} {:>8.3}  {}{}",
                    p.speed_mps,
                    if p.reasons.is_empty() { "yes" } else { "!" },
                    opt(p.pitch_deg, 1),
                    opt(p.alpha_deg, 1),
                    opt(m.stall_deg.is_finite().then_some(m.stall_deg), 1),
                    100.0 * m.thrust,
                    100.0 * m.power,
                    m.pitch_accel_up_rad_s2,
                    m.pitch_accel_down_rad_s2,
                    m.max_real_per_s,
                    m.stall_surface,
                    if p.reason_kinds.is_empty() { String::new() } else { format!(" | {}", p.reason_kinds.join(", ")) }
                );
            }
            None => {
                let _ = writeln!(
                    o,
                    "  {:>6.1} {:>4}  untrimmable: {}",
                    p.speed_mps,
                    "no",
                    p.reasons.join("; ")
                );
            }
        }
    }
    let _ = writeln!(o, "\nunsafe bands:");
    if r.bands.is_empty() {
        let _ = writeln!(o, "  none");
    }
    for b in &r.bands {
        let _ = writeln!(
            o,
            "  {:>5.1} .. {:>5.1} m/s: {}",
            b.from_mps,
            b.to_mps,
            b.reasons.join(", ")
        );
    }
    let _ = writeln!(o, "\nstall exposure:");
    for s in &r.stall_exposure {
        let fmt = |bands: &[crate::sweep::Band]| {
            if bands.is_empty() {
                "none".to_string()
            } else {
                bands
                    .iter()
                    .map(|b| format!("{:.1}..{:.1}", b.from_mps, b.to_mps))
                    .collect::<Vec<_>>()
                    .join(", ")
            }
        };
        let _ = writeln!(
            o,
            "  {:<16} stalled: {} m/s; near stall: {} m/s",
            s.surface,
            fmt(&s.stalled),
            fmt(&s.near_stall)
        );
    }
    let _ = writeln!(o, "\ncaution: {}", super::CAUTION);
    o
}
