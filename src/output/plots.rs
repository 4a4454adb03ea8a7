//! Plots (PNG and SVG) with an embedded font.

use std::path::{Path, PathBuf};

use super::files::WriteError;
use crate::scenario::Scenario;
use crate::sweep::SweepResult;
use crate::vehicle::Vehicle;

/// Full-range polar of every surface.
pub fn polars(_v: &Vehicle, _dir: &Path) -> Result<Vec<PathBuf>, WriteError> {
    Ok(Vec::new())
}

/// Sweep plots.
pub fn sweep(_dir: &Path, _sc: &Scenario, _r: &SweepResult) -> Result<Vec<PathBuf>, WriteError> {
    Ok(Vec::new())
}
