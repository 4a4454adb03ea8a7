//! A small chart kit on top of plotters: panels of line series in a grid, a scatter of points
//! coloured by a scalar with a colour bar, and a filled grid map. Every figure is drawn twice,
//! into `<stem>.svg` and `<stem>.png`, from the same drawing code, and written whole or not
//! at all (temporary file in the same folder, then rename).
//!
//! Readability rules baked in:
//! - colours from the Okabe-Ito colour-blind-safe palette, and line patterns (solid, dashed,
//!   dotted) that also differ, so a chart still reads in greyscale: style `s` takes colour
//!   `s % 8` and pattern `s % 3`, so styles 0..24 are all distinct and `s + 8` keeps the colour
//!   of `s` with another pattern;
//! - scalar colours from a viridis-like ramp, which is monotone in lightness;
//! - a non-finite y value breaks a line (no zero is ever drawn in its place), and an isolated
//!   finite point between gaps is drawn as a marker so it does not vanish;
//! - legends sit in their own strip under each panel, never over the data;
//! - text uses DejaVu Sans, registered once from the `dejavu` crate, so a machine without
//!   system fonts still renders titles and labels;
//! - each figure carries the footer [`FOOTER`].

use std::ffi::OsString;
use std::path::{Path, PathBuf};
use std::sync::Once;

use plotters::coord::ranged1d::{DefaultFormatting, KeyPointHint, Ranged};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::files::{ensure_dir, write_atomic, WriteError};

/// Footer line on every figure.
pub const FOOTER: &str = "preliminary design aid \u{2014} not a flight clearance";

/// Okabe-Ito colours in style order (yellow last: it is the weakest on white).
pub const PALETTE: [RGBColor; 8] = [
    RGBColor(0, 0, 0),       // black
    RGBColor(230, 159, 0),   // orange
    RGBColor(86, 180, 233),  // sky blue
    RGBColor(0, 158, 115),   // bluish green
    RGBColor(0, 114, 178),   // blue
    RGBColor(213, 94, 0),    // vermillion
    RGBColor(204, 121, 167), // reddish purple
    RGBColor(240, 228, 66),  // yellow
];

/// Fill of grid cells that have no value.
const NO_VALUE_GREY: RGBColor = RGBColor(190, 190, 190);

/// Fill colours of shaded bands, by distinct label in order of appearance.
const SHADE_COLOURS: [RGBColor; 4] = [
    RGBColor(213, 94, 0),
    RGBColor(204, 121, 167),
    RGBColor(86, 180, 233),
    RGBColor(230, 159, 0),
];

/// Opacity of shaded bands.
const SHADE_ALPHA: f64 = 0.2;

const FONT: &str = "sans-serif";
const TITLE_PX: f64 = 26.0;
const PANEL_TITLE_PX: f64 = 22.0;
const AXIS_DESC_PX: f64 = 20.0;
const TICK_PX: f64 = 16.0;
const LEGEND_PX: f64 = 16.0;
const FOOTER_PX: f64 = 15.0;
const TITLE_STRIP: u32 = 52;
const FOOTER_STRIP: u32 = 30;
const LEGEND_ROW: u32 = 26;
const X_LABEL_AREA: u32 = 58;
const MARGIN: u32 = 12;
const LINE_WIDTH: u32 = 3;
const REF_LINE_WIDTH: u32 = 2;
const COLOUR_BAR_WIDTH: u32 = 200;

/// A line in a panel.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Series {
    /// Legend text; empty for no legend entry.
    pub label: String,
    /// Abscissae.
    pub x: Vec<f64>,
    /// Ordinates; a non-finite value leaves a gap in the line.
    pub y: Vec<f64>,
    /// Style index: colour `PALETTE[style % 8]`, pattern [`style_dash`].
    pub style: usize,
}

/// A shaded vertical band `from..to` in x (either order).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Shade {
    /// Start of the band (x units).
    pub from: f64,
    /// End of the band (x units).
    pub to: f64,
    /// Legend text; bands with the same label share a colour and one legend entry.
    pub label: String,
}

/// A horizontal reference line (threshold, limit).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct HLine {
    /// Height (y units).
    pub y: f64,
    /// Legend text; empty for no legend entry.
    pub label: String,
    /// Style index, as for [`Series::style`].
    pub style: usize,
}

/// A vertical reference line (stall angle, event).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct VLine {
    /// Position (x units).
    pub x: f64,
    /// Legend text; empty for no legend entry.
    pub label: String,
    /// Style index, as for [`Series::style`].
    pub style: usize,
}

/// One chart of a figure.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Panel {
    /// Caption above the chart (may be empty).
    pub title: String,
    /// X-axis label, with unit.
    pub x_label: String,
    /// Y-axis label, with unit.
    pub y_label: String,
    /// Lines.
    pub series: Vec<Series>,
    /// Shaded x bands, drawn under everything else.
    pub shades: Vec<Shade>,
    /// Horizontal reference lines.
    pub hlines: Vec<HLine>,
    /// Vertical reference lines.
    pub vlines: Vec<VLine>,
    /// Fixed x range; `None` = extent of the data.
    pub x_range: Option<(f64, f64)>,
    /// Fixed y range; `None` = extent of data and reference lines, padded 5 %. Lines are
    /// clipped to it.
    pub y_range: Option<(f64, f64)>,
    /// Spacing of x ticks (x units); `None` = automatic.
    pub x_tick_step: Option<f64>,
}

/// Reference lines and curves drawn over a scatter (see [`render_scatter`]).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Overlay {
    /// Lines.
    pub series: Vec<Series>,
    /// Shaded x bands.
    pub shades: Vec<Shade>,
    /// Horizontal reference lines.
    pub hlines: Vec<HLine>,
    /// Vertical reference lines.
    pub vlines: Vec<VLine>,
    /// Fixed x range; `None` = extent of points and overlay, padded 5 %.
    pub x_range: Option<(f64, f64)>,
    /// Fixed y range; `None` = extent of points and overlay, padded 5 %.
    pub y_range: Option<(f64, f64)>,
}

/// Line pattern of a style.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Dash {
    /// Continuous line.
    Solid,
    /// Long dashes.
    Dashed,
    /// Dots.
    Dotted,
}

/// Colour of style `style`: Okabe-Ito, cycling every 8.
pub fn style_colour(style: usize) -> RGBColor {
    PALETTE[style % PALETTE.len()]
}

/// Pattern of style `style`: solid, dashed, dotted, cycling every 3.
pub fn style_dash(style: usize) -> Dash {
    match style % 3 {
        0 => Dash::Solid,
        1 => Dash::Dashed,
        _ => Dash::Dotted,
    }
}

/// Colour of a scalar `t` in [0, 1] (clamped; NaN gives grey) on a viridis-like ramp, dark
/// purple to yellow, monotone in lightness.
pub fn value_colour(t: f64) -> RGBColor {
    if !t.is_finite() {
        return NO_VALUE_GREY;
    }
    // Anchor colours of the viridis map at t = 0, 0.25, 0.5, 0.75, 1 (from memory).
    const STOPS: [(f64, f64, f64); 5] = [
        (68.0, 1.0, 84.0),
        (59.0, 82.0, 139.0),
        (33.0, 145.0, 140.0),
        (94.0, 201.0, 98.0),
        (253.0, 231.0, 37.0),
    ];
    let t = t.clamp(0.0, 1.0) * 4.0;
    let k = (t.floor() as usize).min(3);
    let f = t - k as f64;
    let (a, b) = (STOPS[k], STOPS[k + 1]);
    let mix = |p: f64, q: f64| (p + (q - p) * f).round().clamp(0.0, 255.0) as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

/// Register the embedded DejaVu Sans as "sans-serif" (once per process).
pub fn ensure_font() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        // The embedded font is valid; a failure would surface as a drawing error naming it.
        let _ = plotters::style::register_font(FONT, FontStyle::Normal, dejavu::sans::regular());
        let _ = plotters::style::register_font(FONT, FontStyle::Bold, dejavu::sans::bold());
    });
}

/// Draw `panels` in a grid of `columns` columns (0 is taken as 1) under `title`, and write
/// `<stem>.png` and `<stem>.svg`. Returns both paths (PNG first).
pub fn render(
    path_stem: &Path,
    title: &str,
    panels: &[Panel],
    columns: usize,
) -> Result<Vec<PathBuf>, WriteError> {
    let columns = columns.max(1).min(panels.len().max(1));
    let rows = panels.len().div_ceil(columns).max(1);
    let width = if columns == 1 {
        1400
    } else {
        720 * columns as u32
    };
    let panel_w = width / columns as u32;
    let mut panel_h = ((panel_w as f64 * 0.64) as u32).clamp(440, 800);
    if rows > 1 {
        // Several rows of full-width panels: keep the page near 1400 x 1100.
        panel_h = panel_h.min(520);
    }
    let height = TITLE_STRIP + FOOTER_STRIP + rows as u32 * panel_h;
    let fig = Figure::Grid {
        title,
        panels,
        columns,
        rows,
    };
    write_both(path_stem, (width, height), &fig)
}

/// Scatter of `points` = (x, y, value), each coloured by its value on the ramp of
/// [`value_colour`] with a colour bar labelled `value_label`; points with a non-finite value
/// are grey. `overlay` adds curves and reference lines. Writes `<stem>.png` and `<stem>.svg`.
pub fn render_scatter(
    path_stem: &Path,
    title: &str,
    x_label: &str,
    y_label: &str,
    points: &[(f64, f64, f64)],
    value_label: &str,
    overlay: &Overlay,
) -> Result<Vec<PathBuf>, WriteError> {
    let fig = Figure::Scatter {
        title,
        x_label,
        y_label,
        points,
        value_label,
        overlay,
    };
    write_both(path_stem, (1400, 900), &fig)
}

/// Filled grid map: cell (i, j) is centred on (`x[i]`, `y[j]`) and filled by `value[i][j]`
/// (so `value` has one row per x value, each with one entry per y value); `None` cells
/// (not trimmable) are grey. Cell edges lie halfway between neighbours. `x` and `y` must be
/// finite and strictly increasing. `overlays` (boundaries, a schedule) are drawn on top.
/// Writes `<stem>.png` and `<stem>.svg`.
#[allow(clippy::too_many_arguments)]
pub fn render_map(
    path_stem: &Path,
    title: &str,
    x_label: &str,
    y_label: &str,
    x: &[f64],
    y: &[f64],
    value: &[Vec<Option<f64>>],
    value_label: &str,
    overlays: &[Series],
) -> Result<Vec<PathBuf>, WriteError> {
    let invalid = |msg: &str| WriteError {
        path: path_stem.to_path_buf(),
        source: std::io::Error::new(std::io::ErrorKind::InvalidInput, msg.to_string()),
    };
    let increasing = |v: &[f64]| {
        !v.is_empty() && v.iter().all(|a| a.is_finite()) && v.windows(2).all(|w| w[1] > w[0])
    };
    if !increasing(x) || !increasing(y) {
        return Err(invalid(
            "map grid axes must be finite and strictly increasing; hint: sort the grid values",
        ));
    }
    if value.len() != x.len() || value.iter().any(|r| r.len() != y.len()) {
        return Err(invalid(
            "map values do not match the grid; hint: give value[i][j] for every x[i] and y[j]",
        ));
    }
    let fig = Figure::Map {
        title,
        x_label,
        y_label,
        x,
        y,
        value,
        value_label,
        overlays,
    };
    write_both(path_stem, (1400, 900), &fig)
}

/// What to draw; one enum so the same code serves both backends.
enum Figure<'a> {
    Grid {
        title: &'a str,
        panels: &'a [Panel],
        columns: usize,
        rows: usize,
    },
    Scatter {
        title: &'a str,
        x_label: &'a str,
        y_label: &'a str,
        points: &'a [(f64, f64, f64)],
        value_label: &'a str,
        overlay: &'a Overlay,
    },
    Map {
        title: &'a str,
        x_label: &'a str,
        y_label: &'a str,
        x: &'a [f64],
        y: &'a [f64],
        value: &'a [Vec<Option<f64>>],
        value_label: &'a str,
        overlays: &'a [Series],
    },
}

/// A linear f64 axis whose ticks are chosen here (plotters' own picks only 1-2-5 steps, and
/// a polar wants 30-degree ticks).
#[derive(Debug, Clone)]
struct Axis {
    lo: f64,
    hi: f64,
    ticks: Vec<f64>,
}

impl Axis {
    fn new(range: (f64, f64), ticks: Vec<f64>) -> Axis {
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

type Coord2 = Cartesian2d<Axis, Axis>;
type Res<DB> = Result<(), DrawingAreaErrorKind<<DB as DrawingBackend>::ErrorType>>;

fn with_ext(stem: &Path, ext: &str) -> PathBuf {
    let mut s: OsString = stem.as_os_str().to_owned();
    s.push(".");
    s.push(ext);
    PathBuf::from(s)
}

fn draw_error(path: &Path, e: impl std::fmt::Display) -> WriteError {
    WriteError {
        path: path.to_path_buf(),
        source: std::io::Error::other(format!("drawing failed: {e}")),
    }
}

fn write_both(stem: &Path, size: (u32, u32), fig: &Figure) -> Result<Vec<PathBuf>, WriteError> {
    ensure_font();
    let png = with_ext(stem, "png");
    let svg = with_ext(stem, "svg");
    let dir = stem
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    ensure_dir(dir)?;

    let mut text = String::new();
    {
        let root = SVGBackend::with_string(&mut text, size).into_drawing_area();
        fig.draw(&root).map_err(|e| draw_error(&svg, e))?;
        root.present().map_err(|e| draw_error(&svg, e))?;
    }
    write_atomic(&svg, text.as_bytes())?;

    // The bitmap encoder picks the format from the extension, so the temporary name ends in
    // .png; its random part keeps parallel renders apart.
    let name = png
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    // Reserve an unpredictable name exclusively; the encoder then writes our own file.
    let (tmp, reserved) =
        crate::output::files::create_temporary(dir, &name, "tmp.png").map_err(|source| {
            WriteError {
                path: png.clone(),
                source,
            }
        })?;
    drop(reserved);
    let drawn = {
        let root = BitMapBackend::new(&tmp, size).into_drawing_area();
        fig.draw(&root).and_then(|_| root.present())
    };
    if let Err(e) = drawn {
        let _ = std::fs::remove_file(&tmp);
        return Err(draw_error(&png, e));
    }
    std::fs::rename(&tmp, &png).map_err(|source| {
        let _ = std::fs::remove_file(&tmp);
        WriteError {
            path: png.clone(),
            source,
        }
    })?;
    Ok(vec![png, svg])
}

impl Figure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res<DB> {
        root.fill(&WHITE)?;
        let title = match self {
            Figure::Grid { title, .. }
            | Figure::Scatter { title, .. }
            | Figure::Map { title, .. } => *title,
        };
        let body = frame(root, title)?;
        match self {
            Figure::Grid {
                panels,
                columns,
                rows,
                ..
            } => {
                if panels.is_empty() {
                    return centre_note(&body, "nothing to plot");
                }
                let cells = body.split_evenly((*rows, *columns));
                for (p, area) in panels.iter().zip(cells.iter()) {
                    draw_panel(area, p, &[], true, Vec::new(), |_| Ok(()))?;
                }
                Ok(())
            }
            Figure::Scatter {
                x_label,
                y_label,
                points,
                value_label,
                overlay,
                ..
            } => draw_scatter(&body, x_label, y_label, points, value_label, overlay),
            Figure::Map {
                x_label,
                y_label,
                x,
                y,
                value,
                value_label,
                overlays,
                ..
            } => draw_map(&body, x_label, y_label, x, y, value, value_label, overlays),
        }
    }
}

fn font(px: f64) -> TextStyle<'static> {
    TextStyle::from((FONT, px).into_font())
}

fn bold(px: f64) -> TextStyle<'static> {
    TextStyle::from((FONT, px, FontStyle::Bold).into_font())
}

/// Draw the title strip and footer; return the area between them.
fn frame<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    title: &str,
) -> Result<DrawingArea<DB, Shift>, DrawingAreaErrorKind<DB::ErrorType>> {
    let (w, h) = root.dim_in_pixel();
    let (top, rest) = root.split_vertically(TITLE_STRIP);
    let (body, foot) = rest.split_vertically(h.saturating_sub(TITLE_STRIP + FOOTER_STRIP));
    top.draw(&Text::new(
        title.to_string(),
        ((w / 2) as i32, (TITLE_STRIP / 2) as i32),
        bold(TITLE_PX).pos(Pos::new(HPos::Center, VPos::Center)),
    ))?;
    foot.draw(&Text::new(
        FOOTER.to_string(),
        (MARGIN as i32, (FOOTER_STRIP / 2) as i32),
        font(FOOTER_PX)
            .color(&RGBColor(90, 90, 90))
            .pos(Pos::new(HPos::Left, VPos::Center)),
    ))?;
    Ok(body)
}

fn centre_note<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, note: &str) -> Res<DB> {
    let (w, h) = area.dim_in_pixel();
    area.draw(&Text::new(
        note.to_string(),
        ((w / 2) as i32, (h / 2) as i32),
        font(AXIS_DESC_PX)
            .color(&RGBColor(110, 110, 110))
            .pos(Pos::new(HPos::Center, VPos::Center)),
    ))?;
    Ok(())
}

// ---------------------------------------------------------------------------------------
// Ranges and ticks

fn finite_extent(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    values
        .filter(|v| v.is_finite())
        .fold(None, |acc, v| match acc {
            None => Some((v, v)),
            Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
        })
}

/// Widen a degenerate range and optionally pad by 5 % each side.
fn settle(range: (f64, f64), pad: bool) -> (f64, f64) {
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

fn nice_step(span: f64, target: usize) -> f64 {
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
fn ticks(range: (f64, f64), step: Option<f64>, target: usize) -> (Vec<f64>, Vec<String>) {
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
struct Bounds {
    x0: f64,
    x1: f64,
    y0: f64,
    y1: f64,
}

impl Bounds {
    fn contains(&self, p: (f64, f64)) -> bool {
        p.0 >= self.x0 && p.0 <= self.x1 && p.1 >= self.y0 && p.1 <= self.y1
    }
}

/// Liang-Barsky clipping of segment p-q to the box; returns the clipped ends and whether
/// each end was moved.
/// A point in data coordinates.
type Pt = (f64, f64);

/// A segment clipped to a box: its ends and whether each end was moved onto the box edge.
struct Clipped {
    a: Pt,
    b: Pt,
    a_moved: bool,
    b_moved: bool,
}

fn clip(p: Pt, q: Pt, b: &Bounds) -> Option<Clipped> {
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
struct Runs {
    /// Connected runs of two or more points.
    lines: Vec<Vec<Pt>>,
    /// Finite points with no finite neighbour, drawn as markers.
    lonely: Vec<Pt>,
}

fn runs(x: &[f64], y: &[f64], b: &Bounds) -> Runs {
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

// ---------------------------------------------------------------------------------------
// Legends

enum Swatch {
    Line(usize, u32),
    Fill(RGBColor, f64),
    Marker(RGBColor),
}

struct LegendItem {
    swatch: Swatch,
    text: String,
}

const SWATCH_W: i32 = 40;

fn shade_colour(labels: &[String], label: &str) -> RGBColor {
    let k = labels.iter().position(|l| l == label).unwrap_or(0);
    SHADE_COLOURS[k % SHADE_COLOURS.len()]
}

fn shade_labels(shades: &[Shade]) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for s in shades {
        if !out.contains(&s.label) {
            out.push(s.label.clone());
        }
    }
    out
}

fn legend_items(p: &Panel, y_range: (f64, f64)) -> Vec<LegendItem> {
    let mut items = Vec::new();
    for s in &p.series {
        if !s.label.is_empty() {
            let any =
                s.x.iter()
                    .zip(&s.y)
                    .any(|(a, b)| a.is_finite() && b.is_finite());
            let text = if any {
                s.label.clone()
            } else {
                format!("{} (no points)", s.label)
            };
            items.push(LegendItem {
                swatch: Swatch::Line(s.style, LINE_WIDTH),
                text,
            });
        }
    }
    for h in &p.hlines {
        if !h.label.is_empty() {
            let off = !(h.y >= y_range.0 && h.y <= y_range.1);
            let text = if off {
                format!("{} (off scale)", h.label)
            } else {
                h.label.clone()
            };
            items.push(LegendItem {
                swatch: Swatch::Line(h.style, REF_LINE_WIDTH),
                text,
            });
        }
    }
    for v in &p.vlines {
        if !v.label.is_empty() {
            items.push(LegendItem {
                swatch: Swatch::Line(v.style, REF_LINE_WIDTH),
                text: v.label.clone(),
            });
        }
    }
    let labels = shade_labels(&p.shades);
    for l in labels.iter().filter(|l| !l.is_empty()) {
        items.push(LegendItem {
            swatch: Swatch::Fill(shade_colour(&labels, l), SHADE_ALPHA),
            text: l.clone(),
        });
    }
    items
}

/// Where the legend items go in their strip.
struct LegendLayout {
    /// Top-left corner (px) of each item.
    pos: Vec<(i32, i32)>,
    /// Height of the strip (px).
    height: u32,
}

/// Lay out the items in rows of width `width` starting at `left`.
fn legend_layout<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    items: &[LegendItem],
    left: i32,
    width: i32,
) -> Result<LegendLayout, DrawingAreaErrorKind<DB::ErrorType>> {
    if items.is_empty() {
        return Ok(LegendLayout {
            pos: Vec::new(),
            height: 0,
        });
    }
    let style = font(LEGEND_PX);
    let mut pos = Vec::with_capacity(items.len());
    let (mut x, mut y) = (left, 4);
    for it in items {
        let (tw, _) = area.estimate_text_size(&it.text, &style)?;
        let w = SWATCH_W + 8 + tw as i32 + 26;
        if x > left && x + w > left + width {
            x = left;
            y += LEGEND_ROW as i32;
        }
        pos.push((x, y));
        x += w;
    }
    Ok(LegendLayout {
        pos,
        height: (y + LEGEND_ROW as i32 + 6) as u32,
    })
}

fn draw_swatch<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    swatch: &Swatch,
    x: i32,
    yc: i32,
) -> Res<DB> {
    match *swatch {
        Swatch::Line(style, width) => {
            let c = style_colour(style);
            let s = c.stroke_width(width);
            match style_dash(style) {
                Dash::Solid => {
                    area.draw(&PathElement::new(vec![(x, yc), (x + SWATCH_W, yc)], s))?
                }
                Dash::Dashed => {
                    for a in [0, 16, 32] {
                        let b = (a + 10).min(SWATCH_W);
                        area.draw(&PathElement::new(vec![(x + a, yc), (x + b, yc)], s))?;
                    }
                }
                Dash::Dotted => {
                    for a in (2..SWATCH_W).step_by(8) {
                        area.draw(&Circle::new((x + a, yc), 2, c.filled()))?;
                    }
                }
            }
        }
        Swatch::Fill(c, alpha) => {
            area.draw(&Rectangle::new(
                [(x, yc - 8), (x + SWATCH_W, yc + 8)],
                c.mix(alpha).filled(),
            ))?;
            area.draw(&Rectangle::new(
                [(x, yc - 8), (x + SWATCH_W, yc + 8)],
                c.mix(0.6).stroke_width(1),
            ))?;
        }
        Swatch::Marker(c) => {
            area.draw(&Circle::new((x + SWATCH_W / 2, yc), 6, c.filled()))?;
            area.draw(&Circle::new(
                (x + SWATCH_W / 2, yc),
                6,
                BLACK.stroke_width(1),
            ))?;
        }
    }
    Ok(())
}

fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    items: &[LegendItem],
    pos: &[(i32, i32)],
) -> Res<DB> {
    let style = font(LEGEND_PX).pos(Pos::new(HPos::Left, VPos::Center));
    for (it, &(x, y)) in items.iter().zip(pos) {
        let yc = y + LEGEND_ROW as i32 / 2;
        draw_swatch(area, &it.swatch, x, yc)?;
        area.draw(&Text::new(
            it.text.clone(),
            (x + SWATCH_W + 8, yc),
            style.clone(),
        ))?;
    }
    Ok(())
}

// ---------------------------------------------------------------------------------------
// Drawing lines on a chart

fn draw_path<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Coord2>,
    pts: Vec<(f64, f64)>,
    style: usize,
    width: u32,
) -> Res<DB> {
    let c = style_colour(style);
    let s = c.stroke_width(width);
    match style_dash(style) {
        Dash::Solid => {
            chart.draw_series(LineSeries::new(pts, s))?;
        }
        Dash::Dashed => {
            chart.draw_series(DashedLineSeries::new(pts, 12, 7, s))?;
        }
        Dash::Dotted => {
            let r = width.max(2);
            chart.draw_series(DottedLineSeries::new(pts, 0, 3 * r as i32 + 2, move |p| {
                Circle::new(p, r, c.filled())
            }))?;
        }
    }
    Ok(())
}

fn draw_series_clipped<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Coord2>,
    s: &Series,
    b: &Bounds,
) -> Res<DB> {
    let Runs { lines, lonely } = runs(&s.x, &s.y, b);
    for run in lines {
        draw_path(chart, run, s.style, LINE_WIDTH)?;
    }
    let c = style_colour(s.style);
    chart.draw_series(lonely.into_iter().map(|p| Circle::new(p, 4, c.filled())))?;
    Ok(())
}

/// Draw one panel (axes, shades, reference lines, series, legend) into `area`; `extra_pts`
/// widen the automatic range, `tight_x` keeps the automatic x range unpadded, `extra_legend`
/// is appended to the legend and `extra` draws more content after the shades and reference
/// lines, before the series. Returns the height of the legend strip under the chart (px).
fn draw_panel<DB, F>(
    area: &DrawingArea<DB, Shift>,
    p: &Panel,
    extra_pts: &[(f64, f64)],
    tight_x: bool,
    extra_legend: Vec<LegendItem>,
    extra: F,
) -> Result<u32, DrawingAreaErrorKind<DB::ErrorType>>
where
    DB: DrawingBackend,
    F: FnOnce(&mut ChartContext<'_, DB, Coord2>) -> Res<DB>,
{
    let (w, h) = area.dim_in_pixel();
    let finite_pts = |s: &Series| {
        s.x.iter()
            .zip(&s.y)
            .filter(|(a, b)| a.is_finite() && b.is_finite())
            .map(|(a, b)| (*a, *b))
            .collect::<Vec<_>>()
    };
    let pts: Vec<(f64, f64)> = p
        .series
        .iter()
        .flat_map(finite_pts)
        .chain(extra_pts.iter().copied())
        .collect();
    let has_data = !pts.is_empty();
    let x_auto = finite_extent(
        pts.iter()
            .map(|q| q.0)
            .chain(p.vlines.iter().map(|v| v.x))
            .chain(p.shades.iter().flat_map(|s| [s.from, s.to])),
    );
    // A user range that is not finite is ignored; with a fixed x range only the points
    // inside it set the automatic y range.
    let fixed = |r: Option<(f64, f64)>| r.filter(|r| r.0.is_finite() && r.1.is_finite());
    let (x_fixed, y_fixed) = (fixed(p.x_range), fixed(p.y_range));
    let in_x = |x: f64| x_fixed.is_none_or(|r| x >= r.0.min(r.1) && x <= r.0.max(r.1));
    let y_auto = finite_extent(
        pts.iter()
            .filter(|q| in_x(q.0))
            .map(|q| q.1)
            .chain(p.hlines.iter().map(|l| l.y)),
    );
    let xr = settle(
        x_fixed.or(x_auto).unwrap_or((0.0, 1.0)),
        x_fixed.is_none() && !tight_x,
    );
    let yr = settle(y_fixed.or(y_auto).unwrap_or((0.0, 1.0)), y_fixed.is_none());

    let mut items = legend_items(p, yr);
    items.extend(extra_legend);

    // Y tick labels decide the left label area; measure them first.
    let caption_h = if p.title.is_empty() { 0 } else { 34 };
    let left_guess = 110;
    let legend_h = legend_layout(area, &items, left_guess, w as i32 - left_guess - 16)?.height;
    let plot_h = h.saturating_sub(legend_h + caption_h + X_LABEL_AREA + 2 * MARGIN);
    let (yt, yl) = ticks(yr, None, (plot_h / 55).clamp(4, 10) as usize);
    let tick_style = font(TICK_PX);
    let mut widest = 0;
    for l in &yl {
        widest = widest.max(area.estimate_text_size(l, &tick_style)?.0);
    }
    let y_area = widest + 16 + 34;
    let left = (MARGIN + y_area) as i32;
    let LegendLayout {
        pos,
        height: legend_h,
    } = legend_layout(area, &items, left, w as i32 - left - 16)?;
    let plot_w = w.saturating_sub(y_area + 3 * MARGIN);
    let (xt, xl) = ticks(xr, p.x_tick_step, (plot_w / 110).clamp(3, 8) as usize);

    let (chart_area, legend_area) = area.split_vertically(h.saturating_sub(legend_h));
    let mut b = ChartBuilder::on(&chart_area);
    b.margin(MARGIN)
        .margin_right(2 * MARGIN)
        .x_label_area_size(X_LABEL_AREA)
        .y_label_area_size(y_area);
    if !p.title.is_empty() {
        b.caption(&p.title, bold(PANEL_TITLE_PX));
    }
    let mut chart = b.build_cartesian_2d(Axis::new(xr, xt.clone()), Axis::new(yr, yt.clone()))?;
    let fx = |v: &f64| label_of(&xt, &xl, *v);
    let fy = |v: &f64| label_of(&yt, &yl, *v);
    chart
        .configure_mesh()
        .x_desc(p.x_label.clone())
        .y_desc(p.y_label.clone())
        .label_style(font(TICK_PX))
        .axis_desc_style(font(AXIS_DESC_PX))
        .bold_line_style(RGBColor(225, 225, 225).stroke_width(1))
        .light_line_style(TRANSPARENT)
        .axis_style(BLACK.stroke_width(1))
        .x_label_formatter(&fx)
        .y_label_formatter(&fy)
        .draw()?;

    let bounds = Bounds {
        x0: xr.0,
        x1: xr.1,
        y0: yr.0,
        y1: yr.1,
    };
    // Bands: at least 0.5 % of the axis wide, so a one-point band shows.
    let labels = shade_labels(&p.shades);
    let min_w = 0.005 * (xr.1 - xr.0);
    for s in &p.shades {
        if !(s.from.is_finite() && s.to.is_finite()) {
            continue;
        }
        let (mut a, mut c) = (s.from.min(s.to), s.from.max(s.to));
        if c - a < min_w {
            let m = 0.5 * (a + c);
            a = m - 0.5 * min_w;
            c = m + 0.5 * min_w;
        }
        let (a, c) = (a.max(xr.0), c.min(xr.1));
        if c <= a {
            continue;
        }
        let col = shade_colour(&labels, &s.label);
        chart.draw_series(std::iter::once(Rectangle::new(
            [(a, yr.0), (c, yr.1)],
            col.mix(SHADE_ALPHA).filled(),
        )))?;
    }
    for v in &p.vlines {
        if v.x.is_finite() && v.x >= xr.0 && v.x <= xr.1 {
            draw_path(
                &mut chart,
                vec![(v.x, yr.0), (v.x, yr.1)],
                v.style,
                REF_LINE_WIDTH,
            )?;
        }
    }
    for l in &p.hlines {
        if l.y.is_finite() && l.y >= yr.0 && l.y <= yr.1 {
            draw_path(
                &mut chart,
                vec![(xr.0, l.y), (xr.1, l.y)],
                l.style,
                REF_LINE_WIDTH,
            )?;
        }
    }
    extra(&mut chart)?;
    for s in &p.series {
        draw_series_clipped(&mut chart, s, &bounds)?;
    }
    if !has_data {
        chart.plotting_area().draw(&Text::new(
            "no points to plot".to_string(),
            (0.5 * (xr.0 + xr.1), 0.5 * (yr.0 + yr.1)),
            font(AXIS_DESC_PX)
                .color(&RGBColor(110, 110, 110))
                .pos(Pos::new(HPos::Center, VPos::Center)),
        ))?;
    }
    draw_legend(&legend_area, &items, &pos)?;
    Ok(legend_h)
}

/// The precomputed label of tick `v` (labels were formatted with the tick set).
fn label_of(ticks: &[f64], labels: &[String], v: f64) -> String {
    ticks
        .iter()
        .zip(labels)
        .min_by(|a, b| (a.0 - v).abs().total_cmp(&(b.0 - v).abs()))
        .map(|(_, l)| l.clone())
        .unwrap_or_default()
}

// ---------------------------------------------------------------------------------------
// Scatter and map

fn overlay_panel(x_label: &str, y_label: &str, o: &Overlay) -> Panel {
    Panel {
        title: String::new(),
        x_label: x_label.to_string(),
        y_label: y_label.to_string(),
        series: o.series.clone(),
        shades: o.shades.clone(),
        hlines: o.hlines.clone(),
        vlines: o.vlines.clone(),
        x_range: o.x_range,
        y_range: o.y_range,
        x_tick_step: None,
    }
}

/// Split the body into chart and colour bar; draw the bar for `range` aligned with the
/// chart's plotting area (the chart's legend strip height is `legend_h`).
fn draw_colour_bar<DB: DrawingBackend>(
    bar: &DrawingArea<DB, Shift>,
    range: (f64, f64),
    label: &str,
    legend_h: u32,
) -> Res<DB> {
    let (w, h) = bar.dim_in_pixel();
    let plot_h = h.saturating_sub(legend_h + X_LABEL_AREA + 2 * MARGIN);
    let (yt, yl) = ticks(range, None, (plot_h / 55).clamp(4, 10) as usize);
    let mut widest = 0;
    for l in &yl {
        widest = widest.max(bar.estimate_text_size(l, &font(TICK_PX))?.0);
    }
    // Bar 32 px wide, then tick marks, labels and the rotated value label.
    let label_area = widest + 16 + 40;
    let left = w.saturating_sub(32 + label_area + MARGIN).max(MARGIN);
    let mut chart = ChartBuilder::on(bar)
        .margin_top(MARGIN)
        .margin_bottom(MARGIN + legend_h)
        .margin_left(left)
        .margin_right(MARGIN)
        .x_label_area_size(X_LABEL_AREA)
        .right_y_label_area_size(label_area)
        .build_cartesian_2d(
            Axis::new((0.0, 1.0), Vec::new()),
            Axis::new(range, yt.clone()),
        )?;
    let fy = |v: &f64| label_of(&yt, &yl, *v);
    chart
        .configure_mesh()
        .disable_x_mesh()
        .disable_y_mesh()
        .disable_x_axis()
        .y_desc(label.to_string())
        .label_style(font(TICK_PX))
        .axis_desc_style(font(AXIS_DESC_PX))
        .set_all_tick_mark_size(6)
        .y_label_formatter(&fy)
        .draw()?;
    let n = 128;
    let span = range.1 - range.0;
    chart.draw_series((0..n).map(|k| {
        let a = range.0 + span * k as f64 / n as f64;
        let b = range.0 + span * (k + 1) as f64 / n as f64;
        Rectangle::new(
            [(0.0, a), (1.0, b)],
            value_colour((k as f64 + 0.5) / n as f64).filled(),
        )
    }))?;
    chart.draw_series(std::iter::once(Rectangle::new(
        [(0.0, range.0), (1.0, range.1)],
        BLACK.stroke_width(1),
    )))?;
    Ok(())
}

fn draw_scatter<DB: DrawingBackend>(
    body: &DrawingArea<DB, Shift>,
    x_label: &str,
    y_label: &str,
    points: &[(f64, f64, f64)],
    value_label: &str,
    overlay: &Overlay,
) -> Res<DB> {
    let (w, _) = body.dim_in_pixel();
    let (main, bar) = body.split_horizontally(w.saturating_sub(COLOUR_BAR_WIDTH));
    let p = overlay_panel(x_label, y_label, overlay);
    let shown: Vec<(f64, f64, f64)> = points
        .iter()
        .copied()
        .filter(|q| q.0.is_finite() && q.1.is_finite())
        .collect();
    let vr = settle(
        finite_extent(shown.iter().map(|q| q.2)).unwrap_or((0.0, 1.0)),
        false,
    );
    let grey = shown.iter().any(|q| !q.2.is_finite());
    let extra_legend = if grey {
        vec![LegendItem {
            swatch: Swatch::Marker(NO_VALUE_GREY),
            text: "no value".into(),
        }]
    } else {
        Vec::new()
    };
    let xy: Vec<(f64, f64)> = shown.iter().map(|q| (q.0, q.1)).collect();
    let pts = shown.clone();
    let legend_h = draw_panel(&main, &p, &xy, false, extra_legend, move |chart| {
        let xr = chart.x_range();
        let yr = chart.y_range();
        let inside = pts
            .into_iter()
            .filter(move |q| q.0 >= xr.start && q.0 <= xr.end && q.1 >= yr.start && q.1 <= yr.end);
        let pts: Vec<_> = inside.collect();
        chart.draw_series(pts.iter().map(|q| {
            let t = (q.2 - vr.0) / (vr.1 - vr.0);
            Circle::new((q.0, q.1), 6, value_colour(t).filled())
        }))?;
        chart.draw_series(
            pts.iter()
                .map(|q| Circle::new((q.0, q.1), 6, RGBColor(40, 40, 40).stroke_width(1))),
        )?;
        Ok(())
    })?;
    draw_colour_bar(&bar, vr, value_label, legend_h)
}

fn edges(c: &[f64]) -> Vec<f64> {
    let n = c.len();
    if n == 1 {
        return vec![c[0] - 0.5, c[0] + 0.5];
    }
    let mut e = Vec::with_capacity(n + 1);
    e.push(c[0] - 0.5 * (c[1] - c[0]));
    for k in 1..n {
        e.push(0.5 * (c[k - 1] + c[k]));
    }
    e.push(c[n - 1] + 0.5 * (c[n - 1] - c[n - 2]));
    e
}

#[allow(clippy::too_many_arguments)]
fn draw_map<DB: DrawingBackend>(
    body: &DrawingArea<DB, Shift>,
    x_label: &str,
    y_label: &str,
    x: &[f64],
    y: &[f64],
    value: &[Vec<Option<f64>>],
    value_label: &str,
    overlays: &[Series],
) -> Res<DB> {
    let (w, _) = body.dim_in_pixel();
    let (main, bar) = body.split_horizontally(w.saturating_sub(COLOUR_BAR_WIDTH));
    let ex = edges(x);
    let ey = edges(y);
    let overlay = Overlay {
        series: overlays.to_vec(),
        x_range: Some((ex[0], ex[ex.len() - 1])),
        y_range: Some((ey[0], ey[ey.len() - 1])),
        ..Overlay::default()
    };
    let p = overlay_panel(x_label, y_label, &overlay);
    let vr = settle(
        finite_extent(value.iter().flatten().filter_map(|v| *v)).unwrap_or((0.0, 1.0)),
        false,
    );
    let grey = value
        .iter()
        .flatten()
        .any(|v| !v.is_some_and(|a| a.is_finite()));
    let extra_legend = if grey {
        vec![LegendItem {
            swatch: Swatch::Fill(NO_VALUE_GREY, 1.0),
            text: "not trimmable".into(),
        }]
    } else {
        Vec::new()
    };
    let centres: Vec<(f64, f64)> = x
        .iter()
        .flat_map(|&a| y.iter().map(move |&b| (a, b)))
        .collect();
    let legend_h = draw_panel(&main, &p, &centres, true, extra_legend, |chart| {
        let mut cells = Vec::with_capacity(x.len() * y.len());
        for (i, row) in value.iter().enumerate() {
            for (j, v) in row.iter().enumerate() {
                let colour = match v {
                    Some(a) if a.is_finite() => value_colour((a - vr.0) / (vr.1 - vr.0)),
                    _ => NO_VALUE_GREY,
                };
                cells.push(Rectangle::new(
                    [(ex[i], ey[j]), (ex[i + 1], ey[j + 1])],
                    colour.filled(),
                ));
            }
        }
        chart.draw_series(cells)?;
        Ok(())
    })?;
    draw_colour_bar(&bar, vr, value_label, legend_h)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn temp_dir(tag: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("hoverline-chart-{tag}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&d);
        d
    }

    #[test]
    fn renders_png_and_svg_with_title_text() {
        let dir = temp_dir("grid");
        let x: Vec<f64> = (0..=20).map(f64::from).collect();
        let mut y: Vec<f64> = x.iter().map(|v| v * v).collect();
        y[7] = f64::NAN;
        let panel = Panel {
            title: "square".into(),
            x_label: "speed (m/s)".into(),
            y_label: "value (-)".into(),
            series: vec![Series {
                label: "x squared".into(),
                x: x.clone(),
                y,
                style: 1,
            }],
            shades: vec![Shade {
                from: 3.0,
                to: 5.0,
                label: "unsafe band".into(),
            }],
            hlines: vec![HLine {
                y: 100.0,
                label: "threshold".into(),
                style: 5,
            }],
            ..Panel::default()
        };
        let files = render(
            &dir.join("demo"),
            "Demo chart title",
            &[panel.clone(), panel],
            2,
        )
        .expect("chart renders");
        assert_eq!(files.len(), 2);
        for f in &files {
            assert!(f.exists(), "{} missing", f.display());
            assert!(std::fs::metadata(f).unwrap().len() > 1000);
        }
        let svg = std::fs::read_to_string(dir.join("demo.svg")).unwrap();
        assert!(svg.contains("Demo chart title"));
        assert!(svg.contains("speed (m/s)"));
        assert!(svg.contains(FOOTER));
        // PNG signature (PNG specification, ISO/IEC 15948, section 5.2).
        let png = std::fs::read(dir.join("demo.png")).unwrap();
        assert_eq!(&png[..8], &[0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A]);
        // No temporary file is left behind.
        let left: Vec<_> = std::fs::read_dir(&dir)
            .unwrap()
            .filter_map(|e| e.ok())
            .filter(|e| e.file_name().to_string_lossy().contains(".tmp"))
            .collect();
        assert!(left.is_empty());
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn nan_breaks_the_line_instead_of_drawing_zero() {
        let b = Bounds {
            x0: 0.0,
            x1: 10.0,
            y0: -1.0,
            y1: 10.0,
        };
        let x = [0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
        let y = [1.0, 2.0, f64::NAN, 3.0, 4.0, f64::NAN, 5.0];
        let Runs { lines, lonely } = runs(&x, &y, &b);
        assert_eq!(
            lines,
            vec![vec![(0.0, 1.0), (1.0, 2.0)], vec![(3.0, 3.0), (4.0, 4.0)]]
        );
        assert_eq!(lonely, vec![(6.0, 5.0)]);
        assert!(lines.iter().flatten().all(|p| p.1 != 0.0));
    }

    #[test]
    fn lines_leaving_the_range_are_clipped_at_its_edge() {
        let b = Bounds {
            x0: 0.0,
            x1: 10.0,
            y0: 0.0,
            y1: 1.0,
        };
        let lines = runs(&[0.0, 2.0, 4.0], &[0.5, 1.5, 0.5], &b).lines;
        assert_eq!(lines.len(), 2);
        assert_eq!(lines[0], vec![(0.0, 0.5), (1.0, 1.0)]);
        assert_eq!(lines[1], vec![(3.0, 1.0), (4.0, 0.5)]);
    }

    #[test]
    fn ticks_are_round_multiples() {
        let (v, l) = ticks((-180.0, 180.0), Some(30.0), 8);
        assert_eq!(v.len(), 13);
        assert_eq!(l[0], "-180");
        assert_eq!(l[6], "0");
        let (v, l) = ticks((0.0, 1.0), None, 4);
        assert_eq!(v, vec![0.0, 0.25, 0.5, 0.75, 1.0]);
        assert_eq!(l[1], "0.25");
    }

    #[test]
    fn styles_differ_in_colour_and_pattern() {
        for a in 0..24 {
            for b in (a + 1)..24 {
                assert!(style_colour(a) != style_colour(b) || style_dash(a) != style_dash(b));
            }
        }
        assert_eq!(style_colour(3), style_colour(11));
        assert_ne!(style_dash(3), style_dash(11));
    }

    #[test]
    fn scatter_and_map_render() {
        let dir = temp_dir("scatter");
        let pts: Vec<(f64, f64, f64)> = (0..20)
            .map(|k| (-(k as f64) * 0.1, k as f64 * 0.3, k as f64))
            .collect();
        let o = Overlay {
            vlines: vec![VLine {
                x: 0.0,
                label: "zero".into(),
                style: 0,
            }],
            ..Overlay::default()
        };
        let f = render_scatter(
            &dir.join("sc"),
            "Scatter title",
            "re (1/s)",
            "im (rad/s)",
            &pts,
            "speed (m/s)",
            &o,
        )
        .unwrap();
        assert!(f.iter().all(|p| p.exists()));
        let x = [0.0, 5.0, 10.0];
        let y = [0.0, 45.0, 90.0];
        let v = vec![
            vec![None, Some(1.0), Some(2.0)],
            vec![Some(1.0), Some(3.0), None],
            vec![Some(0.5), Some(2.5), Some(4.0)],
        ];
        let f = render_map(
            &dir.join("map"),
            "Map title",
            "speed (m/s)",
            "tilt (deg)",
            &x,
            &y,
            &v,
            "margin (deg)",
            &[],
        )
        .unwrap();
        assert!(f.iter().all(|p| p.exists()));
        assert!(std::fs::read_to_string(dir.join("map.svg"))
            .unwrap()
            .contains("Map title"));
        let bad = render_map(&dir.join("bad"), "t", "x", "y", &x, &y, &v[..2], "v", &[]);
        assert!(bad.is_err());
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
