//! Viterna-Corrigan post-stall extrapolation of section coefficients.
//!
//! L. A. Viterna and R. D. Corrigan, "Fixed Pitch Rotor Performance of Large Horizontal Axis Wind
//! Turbines", NASA CP-2230 (1982). For alpha_s <= alpha <= 90 deg:
//!
//! - CD = B1 sin^2(alpha) + B2 cos(alpha)
//! - CL = A1 sin(2 alpha) + A2 cos^2(alpha) / sin(alpha)
//! - B1 = CD,max, A1 = B1 / 2,
//!   B2 = (CD,s - CD,max sin^2 alpha_s) / cos alpha_s,
//!   A2 = (CL,s - CD,max sin alpha_s cos alpha_s) sin alpha_s / cos^2 alpha_s,
//!
//! so that CL(alpha_s) = CL,s, CD(alpha_s) = CD,s, and at 90 deg CL = 0, CD = CD,max.
//! The leading terms (A1, B1) are the flat plate with normal-force coefficient CD,max.
//! CD,max = 1.11 + 0.018 AR for AR <= 50 and 2.01 above (AR of the blade or wing).

use serde::Serialize;

/// Viterna-Corrigan post-stall coefficients, valid for alpha_s <= alpha <= 90 deg.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Viterna {
    /// A1 = CD,max / 2 (-).
    pub a1: f64,
    /// A2 (-), sets CL(alpha_s) = CL,s.
    pub a2: f64,
    /// B1 = CD,max (-).
    pub b1: f64,
    /// B2 (-), sets CD(alpha_s) = CD,s.
    pub b2: f64,
}

impl Viterna {
    /// Coefficients from the stall point: stall angle `alpha_stall_rad` (rad, 0 < alpha_s < pi/2),
    /// lift `cl_stall` and drag `cd_stall` at stall, and drag normal to the flow `cd_max`.
    /// Outside 0 < alpha_s < pi/2 the result is not finite (the formulas divide by cos alpha_s).
    pub fn new(alpha_stall_rad: f64, cl_stall: f64, cd_stall: f64, cd_max: f64) -> Viterna {
        let (s, c) = alpha_stall_rad.sin_cos();
        let b1 = cd_max;
        Viterna {
            a1: b1 / 2.0,
            a2: (cl_stall - cd_max * s * c) * s / (c * c),
            b1,
            b2: (cd_stall - cd_max * s * s) / c,
        }
    }

    /// Lift coefficient at `alpha_rad` (rad), meant for alpha_s <= alpha <= pi/2
    /// (infinite at alpha = 0, where the A2 term divides by sin alpha).
    pub fn cl(&self, alpha_rad: f64) -> f64 {
        let (s, c) = alpha_rad.sin_cos();
        self.a1 * (2.0 * alpha_rad).sin() + self.a2 * c * c / s
    }

    /// Drag coefficient at `alpha_rad` (rad), meant for alpha_s <= alpha <= pi/2.
    pub fn cd(&self, alpha_rad: f64) -> f64 {
        let (s, c) = alpha_rad.sin_cos();
        self.b1 * s * s + self.b2 * c
    }
}

/// Viterna's drag coefficient normal to the flow (at 90 deg) for aspect ratio `aspect_ratio`:
/// 1.11 + 0.018 AR for AR <= 50, 2.01 above. Negative AR is treated as 0; NaN gives NaN.
pub fn viterna_cd_max(aspect_ratio: f64) -> f64 {
    if aspect_ratio.is_nan() {
        return f64::NAN;
    }
    if aspect_ratio > 50.0 {
        2.01
    } else {
        1.11 + 0.018 * aspect_ratio.max(0.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cd_max_formula_is_continuous_at_its_cap() {
        assert!((viterna_cd_max(50.0) - 2.01).abs() < 1e-12);
        assert_eq!(viterna_cd_max(50.000_001), 2.01);
        assert!((viterna_cd_max(-3.0) - 1.11).abs() < 1e-15);
    }
}
