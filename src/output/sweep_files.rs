//! The files of a sweep: `trim.csv` (a row per speed, units in every header), `sweep.json`
//! (every point, the bands and the stall exposure) and the plots.

use std::path::{Path, PathBuf};

use serde::Serialize;

use super::files::{write_csv, write_json, WriteError};
use crate::scenario::Scenario;
use crate::sweep::{Band, PointReport, StallExposure, SweepResult};

fn num(v: Option<f64>) -> String {
    match v {
        Some(x) if x.is_finite() => format!("{x:.6}"),
        _ => String::new(),
    }
}

/// Column groups of the trim table: actuators (kind, name, unit), rotor groups, surfaces.
type Columns = (Vec<(String, String, String)>, Vec<String>, Vec<String>);

/// Header and rows of `trim.csv`.
pub fn trim_table(points: &[PointReport]) -> (Vec<String>, Vec<Vec<String>>) {
    let first = points.iter().find(|p| p.trimmed);
    let mut h: Vec<String> = ["speed_mps", "trimmed", "pitch_deg", "alpha_deg"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    let (acts, rotors, surfs): Columns = match first {
        Some(p) => (
            p.actuators
                .iter()
                .map(|a| (a.kind.clone(), a.name.clone(), a.unit.to_lowercase()))
                .collect(),
            p.rotors.iter().map(|r| r.name.clone()).collect(),
            p.surfaces.iter().map(|s| s.name.clone()).collect(),
        ),
        None => (Vec::new(), Vec::new(), Vec::new()),
    };
    for (k, n, u) in &acts {
        h.push(format!("{k}_{n}_{u}"));
    }
    for r in &rotors {
        h.push(format!("power_{r}_w"));
        h.push(format!("thrust_margin_{r}"));
    }
    for s in &surfs {
        h.push(format!("alpha_{s}_deg"));
        h.push(format!("stall_margin_{s}_deg"));
    }
    for x in [
        "stall_margin_deg",
        "thrust_margin",
        "power_margin",
        "pitch_accel_up_rad_s2",
        "pitch_accel_down_rad_s2",
        "elevator_margin_deg",
        "static_margin_pct",
        "lift_share",
        "max_real_per_s",
        "time_to_double_s",
        "loop_gain_margin_db",
        "loop_phase_margin_deg",
        "residual_x_n",
        "residual_z_n",
        "residual_m_nm",
        "reasons",
    ] {
        h.push(x.to_string());
    }
    let rows = points
        .iter()
        .map(|p| {
            let mut r = vec![
                format!("{:.4}", p.speed_mps),
                p.trimmed.to_string(),
                num(p.pitch_deg),
                num(p.alpha_deg),
            ];
            for (k, n, _) in &acts {
                r.push(num(p
                    .actuators
                    .iter()
                    .find(|a| &a.kind == k && &a.name == n)
                    .map(|a| a.value)));
            }
            for name in &rotors {
                let g = p.rotors.iter().find(|g| &g.name == name);
                r.push(num(g.map(|g| g.power_w)));
                r.push(num(g.map(|g| g.thrust_margin)));
            }
            for name in &surfs {
                let s = p.surfaces.iter().find(|s| &s.name == name);
                r.push(num(s.map(|s| s.alpha_deg)));
                r.push(num(s.map(|s| s.stall_margin_deg)));
            }
            let m = p.margins.as_ref();
            r.push(num(m.map(|m| m.stall_deg)));
            r.push(num(m.map(|m| m.thrust)));
            r.push(num(m.map(|m| m.power)));
            r.push(num(m.map(|m| m.pitch_accel_up_rad_s2)));
            r.push(num(m.map(|m| m.pitch_accel_down_rad_s2)));
            r.push(num(m.and_then(|m| m.elevator_deg)));
            r.push(num(m.and_then(|m| m.static_margin_pct)));
            r.push(num(m.map(|m| m.lift_share)));
            r.push(num(m.map(|m| m.max_real_per_s)));
            r.push(num(m.and_then(|m| m.time_to_double_s)));
            r.push(num(super::plots::loop_gain_margin_db(p)));
            r.push(num(super::plots::loop_phase_margin_deg(p)));
            r.push(format!("{:.3e}", p.residual.x_n));
            r.push(format!("{:.3e}", p.residual.z_n));
            r.push(format!("{:.3e}", p.residual.m_nm));
            r.push(p.reasons.join("; "));
            r
        })
        .collect();
    (h, rows)
}

/// The JSON document of a sweep.
#[derive(Debug, Serialize)]
pub struct SweepDocument<'a> {
    /// Tool, caution, scenario and vehicle.
    #[serde(flatten)]
    pub header: super::Header<'a>,
    /// Every point.
    pub points: &'a [PointReport],
    /// Unsafe bands.
    pub bands: &'a [Band],
    /// Stall exposure per surface.
    pub stall_exposure: &'a [StallExposure],
}

/// Write trim.csv, sweep.json and the sweep plots into `dir`; returns the files written.
pub fn write(dir: &Path, sc: &Scenario, r: &SweepResult) -> Result<Vec<PathBuf>, WriteError> {
    let mut out = Vec::new();
    let (h, rows) = trim_table(&r.points);
    let p = dir.join("trim.csv");
    write_csv(&p, &h, &rows)?;
    out.push(p);
    let doc = SweepDocument {
        header: super::Header::of(sc),
        points: &r.points,
        bands: &r.bands,
        stall_exposure: &r.stall_exposure,
    };
    let p = dir.join("sweep.json");
    write_json(&p, &doc)?;
    out.push(p);
    out.extend(super::plots::sweep(dir, sc, r)?);
    Ok(out)
}
