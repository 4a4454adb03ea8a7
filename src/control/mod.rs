//! The flight-control layer below both the sweep and the flight: the feedback law
//! ([`law`]), the operating point it is scheduled on ([`TrimPoint`]) and the analysis of the
//! law closed around a point's linear model ([`loops`]: closed-loop stability and loop
//! margins). It depends on the physics (`dynamics`, `linear`, `vehicle`) only; `sweep` and
//! `flight` depend on it and not on each other.

pub mod law;
pub mod loops;

use crate::dynamics::{Controls, State};
use crate::linear::LinearModel;

/// Thrust lags shorter than this are taken as this (s), in the flight and in the loop model.
pub const MIN_THRUST_LAG_S: f64 = 0.01;

/// One trim point as the law is scheduled on it.
#[derive(Debug, Clone)]
pub struct TrimPoint {
    /// Airspeed (m/s).
    pub speed_mps: f64,
    /// Whether the point is trimmed.
    pub trimmed: bool,
    /// Why it is untrimmable or unsafe (text).
    pub reasons: Vec<String>,
    /// Trim state (still air).
    pub state: State,
    /// Trim controls.
    pub controls: Controls,
    /// Linear model (trimmed points only).
    pub linear: Option<LinearModel>,
}
