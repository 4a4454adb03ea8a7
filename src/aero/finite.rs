//! Finite-wing lift-curve slope from the section (2-D) slope and the aspect ratio.
//!
//! Two published relations for straight (unswept) wings, both in radians:
//!
//! - Prandtl lifting-line theory (Prandtl 1918; Glauert), elliptic loading, with a span
//!   efficiency e standing in for the planform factor: a = a0 / (1 + a0 / (pi e AR)).
//!   Good for AR above about 4; it overestimates the slope of low-aspect-ratio wings.
//! - Helmbold's relation (Helmbold 1942; also used in USAF DATCOM for straight wings):
//!   a = a0 / (sqrt(1 + (a0/(pi AR))^2) + a0/(pi AR)). It tends to a0 as AR -> infinity and
//!   to the slender-wing value pi AR / 2 as AR -> 0, so it bridges low and high aspect ratio.
//!
//! An infinite aspect ratio returns the section slope exactly. A non-positive or NaN aspect
//! ratio is not a wing: these functions then return NaN so that the mistake propagates visibly;
//! vehicle validation rejects such input before it reaches them.

use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// Finite-wing lift slope (per rad) from section slope `a0_per_rad` (per rad) and aspect ratio
/// b^2/S, by the Helmbold relation. NaN for `aspect_ratio <= 0` or NaN.
pub fn helmbold_lift_slope(a0_per_rad: f64, aspect_ratio: f64) -> f64 {
    if aspect_ratio.is_nan() || aspect_ratio <= 0.0 {
        return f64::NAN;
    }
    let x = a0_per_rad / (PI * aspect_ratio);
    a0_per_rad / ((1.0 + x * x).sqrt() + x)
}

/// Finite-wing lift slope (per rad) from section slope `a0_per_rad` (per rad), aspect ratio and
/// span efficiency e (1 for elliptic loading), by Prandtl lifting-line theory:
/// a = a0 / (1 + a0 / (pi e AR)). NaN for a non-positive or NaN aspect ratio or span efficiency.
pub fn lifting_line_lift_slope(a0_per_rad: f64, aspect_ratio: f64, span_efficiency: f64) -> f64 {
    if aspect_ratio.is_nan()
        || aspect_ratio <= 0.0
        || span_efficiency.is_nan()
        || span_efficiency <= 0.0
    {
        return f64::NAN;
    }
    a0_per_rad / (1.0 + a0_per_rad / (PI * span_efficiency * aspect_ratio))
}

/// Which finite-wing lift-slope relation a surface uses (file names `helmbold`, `lifting-line`).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum LiftSlopeMethod {
    /// Helmbold's relation, valid from slender to high aspect ratio.
    Helmbold,
    /// Prandtl lifting-line theory with a span efficiency factor.
    LiftingLine,
}

impl LiftSlopeMethod {
    /// Finite-wing lift slope (per rad) by this method. `span_efficiency` is used by
    /// lifting-line only; Helmbold ignores it.
    pub fn lift_slope_per_rad(
        self,
        a0_per_rad: f64,
        aspect_ratio: f64,
        span_efficiency: f64,
    ) -> f64 {
        match self {
            LiftSlopeMethod::Helmbold => helmbold_lift_slope(a0_per_rad, aspect_ratio),
            LiftSlopeMethod::LiftingLine => {
                lifting_line_lift_slope(a0_per_rad, aspect_ratio, span_efficiency)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn infinite_aspect_ratio_gives_section_slope() {
        let a0 = 2.0 * PI;
        assert_eq!(helmbold_lift_slope(a0, f64::INFINITY), a0);
        assert_eq!(lifting_line_lift_slope(a0, f64::INFINITY, 0.9), a0);
    }

    #[test]
    fn invalid_aspect_ratio_is_nan() {
        assert!(helmbold_lift_slope(6.0, 0.0).is_nan());
        assert!(lifting_line_lift_slope(6.0, -1.0, 1.0).is_nan());
        assert!(lifting_line_lift_slope(6.0, 4.0, 0.0).is_nan());
    }

    #[test]
    fn method_names_in_files_are_kebab_case() {
        let m: LiftSlopeMethod = serde_json::from_str("\"lifting-line\"").unwrap();
        assert_eq!(m, LiftSlopeMethod::LiftingLine);
        assert_eq!(
            serde_json::to_string(&LiftSlopeMethod::Helmbold).unwrap(),
            "\"helmbold\""
        );
    }
}
