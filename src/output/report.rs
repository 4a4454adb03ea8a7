//! The one-page transition report (`hoverline report`): a single self-contained `report.html`
//! that opens in any browser without network access. Plots are the SVG figures of the other
//! commands, read back and inlined; styles are inline; there are no scripts, fonts, images or
//! links to anything outside the output folder (the only links are to the CSV and JSON files
//! beside the report and to the page's own sections).
//!
//! Sections, in order, each with a stable `id` ([`SECTION_IDS`]): headline, verdict, corridor
//! with the schedule overlaid, trim curves, angle of attack per surface, margins, eigenvalues
//! and modes at selected speeds, the flight in time, the trim table, model assumptions,
//! cautions, methods. A section whose analysis could not be completed says
//! "not available: <why>" in place of its content; nothing is ever filled in.
//!
//! Everything here is string building from results computed elsewhere; [`write`] is the only
//! function that touches the file system (one atomic write of `report.html`).

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use serde::Serialize;

use super::corridor_files::describe;
use super::files::{write_atomic, WriteError};
use crate::atmosphere::Atmosphere;
use crate::corridor::Corridor;
use crate::flight::Flight;
use crate::linear::Mode;
use crate::scenario::Scenario;
use crate::schedule::BuiltSchedule;
use crate::sweep::{Band, PointReport, SweepResult};

/// File name of the report inside the output folder.
pub const REPORT_FILE: &str = "report.html";

/// The `id` of every section, in page order.
pub const SECTION_IDS: [&str; 12] = [
    "headline",
    "verdict",
    "corridor",
    "trim-curves",
    "surface-alpha",
    "margins",
    "modes",
    "flight",
    "trim-table",
    "assumptions",
    "cautions",
    "methods",
];

/// An SVG figure ready to inline (see [`inline_svg`]), or why it is not available.
pub type Figure = Result<String, String>;

/// The figures of the report, each read back from the SVG file another command wrote.
#[derive(Debug, Clone)]
pub struct Figures {
    /// Corridor map with the schedules overlaid (`schedule-map.svg`, else `corridor.svg`).
    pub corridor: Figure,
    /// Smallest margin along the built and the scenario's schedule (`schedule-margins.svg`).
    pub schedule_margins: Figure,
    /// Trim curves against airspeed (`trim_curves.svg`).
    pub trim_curves: Figure,
    /// Angle of attack of every surface with its stall angles (`surface_alpha.svg`).
    pub surface_alpha: Figure,
    /// Margins with thresholds and unsafe bands (`margins.svg`).
    pub margins: Figure,
    /// Eigenvalues of every trimmed point, coloured by airspeed (`eigenvalues.svg`).
    pub eigenvalues: Figure,
    /// Flight states against time (`flight_states.svg`).
    pub flight_states: Figure,
    /// Flight angle of attack of every surface part (`flight_alpha.svg`).
    pub flight_alpha: Figure,
    /// Flight thrust, power and elevator (`flight_controls.svg`).
    pub flight_controls: Figure,
}

/// Everything the report shows. Parts whose analysis failed carry the reason instead.
#[derive(Debug, Clone)]
pub struct ReportInputs<'a> {
    /// The scenario, with the schedule in use already applied.
    pub scenario: &'a Scenario,
    /// The atmosphere of the scenario.
    pub atmosphere: &'a Atmosphere,
    /// Where the schedule in use comes from, in words.
    pub schedule_source: &'a str,
    /// Date of the run, `YYYY-MM-DD` (UTC).
    pub date_utc: &'a str,
    /// The speed sweep along the schedule in use.
    pub sweep: &'a SweepResult,
    /// The corridor, or why it is not available.
    pub corridor: Result<&'a Corridor, String>,
    /// The built schedule with the evaluation of the schedule in use, or why not available.
    pub schedule: Result<&'a BuiltSchedule, String>,
    /// The hover-to-cruise flight, or why not available.
    pub flight: Result<&'a Flight, String>,
    /// The cruise-to-hover flight (the scenario's deceleration), or why not available.
    pub flight_back: Result<&'a Flight, String>,
    /// The figures.
    pub figures: &'a Figures,
    /// Names of the data files written beside the report (relative to its folder).
    pub files: &'a [String],
}

/// How serious a finding is; one rule for every verdict line ([`SEVERITY_RULE`],
/// [`Severity::of_margin`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Severity {
    /// A threshold missed or a hard limit crossed at any point: a normalised margin below 0, an
    /// untrimmable point, a surface beyond stall, an UNSAFE flight finding.
    Unsafe,
    /// Every threshold met, but the smallest normalised margin below [`CAUTION_BAND`], or a
    /// control saturating in the flight.
    Caution,
    /// Every threshold met with at least [`CAUTION_BAND`] to spare.
    Ok,
    /// Information, including a part of the analysis that is not available.
    Note,
}

/// Normalised margin (margin / threshold - 1) under which a result that meets every
/// threshold is a CAUTION: within 25 % of a threshold. Common practice, no source.
pub const CAUTION_BAND: f64 = 0.25;

/// The severity rule as the page states it.
pub const SEVERITY_RULE: &str = "Severity, one rule for every line: UNSAFE when any point misses \
a threshold (a margin normalised as margin / threshold \u{2212} 1 below 0, \u{2212}1 at the hard limit), \
cannot be trimmed, has a surface beyond stall, or the flight has an UNSAFE finding (departed, \
held short of the transition, left the corridor, a pitch-control surface flown beyond stall); \
CAUTION when every threshold is met but the smallest normalised margin is below 0.25 (within 25 % \
of its threshold), or a control saturates in the flight; OK when every threshold is met with at \
least 25 % to spare; NOTE for information and for a part that is not available.";

impl Severity {
    /// The severity of a result by its smallest normalised margin over the points it covers
    /// (None: no trimmed point) and its counts of points outside the corridor and untrimmable.
    pub fn of_margin(smallest: Option<f64>, outside: usize, untrimmed: usize) -> Severity {
        match smallest {
            _ if outside > 0 || untrimmed > 0 => Severity::Unsafe,
            None => Severity::Unsafe,
            Some(m) if m < 0.0 => Severity::Unsafe,
            Some(m) if m < CAUTION_BAND => Severity::Caution,
            Some(_) => Severity::Ok,
        }
    }

    /// The word printed on the page and the terminal.
    pub fn word(self) -> &'static str {
        match self {
            Severity::Unsafe => "UNSAFE",
            Severity::Caution => "CAUTION",
            Severity::Ok => "OK",
            Severity::Note => "NOTE",
        }
    }

    fn class(self) -> &'static str {
        match self {
            Severity::Unsafe => "unsafe",
            Severity::Caution => "caution",
            Severity::Ok => "ok",
            Severity::Note => "note",
        }
    }
}

/// One line of the verdict.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    /// Severity.
    pub severity: Severity,
    /// What it is about: `unsafe band`, `stall of '<surface>'`, `schedule`, `flight`, ...
    pub topic: String,
    /// The finding in one line.
    pub text: String,
    /// First airspeed concerned (m/s), when it is a speed band.
    pub from_mps: Option<f64>,
    /// Last airspeed concerned (m/s), when it is a speed band.
    pub to_mps: Option<f64>,
}

/// A part of the analysis that is not available, and why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Missing {
    /// Section id (see [`SECTION_IDS`]).
    pub section: String,
    /// What is missing.
    pub what: String,
    /// Why.
    pub why: String,
}

/// The verdict as data: what `report --json` prints and `report.json` holds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReportSummary {
    /// Program and version.
    pub tool: String,
    /// The caution.
    pub caution: &'static str,
    /// Scenario name.
    pub scenario: String,
    /// Vehicle name.
    pub vehicle: String,
    /// Date of the run (UTC).
    pub date_utc: String,
    /// Where the schedule in use comes from.
    pub schedule_source: String,
    /// The report file name, relative to the output folder.
    pub report: String,
    /// Number of findings per severity: unsafe, caution, ok, note.
    pub counts: [usize; 4],
    /// The verdict, one finding per line.
    pub findings: Vec<Finding>,
    /// Parts not available.
    pub not_available: Vec<Missing>,
}

// ---------------------------------------------------------------------------------------
// Small text helpers

/// Escape text for HTML element content and attribute values.
pub fn escape(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            _ => o.push(c),
        }
    }
    o
}

fn f(v: f64, digits: usize) -> String {
    if v.is_finite() {
        // Avoid "-0.0".
        let s = format!("{v:.digits$}");
        if s.trim_start_matches('-')
            .chars()
            .all(|c| c == '0' || c == '.')
        {
            s.trim_start_matches('-').to_string()
        } else {
            s.replacen('-', "\u{2212}", 1)
        }
    } else {
        "\u{2013}".into()
    }
}

fn fo(v: Option<f64>, digits: usize) -> String {
    v.map_or_else(|| "\u{2013}".to_string(), |x| f(x, digits))
}

/// First letter upper case.
fn sentence(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}

fn plural(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

/// An airspeed with one decimal, or two where one would round it (0.25 m/s grids).
fn spd(v: f64) -> String {
    let tenths = v * 10.0;
    f(
        v,
        if (tenths - tenths.round()).abs() < 1e-6 {
            1
        } else {
            2
        },
    )
}

/// A value with `n` significant digits (at most six decimals).
fn sig(v: f64, n: i32) -> String {
    if !v.is_finite() || v == 0.0 {
        return f(v, n.max(1) as usize - 1);
    }
    let d = (n - 1 - v.abs().log10().floor() as i32).clamp(0, 6);
    f(v, d as usize)
}

fn band_text(from: f64, to: f64) -> String {
    if (to - from).abs() < 1e-9 {
        format!("{} m/s", spd(from))
    } else {
        format!("{}\u{2013}{} m/s", spd(from), spd(to))
    }
}

fn bands_text(b: &[Band]) -> String {
    b.iter()
        .map(|x| band_text(x.from_mps, x.to_mps))
        .collect::<Vec<_>>()
        .join(", ")
}

/// A date `YYYY-MM-DD` (proleptic Gregorian, UTC) from seconds since 1970-01-01T00:00:00Z.
pub fn utc_date(unix_s: i64) -> String {
    // Civil-from-days in 400-year eras of 146097 days (the era starts on 0000-03-01).
    let z = unix_s.div_euclid(86_400) + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!("{y:04}-{m:02}-{d:02}")
}

/// Prepare an SVG document for inlining into HTML: drop an XML declaration, a doctype and
/// comments before the root, and check that what is left is one `<svg>` element. Returns the
/// element text, or why it cannot be used.
pub fn inline_svg(text: &str) -> Result<String, String> {
    let mut s = text.trim_start_matches('\u{feff}').trim_start();
    loop {
        if let Some(rest) = s.strip_prefix("<?") {
            let end = rest.find("?>").ok_or("unterminated XML declaration")?;
            s = rest[end + 2..].trim_start();
        } else if let Some(rest) = s.strip_prefix("<!--") {
            let end = rest.find("-->").ok_or("unterminated comment")?;
            s = rest[end + 3..].trim_start();
        } else if let Some(rest) = s.strip_prefix("<!") {
            let end = rest.find('>').ok_or("unterminated doctype")?;
            s = rest[end + 1..].trim_start();
        } else {
            break;
        }
    }
    let s = s.trim_end();
    if !(s.starts_with("<svg") && s.ends_with("</svg>")) {
        return Err("the file is not a single <svg> element".into());
    }
    let lower = s.to_ascii_lowercase();
    if lower.contains("<script") || lower.contains("<foreignobject") {
        return Err("the SVG holds a script or foreign content".into());
    }
    Ok(s.to_string())
}

// ---------------------------------------------------------------------------------------
// The verdict

fn worst_point_speed(inp: &ReportInputs) -> Option<f64> {
    let b = inp.schedule.as_ref().ok()?;
    let w = &b.scenario.as_ref()?.worst;
    w.speed_mps.is_finite().then_some(w.speed_mps)
}

/// The verdict: one finding per unsafe band, one per surface for stall exposure, the worst
/// margin along the schedule in use (and the built schedule beside it), the flight, and a
/// note for every part that is not available.
/// Smallest normalised margin (margin / threshold - 1) of a trimmed sweep point over the
/// margins the sweep's verdict judges: stall (of `surface` alone when given), thrust, power,
/// pitch authority both ways, elevator travel, static margin, and the loop disk margin against
/// the disk that covers the gain and phase thresholds. None when nothing is judged.
fn normalised_margin(
    p: &PointReport,
    th: &crate::scenario::Thresholds,
    surface: Option<&str>,
) -> Option<f64> {
    let m = p.margins.as_ref()?;
    let norm = |v: f64, t: f64| (t > 0.0 && v.is_finite()).then(|| v / t - 1.0);
    let stall_counts = surface.is_none_or(|s| s == m.stall_surface);
    let mut all = vec![stall_counts
        .then(|| norm(m.stall_deg, th.stall_margin_deg))
        .flatten()];
    if surface.is_none() {
        let disk = crate::control::loops::disk_margin_for(th.gain_margin_db, th.phase_margin_deg);
        all.extend([
            norm(m.thrust, th.thrust_margin),
            norm(m.power, th.power_margin),
            norm(m.pitch_accel_up_rad_s2, th.pitch_accel_rad_s2),
            norm(m.pitch_accel_down_rad_s2, th.pitch_accel_rad_s2),
            m.elevator_deg.and_then(|e| norm(e, th.elevator_margin_deg)),
            m.static_margin_pct
                .and_then(|e| norm(e, th.static_margin_pct)),
        ]);
        all.extend(p.loop_margins.iter().filter(|l| l.in_loop).map(|l| {
            l.worst_disk_margin
                .or(l.disk_margin)
                .and_then(|d| norm(d, disk))
        }));
    }
    all.into_iter().flatten().min_by(f64::total_cmp)
}

/// Smallest [`normalised_margin`] over the trimmed points of the sweep.
fn sweep_margin(
    sw: &SweepResult,
    th: &crate::scenario::Thresholds,
    surface: Option<&str>,
) -> Option<f64> {
    sw.points
        .iter()
        .filter_map(|p| normalised_margin(p, th, surface))
        .min_by(f64::total_cmp)
}

pub fn findings(inp: &ReportInputs) -> Vec<Finding> {
    let mut out = Vec::new();
    let sw = inp.sweep;
    let th = &inp.scenario.file.thresholds;
    let push = |out: &mut Vec<Finding>, s, topic: &str, text: String, band: Option<(f64, f64)>| {
        out.push(Finding {
            severity: s,
            topic: topic.to_string(),
            // One line per finding: error texts may carry a line break before their hint.
            text: text.split_whitespace().collect::<Vec<_>>().join(" "),
            from_mps: band.map(|b| b.0),
            to_mps: band.map(|b| b.1),
        })
    };

    // Unsafe bands of the sweep.
    let (lo, hi) = match (sw.points.first(), sw.points.last()) {
        (Some(a), Some(b)) => (a.speed_mps, b.speed_mps),
        _ => (f64::NAN, f64::NAN),
    };
    if sw.points.is_empty() {
        push(
            &mut out,
            Severity::Note,
            "sweep",
            "the sweep has no points".into(),
            None,
        );
    } else if sw.bands.is_empty() {
        let smallest = sweep_margin(sw, th, None);
        push(
            &mut out,
            Severity::of_margin(smallest, 0, 0),
            "unsafe bands",
            format!(
                "no unsafe band from {} to {} m/s against the scenario thresholds; smallest normalised margin {}",
                f(lo, 1),
                f(hi, 1),
                fo(smallest, 2)
            ),
            Some((lo, hi)),
        );
    }
    for b in &sw.bands {
        let inside: Vec<&PointReport> = sw
            .points
            .iter()
            .filter(|p| p.speed_mps >= b.from_mps - 1e-9 && p.speed_mps <= b.to_mps + 1e-9)
            .collect();
        let untrimmed = inside.iter().filter(|p| !p.trimmed).count();
        let extra = if untrimmed > 0 {
            format!(
                "; {untrimmed} of {} points there cannot be trimmed",
                inside.len()
            )
        } else {
            String::new()
        };
        push(
            &mut out,
            Severity::Unsafe,
            "unsafe band",
            format!(
                "{}: {}{extra}",
                band_text(b.from_mps, b.to_mps),
                b.reasons.join(", ")
            ),
            Some((b.from_mps, b.to_mps)),
        );
    }

    // Stall exposure per surface, steady and flown.
    let trimmed = sw.points.iter().filter(|p| p.trimmed).count();
    let flown = inp.flight.as_ref().ok().map(|f| &f.summary.surfaces);
    for e in &sw.stall_exposure {
        let fl = flown.and_then(|s| s.iter().find(|x| x.name == e.surface));
        let flown_text = match fl {
            Some(x) if x.time_beyond_stall_s > 0.0 => format!(
                "; in the flight {} s beyond stall, largest angle of attack {} deg at {} m/s",
                if x.time_beyond_stall_s >= 1.0 {
                    f(x.time_beyond_stall_s, 1)
                } else {
                    sig(x.time_beyond_stall_s, 2)
                },
                fo(x.largest_alpha_deg, 1),
                fo(x.largest_alpha_speed_mps, 1)
            ),
            Some(x) => format!(
                "; in the flight never beyond stall (largest angle of attack {} deg)",
                fo(x.largest_alpha_deg, 1)
            ),
            None => String::new(),
        };
        let flown_stalled = fl.is_some_and(|x| x.time_beyond_stall_s > 0.0);
        let topic = format!("stall of '{}'", e.surface);
        if !e.stalled.is_empty() {
            push(
                &mut out,
                Severity::Unsafe,
                &topic,
                format!(
                    "'{}' beyond stall in steady trim at {}; margin below {} deg at {}{flown_text}",
                    e.surface,
                    bands_text(&e.stalled),
                    f(th.stall_margin_deg, 1),
                    bands_text(&e.near_stall)
                ),
                None,
            );
        } else if !e.near_stall.is_empty() || flown_stalled {
            // A stall margin below its threshold misses a threshold: UNSAFE by the one rule.
            push(
                &mut out,
                Severity::Unsafe,
                &topic,
                format!(
                    "'{}' not stalled in steady trim; margin below {} deg at {}{flown_text}",
                    e.surface,
                    f(th.stall_margin_deg, 1),
                    if e.near_stall.is_empty() {
                        "no speed".to_string()
                    } else {
                        bands_text(&e.near_stall)
                    }
                ),
                None,
            );
        } else if trimmed == 0 {
            push(
                &mut out,
                Severity::Note,
                &topic,
                format!(
                    "'{}': no trimmed point to judge its stall margin",
                    e.surface
                ),
                None,
            );
        } else {
            let over = if trimmed < sw.points.len() {
                format!(" at the {trimmed} trimmed points of {}", sw.points.len())
            } else {
                String::new()
            };
            let smallest = sweep_margin(sw, th, Some(&e.surface));
            push(
                &mut out,
                // A surface that never sets the verdict margin has nothing near its threshold.
                smallest.map_or(Severity::Ok, |m| Severity::of_margin(Some(m), 0, 0)),
                &topic,
                format!(
                    "'{}' keeps at least {} deg stall margin wherever it carries load{over}{flown_text}",
                    e.surface,
                    f(th.stall_margin_deg, 1)
                ),
                None,
            );
        }
    }

    // Worst margin along the schedule in use, and the built schedule beside it.
    match &inp.schedule {
        Ok(b) => {
            match &b.scenario {
                Some(o) => {
                    let n = o.points.len();
                    let sev = Severity::of_margin(o.smallest_margin, o.outside, o.untrimmed);
                    push(
                        &mut out,
                        sev,
                        "worst margin along the schedule",
                        format!(
                            "{}: worst point {}; {} of {n} grid speeds outside the corridor, {} untrimmable",
                            o.label,
                            describe(&o.worst),
                            o.outside,
                            o.untrimmed
                        ),
                        None,
                    );
                }
                None => push(
                    &mut out,
                    Severity::Note,
                    "worst margin along the schedule",
                    format!(
                        "not available: the schedule in use does not set the {} that the corridor maps",
                        b.variable.name()
                    ),
                    None,
                ),
            }
            let left = if b.left_corridor.is_some() {
                "; no schedule stays inside the corridor all the way (see the corridor section)"
            } else {
                ""
            };
            push(
                &mut out,
                Severity::of_margin(
                    b.built.smallest_margin,
                    b.built.outside,
                    b.built.untrimmed,
                ),
                "built schedule",
                format!(
                    "the schedule built for the largest smallest margin (schedule.toml): worst point {}; {} of {} grid speeds outside the corridor{left}",
                    describe(&b.worst),
                    b.built.outside,
                    b.built.points.len()
                ),
                None,
            );
        }
        Err(why) => push(
            &mut out,
            Severity::Note,
            "worst margin along the schedule",
            format!("not available: {why}"),
            None,
        ),
    }

    // The flight.
    for flight in [&inp.flight, &inp.flight_back] {
        match flight {
            Ok(fl) => {
                let s = &fl.summary;
                for x in &s.unsafe_findings {
                    push(
                        &mut out,
                        Severity::Unsafe,
                        "flight",
                        format!("{}: {x}", s.manoeuvre),
                        None,
                    );
                }
                match &s.transition {
                    Some(t) => push(
                        &mut out,
                        // A flight with an UNSAFE finding is never "ok", however it ended.
                        if s.unsafe_findings.is_empty() {
                            Severity::Ok
                        } else {
                            Severity::Note
                        },
                        "flight",
                        format!(
                            "{} in {} s over {} m, {} kJ; height lost {} m, gained {} m",
                            s.manoeuvre,
                            f(t.time_s, 1),
                            f(t.distance_m, 0),
                            f(t.energy_j / 1000.0, 1),
                            f(s.height_lost_m, 2),
                            f(s.height_gained_m, 2)
                        ),
                        None,
                    ),
                    None => push(
                        &mut out,
                        // Not completed is an UNSAFE finding of its own (listed above).
                        if s.unsafe_findings.is_empty() {
                            Severity::Unsafe
                        } else {
                            Severity::Note
                        },
                        "flight",
                        format!(
                            "{} not completed in {} s ({}); height lost {} m, gained {} m",
                            s.manoeuvre,
                            f(s.duration_s, 1),
                            s.transition_criterion,
                            f(s.height_lost_m, 2),
                            f(s.height_gained_m, 2)
                        ),
                        None,
                    ),
                }
                if !s.saturations.is_empty() {
                    let total: f64 = s.saturations.iter().map(|i| i.duration_s()).sum();
                    push(
                        &mut out,
                        Severity::Caution,
                        "flight",
                        format!(
                            "{}, {} s in all (see the flight section)",
                            plural(
                                s.saturations.len(),
                                "control saturation",
                                "control saturations"
                            ),
                            f(total, 1)
                        ),
                        None,
                    );
                }
            }
            Err(why) => push(
                &mut out,
                Severity::Note,
                "flight",
                format!("not available: {why}"),
                None,
            ),
        }
    }
    if let Err(why) = &inp.corridor {
        push(
            &mut out,
            Severity::Note,
            "corridor",
            format!("not available: {why}"),
            None,
        );
    }
    out
}

/// Every part of the report that is not available.
pub fn missing(inp: &ReportInputs) -> Vec<Missing> {
    let mut out = Vec::new();
    let mut add = |section: &str, what: &str, r: Result<(), &String>| {
        if let Err(why) = r {
            out.push(Missing {
                section: section.into(),
                what: what.into(),
                why: why.clone(),
            });
        }
    };
    add("corridor", "corridor", inp.corridor.as_ref().map(|_| ()));
    add("corridor", "schedule", inp.schedule.as_ref().map(|_| ()));
    add("flight", "flight", inp.flight.as_ref().map(|_| ()));
    add(
        "flight",
        "back-transition flight",
        inp.flight_back.as_ref().map(|_| ()),
    );
    let g = inp.figures;
    for (section, what, fig) in [
        ("corridor", "corridor figure", &g.corridor),
        ("corridor", "schedule margins figure", &g.schedule_margins),
        ("trim-curves", "trim curves figure", &g.trim_curves),
        ("surface-alpha", "angle of attack figure", &g.surface_alpha),
        ("margins", "margins figure", &g.margins),
        ("modes", "eigenvalue figure", &g.eigenvalues),
        ("flight", "flight states figure", &g.flight_states),
        ("flight", "flight angle of attack figure", &g.flight_alpha),
        ("flight", "flight controls figure", &g.flight_controls),
    ] {
        add(section, what, fig.as_ref().map(|_| ()));
    }
    out
}

/// The verdict as data (for `--json` and `report.json`).
pub fn summary(inp: &ReportInputs) -> ReportSummary {
    let fs = findings(inp);
    let count = |s: Severity| fs.iter().filter(|x| x.severity == s).count();
    ReportSummary {
        tool: format!("hoverline {}", env!("CARGO_PKG_VERSION")),
        caution: super::CAUTION,
        scenario: inp.scenario.file.name.clone(),
        vehicle: inp.scenario.vehicle.name.clone(),
        date_utc: inp.date_utc.to_string(),
        schedule_source: inp.schedule_source.to_string(),
        report: REPORT_FILE.into(),
        counts: [
            count(Severity::Unsafe),
            count(Severity::Caution),
            count(Severity::Ok),
            count(Severity::Note),
        ],
        findings: fs,
        not_available: missing(inp),
    }
}

// ---------------------------------------------------------------------------------------
// HTML

const STYLE: &str = r#"
:root{--ink:#1d2329;--muted:#5b6670;--rule:#d5dbe0;--paper:#ffffff;--panel:#f4f6f8;
--unsafe:#D55E00;--caution:#E69F00;--ok:#009E73;--note:#0072B2;--accent:#0072B2}
*{box-sizing:border-box}
html{background:var(--panel)}
body{margin:0 auto;max-width:1180px;padding:0 28px 40px;background:var(--paper);color:var(--ink);
font-family:"DejaVu Sans","Liberation Sans","Helvetica Neue",Arial,system-ui,sans-serif;font-size:15px;line-height:1.45}
header#headline{padding:26px 0 14px;border-bottom:3px solid var(--ink)}
.kicker{font-size:12px;letter-spacing:.12em;text-transform:uppercase;color:var(--muted);margin:0 0 4px}
h1{font-size:28px;margin:0 0 4px;line-height:1.2}
.subtitle{margin:0 0 14px;color:var(--muted)}
dl.facts{display:grid;grid-template-columns:repeat(auto-fill,minmax(250px,1fr));gap:6px 22px;margin:0}
dl.facts div{border-left:3px solid var(--rule);padding:2px 0 2px 10px}
dl.facts dt{font-size:11.5px;text-transform:uppercase;letter-spacing:.08em;color:var(--muted)}
dl.facts dd{margin:0;font-weight:600}
.caution-strip{margin:16px 0 0;padding:8px 12px;border:2px solid var(--ink);font-size:13.5px}
nav.toc{margin:14px 0 4px;font-size:13.5px}
nav.toc ol{display:flex;flex-wrap:wrap;gap:4px 16px;list-style:none;padding:0;margin:0;counter-reset:toc}
nav.toc li{counter-increment:toc}
nav.toc li::before{content:counter(toc) ". ";color:var(--muted)}
nav.toc a{color:var(--accent);text-decoration:none}
section{padding:18px 0 8px;border-bottom:1px solid var(--rule)}
h2{font-size:21px;margin:0 0 8px;display:flex;gap:10px;align-items:baseline}
h2 .num{font-size:14px;color:var(--paper);background:var(--ink);padding:1px 8px;border-radius:3px}
h3{font-size:16px;margin:16px 0 6px}
p.lead{margin:0 0 10px;color:var(--muted)}
ul.findings{list-style:none;padding:0;margin:0}
ul.findings li{display:grid;grid-template-columns:96px 1fr;gap:10px;padding:6px 0 6px 10px;margin:4px 0;background:var(--panel)}
ul.findings li.unsafe{border-left:6px solid var(--unsafe)}
ul.findings li.caution{border-left:6px dashed var(--caution)}
ul.findings li.ok{border-left:6px dotted var(--ok)}
ul.findings li.note{border-left:6px double var(--note)}
.badge{display:inline-block;font-size:11.5px;font-weight:700;letter-spacing:.06em;padding:2px 6px;border-radius:3px;text-align:center;align-self:start}
.badge.unsafe{background:var(--unsafe);color:#fff}
.badge.caution{background:#fff;color:var(--ink);border:2px dashed var(--caution)}
.badge.ok{background:#fff;color:var(--ink);border:2px dotted var(--ok)}
.badge.note{background:#fff;color:var(--ink);border:2px double var(--note)}
.topic{font-weight:700}
.counts{margin:0 0 10px;font-weight:600}
figure.chart{margin:8px 0 14px;break-inside:avoid;page-break-inside:avoid}
figure.chart svg{display:block;width:100%;height:auto;border:1px solid var(--rule)}
/* Grid maps are drawn cell by cell: crisp edges keep hairline seams out of them. */
figure.chart svg rect{shape-rendering:crispEdges}
figcaption{font-size:13px;color:var(--muted);margin-top:4px}
.na{border:2px dashed var(--muted);padding:8px 12px;background:var(--panel)}
.na strong{text-transform:uppercase;letter-spacing:.05em}
.scroll{overflow-x:auto;max-width:100%}
table.data{border-collapse:collapse;font-size:13px;margin:6px 0 12px;font-variant-numeric:tabular-nums}
table.data th,table.data td{border-bottom:1px solid var(--rule);padding:3px 8px;vertical-align:top}
table.data th{text-align:left;background:var(--panel);font-weight:600}
table.data td.n{text-align:right;white-space:nowrap}
table.data tr.flag td{background:#fbeee6}
table.wide{font-size:11.5px;margin:0}
table.wide th{min-width:4.5em}
.tablebox{overflow:auto;max-height:70vh;max-width:100%;border:1px solid var(--rule)}
.tablebox thead th{position:sticky;top:0;z-index:2;box-shadow:0 1px 0 var(--rule)}
.tablebox th:first-child,.tablebox td:first-child{position:sticky;left:0;z-index:1;background:var(--paper)}
.tablebox thead th:first-child{z-index:3;background:var(--panel)}
.tablebox tr.flag td:first-child{background:#fbeee6}
th .unit{font-weight:400;color:var(--muted)}
table.wide td.reasons{min-width:64em}
details{margin:6px 0}
details summary{cursor:pointer;font-weight:600;color:var(--accent)}
.files a,.data-link{color:var(--accent)}
ul.plain{margin:4px 0 10px;padding-left:20px}
ul.plain li{margin:2px 0}
ol.refs li{margin:3px 0}
footer{padding:14px 0;font-size:12.5px;color:var(--muted)}
.print-only{display:none}
@media (max-width:700px){body{padding:0 12px}ul.findings li{grid-template-columns:1fr}}
@media print{
@page{size:A4;margin:13mm 12mm 14mm}
html{background:#fff}
body{max-width:none;padding:0;font-size:9.5pt}
nav.toc{display:none}
h1{font-size:18pt}
h2{font-size:13pt;break-after:avoid;page-break-after:avoid}
h3{break-after:avoid;page-break-after:avoid}
section{break-inside:auto}
figure.chart svg{max-height:235mm}
ul.findings li{break-inside:avoid;-webkit-print-color-adjust:exact;print-color-adjust:exact}
.badge,h2 .num,table.data th,table.data tr.flag td{-webkit-print-color-adjust:exact;print-color-adjust:exact}
table.data{font-size:8pt}
table.wide{font-size:6.5pt}
.print-only{display:block}
a{color:inherit}
}
"#;

/// The word for the line pattern of a chart style, as a caption says it.
fn pattern(style: usize) -> &'static str {
    match super::chart::style_dash(style) {
        super::chart::Dash::Solid => "solid",
        super::chart::Dash::Dashed => "dashed",
        super::chart::Dash::Dotted => "dotted",
    }
}

fn figure(out: &mut String, fig: &Figure, caption: &str) {
    match fig {
        Ok(svg) => {
            let _ = writeln!(
                out,
                "<figure class=\"chart\">{svg}<figcaption>{}</figcaption></figure>",
                escape(caption)
            );
        }
        Err(why) => not_available(out, why),
    }
}

fn not_available(out: &mut String, why: &str) {
    let _ = writeln!(
        out,
        "<p class=\"na\"><strong>not available:</strong> {}</p>",
        escape(why)
    );
}

fn open_section(out: &mut String, id: &str, title: &str, lead: &str) {
    let n = SECTION_IDS.iter().position(|s| *s == id).unwrap_or(0);
    let _ = write!(
        out,
        "<section id=\"{id}\">\n<h2><span class=\"num\">{n}</span>{}</h2>\n",
        escape(title)
    );
    if !lead.is_empty() {
        let _ = writeln!(out, "<p class=\"lead\">{}</p>", escape(lead));
    }
}

fn data_links(out: &mut String, files: &[String], wanted: &[&str]) {
    let have: Vec<&&str> = wanted
        .iter()
        .filter(|w| files.iter().any(|f| f == **w))
        .collect();
    if have.is_empty() {
        return;
    }
    let links: Vec<String> = have
        .iter()
        .map(|w| format!("<a class=\"data-link\" href=\"{0}\">{0}</a>", escape(w)))
        .collect();
    let _ = writeln!(
        out,
        "<p class=\"files\">Data beside this report: {}</p>",
        links.join(", ")
    );
}

struct Table {
    head: Vec<String>,
    rows: Vec<(bool, Vec<String>)>,
    numeric: Vec<bool>,
}

impl Table {
    fn new(head: &[&str], numeric: &[bool]) -> Table {
        Table {
            head: head.iter().map(|s| s.to_string()).collect(),
            rows: Vec::new(),
            numeric: numeric.to_vec(),
        }
    }

    fn row(&mut self, flag: bool, cells: Vec<String>) {
        self.rows.push((flag, cells));
    }

    fn html(&self, class: &str) -> String {
        let mut o = format!("<div class=\"scroll\"><table class=\"data {class}\"><thead><tr>");
        for h in &self.head {
            let _ = write!(o, "<th>{}</th>", escape(h));
        }
        o.push_str("</tr></thead><tbody>\n");
        for (flag, r) in &self.rows {
            o.push_str(if *flag { "<tr class=\"flag\">" } else { "<tr>" });
            for (k, c) in r.iter().enumerate() {
                let n = self.numeric.get(k).copied().unwrap_or(false);
                let _ = write!(
                    o,
                    "<td{}>{}</td>",
                    if n { " class=\"n\"" } else { "" },
                    escape(c)
                );
            }
            o.push_str("</tr>\n");
        }
        o.push_str("</tbody></table></div>\n");
        o
    }
}

fn headline(out: &mut String, inp: &ReportInputs) {
    let sc = inp.scenario;
    let v = &sc.vehicle;
    let a = inp.atmosphere;
    let mc = &sc.file.mass_case;
    let mass_case = if mc.mass_kg.is_none() && mc.cg_shift_x_m == 0.0 && mc.cg_shift_z_m == 0.0 {
        format!("{} kg, as in the vehicle file", f(v.mass_kg, 2))
    } else {
        format!(
            "{} kg{}, CG shift {} m forward, {} m down",
            f(v.mass_kg, 2),
            if mc.mass_kg.is_some() {
                " (mass case)"
            } else {
                ""
            },
            f(mc.cg_shift_x_m, 3),
            f(mc.cg_shift_z_m, 3)
        )
    };
    let sw = &sc.file.sweep;
    let obj = match sw.objective {
        crate::trim::Objective::Reserve => "least shaft power keeping control and stall reserves",
        crate::trim::Objective::Power => "least shaft power",
        crate::trim::Objective::StallMargin => "largest stall margin",
    };
    let facts: Vec<(&str, String)> = vec![
        ("vehicle", v.name.clone()),
        ("scenario", sc.file.name.clone()),
        (
            "atmosphere",
            format!(
                "ISA {}{} K at {} m: density {} kg/m\u{b3}, {} K",
                if a.temperature_offset_k < 0.0 {
                    "\u{2212} "
                } else {
                    "+ "
                },
                f(a.temperature_offset_k.abs(), 1),
                f(a.altitude_m, 0),
                f(a.density_kg_m3, 4),
                f(a.temperature_k, 1)
            ),
        ),
        ("mass case", mass_case),
        (
            "sweep",
            format!(
                "{}\u{2013}{} m/s in {} m/s steps, climb {} deg, trim for {obj}",
                f(sw.from_mps, 1),
                f(sw.to_mps, 1),
                f(sw.step_mps, 2),
                f(sw.climb_deg, 1)
            ),
        ),
        ("schedule in use", inp.schedule_source.to_string()),
        ("date (UTC)", inp.date_utc.to_string()),
        ("tool", format!("hoverline {}", env!("CARGO_PKG_VERSION"))),
    ];
    let _ = write!(
        out,
        "<header id=\"headline\">\n<p class=\"kicker\">hoverline transition report</p>\n<h1>{}</h1>\n",
        escape(&v.name)
    );
    let sub = if sc.file.description.trim().is_empty() {
        format!("Scenario {}", sc.file.name)
    } else {
        format!("Scenario {}: {}", sc.file.name, sc.file.description.trim())
    };
    let _ = writeln!(out, "<p class=\"subtitle\">{}</p>", escape(&sub));
    out.push_str("<dl class=\"facts\">\n");
    for (k, val) in facts {
        let _ = writeln!(
            out,
            "<div><dt>{}</dt><dd>{}</dd></div>",
            escape(k),
            escape(&val)
        );
    }
    out.push_str("</dl>\n");
    let _ = writeln!(
        out,
        "<p class=\"caution-strip\"><strong>Caution.</strong> {}</p>\n</header>",
        escape(super::CAUTION)
    );
    let titles = section_titles();
    out.push_str("<nav class=\"toc\" aria-label=\"sections\"><ol>");
    for (id, t) in SECTION_IDS.iter().zip(titles.iter()).skip(1) {
        let _ = write!(out, "<li><a href=\"#{id}\">{}</a></li>", escape(t));
    }
    out.push_str("</ol></nav>\n");
}

fn section_titles() -> [&'static str; 12] {
    [
        "Headline",
        "Verdict",
        "Corridor and schedule",
        "Trim curves",
        "Angle of attack per surface",
        "Margins",
        "Eigenvalues and modes",
        "Transition flight",
        "Trim table",
        "Model assumptions and limits",
        "Cautions",
        "Methods and references",
    ]
}

fn verdict(out: &mut String, inp: &ReportInputs) {
    let t = section_titles();
    open_section(
        out,
        "verdict",
        t[1],
        "One line per finding, against the scenario's thresholds (common practice unless the scenario says otherwise, not requirements).",
    );
    let fs = findings(inp);
    let c = |s: Severity| fs.iter().filter(|x| x.severity == s).count();
    let _ = writeln!(out, "<p class=\"lead rule\">{}</p>", escape(SEVERITY_RULE));
    let _ = writeln!(
        out,
        "<p class=\"counts\">{} unsafe, {} caution, {} ok, {} notes</p>",
        c(Severity::Unsafe),
        c(Severity::Caution),
        c(Severity::Ok),
        c(Severity::Note)
    );
    out.push_str("<ul class=\"findings\">\n");
    for x in &fs {
        let _ = writeln!(
            out,
            "<li class=\"{0}\"><span class=\"badge {0}\">{1}</span><span><span class=\"topic\">{2}</span> \u{2014} {3}</span></li>",
            x.severity.class(),
            x.severity.word(),
            escape(&x.topic),
            escape(&x.text)
        );
    }
    out.push_str("</ul>\n</section>\n");
}

fn corridor_section(out: &mut String, inp: &ReportInputs) {
    let t = section_titles();
    open_section(
        out,
        "corridor",
        t[2],
        "Where the vehicle can be trimmed over airspeed and the transition variable, and the schedules through it.",
    );
    let c = match &inp.corridor {
        Ok(c) => c,
        Err(why) => {
            not_available(out, why);
            out.push_str("</section>\n");
            return;
        }
    };
    let inside = c.points.iter().filter(|p| p.inside).count();
    let trimmed = c.points.iter().filter(|p| p.trimmed).count();
    let bands: Vec<String> = c
        .speed_bands()
        .iter()
        .map(|(a, b)| band_text(*a, *b))
        .collect();
    let _ = writeln!(
        out,
        "<p>A grid of {} speeds by {} values of {}, each point trimmed with {}: {} of {} points trimmed, {} inside the corridor. Speeds with a point inside: {}.</p>",
        c.speeds_mps.len(),
        c.values_deg.len(),
        escape(c.variable.axis_label()),
        escape(c.condition),
        trimmed,
        c.points.len(),
        inside,
        escape(&if bands.is_empty() {
            "none".to_string()
        } else {
            bands.join(", ")
        })
    );
    let lines = if inp.schedule.is_ok() {
        format!(
            "Black {}: the schedule built for the largest smallest margin; black {}: the schedule in use ({}).",
            pattern(super::chart::Role::BuiltSchedule.style()),
            pattern(super::chart::Role::ScheduleInUse.style()),
            inp.schedule_source
        )
    } else {
        format!(
            "Black {}: the schedule in use ({}); no schedule could be built.",
            pattern(super::chart::Role::ScheduleInUse.style()),
            inp.schedule_source
        )
    };
    let caption = format!(
        "Colour: smallest normalised margin (margin/threshold \u{2212} 1: 0 at the threshold, \u{2212}1 at the limit) of every trimmed grid point; grey: untrimmable. Coloured lines: corridor boundaries, labelled by what limits them. {lines}"
    );
    figure(out, &inp.figures.corridor, &caption);
    let reasons = c.reason_counts();
    if !reasons.is_empty() {
        let mut tb = Table::new(
            &["outside the corridor because of", "grid points"],
            &[false, true],
        );
        for (r, n) in reasons {
            tb.row(false, vec![r, n.to_string()]);
        }
        out.push_str("<h3>What bounds the corridor</h3>\n");
        out.push_str(&tb.html(""));
    }
    match &inp.schedule {
        Ok(b) => {
            out.push_str("<h3>Schedule comparison</h3>\n");
            let k = &b.constraints;
            let _ = writeln!(
                out,
                "<p>The built schedule is non-increasing from hover to cruise, |d/dV| \u{2264} {} deg per m/s ({} deg/s at {} m/s\u{b2}), |d\u{b2}/dV\u{b2}| \u{2264} {} deg per (m/s)\u{b2}, knots every {} m/s.</p>",
                f(k.max_slope_deg_per_mps, 2),
                f(k.rate_limit_deg_s, 1),
                f(k.acceleration_mps2, 2),
                f(k.smoothness_deg_per_mps2, 2),
                f(k.knot_spacing_mps, 2)
            );
            let mut tb = Table::new(
                &[
                    "schedule",
                    "smallest margin",
                    "outside",
                    "untrimmable",
                    "worst point",
                ],
                &[false, true, true, true, false],
            );
            tb.row(
                b.built.outside > 0,
                vec![
                    "built (schedule.toml)".into(),
                    fo(b.built.smallest_margin, 3),
                    format!("{} of {}", b.built.outside, b.built.points.len()),
                    b.built.untrimmed.to_string(),
                    describe(&b.worst),
                ],
            );
            if let Some(o) = &b.scenario {
                tb.row(
                    o.outside > 0,
                    vec![
                        format!("in use: {}", o.label),
                        fo(o.smallest_margin, 3),
                        format!("{} of {}", o.outside, o.points.len()),
                        o.untrimmed.to_string(),
                        describe(&o.worst),
                    ],
                );
            }
            out.push_str(&tb.html(""));
            if let Some(l) = &b.left_corridor {
                let _ = writeln!(out, "<p>{}.</p>", escape(&sentence(l)));
            }
            if !b.comparison.is_empty() {
                let mut tb = Table::new(
                    &["speeds", "better", "mean difference", "largest difference"],
                    &[false, false, true, true],
                );
                for c in &b.comparison {
                    let who = match c.better.as_str() {
                        "built" => "built schedule",
                        "scenario" => "schedule in use",
                        _ => "equal",
                    };
                    tb.row(
                        false,
                        vec![
                            band_text(c.from_mps, c.to_mps),
                            who.into(),
                            fo(c.mean_difference, 3),
                            fo(c.largest_difference, 3),
                        ],
                    );
                }
                out.push_str(&tb.html(""));
            }
            if !b.short_of_acceleration.is_empty() {
                let s: Vec<String> = b
                    .short_of_acceleration
                    .iter()
                    .map(|(a, c)| band_text(*a, *c))
                    .collect();
                let _ = writeln!(
                    out,
                    "<p>Along the built schedule the thrust left gives less than the planned {} m/s\u{b2} of acceleration at {}.</p>",
                    f(k.acceleration_mps2, 2),
                    escape(&s.join(", "))
                );
            }
            figure(
                out,
                &inp.figures.schedule_margins,
                "Transition variable and smallest normalised margin (re-trimmed) along the built schedule and the schedule in use.",
            );
        }
        Err(why) => {
            out.push_str("<h3>Schedule comparison</h3>\n");
            not_available(out, why);
        }
    }
    data_links(
        out,
        inp.files,
        &[
            "corridor.csv",
            "corridor.json",
            "schedule.toml",
            "schedule.csv",
            "schedule.json",
        ],
    );
    out.push_str("</section>\n");
}

fn simple_figure_section(
    out: &mut String,
    id: &str,
    title: &str,
    lead: &str,
    fig: &Figure,
    caption: &str,
    files: &[String],
) {
    open_section(out, id, title, lead);
    figure(out, fig, caption);
    data_links(out, files, &["trim.csv", "sweep.json"]);
    out.push_str("</section>\n");
}

fn eigen(re: f64, im: f64) -> String {
    if im > 1e-9 {
        format!("{} \u{b1} {}i", sig(re, 3), sig(im, 3))
    } else {
        sig(re, 3)
    }
}

fn mode_rows(tb: &mut Table, label: &str, p: &PointReport) {
    let at = format!("{} ({} m/s)", label, spd(p.speed_mps));
    if !p.trimmed {
        tb.row(
            true,
            vec![
                at,
                "untrimmable".into(),
                p.reasons.join("; "),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
            ],
        );
        return;
    }
    let mut first = true;
    for m in &p.modes {
        tb.row(
            m.real_per_s > 0.0,
            mode_cells(if first { &at } else { "" }, m),
        );
        first = false;
    }
}

fn mode_cells(at: &str, m: &Mode) -> Vec<String> {
    let t = match (m.time_to_half_s, m.time_to_double_s) {
        (_, Some(t2)) => format!("doubles {} s", f(t2, 2)),
        (Some(th), None) => format!("halves {} s", f(th, 2)),
        _ => "\u{2013}".into(),
    };
    vec![
        at.to_string(),
        m.name.clone(),
        eigen(m.real_per_s, m.imag_rad_s),
        sig(m.natural_freq_rad_s, 3),
        f(m.damping_ratio, 3),
        fo(m.period_s, 2),
        t,
        m.level_8785c
            .map_or("\u{2013}".into(), |l| crate::linear::level_label(l).into()),
    ]
}

fn modes_section(out: &mut String, inp: &ReportInputs) {
    let t = section_titles();
    open_section(
        out,
        "modes",
        t[6],
        "Eigenvalues of the linear model (u, w, q, theta) at every trimmed point, and the modes at hover, at the speed of the worst margin along the schedule and at cruise.",
    );
    figure(
        out,
        &inp.figures.eigenvalues,
        &format!(
            "Every eigenvalue of every trimmed point in the complex plane, coloured by airspeed; right of the zero line a mode grows, right of the {} threshold line it doubles faster than the scenario allows.",
            pattern(super::plots::THRESHOLD)
        ),
    );
    let pts = &inp.sweep.points;
    if pts.is_empty() {
        not_available(out, "the sweep has no points");
        out.push_str("</section>\n");
        return;
    }
    let nearest = |v: f64| -> Option<&PointReport> {
        pts.iter()
            .filter(|p| p.trimmed)
            .min_by(|a, b| (a.speed_mps - v).abs().total_cmp(&(b.speed_mps - v).abs()))
    };
    let mut picks: Vec<(String, &PointReport)> = Vec::new();
    picks.push(("hover".into(), &pts[0]));
    let worst_note;
    match worst_point_speed(inp) {
        Some(w) => match nearest(w) {
            Some(p) => {
                worst_note = format!(
                    "The worst margin along the schedule in use lies at {} m/s; the nearest trimmed sweep point is {} m/s.",
                    f(w, 2),
                    spd(p.speed_mps)
                );
                match picks.iter_mut().find(|(_, q)| std::ptr::eq(*q, p)) {
                    Some(e) => e.0.push_str(", worst margin"),
                    None => picks.push(("worst margin".into(), p)),
                }
            }
            None => worst_note = "No sweep point is trimmed near the worst margin.".into(),
        },
        None => {
            worst_note = format!(
                "The speed of the worst margin is not available: {}.",
                match &inp.schedule {
                    Err(why) => why.clone(),
                    Ok(_) => "the schedule in use was not evaluated on the corridor".into(),
                }
            )
        }
    }
    let last = &pts[pts.len() - 1];
    match picks.iter_mut().find(|(_, q)| std::ptr::eq(*q, last)) {
        Some(e) => e.0.push_str(", cruise"),
        None => picks.push(("cruise".into(), last)),
    }
    picks.sort_by(|a, b| a.1.speed_mps.total_cmp(&b.1.speed_mps));
    let _ = writeln!(out, "<p>{}</p>", escape(&worst_note));
    let mut tb = Table::new(
        &[
            "point",
            "mode",
            "eigenvalue (1/s)",
            "natural frequency (rad/s)",
            "damping ratio",
            "period (s)",
            "time to half / double",
            "MIL-F-8785C (indication)",
        ],
        &[false, false, true, true, true, true, true, false],
    );
    for (label, p) in &picks {
        mode_rows(&mut tb, label, p);
    }
    out.push_str(&tb.html(""));
    out.push_str("<p class=\"lead\">Shaded rows: an unstable mode, or an untrimmable point. MIL-F-8785C levels (Category B) are shown for wingborne short-period and phugoid modes as an indication only, never as a verdict.</p>\n");
    data_links(out, inp.files, &["sweep.json"]);
    out.push_str("</section>\n");
}

/// The summary table of one flight.
fn flight_table(s: &crate::flight::Summary) -> Table {
    let mut tb = Table::new(&["quantity", "value"], &[false, false]);
    tb.row(false, vec!["manoeuvre".into(), s.manoeuvre.clone()]);
    tb.row(
        false,
        vec![
            "airspeed".into(),
            format!(
                "{} \u{2192} {} m/s, {} s flown",
                f(s.start_speed_mps, 1),
                f(s.end_speed_mps, 1),
                f(s.duration_s, 1)
            ),
        ],
    );
    tb.row(
        s.outcome != "completed",
        vec![
            "outcome".into(),
            format!(
                "{} at {} s: {}",
                s.outcome,
                f(s.outcome_time_s, 1),
                s.outcome_reason
            ),
        ],
    );
    for x in &s.unsafe_findings {
        tb.row(true, vec!["UNSAFE".into(), x.clone()]);
    }
    match &s.transition {
        Some(tr) => tb.row(
            false,
            vec![
                "transition".into(),
                format!(
                    "{} s ({}\u{2013}{} s), {} m, {} kJ, height change {} m",
                    f(tr.time_s, 1),
                    f(tr.start_s, 1),
                    f(tr.end_s, 1),
                    f(tr.distance_m, 0),
                    f(tr.energy_j / 1000.0, 1),
                    f(tr.height_change_m, 2)
                ),
            ],
        ),
        None => tb.row(
            true,
            vec![
                "transition".into(),
                format!("not completed: {}", s.transition_criterion),
            ],
        ),
    }
    tb.row(
        false,
        vec![
            "height".into(),
            format!(
                "lost {} m (at {} s), gained {} m (at {} s), final error {} m",
                f(s.height_lost_m, 2),
                f(s.height_lost_at_s, 1),
                f(s.height_gained_m, 2),
                f(s.height_gained_at_s, 1),
                f(s.final_height_error_m, 2)
            ),
        ],
    );
    tb.row(
        false,
        vec![
            "pitch attitude".into(),
            format!(
                "{} to {} deg; largest airspeed error {} m/s",
                f(s.pitch_range_deg[0], 1),
                f(s.pitch_range_deg[1], 1),
                f(s.largest_speed_error_mps, 2)
            ),
        ],
    );
    tb.row(
        false,
        vec!["energy".into(), format!("{} kJ", f(s.energy_j / 1000.0, 1))],
    );
    tb.row(
        !s.corridor_exits.is_empty(),
        vec![
            "corridor".into(),
            if s.corridor_exits.is_empty() {
                "stayed at speeds where the trim table is trimmable".into()
            } else {
                format!(
                    "{} at untrimmable speeds",
                    plural(s.corridor_exits.len(), "interval", "intervals")
                )
            },
        ],
    );
    tb.row(
        !s.saturations.is_empty(),
        vec![
            "saturations".into(),
            format!(
                "{} with a control at its limit, {} of tilt lag",
                plural(s.saturations.len(), "interval", "intervals"),
                plural(s.tilt_lag.len(), "interval", "intervals")
            ),
        ],
    );
    tb
}

fn flight_section(out: &mut String, inp: &ReportInputs) {
    let t = section_titles();
    open_section(
        out,
        "flight",
        t[7],
        "The nonlinear model flown in time from hover to cruise along the schedule in use, with feedforward from the trim table and the documented feedback law.",
    );
    let fl = match &inp.flight {
        Ok(f) => f,
        Err(why) => {
            not_available(out, why);
            out.push_str("</section>\n");
            return;
        }
    };
    let s = &fl.summary;
    out.push_str(&flight_table(s).html(""));
    figure(
        out,
        &inp.figures.flight_states,
        "Airspeed, height, pitch attitude and tilt (or elevator) against time, with their references; shading marks intervals outside the trimmable corridor and controls at a limit.",
    );
    out.push_str("<h3>Stall exposure in flight</h3>\n");
    let _ = writeln!(
        out,
        "<p>A surface part counts while its dynamic pressure times area is at least {} % of the weight; the steady columns apply the same rule to the trim points at the same airspeeds.</p>",
        f(100.0 * s.stall_load_fraction, 1)
    );
    let cmp = super::flight_files::stall_comparison(inp.sweep, s);
    let mut tb = Table::new(
        &[
            "surface",
            "stall angles (deg)",
            "largest alpha (deg)",
            "at (m/s)",
            "time beyond stall (s)",
            "flown beyond stall",
            "steady beyond stall",
            "flown and steady agree",
        ],
        &[false, true, true, true, true, false, false, true],
    );
    for x in &s.surfaces {
        let flown: Vec<String> = x
            .stalled
            .iter()
            .map(|i| {
                format!(
                    "{}\u{2013}{} s ({}\u{2013}{} m/s)",
                    f(i.from_s, 1),
                    f(i.to_s, 1),
                    f(i.from_speed_mps, 1),
                    f(i.to_speed_mps, 1)
                )
            })
            .collect();
        let c = cmp.iter().find(|c| c.surface == x.name);
        tb.row(
            x.time_beyond_stall_s > 0.0,
            vec![
                x.name.clone(),
                format!("{} / {}", f(x.stall_pos_deg, 1), f(x.stall_neg_deg, 1)),
                fo(x.largest_alpha_deg, 1),
                fo(x.largest_alpha_speed_mps, 1),
                f(x.time_beyond_stall_s, 2),
                if flown.is_empty() {
                    "never".into()
                } else {
                    flown.join(", ")
                },
                if x.steady_stalled.is_empty() {
                    "none".into()
                } else {
                    bands_text(&x.steady_stalled)
                },
                c.and_then(|c| c.agreement)
                    .map_or("\u{2013}".into(), |a| format!("{} %", f(100.0 * a, 0))),
            ],
        );
    }
    out.push_str(&tb.html(""));
    for c in cmp.iter().filter(|c| !c.note.is_empty()) {
        let _ = writeln!(
            out,
            "<p class=\"lead\">{}: {}</p>",
            escape(&c.surface),
            escape(&c.note)
        );
    }
    figure(
        out,
        &inp.figures.flight_alpha,
        "Angle of attack of each loaded part of every surface against time, with its stall angles; shading marks time beyond stall; gaps: the part carries too little load to count.",
    );
    if !s.rotors.is_empty() {
        out.push_str("<h3>Rotor groups in flight</h3>\n");
        let mut tb = Table::new(
            &[
                "group",
                "peak thrust (N)",
                "at (s)",
                "thrust cap (N)",
                "peak power (W)",
                "at (s)",
                "power available (W)",
                "energy (kJ)",
            ],
            &[false, true, true, true, true, true, true, true],
        );
        for r in &s.rotors {
            tb.row(
                r.peak_power_w > 0.98 * r.power_available_w
                    || r.peak_thrust_n > 0.98 * r.thrust_cap_n,
                vec![
                    r.name.clone(),
                    f(r.peak_thrust_n, 1),
                    f(r.peak_thrust_at_s, 1),
                    f(r.thrust_cap_n, 1),
                    f(r.peak_power_w, 0),
                    f(r.peak_power_at_s, 1),
                    f(r.power_available_w, 0),
                    f(r.energy_j / 1000.0, 1),
                ],
            );
        }
        out.push_str(&tb.html(""));
    }
    figure(
        out,
        &inp.figures.flight_controls,
        "Thrust and shaft power of every rotor group with what is available, and elevator deflection with its limits, against time.",
    );
    data_links(out, inp.files, &["flight.csv", "flight.json"]);
    out.push_str("<h3>Back-transition (cruise to hover)</h3>\n");
    match &inp.flight_back {
        Ok(b) => {
            out.push_str("<p>The same law flown from the highest trimmed table speed down to hover at the scenario's deceleration.</p>\n");
            out.push_str(&flight_table(&b.summary).html(""));
            data_links(
                out,
                inp.files,
                &["back-transition/flight.csv", "back-transition/flight.json"],
            );
        }
        Err(why) => not_available(out, why),
    }
    out.push_str("</section>\n");
}

/// A numeric cell of the trim table shortened to about four significant digits.
/// How a trim-table column is shown: its name without the unit, the unit, the factor from
/// the file's value, and the decimals (`None`: scientific with one decimal, for residuals).
#[derive(Debug, Clone, PartialEq)]
struct ColumnFormat {
    name: String,
    unit: &'static str,
    factor: f64,
    digits: Option<usize>,
}

/// The format of a trim-table column from its header (units in the name, as in trim.csv):
/// one precision per column, chosen by its unit.
fn column_format(header: &str) -> ColumnFormat {
    const UNITS: [(&str, &str, usize); 10] = [
        ("_rad_s2", "rad/s\u{b2}", 2),
        ("_per_s", "1/s", 3),
        ("_mps", "m/s", 1),
        ("_deg", "deg", 1),
        ("_db", "dB", 1),
        ("_pct", "% chord", 1),
        ("_nm", "N m", 1),
        ("_w", "W", 0),
        ("_n", "N", 1),
        ("_s", "s", 2),
    ];
    let fraction = header.starts_with("thrust_margin")
        || header.starts_with("power_margin")
        || header == "lift_share";
    if fraction {
        return ColumnFormat {
            name: header.replace('_', " "),
            unit: "%",
            factor: 100.0,
            digits: Some(0),
        };
    }
    for (suffix, unit, digits) in UNITS {
        if let Some(stem) = header.strip_suffix(suffix) {
            return ColumnFormat {
                name: stem.replace('_', " "),
                unit,
                factor: 1.0,
                digits: (!header.starts_with("residual")).then_some(digits),
            };
        }
    }
    ColumnFormat {
        name: header.replace('_', " "),
        unit: "",
        factor: 1.0,
        digits: Some(3),
    }
}

/// A trim-table cell in its column's format, and whether it is a number. Text cells are kept;
/// an empty cell stays empty; a minus is a typographic minus; a value that rounds to zero
/// prints unsigned.
fn format_cell(c: &str, f: &ColumnFormat) -> (String, bool) {
    match c.parse::<f64>() {
        Ok(v) if v.is_finite() => {
            let x = v * f.factor;
            let s = match f.digits {
                Some(d) => super::text::num(x, d),
                None if x == 0.0 => "0".to_string(),
                None => format!("{x:.1e}"),
            };
            (s.replacen('-', "\u{2212}", 1), true)
        }
        _ => (c.to_string(), false),
    }
}

fn trim_table_section(out: &mut String, inp: &ReportInputs) {
    let t = section_titles();
    open_section(
        out,
        "trim-table",
        t[8],
        "Every sweep point: trim, controls, per-surface angle of attack and margins, headline margins, residuals and reasons. Empty cells: no value (untrimmable point, or not wingborne).",
    );
    let (h, rows) = super::sweep_files::trim_table(&inp.sweep.points);
    let has_csv = inp.files.iter().any(|f| f == "trim.csv");
    let _ = writeln!(
        out,
        "<details><summary>Show the trim table ({} points, {} columns)</summary>",
        rows.len(),
        h.len()
    );
    let formats: Vec<ColumnFormat> = h.iter().map(|c| column_format(c)).collect();
    let mut o = String::from("<div class=\"tablebox\"><table class=\"data wide\"><thead><tr>");
    for c in &formats {
        // Name over unit; long names break at their spaces only.
        let _ = write!(
            o,
            "<th>{}<br><span class=\"unit\">{}</span></th>",
            escape(&c.name),
            escape(c.unit)
        );
    }
    o.push_str("</tr></thead><tbody>\n");
    for (r, p) in rows.iter().zip(&inp.sweep.points) {
        o.push_str(if p.trimmed && p.reasons.is_empty() {
            "<tr>"
        } else {
            "<tr class=\"flag\">"
        });
        let last = r.len().saturating_sub(1);
        for (k, c) in r.iter().enumerate() {
            let (s, n) = formats
                .get(k)
                .map_or((c.clone(), false), |f| format_cell(c, f));
            let class = if k == last && !n {
                " class=\"reasons\""
            } else if n {
                " class=\"n\""
            } else {
                ""
            };
            let _ = write!(o, "<td{class}>{}</td>", escape(&s));
        }
        o.push_str("</tr>\n");
    }
    o.push_str("</tbody></table></div>\n");
    out.push_str(&o);
    out.push_str("</details>\n");
    if has_csv {
        out.push_str("<p class=\"files\">The full-precision table: <a class=\"data-link\" href=\"trim.csv\">trim.csv</a> (units in every header); every point with its linear model: <a class=\"data-link\" href=\"sweep.json\">sweep.json</a>.</p>\n");
    } else {
        not_available(out, "trim.csv was not written beside this report");
    }
    out.push_str(
        "<p class=\"print-only\">(In print the table stays folded; it is in trim.csv.)</p>\n",
    );
    out.push_str("</section>\n");
}

fn assumptions_section(out: &mut String, inp: &ReportInputs) {
    let t = section_titles();
    open_section(out, "assumptions", t[9], "");
    let items = [
        "Longitudinal motion only: a rigid body with states u, w, q, theta (and x, h in the flight). No sideslip, roll or yaw, no lateral-directional modes, no structural flexibility.",
        "Quasi-steady aerodynamics: each surface's loads come from its static polar at its own local angle of attack and dynamic pressure. No dynamic stall, no stall hysteresis, no unsteady wake; loads beyond stall come from a flat-plate model and are estimates.",
        "Rotors and propellers by momentum theory (an ideal actuator disc) with inclined inflow, a figure of merit or induced power factor, and an empirical fit in the vortex-ring region. No blade-element effects, flapping, rotor-rotor interference or ground effect.",
        "Slipstream: a fixed share of each immersed surface sees the wake velocity (a wake factor times the induced velocity along the rotor axis); no wake contraction, swirl or deflection by the wing.",
        "Downwash at a tail from a constant gradient d\u{3b5}/d\u{3b1} of the upstream surface's lift.",
        "Atmosphere: International Standard Atmosphere troposphere with a temperature offset. Trim points in still air; the flight adds only the scenario's steady wind and optional 1-cosine gust.",
        "Mass, inertia and centre of gravity fixed over the transition (the mass case scales the inertia with mass).",
        "Linear models by central differences about each trim point: valid for small perturbations near that point only. Mode names follow what the eigenvector moves; MIL-F-8785C levels are indications.",
        "Corridor on a grid: boundaries lie halfway between grid points, so their resolution is the grid step. For tilt vehicles the trimmed pitch attitude is bounded inside the corridor (default \u{2212}15 to 20 deg, common practice).",
        "Flight: the feedback law (pitch attitude, speed and height hold with a pseudo-inverse allocation) is a simple documented law to exercise the transition, not a flight-control design. Tilt actuators have a rate limit and servo lag, rotors a first-order thrust lag, elevators act at once.",
    ];
    out.push_str("<ul class=\"plain\">\n");
    for i in items {
        let _ = writeln!(out, "<li>{}</li>", escape(i));
    }
    out.push_str("</ul>\n");
    let th = &inp.scenario.file.thresholds;
    out.push_str("<h3>Thresholds used</h3>\n");
    let mut tb = Table::new(&["margin", "threshold"], &[false, true]);
    for (k, v) in [
        (
            "stall margin of any loaded surface part",
            format!("{} deg", f(th.stall_margin_deg, 1)),
        ),
        (
            "thrust margin of a rotor group",
            format!("{} % of thrust available", f(100.0 * th.thrust_margin, 0)),
        ),
        (
            "power margin of a rotor group",
            format!("{} % of power available", f(100.0 * th.power_margin, 0)),
        ),
        (
            "pitch authority, nose-up and nose-down",
            format!("{} rad/s\u{b2}", f(th.pitch_accel_rad_s2, 2)),
        ),
        (
            "elevator travel left",
            format!("{} deg", f(th.elevator_margin_deg, 1)),
        ),
        (
            "static margin where wingborne",
            format!("{} % chord", f(th.static_margin_pct, 1)),
        ),
        (
            "stalled load share (stalled wing and tail parts, q S over weight)",
            format!("{} % of the weight", f(100.0 * th.stalled_load_share, 0)),
        ),
        (
            "time to double of an unstable open-loop mode",
            if th.time_to_double_s > 0.0 {
                format!("{} s", f(th.time_to_double_s, 1))
            } else {
                "not judged (0): the closed loop decides".to_string()
            },
        ),
        (
            "closed loop with the feedback law, at every point",
            "stable, and stable with control effectiveness \u{d7}0.8 and \u{d7}1.2".to_string(),
        ),
        (
            "loop gain margin covered by the disk margin (each loop broken in turn)",
            format!("\u{b1}{} dB", f(th.gain_margin_db, 1)),
        ),
        (
            "loop phase margin covered by the disk margin",
            format!("\u{b1}{} deg", f(th.phase_margin_deg, 1)),
        ),
        (
            "symmetric disk margin, nominal and in the mismatch cases",
            format!(
                "{} (the disk that covers both)",
                f(
                    crate::control::loops::disk_margin_for(th.gain_margin_db, th.phase_margin_deg),
                    2
                )
            ),
        ),
    ] {
        tb.row(false, vec![k.to_string(), v]);
    }
    out.push_str(&tb.html(""));
    out.push_str("<p class=\"lead\">Default thresholds are common practice for preliminary design, not requirements; a scenario file may set its own. The verdict's severities follow from them by the rule stated in the verdict section.</p>\n");
    out.push_str("</section>\n");
}

fn cautions_section(out: &mut String) {
    let t = section_titles();
    open_section(out, "cautions", t[10], "");
    let items = [
        "This report is a preliminary design aid. Its numbers come from quasi-steady, simplified models of an idealised vehicle and are only as good as the vehicle file.",
        "It is not a flight clearance and does not show that any vehicle is safe to fly.",
        "Defer to the applicable airworthiness authority and its regulations, to local aviation rules, and to licensed flight-test practice (build-up, test cards, limits and safety pilots) before any flight.",
        "Margins and unsafe bands are judged against thresholds chosen for preliminary design; published handling-qualities criteria appear as indications only.",
    ];
    out.push_str("<ul class=\"plain\">\n");
    for i in items {
        let _ = writeln!(out, "<li>{}</li>", escape(i));
    }
    out.push_str("</ul>\n</section>\n");
}

fn methods_section(out: &mut String) {
    let t = section_titles();
    open_section(
        out,
        "methods",
        t[11],
        "Published methods the analysis uses, with the references named in the code's module documentation.",
    );
    let items = [
        ("Atmosphere", "International Standard Atmosphere troposphere with a temperature offset; viscosity by Sutherland's law.", "ICAO, Manual of the ICAO Standard Atmosphere, Doc 7488; U.S. Standard Atmosphere, 1976 (NOAA/NASA/USAF)."),
        ("Finite-wing lift slope", "Helmbold's relation or Prandtl's lifting-line slope from the section slope and aspect ratio.", "Helmbold, H. B., 1942 (lift slope of low-aspect-ratio wings); Prandtl's lifting-line theory as in Anderson, J. D., Fundamentals of Aerodynamics."),
        ("Full-circle polars", "Attached flow blended into flat-plate flow beyond stall, reverse flow handled, centre of pressure moving to mid-chord.", "Viterna, L. A. and Corrigan, R. D., Fixed pitch rotor performance of large horizontal axis wind turbines, NASA Lewis, 1982; Hoerner, S. F., Fluid-Dynamic Drag, 1965."),
        ("Rotors", "Momentum theory with inclined inflow (Glauert), vortex-ring region by an empirical fit, shaft power with a figure of merit or induced power factor, momentum drag.", "Leishman, J. G., Principles of Helicopter Aerodynamics, 2nd ed., 2006, ch. 2; Johnson, W., Helicopter Theory, 1980."),
        ("Rigid-body dynamics", "3-DOF longitudinal equations of motion in body axes.", "Etkin, B. and Reid, L. D., Dynamics of Flight: Stability and Control."),
        ("Trim", "Bounded gradient projection with minimum-norm Gauss-Newton restoration; Nelder-Mead simplex (argmin) for the non-smooth stall-margin objective.", "Nelder, J. A. and Mead, R., A simplex method for function minimization, The Computer Journal, 1965."),
        ("Linear models and modes", "A and B by central differences; eigenvalues, natural frequency, damping ratio, period, time to half or double; short-period and phugoid named as in the textbooks; handling-qualities levels as an indication.", "Etkin and Reid, Dynamics of Flight; Nelson, R. C., Flight Stability and Automatic Control; MIL-F-8785C, Flying Qualities of Piloted Airplanes, 1980."),
        ("Corridor", "Trim map over airspeed and the transition variable; boundaries by marching squares on the inside/outside field.", "Common practice in computer graphics (contouring on a grid)."),
        ("Schedule", "Bottleneck (max-min) path by dynamic programming over the knots, refined by golden-section search with re-trim.", "Bellman, R., Dynamic Programming, 1957; Kiefer, J., Sequential minimax search for a maximum, Proc. AMS, 1953."),
        ("Flight in time", "Dormand-Prince 5(4) adaptive Runge-Kutta integration (ode_solvers); 1-cosine discrete gust; loop gains by pole placement.", "Dormand, J. R. and Prince, P. J., A family of embedded Runge-Kutta formulae, J. Comp. Appl. Math., 1980; MIL-F-8785C discrete gust; Franklin, Powell and Emami-Naeini, Feedback Control of Dynamic Systems, ch. 4 and 7."),
    ];
    let mut tb = Table::new(&["what", "method", "reference"], &[false, false, false]);
    for (a, b, c) in items {
        tb.row(false, vec![a.into(), b.into(), c.into()]);
    }
    out.push_str(&tb.html(""));
    out.push_str("<p class=\"lead\">The figures on this page name the sans-serif font family, which the browser draws with a font of its own; their PNG copies beside the report carry the embedded DejaVu Sans (Bitstream Vera licence). Colours follow the Okabe-Ito colour-blind-safe palette, with line patterns that also differ.</p>\n");
    out.push_str("</section>\n");
}

/// The whole page as one HTML string (UTF-8, no external resources).
pub fn html(inp: &ReportInputs) -> String {
    let sc = inp.scenario;
    let t = section_titles();
    let mut o = String::with_capacity(2_000_000);
    let _ = write!(
        o,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<meta name=\"generator\" content=\"hoverline {}\">\n<title>{} \u{2014} {}: transition report</title>\n<style>{STYLE}</style>\n</head>\n<body>\n",
        env!("CARGO_PKG_VERSION"),
        escape(&sc.vehicle.name),
        escape(&sc.file.name)
    );
    headline(&mut o, inp);
    o.push_str("<main>\n");
    verdict(&mut o, inp);
    corridor_section(&mut o, inp);
    simple_figure_section(
        &mut o,
        "trim-curves",
        t[3],
        "Trimmed pitch attitude, tilt, rotor thrust and elevator along the speed sweep (the schedule in use). Gaps: untrimmable points.",
        &inp.figures.trim_curves,
        "Trim along the sweep against airspeed; untrimmable points leave gaps, never zeros.",
        inp.files,
    );
    simple_figure_section(
        &mut o,
        "surface-alpha",
        t[4],
        "Angle of attack of each surface (its clean part and its most critical part, slipstream included) against airspeed, with its stall angles.",
        &inp.figures.surface_alpha,
        "Shading: speeds where a loaded part of the surface is beyond a stall angle; lines at the positive and negative stall angles.",
        inp.files,
    );
    simple_figure_section(
        &mut o,
        "margins",
        t[5],
        "Stall, thrust, power, pitch-authority, static and elevator margins and the largest eigenvalue real part, against the scenario thresholds.",
        &inp.figures.margins,
        &format!(
            "Shading: unsafe bands (a margin below its threshold or an untrimmable point); {} and {} vermillion lines: thresholds.",
            pattern(super::plots::THRESHOLD),
            pattern(super::plots::THRESHOLD_2)
        ),
        inp.files,
    );
    modes_section(&mut o, inp);
    flight_section(&mut o, inp);
    trim_table_section(&mut o, inp);
    assumptions_section(&mut o, inp);
    cautions_section(&mut o);
    methods_section(&mut o);
    o.push_str("</main>\n<footer>\n");
    let files: Vec<String> = inp
        .files
        .iter()
        .map(|f| format!("<a href=\"{0}\">{0}</a>", escape(f)))
        .collect();
    let _ = writeln!(
        o,
        "<p class=\"files\">Written by hoverline {} on {} (UTC). Files beside this report: {}.</p>",
        env!("CARGO_PKG_VERSION"),
        escape(inp.date_utc),
        if files.is_empty() {
            "none".to_string()
        } else {
            files.join(", ")
        }
    );
    let _ = writeln!(o, "<p>{}</p>", escape(super::CAUTION));
    o.push_str("</footer>\n</body>\n</html>\n");
    o
}

/// Write `report.html` into `dir` (whole or not at all) and return its path.
pub fn write(dir: &Path, inp: &ReportInputs) -> Result<PathBuf, WriteError> {
    let p = dir.join(REPORT_FILE);
    write_atomic(&p, html(inp).as_bytes())?;
    Ok(p)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_match_the_posix_calendar() {
        // Source: GNU coreutils `date -u -d @N` on this machine (POSIX seconds since the epoch).
        assert_eq!(utc_date(0), "1970-01-01");
        assert_eq!(utc_date(951_868_800), "2000-03-01");
        assert_eq!(utc_date(1_709_164_800), "2024-02-29");
        assert_eq!(utc_date(4_102_444_800), "2100-01-01");
        assert_eq!(utc_date(-1), "1969-12-31");
    }

    #[test]
    fn escaping_covers_markup_characters() {
        assert_eq!(
            escape("<a href=\"x\">'&'</a>"),
            "&lt;a href=&quot;x&quot;&gt;&#39;&amp;&#39;&lt;/a&gt;"
        );
    }

    #[test]
    fn svg_prologue_is_dropped_and_scripts_refused() {
        let s = "<?xml version=\"1.0\"?>\n<!-- c -->\n<svg viewBox=\"0 0 1 1\"><rect/></svg>\n";
        assert_eq!(
            inline_svg(s).unwrap(),
            "<svg viewBox=\"0 0 1 1\"><rect/></svg>"
        );
        assert!(inline_svg("<svg><script>x</script></svg>").is_err());
        assert!(inline_svg("<html></html>").is_err());
    }

    #[test]
    fn numbers_use_a_true_minus_and_no_negative_zero() {
        assert_eq!(f(-0.0001, 2), "0.00");
        assert_eq!(f(-1.26, 1), "\u{2212}1.3");
        assert_eq!(f(f64::NAN, 1), "\u{2013}");
        assert_eq!(sig(0.000346, 3), "0.000346");
        assert_eq!(sig(-2.7043, 3), "\u{2212}2.70");
        assert_eq!(spd(0.25), "0.25");
        assert_eq!(spd(3.0), "3.0");
    }
}
