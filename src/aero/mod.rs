//! Surface aerodynamics: full-circle section and surface polars, finite-wing lift slope and
//! post-stall extrapolation.
//!
//! - [`polar`]: [`Coefficients`] and the two polar kinds, a validated table ([`TablePolar`]) and a
//!   parametric attached + flat-plate model ([`ParametricPolar`]), behind [`Polar`];
//! - [`finite`]: finite-wing lift slope by Prandtl lifting-line theory or the Helmbold relation;
//! - [`viterna`]: the Viterna-Corrigan post-stall equations and their CD,max(AR) rule.
//!
//! Angles in radians, coefficients dimensionless, moments about the quarter chord, nose-up
//! positive; see [`polar`] for the axis conventions.

pub mod finite;
pub mod polar;
pub mod viterna;

pub use finite::{helmbold_lift_slope, lifting_line_lift_slope, LiftSlopeMethod};
pub use polar::{Coefficients, ParametricPolar, ParametricSpec, Polar, PolarError, TablePolar};
pub use viterna::{viterna_cd_max, Viterna};
