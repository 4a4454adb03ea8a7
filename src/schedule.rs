//! The transition schedule (DEVELOPERS.md, "Corridor and schedule"): the transition variable (tilt, or pitch attitude for
//! a vehicle without a tilt actuator) as a function of airspeed from hover to cruise, chosen to
//! make the smallest margin along it as large as possible.
//!
//! # Problem
//! A schedule is a piecewise-linear table y(V) with knots at every `stride`-th speed of the
//! corridor grid (about every [`DEFAULT_KNOT_SPACING_MPS`]). It must
//! - stay inside the corridor at every grid speed (between two grid values the margin is
//!   interpolated linearly when both are inside, else the nearer grid value decides, see
//!   [`MarginGrid::at`]);
//! - be monotone: y non-increasing from hover to cruise;
//! - respect the actuator rate at the planned acceleration a: the variable changes at
//!   dy/dt = (dy/dV) a, so |dy/dV| <= r / a with r the tilt actuator's rate limit (the slowest
//!   actuator) or, for pitch, [`PITCH_RATE_LIMIT_DEG_S`];
//! - be smooth: the second derivative estimated on the knots,
//!   y'' = 2 (s_k - s_{k-1}) / (h_{k-1} + h_k) with s_k the slope of segment k and h_k its
//!   speed span, satisfies |y''| <= the scenario's `smoothness_deg_per_mps2`.
//!
//! For a tilt vehicle the schedule ends at the cruise tilt (the lowest angle of the actuators)
//! at the last speed; a pitch schedule ends wherever the margins are best.
//!
//! The objective is the bottleneck min over the path of the smallest normalised margin
//! ([`crate::corridor`]); among the schedules that reach the best bottleneck, the one with the
//! largest sum of margins over the grid speeds is kept, each margin clamped at [`MARGIN_CAP`]
//! (twice the threshold: beyond it a point is good enough, and no single large margin buys the
//! rest); at equal sums the schedule that converts earlier wins ([`EARLY_WEIGHT`]).
//!
//! # Method
//! 1. Dynamic programming over the knots (Bellman's principle; the bottleneck "max-min" path
//!    problem): the state at knot k is (row at k, row at k-1), which carries the slope the
//!    smoothness bound needs; the value is the best bottleneck of any admissible path reaching
//!    it. Stage cost: the min of the interpolated margin over the grid speeds of the segment. A
//!    second pass with the bottleneck as a floor maximises the sum of clamped margins.
//!    Cost O(K n D^2) for K knots, n grid values and D the largest rate-limited row step.
//! 2. Continuous refinement: each knot in turn (knots three apart at once, since the
//!    constraints couple a knot only to two neighbours each side) is moved within one grid
//!    step, inside the interval that keeps monotonicity, rate and smoothness with its
//!    neighbours fixed, by golden-section search on the smallest of the re-trimmed margin at
//!    the knot and the interpolated margins of its two segments; a move is kept only when it
//!    raises that local minimum. Two sweeps over all knots.
//! 3. Verification: the final table is re-trimmed at every grid speed; the worst point and its
//!    margin come from these trims, not from the grid.
//!
//! # When no schedule stays inside
//! If no admissible path stays inside the corridor (a hover that is outside because of a fast
//! bare-airframe instability, a band where every value stalls a loaded surface), the same two
//! passes run on every trimmed point, a point outside the corridor valued by its (negative)
//! margin [`OUTSIDE_PENALTY`] lower ([`relaxed_margin`]): the schedule then keeps the worst
//! margin as large as it can and leaves the corridor at as few grid speeds as it can with
//! that, and the result says so ([`BuiltSchedule::left_corridor`]).
//!
//! The scenario's own schedule (or its free trim, when it has none) is evaluated the same way
//! at the same speeds and compared point by point.

use rayon::prelude::*;
use serde::Serialize;

use crate::atmosphere::Atmosphere;
use crate::corridor::{
    classify, evaluate_point, request, Corridor, CorridorPoint, CorridorSettings, Variable,
};
use crate::scenario::{Scenario, Schedule, ScheduleDocument, ScheduleFile, ScheduleMode};
use crate::trim::{trim, Condition, TiltSetting, TrimGuess};
use crate::vehicle::Vehicle;

/// Pitch-rate limit used as the "actuator" rate of a pitch schedule (deg/s): common practice,
/// no source (small VTOL attitude loops commonly cap commanded pitch rate near 20 deg/s).
pub const PITCH_RATE_LIMIT_DEG_S: f64 = 20.0;

/// Default speed spacing of the schedule's knots (m/s).
pub const DEFAULT_KNOT_SPACING_MPS: f64 = 1.0;

/// Clamp on each point's margin in the secondary (sum) objective (1 = twice the threshold).
pub const MARGIN_CAP: f64 = 1.0;

/// Weight of the transition variable (per rad, per grid speed) in the secondary objective: at
/// equal clamped margins the schedule that converts earlier wins.
pub const EARLY_WEIGHT: f64 = 1e-3;

/// Offset that ranks a trimmed point outside the corridor below every inside point when no
/// schedule can stay inside (relaxed mode); the sum pass charges it for every such point.
pub const OUTSIDE_PENALTY: f64 = 1000.0;

/// Tolerance on constraint checks (rad, rad per m/s).
const EPS: f64 = 1e-9;

/// What goes wrong while building a schedule.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ScheduleError {
    /// No admissible path crosses the corridor.
    #[error("{}{}", no_path_text(*.reached_mps, *.end_mps), hint_text(.hint))]
    NoPath {
        /// Highest speed an admissible path reaches (m/s); None when not even the first speed
        /// has a point inside.
        reached_mps: Option<f64>,
        /// Last speed of the grid (m/s).
        end_mps: f64,
        /// What to try.
        hint: String,
    },
    /// The grid or the settings are unusable.
    #[error("schedule settings: {0}")]
    Settings(String),
}

fn no_path_text(reached_mps: Option<f64>, end_mps: f64) -> String {
    match reached_mps {
        Some(v) => format!(
            "no schedule fits inside the corridor beyond {v:.2} m/s (the grid ends at {end_mps:.2} m/s)"
        ),
        None => "no schedule fits inside the corridor: its first speed has no point inside".into(),
    }
}

fn hint_text(h: &str) -> String {
    if h.is_empty() {
        String::new()
    } else {
        format!("; hint: {h}")
    }
}

/// A grid of margins: `margin[i][j]` at speed i and value j; None = outside the corridor.
#[derive(Debug, Clone, PartialEq)]
pub struct MarginGrid {
    /// Speeds (m/s), strictly increasing.
    pub speeds_mps: Vec<f64>,
    /// Values of the transition variable (rad), strictly increasing.
    pub values_rad: Vec<f64>,
    /// Margin at each grid point, None outside.
    pub margin: Vec<Vec<Option<f64>>>,
}

impl MarginGrid {
    /// The inside margins of a corridor (strict), or, `relaxed`, every trimmed point valued by
    /// [`relaxed_margin`].
    pub fn of(c: &Corridor, relaxed: bool) -> MarginGrid {
        let margin = if relaxed {
            (0..c.speeds_mps.len())
                .map(|i| {
                    (0..c.values_deg.len())
                        .map(|j| relaxed_margin(c, c.at(i, j)))
                        .collect()
                })
                .collect()
        } else {
            c.inside_margins()
        };
        MarginGrid {
            speeds_mps: c.speeds_mps.clone(),
            values_rad: c.values_deg.iter().map(|d| d.to_radians()).collect(),
            margin,
        }
    }

    /// Margin at speed index `i` and value `y` (rad): linear between the two neighbouring grid
    /// values when both are admissible, else the nearer one's (None when that one is not);
    /// None outside the grid. The nearer-value rule keeps paths through corridors narrower
    /// than one grid step possible (pitch-held corridors narrow as 1/V^2); the re-trim along
    /// the final schedule checks them.
    pub fn at(&self, i: usize, y: f64) -> Option<f64> {
        let v = &self.values_rad;
        let n = v.len();
        let row = self.margin.get(i)?;
        if n == 0 || y < v[0] - EPS || y > v[n - 1] + EPS {
            return None;
        }
        let j = v
            .partition_point(|&x| x <= y + EPS)
            .saturating_sub(1)
            .min(n - 1);
        if (y - v[j]).abs() <= EPS || j + 1 >= n {
            return row[j];
        }
        let t = (y - v[j]) / (v[j + 1] - v[j]);
        if t >= 1.0 - 1e-12 {
            return row[j + 1];
        }
        match (row[j], row[j + 1]) {
            (Some(a), Some(b)) => Some(a + t * (b - a)),
            (a, b) => {
                if t < 0.5 {
                    a
                } else {
                    b
                }
            }
        }
    }

    fn check(&self) -> Result<(), ScheduleError> {
        let inc = |x: &[f64]| {
            !x.is_empty() && x.iter().all(|a| a.is_finite()) && x.windows(2).all(|w| w[1] > w[0])
        };
        if !inc(&self.speeds_mps) || !inc(&self.values_rad) {
            return Err(ScheduleError::Settings(
                "grid axes must be finite and increasing".into(),
            ));
        }
        if self.margin.len() != self.speeds_mps.len()
            || self.margin.iter().any(|r| r.len() != self.values_rad.len())
        {
            return Err(ScheduleError::Settings(
                "margin grid does not match its axes".into(),
            ));
        }
        Ok(())
    }
}

/// Pitch-attitude excess beyond the corridor's limits that counts as one threshold unit in the
/// relaxed ranking (deg): a ranking device, no source.
pub const PITCH_EXCESS_SCALE_DEG: f64 = 5.0;

/// A point's value in relaxed mode: inside, its smallest margin; outside, the smaller of its
/// smallest margin and the pitch-attitude excess scaled by [`PITCH_EXCESS_SCALE_DEG`]
/// (-1 - excess / scale), minus [`OUTSIDE_PENALTY`], minus one more per further hard limit
/// crossed; untrimmed, None.
pub fn relaxed_margin(c: &Corridor, p: &CorridorPoint) -> Option<f64> {
    if !p.trimmed {
        return None;
    }
    let m = p
        .smallest_margin
        .unwrap_or(MARGIN_CAP)
        .max(-0.25 * OUTSIDE_PENALTY);
    if p.inside {
        return Some(m);
    }
    let excess = match (c.pitch_limits_deg, p.pitch_deg) {
        (Some((lo, hi)), Some(th)) => (lo - th).max(th - hi).max(0.0),
        _ => 0.0,
    };
    let pitch = if excess > 0.0 {
        -1.0 - excess / PITCH_EXCESS_SCALE_DEG
    } else {
        f64::INFINITY
    };
    let extra = p.violations.len().saturating_sub(1) as f64;
    Some(m.min(pitch).min(0.0) - OUTSIDE_PENALTY - extra)
}

/// Constraints on a schedule, SI.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Constraints {
    /// Largest |dy/dV| (rad per m/s): rate limit over planned acceleration.
    pub max_slope_rad_per_mps: f64,
    /// Largest |d2y/dV2| on the knots (rad per (m/s)^2).
    pub max_curvature_rad_per_mps2: f64,
    /// Grid speeds per knot interval (>= 1).
    pub knot_stride: usize,
    /// Value the schedule must end at (rad), on the nearest grid value; None = free.
    pub end_value_rad: Option<f64>,
}

/// Columns of the knots: every `stride`-th column and the last one.
pub fn knot_columns(n_speeds: usize, stride: usize) -> Vec<usize> {
    if n_speeds == 0 {
        return Vec::new();
    }
    let stride = stride.max(1);
    let mut k: Vec<usize> = (0..n_speeds).step_by(stride).collect();
    if k.last() != Some(&(n_speeds - 1)) {
        k.push(n_speeds - 1);
    }
    k
}

/// Whether knot values `y` (rad) at `knots` (columns) meet monotonicity, rate and smoothness.
pub fn admissible(speeds_mps: &[f64], knots: &[usize], y: &[f64], c: &Constraints) -> bool {
    let n = knots.len().min(y.len());
    let h = |k: usize| speeds_mps[knots[k]] - speeds_mps[knots[k - 1]];
    for k in 1..n {
        let d = y[k - 1] - y[k];
        if d < -EPS || d > c.max_slope_rad_per_mps * h(k) + EPS {
            return false;
        }
        if k >= 2 {
            let s1 = (y[k - 1] - y[k - 2]) / h(k - 1);
            let s2 = (y[k] - y[k - 1]) / h(k);
            if (2.0 * (s2 - s1) / (h(k - 1) + h(k))).abs() > c.max_curvature_rad_per_mps2 + EPS {
                return false;
            }
        }
    }
    true
}

/// Bottleneck margin of a piecewise-linear path through the knots over every grid speed;
/// None when any point leaves the corridor.
pub fn path_margin(g: &MarginGrid, knots: &[usize], y: &[f64]) -> Option<f64> {
    let mut worst = g.at(*knots.first()?, *y.first()?)?;
    for k in 1..knots.len() {
        let (seg, _) = segment(g, knots[k - 1], knots[k], y[k - 1], y[k])?;
        worst = worst.min(seg);
    }
    Some(worst)
}

/// Min and clamped sum of the margin over columns (c0, c1] of a straight segment.
fn segment(g: &MarginGrid, c0: usize, c1: usize, y0: f64, y1: f64) -> Option<(f64, f64)> {
    let v0 = g.speeds_mps[c0];
    let h = g.speeds_mps[c1] - v0;
    let mut lo = f64::INFINITY;
    let mut sum = 0.0;
    for i in c0 + 1..=c1 {
        let t = if h > 0.0 {
            (g.speeds_mps[i] - v0) / h
        } else {
            1.0
        };
        let y = if i == c1 { y1 } else { y0 + t * (y1 - y0) };
        let m = g.at(i, y)?;
        lo = lo.min(m);
        sum += m.min(MARGIN_CAP) - EARLY_WEIGHT * y;
    }
    Some((lo, sum))
}

/// A path found on the grid.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GridPath {
    /// Columns of the knots.
    pub knots: Vec<usize>,
    /// Row of the value at each knot.
    pub rows: Vec<usize>,
    /// Bottleneck margin along the path.
    pub smallest_margin: f64,
    /// Sum over the grid speeds of the margin clamped at [`MARGIN_CAP`] less
    /// [`EARLY_WEIGHT`] times the value (rad).
    pub clamped_sum: f64,
}

/// Dynamic programming over the knots (see the module documentation): the admissible path
/// with the largest bottleneck margin and, among those, the largest clamped sum.
pub fn optimise(g: &MarginGrid, c: &Constraints) -> Result<GridPath, ScheduleError> {
    g.check()?;
    if !(c.max_slope_rad_per_mps >= 0.0 && c.max_curvature_rad_per_mps2 >= 0.0) {
        return Err(ScheduleError::Settings(
            "rate and smoothness bounds must be non-negative".into(),
        ));
    }
    let knots = knot_columns(g.speeds_mps.len(), c.knot_stride);
    let first = dp(g, c, &knots, None)?;
    let floor = first.smallest_margin - 1e-12 * first.smallest_margin.abs().max(1.0);
    let second = dp(g, c, &knots, Some(floor))?;
    Ok(second)
}

/// Refuse an optimiser table of more than [`crate::limits::MAX_SCHEDULE_CELLS`] cells
/// (`knots` x `values` x `values`).
fn table_size(knots: usize, values: usize) -> Result<(), ScheduleError> {
    let cells = knots as f64 * values as f64 * values as f64;
    if cells > crate::limits::MAX_SCHEDULE_CELLS as f64 {
        return Err(ScheduleError::Settings(format!(
            "the optimiser's table would have {cells:.3e} cells (knots x values x values); hint: use a larger --value-step or --knot-spacing (at most {} cells)",
            crate::limits::MAX_SCHEDULE_CELLS
        )));
    }
    Ok(())
}

fn dp(
    g: &MarginGrid,
    c: &Constraints,
    knots: &[usize],
    floor: Option<f64>,
) -> Result<GridPath, ScheduleError> {
    let nv = g.values_rad.len();
    let y = &g.values_rad;
    let kk = knots.len();
    // The table holds knots x values x values cells: check before allocating.
    table_size(kk, nv)?;
    let neg = f64::NEG_INFINITY;
    // Value of a state: bottleneck (pass 1) or clamped sum with every margin >= floor (pass 2).
    let init = |j: usize| -> f64 {
        match (g.margin[knots[0]][j], floor) {
            (Some(m), None) => m,
            (Some(m), Some(f)) if m >= f => m.min(MARGIN_CAP) - EARLY_WEIGHT * g.values_rad[j],
            _ => neg,
        }
    };
    let combine = |prefix: f64, seg: (f64, f64)| -> f64 {
        match floor {
            None => prefix.min(seg.0),
            Some(f) => {
                if seg.0 >= f {
                    prefix + seg.1
                } else {
                    neg
                }
            }
        }
    };
    let h = |k: usize| g.speeds_mps[knots[k]] - g.speeds_mps[knots[k - 1]];
    let best0: Vec<f64> = (0..nv).map(init).collect();
    // best[k][j * nv + p]: state with row j at knot k and row p at knot k - 1.
    let mut best: Vec<Vec<f64>> = vec![Vec::new(); kk];
    let mut back: Vec<Vec<u32>> = vec![Vec::new(); kk];
    let mut reached = if best0.iter().any(|v| v.is_finite()) {
        Some(0)
    } else {
        None
    };
    for k in 1..kk {
        let hk = h(k);
        let mut b = vec![neg; nv * nv];
        let mut bk = vec![u32::MAX; nv * nv];
        for j in 0..nv {
            for p in j..nv {
                if y[p] - y[j] > c.max_slope_rad_per_mps * hk + EPS {
                    break;
                }
                // Best predecessor value.
                let (pv, arg) = if k == 1 {
                    (best0[p], u32::MAX)
                } else {
                    let prev = &best[k - 1];
                    let hp = h(k - 1);
                    let s2 = (y[j] - y[p]) / hk;
                    let mut bv = neg;
                    let mut ba = u32::MAX;
                    for pp in p..nv {
                        let v = prev[p * nv + pp];
                        if v == neg {
                            continue;
                        }
                        let s1 = (y[p] - y[pp]) / hp;
                        if (2.0 * (s2 - s1) / (hp + hk)).abs() > c.max_curvature_rad_per_mps2 + EPS
                        {
                            continue;
                        }
                        if v > bv {
                            bv = v;
                            ba = pp as u32;
                        }
                    }
                    (bv, ba)
                };
                if pv == neg {
                    continue;
                }
                let Some(seg) = segment(g, knots[k - 1], knots[k], y[p], y[j]) else {
                    continue;
                };
                let v = combine(pv, seg);
                if v > b[j * nv + p] {
                    b[j * nv + p] = v;
                    bk[j * nv + p] = arg;
                }
            }
        }
        if b.iter().any(|v| *v > neg) {
            reached = Some(k);
        }
        best[k] = b;
        back[k] = bk;
    }
    let end = *g.speeds_mps.last().unwrap_or(&0.0);
    let fail = |reached: Option<usize>| {
        ScheduleError::NoPath {
        reached_mps: reached.map(|k| g.speeds_mps[knots[k]]),
        end_mps: end,
        hint: "look at corridor.png for where the corridor pinches; allow a faster rate (larger actuator rate or smaller planned acceleration) or a larger smoothness_deg_per_mps2".into(),
    }
    };
    // Pick the best final state and walk back.
    let mut rows = vec![0usize; kk];
    if kk == 1 {
        let (j, v) = best0
            .iter()
            .enumerate()
            .fold((0, neg), |a, (j, &v)| if v > a.1 { (j, v) } else { a });
        if v == neg {
            return Err(fail(None));
        }
        rows[0] = j;
    } else {
        let last = &best[kk - 1];
        let end_row = c.end_value_rad.map(|e| {
            y.iter()
                .enumerate()
                .min_by(|a, b| (a.1 - e).abs().total_cmp(&(b.1 - e).abs()))
                .map_or(0, |(j, _)| j)
        });
        let (idx, v) = last
            .iter()
            .enumerate()
            .filter(|(i, _)| end_row.is_none_or(|r| i / nv == r))
            .fold((0, neg), |a, (i, &v)| if v > a.1 { (i, v) } else { a });
        if v == neg {
            return Err(fail(reached));
        }
        rows[kk - 1] = idx / nv;
        rows[kk - 2] = idx % nv;
        for k in (2..kk).rev() {
            let pp = back[k][rows[k] * nv + rows[k - 1]];
            rows[k - 2] = pp as usize;
        }
    }
    let ys: Vec<f64> = rows.iter().map(|&j| y[j]).collect();
    let smallest = path_margin(g, knots, &ys).unwrap_or(neg);
    let mut sum =
        g.margin[knots[0]][rows[0]].map_or(0.0, |m| m.min(MARGIN_CAP) - EARLY_WEIGHT * ys[0]);
    for k in 1..kk {
        sum += segment(g, knots[k - 1], knots[k], ys[k - 1], ys[k]).map_or(0.0, |s| s.1);
    }
    Ok(GridPath {
        knots: knots.to_vec(),
        rows,
        smallest_margin: smallest,
        clamped_sum: sum,
    })
}

/// Settings of the schedule builder.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ScheduleSettings {
    /// Planned acceleration along the path (m/s^2).
    pub acceleration_mps2: f64,
    /// Rate limit of the transition variable (rad/s).
    pub rate_limit_rad_s: f64,
    /// Smoothness bound |d2y/dV2| (rad per (m/s)^2).
    pub smoothness_rad_per_mps2: f64,
    /// Knot spacing (m/s).
    pub knot_spacing_mps: f64,
    /// Run the continuous refinement.
    pub refine: bool,
    /// Value the schedule ends at (rad): the cruise tilt (the actuators' lowest common angle)
    /// for tilt vehicles; None (free) for pitch.
    pub end_value_rad: Option<f64>,
}

impl ScheduleSettings {
    /// From a scenario: its planned acceleration and smoothness bound; the slowest tilt
    /// actuator's rate, or [`PITCH_RATE_LIMIT_DEG_S`] for pitch; knots every 1 m/s.
    pub fn for_scenario(sc: &Scenario) -> ScheduleSettings {
        let v = &sc.vehicle;
        let rate = if v.has_tilt() {
            v.actuators
                .iter()
                .map(|a| a.rate_rad_s)
                .fold(f64::INFINITY, f64::min)
        } else {
            PITCH_RATE_LIMIT_DEG_S.to_radians()
        };
        ScheduleSettings {
            acceleration_mps2: sc.file.transition.acceleration_mps2,
            rate_limit_rad_s: rate,
            smoothness_rad_per_mps2: sc.file.transition.smoothness_deg_per_mps2.to_radians(),
            knot_spacing_mps: DEFAULT_KNOT_SPACING_MPS,
            refine: true,
            end_value_rad: v
                .has_tilt()
                .then(|| crate::corridor::default_value_range_rad(v).0),
        }
    }

    /// Check, before the corridor is computed, that the optimiser's table for a grid of
    /// `speeds` x `values` points with speed spacing `dv_mps` stays inside its cell limit.
    pub fn check_grid(
        &self,
        speeds: usize,
        values: usize,
        dv_mps: f64,
    ) -> Result<(), ScheduleError> {
        let stride = self.constraints(dv_mps).knot_stride.max(1);
        table_size(speeds.div_ceil(stride) + 1, values)
    }

    /// The constraints on a grid with speed spacing `dv_mps`.
    pub fn constraints(&self, dv_mps: f64) -> Constraints {
        let stride = if dv_mps > 0.0 {
            (self.knot_spacing_mps / dv_mps).round().max(1.0) as usize
        } else {
            1
        };
        Constraints {
            max_slope_rad_per_mps: self.rate_limit_rad_s / self.acceleration_mps2,
            max_curvature_rad_per_mps2: self.smoothness_rad_per_mps2,
            knot_stride: stride,
            end_value_rad: self.end_value_rad,
        }
    }
}

/// A band of speeds where one schedule is better than the other.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ComparisonBand {
    /// First speed (m/s).
    pub from_mps: f64,
    /// Last speed (m/s).
    pub to_mps: f64,
    /// "built", "scenario" or "equal".
    pub better: String,
    /// Largest margin difference built - scenario over the band where both have one (-).
    pub largest_difference: Option<f64>,
    /// Mean margin difference over the band where both have one (-).
    pub mean_difference: Option<f64>,
}

/// Evaluation of a schedule along the grid speeds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Evaluated {
    /// What was evaluated.
    pub label: String,
    /// The points, one per grid speed.
    pub points: Vec<CorridorPoint>,
    /// The worst point (untrimmed before outside before inside, then by margin).
    pub worst: CorridorPoint,
    /// Smallest margin over the trimmed points.
    pub smallest_margin: Option<f64>,
    /// Points outside the corridor.
    pub outside: usize,
    /// Points that could not be trimmed.
    pub untrimmed: usize,
}

/// A built schedule with its evaluation and the comparison with the scenario's own.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BuiltSchedule {
    /// Transition variable.
    pub variable: Variable,
    /// Knot speeds (m/s).
    pub speed_mps: Vec<f64>,
    /// Knot values after refinement (deg).
    pub value_deg: Vec<f64>,
    /// Knot values from the dynamic programming (deg).
    pub grid_value_deg: Vec<f64>,
    /// Bottleneck margin on the grid (dynamic programming); in relaxed mode points outside the
    /// corridor count [`OUTSIDE_PENALTY`] lower.
    pub grid_smallest_margin: f64,
    /// Why the schedule leaves the corridor, when no schedule can stay inside.
    pub left_corridor: Option<String>,
    /// Constraints used (deg and deg per m/s units).
    pub constraints: ConstraintsReport,
    /// The schedule re-trimmed at every grid speed.
    pub built: Evaluated,
    /// The worst point of the built schedule.
    pub worst: CorridorPoint,
    /// The scenario's own schedule (or free trim) at the same speeds.
    pub scenario: Option<Evaluated>,
    /// Where each is better.
    pub comparison: Vec<ComparisonBand>,
    /// Speed bands where the acceleration available is below the planned acceleration.
    pub short_of_acceleration: Vec<(f64, f64)>,
    /// Wall-clock time of the steps (not written to files).
    #[serde(skip)]
    pub timing: Timing,
}

/// Constraints in file units.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ConstraintsReport {
    /// Planned acceleration (m/s^2).
    pub acceleration_mps2: f64,
    /// Rate limit (deg/s).
    pub rate_limit_deg_s: f64,
    /// Largest |dy/dV| (deg per m/s).
    pub max_slope_deg_per_mps: f64,
    /// Largest |d2y/dV2| (deg per (m/s)^2).
    pub smoothness_deg_per_mps2: f64,
    /// Knot spacing (m/s).
    pub knot_spacing_mps: f64,
}

/// Wall-clock time of the steps (s).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Timing {
    /// Dynamic programming.
    pub dp_s: f64,
    /// Continuous refinement.
    pub refine_s: f64,
    /// Verification and comparison.
    pub verify_s: f64,
}

/// Linear interpolation in a table (clamped), in the table's units.
fn interp(xs: &[f64], ys: &[f64], x: f64) -> f64 {
    let n = xs.len();
    if x <= xs[0] {
        return ys[0];
    }
    if x >= xs[n - 1] {
        return ys[n - 1];
    }
    let i = xs.partition_point(|&a| a <= x) - 1;
    let t = (x - xs[i]) / (xs[i + 1] - xs[i]);
    ys[i] + t * (ys[i + 1] - ys[i])
}

fn rank(p: &CorridorPoint) -> (u8, f64) {
    let r = if !p.trimmed {
        0
    } else if !p.inside {
        1
    } else {
        2
    };
    (r, p.smallest_margin.unwrap_or(f64::INFINITY))
}

fn worse(a: &CorridorPoint, b: &CorridorPoint) -> bool {
    let (ra, ma) = rank(a);
    let (rb, mb) = rank(b);
    ra < rb || (ra == rb && ma < mb)
}

fn summarise(label: String, points: Vec<CorridorPoint>) -> Evaluated {
    let worst = points
        .iter()
        .fold(None::<&CorridorPoint>, |w, p| match w {
            Some(w) if !worse(p, w) => Some(w),
            _ => Some(p),
        })
        .cloned()
        .unwrap_or_else(|| {
            let mut p = CorridorPoint::untrimmed(f64::NAN, f64::NAN);
            p.reason = "no points".into();
            p
        });
    let smallest = points
        .iter()
        .filter_map(|p| p.smallest_margin)
        .fold(None, |a: Option<f64>, m| Some(a.map_or(m, |a| a.min(m))));
    Evaluated {
        label,
        outside: points.iter().filter(|p| !p.inside).count(),
        untrimmed: points.iter().filter(|p| !p.trimmed).count(),
        smallest_margin: smallest,
        worst,
        points,
    }
}

/// Nearest grid row of value `y_rad`.
fn nearest_row(c: &Corridor, y_rad: f64) -> usize {
    let yd = y_rad.to_degrees();
    c.values_deg
        .iter()
        .enumerate()
        .min_by(|a, b| (a.1 - yd).abs().total_cmp(&(b.1 - yd).abs()))
        .map_or(0, |(j, _)| j)
}

/// Re-trim a table y(V) (rad) at every grid speed; warm starts from the corridor's nearest
/// grid point, else from the previous speed. Chunks of 16 speeds run in parallel.
pub fn evaluate_table(
    v: &Vehicle,
    atm: &Atmosphere,
    s: &CorridorSettings,
    c: &Corridor,
    speeds_mps: &[f64],
    values_rad: &[f64],
) -> Vec<CorridorPoint> {
    let idx: Vec<usize> = (0..c.speeds_mps.len()).collect();
    idx.par_chunks(16)
        .flat_map_iter(|chunk| {
            let mut warm: Option<TrimGuess> = None;
            let mut out = Vec::with_capacity(chunk.len());
            for &i in chunk {
                let speed = c.speeds_mps[i];
                let y = interp(speeds_mps, values_rad, speed);
                let near = c.guess(i, nearest_row(c, y)).cloned();
                let start = near.or_else(|| warm.clone());
                let (p, sol) = evaluate_point(v, atm, s, speed, y, start.as_ref(), start.is_none());
                if sol.trimmed() {
                    warm = Some(sol.guess());
                }
                out.push(p);
            }
            out
        })
        .collect()
}

/// Trim the scenario's free schedule (the solver picks the variable) at every grid speed.
fn evaluate_free(
    v: &Vehicle,
    atm: &Atmosphere,
    s: &CorridorSettings,
    c: &Corridor,
) -> Vec<CorridorPoint> {
    let idx: Vec<usize> = (0..c.speeds_mps.len()).collect();
    idx.par_chunks(16)
        .flat_map_iter(|chunk| {
            let mut warm: Option<TrimGuess> = None;
            let mut out = Vec::with_capacity(chunk.len());
            for (n, &i) in chunk.iter().enumerate() {
                let speed = c.speeds_mps[i];
                let mut req = request(s.variable, v, speed, 0.0, s.climb_rad, s.objective);
                req.condition = Condition::Steady;
                req.pitch_rad = None;
                if s.variable == Variable::Tilt {
                    req.tilt = TiltSetting::Free;
                }
                let sol = trim(v, atm, &req, warm.as_ref(), n == 0 || warm.is_none());
                if sol.trimmed() {
                    warm = Some(sol.guess());
                }
                out.push(classify(v, atm, s, &req, &sol));
            }
            out
        })
        .collect()
}

/// Feasible interval for knot k's value with its neighbours fixed.
fn knot_interval(
    speeds: &[f64],
    knots: &[usize],
    y: &[f64],
    k: usize,
    c: &Constraints,
) -> (f64, f64) {
    let n = knots.len();
    let sp = |k: usize| speeds[knots[k]];
    let mut lo = f64::NEG_INFINITY;
    let mut hi = f64::INFINITY;
    if k > 0 {
        let h = sp(k) - sp(k - 1);
        hi = hi.min(y[k - 1]);
        lo = lo.max(y[k - 1] - c.max_slope_rad_per_mps * h);
    }
    if k + 1 < n {
        let h = sp(k + 1) - sp(k);
        lo = lo.max(y[k + 1]);
        hi = hi.min(y[k + 1] + c.max_slope_rad_per_mps * h);
    }
    // Second differences at k-1, k, k+1 are affine in y[k]: |a y + b| <= S.
    let s = c.max_curvature_rad_per_mps2;
    let mut affine = |a: f64, b: f64| {
        if a.abs() < 1e-300 {
            return;
        }
        let (u, w) = ((-s - b) / a, (s - b) / a);
        lo = lo.max(u.min(w));
        hi = hi.min(u.max(w));
    };
    // Curvature at knot m from y[m-1], y[m], y[m+1]: 2/(h1+h2) * ((y[m+1]-y[m])/h2 - (y[m]-y[m-1])/h1).
    for m in k.saturating_sub(1)..=(k + 1) {
        if m == 0 || m + 1 >= n {
            continue;
        }
        let h1 = sp(m) - sp(m - 1);
        let h2 = sp(m + 1) - sp(m);
        let f = 2.0 / (h1 + h2);
        // Coefficients of y[m-1], y[m], y[m+1].
        let cm1 = f / h1;
        let c0 = -f * (1.0 / h1 + 1.0 / h2);
        let cp1 = f / h2;
        let (a, b) = if m == k {
            (c0, cm1 * y[m - 1] + cp1 * y[m + 1])
        } else if m + 1 == k {
            (cp1, cm1 * y[m - 1] + c0 * y[m])
        } else {
            (cm1, c0 * y[m] + cp1 * y[m + 1])
        };
        affine(a, b);
    }
    (lo, hi)
}

/// Golden-section search for the largest `f` on [lo, hi] (a few evaluations).
fn golden_max(lo: f64, hi: f64, iters: usize, f: &mut dyn FnMut(f64) -> f64) -> (f64, f64) {
    let r = 0.5 * (5f64.sqrt() - 1.0);
    let (mut a, mut b) = (lo, hi);
    let mut x1 = b - r * (b - a);
    let mut x2 = a + r * (b - a);
    let mut f1 = f(x1);
    let mut f2 = f(x2);
    for _ in 0..iters {
        if f1 >= f2 {
            b = x2;
            x2 = x1;
            f2 = f1;
            x1 = b - r * (b - a);
            f1 = f(x1);
        } else {
            a = x1;
            x1 = x2;
            f1 = f2;
            x2 = a + r * (b - a);
            f2 = f(x2);
        }
    }
    if f1 >= f2 {
        (x1, f1)
    } else {
        (x2, f2)
    }
}

/// Refine the knot values in place (see the module documentation).
#[allow(clippy::too_many_arguments)]
fn refine(
    v: &Vehicle,
    atm: &Atmosphere,
    s: &CorridorSettings,
    c: &Corridor,
    g: &MarginGrid,
    knots: &[usize],
    y: &mut [f64],
    con: &Constraints,
) {
    let n = knots.len();
    let dy = if g.values_rad.len() > 1 {
        g.values_rad[1] - g.values_rad[0]
    } else {
        return;
    };
    let (ylo, yhi) = (g.values_rad[0], g.values_rad[g.values_rad.len() - 1]);
    let local = |y: &[f64], k: usize, yk: f64, knot_margin: Option<f64>| -> f64 {
        let mut m = match knot_margin {
            Some(m) => m,
            None => return f64::NEG_INFINITY,
        };
        if k > 0 {
            // Columns strictly between the knots (the knot itself is trimmed).
            let c0 = knots[k - 1];
            let c1 = knots[k];
            if c1 > c0 + 1 {
                match segment(
                    g,
                    c0,
                    c1 - 1,
                    y[k - 1],
                    y[k - 1]
                        + (yk - y[k - 1]) * (g.speeds_mps[c1 - 1] - g.speeds_mps[c0])
                            / (g.speeds_mps[c1] - g.speeds_mps[c0]),
                ) {
                    Some(sg) => m = m.min(sg.0),
                    None => return f64::NEG_INFINITY,
                }
            }
        }
        if k + 1 < n {
            let c0 = knots[k];
            let c1 = knots[k + 1];
            match segment(g, c0, c1, yk, y[k + 1]) {
                Some(sg) => m = m.min(sg.0),
                None => return f64::NEG_INFINITY,
            }
        }
        m
    };
    let knot_margin = |i: usize, yk: f64| -> Option<f64> {
        let warm = c.guess(i, nearest_row(c, yk));
        let (p, _) = evaluate_point(v, atm, s, c.speeds_mps[i], yk, warm, warm.is_none());
        if p.inside {
            Some(p.smallest_margin.unwrap_or(f64::INFINITY))
        } else {
            None
        }
    };
    for _sweep in 0..2 {
        for r in 0..3 {
            let ks: Vec<usize> = (r..n).step_by(3).collect();
            let moves: Vec<(usize, f64)> = ks
                .par_iter()
                .filter_map(|&k| {
                    if k + 1 == n && con.end_value_rad.is_some() {
                        return None;
                    }
                    let (lo, hi) = knot_interval(&g.speeds_mps, knots, y, k, con);
                    let lo = lo.max(y[k] - dy).max(ylo);
                    let hi = hi.min(y[k] + dy).min(yhi);
                    if hi.is_nan() || lo.is_nan() || hi <= lo + 1e-6 {
                        return None;
                    }
                    let here = local(y, k, y[k], g.at(knots[k], y[k]));
                    let mut f = |t: f64| local(y, k, t, knot_margin(knots[k], t));
                    let (t, ft) = golden_max(lo, hi, 6, &mut f);
                    (ft > here + 1e-6).then_some((k, t))
                })
                .collect();
            for (k, t) in moves {
                y[k] = t;
            }
        }
    }
}

/// Build the schedule through a corridor and compare it with the scenario's own `own`.
pub fn build(
    v: &Vehicle,
    atm: &Atmosphere,
    s: &CorridorSettings,
    c: &Corridor,
    ss: &ScheduleSettings,
    own: &Schedule,
) -> Result<BuiltSchedule, ScheduleError> {
    if !(ss.acceleration_mps2 > 0.0
        && ss.rate_limit_rad_s > 0.0
        && ss.smoothness_rad_per_mps2 > 0.0
        && ss.knot_spacing_mps > 0.0)
    {
        return Err(ScheduleError::Settings(
            "acceleration, rate limit, smoothness and knot spacing must be positive".into(),
        ));
    }
    let t0 = std::time::Instant::now();
    let dv = if c.speeds_mps.len() > 1 {
        (c.speeds_mps[c.speeds_mps.len() - 1] - c.speeds_mps[0]) / (c.speeds_mps.len() - 1) as f64
    } else {
        1.0
    };
    let con = ss.constraints(dv);
    // Inside the corridor if possible; otherwise through the trimmable region with the fewest
    // points outside, and say so.
    let mut g = MarginGrid::of(c, false);
    let mut left_corridor = None;
    let path = match optimise(&g, &con) {
        Ok(p) => p,
        Err(ScheduleError::NoPath { reached_mps, .. }) => {
            g = MarginGrid::of(c, true);
            let p = optimise(&g, &con)?;
            left_corridor = Some(format!(
                "no schedule stays inside the corridor from {:.2} to {:.2} m/s (an admissible path inside reaches {}); \
                 this one runs through the trimmable region and leaves the corridor at as few grid speeds as it can",
                c.speeds_mps[0],
                c.speeds_mps[c.speeds_mps.len() - 1],
                match reached_mps {
                    None => "no speed at all: the first speed has no point inside".to_string(),
                    Some(v) => format!("{v:.2} m/s"),
                }
            ));
            p
        }
        Err(e) => return Err(e),
    };
    let dp_s = t0.elapsed().as_secs_f64();
    let t1 = std::time::Instant::now();
    let grid_y: Vec<f64> = path.rows.iter().map(|&j| g.values_rad[j]).collect();
    let mut y = grid_y.clone();
    if ss.refine {
        refine(v, atm, s, c, &g, &path.knots, &mut y, &con);
    }
    let refine_s = t1.elapsed().as_secs_f64();
    let t2 = std::time::Instant::now();
    let speeds: Vec<f64> = path.knots.iter().map(|&k| c.speeds_mps[k]).collect();
    let built = summarise(
        "built schedule".into(),
        evaluate_table(v, atm, s, c, &speeds, &y),
    );
    let scenario = match own {
        Schedule::Tilt(t) | Schedule::Pitch(t) => {
            let own_var = if matches!(own, Schedule::Tilt(_)) {
                Variable::Tilt
            } else {
                Variable::Pitch
            };
            (own_var == s.variable).then(|| {
                summarise(
                    format!("the scenario's {} schedule", own_var.name()),
                    evaluate_table(v, atm, s, c, &t.speed_mps, &t.value_rad),
                )
            })
        }
        Schedule::Free => Some(summarise(
            "the scenario's free trim (least power)".into(),
            evaluate_free(v, atm, s, c),
        )),
    };
    let comparison = scenario
        .as_ref()
        .map_or_else(Vec::new, |o| compare(&built.points, &o.points));
    let short = short_bands(&built.points, ss.acceleration_mps2);
    let verify_s = t2.elapsed().as_secs_f64();
    Ok(BuiltSchedule {
        variable: s.variable,
        speed_mps: speeds,
        value_deg: y.iter().map(|r| r.to_degrees()).collect(),
        grid_value_deg: grid_y.iter().map(|r| r.to_degrees()).collect(),
        grid_smallest_margin: path.smallest_margin,
        left_corridor,
        constraints: ConstraintsReport {
            acceleration_mps2: ss.acceleration_mps2,
            rate_limit_deg_s: ss.rate_limit_rad_s.to_degrees(),
            max_slope_deg_per_mps: con.max_slope_rad_per_mps.to_degrees(),
            smoothness_deg_per_mps2: ss.smoothness_rad_per_mps2.to_degrees(),
            knot_spacing_mps: ss.knot_spacing_mps,
        },
        worst: built.worst.clone(),
        built,
        scenario,
        comparison,
        short_of_acceleration: short,
        timing: Timing {
            dp_s,
            refine_s,
            verify_s,
        },
    })
}

/// Whether the built schedule beats the scenario's: fewer untrimmable points first, then the
/// larger smallest margin over all trimmed points; with a one-line reason. None without a
/// scenario schedule to compare with.
pub fn verdict(b: &BuiltSchedule) -> Option<(bool, String)> {
    let o = b.scenario.as_ref()?;
    let me = &b.built;
    if me.untrimmed != o.untrimmed {
        let better = me.untrimmed < o.untrimmed;
        return Some((
            better,
            format!(
                "{} untrimmable points along the built schedule against {} along {}",
                me.untrimmed, o.untrimmed, o.label
            ),
        ));
    }
    let (x, y) = (me.smallest_margin?, o.smallest_margin?);
    Some((
        x > y,
        format!(
            "smallest margin {x:.3} against {y:.3} for {} ({} and {} points outside the corridor)",
            o.label, me.outside, o.outside
        ),
    ))
}

/// Speed bands where the acceleration available is below `accel` (untrimmed points count).
fn short_bands(points: &[CorridorPoint], accel: f64) -> Vec<(f64, f64)> {
    let mut out: Vec<(f64, f64)> = Vec::new();
    let mut open = false;
    for p in points {
        let short = p.accel_available_mps2.is_none_or(|a| a < accel);
        if short {
            if open {
                if let Some(b) = out.last_mut() {
                    b.1 = p.speed_mps;
                }
            } else {
                out.push((p.speed_mps, p.speed_mps));
            }
        }
        open = short;
    }
    out
}

/// Bands of speed where the built or the scenario's schedule is better (an inside point beats
/// an outside one, a trimmed one an untrimmed one; otherwise the larger smallest margin wins;
/// within 0.01 counts as equal).
pub fn compare(built: &[CorridorPoint], own: &[CorridorPoint]) -> Vec<ComparisonBand> {
    let mut out: Vec<ComparisonBand> = Vec::new();
    let mut sums: Vec<(f64, usize)> = Vec::new();
    for (b, o) in built.iter().zip(own) {
        let (rb, mb) = rank(b);
        let (ro, mo) = rank(o);
        let diff = (b.smallest_margin.is_some() && o.smallest_margin.is_some()).then_some(mb - mo);
        let who = if rb != ro {
            if rb > ro {
                "built"
            } else {
                "scenario"
            }
        } else {
            match diff {
                Some(d) if d > 0.01 => "built",
                Some(d) if d < -0.01 => "scenario",
                _ => "equal",
            }
        };
        match out.last_mut() {
            Some(last) if last.better == who => {
                last.to_mps = b.speed_mps;
                if let Some(d) = diff {
                    let s = sums.last_mut().expect("a sum per band");
                    s.0 += d;
                    s.1 += 1;
                    last.largest_difference = Some(last.largest_difference.map_or(d, |x| {
                        if d.abs() > x.abs() {
                            d
                        } else {
                            x
                        }
                    }));
                }
            }
            _ => {
                out.push(ComparisonBand {
                    from_mps: b.speed_mps,
                    to_mps: b.speed_mps,
                    better: who.into(),
                    largest_difference: diff,
                    mean_difference: None,
                });
                sums.push(diff.map_or((0.0, 0), |d| (d, 1)));
            }
        }
    }
    for (b, (s, n)) in out.iter_mut().zip(sums) {
        b.mean_difference = (n > 0).then(|| s / n as f64);
    }
    out
}

/// The schedule file of a built schedule (the scenario's `[schedule]` format).
pub fn to_document(b: &BuiltSchedule, scenario_name: &str) -> ScheduleDocument {
    ScheduleDocument {
        name: format!("{scenario_name}-built"),
        description: format!(
            "{} against airspeed with the largest smallest margin through the corridor of '{}' (smallest margin {} at {:.2} m/s, {})",
            b.variable.name(),
            scenario_name,
            b.worst.smallest_margin.map_or("none".to_string(), |m| format!("{m:.3}")),
            b.worst.speed_mps,
            b.worst
                .limiting_margin
                .as_ref()
                .map_or("no limiting margin".to_string(), |l| l.margin_label())
        ),
        schedule: ScheduleFile {
            mode: match b.variable {
                Variable::Tilt => ScheduleMode::Tilt,
                Variable::Pitch => ScheduleMode::Pitch,
            },
            speed_mps: b.speed_mps.iter().map(|s| round_to(*s, 6)).collect(),
            value_deg: b.value_deg.iter().map(|s| round_to(*s, 4)).collect(),
        },
    }
}

/// `x` rounded to `decimals` places; dividing by the exact power of ten gives the double
/// nearest the decimal, so the file shows `31.0983`, not `31.098300000000002`.
fn round_to(x: f64, decimals: i32) -> f64 {
    let n = 10f64.powi(decimals);
    (x * n).round() / n
}
