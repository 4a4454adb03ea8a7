//! Colours and line patterns: the Okabe-Ito palette, the style index (colour and pattern),
//! the scalar ramps, and the one table that gives each meaning its line code.

use super::*;

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
pub(super) const NO_VALUE_GREY: RGBColor = RGBColor(190, 190, 190);

/// Fill colours of shaded bands, by distinct label in order of appearance.
pub(super) const SHADE_COLOURS: [RGBColor; 4] = [
    RGBColor(213, 94, 0),
    RGBColor(204, 121, 167),
    RGBColor(86, 180, 233),
    RGBColor(230, 159, 0),
];

/// Opacity of shaded bands.
pub(super) const SHADE_ALPHA: f64 = 0.2;

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
