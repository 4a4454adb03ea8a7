//! Steady wind and the 1-cosine discrete gust.
//!
//! MIL-F-8785C (1980) §3.7.3 defines the discrete gust as
//!
//! ```text
//! v(x) = 0                                  x < 0
//! v(x) = (v_m / 2) (1 - cos(pi x / d_m))    0 <= x <= d_m
//! v(x) = v_m                                x > d_m
//! ```
//!
//! with `x` the distance travelled into the gust, `d_m` the gust length and `v_m` the gust
//! magnitude ([`GustShape::Ramp`]). The "full" 1-cosine gust that rises and falls back to zero
//! over `2 d_m` is the ramp minus the same ramp delayed by `d_m`:
//! `v(x) = (v_m / 2) (1 - cos(pi x / d_m))` for `0 <= x <= 2 d_m`, zero elsewhere
//! ([`GustShape::Full`], the shape of the certification gusts, e.g. CS-25.341).
//!
//! The gust is frozen in the air mass and penetrated at the planned airspeed at its start time,
//! but never slower than a stated floor (a hovering vehicle does not fly through a gust; the
//! gust front passes it), so `x = V_p (t - t_start)` and the gust is a function of time only.

use crate::dynamics::Wind;
use crate::scenario::{GustDirection, GustShape};

/// MIL-F-8785C discrete gust velocity (m/s) at distance `x_m` into a gust of length `d_m` (m)
/// and magnitude `v_m` (m/s).
pub fn discrete_gust(x_m: f64, d_m: f64, v_m: f64) -> f64 {
    if x_m <= 0.0 || d_m <= 0.0 {
        0.0
    } else if x_m >= d_m {
        v_m
    } else {
        0.5 * v_m * (1.0 - (std::f64::consts::PI * x_m / d_m).cos())
    }
}

/// Full 1-cosine gust velocity (m/s): up to `v_m` at `x = d_m` and back to zero at `2 d_m`.
pub fn full_gust(x_m: f64, d_m: f64, v_m: f64) -> f64 {
    discrete_gust(x_m, d_m, v_m) - discrete_gust(x_m - d_m, d_m, v_m)
}

/// A discrete gust placed in time.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Gust {
    /// Time the vehicle enters the gust (s).
    pub start_s: f64,
    /// Direction of the air motion.
    pub direction: GustDirection,
    /// Magnitude v_m (m/s, positive).
    pub amplitude_mps: f64,
    /// Gust length d_m (m).
    pub length_m: f64,
    /// Shape.
    pub shape: GustShape,
    /// Penetration speed (m/s).
    pub penetration_mps: f64,
}

impl Gust {
    /// Time from the gust edge to its peak (s).
    pub fn rise_time_s(&self) -> f64 {
        self.length_m / self.penetration_mps
    }

    /// Times at which the gust changes its formula (s): start, peak and, for the full shape, end.
    pub fn breakpoints(&self) -> Vec<f64> {
        let r = self.rise_time_s();
        match self.shape {
            GustShape::Full => vec![self.start_s, self.start_s + r, self.start_s + 2.0 * r],
            GustShape::Ramp => vec![self.start_s, self.start_s + r],
        }
    }

    /// Gust magnitude along its direction at time `t_s` (m/s, >= 0 for positive amplitude).
    pub fn magnitude_at(&self, t_s: f64) -> f64 {
        let x = self.penetration_mps * (t_s - self.start_s);
        match self.shape {
            GustShape::Full => full_gust(x, self.length_m, self.amplitude_mps),
            GustShape::Ramp => discrete_gust(x, self.length_m, self.amplitude_mps),
        }
    }

    /// The gust as an earth-axis air velocity at time `t_s`.
    pub fn wind_at(&self, t_s: f64) -> Wind {
        let m = self.magnitude_at(t_s);
        match self.direction {
            GustDirection::Up => Wind {
                x_mps: 0.0,
                z_mps: -m,
            },
            GustDirection::Down => Wind {
                x_mps: 0.0,
                z_mps: m,
            },
            GustDirection::Head => Wind {
                x_mps: -m,
                z_mps: 0.0,
            },
            GustDirection::Tail => Wind {
                x_mps: m,
                z_mps: 0.0,
            },
        }
    }
}

/// Steady wind plus an optional gust.
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize)]
pub struct WindModel {
    /// Steady air velocity (earth axes, x forward, z down).
    pub steady: Wind,
    /// Discrete gust.
    pub gust: Option<Gust>,
}

impl WindModel {
    /// Air velocity at time `t_s` (earth axes).
    pub fn at(&self, t_s: f64) -> Wind {
        let mut w = self.steady;
        if let Some(g) = &self.gust {
            let d = g.wind_at(t_s);
            w.x_mps += d.x_mps;
            w.z_mps += d.z_mps;
        }
        w
    }
}
