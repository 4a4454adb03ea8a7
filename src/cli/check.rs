//! `hoverline check VEHICLE`

use std::path::PathBuf;

use clap::Args;

use super::{atmosphere, print_json, CliError};
use hoverline::output::text;
use hoverline::vehicle::{load_vehicle, summary::summarise};

/// Arguments of `check`.
#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Vehicle file (TOML)
    vehicle: PathBuf,
    /// Altitude for densities (m, ISA geopotential)
    #[arg(long, default_value_t = 0.0)]
    altitude_m: f64,
    /// ISA temperature offset (K)
    #[arg(long, default_value_t = 0.0)]
    temperature_offset_k: f64,
    /// Print the summary as JSON instead of text
    #[arg(long)]
    json: bool,
    /// Write each surface's full-range polar (PNG and SVG) into this folder
    #[arg(long, value_name = "DIR")]
    plot: Option<PathBuf>,
}

/// Run `check`.
pub fn run(a: CheckArgs) -> Result<(), CliError> {
    let v = load_vehicle(&a.vehicle)?;
    let atm = atmosphere(a.altitude_m, a.temperature_offset_k)?;
    let s = summarise(&v, &atm);
    if a.json {
        print_json(&s)?;
    } else {
        out!("{}", text::check(&s));
    }
    if let Some(dir) = a.plot {
        let files = hoverline::output::plots::polars(&v, &dir)?;
        if !a.json {
            for f in files {
                outln!("wrote {}", f.display());
            }
        }
    }
    Ok(())
}
