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

/// What a line means where the same meaning appears in several figures. Each meaning has one
/// line code (style index) in every figure, so a reader who learnt it once reads it
/// everywhere; the figures take their styles from here, never a number of their own.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Role {
    /// The schedule built by `hoverline schedule`: black, solid.
    BuiltSchedule,
    /// The schedule in use (the scenario's own, or the file given with `--schedule`): black,
    /// dashed.
    ScheduleInUse,
    /// A scenario threshold, or the positive stall angle: vermillion, dotted.
    Threshold,
    /// The second threshold of a pair, or the negative stall angle: vermillion, dashed.
    ThresholdLow,
    /// A hard limit (normalised margin -1): vermillion, solid.
    HardLimit,
    /// Normalised margin 0 (at the threshold): bluish green, dotted.
    AtThreshold,
    /// Neutral stability (real part or margin 0): black, dotted.
    Neutral,
}

impl Role {
    /// Every role, for checks.
    pub const ALL: [Role; 7] = [
        Role::BuiltSchedule,
        Role::ScheduleInUse,
        Role::Threshold,
        Role::ThresholdLow,
        Role::HardLimit,
        Role::AtThreshold,
        Role::Neutral,
    ];

    /// The style index of the role (colour `style % 8`, pattern `style % 3`).
    pub const fn style(self) -> usize {
        match self {
            Role::BuiltSchedule => 0,
            Role::ScheduleInUse => 16,
            Role::Threshold => 5,
            Role::ThresholdLow => 13,
            Role::HardLimit => 21,
            Role::AtThreshold => 11,
            Role::Neutral => 8,
        }
    }

    /// The legend text of the role where it is fixed (schedules), else a generic one.
    pub const fn label(self) -> &'static str {
        match self {
            Role::BuiltSchedule => "built schedule",
            Role::ScheduleInUse => "schedule in use",
            Role::Threshold => "threshold",
            Role::ThresholdLow => "lower threshold",
            Role::HardLimit => "at the hard limit",
            Role::AtThreshold => "at the threshold",
            Role::Neutral => "neutral stability",
        }
    }
}

/// Styles of data series in order: every colour but vermillion (kept for thresholds and
/// limits, see [`Role`]) and yellow (weak on white).
const DATA_STYLES: [usize; 6] = [0, 4, 3, 1, 6, 2];

/// Style of the `k`-th data series of a panel: the colours of [`DATA_STYLES`], then the same
/// colours with the other patterns.
pub fn data_style(k: usize) -> usize {
    DATA_STYLES[k % DATA_STYLES.len()] + 16 * (k / DATA_STYLES.len())
}

/// The style of what belongs to a data series without being it (its travel limits, the thrust
/// available to it, its reference): same colour, dotted (dashed for a dotted series).
pub fn partner_style(style: usize) -> usize {
    let want = if style_dash(style) == Dash::Dotted {
        Dash::Dashed
    } else {
        Dash::Dotted
    };
    if style_dash(style + 8) == want {
        style + 8
    } else {
        style + 16
    }
}

/// Lower end of the margin scale of corridor maps: normalised margins below it take its colour.
pub const MARGIN_SCALE_MIN: f64 = -3.0;
/// Upper end of the margin scale of corridor maps.
pub const MARGIN_SCALE_MAX: f64 = 2.0;

/// Colour of a normalised margin `m` (margin / threshold - 1) on the diverging scale of the
/// corridor map: outside (m < 0) warm, from a pale orange just below 0 through vermillion at
/// the hard limit (-1) to a dark brown at [`MARGIN_SCALE_MIN`] and below; inside (m >= 0)
/// cool, from a light blue at 0 to a deep blue at [`MARGIN_SCALE_MAX`]. Lightness falls away
/// from 0 on both sides but the two sides never share a lightness near 0 (pale orange is
/// darker than the lightest blue by a step at 0), so the inside/outside edge shows in
/// greyscale too, and how far outside a cell is reads from how dark it is. NaN gives grey.
pub fn margin_colour(m: f64) -> RGBColor {
    if m.is_nan() {
        return NO_VALUE_GREY;
    }
    // Anchors (from the ColorBrewer RdBu and Oranges ramps, from memory, adjusted).
    const OUTSIDE: [(f64, (f64, f64, f64)); 4] = [
        (0.0, (253.0, 200.0, 140.0)),
        (-1.0, (213.0, 94.0, 0.0)),
        (-2.0, (140.0, 45.0, 4.0)),
        (MARGIN_SCALE_MIN, (60.0, 20.0, 5.0)),
    ];
    const INSIDE: [(f64, (f64, f64, f64)); 3] = [
        (0.0, (222.0, 235.0, 247.0)),
        (1.0, (107.0, 174.0, 214.0)),
        (MARGIN_SCALE_MAX, (33.0, 102.0, 172.0)),
    ];
    let m = m.clamp(MARGIN_SCALE_MIN, MARGIN_SCALE_MAX);
    let stops: &[(f64, (f64, f64, f64))] = if m < 0.0 { &OUTSIDE } else { &INSIDE };
    // The segment whose ends bracket m (stops run away from 0).
    let k = (0..stops.len() - 1)
        .find(|&k| (m - stops[k].0) * (m - stops[k + 1].0) <= 0.0)
        .unwrap_or(stops.len() - 2);
    let (a, ca) = stops[k];
    let (b, cb) = stops[k + 1];
    let f = ((m - a) / (b - a)).clamp(0.0, 1.0);
    let mix = |p: f64, q: f64| (p + (q - p) * f).round().clamp(0.0, 255.0) as u8;
    RGBColor(mix(ca.0, cb.0), mix(ca.1, cb.1), mix(ca.2, cb.2))
}

/// Relative luminance (0 black .. 1 white) of a colour, sRGB weights (ITU-R BT.709), for the
/// greyscale checks.
pub fn luminance(c: RGBColor) -> f64 {
    let lin = |v: u8| {
        let s = f64::from(v) / 255.0;
        if s <= 0.04045 {
            s / 12.92
        } else {
            ((s + 0.055) / 1.055).powf(2.4)
        }
    };
    0.2126 * lin(c.0) + 0.7152 * lin(c.1) + 0.0722 * lin(c.2)
}
