//! hoverline: transition-phase trim and stability analysis for VTOL airframes.
//!
//! The core (every module but `output`) is pure: no file or terminal I/O beyond reading the
//! user's vehicle and scenario files in `vehicle::file` and `scenario`.

pub mod aero;
pub mod atmosphere;
pub mod bands;
pub mod control;
pub mod corridor;
pub mod dynamics;
pub mod flight;
pub mod input;
pub mod limits;
pub mod linear;
pub mod margins;
pub mod output;
pub mod rotor;
pub mod scenario;
pub mod schedule;
pub mod sweep;
pub mod trim;
pub mod vehicle;
