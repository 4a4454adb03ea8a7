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

mod axes;
mod colour_bar;
mod figure;
mod legend;
mod lines;
mod map;
mod scatter;
mod style;
#[cfg(test)]
mod tests;

use axes::*;
use colour_bar::*;
use figure::*;
use legend::*;
use lines::*;
use map::*;
use scatter::*;

pub use figure::ensure_font;
pub use lines::render;
pub use map::render_map;
pub use scatter::render_scatter;
use style::*;
pub use style::{
    data_style, luminance, margin_colour, partner_style, style_colour, style_dash, value_colour,
    Dash, Role, MARGIN_SCALE_MAX, MARGIN_SCALE_MIN, PALETTE,
};
