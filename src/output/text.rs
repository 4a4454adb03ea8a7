//! Human-readable summaries for the terminal. Every function returns a `String`; the binary
//! prints it.

use std::fmt::Write;

use crate::sweep::{PointReport, SweepResult};
use crate::vehicle::summary::Summary;

/// Widest line a terminal summary prints (columns); longer lines are wrapped by [`wrap`].
pub const LINE_WIDTH: usize = 100;

fn opt(v: Option<f64>, digits: usize) -> String {
    match v {
        Some(x) if x.is_finite() => num(x, digits),
        _ => "-".into(),
    }
}

/// `x` with `digits` decimals, never `-0.00`: a value that rounds to zero prints unsigned.
pub fn num(x: f64, digits: usize) -> String {
    let s = format!("{x:.digits$}");
    match s.strip_prefix('-') {
        Some(rest) if rest.bytes().all(|b| b == b'0' || b == b'.') => rest.to_string(),
        _ => s,
    }
}

/// `x` with an explicit sign and `digits` decimals; a value that rounds to zero prints
/// without a sign (`0.000`, never `-0.000` or `+0.000`).
pub fn signed(x: f64, digits: usize) -> String {
    let s = num(x, digits);
    if s.starts_with('-') || s.bytes().all(|b| b == b'0' || b == b'.') {
        s
    } else {
        format!("+{s}")
    }
}

/// A range in words: `18.0` when both ends print the same, else `13.0 to 14.0`.
pub fn span(from: f64, to: f64, digits: usize) -> String {
    let (a, b) = (num(from, digits), num(to, digits));
    if a == b {
        a
    } else {
        format!("{a} to {b}")
    }
}

/// A speed range in words: `18.0 m/s` when both ends print the same, else `13.0 to 14.0 m/s`.
pub fn speed_span(from_mps: f64, to_mps: f64, digits: usize) -> String {
    format!("{} m/s", span(from_mps, to_mps, digits))
}

/// Several speed ranges, or `none` (see [`speed_span`]).
pub fn speed_spans(spans: impl IntoIterator<Item = (f64, f64)>, digits: usize) -> String {
    let v: Vec<String> = spans
        .into_iter()
        .map(|(a, b)| speed_span(a, b, digits))
        .collect();
    if v.is_empty() {
        "none".into()
    } else {
        v.join(", ")
    }
}

/// Wrap every line of `text` longer than `width` columns at spaces. A continuation line
/// starts under the last column the line opened before the break (the text after its last run
/// of two or more spaces, when that lies in the left half), else four columns in from the
/// line's own indent. A single word longer than the width (a path) is left whole.
pub fn wrap(text: &str, width: usize) -> String {
    let mut o = String::with_capacity(text.len() + text.len() / 16);
    for (n, line) in text.split('\n').enumerate() {
        if n > 0 {
            o.push('\n');
        }
        wrap_line(line, width, &mut o);
    }
    o
}

fn wrap_line(line: &str, width: usize, o: &mut String) {
    let chars: Vec<char> = line.trim_end().chars().collect();
    if chars.len() <= width {
        o.push_str(line);
        return;
    }
    let indent = chars.iter().take_while(|c| **c == ' ').count();
    // Where the last column starts: after the last run of >= 2 spaces before the width.
    let mut hang = indent + 4;
    let mut k = indent;
    while k + 1 < chars.len().min(width) {
        if chars[k] == ' ' && chars[k + 1] == ' ' {
            let mut e = k;
            while e < chars.len() && chars[e] == ' ' {
                e += 1;
            }
            if e < width / 2 {
                hang = e;
            }
            k = e;
        } else {
            k += 1;
        }
    }
    let mut start = 0;
    let mut first = true;
    loop {
        let lead = if first { 0 } else { hang };
        let room = width.saturating_sub(lead).max(1);
        let rest = &chars[start..];
        if rest.len() <= room {
            push_piece(o, lead, rest);
            return;
        }
        // The last space inside the room (not inside the indent), else the first after it.
        let floor = if first { indent + 1 } else { 1 };
        let cut = (floor..=room.min(rest.len() - 1))
            .rev()
            .find(|&i| rest[i] == ' ')
            .or_else(|| (room..rest.len()).find(|&i| rest[i] == ' '));
        let Some(cut) = cut else {
            push_piece(o, lead, rest);
            return;
        };
        let mut end = cut;
        while end > 0 && rest[end - 1] == ' ' {
            end -= 1;
        }
        push_piece(o, lead, &rest[..end]);
        o.push('\n');
        let mut next = cut;
        while next < rest.len() && rest[next] == ' ' {
            next += 1;
        }
        start += next;
        first = false;
        if start >= chars.len() {
            return;
        }
    }
}

fn push_piece(o: &mut String, lead: usize, piece: &[char]) {
    o.extend(std::iter::repeat_n(' ', lead));
    o.extend(piece.iter());
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
    wrap(&o, LINE_WIDTH)
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
        return wrap(&o, LINE_WIDTH);
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
            "  {:<10} {:<16} {:>9.2} {:<3} (limits {:.1} to {:.1})",
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
    wrap(&o, LINE_WIDTH)
}

/// The compact sweep table (one line per speed, at most [`LINE_WIDTH`] columns), the unsafe
/// bands with their reasons, the untrimmable speeds with theirs, and the stall exposure.
pub fn sweep(name: &str, r: &SweepResult) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "sweep: {name}");
    let _ = writeln!(
        o,
        "  {:>6}  {:<7} {:>6} {:>6} {:>6} {:>6} {:>6} {:>7} {:>7} {:>7}  critical surface",
        "speed",
        "verdict",
        "pitch",
        "alpha",
        "stall",
        "thrust",
        "power",
        "nose-up",
        "nose-dn",
        "growth",
    );
    let _ = writeln!(
        o,
        "  {:>6}  {:<7} {:>6} {:>6} {:>6} {:>6} {:>6} {:>7} {:>7} {:>7}",
        "m/s", "", "deg", "deg", "deg", "% left", "% left", "rad/s^2", "rad/s^2", "1/s"
    );
    let mut untrimmed = Vec::new();
    for p in &r.points {
        match &p.margins {
            Some(m) => {
                let _ = writeln!(
                    o,
                    "  {:>6.1}  {:<7} {:>6} {:>6} {:>6} {:>6.0} {:>6.0} {:>7} {:>7} {:>7}  {}",
                    p.speed_mps,
                    if p.reasons.is_empty() { "ok" } else { "UNSAFE" },
                    opt(p.pitch_deg, 1),
                    opt(p.alpha_deg, 1),
                    opt(m.stall_deg.is_finite().then_some(m.stall_deg), 1),
                    100.0 * m.thrust,
                    100.0 * m.power,
                    num(m.pitch_accel_up_rad_s2, 2),
                    num(m.pitch_accel_down_rad_s2, 2),
                    num(m.max_real_per_s, 3),
                    m.stall_surface,
                );
            }
            None => {
                let _ = writeln!(
                    o,
                    "  {:>6.1}  {:<7} (reasons below)",
                    p.speed_mps, "NO TRIM"
                );
                untrimmed.push(p);
            }
        }
    }
    let _ = writeln!(
        o,
        "  stall: smallest stall margin; thrust, power: margin left; nose-up, nose-dn: pitch\n  \
         acceleration available; growth: largest real part of the open-loop roots (> 0 grows)"
    );
    let _ = writeln!(o, "\nunsafe bands:");
    if r.bands.is_empty() {
        let _ = writeln!(o, "  none");
    }
    for b in &r.bands {
        let _ = writeln!(
            o,
            "  {}: {}",
            speed_span(b.from_mps, b.to_mps, 1),
            b.reasons.join(", ")
        );
    }
    if !untrimmed.is_empty() {
        let _ = writeln!(o, "\nuntrimmable:");
        for p in untrimmed {
            let _ = writeln!(o, "  {:.1} m/s: {}", p.speed_mps, p.reasons.join("; "));
        }
    }
    let _ = writeln!(o, "\nstall exposure:");
    for s in &r.stall_exposure {
        let spans = |bands: &[crate::sweep::Band]| {
            if bands.is_empty() {
                "never".to_string()
            } else {
                speed_spans(bands.iter().map(|b| (b.from_mps, b.to_mps)), 1)
            }
        };
        let _ = writeln!(
            o,
            "  {:<16} stalled: {}; near stall: {}",
            s.surface,
            spans(&s.stalled),
            spans(&s.near_stall)
        );
    }
    let _ = writeln!(o, "\ncaution: {}", super::CAUTION);
    wrap(&o, LINE_WIDTH)
}
