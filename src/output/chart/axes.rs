//! Axes: the tick-owning linear axis, ranges and round ticks, and clipping of polylines to
//! the plotting box.

use super::*;

/// A linear f64 axis whose ticks are chosen here (plotters' own picks only 1-2-5 steps, and
/// a polar wants 30-degree ticks).
#[derive(Debug, Clone)]
pub(super) struct Axis {
    pub(super) lo: f64,
    pub(super) hi: f64,
    pub(super) ticks: Vec<f64>,
}

impl Axis {
    pub(super) fn new(range: (f64, f64), ticks: Vec<f64>) -> Axis {
        Axis {
            lo: range.0,
            hi: range.1,
            ticks,
        }
    }
}

impl Ranged for Axis {
    type FormatOption = DefaultFormatting;
    type ValueType = f64;

    fn map(&self, v: &f64, limit: (i32, i32)) -> i32 {
        let span = self.hi - self.lo;
        if span == 0.0 {
            return (limit.0 + limit.1) / 2;
        }
        let t = (*v - self.lo) / span;
        let px = limit.0 as f64 + (limit.1 - limit.0) as f64 * t;
        // Far off-range values saturate instead of wrapping.
        px.round().clamp(-1e6, 1e6) as i32
    }

    fn key_points<H: KeyPointHint>(&self, hint: H) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            Vec::new()
        } else {
            self.ticks.clone()
        }
    }

    fn range(&self) -> std::ops::Range<f64> {
        self.lo..self.hi
    }
}

// Ranges and ticks

pub(super) fn finite_extent(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    values
        .filter(|v| v.is_finite())
        .fold(None, |acc, v| match acc {
            None => Some((v, v)),
            Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
        })
}

/// Widen a degenerate range and optionally pad by 5 % each side.
pub(super) fn settle(range: (f64, f64), pad: bool) -> (f64, f64) {
    let (mut lo, mut hi) = if range.0 <= range.1 {
        range
    } else {
        (range.1, range.0)
    };
    let scale = lo.abs().max(hi.abs());
    if hi - lo <= 1e-9 * scale.max(1e-300) || hi - lo < 1e-300 {
        let d = if scale > 0.0 { 0.1 * scale } else { 1.0 };
        lo -= d;
        hi += d;
    } else if pad {
        let d = 0.05 * (hi - lo);
        lo -= d;
        hi += d;
    }
    (lo, hi)
}

pub(super) fn nice_step(span: f64, target: usize) -> f64 {
    let raw = span / target.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let f = raw / mag;
    let m = if f <= 1.0 {
        1.0
    } else if f <= 2.0 {
        2.0
    } else if f <= 2.5 {
        2.5
    } else if f <= 5.0 {
        5.0
    } else {
        10.0
    };
    m * mag
}

/// Tick positions (multiples of `step` inside the range) and their labels.
pub(super) fn ticks(
    range: (f64, f64),
    step: Option<f64>,
    target: usize,
) -> (Vec<f64>, Vec<String>) {
    let span = range.1 - range.0;
    let step = match step {
        Some(s) if s > 0.0 && s.is_finite() && span / s <= 40.0 => s,
        _ => nice_step(span, target),
    };
    let k0 = (range.0 / step - 1e-9).ceil() as i64;
    let k1 = (range.1 / step + 1e-9).floor() as i64;
    let values: Vec<f64> = (k0..=k1.max(k0)).map(|k| k as f64 * step).collect();
    let big = values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let decimals = (0..=6)
        .find(|&d| {
            let s = step * 10f64.powi(d);
            (s - s.round()).abs() < 1e-6 * s.max(1.0)
        })
        .unwrap_or(6) as usize;
    let labels = values
        .iter()
        .map(|&v| {
            let v = if v.abs() < 1e-9 * step { 0.0 } else { v };
            if big >= 1e5 || step < 1e-4 {
                format!("{v:.2e}")
            } else {
                format!("{v:.decimals$}")
            }
        })
        .collect();
    (values, labels)
}

// ---------------------------------------------------------------------------------------
// Clipping

#[derive(Clone, Copy)]
pub(super) struct Bounds {
    pub(super) x0: f64,
    pub(super) x1: f64,
    pub(super) y0: f64,
    pub(super) y1: f64,
}

impl Bounds {
    fn contains(&self, p: (f64, f64)) -> bool {
        p.0 >= self.x0 && p.0 <= self.x1 && p.1 >= self.y0 && p.1 <= self.y1
    }
}

/// Liang-Barsky clipping of segment p-q to the box; returns the clipped ends and whether
/// each end was moved.
/// A point in data coordinates.
pub(super) type Pt = (f64, f64);

/// A segment clipped to a box: its ends and whether each end was moved onto the box edge.
pub(super) struct Clipped {
    pub(super) a: Pt,
    pub(super) b: Pt,
    pub(super) a_moved: bool,
    pub(super) b_moved: bool,
}

pub(super) fn clip(p: Pt, q: Pt, b: &Bounds) -> Option<Clipped> {
    let (dx, dy) = (q.0 - p.0, q.1 - p.1);
    let mut t0 = 0.0f64;
    let mut t1 = 1.0f64;
    for (pk, qk) in [
        (-dx, p.0 - b.x0),
        (dx, b.x1 - p.0),
        (-dy, p.1 - b.y0),
        (dy, b.y1 - p.1),
    ] {
        if pk == 0.0 {
            if qk < 0.0 {
                return None;
            }
        } else {
            let r = qk / pk;
            if pk < 0.0 {
                t0 = t0.max(r);
            } else {
                t1 = t1.min(r);
            }
        }
    }
    if t0 > t1 {
        return None;
    }
    Some(Clipped {
        a: (p.0 + t0 * dx, p.1 + t0 * dy),
        b: (p.0 + t1 * dx, p.1 + t1 * dy),
        a_moved: t0 > 0.0,
        b_moved: t1 < 1.0,
    })
}

/// Split a polyline into drawable runs inside the box (gaps at non-finite points and where
/// the line leaves the box) plus isolated points that need a marker.
/// Drawable pieces of a polyline.
#[derive(Debug, PartialEq)]
pub(super) struct Runs {
    /// Connected runs of two or more points.
    pub(super) lines: Vec<Vec<Pt>>,
    /// Finite points with no finite neighbour, drawn as markers.
    pub(super) lonely: Vec<Pt>,
}

pub(super) fn runs(x: &[f64], y: &[f64], b: &Bounds) -> Runs {
    let n = x.len().min(y.len());
    let ok = |i: usize| x[i].is_finite() && y[i].is_finite();
    let mut lines: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut open = false;
    for i in 0..n.saturating_sub(1) {
        if !ok(i) || !ok(i + 1) {
            open = false;
            continue;
        }
        match clip((x[i], y[i]), (x[i + 1], y[i + 1]), b) {
            None => open = false,
            Some(c) => {
                if !open || c.a_moved {
                    lines.push(vec![c.a]);
                }
                if let Some(run) = lines.last_mut() {
                    run.push(c.b);
                }
                open = !c.b_moved;
            }
        }
    }
    let lonely = (0..n)
        .filter(|&i| ok(i))
        .filter(|&i| (i == 0 || !ok(i - 1)) && (i + 1 >= n || !ok(i + 1)))
        .map(|i| (x[i], y[i]))
        .filter(|&p| b.contains(p))
        .collect();
    Runs { lines, lonely }
}

/// The precomputed label of tick `v` (labels were formatted with the tick set).
pub(super) fn label_of(ticks: &[f64], labels: &[String], v: f64) -> String {
    ticks
        .iter()
        .zip(labels)
        .min_by(|a, b| (a.0 - v).abs().total_cmp(&(b.0 - v).abs()))
        .map(|(_, l)| l.clone())
        .unwrap_or_default()
}
