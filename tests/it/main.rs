//! One integration-test crate: every check against the outside world lives in a module here,
//! so the suite builds and links once.

mod aero_checks;
mod atmosphere_checks;
mod corridor_checks;
mod dynamics_checks;
mod flight_checks;
mod hardening_checks;
mod loop_checks;
mod mutation_checks;
mod readme_checks;
mod report_checks;
mod rotor_checks;
mod trim_checks;
mod vehicle_checks;
mod verdict_checks;
