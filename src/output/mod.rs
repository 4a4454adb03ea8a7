//! Everything that leaves the program: files written whole or not at all, CSV tables, JSON,
//! text tables for the terminal, plots and the HTML report. This is the only library module
//! that touches the file system for writing.

pub mod chart;
pub mod files;
pub mod text;

/// The common head of every JSON document: program and version, the caution, scenario and
/// vehicle names.
#[derive(Debug, serde::Serialize)]
pub struct Header<'a> {
    /// Program and version.
    pub tool: String,
    /// The caution.
    pub caution: &'static str,
    /// Scenario name.
    pub scenario: &'a str,
    /// Vehicle name.
    pub vehicle: &'a str,
}

impl<'a> Header<'a> {
    /// The head for a scenario's documents.
    pub fn of(sc: &'a crate::scenario::Scenario) -> Header<'a> {
        Header {
            tool: format!("hoverline {}", env!("CARGO_PKG_VERSION")),
            caution: CAUTION,
            scenario: &sc.file.name,
            vehicle: &sc.vehicle.name,
        }
    }
}

/// The caution every report carries.
pub const CAUTION: &str = "Preliminary design aid from quasi-steady, simplified models: not a flight clearance. \
Defer to the applicable airworthiness authority, local aviation rules and licensed flight-test practice.";
pub mod corridor_files;
pub mod flight_files;
pub mod plots;
pub mod report;
pub mod sweep_files;
